"""Correlation section: wells side by side at their distance, hung on a datum.

Each well is a tract column (colours of :mod:`faciesseq.report.style`) at its
position along the section; correlated surfaces are lines from well to well
(solid, dashed where the tie is doubtful), and each tract's interval in one well
is shaded to the same tract's interval in the neighbouring well, between
successive ties (never across another tract's interval). Two neighbouring wells
that share no tied surface are drawn unjoined: no fill, no line between them.
"""

from __future__ import annotations

import itertools
import os
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Polygon, Rectangle

from faciesseq.correlation.wells import DEFAULT_SECTION, section_prefix
from faciesseq.errors import ConfigError, some_of
from faciesseq.report.style import (
    PAGE_WIDTH,
    check_figure_path,
    figure_style,
    new_figure,
    save_figure,
    surface_colour,
    tract_colour,
)

__all__ = [
    "CAPTION",
    "DEFAULT_SECTION",
    "Hanging",
    "check_datum",
    "check_datum_values",
    "distance_label",
    "draw_section",
    "hang_section",
    "hanging_datum",
    "section_figure",
    "section_heading",
    "section_plot",
    "section_title",
    "surface_legend_order",
    "tied_runs",
    "tract_bands",
]

CAPTION = (
    "A correlation from cores alone is a hypothesis to test against seismic, "
    "biostratigraphy and well logs; it informs a geologist's interpretation and does not "
    "replace it."
)


#: Units a position column's name states (``x_km``, ``distance_km``).
_DISTANCE_UNITS = {"km": "km", "m": "m", "ft": "ft", "mi": "mi"}


def distance_label(position_label: str) -> str:
    """The position axis' label with its units: ``x_km`` and ``distance_km`` read
    "distance along the section (km)"; a column that states no units (``distance``,
    ``position``) says the values are in the wells table's units; a label that already
    names its units (map coordinates) is kept."""
    label = str(position_label)
    if "(" in label:
        return label
    unit = _DISTANCE_UNITS.get(label.rsplit("_", 1)[-1].lower()) if "_" in label else None
    if unit is not None:
        return f"distance along the section ({unit})"
    return "distance along the section (units of the wells table)"


def section_heading(section: str) -> str:
    """``Section <name>``, or ``Correlated surfaces`` for the one section of a wells
    table that names none (not "Section section")."""
    return "Correlated surfaces" if str(section) == DEFAULT_SECTION else f"Section {section}"


def section_title(section: str, datum: str) -> str:
    """The figure's title: the section's name where the wells table names sections."""
    hung = "the core tops" if datum == "depth" else datum
    if str(section) == DEFAULT_SECTION:
        return f"Correlated surfaces, hung on {hung}"
    return f"Section {section}: correlated surfaces, hung on {hung}"


def untied_note(correlation, section: str) -> str:
    """One line naming the neighbouring wells of ``section`` that share no tied surface,
    or ``""``: the figure draws no line between them."""
    untied = correlation.untied_pairs[correlation.untied_pairs["section"] == section]
    if untied.empty:
        return ""
    pairs = ", ".join(f"{a} and {b}" for a, b in zip(untied["core_left"], untied["core_right"]))
    return f"no tie between {pairs}: their columns are drawn unjoined"


#: The datums that hang a section on no surface (:func:`hang_section`).
_PLAIN_DATUMS = ("depth", "elevation", "datum_depth")


def check_datum(datum: str, surfaces: Sequence[str], option: str = "datum") -> str:
    """``datum`` as the project spells it (``mfs``: ``MFS``; ``Depth``: ``depth``), or
    refused where it is none of depth, elevation, datum_depth, a correlated surface id
    (``central:MFS-2``) or one of ``surfaces``, the surface kinds the tract model can
    pick (``Interpretation.surfaces``): a kind it cannot pick would hang every section
    on its core tops. Case is not significant, as in tract labels. ``option`` is the
    datum's name in the message (``--datum`` on the command line)."""
    if ":" in datum:
        return datum
    spelt = {d.upper(): d for d in (*_PLAIN_DATUMS, *surfaces)}
    if datum.strip().upper() in spelt:
        return spelt[datum.strip().upper()]
    raise ConfigError(
        f"{option} {datum!r} is none of {', '.join(_PLAIN_DATUMS)}, a surface kind "
        f"({', '.join(surfaces)}) or a correlated surface's id (central:MFS-2)"
    )


