"""What a core database holds, for a geologist's first look (``faciesseq check``)."""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from itertools import pairwise

import numpy as np
import pandas as pd

from faciesseq.core import DEPTH_TOL, CoreSet, CoreTable
from faciesseq.errors import Problem
from faciesseq.io.stream import CoreStream
from faciesseq.markov.seriation import RankSuggestion, step_counts, suggest_ranks
from faciesseq.scheme import FaciesScheme

__all__ = ["DatabaseSummary", "summarise", "summarise_batches"]

_CORE_COLUMNS = [
    "core",
    "intervals",
    "beds",
    "top",
    "base",
    "cored_thickness",
    "gaps",
    "gap_thickness",
    "units",
    "sample_step",
]
_FACIES_COLUMNS = [
    "facies",
    "name",
    "intervals",
    "beds",
    "thickness",
    "proportion_thickness",
    "proportion_beds",
    "bed_thickness_mean",
    "bed_thickness_median",
    "bed_thickness_min",
    "bed_thickness_max",
    "bed_thickness_std",
]


@dataclass(frozen=True)
class DatabaseSummary:
    """Counts and thicknesses of a core set, with the problems found on reading.

    Attributes
    ----------
    units
        Depth units of every depth and thickness here.
    cores
        One row per core: ``core``, ``intervals``, ``beds`` (adjacent intervals
        of one facies amalgamated, split at gaps, as :meth:`Core.beds`), ``top``, ``base``,
        ``cored_thickness`` (gaps excluded), ``gaps``, ``gap_thickness``,
        ``units``, ``sample_step`` (sample layout only).
    facies
        One row per facies code present: counts, total thickness, proportions
        by thickness and by bed count, bed thickness statistics (mean, median,
        min, max, sample standard deviation).
    problems
        Everything reading and validation found.
    sources
        The files or tables read.
    order
        The facies order the upward transitions suggest
        (:func:`faciesseq.markov.seriation.suggest_ranks`), ``None`` where fewer than
        three facies meet.
    agreement
        Spearman's rho of the scheme's ranks with ``order``, ``None`` without a scheme
        or where it cannot be computed (:meth:`RankSuggestion.agreement`).
    """

    units: str
    cores: pd.DataFrame
    facies: pd.DataFrame
    problems: tuple[Problem, ...]
    sources: tuple[str, ...] = ()
    order: RankSuggestion | None = None
    agreement: float | None = None

    @property
    def reversed_scheme(self) -> bool:
        """Whether the scheme's ranks run against the order the data suggest
        (:meth:`~faciesseq.markov.seriation.RankSuggestion.runs_against`), as
        ``faciesseq fit`` warns."""
        return self.order is not None and self.order.runs_against(self.agreement)

    @property
    def counts(self) -> dict[str, int]:
        out = {"error": 0, "warning": 0, "repair": 0}
        for p in self.problems:
            out[p.severity] += 1
        return out

    @property
    def usable(self) -> bool:
        """True when nothing stands in the way of analysis (no errors, at least one core)."""
        return self.counts["error"] == 0 and len(self.cores) > 0

    def to_frame(self, table: str = "cores") -> pd.DataFrame:
        """The ``"cores"``, ``"facies"`` or ``"problems"`` table."""
        if table == "cores":
            return self.cores.copy()
        if table == "facies":
            return self.facies.copy()
        if table == "problems":
            return pd.DataFrame(
                [p.to_dict() for p in self.problems],
                columns=["severity", "kind", "message", "file", "row", "core", "depth", "units"],
            )
        raise ValueError(f"unknown table {table!r}; expected cores, facies or problems")

    def to_dict(self) -> dict:
        """JSON-ready: ``summary``, ``cores``, ``facies``, ``problems`` (see docs/io.md)."""
        counts = self.counts
        summary = {
            "usable": self.usable,
            "units": self.units,
            "sources": list(self.sources),
            "cores": len(self.cores),
            "intervals": int(self.cores["intervals"].sum()) if len(self.cores) else 0,
            "beds": int(self.cores["beds"].sum()) if len(self.cores) else 0,
            "cored_thickness": float(self.cores["cored_thickness"].sum())
            if len(self.cores)
            else 0.0,
            "gaps": int(self.cores["gaps"].sum()) if len(self.cores) else 0,
            "facies": len(self.facies),
            "errors": counts["error"],
            "warnings": counts["warning"],
            "repairs": counts["repair"],
        }
        order = self.order
        return {
            "summary": summary,
            "suggested_order": None
            if order is None
            else {
                "landward_to_basinward": order.order(),
                "share_landward": order.share,
                "steps": order.n_steps,
                "clear": order.clear,
                "one_way_steps": [
                    {"below": a, "above": b, "count": n} for a, b, n in order.one_way
                ],
                "agreement_with_scheme": self.agreement,
            },
            "cores": _records(self.cores),
            "facies": _records(self.facies),
            "problems": [p.to_dict() for p in self.problems],
        }


