"""An interactive strip-log view of decoded cores: one self-contained HTML page.

Several wells side by side (depth downward), on a shared depth axis or each hung
on its own top (:func:`hang_by_default`; a checkbox switches), each with
the tracks of :func:`faciesseq.report.striplog.strip_log`: the facies column
(boxes in the scheme's colours, width by grain size where every bed's is
known, else by proximality rank), the decoded (Viterbi) tract column, the
tract posteriors stacked to 1, and the probability of each named surface at
every contact with the picks marked. The reader zooms and scrolls in depth
(wheel, drag, buttons or a depth range), hovers a bed for its numbers, and
switches tracks on and off. Beds held at the geologist's label (``decode
--keep-labels``) are hatched in the probability track, and their readout says so in
place of a probability of 1 that the model did not give.

The page is one file: style sheet and script inline, the data embedded as
JSON, drawn as inline SVG by plain JavaScript; nothing is fetched (a
Content-Security-Policy forbids it), so it opens the same offline. Text from
data or configuration reaches the page only as JSON (with ``<``, ``>`` and
``&`` escaped) and is put into the page as text, never as markup.
"""

from __future__ import annotations

import json
import math
from html import escape

import numpy as np
import pandas as pd

from faciesseq.interpretation import CoreInterpretation, Interpretation, held_beds
from faciesseq.report.striplog import (
    GRAIN_CLASSES,
    SURFACE_AXIS_END,
    _gaps,
    bed_widths,
    drawn_surfaces,
    facies_name,
    pick_label,
)
from faciesseq.report.style import (
    HELD_NOTE,
    facies_colours,
    held_ink,
    surface_colour,
    tract_colour,
)
from faciesseq.scheme import FaciesScheme, TractModel

__all__ = ["SVG_HELPERS", "page_html", "view_data", "view_html"]


def _number(value: object, digits: int = 10) -> float | None:
    """A float with ``digits`` significant digits, or None (JSON null) when not finite."""
    x = float(value)
    return float(f"{x:.{digits}g}") if math.isfinite(x) else None


def _numbers(values, digits: int = 10) -> list[float | None]:
    return [_number(v, digits) for v in np.asarray(values, dtype=float)]


def _contacts(core: CoreInterpretation) -> tuple[list[int], list[int]]:
    """Per bed, the index of the contact (row of ``boundaries``) at its top and at its
    base, or -1 where the bed meets a gap or the end of the core."""
    beds, bounds = core.beds, core.boundaries
    seg_b = beds["segment"].to_numpy() if "segment" in beds.columns else np.zeros(len(beds))
    at: dict[tuple[int, float], int] = {}
    if len(bounds):
        seg_c = (
            bounds["segment"].to_numpy() if "segment" in bounds.columns else np.zeros(len(bounds))
        )
        for k, (s, d) in enumerate(zip(seg_c, bounds["depth"].to_numpy(float), strict=True)):
            at[(int(s), round(float(d), 6))] = k
    top = [
        at.get((int(s), round(float(d), 6)), -1) for s, d in zip(seg_b, beds["top"], strict=True)
    ]
    base = [
        at.get((int(s), round(float(d), 6)), -1) for s, d in zip(seg_b, beds["base"], strict=True)
    ]
    return top, base


def _core_data(
    core: CoreInterpretation, scheme: FaciesScheme | None, held: bool
) -> dict[str, object]:
    """The page's data of one core; ``held``: with the beds held at the geologist's label
    (on every core of a page where some bed is)."""
    beds = core.beds
    if scheme is not None and len(beds):
        widths, measure = bed_widths(beds, scheme)
    else:
        widths, measure = np.ones(len(beds)), "none"
    top_contact, base_contact = _contacts(core)
    bounds = core.boundaries
    picks = core.picks if core.picks is not None else pd.DataFrame()
    pick_rows = []
    for p in picks.itertuples(index=False):
        depth = float(p.depth)
        pick_rows.append(
            {
                "surface": str(p.surface),
                "name": str(getattr(p, "name", "")),
                "depth": _number(depth),
                "probability": _number(p.probability, 4),
                "label": pick_label(str(p.surface), float(p.probability)),
                "depth_top": _number(getattr(p, "depth_top", depth)),
                "depth_base": _number(getattr(p, "depth_base", depth)),
            }
        )
    bed_data = {
        "top": _numbers(beds["top"]),
        "base": _numbers(beds["base"]),
        "facies": beds["facies"].astype(str).tolist(),
        "width": _numbers(widths, 4),
        "tract": beds["tract"].astype(str).tolist(),
        "p": [_numbers(beds[f"p_{t}"], 4) for t in core.tracts],
        "top_contact": top_contact,
        "base_contact": base_contact,
    }
    if held:
        bed_data["held"] = held_beds(beds).tolist()
    return {
        "name": str(core.core),
        "units": str(core.units),
        "measure": measure,
        "beds": bed_data,
        "contacts": {
            "depth": _numbers(bounds["depth"]) if len(bounds) else [],
            "p": [_numbers(bounds[f"p_{s}"], 4) if len(bounds) else [] for s in core.surfaces],
        },
        "gaps": [[_number(a), _number(b)] for a, b in (_gaps(beds) if len(beds) else [])],
        "picks": pick_rows,
    }


def _facies_legend(interpretation: Interpretation, scheme: FaciesScheme | None) -> list[dict]:
    present = list(
        dict.fromkeys(str(f) for core in interpretation for f in core.beds["facies"].astype(str))
    )
    ordered = [c for c in scheme.codes_by_rank if c in present] if scheme is not None else []
    ordered += [c for c in present if c not in ordered]
    colours = facies_colours(ordered, scheme)
    out = []
    for code in ordered:
        known = scheme is not None and code in scheme
        out.append(
            {
                "code": code,
                "name": facies_name(code, scheme[code].name) if known else "(not in scheme)",
                "colour": colours[code],
            }
        )
    return out


#: Cores hang on their own tops by default where the longest core spans less than
#: this share of the depth range of all cores on one axis: hung, the depth axis is
#: then at most half as long (cores of one field at 80-153 m and 310-349 m; cores
#: that all start near one depth stay on one axis, which hanging would not shorten).
HANG_BELOW = 0.5


