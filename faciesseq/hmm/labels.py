"""An interpreter's tract labels: which tract graph they allow, and which states they clamp.

A fit with labels reads a label column (or per-succession sequences): labelled
beds keep their tract through EM and decoding (a clamp mask over the tracts),
unlabelled ones are free. Labels that cannot be used as they are (a boundary the
tract graph does not allow) are freed, never silently: a :class:`LabelWarning`
names the core and the depth.
"""

from __future__ import annotations

import itertools
import warnings
from collections.abc import Collection, Iterator, Sequence
from typing import Any

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet, Succession
from faciesseq.errors import ConfigError, InputError, Problem
from faciesseq.scheme import TractModel, default_tract_model, permissive_tract_model

__all__ = [
    "LabelWarning",
    "clamp_from_labels",
    "forbidden_text",
    "graph_from_labels",
    "label_problems",
    "label_text",
    "label_values",
    "labelled_beds",
    "no_labels",
    "refuse_missing_label_column",
]


class LabelWarning(UserWarning):
    """An interpreter's label that cannot be used as it is (the beds are left free)."""


def labelled_beds(clamp: np.ndarray | None, order: Sequence[str]) -> dict[str, int]:
    """Beds labelled with each tract of ``order`` (clamped to that tract alone); empty
    for a fit without labels."""
    if clamp is None:
        return {}
    one = clamp.sum(axis=1) == 1
    counts = np.bincount(np.argmax(clamp[one], axis=1), minlength=len(order))
    return {t: int(n) for t, n in zip(order, counts, strict=True)}


def label_text(values: pd.Series) -> list[str | None]:
    """Tract labels as stripped text, ``None`` where blank or missing (a bed not
    interpreted), as every reader of labels takes them."""
    text = values.astype("string").str.strip()
    missing = text.isna() | (text == "") | (text.str.lower() == "nan")
    return [None if m else t for t, m in zip(text.tolist(), missing.tolist())]


def no_labels(column: str, n_rows: int, source: str) -> Problem:
    """The error of a label column blank on all its ``n_rows`` rows (asked for, the
    labels are not there)."""
    message = (
        f"no tract label in column {column!r} (blank on all {n_rows} rows); fill in "
        "the tracts of some beds, or name the column that holds them"
    )
    return Problem("error", "no-labels", message, file=source)


def label_problems(
    table: pd.DataFrame,
    column: str,
    tracts: Sequence[str],
    units: str | None,
    source: str,
    sample_cores: Collection[str] = (),
) -> tuple[list[Problem], int]:
    """The labels of ``column`` of a core table (``CoreSet.to_frame(provenance=True)``)
    that a fit with labels cannot read: one error per core and label that is not one of
    ``tracts``, at its first row; and the number of labelled rows (blank cells are
    beds not interpreted; none at all is :func:`no_labels`). ``faciesseq check`` lists
    them all; ``fit`` and ``validate`` refuse the first
    (``faciesseq.cli._common.check_labels``). The intervals of ``sample_cores`` (read
    in the sample layout, ``CoreSet.meta["sample_step"]``) are runs of equal samples,
    each of one or more rows of the source, and are counted as runs."""
    text = pd.Series(label_text(table[column]), index=table.index, dtype=object)
    blank = text.isna()
    bad = np.flatnonzero((~blank & ~text.isin(list(tracts))).to_numpy(dtype=bool))
    found: dict[tuple[str, str], list[int]] = {}
    for i in bad:
        found.setdefault((str(table["core"].iloc[i]), text.iloc[i]), []).append(int(i))
    problems = []
    for (core, label), rows in found.items():
        i = rows[0]
        counted = "runs of samples" if core in sample_cores else "rows"
        count = f" ({len(rows)} {counted})" if len(rows) > 1 else ""
        row = table["_row"].iloc[i] if "_row" in table.columns else None
        problems.append(
            Problem(
                "error",
                "tract-label",
                f"tract label {label!r}{count} in column {column!r} is not a tract of the "
                f"tract model ({', '.join(tracts)}); leave the cell empty where a bed is not "
                "interpreted",
                file=str(table["_file"].iloc[i]) if "_file" in table.columns else source,
                row=None if row is None or pd.isna(row) else int(row),
                core=core,
                depth=float(table["top"].iloc[i]) if "top" in table.columns else None,
                units=units,
            )
        )
    return problems, int((~blank).sum())


