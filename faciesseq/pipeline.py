"""The whole job on a core database: statistics, tract model, decoding, validation, appendix.

:func:`run_appendix` is what ``faciesseq appendix`` and ``faciesseq demo`` do,
as one Python call: read nothing, print nothing; every step reports to an
optional ``progress(step, message)`` callback. A step that cannot be done
(no labelled cores to validate against, a validation that fails on the data)
is recorded in the appendix as not available, with the reason.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from faciesseq.core import CoreSet
from faciesseq.errors import FaciesseqError
from faciesseq.scheme import FaciesScheme, TractModel, as_scheme

__all__ = ["DEMO_FILES", "RunResult", "demo_source", "has_labels", "run_appendix"]

Progress = Callable[[str, str], None]

#: Files of the bundled demo database (invented Quillerby Basin cores).
DEMO_FILES = ("cores.csv", "scheme-shoreface.yaml")


def demo_source() -> Path:
    """Folder of the demo database packaged with faciesseq (``faciesseq/data/demo/``).

    It holds the cores table and its facies scheme, copies of
    ``demo_cores/cores.csv`` and ``configs/scheme-shoreface.yaml`` of the
    source tree (a test keeps them identical), so a source checkout and an
    installed package run the same demo.
    """
    from importlib import resources

    return Path(str(resources.files("faciesseq").joinpath("data/demo")))


def labelled_cores(cores: CoreSet, column: str) -> list[str]:
    """Names of the cores where some interval carries an interpreter's label in ``column``."""
    names = []
    for core in cores:
        if column in core.intervals.columns:
            values = core.intervals[column].dropna()
            if (values.astype(str).str.strip() != "").any():
                names.append(core.name)
    return names


def has_labels(cores: CoreSet, column: str) -> bool:
    """True when some interval carries an interpreter's label in ``column``."""
    return bool(labelled_cores(cores, column))


@dataclass
class RunResult:
    """What :func:`run_appendix` computed (every part may be ``None`` when not done)."""

    appendix: Any
    markov: Any = None
    model: Any = None
    interpretation: Any = None
    validation: Any = None
    notes: list[str] = field(default_factory=list)


def _say(progress: Progress | None, step: str, message: str) -> None:
    if progress is not None:
        progress(step, message)


