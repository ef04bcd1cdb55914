"""Render a :class:`~faciesseq.report.document.Document` as one self-contained HTML file.

Figures are embedded as base64 PNG, the style sheet is inline, and nothing
is fetched from a network: the file opens the same from a USB stick, an
e-mail attachment or a browser's "print to PDF". Every piece of text that
comes from data or configuration (core names, facies names, captions,
cells) is HTML-escaped.
"""

from __future__ import annotations

import base64
import re
from collections.abc import Mapping, Sequence
from html import escape

from faciesseq.report.document import (
    Document,
    Equation,
    FigureBlock,
    Paragraph,
    TableBlock,
    ViewBlock,
)

__all__ = ["CSS", "render_html", "table_html"]

#: Inline style sheet: screen and print (A4, figures and tables kept whole).
CSS = """
:root { --ink: #1d2327; --muted: #5b6770; --rule: #c9ced2; --band: #f4f6f5; --accent: #2e6f62; }
html { font-size: 15px; }
body { font-family: "Source Serif Pro", Georgia, "DejaVu Serif", serif; color: var(--ink);
  max-width: 58rem; margin: 2rem auto; padding: 0 1.5rem; line-height: 1.45; }
h1 { font-size: 1.7rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.3rem; border-bottom: 2px solid var(--accent); padding-bottom: 0.15rem;
  margin-top: 2.4rem; }
h3 { font-size: 1.1rem; margin-top: 1.8rem; }
h4 { font-size: 1rem; margin-top: 1.4rem; }
.subtitle, .meta { color: var(--muted); margin-top: 0; }
nav.toc ol { list-style: none; padding-left: 1.2rem; margin: 0.2rem 0; }
nav.toc > ol { padding-left: 0; }
nav.toc a { color: var(--ink); text-decoration: none; }
nav.toc a:hover { text-decoration: underline; }
table.data { border-collapse: collapse; margin: 0.6rem 0 0.3rem; font-size: 0.8rem;
  font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; }
table.data caption { caption-side: top; text-align: left; font-size: 0.9rem;
  font-family: "Source Serif Pro", Georgia, serif; padding-bottom: 0.3rem; }
table.data th, table.data td { padding: 0.18rem 0.55rem; border-bottom: 1px solid var(--rule);
  vertical-align: top; }
table.data thead th { border-bottom: 1.5px solid var(--ink); border-top: 1.5px solid var(--ink);
  text-align: left; }
table.data tbody tr:nth-child(even) { background: var(--band); }
table.data td.num, table.data th.num { text-align: right; font-variant-numeric: tabular-nums;
  white-space: nowrap; }
table.data td.mark { font-weight: bold; }
table.data tbody th { text-align: left; font-weight: 600; }
.table-wrap { overflow-x: auto; }
p.source { font-size: 0.75rem; color: var(--muted); margin: 0 0 1.2rem; }
figure { margin: 1.2rem 0; text-align: center; }
figure img { max-width: 100%; height: auto; }
figure.view iframe { width: 100%; height: 80vh; border: 1px solid var(--rule); }
@media print { figure.view iframe { display: none; } }
figcaption { text-align: left; font-size: 0.9rem; margin-top: 0.4rem; }
.eq { font-family: "DejaVu Serif", Georgia, serif; text-align: center; margin: 0.6rem 0;
  white-space: pre-wrap; }
.note { border-left: 4px solid #b84a3a; background: #fbf3ef; padding: 0.5rem 0.8rem; }
.missing { border-left: 4px solid #999; background: #f2f2f2; padding: 0.4rem 0.8rem;
  color: var(--muted); }
ul.files { font-size: 0.85rem; }
@page { size: A4; margin: 16mm 15mm 18mm; }
@media print {
  html { font-size: 10.5pt; }
  body { max-width: none; margin: 0; padding: 0; }
  nav.toc { break-after: page; }
  main h2 { break-before: page; }
  h2, h3, h4 { break-after: avoid; }
  figure, table.data, .eq { break-inside: avoid; }
  .table-wrap { overflow: visible; }
  a { color: inherit; text-decoration: none; }
}
"""

_NUMBER = re.compile(r"^(?:[<>] )?[−\-+]?(\d[\d,]*\.?\d*|\.\d+)(e[+\-]?\d+)?\*?$|^[−\-]?∞$")


def _is_number(text: str) -> bool:
    return bool(_NUMBER.match(text))


def table_html(table: TableBlock, number: int) -> str:
    """One ``<table>`` with its numbered caption; every cell escaped."""
    header = table.header()
    body: list[str] = []
    for cells, flags in table.rows():
        tds = []
        for k, (text, marked) in enumerate(zip(cells, flags, strict=True)):
            shown = text + ("*" if marked else "")
            classes = []
            if _is_number(shown):
                classes.append("num")
            if marked:
                classes.append("mark")
            cls = f' class="{" ".join(classes)}"' if classes else ""
            tag = "th" if (k == 0 and table.index) else "td"
            scope = ' scope="row"' if tag == "th" else ""
            tds.append(f"<{tag}{cls}{scope}>{escape(shown)}</{tag}>")
        body.append("<tr>" + "".join(tds) + "</tr>")
    head = "".join(f'<th scope="col">{escape(h)}</th>' for h in header)
    note = ""
    if table.marks is not None and table.mark_note:
        note = " " + escape(table.mark_note)
    return (
        f'<div class="table-wrap"><table class="data" id="table-{escape(table.key)}">'
        f"<caption><b>Table {number}.</b> {escape(table.caption)}{note}</caption>"
        f"<thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table></div>"
        f'<p class="source">Full precision: <a href="tables/{escape(table.key)}.csv">'
        f"tables/{escape(table.key)}.csv</a></p>"
    )


