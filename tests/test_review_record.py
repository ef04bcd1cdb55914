"""``relabel`` takes its label column and tract codes from the sheet's record line when
not given (a three-interval core and hand-made sheets, invented)."""

import importlib.resources

import pandas as pd
import pytest

from faciesseq.cli import main
from faciesseq.review import record_line, sheet_record

SOURCE = "core,top,base,facies,interpreted\nW,0,1,A,\nW,1,2,B,TST\nW,2,3,A,HST\n"
DEFAULT_TRACTS = ("HST", "FSST", "LST", "TST")


def _write(tmp_path, geologist: str, *, labels="interpreted", tracts=DEFAULT_TRACTS, edit=None):
    """The source and a sheet of it whose first bed the geologist gave ``geologist``,
    with the record decode would write (``edit`` changes the record first; None for
    a sheet without a record line)."""
    (tmp_path / "cores.csv").write_text(SOURCE)
    table = pd.DataFrame(
        {
            "core": ["W", "W", "W"],
            "top": [0.0, 1.0, 2.0],
            "base": [1.0, 2.0, 3.0],
            "decoded_tract": ["LST", "TST", "HST"],
            "note": ["", "", ""],
        }
    )
    record = sheet_record(table, labels=labels, tracts=tracts)
    if edit is not None:
        record = edit(record)
    table["geologist_tract"] = [geologist, "", ""]
    line = "" if record is None else record_line(record) + "\n"
    (tmp_path / "sheet.csv").write_text(line + table.to_csv(index=False))


def _relabel(capsys, tmp_path, *extra):
    out = tmp_path / "labelled.csv"
    argv = ["relabel", tmp_path / "sheet.csv", tmp_path / "cores.csv", "-o", out, *extra]
    code = main([str(a) for a in argv])
    stdout, err = capsys.readouterr()
    return code, stdout, err


def _default_tracts_file():
    return importlib.resources.files("faciesseq").joinpath("data/tracts.yaml")


def test_the_label_column_is_the_one_the_record_names(tmp_path, capsys):
    _write(tmp_path, "FSST", labels="interpreted")
    code, stdout, err = _relabel(capsys, tmp_path)
    assert code == 0, err
    got = pd.read_csv(tmp_path / "labelled.csv")
    assert "tract" not in got.columns
    assert got["interpreted"].tolist() == ["FSST", "TST", "HST"]
    assert got["label_source"].tolist() == ["sheet.csv", "source", "source"]
    assert "--labels interpreted -o model.json" in stdout


def test_an_explicit_labels_option_wins_over_the_record(tmp_path, capsys):
    _write(tmp_path, "FSST", labels="interpreted")
    code, _, err = _relabel(capsys, tmp_path, "--labels", "tract")
    assert code == 0, err
    got = pd.read_csv(tmp_path / "labelled.csv", dtype=object)
    assert got["tract"].iat[0] == "FSST" and got["tract"].iloc[1:].isna().all()
    assert got["interpreted"].iloc[1:].tolist() == ["TST", "HST"]  # the record's column kept
    assert got["interpreted"].isna().iat[0]


def test_the_tract_codes_are_the_ones_the_record_names(tmp_path, capsys):
    # a model of two tracts: their codes are accepted, the four tracts' are not
    _write(tmp_path, "rise", tracts=("FALL", "RISE"))
    code, _, err = _relabel(capsys, tmp_path)
    assert code == 0, err
    assert pd.read_csv(tmp_path / "labelled.csv")["interpreted"].iat[0] == "RISE"
    # the next fit needs the model's tract-model file, which the record cannot name
    assert "the sheet's model has the tracts FALL, RISE (its record)" in err
    assert "--tracts FILE" in err
    _write(tmp_path, "HST", tracts=("FALL", "RISE"))
    code, _, err = _relabel(capsys, tmp_path, "--force")
    assert code == 1 and err.count("\n") == 1
    assert "sheet.csv, data row 1, core W" in err
    assert "geologist_tract 'HST' is not a tract of the tract model (FALL, RISE)" in err


def test_an_explicit_tracts_option_wins_over_the_record(tmp_path, capsys):
    _write(tmp_path, "HST", tracts=("FALL", "RISE"))
    with importlib.resources.as_file(_default_tracts_file()) as tracts:
        code, _, err = _relabel(capsys, tmp_path, "--tracts", tracts)
    assert code == 0, err
    assert pd.read_csv(tmp_path / "labelled.csv")["interpreted"].iat[0] == "HST"
    assert "the sheet's model has the tracts" not in err


def test_a_record_of_an_older_decode_without_tracts_reads_the_four_tracts(tmp_path, capsys):
    def older(record):
        return {k: v for k, v in record.items() if k != "tracts"}

    _write(tmp_path, "fsst", edit=older)
    code, _, err = _relabel(capsys, tmp_path)
    assert code == 0, err
    assert pd.read_csv(tmp_path / "labelled.csv")["interpreted"].iat[0] == "FSST"


def test_a_sheet_without_a_record_keeps_the_old_defaults(tmp_path, capsys):
    _write(tmp_path, "LST", edit=lambda record: None)
    code, _, err = _relabel(capsys, tmp_path)
    assert code == 0, err
    got = pd.read_csv(tmp_path / "labelled.csv")
    assert got["tract"].iat[0] == "LST"  # the column is tract, the source's is kept
    assert "sheet.csv holds no record of its decode" in err


@pytest.mark.parametrize(
    ("edit", "problem"),
    [
        (lambda r: {k: v for k, v in r.items() if k != "labels"}, "it lacks labels"),
        (lambda r: r | {"beds": "three"}, "its bed count 'three' is not a number"),
        (lambda r: r | {"tracts": " , "}, "its tract list is empty"),
    ],
)
def test_a_damaged_record_without_the_options_is_one_line_naming_the_sheet(
    tmp_path, capsys, edit, problem
):
    _write(tmp_path, "FSST", edit=edit)
    code, stdout, err = _relabel(capsys, tmp_path)
    assert code == 1 and stdout == "" and err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith("faciesseq relabel: sheet.csv: the sheet's record line")
    assert f"is damaged: {problem}; restore it as decode wrote it" in err
    assert err.rstrip().endswith("give --labels and --tracts")
    assert not (tmp_path / "labelled.csv").exists()
    # one option given: the other is still needed
    code, _, err = _relabel(capsys, tmp_path, "--labels", "interpreted")
    assert code == 1 and err.rstrip().endswith("give --tracts")


def test_a_damaged_record_is_set_aside_when_both_options_are_given(tmp_path, capsys):
    _write(tmp_path, "FSST", edit=lambda r: r | {"beds": "three"})
    with importlib.resources.as_file(_default_tracts_file()) as tracts:
        argv = ["--labels", "interpreted", "--tracts", tracts]
        code, _, err = _relabel(capsys, tmp_path, *argv)
    assert code == 0, err
    assert pd.read_csv(tmp_path / "labelled.csv")["interpreted"].iat[0] == "FSST"
    (line,) = [x for x in err.splitlines() if "record" in x]
    assert "sheet.csv holds a damaged record (its bed count 'three' is not a number)" in line