def hanging_datum(
    correlation, section: str, datum: str, option: str = "datum"
) -> tuple[str, str | None]:
    """The datum to hang ``section`` on, and a warning when it is not ``datum``.

    A surface kind (e.g. ``MFS``) that no correlated surface of the section
    has falls back to the core tops (``depth``), and so does a surface id
    (``dip:MFS-2``) in the other sections; depth, elevation, datum_depth and
    the id in its own section are kept as given. An id of no section is refused
    (``option`` names the datum in the message).
    """
    if ":" in datum:
        return _hanging_id(correlation, section, datum, option)
    if datum in _PLAIN_DATUMS:
        return datum, None
    picks = correlation.picks[correlation.picks["section"] == section]
    if (picks["surface"] == datum).any():
        return datum, None
    return "depth", (
        f"{section_prefix(section)}no correlated {datum} surface; hung on the core tops"
    )


@dataclass(frozen=True)
class Hanging:
    """How the wells of one section are hung (:func:`hang_section`).

    ``shift`` is the datum's depth in each well (subtracted from its depths),
    ``label`` the depth axis' label, ``surface`` the datum surface's name
    (``MFS-2``; empty for depth, elevation or datum_depth), ``unhung`` the wells
    not hung on it: no chain of tied pairs joins them to a well the surface reaches,
    so each hangs on its own core top, drawn at the datum line; and ``through`` the
    wells the surface misses that are hung through another tied surface,
    ``(well, surface, neighbour)``: the datum lies as far from that surface in the
    well as it does in the neighbour; ``doubtful`` those of them hung through a
    doubtful tie (no confident one joins them to the neighbour).
    """

    shift: dict[str, float]
    label: str
    surface: str = ""
    unhung: tuple[str, ...] = ()
    through: tuple[tuple[str, str, str], ...] = ()
    doubtful: tuple[str, ...] = ()

    @property
    def through_note(self) -> str:
        """One line naming the wells hung on the datum through another surface, or
        ``""``: their datum is inferred from a neighbour's, not picked."""
        if not self.through:
            return ""
        wells = ", ".join(well for well, _, _ in self.through)

        def tie(well: str, sid: str, neighbour: str) -> str:
            doubt = ", a doubtful tie" if well in self.doubtful else ""
            return f"{sid} tied to {neighbour}{doubt}"

        if len(self.through) == 1:
            ((well, sid, neighbour),) = self.through
            return f"no {self.surface} in {wells}: hung through {tie(well, sid, neighbour)}"
        ways = ", ".join(f"{tie(well, sid, n)} ({well})" for well, sid, n in self.through)
        return f"no {self.surface} in {wells}: hung through {ways}"

    @property
    def unhung_note(self) -> str:
        """One line naming the wells not hung on the datum and why, or ``""``: a
        reader must not take their place for a correlation."""
        if not self.unhung:
            return ""
        return (
            f"{', '.join(self.unhung)} not hung on {self.surface}: no tie joins "
            f"{'them' if len(self.unhung) > 1 else 'it'} to the wells that have it; "
            "core top drawn at the datum line"
        )

    @property
    def notes(self) -> tuple[str, ...]:
        """The lines a reader of the section must be told (:attr:`through_note`,
        :attr:`unhung_note`), each a warning on its own; empty where every well has
        the datum."""
        return tuple(line for line in (self.through_note, self.unhung_note) if line)

    @property
    def note(self) -> str:
        """:attr:`notes` as one sentence list (``"a. b"``), or ``""``: for a caption
        or a page."""
        return ". ".join(self.notes)


