"""Fitting the tract model: EM for the *maximum a posteriori* parameters.

The E-step runs the engine's forward-backward over batches of whole
successions (clamped beds keep their tract) and sums the pieces' sufficient
statistics; the M-step re-estimates pieces, start and transition probabilities
under their Dirichlet pseudo-counts; each restart starts from the rule-based
or perturbed weights of :meth:`ExpectationMaximisation._initial` (Baum et al.
1970; Dempster, Laird & Rubin 1977). :class:`ConvergenceMonitor` stops it and
refuses a decreasing objective. :class:`~faciesseq.hmm.model.TractHMM` takes
these methods from :class:`ExpectationMaximisation`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from contextlib import nullcontext
from dataclasses import dataclass, field
from itertools import pairwise

import numpy as np

from faciesseq.errors import FaciesseqError, InputError
from faciesseq.hmm import engine
from faciesseq.hmm.emissions import EmissionPiece
from faciesseq.hmm.encoding import EncodedBeds
from faciesseq.parallel import Workers

__all__ = [
    "CHUNK_BEDS",
    "TOL_BEDS",
    "ChunkedEStep",
    "ConvergenceError",
    "ConvergenceMonitor",
    "ExpectationMaximisation",
    "ProgressCallback",
    "TrainingData",
    "chunk_bounds",
    "distinct_rows",
]

#: ``progress(restart, iteration, objective)``, called after every EM iteration.
ProgressCallback = Callable[[int, int, float], None]

#: Beds per which the convergence tolerance counts on larger fits (see
#: :class:`ConvergenceMonitor`); fits of at most this many beds use it as it is.
TOL_BEDS = 1_000


#: Weight of the random part of the starting weights of restarts after the first
#: where EM starts from given weights (a nested fit's reading,
#: :mod:`faciesseq.hmm.nested`; a random start would lose what it is there to keep).
START_NOISE = 0.2

#: Beds per chunk of the E-step of a large EM run (``chunk_beds`` of the tract model;
#: see :func:`chunk_bounds`).
CHUNK_BEDS = 200_000


class ConvergenceError(FaciesseqError):
    """EM's objective went down: a numerical problem, never expected (exit code 1)."""


@dataclass
class ConvergenceMonitor:
    """Tracks EM's objective (log-likelihood + log-prior) over iterations.

    Converged when an iteration improves the objective by less than ``tol``
    (natural-log units) per :data:`TOL_BEDS` beds of the ``n_beds`` fitted --
    ``tol`` itself on fits of at most that many beds -- or after ``max_iter``
    iterations. A decrease by more than rounding (``1e-9`` relative) raises
    :class:`ConvergenceError`: EM cannot decrease its objective (Dempster et al.
    1977, theorem 1), so a decrease is a bug, not a result.

    Why per bed: the objective is a sum over beds, so the gain of an iteration at
    a given stage of EM grows with them (scikit-learn's ``GaussianMixture`` puts its
    tolerance on the lower bound per sample for the same reason). Measured on the
    replicated demo database: an absolute 1e-3 was still not reached after 200
    iterations on 10^5 beds (0.011 per iteration, about 1e-7 per bed) and never on
    10^6; stopped at 1e-6 per bed instead, the fits lost at most 1e-4 of
    log-likelihood per bed against their 200th iteration, against BIC gaps of 0.04
    to 0.13 per bed between the candidate graphs (benchmarks/README.md, section
    "Scale: whole commands per bed"). Fits of up to :data:`TOL_BEDS` beds (the demo
    database, most tests) stop where they stopped before.
    """

    tol: float = 1e-3
    max_iter: int = 200
    history: list[float] = field(default_factory=list)
    n_beds: int = 0

    def report(self, objective: float) -> None:
        if not math.isfinite(objective):
            raise ConvergenceError(f"EM objective is {objective} at iteration {self.iter + 1}")
        if self.history:
            last = self.history[-1]
            if objective < last - 1e-9 * max(1.0, abs(last)):
                raise ConvergenceError(
                    f"EM objective decreased from {last:.10g} to {objective:.10g} at "
                    f"iteration {self.iter + 1}"
                )
        self.history.append(float(objective))

    @property
    def iter(self) -> int:
        return len(self.history)

    @property
    def threshold(self) -> float:
        """The gain below which an iteration ends EM: ``tol`` per :data:`TOL_BEDS`
        beds, and never below ``tol``."""
        return self.tol * max(1.0, self.n_beds / TOL_BEDS)

    @property
    def converged(self) -> bool:
        return self.iter >= self.max_iter or self.reached_tolerance

    @property
    def reached_tolerance(self) -> bool:
        return self.iter >= 2 and self.history[-1] - self.history[-2] < self.threshold


