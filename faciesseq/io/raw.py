"""A table as a reader found it, before column roles and validation."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from faciesseq.errors import InputError, Problem

#: Words pandas reads as missing by default (``NA``, ``null``, ``NaN``, ``n/a``...).
#: The readers keep them as text, since ``NA`` is a facies code as good as any
#: (non-marine algal); the validator reads them as missing in number columns only,
#: where R and database exports write them for an empty number.
NUMBER_NA_WORDS = frozenset(pd._libs.parsers.STR_NA_VALUES)

#: Most columns a table may have: every column is carried along as a bed attribute,
#: and tables from a core description have tens, not thousands.
MAX_COLUMNS = 2_000


def check_width(n_columns: int, file: str) -> None:
    """Refuse a table of more than :data:`MAX_COLUMNS` columns before working on it."""
    if n_columns > MAX_COLUMNS:
        raise InputError(
            f"{n_columns:,} columns (at most {MAX_COLUMNS:,}); keep the columns of the cores "
            "(core, depths, facies and the attributes you need) and read that copy",
            file=file,
        )


def check_header(names, file: str) -> None:
    """Refuse a header that names one column twice (a copy pasted beside the original,
    a query selecting a column twice): which of the two holds the data is not ours to
    guess, and a table with two columns of one name cannot be read column by column.
    A first line starting with ``#`` is refused too: a comment line, which would be
    read as the header and every data row then found ragged."""
    first = next((str(n).strip() for n in names), "")
    if first.startswith("#"):
        raise InputError(
            "the first line starts with '#': comment lines are not read; delete them, "
            "so that the header is the first line",
            file=file,
        )
    seen: dict[str, int] = {}
    for number, name in enumerate((str(n).strip() for n in names), start=1):
        if not name:
            continue
        if name in seen:
            raise InputError(
                f"the header names column {name!r} twice (columns {seen[name]} and "
                f"{number}); rename or delete one",
                file=file,
            )
        seen[name] = number


@dataclass
class RawTable:
    """One table read from a source, columns and values as they were stored.

    Attributes
    ----------
    frame
        The data, one row per source row, original column names.
    file
        How messages name the source (file path, or a database URL with the
        password hidden and the table or ``query``).
    rows
        1-based data row of each row of ``frame`` in the source (header = row 0).
    units
        Depth units the source itself states (a LAS header), or ``None``.
    core
        Core name to use when the table has no core column (a LAS ``WELL``,
        else the file name), or ``None``.
    layout
        Layout the source implies (LAS: ``"samples"``), or ``None``.
    roles
        Column roles the source itself implies (LAS: the index is the depth),
        used unless the user maps the role explicitly.
    problems
        What the reader itself found (encoding detected, null values...).
    other_sheets
        Sheet name -> header of each other sheet of a workbook read without a
        sheet named (its first sheet), for a message where the first lacks columns.
    head_rows
        ``(data row, cells)`` of the first rows as stored, every cell, where ``frame``
        keeps fewer (a worksheet is cut to its header's width): a message where the
        header lacks columns looks for the column names in them.
    """

    frame: pd.DataFrame
    file: str
    rows: np.ndarray | list[int] | None = None
    units: str | None = None
    core: str | None = None
    layout: str | None = None
    roles: dict[str, str] = field(default_factory=dict)
    problems: list[Problem] = field(default_factory=list)
    other_sheets: dict[str, list[str]] = field(default_factory=dict)
    head_rows: list[tuple[int, list]] = field(default_factory=list)

    def __post_init__(self) -> None:
        check_header(self.frame.columns, self.file)

    def row_numbers(self) -> np.ndarray:
        """The source row of each row of ``frame`` (an integer array)."""
        if self.rows is None:
            return np.arange(1, len(self.frame) + 1)
        return np.asarray(self.rows, dtype=np.int64)
