"""Plain delimited text read in blocks by pyarrow, one categorical column per source column.

A *plain* file is UTF-8 without a byte-order mark, with no quote character, no NUL
byte and no empty line. Such a file reads here to the same cells as the general
reader (:func:`faciesseq.io.tabular.read_delimited`, pandas' parser with
``skipinitialspace``, its default missing-value words, then each cell stripped and
blank cells missing), but in blocks and column by column: each block's column is
dictionary-encoded while parsed, so the text of a repeated value (a core name, a
facies code, a units word) is held once, not once per row. Anything else (quotes,
ragged rows, duplicate header names) is left to the general reader.
"""

from __future__ import annotations

import codecs
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["plain_lines", "read_plain"]

#: Bytes read at a time, when checking a file and when parsing it.
BLOCK_BYTES = 1 << 22
#: Cells pandas' parser reads as missing (its default ``na_values``).
NA_WORDS = sorted(pd._libs.parsers.STR_NA_VALUES)


def plain_lines(path: Path) -> int | None:
    """The number of lines of ``path`` when it is plain apart from empty lines (see the
    module notes; :func:`read_plain` finds those), else ``None``; checked a block at a time."""
    decoder = codecs.getincrementaldecoder("utf-8")()
    lines, last = 0, b"\n"
    with path.open("rb") as stream:
        while block := stream.read(BLOCK_BYTES):
            if b'"' in block or b"\x00" in block or (lines == 0 and block[:3] == codecs.BOM_UTF8):
                return None
            if not block.isascii():
                try:
                    decoder.decode(block)
                except UnicodeDecodeError:
                    return None
            lines += block.count(b"\n")
            last = block[-1:]
    try:
        decoder.decode(b"", final=True)
    except UnicodeDecodeError:
        return None
    return lines + (last != b"\n")


def read_plain(path: Path, delimiter: str, names: list[str], lines: int) -> pd.DataFrame | None:
    """The cells of a plain file of ``lines`` lines (header ``names``, already stripped)
    as a frame of categorical text columns, missing cells NaN; ``None`` when pyarrow
    cannot read it as a table of ``len(names)`` columns (ragged rows and the like) or
    skipped an empty line (a row the general reader counts)."""
    import pyarrow as pa
    from pyarrow import csv

    text = pa.dictionary(pa.int32(), pa.string())
    try:
        reader = csv.open_csv(
            path,
            read_options=csv.ReadOptions(use_threads=False, block_size=BLOCK_BYTES),
            parse_options=csv.ParseOptions(delimiter=delimiter, quote_char=False),
            convert_options=csv.ConvertOptions(
                column_types=dict.fromkeys(reader_names(path, delimiter), text),
                strings_can_be_null=False,
                null_values=[],
            ),
        )
        blocks = [[] for _ in names]
        for batch in reader:
            for j, column in enumerate(batch.columns):
                blocks[j].append((_narrow(column), column.dictionary))
    except (pa.ArrowInvalid, pa.ArrowTypeError, UnicodeDecodeError):
        return None
    if not blocks or not blocks[0] or len(blocks) != len(names):
        return None
    if sum(len(codes) for codes, _ in blocks[0]) != lines - 1:  # an empty line skipped
        return None
    frame = {}
    for j, name in enumerate(names):
        frame[name] = _categorical(blocks[j])
        blocks[j] = None  # each block's codes released once its column is made
    return pd.DataFrame(frame, copy=False)


def reader_names(path: Path, delimiter: str) -> list[str]:
    """The header's names as pyarrow reads them (not stripped)."""
    with path.open("r", encoding="utf-8", newline="") as stream:
        return stream.readline().rstrip("\r\n").split(delimiter)


def _narrow(column) -> np.ndarray:
    """A block's dictionary indices in the smallest integer type that holds them."""
    size = len(column.dictionary)
    dtype = np.int8 if size < 127 else np.int16 if size < 32767 else np.int32
    return column.indices.to_numpy(zero_copy_only=False).astype(dtype)


def _categorical(blocks: list[tuple[np.ndarray, object]]) -> pd.Categorical:
    """One column from its blocks: each distinct text read as pandas reads it, once."""
    import pyarrow as pa
    import pyarrow.compute as pc

    texts = pa.concat_arrays([d for _, d in blocks])
    # pandas skips spaces after the delimiter, then tests its missing-value words
    missing = pc.is_in(pc.utf8_ltrim(texts, characters=" "), value_set=pa.array(NA_WORDS))
    stripped = pc.utf8_trim_whitespace(texts)
    missing = pc.or_(missing, pc.equal(stripped, ""))
    values = pd.Series(pd.arrays.ArrowStringArray(pc.if_else(missing, None, stripped)))
    ids, uniques = pd.factorize(values, use_na_sentinel=True)
    n = sum(len(codes) for codes, _ in blocks)
    dtype = np.int8 if len(uniques) < 127 else np.int16 if len(uniques) < 32767 else np.int32
    codes = np.empty(n, dtype=dtype)
    ids = ids.astype(dtype)
    start = offset = 0
    for block_codes, dictionary in blocks:
        codes[start : start + len(block_codes)] = ids[offset + block_codes.astype(np.intp)]
        start += len(block_codes)
        offset += len(dictionary)
    categories = pd.Index(np.asarray(uniques, dtype=object), dtype=object)
    return pd.Categorical.from_codes(codes, categories=categories, validate=False)
