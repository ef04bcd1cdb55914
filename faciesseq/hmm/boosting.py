"""Gradient-boosted trees: trained by scikit-learn, evaluated here from plain JSON numbers.

Why an own evaluator
--------------------
faciesseq model files are versioned JSON that a reviewer can read and diff, and
loading one runs no code: the project never pickles. A fitted
scikit-learn :class:`~sklearn.ensemble.HistGradientBoostingClassifier` can only
be kept by pickling it, so :func:`fit_boosted` lets scikit-learn do the training
(a well-kept implementation of the hard part) and then reads the fitted trees'
node arrays (``feature_idx``, ``num_threshold``, ``missing_go_to_left``,
``left``, ``right``, ``value``, ``is_leaf``) together with the baseline raw
prediction into a :class:`BoostedTrees`. That object evaluates the trees with
numpy alone and writes them to, and reads them from, plain JSON numbers.
The tests check its probabilities against scikit-learn's ``predict_proba``
(to 1e-12) on data with missing values, before and after a JSON round trip.

How the trees are evaluated (as scikit-learn 1.9 does)
------------------------------------------------------
A row goes left at an internal node when its value is ``<= threshold``, right
otherwise; a missing value (``NaN``) goes left when ``missing_left`` is true.
A threshold of ``+inf`` (``null`` in the file) is a split on missing values:
every known value goes left, ``NaN`` goes right. The raw prediction is the
baseline plus the sum of the leaf values reached, added tree by tree in
training order. With ``K`` classes present in the training labels:

* ``K >= 3``: one tree per class per iteration; probabilities are the softmax
  of the ``K`` raw predictions.
* ``K == 2``: one tree per iteration; the raw prediction is the log-odds of the
  larger class label, probability ``expit(raw)``, the smaller gets the rest.
* ``K == 1``: scikit-learn refuses to fit; the model has no trees and gives
  probability 1 to that class everywhere.

Classes of ``0 .. n_classes - 1`` absent from the training labels get
probability 0 (the caller floors them).

File layout (``kind: "boosted_trees"``, ``version: 1``)::

    {
      "kind": "boosted_trees", "version": 1,
      "n_features": 31, "n_classes": 4,
      "classes": [0, 2, 3],             # classes present, increasing
      "baseline": [b0, b2, b3],         # raw prediction before any tree
      "trees": [                        # one list per iteration,
        [tree_0, tree_2, tree_3], ...   # one tree per entry of "baseline"
      ]
    }

and a tree is six lists, one entry per node, the root first and every child
after its parent::

    {"feature": [int], "threshold": [float | null], "missing_left": [bool],
     "left": [int], "right": [int], "value": [float]}

A leaf has ``left == right == feature == -1``; its ``threshold`` and
``missing_left`` are not used. ``value`` of an internal node is the value the
node would have as a leaf (kept as scikit-learn gives it, not used).
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Mapping, Sequence
from itertools import pairwise
from numbers import Integral, Real
from typing import Any, NamedTuple

import numpy as np

from faciesseq.errors import ModelFileError

__all__ = ["KIND", "VERSION", "BoostedTrees", "fit_boosted"]

KIND = "boosted_trees"
VERSION = 1

#: Sanity limits on the sizes a model file declares, checked before anything is allocated
#: (the stacking window has a few dozen features; a tract model a handful of classes).
MAX_FEATURES = 10_000
MAX_CLASSES = 1_000
_TOP_KEYS = ("kind", "version", "n_features", "n_classes", "classes", "baseline", "trees")
_TREE_KEYS = ("feature", "threshold", "missing_left", "left", "right", "value")
#: Number of (tree, row) pairs walked at once (measured fastest: the arrays stay in cache).
_WALK_BUDGET = 1 << 16

#: Models :func:`fit_boosted` returned, by a digest of its inputs (:func:`_fit_key`), at
#: most :data:`_FITTED_MAX`, oldest first: a labelled model choice fits the same trees on
#: the same beds for every candidate and every calibration fold (the window's features do
#: not depend on the sub-states), 6 of the demo's 30 fits. A :class:`BoostedTrees` is
#: never changed once made, so one object can serve every caller.
_FITTED: dict[bytes, BoostedTrees] = {}
_FITTED_MAX = 32


class _Tree(NamedTuple):
    """Node arrays of one tree (leaves: ``left == right == feature == -1``)."""

    feature: np.ndarray  # intp
    threshold: np.ndarray  # float64, +inf = split on missing values
    missing_left: np.ndarray  # bool
    left: np.ndarray  # intp
    right: np.ndarray  # intp
    value: np.ndarray  # float64


def _trees_per_iteration(n_present: int) -> int:
    return 0 if n_present == 1 else 1 if n_present == 2 else n_present


class BoostedTrees:
    """A fitted gradient-boosted tree classifier, evaluated with numpy.

    Build one with :func:`fit_boosted` or :meth:`from_dict`; the constructor
    takes already checked arrays.

    Parameters
    ----------
    n_features
        Number of columns of ``X``.
    n_classes
        Size of the caller's class set ``0 .. n_classes - 1``.
    classes
        The classes present in the training labels, increasing.
    baseline
        Raw prediction before any tree, one per tree of an iteration (empty
        for a single class).
    trees
        ``trees[i][k]``: tree ``k`` of iteration ``i``.

    Attributes
    ----------
    n_features, n_classes : int
    classes : numpy.ndarray
        Classes present, increasing.
    baseline : numpy.ndarray
        Raw prediction before any tree.
    """

    def __init__(
        self,
        n_features: int,
        n_classes: int,
        classes: Sequence[int],
        baseline: Sequence[float],
        trees: Sequence[Sequence[_Tree]],
    ) -> None:
        self.n_features = int(n_features)
        self.n_classes = int(n_classes)
        self.classes = np.asarray(classes, dtype=np.intp)
        self.baseline = np.asarray(baseline, dtype=np.float64).reshape(-1)
        self._trees = [list(it) for it in trees]
        if any(len(it) != len(self.baseline) for it in self._trees):
            raise ValueError("every iteration needs one tree per baseline entry")
        self._pack()

    # ------------------------------------------------------------------ packing
    def _pack(self) -> None:
        """Pad all trees to one node count and flatten them into 1-D arrays.

        Node ``j`` of tree ``t`` sits at ``t * width + j``; its children at
        ``child[2 * node]`` (left) and ``child[2 * node + 1]`` (right). Leaves
        and padding point to themselves, so walking a fixed number of levels
        is harmless once a leaf is reached.

        Comparisons are done on integer codes: the thresholds of each feature
        are sorted into ``cuts[f]``, and a value ``x`` is coded as the number
        of cuts below it. Then ``x <= cuts[f][r]`` exactly when
        ``code(x) <= r`` (also for infinite ``x`` and a ``+inf`` cut). A node
        reads column ``f`` of the codes where ``NaN`` is coded ``-1`` (always
        left) if missing values go left, else column ``n_features + f`` where
        ``NaN`` is coded above every rank (always right).
        """
        flat = [tree for iteration in self._trees for tree in iteration]
        self._column = np.array(
            [k for iteration in self._trees for k in range(len(iteration))], dtype=np.intp
        )
        n_trees = len(flat)
        F = self.n_features
        width = max((len(t.value) for t in flat), default=1)
        size = n_trees * width
        inner = np.zeros(size, dtype=bool)
        feature = np.zeros(size, dtype=np.intp)
        threshold = np.zeros(size, dtype=np.float64)
        missing_left = np.zeros(size, dtype=bool)
        child = np.repeat(np.arange(size, dtype=np.intp), 2)
        self._value = np.zeros(size, dtype=np.float64)
        self._depth = np.zeros(n_trees, dtype=np.intp)
        for t, tree in enumerate(flat):
            n = len(tree.value)
            base = t * width
            sl = slice(base, base + n)
            is_inner = tree.left >= 0
            inner[sl] = is_inner
            feature[sl] = np.where(is_inner, tree.feature, 0)
            threshold[sl] = np.where(is_inner, tree.threshold, 0.0)
            missing_left[sl] = tree.missing_left & is_inner
            nodes = np.arange(n)
            child[2 * base : 2 * (base + n) : 2] = base + np.where(is_inner, tree.left, nodes)
            child[2 * base + 1 : 2 * (base + n) : 2] = base + np.where(is_inner, tree.right, nodes)
            self._value[sl] = tree.value
            self._depth[t] = _depth(tree)
        self._n_leaves = int(sum(np.count_nonzero(t.left < 0) for t in flat))
        self._width = width
        self._child = child
        self._cuts = [np.unique(threshold[inner & (feature == f)]) for f in range(F)]
        rank = np.zeros(size, dtype=np.int64)
        for f, cuts in enumerate(self._cuts):
            at = inner & (feature == f)
            rank[at] = np.searchsorted(cuts, threshold[at])
        n_cuts = max((len(c) for c in self._cuts), default=0)
        self._code_dtype = np.int16 if n_cuts < np.iinfo(np.int16).max else np.int32
        self._rank = rank.astype(self._code_dtype)
        self._code_column = np.where(missing_left, feature, F + feature)
        self._used = [f for f in range(F) if len(self._cuts[f])]

    # --------------------------------------------------------------- prediction
    def raw_predict(self, X: np.ndarray, batch_size: int = 65536) -> np.ndarray:
        """Baseline plus the sum of the leaf values, ``(n, len(baseline))``.

        Parameters
        ----------
        X
            ``(n, n_features)``; ``NaN`` is a missing value.
        batch_size
            Rows evaluated at once (bounds the memory used).
        """
        X = self._check_X(X)
        if isinstance(batch_size, bool) or not isinstance(batch_size, Integral) or batch_size < 1:
            raise ValueError(f"batch_size must be a positive integer, got {batch_size!r}")
        out = np.empty((X.shape[0], len(self.baseline)), dtype=np.float64)
        for start in range(0, X.shape[0], int(batch_size)):
            out[start : start + batch_size] = self._raw_batch(X[start : start + batch_size])
        return out

    def _codes(self, Xb: np.ndarray) -> np.ndarray:
        """Integer codes of a batch, ``(2 * n_features, n)`` (see :meth:`_pack`)."""
        F = self.n_features
        codes = np.zeros((2 * F, Xb.shape[0]), dtype=self._code_dtype)
        for f in self._used:
            x = Xb[:, f]
            cuts = self._cuts[f]
            code = np.searchsorted(cuts, x, side="left")
            missing = np.isnan(x)
            codes[f] = np.where(missing, -1, code)
            codes[F + f] = np.where(missing, len(cuts), code)
        return codes

    def _raw_batch(self, Xb: np.ndarray) -> np.ndarray:
        nb = Xb.shape[0]
        raw = np.zeros((nb, len(self.baseline)), dtype=np.float64)
        raw += self.baseline[None, :]
        n_trees = len(self._column)
        if nb == 0 or n_trees == 0:
            return raw
        codes = self._codes(Xb).reshape(-1)
        group = max(1, _WALK_BUDGET // nb)
        rows = np.arange(nb)[None, :]
        for a in range(0, n_trees, group):
            b = min(a + group, n_trees)
            idx = np.repeat((np.arange(a, b) * self._width)[:, None], nb, axis=1)
            for _ in range(int(self._depth[a:b].max())):
                code = codes[self._code_column[idx] * nb + rows]
                idx = self._child[2 * idx + (code > self._rank[idx])]
            values = self._value[idx]
            # tree by tree, in training order: the same sums as scikit-learn
            for j, t in enumerate(range(a, b)):
                raw[:, self._column[t]] += values[j]
        return raw

    def predict_proba(self, X: np.ndarray, batch_size: int = 65536) -> np.ndarray:
        """Class probabilities, ``(n, n_classes)``; rows sum to 1.

        Parameters
        ----------
        X
            ``(n, n_features)``; ``NaN`` is a missing value.
        batch_size
            Rows evaluated at once (bounds the memory used).

        Returns
        -------
        numpy.ndarray
            Column ``c`` is the probability of class ``c``; classes absent
            from the training labels get 0.

        Raises
        ------
        ValueError
            If ``X`` is not 2-D with ``n_features`` columns.
        """
        raw = self.raw_predict(X, batch_size)
        proba = np.zeros((raw.shape[0], self.n_classes), dtype=np.float64)
        K = len(self.classes)
        if K == 1:
            proba[:, self.classes[0]] = 1.0
        elif K == 2:
            p1 = _expit(raw[:, 0])
            proba[:, self.classes[1]] = p1
            proba[:, self.classes[0]] = 1 - p1
        else:
            # softmax as scikit-learn's: shift by the row maximum, exp, normalise
            z = raw - raw.max(axis=1, keepdims=True)
            np.exp(z, out=z)
            z /= z.sum(axis=1, keepdims=True)
            proba[:, self.classes] = z
        return proba

    def _check_X(self, X: np.ndarray) -> np.ndarray:
        X = np.asarray(X, dtype=np.float64)
        if X.ndim != 2 or X.shape[1] != self.n_features:
            raise ValueError(
                f"X must be 2-D with {self.n_features} columns (n_rows, {self.n_features}), "
                f"got shape {X.shape}"
            )
        return X

    # ------------------------------------------------------------------ summary
    def split_counts(self) -> np.ndarray:
        """Number of splits on each feature over all trees, ``(n_features,)``: which
        columns the classifier reads (a plain count, not a measure of effect)."""
        counts = np.zeros(self.n_features, dtype=np.int64)
        for iteration in self._trees:
            for tree in iteration:
                f = tree.feature[tree.left >= 0]
                counts += np.bincount(f, minlength=self.n_features)
        return counts

    def n_parameters(self) -> int:
        """Total number of leaves over all trees (free parameters, for BIC)."""
        return self._n_leaves

    @property
    def n_iterations(self) -> int:
        """Number of boosting iterations."""
        return len(self._trees)

    def __repr__(self) -> str:
        return (
            f"BoostedTrees(n_features={self.n_features}, n_classes={self.n_classes}, "
            f"classes={self.classes.tolist()}, n_iterations={self.n_iterations}, "
            f"n_leaves={self._n_leaves})"
        )

    # -------------------------------------------------------------------- files
    def to_dict(self) -> dict[str, Any]:
        """The model as plain JSON types (see the module docstring for the layout).

        A ``+inf`` threshold is written as ``None`` (JSON ``null``), so the
        document is strict JSON.
        """
        return {
            "kind": KIND,
            "version": VERSION,
            "n_features": self.n_features,
            "n_classes": self.n_classes,
            "classes": [int(c) for c in self.classes],
            "baseline": [float(b) for b in self.baseline],
            "trees": [[_tree_to_dict(t) for t in iteration] for iteration in self._trees],
        }

    @classmethod
    def from_dict(cls, data: Any, source: str | None = None) -> BoostedTrees:
        """Rebuild a model from :meth:`to_dict` output, checking everything.

        Parameters
        ----------
        data
            The document (e.g. from ``json.loads``).
        source
            File name for error messages.

        Raises
        ------
        ModelFileError
            Naming the entry that is wrong: kind or version, a missing or
            unknown key, a wrong type or length, a child index out of range or
            not after its parent, a node with no or two parents, a feature
            index out of range, a non-finite value, baseline or threshold.
        """

        def fail(message: str) -> ModelFileError:
            return ModelFileError(f"boosted trees: {message}", file=source)

        if not isinstance(data, Mapping):
            raise fail("expected a JSON object")
        if data.get("kind") != KIND:
            raise fail(f"kind {data.get('kind')!r}, expected {KIND!r}")
        version = data.get("version")
        if not _is_int(version) or version != VERSION:
            raise fail(f"version {version!r} is not supported (expected {VERSION})")
        for key in _TOP_KEYS:
            if key not in data:
                raise fail(f"missing entry {key!r}")
        extra = sorted(set(data) - set(_TOP_KEYS))
        if extra:
            raise fail(f"unknown entries {extra}")
        n_features = data["n_features"]
        n_classes = data["n_classes"]
        if not _is_int(n_features) or not 1 <= n_features <= MAX_FEATURES:
            raise fail(
                f"n_features must be a positive integer (at most {MAX_FEATURES}), "
                f"got {n_features!r}"
            )
        if not _is_int(n_classes) or not 1 <= n_classes <= MAX_CLASSES:
            raise fail(
                f"n_classes must be a positive integer (at most {MAX_CLASSES}), got {n_classes!r}"
            )
        classes = data["classes"]
        if (
            not isinstance(classes, list)
            or not classes
            or not all(_is_int(c) and 0 <= c < n_classes for c in classes)
        ):
            raise fail(f"classes must be a non-empty list of integers in 0..{n_classes - 1}")
        if any(b <= a for a, b in pairwise(classes)):
            raise fail("classes must be increasing")
        per_iter = _trees_per_iteration(len(classes))
        baseline = data["baseline"]
        if not isinstance(baseline, list) or len(baseline) != per_iter:
            raise fail(f"baseline must be a list of {per_iter} numbers for {len(classes)} classes")
        if not all(_is_finite(b) for b in baseline):
            raise fail("baseline must hold finite numbers")
        iterations = data["trees"]
        if not isinstance(iterations, list):
            raise fail("trees must be a list of iterations")
        if per_iter == 0 and iterations:
            raise fail("a model of a single class has no trees")
        trees: list[list[_Tree]] = []
        for i, iteration in enumerate(iterations):
            if not isinstance(iteration, list) or len(iteration) != per_iter:
                raise fail(f"trees[{i}] must be a list of {per_iter} trees")
            trees.append(
                [
                    _tree_from_dict(tree, n_features, f"trees[{i}][{k}]", fail)
                    for k, tree in enumerate(iteration)
                ]
            )
        return cls(n_features, n_classes, classes, baseline, trees)


# ---------------------------------------------------------------------- helpers
def _expit(x: np.ndarray) -> np.ndarray:
    """Logistic sigmoid in numpy (scipy.special costs a tenth of a second to import,
    which a one-core decode would pay in full)."""
    with np.errstate(over="ignore"):
        return 1.0 / (1.0 + np.exp(-x))


def _is_int(v: Any) -> bool:
    return isinstance(v, Integral) and not isinstance(v, bool)


def _is_finite(v: Any) -> bool:
    """A finite real number (not a bool)."""
    if not isinstance(v, Real) or isinstance(v, bool):
        return False
    try:
        return math.isfinite(float(v))
    except OverflowError:
        return False


def _depth(tree: _Tree) -> int:
    """Depth of the deepest leaf (children come after their parents)."""
    depth = np.zeros(len(tree.value), dtype=np.intp)
    for j in np.flatnonzero(tree.left >= 0):
        depth[tree.left[j]] = depth[tree.right[j]] = depth[j] + 1
    return int(depth.max())


def _tree_to_dict(tree: _Tree) -> dict[str, list]:
    return {
        "feature": tree.feature.tolist(),
        "threshold": [None if t == np.inf else float(t) for t in tree.threshold],
        "missing_left": tree.missing_left.tolist(),
        "left": tree.left.tolist(),
        "right": tree.right.tolist(),
        "value": tree.value.tolist(),
    }


def _tree_from_dict(tree: Any, n_features: int, where: str, fail) -> _Tree:
    """Check one tree's lists and turn them into arrays."""
    if not isinstance(tree, Mapping):
        raise fail(f"{where} must be an object")
    for key in _TREE_KEYS:
        if key not in tree:
            raise fail(f"{where}: missing entry {key!r}")
    extra = sorted(set(tree) - set(_TREE_KEYS))
    if any("categ" in str(key) or "bitset" in str(key) for key in extra):
        raise fail(f"{where}: categorical splits are not supported")
    if extra:
        raise fail(f"{where}: unknown entries {extra}")
    lists = {key: tree[key] for key in _TREE_KEYS}
    for key, value in lists.items():
        if not isinstance(value, list):
            raise fail(f"{where}.{key} must be a list")
    n = len(lists["value"])
    if n == 0:
        raise fail(f"{where} has no nodes")
    for key, value in lists.items():
        if len(value) != n:
            raise fail(f"{where}.{key} has {len(value)} entries, expected {n} (one per node)")
    # Checks run on whole lists (types by set, values with numpy): a model file
    # holds hundreds of trees, and decoding one core must not wait on them.
    for key in ("feature", "left", "right"):
        if not {type(v) for v in lists[key]} <= {int}:
            raise fail(f"{where}.{key} must hold integers")
    if not {type(v) for v in lists["missing_left"]} <= {bool}:
        raise fail(f"{where}.missing_left must hold true/false")
    for key in ("value", "threshold"):
        kinds = {type(v) for v in lists[key]}
        allowed = {int, float} | ({type(None)} if key == "threshold" else set())
        values = lists[key]
        if not kinds <= allowed:
            j = next(i for i, v in enumerate(values) if type(v) not in allowed)
            raise fail(f"{where}.{key}[{j}] = {values[j]!r} is not a finite number")
        arr = np.array([np.nan if v is None else v for v in values], dtype=np.float64)
        bad = ~np.isfinite(arr) & np.array([v is not None for v in values])
        if bad.any():
            j = int(np.flatnonzero(bad)[0])
            raise fail(
                f"{where}.{key}[{j}] = {values[j]!r} is not a finite number"
                + (
                    " (null stands for +inf, a split on missing values)"
                    if key == "threshold"
                    else ""
                )
            )
    feature = np.array(lists["feature"], dtype=np.intp)
    left = np.array(lists["left"], dtype=np.intp)
    right = np.array(lists["right"], dtype=np.intp)
    nodes = np.arange(n)
    leaf = left == -1
    odd = leaf & ((right != -1) | (feature != -1))
    if odd.any():
        raise fail(f"{where}: leaf {int(np.flatnonzero(odd)[0])} must have right = feature = -1")
    for side, child in (("left", left), ("right", right)):
        out = ~leaf & ~((nodes < child) & (child < n))
        if out.any():
            j = int(np.flatnonzero(out)[0])
            raise fail(
                f"{where}.{side}[{j}] = {child[j]} is out of range: a child must come "
                f"after its parent, within the tree's {n} nodes"
            )
    out = ~leaf & ~((feature >= 0) & (feature < n_features))
    if out.any():
        j = int(np.flatnonzero(out)[0])
        raise fail(f"{where}.feature[{j}] = {feature[j]} is out of range 0..{n_features - 1}")
    parents = np.bincount(np.r_[left[~leaf], right[~leaf]], minlength=n)
    bad = np.flatnonzero(parents[1:] != 1) + 1
    if bad.size:
        raise fail(f"{where}: node {bad[0]} has {parents[bad[0]]} parents, expected 1")
    threshold = np.array(
        [np.inf if v is None else float(v) for v in lists["threshold"]], dtype=np.float64
    )
    return _Tree(
        feature=feature,
        threshold=threshold,
        missing_left=np.array(lists["missing_left"], dtype=bool),
        left=left,
        right=right,
        value=np.array(lists["value"], dtype=np.float64),
    )


