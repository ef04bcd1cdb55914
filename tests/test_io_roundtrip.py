"""Readers and writer: the same cores from every format; column roles; units; encodings."""

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from faciesseq.core import FT_TO_M, CoreSet
from faciesseq.errors import ConfigError, InputError
from faciesseq.io import match_columns, read_cores, write_cores


def _canonical(frame: pd.DataFrame) -> pd.DataFrame:
    """Values only: missing text as None whatever the dtype a format brings back."""
    frame = frame.astype(object)
    return frame.where(frame.notna(), None)


def _cores(units="ft") -> CoreSet:
    # on a 0.5 grid so that LAS (a sampled format) can hold them exactly; adjacent
    # intervals differ in facies or an attribute, as run-length reading needs
    table = pd.DataFrame(
        {
            "core": ["W-1"] * 4 + ["W 2"] * 3,
            "top": [0.0, 1.0, 2.5, 4.0, 10.0, 10.5, 12.0],
            "base": [1.0, 2.5, 4.0, 5.0, 10.5, 11.0, 13.5],
            "facies": ["USF", "LSF", "USF", "OFF", "3", "USF", "OFF"],
            "grain_size": [4.5, 3.5, np.nan, 1.5, 2.0, 4.5, 1.0],
            "contact": ["sharp", "gradational", None, "erosional", "sharp", "sharp", "sharp"],
            "tract": ["HST", "HST", "TST", None, "LST", "LST", "TST"],
        }
    )
    return CoreSet.from_frame(table, units=units)


@pytest.mark.parametrize("target", ["c.csv", "c.tsv", "c.xlsx", "c.parquet", "c.sqlite", "las"])
def test_same_cores_from_every_format(tmp_path, target):
    cores = _cores()
    path = tmp_path / target
    write_cores(cores, path, format="las" if target == "las" else None)
    back = read_cores(path)
    assert back.units == "ft"  # stated by the file: a units column or the LAS header
    assert back.names == cores.names
    pd.testing.assert_frame_equal(_canonical(back.to_frame()), _canonical(cores.to_frame()))
    assert not back.errors
    # the gap in core "W 2" is kept in every format
    assert back["W 2"].gaps() == [(11.0, 12.0)]


def test_sqlite_extra_tables_and_table_option(tmp_path):
    cores = _cores("m")
    path = tmp_path / "db.sqlite"
    extra = pd.DataFrame({"core": ["W-1"], "depth": [2.0], "tract": ["TST"]})
    write_cores(cores, path, tables={"truth": extra})
    back = read_cores(path, table="intervals")
    assert back.names == cores.names
    query = read_cores(path, query="SELECT * FROM intervals WHERE core = 'W-1'")
    assert query.names == ["W-1"]
    with pytest.raises(ConfigError, match="read-only"):
        read_cores(path, query="DELETE FROM intervals")
    # words and semicolons inside quoted text or comments are data, not statements
    safe = "-- the first well\nSELECT * FROM intervals WHERE core <> 'a;b' AND core <> 'update'"
    assert read_cores(path, query=safe).names == cores.names
    assert read_cores(path, query="/* one */ SELECT * FROM intervals;").names == cores.names
    for unsafe in ("SELECT 1; DROP TABLE intervals", "WITH x AS (SELECT 1) DELETE FROM t"):
        with pytest.raises(ConfigError, match=r"single statement|read-only"):
            read_cores(path, query=unsafe)
    import sqlite3

    other = tmp_path / "other.db"
    with sqlite3.connect(other) as conn:
        conn.execute("CREATE TABLE logs (core TEXT)")
        conn.execute("CREATE TABLE wells (core TEXT)")
    conn.close()
    with pytest.raises(ConfigError, match="--table"):
        read_cores(other)  # two tables, neither a usual name, and none chosen
    with pytest.raises(ConfigError, match="SQLite or XLSX"):
        write_cores(cores, tmp_path / "c.csv", tables={"truth": extra})


