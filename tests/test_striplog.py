"""Strip logs drawn from synthetic decoded cores (invented numbers)."""

import numpy as np
import pytest
from _synthetic import SHOREFACE, held_at_labels, synthetic_core
from matplotlib.legend import Legend
from PIL import Image

from faciesseq.errors import InputError
from faciesseq.report.document import format_probability
from faciesseq.report.striplog import bed_widths, strip_log
from faciesseq.report.style import TRACT_COLOURS
from faciesseq.scheme import default_tract_model, load_scheme

SCHEME = SHOREFACE


@pytest.fixture(scope="module")
def model():
    return default_tract_model()


@pytest.fixture(scope="module")
def scheme():
    return load_scheme(SCHEME)


def _legends(fig):
    return [a for ax in fig.axes for a in ax.get_children() if isinstance(a, Legend)]


def test_strip_log_writes_a_print_sized_png_with_legends(tmp_path, model, scheme):
    path = tmp_path / "core.png"
    fig = strip_log(synthetic_core(model), scheme, model, path)
    assert path.stat().st_size > 20_000
    with Image.open(path) as img:
        width, height = img.size
    # page width 7 in at 200 dpi, cropped tight: between 5 and 7.5 inches wide
    assert 1000 < width < 1500
    assert height > width
    titles = sorted(leg.get_title().get_text() for leg in _legends(fig))
    assert titles == ["facies (landward → basinward)", "surface", "systems tract"]
    tract_labels = [t.get_text() for leg in _legends(fig) for t in leg.get_texts()]
    assert any(label.startswith("TST") for label in tract_labels)


def test_depth_axis_points_down_and_spans_the_core(model, scheme):
    core = synthetic_core(model)
    fig = strip_log(core, scheme, model)
    depth_axis = fig.axes[0]
    assert depth_axis.yaxis_inverted()
    low, high = sorted(depth_axis.get_ylim())
    assert low <= core.beds["top"].min() and high >= core.beds["base"].max()
    assert "depth (m)" in depth_axis.get_ylabel()


def test_tract_column_uses_the_project_palette(model, scheme):
    core = synthetic_core(model)
    fig = strip_log(core, scheme, model)
    tract_axis = fig.axes[1]
    colours = {
        tuple(np.round(c[:3], 3)) for coll in tract_axis.collections for c in coll.get_facecolor()
    }
    from matplotlib.colors import to_rgb

    expected = {tuple(np.round(to_rgb(TRACT_COLOURS[t]), 3)) for t in set(core.beds["tract"])}
    assert expected <= colours


def test_widths_follow_grain_size_when_known_else_rank(model, scheme):
    with_grain = synthetic_core(model, grain=True).beds
    widths, measure = bed_widths(with_grain, scheme)
    assert measure == "grain_size"
    assert widths == pytest.approx(np.clip(with_grain["grain_size"], 0.5, 7) / 7)
    no_grain = load_scheme(SHOREFACE)
    beds = synthetic_core(model).beds.assign(facies="SHM")
    beds.loc[0, "facies"] = "UNKNOWN"
    widths, measure = bed_widths(beds, no_grain)
    # SHM has a scheme grain size but UNKNOWN has none: falls back to rank
    assert measure == "rank"
    assert widths[1] == pytest.approx(0.3)  # SHM is the most basinward rank


def _boxes(ax):
    """``(top, base, left, right)`` of every box drawn as a polygon collection."""
    out = []
    for collection in ax.collections:
        if type(collection).__name__ != "PolyCollection":
            continue
        for path in collection.get_paths():
            x, y = path.vertices[:, 0], path.vertices[:, 1]
            out.append((y.min(), y.max(), x.min(), x.max()))
    return out


def test_posterior_bands_stack_to_one(model, scheme):
    core = synthetic_core(model)
    fig = strip_log(core, scheme, model)
    right = {}
    for top, _, _, x_right in _boxes(fig.axes[2]):
        key = round(top, 6)
        right[key] = max(right.get(key, 0.0), x_right)
    assert len(right) == len(core.beds)
    assert np.allclose(list(right.values()), 1.0)


def test_picks_are_labelled_with_their_probability(model, scheme):
    core = synthetic_core(model)
    fig = strip_log(core, scheme, model)
    texts = [t.get_text() for t in fig.axes[3].texts]
    for pick in core.picks.itertuples():
        assert f"MFS {format_probability(pick.probability)}" in texts
    # a pick whose cluster holds a whole surface or more is not labelled as certain
    core.picks.loc[core.picks.index[0], "probability"] = 1.0
    texts = [t.get_text() for t in strip_log(core, scheme, model).axes[3].texts]
    assert "MFS > 0.99" in texts and not any(t.endswith("1.00") for t in texts)


