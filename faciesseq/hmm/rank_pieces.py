"""Emission pieces that read the facies ranks: the rank jump at a bed's base
(``rank_step``) and top (``rank_step_above``) and the rank trend around it
(``rank_trend``), each binned and categorical per tract, with pseudo-counts that
favour deepening jumps in deepening tracts and shallowing ones in shallowing
tracts (see :mod:`faciesseq.hmm.emissions` for the pieces' contract)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from faciesseq.errors import ConfigError, ModelFileError
from faciesseq.hmm.emissions import CategoricalEmission
from faciesseq.hmm.encoding import MISSING, RANK_STEP, RANK_STEP_ABOVE, RANK_TREND, EncodedBeds

__all__ = [
    "RankStepAboveEmission",
    "RankStepEmission",
    "RankTrendEmission",
    "rank_step_pseudo_counts",
]


class RankStepEmission(CategoricalEmission):
    """P(rank jump at the bed's base | tract), categorical over clipped jumps.

    The jump is the rank of the bed's facies minus the rank of the bed below
    (positive = deepening upward), clipped to ``-3 .. +3``; the first bed of a
    succession and beds next to an unknown facies have none (marginalised).
    Categorical rather than Gaussian because jumps are whole numbers (a Gaussian
    collapses onto one value). Measured on simulated cores to separate the
    tracts better than the facies-to-facies table alone: it pools the same
    shift over all facies (two numbers' worth of trend per tract is learnt from
    every bed, not per pair of facies).
    """

    kind = "rank_step"
    LIMIT = 3

    def __init__(
        self,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        name: str = RANK_STEP,
    ) -> None:
        cats = [f"{k:+d}" for k in range(-self.LIMIT, self.LIMIT + 1)]
        super().__init__(cats, n_tracts, pseudo, unseen_pseudo, name)

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        expected = [f"{k:+d}" for k in range(-cls.LIMIT, cls.LIMIT + 1)]
        if [str(c) for c in data["categories"]] != expected:
            raise ModelFileError(
                f"emission {data.get('name')!r}: categories must be the rank jumps {expected}",
                file=source,
            )
        piece = cls(n_tracts, unseen_pseudo=float(data["unseen_pseudo"]), name=data["name"])
        return piece._load_tables(data, n_tracts, source)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[RANK_STEP]
        known = np.isfinite(x)
        out = np.full(len(x), MISSING, dtype=np.int64)
        out[known] = np.clip(np.rint(x[known]), -self.LIMIT, self.LIMIT).astype(np.int64)
        out[known] += self.LIMIT
        return out


def rank_step_pseudo_counts(
    trends: Sequence[str],
    strength: float,
    base: float,
    values: Sequence[float] | None = None,
    aggrading_limit: float = 1.0,
) -> np.ndarray:
    """Dirichlet pseudo-counts for the rank jump at a bed's base, ``(n_tracts, 7)``.

    Every jump gets ``base``; a deepening tract adds ``strength`` to each
    deepening jump (+1 .. +3), a shallowing tract to each shallowing jump, an
    aggrading tract to jumps of at most ``aggrading_limit`` ranks; no jump (0,
    only on a grid or across unknown facies) gets half of ``strength``: the same
    reading of stacking patterns as :func:`trend_pseudo_counts` (common
    practice). ``values`` are the categories' values (default: the jumps
    -3 .. +3; :class:`RankTrendEmission` passes its bins' centres).
    """
    if values is None:
        values = np.arange(-RankStepEmission.LIMIT, RankStepEmission.LIMIT + 1)
    jumps = np.asarray(values, dtype=float)
    out = np.empty((len(trends), len(jumps)))
    for s, trend in enumerate(trends):
        if trend == "deepening":
            favour = (jumps > 0).astype(float)
        elif trend == "shallowing":
            favour = (jumps < 0).astype(float)
        elif trend == "aggrading":
            favour = (np.abs(jumps) <= aggrading_limit).astype(float)
        else:
            raise ConfigError(f"unknown tract trend {trend!r}")
        out[s] = base + strength * np.where(jumps == 0, 0.5, favour)
    # never an exact zero: under a strict tract graph a zero emission can leave a
    # core with no allowed path (also with prior_strength=0)
    return np.maximum(out, 1e-6)


class RankTrendEmission(CategoricalEmission):
    """P(rank trend over the neighbouring beds | tract), categorical over slope bins.

    The slope (:func:`rank_trends`, ranks per bed) falls into one of seven bins
    with edges ``-0.55, -0.25, -0.05, 0.05, 0.25, 0.55``: strongly, moderately,
    slightly shallowing, flat, and the same deepening. Binned rather than
    Gaussian: the slope takes few values and a tract of alternating facies
    (slope exactly 0) made a Gaussian collapse onto one value (variance 0,
    measured on the project's synthetic cores).
    """

    kind = "rank_trend"
    EDGES = (-0.55, -0.25, -0.05, 0.05, 0.25, 0.55)
    CENTRES = (-0.8, -0.4, -0.15, 0.0, 0.15, 0.4, 0.8)
    CATEGORIES = (
        "<-0.55",
        "-0.55..-0.25",
        "-0.25..-0.05",
        "flat",
        "0.05..0.25",
        "0.25..0.55",
        ">0.55",
    )

    def __init__(
        self,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        name: str = "rank_trend",
    ) -> None:
        super().__init__(self.CATEGORIES, n_tracts, pseudo, unseen_pseudo, name)

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        if tuple(str(c) for c in data["categories"]) != cls.CATEGORIES:
            raise ModelFileError(
                f"emission {data.get('name')!r}: categories must be the slope bins "
                f"{list(cls.CATEGORIES)}",
                file=source,
            )
        piece = cls(n_tracts, unseen_pseudo=float(data["unseen_pseudo"]), name=data["name"])
        return piece._load_tables(data, n_tracts, source)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[RANK_TREND]
        known = np.isfinite(x)
        out = np.full(len(x), MISSING, dtype=np.int64)
        out[known] = np.digitize(x[known], self.EDGES)
        return out


class RankStepAboveEmission(RankStepEmission):
    """P(rank jump at the bed's top | tract): :class:`RankStepEmission` read one bed up.

    Same categories and priors as the jump at the base; the top bed of a
    succession has none (marginalised). See :func:`rank_steps_above`.
    """

    kind = "rank_step_above"

    def __init__(
        self,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        name: str = RANK_STEP_ABOVE,
    ) -> None:
        super().__init__(n_tracts, pseudo, unseen_pseudo, name)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[RANK_STEP_ABOVE]
        known = np.isfinite(x)
        out = np.full(len(x), MISSING, dtype=np.int64)
        out[known] = np.clip(np.rint(x[known]), -self.LIMIT, self.LIMIT).astype(np.int64)
        out[known] += self.LIMIT
        return out
