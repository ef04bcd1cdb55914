"""Model files: a fitted :class:`~faciesseq.hmm.model.TractHMM` as versioned JSON.

Never pickle: a model file is plain JSON a reviewer can read, diff and keep,
and loading one runs no code. Layout (``version: 1``)::

    {
      "format": "faciesseq-tract-model",
      "version": 1,
      "faciesseq_version": "0.1.0",
      "scheme": {...} | null,            # the facies scheme (scheme YAML as JSON)
      "tract_model": {...},              # tracts, order, skips, surfaces, substates
      "hyperparameters": {features, substates, prior_strength, cycle_prior,
                          n_restarts, tol, max_iter, unit, step,
                          calibration_folds, weigh_evidence, nested_start},
      "states": {"labels": [...], "tract": [...], "substates": [...]},
      "facies": [...], "ranks": [...] | null, "contacts": [...],
      "parameters": {"startprob": [...], "transmat": [[...]...],
                     "emissions": [{"kind": ..., "name": ..., ...}, ...],
                     "temperature": 1.0},   # posterior temperature (absent: 1)
      "training": {log_likelihood, objective, n_beds, n_labelled, cores, restarts,
                   best_restart, seed, calibration, cautions, units,
                   facies_beds, bed_thickness_median,   # `fit` on beds (absent: older)
                   labelled_mean_rank,   # `fit --labels` with ranks (absent: older)
                   labelled_cores,   # `fit --labels`: the cores with labels (absent: older)
                   ...provenance given by the caller},
      "provenance": {"created": "2026-12-01T19:30:00+00:00", "command": [...]}
    }

Only ``provenance`` (the entries of :data:`RUN_KEYS`) changes when a fit is
repeated with the same data, options and seed; the rest is byte-identical.

:func:`load_model` checks every shape and probability, that transitions
outside the tract graph are zero, and rejects anything else with a
:class:`~faciesseq.errors.ModelFileError` naming the file and the entry.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Mapping
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from faciesseq._output import write_file
from faciesseq._version import __version__
from faciesseq.core import PROVENANCE, UNITS, CoreTable
from faciesseq.errors import ConfigError, ModelFileError
from faciesseq.hmm.calibration import TEMPERATURE_BOUNDS
from faciesseq.hmm.cautions import fit_cautions
from faciesseq.hmm.features import RANK_FEATURES
from faciesseq.hmm.model import ConvergenceMonitor, TractHMM
from faciesseq.hmm.pieces import piece_from_dict
from faciesseq.hmm.states import StateSpace
from faciesseq.scheme import FaciesScheme, TractModel

__all__ = ["FORMAT", "VERSION", "coreset_digest", "file_digest", "load_model", "save_model"]

FORMAT = "faciesseq-tract-model"
VERSION = 1
#: Provenance entries that differ from run to run (when, how it was called); they go
#: under the last key, ``provenance``, so that everything else is byte-identical when a
#: fit is repeated with the same data, options and seed.
RUN_KEYS = ("created", "command", "output", "host", "user")


def file_digest(path: str | Path) -> str:
    """``sha256:<hex>`` of a file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return "sha256:" + h.hexdigest()


def coreset_digest(coreset) -> str:
    """``sha256:<hex>`` of a core set's intervals (the columns of ``CoreSet.to_frame()``).

    Identifies the data a model was fitted on whatever the source format: each
    column is hashed by name, then as float64 numbers (integers and floats
    alike) or as text, a missing value marked apart from every text. Hashed
    from the arrays, not from CSV text, which cost seconds per 10^5 beds; the text of a
    categorical column from its categories, once each (at 10^6 beds 6.9 s of CPU
    through ``to_frame``'s text columns).
    """
    h = hashlib.sha256()
    for name, column in _digest_columns(coreset):
        h.update(b"\x1e" + str(name).encode("utf-8") + b"\x1d")
        if isinstance(column.dtype, pd.CategoricalDtype):
            text = np.asarray([str(c) for c in column.cat.categories] + ["\x00"], dtype=object)
            text = text[column.cat.codes.to_numpy()]  # code -1 (missing): the last
            h.update(b"t" + "\x1f".join(text).encode("utf-8", "surrogatepass"))
            continue
        if pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
            h.update(b"f" + np.ascontiguousarray(column.to_numpy(dtype=float)).tobytes())
            continue
        missing = column.isna().to_numpy()
        text = column.astype(str).to_numpy(dtype=object)
        text[missing] = "\x00"
        h.update(b"t" + "\x1f".join(text).encode("utf-8", "surrogatepass"))
    return "sha256:" + h.hexdigest()


