"""The correlation section figure (``correlate -o``, ``faciesseq.report.section``):
title, distance axis and the tract fills between wells. Invented wells."""

from __future__ import annotations

import pandas as pd
import pytest

from faciesseq.correlation import correlate
from faciesseq.report.section import distance_label, section_plot, tract_bands
from faciesseq.report.style import figure_style

TRACTS = ("HST", "FSST", "LST", "TST")

#: Well A holds a whole sequence (HST on FSST, LST and TST); Well B, 3 km away, only
#: the HST and the TST below it. Depth order, top first.
WELL_A = [("HST", 0, 5), ("FSST", 5, 7), ("LST", 7, 9), ("TST", 9, 12), ("HST", 12, 15)]
WELL_B = [("HST", 0, 10), ("TST", 10, 12), ("HST", 12, 16)]


def _beds():
    rows = [{"core": "A", "top": t, "base": b, "tract": c} for c, t, b in WELL_A]
    rows += [{"core": "B", "top": t, "base": b, "tract": c} for c, t, b in WELL_B]
    return pd.DataFrame(rows)


def _correlation(section: str = "section"):
    picks = pd.DataFrame(
        [
            {"core": "A", "surface": "MFS", "depth": 12.0, "probability": 0.9},
            {"core": "B", "surface": "MFS", "depth": 12.0, "probability": 0.9},
        ]
    )
    wells = pd.DataFrame(
        [
            {"core": "A", "section": section, "position": 0.0},
            {"core": "B", "section": section, "position": 3.0},
        ]
    )
    return correlate(picks, {"A": (0.0, 15.0), "B": (0.0, 16.0)}, wells)


def _tract_at(well: list, top: float, base: float) -> set[str]:
    return {c for c, t, b in well if b > top + 1e-9 and t < base - 1e-9}


def test_a_fill_joins_one_tract_to_the_same_tract_in_the_next_well_only():
    # an HST fill ran from Well A's HST over its FSST, LST and TST, because a band
    # took the tract holding most thickness between two ties
    corr = _correlation()
    beds = _beds()
    columns = {c: beds[beds["core"] == c] for c in ("A", "B")}
    bands = tract_bands(corr.ties, columns, ["A", "B"])
    assert bands
    for _, _, (top_a, base_a, top_b, base_b), code in bands:
        assert _tract_at(WELL_A, top_a, base_a) == {code}
        assert _tract_at(WELL_B, top_b, base_b) == {code}
    joined = {(code, round(t0, 3), round(b0, 3)) for _, _, (t0, b0, _, _), code in bands}
    # above the MFS: HST to HST and TST to TST; the FSST and LST of A thin out
    assert ("HST", 0.0, 5.0) in joined and ("TST", 9.0, 12.0) in joined
    assert not any(code in ("FSST", "LST") for code, _, _ in joined)


def test_fills_keep_depth_order_and_never_cross():
    left = [("HST", 0, 2), ("TST", 2, 4), ("HST", 4, 6)]
    right = [("TST", 0, 3), ("HST", 3, 6)]
    beds = pd.DataFrame(
        [{"core": "L", "top": t, "base": b, "tract": c} for c, t, b in left]
        + [{"core": "R", "top": t, "base": b, "tract": c} for c, t, b in right]
    )
    columns = {c: beds[beds["core"] == c] for c in ("L", "R")}
    # one tie at the base of both columns: every run lies between the tops and it
    ties = pd.DataFrame(
        [{"core_left": "L", "core_right": "R", "depth_left": 6.0, "depth_right": 6.0}]
    )
    bands = sorted(tract_bands(ties, columns, ["L", "R"]), key=lambda band: band[2][0])
    assert [code for *_, code in bands] == ["TST", "HST"]
    tops_right = [band[2][2] for band in bands]
    assert tops_right == sorted(tops_right)


