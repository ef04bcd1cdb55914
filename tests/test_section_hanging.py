"""Hanging a section on a datum surface (``faciesseq.report.section.hang_section``) where
a well lacks the surface. Invented wells whose cores start hundreds of metres apart, as
cores do: the datum must never be interpolated from other wells' depths as measured."""

from __future__ import annotations

from types import SimpleNamespace

import pandas as pd

from faciesseq.correlation import correlate
from faciesseq.report.section import hang_section, section_plot
from faciesseq.report.style import figure_style


def _section(cores: dict[str, tuple[float, dict[str, float]]], positions=None):
    """A correlated section ``dip`` of wells 3 km apart (else at ``positions``, km), in
    the order given: each core its top (m) and its picks, surface kind -> depth below
    that top; 20 m of core."""
    picks = pd.DataFrame(
        [
            {"core": core, "surface": kind, "depth": top + below, "probability": 0.9}
            for core, (top, surfaces) in cores.items()
            for kind, below in surfaces.items()
        ]
    )
    wells = pd.DataFrame(
        {
            "core": list(cores),
            "section": "dip",
            "position": positions or [3.0 * k for k in range(len(cores))],
        }
    )
    extents = {core: (top, top + 20.0) for core, (top, _) in cores.items()}
    return correlate(picks, extents, wells), extents


def _beds(extents: dict) -> pd.DataFrame:
    return pd.DataFrame(
        [{"core": c, "top": t, "base": b, "tract": "HST"} for c, (t, b) in extents.items()]
    )


def _drawn(extents: dict, shift: dict) -> dict[str, tuple[float, float]]:
    """Each core's top and base as drawn, below the datum."""
    return {c: (t - shift[c], b - shift[c]) for c, (t, b) in extents.items()}


def test_an_end_well_without_the_datum_hangs_through_a_surface_it_shares():
    # the visual audit's R900-06 (core at 620 m) lacked MFS-4 and was drawn 2000 m above
    # its neighbours: np.interp held R900-05's MFS depth (2663 m) past the end of the run
    corr, extents = _section(
        {
            "A": (420.0, {"SB": 5.0, "MRS": 9.0, "MFS": 14.0}),
            "B": (2553.0, {"SB": 4.0, "MRS": 8.0, "MFS": 12.0}),
            "C": (620.0, {"SB": 5.0, "MRS": 9.0}),
        }
    )
    hanging = hang_section(corr, "dip", "MFS", _beds(extents))
    # MRS is tied closest to the MFS in B: 4 m above it, so C's MFS lies 4 m below its MRS
    assert hanging.through == (("C", "MRS-1", "B"),)
    assert hanging.shift["C"] == 620.0 + 9.0 + 4.0
    drawn = _drawn(extents, hanging.shift)
    top = min(drawn["A"][0], drawn["B"][0])
    base = max(drawn["A"][1], drawn["B"][1])
    assert top <= drawn["C"][0] and drawn["C"][1] <= base
    assert hanging.unhung == ()
    assert hanging.notes == ("no MFS-1 in C: hung through MRS-1 tied to B",)
    with figure_style():
        fig = section_plot(corr, "dip", _beds(extents), datum="MFS")
    assert hanging.notes[0] in [t.get_text() for t in fig.texts]


def test_wells_without_the_datum_hang_in_a_chain_out_from_the_wells_that_have_it():
    # D shares only its SB with C, a doubtful tie, and C lacks the MFS too: D hangs
    # through C, and the note says the tie is doubtful
    corr, _ = _section(
        {
            "A": (420.0, {"SB": 5.0, "MRS": 9.0, "MFS": 14.0}),
            "B": (2553.0, {"SB": 4.0, "MRS": 8.0, "MFS": 12.0}),
            "C": (620.0, {"SB": 5.0, "MRS": 9.0}),
            "D": (1800.0, {"SB": 3.0}),
        }
    )
    hanging = hang_section(corr, "dip", "MFS")
    assert hanging.through == (("C", "MRS-1", "B"), ("D", "SB-1", "C"))
    # C's MFS lies at 633 m, 8 m below its SB (625 m); D's 8 m below its SB (1803 m)
    assert hanging.shift["D"] == 1803.0 + 8.0
    assert hanging.doubtful == ("D",)
    assert hanging.notes == (
        "no MFS-1 in C, D: hung through MRS-1 tied to B (C), SB-1 tied to C, a doubtful tie (D)",
    )


