"""Evidence weights of the stacking context: evidence shared by beds counted once.

Checks: the weights follow from the windows' definitions (a composite likelihood
with weights, Lindsay 1988, Contemporary Mathematics 80:221-239; Varin, Reid &
Firth 2011, Statistica Sinica 21:5-42); a weighted table scales its log-probability
and its counts alike, so EM never lowers the weighted objective (Dempster, Laird &
Rubin 1977); weights travel with the model file and are validated there.
"""

from __future__ import annotations

import json
import math
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml

from faciesseq.core import CoreSet
from faciesseq.cycles import POSITION_HALF_WIDTH, TREND_HALF_WIDTH, beds_per_cycle
from faciesseq.errors import ConfigError, ModelFileError
from faciesseq.hmm import TractHMM
from faciesseq.hmm.context import ContextEmission, evidence_weights
from faciesseq.hmm.modelfile import load_model, save_model
from faciesseq.scheme import load_scheme
from faciesseq.simulate import simulate_stacking, stacking_scenario_from_dict

ROOT = Path(__file__).resolve().parents[1]
SCHEME = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")


def test_beds_per_cycle_counts_the_cycles_cut_at_flooding_steps():
    # ranks base to top: 3 2 1 | 3 2 2 in one succession, 4 | 5 in another
    ranks = np.array([3, 2, 1, 3, 2, 2, 4, 5], dtype=float)
    assert beds_per_cycle(ranks, np.array([6, 2])) == pytest.approx(8 / 4)
    assert beds_per_cycle(np.zeros(0), np.zeros(0, dtype=int)) == 1.0


def test_weights_are_one_over_the_beds_each_window_spans():
    w = evidence_weights(2.5)
    assert w["trend"] == pytest.approx(1 / (2 * TREND_HALF_WIDTH + 1))
    assert w["position"] == pytest.approx(1 / (2 * POSITION_HALF_WIDTH + 1))
    assert w["cycle_amplitude"] == w["cycle_sharpness"] == pytest.approx(1 / 2.5)
    assert w["base_shift"] == pytest.approx(1 / 5)
    assert w["cycle_stacking"] == w["local_position"] == pytest.approx(1 / 7.5)
    assert w["setting"] == w["exposure"] == 1.0
    # a database of one-bed cycles: no weight above 1
    assert max(evidence_weights(0.5).values()) == 1.0


def test_a_weighted_table_scales_its_log_probability_and_its_counts():
    plain = ContextEmission("trend", 4)
    half = ContextEmission("trend", 4, weight=0.5)
    obs = np.array([0, 3, -1, 2, 4])
    np.testing.assert_allclose(half.log_prob_of(obs), 0.5 * plain.log_prob_of(obs))
    weights = np.random.default_rng(0).dirichlet(np.ones(4), size=len(obs))
    a, b = plain.empty_stats(4), half.empty_stats(4)
    plain.accumulate_of(a, obs, weights)
    half.accumulate_of(b, obs, weights)
    np.testing.assert_allclose(b["counts"], 0.5 * a["counts"])


@pytest.mark.parametrize("bad", [0, 0.0, -0.2, 1.5, "0.5", True, None, [0.5]])
def test_a_model_file_weight_outside_zero_to_one_is_refused(bad):
    data = ContextEmission("trend", 4, weight=0.25).to_dict()
    assert data["weight"] == 0.25
    assert ContextEmission.from_dict(data, 4).weight == 0.25
    data["weight"] = bad
    with pytest.raises(ModelFileError, match="weight"):
        ContextEmission.from_dict(data, 4, source="m.json")


def test_a_nan_weight_is_refused():
    data = ContextEmission("trend", 4, weight=0.25).to_dict()
    data["weight"] = math.nan
    with pytest.raises(ModelFileError, match="weight"):
        ContextEmission.from_dict(data, 4)


