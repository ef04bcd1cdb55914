"""The correlation sections as an interactive page (``correlate --view``,
``faciesseq.report.section_view``): embedded numbers, escaping, Chromium."""

from __future__ import annotations

import itertools
import json
import re
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

sys.path.insert(0, str(Path(__file__).parent))
from _chromium import CHROMIUM, page_errors, run_probe

from faciesseq.correlation import correlate
from faciesseq.report.section_view import section_view_data, section_view_html

NEEDS_CHROMIUM = pytest.mark.skipif(
    CHROMIUM is None, reason="chromium not installed (apt-get install chromium)"
)
HOSTILE = "W<img src=x onerror=alert(1)>"
TRACTS = ("HST", "FSST", "LST", "TST")


def _section(names=("W-1", "W-2", "W-3")):
    """Invented wells: two cycles each, thickening basinward; picks at the tract changes."""
    beds, picks, extents = [], [], {}
    for w, name in enumerate(names):
        thickness = 30.0 + 6.0 * w
        extents[name] = (0.0, thickness)
        edges = np.linspace(0.0, thickness, 9)
        order = ["TST", "LST", "FSST", "HST", "TST", "LST", "FSST", "HST"]  # depth order
        for k, (top, base) in enumerate(itertools.pairwise(edges)):
            beds.append({"core": name, "top": top, "base": base, "tract": order[k]})
        for k in range(1, 8):
            upper, lower = order[k - 1], order[k]
            kind = {("HST", "TST"): "MFS", ("LST", "FSST"): "SB"}.get((upper, lower))
            if kind:
                picks.append(
                    {
                        "core": name,
                        "surface": kind,
                        "depth": edges[k],
                        "probability": 0.8 + 0.05 * w,
                    }
                )
    wells = pd.DataFrame({"core": list(names), "section": "dip", "position": [0.0, 7.5, 15.0]})
    return correlate(pd.DataFrame(picks), extents, wells), pd.DataFrame(beds)


def _embedded(html: str) -> dict:
    found = re.search(r'<script type="application/json" id="section-data">(.*?)</script>', html)
    return json.loads(found.group(1))


def test_page_embeds_every_tie_with_depths_probabilities_and_confidence():
    corr, beds = _section()
    data = section_view_data(corr, beds, TRACTS, datum="MFS", units="m")
    (section,) = data["sections"]
    assert [w["core"] for w in section["wells"]] == ["W-1", "W-2", "W-3"]
    assert len(section["ties"]) == len(corr.ties) > 0
    for tie, row in zip(section["ties"], corr.ties.itertuples(index=False)):
        assert tie["depth"] == pytest.approx([row.depth_left, row.depth_right])
        assert tie["confidence"] == pytest.approx(row.confidence)
        # the pick probabilities of the two wells, from the correlated picks
        assert tie["p"][0] == pytest.approx(0.8 + 0.05 * ["W-1", "W-2"].index(row.core_left))
    # touching beds of one tract are one box; every well keeps its full depth range
    for w in section["wells"]:
        assert w["top"][0] == 0.0 and all(a != b for a, b in itertools.pairwise(w["tract"]))
    assert section["datum"].startswith("depth below MFS-")
    assert "hypothesis" in data["caption"]


def test_page_is_self_contained_and_escapes_names():
    corr, beds = _section(names=("W-1", HOSTILE, "W-3"))
    html = section_view_html(corr, beds, TRACTS, title="<b>Section</b>")
    assert "Content-Security-Policy" in html and "default-src 'none'" in html
    assert not re.search(r"(src|href)\s*=\s*[\"']?(https?:|//)", html)
    assert "<img" not in html and "<b>Section</b>" not in html
    assert [w["core"] for w in _embedded(html)["sections"][0]["wells"]][1] == HOSTILE


#: Run after the page's script: hover the first tie and a bed; results into the DOM.
_PROBE = """<script>
(function () {
  const out = {errors: window.__errors};
  const tie = document.querySelector('[data-tie="0"]');
  const r = tie.getBoundingClientRect();
  tie.dispatchEvent(new MouseEvent("mousemove",
    {bubbles: true, clientX: r.left + r.width / 2, clientY: r.top + r.height / 2}));
  out.tie = document.getElementById("tooltip").innerText;
  const bed = document.querySelector('[data-core="W-2"] [data-bed="1"]');
  bed.dispatchEvent(new MouseEvent("mousemove", {bubbles: true, clientX: 50, clientY: 50}));
  out.bed = document.getElementById("tooltip").innerText;
  out.wells = document.querySelectorAll("[data-core]").length;
  out.lines = document.querySelectorAll("[data-tie]").length;
  const pre = document.createElement("pre");
  pre.id = "probe"; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>"""
