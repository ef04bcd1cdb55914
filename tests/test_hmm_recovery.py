"""Tract model on cores with known truth: the default tract graph, the rank-jump feature."""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq.core import CoreSet
from faciesseq.errors import ConfigError, ModelFileError
from faciesseq.hmm.encoding import MISSING, encode_beds
from faciesseq.hmm.labels import LabelWarning
from faciesseq.hmm.model import TractHMM
from faciesseq.hmm.modelfile import load_model, model_to_dict
from faciesseq.hmm.rank_pieces import RankStepEmission, rank_step_pseudo_counts
from faciesseq.scheme import default_tract_model
from faciesseq.simulate.wells import history_tract_model

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def ramp():
    """Simulated ramp cores (configs/scenario-ramp.yaml, noise seeds 51 and 52), as beds."""
    from faciesseq.simulate import load_scenario, simulate

    scenario = load_scenario(ROOT / "configs" / "scenario-ramp.yaml")
    out = []
    for seed in (51, 52):
        t = simulate(scenario, seed=seed).cores.to_frame()
        t["core"] = t["core"] + f"/s{seed}"
        out.append(CoreSet.from_frame(t, units="m").successions("beds"))
    return scenario.scheme, out[0], out[1]


def test_rank_step_is_the_rank_jump_at_each_bed_base():
    # ranks CP 0, FS 1, USF 2 ...; beds base to top; an unknown facies has no jump
    facies = ["CP", "FS", "USF"]
    table = pd.DataFrame({"facies": ["CP", "USF", "FS", "XX", "USF", "CP"]})
    beds = encode_beds([table], facies, numeric=("rank_step",), ranks=np.array([0, 1, 2.0]))
    np.testing.assert_array_equal(beds.numeric["rank_step"][[1, 2, 5]], [2.0, -1.0, -2.0])
    assert np.isnan(beds.numeric["rank_step"][[0, 3, 4]]).all()
    # two successions: the first bed of the second has no bed below
    two = encode_beds(
        [table.iloc[:2], table.iloc[2:3]],
        facies,
        numeric=("rank_step",),
        ranks=np.array([0, 1, 2.0]),
    )
    assert np.isnan(two.numeric["rank_step"][2])


def test_rank_jumps_are_clipped_and_their_prior_follows_the_stacking_pattern():
    # Catuneanu et al. 2009 (common practice): retrogradation (deepening upward) in the
    # TST, progradation (shallowing upward) in the HST, FSST and LST
    trends = ["shallowing", "deepening", "aggrading"]
    pseudo = rank_step_pseudo_counts(trends, strength=2.0, base=0.2)
    jumps = np.arange(-3, 4)
    assert pseudo[0, jumps < 0].min() > pseudo[0, jumps > 0].max()
    assert pseudo[1, jumps > 0].min() > pseudo[1, jumps < 0].max()
    assert pseudo[2, 2] > pseudo[2, 0] and pseudo[2, 4] > pseudo[2, 6]
    piece = RankStepEmission(3, pseudo)
    from faciesseq.hmm.encoding import EncodedBeds

    x = np.array([np.nan, -5.0, -1.0, 0.0, 2.0, 7.0])
    beds = EncodedBeds(
        np.array([6]), np.zeros(6, int), np.zeros(6, int), np.zeros(6, int), {"rank_step": x}
    )
    np.testing.assert_array_equal(piece._observed(beds), [MISSING, 0, 2, 3, 5, 6])
    lp = piece.log_prob(beds)
    assert (lp[0] == 0).all()  # no jump: marginalised
    assert lp[1, 0] > lp[1, 1]  # a big shallowing jump is likelier in the shallowing tract


