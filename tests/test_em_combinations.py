"""EM on the distinct combinations of codes gives the fit of EM on every bed."""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

from faciesseq.core import CoreSet
from faciesseq.hmm import TractHMM
from faciesseq.hmm.emissions import CategoricalEmission
from faciesseq.scheme import load_scheme
from faciesseq.simulate.stacking import simulate_stacking, stacking_scenario_from_dict

ROOT = Path(__file__).resolve().parents[1]
SCHEME = load_scheme(ROOT / "faciesseq" / "data" / "demo" / "scheme-shoreface.yaml")


def _cores() -> CoreSet:
    data = yaml.safe_load((ROOT / "configs" / "stacking-shoreface.yaml").read_text())
    data.update({"cores": 4, "labelled_fraction": 0.0})
    scenario = stacking_scenario_from_dict(data, source=str(ROOT / "configs" / "x.yaml"))
    table = simulate_stacking(scenario, seed=41).cores.to_frame().drop(columns=["tract"])
    return CoreSet.from_frame(table, units="m")


def _fit(cores: CoreSet) -> TractHMM:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return TractHMM(
            scheme=SCHEME, random_state=3, graph="fixed", calibration_folds=0, n_restarts=2
        ).fit(cores)


def test_fit_on_combinations_equals_fit_on_every_bed(monkeypatch):
    cores = _cores()
    on_combinations = _fit(cores)
    assert all(p.coded for p in on_combinations.emissions_)  # the default pieces observe codes
    monkeypatch.setattr(CategoricalEmission, "coded", False)  # the per-bed E-step
    on_beds = _fit(cores)
    assert on_combinations.monitor_.iter == on_beds.monitor_.iter
    np.testing.assert_allclose(on_combinations.log_likelihood_, on_beds.log_likelihood_, rtol=1e-10)
    np.testing.assert_allclose(on_combinations.transmat_, on_beds.transmat_, atol=1e-9)
    for a, b in zip(on_combinations.emissions_, on_beds.emissions_, strict=True):
        np.testing.assert_allclose(a.emissionprob_, b.emissionprob_, atol=1e-9)
    decoded = [pd.concat([c.beds for c in m.decode(cores)]) for m in (on_combinations, on_beds)]
    assert (decoded[0]["tract"].to_numpy() == decoded[1]["tract"].to_numpy()).all()


def test_distinct_rows_are_numpys_unique_rows_in_the_same_order():
    from faciesseq.hmm.em import distinct_rows

    rng = np.random.default_rng(5)
    # codes from -2 (unseen) up, and columns wide enough to force the folding to rank
    codes = np.column_stack(
        [rng.integers(-2, 4, 5_000), rng.integers(0, 2**40, 5_000) // 2**38]
        + [rng.integers(-2, 2**21, 5_000) % 7 for _ in range(4)]
        + [rng.integers(0, 2**50, 5_000)]
    )
    rows, inverse = distinct_rows(codes)
    want, want_inverse = np.unique(codes, axis=0, return_inverse=True)
    np.testing.assert_array_equal(rows, want)
    np.testing.assert_array_equal(inverse, want_inverse.reshape(-1))
    np.testing.assert_array_equal(rows[inverse], codes)


def test_log_probabilities_by_code_are_the_logs_of_each_beds_probability():
    """A code's row of log-probabilities, taken from the logs of the table, is bit for
    bit the log of that bed's probabilities; a missing code reads 0 (marginalised), an
    unseen one the smoothed probability of the unseen category."""
    rng = np.random.default_rng(8)
    piece = CategoricalEmission(["a", "b", "c", "d", "e"], 4)
    piece.emissionprob_ = rng.dirichlet(np.ones(5), size=4) * rng.choice([1.0, 1e-200], (4, 5))
    piece.emissionprob_[1, 3] = 0.0  # a structural zero: -inf, no warning
    piece.unseen_prob_ = rng.random(4) / 10
    obs = rng.integers(-2, 5, 10_001)
    got = piece.log_prob_of(obs)
    with np.errstate(divide="ignore"):
        known = np.log(piece.emissionprob_[:, obs[obs >= 0]].T)
        unseen = np.log(piece.unseen_prob_)
    assert got.shape == (len(obs), 4)
    assert np.array_equal(got[obs >= 0].view(np.int64), known.view(np.int64))
    assert np.array_equal(got[obs == -2], np.broadcast_to(unseen, ((obs == -2).sum(), 4)))
    assert not got[obs == -1].any()
    assert np.isneginf(got[obs == 3, 1]).all()
    assert piece.log_prob_of(obs[:0]).shape == (0, 4)
