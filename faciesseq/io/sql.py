"""Databases: a SQLite file, or any SQLAlchemy URL (``postgresql://...``).

A SQLite file (or a ``sqlite:///path`` URL) is read with Python's own
:mod:`sqlite3` and pandas, so the base install reads what it writes; every
other database goes through SQLAlchemy (``faciesseq[sql]``). Connections are
opened read-only where the driver allows it: SQLite through a ``mode=ro`` URI,
PostgreSQL (psycopg2) with ``default_transaction_read_only`` set for the
session; a ``--query`` must also be a single ``SELECT`` (or ``WITH ... SELECT``)
statement. Passwords never appear in messages: the URL is always shown with the
password hidden, and driver messages are scrubbed.
"""

from __future__ import annotations

import re
from pathlib import Path
from urllib.parse import unquote

import pandas as pd

from faciesseq.errors import ConfigError, InputError
from faciesseq.io.raw import RawTable

__all__ = ["is_sqlite_file", "is_url", "read_sql", "table_names"]

SQLITE_SUFFIXES = (".sqlite", ".sqlite3", ".db", ".gpkg")
_DEFAULT_TABLES = ("intervals", "samples", "cores", "facies")
#: SQLite's own tables, left out of the listing as SQLAlchemy's inspector leaves them out.
_SQLITE_TABLES = (
    "SELECT name FROM sqlite_master WHERE type = 'table' "
    "AND name NOT LIKE 'sqlite~_%' ESCAPE '~' ORDER BY name"
)
#: Views: read where --table names one, never chosen by default.
_SQLITE_VIEWS = "SELECT name FROM sqlite_master WHERE type = 'view' ORDER BY name"


def is_url(source: str) -> bool:
    return re.match(r"^[a-zA-Z][a-zA-Z0-9+.\-]*://", source) is not None


def is_sqlite_file(path: Path) -> bool:
    if path.suffix.lower() in SQLITE_SUFFIXES:
        return True
    try:
        with open(path, "rb") as handle:
            return handle.read(16) == b"SQLite format 3\x00"
    except OSError:
        return False


def _sqlite_file(source: str) -> tuple[Path, str, str] | None:
    """The file of a SQLite source (a path, or a ``sqlite:///path`` URL), its label and
    the message for a missing file; ``None`` for any other URL."""
    if not is_url(source):
        return Path(source), str(Path(source)), "file not found"
    match = re.match(r"^sqlite(?:\+pysqlite)?://(.*)$", source, re.IGNORECASE)
    if match is None:
        return None
    # as SQLAlchemy reads it: sqlite:///relative.db, sqlite:////absolute.db, ?options after
    database = unquote(match.group(1).split("?", 1)[0])
    if not database.startswith("/") or database in ("/", "/:memory:"):
        raise ConfigError(
            "a sqlite URL must name a database file (sqlite:///cores.sqlite, or "
            "sqlite:////absolute/path/cores.sqlite)",
            file=source,
        )
    return Path(database[1:]), source, "database file not found"


def _choose_table(
    tables: list[str], table: str | None, label: str, views: list[str] | None = None
) -> str:
    """The table to read: ``table`` (a table or a view, matched in any case where its
    own spelling is not there, as SQLite matches names), else the only table or one of
    the usual names."""
    if not tables and not views:
        raise InputError("the database has no tables", file=label)
    if table is None:
        found = [t for t in _DEFAULT_TABLES if t in tables]
        if len(tables) == 1:
            return tables[0]
        if found:
            return found[0]
        raise ConfigError(
            f"say which table to read with --table (tables: {', '.join(tables) or 'none'})",
            file=label,
        )
    names = [*tables, *(views or ())]
    if table in names:
        return table
    folded = [n for n in names if n.casefold() == table.casefold()]
    if len(folded) == 1:
        return folded[0]
    listed = ", ".join(tables) or "none"
    if views:
        listed += f"; the views are {', '.join(views)}"
    raise InputError(f"no table {table!r}; the tables are {listed}", file=label)


