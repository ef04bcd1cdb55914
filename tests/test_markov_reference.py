"""Markov statistics against published values and reference libraries."""

import itertools

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from faciesseq.core import CoreSet
from faciesseq.markov import analyse, encode, independence_test, transition_counts
from faciesseq.markov.contingency import fit_quasi_independence
from faciesseq.markov.counts import (
    batch_ngram_counts,
    fixed_vector,
    ngram_counts,
    transition_probabilities,
)
from faciesseq.markov.homogeneity import homogeneity_test
from faciesseq.markov.order import order_analysis

# Davis (2002), Statistics and Data Analysis in Geology, 3rd ed., ch. 4, after
# Doveton (1971): upward counts of an embedded chain of five lithologies A-E.
DAVIS = np.array(
    [
        [0, 13, 36, 19, 52],
        [29, 0, 5, 4, 0],
        [35, 2, 0, 45, 12],
        [29, 1, 44, 0, 3],
        [26, 23, 9, 9, 0],
    ]
)


def test_davis_2002_embedded_chain_chi2_about_172_with_11_dof():
    res = independence_test(DAVIS, embedded=True)
    assert res.n == 396
    assert res.dof == 11  # (m-1)^2 - m with m = 5
    # Davis reports chi2 = 172; his diagonal filling differs slightly from IPF
    assert res.pearson.statistic == pytest.approx(172, abs=4)
    assert res.pearson.p_value < 1e-20
    # margins of the fit equal the observed margins (what IPF guarantees)
    np.testing.assert_allclose(res.expected.sum(axis=1), DAVIS.sum(axis=1), rtol=1e-10)
    np.testing.assert_allclose(res.expected.sum(axis=0), DAVIS.sum(axis=0), rtol=1e-10)
    assert np.all(np.diag(res.expected) == 0)


def _glm_quasi_independence(table, structural):
    sm = pytest.importorskip("statsmodels.api")
    m = len(table)
    cells = [(i, j) for i in range(m) for j in range(m) if not structural[i, j]]
    frame = pd.DataFrame(
        {
            "y": [table[i, j] for i, j in cells],
            "row": [f"r{i}" for i, _ in cells],
            "col": [f"c{j}" for _, j in cells],
        }
    )
    x = pd.get_dummies(frame[["row", "col"]], drop_first=True).astype(float)
    x.insert(0, "const", 1.0)
    fit = sm.GLM(frame["y"], x, family=sm.families.Poisson()).fit(tol=1e-14, maxiter=200)
    return cells, fit


@pytest.mark.parametrize("seed", [None, 7])
def test_quasi_independence_equals_poisson_loglinear_fit_statsmodels(seed):
    # statsmodels GLM (Poisson, log link) on the off-diagonal cells is the same model
    table = DAVIS if seed is None else np.random.default_rng(seed).integers(1, 40, (6, 6))
    np.fill_diagonal(table := table.copy(), 0)
    structural = np.eye(len(table), dtype=bool)
    cells, fit = _glm_quasi_independence(table, structural)
    res = independence_test(table, embedded=True)
    expected = np.array([res.expected[i, j] for i, j in cells])
    np.testing.assert_allclose(expected, fit.fittedvalues.to_numpy(), atol=1e-8, rtol=0)
    # the deviance of the fit is our G2
    assert res.g2.statistic == pytest.approx(fit.deviance, rel=1e-9)
    assert res.dof == fit.df_resid
    # adjusted residuals = Pearson residuals / sqrt(1 - leverage) (Haberman 1973)
    studentized = fit.get_influence().resid_studentized
    ours = np.array([res.residuals[i, j] for i, j in cells])
    np.testing.assert_allclose(ours, np.asarray(studentized), atol=1e-6)


def test_structural_zero_count_lowers_dof_and_is_reported():
    table = DAVIS.copy()
    extra = np.zeros_like(table, dtype=bool)
    extra[1, 4] = True  # B never below E: declare it impossible
    res = independence_test(table, embedded=True, structural=extra)
    assert res.n_structural_zeros == 6
    assert res.dof == 10
    assert any("structural zero" in n for n in res.notes)
    # an empty row (a facies only ever at the top) drops its cells as well
    t2 = DAVIS.copy()
    t2[4, :] = 0
    r2 = independence_test(t2, embedded=True)
    assert r2.empty_rows == (4,)
    assert r2.dof == (4 * 5 - 4) - (4 + 5 - 1)  # active cells - estimable parameters


def test_independence_chi2_and_g2_equal_scipy():
    table = np.random.default_rng(3).integers(0, 30, (5, 5))
    res = independence_test(table, embedded=False)
    chi2, p, dof, expected = stats.chi2_contingency(table, correction=False)
    assert res.pearson.statistic == pytest.approx(chi2, rel=1e-12)
    assert res.pearson.p_value == pytest.approx(p, rel=1e-9)
    assert res.dof == dof == 16
    np.testing.assert_allclose(res.expected, expected, rtol=1e-12)
    g2, _pg, _, _ = stats.chi2_contingency(table, correction=False, lambda_="log-likelihood")
    assert res.g2.statistic == pytest.approx(g2, rel=1e-12)
    pd_stat = stats.power_divergence(table.ravel(), expected.ravel(), ddof=0, lambda_=0)
    assert res.g2.statistic == pytest.approx(pd_stat.statistic, rel=1e-12)
    # Cramér's V as scipy.stats.contingency.association
    v = stats.contingency.association(table, method="cramer", correction=False)
    assert res.cramers_v == pytest.approx(v, rel=1e-10)


