"""Decoded sequence-stratigraphic interpretations: results of the tract model.

An :class:`Interpretation` holds, per core, the most likely tract of every bed
(Viterbi), the posterior probability of each tract per bed, the probability of
each named surface at every boundary between beds, and the picked surfaces.
Tables here are in **depth order** (shallowest first), as a core log is drawn.

These are plain results objects: the model fills them, ``report`` formats them.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

__all__ = ["CoreInterpretation", "Interpretation", "core_summary"]


@dataclass(frozen=True)
class CoreInterpretation:
    """The interpretation of one core.

    Attributes
    ----------
    core, units
        Core identifier and depth units.
    tracts
        Tract codes in the tract model's order; ``beds`` has a ``p_<TRACT>``
        column for each.
    surfaces
        Surface codes (e.g. ``"MFS"``); ``boundaries`` has a ``p_<SURFACE>``
        column for each.
    beds
        Depth order: ``segment``, ``top``, ``base``, ``thickness``, ``facies``,
        any bed attributes, ``tract`` (most likely tract column, Viterbi) and the
        ``p_<TRACT>`` posteriors (each row sums to 1).
    boundaries
        One row per boundary between two successive beds of one segment, depth
        order: ``segment``, ``depth`` (the contact), ``lower_tract`` and
        ``upper_tract`` (Viterbi on either side) and ``p_<SURFACE>``: the
        posterior probability that the named surface lies at this contact (sum
        of two-slice posteriors over the tract pairs mapped to it).
    picks
        Picked surfaces: ``surface`` (code), ``name``, ``depth``,
        ``probability`` (at the pick), ``depth_top`` and ``depth_base`` (an
        uncertainty interval around the pick), ``segment``.
    log_likelihood
        Log-likelihood of the core under the model (sum over its segments).
    """

    core: str
    units: str
    tracts: tuple[str, ...]
    surfaces: tuple[str, ...]
    beds: pd.DataFrame
    boundaries: pd.DataFrame
    picks: pd.DataFrame
    log_likelihood: float

    def curves(self, step: float) -> pd.DataFrame:
        """Per-depth probability curves on a regular grid, for plotting.

        Tract curves take the posterior of the bed at each depth. Surface
        curves give, per cell of height ``step``, the probability that the
        surface lies within the cell (boundary probabilities summed per cell).
        Cells in gaps are NaN.
        """
        beds = self.beds
        if len(beds) == 0:
            return pd.DataFrame(columns=["depth", *[f"p_{t}" for t in self.tracts]])
        top, base = float(beds["top"].min()), float(beds["base"].max())
        n = max(1, int(np.ceil((base - top) / step)))
        edges = top + np.arange(n + 1) * step
        centre = (edges[:-1] + edges[1:]) / 2
        out = pd.DataFrame({"depth": centre})
        b_top = beds["top"].to_numpy(float)
        b_base = beds["base"].to_numpy(float)
        order = np.argsort(b_top)
        idx = order[np.clip(np.searchsorted(b_top[order], centre, side="right") - 1, 0, None)]
        inside = (centre >= b_top[idx]) & (centre < b_base[idx])
        for t in self.tracts:
            values = beds[f"p_{t}"].to_numpy(float)[idx]
            out[f"p_{t}"] = np.where(inside, values, np.nan)
        depth = self.boundaries["depth"].to_numpy(float) if len(self.boundaries) else np.zeros(0)
        cell = np.clip(np.searchsorted(edges, depth, side="right") - 1, 0, n - 1)
        for s in self.surfaces:
            acc = np.zeros(n)
            if len(depth):
                np.add.at(acc, cell, self.boundaries[f"p_{s}"].to_numpy(float))
            out[f"p_{s}"] = np.where(inside, np.minimum(acc, 1.0), np.nan)
        return out


def _base_to_top(beds: pd.DataFrame) -> tuple[pd.DataFrame, np.ndarray]:
    """Beds of one core base to top, and the number of beds of each segment in that order."""
    upward = beds.iloc[::-1]
    if "segment" not in upward.columns or not len(upward):
        return upward, np.array([len(upward)], dtype=np.int64)
    seg = upward["segment"].to_numpy()
    starts = np.flatnonzero(np.r_[True, seg[1:] != seg[:-1]])
    return upward, np.diff(np.r_[starts, len(seg)]).astype(np.int64)


def _thickness(beds: pd.DataFrame) -> np.ndarray:
    if "thickness" in beds.columns:
        return pd.to_numeric(beds["thickness"], errors="coerce").to_numpy(float)
    return (beds["base"] - beds["top"]).to_numpy(float)


def _cycle_count(beds: pd.DataFrame, ranks: Mapping[str, float]) -> int:
    """Parasequence-scale cycles of one core (:func:`faciesseq.cycles.find_cycles`)."""
    from faciesseq.cycles import find_cycles

    upward, lengths = _base_to_top(beds)
    r = upward["facies"].astype(str).map(ranks).to_numpy(dtype=float, na_value=np.nan)
    return find_cycles(r, lengths, _thickness(upward)).n_cycles


def _mean_decoded_probability(beds: pd.DataFrame, tracts: tuple[str, ...]) -> float:
    """Mean over beds of the posterior probability of each bed's decoded tract."""
    if not len(beds):
        return float("nan")
    p = beds[[f"p_{t}" for t in tracts]].to_numpy(float)
    which = pd.Index(tracts).get_indexer(beds["tract"].astype(str))
    return float(np.mean(p[np.arange(len(beds)), which]))


