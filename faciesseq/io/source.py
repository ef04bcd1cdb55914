"""Which reader a source needs: a file by its suffix, a folder, a database, a YAML source file."""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from faciesseq.errors import ConfigError, InputError, Problem
from faciesseq.io.columns import units_option
from faciesseq.io.las import read_las
from faciesseq.io.raw import RawTable
from faciesseq.io.sql import is_sqlite_file, is_url, read_sql
from faciesseq.io.tabular import TEXT_SUFFIXES, read_delimited, read_excel, read_parquet

__all__ = ["SOURCE_KEYS", "SourceSpec", "load_source_file", "read_tables"]

EXCEL_SUFFIXES = (".xlsx", ".xlsm")
PARQUET_SUFFIXES = (".parquet", ".pq")
LAS_SUFFIXES = (".las",)
YAML_SUFFIXES = (".yaml", ".yml")

#: Keys of a YAML source file (see docs/io.md).
SOURCE_KEYS = (
    "path",
    "url",
    "layout",
    "columns",
    "units",
    "sheet",
    "table",
    "query",
    "curve",
    "encoding",
    "repeated_depths",
    "scheme",
    "description",
)


@dataclass(frozen=True)
class SourceSpec:
    """Where the cores are and how to read them (from the options or a YAML source file)."""

    source: str
    layout: str | None = None
    columns: Mapping[str, str] = field(default_factory=dict)
    units: str | None = None
    sheet: str | None = None
    table: str | None = None
    query: str | None = None
    curve: str | None = None
    encoding: str | None = None
    repeated_depths: str | None = None
    #: Facies scheme named by a YAML source file (``scheme:``, resolved against the YAML file).
    scheme: str | None = None


def load_source_file(path: Path) -> SourceSpec:
    """Read a YAML source file; ``path`` inside it is relative to the YAML file."""
    from faciesseq.scheme import _read_yaml

    data: Any = _read_yaml(path)
    file = str(path)
    if not isinstance(data, Mapping):
        raise ConfigError("a source file must be a mapping with 'path' or 'url'", file=file)
    unknown = set(data) - set(SOURCE_KEYS)
    if "facies" in unknown or "tracts" in unknown:
        what, option = (
            ("a facies scheme", "--scheme")
            if "facies" in unknown
            else ("a tract model", "--tracts")
        )
        raise ConfigError(
            f"this is {what}, not a source of cores: give it with {option} and the cores "
            "as the source",
            file=file,
        )
    if unknown:
        raise ConfigError(
            f"unknown key(s) {sorted(map(str, unknown))}; expected some of {list(SOURCE_KEYS)}",
            file=file,
        )
    if ("path" in data) == ("url" in data):
        raise ConfigError("give exactly one of 'path' (a file or folder) or 'url'", file=file)
    if data.get("table") is not None and data.get("query") is not None:
        raise ConfigError("give table: or query:, not both", file=file)
    columns = data.get("columns") or {}
    if not isinstance(columns, Mapping):
        raise ConfigError("'columns' must be a mapping of role: column name", file=file)
    for key in (
        "path",
        "url",
        "layout",
        "units",
        "sheet",
        "table",
        "query",
        "curve",
        "encoding",
        "scheme",
    ):
        if key in data and not isinstance(data[key], str | int | float):
            raise ConfigError(f"{key!r} must be text, got {data[key]!r}", file=file)
    if "path" in data:
        target = Path(str(data["path"]))
        if not target.is_absolute():
            target = path.parent / target
        if target.suffix.lower() in YAML_SUFFIXES:
            raise ConfigError("'path' must not name another YAML source file", file=file)
        source = str(target)
    else:
        source = str(data["url"])
    text = {k: (None if data.get(k) is None else str(data[k])) for k in SOURCE_KEYS}
    if text["layout"] is not None and text["layout"] not in ("intervals", "samples"):
        raise ConfigError(
            f"'layout' must be one of ['intervals', 'samples'], got {text['layout']!r}", file=file
        )
    text["units"] = units_option(text["units"], file=file)
    scheme = None
    if text["scheme"] is not None:
        scheme_path = Path(text["scheme"])
        scheme_path = scheme_path if scheme_path.is_absolute() else path.parent / scheme_path
        scheme = os.path.normpath(scheme_path)
    return SourceSpec(
        source=source,
        layout=text["layout"],
        columns={str(k).strip().lower(): str(v) for k, v in columns.items()},
        units=text["units"],
        sheet=text["sheet"],
        table=text["table"],
        query=text["query"],
        curve=text["curve"],
        encoding=text["encoding"],
        repeated_depths=text["repeated_depths"],
        scheme=scheme,
    )


