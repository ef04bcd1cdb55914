"""Parasequence-scale cycles from beds, and the stacking context of every bed.

A *cycle* (a parasequence, or its carbonate or mixed-system analogue) is a
shallowing-upward succession of beds bounded at its base by a flooding surface:
an abrupt upward deepening (Van Wagoner et al. 1990, Siliciclastic sequence
stratigraphy in well logs, cores and outcrops, AAPG Methods in Exploration 7;
Catuneanu et al. 2009, Earth-Science Reviews 92:1-33). What counts as a flooding
step comes from the facies scheme: a rise of the proximality rank of at least
``flooding_step`` ranks between a bed and the bed below, or a bed whose facies is
marked ``cycle_base`` (e.g. a transgressive lag). Beds of unknown rank never
start a cycle.

Systems tracts are defined by how cycles stack (progradational, aggradational,
retrogradational), so the tract model reads, for every bed, the stacking of its
cycle against the cycles below and above and the trend of proximality around it.
Everything here works on beds of many successions concatenated base to top
(``lengths`` gives the number of beds of each), with vectorised numpy
operations, never a loop over cores.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from faciesseq.io.contacts import SHARP_WORDS

__all__ = [
    "CONTEXT_FEATURES",
    "CYCLE_WINDOW_HALF_WIDTH",
    "POSITION_HALF_WIDTH",
    "TREND_HALF_WIDTH",
    "Cycles",
    "bed_context",
    "beds_per_cycle",
    "cycle_inputs",
    "cycle_window",
    "cycle_window_columns",
    "exposure_context",
    "facies_to_beds",
    "find_cycles",
]

#: Beds on each side of a bed read by the ``trend`` and ``position`` context
#: features (:func:`bed_context`).
TREND_HALF_WIDTH = 3
POSITION_HALF_WIDTH = 8

#: Context features of a bed read by the tract model (see :func:`bed_context`).
CONTEXT_FEATURES = (
    "cycle_stacking",
    "base_shift",
    "trend",
    "position",
    "cycle_sharpness",
    "local_position",
    "cycle_amplitude",
    "setting",
    "exposure",
)


def sharp_contacts(contacts) -> np.ndarray:
    """``(n,)`` 1.0 where a contact type reads as sharp or erosional, 0.0 where it
    is another known type, ``NaN`` where it is missing."""
    out = np.full(len(contacts), np.nan)
    for i, c in enumerate(contacts):
        if isinstance(c, str) and c.strip():
            text = c.strip().lower()
            out[i] = float(any(w in text for w in SHARP_WORDS))
    return out


def _starts(lengths: np.ndarray) -> np.ndarray:
    """Boolean ``(n,)``: True at the first bed of each succession."""
    n = int(np.sum(lengths))
    first = np.zeros(n, dtype=bool)
    offsets = np.r_[0, np.cumsum(lengths)[:-1]][np.asarray(lengths) > 0]
    first[offsets] = True
    return first


def _fill_unknown(ranks: np.ndarray, lengths: np.ndarray) -> np.ndarray:
    """Ranks with unknown values replaced by the last known rank below (or above)."""
    r = np.asarray(ranks, dtype=float).copy()
    n = len(r)
    if n == 0:
        return r
    seq = np.repeat(np.arange(len(lengths)), lengths)
    idx = np.where(np.isfinite(r), np.arange(n), -1)
    idx = np.maximum.accumulate(idx)
    ok = (idx >= 0) & (seq[np.maximum(idx, 0)] == seq)
    r = np.where(ok, r[np.maximum(idx, 0)], np.nan)
    # leading unknowns of a succession: the first known rank above
    ridx = np.where(np.isfinite(r), np.arange(n), n)
    ridx = np.minimum.accumulate(ridx[::-1])[::-1]
    ok = (ridx < n) & (seq[np.minimum(ridx, n - 1)] == seq)
    r = np.where(np.isfinite(r), r, np.where(ok, r[np.minimum(ridx, n - 1)], np.nan))
    return r


@dataclass(frozen=True)
class Cycles:
    """Cycles of concatenated successions.

    Attributes
    ----------
    bed_cycle
        ``(n_beds,)`` index of the cycle of every bed (cycles numbered upward,
        across all successions).
    lengths
        Number of cycles of each succession.
    base_rank, top_rank
        ``(n_cycles,)`` deepest and shallowest rank in the cycle (``NaN`` if
        no bed of it has a known rank).
    thickness
        ``(n_cycles,)`` sum of the bed thicknesses.
    """

    bed_cycle: np.ndarray
    lengths: np.ndarray
    base_rank: np.ndarray
    top_rank: np.ndarray
    thickness: np.ndarray

    @property
    def n_cycles(self) -> int:
        return len(self.base_rank)


def find_cycles(
    ranks: np.ndarray,
    lengths: np.ndarray,
    thickness: np.ndarray | None = None,
    flooding_step: float = 1.0,
    cycle_base: np.ndarray | None = None,
    nonmarine: np.ndarray | None = None,
) -> Cycles:
    """Cut successions into cycles at flooding surfaces.

    Parameters
    ----------
    ranks
        ``(n_beds,)`` proximality rank of each bed (0 = most landward; ``NaN``
        unknown), successions concatenated base to top.
    lengths
        Number of beds of each succession.
    thickness
        ``(n_beds,)`` bed thickness (depth units); ones if omitted.
    flooding_step
        Smallest upward rise of rank that counts as a flooding surface.
    cycle_base
        ``(n_beds,)`` bool, beds whose facies always start a cycle.
    nonmarine
        ``(n_beds,)`` 1 / 0 / ``NaN``: a marine bed on a nonmarine one starts a
        cycle (a transgressive surface is a flooding surface whatever the ranks).
    """
    lengths = np.asarray(lengths, dtype=np.int64)
    r = np.asarray(ranks, dtype=float)
    n = len(r)
    first = _starts(lengths)
    step = np.r_[np.nan, np.diff(r)] if n else np.zeros(0)
    with np.errstate(invalid="ignore"):
        new = first | (step >= flooding_step)
    if cycle_base is not None:
        new |= np.asarray(cycle_base, dtype=bool)
    if nonmarine is not None and n:
        setting = np.asarray(nonmarine, dtype=float)
        new[1:] |= (setting[1:] == 0) & (setting[:-1] == 1)
    bed_cycle = np.cumsum(new) - 1
    n_cycles = int(bed_cycle[-1] + 1) if n else 0
    seq = np.repeat(np.arange(len(lengths)), lengths)
    cyc_lengths = np.bincount(seq[new], minlength=len(lengths)) if n else np.zeros_like(lengths)
    th = np.ones(n) if thickness is None else np.asarray(thickness, dtype=float)
    known = np.isfinite(r)
    base = np.full(n_cycles, -np.inf)
    top = np.full(n_cycles, np.inf)
    np.maximum.at(base, bed_cycle[known], r[known])
    np.minimum.at(top, bed_cycle[known], r[known])
    base[~np.isfinite(base)] = np.nan
    top[~np.isfinite(top)] = np.nan
    total = np.bincount(bed_cycle, weights=np.nan_to_num(th), minlength=n_cycles)
    return Cycles(bed_cycle, cyc_lengths, base, top, total)


def beds_per_cycle(
    ranks: np.ndarray,
    lengths: np.ndarray,
    cycle_base: np.ndarray | None = None,
    nonmarine: np.ndarray | None = None,
) -> float:
    """Mean number of beds in a cycle, the cycles cut as :func:`bed_context` cuts
    them (arguments as there); 1 for no beds."""
    lengths = np.asarray(lengths, dtype=np.int64)
    n = int(lengths.sum())
    if n == 0:
        return 1.0
    cycles = find_cycles(_fill_unknown(ranks, lengths), lengths, None, 1.0, cycle_base, nonmarine)
    return n / max(cycles.n_cycles, 1)


def _neighbour(
    values: np.ndarray, lengths: np.ndarray, shift: int, position: np.ndarray | None = None
) -> np.ndarray:
    """``values`` of the cycle ``shift`` places up (+) or down (-) in the same succession
    (``NaN`` past either end of it), by slices: the rows of a succession are consecutive.
    ``position``: :func:`_positions` of ``lengths``, where already made."""
    n = len(values)
    out = np.full(n, np.nan)
    k = abs(int(shift))
    if k == 0:
        out[:] = values
        return out
    if k >= n:
        return out
    position = _positions(lengths) if position is None else position
    # rows i and i + k lie in one succession where row i + k is k or more rows into it
    same = position[k:] >= k
    if shift > 0:
        out[: n - k] = np.where(same, values[k:], np.nan)
    else:
        out[k:] = np.where(same, values[: n - k], np.nan)
    return out


def _positions(lengths: np.ndarray) -> np.ndarray:
    """Each row's place in its succession (0 at its first row)."""
    lengths = np.asarray(lengths, dtype=np.int64)
    starts = np.cumsum(lengths) - lengths
    return np.arange(int(lengths.sum())) - np.repeat(starts, lengths)


