"""Entropies, cycle type, preferred path, the facies relationship diagram, screening."""

import numpy as np
import pandas as pd
import pytest

from faciesseq.core import CoreSet
from faciesseq.markov import analyse, screen_cores
from faciesseq.markov.cyclicity import entropies, symmetry_test
from faciesseq.scheme import FaciesScheme


def _cyclic(n_cycles=60, noise=0.1, seed=0):
    # A -> B -> C -> D -> A upward, with occasional skips
    rng = np.random.default_rng(seed)
    x = [0]
    for _ in range(4 * n_cycles):
        step = 1 if rng.random() > noise else 2
        x.append((x[-1] + step) % 4)
    return np.array(x)


def test_entropy_of_a_strict_cycle_is_zero_and_of_a_uniform_embedded_chain_is_maximal():
    # Hattori (1976): E_post = -sum p log2 p; maximum log2(m - 1) for an embedded chain
    cycle = np.array([[0, 5, 0, 0], [0, 0, 5, 0], [0, 0, 0, 5], [5, 0, 0, 0]])
    post, pre, e_max = entropies(cycle, embedded=True)
    np.testing.assert_allclose(post, 0.0)
    np.testing.assert_allclose(pre, 0.0)
    assert e_max == pytest.approx(np.log2(3))
    uniform = np.ones((4, 4)) - np.eye(4)
    post, pre, _ = entropies(uniform, embedded=True)
    np.testing.assert_allclose(post, np.log2(3))


def test_preferred_path_reads_the_cycle_of_a_cyclic_succession():
    report = analyse([_cyclic()], ["A", "B", "C", "D"], max_order=1)
    cyc = report.cyclicity
    assert cyc.path_is_cycle
    assert cyc.path == ("A", "B", "C", "D")
    assert cyc.cycle_type != "random"
    assert cyc.e_post_normalised < 0.5


def _walk(transition, n_beds, rng, start=0):
    """A chain of ``n_beds`` states drawn from the row-stochastic ``transition``."""
    cumulative = np.cumsum(transition, axis=1)
    x = [start]
    for u in rng.random(n_beds - 1):
        x.append(int(np.searchsorted(cumulative[x[-1]], u * cumulative[x[-1], -1])))
    return np.array(x)


def _reversible(m, rng):
    """A reversible embedded chain: a random walk on a complete graph with symmetric
    weights of very unequal size (so that the first-order test rejects independence)."""
    weights = rng.random((m, m)) ** 3
    weights = weights + weights.T
    np.fill_diagonal(weights, 0.0)
    return weights / weights.sum(axis=1, keepdims=True)


def test_bowker_statistic_dof_and_p_value_match_statsmodels():
    # Bowker, A.H. 1948, "A test for symmetry in contingency tables", JASA 43:572-574;
    # reference: statsmodels 0.15 SquareTable(...).symmetry("bowker")
    from statsmodels.stats.contingency_tables import SquareTable

    table = np.array([[0, 12, 3, 7], [4, 0, 15, 2], [9, 1, 0, 11], [2, 6, 3, 0]])
    ours = symmetry_test(table, chain=False)
    theirs = SquareTable(table, shift_zeros=False).symmetry("bowker")
    assert ours.statistic == pytest.approx(theirs.statistic, rel=1e-12)
    assert ours.dof == theirs.df == 6
    assert ours.p_value == pytest.approx(theirs.pvalue, rel=1e-9)


def test_bowker_leaves_a_pair_never_joined_out_of_the_dof():
    # Bowker (1948): the term of a pair with N_ij + N_ji = 0 is 0/0; statsmodels 0.15
    # adds it as 0 to the statistic but counts it in the dof, which we do not
    from scipy.stats import chi2
    from statsmodels.stats.contingency_tables import SquareTable

    table = np.array([[0, 12, 0, 7], [4, 0, 15, 2], [0, 1, 0, 11], [2, 6, 3, 0]])
    ours = symmetry_test(table, chain=False)
    theirs = SquareTable(table, shift_zeros=False).symmetry("bowker")
    assert ours.statistic == pytest.approx(theirs.statistic, rel=1e-12)
    assert ours.dof == theirs.df - 1 == 5
    assert ours.p_value == pytest.approx(chi2.sf(theirs.statistic, 5), rel=1e-9)


def test_symmetry_dof_of_transition_counts_is_the_cycle_rank_of_the_joined_pairs():
    # common practice (graph theory): a connected graph of V vertices and E edges has
    # E - V + 1 independent cycles; the net flows of a chain live on them
    full = np.ones((5, 5)) - np.eye(5)
    assert symmetry_test(full).dof == 10 - 5 + 1
    line = np.diag(np.ones(3), 1) + np.diag(np.ones(3), -1)  # A-B-C-D only
    assert symmetry_test(line).dof == 0
    assert np.isnan(symmetry_test(line).p_value)
    two_triangles = np.zeros((6, 6))
    for a, b, c in ((0, 1, 2), (3, 4, 5)):
        two_triangles[[a, b, c], [b, c, a]] = 5
    assert symmetry_test(two_triangles).dof == 6 - 6 + 2


