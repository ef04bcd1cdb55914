"""Compile an appendix with pdflatex and read its log (tables that run into the margin)."""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

_OVERFULL = re.compile(r"Overfull \\hbox \(([\d.]+)pt too wide\) in \w+ at lines (\d+)--(\d+)")


def compile_latex(folder: Path, passes: int = 2) -> str:
    """Run pdflatex on ``folder/appendix.tex`` (``passes`` times); the log's text."""
    pdflatex = shutil.which("pdflatex")
    assert pdflatex is not None
    for _ in range(passes):  # the second pass resolves the table of contents
        run = subprocess.run(
            [pdflatex, "-interaction=nonstopmode", "-halt-on-error", "appendix.tex"],
            cwd=folder,
            capture_output=True,
            text=True,
            timeout=300,
        )
        assert run.returncode == 0, run.stdout[-2000:]
    return (folder / "appendix.log").read_text(encoding="latin-1")


def page_count(log: str) -> int:
    pages = re.search(r"Output written on appendix\.pdf \((\d+) pages?", log)
    assert pages is not None
    return int(pages.group(1))


def table_overfulls(tex: str, log: str, tolerance: float = 3.0) -> list[tuple[float, int]]:
    """``(points, line)`` of every line of a table wider than the text by more than ``tolerance``.

    A table is the lines from its ``\\begin{tabular}``/``\\begin{longtable}`` to its end.
    """
    inside = set()
    start = None
    for n, line in enumerate(tex.splitlines(), start=1):
        if r"\begin{tabular}" in line or r"\begin{longtable}" in line:
            start = n
        if start is not None:
            inside.add(n)
        if r"\end{tabular}" in line or r"\end{longtable}" in line:
            start = None
    out = []
    for points, first, last in _OVERFULL.findall(log):
        lines = set(range(int(first), int(last) + 1))
        if float(points) > tolerance and lines & inside:
            out.append((float(points), int(first)))
    return out
