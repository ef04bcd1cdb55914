"""Emission pieces that read the stacking context of a bed (its cycle and its neighbours).

The context of each bed comes from :func:`faciesseq.cycles.bed_context`: the
stacking of its parasequence-scale cycle against the cycles below and above,
the downward or upward shift of the cycle's base, the trend of proximality
over a few beds on each side, and where the bed lies between the shallowest
and the deepest facies around it. Each is binned and modelled as a
categorical distribution per tract. These are what define systems tracts in
common practice (Van Wagoner et al. 1990; Catuneanu et al. 2009): the tract
level reads the stacking of cycles, not bed-to-bed steps.

Priors pin each tract to its place in the base-level cycle, so that unlabelled
fits name the tracts the same way whatever the starting point:

- the deepening tract (TST): retrogradational stacking, deepening trend;
- the regressive tracts after it, in the tract model's order (HST, FSST, LST
  by default), sit progressively lower between the deepest and the shallowest
  facies around them: the highstand near the turnaround at the maximum
  flooding surface, the falling stage shallowing fast with a downward shift,
  the lowstand at the shallowest, aggrading.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from faciesseq.cycles import POSITION_HALF_WIDTH, TREND_HALF_WIDTH
from faciesseq.errors import ModelFileError
from faciesseq.hmm.emissions import CategoricalEmission, check_table
from faciesseq.hmm.encoding import MISSING, EncodedBeds

__all__ = [
    "CONTEXT_BINS",
    "ContextEmission",
    "context_pseudo_counts",
    "evidence_weights",
    "exposure_exclusions",
    "marine_half",
    "tract_levels",
]

#: Smallest pseudo-count of a context bin (also with ``prior_strength=0``).
MIN_PSEUDO = 1e-6
#: Probability held in an excluded cell of a context table (:func:`exposure_exclusions`):
#: small, never zero, so that a core whose marine-nonmarine cycles are shorter than
#: the strict tract graph's shortest cycle (a one-bed marine interval cannot be a
#: TST and an HST) still has a path; a bed pays about 9 nats for breaking it.
EXCLUDED_PROB = 1e-4

#: Bin edges of every context feature (values: ranks per bed, ranks, 0..1).
CONTEXT_BINS: Mapping[str, tuple[float, ...]] = {
    "cycle_stacking": (-1.25, -0.25, 0.25, 1.25),
    "base_shift": (-1.5, -0.5, 0.5, 1.5),
    "trend": (-0.3, -0.08, 0.08, 0.3),
    "position": (0.25, 0.5, 0.75),
    "cycle_sharpness": (0.2, 0.5),
    "local_position": (0.25, 0.5, 0.75),
    "cycle_amplitude": (0.5, 1.5, 2.5),
    "setting": (0.5,),
    "exposure": (0.5, 1.5),
}


_QUARTERS = ("shallowest quarter", "second quarter", "third quarter", "deepest quarter")

#: What each bin of a context feature means, in the words of core description.
CONTEXT_CATEGORIES: Mapping[str, tuple[str, ...]] = {
    "cycle_stacking": (
        "prograding strongly",
        "prograding",
        "aggrading",
        "retrograding",
        "retrograding strongly",
    ),
    "base_shift": (
        "base 2+ ranks shallower",
        "base 1 rank shallower",
        "base level with the cycle below",
        "base 1 rank deeper",
        "base 2+ ranks deeper",
    ),
    "trend": ("shallowing fast", "shallowing", "steady", "deepening", "deepening fast"),
    "position": _QUARTERS,
    "local_position": _QUARTERS,
    "cycle_sharpness": ("mostly gradational", "mixed", "mostly sharp"),
    "cycle_amplitude": ("one rank", "shallows 1 rank", "shallows 2 ranks", "shallows 3+ ranks"),
    "setting": ("marine", "nonmarine"),
    "exposure": ("marine", "marine on an exposure surface", "exposed"),
}


def bin_centres(edges: Sequence[float]) -> np.ndarray:
    """Centres of the bins cut at ``edges``, the two open ends one bin width out."""
    e = np.asarray(edges, dtype=float)
    width = e[1] - e[0] if len(e) > 1 else 1.0
    return np.r_[e[0] - width / 2, (e[:-1] + e[1:]) / 2, e[-1] + width / 2]


def tract_levels(order: Sequence[str], trends: Sequence[str]) -> list[float | None]:
    """Expected position (0 = shallowest, 1 = deepest) of every tract; ``None`` for deepening.

    The regressive tracts after the deepening one are spread evenly from the
    deep turnaround down to the shallow one, in the tract model's order.
    """
    n = len(order)
    deepening = [i for i, t in enumerate(trends) if t == "deepening"]
    levels: list[float | None] = [None] * n
    if not deepening:
        return [0.5] * n
    first = deepening[-1]
    regressive = [(first + k) % n for k in range(1, n) if trends[(first + k) % n] != "deepening"]
    for j, i in enumerate(regressive):
        levels[i] = 1.0 - (j + 0.5) / len(regressive)
    return levels


def marine_half(levels: Sequence[float | None]) -> list[bool]:
    """Which tracts make the transgressive-highstand half of the base-level cycle:
    the deepening tract(s) (``level`` ``None``) and the regressive tract next above
    them, the one at the deep turnaround (the highest ``level``;
    :func:`tract_levels`). All ``False`` unless at least one regressive tract is
    left for the other half."""
    regressive = [lv for lv in levels if lv is not None]
    if len(regressive) < 2 or len(regressive) == len(levels):
        return [False] * len(levels)
    highest = max(regressive)
    return [lv is None or lv == highest for lv in levels]


def exposure_exclusions(levels: Sequence[float | None]) -> np.ndarray:
    """``(n_tracts, 3)`` cells of the ``exposure`` table held at
    :data:`EXCLUDED_PROB`: an exposed bed in the transgressive-highstand half, and a
    marine bed on an exposed one in the falling-stage-lowstand half.

    A facies that records subaerial exposure of the site (a paleosol, calcrete,
    redbed or loess on a shelf) says that base level had fallen below the site:
    the sequence boundary lies at or below it and the transgressive surface, the
    first marine flooding above it, is the base of the transgressive systems
    tract, so exposed beds belong to the falling stage and the lowstand and the
    marine bed on them to the transgression (or, where no transgression is
    recorded, the highstand). This is the reading of sequences in wells and cores
    (Van Wagoner et al. 1990, AAPG Methods in Exploration 7; Catuneanu et al.
    2009, Earth-Science Reviews 92:1-33, the transgressive surface as the base of
    the TST in practice). It is not held for other nonmarine facies: an aggrading
    coastal plain records the transgression landward of the shoreline.
    """
    cats = CONTEXT_CATEGORIES["exposure"]
    out = np.zeros((len(levels), len(cats)), dtype=bool)
    half = marine_half(levels)
    if not any(half):
        return out
    for s, marine in enumerate(half):
        out[s, cats.index("exposed" if marine else "marine on an exposure surface")] = True
    return out


def context_pseudo_counts(
    feature: str, trends: Sequence[str], levels: Sequence[float | None], strength: float
) -> np.ndarray:
    """Dirichlet pseudo-counts ``(n_tracts, n_bins)`` of a context feature.

    Every bin gets a tenth of ``strength``; the rest follows the reading of
    stacking patterns above (common practice): positive stacking, shift and
    trend favoured in the deepening tract, negative ones in regressive tracts
    the more the lower they sit (the falling stage shifts down, the lowstand
    aggrades), and the position bins near each regressive tract's level.
    """
    centres = bin_centres(CONTEXT_BINS[feature])
    out = np.full((len(trends), len(centres)), 0.1 * strength)
    scale = max(abs(centres).max(), 1e-9)
    for s, (trend, level) in enumerate(zip(trends, levels, strict=True)):
        if feature in ("cycle_sharpness", "cycle_amplitude", "setting", "exposure"):
            out[s] += 0.5 * strength  # no reading of the trade to pin: learnt from the data
        elif feature in ("position", "local_position"):
            if level is None:
                out[s] += 0.5 * strength
            else:
                out[s] += strength * np.exp(-0.5 * ((centres - level) / 0.25) ** 2)
        else:
            target = 0.6 * scale if trend == "deepening" else 0.0
            if trend == "shallowing":
                target = -0.3 * scale
            out[s] += strength * np.exp(-0.5 * ((centres - target) / (0.5 * scale)) ** 2)
    # never an exact zero, even without a prior: under the strict tract graph a
    # zero emission can leave a core with no allowed path at all
    return np.maximum(out, MIN_PSEUDO)


def evidence_weights(beds_per_cycle: float, power: float = 1.0) -> dict[str, float]:
    """The share of each context feature's evidence that is a bed's own.

    A context feature is read from a window of beds, and the beds of one window
    share it: every bed of a cycle has the same ``cycle_amplitude``, and the
    ``trend`` of neighbouring beds is fitted to nearly the same ranks. Summed over
    the beds as if each were new, such evidence would count once per bed that
    shares it, and outweigh what each bed shows alone (its contact, its rank
    step, its setting). Each feature's log-probability is therefore multiplied by
    one over the number of beds its window spans: a composite likelihood with
    weights (Lindsay 1988, Contemporary Mathematics 80:221-239; Varin, Reid &
    Firth 2011, Statistica Sinica 21:5-42), here chosen from the windows'
    definitions and the mean cycle length of the training beds, not fitted:

    - ``trend`` and ``position``: the beds of their windows,
      ``2 * half width + 1`` (:data:`faciesseq.cycles.TREND_HALF_WIDTH`,
      :data:`~faciesseq.cycles.POSITION_HALF_WIDTH`);
    - ``cycle_amplitude`` and ``cycle_sharpness``: the beds of one cycle;
      ``base_shift``: of two (the cycle and the one below);
      ``cycle_stacking`` and ``local_position``: of three (below, own, above);
    - ``setting`` and ``exposure``: the bed alone (weight 1).

    ``beds_per_cycle``: mean beds per cycle (:func:`faciesseq.cycles.beds_per_cycle`).
    ``power``: each weight raised to it; 0.5, the square roots, is the weaker
    correction a fit falls back on where the full one is refused
    (:meth:`faciesseq.hmm.model.TractHMM.fit`).
    """
    m = max(float(beds_per_cycle), 1.0)
    weights = {
        "trend": 1.0 / (2 * TREND_HALF_WIDTH + 1),
        "position": 1.0 / (2 * POSITION_HALF_WIDTH + 1),
        "cycle_amplitude": 1.0 / m,
        "cycle_sharpness": 1.0 / m,
        "base_shift": 1.0 / (2 * m),
        "cycle_stacking": 1.0 / (3 * m),
        "local_position": 1.0 / (3 * m),
        "setting": 1.0,
        "exposure": 1.0,
    }
    return {name: w ** float(power) for name, w in weights.items()}


class ContextEmission(CategoricalEmission):
    """P(binned context feature | tract), one of :data:`CONTEXT_BINS`, its
    log-probability multiplied by ``weight`` (:func:`evidence_weights`; 1 counts
    every bed in full). The M-step of a weighted table is that of its weighted
    counts, so EM still never lowers the weighted objective."""

    kind = "context"

    def __init__(
        self,
        feature: str,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
        excluded: np.ndarray | None = None,
        weight: float = 1.0,
    ) -> None:
        self.feature = feature
        self.weight = float(weight)
        self.edges = tuple(CONTEXT_BINS[feature])
        cats = list(CONTEXT_CATEGORIES[feature])
        super().__init__(cats, n_tracts, pseudo, unseen_pseudo, name=feature)
        shape = (n_tracts, len(cats))
        self.excluded = (
            np.zeros(shape, dtype=bool) if excluded is None else np.asarray(excluded, dtype=bool)
        )
        self.pseudo = np.where(self.excluded, 0.0, self.pseudo)
        self.hold_exclusions()

    def hold_exclusions(self) -> None:
        """Hold the excluded cells at :data:`EXCLUDED_PROB` and share the rest of each
        row in proportion (the M-step of a table with cells fixed in advance)."""
        if not self.excluded.any():
            return
        free = np.where(self.excluded, 0.0, self.emissionprob_)
        rest = 1.0 - EXCLUDED_PROB * self.excluded.sum(axis=1, keepdims=True)
        free = free / free.sum(axis=1, keepdims=True) * rest
        self.emissionprob_ = np.where(self.excluded, EXCLUDED_PROB, free)

    def m_step(self, stats: dict) -> None:
        super().m_step(stats)
        self.hold_exclusions()

    def n_parameters(self) -> int:
        return super().n_parameters() - int(self.excluded.sum())

    def log_prob_of(self, obs: np.ndarray) -> np.ndarray:
        out = super().log_prob_of(obs)
        return out if self.weight == 1.0 else out * self.weight

    def accumulate_of(self, stats: dict, obs: np.ndarray, weights: np.ndarray) -> None:
        super().accumulate_of(stats, obs, weights if self.weight == 1.0 else weights * self.weight)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[self.feature]
        out = np.full(len(x), MISSING, dtype=np.int64)
        known = np.isfinite(x)
        out[known] = np.digitize(x[known], self.edges)
        return out

    def to_dict(self) -> dict[str, Any]:
        out = super().to_dict()
        out["edges"] = list(self.edges)
        if self.weight != 1.0:
            out["weight"] = self.weight
        if self.excluded.any():
            out["excluded"] = self.excluded.astype(int).tolist()
        return out

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        feature = str(data["name"])
        if feature not in CONTEXT_BINS or list(data["edges"]) != list(CONTEXT_BINS[feature]):
            raise ModelFileError(
                f"emission {feature!r}: not a context feature with the bins {dict(CONTEXT_BINS)}",
                file=source,
            )
        weight = data.get("weight", 1.0)
        if isinstance(weight, bool) or not isinstance(weight, int | float) or not 0 < weight <= 1:
            raise ModelFileError(
                f"emission {feature!r}: weight {weight!r} is not a number in (0, 1]", file=source
            )
        piece = cls(
            feature, n_tracts, unseen_pseudo=float(data["unseen_pseudo"]), weight=float(weight)
        )
        piece._load_tables(data, n_tracts, source)
        if "excluded" in data:
            shape = piece.emissionprob_.shape
            excluded = check_table(f"{feature}.excluded", data["excluded"], shape, source)
            if not np.allclose(piece.emissionprob_[excluded > 0], EXCLUDED_PROB):
                raise ModelFileError(
                    f"emission {feature!r}: an excluded cell's probability is not {EXCLUDED_PROB}",
                    file=source,
                )
            piece.excluded = excluded > 0
        return piece
