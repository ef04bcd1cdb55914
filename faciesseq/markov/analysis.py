"""One call for the whole reviewer's question: :func:`analyse` -> :class:`MarkovReport`."""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet, check_grid_step
from faciesseq.errors import ConfigError, InputError
from faciesseq.markov.contingency import (
    ContingencyResult,
    TestResult,
    independence_test,
    pearson_batch,
)
from faciesseq.markov.counts import (
    EncodedSuccessions,
    batch_ngram_counts,
    encode,
    fixed_vector,
    labelled,
    n_step,
    transition_counts,
    transition_probabilities,
)
from faciesseq.markov.cyclicity import CyclicityResult, cyclicity
from faciesseq.markov.homogeneity import HomogeneityResult, homogeneity_test
from faciesseq.markov.order import OrderResult, conditional_g2, order_analysis
from faciesseq.markov.pooling import Pool, label
from faciesseq.markov.surrogates import (
    PERMUTATION_SWEEPS,
    monte_carlo_p_value,
    permutation_hub,
    restricted_permutations,
    surrogate_statistics,
    transition_surrogates,
)
from faciesseq.parallel import job_seeds, run_jobs
from faciesseq.scheme import FaciesScheme, as_scheme

__all__ = ["SCHEMA", "MarkovReport", "analyse", "analyse_batches"]

#: Version of the JSON layout written by :meth:`MarkovReport.to_dict`.
SCHEMA = "faciesseq.markov/1"

GRID_WARNING = (
    "depth-grid cells: successive cells of one bed count as self-transitions, so the "
    "measured dependence grows as the sampling step shrinks; quote the step, and use beds "
    "(the embedded chain) for the question 'ordered or random?'"
)


def _jsonable(x):
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [_jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        return _jsonable(x.tolist())
    if isinstance(x, np.bool_ | bool):
        return bool(x)
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, float | np.floating):
        return None if not math.isfinite(float(x)) else float(x)
    return x


def _matrix(matrix: np.ndarray, codes: Sequence[str]) -> dict:
    return {"facies": list(codes), "matrix": _jsonable(np.asarray(matrix))}


