"""Every bad input: exit code, a one-line message naming where, no traceback, nothing written.

``faciesseq check`` prints each problem on one line (``severity: file, row N,
core X, depth D m: message``) and exits 1 when the data has errors, 0 when it
is usable (warnings and repairs listed). Reading failures are one line on
standard error. ``faciesseq scheme draft`` needs only the facies codes: it
writes a draft despite data errors, and refuses (writing nothing) only when no
code can be read.
"""

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

from faciesseq.cli import main
from faciesseq.errors import InputError
from faciesseq.io import read_cores

HEAD = "core,top,base,facies\n"

SCHEME = """name: two facies
facies:
  - {code: A, name: facies a, rank: 0}
  - {code: B, name: facies b, rank: 1, aliases: [bee]}
"""

# name, files, extra options, exit code of `check`, kind, severity, text on the problem's line
CASES = [
    (
        "unknown-facies",
        {"c.csv": HEAD + "W1,0,1,A\nW1,1,2,X\nW1,2,3,bee\n"},
        ["--scheme", "scheme.yaml"],
        1,
        "unknown-facies",
        "error",
        "data row 2, core W1, depth 1.00 m",
    ),
    (
        "top-below-base",
        {"c.csv": HEAD + "W1,0,1,A\nW1,3,2,B\nW1,3,4,A\n"},
        [],
        1,
        "top-below-base",
        "error",
        "data row 2, core W1, depth 3.00 m",
    ),
    (
        "every-row-left-out",
        {"c.csv": HEAD + "W1,2,1,A\nW1,3,3,B\n"},
        [],
        1,
        "top-below-base",
        "error",
        "data row 1, core W1, depth 2.00 m",
    ),
    (
        "zero-thickness",
        {"c.csv": HEAD + "W1,0,1,A\nW1,1,1,B\nW1,1,2,A\n"},
        [],
        1,
        "zero-thickness",
        "error",
        "data row 2, core W1, depth 1.00 m",
    ),
    (
        "large-overlap",
        {"c.csv": HEAD + "W1,0,1,A\nW1,0.5,2,B\n"},
        [],
        1,
        "overlap",
        "error",
        "data row 2, core W1, depth 0.50 m",
    ),
    (
        "small-overlap",
        {"c.csv": HEAD + "W1,0,1.004,A\nW1,1,2,B\nW1,2,3,A\n"},
        [],
        0,
        "overlap",
        "repair",
        "data row 2, core W1, depth 1.00 m",
    ),
    (
        "gap",
        {"c.csv": HEAD + "W1,0,1,A\nW1,1,2,B\nW1,3,4,A\nW1,4,5,B\n"},
        [],
        0,
        "gap",
        "warning",
        "data row 3, core W1, depth 2.00 m",
    ),
    (
        "reversed",
        {"c.csv": HEAD + "W1,2,3,A\nW1,1,2,B\nW1,0,1,A\n"},
        [],
        0,
        "depth-order",
        "repair",
        "data row 1, core W1, depth 2.00 m",
    ),
    (
        "repeated-depth",
        {"s.csv": "core,depth,facies\nW1,0.5,A\nW1,1.0,B\nW1,1.0,B\nW1,1.5,A\n"},
        ["--units", "m"],
        1,
        "repeated-depth",
        "error",
        "data row 3, core W1, depth 1.00 m",
    ),
    (
        "repeated-depth-kept",
        {"s.csv": "core,depth,facies\nW1,0.5,A\nW1,1.0,B\nW1,1.0,B\nW1,1.5,A\n"},
        ["--keep-first"],
        0,
        "repeated-depth",
        "repair",
        "data row 3, core W1",
    ),
    (
        "missing-depth",
        {"c.csv": HEAD + "W1,0,1,A\nW1,,2,B\nW1,2,3,A\n"},
        [],
        1,
        "missing-depth",
        "error",
        "data row 2, core W1: no top depth",
    ),
    (
        "non-numeric-depth",
        {"c.csv": HEAD + "W1,0,1,A\nW1,1,2 m,B\nW1,2,3,A\n"},
        [],
        1,
        "bad-depth",
        "error",
        "data row 2, core W1: base '2 m' is not a number",
    ),
    (
        # a spreadsheet's second header row of units, read as the first data row
        "units-row",
        {"c.csv": HEAD + ",ft,(ft),\nW1,0,1,A\nW1,1,2,B\n"},
        [],
        1,
        "bad-depth",
        "error",
        "data row 1: top 'ft' is not a number (a row of units under the header? delete it",
    ),
    (
        "null-depth",
        {"c.csv": HEAD + "W1,0,1,A\nW1,-999.25,2,B\nW1,2,3,A\n"},
        [],
        1,
        "missing-depth",
        "error",
        "data row 2, core W1: top holds the null value",
    ),
    (
        "duplicate-core",
        {"a.csv": HEAD + "W1,0,1,A\nW1,1,2,B\n", "b.csv": HEAD + "W1,5,6,A\nW2,0,1,A\nW2,1,2,B\n"},
        [],
        1,
        "duplicate-core",
        "error",
        "b.csv, data row 1, core W1",
    ),
    (
        "one-interval-core",
        {"c.csv": HEAD + "W1,0,1,A\nW1,1,2,B\nW2,0,3,A\n"},
        [],
        0,
        "too-short",
        "warning",
        "core W2: only 1 bed",
    ),
    (
        "empty-core",
        {"s.csv": "core,depth,facies\nW1,0.5,A\nW1,1.0,B\nW2,0.5,\nW2,1.0,\n"},
        [],
        0,
        "empty-core",
        "warning",
        "core W2: no usable intervals",
    ),
    (
        "missing-facies",
        {"c.csv": HEAD + "W1,0,1,A\nW1,1,2,\nW1,2,3,B\n"},
        [],
        1,
        "missing-facies",
        "error",
        "data row 2, core W1, depth 1.00 m: no facies code",
    ),
    ("no-data-rows", {"c.csv": HEAD}, [], 1, "no-cores", "error", "no usable cores"),
    (
        "missing-core",
        {"c.csv": HEAD + ",0,1,A\nW1,1,2,B\nW1,2,3,B\n"},
        [],
        1,
        "missing-core",
        "error",
        "c.csv, data row 1: no core identifier",
    ),
]


