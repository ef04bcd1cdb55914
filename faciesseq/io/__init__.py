"""Reading a core database into a validated :class:`~faciesseq.core.CoreSet`, and writing one.

Sources, chosen from the path or URL: CSV/TSV (delimiter sniffed), Excel
``.xlsx``, Parquet, LAS 2.0, a folder of such files, a SQLite file, any
SQLAlchemy URL, or a YAML source file naming one of these with its reading
options; from Python, also a pandas DataFrame, checked as a file is. See
docs/io.md for layouts, column roles, units and problem kinds.
"""

from __future__ import annotations

import os
from collections.abc import Collection, Mapping
from dataclasses import replace
from pathlib import Path

import pandas as pd

from faciesseq.core import CoreSet
from faciesseq.errors import ConfigError
from faciesseq.io.columns import ROLES, match_columns, units_option
from faciesseq.io.frame import read_frame
from faciesseq.io.source import YAML_SUFFIXES, SourceSpec, load_source_file, read_tables
from faciesseq.io.stream import CoreStream, NotStreamable, open_stream
from faciesseq.io.summary import DatabaseSummary, summarise
from faciesseq.io.validate import build_coreset, facies_code
from faciesseq.io.writer import write_cores
from faciesseq.scheme import FaciesScheme, as_scheme

__all__ = [
    "ROLES",
    "CoreStream",
    "DatabaseSummary",
    "NotStreamable",
    "facies_code",
    "match_columns",
    "read_cores",
    "stream_cores",
    "summarise",
    "write_cores",
]


def source_spec(source: str | Path, *, columns: Mapping[str, str] | None = None, **options):
    """The reading options of ``source``: those given here, completed by the YAML
    source file's own where ``source`` is one (the arguments given win)."""
    if options.get("units") is not None:
        options["units"] = units_option(options["units"])
    spec = SourceSpec(source=str(source), columns=dict(columns or {}), **options)
    if Path(str(source)).suffix.lower() in YAML_SUFFIXES:
        spec = _merge(load_source_file(Path(str(source))), spec)
    return spec


def read_cores(
    source: str | Path | pd.DataFrame,
    *,
    layout: str | None = None,
    columns: Mapping[str, str] | None = None,
    units: str | None = None,
    sheet: str | None = None,
    table: str | None = None,
    query: str | None = None,
    curve: str | None = None,
    scheme: FaciesScheme | str | Path | None = None,
    repeated_depths: str = "error",
    unstated_units: str | None = None,
) -> CoreSet:
    """Read and validate a core database.

    Parameters
    ----------
    source
        A CSV/TSV, ``.xlsx``, Parquet or LAS file, a folder of them, a SQLite
        file, a SQLAlchemy URL (``postgresql://user@host/db``) or a YAML source
        file (``*.yaml``; its options are used where the arguments here are
        ``None``); or a pandas DataFrame, one row per interval or sample, checked
        as a file is (messages name it ``DataFrame`` and its rows ``data row N``,
        the N-th row counted from 1).
    layout
        ``"intervals"`` (core, top, base, facies) or ``"samples"`` (core,
        depth, facies); detected from the columns when ``None``.
    columns
        Role -> column name, e.g. ``{"core": "Well Name", "depth": "Depth"}``;
        roles are :data:`ROLES`. Unmapped roles are found among common variants,
        case-insensitively.
    units
        ``"m"`` or ``"ft"``: the units of depths the source does not state, and
        the units every stated depth is converted to (1 ft = 0.3048 m exactly).
    sheet, table, query, curve
        Excel sheet; database table, or a read-only ``SELECT`` to run instead;
        LAS facies curve.
    scheme
        A facies scheme (or its YAML path): aliases are resolved to scheme
        codes and codes not in it are errors. When ``None``, a YAML source
        file's ``scheme:`` is used.
    repeated_depths
        Sample layout: ``"error"`` (default) or ``"keep-first"`` (the first of
        repeated depths is kept; each left out row is reported as a repair).
    unstated_units
        ``"m"`` (default) or ``"ft"``: the units of the depths when neither ``units``
        (nor a YAML source file's ``units:``) nor the source states any, with a
        ``units`` warning saying so; e.g. the units a model was fitted in.

    Returns
    -------
    CoreSet
        Cores in order of first appearance, with ``problems`` holding every
        error, warning and repair (rows with errors are left out of the cores)
        and ``meta["sample_step"]`` (core -> sample spacing, sample layout).

    Raises
    ------
    InputError
        The source cannot be read at all (not found, unreadable, unknown
        format, missing required column, mixed depth units).
    ConfigError
        A bad option (unknown role, option not applying to the source, ...).
    TypeError
        ``source`` is neither a path, a URL nor a DataFrame.
    """
    if isinstance(source, pd.DataFrame):
        given = {"sheet": sheet, "table": table, "query": query, "curve": curve}
        for option, value in given.items():
            if value is not None:
                raise ConfigError(f"{option}= does not apply to a DataFrame")
        return read_frame(
            source,
            layout=layout,
            columns=columns,
            units=units,
            scheme=scheme,
            repeated_depths=repeated_depths,
            unstated_units=units_option(unstated_units) or "m",
        )
    _check_source(source, "read_cores")
    spec, scheme = _spec_and_scheme(
        source,
        scheme,
        layout=layout,
        columns=columns,
        units=units,
        sheet=sheet,
        table=table,
        query=query,
        curve=curve,
    )
    if repeated_depths == "error" and spec.repeated_depths:  # from a YAML source file
        repeated_depths = spec.repeated_depths
    tables, problems, sources = read_tables(spec)
    cores = build_coreset(
        tables,
        layout=spec.layout,
        columns=spec.columns,
        units=spec.units,
        scheme=scheme,
        repeated_depths=repeated_depths,
        sources=sources,
        unstated_units=units_option(unstated_units) or "m",
    )
    if problems:
        cores = replace(cores, problems=tuple(problems) + cores.problems)
    return cores