def test_a_confident_tie_is_taken_before_a_doubtful_one_closer_to_the_datum():
    # C's MRS sits 5 m above its SB where B's sits 4 m: their MRS tie is doubtful, the SB
    # tie confident; C hangs through the SB (8 m above B's MFS), not the closer MRS
    corr, _ = _section(
        {
            "A": (420.0, {"SB": 5.0, "MRS": 9.0, "MFS": 14.0}),
            "B": (2553.0, {"SB": 4.0, "MRS": 8.0, "MFS": 12.0}),
            "C": (620.0, {"SB": 5.0, "MRS": 10.0}),
        }
    )
    doubtful = corr.ties.set_index(["core_left", "core_right", "surface_id"])["doubtful"]
    assert doubtful[("B", "C", "dip:MRS-1")] and not doubtful[("B", "C", "dip:SB-1")]
    hanging = hang_section(corr, "dip", "MFS")
    assert hanging.through == (("C", "SB-1", "B"),) and hanging.doubtful == ()
    assert hanging.shift["C"] == 620.0 + 5.0 + 8.0


def test_a_well_between_two_hung_wells_hangs_through_the_nearer():
    # a chained surface never skips a well, so B between two wells of the datum is made
    # by hand: B, 1 km from C and 5 km from A, hangs through C, and through the MRS, tied
    # closer to C's MFS (14 m above it) than the SB; A's SB, 9 m above its MFS, is not used
    def tie(left, right, kind, depth_left, depth_right):
        return {
            "section": "dip",
            "surface_id": f"dip:{kind}-1",
            "surface": kind,
            "core_left": left,
            "depth_left": depth_left,
            "core_right": right,
            "depth_right": depth_right,
            "doubtful": False,
        }

    correlation = SimpleNamespace(
        wells=pd.DataFrame({"core": list("ABC"), "section": "dip", "position": [0.0, 5.0, 6.0]}),
        picks=pd.DataFrame(
            {
                "section": "dip",
                "surface_id": "dip:MFS-1",
                "surface": "MFS",
                "core": ["A", "C"],
                "depth": [434.0, 2117.0],
                "confidence": 0.9,
            }
        ),
        ties=pd.DataFrame(
            [
                tie("A", "B", "SB", 425.0, 2557.0),
                tie("B", "C", "SB", 2557.0, 2102.0),
                tie("B", "C", "MRS", 2559.0, 2103.0),
            ]
        ),
    )
    hanging = hang_section(correlation, "dip", "MFS")
    assert hanging.through == (("B", "MRS-1", "C"),)
    assert hanging.shift == {"A": 434.0, "B": 2559.0 + 14.0, "C": 2117.0}


def test_a_well_sharing_no_tie_with_the_hung_wells_is_unhung_with_one_warning():
    # D shares no surface kind with C: nothing places its MFS; it stays on its own top,
    # not at A's or B's MFS depth as measured (2565 m) nor anywhere between
    corr, extents = _section(
        {
            "A": (420.0, {"SB": 5.0, "MFS": 14.0}),
            "B": (2553.0, {"SB": 4.0, "MFS": 12.0}),
            "C": (2099.0, {"SB": 6.0, "MFS": 10.0}),
            "D": (620.0, {"LHB": 8.0}),
        }
    )
    hanging = hang_section(corr, "dip", "MFS", _beds(extents))
    assert hanging.unhung == ("D",) and hanging.through == ()
    assert hanging.shift["D"] == 620.0
    assert hanging.notes == (
        "D not hung on MFS-1: no tie joins it to the wells that have it; core top drawn "
        "at the datum line",
    )