def test_title_does_not_repeat_the_default_section_name_and_the_axis_has_units():
    with figure_style():
        fig = section_plot(_correlation(), "section", _beds(), "MFS", "m", "x_km", TRACTS)
    ax = fig.axes[0]
    assert ax.get_title() == "Correlated surfaces, hung on MFS"
    assert "Section section" not in ax.get_title()
    assert ax.get_xlabel() == "distance along the section (km)"
    # hung on a surface, the depths above it are negative, and the axis says so
    assert ax.get_ylabel().startswith("depth below MFS")
    assert ax.get_ylabel().endswith("(m; above it negative)")
    with figure_style():
        fig = section_plot(_correlation(), "section", _beds(), "depth", "m", "x_km", TRACTS)
    assert fig.axes[0].get_ylabel() == "depth as measured (m)"
    with figure_style():
        fig = section_plot(_correlation("dip"), "dip", _beds(), "MFS", "m", "distance", TRACTS)
    assert fig.axes[0].get_title() == "Section dip: correlated surfaces, hung on MFS"


@pytest.mark.parametrize(
    ("column", "label"),
    [
        ("x_km", "distance along the section (km)"),
        ("distance_km", "distance along the section (km)"),
        ("distance", "distance along the section (units of the wells table)"),
        ("position", "distance along the section (units of the wells table)"),
        ("distance along the section (x, y units)", "distance along the section (x, y units)"),
    ],
)
def test_distance_label_names_its_units(column, label):
    assert distance_label(column) == label


def _untied_correlation():
    """Wells A and B with picks of no common kind: the pair shares no tie."""
    picks = pd.DataFrame(
        [
            {"core": "A", "surface": "MFS", "depth": 12.0, "probability": 0.9},
            {"core": "B", "surface": "SB", "depth": 10.0, "probability": 0.9},
        ]
    )
    wells = pd.DataFrame(
        [
            {"core": "A", "section": "dip", "position": 0.0},
            {"core": "B", "section": "dip", "position": 3.0},
        ]
    )
    return correlate(picks, {"A": (0.0, 15.0), "B": (0.0, 16.0)}, wells)


def test_wells_without_a_tie_are_drawn_unjoined():
    # the audit's section drew HST/LST/FSST/TST fills between two wells with no tie
    corr = _untied_correlation()
    assert corr.ties.empty
    beds = _beds()
    columns = {c: beds[beds["core"] == c] for c in ("A", "B")}
    assert tract_bands(corr.ties, columns, ["A", "B"]) == []
    with figure_style():
        fig = section_plot(corr, "dip", beds, datum="depth", tract_order=TRACTS)
    ax = fig.axes[0]
    # no fill polygon, no tie line: only the columns' rectangles and the datum-less axes
    assert not [p for p in ax.patches if type(p).__name__ == "Polygon"]
    assert not ax.lines


def _two_sections():
    """Section dip ties MFS above SB; section strike SB above MFS (first appearance)."""
    picks, wells, extents = [], [], {}
    for section, kinds in (("dip", ("MFS", "SB")), ("strike", ("SB", "MFS"))):
        for w, core in enumerate((f"{section}-1", f"{section}-2")):
            extents[core] = (0.0, 15.0)
            wells.append({"core": core, "section": section, "position": 3.0 * w})
            for depth, kind in zip((5.0, 10.0), kinds):
                picks.append({"core": core, "surface": kind, "depth": depth, "probability": 1.0})
    return correlate(pd.DataFrame(picks), extents, pd.DataFrame(wells))


def _legend_surfaces(fig) -> list[str]:
    texts = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    return [t for t in texts if t in ("MFS", "SB", "MRS", "BSFR")]


