"""HMM engine: forward-backward, Viterbi, two-slice posteriors, clamping.

Outside references: hmmlearn 0.3.3 ``CategoricalHMM`` (same parameters, both
its ``"scaling"`` and ``"log"`` implementations), brute-force enumeration of
all state paths, and the published Viterbi worked example (Wikipedia,
"Viterbi algorithm", the Healthy/Fever example).
"""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from faciesseq.errors import ConfigError, InputError
from faciesseq.hmm import engine
from faciesseq.hmm.engine import (
    Posteriors,
    batches,
    best_path,
    constrained_log_emission,
    forward_backward,
    log_likelihood,
    viterbi,
)

hmm = pytest.importorskip("hmmlearn.hmm")


def _random_model(rng, n_states, n_symbols, zeros=True):
    startprob = rng.dirichlet(np.ones(n_states))
    transmat = rng.dirichlet(np.ones(n_states), size=n_states)
    if zeros:
        # Structural zeros off the diagonal, as in a tract graph.
        for i in range(n_states):
            transmat[i, (i + 2) % n_states] = 0.0
        transmat /= transmat.sum(axis=1, keepdims=True)
    emission = rng.dirichlet(np.ones(n_symbols), size=n_states)
    return startprob, transmat, emission


def _hmmlearn(startprob, transmat, emission, implementation):
    model = hmm.CategoricalHMM(
        n_components=len(startprob), init_params="", params="", implementation=implementation
    )
    model.startprob_ = startprob
    model.transmat_ = transmat
    model.emissionprob_ = emission
    model.n_features = emission.shape[1]
    return model


def _split(x, lengths):
    ends = np.cumsum(lengths)
    return [x[e - n : e] for n, e in zip(lengths, ends)]


@pytest.fixture(scope="module")
def case():
    rng = np.random.default_rng(20261201)
    startprob, transmat, emission = _random_model(rng, n_states=5, n_symbols=6)
    # Unequal lengths including length-1 sequences and one long sequence
    # (2,000 steps: far beyond float64 range without scaling).
    lengths = np.concatenate([rng.integers(1, 60, size=40), [1, 1, 2000]])
    rng.shuffle(lengths)
    symbols = rng.integers(0, emission.shape[1], size=lengths.sum())
    log_emission = np.log(emission)[:, symbols].T
    return startprob, transmat, emission, lengths, symbols, log_emission


# --------------------------------------------------------------------------
# reference library: hmmlearn CategoricalHMM, same parameters


@pytest.mark.parametrize("implementation", ["scaling", "log"])
@pytest.mark.parametrize("batch_size", [None, 37])
def test_forward_backward_matches_hmmlearn(case, implementation, batch_size):
    startprob, transmat, emission, lengths, symbols, log_emission = case
    model = _hmmlearn(startprob, transmat, emission, implementation)
    X = symbols[:, None]
    total, gamma_ref = model.score_samples(X, lengths)
    per_seq = np.array([model.score(x) for x in _split(X, lengths)])

    post = forward_backward(log_emission, lengths, startprob, transmat, batch_size=batch_size)
    assert isinstance(post, Posteriors)
    np.testing.assert_allclose(post.log_likelihood, per_seq, rtol=0, atol=1e-8)
    assert abs(post.total_log_likelihood - total) < 1e-8
    np.testing.assert_allclose(post.gamma, gamma_ref, rtol=0, atol=1e-8)

    # Expected transition and initial-state counts: hmmlearn's E-step
    # sufficient statistics stats["trans"], stats["start"].
    model.params = "st"
    stats, logprob = model._do_estep(X, lengths)
    assert abs(logprob - total) < 1e-8
    np.testing.assert_allclose(post.xi_sum, stats["trans"], rtol=0, atol=1e-8)
    np.testing.assert_allclose(post.start, stats["start"], rtol=0, atol=1e-8)


@pytest.mark.parametrize("implementation", ["scaling", "log"])
def test_viterbi_matches_hmmlearn(case, implementation):
    startprob, transmat, emission, lengths, symbols, log_emission = case
    model = _hmmlearn(startprob, transmat, emission, implementation)
    X = symbols[:, None]
    total_ref, path_ref = model.decode(X, lengths, algorithm="viterbi")
    per_seq = np.array([model.decode(x, algorithm="viterbi")[0] for x in _split(X, lengths)])

    path, log_prob = viterbi(log_emission, lengths, startprob, transmat)
    np.testing.assert_array_equal(path, path_ref)
    np.testing.assert_allclose(log_prob, per_seq, rtol=0, atol=1e-8)
    assert abs(log_prob.sum() - total_ref) < 1e-8


# --------------------------------------------------------------------------
# brute force: enumerate every state path of a 3-state, length-5 sequence


def _brute_force(log_emission, startprob, transmat):
    T, K = log_emission.shape
    emission = np.exp(log_emission)
    likelihood = 0.0
    gamma = np.zeros((T, K))
    xi = np.zeros((T - 1, K, K))
    best, best_path = -1.0, None
    for path in itertools.product(range(K), repeat=T):
        p = startprob[path[0]] * emission[0, path[0]]
        for t in range(1, T):
            p *= transmat[path[t - 1], path[t]] * emission[t, path[t]]
        likelihood += p
        for t in range(T):
            gamma[t, path[t]] += p
        for t in range(T - 1):
            xi[t, path[t], path[t + 1]] += p
        if p > best:  # strict: the first (lowest-index) path wins ties
            best, best_path = p, path
    if likelihood == 0.0:  # impossible sequence
        return -np.inf, None, None, None, 0.0
    return np.log(likelihood), gamma / likelihood, xi / likelihood, np.array(best_path), best