def test_sqlite_views_names_in_any_case_and_an_empty_file(tmp_path):
    # a geologist's view was "no table"; LOGS for logs was refused although SQLite
    # matches names in any case; an empty file said "say which table (tables: none)"
    import sqlite3

    cores = _cores("m")
    path = tmp_path / "db.sqlite"
    write_cores(cores, path, tables={"extra": pd.DataFrame({"a": [1]})})
    with sqlite3.connect(path) as conn:
        conn.execute("CREATE VIEW upper_cores AS SELECT * FROM intervals WHERE core = 'W-1'")
    conn.close()
    assert read_cores(path, table="upper_cores").names == ["W-1"]
    assert read_cores(path, table="INTERVALS").names == cores.names
    with pytest.raises(InputError, match=r"no table 'nothing'; .* the views are upper_cores"):
        read_cores(path, table="nothing")
    empty = tmp_path / "empty.sqlite"
    empty.write_bytes(b"")
    with pytest.raises(InputError, match="the database has no tables"):
        read_cores(empty)


def test_writer_is_atomic_and_leaves_no_temporary_files(tmp_path):
    cores = _cores()
    path = tmp_path / "c.csv"
    path.write_text("old")
    write_cores(cores, path)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.csv"]
    with pytest.raises(ConfigError, match="one core"):
        write_cores(cores, tmp_path / "two.las")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.csv"]


_interval_tables = st.lists(
    st.tuples(
        st.sampled_from(["A", "B", "07", "3", "Grès fin"]),
        st.integers(1, 40),  # thickness in 0.25 m
        st.integers(0, 8),  # gap above, in 0.25 m (0 = none)
        st.one_of(st.none(), st.floats(0.5, 7.0, allow_nan=False).map(lambda x: round(x, 3))),
        st.sampled_from([None, "sharp", "erosional"]),
    ),
    min_size=1,
    max_size=25,
)


@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(rows=_interval_tables, suffix=st.sampled_from([".csv", ".parquet"]))
def test_intervals_written_then_read_back_are_equal(tmp_path_factory, rows, suffix):
    # reader invariant (hypothesis): any valid interval table survives a round trip
    depth = 100.0
    records = []
    for facies, thick, gap, grain, contact in rows:
        depth += gap * 0.25
        records.append(
            {
                "core": "K-1",
                "top": depth,
                "base": depth + thick * 0.25,
                "facies": facies,
                "grain_size": np.nan if grain is None else grain,
                "contact": contact,
            }
        )
        depth += thick * 0.25
    cores = CoreSet.from_frame(pd.DataFrame(records), units="m")
    path = tmp_path_factory.mktemp("rt") / f"cores{suffix}"
    write_cores(cores, path)
    back = read_cores(path)
    pd.testing.assert_frame_equal(_canonical(back.to_frame()), _canonical(cores.to_frame()))
    n_gaps = sum(1 for _, _, gap, _, _ in rows[1:] if gap > 0)
    assert [p.kind for p in back.problems].count("gap") == n_gaps
    assert not back.errors


def test_column_variants_and_explicit_mapping():
    m = match_columns(["Well Name", "Top (ft)", "Bottom_ft", "Lithofacies", "Grain Size", "GR"])
    assert m.roles == {
        "core": "Well Name",
        "top": "Top (ft)",
        "base": "Bottom_ft",
        "facies": "Lithofacies",
        "grain_size": "Grain Size",
    }
    assert m.units == "ft"
    assert m.others == ("GR",)
    m = match_columns(["Hole", "MD", "Code"], {"facies": "code"})
    assert m.roles == {"facies": "Code", "core": "Hole", "depth": "MD"}
    with pytest.raises(InputError, match="depth columns state different units"):
        match_columns(["core", "top_m", "base_ft", "facies"])


