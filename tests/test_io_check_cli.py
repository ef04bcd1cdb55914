"""``faciesseq check`` summary (text and JSON) and ``faciesseq scheme draft|show``."""

import json
from pathlib import Path

import pandas as pd
import pytest
import yaml

from faciesseq.cli import main
from faciesseq.core import CoreSet
from faciesseq.errors import ConfigError, InputError
from faciesseq.io import read_cores, summarise, write_cores

CSV = (
    "core,top,base,facies,contact\n"
    "W1,0,1,A,sharp\nW1,1,2,A,gradational\nW1,2,2.5,B,sharp\nW1,3,4,A,erosional\n"
)


def _source(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text(CSV)
    return path


def test_summary_counts_beds_thickness_and_proportions_worked_by_hand(tmp_path):
    # beds: A 0-2 (two intervals amalgamated), B 2-2.5, gap 2.5-3, A 3-4
    result = summarise(read_cores(_source(tmp_path), units="m"))
    core = result.cores.iloc[0]
    assert (core["intervals"], core["beds"], core["gaps"]) == (4, 3, 1)
    assert (core["top"], core["base"], core["cored_thickness"]) == (0.0, 4.0, 3.5)
    assert core["gap_thickness"] == 0.5
    a, b = result.facies.to_dict(orient="records")
    assert (a["facies"], a["intervals"], a["beds"], a["thickness"]) == ("A", 3, 2, 3.0)
    assert a["proportion_thickness"] == pytest.approx(3.0 / 3.5)
    assert a["proportion_beds"] == pytest.approx(2 / 3)
    assert (a["bed_thickness_mean"], a["bed_thickness_median"]) == (1.5, 1.5)
    assert (a["bed_thickness_min"], a["bed_thickness_max"]) == (1.0, 2.0)
    assert a["bed_thickness_std"] == pytest.approx(2**0.5 / 2)  # sample sd of 1 and 2
    assert b["proportion_thickness"] == pytest.approx(0.5 / 3.5)
    assert result.usable


def test_check_json_has_the_documented_keys(tmp_path, capsys):
    assert main(["check", str(_source(tmp_path)), "--units", "m", "--format", "json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert set(data) == {"summary", "suggested_order", "cores", "facies", "problems"}
    assert set(data["summary"]) == {
        "usable", "units", "sources", "cores", "intervals", "beds", "cored_thickness",
        "gaps", "facies", "errors", "warnings", "repairs",
    }  # fmt: skip
    assert set(data["cores"][0]) == {
        "core", "intervals", "beds", "top", "base", "cored_thickness", "gaps",
        "gap_thickness", "units", "sample_step",
    }  # fmt: skip
    assert data["cores"][0]["sample_step"] is None  # interval layout: no sample spacing
    assert set(data["facies"][0]) >= {"facies", "beds", "thickness", "proportion_thickness"}
    (gap,) = data["problems"]
    assert gap == {
        "severity": "warning",
        "kind": "gap",
        "message": gap["message"],
        "file": str(tmp_path / "c.csv"),
        "row": 4,
        "core": "W1",
        "depth": 2.5,
        "units": "m",
    }


def test_check_text_output_reads_as_a_summary(tmp_path, capsys):
    assert main(["check", str(_source(tmp_path)), "--units", "m"]) == 0
    out = capsys.readouterr().out
    assert "1 core(s), 4 interval(s), 3 bed(s), 3.50 m cored, 1 gap(s)" in out
    assert "problems: 0 error(s), 1 warning(s), 0 repair(s)" in out
    assert (
        f"warning: {tmp_path / 'c.csv'}, data row 4, core W1, depth 2.50 m: gap from 2.5 to 3"
        in out
    )
    assert out.rstrip().endswith("usable: yes")


def test_excel_sheet_option(tmp_path):
    cores = CoreSet.from_frame(
        pd.DataFrame({"core": ["X"] * 2, "top": [0, 1], "base": [1, 2], "facies": ["A", "B"]})
    )
    path = tmp_path / "book.xlsx"
    logs = pd.DataFrame({"Well": ["Y", "Y"], "Depth": [5.0, 5.5], "Code": ["C", "D"]})
    write_cores(cores, path, tables={"logs": logs})
    assert read_cores(path).names == ["X"]
    back = read_cores(path, sheet="logs", columns={"facies": "Code"}, units="m")
    assert back.names == ["Y"] and back.meta["sample_step"] == {"Y": 0.5}
    with pytest.raises(ConfigError, match="no sheet 'nope'"):
        read_cores(path, sheet="nope")


def test_a_workbook_of_several_sheets_read_without_sheet_names_the_sheet_read(tmp_path):
    """Without --sheet the first sheet is read; where there are others, messages name
    it (a notes sheet in front of the cores gave "missing required column(s)" with no
    word of which sheet was read)."""
    path = tmp_path / "book.xlsx"
    with pd.ExcelWriter(path) as book:
        pd.DataFrame({"note": ["described 2026"]}).to_excel(book, sheet_name="Notes", index=False)
        pd.DataFrame({"core": ["X"], "top": [0], "base": [1], "facies": ["A"]}).to_excel(
            book, sheet_name="Cores", index=False
        )
    with pytest.raises(InputError, match=r"book\.xlsx \[Notes\]: missing required column"):
        read_cores(path)
    assert read_cores(path, sheet="Cores").names == ["X"]


def test_a_workbook_whose_first_sheet_lacks_the_columns_names_the_sheet_that_has_them(
    tmp_path, capsys
):
    """'map them with --column' cannot help where the columns are on another sheet: the
    message names the sheet whose header has them and --sheet; without such a sheet, it
    lists the other sheets."""
    path = tmp_path / "book.xlsx"
    with pd.ExcelWriter(path) as book:
        pd.DataFrame({"note": ["described 2026"]}).to_excel(book, sheet_name="About", index=False)
        pd.DataFrame({"a": [1]}).to_excel(book, sheet_name="Plots", index=False)
        pd.DataFrame({"Well": ["X"], "From": [0], "To": [1], "Facies": ["A"]}).to_excel(
            book, sheet_name="Logs", index=False
        )
    assert main(["check", str(path)]) == 1
    err = capsys.readouterr().err.strip()
    assert "sheet 'Logs' has them: read it with --sheet \"Logs\"; or map them" in err
    assert len(err.splitlines()) == 1 and "Plots" not in err
    assert main(["check", str(path), "--sheet", "Logs"]) == 0
    capsys.readouterr()
    with pd.ExcelWriter(path) as book:
        pd.DataFrame({"note": ["described 2026"]}).to_excel(book, sheet_name="About", index=False)
        pd.DataFrame({"a": [1]}).to_excel(book, sheet_name="Plots", index=False)
    with pytest.raises(InputError, match="the workbook's other sheets are 'Plots'"):
        read_cores(path)


def test_scheme_draft_writes_codes_with_ranks_to_fill_and_refuses_to_overwrite(tmp_path, capsys):
    source = _source(tmp_path)
    out = tmp_path / "draft.yaml"
    assert main(["scheme", "draft", str(source), "-o", str(out), "--units", "m"]) == 0
    data = yaml.safe_load(out.read_text())
    assert [f["code"] for f in data["facies"]] == ["A", "B"]
    assert all(f["rank"] is None for f in data["facies"])
    assert "TODO" in out.read_text()
    capsys.readouterr()
    before = out.read_text()
    assert main(["scheme", "draft", str(source), "-o", str(out)]) == 2
    assert "exists; pass --force to replace it" in capsys.readouterr().err
    assert out.read_text() == before
    assert main(["scheme", "draft", str(source), "-o", str(out), "--force"]) == 0
    # the draft does not load as a scheme until the ranks are filled in
    assert main(["scheme", "show", str(out)]) == 2
    assert "missing 'rank'" in capsys.readouterr().err


def test_scheme_show_lists_facies_landward_to_basinward(capsys):
    assert main(["scheme", "show", "tests/data/council_grove/scheme.yaml"]) == 0
    lines = capsys.readouterr().out.splitlines()
    facies = [ln.split()[2] for ln in lines[1:]]
    assert facies == ["1", "2", "3", "7", "8", "6", "5", "9", "4"]
    assert main(["scheme", "show", "configs/tracts-default.yaml"]) == 0
    assert "HST -> FSST -> LST -> TST -> HST" in capsys.readouterr().out


def test_check_json_stays_valid_json_when_a_row_has_no_core_name(tmp_path, capsys):
    """A row without a core name is reported with ``"core": null`` (it was NaN, which
    is not JSON, and the command ended in a traceback)."""
    f = tmp_path / "samples.csv"
    f.write_text("well,depth,facies\n,0.5,1\nA,1.0,3\nA,1.5,4\nB,2,4\nB,3,9\n")
    scheme = Path(__file__).resolve().parents[1] / "configs" / "scheme-shoreface.yaml"
    assert main(["check", str(f), "--scheme", str(scheme), "--format", "json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    missing = [p for p in doc["problems"] if p["kind"] == "missing-core"]
    assert missing and all(p["core"] is None and p["row"] for p in missing)


def test_check_of_a_file_whose_every_core_is_left_out_lists_the_error_it_exits_on(tmp_path, capsys):
    """A file whose only core is left out with warnings (samples without a facies code)
    is unusable: check lists the error that says so, as the other commands end on it,
    naming the core left out (was: "0 error(s)" above "usable: no", and elsewhere "no
    data rows?" of a file with rows)."""
    f = tmp_path / "samples.csv"
    f.write_text("well,depth,facies\nA,1.0,\nA,1.5,\nA,2.0,\n")
    assert main(["check", str(f)]) == 1
    out = capsys.readouterr().out
    assert "problems: 1 error(s)" in out
    (line,) = [x for x in out.splitlines() if x.startswith("error:")]
    assert "no usable cores" in line and "core read (A) was left out" in line
    assert "no data rows" not in line


def test_gap_warnings_of_many_cores_name_each_gap_as_written(tmp_path):
    """Every gap of a table checked at once is named with its depths (``%g``) and width
    (four significant digits), row and core."""
    from faciesseq.io import read_cores

    (tmp_path / "g.csv").write_text(
        "core,top,base,facies\n"
        "A,0,1.5,SH\nA,1.8123456,2,SH\nA,2,3,SS\n"
        "B,10,10.25,SH\nB,12.0000001,13,SS\nB,1e6,1000001.5,SS\n"
    )
    cores = read_cores(tmp_path / "g.csv", units="m")
    gaps = [p for p in cores.problems if p.kind == "gap"]
    assert [(p.row, p.core, p.depth) for p in gaps] == [
        (2, "A", 1.5),
        (5, "B", 10.25),
        (6, "B", 13.0),
    ]
    assert [p.message.split(" above")[0] for p in gaps] == [
        "gap from 1.5 to 1.81235 (0.3123 m)",
        "gap from 10.25 to 12 (1.75 m)",
        "gap from 13 to 1e+06 (1e+06 m)",
    ]


def test_check_sums_up_good_labels_in_one_line_and_in_json(tmp_path, capsys):
    # check --labels on a good file said nothing of the labels
    table = pd.DataFrame(
        {
            "core": ["W1"] * 4 + ["W2"] * 3 + ["W3"] * 2,
            "top": [0, 1, 2, 3, 10, 11, 12, 20, 21],
            "base": [1, 2, 3, 4, 11, 12, 13, 21, 22],
            "facies": list("ABABABABA"),
            "tract": ["HST", "HST", "FSST", "LST", "TST", " TST ", "", "", ""],
        }
    )
    table.to_csv(tmp_path / "good.csv", index=False)
    argv = ["check", str(tmp_path / "good.csv"), "--units", "m", "--labels", "tract"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    line = (
        "labels: 6 intervals on 2 of 3 cores labelled (column 'tract'); tracts HST 2, "
        "FSST 1, LST 1, TST 2"
    )
    assert line in out.splitlines() and out.index(line) < out.index("problems:")
    assert main([*argv, "--format", "json"]) == 0
    assert json.loads(capsys.readouterr().out)["labels"] == {
        "column": "tract",
        "intervals": 6,
        "cores_labelled": 2,
        "cores": 3,
        "tracts": {"HST": 2, "FSST": 1, "LST": 1, "TST": 2},
        "not_tracts": 0,
    }
    table.drop(columns="tract").to_csv(tmp_path / "plain.csv", index=False)
    assert main(["check", str(tmp_path / "plain.csv"), "--units", "m"]) == 0
    assert "labels:" not in capsys.readouterr().out  # no label column, no line


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])  # a plain CSV file is streamed
def test_check_lists_the_tract_labels_fit_cannot_read(tmp_path, capsys, suffix):
    # check said "usable: yes" (exit 0) and `fit --labels tract` then refused the labels
    table = pd.DataFrame(
        {
            "core": ["W1"] * 4 + ["W2"] * 3,
            "top": [0, 1, 2, 3, 10, 11, 12],
            "base": [1, 2, 3, 4, 11, 12, 13],
            "facies": list("ABABABA"),
            "tract": ["TST", "Highstand", "hst", "HIGHSTAND", "LST", "MFS", ""],
        }
    )
    path = tmp_path / f"labels{suffix}"
    table.to_csv(path, index=False) if suffix == ".csv" else table.to_excel(path, index=False)
    assert main(["check", str(path), "--units", "m"]) == 1
    out = capsys.readouterr().out
    errors = [x for x in out.splitlines() if x.startswith("error:")]
    tracts = "(HST, FSST, LST, TST)"
    assert errors == [
        f"error: {path}, data row 2, core W1, depth 1.00 m: tract label 'HIGHSTAND' (2 rows) in "
        f"column 'tract' is not a tract of the tract model {tracts}; leave the cell empty "
        "where a bed is not interpreted",
        f"error: {path}, data row 6, core W2, depth 11.00 m: tract label 'MFS' in column 'tract' "
        f"is not a tract of the tract model {tracts}; leave the cell empty where a bed is "
        "not interpreted",
    ]
    assert "usable: no (fix the tract labels above" in out
    # the labels found, counted by hand: 6 of 7 rows labelled (W2's last blank); the
    # reader upper-cases them, so hst is HST; HIGHSTAND twice and MFS: not tracts
    assert (
        "labels: 6 intervals on 2 of 2 cores labelled (column 'tract'); tracts HST 1, "
        "FSST 0, LST 1, TST 1; 3 labelled with no tract of the model (errors below)"
    ) in out.splitlines()
    # fit refuses the first of them, in the same words
    assert (
        main(
            ["fit", str(path), "--units", "m", "--labels", "tract", "-o", str(tmp_path / "m.json")]
        )
        == 1
    )
    err = capsys.readouterr().err
    assert errors[0].removeprefix("error: ") + " (1 more; faciesseq check lists them)" in err
    # a column named with --labels, blank on every row: the error fit gives
    table.assign(other="").to_csv(tmp_path / "blank.csv", index=False)
    argv = ["check", str(tmp_path / "blank.csv"), "--units", "m", "--labels", "other"]
    assert main(argv) == 1
    assert "error: " in capsys.readouterr().out
    assert main([*argv[:-1], "nothere"]) == 2
    assert "no column 'nothere' for --labels" in capsys.readouterr().err


def test_a_samples_log_from_depth_zero_starts_at_zero_not_half_a_step_above():
    """A first sample at 0 m with 0.1 m spacing covered -0.05 to 0.05: the core's top is
    clipped at 0; a log starting lower, or at a negative depth, keeps half a step."""
    frame = pd.DataFrame(
        {
            "core": ["A"] * 4 + ["B"] * 3 + ["C"] * 3,
            "depth": [0.0, 0.1, 0.2, 0.3, 5.0, 5.1, 5.2, -1.0, -0.9, -0.8],
            "facies": ["X", "X", "Y", "Y", "X", "Y", "Y", "X", "X", "Y"],
        }
    )
    cores = CoreSet.from_frame(frame, "m", layout="samples")
    tops = cores.extents()["top"]
    assert tops["A"] == 0.0
    assert tops["B"] == pytest.approx(4.95)
    assert tops["C"] == pytest.approx(-1.05)


def test_tract_labels_of_a_samples_log_are_counted_in_runs_not_rows(tmp_path, capsys):
    # check said "(2 rows)" of a label on 5 rows of a facies log: the rows of a samples
    # source become runs of equal samples, and it counted the runs
    table = pd.DataFrame(
        {
            "core": ["W1"] * 7,
            "depth": [0.25, 0.75, 1.25, 1.75, 2.25, 2.75, 3.25],
            "facies": list("AAABBBA"),
            "tract": ["HST", "HST", "Highstand", "Highstand", "Highstand", "Highstand", "X"],
        }
    )
    path = tmp_path / "log.csv"
    table.to_csv(path, index=False)
    assert main(["check", str(path), "--units", "m", "--layout", "samples"]) == 1
    errors = [x for x in capsys.readouterr().out.splitlines() if x.startswith("error:")]
    assert len(errors) == 2
    assert "data row 3, core W1" in errors[0]
    assert "tract label 'HIGHSTAND' (2 runs of samples) in column 'tract'" in errors[0]
    assert "tract label 'X' in column 'tract'" in errors[1]
