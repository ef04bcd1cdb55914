"""CSV text of result tables, as ``DataFrame.to_csv(index=False, float_format="%.6g")``.

The tables ``decode`` writes hold millions of rows of numbers and a few text
columns. pandas formats them one cell at a time through several layers; here a
block of rows is laid out as a matrix of bytes, one fixed-width field per column
(eight-byte words, the cells padded with NUL bytes, the separator in the field's
last byte), filled a column at a time by array arithmetic on the words, and the
padding dropped: byte for byte the text pandas writes. Numbers are written
as ``%.6g`` writes them (the six significant digits found by scaling and rounding;
the rare cell whose scaled value lies too near a half to round safely in floating
point, and cells out of the scaled range, are formatted by ``%`` itself); each
distinct text is quoted once, as the :mod:`csv` module quotes it. Columns of other
kinds (dates, nullable numbers, mixed objects) and text holding a NUL byte are left
to pandas.

The columns named in ``measures`` (depths, thicknesses, positions: :data:`MEASURES`
in the tables of ``decode`` and ``correlate``) are written instead in decimal
notation with as many decimals as they need, at most :data:`MEASURE_DECIMALS` (the
decimals of the JSON tables) and 15 significant digits, trailing zeros dropped:
a depth read from a source (``10004.31``, ``6712345``) reads back as the same
number, and the float noise of a difference (``0.040000000000363798``) is not
written.
"""

from __future__ import annotations

import csv
import io
from collections.abc import Collection, Iterator

import numpy as np
import pandas as pd

__all__ = ["FLOAT_FORMAT", "MEASURES", "csv_blocks", "csv_bytes", "csv_text"]

#: Format of floating-point cells (6 significant digits).
FLOAT_FORMAT = "%.6g"
#: Significant digits of :data:`FLOAT_FORMAT`.
DIGITS = 6
#: Columns of the tables of ``decode`` and ``correlate`` written in decimal notation.
MEASURES = frozenset(
    {"top", "base", "thickness", "depth", "depth_top", "depth_base"}
    | {"depth_left", "depth_right", "position"}
)
#: Decimals of a measure, at most (as the JSON tables of ``decode`` write floats).
MEASURE_DECIMALS = 8
#: Significant digits of a measure, at most (a 15-digit decimal reads back as itself).
MEASURE_DIGITS = 15
#: Measures below this (and none negative) fill only the last three words of their field.
SMALL_MEASURE = 99_999.0
#: Bytes of the matrix of one block of rows, at most (about): small enough to stay in
#: the processor's cache while each column is filled down it and its padding dropped
#: (blocks of 16 MiB took half as much CPU time again, much of it page faults).
BLOCK_BYTES = 1 << 20

_NUL, _MINUS, _DOT, _ZERO = 0, ord("-"), ord("."), ord("0")
#: Little-endian eight-byte words: byte ``i`` of a word is bits ``8i`` to ``8i + 7``.
_WORD = np.dtype("<u8")
#: Scaled by 10**k outside this range, a value is left to ``%`` (no overflow of 10**k).
_SCALED_RANGE = (1e-290, 1e290)
#: A scaled value this near a half is rounded by ``%``, not by floating point.
_TIE_MARGIN = 1e-6


def csv_text(frame: pd.DataFrame, header: bool = True, measures: Collection[str] = ()) -> str:
    """The rows of ``frame`` (and its header line) as CSV text, without the index;
    the float columns named in ``measures`` in decimal notation (module docstring)."""
    return csv_bytes(frame, header, measures).decode("utf-8")


def csv_bytes(frame: pd.DataFrame, header: bool = True, measures: Collection[str] = ()) -> bytes:
    """:func:`csv_text` encoded as UTF-8."""
    return b"".join(csv_blocks(frame, header, measures))


