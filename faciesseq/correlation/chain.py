"""Chain pairwise alignments along each section into correlated surfaces.

Wells of a section are ordered by their position along it (ties of position by
name, so the listing order of the wells table never matters); each pair of
neighbours is aligned (:func:`faciesseq.correlation.align.align_columns`) and
the ties are chained: a pick tied to its neighbour on each side carries one
correlated surface across three wells, and so on. Each correlated surface gets
an identifier ``<section>:<kind>-<n>`` (``n`` counted from the top of the
section by the surface's mean fractional position), and each tie a confidence
(:func:`faciesseq.correlation.align.tie_confidence`).

A pair of neighbours the alignment leaves without a tie (two cores that cover
different parts of the succession: every same-kind pair lies too far apart in
fractional position) is read again by the order of its picks alone
(:func:`faciesseq.correlation.align.align_by_order`); those ties are ``tied_by``
``order``, their confidence cut by :data:`ORDER_ONLY` and always doubtful. A pair
still without a tie is listed in :attr:`Correlation.untied_pairs`.
"""

from __future__ import annotations

import itertools
import warnings
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, NamedTuple

import numpy as np
import pandas as pd

from faciesseq.correlation.align import (
    AlignmentOptions,
    PickColumn,
    align_by_order,
    align_columns,
    disputed_ties,
    tie_confidence,
)
from faciesseq.correlation.wells import (
    WellTable,
    check_wells,
    section_prefix,
    wells_from_frame,
)

if TYPE_CHECKING:
    from faciesseq.interpretation import Interpretation

#: Factor on the confidence of a tie that the second reading of its pair of wells
#: (depths mapped by the line through the ties) does not make: one of two readings.
DISPUTED = 0.5

#: Factor on the confidence of a tie made by the order of the picks alone, for a pair
#: of wells the positional alignment leaves without a tie; such a tie is always doubtful.
ORDER_ONLY = 0.5

__all__ = ["Correlation", "correlate", "correlate_interpretation"]

#: Columns of :meth:`Correlation.to_frame`.
COLUMNS = (
    "section",
    "surface_id",
    "surface",
    "core",
    "position",
    "depth",
    "probability",
    "confidence",
    "doubtful",
    "tied_to",
)

#: Columns of :attr:`Correlation.ties`.
TIE_COLUMNS = (
    "section",
    "surface_id",
    "surface",
    "core_left",
    "depth_left",
    "core_right",
    "depth_right",
    "cost",
    "confidence",
    "doubtful",
    "tied_by",
)

#: Columns of :attr:`Correlation.untied_pairs`.
UNTIED_COLUMNS = ("section", "core_left", "core_right")


