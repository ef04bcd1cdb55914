"""Open an HTML file in headless Chromium (Debian's ``chromium``): DOM, screenshot, log."""

from __future__ import annotations

import html
import json
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

CHROMIUM = shutil.which("chromium") or (
    "/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None
)
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--enable-logging=stderr",
    "--v=0",
]


def open_page(html: Path, screenshot: Path, size: str = "1200,2000") -> tuple[str, str]:
    """``(dom, log)``: the rendered DOM and Chromium's log; a screenshot is written."""
    url = html.resolve().as_uri()
    with tempfile.TemporaryDirectory() as profile:
        dom = subprocess.run(
            [CHROMIUM, *FLAGS, f"--user-data-dir={profile}", "--dump-dom", url],
            capture_output=True,
            text=True,
            timeout=120,
            check=True,
        )
    with tempfile.TemporaryDirectory() as profile:
        shot = subprocess.run(
            [
                CHROMIUM,
                *FLAGS,
                f"--user-data-dir={profile}",
                f"--screenshot={screenshot}",
                f"--window-size={size}",
                url,
            ],
            capture_output=True,
            text=True,
            timeout=120,
            check=True,
        )
    return dom.stdout, dom.stderr + shot.stderr


def print_pdf(html: Path, pdf: Path) -> bytes:
    """Print the page to PDF as a reader would ("print to PDF"); the PDF's bytes."""
    with tempfile.TemporaryDirectory() as profile:
        subprocess.run(
            [
                CHROMIUM,
                *FLAGS,
                f"--user-data-dir={profile}",
                "--no-pdf-header-footer",
                f"--print-to-pdf={pdf}",
                html.resolve().as_uri(),
            ],
            capture_output=True,
            text=True,
            timeout=120,
            check=True,
        )
    return pdf.read_bytes()


def probe_json(dom: str, pre_id: str):
    """The JSON a probe script left in ``<pre id="pre_id">`` of the rendered ``dom``
    (its HTML escapes undone); fails the test where the script did not run."""
    found = re.search(rf'<pre id="{pre_id}">(.*?)</pre>', dom, re.S)
    assert found, f"the probe script did not run (no <pre id={pre_id!r}>)"
    return json.loads(html.unescape(found.group(1)))


def run_probe(
    folder: Path, html_text: str, script: str, pre_id: str, size: str, head: str = ""
) -> tuple[object, str]:
    """``(probe JSON, log)``: ``html_text`` with ``script`` before ``</body>`` (and
    ``head`` after ``<head>``) written to ``folder``, opened at ``size``, and the JSON
    the script left in ``<pre id="pre_id">`` read back (:func:`probe_json`)."""
    text = html_text.replace("</body>", script + "</body>", 1)
    if head:
        text = text.replace("<head>", "<head>" + head, 1)
    page = folder / "probe.html"
    page.write_text(text, encoding="utf-8")
    dom, log = open_page(page, folder / "probe.png", size=size)
    return probe_json(dom, pre_id), log


def page_errors(log: str) -> list[str]:
    """Log lines that mean the page itself failed (script errors, resources not loaded)."""
    bad = ("Uncaught", "Failed to load resource", "ERR_", "Refused to", "Not allowed to load")
    return [line for line in log.splitlines() if "CONSOLE" in line or any(b in line for b in bad)]
