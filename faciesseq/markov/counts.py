"""Upward transition counts and the matrices derived from them.

Every statistic of :mod:`faciesseq.markov` starts here. Successions are read
**base to top** (oldest first), so an upward transition is
``facies[i] -> facies[i + 1]``. Counts are pooled over successions; a
transition is never counted across a core boundary or a gap, because each
:class:`~faciesseq.core.Succession` is one unbroken stretch.

The numerical core works on integer-coded sequences (``0 .. m-1`` in the
order of the facies codes given), concatenated into one array with the
succession boundaries kept aside, so that 1,000 cores cost a few ``bincount``
calls.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.errors import InputError

__all__ = [
    "EncodedSuccessions",
    "batch_ngram_counts",
    "encode",
    "encode_flat",
    "fixed_vector",
    "labelled",
    "n_step",
    "ngram_counts",
    "transition_counts",
    "transition_probabilities",
]


@dataclass(frozen=True)
class EncodedSuccessions:
    """Successions as one integer array.

    Attributes
    ----------
    states
        All successions concatenated, each base to top, as integer codes
        ``0 .. m-1`` (index into ``codes``).
    starts
        Index in ``states`` where each succession begins (length = number of
        successions + 1; the last entry is ``len(states)``).
    codes
        Facies codes, position = integer code.
    cores
        Core name of each succession.
    segments
        Segment number of each succession within its core.
    """

    states: np.ndarray
    starts: np.ndarray
    codes: tuple[str, ...]
    cores: tuple[str, ...]
    segments: tuple[int, ...]

    @property
    def m(self) -> int:
        """Number of facies (states)."""
        return len(self.codes)

    @property
    def lengths(self) -> np.ndarray:
        return np.diff(self.starts)

    def __len__(self) -> int:
        return len(self.starts) - 1

    def sequences(self) -> list[np.ndarray]:
        """Each succession as its own integer array (views into ``states``)."""
        return [self.states[a:b] for a, b in zip(self.starts[:-1], self.starts[1:])]

    def position_in_succession(self) -> np.ndarray:
        """For each element of ``states``, its index within its succession (0 = base)."""
        idx = np.arange(len(self.states))
        owner = np.repeat(np.arange(len(self)), self.lengths)
        return idx - self.starts[:-1][owner]

    def select(self, keep: np.ndarray) -> EncodedSuccessions:
        """Only the successions where ``keep`` (boolean, one per succession) is true."""
        keep = np.asarray(keep, dtype=bool)
        seqs = [s for s, k in zip(self.sequences(), keep) if k]
        lengths = np.array([len(s) for s in seqs], dtype=np.int64)
        states = np.concatenate(seqs) if seqs else np.zeros(0, dtype=self.states.dtype)
        return EncodedSuccessions(
            states,
            np.r_[0, np.cumsum(lengths)].astype(np.int64),
            self.codes,
            tuple(c for c, k in zip(self.cores, keep) if k),
            tuple(s for s, k in zip(self.segments, keep) if k),
        )


def encode(successions: Sequence, codes: Sequence[str] | None = None) -> EncodedSuccessions:
    """Turn successions into one integer-coded array.

    Parameters
    ----------
    successions
        :class:`~faciesseq.core.Succession` objects (base to top) or plain
        sequences of facies codes / integer codes, each base to top.
    codes
        Facies codes in the order the matrices should use (e.g. the scheme's
        codes by proximality rank). ``None`` uses the codes present, sorted.
        Plain integer arrays with ``codes=None`` are taken as already coded
        ``0 .. max``.

    Raises
    ------
    InputError
        A succession holds a facies that ``codes`` does not list (names the core).
    """
    seqs: list[np.ndarray] = []
    cores: list[str] = []
    segments: list[int] = []
    for k, succ in enumerate(successions):
        beds = getattr(succ, "beds", None)
        if beds is not None:
            values = beds["facies"].to_numpy(dtype=object)
            cores.append(str(succ.core))
            segments.append(int(succ.segment))
        else:
            values = np.asarray(succ)
            if values.ndim != 1:
                raise TypeError(
                    f"succession {k + 1} is a {type(succ).__name__}: each succession must be "
                    "a Succession or a sequence of facies codes, base to top"
                )
            cores.append(f"succession {k + 1}")
            segments.append(0)
        seqs.append(values)
    integer_input = bool(seqs) and all(np.issubdtype(s.dtype, np.integer) for s in seqs)
    lengths = np.array([len(s) for s in seqs], dtype=np.int64)
    flat = np.concatenate(seqs) if seqs else np.zeros(0, dtype=np.int64)
    return _encode_flat(flat, lengths, cores, segments, codes, integer_input)


def encode_flat(
    facies: np.ndarray,
    lengths: np.ndarray,
    cores: Sequence[str],
    segments: Sequence[int],
    codes: Sequence[str] | None = None,
) -> EncodedSuccessions:
    """:func:`encode` of successions given as one array of facies codes.

    ``facies`` holds every succession one after another, each base to top;
    ``lengths``, ``cores`` and ``segments`` describe the successions in that order.
    The same as :func:`encode` of the successions cut from it, without making them.
    """
    flat = np.asarray(facies, dtype=object)
    lengths = np.asarray(lengths, dtype=np.int64)
    return _encode_flat(flat, lengths, list(cores), list(segments), codes, False)


def _encode_flat(
    flat: np.ndarray,
    lengths: np.ndarray,
    cores: list[str],
    segments: list[int],
    codes: Sequence[str] | None,
    integer_input: bool,
) -> EncodedSuccessions:
    owner = np.repeat(np.arange(len(lengths)), lengths)
    if integer_input:
        top = int(flat.max()) if len(flat) else -1
        if codes is None:
            codes = [str(i) for i in range(top + 1)]
        m = len(codes)
        arr = flat.astype(np.int64)
        bad = (arr < 0) | (arr >= m)
        if bad.any():
            raise InputError(f"integer facies code {int(arr[bad][0])} outside 0..{m - 1}")
    else:
        # each distinct value as text once (missing values too: "nan", "None")
        values = flat if flat.dtype == object else flat.astype(str)
        ids, distinct = pd.factorize(values, use_na_sentinel=False)
        text = pd.Index(np.asarray(distinct, dtype=object).astype(str), dtype=object)
        if codes is None:
            codes = sorted(set(text), key=lambda c: (len(c), c))
        codes = [str(c) for c in codes]
        if len(set(codes)) != len(codes):
            raise InputError(f"facies codes listed twice in {codes}")
        found = pd.Index(codes).get_indexer(text)
        arr = found[ids] if len(flat) else np.zeros(0, dtype=np.int64)
        if (arr < 0).any():
            first_bad = int(np.nonzero(arr < 0)[0][0])
            unknown = sorted(set(text[found < 0]))
            raise InputError(
                f"facies {unknown} not in the facies list {list(codes)}; add them to the "
                "scheme or map them with aliases",
                core=cores[int(owner[first_bad])],
            )
    return encode_states(arr, lengths, cores, segments, codes)


def encode_states(
    states: np.ndarray,
    lengths: np.ndarray,
    cores: Sequence[str],
    segments: Sequence[int],
    codes: Sequence[str],
) -> EncodedSuccessions:
    """Successions already coded: ``states`` (every succession one after another, each
    base to top) holds indices into ``codes``; ``lengths``, ``cores`` and ``segments``
    describe the successions in that order."""
    dtype = np.int16 if len(codes) < 2**15 else np.int32
    return EncodedSuccessions(
        np.asarray(states, dtype=dtype),
        np.r_[0, np.cumsum(lengths)].astype(np.int64),
        tuple(str(c) for c in codes),
        tuple(cores),
        tuple(segments),
    )


def _window_index(enc: EncodedSuccessions, width: int) -> np.ndarray:
    """Start positions of every window of ``width`` consecutive states inside one succession."""
    pos = enc.position_in_succession()
    length = np.repeat(enc.lengths, enc.lengths)
    return np.nonzero(pos + width <= length)[0]


def ngram_counts(enc: EncodedSuccessions, order: int, *, skip: int = 0) -> np.ndarray:
    """Counts of every run of ``order + 1`` upward-successive states.

    Returns an array of shape ``(m,) * (order + 1)``; entry ``[i0, ..., ik]``
    counts the places where ``i0`` is followed upward by ``i1`` ... ``ik``.
    ``skip`` leaves out windows that start in the lowest ``skip`` positions of a
    succession, so that counts of different orders can be made on the same
    transitions (the order tests need that).
    """
    m = enc.m
    width = order + 1
    starts = _window_index(enc, width + skip) + skip
    code = np.zeros(len(starts), dtype=np.int64)
    for k in range(width):
        code = code * m + enc.states[starts + k]
    return np.bincount(code, minlength=m**width).reshape((m,) * width)


def batch_ngram_counts(enc: EncodedSuccessions, batch: np.ndarray, order: int) -> np.ndarray:
    """:func:`ngram_counts` for a batch of surrogates ``(B, len(enc.states))`` of ``enc``.

    Returns ``(B,) + (m,) * (order + 1)``. Windows are coded with slices of the
    whole batch (no gathers); windows that cross a succession boundary go to
    an overflow bin that is dropped.
    """
    m = enc.m
    width = order + 1
    n = batch.shape[1]
    n_cells = m**width
    b = batch.shape[0]
    if n < width:
        return np.zeros((b,) + (m,) * width, dtype=np.int64)
    dtype = np.int32 if n_cells < 2**31 else np.int64
    code = np.zeros((b, n - width + 1), dtype=dtype)
    for k in range(width):
        code *= m
        code += batch[:, k : n - width + 1 + k]
    valid = np.zeros(n - width + 1, dtype=bool)
    valid[_window_index(enc, width)] = True
    code[:, ~valid] = n_cells
    out = np.empty((b, n_cells), dtype=np.int64)
    for r in range(b):
        out[r] = np.bincount(code[r], minlength=n_cells + 1)[:n_cells]
    return out.reshape((b,) + (m,) * width)


def transition_counts(enc: EncodedSuccessions, *, per_succession: bool = False) -> np.ndarray:
    """Upward transition count matrix ``N[i, j]`` (from ``i`` below to ``j`` above).

    Pooled over successions (never across a core boundary or a gap). With
    ``per_succession=True`` returns an array ``(n_successions, m, m)``.
    """
    m = enc.m
    starts = _window_index(enc, 2)
    code = enc.states[starts].astype(np.int64) * m + enc.states[starts + 1]
    if not per_succession:
        return np.bincount(code, minlength=m * m).reshape(m, m)
    owner = np.searchsorted(enc.starts, starts, side="right") - 1
    flat = np.bincount(owner * m * m + code, minlength=len(enc) * m * m)
    return flat.reshape(len(enc), m, m)


def transition_probabilities(counts: np.ndarray) -> np.ndarray:
    """Maximum-likelihood transition probabilities: each row divided by its total.

    Rows with no transitions are left as zeros (there is nothing to estimate);
    see Anderson & Goodman (1957), Ann. Math. Stat. 28, eq. 2.3.
    """
    counts = np.asarray(counts, dtype=float)
    total = counts.sum(axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(total > 0, counts / np.where(total > 0, total, 1.0), 0.0)


def fixed_vector(probabilities: np.ndarray) -> np.ndarray:
    """Stationary (fixed-probability) vector ``pi`` with ``pi P = pi``, ``sum(pi) = 1``.

    Solved as the least-squares solution of ``(P^T - I) pi = 0`` with the sum
    constraint appended; for an irreducible chain this is the unique fixed
    vector (Davis 2002, Statistics and Data Analysis in Geology, ch. 4).
    Rows of zeros (facies never followed by anything) are treated as
    absorbing so that the system stays well posed.
    """
    p = np.array(probabilities, dtype=float)
    m = len(p)
    empty = p.sum(axis=1) == 0
    p[empty, empty] = 1.0
    a = np.vstack([p.T - np.eye(m), np.ones((1, m))])
    b = np.r_[np.zeros(m), 1.0]
    pi, *_ = np.linalg.lstsq(a, b, rcond=None)
    pi = np.clip(pi, 0.0, None)
    return pi / pi.sum() if pi.sum() > 0 else pi


def n_step(probabilities: np.ndarray, n: int) -> np.ndarray:
    """The ``n``-step transition matrix ``P**n`` (Chapman–Kolmogorov)."""
    if n < 0:
        raise InputError(f"n-step matrix needs n >= 0, got {n}")
    return np.linalg.matrix_power(np.asarray(probabilities, dtype=float), n)


def labelled(matrix: np.ndarray, codes: Sequence[str], name: str = "from") -> pd.DataFrame:
    """A square matrix as a table with facies codes on both axes (rows: lower facies)."""
    frame = pd.DataFrame(np.asarray(matrix), index=list(codes), columns=list(codes))
    frame.index.name = name
    frame.columns.name = "to"
    return frame
