"""Probabilities checked without labels: a parametric bootstrap of a fitted tract model.

Cores are simulated from the fitted model and decoded by it, and the temperature
that best matches their known tracts is kept (Efron & Tibshirani 1993, An
Introduction to the Bootstrap, ch. 6; temperature scaling,
:mod:`faciesseq.hmm.calibration`). Tract paths come from the fitted chain; each
run of one tract is filled with real parasequence-scale cycles of the training
cores, drawn by the fitted model's posterior probability of that tract
(:func:`resample_cycles`): the simulated cores keep the stacking inside each
cycle, and are as ambiguous as the model finds the real ones. The stacking
context of the simulated beds is computed as for real cores, so the evidence
that overlapping windows count more than once is kept and corrected; a model
whose idea of a tract is not the geologist's is not.

Measured against simpler simulations (benchmarks/tract_model.md, section "The
setting of a bed"): facies drawn from a per-tract facies chain lose the
parasequences and left the model too unsure of itself; runs of real beds that
the model reads as one tract (argmax, not posterior draws) left it too sure.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.hmm.encoding import EncodedBeds

__all__ = ["CyclePool", "calibrate_by_simulation", "resample_cycles"]


def calibrate_by_simulation(model, beds: EncodedBeds, tables, rng) -> dict:
    """Temperature from a parametric bootstrap: cores simulated from the fitted
    model are decoded, and the temperature that best matches their known tracts
    is kept. Tract paths come from the fitted chain; each run of one tract is
    filled with real parasequence-scale cycles drawn by their posterior
    probability of that tract (:func:`resample_cycles`)."""
    from faciesseq.hmm.calibration import HeldOut, fit_temperature

    gamma = model._tract_posteriors(beds)
    cycles = CyclePool.of(_cycles(model, beds), gamma)
    chosen = _simulated_lengths(beds.lengths, rng)
    pool = _pool(tables)
    frames, truth = [], []
    for n in chosen:
        path = model.states_.state_tract[_chain_path(model.startprob_, model.transmat_, n, rng)]
        rows, kept = resample_cycles(path, cycles, rng)
        frame = pool.iloc[rows].reset_index(drop=True)
        if model.unit_ == "beds":
            keep = _new_facies(frame["facies"].to_numpy(object))
            frame, kept = frame[keep].reset_index(drop=True), kept[keep]
        frames.append(frame)
        truth.append(kept)
    sim = model._encode(frames)
    le = model._log_emission(model.emissions_, sim)
    held = HeldOut(
        le,
        sim.lengths,
        model.startprob_,
        model.transmat_,
        np.concatenate(truth),
        model.states_.state_tract,
    )
    result = fit_temperature([held])
    return {**result, "method": "parametric bootstrap", "simulated_successions": len(chosen)}


#: Beds simulated for the temperature: enough that the draw hardly moves it.
SIMULATED_BEDS = 20_000


def _simulated_lengths(lengths, rng) -> list[int]:
    """Lengths of the simulated successions: those of the training successions,
    drawn at random (again and again on a small database) up to
    :data:`SIMULATED_BEDS` beds."""
    lengths = np.asarray([int(n) for n in lengths if n > 0])
    chosen: list[int] = []
    total = 0
    while len(lengths) and total < SIMULATED_BEDS:
        for n in lengths[rng.permutation(len(lengths))]:
            chosen.append(int(n))
            total += int(n)
            if total >= SIMULATED_BEDS:
                break
    return chosen


def _cycles(model, beds: EncodedBeds) -> np.ndarray:
    """Cycle index of every training bed, cut as the model's context cuts them."""
    from faciesseq.cycles import cycle_inputs, find_cycles

    ranks, marks, setting = cycle_inputs(beds.facies, model.ranks_, *model._facies_marks())
    return find_cycles(ranks, beds.lengths, None, 1.0, marks, setting).bed_cycle


def _pool(tables) -> pd.DataFrame:
    columns = ["facies", "thickness", "contact"]
    return pd.concat([t[[c for c in columns if c in t.columns]] for t in tables], ignore_index=True)


def _new_facies(facies: np.ndarray) -> np.ndarray:
    """True where a bed's facies differs from the bed below (beds amalgamate otherwise)."""
    return np.r_[True, facies[1:] != facies[:-1]] if len(facies) else np.zeros(0, bool)


@dataclass(frozen=True)
class CyclePool:
    """The training cycles to draw from: beds per cycle, first bed of each, and per
    tract the cumulative drawing weight of each cycle (its mean posterior probability
    of that tract). Made once per calibration (a draw is then a search, not a pass
    over every bed: the passes cost half a fit at 10^6 beds)."""

    size: np.ndarray
    start: np.ndarray
    cdf: np.ndarray  # (n_tracts, n_cycles)

    @classmethod
    def of(cls, cycle: np.ndarray, gamma: np.ndarray) -> CyclePool:
        """``cycle``: cycle index of every bed (in order); ``gamma``: ``(n_beds,
        n_tracts)`` posterior tract probabilities."""
        n_cycles = int(cycle[-1]) + 1 if len(cycle) else 0
        size = np.bincount(cycle, minlength=n_cycles)
        start = np.r_[0, np.cumsum(size)[:-1]]
        weight = np.vstack(
            [np.bincount(cycle, gamma[:, s], n_cycles) for s in range(gamma.shape[1])]
        )
        cdf = np.cumsum(weight / np.maximum(size, 1) + 1e-12, axis=1)
        return cls(size, start, cdf)


def resample_cycles(path: np.ndarray, cycles: CyclePool, rng) -> tuple:
    """Rows of real beds filling a simulated tract path, and the path's tract per row.

    Every run of one tract in ``path`` is filled with whole real cycles (the
    last one cut to fit), each drawn with probability proportional to the mean
    posterior probability of that tract over its beds (:class:`CyclePool`):
    cycles the model is unsure of are drawn for several tracts, so the simulated
    cores are as ambiguous as the model finds the real ones, and the
    parasequences keep their inner order (a block bootstrap whose blocks are
    cycles; Kunsch 1989, Ann. Statist. 17:1217-1241).
    """
    size, start, cdf = cycles.size, cycles.start, cycles.cdf
    n_cycles = len(size)
    rows, kept = [], []
    bounds = np.flatnonzero(np.r_[True, path[1:] != path[:-1]])
    for a, b in zip(bounds, np.r_[bounds[1:], len(path)], strict=True):
        s, need = int(path[a]), int(b - a)
        # at most `need` cycles fill the run (each holds a bed or more)
        drawn = np.searchsorted(cdf[s], rng.random(need) * cdf[s, -1], side="right")
        drawn = np.minimum(drawn, n_cycles - 1)
        ends = np.cumsum(size[drawn])
        used = int(np.searchsorted(ends, need)) + 1
        for c, before in zip(drawn[:used], np.r_[0, ends[: used - 1]], strict=True):
            take = min(int(size[c]), need - int(before))
            rows.append(np.arange(take) + start[c])
        kept.append(np.full(need, s))
    return np.concatenate(rows), np.concatenate(kept)


def _chain_path(startprob, transmat, n, rng) -> np.ndarray:
    path = np.empty(n, dtype=np.int64)
    path[0] = rng.choice(len(startprob), p=startprob)
    cum = np.cumsum(transmat, axis=1)
    for t in range(1, n):
        path[t] = min(int(np.searchsorted(cum[path[t - 1]], rng.random())), len(startprob) - 1)
    return path