def test_section_legends_list_surfaces_in_one_order():
    corr = _two_sections()
    beds = pd.concat(
        [
            pd.DataFrame({"core": c, "top": [0.0], "base": [15.0], "tract": ["HST"]})
            for c in corr.wells["core"]
        ]
    )
    orders = {}
    for surface_order in ((), ("BSFR", "SB", "MRS", "MFS")):
        for section in ("dip", "strike"):
            with figure_style():
                fig = section_plot(corr, section, beds, datum="depth", surface_order=surface_order)
            orders[(surface_order, section)] = _legend_surfaces(fig)
    # without the model's order, the first appearance among all ties (dip's): MFS, SB
    assert orders[((), "dip")] == orders[((), "strike")] == ["MFS", "SB"]
    model = ("BSFR", "SB", "MRS", "MFS")
    assert orders[(model, "dip")] == orders[(model, "strike")] == ["SB", "MFS"]


def _texts(section) -> list[str]:
    out = [getattr(block, "text", "") for block in section.blocks]
    for sub in section.subsections:
        out += _texts(sub)
    return out


def test_appendix_says_which_wells_share_no_tie():
    from faciesseq.report.correlation_section import correlation_section

    with figure_style():
        section = correlation_section(_untied_correlation(), _beds(), TRACTS, datum="depth")
    texts = _texts(section)
    assert any(
        "A and B share no tied surface; their columns are drawn unjoined" in t for t in texts
    )


def _partly_untied_correlation():
    """Wells A, B and C tied (A and B by MFS and SB, B and C by SB; C has no MFS); D, past
    C, shares no surface kind with C: the pair C, D is untied. D's column starts at 2 m."""
    picks = pd.DataFrame(
        [
            {"core": "A", "surface": "SB", "depth": 5.0, "probability": 0.9},
            {"core": "A", "surface": "MFS", "depth": 12.0, "probability": 0.9},
            {"core": "B", "surface": "SB", "depth": 4.0, "probability": 0.9},
            {"core": "B", "surface": "MFS", "depth": 12.5, "probability": 0.9},
            {"core": "C", "surface": "SB", "depth": 5.0, "probability": 0.9},
            {"core": "D", "surface": "MRS", "depth": 6.0, "probability": 0.9},
        ]
    )
    wells = pd.DataFrame({"core": list("ABCD"), "section": "dip", "position": [0.0, 3.0, 6.0, 9.0]})
    extents = {"A": (0.0, 15.0), "B": (0.0, 16.0), "C": (0.0, 15.0), "D": (2.0, 14.0)}
    return correlate(picks, extents, wells)


def _column_beds(extents: dict) -> pd.DataFrame:
    return pd.DataFrame(
        [{"core": c, "top": t, "base": b, "tract": "HST"} for c, (t, b) in extents.items()]
    )


def test_datum_is_not_carried_across_an_untied_pair():
    # D took B's MFS depth (12.5 m) across the untied pair C-D, as if its MFS were known
    corr = _partly_untied_correlation()
    shifts, _ = _shifts(corr, "dip", "MFS")
    # without the drawn columns D keeps its depths as measured; C, lacking the MFS, hangs
    # through the SB it shares with B: 12.5 m (B's MFS) - 4 m (B's SB) + 5 m (C's SB)
    assert shifts["C"] == 13.5 and shifts["D"] == 0.0
    from faciesseq.report.section import hang_section

    assert [tuple(p) for p in corr.untied_pairs[["core_left", "core_right"]].values] == [("C", "D")]
    beds = _column_beds({"A": (0.0, 15.0), "B": (0.0, 16.0), "C": (0.0, 15.0), "D": (2.0, 14.0)})
    hanging = hang_section(corr, "dip", "MFS", beds)
    # C hangs through its SB tie to B; D hangs on its own core top (2 m)
    assert hanging.shift == {"A": 12.0, "B": 12.5, "C": 13.5, "D": 2.0}
    assert hanging.unhung == ("D",)
    assert hanging.through == (("C", "SB-1", "B"),)
    assert hanging.notes == (
        "no MFS-1 in C: hung through SB-1 tied to B",
        "D not hung on MFS-1: no tie joins it to the wells that have it; core top drawn "
        "at the datum line",
    )
    with figure_style():
        fig = section_plot(corr, "dip", beds, datum="MFS", tract_order=TRACTS)
    texts = [t.get_text() for t in fig.texts]
    assert all(line in texts for line in hanging.notes)


