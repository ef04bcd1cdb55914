"""Reading real, open data: the Council Grove facies logs (sample layout, feet).

Data: Dubois, Bohling & Chakrabarti (2007), Computers & Geosciences 33:599-617;
CSV published by Hall (2016), The Leading Edge 35:906-909 (Apache-2.0); see
tests/data/council_grove/README.md. The expected counts below are facts of the
data stated in its README (repeated depths in SHRIMPLIN and CROSS H CATTLE,
0.5 ft sampling, gaps of 1-94 ft, Recruit F9 a pseudo-well) and counted with
plain pandas, independently of faciesseq:

    d = pd.read_csv(CSV)
    d.groupby("Well Name").Depth.apply(lambda s: (np.diff(np.sort(s.unique())) > 0.75).sum())
"""

from pathlib import Path

import pandas as pd
import pytest

from faciesseq.cli import main
from faciesseq.io import read_cores, write_cores

DATA = Path(__file__).parent / "data" / "council_grove"
CSV = DATA / "facies_vectors_subset.csv"
MAPPING = {"core": "Well Name", "depth": "Depth", "facies": "Facies"}
WELLS = ["SHRIMPLIN", "SHANKLE", "LUKE G U", "CROSS H CATTLE", "NOLAN", "Recruit F9"]
# gaps per well: depth steps larger than 1.5 samples (counted as in the module docstring)
GAPS = {"SHRIMPLIN": 1, "SHANKLE": 8, "LUKE G U": 1, "CROSS H CATTLE": 8, "NOLAN": 0}
GAPS["Recruit F9"] = 8


@pytest.fixture(scope="module")
def council_grove():
    return read_cores(
        CSV, layout="samples", columns=MAPPING, units="ft", scheme=DATA / "scheme.yaml"
    )


def test_council_grove_reads_six_wells_in_feet_on_a_half_foot_grid(council_grove):
    assert council_grove.names == WELLS
    assert council_grove.units == "ft"
    assert council_grove.meta["sample_step"] == dict.fromkeys(WELLS, 0.5)
    # facies codes 1..9 all known to the scheme (no unknown-facies errors)
    assert council_grove.facies_codes() == [str(k) for k in range(1, 10)]
    assert not [p for p in council_grove.problems if p.kind == "unknown-facies"]


def test_council_grove_repeated_depths_in_the_two_wells_that_have_them(council_grove):
    repeated = [p for p in council_grove.problems if p.kind == "repeated-depth"]
    assert all(p.severity == "error" for p in repeated)
    found = sorted((p.core, p.depth, p.row) for p in repeated)
    # rows are 1-based data rows of the CSV (header = row 0)
    assert found == [
        ("CROSS H CATTLE", 2696.5, 1624),
        ("CROSS H CATTLE", 2721.5, 1675),
        ("SHRIMPLIN", 2944.0, 303),
    ]
    assert council_grove.errors == repeated
    kept = read_cores(
        CSV, layout="samples", columns=MAPPING, units="ft", repeated_depths="keep-first"
    )
    assert not kept.errors
    assert sorted(p.row for p in kept.problems if p.kind == "repeated-depth") == [303, 1624, 1675]
    assert {p.severity for p in kept.problems if p.kind == "repeated-depth"} == {"repair"}


def test_council_grove_gaps_are_found_and_split_the_successions(council_grove):
    gaps = [p for p in council_grove.problems if p.kind == "gap"]
    per_well = {w: sum(p.core == w for p in gaps) for w in WELLS}
    assert per_well == GAPS
    for well in WELLS:
        core = council_grove[well]
        assert len(core.gaps()) == GAPS[well]
        assert len({s.segment for s in core.successions()}) == GAPS[well] + 1
    # README: missing samples of 1-94 ft; a gap spans the missing step less one sample
    widths = [b - t for core in council_grove for t, b in core.gaps()]
    assert min(widths) == pytest.approx(1.0 - 0.5)
    assert max(widths) == pytest.approx(94.0 - 0.5)


def test_council_grove_pseudo_well_is_reported_as_irregular(council_grove):
    irregular = [p.core for p in council_grove.problems if p.kind == "irregular-spacing"]
    assert irregular == ["Recruit F9"]
    order = [p for p in council_grove.problems if p.kind == "depth-order"]
    assert [p.core for p in order] == ["Recruit F9"]


def test_council_grove_samples_become_intervals_without_losing_thickness(council_grove):
    # each kept sample covers 0.5 ft: cored thickness = 0.5 ft x samples
    samples = {"SHRIMPLIN": 471 - 1, "CROSS H CATTLE": 501 - 2, "NOLAN": 415}
    for well, n in samples.items():
        assert council_grove[well].thickness == pytest.approx(0.5 * n)
    nolan = council_grove["NOLAN"]
    assert (nolan.top, nolan.base) == (2853.25, 3060.75)
    # other columns are kept as attributes
    assert {"Formation", "GR", "NM_M"} <= set(nolan.attributes)


def test_council_grove_check_command_exit_codes(capsys):
    args = [
        "check",
        str(CSV),
        "--layout",
        "samples",
        "--column",
        "core=Well Name",
        "--column",
        "depth=Depth",
        "--column",
        "facies=Facies",
        "--units",
        "ft",
    ]
    assert main(args) == 1  # repeated depths are errors by default
    out = capsys.readouterr().out
    assert "row 303, core SHRIMPLIN, depth 2944.00 ft: repeated depth" in out
    assert main([*args, "--keep-first"]) == 0


@pytest.mark.parametrize("target", ["cg.parquet", "cg.sqlite", "cg.xlsx", "las"])
def test_council_grove_round_trips_through_every_format(tmp_path, target):
    # real data, wireline attributes included: written then read back, equal
    cores = read_cores(
        CSV, layout="samples", columns=MAPPING, units="ft", repeated_depths="keep-first"
    )
    path = tmp_path / target
    write_cores(cores, path, format="las" if target == "las" else None)
    back = read_cores(path)
    assert back.units == "ft" and not back.errors
    expected = cores.to_frame().set_index("core").loc[back.names].reset_index()
    got = back.to_frame()
    expected = expected.astype(object).where(expected.notna(), None)
    got = got.astype(object).where(got.notna(), None)
    pd.testing.assert_frame_equal(got, expected)
