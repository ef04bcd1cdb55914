"""From raw tables to a validated :class:`~faciesseq.core.CoreSet`: clear errors, nothing lost.

Every problem is recorded as a :class:`~faciesseq.errors.Problem` with file,
row, core and depth. Rows with an error are left out of the cores (and listed);
repairs (a small overlap snapped, rows put in depth order, a repeated sample
left out on request, depths converted between units) are listed too. Problem
kinds (stable keys, see docs/io.md):

errors
    ``missing-depth``, ``bad-depth``, ``missing-core``, ``missing-facies``
    (interval layout), ``unknown-facies``, ``top-below-base``,
    ``zero-thickness``, ``overlap`` (larger than the tolerance),
    ``repeated-depth``, ``duplicate-core``, ``no-cores``
warnings
    ``gap``, ``irregular-spacing``, ``step-change`` (a samples log whose step
    changes part-way, read as one succession), ``not-described`` (sample without a
    facies), ``null`` (LAS null values), ``encoding``, ``units``, ``units-suspect``
    (no units stated and depths that look like feet),
    ``no-core-column``, ``empty-core``, ``too-short``, ``grain-size``,
    ``negative-depth`` (every depth of a core above zero: elevations?),
    ``unknown-contact`` (a contact type holding no known word: read as missing)
repairs
    ``overlap`` (within the tolerance, snapped), ``depth-order``,
    ``repeated-depth`` (``repeated_depths="keep-first"``), ``units-converted``,
    ``decimal-comma``,
    ``grain-size``
"""

from __future__ import annotations

import contextlib
import math
import re
import unicodedata
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from functools import partial
from itertools import pairwise

import numpy as np
import pandas as pd

from faciesseq.core import DEPTH_TOL, Core, CoreSet, CoreTable, in_units, plain_frame
from faciesseq.errors import ConfigError, FaciesseqError, InputError, Problem
from faciesseq.io.columns import ColumnMatch, match_columns, normalise_units
from faciesseq.io.contacts import known_contact, known_words
from faciesseq.io.raw import NUMBER_NA_WORDS, RawTable, check_width
from faciesseq.io.spacing import (
    GAP_FACTOR,
    Spacing,
    irregular,
    modal_step,
    off_steps,
    read_spacing,
)
from faciesseq.io.wording import COMMAND_LINE, Wording
from faciesseq.scheme import FaciesScheme, _code

__all__ = [
    "GAP_FACTOR",
    "OVERLAP_TOLERANCE_M",
    "build_coreset",
    "facies_code",
    "feet_suspected",
]

#: Overlaps up to this thickness (metres; 1 cm) are rounding: snapped and reported.
OVERLAP_TOLERANCE_M = 0.01
#: Changes of sample step named in the ``step-change`` warning before "and N more".
SHOWN_CHANGES = 5
#: Numbers that mean "no value" in exported well data.
NULL_NUMBERS = (-999.25, -999.0, -9999.0)
#: Depths deeper (or higher) than this, in metres or feet, are no depth: the Earth's
#: radius is 6,371 km and the deepest borehole, Kola SG-3, 12,262 m (40,230 ft); some
#: exports write 1e30 or 1.70141e38 for "no value".
MAX_DEPTH = 1e7

_STANDARD = ("grain_size", "contact", "tract", "lithology")
_RESERVED = {"core", "top", "base", "depth", "facies", "_file", "_row", "units", *_STANDARD}

# Grain-size words -> class numbers of the scheme (1 clay ... 7 gravel); common practice.
_GRAIN_WORDS = {
    "clay": 1.0,
    "cl": 1.0,
    "mud": 1.5,
    "silt": 2.0,
    "si": 2.0,
    "veryfine": 3.0,
    "vf": 3.0,
    "vfs": 3.0,
    "fine": 4.0,
    "f": 4.0,
    "fs": 4.0,
    "medium": 5.0,
    "m": 5.0,
    "ms": 5.0,
    "coarse": 6.0,
    "c": 6.0,
    "cs": 6.0,
    "verycoarse": 6.5,
    "vc": 6.5,
    "vcs": 6.5,
    "granule": 7.0,
    "pebble": 7.0,
    "gravel": 7.0,
    "conglomerate": 7.0,
}


def facies_code(value: object) -> str | None:
    """A facies code as text: ``3``, ``3.0``, ``"3"``, ``"3.0"`` are ``"3"``; blank is ``None``."""
    if value is None:
        return None
    if isinstance(value, float | np.floating):
        if np.isnan(value) or float(value) in NULL_NUMBERS:
            return None
        value = float(value)
    elif isinstance(value, int | np.integer) and not isinstance(value, bool):
        value = int(value)
    if isinstance(value, str):
        text = value.strip()
        if re.fullmatch(r"[+-]?\d+\.0*", text):
            text = text.split(".")[0].lstrip("+")
        if text in ("-999.25", "-9999", "-999"):
            return None
        return text or None
    code = _code(value)
    return code or None


def _distinct(values: pd.Series) -> tuple[np.ndarray, np.ndarray] | None:
    """The distinct values of a column (an object array, in order of first appearance) and
    the index of each cell's value among them (-1: missing); ``None`` for unhashable values.

    One pass (``pandas.factorize``), so a column of millions of cells costs one
    conversion per distinct value afterwards, not one per cell; none for a categorical
    column (its codes and categories, which may be in another order).
    """
    if isinstance(values.dtype, pd.CategoricalDtype):
        return values.cat.codes.to_numpy(), np.asarray(values.cat.categories, dtype=object)
    raw = values.to_numpy(dtype=object) if values.dtype == object else values
    try:
        ids, uniques = pd.factorize(raw, use_na_sentinel=True)
    except TypeError:
        return None
    return ids, np.asarray(uniques, dtype=object)


def _per_distinct(values: pd.Series, convert) -> np.ndarray:
    """``convert`` of each value (an object array), each distinct value converted once.

    Missing values (NaN, None) are converted on their own, once per kind of missing value.
    """
    found = _distinct(values)
    if found is None:  # unhashable values: one at a time
        out = np.empty(len(values), dtype=object)
        out[:] = [convert(v) for v in values]
        return out
    ids, uniques = found
    done = np.empty(len(uniques) + 1, dtype=object)
    done[:-1] = [convert(u) for u in uniques]
    if values.dtype != object:  # one kind of missing value: converted once
        done[-1] = _missing_converted(values, ids, convert)
        return done[ids]
    out = done[ids]
    missing = np.flatnonzero(ids < 0)
    if len(missing):
        kinds: dict[type, object] = {}
        raw = values.to_numpy(dtype=object)
        for i, value in zip(missing, raw[missing], strict=True):
            if type(value) not in kinds:
                kinds[type(value)] = convert(value)
            out[i] = kinds[type(value)]
    return out


def _missing_converted(values: pd.Series, ids: np.ndarray, convert) -> object:
    """``convert`` of the missing value of a column of one kind of missing value."""
    missing = np.flatnonzero(ids < 0)
    return convert(values.iloc[missing[0]]) if len(missing) else None


def _categorical(values: pd.Series, convert) -> pd.Categorical:
    """``convert`` of each value (text, or ``None`` for missing) as a categorical column,
    each distinct value converted once: a column of millions of cells holds one small
    integer per cell and each distinct text once."""
    if values.dtype == object:  # several kinds of missing value possible: cell by cell
        converted = _per_distinct(values, convert)
        ids, categories = pd.factorize(converted, use_na_sentinel=True)
        return pd.Categorical.from_codes(ids, pd.Index(categories, dtype=object), validate=False)
    ids, uniques = _distinct(values)
    done = np.empty(len(uniques) + 1, dtype=object)
    done[:-1] = [convert(u) for u in uniques]
    done[-1] = _missing_converted(values, ids, convert)
    codes, categories = pd.factorize(done, use_na_sentinel=True)
    categories = pd.Index(np.asarray(categories, dtype=object), dtype=object)
    codes = codes.astype(np.int8 if len(categories) < 127 else np.int32)  # one per row next
    return pd.Categorical.from_codes(codes[ids], categories, validate=False)


def _blank(values: pd.Series) -> np.ndarray:
    """Whether each cell is blank (missing, or text of spaces only)."""
    return _per_distinct(values, _is_blank).astype(bool)


#: Control characters (NUL and the like) that have no place in a code or a name.
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f\ufeff]")  # and a stray byte-order mark


def _shown(value: object) -> str:
    """A cell value as a message shows it: stripped, quoted, at most 40 characters."""
    text = str(value).strip()
    return repr(text if len(text) <= 40 else text[:37] + "...")


def _is_blank(value: object) -> bool:
    if value is None:
        return True
    if isinstance(value, str):
        return not value.strip()
    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False


def _is_missing_number(value: object) -> bool:
    """Whether a cell of a number column is missing: blank, or a word pandas reads as
    missing (``NA``, ``null``, ``NaN``...), as R and databases export an empty number."""
    return _is_blank(value) or (isinstance(value, str) and value.strip() in NUMBER_NA_WORDS)


def _to_floats(values: pd.Series) -> np.ndarray:
    """Each cell as a float (NaN when missing or not a number). A number too large for a
    float (``1e309``) is infinity, as Python reads it, whatever the pandas release: before
    3.0 pandas read it as no number."""
    read = pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)
    for i in np.flatnonzero(np.isnan(read) & values.notna().to_numpy()):
        with contextlib.suppress(ValueError):
            number = float(str(values.iloc[i]).strip())
            if math.isinf(number):  # only the overflow: no other spelling pandas refuses
                read[i] = number
    return read


