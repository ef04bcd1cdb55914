"""Calibration of the tract posteriors by a temperature chosen on held-out cores."""

from __future__ import annotations

import json
import subprocess
import sys
import warnings

import hmm_synthetic as synth
import numpy as np
import pytest

from faciesseq.errors import ModelFileError
from faciesseq.hmm import engine
from faciesseq.hmm.calibration import (
    TEMPERATURE_BOUNDS,
    HeldOut,
    describe_calibration,
    fit_temperature,
    held_out_scores,
    temper,
)
from faciesseq.hmm.model import TractHMM
from faciesseq.hmm.modelfile import load_model, model_from_dict, save_model


def _decoded_scores(model, successions):
    it = model.decode(successions)
    beds = [it[c].beds for c in it.cores]
    tracts = list(it.tracts)
    p = np.concatenate([b[[f"p_{t}" for t in tracts]].to_numpy(float) for b in beds])
    y = np.concatenate([[tracts.index(t) for t in b["true_tract"]] for b in beds])
    column = np.concatenate([b["tract"].to_numpy(object) for b in beds])
    return p, y, column


def test_temperature_one_changes_nothing_and_tempered_rows_stay_probabilities():
    rng = np.random.default_rng(3)
    le = np.log(rng.dirichlet(np.ones(3), size=6))
    pi = np.array([0.5, 0.5, 0.0])
    A = np.array([[0.7, 0.3, 0.0], [0.0, 0.6, 0.4], [0.2, 0.0, 0.8]])
    same = temper(le, pi, A, 1.0)
    assert same[0] is le and same[1] is pi and same[2] is A
    tle, tpi, tA = temper(le, pi, A, 4.0)
    np.testing.assert_allclose(tle, le / 4.0)
    np.testing.assert_allclose(tA.sum(axis=1), 1.0)
    assert tpi.sum() == pytest.approx(1.0)
    # structural zeros of the tract graph stay exact zeros
    assert np.array_equal(tA == 0, A == 0) and tpi[2] == 0.0
    # a higher temperature flattens the posteriors, a lower one sharpens them
    post = {t: engine.forward_backward(*_args(le, pi, A, t)).gamma for t in (0.5, 1.0, 4.0)}
    assert post[4.0].max(axis=1).mean() < post[1.0].max(axis=1).mean()
    assert post[0.5].max(axis=1).mean() > post[1.0].max(axis=1).mean()


def _args(le, pi, A, t):
    tle, tpi, tA = temper(le, pi, A, t)
    return tle, [len(le)], tpi, tA


def test_held_out_scores_equal_scikit_learn_brier_and_log_loss():
    # Reference: scikit-learn's brier_score_loss (multiclass, not halved; Brier
    # 1950) and log_loss, on the posteriors of a random two-sequence chain.
    import sklearn
    from sklearn.metrics import brier_score_loss, log_loss

    if tuple(int(x) for x in sklearn.__version__.split(".")[:2]) < (1, 7):
        pytest.skip("multiclass brier_score_loss(labels=...) needs scikit-learn 1.7")
    rng = np.random.default_rng(7)
    K = 4
    le = np.log(rng.dirichlet(np.ones(K), size=30))
    pi = rng.dirichlet(np.ones(K))
    A = rng.dirichlet(np.ones(K), size=K)
    labels = rng.integers(-1, K, size=30)
    fold = HeldOut(le, np.array([12, 18]), pi, A, labels, np.arange(K))
    got = held_out_scores([fold], 2.5)
    tle, tpi, tA = temper(le, pi, A, 2.5)
    gamma = engine.forward_backward(tle, [12, 18], tpi, tA).gamma
    rows = labels >= 0
    assert got["brier"] == pytest.approx(
        brier_score_loss(labels[rows], gamma[rows], labels=range(K), scale_by_half=False),
        rel=1e-12,
    )
    assert got["log_loss"] == pytest.approx(
        log_loss(labels[rows], gamma[rows], labels=range(K)), rel=1e-9
    )
    assert got["accuracy"] == pytest.approx(np.mean(gamma[rows].argmax(axis=1) == labels[rows]))
    # the yardstick: scikit-learn's Brier score of an even guess among the K tracts
    even = np.full((int(rows.sum()), K), 1.0 / K)
    assert got["even_brier"] == pytest.approx(
        brier_score_loss(labels[rows], even, labels=range(K), scale_by_half=False), rel=1e-12
    )


