"""The appendix's correlation section: one sub-section per section of the wells table.

Each sub-section shows the section figure (:func:`faciesseq.report.section.section_plot`)
and the table of its ties (correlated surface, the two wells and depths, the
tie's confidence, whether it is doubtful), then a sentence for each pair of
neighbouring wells tied by the order of their picks alone and for each pair that
shares no tied surface. The section opens with the caution that a correlation
from cores alone is a hypothesis.
"""

from __future__ import annotations

import re

import pandas as pd

from faciesseq.report.document import FigureBlock, Paragraph, Section, TableBlock
from faciesseq.report.section import (
    CAPTION,
    distance_label,
    hang_section,
    hanging_datum,
    section_heading,
    section_plot,
)
from faciesseq.report.style import figure_style

__all__ = ["correlation_section"]

METHOD = (
    "Every core with a row in the wells table was decoded; the surface picks of neighbouring "
    "wells along each section were tied by an order-preserving alignment (Needleman & Wunsch "
    "1970; for well logs Smith & Waterman 1980, Waterman & Raymond 1987): only picks of one "
    "kind are tied, ties never cross and a pick may stay untied. A tie's confidence is the "
    "geometric mean of its two picks' probabilities times exp(-cost / gap), its cost the "
    "misfit of fractional position and cycle thickness; ties below {doubtful} are doubtful "
    "(dashed in the figures). Two neighbouring wells left without a tie (cores covering "
    "different parts of the succession) are aligned again by the order of their picks "
    "alone; those ties are always doubtful. Ties chained along a section form one "
    "correlated surface."
)


def _ties_table(ties: pd.DataFrame, units: str) -> pd.DataFrame:
    return pd.DataFrame(
        {
            "surface": ties["surface_id"].astype(str).str.split(":", n=1).str[-1].to_numpy(),
            "well": ties["core_left"].to_numpy(),
            f"depth ({units})": ties["depth_left"].to_numpy(float),
            "tied well": ties["core_right"].to_numpy(),
            f"tied depth ({units})": ties["depth_right"].to_numpy(float),
            "confidence": ties["confidence"].to_numpy(float),
            "doubtful": ["yes" if d else "" for d in ties["doubtful"]],
        }
    ).set_index("surface")


def _pair_notes(correlation, name) -> list[str]:
    """Sentences on the pairs of ``name`` tied by order alone and the pairs left untied."""
    ties = correlation.ties[correlation.ties["section"] == name]
    by_order = ties[ties["tied_by"] == "order"]
    notes = [
        f"{left} and {right} were tied by the order of their picks alone (their cores "
        "cover different parts of the succession); these ties are doubtful and may be one "
        "cycle off."
        for left, right in dict.fromkeys(zip(by_order["core_left"], by_order["core_right"]))
    ]
    untied = correlation.untied_pairs[correlation.untied_pairs["section"] == name]
    notes += [
        f"{left} and {right} share no tied surface; their columns are drawn unjoined and "
        "the table has no tie between them."
        for left, right in zip(untied["core_left"], untied["core_right"])
    ]
    return notes


def correlation_section(
    correlation,
    tracts: pd.DataFrame,
    tract_order: tuple[str, ...],
    datum: str = "MFS",
    units: str = "m",
    position_label: str = "distance",
    surface_order: tuple[str, ...] = (),
) -> Section:
    """The appendix section of a correlation (see the module docstring).

    Parameters
    ----------
    correlation
        A :class:`faciesseq.correlation.Correlation`.
    tracts
        Decoded tract column of every core: ``core``, ``top``, ``base``, ``tract``.
    tract_order, datum, units, position_label, surface_order
        As for :func:`faciesseq.report.section.section_plot`; a section
        without a correlated surface of the datum's kind is hung on the core
        tops (``depth``), and its caption says so, as it names the wells not hung
        on the datum surface (:attr:`faciesseq.report.section.Hanging.note`).
    """
    s = Section("Correlation")
    s.add(Paragraph(CAPTION, kind="note"))
    s.add(Paragraph(METHOD.format(doubtful=f"{correlation.options.doubtful:g}")))
    for k, name in enumerate(sorted(correlation.wells["section"].unique()), start=1):
        slug = re.sub(r"[^a-z0-9]+", "-", str(name).lower()).strip("-")[:40]
        key = f"section{k:02d}" + (f"-{slug}" if slug else "")
        heading = section_heading(name)
        sub = s.sub(heading)
        hung, _ = hanging_datum(correlation, name, datum)
        hanger = "the core tops" if hung == "depth" else hung
        hanging = hang_section(correlation, name, hung, tracts)
        unhung = hanging.note
        with figure_style():
            fig = section_plot(
                correlation,
                name,
                tracts,
                hung,
                units,
                position_label,
                tract_order,
                surface_order,
                hanging=hanging,
            )
        wells = correlation.wells[correlation.wells["section"] == name]
        sub.add(
            FigureBlock(
                f"{key}_figure",
                f"{heading}: {len(wells)} wells at their "
                f"{distance_label(position_label)}, hung "
                f"on {hanger}; decoded tract columns, correlated surfaces (dashed: doubtful) "
                f"and tracts shaded between ties. {unhung + '. ' if unhung else ''}{CAPTION}",
                fig,
            )
        )
        ties = correlation.ties[correlation.ties["section"] == name]
        if len(ties):
            sub.add(
                TableBlock(
                    f"{key}_ties",
                    f"Ties, {heading[0].lower() + heading[1:]}, well to next well along the "
                    "section: correlated "
                    f"surface, depths ({units}) and the tie's confidence.",
                    _ties_table(ties, units),
                    probabilities=("confidence",),
                )
            )
        else:
            sub.add(Paragraph(f"No surface was tied ({heading[0].lower() + heading[1:]})."))
        for note in _pair_notes(correlation, name):
            sub.add(Paragraph(note, kind="note"))
    return s