def hang_section(
    correlation,
    section: str,
    datum: str,
    tracts: pd.DataFrame | None = None,
    option: str = "datum",
) -> Hanging:
    """Depth of the datum in each well of ``section``, its label and the wells not hung.

    ``datum`` is ``"depth"`` (the depths as measured, no shift), ``"elevation"``
    (depth below elevation 0, e.g. sea level: ``elevation`` is that of the
    point the core's depths are measured from, the kelly bushing or the ground,
    positive up, so a depth ``d`` lies at ``d - elevation`` below the datum: a
    well whose reference stands 100 m up has its 250 m depth drawn 150 m below
    the datum), ``"datum_depth"`` (the
    wells table's column), a correlated surface id, or a surface kind (``MFS``:
    the kind's correlated surface found in the most wells, the most confident
    among equals). A well the surface misses is hung through another surface it
    is tied by to a hung neighbour (the nearest, and the shared surface tied
    closest to the datum; :attr:`Hanging.through`), never by interpolating depths
    between wells: each core's depths start from its own reference, hundreds of
    metres apart in one section. A pair the correlation could not tie says nothing
    of where the surface lies across it, so a well no chain of tied pairs joins to
    the surface hangs on its own core top (the top of its column in ``tracts``,
    else its depths as measured) and is named in :attr:`Hanging.unhung`.
    ``option`` is the datum's name in an error message (``--datum`` on the command
    line).

    Examples
    --------
    Well C lacks the datum MFS-1 but is tied to B by SB-1, at 5 m in C and 4 m in
    B, whose MFS-1 lies at 12.5 m: C's datum is 12.5 - 4 + 5 = 13.5 m, and
    ``Hanging.through`` holds ``("C", "SB-1", "B")``.
    """
    wells = correlation.wells[correlation.wells["section"] == section]
    names = list(wells["core"])
    if datum == "depth":
        return Hanging(dict.fromkeys(names, 0.0), "depth as measured")
    if datum in ("elevation", "datum_depth"):
        values = check_datum_values(wells, datum, option)
        if datum == "elevation":
            # a depth reference standing `elevation` above the datum puts depth d at
            # d - elevation below it (true vertical depth subsea = depth - KB elevation)
            return Hanging(dict(zip(names, values)), "depth below datum (elevation 0)")
        return Hanging(dict(zip(names, values)), "depth below the datum")
    chosen = _datum_surface(correlation, section, datum, option)
    surface = str(chosen["surface_id"].iloc[0]).split(":", 1)[-1]
    shift = {str(c): float(d) for c, d in zip(chosen["core"], chosen["depth"])}
    pos = dict(zip(wells["core"], wells["position"]))
    ties = correlation.ties[correlation.ties["section"] == section]
    through, doubtful = _hang_through_ties(ties, names, pos, shift)
    tops = {} if tracts is None else tracts.groupby("core")["top"].min().to_dict()
    unhung = [c for c in names if c not in shift]
    for c in unhung:
        shift[c] = float(tops.get(c, 0.0))
    return Hanging(
        {c: shift[c] for c in names},
        f"depth below {surface}",
        surface,
        tuple(unhung),
        tuple(through),
        tuple(doubtful),
    )


def _hang_through_ties(
    ties: pd.DataFrame, names: list[str], position: dict, shift: dict[str, float]
) -> tuple[list[tuple[str, str, str]], list[str]]:
    """Hang the wells the datum surface misses through their ties, in place.

    ``shift`` holds the datum's depth in the wells that have it. Out from them, well by
    well, a well the datum misses takes it through a tie to a hung neighbour: the
    nearest along the section (the left one where both are as near), and of the
    surfaces the two share, the one tied closest to the datum in that neighbour (a
    confident tie before a doubtful one); the datum then lies as far above or below
    that tie in both wells. A core's depths are its own (cores start hundreds of metres
    apart), so the datum is never interpolated between wells. Returns ``(well, surface,
    neighbour)`` for each well so hung, in the order hung, and the wells hung through a
    doubtful tie; wells no chain of tied pairs joins to the datum are left out of
    ``shift``.
    """
    pairs: dict[tuple[str, str], list[tuple[float, float, str, bool]]] = {}
    for t in ties.itertuples(index=False):
        sid = str(t.surface_id).split(":", 1)[-1]
        left, right = str(t.core_left), str(t.core_right)
        doubt = bool(getattr(t, "doubtful", False))
        pairs.setdefault((left, right), []).append(
            (float(t.depth_left), float(t.depth_right), sid, doubt)
        )
        pairs.setdefault((right, left), []).append(
            (float(t.depth_right), float(t.depth_left), sid, doubt)
        )
    through: list[tuple[str, str, str]] = []
    doubtful: list[str] = []
    while True:
        # each round hangs every well next to one hung before it, so that a well between
        # two hung ones takes the nearer whichever side was hung first
        hung = dict(shift)
        found = []
        for k, well in enumerate(names):
            if well in hung:
                continue
            beside = [names[j] for j in (k - 1, k + 1) if 0 <= j < len(names)]
            beside = [n for n in beside if n in hung and (well, n) in pairs]
            if not beside:
                continue
            neighbour = min(beside, key=lambda n: abs(position[n] - position[well]))
            depth_here, depth_there, sid, doubt = min(
                pairs[(well, neighbour)],
                key=lambda tie: (tie[3], abs(tie[1] - hung[neighbour])),
            )
            found.append((well, depth_here + hung[neighbour] - depth_there, sid, neighbour, doubt))
        if not found:
            return through, doubtful
        for well, depth, sid, neighbour, doubt in found:
            shift[well] = depth
            through.append((well, sid, neighbour))
            doubtful += [well] if doubt else []