def _digest_columns(coreset):
    """``(name, column)`` of ``coreset.to_frame()``; where the cores are one table, its
    own columns (text as categoricals) and the core names as a categorical."""
    if not isinstance(coreset.cores, CoreTable):
        yield from coreset.to_frame().items()
        return
    table = coreset.cores.table
    names = pd.Categorical.from_codes(coreset.cores.core_ids(), coreset.cores.names)
    yield "core", pd.Series(names)
    yield from ((c, table[c]) for c in table.columns if c not in PROVENANCE)


def _jsonable(value: Any) -> Any:
    if isinstance(value, Mapping):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return _jsonable(value.tolist())
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.floating | float):
        v = float(value)
        return v if math.isfinite(v) else None
    if isinstance(value, np.bool_):
        return bool(value)
    return value


def model_to_dict(model: TractHMM, provenance: Mapping[str, Any] | None = None) -> dict:
    """The JSON document of a fitted model (see the module docstring)."""
    model._check_fitted()
    states: StateSpace = model.states_
    training = {
        "log_likelihood": model.log_likelihood_,
        "objective": model.objective_,
        "n_beds": model.n_train_beds_,
        "n_labelled": model.n_labelled_,
        "cores": list(model.cores_),
        "best_restart": model.best_restart_,
        "restarts": model.restarts_,
        "calibration": model.calibration_,
        "graph_selection": getattr(model, "graph_selection_", []),
        "random_state": model.random_state
        if isinstance(model.random_state, int | None)
        else "generator",
    }
    if getattr(model, "labelled_cores_", None):
        training["labelled_cores"] = list(model.labelled_cores_)
    if getattr(model, "weights_rejected_", None):
        training["evidence_weights_rejected"] = model.weights_rejected_
    if getattr(model, "nested_start_", None):
        training["nested_start"] = model.nested_start_
    if getattr(model, "reference_check_", None):
        training["reference_check"] = model.reference_check_
    training["cautions"] = fit_cautions(model)
    if getattr(model, "units_", None):
        training["units"] = model.units_
    run = {"created": datetime.now(UTC).isoformat(timespec="seconds")}
    for key, value in dict(provenance or {}).items():
        (run if key in RUN_KEYS else training)[key] = value
    return _jsonable(
        {
            "format": FORMAT,
            "version": VERSION,
            "faciesseq_version": __version__,
            "scheme": None if model.scheme is None else model.scheme.to_dict(),
            "tract_model": model.tract_model_.to_dict(),
            "hyperparameters": {
                "features": list(model.features_),
                "substates": list(states.substates),
                "prior_strength": model.prior_strength,
                "cycle_prior": model.cycle_prior,
                "n_restarts": model.n_restarts,
                "tol": model.tol,
                "max_iter": model.max_iter,
                "unit": model.unit_,
                "step": model.step,
                "calibration_folds": model.calibration_folds,
                "weigh_evidence": bool(model.weigh_evidence),
                "nested_start": bool(model.nested_start),
            },
            "states": {
                "labels": states.labels(),
                "tract": [states.tracts[i] for i in states.state_tract],
                "substates": list(states.substates),
            },
            "facies": list(model.facies_),
            "ranks": None if model.ranks_ is None else model.ranks_.tolist(),
            "contacts": list(model.contacts_),
            "parameters": {
                "startprob": model.startprob_.tolist(),
                "transmat": model.transmat_.tolist(),
                "emissions": [p.to_dict() for p in model.emissions_],
                "temperature": float(model.temperature_),
            },
            "training": training,
            "provenance": run,
        }
    )