def test_units_from_a_column_header_and_conversion_with_the_international_foot(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("Core,Top (ft),Base (ft),Facies\nW1,100,110,A\nW1,110,125,B\n")
    feet = read_cores(path)
    assert feet.units == "ft" and not [p for p in feet.problems if p.kind == "units"]
    metres = read_cores(path, units="m")
    assert metres.units == "m"
    # 1 ft = 0.3048 m exactly (international foot, 1959)
    assert metres["W1"].intervals["base"].tolist() == [110 * FT_TO_M, 125 * FT_TO_M]
    assert [p.kind for p in metres.problems] == ["units-converted"]


def test_semicolon_files_with_decimal_commas(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("Bohrung;Teufe von;Teufe bis;Fazies\nB1;0;1,25;A\nB1;1,25;2,5;B\n")
    roles = {"core": "Bohrung", "top": "Teufe von", "base": "Teufe bis", "facies": "Fazies"}
    cores = read_cores(path, columns=roles, units="m")
    assert cores["B1"].intervals["base"].tolist() == [1.25, 2.5]
    (repair,) = [p for p in cores.problems if p.kind == "decimal-comma"]
    assert repair.severity == "repair" and "Teufe von" in repair.message


def test_nothing_said_about_units_means_metres_with_a_warning(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("core,top,base,facies\nW1,0,1,A\nW1,1,2,B\n")
    cores = read_cores(path)
    assert cores.units == "m"
    assert [p.kind for p in cores.problems] == ["units"]


def test_yaml_source_file(tmp_path):
    data = tmp_path / "data"
    data.mkdir()
    (data / "logs.txt").write_text(
        "Hole;MD;Lith;Remark\nA;10.0;1;x\nA;10.5;1;x\nA;11.0;2;y\nB;3.0;2;\nB;3.5;1;\n"
    )
    source = tmp_path / "cores.yaml"
    source.write_text(
        "# where the cores are and how to read them\n"
        "path: data/logs.txt\nlayout: samples\nunits: m\ncolumns: {facies: Lith}\n"
    )
    cores = read_cores(source)
    assert cores.names == ["A", "B"]
    assert cores.meta["sample_step"] == {"A": 0.5, "B": 0.5}
    a = cores["A"].intervals
    assert a[["top", "base", "facies"]].values.tolist() == [[9.75, 10.75, "1"], [10.75, 11.25, "2"]]
    assert a["Remark"].tolist() == ["x", "y"]
    (tmp_path / "bad.yaml").write_text("path: data/logs.txt\nsheet_name: x\n")
    with pytest.raises(ConfigError, match="unknown key"):
        read_cores(tmp_path / "bad.yaml")


def test_folder_of_files_one_core_per_file(tmp_path):
    for name in ("K-1", "K-2"):
        (tmp_path / f"{name}.csv").write_text("top,base,facies\n0,1,A\n1,2,B\n")
    (tmp_path / "notes.md").write_text("field notes")
    cores = read_cores(tmp_path, units="m")
    assert cores.names == ["K-1", "K-2"]
    kinds = [p.kind for p in cores.problems]
    assert kinds.count("no-core-column") == 2 and "ignored-file" in kinds


def test_other_encodings_are_detected_and_reported_never_garbled(tmp_path):
    names = ["Bohrung Möhne-Süd", "Forage Île-de-Ré", "Sondeo Peñíscola"]
    lines = ["core,top,base,facies,lithology"]
    for name in names:
        lines += [
            f"{name},{k},{k + 1},{'AB'[k % 2]},grès à stratification oblique" for k in range(8)
        ]
    text = "\n".join(lines) + "\n"
    path = tmp_path / "c.csv"
    path.write_bytes(text.encode("cp1252"))
    cores = read_cores(path, units="m")
    assert cores.names == names
    assert cores[names[1]].intervals["lithology"].iloc[0] == "grès à stratification oblique"
    (note,) = [p for p in cores.problems if p.kind == "encoding"]
    assert note.severity == "warning" and "not UTF-8" in note.message
    path.write_bytes(text.encode("utf-16"))  # with its byte-order mark
    assert read_cores(path, units="m").names == names
    (tmp_path / "s.yaml").write_text("path: c.csv\nencoding: cp1252\n")
    path.write_bytes(text.encode("cp1252"))
    assert read_cores(tmp_path / "s.yaml", units="m").names == names


def test_a_workbook_renamed_to_csv_is_named_for_what_it_is(tmp_path):
    import openpyxl

    from faciesseq.errors import InputError

    book = openpyxl.Workbook()
    book.active.append(["core", "top", "base", "facies"])
    book.active.append(["A", 0, 1, "X"])
    path = tmp_path / "cores.csv"
    book.save(path)
    with pytest.raises(InputError, match=r"is a ZIP archive \(an Excel workbook, \.xlsx\?\)"):
        read_cores(path, units="m")


def test_las_null_values_are_left_out_and_leave_a_gap(tmp_path):
    las = """~Version
VERS. 2.0 : CWLS LOG ASCII STANDARD - VERSION 2.0
WRAP. NO : one line per depth step
~Well
STRT.M 100.0 :
STOP.M 103.0 :
STEP.M 0.5 :
NULL. -999.25 :
WELL. Kestrel 4 : WELL
~Curve
DEPT.M : depth
GR.GAPI : gamma ray
LITHOFACIES. : facies code
~A
100.0 45.0 2
100.5 47.0 2
101.0 -999.25 3
101.5 60.0 -999.25
102.0 61.0 -999.25
102.5 50.0 3
103.0 52.0 2
"""
    path = tmp_path / "k4.las"
    path.write_text(las)
    cores = read_cores(path)
    assert cores.units == "m" and cores.names == ["Kestrel 4"]
    core = cores["Kestrel 4"]
    assert core.gaps() == [(101.25, 102.25)]
    assert core.intervals["facies"].tolist() == ["2", "2", "3", "3", "2"]
    assert np.isnan(core.intervals["GR"].iloc[2])
    nulls = [p.message for p in cores.problems if p.kind == "null"]
    [undescribed] = [p for p in cores.problems if p.kind == "not-described"]
    assert "2 sample(s) without a facies code (data rows 4, 5)" in undescribed.message
    assert undescribed.row == 4 and undescribed.depth == 101.5
    assert any("GR (1)" in m for m in nulls)
    with pytest.raises(InputError, match="no curve 'FAC'"):
        read_cores(path, curve="FAC")


def test_a_database_mixing_units_is_converted_only_on_request(tmp_path):
    (tmp_path / "a.csv").write_text("core,top,base,facies,units\nW1,0,1,A,m\nW1,1,2,B,m\n")
    (tmp_path / "b.csv").write_text("core,top,base,facies,units\nW2,0,10,A,ft\nW2,10,20,B,ft\n")
    with pytest.raises(InputError, match="mixed depth units"):
        read_cores(tmp_path)
    cores = read_cores(tmp_path, units="m")
    assert cores["W1"].intervals["base"].tolist() == [1.0, 2.0]
    assert cores["W2"].intervals["base"].tolist() == [10 * 0.3048, 20 * 0.3048]
    (note,) = [p for p in cores.problems if p.kind == "units-converted"]
    assert note.file.endswith("b.csv") and "2 row(s) of depths in ft converted to m" in note.message


def test_a_problem_on_a_converted_row_gives_its_depth_in_the_units_of_the_core_set(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("core,top,base,facies,units\nW1,100,110,A,ft\nW1,110,125,,ft\n")
    (missing,) = [p for p in read_cores(path, units="m").problems if p.kind == "missing-facies"]
    # 1 ft = 0.3048 m exactly (international foot, 1959)
    assert (missing.depth, missing.units) == (110 * FT_TO_M, "m")
    assert "depth 33.53 m" in str(missing)
    (kept,) = [p for p in read_cores(path).problems if p.kind == "missing-facies"]
    assert (kept.depth, kept.units) == (110, "ft")


def test_las_codes_and_well_names_that_look_like_numbers_stay_text(tmp_path):
    # lasio reads a header value "01" as the number 1: codes "01" and "1" were read
    # back as one facies, and well "007" as core "7"
    table = pd.DataFrame(
        {
            "core": ["007"] * 4,
            "top": [0.0, 1.0, 2.0, 3.0],
            "base": [1.0, 2.0, 3.0, 4.0],
            "facies": ["01", "1", "shoreface, upper", "1.50"],
        }
    )
    cores = CoreSet.from_frame(table, units="m")
    path = tmp_path / "w.las"
    write_cores(cores, path)
    back = read_cores(path)
    assert back.names == ["007"]
    assert back["007"].intervals["facies"].tolist() == ["01", "1", "shoreface, upper", "1.50"]
