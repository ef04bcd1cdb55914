"""The correlation sections as one self-contained interactive HTML page.

One panel per section: wells side by side at their distance along the section,
hung on a datum (:func:`faciesseq.report.section.hang_section`), each a decoded
tract column; correlation lines from well to well (dashed where doubtful) and
the tracts shaded between successive ties. Hovering a line shows the tie: its
correlated surface, the depth and pick probability in both wells, the tie's
confidence; hovering a well shows the bed's depth and tract.

Like the strip-log view (:mod:`faciesseq.report.view`) the page fetches nothing
(a Content-Security-Policy forbids it): style sheet and script inline, the
data embedded as JSON, drawn as inline SVG; text from data reaches the page
only as JSON and is put in as text, never as markup.
"""

from __future__ import annotations

import pandas as pd

from faciesseq.report.section import (
    CAPTION,
    distance_label,
    hang_section,
    hanging_datum,
    label_wells,
    section_heading,
    surface_legend_order,
    tract_bands,
)
from faciesseq.report.style import surface_colour, tract_colour
from faciesseq.report.view import SVG_HELPERS, _number, _numbers, page_html

__all__ = ["section_view_data", "section_view_html"]


def _runs(column: pd.DataFrame) -> pd.DataFrame:
    """Touching beds of one tract merged into one box (``top``, ``base``, ``tract``)."""
    top = column["top"].to_numpy(float)
    base = column["base"].to_numpy(float)
    tract = column["tract"].astype(str).to_numpy()
    new = [i for i in range(1, len(top)) if tract[i] != tract[i - 1] or top[i] - base[i - 1] > 1e-9]
    start = [0, *new]
    stop = [*new, len(top)]
    return pd.DataFrame(
        {"top": top[start], "base": base[[k - 1 for k in stop]], "tract": tract[start]}
    )


def _position_unit(label: str) -> str:
    """The unit a distance label names in brackets (``km``), or ``""``."""
    if label.endswith(")") and "(" in label:
        unit = label.rsplit("(", 1)[1][:-1]
        return unit if len(unit) <= 3 else ""
    return ""


def _section_data(correlation, section: str, tracts: pd.DataFrame, datum: str) -> dict:
    wells = correlation.wells[correlation.wells["section"] == section]
    ties = correlation.ties[correlation.ties["section"] == section]
    picks = correlation.picks[correlation.picks["section"] == section]
    hanging = hang_section(
        correlation, section, hanging_datum(correlation, section, datum)[0], tracts
    )
    shift = hanging.shift
    names = list(wells["core"])
    columns = {c: tracts[tracts["core"] == c].sort_values("top") for c in names}
    boxes = {c: _runs(columns[c]) for c in names}
    probability = {
        (p.core, round(float(p.depth), 6)): float(p.probability)
        for p in picks.itertuples(index=False)
    }
    return {
        "name": str(section),
        "heading": section_heading(section),
        "datum": hanging.label,
        "unhung": list(hanging.unhung),
        "hanging_note": hanging.note,
        "wells": [
            {
                "core": str(c),
                "position": _number(p),
                "shift": _number(shift[c]),
                "top": _numbers(boxes[c]["top"]),
                "base": _numbers(boxes[c]["base"]),
                "tract": [str(t) for t in boxes[c]["tract"]],
            }
            for c, p in zip(names, wells["position"])
        ],
        "ties": [
            {
                "id": str(t.surface_id),
                "surface": str(t.surface),
                "left": str(t.core_left),
                "right": str(t.core_right),
                "depth": _numbers([t.depth_left, t.depth_right]),
                "p": _numbers(
                    [
                        probability.get((t.core_left, round(float(t.depth_left), 6)), float("nan")),
                        probability.get(
                            (t.core_right, round(float(t.depth_right), 6)), float("nan")
                        ),
                    ]
                ),
                "confidence": _number(t.confidence),
                "doubtful": bool(t.doubtful),
            }
            for t in ties.itertuples(index=False)
        ],
        "bands": [
            {"left": a, "right": b, "depth": _numbers(depths), "tract": code}
            for a, b, depths, code in tract_bands(ties, columns, names)
        ],
        "labels": [
            {
                "id": str(sid),
                "surface": str(well["surface"]),
                "core": str(well["core"]),
                "depth": _number(well["depth"]),
            }
            for sid, part in picks.groupby("surface_id")
            for well in label_wells(part)
        ],
    }


