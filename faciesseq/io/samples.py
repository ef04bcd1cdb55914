"""The rows of a sample-layout source as they were stored, each placed at its core and depth.

:func:`faciesseq.io.read_cores` turns samples into intervals (runs of equal
samples become one interval), so the original rows are not kept in the
:class:`~faciesseq.core.CoreSet`. :func:`read_samples` reads the source again
and gives every row of each sample-layout table its core name and its depth in
the core set's units, read exactly as ``read_cores`` reads them, so a decoded
interpretation can be joined back to the user's own rows.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import pandas as pd

__all__ = ["CORE_KEY", "DEPTH_KEY", "read_samples"]

#: Columns :func:`read_samples` adds: the core name and depth the reader gave each row.
CORE_KEY = "_core"
DEPTH_KEY = "_depth"


def read_samples(
    source: str | Path,
    *,
    layout: str | None = None,
    columns: Mapping[str, str] | None = None,
    units: str | None = None,
    sheet: str | None = None,
    table: str | None = None,
    query: str | None = None,
    curve: str | None = None,
) -> pd.DataFrame | None:
    """Every row of the source's sample-layout tables, columns as stored.

    Parameters
    ----------
    source, layout, columns, units, sheet, table, query, curve
        As for :func:`faciesseq.io.read_cores` (the same source and options
        give the same cores, depths and units).

    Returns
    -------
    pandas.DataFrame or None
        The original columns of every sample-layout table (tables of a folder
        one after the other, columns united), a ``core`` column first where a
        table has none (a LAS file: its ``WELL``), and :data:`CORE_KEY` and
        :data:`DEPTH_KEY`: the core name and the depth (in the core set's
        units) the reader gave the row, missing where it left the row out (no
        depth, no core). ``None`` when no table is in the sample layout.
    """
    from faciesseq.io import read_tables, source_spec
    from faciesseq.io.columns import match_columns
    from faciesseq.io.validate import _prepare, _resolve_units

    spec = source_spec(
        source,
        layout=layout,
        columns=columns,
        units=units,
        sheet=sheet,
        table=table,
        query=query,
        curve=curve,
    )
    tables, _, _ = read_tables(spec)
    roles = {str(k).strip().lower(): v for k, v in spec.columns.items()}
    prepared = [_prepare(t, spec.layout, roles, None) for t in tables]
    _resolve_units(prepared, spec.units)  # converts the depths, as read_cores does
    frames = []
    for p in prepared:
        if p.layout != "samples":
            continue
        raw = p.table.frame.reset_index(drop=True).astype(object)
        explicit = {**p.table.roles, **roles}
        matched = match_columns(raw.columns, explicit, file=p.table.file).roles
        if "core" not in matched and "core" not in raw.columns:
            raw.insert(0, "core", p.table.core or "core")
        placed = (
            pd.DataFrame({"_row": p.table.row_numbers()})
            .merge(p.frame[["_row", "core", "depth"]], on="_row", how="left")
            .rename(columns={"core": CORE_KEY, "depth": DEPTH_KEY})
        )
        raw[CORE_KEY] = placed[CORE_KEY].to_numpy()
        raw[DEPTH_KEY] = placed[DEPTH_KEY].to_numpy(float)
        frames.append(raw)
    if not frames:
        return None
    return pd.concat(frames, ignore_index=True)
