"""Reading delimited text (CSV/TSV), Excel ``.xlsx`` and Parquet files.

Text files: the encoding is UTF-8 (a byte-order mark is honoured); anything
else is detected with charset-normalizer and *reported*, or refused when it
cannot be detected, so that names are never garbled. The delimiter is sniffed
among comma, semicolon, tab and ``|``. Cells are returned as text; the
validation step decides per column role what is a number, so a code such as
``07`` or a stray ``n/a`` in a depth column is seen as written.
"""

from __future__ import annotations

import codecs
import csv
import io
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from faciesseq.errors import ConfigError, InputError, Problem
from faciesseq.io.plaincsv import read_plain
from faciesseq.io.raw import NUMBER_NA_WORDS, RawTable, check_header, check_width

__all__ = [
    "TEXT_SUFFIXES",
    "decimal_commas",
    "decode_text",
    "read_delimited",
    "read_excel",
    "read_parquet",
    "sniff_delimiter",
]

TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".tab")
#: The first rows of a worksheet kept whole for a message (:attr:`RawTable.head_rows`).
HEAD_ROWS = 20
_DELIMITERS = ",;\t|"


#: Leading bytes of files that are no text table, whatever their name says (a workbook
#: renamed to ``.csv`` is the usual case), and what they are.
_NOT_TEXT = (
    (b"PK\x03\x04", "a ZIP archive (an Excel workbook, .xlsx?)"),
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "an old Office file (an Excel workbook, .xls?)"),
)


def decode_text(data: bytes, file: str, encoding: str | None = None) -> tuple[str, list[Problem]]:
    """Text of a file: UTF-8, a stated ``encoding``, or a detected one (reported).

    Encoding detection: charset-normalizer (a maintained library) rather than
    hand-written heuristics.
    """
    if encoding:
        return _decode_stated(data, file, encoding), []
    _refuse_binary(data, file)
    with_bom = _decode_with_bom(data, file)
    if with_bom is not None:
        return with_bom
    try:
        return data.decode("utf-8"), []
    except UnicodeDecodeError as exc:
        first_bad = exc.start
    from charset_normalizer import from_bytes

    matches = list(from_bytes(data))
    western = _western_reading(data, matches, first_bad, file)
    if western is not None:
        return western
    return _detected_reading(matches, first_bad, file)