def test_brute_force_three_states_length_five():
    rng = np.random.default_rng(5)
    startprob, transmat, emission = _random_model(rng, n_states=3, n_symbols=4)
    symbols = rng.integers(0, 4, size=5)
    le = np.log(emission)[:, symbols].T
    ll, gamma, xi, best_path, best = _brute_force(le, startprob, transmat)

    post = forward_backward(le, [5], startprob, transmat, return_xi=True)
    assert abs(post.log_likelihood[0] - ll) < 1e-12
    np.testing.assert_allclose(post.gamma, gamma, rtol=0, atol=1e-12)
    np.testing.assert_allclose(post.xi, xi, rtol=0, atol=1e-12)
    np.testing.assert_allclose(post.xi_sum, xi.sum(axis=0), rtol=0, atol=1e-12)

    path, log_prob = viterbi(le, [5], startprob, transmat)
    np.testing.assert_array_equal(path, best_path)
    assert abs(log_prob[0] - np.log(best)) < 1e-12


# --------------------------------------------------------------------------
# published worked example


def test_viterbi_wikipedia_healthy_fever_example():
    # Wikipedia, "Viterbi algorithm", worked example: states Healthy/Fever,
    # observations normal, cold, dizzy -> Healthy, Healthy, Fever with
    # probability 0.01512.
    startprob = np.array([0.6, 0.4])
    transmat = np.array([[0.7, 0.3], [0.4, 0.6]])
    emission = np.array([[0.5, 0.4, 0.1], [0.1, 0.3, 0.6]])  # normal, cold, dizzy
    le = np.log(emission[:, [0, 1, 2]].T)
    path, log_prob = viterbi(le, [3], startprob, transmat)
    assert path.tolist() == [0, 0, 1]
    assert np.exp(log_prob[0]) == pytest.approx(0.01512, abs=1e-12)


# --------------------------------------------------------------------------
# invariants


@st.composite
def _models(draw):
    K = draw(st.integers(2, 4))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    n_seq = draw(st.integers(1, 6))
    lengths = rng.integers(1, 12, size=n_seq)
    startprob = rng.dirichlet(np.ones(K))
    startprob[rng.random(K) < 0.3] = 0.0  # structural zeros at the start too
    if startprob.sum() == 0:
        startprob[0] = 1.0
    startprob /= startprob.sum()
    transmat = rng.dirichlet(np.ones(K), size=K)
    # Random structural zeros, keeping the diagonal so every row stays valid.
    zero = (rng.random((K, K)) < 0.3) & ~np.eye(K, dtype=bool)
    transmat[zero] = 0.0
    transmat /= transmat.sum(axis=1, keepdims=True)
    le = rng.normal(scale=3.0, size=(int(lengths.sum()), K))
    batch = draw(st.sampled_from([None, 1, 5]))
    return le, lengths, startprob, transmat, batch


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_models())
def test_posterior_invariants(model):
    le, lengths, startprob, transmat, batch = model
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no NaN/inf/divide warnings
        post = forward_backward(le, lengths, startprob, transmat, return_xi=True, batch_size=batch)
    T, K = le.shape
    assert post.gamma.shape == (T, K)
    assert post.xi.shape == (T - len(lengths), K, K)
    np.testing.assert_allclose(post.gamma.sum(axis=1), 1.0, atol=1e-12)
    np.testing.assert_allclose(post.xi.sum(axis=(1, 2)), 1.0, atol=1e-12)
    # boundary t of each sequence: rows sum to gamma[t], columns to gamma[t+1]
    lower = np.concatenate([np.arange(s, s + n - 1) for s, n in zip(_starts(lengths), lengths)])
    np.testing.assert_allclose(post.xi.sum(axis=2), post.gamma[lower], atol=1e-12)
    np.testing.assert_allclose(post.xi.sum(axis=1), post.gamma[lower + 1], atol=1e-12)
    # structural zeros get no mass, exactly
    assert np.all(post.xi[:, transmat == 0] == 0.0)
    assert np.all(post.xi_sum[transmat == 0] == 0.0)
    assert np.all(post.gamma[_starts(lengths)][:, startprob == 0] == 0.0)
    assert np.all(post.start[startprob == 0] == 0.0)
    np.testing.assert_allclose(post.xi_sum, post.xi.sum(axis=0), atol=1e-12)
    np.testing.assert_allclose(post.start, post.gamma[_starts(lengths)].sum(axis=0), atol=1e-12)
    assert np.all(np.isfinite(post.log_likelihood))
    # the Viterbi path never takes a forbidden transition
    path, log_prob = viterbi(le, lengths, startprob, transmat, batch_size=batch)
    for seq in _split(path, lengths):
        assert np.all(transmat[seq[:-1], seq[1:]] > 0)
    # the best path is no more likely than all paths together
    assert np.all(log_prob <= post.log_likelihood + 1e-9)


