"""The HTML appendix in a real browser: headless Chromium (Debian package ``chromium``).

Skipped, with a message, where Chromium is not installed; .ci/run installs it.
"""

import re

import pytest
from _chromium import CHROMIUM, open_page, page_errors, print_pdf
from _synthetic import SHOREFACE, synthetic_coreset, synthetic_interpretation
from PIL import Image

from faciesseq.markov import analyse
from faciesseq.report.appendix import build_appendix, write_appendix
from faciesseq.scheme import default_tract_model, load_scheme

pytestmark = [
    pytest.mark.chromium,
    pytest.mark.skipif(
        CHROMIUM is None, reason="chromium not installed (apt-get install chromium)"
    ),
]


def test_appendix_opens_in_chromium_without_errors(tmp_path):
    model = default_tract_model()
    scheme = load_scheme(SHOREFACE)
    interp = synthetic_interpretation(model, names=("W-1", "<b>bold</b>"))
    cores = synthetic_coreset(interp)
    report = analyse(cores, scheme=scheme)
    appendix = build_appendix(cores, scheme, model, markov=report, interpretation=interp)
    out = write_appendix(appendix, tmp_path / "app", latex=False)
    shot = tmp_path / "shot.png"
    dom, log = open_page(out / "appendix.html", shot)
    assert page_errors(log) == []
    # the browser built the whole document: every section heading and every table
    for k in range(1, 6):
        assert f'id="sec-{k}"' in dom
    assert dom.count("<table") == len([t for t in appendix.tables() if t.shown])
    assert dom.count("<img") == len(appendix.figures())
    assert dom.count("<iframe") == 1  # the interactive view, its script errors in the log
    assert "&lt;b&gt;bold&lt;/b&gt;" in dom and "<b>bold</b>" not in dom
    with Image.open(shot) as img:
        assert img.size == (1200, 2000)
        colours = img.convert("L").getextrema()
    assert colours[0] < 60 < 200 < colours[1]  # text on a light page, not a blank image
    # printable: the print style sheet gives A4 pages, each section starting a page
    pdf = print_pdf(out / "appendix.html", tmp_path / "appendix.pdf")
    assert pdf[:4] == b"%PDF"
    pages = len(re.findall(rb"/Type\s*/Page[^s]", pdf))
    assert pages >= 6  # title and contents, then five sections
    boxes = re.findall(rb"/MediaBox \[0 0 ([\d.]+) ([\d.]+)\]", pdf)
    assert len(boxes) == pages
    # A4 is 595 x 842 points (ISO 216)
    assert all(abs(float(w) - 595) < 1 and abs(float(h) - 842) < 1 for w, h in boxes)
