"""Databases: a SQLite file, or any SQLAlchemy URL (``postgresql://...``).

Connections are opened read-only where the driver allows it: SQLite through a
``mode=ro`` URI, PostgreSQL (psycopg2) with ``default_transaction_read_only``
set for the session; a ``--query`` must also be a single ``SELECT`` (or
``WITH ... SELECT``) statement. Passwords never appear in messages: the URL is
always shown with the password hidden, and driver messages are scrubbed.
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd

from faciesseq.errors import ConfigError, InputError
from faciesseq.io.raw import RawTable

__all__ = ["is_sqlite_file", "is_url", "read_sql"]

SQLITE_SUFFIXES = (".sqlite", ".sqlite3", ".db", ".gpkg")
_DEFAULT_TABLES = ("intervals", "samples", "cores", "facies")


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


def _check_query(query: str, where: str) -> str:
    text = query.strip().rstrip(";").strip()
    if ";" in text:
        raise ConfigError("--query must be a single statement", file=where)
    first = re.match(r"^\s*(\w+)", text)
    if not first or first.group(1).lower() not in ("select", "with"):
        raise ConfigError("--query must be a read-only SELECT statement", file=where)
    if re.search(r"\b(insert|update|delete|drop|alter|create|truncate|grant)\b", text, re.I):
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
    """A read-only engine for ``source`` (URL or SQLite path) and its display label."""
    from sqlalchemy import create_engine
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError, NoSuchModuleError

    from faciesseq._optional import install_hint

    if is_url(source):
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
    path = Path(source)
    label = str(path)
    if not path.exists():
        raise InputError("file not found", file=label)
    engine = create_engine(f"sqlite:///file:{path.resolve()}?mode=ro&uri=true")
    return engine, label, None


def _scrub(message: str, secret: str | None) -> str:
    if secret:
        message = message.replace(secret, "***")
    message = re.sub(r"(://[^:/@\s]*:)[^@\s]*@", r"\1***@", message)
    return message.strip().splitlines()[0] if message.strip() else "database error"


def read_sql(source: str, table: str | None = None, query: str | None = None) -> RawTable:
    """Read a table (or the rows of a read-only query) from a database.

    Without ``table`` or ``query``, the only table of the database is read,
    or a table named ``intervals``, ``samples``, ``cores`` or ``facies``.
    """
    from faciesseq._optional import import_optional

    import_optional("sqlalchemy", "reading databases (SQLite files and URLs)")
    from sqlalchemy import inspect, text
    from sqlalchemy.exc import SQLAlchemyError

    if table and query:
        raise ConfigError("give --table or --query, not both")
    engine, label, secret = _engine(source)
    try:
        with engine.connect() as conn:
            if query:
                sql = _check_query(query, label)
                name = "query"
                frame = pd.read_sql_query(text(sql), conn)
            else:
                tables = inspect(conn).get_table_names()
                if table is None:
                    found = [t for t in _DEFAULT_TABLES if t in tables]
                    if len(tables) == 1:
                        table = tables[0]
                    elif found:
                        table = found[0]
                    else:
                        raise ConfigError(
                            "say which table to read with --table (tables: "
                            f"{', '.join(tables) or 'none'})",
                            file=label,
                        )
                elif table not in tables:
                    raise InputError(
                        f"no table {table!r}; the tables are {', '.join(tables) or 'none'}",
                        file=label,
                    )
                name = table
                quoted = conn.dialect.identifier_preparer.quote(table)
                frame = pd.read_sql_query(text(f"SELECT * FROM {quoted}"), conn)
    except (SQLAlchemyError, pd.errors.DatabaseError) as exc:
        detail: BaseException = exc
        for _ in range(5):  # pandas wraps SQLAlchemy, which wraps the driver's error
            inner = getattr(detail, "orig", None) or detail.__cause__
            if inner is None:
                break
            detail = inner
        what = "--query failed" if query else "database error"
        raise InputError(f"{what}: {_scrub(str(detail), secret)}", file=label) from None
    finally:
        engine.dispose()
    frame.columns = [str(c) for c in frame.columns]
    return RawTable(frame.astype(object), f"{label} [{name}]")
