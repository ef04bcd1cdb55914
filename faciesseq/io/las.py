"""LAS 2.0 files (lasio): one well per file, a discrete facies curve on the depth index.

Reading: the depth units come from the index curve (or ``STRT``) in the
header; the core is named by the ``WELL`` header item (else the file name);
the facies curve is ``curve`` or the curve whose mnemonic looks like a facies
column (``FACIES``, ``LITHOFACIES``, ``FAC``...). Samples holding the header's
``NULL`` value (e.g. -999.25) are not described: they stay rows with a blank
facies, which the validation step leaves out as it leaves out any sample without a
facies code (``not-described``, naming their rows) and whose gaps it reports.

Text in LAS 2.0 data is awkward, so this project stores a text-valued curve
(a facies code such as ``USF``, a contact type) as whole numbers 1, 2, ...
with the meaning of each number in the ``~Parameter`` section: the mnemonic
``<CURVE>_<n>`` holds the text of value ``n``. The reader decodes any curve
that has such entries.

A file written by ``faciesseq decode`` carries the ``~Parameter`` item
:data:`DECODED_MARK`; its ``TRACT`` curve is the model's decoded tract, not an
interpreter's: it is read as the plain column ``decoded_tract`` (one warning), so
that a fit with labels never trains on a model's own output.
"""

from __future__ import annotations

import io
import re
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.errors import ConfigError, InputError, Problem
from faciesseq.io.columns import ROLES, _key, normalise_units
from faciesseq.io.raw import RawTable
from faciesseq.io.tabular import decode_text

__all__ = ["DECODED_MARK", "LAS_NULL", "header_depths", "read_las", "write_las"]

#: Null value written in the header of the LAS files this project writes.
LAS_NULL = -999.25
#: ``~Parameter`` mnemonic of the LAS files ``faciesseq decode`` writes.
DECODED_MARK = "FSQ_DECODED"
#: Column the decoded ``TRACT`` curve of such a file is read as (no role).
DECODED_TRACT = "decoded_tract"


def _facies_curve(mnemonics: list[str], curve: str | None, file: str) -> str:
    if curve is not None:
        hits = [m for m in mnemonics if m.lower() == curve.strip().lower()]
        if not hits:
            raise InputError(
                f"no curve {curve!r}; the curves are {', '.join(mnemonics)}", file=file
            )
        return hits[0]
    hits = [m for m in mnemonics[1:] if _key(m) in ROLES["facies"]]
    if len(hits) == 1:
        return hits[0]
    if not hits:
        raise InputError(
            "no facies curve found (looked for FACIES, LITHOFACIES, FAC...); name it with "
            f"--curve (the curves are {', '.join(mnemonics)})",
            file=file,
        )
    raise InputError(
        f"curves {', '.join(hits)} all look like facies curves; name one with --curve", file=file
    )


def _item(section, mnemonic: str):
    """A header item by mnemonic, whatever its case, or ``None``."""
    for item in section:
        if item.mnemonic.upper() == mnemonic:
            return item
    return None


def read_las(path: Path, curve: str | None = None, encoding: str | None = None) -> RawTable:
    """Read one LAS 2.0 file as a sample-layout table (see the module notes)."""
    from faciesseq._optional import import_optional

    lasio = import_optional("lasio", "reading LAS files")

    file = str(path)
    text, problems = _las_text(path, encoding)
    las = _parse_las(lasio, text, file)
    mnemonics = [c.mnemonic for c in las.curves]
    if len(mnemonics) < 2:
        raise InputError("LAS file has no curves besides the depth index", file=file)
    facies = _facies_curve(mnemonics, curve, file)
    units = _depth_units(las, file)
    raw = _header_text(lasio, text)
    well_item = _item(las.well, "WELL")
    core = (_item_text(well_item, raw) if well_item is not None else "") or path.stem
    codes = _code_tables(las, mnemonics, raw)
    frame = pd.DataFrame({m: np.asarray(las[m]) for m in mnemonics}).astype(object)
    null = _null_value(las, file)
    nulls = _nulls_to_missing(frame, mnemonics, null, codes)
    rows = np.arange(1, len(frame) + 1)
    # Samples whose facies is null stay rows (the samples table of decode lists every
    # line); validation leaves them out as not described, naming their rows.
    nulls.pop(facies, None)
    if nulls:
        listed = ", ".join(f"{m} ({n})" for m, n in nulls.items())
        problems.append(
            Problem(
                "warning",
                "null",
                f"null values read as missing in curve(s) {listed}",
                file=file,
                core=core,
            )
        )
    if _item(las.params, DECODED_MARK) is not None:
        frame = _decoded_tract_aside(frame, facies, problems, file, core)
    # Rows are LAS data lines (1 = the first line of the ~A section).
    return RawTable(
        frame,
        file,
        rows.tolist(),
        units=units,
        core=core,
        layout="samples",
        roles={"depth": mnemonics[0], "facies": facies},
        problems=problems,
    )


