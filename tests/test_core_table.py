"""The one table of all intervals (CoreTable) against one table per core.

A database read from a file keeps its cores as one table; a core set built from
a table per core (``CoreSet.from_frame``) goes core by core. Both must give the
same cores, beds, successions, extents and subsets. The Council Grove wells are
real data (tests/data/council_grove/README.md); the demo cores are invented.
"""

from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from faciesseq.core import CoreSet, CoreTable
from faciesseq.io import read_cores

ROOT = Path(__file__).resolve().parents[1]
SOURCES = [
    (ROOT / "faciesseq/data/demo/cores.csv", ROOT / "faciesseq/data/demo/scheme-shoreface.yaml"),
    (
        ROOT / "tests/data/council_grove/facies_vectors_subset.csv",
        ROOT / "tests/data/council_grove/scheme.yaml",
    ),
]


@pytest.fixture(params=SOURCES, ids=["demo", "council-grove"])
def both(request):
    source, scheme = request.param
    table = read_cores(source, scheme=scheme)
    assert isinstance(table.cores, CoreTable)
    # the frame checked again finds what the file gave (gaps); the reading's own problems
    # (rows left out, units converted) are those of the file
    per_core = replace(
        CoreSet.from_frame(table.to_frame(provenance=True), units=table.units),
        problems=table.problems,
    )
    assert not isinstance(per_core.cores, CoreTable)
    return table, per_core


def test_cores_and_successions_are_those_of_one_table_per_core(both):
    table, per_core = both
    assert table.names == per_core.names
    for name in table.names:
        pd.testing.assert_frame_equal(table[name].intervals, per_core[name].intervals)
    assert table.facies_codes() == per_core.facies_codes()
    ours, theirs = table.successions(), per_core.successions()
    assert [(s.core, s.segment) for s in ours] == [(s.core, s.segment) for s in theirs]
    for a, b in zip(ours, theirs, strict=True):
        pd.testing.assert_frame_equal(a.beds, b.beds)


def test_extents_are_each_cores_top_base_thickness_and_gaps(both):
    table, _ = both
    extents = table.extents()
    for name, row in extents.iterrows():
        core = table[name]
        assert row["top"] == core.top and row["base"] == core.base
        assert row["gaps"] == len(core.gaps())
        assert np.isclose(row["thickness"], core.thickness, rtol=1e-12)


def test_a_subset_keeps_the_named_cores_in_the_order_given(both):
    table, per_core = both
    names = table.names[::-2]
    ours, theirs = table.subset(names), per_core.subset(names)
    assert ours.names == names == theirs.names
    pd.testing.assert_frame_equal(ours.to_frame(), theirs.to_frame())
    assert [len(s) for s in ours.successions()] == [len(s) for s in theirs.successions()]
    assert ours.problems == theirs.problems


def test_one_name_alone_is_a_subset_of_one_core_and_a_name_not_held_is_named(both):
    for cores in both:
        first = cores.names[0]
        assert cores.subset(first).names == [first]  # not its letters, one by one
        with pytest.raises(KeyError, match=r"no core 'NOPE' in this core set; cores: "):
            cores["NOPE"]


def test_a_subset_of_no_core_has_no_bed_and_no_succession(both):
    for cores in both:
        empty = cores.subset([])
        for unit in ("beds", "intervals"):  # described intervals once raised an IndexError
            assert len(empty.succession_table(unit)) == 0
        assert empty.successions("intervals") == [] and empty.bed_counts() == {}


def test_taking_successions_of_a_succession_table_gives_those_successions(both):
    table, _ = both
    successions = table.succession_table()
    picked = [0, 2, len(successions) - 1]
    taken = successions.take(picked)
    assert taken.lengths.tolist() == [len(successions[k]) for k in picked]
    for got, k in zip(taken, picked, strict=True):
        want = successions[k]
        assert (got.core, got.segment) == (want.core, want.segment)
        pd.testing.assert_frame_equal(got.beds, want.beds)
