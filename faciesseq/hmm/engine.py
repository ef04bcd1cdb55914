"""Numerical engine of the tract model: forward-backward, Viterbi, clamping.

The engine works on a *log-emission array*: one row per observation (a bed
or a grid cell), one column per hidden state, holding ``log p(obs_t | state
k)``; the rows of all sequences are concatenated and ``lengths`` says where
each sequence ends. Whatever emission model the caller uses (categorical,
facies conditioned on the previous facies, thickness, grain size, missing
values marginalised as ``0.0 = log 1``) reduces to such an array, so the
engine knows nothing of facies or tracts.

Why not hmmlearn's own recursions: hmmlearn computes the emissions itself
from its own emission classes (no mixed or previous-facies-conditioned
emissions, no log-emission input), has no partially labelled sequences
(clamping), and returns no per-boundary two-slice posteriors, which the
surface probabilities need. hmmlearn is the reference the tests compare
against (same log-likelihoods, posteriors, expected transition counts and
Viterbi paths), and ``benchmarks/bench_em.py`` measures the speed of both
(``benchmarks/hmm_engine.md``): one EM iteration on 1,000,000 observations
with 16 states and 10 symbols, the emissions given as a table and the symbols
as ``codes``, took 0.30 of hmmlearn's CPU time on repeated iterations and 0.37
on the first call after hmmlearn ran (2026-12-02, loaded 2-core machine); from
the full log-emission array, 0.40 and 0.89 (the first call pays for fresh
memory pages of the 128 MB array and of ``gamma``). Viterbi, whose maxima
numpy cannot hand to BLAS, took 1.10 times the CPU time of hmmlearn's
compiled loop with 16 states and a dense transition matrix on 2026-12-03 and
0.97 on 2026-12-04 (the same code), and 0.60 of it on a tract-shaped graph
(see :func:`viterbi`).

Emissions: either the ``(T, K)`` log-emission array, or for a categorical
emission a ``(n_codes, K)`` table and the code of every row (``codes``): the
table form exponentiates each code's row once and never builds the array, and
:func:`forward_backward` can then return the posteriors summed per code (the
M-step's expected emission counts) instead of ``gamma``, so an EM iteration
allocates only the batch work arrays.

Batching: sequences are sorted by length (longest first) and grouped into
batches of at most ``batch_size`` rows. Inside a batch the rows are stored
*time-major* (all first observations, then all second observations, ...), so
at every time step the sequences still running are a leading block of the
previous step's block: one ``(B, K) @ (K, K)`` product advances every
sequence of the batch by one step, with no padding and no masks. The Python
loop runs over time steps only, never over sequences or observations.
"""

from __future__ import annotations

import contextlib
import functools
import itertools
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import numpy as np

from faciesseq.errors import ConfigError, InputError

__all__ = [
    "DEFAULT_BATCH_CELLS",
    "DEFAULT_VITERBI_BATCH_CELLS",
    "CodeIndex",
    "Posteriors",
    "constrained_log_emission",
    "forward_backward",
    "log_likelihood",
    "single_thread_blas",
    "viterbi",
]

#: Default work bound: rows per batch times states (``batch_size = this // K``).
#: About 16 MB per float64 work array.
DEFAULT_BATCH_CELLS = 1 << 21

#: Default work bound of :func:`viterbi` (rows per batch times states): its
#: one large work array is ``delta`` of the batch (128 MB at this bound). A
#: larger batch means fewer time steps, each paying numpy's per-call cost
#: twice (forward and backtracking), but more fresh memory pages on a first
#: call; measured in ``benchmarks/hmm_engine.md``.
DEFAULT_VITERBI_BATCH_CELLS = 1 << 24

# Tolerance on probabilities summing to one.
_SUM_TOL = 1e-6


@dataclass(frozen=True)
class Posteriors:
    """Results of :func:`forward_backward`.

    Attributes
    ----------
    log_likelihood
        ``(n_sequences,)`` natural-log likelihood of each sequence.
    gamma
        ``(T_total, K)`` posterior probability of each state at each row, rows
        in the order of the input (all sequences concatenated); rows sum to 1.
    xi_sum
        ``(K, K)`` two-slice posteriors ``P(state_t = i, state_t+1 = j | obs)``
        summed over every boundary of every sequence: the expected transition
        counts of the EM M-step.
    xi
        ``(T_total - n_sequences, K, K)`` two-slice posterior of each boundary
        if asked for, else ``None``. Boundary ``t`` of a sequence lies between
        its rows ``t`` and ``t + 1``; boundaries of all sequences are
        concatenated in input order (sequence ``s`` has ``lengths[s] - 1``).
    start
        ``(K,)`` sum over sequences of ``gamma`` at each sequence's first row:
        the expected initial-state counts of the EM M-step.
    code_gamma
        ``(n_codes, K)`` sum of ``gamma`` over the rows of each code when the
        emissions were given as a table and ``codes``: the expected emission
        counts of a categorical M-step; else ``None``.

    ``gamma`` is ``None`` when it was not asked for (``return_gamma=False``).
    """

    log_likelihood: np.ndarray
    gamma: np.ndarray | None
    xi_sum: np.ndarray
    xi: np.ndarray | None
    start: np.ndarray
    code_gamma: np.ndarray | None = None

    @property
    def total_log_likelihood(self) -> float:
        """Sum of the per-sequence log-likelihoods."""
        return float(np.sum(self.log_likelihood))

    def to_frame(self, lengths: np.ndarray | Sequence[int] | None = None):
        """State posteriors as a ``pandas.DataFrame``: ``sequence``, ``row``
        (within the sequence) and one ``p_<k>`` column per state.

        ``lengths`` as given to :func:`forward_backward` (``None``: one sequence).
        """
        import pandas as pd

        if self.gamma is None:
            raise InputError("these posteriors were computed without gamma (return_gamma=False)")
        lengths = _check_lengths(lengths, self.gamma.shape[0])
        table = pd.DataFrame(self.gamma, columns=[f"p_{k}" for k in range(self.gamma.shape[1])])
        table.insert(0, "sequence", np.repeat(np.arange(lengths.size), lengths))
        starts = np.concatenate(([0], np.cumsum(lengths)[:-1]))
        table.insert(1, "row", np.arange(self.gamma.shape[0]) - np.repeat(starts, lengths))
        return table

    def to_dict(self) -> dict:
        """Plain lists, for JSON: the summed statistics and per-sequence
        log-likelihoods (``gamma`` and ``xi`` are left to :meth:`to_frame`)."""
        return {
            "log_likelihood": self.log_likelihood.tolist(),
            "total_log_likelihood": self.total_log_likelihood,
            "start": self.start.tolist(),
            "xi_sum": self.xi_sum.tolist(),
            **({} if self.gamma is None else {"n_rows": int(self.gamma.shape[0])}),
            "n_states": int(self.xi_sum.shape[0]),
        }


# --------------------------------------------------------------------------
# validation


def _check_log_emission(log_emission: np.ndarray) -> np.ndarray:
    le = np.asarray(log_emission, dtype=np.float64)
    if le.ndim != 2:
        raise InputError(f"log-emission array must be 2-D (rows, states), got shape {le.shape}")
    if le.shape[1] == 0:
        raise InputError("log-emission array has no state columns")
    # One fast reduction for the common case: the maximum is NaN if any
    # entry is NaN, and +inf if any entry is +inf.
    top = le.max() if le.size else 0.0
    if np.isnan(top) or top == np.inf:
        r, k = np.argwhere(np.isnan(le) | (le == np.inf))[0]
        raise InputError(
            f"log-emission row {r}, state {k} is {le[r, k]}; "
            "expected a log-probability (finite or -inf)"
        )
    return le


