"""A simple rule that reads only the deepening / shallowing trend of the facies ranks.

It is the baseline the tract model is compared with (``faciesseq validate``)
and the starting point of unsupervised EM. Rule (common practice of reading
stacking patterns; no fitted parameter):

1. the trend at each bed is the sign of the central rank difference
   ``rank[t+1] - rank[t-1]`` (one-sided at the ends; larger rank = deeper);
2. beds in a deepening run are the tract model's first *deepening* tract
   (TST by default);
3. a shallowing (or flat) run is split by position: its lower half is the
   tract that follows the deepening tract (HST), and, where the tract model has
   them, the next quarter the tract after that (FSST) and the last quarter the
   one after that (LST), so the split follows the cyclic order upward.
"""

from __future__ import annotations

import numpy as np

from faciesseq.scheme import TractModel

__all__ = ["trend_rule"]


def _trend(ranks: np.ndarray) -> np.ndarray:
    n = len(ranks)
    if n == 1:
        return np.zeros(1)
    r = ranks.copy()
    # hold the last known rank over unknown facies
    known = np.isfinite(r)
    if not known.any():
        return np.zeros(n)
    idx = np.where(known, np.arange(n), 0)
    np.maximum.accumulate(idx, out=idx)
    r = r[idx]
    first = np.argmax(known)
    r[:first] = r[first]
    d = np.empty(n)
    d[1:-1] = r[2:] - r[:-2]
    d[0] = r[1] - r[0]
    d[-1] = r[-1] - r[-2]
    return d


def trend_rule(ranks: np.ndarray, lengths: np.ndarray, tract_model: TractModel) -> np.ndarray:
    """Tract index (in ``tract_model.order``) of every bed by the trend rule.

    Parameters
    ----------
    ranks
        ``(n_beds,)`` proximality rank of each bed's facies (``NaN`` unknown),
        successions concatenated, each base to top.
    lengths
        Number of beds of each succession.
    tract_model
        Gives the tract order and each tract's trend.

    Returns
    -------
    ndarray of int, ``(n_beds,)``.
    """
    order = list(tract_model.order)
    trends = [tract_model.tract(t).trend for t in order]
    deep = trends.index("deepening") if "deepening" in trends else 0
    after = [order[(deep + k) % len(order)] for k in range(1, len(order))]
    shallow = [order.index(t) for t in after][:3] or [deep]
    out = np.empty(len(ranks), dtype=np.int64)
    start = 0
    for n in np.asarray(lengths, dtype=int):
        d = _trend(np.asarray(ranks[start : start + n], dtype=float))
        labels = np.empty(n, dtype=np.int64)
        is_deep = d > 0
        i = 0
        while i < n:
            j = i
            while j + 1 < n and is_deep[j + 1] == is_deep[i]:
                j += 1
            if is_deep[i]:
                labels[i : j + 1] = deep
            else:
                m = j - i + 1
                pos = (np.arange(m) + 0.5) / m
                cut = np.searchsorted([0.5, 0.75][: len(shallow) - 1], pos, side="right")
                labels[i : j + 1] = np.asarray(shallow)[cut]
            i = j + 1
        out[start : start + n] = labels
        start += n
    return out
