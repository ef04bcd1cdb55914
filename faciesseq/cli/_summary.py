"""The per-well summary that ``fit`` and ``decode`` print: one line per core, or JSON.

Each line gives the core, the thickness of each tract (in the core's depth
units), the number of parasequence-scale cycles (with a facies scheme), the
number of surface picks and the mean probability of the decoded tract. A
report on thousands of wells stays short: at most :data:`WELL_LIMIT` lines, then
how many more there are. The JSON document lists every well.
"""

from __future__ import annotations

import json
import math

__all__ = [
    "JSON_DECIMALS",
    "SUMMARY_SCHEMA",
    "WELL_LIMIT",
    "print_json",
    "print_summary",
    "rounded",
    "summary_document",
    "summary_lines",
]

#: Most wells listed in the text summary.
WELL_LIMIT = 30
#: Schema name of the JSON summary (keys may be added, none removed or renamed).
SUMMARY_SCHEMA = "faciesseq.wells/1"
#: Decimals of the thicknesses (depth units) and probabilities in the JSON summary: a
#: sum of bed thicknesses carries float noise (22.699999999999818 for 22.7), and depths
#: are read to far fewer decimals than six, probabilities checked to no more.
JSON_DECIMALS = 6


def _wells(interp, scheme, limit: int | None = None) -> list[dict]:
    """The summary of every core, or of the first ``limit`` (the text lists no more)."""
    from itertools import islice

    from faciesseq.interpretation import core_summary

    return [core_summary(core, scheme) for core in islice(interp, limit)]


def _number(value: float) -> str:
    """A thickness with two decimals, so that a column of wells lines up (four
    significant figures printed 3.753 beside 33.95, and 1.235e+04 for a thick tract)."""
    return f"{value:.2f}"


def _line(well: dict) -> str:
    units = well["units"]
    parts = [", ".join(f"{t} {_number(v)} {units}" for t, v in well["thickness"].items())]
    if "cycles" in well:
        parts.append(f"{well['cycles']} cycle(s)")
    parts.append(f"{well['picks']} pick(s)")
    p = well["mean_probability"]
    parts.append("mean p(tract) " + ("-" if math.isnan(p) else f"{p:.2f}"))
    return f"  {well['core']}: " + "; ".join(parts)


#: What the mean probability of a fit without labels is, said in the heading: how sure
#: the model is of names that rest on its priors (a new user read 0.83 as trust in a
#: column 0.47 right, 2026-12-05).
UNLABELLED_PROBABILITY = "the model's certainty in names resting on priors, not a measured accuracy"


def summary_lines(
    wells: list[dict],
    more: str,
    limit: int = WELL_LIMIT,
    total: int | None = None,
    labelled: bool = True,
) -> list[str]:
    """The text summary: a heading, at most ``limit`` wells, then how many are left out.

    Parameters
    ----------
    wells
        One :func:`faciesseq.interpretation.core_summary` per core (at least the
        first ``limit``).
    more
        Where the wells left out can be seen (e.g. ``"see the output files"``).
    limit
        Most wells listed.
    total
        Number of wells in all (default: ``len(wells)``).
    labelled
        Whether the model's tract names were learnt from labelled beds; where not, the
        heading says what the mean probability is (:data:`UNLABELLED_PROBABILITY`).

    Returns
    -------
    list of str
        Lines without newlines.
    """
    cycles = ", parasequence-scale cycles" if wells and "cycles" in wells[0] else ""
    what = "" if labelled else f": {UNLABELLED_PROBABILITY}"
    head = (
        f"per well (thickness per tract{cycles}, surface picks, mean probability of the "
        f"tract{what}):"
    )
    lines = [head, *(_line(w) for w in wells[:limit])]
    total = len(wells) if total is None else total
    if total > limit:
        lines.append(f"  ... and {total - limit} more ({more})")
    return lines


def rounded(value: float | None) -> float | None:
    """``value`` to :data:`JSON_DECIMALS` decimals; ``None`` for ``None`` or NaN."""
    if value is None or math.isnan(value):
        return None
    return round(float(value), JSON_DECIMALS)


def _json_well(well: dict) -> dict:
    thickness = {t: rounded(v) for t, v in well["thickness"].items()}
    return {**well, "thickness": thickness, "mean_probability": rounded(well["mean_probability"])}


def summary_document(interp, scheme, command: str, **extra) -> dict:
    """The JSON summary: schema, command, probabilities checked or not, every well.

    Parameters
    ----------
    interp
        The decoded cores (:class:`faciesseq.interpretation.Interpretation`).
    scheme
        Facies scheme whose ranks cut the cycles, or ``None`` (no ``cycles``).
    command
        ``"fit"`` or ``"decode"``.
    **extra
        More top-level keys (e.g. ``output``).

    Returns
    -------
    dict
        ``schema``, ``command``, the ``extra`` keys, ``probabilities``
        (``checked``, ``note``), ``n_wells`` and ``wells`` (thicknesses and mean
        probabilities to :data:`JSON_DECIMALS` decimals).
    """
    wells = _wells(interp, scheme)
    return {
        "schema": SUMMARY_SCHEMA,
        "command": command,
        **extra,
        "probabilities": {
            "checked": interp.probabilities_checked,
            "note": interp.probabilities_note,
        },
        "n_wells": len(wells),
        "wells": [_json_well(w) for w in wells],
    }


def print_summary(interp, scheme, more: str, note: bool = True, total: int | None = None) -> None:
    """Print the text summary of the wells and, with ``note``, a line saying that the
    probabilities were not checked where they were not; ``total``: the number of wells
    where ``interp`` holds only the first of them."""
    wells = _wells(interp, scheme, WELL_LIMIT)
    total = len(interp) if total is None else total
    for line in summary_lines(wells, more, total=total, labelled=interp.tracts_labelled):
        print(line)
    if note and not interp.probabilities_checked:
        print(f"note: {interp.probabilities_note}")


def print_json(document: dict) -> None:
    """Print one JSON document (NaN written as null by :func:`summary_document`)."""
    print(json.dumps(document, indent=1, allow_nan=False))