def _write(tmp_path: Path, files: dict[str, str | bytes]) -> Path:
    for name, content in files.items():
        path = tmp_path / name
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")
    (tmp_path / "scheme.yaml").write_text(SCHEME)
    data = list(files)
    return tmp_path / data[0] if len(data) == 1 else tmp_path


def _run(capsys, argv):
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


@pytest.mark.parametrize(
    ("files", "options", "code", "kind", "severity", "text"),
    [c[1:] for c in CASES],
    ids=[c[0] for c in CASES],
)
def test_check_reports_each_bad_input_on_one_line(
    tmp_path, monkeypatch, capsys, files, options, code, kind, severity, text
):
    monkeypatch.chdir(tmp_path)
    source = _write(tmp_path, files)
    got, out, err = _run(capsys, ["check", source, *options])
    assert got == code, out + err
    assert err == "" or (err.startswith("faciesseq check: units: ") and err.count("\n") == 1)
    lines = [ln for ln in out.splitlines() if ln.startswith(f"{severity}: ") and text in ln]
    assert len(lines) == 1, out
    # the same problem is in the JSON output with its stable kind
    _, out, _ = _run(capsys, ["check", source, *options, "--format", "json"])
    problems = json.loads(out)["problems"]
    assert any(p["kind"] == kind and p["severity"] == severity for p in problems)
    assert json.loads(out)["summary"]["usable"] is (code == 0)


