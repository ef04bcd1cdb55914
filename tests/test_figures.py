"""Appendix figures drawn from invented numbers: legends, labels, values, files."""

from itertools import combinations, pairwise
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from _synthetic import SHOREFACE
from matplotlib.colorbar import Colorbar
from matplotlib.legend import Legend

from faciesseq.report import figures
from faciesseq.report.style import save_figure
from faciesseq.scheme import default_tract_model, load_scheme

DATA = Path(__file__).resolve().parent / "data"


@pytest.fixture(scope="module")
def scheme():
    return load_scheme(SHOREFACE)


def _legends(fig):
    return [a for ax in fig.axes for a in ax.get_children() if isinstance(a, Legend)]


def _difference(scheme):
    rng = np.random.default_rng(3)
    values = rng.normal(0, 0.15, (len(scheme), len(scheme)))
    np.fill_diagonal(values, np.nan)
    return pd.DataFrame(values, index=list(scheme.codes), columns=list(scheme.codes))


def test_heatmap_writes_every_value_and_marks_significant_cells(scheme, tmp_path):
    table = _difference(scheme)
    marks = table.abs() > 0.15
    fig = figures.heatmap(table, value_label="observed − expected", diverging=True, marks=marks)
    texts = [t.get_text() for t in fig.axes[0].texts]
    n = len(scheme)
    assert len(texts) == n * n
    assert sum(t.endswith("*") for t in texts) == int(marks.to_numpy().sum())
    assert f"{table.iloc[0, 1]:.2f}" in texts[1]
    assert texts[0] == "–"  # the blank diagonal
    # colour bar is the legend of the colour scale
    assert any(isinstance(getattr(ax, "_colorbar", None), Colorbar) for ax in fig.axes)
    assert fig.axes[-1].get_ylabel() == "observed − expected"
    assert _legends(fig)
    path = save_figure(fig, tmp_path / "hm.svg")
    assert b"<svg" in path.read_bytes()[:500]


def test_heatmap_of_constant_matrix_does_not_fail(scheme):
    table = pd.DataFrame(np.ones((2, 2)), index=["a", "b"], columns=["a", "b"])
    fig = figures.heatmap(table)
    assert [t.get_text() for t in fig.axes[0].texts] == ["1.00"] * 4


def test_facies_relationship_diagram_draws_only_positive_cells(scheme):
    table = _difference(scheme)
    significant = table.abs() > 0.15
    fig = figures.facies_relationship_diagram(table, scheme, significant=significant)
    arrows = [p for p in fig.axes[0].patches if type(p).__name__ == "FancyArrowPatch"]
    assert len(arrows) == int((table > 0.05).to_numpy().sum())
    labels = {t.get_text() for t in fig.axes[0].texts}
    assert set(scheme.codes) <= labels
    assert _legends(fig)


def test_tract_graph_has_an_arrow_per_allowed_boundary():
    model = default_tract_model()
    allowed = np.array(model.allowed())
    n_edges = int(allowed.sum() - np.trace(allowed))
    fig = figures.tract_graph(model)
    arrows = [p for p in fig.axes[0].patches if type(p).__name__ == "FancyArrowPatch"]
    assert len(arrows) == n_edges
    texts = {t.get_text() for t in fig.axes[0].texts}
    assert {"MFS", "SB", "MRS", "BSFR"} <= texts
    transitions = pd.DataFrame(
        np.full((4, 4), 0.25), index=list(model.order), columns=list(model.order)
    )
    fig = figures.tract_graph(model, transitions)
    assert "HST\nstay 0.25" in {t.get_text() for t in fig.axes[0].texts}
    assert _legends(fig)


def test_loglik_trace_and_reliability_curve_have_legends():
    fig = figures.loglik_trace(
        {"restart 1": [-10, -8, -7.5], "restart 2": [-12, -9]}, best="restart 1"
    )
    labels = [t.get_text() for t in _legends(fig)[0].get_texts()]
    assert labels == ["restart 1 (best)", "restart 2"]
    bins = pd.DataFrame(
        {"predicted": [0.1, 0.5, 0.9], "observed": [0.2, 0.5, 0.8], "count": [6, 5, 9]}
    )
    fig = figures.reliability_curve(bins, baseline=bins.assign(observed=0.5))
    labels = [t.get_text() for t in _legends(fig)[0].get_texts()]
    assert labels == ["perfectly calibrated", "tract model", "baseline"]
    low, high = fig.axes[0].get_xlim()
    assert low < 0 and high > 1  # room for the markers at 0 and 1