def hang_by_default(ranges: list[tuple[float, float]]) -> bool:
    """Whether the view should hang every core on its own top: the cores' depth ranges
    ``(top, base)`` barely overlap, so that on one absolute depth axis the longest core
    spans less than :data:`HANG_BELOW` of the axis. One core never hangs."""
    ranges = [(a, b) for a, b in ranges if math.isfinite(a) and math.isfinite(b) and b > a]
    if len(ranges) < 2:
        return False
    union = max(b for _, b in ranges) - min(a for a, _ in ranges)
    return max(b - a for a, b in ranges) < HANG_BELOW * union


#: The page opens on a depth window as long as the median core where the depth axis
#: would be more than this many times longer (a 30 m core on a 174 m axis fills a
#: sixth of its column); the reader scrolls down or shows all.
OPEN_ON_MEDIAN_ABOVE = 2.0


def opening_window(ranges: list[tuple[float, float]], hang: bool) -> tuple[float, float]:
    """The depth window the view opens on, ``(top, base)`` in the depths of its axis
    (below each core's top where the cores hang): the whole axis, or where the axis is
    more than :data:`OPEN_ON_MEDIAN_ABOVE` times the median core's length, its first
    median core's length, so that most cores fill their columns at one depth scale.

    >>> opening_window([(0.0, 30.0), (0.0, 34.0), (0.0, 174.0)], hang=True)
    (0.0, 34.0)
    >>> opening_window([(420.0, 490.0), (2550.0, 2645.0)], hang=True)
    (0.0, 95.0)
    """
    ranges = [(a, b) for a, b in ranges if math.isfinite(a) and math.isfinite(b) and b > a]
    if not ranges:
        return (0.0, 1.0)
    top = 0.0 if hang else min(a for a, _ in ranges)
    base = max(b - a for a, b in ranges) if hang else max(b for _, b in ranges)
    median = float(np.median([b - a for a, b in ranges]))
    if base - top > OPEN_ON_MEDIAN_ABOVE * median:
        base = top + median
    return (top, base)


def view_data(
    interpretation: Interpretation,
    scheme: FaciesScheme | None,
    tract_model: TractModel,
    title: str | None = None,
) -> dict[str, object]:
    """The numbers and names the view draws, as a JSON-ready dict.

    Parameters
    ----------
    interpretation
        Decoded cores (beds, contacts and picks in depth order).
    scheme
        Facies scheme for colours, names and box widths; without one, facies
        are grey boxes of full width.
    tract_model
        Tract model for the tracts' and surfaces' names.
    title
        Page title; default ``"Decoded cores"``.

    Returns
    -------
    dict
        ``title``, ``checked``, ``labelled`` and ``note`` (whether the probabilities were
        checked against known tracts), ``units``, ``grain_classes``,
        ``tracts``, ``surfaces`` and ``facies`` (``code``, ``name``,
        ``colour``; a surface's ``drawn``: whether the strip log of some core draws
        it, :func:`faciesseq.report.striplog.drawn_surfaces`, the surfaces the legend
        lists and the surface track draws) and ``cores``: per core its beds (``top``, ``base``,
        ``facies``, ``width`` 0-1, ``tract``, ``p`` one list per tract,
        ``top_contact`` / ``base_contact`` indices into ``contacts``),
        ``contacts`` (``depth``, ``p`` one list per surface), ``gaps`` and
        ``picks`` (with ``label``, as the strip logs write it: ``SB > 0.99``);
        ``surface_axis_end``, the right end of the surface panel's probability
        axis (past 1, so that a pick at probability 1 shows whole); ``hang``:
        whether the page opens with every core hung on its own top
        (:func:`hang_by_default`; the reader switches between that and one
        absolute depth axis); ``window``: the depth window ``[top, base]`` it opens
        on (:func:`opening_window`). Where some bed was held at the geologist's label
        (:data:`~faciesseq.interpretation.CLAMPED`), every core's beds have ``held``
        (true or false per bed) and ``held`` gives the legend's ``note`` and the ``ink``
        of the hatching over each tract (:func:`~faciesseq.report.style.held_ink`);
        elsewhere neither key is there. Non-finite numbers are null.
    """
    tracts = tuple(interpretation.tracts)
    surfaces = tuple(interpretation.surfaces)
    tract_names = {t.code: t.name for t in tract_model.tracts}
    surface_names: dict[str, str] = {}
    for sf in tract_model.surfaces:
        surface_names.setdefault(sf.code, sf.name)
    units = sorted({str(c.units) for c in interpretation})
    held = bool(held_beds(interpretation.beds).any())
    cores = [_core_data(core, scheme, held) for core in interpretation if len(core.beds)]
    ranges = [
        (float(core.beds["top"].min()), float(core.beds["base"].max()))
        for core in interpretation
        if len(core.beds)
    ]
    hang = hang_by_default(ranges)
    drawn = {code for core in interpretation if len(core.beds) for code in drawn_surfaces(core)}
    data = {
        "title": title if title is not None else "Decoded cores",
        "checked": interpretation.probabilities_checked,
        "labelled": interpretation.tracts_labelled,
        "reference": interpretation.read_reference,
        "note": interpretation.probabilities_note,
        "units": units[0] if len(units) == 1 else ", ".join(units),
        "grain_classes": list(GRAIN_CLASSES),
        "surface_axis_end": SURFACE_AXIS_END,
        "tracts": [
            {"code": t, "name": tract_names.get(t, ""), "colour": tract_colour(t, tracts)}
            for t in tracts
        ],
        "surfaces": [
            {
                "code": s,
                "name": surface_names.get(s, ""),
                "colour": surface_colour(s, surfaces),
                "drawn": s in drawn,
            }
            for s in surfaces
        ],
        "facies": _facies_legend(interpretation, scheme),
        "cores": cores,
        "hang": hang,
        "window": list(opening_window(ranges, hang)),
    }
    if held:
        inks = [held_ink(tract_colour(t, tracts)) for t in tracts]
        data["held"] = {"note": HELD_NOTE, "ink": inks}
    return data


