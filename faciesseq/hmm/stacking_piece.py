"""The stacking piece: boosted trees over a window of beds, read as an emission."""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping
from typing import Any

import numpy as np

from faciesseq.errors import ConfigError, ModelFileError
from faciesseq.hmm.emissions import EmissionPiece, check_table
from faciesseq.hmm.encoding import (
    STACKING,
    STACKING_HALF_WIDTH,
    EncodedBeds,
    bed_window_columns,
    stacking_columns,
)

__all__ = ["StackingEmission"]


class StackingEmission(EmissionPiece):
    """Scaled likelihood P(tract | stacking window) / P(tract) from boosted trees.

    The hybrid classifier-HMM of Bourlard & Morgan (1994): a classifier's
    posterior divided by the class prior stands for the likelihood of the
    observation, up to a factor common to all tracts, so Viterbi and
    forward-backward use it as they would an emission. Why not only the
    generative pieces: measured on simulated cores, a classifier over a window
    of beds on each side separates the tracts far better than a product of
    per-bed pieces (benchmarks/hmm_model.md), because a tract is a pattern of
    several beds, not one bed. Learnt once from labelled beds (:meth:`train`);
    EM leaves it alone (``static``). Probabilities below ``floor`` are raised
    to it, so no tract is ever impossible from this piece alone; a tract with
    no labelled bed gets ``log(floor)``.

    The trees read the columns of :func:`~faciesseq.hmm.encoding.stacking_window`
    that vary among the labelled beds (:meth:`columns`): a column empty or constant
    there (the contacts of a table without them) cannot be split on, and leaving it
    out spares the trees its histogram. Model files written before the window read
    the cycles around each bed (2026-12-04) read the window of beds, all of it.
    ``depth_unit`` is the median cycle thickness of the training beds, the unit the
    depth windows of decoded beds are measured in (:func:`~faciesseq.hmm.encoding.depth_window`).
    """

    kind = "stacking"
    static = True

    def __init__(
        self,
        n_tracts: int,
        half_width: int = STACKING_HALF_WIDTH,
        floor: float = 1e-3,
        name: str = STACKING,
    ) -> None:
        self.name = name
        self.n_tracts = int(n_tracts)
        self.half_width = int(half_width)
        self.floor = float(floor)
        self.trees = None
        self.depth_unit = None
        self.class_prior_ = np.full(self.n_tracts, 1.0 / self.n_tracts)
        self.used_ = np.arange(len(stacking_columns(self.half_width)))

    def columns(self) -> list[str]:
        """Names of the window columns the trees read."""
        names = stacking_columns(self.half_width)
        return [names[i] for i in self.used_]

    def train(self, beds: EncodedBeds, labels: np.ndarray, random_state: int = 0) -> None:
        """Learn the classifier from the beds with a label (``labels`` -1 = none)."""
        from faciesseq.hmm.boosting import fit_boosted

        labels = np.asarray(labels, dtype=np.int64)
        known = labels >= 0
        if not known.any():
            raise ConfigError(
                "the stacking feature is learnt from labelled beds; none are labelled "
                "(give a label column, or leave the feature out)"
            )
        X = beds.numeric[STACKING][known]
        y = labels[known]
        self.depth_unit = beds.depth_unit
        self.used_ = _varying(X)
        self.trees = fit_boosted(X[:, self.used_], y, self.n_tracts, random_state=int(random_state))
        counts = np.bincount(y, minlength=self.n_tracts).astype(float)
        prior = counts / counts.sum()
        self.class_prior_ = np.where(counts > 0, prior, 1.0)

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        if self.trees is None:
            raise ConfigError("the stacking piece is not trained")
        x = np.asarray(beds.numeric[STACKING][:, self.used_], dtype=float)
        p = self.trees.predict_proba(x)
        return np.log(np.maximum(p, self.floor)) - np.log(self.class_prior_)[None, :]

    def empty_stats(self, n_tracts: int) -> dict[str, np.ndarray]:
        return {}

    def accumulate(self, stats: dict, beds: EncodedBeds, weights: np.ndarray) -> None:
        return None

    def m_step(self, stats: dict) -> None:
        return None

    def n_parameters(self) -> int:
        return 0 if self.trees is None else int(self.trees.n_parameters())

    def to_dict(self) -> dict[str, Any]:
        if self.trees is None:
            raise ConfigError("the stacking piece is not trained")
        return {
            "kind": self.kind,
            "name": self.name,
            "half_width": self.half_width,
            "floor": self.floor,
            "class_prior": self.class_prior_.tolist(),
            "depth_unit": self.depth_unit,
            "columns": self.columns(),
            "trees": self.trees.to_dict(),
        }

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        from faciesseq.hmm.boosting import BoostedTrees

        if int(data["half_width"]) != STACKING_HALF_WIDTH:
            raise ModelFileError(
                f"emission {data.get('name')!r}: half_width must be {STACKING_HALF_WIDTH}",
                file=source,
            )
        floor = float(data["floor"])
        if not 0 < floor < 1:
            raise ModelFileError(
                f"emission {data.get('name')!r}: floor must lie in (0, 1)", file=source
            )
        piece = cls(n_tracts, floor=floor, name=str(data["name"]))
        prior = check_table(f"{piece.name}.class_prior", data["class_prior"], (n_tracts,), source)
        if np.any(prior <= 0) or np.any(prior > 1):
            raise ModelFileError(
                f"emission {piece.name}: class_prior must lie in (0, 1]", file=source
            )
        piece.class_prior_ = prior
        piece.depth_unit = _depth_unit_read(data, piece.name, source)
        used = _columns_read(data, piece.name, source)
        declared = data["trees"].get("n_features") if isinstance(data["trees"], Mapping) else None
        if declared != len(used):  # checked before the trees are packed into arrays
            raise ModelFileError(
                f"emission {piece.name}: {declared!r} window features, {len(used)} columns",
                file=source,
            )
        trees = BoostedTrees.from_dict(data["trees"], source)
        if trees.n_classes != n_tracts:
            raise ModelFileError(
                f"emission {piece.name}: {trees.n_classes} classes for {n_tracts} tracts",
                file=source,
            )
        if trees.n_features != declared:
            raise ModelFileError(
                f"emission {piece.name}: {trees.n_features} window features, {declared} declared",
                file=source,
            )
        piece.trees = trees
        piece.used_ = used
        return piece