def save_model(
    model: TractHMM, path: str | Path, provenance: Mapping[str, Any] | None = None
) -> Path:
    """Write a fitted model to ``path`` as JSON, atomically (temporary file, then rename).

    A file already at ``path`` is replaced, as Python's own writers do; the command
    line (``faciesseq fit -o``) refuses one unless ``--force`` is given.

    ``provenance`` (e.g. input hashes, source names, command line) is added to
    the ``training`` section, except the run-specific entries of :data:`RUN_KEYS`
    (``command``...), which go with the date under ``provenance``.
    """
    path = Path(path)
    doc = model_to_dict(model, provenance)
    text = json.dumps(doc, indent=1, ensure_ascii=False, allow_nan=False)
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise ConfigError(f"folder {str(parent)!r} does not exist", file=str(path))
    return write_file(path, text + "\n")


def _get(doc: Mapping, key: str, kind: type | tuple, source: str) -> Any:
    if key not in doc:
        raise ModelFileError(f"missing entry {key!r}", file=source)
    value = doc[key]
    if not isinstance(value, kind):
        raise ModelFileError(f"entry {key!r} has the wrong type", file=source)
    return value


def _probabilities(name: str, value: Any, shape: tuple[int, ...], source: str) -> np.ndarray:
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ModelFileError(f"{name}: not a table of numbers", file=source) from None
    if arr.shape != shape:
        raise ModelFileError(f"{name}: shape {arr.shape}, expected {shape}", file=source)
    if not np.all(np.isfinite(arr)) or np.any(arr < 0) or np.any(arr > 1):
        raise ModelFileError(f"{name}: values must be probabilities in [0, 1]", file=source)
    if not np.allclose(arr.sum(axis=-1), 1.0, atol=1e-6):
        raise ModelFileError(f"{name}: rows must sum to 1", file=source)
    return arr


def model_from_dict(doc: Any, source: str = "model file") -> TractHMM:
    """Rebuild and validate a model from its JSON document."""
    _check_format(doc, source)
    model, states = _model_of(doc, source)
    params = doc["parameters"]
    startprob, transmat = _chain(params, states, source)
    facies = _get(doc, "facies", list, source)
    contacts = _get(doc, "contacts", list, source)
    ranks = doc.get("ranks")
    pieces = _pieces(params, model.features, facies, contacts, ranks, states, source)
    temperature = _temperature(params, source)
    training = _training(doc, source)
    model.temperature_ = float(temperature)
    model.calibration_ = training.get("calibration")
    model.states_ = states
    model.features_ = tuple(model.features)
    model.facies_ = tuple(str(c) for c in facies)
    model.contacts_ = tuple(str(c) for c in contacts)
    model.ranks_ = _ranks(ranks, len(facies), source)
    model.emissions_ = pieces
    model.startprob_ = startprob
    model.transmat_ = transmat
    model.log_likelihood_ = float(training.get("log_likelihood") or float("nan"))
    model.objective_ = float(training.get("objective") or float("nan"))
    model.n_train_beds_ = int(training.get("n_beds") or 0)
    model.n_labelled_ = int(training.get("n_labelled") or 0)
    model.cores_ = tuple(str(c) for c in training.get("cores") or ())
    # older files do not say which cores were labelled: None, not "none of them"
    listed = training.get("labelled_cores")
    model.labelled_cores_ = None if listed is None else tuple(str(c) for c in listed)
    model.restarts_ = list(training.get("restarts") or [])
    model.graph_selection_ = list(training.get("graph_selection") or [])
    model.weights_rejected_ = training.get("evidence_weights_rejected")
    rejected = model.weights_rejected_
    model.evidence_weights_ = _evidence_weights(pieces, model.weigh_evidence, rejected)
    model.nested_start_ = training.get("nested_start")
    model.reference_check_ = training.get("reference_check")
    model.units_ = training.get("units")  # None in files made before: no conversion
    if training.get("cautions") is not None:  # files made before: computed again
        model.cautions_ = [str(c) for c in training["cautions"]]
    model.best_restart_ = int(training.get("best_restart") or 0)
    history = []
    if model.best_restart_ < len(model.restarts_):
        history = list(model.restarts_[model.best_restart_].get("history", []))
    model.monitor_ = ConvergenceMonitor(model.tol, model.max_iter, history, model.n_train_beds_)
    model.training_ = dict(training)
    return model


