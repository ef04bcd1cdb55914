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
