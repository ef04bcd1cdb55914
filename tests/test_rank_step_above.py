"""The rank jump at a bed's top (``rank_step_above``): coding, model files, what it learns.

The maximum flooding surface lies at the top of the most distal facies of the
deepening-to-shallowing turnaround (common practice; Catuneanu et al. 2009,
Earth-Science Reviews 92:1-33): the deepest bed of a transgressive tract has a
deepening jump at its base and a shallowing jump at its top.
"""

import hmm_synthetic as synth
import numpy as np
import pytest

from faciesseq.hmm.encoding import rank_steps_above
from faciesseq.hmm.model import DEFAULT_FEATURES, TractHMM
from faciesseq.hmm.modelfile import load_model, save_model

FEATURES = (*DEFAULT_FEATURES, "rank_step_above")


def test_rank_steps_above_is_the_jump_at_each_beds_top_within_a_succession():
    # two successions (5 and 2 beds, base to top); facies -1 = missing
    facies = np.array([0, 2, 1, -1, 3, 1, 0])
    ranks = np.array([0.0, 1.0, 2.0, 3.0])
    got = rank_steps_above(facies, np.array([5, 2]), ranks)
    expected = [2.0, -1.0, np.nan, np.nan, np.nan, -1.0, np.nan]
    np.testing.assert_array_equal(got, expected)
    assert np.isnan(rank_steps_above(facies, np.array([5, 2]), None)).all()


@pytest.fixture(scope="module")
def fitted():
    train = synth.cores(6, 60, seed=91)
    model = TractHMM(scheme=synth.scheme(), features=FEATURES, random_state=0)
    return model.fit(train, labels="true_tract"), train


def test_a_transgressive_bed_is_rarely_topped_by_a_shallowing_jump(fitted):
    # the synthetic TST drifts deeper upward, HST shallower: the jump at the top
    # of a TST bed is mostly deepening, of an HST bed mostly shallowing
    model, _ = fitted
    piece = model.emission("rank_step_above")
    tracts = list(model.tract_model_.order)
    shallowing = piece.emissionprob_[:, :3].sum(axis=1)  # jumps -3, -2, -1
    assert shallowing[tracts.index("TST")] < 0.35
    assert shallowing[tracts.index("HST")] > 0.6


def test_model_file_round_trip_keeps_the_jump_at_the_top(fitted, tmp_path):
    model, train = fitted
    loaded = load_model(save_model(model, tmp_path / "m.json"))
    assert "rank_step_above" in loaded.features_
    assert loaded.score(train) == pytest.approx(model.score(train), abs=1e-9)
    np.testing.assert_allclose(
        loaded.emission("rank_step_above").emissionprob_,
        model.emission("rank_step_above").emissionprob_,
    )
