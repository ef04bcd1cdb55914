"""Render a :class:`~faciesseq.report.document.Document` as a LaTeX supplement.

The file compiles with pdfLaTeX or LuaLaTeX and standard packages only
(``booktabs``, ``longtable``, ``graphicx``, ``amsmath``, ``caption``,
``geometry``, ``hyperref``); figures are included as the PDF files written
beside it (``figures/<key>.pdf``). Every piece of text from data or
configuration goes through :func:`latex_escape` (the project's own escaper:
the ten LaTeX special characters and the few non-ASCII symbols the appendix
uses).
"""

from __future__ import annotations

from collections.abc import Sequence

from faciesseq.report.document import (
    Document,
    Equation,
    FigureBlock,
    Paragraph,
    TableBlock,
    ViewBlock,
)

__all__ = ["latex_escape", "render_latex", "table_latex"]

_SPECIAL = {
    "\\": r"\textbackslash{}",
    "&": r"\&",
    "%": r"\%",
    "$": r"\$",
    "#": r"\#",
    "_": r"\_",
    "{": r"\{",
    "}": r"\}",
    "~": r"\textasciitilde{}",
    "^": r"\textasciicircum{}",
    "<": r"\textless{}",
    ">": r"\textgreater{}",
    "|": r"\textbar{}",
}
_UNICODE = {
    "−": r"\ensuremath{-}",
    "–": "--",
    "—": "---",
    "→": r"\ensuremath{\rightarrow}",
    "←": r"\ensuremath{\leftarrow}",
    "≥": r"\ensuremath{\geq}",
    "≤": r"\ensuremath{\leq}",
    "≈": r"\ensuremath{\approx}",
    "≠": r"\ensuremath{\neq}",
    "√": r"\ensuremath{\surd}",
    "∝": r"\ensuremath{\propto}",
    "₂": r"\ensuremath{_2}",
    "₊": r"\ensuremath{_+}",
    "×": r"\ensuremath{\times}",
    "±": r"\ensuremath{\pm}",
    "∞": r"\ensuremath{\infty}",
    "χ": r"\ensuremath{\chi}",
    "²": r"\ensuremath{^2}",
    "³": r"\ensuremath{^3}",
    "α": r"\ensuremath{\alpha}",
    "β": r"\ensuremath{\beta}",
    "γ": r"\ensuremath{\gamma}",
    "ξ": r"\ensuremath{\xi}",
    "π": r"\ensuremath{\pi}",
    "σ": r"\ensuremath{\sigma}",
    "μ": r"\ensuremath{\mu}",
    "Σ": r"\ensuremath{\Sigma}",
    "…": r"\ldots{}",
    "·": r"\ensuremath{\cdot}",
    "°": r"\ensuremath{^\circ}",
    "‘": "`",
    "’": "'",
    "“": "``",
    "”": "''",
    "\u00a0": "~",
}


def latex_escape(text: object) -> str:
    """Text safe to put in a LaTeX document (not in math mode).

    The ten special characters of LaTeX (and ``<``, ``>``, ``|``, which the T1
    font encoding would misprint) become commands; the non-ASCII symbols of
    the appendix become math-mode equivalents; control characters are dropped.
    For example ``50% of W_3`` becomes ``50\\% of W\\_3``.
    """
    out = []
    for ch in str(text):
        if ch in _SPECIAL:
            out.append(_SPECIAL[ch])
        elif ch in _UNICODE:
            out.append(_UNICODE[ch])
        elif ord(ch) < 32 and ch not in "\n\t":
            continue
        else:
            out.append(ch)
    return "".join(out)


PREAMBLE = r"""\documentclass[10pt,a4paper]{article}
\usepackage[T1]{fontenc}
\usepackage[utf8]{inputenc}
\usepackage{lmodern}
\usepackage[margin=22mm]{geometry}
\usepackage{amsmath}
\usepackage{booktabs}
\usepackage{array}
\usepackage{longtable}
\usepackage{graphicx}
\usepackage[font=small,labelfont=bf]{caption}
\usepackage[hidelinks]{hyperref}
\setlength{\LTcapwidth}{\textwidth}
\newsavebox{\fstable}
\renewcommand{\thetable}{S\arabic{table}}
\renewcommand{\thefigure}{S\arabic{figure}}
"""


LONG_TABLE_ROWS = 40
"""Tables with more rows are typeset as a ``longtable`` (it breaks across pages)."""


