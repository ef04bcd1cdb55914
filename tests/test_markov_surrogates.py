"""Surrogate successions: what they keep, and that they are uniform where they should be."""

import collections
import itertools

import numpy as np
import pytest
from scipy import stats

from faciesseq.markov import encode, transition_counts
from faciesseq.markov.surrogates import (
    monte_carlo_p_value,
    restricted_permutations,
    swap_chain,
    transition_surrogates,
    transition_surrogates_loop,
)


def _split(enc, row):
    return [row[a:b] for a, b in zip(enc.starts[:-1], enc.starts[1:])]


def _random_embedded(rng, lengths, m=4):
    out = []
    for n in lengths:
        x = [int(rng.integers(m))]
        for _ in range(n - 1):
            x.append((x[-1] + int(rng.integers(1, m))) % m)
        out.append(np.array(x))
    return out


def test_transition_surrogates_keep_each_successions_counts_and_first_facies():
    rng = np.random.default_rng(0)
    enc = encode(_random_embedded(rng, rng.integers(1, 30, size=40)))
    per = transition_counts(enc, per_succession=True)
    seen = 0
    for batch in transition_surrogates(enc, 200, 1):
        for row in batch:
            back = encode(_split(enc, row), enc.codes)
            np.testing.assert_array_equal(transition_counts(back, per_succession=True), per)
            assert all(s[0] == o[0] for s, o in zip(_split(enc, row), enc.sequences()) if len(o))
            seen += 1
    assert seen == 200


def _all_with_same_counts(seq):
    """Every sequence with seq's transition counts and first state (brute force)."""
    target = collections.Counter(itertools.pairwise(seq))
    out = set()
    for perm in set(itertools.permutations(seq[1:])):
        cand = (seq[0], *perm)
        if collections.Counter(itertools.pairwise(cand)) == target:
            out.add(cand)
    return out


@pytest.mark.parametrize(
    ("engine", "seq"),
    [
        ("vectorised", (0, 1, 0, 2, 1, 2, 0, 1, 1, 2, 0)),
        ("loop", (0, 1, 0, 2, 1, 2, 0, 1, 1, 2, 0)),
        # a depth-grid succession: self-transitions are edges too
        ("vectorised", (0, 0, 1, 1, 0, 2, 2, 1, 0, 2)),
    ],
)
def test_transition_surrogates_are_uniform_over_all_sequences_with_the_same_counts(engine, seq):
    # Pethel & Hahs (2014): uniform among sequences with equal transition counts and start
    universe = _all_with_same_counts(seq)
    assert len(universe) > 20
    n = 6000
    if engine == "vectorised":
        rows = np.concatenate(list(transition_surrogates(encode([np.array(seq)]), n, 3)))
    else:
        rows = np.array(transition_surrogates_loop(np.array(seq), 3, n, 3))
    counts = collections.Counter(tuple(int(v) for v in r) for r in rows)
    assert set(counts) == universe
    observed = np.array([counts[s] for s in sorted(universe)])
    assert stats.chisquare(observed).pvalue > 1e-3


def test_restricted_permutations_keep_beds_and_never_repeat_a_facies():
    rng = np.random.default_rng(4)
    enc = encode(_random_embedded(rng, [2, 3, 9, 25, 40]))
    for batch in restricted_permutations(enc, 100, 2):
        for row in batch:
            for s, o in zip(_split(enc, row), enc.sequences()):
                assert sorted(s) == sorted(o)
                assert np.all(s[1:] != s[:-1])
    # the surrogates move: not all equal to the data
    assert not np.all(batch == enc.states)


def test_swap_chain_keeps_the_uniform_law_on_allowed_orderings():
    # started from uniform draws among the allowed orderings, the chain must stay
    # uniform (its kernel is symmetric); a biased move would show here at once
    seq = np.array([0, 1, 0, 2, 1, 2, 0, 1, 2])
    valid = sorted(
        p for p in set(itertools.permutations(seq)) if all(a != b for a, b in itertools.pairwise(p))
    )
    rng = np.random.default_rng(5)
    x = np.array(valid)[rng.integers(len(valid), size=30000)].astype(np.int16)
    start = x.copy()
    swap_chain(encode([seq]), x, 2, rng)
    assert (x != start).any(axis=1).mean() > 0.5
    counts = collections.Counter(tuple(int(v) for v in r) for r in x)
    assert set(counts) <= set(valid)
    observed = np.array([counts.get(p, 0) for p in valid])
    assert stats.chisquare(observed).pvalue > 1e-3


def test_restricted_permutations_reach_every_allowed_ordering():
    seq = np.array([0, 1, 0, 2, 1, 2, 0, 1])
    valid = {
        p for p in set(itertools.permutations(seq)) if all(a != b for a, b in itertools.pairwise(p))
    }
    rows = np.concatenate(list(restricted_permutations(encode([seq]), 3000, 9)))
    assert {tuple(int(v) for v in r) for r in rows} == valid


def test_surrogates_are_repeatable_with_a_seed_and_differ_without_it():
    enc = encode(_random_embedded(np.random.default_rng(1), [50, 30]))
    a = np.concatenate(list(transition_surrogates(enc, 20, 42)))
    b = np.concatenate(list(transition_surrogates(enc, 20, 42)))
    c = np.concatenate(list(transition_surrogates(enc, 20, 43)))
    np.testing.assert_array_equal(a, b)
    assert not np.array_equal(a, c)


def test_monte_carlo_p_value_counts_the_observed_value():
    assert monte_carlo_p_value(5.0, np.array([1.0, 2.0, 6.0])) == pytest.approx(2 / 4)
    assert monte_carlo_p_value(10.0, np.zeros(99)) == pytest.approx(0.01)


def test_many_successions_use_the_batched_shuffle_and_stay_uniform():
    # 30 copies -> more than 64 exit lists: the Fisher-Yates path of the shuffle
    seq = (0, 1, 0, 2, 1, 2, 0, 1, 1, 2, 0)
    universe = sorted(_all_with_same_counts(seq))
    enc = encode([np.array(seq)] * 30)
    rows = np.concatenate(list(transition_surrogates(enc, 300, 8)))
    first = collections.Counter(tuple(int(v) for v in r[: len(seq)]) for r in rows)
    last = collections.Counter(tuple(int(v) for v in r[-len(seq) :]) for r in rows)
    for counts in (first, last):
        observed = np.array([counts[s] for s in universe])
        assert observed.sum() == 300
        assert stats.chisquare(observed).pvalue > 1e-3