def _records(frame: pd.DataFrame) -> list[dict]:
    """Rows as JSON-ready dicts: Python numbers, ``None`` for NaN (a column at a time)."""
    columns = [_plain_values(frame[name]) for name in frame.columns]
    names = list(frame.columns)
    return [dict(zip(names, row, strict=True)) for row in zip(*columns, strict=True)]


def _plain_values(column: pd.Series) -> list:
    if column.dtype.kind == "f":
        return [None if v != v else v for v in column.tolist()]  # NaN is not equal to itself
    if column.dtype.kind in "iu":
        return column.tolist()
    return [_plain(v) for v in column.tolist()]


def _plain(value):
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        return None if np.isnan(value) else float(value)
    return value


def _whole_table(cores: CoreSet, steps: dict) -> tuple:
    """The per-core rows, beds, and interval facies and thicknesses of a core set kept as
    one table of intervals, by whole-table operations (the same numbers as core by core)."""
    table = cores.cores.table
    starts = cores.cores.starts
    top = table["top"].to_numpy(dtype=float)
    base = table["base"].to_numpy(dtype=float)
    thick = base - top
    extents = cores.extents()
    gap = np.r_[False, top[1:] - base[:-1] > DEPTH_TOL]
    gap[starts[:-1]] = False
    width = np.r_[0.0, top[1:] - base[:-1]]
    owner = cores.cores.core_ids()
    bed_table, bed_core = cores._bed_table(attributes=False)
    core_frame = pd.DataFrame(
        {
            "core": cores.names,
            "intervals": np.diff(starts),
            "beds": np.bincount(bed_core, minlength=len(cores)),
            "top": extents["top"].to_numpy(),
            "base": extents["base"].to_numpy(),
            # numpy's sum of each core's slice, as Core.thickness sums it
            "cored_thickness": [float(thick[a:b].sum()) for a, b in pairwise(starts)],
            "gaps": extents["gaps"].to_numpy(),
            "gap_thickness": np.bincount(owner[gap], weights=width[gap], minlength=len(cores)),
            "units": cores.units,
            "sample_step": [steps.get(name, np.nan) for name in cores.names],
        },
        columns=_CORE_COLUMNS,
    )
    return core_frame, bed_table, table["facies"], pd.Series(thick), bed_core


def _core_by_core(cores: CoreSet, steps: dict) -> tuple:
    """The per-core rows, beds, and interval facies and thicknesses, core by core."""
    core_rows = []
    bed_tables = []
    for core in cores:
        beds = core.beds()
        gaps = core.gaps()
        core_rows.append(
            {
                "core": core.name,
                "intervals": len(core),
                "beds": len(beds),
                "top": core.top,
                "base": core.base,
                "cored_thickness": core.thickness,
                "gaps": len(gaps),
                "gap_thickness": float(sum(b - t for t, b in gaps)),
                "units": core.units,
                "sample_step": steps.get(core.name, np.nan),
            }
        )
        intervals = core.intervals
        bed_tables.append(
            (
                beds,
                intervals["facies"],
                intervals["base"] - intervals["top"],
            )
        )
    core_frame = pd.DataFrame(core_rows, columns=_CORE_COLUMNS)
    if bed_tables:
        beds = pd.concat([b for b, _, _ in bed_tables], ignore_index=True)
        interval_facies = pd.concat([f for _, f, _ in bed_tables], ignore_index=True)
        interval_thick = pd.concat([t for _, _, t in bed_tables], ignore_index=True)
        owner = np.repeat(np.arange(len(bed_tables)), [len(b) for b, _, _ in bed_tables])
    else:
        beds = pd.DataFrame(columns=["facies", "thickness"])
        interval_facies = pd.Series([], dtype=object)
        interval_thick = pd.Series([], dtype=float)
        owner = np.zeros(0, dtype=np.int64)
    return core_frame, beds, interval_facies, interval_thick, owner


