"""The reference piece: another database's stacking trees, read in a fit without labels.

A fit without labels has nothing but priors to name its tracts (``docs/hmm.md``, "Fits
without labels"). A reference is a model fitted *with* labels on other cores, e.g. an
interpreted field nearby or cores of other generators: its stacking trees
(:class:`~faciesseq.hmm.stacking_piece.StackingEmission`) read the window of beds and
cycles around each bed from ranks, thicknesses and contacts, never from facies names,
so they can read a database whose facies differ, once its ranks are put on the
reference's scale. The piece is static (EM leaves it alone) and multiplied into the
emissions of the fit's own context pieces, which EM fits as before: the reference
names the tracts, the database's own stacking places them. Measured on four
generators written blind, each read by a reference learnt from the other three
(``benchmarks/eval_reference.py``, ``benchmarks/tract_model.md``).

Why its own window and not the fit's ``stacking`` column: the window must be laid out
on the reference's rank scale (this database's ranks stretched linearly onto the
reference's range, rounded to whole ranks where the reference's are whole) and its
depth windows measured in this database's median cycle, so the piece computes it from
the coded beds itself.
"""

from __future__ import annotations

import functools
import os
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from faciesseq.errors import ConfigError, ModelFileError
from faciesseq.hmm.emissions import check_table
from faciesseq.hmm.encoding import EncodedBeds, median_cycle_thickness, stacking_window
from faciesseq.hmm.stacking_piece import StackingEmission

__all__ = [
    "BUNDLED",
    "REFERENCE",
    "ReferenceEmission",
    "bundled_reference",
    "reference_model",
    "rescaled_ranks",
]

#: The feature name of the reference piece.
REFERENCE = "reference"
#: The name that asks for the reference packaged with faciesseq (``--reference generators``).
BUNDLED = "generators"


def reference_model(reference):
    """The fitted reference a fit reads: ``reference`` itself where it is a model,
    the packaged one for ``"generators"`` (:data:`BUNDLED`), else the model file at
    that path. Files are read once per process (graph choice and the nested start
    build the piece several times, and the command line reads the file first to refuse
    a bad one before any work); a rewritten file is read again."""
    if not isinstance(reference, str | os.PathLike):
        return reference
    if str(reference) == BUNDLED:
        return _packaged()
    path = str(reference)  # a missing file: load_model's one line
    return _model_file(path, os.stat(path).st_mtime_ns if os.path.isfile(path) else 0)


@functools.lru_cache(maxsize=2)
def _model_file(path: str, mtime: int):
    from faciesseq.hmm.modelfile import load_model

    return load_model(path)


@functools.lru_cache(maxsize=1)
def _packaged():
    return bundled_reference()


def bundled_reference():
    """The reference packaged with faciesseq (``faciesseq/data/reference-generators.json.gz``):
    a model fitted with every core labelled on invented cores of four generators written
    blind (three seeds, three settings each; their facies on one scale of ranks 0-10),
    made by ``python benchmarks/eval_reference.py --seeds 631,632,633 --out /tmp/ref
    --save-reference faciesseq/data/reference-generators.json.gz``. What it gives on a
    generator it never saw is measured by holding each one out (docs/hmm.md, "A
    reference model")."""
    import gzip
    import json
    from importlib.resources import files

    from faciesseq.hmm.modelfile import model_from_dict

    path = files("faciesseq") / "data" / "reference-generators.json.gz"
    with path.open("rb") as raw, gzip.open(raw, "rt", encoding="utf-8") as f:
        return model_from_dict(json.load(f), str(path))


def rescaled_ranks(ranks: np.ndarray, reference_ranks: np.ndarray) -> np.ndarray:
    """``ranks`` stretched linearly onto the range of ``reference_ranks`` (lowest onto
    lowest, highest onto highest), rounded to whole ranks where the reference's are
    all whole; ``NaN`` stays ``NaN``. A database of one rank lands on the lowest."""
    r = np.asarray(ranks, dtype=float)
    ref = np.asarray(reference_ranks, dtype=float)
    ref = ref[np.isfinite(ref)]
    lo, hi = np.nanmin(r), np.nanmax(r)
    span = hi - lo if hi > lo else 1.0
    out = ref.min() + (r - lo) / span * (ref.max() - ref.min())
    if np.all(ref == np.round(ref)):
        out = np.round(out)
    return out


