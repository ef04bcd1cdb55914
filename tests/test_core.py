"""Core data model: beds, gaps, grid and the base-to-top convention."""

import numpy as np
import pandas as pd
import pytest

from faciesseq.core import Core, CoreSet
from faciesseq.errors import InputError


def _core():
    # depth order as logged; a gap between 5.0 and 6.0
    table = pd.DataFrame(
        {
            "top": [0.0, 1.0, 2.5, 4.0, 6.0, 7.0],
            "base": [1.0, 2.5, 4.0, 5.0, 7.0, 9.0],
            "facies": ["A", "B", "B", "C", "C", "A"],
            "contact": ["sharp", "gradational", "erosional", "sharp", "sharp", "sharp"],
            "grain_size": [1.0, 2.0, 4.0, 3.0, 3.0, np.nan],
        }
    )
    return Core("W-1", table, "m")


def test_beds_amalgamate_same_facies_and_split_at_gaps():
    beds = _core().beds()
    assert beds["facies"].tolist() == ["A", "B", "C", "C", "A"]
    assert beds["segment"].tolist() == [0, 0, 0, 1, 1]
    b = beds.iloc[1]
    assert (b["top"], b["base"], b["thickness"]) == (1.0, 4.0, 3.0)
    # a bed's contact is its lower contact; numbers are thickness-weighted
    assert b["contact"] == "erosional"
    assert b["grain_size"] == pytest.approx((2.0 * 1.5 + 4.0 * 1.5) / 3.0)


def test_successions_run_base_to_top():
    succ = _core().successions()
    assert [len(s) for s in succ] == [3, 2]
    # oldest (deepest) bed first: upward order
    assert succ[0].facies.tolist() == ["C", "B", "A"]
    assert succ[1].facies.tolist() == ["A", "C"]
    assert succ[0].beds["top"].is_monotonic_decreasing


def test_grid_takes_the_facies_at_cell_centres_and_restarts_after_gaps():
    grid = _core().grid(0.5)
    top_segment = grid[grid["segment"] == 0]
    assert len(top_segment) == 10
    assert top_segment["facies"].tolist() == ["A"] * 2 + ["B"] * 6 + ["C"] * 2
    assert grid[grid["segment"] == 1]["depth"].iloc[0] == pytest.approx(6.25)
    with pytest.raises(InputError):
        _core().grid(0)


def test_coreset_round_trips_its_frame():
    table = _core().intervals.assign(core="W-1")
    cs = CoreSet.from_frame(table, units="m")
    back = cs.to_frame()
    assert back["core"].unique().tolist() == ["W-1"]
    assert len(cs.successions()) == 2
    with pytest.raises(InputError):
        CoreSet.from_frame(table.drop(columns="core"))
