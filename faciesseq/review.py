"""The review loop: a geologist corrects the decoded tracts, and the model learns from it.

1. ``decode --review-sheet`` writes an *interpretation sheet* (:func:`sheet_table`,
   :func:`write_sheet`): one row per decoded bed with the model's tract and its
   probability, the interpreter's tract where the source had one, and two empty
   columns for the geologist, ``geologist_tract`` and ``note``.
2. The geologist fills ``geologist_tract`` where the model is wrong (or right and
   worth keeping) in a spreadsheet program.
3. ``relabel`` (:func:`read_sheet`, :func:`relabel`) puts the geologist's tracts on
   the source intervals and records where each label came from in a
   ``label_source`` column (the sheet's file name, or ``source`` for a label kept
   from the source table).
4. ``fit --labels`` learns from the relabelled table; the model file's provenance
   counts the labels per origin (:func:`label_source_counts`).
5. ``decode --review-sheet`` again: the next sheet shows where each label came from
   (``label_source``) and the geologist's notes (``review_note`` of the relabelled
   table); ``decode --labels tract --keep-labels`` keeps the labelled beds' tracts
   and decodes the rest around them.

The sheet carries a *record* of what decode wrote (:func:`sheet_record`: the model
and scheme files, the depth units, a digest of the decoded column and of the notes), as a first
``# `` line of the CSV and a line of the XLSX's read-me worksheet: ``relabel``
refuses a sheet whose decoded column was edited instead of ``geologist_tract``
(:func:`check_edits`), takes the label column and tract codes the record names where
its options are not given (:func:`relabel_settings`), and its next ``fit`` command
names the scheme.

Depths in the sheet are those of the decoded core set (its units, positive
downward); rows are in depth order within each core. Rows are beds (runs of
source intervals), or the cells of a depth grid (``fit --unit grid --step``),
which ``relabel`` puts on the intervals holding their mid-depths.
"""

from __future__ import annotations

import base64
import csv
import hashlib
import math
import zlib
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.core import CoreTable
from faciesseq.errors import InputError
from faciesseq.interpretation import CLAMPED
from faciesseq.io.tabular import decimal_commas, sniff_delimiter

__all__ = [
    "GEOLOGIST",
    "LABEL_SOURCE",
    "RelabelResult",
    "RelabelSettings",
    "check_edits",
    "label_source_counts",
    "read_sheet",
    "relabel",
    "relabel_settings",
    "sheet_record",
    "sheet_table",
    "write_sheet",
]

#: The geologist's columns of the sheet, left empty by ``decode``.
GEOLOGIST = ("geologist_tract", "note")
#: Column of a relabelled table naming where each interval's label came from.
LABEL_SOURCE = "label_source"
#: ``label_source`` of a label kept from the source table.
FROM_SOURCE = "source"
#: Column of a relabelled table holding the geologist's note of each interval's bed
#: (not ``note``: a source may describe its intervals in a column of that name).
REVIEW_NOTE = "review_note"
#: First words of the sheet's record line (see :func:`sheet_record`).
RECORD_START = "# faciesseq review sheet"
#: Name of the sheet files in the decode folder (``.csv`` and ``.xlsx``).
SHEET_NAME = "sheet"
#: Worksheet names of the XLSX sheet.
DATA_SHEET, README_SHEET = "interpretation", "read me"
#: Columns the sheet must keep for ``relabel`` to read it.
REQUIRED = ("core", "top", "base", "geologist_tract")
#: Depths closer than this (depth units) are the same.
TOLERANCE = 1e-6

README = (
    "One row per decoded bed, in depth order (depth positive downward) within each core. "
    "'decoded_tract' is the model's most likely tract and 'probability' its posterior "
    "probability; 'interpreter_tract' is the tract the source already had, if any. Where "
    "you disagree with the decoded tract, or want a bed's tract kept as it is, choose the "
    "tract in 'geologist_tract' (the list holds the tract codes of the model: {codes}) and, "
    "if you like, say why in 'note' (notes are kept in the relabelled table, column "
    "'review_note', and shown in the next sheet). 'label_source' says where a source label "
    "came from (a sheet's file name, or 'source'). Leave a cell empty to keep the source's "
    "label. Do not change core, top, base or decoded_tract (relabel refuses a sheet whose "
    "decoded_tract was edited), and do not add rows. Then run `faciesseq relabel SHEET "
    "SOURCE -o labelled.csv` and the fit it prints."
)


# --------------------------------------------------------------------- the sheet


def _interpreter_column(beds: pd.DataFrame, labels: str | None) -> str | None:
    """The bed column holding the interpreter's tract (``decode`` renames ``tract``)."""
    name = "interpreted_tract" if labels in (None, "tract") else labels
    return name if name in beds.columns else None


def sheet_table(interp, labels: str | None = "tract") -> pd.DataFrame:
    """The interpretation sheet of a decoded core set.

    Parameters
    ----------
    interp
        An :class:`~faciesseq.interpretation.Interpretation`.
    labels
        The interpreter's tract column of the source (``decode --labels``); an
        ``interpreter_tract`` column is added where the beds have it.

    Returns
    -------
    pandas.DataFrame
        ``core, top, base, thickness, facies, decoded_tract, probability``
        (posterior of the decoded tract), ``clamped`` (only in a decode that kept
        the labels: whether the bed was held to its label), ``interpreter_tract``
        (only where the source had one), ``label_source`` (only where the source
        has one: a relabelled table), ``geologist_tract`` (empty) and ``note``
        (the source's ``review_note`` where it has one, else empty); one row per
        decoded bed, depth order within each core.
    """
    frames, with_interpreter, with_origin, with_clamped = [], False, False, False
    for core in interp:
        beds = core.beds
        if not len(beds):
            continue
        p = beds[[f"p_{t}" for t in core.tracts]].to_numpy(float)
        which = pd.Index(core.tracts).get_indexer(beds["tract"].astype(str))
        part = pd.DataFrame(
            {
                "core": core.core,
                "top": beds["top"].to_numpy(float),
                "base": beds["base"].to_numpy(float),
                "thickness": (beds["base"] - beds["top"]).to_numpy(float),
                "facies": beds["facies"].astype(str).to_numpy(),
                "decoded_tract": beds["tract"].astype(str).to_numpy(),
                "probability": p[np.arange(len(beds)), which],
            }
        )
        column = _interpreter_column(beds, labels)
        if column is not None:
            with_interpreter = True
            part["interpreter_tract"] = beds[column].to_numpy(dtype=object)
        for name, shown in ((LABEL_SOURCE, LABEL_SOURCE), (REVIEW_NOTE, "note")):
            if name in beds.columns:  # a relabelled source: origins and notes shown again
                with_origin |= name == LABEL_SOURCE
                part[shown] = [_text(v) or None for v in beds[name].to_numpy(dtype=object)]
        if CLAMPED in beds.columns:
            with_clamped = True
            part[CLAMPED] = beds[CLAMPED].to_numpy(dtype=bool)
        frames.append(part.sort_values(["top", "base"], kind="stable"))
    columns = ["core", "top", "base", "thickness", "facies", "decoded_tract", "probability"]
    columns += [CLAMPED] * with_clamped + ["interpreter_tract"] * with_interpreter
    columns += [LABEL_SOURCE] * with_origin + list(GEOLOGIST)
    table = pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()
    for name in columns:
        if name not in table.columns:
            table[name] = pd.Series([None] * len(table), dtype=object)
    return table[columns]


