"""The appendix as a document: numbered sections of text, equations, tables, figures.

A :class:`Document` knows nothing of HTML or LaTeX; :mod:`faciesseq.report.html`
and :mod:`faciesseq.report.latex` render the same document, and
:mod:`faciesseq.report.appendix` writes each table's CSV from the very
:class:`pandas.DataFrame` the renderers show, so the three never disagree.

Numbers are shown with :func:`format_value` (4 significant digits; integers
in full), and in a table every number of a column with the same number of
decimals (:func:`column_decimals`: 4 significant digits of the column's
largest value), as a copy editor expects. p-values in tables (columns named
``p``, ``p-value`` or listed in ``p_values``) are shown with 3 decimals and
``< 0.001`` below 0.001 (:func:`format_p_cell`), and so in the text
(:func:`format_p_text`); the decoded probabilities a
table names with :func:`format_probability` (2 decimals, ``> 0.99`` and
``< 0.01`` at the ends). A table may name the decimals of a column of one
quantity (``TableBlock.decimals``: depths to the input's precision,
:func:`depth_decimals`; proportions, accuracies and probabilities to 3), whole
values included, so that a 1 beside a 0.979 reads 1.000. The CSV files and
``appendix.json`` keep full precision.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterator
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

__all__ = [
    "Document",
    "Equation",
    "FigureBlock",
    "Paragraph",
    "Section",
    "TableBlock",
    "column_decimals",
    "depth_decimals",
    "format_p_cell",
    "format_p_text",
    "format_parameter",
    "format_probability",
    "format_value",
]

_KEY = re.compile(r"^[a-z0-9][a-z0-9_.-]*$")


def format_value(value: object, digits: int = 4) -> str:
    """How a table cell is shown: NaN/None blank, integers in full, floats to ``digits``."""
    if value is None:
        return ""
    if isinstance(value, bool | np.bool_):
        return "yes" if value else "no"
    if isinstance(value, int | np.integer):
        return str(int(value))
    if isinstance(value, float | np.floating):
        v = float(value)
        if math.isnan(v):
            return ""
        if math.isinf(v):
            return "∞" if v > 0 else "−∞"
        if v == 0:
            return "0"
        if v.is_integer() and abs(v) < 1e15:
            return str(int(v))
        if abs(v) < 1e-4 or abs(v) >= 1e9:
            return f"{v:.{digits - 1}e}"
        if abs(v) >= 10**digits:
            return f"{v:.1f}"
        return f"{v:.{digits}g}"
    if value is pd.NA or value is pd.NaT:
        return ""
    return str(value)


def format_probability(value: object) -> str:
    """How a decoded probability is shown: 2 decimals, ``> 0.99`` and ``< 0.01`` at the ends.

    Parameters
    ----------
    value
        A probability (or ``None``/NaN, shown blank).

    Returns
    -------
    str
        No more digits than a model's tract or surface probabilities can
        bear (a 0.9998 claims a certainty no check of a model supports).
    """
    return _bounded(value, 2, low=0.01, high=0.99)


def format_parameter(value: object) -> str:
    """How a fitted model's probability is shown: 3 decimals, ``< 0.001`` and ``> 0.999``
    short of 0 and 1 (a 1.000 for a probability the fit left short of 1 would claim a
    certainty it does not hold); exact 0 and 1 as ``0.000`` and ``1.000``."""
    numeric = isinstance(value, int | float | np.integer | np.floating)
    if numeric and float(value) in (0.0, 1.0):
        return f"{float(value):.3f}"
    return _bounded(value, 3, low=0.001, high=0.999)


def format_p_cell(value: object) -> str:
    """How a p-value is shown in a table: 3 decimals, ``< 0.001`` below 0.001 (common practice)."""
    return _bounded(value, 3, low=0.001)


def format_p_text(p: float | None) -> str:
    """How a p-value is written in a sentence or a test "reported as": ``p = 0.034``,
    ``p < 0.001`` (the rule of :func:`format_p_cell`, so that a table's p column and
    the same test written out agree); ``p not available`` for NaN."""
    if p is None or not math.isfinite(float(p)):
        return "p not available"
    shown = format_p_cell(float(p))
    return f"p {shown}" if shown.startswith("<") else f"p = {shown}"


def _bounded(value: object, decimals: int, low: float, high: float | None = None) -> str:
    """A number with ``decimals`` decimals, ``< low`` below ``low`` and ``> high`` above
    ``high``; NaN blank; anything else as :func:`format_value` shows it."""
    numeric = isinstance(value, int | float | np.integer | np.floating)
    if not numeric or isinstance(value, bool | np.bool_):
        return format_value(value)
    v = float(value)
    if math.isnan(v):
        return ""
    if high is not None and v > high:
        return f"> {high:g}"
    if v < low:
        return f"< {low:g}"
    return f"{v:.{decimals}f}"


_P_NAMES = {"p", "p-value", "p value", "p_value"}


def _numeric(value: object) -> bool:
    return isinstance(value, int | float | np.integer | np.floating) and not isinstance(
        value, bool | np.bool_
    )


def column_decimals(values: list, digits: int = 4) -> int | None:
    """Decimals shared by every number of a column, or ``None`` to show cells one by one.

    ``digits`` significant digits of the largest absolute value, at least 1 and
    at most ``digits + 2`` decimals. ``None`` when the column is not all
    numbers (blanks aside), holds only whole numbers, or spans values a fixed
    notation cannot show (below 1e-4 or above 1e9: scientific notation).
    """
    finite = []
    for v in values:
        if v is None or v is pd.NA:
            continue
        if not _numeric(v):
            return None
        f = float(v)
        if math.isfinite(f):
            finite.append(f)
    if not finite or all(f.is_integer() for f in finite):
        return None
    largest = max(abs(f) for f in finite)
    if largest < 1e-4 or largest >= 1e9:
        return None
    return min(max(digits - 1 - math.floor(math.log10(largest)), 1), digits + 2)


def depth_decimals(values, most: int = 4) -> int:
    """Decimals of the input's depths: the fewest (0 to ``most``) that show every value
    of ``values`` as it is (a log described to the centimetre: 2)."""
    finite = pd.to_numeric(pd.Series(np.asarray(values).ravel()), errors="coerce").to_numpy(float)
    finite = finite[np.isfinite(finite)]
    for decimals in range(most + 1):
        if np.allclose(np.round(finite, decimals), finite, rtol=0, atol=1e-9):
            return decimals
    return most


def _fixed(value: object, decimals: int) -> str:
    if value is None or value is pd.NA or not _numeric(value):
        return format_value(value)
    v = float(value)
    if not math.isfinite(v):
        return format_value(v)
    text = f"{v:.{decimals}f}"
    return text[1:] if text.startswith("-") and float(text) == 0 else text


@dataclass(frozen=True)
class Paragraph:
    """Plain text (escaped by every renderer). ``kind`` ``"note"`` draws a framed caution."""

    text: str
    kind: str = "text"


@dataclass(frozen=True)
class Equation:
    """A displayed equation: ``text`` for HTML (Unicode), ``latex`` for LaTeX (math mode)."""

    text: str
    latex: str
    label: str = ""


@dataclass(frozen=True)
class TableBlock:
    """A table shown in the appendix and written to ``tables/<key>.csv``.

    ``frame`` is shown as it is; its index is the first column when
    ``index`` is true (named by ``frame.index.name``). ``marks`` (booleans,
    same labels) marks cells with a ``*`` (e.g. significant adjusted
    residuals), explained by ``mark_note``. ``shown=False`` writes the CSV
    only (long per-bed data), listed in the appendix as a data file.
    ``probabilities`` names the columns of decoded probabilities, shown with
    :func:`format_probability`; ``parameters`` those of a fitted model's
    probabilities (``"*"``: every column), shown with :func:`format_parameter`;
    ``p_values`` (and columns named ``p`` or ``p-value``) are shown with
    :func:`format_p_cell`; ``decimals`` names the fixed decimals of columns of
    one quantity (column -> decimals; the key ``"*"`` for every column of floats
    not named), whole values included; other columns of numbers with fixed
    decimals (:func:`column_decimals`). The
    CSV keeps every number exact.
    """

    key: str
    caption: str
    frame: pd.DataFrame
    index: bool = True
    marks: pd.DataFrame | None = None
    mark_note: str = ""
    shown: bool = True
    digits: int = 4
    probabilities: tuple[str, ...] = ()
    parameters: tuple[str, ...] = ()
    p_values: tuple[str, ...] = ()
    decimals: dict[str, int] = field(default_factory=dict, compare=False)

    def __post_init__(self) -> None:
        if not _KEY.match(self.key):
            raise ValueError(f"table key {self.key!r} must be lower-case letters, digits, _.-")

    def header(self) -> list[str]:
        """Column headings as shown (index heading first when the index is shown)."""
        cols = [str(c) for c in self.frame.columns]
        if self.index:
            return [str(self.frame.index.name or ""), *cols]
        return cols

    def rows(self) -> Iterator[tuple[list[str], list[bool]]]:
        """Shown cells of each row (as text) and whether each is marked."""
        marks = None
        if self.marks is not None:
            marks = (
                self.marks.reindex(index=self.frame.index, columns=self.frame.columns)
                .fillna(False)
                .to_numpy(bool)
            )
        shows = [
            self._shower(str(c), self.frame.iloc[:, j].tolist())
            for j, c in enumerate(self.frame.columns)
        ]
        for i, (label, row) in enumerate(self.frame.iterrows()):
            cells = [show(v) for show, v in zip(shows, row.tolist(), strict=True)]
            flags = [bool(marks[i, j]) if marks is not None else False for j in range(len(cells))]
            if self.index:
                cells = [format_value(label, self.digits), *cells]
                flags = [False, *flags]
            yield cells, flags

    def _format(self, value: object) -> str:
        return format_value(value, self.digits)

    def _shower(self, name: str, values: list):
        """The formatter of one column (see the class docstring)."""
        if name in self.probabilities:
            return format_probability
        if name in self.parameters or "*" in self.parameters:
            return format_parameter
        if name in self.p_values or name.lower() in _P_NAMES:
            return format_p_cell
        fixed = self.decimals.get(name)
        floats = any(isinstance(v, float | np.floating) for v in values)
        if fixed is None and "*" in self.decimals and floats:
            fixed = self.decimals["*"]
        if fixed is not None:
            return lambda v: _fixed(v, fixed)
        decimals = column_decimals(values, self.digits)
        if decimals is None:
            return self._format
        return lambda v: _fixed(v, decimals)

    def to_csv_frame(self) -> pd.DataFrame:
        """The table as written to CSV (index as a column when shown)."""
        if self.index:
            frame = self.frame.reset_index()
            first = str(self.frame.index.name or "")
            return frame.rename(columns={frame.columns[0]: first})
        return self.frame.reset_index(drop=True)


@dataclass(frozen=True)
class FigureBlock:
    """A figure with its caption; written as ``figures/<key>.png`` and ``.pdf``."""

    key: str
    caption: str
    figure: Figure = field(repr=False, compare=False)

    def __post_init__(self) -> None:
        if not _KEY.match(self.key):
            raise ValueError(f"figure key {self.key!r} must be lower-case letters, digits, _.-")


@dataclass(frozen=True)
class ViewBlock:
    """An interactive page (one self-contained HTML document) with its caption.

    The HTML appendix embeds it (an inline frame holding the whole page, so its
    script and style stay apart from the appendix's); it is also written beside
    the appendix as ``<key>.html``, which the LaTeX version names.
    """

    key: str
    caption: str
    html: str = field(repr=False, compare=False)

    def __post_init__(self) -> None:
        if not _KEY.match(self.key):
            raise ValueError(f"view key {self.key!r} must be lower-case letters, digits, _.-")


Block = Paragraph | Equation | TableBlock | FigureBlock | ViewBlock


@dataclass
class Section:
    """A numbered section: blocks in order, then sub-sections."""

    title: str
    blocks: list[Block] = field(default_factory=list)
    subsections: list[Section] = field(default_factory=list)

    def add(self, *blocks: Block) -> Section:
        self.blocks.extend(blocks)
        return self

    def sub(self, title: str) -> Section:
        child = Section(title)
        self.subsections.append(child)
        return child


@dataclass
class Document:
    """Numbered sections; tables and figures numbered in order of appearance."""

    title: str
    subtitle: str = ""
    sections: list[Section] = field(default_factory=list)

    def walk(self) -> Iterator[tuple[str, int, Section]]:
        """``(number, depth, section)`` in reading order (``"2.3"``, depth 2)."""

        def rec(sections: list[Section], prefix: str, depth: int):
            for k, section in enumerate(sections, start=1):
                number = f"{prefix}{k}"
                yield number, depth, section
                yield from rec(section.subsections, number + ".", depth + 1)

        yield from rec(self.sections, "", 1)

    def blocks(self) -> Iterator[Block]:
        for _, _, section in self.walk():
            yield from section.blocks

    def tables(self, shown: bool | None = None) -> list[TableBlock]:
        out = [b for b in self.blocks() if isinstance(b, TableBlock)]
        return out if shown is None else [t for t in out if t.shown == shown]

    def figures(self) -> list[FigureBlock]:
        return [b for b in self.blocks() if isinstance(b, FigureBlock)]

    def views(self) -> list[ViewBlock]:
        return [b for b in self.blocks() if isinstance(b, ViewBlock)]

    def numbering(self) -> dict[str, int]:
        """Numbers of shown tables (key ``table:<key>``) and figures (``figure:<key>``)."""
        out: dict[str, int] = {}
        n_table = n_figure = 0
        for block in self.blocks():
            if isinstance(block, TableBlock) and block.shown:
                n_table += 1
                out[f"table:{block.key}"] = n_table
            elif isinstance(block, FigureBlock):
                n_figure += 1
                out[f"figure:{block.key}"] = n_figure
        return out

    def check_keys(self) -> None:
        """Raise ``ValueError`` if two tables or two figures share a key."""
        for kind, items in (("table", self.tables()), ("figure", self.figures())):
            seen: set[str] = set()
            for item in items:
                if item.key in seen:
                    raise ValueError(f"two {kind}s have the key {item.key!r}")
                seen.add(item.key)
