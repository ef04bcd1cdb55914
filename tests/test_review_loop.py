"""Review, edit, refit: the interpretation sheet of ``decode --review-sheet``, ``relabel``
and the label sources a refitted model records (synthetic cores of tests/hmm_synthetic.py,
invented)."""

import json
import re
import sys

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq.cli import build_parser, main

QUICK = ["--restarts", "1", "--max-iter", "5", "--calibration-folds", "0"]
TRACTS = ["HST", "FSST", "LST", "TST"]


@pytest.fixture(scope="module")
def work(tmp_path_factory):
    """Cores (the even cores interpreted), a quick model and its decode with the sheet."""
    folder = tmp_path_factory.mktemp("review")
    synth.write_database(folder, 4, 30, seed=3)
    argv = ["fit", str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml")]
    assert main([*argv, *QUICK, "-o", str(folder / "model.json")]) == 0
    out = folder / "decoded"
    model, cores = str(folder / "model.json"), str(folder / "cores.csv")
    code = main(["decode", model, cores, "--review-sheet", "-o", str(out)])
    assert code == 0
    return folder


def _sheet(work) -> pd.DataFrame:
    return pd.read_csv(
        work / "decoded" / "sheet.csv",
        dtype={"core": object, "geologist_tract": object, "note": object},
        skiprows=1,  # the sheet's record
    )


def _run(capsys, argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _relabel(capsys, work, sheet, out, *extra):
    argv = ["relabel", sheet, work / "cores.csv", "-o", out, *extra]
    return _run(capsys, argv)


# ----------------------------------------------------------------------- the sheet


def test_the_sheet_has_one_row_per_decoded_bed_with_the_decoded_tract_and_probability(work):
    sheet = _sheet(work)
    tracts = pd.read_csv(work / "decoded" / "tracts.csv", skiprows=1)
    assert list(sheet.columns) == [
        "core",
        "top",
        "base",
        "thickness",
        "facies",
        "decoded_tract",
        "probability",
        "interpreter_tract",
        "geologist_tract",
        "note",
    ]
    assert len(sheet) == len(tracts) == 120
    assert (sheet["decoded_tract"] == tracts["tract"]).all()
    p = tracts[[f"p_{t}" for t in TRACTS]].to_numpy()
    chosen = p[np.arange(len(tracts)), [TRACTS.index(t) for t in tracts["tract"]]]
    # to 4 decimals in the CSV (the tracts table keeps 6 digits)
    np.testing.assert_allclose(sheet["probability"], chosen, atol=5e-5 + 1e-9)
    assert (sheet["probability"] == sheet["probability"].round(4)).all()
    np.testing.assert_allclose(sheet["thickness"], sheet["base"] - sheet["top"], atol=2e-6)
    for _, part in sheet.groupby("core", sort=False):
        assert part["top"].is_monotonic_increasing
    assert sheet["geologist_tract"].isna().all() and sheet["note"].isna().all()


def test_the_interpreter_tract_is_the_source_label_where_there_was_one(work):
    sheet = _sheet(work)
    source = pd.read_csv(work / "cores.csv")
    # even cores interpreted (every bed), odd cores blank (hmm_synthetic.write_database)
    for k, (core, part) in enumerate(sheet.groupby("core", sort=False)):
        if k % 2 == 0:
            want = source.loc[source["core"] == core, "tract"].tolist()
            assert part["interpreter_tract"].tolist() == want
        else:
            assert part["interpreter_tract"].isna().all()


def test_the_xlsx_sheet_is_ready_to_fill(work):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.load_workbook(work / "decoded" / "sheet.xlsx")
    assert book.sheetnames == ["interpretation", "read me"]
    ws = book["interpretation"]
    header = [c.value for c in ws[1]]
    assert header == list(_sheet(work).columns)
    assert ws.freeze_panes == "A2"
    col = {name: openpyxl.utils.get_column_letter(i + 1) for i, name in enumerate(header)}
    assert ws.column_dimensions[col["note"]].width == 40
    assert ws.column_dimensions[col["core"]].width == 14
    # two decimals shown, the exact value kept
    cell = ws[f"{col['probability']}2"]
    assert cell.number_format == "0.00"
    assert cell.value == pytest.approx(_sheet(work)["probability"].iat[0], rel=1e-12)
    # the geologist's columns highlighted, and only them
    for name in header:
        rgb = ws[f"{col[name]}2"].fill.fgColor.rgb
        assert (rgb == "00FFF2CC") == (name in ("geologist_tract", "note")), name
    (dv,) = ws.data_validations.dataValidation
    assert dv.type == "list" and dv.formula1 == '"HST,FSST,LST,TST"'
    assert str(dv.sqref) == f"{col['geologist_tract']}2:{col['geologist_tract']}121"
    text = book["read me"]["A2"].value
    assert "geologist_tract" in text and "faciesseq relabel" in text and "HST, FSST" in text


def test_without_openpyxl_the_csv_is_written_and_one_line_names_the_extra(
    work, tmp_path, capsys, monkeypatch
):
    monkeypatch.setitem(sys.modules, "openpyxl", None)  # import fails as if not installed
    out = tmp_path / "d"
    argv = ["decode", work / "model.json", work / "cores.csv", "--review-sheet", "-o", out]
    code, stdout, err = _run(capsys, argv)
    # only the line of the units and scheme in force (docs/io.md, "A project file")
    assert code == 0 and err.startswith("faciesseq decode: units: ") and err.count("\n") == 1
    assert (out / "sheet.csv").is_file() and not (out / "sheet.xlsx").exists()
    (line,) = [s for s in stdout.splitlines() if "sheet" in s]
    assert 'pip install "faciesseq[excel]"' in line and "sheet.csv" in line


def test_the_record_names_the_label_column_and_the_models_tracts(work):
    # relabel's defaults for --labels and --tracts (tests/test_review_record.py)
    record = (work / "decoded" / "sheet.csv").read_text().split("\n", 1)[0]
    assert "; labels: tract; units: m; tracts: HST,FSST,LST,TST; beds: 120; " in record


def test_decode_without_the_option_writes_no_sheet(work, tmp_path):
    out = tmp_path / "d"
    assert main(["decode", str(work / "model.json"), str(work / "cores.csv"), "-o", str(out)]) == 0
    assert not list(out.glob("sheet.*"))


# ---------------------------------------------------------------------- relabel


def _filled(work, tmp_path) -> tuple[pd.DataFrame, object]:
    """The sheet with core 2 (uninterpreted) filled with the decoded tracts and two beds of
    core 1 corrected (one to another tract, one confirming the interpreter's, in lower case)."""
    sheet = _sheet(work)
    cores = sheet["core"].unique()
    second = sheet["core"] == cores[1]
    sheet.loc[second, "geologist_tract"] = sheet.loc[second, "decoded_tract"].astype(object)
    first = np.flatnonzero(sheet["core"] == cores[0])
    other = next(t for t in TRACTS if t != sheet["interpreter_tract"].iat[first[3]])
    sheet.loc[first[3], ["geologist_tract", "note"]] = [other, "flooding surface above"]
    sheet.loc[first[5], "geologist_tract"] = sheet["interpreter_tract"].iat[first[5]].lower()
    path = tmp_path / "filled.csv"
    _save(sheet, path, work)
    return sheet, path


def test_relabel_puts_the_geologists_tracts_on_the_source(work, tmp_path, capsys):
    sheet, path = _filled(work, tmp_path)
    out = tmp_path / "labelled.csv"
    code, stdout, err = _relabel(capsys, work, path, out)
    assert code == 0 and err.startswith("faciesseq relabel: units: ") and err.count("\n") == 1
    source = pd.read_csv(work / "cores.csv")
    got = pd.read_csv(out, dtype={"tract": object, "label_source": object})
    assert len(got) == len(source)
    cores = sheet["core"].unique()
    filled = sheet["geologist_tract"].notna()
    want = source["tract"].astype(object).copy()
    want[filled.to_numpy()] = sheet.loc[filled, "geologist_tract"].str.upper().to_numpy()
    assert got["tract"].fillna("-").tolist() == want.fillna("-").tolist()
    origin = np.where(filled, "filled.csv", np.where(source["tract"].notna(), "source", "-"))
    assert got["label_source"].fillna("-").tolist() == origin.tolist()
    # the report: filled beds per core, relabelled (new or another tract), cores labelled
    assert "32 bed(s) given a tract by the geologist in 2 core(s); 31 relabelled" in stdout
    assert f"  {cores[0]}: 1 relabelled of 2" in stdout
    assert f"  {cores[1]}: 30 relabelled of 30" in stdout
    assert f"cores labelled: 3 of 4 (1 new: {cores[1]})" in stdout
    # thickness-weighted agreement of the decoded column with the geologist's
    f = sheet[filled]
    same = f["decoded_tract"].to_numpy() == f["geologist_tract"].str.upper().to_numpy()
    w = (f["base"] - f["top"]).to_numpy()
    share = 100 * (w * same).sum() / w.sum()
    assert f"before refitting: {share:.1f} % of {w.sum():.2f} m" in stdout


def test_a_refitted_model_records_which_labels_came_from_which_sheet(work, tmp_path, capsys):
    _, path = _filled(work, tmp_path)
    labelled = tmp_path / "labelled.csv"
    assert _relabel(capsys, work, path, labelled)[0] == 0
    model = tmp_path / "m.json"
    argv = ["fit", labelled, "--scheme", work / "scheme.yaml", "--labels", "tract", *QUICK]
    code, _, err = _run(capsys, [*argv, "-o", model])
    assert code == 0, err
    training = json.loads(model.read_text())["training"]
    # 32 intervals from the sheet; the source kept 60 interpreted less the 2 on the sheet
    assert training["label_sources"] == {"filled.csv": 32, "source": 58}
    assert training["n_labelled"] == 90
    # a second round keeps the first sheet's name on the labels it gave
    sheet2 = _sheet(work)
    sheet2.loc[len(sheet2) - 1, "geologist_tract"] = "HST"
    sheet2.to_csv(tmp_path / "round2.csv", index=False)
    argv = ["relabel", tmp_path / "round2.csv", labelled, "-o", tmp_path / "l2.csv"]
    assert _run(capsys, argv)[0] == 0
    counts = pd.read_csv(tmp_path / "l2.csv")["label_source"].value_counts().to_dict()
    assert counts == {"source": 58, "filled.csv": 32, "round2.csv": 1}


def test_a_model_fitted_without_a_sheet_has_no_label_sources(work):
    assert "label_sources" not in json.loads((work / "model.json").read_text())["training"]


def test_relabel_reads_the_xlsx_sheet(work, tmp_path, capsys):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.load_workbook(work / "decoded" / "sheet.xlsx")
    ws = book["interpretation"]
    header = [c.value for c in ws[1]]
    ws.cell(row=2, column=header.index("geologist_tract") + 1).value = "FSST"
    book.save(tmp_path / "filled.xlsx")
    out = tmp_path / "labelled.csv"
    code, stdout, err = _relabel(capsys, work, tmp_path / "filled.xlsx", out)
    assert code == 0, err
    got = pd.read_csv(out)
    assert got.loc[0, "tract"] == "FSST" and got.loc[0, "label_source"] == "filled.xlsx"
    assert "1 bed(s) given a tract by the geologist in 1 core(s)" in stdout


def test_an_amalgamated_bed_labels_every_interval_in_it(tmp_path, capsys):
    """Two intervals of one facies are one bed in the sheet; both take its tract."""
    (tmp_path / "cores.csv").write_text(
        "core,top,base,facies,tract\nW,0,1,A,\nW,1,2,A,TST\nW,2,3,B,HST\n"
    )
    (tmp_path / "sheet.csv").write_text(
        "core,top,base,decoded_tract,geologist_tract,note\nW,0,2,LST,LST,\nW,2,3,HST,,\n"
    )
    argv = ["relabel", tmp_path / "sheet.csv", tmp_path / "cores.csv", "-o", tmp_path / "o.csv"]
    code, stdout, err = _run(capsys, argv)
    assert code == 0, err
    got = pd.read_csv(tmp_path / "o.csv")
    assert got["tract"].tolist() == ["LST", "LST", "HST"]
    assert got["label_source"].tolist() == ["sheet.csv", "sheet.csv", "source"]
    assert "W: 1 relabelled of 1" in stdout and "2 source interval(s) changed" in stdout
    assert "0.0 % of 2.00 m" in stdout


# ------------------------------------------------------------------- bad input


def _bad(capsys, work, tmp_path, edit, *extra):
    sheet = _sheet(work)
    edit(sheet)
    path = tmp_path / "bad.csv"
    sheet.to_csv(path, index=False)
    out = tmp_path / "labelled.csv"
    code, _, err = _relabel(capsys, work, path, out, *extra)
    assert not out.exists() and not list(tmp_path.glob(".labelled*"))
    assert err.count("\n") == 1 and "Traceback" not in err
    return code, err


def test_a_tract_not_in_the_tract_model_names_sheet_row_core_and_depth(work, tmp_path, capsys):
    sheet = _sheet(work)

    def edit(s):
        s.loc[6, "geologist_tract"] = "RST"

    code, err = _bad(capsys, work, tmp_path, edit)
    assert code == 1
    where = f"bad.csv, data row 7, core {sheet['core'].iat[6]}, depth {sheet['top'].iat[6]:.2f} m"
    assert where in err and "'RST'" in err and "HST, FSST, LST, TST" in err


def test_a_bed_that_matches_no_interval_is_an_error(work, tmp_path, capsys):
    sheet = _sheet(work)

    def edit(s):
        s.loc[10, "base"] = s.loc[10, "base"] - 0.05  # inside a bed: no interval ends there

    code, err = _bad(capsys, work, tmp_path, edit)
    assert code == 1
    assert (
        f"bad.csv, data row 11, core {sheet['core'].iat[10]}" in err
        and "matches no interval" in err
    )


def test_a_core_not_in_the_source_is_an_error(work, tmp_path, capsys):
    def edit(s):
        s.loc[0, "core"] = "NOWHERE"

    code, err = _bad(capsys, work, tmp_path, edit)
    assert code == 1 and "bad.csv, data row 1, core NOWHERE, depth 0.00 m" in err


def test_a_depth_that_is_not_a_number_is_an_error(work, tmp_path, capsys):
    def edit(s):
        s["top"] = s["top"].astype(object)
        s.loc[2, "top"] = "deep"

    code, err = _bad(capsys, work, tmp_path, edit)
    assert code == 1 and "bad.csv, data row 3" in err and "'deep'" in err


def test_a_sheet_without_the_geologist_column_is_an_error(work, tmp_path, capsys):
    def edit(s):
        del s["geologist_tract"]

    code, err = _bad(capsys, work, tmp_path, edit)
    assert code == 1 and "bad.csv: the sheet lacks column(s) geologist_tract" in err


def test_a_missing_tract_model_file_is_file_not_found(work, tmp_path, capsys):
    code, err = _bad(capsys, work, tmp_path, lambda s: None, "--tracts", tmp_path / "no.yaml")
    assert code == 1 and "no.yaml: file not found" in err


def test_a_missing_sheet_and_an_existing_output(work, tmp_path, capsys):
    code, _, err = _relabel(capsys, work, tmp_path / "nope.csv", tmp_path / "o.csv")
    assert code == 1 and "nope.csv: file not found" in err
    (tmp_path / "o.csv").write_text("keep")
    code, _, err = _relabel(capsys, work, work / "decoded" / "sheet.csv", tmp_path / "o.csv")
    assert code == 2 and "--force" in err and (tmp_path / "o.csv").read_text() == "keep"
    _, filled = _filled(work, tmp_path)  # an untouched sheet is refused (nothing edited)
    assert _relabel(capsys, work, filled, tmp_path / "o.csv", "--force")[0] == 0


def test_relabel_has_the_house_help():
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    help_text = sub.choices["relabel"].format_help()
    assert "examples:" in help_text and "faciesseq relabel" in help_text
    assert "-o FILE, --output FILE" in help_text and "--force" in help_text
    # relabel's --labels defaults to the sheet's record, then to tract
    assert "record names, the --labels of its decode; tract for a sheet without a record)" in (
        " ".join(help_text.split())
    )


def test_with_a_json_summary_the_sheet_line_goes_to_stderr(work, tmp_path, capsys):
    out = tmp_path / "d"
    argv = ["decode", work / "model.json", work / "cores.csv", "--review-sheet", "-o", out]
    code, stdout, err = _run(capsys, [*argv, "--summary", "json"])
    assert code == 0 and json.loads(stdout)["n_wells"] == 4
    lines = [ln for ln in err.splitlines() if not ln.startswith("faciesseq decode: units: ")]
    assert len(lines) == 1 and "sheet.csv" in lines[0]


def test_the_next_fit_keeps_the_scheme_and_tract_model_of_the_relabel(work, tmp_path, capsys):
    # the suggested command dropped --scheme: refitted on ranks suggested from the data
    sheet = _sheet(work)
    sheet.loc[0, "geologist_tract"] = "TST"
    sheet.to_csv(tmp_path / "sheet.csv", index=False)
    scheme = work / "scheme.yaml"
    out = tmp_path / "labelled.csv"
    code, stdout, err = _relabel(capsys, work, tmp_path / "sheet.csv", out, "--scheme", scheme)
    assert code == 0, err
    (line,) = [x for x in stdout.splitlines() if "next:" in x]
    assert line.endswith(
        f"next: faciesseq fit {out} --scheme {scheme} --labels tract -o model.json"
    )


def test_the_suggest_ranks_help_reads_plainly():
    sub = next(a for a in build_parser()._actions if a.dest == "command")
    text = " ".join(sub.choices["fit"].format_help().split())
    assert "the default (without ranks" not in text  # the garbled sentence
    assert "This is the default without --scheme, because without ranks a fit" in text


def test_the_sheet_holds_no_float_noise(work):
    # thickness 1.4300000000000068 and probability 0.5913454459104164 were written
    text = (work / "decoded" / "sheet.csv").read_text().split("\n", 1)[1]  # below the record
    sheet = pd.read_csv(
        work / "decoded" / "sheet.csv", dtype=str, keep_default_na=False, skiprows=1
    )
    for column, decimals in (("top", 6), ("base", 6), ("thickness", 6), ("probability", 4)):
        places = sheet[column].str.partition(".")[2].str.len()
        assert places.max() <= decimals, (column, sheet[column][places.idxmax()])
    numbers = pd.read_csv(work / "decoded" / "sheet.csv", skiprows=1)
    tracts = pd.read_csv(work / "decoded" / "tracts.csv", skiprows=1)
    np.testing.assert_allclose(numbers["thickness"], numbers["base"] - numbers["top"], atol=2e-6)
    assert len(numbers) == len(tracts) and "e-" not in text


# ------------------------------------------------------- the refit after a relabel


def test_a_label_that_jumps_the_cyclic_order_is_named_by_core_and_depth(work, tmp_path, capsys):
    # the refit said "permissive: 1 of 20 labelled boundaries jump ..." and not where
    cores = pd.read_csv(work / "cores.csv", dtype={"core": object, "tract": object})
    first = cores.index[cores["core"] == cores["core"].iat[0]]
    i = next(i for i in first[5:-1] if cores.at[i + 1, "tract"] == "FSST")
    cores.at[i, "tract"] = "HST"  # FSST below, HST above: the strict order forbids it
    cores.to_csv(tmp_path / "odd.csv", index=False)
    argv = ["fit", tmp_path / "odd.csv", "--scheme", work / "scheme.yaml", "--labels", "tract"]
    code, stdout, err = _run(capsys, [*argv, *QUICK, "-o", tmp_path / "m.json"])
    assert code == 0, err
    (line,) = [x for x in stdout.splitlines() if x.startswith("tract graph:")]
    base = cores.at[i, "base"]
    assert f"at {cores.at[i, 'core']} {base:.2f} m: FSST -> HST" in line, line


def _save(sheet: pd.DataFrame, path, work) -> None:
    """``sheet`` written as a spreadsheet program saves it: the record line kept."""
    record = (work / "decoded" / "sheet.csv").read_text().split("\n", 1)[0]
    path.write_text(record + "\n" + sheet.to_csv(index=False))


def test_an_edit_of_the_decoded_column_is_refused_naming_the_column_to_edit(work, tmp_path, capsys):
    # overwriting decoded_tract gave "0 bed(s) given a tract", exit 0
    sheet = _sheet(work)
    sheet.loc[4, "decoded_tract"] = next(t for t in TRACTS if t != sheet["decoded_tract"].iat[4])
    sheet.loc[9, "geologist_tract"] = "HST"  # an edit in the right column too: still refused
    _save(sheet, tmp_path / "wrong.csv", work)
    out = tmp_path / "labelled.csv"
    code, _, err = _relabel(capsys, work, tmp_path / "wrong.csv", out)
    lines = [x for x in err.splitlines() if not x.startswith("faciesseq relabel: units:")]
    assert code == 1 and len(lines) == 1 and not out.exists()
    assert "wrong.csv, data row 5, core " in lines[0]  # the first row edited
    # the depth in the sheet's units, as every other error of relabel gives it ("depth 7.31")
    top = sheet.at[4, "top"]
    assert f", depth {top:.2f} m: decoded_tract is not what decode wrote (it reads " in lines[0]
    assert "write the geologist's tracts in geologist_tract" in lines[0]


def test_an_edited_xlsx_decoded_column_is_refused_too(work, tmp_path, capsys):
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.load_workbook(work / "decoded" / "sheet.xlsx")
    ws = book["interpretation"]
    col = [c.value for c in ws[1]].index("decoded_tract") + 1
    ws.cell(row=3, column=col).value = "TST" if ws.cell(row=3, column=col).value != "TST" else "HST"
    book.save(tmp_path / "wrong.xlsx")
    code, _, err = _relabel(capsys, work, tmp_path / "wrong.xlsx", tmp_path / "o.csv")
    assert code == 1 and "decoded_tract is not what decode wrote" in err


def _short_sheet(work, tmp_path, edit_decoded: bool, record_edit=None):
    """The sheet with core 2 filled and its last row deleted (filtered out in a
    spreadsheet program), ``edit_decoded``: corrections typed into core 1's
    decoded_tract; ``record_edit`` changes the record line first."""
    sheet = _sheet(work)
    cores = sheet["core"].unique()
    second = sheet["core"] == cores[1]
    sheet.loc[second, "geologist_tract"] = sheet.loc[second, "decoded_tract"].astype(object)
    if edit_decoded:
        first = np.flatnonzero(sheet["core"] == cores[0])[6]
        sheet.loc[first, "decoded_tract"] = next(
            t for t in TRACTS if t != sheet["decoded_tract"].iat[first]
        )
    record = (work / "decoded" / "sheet.csv").read_text().split("\n", 1)[0]
    path = tmp_path / "short.csv"
    text = sheet.drop(index=sheet.index[-1]).to_csv(index=False)
    path.write_text((record_edit or str)(record) + "\n" + text)
    return path


def test_an_edited_decoded_column_is_refused_on_a_sheet_that_lost_a_row(work, tmp_path, capsys):
    # the check compared one digest over all rows, skipped when a row was missing:
    # the corrections in decoded_tract were dropped silently, exit 0
    out = tmp_path / "labelled.csv"
    path = _short_sheet(work, tmp_path, edit_decoded=True)
    code, stdout, err = _relabel(capsys, work, path, out)
    assert code == 1 and not out.exists() and stdout == "", err
    (line,) = [x for x in err.splitlines() if "decoded_tract" in x]
    assert "short.csv, data row 7, core " in line and "is not what decode wrote" in line


def test_a_sheet_that_lost_a_row_is_read_with_one_line_saying_so(work, tmp_path, capsys):
    out = tmp_path / "labelled.csv"
    code, _, err = _relabel(capsys, work, _short_sheet(work, tmp_path, False), out)
    assert code == 0 and out.exists(), err
    (line,) = [x for x in err.splitlines() if "rows" in x]
    assert "short.csv: the sheet has 119 rows where decode wrote 120 (rows deleted" in line
    assert "decoded_tract was checked on the 119 rows present" in line


def test_a_short_sheet_of_an_older_decode_says_its_decoded_column_went_unchecked(
    work, tmp_path, capsys
):
    def older(record: str) -> str:  # the record of a decode before the runs
        return re.sub(r"; runs: [^;\"]*", "", record)

    path = _short_sheet(work, tmp_path, edit_decoded=True, record_edit=older)
    code, _, err = _relabel(capsys, work, path, tmp_path / "labelled.csv")
    assert code == 0, err
    (line,) = [x for x in err.splitlines() if "rows" in x]
    assert "its decoded_tract could not be checked (a sheet of an older decode)" in line


def test_a_sheet_without_its_record_is_read_and_says_what_could_not_be_checked(
    work, tmp_path, capsys
):
    sheet, _ = _filled(work, tmp_path)
    path = tmp_path / "filled.csv"
    sheet.to_csv(path, index=False)  # without the record line
    code, _, err = _relabel(capsys, work, path, tmp_path / "labelled.csv")
    assert code == 0, err
    (line,) = [x for x in err.splitlines() if "record" in x]
    assert "filled.csv holds no record of its decode" in line and "scheme" in line


def test_an_untouched_sheet_says_nothing_was_edited(work, tmp_path, capsys):
    out = tmp_path / "labelled.csv"
    code, stdout, err = _relabel(capsys, work, work / "decoded" / "sheet.csv", out)
    assert code == 1 and not out.exists() and stdout == ""
    assert "sheet.csv: nothing was edited: geologist_tract is empty on all 120 rows" in err


def test_a_sorted_sheet_with_a_note_only_is_an_edit(work, tmp_path, capsys):
    # the record's digests do not depend on the order of the rows
    sheet = _sheet(work).sort_values("probability", kind="stable")
    sheet.loc[sheet.index[0], "note"] = "burrowed top"
    _save(sheet, tmp_path / "noted.csv", work)
    out = tmp_path / "labelled.csv"
    code, stdout, err = _relabel(capsys, work, tmp_path / "noted.csv", out)
    assert code == 0, err
    assert "geologist's notes of 1 bed(s) kept in 'review_note'" in stdout


def test_the_next_fit_names_the_scheme_the_sheets_decode_read(work, tmp_path, capsys):
    # without --scheme the hint refitted on ranks suggested from the data; then it named
    # the copy in the decode's folder (which --force replaces) while the status line
    # said "scheme: none": now the file the model was fitted with, where it is unchanged
    _filled(work, tmp_path)
    out = tmp_path / "labelled.csv"
    code, stdout, err = _relabel(capsys, work, tmp_path / "filled.csv", out)
    assert code == 0, err
    fitted = (work / "scheme.yaml").resolve()
    (line,) = [x for x in stdout.splitlines() if "next:" in x]
    assert line.endswith(
        f"next: faciesseq fit {out} --scheme {fitted} --labels tract -o model.json"
    )
    assert f"scheme of that fit: {fitted} (the file the model was fitted with" in stdout
    assert f"scheme: none (the source read without one); the fit below takes {fitted}" in err
    # the file changed since the fit (its digest is not the model's): the decode's copy
    doc = json.loads((work / "model.json").read_text())
    doc["training"]["input_hashes"][str(work / "scheme.yaml")] = "sha256:" + "0" * 64
    (tmp_path / "model.json").write_text(json.dumps(doc))
    record, rows = (tmp_path / "filled.csv").read_text().split("\n", 1)
    record = record.replace(str((work / "model.json").resolve()), str(tmp_path / "model.json"))
    (tmp_path / "filled.csv").write_text(record + "\n" + rows)
    code, stdout, err = _relabel(capsys, work, tmp_path / "filled.csv", out, "--force")
    assert code == 0, err
    scheme = (work / "decoded" / "scheme.yaml").resolve()
    (line,) = [x for x in stdout.splitlines() if "next:" in x]
    assert line.endswith(
        f"next: faciesseq fit {out} --scheme {scheme} --labels tract -o model.json"
    )
    assert (
        f"scheme of that fit: {scheme} (the copy of the model's scheme its decode wrote, as "
        "the file the model was fitted with is not found, or has changed since; a decode "
        "with --force into that folder replaces it: keep a copy elsewhere)"
    ) in stdout
    assert f"the fit below takes {scheme}" in err
    from faciesseq.hmm.modelfile import load_model
    from faciesseq.scheme import load_scheme

    assert load_scheme(scheme).ranks() == load_model(work / "model.json").scheme.ranks()
    # a decode given --scheme records that file
    argv = ["decode", work / "model.json", work / "cores.csv", "--review-sheet"]
    argv += ["--scheme", work / "scheme.yaml", "-o", tmp_path / "d"]
    assert _run(capsys, argv)[0] == 0
    record = (tmp_path / "d" / "sheet.csv").read_text().split("\n", 1)[0]
    assert f"scheme: {(work / 'scheme.yaml').resolve()};" in record
    assert not (tmp_path / "d" / "scheme.yaml").exists()


@pytest.fixture(scope="module")
def second_round(work, tmp_path_factory):
    """A filled sheet relabelled (a note, a bed of an uninterpreted core corrected against
    the model) and decoded again with --keep-labels and the review sheet."""
    folder = tmp_path_factory.mktemp("round2")
    sheet = _sheet(work)
    cores = sheet["core"].unique()
    rows = np.flatnonzero(sheet["core"] == cores[1])  # uninterpreted
    k = rows[len(rows) // 2]
    other = next(t for t in TRACTS if t != sheet["decoded_tract"].iat[k])
    sheet.loc[k, ["geologist_tract", "note"]] = [other, "rooted top, exposure"]
    _save(sheet, folder / "filled.csv", work)
    labelled = folder / "labelled.csv"
    argv = ["relabel", folder / "filled.csv", work / "cores.csv", "-o", labelled]
    assert main([str(a) for a in argv]) == 0
    argv = ["decode", work / "model.json", labelled, "--review-sheet", "--keep-labels"]
    assert main([str(a) for a in [*argv, "-o", folder / "kept"]]) == 0
    argv = ["decode", work / "model.json", labelled, "--review-sheet"]
    assert main([str(a) for a in [*argv, "-o", folder / "plain"]]) == 0
    return folder, sheet.loc[k], other


def test_relabel_keeps_the_geologists_notes_and_the_next_sheet_shows_them(second_round):
    folder, bed, _ = second_round
    labelled = pd.read_csv(folder / "labelled.csv", dtype=object)
    here = (labelled["core"] == bed["core"]) & np.isclose(labelled["top"].astype(float), bed["top"])
    assert labelled.loc[here, "review_note"].tolist() == ["rooted top, exposure"]
    assert labelled["review_note"].notna().sum() == 1
    for name in ("kept", "plain"):
        sheet = pd.read_csv(folder / name / "sheet.csv", skiprows=1, dtype=object)
        here = (sheet["core"] == bed["core"]) & np.isclose(sheet["top"].astype(float), bed["top"])
        row = sheet[here]
        assert row["note"].tolist() == ["rooted top, exposure"]
        # where each label came from: the geologist's sheet, or the source
        assert row["label_source"].tolist() == ["filled.csv"]
        assert set(sheet["label_source"].dropna()) == {"filled.csv", "source"}
        assert sheet["geologist_tract"].isna().all()


def test_keep_labels_decodes_the_geologists_beds_as_labelled_and_says_so(second_round):
    folder, bed, other = second_round
    where = lambda t: (t["core"] == bed["core"]) & np.isclose(t["top"], bed["top"])  # noqa: E731
    plain = pd.read_csv(folder / "plain" / "tracts.csv", skiprows=1)
    assert plain.loc[where(plain), "tract"].tolist() != [other]  # the model's own decode
    kept = pd.read_csv(folder / "kept" / "tracts.csv", skiprows=1)
    assert kept.loc[where(kept), "tract"].tolist() == [other]
    assert kept.loc[where(kept), "clamped"].tolist() == [True]
    # every clamped bed is decoded as labelled; beds without a label are free
    source = pd.read_csv(folder / "labelled.csv")
    assert len(source) == len(kept)  # intervals of one facies each: one bed per interval
    label = source["tract"].to_numpy(dtype=object)
    clamped = kept["clamped"].to_numpy(bool)
    assert (kept["tract"].to_numpy(dtype=object)[clamped] == label[clamped]).all()
    assert not clamped[pd.isna(label)].any() and clamped.sum() >= 0.9 * pd.notna(label).sum()
    sheet = pd.read_csv(folder / "kept" / "sheet.csv", skiprows=1)
    assert sheet["clamped"].tolist() == kept["clamped"].tolist()
    assert "clamped" not in pd.read_csv(folder / "plain" / "sheet.csv", skiprows=1).columns
    assert not (folder / "kept" / "agreement.csv").exists()  # held beds agree by force


def test_keep_labels_json_summary_counts_the_clamped_beds(second_round, work, capsys):
    folder, _, _ = second_round
    argv = ["decode", work / "model.json", folder / "labelled.csv", "--keep-labels"]
    capsys.readouterr()
    assert main([str(a) for a in [*argv, "--summary", "json", "-o", folder / "json"]]) == 0
    document = json.loads(capsys.readouterr().out)
    kept = pd.read_csv(folder / "json" / "tracts.csv", skiprows=1)
    assert document["clamped_beds"] == int(kept["clamped"].sum()) > 0


def test_a_review_of_one_new_core_says_the_fit_would_leave_the_training_cores_out(
    work, tmp_path, capsys, monkeypatch
):
    # a new user decoded one new core, reviewed it and ran the fit suggested: the model was
    # refitted on that core alone, and its -o stopped at the model.json already there
    cores = pd.read_csv(work / "cores.csv")
    one = cores[cores["core"] == cores["core"].iloc[-1]]
    new = tmp_path / "new.csv"
    one.to_csv(new, index=False)
    decoded = tmp_path / "dec"
    assert (
        main(["decode", str(work / "model.json"), str(new), "--review-sheet", "-o", str(decoded)])
        == 0
    )
    sheet = pd.read_csv(decoded / "sheet.csv", skiprows=1, dtype={"geologist_tract": object})
    sheet["geologist_tract"] = sheet["decoded_tract"].astype(object)
    record = (decoded / "sheet.csv").read_text().split("\n", 1)[0]
    (tmp_path / "filled.csv").write_text(record + "\n" + sheet.to_csv(index=False))
    monkeypatch.chdir(tmp_path)
    (tmp_path / "model.json").write_text("{}")  # a model of an earlier round, in the way
    argv = ["relabel", tmp_path / "filled.csv", new, "-o", tmp_path / "labelled.csv"]
    code, stdout, err = _run(capsys, argv)
    assert code == 0, err
    (line,) = [x for x in stdout.splitlines() if "next:" in x]
    assert line.endswith("-o model-2.json"), line
    assert "note: the model was fitted on 4 core(s), 3 of them not in this table" in stdout
    # relabelling the whole training source: nothing left out, nothing said
    code, stdout, err = _run(
        capsys, ["relabel", tmp_path / "filled.csv", work / "cores.csv", "-o", tmp_path / "all.csv"]
    )
    assert code == 0, err
    assert "not in this table" not in stdout


def test_keep_labels_on_a_boundary_the_fitted_graph_forbids_says_to_refit(work, tmp_path, capsys):
    # the warning said "add a skip in the tract model to allow it", a fit's remedy: at
    # decode the tract model is the model file's fitted graph, and a model fitted with
    # these labels (fit --labels) takes a graph that allows what they hold
    cores = pd.read_csv(work / "cores.csv")
    core = cores["core"].iat[0]
    rows = np.flatnonzero(cores["core"] == core)[:2]  # depth order: the upper bed first
    cores["tract"] = None
    cores.loc[rows, "tract"] = ["LST", "TST"]  # upward TST -> LST: HST cannot be skipped
    source = tmp_path / "labelled.csv"
    cores.to_csv(source, index=False)
    argv = ["decode", work / "model.json", source, "--keep-labels", "-o", tmp_path / "out"]
    code, _, err = _run(capsys, argv)
    assert code == 0, err
    (line,) = [x for x in err.splitlines() if "TST -> LST" in x]
    assert f"core {core}, depth " in line and "add a skip" not in line
    assert "a model fitted with these labels (fit --labels) allows" in line


def test_a_sheet_saved_with_semicolons_and_decimal_commas_is_read_as_the_comma_sheet(
    work, tmp_path, capsys
):
    # a spreadsheet program whose decimal mark is a comma saves CSV with semicolons,
    # decimal commas and a byte-order mark (common practice: Excel in French or German);
    # relabel said "the sheet lacks column(s) core, top, base, geologist_tract"
    sheet = _sheet(work)
    sheet.loc[[3, 8], "geologist_tract"] = ["HST", "tst"]
    _save(sheet, tmp_path / "comma.csv", work)
    record = (work / "decoded" / "sheet.csv").read_text().split("\n", 1)[0]
    padding = ";" * (len(sheet.columns) - 1)  # the record cell, then empty cells
    body = sheet.to_csv(index=False, sep=";", decimal=",")
    assert "0,5" in body or ";0," in body  # the depths are written with decimal commas
    (tmp_path / "semicolon.csv").write_text(record + padding + "\n" + body, encoding="utf-8-sig")
    outputs = {}
    for name in ("comma", "semicolon"):
        out = tmp_path / f"{name}-labelled.csv"
        code, _, err = _relabel(capsys, work, tmp_path / f"{name}.csv", out)
        assert code == 0, err
        outputs[name] = pd.read_csv(out).drop(columns="label_source")
    pd.testing.assert_frame_equal(outputs["semicolon"], outputs["comma"])