def script_json(data: object) -> str:
    """``data`` as JSON safe inside an HTML ``<script>`` element: ``<``, ``>``, ``&``
    and the JavaScript line separators escaped, so no text can close the element."""
    text = json.dumps(data, ensure_ascii=False, allow_nan=False, separators=(",", ":"))
    for char, code in (("<", "\\u003c"), (">", "\\u003e"), ("&", "\\u0026")):
        text = text.replace(char, code)
    return text.replace("\u2028", "\\u2028").replace("\u2029", "\\u2029")


def view_html(
    interpretation: Interpretation,
    scheme: FaciesScheme | None,
    tract_model: TractModel,
    title: str | None = None,
) -> str:
    """The interactive strip-log view of every decoded core, as one HTML page.

    Parameters
    ----------
    interpretation, scheme, tract_model, title
        As for :func:`view_data`.

    Returns
    -------
    str
        A complete HTML document: inline style sheet and script, the data as
        JSON (see :func:`view_data`), no external resource. Whether the
        probabilities were checked against known tracts is stated at the top.

    Notes
    -----
    The surface track shows, at every contact, the posterior probability that
    each named surface lies there (sum of the two-slice posteriors of the
    tract pairs mapped to it; Rabiner 1989, eq. 37, "A tutorial on hidden
    Markov models", Proc. IEEE 77:257-286), stacked: the surfaces at one
    contact are disjoint events.
    """
    data = view_data(interpretation, scheme, tract_model, title)
    return page_html(_BODY, str(data["title"]), _CSS, data, _script("held" in data))


def _script(held: bool) -> str:
    """The page's script; with the pieces that draw the beds held at the geologist's
    label only where some bed is, so that a page without any is the one it always was."""
    script = _JS.replace("@SVG@", SVG_HELPERS + (_HELD_FUNCTIONS if held else ""))
    for mark, piece in _HELD_CALLS.items():
        script = script.replace(mark, piece if held else "")
    return script


def page_html(body: str, title: str, css: str, data: object, script: str) -> str:
    """A self-contained page: a head forbidding every fetch, ``css`` inline, ``body``
    (where ``@TITLE@`` is the escaped title and ``@DATA@`` the JSON of ``data``),
    then ``script`` inline."""
    page = _HEAD + body
    return (
        page.replace("@TITLE@", escape(title))
        .replace("@CSS@", css)
        .replace("@DATA@", script_json(data))
        .replace("@JS@", script)
    )


#: Script helpers of both pages: SVG elements and text, and round tick steps.
SVG_HELPERS = r"""  function el(name, attrs, parent) {
    const node = document.createElementNS(NS, name);
    for (const k in attrs) node.setAttribute(k, attrs[k]);
    if (parent) parent.appendChild(node);
    return node;
  }
  function text(parent, x, y, str, cls, anchor) {
    const t = el("text", {x: x, y: y, "text-anchor": anchor || "start"}, parent);
    if (cls) t.setAttribute("class", cls);
    t.textContent = str;
    return t;
  }
  function niceStep(span, target) {
    const raw = span / target, mag = Math.pow(10, Math.floor(Math.log10(raw)));
    for (const m of [1, 2, 2.5, 5, 10]) if (m * mag >= raw) return m * mag;
    return 10 * mag;
  }
"""

_HEAD = """<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; \
style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>@TITLE@</title>
<style>@CSS@</style>
</head>
"""

_BODY = """<body>
<header>
<h1>@TITLE@</h1>
<p id="note" class="note"></p>
<div id="controls">
<span class="group"><button type="button" id="zoom-in" title="zoom in">+</button>\
<button type="button" id="zoom-out" title="zoom out">&minus;</button>\
<button type="button" id="up" title="scroll up">&uarr;</button>\
<button type="button" id="down" title="scroll down">&darr;</button>\
<button type="button" id="all" title="whole depth range">all</button></span>
<form id="range" class="group">depth <input id="top" type="number" step="any" \
aria-label="top depth"> to <input id="base" type="number" step="any" \
aria-label="base depth"> <span id="units"></span> <button type="submit">show</button></form>
<span class="group" id="tracks"></span>
<label class="group" title="each core drawn from its own top, with its own depth scale; \
else every core on one depth axis"><input type="checkbox" id="hang"> hang each core on \
its top</label>
<span class="hint">wheel: zoom &middot; drag: scroll &middot; hover a bed for its numbers</span>
</div>
</header>
<main>
<div id="wells"></div>
<aside id="legend"></aside>
</main>
<div id="tooltip" role="tooltip" hidden></div>
<script type="application/json" id="view-data">@DATA@</script>
<script>@JS@</script>
</body>
</html>
"""