def _tree_from_sklearn(nodes: np.ndarray) -> _Tree:
    """Our arrays from a scikit-learn ``TreePredictor.nodes`` record array.

    The records (``PREDICTOR_RECORD_DTYPE``) are in pre-order, children after
    their parent; leaves have ``left == right == feature_idx == 0`` there.
    """
    if np.any(nodes["is_categorical"].astype(bool)):
        raise RuntimeError("scikit-learn fitted a categorical split; none was asked for")
    leaf = nodes["is_leaf"].astype(bool)
    return _Tree(
        feature=np.where(leaf, -1, nodes["feature_idx"]).astype(np.intp),
        threshold=np.where(leaf, 0.0, nodes["num_threshold"]).astype(np.float64),
        missing_left=(nodes["missing_go_to_left"].astype(bool) & ~leaf),
        left=np.where(leaf, -1, nodes["left"].astype(np.intp)),
        right=np.where(leaf, -1, nodes["right"].astype(np.intp)),
        value=nodes["value"].astype(np.float64),
    )


# -------------------------------------------------------------------------- fit
def fit_boosted(
    X: np.ndarray,
    y: np.ndarray,
    n_classes: int,
    *,
    sample_weight: np.ndarray | None = None,
    random_state: int = 0,
    max_iter: int = 100,
    learning_rate: float = 0.1,
    max_leaf_nodes: int = 15,
    min_samples_leaf: int = 10,
    l2_regularization: float = 1.0,
) -> BoostedTrees:
    """Fit a gradient-boosted tree classifier with scikit-learn, return our evaluator.

    scikit-learn's ``HistGradientBoostingClassifier`` is trained with
    ``early_stopping=False`` (so the result does not depend on a held-out
    split or on the data size), no categorical features and the given
    hyperparameters; its trees are then read into a :class:`BoostedTrees`.
    The defaults (100 rounds at learning rate 0.1) decoded the simulated tuning
    cores within 0.01 of 200 rounds at 0.05 and 400 at 0.025, with half the
    trees of the former: a smaller model file and a faster decode (measured
    2026-12-02 for the ``stacking`` piece, docs/hmm.md).

    Parameters
    ----------
    X
        ``(n, n_features)`` numbers; ``NaN`` is a missing value. Infinite
        values are refused.
    y
        ``(n,)`` integer labels in ``0 .. n_classes - 1``; some classes may be
        absent (they get probability 0).
    n_classes
        Size of the class set.
    sample_weight
        Optional ``(n,)`` weights.
    random_state
        Seed (scikit-learn subsamples rows when it bins more than 200 000).
    max_iter, learning_rate, max_leaf_nodes, min_samples_leaf, l2_regularization
        Passed to scikit-learn.

    Returns
    -------
    BoostedTrees
        With a single class in ``y`` (which scikit-learn cannot fit), a model
        without trees giving that class probability 1 everywhere. The same
        inputs again return the same object, fitted once (:data:`_FITTED`).

    Raises
    ------
    ValueError
        If the shapes do not match, ``X`` holds infinities or ``y`` a label
        outside ``0 .. n_classes - 1``.
    """
    X = np.asarray(X, dtype=np.float64)
    y = np.asarray(y)
    if not _is_int(n_classes) or n_classes < 1:
        raise ValueError(f"n_classes must be a positive integer, got {n_classes!r}")
    if X.ndim != 2 or X.shape[1] < 1:
        raise ValueError(f"X must be 2-D with at least one column, got shape {X.shape}")
    if y.shape != (X.shape[0],):
        raise ValueError(f"y must have shape ({X.shape[0]},) to match X, got {y.shape}")
    if X.shape[0] == 0:
        raise ValueError("no rows to fit")
    if np.isinf(X).any():
        raise ValueError("X holds infinite values; use NaN for a missing value")
    if not np.issubdtype(y.dtype, np.integer):
        if not np.all(np.isfinite(y)) or not np.all(y == np.round(y)):
            raise ValueError("y must hold integer class labels")
        y = y.astype(np.int64)
    if y.min() < 0 or y.max() >= n_classes:
        raise ValueError(f"y holds labels outside 0..{n_classes - 1}")
    params = dict(
        max_iter=max_iter,
        learning_rate=learning_rate,
        max_leaf_nodes=max_leaf_nodes,
        min_samples_leaf=min_samples_leaf,
        l2_regularization=l2_regularization,
    )
    key = _fit_key(X, y, n_classes, sample_weight, random_state, params)
    if key not in _FITTED:
        while len(_FITTED) >= _FITTED_MAX:
            del _FITTED[next(iter(_FITTED))]
        _FITTED[key] = _train(X, y, n_classes, sample_weight, random_state, params)
    return _FITTED[key]


