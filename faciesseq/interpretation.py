"""Decoded sequence-stratigraphic interpretations: results of the tract model.

An :class:`Interpretation` holds, per core, the most likely tract of every bed
(Viterbi), the posterior probability of each tract per bed, the probability of
each named surface at every boundary between beds, and the picked surfaces.
Tables here are in **depth order** (shallowest first), as a core log is drawn.

These are plain results objects: the model fills them, ``report`` formats them.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np
import pandas as pd

from faciesseq.core import take_text, text_column
from faciesseq.scheme import FaciesScheme

__all__ = [
    "CLAMPED",
    "PICK_COLUMNS",
    "TOPS_COLUMNS",
    "CoreInterpretation",
    "Interpretation",
    "core_summary",
    "held_beds",
]

#: Column of the beds of a decode that kept a geologist's labels (``decode
#: --keep-labels``): whether the bed was clamped to its label, its tract and
#: probabilities the label's, not the model's.
CLAMPED = "clamped"


def held_beds(beds: pd.DataFrame) -> np.ndarray:
    """Whether each bed was held at the geologist's label (:data:`CLAMPED`); all false
    where the beds have no such column (a decode that did not keep the labels)."""
    if CLAMPED not in beds.columns:
        return np.zeros(len(beds), dtype=bool)
    return beds[CLAMPED].to_numpy(dtype=bool)


@dataclass(frozen=True)
class CoreInterpretation:
    """The interpretation of one core.

    Attributes
    ----------
    core, units
        Core identifier and depth units.
    tracts
        Tract codes in the tract model's order (a tuple of codes, not a table:
        the decoded tract of every bed is the ``tract`` column of ``beds``);
        ``beds`` has a ``p_<TRACT>`` column for each.
    surfaces
        Surface codes (e.g. ``"MFS"``); ``boundaries`` has a ``p_<SURFACE>``
        column for each.
    beds
        Depth order: ``segment``, ``top``, ``base``, ``thickness``, ``facies``,
        any bed attributes, ``tract`` (most likely tract column, Viterbi) and the
        ``p_<TRACT>`` posteriors (each row sums to 1); after a decode that kept a
        geologist's labels, :data:`CLAMPED` (the beds held at their label).
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
    probabilities_checked
        Whether the model's probabilities were checked against known tracts (that of
        the :class:`Interpretation` the core was taken from; false where no model said
        so), which :func:`faciesseq.report.striplog.strip_log` notes under the
        probabilities.
    tracts_labelled
        Whether the fit that decoded the core saw labelled beds (else the tract
        names rest on its priors, which the strip log notes); true where no model
        said otherwise.
    read_reference
        Whether that fit, without labels, read a reference model too
        (:mod:`faciesseq.hmm.reference`), which the strip log notes.
    names_unsure
        Whether that fit checked a reference and found its tract names unsure
        (:mod:`faciesseq.hmm.reference_check`), which the strip log notes.
    """

    core: str
    units: str
    tracts: tuple[str, ...]
    surfaces: tuple[str, ...]
    beds: pd.DataFrame
    boundaries: pd.DataFrame
    picks: pd.DataFrame
    log_likelihood: float
    probabilities_checked: bool = False
    tracts_labelled: bool = True
    read_reference: bool = False
    names_unsure: bool = False

    def __repr__(self) -> str:
        return (
            f"CoreInterpretation(core={self.core!r}, beds={len(self.beds)}, "
            f"tracts={list(self.tracts)}, picks={len(self.picks)}, units={self.units!r})"
        )

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


def _upward_cycles(upward: pd.DataFrame, lengths: np.ndarray, scheme: FaciesScheme):
    """:func:`faciesseq.cycles.find_cycles` of beds base to top (successions of
    ``lengths`` beds), cut as the tract model cuts them, the scheme read per code."""
    from faciesseq.cycles import cycle_inputs, find_cycles

    fac, codes = pd.factorize(upward["facies"].astype(str))
    codes = list(codes)
    ranks = [scheme.rank(c) if c in scheme else np.nan for c in codes]
    r, marks, setting = cycle_inputs(fac, ranks, scheme.cycle_bases(codes), scheme.settings(codes))
    return find_cycles(r, lengths, _thickness(upward), 1.0, marks, setting)


def _cycle_count(beds: pd.DataFrame, scheme: FaciesScheme) -> int:
    """Parasequence-scale cycles of one core, cut as the tract model cuts them
    (:func:`faciesseq.cycles.find_cycles`)."""
    upward, lengths = _base_to_top(beds)
    return _upward_cycles(upward, lengths, scheme).n_cycles


def bed_cycles(table: pd.DataFrame, scheme: FaciesScheme) -> np.ndarray:
    """Cycle of every bed of a tract column, cut as the tract model cuts them
    (:func:`faciesseq.cycles.find_cycles`: at flooding surfaces, Van Wagoner et al.
    1990), numbered across the table; a cycle ends at a core's end and at a gap.

    ``table`` is :meth:`Interpretation.tracts_table` (``core, top, base, facies``,
    depth order within cores).
    """
    if not len(table):
        return np.zeros(0, dtype=np.int64)
    up = table.iloc[::-1]  # base to top within each core
    core = up["core"].to_numpy(object)
    top, base = up["top"].to_numpy(float), up["base"].to_numpy(float)
    starts = np.flatnonzero(np.r_[True, (core[1:] != core[:-1]) | (base[1:] != top[:-1])])
    lengths = np.diff(np.r_[starts, len(up)]).astype(np.int64)
    return _upward_cycles(up, lengths, scheme).bed_cycle[::-1]


def tract_runs(table: pd.DataFrame, cycles: np.ndarray | None = None) -> pd.DataFrame:
    """Runs of one decoded tract in a tract column: ``core, tract, top, base,
    thickness, beds`` (a run ends where the tract or the core changes, or at a gap),
    and ``cycles``, the cycles each run touches, where the cycle of every bed is
    given (:func:`bed_cycles`).

    ``table`` is :meth:`Interpretation.tracts_table` (depth order within cores).
    """
    core = table["core"].to_numpy(object)
    tract = table["tract"].astype(str).to_numpy(object)
    top, base = table["top"].to_numpy(float), table["base"].to_numpy(float)
    new = np.ones(len(table), dtype=bool)
    new[1:] = (core[1:] != core[:-1]) | (tract[1:] != tract[:-1]) | (top[1:] != base[:-1])
    run = np.cumsum(new) - 1
    first = np.flatnonzero(new)
    last = np.r_[first[1:], len(table)][: len(first)] - 1  # none for an empty column
    out = pd.DataFrame(
        {
            "core": core[first],
            "tract": tract[first],
            "top": top[first],
            "base": base[last],
            "thickness": np.bincount(run, weights=base - top) if len(table) else [],
            "beds": np.bincount(run) if len(table) else [],
        }
    )
    if cycles is not None:  # a run touches a new cycle at its first bed and at each change
        c = np.asarray(cycles)
        changed = np.r_[True, c[1:] != c[:-1]] if len(c) else np.zeros(0, dtype=bool)
        out["cycles"] = np.bincount(run, weights=changed | new).astype(np.int64) if len(c) else []
    return out


def tract_durations(
    table: pd.DataFrame,
    tracts: Sequence[str],
    beds_per_visit: Sequence[float],
    cycles: np.ndarray | None = None,
) -> dict[str, dict]:
    """How long each tract lasts: ``beds_per_visit`` (a fitted chain's expected
    beds per visit, :meth:`faciesseq.hmm.states.StateSpace.mean_beds`) beside the
    number, median thickness and median beds of the runs of that tract in a decoded
    tract column (``table``, as for :func:`tract_runs`), and with ``cycles`` (the
    cycle of every bed, :func:`bed_cycles`) the median cycles a run touches."""
    runs = tract_runs(table, cycles)
    out = {}
    for t, beds in zip(tracts, beds_per_visit, strict=True):
        mine = runs[runs["tract"] == t]
        out[t] = {
            "beds_per_visit": float(beds) if np.isfinite(beds) else None,
            "runs": len(mine),
            "median_thickness": float(mine["thickness"].median()) if len(mine) else None,
            "median_beds": float(mine["beds"].median()) if len(mine) else None,
        }
        if cycles is not None:
            out[t]["median_cycles"] = float(mine["cycles"].median()) if len(mine) else None
    return out


def _mean_decoded_probability(beds: pd.DataFrame, tracts: tuple[str, ...]) -> float:
    """Mean over beds of the posterior probability of each bed's decoded tract."""
    if not len(beds):
        return float("nan")
    p = beds[[f"p_{t}" for t in tracts]].to_numpy(float)
    which = pd.Index(tracts).get_indexer(beds["tract"].astype(str))
    return float(np.mean(p[np.arange(len(beds)), which]))


