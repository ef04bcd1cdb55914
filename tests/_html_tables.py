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