@dataclass(frozen=True)
class Correlation:
    """Correlated surfaces of one or more sections.

    Attributes
    ----------
    picks
        One row per pick in a correlated surface: ``section``, ``surface_id``,
        ``surface``, ``core``, ``position`` (along the section), ``depth``,
        ``probability`` (of the pick), ``confidence`` (of the tie to the
        previous well of the surface along the section; for the first well of a
        surface, of its tie to the next), ``doubtful`` (confidence below the
        threshold) and ``tied_to`` (the previous well's core, empty for the first).
    ties
        One row per tie between neighbouring wells: ``section``, ``surface_id``,
        ``surface``, ``core_left``, ``depth_left``, ``core_right``,
        ``depth_right``, ``cost``, ``confidence``, ``doubtful``, ``tied_by``
        (``position``: the alignment by fractional position; ``order``: by the order
        of the picks alone, for a pair the first left without a tie; always doubtful).
    wells
        The wells used: ``core``, ``section``, ``position`` and the datum
        columns, in section order.
    options
        The alignment costs.
    untied_pairs
        Neighbouring wells that share no tied surface: ``section``, ``core_left``,
        ``core_right``. Their columns stand unjoined in a section figure.
    """

    picks: pd.DataFrame
    ties: pd.DataFrame
    wells: pd.DataFrame
    options: AlignmentOptions = field(default_factory=AlignmentOptions)
    untied_pairs: pd.DataFrame = field(
        default_factory=lambda: pd.DataFrame(columns=list(UNTIED_COLUMNS))
    )

    def to_frame(self) -> pd.DataFrame:
        """The correlated picks (``correlation.csv``), section by section, top down."""
        return self.picks.copy()

    def to_dict(self) -> dict:
        """A JSON-ready summary: per section, the wells, surfaces and ties."""
        sections = {}
        for name, wells in self.wells.groupby("section", sort=False):
            ties = self.ties[self.ties["section"] == name]
            picks = self.picks[self.picks["section"] == name]
            untied = self.untied_pairs[self.untied_pairs["section"] == name]
            sections[str(name)] = {
                "wells": [str(c) for c in wells["core"]],
                "surfaces": int(picks["surface_id"].nunique()),
                "ties": len(ties),
                "doubtful_ties": int(ties["doubtful"].sum()),
                "mean_confidence": float(ties["confidence"].mean()) if len(ties) else None,
                "ties_by_order": int((ties["tied_by"] == "order").sum()),
                "untied_pairs": [
                    [str(a), str(b)] for a, b in zip(untied["core_left"], untied["core_right"])
                ],
            }
        return {
            "options": {
                "sigma": self.options.sigma,
                "tau": self.options.tau,
                "gap": self.options.gap,
                "doubtful": self.options.doubtful,
            },
            "sections": sections,
        }

    def untied_messages(self) -> list[str]:
        """One sentence per pair of neighbouring wells that share no tied surface."""
        return [
            untied_message(section, left, right)
            for section, left, right in self.untied_pairs[list(UNTIED_COLUMNS)].itertuples(
                index=False
            )
        ]

    def order_tied_messages(self) -> list[str]:
        """One sentence per pair of neighbouring wells tied by the order of their picks
        alone (the alignment by position left them without a tie)."""
        by_order = self.ties[self.ties["tied_by"] == "order"]
        pairs = by_order.groupby(["section", "core_left", "core_right"], sort=False).size()
        return [
            f"{section_prefix(section)}{left} and {right} tied by the order of their picks alone "
            f"(their cores cover different parts of the succession): {n} tie(s), all doubtful"
            for (section, left, right), n in pairs.items()
        ]

    def surface_ids(self, section: str) -> list[str]:
        """Correlated surface ids of a section, top down."""
        picks = self.picks[self.picks["section"] == section]
        return list(dict.fromkeys(picks["surface_id"]))


def untied_message(section, left: str, right: str) -> str:
    """``section dip: NU-02 and NU-03 share no tied surface; their columns are drawn
    unjoined``."""
    return (
        f"{section_prefix(section)}{left} and {right} share no tied surface; "
        "their columns are drawn unjoined"
    )


def _columns(picks: pd.DataFrame, extents: Mapping[str, tuple[float, float]]) -> dict:
    out = {}
    for core, (top, base) in extents.items():
        own = picks[picks["core"] == core]
        out[core] = PickColumn.from_picks(
            own["surface"].to_numpy(), own["depth"], own["probability"], top, base
        )
    return out


#: A well's pick: ``(core, index of the pick in the core's column)``.
_Pick = tuple[str, int]


class _Tie(NamedTuple):
    """A tie between neighbouring wells, on the correlated surface numbered ``surface``."""

    surface: int
    core_left: str
    pick_left: int
    core_right: str
    pick_right: int
    cost: float
    confidence: float
    tied_by: str


