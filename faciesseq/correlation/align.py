"""Order-preserving alignment of two wells' surface picks by dynamic programming.

Each well brings its decoded surface picks in depth order (shallowest first):
the surface kind (``MFS``, ``SB`` ...), the depth, the pick's probability and
its *fractional position*, the depth measured from the top of the decoded
column as a fraction of the column's thickness. Two picks may be tied only if
they are of the same kind; ties never cross (the order of surfaces is kept);
a pick may stay untied, where its tract pinches out or the decoder missed it.

The alignment is a global sequence alignment (Needleman & Wunsch 1970, J. Mol.
Biol. 48:443-453) with a cost in place of a score, as in dynamic-programming
well-log correlation (Smith & Waterman 1980, Math. Geology 12:1-15; Waterman &
Raymond 1987, Math. Geology 19:1-11):

- a tie between pick ``i`` of the upper-left well and ``j`` of its neighbour costs
  ``((f_i - f_j) / sigma)**2 / 2 + ((log t_i - log t_j) / tau)**2 / 2``, where
  ``f`` is the fractional position and ``t`` the thickness between the pick
  and the previous pick of the same kind above it (a cycle's thickness, the
  upper well's carried onto its neighbour's depths: :func:`tie_costs`; the term
  is left out where either well has no such pick);
- leaving a pick untied costs ``gap * p``, its probability ``p`` times the gap
  cost: a confident pick is expensive to drop, a doubtful one cheap.

A tie is made only where it costs less than leaving both picks untied, so the
cost of a tie compared with ``gap * (p_i + p_j)`` measures how good it is (see
:func:`tie_confidence`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "AlignmentOptions",
    "PickColumn",
    "align_by_order",
    "align_columns",
    "disputed_ties",
    "fitted_depth_map",
    "tie_confidence",
]


@dataclass(frozen=True)
class AlignmentOptions:
    """Costs of the alignment.

    Attributes
    ----------
    sigma
        Scale of the difference of fractional positions (fraction of the column):
        a tie whose picks lie ``sigma`` apart costs 0.5.
    tau
        Scale of the log ratio of the two cycle thicknesses above the picks.
    gap
        Cost of leaving a pick of probability 1 untied.
    doubtful
        Ties whose confidence is below this are flagged ``doubtful``.
    """

    sigma: float = 0.06
    tau: float = 0.5
    gap: float = 2.0
    doubtful: float = 0.5

    def __post_init__(self) -> None:
        for name in ("sigma", "tau", "gap"):
            if not getattr(self, name) > 0:
                raise ValueError(f"{name} must be positive, got {getattr(self, name)!r}")
        if not 0 <= self.doubtful <= 1:
            raise ValueError(f"doubtful must lie in [0, 1], got {self.doubtful!r}")


@dataclass(frozen=True)
class PickColumn:
    """One well's picks in depth order, as the alignment reads them.

    Attributes
    ----------
    surface
        Surface code of each pick.
    depth
        Depth of each pick (the core's units), increasing.
    probability
        Probability of each pick, in [0, 1].
    top, base
        Depth of the top and base of the decoded column.
    """

    surface: np.ndarray
    depth: np.ndarray
    probability: np.ndarray
    top: float
    base: float

    @classmethod
    def from_picks(cls, surface, depth, probability, top: float, base: float) -> PickColumn:
        depth = np.asarray(depth, dtype=float)
        order = np.argsort(depth, kind="stable")
        return cls(
            np.asarray(surface, dtype=object)[order].astype(str),
            depth[order],
            np.clip(np.asarray(probability, dtype=float)[order], 0.0, 1.0),
            float(top),
            float(base),
        )

    def __len__(self) -> int:
        return len(self.depth)

    @property
    def fraction(self) -> np.ndarray:
        """Fractional position of each pick from the top of the column (0) to its base (1)."""
        span = self.base - self.top
        return (self.depth - self.top) / span if span > 0 else np.zeros(len(self))

    @property
    def cycle(self) -> np.ndarray:
        """Thickness (depth units) to the previous pick of the same kind above; NaN for
        the first."""
        out = np.full(len(self), np.nan)
        last: dict[str, float] = {}
        for k, (code, depth) in enumerate(zip(self.surface, self.depth)):
            if code in last:
                out[k] = depth - last[code]
            last[code] = depth
        return out


def tie_costs(
    upper: PickColumn,
    lower: PickColumn,
    options: AlignmentOptions,
    depth_map: tuple[float, float] | None = None,
) -> np.ndarray:
    """Cost of tying every pick of ``upper`` to every pick of ``lower`` (inf: other kinds).

    ``depth_map`` is ``(intercept, slope)`` of the line carrying a depth of
    ``upper`` to the depth of the same surface in ``lower``; ``None`` maps the
    columns' tops and bases onto each other (the fractional positions). The
    position term is the misfit of ``lower``'s depth to the mapped one as a
    fraction of ``lower``'s column; the cycle term compares the mapped cycle
    thicknesses.
    """
    if depth_map is None:
        span_u = upper.base - upper.top
        slope = (lower.base - lower.top) / span_u if span_u > 0 else 1.0
        depth_map = (lower.top - slope * upper.top, slope)
    intercept, slope = depth_map
    span = lower.base - lower.top
    scale = span if span > 0 else 1.0
    mapped = intercept + slope * upper.depth
    fi, fj = mapped[:, None] / scale, lower.depth[None, :] / scale
    cost = 0.5 * ((fi - fj) / options.sigma) ** 2
    return cost + _cycle_costs(upper, lower, options, slope, scale)


def _cycle_costs(
    upper: PickColumn, lower: PickColumn, options: AlignmentOptions, slope: float, scale: float
) -> np.ndarray:
    """The cycle-thickness term of every pair (0 where either pick has no cycle above it),
    ``inf`` between picks of other kinds."""
    ci, cj = slope * upper.cycle[:, None], lower.cycle[None, :]
    with np.errstate(divide="ignore", invalid="ignore"):
        log_ratio = np.log(np.maximum(ci, 1e-6 * scale)) - np.log(np.maximum(cj, 1e-6 * scale))
    cost = np.where(np.isfinite(log_ratio), 0.5 * (log_ratio / options.tau) ** 2, 0.0)
    same = upper.surface[:, None] == lower.surface[None, :]
    return np.where(same, cost, np.inf)


def fitted_depth_map(
    upper: PickColumn, lower: PickColumn, ties: list[tuple[int, int, float]]
) -> tuple[float, float] | None:
    """``(intercept, slope)`` of the line through the tied depths, robust to a bad tie.

    Theil-Sen estimate (Sen 1968, J. Am. Stat. Assoc. 63:1379-1389): the slope
    is the median of the slopes between every two ties, the intercept the
    median of ``depth_lower - slope * depth_upper``. ``None`` with fewer than
    three ties or a slope that is not positive (the ties then say nothing
    about how the two columns stand against each other beyond their ends).
    """
    if len(ties) < 3:
        return None
    x = upper.depth[[i for i, _, _ in ties]]
    y = lower.depth[[j for _, j, _ in ties]]
    dx = x[None, :] - x[:, None]
    dy = y[None, :] - y[:, None]
    upper_pairs = np.triu(np.ones_like(dx, dtype=bool), 1) & (dx > 0)
    if not upper_pairs.any():
        return None
    slope = float(np.median(dy[upper_pairs] / dx[upper_pairs]))
    if not slope > 0:
        return None
    return float(np.median(y - slope * x)), slope


def tie_confidence(cost: float, p_left: float, p_right: float, gap: float) -> float:
    """Confidence of one tie, in [0, 1].

    ``confidence = sqrt(p_left * p_right) * exp(-cost / gap)``: the geometric
    mean of the two picks' probabilities, times a factor that is 1 for a tie
    whose picks sit at the same fractional position with equal cycle thicknesses
    and falls by ``e`` for every gap cost the tie's misfit costs.
    """
    return float(np.sqrt(max(p_left, 0.0) * max(p_right, 0.0)) * np.exp(-cost / gap))


def align_columns(
    upper: PickColumn, lower: PickColumn, options: AlignmentOptions | None = None
) -> list[tuple[int, int, float]]:
    """Tie the picks of two neighbouring wells; ``[(i, j, cost), ...]`` in depth order.

    Parameters
    ----------
    upper, lower
        The two wells' pick columns (``upper`` is the well nearer the start of
        the section; the result does not depend on which is which except for
        the order of each pair).
    options
        Costs; :class:`AlignmentOptions` defaults when ``None``.

    Returns
    -------
    list of (int, int, float)
        Index of the pick in ``upper``, in ``lower`` and the tie's cost; both
        indices increase down the list (no crossing ties), and every pick is
        tied at most once.
    """
    options = options or AlignmentOptions()
    return _align(upper, lower, options, tie_costs(upper, lower, options))


def align_by_order(
    upper: PickColumn, lower: PickColumn, options: AlignmentOptions | None = None
) -> list[tuple[int, int, float]]:
    """Tie two wells' picks by their order alone: the fallback for a pair that
    :func:`align_columns` leaves without a tie.

    The fractional positions of :func:`align_columns` assume both columns span the
    same interval of the succession; two cores that cover different parts of it
    (one starts a cycle lower) then have every same-kind pair too far apart to tie,
    even where both show the same sequence of picks. This reading drops the
    position term and keeps the rest: only picks of one kind, no crossing, the gap
    cost, and the cycle-thickness term (thicknesses compared in the wells' own
    depth units, there being no mapping of one column onto the other). A tie then
    costs its cycle term alone, so the two sequences of picks are tied as far as
    their order allows unless cycle thicknesses disagree by more than the gap
    cost; among alignments with as many ties, the one whose cycle thicknesses
    agree best wins. In a cyclic succession this
    can be one cycle off, so callers flag its ties doubtful
    (:func:`faciesseq.correlation.chain.correlate`).

    Returns
    -------
    list of (int, int, float)
        As :func:`align_columns`, the cost being the cycle term alone.
    """
    options = options or AlignmentOptions()
    scale = max(upper.base - upper.top, lower.base - lower.top, 1.0)
    return _align(upper, lower, options, _cycle_costs(upper, lower, options, 1.0, scale))


def disputed_ties(
    upper: PickColumn,
    lower: PickColumn,
    ties: list[tuple[int, int, float]],
    options: AlignmentOptions | None = None,
) -> set[tuple[int, int]]:
    """Ties of :func:`align_columns` that a second reading of the pair does not make.

    The alignment places each column's picks by their fraction of the column,
    which holds only where both columns span the same interval. A well that
    misses the top or the base of the succession (a shorter core, a
    truncation) breaks that. The second reading maps the depths of ``upper``
    onto ``lower`` by the line through the ties themselves
    (:func:`fitted_depth_map`, robust to a bad tie) and aligns again; a tie the
    two readings disagree on is ``(i, j)`` in the returned set.
    """
    options = options or AlignmentOptions()
    depth_map = fitted_depth_map(upper, lower, ties)
    if depth_map is None:
        return set()
    refitted = _align(upper, lower, options, tie_costs(upper, lower, options, depth_map))
    return {(i, j) for i, j, _ in ties} - {(i, j) for i, j, _ in refitted}


def _align(
    upper: PickColumn, lower: PickColumn, options: AlignmentOptions, match: np.ndarray
) -> list[tuple[int, int, float]]:
    """The cheapest order-preserving alignment for the tie costs ``match``."""
    n, m = len(upper), len(lower)
    skip_i = options.gap * upper.probability
    skip_j = options.gap * lower.probability
    total = np.zeros((n + 1, m + 1))
    total[1:, 0] = np.cumsum(skip_i)
    total[0, 1:] = np.cumsum(skip_j)
    move = np.zeros((n + 1, m + 1), dtype=np.int8)  # 0 tie, 1 skip upper, 2 skip lower
    move[1:, 0] = 1
    move[0, 1:] = 2
    for i in range(1, n + 1):
        for j in range(1, m + 1):
            options_ij = (
                total[i - 1, j - 1] + match[i - 1, j - 1],
                total[i - 1, j] + skip_i[i - 1],
                total[i, j - 1] + skip_j[j - 1],
            )
            k = int(np.argmin(options_ij))  # ties resolved in a fixed order: tie, upper, lower
            total[i, j] = options_ij[k]
            move[i, j] = k
    ties = []
    i, j = n, m
    while i > 0 or j > 0:
        k = move[i, j]
        if k == 0:
            ties.append((i - 1, j - 1, float(match[i - 1, j - 1])))
            i, j = i - 1, j - 1
        elif k == 1:
            i -= 1
        else:
            j -= 1
    return ties[::-1]
