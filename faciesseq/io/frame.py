"""A pandas DataFrame (or records) read as a core database, with the checks of a file.

The frame is one more raw table (:class:`~faciesseq.io.raw.RawTable`) handed to
:func:`~faciesseq.io.validate.build_coreset`, the validation every file goes through:
the same column roles, depth, facies, overlap and units checks, the same problems.
Messages name the frame ``DataFrame`` and its rows as a file's are named: ``data row
4`` is the frame's fourth row (``frame.iloc[3]``), counted from 1. A frame that
carries the provenance columns of :meth:`~faciesseq.core.CoreSet.to_frame`
(``provenance=True``: ``_file``, ``_row``) keeps them: its messages name the file and
data row each interval was read from.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.core import PROVENANCE, CoreSet
from faciesseq.errors import InputError
from faciesseq.io.columns import units_option
from faciesseq.io.raw import RawTable
from faciesseq.io.validate import build_coreset
from faciesseq.io.wording import PYTHON
from faciesseq.scheme import FaciesScheme, as_scheme

__all__ = ["FRAME", "as_frame", "read_frame"]

#: How messages name a DataFrame given without provenance columns.
FRAME = "DataFrame"


def as_frame(data: object, taker: str) -> pd.DataFrame:
    """``data`` as a DataFrame: a DataFrame as it is, records (a list of dicts) or a dict
    of columns made into one; anything else a one-line :class:`TypeError` naming
    ``taker``, the function that was given it."""
    if isinstance(data, pd.DataFrame):
        return data
    if isinstance(data, Mapping | list | tuple):
        try:
            return pd.DataFrame(data)
        except (TypeError, ValueError) as exc:
            why = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            raise TypeError(
                f"{taker} could not make a table of the {type(data).__name__} given ({why}); "
                "give a pandas DataFrame, records (a list of dicts) or a dict of columns"
            ) from None
    hint = "; to read a file, give its path to read_cores" if isinstance(data, str | Path) else ""
    raise TypeError(
        f"{taker} takes a pandas DataFrame, records (a list of dicts) or a dict of columns, "
        f"got {type(data).__name__}{hint}"
    )


def _raw_tables(frame: pd.DataFrame) -> list[RawTable]:
    """The frame as raw tables: one, named :data:`FRAME`, or one per ``_file`` where the
    frame carries that provenance column (``_row`` gives the data rows where it holds
    whole numbers)."""
    names = [str(c).strip() for c in frame.columns]
    twice = sorted({n for n in names if names.count(n) > 1})
    if twice:
        raise InputError(
            f"column name(s) {', '.join(repr(n) for n in twice)} given more than once; "
            "rename or drop the copies",
            file=FRAME,
        )
    data = frame.set_axis(names, axis=1).reset_index(drop=True)
    # pandas' own column types (categorical, nullable, Arrow text) as the plain values a
    # reader gives; numpy columns as they are
    for i, dtype in enumerate(data.dtypes):
        if not isinstance(dtype, np.dtype):
            data.isetitem(i, data.iloc[:, i].astype(object))
    rows = np.arange(1, len(data) + 1)
    if "_row" in data.columns:
        given = pd.to_numeric(data["_row"], errors="coerce").to_numpy(dtype=float)
        if np.isfinite(given).all() and (given == np.round(given)).all():
            rows = given.astype(np.int64)
    files = data["_file"].astype(str).to_numpy() if "_file" in data.columns else None
    data = data.drop(columns=[c for c in PROVENANCE if c in data.columns])
    if files is None:
        return [RawTable(data, FRAME, rows)]
    ids, labels = pd.factorize(files)
    tables = []
    for k, label in enumerate(labels):
        held = np.flatnonzero(ids == k)
        tables.append(RawTable(data.take(held).reset_index(drop=True), str(label), rows[held]))
    return tables


def read_frame(
    data: object,
    *,
    layout: str | None = None,
    columns: Mapping[str, str] | None = None,
    units: str | None = None,
    scheme: FaciesScheme | str | Path | None = None,
    repeated_depths: str = "error",
    taker: str = "read_cores",
    unstated_units: str = "m",
) -> CoreSet:
    """Validate a DataFrame (or records) as :func:`faciesseq.io.read_cores` validates a
    file; the options are those of ``read_cores``, and messages name them as Python
    does (``columns={'base': 'NAME'}``). ``taker`` names the function in a
    :class:`TypeError` for data that is no table."""
    frame = as_frame(data, taker)
    units = units_option(units)
    scheme = as_scheme(scheme)
    tables = _raw_tables(frame)
    return build_coreset(
        tables,
        layout=layout,
        columns=columns,
        units=units,
        scheme=scheme,
        repeated_depths=repeated_depths,
        sources=tuple(t.file for t in tables),
        wording=PYTHON,
        unstated_units=unstated_units,
    )