def correlate(
    picks: pd.DataFrame,
    extents: Mapping[str, tuple[float, float]] | pd.DataFrame,
    wells: pd.DataFrame | WellTable,
    options: AlignmentOptions | None = None,
    *,
    units: str | None = None,
) -> Correlation:
    """Correlate the surface picks of the wells of each section.

    Parameters
    ----------
    picks
        ``core``, ``surface``, ``depth``, ``probability``: the decoded picks
        (e.g. :meth:`faciesseq.interpretation.Interpretation.picks_table`).
    extents
        Top and base depth of each core's decoded column: core -> ``(top, base)``,
        or a table with ``top`` and ``base`` columns indexed by core (as
        :meth:`faciesseq.core.CoreSet.extents` returns it).
    wells
        A wells table as a data frame, checked as ``faciesseq correlate`` checks it
        (:func:`faciesseq.correlation.wells.wells_from_frame`: ``core`` and
        ``distance`` or ``x``, ``y``, optional ``section``...; its warnings are
        issued as Python warnings), or a checked
        :class:`~faciesseq.correlation.wells.WellTable`
        (:func:`~faciesseq.correlation.wells.read_wells`). Wells without an
        extent are left out.
    options
        Alignment costs.
    units
        The cores' depth units (``m`` or ``ft``): a wells table whose column names state
        the other unit for its elevations or datum depths (``elevation (ft)``) is
        converted to them; ``None`` reads them as given.

    Returns
    -------
    Correlation

    See Also
    --------
    correlate_interpretation : the same from a decoded interpretation.
    """
    options = options or AlignmentOptions()
    extents = _extents(extents)
    wells = _wells_along_sections(_checked_wells(wells, extents, units), extents)
    columns = _columns(picks, extents)
    pick_rows, tie_rows, untied_rows = [], [], []
    for section, group in wells.groupby("section", sort=True):
        surfaces, ties = _chain_section(list(group["core"]), columns, options)
        joined = {(t.core_left, t.core_right) for t in ties}
        untied_rows += [
            (section, left, right)
            for left, right in itertools.pairwise(group["core"])
            if (left, right) not in joined
        ]
        surface_ids, mean_fraction = _name_surfaces(str(section), surfaces, columns)
        tie_rows += _tie_rows(section, ties, surface_ids, columns, options)
        positions = dict(zip(group["core"], group["position"]))
        pick_rows += _pick_rows(
            section, surfaces, ties, surface_ids, mean_fraction, columns, positions, options
        )
    return Correlation(
        _picks_frame(pick_rows),
        pd.DataFrame(tie_rows, columns=TIE_COLUMNS),
        wells.reset_index(drop=True),
        options,
        pd.DataFrame(untied_rows, columns=list(UNTIED_COLUMNS)),
    )


def correlate_interpretation(
    interpretation: Interpretation,
    wells: pd.DataFrame | WellTable,
    options: AlignmentOptions | None = None,
) -> Correlation:
    """:func:`correlate` of the picks of a decoded interpretation
    (:meth:`faciesseq.hmm.TractHMM.decode`), each core's extent that of its decoded
    beds: what ``faciesseq correlate`` computes.

    Examples
    --------
    >>> corr = correlate_interpretation(model.decode(cores), pd.read_csv("wells.csv"))
    ... # doctest: +SKIP
    """
    from faciesseq.interpretation import Interpretation

    if not isinstance(interpretation, Interpretation):
        raise TypeError(
            "correlate_interpretation needs the Interpretation that TractHMM.decode "
            f"returns, got {type(interpretation).__name__}"
        )
    beds = interpretation.beds
    spans = beds.groupby("core", sort=False).agg(top=("top", "min"), base=("base", "max"))
    units = next((core.units for core in interpretation), None)
    return correlate(interpretation.picks_table(), spans, wells, options, units=units)


def _extents(extents) -> dict[str, tuple[float, float]]:
    """Core -> (top, base), from a mapping or a table of ``top`` and ``base`` by core."""
    if isinstance(extents, pd.DataFrame):
        if not {"top", "base"} <= set(extents.columns):
            raise TypeError(
                "extents as a table needs 'top' and 'base' columns indexed by core "
                f"(as CoreSet.extents() gives), got columns {list(extents.columns)}"
            )
        table = extents.set_index("core") if "core" in extents.columns else extents
        return {
            str(core): (float(top), float(base))
            for core, top, base in zip(table.index, table["top"], table["base"], strict=True)
        }
    if not isinstance(extents, Mapping):
        raise TypeError(
            "extents must map each core to (top, base), or be a table of top and base "
            f"by core (CoreSet.extents()), got {type(extents).__name__}"
        )
    return dict(extents)