def _hanging_id(correlation, section: str, datum: str, option: str) -> tuple[str, str | None]:
    """:func:`hanging_datum` of a surface id: its own section hangs on it, the others on
    their core tops (a surface id names one section's surface)."""
    sections = {str(s).upper(): str(s) for s in correlation.wells["section"].unique()}
    home = sections.get(datum.split(":", 1)[0].upper())
    if home is None:
        raise ConfigError(
            f"{option} {datum!r}: no section {datum.split(':', 1)[0]!r} (the sections are "
            f"{some_of(sorted(sections.values()))}; a surface id is SECTION:KIND-n)"
        )
    if home == str(section):
        return datum, None
    return (
        "depth",
        f"{section_prefix(section)}{datum} is a surface of section {home}; hung on the core tops",
    )


def check_datum_values(wells: pd.DataFrame, datum: str, option: str = "datum") -> np.ndarray:
    """The ``elevation`` or ``datum_depth`` column of a wells frame, refused where a
    well has none (a wells table made in Python may lack the column altogether)."""
    values = wells[datum].to_numpy(float) if datum in wells else np.full(len(wells), np.nan)
    if np.isnan(values).any():
        lacking = some_of([str(c) for c in wells["core"][np.isnan(values)]])
        article = "an" if datum[0] in "aeiou" else "a"
        raise ConfigError(
            f"{option} {datum} needs {article} {datum!r} value for every well; {lacking} "
            f"{'has' if np.isnan(values).sum() == 1 else 'have'} none in the wells table"
        )
    return values


def _datum_surface(correlation, section: str, datum: str, option: str) -> pd.DataFrame:
    """The picks of the correlated surface ``datum`` names in ``section``: a surface id,
    or of a kind the surface found in the most wells, the most confident among equals."""
    picks = correlation.picks[correlation.picks["section"] == section]
    chosen = picks[picks["surface_id"].str.upper() == datum.upper()]
    if len(chosen):
        return chosen
    if ":" in datum:
        raise ConfigError(
            f"{option} {datum!r} is no correlated surface; the surfaces of its section are "
            f"{some_of(list(dict.fromkeys(picks['surface_id'])))}"
        )
    kind = picks[picks["surface"] == datum]
    if not len(kind):
        raise ConfigError(
            f"{option} {datum!r} is neither depth, elevation, datum_depth, a correlated "
            f"surface id nor a correlated surface kind of section {section!r}"
        )
    rank = kind.groupby("surface_id").agg(wells=("core", "size"), confidence=("confidence", "mean"))
    best = rank.sort_values(["wells", "confidence"], ascending=False, kind="stable").index[0]
    return picks[picks["surface_id"] == best]


def tied_runs(ties: pd.DataFrame, names: list[str]) -> list[list[str]]:
    """The wells ``names`` (in section order) cut into runs of neighbours joined by at
    least one tie: a run ends at each pair the correlation left untied, the pairs a
    section figure draws unjoined."""
    joined = set(zip(ties["core_left"], ties["core_right"]))
    runs: list[list[str]] = []
    for k, name in enumerate(names):
        if k and (names[k - 1], name) in joined:
            runs[-1].append(name)
        else:
            runs.append([name])
    return runs


def _tract_runs(tracts: pd.DataFrame, top: float, base: float) -> list[tuple[float, float, str]]:
    """``(top, base, tract)`` of the runs of one tract in one well between ``top`` and
    ``base`` (beds clipped to it), in depth order; touching beds of a tract join."""
    inside = tracts[(tracts["base"] > top) & (tracts["top"] < base)].sort_values("top")
    runs: list[tuple[float, float, str]] = []
    for bed in inside.itertuples(index=False):
        t, b, code = max(float(bed.top), top), min(float(bed.base), base), str(bed.tract)
        if runs and runs[-1][2] == code and abs(runs[-1][1] - t) < 1e-9:
            runs[-1] = (runs[-1][0], b, code)
        elif b > t:
            runs.append((t, b, code))
    return runs


