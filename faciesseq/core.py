"""Cores, core sets, beds and depth-grid successions.

Conventions (used everywhere in the project):

- Depth is positive downward, in the core set's ``units`` (``"m"`` or ``"ft"``).
  An interval's ``top`` is shallower than its ``base``.
- Interval and bed tables are kept in **depth order** (shallowest first), as a
  core log is drawn.
- A :class:`Succession` is the input of every statistic and model: it is in
  **stratigraphic order, base to top** (oldest first), so "upward" transitions
  are ``facies[i] -> facies[i + 1]``.
- A gap (missing core, a sampling gap) splits a core into *segments*; no
  transition is ever counted across a gap or across a core boundary.
"""

from __future__ import annotations

import numbers
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from faciesseq.errors import ConfigError, InputError, Problem, some_of

__all__ = [
    "FT_TO_M",
    "UNITS",
    "Core",
    "CoreSet",
    "CoreTable",
    "Succession",
    "SuccessionTable",
    "check_grid_step",
    "in_units",
    "row_word",
    "to_metres",
]

#: International foot, exactly (by definition, 1959).
FT_TO_M = 0.3048

#: Columns every interval table has; anything else is an attribute.
REQUIRED = ("top", "base", "facies")
#: Provenance columns kept for messages (1-based data row; source file).
PROVENANCE = ("_file", "_row")
#: How a core is cut into the rows of a succession: amalgamated beds (runs of one
#: facies), the described intervals as they are, or cells of a depth grid.
UNITS = ("beds", "intervals", "grid")
#: What the rows of each unit are called in the outputs.
ROW_WORDS = {"beds": "beds", "intervals": "described intervals", "grid": "grid cells"}


def row_word(unit: object) -> str:
    """What the rows of a succession of ``unit`` are called ("beds", "described
    intervals", "grid cells"); "beds" for a unit not known (an older model file)."""
    return ROW_WORDS.get(str(unit), "beds")


#: Default tolerance (in depth units) below which two depths are "the same".
DEPTH_TOL = 1e-6


def to_metres(values: np.ndarray | float, units: str) -> np.ndarray | float:
    """Convert depths or thicknesses from ``units`` (``"m"`` or ``"ft"``) to metres."""
    if units == "m":
        return values
    if units == "ft":
        return values * FT_TO_M
    raise InputError(f"unknown depth units {units!r}; expected 'm' or 'ft'")


def check_grid_step(unit: str, step: float | None) -> None:
    """Refuse cutting cores into a depth grid without a positive step (any real
    number, numpy's too); the one check of ``fit``, ``decode`` and ``analyse``.

    Raises
    ------
    ConfigError
        Where ``unit`` is ``"grid"`` and ``step`` is not a positive number.
    """
    if unit == "grid" and not (isinstance(step, numbers.Real) and step > 0):
        raise ConfigError(
            f"unit='grid' needs a positive step in depth units (--step on the command line), "
            f"got step={step!r}"
        )


def in_units(values: np.ndarray | float, units: str, target: str) -> np.ndarray | float:
    """Convert depths or thicknesses from ``units`` to ``target`` (``"m"`` or ``"ft"``)."""
    if units == target:
        return values
    return values * (to_metres(1.0, units) / to_metres(1.0, target))


@dataclass(frozen=True)
class Succession:
    """One unbroken succession of beds (or grid cells), base to top.

    Attributes
    ----------
    core
        Core identifier.
    segment
        Segment number within the core, counted from the top of the core
        (0 = the shallowest unbroken stretch).
    beds
        Bed table in stratigraphic order (row 0 = the lowest, oldest bed):
        ``top``, ``base``, ``thickness``, ``facies`` and any aggregated attributes.
    units
        Depth units of ``top``/``base``/``thickness``.
    """

    core: str
    segment: int
    beds: pd.DataFrame
    units: str = "m"

    @property
    def facies(self) -> np.ndarray:
        """Facies codes, base to top."""
        return self.beds["facies"].to_numpy(dtype=object)

    def __len__(self) -> int:
        return len(self.beds)


def plain_column(values: pd.Series) -> np.ndarray | pd.Series:
    """A categorical text column as an object array, ``None`` where missing (as the
    readers give text); any other column as it is."""
    if not isinstance(values.dtype, pd.CategoricalDtype):
        return values
    categories = np.append(np.asarray(values.cat.categories, dtype=object), None)
    return categories[values.cat.codes.to_numpy()]


def text_column(
    names: Sequence, codes: np.ndarray
) -> np.ndarray | pd.api.extensions.ExtensionArray:
    """``names[codes]`` (code -1: missing) as the column pandas makes of those texts.

    Where pandas reads text into its Arrow-backed string type, the column is made by
    Arrow from the codes and the names (each text copied once, not looked at one
    object at a time); otherwise, and where a name is not text or no value is there,
    it is the object array ``names[codes]`` (missing: NaN) that pandas then reads as
    it would (an empty or all-missing column stays an object column)."""
    codes = np.asarray(codes)
    dtype = _text_dtype()
    texts = all(isinstance(n, str) for n in names)
    if dtype is not None and texts and (codes >= 0).any():
        import pyarrow as pa

        indices = pa.array(codes.astype(np.int32), mask=codes < 0)
        dictionary = pa.array(list(names), type=pa.large_string())
        return pd.array(
            pa.DictionaryArray.from_arrays(indices, dictionary).cast(dictionary.type), dtype=dtype
        )
    return np.append(np.asarray(names, dtype=object), np.nan)[codes]