def _check_codes(codes: np.ndarray | Sequence[int], n_codes: int) -> np.ndarray:
    arr = np.asarray(codes)
    if arr.ndim != 1 or not np.issubdtype(arr.dtype, np.integer):
        raise InputError(
            f"codes must be a 1-D integer array, got shape {arr.shape}, dtype {arr.dtype}"
        )
    bad = np.flatnonzero((arr < 0) | (arr >= n_codes))
    if bad.size:
        r = int(bad[0])
        raise InputError(
            f"codes row {r} is {int(arr[r])}; expected 0..{n_codes - 1} "
            "(a row of the log-emission table)"
        )
    return arr.astype(np.intp, copy=False)


def _check_lengths(lengths: np.ndarray | Sequence[int] | None, n_rows: int) -> np.ndarray:
    if lengths is None:
        if n_rows == 0:
            raise InputError("log-emission array has no rows")
        return np.array([n_rows], dtype=np.intp)
    arr = np.asarray(lengths)
    if arr.ndim != 1 or arr.size == 0:
        raise InputError(f"lengths must be a non-empty 1-D array, got shape {arr.shape}")
    integral = np.issubdtype(arr.dtype, np.integer) or (
        np.issubdtype(arr.dtype, np.floating) and bool(np.all(arr == np.round(arr)))
    )
    if not integral:
        raise InputError(f"lengths must be integers, got dtype {arr.dtype}")
    arr = arr.astype(np.intp)
    short = np.flatnonzero(arr < 1)
    if short.size:
        s = int(short[0])
        raise InputError(f"sequence {s} has length {arr[s]}; every sequence needs >= 1 row")
    if int(arr.sum()) != n_rows:
        raise InputError(
            f"lengths sum to {int(arr.sum())} but the log-emission array has {n_rows} rows"
        )
    return arr


def _check_params(
    startprob: np.ndarray, transmat: np.ndarray, n_states: int
) -> tuple[np.ndarray, np.ndarray]:
    pi = np.asarray(startprob, dtype=np.float64)
    A = np.asarray(transmat, dtype=np.float64)
    if pi.shape != (n_states,):
        raise ConfigError(
            f"startprob has shape {pi.shape}; expected ({n_states},) to match the "
            "log-emission columns"
        )
    if A.shape != (n_states, n_states):
        raise ConfigError(f"transmat has shape {A.shape}; expected ({n_states}, {n_states})")
    if not (np.all(np.isfinite(pi)) and np.all(pi >= 0)):
        raise ConfigError("startprob must hold finite probabilities >= 0")
    if not (np.all(np.isfinite(A)) and np.all(A >= 0)):
        raise ConfigError("transmat must hold finite probabilities >= 0")
    if abs(pi.sum() - 1.0) > _SUM_TOL:
        raise ConfigError(f"startprob sums to {pi.sum():.8g}; expected 1")
    rows = A.sum(axis=1)
    off = np.flatnonzero(np.abs(rows - 1.0) > _SUM_TOL)
    if off.size:
        i = int(off[0])
        raise ConfigError(f"transmat row {i} sums to {rows[i]:.8g}; expected 1")
    return pi, A


def _log(p: np.ndarray) -> np.ndarray:
    """Natural log with exact ``-inf`` for zeros and no warning."""
    out = np.full(p.shape, -np.inf)
    np.log(p, out=out, where=p > 0)
    return out


@functools.cache
def _blas_controller():
    try:
        from threadpoolctl import ThreadpoolController
    except ImportError:  # pragma: no cover - threadpoolctl comes with scikit-learn
        return None
    return ThreadpoolController()


def single_thread_blas() -> contextlib.AbstractContextManager:
    """Run the recursions with one BLAS thread.

    The recursions make many small matrix products; a multi-threaded BLAS
    gains nothing on them and loses much when other processes load the
    cores (measured: one EM iteration on 1,000,000 observations took 0.30 s
    instead of 0.71 s, best of 8, on a loaded 2-core machine). Between calls
    OpenBLAS's idle threads wait by spinning, which is CPU time too: a caller
    making many small products around the recursions (a decode's emissions,
    posteriors summed per tract, surface probabilities) holds this for all of
    them (the decoded outputs at 10^6 beds were the same byte for byte with
    one thread and with two).
    """
    controller = _blas_controller()
    if controller is None:  # pragma: no cover
        return contextlib.nullcontext()
    return controller.limit(limits=1, user_api="blas")


# --------------------------------------------------------------------------
# batching


class _Batch:
    """Sequences of one batch, rows stored time-major.

    ``seq[j]`` is the input index of the batch's ``j``-th sequence (longest
    first); packed row ``offsets[t] + j`` is row ``t`` of sequence ``j`` and
    ``rows`` maps every packed row to its input row.
    """

    def __init__(self, seq: np.ndarray, lengths: np.ndarray, starts: np.ndarray) -> None:
        self.seq = seq
        self.lengths = lengths
        n_steps = int(lengths[0])
        # Sequences running at step t: those longer than t (a leading block).
        self.counts = np.searchsorted(-lengths, -np.arange(n_steps), side="left")
        self.offsets = np.concatenate(([0], np.cumsum(self.counts)))
        #: time step t of every packed row
        self.step = np.repeat(np.arange(n_steps), self.counts)
        #: batch position j of every packed row
        self.position = np.arange(self.offsets[-1]) - self.offsets[self.step]
        self.rows = starts[seq][self.position] + self.step
        #: packed row of the last observation of every sequence
        self.last = self.offsets[lengths - 1] + np.arange(seq.size)

    @property
    def n_rows(self) -> int:
        return int(self.rows.size)


def _batches(lengths: np.ndarray, batch_size: int, make: type = _Batch) -> Iterator[_Batch]:
    """Sequences grouped into batches of at most ``batch_size`` rows, longest first,
    each made by ``make`` (:class:`_Batch`, or :class:`_LockstepBatch` for Viterbi)."""
    starts = np.concatenate(([0], np.cumsum(lengths)[:-1]))
    order = np.argsort(-lengths, kind="stable")
    sorted_len = lengths[order]
    i, n = 0, len(order)
    while i < n:
        # Greedy: add sequences while the batch stays within batch_size rows
        # (a single longer sequence is a batch of its own).
        csum = np.cumsum(sorted_len[i:])
        stop = i + max(1, int(np.searchsorted(csum, batch_size, side="right")))
        yield make(order[i:stop], sorted_len[i:stop], starts)
        i = stop


def _buffer_rows(lengths: np.ndarray, rows_per_batch: int) -> int:
    """Rows of the largest batch :func:`_batches` can yield."""
    return int(min(lengths.sum(), max(rows_per_batch, lengths.max())))


def _as_items(array: np.ndarray) -> np.ndarray:
    """1-D view of a C-contiguous 2-D array with each row as one opaque item."""
    return array.view(np.dtype((np.void, array.shape[1] * array.itemsize))).ravel()


def _put_rows(out: np.ndarray, rows: np.ndarray, values: np.ndarray) -> None:
    """``out[rows] = values`` for C-contiguous 2-D arrays, row by row as one item.

    Scattering whole rows as opaque items is about three times faster than
    numpy's fancy-index assignment on 16-column float64 arrays (measured).
    """
    np.put(_as_items(out), rows, _as_items(np.ascontiguousarray(values)))


