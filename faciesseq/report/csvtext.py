"""CSV text of result tables, as ``DataFrame.to_csv(index=False, float_format="%.6g")``.

The tables ``decode`` writes hold millions of rows of numbers and a few text
columns. pandas formats them one cell at a time through several layers; here each
column is formatted once (numbers with ``%`` in one pass, each distinct text
once, quoted as the :mod:`csv` module quotes it) and the rows joined, byte for
byte the text pandas writes. Columns of other kinds (dates, mixed objects) are
left to pandas.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pandas as pd

__all__ = ["FLOAT_FORMAT", "csv_text"]

#: Format of floating-point cells (6 significant digits).
FLOAT_FORMAT = "%.6g"


def csv_text(frame: pd.DataFrame, header: bool = True) -> str:
    """The rows of ``frame`` (and its header line) as CSV text, without the index."""
    cells = [_cells(frame[c]) for c in frame.columns] if frame.columns.is_unique else [None]
    if any(c is None for c in cells):
        return frame.to_csv(index=False, header=header, float_format=FLOAT_FORMAT)
    lines = [",".join(_quote(str(c)) for c in frame.columns)] if header else []
    if len(frame):
        lines.append("\n".join(map(",".join, zip(*cells))))
    return "\n".join(lines) + "\n" if lines else ""


def _cells(column: pd.Series) -> list[str] | None:
    """The cells of one column as text, or None for a kind left to pandas."""
    kind = column.dtype.kind if isinstance(column.dtype, np.dtype) else None
    values = column.to_numpy()
    if kind == "f":
        text = [FLOAT_FORMAT % v for v in values.tolist()]
        for k in np.flatnonzero(np.isnan(values)):
            text[k] = ""
        return text
    if kind in ("i", "u", "b"):
        return list(map(str, values.tolist()))
    if kind == "O" or isinstance(column.dtype, pd.StringDtype):
        return _text_cells(column)
    return None


def _text_cells(column: pd.Series) -> list[str] | None:
    codes, distinct = pd.factorize(column.astype(object), use_na_sentinel=True)
    if not all(isinstance(v, str) for v in distinct):
        return None
    quoted = np.array([*map(_quote, distinct), ""], dtype=object)
    return quoted[codes].tolist()  # code -1 (missing) is the last: blank


def _quote(value: str) -> str:
    """``value`` as the csv module writes it among other fields (QUOTE_MINIMAL)."""
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerow([value, ""])
    return out.getvalue()[:-2]
