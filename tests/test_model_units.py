"""A model fitted on depths in one unit decodes cores described in the other.

The emissions read the log of bed thickness (and the stacking window the
thicknesses around a bed), so a model fitted in metres read feet as beds 3.28
times thicker: every bed of a core decoded as highstand, without a word. The model
file keeps the units of its training cores, and decoding converts the beds'
thickness to them (1 ft = 0.3048 m exactly: the international foot, common
practice), every output staying in the source's units.
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.cli import main
from faciesseq.core import FT_TO_M

ROOT = Path(__file__).resolve().parents[1]
SCHEME = str(ROOT / "configs" / "scheme-shoreface.yaml")
DEMO = ROOT / "demo_cores" / "cores.csv"


def _tables(tmp_path: Path) -> tuple[Path, Path, Path]:
    t = pd.read_csv(DEMO)
    t = t[t["core"].isin(sorted(t["core"].unique())[:8])]
    keep = sorted(t["core"].unique())[:3]
    t = t.assign(tract=t["true_tract"].where(t["core"].isin(keep)))
    train, metres, feet = tmp_path / "train.csv", tmp_path / "m.csv", tmp_path / "ft.csv"
    t[["core", "top", "base", "facies", "tract"]].to_csv(train, index=False)
    test = t[~t["core"].isin(keep)][["core", "top", "base", "facies"]]
    test.to_csv(metres, index=False)
    test.assign(top=test["top"] / FT_TO_M, base=test["base"] / FT_TO_M).to_csv(feet, index=False)
    return train, metres, feet


def _decoded(folder: Path) -> pd.DataFrame:
    return pd.read_csv(folder / "tracts.csv", comment="#")


def test_a_model_fitted_in_metres_decodes_cores_in_feet_alike(tmp_path, capsys):
    train, metres, feet = _tables(tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", str(train), "--units", "m", "--scheme", SCHEME, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    assert json.loads(model.read_text())["training"]["units"] == "m"
    capsys.readouterr()
    assert main(["decode", str(model), str(metres), "--units", "m", "-o", str(tmp_path / "m")]) == 0
    assert "converted" not in capsys.readouterr().err
    assert main(["decode", str(model), str(feet), "--units", "ft", "-o", str(tmp_path / "f")]) == 0
    said = capsys.readouterr().err
    assert "the model was fitted on depths in m" in said and "give --units" not in said
    in_m, in_ft = _decoded(tmp_path / "m"), _decoded(tmp_path / "f")
    assert in_m["tract"].tolist() == in_ft["tract"].tolist()
    assert len(set(in_m["tract"])) > 1  # not the one tract of a misread
    assert np.allclose(in_ft["top"] * FT_TO_M, in_m["top"], atol=1e-6)  # outputs in feet
    probs = [c for c in in_m.columns if c.startswith("p_")]
    assert np.allclose(in_m[probs], in_ft[probs], atol=1e-6)


def test_a_model_file_with_units_that_are_neither_is_refused(tmp_path, capsys):
    train, metres, _ = _tables(tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", str(train), "--units", "m", "--scheme", SCHEME, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    doc = json.loads(model.read_text())
    doc["training"]["units"] = "furlong"
    model.write_text(json.dumps(doc))
    capsys.readouterr()
    assert main(["decode", str(model), str(metres), "-o", str(tmp_path / "out")]) == 1
    assert "training.units: 'furlong': m or ft" in capsys.readouterr().err


def test_a_source_stating_no_units_is_read_in_the_units_the_model_was_fitted_on(tmp_path, capsys):
    # a source in feet that states no units, decoded with a model fitted in feet, was
    # read as metres (every output in metres, the thicknesses 3.28 times too thick for
    # the model): a geologist decoding with a model means the units of its cores
    train, _, feet = _tables(tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", str(train), "--units", "ft", "--scheme", SCHEME, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    capsys.readouterr()
    assert main(["decode", str(model), str(feet), "-o", str(tmp_path / "f")]) == 0
    said = capsys.readouterr().err
    line = "units: ft (the model's, as the source states none: give --units m if not)"
    assert said.count(line) == 1 and "converted" not in said
    assert main(["decode", str(model), str(feet), "--units", "ft", "-o", str(tmp_path / "g")]) == 0
    assert "units: ft (--units)" in capsys.readouterr().err
    unstated, given = _decoded(tmp_path / "f"), _decoded(tmp_path / "g")
    pd.testing.assert_frame_equal(unstated, given)
    doc = (tmp_path / "f" / "tracts.csv").read_text()
    assert doc == (tmp_path / "g" / "tracts.csv").read_text()  # in feet, as the source


def test_units_the_source_or_the_option_states_win_over_the_models(tmp_path, capsys):
    train, metres, _ = _tables(tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", str(train), "--units", "ft", "--scheme", SCHEME, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    stated = tmp_path / "stated.csv"
    pd.read_csv(metres).assign(units="m").to_csv(stated, index=False)
    capsys.readouterr()
    for source, options in ((stated, []), (metres, ["--units", "m"])):
        out = tmp_path / f"out-{len(options)}"
        assert main(["decode", str(model), str(source), *options, "-o", str(out)]) == 0
        said = capsys.readouterr().err
        assert "the model was fitted on depths in ft" in said and "stays in m" in said
        assert np.allclose(_decoded(out)["top"], pd.read_csv(metres)["top"])


def test_read_cores_takes_the_units_of_depths_nothing_states(tmp_path):
    from faciesseq.io import read_cores, stream_cores

    _, metres, _ = _tables(tmp_path)
    for cores in (
        read_cores(metres, unstated_units="ft"),
        next(iter(stream_cores(metres, unstated_units="ft"))),
    ):
        assert cores.units == "ft"
        [warning] = [p for p in cores.problems if p.kind == "units"]
        assert "taken as feet (give --units m if not)" in warning.message
    assert read_cores(metres, units="m", unstated_units="ft").units == "m"
    assert read_cores(metres).units == "m"  # metres, as before, when nothing is said


def _sheet_in_feet(tmp_path: Path) -> tuple[Path, Path, str, pd.DataFrame]:
    """A model fitted in feet, the feet table it decoded with ``--review-sheet`` (a
    source stating no units), the sheet's record line and its rows."""
    train, _, feet = _tables(tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", str(train), "--units", "ft", "--scheme", SCHEME, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    out = tmp_path / "decoded"
    assert main(["decode", str(model), str(feet), "--review-sheet", "-o", str(out)]) == 0
    record, *lines = (out / "sheet.csv").read_text(encoding="utf-8").splitlines(keepends=True)
    sheet = pd.read_csv(io.StringIO("".join(lines)), dtype=str, keep_default_na=False)
    return model, feet, record, sheet


def _first_core_reviewed(tmp_path: Path, record: str, sheet: pd.DataFrame) -> Path:
    """The sheet with its first core's decoded tracts taken as the geologist's, written
    under its record line."""
    first = sheet["core"] == sheet["core"].iloc[0]
    sheet.loc[first, "geologist_tract"] = sheet.loc[first, "decoded_tract"]
    filled = tmp_path / "filled.csv"
    filled.write_text(record + sheet.to_csv(index=False), encoding="utf-8")
    return filled


def test_relabel_reads_a_source_stating_no_units_as_its_sheets_decode_did(tmp_path, capsys):
    # the sheet of a decode in the model's feet, relabelled on the same source: the
    # source was read as metres there, and the labelled table written stated m for feet
    _model, feet, record, sheet = _sheet_in_feet(tmp_path)
    filled = _first_core_reviewed(tmp_path, record, sheet)
    labelled = tmp_path / "labelled.csv"
    capsys.readouterr()
    assert main(["relabel", str(filled), str(feet), "-o", str(labelled)]) == 0
    said = capsys.readouterr()
    assert "units: ft (the sheet's, as the source states none" in said.err
    assert " ft (100.0 % of " in said.out  # the agreement line's thickness
    table = pd.read_csv(labelled)
    assert set(table["units"]) == {"ft"}
    assert np.allclose(table["top"], pd.read_csv(feet)["top"])


def test_a_streamed_decode_failing_late_in_other_units_than_the_models_says_one_line(
    tmp_path, capsys, monkeypatch
):
    # the line saying the model's units was written before decoding: a source whose
    # last core is broken then failed in two lines, the note and the error
    import faciesseq.io.stream as stream_module

    train, _, feet = _tables(tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", str(train), "--units", "m", "--scheme", SCHEME, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    table = pd.read_csv(feet)
    last = table.index[-1]
    table["base"] = table["base"].astype(object)
    table.loc[last, "base"] = "ten"  # a depth no number, in the last core
    broken = tmp_path / "broken.csv"
    table.to_csv(broken, index=False)
    monkeypatch.setattr(stream_module, "BATCH_ROWS", 30)
    capsys.readouterr()
    out = tmp_path / "out"
    assert main(["decode", str(model), str(broken), "--units", "ft", "-o", str(out)]) == 1
    said = capsys.readouterr().err
    assert len(said.splitlines()) == 1 and "ten" in said, said
    assert "fitted on depths" not in said and not out.exists()


def test_correlate_says_the_model_was_fitted_in_other_units_once(tmp_path, capsys):
    # decode said so and correlate did not: the section drawn from feet decoded with a
    # model in metres came without a word of the conversion
    train, _, feet = _tables(tmp_path)
    model = tmp_path / "model.json"
    fit = ["fit", str(train), "--units", "m", "--scheme", SCHEME, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    names = sorted(pd.read_csv(feet)["core"].unique())
    wells = tmp_path / "wells.csv"
    table = pd.read_csv(DEMO.parent / "wells.csv")
    table[table["core"].isin(names)].to_csv(wells, index=False)
    capsys.readouterr()
    out = tmp_path / "section"
    argv = ["correlate", str(feet), "--wells", str(wells), "--model", str(model)]
    assert main([*argv, "--units", "ft", "--datum", "depth", "-o", str(out)]) == 0
    said = capsys.readouterr().err
    assert said.count("the model was fitted on depths in m") == 1, said
    assert "every output stays in ft" in said and "units: ft (--units; the model" in said


def test_the_review_sheet_records_its_units_and_relabel_reads_them_without_the_model(
    tmp_path, capsys
):
    # relabel took the units of a source stating none from the model file the sheet's
    # record names: with that file moved, a sheet decoded in feet read the source as
    # metres, and the labelled table stated m for feet depths
    model, feet, record, sheet = _sheet_in_feet(tmp_path)
    assert "; units: ft;" in record
    model.rename(tmp_path / "moved.json")
    filled = _first_core_reviewed(tmp_path, record, sheet)
    labelled = tmp_path / "labelled.csv"
    capsys.readouterr()
    assert main(["relabel", str(filled), str(feet), "-o", str(labelled)]) == 0
    assert "units: ft (the sheet's, as the source states none" in capsys.readouterr().err
    table = pd.read_csv(labelled)
    assert set(table["units"]) == {"ft"}
    # a sheet of an older decode (no units in its record) is read as before
    older = tmp_path / "older.csv"
    older.write_text(record.replace("; units: ft", "") + sheet.to_csv(index=False), "utf-8")
    assert main(["relabel", str(older), str(feet), "-o", str(tmp_path / "o.csv")]) == 0
    assert set(pd.read_csv(tmp_path / "o.csv")["units"]) == {"m"}  # no model file: metres
    damaged = tmp_path / "damaged.csv"
    bad_record = record.replace("units: ft", "units: yd")
    damaged.write_text(bad_record + sheet.to_csv(index=False), "utf-8")
    capsys.readouterr()
    assert main(["relabel", str(damaged), str(feet), "-o", str(tmp_path / "d.csv")]) == 1
    said = capsys.readouterr().err
    assert len(said.splitlines()) == 1 and "its units 'yd' are neither m nor ft" in said


def test_relabel_refuses_a_source_read_in_other_units_than_its_sheets(tmp_path, capsys):
    # a sheet decoded in feet relabelled with --units m: its beds matched the source's
    # depths as numbers, and the labelled table stated m for feet depths
    _model, feet, record, sheet = _sheet_in_feet(tmp_path)
    sheet.loc[0, "geologist_tract"] = "HST"
    filled = tmp_path / "filled.csv"
    filled.write_text(record + sheet.to_csv(index=False), encoding="utf-8")
    labelled = tmp_path / "labelled.csv"
    capsys.readouterr()
    argv = ["relabel", str(filled), str(feet), "--units", "m", "-o", str(labelled)]
    assert main(argv) == 2
    said = capsys.readouterr().err
    assert len(said.splitlines()) == 1 and "the sheet's depths are in ft" in said
    assert "give --units ft" in said and not labelled.exists()