def _varying(X: np.ndarray) -> np.ndarray:
    """Indices of the columns of ``X`` with two or more distinct known values (all of
    them where none has)."""
    with np.errstate(invalid="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN columns
        varying = np.nanmax(X, axis=0) > np.nanmin(X, axis=0)
    return np.flatnonzero(varying) if varying.any() else np.arange(X.shape[1])


def _depth_unit_read(data: Mapping, name: str, source: str | None) -> float | None:
    """The unit of the depth windows a model file's trees were trained with: a positive
    number, or ``None`` (no cycle of known thickness; files written before the depth
    windows, 2026-12-05, have none and their trees do not read them)."""
    value = data.get("depth_unit")
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, int | float) or not 0 < value < math.inf:
        raise ModelFileError(
            f"emission {name}: depth_unit must be a positive number or null", file=source
        )
    return float(value)


def _columns_read(data: Mapping, name: str, source: str | None) -> np.ndarray:
    """Indices into :func:`stacking_columns` of the columns a model file's trees read:
    those it lists, or, in files written before the window read the cycles (no list),
    the window of beds."""
    if "columns" not in data:
        return np.arange(len(bed_window_columns()))
    listed = data["columns"]
    known = {c: i for i, c in enumerate(stacking_columns())}
    if (
        not isinstance(listed, list)
        or not listed
        or len(set(map(str, listed))) != len(listed)
        or any(str(c) not in known for c in listed)
    ):
        raise ModelFileError(
            f"emission {name}: columns must list distinct window columns of "
            f"faciesseq.hmm.encoding.stacking_columns()",
            file=source,
        )
    return np.array([known[str(c)] for c in listed], dtype=np.int64)