def test_a_row_left_out_for_an_error_names_itself_in_the_gap_it_leaves(tmp_path, capsys):
    # a bad facies code on data row 2 (found by the new-user audit): the row is left
    # out, so the succession is split above data row 3; the gap's warning names the row
    # that left it instead of reading as a second, unrelated problem
    source = _write(tmp_path, {"c.csv": HEAD + "W1,0,1,A\nW1,1,2,X\nW1,2,3,B\nW1,4,5,A\n"})
    _, out, _ = _run(capsys, ["check", source, "--scheme", tmp_path / "scheme.yaml"])
    gaps = [ln for ln in out.splitlines() if "gap from" in ln]
    assert len(gaps) == 2, out
    left, real = gaps
    assert "data row 3" in left and "left by data row 2 (see its error)" in left
    assert "data row 4" in real and "left by" not in real  # a gap in the core itself


@pytest.mark.parametrize(
    ("files", "options"),
    [c[1:3] for c in CASES if c[3] == 1 and "--scheme" not in c[2]],
    ids=[c[0] for c in CASES if c[3] == 1 and "--scheme" not in c[2]],
)
def test_scheme_draft_reads_codes_despite_errors_or_writes_nothing(
    tmp_path, capsys, files, options
):
    source = _write(tmp_path, files)
    out = tmp_path / "out" / "draft.yaml"
    code, stdout, err = _run(capsys, ["scheme", "draft", source, "-o", out, *options])
    if code == 0:  # the codes of the rows without errors; the errors are counted
        assert "error(s)" in stdout and out.exists()
        assert "rank: null  # TODO" in out.read_text()
        return
    assert code == 1
    assert len(err.strip().splitlines()) == 1
    assert err.startswith("faciesseq scheme: ")
    assert "core W1" in err or f"{source}: no usable cores" in err or f"{source}, data row 2" in err
    assert not out.exists()
    assert not (tmp_path / "out").exists() or not list((tmp_path / "out").iterdir())


# Reading failures: one line on stderr naming the file, exit 1 (data) or 2 (usage).
FAILURES = [
    (
        "missing-column",
        {"c.csv": "core,top,facies\nW1,0,A\n"},
        [],
        1,
        "c.csv: missing required column(s) base",
    ),
    (
        "mixed-units",
        {
            "a.csv": "core,top,base,facies,units\nW1,0,1,A,m\n",
            "b.csv": "core,top,base,facies,units\nW2,0,1,A,ft\n",
        },
        [],
        1,
        "mixed depth units",
    ),
    ("unknown-format", {"c.foo": "whatever"}, [], 1, "c.foo: unknown format"),
    (
        "sheet-for-csv",
        {"c.csv": HEAD + "W1,0,1,A\n"},
        ["--sheet", "x"],
        2,
        "c.csv: --sheet does not apply",
    ),
    (
        "unknown-role",
        {"c.csv": HEAD + "W1,0,1,A\n"},
        ["--column", "colour=x"],
        2,
        "unknown column role 'colour'",
    ),
    (
        "bad-column-option",
        {"c.csv": HEAD + "W1,0,1,A\n"},
        ["--column", "facies"],
        2,
        "--column expects ROLE=NAME",
    ),
    (
        "column-not-there",
        {"c.csv": HEAD + "W1,0,1,A\n"},
        ["--column", "facies=Lith"],
        1,
        "c.csv: column 'Lith' (given for role facies) not found",
    ),
    (
        "ambiguous-columns",
        {"c.csv": "well,core,top,base,facies\nW,W1,0,1,A\n"},
        [],
        1,
        "'well', 'core' all look like the core column",
    ),
    (
        "repeated-column",  # read as facies and facies.1 before: the second one silently
        {"c.csv": "core,top,base,facies,facies\nW1,0,1,A,B\n"},
        [],
        1,
        "c.csv: the header names column 'facies' twice (columns 4 and 5); rename or delete one",
    ),
    ("empty-file", {"c.csv": ""}, [], 1, "c.csv: file is empty"),
    (
        "long-row-plain",  # the fast reader leaves it to pandas, whose words were shown
        {"c.csv": HEAD + "W1,0,1,A\nW1,1,2,B,9\nW1,2,3,A\n"},
        [],
        1,
        "c.csv, data row 2, core W1, depth 1.00: 5 cells, but the header names 4 columns",
    ),
    (
        "long-row-quoted",  # the general reader; a blank line counts as a data row
        {"c.csv": HEAD + 'W1,0,1,"A"\n\nW1,1,2,"B,9",x\n'},
        [],
        1,
        "c.csv, data row 3, core W1, depth 1.00: 5 cells, but the header names 4 columns",
    ),
    (
        "long-row-tsv-feet",
        {"c.tsv": "Well\tDepth (ft)\tfacies\nW1\t0\tA\nW1\t1\tB\t9\n"},
        [],
        1,
        "c.tsv, data row 2, core W1, depth 1.00 ft: 4 cells, but the header names 3 columns",
    ),
    (
        "long-row-nul",  # a NUL byte: pandas' Python parser, in its own words too
        {"c.csv": HEAD + "W1,0,1,A\x00\nW1,1,2,B,9\n"},
        [],
        1,
        "c.csv, data row 2, core W1, depth 1.00: 5 cells, but the header names 4 columns",
    ),
    (
        "long-row-no-roles",  # no column looks like a core or a depth: the row alone
        {"c.csv": "a,b\n1,2\n3,4,5\n"},
        [],
        1,
        "c.csv, data row 2: 3 cells, but the header names 2 columns",
    ),
    (
        "bad-scheme",
        {"c.csv": HEAD + "W1,0,1,A\n"},
        ["--scheme", "nope.yaml"],
        1,  # as a missing SOURCE
        "nope.yaml: file not found",
    ),
    ("not-las", {"c.las": "not a las file\n"}, [], 1, "c.las: not a readable LAS file"),
    ("not-parquet", {"c.parquet": b"PAR1garbage"}, [], 1, "c.parquet: not a readable Parquet"),
    ("not-xlsx", {"c.xlsx": b"PK\x03\x04garbage"}, [], 1, "c.xlsx: not a readable .xlsx"),
    ("bad-bom", {"c.csv": b"\xff\xfe\x00\x00\x01\x02\x03"}, [], 1, "c.csv: starts with a UTF-32"),
    ("bad-source-file", {"s.yaml": "path: [1, 2]\n"}, [], 2, "s.yaml: 'path' must be text"),
]


