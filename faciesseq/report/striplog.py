"""Strip log of one decoded core: facies, tract column, posteriors, surfaces.

Depth increases downward on a shared vertical axis. From left to right:

1. the facies column, one box per bed in the scheme's colour; box width is
   the bed's grain-size class where every bed's grain size is known (from the
   bed or its facies in the scheme), otherwise the facies' proximality rank
   (landward facies drawn wider, as coarser shallow facies usually are;
   common practice in drawn logs);
2. the decoded (most likely, Viterbi) tract column;
3. the posterior probability of each tract per bed, stacked to 1; a bed held at the
   geologist's label (``decode --keep-labels``) hatched, its 1 being the label's;
4. the probability of each named surface per depth cell (from
   :meth:`CoreInterpretation.curves`), with the picks marked and labelled with
   their probability and uncertainty interval.

Picks are also drawn as thin lines across the facies and tract columns.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from matplotlib.collections import PolyCollection
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from faciesseq.errors import InputError
from faciesseq.interpretation import CoreInterpretation, Interpretation, core_list, held_beds
from faciesseq.report.document import format_probability
from faciesseq.report.style import (
    HELD_NOTE,
    PAGE_WIDTH,
    check_figure_path,
    facies_colour,
    figure_style,
    held_ink,
    new_figure,
    save_figure,
    surface_colour,
    tract_colour,
)
from faciesseq.scheme import FaciesScheme, TractModel

__all__ = [
    "GRAIN_CLASSES",
    "REFERENCE_NOTE",
    "SURFACE_AXIS_END",
    "UNCHECKED_NOTE",
    "UNLABELLED_NOTE",
    "VISIBLE_PROBABILITY",
    "bed_widths",
    "drawn_surfaces",
    "facies_name",
    "pick_label",
    "plain",
    "strip_log",
    "strip_logs",
]

#: Grain-size classes of the facies scheme (1 clay ... 7 gravel), abbreviated for ticks.
GRAIN_CLASSES = ("cl", "si", "vf", "f", "m", "c", "gr")
#: Printed under the probability track when the probabilities were not checked.
UNCHECKED_NOTE = "probabilities not checked"
#: Printed under the probability track of a core decoded by a fit without labels.
UNLABELLED_NOTE = "tract names from priors (no labels)"
#: The same where the fit read a reference model (a reference is read only without labels).
REFERENCE_NOTE = "names from priors and a reference"
_GAP = "#f0f0f0"
#: Right end of the surface panel (strip log and view): a pick at probability 1
#: keeps its marker inside.
SURFACE_AXIS_END = 1.1


def plain(text: object) -> str:
    """User text made safe for matplotlib (a ``$`` must not start mathematics)."""
    return str(text).replace("$", r"\$")


def _facies_colour(scheme: FaciesScheme, code: str) -> str:
    return facies_colour(code, scheme)


def bed_widths(beds: pd.DataFrame, scheme: FaciesScheme) -> tuple[np.ndarray, str]:
    """Width (0-1) of each bed's box in the facies column, and the measure used.

    Returns ``(widths, "grain_size")`` when every bed's grain-size class is
    known, from the bed's ``grain_size`` attribute or else its facies' scheme
    value (class 1 clay ... 7 gravel; width = class / 7); otherwise
    ``(widths, "rank")`` with width falling linearly from 1 (most landward
    rank present) to 0.3 (most basinward). Facies missing from the scheme
    take the narrowest width in rank mode.
    """
    codes = beds["facies"].astype(str).tolist()
    if "grain_size" in beds.columns:
        grain = pd.to_numeric(beds["grain_size"], errors="coerce").to_numpy(float, copy=True)
    else:
        grain = np.full(len(beds), np.nan)
    for i, code in enumerate(codes):
        if not np.isfinite(grain[i]) and code in scheme and scheme[code].grain_size is not None:
            grain[i] = float(scheme[code].grain_size)
    if len(grain) and np.isfinite(grain).all():
        return np.clip(grain, 0.5, len(GRAIN_CLASSES)) / len(GRAIN_CLASSES), "grain_size"
    ranks = np.array([scheme.rank(c) if c in scheme else np.nan for c in codes], dtype=float)
    scheme_ranks = [f.rank for f in scheme.facies]
    lo, hi = min(scheme_ranks), max(scheme_ranks)
    span = hi - lo if hi > lo else 1.0
    widths = 1.0 - 0.7 * (ranks - lo) / span
    return np.where(np.isfinite(widths), widths, 0.3), "rank"


def _runs(beds: pd.DataFrame, column: str) -> list[tuple[float, float, str]]:
    """``(top, base, value)`` of runs of successive beds sharing ``column`` and segment."""
    out: list[tuple[float, float, str]] = []
    last_seg = None
    for row in beds.itertuples(index=False):
        value = str(getattr(row, column))
        top, base, seg = float(row.top), float(row.base), int(getattr(row, "segment", 0))
        if out and out[-1][2] == value and abs(out[-1][1] - top) < 1e-9 and seg == last_seg:
            out[-1] = (out[-1][0], base, value)
        else:
            out.append((top, base, value))
        last_seg = seg
    return out


def _facies_boxes(beds: pd.DataFrame, widths: np.ndarray) -> list[tuple[float, float, str, float]]:
    """``(top, base, facies, width)`` of runs of touching beds with one facies and width."""
    out: list[tuple[float, float, str, float]] = []
    for (top, base, code), width in zip(
        beds[["top", "base", "facies"]].itertuples(index=False, name=None), widths, strict=True
    ):
        top, base, code, width = float(top), float(base), str(code), float(width)
        if out and out[-1][2] == code and out[-1][3] == width and abs(out[-1][1] - top) < 1e-9:
            out[-1] = (out[-1][0], base, code, width)
        else:
            out.append((top, base, code, width))
    return out


def _add_boxes(ax, top, base, left, right, colours, **kwargs) -> PolyCollection:
    """Axis-aligned boxes (depth ``top``..``base``, ``left``..``right``) drawn as one
    collection: one artist for all boxes, where ``barh`` makes one patch per box
    (measured: a strip log of about 100 beds drew and saved in about half the time)."""
    top, base = np.asarray(top, float), np.asarray(base, float)
    left, right = np.broadcast_to(left, top.shape), np.broadcast_to(right, top.shape)
    corners = np.stack(
        [np.column_stack(c) for c in ((left, top), (right, top), (right, base), (left, base))],
        axis=1,
    )
    boxes = PolyCollection(corners, facecolors=colours, **kwargs)
    ax.add_collection(boxes, autolim=False)
    return boxes


def _gaps(beds: pd.DataFrame) -> list[tuple[float, float]]:
    top = beds["top"].to_numpy(float)
    base = beds["base"].to_numpy(float)
    order = np.argsort(top, kind="stable")
    top, base = top[order], base[order]
    return [
        (float(base[i]), float(top[i + 1]))
        for i in range(len(top) - 1)
        if top[i + 1] > base[i] + 1e-9
    ]


def _legend_label(code: str, name: str, width: int) -> str:
    """``code  name``, the name wrapped onto indented lines of ``width`` characters
    (whole names: a facies or surface name cut short is a different name)."""
    import textwrap

    lines = textwrap.wrap(name, width) or [""]
    indent = " " * (len(code) + 4)
    return "\n".join([f"{code}  {lines[0]}".rstrip(), *(indent + line for line in lines[1:])])


def facies_name(code: str, name: str) -> str:
    """The name a legend prints beside ``code``: empty where it only repeats the code
    (``facies <code>``, the name a drafted or suggested scheme gives until a geologist
    writes one)."""
    name = str(name).strip()
    return "" if name.lower() in (code.lower(), f"facies {code}".lower()) else name


def _rows(labels) -> int:
    return sum(label.count("\n") + 1 for label in labels)


# Fixed layout of a strip log, in inches. A layout engine (constrained layout)
# measures every text of the figure in an extra drawing pass before each save:
# measured at about 40% of the time to save a strip log, the most frequent
# figure of an appendix. The margins below leave room for the 8-10 pt titles and
# labels and the 7 pt tick labels of the project's style.
_PANEL_RATIOS = (2.0, 0.7, 1.6, 1.9)
_TOP, _RIGHT, _PANEL_GAP = 0.6, 0.2, 0.28
_TITLE = 0.08  # from the top edge to the top of the figure title
_BELOW_PANELS = 0.52  # tick labels and up to two lines of axis label
_NOTE_LINE = 0.13  # one more line of axis label: the held beds' note (8 pt)
_CHAR = 0.062  # width of a 7 pt digit


def _panel_rects(
    width: float, height: float, legend_h: float, label_chars: int, held: bool = False
) -> list[tuple[float, float, float, float]]:
    """Figure-fraction rectangles of the four panels and the legend row.

    ``label_chars``: the longest depth tick label, which sets the left margin
    beside the depth axis label; ``held``: room for the note of the beds held at
    the geologist's label under the probability track.
    """
    left = 0.3 + _CHAR * label_chars
    total = height + legend_h
    panel_w = width - left - _RIGHT - _PANEL_GAP * (len(_PANEL_RATIOS) - 1)
    bottom = legend_h + _BELOW_PANELS + _NOTE_LINE * held
    panel_h = total - _TOP - bottom
    rects, x = [], left
    for ratio in _PANEL_RATIOS:
        w = panel_w * ratio / sum(_PANEL_RATIOS)
        rects.append((x / width, bottom / total, w / width, panel_h / total))
        x += w + _PANEL_GAP
    rects.append(
        (left / width, 0.05 / total, (x - _PANEL_GAP - left) / width, (legend_h - 0.1) / total)
    )
    return rects


def label_depths(depths: np.ndarray, gap: float) -> np.ndarray:
    """Depths at which to write pick labels (depth order) so that no two are closer
    than ``gap``: each label moves down just enough to clear the one above it."""
    out = np.asarray(depths, dtype=float).copy()
    for i in range(1, len(out)):
        out[i] = max(out[i], out[i - 1] + gap)
    return out


def _facies_track(ax, beds: pd.DataFrame, scheme: FaciesScheme, units: str) -> None:
    """The facies column, each box as wide as :func:`bed_widths` says: touching cells
    of one facies and width drawn as one box (depth-grid cells would otherwise be
    outlined one by one). Sets the depth range, inverted, of the shared depth axis."""
    widths, measure = bed_widths(beds, scheme)
    top, base = float(beds["top"].min()), float(beds["base"].max())
    span = max(base - top, 1e-9)
    boxes = _facies_boxes(beds, widths)
    colours = {c: _facies_colour(scheme, c) for c in {c for _, _, c, _ in boxes}}
    _add_boxes(
        ax,
        [t for t, _, _, _ in boxes],
        [b for _, b, _, _ in boxes],
        0.0,
        [w for _, _, _, w in boxes],
        [colours[c] for _, _, c, _ in boxes],
        edgecolors="#333333",
        linewidths=0.3,
    )
    ax.set_xlim(0, 1.02)
    if measure == "grain_size":
        k = np.arange(1, len(GRAIN_CLASSES) + 1)
        ax.set_xticks(k / len(GRAIN_CLASSES), GRAIN_CLASSES)
        ax.set_xlabel("grain size")
    elif scheme.name == NO_SCHEME:
        ax.set_xticks([])
        ax.set_xlabel("no scheme: ranks\nnot known")
    else:
        ax.set_xticks([])
        ax.set_xlabel("width: proximality\n(landward wider)")
    ax.set_ylabel(f"depth ({units})")
    ax.set_title("facies")
    ax.set_ylim(base + 0.005 * span, top - 0.005 * span)  # inverted: depth downward


def _tract_track(ax, beds: pd.DataFrame, tracts: tuple[str, ...]) -> None:
    """The decoded tract column, each run named where it is tall enough."""
    span = max(float(beds["base"].max()) - float(beds["top"].min()), 1e-9)
    runs = _runs(beds, "tract")
    _add_boxes(
        ax,
        [r[0] for r in runs],
        [r[1] for r in runs],
        0.0,
        1.0,
        [tract_colour(r[2], tracts) for r in runs],
        linewidths=0,
    )
    for r_top, r_base, code in runs:
        if (r_base - r_top) > 0.025 * span:
            ax.text(
                0.5,
                (r_top + r_base) / 2,
                code,
                ha="center",
                va="center",
                fontsize=6.5,
                color="white" if code in ("HST", "FSST") else "black",
                parse_math=False,
            )
    ax.set_xlim(0, 1)
    ax.set_xticks([])
    ax.set_title("tract")
    ax.set_xlabel("most likely")


def _probability_note(
    checked: bool,
    labelled: bool,
    reference: bool = False,
    unsure: bool = False,
    held: bool = False,
) -> str:
    """The lines under the probability track: nothing, one note, or both in one line
    (a third line would run into the legends), then, where ``held`` (some bed held at
    the geologist's label), :data:`~faciesseq.report.style.HELD_NOTE` on a line of its
    own, for which :func:`_panel_rects` makes room; ``reference``: a fit without labels
    that read a reference model (``faciesseq.hmm.reference``); ``unsure``: one whose
    check of a reference found its names unsure (``faciesseq.hmm.reference_check``)."""
    note = _model_note(checked, labelled, reference, unsure)
    return note + f"\n{HELD_NOTE}" * held


def _model_note(checked: bool, labelled: bool, reference: bool, unsure: bool) -> str:
    """The note of :func:`_probability_note` on the model's probabilities."""
    if checked and labelled:
        return ""
    if labelled:
        return f"\n{UNCHECKED_NOTE}"
    # each note is short enough to end before the surface track's label begins
    if checked:
        note = REFERENCE_NOTE if reference else UNLABELLED_NOTE
        return f"\n{'names unsure (no labels)' if unsure else note}"
    if unsure:
        return "\nnot checked; names unsure"
    return f"\nnot checked; {'priors and a reference' if reference else 'names from priors'}"


def _probability_track(
    ax, beds, tracts, checked, labelled=True, reference=False, unsure=False
) -> None:
    """The tract posteriors, stacked; the beds held at the geologist's label hatched."""
    b_top = beds["top"].to_numpy(float)
    b_base = beds["base"].to_numpy(float)
    left = np.zeros(len(beds))
    for code in tracts:
        right = left + beds[f"p_{code}"].to_numpy(float)
        _add_boxes(ax, b_top, b_base, left, right, tract_colour(code, tracts), linewidths=0)
        left = right
    held = held_beds(beds)
    if held.any():
        _held_hatching(ax, beds[held], tracts)
    ax.set_xlim(0, 1)
    ax.set_xticks([0, 0.5, 1])
    ax.set_title("tract probability")
    note = _probability_note(checked, labelled, reference, unsure, bool(held.any()))
    ax.set_xlabel("posterior (stacked)" + note)


def _held_hatching(ax, held: pd.DataFrame, tracts: tuple[str, ...]) -> None:
    """Hatch the runs of ``held`` beds across the probability track, in the ink that
    reads on each run's tract colour (:func:`~faciesseq.report.style.held_ink`): their
    probability of 1 is the geologist's label, not the model's."""
    runs = _runs(held, "tract")
    inks = [held_ink(tract_colour(code, tracts)) for _, _, code in runs]
    for ink in dict.fromkeys(inks):  # one collection per ink: a collection hatches in one
        mine = [run for run, i in zip(runs, inks, strict=True) if i == ink]
        _add_boxes(
            ax,
            [r[0] for r in mine],
            [r[1] for r in mine],
            0.0,
            1.0,
            "none",
            edgecolors=ink,
            hatch="\\\\\\",
            linewidths=0,
        )


def _surface_track(
    ax, interp: CoreInterpretation, curves: pd.DataFrame, step: float, drawn: tuple[str, ...]
) -> list[tuple[float, str]]:
    """Surface probability ``curves`` per depth cell of the ``drawn`` surfaces and the
    picks, each with its probability and interval; returns the picks' depths and
    colours."""
    _surface_curves(ax, curves, step, drawn, tuple(interp.surfaces))
    pick_lines = _surface_picks(ax, interp)
    # room right of 1 for a pick marker and its interval's caps at probability 1
    ax.set_xlim(0, SURFACE_AXIS_END)
    ax.set_xticks([0, 0.5, 1])
    ax.set_title("surface probability")
    ax.set_xlabel(f"probability within each\n{step:.3g} {interp.units} of depth")
    return pick_lines


#: The least probability a surface's curve shows as a bar in the strip log (a fiftieth
#: of the panel, about 5 pixels at 200 dpi); a surface neither picked in the core nor
#: reaching it in any depth cell is not drawn, nor listed in the legend.
VISIBLE_PROBABILITY = 0.02


def _default_step(beds: pd.DataFrame) -> float:
    """The depth cell of a strip log's surface curves: the core's depth range / 400."""
    return max(float(beds["base"].max()) - float(beds["top"].min()), 1e-9) / 400.0


def drawn_surfaces(interp: CoreInterpretation, step: float | None = None) -> tuple[str, ...]:
    """The surfaces a strip log of ``interp`` draws, in the tract model's order: those
    picked in the core, and those whose probability per depth cell of ``step`` (default
    the strip log's, the core's depth range / 400) reaches :data:`VISIBLE_PROBABILITY`
    somewhere. The strip-log page (:mod:`faciesseq.report.view`) lists the surfaces
    this gives for some core of the page."""
    return _drawn_in(interp, interp.curves(float(step) if step else _default_step(interp.beds)))


def _drawn_in(interp: CoreInterpretation, curves: pd.DataFrame) -> tuple[str, ...]:
    """The rule of :func:`drawn_surfaces` read from ``curves``, the core's curves
    already binned (:meth:`~faciesseq.interpretation.CoreInterpretation.curves`)."""
    picked = set() if interp.picks is None else set(interp.picks["surface"].astype(str))
    return tuple(
        code
        for code in interp.surfaces
        if code in picked or np.nanmax(curves[f"p_{code}"], initial=0.0) >= VISIBLE_PROBABILITY
    )


def _surface_curves(
    ax, curves: pd.DataFrame, step: float, drawn: tuple[str, ...], surfaces: tuple[str, ...]
):
    """Probability of each of the ``drawn`` surfaces per depth cell of ``step``, read
    from the binned ``curves``, drawn as steps in the colours of ``surfaces``' order."""
    edges_top = curves["depth"].to_numpy(float) - step / 2
    y = np.column_stack([edges_top, edges_top + step]).ravel()
    for code in drawn:
        p = curves[f"p_{code}"].to_numpy(float)
        colour = surface_colour(code, surfaces)
        x = np.repeat(p, 2)
        ax.fill_betweenx(y, 0, x, where=np.isfinite(x), color=colour, alpha=0.85, lw=0)


def _surface_picks(ax, interp: CoreInterpretation) -> list[tuple[float, str]]:
    """Each pick at its probability with its depth interval, labelled; labels moved
    apart in depth (:func:`label_depths`). Returns the picks' depths and colours."""
    surfaces = tuple(interp.surfaces)
    picks = interp.picks if interp.picks is not None else pd.DataFrame()
    ordered = picks.sort_values("depth", kind="stable") if len(picks) else picks
    span = abs(ax.get_ylim()[0] - ax.get_ylim()[1]) or 1.0
    label_at = label_depths(ordered["depth"].to_numpy(float), 0.02 * span) if len(picks) else []
    pick_lines: list[tuple[float, str]] = []
    for pick, at in zip(ordered.itertuples(index=False), label_at):
        colour = surface_colour(str(pick.surface), surfaces)
        _draw_pick(ax, pick, at, colour)
        pick_lines.append((float(pick.depth), colour))
    return pick_lines


def pick_label(surface: str, probability: float) -> str:
    """How a pick is labelled in a strip log and in the view: ``<surface> <probability>``,
    the probability as :func:`~faciesseq.report.document.format_probability` shows it
    (``SB 0.93``, ``SB > 0.99``)."""
    return f"{surface} {format_probability(probability)}"


def _draw_pick(ax, pick, label_at: float, colour: str) -> None:
    """One pick: its interval as a bar at its probability, a marker at its depth and
    ``<surface> <probability>`` written at depth ``label_at``."""
    depth, prob = float(pick.depth), float(pick.probability)
    lo = float(getattr(pick, "depth_top", depth))
    hi = float(getattr(pick, "depth_base", depth))
    ax.plot([prob, prob], [lo, hi], color=colour, lw=1.0, marker="_", ms=6)
    ax.plot([prob], [depth], marker="<", ms=5, color=colour, mec="black", mew=0.4)
    # the label stays inside the panel: right of the marker, or left of it near 1
    right = prob <= 0.62
    ax.text(
        prob + 0.05 if right else prob - 0.05,
        label_at,
        pick_label(str(pick.surface), prob),
        va="bottom",
        ha="left" if right else "right",
        fontsize=6,
        color=colour,
        parse_math=False,
        bbox={"boxstyle": "square,pad=0.1", "fc": "white", "ec": "none", "alpha": 0.8},
    )


@dataclass(frozen=True)
class _LegendEntries:
    """Codes and labels of the three legends under the tracks, in legend order; the
    surfaces listed are those drawn, ``surface_order`` all those of the tract model
    (their colours follow it, the same in every core)."""

    facies: list[str]
    facies_labels: list[str]
    tracts: tuple[str, ...]
    tract_labels: list[str]
    surfaces: tuple[str, ...]
    surface_labels: list[str]
    surface_order: tuple[str, ...]


def _legend_entries(
    interp: CoreInterpretation,
    scheme: FaciesScheme,
    tract_model: TractModel | None,
    surfaces: tuple[str, ...],
) -> _LegendEntries:
    """The facies of the core in scheme order (then those the scheme lacks), its
    tracts and the ``surfaces`` drawn (:func:`drawn_surfaces`), each labelled with its
    code and whole name."""
    tracts = tuple(interp.tracts)
    facies_present = list(dict.fromkeys(interp.beds["facies"].astype(str)))
    facies_order = [c for c in scheme.codes_by_rank if c in facies_present] + [
        c for c in facies_present if c not in scheme
    ]
    facies_labels = [
        _legend_label(c, facies_name(c, scheme[c].name), 30)
        if c in scheme
        else f"{c}  (not in scheme)"
        for c in facies_order
    ]
    tract_names = {t.code: t.name for t in tract_model.tracts} if tract_model else {}
    tract_labels = [
        _legend_label(t, tract_names.get(t, "").removesuffix(" systems tract"), 18) for t in tracts
    ]
    surface_names: dict[str, str] = {}
    for sf in tract_model.surfaces if tract_model else ():
        surface_names.setdefault(sf.code, sf.name)
    surface_labels = [_legend_label(sf, surface_names.get(sf, ""), 22) for sf in surfaces]
    return _LegendEntries(
        facies_order,
        facies_labels,
        tracts,
        tract_labels,
        surfaces,
        surface_labels,
        tuple(interp.surfaces),
    )


def _legend_height(entries: _LegendEntries, gaps: list) -> float:
    """Height (inches) of the legend row: room for the longest of the three legends."""
    n_legend = max(
        _rows(entries.facies_labels) + bool(gaps),
        _rows(entries.tract_labels) + 1,
        _rows(entries.surface_labels) + 2,
    )
    return 0.35 + 0.14 * n_legend


def _facies_handles(scheme: FaciesScheme, entries: _LegendEntries, gaps: list) -> list:
    """Legend boxes of the core's facies, and of the gaps where the core has any."""
    handles = [
        Patch(
            facecolor=_facies_colour(scheme, c),
            edgecolor="#333333",
            lw=0.3,
            label=plain(label),
        )
        for c, label in zip(entries.facies, entries.facies_labels)
    ]
    if gaps:
        handles.append(
            Patch(facecolor=_GAP, hatch="xx", edgecolor="#9a9a9a", label="gap (not described)")
        )
    return handles


def _surface_handles(entries: _LegendEntries) -> list:
    """Legend lines of the surfaces, and the pick marker."""
    handles = [
        Line2D([], [], color=surface_colour(sf, entries.surface_order), label=plain(label))
        for sf, label in zip(entries.surfaces, entries.surface_labels)
    ]
    handles.append(
        Line2D(
            [],
            [],
            marker="<",
            ls="",
            color="#555555",
            mec="black",
            mew=0.4,
            label="pick: probability, interval",
        )
    )
    return handles


def _legends(ax, scheme: FaciesScheme, entries: _LegendEntries, gaps: list) -> None:
    """The three legends under the tracks: facies, systems tracts and surfaces."""
    tract_handles = [
        Patch(color=tract_colour(t, entries.tracts), label=plain(label))
        for t, label in zip(entries.tracts, entries.tract_labels)
    ]
    kw = {"frameon": False, "borderaxespad": 0.0, "handlelength": 1.4}
    columns = (
        (
            _facies_handles(scheme, entries, gaps),
            "facies" if scheme.name == NO_SCHEME else "facies (landward → basinward)",
            0.0,
        ),
        (tract_handles, "systems tract", 0.43),
        (_surface_handles(entries), "surface", 0.71),
    )
    for k, (handles, title, x) in enumerate(columns):
        legend = ax.legend(
            handles=handles, title=title, loc="upper left", bbox_to_anchor=(x, 1.0), **kw
        )
        if k < len(columns) - 1:  # each new legend replaces the axes' own: keep the others
            ax.add_artist(legend)


def _track_axes(fig: Figure, rects: list) -> tuple[tuple, object]:
    """The four tracks on one depth axis (facies, tract, tract probability, surface
    probability), and the axes of the legend row, blank."""
    facies_ax = fig.add_axes(rects[0])
    tracks = (facies_ax, *(fig.add_axes(rect, sharey=facies_ax) for rect in rects[1:4]))
    legend_ax = fig.add_axes(rects[4])
    legend_ax.set_axis_off()
    return tracks, legend_ax


def _draw_tracks(tracks, interp, scheme, gaps, curves, step: float, checked: bool, drawn) -> None:
    """Draw the four tracks: gaps hatched across all, the ``drawn`` surfaces' binned
    ``curves``, picks dashed across the facies and tract columns, depth labels on the facies
    column only."""
    facies_ax, tract_ax, probability_ax, surface_ax = tracks
    beds, tracts = interp.beds, tuple(interp.tracts)
    for g_top, g_base in gaps:
        for ax in tracks:
            ax.axhspan(g_base, g_top, fc=_GAP, hatch="xx", ec="#b0b0b0", lw=0.4, zorder=0)
    _facies_track(facies_ax, beds, scheme, interp.units)
    _tract_track(tract_ax, beds, tracts)
    _probability_track(
        probability_ax,
        beds,
        tracts,
        checked,
        interp.tracts_labelled,
        interp.read_reference,
        interp.names_unsure,
    )
    pick_lines = _surface_track(surface_ax, interp, curves, step, drawn)
    for ax in (facies_ax, tract_ax):  # one collection of dashed lines across each column
        ax.hlines(
            [d for d, _ in pick_lines],
            0,
            1,
            transform=ax.get_yaxis_transform(),
            colors=[c for _, c in pick_lines],
            linewidths=0.7,
            linestyles="--",
        )
    for ax in tracks[1:]:
        ax.tick_params(labelleft=False)
    for ax in tracks:
        ax.spines["top"].set_visible(True)
        ax.spines["right"].set_visible(True)


#: Name of the scheme a strip log drawn without one makes of the core's facies (no ranks).
NO_SCHEME = "facies of the core (no scheme given)"


def _scheme_and_tracts(interp, scheme, tract_model, model) -> tuple[FaciesScheme, TractModel]:
    """The scheme and tract model a strip log draws with: those given, else the model's,
    else the core's facies alone and the default tract model (see :func:`strip_log`)."""
    from faciesseq.scheme import default_tract_model

    if scheme is None and model is not None:
        scheme = getattr(model, "scheme", None)
    if scheme is None:
        codes = list(dict.fromkeys(interp.beds["facies"].astype(str)))
        facies = [
            {"code": c, "name": f"facies {c}", "rank": 0, "colour": facies_colour(c)} for c in codes
        ]
        scheme = FaciesScheme.from_dict({"name": NO_SCHEME, "facies": facies})
    if tract_model is None and model is not None:
        tract_model = model.tract_model_
    if tract_model is None:
        tract_model = default_tract_model()
        if not set(interp.tracts) <= set(tract_model.codes):
            tract_model = None
    return scheme, tract_model


def strip_log(
    interp: CoreInterpretation | Interpretation,
    scheme: FaciesScheme | None = None,
    tract_model: TractModel | None = None,
    path: str | os.PathLike | None = None,
    *,
    model=None,
    step: float | None = None,
    title: str | None = None,
    height: float = 9.0,
    checked: bool | None = None,
) -> Figure:
    """Draw the strip log of one decoded core.

    Parameters
    ----------
    interp
        The core's interpretation (beds, boundaries and picks in depth order),
        e.g. ``interpretation["W-1"]`` or ``next(iter(interpretation))``, or an
        :class:`~faciesseq.interpretation.Interpretation` of one core
        (:func:`strip_logs` draws every core of a larger one).
    scheme
        Facies scheme: colours, names, ranks and grain sizes. Default: the
        scheme of ``model`` where it has one, else the facies of the core alone
        (stable colours, codes as names, boxes of one width: no ranks known).
    tract_model
        Tract model: tract names and the surfaces' names for the legends.
        Default: the tract model of ``model``, else the package's default
        four-tract model where it names every tract of the core, else the
        codes alone.
    model
        The :class:`~faciesseq.hmm.TractHMM` that decoded the core (e.g.
        :func:`faciesseq.hmm.load_model`), read for the two defaults above.
    path
        If given, the figure is also written there: ``.png``, ``.pdf`` or
        ``.svg`` by suffix, into a folder that exists (another suffix, or a
        missing folder, is refused with a :class:`~faciesseq.errors.ConfigError`
        before anything is drawn).
    step
        Depth cell (core depth units) of the surface probability curves;
        default: the core's depth range / 400.
    title
        Figure title; default ``"Core <name>"``.
    height
        Figure height in inches (width is the page width).
    checked
        Whether the model's probabilities were checked against known tracts; if
        not, the note :data:`UNCHECKED_NOTE` is printed under the tract probability
        track. Default: what the decoding said
        (``CoreInterpretation.probabilities_checked``), so a core decoded by a model
        whose probabilities nobody checked carries the note.

    Returns
    -------
    matplotlib.figure.Figure
        A figure built without ``pyplot``; the depth axis is inverted (depth
        increases downward).

    Notes
    -----
    The surface panel shows, per depth cell, the posterior probability that
    the surface lies in the cell: the sum of the two-slice posteriors of the
    tract pairs mapped to the surface at the contacts inside the cell
    (Rabiner 1989, eq. 37, "A tutorial on hidden Markov models", Proc. IEEE
    77:257-286).
    """
    interp = _one_core(interp)
    if checked is None:
        checked = interp.probabilities_checked
    if path is not None:
        check_figure_path(path)
    beds = interp.beds
    if len(beds) == 0:
        raise InputError("no beds to draw", core=interp.core)
    scheme, tract_model = _scheme_and_tracts(interp, scheme, tract_model, model)
    base = float(beds["base"].max())
    step = float(step) if step else _default_step(beds)
    gaps = _gaps(beds)
    curves = interp.curves(step)  # binned once: the legend's rule and the drawing read it
    drawn = _drawn_in(interp, curves)
    entries = _legend_entries(interp, scheme, tract_model, drawn)
    legend_h = _legend_height(entries, gaps)
    # depth tick labels: the digits of the deepest depth and a decimal point
    held = bool(held_beds(beds).any())
    rects = _panel_rects(PAGE_WIDTH, height, legend_h, len(f"{base:.0f}") + 1, held)
    with figure_style():
        fig = new_figure(PAGE_WIDTH, height + legend_h)
        tracks, legend_ax = _track_axes(fig, rects)
        _draw_tracks(tracks, interp, scheme, gaps, curves, step, checked, drawn)
        _legends(legend_ax, scheme, entries, gaps)
        fig.suptitle(
            title if title is not None else f"Core {interp.core}",
            y=1 - _TITLE / (height + legend_h),
            va="top",
            parse_math=False,
        )
    if path is not None:
        save_figure(fig, path)
    return fig


def _one_core(interp) -> CoreInterpretation:
    """The one decoded core of ``interp``; a one-line TypeError for anything else."""
    if isinstance(interp, CoreInterpretation):
        return interp
    if isinstance(interp, Interpretation):
        if len(interp) == 1:
            return next(iter(interp))
        raise TypeError(
            f"strip_log draws one core; this interpretation holds {len(interp)} "
            f"({core_list(interp.wells.index)}): pass one, e.g. interp[{interp.wells.index[0]!r}]"
            if len(interp)
            else "strip_log draws one core; this interpretation holds none"
        )
    raise TypeError(
        "strip_log needs a decoded core (a CoreInterpretation, e.g. interp['W-1'] of the "
        f"Interpretation that TractHMM.decode returns), got {type(interp).__name__} "
        f"{interp!r:.60}"
    )


def strip_logs(
    interps: Sequence[CoreInterpretation],
    scheme: FaciesScheme | None = None,
    tract_model: TractModel | None = None,
    checked: bool | None = None,
    *,
    model=None,
) -> list[Figure]:
    """One strip log per core interpretation, in order (defaults as :func:`strip_log`);
    ``interps`` may be an :class:`~faciesseq.interpretation.Interpretation`."""
    return [strip_log(i, scheme, tract_model, checked=checked, model=model) for i in interps]