def section_view_data(
    correlation,
    tracts: pd.DataFrame,
    tract_order: tuple[str, ...],
    datum: str = "MFS",
    units: str = "m",
    position_label: str = "distance",
    note: str = "",
    surface_order: tuple[str, ...] = (),
) -> dict:
    """The numbers and names the section page draws, as a JSON-ready dict.

    Parameters
    ----------
    correlation
        A :class:`faciesseq.correlation.Correlation`.
    tracts
        Decoded tract column of every core: ``core``, ``top``, ``base``, ``tract``.
    tract_order
        Tract codes in the tract model's order (colours, legend).
    datum
        See :func:`faciesseq.report.section.hang_section`.
    units, position_label
        Depth units and the label of the position axis.
    note
        Whether the probabilities were checked (one line).
    surface_order
        Surface codes in the tract model's order (``Interpretation.surfaces``): the
        legend lists the tied surfaces in it, as the section figures do
        (:func:`faciesseq.report.section.surface_legend_order`).

    Returns
    -------
    dict
        ``units``, ``position_label``, ``caption``, ``note``, ``tracts`` and
        ``surfaces`` (``code``, ``colour``) and ``sections``: per section its
        ``name``, ``datum`` label, ``unhung`` (the wells not hung on the datum
        surface), ``hanging_note`` (:attr:`~faciesseq.report.section.Hanging.note`: the
        wells hung through another surface and those not hung, or empty), ``wells``
        (``core``, ``position``, ``shift`` the datum depth, the tract column ``top``,
        ``base``, ``tract`` with touching beds of one tract merged),
        ``ties`` (``id``, ``surface``, ``left``, ``right``, ``depth`` and pick
        probability ``p`` in both wells, ``confidence``, ``doubtful``) and
        ``bands`` (tract shading between ties) and ``labels``, the wells each
        correlated surface is named beside (``id``, ``surface``, ``core``, ``depth``;
        :func:`faciesseq.report.section.label_wells`, as in the section figure).
    """
    sections = sorted(correlation.wells["section"].unique())
    kinds = surface_legend_order(correlation, None, surface_order)
    return {
        "units": units,
        "position_label": distance_label(position_label),
        "position_unit": _position_unit(distance_label(position_label)),
        "caption": CAPTION,
        "note": note,
        "tracts": [{"code": t, "colour": tract_colour(t, tract_order)} for t in tract_order],
        "surfaces": [{"code": k, "colour": surface_colour(k)} for k in kinds],
        "sections": [_section_data(correlation, s, tracts, datum) for s in sections],
    }


def section_view_html(correlation, tracts, tract_order, title="Correlation", **options) -> str:
    """The sections as one HTML page (see :func:`section_view_data` for ``options``)."""
    data = section_view_data(correlation, tracts, tract_order, **options)
    return page_html(_BODY, str(title), _CSS, data, _JS.replace("@SVG@", SVG_HELPERS))


_BODY = """<body>
<header>
<h1>@TITLE@</h1>
<p id="caption" class="caution"></p>
<p id="note" class="note"></p>
<p id="legend"></p>
</header>
<main id="sections"></main>
<div id="tooltip" role="tooltip" hidden></div>
<script type="application/json" id="section-data">@DATA@</script>
<script>@JS@</script>
</body>
</html>
"""

