"""Cyclicity: entropies of the upward and downward matrices, the preferred upward path.

Entropy (Hattori 1976, Math. Geology 8:477–497): for facies ``i``,
``E_post(i) = −Σ_j p_ij log2 p_ij`` from the upward matrix (what follows
``i``) and ``E_pre(i) = −Σ_j q_ij log2 q_ij`` from the downward matrix
``q_ij = n_ji / n_·i`` (what lies below ``i``). Both are also given
normalised by their maximum, ``log2(m − 1)`` for an embedded chain and
``log2 m`` for a depth grid. Whole-chain values are the means weighted by
the share of transitions from (resp. into) each facies.

The *cycle type* is the project's reading of Hattori's E_post–E_pre diagram
(thresholds are our own, not Hattori's published ones; stated from memory
of his diagram): ``random`` when the first-order test is not significant or
both normalised entropies exceed ``random_level``; ``symmetric`` when they
differ by less than ``symmetric_gap``; otherwise ``asymmetric``, upward
(the facies above is easier to predict than the one below) or downward.

Preferred upward path: the facies cycle read from the significant positive
adjusted residuals (the transitions that happen more often than under the
null model): the longest simple cycle of that directed graph, ties broken by
the sum of residuals; the longest simple path when there is no cycle (Davis
2002, ch. 4, reads the cycle by hand from the same table).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.markov.counts import transition_probabilities

__all__ = ["CyclicityResult", "cyclicity", "entropies", "preferred_path"]


@dataclass(frozen=True)
class CyclicityResult:
    """Entropies per facies and for the chain, the cycle type and the preferred path."""

    codes: tuple[str, ...]
    e_post: np.ndarray
    e_pre: np.ndarray
    e_max: float
    e_post_total: float
    e_pre_total: float
    cycle_type: str
    path: tuple[str, ...]
    path_is_cycle: bool

    @property
    def e_post_normalised(self) -> float:
        return self.e_post_total / self.e_max if self.e_max > 0 else float("nan")

    @property
    def e_pre_normalised(self) -> float:
        return self.e_pre_total / self.e_max if self.e_max > 0 else float("nan")

    def to_frame(self) -> pd.DataFrame:
        """Entropies per facies (bits)."""
        return pd.DataFrame(
            {"facies": list(self.codes), "e_post": self.e_post, "e_pre": self.e_pre}
        )

    def to_dict(self) -> dict:
        return {
            "codes": list(self.codes),
            "e_post": [float(x) for x in self.e_post],
            "e_pre": [float(x) for x in self.e_pre],
            "e_max": float(self.e_max),
            "e_post_total": float(self.e_post_total),
            "e_pre_total": float(self.e_pre_total),
            "e_post_normalised": float(self.e_post_normalised),
            "e_pre_normalised": float(self.e_pre_normalised),
            "cycle_type": self.cycle_type,
            "preferred_path": list(self.path),
            "path_is_cycle": bool(self.path_is_cycle),
        }


def _row_entropy(p: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(p > 0, -p * np.log2(np.where(p > 0, p, 1.0)), 0.0)
    return t.sum(axis=1)


def entropies(counts: np.ndarray, *, embedded: bool) -> tuple[np.ndarray, np.ndarray, float]:
    """``E_post`` and ``E_pre`` per facies (bits) and the maximum entropy (Hattori 1976)."""
    n = np.asarray(counts, dtype=float)
    present = (n.sum(axis=0) + n.sum(axis=1)) > 0
    m = int(present.sum())
    e_max = float(np.log2(m - 1)) if embedded and m > 2 else float(np.log2(max(m, 1)))
    return (
        _row_entropy(transition_probabilities(n)),
        _row_entropy(transition_probabilities(n.T)),
        e_max,
    )


def preferred_path(
    residuals: np.ndarray, significant: np.ndarray, codes: Sequence[str], max_facies: int = 14
) -> tuple[tuple[str, ...], bool]:
    """The facies cycle read from significant positive residuals (see module docstring)."""
    m = len(codes)
    r = np.nan_to_num(np.asarray(residuals, dtype=float), nan=0.0)
    edge = np.asarray(significant, dtype=bool) & (r > 0)
    np.fill_diagonal(edge, False)
    if not edge.any():
        return (), False
    if m > max_facies:  # enumeration would be too slow; follow the strongest link
        start = int(np.argmax((r * edge).max(axis=1)))
        path, seen = [start], {start}
        while True:
            nxt = [j for j in np.argsort(-r[path[-1]]) if edge[path[-1], j]]
            nxt = [j for j in nxt if j not in seen]
            if not nxt:
                break
            path.append(int(nxt[0]))
            seen.add(int(nxt[0]))
        return tuple(codes[i] for i in path), False
    best: tuple[int, float, list[int]] = (0, -np.inf, [])

    def walk(path: list[int], score: float) -> None:
        # each simple cycle is enumerated once, from its smallest facies index
        nonlocal best
        last = path[-1]
        for j in np.nonzero(edge[last])[0]:
            j = int(j)
            if j == path[0] and len(path) >= 2:
                s = score + r[last, j]
                if (len(path), s) > best[:2]:
                    best = (len(path), s, list(path))
            elif j > path[0] and j not in path:
                walk([*path, j], score + r[last, j])

    for start in range(m):
        walk([start], 0.0)
    if best[2]:
        return tuple(codes[i] for i in best[2]), True
    return tuple(codes[i] for i in _longest_path(edge, r)), False


def _longest_path(edge: np.ndarray, r: np.ndarray) -> list[int]:
    m = len(edge)
    best: tuple[int, float, list[int]] = (0, -np.inf, [])

    def walk(path: list[int], score: float) -> None:
        nonlocal best
        if (len(path), score) > best[:2]:
            best = (len(path), score, list(path))
        for j in np.nonzero(edge[path[-1]])[0]:
            if int(j) not in path:
                walk([*path, int(j)], score + r[path[-1], j])

    for start in range(m):
        walk([start], 0.0)
    return best[2]


def cyclicity(
    counts: np.ndarray,
    residuals: np.ndarray,
    significant: np.ndarray,
    codes: Sequence[str],
    *,
    embedded: bool,
    first_order_p: float,
    alpha: float = 0.05,
    random_level: float = 0.9,
    symmetric_gap: float = 0.05,
) -> CyclicityResult:
    """Entropies, cycle type and preferred path of one transition matrix."""
    n = np.asarray(counts, dtype=float)
    e_post, e_pre, e_max = entropies(n, embedded=embedded)
    rows, cols = n.sum(axis=1), n.sum(axis=0)
    tot = n.sum()
    post = float((rows * e_post).sum() / tot) if tot else float("nan")
    pre = float((cols * e_pre).sum() / tot) if tot else float("nan")
    rp, rq = (post / e_max, pre / e_max) if e_max > 0 else (np.nan, np.nan)
    if not (first_order_p < alpha) or min(rp, rq) > random_level:
        kind = "random"
    elif abs(rp - rq) < symmetric_gap:
        kind = "symmetric"
    elif rp < rq:
        kind = "asymmetric (upward ordered)"
    else:
        kind = "asymmetric (downward ordered)"
    path, is_cycle = preferred_path(residuals, significant, codes)
    return CyclicityResult(tuple(codes), e_post, e_pre, e_max, post, pre, kind, path, is_cycle)