def _well_table(wells: pd.DataFrame | WellTable) -> WellTable:
    """The :class:`WellTable` of ``wells``: itself; a data frame already checked (``core,
    section, position``) as it is; any other data frame checked by
    :func:`wells_from_frame`, its warnings issued as Python warnings. Not yet in the
    cores' units (:func:`_checked_wells` converts them)."""
    if isinstance(wells, WellTable):
        return wells
    if not isinstance(wells, pd.DataFrame):
        raise TypeError(
            "wells must be a wells table (a DataFrame, or the WellTable of read_wells), "
            f"got {type(wells).__name__}"
        )
    if {"core", "section", "position"} <= set(wells.columns):
        rows = wells if "row" in wells.columns else wells.assign(row=range(1, len(wells) + 1))
        return WellTable(rows)
    table = wells_from_frame(wells)
    for problem in table.problems:
        warnings.warn(str(problem), stacklevel=4)
    return table


def _checked_wells(wells, extents: Mapping, units: str | None) -> pd.DataFrame:
    """The wells table checked against the cores as ``faciesseq correlate`` checks it
    (:func:`~faciesseq.correlation.wells.check_wells`): no section with two wells of
    these cores is an :class:`~faciesseq.errors.InputError`; a well without a core, a
    core without a well and a section of one well are Python warnings (a typo in the
    names gave an empty correlation and no word, from Python only)."""
    checked, problems = check_wells(_well_table(wells), list(extents), units)
    for problem in problems:
        warnings.warn(str(problem), stacklevel=3)  # at the caller of correlate
    return checked.frame


def _wells_along_sections(
    wells: pd.DataFrame, extents: Mapping[str, tuple[float, float]]
) -> pd.DataFrame:
    """The wells with an extent, by section and position along it (ties of position by
    name, so the listing order of the wells table never matters)."""
    wells = wells[wells["core"].isin(list(extents))]
    return wells.sort_values(["section", "position", "core"], kind="stable")


def _tie_pair(
    left: PickColumn, right: PickColumn, options: AlignmentOptions
) -> list[tuple[int, int, float, float, str]]:
    """``(pick_left, pick_right, cost, confidence, tied_by)`` of each tie between two
    neighbours; a tie the second reading of the pair does not make has its confidence
    cut by :data:`DISPUTED`. A pair left without a tie is aligned by the order of its
    picks alone, each tie's confidence cut by :data:`ORDER_ONLY`."""
    ties = align_columns(left, right, options)
    if not ties:
        return [
            (i, j, cost, ORDER_ONLY * _confidence(cost, left, right, i, j, options), "order")
            for i, j, cost in align_by_order(left, right, options)
        ]
    disputed = disputed_ties(left, right, ties, options)
    out = []
    for i, j, cost in ties:
        confidence = _confidence(cost, left, right, i, j, options)
        if (i, j) in disputed:
            confidence *= DISPUTED
        out.append((i, j, cost, confidence, "position"))
    return out


def _confidence(cost, left: PickColumn, right: PickColumn, i, j, options) -> float:
    return tie_confidence(cost, left.probability[i], right.probability[j], options.gap)


def _doubtful(tie: _Tie, options: AlignmentOptions) -> bool:
    """A tie below the confidence threshold, or one made by the order of picks alone."""
    return tie.confidence < options.doubtful or tie.tied_by == "order"