def _stacking_cores(seeds) -> CoreSet:
    data = yaml.safe_load((ROOT / "configs" / "stacking-shoreface.yaml").read_text())
    data.update({"cores": 4, "labelled_fraction": 0.0})
    scenario = stacking_scenario_from_dict(
        data, source=str(ROOT / "configs" / "stacking-shoreface.yaml")
    )
    frames = []
    for seed in seeds:
        t = simulate_stacking(scenario, seed=seed).cores.to_frame()
        t["core"] = t["core"] + f"/s{seed}"
        frames.append(t.drop(columns=["tract"], errors="ignore"))
    return CoreSet.from_frame(pd.concat(frames, ignore_index=True), units="m")


@pytest.fixture(scope="module")
def weighted():
    cores = _stacking_cores([31, 32])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=SCHEME, weigh_evidence=True, random_state=0).fit(cores)
    return model, cores


def test_a_weighted_fit_weighs_each_context_piece_and_never_lowers_its_objective(weighted):
    model, _ = weighted
    assert model.evidence_weights_["position"] < model.evidence_weights_["trend"] < 1.0
    for p in model.emissions_:
        if isinstance(p, ContextEmission):
            assert p.weight == pytest.approx(model.evidence_weights_[p.feature])
    for run in model.restarts_:
        history = np.asarray(run["history"])
        assert np.all(np.diff(history) >= -1e-9 * np.abs(history[:-1]))


def test_the_weights_travel_with_the_model_file(weighted, tmp_path):
    model, cores = weighted
    path = tmp_path / "m.json"
    save_model(model, path)
    doc = json.loads(path.read_text())
    assert doc["hyperparameters"]["weigh_evidence"] is True
    loaded = load_model(path)
    assert loaded.weigh_evidence is True
    a, b = model.decode(cores).tracts_table(), loaded.decode(cores).tracts_table()
    pd.testing.assert_frame_equal(a, b)
    # a file written before the weights existed reads as unweighted
    doc["hyperparameters"].pop("weigh_evidence")
    for e in doc["parameters"]["emissions"]:
        e.pop("weight", None)
    path.write_text(json.dumps(doc))
    old = load_model(path)
    assert old.weigh_evidence is False
    assert all(getattr(p, "weight", 1.0) == 1.0 for p in old.emissions_)


def test_weighted_fits_are_the_default_and_unweighted_ones_count_every_bed():
    assert TractHMM(scheme=SCHEME).weigh_evidence is True
    model = TractHMM(scheme=SCHEME, weigh_evidence=False)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model.fit(_stacking_cores([31]))
    assert model.evidence_weights_ == {}
    assert all(getattr(p, "weight", 1.0) == 1.0 for p in model.emissions_)


def test_a_weighted_fit_with_more_tract_changes_than_cycles_is_done_again_without_weights(
    monkeypatch, tmp_path
):
    # Tracts shorter than a parasequence are not a reading the trade allows (a
    # systems tract is made of parasequences; Van Wagoner et al. 1990): forced here by
    # counting one cycle in the whole database.
    import faciesseq.hmm.model as model_module

    cores = _stacking_cores([31])
    monkeypatch.setattr(model_module, "beds_per_cycle", lambda ranks, lengths, *a: len(ranks))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=SCHEME, weigh_evidence=True, random_state=0).fit(cores)
        plain = TractHMM(scheme=SCHEME, weigh_evidence=False, random_state=0).fit(cores)
    assert model.weigh_evidence is True and model.evidence_weights_ == {}
    assert model.weights_rejected_["cycles"] == pytest.approx(1.0)
    assert model.weights_rejected_["expected_tract_changes"] > 1.0
    # the square roots of the weights gave such tracts too (one cycle): no weights
    assert model.weights_rejected_["refitted_with"] == "no weights"
    np.testing.assert_array_equal(model.transmat_, plain.transmat_)
    assert model.graph_selection_ == plain.graph_selection_
    path = tmp_path / "m.json"
    save_model(model, path)
    doc = json.loads(path.read_text())
    assert doc["training"]["evidence_weights_rejected"] == model.weights_rejected_
    loaded = load_model(path)
    assert loaded.weights_rejected_ == model.weights_rejected_
    assert "the fit without them" in _methods_text(loaded)