def test_adjusted_residuals_independence_closed_form_haberman_1973():
    table = np.random.default_rng(5).integers(1, 30, (4, 4)).astype(float)
    res = independence_test(table, embedded=False)
    n = table.sum()
    r, c = table.sum(1) / n, table.sum(0) / n
    e = np.outer(r, c) * n
    closed = (table - e) / np.sqrt(e * np.outer(1 - r, 1 - c))
    np.testing.assert_allclose(res.residuals, closed, rtol=1e-9)


def test_maximum_likelihood_matrix_equals_pydtmc_fit():
    pydtmc = pytest.importorskip("pydtmc")
    rng = np.random.default_rng(11)
    p = rng.dirichlet(np.ones(4), size=4)
    x = [0]
    for _ in range(3000):
        x.append(int(rng.choice(4, p=p[x[-1]])))
    names = ["a", "b", "c", "d"]
    mc = pydtmc.MarkovChain.fit_sequence("mle", names, [names[i] for i in x], False)
    ours = transition_probabilities(transition_counts(encode([np.array(x)])))
    np.testing.assert_allclose(ours, mc.p, atol=1e-12)
    np.testing.assert_allclose(fixed_vector(ours), mc.pi[0], atol=1e-9)


def test_homogeneity_equals_sum_of_scipy_row_tests():
    # Anderson & Goodman (1957): one contingency table per lower facies, summed
    rng = np.random.default_rng(2)
    groups = rng.integers(1, 25, (3, 4, 4))
    res = homogeneity_test(groups, ["g1", "g2", "g3"])
    chi2 = dof = 0
    for i in range(4):
        c, _, d, _ = stats.chi2_contingency(groups[:, i, :], correction=False)
        chi2 += c
        dof += d
    assert res.pearson.statistic == pytest.approx(chi2, rel=1e-12)
    assert res.pearson.dof == dof == 4 * 2 * 3


def test_order_1_vs_2_equals_scipy_per_context_tables():
    rng = np.random.default_rng(4)
    x = rng.integers(0, 3, 400)
    enc = encode([x])
    res = order_analysis(enc, 2, embedded=False)
    runs = ngram_counts(enc, 2)
    g2 = dof = 0
    for a in range(3):
        table = runs[:, a, :]
        table = table[table.sum(1) > 0][:, table.sum(0) > 0]
        g, _, d, _ = stats.chi2_contingency(table, correction=False, lambda_="log-likelihood")
        g2 += g
        dof += d
    t = res.tests[1]
    assert t.statistic == pytest.approx(g2, rel=1e-10)
    assert t.dof == dof


def test_counts_never_cross_a_core_boundary_or_gap():
    table = pd.DataFrame(
        {
            "core": ["W1"] * 4 + ["W2"] * 2,
            "top": [0.0, 1.0, 2.0, 5.0, 0.0, 1.0],
            "base": [1.0, 2.0, 3.0, 6.0, 1.0, 2.0],
            "facies": ["A", "B", "A", "B", "B", "A"],
        }
    )
    cs = CoreSet.from_frame(table)
    report = analyse(cs.successions(), ["A", "B"], max_order=1)
    # W1 upper segment, base to top: A, B, A -> A->B, B->A; gap; W2: A -> B
    np.testing.assert_array_equal(report.counts, [[0, 2], [1, 0]])
    per = analyse(cs.successions(), ["A", "B"], max_order=1, per_core=True).per_core
    np.testing.assert_array_equal(per["W1"] + per["W2"], report.counts)


def test_ipf_reaches_tolerance_and_matches_closed_form_without_structural_zeros():
    table = np.random.default_rng(8).integers(1, 20, (4, 4)).astype(float)
    e, it, ok = fit_quasi_independence(table, np.zeros((4, 4), dtype=bool))
    assert ok and it <= 3
    np.testing.assert_allclose(e, np.outer(table.sum(1), table.sum(0)) / table.sum(), rtol=1e-12)


def test_bad_requests_are_refused_with_a_clear_error():
    from faciesseq.errors import ConfigError, InputError

    x = np.arange(40) % 9
    with pytest.raises(ConfigError, match="lower order"):
        analyse([x], max_order=8)
    # an embedded chain cannot repeat a facies from one bed to the next
    with pytest.raises(InputError, match="amalgamated"):
        analyse([np.array([0, 0, 1, 2])], unit="beds")
    with pytest.raises(InputError, match=r"facies \['X'\]"):
        analyse([np.array(["A", "X", "A"])], ["A", "B"])


def test_counts_match_a_plain_count_for_any_successions():
    hypothesis = pytest.importorskip("hypothesis")
    st = hypothesis.strategies

    @hypothesis.given(st.lists(st.lists(st.integers(0, 3), max_size=12), min_size=1, max_size=6))
    @hypothesis.settings(max_examples=60, deadline=None)
    def check(seqs):
        enc = encode([np.array(s, dtype=np.int64) for s in seqs], ["a", "b", "c", "d"])
        pairs = np.zeros((4, 4), dtype=int)
        triples = np.zeros((4, 4, 4), dtype=int)
        for s in seqs:
            for a, b in itertools.pairwise(s):
                pairs[a, b] += 1
            for a, b, c in zip(s[:-2], s[1:-1], s[2:]):
                triples[a, b, c] += 1
        np.testing.assert_array_equal(transition_counts(enc), pairs)
        np.testing.assert_array_equal(ngram_counts(enc, 2), triples)
        assert transition_counts(enc, per_succession=True).sum() == pairs.sum()
        batched = batch_ngram_counts(enc, np.stack([enc.states, enc.states]), 2)
        np.testing.assert_array_equal(batched[1], triples)

    check()