_CSS = """
:root { --ink: #1d2327; --muted: #5b6770; --rule: #c9ced2; --accent: #2e6f62; }
* { box-sizing: border-box; }
body { margin: 0; font: 13px/1.35 "DejaVu Sans", "Helvetica Neue", Arial, sans-serif;
  color: var(--ink); background: #fff; }
header { padding: 0.5rem 1rem 0.3rem; border-bottom: 1px solid var(--rule); }
h1 { font-size: 1.2rem; margin: 0 0 0.25rem; }
.note { margin: 0 0 0.4rem; color: var(--muted); }
.note.unchecked { color: #7a2418; background: #fbf3ef; border-left: 4px solid #b84a3a;
  padding: 0.25rem 0.6rem; }
#controls { display: flex; flex-wrap: wrap; gap: 0.4rem 1.2rem; align-items: center; }
#controls .group { display: inline-flex; gap: 0.25rem; align-items: center; }
#controls button { font: inherit; min-width: 2rem; padding: 0.1rem 0.45rem; cursor: pointer; }
#controls input[type=number] { width: 6.5rem; font: inherit; }
#controls label { margin-right: 0.5rem; cursor: pointer; user-select: none; }
.hint { color: var(--muted); font-size: 0.85rem; }
main { display: flex; align-items: flex-start; }
#wells { flex: 1 1 auto; min-width: 0; display: flex; overflow-x: auto;
  padding: 0.3rem 0 0.5rem 0.8rem; }
#legend { flex: 0 0 16rem; padding: 0.5rem 0.8rem; border-left: 1px solid var(--rule);
  font-size: 12px; max-height: calc(100vh - 7rem); overflow-y: auto; }
#legend h2 { font-size: 0.85rem; margin: 0.6rem 0 0.25rem; }
#legend .part:first-child h2 { margin-top: 0; }
main.stacked { flex-direction: column; }
main.stacked #legend { flex: none; order: -1; width: 100%; max-height: none; display: flex;
  flex-wrap: wrap; gap: 0 2rem; border-left: 0; border-bottom: 1px solid var(--rule); }
main.stacked #legend .part { flex: 0 1 18rem; }
main.stacked #legend .part h2 { margin-top: 0; }
#legend ul { list-style: none; margin: 0; padding: 0; }
#legend li { display: flex; gap: 0.4rem; align-items: flex-start; margin: 0.12rem 0; }
#legend .swatch { flex: 0 0 1.1rem; height: 0.8rem; margin-top: 0.15rem;
  border: 1px solid #333; }
#legend .line { flex: 0 0 1.1rem; height: 3px; margin-top: 0.45rem; }
#legend code { font-weight: 600; font-family: inherit; }
.axis { position: sticky; left: 0; z-index: 2; background: #fff; flex: 0 0 auto; }
.well { flex: 0 0 auto; margin-right: 14px; }
.well svg, .axis svg { display: block; overflow: visible; }
.well svg { cursor: grab; touch-action: none; }
body.dragging, body.dragging .well svg { cursor: grabbing; }
svg text { font: 11px "DejaVu Sans", Arial, sans-serif; fill: var(--ink); }
svg text.head { font-weight: 600; font-size: 12.5px; }
svg text.small { font-size: 10px; fill: var(--muted); }
svg text.warn { font-size: 10px; fill: #b84a3a; }
#tooltip { position: fixed; z-index: 10; pointer-events: none; background: #fff;
  border: 1px solid #555; box-shadow: 0 2px 6px rgba(0,0,0,0.25); padding: 0.35rem 0.55rem;
  font-size: 12px; max-width: 22rem; }
#tooltip h3 { margin: 0 0 0.2rem; font-size: 0.9rem; }
#tooltip table { border-collapse: collapse; }
#tooltip td, #tooltip th { padding: 0 0.45rem 0 0; text-align: left; font-weight: normal;
  vertical-align: top; }
#tooltip td.num { text-align: right; font-variant-numeric: tabular-nums; }
#tooltip .sub { color: var(--muted); margin-top: 0.3rem; }
#tooltip .bar { display: inline-block; height: 0.6rem; vertical-align: middle; }
"""