def _matched_runs(left: list, right: list) -> list[tuple[int, int]]:
    """Pairs ``(i, j)`` of runs of the same tract, the most pairs that keep their depth
    order in both wells (a longest common subsequence of the tract codes), so that no
    two fills cross."""
    n, m = len(left), len(right)
    best = np.zeros((n + 1, m + 1), dtype=int)
    for i in range(n - 1, -1, -1):
        for j in range(m - 1, -1, -1):
            same = left[i][2] == right[j][2]
            best[i, j] = best[i + 1, j + 1] + 1 if same else max(best[i + 1, j], best[i, j + 1])
    pairs, i, j = [], 0, 0
    while i < n and j < m:
        if left[i][2] == right[j][2] and best[i, j] == best[i + 1, j + 1] + 1:
            pairs.append((i, j))
            i, j = i + 1, j + 1
        elif best[i + 1, j] >= best[i, j + 1]:
            i += 1
        else:
            j += 1
    return pairs


def tract_bands(ties: pd.DataFrame, columns: dict, names: list[str]) -> list[tuple]:
    """Tract shading between neighbouring wells, between successive ties.

    ``(left, right, (top_left, base_left, top_right, base_right), tract)`` for
    every band, depths unshifted. Between two successive ties (and above the first,
    below the last) each run of a tract in the left well is joined to a run of the
    same tract in the right well, in depth order (the most such pairs, none crossing);
    a run with no partner (a tract that thins out between the wells) is not shaded,
    so a fill never spans another tract's interval. Two wells that share no tie are
    not joined at all: without a tie nothing says which of their intervals are of
    one age.
    """
    out = []
    for left, right in itertools.pairwise(names):
        pair = ties[(ties["core_left"] == left) & (ties["core_right"] == right)]
        if pair.empty:
            continue
        a, b = columns[left], columns[right]
        levels = [(a["top"].min(), b["top"].min())]
        levels += list(zip(pair["depth_left"], pair["depth_right"]))
        levels += [(a["base"].max(), b["base"].max())]
        for (ta, tb), (ba, bb) in itertools.pairwise(levels):
            if not (ba > ta and bb > tb):
                continue
            runs_a, runs_b = _tract_runs(a, ta, ba), _tract_runs(b, tb, bb)
            for i, j in _matched_runs(runs_a, runs_b):
                (t0, b0, code), (t1, b1, _) = runs_a[i], runs_b[j]
                out.append((left, right, (t0, b0, t1, b1), code))
    return out


#: Size of a surface id in the section figure (points).
_LABEL_POINTS = 5.5


def _surface_labels(ax, correlation, section, shift, width) -> None:
    """Ids of the correlated surfaces right of the first and the last well they reach
    (:func:`label_wells`), none over another: ids whose text would overlap side by
    side are spread up and down about their surfaces' depths (:func:`_spread`), inside
    the depth axis. Call once the axes' limits are set; only the ids move, never a
    line."""
    picks = correlation.picks[correlation.picks["section"] == section]
    fig, box = ax.figure, ax.get_position()
    x_per_inch = abs(np.subtract(*ax.get_xlim())) / (fig.get_figwidth() * box.width)
    y_per_inch = abs(np.subtract(*ax.get_ylim())) / (fig.get_figheight() * box.height)
    gap = 1.3 * _LABEL_POINTS / 72 * y_per_inch
    labels = []
    for sid, part in picks.groupby("surface_id"):
        text = str(sid).split(":", 1)[-1]
        for well in label_wells(part):
            x = float(well["position"]) + width * 0.55
            # a character of DejaVu Sans is at most about 0.65 of the font's size wide
            right = x + len(text) * 0.65 * _LABEL_POINTS / 72 * x_per_inch
            y = float(well["depth"] - shift[well["core"]])
            labels.append((x, right, y, text, str(well["surface"])))
    low, high = sorted(ax.get_ylim())
    for group in _side_by_side(labels):
        group.sort(key=lambda label: label[2])
        placed = _spread([label[2] for label in group], gap, low + gap / 2, high - gap / 2)
        for (x, _, _, text, kind), y in zip(group, placed):
            ax.text(
                x,
                y,
                text,
                fontsize=_LABEL_POINTS,
                va="center",
                color=surface_colour(kind),
                gid="surface-label",
            )