def table_latex(table: TableBlock) -> str:
    r"""A table with its caption above and booktabs rules, never wider than the text.

    Up to :data:`LONG_TABLE_ROWS` rows: a ``tabular`` set in a box and shrunk to
    the line width when wider (``\resizebox``), captioned with ``\captionof``.
    Longer tables: a ``longtable`` (it may break across pages) with narrower
    column gaps.
    """
    header = table.header()
    rows = list(table.rows())
    specs = [_column_spec(k, header, rows) for k in range(len(header))]
    align = "".join(specs)
    caption = latex_escape(table.caption) + (
        f" {latex_escape(table.mark_note)}" if table.marks is not None and table.mark_note else ""
    )
    head = " & ".join(rf"\textbf{{{latex_escape(h)}}}" for h in header) + r" \\"
    body = []
    for cells, flags in rows:
        shown = [
            _cell_latex(c, f, wrap=spec.startswith(">"))
            for c, f, spec in zip(cells, flags, specs, strict=True)
        ]
        body.append(" & ".join(shown) + r" \\")
    size = r"\footnotesize" if len(header) > 6 else r"\small"
    if len(rows) <= LONG_TABLE_ROWS:
        lines = [
            r"\begin{center}",
            rf"\captionof{{table}}{{{caption}}}\label{{tab:{table.key}}}",
            rf"\sbox{{\fstable}}{{\begin{{tabular}}{{{align}}}",
            r"\toprule",
            head,
            r"\midrule",
            *body,
            r"\bottomrule",
            r"\end{tabular}}%",
            r"\ifdim\wd\fstable>\linewidth\resizebox{\linewidth}{!}{\usebox{\fstable}}%",
            r"\else\usebox{\fstable}\fi",
            r"\end{center}",
        ]
        return "{" + size + "\n" + "\n".join(lines) + "\n}"
    lines = [
        rf"\begin{{longtable}}{{{align}}}",
        rf"\caption{{{caption}}}\label{{tab:{table.key}}}\\",
        r"\toprule",
        head,
        r"\midrule",
        r"\endfirsthead",
        head,
        r"\midrule",
        r"\endhead",
        r"\bottomrule",
        r"\endlastfoot",
        *body,
        r"\end{longtable}",
    ]
    return "{" + size + r"\setlength{\tabcolsep}{3pt}" + "\n" + "\n".join(lines) + "\n}"


def _cell_latex(text: str, marked: bool, wrap: bool = False) -> str:
    """A cell; a number in an ``\\mbox`` so that no column type breaks it over lines.

    In a paragraph column (``wrap``) text may break after a comma, a slash or
    an underscore, so that a list or a name without spaces (``a,b_c``) does not
    run out of its column.
    """
    shown = latex_escape(text) + ("*" if marked else "")
    if text and _is_number(text):
        shown = rf"\mbox{{{shown}}}"
    elif wrap:
        for mark in (",", "/", r"\_"):
            shown = shown.replace(mark, mark + r"\allowbreak{}")
    return rf"\textbf{{{shown}}}" if marked else shown


def _is_number(text: str) -> bool:
    try:
        float(text.removeprefix("< ").removeprefix("> ").replace("−", "-"))
    except ValueError:
        return text == ""
    return True


def _column_spec(k: int, header: list[str], rows) -> str:
    """``r`` for numbers, ``l`` for short text, a ragged paragraph column for long text."""
    cells = [r[0][k] for r in rows]
    if k > 0 and all(_is_number(c) for c in cells):
        return "r"
    longest = max([len(header[k]), *map(len, cells)])
    if longest <= 24:
        return "l"
    width = 5.0 if len(header) <= 4 else 3.2
    return rf">{{\raggedright\arraybackslash}}p{{{width}cm}}"


def _figure_latex(block: FigureBlock) -> str:
    return "\n".join(
        [
            r"\begin{figure}[htbp]",
            r"\centering",
            rf"\includegraphics[width=\textwidth,height=0.85\textheight,keepaspectratio]"
            rf"{{figures/{block.key}.pdf}}",
            rf"\caption{{{latex_escape(block.caption)}}}\label{{fig:{block.key}}}",
            r"\end{figure}",
        ]
    )


_COMMANDS = ("section", "subsection", "subsubsection", "paragraph")


def render_latex(document: Document, *, meta: Sequence[str] = ()) -> str:
    """The appendix as a complete LaTeX document (``appendix.tex``).

    Tables and figures are numbered S1, S2... as journal supplements usually
    are (common practice). CSV-only tables are listed, not typeset.
    """
    out = [PREAMBLE, r"\begin{document}"]
    out.append(rf"\title{{{latex_escape(document.title)}}}")
    author = r" \\ ".join(latex_escape(m) for m in meta)
    byline = latex_escape(document.subtitle) + (r" \\ " + author if author else "")
    out.append(rf"\author{{{byline}}}")
    out.append(r"\date{}")
    out.append(r"\maketitle")
    out.append(r"\tableofcontents")
    n_figures = 0
    for number, depth, section in document.walk():
        command = _COMMANDS[min(depth, len(_COMMANDS)) - 1]
        if depth == 1 and number != "1":
            out.append(r"\clearpage")
        out.append(rf"\{command}{{{latex_escape(section.title)}}}")
        for block in section.blocks:
            if isinstance(block, Paragraph):
                text = latex_escape(block.text)
                if block.kind in ("note", "missing"):
                    text = rf"\fbox{{\parbox{{0.95\linewidth}}{{{text}}}}}"
                out.append(text + "\n")
            elif isinstance(block, Equation):
                label = rf"\tag{{{latex_escape(block.label)}}}" if block.label else r"\notag"
                out.append(rf"\begin{{equation}}{block.latex}{label}\end{{equation}}")
            elif isinstance(block, TableBlock):
                if block.shown:
                    out.append(table_latex(block))
                else:
                    out.append(
                        rf"Data file \texttt{{tables/{latex_escape(block.key)}.csv}}: "
                        f"{latex_escape(block.caption)}\n"
                    )
            elif isinstance(block, FigureBlock):
                out.append(_figure_latex(block))
                n_figures += 1
                if n_figures % 6 == 0:
                    out.append(r"\clearpage")  # LaTeX holds at most 18 floats in waiting
            elif isinstance(block, ViewBlock):
                out.append(
                    f"{latex_escape(block.caption)} Interactive page (a web browser): "
                    rf"\texttt{{{latex_escape(block.key)}.html}}" + "\n"
                )
    out.append(r"\end{document}")
    return "\n".join(out) + "\n"
