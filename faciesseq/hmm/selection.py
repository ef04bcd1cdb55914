"""Choosing sub-state counts and emission sets by the Bayesian information criterion."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd

from faciesseq.core import CoreSet, Succession
from faciesseq.errors import ConfigError
from faciesseq.hmm.model import ProgressCallback, TractHMM

__all__ = ["ModelSelection", "select_model"]


@dataclass(frozen=True)
class ModelSelection:
    """Candidates fitted on the same beds, and the one with the lowest BIC.

    ``table`` has one row per candidate: ``features`` (comma-separated),
    ``substates``, ``n_parameters``, ``log_likelihood``, ``bic`` and
    ``selected``; ``best`` is the selected fitted model.
    """

    table: pd.DataFrame
    best: TractHMM

    def to_frame(self) -> pd.DataFrame:
        return self.table.copy()

    def to_dict(self) -> dict[str, Any]:
        return {"candidates": self.table.to_dict(orient="records")}


def select_model(
    successions: CoreSet | Sequence[Succession],
    features: Sequence[Sequence[str] | None] = (None,),
    substates: Sequence[int | Mapping[str, int] | None] = (None,),
    labels: str | None = None,
    progress: ProgressCallback | None = None,
    **params: Any,
) -> ModelSelection:
    """Fit every (feature set, sub-state count) pair and keep the lowest BIC.

    BIC = -2 log L + p log n (Schwarz 1978, Ann. Statist. 6:461-464), with
    ``n`` the number of beds and ``p`` the free parameters; all candidates see
    the same beds and must observe the same bed variables (``facies`` and
    ``facies_trend`` are two models of the facies; adding ``contact`` to one
    candidate only would make the likelihoods incomparable, so it is refused).
    ``params`` are passed to :class:`TractHMM`.
    """
    if not features or not substates:
        raise ConfigError("select_model needs at least one feature set and one sub-state count")
    rows, models = [], []
    observed = []
    for feats in features:
        if feats is None:
            continue
        observed.append(frozenset("facies" if f == "facies_trend" else f for f in feats))
    if len(set(observed)) > 1:
        # BIC compares likelihoods of the same data; a set with more observed
        # variables has a smaller likelihood for that reason alone.
        raise ConfigError(
            "feature sets compared by BIC must observe the same bed variables "
            "(facies or facies_trend, and the same others); got "
            + "; ".join(",".join(f) for f in features if f is not None)
        )
    for feats in features:
        for sub in substates:
            model = TractHMM(features=feats, substates=sub, **params)
            model.fit(successions, labels=labels, progress=progress, calibrate=False)
            rows.append(
                {
                    "features": ",".join(model.features_),
                    "substates": ",".join(map(str, model.states_.substates)),
                    "n_parameters": model.n_parameters(),
                    # a fit without labels recorded both on its own beds
                    "log_likelihood": model.score(successions)
                    if labels is not None
                    else model.log_likelihood_,
                    "bic": model.bic(successions if labels is not None else None),
                }
            )
            models.append(model)
    resolved = {
        frozenset("facies" if f == "facies_trend" else f for f in m.features_) for m in models
    }
    if len(resolved) > 1:  # a default (None) set resolved to other variables than the rest
        raise ConfigError(
            "feature sets compared by BIC must observe the same bed variables; the default set "
            "resolved to " + "; ".join(sorted(",".join(sorted(r)) for r in resolved))
        )
    table = pd.DataFrame(rows)
    best = int(table["bic"].idxmin())
    table["selected"] = table.index == best
    # only the kept candidate's probabilities are calibrated (the BIC reads none)
    return ModelSelection(table, models[best].calibrate())