def _check_format(doc: Any, source: str) -> None:
    """A faciesseq model document of the version this release reads."""
    if not isinstance(doc, Mapping):
        raise ModelFileError("not a faciesseq model file (expected a JSON object)", file=source)
    if doc.get("format") != FORMAT:
        raise ModelFileError(
            f"not a faciesseq model file (format {doc.get('format')!r}, expected {FORMAT!r})",
            file=source,
        )
    if doc.get("version") != VERSION:
        raise ModelFileError(
            f"model file version {doc.get('version')!r} is not supported (this faciesseq "
            f"reads version {VERSION}); refit the model with this version",
            file=source,
        )


def _model_of(doc: Mapping, source: str) -> tuple[TractHMM, StateSpace]:
    """The unfitted model the document's tract model, scheme, hyper-parameters and
    states describe, with its state space (checked against the transition table)."""
    try:
        tract_model = TractModel.from_dict(_get(doc, "tract_model", dict, source), source=source)
        raw_scheme = doc.get("scheme")
        scheme = None if raw_scheme is None else FaciesScheme.from_dict(raw_scheme, source=source)
    except ConfigError as exc:
        raise ModelFileError(f"invalid tract model or scheme: {exc.message}", file=source) from None
    hyper = _get(doc, "hyperparameters", dict, source)
    features = _features(hyper, source)
    states_doc = _get(doc, "states", dict, source)
    params = _get(doc, "parameters", dict, source)
    declared = states_doc.get("substates")
    rows = params.get("transmat")
    if (
        not isinstance(declared, list)
        or not all(isinstance(n, int) and not isinstance(n, bool) for n in declared)
        or not isinstance(rows, list)
        or sum(declared) > len(rows)
    ):
        # sizes are checked against the table actually present before anything is built
        raise ModelFileError(
            "states.substates: whole numbers expected, adding up to the number of rows of "
            f"parameters.transmat ({len(rows) if isinstance(rows, list) else 'missing'})",
            file=source,
        )
    try:
        substates = dict(zip(tract_model.order, [int(n) for n in states_doc["substates"]]))
        states = StateSpace.build(tract_model, substates)
        weigh = hyper.get("weigh_evidence", False)  # files made before it: unweighted
        nested = hyper.get("nested_start", False)  # files made before it: no nested start
        for name, value in (("weigh_evidence", weigh), ("nested_start", nested)):
            if not isinstance(value, bool):
                raise ValueError(f"{name} {value!r} is not true or false")
        model = TractHMM(
            tract_model=tract_model,
            scheme=scheme,
            features=features,
            substates=substates,
            prior_strength=float(hyper["prior_strength"]),
            cycle_prior=float(hyper.get("cycle_prior", 0.0)),
            n_restarts=int(hyper["n_restarts"]),
            tol=float(hyper["tol"]),
            max_iter=int(hyper["max_iter"]),
            unit=str(hyper["unit"]),
            step=None if hyper["step"] is None else float(hyper["step"]),
            calibration_folds=int(hyper.get("calibration_folds", 0)),
            weigh_evidence=weigh,
            nested_start=nested,
        )
    except (KeyError, TypeError, ValueError, ConfigError) as exc:
        raise ModelFileError(f"invalid hyper-parameters or states ({exc})", file=source) from None
    if model.unit not in UNITS:
        raise ModelFileError(f"unit {model.unit!r} is not one of {', '.join(UNITS)}", file=source)
    model.unit_ = model.unit
    if states_doc.get("labels") != states.labels():
        raise ModelFileError(
            f"states {states_doc.get('labels')} do not match the tract model ({states.labels()})",
            file=source,
        )
    return model, states


