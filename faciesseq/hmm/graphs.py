"""The tract graphs the trade allows, and choosing one per database by BIC.

The strict cyclic order HST -> FSST -> LST -> TST -> HST with each set of the
skips the trade allows: none, the FSST (absent where subsidence outpaces the
base-level fall), the TST (absent where supply outpaces the rise), both (common
practice; Catuneanu et al. 2009, Earth-Science Reviews 92:1-33). A fit without
labels fits each and keeps the lowest BIC (Schwarz 1978, Ann. Statist.
6:461-464).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from faciesseq.core import Succession
from faciesseq.parallel import run_jobs
from faciesseq.scheme import TractModel, default_tract_model

__all__ = ["choose_graph", "trade_graphs"]


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
        graph = replace(tract_model, skips=skips)
        allowed = graph.allowed()
        index = {c: i for i, c in enumerate(graph.order)}
        surfaces = tuple(
            sf for sf in tract_model.surfaces if allowed[index[sf.lower]][index[sf.upper]]
        )
        out.append(replace(graph, surfaces=surfaces))
    return out


def choose_graph(model, succ: Sequence[Succession], progress=None):
    """Fit ``model``'s settings on every graph of :func:`trade_graphs` (no
    calibration) and return the fitted model of the lowest BIC with the table of
    candidates (``skips``, ``log_likelihood``, ``n_parameters``, ``bic``,
    ``selected``). The candidates are independent jobs (:mod:`faciesseq.parallel`)."""
    params = {**model.get_params(), "graph": "fixed", "calibration_folds": 0}
    graphs = trade_graphs(default_tract_model())
    jobs = [({**params, "tract_model": g}, succ) for g in graphs]
    if model._parallel():  # one job per graph; each fit's restarts run in turn
        jobs = [({**p, "n_jobs": 1, "scheduler": None}, s) for p, s in jobs]
        fitted_models = run_jobs(_fit_graph, jobs, model.n_jobs, model.scheduler)
    else:
        fitted_models = [_fit_graph(*job, progress) for job in jobs]
    rows, fits = [], []
    for graph, fitted in zip(graphs, fitted_models):
        rows.append(
            {
                "skips": list(graph.skips),
                "log_likelihood": fitted.log_likelihood_,
                "n_parameters": fitted.n_parameters(),
                "bic": fitted.bic(succ),
            }
        )
        fits.append(fitted)
    best = int(np.argmin([r["bic"] for r in rows]))
    for k, row in enumerate(rows):
        row["selected"] = k == best
    return fits[best], rows


def _fit_graph(params: dict, succ: Sequence[Succession], progress=None):
    """One candidate of :func:`choose_graph`, fitted."""
    from faciesseq.hmm.model import TractHMM

    return TractHMM(**params).fit(succ, progress=progress)