def run_appendix(
    cores: CoreSet,
    scheme: FaciesScheme | str | Path,
    tract_model: TractModel | None = None,
    *,
    model: Any = None,
    model_source: str | None = None,
    labels: str | None = "tract",
    validate_mode: str = "supervised",
    folds: int = 3,
    surrogates: int = 199,
    seed: int = 0,
    n_restarts: int = 3,
    substates: tuple[int, ...] | None = None,
    unit: str = "beds",
    step: float | None = None,
    provenance: Mapping[str, Any] | None = None,
    progress: Progress | None = None,
    title: str | None = None,
    n_jobs: int = 1,
    scheduler: str | None = None,
) -> RunResult:
    """Markov statistics, tract model (fitted if not given), decoding, validation, appendix.

    Parameters
    ----------
    cores
        The core database (already read; its problems are reported, and an
        error among them stops the run with :class:`~faciesseq.errors.InputError`).
    scheme, tract_model
        Facies scheme (or the path of its YAML file); tract model (default: the
        packaged four-tract model).
    model
        A fitted ``TractHMM`` (e.g. loaded from a model file). ``None``: one
        is fitted with the default settings (supervised on the cores whose
        ``labels`` column holds interpreted tracts, else unsupervised on all
        cores), and the appendix says so.
    model_source
        Where ``model`` came from (shown in the appendix).
    labels
        Bed column with interpreters' tracts for cross-validation; skipped when
        absent or empty.
    validate_mode
        ``"supervised"``, ``"semi-supervised"`` or ``"unsupervised"``; see
        ``faciesseq.validation.cross_validate``.
    folds, surrogates, seed, n_restarts
        Cross-validation folds, Monte Carlo surrogates of the Markov tests,
        the one seed of every random step, EM restarts of a fitted model.
    substates
        Sub-states per tract of the candidate models fitted when ``model`` is
        ``None``; the one with the lowest BIC is kept (Schwarz 1978), and the
        candidates are shown in the appendix. ``None``: 1 and 2 with labels, and
        without labels the tract model's own default (that of ``faciesseq fit``:
        three sub-states on the stacking context), the model whose accuracy
        ``docs/hmm.md`` reports.
    unit, step
        Successions of beds or of a depth grid (``step`` in depth units).
    provenance
        Provenance record to attach (see :mod:`faciesseq.report.provenance`).
    progress
        ``progress(step, message)`` after each step.
    title
        Title of the appendix (default: the generic one of ``build_appendix``).
    n_jobs, scheduler
        Where the independent jobs of every step run: ``n_jobs`` local processes
        or the Dask cluster at ``scheduler`` (:mod:`faciesseq.parallel`); the
        results do not depend on either.
    """
    from faciesseq.markov import analyse, leave_out_irregular
    from faciesseq.report.appendix import build_appendix

    cores.require_valid()
    scheme = as_scheme(scheme)
    notes: list[str] = []
    _say(progress, "check", f"{len(cores)} cores, {len(cores.problems)} problems reported")
    # the cores markov leaves out are left out of the fit, decoding and validation too
    screening = leave_out_irregular(cores)
    usable = screening.kept
    if screening.left_out:
        notes.append(screening.warning())

    parallel = {"n_jobs": n_jobs, "scheduler": scheduler}
    markov = analyse(
        cores,
        scheme=scheme,
        unit=unit,
        step=step,
        surrogates=surrogates,
        seed=seed,
        by="core",
        **parallel,
    )
    _say(
        progress,
        "markov",
        f"{markov.n_transitions} transitions; first-order "
        f"p = {markov.first_order.pearson.p_value:.3g}",
    )

    labelled = bool(labels) and has_labels(usable, labels)
    settings = {
        "tract_model": tract_model,
        "scheme": scheme,
        "n_restarts": n_restarts,
        # the Markov statistics read runs of one facies (an embedded chain); the tract
        # model reads what `faciesseq fit` reads by default (faciesseq.hmm.model.fit_unit)
        "unit": "auto" if unit == "beds" else unit,
        "step": step,
        **parallel,
    }
    model, selection, note, fit_notes = _appendix_model(
        usable, model, model_source, labels if labelled else None, substates, seed, settings
    )
    fitted = selection is not None
    _say(progress, "fit", f"fitted, log-likelihood {model.log_likelihood_:.1f}" if fitted else note)

    interpretation = _decode_noting(model.set_params(**parallel), usable, notes)
    _say(progress, "decode", f"{len(interpretation)} cores decoded")

    validation, validation_reason, validation_notes = _appendix_validation(
        usable, labels, labelled, model, folds, validate_mode, seed, settings
    )
    _say(
        progress,
        "validate",
        validation_reason or f"accuracy {validation.model.accuracy:.3f}",
    )

    appendix = build_appendix(
        cores,
        scheme,
        model.tract_model_,
        markov=markov,
        model=model,
        interpretation=interpretation,
        validation=validation,
        selection=selection,
        provenance=provenance,
        model_note=note,
        validation_note=validation_reason or "",
        validation_notes=validation_notes,
        decode_notes=notes,
        fit_notes=fit_notes,
        unit=unit,
        **({"title": title} if title else {}),
    )
    _say(
        progress, "appendix", f"{len(appendix.tables())} tables, {len(appendix.figures())} figures"
    )
    return RunResult(appendix, markov, model, interpretation, validation, notes)