def _window(values: np.ndarray, lengths: np.ndarray, half: int, how: str) -> np.ndarray:
    """Running min or max over ``half`` neighbours on each side, within a succession."""
    out = values.copy()
    position = _positions(lengths)
    for k in range(1, half + 1):
        for shift in (-k, k):
            other = _neighbour(values, lengths, shift, position)
            out = np.fmin(out, other) if how == "min" else np.fmax(out, other)
    return out


def _slope(values: np.ndarray, lengths: np.ndarray, half: int) -> np.ndarray:
    """Least-squares slope over ``half`` neighbours on each side (Furui 1986 delta),
    edges padded with the nearest value of the succession."""
    num = np.zeros(len(values))
    den = 0.0
    position = _positions(lengths)
    for k in range(1, half + 1):
        up = _neighbour(values, lengths, k, position)
        down = _neighbour(values, lengths, -k, position)
        up = np.where(np.isfinite(up), up, values)
        down = np.where(np.isfinite(down), down, values)
        num += k * (up - down)
        den += 2 * k * k
    return num / den


def bed_context(
    ranks: np.ndarray,
    lengths: np.ndarray,
    thickness: np.ndarray | None = None,
    flooding_step: float = 1.0,
    cycle_base: np.ndarray | None = None,
    trend_half_width: int = TREND_HALF_WIDTH,
    position_half_width: int = POSITION_HALF_WIDTH,
    sharp: np.ndarray | None = None,
    nonmarine: np.ndarray | None = None,
    exposed: np.ndarray | None = None,
) -> dict[str, np.ndarray]:
    """Stacking context of every bed, ``name -> (n_beds,)`` floats (``NaN`` unknown).

    - ``cycle_stacking``: the change of the cycle's shallowest rank against the
      cycle below plus that of the cycle above against it, halved (positive =
      tops deepen upward: retrogradational stacking; negative = progradational;
      near zero = aggradational);
    - ``base_shift``: the bed's cycle's deepest rank minus that of the cycle
      below (a downward shift of the whole cycle marks forced regression);
    - ``trend``: least-squares slope of rank over ``trend_half_width`` beds on
      each side (ranks per bed, positive = deepening upward);
    - ``position``: where the bed's smoothed rank lies between the shallowest
      and the deepest smoothed rank within ``position_half_width`` beds on each
      side (0 = shallowest, 1 = deepest): the turnarounds where common practice
      puts the maximum flooding surface and the sequence boundary;
    - ``local_position``: the same between the shallowest and the deepest rank
      of the bed's own cycle and the cycles next to it (bed-level detail that
      places a boundary inside a cycle);
    - ``cycle_sharpness``: the fraction of sharp or erosional contacts among the
      beds of the cycle (``sharp``: 1/0/NaN per bed, :func:`sharp_contacts`;
      forced-regressive cycles are sharp-based and skip facies);
    - ``cycle_amplitude``: the cycle's deepest rank minus its shallowest (how far
      it shallows: a full parasequence against a thin, shallow one);
    - ``setting``: 1 where the bed's facies was laid down above the shoreline
      (``nonmarine``: 1/0/NaN per bed, from the scheme), 0 where below it;
    - ``exposure``: 2 where the bed's facies records the site's subaerial exposure
      (``exposed``: 1 exposure / 0 marine / NaN other, per bed, from the scheme), 1
      where a marine bed lies on such a bed (a transgressive surface at its base), 0
      for another marine bed, NaN for other nonmarine or unknown beds
      (:func:`exposure_context`).
    """
    lengths = np.asarray(lengths, dtype=np.int64)
    r = _fill_unknown(ranks, lengths)
    cycles = find_cycles(r, lengths, thickness, flooding_step, cycle_base, nonmarine)
    top, base = cycles.top_rank, cycles.base_rank
    stacking = _cycle_stacking(cycles)
    shift = base - _neighbour(base, cycles.lengths, -1)
    position = _position(r, lengths, position_half_width)
    c = cycles.bed_cycle
    local_position = _cycle_window_position(r, c, cycles)
    sharpness = np.full(len(c), np.nan)
    if sharp is not None and len(c):
        known = np.isfinite(sharp)
        hits = np.bincount(c[known], sharp[known], minlength=cycles.n_cycles)
        seen = np.bincount(c[known], minlength=cycles.n_cycles)
        with np.errstate(invalid="ignore", divide="ignore"):
            sharpness = np.where(seen > 0, hits / np.maximum(seen, 1), np.nan)[c]
    return {
        "cycle_sharpness": sharpness,
        "local_position": local_position,
        "cycle_stacking": stacking[c] if len(c) else np.zeros(0),
        "base_shift": shift[c] if len(c) else np.zeros(0),
        "cycle_amplitude": (base - top)[c] if len(c) else np.zeros(0),
        "trend": _slope(r, lengths, trend_half_width),
        "position": position,
        "setting": np.full(len(r), np.nan) if nonmarine is None else np.asarray(nonmarine, float),
        "exposure": exposure_context(exposed, lengths, len(r)),
    }