def _take_rows(source: np.ndarray, rows: np.ndarray, out: np.ndarray) -> None:
    """``out[:] = source[rows]`` for C-contiguous 2-D arrays, rows as opaque items
    (``rows`` already checked: no bounds check, no buffering)."""
    np.take(_as_items(source), rows, out=_as_items(out), mode="wrap")


class _Emissions:
    """Where the log-emissions of a batch's rows come from.

    Either a ``(T, K)`` array, one row per observation, or, with ``codes``, a
    ``(n_codes, K)`` table and the code of every observation (a categorical
    emission: row ``t`` is ``table[codes[t]]``). The table form never builds
    the ``(T, K)`` array and exponentiates each code's row once.
    """

    def __init__(self, log_emission: np.ndarray, codes) -> None:
        self.table = np.ascontiguousarray(_check_log_emission(log_emission))
        self.index = codes if isinstance(codes, CodeIndex) else None
        if self.index is not None:
            codes = self.index.checked(self.table.shape[0])
        self.codes = None if codes is None else _check_codes(codes, self.table.shape[0])
        self.n_rows = self.table.shape[0] if self.codes is None else self.codes.size
        self.n_states = self.table.shape[1]
        self._exp = None
        self._table_T = None

    def log_rows(self, rows: np.ndarray, out: np.ndarray) -> None:
        """``out = log p(obs | state)`` of the given input rows."""
        _take_rows(self.table, rows if self.codes is None else self.codes[rows], out)

    def batch_index(self, rows: np.ndarray, out: np.ndarray) -> None:
        """``out`` = what :meth:`add_log_columns` takes for these input rows
        (their codes, or the rows themselves), gathered once per batch."""
        if self.codes is None:
            np.copyto(out, rows)
        else:
            np.take(self.codes, rows, out=out, mode="wrap")

    def add_log_columns(self, index: np.ndarray, out: np.ndarray, work: np.ndarray) -> None:
        """``out += log p(obs | state)`` of the rows of ``index`` (from
        :meth:`batch_index`), ``out`` as ``(K, rows)`` (one column per row);
        ``work`` has room for ``K * len(index)`` values.

        With codes, the columns are gathered from the transposed table, so
        that the sum runs over contiguous rows of both operands.
        """
        n, k = index.size, self.n_states
        if self.codes is None:
            rows_first = work[: n * k].reshape(n, k)
            _take_rows(self.table, index, rows_first)
            np.add(out, rows_first.T, out=out)
            return
        if self._table_T is None:
            self._table_T = np.ascontiguousarray(self.table.T)
        columns = work[: n * k].reshape(k, n)
        np.take(self._table_T, index, axis=1, out=columns, mode="clip")
        np.add(out, columns, out=out)

    def exp_rows(self, rows: np.ndarray, out: np.ndarray, shift: np.ndarray, work) -> None:
        """``out = exp(log-emission - shift)`` of the given rows, ``shift`` per row
        as in :func:`_exp_rows`."""
        if self.codes is None:
            _take_rows(self.table, rows, out)
            _exp_rows(self.table, rows, out, shift, work)
            return
        if self._exp is None:
            n = self.table.shape[0]
            table_exp, table_shift = self.table.copy(), np.empty(n)
            _exp_rows(self.table, np.arange(n), table_exp, table_shift, np.empty(n))
            self._exp = (table_exp, table_shift)
        codes = self.codes[rows]
        _take_rows(self._exp[0], codes, out)
        np.take(self._exp[1], codes, out=shift)

    def code_sums(self, rows: np.ndarray, gamma: np.ndarray, acc: np.ndarray, key) -> None:
        """``acc[c] += sum of gamma over the rows with code c`` (table form only);
        ``key`` names the batch for :class:`CodeIndex`.

        As a sparse one-hot matrix (codes x rows) times ``gamma``: the same sums in
        the same order as a ``bincount`` over (code, state) cells, in 0.5 ms instead
        of 1.35 ms for 50,000 rows of 12 states (measured; a fit on 10^6 beds runs
        about 1,600 of them)."""
        if self.index is None:
            one_hot = _one_hot(self.codes[rows], acc.shape[0])
        else:
            one_hot = self.index.one_hot(key, lambda: _one_hot(self.codes[rows], acc.shape[0]))
        acc += one_hot @ gamma


def _one_hot(codes: np.ndarray, n_codes: int):
    """The sparse ``(n_codes, len(codes))`` matrix with a one at ``(codes[j], j)``."""
    from scipy.sparse import csr_matrix

    n = codes.size
    return csr_matrix((np.ones(n), (codes, np.arange(n))), shape=(n_codes, n))


class CodeIndex:
    """The ``codes`` of :func:`forward_backward`, kept with the sparse one-hot matrix
    of each batch that sums the posteriors per code, for the next call on the same
    sequences. EM runs the recursions on the same beds at every iteration, and
    building those matrices anew was a tenth of each call on a graph-choice sample
    of 50,000 beds (measured). The sums are the same, in the same order.

    Kept per batch layout (the sequences' lengths and the batch size); a call with
    other lengths starts the store again.
    """

    def __init__(self, codes: np.ndarray) -> None:
        self.codes = codes
        self._checked: int | None = None
        self._layout: tuple | None = None
        self._store: dict = {}

    def checked(self, n_codes: int) -> np.ndarray:
        """The codes, checked against a table of ``n_codes`` rows once."""
        if self._checked != n_codes:
            self.codes = _check_codes(self.codes, n_codes)
            self._checked = n_codes
        return self.codes

    def bind(self, lengths: np.ndarray, rows_per_batch: int) -> None:
        """Start the store again unless the batches are those of the last call."""
        layout = (rows_per_batch, lengths.tobytes())
        if layout != self._layout:
            self._layout, self._store = layout, {}

    def one_hot(self, key, make):
        """The matrix of batch ``key`` of the current layout, made by ``make()`` once."""
        if key not in self._store:
            self._store[key] = make()
        return self._store[key]


