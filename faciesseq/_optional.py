"""Optional packages: the readers of some formats are installed as extras.

``pip install faciesseq`` reads and writes CSV, TSV, Parquet and SQLite (with
Python's own sqlite3). Excel workbooks need ``faciesseq[excel]`` (openpyxl), LAS
files ``faciesseq[las]`` (lasio) and other databases ``faciesseq[sql]``
(SQLAlchemy, and psycopg2 for PostgreSQL); runs on a Dask cluster need
``faciesseq[dask]`` (distributed). A missing one is reported as one line naming the extra.
"""

from __future__ import annotations

import importlib
from types import ModuleType

from faciesseq.errors import ConfigError

__all__ = ["EXTRAS", "MissingExtraError", "import_optional"]

#: Optional module -> the extra that installs it.
EXTRAS = {
    "openpyxl": "excel",
    "lasio": "las",
    "sqlalchemy": "sql",
    "psycopg2": "sql",
    "distributed": "dask",
}


class MissingExtraError(ConfigError):
    """An optional package a format needs is not installed (exit code 2)."""


def install_hint(extra: str) -> str:
    """The command that installs ``extra``, e.g. ``pip install "faciesseq[excel]"``."""
    return f'pip install "faciesseq[{extra}]"'


def import_optional(name: str, purpose: str) -> ModuleType:
    """Import the optional module ``name``, or say which extra installs it.

    Parameters
    ----------
    name
        A key of :data:`EXTRAS` (``"openpyxl"``, ``"lasio"``, ``"sqlalchemy"``...).
    purpose
        What needs it, for the message (e.g. ``"reading .xlsx workbooks"``).

    Returns
    -------
    types.ModuleType
        The module.

    Raises
    ------
    MissingExtraError
        The module is not installed.
    """
    try:
        return importlib.import_module(name)
    except ModuleNotFoundError as exc:
        if exc.name is not None and exc.name.split(".")[0] != name:
            raise  # the package is there but broken: not a missing extra
        extra = EXTRAS[name]
        raise MissingExtraError(
            f"{purpose} needs the optional package {name}; install it with {install_hint(extra)}"
        ) from None