def test_names_with_markup_are_drawn_as_text(tmp_path, model, scheme):
    core = synthetic_core(model, name="$<script>$")
    fig = strip_log(core, scheme, model, tmp_path / "x.pdf")
    assert fig._suptitle.get_text() == "Core $<script>$"
    assert (tmp_path / "x.pdf").read_bytes()[:4] == b"%PDF"


def test_empty_core_is_refused_with_its_name(model, scheme):
    core = synthetic_core(model)
    empty = type(core)(
        core.core,
        "m",
        core.tracts,
        core.surfaces,
        core.beds.iloc[:0],
        core.boundaries.iloc[:0],
        core.picks.iloc[:0],
        0.0,
    )
    with pytest.raises(InputError, match="W-1"):
        strip_log(empty, scheme, model)


def test_touching_cells_of_one_facies_are_drawn_as_one_box(model, scheme):
    core = synthetic_core(model, gap_after=None, n_beds=12)
    beds = core.beds.copy()
    beds["facies"] = ["CP"] * 5 + ["FS"] * 4 + ["CP"] * 3  # a depth grid: runs of cells
    grid = type(core)(
        core.core,
        "m",
        core.tracts,
        core.surfaces,
        beds,
        core.boundaries,
        core.picks,
        core.log_likelihood,
    )
    fig = strip_log(grid, scheme, model)
    boxes = [b for b in _boxes(fig.axes[0]) if b[3] > b[2]]
    assert len(boxes) == 3
    assert sum(base - top for top, base, _, _ in boxes) == pytest.approx(beds["thickness"].sum())


def test_legends_give_whole_facies_and_surface_names(model, scheme):
    fig = strip_log(synthetic_core(model), scheme, model)
    texts = [t.get_text() for leg in _legends(fig) for t in leg.get_texts()]
    joined = [" ".join(t.split()) for t in texts]  # wrapped lines read as one name
    assert not any("…" in t for t in texts)
    names = {f"{f.code} {f.name}" for f in scheme.facies}
    assert any(t in names for t in joined)
    first_names = {}
    for sf in model.surfaces:
        first_names.setdefault(sf.code, sf.name)  # the legend names each code once
    code, name = max(first_names.items(), key=lambda kv: len(kv[1]))
    assert len(name) > 40 and f"{code} {name}" in joined
    assert any("\n" in t for t in texts)  # long names wrap instead of widening the page


def test_pick_labels_never_overprint():
    from faciesseq.report.striplog import label_depths

    out = label_depths(np.array([7.5, 7.6, 7.62, 20.0]), 0.5)
    np.testing.assert_allclose(out, [7.5, 8.0, 8.5, 20.0])
    assert (np.diff(out) >= 0.5 - 1e-12).all()


@pytest.mark.parametrize("offset", [0.0, 4000.0])
def test_fixed_layout_keeps_every_label_on_the_page_and_apart(model, scheme, offset):
    # The strip log is laid out in inches without a layout engine: titles, axis
    # labels and tick labels (four-digit depths too) must stay inside the figure,
    # and the figure title, panel titles and legends must not overlap.
    core = synthetic_core(model)
    beds = core.beds.assign(top=core.beds["top"] + offset, base=core.beds["base"] + offset)
    core = type(core)(core.core, "ft", core.tracts, core.surfaces, beds, core.boundaries, None, 0.0)
    fig = strip_log(core, scheme, model, checked=False)
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(fig).get_renderer()
    page = fig.bbox
    panels = fig.axes[:4]
    fig.draw_without_rendering()
    # everything drawn for a panel: ticks, tick labels, axis labels, title
    for ax in panels:
        box = ax.get_tightbbox(renderer)
        assert page.x0 <= box.x0 and box.x1 <= page.x1, ax.get_title()
        assert page.y0 <= box.y0 and box.y1 <= page.y1, ax.get_title()
    assert fig._suptitle.get_window_extent(renderer).y1 <= page.y1
    title = fig._suptitle.get_window_extent(renderer)
    legends = [leg.get_window_extent(renderer) for leg in _legends(fig)]
    for ax in panels:
        assert not title.overlaps(ax.title.get_window_extent(renderer))
        label = ax.xaxis.label.get_window_extent(renderer)
        assert not any(label.overlaps(leg) for leg in legends), ax.xaxis.label.get_text()


def test_a_pick_at_probability_one_is_drawn_whole_inside_its_panel(model, scheme):
    # a pick with p > 0.99 sat on the panel's right edge, its marker half clipped
    core = synthetic_core(model)
    core.picks.loc[core.picks.index[0], "probability"] = 1.0
    fig = strip_log(core, scheme, model)
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(fig).get_renderer()
    fig.draw_without_rendering()
    panel = fig.axes[3]
    box = panel.get_window_extent()
    markers = [line for line in panel.lines if line.get_marker() == "<"]
    assert markers
    for line in markers:
        extent = line.get_window_extent(renderer)
        assert box.x0 - 0.5 <= extent.x0 and extent.x1 <= box.x1 + 0.5