def _starts(lengths):
    return np.concatenate(([0], np.cumsum(lengths)[:-1]))


def test_batch_size_does_not_change_results(case):
    startprob, transmat, _, lengths, _, le = case
    ref = forward_backward(le, lengths, startprob, transmat, return_xi=True)
    path_ref, lp_ref = viterbi(le, lengths, startprob, transmat)
    for batch in (1, 50, 10_000):
        post = forward_backward(le, lengths, startprob, transmat, return_xi=True, batch_size=batch)
        lean = forward_backward(le, lengths, startprob, transmat, batch_size=batch)
        # xi_sum without per-boundary xi is accumulated by another code path
        np.testing.assert_allclose(lean.xi_sum, ref.xi_sum, rtol=1e-12)
        np.testing.assert_allclose(lean.gamma, ref.gamma, atol=1e-12)
        np.testing.assert_allclose(post.log_likelihood, ref.log_likelihood, rtol=1e-12)
        np.testing.assert_allclose(post.gamma, ref.gamma, atol=1e-12)
        np.testing.assert_allclose(post.xi, ref.xi, atol=1e-12)
        path, lp = viterbi(le, lengths, startprob, transmat, batch_size=batch)
        np.testing.assert_array_equal(path, path_ref)
        np.testing.assert_allclose(lp, lp_ref, rtol=1e-12)


@pytest.mark.parametrize("batch_size", [None, 1, 37])
def test_xi_summed_against_masks_is_the_sum_of_the_full_xi_bit_for_bit(case, batch_size):
    """``xi_masks`` (the surface probabilities of ``decode``) keeps each boundary's
    weighted sums: the numbers ``einsum`` makes of the full two-slice posteriors."""
    startprob, transmat, _, lengths, _, le = case
    K = len(startprob)
    masks = np.random.default_rng(5).integers(0, 2, (3, K, K)).astype(float)
    full = forward_backward(le, lengths, startprob, transmat, return_xi=True, batch_size=batch_size)
    summed = forward_backward(
        le, lengths, startprob, transmat, return_xi=True, batch_size=batch_size, xi_masks=masks
    )
    np.testing.assert_array_equal(summed.xi, np.einsum("tij,sij->ts", full.xi, masks))
    np.testing.assert_array_equal(summed.gamma, full.gamma)


@pytest.mark.parametrize("batch_size", [None, 1, 37])
def test_forward_only_log_likelihood_is_forward_backwards_bit_for_bit(case, batch_size):
    """The forward pass alone gives the very numbers of the full recursions (the
    decode's untempered log-likelihood is taken this way), from the full array and
    from a code table, the 2,000-step sequence included."""
    startprob, transmat, emission, lengths, symbols, le = case
    full = forward_backward(le, lengths, startprob, transmat, batch_size=batch_size)
    ll = log_likelihood(le, lengths, startprob, transmat, batch_size=batch_size)
    np.testing.assert_array_equal(ll, full.log_likelihood)
    table = np.log(emission).T
    coded = log_likelihood(
        table, lengths, startprob, transmat, codes=symbols, batch_size=batch_size
    )
    ref = forward_backward(
        table, lengths, startprob, transmat, codes=symbols, batch_size=batch_size
    )
    np.testing.assert_array_equal(coded, ref.log_likelihood)
    # rows far out of range take the shifted exponentials: still the same numbers
    shifted = le - 800.0 * (np.arange(len(le)) % 3 == 0)[:, None]
    np.testing.assert_array_equal(
        log_likelihood(shifted, lengths, startprob, transmat, batch_size=batch_size),
        forward_backward(
            shifted, lengths, startprob, transmat, batch_size=batch_size
        ).log_likelihood,
    )


def test_forward_only_log_likelihood_names_an_impossible_sequence():
    startprob = np.array([0.5, 0.5])
    transmat = np.array([[0.5, 0.5], [0.0, 1.0]])  # no way back from state 1
    clamp = np.full(9, -1)
    clamp[6:8] = [1, 0]  # sequence 2, its rows 1 and 2: state 1 then state 0
    cle = constrained_log_emission(np.zeros((9, 2)), clamp)
    where = r"sequence 2 is impossible under the model.* at its row 2 \(row 7 of"
    with pytest.raises(InputError, match=where):
        log_likelihood(cle, [3, 2, 4], startprob, transmat)


def test_length_one_sequences():
    startprob = np.array([0.2, 0.8])
    transmat = np.array([[0.9, 0.1], [0.0, 1.0]])
    le = np.log([[0.5, 0.25], [0.1, 0.9], [1.0, 1.0]])
    post = forward_backward(le, [1, 1, 1], startprob, transmat, return_xi=True)
    joint = startprob * np.exp(le)
    np.testing.assert_allclose(post.gamma, joint / joint.sum(axis=1, keepdims=True))
    np.testing.assert_allclose(post.log_likelihood, np.log(joint.sum(axis=1)))
    assert post.xi.shape == (0, 2, 2)
    assert np.all(post.xi_sum == 0)
    path, log_prob = viterbi(le, [1, 1, 1], startprob, transmat)
    assert path.tolist() == [1, 1, 1]
    np.testing.assert_allclose(log_prob, np.log(joint.max(axis=1)))