_JS = r"""
"use strict";
(function () {
  const DATA = JSON.parse(document.getElementById("view-data").textContent);
  const NS = "http://www.w3.org/2000/svg";
  const TRACKS = [
    {key: "facies", label: "facies", width: 96},
    {key: "tract", label: "tract", width: 48},
    {key: "prob", label: "tract probability", width: 96},
    {key: "surf", label: "surface probability", width: 118},
  ];
  const GAP = 6, HEAD = 52, FOOT = 30, AXIS_W = 58;
  const shown = {facies: true, tract: true, prob: true, surf: true};
  const tracts = DATA.tracts, surfaces = DATA.surfaces;
  const faciesByCode = {};
  DATA.facies.forEach(f => { faciesByCode[f.code] = f; });

  let lo = Infinity, hi = -Infinity;
  DATA.cores.forEach(c => {
    c.beds.top.forEach(v => { if (v !== null && v < lo) lo = v; });
    c.beds.base.forEach(v => { if (v !== null && v > hi) hi = v; });
  });
  if (!isFinite(lo)) { lo = 0; hi = 1; }
  if (hi <= lo) hi = lo + 1;
  // each core's own top and base: the origin of its depth when cores hang on their tops
  const RANGES = DATA.cores.map(c => {
    const t = c.beds.top.filter(v => v !== null), b = c.beds.base.filter(v => v !== null);
    return [t.length ? Math.min(...t) : lo, b.length ? Math.max(...b) : hi];
  });
  let hang = !!DATA.hang;
  function fullRange() {
    if (!hang) return [lo, hi];
    return [0, Math.max(1e-9, ...RANGES.map(r => r[1] - r[0]))];
  }
  let FULL = fullRange();
  // the opening window: most cores fill their columns (DATA.window); "all" shows all
  const view = DATA.window ? {top: Math.max(FULL[0], DATA.window[0]),
    base: Math.min(FULL[1], DATA.window[1])} : {top: FULL[0], base: FULL[1]};
  let shift = 0;  // depth of the top of the core being drawn where cores hang, else 0
  const WELL_AXIS = 46;  // a hung core's own depth scale
  let plotH = 500;
  let dragState = null;  // {y, top, base} while the depth is dragged

@SVG@
  function fmt(x, digits) {
    if (x === null || x === undefined) return "n/a";
    return String(+x.toFixed(digits));
  }
  function prob(x) { return x === null || x === undefined ? "n/a" : x.toFixed(3); }
  // y of a core's depth (shift: its top where cores hang); depthAt gives the view's depth
  function y(depth) {
    return HEAD + (depth - shift - view.top) / (view.base - view.top) * plotH;
  }
  function depthAt(py) { return view.top + (py - HEAD) / plotH * (view.base - view.top); }


  // ---------------------------------------------------------------- note and controls
  const note = document.getElementById("note");
  if (DATA.checked && DATA.labelled) {
    note.textContent = DATA.note;
  } else {
    note.classList.add("unchecked");
    const names = DATA.reference ? "the model's priors and a reference" : "the model's priors";
    note.textContent = (DATA.checked ? "Tract names from " + names + ". "
      : "Probabilities not checked. ") + DATA.note;
  }
  const unitsLabel = document.getElementById("units");
  function showUnits() {
    unitsLabel.textContent = DATA.units + (hang ? " below each core's top" : "");
  }
  showUnits();
  const hangBox = document.getElementById("hang");
  hangBox.checked = hang;
  hangBox.addEventListener("change", () => {
    hang = hangBox.checked;
    showUnits();
    FULL = fullRange();
    setView(FULL[0], FULL[1]);
  });
  const trackBox = document.getElementById("tracks");
  TRACKS.forEach(t => {
    const label = document.createElement("label");
    const box = document.createElement("input");
    box.type = "checkbox"; box.checked = true; box.id = "show-" + t.key;
    box.addEventListener("change", () => { shown[t.key] = box.checked; draw(); });
    label.appendChild(box);
    label.appendChild(document.createTextNode(" " + t.label));
    trackBox.appendChild(label);
  });

  function setView(top, base) {
    const full = FULL[1] - FULL[0];
    let span = Math.max(Math.min(base - top, full), full / 2000);
    top = Math.min(Math.max(top, FULL[0]), FULL[1] - span);
    view.top = top; view.base = top + span;
    hideTip();
    draw();
  }
  function zoom(factor, centre) {
    const c = centre === undefined ? (view.top + view.base) / 2 : centre;
    setView(c - (c - view.top) * factor, c + (view.base - c) * factor);
  }
  function scroll(fraction) {
    const d = (view.base - view.top) * fraction;
    setView(view.top + d, view.base + d);
  }
  document.getElementById("zoom-in").onclick = () => zoom(0.5);
  document.getElementById("zoom-out").onclick = () => zoom(2);
  document.getElementById("up").onclick = () => scroll(-0.4);
  document.getElementById("down").onclick = () => scroll(0.4);
  document.getElementById("all").onclick = () => setView(FULL[0], FULL[1]);
  document.getElementById("range").addEventListener("submit", ev => {
    ev.preventDefault();
    const a = parseFloat(document.getElementById("top").value);
    const b = parseFloat(document.getElementById("base").value);
    if (isFinite(a) && isFinite(b) && a !== b) setView(Math.min(a, b), Math.max(a, b));
  });

  // ---------------------------------------------------------------- legend
  function legendList(title, items, kind) {
    const box = document.createElement("div"); box.className = "part";
    document.getElementById("legend").appendChild(box);
    const h = document.createElement("h2"); h.textContent = title; box.appendChild(h);
    const ul = document.createElement("ul"); box.appendChild(ul);
    items.forEach(it => {
      const li = document.createElement("li");
      const sw = document.createElement("span");
      sw.className = kind;
      sw.style.background = it.colour;
      if (it.pattern) sw.style.backgroundImage = it.pattern;
      li.appendChild(sw);
      const label = document.createElement("span");
      if (it.code) {
        const c = document.createElement("code"); c.textContent = it.code;
        label.appendChild(c); label.appendChild(document.createTextNode(" "));
      }
      label.appendChild(document.createTextNode(it.name));
      li.appendChild(label); ul.appendChild(li);
    });
  }
  const hatch = "repeating-linear-gradient(45deg, #b0b0b0 0 1px, #f0f0f0 1px 4px)";
  const widthNote = {grain_size: "width: grain size", rank: "width: proximality (landward wider)",
    none: "no facies scheme: width not drawn"};
  const measures = [...new Set(DATA.cores.map(c => c.measure))];
  legendList("facies (landward \u2192 basinward)", DATA.facies.concat(
    [{code: "", name: "gap (not described)", colour: "#f0f0f0", pattern: hatch}]), "swatch");
  const m = document.createElement("p"); m.className = "hint";
  m.textContent = measures.map(k => widthNote[k] || k).join("; ");
  document.querySelector("#legend .part").appendChild(m);
  legendList("systems tract", tracts, "swatch");@HELD_LEGEND@
  // only the surfaces some core's strip log draws (picked, or visible in a depth cell)
  legendList("surface", surfaces.filter(s => s.drawn).concat(
    [{code: "\u25c0", name: "pick: probability, uncertainty interval", colour: "#fff"}]), "line");

  // ---------------------------------------------------------------- drawing
  const wells = document.getElementById("wells");
  function visibleTracks() { return TRACKS.filter(t => shown[t.key]); }
  function wellWidth() {
    const w = visibleTracks().reduce((s, t) => s + t.width + GAP, 0);
    return Math.max(w - GAP, 60);
  }

  function drawAxis(parent) {
    const div = document.createElement("div"); div.className = "axis";
    const svg = el("svg", {width: AXIS_W, height: HEAD + plotH + FOOT}, div);
    text(svg, AXIS_W - 8, HEAD - 8, "depth (" + DATA.units + ")", "small", "end");
    el("line", {x1: AXIS_W - 1, x2: AXIS_W - 1, y1: HEAD, y2: HEAD + plotH, stroke: "#333"}, svg);
    const step = niceStep(view.base - view.top, plotH / 60);
    for (let d = Math.ceil(view.top / step) * step; d <= view.base + 1e-9; d += step) {
      const py = y(d);
      el("line", {x1: AXIS_W - 6, x2: AXIS_W - 1, y1: py, y2: py, stroke: "#333"}, svg);
      text(svg, AXIS_W - 8, py + 4, fmt(d, 3), null, "end");
    }
    parent.appendChild(div);
    return step;
  }

  function drawWell(core, ci, tickStep) {
    const div = document.createElement("div"); div.className = "well";
    shift = hang ? RANGES[ci][0] : 0;
    const xa = hang ? WELL_AXIS : 0;  // a hung core's depth scale, left of its tracks
    const W = wellWidth() + xa;
    const svg = el("svg", {width: W, height: HEAD + plotH + FOOT, "data-core": ci}, div);
    div.appendChild(svg);
    const defs = el("defs", {}, svg);
    const clipId = "clip-" + ci;
    el("rect", {x: -1, y: HEAD, width: W + 2, height: plotH}, el("clipPath", {id: clipId}, defs));
    const pat = el("pattern", {id: "gap-" + ci, width: 5, height: 5,
      patternUnits: "userSpaceOnUse", patternTransform: "rotate(45)"}, defs);
    el("rect", {width: 5, height: 5, fill: "#f0f0f0"}, pat);
    el("line", {x1: 0, y1: 0, x2: 0, y2: 5, stroke: "#b0b0b0", "stroke-width": 1}, pat);
    const origin = hang ? "top " + fmt(RANGES[ci][0], 3) + " " + core.units : "";
    // characters of the header that fit (beside the core's top where it hangs)
    const fits = Math.max(4, Math.floor(W / 8) - Math.ceil(origin.length * 0.8));
    const name = text(svg, 0, 15, core.name.length > fits
      ? core.name.slice(0, fits - 1) + "\u2026" : core.name, "head");
    const title = el("title", {}, name); title.textContent = core.name;
    if (hang) {
      text(svg, W, 15, origin, "small", "end");
      text(svg, xa - 6, HEAD - 8, core.units, "small", "end");
      el("line", {x1: xa - 2, x2: xa - 2, y1: HEAD, y2: HEAD + plotH, stroke: "#333"}, svg);
      const a = view.top + shift, b = view.base + shift;
      for (let d = Math.ceil(a / tickStep) * tickStep; d <= b + 1e-9; d += tickStep) {
        el("line", {x1: xa - 6, x2: xa - 2, y1: y(d), y2: y(d), stroke: "#333"}, svg);
        text(svg, xa - 8, y(d) + 4, fmt(d, 3), "small", "end");
      }
    }

    const beds = core.beds, n = beds.top.length;
    // beds in view (depth order): binary search on the tops
    let first = 0, last = n;
    { let a = 0, b = n; while (a < b) { const k = (a + b) >> 1;
        if (beds.base[k] <= view.top + shift) a = k + 1; else b = k; } first = a; }
    { let a = first, b = n; while (a < b) { const k = (a + b) >> 1;
        if (beds.top[k] < view.base + shift) a = k + 1; else b = k; } last = a; }

    let x = xa;
    const pickLines = [], pickLabels = [];
    visibleTracks().forEach(t => {
      const g = el("g", {"clip-path": "url(#" + clipId + ")", "data-track": t.key}, svg);
      text(svg, x, HEAD - 20, t.label, "small");
      if (t.key === "facies") {
        const cls = DATA.grain_classes;
        const sub = core.measure === "grain_size" ? "grain size \u2192"
          : core.measure === "rank" ? "landward wider" : "";
        text(svg, x, HEAD - 8, sub, "small");
        if (core.measure === "grain_size") {
          cls.forEach((c, k) => text(svg, x + (k + 1) / cls.length * t.width,
            HEAD + plotH + 12, c, "small", "end"));
        }
        for (let i = first; i < last; i++) {
          const f = faciesByCode[beds.facies[i]];
          const y0 = y(beds.top[i]), y1 = y(beds.base[i]);
          el("rect", {x: x, y: y0, width: Math.max(1, (beds.width[i] || 0.3) * t.width),
            height: Math.max(0.5, y1 - y0), fill: f ? f.colour : "#c8c8c8",
            stroke: "#333", "stroke-width": y1 - y0 > 3 ? 0.4 : 0, "data-bed": i,
            class: "bed"}, g);
        }
      } else if (t.key === "tract") {
        text(svg, x, HEAD - 8, "decoded", "small");
        for (let i = first; i < last; i++) {
          // runs of touching beds with one tract are drawn as one box
          let j = i;
          while (j + 1 < last && beds.tract[j + 1] === beds.tract[i]
                 && Math.abs(beds.top[j + 1] - beds.base[j]) < 1e-9) j++;
          const tr = tracts.find(q => q.code === beds.tract[i]);
          const y0 = y(beds.top[i]), y1 = y(beds.base[j]);
          el("rect", {x: x, y: y0, width: t.width, height: Math.max(0.5, y1 - y0),
            fill: tr ? tr.colour : "#999", "data-bed": i}, g);
          if (y1 - y0 > 14) {
            const lab = text(g, x + t.width / 2, (y0 + y1) / 2 + 4, beds.tract[i], null, "middle");
            lab.setAttribute("style", "font-size:9.5px;fill:" +
              (["HST", "FSST"].includes(beds.tract[i]) ? "#fff" : "#000"));
          }
          i = j;
        }
      } else if (t.key === "prob") {
        text(svg, x, HEAD - 8, DATA.checked ? "posterior, stacked" : "not checked",
          DATA.checked ? "small" : "warn");
        for (let i = first; i < last; i++) {
          const y0 = y(beds.top[i]), h = Math.max(0.5, y(beds.base[i]) - y0);
          let left = 0;
          tracts.forEach((tr, k) => {
            const p = beds.p[k][i] || 0;
            if (p > 0) el("rect", {x: x + left * t.width, y: y0, width: p * t.width, height: h,
              fill: tr.colour, "data-bed": i}, g);
            left += p;
          });
        }@HELD_TRACK@
        el("rect", {x: x, y: HEAD, width: t.width, height: plotH, fill: "none",
          stroke: "#888", "stroke-width": 0.5}, svg);
        [0, 0.5, 1].forEach(v => text(svg, x + v * t.width, HEAD + plotH + 12, String(v),
          "small", v === 0 ? "start" : v === 1 ? "end" : "middle"));
      } else if (t.key === "surf") {
        text(svg, x, HEAD - 8, DATA.checked ? "at each contact" : "not checked",
          DATA.checked ? "small" : "warn");
        el("rect", {x: x, y: HEAD, width: t.width, height: plotH, fill: "#fcfcfc",
          stroke: "#888", "stroke-width": 0.5}, g);
        const sx = t.width / DATA.surface_axis_end;  // pixels per unit of probability
        const cd = core.contacts.depth;
        for (let k = 0; k < cd.length; k++) {
          if (cd[k] < view.top + shift || cd[k] > view.base + shift) continue;
          const py = y(cd[k]);
          let left = 0;
          surfaces.forEach((s, j) => {
            const p = core.contacts.p[j][k] || 0;
            if (p > 0.001 && s.drawn) el("line", {x1: x + left * sx, x2: x + (left + p) * sx,
              y1: py, y2: py, stroke: s.colour, "stroke-width": 2.5, "data-contact": k}, g);
            left += p;
          });
        }
        [0, 0.5, 1].forEach(v => text(svg, x + v * sx, HEAD + plotH + 12, String(v),
          "small", v === 0 ? "start" : "middle"));
        const picks = core.picks.slice().sort((a, b) => a.depth - b.depth);
        let lastLabel = -Infinity;
        picks.forEach(p => {
          const s = surfaces.find(q => q.code === p.surface);
          const colour = s ? s.colour : "#555";
          const px = x + p.probability * sx, py = y(p.depth);
          el("line", {x1: px, x2: px, y1: y(p.depth_top), y2: y(p.depth_base),
            stroke: colour, "stroke-width": 1.2}, g);
          el("path", {d: "M" + px + "," + py + "l8,-5v10z", fill: colour, stroke: "#000",
            "stroke-width": 0.5}, g);
          pickLines.push([p.depth, colour]);
          if (py < HEAD || py > HEAD + plotH) return;  // the pick is out of view
          // above the pick's line, clear of the one above, below the tracks' heads; a
          // label pushed far from its pick by crowded ones above is left out (zoom in)
          const ly = Math.max(py - 4, lastLabel + 12, HEAD + 11);
          if (ly > py + 24 || ly > HEAD + plotH - 2) return;
          lastLabel = ly;
          const right = p.probability <= 0.55;
          pickLabels.push([right ? px + 11 : px - 4, ly, p.label, right ? "start" : "end",
            colour]);
        });
      }
      x += t.width + GAP;
    });
    // picks across the columns, gaps across every track, depth grid
    const over = el("g", {"clip-path": "url(#" + clipId + ")", "pointer-events": "none"}, svg);
    core.gaps.forEach(gp => {
      if (gp[1] < view.top || gp[0] > view.base) return;
      el("rect", {x: xa, y: y(gp[0]), width: W - xa, height: y(gp[1]) - y(gp[0]),
        fill: "url(#gap-" + ci + ")", stroke: "#b0b0b0", "stroke-width": 0.5}, over);
    });
    // pick labels over the gaps' hatching, never clipped under the tracks' heads
    const labels = el("g", {"pointer-events": "none", "class": "pick-labels"}, svg);
    pickLabels.forEach(([lx, ly, str, anchor, colour]) => {
      const lab = text(labels, lx, ly, str, null, anchor);
      lab.setAttribute("style", "font-size:10px;paint-order:stroke;stroke:#fff;" +
        "stroke-width:3px;fill:" + colour);
    });
    let colsW = 0, at = xa;  // right edge of the facies and tract columns
    visibleTracks().forEach(t => {
      if (t.key === "facies" || t.key === "tract") colsW = at + t.width + GAP;
      at += t.width + GAP;
    });
    pickLines.forEach(([d, colour]) => {
      if (colsW > 0) el("line", {x1: xa, x2: colsW - GAP, y1: y(d), y2: y(d), stroke: colour,
        "stroke-width": 1, "stroke-dasharray": "4 3"}, over);
    });
    const a = view.top + shift, b = view.base + shift;
    for (let d = Math.ceil(a / tickStep) * tickStep; d <= b + 1e-9; d += tickStep)
      el("line", {x1: xa, x2: W, y1: y(d), y2: y(d), stroke: "#000", "stroke-opacity": 0.07}, over);
    const mark = el("rect", {class: "hover", x: -2, width: W + 4, height: 0, fill: "none",
      stroke: "#000", "stroke-width": 1.2, visibility: "hidden", "pointer-events": "none"}, svg);
    if (!visibleTracks().length) text(svg, 0, HEAD + 20, "no track shown", "small");
    attachEvents(svg, core, mark, hang ? RANGES[ci][0] : 0);
    wells.appendChild(div);
  }

  // the legend beside the wells where they fit beside it, else above them
  function placeLegend() {
    const main = document.querySelector("main");
    const side = 16 * parseFloat(getComputedStyle(document.documentElement).fontSize);
    const one = wellWidth() + (hang ? WELL_AXIS : 0) + 14;
    const need = (hang ? 0 : AXIS_W) + DATA.cores.length * one;
    main.classList.toggle("stacked", need > main.clientWidth - side);
  }
  function draw() {
    placeLegend();
    const top = wells.getBoundingClientRect().top;
    plotH = Math.max(240, window.innerHeight - Math.max(top, 0) - HEAD - FOOT - 44);
    redraw();
  }
  let fitting = false;
  function redraw() {
    wells.textContent = "";
    const step = hang ? niceStep(view.base - view.top, plotH / 60) : drawAxis(wells);
    DATA.cores.forEach((c, i) => drawWell(c, i, step));
    document.getElementById("top").value = +view.top.toFixed(3);
    document.getElementById("base").value = +view.base.toFixed(3);
    // the page fits the window: shrink the plot by whatever still overflows
    const over = document.documentElement.scrollHeight - window.innerHeight;
    if (over > 0 && plotH > 240 && !fitting) {
      fitting = true; plotH = Math.max(240, plotH - over); redraw(); fitting = false;
    }
  }

  // ---------------------------------------------------------------- interaction
  const tip = document.getElementById("tooltip");
  function hideTip() { tip.hidden = true; }
  function bedAt(core, depth) {
    const b = core.beds; let a = 0, z = b.top.length;
    while (a < z) { const k = (a + z) >> 1; if (b.base[k] <= depth) a = k + 1; else z = k; }
    return a < b.top.length && b.top[a] <= depth ? a : -1;
  }
  function row(table, cells, colour) {
    const tr = document.createElement("tr");
    cells.forEach((c, k) => {
      const td = document.createElement("td");
      if (k > 0 && /^[-\d.]/.test(c)) td.className = "num";
      td.textContent = c; tr.appendChild(td);
    });
    if (colour !== undefined) {
      const td = document.createElement("td");
      const bar = document.createElement("span"); bar.className = "bar";
      bar.style.background = colour.colour;
      bar.style.width = Math.round(60 * (colour.p || 0)) + "px";
      td.appendChild(bar); tr.appendChild(td);
    }
    table.appendChild(tr);
  }
  function showTip(core, i, ev) {
    const b = core.beds, u = core.units;
    tip.textContent = "";
    const h = document.createElement("h3");
    h.textContent = core.name; tip.appendChild(h);
    const t = document.createElement("table"); tip.appendChild(t);
    row(t, ["top", fmt(b.top[i], 3) + " " + u]);
    row(t, ["base", fmt(b.base[i], 3) + " " + u]);
    row(t, ["thickness", fmt(b.base[i] - b.top[i], 3) + " " + u]);
    const f = faciesByCode[b.facies[i]];
    row(t, ["facies", b.facies[i] + (f && f.name ? " \u2013 " + f.name : "")]);
    const tr = tracts.find(q => q.code === b.tract[i]);
    row(t, ["tract", b.tract[i] + (tr && tr.name ? " \u2013 " + tr.name : "")]);
    const sub = document.createElement("div"); sub.className = "sub";
    sub.textContent = "tract probability" + (DATA.checked ? "" : " (not checked)");
    tip.appendChild(sub);
    const pt = document.createElement("table"); tip.appendChild(pt);@HELD_TIP@
    tracts.forEach((q, k) => row(pt, [q.code, prob(b.p[k][i])], {colour: q.colour, p: b.p[k][i]}));
    [["top", b.top_contact[i], b.top[i]], ["base", b.base_contact[i], b.base[i]]].forEach(c => {
      const s = document.createElement("div"); s.className = "sub";
      if (c[1] < 0) {
        s.textContent = "surface at " + c[0] + " (" + fmt(c[2], 3) + " " + u +
          "): no contact (gap or end of core)";
        tip.appendChild(s); return;
      }
      s.textContent = "surface probability at " + c[0] + " contact (" + fmt(c[2], 3) + " " +
        u + ")";
      tip.appendChild(s);
      const st = document.createElement("table"); tip.appendChild(st);
      surfaces.forEach((q, k) => {
        const p = core.contacts.p[k][c[1]];
        const picked = core.picks.some(pk => pk.surface === q.code &&
          Math.abs(pk.depth - c[2]) < 1e-6);
        row(st, [q.code + (picked ? " (picked)" : ""), prob(p)], {colour: q.colour, p: p});
      });
    });
    tip.hidden = false;
    const r = tip.getBoundingClientRect();
    let left = ev.clientX + 16, top = ev.clientY + 12;
    if (left + r.width > window.innerWidth - 4) left = ev.clientX - r.width - 16;
    if (top + r.height > window.innerHeight - 4) top = window.innerHeight - r.height - 4;
    tip.style.left = Math.max(4, left) + "px";
    tip.style.top = Math.max(4, top) + "px";
  }

  function attachEvents(svg, core, mark, origin) {
    function local(ev) {
      const r = svg.getBoundingClientRect();
      return ev.clientY - r.top;
    }
    svg.addEventListener("mousemove", ev => {
      if (dragState) return;
      shift = origin;
      const attr = ev.target.getAttribute && ev.target.getAttribute("data-bed");
      const py = local(ev);
      const i = attr !== null && attr !== undefined ? +attr
        : py >= HEAD && py <= HEAD + plotH ? bedAt(core, depthAt(py) + origin) : -1;
      if (i < 0) { hideTip(); mark.setAttribute("visibility", "hidden"); return; }
      mark.setAttribute("y", y(core.beds.top[i]));
      mark.setAttribute("height", Math.max(1, y(core.beds.base[i]) - y(core.beds.top[i])));
      mark.setAttribute("visibility", "visible");
      showTip(core, i, ev);
    });
    svg.addEventListener("mouseleave", () => {
      hideTip(); mark.setAttribute("visibility", "hidden");
    });
    svg.addEventListener("wheel", ev => {
      ev.preventDefault();
      const py = local(ev);
      const centre = py >= HEAD && py <= HEAD + plotH ? depthAt(py) : undefined;
      zoom(ev.deltaY > 0 ? 1.25 : 0.8, centre);
    }, {passive: false});
  }
  // a drag continues over other wells and ends anywhere
  wells.addEventListener("mousedown", ev => {
    const svg = ev.target.closest && ev.target.closest(".well svg");
    if (!svg || ev.button !== 0) return;
    dragState = {y: ev.clientY, top: view.top, base: view.base};
    document.body.classList.add("dragging");
    hideTip();
    ev.preventDefault();
  });
  window.addEventListener("mousemove", ev => {
    if (!dragState) return;
    const d = (ev.clientY - dragState.y) / plotH * (dragState.base - dragState.top);
    setView(dragState.top - d, dragState.base - d);
  });
  window.addEventListener("mouseup", () => {
    dragState = null;
    document.body.classList.remove("dragging");
  });
  window.addEventListener("resize", draw);
  draw();
})();
"""

