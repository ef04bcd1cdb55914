"""Writing a core set: CSV, XLSX, Parquet, SQLite or LAS, chosen by the suffix, atomically."""

from __future__ import annotations

import hashlib
from collections.abc import Collection, Mapping
from pathlib import Path

import pandas as pd

from faciesseq._output import new_file, new_folder
from faciesseq.core import CoreSet
from faciesseq.errors import ConfigError

__all__ = ["write_cores"]

_FORMATS = {
    ".csv": "csv",
    ".tsv": "tsv",
    ".xlsx": "xlsx",
    ".parquet": "parquet",
    ".sqlite": "sqlite",
    ".sqlite3": "sqlite",
    ".db": "sqlite",
    ".las": "las",
}


def _frame(cores: CoreSet) -> pd.DataFrame:
    table = cores.to_frame(provenance=False)
    table["units"] = cores.units
    return table


def _write_file(cores: CoreSet, fmt: str, tmp: Path, tables: Mapping[str, pd.DataFrame]) -> None:
    table = _frame(cores)
    if fmt in ("csv", "tsv"):
        table.to_csv(tmp, index=False, sep="," if fmt == "csv" else "\t", encoding="utf-8")
    elif fmt == "parquet":
        table.to_parquet(tmp, index=False)
    elif fmt == "xlsx":
        from faciesseq._optional import import_optional

        import_optional("openpyxl", "writing .xlsx workbooks")
        with pd.ExcelWriter(tmp, engine="openpyxl") as book:
            table.to_excel(book, sheet_name="intervals", index=False)
            for name, extra in tables.items():
                extra.to_excel(book, sheet_name=name[:31], index=False)
    elif fmt == "sqlite":
        _write_sqlite(tmp, table, tables)


def _write_sqlite(path: Path, table: pd.DataFrame, tables: Mapping[str, pd.DataFrame]) -> None:
    """The cores as table ``intervals`` and the extra tables, with the standard library's sqlite3.

    No SQLAlchemy needed: a plain install writes SQLite (reading databases
    needs ``faciesseq[sql]``).
    """
    import sqlite3

    conn = sqlite3.connect(path)
    try:
        with conn:
            table.to_sql("intervals", conn, index=False)
            for name, extra in tables.items():
                extra.to_sql(name, conn, index=False)
    finally:
        conn.close()


def write_cores(
    cores: CoreSet,
    path: str | Path,
    *,
    tables: Mapping[str, pd.DataFrame] | None = None,
    step: float | None = None,
    format: str | None = None,
) -> Path:
    """Write a core set in the interval layout, atomically (temporary file, then rename).

    Parameters
    ----------
    cores
        The core set; every interval is written with ``core``, ``top``,
        ``base``, ``facies``, its attributes and a ``units`` column (provenance
        columns are not written).
    path
        Output file; the format follows the suffix: ``.csv``, ``.tsv``,
        ``.xlsx`` (sheet ``intervals``), ``.parquet``, ``.sqlite``/``.db``
        (table ``intervals``) or ``.las`` (one core). For several cores in
        LAS, give a folder and ``format="las"``: one ``<core>.las`` per core.
    tables
        Extra tables written beside ``intervals`` (SQLite tables or XLSX sheets).
    step
        LAS only: the sample spacing (default: the core's sample spacing from
        ``cores.meta["sample_step"]``, else the coarsest grid its boundaries fit).
    format
        Overrides the suffix (``"csv"``, ``"tsv"``, ``"xlsx"``, ``"parquet"``,
        ``"sqlite"``, ``"las"``).

    Returns
    -------
    Path
        The path written.
    """
    path = Path(path)
    fmt = format or _FORMATS.get(path.suffix.lower())
    if fmt not in set(_FORMATS.values()):
        raise ConfigError(
            f"cannot tell the output format from {path.name!r}; use a suffix "
            f"({', '.join(sorted(_FORMATS))}) or format=",
            file=str(path),
        )
    tables = dict(tables or {})
    if tables and fmt not in ("sqlite", "xlsx"):
        raise ConfigError("extra tables can be written to SQLite or XLSX only", file=str(path))
    clash = [n for n in tables if n.lower() == "intervals"]
    if clash:
        raise ConfigError("an extra table must not be called 'intervals'", file=str(path))
    parent = path.parent
    parent.mkdir(parents=True, exist_ok=True)
    if fmt == "las":
        from faciesseq.io.las import write_las

        steps = dict(cores.meta.get("sample_step", {})) if cores.meta else {}
        as_folder = path.suffix.lower() != ".las"
        if not as_folder and len(cores) != 1:
            raise ConfigError(
                f"a .las file holds one core, this set has {len(cores)}; give a folder and "
                "format='las'",
                file=str(path),
            )
        if not as_folder:
            (core,) = cores
            with new_file(path, suffix=path.suffix) as tmp:
                write_las(core, tmp, step if step is not None else steps.get(core.name))
            return path
        if path.exists() and not path.is_dir():
            raise ConfigError("exists and is not a folder", file=str(path))
        with new_folder(path) as tmpdir:
            stems = FileStems()
            for core in cores:
                stem = stems(core.name)
                write_las(
                    core, tmpdir / f"{stem}.las", step if step is not None else steps.get(core.name)
                )
        return path
    with new_file(path, suffix=path.suffix) as tmp:
        if fmt == "sqlite":
            tmp.unlink()  # SQLite makes its own file
        _write_file(cores, fmt, tmp, tables)
    return path


#: Longest file name stem kept whole, in UTF-8 bytes (file systems allow 255 per name).
MAX_STEM = 100


def safe_stem(name: str, used: Collection[str] = ()) -> str:
    """A safe file name stem for ``name`` (a core name, say).

    Letters, digits, ``-``, ``_`` and ``.`` are kept, anything else becomes
    ``_``, leading dots are dropped; a stem longer than :data:`MAX_STEM` bytes,
    or one already in ``used``, is shortened and given a hash of the full name.
    :class:`FileStems` keeps ``used`` for the files of one folder.
    """
    safe = "".join(c if c.isalnum() or c in "-_." else "_" for c in name).lstrip(".") or "_"
    taken = safe in used or safe.casefold() in used
    if len(safe.encode("utf-8")) > MAX_STEM or taken:
        digest = hashlib.sha256(name.encode("utf-8", "surrogatepass")).hexdigest()[:12]
        head = safe
        while len(head.encode("utf-8")) > MAX_STEM - 13:
            head = head[:-1]
        safe = f"{head}-{digest}"
    return safe


class FileStems:
    """Distinct safe file stems for the files of one folder (:func:`safe_stem`), each
    stem taken remembered case-folded: the file systems of Windows and macOS do not
    tell ``A_1.png`` from ``a_1.png``, so one core's file would replace another's.
    ``empty`` names a file whose name is empty."""

    def __init__(self, empty: str = "core") -> None:
        self.used: set[str] = set()
        self.empty = empty

    def __call__(self, name: str) -> str:
        stem = safe_stem(name, self.used) if name else self.empty
        self.used.add(stem.casefold())
        return stem