def refuse_missing_label_column(
    cores: CoreSet, column: str, option: str = "labels=", file: str | None = None
) -> None:
    """Refuse a label column the core set lacks, listing the source's columns and one
    spelt the same but for case (names are read as written). ``option`` is how the
    caller gave the column: ``labels=`` in Python, ``--labels`` on the command line.

    Raises
    ------
    ConfigError
        ``no column 'Tract' for --labels (columns: core, top, base, facies, tract);
        did you mean --labels tract? names are read as written``.
    """
    names = cores.columns
    if column in names:
        return
    alike = [c for c in names if c.lower() == column.lower()]
    hint = ""
    if alike:  # as the caller would write it: labels='tract', --labels tract
        spelt = f"{option}{alike[0]!r}" if option.endswith("=") else f"{option} {alike[0]}"
        hint = f"; did you mean {spelt}? names are read as written"
    raise ConfigError(
        f"no column {column!r} for {option} (columns: {', '.join(names)}){hint}", file=file
    )


def label_values(
    successions: Sequence[Succession], labels: Any
) -> Iterator[tuple[Succession, list[str | None]]]:
    """``(succession, labels)`` of every succession, each label text or ``None``,
    from a label column (its name) or per-succession sequences."""
    if not isinstance(labels, str) and (
        isinstance(labels, bool | int | float) or not hasattr(labels, "__getitem__")
    ):
        raise TypeError(
            "labels= is the name of the bed column holding the interpreter's tracts (e.g. "
            f"'tract'), or one sequence of tract codes per succession; got {labels!r}"
        )
    for k, s in enumerate(successions):
        if isinstance(labels, str):
            if labels not in s.beds.columns:
                raise ConfigError(
                    f"label column {labels!r} not found "
                    f"(columns: {sorted(map(str, s.beds.columns))})",
                    core=s.core,
                )
            values = label_text(s.beds[labels])
        else:
            values = [None if v is None else str(v) for v in labels[k]]
            if len(values) != len(s):
                raise InputError(f"{len(values)} labels for {len(s)} beds", core=s.core) from None
        yield s, values


def graph_from_labels(
    successions: Sequence[Succession], labels: Any, auto: bool = True
) -> tuple[TractModel, dict]:
    """The tract graph of a fit with labels and no tract model of its own, and a
    record of the choice (``graph``, ``n_boundaries``, ``n_forbidden``).

    The strict cyclic order of :func:`~faciesseq.scheme.default_tract_model`
    where every labelled boundary (a change of tract between two successive
    labelled beds) is one it allows; else the permissive graph, in which any
    tract may follow any other. Why the labels decide: a described bed is often
    thicker than a highstand or lowstand, so an interpreter's bed-scale column
    may jump over tracts (on the forward model's cores 20 to 47 % of the changes
    between beds do, docs/hmm.md), and the strict graph would free those labels;
    where the labels keep the order, the strict graph keeps the decoded column
    from going back and forth between tracts the cycle never joins (measured
    with three labelled cores of the stacking scenarios, tuning seeds: balanced
    accuracy 0.952 / 0.881 / 0.850 on the permissive graph, 0.957 / 0.889 /
    0.884 on the strict one; benchmarks/tract_model.md). ``auto=False`` (a
    fit's ``graph="fixed"``): the permissive graph.
    """
    strict = default_tract_model()
    tracts = list(strict.order)
    allowed = np.asarray(strict.allowed(), dtype=bool)
    n_labelled = n_boundaries = n_forbidden = 0
    where: list[dict] = []
    for s, values in label_values(successions, labels):
        codes = [tracts.index(v) if v in tracts else None for v in values]
        n_labelled += sum(c is not None for c in codes)
        for i, (a, b) in enumerate(itertools.pairwise(codes)):
            if a is not None and b is not None and a != b:
                n_boundaries += 1
                if not allowed[a, b]:
                    n_forbidden += 1
                    if len(where) < FORBIDDEN_SHOWN:
                        where.append(_boundary(s, i + 1, tracts[a], tracts[b]))
    use_strict = auto and n_labelled > 0 and n_forbidden == 0
    record = {
        "graph": "strict" if use_strict else "permissive",
        "n_boundaries": n_boundaries,
        "n_forbidden": n_forbidden,
        "forbidden": where,
    }
    return (strict if use_strict else permissive_tract_model()), record