def take_text(column: pd.Series, rows: np.ndarray) -> np.ndarray | pd.api.extensions.ExtensionArray:
    """The values of ``column`` at ``rows`` as the column pandas makes of them: an
    Arrow-backed text column taken as it is, any other column as an array."""
    if isinstance(column.dtype, pd.StringDtype) and column.dtype == _text_dtype():
        return column.array.take(rows)
    return column.to_numpy()[rows]


def _text_dtype() -> pd.StringDtype | None:
    """The Arrow-backed string type pandas makes of an object array of texts, if it does."""
    dtype = pd.Series(np.array(["a"], dtype=object)).dtype
    if isinstance(dtype, pd.StringDtype) and dtype.storage == "pyarrow":
        return dtype
    return None


def plain_frame(table: pd.DataFrame) -> pd.DataFrame:
    """``table`` with its categorical text columns as object columns (``_file`` kept):
    what a :class:`Core` and :meth:`CoreSet.to_frame` show. A :class:`CoreTable` keeps
    text as categoricals (one small integer per interval), which only whole-table
    operations see."""
    text = [
        c for c in table.columns if c != "_file" and isinstance(table[c].dtype, pd.CategoricalDtype)
    ]
    if not text:
        return table
    if "facies" in text:  # facies codes: text without missing values
        table = table.assign(facies=table["facies"].astype(str))
        text.remove("facies")
    return table.assign(
        **{c: pd.Series(plain_column(table[c]), index=table.index, dtype=object) for c in text}
    )


@dataclass(frozen=True)
class SuccessionTable(Sequence):
    """Successions held as one bed table, one after another, each base to top.

    ``starts[k]:starts[k + 1]`` are the rows of succession ``k`` of core
    ``cores[k]``, segment ``segments[k]``; a :class:`Succession` is made only
    when one is asked for, so a database of many successions is decoded a part
    (:meth:`part`) at a time from whole columns.
    """

    beds: pd.DataFrame
    starts: np.ndarray
    cores: np.ndarray
    segments: np.ndarray
    units: str = "m"

    @classmethod
    def from_successions(cls, successions: Iterable[Succession]) -> SuccessionTable:
        """The non-empty successions given, grouped by core (cores in order of first
        appearance, segments from the top of each core)."""
        found = [s for s in successions if len(s)]
        core_ids, _ = pd.factorize(pd.Index([s.core for s in found], dtype=object))
        found = [found[k] for k in np.lexsort(([s.segment for s in found], core_ids))]
        lengths = np.array([len(s) for s in found], dtype=np.int64)
        beds = pd.concat([s.beds for s in found], ignore_index=True) if found else pd.DataFrame()
        return cls(
            beds,
            np.r_[0, np.cumsum(lengths)].astype(np.int64),
            np.array([s.core for s in found], dtype=object),
            np.array([s.segment for s in found], dtype=np.int64),
            found[0].units if found else "m",
        )

    @classmethod
    def concat(cls, tables: Sequence[SuccessionTable]) -> SuccessionTable:
        """The successions of ``tables`` (of one depth unit) one table after another."""
        if len(tables) == 1:
            return tables[0]
        ends = np.cumsum([t.starts[-1] for t in tables])
        starts = [t.starts[:-1] + end - t.starts[-1] for t, end in zip(tables, ends)]
        return cls(
            pd.concat([t.beds for t in tables], ignore_index=True),
            np.r_[np.concatenate(starts), ends[-1]].astype(np.int64),
            np.concatenate([t.cores for t in tables]),
            np.concatenate([t.segments for t in tables]),
            tables[0].units,
        )

    @property
    def lengths(self) -> np.ndarray:
        """Beds of every succession."""
        return np.diff(self.starts)

    def __len__(self) -> int:
        return len(self.cores)

    def __getitem__(self, k):  # Sequence protocol: one Succession
        if isinstance(k, slice):
            return [self[i] for i in range(*k.indices(len(self)))]
        beds = self.beds.iloc[self.starts[k] : self.starts[k + 1]].reset_index(drop=True)
        return Succession(str(self.cores[k]), int(self.segments[k]), beds, self.units)

    def part(self, first: int, stop: int) -> SuccessionTable:
        """Successions ``first:stop`` (their rows are one slice of the table)."""
        a, b = self.starts[first], self.starts[stop]
        beds = self.beds.iloc[a:b].reset_index(drop=True)
        cores, segments = self.cores[first:stop], self.segments[first:stop]
        return SuccessionTable(beds, self.starts[first : stop + 1] - a, cores, segments, self.units)

    def take(self, indices: Sequence[int]) -> SuccessionTable:
        """Successions ``indices`` (in increasing order), their rows gathered at once."""
        indices = np.asarray(indices, dtype=np.int64)
        lengths = self.lengths[indices]
        starts = np.r_[0, np.cumsum(lengths)].astype(np.int64)
        rows = np.arange(starts[-1]) + np.repeat(self.starts[indices] - starts[:-1], lengths)
        beds = self.beds.take(rows).reset_index(drop=True)
        return SuccessionTable(
            beds, starts, self.cores[indices], self.segments[indices], self.units
        )