_HOOK = """<script>
window.__errors = [];
window.addEventListener("error", e => window.__errors.push(String(e.message)));
console.error = (...a) => window.__errors.push(a.join(" "));
</script>"""


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_section_page_opens_in_chromium_and_hover_shows_the_tie(tmp_path):
    corr, beds = _section()
    html = section_view_html(corr, beds, TRACTS)
    out, log = run_probe(tmp_path, html, _PROBE, "probe", "1400,900", head=_HOOK)
    assert page_errors(log) == []
    assert out["errors"] == []
    assert out["wells"] == 3 and out["lines"] == len(corr.ties)
    tie = corr.ties.iloc[0]
    assert tie["surface_id"] in out["tie"] and tie["surface"] in out["tie"]
    assert (
        f"{tie['depth_left']:.2f} m" in out["tie"] and f"{tie['depth_right']:.2f} m" in out["tie"]
    )
    assert f"{tie['confidence']:.3f}" in out["tie"]
    assert "p 0.800" in out["tie"]  # the pick probability in W-1
    w2 = beds[beds["core"] == "W-2"].sort_values("top").iloc[1]
    assert out["bed"].startswith("W-2") and w2["tract"] in out["bed"]
    assert f"{w2['top']:.2f} m" in out["bed"]


@pytest.mark.parametrize("surface_order", [("BSFR", "SB", "MRS", "MFS"), ("MFS", "MRS", "SB")])
def test_page_legend_lists_surfaces_in_the_tract_models_order_as_the_figure(surface_order):
    # the page listed its surfaces in the order they first appeared among the ties
    from faciesseq.report.section import surface_legend_order

    corr, beds = _section()
    data = section_view_data(corr, beds, TRACTS, surface_order=surface_order)
    codes = [s["code"] for s in data["surfaces"]]
    assert codes == [k for k in surface_order if k in ("MFS", "SB")]
    assert codes == surface_legend_order(corr, "dip", surface_order)
    html = section_view_html(corr, beds, TRACTS, surface_order=surface_order)
    assert [s["code"] for s in _embedded(html)["surfaces"]] == codes


#: Run after the page's script: the boxes of the depth axis' labels (anchored at their
#: end, left of the axis) and of the wells' names, into the DOM.
_BOXES = """<script>
(function () {
  const names = new Set(JSON.parse(document.getElementById("section-data").textContent)
    .sections[0].wells.map(w => w.core));
  const svg = document.querySelector("svg[data-section]");
  const out = {axis: [], wells: []};
  svg.querySelectorAll("text").forEach(t => {
    const b = t.getBoundingClientRect(), box = [b.left, b.top, b.right, b.bottom];
    if (t.getAttribute("transform")) return;  // the rotated axis title
    if (names.has(t.textContent)) out.wells.push(box);
    else if (t.getAttribute("text-anchor") === "end") out.axis.push(box);
  });
  const pre = document.createElement("pre");
  pre.id = "boxes"; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>"""


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_a_long_well_name_is_not_drawn_over_the_depth_axis_labels(tmp_path):
    # the first well's name, centred over its column next to the depth axis, was drawn
    # over the depth labels and the units where it was wider than the column
    corr, beds = _section(names=("Quillerby North 1", "W-2", "W-3"))
    html = section_view_html(corr, beds, TRACTS)
    boxes, log = run_probe(tmp_path, html, _BOXES, "boxes", "1400,900")
    assert page_errors(log) == []
    assert len(boxes["wells"]) == 3 and len(boxes["axis"]) >= 3

    def overlap(a, b):
        return min(a[2], b[2]) > max(a[0], b[0]) and min(a[3], b[3]) > max(a[1], b[1])

    covered = [(w, a) for w in boxes["wells"] for a in boxes["axis"] if overlap(w, a)]
    assert covered == []


