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

from faciesseq.errors import ModelFileError
from faciesseq.hmm.emissions import CategoricalEmission
from faciesseq.hmm.encoding import MISSING, EncodedBeds

__all__ = ["CONTEXT_BINS", "ContextEmission", "context_pseudo_counts", "tract_levels"]

#: Smallest pseudo-count of a context bin (also with ``prior_strength=0``).
MIN_PSEUDO = 1e-6

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
        if feature in ("cycle_sharpness", "cycle_amplitude", "setting"):
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


class ContextEmission(CategoricalEmission):
    """P(binned context feature | tract), one of :data:`CONTEXT_BINS`."""

    kind = "context"

    def __init__(
        self,
        feature: str,
        n_tracts: int,
        pseudo: np.ndarray | None = None,
        unseen_pseudo: float = 0.5,
    ) -> None:
        self.feature = feature
        self.edges = tuple(CONTEXT_BINS[feature])
        cats = list(CONTEXT_CATEGORIES[feature])
        super().__init__(cats, n_tracts, pseudo, unseen_pseudo, name=feature)

    def _observed(self, beds: EncodedBeds) -> np.ndarray:
        x = beds.numeric[self.feature]
        out = np.full(len(x), MISSING, dtype=np.int64)
        known = np.isfinite(x)
        out[known] = np.digitize(x[known], self.edges)
        return out

    def to_dict(self) -> dict[str, Any]:
        out = super().to_dict()
        out["edges"] = list(self.edges)
        return out

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        feature = str(data["name"])
        if feature not in CONTEXT_BINS or list(data["edges"]) != list(CONTEXT_BINS[feature]):
            raise ModelFileError(
                f"emission {feature!r}: not a context feature with the bins {dict(CONTEXT_BINS)}",
                file=source,
            )
        piece = cls(feature, n_tracts, unseen_pseudo=float(data["unseen_pseudo"]))
        return piece._load_tables(data, n_tracts, source)