def label_wells(picks: pd.DataFrame) -> list[pd.Series]:
    """The picks of one correlated surface whose wells its id is written beside: the
    last well it reaches, and the first where it reaches three or more (on a wide
    section an id at one end only left the line unnamed near the other wells; between
    two wells the line is short enough to follow); none for a surface in one well.
    The section figure and the section page (:mod:`faciesseq.report.section_view`)
    both name surfaces by it."""
    if len(picks) < 2:
        return []
    ordered = picks.sort_values("position")
    ends = [ordered.iloc[-1]]
    return [ordered.iloc[0], *ends] if len(picks) > 2 else ends


def _side_by_side(labels: list[tuple]) -> list[list[tuple]]:
    """``labels`` (``left``, ``right``, ...) cut into groups whose spans left to right
    overlap, one after another: ids of one group could overlap, those of two cannot."""
    groups: list[list[tuple]] = []
    reach = -np.inf
    for label in sorted(labels, key=lambda label: label[0]):
        if not groups or label[0] > reach:
            groups.append([])
        groups[-1].append(label)
        reach = max(reach, label[1])
    return groups


def _spread(wanted: list[float], gap: float, low: float, high: float) -> list[float]:
    """Positions of labels wanted at ``wanted`` (ascending), at least ``gap`` apart and
    within ``low`` and ``high`` where they fit, each cluster of crowded labels centred
    on the labels' own positions, so that each lies as near its line as may be."""
    clusters: list[list[float]] = []  # first position, count, sum of wanted - k * gap
    for y in wanted:
        clusters.append([0.0, 1, y])
        while True:
            _, count, total = clusters[-1]
            start = min(max(total / count, low), max(high - (count - 1) * gap, low))
            clusters[-1][0] = start
            if len(clusters) < 2 or clusters[-2][0] + clusters[-2][1] * gap <= start:
                break
            clusters.pop()
            before = clusters[-1]
            before[2] += total - count * before[1] * gap
            before[1] += count
    return [start + k * gap for start, count, _ in clusters for k in range(count)]


def section_figure(
    correlation,
    section: str,
    tracts: pd.DataFrame,
    path: str | os.PathLike,
    **options,
) -> Path:
    """Draw one section (:func:`section_plot`) and save it; the suffix of ``path``
    chooses PNG, SVG or PDF."""
    with figure_style():
        return save_figure(section_plot(correlation, section, tracts, **options), path)


def draw_section(
    correlation,
    interpretation,
    path: str | os.PathLike,
    *,
    section: str | None = None,
    datum: str = "MFS",
    position_label: str = "distance",
) -> Path:
    """The section figure ``faciesseq correlate`` draws, from Python: the correlated
    surfaces of one section over the decoded tract column of each of its wells.

    Parameters
    ----------
    correlation
        A :class:`faciesseq.correlation.Correlation`
        (:func:`~faciesseq.correlation.correlate_interpretation`).
    interpretation
        The :class:`~faciesseq.interpretation.Interpretation` it was made from (the
        tract columns, the depth units, the tract and surface order).
    path
        File to write; its suffix chooses PNG, SVG or PDF.
    section
        The section to draw; may be left out where the wells table has one.
    datum
        A surface kind to hang the wells on (``MFS``; the core tops where the
        section has none, with a warning), ``depth``, ``elevation`` or
        ``datum_depth`` (:func:`hang_section`).
    position_label
        The wells table's position column, for the distance axis' label
        (:func:`distance_label`: ``x_km`` reads "km").

    Returns
    -------
    Path
        The file written.
    """
    path = check_figure_path(path)
    datum = check_datum(datum, tuple(interpretation.surfaces))
    sections = sorted(correlation.wells["section"].unique())
    if section is None:
        if len(sections) != 1:
            raise ConfigError(
                f"the correlation has {len(sections)} sections ({', '.join(sections)}): "
                "name one with section="
            )
        section = sections[0]
    elif section not in sections:
        raise ConfigError(f"no section {section!r}; the sections are {', '.join(sections)}")
    datum, datum_note = hanging_datum(correlation, section, datum)
    if datum_note:
        warnings.warn(datum_note, stacklevel=2)
    tracts = interpretation.tracts_table()
    hanging = hang_section(correlation, section, datum, tracts)
    for line in hanging.notes:
        warnings.warn(f"{section_prefix(section)}{line}", stacklevel=2)
    units = next((core.units for core in interpretation), "m")
    return section_figure(
        correlation,
        section,
        tracts,
        path,
        datum=datum,
        units=units,
        position_label=position_label,
        tract_order=tuple(interpretation.tracts),
        surface_order=tuple(interpretation.surfaces),
        hanging=hanging,
        datum_note=datum_note or "",
    )


