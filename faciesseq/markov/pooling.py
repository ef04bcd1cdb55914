"""The successions the statistics read, pooled from screened cores as flat arrays.

A core set is screened (irregularly sampled cores left out,
:mod:`faciesseq.markov.screening`) and its successions, each base to top, kept as
one array of facies codes with the length, core and segment of each succession
(and, for homogeneity by a bed column, that column). Screening and successions
are a matter of each core alone, so a database read a batch of whole cores at a
time (:func:`faciesseq.io.stream_cores`) pools to the same arrays as the whole
core set: :class:`Pool` takes one core set or the batches one after another.
"""

from __future__ import annotations

import difflib
import math

import numpy as np
import pandas as pd

from faciesseq.core import REQUIRED, Core, CoreSet
from faciesseq.errors import ConfigError
from faciesseq.markov.counts import EncodedSuccessions, encode_flat, encode_states
from faciesseq.markov.screening import leave_out_irregular

__all__ = ["Pool"]


def label(value) -> str | None:
    """A group label as text (``2.0`` -> ``"2"``); ``None`` for a missing value."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if isinstance(value, float | np.floating) and float(value).is_integer():
        return str(int(value))
    return str(value)


def as_groups(coreset: CoreSet, column: str) -> tuple[CoreSet, str]:
    """The core set with ``column`` turned into text labels, so beds take a label, not a mean.

    A bed made of several intervals takes the label covering most of its
    thickness (:func:`faciesseq.core._aggregate` for text); numbers would be
    averaged. The column is matched without regard to case, by its role's name
    (``tract``) or by its name in the source file (``interp`` read with
    ``--column tract=interp``); the name returned is the role's, ``core`` for the
    core column, which groups nothing more.
    """
    column = _group_column(coreset, column)
    if column == "core":
        return coreset, column
    cores = {}
    for name, core in coreset.cores.items():
        table = core.intervals.copy()
        if column in table.columns:
            table[column] = pd.Series(
                [label(v) for v in table[column].to_numpy(dtype=object)],
                index=table.index,
                dtype=object,
            )
        cores[name] = Core(name, table, core.units)
    return CoreSet(cores, coreset.units, coreset.problems, coreset.sources, coreset.meta), column


def _group_column(coreset: CoreSet, column: str) -> str:
    """The bed column ``column`` names: a bed column's own name, else a source file's
    name for the core column or a bed column's role."""
    names = {c for core in coreset for c in core.attributes}
    if column in names:
        return column
    folded = {c.lower(): c for c in names}
    if column.lower() in folded:
        return folded[column.lower()]
    as_read = _names_in_files(coreset)
    roles = {name.lower(): role for role, name in as_read.items() if role in names | {"core"}}
    if column.lower() in roles:
        return roles[column.lower()]
    raise ConfigError(_no_group_column(column, sorted(names), as_read))


def _names_in_files(coreset: CoreSet) -> dict[str, str]:
    """Role -> the column's name in the source files where it differs from the role's
    (``{"tract": "interp"}``; :attr:`CoreSet.source_columns`)."""
    return {
        role: name for role, name in coreset.source_columns.items() if name.strip().lower() != role
    }


def _no_group_column(column: str, attributes: list[str], as_read: dict[str, str]) -> str:
    """Why ``by=column`` groups nothing: the table's columns (core, top, base, facies and
    the bed columns, each with its name in the source file where that differs) and the
    nearest name ``--by`` takes, if one is near."""
    choices = {c.lower(): c for c in ["core", *attributes]}
    near = difflib.get_close_matches(column.lower(), list(choices), n=1)
    hint = f"; did you mean {choices[near[0]]!r}?" if near else ""
    listed = [
        f"{c} ({as_read[c]!r} in the file)" if c in as_read else c
        for c in ["core", *REQUIRED, *attributes]
    ]
    return (
        f"by={column!r} (--by): no such column to group by{hint} (columns: "
        f"{', '.join(listed)}; --by takes core, none or a column other than top, base and "
        "facies)"
    )


