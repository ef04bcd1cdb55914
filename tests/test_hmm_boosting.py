"""Boosted trees: our numpy evaluator against scikit-learn, JSON round trip, bad files."""

from __future__ import annotations

import copy
import json

import numpy as np
import pytest
from sklearn.ensemble import HistGradientBoostingClassifier

from faciesseq.errors import ModelFileError
from faciesseq.hmm.boosting import BoostedTrees, fit_boosted

N_FEATURES = 5
PARAMS = {
    "max_iter": 30,
    "learning_rate": 0.1,
    "max_leaf_nodes": 15,
    "min_samples_leaf": 10,
    "l2_regularization": 1.0,
}


def _data(present: tuple[int, ...], n: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Labels drawn from ``present``; features that depend on them, with missing values.

    Column 3 is 1.0 where known and missing mostly for the first class, so the
    only split on it is a split on missing values (a ``+inf`` threshold).
    """
    rng = np.random.default_rng(seed)
    y = rng.choice(np.array(present), size=n)
    X = rng.normal(size=(n, N_FEATURES))
    X[:, 0] += y
    X[:, 1] -= 0.5 * y**2
    X[:, 3] = 1.0
    X[rng.random(n) < np.where(y == present[0], 0.7, 0.1), 3] = np.nan
    holes = rng.random((n, N_FEATURES)) < 0.15
    holes[:, 3] = False
    X[holes] = np.nan
    return X, y


def _test_rows(seed: int) -> np.ndarray:
    """Rows to predict: missing values, values out of the training range, infinities."""
    rng = np.random.default_rng(seed)
    X = rng.normal(scale=2.0, size=(300, N_FEATURES))
    X[rng.random(X.shape) < 0.2] = np.nan
    X[:, 3] = np.where(rng.random(300) < 0.5, 1.0, np.nan)
    X[0] = np.inf
    X[1] = -np.inf
    X[2, 3] = np.inf
    return X


def _reference(X, y, n_classes, Xt, sample_weight=None, random_state=0):
    # reference: scikit-learn HistGradientBoostingClassifier.predict_proba
    clf = HistGradientBoostingClassifier(
        **PARAMS, early_stopping=False, random_state=random_state
    ).fit(X, y, sample_weight=sample_weight)
    expected = np.zeros((len(Xt), n_classes))
    expected[:, clf.classes_] = clf.predict_proba(Xt)
    n_leaves = sum(p.get_n_leaf_nodes() for it in clf._predictors for p in it)
    return expected, n_leaves


def _round_trip(model: BoostedTrees) -> BoostedTrees:
    return BoostedTrees.from_dict(json.loads(json.dumps(model.to_dict(), allow_nan=False)))


@pytest.mark.parametrize(
    ("n_classes", "present", "weighted"),
    [
        (2, (0, 1), False),
        (3, (0, 2), False),
        (3, (0, 1, 2), True),
        (4, (0, 1, 2, 3), False),
        (4, (0, 2, 3), False),
    ],
)
def test_probabilities_equal_scikit_learn(n_classes, present, weighted):
    X, y = _data(present, 600, seed=len(present) + n_classes)
    Xt = _test_rows(seed=n_classes)
    weights = np.random.default_rng(5).uniform(0.2, 3.0, len(y)) if weighted else None
    expected, n_leaves = _reference(X, y, n_classes, Xt, weights, random_state=7)

    model = fit_boosted(X, y, n_classes, sample_weight=weights, random_state=7, **PARAMS)
    assert model.n_classes == n_classes
    assert model.n_parameters() == n_leaves
    loaded = _round_trip(model)
    for m in (model, loaded):
        p = m.predict_proba(Xt)
        assert p.shape == (len(Xt), n_classes)
        np.testing.assert_allclose(p, expected, rtol=0, atol=1e-12)
        np.testing.assert_allclose(p.sum(axis=1), 1.0, rtol=0, atol=1e-12)
    absent = [c for c in range(n_classes) if c not in present]
    assert np.all(loaded.predict_proba(Xt)[:, absent] == 0)
    # small batches, so several batches and groups of trees are walked
    np.testing.assert_allclose(loaded.predict_proba(Xt, batch_size=7), expected, rtol=0, atol=1e-12)


def test_the_comparison_data_reach_the_missing_value_paths():
    X, y = _data((0, 1, 2, 3), 600, seed=8)
    doc = fit_boosted(X, y, 4, random_state=7, **PARAMS).to_dict()
    inner = [
        (thr, ml)
        for it in doc["trees"]
        for tree in it
        for thr, ml, left in zip(tree["threshold"], tree["missing_left"], tree["left"])
        if left >= 0
    ]
    assert any(thr is None for thr, _ in inner)  # a split on missing values (+inf)
    assert {ml for _, ml in inner} == {True, False}
    assert np.isnan(X).any() and np.isinf(_test_rows(4)).any()


def test_a_single_class_gets_probability_one():
    X, _ = _data((0, 1), 50, seed=3)
    y = np.full(len(X), 2)
    model = fit_boosted(X, y, 4, **PARAMS)
    Xt = _test_rows(seed=1)
    expected = np.zeros((len(Xt), 4))
    expected[:, 2] = 1.0
    for m in (model, _round_trip(model)):
        np.testing.assert_array_equal(m.predict_proba(Xt), expected)
        assert m.n_parameters() == 0


@pytest.fixture(scope="module")
def doc() -> dict:
    X, y = _data((0, 1, 2), 300, seed=11)
    d = fit_boosted(X, y, 3, random_state=0, **{**PARAMS, "max_iter": 3}).to_dict()
    assert len(d["trees"][0][0]["left"]) > 1
    return d


def _first(tree: dict, leaf: bool) -> int:
    return next(j for j, left in enumerate(tree["left"]) if (left == -1) == leaf)


def _set(tree_key: str, value, leaf: bool = False):
    def change(d):
        tree = d["trees"][0][0]
        tree[tree_key][_first(tree, leaf)] = value

    return change


def _set_root_children(d):
    d["trees"][0][0]["left"][0] = d["trees"][0][0]["right"][0] = 1


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (
            lambda d: d.update(kind="random_forest"),
            "kind 'random_forest', expected 'boosted_trees'",
        ),
        (lambda d: d.update(version=2), "version 2 is not supported"),
        (lambda d: d.pop("baseline"), "missing entry 'baseline'"),
        (lambda d: d["trees"][0][0].pop("left"), r"trees\[0\]\[0\]: missing entry 'left'"),
        (lambda d: d.update(n_features="5"), "n_features must be a positive integer"),
        (lambda d: d.update(baseline=[0.0]), "baseline must be a list of 3 numbers"),
        (lambda d: d["trees"][1].pop(), r"trees\[1\] must be a list of 3 trees"),
        (_set("left", 10_000), r"left\[0\] = 10000 is out of range"),
        (_set("right", 0), r"right\[0\] = 0 is out of range: a child must come after"),
        (_set_root_children, "node 1 has 2 parents"),
        (_set("feature", N_FEATURES), rf"feature\[0\] = {N_FEATURES} is out of range 0..4"),
        (_set("value", float("nan"), leaf=True), r"value\[\d+\] = nan is not a finite number"),
        (_set("value", float("inf"), leaf=True), r"value\[\d+\] = inf is not a finite number"),
        (_set("threshold", float("nan")), r"threshold\[0\] = nan is not a finite number"),
        (_set("missing_left", 1), "missing_left must hold true/false"),
        (lambda d: d["trees"][0][0].update(is_categorical=[]), "categorical splits"),
    ],
)
def test_bad_model_dicts_are_rejected(doc, change, message):
    bad = copy.deepcopy(doc)
    change(bad)
    bad = json.loads(json.dumps(bad))  # as read from a file (NaN and Infinity included)
    with pytest.raises(ModelFileError, match=message) as info:
        BoostedTrees.from_dict(bad, source="model.json")
    assert str(info.value).startswith("model.json: boosted trees: ")


def test_the_unchanged_dict_loads(doc):
    # the rejections above come from the changes, not from the fixture
    model = BoostedTrees.from_dict(json.loads(json.dumps(doc)), source="model.json")
    assert model.n_features == N_FEATURES
    assert model.to_dict() == doc


def test_wrong_shape_of_X_is_refused(doc):
    model = BoostedTrees.from_dict(doc)
    with pytest.raises(ValueError, match=r"5 columns .* got shape \(4, 6\)"):
        model.predict_proba(np.zeros((4, 6)))
    with pytest.raises(ValueError, match=r"got shape \(5,\)"):
        model.predict_proba(np.zeros(5))


def test_fit_refuses_infinities_and_labels_out_of_range():
    X, y = _data((0, 1), 50, seed=2)
    with pytest.raises(ValueError, match=r"labels outside 0\.\.1"):
        fit_boosted(X, y + 1, 2)
    X[0, 0] = np.inf
    with pytest.raises(ValueError, match="infinite"):
        fit_boosted(X, y, 2)


def test_the_same_fit_is_made_once_and_any_change_of_its_inputs_fits_again():
    X, y = _data((0, 1, 2), 300, seed=11)
    first = fit_boosted(X, y, 3, random_state=3, **PARAMS)
    assert fit_boosted(X.copy(), y.copy(), 3, random_state=3, **PARAMS) is first
    moved = X.copy()
    moved[np.flatnonzero(np.isfinite(X[:, 0]))[0], 0] += 1e-9
    weights = np.ones(len(y))
    weights[0] = 2.0
    others = [
        fit_boosted(moved, y, 3, random_state=3, **PARAMS),
        fit_boosted(
            X, np.where(np.arange(len(y)) == 0, (y + 1) % 3, y), 3, random_state=3, **PARAMS
        ),
        fit_boosted(X, y, 4, random_state=3, **PARAMS),
        fit_boosted(X, y, 3, random_state=4, **PARAMS),
        fit_boosted(X, y, 3, random_state=3, sample_weight=weights, **PARAMS),
        fit_boosted(X, y, 3, random_state=3, **{**PARAMS, "max_iter": PARAMS["max_iter"] + 1}),
    ]
    assert all(o is not first for o in others)
    # what a kept fit returns is what scikit-learn fits (the probabilities equal its own)
    Xt = _test_rows(seed=1)
    expected, _ = _reference(X, y, 3, Xt, random_state=3)
    np.testing.assert_allclose(first.predict_proba(Xt), expected, rtol=0, atol=1e-12)