def test_every_well_tied_to_the_datum_is_hung_on_it():
    corr = _correlation()
    with figure_style():
        fig = section_plot(corr, "section", _beds(), datum="MFS", tract_order=TRACTS)
    assert not [t for t in fig.texts if "not hung" in t.get_text()]


def test_page_and_appendix_name_the_wells_not_hung_on_the_datum():
    from faciesseq.report.correlation_section import correlation_section
    from faciesseq.report.section_view import section_view_data

    corr = _partly_untied_correlation()
    beds = _column_beds({"A": (0.0, 15.0), "B": (0.0, 16.0), "C": (0.0, 15.0), "D": (2.0, 14.0)})
    (data,) = section_view_data(corr, beds, TRACTS, datum="MFS")["sections"]
    assert data["unhung"] == ["D"]
    assert data["hanging_note"].startswith("no MFS-1 in C: hung through SB-1 tied to B. ")
    assert "D not hung on MFS-1: no tie joins it" in data["hanging_note"]
    assert {w["core"]: w["shift"] for w in data["wells"]} == {
        "A": 12.0,
        "B": 12.5,
        "C": 13.5,
        "D": 2.0,
    }
    with figure_style():
        section = correlation_section(corr, beds, TRACTS, datum="MFS")
    captions = [
        b.caption for sub in section.subsections for b in sub.blocks if hasattr(b, "figure")
    ]
    assert len(captions) == 1 and data["hanging_note"] in captions[0]


def test_hang_section_names_the_datum_not_a_flag_from_python():
    from faciesseq.errors import ConfigError
    from faciesseq.report.section import hang_section

    corr = _correlation()
    with pytest.raises(ConfigError) as missing:
        hang_section(corr, "section", "elevation")
    assert str(missing.value).startswith("datum elevation needs an 'elevation' value for every")
    with pytest.raises(ConfigError) as unknown:
        hang_section(corr, "section", "section:SB-9")
    assert str(unknown.value).startswith("datum 'section:SB-9' is no correlated surface; the ")
    assert "surfaces of its section are section:" in str(unknown.value)
    with pytest.raises(ConfigError, match=r"^--datum 'section:SB-9' is no correlated"):
        hang_section(corr, "section", "section:SB-9", option="--datum")


def test_check_datum_accepts_the_models_kinds_and_refuses_others():
    from faciesseq.errors import ConfigError
    from faciesseq.report.section import check_datum

    for datum in ("depth", "elevation", "datum_depth", "dip:MFS-2", "SB"):
        check_datum(datum, ("SB", "MFS"))
    with pytest.raises(ConfigError, match=r"^datum 'MFZ' is none of .* kind \(SB, MFS\)"):
        check_datum("MFZ", ("SB", "MFS"))


def _shifts(corr, section, datum):
    """The datum depth of each well and the depth axis' label (:func:`hang_section`)."""
    from faciesseq.report.section import hang_section

    hanging = hang_section(corr, section, datum)
    return hanging.shift, hanging.label


def test_figure_says_which_wells_share_no_tie():
    # a section whose neighbours share no surface was drawn as bare columns, with nothing
    # on the figure saying why no line joins them
    corr = _partly_untied_correlation()
    beds = _column_beds({"A": (0.0, 15.0), "B": (0.0, 16.0), "C": (0.0, 15.0), "D": (2.0, 14.0)})
    with figure_style():
        fig = section_plot(corr, "dip", beds, datum="MFS", tract_order=TRACTS)
    texts = [t.get_text() for t in fig.texts]
    assert "no tie between C and D: their columns are drawn unjoined" in texts
    # three note lines and the caption: none overlaps another or the axes
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    boxes = [t.get_window_extent(renderer) for t in fig.texts]
    boxes.append(fig.axes[0].get_tightbbox(renderer))
    for i, one in enumerate(boxes):
        for other in boxes[i + 1 :]:
            assert not one.overlaps(other)
