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
    ties = pd.DataFrame(columns=["core_left", "core_right", "depth_left", "depth_right"])
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
