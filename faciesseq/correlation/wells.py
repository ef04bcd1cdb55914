"""The wells table: where each core stands, on which section, hung on which datum.

Read with the project's readers (CSV, TSV, XLSX, Parquet, SQLite, or a YAML
source file naming one; see :mod:`faciesseq.io.source` and :func:`read_wells`).
Columns, matched case-insensitively:

- ``core`` (or ``name``, ``well``): the core's name as in the cores source;
- a position: ``distance`` (or ``x_km``, ``distance_km``, ``position``) along
  the section, or map coordinates ``x`` and ``y`` (any one length unit); with
  coordinates the wells of a section are ordered along the straight line that
  fits them best (first principal axis; ``order`` overrides it) and the
  position is the distance along that path;
- optional ``section`` (one section named ``section`` when absent), ``order``
  (order of the wells along their section), ``elevation`` (of the point the
  core's depths are measured from, kelly bushing or ground, positive up above
  the datum, in the cores' depth units: depth ``d`` lies ``d - elevation``
  below the datum) and ``datum_depth`` (depth of a datum
  in the core, for ``--datum datum_depth``). Either may state its unit in its
  name (``elevation (ft)``, ``datum_depth_m``): it is then converted to the
  cores' units (:func:`check_wells`), else read in them.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.errors import ConfigError, InputError, Problem, some_of
from faciesseq.io.raw import NUMBER_NA_WORDS

__all__ = [
    "DEFAULT_SECTION",
    "WellTable",
    "check_wells",
    "read_wells",
    "section_prefix",
    "wells_from_frame",
]

#: The name of the one section of a wells table without a ``section`` column;
#: messages and titles do not print it.
DEFAULT_SECTION = "section"

_NAMES = ("core", "name", "well")
_DISTANCE = ("distance", "distance_km", "x_km", "position")
_OPTIONAL = ("section", "order", "elevation", "datum_depth")


@dataclass(frozen=True)
class WellTable:
    """A checked wells table.

    Attributes
    ----------
    frame
        ``core``, ``section``, ``position`` (distance along the section),
        ``elevation`` and ``datum_depth`` (NaN where not given), ``row`` (data
        row in the file); sorted by section, position and name.
    file
        Where the table came from, for messages.
    position_label
        Axis label of the position (e.g. ``"x_km"``).
    problems
        Warnings found while reading.
    depth_units
        The unit (``m`` or ``ft``) the column names state for ``elevation`` and
        ``datum_depth``, where they state one; the others are in the cores' units.
    """

    frame: pd.DataFrame
    file: str = "wells table"
    position_label: str = "distance"
    problems: tuple[Problem, ...] = field(default=())
    depth_units: Mapping[str, str] = field(default_factory=dict)


def section_prefix(section: str) -> str:
    """``section dip: `` opening a message about one section, or ``""`` for the one
    section of a wells table that names none (not "section section: ")."""
    return "" if str(section) == DEFAULT_SECTION else f"section {section}: "


def _column(frame: pd.DataFrame, names: Iterable[str]) -> str | None:
    lower = {str(c).strip().lower(): c for c in frame.columns}
    for name in names:
        if name in lower:
            return lower[name]
    return None


def _numbers(frame, column, rows, file, what) -> np.ndarray:
    # a cell written NA or null (R, databases) is an empty number, as in the bed table
    text = frame[column].astype(str).str.strip()
    cells = frame[column].where(~text.isin(NUMBER_NA_WORDS))
    values = pd.to_numeric(cells, errors="coerce")
    bad = values.isna() & cells.notna() & (text != "")
    infinite = np.isinf(values.to_numpy(float))  # inf, 1e309: no place on a section
    if bad.any() or infinite.any():
        k = int(np.flatnonzero(bad.to_numpy() | infinite)[0])
        raise InputError(
            f"{what} {frame[column].iloc[k]!r} in column {column!r} is not a "
            f"{'finite ' if infinite[k] else ''}number",
            file=file,
            row=rows[k],
        )
    return values.to_numpy(float)


def _along_line(x: np.ndarray, y: np.ndarray, order: np.ndarray | None) -> np.ndarray:
    """Distance along the path through the wells, ordered by ``order`` or the principal axis."""
    xy = np.c_[x, y]
    if order is None or np.isnan(order).any():
        centred = xy - xy.mean(axis=0)
        _, _, vt = np.linalg.svd(centred, full_matrices=False)
        axis = vt[0] if vt[0][np.argmax(np.abs(vt[0]))] > 0 else -vt[0]
        order = centred @ axis
    ranked = np.lexsort((y, x, order))
    steps = np.r_[0.0, np.hypot(*np.diff(xy[ranked], axis=0).T)]
    out = np.empty(len(x))
    out[ranked] = np.cumsum(steps)
    return out


def wells_from_frame(frame: pd.DataFrame, file: str = "wells table", rows=None) -> WellTable:
    """Check a wells table read into a data frame (see the module's columns)."""
    rows = list(rows) if rows is not None else list(range(1, len(frame) + 1))
    names = _well_names(frame, rows, file)
    section_col = _column(frame, ("section",))
    sections = (
        frame[section_col].astype(object).fillna(DEFAULT_SECTION).astype(str).str.strip()
        if section_col
        else pd.Series(DEFAULT_SECTION, index=frame.index)
    )
    order_col = _column(frame, ("order",))
    order = _numbers(frame, order_col, rows, file, "order") if order_col else None
    position, label = _positions(frame, sections, order, rows, file)
    missing = np.isnan(position)
    if missing.any():
        k = int(np.argmax(missing))
        raise InputError(f"well {names.iloc[k]!r} has no position", file=file, row=rows[k])
    out = pd.DataFrame(
        {
            "core": names.to_numpy(),
            "section": sections.to_numpy(),
            "position": position,
            "order": order if order is not None else np.nan,
            "row": rows,
        }
    )
    depth_units = {}
    for role in ("elevation", "datum_depth"):
        col, unit = _depth_column(frame, role, file)
        out[role] = _numbers(frame, col, rows, file, role) if col else np.nan
        if unit:
            depth_units[role] = unit
    problems = [*_unused_coordinates(frame, label, file), *_same_positions(out, file)]
    if order is not None and _column(frame, _DISTANCE) is not None:
        problems += _order_disagreements(out, file)
    out = out.sort_values(["section", "position", "core"], kind="stable").reset_index(drop=True)
    return WellTable(out, file, label, tuple(problems), depth_units)


def _depth_column(frame: pd.DataFrame, role: str, file: str) -> tuple[str | None, str | None]:
    """The column of ``role`` (``elevation`` or ``datum_depth``) and the unit its name
    states (``elevation (ft)``: ``ft``; read as a depth column's name is,
    :func:`faciesseq.io.columns.normalise_units`), or ``None``."""
    from faciesseq.io.columns import normalise_units, split_unit

    col = _column(frame, (role,))
    if col is not None:
        return col, None
    for c in frame.columns:
        name, unit = split_unit(str(c).strip())
        if unit is not None and name.strip().lower().replace(" ", "_") == role:
            return c, normalise_units(unit, where=file)
    return None, None


def in_depth_units(wells: WellTable, units: str | None) -> WellTable:
    """The wells table with its ``elevation`` and ``datum_depth`` in ``units`` (the
    cores'), where their column names stated the other unit (1 ft = 0.3048 m)."""
    from faciesseq.core import in_units

    if units is None or not wells.depth_units:
        return wells
    frame = wells.frame.copy()
    for role, unit in wells.depth_units.items():
        frame[role] = in_units(frame[role].to_numpy(float), unit, units)
    return WellTable(frame, wells.file, wells.position_label, wells.problems)


def _well_names(frame: pd.DataFrame, rows: list, file: str) -> pd.Series:
    """The wells' names, stripped; an error for a missing name column, a blank name or
    a well listed twice."""
    name = _column(frame, _NAMES)
    if name is None:
        raise InputError(
            f"no well name column (one of {', '.join(_NAMES)}); columns are "
            f"{', '.join(map(str, frame.columns))}",
            file=file,
        )
    names = frame[name].astype(str).str.strip()
    blank = frame[name].isna() | (names == "")
    if blank.any():
        raise InputError("a well without a name", file=file, row=rows[int(np.argmax(blank))])
    dup = names.duplicated(keep="first")
    if dup.any():
        k = int(np.argmax(dup))
        first = rows[int(np.flatnonzero((names == names.iloc[k]).to_numpy())[0])]
        raise InputError(
            f"well {names.iloc[k]!r} is listed twice (also data row {first}); give each well "
            "one row",
            file=file,
            row=rows[k],
        )
    return names


def _positions(
    frame: pd.DataFrame, sections: pd.Series, order: np.ndarray | None, rows: list, file: str
) -> tuple[np.ndarray, str]:
    """Each well's position along its section (NaN where not given) and the axis label:
    the distance column as given, or the distance along the path through the map
    coordinates of each section's wells."""
    distance = _column(frame, _DISTANCE)
    if distance is not None:
        return _numbers(frame, distance, rows, file, "position"), str(distance)
    x_col, y_col = _column(frame, ("x",)), _column(frame, ("y",))
    if x_col is None or y_col is None:
        raise InputError(
            "no position column: give a distance along the section "
            f"({', '.join(_DISTANCE)}) or map coordinates x and y",
            file=file,
        )
    x = _numbers(frame, x_col, rows, file, "x")
    y = _numbers(frame, y_col, rows, file, "y")
    position = np.full(len(frame), np.nan)
    for s in sections.unique():
        here = (sections == s).to_numpy() & np.isfinite(x) & np.isfinite(y)
        if here.any():
            position[here] = _along_line(
                x[here], y[here], order[here] if order is not None else None
            )
    return position, f"distance along the section ({x_col}, {y_col} units)"


def _unused_coordinates(frame: pd.DataFrame, label: str, file: str) -> list[Problem]:
    """A note where a distance column is used beside map coordinates x and y."""
    coordinates = [_column(frame, (axis,)) for axis in ("x", "y")]
    if label not in frame.columns or None in coordinates:
        return []
    return [
        Problem(
            "warning",
            "position-column",
            f"positions from the column {label}; the map coordinates "
            f"{coordinates[0]}, {coordinates[1]} are not used",
            file=file,
        )
    ]


def _same_positions(wells: pd.DataFrame, file: str) -> list[Problem]:
    """A warning for each section where wells stand at one position: the section puts
    them side by side in name order, which says nothing of where they stand (a wells
    table whose coordinates were left at a default, say)."""
    problems = []
    for s, part in wells.groupby("section", sort=False):
        shared = part[part["position"].duplicated(keep=False)]
        if len(shared):
            names = some_of(sorted(map(str, shared["core"])))
            problems.append(
                Problem(
                    "warning",
                    "wells-same-position",
                    f"{section_prefix(s)}wells {names} stand at one position; they are "
                    "drawn in name order, which may not be their order on the ground",
                    file=file,
                    row=int(shared["row"].iloc[0]),
                )
            )
    return problems


def _order_disagreements(wells: pd.DataFrame, file: str) -> list[Problem]:
    """A warning for each section whose order column disagrees with the positions."""
    problems = []
    for s, part in wells.groupby("section", sort=False):
        by_pos = part.sort_values(["position", "core"], kind="stable")["core"].tolist()
        by_order = part.sort_values(["order", "core"], kind="stable")["core"].tolist()
        if by_pos != by_order:
            problems.append(
                Problem(
                    "warning",
                    "wells-out-of-order",
                    f"{section_prefix(s)}the order column disagrees with the positions; "
                    "wells are ordered by position",
                    file=file,
                )
            )
    return problems


def read_wells(path: str) -> WellTable:
    """Read and check a wells table with the project's readers.

    ``path`` is a file the cores could be read from (CSV, TSV, XLSX, Parquet,
    SQLite), a database URL, or a YAML source file naming one of these with its
    reading options (``path:`` or ``url:``, and ``table:``, ``query:``, ``sheet:``,
    ``encoding:``). A database of several tables gives its table named ``wells``
    (any case) unless ``table:`` or ``query:`` chooses another.

    Raises
    ------
    InputError
        The file is missing or unreadable, a name column or a position is
        missing, a well is listed twice, or a value is not a number. The
        message names the file and the row.
    ConfigError
        A database of several tables, none named ``wells``, and none chosen; a
        key of the YAML source file that does not apply to a wells table.
    """
    from faciesseq.io.source import YAML_SUFFIXES, SourceSpec, read_tables

    where = str(path)
    spec = SourceSpec(where)
    if Path(where).suffix.lower() in YAML_SUFFIXES:
        spec = _wells_source_file(Path(where))
    spec = _wells_table(spec, where)
    tables, problems, _ = read_tables(spec)
    if len(tables) != 1:
        raise InputError("give the wells table as one file", file=where)
    table = tables[0]
    # a table chosen in a database is named with it: cores.sqlite [wells]
    label = table.file if spec.table is not None or spec.query is not None else where
    wells = wells_from_frame(table.frame, label, table.row_numbers().tolist())
    extra = tuple(problems) + tuple(p for p in table.problems if p.severity == "warning")
    return WellTable(
        wells.frame, wells.file, wells.position_label, extra + wells.problems, wells.depth_units
    )


#: Keys of a YAML source file that say how to read cores, not a wells table.
_CORE_ONLY_KEYS = ("layout", "columns", "units", "repeated_depths", "scheme", "curve")


def _wells_source_file(path: Path):
    """The :class:`~faciesseq.io.source.SourceSpec` of a YAML source file naming the
    wells table; keys that only say how to read cores are refused."""
    from faciesseq.io.source import load_source_file

    spec = load_source_file(path)
    for key in _CORE_ONLY_KEYS:
        if getattr(spec, key):
            raise ConfigError(
                f"{key!r} does not apply to a wells table (its columns are found by name: "
                "core, distance or x and y, ...); keep path or url, and table, query, sheet "
                "or encoding",
                file=str(path),
            )
    return spec


def _wells_table(spec, where: str):
    """``spec`` with the table of a database of several tables chosen: the one named
    ``wells`` (any case); ``spec`` itself when it chooses, or the source is no database
    or has one table."""
    from faciesseq.io.sql import is_sqlite_file, is_url, table_names

    source = spec.source
    if spec.table is not None or spec.query is not None:
        return spec
    if not is_url(source) and not (Path(source).is_file() and is_sqlite_file(Path(source))):
        return spec
    tables = table_names(source)
    if len(tables) <= 1:
        return spec
    named = [t for t in tables if t.lower() == "wells"]
    if len(named) == 1:
        return replace(spec, table=named[0])
    raise ConfigError(
        f"the database has {len(tables)} tables ({', '.join(tables)}) and none named "
        "'wells'; name the wells table 'wells', or give --wells a YAML source file with "
        + ("url: ..." if is_url(source) else f"path: {Path(source).name}")
        + " and table: NAME",
        file=where,
    )


def _unmatched(wells: pd.Series, cores: list[str], shown: int = 5) -> str:
    """The wells of the table that name no core, with the cores they could have named
    (a well spelt otherwise than its core is the usual cause), or nothing."""
    have = set(cores)
    missing = [str(w) for w in wells if w not in have]
    if not missing:
        return ""

    def listed(names: list[str], quote: bool) -> str:
        text = [repr(n) if quote else n for n in names[:shown]]
        return ", ".join(text) + (", ..." if len(names) > shown else "")

    return (
        f"; {len(missing)} well(s) of the table with no core in the source: "
        f"{listed(missing, True)} (its cores: {listed([str(c) for c in cores], False)})"
    )


def _folded(name: str) -> str:
    """A name without case, spaces, hyphens or underscores: how two spellings of one
    well are told apart from two wells."""
    return "".join(ch for ch in str(name).casefold() if ch not in " -_")


def _spelt_otherwise(name: str, others: Iterable[str]) -> str:
    """``"; core 'QB-01' is spelt otherwise"`` where one of ``others`` differs from
    ``name`` only in case, spaces, hyphens or underscores; else ``""``."""
    near = [str(o) for o in others if _folded(o) == _folded(name) and str(o) != str(name)]
    return f" ({', '.join(map(repr, near))} differs only in spelling)" if near else ""


def check_wells(
    wells: WellTable, cores: Iterable[str], units: str | None = None
) -> tuple[WellTable, list[Problem]]:
    """Match the wells table with the cores; keep the wells that have a core; with
    ``units`` (the cores'), the elevations and datum depths in them
    (:func:`in_depth_units`).

    A well without a core and a core without a well row are warnings (the
    well or core is left out); a section left with one well is a warning (it
    cannot be correlated). No section with two wells is an error.

    Returns
    -------
    (WellTable, list of Problem)
        The wells with a core, and the warnings.
    """
    cores = list(cores)
    wells = in_depth_units(wells, units)
    frame = wells.frame
    problems: list[Problem] = []
    have = set(cores)
    for row in frame.itertuples(index=False):
        if row.core not in have:
            problems.append(
                Problem(
                    "warning",
                    "well-without-core",
                    f"well {row.core!r} has no core in the source"
                    f"{_spelt_otherwise(row.core, cores)}; left out",
                    file=wells.file,
                    row=int(row.row),
                )
            )
    listed = set(frame["core"])
    for core in cores:
        if core not in listed:
            problems.append(
                Problem(
                    "warning",
                    "core-without-well",
                    f"core {core!r} has no row in the wells table"
                    f"{_spelt_otherwise(core, listed)}; left out of the correlation",
                    file=wells.file,
                )
            )
    kept = frame[frame["core"].isin(have)].reset_index(drop=True)
    sizes = kept.groupby("section", sort=True).size()
    for section, n in sizes.items():
        if n < 2:
            problems.append(
                Problem(
                    "warning",
                    "one-well-section",
                    f"{section_prefix(section)}one well with a core; nothing to correlate",
                    file=wells.file,
                )
            )
    if not (sizes >= 2).any():
        raise InputError(
            "no section has two wells with cores; a correlation needs at least two wells "
            "on one section" + _unmatched(frame["core"], cores),
            file=wells.file,
        )
    kept = kept[kept["section"].map(sizes) >= 2].reset_index(drop=True)
    return WellTable(
        kept, wells.file, wells.position_label, wells.problems, wells.depth_units
    ), problems