def _upward_steps(facies: pd.Categorical, segment: pd.Series | None, owner) -> pd.Series:
    """:func:`~faciesseq.markov.seriation.upward_steps` of beds listed top down, core by
    core (``owner``: each bed's core): each bed and the bed above it in one core and one
    segment (no gap between them) make a step."""
    code = facies.codes
    segment = np.zeros(len(code)) if segment is None else segment.to_numpy()
    joined = (owner[1:] == owner[:-1]) & (segment[1:] == segment[:-1])
    return step_counts(code[1:][joined], code[:-1][joined], facies.categories)


def _by_facies(thickness: pd.Series, facies: pd.Series) -> pd.DataFrame:
    """Count and sum of the intervals' thickness per facies code (index)."""
    if not isinstance(facies.dtype, pd.CategoricalDtype):
        return thickness.groupby(facies.to_numpy(), sort=False).agg(["count", "sum"])
    # grouped on the integer codes (the same rows in the same order), named after
    stats = thickness.groupby(facies.cat.codes.to_numpy(), sort=False).agg(["count", "sum"])
    stats.index = facies.cat.categories[stats.index]
    return stats


def summarise(cores: CoreSet, scheme: FaciesScheme | None = None) -> DatabaseSummary:
    """Per-core and per-facies counts and thicknesses of a core set.

    Proportions by thickness use described thickness (gaps excluded); bed
    statistics use beds (adjacent intervals of one facies amalgamated, split at
    gaps, see :meth:`faciesseq.core.Core.beds`). Facies are listed in scheme
    order when a scheme is given, else by code.
    """
    found = _Found()
    found.add(cores)
    return found.summary(cores.units, cores.problems, cores.sources, scheme)


def summarise_batches(
    stream: CoreStream,
    scheme: FaciesScheme | None = None,
    more_problems: Callable[[CoreSet], Iterable[Problem]] | None = None,
) -> DatabaseSummary:
    """:func:`summarise` of a file read a batch of whole cores at a time
    (:meth:`faciesseq.io.stream.CoreStream.batches`, errors and all): the same
    summary, only the cores' rows and every interval's and bed's facies and thickness
    held. ``more_problems`` finds problems of a batch that reading does not (the
    labels of ``faciesseq check``), listed after the reader's. Raises
    :class:`~faciesseq.io.stream.NotStreamable` where the file must be read whole."""
    found = _Found()
    more: list[Problem] = []
    for batch in stream.batches(valid=False):
        found.add(batch)
        if more_problems is not None:
            more += more_problems(batch)
    whole = stream.summary()
    return found.summary(whole.units, (*whole.problems, *more), whole.sources, scheme)