def test_missing_observation_marginalised():
    # A row of zeros (log 1) contributes nothing: the likelihood equals that
    # of the sequence with the row's emission summed out.
    startprob = np.array([0.5, 0.5])
    transmat = np.array([[0.8, 0.2], [0.3, 0.7]])
    emission = np.array([[0.6, 0.4], [0.1, 0.9]])
    le = np.log(emission[:, [0, 1, 0]].T)
    le[1] = 0.0
    ll = forward_backward(le, None, startprob, transmat).log_likelihood[0]
    total = 0.0
    for middle in (0, 1):
        le_full = np.log(emission[:, [0, middle, 0]].T)
        total += np.exp(forward_backward(le_full, None, startprob, transmat).log_likelihood[0])
    assert ll == pytest.approx(np.log(total), abs=1e-12)


# --------------------------------------------------------------------------
# clamping (semi-supervised labels)


def test_clamped_rows_keep_their_state(case):
    startprob, transmat, _, lengths, _, le = case
    rng = np.random.default_rng(11)
    clamp = np.full(le.shape[0], -1)
    labelled = rng.random(le.shape[0]) < 0.2
    # Labels from the unconstrained Viterbi path are always feasible.
    path0, _ = viterbi(le, lengths, startprob, transmat)
    clamp[labelled] = path0[labelled]
    cle = constrained_log_emission(le, clamp)
    assert np.all(le[~labelled] == cle[~labelled])
    post = forward_backward(cle, lengths, startprob, transmat)
    rows = np.flatnonzero(labelled)
    np.testing.assert_array_equal(post.gamma[rows, clamp[rows]], 1.0)
    path, _ = viterbi(cle, lengths, startprob, transmat)
    np.testing.assert_array_equal(path[rows], clamp[rows])


def test_clamping_changes_free_rows_as_bayes_says():
    # Two states, sticky chain: clamping row 0 to state 1 must raise the
    # posterior of state 1 at row 1 (brute force gives the exact value).
    startprob = np.array([0.5, 0.5])
    transmat = np.array([[0.9, 0.1], [0.1, 0.9]])
    le = np.log(np.full((3, 2), 0.5))
    cle = constrained_log_emission(le, np.array([1, -1, -1]))
    _, gamma, _, _, _ = _brute_force(cle, startprob, transmat)
    post = forward_backward(cle, [3], startprob, transmat)
    np.testing.assert_allclose(post.gamma, gamma, atol=1e-12)
    assert post.gamma[1, 1] == pytest.approx(0.9)


def test_clamp_mask_of_sub_states():
    # A tract of two sub-states (columns 1 and 2): the row must be in one of them.
    rng = np.random.default_rng(3)
    startprob, transmat, _ = _random_model(rng, 4, 2, zeros=False)
    le = rng.normal(size=(6, 4))
    mask = np.ones((6, 4), dtype=bool)
    mask[2] = [False, True, True, False]
    cle = constrained_log_emission(le, mask)
    post = forward_backward(cle, [6], startprob, transmat)
    assert post.gamma[2, [0, 3]].tolist() == [0.0, 0.0]
    assert post.gamma[2, 1:3].sum() == pytest.approx(1.0)
    path, _ = viterbi(cle, [6], startprob, transmat)
    assert path[2] in (1, 2)


def test_constrained_log_emission_rejects_bad_clamps():
    le = np.zeros((3, 2))
    with pytest.raises(InputError, match="row 1"):
        constrained_log_emission(le, np.array([0, 2, -1]))
    with pytest.raises(InputError, match="row 0 allows no state"):
        constrained_log_emission(le, np.zeros((3, 2), dtype=bool))
    with pytest.raises(InputError, match="shape"):
        constrained_log_emission(le, np.array([0, 1]))


# --------------------------------------------------------------------------
# impossible sequences and bad input


def test_impossible_sequence_names_the_sequence():
    startprob = np.array([0.5, 0.5])
    transmat = np.array([[0.5, 0.5], [0.0, 1.0]])  # no way back from state 1
    le = np.zeros((9, 2))
    lengths = [3, 2, 4]
    clamp = np.full(9, -1)
    clamp[6:8] = [1, 0]  # sequence 2, its rows 1 and 2: state 1 then state 0
    cle = constrained_log_emission(le, clamp)
    where = r"sequence 2 is impossible under the model.* at its row 2 \(row 7 of"
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(InputError, match=where):
            forward_backward(cle, lengths, startprob, transmat)
        with pytest.raises(InputError, match=where):
            viterbi(cle, lengths, startprob, transmat)
    # a first row clamped to a state the start probabilities exclude
    clamp0 = np.full(9, -1)
    clamp0[3] = 1  # first row of sequence 1
    cle0 = constrained_log_emission(le, clamp0)
    where0 = r"sequence 1 is impossible under the model.* at its row 0 \(row 3 of"
    with pytest.raises(InputError, match=where0):
        forward_backward(cle0, lengths, np.array([1.0, 0.0]), transmat)
    with pytest.raises(InputError, match=where0):
        viterbi(cle0, lengths, np.array([1.0, 0.0]), transmat)
    # a row where every state is forbidden
    le2 = np.zeros((9, 2))
    le2[4] = -np.inf
    where2 = r"sequence 1 is impossible under the model.* at its row 1 \(row 4 of"
    with pytest.raises(InputError, match=where2):
        forward_backward(le2, lengths, startprob, transmat)
    with pytest.raises(InputError, match=where2):
        viterbi(le2, lengths, startprob, transmat)