def csv_blocks(
    frame: pd.DataFrame, header: bool = True, measures: Collection[str] = ()
) -> Iterator[bytes]:
    """:func:`csv_bytes` a block of rows (about :data:`BLOCK_BYTES` laid out) at a time,
    to be written as they come."""
    unique = frame.columns.is_unique
    decimal = [c for c in frame.columns if unique and c in measures and frame[c].dtype.kind == "f"]
    fields = (
        [
            _DecimalField(frame[c].to_numpy(np.float64)) if c in decimal else _Field.of(frame[c])
            for c in frame.columns
        ]
        if unique
        else [None]
    )
    if len(fields) < 2 or any(f is None for f in fields):  # one column: "" for a blank row
        texts = {c: _decimal_texts(frame[c].to_numpy(np.float64)) for c in decimal}
        frame = frame.assign(**texts) if texts else frame
        yield frame.to_csv(index=False, header=header, float_format=FLOAT_FORMAT).encode("utf-8")
        return
    if header:
        yield (",".join(_quote(str(c)) for c in frame.columns) + "\n").encode("utf-8")
    width = sum(f.width for f in fields)
    step = max(1, BLOCK_BYTES // width)
    buffer = np.empty((min(step, len(frame)), width), dtype=np.uint8)
    for start in range(0, len(frame), step):
        stop = min(start + step, len(frame))
        block = buffer[: stop - start]
        at = 0
        for field in fields:
            field.fill(block[:, at : at + field.width], start, stop)
            at += field.width
            block[:, at - 1] = ord(",")
        block[:, -1] = ord("\n")
        yield block.tobytes().translate(None, b"\x00")


class _Field:
    """One column's cells, written into the first ``width - 1`` bytes of a block of
    rows (``width`` a whole number of words; the last byte is the separator's)."""

    width: int

    @staticmethod
    def of(column: pd.Series) -> _Field | None:
        """The field of ``column``, or None for a kind left to pandas."""
        dtype = column.dtype
        if isinstance(dtype, np.dtype) and dtype.kind == "f":
            return _FloatField(column.to_numpy(np.float64))
        if isinstance(dtype, np.dtype) and dtype.kind in "iu":
            return _IntField(column.to_numpy())
        if isinstance(dtype, np.dtype) and dtype.kind == "b":
            return _TextField.of_codes(column.to_numpy().astype(np.intp), ["False", "True"])
        if isinstance(dtype, pd.CategoricalDtype):
            codes = np.asarray(column.cat.codes, dtype=np.intp)
            return _TextField.of_codes(codes, list(dtype.categories))
        if isinstance(dtype, pd.StringDtype) and dtype.storage == "pyarrow":
            return _TextField.of_arrow(column)
        if dtype == np.dtype(object) or isinstance(dtype, pd.StringDtype):
            codes, distinct = pd.factorize(column, use_na_sentinel=True)
            return _TextField.of_codes(np.asarray(codes, dtype=np.intp), list(distinct))
        return None

    def fill(self, block: np.ndarray, start: int, stop: int) -> None:
        raise NotImplementedError


class _TextField(_Field):
    """Each distinct text quoted and encoded once, taken by code (-1: blank)."""

    def __init__(self, codes: np.ndarray, table: np.ndarray):
        self.codes = codes
        self.width = table.shape[1]
        self.table = table.view(f"V{self.width}").ravel()  # a row as one item

    @classmethod
    def of_codes(cls, codes: np.ndarray, distinct: list) -> _TextField | None:
        if not all(isinstance(v, str) for v in distinct):
            return None
        encoded = [_quote(v).encode("utf-8") for v in distinct] + [b""]
        if any(b"\x00" in e for e in encoded):
            return None
        width = _words(max(map(len, encoded)) + 1)
        table = np.zeros((len(encoded), width), dtype=np.uint8)
        for k, e in enumerate(encoded):
            table[k, : len(e)] = np.frombuffer(e, dtype=np.uint8)
        return cls(codes, table)

    @classmethod
    def of_arrow(cls, column: pd.Series) -> _TextField | None:
        """The field of an Arrow-backed text column: its distinct texts laid out from
        Arrow's buffers at once where none needs quoting (nor holds a NUL byte)."""
        import pyarrow as pa
        import pyarrow.compute as pc

        values = pa.array(column.array)
        if isinstance(values, pa.ChunkedArray):
            values = values.combine_chunks()
        encoded = pc.dictionary_encode(values)
        codes = encoded.indices.fill_null(-1).to_numpy().astype(np.intp)
        distinct = encoded.dictionary.cast(pa.large_string())
        if (
            len(distinct) == 0
            or pc.any(pc.match_substring_regex(distinct, '[,"\\r\\n\\x00]')).as_py()
        ):
            return cls.of_codes(codes, distinct.to_pylist())
        _, offsets, data = distinct.buffers()
        offsets = np.frombuffer(offsets, dtype=np.int64)[distinct.offset :][: len(distinct) + 1]
        data = np.frombuffer(data, dtype=np.uint8)[offsets[0] : offsets[-1]]
        lengths = np.diff(offsets)
        table = np.zeros((len(distinct) + 1, _words(int(lengths.max()) + 1)), dtype=np.uint8)
        rows = np.repeat(np.arange(len(distinct)), lengths)
        table[rows, np.arange(len(data)) - (offsets[:-1] - offsets[0])[rows]] = data
        return cls(codes, table)

    def fill(self, block: np.ndarray, start: int, stop: int) -> None:
        # code -1 (missing) takes the last row: blank
        block.view(f"V{self.width}")[:, 0] = self.table[self.codes[start:stop]]


class _IntField(_Field):
    """Integers as ``str`` writes them: the sign and places 19..15 in the first word,
    five places in each of the next three, the places before the first digit blanked."""

    width = 32

    def __init__(self, values: np.ndarray):
        if values.dtype.kind == "u" and values.size and values.max() > np.iinfo(np.int64).max:
            values = values.astype(object)  # beyond int64: by str, below
        self.values = values

    def fill(self, block: np.ndarray, start: int, stop: int) -> None:
        values = self.values[start:stop]
        if values.dtype == object or (values.size and values.min() == np.iinfo(np.int64).min):
            _put_text(block, np.arange(len(values)), list(map(str, values.tolist())))
            return
        values = values.astype(np.int64)
        size = np.abs(values)
        blank = 20 - np.maximum(_digit_count(size), 1)  # places before the first digit
        words = block.view(_WORD)
        sign = np.where(values < 0, _MINUS, _NUL).astype(np.uint64)
        first = _FIVE_DIGITS[size // 10**15] << np.uint64(8)
        words[:, 0] = (first & _BLANK_FROM_1[np.minimum(blank, 5)]) | sign
        for k in range(1, 4):
            group = _FIVE_DIGITS[size // 10 ** (15 - 5 * k) % 100_000]
            words[:, k] = group & _BLANK_FROM_0[np.clip(blank - 5 * k, 0, 5)]


class _FloatField(_Field):
    """Floating-point numbers as ``%.6g`` writes them; NaN blank.

    Fixed notation (exponent -4 to 5) is the integer ``value * 1e9`` (at most 15
    digits) in three words: the sign and places 5..1; place 0, the point and places
    -1..-4; places -5..-9; the places before the first significant digit (but the
    units) and after the last (but the integer part) blanked. Exponent notation is
    ``d[.ddddd]e+XX`` in the same three words. A column whose every cell is written in
    fixed notation below 10 with no sign (probabilities) leaves the first word blank on
    every row: it is not laid out (less padding to drop)."""

    width = 24

    def __init__(self, values: np.ndarray):
        self.values = values
        self.skip = self._blank_words(values)
        self.width = type(self).width - 8 * self.skip

    @staticmethod
    def _blank_words(values: np.ndarray) -> int:
        """The leading words every row of this column leaves blank (not laid out)."""
        return 1 if _below_ten(values) else 0

    def fill(self, block: np.ndarray, start: int, stop: int) -> None:
        values = self.values[start:stop]
        # a value repeated on the next rows (a contact's depth on each surface's row) is
        # written once and its cells copied: the same bits, the same text
        bits = values.view(np.int64)
        first = np.r_[True, bits[1:] != bits[:-1]] if len(bits) else bits.astype(bool)
        runs = int(np.count_nonzero(first))
        if 2 * runs > len(values):
            self._write(values, block)
            return
        once = np.empty((runs, self.width), dtype=np.uint8)
        self._write(values[first], once)
        item = f"V{self.width}"
        block.view(item)[:, 0] = once.view(item)[:, 0][np.cumsum(first) - 1]

    def _write(self, values: np.ndarray, block: np.ndarray) -> None:
        """The cells of ``values``, one per row of ``block``."""
        size = np.abs(values)
        with np.errstate(invalid="ignore"):
            scaled = (size >= _SCALED_RANGE[0]) & (size <= _SCALED_RANGE[1])
        size[~scaled] = 1.0  # the others are formatted by hand, below
        exponent = np.floor(np.log10(size))
        mantissa = _scale(size, exponent)
        off = (mantissa >= 10.0**DIGITS) | (mantissa < 10.0 ** (DIGITS - 1))
        if off.any():  # log10 a hair off at a power of ten: one step either way
            exponent[off] += np.where(mantissa[off] >= 10.0**DIGITS, 1.0, -1.0)
            mantissa[off] = _scale(size[off], exponent[off])
        rounded = np.floor(mantissa + 0.5)
        above = mantissa + 0.5 - rounded  # where the mantissa lies past the half below
        near_half = (above < _TIE_MARGIN) | (above > 1.0 - _TIE_MARGIN)
        spilled = rounded >= 10.0**DIGITS  # 999999.5 rounds to 1e6: one more place
        if spilled.any():
            exponent[spilled] += 1.0
            rounded[spilled] = 10.0 ** (DIGITS - 1)
        exponent = exponent.astype(np.int64)
        # the place of the last significant digit once trailing zeros go
        last = exponent - (DIGITS - 1) + _TRAILING_ZEROS[_remainder(rounded, 1e5)]

        # fixed notation, from the digits of value * 1e9 (exact in floating point);
        # the rows in exponent notation are written over below
        fixed = (exponent >= -4) & (exponent < DIGITS)
        whole = rounded * _POW10[:10].take(exponent + 4, mode="clip")
        high = np.floor(whole / 1e10)
        whole -= high * 1e10
        middle = np.floor(whole / 1e5)
        whole -= middle * 1e5
        sign = np.where(np.signbit(values) & ~np.isnan(values), _MINUS, _NUL).astype(np.uint64)
        words = block.view(_WORD)
        skip = self.skip
        if not skip:
            integer = _FIVE_DIGITS[high.astype(np.intp)] << np.uint64(8)
            words[:, 0] = integer & _BLANK_FROM_1.take(5 - exponent, mode="clip") | sign
        middle = _FIVE_DIGITS[middle.astype(np.intp)]
        point = np.where(last < 0, _DOT << 8, _NUL).astype(np.uint64)
        decimals = (middle & ~np.uint64(0xFF)) << np.uint64(8)
        decimals &= _KEEP_TO[2:].take(-last, mode="clip")
        words[:, 1 - skip] = (middle & np.uint64(0xFF)) | point | decimals
        words[:, 2 - skip] = _FIVE_DIGITS[whole.astype(np.intp)] & _KEEP_TO.take(
            -last - 4, mode="clip"
        )
        digits = rounded.astype(np.int64)

        sci = ~fixed & scaled
        if sci.any():
            at = np.flatnonzero(sci)
            power = exponent[at]
            shown = np.clip(power - last[at], 0, 5)  # digits after the point
            head = np.uint64(_ZERO) + (digits[at] // 10**5).astype(np.uint64)
            point = np.where(shown > 0, _DOT, _NUL).astype(np.uint64)
            words[at, 0] = sign[at] | head << np.uint64(8) | point << np.uint64(16)
            words[at, 1] = _FIVE_DIGITS[digits[at] % 10**5] & _KEEP_TO[shown]
            tail = np.where(power < 0, _MINUS, ord("+")) << 8
            power = np.abs(power)
            tail |= np.where(power >= 100, _ZERO + power // 100 % 10, _NUL) << 16
            tens = (_ZERO + power // 10 % 10) << np.where(power >= 100, 24, 16)
            ones = (_ZERO + power % 10) << np.where(power >= 100, 32, 24)
            words[at, 2] = (ord("e") | tail | tens | ones).astype(np.uint64)

        zero = values == 0
        if zero.any():
            if not skip:
                words[zero, 0] = sign[zero]
            words[zero, 1 - skip] = _ZERO
            words[zero, 2 - skip] = 0
        missing = np.isnan(values)
        if missing.any():
            words[missing] = 0
        by_hand = (~scaled | near_half) & ~missing & ~zero
        if by_hand.any():
            at = np.flatnonzero(by_hand)
            _put_text(block, at, [FLOAT_FORMAT % v for v in values[at].tolist()])


class _DecimalField(_FloatField):
    """Measures in decimal notation (module docstring); NaN blank.

    Five words: the sign and places 14..10 of the integer part; places 9..5; places
    4..0 and the point; decimals 1..5; decimals 6..8. The places before the first
    digit of the integer part (but the units) and the decimals after the last
    non-zero one are blanked, the point too where no decimal is left. A column of
    measures below 10**5 and none negative (depths in metres or feet) leaves the first
    two words blank on every row: they are not laid out (less padding to drop)."""

    width = 40

    @staticmethod
    def _blank_words(values: np.ndarray) -> int:
        """2 for measures below 10**5 and none negative, else 0."""
        finite = values[np.isfinite(values)]
        small = not np.isinf(values).any() and not np.signbit(finite).any()
        return 2 if small and not (finite >= SMALL_MEASURE).any() else 0

    def _write(self, values: np.ndarray, block: np.ndarray) -> None:
        size = np.abs(values)
        with np.errstate(invalid="ignore"):
            usable = size < 10.0 ** (MEASURE_DIGITS - 1)  # not NaN, inf, nor huge
        size[~usable] = 0.0
        places = np.searchsorted(_POW10[1:MEASURE_DIGITS], size, side="right") + 1
        decimals = np.clip(MEASURE_DIGITS - places, 0, MEASURE_DECIMALS)
        scaled = size * _POW10[decimals]  # 15 digits at most: a whole number is exact
        # within a rounding step of a half: rounded by % from the float itself, below
        near_half = np.abs(scaled - np.floor(scaled) - 0.5) <= 2 * np.spacing(scaled)
        whole = np.rint(scaled).astype(np.int64)
        integer, fraction = np.divmod(whole, _POW10_INT[decimals])
        fraction *= _POW10_INT[MEASURE_DECIMALS - decimals]  # eight places
        digits = np.searchsorted(_POW10_INT[1:], integer, side="right") + 1
        blank = 15 - digits  # integer places before the first digit
        words = block.view(_WORD)
        if not self.skip:
            sign = np.where(np.signbit(values) & (whole != 0), _MINUS, _NUL).astype(np.uint64)
            high = _FIVE_DIGITS[integer // 10**10] << np.uint64(8)
            words[:, 0] = high & _BLANK_FROM_1.take(np.clip(blank, 0, 5)) | sign
            words[:, 1] = _FIVE_DIGITS[integer // 10**5 % 10**5] & _BLANK_FROM_0.take(
                np.clip(blank - 5, 0, 5)
            )
        head, tail = np.divmod(fraction, 1000)
        kept = np.where(tail != 0, 8 - _TRAILING_ZEROS[tail], 3 - _TRAILING_ZEROS[head] + 2)
        kept = np.where(fraction == 0, 0, kept)  # decimals written
        point = np.where(kept > 0, _DOT << 40, _NUL).astype(np.uint64)
        units = _FIVE_DIGITS[integer % 10**5] & _BLANK_FROM_0.take(np.clip(blank - 10, 0, 4))
        words[:, 2 - self.skip] = units | point
        words[:, 3 - self.skip] = _FIVE_DIGITS[head] & _KEEP_TO.take(np.minimum(kept, 5))
        words[:, 4 - self.skip] = (_FIVE_DIGITS[tail] >> np.uint64(16)) & _KEEP_TO.take(
            np.clip(kept - 5, 0, 3)
        )
        block[np.isnan(values)] = 0
        by_hand = (~usable | near_half) & ~np.isnan(values)
        if by_hand.any():
            at = np.flatnonzero(by_hand)
            _put_text(block, at, _decimal_texts(values[at]))


def _below_ten(values: np.ndarray) -> bool:
    """Whether ``%.6g`` writes every value in fixed notation below 10 with no sign (0,
    NaN, or 1e-4 to 9.99999: probabilities), so that :class:`_FloatField` leaves its
    first word blank on every row."""
    with np.errstate(invalid="ignore"):
        fixed = (values >= 1e-4) & (values < 9.99999)
    return bool(np.all(fixed | np.isnan(values) | ((values == 0) & ~np.signbit(values))))


def _decimal_texts(values: np.ndarray) -> list[str]:
    """Measures as :class:`_DecimalField` writes them, one at a time by ``%``."""
    texts = []
    for value in values.tolist():
        if value != value:  # NaN: blank
            texts.append("")
            continue
        if not abs(value) < 10.0 ** (MEASURE_DIGITS - 1):
            texts.append(f"{value:.{MEASURE_DIGITS}g}")
            continue
        places = len(str(int(abs(value))))
        decimals = min(max(MEASURE_DIGITS - places, 0), MEASURE_DECIMALS)
        text = f"{value:.{decimals}f}"
        text = text.rstrip("0").rstrip(".") if "." in text else text
        texts.append("0" if text == "-0" else text)
    return texts


def _words(size: int) -> int:
    """``size`` bytes rounded up to whole words."""
    return -(-size // 8) * 8


#: ASCII digits of 0 to 99,999, five places, in the first five bytes of a word.
_FIVE_DIGITS = (
    (
        (_ZERO + np.arange(100_000)[:, None] // 10 ** np.arange(4, -1, -1)[None, :] % 10)
        << (8 * np.arange(5))[None, :]
    )
    .sum(axis=1)
    .astype(np.uint64)
)
#: ``_KEEP_TO[k]``: a word's bytes 0 to k - 1 kept, the rest blanked.
_KEEP_TO = np.array([(1 << (8 * k)) - 1 for k in range(9)], dtype=np.uint64)
#: ``_BLANK_FROM_0[k]``: a word's bytes 0 to k - 1 blanked.
_BLANK_FROM_0 = ~_KEEP_TO
#: ``_BLANK_FROM_1[k]``: a word's bytes 1 to k blanked (byte 0, the sign, kept), k <= 5.
_BLANK_FROM_1 = ~(_KEEP_TO[:6] << np.uint64(8)) | np.uint64(0xFF)
_POW10_INT = 10 ** np.arange(MEASURE_DIGITS + 1, dtype=np.int64)
_POW10 = 10.0 ** np.arange(309)  # exact up to 1e22


#: Trailing zeros of 0 to 99,999 written in five places (five for 0).
_TRAILING_ZEROS = sum(np.arange(100_000) % 10**place == 0 for place in range(1, 6))


def _remainder(whole: np.ndarray, divisor: float) -> np.ndarray:
    """``whole % divisor`` of whole numbers held as floats, as array indices."""
    return (whole - np.floor(whole / divisor) * divisor).astype(np.intp)


def _digit_count(size: np.ndarray) -> np.ndarray:
    """Decimal digits of each non-negative integer (0 for 0)."""
    count = np.zeros(len(size), dtype=np.int64)
    for place in range(19):
        count += size >= 10**place
    return count


def _scale(size: np.ndarray, exponent: np.ndarray) -> np.ndarray:
    """``size * 10 ** (DIGITS - 1 - exponent)``, by a power of ten (exact up to 1e22)."""
    shift = (DIGITS - 1 - exponent).astype(np.intp)
    return size * _POW10.take(shift, mode="clip") / _POW10.take(-shift, mode="clip")


def _put_text(block: np.ndarray, rows: np.ndarray, texts: list[str]) -> None:
    """Write ``texts`` (ASCII, shorter than the field) into ``rows`` of a field."""
    block[rows] = 0
    for row, text in zip(rows.tolist(), texts):
        block[row, : len(text)] = np.frombuffer(text.encode("ascii"), dtype=np.uint8)


def _quote(value: str) -> str:
    """``value`` as the csv module writes it among other fields (QUOTE_MINIMAL)."""
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerow([value, ""])
    return out.getvalue()[:-2]