def _decoded_tract_aside(
    frame: pd.DataFrame, facies: str, problems: list[Problem], file: str, core: str
) -> pd.DataFrame:
    """The ``TRACT`` curve of a file decode wrote renamed :data:`DECODED_TRACT`, said
    in one warning (a model's output is no interpreter's label)."""
    curves = [m for m in frame.columns if _key(m) in ROLES["tract"] and m != facies]
    if not curves:
        return frame
    problems.append(
        Problem(
            "warning",
            "decoded-tract",
            f"written by faciesseq decode: its {curves[0]} curve (the model's decoded "
            f"tracts) is read as the column {DECODED_TRACT}, not as an interpreter's tract "
            "labels",
            file=file,
            core=core,
        )
    )
    return frame.rename(columns={curves[0]: DECODED_TRACT})


def _las_text(path: Path, encoding: str | None) -> tuple[str, list[Problem]]:
    """The file's text (UTF-8, stated or detected encoding) and the problems of reading it."""
    file = str(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror}", file=file) from None
    return decode_text(data, file, encoding)


def _parse_las(lasio, text: str, file: str):
    """The LAS file parsed by lasio (mnemonics as written, nulls left for this reader)."""
    try:
        return lasio.read(io.StringIO(text), null_policy="strict", mnemonic_case="preserve")
    except Exception as exc:  # lasio raises many types for a malformed file
        raise InputError(
            f"not a readable LAS file ({type(exc).__name__}: {exc})", file=file
        ) from None


def _depth_units(las, file: str) -> str | None:
    """Depth units of the index curve, else of ``STRT``; ``None`` when neither states them."""
    strt = _item(las.well, "STRT")
    unit = las.curves[0].unit or (strt.unit if strt is not None else "")
    return normalise_units(unit, where=file) if unit and unit.strip() else None


def _code_tables(
    las, mnemonics: list[str], raw: dict[str, list[str]]
) -> dict[str, dict[float, str]]:
    """Curve -> (number -> text) from the ``<CURVE>_<n>`` items of the ``~Parameter`` section."""
    codes: dict[str, dict[float, str]] = {}
    for item in las.params:
        m = re.match(r"^(?P<curve>.+)_(?P<n>\d+)$", item.mnemonic)
        if m and m.group("curve") in mnemonics:
            codes.setdefault(m.group("curve"), {})[float(m.group("n"))] = _item_text(item, raw)
    return codes


def _header_text(lasio, text: str) -> dict[str, list[str]]:
    """Upper-cased mnemonic -> the value and description fields of its header lines as
    written (``~Well`` and ``~Parameter``), before lasio reads numbers in them."""
    from lasio.reader import read_header_line

    fields: dict[str, list[str]] = {}
    section = ""
    for line in text.splitlines():
        line = line.strip()
        if line.startswith("~"):
            section = line[1:2].upper()
            if section == "A":
                break
            continue
        if section not in ("W", "P") or not line or line.startswith("#"):
            continue
        try:
            parsed = read_header_line(line, section_name="Parameter")
        except Exception:  # a malformed line: lasio's own reading of it stands
            continue
        name = str(parsed.get("name", "")).strip().upper()
        fields.setdefault(name, []).extend(
            str(parsed.get(k, "")).strip() for k in ("value", "descr")
        )
    return fields


def _item_text(item, raw: dict[str, list[str]]) -> str:
    """A header item's value as text as written: lasio reads ``01`` or ``007`` as the
    number 1 or 7, which would join facies code ``01`` with ``1`` or rename a well."""
    value = item.value
    if isinstance(value, str):
        return value.strip()
    for text in raw.get(item.mnemonic.upper(), []):
        try:
            if text and float(text) == float(value):
                return text
        except (TypeError, ValueError):
            continue
    return str(value).strip()


def _null_value(las, file: str) -> float | None:
    """The header's ``NULL`` value; ``None`` when it is missing or blank."""
    null_item = _item(las.well, "NULL")
    null = null_item.value if null_item is not None and null_item.value != "" else None
    try:
        return None if null is None else float(null)
    except (TypeError, ValueError):
        raise InputError(f"NULL header value {null!r} is not a number", file=file) from None


