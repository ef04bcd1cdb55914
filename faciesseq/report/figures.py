"""Figures of the appendix: heat maps, diagrams and diagnostic plots.

Every function takes plain numbers (pandas tables with labels) and returns a
:class:`matplotlib.figure.Figure` built without ``pyplot``; nothing here
reads results objects directly, so the figures do not depend on how a result
was computed. Colours come from :mod:`faciesseq.report.style`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from itertools import pairwise

import numpy as np
import pandas as pd
from matplotlib.colors import LinearSegmentedColormap, TwoSlopeNorm, to_rgba
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Circle, FancyArrowPatch, Patch
from matplotlib.ticker import MaxNLocator

from faciesseq.report.striplog import _legend_label, facies_name, plain
from faciesseq.report.style import (
    PAGE_WIDTH,
    facies_colours,
    figure_style,
    new_figure,
    tract_colour,
)
from faciesseq.scheme import FaciesScheme, TractModel

__all__ = [
    "DIVERGING",
    "SEQUENTIAL",
    "bar_chart",
    "facies_relationship_diagram",
    "heatmap",
    "loglik_trace",
    "reliability_curve",
    "tract_graph",
]

#: The project's sequential colour map (paper white to dark teal).
SEQUENTIAL = LinearSegmentedColormap.from_list(
    "faciesseq_seq", ["#fbfaf5", "#cfe3d9", "#7fb3a5", "#3a7f77", "#163f45"]
)
#: The project's diverging colour map (brick, white, slate blue): fewer / more than expected.
DIVERGING = LinearSegmentedColormap.from_list(
    "faciesseq_div", ["#8f2d1f", "#d98a6c", "#f7f5f0", "#8fb1d9", "#1f4e8c"]
)


def _text_colour(rgba) -> str:
    r, g, b = rgba[:3]
    return "white" if 0.299 * r + 0.587 * g + 0.114 * b < 0.5 else "black"


def heatmap(
    table: pd.DataFrame,
    *,
    title: str = "",
    value_label: str = "",
    fmt: str = "{:.2f}",
    diverging: bool = False,
    marks: pd.DataFrame | None = None,
    mark_label: str = "significant",
    cautions: pd.DataFrame | None = None,
    caution_label: str = "",
    row_title: str = "from (lower bed)",
    column_title: str = "to (upper bed)",
    width: float | None = None,
    label_colours: Mapping[str, str] | None = None,
) -> Figure:
    """A labelled matrix with its values written in the cells and a colour bar.

    Parameters
    ----------
    table
        Rows and columns labelled (e.g. facies codes); NaN cells are left blank
        (e.g. the structural zeros of the diagonal of an embedded chain).
    value_label
        Label of the colour bar (the figure's legend for the colour scale).
    fmt
        Format of the cell values.
    diverging
        Centre the colour scale at 0 (for differences and residuals).
    marks
        Boolean table of the same shape; marked cells get a ``*`` and a frame.
    cautions
        Boolean table of the same shape; these cells get a ``!`` after their value
        (e.g. an expected count below 5, where a residual is unreliable), and the
        legend says so with ``caution_label``.
    label_colours
        Colours of row and column labels (e.g. tract colours): the label is
        drawn on a patch of that colour.

    Long column labels (e.g. the categories of a context feature, "base level with
    the cycle below") are wrapped on whole words and the columns made wide enough
    for them; where they would still overlap they are turned upright.
    """
    values = table.to_numpy(dtype=float)
    n_rows, n_cols = values.shape
    columns = [_wrapped(plain(c), COLUMN_LABEL_CHARS) for c in table.columns]
    width = width or min(PAGE_WIDTH, 1.6 + _column_width(columns) * n_cols)
    height = 1.3 + 0.42 * n_rows + 0.12 * max(0, _lines(columns) - 1)
    mark = _marked_cells(marks, table)
    caution = _marked_cells(cautions, table)
    with figure_style():
        fig = new_figure(width, height, layout="constrained")
        ax = fig.add_subplot()
        scale = _colour_scale(values, diverging)
        image = ax.imshow(np.ma.masked_invalid(values), aspect="auto", **scale)
        _write_cell_values(ax, image, values, mark, fmt, caution)
        # a title in words ran out of a narrow figure
        title_chars = max(COLUMN_LABEL_CHARS, int((width - 1.2) / 0.065))
        _label_rows_and_columns(ax, table, row_title, _wrapped(column_title, title_chars), columns)
        if label_colours:
            _colour_tick_labels(ax, label_colours)
        for spine in ax.spines.values():
            spine.set_visible(False)
        bar = fig.colorbar(image, ax=ax, shrink=0.85, pad=0.02)
        bar.set_label(plain(value_label))
        handles = []
        if mark.any():
            handles.append(Patch(fc="none", ec="black", lw=1.0, label=f"* {mark_label}"))
        if caution.any() and caution_label:
            handles.append(Patch(fc="none", ec="none", label=f"! {caution_label}"))
        if handles:
            ax.legend(
                handles=handles,
                loc="upper left",
                bbox_to_anchor=(0.0, -0.02),
                frameon=False,
            )
        if title:
            ax.set_title(title, parse_math=False)
        _upright_if_overlapping(fig, ax)
    return fig


#: Characters on a line of a heat map's column label before it is wrapped.
COLUMN_LABEL_CHARS = 12


def _lines(labels: Sequence[str]) -> int:
    """The most lines of any label in ``labels``."""
    return max((label.count("\n") + 1 for label in labels), default=1)


def _column_width(labels: Sequence[str], inches_per_char: float = 0.062) -> float:
    """Width (inches) of a heat map's column: 0.55, or room for the longest line of
    its labels (7-point tick labels, about 0.06 inch a character)."""
    longest = max((len(line) for label in labels for line in label.split("\n")), default=0)
    return max(0.55, 0.15 + inches_per_char * longest)


def _upright_if_overlapping(fig: Figure, ax) -> None:
    """Turn the column labels upright where, laid out, two of them overlap (long
    labels on a heat map narrowed to the page: they ran into each other and were cut
    by their neighbours' boxes)."""
    labels = [t for t in ax.get_xticklabels() if t.get_text()]
    if len(labels) < 2:
        return
    fig.draw_without_rendering()
    boxes = [t.get_window_extent() for t in labels]
    if any(a.x1 > b.x0 for a, b in pairwise(boxes)):
        for t in labels:
            t.set_text(" ".join(t.get_text().split()))
            t.set_rotation(90)
            t.set_horizontalalignment("center")


def _colour_scale(values: np.ndarray, diverging: bool) -> dict:
    """Colour map and limits of a heat map (``imshow`` arguments): centred at 0 on the
    largest absolute value where ``diverging``, else from the least to the largest
    value (a constant matrix takes a range of 1)."""
    finite = values[np.isfinite(values)]
    if diverging:
        bound = float(np.max(np.abs(finite))) if finite.size else 1.0
        bound = bound or 1.0
        return {"cmap": DIVERGING, "norm": TwoSlopeNorm(0.0, -bound, bound)}
    lo = float(finite.min()) if finite.size else 0.0
    hi = float(finite.max()) if finite.size else 1.0
    return {"cmap": SEQUENTIAL, "vmin": lo, "vmax": hi if hi > lo else lo + 1}


def _marked_cells(marks: pd.DataFrame | None, table: pd.DataFrame) -> np.ndarray:
    """The marked cells of ``table`` as a boolean array (none where ``marks`` is None;
    cells ``marks`` lacks are unmarked)."""
    if marks is None:
        return np.zeros(table.shape, dtype=bool)
    return marks.reindex(index=table.index, columns=table.columns).fillna(False).to_numpy(bool)


def _write_cell_values(
    ax, image, values: np.ndarray, mark: np.ndarray, fmt: str, caution: np.ndarray | None = None
) -> None:
    """Each cell's value in black or white, whichever reads on its colour; marked cells
    get a ``*`` and a frame, cells of ``caution`` a ``!``, blank (NaN) cells a grey
    dash."""
    if caution is None:
        caution = np.zeros(values.shape, dtype=bool)
    n_rows, n_cols = values.shape
    for i in range(n_rows):
        for j in range(n_cols):
            v = values[i, j]
            if not np.isfinite(v):
                ax.text(j, i, "–", ha="center", va="center", fontsize=7, color="#888888")
                continue
            colour = _text_colour(image.cmap(image.norm(v)))
            text = fmt.format(v) + ("*" if mark[i, j] else "") + ("!" if caution[i, j] else "")
            ax.text(j, i, text, ha="center", va="center", fontsize=6.5, color=colour)
            if mark[i, j]:
                ax.add_patch(_cell_frame(j, i))


def _label_rows_and_columns(
    ax, table: pd.DataFrame, row_title: str, column_title: str, columns: Sequence[str]
) -> None:
    """Row labels on the left, column labels (``columns``, as written) and the column
    title along the top."""
    n_rows, n_cols = table.shape
    ax.set_xticks(range(n_cols), list(columns), rotation=0)
    ax.set_yticks(range(n_rows), [plain(r) for r in table.index])
    ax.set_xlabel(column_title)
    ax.set_ylabel(row_title)
    ax.xaxis.set_label_position("top")
    ax.xaxis.tick_top()


def _colour_tick_labels(ax, label_colours: Mapping[str, str]) -> None:
    """Draw each row and column label that ``label_colours`` names (as given, made
    safe by :func:`plain`, or before a ``.`` suffix) on a patch of its colour."""
    for tick in [*ax.get_xticklabels(), *ax.get_yticklabels()]:
        text = " ".join(tick.get_text().split())  # a wrapped label on one line
        key = next(
            (k for k in label_colours if text in (k, plain(k)) or text.split(".")[0] == k),
            None,
        )
        if key is not None:
            face = label_colours[key]
            tick.set_bbox({"boxstyle": "round,pad=0.2", "fc": face, "ec": "none"})
            tick.set_color(_text_colour(to_rgba(face)))


def _cell_frame(x: float, y: float):
    from matplotlib.patches import Rectangle

    return Rectangle((x - 0.5, y - 0.5), 1, 1, fill=False, ec="black", lw=1.0)


def bar_chart(
    table: pd.DataFrame,
    *,
    colours: Mapping[str, str] | None = None,
    title: str = "",
    xlabel: str = "",
    ylabel: str = "",
) -> Figure:
    """Grouped horizontal bars: one group per row, one bar per column.

    ``colours`` maps row labels to colours (e.g. facies colours of the scheme);
    the legend names the columns (hatched by column when there are several).
    """
    n_rows, n_cols = table.shape
    with figure_style():
        fig = new_figure(
            min(PAGE_WIDTH, 5.5), 1.2 + 0.3 * n_rows * max(1, n_cols) ** 0.5, layout="constrained"
        )
        ax = fig.add_subplot()
        height = 0.8 / max(n_cols, 1)
        hatches = ["", "///", "...", "xx", "\\\\", "++"]
        y = np.arange(n_rows)
        for k, col in enumerate(table.columns):
            face = [(colours or {}).get(str(r), "#7fb3a5") for r in table.index]
            ax.barh(
                y - 0.4 + height * (k + 0.5),
                table[col].to_numpy(float),
                height=height,
                color=face,
                edgecolor="#333333",
                linewidth=0.4,
                hatch=hatches[k % len(hatches)],
                label=plain(col),
            )
        ax.set_yticks(y, [plain(r) for r in table.index])
        ax.invert_yaxis()
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
        handles = [
            Patch(
                fc="#dddddd",
                ec="#333333",
                lw=0.4,
                hatch=hatches[k % len(hatches)],
                label=plain(col),
            )
            for k, col in enumerate(table.columns)
        ]
        ax.legend(handles=handles, frameon=False, loc="lower right")
        if title:
            ax.set_title(title, parse_math=False)
    return fig


def _circle_layout(n: int, start: float = 90.0) -> np.ndarray:
    """Points on a unit circle, the first at ``start`` degrees, going clockwise."""
    angle = np.deg2rad(start - 360.0 * np.arange(n) / max(n, 1))
    return np.column_stack([np.cos(angle), np.sin(angle)])


def _arrow(ax, p, q, *, width, colour, rad=0.18, label=None, node_radius=0.2, **kw):
    start, end = _arc_ends(p, q, node_radius)
    arrow = FancyArrowPatch(
        tuple(start),
        tuple(end),
        arrowstyle="-|>",
        mutation_scale=8 + 4 * width,
        connectionstyle=f"arc3,rad={rad}",
        lw=width,
        color=colour,
        shrinkA=0,
        shrinkB=0,
        **kw,
    )
    ax.add_patch(arrow)
    text = None
    if label:
        text = ax.text(
            *arc_middle(start, end, rad),
            label,
            ha="center",
            va="center",
            fontsize=6.5,
            bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.85},
            gid=kw.get("gid"),
            zorder=5,  # over a circle the arc passes near
        )
    return arrow, text


def _arc_ends(p, q, node_radius: float) -> tuple[np.ndarray, np.ndarray]:
    """Where an arrow from the node at ``p`` to the node at ``q`` starts and ends: a
    little outside each node's circle, on the line between the centres."""
    p, q = np.asarray(p, float), np.asarray(q, float)
    d = q - p
    unit = d / (np.hypot(*d) or 1.0)
    gap = node_radius * 1.08
    return p + gap * unit, q - gap * unit


def arc_middle(start, end, rad: float) -> np.ndarray:
    """The middle of matplotlib's ``arc3`` arc from ``start`` to ``end``: a quadratic
    Bezier curve whose control point lies ``rad`` times the chord's length off the
    chord's middle, to its right (``arc3``'s own construction, in axes whose x and y
    units are drawn the same length), so the curve's middle lies half as far off."""
    start, end = np.asarray(start, float), np.asarray(end, float)
    d = end - start
    return (start + end) / 2 + 0.5 * rad * np.array([d[1], -d[0]])


def tract_graph(
    tract_model: TractModel,
    transitions: pd.DataFrame | None = None,
    *,
    title: str = "",
) -> Figure:
    """The tract graph: tracts in their cyclic order upward, allowed boundaries as arrows.

    With ``transitions`` (a tract-by-tract matrix of transition probabilities,
    rows = lower tract), arrows are labelled with the probability of moving
    up into the next tract and the self-transition is written under each
    tract; otherwise arrows show the configured graph with the surface codes.
    Skipped tracts are drawn with a dashed ring.
    """
    order = list(tract_model.order)
    pos = dict(zip(order, _circle_layout(len(order)), strict=True))
    allowed = tract_model.allowed()
    with figure_style():
        fig = new_figure(4.2, 4.4, layout="constrained")
        ax = fig.add_subplot()
        ax.set_aspect("equal")
        ax.set_axis_off()
        radius = 0.27
        for i, lower in enumerate(order):
            for j, upper in enumerate(order):
                if i == j or not allowed[i][j]:
                    continue
                surface = tract_model.surface(lower, upper)
                label = surface.code if surface else ""
                width = 1.2
                if transitions is not None:
                    p = float(transitions.loc[lower, upper])
                    label = f"{label} {p:.2f}".strip()
                    width = 0.6 + 3.0 * min(p / 0.3, 1.0)
                skip = (j - i) % len(order) > 1
                _arrow(
                    ax,
                    pos[lower],
                    pos[upper],
                    width=width,
                    colour="#555555" if not skip else "#999999",
                    rad=0.22 if not skip else 0.3,
                    label=label,
                    node_radius=radius * 0.9,
                    linestyle="-" if not skip else (0, (3, 2)),
                )
        for code in order:
            x, y = pos[code]
            ring = Circle(
                (x, y),
                radius,
                fc=tract_colour(code, order),
                ec="black",
                lw=0.8,
                ls="--" if code in tract_model.skips else "-",
                zorder=3,
            )
            ax.add_patch(ring)
            label = code
            if transitions is not None:
                label += f"\nstay {float(transitions.loc[code, code]):.2f}"
            ax.text(
                x,
                y,
                label,
                ha="center",
                va="center",
                fontsize=7.5,
                zorder=4,
                color=_text_colour(ring.get_facecolor()),
                parse_math=False,
            )
        ax.set_xlim(-1.45, 1.45)
        ax.set_ylim(-1.5, 1.45)
        names = {t.code: t.name for t in tract_model.tracts}
        handles = [
            Patch(color=tract_colour(c, order), label=plain(f"{c}  {names[c]}")) for c in order
        ]
        handles.append(
            Line2D(
                [], [], color="#999999", ls=(0, (3, 2)), label="boundary skipping an absent tract"
            )
        )
        ax.legend(
            handles=handles, loc="upper center", bbox_to_anchor=(0.5, 0.0), ncol=1, frameon=False
        )
        if title:
            ax.set_title(title, parse_math=False)
    return fig


def facies_relationship_diagram(
    difference: pd.DataFrame,
    scheme: FaciesScheme | None = None,
    *,
    significant: pd.DataFrame | None = None,
    threshold: float = 0.05,
    title: str = "",
    order: Sequence[str] | None = None,
) -> Figure:
    """Facies relationship diagram: arrows for upward transitions more frequent than chance.

    Facies are placed on a circle in order of proximality rank (most landward
    at the top, going clockwise), from ``scheme``; without one in ``order``
    (the facies order the transitions suggest, :func:`transition_order`) or else in
    the order the positive cells of ``difference`` suggest, so that arrows between
    neighbours in a shallowing or deepening run go round the circle and do not
    cross it. Each facies' name is written inside its circle, wrapped and
    made smaller until it fits. An arrow ``A -> B`` is drawn where the
    observed minus expected transition probability (``difference``, rows =
    lower facies) exceeds ``threshold``; its width grows with the difference.
    Arrows of cells marked in ``significant`` are solid, others dashed.

    The diagram follows the practice of drawing only the positive cells of
    the difference matrix (Miall 1973, "Markov chain analysis applied to an
    ancient alluvial plain succession", Sedimentology 20:347-364).
    """
    codes = _circle_order(difference, scheme, order)
    pos = dict(zip(codes, _circle_layout(len(codes)), strict=True))
    values = difference.reindex(index=codes, columns=codes)
    radius = _node_radius(len(codes))
    legend_rows = 2 + (len(codes) if scheme is not None else 0)
    with figure_style():
        fig = new_figure(4.6, _diagram_height(legend_rows), layout="constrained")
        ax = fig.add_subplot()
        ax.set_aspect("equal")
        ax.set_axis_off()
        n_drawn, labels = _transition_arrows(ax, values, significant, pos, threshold, radius)
        names = _facies_circles(ax, pos, scheme, radius)
        ax.set_xlim(-1.4, 1.4)
        ax.set_ylim(-1.4, 1.4)
        _relationship_legend(ax, codes, scheme, threshold)
        if title:
            ax.set_title(title, parse_math=False)
        if n_drawn == 0:
            ax.text(0, 0, "no transition above chance", ha="center", va="center")
        _fit_in_circles(fig, names)
        _labels_off_circles(fig, labels, [circle for _, circle in names])
    return fig


def _diagram_height(legend_rows: int, height: float = 5.0, row: float = 0.2) -> float:
    """The height (inches) of a facies relationship diagram whose legend has
    ``legend_rows`` rows: ``height``, and ``row`` more for each row past ten (a legend
    of 25 facies squeezed the diagram above it to nothing)."""
    return height + row * max(0, legend_rows - 10)


def _node_radius(n: int, largest: float = 0.2) -> float:
    """The radius of each of ``n`` facies circles round the unit circle: ``largest``, or
    less where more facies stand round it, so that neighbours stand apart with room for
    an arrow between them (overlapping circles turned the arrow between neighbours back
    on itself, bowed without bound)."""
    return min(largest, 0.75 * np.sin(np.pi / max(n, 2)))


def _circle_order(
    difference: pd.DataFrame, scheme: FaciesScheme | None, order: Sequence[str] | None
) -> list[str]:
    """The facies of ``difference`` in their order round the circle: by proximality
    rank in ``scheme``, else ``order``, else :func:`transition_order`; facies these
    do not place follow in the order of ``difference``."""
    codes = [str(c) for c in difference.index]
    if scheme is not None:
        known = [c for c in scheme.codes_by_rank if c in codes]
    else:
        suggested = list(order) if order is not None else transition_order(difference)
        known = [c for c in suggested if c in codes]
    return known + [c for c in codes if c not in known]


def _transition_arrows(ax, values, significant, pos, threshold: float, radius: float) -> int:
    """An arrow from facies to facies for each upward transition above ``threshold``
    (``values``: observed - expected, rows = lower facies), as wide as the difference;
    solid and labelled where ``significant`` (or where it is None), else dashed.
    Returns the number of arrows drawn and each label with its arc (start, end,
    ``rad``) for :func:`_labels_off_circles`."""
    codes = list(values.index)
    sig = (
        significant.reindex(index=codes, columns=codes).fillna(False)
        if significant is not None
        else None
    )
    positive = values.to_numpy(float)
    top = np.nanmax(positive) if np.isfinite(positive).any() else 1.0
    n_drawn = 0
    labels = []
    bows: dict[tuple[str, str], float] = {}
    for a in codes:
        for b in codes:
            if a == b:
                continue
            d = values.loc[a, b]
            if not np.isfinite(d) or d <= threshold:
                continue
            solid = bool(sig.loc[a, b]) if sig is not None else True
            # a short arrow bows enough that the labels of A -> B and B -> A,
            # on arcs bowing to either side, stand apart
            chord = np.hypot(*np.subtract(pos[b], pos[a])) - 2 * radius * 1.08
            others = [pos[c] for c in codes if c not in (a, b)]
            rad = _routed_bow(
                _arc_ends(pos[a], pos[b], radius),
                max(0.28, 0.24 / max(chord, 1e-9)),
                others,
                radius,
                bows.get((b, a)),
            )
            bows[(a, b)] = rad
            _, text = _arrow(
                ax,
                pos[a],
                pos[b],
                width=0.5 + 2.5 * d / (top or 1.0),
                colour="#1f4e8c" if solid else "#8fa3bf",
                rad=rad,
                label=difference_label(d, threshold) if solid else None,
                node_radius=radius,
                linestyle="-" if solid else (0, (3, 2)),
                gid=f"transition {a} -> {b}",
            )
            if text is not None:
                labels.append((text, *_arc_ends(pos[a], pos[b], radius), rad))
            n_drawn += 1
    return n_drawn, labels


#: How far an arrow keeps off the circle of a facies it does not join (radii from the
#: centre): an arc 0.1 of a radius off a circle read as drawn through it.
CLEARANCE = 1.3

#: The bows an arrow may take, as multiples of its own: its side first, the other
#: side after, so that an arrow keeps its side where that side is free.
_BOW_FACTORS = (1.0, 0.7, 1.4, 1.9, -1.0, -0.7, -1.4, -1.9, 2.6, -2.6)


def _routed_bow(ends, bow: float, obstacles, radius: float, back: float | None) -> float:
    """The bow (``arc3``'s ``rad``) of the arrow between ``ends``: ``bow``, else the
    first of :data:`_BOW_FACTORS` times it whose arc keeps :data:`CLEARANCE` radii off
    every circle centred at ``obstacles`` (the facies the arrow does not join), apart
    from the arrow back (``back``, its bow, where drawn: the two arcs' middles at least
    0.24 apart, room for both labels) and inside the diagram; where none is clear, the
    one reaching least into the circles."""
    start, end = (np.asarray(e, float) for e in ends)
    chord = float(np.hypot(*(end - start)))
    centres = np.asarray(obstacles, float).reshape(-1, 2)

    def cost(k: int, factor: float) -> tuple:
        rad = bow * factor
        points = np.array([_on_arc(start, end, rad, t) for t in np.linspace(0, 1, 33)])
        near = [np.hypot(*(points - c).T).min() for c in centres]
        into = sum(max(0.0, CLEARANCE * radius - n) for n in near)
        # the arrow back bowing by -rad is the same arc drawn the other way
        crowded = back is not None and 0.5 * abs(rad + back) * chord < 0.24
        outside = bool(np.abs(points).max() > 1.3)
        return (into > 0, crowded, outside, into, k)

    best = min(cost(k, f) for k, f in enumerate(_BOW_FACTORS))
    return bow * _BOW_FACTORS[best[-1]]


def difference_label(difference: float, threshold: float) -> str:
    """``difference`` with two decimals, or as many more as it takes to read above
    ``threshold`` (0.055 read "0.05" under a caption of arrows "> 0.05")."""
    for decimals in range(2, 7):
        text = f"{difference:.{decimals}f}"
        if float(text) > threshold:
            return text
    return text


#: Where along its arc an arrow's label may stand (0 = the lower facies, 1 = the
#: upper), from the middle outward.
LABEL_PLACES = (0.5, 0.42, 0.58, 0.34, 0.66, 0.26, 0.74, 0.18, 0.82)


def _labels_off_circles(fig: Figure, labels, circles) -> None:
    """Move each label along its arc until its box covers no facies circle (nor, where
    room allows, an earlier label); where no place is free, leave it where it covers
    least, without its white box (a label's box on a short arc between neighbours hid
    the facies code of the circle beneath it)."""
    if not labels:
        return
    fig.draw_without_rendering()
    rings = [_ring(circle) for circle in circles]
    boxes = [text.get_window_extent().padded(2.0) for text, *_ in labels]
    covering = [False] * len(labels)
    for _ in range(3):  # again, once every label has a place, so order matters less
        for n, (text, start, end, rad) in enumerate(labels):
            others = boxes[:n] + boxes[n + 1 :]
            scored = []
            for k, t in enumerate(LABEL_PLACES):
                text.set_position(_on_arc(start, end, rad, t))
                box = text.get_window_extent().padded(2.0)  # the white box's pad
                on_circles = sum(_box_in_ring(box, ring) for ring in rings)
                on_labels = sum(_overlap(box, other) for other in others)
                scored.append((on_circles > 0, on_labels > 0, on_circles, on_labels, k))
            covering[n], _, _, _, k = min(scored)
            text.set_position(_on_arc(start, end, rad, LABEL_PLACES[k]))
            boxes[n] = text.get_window_extent().padded(2.0)
    for (text, *_), covers in zip(labels, covering, strict=True):
        if covers:
            text.set_bbox(None)


def _on_arc(start, end, rad: float, t: float) -> tuple[float, float]:
    """The point at ``t`` (0..1) along matplotlib's ``arc3`` arc (see :func:`arc_middle`)."""
    start, end = np.asarray(start, float), np.asarray(end, float)
    d = end - start
    control = (start + end) / 2 + rad * np.array([d[1], -d[0]])
    point = (1 - t) ** 2 * start + 2 * t * (1 - t) * control + t**2 * end
    return float(point[0]), float(point[1])


def _ring(circle) -> tuple[float, float, float]:
    """Centre and radius of ``circle`` on the page (display units)."""
    box = circle.get_window_extent()
    return (box.x0 + box.x1) / 2, (box.y0 + box.y1) / 2, min(box.width, box.height) / 2


def _box_in_ring(box, ring) -> float:
    """How far (display units) the box reaches into the ring; 0 where it does not."""
    x, y, r = ring
    nearest = np.clip(x, box.x0, box.x1), np.clip(y, box.y0, box.y1)
    return max(0.0, r - float(np.hypot(nearest[0] - x, nearest[1] - y)))


def _overlap(a, b) -> float:
    """Area shared by two boxes (display units)."""
    width = min(a.x1, b.x1) - max(a.x0, b.x0)
    height = min(a.y1, b.y1) - max(a.y0, b.y0)
    return max(0.0, width) * max(0.0, height)


def _facies_circles(ax, pos, scheme: FaciesScheme | None, radius: float) -> list:
    """A circle in the facies colour at each facies' place, its code written inside;
    returns the ``(text, circle)`` pairs for :func:`_fit_in_circles`."""
    names = []
    colours = facies_colours(list(pos), scheme)
    for code, (x, y) in pos.items():
        circle = Circle((x, y), radius, fc=colours[code], ec="black", lw=0.8, zorder=3)
        ax.add_patch(circle)
        name = ax.text(
            x,
            y,
            _wrapped(code),
            ha="center",
            va="center",
            fontsize=7,
            zorder=4,
            color=_text_colour(circle.get_facecolor()),
            parse_math=False,
            gid=f"facies {code}",
        )
        names.append((name, circle))
    return names


def _relationship_legend(ax, codes: list[str], scheme: FaciesScheme | None, threshold: float):
    """The legend under the diagram: solid and dashed arrows, and the facies named
    where a scheme names them."""
    handles = [
        Line2D([], [], color="#1f4e8c", lw=2, label="significant (adjusted residual)"),
        Line2D([], [], color="#8fa3bf", lw=1.5, ls=(0, (3, 2)), label="not significant"),
    ]
    if scheme is not None:
        colours = facies_colours(codes, scheme)
        handles += [
            Patch(
                fc=colours[c],
                ec="black",
                lw=0.4,
                label=plain(
                    _legend_label(c, facies_name(c, scheme[c].name) if c in scheme else "", 44)
                ),
            )
            for c in codes
        ]
    ax.legend(
        handles=handles,
        loc="upper center",
        bbox_to_anchor=(0.5, 0.0),
        frameon=False,
        title=f"arrows: upward transitions with observed − expected > {threshold:g}\n"
        "(label: difference of probabilities)",
    )


def transition_order(difference: pd.DataFrame) -> list[str]:
    """The facies of ``difference`` (rows = lower facies) in the order their upward
    transitions above chance suggest, most landward first: the seriation of
    :func:`faciesseq.markov.seriation.suggest_ranks` run on the positive cells (the
    path through every facies along the strongest links); the given order where
    fewer than three facies are linked."""
    from faciesseq.markov.seriation import suggest_ranks

    values = difference.astype(float)
    steps = values.stack()
    steps = steps[np.isfinite(steps.to_numpy()) & (steps.to_numpy() > 0)]
    steps.index = steps.index.set_names(["below", "above"])
    steps.index = pd.MultiIndex.from_arrays(
        [steps.index.get_level_values(k).astype(str) for k in (0, 1)], names=["below", "above"]
    )
    suggestion = suggest_ranks(steps) if len(steps) else None
    codes = [str(c) for c in difference.index]
    if suggestion is None:
        return codes
    ranked = sorted(suggestion.ranks, key=lambda c: (suggestion.ranks[c], codes.index(c)))
    return ranked + [c for c in codes if c not in suggestion.ranks]


def _wrapped(name: str, width: int = 10) -> str:
    """A name (a facies, a category) on lines of about ``width`` characters (whole words)."""
    import textwrap

    return "\n".join(textwrap.wrap(str(name), width, break_long_words=False)) or str(name)


def _fit_in_circles(fig: Figure, names, smallest: float = 4.0) -> None:
    """Make each name smaller until its box lies inside its circle (a long facies
    name ran out of its circle in white letters, unreadable on the white page)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    if not names:
        return
    renderer = FigureCanvasAgg(fig).get_renderer()
    fig.draw_without_rendering()  # the layout, so that sizes are the saved ones
    for text, circle in names:
        while text.get_fontsize() > smallest and not _inside(text, circle, renderer):
            text.set_fontsize(text.get_fontsize() - 0.5)


def _inside(text, circle, renderer) -> bool:
    """Whether the box of ``text`` lies inside ``circle`` (display coordinates)."""
    box = text.get_window_extent(renderer)
    outline = circle.get_window_extent(renderer)
    cx, cy = (outline.x0 + outline.x1) / 2, (outline.y0 + outline.y1) / 2
    r = min(outline.width, outline.height) / 2 - 1.0
    corners = [(box.x0, box.y0), (box.x0, box.y1), (box.x1, box.y0), (box.x1, box.y1)]
    return all(np.hypot(x - cx, y - cy) <= r for x, y in corners)


def loglik_trace(
    traces: Mapping[str, Sequence[float]],
    *,
    best: str | None = None,
    title: str = "",
    ylabel: str = "log-likelihood",
) -> Figure:
    """Log-likelihood after each EM iteration, one line per restart.

    ``traces`` maps a restart label (e.g. ``"restart 3 (seed 12)"``) to its
    log-likelihood per iteration; ``best`` is drawn thicker and darker;
    ``ylabel`` names what the values are (EM's objective, log-likelihood plus
    log-prior, where the fit has priors).
    """
    with figure_style():
        fig = new_figure(min(PAGE_WIDTH, 5.5), 3.2, layout="constrained")
        ax = fig.add_subplot()
        for k, (label, values) in enumerate(traces.items()):
            y = np.asarray(values, dtype=float)
            is_best = label == best
            ax.plot(
                np.arange(1, len(y) + 1),
                y,
                lw=1.8 if is_best else 0.9,
                color="#163f45" if is_best else SEQUENTIAL(0.3 + 0.5 * (k % 5) / 4),
                marker="o" if len(y) < 30 else None,
                ms=2.5,
                label=plain(f"{label} (best)" if is_best else label),
                zorder=3 if is_best else 2,
            )
        ax.set_xlabel("EM iteration")
        ax.xaxis.set_major_locator(MaxNLocator(integer=True, min_n_ticks=1))
        ax.set_ylabel(ylabel)
        ax.legend(frameon=False, loc="lower right", ncol=1 if len(traces) < 6 else 2)
        if title:
            ax.set_title(title, parse_math=False)
    return fig


#: Fewest beds in a probability bin for its point to be joined into the reliability curve.
MIN_RELIABILITY_BEDS = 5


def reliability_curve(
    bins: pd.DataFrame,
    *,
    baseline: pd.DataFrame | None = None,
    title: str = "",
    min_count: int = MIN_RELIABILITY_BEDS,
) -> Figure:
    """Reliability (calibration) diagram: observed frequency against predicted probability.

    ``bins`` has ``predicted`` (mean predicted probability in the bin),
    ``observed`` (fraction of cases where the event happened) and ``count``;
    ``baseline`` (same columns) is drawn for comparison. The diagonal is
    perfect calibration (Murphy & Winkler 1977, "Reliability of subjective
    probability forecasts of precipitation and temperature", Applied
    Statistics 26:41-47). Bins of fewer than ``min_count`` cases are drawn as
    open markers and not joined into the line (a fraction of one or two beds
    is 0 or 1 by chance); the axes reach a little beyond 0 and 1 so that no
    marker is cut at the edge.
    """
    pad = 0.04
    with figure_style():
        fig = new_figure(3.6, 3.6, layout="constrained")
        ax = fig.add_subplot()
        ax.plot([0, 1], [0, 1], color="#999999", lw=0.8, ls="--", label="perfectly calibrated")
        few_drawn = False
        for frame, label, colour, marker in (
            (bins, "tract model", "#1f4e8c", "o"),
            (baseline, "baseline", "#b84a3a", "s"),
        ):
            if frame is None or len(frame) == 0:
                continue
            frame = frame.sort_values("predicted")
            counts = frame["count"].to_numpy(float) if "count" in frame else np.ones(len(frame))
            sizes = 8 + 40 * counts / max(counts.max(), 1)
            enough = counts >= min_count
            x = frame["predicted"].to_numpy(float)
            y = frame["observed"].to_numpy(float)
            if enough.sum() > 1:
                ax.plot(x[enough], y[enough], color=colour, lw=1.0)
            ax.scatter(
                x[enough],
                y[enough],
                s=sizes[enough],
                color=colour,
                marker=marker,
                label=label,
                zorder=3,
                edgecolor="white",
                linewidth=0.4,
            )
            if (~enough).any():
                few_drawn = True
                ax.scatter(
                    x[~enough],
                    y[~enough],
                    s=sizes[~enough],
                    facecolor="white",
                    edgecolor=colour,
                    marker=marker,
                    linewidth=1.0,
                    zorder=3,
                    label=None if enough.any() else label,
                )
        if few_drawn:
            ax.scatter(
                [],
                [],
                s=20,
                facecolor="white",
                edgecolor="#555555",
                marker="o",
                label=f"open: bin of < {min_count} cases, not joined",
            )
        ax.set_xlim(-pad, 1 + pad)
        ax.set_ylim(-pad, 1 + pad)
        ax.set_aspect("equal")
        ax.set_xlabel("predicted probability")
        ax.set_ylabel("observed frequency")
        ax.legend(frameon=False, loc="upper left", title="marker area: cases in bin")
        if title:
            ax.set_title(title, parse_math=False)
    return fig
