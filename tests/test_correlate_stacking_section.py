"""Multi-well (section) mode of the parasequence-stacking generator.

The properties checked are the premises of sequence-stratigraphic correlation:
wells of one section share their base-level cycles (the same sequences and
tracts in the same order, each with its own thicknesses), the FSST pinches out
landward, transgressive deposits thin basinward and facies deepen basinward
(Van Wagoner et al. 1990, Siliciclastic sequence stratigraphy in well logs,
cores and outcrops, AAPG Methods in Exploration 7; Catuneanu et al. 2009,
Earth-Science Reviews 92:1-33).
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
import yaml

from faciesseq.errors import ConfigError
from faciesseq.simulate import load_any_scenario, simulate_stacking
from faciesseq.simulate.stacking import load_stacking_scenario, stacking_scenario_from_dict

CONFIGS = Path(__file__).resolve().parents[1] / "configs"
SCENARIO = CONFIGS / "stacking-section.yaml"


def _scenario(**section):
    data = yaml.safe_load(SCENARIO.read_text())
    data["section"] = {**data["section"], **section}
    return stacking_scenario_from_dict(data, source=str(SCENARIO))


def _steps_upward(result, core: str) -> list[tuple[int, str]]:
    """``(step, tract)`` of each tract run of a core, base to top, from its surfaces."""
    own = result.surfaces[result.surfaces["core"] == core].iloc[::-1]
    first = result.cores.to_frame().query("core == @core")["true_tract"].iloc[-1]
    return [(-1, first), *zip(own["step"], own["upper_tract"])]


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_wells_share_the_sequence_of_tracts_fsst_absent_landward(seed):
    result = simulate_stacking(load_stacking_scenario(SCENARIO), seed=seed)
    wells = result.wells
    x = wells["x_km"].to_numpy() / wells["x_km"].max()
    sequences = {c: _steps_upward(result, c) for c in wells["core"]}
    basinward = sequences[wells["core"].iloc[-1]]
    assert any(t == "FSST" for _, t in basinward)
    for core, position in zip(wells["core"], x):
        expected = [s for s in basinward if not (position < 0.3 and s[1] == "FSST")]
        assert sequences[core] == expected, core
    # same shared steps in the same depth order in every well (no crossing)
    for kind in ("MFS", "SB"):
        table = result.surfaces[result.surfaces["surface"] == kind]
        orders = [list(part["step"]) for _, part in table.groupby("core", sort=False)]
        assert all(o == orders[0] for o in orders) and len(orders[0]) >= 2


def test_wells_table_is_a_section_for_correlate():
    result = simulate_stacking(load_stacking_scenario(SCENARIO), seed=4)
    wells = result.wells
    assert list(wells.columns) == ["core", "labelled", "thickness", "section", "x_km"]
    assert (wells["section"] == "stacking-section").all()
    np.testing.assert_allclose(np.diff(wells["x_km"]), 5.0)


def _tst_and_ranks(result, core):
    beds = result.cores.to_frame().query("core == @core")
    thick = (beds["base"] - beds["top"]).to_numpy()
    tst = thick[beds["true_tract"].to_numpy() == "TST"].mean()
    ranks = beds["facies"].map(result.scenario.scheme.rank).to_numpy(float)
    return tst, np.average(ranks, weights=thick)


def test_tst_thins_and_facies_deepen_basinward():
    # the TST bed factor falls from 1 to 1 - tst_thinning; 6 seeds average the noise
    ratios, shifts = [], []
    for seed in range(6):
        result = simulate_stacking(_scenario(tst_thinning=0.5, facies_shift=2), seed=seed)
        first, last = result.wells["core"].iloc[0], result.wells["core"].iloc[-1]
        (tst_a, rank_a), (tst_b, rank_b) = (_tst_and_ranks(result, c) for c in (first, last))
        ratios.append(tst_b / tst_a)
        shifts.append(rank_b - rank_a)
    assert 0.35 < np.mean(ratios) < 0.7
    assert np.mean(shifts) > 0.8  # deeper (higher rank) basinward


def test_no_change_along_the_section_gives_the_same_tracts_in_every_well():
    result = simulate_stacking(_scenario(fsst_landward=0.0, tst_thinning=0.0, facies_shift=0))
    runs = {c: [t for _, t in _steps_upward(result, c)] for c in result.wells["core"]}
    assert all(a == b for a, b in itertools.pairwise(runs.values()))


@pytest.mark.parametrize(
    ("section", "needle"),
    [
        ({"facies_shift": -1}, "section.facies_shift"),
        ({"fsst_landward": 2}, "section.fsst_landward"),
        ({"spacing_km": 0}, "section.spacing_km"),
        ({"width": 3}, "section"),
    ],
)
def test_bad_section_block_is_a_config_error_naming_the_key(tmp_path, section, needle):
    data = yaml.safe_load(SCENARIO.read_text())
    data["section"] = section
    data["scheme"] = str(CONFIGS / "scheme-shoreface.yaml")
    path = tmp_path / "bad.yaml"
    path.write_text(yaml.safe_dump(data))
    with pytest.raises(ConfigError) as info:
        load_any_scenario(path)
    assert needle in str(info.value) and "bad.yaml" in str(info.value)