def _scheme_of(facies: list[dict], name: str = "a geologist's scheme"):
    from faciesseq.scheme import FaciesScheme

    return FaciesScheme.from_dict({"name": name, "facies": facies})


def test_facies_colour_is_stable_and_follows_rank_then_name():
    from matplotlib.colors import rgb_to_hsv, to_rgb

    from faciesseq.markov.seriation import SUGGESTED
    from faciesseq.report.style import facies_colour

    names = ["coastal plain", "foreshore", "upper shoreface", "lower shoreface", "offshore"]
    # no scheme, ranks only suggested from the data in another order, and a scheme
    # listing the facies in another order: one colour per facies each time
    bare = [facies_colour(n) for n in names]
    suggested = _scheme_of(
        [{"code": n, "name": f"facies {n}", "rank": r} for n, r in zip(names, [4, 0, 1, 2, 3])],
        SUGGESTED,
    )
    assert [facies_colour(n, suggested) for n in names] == bare
    given = _scheme_of(
        [{"code": n, "name": f"facies {n}", "rank": r} for r, n in reversed(list(enumerate(names)))]
    )
    wider = _scheme_of(
        [{"code": n, "name": n, "rank": r} for r, n in enumerate(names)], "another name"
    )
    assert [facies_colour(n, given) for n in names] == [facies_colour(n, wider) for n in names]
    # a geologist's ranks: deeper facies darker, the deepest bluer than the shallowest
    value = [rgb_to_hsv(to_rgb(facies_colour(n, given)))[2] for n in names]
    assert value[-1] < value[1] and value[-1] < value[2]
    deep, shallow = to_rgb(facies_colour(names[-1], given)), to_rgb(facies_colour(names[1], given))
    assert deep[2] - deep[0] > shallow[2] - shallow[0]
    # the trade's words place a facies the same way without a scheme
    assert to_rgb(bare[-1])[2] - to_rgb(bare[-1])[0] > to_rgb(bare[1])[2] - to_rgb(bare[1])[0]
    # a colour the scheme gives is kept; a name without the trade's words still has one
    coloured = _scheme_of([{"code": "A", "name": "a", "rank": 0, "colour": "#123456"}])
    assert facies_colour("A", coloured) == "#123456"
    assert facies_colour("widget") == facies_colour("widget") != facies_colour("gadget")


def test_codes_of_a_suggested_scheme_sharing_a_colour_by_digest_are_told_apart():
    """A minimal table's codes (no colours, no words of the trade) are coloured by a
    digest of the code; two codes of one scheme whose digests fell on one colour (SAB
    and ORM, IRP and LSS below) drew two facies of a strip log alike. Within a scheme
    each takes a colour of its own while colours are left; a code alone keeps its
    colour."""
    from faciesseq.markov.seriation import SUGGESTED
    from faciesseq.report.style import facies_colour, facies_colours

    codes = ["SAB", "ORM", "IRP", "LSS", "MRT"]
    bare = {c: facies_colour(c) for c in codes}
    assert bare["SAB"] == bare["ORM"] and bare["IRP"] == bare["LSS"]  # the digests collide
    facies = [{"code": c, "name": c, "rank": r} for r, c in enumerate(codes)]
    suggested = _scheme_of(facies, SUGGESTED)
    coloured = [facies_colour(c, suggested) for c in codes]
    assert len(set(coloured)) == len(codes)
    assert coloured[-1] == bare["MRT"]  # no other code took its colour
    alone = _scheme_of([{"code": "ORM", "name": "ORM", "rank": 0}], SUGGESTED)
    assert facies_colour("ORM", alone) == bare["ORM"]
    # without a scheme, a figure's codes are told apart the same way
    assert list(facies_colours(codes).values()) == coloured


def test_legend_prints_a_facies_name_that_repeats_its_code_once(model):
    scheme = _scheme_of(
        [
            {"code": c, "name": f"facies {c}", "rank": r}
            for r, c in enumerate(("CP", "FS", "USF", "LSF", "OTZ", "OFF", "SHM"))
        ]
    )
    fig = strip_log(synthetic_core(model), scheme, model)
    texts = [" ".join(t.get_text().split()) for leg in _legends(fig) for t in leg.get_texts()]
    assert "CP" in texts and not any("facies CP" in t for t in texts)