@pytest.mark.parametrize(
    ("files", "options", "code", "text"),
    [c[1:] for c in FAILURES],
    ids=[c[0] for c in FAILURES],
)
def test_reading_failures_are_one_line_on_stderr(tmp_path, capsys, files, options, code, text):
    source = _write(tmp_path, files)
    options = [str(tmp_path / o) if o.endswith(".yaml") else o for o in options]
    got, out, err = _run(capsys, ["check", source, *options])
    assert got == code
    assert out == ""
    assert len(err.strip().splitlines()) == 1, err
    assert text in err
    if code == 1 and "--scheme" not in options:  # scheme draft takes no --scheme
        draft = tmp_path / "draft.yaml"
        got, _, err = _run(capsys, ["scheme", "draft", source, "-o", draft, *options])
        assert got == 1 and len(err.strip().splitlines()) == 1
        assert not draft.exists()


@pytest.mark.parametrize("kind", ["xlsx", "sqlite"])
def test_a_column_named_twice_in_a_workbook_or_query_is_one_line(tmp_path, capsys, kind):
    # an attribute column named twice stopped the reading with an AttributeError traceback
    rows = [["core", "top", "base", "facies", "note", "note"], ["W1", 0, 1, "A", "x", "y"]]
    if kind == "xlsx":
        openpyxl = pytest.importorskip("openpyxl")
        book = openpyxl.Workbook()
        for row in rows:
            book.active.append(row)
        source = tmp_path / "c.xlsx"
        book.save(source)
        options, named = [], "c.xlsx"
    else:
        import sqlite3

        source = tmp_path / "c.sqlite"
        with sqlite3.connect(source) as con:
            con.execute("create table intervals(core, top, base, facies, note)")
            con.execute("insert into intervals values ('W1', 0, 1, 'A', 'x')")
        con.close()
        options = ["--query", "select core, top, base, facies, note, note from intervals"]
        named = "c.sqlite [query]"
    got, out, err = _run(capsys, ["check", str(source), *options])
    assert got == 1 and out == ""
    assert err == (
        f"faciesseq check: {tmp_path / named}: the header names column 'note' twice "
        "(columns 5 and 6); rename or delete one\n"
    )


