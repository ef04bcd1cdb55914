"""Chain pairwise alignments along each section into correlated surfaces.

Wells of a section are ordered by their position along it (ties of position by
name, so the listing order of the wells table never matters); each pair of
neighbours is aligned (:func:`faciesseq.correlation.align.align_columns`) and
the ties are chained: a pick tied to its neighbour on each side carries one
correlated surface across three wells, and so on. Each correlated surface gets
an identifier ``<section>:<kind>-<n>`` (``n`` counted from the top of the
section by the surface's mean fractional position), and each tie a confidence
(:func:`faciesseq.correlation.align.tie_confidence`).
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from faciesseq.correlation.align import (
    AlignmentOptions,
    PickColumn,
    align_columns,
    disputed_ties,
    tie_confidence,
)

#: Factor on the confidence of a tie that the second reading of its pair of wells
#: (depths mapped by the line through the ties) does not make: one of two readings.
DISPUTED = 0.5

__all__ = ["Correlation", "correlate"]

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
        ``depth_right``, ``cost``, ``confidence``, ``doubtful``.
    wells
        The wells used: ``core``, ``section``, ``position`` and the datum
        columns, in section order.
    options
        The alignment costs.
    """

    picks: pd.DataFrame
    ties: pd.DataFrame
    wells: pd.DataFrame
    options: AlignmentOptions = field(default_factory=AlignmentOptions)

    def to_frame(self) -> pd.DataFrame:
        """The correlated picks (``correlation.csv``), section by section, top down."""
        return self.picks.copy()

    def to_dict(self) -> dict:
        """A JSON-ready summary: per section, the wells, surfaces and ties."""
        sections = {}
        for name, wells in self.wells.groupby("section", sort=False):
            ties = self.ties[self.ties["section"] == name]
            picks = self.picks[self.picks["section"] == name]
            sections[str(name)] = {
                "wells": [str(c) for c in wells["core"]],
                "surfaces": int(picks["surface_id"].nunique()),
                "ties": len(ties),
                "doubtful_ties": int(ties["doubtful"].sum()),
                "mean_confidence": float(ties["confidence"].mean()) if len(ties) else None,
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

    def surface_ids(self, section: str) -> list[str]:
        """Correlated surface ids of a section, top down."""
        picks = self.picks[self.picks["section"] == section]
        return list(dict.fromkeys(picks["surface_id"]))


def _columns(picks: pd.DataFrame, extents: Mapping[str, tuple[float, float]]) -> dict:
    out = {}
    for core, (top, base) in extents.items():
        own = picks[picks["core"] == core]
        out[core] = PickColumn.from_picks(
            own["surface"].to_numpy(), own["depth"], own["probability"], top, base
        )
    return out


def correlate(
    picks: pd.DataFrame,
    extents: Mapping[str, tuple[float, float]],
    wells: pd.DataFrame,
    options: AlignmentOptions | None = None,
) -> Correlation:
    """Correlate the surface picks of the wells of each section.

    Parameters
    ----------
    picks
        ``core``, ``surface``, ``depth``, ``probability``: the decoded picks
        (e.g. :meth:`faciesseq.interpretation.Interpretation.picks_table`).
    extents
        Top and base depth of each core's decoded column.
    wells
        ``core``, ``section``, ``position`` (see
        :func:`faciesseq.correlation.wells.read_wells`); wells without an
        extent are left out.
    options
        Alignment costs.

    Returns
    -------
    Correlation
    """
    options = options or AlignmentOptions()
    wells = wells[wells["core"].isin(list(extents))]
    wells = wells.sort_values(["section", "position", "core"], kind="stable")
    columns = _columns(picks, extents)
    pick_rows, tie_rows = [], []
    for section, group in wells.groupby("section", sort=True):
        names = list(group["core"])
        positions = dict(zip(group["core"], group["position"]))
        # chain: (core, pick index) -> surface number; links by union along the section
        owner: dict[tuple[str, int], int] = {}
        members: list[list[tuple[str, int]]] = []
        links = []
        for left, right in itertools.pairwise(names):
            a, b = columns[left], columns[right]
            pair = align_columns(a, b, options)
            disputed = disputed_ties(a, b, pair, options)
            for i, j, cost in pair:
                conf = tie_confidence(cost, a.probability[i], b.probability[j], options.gap)
                if (i, j) in disputed:
                    conf *= DISPUTED
                key = (left, i)
                if key not in owner:
                    owner[key] = len(members)
                    members.append([key])
                owner[(right, j)] = owner[key]
                members[owner[key]].append((right, j))
                links.append((owner[key], left, i, right, j, cost, conf))
        # order surfaces top down by mean fractional position; number per kind
        mean_f = [np.mean([columns[c].fraction[k] for c, k in mem]) for mem in members]
        ids: dict[int, str] = {}
        counts: dict[str, int] = {}
        for s in np.argsort(mean_f, kind="stable"):
            c, k = members[s][0]
            kind = str(columns[c].surface[k])
            counts[kind] = counts.get(kind, 0) + 1
            ids[int(s)] = f"{section}:{kind}-{counts[kind]}"
        confidence_in: dict[tuple[str, int], tuple[float, str]] = {}
        confidence_out: dict[tuple[str, int], float] = {}
        for s, left, i, right, j, cost, conf in links:
            col_a, col_b = columns[left], columns[right]
            tie_rows.append(
                {
                    "section": section,
                    "surface_id": ids[s],
                    "surface": col_a.surface[i],
                    "core_left": left,
                    "depth_left": col_a.depth[i],
                    "core_right": right,
                    "depth_right": col_b.depth[j],
                    "cost": cost,
                    "confidence": conf,
                    "doubtful": conf < options.doubtful,
                }
            )
            confidence_in[(right, j)] = (conf, left)
            confidence_out[(left, i)] = conf
        for s, mem in enumerate(members):
            for c, k in mem:
                conf, tied_to = confidence_in.get((c, k), (confidence_out.get((c, k)), ""))
                col = columns[c]
                pick_rows.append(
                    {
                        "section": section,
                        "surface_id": ids[s],
                        "surface": col.surface[k],
                        "core": c,
                        "position": positions[c],
                        "depth": col.depth[k],
                        "probability": col.probability[k],
                        "confidence": conf,
                        "doubtful": conf < options.doubtful,
                        "tied_to": tied_to,
                        "_order": mean_f[s],
                    }
                )
    frame = pd.DataFrame(pick_rows, columns=[*COLUMNS, "_order"])
    if len(frame):
        frame = frame.sort_values(["section", "_order", "position", "core"], kind="stable")
    frame = frame.drop(columns="_order").reset_index(drop=True)
    ties = pd.DataFrame(
        tie_rows,
        columns=[
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
        ],
    )
    return Correlation(frame, ties, wells.reset_index(drop=True), options)
