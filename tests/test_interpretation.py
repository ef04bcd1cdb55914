"""Interpretation tables and per-depth curves."""

import numpy as np
import pandas as pd
import pytest

from faciesseq.interpretation import CoreInterpretation, Interpretation


def _interp():
    beds = pd.DataFrame(
        {
            "segment": [0, 0, 0],
            "top": [0.0, 1.0, 3.0],
            "base": [1.0, 3.0, 4.0],
            "thickness": [1.0, 2.0, 1.0],
            "facies": ["A", "B", "A"],
            "tract": ["HST", "HST", "TST"],
            "p_TST": [0.1, 0.3, 0.8],
            "p_HST": [0.9, 0.7, 0.2],
        }
    )
    boundaries = pd.DataFrame(
        {
            "segment": [0, 0],
            "depth": [1.0, 3.0],
            "lower_tract": ["HST", "TST"],
            "upper_tract": ["HST", "HST"],
            "p_MFS": [0.1, 0.6],
        }
    )
    picks = pd.DataFrame(
        {
            "surface": ["MFS"],
            "name": ["maximum flooding surface"],
            "depth": [3.0],
            "probability": [0.6],
            "depth_top": [2.5],
            "depth_base": [3.5],
            "segment": [0],
        }
    )
    core = CoreInterpretation("W1", "m", ("TST", "HST"), ("MFS",), beds, boundaries, picks, -3.2)
    return Interpretation.from_cores({"W1": core}, ("TST", "HST"), ("MFS",))


def test_tables_have_the_documented_columns():
    interp = _interp()
    tracts = interp.tracts_table()
    assert tracts.columns.tolist() == ["core", "top", "base", "facies", "tract", "p_TST", "p_HST"]
    surfaces = interp.surfaces_table()
    assert surfaces["picked"].tolist() == [False, True]
    assert interp.picks_table()["core"].tolist() == ["W1"]


def test_curves_sample_beds_and_sum_boundaries_per_cell():
    curves = _interp()["W1"].curves(0.5)
    assert len(curves) == 8
    assert curves["p_TST"].iloc[0] == pytest.approx(0.1)
    assert curves["p_TST"].iloc[-1] == pytest.approx(0.8)
    # each boundary's probability lands in exactly one cell
    assert np.nansum(curves["p_MFS"]) == pytest.approx(0.7)