def test_symmetry_test_of_a_reversible_chain_rejects_at_its_nominal_rate():
    # common practice (Monte Carlo size of a test): under the null (a reversible chain)
    # p < 0.05 in about 5 % of successions with the cycle rank's dof; Bowker's dof
    # would be far too cautious on transition counts (flow conservation)
    from scipy.stats import chi2

    rng = np.random.default_rng(11)
    transition = _reversible(5, rng)
    tests = []
    for _ in range(300):
        x = _walk(transition, 300, rng, start=int(rng.integers(5)))
        counts = np.zeros((5, 5))
        np.add.at(counts, (x[:-1], x[1:]), 1)
        tests.append(symmetry_test(counts))
    rejected = np.mean([t.p_value < 0.05 for t in tests])
    assert {t.dof for t in tests} == {6}
    assert 0.02 <= rejected <= 0.09
    bowker = np.mean([chi2.sf(t.statistic, 10) < 0.05 for t in tests])
    assert bowker < 0.02


def test_cycle_type_is_decided_by_symmetry_not_by_the_whole_chain_entropies():
    # Hattori (1976) whole-chain entropies are equal for a stationary chain (H(X1|X0) =
    # H(X0, X1) - H(X0) = H(X0|X1)), so a symmetric and an asymmetric cycle both read
    # E_post ~ E_pre; Bowker (1948) symmetry of the counts tells them apart
    rng = np.random.default_rng(5)
    cycle = np.array([[0, 0.9, 0.1], [0.1, 0, 0.9], [0.9, 0.1, 0]])  # A -> B -> C -> A
    asymmetric = analyse([_walk(cycle, 300, rng)], ["A", "B", "C"], max_order=1)
    symmetric = analyse([_walk(_reversible(4, rng), 400, rng)], list("ABCD"), max_order=1)
    for report in (asymmetric, symmetric):
        cyc = report.cyclicity
        assert report.first_order.pearson.p_value < 0.05
        assert abs(cyc.e_post_normalised - cyc.e_pre_normalised) < 0.05
    assert asymmetric.cyclicity.cycle_type == "asymmetric"
    assert asymmetric.cyclicity.symmetry.p_value < 1e-6
    assert asymmetric.cyclicity.direction == ("A", "B", "C")
    assert asymmetric.cyclicity.describe_type() == "asymmetric, upward A -> B -> C -> A"
    assert symmetric.cyclicity.cycle_type == "symmetric"
    assert symmetric.cyclicity.symmetry.p_value > 0.05
    assert symmetric.cyclicity.direction == ()


def test_cycle_read_downward_is_asymmetric_the_other_way():
    # common practice: the same succession read top to base runs its cycle backwards
    x = _cyclic()
    up = analyse([x], list("ABCD"), max_order=1).cyclicity
    down = analyse([x[::-1]], list("ABCD"), max_order=1).cyclicity
    assert up.cycle_type == down.cycle_type == "asymmetric"
    assert up.direction == ("A", "B", "C", "D")
    assert down.direction == ("A", "D", "C", "B")
    assert up.symmetry.statistic == pytest.approx(down.symmetry.statistic)


def test_random_succession_is_called_random():
    rng = np.random.default_rng(3)
    x = [0]
    for _ in range(400):
        x.append((x[-1] + int(rng.integers(1, 4))) % 4)
    report = analyse([np.array(x)], ["A", "B", "C", "D"], max_order=1)
    if report.first_order.pearson.p_value >= 0.05:
        assert report.cyclicity.cycle_type == "random"
    assert report.cyclicity.e_post_normalised > 0.9


def test_facies_relationship_diagram_draws_solid_arrows_for_significant_cells(tmp_path):
    pytest.importorskip("matplotlib")
    from faciesseq.report.markov_section import relationship_diagram
    from faciesseq.report.style import save_figure

    scheme = FaciesScheme.from_dict(
        {"facies": [{"code": c, "name": c, "rank": r} for c, r in zip("ABCD", (3, 2, 1, 0))]}
    )
    report = analyse([_cyclic()], ["A", "B", "C", "D"], max_order=1)
    fig = relationship_diagram(report, scheme)
    save_figure(fig, tmp_path / "frd.png")
    arrows = [p for p in fig.axes[0].patches if type(p).__name__ == "FancyArrowPatch"]
    solid = [a for a in arrows if a.get_linestyle() == "-"]
    fo = report.first_order
    difference = np.where(fo.structural, np.nan, fo.difference)
    above = np.nan_to_num(difference, nan=0.0) > 0.05
    assert len(arrows) == int(above.sum())
    assert len(solid) == int((above & fo.significant).sum()) >= 4
    assert (tmp_path / "frd.png").stat().st_size > 1000
    assert fig.axes[0].get_legend() is not None


def test_screening_keeps_ordinary_described_cores():
    # an interval-described core with one short gap covers most of its span
    table = pd.DataFrame(
        {
            "core": ["W1"] * 4,
            "top": [0.0, 1.3, 2.0, 4.0],
            "base": [1.3, 2.0, 3.5, 6.2],
            "facies": ["A", "B", "A", "B"],
        }
    )
    assert screen_cores(CoreSet.from_frame(table)) == []
    sparse = table.assign(base=table["top"] + 0.2)
    flagged = screen_cores(CoreSet.from_frame(sparse))
    assert [p.kind for p in flagged] == ["irregular_sampling"]