class ReferenceEmission(StackingEmission):
    """Scaled likelihood of a reference model's stacking trees, on this database's beds.

    Built by :meth:`of` from a fitted reference and the fitting model's facies (their
    ranks on the reference's scale, cycle-base marks and settings); ``weight``
    multiplies its log-probability. ``columns_`` maps each tract of the fitting model
    to the reference's class of that name, so a fit on fewer tracts (the nested start)
    reads the classes it has."""

    kind = "reference"

    def __init__(self, n_tracts: int, floor: float = 1e-3, name: str = REFERENCE) -> None:
        super().__init__(n_tracts, floor=floor, name=name)
        self.weight = 1.0
        self.columns_ = np.arange(n_tracts)
        self.ranks_ = np.zeros(0)
        self.cycle_base_ = None
        self.nonmarine_ = None

    @classmethod
    def of(
        cls,
        reference,
        tracts: Sequence[str],
        ranks: np.ndarray,
        cycle_base: np.ndarray | None,
        nonmarine: np.ndarray | None,
        weight: float = 1.0,
    ) -> ReferenceEmission:
        """The piece for a model of ``tracts`` whose facies have ``ranks`` (and marks),
        from ``reference``: a :class:`~faciesseq.hmm.model.TractHMM` fitted with labels
        and a scheme, whose emissions hold stacking trees."""
        trees = [p for p in getattr(reference, "emissions_", ()) if p.kind == "stacking"]
        if not trees or getattr(reference, "ranks_", None) is None:
            raise ConfigError(
                "a reference must be a model fitted with labels and a scheme with ranks "
                "(its stacking trees read the beds of this database)"
            )
        order = list(reference.tract_model_.order)
        missing = [t for t in tracts if t not in order]
        if missing:
            raise ConfigError(f"the reference model has no tract {', '.join(missing)}")
        src = trees[0]
        piece = cls(len(tracts))
        piece.trees, piece.used_ = src.trees, src.used_.copy()
        piece.columns_ = np.array([order.index(t) for t in tracts], dtype=np.int64)
        piece.class_prior_ = src.class_prior_[piece.columns_].copy()
        piece.ranks_ = rescaled_ranks(ranks, reference.ranks_)
        piece.cycle_base_ = None if cycle_base is None else np.asarray(cycle_base, float)
        piece.nonmarine_ = None if nonmarine is None else np.asarray(nonmarine, float)
        piece.weight = float(weight)
        return piece

    def train(self, beds: EncodedBeds, labels: np.ndarray, random_state: int = 0) -> None:
        """Learnt elsewhere: only the unit of the depth windows is taken from ``beds``,
        the median cycle of the database being fitted (on the reference's ranks)."""
        self.depth_unit = median_cycle_thickness(
            beds.facies,
            beds.lengths,
            self.ranks_,
            beds.numeric["thickness"],
            self.cycle_base_,
            self.nonmarine_,
        )

    def log_prob(self, beds: EncodedBeds) -> np.ndarray:
        if self.trees is None:
            raise ConfigError("the reference piece is not built")
        window = stacking_window(
            beds.facies,
            beds.lengths,
            self.ranks_,
            beds.numeric["thickness"],
            beds.contact,
            self.cycle_base_,
            self.nonmarine_,
            depth_unit=self.depth_unit,
        )
        p = self.trees.predict_proba(window[:, self.used_].astype(float))[:, self.columns_]
        return self.weight * (np.log(np.maximum(p, self.floor)) - np.log(self.class_prior_))

    def to_dict(self) -> dict[str, Any]:
        out = super().to_dict()
        out.update(
            weight=self.weight,
            classes=self.columns_.tolist(),
            ranks=_listed(self.ranks_),
            cycle_base=None if self.cycle_base_ is None else _listed(self.cycle_base_),
            nonmarine=None if self.nonmarine_ is None else _listed(self.nonmarine_),
        )
        return out

    @classmethod
    def from_dict(cls, data: Mapping, n_tracts: int, source: str | None = None):
        n_classes = int(data["trees"]["n_classes"])
        base = StackingEmission.from_dict(
            {**data, "class_prior": [1.0 / n_classes] * n_classes}, n_classes, source
        )
        piece = cls(n_tracts, floor=base.floor, name=base.name)
        piece.trees, piece.used_, piece.depth_unit = base.trees, base.used_, base.depth_unit
        piece.class_prior_ = check_table(
            f"{piece.name}.class_prior", data["class_prior"], (n_tracts,), source
        )
        columns = np.asarray(data["classes"], dtype=np.int64)
        if columns.shape != (n_tracts,) or np.any(columns < 0) or np.any(columns >= n_classes):
            raise ModelFileError(
                f"emission {piece.name}: classes must name {n_tracts} of the trees' "
                f"{n_classes} classes",
                file=source,
            )
        piece.columns_ = columns
        piece.weight = float(data["weight"])
        piece.ranks_ = _floats(data["ranks"])
        piece.cycle_base_ = None if data["cycle_base"] is None else _floats(data["cycle_base"])
        piece.nonmarine_ = None if data["nonmarine"] is None else _floats(data["nonmarine"])
        return piece


def _listed(x: np.ndarray) -> list:
    return [None if not np.isfinite(v) else float(v) for v in np.asarray(x, dtype=float)]


def _floats(values) -> np.ndarray:
    return np.array([np.nan if v is None else float(v) for v in values], dtype=float)
