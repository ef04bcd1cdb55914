"""The parasequence-stacking generator: repeatability, tract order, stacking, beds, surfaces, CLI.

Stacking patterns per tract: Van Wagoner et al. 1990, Siliciclastic sequence
stratigraphy in well logs, cores and outcrops (AAPG Methods in Exploration 7);
Catuneanu et al. 2009, Earth-Science Reviews 92:1-33.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml

from faciesseq.cli import main
from faciesseq.errors import ConfigError
from faciesseq.simulate import (
    load_any_scenario,
    load_stacking_scenario,
    simulate_stacking,
    stacking_scenario_from_dict,
)

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"

#: Upward tract changes allowed: the cyclic order, or one step over a missing FSST or TST.
ALLOWED = {
    ("HST", "FSST"),
    ("FSST", "LST"),
    ("LST", "TST"),
    ("TST", "HST"),
    ("HST", "LST"),  # FSST missing
    ("LST", "HST"),  # TST missing
}


def _scenario(name: str = "stacking-shoreface", **changes):
    data = yaml.safe_load((CONFIGS / f"{name}.yaml").read_text())
    data.update(changes)
    return stacking_scenario_from_dict(data, source=str(CONFIGS / f"{name}.yaml"))


def _runs(values: np.ndarray) -> list[tuple[int, int]]:
    """``(start, stop)`` of each run of equal values."""
    change = np.r_[0, np.nonzero(values[1:] != values[:-1])[0] + 1, len(values)]
    return list(itertools.pairwise(change))


def _tract_runs_upward(frame: pd.DataFrame) -> dict[str, list[str]]:
    """The true tracts of each core, base to top, one entry per tract run."""
    out = {}
    for core, part in frame.groupby("core", sort=False):
        tracts = part["true_tract"].to_numpy(dtype=object)[::-1]
        out[core] = [tracts[a] for a, _ in _runs(tracts)]
    return out


def test_same_seed_same_tables_other_seed_other_cores():
    scenario = _scenario()
    a, b = simulate_stacking(scenario, seed=4), simulate_stacking(scenario, seed=4)
    pd.testing.assert_frame_equal(a.to_frame(), b.to_frame())
    pd.testing.assert_frame_equal(a.surfaces, b.surfaces)
    pd.testing.assert_frame_equal(a.parasequences, b.parasequences)
    assert not a.to_frame().equals(simulate_stacking(scenario, seed=5).to_frame())
    # None takes the scenario's own seed
    pd.testing.assert_frame_equal(
        simulate_stacking(scenario).to_frame(),
        simulate_stacking(scenario, seed=scenario.seed).to_frame(),
    )


def test_columns_depths_and_labels():
    result = simulate_stacking(_scenario(), seed=1)
    frame = result.to_frame()
    assert list(frame.columns) == [
        "core",
        "top",
        "base",
        "facies",
        "contact",
        "grain_size",
        "tract",
        "true_tract",
        "units",
    ]
    for _, part in frame.groupby("core"):
        top, base = part["top"].to_numpy(), part["base"].to_numpy()
        assert top[0] == 0.0 and (base > top).all()
        np.testing.assert_allclose(top[1:], base[:-1])  # contiguous, no gaps
    labelled = frame.groupby("core")["tract"].apply(lambda s: s.notna().all())
    blank = frame.groupby("core")["tract"].apply(lambda s: s.isna().all())
    assert labelled.sum() == 4 and blank.sum() == 4  # labelled_fraction 0.5 of 8 cores
    filled = frame[frame["tract"].notna()]
    assert (filled["tract"] == filled["true_tract"]).all()


def test_tracts_follow_the_cyclic_order_and_missing_rates():
    result = simulate_stacking(_scenario(cores=60), seed=2)
    runs = _tract_runs_upward(result.to_frame())
    pairs = [p for tracts in runs.values() for p in itertools.pairwise(tracts)]
    assert set(pairs) <= ALLOWED
    assert all(tracts[0] == "HST" for tracts in runs.values())
    # fsst_missing 0.2, tst_missing 0.05 per sequence (binomial, ~150 sequences)
    after_hst = [b for a, b in pairs if a == "HST"]
    assert 0.1 < after_hst.count("LST") / len(after_hst) < 0.3
    after_lst = [b for a, b in pairs if a == "LST"]
    assert after_lst.count("HST") / len(after_lst) < 0.12


def test_fsst_missing_one_means_no_fsst_and_zero_means_full_sequences():
    none = simulate_stacking(_scenario(cores=20, fsst_missing=1.0), seed=3).to_frame()
    assert "FSST" not in set(none["true_tract"])
    assert {"HST", "LST", "TST"} <= set(none["true_tract"])
    full = simulate_stacking(_scenario(cores=20, fsst_missing=0.0, tst_missing=0.0), seed=3)
    for tracts in _tract_runs_upward(full.to_frame()).values():
        assert len(tracts) % 4 == 0
        assert tracts == ["HST", "FSST", "LST", "TST"] * (len(tracts) // 4)


def _top_rank_steps(frame: pd.DataFrame, rank) -> dict[str, list[float]]:
    """Per tract run: mean upward change of parasequence top ranks, read from the logged beds.

    A parasequence ends where the facies deepens upward (a flooding surface); its
    top is the last, shallowest bed before that (Van Wagoner et al. 1990).
    """
    steps: dict[str, list[float]] = {}
    for _, part in frame.groupby("core", sort=False):
        up = part.iloc[::-1]
        ranks = up["facies"].map(rank).to_numpy(dtype=float)
        tracts = up["true_tract"].to_numpy(dtype=object)
        for a, b in _runs(tracts):
            r = ranks[a:b]
            tops = r[np.r_[np.nonzero(np.diff(r) > 0)[0], len(r) - 1]]
            if len(tops) >= 2:
                steps.setdefault(tracts[a], []).append(float(np.mean(np.diff(tops))))
    return steps


def test_tst_tops_deepen_upward_and_hst_tops_shallow_upward():
    scenario = _scenario(cores=40)
    steps = _top_rank_steps(simulate_stacking(scenario, seed=6).to_frame(), scenario.scheme.rank)
    tst, hst = np.array(steps["TST"]), np.array(steps["HST"])
    # measured: TST +1.4 ranks per parasequence, HST -1.1 (seed 1, 60 cores)
    assert tst.mean() > 0.8 and (tst > 0).mean() > 0.9
    assert hst.mean() < -0.6 and (hst < 0).mean() > 0.9


def test_parasequence_bases_lie_on_flooding_surfaces_but_the_fsst_shifts_down():
    """Each planned parasequence base is deeper than the planned top below it (a
    flooding surface; Van Wagoner et al. 1990), except at the base of the FSST,
    where forced regression puts shallower facies on the highstand with facies
    missing: a downward shift (Plint & Nummedal 2000, Geol. Soc. London Spec.
    Publ. 172:1-17)."""
    result = simulate_stacking(_scenario(cores=20), seed=7)
    rank = result.scenario.scheme.rank
    shifts = []
    for _, part in result.parasequences.groupby("core", sort=False):
        up = part.iloc[::-1]
        base = up["base_facies"].map(rank).to_numpy()
        top = up["top_facies"].map(rank).to_numpy()
        fall = ((up["tract"] == "FSST") & (up["position"] == 1)).to_numpy()[1:]
        assert (base[1:][~fall] > top[:-1][~fall]).all()
        shifts += list(top[:-1][fall] - base[1:][fall])
        assert (base >= top).all()
        np.testing.assert_allclose(part["top"].to_numpy()[1:], part["base"].to_numpy()[:-1])
    shifts = np.array(shifts)
    assert len(shifts) > 10 and (shifts >= 1).all() and np.mean(shifts >= 2) > 0.8


def test_equal_beds_give_no_thickness_cue_and_default_beds_do():
    frame = simulate_stacking(_scenario("stacking-equal-beds", cores=60), seed=8).to_frame()
    assert "contact" not in frame.columns
    means = (frame["base"] - frame["top"]).groupby(frame["true_tract"]).mean()
    assert len(means) == 4 and means.max() / means.min() < 1.15
    # the default scenario does carry the cue: FSST beds thinner than HST beds
    default = simulate_stacking(_scenario(cores=60), seed=8).to_frame()
    means = (default["base"] - default["top"]).groupby(default["true_tract"]).mean()
    assert means["FSST"] < 0.5 * means["HST"]


def test_optional_columns_follow_the_scenario():
    frame = simulate_stacking(_scenario(contacts=False, grain_size=False), seed=1).to_frame()
    assert "contact" not in frame.columns and "grain_size" not in frame.columns
    minimal = load_stacking_scenario(CONFIGS / "stacking-minimal-table.yaml")
    frame = simulate_stacking(minimal, seed=1).to_frame()
    assert "contact" not in frame.columns and "grain_size" not in frame.columns


def test_surfaces_match_the_true_tract_boundaries():
    result = simulate_stacking(_scenario("stacking-thin-tracts"), seed=9)
    frame = result.to_frame()
    names = {("TST", "HST"): "MFS", ("HST", "FSST"): "BSFR", ("FSST", "LST"): "SB"}
    names |= {("LST", "TST"): "MRS", ("HST", "LST"): "SB", ("LST", "HST"): "LHB"}
    for core, part in frame.groupby("core", sort=False):
        tracts = part["true_tract"].to_numpy(dtype=object)
        change = np.nonzero(tracts[1:] != tracts[:-1])[0]  # row above the change
        surfaces = result.surfaces[result.surfaces["core"] == core]
        np.testing.assert_allclose(surfaces["depth"], part["base"].to_numpy()[change])
        assert list(surfaces["upper_tract"]) == list(tracts[change])
        assert list(surfaces["lower_tract"]) == list(tracts[change + 1])
        assert list(surfaces["surface"]) == [
            names[(a, b)] for a, b in zip(surfaces["lower_tract"], surfaces["upper_tract"])
        ]
        # the sequence boundary under a lowstand is erosional where cored
        on_sb = part["contact"].to_numpy()[change][surfaces["upper_tract"].to_numpy() == "LST"]
        assert (on_sb == "erosional").all()
    assert result.surfaces["cored"].all()


@pytest.mark.parametrize(
    ("data", "needle"),
    [
        ({"generator": "stacking", "colour": "red"}, "colour"),
        ({"generator": "stacking", "parasequences": {"XST": [1, 2]}}, "XST"),
        ({"generator": "stacking", "noise": {"swap": 0.1}}, "noise"),
        ({"generator": "stacking", "fsst_missing": 1.5}, "fsst_missing"),
        ({"generator": "stacking", "parasequences": {"HST": [4, 2]}}, "parasequences.HST"),
        ({"generator": "stacking", "bed_thickness": {"mean": 0.5}}, "bed_thickness.mean"),
        ({"generator": "stacking", "contacts": "yes"}, "contacts"),
        ({"generator": "physics"}, "generator"),
    ],
)
def test_bad_key_or_value_is_a_config_error_naming_file_and_key(tmp_path, data, needle):
    path = tmp_path / "bad.yaml"
    data["scheme"] = str(CONFIGS / "scheme-shoreface.yaml")
    path.write_text(yaml.safe_dump(data))
    with pytest.raises(ConfigError) as info:
        load_any_scenario(path)
    assert needle in str(info.value) and "bad.yaml" in str(info.value)


def test_shipped_scenarios_load():
    shipped = sorted(CONFIGS.glob("stacking-*.yaml"))
    assert len(shipped) >= 8
    for path in shipped:
        scenario = load_stacking_scenario(path)
        assert scenario.name == path.stem
        assert scenario.scheme.name == "wave-dominated shoreface-shelf"
    thin = load_stacking_scenario(CONFIGS / "stacking-thin-tracts.yaml")
    assert thin.fsst_missing > 0.5 and thin.parasequences["HST"] == (1, 3)


def test_cli_writes_cores_and_refuses_an_existing_output(tmp_path, capsys):
    scenario = str(CONFIGS / "stacking-shoreface.yaml")
    out = tmp_path / "run"
    assert main(["simulate", scenario, "-o", str(out)]) == 0
    files = {p.name for p in out.iterdir()}
    assert {"cores.csv", "surfaces.csv", "scenario.yaml", "summary.json"} <= files
    assert not any(name.endswith(".png") for name in files)
    cores = pd.read_csv(out / "cores.csv")
    expected = simulate_stacking(load_stacking_scenario(scenario)).to_frame()
    assert len(cores) == len(expected) and list(cores.columns) == list(expected.columns)
    capsys.readouterr()
    assert main(["simulate", scenario, "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "--force" in err
    assert main(["simulate", scenario, "-o", str(out), "--force", "--seed", "3"]) == 0
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_default_scheme_loads_outside_the_source_tree(tmp_path, monkeypatch):
    """A stacking scenario without ``scheme`` reads the shipped shoreface scheme from
    any working folder, not only from the top of a source checkout."""
    path = tmp_path / "plain.yaml"
    path.write_text("generator: stacking\ncores: 2\n")
    monkeypatch.chdir(tmp_path)
    scenario = load_stacking_scenario(path)
    assert scenario.scheme.name == "wave-dominated shoreface-shelf"


@pytest.mark.parametrize(
    ("text", "key"),
    [
        ("generator: stacking\nscheme: nowhere.yaml\n", "scheme"),
        (None, "facies.scheme"),
    ],
)
def test_missing_scheme_file_names_the_scenario_and_the_key(tmp_path, text, key):
    path = tmp_path / "bad.yaml"
    if text is None:
        data = yaml.safe_load((CONFIGS / "scenario-ramp.yaml").read_text())
        data["facies"]["scheme"] = "nowhere.yaml"
        text = yaml.safe_dump(data)
    path.write_text(text)
    with pytest.raises(ConfigError) as info:
        load_any_scenario(path)
    message = str(info.value)
    assert message.startswith(f"{path}: {key}: ") and "nowhere.yaml" in message


@pytest.mark.parametrize(
    ("name", "kind"),
    [("scheme-shoreface.yaml", "a facies scheme"), ("tracts-default.yaml", "a tract model")],
)
def test_a_scheme_or_tract_model_given_as_scenario_says_what_the_file_is(name, kind):
    with pytest.raises(ConfigError) as info:
        load_any_scenario(CONFIGS / name)
    assert f"{name}: {kind}, not a simulation scenario" in str(info.value)
