"""Cross-validation by core, with the trend-rule baseline (synthetic cores, invented).

Brier score after Brier (1950), Monthly Weather Review 78:1-3: for 0/1
forecasts it is twice the error rate (each wrong bed scores 1 + 1).
"""

import json

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq.errors import ConfigError
from faciesseq.validation import cross_validate


@pytest.fixture(scope="module")
def result():
    succ = synth.cores(9, 70, seed=51)
    return cross_validate(succ, "true_tract", folds=3, scheme=synth.scheme(), n_restarts=1)


def test_folds_never_split_a_core(result):
    beds = result.beds
    assert beds.groupby("core")["fold"].nunique().max() == 1
    assert sorted(set(result.fold_of_core.values())) == [0, 1, 2]


def test_scores_are_consistent_with_the_bed_table(result):
    beds = result.beds
    acc = float(np.mean(beds["model"] == beds["label"]))
    assert result.model.accuracy == pytest.approx(acc)
    assert int(result.model.confusion.to_numpy().sum()) == len(beds)
    assert int(result.model.per_tract["support"].sum()) == len(beds)
    assert 0 <= result.model.brier <= 2
    # the 0/1 baseline's Brier score is twice its error rate
    assert result.baseline.brier == pytest.approx(2 * (1 - result.baseline.accuracy))
    rel = result.model.reliability
    assert int(rel["count"].sum()) == len(beds)


def test_the_model_gains_over_the_trend_rule(result):
    summary = result.summary().set_index("method")
    assert summary.loc["model", "accuracy"] > summary.loc["baseline", "accuracy"] + 0.15
    assert summary.loc["model", "brier"] < summary.loc["baseline", "brier"]


def test_frames_and_dict_are_serialisable(result):
    frames = result.to_frames()
    assert set(frames) == {
        "summary",
        "per_tract",
        "confusion_model",
        "confusion_baseline",
        "reliability",
        "surfaces",
        "beds",
    }
    json.dumps(result.to_dict(), allow_nan=True, default=float)


def test_too_many_folds_is_a_config_error_that_says_how_many_folds_the_cores_allow():
    succ = synth.cores(2, 20, seed=52)
    with pytest.raises(
        ConfigError,
        match=r"the data has 2: give folds=2 \(--folds 2 on the command line\)$",
    ):
        cross_validate(succ, "true_tract", folds=3, scheme=synth.scheme())
    with pytest.raises(ConfigError, match="the data has 1: cross-validation by core needs 2"):
        cross_validate(succ[:1], "true_tract", folds=2, scheme=synth.scheme())


def _without_labels(succ, keep):
    """The same successions with the labels of every core not in ``keep`` blanked."""
    from faciesseq.core import Succession

    out = []
    for s in succ:
        beds = s.beds.copy()
        if s.core not in keep:
            beds["true_tract"] = None
        out.append(Succession(s.core, s.segment, beds, s.units))
    return out


def test_supervised_folds_fit_only_the_labelled_cores():
    succ = synth.cores(6, 60, seed=52)
    cores = list(dict.fromkeys(s.core for s in succ))
    partly = _without_labels(succ, set(cores[:4]))
    kwargs = {"folds": 2, "scheme": synth.scheme(), "n_restarts": 1, "random_state": 3}
    supervised = cross_validate(partly, "true_tract", mode="supervised", **kwargs)
    semi = cross_validate(partly, "true_tract", mode="semi-supervised", **kwargs)
    # the same held-out labelled beds are scored in both modes ...
    assert len(supervised.beds) == len(semi.beds) > 0
    assert set(supervised.beds.dropna(subset=["label"])["core"]) <= set(cores[:4])
    # ... but semi-supervised EM also used the unlabelled training cores
    assert not np.array_equal(
        supervised.beds.filter(like="p_").to_numpy(), semi.beds.filter(like="p_").to_numpy()
    )
    assert supervised.settings["mode"] == "supervised"
    # one labelled core: the fold holding it out has none to train on, whatever the
    # number of folds, so fewer folds is not the fix to name
    with pytest.raises(ConfigError, match=r"only 1 core\(s\) carry labels .* label another"):
        cross_validate(
            _without_labels(succ, {cores[0]}),
            "true_tract",
            mode="supervised",
            **kwargs | {"random_state": 0, "folds": 6},
        )