def core_summary(core: CoreInterpretation, scheme: FaciesScheme | None = None) -> dict[str, object]:
    """One well in a line: thickness per tract, cycles, picks, mean probability.

    Parameters
    ----------
    core
        A decoded core.
    scheme
        The facies scheme (ranks, cycle marks, settings); without it the
        number of cycles is left out.

    Returns
    -------
    dict
        ``core``, ``units``, ``thickness`` (tract -> summed thickness of its
        beds, in the core's units), ``cycles`` (parasequence-scale cycles cut
        at flooding surfaces, Van Wagoner et al. 1990; only with ``scheme``),
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
    if scheme is not None:
        out["cycles"] = _cycle_count(beds, scheme)
    out["picks"] = len(core.picks)
    out["mean_probability"] = _mean_decoded_probability(beds, core.tracts)
    return out


#: Columns of a picks table, after ``core`` (``CoreInterpretation.picks``).
PICK_COLUMNS = (
    "surface",
    "name",
    "depth",
    "probability",
    "p_contact",
    "depth_top",
    "depth_base",
    "segment",
)

#: Columns of the tops table (:meth:`Interpretation.tops_table`), in order.
TOPS_COLUMNS = (
    "well",
    "surface",
    "name",
    "depth",
    "depth_top",
    "depth_base",
    "probability",
    "units",
)


@dataclass(frozen=True)
class Interpretation:
    """Interpretations of several cores held as whole-database tables, and the tables
    ``decode`` writes.

    ``beds``, ``boundaries`` and ``picks`` have the columns of
    :class:`CoreInterpretation`'s tables with ``core`` first, the cores one after
    another in the order of ``wells`` (index: core; columns ``units``,
    ``log_likelihood`` and the number of ``beds``, ``boundaries`` and ``picks`` of
    each). Iterating, or ``interp[core]``, gives one :class:`CoreInterpretation`,
    made from slices of the tables when asked for.

    ``tracts`` and ``surfaces`` are tuples of codes (the tract model's order);
    the decoded tracts of the beds are the ``tract`` column of ``beds``
    (:meth:`tracts_table`), the picked surfaces the table ``picks``.
    """

    tracts: tuple[str, ...]
    surfaces: tuple[str, ...]
    beds: pd.DataFrame
    boundaries: pd.DataFrame
    picks: pd.DataFrame
    wells: pd.DataFrame
    meta: Mapping[str, object] = field(default_factory=dict)

    @classmethod
    def from_cores(
        cls,
        cores: Mapping[str, CoreInterpretation],
        tracts: tuple[str, ...],
        surfaces: tuple[str, ...],
        meta: Mapping[str, object] | None = None,
    ) -> Interpretation:
        """One interpretation from the interpretations of single cores."""
        parts = list(cores.values())
        tables = {}
        for name, empty in _empty_tables(tracts, surfaces).items():
            frames = [getattr(c, name).assign(core=c.core) for c in parts]
            frames = [f for f in frames if len(f)]
            tables[name] = _core_first(pd.concat(frames, ignore_index=True)) if frames else empty
        wells = pd.DataFrame(
            {
                "units": [c.units for c in parts],
                "log_likelihood": [float(c.log_likelihood) for c in parts],
                "beds": [len(c.beds) for c in parts],
                "boundaries": [len(c.boundaries) for c in parts],
                "picks": [len(c.picks) for c in parts],
            },
            index=pd.Index([c.core for c in parts], dtype=object, name="core"),
        )
        return cls(tuple(tracts), tuple(surfaces), wells=wells, meta=dict(meta or {}), **tables)

    @classmethod
    def concat(cls, parts: list[Interpretation]) -> Interpretation:
        """The parts (of other cores each, as a streamed decode yields them) as one."""
        first = parts[0]
        tables = {
            name: pd.concat([getattr(p, name) for p in parts], ignore_index=True)
            for name in ("beds", "boundaries", "picks")
        }
        wells = pd.concat([p.wells for p in parts])
        return cls(first.tracts, first.surfaces, wells=wells, meta=first.meta, **tables)

    @cached_property
    def _starts(self) -> dict[str, np.ndarray]:
        """First row of each core in each table, then the number of rows."""
        return {
            name: np.r_[0, np.cumsum(self.wells[name].to_numpy(np.int64))]
            for name in ("beds", "boundaries", "picks")
        }

    def __repr__(self) -> str:
        return (
            f"Interpretation(cores={len(self)} [{core_list(self.wells.index)}], "
            f"beds={len(self.beds)}, tracts={list(self.tracts)}, picks={len(self.picks)})"
        )

    def __getitem__(self, core: str) -> CoreInterpretation:
        if not isinstance(core, str) or core not in self.wells.index:
            raise KeyError(
                f"no core {core!r} in this interpretation; cores: {core_list(self.wells.index)}"
            )
        k = self.wells.index.get_loc(core)
        spans = {}
        for name, starts in self._starts.items():
            table = getattr(self, name).iloc[starts[k] : starts[k + 1]]
            spans[name] = table.drop(columns="core").reset_index(drop=True)
        well = self.wells.iloc[k]
        return CoreInterpretation(
            core,
            str(well["units"]),
            self.tracts,
            self.surfaces,
            log_likelihood=float(well["log_likelihood"]),
            probabilities_checked=self.probabilities_checked,
            tracts_labelled=self.tracts_labelled,
            read_reference=self.read_reference,
            names_unsure=self.names_unsure,
            **spans,
        )

    def head(self, n: int) -> Interpretation:
        """The first ``n`` cores (copied: they keep no reference to the whole tables)."""
        n = max(0, min(n, len(self)))
        ends = {name: int(starts[n]) for name, starts in self._starts.items()}
        tables = {name: getattr(self, name).iloc[:end].copy() for name, end in ends.items()}
        return replace(self, wells=self.wells.iloc[:n], **tables)

    @property
    def cores(self) -> Mapping[str, CoreInterpretation]:
        """Core name -> :class:`CoreInterpretation`, each made when asked for."""
        return _CoreViews(self)

    @property
    def probabilities_checked(self) -> bool:
        """Whether the model's probabilities were checked against known tracts
        (``meta["probabilities_checked"]``, set by ``TractHMM.decode``; false
        where no model said so)."""
        return bool(self.meta.get("probabilities_checked", False))

    @property
    def read_reference(self) -> bool:
        """Whether the fit without labels that decoded these cores read a reference
        model too (its features, ``meta["features"]``, end with ``reference``;
        :mod:`faciesseq.hmm.reference`)."""
        return "reference" in self.meta.get("features", ())

    @property
    def names_unsure(self) -> bool:
        """Whether the fit that decoded these cores checked a reference and found its
        tract names unsure (``meta["names_unsure"]``; :mod:`faciesseq.hmm.reference_check`)."""
        return bool(self.meta.get("names_unsure", False))

    @property
    def tracts_labelled(self) -> bool:
        """Whether the fit that decoded these cores saw labelled beds
        (``meta["tracts_labelled"]``, set by ``TractHMM.decode``); where false, the
        tract names rest on the model's priors and :attr:`probabilities_note` says so.
        True where no model said otherwise (interpretations made before the flag)."""
        return bool(self.meta.get("tracts_labelled", True))

    @property
    def probabilities_note(self) -> str:
        """One line on whether and how the probabilities were checked."""
        note = self.meta.get("probabilities_note") or (
            "Tract and surface probabilities were not checked against known tracts."
        )
        return " ".join(str(note).split())  # one line, whatever the model file held

    def __iter__(self) -> Iterator[CoreInterpretation]:
        return (self[core] for core in self.wells.index)

    def __len__(self) -> int:
        return len(self.wells)

    def tracts_table(self) -> pd.DataFrame:
        """``core, top, base, facies, tract, p_<TRACT>...``, depth order within cores,
        then ``interpreted_tract`` (an interpreter's ``tract`` column of the cores
        decoded, as ``beds`` keeps it) where the beds have it."""
        columns = ["core", "top", "base", "facies", "tract", *[f"p_{t}" for t in self.tracts]]
        if "interpreted_tract" in self.beds.columns:
            columns.append("interpreted_tract")
        return self.beds[columns].reset_index(drop=True)

    def surfaces_table(self, categorical: bool = False) -> pd.DataFrame:
        """``core, depth, surface, probability, picked``: every contact and surface.

        One row per (contact, surface code); ``picked`` is true where the
        surface was picked at that contact. ``categorical``: the ``core`` and
        ``surface`` columns as categoricals, the same texts held once each (for a
        writer that reads the codes, such as the CSV text of ``decode``).
        """
        columns = ["core", "depth", "surface", "probability", "picked"]
        if not len(self.boundaries):
            return pd.DataFrame(columns=columns)
        b, codes = self.boundaries, list(self.surfaces)
        k, n = len(codes), len(b)
        contact = np.repeat(np.arange(n), k)
        surface = np.tile(np.arange(k), n)
        if categorical and len(set(codes)) == k:
            core = pd.Categorical(b["core"])
            core = pd.Categorical.from_codes(core.codes[contact], core.categories)
            surface = pd.Categorical.from_codes(surface, codes)
        else:
            core, surface = take_text(b["core"], contact), text_column(codes, surface)
        table = pd.DataFrame(
            {
                "core": core,
                "depth": np.repeat(b["depth"].to_numpy(float), k),
                "surface": surface,
                "probability": b[[f"p_{s}" for s in self.surfaces]].to_numpy(float).reshape(-1),
            }
        )
        table["picked"] = self._picked(k)
        return table

    def _picked(self, k: int) -> np.ndarray:
        """Per contact and surface code (the rows of :meth:`surfaces_table`), whether a
        pick of that surface lies at that contact (same core, depth to 1e-9)."""
        b, p = self.boundaries, self.picks
        picked = np.zeros(len(b) * k, dtype=bool)
        if not len(p) or not k:
            return picked
        contacts = pd.DataFrame(
            {"core": b["core"].array, "depth": b["depth"].to_numpy(float).round(9)}
        )
        found = pd.DataFrame(
            {
                "core": p["core"].array,
                "depth": p["depth"].to_numpy(float).round(9),
                "surface": pd.Index(self.surfaces).get_indexer(p["surface"]),
            }
        )
        found = found[found["surface"] >= 0]
        contacts["contact"] = np.arange(len(b))
        pairs = contacts.merge(found, on=["core", "depth"])
        picked[pairs["contact"].to_numpy() * k + pairs["surface"].to_numpy()] = True
        return picked

    def picks_table(self) -> pd.DataFrame:
        """All picks, with a ``core`` column first."""
        return self.picks.reset_index(drop=True)

    def tops_table(self) -> pd.DataFrame:
        """The picked surfaces of every well, one row per pick, depth order within wells
        (wells in the order of ``wells``): the ``tops.csv`` that ``faciesseq decode``
        writes.

        Columns :data:`TOPS_COLUMNS`: ``well`` (the core), ``surface`` (code),
        ``name``, ``depth`` (the pick), ``depth_top`` and ``depth_base`` (its
        uncertainty interval), ``probability`` (of the surface at the pick) and
        ``units`` (``m`` or ``ft``).
        """
        picks = self.picks
        if not len(picks):
            return pd.DataFrame(columns=list(TOPS_COLUMNS))
        position = self.wells.index.get_indexer(picks["core"])
        order = np.lexsort((picks["depth"].to_numpy(float), position))
        return pd.DataFrame(
            {
                "well": take_text(picks["core"], order),
                "surface": take_text(picks["surface"], order),
                "name": take_text(picks["name"], order),
                "depth": picks["depth"].to_numpy(float)[order],
                "depth_top": picks["depth_top"].to_numpy(float)[order],
                "depth_base": picks["depth_base"].to_numpy(float)[order],
                "probability": picks["probability"].to_numpy(float)[order],
                "units": take_text(self.wells["units"], position[order]),
            }
        )


def core_list(names, shown: int = 5) -> str:
    """Core names for a message: ``SF-1, SF-2, ... (and 7 more)``; ``none`` for none."""
    names = [str(n) for n in names]
    if not names:
        return "none"
    more = len(names) - shown
    return ", ".join(names[:shown]) + (f", ... (and {more} more)" if more > 0 else "")


def _core_first(table: pd.DataFrame) -> pd.DataFrame:
    return table[["core", *[c for c in table.columns if c != "core"]]]


def _empty_tables(tracts, surfaces) -> dict[str, pd.DataFrame]:
    """The three tables of an interpretation of no core, with their columns."""
    first = ["core", "segment", "top", "base", "thickness", "facies", "tract"]
    return {
        "beds": pd.DataFrame(columns=[*first, *[f"p_{t}" for t in tracts]]),
        "boundaries": pd.DataFrame(
            columns=["core", "segment", "depth", "lower_tract", "upper_tract"]
            + [f"p_{s}" for s in surfaces]
        ),
        "picks": pd.DataFrame(columns=["core", *PICK_COLUMNS]),
    }


class _CoreViews(Mapping):
    """The cores of an :class:`Interpretation` by name, each made when asked for."""

    def __init__(self, interp: Interpretation):
        self._interp = interp

    def __getitem__(self, core: str) -> CoreInterpretation:
        return self._interp[core]

    def __iter__(self) -> Iterator[str]:
        return iter(self._interp.wells.index)

    def __len__(self) -> int:
        return len(self._interp)
