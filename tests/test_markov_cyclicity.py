"""Entropies, cycle type, preferred path, the facies relationship diagram, screening."""

import numpy as np
import pandas as pd
import pytest

from faciesseq.core import CoreSet
from faciesseq.markov import analyse, screen_cores
from faciesseq.markov.cyclicity import entropies
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


def test_random_succession_is_called_random():
    rng = np.random.default_rng(3)
    x = [0]
    for _ in range(400):
        x.append((x[-1] + int(rng.integers(1, 4))) % 4)
    report = analyse([np.array(x)], ["A", "B", "C", "D"], max_order=1)
    if report.first_order.pearson.p_value >= 0.05:
        assert report.cyclicity.cycle_type == "random"
    assert report.cyclicity.e_post_normalised > 0.9


def test_facies_relationship_diagram_draws_one_arrow_per_significant_positive_cell(tmp_path):
    pytest.importorskip("matplotlib")
    from matplotlib.patches import FancyArrowPatch

    from faciesseq.report.markov_figures import facies_relationship_diagram

    scheme = FaciesScheme.from_dict(
        {"facies": [{"code": c, "name": c, "rank": r} for c, r in zip("ABCD", (3, 2, 1, 0))]}
    )
    report = analyse([_cyclic()], ["A", "B", "C", "D"], max_order=1)
    fig = facies_relationship_diagram(report, scheme, tmp_path / "frd.png")
    arrows = [p for p in fig.axes[0].patches if isinstance(p, FancyArrowPatch)]
    fo = report.first_order
    assert len(arrows) == int((fo.significant & (np.nan_to_num(fo.residuals) > 0)).sum()) >= 4
    assert (tmp_path / "frd.png").stat().st_size > 1000
    # facies placed by rank: D (rank 0) leftmost
    xs = {t.get_text(): t.get_position()[0] for t in fig.axes[0].texts if len(t.get_text()) == 1}
    assert xs["D"] < xs["C"] < xs["B"] < xs["A"]


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