def test_every_well_with_the_datum_hangs_on_its_own_pick():
    corr, extents = _section(
        {
            "A": (420.0, {"SB": 5.0, "MFS": 14.0}),
            "B": (2553.0, {"SB": 4.0, "MFS": 12.0}),
            "C": (2099.0, {"SB": 6.0, "MFS": 10.0}),
        }
    )
    hanging = hang_section(corr, "dip", "MFS", _beds(extents))
    assert hanging.shift == {"A": 434.0, "B": 2565.0, "C": 2109.0}
    assert hanging.through == () and hanging.unhung == ()
    assert hanging.notes == () and hanging.note == ""


def test_surface_ids_in_the_figure_never_overlap_and_stay_on_the_axes():
    # the visual audit: ids drawn right of the last well a surface reaches piled up (SB-2
    # over MRS-3) or ran below the axis. Four surfaces end in B 0.3 m apart near the base
    # of the column; two more end in C, 0.15 km past B, at the same depths
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    kinds = ("BSFR", "SB", "MRS", "MFS")
    rows = [
        {"core": core, "surface": kind, "depth": 18.0 + k * 0.3 + bend, "probability": 0.9}
        for core, bend in (("A", 0.0), ("B", 1.0))
        for k, kind in enumerate(kinds)
    ]
    rows += [
        {"core": core, "surface": kind, "depth": depth, "probability": 0.9}
        for core in ("B", "C")
        for kind, depth in (("SB", 19.2), ("MFS", 19.5))
    ]
    wells = pd.DataFrame({"core": list("ABC"), "section": "dip", "position": [0.0, 3.0, 3.15]})
    corr = correlate(pd.DataFrame(rows), dict.fromkeys("ABC", (0.0, 20.0)), wells)
    beds = _beds(dict.fromkeys("ABC", (0.0, 20.0)))
    with figure_style():
        fig = section_plot(corr, "dip", beds, datum="depth")
        renderer = FigureCanvasAgg(fig).get_renderer()
        ax = fig.axes[0]
        labels = [t for t in ax.texts if t.get_gid() == "surface-label"]
        boxes = [t.get_window_extent(renderer) for t in labels]
        frame = ax.get_window_extent(renderer)
    # every id written (those of surfaces reaching three wells twice: first and last)
    assert sorted({t.get_text() for t in labels}) == sorted(
        str(s).split(":")[-1] for s in corr.ties["surface_id"].unique()
    )
    for k, box in enumerate(boxes):
        assert frame.y0 <= box.y0 and box.y1 <= frame.y1, labels[k].get_text()
        for other in boxes[k + 1 :]:
            assert not box.overlaps(other)


def test_a_surface_across_the_section_is_named_at_its_first_and_last_well():
    # the visual audit: an id written only right of the last well left a reader of a
    # wide section unable to tell which line was which near the other wells. MFS runs
    # through all four wells, SB from B to D, MRS only from C to D (named once)
    corr, extents = _section(
        {
            "A": (0.0, {"MFS": 10.0}),
            "B": (0.0, {"SB": 5.0, "MFS": 10.5}),
            "C": (0.0, {"SB": 5.5, "MRS": 8.0, "MFS": 11.0}),
            "D": (0.0, {"SB": 6.0, "MRS": 8.5, "MFS": 11.5}),
        },
        positions=[0.0, 10.0, 20.0, 30.0],
    )
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    with figure_style():
        fig = section_plot(corr, "dip", _beds(extents), datum="depth")
        renderer = FigureCanvasAgg(fig).get_renderer()
        labels = [t for t in fig.axes[0].texts if t.get_gid() == "surface-label"]
        boxes = [t.get_window_extent(renderer) for t in labels]
    beside = {}
    for label in labels:
        # the well left of the id, whose column the id stands beside
        well = "ABCD"[int(label.get_position()[0] // 10.0)]
        beside.setdefault(label.get_text(), []).append(well)
    assert {k: sorted(v) for k, v in beside.items()} == {
        "MFS-1": ["A", "D"],
        "SB-1": ["B", "D"],
        "MRS-1": ["D"],
    }
    for k, box in enumerate(boxes):
        for other in boxes[k + 1 :]:
            assert not box.overlaps(other)