def test_no_traceback_from_the_installed_command(tmp_path):
    # run as a user would, in a separate process: one line, no traceback
    source = _write(tmp_path, {"c.csv": "core,top,facies\nW1,0,A\n"})
    proc = subprocess.run(
        [sys.executable, "-m", "faciesseq", "check", str(source)],
        capture_output=True,
        text=True,
        cwd=Path(__file__).parents[1],
    )
    assert proc.returncode == 1
    assert "Traceback" not in proc.stderr
    assert proc.stderr.count("\n") == 1 and "missing required column" in proc.stderr


def test_repairs_change_the_cores_as_reported(tmp_path):
    source = _write(tmp_path, {"c.csv": HEAD + "W1,2,3,A\nW1,1.004,2,B\nW1,0,1.004,A\n"})
    cores = read_cores(source)
    table = cores["W1"].intervals
    # listed base to top: put in depth order (a repair) ...
    assert table["top"].tolist() == [0.0, 1.004, 2.0]
    kinds = [(p.kind, p.severity) for p in cores.problems]
    assert ("depth-order", "repair") in kinds
    # ... and a gap is kept as a gap: never bridged
    gapped = read_cores(_write(tmp_path, {"g.csv": HEAD + "W1,0,1,A\nW1,1.5,2,B\n"}))
    assert gapped["W1"].gaps() == [(1.0, 1.5)]
    assert len(gapped["W1"].successions()) == 2


def test_small_overlap_is_snapped_to_the_interval_above(tmp_path):
    source = _write(tmp_path, {"c.csv": HEAD + "W1,0,1.004,A\nW1,1,2,B\n"})
    cores = read_cores(source)
    assert cores["W1"].intervals["top"].tolist() == [0.0, 1.004]
    (repair,) = [p for p in cores.problems if p.kind == "overlap"]
    assert repair.severity == "repair" and "moved down from 1 to 1.004" in repair.message
    assert not cores.errors


def test_an_interval_covering_the_next_row_names_both_rows_and_no_sort_or_gap(tmp_path):
    # a row 107.1-108.13 wholly covering the row above it in the file (107.13-107.4):
    # check reported a sort "repair", an overlap of 0.03 m with another row only, and a
    # gap from 107.4 to 108.13 that the file does not have
    rows = [
        "W1,105.63,107.13,A",  # data row 1
        "W1,107.13,107.4,B",  # data row 2
        "W1,107.1,108.13,C",  # data row 3
        "W1,108.13,109.32,A",  # data row 4
    ]
    source = _write(tmp_path, {"c.csv": HEAD + "\n".join(rows) + "\n"})
    problems = read_cores(source, units="m").problems
    assert [(p.kind, p.severity) for p in problems] == [("overlap", "error")]
    assert str(problems[0]) == (
        f"error: {source}, data row 3, core W1, depth 107.10 m: interval 107.1-108.13 "
        "overlaps data row 1 (105.63-107.13) from 107.1 to 107.13 (0.03 m) and covers data "
        "row 2 (107.13-107.4) wholly (0.27 m), more than the 0.01 m snapped as rounding"
    )
    # a row out of order that overlaps nothing is still sorted, and said so; a real gap
    # is still a gap
    source = _write(tmp_path, {"d.csv": HEAD + "W1,2,3,A\nW1,0,1,B\nW1,3,4,A\n"})
    kinds = [(p.kind, p.row) for p in read_cores(source, units="m").problems]
    assert kinds == [("depth-order", 2), ("gap", 1)]


def test_rows_with_errors_are_left_out_but_listed(tmp_path):
    source = _write(tmp_path, {"c.csv": HEAD + "W1,0,1,A\nW1,3,2,B\nW1,1,2,B\n"})
    cores = read_cores(source)
    assert cores["W1"].intervals["_row"].tolist() == [1, 3]
    with pytest.raises(
        InputError, match=re.escape("data row 2, core W1, depth 3.00 m: top 3 is below")
    ):
        cores.require_valid()


