"""Provenance of an appendix: what went in, with which software, when.

``provenance.json`` lets a reviewer check that an appendix belongs to a data
set (SHA-256 of every input file), and rerun it (software versions, seeds,
the command line). Database URLs are recorded with their password removed.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import platform
from collections.abc import Iterable, Mapping, Sequence
from importlib import metadata
from pathlib import Path
from typing import Any

from faciesseq._version import __version__
from faciesseq.errors import mask_url

__all__ = [
    "display_path",
    "file_record",
    "mask_url",
    "provenance",
    "sha256_file",
    "software_versions",
]

#: Libraries whose versions change numbers or figures.
LIBRARIES = (
    "numpy",
    "pandas",
    "scipy",
    "hmmlearn",
    "scikit-learn",
    "matplotlib",
    "PyYAML",
    "SQLAlchemy",
    "lasio",
    "openpyxl",
    "pyarrow",
)


def sha256_file(path: str | Path, chunk: int = 1 << 20) -> str:
    """Hex SHA-256 of a file's bytes."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        while block := handle.read(chunk):
            digest.update(block)
    return digest.hexdigest()


def display_path(path: str | Path, base: str | Path | None = None) -> str:
    """How a file is named in the appendix text: never an installation or home path.

    Relative to ``base`` (the working folder by default) when the file is
    inside it, otherwise its name alone; a database URL is masked. The full
    path and the file's SHA-256 stay in ``provenance.json``.
    """
    text = str(path)
    if "://" in text:
        return mask_url(text)
    p = Path(text)
    if not p.is_absolute():
        return p.as_posix()
    try:
        return p.resolve().relative_to(Path(base or Path.cwd()).resolve()).as_posix()
    except ValueError:
        return p.name


def file_record(path: str | Path, role: str) -> dict[str, Any]:
    """``{"role", "path", "bytes", "sha256"}`` of one file."""
    p = Path(path)
    return {"role": role, "path": str(p), "bytes": p.stat().st_size, "sha256": sha256_file(p)}


def _source_records(source: str) -> list[dict[str, Any]]:
    if "://" in source:
        return [{"role": "source", "url": mask_url(source)}]
    p = Path(source)
    if p.is_dir():
        files = sorted(f for f in p.rglob("*") if f.is_file() and not f.name.startswith("."))
        return [file_record(f, "source") for f in files]
    if p.is_file():
        return [file_record(p, "source")]
    return [{"role": "source", "path": source, "note": "not a local file"}]


def software_versions() -> dict[str, str]:
    """Versions of faciesseq, Python and the libraries in :data:`LIBRARIES`."""
    out = {"faciesseq": __version__, "python": platform.python_version()}
    for name in LIBRARIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def provenance(
    *,
    sources: Iterable[str] = (),
    scheme: str | None = None,
    tract_model: str | None = None,
    model_file: str | None = None,
    seeds: Mapping[str, Any] | None = None,
    command_line: Sequence[str] | None = None,
    date: _dt.datetime | None = None,
    notes: Sequence[str] = (),
) -> dict[str, Any]:
    """Everything needed to trace and rerun an appendix (``provenance.json``).

    Parameters
    ----------
    sources
        The core database: files, folders (every file inside is hashed) or
        database URLs (recorded without password).
    scheme, tract_model, model_file
        Paths of the facies scheme, tract model and fitted model files;
        ``None`` when the packaged default was used (recorded as such).
    seeds
        Random seeds by name (e.g. ``{"fit": 0}``).
    command_line
        The command as typed (the command line passes ``sys.argv``).
    date
        When the appendix was made (UTC); default now.
    """
    files: list[dict[str, Any]] = []
    for source in sources:
        files.extend(_source_records(str(source)))
    for role, path in (("scheme", scheme), ("tract_model", tract_model), ("model", model_file)):
        if path is None:
            continue
        if str(path).startswith("faciesseq:"):
            files.append({"role": role, "path": str(path), "note": "packaged with faciesseq"})
        elif Path(path).is_file():
            files.append(file_record(path, role))
        else:
            files.append({"role": role, "path": str(path), "note": "not a local file"})
    when = (date or _dt.datetime.now(_dt.UTC)).astimezone(_dt.UTC)
    return {
        "software": software_versions(),
        "platform": platform.platform(),
        "inputs": files,
        "seeds": dict(seeds or {}),
        "command_line": ([mask_url(a) for a in command_line] if command_line is not None else None),
        "date": when.isoformat(timespec="seconds"),
        "notes": list(notes),
    }