def test_bad_input_is_reported():
    pi, A = np.array([0.5, 0.5]), np.array([[0.5, 0.5], [0.5, 0.5]])
    with pytest.raises(InputError, match="lengths sum to 4"):
        forward_backward(np.zeros((5, 2)), [2, 2], pi, A)
    with pytest.raises(InputError, match="sequence 1 has length 0"):
        forward_backward(np.zeros((2, 2)), [2, 0], pi, A)
    le = np.zeros((3, 2))
    le[1, 0] = np.nan
    with pytest.raises(InputError, match="row 1, state 0"):
        viterbi(le, [3], pi, A)
    with pytest.raises(ConfigError, match="transmat row 1"):
        forward_backward(np.zeros((3, 2)), [3], pi, np.array([[0.5, 0.5], [0.2, 0.2]]))
    with pytest.raises(ConfigError, match="startprob has shape"):
        forward_backward(np.zeros((3, 2)), [3], np.ones(3) / 3, A)


def test_row_shift_changes_only_the_log_likelihood(case):
    # log p(obs_t | k) + a_t for all k multiplies the likelihood by exp(a_t) and
    # leaves every posterior unchanged (follows from the definition; common
    # practice). Shifts of -2000 and +1000 would under/overflow float64 without
    # the per-row rescaling.
    startprob, transmat, _, lengths, _, le = case
    ref = forward_backward(le, lengths, startprob, transmat, return_xi=True)
    rng = np.random.default_rng(2)
    shift = rng.choice([0.0, -2000.0, 1000.0, -300.0], size=le.shape[0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        post = forward_backward(le + shift[:, None], lengths, startprob, transmat, return_xi=True)
    per_seq = np.array([s.sum() for s in _split(shift, lengths)])
    np.testing.assert_allclose(post.log_likelihood, ref.log_likelihood + per_seq, rtol=1e-12)
    np.testing.assert_allclose(post.gamma, ref.gamma, atol=1e-12)
    np.testing.assert_allclose(post.xi, ref.xi, atol=1e-12)
    path, lp = viterbi(le + shift[:, None], lengths, startprob, transmat)
    path_ref, lp_ref = viterbi(le, lengths, startprob, transmat)
    np.testing.assert_array_equal(path, path_ref)
    np.testing.assert_allclose(lp, lp_ref + per_seq, rtol=1e-12)


def test_posteriors_tables():
    pi, A = np.array([0.5, 0.5]), np.array([[0.9, 0.1], [0.2, 0.8]])
    le = np.log(np.array([[0.9, 0.1], [0.5, 0.5], [0.2, 0.8]]))
    post = forward_backward(le, [2, 1], pi, A)
    table = post.to_frame([2, 1])
    assert table["sequence"].tolist() == [0, 0, 1]
    assert table["row"].tolist() == [0, 1, 0]
    np.testing.assert_array_equal(table[["p_0", "p_1"]].to_numpy(), post.gamma)
    d = post.to_dict()
    assert d["log_likelihood"] == post.log_likelihood.tolist()
    assert d["total_log_likelihood"] == pytest.approx(post.log_likelihood.sum())
    assert np.array(d["xi_sum"]).shape == (2, 2)


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**32 - 1))
def test_clamped_posteriors_match_brute_force(seed):
    # Brute force over all 3^5 paths, with clamped rows and structural zeros:
    # labels enter only through -inf log-emissions, so enumeration with
    # exp(-inf) = 0 gives the exact conditional posteriors.
    rng = np.random.default_rng(seed)
    K, T = 3, 5
    startprob = rng.dirichlet(np.ones(K))
    transmat = rng.dirichlet(np.ones(K), size=K)
    transmat[0, 2] = transmat[2, 1] = 0.0
    transmat /= transmat.sum(axis=1, keepdims=True)
    le = rng.normal(scale=2.0, size=(T, K))
    clamp = np.where(rng.random(T) < 0.4, rng.integers(0, K, size=T), -1)
    cle = constrained_log_emission(le, clamp)
    ll, gamma, xi, best_path, best = _brute_force(cle, startprob, transmat)
    if not np.isfinite(ll):
        with pytest.raises(InputError, match="sequence 0 is impossible"):
            forward_backward(cle, [T], startprob, transmat)
        return
    post = forward_backward(cle, [T], startprob, transmat, return_xi=True)
    assert abs(post.log_likelihood[0] - ll) < 1e-10
    np.testing.assert_allclose(post.gamma, gamma, atol=1e-12)
    np.testing.assert_allclose(post.xi, xi, atol=1e-12)
    path, log_prob = viterbi(cle, [T], startprob, transmat)
    assert abs(log_prob[0] - np.log(best)) < 1e-10
    np.testing.assert_array_equal(path, best_path)
    rows = np.flatnonzero(clamp >= 0)
    np.testing.assert_array_equal(post.gamma[rows, clamp[rows]], 1.0)
    np.testing.assert_array_equal(path[rows], clamp[rows])