def _features(hyper: Mapping, source: str) -> tuple[str, ...]:
    """The emission features the hyper-parameters name: a list of names, never text
    (which would be read letter by letter)."""
    features = hyper.get("features")
    if not isinstance(features, list) or not all(isinstance(f, str) for f in features):
        raise ModelFileError(
            f"hyperparameters.features: a list of feature names expected, not {features!r:.60}",
            file=source,
        )
    return tuple(features)


def _evidence_weights(pieces: list, weighed: bool, rejected: Mapping | None) -> dict[str, float]:
    """The fit's ``evidence_weights_``, from the weights its context pieces carry: none
    where the fit counted every bed in full (not asked for, or refitted without them)."""
    if not weighed or (rejected or {}).get("refitted_with") == "no weights":
        return {}
    return {p.feature: p.weight for p in pieces if p.kind == "context"}


def _chain(params: Mapping, states: StateSpace, source: str) -> tuple[np.ndarray, np.ndarray]:
    """Start and transition probabilities, every transition inside the tract graph."""
    K = states.n_states
    startprob = _probabilities("parameters.startprob", params.get("startprob"), (K,), source)
    transmat = _probabilities("parameters.transmat", params.get("transmat"), (K, K), source)
    outside = (~states.allowed) & (transmat > 0)
    if outside.any():
        i, j = np.argwhere(outside)[0]
        labels = states.labels()
        raise ModelFileError(
            f"parameters.transmat: transition {labels[i]} -> {labels[j]} is outside the tract "
            "graph but not zero",
            file=source,
        )
    return startprob, transmat


def _pieces(params, features, facies, contacts, ranks, states, source) -> list:
    """The emission pieces, one per feature, with the model's categories."""
    emissions_doc = params.get("emissions")
    if not isinstance(emissions_doc, list) or len(emissions_doc) != len(features):
        raise ModelFileError(
            f"parameters.emissions must list one entry per feature {list(features)}",
            file=source,
        )
    pieces = []
    for feature, entry in zip(features, emissions_doc):
        piece = piece_from_dict(entry, states.n_tracts, source)
        if piece.name != feature:
            raise ModelFileError(
                f"emission {piece.name!r} found where feature {feature!r} was expected",
                file=source,
            )
        cats = getattr(piece, "categories", None)
        expected = contacts if feature == "contact" else facies
        if feature in RANK_FEATURES and ranks is None:
            raise ModelFileError(
                f"emission {feature!r} needs the facies ranks ('ranks' is null)", file=source
            )
        if piece.kind in ("rank_step", "rank_step_above", "rank_trend", "context"):
            cats = None  # fixed categories, checked by the piece itself
        if cats is not None and list(cats) != [str(c) for c in expected]:
            raise ModelFileError(
                f"emission {feature!r}: categories differ from the model's list", file=source
            )
        pieces.append(piece)
    return pieces


#: Entries of a model file's ``training`` section and the JSON types each may take
#: (``None`` allowed for all: older files leave some out).
_TRAINING_TYPES = {
    "log_likelihood": (int, float),
    "objective": (int, float),
    "n_beds": int,
    "n_labelled": int,
    "best_restart": int,
    "cores": list,
    "restarts": list,
    "graph_selection": list,
    "evidence_weights_rejected": dict,
    "nested_start": dict,
    "reference_check": dict,
    "cautions": list,
    "units": str,
    "facies_beds": dict,
    "bed_thickness_median": (int, float),
    "labelled_mean_rank": list,
}  # "calibration" may be anything: the report says when it is not a record


