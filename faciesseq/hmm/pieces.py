"""Emission pieces by name: a fresh piece for a feature, or one rebuilt from a model file."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from faciesseq.cycles import CONTEXT_FEATURES
from faciesseq.errors import ModelFileError
from faciesseq.hmm.context import (
    ContextEmission,
    context_pseudo_counts,
    exposure_exclusions,
    tract_levels,
)
from faciesseq.hmm.emissions import (
    ContactEmission,
    EmissionPiece,
    FaciesEmission,
    FaciesTrendEmission,
    GaussianEmission,
    trend_pseudo_counts,
)
from faciesseq.hmm.encoding import RANK_STEP, RANK_STEP_ABOVE, RANK_TREND, STACKING
from faciesseq.hmm.rank_pieces import (
    RankStepAboveEmission,
    RankStepEmission,
    RankTrendEmission,
    rank_step_pseudo_counts,
)
from faciesseq.hmm.reference import ReferenceEmission
from faciesseq.hmm.stacking_piece import StackingEmission

__all__ = ["make_piece", "piece_from_dict"]


_KINDS = {
    "stacking": StackingEmission,
    "reference": ReferenceEmission,
    "rank_step": RankStepEmission,
    "rank_step_above": RankStepAboveEmission,
    "rank_trend": RankTrendEmission,
    "facies": FaciesEmission,
    "contact": ContactEmission,
    "facies_trend": FaciesTrendEmission,
    "gaussian": GaussianEmission,
}


def piece_from_dict(data: Any, n_tracts: int, source: str | None = None) -> EmissionPiece:
    """Rebuild an emission piece from :meth:`EmissionPiece.to_dict` output (validated)."""
    kinds = {**_KINDS, "context": ContextEmission}
    kind = data.get("kind") if isinstance(data, Mapping) else None
    if not isinstance(kind, str) or kind not in kinds:
        raise ModelFileError(
            f"unknown emission kind {kind!r}; expected one of {sorted(kinds)}", file=source
        )
    try:
        return kinds[kind].from_dict(data, n_tracts, source)
    except KeyError as exc:
        raise ModelFileError(
            f"emission {data.get('name')!r}: missing key {exc.args[0]!r}", file=source
        ) from None
    except (TypeError, ValueError, OverflowError, IndexError) as exc:
        # a value of the wrong type or size anywhere in the entry (the tables and the
        # trees check what they can; this names the rest)
        raise ModelFileError(
            f"emission {data.get('name')!r}: invalid entry ({exc})", file=source
        ) from None


def make_piece(
    feature: str,
    *,
    facies: Sequence[str],
    contacts: Sequence[str],
    n_tracts: int,
    ranks: np.ndarray | None,
    trends: Sequence[str],
    prior_strength: float,
    embedded: bool,
    numeric_scale: tuple[float, float] = (0.0, 1.0),
    weight: float = 1.0,
) -> EmissionPiece:
    """A fresh emission piece for ``feature`` with the project's default priors.

    ``prior_strength`` scales every pseudo-count; 0 turns all priors off (plain
    maximum likelihood). ``numeric_scale`` is ``(mean, variance)`` of the
    feature over the training beds, used by Gaussian pieces for their prior;
    ``weight`` that of a context piece (:func:`~faciesseq.hmm.context.evidence_weights`).
    """
    V = len(facies)
    base = 0.1 * prior_strength
    if feature == "facies":
        return FaciesEmission(facies, n_tracts, np.full((n_tracts, V), base))
    if feature == "facies_trend":
        if ranks is None:
            trend = np.full((n_tracts, V, V), base + 0.5 * prior_strength)
            if embedded:
                trend[:, np.arange(V), np.arange(V)] = 0.0
        else:
            trend = trend_pseudo_counts(ranks, trends, prior_strength, base, embedded)
        return FaciesTrendEmission(
            facies, n_tracts, np.full((n_tracts, V), base), trend, embedded=embedded
        )
    if feature == "contact":
        return ContactEmission(contacts, n_tracts, np.full((n_tracts, len(contacts)), base))
    if feature == RANK_STEP:
        return RankStepEmission(n_tracts, rank_step_pseudo_counts(trends, prior_strength, base))
    if feature == RANK_STEP_ABOVE:
        return RankStepAboveEmission(
            n_tracts, rank_step_pseudo_counts(trends, prior_strength, base)
        )
    if feature == STACKING:
        return StackingEmission(n_tracts)
    if feature in CONTEXT_FEATURES:
        levels = tract_levels(range(len(trends)), trends)
        pseudo = context_pseudo_counts(feature, trends, levels, prior_strength)
        # the reading of exposure is a prior of the trade: off with the other priors
        excluded = exposure_exclusions(levels) if feature == "exposure" and prior_strength else None
        return ContextEmission(feature, n_tracts, pseudo, excluded=excluded, weight=weight)
    if feature == RANK_TREND:
        pseudo = rank_step_pseudo_counts(
            trends, prior_strength, base, RankTrendEmission.CENTRES, aggrading_limit=0.25
        )
        return RankTrendEmission(n_tracts, pseudo)
    mean, var = numeric_scale
    nu = 1.0 if prior_strength > 0 else 0.0
    return GaussianEmission(feature, n_tracts, nu=nu, s0=max(var, 1e-6), mean0=mean)