# --------------------------------------------------------------------------
# emissions as a table indexed by codes (categorical emissions)


@pytest.mark.parametrize("batch_size", [None, 1, 37])
def test_code_table_matches_hmmlearn_em_statistics(case, batch_size):
    # hmmlearn 0.3.3 CategoricalHMM E-step (implementation "scaling"): the
    # sufficient statistics "obs" are the posteriors summed per symbol.
    startprob, transmat, emission, lengths, symbols, _ = case
    model = _hmmlearn(startprob, transmat, emission, "scaling")
    model.params = "ste"
    X = symbols[:, None]
    stats, logprob = model._do_estep(X, lengths)
    _, gamma_ref = model.score_samples(X, lengths)

    post = forward_backward(
        np.log(emission).T, lengths, startprob, transmat, codes=symbols, batch_size=batch_size
    )
    assert abs(post.total_log_likelihood - logprob) < 1e-8
    np.testing.assert_allclose(post.gamma, gamma_ref, rtol=0, atol=1e-8)
    np.testing.assert_allclose(post.code_gamma.T, stats["obs"], rtol=0, atol=1e-8)
    np.testing.assert_allclose(post.xi_sum, stats["trans"], rtol=0, atol=1e-8)
    np.testing.assert_allclose(post.start, stats["start"], rtol=0, atol=1e-8)


def test_code_table_viterbi_matches_hmmlearn(case):
    startprob, transmat, emission, lengths, symbols, _ = case
    model = _hmmlearn(startprob, transmat, emission, "scaling")
    total_ref, path_ref = model.decode(symbols[:, None], lengths, algorithm="viterbi")
    for batch in (None, 1, 50):
        path, log_prob = viterbi(
            np.log(emission).T, lengths, startprob, transmat, codes=symbols, batch_size=batch
        )
        np.testing.assert_array_equal(path, path_ref)
        assert abs(log_prob.sum() - total_ref) < 1e-8


def test_code_table_equals_the_full_array_across_calls(case):
    # The same numbers from the table form and the (T, K) array, bit for bit,
    # on repeated calls (work buffers and the exponentiated table are rebuilt
    # for every call) and with rows far outside float64 range (shifted rows).
    startprob, transmat, emission, lengths, symbols, _ = case
    table = np.log(emission).T.copy()
    table[2] -= 2000.0
    full = table[symbols]
    ref = forward_backward(full, lengths, startprob, transmat, return_xi=True)
    for _ in range(2):
        post = forward_backward(table, lengths, startprob, transmat, codes=symbols, return_xi=True)
        np.testing.assert_array_equal(post.log_likelihood, ref.log_likelihood)
        np.testing.assert_array_equal(post.gamma, ref.gamma)
        np.testing.assert_array_equal(post.xi, ref.xi)
    lean = forward_backward(table, lengths, startprob, transmat, codes=symbols, return_gamma=False)
    assert lean.gamma is None
    np.testing.assert_array_equal(lean.log_likelihood, ref.log_likelihood)
    sums = np.stack([np.bincount(symbols, weights=g, minlength=len(table)) for g in ref.gamma.T])
    np.testing.assert_allclose(lean.code_gamma, sums.T, rtol=1e-12)
    assert "n_rows" not in lean.to_dict()
    with pytest.raises(InputError, match="without gamma"):
        lean.to_frame(lengths)


def test_a_code_index_keeps_the_sums_of_plain_codes(case):
    # EM calls the recursions on the same beds every iteration; a CodeIndex keeps the
    # per-code summing matrices between calls. Its sums must be those of plain codes,
    # bit for bit, on repeated calls, with another batch size and with other lengths.
    startprob, transmat, emission, lengths, symbols, _ = case
    table = np.log(emission).T.copy()
    index = engine.CodeIndex(symbols)
    for batch in (None, None, 37, None):
        ref = forward_backward(table, lengths, startprob, transmat, codes=symbols, batch_size=batch)
        post = forward_backward(table, lengths, startprob, transmat, codes=index, batch_size=batch)
        np.testing.assert_array_equal(post.code_gamma, ref.code_gamma)
        np.testing.assert_array_equal(post.log_likelihood, ref.log_likelihood)
        np.testing.assert_array_equal(post.xi_sum, ref.xi_sum)
    other = np.asarray(lengths)[::-1]  # the same rows cut into other sequences
    ref = forward_backward(table, other, startprob, transmat, codes=symbols)
    post = forward_backward(table, other, startprob, transmat, codes=index)
    np.testing.assert_array_equal(post.code_gamma, ref.code_gamma)
    with pytest.raises(InputError, match="expected 0"):
        forward_backward(table[:1], lengths, startprob, transmat, codes=index)


def test_bad_codes_are_reported():
    pi, A = np.array([0.5, 0.5]), np.array([[0.5, 0.5], [0.5, 0.5]])
    table = np.log([[0.5, 0.5], [0.9, 0.1]])
    with pytest.raises(InputError, match=r"codes row 2 is 2; expected 0\.\.1"):
        forward_backward(table, [3], pi, A, codes=[0, 1, 2])
    with pytest.raises(InputError, match="integer"):
        viterbi(table, [2], pi, A, codes=[0.0, 1.0])
    with pytest.raises(InputError, match="lengths sum to 3"):
        forward_backward(table, [3], pi, A, codes=[0, 1])