def xlsx_available() -> bool:
    """Whether openpyxl (the ``excel`` extra) can be imported."""
    from faciesseq._optional import MissingExtraError, import_optional

    try:
        import_optional("openpyxl", "writing the review sheet as .xlsx")
    except MissingExtraError:
        return False
    return True


def _digest(values) -> str:
    text = "\n".join(values)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]


def _keys(table: pd.DataFrame) -> list[str]:
    """``core<TAB>top`` of every row, as text that a spreadsheet's round trip keeps
    (``100.0`` read back as ``100``)."""
    tops = [f"{float(t):.6f}" for t in table["top"]]
    return [f"{_text(c)}\t{t}" for c, t in zip(table["core"], tops, strict=True)]


def _column_digest(table: pd.DataFrame, column: str) -> str:
    """Digest of one column of the sheet, rows taken in core and depth order (a
    spreadsheet user may sort them), blanks as empty text, case kept."""
    pairs = sorted(zip(_keys(table), (_text(v) for v in table[column]), strict=True))
    return _digest(f"{k}\t{v}" for k, v in pairs)


#: Longest text of :func:`_decoded_runs` kept in a record: the XLSX keeps the record in
#: one cell (at most 32,767 characters); a longer one is left out, and a sheet that lost
#: rows then cannot have its decoded_tract checked.
MAX_RUNS_TEXT = 30_000


def _sorted_rows(table: pd.DataFrame) -> list[tuple[str, float, str, str]]:
    """``(core, top, top as text, decoded_tract)`` of every row, in core and depth order;
    the top rounded as :func:`_keys` writes it, so that a round trip compares equal."""
    tops = [f"{float(t):.6f}" for t in table["top"]]
    rows = zip(table["core"], tops, table["decoded_tract"], strict=True)
    return sorted((_text(c), float(t), t, _text(v)) for c, t, v in rows)


def _decoded_runs(table: pd.DataFrame) -> str:
    """Where ``decoded_tract`` changes down each core (``core, top, tract`` of the first
    row of every run), compressed as one word, so that relabel can check the column
    row by row on a sheet that lost rows (:func:`_runs_mismatch`)."""
    lines, last = [], None
    for core, _, top, tract in _sorted_rows(table):
        if (core, tract) != last:
            lines.append(f"{core}\t{top}\t{tract}")
        last = (core, tract)
    packed = zlib.compress("\n".join(lines).encode("utf-8"), 9)
    return base64.urlsafe_b64encode(packed).decode("ascii")


def _read_runs(runs: str) -> dict[str, tuple[list[float], list[str]]] | None:
    """The runs of :func:`_decoded_runs` per core (first tops, tracts), or None where
    the text cannot be read back (edited)."""
    try:
        packed = base64.urlsafe_b64decode(runs.encode("ascii"))
        lines = zlib.decompress(packed).decode("utf-8").split("\n")
        starts: dict[str, tuple[list[float], list[str]]] = {}
        for core, top, tract in (line.split("\t") for line in lines if line):
            starts.setdefault(core, ([], []))[0].append(float(top))
            starts[core][1].append(tract)
    except (ValueError, zlib.error, UnicodeError):
        return None
    return starts


def _runs_mismatch(sheet: pd.DataFrame, runs: str) -> tuple[str, float, str, str] | None:
    """The first row (core, top, decoded_tract, what decode wrote) whose decoded_tract
    is not the tract of its run in ``runs`` (:func:`_decoded_runs`), or None."""
    starts = _read_runs(runs) or {}
    for core, top, _, tract in _sorted_rows(sheet):
        tops, tracts = starts.get(core, ([], []))
        i = int(np.searchsorted(tops, top, side="right")) - 1
        wrote = tracts[i] if i >= 0 else ""
        if tract != wrote:
            return core, top, tract, wrote
    return None


def sheet_record(
    table: pd.DataFrame,
    model: str | None = None,
    scheme: str | None = None,
    labels="tract",
    tracts: Sequence[str] = (),
    units: str | None = None,
) -> dict[str, str]:
    """What decode wrote into a sheet, for ``relabel`` to check the sheet, default its
    options and say the next fit: ``model`` and ``scheme`` (absolute paths of the files
    decode read, ``none`` for a model without a scheme), ``labels`` (the interpreter's
    column, which relabel fills), ``units`` (``m`` or ``ft``, the depth units decode read
    the source in and the sheet's depths are in, which relabel reads a source stating
    none in; left out where not given), ``tracts`` (the model's tract codes,
    comma-separated, which relabel accepts; left out where none are given), ``beds`` (rows), digests
    of ``decoded_tract`` and ``note`` as written, and ``runs``, the decoded tracts down
    each core (:func:`_decoded_runs`; left out of a sheet too long for it), which
    checks ``decoded_tract`` row by row on a sheet that lost rows."""
    record = {
        "model": str(model) if model else "none",
        "scheme": str(scheme) if scheme else "none",
        "labels": labels or "tract",
    }
    if units:
        record["units"] = units
    if tracts:
        record["tracts"] = ",".join(tracts)
    record["beds"] = str(len(table))
    record["decoded"] = _column_digest(table, "decoded_tract")
    record["notes"] = _column_digest(table, "note")
    runs = _decoded_runs(table)
    if len(runs) <= MAX_RUNS_TEXT:
        record["runs"] = runs
    return record