def _nulls_to_missing(
    frame: pd.DataFrame,
    mnemonics: list[str],
    null: float | None,
    codes: dict[str, dict[float, str]],
) -> dict[str, int]:
    """Blank the null samples of every curve in place (text stays text) and decode the
    curves with code tables; the number of null samples per curve that has any."""
    nulls: dict[str, int] = {}
    for m in mnemonics:
        col = pd.to_numeric(frame[m], errors="coerce")
        missing = col.isna() & pd.Series(frame[m]).notna()  # text stays text
        is_null = col.isna() & ~missing
        if null is not None:
            is_null |= np.isclose(col.astype(float), float(null), equal_nan=False)
        if is_null.any():
            nulls[m] = int(is_null.sum())
            frame.loc[is_null, m] = None
        if m in codes:
            table = codes[m]
            frame[m] = [
                None if v is None or pd.isna(v) else table.get(float(v), v) for v in frame[m]
            ]
    return nulls


def _regular_step(core, step: float | None) -> float:
    """The sample spacing to write a core on: ``step`` or the coarsest grid its depths fit."""
    table = core.intervals
    depths = np.r_[table["top"].to_numpy(float), table["base"].to_numpy(float)]
    offsets = depths - depths.min()
    if step is not None:
        candidates = [float(step)]
    else:
        thick = np.diff(np.unique(np.round(depths, 9)))
        smallest = float(thick.min()) if len(thick) else 1.0
        candidates = [smallest / k for k in (1, 2, 3, 4, 5, 8, 10, 20, 25, 50, 100)]
    for cand in candidates:
        ratio = offsets / cand
        if cand > 0 and np.allclose(ratio, np.round(ratio), atol=1e-6):
            return cand
    raise ConfigError(
        "interval boundaries do not fall on a regular depth grid; give a sample step "
        "(write_cores(..., step=...))",
        core=core.name,
    )


def header_depths(las) -> dict[str, float]:
    """``STRT``, ``STOP`` and ``STEP`` as set in the ~Well section, for ``LASFile.write``:
    left to itself lasio works them out from the depths, and a well of one sample got
    ``STEP 0`` (the step it was written at is the one to state)."""
    return {key: las.well[key].value for key in ("STRT", "STOP", "STEP")}


def write_las(core, path: Path, step: float | None = None) -> None:
    """Write one core as a LAS 2.0 file on a regular depth grid (sample centres).

    Cell ``k`` covers ``[top + k*step, top + (k+1)*step)`` and its sample is at
    the centre, as the sample layout reads it back (and as ``decode --format las``
    writes, :func:`faciesseq.report.exports.write_las_files`); ``STRT`` and
    ``STOP`` are the first and last centre (LAS 2.0). Every interval boundary
    must lie on the grid (else :class:`ConfigError`), so each interval holds a
    sample; cells in gaps hold the null value. Not atomic by itself:
    :func:`faciesseq.io.write_cores` writes to a temporary path and renames.
    """
    from faciesseq._optional import import_optional

    lasio = import_optional("lasio", "writing LAS files")

    step = _regular_step(core, step)
    table = core.intervals
    top = table["top"].to_numpy(float)
    base = table["base"].to_numpy(float)
    n = round((base.max() - top.min()) / step)
    centres = top.min() + (np.arange(n) + 0.5) * step
    which = np.searchsorted(top, centres, side="right") - 1
    inside = (which >= 0) & (centres < base[np.clip(which, 0, None)])
    las = lasio.LASFile()
    las.well["WELL"].value = core.name
    las.well["NULL"].value = LAS_NULL
    unit = core.units.upper()
    las.append_curve("DEPT", np.round(centres, 9), unit=unit, descr="sample depth")
    columns = ["facies"] + [c for c in core.attributes]
    for col in columns:
        values = table[col].to_numpy(dtype=object)
        cell = np.where(inside, values[np.clip(which, 0, None)], None)
        numeric = pd.to_numeric(pd.Series(values), errors="coerce")
        is_text = col == "facies" or (pd.Series(values).notna() & numeric.isna()).any()
        mnemonic = col.upper() if col == "facies" else col
        if is_text:
            labels = sorted({str(v) for v in values if v is not None and not pd.isna(v)})
            number = {v: k for k, v in enumerate(labels, start=1)}
            data = np.array(
                [LAS_NULL if v is None or pd.isna(v) else number[str(v)] for v in cell], float
            )
            for v, k in number.items():
                las.params.append(
                    lasio.HeaderItem(f"{mnemonic}_{k}", value=v, descr=f"{col} value {k}")
                )
        else:
            data = np.array([np.nan if v is None else float(v) for v in cell], float)
            data = np.where(np.isnan(data), LAS_NULL, data)
        las.append_curve(mnemonic, data, descr=col)
    las.well["STRT"].value = float(centres[0]) if n else 0.0
    las.well["STOP"].value = float(centres[-1]) if n else 0.0
    las.well["STEP"].value = step
    for key in ("STRT", "STOP", "STEP"):
        las.well[key].unit = unit
    with open(path, "w", encoding="utf-8", newline="\n") as handle:
        las.write(handle, version=2.0, fmt="%.10g", **header_depths(las))
