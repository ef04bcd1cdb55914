"""``decode --labels COLUMN --keep-labels`` with a model of a regular depth grid (``fit
--unit grid --step``): the labelled cells keep the geologist's tract (synthetic cores of
tests/hmm_synthetic.py, invented)."""

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq.cli import main

QUICK = ["--restarts", "1", "--max-iter", "5", "--calibration-folds", "0"]
TRACTS = ["HST", "FSST", "LST", "TST"]
STEP = 0.5


def _cell_labels(cells: pd.DataFrame, source: pd.DataFrame, column: str) -> np.ndarray:
    """The ``column`` label of the source interval holding each grid cell's mid-depth."""
    labels = np.empty(len(cells), dtype=object)
    for core, part in cells.groupby("core", sort=False):
        intervals = source[source["core"] == core]
        middle = ((part["top"] + part["base"]) / 2).to_numpy()
        at = np.searchsorted(intervals["base"].to_numpy(), middle)
        labels[cells.index.get_indexer(part.index)] = intervals[column].to_numpy(object)[at]
    return np.where(pd.isna(labels), None, labels)


@pytest.fixture(scope="module")
def grid(tmp_path_factory):
    """A grid model, a source whose 'geologist' column holds the even cores' tracts and a
    correction on an uninterpreted core (a tract the model does not decode there), and
    the decodes of it with and without --keep-labels."""
    folder = tmp_path_factory.mktemp("grid")
    synth.write_database(folder, 4, 30, seed=3)
    model = folder / "grid.json"
    fit = ["fit", folder / "cores.csv", "--scheme", folder / "scheme.yaml"]
    fit += ["--unit", "grid", "--step", str(STEP), *QUICK, "-o", model]
    assert main([str(a) for a in fit]) == 0
    plain = folder / "plain"
    assert main([str(a) for a in ["decode", model, folder / "cores.csv", "-o", plain]]) == 0
    source = pd.read_csv(folder / "cores.csv")
    source["geologist"] = source["tract"]
    # the thickest interval of the first uninterpreted core, given a tract the model
    # does not decode at its middle
    second = source["core"] == source["core"].unique()[1]
    assert source.loc[second, "tract"].isna().all()
    k = (source["base"] - source["top"])[second].idxmax()
    cells = pd.read_csv(plain / "tracts.csv", skiprows=1)
    inside = (cells["core"] == source.at[k, "core"]) & (cells["top"] >= source.at[k, "top"])
    inside &= cells["base"] <= source.at[k, "base"]
    assert inside.sum() >= 2
    decoded = cells.loc[inside, "tract"].iat[0]
    other = TRACTS[(TRACTS.index(decoded) + 2) % 4]  # the tract opposite in the cycle
    source.loc[k, "geologist"] = other
    source.to_csv(folder / "labelled.csv", index=False)
    kept = folder / "kept"
    argv = ["decode", model, folder / "labelled.csv", "--labels", "geologist", "--keep-labels"]
    return folder, [str(a) for a in [*argv, "-o", kept]], source, k, other


def test_keep_labels_on_a_grid_holds_the_labelled_cells_to_the_geologists_tract(grid, capsys):
    folder, argv, source, k, other = grid
    capsys.readouterr()
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 0, err
    cells = pd.read_csv(folder / "kept" / "tracts.csv", skiprows=1)
    assert "clamped" in cells.columns
    np.testing.assert_allclose(cells["base"] - cells["top"], STEP, atol=1e-9)
    label = _cell_labels(cells, source, "geologist")
    clamped = cells["clamped"].to_numpy(bool)
    labelled = pd.notna(label)
    # every clamped cell decoded as labelled, no unlabelled cell clamped, and (but for a
    # boundary the model's graph does not allow, which frees its two beds) every
    # labelled cell clamped
    assert (cells["tract"].to_numpy(object)[clamped] == label[clamped]).all()
    assert not clamped[~labelled].any()
    assert clamped.sum() >= 0.9 * labelled.sum() > 0
    assert f"kept the tracts of {clamped.sum()} labelled bed(s) of the 'geologist' column" in out
    # the geologist's correction, against the model's own decode there (the fixture)
    inside = (cells["core"] == source.at[k, "core"]) & (cells["top"] >= source.at[k, "top"])
    inside &= cells["base"] <= source.at[k, "base"]
    assert cells.loc[inside, "tract"].tolist() == [other] * int(inside.sum())
    assert cells.loc[inside, "clamped"].all()


# ------------------------------------------------- relabel of a sheet of grid cells


@pytest.fixture(scope="module")
def grid_sheet(grid):
    """The review sheet of the grid model's decode of the source (rows: 0.5 m cells)."""
    folder = grid[0]
    out = folder / "reviewed"
    argv = ["decode", folder / "grid.json", folder / "cores.csv", "--review-sheet", "-o", out]
    assert main([str(a) for a in argv]) == 0
    return out / "sheet.csv"


def _read(path) -> tuple[str, pd.DataFrame]:
    record = path.read_text(encoding="utf-8").splitlines()[0]
    types = {"core": object, "geologist_tract": object, "note": object}
    return record, pd.read_csv(path, dtype=types, skiprows=1)