def record_line(record: dict[str, str]) -> str:
    """The record as one line: ``# faciesseq review sheet; model: ...; beds: 180; ...``."""
    return "; ".join([RECORD_START, *(f"{k}: {v}" for k, v in record.items())])


def parse_record(line: str) -> dict[str, str] | None:
    """The record of a line written by :func:`record_line`, or None for another line."""
    line = str(line).strip()
    if not line.startswith(RECORD_START):
        return None
    record = {}
    for item in line[len(RECORD_START) :].split("; "):
        key, sep, value = item.partition(": ")
        if sep:
            record[key.strip()] = value.strip()
    return record


#: Keys of every record :func:`sheet_record` writes (``tracts`` and ``units`` are read
#: where present: the record of an older decode lacks them).
RECORD_KEYS = ("model", "scheme", "labels", "beds", "decoded", "notes")


def record_problem(record: dict[str, str]) -> str | None:
    """What makes a record read back by :func:`parse_record` unusable (a key missing or
    empty, a bed count that is not a number, an empty tract list), or None."""
    missing = [key for key in RECORD_KEYS if not record.get(key)]
    if missing:
        return f"it lacks {', '.join(missing)}"
    if not record["beds"].isdigit():
        return f"its bed count {record['beds']!r} is not a number"
    if "tracts" in record and not _record_tracts(record):
        return "its tract list is empty"
    if "units" in record and record["units"] not in ("m", "ft"):
        return f"its units {record['units']!r} are neither m nor ft"
    if "runs" in record and _read_runs(record["runs"]) is None:
        return "its runs cannot be read back"
    return None


def _record_tracts(record: dict[str, str]) -> tuple[str, ...]:
    return tuple(t.strip() for t in record.get("tracts", "").split(",") if t.strip())


@dataclass(frozen=True)
class RelabelSettings:
    """What ``relabel`` goes by (:func:`relabel_settings`).

    Attributes
    ----------
    labels
        The label column to fill.
    tracts
        Tract codes the sheet's ``geologist_tract`` may hold.
    record
        The sheet's record to check the edits with (:func:`check_edits`) and to name
        the scheme of the next fit; None where the sheet has none, or a damaged one
        that the options given make unnecessary.
    damaged
        What is wrong with a record that was set aside (None otherwise).
    units
        The depth units the sheet's decode read the source in (its record's), which a
        source stating none is read in; None where the record does not say (a sheet of
        an older decode, or none).
    """

    labels: str
    tracts: tuple[str, ...]
    record: dict[str, str] | None = None
    damaged: str | None = None
    units: str | None = None


def relabel_settings(
    record: dict[str, str] | None,
    file: str,
    *,
    labels: str | None = None,
    tracts: Sequence[str] | None = None,
) -> RelabelSettings:
    """The label column and tract codes of a relabel: the options given, else the
    sheet's record (:func:`sheet_record`), else ``tract`` and the four tracts for a
    sheet without a record (from a decode older than the record).

    Parameters
    ----------
    record
        The sheet's record (``read_sheet(...).attrs["record"]``), or None.
    file
        The sheet's name, for messages.
    labels, tracts
        ``--labels`` and the codes of ``--tracts``, where given; they win over the
        record. A record of an older decode names no tracts: the four tracts then.

    Returns
    -------
    RelabelSettings
        The label column, the tract codes and the record to check the edits with.

    Raises
    ------
    InputError
        The record line is there but damaged (:func:`record_problem`) and an option
        it would have given is not (exit code 1).
    """
    from faciesseq.scheme import default_tract_model

    damaged = record_problem(record) if record is not None else None
    if damaged and (labels is None or tracts is None):
        options = (("labels", labels), ("tracts", tracts))
        missing = " and ".join(f"--{name}" for name, value in options if value is None)
        raise InputError(
            f"the sheet's record line ('{RECORD_START}; ...', written by decode) is damaged: "
            f"{damaged}; restore it as decode wrote it, or give {missing}",
            file=file,
        )
    if damaged:
        record = None
    recorded = record or {}
    return RelabelSettings(
        labels=labels or recorded.get("labels") or "tract",
        tracts=tuple(tracts or _record_tracts(recorded) or default_tract_model().codes),
        record=record,
        damaged=damaged,
        units=recorded.get("units"),
    )


def write_sheet(
    interp,
    folder: Path,
    labels: str | None = "tract",
    *,
    model: str | None = None,
    scheme: str | None = None,
) -> list[Path]:
    """Write ``folder/sheet.csv`` and, where openpyxl is installed, ``folder/sheet.xlsx``.

    ``folder`` is a new folder being filled (``decode`` builds its output
    beside the target and swaps it in whole), so the files are written in
    place. Depths and thicknesses are rounded to :data:`DEPTH_DECIMALS` decimals
    of the depth unit (the bed depths are sums of interval depths, and
    ``1.43`` came out as ``1.4300000000000068``), probabilities to
    :data:`PROBABILITY_DECIMALS` (shown with 2 in the XLSX); ``relabel`` matches
    depths to :data:`TOLERANCE`, which the rounding stays within.

    The sheet's record (:func:`sheet_record`, with ``model`` and ``scheme``, the
    files decode read) is the first line of the CSV (``# faciesseq review sheet;
    ...``) and the last line of the XLSX's read-me worksheet.

    Returns
    -------
    list of pathlib.Path
        The files written.
    """
    table = rounded(sheet_table(interp, labels))
    units = next((core.units for core in interp), None)
    record = sheet_record(table, model, scheme, labels, tuple(interp.tracts), units)
    line = record_line(record)
    folder = Path(folder)
    written = [folder / f"{SHEET_NAME}.csv"]
    with written[0].open("w", newline="", encoding="utf-8") as handle:
        csv.writer(handle, lineterminator="\n").writerow([line])
        table.to_csv(handle, index=False, lineterminator="\n")
    if xlsx_available():
        written.append(folder / f"{SHEET_NAME}.xlsx")
        _write_xlsx(table, written[1], tuple(interp.tracts), line)
    return written