def test_rank_step_needs_a_scheme_and_is_a_default_only_with_one():
    train = synth.cores(4, 40, seed=5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        plain = TractHMM(n_restarts=1, max_iter=3).fit(train)
    assert "rank_step" not in plain.features_
    with pytest.raises(ConfigError, match=r"rank_step.*scheme"):
        TractHMM(features=("facies_trend", "rank_step")).fit(train)
    model = TractHMM(scheme=synth.scheme(), n_restarts=1, max_iter=3).fit(train, labels=None)
    # without labels, a scheme makes the stacking context the default; rank_step is a
    # default of labelled fits
    assert "cycle_stacking" in model.features_
    labels = [list(s.beds["true_tract"]) for s in train]
    model = TractHMM(scheme=synth.scheme(), n_restarts=1, max_iter=3, calibration_folds=0)
    assert "rank_step" in model.fit(train, labels=labels).features_


def test_model_file_keeps_the_rank_step_and_refuses_other_jumps(tmp_path):
    import json

    train = synth.cores(4, 40, seed=6)
    model = TractHMM(scheme=synth.scheme(), n_restarts=1, max_iter=5).fit(
        train, labels="true_tract"
    )
    doc = model_to_dict(model)
    path = tmp_path / "m.json"
    path.write_text(json.dumps(doc))
    loaded = load_model(path)
    assert loaded.score(train) == pytest.approx(model.score(train), abs=1e-9)
    k = doc["hyperparameters"]["features"].index("rank_step")
    doc["parameters"]["emissions"][k]["categories"] = ["-1", "+0", "+1"]
    path.write_text(json.dumps(doc))
    with pytest.raises(ModelFileError, match="rank jumps"):
        load_model(path)


def test_default_graph_takes_every_bed_scale_boundary_of_simulated_truth(ramp):
    # At one well any tract may be missing (common practice; Catuneanu et al. 2009):
    # a highstand or lowstand thinner than a bed leaves TST -> FSST and FSST -> TST at
    # bed scale. The default graph takes every labelled boundary; the bare cycle does not.
    scheme, train, _ = ramp
    with warnings.catch_warnings():
        warnings.simplefilter("error", LabelWarning)
        model = TractHMM(scheme=scheme, n_restarts=1, random_state=0).fit(
            train, labels="true_tract"
        )
    assert model.n_labelled_ == sum(len(s) for s in train)
    cycle = history_tract_model(default_tract_model())
    with pytest.warns(LabelWarning) as caught:
        TractHMM(tract_model=cycle, scheme=scheme, n_restarts=1, max_iter=2).fit(
            train, labels="true_tract"
        )
    assert any(re.search(r"TST -> FSST|FSST -> TST", str(w.message)) for w in caught)


def test_decoded_tracts_stack_as_their_names_say_on_held_out_cores(ramp):
    # Stacking patterns (Catuneanu et al. 2009; common practice): within a decoded TST
    # run successive beds mostly deepen upward, within a decoded FSST they mostly
    # shallow. Fit on noise seed 51, decode seed 52 (the truth is never shown to decode).
    scheme, train, test = ramp
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=scheme, random_state=0).fit(train, labels="true_tract")
    interp = model.decode(test)
    steps: dict[str, list[float]] = {"TST": [], "FSST": []}
    for c in interp:
        for _, part in c.beds.groupby("segment", sort=False):
            b = part.iloc[::-1]
            rank = b["facies"].map(scheme.rank).to_numpy(float)
            tract = b["tract"].to_numpy(dtype=object)
            for i in range(1, len(b)):
                if tract[i] == tract[i - 1] and tract[i] in steps:
                    steps[tract[i]].append(np.sign(rank[i] - rank[i - 1]))
    # measured 2026-12-01: TST 0.68 of 56 steps deepen, FSST 0.75 of 71 shallow, beds 0.746
    assert np.mean(np.array(steps["TST"]) > 0) > 0.55
    assert np.mean(np.array(steps["FSST"]) < 0) > 0.6
    beds = pd.concat([c.beds for c in interp])
    assert np.mean(beds["true_tract"] == beds["tract"]) > 0.65


def test_rank_trend_is_the_regression_slope_over_five_beds():
    # delta feature (Furui 1986, IEEE Trans. ASSP 34:52-59):
    # d_t = sum_n n (r_t+n - r_t-n) / (2 sum_n n^2), n = 1, 2; ends repeat the end rank
    from faciesseq.hmm.encoding import rank_trends

    ranks = np.arange(7.0)
    facies = np.array([0, 1, 2, 3, 4, 5, 6, 6, 5, 4])  # two successions: 7 beds, 3 beds
    d = rank_trends(facies, np.array([7, 3]), ranks)
    np.testing.assert_allclose(d[2:5], 1.0)  # steady deepening: one rank per bed
    # first bed: (1 * (1 - 0) + 2 * (2 - 0)) / 10
    assert d[0] == pytest.approx(0.5)
    # the second succession does not see the first: (1*(5-6) + 2*(4-6)) / 10 at its base
    assert d[7] == pytest.approx(-0.5)
    # an unknown facies takes the rank of the bed below
    unknown = rank_trends(np.array([0, -2, 2, 3, 4]), np.array([5]), ranks)
    ref = rank_trends(np.array([0, 0, 2, 3, 4]), np.array([5]), ranks)
    np.testing.assert_allclose(unknown, ref)
    assert np.isnan(rank_trends(np.array([0]), np.array([1]), ranks)).all()


def test_rank_trend_bins_and_model_file(tmp_path):
    import json

    from faciesseq.hmm.encoding import EncodedBeds
    from faciesseq.hmm.rank_pieces import RankTrendEmission

    piece = RankTrendEmission(2)
    x = np.array([-1.0, -0.3, -0.1, 0.0, 0.1, 0.3, 1.0, np.nan])
    beds = EncodedBeds(
        np.array([8]), np.zeros(8, int), np.zeros(8, int), np.zeros(8, int), {"rank_trend": x}
    )
    np.testing.assert_array_equal(piece._observed(beds), [0, 1, 2, 3, 4, 5, 6, MISSING])
    train = synth.cores(4, 40, seed=7)
    features = ("facies_trend", "thickness", "rank_step", "rank_trend")
    model = TractHMM(scheme=synth.scheme(), features=features, n_restarts=1, max_iter=5)
    model.fit(train, labels="true_tract")
    # the slope prior follows the stacking pattern: TST favours deepening bins
    tst = model.emission("rank_trend").emissionprob_[model.states_.tracts.index("TST")]
    assert tst[4:].sum() > tst[:3].sum()
    doc = model_to_dict(model)
    path = tmp_path / "m.json"
    path.write_text(json.dumps(doc))
    assert load_model(path).score(train) == pytest.approx(model.score(train), abs=1e-9)
    doc["ranks"] = None
    path.write_text(json.dumps(doc))
    with pytest.raises(ModelFileError, match="needs the facies ranks"):
        load_model(path)