# --------------------------------------------------------------------------
# Viterbi on sparse tract graphs, and the work split into chunks


def _tract_graph(rng, n_states):
    """A transition matrix shaped like a tract graph: each state stays, moves to
    the next state, or jumps four ahead (three predecessors per state)."""
    allowed = np.zeros((n_states, n_states), dtype=bool)
    for i in range(n_states):
        allowed[i, [i, (i + 1) % n_states, (i + 4) % n_states]] = True
    transmat = np.where(allowed, rng.dirichlet(np.ones(n_states), size=n_states) + 0.05, 0.0)
    return transmat / transmat.sum(axis=1, keepdims=True)


@pytest.mark.parametrize("batch_size", [None, 37])
def test_viterbi_on_a_sparse_graph_matches_hmmlearn(case, batch_size):
    # hmmlearn 0.3.3 CategoricalHMM decode: the engine then takes only the
    # allowed predecessors of each state (3 of 12 here).
    rng = np.random.default_rng(12)
    _, _, _, lengths, _, _ = case
    K, n_symbols = 12, 7
    startprob = rng.dirichlet(np.ones(K))
    transmat = _tract_graph(rng, K)
    emission = rng.dirichlet(np.ones(n_symbols), size=K)
    symbols = rng.integers(0, n_symbols, size=lengths.sum())
    model = _hmmlearn(startprob, transmat, emission, "scaling")
    total_ref, path_ref = model.decode(symbols[:, None], lengths, algorithm="viterbi")
    table = np.log(emission).T
    for kwargs in ({}, {"codes": symbols}):
        le = table if kwargs else table[symbols]
        path, log_prob = viterbi(le, lengths, startprob, transmat, batch_size=batch_size, **kwargs)
        np.testing.assert_array_equal(path, path_ref)
        assert abs(log_prob.sum() - total_ref) < 1e-8


@pytest.mark.parametrize("wide", [False, True])
@pytest.mark.parametrize("sparse", [False, True])
def test_max_plus_step_is_exact(sparse, wide, monkeypatch):
    # One step of the recursion against its definition, max_i (delta_i + log A_ik),
    # bit for bit, in the layouts of narrow and of wide steps: with -inf in
    # delta (dead states), a state no other state reaches (sparse graph), work
    # split into chunks of 3 sequences, fewer sequences than the previous step
    # held, and widths changing between calls.
    monkeypatch.setattr(best_path, "_WIDE_STEP", 1 if wide else 10**6)
    rng = np.random.default_rng(8)
    K, n = 9, 20
    transmat = _tract_graph(rng, K) if sparse else rng.dirichlet(np.ones(K), size=K)
    transmat[:, 4] = 0.0
    transmat[4, 4] = 1.0  # state 4: only itself leads to it
    with np.errstate(divide="ignore"):
        log_A = np.log(transmat)
    delta = rng.normal(scale=5.0, size=(K, n))
    delta[rng.random((K, n)) < 0.2] = -np.inf
    delta[:, 0] = -np.inf
    expected = (delta[:, None, :] + log_A[:, :, None]).max(axis=0)
    cells_per_sequence = (3 if sparse else K) * K
    for span in (n, 3):
        monkeypatch.setattr(best_path, "_STEP_CELLS", span * cells_per_sequence)
        step = best_path._MaxPlus(log_A, n)
        assert (step.sparse, step.span) == (sparse, span)
        for m in (n, 7, 16, n):
            out = np.full((K, m), np.nan)
            step(delta, out)
            np.testing.assert_array_equal(out, expected[:, :m])


@pytest.mark.parametrize("wide", [False, True])
def test_back_step_takes_the_lowest_of_tied_predecessors(wide, monkeypatch):
    # Backtracking's argmax_i (delta_i + log A_ik) against numpy's argmax (lowest
    # index on ties, as hmmlearn), with exact ties of two and three
    # predecessors, a forbidden predecessor holding the largest delta, a column
    # of -inf (all candidates tied), and fewer results asked than columns given;
    # in the layouts of narrow and of wide steps.
    monkeypatch.setattr(best_path, "_WIDE_STEP", 1 if wide else 10**6)
    K = 4
    with np.errstate(divide="ignore"):
        log_A = np.log(
            [
                [0.25, 0.5, 0.0, 0.25],
                [0.25, 0.25, 0.5, 0.0],
                [0.25, 0.25, 0.25, 0.25],
                [0.25, 0.5, 0.25, 0.0],
            ]
        )
    delta = np.array(
        [
            [-5.0, -2.0, 0.0, -np.inf, -1.0],
            [-1.0, -3.0, -3.0, -np.inf, -1.0],
            [-1.0, -3.0, -1.0, -np.inf, -1.0],
            [-1.0, -2.0, -1.0, -np.inf, 0.0],
        ]
    )
    state = np.array([0, 1, 2, 1, 0])
    expected = (delta + log_A[:, state]).argmax(axis=0)
    assert expected.tolist() == [1, 0, 2, 0, 3]
    back = best_path._BackStep(log_A, 8)
    wider = np.hstack([delta, np.zeros((K, 3))])  # the previous step held more columns
    for n in (5, 3):
        out = np.full(n, -1)
        back(wider, state, out)
        assert out.tolist() == expected[:n].tolist()