def _decode_stated(data: bytes, file: str, encoding: str) -> str:
    """The text in the encoding the user stated; refused when it does not read."""
    try:
        return data.decode(encoding)
    except (LookupError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot be read as {encoding}: {exc}", file=file) from None


def _refuse_binary(data: bytes, file: str) -> None:
    """Refuse a workbook or other binary file named as a text table."""
    for magic, what in _NOT_TEXT:
        if data.startswith(magic):
            raise InputError(
                f"is {what}, not a text table; give it its own extension, or save it as CSV",
                file=file,
            )


#: Byte-order marks and the encodings they announce (UTF-32 before UTF-16: the UTF-32
#: little-endian mark starts with the UTF-16 one).
_BOMS = (
    (codecs.BOM_UTF8, "utf-8-sig"),
    (codecs.BOM_UTF32_LE, "utf-32"),
    (codecs.BOM_UTF32_BE, "utf-32"),
    (codecs.BOM_UTF16_LE, "utf-16"),
    (codecs.BOM_UTF16_BE, "utf-16"),
)


def _decode_with_bom(data: bytes, file: str) -> tuple[str, list[Problem]] | None:
    """The text of a file with a byte-order mark (any but UTF-8's reported), else None."""
    for bom, name in _BOMS:
        if not data.startswith(bom):
            continue
        try:
            text = data.decode(name)
        except UnicodeDecodeError as exc:
            raise InputError(
                f"starts with a {name.upper()} byte-order mark but is not valid {name} "
                f"(byte {exc.start}); save it as UTF-8",
                file=file,
            ) from None
        problems = []
        if name not in ("utf-8-sig",):
            problems.append(
                Problem(
                    "warning",
                    "encoding",
                    f"file is {name.upper()} (byte-order mark), not UTF-8; read as {name}",
                    file=file,
                )
            )
        return text, problems
    return None


def _western_reading(
    data: bytes, matches: list, first_bad: int, file: str
) -> tuple[str, list[Problem]] | None:
    """The cp1252 reading, reported, when it is plausible and detection agrees or is unsure."""
    western = _western(data)
    if western is None:
        return None
    # Detection guesses from the non-ASCII bytes; on a short file it is unsure, and
    # a Western reading where every such character is a letter is the likely one.
    detected = str(matches[0]) if matches else None
    n_bytes = sum(b >= 0x80 for b in data)
    if not (detected == western or detected is None or n_bytes < _SURE_BYTES):
        return None
    also = (
        f"; detection suggested {matches[0].encoding}, which reads it differently"
        if detected is not None and detected != western
        else ""
    )
    note = Problem(
        "warning",
        "encoding",
        f"file is not UTF-8 (byte {first_bad}); read as cp1252 (Western European, "
        f"latin-1){also}; check accented names, or save it as UTF-8, or give "
        "'encoding' in a YAML source file",
        file=file,
    )
    return western, [note]


def _detected_reading(matches: list, first_bad: int, file: str) -> tuple[str, list[Problem]]:
    """The reading of the likeliest detected encoding, reported; refused when none is."""
    if not matches:
        raise InputError(
            f"not UTF-8 (byte {first_bad}) and its encoding could not be detected; "
            "save it as UTF-8 or give 'encoding' in a YAML source file",
            file=file,
        )
    chosen, others = _break_tie(matches, file)
    also = f"; it could also be {', '.join(others)}, which reads it differently" if others else ""
    note = Problem(
        "warning",
        "encoding",
        f"file is not UTF-8; read as {chosen.encoding} (detected){also}; check accented "
        "names, or save it as UTF-8, or give 'encoding' in a YAML source file",
        file=file,
    )
    return str(chosen), [note]


def _break_tie(matches: list, file: str) -> tuple[Any, list[str]]:
    """The detected match to read with, and the other equally likely encodings that read
    the bytes differently (none when the likeliest readings agree)."""
    best = matches[0]
    tied = [m for m in matches if (m.chaos, m.coherence) == (best.chaos, best.coherence)]
    readings: dict[str, list[str]] = {}
    for m in tied:
        readings.setdefault(str(m), []).append(m.encoding)
    if len(readings) <= 1:
        return best, []
    # Equally likely code pages that read the bytes differently: take the
    # commonest Western one when it is among them, and say so; else refuse.
    western = [m for m in tied if "cp1252" in m.could_be_from_charset]
    if not western:
        raise InputError(
            "not UTF-8, and the encoding is ambiguous ("
            + ", ".join(m.encoding for m in tied)
            + " read it differently); save it as UTF-8 or give 'encoding' in a YAML "
            "source file",
            file=file,
        )
    chosen = western[0]
    others = [e for text, encs in readings.items() if text != str(chosen) for e in encs]
    return chosen, others


#: Fewer non-ASCII bytes than this and encoding detection is unsure: cp1252 is
#: preferred when it reads every one of them as a letter or a common sign.
_SURE_BYTES = 200
_WESTERN_SIGNS = set("°±µ²³·½¼¾§€–—‘’“”«»¿¡×÷©®™• ")


def _western(data: bytes) -> str | None:
    """The cp1252 reading of ``data`` when it is plausible (non-ASCII: letters, common signs)."""
    try:
        text = data.decode("cp1252")
    except UnicodeDecodeError:
        return None
    if all(c.isalpha() or c in _WESTERN_SIGNS for c in text if ord(c) >= 0x80):
        return text
    return None


def sniff_delimiter(text: str, suffix: str) -> str:
    """The delimiter of delimited ``text`` (comma, semicolon, tab, ``|``), from its first
    50 lines; a tab for a ``.tsv`` or ``.tab`` file."""
    if suffix in (".tsv", ".tab"):
        return "\t"
    size = 1 << 16  # the first 50 lines, without splitting the whole text
    while True:
        lines = text[:size].splitlines()
        if len(lines) > 50 or size >= len(text):
            break
        size *= 4
    sample = "\n".join(lines[:50])
    try:
        return csv.Sniffer().sniff(sample, delimiters=_DELIMITERS).delimiter
    except csv.Error:
        header = sample.splitlines()[0] if sample else ""
        counts = {d: header.count(d) for d in _DELIMITERS}
        best = max(counts, key=counts.get)
        return best if counts[best] else ","


#: Rows parsed at a time (bounds the memory of the parser's intermediate Python strings).
CHUNK_ROWS = 200_000


def read_delimited(path: Path, encoding: str | None = None) -> RawTable:
    """A CSV/TSV file; see the module notes on encoding and delimiter."""
    file = str(path)
    try:
        frame = _read_plain(path) if encoding is None else None
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror}", file=file) from None
    problems: list[Problem] = []
    if frame is None:
        frame, problems, delimiter = _read_text(path, encoding)
    else:
        frame, delimiter = frame
    if delimiter != ",":
        frame, converted = decimal_commas(frame)
        if converted:
            problems.append(
                Problem(
                    "repair",
                    "decimal-comma",
                    f"decimal commas read as decimal points in column(s) {', '.join(converted)}",
                    file=file,
                )
            )
    return raw_rows(frame, file, problems)