@dataclass(frozen=True)
class MarkovReport:
    """Everything :func:`analyse` measured, as numbers.

    Attributes
    ----------
    unit, step
        ``"beds"`` (embedded chain, no self-transitions) or ``"grid"`` with its
        ``step`` (depth units).
    codes
        Facies codes, the order of every matrix axis (rows: the lower facies).
    n_cores, n_successions, n_transitions
        What was analysed (after leaving out irregular cores).
    counts, probabilities
        Pooled upward transition counts and their row-normalised probabilities.
    fixed_vector
        Stationary vector of ``probabilities``.
    n_step
        ``{2: P², 3: P³}``.
    first_order
        Quasi-independence (beds) or independence (grid) test with expected
        counts, difference matrix, adjusted residuals, flags and Cramér's V.
    order
        Order tests (k vs k+1) and AIC/BIC per order.
    surrogate_tests
        Monte Carlo tests (empty unless ``surrogates > 0``).
    homogeneity
        Test that all groups share one chain (``None`` unless ``by`` is given
        and there are at least two groups).
    cyclicity
        Entropies, cycle type, preferred upward path.
    per_core
        ``{core: counts}`` when asked for.
    excluded_cores, warnings
        Cores left out of the pooled statistics, and why; other warnings.
    """

    unit: str
    step: float | None
    codes: tuple[str, ...]
    n_cores: int
    n_successions: int
    n_transitions: int
    counts: np.ndarray
    probabilities: np.ndarray
    fixed_vector: np.ndarray
    n_step: dict[int, np.ndarray]
    first_order: ContingencyResult
    order: OrderResult
    surrogate_tests: tuple[TestResult, ...]
    homogeneity: HomogeneityResult | None
    cyclicity: CyclicityResult
    per_core: dict[str, np.ndarray] | None = None
    excluded_cores: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    n_surrogates: int = 0
    seed: int | None = None
    alpha: float = 0.05
    max_order: int = 3
    by: str | None = None

    @property
    def embedded(self) -> bool:
        return self.unit == "beds"

    @property
    def tests(self) -> list[TestResult]:
        """Every test, in reading order."""
        out = [self.first_order.pearson, self.first_order.g2]
        out += list(self.order.tests[1:])
        out += list(self.surrogate_tests)
        if self.homogeneity is not None:
            out += [self.homogeneity.pearson, self.homogeneity.g2]
        out.append(self.cyclicity.symmetry)  # Bowker's, which decides the cycle type
        return out

    def to_dict(self) -> dict:
        """The JSON document of ``faciesseq markov --format json`` (see docs/markov.md)."""
        fo = self.first_order
        codes = list(self.codes)
        return _jsonable(
            {
                "schema": SCHEMA,
                "unit": self.unit,
                "step": self.step,
                "codes": codes,
                "n_cores": self.n_cores,
                "n_successions": self.n_successions,
                "n_transitions": self.n_transitions,
                "counts": _matrix(self.counts, codes),
                "probabilities": _matrix(self.probabilities, codes),
                "expected": _matrix(fo.expected, codes),
                "difference": _matrix(fo.difference, codes),
                "adjusted_residuals": _matrix(fo.residuals, codes),
                "significant": _matrix(fo.significant, codes),
                "low_expected": _matrix(fo.low_expected, codes),
                "fixed_vector": dict(zip(codes, self.fixed_vector)),
                "n_step": {str(k): _matrix(v, codes) for k, v in self.n_step.items()},
                "first_order": {
                    "model": fo.model,
                    "dof": fo.dof,
                    "structural_zeros": fo.n_structural_zeros,
                    "empty_rows": [codes[i] for i in fo.empty_rows],
                    "empty_columns": [codes[i] for i in fo.empty_columns],
                    "low_expected_cells": fo.n_low_expected,
                    "cramers_v": fo.cramers_v,
                    "alpha": fo.alpha,
                    "notes": list(fo.notes),
                },
                "tests": [t.to_dict() for t in self.tests],
                "order": self.order.to_dict(),
                "entropy": self.cyclicity.to_dict(),
                "homogeneity": None if self.homogeneity is None else self.homogeneity.to_dict(),
                "per_core": None
                if self.per_core is None
                else {k: _matrix(v, codes) for k, v in self.per_core.items()},
                "excluded_cores": list(self.excluded_cores),
                "warnings": list(self.warnings),
                "n_surrogates": self.n_surrogates,
                "seed": self.seed,
                "max_order": self.max_order,
            }
        )

    def to_frames(self) -> dict[str, pd.DataFrame]:
        """Tables for CSV output: name -> DataFrame."""
        fo = self.first_order
        codes = list(self.codes)
        frames = {
            "counts": labelled(self.counts.astype(int), codes),
            "probabilities": labelled(self.probabilities, codes),
            "expected": labelled(fo.expected, codes),
            "difference": labelled(fo.difference, codes),
            "adjusted_residuals": labelled(fo.residuals, codes),
            "tests": pd.DataFrame([t.to_dict() for t in self.tests]),
            "order": self.order.to_frame(),
            "entropy": pd.DataFrame(
                {
                    "facies": codes,
                    "e_post": self.cyclicity.e_post,
                    "e_pre": self.cyclicity.e_pre,
                    "fixed_vector": self.fixed_vector,
                }
            ),
        }
        frames["cells"] = fo.to_frame(codes)
        if self.homogeneity is not None:
            frames["homogeneity_groups"] = self.homogeneity.to_frame()
        if self.per_core is not None:
            rows = [
                {"core": core, "from": codes[i], "to": codes[j], "count": int(c[i, j])}
                for core, c in self.per_core.items()
                for i in range(len(codes))
                for j in range(len(codes))
                if c[i, j]
            ]
            frames["per_core_counts"] = pd.DataFrame(rows, columns=["core", "from", "to", "count"])
        return frames


