"""Forward model: shoreline, tracts and surfaces against facts of the trade.

Sources named beside each check: Catuneanu et al. 2009, "Towards the
standardization of sequence stratigraphy", Earth-Science Reviews 92:1-33;
Helland-Hansen & Martinsen 1996, "Shoreline trajectories and sequences",
J. Sedimentary Research 66; Hunt & Tucker 1992, "Stranded parasequences and the
forced regressive wedge systems tract", Sedimentary Geology 81:1-9.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest

from faciesseq.errors import ConfigError
from faciesseq.scheme import default_tract_model, permissive_tract_model
from faciesseq.simulate import scenario_from_dict, simulate
from faciesseq.simulate.scenario import Noise
from faciesseq.simulate.wells import history_tract_model, surface_path

SCHEME = "configs/scheme-shoreface.yaml"


def _scenario(**overrides):
    """A small, fast scenario: 3 symmetric cycles on a 90 km shelf."""
    data = {
        "name": "test shelf",
        "time": {"duration_kyr": 300, "step_kyr": 1.0},
        "base_level": {
            "kind": "sinusoids",
            "components": [{"amplitude_m": 8, "period_kyr": 100, "phase_deg": 60}],
        },
        "subsidence": {"rate_m_per_kyr": 0.1},
        "supply": {"rate_m2_per_kyr": 15000},
        "profile": {
            "length_km": 90,
            "cell_km": 0.5,
            "shoreline_km": 25,
            "shelf_gradient": 1.0,
            "shelf_break_km": 85,
        },
        "mud": {"fraction": 0.35, "decay_km": 20, "min_depth_m": 6},
        "facies": {
            "scheme": SCHEME,
            "water_depth_m": {
                "CP": 0,
                "FS": 1.5,
                "USF": 5,
                "LSF": 10,
                "OTZ": 18,
                "OFF": 35,
                "SHM": float("inf"),
            },
        },
        "wells": [{"name": f"T-{i}", "x_km": x} for i, x in enumerate((30, 40, 50, 60, 70), 1)],
        "seed": 3,
    }
    for key, value in overrides.items():
        data[key] = value
    return scenario_from_dict(data, source=None)


@pytest.fixture(scope="module")
def quiet():
    """The test shelf without description noise (cores show the deposited record)."""
    return simulate(_scenario())


def _runs(values):
    """(value, start, stop) of runs of equal values."""
    out, start = [], 0
    for i in range(1, len(values) + 1):
        if i == len(values) or values[i] != values[start]:
            out.append((values[start], start, i))
            start = i
    return out


def test_falling_base_level_gives_fsst_and_basinward_shoreline(quiet):
    # Catuneanu et al. 2009; Hunt & Tucker 1992: forced regression during base-level fall
    steps = quiet.steps
    falling = steps["relative_rate_m_per_kyr"] < 0
    assert falling.sum() > 50
    assert (steps.loc[falling, "tract"] == "FSST").all()
    assert (steps.loc[~falling, "tract"] != "FSST").all()
    assert (steps.loc[falling, "shoreline_shift_km"] > 0).all()


def test_transgression_moves_shoreline_landward_and_regression_basinward(quiet):
    # Helland-Hansen & Martinsen 1996: rise faster than sedimentation -> landward
    # (transgressive) trajectory; slower -> basinward (normal regressive) trajectory
    steps = quiet.steps
    tst = steps["tract"] == "TST"
    regressive = steps["tract"].isin(["LST", "HST"])
    assert tst.sum() > 30 and regressive.sum() > 10
    assert (steps.loc[tst, "shoreline_shift_km"] < 0).mean() > 0.97
    assert (steps.loc[regressive, "shoreline_shift_km"] >= -1e-6).mean() > 0.97


def test_shelf_wells_deepen_upward_in_tst_and_shallow_upward_in_fsst(quiet):
    # Catuneanu et al. 2009: TST retrogradational (deepening-upward) stacking; forced
    # regression progradational (shallowing-upward); common practice of core logging
    deepening = shallowing = 0
    for core in quiet.cores:
        table = core.intervals.iloc[::-1]  # base to top
        for tract, start, stop in _runs(table["true_tract"].tolist()):
            depth = table["true_water_depth"].to_numpy()[start:stop]
            if np.ptp(depth) < 1.0:
                continue
            if tract == "TST":
                assert depth[-1] > depth[0], (core.name, start, depth)
                deepening += 1
            if tract == "FSST":
                assert depth[-1] < depth[0], (core.name, start, depth)
                shallowing += 1
    assert deepening >= 5 and shallowing >= 5


def test_slow_rise_progrades_and_fast_rise_transgresses():
    # Helland-Hansen & Martinsen 1996; Catuneanu et al. 2009: a rise slower than
    # sedimentation gives normal regression (shoreline basinward, wells shallowing
    # upward); a rise faster than sedimentation gives transgression (shoreline
    # landward, wells deepening upward). Base level: 0.04 m/kyr for 100 kyr, then
    # 0.4 m/kyr for 50 kyr.
    result = simulate(
        _scenario(
            time={"duration_kyr": 150, "step_kyr": 1.0},
            base_level={"kind": "table", "table": [[0, 0], [100, 4], [150, 24]]},
            subsidence={"rate_m_per_kyr": 0.05},
            wells=[{"name": f"P-{i}", "x_km": x} for i, x in enumerate(range(28, 52, 4), 1)],
        )
    )
    steps = result.steps
    # one normal regression (LST: nothing tells a lowest rate of rise inside it), then TST
    assert steps["tract"].tolist() == ["LST"] * 100 + ["TST"] * 50
    shore = steps["shoreline_km"].to_numpy()
    assert shore[99] - shore[0] > 15 and shore[-1] < shore[99] - 15
    for core in result.cores:
        table = core.intervals.iloc[::-1]  # base to top
        depth = table["true_water_depth"].to_numpy()
        tract = table["true_tract"].to_numpy()
        hst, tst = depth[tract == "LST"], depth[tract == "TST"]
        assert hst[-1] < hst[0] - 2, core.name  # shallowing upward
        assert tst[-1] > tst[0] + 2, core.name  # deepening upward
        ranks = table["facies"].map(result.scenario.scheme.rank).to_numpy()
        assert ranks[tract == "LST"][-1] < ranks[tract == "LST"][0]


def test_tract_order_upward_follows_the_cycle(quiet):
    # Catuneanu et al. 2009: HST -> FSST -> LST -> TST -> HST upward
    model = history_tract_model(default_tract_model())
    allowed = model.allowed()
    idx = {c: i for i, c in enumerate(model.order)}
    runs = [t for t, _, _ in _runs(quiet.steps["tract"].tolist())]
    for lower, upper in itertools.pairwise(runs):
        assert allowed[idx[lower]][idx[upper]], (lower, upper)
    assert " ".join(runs).count("HST FSST LST TST") >= 3
    # and in every core, upward, the true tracts keep the same order
    for core in quiet.cores:
        upward = [t for t, _, _ in _runs(core.intervals["true_tract"].tolist()[::-1])]
        for lower, upper in itertools.pairwise(upward):
            order = model.order
            step = (order.index(upper) - order.index(lower)) % len(order)
            assert step != 0, (core.name, lower, upper)


def test_no_fsst_when_subsidence_outpaces_the_fastest_fall():
    # Catuneanu et al. 2009 (common practice): no forced regression without relative fall.
    # Fastest eustatic fall of 8 sin(2 pi t / 100): 8 * 2 pi / 100 = 0.50 m/kyr.
    fast = simulate(
        _scenario(subsidence={"rate_m_per_kyr": 0.6}, supply={"rate_m2_per_kyr": 40000})
    )
    assert "FSST" not in set(fast.steps["tract"])
    assert "FSST" not in set(fast.to_frame()["true_tract"])
    assert not fast.surfaces["surface"].eq("BSFR").any()
    slow = simulate(
        _scenario(subsidence={"rate_m_per_kyr": 0.4}, supply={"rate_m2_per_kyr": 40000})
    )
    assert "FSST" in set(slow.steps["tract"])


def test_no_tst_when_supply_outpaces_the_fastest_rise():
    # Catuneanu et al. 2009 (common practice): with sedimentation faster than every
    # rise the shoreline never transgresses and no TST forms
    rich = simulate(_scenario(supply={"rate_m2_per_kyr": 400000}))
    assert "TST" not in set(rich.steps["tract"])
    assert not rich.surfaces["surface"].isin(["MRS", "MFS"]).any()
    poor = simulate(_scenario(supply={"rate_m2_per_kyr": 15000}))
    assert "TST" in set(poor.steps["tract"])


def test_mfs_at_the_turnaround_from_deepening_to_shallowing(quiet):
    # Catuneanu et al. 2009: the MFS marks the end of transgression; at a well it lies
    # at the most distal facies between the surfaces below and above it, within one bed
    scheme = quiet.scenario.scheme
    checked = 0
    for core in quiet.cores:
        table = core.intervals
        picks = quiet.surfaces[quiet.surfaces["core"] == core.name]
        depths = picks["depth"].to_numpy()
        for mfs in picks.loc[picks["surface"] == "MFS", "depth"]:
            below = depths[depths > mfs + 1e-9]
            above = depths[depths < mfs - 1e-9]
            lo = below.min() if len(below) else np.inf
            hi = above.max() if len(above) else -np.inf
            window = table[(table["base"] <= lo + 1e-9) & (table["top"] >= hi - 1e-9)]
            # beds inside the window: runs of one facies, depth order
            runs = _runs(window["facies"].tolist())
            if len(runs) < 3:
                continue
            ranks = [scheme.rank(f) for f, _, _ in runs]
            tops = [window["top"].iloc[a] for _, a, _ in runs]
            bases = [window["base"].iloc[b - 1] for _, _, b in runs]
            holding = [i for i in range(len(runs)) if tops[i] - 1e-9 <= mfs <= bases[i] + 1e-9]
            deepest = [i for i in range(len(runs)) if ranks[i] == max(ranks)]
            gap = min(abs(i - j) for i in holding for j in deepest)
            assert gap <= 1, (core.name, mfs, runs)
            checked += 1
    assert checked >= 4


def test_sediment_budget_closes():
    # mass balance (common practice): supplied + eroded = deposited + bypassed, and what
    # stays in the section is what was deposited less what was eroded
    result = simulate(_scenario())
    for row in result.budget.to_dict("records"):
        assert row["supplied"] + row["eroded"] == pytest.approx(
            row["deposited"] + row["bypassed"], rel=1e-9
        )
        assert row["preserved"] == pytest.approx(row["deposited"] - row["eroded"], rel=1e-9)
        assert row["eroded"] > 0 and row["bypassed"] >= 0
        hist = result.sections[row["section"]]
        # the preserved volume measured on the final section (time lines)
        dx = hist.x_km[1] - hist.x_km[0]
        measured = hist.preserved_m()[-1].sum() * dx * 1000
        assert measured == pytest.approx(row["supplied"] - row["bypassed"], rel=1e-9)


def test_noise_free_core_holds_the_section_thickness(quiet):
    for well, core in zip(quiet.scenario.wells, quiet.cores):
        hist = quiet.sections[well.section]
        j = int(np.argmin(np.abs(hist.x_km - well.x_km)))
        assert core.thickness == pytest.approx(hist.sediment_m[-1, j], abs=0.011)
        assert core.gaps() == []


def test_noise_changes_the_description_not_the_truth():
    data = {
        "noise": {
            "facies_swap": 0.2,
            "thickness_jitter": 0.1,
            "missing_per_100m": 5,
            "label_shift": 0.3,
        }
    }
    noisy = simulate(_scenario(**data))
    table = noisy.to_frame()
    swapped = table["facies"] != table["true_facies"]
    assert 0.1 < swapped.mean() < 0.3
    scheme = noisy.scenario.scheme
    diff = (table["facies"].map(scheme.rank) - table["true_facies"].map(scheme.rank)).abs()
    assert set(diff[swapped]) == {1.0}
    assert sum(len(c.gaps()) for c in noisy.cores) > 0
    assert (~noisy.surfaces["cored"]).sum() >= 0
    # same seed, same cores; another seed, other cores
    again = simulate(_scenario(**data))
    assert table.equals(again.to_frame())
    other = simulate(_scenario(**data), seed=4)
    assert not table.equals(other.to_frame())
    assert noisy.steps.equals(other.steps)


def test_labels_only_on_labelled_wells():
    wells = [{"name": "L", "x_km": 45, "labelled": True}, {"name": "U", "x_km": 55}]
    result = simulate(_scenario(wells=wells))
    table = result.to_frame()
    assert table.loc[table["core"] == "L", "tract"].notna().all()
    assert table.loc[table["core"] == "U", "tract"].isna().all()
    assert (
        table.loc[table["core"] == "L", "tract"] == table.loc[table["core"] == "L", "true_tract"]
    ).all()


@pytest.mark.parametrize(
    ("change", "needle"),
    [
        ({"colour": 1}, "unknown key"),
        ({"time": {"duration_kyr": -1, "step_kyr": 1}}, "time.duration_kyr"),
        ({"facies": {"scheme": SCHEME, "water_depth_m": {"XX": 1}}}, "'XX'"),
        ({"wells": [{"name": "A", "x_km": 500}]}, "beyond"),
        ({"base_level": {"kind": "sawtooth"}}, "base_level.kind"),
        ({"supply": None}, r"^supply: missing: give rate_m2_per_kyr .* or table"),
        ({"supply": {}}, r"^supply: missing: give rate_m2_per_kyr .* or table"),
        ({"subsidence": None}, r"^subsidence: missing: give rate_m_per_kyr .* or "),
    ],
)
def test_scenario_errors_name_the_key(change, needle):
    with pytest.raises(ConfigError, match=needle):
        _scenario(**change)


def test_noise_default_is_off():
    assert _scenario().noise == Noise()


@pytest.mark.parametrize(
    "path", ["configs/scenario-ramp.yaml", "configs/scenario-hinge-table.yaml"]
)
def test_shipped_scenarios_run_with_tracts_in_the_model_order(path):
    # Catuneanu et al. 2009: every boundary between successive tracts is one the
    # four-tract cycle allows (HST -> FSST -> LST -> TST -> HST, FSST and TST skippable)
    from faciesseq.simulate import load_scenario

    result = simulate(load_scenario(path))
    model = history_tract_model(default_tract_model())
    allowed = model.allowed()
    idx = {c: i for i, c in enumerate(model.order)}
    runs = [t for t, _, _ in _runs(result.steps["tract"].tolist())]
    assert {"HST", "FSST", "LST", "TST"} <= set(runs)
    for lower, upper in itertools.pairwise(runs):
        assert allowed[idx[lower]][idx[upper]], (path, lower, upper)
    assert set(result.surfaces["surface"]) >= {"BSFR", "SB", "MRS", "MFS"}


def test_conformable_facies_successions_obey_walthers_law(quiet):
    # Walther's law (common practice): facies that follow each other upward without a
    # break in deposition were neighbours on the profile, one rank apart at most
    from faciesseq.simulate.wells import well_layers

    scheme = quiet.scenario.scheme
    hist = quiet.sections["dip"]
    checked = 0
    for well in quiet.scenario.wells:
        layers = well_layers(hist, well, quiet.scenario)
        ranks = layers["facies"].map(scheme.rank).to_numpy()
        unbroken = (layers["hiatus_kyr"].to_numpy()[1:] == 0) & (
            layers["eroded_below"].to_numpy()[1:] == 0
        )
        change = ranks[1:] != ranks[:-1]
        assert (np.abs(np.diff(ranks))[unbroken] <= 1).all(), well.name
        checked += int((unbroken & change).sum())
    assert checked > 20


def test_erosion_only_where_exposed_during_fall(quiet):
    # the rule: the top of the section is eroded where it is exposed while
    # base level falls (subaerial unconformity; Catuneanu et al. 2009)
    hist = quiet.sections["dip"]
    eroded = hist.eroded_m > 0
    falling = hist.relative_rate_m_per_kyr < 0
    assert eroded.any()
    assert not eroded[~falling].any()
    for k in np.nonzero(eroded.any(axis=1))[0]:
        before = hist.elevation(k) - hist.subsidence_m_per_kyr * (
            hist.time_kyr[k + 1] - hist.time_kyr[k]
        )
        assert (before[eroded[k]] > hist.base_level_m[k + 1]).all()


def test_true_surfaces_of_a_tract_missing_at_a_well_are_listed_together():
    # Catuneanu et al. 2009 (Earth-Science Reviews 92:1-33): where the highstand is
    # missing at a well, the MFS and the basal surface of forced regression coincide;
    # where the lowstand is missing, the sequence boundary and the MRS. The decoding
    # permissive model lets any tract be absent (direct TST -> FSST), the truth keeps both.
    model = permissive_tract_model()
    assert model.allowed()[3][1]  # TST -> FSST is a boundary of the decoding model
    history = history_tract_model(model)
    assert surface_path(history, "TST", "FSST") == [("TST", "HST"), ("HST", "FSST")]
    assert surface_path(history, "FSST", "TST") == [("FSST", "LST"), ("LST", "TST")]
    # no relative fall: HST straight to LST under one sequence boundary, no BSFR
    assert surface_path(history, "HST", "LST") == [("HST", "LST")]
    assert model.surface("HST", "LST").code == "SB"
    assert surface_path(model, "TST", "FSST") == [("TST", "FSST")]


def test_simulate_takes_the_path_of_a_scenario_file_of_either_generator():
    # the Python entry point reads a scenario file as `faciesseq simulate` does
    from faciesseq.simulate import load_scenario
    from faciesseq.simulate.stacking import StackingResult

    ramp = "configs/scenario-ramp.yaml"
    by_path = simulate(ramp, seed=3)
    by_object = simulate(load_scenario(ramp), seed=3)
    assert by_path.cores.to_frame().equals(by_object.cores.to_frame())
    stacked = simulate(Path("configs/stacking-shoreface.yaml"), seed=3)
    assert isinstance(stacked, StackingResult)
    with pytest.raises(TypeError, match="Scenario"):
        simulate({"name": "x"})


def test_base_level_figure_legends_cover_no_curve(quiet):
    """The legends of the base-level figure stand beside the panels, so no peak of the
    base level or of a rate is hidden behind one (they sat on the upper right)."""
    import matplotlib

    matplotlib.use("Agg")
    from faciesseq.report.simulation_figures import base_level_figure

    name, history = next(iter(quiet.sections.items()))
    fig = base_level_figure(history, quiet.scenario)
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    legends = [(ax, ax.get_legend()) for ax in fig.axes if ax.get_legend() is not None]
    assert len(legends) == 2
    for ax, legend in legends:
        box, panel = legend.get_window_extent(renderer), ax.get_window_extent(renderer)
        assert not box.overlaps(panel), name
    import matplotlib.pyplot as plt

    plt.close(fig)


def test_simulation_figures_draw_each_tract_in_the_colour_of_every_other_output(quiet):
    """A tract keeps one colour in every figure (common practice in a report): the
    base-level figure's tract bands and the section's shoreline trajectory take the
    project's palette, the one of the strip logs, sections and views."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.colors import to_hex
    from matplotlib.patches import Rectangle

    from faciesseq.report.simulation_figures import base_level_figure
    from faciesseq.report.style import TRACT_COLOURS

    name, history = next(iter(quiet.sections.items()))
    fig = base_level_figure(history, quiet.scenario)
    bands = {
        to_hex(p.get_facecolor(), keep_alpha=False)
        for ax in fig.axes
        for p in ax.patches
        if isinstance(p, Rectangle) or p.get_label().startswith("_")
    }
    legend = {
        t.get_text(): to_hex(h.get_facecolor(), keep_alpha=False)
        for ax in fig.axes
        if ax.get_legend() is not None
        for h, t in zip(ax.get_legend().legend_handles, ax.get_legend().get_texts(), strict=True)
        if t.get_text() in TRACT_COLOURS
    }
    plt.close(fig)
    assert legend == TRACT_COLOURS, name
    assert bands and bands <= set(TRACT_COLOURS.values()), bands