_CSS = """
body { margin: 0; font: 13px/1.35 "DejaVu Sans", "Helvetica Neue", Arial, sans-serif;
  color: #1d2327; background: #fff; }
header { padding: 0.5rem 1rem 0.3rem; border-bottom: 1px solid #c9ced2; }
h1 { font-size: 1.2rem; margin: 0 0 0.25rem; }
h2 { font-size: 1rem; margin: 0.6rem 1rem 0.2rem; }
.caution { margin: 0 0 0.3rem; color: #7a2418; background: #fbf3ef;
  border-left: 4px solid #b84a3a; padding: 0.25rem 0.6rem; }
.note { margin: 0 0 0.3rem; color: #5b6770; }
#legend span { display: inline-flex; align-items: center; gap: 0.3rem; margin-right: 1rem; }
#legend i { display: inline-block; width: 1.1rem; height: 0.8rem; border: 1px solid #333; }
#legend b { display: inline-block; width: 1.3rem; height: 0; border-top: 2px solid; }
section { overflow-x: auto; padding: 0 1rem 0.8rem; }
svg { display: block; overflow: visible; }
svg text { font: 11px "DejaVu Sans", Arial, sans-serif; fill: #1d2327; }
svg text.small { font-size: 10px; fill: #5b6770; }
svg .tie { cursor: help; }
/* an id beside its first well lies across the lines leaving it: a white edge keeps it legible */
svg text.surface-label { paint-order: stroke; stroke: #fff; stroke-width: 3px;
  stroke-linejoin: round; }
#tooltip { position: fixed; z-index: 10; pointer-events: none; background: #fff;
  border: 1px solid #555; box-shadow: 0 2px 6px rgba(0,0,0,0.25); padding: 0.35rem 0.55rem;
  font-size: 12px; max-width: 24rem; }
#tooltip h3 { margin: 0 0 0.2rem; font-size: 0.9rem; }
#tooltip td { padding: 0 0.5rem 0 0; }
"""