def test_reliability_bin_of_too_few_beds_is_an_open_marker_not_joined():
    """A 1-bed bin at (0.669, 0) was joined by a line to the 96-bed bin at (0.997, 0.99)."""
    from matplotlib.collections import PathCollection

    bins = pd.DataFrame({"predicted": [0.669, 0.997], "observed": [0.0, 0.99], "count": [1, 96]})
    fig = figures.reliability_curve(bins)
    ax = fig.axes[0]
    drawn = [line for line in ax.get_lines() if line.get_label() != "perfectly calibrated"]
    assert all(0.669 not in line.get_xdata() for line in drawn)
    points = [c for c in ax.collections if isinstance(c, PathCollection) and len(c.get_offsets())]
    open_ones = [c for c in points if (c.get_facecolor()[:, :3] == 1).all()]
    assert [tuple(c.get_offsets()[0]) for c in open_ones] == [(0.669, 0.0)]
    low, high = ax.get_ylim()
    assert low < 0.0 and high > 0.99  # the markers at 0 and near 1 are not cut in half
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "open: bin of < 5 cases, not joined" in labels


def test_bar_chart_has_one_bar_per_cell(scheme):
    table = pd.DataFrame({"beds": [0.2, 0.8], "thickness": [0.4, 0.6]}, index=["CP", "FS"])
    from faciesseq.report.style import facies_colour

    fig = figures.bar_chart(table, colours={"CP": facies_colour("CP", scheme)})
    assert len(fig.axes[0].patches) == 4
    assert [t.get_text() for t in _legends(fig)[0].get_texts()] == ["beds", "thickness"]


def test_heatmap_labels_take_the_tract_palette():
    from matplotlib.colors import to_rgba

    from faciesseq.report.style import TRACT_COLOURS

    table = pd.DataFrame(np.eye(2), index=["TST", "HST"], columns=["TST", "HST"])
    fig = figures.heatmap(table, label_colours=TRACT_COLOURS)
    fig.canvas.draw()
    ticks = fig.axes[0].get_yticklabels()
    faces = [t.get_bbox_patch().get_facecolor() for t in ticks]
    assert faces == [to_rgba(TRACT_COLOURS["TST"]), to_rgba(TRACT_COLOURS["HST"])]


def _drawn_with(text: str, path):
    from faciesseq.report.style import figure_style, new_figure

    with figure_style():
        fig = new_figure(2.0, 1.0)
        fig.add_subplot().set_title(text)
    save_figure(fig, path)


def test_characters_the_font_lacks_are_one_warning_of_every_figure(tmp_path):
    import warnings

    from faciesseq.report.style import MissingGlyphWarning, missing_glyphs_once

    codes = "砂岩 泥岩 \ue000"  # CJK codes, a private-use character no font draws
    with warnings.catch_warnings(record=True) as raw:
        warnings.simplefilter("always")
        _drawn_with(codes, tmp_path / "raw.png")
    lacking = {  # as matplotlib names them: "Glyph 30722 (...) missing from font(s) ..."
        chr(int(str(w.message).split()[1])) for w in raw if "missing from" in str(w.message)
    }
    if not lacking:
        pytest.skip("the font here draws every character")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        with missing_glyphs_once():
            for k in range(3):  # matplotlib warns once per character and figure drawn
                _drawn_with(codes, tmp_path / f"{k}.png")
            warnings.warn("another warning", UserWarning, stacklevel=1)
    messages = [str(w.message) for w in caught]
    assert len(messages) == 2 and messages[0] == "another warning"
    assert caught[1].category is MissingGlyphWarning
    assert messages[1].startswith("the figures' font (")
    assert f"no glyph for {len(lacking)} character(s)" in messages[1]
    assert all(ch in messages[1] for ch in lacking) and "\ue000" in lacking


#: Upward transitions of five shoreface facies (observed minus expected probability,
#: rows = the lower facies), listed in no particular order: a user's markov run.
_FIVE = ["foreshore", "coastal plain", "lower shoreface", "upper shoreface", "offshore mudstone"]
_FIVE_DIFFERENCE = pd.DataFrame(
    [
        [np.nan, 0.174, 0.037, -0.307, 0.097],
        [-0.185, np.nan, -0.108, -0.323, 0.616],
        [-0.219, -0.059, np.nan, 0.421, -0.143],
        [0.421, -0.018, -0.347, np.nan, -0.056],
        [-0.227, -0.057, 0.429, -0.146, np.nan],
    ],
    index=_FIVE,
    columns=_FIVE,
)