class Pool:
    """Successions of screened cores, one core set (or batch of whole cores) at a time.

    Parameters
    ----------
    unit, step
        ``"beds"`` or ``"grid"`` with its ``step`` (depth units).
    by
        ``None``, ``"core"`` or a bed column whose values are kept (matched without
        regard to case; :attr:`by` is then the column's own name).
    min_coverage, exclude_irregular
        See :func:`faciesseq.markov.analyse`.
    """

    def __init__(
        self,
        unit: str,
        step: float | None,
        by: str | None,
        *,
        min_coverage: float = 0.5,
        exclude_irregular: bool = True,
    ):
        self.unit, self.step, self.by = unit, step, by
        self.min_coverage, self.exclude_irregular = min_coverage, exclude_irregular
        self.excluded: list[str] = []
        self.warnings: list[str] = []
        self.present: set[str] = set()  # facies codes of the kept cores
        self._facies: list[np.ndarray] = []
        self._lengths: list[np.ndarray] = []
        self._cores: list[str] = []
        self._segments: list[int] = []
        self._groups: list[np.ndarray] = []
        self._missing_group: list[str] | None = None  # bed columns where ``by`` is absent

    @property
    def grouping(self) -> bool:
        """Whether a bed column's values are kept (``by`` other than none or core)."""
        return self.by not in (None, "core")

    def add(self, coreset: CoreSet) -> None:
        """Screen ``coreset`` and pool the successions of the cores it keeps."""
        if self.grouping:
            coreset, self.by = as_groups(coreset, self.by)
        screening = leave_out_irregular(coreset, min_coverage=self.min_coverage)
        for p in screening.problems:
            if not self.exclude_irregular:
                self.warnings.append(f"core {p.core} analysed although irregular: {p.message}")
            elif p.core not in self.excluded:
                self.excluded.append(p.core)
                self.warnings.append(f"core {p.core} left out: {p.message}")
        kept = screening.kept if self.exclude_irregular else coreset
        if len(kept):
            self.present.update(kept.facies_codes())
        found = kept.succession_beds(attributes=self.grouping) if self.unit == "beds" else None
        if found is None:
            self._add_successions(kept.successions(self.unit, self.step))
            return
        beds, starts, cores, segments = found
        self._add(beds, np.diff(starts), cores, segments)

    def _add_successions(self, successions: list) -> None:
        for succ in successions:
            self._add(succ.beds, np.array([len(succ)]), [str(succ.core)], [int(succ.segment)])

    def _add(self, beds: pd.DataFrame, lengths: np.ndarray, cores: list, segments: list) -> None:
        self._facies.append(pd.Categorical(beds["facies"]))  # a small integer per bed
        self._lengths.append(np.asarray(lengths, dtype=np.int64))
        self._cores += cores
        self._segments += segments
        if not self.grouping:
            return
        if self.by in beds.columns:
            self._groups.append(beds[self.by].to_numpy(dtype=object))
        elif len(beds) and self._missing_group is None:
            self._missing_group = list(beds.columns)

    def encoded(self, codes: list[str]) -> EncodedSuccessions:
        """Every pooled succession coded by ``codes``."""
        lengths = _joined(self._lengths, np.int64)
        codes = [str(c) for c in codes]
        listed = pd.Index(codes)
        states = []
        for facies in self._facies:
            found = listed.get_indexer(facies.categories.astype(str)) if listed.is_unique else [-1]
            if np.any(found < 0) or np.any(facies.codes < 0):  # encode_flat names the code
                every = [np.asarray(f, dtype=object) for f in self._facies]
                return encode_flat(
                    _joined(every, object), lengths, self._cores, self._segments, codes
                )
            states.append(np.asarray(found)[facies.codes])
        return encode_states(_joined(states, np.int64), lengths, self._cores, self._segments, codes)

    def group_values(self) -> np.ndarray:
        """The ``by`` column of every pooled bed, successions one after another."""
        if self._missing_group is not None:
            raise ConfigError(
                f"by={self.by!r} (--by): no such column in the beds "
                f"(columns: {self._missing_group})"
            )
        return _joined(self._groups, object)


def _joined(parts: list[np.ndarray], dtype) -> np.ndarray:
    return np.concatenate(parts) if parts else np.zeros(0, dtype=dtype)