def _succession_groups(successions: Sequence, enc: EncodedSuccessions, by: str) -> np.ndarray:
    """The bed column ``by`` of every succession given (those of one bed: none of it)."""
    used = enc.lengths >= 2
    parts = []
    for k, succ in enumerate(successions):
        table = getattr(succ, "beds", None)
        if used[k] and (table is None or by not in table.columns):
            raise ConfigError(
                f"by={by!r} (--by): no such column in the beds (columns: "
                f"{[] if table is None else list(table.columns)})"
            )
        parts.append(table[by].to_numpy(dtype=object) if used[k] else np.zeros(0, object))
    values = np.concatenate(parts) if parts else np.zeros(0, dtype=object)
    return values


def _groups(
    values: np.ndarray | None, enc: EncodedSuccessions, by: str, every_bed: bool = True
) -> tuple[np.ndarray, list[str], int]:
    """Group index of every transition (-1 = between groups), labels, number left out.

    ``values`` holds the bed column ``by`` of every succession's beds one after
    another (``every_bed``) or of the successions of two beds or more only. Labels
    are numbered in order of first appearance.
    """
    used = enc.lengths >= 2
    if by == "core":
        ids, labels = pd.factorize(np.array(enc.cores, dtype=object)[used])
        group = np.repeat(ids.astype(np.int64), enc.lengths[used] - 1)
        return group, [str(label) for label in labels], 0
    if every_bed:
        values = values[np.repeat(used, enc.lengths)]
    labels = np.array([label(v) for v in pd.Series(values).where(pd.notna(values), None)])
    ids, names = pd.factorize(labels.astype(object), use_na_sentinel=True)
    lengths = enc.lengths[used]
    last = np.cumsum(lengths) - 1  # the top bed of each succession: no transition from it
    pair = np.ones(len(ids), dtype=bool)
    pair[last] = False
    same = np.r_[(ids[:-1] == ids[1:]) & (ids[:-1] >= 0), False]
    group = np.where(same, ids, -1)[pair].astype(np.int64)
    return group, [str(name) for name in names], int((group < 0).sum())


def _grouped_counts(enc: EncodedSuccessions, group: np.ndarray, n_groups: int) -> np.ndarray:
    m = enc.m
    pos = enc.position_in_succession()
    length = np.repeat(enc.lengths, enc.lengths)
    starts = np.nonzero(pos + 2 <= length)[0]
    code = enc.states[starts].astype(np.int64) * m + enc.states[starts + 1]
    keep = group >= 0
    flat = np.bincount(group[keep] * m * m + code[keep], minlength=n_groups * m * m)
    return flat.reshape(n_groups, m, m)


def _permuted_within(enc: EncodedSuccessions, n: int, rng: np.random.Generator):
    """Plain permutations of each succession (grid null of independence), in batches."""
    owner = np.repeat(np.arange(len(enc)), enc.lengths).astype(float)
    from faciesseq.markov.surrogates import _batches

    for b in _batches(n, len(enc.states) * 3):
        keys = rng.random((b, len(enc.states))) + owner[None, :]
        yield enc.states[np.argsort(keys, axis=1)]


#: Surrogates per Monte Carlo job: the blocks, and the seed of each, do not depend
#: on the number of workers, so neither do the p-values.
SURROGATE_BLOCK = 500


def _first_order_stat(enc: EncodedSuccessions, embedded: bool, batch: np.ndarray) -> np.ndarray:
    return pearson_batch(batch_ngram_counts(enc, batch, 1), embedded=embedded)


def _order_stat(enc: EncodedSuccessions, batch: np.ndarray) -> np.ndarray:
    runs = batch_ngram_counts(enc, batch, 2)
    g2, _, _ = conditional_g2(runs.reshape(batch.shape[0], enc.m, enc.m, enc.m))
    return g2


def _surrogate_block(
    kind: str, enc: EncodedSuccessions, embedded: bool, n: int, seed, hub: np.ndarray | None
) -> np.ndarray:
    """The statistic of ``n`` surrogates of one kind drawn from ``seed`` (one job):
    ``"restricted"`` permutations from ``hub``, ``"permuted"`` within successions
    (first-order statistic), or ``"transition"`` surrogates (order 1 vs 2 G2)."""
    rng = np.random.default_rng(seed)
    if kind == "transition":
        return surrogate_statistics(
            transition_surrogates(enc, n, rng), lambda b: _order_stat(enc, b)
        )
    draws = (
        restricted_permutations(enc, n, rng, hub=hub)
        if kind == "restricted"
        else _permuted_within(enc, n, rng)
    )
    return surrogate_statistics(draws, lambda b: _first_order_stat(enc, embedded, b))