def _nodes(ax):
    """Facies code -> centre of its circle (the name written at the centre)."""
    from matplotlib.patches import Circle

    centres = [tuple(c.center) for c in ax.patches if isinstance(c, Circle)]
    return {
        " ".join(t.get_text().split()): tuple(t.get_position())
        for t in ax.texts
        if tuple(t.get_position()) in centres
    }


def _nearest(point, points: dict):
    return min(points, key=lambda k: np.hypot(*(np.subtract(points[k], point))))


def _arcs(ax, nodes: dict) -> list[tuple[tuple[str, str], np.ndarray]]:
    """Each arrow of the diagram: its (lower, upper) facies and 101 points along it."""
    arrows = []
    for patch in ax.patches:
        if type(patch).__name__ != "FancyArrowPatch":
            continue
        start, end = patch._posA_posB
        lower, upper = _nearest(start, nodes), _nearest(end, nodes)
        curve = patch.get_connectionstyle()(start, end, shrinkA=0, shrinkB=0)
        t = np.linspace(0, 1, 101)
        points = np.vstack([bezier(t) for bezier, _ in curve.iter_bezier()])
        arrows.append(((lower, upper), points))
    return arrows


def test_difference_labels_sit_on_the_arrow_of_their_transition():
    # the label of coastal plain -> offshore mudstone (0.62) was drawn on the arrow
    # upper shoreface -> foreshore: labels were placed off the chord by more than
    # the arc bows, so on crowded diagrams they landed on a neighbouring arrow
    order = _FIVE  # the order that put labels on the wrong arrows
    fig = figures.facies_relationship_diagram(_FIVE_DIFFERENCE, None, order=order)
    ax = fig.axes[0]
    nodes = _nodes(ax)
    assert set(nodes) == set(_FIVE)
    arrows = _arcs(ax, nodes)
    assert len(arrows) == int((_FIVE_DIFFERENCE > 0.05).to_numpy().sum())
    labels = [t for t in ax.texts if t.get_text().replace(".", "").isdigit()]
    assert len(labels) == len(arrows)
    for label in labels:
        at = np.asarray(label.get_position())
        distance = [np.hypot(*(curve - at).T).min() for _, curve in arrows]
        (lower, upper), _ = arrows[int(np.argmin(distance))]
        assert label.get_text() == f"{_FIVE_DIFFERENCE.loc[lower, upper]:.2f}", (lower, upper)
        assert min(distance) < 0.02  # on the arc itself


def test_facies_names_stay_inside_their_circles():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.patches import Circle

    fig = figures.facies_relationship_diagram(_FIVE_DIFFERENCE, None)
    renderer = FigureCanvasAgg(fig).get_renderer()
    fig.draw_without_rendering()
    ax = fig.axes[0]
    circles = {tuple(c.center): c for c in ax.patches if isinstance(c, Circle)}
    names = [t for t in ax.texts if tuple(t.get_position()) in circles]
    assert len(names) == 5
    for text in names:
        box = text.get_window_extent(renderer)
        ring = circles[tuple(text.get_position())].get_window_extent(renderer)
        centre, radius = ((ring.x0 + ring.x1) / 2, (ring.y0 + ring.y1) / 2), ring.width / 2
        for corner in ((box.x0, box.y0), (box.x0, box.y1), (box.x1, box.y0), (box.x1, box.y1)):
            assert np.hypot(corner[0] - centre[0], corner[1] - centre[1]) <= radius, text


def test_without_a_scheme_facies_go_round_the_circle_in_the_order_their_transitions_suggest():
    # a shallowing run A -> B -> C -> D -> E given in scrambled order: neighbours in the
    # run are neighbours on the circle, so no arrow crosses the diagram
    run = ["A", "B", "C", "D", "E"]
    scrambled = ["C", "E", "A", "D", "B"]
    table = pd.DataFrame(-0.05, index=scrambled, columns=scrambled)
    for lower, upper in zip(run[1:], run[:-1], strict=True):  # upward: deep to shallow
        table.loc[lower, upper] = 0.4
    table.loc["A", "E"] = 0.3  # the flooding back to the deepest facies
    for code in scrambled:
        table.loc[code, code] = np.nan
    fig = figures.facies_relationship_diagram(table, None)
    nodes = _nodes(fig.axes[0])
    angle = {c: np.arctan2(y, x) for c, (x, y) in nodes.items()}
    around = sorted(nodes, key=lambda c: -angle[c])  # clockwise
    k = around.index("A")
    circle = around[k:] + around[:k]
    assert circle in (run, [run[0], *run[:0:-1]])


