"""The tract graphs the trade allows, and choosing one per database by ICL.

The strict cyclic order HST -> FSST -> LST -> TST -> HST with each set of the
skips the trade allows: none, the FSST (absent where subsidence outpaces the
base-level fall), the TST (absent where supply outpaces the rise), both (common
practice; Catuneanu et al. 2009, Earth-Science Reviews 92:1-33). A fit without
labels fits each graph with at most one skip and keeps the lowest integrated
completed likelihood criterion, ICL = BIC + 2 x the classification entropy
(Biernacki, Celeux & Govaert 2000, IEEE Trans. Pattern Anal. Mach. Intell.
22:719-725; BIC: Schwarz 1978, Ann. Statist. 6:461-464). The entropy is summed
over the beds of each bed's tract posterior: the criterion prefers, among fits
that explain the beds about as well, the one whose tracts are told apart, as
an interpreter's are. It is an upper bound of the entropy of the tract sequence
(the beds' posteriors are not independent), taken because the tracts, not the
sub-states that give them their durations, are what is classified. Why not BIC
alone: on the report seeds of configs/stacking-rare-falling-stage.yaml BIC kept
the FSST-skip graph, whose falling stage took part of the highstand (0.512
balanced accuracy); ICL kept the graph without skips (0.772). On 70 other seed
sets of both generators (18 of them never used before) ICL kept another graph
than BIC on 5, and their balanced accuracy moved by -0.004 to +0.003
(benchmarks/tract_model.md, "The graph chosen by ICL").

Why not the graph with both skips: there the highstand and the lowstand may
follow each other both ways with no falling-stage or transgressive deposits
between them, so a sequence can be an HST and an LST alone, parted by a
boundary (the lowstand-highstand boundary) that a core does not record. The
two tracts then trade beds freely, and EM uses them for the shallowing
position inside every parasequence: on tuning seeds 11-15 of
configs/stacking-shoreface.yaml BIC chose that graph and the column had 4.4
tract boundaries per true one (0.445 balanced accuracy, against 2.1 and 0.562
for the best graph with one skip; ``python benchmarks/eval_unsupervised.py
--tune``). The graph stays available through a tract-model file
(``skips: [FSST, TST]``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from faciesseq.core import SuccessionTable
from faciesseq.parallel import run_jobs
from faciesseq.scheme import TractModel, default_tract_model

__all__ = [
    "CHOSEN_AMONG",
    "SAMPLE_BEDS",
    "choose_graph",
    "classification_entropy",
    "graph_line",
    "graph_selection_line",
    "sample_successions",
    "trade_graphs",
]

#: The skips of the graphs an unlabelled fit chooses among (see the module docstring).
CHOSEN_AMONG = ((), ("FSST",), ("TST",))

#: Above this many beds the graph is chosen on a sample of whole successions of
#: about this many beds, and only the chosen graph is fitted on every bed: BIC
#: tells the candidates apart long before (its differences grow with the beds),
#: and fitting three graphs from two starts on a whole company database would
#: multiply the EM by six. 25,000 rather than 50,000 (before 2026-12-03): on four
#: databases of 120,000 beds from both generators the same graph, start and decoded
#: held-out cores, at 0.58-0.79 of the fit's CPU time (benchmarks/tract_model.md,
#: "The graph-choice sample halved").
SAMPLE_BEDS = 25_000


def trade_graphs(tract_model: TractModel) -> list[TractModel]:
    """The strict cyclic order of ``tract_model`` with each set of the skips the
    trade allows: none, the FSST (absent where subsidence outpaces the base-level
    fall), the TST (absent where supply outpaces the rise), both (common practice;
    Catuneanu et al. 2009). Surfaces on boundaries a graph forbids are dropped."""
    from dataclasses import replace

    out = []
    for skips in ((), ("FSST",), ("TST",), ("FSST", "TST")):
        if not set(skips) <= set(tract_model.order):
            continue
        out.append(replace(tract_model, skips=skips).with_allowed_surfaces())
    return out


def choose_graph(model, succ: SuccessionTable, progress=None):
    """Fit ``model``'s settings on the graphs of :func:`trade_graphs` with the
    skips of :data:`CHOSEN_AMONG` (no calibration) and return the fitted model of
    the lowest ICL with the table of candidates (``skips``, ``log_likelihood``,
    ``n_parameters``, ``bic``, ``entropy``, ``icl``, ``selected``; ``start`` where
    there are two). With a nested start (:mod:`faciesseq.hmm.nested`) every graph is
    fitted from it and from the priors alone, the lowest ICL of each start is taken, and
    :func:`~faciesseq.hmm.nested.kept_start` chooses between the two. The
    candidates are independent jobs (:mod:`faciesseq.parallel`)."""
    params = {**model.get_params(), "graph": "fixed", "calibration_folds": 0}
    graphs = [g for g in trade_graphs(default_tract_model()) if tuple(g.skips) in CHOSEN_AMONG]
    sample = sample_successions(succ, SAMPLE_BEDS, model.random_state)
    reduced = _nested_fit(model, sample)
    starts = {None: None} if reduced is None else {"nested": reduced, "priors": None}
    cases = [(kind, g) for kind in starts for g in graphs]
    jobs = [
        (type(model), {**params, "tract_model": g, **_start_params(kind)}, sample)
        for kind, g in cases
    ]
    if model._parallel():  # one job per candidate; each fit's restarts run in turn
        serial = {"n_jobs": 1, "scheduler": None}
        jobs = [
            (m, {**p, **serial}, s, None, None, starts[k]) for (m, p, s), (k, _) in zip(jobs, cases)
        ]
        fits = run_jobs(_fit_graph, jobs, model.n_jobs, model.scheduler)
    else:
        fits = [_fit_graph(*job, progress, None, starts[k]) for job, (k, _) in zip(jobs, cases)]
    rows = [
        _candidate_row(graph, fitted, kind, sample) for (kind, graph), fitted in zip(cases, fits)
    ]
    best = _kept_candidate(rows, fits, cases)
    n_sample = int(sample.lengths.sum())
    for k, row in enumerate(rows):
        row["selected"] = k == best
        row["n_beds"] = n_sample
    if len(sample) < len(succ):  # the chosen graph on every bed, from the sample's fit
        chosen = {**params, "tract_model": cases[best][1]}
        fits[best] = _fit_graph(type(model), chosen, succ, progress, warm=fits[best])
    return fits[best], rows


def _start_params(kind: str | None) -> dict:
    """Settings of a candidate of one start: from the priors alone, or as asked."""
    return {"nested_start": False} if kind == "priors" else {}


def _candidate_row(graph: TractModel, fitted, kind: str | None, sample) -> dict:
    bic = fitted.bic()
    entropy = classification_entropy(fitted, sample)
    return {
        "skips": list(graph.skips),
        **({"start": kind} if kind else {}),
        "log_likelihood": fitted.log_likelihood_,
        "n_parameters": fitted.n_parameters(),
        "bic": bic,
        "entropy": entropy,
        "icl": bic + 2.0 * entropy,
    }


def classification_entropy(model, succ: SuccessionTable) -> float:
    """Sum over the beds of ``succ`` of the entropy (nats) of each bed's tract
    posterior under the fitted ``model``: 0 where every bed's tract is certain,
    ``log(n_tracts)`` per bed where nothing tells them apart (the module docstring)."""
    gamma = model.tract_posteriors(succ)
    logs = np.log(np.where(gamma > 0, gamma, 1.0))
    return float(-np.sum(gamma * logs))


def _kept_candidate(rows: list[dict], fits: list, cases: list) -> int:
    """Index of the candidate kept: the lowest ICL, of each start where there are two,
    and between those the fit :func:`~faciesseq.hmm.nested.kept_start` keeps (its
    record in the kept fit's ``nested_start_``)."""
    from faciesseq.hmm.nested import kept_start

    best = {}
    for k, ((kind, _), row) in enumerate(zip(cases, rows)):
        if kind not in best or row["icl"] < rows[best[kind]]["icl"]:
            best[kind] = k
    if set(best) != {"nested", "priors"}:
        return next(iter(best.values()))
    nested, priors = fits[best["nested"]], fits[best["priors"]]
    record = {**(nested.nested_start_ or {}), **kept_start(nested, priors)}
    kept = fits[best[record["kept"]]]
    kept.nested_start_ = record
    return best[record["kept"]]


def sample_successions(succ: SuccessionTable, n_beds: int, seed) -> SuccessionTable:
    """All of ``succ`` when they hold at most ``n_beds`` beds; else whole successions
    drawn at random (``seed``) until they hold at least ``n_beds``, in their order."""
    sizes = succ.lengths
    if sizes.sum() <= n_beds:
        return succ
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    order = rng.permutation(len(succ))
    keep = list(order[: int(np.searchsorted(np.cumsum(sizes[order]), n_beds)) + 1])
    return succ.take(sorted(keep + _covering(succ, keep)))


def _covering(succ: SuccessionTable, keep: list[int]) -> list[int]:
    """Successions to add to ``keep`` so that every facies and contact type of
    ``succ`` is in the sample (the fit on every bed then starts from its parameters):
    for each value the sample lacks, the first succession that holds it."""
    owner = np.repeat(np.arange(len(succ)), succ.lengths)
    kept = np.isin(owner, keep)
    columns = [name for name in ("facies", "contact") if name in succ.beds.columns]
    added: set[int] = set()
    for name in columns:
        codes, uniques = pd.factorize(succ.beds[name].astype("string"))
        known = codes >= 0  # a missing contact is no type
        covered = np.zeros(len(uniques), dtype=bool)
        covered[codes[known & kept]] = True
        held, first = np.unique(codes[known], return_index=True)
        added.update(owner[known][first[~covered[held]]].tolist())
    return sorted(added - set(keep))


def _nested_fit(model, sample: SuccessionTable):
    """The fit every candidate starts from (:mod:`faciesseq.hmm.nested`), made once from
    the default tract model; None where ``model`` asks for none or it reads no stacking
    context (its priors then name no tract)."""
    from faciesseq.hmm.nested import fit_reduced

    if not model.nested_start:
        return None
    reduced = fit_reduced(model, sample, default_tract_model())
    return reduced if reduced is not None and reduced.reads_context() else None


def _fit_graph(
    estimator: type, params: dict, succ: SuccessionTable, progress=None, warm=None, nested=None
):
    """One candidate of :func:`choose_graph`: an ``estimator`` (the tract model's class)
    with ``params``, fitted; with ``warm`` (the same graph fitted on a sample), one EM
    run from its parameters instead of the restarts, where the vocabularies agree; with
    ``nested`` (:func:`_nested_fit`), its restarts start from that fit's reading."""
    model = estimator(**params)
    model.warm_start_, model.nested_from_ = warm, nested
    model._check_hyper()
    model._fit_once(succ, None, progress)  # the whole fit checks its evidence weights
    del model.warm_start_, model.nested_from_
    return model


def graph_line(model, more: str = "") -> str:
    """Which tract graph the fit used, in plain words: its cyclic order, the tracts it
    may skip, and why (the labels' boundaries, or the number of candidates compared,
    followed by ``more``: where their scores are, a caller's words; the scores
    themselves are :func:`graph_selection_line`)."""
    order = " -> ".join(model.tract_model_.order)
    skips = ", ".join(model.tract_model_.skips) or "none"
    rows = getattr(model, "graph_selection_", [])
    why = ""
    chosen = getattr(model, "label_graph_", None)
    if rows:
        kept = next(r for r in rows if r["selected"])
        n = sum(r.get("start") == kept.get("start") for r in rows)
        why = f" (the lowest ICL of {n} candidate graphs{more})"
    elif chosen and chosen["graph"] == "strict" and not chosen["n_boundaries"]:
        why = " (strict cyclic order: no two labelled neighbours differ in tract to test it)"
    elif chosen and chosen["graph"] == "strict":
        why = f" (strict cyclic order: all {chosen['n_boundaries']} labelled boundaries follow it)"
    elif chosen:
        from faciesseq.hmm.labels import forbidden_text

        why = (
            f" (permissive: {chosen['n_forbidden']} of {chosen['n_boundaries']} labelled "
            "boundaries jump over a tract the strict cyclic order requires, at "
            f"{forbidden_text(chosen)})"
            if chosen["n_forbidden"]
            else " (permissive)"
        )
    return f"tract graph: {order}, cyclic; tracts that may be absent: {skips}{why}"


def graph_selection_line(model) -> str | None:
    """The ICL of every candidate graph beside the one kept (None where the graph was
    not chosen among candidates: a labelled fit, a tract-model file)."""
    rows = getattr(model, "graph_selection_", [])
    if not rows:
        return None
    kept = next(r for r in rows if r["selected"])
    rows = [r for r in rows if r.get("start") == kept.get("start")]  # the kept start's
    skips = ", ".join(model.tract_model_.skips) or "none"
    others = "; ".join(
        f"{', '.join(r['skips']) or 'none'} +{r['icl'] - kept['icl']:.1f}"
        for r in rows
        if not r["selected"]
    )
    sample = rows[0].get("n_beds", model.n_train_beds_)
    on = f", fitted on a sample of {sample} beds" if sample < model.n_train_beds_ else ""
    return (
        f"graph selection: strict cyclic order, skips {skips}, the lowest ICL (BIC + 2 x the "
        f"entropy of the beds' tracts) of {len(rows)} candidate graphs (none or one of the "
        f"skips the trade allows){on} (ICL above it: "
        f"{others})"
    )