def _failure(exc: BaseException, query: str | None, label: str, secret: str | None):
    """The one-line error of a failed read: the driver's own message, scrubbed."""
    detail: BaseException = exc
    for _ in range(5):  # pandas wraps SQLAlchemy, which wraps the driver's error
        inner = getattr(detail, "orig", None) or detail.__cause__
        if inner is None:
            break
        detail = inner
    what = "--query failed" if query else "database error"
    return InputError(f"{what}: {_scrub(str(detail), secret)}", file=label)


#: Quoted text and comments of SQL, blanked before a query's words are checked.
_NOT_CODE = re.compile(r"'(?:[^']|'')*'|\"(?:[^\"]|\"\")*\"|--[^\n]*|/\*.*?\*/", re.S)


def _check_query(query: str, where: str) -> str:
    """The query, checked to be one read-only statement. Its quoted text and comments
    are left out of the check (``WHERE note = 'update'`` and ``'a;b'`` are data, and a
    query may open with a comment); the database is opened read-only where it can be."""
    text = query.strip().rstrip(";").strip()
    code = _NOT_CODE.sub(" ", text)
    if ";" in code.strip().rstrip(";"):
        raise ConfigError("--query must be a single statement", file=where)
    first = re.match(r"^\s*(\w+)", code)
    if not first or first.group(1).lower() not in ("select", "with"):
        raise ConfigError("--query must be a read-only SELECT statement", file=where)
    if re.search(r"\b(insert|update|delete|drop|alter|create|truncate|grant)\b", code, re.I):
        raise ConfigError("--query must be read-only (no INSERT, UPDATE, DELETE, ...)", file=where)
    return text


def _postgres_driver() -> str:
    """The installed PostgreSQL driver: psycopg (3) when present, else psycopg2."""
    import importlib.util

    for name in ("psycopg", "psycopg2"):
        if importlib.util.find_spec(name) is not None:
            return name
    return "psycopg"


def _engine(source: str):
    """A read-only engine for the URL ``source``, its display label and its password."""
    from sqlalchemy import create_engine
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError, NoSuchModuleError

    from faciesseq._optional import install_hint

    try:
        url = make_url(source)
        label = url.render_as_string(hide_password=True)
        url.get_backend_name()
        _ = url.port  # parsed lazily by some SQLAlchemy versions
    except (ArgumentError, ValueError, TypeError) as exc:
        detail = _scrub(str(exc), None) if not isinstance(exc, ArgumentError) else ""
        raise ConfigError(
            "not a valid database URL (expected e.g. postgresql://user@host:5432/name"
            + (f"; {detail}" if detail else "")
            + ")"
        ) from None
    secret = url.password
    connect_args: dict = {}
    backend = url.get_backend_name()
    if backend == "sqlite" and url.database:
        path = Path(url.database)
        if not path.exists():
            raise InputError("database file not found", file=label)
        url = make_url(f"sqlite:///file:{path.resolve()}?mode=ro&uri=true")
    elif backend == "postgresql":
        connect_args["options"] = "-c default_transaction_read_only=on"
        if url.drivername == "postgresql":
            url = url.set(drivername=f"postgresql+{_postgres_driver()}")
    try:
        engine = create_engine(url, connect_args=connect_args)
    except (NoSuchModuleError, ModuleNotFoundError) as exc:
        raise ConfigError(
            f"no database driver for this URL ({exc}); install the driver for this "
            f"database (PostgreSQL: {install_hint('sql')})",
            file=label,
        ) from None
    return engine, label, secret


def _scrub(message: str, secret: str | None) -> str:
    if secret:
        message = message.replace(secret, "***")
    message = re.sub(r"(://[^:/@\s]*:)[^@\s]*@", r"\1***@", message)
    return message.strip().splitlines()[0] if message.strip() else "database error"