def section_plot(
    correlation,
    section: str,
    tracts: pd.DataFrame,
    datum: str = "MFS",
    units: str = "m",
    position_label: str = "distance",
    tract_order: tuple[str, ...] = (),
    surface_order: tuple[str, ...] = (),
    *,
    hanging: Hanging | None = None,
    datum_note: str = "",
):
    """One section as a matplotlib figure (call inside :func:`figure_style`).

    Parameters
    ----------
    correlation
        A :class:`faciesseq.correlation.Correlation`.
    section
        The section to draw.
    tracts
        Decoded tract column of every core: ``core``, ``top``, ``base``, ``tract``.
    datum
        See :func:`hang_section`.
    units, position_label
        Depth units, and the wells table's position column (the axis label with
        its units, :func:`distance_label`).
    tract_order
        Tract codes in the tract model's order (legend, extra colours).
    surface_order
        Surface codes in the tract model's order (``Interpretation.surfaces``): the
        legend lists the section's tied surfaces in it (:func:`surface_legend_order`).
    hanging
        The section already hung, ``hang_section(correlation, section, datum, tracts)``,
        by a caller that has read its notes; hung here where ``None``.
    datum_note
        The warning of :func:`hanging_datum` where the datum asked for fell back to the
        core tops, drawn under the section with the wells left unjoined
        (:func:`untied_note`) and the hanging's notes.
    """
    wells, hanging = _section_wells(correlation, section, tracts, datum, hanging)
    ties = correlation.ties[correlation.ties["section"] == section]
    order = tract_order or tuple(dict.fromkeys(tracts["tract"].astype(str)))
    notes = [datum_note.removeprefix(section_prefix(section)), *hanging.notes]
    notes = [line for line in (*notes, untied_note(correlation, section)) if line]
    # one line fits between the axis label and the caption (two lines when wrapped);
    # more raise the axes
    extra = 0.025 * max(0, len(notes) - 1)
    fig = new_figure(PAGE_WIDTH, 5.2)
    ax = fig.add_axes((0.09, 0.2 + extra, 0.7, 0.72 - extra))
    _tract_fills(ax, wells, ties, order)
    _tie_lines(ax, wells, ties)
    _tract_columns(ax, wells, order)
    top = min(wells.columns[c]["top"].min() - wells.shift[c] for c in wells.names)
    base = max(wells.columns[c]["base"].max() - wells.shift[c] for c in wells.names)
    pad = 0.03 * (base - top)
    ax.set_ylim(base + pad, top - 3 * pad)
    ax.set_xlim(
        min(wells.position.values()) - wells.width, max(wells.position.values()) + wells.width
    )
    _well_names(ax, wells, pad)
    _surface_labels(ax, correlation, section, wells.shift, wells.width)
    if datum != "depth":
        ax.axhline(0, color="0.5", linewidth=0.5, linestyle=":")
    ax.set_xlabel(distance_label(position_label))
    # hung on a datum, depths above it are negative: said, as a new user read "depth below
    # MFS-4" running from -140 to 20 as an error
    above = "" if datum == "depth" else "; above it negative"
    ax.set_ylabel(f"{hanging.label} ({units}{above})")
    ax.set_title(section_title(section, datum), parse_math=False)
    _section_legend(ax, surface_legend_order(correlation, section, surface_order), order)
    fig.text(0.09, 0.04, CAPTION, fontsize=6.5, wrap=True, color="0.25")
    for k, line in enumerate(notes):
        fig.text(0.09, 0.095 + extra - 0.025 * k, line, fontsize=6.5)
    return fig


@dataclass(frozen=True)
class _Wells:
    """The wells of one section as drawn: names in section order, position along the
    section, the datum's depth in each (subtracted from its depths), the tract column
    of each and the width of a column (units of the position)."""

    names: list[str]
    position: dict[str, float]
    shift: dict[str, float]
    columns: dict[str, pd.DataFrame]
    width: float