#: Decimals of the depth unit the sheet's depths and thicknesses are written with
#: (1e-6 m or ft: finer than any core description, within :data:`TOLERANCE`).
DEPTH_DECIMALS = 6
#: Decimals of the sheet's probabilities.
PROBABILITY_DECIMALS = 4


def rounded(table: pd.DataFrame) -> pd.DataFrame:
    """The sheet with its depths, thicknesses and probabilities rounded for writing
    (:data:`DEPTH_DECIMALS`, :data:`PROBABILITY_DECIMALS`): no float noise in the file."""
    decimals = {"top": DEPTH_DECIMALS, "base": DEPTH_DECIMALS, "thickness": DEPTH_DECIMALS}
    decimals["probability"] = PROBABILITY_DECIMALS
    return table.round({k: v for k, v in decimals.items() if k in table.columns})


def _write_xlsx(table: pd.DataFrame, path: Path, tracts: Sequence[str], record: str) -> None:
    from faciesseq._optional import import_optional

    openpyxl = import_optional("openpyxl", "writing the review sheet as .xlsx")
    from openpyxl.styles import Alignment, Font, PatternFill
    from openpyxl.utils import get_column_letter
    from openpyxl.worksheet.datavalidation import DataValidation

    book = openpyxl.Workbook()
    ws = book.active
    ws.title = DATA_SHEET
    columns = list(table.columns)
    ws.append(columns)
    for row in table.itertuples(index=False):
        ws.append([_cell(v) for v in row])
    ws.freeze_panes = "A2"
    bold = Font(bold=True)
    fill = PatternFill("solid", start_color="FFF2CC", end_color="FFF2CC")
    widths = {"core": 14, "facies": 10, "decoded_tract": 14, "interpreter_tract": 16}
    widths |= {"geologist_tract": 16, "note": 40, LABEL_SOURCE: 16}
    last = max(len(table) + 1, 2)
    for j, name in enumerate(columns, start=1):
        letter = get_column_letter(j)
        ws.column_dimensions[letter].width = widths.get(name, 11)
        ws.cell(1, j).font = bold
        if name in ("top", "base", "thickness"):
            for (cell,) in ws[f"{letter}2:{letter}{last}"]:
                cell.number_format = "0.00"
        if name == "probability":
            for (cell,) in ws[f"{letter}2:{letter}{last}"]:
                cell.number_format = "0.00"
        if name in GEOLOGIST:
            for (cell,) in ws[f"{letter}1:{letter}{last}"]:
                cell.fill = fill
    tract_col = get_column_letter(columns.index("geologist_tract") + 1)
    choice = DataValidation(
        type="list",
        formula1='"' + ",".join(tracts) + '"',
        allow_blank=True,
        showErrorMessage=True,
        errorTitle="tract code",
        error="Choose one of the tract codes of the model: " + ", ".join(tracts),
    )
    choice.add(f"{tract_col}2:{tract_col}{last}")
    ws.add_data_validation(choice)
    notes = book.create_sheet(README_SHEET)
    notes["A1"] = "How to fill the interpretation sheet"
    notes["A1"].font = bold
    notes["A2"] = README.format(codes=", ".join(tracts))
    notes["A2"].alignment = Alignment(wrap_text=True, vertical="top")
    notes.column_dimensions["A"].width = 100
    notes.row_dimensions[2].height = 150
    notes["A4"] = record  # what decode wrote, for relabel to check; leave it as it is
    book.save(path)


def _cell(value):
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if isinstance(value, np.generic):
        return value.item()
    return value


# --------------------------------------------------------------- reading it back