def _aggregate(table: pd.DataFrame, bed_id: np.ndarray, attributes: list[str]) -> dict:
    """Attributes of beds made of one or several intervals of one facies (vectorised).

    Numbers: thickness-weighted mean of the known values. Text: for
    ``contact``, the value at the base of the bed (a bed's contact is its lower
    contact); otherwise the value covering most thickness (first on ties).
    Missing values are skipped; a bed with none known gets a missing value.
    """
    out: dict = {}
    n_beds = int(bed_id[-1]) + 1 if len(bed_id) else 0
    thick = (table["base"] - table["top"]).to_numpy(dtype=float)
    for col in attributes:
        values = table[col]
        known = values.notna().to_numpy()
        numeric = pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values)
        if not numeric or col == "contact":
            out[col] = _aggregate_text(values, known, bed_id, thick, n_beds, col == "contact")
        else:
            v = values.to_numpy(dtype=float)
            w = np.where(known, thick, 0.0)
            vw = np.where(known, v, 0.0) * w
            wsum = np.bincount(bed_id, weights=w, minlength=n_beds)
            vsum = np.bincount(bed_id, weights=vw, minlength=n_beds)
            # zero-thickness known values: plain mean
            cnt = np.bincount(bed_id, weights=known.astype(float), minlength=n_beds)
            plain = np.bincount(bed_id, weights=np.where(known, v, 0.0), minlength=n_beds)
            with np.errstate(invalid="ignore", divide="ignore"):
                mean = np.where(
                    wsum > 0,
                    vsum / np.where(wsum > 0, wsum, 1.0),
                    np.where(cnt > 0, plain / np.where(cnt > 0, cnt, 1.0), np.nan),
                )
            out[col] = mean
    return out