def _kind(path: Path) -> str | None:
    suffix = path.suffix.lower()
    if suffix in TEXT_SUFFIXES:
        return "text"
    if suffix in EXCEL_SUFFIXES:
        return "excel"
    if suffix in PARQUET_SUFFIXES:
        return "parquet"
    if suffix in LAS_SUFFIXES:
        return "las"
    if is_sqlite_file(path):
        return "sql"
    return None


def _read_file(path: Path, kind: str, spec: SourceSpec) -> RawTable:
    table = _read_kind(path, kind, spec)
    if table.core is None:
        table.core = path.stem  # the core name when the table has no core column
    return table


def _read_kind(path: Path, kind: str, spec: SourceSpec) -> RawTable:
    if kind == "text":
        return read_delimited(path, spec.encoding)
    if kind == "excel":
        return read_excel(path, spec.sheet)
    if kind == "parquet":
        return read_parquet(path)
    if kind == "las":
        return read_las(path, spec.curve, spec.encoding)
    return read_sql(str(path), spec.table, spec.query)


def _refuse_options(spec: SourceSpec, kind: str, where: str) -> None:
    applies = {"sheet": "excel", "curve": "las", "table": "sql", "query": "sql"}
    for option, only in applies.items():
        if getattr(spec, option) is not None and kind != only:
            raise ConfigError(f"--{option} does not apply to this kind of source", file=where)


def read_tables(spec: SourceSpec) -> tuple[list[RawTable], list[Problem], tuple[str, ...]]:
    """Raw tables of a source, what the dispatch itself noticed, and the source labels."""
    source = spec.source
    if is_url(source):
        table = read_sql(source, spec.table, spec.query)
        return [table], [], (table.file,)
    path = Path(source)
    if not path.exists():
        raise InputError("file or folder not found", file=source)
    if path.is_dir():
        files = sorted(p for p in path.iterdir() if p.is_file() and not p.name.startswith("."))
        tables, problems, ignored = [], [], []
        for p in files:
            kind = _kind(p)
            if kind is None:
                ignored.append(p.name)
                continue
            if kind == "sql":
                tables.append(read_sql(str(p), spec.table, spec.query))
            else:
                tables.append(_read_file(p, kind, replace(spec, table=None, query=None)))
        if not tables:
            raise InputError(
                "no CSV, TSV, XLSX, Parquet, LAS or SQLite files in this folder", file=source
            )
        if ignored:
            problems.append(
                Problem(
                    "warning",
                    "ignored-file",
                    f"not read (not a supported format): {', '.join(ignored)}",
                    file=source,
                )
            )
        return tables, problems, tuple(t.file for t in tables)
    kind = _kind(path)
    if kind is None:
        if path.suffix.lower() == ".xls":
            raise InputError("old Excel .xls files are not read; save it as .xlsx", file=source)
        raise InputError(
            "unknown format (expected .csv, .tsv, .txt, .xlsx, .parquet, .las, a SQLite file "
            "or a YAML source file)",
            file=source,
        )
    _refuse_options(spec, kind, source)
    table = _read_file(path, kind, spec)
    return [table], [], (table.file,)