def _cycle_stacking(cycles: Cycles) -> np.ndarray:
    """``(n_cycles,)`` the ``cycle_stacking`` of every cycle (:func:`bed_context`)."""
    top = cycles.top_rank
    below = top - _neighbour(top, cycles.lengths, -1)
    above = _neighbour(top, cycles.lengths, 1) - top
    both = np.vstack([below, above])
    counted = np.isfinite(both).sum(axis=0)
    with np.errstate(invalid="ignore"):
        return np.where(counted > 0, np.nansum(both, axis=0) / np.maximum(counted, 1), np.nan)


def _position(r: np.ndarray, lengths: np.ndarray, half: int) -> np.ndarray:
    """The ``position`` of every bed (:func:`bed_context`) from its filled ranks ``r``."""
    smooth = _running_mean(r, lengths, 2)
    low = _window(smooth, lengths, half, "min")
    high = _window(smooth, lengths, half, "max")
    span = high - low
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(span > 0, (smooth - low) / span, np.nan)


def exposure_context(exposed: np.ndarray | None, lengths: np.ndarray, n: int) -> np.ndarray:
    """``(n,)`` the ``exposure`` context of every bed (see :func:`bed_context`): 2 an
    exposure bed, 1 a marine bed on one (the bed below, in the same succession), 0
    another marine bed, ``NaN`` otherwise or where ``exposed`` is ``None``."""
    if exposed is None:
        return np.full(n, np.nan)
    x = np.asarray(exposed, dtype=float)
    below = np.r_[np.nan, x[:-1]] if n else x.copy()
    below[_starts(lengths)] = np.nan
    marine = np.where(below == 1, 1.0, 0.0)
    return np.where(x == 1, 2.0, np.where(x == 0, marine, np.nan))