def table_names(source: str) -> list[str]:
    """The tables of a database (a SQLite file, a ``sqlite:///`` URL or any SQLAlchemy
    URL), in name order."""
    sqlite = _sqlite_file(source)
    if sqlite is not None:
        return _sqlite_read(*sqlite, lambda conn, label: _sqlite_tables(conn), None)[0]
    return _sqlalchemy_read(source, lambda conn, label: _sqlalchemy_tables(conn), None)[0]


def read_sql(source: str, table: str | None = None, query: str | None = None) -> RawTable:
    """Read a table (or the rows of a read-only query) from a database.

    Without ``table`` or ``query``, the only table of the database is read,
    or a table named ``intervals``, ``samples``, ``cores`` or ``facies``.
    A SQLite file or ``sqlite:///`` URL is read with Python's own :mod:`sqlite3`
    (no optional package); any other URL needs SQLAlchemy (``faciesseq[sql]``).
    """
    if table and query:
        raise ConfigError("give --table or --query, not both")
    sqlite = _sqlite_file(source)
    if sqlite is not None:

        def read(conn, label: str) -> tuple[pd.DataFrame, str]:
            if query:
                return pd.read_sql_query(_check_query(query, label), conn), "query"
            name = _choose_table(_sqlite_tables(conn), table, label, _sqlite_views(conn))
            quoted = '"' + name.replace('"', '""') + '"'
            return pd.read_sql_query(f"SELECT * FROM {quoted}", conn), name

        (frame, name), label = _sqlite_read(*sqlite, read, query)
    else:

        def read(conn, label: str) -> tuple[pd.DataFrame, str]:
            from sqlalchemy import text

            if query:
                return pd.read_sql_query(text(_check_query(query, label)), conn), "query"
            views = _sqlalchemy_views(conn) if table else []
            name = _choose_table(_sqlalchemy_tables(conn), table, label, views)
            quoted = conn.dialect.identifier_preparer.quote(name)
            return pd.read_sql_query(text(f"SELECT * FROM {quoted}"), conn), name

        (frame, name), label = _sqlalchemy_read(source, read, query)
    frame.columns = [str(c) for c in frame.columns]
    return RawTable(frame.astype(object), f"{label} [{name}]")


def _sqlite_tables(conn) -> list[str]:
    return [row[0] for row in conn.execute(_SQLITE_TABLES)]


def _sqlite_views(conn) -> list[str]:
    return [row[0] for row in conn.execute(_SQLITE_VIEWS)]


def _sqlalchemy_tables(conn) -> list[str]:
    from sqlalchemy import inspect

    return inspect(conn).get_table_names()


def _sqlalchemy_views(conn) -> list[str]:
    from sqlalchemy import inspect

    return inspect(conn).get_view_names()


def _sqlite_read(path: Path, label: str, missing: str, read, query: str | None):
    """What ``read(connection, label)`` returns on the SQLite file ``path`` opened
    read-only, and the label; a driver's error as one line."""
    import sqlite3

    if not path.exists():
        raise InputError(missing, file=label)
    conn = None
    try:
        conn = sqlite3.connect(path.resolve().as_uri() + "?mode=ro", uri=True)
        result = read(conn, label)
    except (sqlite3.Error, pd.errors.DatabaseError) as exc:
        raise _failure(exc, query, label, None) from None
    finally:
        if conn is not None:
            conn.close()
    return result, label


def _sqlalchemy_read(source: str, read, query: str | None):
    """What ``read(connection, label)`` returns on the database of the URL ``source``
    through SQLAlchemy, and the label; a driver's error as one line."""
    from faciesseq._optional import import_optional

    import_optional(
        "sqlalchemy", "reading databases other than SQLite (URLs such as postgresql://)"
    )
    from sqlalchemy.exc import SQLAlchemyError

    engine, label, secret = _engine(source)
    try:
        with engine.connect() as conn:
            result = read(conn, label)
    except (SQLAlchemyError, pd.errors.DatabaseError) as exc:
        raise _failure(exc, query, label, secret) from None
    finally:
        engine.dispose()
    return result, label
