"""Exports of a decoded interpretation that other geoscience software reads.

- :func:`tops_table`: the picked surfaces as a tops (markers) table, one row per
  pick: ``well, surface, name, depth, depth_top, depth_base, probability, units``.
- :func:`samples_table`: the user's own sample rows (sample layout), each with
  the decoded ``tract`` and ``p_<TRACT>`` of the bed that holds it.
- :func:`write_las_files`: one LAS 2.0 file per well (Canadian Well Logging
  Society, LAS Version 2.0, 1992), written with lasio: ``DEPT``, ``FACIES``,
  ``TRACT`` and one ``P_<TRACT>`` probability curve per tract on a regular
  depth grid, text codes as whole numbers with their table in ``~Parameter``
  (``FACIES_<n>``, ``TRACT_<n>``, as :mod:`faciesseq.io.las` writes and reads
  them).

A depth belongs to the bed with ``top <= depth < base``; the base of the last
bed above a gap (or of the core) belongs to that bed. Depths in no bed (gaps,
above or below the core) have no tract: blank in tables, the null value in LAS.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterable
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.core import DEPTH_TOL, row_word
from faciesseq.errors import ConfigError, some_of
from faciesseq.interpretation import TOPS_COLUMNS

__all__ = [
    "LAS_NULL",
    "LAS_PROBABILITY_DECIMALS",
    "MAX_LAS_SAMPLES",
    "TOPS_COLUMNS",
    "beds_without_sample",
    "default_las_step",
    "samples_table",
    "tidy_step",
    "tops_table",
    "write_las_files",
]

#: Null value of the LAS files (the value of common practice; :data:`faciesseq.io.las.LAS_NULL`).
LAS_NULL = -999.25
#: Most depth samples in one LAS file; a smaller ``step`` is refused before writing.
MAX_LAS_SAMPLES = 2_000_000
#: Decimals of the ``P_<TRACT>`` curves: a posterior is not known better than that.
LAS_PROBABILITY_DECIMALS = 4


def tops_table(interp) -> pd.DataFrame:
    """The picked surfaces of every well, one row per pick, depth order within wells:
    :meth:`faciesseq.interpretation.Interpretation.tops_table` (columns
    :data:`TOPS_COLUMNS`)."""
    return interp.tops_table()


def _bed_index(beds: pd.DataFrame, depth: np.ndarray) -> np.ndarray:
    """Row of ``beds`` (depth order) holding each depth, -1 where none does.

    ``top <= depth < base``; a depth at the base of a bed that no bed
    continues below (above a gap, at the base of the core) is in that bed.
    """
    out = np.full(len(depth), -1, dtype=np.int64)
    if not len(beds) or not len(depth):
        return out
    top = beds["top"].to_numpy(float)
    base = beds["base"].to_numpy(float)
    order = np.argsort(top, kind="stable")
    known = np.isfinite(depth)
    pos = np.searchsorted(top[order] - DEPTH_TOL, np.where(known, depth, -np.inf), side="right")
    idx = order[np.clip(pos - 1, 0, None)]
    inside = known & (pos > 0) & (depth <= base[idx] + DEPTH_TOL)
    out[inside] = idx[inside]
    return out


def _clear_name(name: str, taken: Iterable[str]) -> str:
    """``name``, or ``source_<name>`` (then ``source_source_<name>``...) if taken."""
    taken = set(taken)
    while name in taken:
        name = f"source_{name}"
    return name


def _reads_as_added(name: str, added: list[str]) -> bool:
    """Whether a source column would be taken for one of the columns the samples table
    adds: the same name to the readers (case, spaces and underscores aside) or another
    name of the tract role (``Systems Tract``), so that the table reads back as a source
    with one tract column."""
    from faciesseq.io.columns import ROLES, _key

    key = _key(name)
    return key in {_key(a) for a in added} or key in ROLES["tract"]


def samples_table(interp, samples: pd.DataFrame) -> pd.DataFrame:
    """The user's sample rows with the decoded tract of the bed holding each sample.

    Parameters
    ----------
    interp
        The :class:`~faciesseq.interpretation.Interpretation`.
    samples
        From :func:`faciesseq.io.samples.read_samples`: the original columns
        and the reader's core name and depth of each row
        (:data:`~faciesseq.io.samples.CORE_KEY`, :data:`~faciesseq.io.samples.DEPTH_KEY`).

    Returns
    -------
    pandas.DataFrame
        Every row and original column of ``samples`` in their order, plus
        ``tract`` and ``p_<TRACT>`` (one per tract, in the model's order) of
        the bed that holds the sample; blank where no decoded bed holds it (a
        gap, a sample without a facies code, a core left out). An original
        column named like one of these (in any case or spacing, or another name
        of the tract role) is kept as ``source_<name>``.
    """
    from faciesseq.io.samples import CORE_KEY, DEPTH_KEY

    added = ["tract", *[f"p_{t}" for t in interp.tracts]]
    original = [c for c in samples.columns if c not in (CORE_KEY, DEPTH_KEY)]
    renamed = {}
    for col in original:
        if _reads_as_added(str(col), added):
            renamed[col] = _clear_name(f"source_{col}", [*original, *added])
    out = samples[original].rename(columns=renamed).reset_index(drop=True)
    tract = np.full(len(out), None, dtype=object)
    probs = np.full((len(out), len(interp.tracts)), np.nan)
    depths = pd.to_numeric(samples[DEPTH_KEY], errors="coerce").to_numpy(float)
    groups = pd.Series(np.arange(len(out))).groupby(samples[CORE_KEY].to_numpy(), sort=False)
    rows_of = {name: part.to_numpy() for name, part in groups}
    for core in interp:
        rows = rows_of.get(core.core)
        if rows is None:
            continue
        beds = core.beds.reset_index(drop=True)
        which = _bed_index(beds, depths[rows])
        hit = which >= 0
        tract[rows[hit]] = beds["tract"].astype(str).to_numpy(object)[which[hit]]
        p = beds[[f"p_{t}" for t in interp.tracts]].to_numpy(float)
        probs[rows[hit]] = p[which[hit]]
    out["tract"] = tract
    for j, t in enumerate(interp.tracts):
        out[f"p_{t}"] = probs[:, j]
    return out


def tidy_step(value: float) -> float:
    """The largest of 1, 2 or 5 times a power of ten not above ``value`` (> 0)."""
    if not (value > 0 and math.isfinite(value)):
        raise ConfigError(f"a depth step must be a positive number, got {value!r}")
    power = 10.0 ** math.floor(math.log10(value))
    for mult in (5, 2, 1):
        if mult * power <= value * (1 + 1e-9):
            return float(f"{mult * power:.12g}")
    return float(f"{power:.12g}")  # pragma: no cover - mult 1 always fits


def default_las_step(interp) -> tuple[float, float]:
    """``(step, median)``: half the median bed thickness over every well, made tidy
    (:func:`tidy_step`), in the wells' units; and the median itself."""
    thick = np.concatenate(
        [(c.beds["base"] - c.beds["top"]).to_numpy(float) for c in interp if len(c.beds)]
        or [np.zeros(0)]
    )
    thick = thick[np.isfinite(thick) & (thick > 0)]
    if not len(thick):
        raise ConfigError("no beds with a thickness to choose a LAS depth step from")
    median = float(np.median(thick))
    return tidy_step(median / 2), median


def _natural(code: str) -> tuple:
    try:
        return (0, float(code), code)
    except ValueError:
        return (1, 0.0, code)


def _facies_table(interp, scheme) -> list[tuple[str, str]]:
    """``(code, name)`` per integer 1, 2, ...: the scheme's order, then other codes."""
    found = {str(f) for c in interp for f in c.beds["facies"]}
    table: list[tuple[str, str]] = []
    if scheme is not None:
        table = [(f.code, f.name) for f in scheme.facies]
    known = {code for code, _ in table}
    table += [(code, code) for code in sorted(found - known, key=_natural)]
    return table


def _tract_table(interp, tract_model) -> list[tuple[str, str]]:
    names = {}
    if tract_model is not None:
        names = {t.code: t.name for t in tract_model.tracts}
    return [(t, names.get(t, t)) for t in interp.tracts]


def _grid(top: float, base: float, step: float) -> np.ndarray:
    """Sample depths of a well from ``top`` to ``base``: the centres of cells one ``step``
    thick from ``top`` (``top + step/2``, ``top + 3 step/2``, ...), those above ``base``.

    A sample stands for the cell around it, as the samples layout reads a LAS file
    back (``[depth - step/2, depth + step/2)``, docs/io.md) and as
    :func:`faciesseq.io.las.write_las` writes one, so the cells cover the well from
    its top. A bed at least one step thick always holds a sample. Only the last cell
    may run past ``base``, by less than half a step (its centre above ``base``);
    :func:`write_las_files` refuses a well shorter than one step
    (:func:`_holds_a_cell`).
    """
    n = max(math.ceil((base - top) / step - 1e-6), 0)
    centres = top + (np.arange(n) + 0.5) * step
    return np.round(centres[centres < base - 1e-9], 10)


def _holds_a_cell(top: float, base: float, step: float) -> bool:
    """Whether a well from ``top`` to ``base`` holds the first cell of the grid
    (:func:`_grid`) whole: a well shorter than one step would have its one sample
    stand for a cell past its base, read back as a well up to twice as long. Depths a
    millionth of a step apart count as one, as in :func:`_grid`."""
    return (base - top) / step >= 1 - 1e-6


def _fitting_step(interp, step: float, how: str) -> tuple[float, str]:
    """The default ``step`` lowered, where a well is shorter than it, to a tidy step
    the shortest well holds (:func:`_holds_a_cell`), and ``how`` saying so: a short
    core in a database should not stop the export that a given ``--las-step`` would."""
    spans = {
        core.core: float(core.beds["base"].max() - core.beds["top"].min())
        for core in interp
        if len(core.beds)
    }
    short = {name: span for name, span in spans.items() if span > 0}
    if not short:
        return step, how
    name = min(short, key=short.get)
    if _holds_a_cell(0.0, short[name], step):
        return step, how
    fitted = tidy_step(short[name])
    return fitted, f"{how}, lowered to {fitted:g} so that the shortest well ({name}) holds a sample"


def _unsampled(interp, step: float) -> dict[str, tuple[int, int, dict[str, int], float]]:
    """Per well: how many of its beds no sample of ``step`` falls in, of how many, those
    beds by tract, and its thinnest bed."""
    out = {}
    for core in interp:
        beds = core.beds.reset_index(drop=True)
        if not len(beds):
            continue
        thick = (beds["base"] - beds["top"]).to_numpy(float)
        ok = np.isfinite(thick) & (thick > 0)
        thinnest = float(thick[ok].min()) if ok.any() else math.inf
        depth = _grid(float(beds["top"].min()), float(beds["base"].max()), step)
        held = np.zeros(len(beds), dtype=bool)
        which = _bed_index(beds, depth)
        held[which[which >= 0]] = True
        missed: dict[str, int] = {}
        for tract in beds.loc[~held, "tract"]:
            missed[str(tract)] = missed.get(str(tract), 0) + 1
        out[core.core] = (int((~held).sum()), len(beds), missed, thinnest)
    return out


def _by_tract(interp, missed: dict[str, int]) -> str:
    order = list(interp.tracts) + sorted(set(missed) - set(interp.tracts))
    return ", ".join(f"{missed[t]} {t}" for t in order if t in missed)


def _keeping_step(counts) -> float | None:
    """The tidy step not above the thinnest bed of all wells (``None``: no bed)."""
    thinnest = min((c[3] for c in counts.values()), default=math.inf)
    return tidy_step(thinnest * (1 + 1e-9)) if math.isfinite(thinnest) else None


def beds_without_sample(
    interp, step: float, shown: int = 5, counts: dict | None = None
) -> str | None:
    """One line naming the beds that no depth sample of ``step`` falls in, or None.

    A bed thinner than ``step`` may fall between two samples of the grid
    (:func:`_grid`) and be absent from the LAS curves. The line counts them, names
    the wells that lose some (the first ``shown``, with how many each), their tracts
    and the step that gives every bed at least one sample: the tidy step
    (:func:`tidy_step`) not above the thinnest bed (a half-open depth range
    ``[top, base)`` at least one step long always holds a sample). ``counts``: the
    :func:`_unsampled` of ``interp`` and ``step`` where the caller has them.
    """
    counts = _unsampled(interp, step) if counts is None else counts
    count = sum(c[0] for c in counts.values())
    if not count:
        return None
    total = sum(c[1] for c in counts.values())
    missed: dict[str, int] = {}
    for c in counts.values():
        for tract, n in c[2].items():
            missed[tract] = missed.get(tract, 0) + n
    losing = [(core, c[0]) for core, c in counts.items() if c[0]]
    wells = some_of([f"{core} {n}" for core, n in losing], shown)
    thinnest = min(c[3] for c in counts.values())
    units = next(core.units for core in interp if core.core in counts)
    rows = row_word(interp.meta.get("unit", "beds"))
    return (
        f"LAS step {step:g} {units} leaves {count} of {total} {rows} without a sample, in "
        f"{len(losing)} of {len(counts)} well(s) ({wells}; {_by_tract(interp, missed)}; the "
        f"thinnest {thinnest:.3g} {units}): --las-step {_keeping_step(counts):g} gives each one"
    )


def _well_note(interp, core, step: float, counts) -> str | None:
    """The ``~Other`` line of one well's file on its beds without a sample, or None."""
    lost, total, missed, _ = counts.get(core.core, (0, 0, {}, math.inf))
    if not lost:
        return None
    rows = row_word(interp.meta.get("unit", "beds"))
    return (
        f"{lost} of the {total} {rows} of this well are thinner than the step and hold no "
        f"sample ({_by_tract(interp, missed)}): they are not in the curves; --las-step "
        f"{_keeping_step(counts):g} gives every {rows[:-1]} of the run a sample."
    )


#: What the rows of an interpretation are, by the model's unit (``meta["unit"]``).


def write_las_files(
    interp,
    folder: Path,
    *,
    step: float | None = None,
    scheme=None,
    tract_model=None,
) -> list[Path]:
    """Write one LAS 2.0 file per well into ``folder`` (created; it must not exist).

    Parameters
    ----------
    interp
        The :class:`~faciesseq.interpretation.Interpretation`.
    folder
        The folder to create; files are named after the wells
        (:func:`faciesseq.io.writer.safe_stem`, ``.las``).
    step
        Depth step in the wells' units; default :func:`default_las_step`.
    scheme, tract_model
        For the names of the facies and tracts in the code tables (codes
        stand for names without them).

    Returns
    -------
    list of Path
        The files written, in the order of the wells.

    Notes
    -----
    Depths are the centres of cells one ``step`` thick from the top of the well's
    first bed down to its last bed's base (:func:`_grid`; ``STRT`` is ``top +
    step/2``, ``STOP`` the last centre), as :func:`faciesseq.io.las.write_las`
    writes a core and the samples layout reads a sample back; each sample takes
    the bed holding its depth (module notes), gaps hold ``NULL`` (-999.25).
    ``FACIES`` and ``TRACT`` are whole numbers; ``~Parameter`` holds their tables
    (``FACIES_1 . USF : upper shoreface``), the same for every well of the run.
    ``~Other`` states
    how the step was chosen, the code tables in words and whether the
    probabilities were checked. Probabilities are written to
    :data:`LAS_PROBABILITY_DECIMALS` decimals. A step longer than a well is refused
    (:class:`ConfigError` naming the well): its one sample would stand for a cell past
    the well's base. Beds thinner than the step may hold
    no sample: a :class:`UserWarning` of one line counts them, names the wells
    and tracts that lose some and the step that keeps every bed
    (:func:`beds_without_sample`), and the ``~Other`` section of each such well's
    file says how many of its beds are not in the curves.
    """
    from faciesseq._optional import import_optional
    from faciesseq.io.las import header_depths
    from faciesseq.io.writer import FileStems

    lasio = import_optional("lasio", "writing LAS files (decode --format las)")
    if step is None:
        step, median = default_las_step(interp)
        units = next(iter(interp)).units
        how = f"half the median bed thickness ({median:.4g} {units}) rounded down to {step:g}"
        step, how = _fitting_step(interp, step, how)
    else:
        step = float(step)
        if not (step > 0 and math.isfinite(step)):
            raise ConfigError(f"--las-step must be a positive number, got {step!r}")
        how = "given (--las-step)"
    for core in interp:
        if len(core.beds):
            top, base = float(core.beds["top"].min()), float(core.beds["base"].max())
            span = base - top
            if not _holds_a_cell(top, base, step):
                raise ConfigError(
                    f"LAS step {step:g} is longer than the well ({span:.4g} {core.units}): "
                    "its one sample would stand for a cell past the well's base; give a "
                    f"--las-step of at most the well's length, e.g. {tidy_step(span):g}",
                    core=core.core,
                )
            if span / step > MAX_LAS_SAMPLES:
                raise ConfigError(
                    f"LAS step {step:g} would make about {int(span / step):,} samples "
                    f"(at most {MAX_LAS_SAMPLES:,}); choose a larger --las-step",
                    core=core.core,
                )
    counts = _unsampled(interp, step)  # for the warning and for each well's ~Other
    missing = beds_without_sample(interp, step, counts=counts)
    if missing is not None:
        warnings.warn(missing, UserWarning, stacklevel=2)
    facies = _facies_table(interp, scheme)
    tracts = _tract_table(interp, tract_model)
    facies_number = {code: k for k, (code, _) in enumerate(facies, start=1)}
    tract_number = {code: k for k, (code, _) in enumerate(tracts, start=1)}
    folder.mkdir()
    written: list[Path] = []
    stems = FileStems()
    for core in interp:
        path = folder / f"{stems(core.core)}.las"
        las = _well_las(lasio, core, step, how, facies, tracts, facies_number, tract_number)
        note = _well_note(interp, core, step, counts)
        las.other = _other_text(interp, core.units, step, how, facies, tracts, note)
        with open(path, "w", encoding="utf-8", newline="\n") as handle:
            las.write(handle, version=2.0, fmt="%.10g", **header_depths(las))
        written.append(path)
    return written


def _well_las(lasio, core, step, how, facies, tracts, facies_number, tract_number):
    from faciesseq.io.las import DECODED_MARK

    beds = core.beds.reset_index(drop=True)
    unit = core.units.upper()
    if len(beds):
        depth = _grid(float(beds["top"].min()), float(beds["base"].max()), step)
    else:
        depth = np.zeros(0)
    which = _bed_index(beds, depth)
    hit = which >= 0
    at = np.clip(which, 0, None)

    def curve(values: np.ndarray) -> np.ndarray:
        return np.where(hit, values[at] if len(values) else LAS_NULL, LAS_NULL).astype(float)

    las = lasio.LASFile()
    las.well["WELL"].value = core.core
    las.well["NULL"].value = LAS_NULL
    las.well["STRT"].value = float(depth[0]) if len(depth) else 0.0
    las.well["STOP"].value = float(depth[-1]) if len(depth) else 0.0
    las.well["STEP"].value = step
    for key in ("STRT", "STOP", "STEP"):
        las.well[key].unit = unit
    las.well["STEP"].descr = _descr(f"STEP DEPTH ({how})")
    las.append_curve("DEPT", depth, unit=unit, descr="depth")
    codes = np.array([facies_number[str(f)] for f in beds["facies"]], dtype=float)
    las.append_curve("FACIES", curve(codes), descr="facies code number (FACIES_n in ~Parameter)")
    numbers = np.array([tract_number[str(t)] for t in beds["tract"]], dtype=float)
    las.append_curve("TRACT", curve(numbers), descr="decoded systems tract (TRACT_n in ~Parameter)")
    for code, name in tracts:
        values = np.round(beds[f"p_{code}"].to_numpy(float), LAS_PROBABILITY_DECIMALS)
        las.append_curve(f"P_{code}", curve(values), descr=_descr(f"probability of the {name}"))
    for code, name in facies:
        k = facies_number[code]
        las.params.append(lasio.HeaderItem(f"FACIES_{k}", value=code, descr=_descr(name)))
    for code, name in tracts:
        k = tract_number[code]
        las.params.append(lasio.HeaderItem(f"TRACT_{k}", value=code, descr=_descr(name)))
    las.params.append(
        lasio.HeaderItem(
            DECODED_MARK,
            value="TRACT",
            descr="the TRACT curve is decoded by a model - not an interpreter's labels",
        )
    )
    return las


def _descr(text: str) -> str:
    """A LAS description: one line, no colon (the value ends at the last colon of a line)."""
    return " ".join(str(text).replace(":", " -").split())


def _other_text(interp, units, step, how, facies, tracts, note=None) -> str:
    lines = [
        f"Depth step {step:g} {units}: {how}; samples at the centres of cells one step "
        "thick from the top of the first bed.",
        *([note] if note else []),
        "FACIES codes: " + "; ".join(f"{k} = {c} ({n})" for k, (c, n) in enumerate(facies, 1)),
        "TRACT codes: " + "; ".join(f"{k} = {c} ({n})" for k, (c, n) in enumerate(tracts, 1)),
        "P_<TRACT>: posterior probability of each tract in the bed holding the depth "
        f"(to {LAS_PROBABILITY_DECIMALS} decimals).",
        f"Gaps in the core hold the null value {LAS_NULL}.",
        interp.probabilities_note,
    ]
    return "\n".join(lines)