_JS = r"""
"use strict";
(function () {
  const DATA = JSON.parse(document.getElementById("section-data").textContent);
  const NS = "http://www.w3.org/2000/svg";
  const COL = 26, LEFT = 64, RIGHT = 90, HEAD = 34, FOOT = 40, HEIGHT = 520;
  const tractColour = {}, surfaceColour = {};
  DATA.tracts.forEach(t => { tractColour[t.code] = t.colour; });
  DATA.surfaces.forEach(s => { surfaceColour[s.code] = s.colour; });

@SVG@
  // a well's name centred over its column, moved in where it would reach left of the
  // plot (over the depth axis' labels and units) or past the page's right edge
  function wellName(svg, x, y, name, right) {
    const t = text(svg, x, y, name, null, "middle"), half = t.getComputedTextLength() / 2;
    t.setAttribute("x", Math.max(LEFT + half, Math.min(x, right - half)));
    return t;
  }
  // labels ({left, right}) cut into groups whose spans left to right overlap, one
  // after another: ids of one group could overlap, those of two cannot
  function sideBySide(labels) {
    const groups = [];
    let reach = -Infinity;
    labels.slice().sort((p, q) => p.left - q.left).forEach(l => {
      if (!groups.length || l.left > reach) groups.push([]);
      groups[groups.length - 1].push(l);
      reach = Math.max(reach, l.right);
    });
    return groups;
  }
  // positions of labels wanted at `wanted` (ascending), at least `gap` apart and within
  // `low` and `high` where they fit, each cluster of crowded labels centred on the
  // labels' own positions (report.section._spread, the figure's)
  function spread(wanted, gap, low, high) {
    const clusters = [];  // first position, count, sum of wanted - k * gap
    wanted.forEach(y => {
      clusters.push([0, 1, y]);
      for (;;) {
        const last = clusters[clusters.length - 1], count = last[1], total = last[2];
        const start = Math.min(Math.max(total / count, low),
          Math.max(high - (count - 1) * gap, low));
        last[0] = start;
        const before = clusters[clusters.length - 2];
        if (!before || before[0] + before[1] * gap <= start) break;
        clusters.pop();
        before[2] += total - count * before[1] * gap;
        before[1] += count;
      }
    });
    const out = [];
    clusters.forEach(c => { for (let k = 0; k < c[1]; k++) out.push(c[0] + k * gap); });
    return out;
  }
  function fmt(x, digits) { return x === null ? "n/a" : x.toFixed(digits); }
  // a well's position: as many decimals as the spread of the section's positions needs
  // (none from 100 units up), with the unit of the distance axis when it names one
  function positionText(x, wells) {
    const xs = wells.map(w => w.position);
    const span = Math.max(...xs) - Math.min(...xs);
    const digits = span >= 100 ? 0 : span >= 10 ? 1 : 2;
    return x.toFixed(digits) + (DATA.position_unit ? " " + DATA.position_unit : "");
  }

  document.getElementById("caption").textContent = DATA.caption;
  document.getElementById("note").textContent = DATA.note;
  const legend = document.getElementById("legend");
  DATA.tracts.concat(DATA.surfaces).forEach((it, k) => {
    const span = document.createElement("span");
    const mark = document.createElement(k < DATA.tracts.length ? "i" : "b");
    if (k < DATA.tracts.length) mark.style.background = it.colour;
    else mark.style.borderColor = it.colour;
    span.appendChild(mark); span.appendChild(document.createTextNode(it.code));
    legend.appendChild(span);
  });
  const dash = document.createElement("span");
  const b = document.createElement("b"); b.style.borderTopStyle = "dashed";
  dash.appendChild(b); dash.appendChild(document.createTextNode("doubtful tie"));
  legend.appendChild(dash);

  const tip = document.getElementById("tooltip");
  function showTip(title, rows, ev) {
    tip.textContent = "";
    const h = document.createElement("h3"); h.textContent = title; tip.appendChild(h);
    const table = document.createElement("table"); tip.appendChild(table);
    rows.forEach(r => {
      const tr = document.createElement("tr");
      r.forEach(c => { const td = document.createElement("td"); td.textContent = c;
        tr.appendChild(td); });
      table.appendChild(tr);
    });
    tip.hidden = false;
    const box = tip.getBoundingClientRect();
    let left = ev.clientX + 14, top = ev.clientY + 12;
    if (left + box.width > window.innerWidth - 4) left = ev.clientX - box.width - 14;
    if (top + box.height > window.innerHeight - 4) top = window.innerHeight - box.height - 4;
    tip.style.left = Math.max(4, left) + "px"; tip.style.top = Math.max(4, top) + "px";
  }
  function hideTip() { tip.hidden = true; }

  function drawSection(sec, si) {
    // on the page from the start, so that text is measured as drawn (wellName)
    const box = document.getElementById("sections").appendChild(
      document.createElement("section"));
    const h = document.createElement("h2");
    h.textContent = sec.heading + " \u2013 " + sec.datum;
    box.appendChild(h);
    if (sec.hanging_note) {
      const p = document.createElement("p"); p.className = "note";
      p.textContent = sec.hanging_note; box.appendChild(p);
    }
    const wells = {}; sec.wells.forEach(w => { wells[w.core] = w; });
    let lo = Infinity, hi = -Infinity, xmin = Infinity, xmax = -Infinity;
    sec.wells.forEach(w => {
      lo = Math.min(lo, w.top[0] - w.shift); hi = Math.max(hi, w.base[w.base.length - 1] - w.shift);
      xmin = Math.min(xmin, w.position); xmax = Math.max(xmax, w.position);
    });
    // the section fits the window (distances to scale); wider only past 1800 px
    const width = Math.max(480, Math.min(window.innerWidth - LEFT - RIGHT - 48, 1800));
    const span = Math.max(xmax - xmin, 1e-9);
    const X = p => LEFT + COL / 2 + (p - xmin) / span * (width - COL);
    const Y = d => HEAD + (d - lo) / (hi - lo) * HEIGHT;
    const svg = el("svg", {width: LEFT + width + RIGHT, height: HEAD + HEIGHT + FOOT,
      "data-section": si}, null);
    box.appendChild(svg);
    // depth axis
    const step = niceStep(hi - lo, 10);
    text(svg, LEFT - 8, HEAD - 12, DATA.units, "small", "end");
    text(svg, 14, HEAD + HEIGHT / 2, sec.datum + " (" + DATA.units + ")", "small", "middle")
      .setAttribute("transform", "rotate(-90 14 " + (HEAD + HEIGHT / 2) + ")");
    for (let d = Math.ceil(lo / step) * step; d <= hi + 1e-9; d += step) {
      text(svg, LEFT - 8, Y(d) + 4, String(+d.toFixed(3)), "small", "end");
      el("line", {x1: LEFT - 4, x2: LEFT + width, y1: Y(d), y2: Y(d), stroke: "#000",
        "stroke-opacity": 0.06}, svg);
    }
    text(svg, LEFT + width / 2, HEAD + HEIGHT + 32, DATA.position_label, "small", "middle");
    // tract shading between ties, then the ties, then the wells on top
    sec.bands.forEach(bd => {
      const a = wells[bd.left], c = wells[bd.right];
      const x0 = X(a.position) + COL / 2, x1 = X(c.position) - COL / 2;
      const pts = [[x0, Y(bd.depth[0] - a.shift)], [x1, Y(bd.depth[2] - c.shift)],
        [x1, Y(bd.depth[3] - c.shift)], [x0, Y(bd.depth[1] - a.shift)]];
      el("polygon", {points: pts.map(p => p.join(",")).join(" "),
        fill: tractColour[bd.tract] || "#999", "fill-opacity": 0.28}, svg);
    });
    sec.ties.forEach((t, k) => {
      const a = wells[t.left], c = wells[t.right];
      const coords = {x1: X(a.position) + COL / 2, x2: X(c.position) - COL / 2,
        y1: Y(t.depth[0] - a.shift), y2: Y(t.depth[1] - c.shift)};
      el("line", Object.assign({stroke: surfaceColour[t.surface] || "#333",
        "stroke-width": t.doubtful ? 1 : 2, "stroke-dasharray": t.doubtful ? "5 3" : "none"},
        coords), svg);
      const hit = el("line", Object.assign({class: "tie", stroke: "transparent",
        "stroke-width": 9, "data-tie": k}, coords), svg);
      hit.addEventListener("mousemove", ev => showTip(t.id + (t.doubtful ? " (doubtful)" : ""), [
        ["surface", t.surface],
        [t.left, fmt(t.depth[0], 2) + " " + DATA.units, "p " + fmt(t.p[0], 3)],
        [t.right, fmt(t.depth[1], 2) + " " + DATA.units, "p " + fmt(t.p[1], 3)],
        ["confidence", fmt(t.confidence, 3)],
      ], ev));
      hit.addEventListener("mouseleave", hideTip);
    });
    // each correlated surface's id right of the first and the last well it reaches
    // (sec.labels), ids that would overlap side by side spread up and down about their
    // surfaces' depths, inside the depth axis, as in the section figure
    const labels = sec.labels.map(s => {
      const w = wells[s.core], left = X(w.position) + COL / 2 + 4;
      const t = text(svg, left, Y(s.depth - w.shift), s.id.split(":").slice(1).join(":"),
        "small surface-label");
      t.setAttribute("dominant-baseline", "central");
      t.setAttribute("style", "fill:" + (surfaceColour[s.surface] || "#333"));
      const box = t.getBBox();
      return {node: t, left: left, right: left + box.width, y: Y(s.depth - w.shift),
        height: box.height};
    });
    const gap = Math.ceil(Math.max(0, ...labels.map(l => l.height))) + 1;
    sideBySide(labels).forEach(group => {
      group.sort((p, q) => p.y - q.y);
      spread(group.map(l => l.y), gap, HEAD + gap / 2, HEAD + HEIGHT - gap / 2)
        .forEach((y, k) => group[k].node.setAttribute("y", y));
    });
    sec.wells.forEach(w => {
      const x = X(w.position) - COL / 2, g = el("g", {"data-core": w.core}, svg);
      for (let i = 0; i < w.top.length; i++) {
        const rect = el("rect", {x: x, y: Y(w.top[i] - w.shift), width: COL,
          height: Math.max(0.5, Y(w.base[i] - w.shift) - Y(w.top[i] - w.shift)),
          fill: tractColour[w.tract[i]] || "#999", "data-bed": i}, g);
        rect.addEventListener("mousemove", ev => showTip(w.core, [
          ["top", fmt(w.top[i], 2) + " " + DATA.units], ["base", fmt(w.base[i], 2) + " " +
          DATA.units], ["tract", w.tract[i]]], ev));
        rect.addEventListener("mouseleave", hideTip);
      }
      el("rect", {x: x, y: Y(w.top[0] - w.shift), width: COL, fill: "none", stroke: "#000",
        "stroke-width": 0.6, height: Y(w.base[w.base.length - 1]) - Y(w.top[0])}, g);
      wellName(svg, x + COL / 2, Y(w.top[0] - w.shift) - 6, w.core, LEFT + width + RIGHT);
      text(svg, x + COL / 2, HEAD + HEIGHT + 16, positionText(w.position, sec.wells), "small",
        "middle");
    });
  }
  function render() {
    hideTip();
    document.getElementById("sections").textContent = "";
    DATA.sections.forEach(drawSection);
  }
  window.addEventListener("resize", render);
  render();
})();
"""