def test_a_diagram_of_25_facies_keeps_neighbours_apart_and_saves_at_its_size(tmp_path):
    from matplotlib.patches import Circle

    # each facies followed upward by its neighbour on the circle: circles of the
    # 5-facies size overlapped there, and the arrow between them bowed without bound
    # (a figure of 11 billion pixels that could not be saved)
    codes = [f"F{k:02d}" for k in range(25)]
    table = pd.DataFrame(-0.01, index=codes, columns=codes)
    for lower, upper in pairwise(codes):
        table.loc[lower, upper] = 0.4
    fig = figures.facies_relationship_diagram(table, None, order=codes)
    nodes = _nodes(fig.axes[0])
    centres = np.array([nodes[c] for c in codes])
    gaps = np.hypot(*np.diff(centres, axis=0).T)
    (radius,) = {c.get_radius() for c in fig.axes[0].patches if isinstance(c, Circle)}
    assert gaps.min() > 2 * radius * 1.08
    path = save_figure(fig, tmp_path / "frd.png")
    from PIL import Image

    with Image.open(path) as image:
        assert max(image.size) < 3000


def test_a_scheme_of_25_facies_leaves_the_diagram_room_above_its_legend(tmp_path):
    # a legend of one row per facies squeezed the diagram to nothing (matplotlib's
    # "axes sizes collapsed to zero") when the figure kept the height of 8 facies
    codes = [f"F{k:02d}" for k in range(25)]
    lines = ["name: many", "facies:"]
    lines += [f"  - {{code: {c}, name: facies {c}, rank: {k}}}" for k, c in enumerate(codes)]
    (tmp_path / "s.yaml").write_text("\n".join(lines) + "\n")
    many = load_scheme(tmp_path / "s.yaml")
    table = pd.DataFrame(-0.01, index=codes, columns=codes)
    for lower, upper in pairwise(codes):
        table.loc[lower, upper] = 0.4
    fig = figures.facies_relationship_diagram(table, many)
    fig.draw_without_rendering()
    inches = fig.axes[0].get_position().height * fig.get_figheight()
    assert inches > 2.5


def _overlapping(boxes) -> list[tuple[int, int]]:
    return [
        (i, j) for i, a in enumerate(boxes) for j, b in enumerate(boxes) if i < j and a.overlaps(b)
    ]


@pytest.mark.parametrize("n_repeats", [1, 3])
def test_emission_category_labels_do_not_overlap(n_repeats):
    # "base 2+ ranl|base 1|base level with th": the categories of a context feature
    # ran into each other and were cut; wrapped (or upright where the page is too
    # narrow, with three times as many columns), every label stands alone
    from faciesseq.hmm.context import CONTEXT_CATEGORIES
    from faciesseq.report.model_section import feature_title

    cats = [
        f"{c} {k}" if k else c for k in range(n_repeats) for c in CONTEXT_CATEGORIES["base_shift"]
    ]
    table = pd.DataFrame(
        np.full((4, len(cats)), 1 / len(cats)), index=["HST", "FSST", "LST", "TST"], columns=cats
    )
    fig = figures.heatmap(table, row_title="state", column_title=feature_title("base_shift"))
    fig.draw_without_rendering()
    ax = fig.axes[0]
    labels = ax.get_xticklabels()
    assert [" ".join(t.get_text().split()) for t in labels] == cats  # nothing cut
    assert not _overlapping([t.get_window_extent() for t in labels])
    page = fig.get_window_extent()
    assert all(page.contains(*t.get_window_extent().p0) for t in labels)
    assert "_" not in ax.get_xlabel() and "base" in ax.get_xlabel()
    assert all(t.get_bbox_patch() is None for t in labels)  # no colour per category