def _write(record: str, sheet: pd.DataFrame, path) -> None:
    with path.open("w", encoding="utf-8", newline="") as handle:
        handle.write(record + "\n")
        sheet.to_csv(handle, index=False, lineterminator="\n")


def _cells_of(sheet: pd.DataFrame, source: pd.DataFrame, k: int) -> np.ndarray:
    """Sheet rows whose mid-depth lies in source interval ``k`` (top <= middle < base)."""
    middle = (sheet["top"] + sheet["base"]) / 2
    inside = (sheet["core"] == source.at[k, "core"]) & (middle >= source.at[k, "top"])
    return np.flatnonzero(inside & (middle < source.at[k, "base"]))


def _relabel(capsys, sheet_path, folder, out):
    argv = ["relabel", sheet_path, folder / "cores.csv", "-o", out]
    code = main([str(a) for a in argv])
    stdout, err = capsys.readouterr()
    return code, stdout, err


def test_relabel_puts_a_grid_sheets_cells_on_the_intervals_holding_their_middles(
    grid, grid_sheet, tmp_path, capsys
):
    folder, _, source, k, other = grid
    source = source.drop(columns="geologist")
    record, sheet = _read(grid_sheet)
    assert "S-3-1,0.0,0.5,0.5," in grid_sheet.read_text()  # cells, not the source's beds
    # every cell of the fixture's thick interval; all but one cell of an interval of 3 or
    # more cells of another core (the edit covers more than half of it); a note
    cells_k = _cells_of(sheet, source, k)
    first = source["core"] == source["core"].unique()[0]
    counts = {j: len(_cells_of(sheet, source, j)) for j in source.index[first]}
    j = next(j for j, n in counts.items() if n >= 3)
    cells_j = _cells_of(sheet, source, j)[1:]
    sheet.loc[cells_k, "geologist_tract"] = other.lower()  # case is not significant
    sheet.loc[cells_j, "geologist_tract"] = "HST"
    sheet.loc[cells_k[0], "note"] = "shoreface, not shelf"
    path = tmp_path / "filled.csv"
    _write(record, sheet, path)
    out = tmp_path / "labelled.csv"
    code, stdout, err = _relabel(capsys, path, folder, out)
    assert code == 0, err
    got = pd.read_csv(out, dtype={"tract": object, "label_source": object, "review_note": object})
    assert len(got) == len(source)
    want = source["tract"].astype(object).copy()
    want[k], want[j] = other, "HST"
    assert got["tract"].fillna("-").tolist() == want.fillna("-").tolist()
    origin = np.where(source["tract"].notna(), "source", "-").astype(object)
    origin[[k, j]] = "filled.csv"
    assert got["label_source"].fillna("-").tolist() == origin.tolist()
    notes = got["review_note"].fillna("-")
    assert notes[k] == "shoreface, not shelf" and (notes.drop(k) == "-").all()
    n_filled = len(cells_k) + len(cells_j)
    changed = int(source.at[j, "tract"] != "HST") + 1  # k had no label
    assert f"{n_filled} bed(s) given a tract by the geologist in 2 core(s)" in stdout
    assert f"{changed} source interval(s) changed" in stdout


def test_cells_of_one_interval_giving_it_two_tracts_are_one_line_naming_both(
    grid, grid_sheet, tmp_path, capsys
):
    folder, _, source, k, other = grid
    record, sheet = _read(grid_sheet)
    cells = _cells_of(sheet, source, k)
    sheet.loc[cells, "geologist_tract"] = other
    sheet.loc[cells[-1], "geologist_tract"] = "HST" if other != "HST" else "TST"
    path = tmp_path / "filled.csv"
    _write(record, sheet, path)
    out = tmp_path / "labelled.csv"
    code, _, err = _relabel(capsys, path, folder, out)
    assert code == 1 and not out.exists()
    assert err.count("\n") == 1
    top, base = source.at[k, "top"], source.at[k, "base"]
    assert f"filled.csv, data row {cells[-1] + 1}, core {source.at[k, 'core']}" in err
    assert f"the interval {top:g}-{base:g} m give it two tracts, {other} " in err
    assert f"and {sheet.at[cells[-1], 'geologist_tract']} (data row {cells[-1] + 1})" in err


def test_an_interval_half_edited_or_less_is_refused_naming_it(grid, grid_sheet, tmp_path, capsys):
    folder, _, source, k, other = grid
    record, sheet = _read(grid_sheet)
    cells = _cells_of(sheet, source, k)
    half = len(cells) // 2
    sheet.loc[cells[:half], "geologist_tract"] = other
    path = tmp_path / "filled.csv"
    _write(record, sheet, path)
    code, _, err = _relabel(capsys, path, folder, tmp_path / "labelled.csv")
    assert code == 1 and err.count("\n") == 1
    top, base = source.at[k, "top"], source.at[k, "base"]
    assert (
        f"the interval {top:g}-{base:g} m has {half} of its {len(cells)} cells given a tract "
        f"({other}), not more than half" in err
    )
