"""Core data model: beds, gaps, grid and the base-to-top convention."""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

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


def test_intervals_keep_every_described_bed_however_alike():
    # two intervals of one facies with a contact between them are two beds to the
    # geologist who described them (common practice); the unit "intervals" keeps
    # them, "beds" amalgamates them
    core = _core()
    rows = core.successions("intervals")
    assert [len(s) for s in rows] == [4, 2]
    assert rows[0].facies.tolist() == ["C", "B", "B", "A"]
    assert rows[0].beds["contact"].tolist() == ["sharp", "erosional", "gradational", "sharp"]
    assert rows[0].beds["n_intervals"].tolist() == [1, 1, 1, 1]
    # the whole core set's one-pass table is the same as core by core
    table = core.intervals.assign(core="W-1")
    two = pd.concat([table, table.assign(core="W-2")], ignore_index=True)
    cs = CoreSet.from_frame(two, units="m")
    fast = cs.succession_table("intervals")
    slow = [s for name in ("W-1", "W-2") for s in cs.cores[name].successions("intervals")]
    assert fast.lengths.tolist() == [len(s) for s in slow] == [4, 2, 4, 2]
    assert fast.beds["facies"].tolist() == [f for s in slow for f in s.facies.tolist()]
    assert [len(s) for s in cs.successions("beds")] == [3, 2, 3, 2]
    with pytest.raises(InputError, match="beds, intervals, grid"):
        core.successions("layers")


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
    # without a core column, as in a file: one core, and a warning saying how to map one
    one = CoreSet.from_frame(table.drop(columns="core"), units="m")
    assert one.names == ["core"] and len(one["core"]) == len(table)
    assert "no-core-column" in [p.kind for p in one.problems if p.severity == "warning"]
    with pytest.raises(InputError):
        CoreSet.from_frame(table.drop(columns="base"))


def _beds_by_loop(core):
    """Plain per-bed reference for the vectorised amalgamation."""
    table = core.intervals
    seg = core.segment_ids()
    rows, start = [], 0
    for i in range(1, len(table) + 1):
        if i == len(table) or table["facies"][i] != table["facies"][start] or seg[i] != seg[start]:
            part = table.iloc[start:i]
            w = (part["base"] - part["top"]).to_numpy()
            g = part["grain_size"].to_numpy(float)
            ok = ~np.isnan(g)
            contacts = part["contact"].dropna()
            rows.append(
                (
                    part["facies"].iloc[0],
                    part["top"].iloc[0],
                    part["base"].iloc[-1],
                    float(np.average(g[ok], weights=w[ok])) if ok.any() else np.nan,
                    contacts.iloc[-1] if len(contacts) else None,
                )
            )
            start = i
    return rows


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.sampled_from("ABC"),
            st.integers(1, 3),
            st.booleans(),
            st.sampled_from(["sharp", "erosional", None]),
            st.one_of(st.none(), st.floats(1, 6)),
        ),
        min_size=1,
        max_size=30,
    )
)
def test_vectorised_beds_equal_a_plain_loop(rows):
    top, tops, bases = 0.0, [], []
    for _, thick, gap_before, _, _ in rows:
        top += 0.5 if gap_before else 0.0
        tops.append(top)
        bases.append(top + thick)
        top += thick
    table = pd.DataFrame(
        {
            "top": tops,
            "base": bases,
            "facies": [r[0] for r in rows],
            "contact": [r[3] for r in rows],
            "grain_size": [np.nan if r[4] is None else r[4] for r in rows],
        }
    )
    core = Core("X", table)
    beds = core.beds()
    expected = _beds_by_loop(core)
    assert len(beds) == len(expected)
    for bed, (facies, btop, bbase, grain, contact) in zip(beds.itertuples(), expected):
        assert (bed.facies, bed.top, bed.base) == (facies, btop, bbase)
        assert (np.isnan(grain) and np.isnan(bed.grain_size)) or bed.grain_size == pytest.approx(
            grain
        )
        assert bed.contact == contact or (contact is None and pd.isna(bed.contact))