def _viterbi_one_by_one(log_emission, lengths, startprob, transmat):
    """Viterbi by its definition (Rabiner 1989, eqs. 32-35), one sequence and one
    step at a time, in the same floating-point operations as hmmlearn's loop;
    ties to the lowest state."""
    with np.errstate(divide="ignore"):
        log_pi, log_A = np.log(startprob), np.log(transmat)
    paths, log_probs = [], []
    for le in _split(log_emission, lengths):
        deltas = [log_pi + le[0]]
        for row in le[1:]:
            deltas.append((deltas[-1][:, None] + log_A).max(axis=0) + row)
        path = [int(np.argmax(deltas[-1]))]
        log_probs.append(deltas[-1][path[0]])
        for delta in deltas[-2::-1]:
            path.append(int(np.argmax(delta + log_A[:, path[-1]])))
        paths.append(path[::-1])
    return np.concatenate(paths), np.array(log_probs)


@pytest.mark.parametrize("wide_step", [1, 32, 10**6])
@pytest.mark.parametrize("batch_size", [None, 1, 37])
def test_viterbi_padding_columns_change_no_path(batch_size, wide_step, monkeypatch):
    # Each step of a batch is padded to a multiple of 16 sequences with the rows
    # that follow. Here the symbols are impossible in most states (zero
    # emissions: -inf in the padding columns), the sequences end at steps on
    # both sides of multiples of 16 (70 of 1 to 40 rows, one-bed ones
    # included) and one is 16 times longer than most: the same paths and
    # log-probabilities, bit for bit, as the definition run one sequence at a
    # time, and the same total as hmmlearn 0.3.3 CategoricalHMM decode. Every
    # step laid out as a wide one (padded), the steps of 32 sequences or more
    # (then the narrower ones as narrow steps), or every step as a narrow one.
    monkeypatch.setattr(best_path, "_WIDE_STEP", wide_step)
    rng = np.random.default_rng(16)
    K, n_symbols = 6, 9
    startprob, transmat, emission = _random_model(rng, K, n_symbols)
    emission[rng.random(emission.shape) < 0.6] = 0.0
    somewhere = rng.integers(0, K, size=n_symbols)  # a state that emits each symbol
    emission[somewhere, np.arange(n_symbols)] = rng.uniform(0.3, 0.7, n_symbols)
    emission /= emission.sum(axis=1, keepdims=True)
    transmat = 0.9 * transmat + 0.1 / K  # every symbol string stays possible
    lengths = np.concatenate([rng.integers(1, 40, size=70), [1, 640]])
    symbols = rng.integers(0, n_symbols, size=lengths.sum())
    with np.errstate(divide="ignore"):
        table = np.log(emission).T
    path_ref, log_prob_ref = _viterbi_one_by_one(table[symbols], lengths, startprob, transmat)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no invalid or overflow warnings from padding
        path, log_prob = viterbi(
            table, lengths, startprob, transmat, batch_size=batch_size, codes=symbols
        )
    np.testing.assert_array_equal(path, path_ref)
    np.testing.assert_array_equal(log_prob, log_prob_ref)
    model = _hmmlearn(startprob, transmat, emission, "log")
    total_ref, _ = model.decode(symbols[:, None], lengths, algorithm="viterbi")
    assert abs(log_prob.sum() - total_ref) < 1e-8


def test_viterbi_with_steps_in_chunks(case, monkeypatch):
    # Each step's work split into chunks of sequences (as with very many
    # sequences per batch) gives the same numbers as one chunk.
    startprob, transmat, _, lengths, _, le = case
    path_ref, lp_ref = viterbi(le, lengths, startprob, transmat)
    monkeypatch.setattr(best_path, "_STEP_CELLS", 3 * 5 * 5)  # 3 sequences per chunk
    path, lp = viterbi(le, lengths, startprob, transmat)
    np.testing.assert_array_equal(path, path_ref)
    np.testing.assert_array_equal(lp, lp_ref)


@pytest.mark.parametrize(
    "lengths, batch_size",
    [
        ([3, 2, 4], 100),  # one batch, rows from the (steps, sequences) grid
        ([5, 1, 5, 2, 7, 7, 3], 9),  # several batches, ties in length
        ([1, 640] + [1] * 40, 10**6),  # one long sequence: the grid would be mostly empty
        ([1], 1),
    ],
)
def test_lockstep_batches_are_the_batches_of_the_engine(lengths, batch_size):
    # Viterbi's batches (rows from a grid, step and position on demand) hold the
    # same sequences, steps and rows as the batches forward-backward uses.
    lengths = np.array(lengths)
    ours = list(best_path._lockstep_batches(lengths, batch_size))
    theirs = list(batches._batches(lengths, batch_size))
    assert len(ours) == len(theirs)
    for a, b in zip(ours, theirs):
        for name in ("seq", "lengths", "counts", "offsets", "rows", "last", "step", "position"):
            np.testing.assert_array_equal(getattr(a, name), getattr(b, name), err_msg=name)
        assert a.n_rows == b.n_rows