class _Found:
    """What a summary is made from, one core set (or batch of whole cores) at a time:
    the per-core rows, and the facies and thickness of every bed and interval."""

    def __init__(self):
        self.rows: list[pd.DataFrame] = []
        self.beds: list[tuple[pd.Categorical, pd.Series]] = []
        self.intervals: list[tuple[pd.Categorical, pd.Series]] = []
        self.codes: set[str] = set()
        self.steps: pd.Series | None = None

    def add(self, cores: CoreSet) -> None:
        steps = dict(cores.meta.get("sample_step", {})) if cores.meta else {}
        if isinstance(cores.cores, CoreTable):
            core_frame, beds, interval_facies, interval_thick, owner = _whole_table(cores, steps)
        else:
            core_frame, beds, interval_facies, interval_thick, owner = _core_by_core(cores, steps)
        self.rows.append(core_frame)
        # a copy: the bed table's column would keep every float column of the table
        facies = _codes(beds["facies"])
        self.beds.append((facies, beds["thickness"].copy()))
        self.intervals.append((_codes(interval_facies), interval_thick))
        self.codes.update(cores.facies_codes())
        if len(beds):
            steps = _upward_steps(facies, beds.get("segment"), owner)
            self.steps = steps if self.steps is None else self.steps.add(steps, fill_value=0)

    def summary(self, units: str, problems, sources, scheme) -> DatabaseSummary:
        codes = sorted(self.codes, key=lambda c: (len(c), c))
        if scheme is not None:
            present = set(codes)
            order = [c for c in scheme.codes if c in present]
            listed = set(order)
            codes = order + [c for c in codes if c not in listed]
        # batches without cores (every row an error) add nothing, and no column types
        used = [k for k, rows in enumerate(self.rows) if len(rows)] or [0]
        bed_facies, bed_thick = _joined([self.beds[k] for k in used])
        interval_facies, interval_thick = _joined([self.intervals[k] for k in used])
        core_frame = pd.concat([self.rows[k] for k in used]) if len(used) > 1 else self.rows[0]
        order = None if self.steps is None else suggest_ranks(self.steps)
        return DatabaseSummary(
            units,
            core_frame.reset_index(drop=True),
            _facies_table(codes, bed_facies, bed_thick, interval_facies, interval_thick, scheme),
            tuple(problems),
            tuple(sources),
            order,
            None if order is None or scheme is None else order.agreement(scheme),
        )


def _codes(facies: pd.Series) -> pd.Categorical:
    """Facies codes as a categorical column (a small integer each)."""
    return facies.array if isinstance(facies.dtype, pd.CategoricalDtype) else pd.Categorical(facies)


def _joined(parts: list[tuple[pd.Categorical, pd.Series]]) -> tuple[pd.Series, pd.Series]:
    if len(parts) == 1:
        return pd.Series(parts[0][0]), parts[0][1].reset_index(drop=True)
    facies = pd.api.types.union_categoricals([f for f, _ in parts])
    return pd.Series(facies), pd.concat([t for _, t in parts], ignore_index=True)


def _facies_table(codes, bed_facies, bed_thick, interval_facies, interval_thick, scheme):
    """One row per facies code: counts, thickness, proportions, bed thickness statistics."""
    total_thickness = float(interval_thick.sum())
    total_beds = len(bed_facies)
    # one pass per table, grouped by facies (linear in the number of facies codes)
    bed_stats = (
        pd.to_numeric(bed_thick, errors="coerce")
        .astype(float)
        .groupby(bed_facies.to_numpy(), sort=False)
        .agg(["count", "mean", "median", "min", "max", "std"])
    )
    interval_stats = _by_facies(interval_thick.astype(float), interval_facies)
    bed_rows = bed_stats.to_dict(orient="index")
    interval_rows = interval_stats.to_dict(orient="index")
    facies_rows = []
    for code in codes:
        b = bed_rows.get(code, {})
        n_beds = int(b.get("count", 0))
        iv = interval_rows.get(code, {})
        described = float(iv.get("sum", 0.0))
        facies_rows.append(
            {
                "facies": code,
                "name": scheme[code].name if scheme is not None and code in scheme else None,
                "intervals": int(iv.get("count", 0)),
                "beds": n_beds,
                "thickness": described,
                "proportion_thickness": described / total_thickness if total_thickness else np.nan,
                "proportion_beds": n_beds / total_beds if total_beds else np.nan,
                "bed_thickness_mean": float(b["mean"]) if n_beds else np.nan,
                "bed_thickness_median": float(b["median"]) if n_beds else np.nan,
                "bed_thickness_min": float(b["min"]) if n_beds else np.nan,
                "bed_thickness_max": float(b["max"]) if n_beds else np.nan,
                "bed_thickness_std": float(b["std"]) if n_beds > 1 else np.nan,
            }
        )
    return pd.DataFrame(facies_rows, columns=_FACIES_COLUMNS)