@dataclass
class TrainingData:
    """What fitting needs, coded once."""

    beds: EncodedBeds
    clamp: np.ndarray | None  # (T, n_tracts) bool, or None
    ranks: np.ndarray  # (T,) rank of each bed's facies (NaN unknown)
    rule: np.ndarray | None  # (T,) trend-rule tract index, where EM starts from it
    cores: tuple[str, ...] = ()  # core of each succession
    static: np.ndarray | None = None  # (T, n_tracts) log-prob of the static pieces
    trained: Mapping[str, EmissionPiece] = field(default_factory=dict)  # static, by feature
    combos: tuple[np.ndarray, np.ndarray] | None = None  # see ExpectationMaximisation._combos
    start: np.ndarray | None = None  # (T, n_tracts) starting weights (faciesseq.hmm.nested)
    code_index: engine.CodeIndex | None = None  # the combinations' codes, made by the E-step

    def chunk(self, start: int, stop: int, first: int, last: int) -> TrainingData:
        """Beds ``start:stop``, which are successions ``first:last``, as the data of one
        chunk of the E-step: what the E-step reads. Where the distinct combinations of
        codes are known (:meth:`ExpectationMaximisation._e_step_on_combinations`), they
        stay those of the whole fit, and the chunk's beds hold their lengths alone:
        that E-step reads the combination of each bed, not its codes (measured, 0.4
        instead of 5.7 MB per 50,000 beds to hand to a worker)."""
        lengths = self.beds.lengths[first:last]
        combos = None if self.combos is None else (self.combos[0], self.combos[1][start:stop])
        nothing = np.empty(0, dtype=np.int64)
        beds = (
            self.beds.slice(start, stop, lengths)
            if combos is None
            else EncodedBeds(lengths, nothing, nothing, nothing, {})
        )
        return TrainingData(
            beds,
            None if self.clamp is None else self.clamp[start:stop],
            np.empty(0),  # the ranks and the trend rule start EM; the E-step reads neither
            None,
            self.cores[first:last],
            None if self.static is None else self.static[start:stop],
            {},
            combos,
        )


def chunk_bounds(lengths: np.ndarray, chunk_beds: int) -> list[tuple[int, int, int, int]]:
    """``(start, stop, first, last)`` of the chunks of whole successions the E-step of
    an EM run on ``lengths`` is cut into: beds ``start:stop``, successions
    ``first:last``; empty (one E-step over every bed, as before chunks) below two
    chunks' worth of beds.

    The number of chunks is the number of whole ``chunk_beds`` the beds hold, and the
    chunks are about equal (a cut falls after the succession that reaches each
    multiple of beds / chunks), so the split depends on the beds alone, never on the
    number of workers: a chunk's statistics, and their sum in chunk order, are then
    the same numbers wherever the chunks run.

    Why two chunks of :data:`CHUNK_BEDS` (200,000 beds, the default E-step batch):
    a round of jobs costs about 0.011 s on two local processes before any work, and
    an E-step 0.12 (codes only) to 0.33 s (labelled) per 10^6 beds in one process.
    Measured on the replicated demo database (``benchmarks/parallel.md``,
    2026-12-03 chunked E-step): on 4 x 10^5 beds in two chunks an E-step took 0.046
    instead of 0.051 s (codes only) and 0.096 instead of 0.141 s (labelled) on two
    local processes; on 10^5 beds in two chunks of 50,000, 0.011 instead of 0.014 s
    (codes only) but 0.046 instead of 0.026 s (labelled). Below the threshold sit
    every fit of fewer than 400,000 beds, the demo and the candidate tract graphs'
    sample of about :data:`~faciesseq.hmm.graphs.SAMPLE_BEDS` beds among them: they
    run one E-step as before chunks, and their model files do not change.
    """
    lengths = np.asarray(lengths, dtype=np.int64)
    n_beds = int(lengths.sum())
    n_chunks = n_beds // max(1, int(chunk_beds))
    if n_chunks < 2 or len(lengths) < 2:
        return []
    ends = np.cumsum(lengths)
    target = np.arange(1, n_chunks) * (n_beds / n_chunks)
    cuts = np.searchsorted(ends, target, side="left") + 1
    cuts = np.unique(np.concatenate(([0], np.clip(cuts, 1, len(lengths)), [len(lengths)])))
    starts = np.concatenate(([0], ends))
    return [(int(starts[i]), int(starts[j]), int(i), int(j)) for i, j in pairwise(cuts)]


