"""A samples log whose step changes part-way is one succession, read at its local step.

The log is real: the Council Grove well NOLAN (tests/data/council_grove/README.md),
0.5 ft throughout, resampled here to 0.25 ft below 2950 ft by inserting the midpoint
of every spacing below, with the facies of the sample above it (a log described
more finely below some depth). Real gaps must still be gaps.
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from faciesseq.cli import main
from faciesseq.io import read_cores
from faciesseq.io.spacing import read_spacing
from faciesseq.markov import leave_out_irregular

DATA = Path(__file__).parent / "data" / "council_grove"
MAPPING = {"core": "Well Name", "depth": "Depth", "facies": "Facies"}
CHANGE = 2950.0


def _nolan_resampled() -> pd.DataFrame:
    table = pd.read_csv(DATA / "facies_vectors_subset.csv")
    well = table[table["Well Name"] == "NOLAN"].sort_values("Depth", ignore_index=True)
    below = well[well["Depth"] >= CHANGE]
    midpoints = below.iloc[:-1].assign(Depth=below["Depth"].to_numpy()[:-1] + 0.25)
    return pd.concat([well, midpoints]).sort_values("Depth", kind="stable", ignore_index=True)


def _read(tmp_path, table):
    path = tmp_path / "step.csv"
    table.to_csv(path, index=False)
    return read_cores(path, layout="samples", columns=MAPPING, units="ft")


def _kinds(cores, kind):
    return [p for p in cores.problems if p.kind == kind]


@pytest.mark.parametrize("finer_below", [True, False])
def test_a_change_of_step_is_one_succession_with_one_warning(tmp_path, finer_below):
    table = _nolan_resampled()
    if not finer_below:  # the same log turned over: 0.25 ft above, 0.5 ft below
        table = table.assign(Depth=6000.0 - table["Depth"]).iloc[::-1]
    cores = _read(tmp_path, table)
    assert _kinds(cores, "gap") == []
    assert _kinds(cores, "irregular-spacing") == []
    (warning,) = _kinds(cores, "step-change")
    change = CHANGE if finer_below else 6000.0 - CHANGE
    assert warning.depth == change
    steps = "(0.5 to 0.25 ft)" if finer_below else "(0.25 to 0.5 ft)"
    assert f"{change:g} ft {steps}" in warning.message
    nolan = cores["NOLAN"]
    depth = table["Depth"].to_numpy()
    assert nolan.top == depth.min() - (0.25 if finer_below else 0.125)
    assert nolan.base == depth.max() + (0.125 if finer_below else 0.25)
    assert nolan.thickness == nolan.base - nolan.top  # no gap
    assert cores.meta["sample_step"] == {"NOLAN": 0.25}  # the finest step


def test_each_sample_covers_its_local_step(tmp_path):
    # every sample a facies of its own, so that every interval is one sample's cell
    table = _nolan_resampled()
    table["Facies"] = np.arange(len(table)) % 2 + 1
    intervals = _read(tmp_path, table)["NOLAN"].intervals
    thickness = (intervals["base"] - intervals["top"]).to_numpy()
    depth = table["Depth"].to_numpy()
    assert len(intervals) == len(table)
    assert np.all(thickness[depth < CHANGE] == 0.5)
    assert thickness[depth == CHANGE] == 0.375  # midway between the two steps
    assert np.all(thickness[depth > CHANGE] == 0.25)


def test_a_missing_sample_in_either_stretch_is_still_a_gap(tmp_path):
    table = _nolan_resampled()
    missing = [2900.0, 3000.0]  # one sample of the 0.5 ft and of the 0.25 ft stretch
    cores = _read(tmp_path, table[~table["Depth"].isin(missing)])
    gaps = _kinds(cores, "gap")
    assert [(p.depth, p.message.split(":")[0]) for p in gaps] == [
        (2899.75, "no samples from 2899.5 to 2900.5 (step 1 ft, spacing 0.5)"),
        (2999.875, "no samples from 2999.75 to 3000.25 (step 0.5 ft, spacing 0.25)"),
    ]
    assert len(_kinds(cores, "step-change")) == 1
    assert _kinds(cores, "irregular-spacing") == []


def test_a_short_run_of_double_spacings_is_gaps_not_a_change_of_step(tmp_path):
    # three missing samples in a row, every other one: three gaps, as with one step
    table = _nolan_resampled()
    cores = _read(tmp_path, table[~table["Depth"].isin([2900.0, 2901.0, 2902.0])])
    assert len(_kinds(cores, "gap")) == 3
    assert len(_kinds(cores, "step-change")) == 1


def test_the_well_whose_step_changes_is_kept_and_fitted(tmp_path):
    table = _nolan_resampled()
    cores = _read(tmp_path, table)
    assert leave_out_irregular(cores).left_out == ()
    source = tmp_path / "step.csv"
    model = tmp_path / "model.json"
    options = ["--layout", "samples", "--units", "ft", "--scheme", str(DATA / "scheme.yaml")]
    options += [f"--column={role}={name}" for role, name in MAPPING.items()]
    code = main(["fit", str(source), *options, "-o", str(model), "--restarts", "1"])
    assert code == 0
    assert model.exists()


@pytest.mark.parametrize(("run", "gaps", "steps"), [(9, 9, [0.5]), (10, 0, [0.5, 1.0, 0.5])])
def test_a_stretch_of_another_step_needs_ten_spacings_in_a_row(run, gaps, steps):
    spacing = read_spacing(np.array([0.5] * 40 + [1.0] * run + [0.5] * 40), 0.5)
    assert int(spacing.gap.sum()) == gaps
    assert spacing.steps.tolist() == steps
