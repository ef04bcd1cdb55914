"""The sample step of a facies log read where each sample lies: gaps and changes of step.

A sampled facies log is usually logged at one step, but not always: a core described
at 0.5 ft and then, below some depth, at 0.25 ft is one succession whose step
changes part-way. :func:`read_spacing` reads each depth spacing against the usual
step of the samples around it, not against the core's modal step, so that such a
log keeps its coarser stretch whole (no spacing of it a gap) while one spacing far
larger than those around it, one missing sample included, is still a gap.

The usual step around a spacing is the median of two one-sided windows of
:data:`STEP_WINDOW` spacings each, the spacing and the ten above it, the spacing and
the ten below it (fewer at the ends of the core), so the sampling on each side is
read on its own. A window of 11 is short enough that a change of step is found
within a few feet of where it happens, and long enough that its median is the
usual step while up to 5 of its 11 spacings are gaps. A single centred window
would not do: at a change, its median takes the step of whichever side holds more
of it, and the last spacings of the coarser side would be read as gaps.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from faciesseq.core import DEPTH_TOL

__all__ = [
    "GAP_FACTOR",
    "IRREGULAR_SHARE",
    "STEP_RUN",
    "STEP_WINDOW",
    "Spacing",
    "irregular",
    "modal_step",
    "off_steps",
    "read_spacing",
]

#: In the sample layout a depth step larger than this many sample spacings is a gap.
GAP_FACTOR = 1.5
#: A core's spacing is irregular when more than this share of its steps is not the usual step.
IRREGULAR_SHARE = 0.05
#: Spacings in each one-sided window whose median is the usual step (see the module).
STEP_WINDOW = 11
#: The fewest spacings in a row at one step that make a stretch of that step. A run
#: of another step is read at its own step only where it holds the majority of one of
#: the windows of each of its spacings, which 10 in a row do (the middle spacing of 9
#: has 5 of 11 on either side); a shorter run is read as gaps, as in a log of one step.
STEP_RUN = STEP_WINDOW - 1


@dataclass(frozen=True)
class Spacing:
    """How a core's depth spacings are read.

    Attributes
    ----------
    above, below
        Per spacing: the step of the samples above it and below it (depth units).
        Both are the core's modal step where the step does not change.
    gap
        Per spacing: a gap (larger than ``GAP_FACTOR`` times the larger of the two).
    changes
        The spacings at which a new stretch of another step begins (none where the
        step does not change).
    steps
        The step of each stretch, shallowest first (one where it does not change).
    """

    above: np.ndarray
    below: np.ndarray
    gap: np.ndarray
    changes: np.ndarray
    steps: np.ndarray

    @property
    def step(self) -> float:
        """The core's sample step: its finest stretch's (every sample of the core lies on
        a grid of it, so a LAS file at this step loses none of them)."""
        return float(self.steps.min())

    @property
    def usual(self) -> np.ndarray:
        """Per spacing: the step it is a gap against."""
        return np.maximum(self.above, self.below)

    def end_steps(self) -> tuple[float, float]:
        """The step of the top sample and of the base sample."""
        if len(self.gap) == 0:
            return self.step, self.step
        return float(self.below[0]), float(self.above[-1])


def modal_step(depth: np.ndarray) -> float | None:
    """The most common depth spacing of samples in depth order (ties: the smallest)."""
    steps = np.round(np.diff(depth), 6)
    steps = steps[steps > DEPTH_TOL]
    if len(steps) == 0:
        return None
    values, counts = np.unique(steps, return_counts=True)
    return float(values[np.argmax(counts)])


def off_steps(
    spacings: np.ndarray, usual: np.ndarray | float, finest: np.ndarray | float
) -> tuple[np.ndarray, np.ndarray]:
    """Which spacings differ from their usual step, and which are off the grid of the
    finest step beside them."""
    off_step = np.abs(spacings - usual) > 1e-6 * np.maximum(usual, 1.0)
    ratio = spacings / finest
    return off_step, np.abs(ratio - np.round(ratio)) > 1e-3


def irregular(off_step: np.ndarray, off_grid: np.ndarray) -> bool:
    """Spacings too often off their step, or any off the grid: not a regular log."""
    return bool(off_grid.any() or off_step.mean() > IRREGULAR_SHARE)


def read_spacing(spacings: np.ndarray, modal: float) -> Spacing:
    """Read a core's depth spacings (in depth order) as one step or as stretches.

    The log is read as stretches of different steps where, read against the usual
    step around each spacing (see the module), every run of one step is at least
    :data:`STEP_RUN` spacings long, there are two or more runs, and the log is
    regular (:func:`irregular`) against those steps. Otherwise it is read at the
    modal step ``modal`` throughout, as a log of one step (regular or not).
    """
    one = _one_step(spacings, modal)
    rounded = np.round(spacings, 6)
    if len(spacings) < 2 * STEP_RUN or not _modal_minority(rounded == modal, STEP_WINDOW):
        return one  # every window's median is the modal step: nothing to read locally
    above, below = _window_medians(rounded, STEP_WINDOW)
    if min(above.min(), below.min()) <= 0:
        return one
    nearer_above = np.abs(np.log(spacings / above)) <= np.abs(np.log(spacings / below))
    usual = np.where(nearer_above, above, below)
    gap = spacings > GAP_FACTOR * np.maximum(above, below) + DEPTH_TOL
    kept = np.flatnonzero(~gap)
    step_of = usual[kept]
    new = np.flatnonzero(step_of[1:] != step_of[:-1]) + 1
    starts = np.r_[0, new]
    if len(starts) < 2 or np.diff(np.r_[starts, len(kept)]).min() < STEP_RUN:
        return one
    if irregular(*off_steps(spacings, usual, np.minimum(above, below))):
        return one
    return Spacing(above, below, gap, changes=kept[new], steps=step_of[starts])


def _one_step(spacings: np.ndarray, step: float) -> Spacing:
    same = np.full(len(spacings), step)
    gap = spacings > GAP_FACTOR * step + DEPTH_TOL
    return Spacing(same, same, gap, changes=np.empty(0, dtype=np.intp), steps=np.array([step]))


def _modal_minority(modal: np.ndarray, size: int) -> bool:
    """Whether any window of :func:`_window_medians` holds the modal step at most half
    the time (else its median is the modal step): counted by running sums, cheaper
    than the medians, which most cores with gaps but one step need not compute."""
    count = np.r_[0, np.cumsum(modal)]
    end = np.arange(1, len(modal) + 1)
    start = np.maximum(end - size, 0)
    above = count[end] - count[start], end - start
    start = end - 1
    end = np.minimum(start + size, len(modal))
    below = count[end] - count[start], end - start
    return bool(np.any(2 * above[0] <= above[1]) or np.any(2 * below[0] <= below[1]))


def _window_medians(values: np.ndarray, size: int) -> tuple[np.ndarray, np.ndarray]:
    """The median of each value and the ``size - 1`` before it, and of each value and the
    ``size - 1`` after it (windows cut short at the ends; the lower median of an even
    count, so that every median is one of the values)."""
    pad = np.full(size - 1, np.nan)
    windows = np.sort(sliding_window_view(np.concatenate([pad, values, pad]), size), axis=1)
    held = size - np.isnan(windows).sum(axis=1)  # NaN sorts last
    medians = windows[np.arange(len(windows)), (held - 1) // 2]
    return medians[: len(values)], medians[size - 1 :]