def test_two_labelled_cores_of_six_are_dealt_to_different_folds():
    # with seed 0 the plain deal of these six cores to three folds puts S-52-4 and
    # S-52-5 in one fold, which then had no labelled core to train on
    from faciesseq.cli.validate import format_text
    from faciesseq.validation import _deal_cores

    succ = synth.cores(6, 40, seed=52)
    cores = list(dict.fromkeys(s.core for s in succ))
    plain = _deal_cores(cores, 3, 0)
    assert plain["S-52-4"] == plain["S-52-5"]
    kwargs = {"folds": 3, "scheme": synth.scheme(), "n_restarts": 1, "random_state": 0}
    result = cross_validate(_without_labels(succ, {"S-52-4", "S-52-5"}), "true_tract", **kwargs)
    assert result.fold_of_core["S-52-4"] != result.fold_of_core["S-52-5"]
    assert sorted(result.fold_of_core.values()) == [0, 0, 1, 1, 2, 2]
    assert result.settings["labelled_cores_dealt_first"] is True
    first_line = format_text(result).splitlines()[0]
    assert first_line.endswith(
        "the labelled cores dealt first round the folds, so that every fold has one to train on"
    )
    # where the plain deal leaves every fold a labelled core to train on, it is kept
    kept = cross_validate(_without_labels(succ, {"S-52-4", "S-52-3"}), "true_tract", **kwargs)
    assert kept.fold_of_core == plain
    assert "labelled_cores_dealt_first" not in kept.settings
    assert "dealt first" not in format_text(kept)


def test_semi_supervised_folds_deal_the_labelled_cores_first_too_and_one_is_warned():
    # the fold holding out both labelled cores was fitted without a label and scored as
    # if semi-supervised (a second audit, 2026-12-05)
    succ = synth.cores(6, 40, seed=52)
    kwargs = {"folds": 3, "scheme": synth.scheme(), "n_restarts": 1, "random_state": 0}
    two = _without_labels(succ, {"S-52-4", "S-52-5"})
    result = cross_validate(two, "true_tract", mode="semi-supervised", **kwargs)
    assert result.fold_of_core["S-52-4"] != result.fold_of_core["S-52-5"]
    assert result.settings["labelled_cores_dealt_first"] is True
    one = _without_labels(succ, {"S-52-4"})
    with pytest.warns(UserWarning, match="only 'S-52-4' carries labels .* without labels"):
        cross_validate(one, "true_tract", mode="semi-supervised", **kwargs)


def test_text_report_names_the_rows_it_scored():
    # a cross-validation on described intervals counted its support and reliability
    # bins in "beds" under a first line that said intervals were scored
    from faciesseq.cli.validate import format_text
    from faciesseq.validation import ValidationResult, score_interpretation

    tracts = ["HST", "FSST", "LST", "TST"]
    truth = np.array(["HST", "TST", "TST"], dtype=object)
    probs = np.array([[0.7, 0.1, 0.1, 0.1], [0.1, 0.1, 0.1, 0.7], [0.6, 0.2, 0.1, 0.1]])
    decoded = np.array(["HST", "TST", "HST"], dtype=object)
    scores = score_interpretation("model", truth, decoded, probs, tracts, [], ["MFS"])
    settings = {"n_cores": 2, "n_beds_scored": 3, "mode": "supervised", "unit": "intervals"}
    text = format_text(ValidationResult(2, "m", {}, scores, scores, pd.DataFrame(), settings))
    assert "3 labelled described intervals scored" in text.splitlines()[0]
    assert "tract   precision  recall      F1  described intervals" in text
    assert "correct 1.000, 2 described intervals" in text
    assert " beds" not in text