def test_strip_log_of_a_core_alone_draws_with_defaults_and_returns_a_figure(model, scheme):
    """``strip_log(core)`` failed with missing 'scheme' and 'tract_model'."""
    from types import SimpleNamespace

    from matplotlib.figure import Figure

    core = synthetic_core(model)
    fig = strip_log(core)  # the core's facies alone, the default tract model
    assert isinstance(fig, Figure)
    texts = [t.get_text() for legend in _legends(fig) for t in legend.get_texts()]
    assert any("highstand" in t for t in texts)  # tract names from the default model
    fitted = SimpleNamespace(scheme=scheme, tract_model_=model)  # what a TractHMM offers
    fig = strip_log(core, model=fitted)
    texts = [t.get_text() for legend in _legends(fig) for t in legend.get_texts()]
    assert any(scheme[c].name.split()[0] in t for c in scheme.codes for t in texts)


def test_surface_legend_lists_only_the_surfaces_drawn(model, scheme):
    # the visual audit: the legend listed every surface of the tract model, kinds the
    # core had neither a pick nor a visible probability of. Here LHB has none and BSFR
    # stays below a hundredth in every cell; MFS is picked, SB and MRS drawn as curves
    import dataclasses

    from matplotlib.colors import to_hex

    from faciesseq.report.style import surface_colour

    core = synthetic_core(model)
    boundaries = core.boundaries.assign(p_LHB=0.0, p_BSFR=0.001)
    core = dataclasses.replace(core, boundaries=boundaries)
    fig = strip_log(core, scheme, model)
    (legend,) = [leg for leg in _legends(fig) if leg.get_title().get_text() == "surface"]
    codes = [t.get_text().split()[0] for t in legend.get_texts()][:-1]  # then the pick
    assert codes == ["SB", "MRS", "MFS"]
    # each keeps the colour it has in every core
    for code, line in zip(codes, legend.get_lines(), strict=False):
        assert to_hex(line.get_color()) == surface_colour(code, core.surfaces)


def _hatched(ax):
    """``(top, base, ink)`` of every hatched box of the axes."""
    from matplotlib.colors import to_hex

    out = []
    for collection in ax.collections:
        if collection.get_hatch() is None:
            continue
        ink = to_hex(collection.get_edgecolor()[0])
        for path in collection.get_paths():
            out.append((path.vertices[:, 1].min(), path.vertices[:, 1].max(), ink))
    return sorted(out)


def test_beds_held_at_the_label_are_hatched_and_the_note_says_so(model, scheme):
    # a held bed's probability of 1 is the geologist's label, not the model's: its run
    # is hatched across the probability track, in an ink that reads on its tract colour
    from faciesseq.report.style import HELD_NOTE, held_ink

    core = synthetic_core(model)
    rows = [*range(3, 12), 30, 31]  # two runs, the second across no gap
    held = held_at_labels(core, rows)
    fig = strip_log(held, scheme, model)
    hatched = _hatched(fig.axes[2])
    beds = held.beds.iloc[rows]
    cut = ~np.isclose(beds["top"].to_numpy()[1:], beds["base"].to_numpy()[:-1]) | (
        beds["tract"].to_numpy()[1:] != beds["tract"].to_numpy()[:-1]
    )
    assert len(hatched) == 1 + cut.sum()  # one box per run of touching held beds of a tract
    assert sum(b - t for t, b, _ in hatched) == pytest.approx(beds["thickness"].sum())
    for top, _, ink in hatched:
        tract = beds.loc[np.isclose(beds["top"], top), "tract"].iloc[0]
        assert ink == held_ink(TRACT_COLOURS[tract])
    assert HELD_NOTE in fig.axes[2].get_xlabel()
    # without held beds: no hatching, no note
    plain = strip_log(core, scheme, model)
    assert _hatched(plain.axes[2]) == [] and HELD_NOTE not in plain.axes[2].get_xlabel()


def test_held_note_on_a_third_line_stays_clear_of_the_legends(model, scheme):
    # not checked and fitted without labels: two notes in one line, the held note a third;
    # the panels make room for it, so no label runs into the legends or off the page
    import dataclasses

    from matplotlib.backends.backend_agg import FigureCanvasAgg

    core = held_at_labels(synthetic_core(model), range(10))
    core = dataclasses.replace(core, tracts_labelled=False)
    fig = strip_log(core, scheme, model, checked=False)
    assert len(fig.axes[2].get_xlabel().splitlines()) == 3
    renderer = FigureCanvasAgg(fig).get_renderer()
    fig.draw_without_rendering()
    legends = [leg.get_window_extent(renderer) for leg in _legends(fig)]
    for ax in fig.axes[:4]:
        label = ax.xaxis.label.get_window_extent(renderer)
        assert not any(label.overlaps(leg) for leg in legends), ax.xaxis.label.get_text()
        assert fig.bbox.y0 <= ax.get_tightbbox(renderer).y0
