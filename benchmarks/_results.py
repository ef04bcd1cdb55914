"""Write one section of a benchmark results file (between markers), keeping the others."""

from __future__ import annotations

import os
import platform
import tempfile
from datetime import UTC, datetime
from pathlib import Path


def machine() -> str:
    """Machine facts and the load average when the run ended (other jobs slow wall time)."""
    cpus = os.cpu_count()
    load = f", load average {os.getloadavg()[0]:.2f}" if hasattr(os, "getloadavg") else ""
    return f"{platform.machine()}, {cpus} CPU(s), Python {platform.python_version()}{load}"


def stamp() -> str:
    return datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")


def write_section(path: Path, name: str, text: str, title: str) -> None:
    begin, end = f"<!-- begin {name} -->", f"<!-- end {name} -->"
    old = path.read_text(encoding="utf-8") if path.exists() else f"# {title}\n\n"
    block = f"{begin}\n{text.rstrip()}\n{end}"
    if begin in old and end in old:
        head, rest = old.split(begin, 1)
        _, tail = rest.split(end, 1)
        new = head + block + tail
    else:
        new = old.rstrip() + "\n\n" + block + "\n"
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.")
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        fh.write(new)
    os.chmod(tmp, 0o644)
    os.replace(tmp, path)


def write_json(path: Path, results) -> None:
    """``results`` as indented JSON at ``path``, through a temporary file beside it."""
    import json

    tmp = path.with_name(f".{path.name}.tmp")
    tmp.write_text(json.dumps(results, indent=2, default=str) + "\n", encoding="utf-8")
    tmp.replace(path)