def raw_rows(frame: pd.DataFrame, file: str, problems: list[Problem], first: int = 1) -> RawTable:
    """The raw table of a file's rows (the first one numbered ``first``), rows whose every
    cell is missing left out (their numbers too)."""
    rows = np.arange(first, first + len(frame))
    keep = frame.notna().any(axis=1).to_numpy()
    if not keep.all():
        frame = frame[keep].reset_index(drop=True)
    return RawTable(frame, file, rows[keep], problems=problems)


def plain_header(path: Path) -> tuple[str, list[str]] | None:
    """The delimiter and stripped header names of a file the plain reader may read
    (:mod:`faciesseq.io.plaincsv`); ``None`` when the general reader must read it (not
    UTF-8, a header name blank, repeated or quoted)."""
    try:
        head = _head(path)
    except UnicodeDecodeError:
        return None
    if not head.strip():
        return None
    delimiter = sniff_delimiter(head, path.suffix.lower())
    names = [n.strip() for n in head.splitlines()[0].split(delimiter)]
    check_width(len(names), str(path))
    if names[0].startswith("#"):
        return None  # a comment line: the general reader refuses it (check_header)
    if "" in names or len(set(names)) < len(names) or any('"' in n for n in names):
        return None
    return delimiter, names


def _read_plain(path: Path) -> tuple[pd.DataFrame, str] | None:
    """A plain file (:mod:`faciesseq.io.plaincsv`) and its delimiter; ``None`` when the
    general reader must read it (see :func:`plain_header`; ragged rows)."""
    header = plain_header(path)
    if header is None:
        return None
    delimiter, names = header
    frame = read_plain(path, delimiter, names)
    return None if frame is None else (frame, delimiter)


def _head(path: Path) -> str:
    """The start of a text file, enough for :func:`sniff_delimiter` (more than 50 lines, or all)."""
    head = ""
    with path.open("r", encoding="utf-8", newline="") as stream:
        while part := stream.read(1 << 16):
            head += part
            if len(head.splitlines()) > 50:
                break
    return head


def _read_text(path: Path, encoding: str | None) -> tuple[pd.DataFrame, list[Problem], str]:
    """Any delimited file, by pandas' parser: cells as text, stripped, blank cells missing
    (pandas' missing-value words, ``NA``, ``null``..., kept as text)."""
    file = str(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror}", file=file) from None
    text, problems = decode_text(data, file, encoding)
    if not text.strip():
        raise InputError("file is empty", file=file)
    delimiter = sniff_delimiter(text, path.suffix.lower())
    # the header as written: pandas renames a repeated name (facies, facies.1)
    check_header(next(csv.reader([text.partition("\n")[0]], delimiter=delimiter), []), file)
    # NUL bytes: pandas' C parser before 3.0 cut a cell at one, silently; the Python
    # parser keeps it, for validation to name (rare files, refused anyway)
    nul = "\x00" in text
    # plain ASCII: the parser reads the file itself (no copy of its text held meanwhile)
    plain = len(text) == len(data) and text.isascii() and not nul
    stream = path if plain else io.StringIO(text)
    del text, data
    try:
        # in chunks: the parser's Python strings of one chunk at a time, then pandas text
        chunks = pd.read_csv(
            stream,
            sep=delimiter,
            dtype=str,
            skip_blank_lines=False,
            skipinitialspace=True,
            # only a blank cell is missing: "NA" or "null" may be a facies code
            keep_default_na=False,
            chunksize=CHUNK_ROWS,
            engine="python" if nul else "c",
        )
        with chunks:
            frame = pd.concat(list(chunks), ignore_index=True)
    except (pd.errors.ParserError, ValueError, csv.Error) as exc:  # csv: the Python parser
        long_row = _long_row(path, encoding, delimiter)
        if long_row is not None:
            raise long_row from None
        why = str(exc)
        if isinstance(exc, csv.Error) and "new-line character" in why:
            why = "a line break (carriage return) inside a field; save with ordinary line ends"
        raise InputError(f"not a readable delimited table: {why}", file=file) from None
    check_width(frame.shape[1], file)
    frame.columns = [str(c).strip() for c in frame.columns]
    for i in range(frame.shape[1]):  # a column at a time: one column's copy alive at once
        column = frame.iloc[:, i]
        column = column.str.strip() if column.dtype != float else column
        frame.isetitem(i, column.replace("", np.nan))
    return frame, problems, delimiter