def _fit_key(X, y, n_classes, sample_weight, random_state, params) -> bytes:
    """Digest of everything a fit of :func:`fit_boosted` depends on."""
    h = hashlib.blake2b(digest_size=20)
    h.update(repr((X.shape, n_classes, random_state, sorted(params.items()))).encode())
    h.update(np.ascontiguousarray(X).tobytes())
    h.update(np.ascontiguousarray(y, dtype=np.int64).tobytes())
    if sample_weight is not None:
        h.update(np.ascontiguousarray(sample_weight, dtype=np.float64).tobytes())
    return h.digest()


def _train(X, y, n_classes, sample_weight, random_state, params) -> BoostedTrees:
    """One scikit-learn fit of checked inputs, read into a :class:`BoostedTrees`."""
    classes = np.unique(y)
    n_features = X.shape[1]
    if len(classes) == 1:
        return BoostedTrees(n_features, n_classes, classes, [], [])

    from sklearn.ensemble import HistGradientBoostingClassifier

    # A column with no known value (e.g. the contact types of a bed table that
    # has none) has no bin edges, which scikit-learn >= 1.9 refuses; held at a
    # constant it is never split on, so the trees never read it when predicting.
    empty = ~np.isfinite(X).any(axis=0)
    if empty.any():
        X = X.copy()
        X[:, empty] = 0.0
    clf = HistGradientBoostingClassifier(
        loss="log_loss",
        **params,
        categorical_features=None,
        early_stopping=False,
        random_state=random_state,
    )
    from threadpoolctl import threadpool_limits

    # One OpenMP thread: on a machine whose cores are busy with other work,
    # scikit-learn's threads wait for each other, and 200 beds x 27 columns
    # took 4.1-4.8 s with two threads against 0.5-0.9 s with one (measured
    # 2026-12-02 on 2 cores under load); on so few rows threads gain nothing.
    with threadpool_limits(1, user_api="openmp"):
        clf.fit(X, y, sample_weight=sample_weight)
    per_iter = _trees_per_iteration(len(classes))
    if not np.array_equal(clf.classes_, classes) or clf.n_trees_per_iteration_ != per_iter:
        raise RuntimeError("unexpected class layout in the scikit-learn model")
    baseline = np.asarray(clf._baseline_prediction, dtype=np.float64).reshape(-1)
    if baseline.shape != (per_iter,):
        raise RuntimeError("unexpected baseline shape in the scikit-learn model")
    trees = [[_tree_from_sklearn(p.nodes) for p in iteration] for iteration in clf._predictors]
    model = BoostedTrees(n_features, n_classes, classes, baseline, trees)
    # the checks a model file gets, on the first iteration's trees (every tree has
    # scikit-learn's one layout): a change of it shows up here, at fit time, not when
    # a saved model is read; all trees took a tenth of the time of the fit itself
    first = BoostedTrees(n_features, n_classes, classes, baseline, trees[:1])
    try:
        BoostedTrees.from_dict(first.to_dict())
    except ModelFileError as exc:
        raise RuntimeError(f"unexpected scikit-learn tree layout: {exc.message}") from None
    return model