def _surrogates(kind, enc, embedded, n, seed, hub, n_jobs, scheduler) -> np.ndarray:
    """Statistics of ``n`` surrogates, drawn in blocks of :data:`SURROGATE_BLOCK`, each
    block a job of :func:`faciesseq.parallel.run_jobs` with its own spawned seed."""
    sizes = [min(SURROGATE_BLOCK, n - a) for a in range(0, n, SURROGATE_BLOCK)]
    seeds = seed.spawn(len(sizes))
    jobs = [(kind, enc, embedded, size, s, hub) for size, s in zip(sizes, seeds)]
    return np.concatenate(run_jobs(_surrogate_block, jobs, n_jobs, scheduler))


def _surrogate_tests(
    enc: EncodedSuccessions,
    embedded: bool,
    n: int,
    seed: int | None,
    max_order: int,
    n_jobs: int = 1,
    scheduler: str | None = None,
) -> list[TestResult]:
    hub_seed, first_seed, order_seed = job_seeds(seed, 3)
    out: list[TestResult] = []
    observed = float(_first_order_stat(enc, embedded, enc.states[None, :])[0])
    if embedded:
        hub = permutation_hub(enc, PERMUTATION_SWEEPS, hub_seed)
        sims = _surrogates("restricted", enc, embedded, n, first_seed, hub, n_jobs, scheduler)
        name, note = (
            "quasi-independence (Pearson chi2)",
            "restricted permutations (no facies above itself), Besag & Clifford parallel chain",
        )
    else:
        sims = _surrogates("permuted", enc, embedded, n, first_seed, None, n_jobs, scheduler)
        name, note = "independence (Pearson chi2)", "permutations within each succession"
    res = independence_test(transition_counts(enc), embedded=embedded)
    out.append(
        TestResult(
            name,
            observed,
            res.dof,
            monte_carlo_p_value(observed, sims),
            res.n,
            method="monte carlo",
            n_surrogates=n,
            null=res.pearson.null,
            note=note,
        )
    )
    if max_order >= 2:
        obs_g2 = float(_order_stat(enc, enc.states[None, :])[0])
        sims = _surrogates("transition", enc, embedded, n, order_seed, None, n_jobs, scheduler)
        t = next(t for t in order_analysis(enc, 2, embedded=embedded).tests if "1 vs 2" in t.name)
        out.append(
            TestResult(
                "order 1 vs 2 (G2)",
                obs_g2,
                t.dof,
                monte_carlo_p_value(obs_g2, sims),
                t.n,
                method="monte carlo",
                n_surrogates=n,
                null=t.null,
                note="surrogates with the same first-order transition counts (Pethel & Hahs 2014)",
            )
        )
    return out


