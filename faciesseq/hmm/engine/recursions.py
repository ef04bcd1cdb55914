"""Forward-backward (posteriors, two-slice posteriors, per-code sums) and the
log-likelihood, batch by batch.

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
memory pages of the 128 MB array and of ``gamma``).
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from faciesseq.errors import InputError
from faciesseq.hmm.engine.batches import (
    _Batch,
    _batches,
    _buffer_rows,
    _impossible,
    _put_rows,
    _resolve_batch_size,
    single_thread_blas,
)
from faciesseq.hmm.engine.checks import (
    _check_lengths,
    _check_params,
)
from faciesseq.hmm.engine.emission_rows import _Emissions

#: Boundaries at a time whose two-slice posteriors are summed against masks: their
#: ``K x K`` numbers stay in the cache between the products and the sums.
MASKED_XI_CHUNK = 512


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
    xi_masks: np.ndarray | None = None,
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
    xi_masks
        ``(n_masks, K, K)`` weights of state pairs (with ``return_xi``): each
        boundary's two-slice posterior is kept only as its weighted sums, so that
        ``xi`` is ``(T_total - n_sequences, n_masks)``: the same numbers, bit for
        bit, as ``np.einsum("tij,sij->ts", xi, xi_masks)`` of the full ``xi`` (the
        surface probabilities of every contact), without its ``K x K`` numbers
        per boundary stored.

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
            source, lengths, startprob, transmat, return_xi, batch_size, return_gamma, xi_masks
        )


def _forward_backward(
    source, lengths, startprob, transmat, return_xi, batch_size, return_gamma, xi_masks
):
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
        xi_out = np.empty((T - n_seq, *((K, K) if xi_masks is None else xi_masks.shape[:1])))
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
        E, alpha, beta = E_buf[:N], alpha_buf[:N], beta_buf[:N]
        scale, row_max = scale_buf[:N], shift_buf[:N]
        _forward(source, batch, pi, A, E, alpha, scale, row_max, norm_buf[:N])

        _backward(batch, E, beta, scale, AT)
        if xi_out is None:
            _accumulate_xi(alpha, E, batch.counts, off, xi_acc, xi_step)
        else:
            chunk = max(1, rows_per_batch // K) if xi_masks is None else MASKED_XI_CHUNK
            _boundary_xi(batch, alpha, E, A, chunk, xi_sum, xi_out, boundary_start, xi_masks)

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


def _backward(batch: _Batch, E, beta, scale, AT) -> None:
    """The scaled backward pass of one batch, in place: ``beta`` the backward
    variables divided by the forward pass's scale factors, and ``E[t]`` (``t >= 1``)
    overwritten by ``E[t] * beta[t] / c[t]``, the factor shared by ``beta[t-1]`` and by
    the two-slice posteriors ``xi[t-1] = alpha[t-1]^T (E[t] * beta[t] / c[t]) * A``."""
    counts, off = batch.counts.tolist(), batch.offsets.tolist()
    mul, div, dot = np.multiply, np.divide, np.dot
    beta[batch.last] = 1.0
    for t in range(len(counts) - 2, -1, -1):
        o1, n, o = off[t + 1], counts[t + 1], off[t]
        x = E[o1 : o1 + n]
        mul(x, beta[o1 : o1 + n], out=x)
        div(x, scale[o1 : o1 + n, None], out=x)
        dot(x, AT, out=beta[o : o + n])


def _boundary_xi(
    batch: _Batch, alpha, E, A, chunk, xi_sum, xi_out, boundary_start, masks=None
) -> None:
    """The two-slice posterior of every boundary of one batch into ``xi_out`` (or its
    sums against ``masks``; and summed into ``xi_sum``), from the forward variables and
    the ``E`` of :func:`_backward`; in chunks of ``chunk`` boundaries, so that the
    ``K x K`` factor does not multiply the work memory."""
    N, off = batch.n_rows, batch.offsets
    for lo in range(int(off[1]) if len(batch.counts) > 1 else N, N, chunk):
        nxt = slice(lo, min(N, lo + chunk))
        step, position = batch.step[nxt], batch.position[nxt]
        xi_b = alpha[off[step - 1] + position][:, :, None] * A
        xi_b *= E[nxt][:, None, :]
        xi_sum += xi_b.sum(axis=0)
        kept = xi_b if masks is None else np.einsum("tij,sij->ts", xi_b, masks)
        xi_out[boundary_start[batch.seq[position]] + step - 1] = kept


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