def _png_width(png: bytes) -> int:
    """Pixel width from a PNG header (bytes 16-19 of the IHDR chunk)."""
    return int.from_bytes(png[16:20], "big") if png[:8] == b"\x89PNG\r\n\x1a\n" else 0


def _figure_html(block: FigureBlock, number: int, png: bytes | None, dpi: int = 160) -> str:
    caption = f"<figcaption><b>Figure {number}.</b> {escape(block.caption)}</figcaption>"
    if png is None:
        missing = '<p class="missing">(figure not drawn)</p>'
        return f'<figure id="figure-{escape(block.key)}">{missing}{caption}</figure>'
    data = base64.b64encode(png).decode("ascii")
    # shown at its printed size (CSS inches are 96 px), never wider than the page
    css_width = round(_png_width(png) / dpi * 96) or 600
    return (
        f'<figure id="figure-{escape(block.key)}">'
        f'<img src="data:image/png;base64,{data}" style="width: {css_width}px"'
        f' alt="Figure {number}: {escape(block.caption)}">'
        f"{caption}</figure>"
    )


def _view_html(block: ViewBlock) -> str:
    """An interactive page in an inline frame (``srcdoc``: nothing fetched), with a
    link to the same page written beside the appendix."""
    return (
        f'<figure class="view"><iframe title="{escape(block.caption)}" '
        f'srcdoc="{escape(block.html, quote=True)}" sandbox="allow-scripts"></iframe>'
        f"<figcaption>{escape(block.caption)} The same page on its own: "
        f'<a href="{escape(block.key)}.html">{escape(block.key)}.html</a>.</figcaption></figure>'
    )


def render_html(
    document: Document,
    pngs: Mapping[str, bytes],
    *,
    meta: Sequence[str] = (),
    data_files: Sequence[tuple[str, str]] = (),
    dpi: int = 160,
) -> str:
    """The whole appendix as one HTML page.

    Parameters
    ----------
    document
        Sections, tables and figures.
    pngs
        PNG bytes of each figure, by figure key (embedded as base64).
    meta
        Lines shown under the title (software version, date...), escaped.
    data_files
        ``(path, description)`` of files beside the appendix (CSV-only data),
        listed at the end of the page.
    dpi
        Resolution of the PNGs (figures are shown at their printed size).
    """
    numbers = document.numbering()
    toc: list[str] = []
    body: list[str] = []
    depth_open = 0
    for number, depth, section in document.walk():
        anchor = "sec-" + number.replace(".", "-")
        while depth_open < depth:
            toc.append("<ol>")
            depth_open += 1
        while depth_open > depth:
            toc.append("</ol>")
            depth_open -= 1
        toc.append(f'<li><a href="#{anchor}">{number} {escape(section.title)}</a></li>')
        level = min(depth + 1, 6)
        body.append(f'<h{level} id="{anchor}">{number} {escape(section.title)}</h{level}>')
        for block in section.blocks:
            if isinstance(block, Paragraph):
                cls = {"note": ' class="note"', "missing": ' class="missing"'}.get(block.kind, "")
                body.append(f"<p{cls}>{escape(block.text)}</p>")
            elif isinstance(block, Equation):
                label = f"  ({escape(block.label)})" if block.label else ""
                body.append(f'<div class="eq">{escape(block.text)}{label}</div>')
            elif isinstance(block, TableBlock):
                if block.shown:
                    body.append(table_html(block, numbers[f"table:{block.key}"]))
                else:
                    body.append(
                        f'<p class="source">Data file: <a href="tables/{escape(block.key)}.csv">'
                        f"tables/{escape(block.key)}.csv</a> — {escape(block.caption)}</p>"
                    )
            elif isinstance(block, FigureBlock):
                body.append(
                    _figure_html(block, numbers[f"figure:{block.key}"], pngs.get(block.key), dpi)
                )
            elif isinstance(block, ViewBlock):
                body.append(_view_html(block))
    while depth_open > 0:
        toc.append("</ol>")
        depth_open -= 1
    files = ""
    if data_files:
        items = "".join(
            f'<li><a href="{escape(path)}">{escape(path)}</a> — {escape(text)}</li>'
            for path, text in data_files
        )
        files = f'<h2 id="files">Files of this appendix</h2><ul class="files">{items}</ul>'
    meta_html = "".join(f'<p class="meta">{escape(line)}</p>' for line in meta)
    subtitle = f'<p class="subtitle">{escape(document.subtitle)}</p>' if document.subtitle else ""
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{escape(document.title)}</title><style>{CSS}</style></head><body>"
        f"<header><h1>{escape(document.title)}</h1>{subtitle}{meta_html}</header>"
        f'<nav class="toc"><h2 id="contents">Contents</h2>{"".join(toc)}</nav>'
        f"<main>{''.join(body)}</main>{files}</body></html>\n"
    )