def test_a_refused_weighting_is_tried_again_with_the_square_roots_of_the_weights(
    weighted, monkeypatch, tmp_path
):
    # The full weights refused, their square roots accepted (forced here: the check
    # refuses the full weights only), the model keeps the weaker weights and says why.
    full, cores = weighted
    monkeypatch.setattr(
        TractHMM,
        "_tracts_shorter_than_cycles",
        lambda self: bool(self.evidence_weights_) and self.weigh_evidence is True,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=SCHEME, weigh_evidence=True, random_state=0).fit(cores)
    assert model.weigh_evidence is True  # the setting asked for is kept
    assert model.weights_rejected_["refitted_with"] == "square roots of the weights"
    assert model.evidence_weights_ == pytest.approx(
        {f: w**0.5 for f, w in full.evidence_weights_.items()}
    )
    for p in model.emissions_:
        if isinstance(p, ContextEmission):
            assert p.weight == pytest.approx(model.evidence_weights_[p.feature])
    path = tmp_path / "m.json"
    save_model(model, path)
    loaded = load_model(path)
    assert loaded.weights_rejected_ == model.weights_rejected_
    pd.testing.assert_frame_equal(
        model.decode(cores).tracts_table(), loaded.decode(cores).tracts_table()
    )
    described = _methods_text(loaded)
    assert "square roots of those weights" in described and "position 0.24" in described


def test_weigh_evidence_is_true_false_or_a_power_up_to_one():
    cores = _stacking_cores([31])
    for bad in (0, 1.5, -0.5, "yes", float("nan")):
        with pytest.raises(ConfigError, match="weigh_evidence"):
            TractHMM(scheme=SCHEME, weigh_evidence=bad).fit(cores)


def test_a_weighted_fit_that_keeps_its_tracts_longer_than_cycles_keeps_its_weights(weighted):
    model, _ = weighted
    assert model.weights_rejected_ is None
    assert 0 < model.tract_changes_ < model.n_cycles_


def test_fit_says_which_evidence_weights_it_used(tmp_path, capsys):
    from faciesseq.cli import main

    source = tmp_path / "cores.csv"
    _stacking_cores([31]).to_frame().to_csv(source, index=False)
    scheme = ROOT / "configs" / "scheme-shoreface.yaml"
    argv = ["fit", str(source), "--scheme", str(scheme), "-o", str(tmp_path / "m.json")]
    for weigh in ([], ["--weigh-evidence"]):  # the default, and said (a diagnostic)
        assert main([*argv, *weigh, "--force", "--verbose"]) == 0
        out = capsys.readouterr().out
        assert "evidence weights of the context: " in out and "position 0.06" in out
        assert main([*argv, *weigh, "--force"]) == 0
        assert "evidence weights" not in capsys.readouterr().out  # not without --verbose
    assert main([*argv, "--no-weigh-evidence", "--force"]) == 0
    assert "evidence weights" not in capsys.readouterr().out
    labelled = tmp_path / "labelled.csv"
    pd.read_csv(source).assign(tract="HST").to_csv(labelled, index=False)
    argv[1] = str(labelled)
    assert main([*argv, "--labels", "tract", "--force"]) == 0
    assert "evidence weights" not in capsys.readouterr().out  # not asked for: not said
    assert main([*argv, "--labels", "tract", "--weigh-evidence", "--force"]) == 0
    assert "evidence weights not used: this fit reads no stacking context" in (
        capsys.readouterr().out
    )


def _methods_text(model) -> str:
    from faciesseq.report.methods import methods_section

    def text(section) -> str:
        out = [getattr(b, "text", "") for b in section.blocks]
        return " ".join(out + [text(sub) for sub in section.subsections])

    return text(methods_section("beds", model))


def test_the_appendix_methods_give_the_weights_and_their_sources(weighted, tmp_path):
    model, _ = weighted
    path = tmp_path / "m.json"
    save_model(model, path)
    for m in (model, load_model(path)):
        described = _methods_text(m)
        assert "composite likelihood" in described and "position 0.06" in described
        assert "Lindsay, B. G. (1988)" in described and "Varin, C." in described
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        plain = TractHMM(
            scheme=SCHEME, n_restarts=1, max_iter=5, weigh_evidence=False, random_state=0
        )
        plain.fit(_stacking_cores([31]))
    assert "composite likelihood" not in _methods_text(plain)
    assert "Lindsay" not in _methods_text(plain)