def analyse(
    data: CoreSet | Sequence,
    codes: Sequence[str] | None = None,
    *,
    unit: str = "beds",
    step: float | None = None,
    max_order: int = 3,
    surrogates: int = 0,
    seed: int | None = None,
    by: str | None = None,
    per_core: bool = False,
    alpha: float = 0.05,
    scheme: FaciesScheme | str | Path | None = None,
    min_coverage: float = 0.5,
    exclude_irregular: bool = True,
    n_jobs: int = 1,
    scheduler: str | None = None,
) -> MarkovReport:
    """Transition statistics, first-order, order, homogeneity and cyclicity tests.

    Parameters
    ----------
    data
        A :class:`~faciesseq.core.CoreSet` (screened: irregularly sampled cores
        are left out with a warning, see :mod:`faciesseq.markov.screening`), or
        successions (:class:`~faciesseq.core.Succession` or code sequences,
        each base to top) taken as they are.
    codes
        Facies order of the matrices; default the scheme's codes by
        proximality rank, else the codes present.
    unit, step
        ``"beds"`` (embedded chain) or ``"grid"`` with ``step`` in depth units
        (only used when ``data`` is a CoreSet).
    max_order
        Highest Markov order fitted (tests k vs k+1 for k < max_order).
    surrogates, seed
        Number of Monte Carlo surrogates (0 = none) and their seed.
    n_jobs, scheduler
        The surrogates are drawn in blocks, each an independent job run in
        ``n_jobs`` local processes or on the Dask cluster at ``scheduler``
        (:mod:`faciesseq.parallel`); the p-values do not depend on either.
    by
        ``"core"`` or a bed column (e.g. a formation): homogeneity across groups. A
        column read from a file may be named as there (``rock`` read with
        ``columns={"lithology": "rock"}``) or by its role (``lithology``).
    per_core
        Keep each core's count matrix.
    alpha
        Level for significant cells and the cycle type.
    scheme
        :class:`~faciesseq.scheme.FaciesScheme` for the default ``codes``, or the
        path of its YAML file.
    min_coverage
        Screening threshold (described fraction of a core's span).
    exclude_irregular
        Leave irregularly sampled cores out (default). With ``False`` they are
        analysed, and a warning names each one.

    Returns
    -------
    MarkovReport
    """
    settings = _Settings(
        unit, step, max_order, surrogates, seed, by, per_core, alpha, n_jobs, scheduler
    )
    scheme = as_scheme(scheme)
    if isinstance(data, pd.DataFrame | str | Path) or not isinstance(data, Iterable):
        raise TypeError(
            f"analyse needs a CoreSet or a list of successions, got a {type(data).__name__}; "
            "read a file or a DataFrame with faciesseq.io.read_cores or CoreSet.from_frame"
        )
    if isinstance(data, CoreSet):
        return analyse_batches(
            [data],
            codes,
            settings=settings,
            scheme=scheme,
            min_coverage=min_coverage,
            exclude_irregular=exclude_irregular,
        )
    settings.check()
    successions = list(data)
    if codes is None:
        codes = list(scheme.codes_by_rank) if scheme is not None else None
    enc = encode(successions, codes)
    values = None if by in (None, "core") else _succession_groups(successions, enc, by)
    return _report(enc, values, False, settings, [], [])


@dataclass(frozen=True)
class _Settings:
    """The statistics asked for (the keyword arguments of :func:`analyse`)."""

    unit: str = "beds"
    step: float | None = None
    max_order: int = 3
    surrogates: int = 0
    seed: int | None = None
    by: str | None = None
    per_core: bool = False
    alpha: float = 0.05
    n_jobs: int = 1
    scheduler: str | None = None

    def check(self) -> None:
        if self.unit not in ("beds", "grid"):
            raise ConfigError(f"unit must be 'beds' or 'grid' (--unit), got {self.unit!r}")
        if self.surrogates < 0:
            raise ConfigError(f"surrogates must be 0 or more (--surrogates), got {self.surrogates}")
        if self.max_order < 1:
            raise ConfigError(f"max_order must be at least 1 (--max-order), got {self.max_order}")


def analyse_batches(
    batches: Iterable[CoreSet],
    codes: Sequence[str] | None = None,
    *,
    scheme=None,
    min_coverage: float = 0.5,
    exclude_irregular: bool = True,
    settings: _Settings | None = None,
    **options,
) -> MarkovReport:
    """:func:`analyse` of a database given as core sets of whole cores, one after
    another (the batches of :func:`faciesseq.io.stream_cores`): the same report as
    for the whole core set, each batch screened and pooled in turn
    (:class:`~faciesseq.markov.pooling.Pool`), only the pooled successions held.
    ``options`` are the other keyword arguments of :func:`analyse`."""
    settings = settings or _Settings(**options)
    settings.check()
    scheme = as_scheme(scheme)
    check_grid_step(settings.unit, settings.step)
    pool = Pool(
        settings.unit,
        settings.step,
        settings.by,
        min_coverage=min_coverage,
        exclude_irregular=exclude_irregular,
    )
    for batch in batches:
        pool.add(batch)
    if codes is None:
        codes = scheme.codes_by_rank if scheme is not None else sorted(pool.present, key=_by_text)
    values = pool.group_values() if pool.grouping else None
    settings = replace(settings, by=pool.by)
    return _report(pool.encoded(list(codes)), values, True, settings, pool.excluded, pool.warnings)