def test_residual_heatmap_writes_two_decimals_and_marks_small_expected_counts():
    # a significant 2.05 and a non-significant 1.95 were both written "2.0"; cells of
    # an expected count below 5, marked "!" in markov.txt, were unmarked in the figure
    import faciesseq as fs
    from faciesseq.report.document import Document, FigureBlock
    from faciesseq.report.markov_section import markov_section
    from faciesseq.scheme import Facies, FaciesScheme

    rng = np.random.default_rng(5)
    cycle = ["OFF", "LSF", "USF", "CP"]
    rows = []
    for core in range(2):  # few beds: some expected counts below 5
        codes = [c for _ in range(5) for c in cycle]
        codes = [c if rng.random() > 0.2 else cycle[rng.integers(4)] for c in codes]
        codes = [c for k, c in enumerate(codes) if k == 0 or c != codes[k - 1]]
        rows += [(f"C{core}", float(k), k + 1.0, c) for k, c in enumerate(codes)]
    cores = fs.read_cores(pd.DataFrame(rows, columns=["core", "top", "base", "facies"]))
    report = fs.analyse(cores.require_valid(), by="core")
    scheme = FaciesScheme(tuple(Facies(c, c, float(k)) for k, c in enumerate(cycle)))
    document = Document("appendix", sections=[markov_section(report, scheme)])
    block = next(
        b for b in document.blocks() if isinstance(b, FigureBlock) and b.key == "markov_residuals"
    )
    assert "! marks cells with an expected count below 5" in block.caption
    ax = block.figure.axes[0]
    codes = list(report.codes)
    fo = report.first_order
    written = {
        (codes[round(t.get_position()[1])], codes[round(t.get_position()[0])]): t.get_text()
        for t in ax.texts
    }
    for i, below in enumerate(codes):
        for j, above in enumerate(codes):
            r = fo.residuals[i, j]
            if not np.isfinite(r):
                continue
            text = written[below, above]
            assert text.startswith(f"{r:.2f}")
            assert text.endswith("!") == bool(fo.low_expected[i, j])
            assert ("*" in text) == bool(fo.significant[i, j])
    assert fo.low_expected.any()
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any(label.startswith("! expected count below 5") for label in labels)


def _difference_labels_off_the_circles(table: pd.DataFrame, order: list[str]) -> list[str]:
    """The edge labels of the relationship diagram of ``table``, each asserted to keep
    its box out of every facies circle."""
    from matplotlib.patches import Circle

    fig = figures.facies_relationship_diagram(table, None, order=order)
    fig.draw_without_rendering()
    ax = fig.axes[0]
    labels = [t for t in ax.texts if t.get_text().replace(".", "").isdigit()]
    rings = [c.get_window_extent() for c in ax.patches if isinstance(c, Circle)]
    for text in labels:
        box = text.get_window_extent()
        for ring in rings:
            centre = np.array([(ring.x0 + ring.x1) / 2, (ring.y0 + ring.y1) / 2])
            nearest = np.clip(centre, [box.x0, box.y0], [box.x1, box.y1])
            assert np.hypot(*(nearest - centre)) >= ring.width / 2, text.get_text()
    return [t.get_text() for t in labels]


def test_difference_labels_stand_off_the_circles_and_read_above_the_threshold():
    # on short arcs between neighbours the white box of "0.05" sat on a circle and hid
    # its code; and 0.0504, drawn because it exceeds 0.05, was labelled "0.05"
    codes = ["A", "B", "C", "D", "E", "F", "G", "H", "I"]
    table = pd.DataFrame(-0.01, index=codes, columns=codes)
    for lower, upper in pairwise(codes):
        table.loc[lower, upper] = 0.3
        table.loc[upper, lower] = 0.0504
    for lower, upper in zip(codes, codes[2:], strict=False):  # arcs past a neighbour
        table.loc[lower, upper] = 0.3
    labels = _difference_labels_off_the_circles(table, codes)
    assert sorted(set(labels)) == ["0.0504", "0.30"]
    assert figures.difference_label(0.0504, 0.05) == "0.0504"
    assert figures.difference_label(0.26, 0.05) == "0.26"


def test_no_difference_label_covers_a_circle_on_a_table_where_one_did():
    """The table of tests/data/figures (README there): a "0.05" label sat on SAB."""
    table = pd.read_csv(DATA / "figures" / "ramp-difference.csv", index_col=0)
    order = ["LSS", "PAL", "SAB", "TFL", "LAG", "SHL", "IRP", "MRT", "ORM"]
    assert len(_difference_labels_off_the_circles(table, order)) > 10