def _cycle_window_position(ranks: np.ndarray, bed_cycle: np.ndarray, cycles: Cycles) -> np.ndarray:
    """Where each bed's rank lies between the shallowest and deepest rank of its own
    cycle and the cycles next to it (0 = shallowest, 1 = deepest)."""
    if len(ranks) == 0:
        return np.zeros(0)
    lo = _window(cycles.top_rank, cycles.lengths, 1, "min")[bed_cycle]
    hi = _window(cycles.base_rank, cycles.lengths, 1, "max")[bed_cycle]
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(hi > lo, (ranks - lo) / (hi - lo), np.nan)


def _running_mean(values: np.ndarray, lengths: np.ndarray, half: int) -> np.ndarray:
    """Mean of the known values over ``half`` neighbours on each side, within a succession."""
    total = np.nan_to_num(values)
    count = np.isfinite(values).astype(float)
    position = _positions(lengths)
    for k in range(1, half + 1):
        for shift in (-k, k):
            other = _neighbour(values, lengths, shift, position)
            ok = np.isfinite(other)
            total += np.where(ok, other, 0.0)
            count += ok
    with np.errstate(invalid="ignore"):
        return np.where(count > 0, total / count, np.nan)


def cycle_inputs(
    fac: np.ndarray,
    ranks: np.ndarray | None,
    cycle_base: np.ndarray | None = None,
    nonmarine: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
    """Per-facies ranks, cycle marks and settings spread to beds (``fac``: facies
    index of every bed, negative unknown): ``(ranks, cycle_base, nonmarine)`` per bed
    for :func:`faciesseq.cycles.find_cycles` and :func:`~faciesseq.cycles.bed_context`
    (``NaN`` / ``False`` where a bed's facies is unknown; ``None`` stays ``None``).

    A facies marked ``cycle_base`` marks the lowest bed of a run of it only: where a
    description splits one lag or exposure surface into several intervals (the
    described intervals that fits with labels read), it starts one cycle, as it does
    on amalgamated beds. The first bed of a succession starts a cycle anyway."""
    known = fac >= 0
    bed_ranks = _per_bed(ranks, fac, known, np.nan)
    starts = None if cycle_base is None else _per_bed(cycle_base, fac, known, False)
    if starts is not None and len(fac) > 1:
        starts[1:] &= fac[1:] != fac[:-1]
    setting = None if nonmarine is None else _per_bed(nonmarine, fac, known, np.nan)
    return bed_ranks, starts, setting


def facies_to_beds(values: np.ndarray, fac: np.ndarray) -> np.ndarray:
    """A per-facies number spread to beds (``fac``: facies index of every bed,
    negative unknown), ``NaN`` where a bed's facies is unknown."""
    return _per_bed(values, fac, fac >= 0, np.nan)


def _per_bed(values, fac: np.ndarray, known: np.ndarray, fill) -> np.ndarray:
    out = np.full(len(fac), fill, dtype=type(fill) if isinstance(fill, bool) else float)
    if values is not None:
        out[known] = np.asarray(values, dtype=out.dtype)[fac[known]]
    return out


#: Cycles on each side in :func:`cycle_window` (on the blind generator's tuning seeds 2
#: read 0.04 less than 3 with three labelled cores, 5 no more; benchmarks/tract_model.md).
CYCLE_WINDOW_HALF_WIDTH = 3


def cycle_window_columns(half_width: int = CYCLE_WINDOW_HALF_WIDTH) -> list[str]:
    """Names of the columns of :func:`cycle_window`, in order."""
    out = ["cycle top", "cycle base", "cycle log beds", "cycle log thickness", "place in cycle"]
    for k in range(-half_width, half_width + 1):
        if k:
            out += [f"cycle[{k:+d}] top - top", f"cycle[{k:+d}] base - base"]
            out.append(f"cycle[{k:+d}] log beds")
    return [*out, "trend", "position", "cycle_stacking"]


def cycle_window(
    ranks: np.ndarray,
    lengths: np.ndarray,
    thickness: np.ndarray | None = None,
    cycle_base: np.ndarray | None = None,
    nonmarine: np.ndarray | None = None,
    half_width: int = CYCLE_WINDOW_HALF_WIDTH,
) -> np.ndarray:
    """The stacking of the cycles around every bed, ``(n_beds, F)`` float32 (``NaN``
    unknown or past the end of a succession); columns :func:`cycle_window_columns`.

    The bed's cycle (cut as :func:`bed_context` cuts it): its shallowest and deepest
    rank, log number of beds and log thickness, and where the bed lies in it (0 base,
    1 top); for each of the ``half_width`` cycles below and above, its shallowest
    rank minus the bed's cycle's, its deepest rank minus the bed's cycle's, its log
    number of beds; then the bed's ``trend``, ``position`` and ``cycle_stacking``.
    Arguments as :func:`bed_context`, per bed.

    Why: a systems tract is a stack of parasequences read by how their tops and bases
    move (Van Wagoner et al. 1990), a pattern of several cycles that a window of a few
    beds does not reach. The stacking trees (:mod:`faciesseq.hmm.stacking_piece`) read
    it beside their window of beds: with three labelled cores, balanced accuracy on
    the blind generator's report seeds 0.690 -> 0.816 on average, the project's six
    scenarios 0.657 -> 0.675 (benchmarks/tract_model.md, "The cycles around each bed
    in the stacking trees").
    """
    lengths = np.asarray(lengths, dtype=np.int64)
    n = len(ranks)
    columns = cycle_window_columns(half_width)
    if n == 0:
        return np.zeros((0, len(columns)), dtype=np.float32)
    r = _fill_unknown(ranks, lengths)
    cycles = find_cycles(r, lengths, thickness, 1.0, cycle_base, nonmarine)
    c = cycles.bed_cycle
    beds = np.bincount(c, minlength=cycles.n_cycles).astype(float)
    log_beds = np.log(beds)
    with np.errstate(divide="ignore", invalid="ignore"):
        log_thickness = np.where(cycles.thickness > 0, np.log(cycles.thickness), np.nan)
    first = np.r_[0, np.cumsum(beds)[:-1]]
    place = (np.arange(n) - first[c] + 0.5) / beds[c]
    top, base = cycles.top_rank, cycles.base_rank
    cols = [top[c], base[c], log_beds[c], log_thickness[c], place]
    position = _positions(cycles.lengths)
    for k in range(-half_width, half_width + 1):
        if k:
            cols.append((_neighbour(top, cycles.lengths, k, position) - top)[c])
            cols.append((_neighbour(base, cycles.lengths, k, position) - base)[c])
            cols.append(_neighbour(log_beds, cycles.lengths, k, position)[c])
    trend = _slope(r, lengths, TREND_HALF_WIDTH)
    cols += [trend, _position(r, lengths, POSITION_HALF_WIDTH), _cycle_stacking(cycles)[c]]
    return np.column_stack(cols).astype(np.float32)
