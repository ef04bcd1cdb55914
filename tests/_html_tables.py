"""Read the tables of an HTML page back (standard library only)."""

from __future__ import annotations

from html.parser import HTMLParser


class TableReader(HTMLParser):
    """Collects ``<table id=...>``: header cells and body rows, as text."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, dict[str, list]] = {}
        self._table: str | None = None
        self._section = ""
        self._row: list[str] | None = None
        self._cell: list[str] | None = None
        self.text: list[str] = []
        self.tags: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        attrs = dict(attrs)
        if tag == "table":
            self._table = attrs.get("id", f"anonymous-{len(self.tables)}")
            self.tables[self._table] = {"header": [], "rows": []}
        elif tag in ("thead", "tbody"):
            self._section = tag
        elif tag == "tr" and self._table:
            self._row = []
        elif tag in ("td", "th") and self._row is not None:
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None and self._row is not None:
            self._row.append("".join(self._cell))
            self._cell = None
        elif tag == "tr" and self._row is not None and self._table:
            key = "header" if self._section == "thead" else "rows"
            if key == "header":
                self.tables[self._table]["header"] = self._row
            else:
                self.tables[self._table]["rows"].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell.append(data)


def read_tables(html: str) -> TableReader:
    reader = TableReader()
    reader.feed(html)
    reader.close()
    return reader


def _number(text: str):
    text = text.rstrip("*").replace("−", "-").replace("∞", "inf")
    if text == "":
        return float("nan")
    try:
        return float(text)
    except ValueError:
        return None


def _decimals(cell: str) -> int:
    """Digits after the decimal point of a shown number (fixed-decimal columns)."""
    text = cell.strip().rstrip("*")
    return len(text.split(".", 1)[1]) if "." in text and "e" not in text.lower() else 0


def _bound_holds(cell: str, want: float) -> bool:
    """A probability shown as ``> 0.99`` or ``< 0.01`` (or ``< 0.001``) against its value."""
    text = cell.strip()
    for sign in ("> ", "< "):
        if text.startswith(sign) and _number(text[2:]) is not None:
            bound = _number(text[2:])
            return want > bound if sign == "> " else want < bound
    return False


def mismatches(header: list[str], rows: list[list[str]], csv_rows: list[list[str]]) -> list[str]:
    """Cells where an HTML table differs from its CSV (numbers to the 4 digits shown)."""
    import math

    out = []
    if header != csv_rows[0]:
        out.append(f"header {header} != {csv_rows[0]}")
    if len(rows) != len(csv_rows) - 1:
        out.append(f"{len(rows)} rows != {len(csv_rows) - 1}")
        return out
    for r, (shown, stored) in enumerate(zip(rows, csv_rows[1:], strict=True)):
        for c, (cell, value) in enumerate(zip(shown, stored, strict=True)):
            if value in ("True", "False"):
                ok = cell == {"True": "yes", "False": "no"}[value]
            elif value != "" and _number(value) is not None:
                got, want = _number(cell), _number(value)
                ok = _bound_holds(cell, want) or (
                    got is not None
                    and (
                        (math.isnan(got) and math.isnan(want))
                        or math.isclose(got, want, rel_tol=5e-4, abs_tol=0.0)
                        or abs(got - want) <= 0.5 * 10.0 ** -_decimals(cell) + 1e-12
                    )
                )
            else:
                ok = cell.rstrip("*") == value
            if not ok:
                out.append(f"row {r}, column {c}: shown {cell!r}, CSV {value!r}")
    return out