#: Labelled boundaries the strict order forbids that :func:`graph_from_labels` records
#: (where they are: the first few, for the line a fit prints).
FORBIDDEN_SHOWN = 3


def _boundary(s: Succession, i: int, below: str, above: str) -> dict:
    """The labelled boundary at the base of bed ``i`` (base-to-top index) of ``s``:
    ``core``, ``depth`` (the contact, positive downward), ``units``, ``below``, ``above``."""
    depth = float(s.beds["base"].iloc[i]) if "base" in s.beds else None
    return {"core": s.core, "depth": depth, "units": s.units, "below": below, "above": above}


def forbidden_text(record: dict) -> str:
    """Where the labelled boundaries a strict order forbids are, as a fit prints them:
    ``ALPHA-1 101.99 m: FSST -> HST`` (the contact, then the tracts below and above
    it), the first :data:`FORBIDDEN_SHOWN`, ``...`` after the last where there are more."""
    shown = []
    for b in record.get("forbidden", []):
        depth = "" if b["depth"] is None else f" {b['depth']:.2f} {b['units']}"
        shown.append(f"{b['core']}{depth}: {b['below']} -> {b['above']}")
    more = record.get("n_forbidden", 0) > len(shown)
    return "; ".join(shown) + ("; ..." if more else "")


#: What to do about a labelled boundary the tract graph forbids: in a fit, whose graph is
#: the tract model's; in a decode, whose graph is the one the model was fitted with.
FIT_REMEDY = "add a skip in the tract model to allow it"
DECODE_REMEDY = (
    "the model's tract graph is the one it was fitted with; a model fitted with these "
    "labels (fit --labels) allows what they hold"
)


def clamp_from_labels(
    successions: Sequence[Succession],
    labels: Any,
    tract_model: TractModel,
    remedy: str = FIT_REMEDY,
) -> tuple[np.ndarray, int]:
    """Clamp mask ``(beds, n_tracts)`` of the labels under ``tract_model`` (True
    where a bed may be in a tract: every tract for an unlabelled bed), and the
    number of labelled beds.

    A label that is not a tract of the model is an error naming the core and the
    depth; a labelled boundary the model's order and skips do not allow frees
    both beds, with a :class:`LabelWarning` ending in ``remedy`` (in brackets):
    what a fit does about it by default, :data:`DECODE_REMEDY` where the graph is a
    fitted model's.
    """
    tracts = list(tract_model.order)
    allowed = np.asarray(tract_model.allowed(), dtype=bool)
    rows = []
    n_labelled = 0
    for s, values in label_values(successions, labels):
        mask, n = _clamp_succession(s, values, tracts, allowed, remedy)
        rows.append(mask)
        n_labelled += n
    clamp = np.concatenate(rows) if rows else np.ones((0, len(tracts)), dtype=bool)
    return clamp, n_labelled


def _clamp_succession(
    s: Succession, values: list[str | None], tracts: list[str], allowed: np.ndarray, remedy: str
) -> tuple[np.ndarray, int]:
    mask = np.ones((len(s), len(tracts)), dtype=bool)
    prev = None
    n_labelled = 0
    for i, v in enumerate(values):
        if v is None:
            prev = None
            continue
        if v not in tracts:
            raise InputError(
                f"tract label {v!r} is not a tract of the tract model {tracts}",
                core=s.core,
                depth=float(s.beds["top"].iloc[i]) if "top" in s.beds else None,
                units=s.units,
            )
        a = tracts.index(v)
        if prev is not None and not allowed[prev, a]:
            # Tolerant, never silent: an interpreter's column may skip a tract
            # too thin to log; free both beds and say so.
            _warn_forbidden(s, i, tracts[prev], v, remedy)
            if not mask[i - 1].all():
                n_labelled -= 1
            mask[i - 1] = True
            prev = None
            continue
        mask[i] = False
        mask[i, a] = True
        prev = a
        n_labelled += 1
    return mask, n_labelled


def _warn_forbidden(s: Succession, i: int, below: str, above: str, remedy: str) -> None:
    where = f"core {s.core}"
    if "base" in s.beds:
        where += f", depth {float(s.beds['base'].iloc[i]):.2f} {s.units}"
    warnings.warn(
        LabelWarning(
            f"{where}: labelled boundary {below} -> {above} (upward) is not "
            "allowed by the tract model's order and skips; the two beds are "
            f"left unlabelled ({remedy})"
        ),
        stacklevel=6,  # the fit (or decode) that read the labels
    )