def _aggregate_text(
    values: pd.Series,
    known: np.ndarray,
    bed_id: np.ndarray,
    thick: np.ndarray,
    n_beds: int,
    lowest: bool,
) -> np.ndarray | pd.api.extensions.ExtensionArray:
    """One text attribute per bed (see :func:`_aggregate`), on integer codes of the values.

    ``lowest``: the value of the bed's lowest known interval; otherwise the value covering
    most thickness, the first in depth order on ties (thickness summed per bed and value
    by one grouped sum over integer keys, in order of first appearance).
    """
    chosen = np.full(n_beds, -1, dtype=np.int64)  # code of each bed's value (-1: none)
    rows = np.flatnonzero(known)
    if len(rows) == 0:
        return np.full(n_beds, np.nan, dtype=object)
    if isinstance(values.dtype, pd.CategoricalDtype):  # integer codes already
        codes = values.cat.codes.to_numpy()[rows].astype(np.int64)
        uniques = np.asarray(values.cat.categories, dtype=object)
    else:
        codes, uniques = pd.factorize(values.to_numpy(dtype=object)[rows])
        uniques = np.asarray(uniques, dtype=object)
    beds = bed_id[rows]
    if lowest:  # the last known interval of each bed in depth order
        last = np.r_[beds[1:] != beds[:-1], True]
        chosen[beds[last]] = codes[last]
        return text_column(uniques, chosen)
    mixed = _mixed_beds(beds, codes, n_beds)
    chosen[beds] = codes  # beds of one value: that value
    if not mixed.any():
        return text_column(uniques, chosen)
    keep = mixed[beds]  # beds of several values: the one covering most thickness
    beds, codes, rows = beds[keep], codes[keep], rows[keep]
    key = beds.astype(np.int64) * len(uniques) + codes
    sums = pd.Series(thick[rows]).groupby(key, sort=False).sum()
    key_bed = sums.index.to_numpy() // len(uniques)
    order = np.lexsort((-sums.to_numpy(), key_bed))  # stable: first appearance wins ties
    first = order[np.r_[True, key_bed[order][1:] != key_bed[order][:-1]]]
    found = sums.index.to_numpy()[first]
    chosen[found // len(uniques)] = found % len(uniques)
    return text_column(uniques, chosen)


def _mixed_beds(beds: np.ndarray, codes: np.ndarray, n_beds: int) -> np.ndarray:
    """Per bed, whether its known values (``codes`` of rows of ``beds``, in depth order)
    differ."""
    differs = (beds[1:] == beds[:-1]) & (codes[1:] != codes[:-1])
    mixed = np.zeros(n_beds, dtype=bool)
    mixed[beds[1:][differs]] = True
    return mixed


def _bed_columns(
    table: pd.DataFrame,
    core_id: np.ndarray,
    attributes: list[str],
    tolerance: float,
    amalgamate: bool = True,
) -> tuple[dict, np.ndarray]:
    """Bed columns of one or many cores' intervals at once (vectorised over all of them).

    ``table`` holds the intervals of every core, each core's in depth order and
    the cores one after another; ``core_id`` (non-decreasing integers) says which
    core each interval belongs to. Segments restart at each core and no bed,
    segment or gap spans two cores. Returns the columns of :meth:`Core.beds`
    (``segment`` counted within each core) and the core of each bed.
    ``amalgamate=False``: every described interval is a bed of its own.
    """
    top_i = table["top"].to_numpy(dtype=float)
    base_i = table["base"].to_numpy(dtype=float)
    n = len(top_i)
    # the [:n]: no core starts in a table of no interval (an empty subset)
    new_core = np.r_[True, core_id[1:] != core_id[:-1]][:n]
    gap = np.r_[False, top_i[1:] - base_i[:-1] > tolerance] & ~new_core
    seg_global = np.cumsum(gap)
    core_start = np.flatnonzero(new_core)
    segment = seg_global - np.repeat(seg_global[core_start], np.diff(np.r_[core_start, n]))
    # facies as integer codes: compared without one text object per interval
    facies_id, facies_names = pd.factorize(table["facies"], use_na_sentinel=False)
    changed = (facies_id[1:] != facies_id[:-1]) | (seg_global[1:] != seg_global[:-1])
    new_bed = np.r_[True, changed][:n] | new_core
    if not amalgamate:
        new_bed[:] = True
    bed_id = np.cumsum(new_bed) - 1
    first = np.flatnonzero(new_bed)
    last = np.r_[first[1:] - 1, n - 1][: len(first)]
    top = top_i[first]
    base = base_i[last]
    data = {
        "segment": segment[first].astype(int),
        "top": top,
        "base": base,
        "thickness": base - top,
        "facies": text_column(
            np.asarray(facies_names, dtype=object).astype(str).tolist(), facies_id[first]
        ),
        "n_intervals": (last - first + 1).astype(int),
    }
    data.update(_aggregate(table, bed_id, attributes))
    return data, core_id[first]


def _counted(n: int, noun: str) -> str:
    """``1 core``, ``3 cores``."""
    return f"{n:,} {noun}{'' if n == 1 else 's'}"


def _extent(table: pd.DataFrame) -> tuple[float, float]:
    """The shallowest top and deepest base of an interval table (NaN when empty)."""
    if not len(table):
        return np.nan, np.nan
    return float(table["top"].min()), float(table["base"].max())


def _span(top: float, base: float, units: str) -> str:
    """``depths 1000.00-1052.30 m`` (``no depths`` when there is none)."""
    if not (np.isfinite(top) and np.isfinite(base)):
        return "no depths"
    return f"depths {top:.2f}-{base:.2f} {units}"


def _in_order(table: pd.DataFrame) -> bool:
    """Whether a stable sort by ``top`` then ``base`` would leave ``table`` as it is."""
    kinds = [table[c].dtype.kind for c in ("top", "base")]
    if not all(k in "iuf" for k in kinds):
        return False
    top = table["top"].to_numpy()
    base = table["base"].to_numpy()
    with np.errstate(invalid="ignore"):
        ordered = (np.diff(top) > 0) | ((np.diff(top) == 0) & (np.diff(base) >= 0))
    return bool(ordered.all())


@dataclass(frozen=True)
class Core:
    """One described core: its intervals in depth order.

    Parameters
    ----------
    name
        Core (well) identifier, as in the database.
    intervals
        Table with at least ``top``, ``base`` (depth, positive downward) and
        ``facies`` (scheme code, text); other columns are attributes (e.g.
        ``grain_size``, ``contact``, ``tract``). Optional ``_file`` and
        ``_row`` columns record where each interval came from.
    units
        ``"m"`` or ``"ft"``.
    """

    name: str
    intervals: pd.DataFrame
    units: str = "m"

    def __post_init__(self) -> None:
        missing = [c for c in REQUIRED if c not in self.intervals.columns]
        if missing:
            raise InputError(f"interval table lacks column(s) {missing}", core=self.name)
        table = self.intervals
        if _in_order(table):  # already in (top, base) order, as the readers leave it
            table = table.reset_index(drop=True)
        else:
            table = table.sort_values(["top", "base"], kind="stable").reset_index(drop=True)
        table["facies"] = table["facies"].astype(str)
        object.__setattr__(self, "intervals", table)

    @property
    def attributes(self) -> list[str]:
        """Attribute columns (everything but top, base, facies and provenance)."""
        return [c for c in self.intervals.columns if c not in REQUIRED + PROVENANCE]

    @property
    def top(self) -> float:
        return float(self.intervals["top"].iloc[0]) if len(self.intervals) else float("nan")

    @property
    def base(self) -> float:
        return float(self.intervals["base"].max()) if len(self.intervals) else float("nan")

    @property
    def thickness(self) -> float:
        """Cored (described) thickness, gaps excluded."""
        return float((self.intervals["base"] - self.intervals["top"]).sum())

    def __len__(self) -> int:
        return len(self.intervals)

    def __repr__(self) -> str:
        span = _span(self.top, self.base, self.units)
        return f"<Core {self.name}: {_counted(len(self), 'interval')}, {span}>"

    def segment_ids(self, tolerance: float = DEPTH_TOL) -> np.ndarray:
        """Segment number of each interval: a new segment starts after each gap."""
        top = self.intervals["top"].to_numpy(dtype=float)
        base = self.intervals["base"].to_numpy(dtype=float)
        if len(top) == 0:
            return np.zeros(0, dtype=int)
        gap = np.r_[False, top[1:] - base[:-1] > tolerance]
        return np.cumsum(gap)

    def gaps(self, tolerance: float = DEPTH_TOL) -> list[tuple[float, float]]:
        """``(top, base)`` of every gap between described intervals."""
        top = self.intervals["top"].to_numpy(dtype=float)
        base = self.intervals["base"].to_numpy(dtype=float)
        idx = np.nonzero(top[1:] - base[:-1] > tolerance)[0]
        return [(float(base[i]), float(top[i + 1])) for i in idx]

    def beds(self, tolerance: float = DEPTH_TOL, amalgamate: bool = True) -> pd.DataFrame:
        """Beds: adjacent intervals of one facies amalgamated, in depth order.

        Returns a table with ``segment``, ``top``, ``base``, ``thickness``,
        ``facies``, ``n_intervals`` and the aggregated attributes (see
        :func:`_aggregate`). A gap always ends a bed. ``amalgamate=False``: the
        described intervals as they are, in the same columns.
        """
        table = self.intervals
        attrs = self.attributes
        columns = ["segment", "top", "base", "thickness", "facies", "n_intervals", *attrs]
        if len(table) == 0:
            return pd.DataFrame(columns=columns)
        core_id = np.zeros(len(table), dtype=np.int64)
        data, _ = _bed_columns(table, core_id, attrs, tolerance, amalgamate)
        return pd.DataFrame(data, columns=columns)

    def grid(self, step: float, tolerance: float = DEPTH_TOL) -> pd.DataFrame:
        """Facies sampled on a regular depth grid of spacing ``step`` (depth units).

        Cell ``k`` of a segment spans ``[top + k*step, top + (k+1)*step)`` from the
        segment's top; each cell takes the facies (and attributes) of the interval
        at its centre. Cells whose centre falls in a gap are not made, and the
        grid restarts at the top of each segment. Depth order, with ``segment``,
        ``top``, ``base``, ``thickness``, ``depth`` (cell centre), ``facies``.
        """
        if not step > 0:
            raise InputError(f"grid step must be positive, got {step!r}", core=self.name)
        table = self.intervals
        attrs = self.attributes
        segment = self.segment_ids(tolerance)
        top = table["top"].to_numpy(dtype=float)
        base = table["base"].to_numpy(dtype=float)
        frames = []
        for s in np.unique(segment):
            sel = np.nonzero(segment == s)[0]
            seg_top, seg_base = top[sel[0]], base[sel[-1]]
            n = int(np.floor((seg_base - seg_top) / step + 1e-9))
            if n == 0:
                continue
            centre = seg_top + (np.arange(n) + 0.5) * step
            # intervals are sorted and contiguous within a segment
            which = sel[np.clip(np.searchsorted(base[sel], centre, side="right"), 0, len(sel) - 1)]
            cells = table.iloc[which][["facies", *attrs]].reset_index(drop=True)
            cells.insert(0, "depth", centre)
            cells.insert(0, "thickness", step)
            cells.insert(0, "base", centre + step / 2)
            cells.insert(0, "top", centre - step / 2)
            cells.insert(0, "segment", int(s))
            frames.append(cells)
        if not frames:
            return pd.DataFrame(
                columns=["segment", "top", "base", "thickness", "depth", "facies", *attrs]
            )
        return pd.concat(frames, ignore_index=True)

    def successions(
        self, unit: str = "beds", step: float | None = None, tolerance: float = DEPTH_TOL
    ) -> list[Succession]:
        """The core's unbroken successions, each base to top.

        ``unit="beds"`` gives amalgamated beds (an embedded chain: no two
        successive beds share a facies); ``unit="intervals"`` the described
        intervals as they are (two of one facies stay two beds); ``unit="grid"``
        gives depth-grid cells of spacing ``step`` (self-transitions present).
        """
        if unit in UNITS[:2]:
            table = self.beds(tolerance, amalgamate=unit == "beds")
        elif unit == "grid":
            if step is None:
                raise InputError("unit 'grid' needs a step", core=self.name)
            table = self.grid(step, tolerance)
        else:
            raise InputError(f"unknown unit {unit!r}; expected one of {', '.join(UNITS)}")
        out = []
        for s, part in table.groupby("segment", sort=True):
            beds = part.iloc[::-1].reset_index(drop=True)
            out.append(Succession(self.name, int(s), beds, self.units))
        return out


class CoreTable(Mapping):
    """Cores held as one table of all their intervals; a :class:`Core` is made on first use.

    ``table`` holds the intervals of every core, the cores one after another in
    ``names`` order and each core's in depth order; ``starts[k]:starts[k + 1]``
    are the rows of core ``k``. Whole-database work (beds, screening, facies
    codes) reads the table directly, so a database of many cores costs a few
    vectorised passes instead of one table per core. ``derived`` keeps what is
    computed from the table (bed tables by tolerance).
    """

    def __init__(self, names: list[str], table: pd.DataFrame, starts: np.ndarray, units: str):
        self.names = list(names)
        self.table = table
        self.starts = np.asarray(starts, dtype=np.int64)
        self.units = units
        self.derived: dict = {}
        self._position = {name: k for k, name in enumerate(self.names)}
        self._made: dict[str, Core] = {}

    def __getitem__(self, name: str) -> Core:
        core = self._made.get(name)
        if core is None:
            k = self._position[name]
            rows = plain_frame(self.table.iloc[self.starts[k] : self.starts[k + 1]])
            core = self._made[name] = Core(name, rows, self.units)
        return core

    def __iter__(self) -> Iterator[str]:
        return iter(self.names)

    def __len__(self) -> int:
        return len(self.names)

    def __contains__(self, name: object) -> bool:
        return name in self._position

    def __repr__(self) -> str:
        top, base = _extent(self.table)
        return (
            f"<CoreTable: {_counted(len(self), 'core')}, "
            f"{_counted(len(self.table), 'interval')}, {_span(top, base, self.units)}>"
        )

    def core_ids(self) -> np.ndarray:
        """Core number (position in ``names``) of every row of ``table``."""
        return np.repeat(np.arange(len(self.names), dtype=np.int64), np.diff(self.starts))

    def subset(self, names: list[str]) -> CoreTable:
        """The named cores only, in the order given (one take of their rows)."""
        ks = np.array([self._position[n] for n in names], dtype=np.int64)
        lengths = np.diff(self.starts)[ks]
        new_starts = np.r_[0, np.cumsum(lengths)].astype(np.int64)
        rows = np.repeat(self.starts[ks] - new_starts[:-1], lengths) + np.arange(new_starts[-1])
        return CoreTable(
            names, self.table.take(rows).reset_index(drop=True), new_starts, self.units
        )


@dataclass(frozen=True)
class CoreSet:
    """A core database held in memory: named cores with one depth unit.

    ``problems`` lists what reading and validation found (errors, warnings and
    repairs); a core set with errors may still be summarised (``faciesseq
    check``) but :meth:`require_valid` refuses it for analysis.
    """

    cores: Mapping[str, Core]
    units: str = "m"
    problems: tuple[Problem, ...] = ()
    sources: tuple[str, ...] = ()
    meta: Mapping[str, object] = field(default_factory=dict)
    #: Derived tables (beds of every core at once), by tolerance; never shown or compared.
    _derived: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if isinstance(self.cores, CoreTable):
            if self.cores.units != self.units:
                raise InputError(
                    f"cores are in {self.cores.units!r} but the core set is in {self.units!r}"
                )
            return
        for name, core in self.cores.items():
            if core.units != self.units:
                raise InputError(
                    f"core is in {core.units!r} but the core set is in {self.units!r}", core=name
                )
        object.__setattr__(self, "cores", dict(self.cores))

    @classmethod
    def from_frame(
        cls,
        table: pd.DataFrame | Sequence[Mapping] | Mapping[str, Sequence],
        units: str | None = None,
        problems: Iterable[Problem] = (),
        sources: Iterable[str] = (),
        *,
        columns: Mapping[str, str] | None = None,
        scheme=None,
        layout: str | None = None,
        repeated_depths: str = "error",
    ) -> CoreSet:
        """A core set from one table of intervals (or samples), checked as a file is read.

        The rows go through the validation of :func:`faciesseq.io.read_cores`: column
        roles, depths, facies codes (against ``scheme``), thickness, order, overlaps
        and units. What it finds is in ``problems``, rows with an error are left out of
        the cores, and :meth:`require_valid` refuses the core set while there are
        errors. Messages name the table ``DataFrame`` and its rows ``data row N`` (the
        N-th row, ``table.iloc[N - 1]``), e.g. ``DataFrame, data row 4, core SF-1,
        depth 1002.61 m: interval 1002.61-1003.92 overlaps data row 3 ...``; a table
        from :meth:`to_frame` with ``provenance=True`` keeps its file and data rows.

        Parameters
        ----------
        table
            A DataFrame, records (a list of dicts) or a dict of columns: one row per
            interval (core, top, base, facies) or sample (core, depth, facies); any
            other column is an attribute. Cores are kept in order of first appearance.
        units
            ``"m"`` or ``"ft"``: the units of depths the table does not state (in a
            ``units`` column or a column name such as ``top (ft)``), and the units
            every depth is converted to. ``None``: stated depths' units, else metres
            (with a warning).
        problems, sources
            Problems found before (put first) and source labels (default: the
            table's own, ``("DataFrame",)``).
        columns, scheme, layout, repeated_depths
            As for :func:`faciesseq.io.read_cores`: role -> column name, a facies
            scheme or its YAML path, ``"intervals"``/``"samples"``, and
            ``"error"``/``"keep-first"`` for repeated sample depths.

        Returns
        -------
        CoreSet
            The cores held one table per core (:func:`~faciesseq.io.read_cores` of a
            DataFrame holds them as one table, faster on large databases).

        Raises
        ------
        InputError, ConfigError
            As :func:`faciesseq.io.read_cores` raises them for a file.
        TypeError
            ``table`` is no DataFrame, records or dict of columns.
        """
        # the checks of the readers (faciesseq.io, which builds on this module)
        from faciesseq.io.frame import read_frame

        found = read_frame(
            table,
            layout=layout,
            columns=columns,
            units=units,
            scheme=scheme,
            repeated_depths=repeated_depths,
            taker="CoreSet.from_frame",
        )
        cores = found.cores
        if isinstance(cores, CoreTable):
            cores = {name: cores[name] for name in cores}
        return cls(
            cores,
            found.units,
            tuple(problems) + found.problems,
            tuple(sources) or found.sources,
            found.meta,
        )

    def to_frame(self, provenance: bool = False) -> pd.DataFrame:
        """All intervals in one table (``core`` first), cores in order, depth order within."""
        if isinstance(self.cores, CoreTable):
            table = plain_frame(self.cores.table).copy()
            if not provenance:
                table = table.drop(columns=[c for c in PROVENANCE if c in table.columns])
            names = np.array(self.cores.names, dtype=object)
            table.insert(0, "core", names[self.cores.core_ids()])
            return table
        frames = []
        for name, core in self.cores.items():
            part = core.intervals.copy()
            if not provenance:
                part = part.drop(columns=[c for c in PROVENANCE if c in part.columns])
            part.insert(0, "core", name)
            frames.append(part)
        if not frames:
            return pd.DataFrame(columns=["core", *REQUIRED])
        return pd.concat(frames, ignore_index=True)

    def __len__(self) -> int:
        return len(self.cores)

    def __repr__(self) -> str:
        if isinstance(self.cores, CoreTable):
            n_intervals = len(self.cores.table)
            top, base = _extent(self.cores.table)
        else:
            n_intervals = sum(len(core) for core in self)
            tops = [core.top for core in self if len(core)]
            bases = [core.base for core in self if len(core)]
            top, base = (min(tops), max(bases)) if tops else (np.nan, np.nan)
        found = [
            _counted(sum(p.severity == s for p in self.problems), s)
            for s in ("error", "warning", "repair")
        ]
        return (
            f"<CoreSet: {_counted(len(self), 'core')}, {_counted(n_intervals, 'interval')}, "
            f"{_span(top, base, self.units)}; problems: {', '.join(found)}>"
        )

    def __iter__(self) -> Iterator[Core]:
        return iter(self.cores.values())

    def __getitem__(self, name: str) -> Core:
        if not isinstance(name, str) or name not in self.cores:
            raise KeyError(f"no core {name!r} in this core set; cores: {some_of(self.names)}")
        return self.cores[name]

    @property
    def names(self) -> list[str]:
        return list(self.cores)

    @property
    def columns(self) -> list[str]:
        """The columns of :meth:`to_frame` (``core`` first), as the source named them
        (after mapping), without making the table."""
        if isinstance(self.cores, CoreTable):
            found = list(self.cores.table.columns)
        else:
            found = list(dict.fromkeys(c for core in self for c in core.intervals.columns))
        return ["core", *(str(c) for c in found if c not in PROVENANCE)]

    @property
    def errors(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == "error"]

    @property
    def source_columns(self) -> dict[str, str]:
        """Role -> the column that filled it in the source files, as matched there (the
        first file's where files differ); empty for a core set made in Python."""
        columns: dict[str, str] = {}
        for roles in self.meta.get("columns", {}).values():
            for role, name in roles.items():
                columns.setdefault(role, str(name))
        return columns

    def require_valid(self) -> CoreSet:
        """Return ``self``, or raise :class:`InputError` naming the first error."""
        errors = self.errors
        if errors:
            first = errors[0]
            more = (
                f" (and {len(errors) - 1} more; run `faciesseq check`)" if len(errors) > 1 else ""
            )
            raise first.as_error(more)
        return self

    def facies_codes(self) -> list[str]:
        """Facies codes present, sorted (as text, numbers in numeric order)."""
        if isinstance(self.cores, CoreTable):
            codes = set(self.cores.table["facies"].unique())
        else:
            codes = {c for core in self for c in core.intervals["facies"].unique()}
        return sorted(codes, key=lambda c: (len(c), c))

    def _bed_table(
        self, tolerance: float = DEPTH_TOL, attributes: bool = True, amalgamate: bool = True
    ) -> tuple[pd.DataFrame, np.ndarray] | None:
        """Beds of every core in one table (cores in order, depth order within) and the
        core number of each bed; computed once per tolerance with one vectorised pass
        over all intervals. ``None`` where the cores' attribute columns differ (then
        each core is done on its own). ``attributes=False``: the beds without their
        aggregated attributes (unless already made with them), for what needs only
        the beds' facies, depths and number. ``amalgamate=False``: every described
        interval a bed (:meth:`Core.beds`)."""
        kind = "beds" if amalgamate else "intervals"
        key = (kind, float(tolerance))
        derived = self._cache
        if key in derived:
            return derived[key]
        if not attributes:
            key = (f"{kind} without attributes", float(tolerance))
            if key in derived:
                return derived[key]
        if isinstance(self.cores, CoreTable):
            attrs = [c for c in self.cores.table.columns if c not in REQUIRED + PROVENANCE]
            attrs = attrs if attributes else []
            names = ["segment", "top", "base", "thickness", "facies", "n_intervals", *attrs]
            plain = derived.get((f"{kind} without attributes", float(tolerance)))
            if plain is not None:  # the beds are made: only their attributes are to add
                beds, bed_core = plain
                bed_id = np.repeat(np.arange(len(beds)), beds["n_intervals"].to_numpy())
                data = dict(beds.items()) | _aggregate(self.cores.table, bed_id, attrs)
            else:
                data, bed_core = _bed_columns(
                    self.cores.table, self.cores.core_ids(), attrs, tolerance, amalgamate
                )
            derived[key] = (pd.DataFrame(data, columns=names), bed_core)
            return derived[key]
        result = None
        numbers = [k for k, c in enumerate(self.cores.values()) if len(c.intervals)]
        used = [c for c in self.cores.values() if len(c.intervals)]
        if used:
            attrs = used[0].attributes if attributes else []
            columns = list(used[0].intervals.columns)
            dtypes = used[0].intervals.dtypes.tolist()
            same = all(
                list(c.intervals.columns) == columns and c.intervals.dtypes.tolist() == dtypes
                for c in used
            )
            if same:
                lengths = np.array([len(c.intervals) for c in used], dtype=np.int64)
                table = pd.concat([c.intervals for c in used], ignore_index=True)
                core_id = np.repeat(np.array(numbers, dtype=np.int64), lengths)
                data, bed_core = _bed_columns(table, core_id, attrs, tolerance, amalgamate)
                names = ["segment", "top", "base", "thickness", "facies", "n_intervals", *attrs]
                result = (pd.DataFrame(data, columns=names), bed_core)
        derived[key] = result
        return result

    @property
    def _cache(self) -> dict:
        """Where derived tables are kept: with the one table of intervals when there is one
        (so copies of the core set made by ``dataclasses.replace`` share them)."""
        return self.cores.derived if isinstance(self.cores, CoreTable) else self._derived

    def column(self, name: str) -> np.ndarray:
        """One interval column over every core (cores in order, depth order within)."""
        if isinstance(self.cores, CoreTable):
            values = plain_column(self.cores.table[name])
            return values if isinstance(values, np.ndarray) else values.to_numpy()
        parts = [core.intervals[name].to_numpy() for core in self]
        return np.concatenate(parts) if parts else np.zeros(0)

    def extents(self, tolerance: float = DEPTH_TOL) -> pd.DataFrame:
        """Per core (index: name; empty cores left out): ``top``, ``base`` (the deepest
        base), ``thickness`` (described, gaps excluded) and ``gaps`` (their number).
        Made once per tolerance (validation and the screening both ask); a copy is
        returned, so that no caller changes another's."""
        key = ("extents", float(tolerance))
        if key not in self._cache:
            self._cache[key] = self._extents(tolerance)
        return self._cache[key].copy()

    def _extents(self, tolerance: float) -> pd.DataFrame:
        """:meth:`extents`, computed."""
        if isinstance(self.cores, CoreTable):
            lengths = np.diff(self.cores.starts)
        else:
            lengths = np.array([len(core) for core in self], dtype=np.int64)
        top = self.column("top").astype(float)
        base = self.column("base").astype(float)
        used = lengths > 0
        first = np.r_[0, np.cumsum(lengths)[:-1]][used]
        owner = np.repeat(np.arange(len(first)), lengths[used])
        gap = np.r_[False, top[1:] - base[:-1] > tolerance]
        gap[first] = False
        return pd.DataFrame(
            {
                "top": top[first],
                "base": np.maximum.reduceat(base, first) if len(first) else base[:0],
                "thickness": np.bincount(owner, weights=base - top, minlength=len(first)),
                "gaps": np.bincount(owner, weights=gap, minlength=len(first)).astype(int),
            },
            index=pd.Index([n for n, k in zip(self.cores, used) if k], dtype=object),
        )

    def bed_counts(self, tolerance: float = DEPTH_TOL) -> dict[str, int]:
        """Number of beds of every core (``len(core.beds())``), cores in order."""
        found = self._bed_table(tolerance, attributes=False)
        if found is None:
            return {name: len(core.beds(tolerance)) for name, core in self.cores.items()}
        counts = np.bincount(found[1], minlength=len(self.cores))
        return {name: int(k) for name, k in zip(self.cores, counts)}

    def successions(
        self, unit: str = "beds", step: float | None = None, tolerance: float = DEPTH_TOL
    ) -> list[Succession]:
        """Every core's successions (see :meth:`Core.successions`), cores in order."""
        found = self._rows(unit, tolerance)
        if found is None:
            return [s for core in self for s in core.successions(unit, step, tolerance)]
        beds, starts, cores, segments = found
        out = []
        for k, (a, b) in enumerate(zip(starts[:-1].tolist(), starts[1:].tolist())):
            part = beds.iloc[a:b]
            part.index = pd.RangeIndex(b - a)
            out.append(Succession(cores[k], segments[k], part, self.units))
        return out

    def succession_table(
        self, unit: str = "beds", step: float | None = None, tolerance: float = DEPTH_TOL
    ) -> SuccessionTable:
        """Every core's non-empty successions as one :class:`SuccessionTable`, cores in
        order (the rows of :meth:`succession_beds` where there is one table)."""
        found = self._rows(unit, tolerance)
        if found is None:
            return SuccessionTable.from_successions(self.successions(unit, step, tolerance))
        beds, starts, cores, segments = found
        keep = np.flatnonzero(np.diff(starts) > 0)
        return SuccessionTable(
            beds.reset_index(drop=True),
            np.r_[starts[keep], starts[-1]].astype(np.int64),
            np.array(cores, dtype=object)[keep],
            np.array(segments, dtype=np.int64)[keep],
            self.units,
        )

    def _rows(self, unit: str, tolerance: float):
        """:meth:`succession_beds` of a unit of beds or intervals; ``None`` on a grid."""
        if unit not in UNITS[:2]:
            return None
        return self.succession_beds(tolerance, amalgamate=unit == "beds")

    def succession_beds(
        self, tolerance: float = DEPTH_TOL, attributes: bool = True, amalgamate: bool = True
    ) -> tuple[pd.DataFrame, np.ndarray, list[str], list[int]] | None:
        """The beds of every succession in one table, without making the successions.

        Returns the bed table with the successions one after another (cores in
        order, then segments from the top of the core), each **base to top**; the
        first row of each succession and, last, the number of rows; and the core
        and segment of each succession. ``None`` where the cores' columns differ.
        ``attributes=False``: the beds' aggregated attributes may be left out;
        ``amalgamate=False``: every described interval a bed.
        """
        found = self._bed_table(tolerance, attributes, amalgamate)
        if found is None:
            return None
        table, bed_core = found
        n = len(table)
        if n == 0:
            return table, np.zeros(1, dtype=np.int64), [], []
        segment = table["segment"].to_numpy()
        start = np.flatnonzero(
            np.r_[True, (bed_core[1:] != bed_core[:-1]) | (segment[1:] != segment[:-1])]
        )
        stop = np.r_[start[1:], n]
        # each succession base to top: reverse the rows within every run
        owner = np.repeat(np.arange(len(start)), stop - start)
        order = (start + stop - 1)[owner] - np.arange(n)
        flipped = table.take(order)
        names = np.array(list(self.cores), dtype=object)
        return (
            flipped,
            np.r_[start, n].astype(np.int64),
            names[bed_core[start]].tolist(),
            segment[start].astype(int).tolist(),
        )

    def subset(self, names: str | Iterable[str]) -> CoreSet:
        """A core set with only the named cores (problems of those cores kept); one name
        may be given alone."""
        keep = [names] if isinstance(names, str) else list(names)
        missing = [n for n in keep if n not in self.cores]
        if missing:
            raise InputError(f"unknown core(s) {missing}")
        kept = set(keep)
        problems = tuple(p for p in self.problems if p.core is None or p.core in kept)
        if isinstance(self.cores, CoreTable):
            if keep == self.cores.names:
                return CoreSet(self.cores, self.units, problems, self.sources, self.meta)
            cores = self.cores.subset(keep)
        else:
            cores = {n: self.cores[n] for n in keep}
        out = CoreSet(cores, self.units, problems, self.sources, self.meta)
        # the derived bed tables of the kept cores, in the new order
        position = {n: k for k, n in enumerate(self.cores)}
        new_id = np.full(len(self.cores), -1, dtype=np.int64)
        new_id[[position[n] for n in out.cores]] = np.arange(len(out.cores))
        for key, found in self._cache.items():
            if key[0] == "extents":  # a table per core, made again when asked for
                continue
            if found is None:
                out._cache[key] = None
                continue
            table, bed_core = found
            ids = new_id[bed_core]
            rows = np.flatnonzero(ids >= 0)
            rows = rows[np.argsort(ids[rows], kind="stable")]
            part = table.take(rows).reset_index(drop=True)
            out._cache[key] = (part, ids[rows])
        return out