def _training(doc: Mapping, source: str) -> Mapping:
    """The ``training`` section (a record of the fit), its entries of the right types:
    numbers finite and counts not negative, each restart an object whose history is a
    list of numbers."""
    training = doc.get("training") or {}
    if not isinstance(training, Mapping):
        raise ModelFileError("training: an object expected", file=source)
    for key, kind in _TRAINING_TYPES.items():
        value = training.get(key)
        if value is None:
            continue
        ok = isinstance(value, kind) and not isinstance(value, bool)
        if ok and isinstance(value, int | float):
            ok = math.isfinite(value) and (kind is not int or 0 <= value < 2**31)
        if not ok:
            raise ModelFileError(f"training.{key}: {value!r} is not valid here", file=source)
    counts = training.get("facies_beds") or {}
    if not all(isinstance(n, int) and not isinstance(n, bool) and n >= 0 for n in counts.values()):
        raise ModelFileError("training.facies_beds: a count of beds per facies", file=source)
    if not (training.get("bed_thickness_median") or 1) > 0:
        raise ModelFileError("training.bed_thickness_median: a positive number", file=source)
    bounds = training.get("labelled_mean_rank")
    if bounds is not None and not (
        len(bounds) == 2
        and all(isinstance(b, int | float) and not isinstance(b, bool) for b in bounds)
        and all(math.isfinite(b) for b in bounds)
        and bounds[0] <= bounds[1]
    ):
        raise ModelFileError(
            "training.labelled_mean_rank: two finite numbers, the lower first", file=source
        )
    if training.get("units") not in (None, "m", "ft"):
        raise ModelFileError(f"training.units: {training['units']!r}: m or ft", file=source)
    for r in training.get("restarts") or []:
        history = r.get("history", []) if isinstance(r, Mapping) else None
        if not isinstance(history, list) or not all(
            isinstance(x, int | float) and not isinstance(x, bool) for x in history
        ):
            raise ModelFileError(
                "training.restarts: each an object with a history of numbers", file=source
            )
    return training


def _ranks(ranks: Any, n_facies: int, source: str) -> np.ndarray | None:
    """The facies ranks: ``None``, or one finite number per facies."""
    if ranks is None:
        return None
    if (
        not isinstance(ranks, list)
        or len(ranks) != n_facies
        or not all(
            isinstance(r, int | float) and not isinstance(r, bool) and math.isfinite(r)
            for r in ranks
        )
    ):
        raise ModelFileError("ranks: one finite number per facies expected", file=source)
    return np.asarray(ranks, dtype=float)


def _temperature(params: Mapping, source: str) -> float:
    """The posterior temperature: positive and at most the search's top (model files
    written before 2026-12-05 may hold one below 1, which the search then allowed)."""
    temperature = params.get("temperature", 1.0)
    if (
        isinstance(temperature, bool)
        or not isinstance(temperature, int | float)
        or not 0 < float(temperature) <= TEMPERATURE_BOUNDS[1]
    ):
        raise ModelFileError(
            f"parameters.temperature must be a number above 0 and at most "
            f"{TEMPERATURE_BOUNDS[1]}, got {temperature!r}",
            file=source,
        )
    return float(temperature)


def load_model(path: str | Path) -> TractHMM:
    """Read and validate a model file written by :func:`save_model`.

    Raises
    ------
    ModelFileError
        The file is missing, not JSON, not a faciesseq model, of another
        version, or holds shapes or probabilities that do not fit.
    """
    source = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ModelFileError("model file not found", file=source) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ModelFileError(f"cannot read the model file ({exc})", file=source) from None
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise ModelFileError(
            f"not JSON (line {exc.lineno}, column {exc.colno}: {exc.msg}); model files are "
            "written by `faciesseq fit`",
            file=source,
        ) from None
    except ValueError as exc:  # e.g. an integer of more digits than Python converts
        raise ModelFileError(f"not a valid model file ({exc})", file=source) from None
    except RecursionError:
        raise ModelFileError(
            "not a valid model file (JSON nested too deeply)", file=source
        ) from None
    try:
        return model_from_dict(doc, source)
    except RecursionError:
        raise ModelFileError("not a valid model file (nested too deeply)", file=source) from None