def stream_cores(
    source: str | Path,
    *,
    layout: str | None = None,
    columns: Mapping[str, str] | None = None,
    units: str | None = None,
    sheet: str | None = None,
    table: str | None = None,
    query: str | None = None,
    curve: str | None = None,
    scheme: FaciesScheme | str | Path | None = None,
    rows: int | None = None,
    others: Collection[str] | None = None,
    unstated_units: str | None = None,
) -> CoreStream | None:
    """:func:`read_cores` a batch of whole cores at a time, for what needs each core
    alone (:mod:`faciesseq.io.stream`).

    Parameters are those of :func:`read_cores`; ``rows`` is the least number of the
    file's rows per batch (default :data:`faciesseq.io.stream.BATCH_ROWS`); ``others``
    the attribute columns matched to no role that are wanted, by their names in the
    bed tables (default: all; the rest are not read, see
    :func:`faciesseq.io.stream.open_stream`).

    Returns
    -------
    CoreStream or None
        The valid batches, one :class:`~faciesseq.core.CoreSet` each, in file order;
        ``None`` where the source must be read whole (not one plain CSV file with a
        core column). While iterating, :class:`~faciesseq.io.stream.NotStreamable`
        says that the file must be read whole after all (its cores apart, or its
        columns read differently from one batch to the next).
    """
    _check_source(source, "stream_cores")
    spec, scheme = _spec_and_scheme(
        source,
        scheme,
        layout=layout,
        columns=columns,
        units=units,
        sheet=sheet,
        table=table,
        query=query,
        curve=curve,
    )
    return open_stream(spec, scheme, rows, others, units_option(unstated_units) or "m")


def _spec_and_scheme(source, scheme, **options) -> tuple[SourceSpec, FaciesScheme | None]:
    """The reading options of ``source`` and the facies scheme, loaded (an explicit
    scheme wins over a YAML source file's ``scheme:``)."""
    spec = source_spec(source, **options)
    if scheme is None and spec.scheme is not None:
        scheme = spec.scheme
    scheme = as_scheme(scheme)
    return spec, scheme


def _check_source(source: object, taker: str) -> None:
    """A one-line :class:`TypeError` for a source that is no path or URL (pathlib would
    take a long text for a file name, or fail on an object with its own words)."""
    if not isinstance(source, str | os.PathLike):
        kinds = "a path (str or pathlib.Path) or a database URL" + (
            ", or a pandas DataFrame" if taker == "read_cores" else ""
        )
        hint = (
            "; make a DataFrame of records with pandas.DataFrame(records)"
            if isinstance(source, list | tuple | Mapping)
            else ""
        )
        raise TypeError(f"{taker} takes {kinds}, got {type(source).__name__}{hint}")


def _merge(from_file: SourceSpec, given: SourceSpec) -> SourceSpec:
    """Options given as arguments win over the YAML source file; column maps are merged."""
    columns = dict(from_file.columns)
    columns.update({str(k).strip().lower(): v for k, v in given.columns.items()})
    out = {"source": from_file.source, "columns": columns}
    for key in ("layout", "units", "sheet", "table", "query", "curve"):
        value = getattr(given, key)
        out[key] = value if value is not None else getattr(from_file, key)
    if given.table is not None or given.query is not None:
        # a table or query given chooses the rows in place of the source file's
        out["table"], out["query"] = given.table, given.query
    out["encoding"] = from_file.encoding
    out["repeated_depths"] = from_file.repeated_depths
    out["scheme"] = from_file.scheme
    return SourceSpec(**out)