def _text(value) -> str:
    """A cell as text: empty for missing, ``3`` for a whole number read as ``3.0``."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


def read_sheet(path: str | Path) -> pd.DataFrame:
    """Read a filled interpretation sheet (``.csv`` or ``.xlsx``, its first worksheet).

    Returns
    -------
    pandas.DataFrame
        The sheet's columns as text, ``top`` and ``base`` as numbers, and ``row``
        (1-based data row, as a spreadsheet user counts them after the header);
        ``attrs["record"]`` the sheet's record (:func:`sheet_record`), or None for
        a sheet without one (written by an older decode, or the line deleted).

    Raises
    ------
    InputError
        The sheet lacks a required column (``core``, ``top``, ``base``,
        ``geologist_tract``) or a depth is not a number (exit code 1).
    """
    path = Path(path)
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        raw, record = _read_xlsx(path)
    else:
        delimiter = _csv_delimiter(path)
        record = _csv_record(path, delimiter)
        try:
            raw = pd.read_csv(
                path,
                sep=delimiter,
                dtype=str,
                keep_default_na=False,
                comment=None,
                skiprows=int(bool(record)),
                encoding="utf-8-sig",  # as a spreadsheet program saves "CSV UTF-8"
            )
        except (pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError) as exc:
            msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            raise InputError(f"cannot read the sheet as CSV: {msg}", file=path.name) from None
        if delimiter != ",":  # saved where the decimal mark is a comma: 2,34 for 2.34
            numbers = [c for c in ("top", "base") if c in raw.columns]
            raw[numbers] = decimal_commas(raw[numbers].copy())[0]
    raw.columns = [str(c).strip() for c in raw.columns]
    missing = [c for c in REQUIRED if c not in raw.columns]
    if missing:
        raise InputError(
            f"the sheet lacks column(s) {', '.join(missing)}; give the sheet written by "
            "`faciesseq decode --review-sheet`",
            file=path.name,
        )
    table = pd.DataFrame({c: [_text(v) for v in raw[c]] for c in raw.columns})
    table["row"] = np.arange(1, len(table) + 1)
    for name in ("top", "base"):
        values = pd.to_numeric(table[name], errors="coerce")
        bad = np.flatnonzero(values.isna().to_numpy() | ~np.isfinite(values.to_numpy(float)))
        if len(bad):
            i = int(bad[0])
            raise InputError(
                f"{name} {table[name].iat[i]!r} is not a depth; keep the sheet's core, top "
                "and base as decode wrote them",
                file=path.name,
                row=i + 1,
                core=table["core"].iat[i] or None,
            )
        table[name] = values.to_numpy(float)
    table.attrs["record"] = record
    return table


def _csv_delimiter(path: Path) -> str:
    """The delimiter of a CSV sheet: decode's comma, or the one a spreadsheet program saved
    it with (a semicolon where the decimal mark is a comma), sniffed below the record."""
    try:
        with path.open(newline="", encoding="utf-8-sig") as handle:
            lines = [line for _, line in zip(range(52), handle)]
    except (OSError, UnicodeDecodeError):
        return ","  # read_csv says what is wrong with the file
    if lines and RECORD_START in lines[0][:40]:
        lines = lines[1:]
    return sniff_delimiter("".join(lines), path.suffix.lower()) if lines else ","


def _csv_record(path: Path, delimiter: str = ",") -> dict[str, str] | None:
    """The record of a CSV sheet's first line (a spreadsheet program may have quoted
    it or padded it with empty cells), or None."""
    try:
        with path.open(newline="", encoding="utf-8-sig") as handle:
            first = next(csv.reader(handle, delimiter=delimiter), [])
    except (OSError, UnicodeDecodeError, csv.Error):
        return None  # read_csv says what is wrong with the file
    return parse_record(",".join(c for c in first if c.strip())) if first else None


def _read_xlsx(path: Path) -> tuple[pd.DataFrame, dict[str, str] | None]:
    from faciesseq._optional import import_optional

    openpyxl = import_optional("openpyxl", "reading .xlsx workbooks")
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # a corrupt or foreign file: one line, not a traceback
        raise InputError(f"cannot read the sheet as XLSX: {exc}", file=path.name) from None
    record = None
    try:
        ws = book[DATA_SHEET] if DATA_SHEET in book.sheetnames else book.worksheets[0]
        rows = [list(r) for r in ws.iter_rows(values_only=True)]
        if README_SHEET in book.sheetnames:
            for (value,) in book[README_SHEET].iter_rows(max_col=1, values_only=True):
                record = record or parse_record(value or "")
    finally:
        book.close()
    rows = [r for r in rows if any(v is not None and str(v).strip() for v in r)]
    if not rows:
        return pd.DataFrame(), record
    header = [_text(v) for v in rows[0]]
    body = [r + [None] * (len(header) - len(r)) for r in rows[1:]]
    table = pd.DataFrame([r[: len(header)] for r in body], columns=header, dtype=object)
    return table, record


# ---------------------------------------------------------------------- relabel


@dataclass(frozen=True)
class RelabelResult:
    """What :func:`relabel` did.

    Attributes
    ----------
    cores
        The relabelled :class:`~faciesseq.core.CoreSet` (label column filled,
        ``label_source`` added).
    sheet
        The sheet's file name (the ``label_source`` of its labels).
    labels
        The label column.
    filled
        Sheet beds the geologist gave a tract, per core.
    changed
        Of those, beds whose label changed (a new label, or another tract than
        the source's), per core.
    intervals_changed
        Source intervals whose label changed.
    labelled_before, labelled_after
        Cores with at least one labelled interval, before and after.
    agreement
        Thickness-weighted share of the filled beds where the decoded tract is
        the geologist's (``None`` when the sheet has no decoded tract or no
        filled bed); ``agreement_beds`` the same per bed, ``agreement_thickness``
        the thickness compared.
    notes
        Sheet beds whose note was put on their intervals (``review_note``).
    """

    cores: object
    sheet: str
    labels: str
    filled: dict[str, int] = field(default_factory=dict)
    changed: dict[str, int] = field(default_factory=dict)
    intervals_changed: int = 0
    labelled_before: tuple[str, ...] = ()
    labelled_after: tuple[str, ...] = ()
    agreement: float | None = None
    agreement_beds: float | None = None
    agreement_thickness: float = 0.0
    notes: int = 0

    @property
    def newly_labelled(self) -> tuple[str, ...]:
        before = set(self.labelled_before)
        return tuple(c for c in self.labelled_after if c not in before)


def _canonical_tracts(tracts: Sequence[str]) -> dict[str, str]:
    return {t.upper(): t for t in tracts}


def _present(values: pd.Series) -> np.ndarray:
    text = values.astype(object).where(values.notna(), "").astype(str).str.strip()
    return (text != "").to_numpy() & values.notna().to_numpy()


def relabel(sheet: pd.DataFrame, cores, tracts: Sequence[str], *, file: str, labels: str = "tract"):
    """Put the geologist's tracts of a filled sheet on the source intervals.

    Every interval of a sheet bed (same core; top and base within the bed)
    takes the bed's ``geologist_tract`` where that cell is filled; elsewhere
    the source's label is kept. A sheet of a depth-grid model (rows of one
    height, some not a run of intervals) is read cell by cell: each interval
    takes the tract of the edited cells whose mid-depth lies in it, where they
    agree and are more than half of its cells (:func:`_read_cell_edits`). A
    ``label_source`` column records the origin of each label: ``file`` (the
    sheet's name) or ``source`` (an existing ``label_source`` value is kept
    with its label). A bed's ``note`` goes on its
    intervals in a ``review_note`` column (an empty note keeps the table's own),
    which the next ``decode --review-sheet`` shows in the sheet's ``note``.

    Parameters
    ----------
    sheet
        A sheet read by :func:`read_sheet`.
    cores
        The source :class:`~faciesseq.core.CoreSet` the sheet was decoded from.
    tracts
        Tract codes of the tract model (case is not significant in the sheet).
    file
        The sheet's name, for messages and ``label_source``.
    labels
        The label column of the source (created where absent).

    Raises
    ------
    InputError
        A sheet bed whose core, top and base match no run of source intervals,
        a tract code not in the tract model, or two sheet beds giving one
        interval different tracts; on a grid, a cell whose middle lies in no
        interval, or the edited cells of one interval giving it two tracts or
        being half of its cells or fewer; the message names the sheet, row,
        core and depth (on a grid, the interval's top and base).
    """
    from faciesseq.core import CoreSet

    known = _canonical_tracts(tracts)
    matched, noted = _read_edits(sheet, cores, tracts, file)
    any_notes = bool(noted)
    relabelled = {
        name: _relabel_core(
            name,
            core,
            matched.get(name, []),
            noted.get(name, []),
            notes_column=any_notes,
            labels=labels,
            file=file,
            units=cores.units,
        )
        for name, core in cores.cores.items()
    }
    new_cores = CoreSet(
        {name: done.core for name, done in relabelled.items()},
        cores.units,
        cores.problems,
        cores.sources,
        cores.meta,
    )
    done = relabelled.values()
    return RelabelResult(
        cores=new_cores,
        sheet=file,
        labels=labels,
        filled={name: d.filled for name, d in relabelled.items() if d.filled},
        changed={name: d.changed for name, d in relabelled.items() if d.filled},
        intervals_changed=sum(d.intervals_changed for d in done),
        labelled_before=tuple(name for name, d in relabelled.items() if d.labelled_before),
        labelled_after=tuple(name for name, d in relabelled.items() if d.labelled_after),
        notes=sum(len(v) for v in noted.values()),
        **_agreement(sheet, known),
    )


#: A sheet bed's source intervals (positions in its core's table) and its tract and
#: data row, or its note.
_Given = tuple[np.ndarray, str, int]
_Noted = tuple[np.ndarray, str]


def _read_edits(
    sheet: pd.DataFrame, cores, tracts: Sequence[str], file: str
) -> tuple[dict[str, list[_Given]], dict[str, list[_Noted]]]:
    """The geologist's tracts and notes of the sheet, per core, each on the source
    intervals of its bed (:func:`_bed_intervals`), or of its cell where the sheet is
    of a depth-grid model (:func:`_cell_height`, :func:`_read_cell_edits`); a tract code
    outside the tract model is an error naming the row."""
    if _cell_height(sheet, cores) is not None:
        return _read_cell_edits(sheet, cores, tracts, file)
    known = _canonical_tracts(tracts)
    matched: dict[str, list[_Given]] = {}
    noted: dict[str, list[_Noted]] = {}
    for bed in sheet.itertuples(index=False):
        core, row = bed.core, int(bed.row)
        where = {"file": file, "row": row, "core": core or None, "depth": float(bed.top)}
        where["units"] = cores.units
        inside = _bed_intervals(cores, core, float(bed.top), float(bed.base), where)
        note = getattr(bed, "note", "")
        if note:
            noted.setdefault(core, []).append((inside, note))
        code = _geologist_code(bed.geologist_tract, known, tracts, where)
        if code:
            matched.setdefault(core, []).append((inside, code, row))
    return matched, noted


def _geologist_code(code: str, known: dict[str, str], tracts: Sequence[str], where: dict) -> str:
    """A ``geologist_tract`` cell as the tract model spells it (empty for an empty cell);
    a code outside the tract model is an error located at ``where``."""
    if code and code.upper() not in known:
        raise InputError(
            f"geologist_tract {code!r} is not a tract of the tract model ({', '.join(tracts)})",
            **where,
        )
    return known[code.upper()] if code else ""


def _depth_tolerance(depths: np.ndarray) -> float:
    """:data:`TOLERANCE`, relative below depths of one depth unit."""
    return TOLERANCE * max(1.0, float(np.abs(depths).max(initial=0.0)))


def _cell_height(sheet: pd.DataFrame, cores) -> float | None:
    """The cell height of a sheet decoded with a depth-grid model (``fit --unit grid
    --step``), or None for a sheet of beds.

    The sheet's record does not say how decode cut the cores, so the rows say it: a
    sheet is of grid cells where its rows are all one height (within
    :data:`TOLERANCE`), do not overlap within a core, and some row's top and base are
    not those of a run of source intervals (a sheet whose every row matches is read
    bed by bed, which gives the same labels). A sheet of beds with an edited depth
    is no grid, and stays the error of :func:`_bed_intervals`.
    """
    if not len(sheet):
        return None
    top, base = sheet["top"].to_numpy(float), sheet["base"].to_numpy(float)
    height = base - top
    step = float(np.median(height))
    if not step > 0 or np.abs(height - step).max() > 2 * _depth_tolerance(base):
        return None
    for _, rows in sheet.groupby("core", sort=False):
        t, b = np.sort(rows["top"].to_numpy(float)), np.sort(rows["base"].to_numpy(float))
        if (t[1:] < b[:-1] - _depth_tolerance(b)).any():
            return None
    for bed in sheet.itertuples(index=False):
        if bed.core not in cores.cores:
            return None  # the error of _bed_intervals names the core
        try:
            _bed_intervals(cores, bed.core, float(bed.top), float(bed.base), {})
        except InputError:
            return step
    return None


def _read_cell_edits(
    sheet: pd.DataFrame, cores, tracts: Sequence[str], file: str
) -> tuple[dict[str, list[_Given]], dict[str, list[_Noted]]]:
    """:func:`_read_edits` of a sheet of depth-grid cells (:func:`_cell_height`).

    Each cell belongs to the source interval holding its mid-depth (the interval whose
    facies the model read for the cell, :meth:`faciesseq.core.Core.grid`). An interval
    takes the geologist's tract where its edited cells agree and are more than half of
    its cells (of its thickness on the grid); edited cells giving it two tracts, or
    half of its cells or fewer, are an error naming the interval. A cell's note goes on
    its interval. Every edited cell is one :data:`_Given` (the filled rows are counted
    as a sheet of beds counts its beds).
    """
    known = _canonical_tracts(tracts)
    matched: dict[str, list[_Given]] = {}
    noted: dict[str, list[_Noted]] = {}
    for core, rows in sheet.groupby("core", sort=False):
        rows = rows.sort_values("top", kind="stable")
        at = _cell_intervals(cores, core, rows, file)
        for cell, i in zip(rows.itertuples(index=False), at, strict=True):
            note = getattr(cell, "note", "")
            if note:
                noted.setdefault(core, []).append((np.array([i]), note))
        table = cores[core].intervals
        for i in np.unique(at):
            cells = rows[at == i]
            where = {"file": file, "core": core, "units": cores.units}
            where["depth"] = float(table["top"].iat[i])
            given = []
            for cell in cells.itertuples(index=False):
                code = _geologist_code(
                    cell.geologist_tract, known, tracts, {**where, "row": int(cell.row)}
                )
                if code:
                    given.append((np.array([i]), code, int(cell.row)))
            if given:
                _check_cells_of_interval(table, i, given, len(cells), where)
                matched.setdefault(core, []).extend(given)
    return matched, noted


def _cell_intervals(cores, core: str, cells: pd.DataFrame, file: str) -> np.ndarray:
    """Position in ``core``'s source table of the interval holding each cell's mid-depth;
    a cell whose middle lies in no interval (a gap, or beyond the core) is an error."""
    first = {"file": file, "row": int(cells["row"].iat[0]), "core": core or None}
    if core not in cores.cores:
        raise InputError(
            "core is not in SOURCE; was the sheet decoded from it?",
            depth=float(cells["top"].iat[0]),
            units=cores.units,
            **first,
        )
    table = cores[core].intervals
    t, b = table["top"].to_numpy(float), table["base"].to_numpy(float)
    middle = ((cells["top"] + cells["base"]) / 2).to_numpy(float)
    at = np.searchsorted(t, middle, side="right") - 1
    outside = (at < 0) | (middle >= b[np.clip(at, 0, None)])
    if outside.any():
        k = int(np.flatnonzero(outside)[0])
        top, base = float(cells["top"].iat[k]), float(cells["base"].iat[k])
        raise InputError(
            f"the middle of the cell {top:g}-{base:g} {cores.units} lies in no interval of "
            "SOURCE; was the sheet decoded from it?",
            file=file,
            row=int(cells["row"].iat[k]),
            core=core,
            depth=top,
            units=cores.units,
        )
    return at


def _check_cells_of_interval(
    table: pd.DataFrame, i: int, given: list[_Given], n_cells: int, where: dict
) -> None:
    """Refuse edited cells of one source interval that give it two tracts, or that are
    half of its cells or fewer (the geologist's tract would be guessed for the rest)."""
    interval = f"{table['top'].iat[i]:g}-{table['base'].iat[i]:g} {where['units']}"
    first_code, first_row = given[0][1], given[0][2]
    for _, code, row in given[1:]:
        if code != first_code:
            raise InputError(
                f"the edited cells of the interval {interval} give it two tracts, "
                f"{first_code} (data row {first_row}) and {code} (data row {row}); "
                "give its cells one tract",
                row=row,
                **where,
            )
    if 2 * len(given) <= n_cells:
        raise InputError(
            f"the interval {interval} has {len(given)} of its {n_cells} cells given a tract "
            f"({first_code}), not more than half: fill geologist_tract on more than half "
            "of its cells, or on none",
            row=first_row,
            **where,
        )


def _bed_intervals(cores, core: str, top: float, base: float, where: dict) -> np.ndarray:
    """Positions of the source intervals of one sheet bed: the run of intervals of
    ``core`` from ``top`` to ``base`` (within :data:`TOLERANCE`)."""
    if core not in cores.cores:
        raise InputError("core is not in SOURCE; was the sheet decoded from it?", **where)
    table = cores[core].intervals
    t, b = table["top"].to_numpy(float), table["base"].to_numpy(float)
    tol = TOLERANCE * max(1.0, abs(top), abs(base))
    inside = np.flatnonzero((t >= top - tol) & (b <= base + tol))
    if not len(inside) or abs(t[inside].min() - top) > tol or abs(b[inside].max() - base) > tol:
        raise InputError(
            f"the bed {top:g}-{base:g} {cores.units} matches no interval of SOURCE (its top "
            "and base must be an interval's top and base); was the sheet decoded from it?",
            **where,
        )
    return inside


@dataclass(frozen=True)
class _CoreRelabelled:
    """One core after :func:`_relabel_core`, with its counts for :class:`RelabelResult`."""

    core: object
    filled: int
    changed: int
    intervals_changed: int
    labelled_before: bool
    labelled_after: bool


def _relabel_core(
    name: str,
    core,
    given: list[_Given],
    noted: list[_Noted],
    *,
    notes_column: bool,
    labels: str,
    file: str,
    units: str,
) -> _CoreRelabelled:
    """One source core with the geologist's tracts on its intervals, ``label_source``
    saying where each label came from, and ``review_note`` (where the sheet has a
    note, or the table had the column)."""
    from faciesseq.core import Core

    table = core.intervals.copy()
    old = table[labels] if labels in table.columns else pd.Series([None] * len(table))
    old = old.astype(object).reset_index(drop=True)
    had = _present(old)
    origin = _source_origins(table, had)
    _check_one_tract_per_interval(name, table, given, file=file, units=units)
    old_text = np.array([str(v).strip() for v in old], dtype=object)
    new = old.to_numpy(object).copy()
    n_changed_beds = 0
    intervals_changed = np.zeros(len(table), dtype=bool)  # an interval may have many cells
    for inside, code, _ in given:
        changed = ~had[inside] | (old_text[inside] != code)
        intervals_changed[inside[changed]] = True
        n_changed_beds += bool(changed.any())
        new[inside] = code
        origin[inside] = file
    table[labels] = new
    table[LABEL_SOURCE] = origin
    if notes_column or REVIEW_NOTE in table.columns:
        table[REVIEW_NOTE] = _notes(table, noted)
    return _CoreRelabelled(
        core=Core(name, table, core.units),
        filled=len(given),
        changed=n_changed_beds,
        intervals_changed=int(intervals_changed.sum()),
        labelled_before=bool(had.any()),
        labelled_after=bool(_present(pd.Series(new)).any()),
    )


def _check_one_tract_per_interval(
    name: str, table: pd.DataFrame, given: list[_Given], *, file: str, units: str
) -> None:
    """Refuse two sheet beds giving one interval of core ``name`` different tracts."""
    first: dict[int, tuple[str, int]] = {}
    for inside, code, row in given:
        for i in inside:
            if i in first and first[i][0] != code:
                raise InputError(
                    f"this bed gives {code} to an interval that the sheet's data row "
                    f"{first[i][1]} gives {first[i][0]}",
                    file=file,
                    row=row,
                    core=name,
                    depth=float(table["top"].iat[i]),
                    units=units,
                )
            first[i] = (code, row)


def _source_origins(table: pd.DataFrame, had: np.ndarray) -> np.ndarray:
    """``label_source`` of the labels a core had before the sheet: the table's own
    value where it has one, else ``source``; None where there was no label."""
    origin = np.full(len(table), None, dtype=object)
    if LABEL_SOURCE in table.columns:
        prev = table[LABEL_SOURCE].astype(object)
        origin[had] = np.where(_present(prev)[had], prev.to_numpy(object)[had], FROM_SOURCE)
    else:
        origin[had] = FROM_SOURCE
    return origin


def _notes(table: pd.DataFrame, noted: list[tuple[np.ndarray, str]]) -> np.ndarray:
    """The ``review_note`` column of one core's intervals: a sheet bed's note on every
    interval of the bed, the table's own note kept elsewhere (an empty cell of the
    sheet deletes nothing)."""
    if REVIEW_NOTE in table.columns:
        notes = np.array([_text(v) or None for v in table[REVIEW_NOTE]], dtype=object)
    else:
        notes = np.full(len(table), None, dtype=object)
    texts: dict[int, list[str]] = {}  # the cells of one interval may have notes of their own
    for inside, note in noted:
        for i in inside:
            if note not in texts.setdefault(int(i), []):
                texts[int(i)].append(note)
    for i, said in texts.items():
        notes[i] = "; ".join(said)
    return notes


def check_edits(sheet: pd.DataFrame, file: str) -> None:
    """Refuse a sheet whose edits ``relabel`` would not read (nothing is written).

    Raises
    ------
    InputError
        ``decoded_tract`` is not what decode wrote (the sheet's record, where it
        has one: the geologist wrote in the wrong column), checked row by row over the
        rows present where the record has the decoded runs, else only on a sheet with
        all its rows; or nothing was edited (``geologist_tract`` empty on every row and
        the notes as decode wrote them); exit code 1.
    """
    record = sheet.attrs.get("record") or {}
    same_rows = record.get("beds") == str(len(sheet))
    _check_decoded(sheet, record, same_rows, file)
    if (sheet["geologist_tract"] != "").any():
        return
    if "note" in sheet.columns:
        written = record.get("notes") if same_rows else None
        if written is None and (sheet["note"] != "").any():
            return
        if written is not None and _column_digest(sheet, "note") != written:
            return
    raise InputError(
        f"nothing was edited: geologist_tract is empty on all {len(sheet)} rows; write the "
        "geologist's tracts there (not in decoded_tract) and save the sheet; nothing written",
        file=file,
    )


def _wrong_column(detail: str = "") -> str:
    return (
        f"decoded_tract is not what decode wrote{detail}: write the geologist's tracts in "
        "geologist_tract and leave decoded_tract as it was; nothing written"
    )


def _check_decoded(sheet: pd.DataFrame, record: dict, same_rows: bool, file: str) -> None:
    """Refuse a sheet whose ``decoded_tract`` is not what decode wrote (:func:`check_edits`),
    naming the first row that differs where the record has the runs."""
    if "decoded_tract" not in sheet.columns:
        return
    if "runs" in record:
        wrong = _runs_mismatch(sheet, record["runs"])
        if wrong is not None:
            core, top, tract, wrote = wrong
            row = sheet.loc[(sheet["core"] == core) & ((sheet["top"] - top).abs() < 1e-6), "row"]
            raise InputError(
                _wrong_column(f" (it reads {tract or 'nothing'!r}, decode wrote {wrote!r})"),
                file=file,
                row=int(row.iat[0]) if len(row) else None,
                core=core or None,
                depth=top,
                units=record.get("units"),  # the sheet's depths are in its decode's units
            )
    elif same_rows and _column_digest(sheet, "decoded_tract") != record.get("decoded"):
        raise InputError(_wrong_column(), file=file)


def row_count_note(sheet: pd.DataFrame) -> str | None:
    """One line where the sheet has fewer or more rows than its record says decode wrote
    (rows deleted, or filtered out before saving), saying whether ``decoded_tract`` was
    checked on the rows present; None where the counts agree or there is no record."""
    record = sheet.attrs.get("record") or {}
    if not record.get("beds") or record["beds"] == str(len(sheet)):
        return None
    checked = (
        f"decoded_tract was checked on the {len(sheet)} rows present"
        if "runs" in record
        else "its decoded_tract could not be checked (a sheet of an older decode)"
    )
    how = "deleted or filtered out" if len(sheet) < int(record["beds"]) else "added"
    return (
        f"the sheet has {len(sheet)} rows where decode wrote {record['beds']} (rows {how}): "
        f"beds not in the sheet keep their labels in SOURCE; {checked}"
    )


def _agreement(sheet: pd.DataFrame, known: dict[str, str]) -> dict:
    """Decoded tract against the geologist's, over the filled beds (thickness-weighted)."""
    out = {"agreement": None, "agreement_beds": None, "agreement_thickness": 0.0}
    if "decoded_tract" not in sheet.columns:
        return out
    filled = sheet[sheet["geologist_tract"] != ""]
    if not len(filled):
        return out
    geologist = filled["geologist_tract"].str.upper().map(known)
    same = (filled["decoded_tract"].to_numpy(object) == geologist.to_numpy(object)).astype(float)
    w = (filled["base"] - filled["top"]).to_numpy(float)
    out["agreement_beds"] = float(same.mean())
    out["agreement_thickness"] = float(w.sum())
    out["agreement"] = float((w * same).sum() / w.sum()) if w.sum() > 0 else float(same.mean())
    return out


def label_source_counts(cores) -> dict[str, int]:
    """Labelled intervals per origin (``label_source``: a sheet's name or ``source``),
    for a model file's provenance; empty where the table has no ``label_source``."""
    if isinstance(cores.cores, CoreTable):  # one column of the whole table, no core made
        held = LABEL_SOURCE in cores.cores.table.columns
        parts = [pd.Series(cores.column(LABEL_SOURCE), dtype=object)] if held else []
    else:
        parts = [c.intervals[LABEL_SOURCE] for c in cores if LABEL_SOURCE in c.intervals.columns]
    counts: dict[str, int] = {}
    for values in parts:
        for value, n in values[_present(values)].astype(str).str.strip().value_counts().items():
            counts[value] = counts.get(value, 0) + int(n)
    return dict(sorted(counts.items()))


def sheet_note(folder: Path) -> str:
    """One line on the review sheet ``decode`` wrote into ``folder``."""
    from faciesseq._optional import install_hint

    csv = Path(folder) / f"{SHEET_NAME}.csv"
    if xlsx_available():
        return f"review sheet: {csv} and {csv.with_suffix('.xlsx')} (fill geologist_tract)"
    return (
        f"review sheet: {csv} (fill geologist_tract); the .xlsx sheet, with a tract list, "
        f"needs openpyxl: {install_hint('excel')}"
    )
