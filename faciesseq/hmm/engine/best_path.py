"""Viterbi: the most probable state path of every sequence, batch by batch.

hmmlearn is the reference the tests compare against (the same paths), and
``benchmarks/bench_em.py`` measures the speed of both
(``benchmarks/hmm_engine.md``): Viterbi, whose maxima numpy cannot hand to BLAS,
took 1.10 times the CPU time of hmmlearn's
compiled loop with 16 states and a dense transition matrix on 2026-12-03 and
0.97 on 2026-12-04 (the same code), and 0.60 of it on a tract-shaped graph
(see :func:`viterbi`).
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence

import numpy as np

from faciesseq.hmm.engine.batches import (
    _Batch,
    _batches,
    _impossible,
    _resolve_batch_size,
)
from faciesseq.hmm.engine.checks import _check_lengths, _check_params, _log
from faciesseq.hmm.engine.emission_rows import _Emissions

#: Default work bound of :func:`viterbi` (rows per batch times states): its
#: one large work array is ``delta`` of the batch (128 MB at this bound). A
#: larger batch means fewer time steps, each paying numpy's per-call cost
#: twice (forward and backtracking), but more fresh memory pages on a first
#: call; measured in ``benchmarks/hmm_engine.md``.
DEFAULT_VITERBI_BATCH_CELLS = 1 << 24


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
        N = batch.n_rows
        delta = delta_buf[: K * steps.n_cells]
        blocks = steps.blocks(delta, K)

        # Column j of step t is packed row off[t] + j; the padding columns
        # (j >= counts[t]) take the rows that follow, or the tail: any valid
        # row will do, as no result is ever read from a padding column.
        index = index_path[: N + _STEP_PAD]
        source.batch_index(batch.rows, index[:N])
        index[N:] = 0
        _max_plus_steps(steps, blocks, index, log_pi, step, source, work)
        final_state, log_prob[batch.seq] = _final_states(steps, delta, K)
        # Backtracking over the packed rows, in place of the index
        path = index
        path[batch.last] = final_state
        _backtrack(steps, blocks, path, back)
        path_out[batch.rows] = path[:N]

    return path_out, log_prob


def _max_plus_steps(steps, blocks, index, log_pi, step, source, work) -> None:
    """The max-plus forward pass of one batch into its ``(K, width)`` delta blocks,
    the emissions of step ``t`` looked up by ``index`` (packed rows)."""
    counts, off, width = steps.lists()
    current = blocks[0]
    current[:] = log_pi[:, None]
    source.add_log_columns(index[: width[0]], current, work)
    for t in range(1, len(counts)):
        previous, current = current, blocks[t]
        if width[t] < _WIDE_STEP:
            current = current[:, : counts[t]]  # a narrow step: no padding columns
        step(previous, current)
        source.add_log_columns(index[off[t] : off[t] + current.shape[1]], current, work)


def _final_states(steps, delta, K: int) -> tuple[np.ndarray, np.ndarray]:
    """The best last state and the log-probability of the best path of every sequence
    of a batch, from delta at its last row (column ``j`` of step ``lengths[j] - 1``);
    a sequence whose every path died is refused, naming the first row where they did."""
    batch = steps.batch
    B = batch.seq.size
    final_delta = delta[steps.cells(batch.lengths - 1, np.arange(B), K)]
    final_state = final_delta.argmax(axis=0)
    final_lp = final_delta[final_state, np.arange(B)]
    dead = np.flatnonzero(final_lp == -np.inf)
    if dead.size:
        j = int(dead[0])
        column = delta[steps.cells(np.arange(batch.lengths[j]), j, K)]
        first = int(np.flatnonzero(column.max(axis=0) == -np.inf)[0])
        raise _impossible(batch, int(batch.offsets[first]) + j, "no path of non-zero probability")
    return final_state, final_lp


def _backtrack(steps, blocks, path, back) -> None:
    """Backtracking of one batch over its packed rows, in place of ``path`` (which
    holds the final state of every sequence at its last row): the states read for
    padding columns are those of the rows that follow (steps already backtracked), or
    the zeros of the tail; the sequences ending at step ``t - 1`` already hold their
    final state."""
    counts, off, width = steps.lists()
    for t in range(len(counts) - 1, 0, -1):
        o, op = off[t], off[t - 1]
        m = width[t] if width[t] >= _WIDE_STEP else counts[t]
        back(blocks[t - 1], path[o : o + m], path[op : op + counts[t]])


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

    def lists(self) -> tuple[list, list, list]:
        """The batch's counts and offsets of packed rows per step and the steps'
        padded widths, as lists (Python integers index fastest in the step loops)."""
        return self.batch.counts.tolist(), self.batch.offsets.tolist(), self.width.tolist()

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