@pytest.mark.parametrize("n_facies", [5, 6, 7, 9])
def test_no_arrow_passes_through_a_circle_it_does_not_join(n_facies):
    # the visual audit: upper shoreface -> coastal plain, two places apart round the
    # circle, bowed outward through the foreshore's circle between them. Here every
    # facies goes up into the facies two and three places on, and back
    from matplotlib.patches import Circle

    codes = [chr(ord("A") + k) for k in range(n_facies)]
    table = pd.DataFrame(-0.01, index=codes, columns=codes)
    for k, lower in enumerate(codes):
        for step in (2, 3):
            upper = codes[(k + step) % n_facies]
            table.loc[lower, upper] = 0.2
            table.loc[upper, lower] = 0.1
    fig = figures.facies_relationship_diagram(table, None, order=codes)
    ax = fig.axes[0]
    nodes = _nodes(ax)
    (radius,) = {c.get_radius() for c in ax.patches if isinstance(c, Circle)}
    arrows = _arcs(ax, nodes)
    assert len(arrows) == int((table > 0.05).to_numpy().sum())
    for (lower, upper), points in arrows:
        for code, centre in nodes.items():
            if code in (lower, upper):
                continue
            clearance = np.hypot(*(points - centre).T).min()
            # clear by a quarter of the radius: an arc 0.02 off a circle of radius 0.2
            # read as drawn through it
            assert clearance > 1.25 * radius, (lower, upper, code)


def _cielab(colour: str) -> np.ndarray:
    """CIE L*a*b* (D65 white) of an sRGB colour: the sRGB transfer curve and matrix of
    IEC 61966-2-1, then the CIE 1976 L*a*b* formulas (CIE 15:2004)."""
    from matplotlib.colors import to_rgb

    rgb = np.array(to_rgb(colour))
    linear = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    matrix = np.array(
        [
            [0.4124564, 0.3575761, 0.1804375],
            [0.2126729, 0.7151522, 0.0721750],
            [0.0193339, 0.1191920, 0.9503041],
        ]
    )
    xyz = matrix @ linear / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > (6 / 29) ** 3, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def test_every_surface_colour_stands_apart_from_every_tract_colour():
    # the visual audit: a sequence boundary's crimson line (#a3142a) vanished over the
    # brick of a falling-stage tract (CIE76 distance 17), one extra surface colour lay
    # 10 from an extra tract colour. Lines are drawn over tract fills in the sections
    # and strip logs, so each surface colour keeps a CIE76 distance of 25 from every
    # tract colour (the extras a user's own tracts and surfaces get included), and
    # from the other surfaces
    from faciesseq.report import style

    tracts = [*style.TRACT_COLOURS.values(), *style._TRACT_EXTRA]
    surfaces = [*style.SURFACE_COLOURS.values(), *style._SURFACE_EXTRA]
    to_tracts = [np.linalg.norm(_cielab(s) - _cielab(t)) for s in surfaces for t in tracts]
    assert min(to_tracts) >= 25
    apart = [np.linalg.norm(_cielab(a) - _cielab(b)) for a, b in combinations(surfaces, 2)]
    assert min(apart) >= 25
    # lines on the white page stay dark or strong enough to see
    assert min(np.linalg.norm(_cielab(s) - _cielab("#ffffff")) for s in surfaces) >= 40


def test_relationship_diagram_of_a_grid_reads_the_steps_between_facies():
    # a grid analysis counts each cell's step to the next, so its diagonal holds most
    # transitions and no step to another facies exceeds what independence expects;
    # the diagram draws the transitions between different facies, as of beds (Miall
    # 1973 draws the embedded chain), and says so in its title
    import matplotlib.pyplot as plt

    from faciesseq.markov import analyse
    from faciesseq.report.markov_section import GRID_DIAGRAM_TITLE, relationship_diagram

    rng = np.random.default_rng(3)
    cycle = [0, 1, 2, 3]  # upward A -> B -> C -> D -> A, each bed 3-8 cells thick
    succession = np.concatenate([np.full(rng.integers(3, 9), cycle[k % 4]) for k in range(160)])
    codes = ["A", "B", "C", "D"]
    grid = analyse([succession], codes, unit="grid", max_order=1)
    beds = analyse([succession[np.r_[True, np.diff(succession) != 0]]], codes, max_order=1)

    def arrows(report):
        fig = relationship_diagram(report)
        drawn = [p for p in fig.axes[0].patches if type(p).__name__ == "FancyArrowPatch"]
        title = fig.axes[0].get_title()
        plt.close(fig)
        return len(drawn), title

    assert not (np.asarray(grid.first_order.difference)[~np.eye(4, dtype=bool)] > 0.05).any()
    assert arrows(beds) == (4, "")
    assert arrows(grid) == (4, GRID_DIAGRAM_TITLE)
