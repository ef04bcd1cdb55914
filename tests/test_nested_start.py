"""The nested start: EM of the tract graph starts from a fit without the tracts that may be absent.

Checks: the reduced tract model is the trade's cyclic order without the falling
stage, the one regressive tract the trade allows to be absent (absent where
subsidence outpaces the base-level fall; common practice, Catuneanu et al. 2009,
Earth-Science Reviews 92:1-33); the starting weights are a distribution per bed
that hands the left-out tract a share of its neighbours' posteriors; the start
is recorded in the model file; and tract recovery on the parasequence-stacking
generator with the falling stage missing from nine sequences in ten, where EM
started from the priors alone named the highstand "falling stage" and moved the
names after it (benchmarks/tract_model.md, "The nested start").
"""

from __future__ import annotations

import json
import warnings
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from _stacking import balanced_accuracy, fit_quietly, methods_text, stacking_table

from faciesseq.core import CoreSet
from faciesseq.errors import ConfigError
from faciesseq.hmm import TractHMM
from faciesseq.hmm.modelfile import load_model, save_model
from faciesseq.hmm.nested import SHARE, reduced_tract_model, start_weights
from faciesseq.scheme import default_tract_model
from faciesseq.simulate import load_stacking_scenario

ROOT = Path(__file__).resolve().parents[1]
SCENARIO = load_stacking_scenario(ROOT / "configs" / "stacking-rare-falling-stage.yaml")


def _table(seeds) -> pd.DataFrame:
    return stacking_table(SCENARIO, seeds)


def _fit(table: pd.DataFrame, **settings) -> TractHMM:
    return fit_quietly(SCENARIO, table, 0, **settings)


@pytest.fixture(scope="module")
def rare():
    train, test = _table([31, 32]), _table([33])
    return train, test, _fit(train)


def test_the_reduced_tract_model_leaves_out_the_falling_stage():
    tm = default_tract_model()
    assert tm.skips == ("FSST", "TST")
    reduced = reduced_tract_model(tm)
    assert reduced.order == ("HST", "LST", "TST")
    assert reduced.skips == ()
    # the surfaces between tracts that are neighbours now: SB (no falling-stage
    # deposits), MRS, MFS; none that names the falling stage
    assert {(s.lower, s.upper, s.code) for s in reduced.surfaces} == {
        ("HST", "LST", "SB"),
        ("LST", "TST", "MRS"),
        ("TST", "HST", "MFS"),
    }
    # nothing to leave out: no skips, or only the deepening tract may be absent
    assert reduced_tract_model(replace(tm, skips=())) is None
    assert reduced_tract_model(replace(tm, skips=("TST",))) is None


def test_start_weights_hand_the_left_out_tract_a_share_of_its_neighbours(rare):
    train, _, model = rare
    reduced = TractHMM(
        scheme=SCENARIO.scheme,
        tract_model=reduced_tract_model(default_tract_model()),
        graph="fixed",
        calibration_folds=0,
        random_state=0,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        reduced.fit(CoreSet.from_frame(train, units="m"))
    beds = model._encode([s.beds for s in CoreSet.from_frame(train, units="m").successions("beds")])
    weights = start_weights(reduced, beds, model.tract_model_.order)
    order = list(model.tract_model_.order)
    assert weights.shape == (len(beds), 4)
    np.testing.assert_allclose(weights.sum(axis=1), 1.0)
    assert (weights >= 0).all()
    h, f, low, t = (weights[:, order.index(c)] for c in ("HST", "FSST", "LST", "TST"))
    # the falling stage takes SHARE of the highstand's and the lowstand's posteriors
    np.testing.assert_allclose(f, SHARE / (1 - SHARE) * (h + low))
    assert t.max() > 0.9  # the rising tract is kept as the reduced fit read it


def test_fits_without_labels_start_nested_and_say_so(rare, tmp_path):
    _, _, model = rare
    assert model.nested_start is True
    assert model.nested_start_["left_out"] == ["FSST"]
    assert model.nested_start_["tracts"] == ["HST", "LST", "TST"]
    path = tmp_path / "m.json"
    save_model(model, path)
    doc = json.loads(path.read_text())
    assert doc["hyperparameters"]["nested_start"] is True
    assert doc["training"]["nested_start"] == model.nested_start_
    loaded = load_model(path)
    assert loaded.nested_start is True and loaded.nested_start_ == model.nested_start_
    # a file written before the nested start existed reads as started from the priors
    doc["hyperparameters"].pop("nested_start")
    doc["training"].pop("nested_start")
    path.write_text(json.dumps(doc))
    old = load_model(path)
    assert old.nested_start is False and old.nested_start_ is None


def test_labelled_fits_and_fits_asked_not_to_start_from_the_priors(rare):
    train, _, _ = rare
    plain = _fit(train, nested_start=False)
    assert plain.nested_start_ is None
    labelled = train.assign(tract=train["true_tract"])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=SCENARIO.scheme, random_state=0).fit(
            CoreSet.from_frame(labelled, units="m"), labels="tract"
        )
    assert model.nested_start_ is None
    with pytest.raises(ConfigError, match="nested_start"):
        TractHMM(scheme=SCENARIO.scheme, nested_start="yes").fit(
            CoreSet.from_frame(train, units="m")
        )


def test_a_rare_falling_stage_leaves_the_other_tract_names_in_place(rare):
    # Started from the priors alone, EM spends the falling stage's state on the bulk
    # of the highstand, and the lowstand and transgression keep their names only
    # by luck: 0.51 balanced accuracy on these seeds at every restart seed tried
    # (0-2 and 11), 0.88 with the nested start (measured 2026-12-03).
    _, test, model = rare
    score = balanced_accuracy(model, test)
    assert score >= 0.75, score


def test_fit_and_the_appendix_methods_say_where_em_started(rare, tmp_path, capsys):
    from faciesseq.cli import main

    train, _, _ = rare
    source = tmp_path / "cores.csv"
    train.to_csv(source, index=False)
    scheme = ROOT / "configs" / "scheme-shoreface.yaml"
    out = tmp_path / "m.json"
    assert main(["fit", str(source), "--scheme", str(scheme), "-o", str(out), "--verbose"]) == 0
    assert "EM started from a fit without the FSST (HST -> LST -> TST)" in (capsys.readouterr().out)

    described = methods_text(load_model(out))
    assert "the model was first fitted without the FSST" in described
    assert "Ueda, N., Nakano, R., Ghahramani, Z. & Hinton, G. E. (2000)" in described
    plain = _fit(train, nested_start=False)
    assert "first fitted without" not in methods_text(plain)
    argv = ["fit", str(source), "--scheme", str(scheme), "-o", str(out), "--force", "--verbose"]
    assert main([*argv, "--no-nested-start"]) == 0
    assert "EM started from" not in capsys.readouterr().out
    assert json.loads(out.read_text())["hyperparameters"]["nested_start"] is False