def _resolve_batch_size(
    batch_size: int | None, n_states: int, cells: int = DEFAULT_BATCH_CELLS
) -> int:
    if batch_size is None:
        return max(1, cells // n_states)
    if int(batch_size) < 1:
        raise ConfigError(f"batch_size must be >= 1, got {batch_size}")
    return int(batch_size)


def _impossible(batch: _Batch, packed_row: int, what: str) -> InputError:
    s = int(batch.seq[batch.position[packed_row]])
    t = int(batch.step[packed_row])
    return InputError(
        f"sequence {s} is impossible under the model: {what} at its row {t} "
        f"(row {int(batch.rows[packed_row])} of the log-emission array); check "
        "labels/clamps against the allowed tract transitions and the emissions"
    )


# --------------------------------------------------------------------------
# forward-backward

# Rows whose emission sum lies in this range are exponentiated unshifted; the
# others are shifted by their maximum first.
_SAFE_LOW, _SAFE_HIGH = 1e-100, 1e100


def _exp_rows(
    le: np.ndarray, rows: np.ndarray, E: np.ndarray, shift: np.ndarray, work: np.ndarray
) -> None:
    """``E = exp(le[rows] - shift)`` with ``shift`` chosen per row (``E`` given as ``le[rows]``).

    Rabiner's scaling needs every row's emissions representable: the usual
    remedy is to subtract each row's maximum before exponentiating. A row
    maximum over a few columns is one of numpy's slow reductions, so it is
    taken only for rows whose plain exponentials sum outside
    ``[1e-100, 1e100]`` (under- or overflow possible); the other rows get
    ``shift = 0``. Rows where every state is forbidden (all ``-inf``) get
    shift 0 and stay all zeros, reported later as impossible.
    """
    with np.errstate(over="ignore"):
        np.exp(E, out=E)
    total = np.dot(E, np.ones(E.shape[1]), out=work)
    shift[:] = 0.0
    unsafe = np.flatnonzero(~((total >= _SAFE_LOW) & (total <= _SAFE_HIGH)))
    if unsafe.size:
        raw = le[rows[unsafe]]
        top = raw.max(axis=1)
        top[top == -np.inf] = 0.0
        E[unsafe] = np.exp(raw - top[:, None])
        shift[unsafe] = top


def _accumulate_xi(
    alpha: np.ndarray,
    ebc: np.ndarray,
    counts: np.ndarray,
    off: list[int],
    acc: np.ndarray,
    work: np.ndarray,
) -> None:
    """``acc += sum_t alpha[t]^T ebc[t+1]`` over every boundary of a batch.

    ``ebc[t+1] = E[t+1] * beta[t+1] / c[t+1]``; times ``A`` this is the sum of
    two-slice posteriors. Over a run of steps where no sequence ends, the
    rows of step ``t`` and of step ``t + 1`` are aligned contiguous blocks, so
    one product covers the whole run.
    """
    n_steps = counts.size
    if n_steps < 2:
        return
    # full[t]: no sequence ends at step t, so block t pairs entirely with t+1.
    full = counts[:-1] == counts[1:]
    edges = np.flatnonzero(np.diff(full.astype(np.int8))) + 1
    cuts = [0, *edges.tolist(), n_steps - 1]
    for a, b in itertools.pairwise(cuts):
        if full[a]:
            acc += np.dot(alpha[off[a] : off[b]].T, ebc[off[a + 1] : off[b + 1]], out=work)
        else:
            for t in range(a, b):
                n = int(counts[t + 1])
                acc += np.dot(
                    alpha[off[t] : off[t] + n].T, ebc[off[t + 1] : off[t + 1] + n], out=work
                )


def forward_backward(
    log_emission: np.ndarray,
    lengths: np.ndarray | Sequence[int] | None,
    startprob: np.ndarray,
    transmat: np.ndarray,
    *,
    return_xi: bool = False,
    batch_size: int | None = None,
    codes: np.ndarray | Sequence[int] | None = None,
    return_gamma: bool = True,
) -> Posteriors:
    """State and two-slice posteriors and log-likelihoods of many sequences.

    Scaled forward-backward recursions (Rabiner 1989, section V.A). Each row of
    ``log_emission`` is exponentiated, after subtracting a shift ``m_t`` (its
    maximum) on rows whose exponentials would under- or overflow; the forward
    variables are normalised at every step (scale factor ``c_t``), the
    backward variables divided by the same factors, and
    ``log L = sum_t (log c_t + m_t)``. Zeros in
    ``transmat`` and ``startprob`` stay exact zeros in every posterior
    (structural zeros of the tract graph), with no log of zero taken.

    Parameters
    ----------
    log_emission
        ``(T_total, K)`` ``log p(obs_t | state k)``, rows of all sequences
        concatenated. ``-inf`` forbids a state at a row (see
        :func:`constrained_log_emission`); ``0.0`` marginalises a missing
        observation.
    lengths
        ``(n_sequences,)`` number of rows of each sequence, summing to
        ``T_total``; ``None`` means one sequence.
    startprob
        ``(K,)`` initial-state probabilities.
    transmat
        ``(K, K)`` transition probabilities, ``transmat[i, j] = P(j at t+1 | i
        at t)``; rows sum to 1.
    return_xi
        Also return the ``(T_total - n_sequences, K, K)`` two-slice posterior of
        every boundary (needed for surface probabilities; the EM M-step only
        needs ``xi_sum``).
    batch_size
        Maximum rows per batch of work (memory is a few ``batch_size x K``
        float64 arrays besides the inputs and outputs; a sequence longer than
        ``batch_size`` is a batch of its own). Default
        ``DEFAULT_BATCH_CELLS // K``.
    codes
        ``(T_total,)`` integer code of every observation, for a categorical
        emission: ``log_emission`` is then a ``(n_codes, K)`` table and row
        ``t`` of the log-emission array is ``log_emission[codes[t]]`` (the
        array is never built), and :attr:`Posteriors.code_gamma` holds the
        posteriors summed per code. A :class:`CodeIndex` of the codes keeps
        work for the next call on the same sequences.
    return_gamma
        Keep the ``(T_total, K)`` state posteriors (``False``: ``gamma`` is
        ``None``, sparing its memory when only the summed statistics are
        needed, as in an EM iteration with ``codes``).

    Returns
    -------
    Posteriors

    Raises
    ------
    InputError
        Bad shapes or values, or a sequence that has probability zero under
        the model (the message names the sequence and the row).
    ConfigError
        ``startprob`` / ``transmat`` not probability vectors / matrices.

    Notes
    -----
    A sequence is reported impossible when a scale factor is exactly zero: no
    state allowed by the transitions has non-zero emission probability. As
    in every scaled (not log-space) recursion, hmmlearn's ``"scaling"``
    implementation included, a step whose probability is below about 1e-308
    of the step's best emission underflows to zero and counts as impossible.

    Matrix products run with one BLAS thread for the duration of the call
    (``threadpoolctl``), which is faster for these many small products and
    affects other threads of the process that call BLAS meanwhile.

    References
    ----------
    L. R. Rabiner (1989), "A tutorial on hidden Markov models and selected
    applications in speech recognition", Proc. IEEE 77(2):257-286.

    Examples
    --------
    >>> import numpy as np
    >>> le = np.log([[0.5, 0.1], [0.4, 0.3], [0.1, 0.6]])
    >>> post = forward_backward(le, [3], [0.6, 0.4], [[0.7, 0.3], [0.4, 0.6]])
    >>> post.gamma.shape, round(float(post.gamma.sum()), 6)
    ((3, 2), 3.0)
    """
    with single_thread_blas():
        source = _Emissions(log_emission, codes)
        return _forward_backward(
            source, lengths, startprob, transmat, return_xi, batch_size, return_gamma
        )


def _forward_backward(source, lengths, startprob, transmat, return_xi, batch_size, return_gamma):
    T, K = source.n_rows, source.n_states
    lens = _check_lengths(lengths, T)
    pi, A = _check_params(startprob, transmat, K)
    rows_per_batch = _resolve_batch_size(batch_size, K)
    AT = np.ascontiguousarray(A.T)
    ones = np.ones(K)
    dot, mul, div = np.dot, np.multiply, np.divide

    n_seq = lens.size
    loglik = np.empty(n_seq)
    gamma_out = np.empty((T, K)) if return_gamma else None
    code_gamma = None if source.codes is None else np.zeros(source.table.shape)
    xi_sum = np.zeros((K, K))
    xi_acc = np.zeros((K, K))  # sum of alpha[t]^T (E beta / c)[t+1]; times A at the end
    xi_step = np.empty((K, K))
    start = np.zeros(K)
    xi_out = None
    if return_xi:
        xi_out = np.empty((T - n_seq, K, K))
        boundary_start = np.concatenate(([0], np.cumsum(lens - 1)[:-1]))

    # Work buffers, reused by every batch: memory is bounded by the largest batch.
    cap = _buffer_rows(lens, rows_per_batch)
    E_buf, alpha_buf, beta_buf = np.empty((cap, K)), np.empty((cap, K)), np.empty((cap, K))
    scale_buf, shift_buf, norm_buf = np.empty(cap), np.empty(cap), np.empty(cap)

    if source.index is not None:
        source.index.bind(lens, rows_per_batch)
    for number, batch in enumerate(_batches(lens, rows_per_batch)):
        N = batch.n_rows
        counts, off = batch.counts.tolist(), batch.offsets.tolist()
        n_steps = len(counts)
        E, alpha, beta = E_buf[:N], alpha_buf[:N], beta_buf[:N]
        scale, row_max = scale_buf[:N], shift_buf[:N]
        _forward(source, batch, pi, A, E, alpha, scale, row_max, norm_buf[:N])

        # Backward pass; E[t] (t >= 1) is overwritten by E[t] * beta[t] / c[t],
        # the factor shared by beta[t-1] and by the two-slice posteriors
        # xi[t-1] = alpha[t-1]^T (E[t] * beta[t] / c[t]) * A.
        beta[batch.last] = 1.0
        for t in range(n_steps - 2, -1, -1):
            o1, n, o = off[t + 1], counts[t + 1], off[t]
            x = E[o1 : o1 + n]
            mul(x, beta[o1 : o1 + n], out=x)
            div(x, scale[o1 : o1 + n, None], out=x)
            dot(x, AT, out=beta[o : o + n])
        if xi_out is None:
            _accumulate_xi(alpha, E, batch.counts, off, xi_acc, xi_step)

        if xi_out is not None:
            # Per-boundary xi in chunks of at most rows_per_batch * K cells,
            # so that the K x K factor does not multiply the work memory.
            chunk = max(1, rows_per_batch // K)
            for lo in range(off[1] if n_steps > 1 else N, N, chunk):
                nxt = slice(lo, min(N, lo + chunk))
                step, position = batch.step[nxt], batch.position[nxt]
                xi_b = alpha[batch.offsets[step - 1] + position][:, :, None] * A
                xi_b *= E[nxt][:, None, :]
                xi_sum += xi_b.sum(axis=0)
                xi_out[boundary_start[batch.seq[position]] + step - 1] = xi_b
                del xi_b

        gamma = alpha
        mul(gamma, beta, out=gamma)
        norm = dot(gamma, ones, out=norm_buf[:N])
        div(gamma, norm[:, None], out=gamma)
        start += gamma[: counts[0]].sum(axis=0)
        if gamma_out is not None:
            _put_rows(gamma_out, batch.rows, gamma)
        if code_gamma is not None:
            source.code_sums(batch.rows, gamma, code_gamma, number)
        loglik[batch.seq] = _batch_log_likelihood(batch, scale, row_max)

    xi_sum += A * xi_acc
    return Posteriors(
        log_likelihood=loglik,
        gamma=gamma_out,
        xi_sum=xi_sum,
        xi=xi_out,
        start=start,
        code_gamma=code_gamma,
    )


def _forward(source, batch: _Batch, pi, A, E, alpha, scale, row_max, work) -> None:
    """The scaled forward pass of one batch: ``E`` the shifted emissions (shifts in
    ``row_max``), ``alpha`` the normalised forward variables and ``scale`` the
    scale factors ``c_t`` of its packed rows (Rabiner 1989, eq. 91-92)."""
    counts, off = batch.counts.tolist(), batch.offsets.tolist()
    ones = np.ones(A.shape[0])
    dot, mul, div = np.dot, np.multiply, np.divide
    source.exp_rows(batch.rows, E, row_max, work)
    with np.errstate(divide="ignore", invalid="ignore"):
        n0 = counts[0]
        mul(E[:n0], pi, out=alpha[:n0])
        dot(alpha[:n0], ones, out=scale[:n0])
        div(alpha[:n0], scale[:n0, None], out=alpha[:n0])
        for t in range(1, len(counts)):
            o, n, op = off[t], counts[t], off[t - 1]
            a = alpha[o : o + n]
            dot(alpha[op : op + n], A, out=a)
            mul(a, E[o : o + n], out=a)
            c = scale[o : o + n]
            dot(a, ones, out=c)
            div(a, c[:, None], out=a)
    bad = np.flatnonzero(~(scale > 0))
    if bad.size:
        raise _impossible(batch, int(bad[0]), "no allowed state explains the observation")


def _batch_log_likelihood(batch: _Batch, scale: np.ndarray, row_max: np.ndarray) -> np.ndarray:
    """``log L = sum_t (log c_t + m_t)`` of each sequence of a batch, in batch order
    (``scale`` is overwritten)."""
    np.log(scale, out=scale)
    scale += row_max
    return np.bincount(batch.position, weights=scale, minlength=batch.seq.size)


def log_likelihood(
    log_emission: np.ndarray,
    lengths: np.ndarray | Sequence[int] | None,
    startprob: np.ndarray,
    transmat: np.ndarray,
    *,
    batch_size: int | None = None,
    codes: np.ndarray | Sequence[int] | None = None,
) -> np.ndarray:
    """Log-likelihood of each sequence, from the forward pass alone.

    The same numbers, bit for bit, as ``forward_backward(...).log_likelihood``
    with the same arguments (the same scaled forward pass, batches and sums),
    without the backward pass and the posteriors.

    Parameters
    ----------
    log_emission, lengths, startprob, transmat, batch_size, codes
        As for :func:`forward_backward`.

    Returns
    -------
    numpy.ndarray
        ``(n_sequences,)`` natural log of the probability of each sequence.

    Raises
    ------
    InputError, ConfigError
        As :func:`forward_backward`.

    References
    ----------
    Rabiner (1989), section V.A (the forward variables and their scale factors).

    Examples
    --------
    >>> import numpy as np
    >>> le = np.log([[0.5, 0.1], [0.4, 0.3], [0.1, 0.6]])
    >>> pi, A = [0.6, 0.4], [[0.7, 0.3], [0.4, 0.6]]
    >>> ll = log_likelihood(le, [3], pi, A)
    >>> bool(ll[0] == forward_backward(le, [3], pi, A).log_likelihood[0])
    True
    """
    with single_thread_blas():
        source = _Emissions(log_emission, codes)
        T, K = source.n_rows, source.n_states
        lens = _check_lengths(lengths, T)
        pi, A = _check_params(startprob, transmat, K)
        rows_per_batch = _resolve_batch_size(batch_size, K)
        loglik = np.empty(lens.size)
        cap = _buffer_rows(lens, rows_per_batch)
        E_buf, alpha_buf = np.empty((cap, K)), np.empty((cap, K))
        scale_buf, shift_buf, work_buf = np.empty(cap), np.empty(cap), np.empty(cap)
        for batch in _batches(lens, rows_per_batch):
            N = batch.n_rows
            scale, row_max = scale_buf[:N], shift_buf[:N]
            _forward(source, batch, pi, A, E_buf[:N], alpha_buf[:N], scale, row_max, work_buf[:N])
            loglik[batch.seq] = _batch_log_likelihood(batch, scale, row_max)
        return loglik


# --------------------------------------------------------------------------
# Viterbi


def viterbi(
    log_emission: np.ndarray,
    lengths: np.ndarray | Sequence[int] | None,
    startprob: np.ndarray,
    transmat: np.ndarray,
    *,
    batch_size: int | None = None,
    codes: np.ndarray | Sequence[int] | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Most likely state path of each sequence (Viterbi), in log space.

    Parameters
    ----------
    log_emission, lengths, startprob, transmat, codes
        As for :func:`forward_backward`. Zero probabilities become ``-inf``
        (impossible transitions are never taken).
    batch_size
        Maximum rows per batch; the work memory is about ``batch_size x K``
        float64 values (``delta`` of the batch, kept for the backtracking).
        Default ``DEFAULT_VITERBI_BATCH_CELLS // K`` (1,048,576 rows, 128 MB,
        for 16 states).

    Returns
    -------
    path
        ``(T_total,)`` int state of every row, input order.
    log_prob
        ``(n_sequences,)`` natural log of the joint probability of each
        sequence and its path.

    Ties are broken towards the lowest state index (for the last state and
    for every back-pointer).

    Notes
    -----
    The sequences of a batch advance in lockstep, one time step per
    iteration of the Python loop. At each step ``delta`` of the running
    sequences is a ``(K, n)`` block, sequences innermost (``n`` padded to a
    multiple of 16 with columns whose values are never read when 128
    sequences or more run, so that the operands of the step can be
    contiguous arrays of the same shape, which numpy runs as one long loop),
    and ``max_i (delta_i + log A_ik)`` takes one
    sum and one reduction over the predecessors ``i``; on a sparse graph
    (every state has at most ``3K/4`` predecessors, as tract graphs with 2-3
    predecessors per state) only the allowed predecessors are summed, which
    gives the same numbers. The forward pass keeps only maxima; the
    back-pointers are recomputed along the decoded path alone (``K`` sums per
    row instead of ``K^2``). Every ``delta`` is the same floating-point
    number as in a loop over one sequence and one step at a time (the same
    sums; a maximum does not depend on the order), as in hmmlearn's.

    Why numpy and not compiled code: hmmlearn's compiled decode is the
    reference, but it takes no log-emission array and no clamped rows (see
    the module notes). On ``benchmarks/bench_em.py`` (1,000,000 observations,
    16 states) this function took 0.97-1.10 times hmmlearn's CPU time with a
    dense transition matrix (two days, the same code) and 0.60 of it with a tract-shaped one (3
    predecessors per state; repeated calls, ``benchmarks/hmm_engine.md``):
    the ``K^2`` sums and maxima per row run at numpy's speed, about 0.4 ns
    per predecessor and target, which a compiled loop over one row in
    registers beats, and the 130 MB of ``delta`` are fresh memory pages at
    every call. Two steps at once from per-code tables, pairwise halving in other
    layouts, pruning by sorted weights, a loop over the predecessors on
    cache-sized arrays and float32 were measured there and not kept (slower,
    or not the same numbers).

    Raises
    ------
    InputError
        Bad input, or a sequence with no path of non-zero probability (the
        message names the sequence).

    References
    ----------
    A. J. Viterbi (1967), "Error bounds for convolutional codes and an
    asymptotically optimum decoding algorithm", IEEE Trans. Inf. Theory
    13(2):260-269; G. D. Forney (1973), "The Viterbi algorithm", Proc. IEEE
    61(3):268-278; Rabiner (1989), section III.B.

    Examples
    --------
    >>> import numpy as np
    >>> le = np.log([[0.5, 0.1], [0.4, 0.3], [0.1, 0.6]])
    >>> path, lp = viterbi(le, [3], [0.6, 0.4], [[0.7, 0.3], [0.4, 0.6]])
    >>> path.tolist(), round(float(np.exp(lp[0])), 5)
    ([0, 0, 1], 0.01512)
    """
    return _viterbi(_Emissions(log_emission, codes), lengths, startprob, transmat, batch_size)


def _viterbi(source, lengths, startprob, transmat, batch_size):
    T, K = source.n_rows, source.n_states
    lens = _check_lengths(lengths, T)
    pi, A = _check_params(startprob, transmat, K)
    rows_per_batch = _resolve_batch_size(batch_size, K, DEFAULT_VITERBI_BATCH_CELLS)
    log_pi, log_A = _log(pi), _log(A)

    path_out = np.empty(T, dtype=np.intp)
    log_prob = np.empty(lens.size)
    batches = [_Steps(batch) for batch in _lockstep_batches(lens, rows_per_batch)]
    widest = max(steps.widest for steps in batches)
    # delta of every step of a batch, each step a (K, width) block: the
    # sequences are the innermost, contiguous axis of every operation
    delta_buf = np.empty(K * max(steps.n_cells for steps in batches))
    step = _MaxPlus(log_A, widest, max(int(steps.batch.counts[0]) for steps in batches))
    back = _BackStep(log_A, widest)
    work = np.empty(widest * K)  # emissions of one step
    # What the emissions of a batch's packed rows are looked up by, then
    # (backtracking) the state of each packed row, the same memory for both,
    # and _STEP_PAD entries more for the padding columns of the last steps.
    index_path = np.empty(max(steps.batch.n_rows for steps in batches) + _STEP_PAD, dtype=np.intp)
    for steps in batches:
        batch = steps.batch
        N, B = batch.n_rows, batch.seq.size
        counts, off, width = batch.counts.tolist(), batch.offsets.tolist(), steps.width.tolist()
        delta = delta_buf[: K * steps.n_cells]
        blocks = steps.blocks(delta, K)

        # Column j of step t is packed row off[t] + j; the padding columns
        # (j >= counts[t]) take the rows that follow, or the tail: any valid
        # row will do, as no result is ever read from a padding column.
        index = index_path[: N + _STEP_PAD]
        source.batch_index(batch.rows, index[:N])
        index[N:] = 0
        current = blocks[0]
        current[:] = log_pi[:, None]
        source.add_log_columns(index[: width[0]], current, work)
        for t in range(1, len(counts)):
            previous, current = current, blocks[t]
            if width[t] < _WIDE_STEP:
                current = current[:, : counts[t]]  # a narrow step: no padding columns
            step(previous, current)
            source.add_log_columns(index[off[t] : off[t] + current.shape[1]], current, work)

        # delta at the last row of every sequence: column j of step lengths[j] - 1
        final_delta = delta[steps.cells(batch.lengths - 1, np.arange(B), K)]
        final_state = final_delta.argmax(axis=0)
        final_lp = final_delta[final_state, np.arange(B)]
        dead = np.flatnonzero(final_lp == -np.inf)
        if dead.size:
            # Name the first row where every path of that sequence has died.
            j = int(dead[0])
            column = delta[steps.cells(np.arange(batch.lengths[j]), j, K)]
            first = int(np.flatnonzero(column.max(axis=0) == -np.inf)[0])
            raise _impossible(batch, off[first] + j, "no path of non-zero probability")
        log_prob[batch.seq] = final_lp

        # Backtracking over the packed rows, in place of the index: the
        # states read for padding columns are those of the rows that follow
        # (steps already backtracked), or the zeros of the tail. The sequences
        # ending at step t - 1 already hold their final state.
        path = index
        path[batch.last] = final_state
        for t in range(len(counts) - 1, 0, -1):
            o, op = off[t], off[t - 1]
            m = width[t] if width[t] >= _WIDE_STEP else counts[t]
            back(blocks[t - 1], path[o : o + m], path[op : op + counts[t]])
        path_out[batch.rows] = path[:N]

    return path_out, log_prob


class _LockstepBatch(_Batch):
    """A :class:`_Batch` built in fewer passes over its rows, for :func:`_viterbi`.

    ``rows`` is taken from the ``(steps, sequences)`` grid of every
    sequence's input rows, where the batch fills at least half of the grid
    (else as in :class:`_Batch`); ``step`` and ``position``, which only an
    error message reads, are computed when asked for. Measured on the
    benchmark's batch of 10^6 rows: 2.0 ms instead of 5.6 ms.
    """

    def __init__(self, seq: np.ndarray, lengths: np.ndarray, starts: np.ndarray) -> None:
        self.seq = seq
        self.lengths = lengths
        n_steps, n_seq = int(lengths[0]), seq.size
        self.counts = np.searchsorted(-lengths, -np.arange(n_steps), side="left")
        self.offsets = np.concatenate(([0], np.cumsum(self.counts)))
        n_rows = int(self.offsets[-1])
        if n_steps * n_seq <= 2 * n_rows:
            running = np.arange(n_seq) < self.counts[:, None]
            self.rows = np.add.outer(np.arange(n_steps), starts[seq])[running]
        else:
            step = self.step
            self.rows = starts[seq][np.arange(n_rows) - self.offsets[step]] + step
        self.last = self.offsets[lengths - 1] + np.arange(n_seq)

    @property
    def step(self) -> np.ndarray:
        return np.repeat(np.arange(self.counts.size), self.counts)

    @property
    def position(self) -> np.ndarray:
        return np.arange(self.offsets[-1]) - self.offsets[self.step]


def _lockstep_batches(lengths: np.ndarray, batch_size: int) -> Iterator[_LockstepBatch]:
    """The batches of :func:`_batches`, the same split, as :class:`_LockstepBatch`."""
    return _batches(lengths, batch_size, _LockstepBatch)


#: Sequences per Viterbi step are padded to a multiple of this (columns whose
#: values are never read), so that few distinct widths occur and the step's
#: operands can be made contiguous for each (see :class:`_MaxPlus`).
_STEP_PAD = 16

#: Bound on the sums of one Viterbi step held at once, in cells (2 MB of
#: float64): wider steps are done in chunks of sequences.
_STEP_CELLS = 1 << 18

#: Viterbi steps of at least this many (padded) sequences are "wide": laid out
#: for long contiguous loops (see :class:`_MaxPlus`); narrower steps, where
#: numpy's cost per call dominates, keep their exact width and the layout with
#: the fewest calls (measured: the wide layout took 1.2 to 1.8 times as long
#: on batches of 1 to 20 sequences).
_WIDE_STEP = 128


class _Steps:
    """Step layout of one batch for :func:`_viterbi`: step ``t`` of the batch is
    a ``(K, width[t])`` block of ``delta`` from ``K * offsets[t]``, ``width[t]``
    being the ``counts[t]`` running sequences rounded up to :data:`_STEP_PAD`.
    """

    def __init__(self, batch: _Batch) -> None:
        self.batch = batch
        self.width = -(-batch.counts // _STEP_PAD) * _STEP_PAD
        self.offsets = np.concatenate(([0], np.cumsum(self.width)))
        self.n_cells = int(self.offsets[-1])
        self.widest = int(self.width[0])

    def blocks(self, delta: np.ndarray, n_states: int) -> list[np.ndarray]:
        """The step blocks as views of ``delta``."""
        start = (n_states * self.offsets).tolist()
        return [
            delta[a:b].reshape(n_states, w)
            for a, b, w in zip(start[:-1], start[1:], self.width.tolist())
        ]

    def cells(self, steps: np.ndarray, position, n_states: int) -> np.ndarray:
        """Indices into ``delta`` of the ``(K, len(steps))`` values of the
        sequence(s) at ``position`` at those steps."""
        return (
            (n_states * self.offsets[steps])[None, :]
            + np.arange(n_states)[:, None] * self.width[steps][None, :]
            + np.asarray(position)[None, ...]
        )


class _MaxPlus:
    """One Viterbi step: ``out[k, j] = max_i (delta[i, j] + log A[i, k])`` for
    the sequences ``j`` of a step (the first ``out.shape[1]`` columns of
    ``delta``).

    The sums are laid out ``(targets k, predecessors, sequences)``: with the
    weights repeated along the sequences into an array of the step's exact
    width, the sum ``delta[None] + weights`` runs over two contiguous operands
    of ``(predecessors, sequences)`` each, which numpy does as one long inner
    loop (about twice as fast as when one operand is broadcast along an inner
    axis, measured), then one reduction over the predecessors. The weights
    are rebuilt when the width changes, which the padding to
    :data:`_STEP_PAD` keeps rare. Sparse graphs (every state has at most
    ``p <= 3K/4`` predecessors, as tract graphs with 2-3): only the allowed
    predecessors, their rows of ``delta`` gathered as ``(K, p, sequences)``;
    missing ones are padded with weight ``-inf``, which never wins a maximum,
    so both forms give the same numbers. Steps wider than the bound
    :data:`_STEP_CELLS` allows are done in chunks of sequences.

    Narrow steps (fewer than :data:`_WIDE_STEP` sequences, no padding): the
    sums laid out ``(predecessors, targets, sequences)`` from a view of
    ``delta``, and one reduction over the outermost axis, which numpy does in
    fewer, longer loops when the sequences are few.
    """

    def __init__(self, log_A: np.ndarray, n_max: int, n_running: int | None = None) -> None:
        K = log_A.shape[0]
        allowed = log_A > -np.inf
        p = max(1, int(allowed.sum(axis=0).max()))
        self.sparse = 4 * p <= 3 * K
        if self.sparse:
            # the p allowed predecessors of every target, padded with forbidden ones
            order = np.argsort(~allowed, axis=0, kind="stable")[:p].T  # (K, p)
            self.pred = order.ravel()
            base = np.take_along_axis(log_A.T, order, axis=1)
        else:
            self.pred = None
            base = log_A.T
        self.base = np.ascontiguousarray(base)  # (targets, predecessors)
        self.K, self.p = K, self.base.shape[1]
        #: sequences per chunk of a step
        self.span = int(max(1, min(n_max, _STEP_CELLS // (K * self.p))))
        cells = K * self.p * self.span
        self._weight_buf = np.empty(cells)
        self._weight_width = 0
        self.scores = np.empty(cells)
        self.gathered = np.empty(cells) if self.sparse else None
        # contiguous copies of (a chunk of) delta and of the maxima of a chunk;
        # zeros, so that their padding columns hold numbers
        self.narrow = np.zeros(K * self.span)
        self.chunk_out = np.zeros(K * self.span)
        # narrow steps: (predecessors, targets) weights repeated along the
        # sequences, as many as run at most (a contiguous slice is faster)
        few = int(max(1, min(n_max if n_running is None else n_running, _WIDE_STEP)))
        self.few_weight = np.ascontiguousarray(
            np.broadcast_to(self.base.T[:, :, None], (self.p, K, few))
        )
        self.few_pred = None if self.pred is None else self.pred.reshape(K, self.p).T.ravel()
        self.few_scores = np.empty(self.p * K * few)
        self.few_gathered = None if self.pred is None else np.empty(self.p * K * few)

    def weights(self, m: int) -> np.ndarray:
        """``(K, p, m)``: ``base`` repeated ``m`` times along the last axis."""
        if m != self._weight_width:
            w = self._weight_buf[: self.base.size * m].reshape(self.K, self.p, m)
            np.copyto(w, self.base[:, :, None])
            self._weight, self._weight_width = w, m
        return self._weight

    def __call__(self, delta: np.ndarray, out: np.ndarray) -> None:
        K, m = self.K, out.shape[1]
        if m < _WIDE_STEP:
            self._narrow(delta[:, :m], out)
            return
        if m <= self.span:
            if delta.shape[1] != m:
                # fewer sequences than in the previous step: a contiguous copy
                narrow = self.narrow[: K * m].reshape(K, m)
                np.copyto(narrow, delta[:, :m])
                delta = narrow
            self._sums_max(delta, out, m)
            return
        span = self.span
        narrow = self.narrow.reshape(K, span)
        chunk_out = self.chunk_out.reshape(K, span)
        for lo in range(0, m, span):
            n = min(span, m - lo)
            np.copyto(narrow[:, :n], delta[:, lo : lo + n])
            self._sums_max(narrow, chunk_out, span)
            np.copyto(out[:, lo : lo + n], chunk_out[:, :n])

    def _narrow(self, delta: np.ndarray, out: np.ndarray) -> None:
        # delta, out: (K, n) views, n < _WIDE_STEP
        K, p, n = self.K, self.p, out.shape[1]
        scores = self.few_scores[: p * K * n].reshape(p, K, n)
        weight = self.few_weight[:, :, :n]
        if self.few_pred is None:
            np.add(delta[:, None, :], weight, out=scores)
        else:
            gathered = self.few_gathered[: p * K * n].reshape(p * K, n)
            delta.take(self.few_pred, axis=0, out=gathered, mode="clip")
            np.add(gathered.reshape(p, K, n), weight, out=scores)
        np.maximum.reduce(scores, axis=0, out=out)

    def _sums_max(self, delta: np.ndarray, out: np.ndarray, m: int) -> None:
        # delta, out: contiguous (K, m)
        K, p = self.K, self.p
        weight = self.weights(m)
        scores = self.scores[: K * p * m].reshape(K, p, m)
        if self.pred is None:
            np.add(delta[None], weight, out=scores)
        else:
            gathered = self.gathered[: K * p * m].reshape(K * p, m)
            delta.take(self.pred, axis=0, out=gathered, mode="clip")
            np.add(gathered.reshape(K, p, m), weight, out=scores)
        np.maximum.reduce(scores, axis=1, out=out)


class _BackStep:
    """One backtracking step: the predecessor of the state ``k`` on the path
    of each sequence, ``argmax_i (delta[i] + log A[i, k])``, the lowest ``i``
    on ties (as hmmlearn's and numpy's argmax).

    The candidates are ``(K, sequences)``, so that every operation runs along
    the sequences: the maximum of each column, then the lowest row equal to
    it, found as the largest of ``(K - i) * (row i is the maximum)`` in
    ``uint8``. An argmax over the same candidates, along the states of a
    ``(sequences, K)`` array or across the rows of this one, took 1.5 to 2.5
    times as long (measured). Narrow steps (fewer than :data:`_WIDE_STEP`
    sequences), where numpy's cost per call dominates, take the three calls
    of that argmax along the states instead.
    """

    def __init__(self, log_A: np.ndarray, n_max: int) -> None:
        K = log_A.shape[0]
        self.K, self.log_A = K, log_A
        self.cand = np.empty(K * n_max)
        self.top = np.empty(n_max)
        self.is_top = np.empty(K * n_max, dtype=bool)
        self.rank_of_top = np.empty(K * n_max, dtype=np.uint8)
        self.best = np.empty(n_max, dtype=np.uint8)
        self.rank = (K - np.arange(K)).astype(np.uint8)[:, None]
        self.log_AT = np.ascontiguousarray(log_A.T)

    def __call__(self, delta: np.ndarray, state: np.ndarray, out: np.ndarray) -> None:
        """``out[j]`` = predecessor of ``state[j]`` for ``j < len(out)``, from
        ``delta`` of the step before (its first ``len(state)`` columns)."""
        K, m = self.K, state.size
        if m < _WIDE_STEP:
            n = out.size
            cand = self.cand[: n * K].reshape(n, K)
            self.log_AT.take(state[:n], axis=0, out=cand, mode="clip")
            np.add(cand, delta[:, :n].T, out=cand)
            np.argmax(cand, axis=1, out=out)
            return
        cand = self.cand[: K * m].reshape(K, m)
        self.log_A.take(state, axis=1, out=cand, mode="clip")
        np.add(cand, delta[:, :m], out=cand)
        top = self.top[:m]
        np.maximum.reduce(cand, axis=0, out=top)
        is_top = self.is_top[: K * m].reshape(K, m)
        np.equal(cand, top, out=is_top)
        rank_of_top = self.rank_of_top[: K * m].reshape(K, m)
        np.multiply(is_top.view(np.uint8), self.rank, out=rank_of_top)
        best = self.best[:m]
        np.maximum.reduce(rank_of_top, axis=0, out=best)
        np.subtract(K, best[: out.size], out=out, casting="unsafe")


# --------------------------------------------------------------------------
# clamping


def constrained_log_emission(log_emission: np.ndarray, clamp: np.ndarray) -> np.ndarray:
    """Copy of ``log_emission`` with forbidden states set to ``-inf``.

    Used for partially labelled (semi-supervised) sequences: an interpreted
    bed keeps its tract in :func:`forward_backward` (posterior 1) and in
    :func:`viterbi`.

    Parameters
    ----------
    log_emission
        ``(T, K)`` log-emission array.
    clamp
        Either ``(T,)`` integers, ``-1`` = free, ``k`` = the row must be in
        state ``k``; or a ``(T, K)`` boolean mask of allowed states (for a
        tract made of several sub-states, allow all of them).

    Returns
    -------
    numpy.ndarray
        ``(T, K)`` float64 copy; the input is not changed.

    Raises
    ------
    InputError
        Wrong shape, a state index outside ``-1 .. K-1``, or a mask row that
        allows no state (names the row).
    """
    le = np.array(_check_log_emission(log_emission), dtype=np.float64, copy=True)
    T, K = le.shape
    cl = np.asarray(clamp)
    if cl.dtype == np.bool_:
        if cl.shape != (T, K):
            raise InputError(f"clamp mask has shape {cl.shape}; expected ({T}, {K})")
        empty = np.flatnonzero(~cl.any(axis=1))
        if empty.size:
            raise InputError(f"clamp mask row {int(empty[0])} allows no state")
        le[~cl] = -np.inf
        return le
    if cl.shape != (T,):
        raise InputError(f"clamp has shape {cl.shape}; expected ({T},) or a ({T}, {K}) mask")
    if not np.issubdtype(cl.dtype, np.integer):
        raise InputError(f"clamp must hold integer states (-1 = free), got dtype {cl.dtype}")
    out_of_range = np.flatnonzero((cl < -1) | (cl >= K))
    if out_of_range.size:
        r = int(out_of_range[0])
        raise InputError(f"clamp row {r} is state {int(cl[r])}; expected -1 (free) or 0..{K - 1}")
    rows = np.flatnonzero(cl >= 0)
    kept = le[rows, cl[rows]]
    le[rows] = -np.inf
    le[rows, cl[rows]] = kept
    return le