def test_a_contact_type_no_known_word_reads_is_a_located_warning_and_read_as_missing(tmp_path):
    # a typo once became a contact category of its own, which the tract model learnt
    rows = "W1,0,1,A,Sharp\nW1,1,2,B,shrap\nW1,2,3,A,gradational\nW1,3,4,B,shrap\n"
    rows += "W2,0,1,A,loaded\nW2,1,2,B,erosional scour\nW2,2,3,A,shrap\n"
    source = _write(tmp_path, {"c.csv": "core,top,base,facies,contact\n" + rows})
    cores = read_cores(source, units="m")
    found = [p for p in cores.problems if p.kind == "unknown-contact"]
    assert [(p.severity, p.row, p.core, p.depth) for p in found] == [
        ("warning", 2, "W1", 1.0),
        ("warning", 5, "W2", 0.0),
        ("warning", 7, "W2", 2.0),
    ]
    assert str(found[0]).startswith(f"warning: {source}, data row 2, core W1, depth 1.00 m: ")
    assert "contact type 'shrap' (2 rows)" in found[0].message
    assert "'loaded' holds none" in found[1].message and "sharp, erosion," in found[1].message
    assert "gradation" in found[1].message and "read as missing" in found[1].message
    contacts = cores.to_frame()["contact"].tolist()
    assert contacts[:3] == ["sharp", None, "gradational"]
    assert contacts[4:6] == [None, "erosional scour"] and contacts[6] is None
    assert not cores.errors


def test_a_core_whose_every_top_is_below_its_base_is_asked_whether_the_columns_are_swapped(
    tmp_path,
):
    # top and base mapped the wrong way round (or elevations, positive upward) give
    # one error per row; the first says what they have in common
    path = tmp_path / "c.csv"
    path.write_text("core,top,base,facies\nW1,1,0,A\nW1,2,1,B\nW2,0,1,A\nW2,2,1,B\n")
    errors = [p for p in read_cores(path).problems if p.kind == "top-below-base"]
    assert [p.core for p in errors] == ["W1", "W1", "W2"]
    assert "top and base columns swapped" in errors[0].message
    assert not any("swapped" in p.message for p in errors[1:])


def test_elevations_are_told_how_to_be_given_before_the_columns_are_said_swapped(tmp_path):
    # elevations (positive upward) gave "are the top and base columns swapped?" first;
    # a user who swapped them had every core read upside down
    path = tmp_path / "c.csv"
    path.write_text("core,top,base,facies\nW1,0,-1,A\nW1,-1,-2,B\n")
    first = next(p for p in read_cores(path).problems if p.kind == "top-below-base")
    message = first.message
    assert "are the depths elevations (positive upward)?" in message
    assert "negate them (depth = -elevation" in message
    assert message.index("negate") < message.index("swapped")


def test_a_core_whose_every_depth_is_negative_is_warned_of_as_elevations(tmp_path, capsys):
    # the elevation table with top and base swapped: read upside down without a word
    path = tmp_path / "c.csv"
    rows = "W1,-1,0,A\nW1,-2,-1,B\nW2,-0.5,0.5,A\nW2,0.5,1,B\nW3,-3,-2,A\nW3,-2,-1,B\n"
    path.write_text("core,top,base,facies\n" + rows)
    found = [p for p in read_cores(path).problems if p.kind == "negative-depth"]
    assert [p.core for p in found] == ["W1", "W3"]  # W2 crosses zero: no warning
    assert found[0].severity == "warning"
    assert "depths are negative (top -2, base 0): depth is positive downward" in found[0].message
    assert "are these elevations?" in found[0].message
    assert main(["markov", str(path), "-o", str(tmp_path / "m")]) == 0
    err = capsys.readouterr().err
    (line,) = [x for x in err.splitlines() if "negative" in x]
    assert line.startswith("faciesseq markov: warning: depths are negative on 2 core(s) (W1, W3)")
    assert main(["check", str(path)]) == 0
    out, err = capsys.readouterr()
    assert "core W1: depths are negative" in out and "on 2 core(s) (W1, W3)" in err