def _section_wells(
    correlation, section: str, tracts: pd.DataFrame, datum: str, hanging: Hanging | None = None
):
    """The :class:`_Wells` of ``section`` hung on ``datum``, and the :class:`Hanging`
    (:func:`hang_section`, unless given); a column is 0.22 of the section's length per
    well wide."""
    wells = correlation.wells[correlation.wells["section"] == section]
    if hanging is None:
        hanging = hang_section(correlation, section, datum, tracts)
    names = list(wells["core"])
    span = max(float(wells["position"].max() - wells["position"].min()), 1e-9)
    drawn = _Wells(
        names=names,
        position=dict(zip(wells["core"], wells["position"])),
        shift=hanging.shift,
        columns={c: tracts[tracts["core"] == c] for c in names},
        width=span / max(len(names), 1) * 0.22,
    )
    return drawn, hanging


def _tract_fills(ax, wells: _Wells, ties: pd.DataFrame, order) -> None:
    """Each tract's interval shaded to the same tract's interval in the next well
    (:func:`tract_bands`)."""
    shift, half = wells.shift, wells.width / 2
    for left, right, (ta, ba, tb, bb), code in tract_bands(ties, wells.columns, wells.names):
        x0, x1 = wells.position[left] + half, wells.position[right] - half
        corners = [
            (x0, ta - shift[left]),
            (x1, tb - shift[right]),
            (x1, bb - shift[right]),
            (x0, ba - shift[left]),
        ]
        colour = tract_colour(code, order)
        ax.add_patch(Polygon(corners, closed=True, facecolor=colour, alpha=0.28, linewidth=0))


def _tie_lines(ax, wells: _Wells, ties: pd.DataFrame) -> None:
    """Each tie a line from well to well in its surface's colour, thin and dashed
    where the tie is doubtful."""
    pos, shift, half = wells.position, wells.shift, wells.width / 2
    for t in ties.itertuples(index=False):
        ax.plot(
            [pos[t.core_left] + half, pos[t.core_right] - half],
            [t.depth_left - shift[t.core_left], t.depth_right - shift[t.core_right]],
            color=surface_colour(t.surface),
            linestyle="--" if t.doubtful else "-",
            linewidth=0.7 if t.doubtful else 1.3,
        )


def _tract_columns(ax, wells: _Wells, order) -> None:
    """Each well's decoded tract column, a box per bed, framed from top to base."""
    for c in wells.names:
        left, col, shift = wells.position[c] - wells.width / 2, wells.columns[c], wells.shift[c]
        for bed in col.itertuples(index=False):
            ax.add_patch(
                Rectangle(
                    (left, bed.top - shift),
                    wells.width,
                    bed.base - bed.top,
                    facecolor=tract_colour(str(bed.tract), order),
                    edgecolor="none",
                )
            )
        ax.add_patch(
            Rectangle(
                (left, col["top"].min() - shift),
                wells.width,
                col["base"].max() - col["top"].min(),
                fill=False,
                edgecolor="black",
                linewidth=0.5,
            )
        )


def _well_names(ax, wells: _Wells, pad: float) -> None:
    """Each well's name above its column, upright where there are up to ten wells."""
    for c in wells.names:
        ax.text(
            wells.position[c],
            wells.columns[c]["top"].min() - wells.shift[c] - pad,
            c,
            ha="center",
            va="bottom",
            fontsize=7,
            rotation=0 if len(wells.names) <= 10 else 90,
        )


def surface_legend_order(correlation, section: str | None, surface_order=()) -> list[str]:
    """The surface kinds tied in ``section`` (``None``: in any section), in one order
    for every section and every output: ``surface_order`` (the tract model's), then
    kinds it lacks in the order they first appear among all the correlation's ties
    (whatever section), so two sections of one correlation, or a figure and the
    section page, never list their surfaces in different orders."""
    every = list(dict.fromkeys([*surface_order, *correlation.ties["surface"].astype(str)]))
    ties = correlation.ties
    if section is not None:
        ties = ties[ties["section"] == section]
    here = set(ties["surface"].astype(str))
    return [kind for kind in every if kind in here]


def _section_legend(ax, kinds: list[str], order) -> None:
    """The legend right of the section: tracts, the surfaces tied and a doubtful tie."""
    handles = [Patch(facecolor=tract_colour(t, order), label=t) for t in order]
    handles += [Line2D([], [], color=surface_colour(k), linewidth=1.3, label=k) for k in kinds]
    handles += [Line2D([], [], color="0.3", linestyle="--", linewidth=0.7, label="doubtful")]
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.07, 1.0), frameon=False)
