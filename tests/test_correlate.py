"""Correlation of surface picks across wells: alignment, chaining, wells table, command line."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from faciesseq.correlation import AlignmentOptions, PickColumn, align_columns, correlate
from faciesseq.correlation.wells import check_wells, wells_from_frame
from faciesseq.errors import InputError

KINDS = ("MRS", "SB", "MFS")


def _column(kinds, fractions, probs=None, thickness=50.0):
    probs = np.ones(len(kinds)) if probs is None else probs
    return PickColumn.from_picks(kinds, np.asarray(fractions) * thickness, probs, 0.0, thickness)


def _picks_section(n_wells=5, n_cycles=4, seed=0, drop=0.1):
    """Invented wells: the same cycles, thickening basinward, some picks missing."""
    rng = np.random.default_rng(seed)
    rows, extents = [], {}
    for w in range(n_wells):
        thickness = 40.0 + 8.0 * w
        extents[f"W{w}"] = (0.0, thickness)
        for c in range(n_cycles):
            for k, kind in enumerate(KINDS):
                f = (c + 0.25 + 0.25 * k) / n_cycles + rng.normal(0, 0.01)
                if rng.random() < drop:
                    continue
                rows.append(
                    {
                        "core": f"W{w}",
                        "surface": kind,
                        "depth": f * thickness,
                        "probability": rng.uniform(0.5, 1.0),
                        "truth": (c, kind),
                    }
                )
    wells = pd.DataFrame(
        {"core": list(extents), "section": "dip", "position": 10.0 * np.arange(n_wells)}
    )
    return pd.DataFrame(rows), extents, wells


def test_alignment_ties_same_kinds_in_order():
    a = _column(["MFS", "SB", "MFS", "SB"], [0.1, 0.3, 0.6, 0.8])
    b = _column(["MFS", "MFS", "SB"], [0.12, 0.62, 0.79])
    ties = align_columns(a, b)
    assert [(i, j) for i, j, _ in ties] == [(0, 0), (2, 1), (3, 2)]


def test_alignment_leaves_a_far_pick_untied():
    """A pick a whole cycle away costs more than two gaps: no tie."""
    a = _column(["MFS"], [0.1])
    b = _column(["MFS"], [0.7])
    assert align_columns(a, b) == []


def test_alignment_drops_the_less_probable_of_two_candidates():
    a = _column(["MFS"], [0.5])
    b = _column(["MFS", "MFS"], [0.47, 0.53], probs=[0.2, 0.9])
    assert [(i, j) for i, j, _ in align_columns(a, b)] == [(0, 1)]


def test_options_are_checked():
    with pytest.raises(ValueError, match="sigma"):
        AlignmentOptions(sigma=0)


def test_chained_surfaces_match_the_invented_truth():
    picks, extents, wells = _picks_section()
    corr = correlate(picks.drop(columns="truth"), extents, wells)
    truth = {(r.core, round(r.depth, 9)): r.truth for r in picks.itertuples()}
    for t in corr.ties.itertuples():
        assert (
            truth[(t.core_left, round(t.depth_left, 9))]
            == truth[(t.core_right, round(t.depth_right, 9))]
        )
    assert len(corr.ties) >= 0.8 * 4 * 3 * 4 * 0.9 * 0.9


def test_no_crossing_and_once_per_well():
    picks, extents, wells = _picks_section(seed=3, drop=0.25)
    corr = correlate(picks.drop(columns="truth"), extents, wells)
    assert not corr.picks.duplicated(["surface_id", "core"]).any()
    for _, pair in corr.ties.groupby(["core_left", "core_right"]):
        pair = pair.sort_values("depth_left")
        assert pair["depth_right"].is_monotonic_increasing
    # every tie joins neighbours only
    order = list(wells.sort_values("position")["core"])
    neighbours = set(itertools.pairwise(order))
    assert set(zip(corr.ties["core_left"], corr.ties["core_right"])) <= neighbours


def test_result_independent_of_listing_order():
    picks, extents, wells = _picks_section(seed=5)
    picks = picks.drop(columns="truth")
    one = correlate(picks, extents, wells).to_frame()
    shuffled = wells.sample(frac=1.0, random_state=1)
    other = correlate(
        picks.sample(frac=1.0, random_state=2), dict(reversed(extents.items())), shuffled
    ).to_frame()
    pd.testing.assert_frame_equal(one.reset_index(drop=True), other.reset_index(drop=True))


def test_confidence_formula_and_doubtful_flag():
    picks, extents, wells = _picks_section(seed=7)
    corr = correlate(picks.drop(columns="truth"), extents, wells, AlignmentOptions(doubtful=0.6))
    t = corr.ties
    assert ((t["confidence"] >= 0) & (t["confidence"] <= 1)).all()
    assert (t["doubtful"] == (t["confidence"] < 0.6)).all()
    assert set(corr.to_dict()["sections"]) == {"dip"}


# wells table ---------------------------------------------------------------------------


def test_wells_from_xy_are_ordered_along_the_line():
    frame = pd.DataFrame({"name": ["C", "A", "B"], "x": [6.0, 0.0, 3.0], "y": [8.0, 0.0, 4.0]})
    wells = wells_from_frame(frame)
    assert list(wells.frame["core"]) == ["A", "B", "C"]
    assert np.allclose(wells.frame["position"], [0.0, 5.0, 10.0])


def test_duplicated_well_names_the_rows():
    frame = pd.DataFrame({"core": ["A", "B", "A"], "x_km": [1, 2, 3]})
    with pytest.raises(
        InputError, match=r"wells.csv, data row 3: well 'A' is listed twice \(also data row 1\)"
    ):
        wells_from_frame(frame, "wells.csv")


def test_missing_position_column_is_an_error():
    with pytest.raises(InputError, match="no position column"):
        wells_from_frame(pd.DataFrame({"core": ["A", "B"]}), "wells.csv")


def test_well_without_core_and_core_without_well_are_warnings():
    wells = wells_from_frame(pd.DataFrame({"core": ["A", "B", "Z"], "x_km": [1, 2, 3]}), "w.csv")
    kept, problems = check_wells(wells, ["A", "B", "Q"])
    kinds = sorted(p.kind for p in problems)
    assert kinds == ["core-without-well", "well-without-core"]
    assert list(kept.frame["core"]) == ["A", "B"]
    assert any("row 3" in str(p) and "'Z'" in str(p) for p in problems)


def test_a_well_spelt_otherwise_than_its_core_names_the_core():
    # a well table written by hand often spells a well otherwise than the core
    # database (case, spaces, hyphens); the warnings say which name was meant
    wells = wells_from_frame(
        pd.DataFrame({"core": ["qb 01", "B", "C"], "x_km": [1, 2, 3]}), "w.csv"
    )
    kept, problems = check_wells(wells, ["QB-01", "B", "C"])
    text = {p.kind: str(p) for p in problems}
    assert (
        "well 'qb 01' has no core in the source ('QB-01' differs only in spelling)"
        in text["well-without-core"]
    )
    assert (
        "core 'QB-01' has no row in the wells table ('qb 01' differs only"
        in text["core-without-well"]
    )
    assert list(kept.frame["core"]) == ["B", "C"]  # told, not matched


def test_one_well_only_is_an_error():
    wells = wells_from_frame(pd.DataFrame({"core": ["A"], "x_km": [1]}), "w.csv")
    with pytest.raises(InputError, match="two wells"):
        check_wells(wells, ["A"])


# simulated section ---------------------------------------------------------------------


def test_true_surfaces_of_a_simulated_section_are_tied_to_their_own_age():
    """Perfect picks (the forward model's true surfaces): MFS ties between neighbouring
    wells are the same time step of the base-level history (see benchmarks/correlation.md)."""
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    sys.path.insert(0, str(root / "benchmarks"))
    try:
        import eval_correlation as ev
    finally:
        sys.path.pop(0)
    from faciesseq.simulate import load_scenario, simulate

    result = simulate(load_scenario(root / "configs" / "scenario-ramp.yaml"), seed=11)
    truth = ev.true_surface_events(result)
    picks = truth[truth["cored"]].assign(probability=1.0)
    corr, wells = ev.correlate_result(result, picks, AlignmentOptions())
    counts = ev.score(corr, picks, truth, wells, "MFS", 1.5)
    assert counts["correct"] == counts["reported"] > 0
    assert counts["recovered"] / counts["true_ties"] >= 0.85


def test_elevation_datum_by_hand():
    """Kelly bushing 100 m up, a depth of 250 m lies 250 - 100 = 150 m below sea level;
    a well whose reference stands at 0 keeps its depths."""
    picks = pd.DataFrame(
        {"core": ["HIGH", "LOW"], "surface": "MFS", "depth": [250.0, 150.0], "probability": 1.0}
    )
    wells = pd.DataFrame(
        {"core": ["HIGH", "LOW"], "section": "s", "position": [0.0, 1.0], "elevation": [100.0, 0.0]}
    )
    corr = correlate(picks, {"HIGH": (250.0, 260.0), "LOW": (150.0, 160.0)}, wells)
    shifts, label = _shifts(corr, "s", "elevation")
    drawn = {c: d - shifts[c] for c, d in zip(picks["core"], picks["depth"])}
    assert drawn == {"HIGH": 150.0, "LOW": 150.0}
    assert label == "depth below datum (elevation 0)"


def test_datum_choices_shift_the_wells():
    picks, extents, wells = _picks_section(seed=2, drop=0.0)
    wells = wells.assign(elevation=[5.0, 4.0, 3.0, 2.0, 1.0])
    corr = correlate(picks.drop(columns="truth"), extents, wells)
    shifts, label = _shifts(corr, "dip", "depth")
    assert set(shifts.values()) == {0.0}
    assert label == "depth as measured"  # not shifted: no claim of a core-top datum
    shifts, _ = _shifts(corr, "dip", "elevation")
    assert shifts["W0"] == 5.0
    shifts, label = _shifts(corr, "dip", "MFS")
    mfs = corr.picks[corr.picks["surface"] == "MFS"]
    best = mfs.groupby("surface_id")["core"].size().max()
    assert best == 5 and label.startswith("depth below MFS-")
    sid = mfs["surface_id"].iloc[0]
    shifts, _ = _shifts(corr, "dip", sid)
    at = mfs[mfs["surface_id"] == sid].set_index("core")["depth"]
    assert all(shifts[c] == at[c] for c in at.index)


def test_order_column_disagreeing_with_positions_warns(tmp_path):
    from faciesseq.correlation.wells import read_wells

    path = tmp_path / "wells.csv"
    path.write_text("Name,Distance,Order,Section\nA,0,2,s\nB,5,1,s\nC,9,3,s\n")
    wells = read_wells(str(path))
    assert list(wells.frame["core"]) == ["A", "B", "C"]
    assert [p.kind for p in wells.problems] == ["wells-out-of-order"]
    assert str(path) in str(wells.problems[0])


def test_bad_position_value_names_the_row():
    frame = pd.DataFrame({"core": ["A", "B"], "x_km": ["1", "two"]})
    with pytest.raises(InputError, match=r"w\.csv, data row 2: position 'two'"):
        wells_from_frame(frame, "w.csv")


def test_a_number_written_na_in_the_wells_table_is_no_number(tmp_path):
    """A wells table exported by R (NA for an empty number, a well named NA) reads as
    the bed table does: NA is no position in a number column, a name in the core column."""
    from faciesseq.correlation.wells import read_wells

    path = tmp_path / "wells.csv"
    path.write_text("core,distance,elevation\nNA,0,NA\nB,5,12\nC,NA,3\n")
    with pytest.raises(InputError, match=r"data row 3: well 'C' has no position"):
        read_wells(str(path))
    path.write_text("core,distance,elevation\nNA,0,NA\nB,5,12\n")
    wells = read_wells(str(path))
    assert list(wells.frame["core"]) == ["NA", "B"]
    assert np.isnan(wells.frame["elevation"].iloc[0])


def test_a_well_missing_the_top_cycle_disputes_a_top_to_top_tie():
    """SHORT lacks FULL's top cycle (its cores start one cycle lower). Of the ties
    read by the fraction of the columns, the one joining SHORT's top MFS to FULL's
    top MFS is disputed by the depth map through the other ties (SHORT = FULL + 140 m),
    and its confidence halved to doubtful; the ties of the same cycle are kept."""
    from faciesseq.correlation import disputed_ties

    kinds = ["MFS", "MRS", "SB"] * 3
    full = PickColumn.from_picks(
        kinds, [100 + 10 * c + off for c in range(3) for off in (3, 6, 8)], np.ones(9), 100, 130
    )
    short = PickColumn.from_picks(
        kinds[3:], [250 + 10 * c + off for c in range(2) for off in (3, 6, 8)], np.ones(6), 250, 270
    )
    # the top-to-top slip (0, 0) then the true ties of the two lower cycles
    ties = [(0, 0, 0.0), (4, 1, 0.0), (5, 2, 0.0), (6, 3, 0.0), (7, 4, 0.0), (8, 5, 0.0)]
    assert disputed_ties(full, short, ties) == {(0, 0)}
    assert disputed_ties(full, short, ties[1:]) == set()


def _offset_pair():
    """Two wells with the same picks MFS, MRS, SB 5 m apart, 5 m below the top of the
    core in A and 30 m below it in B (the cores start at different levels of the
    succession): every same-kind pair lies 0.5 of the column apart in fractional
    position, as the audit's NU-02 and NU-03."""
    kinds = ["MFS", "MRS", "SB"]
    upper = [5.0, 10.0, 15.0]
    picks = pd.DataFrame(
        {
            "core": ["A"] * 3 + ["B"] * 3,
            "surface": kinds * 2,
            "depth": upper + [d + 25.0 for d in upper],
            "probability": 1.0,
        }
    )
    wells = pd.DataFrame({"core": ["A", "B"], "section": "dip", "position": [0.0, 3.0]})
    return picks, dict.fromkeys("AB", (0.0, 50.0)), wells


def test_cores_over_different_intervals_are_tied_by_order_and_doubtful():
    picks, extents, wells = _offset_pair()
    a = PickColumn.from_picks(picks["surface"][:3], picks["depth"][:3], np.ones(3), 0, 50)
    b = PickColumn.from_picks(picks["surface"][3:], picks["depth"][3:], np.ones(3), 0, 50)
    assert align_columns(a, b) == []  # the positional reading ties nothing
    corr = correlate(picks, extents, wells)
    ties = corr.ties
    assert list(zip(ties["depth_left"], ties["depth_right"])) == [
        (d, d + 25.0) for d in (5.0, 10.0, 15.0)
    ]
    assert (ties["tied_by"] == "order").all()
    assert ties["doubtful"].all() and (ties["confidence"] <= 0.5).all()
    assert corr.picks["doubtful"].all()
    assert corr.untied_pairs.empty
    assert corr.to_dict()["sections"]["dip"]["ties_by_order"] == 3
    assert corr.order_tied_messages() == [
        "section dip: A and B tied by the order of their picks alone (their cores cover "
        "different parts of the succession): 3 tie(s), all doubtful"
    ]


def test_order_ties_stay_doubtful_under_a_low_threshold():
    picks, extents, wells = _offset_pair()
    corr = correlate(picks, extents, wells, AlignmentOptions(doubtful=0.1))
    assert corr.ties["doubtful"].all()


def test_a_pair_sharing_no_surface_is_listed_and_said():
    picks = pd.DataFrame(
        {
            "core": ["A", "B", "C"],
            "surface": ["MFS", "SB", "SB"],
            "depth": [10.0, 12.0, 12.0],
            "probability": 1.0,
        }
    )
    wells = pd.DataFrame({"core": ["A", "B", "C"], "section": "dip", "position": [0.0, 3.5, 7.1]})
    extents = dict.fromkeys("ABC", (0.0, 30.0))
    corr = correlate(picks, extents, wells)
    assert list(corr.untied_pairs.itertuples(index=False, name=None)) == [("dip", "A", "B")]
    assert corr.to_dict()["sections"]["dip"]["untied_pairs"] == [["A", "B"]]
    assert corr.untied_messages() == [
        "section dip: A and B share no tied surface; their columns are drawn unjoined"
    ]
    assert len(corr.ties) == 1 and corr.ties["tied_by"].iloc[0] == "position"


def test_a_wells_table_may_state_the_unit_of_its_elevations_in_the_column_name():
    # a column named as a depth column may be named ("elevation (ft)", common practice
    # of well headers) is converted to the cores' units, 1 ft = 0.3048 m exactly; a
    # plain "elevation" is in the cores' units
    frame = pd.DataFrame(
        {"core": ["A", "B"], "distance": [0.0, 1.0], "Elevation (ft)": [100.0, 50.0]}
    )
    table = wells_from_frame(frame)
    assert dict(table.depth_units) == {"elevation": "ft"}
    in_metres, _ = check_wells(table, ["A", "B"], "m")
    assert in_metres.frame["elevation"].tolist() == pytest.approx([30.48, 15.24])
    in_feet, _ = check_wells(table, ["A", "B"], "ft")
    assert in_feet.frame["elevation"].tolist() == [100.0, 50.0]
    plain = wells_from_frame(frame.rename(columns={"Elevation (ft)": "elevation"}))
    assert check_wells(plain, ["A", "B"], "m")[0].frame["elevation"].tolist() == [100.0, 50.0]


def test_wells_at_one_position_are_a_warning_naming_them():
    frame = pd.DataFrame({"core": ["A", "B", "C"], "x": [5.0, 5.0, 5.0], "y": [1.0, 1.0, 1.0]})
    table = wells_from_frame(frame, "wells.csv")
    (problem,) = [p for p in table.problems if p.kind == "wells-same-position"]
    assert "A, B, C stand at one position" in str(problem) and "wells.csv" in str(problem)
    apart = wells_from_frame(frame.assign(x=[0.0, 1.0, 2.0]))
    assert not [p for p in apart.problems if p.kind == "wells-same-position"]


def test_correlate_from_python_converts_elevations_stated_in_the_other_unit():
    picks, extents, _ = _picks_section(n_wells=2)
    frame = pd.DataFrame(
        {"core": ["W0", "W1"], "distance": [0.0, 1.0], "elevation_ft": [100.0, 50.0]}
    )

    def elevations(wells, units):
        corr = correlate(picks, extents, wells, units=units)
        return corr.wells.set_index("core")["elevation"].loc[["W0", "W1"]].tolist()

    assert elevations(frame, "m") == pytest.approx([30.48, 15.24])
    assert elevations(frame, None) == [100.0, 50.0]  # units not given
    assert elevations(wells_from_frame(frame), "ft") == [100.0, 50.0]


def _shifts(corr, section, datum):
    """The datum depth of each well and the depth axis' label (:func:`hang_section`)."""
    from faciesseq.report.section import hang_section

    hanging = hang_section(corr, section, datum)
    return hanging.shift, hanging.label


def _wells_database(path, wells_table="wells"):
    """A SQLite file holding an intervals table (each well on several rows) and a wells
    table."""
    import sqlite3

    with sqlite3.connect(path) as conn:
        conn.execute("CREATE TABLE intervals (core TEXT, top REAL, base REAL, facies TEXT)")
        conn.executemany(
            "INSERT INTO intervals VALUES (?, ?, ?, ?)",
            [("A", 0, 1, "x"), ("A", 1, 2, "y"), ("B", 0, 1, "x")],
        )
        conn.execute(f'CREATE TABLE "{wells_table}" (core TEXT, distance REAL)')
        conn.executemany(f'INSERT INTO "{wells_table}" VALUES (?, ?)', [("B", 4.0), ("A", 1.0)])
    conn.close()
    return path


@pytest.mark.parametrize("name", ["wells", "Wells"])
def test_a_database_of_several_tables_gives_its_wells_table(tmp_path, name):
    """Not the intervals table (where a well has several rows): the one named wells."""
    from faciesseq.correlation.wells import read_wells

    path = _wells_database(tmp_path / "db.sqlite", name)
    wells = read_wells(str(path))
    assert list(wells.frame["core"]) == ["A", "B"]
    assert list(wells.frame["position"]) == [1.0, 4.0]
    assert wells.file == f"{path} [{name}]"


def test_a_database_without_a_wells_table_is_refused_naming_its_tables(tmp_path):
    from faciesseq.correlation.wells import read_wells
    from faciesseq.errors import ConfigError

    path = _wells_database(tmp_path / "db.sqlite", "positions")
    with pytest.raises(ConfigError) as err:
        read_wells(str(path))
    message = str(err.value)
    assert "2 tables (intervals, positions) and none named 'wells'" in message
    assert "path: db.sqlite and table: NAME" in message and "\n" not in message


def test_a_yaml_source_file_chooses_the_wells_table(tmp_path):
    from faciesseq.correlation.wells import read_wells
    from faciesseq.errors import ConfigError

    _wells_database(tmp_path / "db.sqlite", "positions")
    source = tmp_path / "wellsrc.yaml"
    source.write_text("path: db.sqlite\ntable: positions\n")
    wells = read_wells(str(source))
    assert list(wells.frame["core"]) == ["A", "B"]
    assert wells.file.endswith("db.sqlite [positions]")
    source.write_text(
        "path: db.sqlite\nquery: SELECT core, distance * 2 AS distance FROM positions\n"
    )
    assert list(read_wells(str(source)).frame["position"]) == [2.0, 8.0]
    source.write_text("path: db.sqlite\ntable: positions\nlayout: intervals\n")
    with pytest.raises(ConfigError, match="'layout' does not apply to a wells table"):
        read_wells(str(source))


def test_a_yaml_wells_file_with_table_and_query_names_its_keys(tmp_path):
    # the message named --table and --query, which the file does not have
    from faciesseq.correlation.wells import read_wells
    from faciesseq.errors import ConfigError

    _wells_database(tmp_path / "db.sqlite", "positions")
    source = tmp_path / "wellsrc.yaml"
    source.write_text("path: db.sqlite\ntable: positions\nquery: SELECT * FROM positions\n")
    with pytest.raises(ConfigError) as err:
        read_wells(str(source))
    assert str(err.value) == f"{source}: give table: or query:, not both"


def test_correlate_from_python_checks_the_wells_against_the_cores_as_the_command_does():
    # a typo in the names gave an empty correlation and no word from Python, where the
    # command refused it; a core left out of the wells table was said only by the command
    picks, extents, wells = _picks_section()
    typo = wells.drop(columns=["section", "position"]).assign(
        core=wells["core"].str.replace("W", "X"), distance=wells["position"]
    )
    with pytest.raises(InputError, match="no section has two wells with cores"):
        correlate(picks, extents, typo)
    short = wells[wells["core"] != "W2"]
    with pytest.warns(UserWarning, match="core 'W2' has no row in the wells table"):
        corr = correlate(picks, extents, short)
    assert "W2" not in set(corr.to_frame()["core"]) and len(corr.to_frame())