def test_depths_at_zero_and_below_are_not_warned_of(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("core,top,base,facies\nW1,0,1,A\nW1,1,2,B\n")
    assert not [p for p in read_cores(path).problems if p.kind == "negative-depth"]


def test_a_facies_code_in_another_case_than_the_schemes_is_named_with_the_schemes(tmp_path, capsys):
    # codes are matched exactly (some codings tell case apart), so 'b' is refused;
    # the message names the scheme's code it differs from only in case or spaces
    (tmp_path / "scheme.yaml").write_text(SCHEME)
    (tmp_path / "c.csv").write_text(HEAD + "W1,0,1,A\nW1,1,2,b\nW1,2,3,X\n")
    code = main(["check", str(tmp_path / "c.csv"), "--scheme", str(tmp_path / "scheme.yaml")])
    out = capsys.readouterr().out
    assert code == 1
    line = next(x for x in out.splitlines() if "facies code 'b'" in x)
    assert "write it as 'B', or add 'b' to that facies' aliases" in line
    line = next(x for x in out.splitlines() if "facies code 'X'" in x)
    assert line.endswith("add it (code or alias) to the scheme")


def test_depths_written_for_people_say_how_to_write_them(tmp_path, capsys):
    # a depth with its unit or with thousands separators is refused (a unit per cell
    # could differ from row to row; a separator is a decimal mark elsewhere) with the
    # way to write it
    (tmp_path / "c.csv").write_text(
        HEAD + 'W1,0,12.5 m,A\nW1,12.5,"1,234.5",B\nW1,1234.5,1240ft,A\nW1,1240,1241,B\n'
    )
    assert main(["check", str(tmp_path / "c.csv"), "--units", "m"]) == 1
    out = capsys.readouterr().out.splitlines()
    unit = [x for x in out if "'12.5 m' is not a number" in x or "'1240ft' is not" in x]
    assert len(unit) == 2
    assert all("write the number alone and give the units in the header" in x for x in unit)
    grouped = next(x for x in out if "'1,234.5' is not a number" in x)
    assert "write it without thousands separators" in grouped


@pytest.mark.parametrize("streamed", [False, True])
def test_a_comment_line_before_the_header_is_refused_in_one_line(tmp_path, capsys, streamed):
    # a '#' line above the header was read as the header, and every data row then
    # reported ragged ("7 cells, but the header names 1 columns")
    path = tmp_path / "c.csv"
    path.write_text("# cores of the Quillerby field, described 2025\n" + HEAD + "W1,0,1,A\n")
    if streamed:  # not streamed: read whole, where the general reader refuses it
        from faciesseq.io import stream_cores

        assert stream_cores(path) is None
        with pytest.raises(InputError, match="first line starts with '#'"):
            read_cores(path)
        return
    assert main(["check", str(path)]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "first line starts with '#': comment lines are not read" in err[0]
    assert str(path.name) in err[0]


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_a_title_above_the_header_is_named_with_the_row_of_the_header(tmp_path, capsys, suffix):
    # a spreadsheet with a title and a blank line above its column names: the names
    # are found below and the message says which row to make the header
    import pandas as pd

    rows = [
        ["Core descriptions, Quillerby field", None, None, None],
        [None, None, None, None],
        ["core", "top", "base", "facies"],
        ["W1", 0, 1, "A"],
        ["W1", 1, 2, "B"],
    ]
    path = tmp_path / f"c{suffix}"
    frame = pd.DataFrame(rows[1:], columns=rows[0])
    if suffix == ".csv":
        frame.to_csv(path, index=False)
    else:
        pytest.importorskip("openpyxl")
        frame.to_excel(path, index=False)
    assert main(["check", str(path)]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    assert "missing required column(s)" in err[0]
    assert "the column names stand on data row 2: delete the rows above them" in err[0]
