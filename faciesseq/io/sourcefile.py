"""Writing a YAML source file: the reading options of a core database, stated once.

``faciesseq check SOURCE --write-source FILE`` writes what it detected (the
data's path, layout, column mapping, units, the repairs chosen and the scheme)
so that every later command takes ``FILE`` as SOURCE without repeating
``--units``, ``--keep-first`` or ``--scheme``. The text is read back by
:func:`faciesseq.io.source.load_source_file` (see docs/io.md, "A project file").
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import re
from collections.abc import Mapping
from pathlib import Path

import yaml

from faciesseq.io.sql import is_url

__all__ = ["relative_to", "source_file_text"]


def _scalar(value: object) -> str:
    """``value`` as a YAML scalar: plain where that reads back the same, else quoted."""
    text = str(value)
    plain = (
        re.fullmatch(r"[A-Za-z0-9_./()\[\]+-][A-Za-z0-9_ ./()\[\]+-]*", text) is not None
        and text == text.strip()
    )
    if plain:
        try:
            plain = yaml.safe_load(text) == text
        except yaml.YAMLError:
            plain = False
    return text if plain else json.dumps(text, ensure_ascii=False)


def relative_to(target: str | Path, folder: Path) -> str:
    """``target`` relative to ``folder`` where possible (else absolute), with ``/``."""
    target = Path(target).resolve()
    try:
        return Path(os.path.relpath(target, folder.resolve())).as_posix()
    except ValueError:  # another drive (Windows)
        return target.as_posix()


def _hide_password(url: str) -> str:
    return re.sub(r"(://[^:/@\s]*):[^@\s]*@", r"\1@", url)


def source_file_text(
    *,
    output: Path,
    data: str,
    layout: str | None,
    columns: Mapping[str, str],
    units: str,
    units_note: str,
    repeated_depths: str | None = None,
    sheet: str | None = None,
    table: str | None = None,
    query: str | None = None,
    curve: str | None = None,
    encoding: str | None = None,
    scheme: str | None = None,
    description: str | None = None,
    writer: str = "faciesseq check --write-source",
    now: _dt.datetime | None = None,
) -> str:
    """The YAML text of a source file, one comment per key.

    Parameters
    ----------
    output
        Where the file will be written: ``path`` and ``scheme`` are made
        relative to its folder.
    data
        The data file, folder or URL (a password in a URL is left out).
    layout, columns, units, repeated_depths, sheet, table, query, curve, encoding
        The reading options (``None``: not written).
    units_note
        Where the units came from (e.g. ``"stated in the data"``).
    scheme
        Facies scheme path, or ``None``.
    description
        A note kept in the file.
    writer, now
        What wrote the file and when (for the header comment).

    Returns
    -------
    str
        YAML that :func:`faciesseq.io.source.load_source_file` reads.
    """
    folder = output.parent
    when = (now or _dt.datetime.now().astimezone()).isoformat(timespec="seconds")
    from faciesseq import __version__

    lines = [
        f"# faciesseq source file, written by `{writer}` (faciesseq {__version__})",
        f"# on {when}. Give this file as SOURCE to every command:",
        f"#   faciesseq markov {output.name}    faciesseq fit {output.name} -o model.json",
        "# Options given on the command line win over the keys below. See docs/io.md,",
        '# "A project file".',
    ]
    if is_url(data):
        shown = _hide_password(data)
        lines.append(
            f"url: {_scalar(shown)}  # database URL (no password: let the driver find it, "
            "e.g. PGPASSWORD or ~/.pgpass)"
        )
    else:
        lines.append(
            f"path: {_scalar(relative_to(data, folder))}  # the data, relative to this file"
        )
    if layout:
        lines.append(
            f"layout: {layout}  # intervals (top, base) or samples (depth): one row per "
            + ("interval" if layout == "intervals" else "sample")
        )
    else:
        lines.append("# layout: not stated (the files differ); detected per file")
    lines.append(f"units: {units}  # depth units, m or ft ({units_note})")
    if columns:
        lines.append("columns:  # role: column name in the data")
        for role, name in columns.items():
            lines.append(f"  {role}: {_scalar(name)}")
    if repeated_depths:
        note = (
            "keep the first of repeated depths (each reported as a repair)"
            if repeated_depths == "keep-first"
            else "a repeated depth is an error"
        )
        lines.append(f"repeated_depths: {repeated_depths}  # {note}")
    options = (
        ("sheet", sheet, "Excel sheet"),
        ("table", table, "database table"),
        ("query", query, "read-only SELECT run instead of a table"),
        ("curve", curve, "LAS curve holding the facies codes"),
        ("encoding", encoding, "text encoding of the data"),
    )
    for key, value, note in options:
        if value is not None:
            lines.append(f"{key}: {_scalar(value)}  # {note}")
    if scheme:
        lines.append(
            f"scheme: {_scalar(relative_to(scheme, folder))}  # facies scheme, relative to "
            "this file (--scheme wins)"
        )
    else:
        lines.append(
            "# scheme: my-scheme.yaml  # facies scheme (write one: faciesseq scheme draft)"
        )
    if description:
        lines.append(f"description: {_scalar(description)}  # a note for the reader")
    return "\n".join(lines) + "\n"