def core_summary(
    core: CoreInterpretation, ranks: Mapping[str, float] | None = None
) -> dict[str, object]:
    """One well in a line: thickness per tract, cycles, picks, mean probability.

    Parameters
    ----------
    core
        A decoded core.
    ranks
        Proximality rank of each facies code (the scheme's); without it the
        number of cycles is left out.

    Returns
    -------
    dict
        ``core``, ``units``, ``thickness`` (tract -> summed thickness of its
        beds, in the core's units), ``cycles`` (parasequence-scale cycles cut
        at flooding surfaces, Van Wagoner et al. 1990; only with ``ranks``),
        ``picks`` (surface picks) and ``mean_probability`` (mean over beds of
        the probability of the decoded tract).
    """
    beds = core.beds
    which = pd.Index(core.tracts).get_indexer(beds["tract"].astype(str))
    th = _thickness(beds)
    ok = (which >= 0) & ~np.isnan(th)
    totals = np.bincount(which[ok], th[ok], minlength=len(core.tracts))
    out: dict[str, object] = {
        "core": core.core,
        "units": core.units,
        "thickness": {t: float(totals[k]) for k, t in enumerate(core.tracts)},
    }
    if ranks is not None:
        out["cycles"] = _cycle_count(beds, ranks)
    out["picks"] = len(core.picks)
    out["mean_probability"] = _mean_decoded_probability(beds, core.tracts)
    return out


@dataclass(frozen=True)
class Interpretation:
    """Interpretations of several cores, and the tables ``decode`` writes."""

    cores: Mapping[str, CoreInterpretation]
    tracts: tuple[str, ...]
    surfaces: tuple[str, ...]
    meta: Mapping[str, object] = field(default_factory=dict)

    def __getitem__(self, core: str) -> CoreInterpretation:
        return self.cores[core]

    @property
    def probabilities_checked(self) -> bool:
        """Whether the model's probabilities were checked against known tracts
        (``meta["probabilities_checked"]``, set by ``TractHMM.decode``; false
        where no model said so)."""
        return bool(self.meta.get("probabilities_checked", False))

    @property
    def probabilities_note(self) -> str:
        """One line on whether and how the probabilities were checked."""
        note = self.meta.get("probabilities_note") or (
            "Tract and surface probabilities were not checked against known tracts."
        )
        return " ".join(str(note).split())  # one line, whatever the model file held

    def __iter__(self):
        return iter(self.cores.values())

    def __len__(self) -> int:
        return len(self.cores)

    def tracts_table(self) -> pd.DataFrame:
        """``core, top, base, facies, tract, p_<TRACT>...``, depth order within cores."""
        columns = ["core", "top", "base", "facies", "tract", *[f"p_{t}" for t in self.tracts]]
        frames = [c.beds.assign(core=c.core)[columns] for c in self if len(c.beds)]
        return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame(columns=columns)

    def surfaces_table(self) -> pd.DataFrame:
        """``core, depth, surface, probability, picked``: every contact and surface.

        One row per (contact, surface code); ``picked`` is true where the
        surface was picked at that contact.
        """
        columns = ["core", "depth", "surface", "probability", "picked"]
        cores = [c for c in self if len(c.boundaries)]
        if not cores:
            return pd.DataFrame(columns=columns)
        parts: dict[str, list[np.ndarray]] = {c: [] for c in columns[:4]}
        for c in cores:
            n, codes = len(c.boundaries), np.array(c.surfaces, dtype=object)
            parts["core"].append(np.full(n * len(codes), c.core, dtype=object))
            parts["depth"].append(np.repeat(c.boundaries["depth"].to_numpy(float), len(codes)))
            parts["surface"].append(np.tile(codes, n))
            p = c.boundaries[[f"p_{s}" for s in c.surfaces]].to_numpy(float)
            parts["probability"].append(p.reshape(-1))
        table = pd.DataFrame({k: np.concatenate(v) for k, v in parts.items()})
        picks = self.picks_table()
        key = [table["core"], table["surface"], table["depth"].round(9)]
        picked = [picks["core"], picks["surface"], picks["depth"].astype(float).round(9)]
        table["picked"] = pd.MultiIndex.from_arrays(key).isin(pd.MultiIndex.from_arrays(picked))
        return table

    def picks_table(self) -> pd.DataFrame:
        """All picks, with a ``core`` column first."""
        frames = [c.picks.assign(core=c.core) for c in self if len(c.picks)]
        if not frames:
            return pd.DataFrame(
                columns=[
                    "core",
                    "surface",
                    "name",
                    "depth",
                    "probability",
                    "depth_top",
                    "depth_base",
                    "segment",
                ]
            )
        out = pd.concat(frames, ignore_index=True)
        return out[["core", *[c for c in out.columns if c != "core"]]]