def _numbers(values: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Each cell as a number (NaN when blank or not a number) and whether it is blank;
    each distinct value read once."""
    found = _distinct(values)
    if found is None:
        blank = _per_distinct(values, _is_missing_number).astype(bool)
        return _to_floats(values.where(~blank, None)), blank
    ids, uniques = found
    numbers, blank = _distinct_numbers(uniques)
    return numbers[ids], blank[ids]


def _distinct_numbers(uniques: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Each distinct value as a number and whether it is blank, with one more entry (NaN,
    blank) for a missing value (index -1)."""
    blank = np.array([_is_missing_number(u) for u in uniques] + [True], dtype=bool)
    read = _to_floats(pd.Series(uniques, dtype=object).where(~blank[:-1], None))
    return np.r_[read, np.nan], blank


def _numbers_where_all(values: pd.Series) -> pd.Series:
    """A column becomes numeric when every filled cell is a number; otherwise text as read."""
    found = _distinct(values)
    if found is not None:  # decided on the distinct values
        ids, uniques = found
        numbers, blank = _distinct_numbers(uniques)
        cells = np.bincount(np.asarray(ids, dtype=np.intp) + 1, minlength=len(numbers))
        filled = np.r_[cells[1:], cells[0]] > 0  # distinct values present (missing: last)
        filled &= ~blank
        if filled.any() and not np.isnan(numbers[filled]).any():
            return pd.Series(numbers[ids], index=values.index)
        return _text_where_not_numbers(values, _blank(values))  # "NA" kept as text
    numbers, blank = _numbers(values)
    filled = ~blank
    if filled.any() and not np.isnan(numbers[filled]).any():
        return pd.Series(numbers, index=values.index)
    return _text_where_not_numbers(values, _blank(values))


def _text_where_not_numbers(values: pd.Series, blank: np.ndarray) -> pd.Series:
    """A column kept as text, blank cells ``None``."""
    if values.dtype == object:
        text = values.to_numpy(dtype=object).copy()
        text[blank] = None
        return pd.Series(text, index=values.index, dtype=object)
    return pd.Series(_categorical(values, _kept_text), index=values.index)


def _kept_text(value: object) -> object:
    """A text cell as read; blank is ``None``."""
    return None if _is_blank(value) else value


def _depths(
    raw: pd.Series, role: str, file: str, rows: np.ndarray, cores: pd.Series
) -> tuple[np.ndarray, list[tuple[int, Problem]]]:
    """A depth column as numbers (NaN where unusable: blank, not a number, a null value
    such as -999.25, infinite) and an error for each unusable cell, with its row index;
    each distinct value read and checked once."""
    found = _distinct(raw)
    if found is None:  # unhashable values: one at a time
        ids = np.arange(len(raw))
        numbers, blank = _numbers(raw)
    else:
        ids = found[0]
        numbers, blank = _numbers(pd.Series(found[1], dtype=object))
        numbers, blank = np.r_[numbers, np.nan], np.r_[blank, True]  # -1: missing
    nulls = np.isin(numbers, NULL_NUMBERS)
    infinite = np.isinf(numbers)  # e.g. 1e309, read as infinity
    implausible = ~infinite & (np.abs(np.nan_to_num(numbers)) > MAX_DEPTH)
    numbers = np.where(nulls | infinite | implausible, np.nan, numbers)
    errors = []
    for i in np.flatnonzero(np.isnan(numbers)[ids]):
        k, value = ids[i], raw.iloc[i]
        if nulls[k]:
            kind, message = "missing-depth", f"{role} holds the null value {value}"
        elif blank[k]:
            kind, message = "missing-depth", f"no {role} depth"
        elif infinite[k]:
            kind = "bad-depth"
            message = f"{role} {_shown(value)} is not a finite number (too large)"
        elif implausible[k]:
            kind = "bad-depth"
            message = (
                f"{role} {_shown(value)} is not a plausible depth (beyond {MAX_DEPTH:,.0f} "
                "m or ft); a null value of the export?"
            )
        else:
            kind, message = "bad-depth", f"{role} {str(value).strip()!r} is not a number"
            message += _units_row_hint(value) or _written_number_hint(value)
        where = {"file": file, "row": int(rows[i]), "core": cores.iloc[i]}
        errors.append((i, Problem("error", kind, message, **where)))
    return numbers[ids], errors


def _units_row_hint(value: object) -> str:
    """Where a depth cell holds a unit word (``ft``, ``(m)``): a row of units under the
    header, as spreadsheets often have; how to state the units instead. Else ``""``."""
    word = str(value).strip().strip("()[]")
    try:
        normalise_units(word)
    except InputError:
        return ""
    return (
        " (a row of units under the header? delete it and give the units in the header, "
        "e.g. 'top (ft)', or once for the source (--units; units= in Python))"
    )


#: A number followed by a unit word (``12.5 m``, ``41ft``).
_WITH_UNIT = re.compile(r"^\s*[-+]?\d[\d.,]*\s*([A-Za-z.']+)\s*$")
#: A number with thousands separators: ``1,234.5`` or ``1.234,5``.
_GROUPED = re.compile(r"^\s*[-+]?\d{1,3}([,.\u00a0 ])\d{3}(\1\d{3})*([.,]\d+)?\s*$")


def _written_number_hint(value: object) -> str:
    """Where a depth cell holds a number written for people (with its unit, or with
    thousands separators): how to write it for reading. Else ``""``."""
    text = str(value)
    unit = _WITH_UNIT.match(text)
    if unit is not None:
        try:
            normalise_units(unit.group(1))
        except InputError:
            return ""
        return (
            " (write the number alone and give the units in the header, e.g. 'top (m)', "
            "or once for the source: --units; units= in Python)"
        )
    if _GROUPED.match(text):
        return " (write it without thousands separators: 1234.5)"
    return ""


@dataclass
class _Rows:
    """One table's rows with roles applied, before per-core checks."""

    table: RawTable
    layout: str
    frame: pd.DataFrame  # core, top/base or depth, facies, attributes, _file, _row
    attributes: list[str]
    units: str | None  # units stated by the source (None when nothing said)
    row_units: pd.Series | None = None  # per-row units from a units column
    problems: list[Problem] = field(default_factory=list)
    roles: dict[str, str] = field(default_factory=dict)  # role -> column name, as matched


def _layout(
    match: ColumnMatch, table: RawTable, layout: str | None, wording: Wording = COMMAND_LINE
) -> str:
    if layout is None:
        layout = table.layout
    if layout is None:
        if "top" in match.roles or "base" in match.roles:
            layout = "intervals"
        elif "depth" in match.roles:
            layout = "samples"
        else:
            layout = "intervals"
    if layout not in ("intervals", "samples"):
        raise ConfigError(f"unknown layout {layout!r}; expected 'intervals' or 'samples'")
    need = ("top", "base", "facies") if layout == "intervals" else ("depth", "facies")
    missing = [r for r in need if r not in match.roles]
    if missing:
        names = ", ".join(repr(c) for c in table.frame.columns)
        hint = wording.columns(missing)
        raise InputError(
            f"missing required column(s) {', '.join(missing)} for the {layout} layout; the "
            f"columns are {names}; {_header_below_hint(table, need)}"
            f"{_other_sheets_hint(table, wording)}map them with {hint}",
            file=table.file,
        )
    return layout


def _header_below_hint(table: RawTable, need: tuple[str, ...], rows: int = 20) -> str:
    """Where one of the first ``rows`` data rows holds the column names a layout needs
    (a title and blank lines above the header, as spreadsheets often have): which row,
    and to delete the rows above it. Else ``""``."""
    head = table.head_rows or zip(
        table.row_numbers()[:rows], table.frame.head(rows).itertuples(index=False)
    )
    for row, values in head:
        names = [str(v).strip() for v in values if not _is_blank(v)]
        try:
            found = match_columns(names).roles
        except FaciesseqError:
            continue
        if all(role in found for role in need):
            return (
                f"the column names stand on data row {int(row)}: delete the rows "
                "above them, so that they are the header; "
            )
    return ""


def _other_sheets_hint(table: RawTable, wording: Wording) -> str:
    """Where the first sheet of a workbook was read: the other sheets whose header has
    the columns of a layout (else every other sheet), and the option reading one."""
    if not table.other_sheets:
        return ""
    fitting = [name for name, header in table.other_sheets.items() if _has_layout(header)]
    if fitting:
        listed = ", ".join(repr(n) for n in fitting)
        has = "sheet {} has them" if len(fitting) == 1 else "sheets {} have them"
        return f"{has.format(listed)}: read it with {wording.sheet(fitting[0])}; or "
    listed = ", ".join(repr(n) for n in table.other_sheets)
    return f"the workbook's other sheets are {listed} (read one with {wording.sheet('NAME')}); or "


def _has_layout(header: list[str]) -> bool:
    """Whether a header names the columns of the intervals or the samples layout."""
    try:
        roles = match_columns(header).roles
    except InputError:  # two columns of one role: not plainly a layout
        return False
    return "facies" in roles and ({"top", "base"} <= set(roles) or "depth" in roles)


def _prepare(
    table: RawTable,
    layout: str | None,
    columns: Mapping[str, str],
    scheme: FaciesScheme | None,
    wording: Wording = COMMAND_LINE,
) -> _Rows:
    """Apply column roles and per-row checks (depth numbers, facies codes, attributes);
    ``wording``: how messages name the options."""
    check_width(table.frame.shape[1], table.file)
    explicit = dict(table.roles)
    explicit.update(columns)
    match = match_columns(table.frame.columns, explicit, file=table.file, wording=wording)
    layout = _layout(match, table, layout, wording)
    src = table.frame
    rows = np.asarray(table.row_numbers(), dtype=int)
    problems: list[Problem] = []
    bad = np.zeros(len(src), dtype=bool)
    out: dict[str, object] = {}  # the columns, made into a frame once (no copies)
    out["core"] = _core_column(src, match, table, rows, bad, problems, wording)
    roles = ("top", "base") if layout == "intervals" else ("depth",)
    for role in roles:
        numbers, found = _depths(src[match.roles[role]], role, table.file, rows, out["core"])
        bad[[row for row, _ in found]] = True
        problems += [problem for _, problem in found]
        out[role] = numbers
    problems += _bad_cores(out["core"], table.file, rows, bad)
    problems += _two_form_cores(out["core"], table.file, rows)
    stated = table.units or match.units
    if table.units and match.units and table.units != match.units:
        raise InputError(
            f"the header says {table.units} but a column name says {match.units}", file=table.file
        )
    row_units = None
    if "units" in match.roles:
        row_units = pd.Series(
            _categorical(
                src[match.roles["units"]],
                lambda v: None if _is_blank(v) else normalise_units(v, where=table.file),
            )
        )
    where = _Where(table.file, rows, out["core"], out[roles[0]], row_units, stated)
    out["facies"] = _facies_column(src[match.roles["facies"]], scheme, layout, where, bad, problems)
    attributes = _attribute_columns(src, match, roles, table, rows, problems)
    if "contact" in attributes:
        attributes["contact"] = _known_contacts(attributes["contact"], where, problems)
    out.update(attributes)
    # one file name per table: categorical codes, not the name repeated on every row
    out["_file"] = pd.Categorical.from_codes(np.zeros(len(src), dtype=np.int8), [table.file])
    out["_row"] = rows
    keep = ~bad
    frame = pd.DataFrame(out, copy=False)
    frame = frame if keep.all() else frame[keep].reset_index(drop=True)  # no copy: all kept
    if row_units is not None and not keep.all():
        row_units = row_units[keep].reset_index(drop=True)
    del out
    problems += table.problems
    prepared = _Rows(table, layout, frame, list(attributes), stated, row_units, problems)
    prepared.roles = dict(match.roles)
    return prepared


def _bad_cores(cores: pd.Series, file: str, rows: np.ndarray, bad: np.ndarray) -> list[Problem]:
    """An error for each core name holding a control character (a NUL byte, a stray
    byte-order mark), which would make an unseen core of its own; its rows marked ``bad``."""
    names = cores.cat.categories
    codes = cores.cat.codes.to_numpy()
    found = []
    for k in np.flatnonzero([bool(_CONTROL.search(str(c))) for c in names]):
        held = np.flatnonzero(codes == k)
        if len(held):
            bad[held] = True
            found.append((held[0], names[k]))
    return [
        Problem(
            "error",
            "bad-core",
            f"core identifier {name!r} holds a control character (e.g. a NUL "
            "byte); the file may be damaged or of another encoding",
            file=file,
            row=int(rows[first]),
        )
        for first, name in sorted(found)  # in order of first appearance
    ]


def _two_form_cores(cores: pd.Series, file: str, rows: np.ndarray) -> list[Problem]:
    """An error for each core name written in two Unicode forms (a composed ``é`` and
    ``e`` with a combining accent): the same name to a reader, two cores otherwise."""
    names = cores.cat.categories
    keys = [unicodedata.normalize("NFC", str(name)) for name in names]
    if len(set(keys)) == len(keys):  # the common case: no row is looked at
        return []
    codes = cores.cat.codes.to_numpy()
    present, first_rows = np.unique(codes, return_index=True)
    seen: dict[str, int] = {}  # the form met first, by the row of its first appearance
    problems = []
    for row, k in sorted(zip(first_rows.tolist(), present.tolist())):
        if k < 0:
            continue
        if keys[k] not in seen:
            seen[keys[k]] = row
            continue
        problems.append(
            Problem(
                "error",
                "bad-core",
                f"core {str(names[k])!r} is written in two Unicode forms (an accented "
                "letter as one character, and as a letter and a combining accent; the "
                f"other form from data row {int(rows[seen[keys[k]]])}): they look the same "
                "but are read as two cores; retype the name so that every row holds one form",
                file=file,
                row=int(rows[row]),
                core=str(names[k]),
            )
        )
    return problems


@dataclass(frozen=True)
class _Where:
    """Where each row of a table is: file, source row, core, first depth (for messages)."""

    file: str
    rows: np.ndarray
    cores: pd.Series
    depths: np.ndarray
    row_units: pd.Series | None = None  # per-row units from a units column
    units: str | None = None  # units the table states (None when nothing said)

    def at(self, i: int) -> dict:
        """The place of row ``i``, its depth in the units the source states it in."""
        units = None if self.row_units is None else self.row_units.iloc[i]
        return {
            "file": self.file,
            "row": int(self.rows[i]),
            "core": self.cores.iloc[i],
            "depth": _depth(self.depths[i]),
            "units": self.units if pd.isna(units) else units,
        }


def _core_column(
    src: pd.DataFrame,
    match: ColumnMatch,
    table: RawTable,
    rows: np.ndarray,
    bad: np.ndarray,
    problems: list[Problem],
    wording: Wording = COMMAND_LINE,
) -> pd.Series:
    """The core of each row (rows without one marked ``bad``, with an error each)."""
    n = len(src)
    if "core" in match.roles:
        cores = _categorical(src[match.roles["core"]], facies_code)
        cores = _names_read_down(cores, table.file, rows, problems)
        for i in np.flatnonzero(cores.codes < 0):
            bad[i] = True
            problems.append(
                Problem(
                    "error", "missing-core", "no core identifier", file=table.file, row=int(rows[i])
                )
            )
        return pd.Series(cores)
    name = table.core or "core"
    if table.layout != "samples" or table.core is None:
        problems.append(
            Problem(
                "warning",
                "no-core-column",
                f"no core column; all rows are taken as core {name!r} (map one with "
                f"{wording.columns(['core'])})",
                file=table.file,
                core=name,
            )
        )
    return pd.Series(pd.Categorical.from_codes(np.zeros(n, dtype=np.int8), [name]))


def _names_read_down(
    cores: pd.Categorical, file: str, rows: np.ndarray, problems: list[Problem]
) -> pd.Categorical:
    """Blank core names read as the name above them, a repair per block of blank rows.

    A spreadsheet's core name is often written once for its block of rows (merged
    cells, or a name typed once): the blank rows below a name belong to it. Blank rows
    above the first name stay blank (an error each)."""
    codes = np.asarray(cores.codes)
    blank = codes < 0
    if not blank.any():
        return cores
    named = np.where(blank, -1, np.arange(len(codes)))
    above = np.maximum.accumulate(named)
    filled = blank & (above >= 0)
    if not filled.any():
        return cores
    starts = np.flatnonzero(filled & ~np.r_[False, filled[:-1]])
    ends = np.flatnonzero(filled & ~np.r_[filled[1:], False])
    for start, end in zip(starts, ends, strict=True):
        name = cores.categories[codes[above[start]]]
        span = f"data row {rows[start]}" if start == end else f"data rows {rows[start]}-{rows[end]}"
        problems.append(
            Problem(
                "repair",
                "blank-core",
                f"no core name on {span}: read as {name!r}, the name on the row above (a "
                "name written once for its block of rows); write it on every row if not",
                file=file,
                row=int(rows[start]),
                core=name,
            )
        )
    codes = np.where(filled, codes[np.maximum(above, 0)], codes)
    return pd.Categorical.from_codes(codes, cores.categories, validate=False)


def _facies_column(
    raw: pd.Series,
    scheme: FaciesScheme | None,
    layout: str,
    where: _Where,
    bad: np.ndarray,
    problems: list[Problem],
) -> pd.Categorical:
    """The facies code of each row, aliases resolved by ``scheme``; rows without a usable
    code (missing, a control character, not in the scheme) marked ``bad``, with an error
    (a warning for an undescribed sample)."""
    facies = _categorical(raw, facies_code)
    codes = facies.categories.to_numpy()
    control, resolved = _facies_flags(codes, scheme)
    ids = np.asarray(facies.codes)
    not_described: dict[str, list[int]] = {}
    flagged = (ids < 0) | control[ids]
    for i in np.flatnonzero(flagged):
        bad[i] = True
        if ids[i] >= 0:
            problems.append(
                Problem(
                    "error",
                    "bad-facies",
                    f"facies code {codes[ids[i]]!r} holds a control character (e.g. a NUL "
                    "byte); the file may be damaged or of another encoding",
                    **where.at(i),
                )
            )
        elif layout == "samples":
            not_described.setdefault(where.cores.iloc[i], []).append(i)
        else:
            problems.append(Problem("error", "missing-facies", "no facies code", **where.at(i)))
    if scheme is not None:
        known = ~control & ~pd.isna(resolved)
        if not scheme.admits_other_codes:
            unknown = np.flatnonzero(~flagged & ~known[ids])
            bad[unknown] = True
            problems += _unknown_facies(unknown, codes[ids[unknown]], scheme, where)
        # each distinct code resolved once (aliases and their codes merge)
        merged, categories = pd.factorize(np.where(known[:-1], resolved[:-1], codes))
        merged = np.append(merged, -1).astype(ids.dtype)  # -1: missing stays missing
        facies = pd.Categorical.from_codes(
            merged[ids], pd.Index(categories, dtype=object), validate=False
        )
    for idx in not_described.values():
        listed = ", ".join(str(where.rows[i]) for i in idx[:5]) + (" ..." if len(idx) > 5 else "")
        problems.append(
            Problem(
                "warning",
                "not-described",
                f"{len(idx)} sample(s) without a facies code (data rows {listed}): not described, "
                "left out",
                **where.at(idx[0]),
            )
        )
    return facies


def _unknown_facies(
    rows: np.ndarray, codes: np.ndarray, scheme: FaciesScheme, where: _Where
) -> list[Problem]:
    """One error per core and code not in ``scheme`` (at its first row)."""
    found: dict[tuple[str, str], list[int]] = {}
    for i, code in zip(rows, codes, strict=True):
        found.setdefault((where.cores.iloc[i], code), []).append(i)
    problems = []
    for (_, code), idx in found.items():
        count = f" ({len(idx)} rows)" if len(idx) > 1 else ""
        problems.append(
            Problem(
                "error",
                "unknown-facies",
                f"facies code {code!r}{count} is not in scheme {scheme.name!r} and is not an "
                f"alias of one of its facies; {_unknown_code_remedy(code, scheme)}",
                **where.at(idx[0]),
            )
        )
    return problems


def _unknown_code_remedy(code: str, scheme: FaciesScheme) -> str:
    """How to mend a code the scheme lacks: where it differs from a scheme code only in
    case or spaces (``usf`` for ``USF``), that code named, since codes are matched
    exactly (some codings tell case apart)."""
    near = [
        c for c in scheme.codes if c.casefold().replace(" ", "") == code.casefold().replace(" ", "")
    ]
    if near:
        return f"write it as {near[0]!r}, or add {code!r} to that facies' aliases"
    return "add it (code or alias) to the scheme"


def _attribute_columns(
    src: pd.DataFrame,
    match: ColumnMatch,
    roles: tuple[str, ...],
    table: RawTable,
    rows: np.ndarray,
    problems: list[Problem],
) -> dict[str, object]:
    """The attribute columns: grain size, contact, tract, lithology, then every other
    column (numbers where every filled cell is one, else text)."""
    out: dict[str, object] = {}
    if "grain_size" in match.roles:
        out["grain_size"] = _grain_sizes(src[match.roles["grain_size"]], table, rows, problems)
    for role, fix in (("contact", str.lower), ("tract", str.upper), ("lithology", None)):
        if role in match.roles:
            out[role] = _categorical(src[match.roles[role]], partial(_text, fix=fix))
    unused = [
        match.roles[r] for r in ("top", "base", "depth") if r in match.roles and r not in roles
    ]
    for col in list(match.others) + unused:
        out[attribute_name(col)] = _numbers_where_all(src[col].reset_index(drop=True))
    return out


def _known_contacts(contacts: pd.Categorical, where: _Where, problems: list[Problem]):
    """The contact column with the types no known word reads (:mod:`faciesseq.io.contacts`)
    made missing; a warning for each core and such type, at its first row with the count
    (one per core, so that a file read a batch of whole cores at a time warns the same)."""
    unknown = [k for k, c in enumerate(contacts.categories) if not known_contact(c)]
    if not unknown:
        return contacts
    codes = np.asarray(contacts.codes, dtype=np.int64)
    held = np.flatnonzero(np.isin(codes, unknown))
    core_ids = pd.factorize(where.cores, use_na_sentinel=False)[0][held]
    pairs = core_ids * len(contacts.categories) + codes[held]
    _, first, count = np.unique(pairs, return_index=True, return_counts=True)
    for k in np.argsort(held[first], kind="stable"):
        i, n = held[first[k]], int(count[k])
        problems.append(
            Problem(
                "warning",
                "unknown-contact",
                f"contact type {contacts.categories[codes[i]]!r}{f' ({n} rows)' if n > 1 else ''} "
                f"holds none of the contact words faciesseq reads ({known_words()}): read as "
                "missing; describe it with one of them to have it used",
                **where.at(i),
            )
        )
    return contacts.remove_categories([contacts.categories[k] for k in unknown])


def attribute_name(column: str) -> str:
    """The name of a source column with no role in the interval table: its own, or
    ``source_<name>`` where that name is the project's (``top``, ``facies``, ...)."""
    return column if column not in _RESERVED else f"source_{column}"


def _text(value: object, fix=None) -> str | None:
    """A text attribute: stripped (and put in one case by ``fix``); blank is ``None``."""
    if _is_blank(value):
        return None
    text = str(value).strip()
    return fix(text) if fix else text


def _facies_flags(codes: np.ndarray, scheme: FaciesScheme | None) -> tuple[np.ndarray, np.ndarray]:
    """Per distinct code: whether it holds a control character, and its scheme code (or
    None); each with one more entry (``False``, ``None``) for a missing code."""
    ctl = np.array([bool(_CONTROL.search(c)) for c in codes] + [False], dtype=bool)
    res = np.empty(len(codes) + 1, dtype=object)
    if scheme is not None:
        res[:-1] = [scheme.resolve(c) for c in codes]
    return ctl, res


def _grain_size(value: object) -> tuple[float, str | None]:
    """A grain-size cell as a class number (NaN when blank or not understood) and the
    word it was read from (``""`` when the cell is neither blank, a number nor a word)."""
    if _is_missing_number(value):
        return np.nan, None
    try:
        return float(value), None
    except (TypeError, ValueError):
        pass
    key = re.sub(r"[^a-z]", "", str(value).lower())
    if key in _GRAIN_WORDS:
        return _GRAIN_WORDS[key], str(value).strip()
    return np.nan, ""


def _grain_sizes(values: pd.Series, table: RawTable, rows: np.ndarray, problems: list[Problem]):
    found = _distinct(values)
    if found is None:
        out = _per_distinct(values, lambda v: _grain_size(v)[0]).astype(float)
    else:  # a missing cell (-1) is blank: NaN
        out = np.r_[[_grain_size(v)[0] for v in found[1]], np.nan][found[0]]
    word = _categorical(values, lambda v: _grain_size(v)[1])
    found = list(word.categories)
    words = {w: _GRAIN_WORDS[re.sub(r"[^a-z]", "", w.lower())] for w in found if w}
    unread = np.flatnonzero(word.codes == found.index("")) if "" in found else []
    if words:
        listed = ", ".join(f"{w!r}={c:g}" for w, c in sorted(words.items()))
        problems.append(
            Problem(
                "repair",
                "grain-size",
                f"grain-size words read as class numbers (1 clay ... 7 gravel): {listed}",
                file=table.file,
            )
        )
    if len(unread):
        shown = sorted({str(values.iloc[i]).strip() for i in unread})[:5]
        problems.append(
            Problem(
                "warning",
                "grain-size",
                f"{len(unread)} grain-size value(s) not understood (e.g. "
                f"{', '.join(repr(s) for s in shown)}): left blank",
                file=table.file,
                row=int(rows[unread[0]]),
            )
        )
    return out


def _depth(value: float) -> float | None:
    return None if value is None or not np.isfinite(value) else float(value)


def _resolve_units(
    prepared: list[_Rows],
    units: str | None,
    wording: Wording = COMMAND_LINE,
    unstated_units: str = "m",
) -> tuple[str, list[Problem]]:
    """Units of the core set; depths stated in other units are converted to ``units``;
    ``unstated_units`` where neither ``units`` nor the source says any."""
    problems: list[Problem] = []
    stated: dict[str, list[str]] = {}
    for p in prepared:
        if p.row_units is not None:
            codes = p.row_units.cat.codes.to_numpy()
            found = set(p.row_units.cat.categories[np.unique(codes[codes >= 0])])
            if p.units is not None and any(u != p.units for u in found):
                raise InputError(
                    f"the units column says {sorted(found)} but the header says {p.units}",
                    file=p.table.file,
                )
            for u in found:
                stated.setdefault(u, []).append(p.table.file)
        elif p.units is not None:
            stated.setdefault(p.units, []).append(p.table.file)
    if units is not None:
        target = normalise_units(units)
    elif len(stated) > 1:
        listed = "; ".join(f"{u}: {', '.join(sorted(set(f)))}" for u, f in sorted(stated.items()))
        raise InputError(
            f"mixed depth units in one database ({listed}); convert them, or give "
            f"{wording.units()} to have every depth converted to one unit"
        )
    elif stated:
        target = next(iter(stated))
    else:
        target = normalise_units(unstated_units)
        word, other = ("metres", "ft") if target == "m" else ("feet", "m")
        problems.append(
            Problem(
                "warning",
                "units",
                f"no depth units stated in the source; taken as {word} (give "
                f"{wording.units(other)} if not)",
            )
        )
    for p in prepared:
        if p.row_units is not None:
            units_of = np.append(p.row_units.cat.categories.to_numpy(dtype=object), target)
            convert = (units_of != target)[p.row_units.cat.codes.to_numpy()]
        else:
            convert = np.full(len(p.frame), (p.units or target) != target)
        if convert.any():
            source = "ft" if target == "m" else "m"
            for col in ("top", "base", "depth"):
                if col in p.frame.columns:
                    values = p.frame[col].to_numpy(dtype=float).copy()
                    values[convert] = in_units(values[convert], source, target)
                    p.frame[col] = values
            p.problems = [_in_target_units(q, target) for q in p.problems]
            problems.append(
                Problem(
                    "repair",
                    "units-converted",
                    f"{int(convert.sum())} row(s) of depths in {source} converted to {target} "
                    f"(1 ft = 0.3048 m exactly)",
                    file=p.table.file,
                )
            )
    return target, problems


def _in_target_units(problem: Problem, target: str) -> Problem:
    """``problem`` with its depth converted to ``target`` where it was stated in the other unit."""
    if problem.depth is None or problem.units in (None, target):
        return problem
    return replace(
        problem, depth=float(in_units(problem.depth, problem.units, target)), units=target
    )


def _order(
    part: pd.DataFrame, key: str, file: str, core: str, units: str, tolerance: float | None = None
) -> list[Problem]:
    """The repair of rows out of depth order. Of intervals (``tolerance``: the overlap
    snapped as rounding), a row shallower than the row before it that overlaps it by
    more is not counted: the overlap is the error to report, and the sort only its
    consequence."""
    depth = part[key].to_numpy(dtype=float)
    if len(depth) < 2 or np.all(np.diff(depth) >= 0):
        return []
    rows = part["_row"].to_numpy()
    shallower = np.diff(depth) < 0
    if tolerance is not None:
        base = part["base"].to_numpy(dtype=float)
        shallower &= base[1:] - depth[:-1] <= tolerance  # wholly above the row before
    if np.all(np.diff(depth) < 0):
        message = "rows are listed from base to top (depth decreasing); put in depth order"
        i = 0
    elif not shallower.any():
        return []
    else:
        i = int(np.nonzero(shallower)[0][0]) + 1
        count = int(shallower.sum())
        message = (
            f"{count} row(s) shallower than the row before them (out of depth order); "
            "sorted by depth"
        )
    return [
        Problem(
            "repair",
            "depth-order",
            message,
            file=file,
            row=int(rows[i]),
            core=core,
            depth=float(depth[i]),
            units=units,
        )
    ]


def _check_intervals(
    part: pd.DataFrame, file: str, core: str, units: str, tolerance: float
) -> tuple[pd.DataFrame, list[Problem]]:
    """Thickness, order, overlaps and gaps of one core's intervals from one table."""
    place = _IntervalPlace(file, core, units)
    part, problems = _drop_inverted_and_empty(part, place)
    problems += _order(part, "top", file, core, units, tolerance)
    part = _in_depth_order(part)
    top, keep, found = _snap_overlaps_find_gaps(part, place, tolerance)
    problems += found
    if keep.all() and np.array_equal(top, part["top"].to_numpy(dtype=float)):
        return part, problems
    part = part.assign(top=top)[keep].reset_index(drop=True)
    return part, problems


@dataclass(frozen=True)
class _IntervalPlace:
    """The file, core and depth units of one core's intervals (for messages)."""

    file: str
    core: str
    units: str

    def problem(
        self, part: pd.DataFrame, i: int, kind: str, severity: str, message: str, depth: float
    ) -> Problem:
        """The problem of interval ``i`` of ``part``, at its data row and ``depth``."""
        return Problem(
            severity,
            kind,
            message,
            file=self.file,
            row=int(part["_row"].iloc[i]),
            core=self.core,
            depth=float(depth),
            units=self.units,
        )


#: How to give elevations (positive upward) as depths, said where they are met.
ELEVATION_FIX = (
    "to read elevations, give depths below a datum: negate them (depth = -elevation; "
    "top and base stay the upper and lower limits of each interval)"
)

#: Said of a core whose every depth is at or above zero (``negative-depth``).
NEGATIVE_DEPTHS = f"depth is positive downward; are these elevations? {ELEVATION_FIX}"


#: Added to the first error of a core whose every interval has its top below its base.
_ALL_INVERTED = (
    "; so is every interval of this core: are the depths elevations (positive upward)? "
    f"{ELEVATION_FIX}; or, if they are depths, are the top and base columns swapped?"
)


def _drop_inverted_and_empty(
    part: pd.DataFrame, place: _IntervalPlace
) -> tuple[pd.DataFrame, list[Problem]]:
    """The intervals without those whose top is below their base or that have no
    thickness (each an error)."""
    problems: list[Problem] = []
    top = part["top"].to_numpy(dtype=float)
    base = part["base"].to_numpy(dtype=float)
    ok = np.ones(len(part), dtype=bool)
    for i in range(len(part)):
        if top[i] > base[i]:
            ok[i] = False
            message = f"top {top[i]:g} is below base {base[i]:g} (depth is positive downward)"
            problems.append(place.problem(part, i, "top-below-base", "error", message, top[i]))
        elif base[i] - top[i] <= DEPTH_TOL:
            ok[i] = False
            message = f"zero thickness (top = base = {top[i]:g})"
            problems.append(place.problem(part, i, "zero-thickness", "error", message, top[i]))
    if len(part) > 1 and np.all(top > base):
        problems[0] = replace(problems[0], message=problems[0].message + _ALL_INVERTED)
    if not ok.all():
        part = part[ok].reset_index(drop=True)
    return part, problems


def _in_depth_order(part: pd.DataFrame) -> pd.DataFrame:
    """The intervals sorted by (top, base), unless they already are."""
    top = part["top"].to_numpy(dtype=float)
    base = part["base"].to_numpy(dtype=float)
    ordered = (np.diff(top) > 0) | ((np.diff(top) == 0) & (np.diff(base) >= 0))
    if not ordered.all():  # already in (top, base) order: nothing to sort
        part = part.sort_values(["top", "base"], kind="stable").reset_index(drop=True)
    return part


def _snap_overlaps_find_gaps(
    part: pd.DataFrame, place: _IntervalPlace, tolerance: float
) -> tuple[np.ndarray, np.ndarray, list[Problem]]:
    """Down the sorted intervals: a small overlap with the interval above snapped (its top
    moved down, a repair), a larger one an error (the interval not kept), a gap reported.
    Returns the tops after snapping, which intervals are kept, and the problems."""
    problems: list[Problem] = []
    units = place.units
    top = part["top"].to_numpy(dtype=float).copy()
    base = part["base"].to_numpy(dtype=float)
    rows = part["_row"].to_numpy()
    keep = np.ones(len(part), dtype=bool)
    above = -1  # index of the last kept interval
    reach = -np.inf  # the deepest base of the rows so far, kept or not: no gap above it
    for i in range(len(part)):
        if above < 0:
            above, reach = i, base[i]
            continue
        overlap = base[above] - top[i]
        if overlap > DEPTH_TOL:
            if overlap <= tolerance and base[i] - base[above] > DEPTH_TOL:
                message = (
                    f"overlaps the interval above (data row {rows[above]}) by {overlap:.4g} "
                    f"{units}; top moved down from {top[i]:g} to {base[above]:g}"
                )
                problems.append(place.problem(part, i, "overlap", "repair", message, top[i]))
                top[i] = base[above]
            else:
                keep[i] = False
                message = (
                    f"interval {top[i]:g}-{base[i]:g} {_overlapping(i, part, units)}, more "
                    f"than the {tolerance:.4g} {units} snapped as rounding"
                )
                problems.append(place.problem(part, i, "overlap", "error", message, top[i]))
                reach = max(reach, base[i])
                continue
        elif top[i] - reach > DEPTH_TOL:
            message = (
                f"gap from {reach:g} to {top[i]:g} ({top[i] - reach:.4g} {units}) above this "
                "interval: successions are split here"
            )
            problems.append(place.problem(part, i, "gap", "warning", message, reach))
        above, reach = i, max(reach, base[i])
    return top, keep, problems


def _overlapping(i: int, part: pd.DataFrame, units: str, shown: int = 3) -> str:
    """What interval ``i`` of a core's intervals (in (top, base) order) shares with every
    other row it overlaps, whatever the order of the rows in the file: "overlaps data row
    11 (105.63-107.13) from 107.1 to 107.13 (0.03 m) and covers data row 12 (107.13-107.4)
    wholly (0.27 m)"."""
    top = part["top"].to_numpy(dtype=float)
    base = part["base"].to_numpy(dtype=float)
    rows = part["_row"].to_numpy()
    # the rows that can overlap it: from the first whose deepest base so far passes its
    # top (a running maximum, so a search), to the last whose top is above its base
    first = int(np.searchsorted(np.maximum.accumulate(base), top[i] + DEPTH_TOL, side="right"))
    last = int(np.searchsorted(top, base[i] - DEPTH_TOL, side="left"))
    found = []
    for j in range(first, last):
        shared = min(base[i], base[j]) - max(top[i], top[j])
        if j == i or shared <= DEPTH_TOL:
            continue
        other = f"data row {rows[j]} ({top[j]:g}-{base[j]:g})"
        inside = top[i] - top[j] >= -DEPTH_TOL and base[j] - base[i] >= -DEPTH_TOL
        covers = top[j] - top[i] >= -DEPTH_TOL and base[i] - base[j] >= -DEPTH_TOL
        if inside and covers:
            found.append((rows[j], f"repeats {other}"))
        elif covers:
            found.append((rows[j], f"covers {other} wholly ({shared:.4g} {units})"))
        elif inside:
            found.append((rows[j], f"lies wholly inside {other}"))
        else:
            span = f"{max(top[i], top[j]):g} to {min(base[i], base[j]):g}"
            found.append((rows[j], f"overlaps {other} from {span} ({shared:.4g} {units})"))
    found.sort()
    said = [text for _, text in found[:shown]]
    if len(found) > shown:
        said.append(f"{len(found) - shown} more row(s)")
    return _listed(said)


def _listed(items: list[str]) -> str:
    """Items in words: ``a``, ``a and b``, ``a, b and c``."""
    return " and ".join(items) if len(items) < 3 else ", ".join(items[:-1]) + " and " + items[-1]


def _check_samples(
    part: pd.DataFrame,
    file: str,
    core: str,
    units: str,
    repeated_depths: str,
    wording: Wording = COMMAND_LINE,
) -> tuple[pd.DataFrame, list[Problem]]:
    """Order and repeated depths of one core's samples (the run-length step comes later)."""
    problems = _order(part, "depth", file, core, units)
    part = part.sort_values("depth", kind="stable").reset_index(drop=True)
    depth = part["depth"].to_numpy(dtype=float)
    rows = part["_row"].to_numpy()
    keep = np.ones(len(part), dtype=bool)
    for i in range(1, len(part)):
        if depth[i] - depth[i - 1] <= DEPTH_TOL:
            first = i - 1
            while not keep[first]:
                first -= 1
            if repeated_depths == "keep-first":
                severity, message = (
                    "repair",
                    f"repeated depth {depth[i]:g} (also data row {rows[first]}); the first kept, "
                    "this row left out",
                )
            else:
                severity, message = (
                    "error",
                    f"repeated depth {depth[i]:g} (also data row {rows[first]}); remove one, or "
                    f"keep the first with {wording.keep_first()}",
                )
            problems.append(
                Problem(
                    severity,
                    "repeated-depth",
                    message,
                    file=file,
                    row=int(rows[i]),
                    core=core,
                    depth=float(depth[i]),
                    units=units,
                )
            )
            keep[i] = False
    return part[keep].reset_index(drop=True), problems


def _same(a: object, b: object) -> bool:
    if _is_blank(a) and _is_blank(b):
        return True
    return a == b


def _samples_to_intervals(
    part: pd.DataFrame, attributes: list[str], step: float, file: str, core: str, units: str
) -> tuple[pd.DataFrame, list[Problem], float]:
    """Run-length intervals from samples: each sample covers [depth - step/2, depth + step/2).

    ``step`` is the core's modal spacing; where the core's step changes part-way
    (:func:`~faciesseq.io.spacing.read_spacing`), each sample's step is the usual
    step of the samples around it instead. A core logged from depth 0 (its first
    sample at 0 or below) starts at 0, not half a step above the top of the hole.

    Between two samples closer than ``GAP_FACTOR`` steps the boundary is the
    midpoint (so slightly irregular spacing leaves no slivers); a larger step
    is a gap. Runs of samples with the same facies *and* the same attribute
    values become one interval, so nothing is averaged away.

    Returns the intervals, the problems found and the core's sample step (the
    finest where the step changes).
    """
    depth = part["depth"].to_numpy(dtype=float)
    n = len(depth)
    diffs = np.diff(depth)
    spacing = read_spacing(diffs, step)
    gap = spacing.gap
    top = np.empty(n)
    base = np.empty(n)
    top_step, base_step = spacing.end_steps()
    top[0] = depth[0] - top_step / 2
    if depth[0] >= 0:
        top[0] = max(top[0], 0.0)
    base[-1] = depth[-1] + base_step / 2
    mid = (depth[:-1] + depth[1:]) / 2
    base[:-1] = np.where(gap, depth[:-1] + spacing.above / 2, mid)
    top[1:] = np.where(gap, depth[1:] - spacing.below / 2, mid)
    rows = part["_row"].to_numpy()
    problems: list[Problem] = []
    usual = spacing.usual
    for i in np.nonzero(gap)[0]:
        problems.append(
            Problem(
                "warning",
                "gap",
                f"no samples from {depth[i]:g} to {depth[i + 1]:g} (step {diffs[i]:g} {units}, "
                f"spacing {usual[i]:g}): gap from {base[i]:g} to {top[i + 1]:g}; successions are "
                "split here",
                file=file,
                row=int(rows[i + 1]),
                core=core,
                depth=float(base[i]),
                units=units,
            )
        )
    if len(spacing.changes):
        problems.append(_step_change(spacing, depth, rows, file, core, units))
    elif n > 1:
        off_step, off_grid = off_steps(diffs, step, step)
        if irregular(off_step, off_grid):
            problems.append(
                Problem(
                    "warning",
                    "irregular-spacing",
                    f"irregular sample spacing: {int(off_step.sum())} of {len(diffs)} depth "
                    f"steps differ from the usual {step:g} {units}"
                    + (f" ({int(off_grid.sum())} off that grid)" if off_grid.any() else "")
                    + "; check that the samples form one real succession",
                    file=file,
                    core=core,
                    units=units,
                )
            )
    cols = ["facies", *attributes]
    values = part[cols].to_numpy(dtype=object)
    start = np.ones(n, dtype=bool)
    for i in range(1, n):
        start[i] = gap[i - 1] or not all(
            _same(a, b) for a, b in zip(values[i], values[i - 1], strict=True)
        )
    first = np.nonzero(start)[0]
    last = np.r_[first[1:] - 1, n - 1]
    table = part.iloc[first][[*cols, "_file", "_row"]].reset_index(drop=True)
    table.insert(0, "base", base[last])
    table.insert(0, "top", top[first])
    return table, problems, spacing.step


def _step_change(
    spacing: Spacing, depth: np.ndarray, rows: np.ndarray, file: str, core: str, units: str
) -> Problem:
    """The one warning of a core whose sample step changes: where, and from what to what."""
    where = [
        f"{depth[i]:g} {units} ({before:g} to {after:g} {units})"
        for i, before, after in zip(
            spacing.changes, spacing.steps[:-1], spacing.steps[1:], strict=True
        )
    ]
    if len(where) > SHOWN_CHANGES:
        where = [*where[:SHOWN_CHANGES], f"{len(where) - SHOWN_CHANGES} more"]
    first = spacing.changes[0]
    return Problem(
        "warning",
        "step-change",
        f"the sample step changes at {_listed(where)}: read as one succession, each sample "
        f"covering the step of the samples around it (sample step {spacing.step:g} {units}, "
        "the finest)",
        file=file,
        row=int(rows[first]),
        core=core,
        depth=float(depth[first]),
        units=units,
    )


def build_coreset(
    tables: list[RawTable],
    *,
    layout: str | None = None,
    columns: Mapping[str, str] | None = None,
    units: str | None = None,
    scheme: FaciesScheme | None = None,
    repeated_depths: str = "error",
    sources: tuple[str, ...] = (),
    wording: Wording = COMMAND_LINE,
    unstated_units: str = "m",
) -> CoreSet:
    """Validate raw tables and assemble the core set (see the module notes for problem kinds).

    The tables are read once: their rows are released as they are taken in (each
    ``frame`` is left with its columns and no rows). ``wording``: how messages name the
    options that fix what they report (the command line's, or Python's for a DataFrame).
    ``unstated_units``: the units of depths when neither ``units`` nor the source
    states any (a ``units`` warning says so).
    """
    if repeated_depths not in ("error", "keep-first"):
        raise ConfigError(
            f"repeated_depths must be 'error' or 'keep-first', got {repeated_depths!r}"
        )
    prepared = _prepare_tables(tables, layout, columns, scheme, wording)
    target, unit_problems = _resolve_units(prepared, units, wording, unstated_units)
    gathered = _Gathered(target, repeated_depths, list(unit_problems), wording=wording)
    for p in prepared:
        _take_file(p, gathered)
    _take_sampled_cores(gathered)
    cores = _assemble(gathered.blocks, gathered.order, target)
    problems = gathered.problems + _empty_cores(cores, gathered)
    # beds of every core at once (one vectorised pass, kept for the analyses)
    derived = CoreSet(cores, target)
    problems += _too_short_cores(derived, cores, gathered.owner)
    problems += _negative_depth_cores(derived, gathered.owner)
    meta = {
        "sample_step": {n: gathered.steps[n] for n in cores if n in gathered.steps},
        "layout": {n: ("samples" if n in gathered.steps else "intervals") for n in cores},
        "columns": {p.table.file: p.roles for p in prepared},
    }
    if target == "m" and any(p.kind == "units" for p in unit_problems):
        suspect = feet_suspected(derived, meta["sample_step"], wording)
        if suspect is not None:
            problems.insert(0, suspect)
    if not cores and not any(p.severity == "error" for p in problems):
        problems.append(_no_cores(sources, gathered.order))
    problems = _in_core_order(_gaps_left_by_errors(problems), gathered.order, target)
    coreset = CoreSet(cores, target, tuple(problems), sources, meta)
    if not isinstance(cores, CoreTable):  # a core table carries its derived tables itself
        coreset._derived.update(derived._derived)
    return coreset


def _gaps_left_by_errors(problems: list[Problem]) -> list[Problem]:
    """The gap warnings that a row left out for an error opened, saying so: a bad facies
    code on data row 21 leaves a gap above data row 22, which is the same finding seen
    twice unless the warning names the row that left it. A gap counts as left by an
    error of the same file and core on the data row next to it, or at its depth."""
    errors: dict[tuple, list[Problem]] = {}
    for p in problems:
        if p.severity == "error" and p.row is not None:
            errors.setdefault((p.file, p.core), []).append(p)
    out = []
    for p in problems:
        if p.kind == "gap" and p.severity == "warning" and p.row is not None:
            left = [
                e
                for e in errors.get((p.file, p.core), ())
                if e.row in (p.row - 1, p.row + 1)
                or (
                    e.depth is not None
                    and p.depth is not None
                    and abs(e.depth - p.depth) <= DEPTH_TOL
                )
            ]
            if left:
                rows = ", ".join(str(e.row) for e in left)
                message = p.message.replace(
                    "above this interval:",
                    f"above this interval, left by data row {rows} (see its error):",
                    1,
                )
                p = replace(p, message=message)
        out.append(p)
    return out


def _prepare_tables(
    tables: list[RawTable],
    layout: str | None,
    columns: Mapping[str, str] | None,
    scheme: FaciesScheme | None,
    wording: Wording = COMMAND_LINE,
) -> list[_Rows]:
    """Apply the column roles to every table (see :func:`_prepare`), releasing its rows."""
    if columns is not None and not isinstance(columns, Mapping):
        raise TypeError(
            "columns= maps a role to the column that holds it, e.g. {'facies': 'lithology', "
            f"'top': 'from_m'}}, got {type(columns).__name__}"
        )
    columns = {str(k).strip().lower(): v for k, v in (columns or {}).items()}
    prepared = []
    for t in tables:
        prepared.append(_prepare(t, layout, columns, scheme, wording))
        t.frame = t.frame.iloc[:0]  # the rows now live in the prepared table: one copy kept
    return prepared


@dataclass
class _Gathered:
    """The checked rows of the files taken in so far, and what was found on the way.

    ``owner`` is the file each core comes from and ``order`` the cores in order of
    first appearance; ``blocks`` hold the checked intervals (rows, core names, the
    name of each row), ``pending`` the checked samples of each core, turned into
    intervals once every file's sample spacing is known (``steps``).
    """

    target: str  # depth units of the core set
    repeated_depths: str
    problems: list[Problem]
    owner: dict[str, str] = field(default_factory=dict)
    order: list[str] = field(default_factory=list)
    blocks: list[tuple[pd.DataFrame, list[str], np.ndarray]] = field(default_factory=list)
    steps: dict[str, float] = field(default_factory=dict)
    pending: list[tuple[str, pd.DataFrame, _Rows]] = field(default_factory=list)
    wording: Wording = COMMAND_LINE

    @property
    def tolerance(self) -> float:
        """The overlap snapped as rounding, in the core set's units."""
        return in_units(OVERLAP_TOLERANCE_M, "m", self.target)


def _take_file(p: _Rows, gathered: _Gathered) -> None:
    """Take in one prepared table: its problems, its cores (refused when another file has
    them), then the per-core checks of its intervals or samples."""
    gathered.problems += p.problems
    file = p.table.file
    local, names, counts, first_row = _split_by_core(p.frame)
    owned = _claim_cores(names, counts, first_row, file, gathered)
    rows = np.flatnonzero(owned[local])
    rows = rows[np.argsort(local[rows], kind="stable")]
    frame = p.frame.drop(columns="core")
    if p.layout == "intervals" and len(rows):  # the columns a core keeps, chosen once
        frame = frame[["top", "base", "facies", *p.attributes, "_file", "_row"]]
        if not np.array_equal(rows, np.arange(len(frame))):  # else in core order already
            frame = frame.take(rows).reset_index(drop=True)
        part, core_of_row, found = _check_all_intervals(
            frame, local[rows], names, file, gathered.target, gathered.tolerance
        )
        gathered.problems += found
        gathered.blocks.append((part, names, core_of_row))
    elif len(rows):
        _take_samples(p, frame, rows, local, names, gathered)
    p.frame = None  # the rows live on in the blocks; nothing keeps a second copy
    # cores whose every row had an error still exist: report them as empty
    for prob in p.problems:
        if prob.core and prob.core not in gathered.owner:
            gathered.owner[prob.core] = file
            gathered.order.append(prob.core)


def _split_by_core(frame: pd.DataFrame) -> tuple[np.ndarray, list[str], np.ndarray, np.ndarray]:
    """One split of a file's rows by core (not one scan of the table per core).

    Returns the core number of each row (numbered in order of first appearance),
    the core names, their row counts and the source row of each core's first row.
    """
    local, found_names = pd.factorize(frame["core"])
    names = [str(n) for n in found_names]
    counts = np.bincount(local, minlength=len(names))
    # a core's first row is where the number first exceeds every number before it
    first = np.flatnonzero(np.r_[True, local[1:] > np.maximum.accumulate(local)[:-1]])
    first = first[: len(names)]  # none for a table without rows
    first_row = frame["_row"].to_numpy()[first]
    return local, names, counts, first_row


def _claim_cores(
    names: list[str], counts: np.ndarray, first_row: np.ndarray, file: str, gathered: _Gathered
) -> np.ndarray:
    """Which of a file's cores it owns: a core already taken from another file is an error
    (``duplicate-core``) and its rows here are left out."""
    owner = gathered.owner
    owned = np.zeros(len(names), dtype=bool)
    for k, name in enumerate(names):
        if name in owner and owner[name] != file:
            gathered.problems.append(
                Problem(
                    "error",
                    "duplicate-core",
                    f"core {name!r} is also in {owner[name]}; a core must come from one "
                    f"file or table ({counts[k]} row(s) here left out)",
                    file=file,
                    row=int(first_row[k]),
                    core=name,
                )
            )
            continue
        owner[name] = file
        gathered.order.append(name)
        owned[k] = True
    return owned


def _take_samples(
    p: _Rows,
    frame: pd.DataFrame,
    rows: np.ndarray,
    local: np.ndarray,
    names: list[str],
    gathered: _Gathered,
) -> None:
    """Check the samples of each core of a file (``rows`` in core order); keep them, and
    each core's modal sample spacing, for :func:`_take_sampled_cores`."""
    bounds = np.flatnonzero(np.r_[True, np.diff(local[rows]) != 0, True])
    for a, b in pairwise(bounds):
        name = names[local[rows[a]]]
        part = frame.take(rows[a:b]).reset_index(drop=True)
        part, found = _check_samples(
            part, p.table.file, name, gathered.target, gathered.repeated_depths, gathered.wording
        )
        gathered.problems += found
        gathered.pending.append((name, part, p))
        step = modal_step(part["depth"].to_numpy(dtype=float))
        if step is not None:
            gathered.steps[name] = step


def _take_sampled_cores(gathered: _Gathered) -> None:
    """Turn the checked samples of each core into intervals, and record each core's
    sample step (its finest where the step changes part-way).

    A core of a single sample takes the median spacing of the other cores; with
    none to take it from, it is left out (``too-short``).
    """
    steps = gathered.steps
    fallback = float(np.median(list(steps.values()))) if steps else None
    for name, part, p in gathered.pending:
        if len(part) == 0:
            continue
        step = steps.get(name, fallback)
        if step is None:
            gathered.problems.append(
                Problem(
                    "warning",
                    "too-short",
                    "a single sample and no other core to take a sample spacing from; left out",
                    file=p.table.file,
                    core=name,
                )
            )
            continue
        table, found, steps[name] = _samples_to_intervals(
            part, p.attributes, step, p.table.file, name, gathered.target
        )
        gathered.problems += found
        gathered.blocks.append((table, [name], np.zeros(len(table), dtype=np.int64)))


def _empty_cores(cores: CoreTable | dict[str, Core], gathered: _Gathered) -> list[Problem]:
    """A warning (``empty-core``) for every core seen that kept no usable interval."""
    return [
        Problem(
            "warning",
            "empty-core",
            "no usable intervals (see the problems above); left out",
            file=gathered.owner.get(name),
            core=name,
        )
        for name in gathered.order
        if name not in cores
    ]


def _too_short_cores(
    derived: CoreSet, cores: CoreTable | dict[str, Core], owner: dict[str, str]
) -> list[Problem]:
    """A warning (``too-short``) for every core of fewer than two beds."""
    n_intervals = (
        dict(zip(derived.names, np.diff(cores.starts)))
        if isinstance(cores, CoreTable)
        else {n: len(c) for n, c in cores.items()}
    )
    return [
        Problem(
            "warning",
            "too-short",
            f"only {n_beds} bed ({n_intervals[name]} interval(s)): too short for "
            "transition statistics",
            file=owner.get(name),
            core=name,
        )
        for name, n_beds in derived.bed_counts().items()
        if n_beds < 2
    ]


def _negative_depth_cores(derived: CoreSet, owner: dict[str, str]) -> list[Problem]:
    """A warning (``negative-depth``) for every core whose every depth is at or above
    zero and some above (base at most 0): most often elevations, positive upward, read
    as depths, which turns the core upside down."""
    extents = derived.extents()
    return [
        Problem(
            "warning",
            "negative-depth",
            # + 0.0: a base of -0.0 written as 0
            f"depths are negative (top {row.top:g}, base {row.base + 0.0:g}): {NEGATIVE_DEPTHS}",
            file=owner.get(name),
            core=name,
        )
        for name, row in extents[extents["base"] <= 0].iterrows()
    ]


def _no_cores(sources: tuple[str, ...], seen: list[str]) -> Problem:
    """The error of a source that gave no usable core and no other error to say why;
    ``seen``: the cores read, each left out with a warning."""
    if not seen:
        why = " (no data rows?)"
    elif len(seen) == 1:
        why = f": the one core read ({seen[0]}) was left out; `faciesseq check` lists why"
    else:
        names = ", ".join(seen[:5]) + (", ..." if len(seen) > 5 else "")
        why = f": every core read ({len(seen)}: {names}) was left out; `faciesseq check` lists why"
    return Problem(
        "error", "no-cores", "no usable cores in the source" + why, file=", ".join(sources) or None
    )


def _in_core_order(problems: list[Problem], order: list[str], target: str) -> list[Problem]:
    """The problems with their depth units stated, those of no core first, then core by core
    (stable: the order found within a core is kept)."""
    problems = [
        replace(p, units=target) if p.depth is not None and p.units is None else p for p in problems
    ]
    rank = {name: k for k, name in enumerate(order)}
    problems.sort(key=lambda p: -1 if p.core is None else rank.get(p.core, len(rank)))
    return problems


def _assemble(
    blocks: list[tuple[pd.DataFrame, list[str], np.ndarray]], order: list[str], units: str
) -> CoreTable | dict[str, Core]:
    """The checked intervals of every core as one :class:`CoreTable` (cores in ``order``),
    or one table per core when the files' columns differ."""
    rank = {name: k for k, name in enumerate(order)}
    files = sorted({f for frame, _, _ in blocks for f in frame["_file"].cat.categories})
    frames = [
        frame.assign(_file=frame["_file"].cat.set_categories(files)) for frame, _, _ in blocks
    ]
    ids = [np.array([rank[n] for n in names], dtype=np.int64)[which] for _, names, which in blocks]
    if len(frames) > 1:  # categorical text of each block's own categories: compared as text
        frames = [plain_frame(frame) for frame in frames]
    if frames and all(
        list(f.columns) == list(frames[0].columns)
        and f.dtypes.tolist() == frames[0].dtypes.tolist()
        for f in frames
    ):
        table = pd.concat(frames, ignore_index=True) if len(frames) > 1 else frames[0]
        core_id = np.concatenate(ids)
        if not len(core_id):  # every row left out (its problems say why)
            return {}
        if np.any(np.diff(core_id) < 0):  # cores of several files or pieces: in order
            perm = np.argsort(core_id, kind="stable")
            table = table.take(perm).reset_index(drop=True)
            core_id = core_id[perm]
        if not isinstance(table["facies"].dtype, pd.CategoricalDtype):  # one table's codes
            table["facies"] = table["facies"].astype(str)
        first = np.flatnonzero(np.r_[True, core_id[1:] != core_id[:-1]])  # in core order
        present = core_id[first]
        starts = np.r_[first, len(core_id)]
        return CoreTable([order[k] for k in present], table, starts, units)
    cores: dict[str, Core] = {}
    for frame, names, which in blocks:
        for k, rows in pd.Series(np.arange(len(which))).groupby(which, sort=False).indices.items():
            part = plain_frame(frame.take(rows).reset_index(drop=True))
            cores[names[k]] = Core(names[k], part, units)
    return {name: cores[name] for name in order if name in cores}


def _check_all_intervals(
    frame: pd.DataFrame,
    core_of_row: np.ndarray,
    names: list[str],
    file: str,
    units: str,
    tolerance: float,
) -> tuple[pd.DataFrame, np.ndarray, list[Problem]]:
    """:func:`_check_intervals` of every core of one table at once.

    ``frame`` holds the cores' rows one core after another (``core_of_row``, an
    index into ``names``). Cores whose only findings can be gaps (every interval
    thicker than zero, in depth order, none overlapping the one above) are checked
    in one vectorised pass; the others one by one. Returns the kept rows (cores in
    the same order), the core of each and the problems.
    """
    top = frame["top"].to_numpy(dtype=float)
    base = frame["base"].to_numpy(dtype=float)
    new_core = np.r_[True, core_of_row[1:] != core_of_row[:-1]]
    thin = (top > base) | (base - top <= DEPTH_TOL)
    overlap = base[:-1] - top[1:]  # with the interval above, as _check_intervals measures it
    step = np.diff(top)
    in_order, same_top = step > 0, step == 0
    np.subtract(base[1:], base[:-1], out=step)  # the step of the bases, in the same memory
    in_order |= same_top & (step >= 0)
    del step, same_top
    odd = thin | (np.r_[False, ~in_order | (overlap > DEPTH_TOL)] & ~new_core)
    dirty = np.zeros(len(names), dtype=bool)
    dirty[core_of_row[odd]] = True
    problems: list[Problem] = []
    rows = frame["_row"].to_numpy()
    gap = np.flatnonzero(np.r_[False, overlap < -DEPTH_TOL] & ~new_core & ~dirty[core_of_row])
    # Python numbers, gathered at once: formatted as numpy's would be, faster one by one
    for above, this, width, row, k in zip(
        base[gap - 1].tolist(),
        top[gap].tolist(),
        (-overlap[gap - 1]).tolist(),
        rows[gap].tolist(),
        core_of_row[gap].tolist(),
    ):
        problems.append(
            Problem(
                "warning",
                "gap",
                f"gap from {above:g} to {this:g} ({width:.4g} {units}) above "
                "this interval: successions are split here",
                file=file,
                row=int(row),
                core=names[k],
                depth=above,
                units=units,
            )
        )
    if not dirty.any():
        return frame, core_of_row, problems
    parts = [frame[~dirty[core_of_row]]]
    which = [core_of_row[~dirty[core_of_row]]]
    starts = np.flatnonzero(new_core)
    ends = np.r_[starts[1:], len(top)]
    for a, b in zip(starts, ends):
        k = core_of_row[a]
        if dirty[k]:
            part, found = _check_intervals(
                frame.iloc[a:b].reset_index(drop=True), file, names[k], units, tolerance
            )
            problems += found
            parts.append(part)
            which.append(np.full(len(part), k, dtype=np.int64))
    core_ids = np.concatenate(which)
    perm = np.argsort(core_ids, kind="stable")
    return (
        pd.concat(parts, ignore_index=True).take(perm).reset_index(drop=True),
        core_ids[perm],
        problems,
    )


#: Depths (read as metres) from which typical feet sample spacings look suspicious.
FEET_DEPTH_M = 1000.0
#: Sample spacings that are common in feet (0.5 ft = 0.1524 m) but rare in metres.
FEET_STEPS = (0.25, 0.5)
#: Depths (read as metres) deeper than almost every cored well.
TOO_DEEP_M = 6000.0


def feet_suspected(
    cores, sample_step: Mapping[str, float], wording: Wording = COMMAND_LINE
) -> Problem | None:
    """A ``units-suspect`` warning when depths assumed to be metres look like feet.

    Logs exported in feet are commonly sampled every 0.5 ft (or 0.25 ft) at
    depths of thousands of feet, while a facies log in metres near 1000 m or
    deeper is rarely sampled every 0.5 m or 0.25 m; and a cored depth below
    6000 m is rare (common practice of the trade; e.g. the Council Grove logs,
    Dubois et al. 2007, Computers & Geosciences 33:599-617, are 0.5 ft samples
    near 2,700-3,100 ft). Only called when the source states no units.
    """
    if isinstance(cores, CoreSet):
        depths, bases = cores.column("top").astype(float), cores.column("base").astype(float)
    else:
        cores = [core for core in cores if len(core)]
        depths = np.concatenate([c.intervals["top"].to_numpy(dtype=float) for c in cores] or [[]])
        bases = np.concatenate([c.intervals["base"].to_numpy(dtype=float) for c in cores] or [[]])
    if not len(depths):
        return None
    return feet_suspected_in(depths, float(bases.max()), sample_step, wording)


def feet_suspected_in(
    depths: np.ndarray,
    deepest: float,
    sample_step: Mapping[str, float],
    wording: Wording = COMMAND_LINE,
) -> Problem | None:
    """:func:`feet_suspected` of the tops ``depths`` of every interval and the ``deepest``
    base; ``depths`` are only read where ``sample_step`` holds a step (the median of
    the tops matters only beside the steps of a samples layout)."""
    steps = [s for s in sample_step.values() if any(abs(s - f) < 1e-6 for f in FEET_STEPS)]
    median = float(np.median(depths)) if steps else 0.0
    if median >= FEET_DEPTH_M and steps:
        why = f"{steps[0]:g} steps near {median:,.0f}"
    elif deepest > TOO_DEEP_M:
        why = f"depths down to {deepest:,.0f}, deeper than almost any cored well in metres"
    else:
        return None
    return Problem(
        "warning",
        "units-suspect",
        f"depths look like feet ({why}) but no units are stated, so they are read as "
        f"metres; {wording.units_fix()}",
    )