def _long_row(path: Path, encoding: str | None, delimiter: str) -> InputError | None:
    """The error naming the first data row with more cells than the header (pandas'
    parser refuses such a row in its own words), ``None`` when there is none.

    The row is counted as the readers count data rows (blank lines too, the header
    not); its core and depth are named when the header has columns that look like them
    (:data:`faciesseq.io.columns.ROLES`), read from the row's cells by position."""
    from faciesseq.io.columns import match_columns

    file = str(path)
    text, _ = decode_text(path.read_bytes(), file, encoding)
    rows = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, skipinitialspace=True)
    header = [name.strip() for name in next(rows, [])]
    for number, cells in enumerate(rows, start=1):
        if len(cells) <= len(header):
            continue
        try:
            match = match_columns(header, file=file)
        except (InputError, ConfigError):
            match = None
        roles = {} if match is None else match.roles
        cell = {role: cells[header.index(name)].strip() for role, name in roles.items()}
        depth = pd.to_numeric(cell.get("top", cell.get("depth")), errors="coerce")
        return InputError(
            f"{len(cells)} cells, but the header names {len(header)} columns; quote a cell "
            f"that holds the delimiter ({delimiter!r}) or delete the extra cells",
            file=file,
            row=number,
            core=cell.get("core") or None,
            depth=None if depth is None or np.isnan(depth) else float(depth),
            units=None if match is None else match.units,
        )
    return None


_DECIMAL_COMMA = r"^[+-]?\d+(,\d+)?$"


def decimal_commas(frame: pd.DataFrame) -> tuple[pd.DataFrame, list[str]]:
    """Columns written with decimal commas (``2793,5``), as European exports are."""
    converted = []
    for col in frame.columns:
        values = frame[col].dropna().astype(str)
        values = values[~values.isin(NUMBER_NA_WORDS)]
        if (
            len(values)
            and values.str.contains(",").any()
            and values.str.match(_DECIMAL_COMMA).all()
        ):
            frame[col] = frame[col].str.replace(",", ".", regex=False)
            converted.append(str(col))
    return frame, converted


def read_excel(path: Path, sheet: str | None = None) -> RawTable:
    """One sheet of an ``.xlsx`` workbook (the first when ``sheet`` is ``None``); the
    table is named ``FILE [SHEET]`` where a sheet is given or the workbook has several."""
    from faciesseq._optional import import_optional

    file = str(path)
    load_workbook = import_optional("openpyxl", "reading .xlsx workbooks").load_workbook

    try:
        book = load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for a bad workbook
        raise InputError(
            f"not a readable .xlsx workbook ({type(exc).__name__})", file=file
        ) from None
    others: dict[str, list[str]] = {}
    try:
        names = book.sheetnames
        if sheet is None:
            ws = book[names[0]]
            if len(names) > 1:  # messages say which sheet was read
                sheet = names[0]
                others = {name: _sheet_header(book[name]) for name in names[1:]}
        elif sheet in names:
            ws = book[sheet]
        else:
            raise ConfigError(
                f"no sheet {sheet!r}; the sheets are {', '.join(repr(n) for n in names)}",
                file=file,
            )
        cells = [list(r) for r in ws.iter_rows(values_only=True)]
    finally:
        book.close()
    if not cells:
        raise InputError("sheet is empty", file=file)
    header = ["" if h is None else str(h).strip() for h in cells[0]]
    width = len(header)
    while width and header[width - 1] == "":
        width -= 1
    header = header[:width]
    check_width(width, file)
    body = [(r + [None] * width)[:width] for r in cells[1:]]
    frame = pd.DataFrame(body, columns=header, dtype=object)
    frame = frame.map(lambda v: np.nan if (isinstance(v, str) and not v.strip()) else v)
    rows = np.arange(1, len(frame) + 1)
    keep = frame.notna().any(axis=1).to_numpy()
    frame = frame[keep].reset_index(drop=True)
    label = file if sheet is None else f"{file} [{sheet}]"
    head = [(k, list(r)) for k, r in enumerate(cells[1 : HEAD_ROWS + 1], start=1)]
    return RawTable(
        frame.astype(object), label, rows[keep].tolist(), other_sheets=others, head_rows=head
    )


def _sheet_header(ws) -> list[str]:
    """The names in the first row of a worksheet (blank cells left out)."""
    first = next(ws.iter_rows(max_row=1, values_only=True), ())
    return [str(h).strip() for h in first if h is not None and str(h).strip()]


def read_parquet(path: Path) -> RawTable:
    """A Parquet file (pyarrow)."""
    file = str(path)
    try:
        frame = pd.read_parquet(path)
    except Exception as exc:  # pyarrow raises several types for a bad file
        raise InputError(f"not a readable Parquet file ({type(exc).__name__})", file=file) from None
    check_width(frame.shape[1], file)
    frame.columns = [str(c) for c in frame.columns]
    return RawTable(frame.reset_index(drop=True).astype(object), file)