def _crossing_section():
    """Four wells 10 km apart: MFS in all four, SB from W-B to W-D, MRS only in W-C and
    W-D; the surfaces 0.3 m apart in 20 m of core, so that their ids in W-D would
    overlap where each stood at its own depth."""
    depths = {
        "W-A": {"MFS": 10.5},
        "W-B": {"SB": 10.0, "MFS": 10.6},
        "W-C": {"SB": 10.1, "MRS": 10.4, "MFS": 10.7},
        "W-D": {"SB": 10.2, "MRS": 10.5, "MFS": 10.8},
    }
    picks = pd.DataFrame(
        [
            {"core": core, "surface": kind, "depth": depth, "probability": 0.9}
            for core, surfaces in depths.items()
            for kind, depth in surfaces.items()
        ]
    )
    wells = pd.DataFrame(
        {"core": list(depths), "section": "dip", "position": [0.0, 10.0, 20.0, 30.0]}
    )
    extents = {core: (0.0, 20.0) for core in depths}
    beds = pd.DataFrame(
        [
            {"core": c, "top": top, "base": top + 10.0, "tract": t}
            for c in depths
            for top, t in ((0.0, "HST"), (10.0, "TST"))
        ]
    )
    return correlate(picks, extents, wells), beds


#: Run after the page's script: the boxes of the wells' columns (their outlines) and of
#: every text naming a surface id, into the DOM.
_LABEL_BOXES = """<script>
(function () {
  const svg = document.querySelector("svg[data-section]");
  const out = {wells: {}, labels: []};
  svg.querySelectorAll("[data-core]").forEach(g => {
    const b = g.lastElementChild.getBoundingClientRect();
    out.wells[g.getAttribute("data-core")] = [b.left, b.top, b.right, b.bottom];
  });
  const frame = svg.getBoundingClientRect();
  out.frame = [frame.left, frame.top, frame.right, frame.bottom];
  svg.querySelectorAll("text").forEach(t => {
    if (!/^(MFS|SB|MRS)-1$/.test(t.textContent)) return;
    const b = t.getBoundingClientRect();
    out.labels.push([t.textContent, b.left, b.top, b.right, b.bottom]);
  });
  const pre = document.createElement("pre");
  pre.id = "labels"; pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
})();
</script>"""


def test_page_names_a_surface_at_the_wells_the_section_figure_names_it():
    # the same wells as the figure's rule (report.section.label_wells): the first and
    # the last well of a surface reaching three wells or more, else the last
    corr, beds = _crossing_section()
    (section,) = section_view_data(corr, beds, TRACTS, datum="depth")["sections"]
    beside = {}
    for label in section["labels"]:
        beside.setdefault(label["id"], []).append(label["core"])
    assert {k: sorted(v) for k, v in beside.items()} == {
        "dip:MFS-1": ["W-A", "W-D"],
        "dip:SB-1": ["W-B", "W-D"],
        "dip:MRS-1": ["W-D"],
    }


@pytest.mark.chromium
@NEEDS_CHROMIUM
def test_page_names_a_surface_beside_its_first_and_last_well_without_overlaps(tmp_path):
    # the page named each surface only right of its last well, while the section figure
    # names one reaching three wells or more right of its first well as well
    corr, beds = _crossing_section()
    html = section_view_html(corr, beds, TRACTS, datum="depth")
    boxes, log = run_probe(tmp_path, html, _LABEL_BOXES, "labels", "1400,900")
    assert page_errors(log) == []
    wells = sorted(boxes["wells"].items(), key=lambda item: item[1][0])
    beside = {}
    for text, left, _, _, _ in boxes["labels"]:
        # the well whose column ends nearest left of the id
        well = max((w for w in wells if w[1][2] <= left), key=lambda w: w[1][2])
        beside.setdefault(text, []).append(well[0])
    assert {k: sorted(v) for k, v in beside.items()} == {
        "MFS-1": ["W-A", "W-D"],
        "SB-1": ["W-B", "W-D"],
        "MRS-1": ["W-D"],
    }

    def overlap(a, b):
        return min(a[2], b[2]) > max(a[0], b[0]) and min(a[3], b[3]) > max(a[1], b[1])

    labels = [box[1:] for box in boxes["labels"]]
    crossed = [(a, b) for k, a in enumerate(labels) for b in labels[k + 1 :] if overlap(a, b)]
    assert crossed == []
    frame = boxes["frame"]
    assert all(frame[1] <= box[1] and box[3] <= frame[3] for box in labels)
