"""Surface picks and boundary probabilities from two-slice posteriors.

A surface's probability at a contact is the sum of the two-slice posteriors
xi_t(i, j) over the state pairs of its tract boundary (Rabiner 1989, Proc. IEEE
77:257-286, eq. 37); pick behaviour is checked on hand-made curves.
"""

import numpy as np
import pytest

from faciesseq.hmm.states import StateSpace
from faciesseq.scheme import permissive_tract_model
from faciesseq.surfaces import boundary_probabilities, pick_surfaces, surface_codes


def test_a_sharp_peak_is_picked_with_a_point_interval():
    picks = pick_surfaces(np.array([0.0, 0.01, 0.97, 0.01, 0.0]))
    assert picks.index.tolist() == [2]
    assert picks.low.tolist() == [2] and picks.high.tolist() == [2]
    assert picks.probability[0] == 0.97


def test_probability_shared_by_neighbours_is_one_pick_with_a_wider_interval():
    # no single contact reaches 0.5, but the surface is almost surely here
    picks = pick_surfaces(np.array([0.0, 0.30, 0.45, 0.2, 0.0, 0.0]))
    assert picks.index.tolist() == [2]
    assert picks.low[0] == 1 and picks.high[0] == 3


def test_two_peaks_with_a_valley_are_two_picks_and_weak_ones_none():
    p = np.array([0.05, 0.8, 0.1, 0.05, 0.7, 0.2, 0.0, 0.3, 0.0])
    picks = pick_surfaces(p)
    assert picks.index.tolist() == [1, 4]
    assert np.all(picks.low <= picks.index) and np.all(picks.index <= picks.high)
    assert len(pick_surfaces(np.array([0.0, 0.2, 0.1, 0.0])).index) == 0
    assert len(pick_surfaces(np.zeros(0)).index) == 0


def test_boundary_probabilities_sum_xi_over_the_tract_pairs_of_each_surface():
    tm = permissive_tract_model()
    states = StateSpace.build(tm, {"TST": 2})
    K = states.n_states
    rng = np.random.default_rng(0)
    xi = rng.dirichlet(np.ones(K * K), size=3).reshape(3, K, K)
    probs = boundary_probabilities(xi, tm, states.state_tract)
    codes = surface_codes(tm)
    labels = states.labels()
    # MFS: TST -> HST, and TST -> FSST / TST -> LST where the highstand is missing,
    # from either TST sub-state
    mfs = sum(
        xi[:, labels.index(a), labels.index(b)]
        for a in ("TST.1", "TST.2")
        for b in ("HST", "FSST", "LST")
    )
    np.testing.assert_allclose(probs[:, codes.index("MFS")], mfs)
    # the sequence-boundary pairs add into one code
    sb = sum(
        xi[:, labels.index(a), labels.index(b)]
        for a, b in [
            ("FSST", "LST"),
            ("HST", "LST"),
            ("HST", "TST.1"),
            ("HST", "TST.2"),
            ("FSST", "TST.1"),
            ("FSST", "TST.2"),
            ("FSST", "HST"),
        ]
    )
    np.testing.assert_allclose(probs[:, codes.index("SB")], sb)


def test_surface_curves_hold_each_contact_probability_once():
    import hmm_synthetic as synth

    from faciesseq.hmm.model import TractHMM
    from faciesseq.surfaces import surface_curves

    succ = synth.cores(3, 40, seed=91)
    interp = TractHMM(scheme=synth.scheme(), n_restarts=1, random_state=0).fit(succ).decode(succ)
    curves = surface_curves(interp, 0.1)
    assert curves["core"].nunique() == 3
    for core in interp:
        part = curves[curves["core"] == core.core]
        # a contact at the very base of the core falls outside every cell
        inside = core.boundaries["depth"] < core.beds["base"].max()
        expected = core.boundaries.loc[inside, "p_MFS"].sum()
        assert np.nansum(part["p_MFS"]) == pytest.approx(expected, abs=1e-9)
