"""Plain delimited text read in blocks by pyarrow, one categorical column per source column.

A *plain* file is UTF-8 without a byte-order mark, with no quote character, no NUL
byte and no empty line. Such a file reads here to the same cells as the general
reader (:func:`faciesseq.io.tabular.read_delimited`, pandas' parser with
``skipinitialspace`` and no missing-value words, then each cell stripped and only
blank cells missing), but in blocks and column by column: each block's column is
dictionary-encoded while parsed, so the text of a repeated value (a core name, a
facies code, a units word) is held once, not once per row. Anything else (quotes,
ragged rows, empty lines, bytes that are not UTF-8) is found while reading and left
to the general reader.
"""

from __future__ import annotations

import codecs
from collections.abc import Collection, Iterator
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["NotPlain", "plain_blocks", "plain_frame", "read_plain"]

#: Bytes parsed at a time.
BLOCK_BYTES = 1 << 22


class NotPlain(Exception):
    """Found while reading: the file is not plain (ragged rows, bytes that are not UTF-8);
    the general reader must read it."""


def read_plain(path: Path, delimiter: str, names: list[str]) -> pd.DataFrame | None:
    """The cells of a plain file (header ``names``, already stripped) as a frame of
    categorical text columns, missing cells NaN; ``None`` when the file is not plain or
    pyarrow cannot read it as a table of ``len(names)`` columns (ragged rows)."""
    blocks = plain_blocks(path, delimiter, names)
    if blocks is None:
        return None
    columns: list[list] = [[] for _ in names]
    try:
        for block in blocks:
            for j, column in enumerate(block):
                columns[j].append(column)
    except NotPlain:
        return None
    if not columns[0]:
        return None
    return plain_frame(columns, names)


def plain_blocks(
    path: Path, delimiter: str, names: list[str], read: Collection[str] | None = None
) -> Iterator[list] | None:
    """The blocks of a plain file, each a list of ``(codes, dictionary)`` per column
    (a block's dictionary indices, narrowed, and its distinct texts); ``None`` when the
    file starts with a byte-order mark or its header is not ``len(names)`` wide. The
    blocks raise :class:`NotPlain` where the file turns out not to be plain.

    ``read``: the columns (of ``names``) to give, in the file's order; the others are
    split into cells, so that a ragged row is still found, but never converted.
    Default: every column."""
    with path.open("rb") as stream:
        if stream.read(3) == codecs.BOM_UTF8:
            return None
    header = reader_names(path, delimiter)
    if len(header) != len(names):
        return None
    wanted = None if read is None else set(read)
    kept = [h for h, n in zip(header, names) if wanted is None or n in wanted]
    return _blocks(path, delimiter, kept)


def _blocks(path: Path, delimiter: str, header: list[str]) -> Iterator[list]:
    """The blocks of the file's columns ``header`` (as pyarrow names them)."""
    import pyarrow as pa
    from pyarrow import csv

    text = pa.dictionary(pa.int32(), pa.string())
    try:
        reader = csv.open_csv(
            path,
            read_options=csv.ReadOptions(use_threads=False, block_size=BLOCK_BYTES),
            # an empty line is a row of one cell: refused, as a ragged row is
            parse_options=csv.ParseOptions(
                delimiter=delimiter, quote_char=False, ignore_empty_lines=False
            ),
            convert_options=csv.ConvertOptions(
                column_types=dict.fromkeys(header, text),
                strings_can_be_null=False,
                null_values=[],
                include_columns=header,
            ),
        )
        for batch in reader:
            yield [(_narrow(column), column.dictionary) for column in batch.columns]
    except (pa.ArrowInvalid, pa.ArrowTypeError, UnicodeDecodeError):
        raise NotPlain from None


def plain_frame(columns: list[list], names: list[str]) -> pd.DataFrame | None:
    """The frame of the blocks of each column (``columns[j]``: column ``j``'s
    ``(codes, dictionary)`` of every block); ``None`` when a cell holds a quote character
    or a NUL byte. Each column's blocks are released once its column is made."""
    frame = {}
    for j, name in enumerate(names):
        column = _categorical(columns[j])
        if column is None:
            return None
        frame[name] = column
        columns[j] = None
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


def _categorical(blocks: list[tuple[np.ndarray, object]]) -> pd.Categorical | None:
    """One column from its blocks: each distinct text read as pandas reads it, once;
    ``None`` when a cell holds a quote character or a NUL byte."""
    import pyarrow as pa
    import pyarrow.compute as pc

    texts = pa.concat_arrays([d for _, d in blocks])
    if pc.any(pc.match_substring_regex(texts, '["\\x00]')).as_py():
        return None  # a quote or a NUL byte: the general reader's
    stripped = pc.utf8_trim_whitespace(texts)
    missing = pc.equal(stripped, "")
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