def _added(total: dict, more: dict) -> None:
    """Add the sufficient statistics ``more`` into ``total`` (dicts of arrays, nested)."""
    for key, value in more.items():
        if isinstance(value, dict):
            _added(total[key], value)
        else:
            total[key] = total[key] + value


def _chunk_e_step(estimator, moving, startprob, transmat, shared: tuple):
    """The E-step of one chunk (one job): ``(log-likelihood, piece statistics,
    transition counts, start counts)``. ``shared`` is the chunk's data and the static
    pieces (sent once); ``moving`` the pieces EM changes, ``None`` where a static one
    goes."""
    chunk, fixed = shared
    pieces = [f if m is None else m for m, f in zip(moving, fixed)]
    return estimator._e_step(pieces, startprob, transmat, chunk)


class ChunkedEStep:
    """The E-step of one large EM run as one job per chunk of whole successions
    (:func:`chunk_bounds`), run on ``workers``; the chunks' sufficient statistics
    (piece statistics, expected transition and start counts, log-likelihood) are
    summed here in chunk order, and the M-step stays with the caller.

    With one worker the same chunks are summed in the same order in this process, so
    the fitted parameters are the same bit for bit whatever the number of workers.
    The chunks, and the static pieces that EM does not change (the boosted trees of
    ``stacking``, about 1 MB), are sent to the workers once
    (:meth:`faciesseq.parallel.Workers.share`); every iteration then sends the
    current parameters only.
    """

    def __init__(self, estimator, data: TrainingData, pieces, workers: Workers) -> None:
        if data.clamp is None and data.static is None and all(p.coded for p in pieces):
            estimator._combos(pieces, data)  # one table of combinations for every chunk
        bounds = chunk_bounds(data.beds.lengths, estimator.chunk_beds)
        self.n_chunks = len(bounds)
        self._estimator = estimator._e_step_estimator()
        self._workers = workers
        fixed = tuple(p if p.static else None for p in pieces)
        self._chunks = workers.share([(data.chunk(*b), fixed) for b in bounds])

    def __call__(self, pieces, startprob, transmat, data: TrainingData | None = None):
        moving = [None if p.static else p for p in pieces]
        jobs = [(self._estimator, moving, startprob, transmat, c) for c in self._chunks]
        parts = self._workers.run(_chunk_e_step, jobs)
        S = self._estimator.states_.n_tracts
        stats = [p.empty_stats(S) for p in pieces]
        total, trans, start = 0.0, 0.0, 0.0
        for ll, chunk_stats, chunk_trans, chunk_start in parts:
            total += ll
            for st, more in zip(stats, chunk_stats):
                _added(st, more)
            trans = trans + chunk_trans
            start = start + chunk_start
        return total, stats, trans, start


def _located(exc: InputError, cores: Sequence[str], first: int) -> InputError:
    """The engine's error about "sequence N" of a batch, naming the core instead."""
    import re

    found = re.search(r"sequence (\d+)", exc.message)
    core = None
    if found and cores:
        k = first + int(found.group(1))
        core = cores[k] if k < len(cores) else None
    return InputError(
        "the beds have probability zero under the tract model (" + exc.message + ")", core=core
    )