#: Script of the beds held at the geologist's label (``decode --keep-labels``): hatched
#: over their tract in the probability track (one pattern per tract and core, in the ink
#: of ``DATA.held.ink``), the readout without the model's probability, the legend's line.
_HELD_FUNCTIONS = r"""  function drawHeld(core, defs, g, ci, x, width, first, last) {
    const beds = core.beds;
    for (let i = first; i < last; i++) {
      if (!beds.held[i]) continue;
      const k = Math.max(0, tracts.findIndex(q => q.code === beds.tract[i]));
      const id = "held-" + ci + "-" + k;
      if (!defs.querySelector("#" + id)) {
        const pat = el("pattern", {id: id, width: 6, height: 6,
          patternUnits: "userSpaceOnUse", patternTransform: "rotate(-45)"}, defs);
        el("line", {x1: 0, y1: 0, x2: 0, y2: 6, stroke: DATA.held.ink[k],
          "stroke-width": 1.6}, pat);
      }
      const y0 = y(beds.top[i]), h = Math.max(0.5, y(beds.base[i]) - y0);
      el("rect", {x: x, y: y0, width: width, height: h, fill: "url(#" + id + ")",
        "data-bed": i, class: "held"}, g);
    }
  }
  function heldTip(b, i, sub, pt) {
    if (!b.held[i]) return;
    sub.textContent = "tract probability: none from the model \u2013 held at the " +
      "geologist's label";
    pt.hidden = true;  // the model gave no probability: the label holds the bed
  }
  function heldLegend() {
    const parts = document.querySelectorAll("#legend .part");
    const li = document.createElement("li"); li.className = "held";
    const sw = document.createElement("span"); sw.className = "swatch";
    sw.style.background = "repeating-linear-gradient(45deg, #1d2327 0 1.2px, #fff 1.2px 4.5px)";
    li.appendChild(sw);
    const label = document.createElement("span");
    label.textContent = DATA.held.note + " (a probability of 1 from the label, not the model)";
    li.appendChild(label);
    parts[parts.length - 1].querySelector("ul").appendChild(li);
  }
"""

#: Where the page's script calls them (empty where no bed is held).
_HELD_CALLS = {
    "@HELD_TRACK@": "\n        drawHeld(core, defs, g, ci, x, t.width, first, last);",
    "@HELD_TIP@": "\n    heldTip(b, i, sub, pt);",
    "@HELD_LEGEND@": "\n  heldLegend();",
}
