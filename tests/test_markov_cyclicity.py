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
