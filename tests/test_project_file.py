"""A project file stated once: ``check --write-source``, ``scheme:`` in a YAML source
file, the units and scheme in force on every command, feet read as metres flagged, and
``scheme draft`` despite data errors (issue 13, "A project file, stated once").

Real data: the Council Grove facies logs (tests/data/council_grove/, in feet with
0.5 ft samples; Dubois et al. 2007, Computers & Geosciences 33:599-617).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
import yaml

from faciesseq.cli import main
from faciesseq.io import read_cores
from faciesseq.io.source import load_source_file
from faciesseq.scheme import FaciesScheme

DATA = Path(__file__).parent / "data" / "council_grove"
CSV = DATA / "facies_vectors_subset.csv"
COLUMNS = {"core": "Well Name", "depth": "Depth", "facies": "Facies"}
OPTIONS = [a for k, v in COLUMNS.items() for a in ("--column", f"{k}={v}")]


def _run(capsys, argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def odd(tmp_path):
    """The Council Grove logs (feet) with odd column names, and its scheme, in tmp_path."""
    rows = list(csv.reader(CSV.open()))
    path = tmp_path / "data" / "logs.csv"
    path.parent.mkdir()
    with path.open("w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["Fm", "Well Label", "Sample MD", "Lith Class"])
        for r in rows[1:]:
            w.writerow([r[1], r[2], r[3], r[0]])
    scheme = tmp_path / "my-scheme.yaml"
    scheme.write_text((DATA / "scheme.yaml").read_text())
    return path, scheme


ODD = ["--column", "core=Well Label", "--column", "depth=Sample MD", "--column"]
ODD += ["facies=Lith Class"]


def _write_source(capsys, odd, tmp_path):
    data, scheme = odd
    target = tmp_path / "project" / "cores.yaml"
    argv = ["check", data, *ODD, "--units", "ft", "--keep-first", "--scheme", scheme]
    code, _, err = _run(capsys, [*argv, "--write-source", target])
    assert code == 0, err
    return target, argv[1:]


def test_write_source_holds_what_check_detected(odd, tmp_path, capsys):
    target, _ = _write_source(capsys, odd, tmp_path)
    text = target.read_text()
    assert text.startswith("# faciesseq source file, written by `faciesseq check --write-source`")
    data = yaml.safe_load(text)
    assert data == {
        "path": "../data/logs.csv",  # relative to the YAML file
        "layout": "samples",
        "units": "ft",
        "columns": {"core": "Well Label", "depth": "Sample MD", "facies": "Lith Class"},
        "repeated_depths": "keep-first",
        "scheme": "../my-scheme.yaml",
    }
    # every key line carries a comment
    keys = [ln for ln in text.splitlines() if ln and not ln.startswith(("#", " "))]
    assert all("#" in ln for ln in keys), keys
    spec = load_source_file(target)
    assert Path(spec.scheme) == odd[1] and Path(spec.source).resolve() == odd[0].resolve()


def test_write_source_refuses_to_replace_without_force_and_the_data_itself(odd, tmp_path, capsys):
    target, argv = _write_source(capsys, odd, tmp_path)
    before = target.read_text()
    code, _, err = _run(capsys, ["check", *argv, "--write-source", target])
    assert code == 2 and "exists" in err and target.read_text() == before
    code, _, err = _run(capsys, ["check", *argv, "--write-source", target, "--force"])
    assert code == 0
    before = target.read_text()  # written again, with the time of this write
    code, _, err = _run(capsys, ["check", *argv, "--write-source", odd[0], "--force"])
    assert code == 2 and ".yaml" in err
    assert err.count("\n") == 1
    # a source file is never written over itself, --force or not
    code, _, err = _run(capsys, ["check", target, "--write-source", target, "--force"])
    assert code == 2 and "which this command reads" in err and target.read_text() == before


@pytest.mark.parametrize(
    "command",
    [
        ["markov", "--format", "json"],
        ["fit", "--restarts", "1", "--max-iter", "5", "--seed", "3", "--format", "json"],
    ],
    ids=["markov", "fit"],
)
def test_commands_on_the_source_file_match_the_explicit_options(odd, tmp_path, capsys, command):
    target, argv = _write_source(capsys, odd, tmp_path)
    name, *rest = command
    extra = []
    if name == "fit":
        extra = ["-o", tmp_path / "a.json"]
    code, explicit, err_a = _run(capsys, [name, *argv, *rest, *extra])
    assert code == 0, err_a
    if name == "fit":
        extra = ["-o", tmp_path / "b.json"]
    code, from_file, err_b = _run(capsys, [name, target, *rest, *extra])
    assert code == 0, err_b
    a, b = json.loads(explicit), json.loads(from_file)
    if name == "fit":
        a.pop("output", None), b.pop("output", None)
    assert a == b
    assert "units: ft (--units); scheme: " in err_a
    assert "units: ft (from the source file); scheme: " in err_b
    assert "(from the source file)" in err_b.split("scheme: ")[1]


def test_decode_on_the_source_file_matches_the_explicit_options(odd, tmp_path, capsys):
    target, argv = _write_source(capsys, odd, tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", target, "--restarts", "1", "--max-iter", "5", "--seed", "3", "-o", model]
    assert _run(capsys, fit)[0] == 0
    code, _, err = _run(capsys, ["decode", model, *argv, "-o", tmp_path / "d1"])
    assert code == 0, err
    code, _, err = _run(capsys, ["decode", model, target, "-o", tmp_path / "d2"])
    assert code == 0, err
    one = sorted(p.name for p in (tmp_path / "d1").iterdir())
    assert one == sorted(p.name for p in (tmp_path / "d2").iterdir())
    for name in one:
        if name.endswith(".csv"):
            assert (tmp_path / "d1" / name).read_text() == (tmp_path / "d2" / name).read_text()


def test_explicit_scheme_wins_over_the_source_file(odd, tmp_path, capsys):
    target, _ = _write_source(capsys, odd, tmp_path)
    other = tmp_path / "other.yaml"
    data = yaml.safe_load(odd[1].read_text())
    data["name"] = "other scheme"
    other.write_text(yaml.safe_dump(data))
    code, _, err = _run(capsys, ["check", target, "--scheme", other])
    assert code == 0
    assert f"scheme: {other} (--scheme)" in err
    # the Python API uses the source file's scheme when none is given
    cores = read_cores(target)
    assert cores.units == "ft"


def test_a_source_file_scheme_that_is_missing_is_a_data_error(odd, tmp_path, capsys):
    target, _ = _write_source(capsys, odd, tmp_path)
    target.write_text(target.read_text().replace("../my-scheme.yaml", "nowhere.yaml"))
    code, out, err = _run(capsys, ["markov", target])
    assert code == 1 and "nowhere.yaml: file not found" in err and out == ""


def test_council_grove_without_units_is_flagged_loudly(capsys):
    """0.5 ft samples near 2,800 ft read as metres (Dubois et al. 2007 data)."""
    cores = read_cores(CSV, columns=COLUMNS, repeated_depths="keep-first")
    kinds = [p.kind for p in cores.problems]
    assert kinds[0] == "units-suspect"
    assert "--units ft" in cores.problems[0].message
    assert "units: ft" in cores.problems[0].message
    # stated units (either way) silence it
    for units in ("ft", "m"):
        stated = read_cores(CSV, columns=COLUMNS, units=units, repeated_depths="keep-first")
        assert "units-suspect" not in [p.kind for p in stated.problems]
    argv = ["check", CSV, *OPTIONS]
    code, out, err = _run(capsys, [*argv, "--keep-first"])
    assert code == 0
    assert out.splitlines()[0].startswith("WARNING: depths look like feet (0.5 steps near")
    assert err.splitlines()[0].startswith("faciesseq check: WARNING: depths look like feet")
    assert "units: m (assumed: the source states none); scheme: none" in err
    code, out, err = _run(capsys, ["markov", *argv[1:], "--keep-first", "--format", "json"])
    assert code == 0 and "faciesseq markov: WARNING: depths look like feet" in err


def test_metres_near_the_surface_are_not_flagged():
    from faciesseq.io.validate import feet_suspected

    cores = read_cores(CSV, columns=COLUMNS, units="ft", repeated_depths="keep-first")
    assert feet_suspected(cores, {"W": 0.5}) is not None  # thousands, 0.5 steps
    shallow = read_cores(Path(__file__).parent.parent / "faciesseq" / "data" / "demo" / "cores.csv")
    assert feet_suspected(shallow, shallow.meta["sample_step"]) is None


def test_scheme_draft_reads_the_codes_despite_data_errors_and_lists_every_field(tmp_path, capsys):
    # without --keep-first the Council Grove logs have three repeated depths (errors)
    out = tmp_path / "draft.yaml"
    options = OPTIONS
    code, stdout, err = _run(capsys, ["scheme", "draft", CSV, *options, "-o", out])
    assert code == 0, err
    assert "3 error(s)" in stdout
    data = yaml.safe_load(out.read_text())
    codes = [f["code"] for f in data["facies"]]
    assert sorted(codes, key=int) == [str(i) for i in range(1, 10)]
    # listed in the order the transitions suggest: the nonmarine facies 1-3 landward
    assert sorted(codes[:3]) == ["1", "2", "3"]
    fields = {"code", "name", "rank", "group", "colour", "grain_size", "aliases"}
    fields |= {"description", "cycle_base", "setting", "exposure"}
    assert all(set(f) == fields for f in data["facies"])
    assert all(f["rank"] is None for f in data["facies"])
    assert out.read_text().count("rank: null  # TODO") == 9
    # once the ranks are filled in, the draft loads as it stands
    for i, f in enumerate(data["facies"]):
        f["rank"] = i
    assert len(FaciesScheme.from_dict(data)) == 9


def test_scheme_draft_without_any_code_fails_and_writes_nothing(tmp_path, capsys):
    source = tmp_path / "c.csv"
    source.write_text("core,top,base,facies\nW1,x,2,A\n")
    out = tmp_path / "draft.yaml"
    code, _, err = _run(capsys, ["scheme", "draft", source, "-o", out])
    assert code == 1 and len(err.strip().splitlines()) == 1 and "row 1" in err
    assert not out.exists()


def test_a_source_file_states_its_units_as_a_units_column_would(tmp_path):
    # `units: feet` reads as ft (the spellings of a units column); an unknown unit is a
    # usage error naming the file
    source = {"path": str(CSV), "columns": COLUMNS, "units": "feet"}
    good = tmp_path / "feet.yaml"
    good.write_text(yaml.safe_dump(source))
    assert load_source_file(good).units == "ft"
    assert read_cores(good).units == "ft"
    bad = tmp_path / "bad.yaml"
    bad.write_text(yaml.safe_dump({**source, "units": "fathoms"}))
    with pytest.raises(Exception, match="got 'fathoms'") as found:
        load_source_file(bad)
    assert "bad.yaml" in str(found.value)


@pytest.mark.parametrize(
    ("name", "said"),
    [("scheme-shoreface.yaml", "a facies scheme"), ("tracts-default.yaml", "a tract model")],
)
def test_a_scheme_given_as_the_source_is_named_for_what_it_is(capsys, name, said):
    config = Path(__file__).resolve().parents[1] / "configs" / name
    code, _, err = _run(capsys, ["markov", config])
    assert code == 2
    assert f"this is {said}, not a source of cores" in err and len(err.strip().splitlines()) == 1


def _two_table_source(tmp_path, keys: str) -> Path:
    """A SQLite file of two interval tables and a YAML source file reading it."""
    import sqlite3

    rows = [("A", k, k + 1, "FGS"[k % 3]) for k in range(6)]
    with sqlite3.connect(tmp_path / "db.sqlite") as conn:
        for name, kept in (("old", rows[:3]), ("new", rows)):
            conn.execute(f"CREATE TABLE {name} (core TEXT, top REAL, base REAL, facies TEXT)")
            conn.executemany(f"INSERT INTO {name} VALUES (?, ?, ?, ?)", kept)
    conn.close()
    source = tmp_path / "cores.yaml"
    source.write_text(f"path: db.sqlite\nunits: m\n{keys}")
    return source


def test_a_source_file_with_table_and_query_names_its_keys(tmp_path, capsys):
    # the message named --table and --query, options the command was not given
    source = _two_table_source(tmp_path, "table: old\nquery: SELECT * FROM new\n")
    code, _, err = _run(capsys, ["check", source])
    assert code == 2
    assert err == f"faciesseq check: {source}: give table: or query:, not both\n"


def test_a_query_given_replaces_the_source_files_table(tmp_path):
    source = _two_table_source(tmp_path, "table: old\n")
    assert len(read_cores(source).cores["A"].intervals) == 3
    cores = read_cores(source, query="SELECT * FROM new")
    assert len(cores.cores["A"].intervals) == 6