def _chain_section(
    cores: list[str], columns: Mapping[str, PickColumn], options: AlignmentOptions
) -> tuple[list[list[_Pick]], list[_Tie]]:
    """Tie each pair of neighbouring wells and chain the ties into correlated surfaces.

    Returns the surfaces (each its picks, from the first well along the section
    on) and the ties, each with the number of its surface.
    """
    surface_of: dict[_Pick, int] = {}
    surfaces: list[list[_Pick]] = []
    ties: list[_Tie] = []
    for left, right in itertools.pairwise(cores):
        for i, j, cost, confidence, tied_by in _tie_pair(columns[left], columns[right], options):
            if (left, i) not in surface_of:
                surface_of[(left, i)] = len(surfaces)
                surfaces.append([(left, i)])
            surface = surface_of[(left, i)]
            surface_of[(right, j)] = surface
            surfaces[surface].append((right, j))
            ties.append(_Tie(surface, left, i, right, j, cost, confidence, tied_by))
    return surfaces, ties


def _name_surfaces(
    section: str, surfaces: list[list[_Pick]], columns: Mapping[str, PickColumn]
) -> tuple[dict[int, str], list[float]]:
    """Identifier ``<section>:<kind>-<n>`` of each surface, ``n`` counted per kind from
    the top down, and each surface's mean fractional position, which orders them."""
    mean_fraction = [
        np.mean([columns[core].fraction[k] for core, k in picks]) for picks in surfaces
    ]
    ids: dict[int, str] = {}
    counts: dict[str, int] = {}
    for s in np.argsort(mean_fraction, kind="stable"):
        core, k = surfaces[s][0]
        kind = str(columns[core].surface[k])
        counts[kind] = counts.get(kind, 0) + 1
        ids[int(s)] = f"{section}:{kind}-{counts[kind]}"
    return ids, mean_fraction


def _tie_rows(
    section,
    ties: list[_Tie],
    surface_ids: dict[int, str],
    columns: Mapping[str, PickColumn],
    options: AlignmentOptions,
) -> list[dict]:
    """One row of :attr:`Correlation.ties` per tie."""
    rows = []
    for tie in ties:
        left, right = columns[tie.core_left], columns[tie.core_right]
        rows.append(
            {
                "section": section,
                "surface_id": surface_ids[tie.surface],
                "surface": left.surface[tie.pick_left],
                "core_left": tie.core_left,
                "depth_left": left.depth[tie.pick_left],
                "core_right": tie.core_right,
                "depth_right": right.depth[tie.pick_right],
                "cost": tie.cost,
                "confidence": tie.confidence,
                "doubtful": _doubtful(tie, options),
                "tied_by": tie.tied_by,
            }
        )
    return rows


def _pick_rows(
    section,
    surfaces: list[list[_Pick]],
    ties: list[_Tie],
    surface_ids: dict[int, str],
    mean_fraction: list[float],
    columns: Mapping[str, PickColumn],
    positions: Mapping[str, float],
    options: AlignmentOptions,
) -> list[dict]:
    """One row of :attr:`Correlation.picks` per tied pick, with the confidence of its tie
    to the previous well (the first well of a surface: to the next) and ``_order``, the
    surface's mean fractional position."""
    tie_above = {(t.core_right, t.pick_right): (t, t.core_left) for t in ties}
    tie_below = {(t.core_left, t.pick_left): t for t in ties}
    rows = []
    for s, picks in enumerate(surfaces):
        for core, k in picks:
            tie, tied_to = tie_above.get((core, k), (tie_below.get((core, k)), ""))
            column = columns[core]
            rows.append(
                {
                    "section": section,
                    "surface_id": surface_ids[s],
                    "surface": column.surface[k],
                    "core": core,
                    "position": positions[core],
                    "depth": column.depth[k],
                    "probability": column.probability[k],
                    "confidence": tie.confidence,
                    "doubtful": _doubtful(tie, options),
                    "tied_to": tied_to,
                    "_order": mean_fraction[s],
                }
            )
    return rows


def _picks_frame(rows: list[dict]) -> pd.DataFrame:
    """The picks, section by section, surfaces top down, wells along the section."""
    frame = pd.DataFrame(rows, columns=[*COLUMNS, "_order"])
    if len(frame):
        frame = frame.sort_values(["section", "_order", "position", "core"], kind="stable")
    return frame.drop(columns="_order").reset_index(drop=True)
