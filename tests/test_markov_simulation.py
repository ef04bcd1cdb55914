"""Markov statistics on successions drawn from known chains (simulation checks)."""

import numpy as np
import pytest
from scipy import stats

from faciesseq.markov import analyse, encode, independence_test, transition_counts
from faciesseq.markov.order import order_analysis

# A first-order embedded chain of four facies (no self-transitions), made up for the test.
P_EMBEDDED = np.array(
    [
        [0.0, 0.7, 0.2, 0.1],
        [0.1, 0.0, 0.7, 0.2],
        [0.2, 0.1, 0.0, 0.7],
        [0.6, 0.2, 0.2, 0.0],
    ]
)


def _draw(p, n, rng, start=None):
    m = len(p)
    cum = np.cumsum(p, axis=1)
    x = np.empty(n, dtype=np.int64)
    x[0] = rng.integers(m) if start is None else start
    u = rng.random(n)
    for i in range(1, n):
        x[i] = min(int(np.searchsorted(cum[x[i - 1]], u[i], side="right")), m - 1)
    return x


def _quasi_independent(weights):
    p = np.tile(np.asarray(weights, dtype=float), (len(weights), 1))
    np.fill_diagonal(p, 0.0)
    return p / p.sum(axis=1, keepdims=True)


def test_bic_finds_order_1_in_at_least_95_percent_of_200_draws():
    rng = np.random.default_rng(20260101)
    hits = 0
    for _ in range(200):
        enc = encode([_draw(P_EMBEDDED, 300, rng)])
        hits += order_analysis(enc, 3, embedded=True).best_bic == 1
    assert hits >= 190


def _binomial_bound(n, level=0.05, confidence=0.999):
    return stats.binom.interval(confidence, n, level)


@pytest.mark.parametrize("embedded", [True, False])
def test_independent_draws_are_rejected_near_the_nominal_rate(embedded):
    # under the null, rejections at 5 % follow Binomial(n, 0.05); a 99.9 % interval
    rng = np.random.default_rng(7 if embedded else 8)
    n_draws = 400
    rejections = 0
    for _ in range(n_draws):
        if embedded:
            x = _draw(_quasi_independent([0.4, 0.3, 0.2, 0.1]), 400, rng)
        else:
            x = rng.choice(4, size=400, p=[0.4, 0.3, 0.2, 0.1])
        res = independence_test(
            transition_counts(encode([x], ["0", "1", "2", "3"])), embedded=embedded
        )
        rejections += res.pearson.p_value < 0.05
    lo, hi = _binomial_bound(n_draws)
    assert lo <= rejections <= hi


def test_order_tests_keep_their_level_on_first_order_data():
    # order 1 vs 2 on a true first-order chain: rejections near 5 %
    rng = np.random.default_rng(9)
    n_draws = 200
    rejections = 0
    for _ in range(n_draws):
        enc = encode([_draw(P_EMBEDDED, 600, rng)])
        rejections += order_analysis(enc, 2, embedded=True).tests[1].p_value < 0.05
    lo, hi = _binomial_bound(n_draws)
    assert lo <= rejections <= hi


def test_surrogate_p_values_agree_with_asymptotic_ones_on_large_samples():
    rng = np.random.default_rng(12)
    # weak dependence so that the p-values are neither 0 nor 1
    p = 0.85 * _quasi_independent([0.3, 0.3, 0.2, 0.2]) + 0.15 * P_EMBEDDED
    seqs = [_draw(p, 400, rng) for _ in range(5)]
    report = analyse(seqs, unit="beds", max_order=2, surrogates=999, seed=5)
    asym = {t.name: t.p_value for t in report.tests if t.method == "asymptotic"}
    mc = {t.name: t.p_value for t in report.surrogate_tests}
    first = asym["quasi-independence (Pearson chi2)"]
    order = asym["order 1 vs 2 (G2)"]
    assert 0.001 < first < 0.999 and 0.01 < order < 0.99
    # Monte Carlo standard error at 999 surrogates is below 0.016
    assert mc["quasi-independence (Pearson chi2)"] == pytest.approx(first, abs=0.06)
    assert mc["order 1 vs 2 (G2)"] == pytest.approx(order, abs=0.06)


def test_grid_chain_from_thick_beds_is_strongly_dependent_and_warned():
    rng = np.random.default_rng(1)
    beds = _draw(P_EMBEDDED, 200, rng)
    cells = np.repeat(beds, rng.integers(1, 8, size=len(beds)))
    report = analyse([cells], unit="grid", max_order=2)
    assert report.first_order.dof == 9
    assert report.first_order.pearson.p_value < 1e-10
    assert any("sampling step" in w for w in report.warnings)