def distinct_rows(codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The distinct rows of integer ``codes`` ``(T, n)`` in lexicographic order and the
    row of each of the ``T`` (``np.unique(codes, axis=0, return_inverse=True)``).

    Each row is folded into one integer, column by column, and the integers are made
    unique; where the next fold would overflow, the integers so far are replaced by
    their rank (which keeps the order). Why: ``np.unique`` along an axis sorts rows as
    records, 10 of the 75 s of CPU of a fit on 10^6 beds; one integer per row sorts in
    a fraction of a second."""
    key = np.zeros(len(codes), dtype=np.int64)
    for column in codes.T:
        shifted = column.astype(np.int64) - (column.min() if len(column) else 0)
        span = int(shifted.max()) + 1 if len(column) else 1
        if (int(key.max()) + 1 if len(key) else 1) * span >= 2**62:
            key = np.unique(key, return_inverse=True)[1].reshape(-1).astype(np.int64)
        key = key * span + shifted
    _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
    return codes[first], inverse.reshape(-1)


class ExpectationMaximisation:
    """EM of :class:`~faciesseq.hmm.model.TractHMM` (its states, pieces and priors)."""

    def _e_step(self, pieces, startprob, transmat, data: TrainingData):
        if data.clamp is None and data.static is None and all(p.coded for p in pieces):
            return self._e_step_on_combinations(pieces, startprob, transmat, data)
        K = self.states_.n_states
        S = self.states_.n_tracts
        stats = [p.empty_stats(S) for p in pieces]
        trans = np.zeros((K, K))
        start = np.zeros(K)
        total = 0.0
        for a, b, lengths, first in self._batches(data.beds.lengths):
            part = data.beds.slice(a, b, lengths)
            static = None if data.static is None else data.static[a:b]
            le = self._log_emission(pieces, part, static)
            if data.clamp is not None:
                le = engine.constrained_log_emission(
                    le, data.clamp[a:b][:, self.states_.state_tract]
                )
            try:
                post = engine.forward_backward(le, lengths, startprob, transmat)
            except InputError as exc:
                raise _located(exc, data.cores, first) from None
            weights = self.states_.to_tracts(post.gamma)
            for p, st in zip(pieces, stats):
                p.accumulate(st, part, weights)
            trans += post.xi_sum
            start += post.start
            total += post.total_log_likelihood
        return total, stats, trans, start

    def _combos(self, pieces, data: TrainingData) -> tuple[np.ndarray, np.ndarray]:
        """The distinct combinations of the pieces' codes ``(U, n_pieces)`` and the
        combination of every bed ``(T,)``, found once per fit (the codes do not change
        during EM)."""
        if data.combos is None:
            data.combos = distinct_rows(np.column_stack([p.observed(data.beds) for p in pieces]))
        return data.combos

    def _e_step_on_combinations(self, pieces, startprob, transmat, data: TrainingData):
        """The E-step of pieces that all observe codes, none clamped: the log-emission
        is a table over the distinct combinations of codes, and the posteriors are
        summed per combination by the engine (``codes=``), so emissions and
        statistics cost one row per combination, not per bed. The same numbers as
        :meth:`_e_step`, summed in another order. Why: measured, the per-bed
        emissions and statistics were half of every EM iteration."""
        combos, inverse = self._combos(pieces, data)
        if data.code_index is None:
            data.code_index = engine.CodeIndex(inverse)
        S = self.states_.n_tracts
        table = np.zeros((len(combos), S))
        for j, p in enumerate(pieces):
            table += p.log_prob_of(combos[:, j])
        try:
            post = engine.forward_backward(
                table[:, self.states_.state_tract],
                data.beds.lengths,
                startprob,
                transmat,
                codes=data.code_index,
                return_gamma=False,
            )
        except InputError as exc:
            raise _located(exc, data.cores, 0) from None
        weights = self.states_.to_tracts(post.code_gamma)
        stats = [p.empty_stats(S) for p in pieces]
        for j, (p, st) in enumerate(zip(pieces, stats)):
            p.accumulate_of(st, combos[:, j], weights)
        return post.total_log_likelihood, stats, post.xi_sum, post.start

    def _pseudo(self) -> tuple[np.ndarray, np.ndarray]:
        base = 0.1 * float(self.prior_strength)
        allowed = self.states_.allowed
        trans = np.where(allowed, base, 0.0)
        cycle = getattr(self, "_cycle_pseudo", None)
        if cycle is not None:
            trans = trans + cycle
        return np.full(self.states_.n_states, base), trans

    def _cycle_counts(
        self, rule: np.ndarray, lengths: np.ndarray, free: np.ndarray | None = None
    ) -> np.ndarray:
        """Transition pseudo-counts from the trend rule's tract column, on the states.

        ``cycle_prior`` times the rule's tract-to-tract counts between
        unlabelled beds (``free``; labelled beds speak for themselves): a tract's stays
        are shared between each sub-state's self-transition and its step along
        the chain, its exits go from every sub-state to the next tract's first
        sub-state; cells the tract graph forbids get nothing.
        """
        S = self.states_.n_tracts
        counts = np.zeros((S, S))
        start = 0
        for n in lengths:
            r = rule[start : start + n]
            keep = (
                np.ones(max(n - 1, 0), dtype=bool)
                if free is None
                else free[start : start + n - 1] & free[start + 1 : start + n]
            )
            np.add.at(counts, (r[:-1][keep], r[1:][keep]), 1.0)
            start += n
        K = self.states_.n_states
        out = np.zeros((K, K))
        first = self.states_.first
        for a in range(S):
            members = np.nonzero(self.states_.state_tract == a)[0]
            m = len(members)
            for k, i in enumerate(members):
                if k + 1 < m:
                    out[i, i] += counts[a, a] / (2 * m)
                    out[i, members[k + 1]] += counts[a, a] / (2 * m)
                else:
                    out[i, i] += counts[a, a] / m
                for b in range(S):
                    if b != a:
                        out[i, first[b]] += counts[a, b] / m
        return float(self.cycle_prior) * np.where(self.states_.allowed, out, 0.0)

    def _m_step(self, pieces, stats, trans, start):
        start_pseudo, trans_pseudo = self._pseudo()
        allowed = self.states_.allowed
        for p, st in zip(pieces, stats):
            p.m_step(st)
        total = np.where(allowed, trans + trans_pseudo, 0.0)
        rows = total.sum(axis=1, keepdims=True)
        uniform = allowed / allowed.sum(axis=1, keepdims=True)
        transmat = np.where(rows > 0, total / np.where(rows > 0, rows, 1), uniform)
        s = start + start_pseudo
        startprob = s / s.sum() if s.sum() > 0 else np.full(len(s), 1 / len(s))
        return startprob, transmat

    def _log_prior(self, pieces, startprob, transmat) -> float:
        start_pseudo, trans_pseudo = self._pseudo()
        out = sum(p.log_prior() for p in pieces)
        m = start_pseudo > 0
        out += float(np.sum(start_pseudo[m] * np.log(startprob[m])))
        m = trans_pseudo > 0
        out += float(np.sum(trans_pseudo[m] * np.log(transmat[m])))
        return float(out)

    def _initial(self, data: TrainingData, rng: np.random.Generator, restart: int):
        """Parameters from starting weights per bed (a nested fit's posteriors, else the
        trend rule's tracts in fits that start from it, else uniform: the priors),
        perturbed per restart after the first."""
        S = self.states_.n_tracts
        pieces = self._new_pieces(data.beds, data.trained)
        stats = [p.empty_stats(S) for p in pieces]
        for a, b, lengths, _ in self._batches(data.beds.lengths):
            T = b - a
            weights = np.full((T, S), 1.0 / S)
            spread = 0.5
            if data.start is not None:
                weights, spread = data.start[a:b], START_NOISE
            elif self.ranks_ is not None and not self.reads_context():
                weights = 0.2 / S + 0.8 * np.eye(S)[data.rule[a:b]]
            if restart > 0:
                noise = rng.dirichlet(np.ones(S), size=T)
                weights = (1 - spread) * weights + spread * noise
            if data.clamp is not None:
                clamp = data.clamp[a:b]
                labelled = ~clamp.all(axis=1)
                weights[labelled] = clamp[labelled].astype(float)
            part = data.beds.slice(a, b, lengths)
            for p, st in zip(pieces, stats):
                p.accumulate(st, part, weights)
        K = self.states_.n_states
        allowed = self.states_.allowed
        stay = np.where(np.eye(K, dtype=bool), 8.0, 1.0)
        if restart > 0:
            stay = stay * rng.uniform(0.5, 1.5, size=(K, K))
        trans = np.where(allowed, stay, 0.0)
        startprob, transmat = self._m_step(pieces, stats, trans, np.ones(K))
        return pieces, startprob, transmat

    def _run(
        self,
        data: TrainingData,
        seed: int,
        restart: int,
        progress: ProgressCallback | None,
        start: tuple | None = None,
        spread: bool = True,
    ):
        """One EM run. On at least two chunks of beds (:func:`chunk_bounds`) each
        E-step is a :class:`ChunkedEStep`, whose chunks go to this model's workers
        when ``spread`` (False inside a job: no nested jobs) and run in turn here
        otherwise."""
        rng = np.random.default_rng(seed)
        pieces, startprob, transmat = start or self._initial(data, rng, restart)
        monitor = ConvergenceMonitor(float(self.tol), int(self.max_iter), n_beds=len(data.beds))
        chunked = bool(chunk_bounds(data.beds.lengths, self.chunk_beds))
        workers = (
            Workers(*((self.n_jobs, self.scheduler) if spread else (1, None)))
            if chunked
            else nullcontext()
        )
        with workers:
            e_step = ChunkedEStep(self, data, pieces, workers) if chunked else self._e_step
            while True:
                ll, stats, trans, start = e_step(pieces, startprob, transmat, data)
                objective = ll + self._log_prior(pieces, startprob, transmat)
                monitor.report(objective)
                if progress is not None:
                    progress(restart, monitor.iter, objective)
                if monitor.converged:
                    break
                startprob, transmat = self._m_step(pieces, stats, trans, start)
        tract = self.states_.state_tract
        return {
            "pieces": pieces,
            # expected changes of tract between successive beds, at these parameters
            "tract_changes": float(trans[tract[:, None] != tract[None, :]].sum()),
            "startprob": startprob,
            "transmat": transmat,
            "log_likelihood": ll,
            "objective": objective,
            "monitor": monitor,
            "seed": int(seed),
        }