def _by_text(code: str) -> tuple[int, str]:
    """Facies codes as text, numbers in numeric order (as ``CoreSet.facies_codes``)."""
    return len(code), code


def _report(
    enc: EncodedSuccessions,
    values: np.ndarray | None,
    every_bed: bool,
    settings: _Settings,
    excluded: list[str],
    warnings: list[str],
) -> MarkovReport:
    """The statistics of the coded successions ``enc`` (``values``: the ``by`` column of
    every bed, ``every_bed``, or of the successions of two beds or more)."""
    unit, step, by, alpha = settings.unit, settings.step, settings.by, settings.alpha
    max_order, surrogates, seed = settings.max_order, settings.surrogates, settings.seed
    warnings = list(warnings)
    if enc.m ** (max_order + 1) > 20_000_000:
        raise ConfigError(
            f"max_order={max_order} (--max-order) with {enc.m} facies needs "
            f"{enc.m}^{max_order + 1} cells per table; choose a lower order"
        )
    embedded = unit == "beds"
    counts = transition_counts(enc)
    n_trans = int(counts.sum())
    if n_trans == 0:
        only = (
            f"only one facies ({enc.codes[0]}) is present, so each core is one bed of it"
            if enc.m == 1 and embedded
            else "every succession has a single bed or cell"
        )
        raise InputError(f"no transitions to analyse: {only}")
    if embedded and np.trace(counts) > 0:
        raise InputError(
            "successions repeat a facies from one bed to the next; beds should be amalgamated "
            "(use unit 'grid' for sampled cells)"
        )
    if not embedded:
        warnings.append(GRID_WARNING + (f" (step {step})" if step else ""))
    probs = transition_probabilities(counts)
    first = independence_test(counts, embedded=embedded, alpha=alpha)
    warnings += list(first.notes)
    order = order_analysis(enc, max_order, embedded=embedded)
    sur: list[TestResult] = []
    if surrogates > 0:
        sur = _surrogate_tests(
            enc, embedded, surrogates, seed, max_order, settings.n_jobs, settings.scheduler
        )
    homog = None
    if by is not None:
        group, labels, left_out = _groups(values, enc, by, every_bed)
        if len(labels) >= 2:
            homog = homogeneity_test(_grouped_counts(enc, group, len(labels)), labels, by, left_out)
        else:
            warnings.append(f"homogeneity by {by}: only {len(labels)} group(s), no test")
    cyc = cyclicity(
        counts,
        first.residuals,
        first.significant,
        enc.codes,
        embedded=embedded,
        # NaN where the test cannot be run: the cycle type is then not determined
        first_order_p=first.pearson.p_value if first.pearson.testable else math.nan,
        alpha=alpha,
    )
    pc = None
    if settings.per_core:
        per = transition_counts(enc, per_succession=True)
        pc = {}
        for k, core in enumerate(enc.cores):
            pc[core] = pc.get(core, 0) + per[k]
    return MarkovReport(
        unit=unit,
        step=step if unit == "grid" else None,
        codes=enc.codes,
        n_cores=len(set(enc.cores)),
        n_successions=len(enc),
        n_transitions=n_trans,
        counts=counts,
        probabilities=probs,
        fixed_vector=fixed_vector(probs),
        n_step={2: n_step(probs, 2), 3: n_step(probs, 3)},
        first_order=first,
        order=order,
        surrogate_tests=tuple(sur),
        homogeneity=homog,
        cyclicity=cyc,
        per_core=pc,
        excluded_cores=tuple(excluded),
        warnings=tuple(warnings),
        n_surrogates=surrogates,
        seed=seed,
        alpha=alpha,
        max_order=max_order,
        by=by,
    )