def _decode_noting(model, cores: CoreSet, notes: list[str]):
    """``model.decode(cores)``, each distinct warning it gives added to ``notes`` (the
    appendix prints them) instead of the terminal."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        interpretation = model.decode(cores)
    notes.extend(_dedupe(str(w.message) for w in caught))
    return interpretation


def _appendix_model(cores, model, model_source, labels, substates, seed: int, settings: dict):
    """The appendix's model, its candidate table (None for a given model), the note
    saying where it came from, and the notes of its fit: ``model`` as given, else
    fitted by :func:`_fit_default` (supervised where ``labels`` is a column of
    interpreted tracts, else unsupervised)."""
    if model is not None:
        from faciesseq.report.provenance import display_path

        where = display_path(model_source) if model_source else None
        note = f"Model read from {where}." if where else "Model given by the caller."
        return model, None, note, []
    if substates is None:
        substates = (1, 2) if labels else (None,)
    return _fit_default(cores, labels, substates, seed, settings)


def _appendix_validation(
    cores, labels, labelled: bool, model, folds, mode, seed: int, settings: dict
):
    """Cross-validation of the appendix, ``(result, reason, notes)``: the reason why
    there is none (no labels, or labels it cannot run on) in place of a result."""
    if not labelled:
        return None, f"no interpreted tracts in a column {labels!r}", []
    try:
        validation, notes = _cross_validate(cores, labels, model, folds, mode, seed, settings)
    except FaciesseqError as exc:
        return None, f"cross-validation could not be run on these labels: {exc}", []
    return validation, None, notes


def _fit_default(cores: CoreSet, labels: str | None, substates, seed: int, settings: dict):
    """The tract model the appendix fits when no model is given: supervised on the
    interpreted cores (``labels``), else unsupervised on every core, the sub-state
    counts compared by BIC; ``(model, selection, note, warnings)``."""
    from faciesseq.hmm.selection import select_model

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        # supervised: fitted on the interpreted cores (semi-supervised EM over
        # the other cores measured worse in cross-validation; docs/hmm.md)
        selection = select_model(
            cores.subset(labelled_cores(cores, labels)) if labels else cores,
            substates=tuple(None if k is None else int(k) for k in substates),
            labels=labels,
            random_state=seed,
            **settings,
        )
        model = selection.best
    fit_notes = _dedupe(str(w.message) for w in caught)
    how = (
        f"supervised: fitted on the {len(labelled_cores(cores, labels))} cores with "
        f"interpreted beds in column {labels!r}, which keep their tract"
        if labels
        else "unsupervised"
    )
    note = (
        "No model file was given: the tract model was fitted to these cores with the "
        f"default settings ({how}; {settings['n_restarts']} restarts, seed {seed})"
        + (
            f", with {', '.join(map(str, substates))} sub-states per tract compared by BIC "
            f"(kept: {', '.join(map(str, model.states_.substates))})."
            if len(substates) > 1
            else "."
        )
    )
    if fit_notes:
        note += (
            f" {len(fit_notes)} warning(s) while fitting (all in "
            f"tables/model_fit_warnings.csv); the first: {fit_notes[0]}"
        )
    return model, selection, note, fit_notes


def _cross_validate(cores: CoreSet, labels: str, model, folds, mode, seed, settings: dict):
    """Cross-validation by core of the kept model's design; ``(validation, warnings)``."""
    from faciesseq.validation import cross_validate

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        # named one by one, in this order: the validation records its settings in the
        # order given, and the appendix's JSON shows them
        validation = cross_validate(
            cores,
            labels,
            folds=min(folds, len(cores)),
            mode=mode,
            random_state=seed,
            tract_model=settings["tract_model"],
            scheme=settings["scheme"],
            unit=settings["unit"],
            step=settings["step"],
            n_restarts=settings["n_restarts"],
            # the folds refit the kept model's design
            substates=dict(zip(model.states_.tracts, model.states_.substates, strict=True)),
            features=list(model.features_),
            n_jobs=settings["n_jobs"],
            scheduler=settings["scheduler"],
        )
    return validation, _dedupe(str(w.message) for w in caught)


def _dedupe(messages) -> list[str]:
    """Messages in first-seen order, each once."""
    return list(dict.fromkeys(messages))
