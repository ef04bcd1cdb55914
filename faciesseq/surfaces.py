"""Bounding surfaces: probabilities at every contact, per-depth curves, and picks.

The probability that a named surface lies at the contact between bed ``t``
(below) and bed ``t + 1`` (above) is the sum of the two-slice posteriors
``xi_t(i, j) = P(state_t = i, state_t+1 = j | core)`` (Rabiner 1989, eq. 37)
over the state pairs whose tracts form a boundary mapped to that surface by the
tract model (e.g. TST -> HST: maximum flooding surface). Transitions between
sub-states of one tract are not surfaces.

Depths here are in the core's units; contacts are listed in the order given.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.scheme import TractModel

__all__ = [
    "SurfacePicks",
    "boundary_probabilities",
    "pick_surfaces",
    "pick_table",
    "picks_frame",
    "slice_sums",
    "surface_codes",
    "surface_curves",
    "surface_names",
]


def surface_codes(tract_model: TractModel) -> tuple[str, ...]:
    """Distinct surface codes of the tract model, in order of first mention."""
    out: list[str] = []
    for s in tract_model.surfaces:
        if s.code not in out:
            out.append(s.code)
    return tuple(out)


def surface_names(tract_model: TractModel) -> dict[str, str]:
    """Surface code -> name (first name given to the code)."""
    names: dict[str, str] = {}
    for s in tract_model.surfaces:
        names.setdefault(s.code, s.name)
    return names


def surface_pair_mask(tract_model: TractModel, state_tract: np.ndarray) -> np.ndarray:
    """Boolean ``(n_surfaces, K, K)``: state pairs (lower, upper) that make each surface."""
    codes = surface_codes(tract_model)
    tracts = list(tract_model.order)
    K = len(state_tract)
    mask = np.zeros((len(codes), K, K), dtype=bool)
    for s in tract_model.surfaces:
        c = codes.index(s.code)
        lo = state_tract == tracts.index(s.lower)
        up = state_tract == tracts.index(s.upper)
        mask[c] |= lo[:, None] & up[None, :]
    return mask


def boundary_probabilities(
    xi: np.ndarray, tract_model: TractModel, state_tract: np.ndarray
) -> np.ndarray:
    """Probability of each surface at each contact.

    Parameters
    ----------
    xi
        Two-slice posteriors, ``(n_contacts, K, K)``, row = lower state.
    tract_model
        Gives the surfaces and the tract pairs they sit on.
    state_tract
        Tract index (in ``tract_model.order``) of every hidden state.

    Returns
    -------
    ndarray ``(n_contacts, n_surfaces)`` in the order of :func:`surface_codes`.
    """
    mask = surface_pair_mask(tract_model, state_tract).astype(float)
    if len(xi) == 0:
        return np.zeros((0, mask.shape[0]))
    return np.einsum("tij,sij->ts", xi, mask)


@dataclass(frozen=True)
class SurfacePicks:
    """Picks of one surface along one succession of contacts (index into the contacts)."""

    index: np.ndarray
    probability: np.ndarray
    low: np.ndarray
    high: np.ndarray


def pick_surfaces(
    probability: np.ndarray, threshold: float = 0.5, mass: float = 0.9, floor: float = 0.02
) -> SurfacePicks:
    """Pick a surface where its contact probability peaks, with an uncertainty interval.

    The contacts of a succession are cut into *clusters*: runs of contacts
    with probability at least ``floor``, split again at every local minimum
    inside a run (so two nearby peaks make two clusters). A cluster's
    probability mass is the expected number of such surfaces in it; where it
    reaches ``threshold``, the surface is picked at the cluster's most probable
    contact. The uncertainty interval is the narrowest run of contacts, grown
    from the pick towards the more probable neighbour, that holds ``mass`` of
    the cluster's probability (a highest-density interval along the core).
    Using the cluster mass, not the peak value alone, keeps a surface whose
    position is uncertain by a bed or two (probability shared between
    neighbouring contacts) from being missed.

    Parameters
    ----------
    probability
        ``(n_contacts,)`` probability of the surface at each contact, in order
        along the succession.
    threshold, mass, floor
        See above; all between 0 and 1.

    Returns
    -------
    SurfacePicks with contact indices of the picks, their probabilities (at
    the pick contact) and the contact indices of the interval ends.
    """
    p = np.asarray(probability, dtype=float)
    zones = surface_clusters(p, threshold, mass, floor)
    picks = [peak for _, _, peak, _, _ in zones]
    lows = [lo for _, _, _, lo, _ in zones]
    highs = [hi for _, _, _, _, hi in zones]
    probs = [p[peak] for peak in picks]
    as_int = lambda v: np.asarray(v, dtype=int)  # noqa: E731
    return SurfacePicks(as_int(picks), np.asarray(probs, dtype=float), as_int(lows), as_int(highs))


def surface_clusters(
    probability: np.ndarray, threshold: float = 0.5, mass: float = 0.9, floor: float = 0.02
) -> list[tuple[int, int, int, int, int]]:
    """The clusters :func:`pick_surfaces` picks from, as ``(a, b, peak, lo, hi)``.

    Contact indices: the cluster spans ``a..b``, its most probable contact is
    ``peak`` and its highest-density interval ``lo..hi``; only clusters whose
    probability mass reaches ``threshold`` are listed.
    """
    p = np.asarray(probability, dtype=float)
    n = len(p)
    out: list[tuple[int, int, int, int, int]] = []
    i = 0
    while i < n:
        if p[i] < floor:
            i += 1
            continue
        j = i
        while j + 1 < n and p[j + 1] >= floor:
            j += 1
        # split the run [i, j] at interior local minima
        cuts = [i]
        for k in range(i + 1, j):
            if p[k] < p[k - 1] and p[k] <= p[k + 1]:
                cuts.append(k)
        bounds = [*cuts, j + 1]
        for c in range(len(bounds) - 1):
            a, b = bounds[c], bounds[c + 1] - 1  # a valley contact starts the next cluster
            total = float(p[a : b + 1].sum())
            if total < threshold:
                continue
            peak = a + int(np.argmax(p[a : b + 1]))
            target = mass * total
            lo, hi, acc = peak, peak, p[peak]
            while acc < target - 1e-12 and (lo > a or hi < b):
                below = p[lo - 1] if lo > a else -1.0
                above = p[hi + 1] if hi < b else -1.0
                if below >= above:
                    lo -= 1
                    acc += p[lo]
                else:
                    hi += 1
                    acc += p[hi]
            out.append((a, b, peak, lo, hi))
        i = j + 1
    return out


def picks_frame(
    depth: np.ndarray,
    probabilities: np.ndarray,
    codes: tuple[str, ...],
    names: dict[str, str],
    segment: int,
    threshold: float = 0.5,
    mass: float = 0.9,
) -> pd.DataFrame:
    """Picks of every surface along one segment as a table (``CoreInterpretation.picks``).

    ``depth`` and ``probabilities`` (``(n_contacts, n_surfaces)``) may be in
    any consistent order along the segment; ``depth_top <= depth <= depth_base``.
    """
    rows = []
    for c, code in enumerate(codes):
        picks = pick_surfaces(probabilities[:, c], threshold, mass)
        for i, pr, lo, hi in zip(picks.index, picks.probability, picks.low, picks.high):
            ends = (float(depth[lo]), float(depth[hi]))
            rows.append(
                {
                    "surface": code,
                    "name": names.get(code, code),
                    "depth": float(depth[i]),
                    "probability": float(pr),
                    "depth_top": min(ends),
                    "depth_base": max(ends),
                    "segment": int(segment),
                }
            )
    columns = ["surface", "name", "depth", "probability", "depth_top", "depth_base", "segment"]
    return pd.DataFrame(rows, columns=columns)


def surface_curves(interpretation, step: float) -> pd.DataFrame:
    """Per-depth probability curves of every core on a regular grid, for plotting.

    One table for an :class:`~faciesseq.interpretation.Interpretation`: a
    ``core`` column and the columns of
    :meth:`~faciesseq.interpretation.CoreInterpretation.curves` (``depth``,
    ``p_<TRACT>``: the posterior of the bed at that depth; ``p_<SURFACE>``: the
    probability that the surface lies within the cell of height ``step``).
    """
    if not step > 0:
        from faciesseq.errors import ConfigError

        raise ConfigError(f"curve step must be positive, got {step!r}")
    frames = [core.curves(step).assign(core=core.core) for core in interpretation]
    if not frames:
        return pd.DataFrame(columns=["core", "depth"])
    out = pd.concat(frames, ignore_index=True)
    return out[["core", *[c for c in out.columns if c != "core"]]]


def pick_table(
    depth: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    surf: np.ndarray,
    first: np.ndarray,
    tract_model: TractModel,
    mass: float = 0.9,
    floor: float = 0.02,
) -> dict[str, np.ndarray]:
    """Surfaces picked where the decoded tract column changes, for many successions at once.

    Every change of tract between two beds is a pick of the surface the tract
    model puts on that boundary, so the picks form a sequence the tract graph
    allows and never contradict the column (e.g. no sequence boundary below a
    basal surface of forced regression of the same sequence). Its
    ``probability`` is the probability mass of that surface in its
    uncertainty interval: the contacts around the pick, out to the nearest
    local minimum or a contact below ``floor``, trimmed to the narrowest run
    that holds ``mass`` of it (the number that decided the pick; a
    highest-density interval along the core). ``p_contact`` is the
    probability at the pick contact alone.

    Parameters
    ----------
    depth, lower, upper
        The contacts, in depth order within each succession: their depth and
        the tract index (in ``tract_model.order``) decoded below and above.
    surf
        ``(n_contacts, n_surfaces)``: probability of each surface (order of
        :func:`surface_codes`) at every contact.
    first
        True at the first contact of each succession.

    Returns
    -------
    dict of arrays, one entry per pick in contact order: ``contact`` (row),
    ``surface`` (column of ``surf``), ``probability``, ``p_contact``,
    ``depth``, ``depth_top`` and ``depth_base``.
    """
    at = np.flatnonzero(lower != upper)
    surface = _surface_of_pairs(tract_model)[lower[at], upper[at]]
    at, surface = at[surface >= 0], surface[surface >= 0]
    codes = surface_codes(tract_model)
    code = np.array([codes.index(s.code) for s in tract_model.surfaces], dtype=np.int64)[surface]
    names = np.array([s.name for s in tract_model.surfaces], dtype=object)[surface]
    n = len(surf)
    column = np.ascontiguousarray(surf.T).reshape(-1)  # each surface's contacts in a row
    lo, hi = _falling_runs(surf, first, floor)
    offset = code * n
    a, b = _narrowest(column, offset + at, offset + lo[at, code], offset + hi[at, code], mass)
    ends = np.stack([depth[a - offset], depth[b - offset]])
    return {
        "contact": at,
        "surface": code,
        "name": names,
        "probability": np.minimum(1.0, slice_sums(column, a, b - a + 1)),
        "p_contact": surf[at, code],
        "depth": depth[at],
        "depth_top": ends.min(axis=0),
        "depth_base": ends.max(axis=0),
    }


def _surface_of_pairs(tract_model: TractModel) -> np.ndarray:
    """``(n_tracts, n_tracts)``: the surface (index in ``tract_model.surfaces``) of each
    (lower, upper) pair of tracts, -1 where the pair is no surface."""
    tracts = list(tract_model.order)
    out = np.full((len(tracts), len(tracts)), -1, dtype=np.int64)
    for k, surface in reversed(list(enumerate(tract_model.surfaces))):  # the first one given
        out[tracts.index(surface.lower), tracts.index(surface.upper)] = k
    return out


def _falling_runs(p: np.ndarray, first: np.ndarray, floor: float) -> tuple[np.ndarray, np.ndarray]:
    """``(lo, hi)``, each ``(n_contacts, n_surfaces)``: the run of contacts around each
    contact that falls away from it down to ``floor``, within its succession."""
    n = len(p)
    rows = np.arange(n)[:, None]
    last = np.r_[first[1:], True] if n else first
    above = np.vstack([p[:1], p[:-1]])  # the contact before, in depth order
    below = np.vstack([p[1:], p[-1:]])
    left = ~first[:, None] & (floor <= above) & (above <= p)
    right = ~last[:, None] & (floor <= below) & (below <= p)
    lo = np.maximum.accumulate(np.where(left, 0, rows), axis=0)
    hi = np.minimum.accumulate(np.where(right, n, rows)[::-1], axis=0)[::-1]
    return lo, hi


def _narrowest(
    p: np.ndarray, at: np.ndarray, lo: np.ndarray, hi: np.ndarray, mass: float
) -> tuple[np.ndarray, np.ndarray]:
    """Grow each run from ``at`` towards the more probable neighbour, within ``lo..hi``,
    until it holds ``mass`` of ``lo..hi``; all runs one step at a time, a run that has
    stopped growing set aside (it never grows again)."""
    target = mass * slice_sums(p, lo, hi - lo + 1)
    a, b = at.copy(), at.copy()
    growing = np.arange(len(at))
    while True:
        x, y, low, high = a[growing], b[growing], lo[growing], hi[growing]
        grow = (slice_sums(p, x, y - x + 1) < target[growing]) & ((x > low) | (y < high))
        if not grow.any():
            return a, b
        growing, x, y, low, high = growing[grow], x[grow], y[grow], low[grow], high[grow]
        left = np.where(x > low, p[np.maximum(x - 1, 0)], -1.0)
        right = np.where(y < high, p[np.minimum(y + 1, len(p) - 1)], -1.0)
        a[growing] = x - (left >= right)
        b[growing] = y + (left < right)


def slice_sums(values: np.ndarray, start: np.ndarray, length: np.ndarray) -> np.ndarray:
    """``values[start[k] : start[k] + length[k]].sum()`` for every k, to the last bit.

    numpy sums a contiguous run of fewer than 8 numbers one by one, and up to
    128 numbers in 8 running sums joined pairwise; this repeats those steps for
    all runs at once, each kind of run on its own rows (longer runs are summed by
    numpy itself).
    """
    start, length = np.asarray(start, dtype=np.int64), np.asarray(length, dtype=np.int64)
    out = np.zeros(len(start))
    short = np.flatnonzero(length < 8)
    out[short] = _one_by_one(values, start[short], length[short])
    mid = np.flatnonzero((length >= 8) & (length <= 128))
    out[mid] = _eight_lanes(values, start[mid], length[mid])
    for k in np.flatnonzero(length > 128):
        out[k] = values[start[k] : start[k] + length[k]].sum()
    return out


def _one_by_one(values: np.ndarray, start: np.ndarray, length: np.ndarray) -> np.ndarray:
    """Sums of runs of fewer than 8 numbers, added one by one as numpy adds them."""
    out = np.zeros(len(start))
    for k in range(int(length.max(initial=0))):
        use = np.flatnonzero(k < length)
        out[use] += values[start[use] + k]
    return out


def _eight_lanes(values: np.ndarray, start: np.ndarray, length: np.ndarray) -> np.ndarray:
    """Sums of runs of 8 to 128 numbers: 8 running sums joined pairwise, then the rest
    added one by one, as numpy sums them."""
    last = len(values) - 1
    pick = lambda k, use: np.where(use, values[np.minimum(start + k, last)], 0.0)  # noqa: E731
    whole = length - length % 8
    lanes = [values[start + j] for j in range(8)]
    for i in range(8, int(whole.max(initial=0)), 8):
        lanes = [r + pick(i + j, i < whole) for j, r in enumerate(lanes)]
    joined = ((lanes[0] + lanes[1]) + (lanes[2] + lanes[3])) + (
        (lanes[4] + lanes[5]) + (lanes[6] + lanes[7])
    )
    for k in range(7):
        joined += pick(whole + k, k < length - whole)
    return joined