def test_the_calibration_sentence_gives_an_even_guess_beside_the_brier_score():
    """A Brier score of 0.69 read as a success without a yardstick (a new-user audit of
    2026-12-05); a record made before the yardstick was kept says nothing of it."""
    scores = {"brier": 0.92, "log_loss": 3.0, "confidence": 0.82, "accuracy": 0.43}
    after = {**scores, "brier": 0.69, "confidence": 0.49, "even_brier": 0.75}
    cal = {"temperature": 4.8, "n_beds": 100, "folds": 3, "cores": 3}
    cal |= {"before": scores, "after": after}
    text = describe_calibration(4.8, cal)
    assert "fell from 0.920 to 0.690 (an even guess among the 4 tracts scores 0.75)" in text
    older = {**cal, "after": {**scores, "brier": 0.69}}
    assert "even guess" not in describe_calibration(4.8, older)


def test_fit_temperature_finds_the_temperature_that_made_overconfident_posteriors():
    # Labels drawn from a chain at temperature 1; the posteriors handed over are
    # those of the same chain sharpened 3 times (T = 1/3): the Brier score is
    # lowest near T = 3, which undoes it.
    rng = np.random.default_rng(11)
    K, n = 3, 4000
    pi = np.full(K, 1.0 / K)
    A = np.full((K, K), 0.1) + 0.7 * np.eye(K)
    means = np.array([-1.0, 0.0, 1.0])
    states = [rng.integers(K)]
    for _ in range(n - 1):
        states.append(rng.choice(K, p=A[states[-1]]))
    states = np.array(states)
    x = means[states] + rng.normal(0, 1.0, n)
    le = -0.5 * (x[:, None] - means[None, :]) ** 2
    # the overconfident model: every log-probability three times too large
    sharp_le, sharp_pi, sharp_A = temper(le, pi, A, 1.0 / 3.0)
    lengths = np.full(40, n // 40)
    fold = HeldOut(sharp_le, lengths, sharp_pi, sharp_A, states, np.arange(K))
    result = fit_temperature([fold])
    assert 2.4 < result["temperature"] < 3.8
    assert result["after"]["brier"] < result["before"]["brier"]
    assert result["after"]["confidence"] < result["before"]["confidence"]
    assert result["n_beds"] == n
    # a well calibrated model is left nearly alone
    honest = fit_temperature([HeldOut(le, lengths, pi, A, states, np.arange(K))])
    assert 0.8 < honest["temperature"] < 1.25
    assert TEMPERATURE_BOUNDS[0] <= honest["temperature"] <= TEMPERATURE_BOUNDS[1]


@pytest.fixture(scope="module")
def small_fit():
    """Fits on six small labelled cores, calibrated and not, and eight held-out cores.

    So few beds make the stacking trees and the multiplied pieces overconfident
    (mean probability of the decoded tract 0.96 for 0.86 of held-out beds right).
    The labels are the true tracts: the temperature calibrates the posteriors to
    the labels it is given, so with an interpreter's wrong labels it would widen
    them towards that interpreter, not towards the truth."""
    train = synth.cores(6, 40, seed=501)
    test = synth.cores(8, 50, seed=502)
    labels = [list(s.beds["true_tract"]) for s in train]
    scheme = synth.scheme()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        plain = TractHMM(scheme=scheme, random_state=0, calibration_folds=0)
        plain.fit(train, labels=labels)
        calibrated = TractHMM(scheme=scheme, random_state=0).fit(train, labels=labels)
    return plain, calibrated, train, test, labels


def test_calibration_lowers_the_brier_score_of_held_out_cores_and_keeps_the_column(small_fit):
    plain, calibrated, _, test, _ = small_fit
    assert plain.temperature_ == 1.0 and "skipped" in plain.calibration_
    assert calibrated.temperature_ > 1.5  # the overconfident model is widened
    cal = calibrated.calibration_
    assert cal["folds"] == 5 and cal["cores"] == 6
    assert cal["after"]["brier"] < cal["before"]["brier"]
    p0, y, col0 = _decoded_scores(plain, test)
    p1, _, col1 = _decoded_scores(calibrated, test)
    onehot = np.eye(p0.shape[1])[y]
    brier0 = np.mean(np.sum((p0 - onehot) ** 2, axis=1))
    brier1 = np.mean(np.sum((p1 - onehot) ** 2, axis=1))
    assert brier1 < brier0  # on cores neither model has seen
    # the gap between confidence and accuracy shrinks
    acc = np.mean(p1.argmax(axis=1) == y)
    assert abs(p1.max(axis=1).mean() - acc) < abs(p0.max(axis=1).mean() - acc)
    # only probabilities change: the Viterbi tract column is the same
    assert np.array_equal(col0, col1)
    np.testing.assert_allclose(p1.sum(axis=1), 1.0)
    # the likelihood is the model's, untempered
    a, b = calibrated.decode(test), plain.decode(test)
    np.testing.assert_allclose(
        [a[c].log_likelihood for c in a.cores], [b[c].log_likelihood for c in b.cores]
    )
    np.testing.assert_allclose(
        [a[c].log_likelihood for c in a.cores], calibrated.score_samples(test)
    )


def test_calibration_is_reproducible_and_needs_labels_on_two_cores(small_fit):
    _, calibrated, train, _, labels = small_fit
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        again = TractHMM(scheme=synth.scheme(), random_state=0).fit(train, labels=labels)
        one = [lab if k == 0 else [None] * len(lab) for k, lab in enumerate(labels)]
        single = TractHMM(scheme=synth.scheme(), random_state=0).fit(train, labels=one)
        unsup = TractHMM(scheme=synth.scheme(), random_state=0).fit(train)
    assert again.temperature_ == calibrated.temperature_
    assert single.temperature_ == 1.0 and "1 labelled core" in single.calibration_["skipped"]
    # without labels the temperature comes from cores simulated from the fitted model
    assert unsup.calibration_["method"] == "parametric bootstrap"
    assert unsup.temperature_ == unsup.calibration_["temperature"] > 0


def test_a_calibration_put_off_uses_the_folds_the_fit_would_have_used(small_fit):
    _, calibrated, train, _, labels = small_fit
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        later = TractHMM(scheme=synth.scheme(), random_state=0)
        later.fit(train, labels=labels, calibrate=False)
        assert later.temperature_ == 1.0  # nothing chosen yet, and the record says so
        assert "not calibrated yet" in later.calibration_["skipped"]
        later.calibrate()
        unsup = TractHMM(scheme=synth.scheme(), random_state=0).fit(train, calibrate=False)
        assert "not calibrated yet" in unsup.calibration_["skipped"]
        unsup.calibrate()
        direct = TractHMM(scheme=synth.scheme(), random_state=0).fit(train)
    assert later.temperature_ == calibrated.temperature_
    assert later.calibration_ == calibrated.calibration_
    assert unsup.calibration_ == direct.calibration_
    before = dict(later.calibration_)
    assert later.calibrate().calibration_ == before  # done once


def test_model_choice_calibrates_the_kept_candidate_as_its_own_fit_would(small_fit):
    from faciesseq.hmm.selection import select_model

    _, _, train, _, labels = small_fit
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        chosen = select_model(
            train, substates=(None, 2), labels=labels, scheme=synth.scheme(), random_state=0
        )
        alone = TractHMM(
            scheme=synth.scheme(), random_state=0, substates=chosen.best.substates
        ).fit(train, labels=labels)
    assert chosen.best.calibration_ == alone.calibration_
    assert chosen.best.temperature_ == alone.temperature_ > 1.0


def test_model_file_keeps_the_temperature_and_refuses_a_bad_one(small_fit, tmp_path):
    _, calibrated, _, test, _ = small_fit
    path = save_model(calibrated, tmp_path / "m.json")
    back = load_model(path)
    assert back.temperature_ == calibrated.temperature_
    assert back.calibration_["folds"] == 5
    p_a, _, _ = _decoded_scores(calibrated, test)
    p_b, _, _ = _decoded_scores(back, test)
    np.testing.assert_allclose(p_a, p_b, atol=1e-12)
    doc = json.loads(path.read_text())
    for bad in (0.0, -1.0, 100.0, "hot", True):
        doc["parameters"]["temperature"] = bad
        with pytest.raises(ModelFileError, match="temperature"):
            model_from_dict(doc, "m.json")
    # a file written before calibration existed decodes at temperature 1
    del doc["parameters"]["temperature"]
    old = model_from_dict(doc, "m.json")
    assert old.temperature_ == 1.0
    assert "not calibrated" in describe_calibration(old.temperature_, None)
    # a calibration record that is not one does not break the report
    doc["parameters"]["temperature"] = 2.0
    doc["training"]["calibration"] = "junk"
    odd = model_from_dict(doc, "m.json")
    assert "does not say how it was chosen" in describe_calibration(
        odd.temperature_, odd.calibration_
    )
    assert "temperature of 2.00" in describe_calibration(2.0, {})


def test_fit_command_reports_the_calibration_and_refuses_negative_folds(tmp_path):
    import pandas as pd

    frames = []
    for s in synth.cores(4, 30, seed=601):
        frames.append(s.beds.assign(core=s.core, tract=s.beds["true_tract"]))
    src = tmp_path / "cores.csv"
    pd.concat(frames).drop(columns=["thickness"]).to_csv(src, index=False)
    run = [sys.executable, "-m", "faciesseq", "fit", str(src), "--labels", "tract"]
    ok = subprocess.run(
        [*run, "-o", str(tmp_path / "m.json"), "--calibration-folds", "2", "--verbose"],
        capture_output=True,
        text=True,
    )
    assert ok.returncode == 0, ok.stderr
    assert "Tract probabilities calibrated by a temperature of" in ok.stdout
    assert "2-fold cross-validation over 4 labelled cores" in ok.stdout
    bad = subprocess.run(
        [*run, "-o", str(tmp_path / "n.json"), "--calibration-folds", "-1"],
        capture_output=True,
        text=True,
    )
    assert bad.returncode == 2 and "--calibration-folds must be >= 0" in bad.stderr
    assert not (tmp_path / "n.json").exists()


def test_a_graph_chosen_on_a_sample_is_calibrated_on_every_bed(monkeypatch):
    """Above ``SAMPLE_BEDS`` the bootstrap calibration reads the beds the refit on every
    bed encoded: the same temperature as from the beds encoded again (demo cores,
    invented)."""
    from pathlib import Path

    from faciesseq.hmm import graphs
    from faciesseq.io import read_cores

    root = Path(__file__).resolve().parents[1] / "faciesseq" / "data" / "demo"
    cores = read_cores(root / "cores.csv", scheme=root / "scheme-shoreface.yaml")
    succ = cores.succession_table()
    monkeypatch.setattr(graphs, "SAMPLE_BEDS", int(succ.lengths.sum()) // 3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=_demo_scheme(root), n_restarts=1, random_state=0).fit(succ)
        assert [r.get("from_sample") for r in model.restarts_] == [True]
        assert "_refit_beds" not in vars(model)
        assert model.calibration_["method"] == "parametric bootstrap"
        again = dict(model.calibration_)
        model._calibrate_without_labels(succ, np.random.default_rng(0))
    assert model.calibration_ == again


def _demo_scheme(root):
    from faciesseq.scheme import load_scheme

    return load_scheme(root / "scheme-shoreface.yaml")
