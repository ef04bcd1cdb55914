"""How the recursions lay out and run their work: batches of sequences, rows moved as
whole items, one BLAS thread.

Sequences are sorted by length (longest first) and grouped into
batches of at most ``batch_size`` rows. Inside a batch the rows are stored
*time-major* (all first observations, then all second observations, ...), so
at every time step the sequences still running are a leading block of the
previous step's block: one ``(B, K) @ (K, K)`` product advances every
sequence of the batch by one step, with no padding and no masks. The Python
loop runs over time steps only, never over sequences or observations.
"""

from __future__ import annotations

import contextlib
import functools
from collections.abc import Iterator

import numpy as np

from faciesseq.errors import ConfigError, InputError

#: Default work bound: rows per batch times states (``batch_size = this // K``).
#: About 16 MB per float64 work array.
DEFAULT_BATCH_CELLS = 1 << 21


@functools.cache
def _blas_controller():
    try:
        from threadpoolctl import ThreadpoolController
    except ImportError:  # pragma: no cover - threadpoolctl comes with scikit-learn
        return None
    return ThreadpoolController()


def single_thread_blas() -> contextlib.AbstractContextManager:
    """Run the recursions with one BLAS thread.

    The recursions make many small matrix products; a multi-threaded BLAS
    gains nothing on them and loses much when other processes load the
    cores (measured: one EM iteration on 1,000,000 observations took 0.30 s
    instead of 0.71 s, best of 8, on a loaded 2-core machine). Between calls
    OpenBLAS's idle threads wait by spinning, which is CPU time too: a caller
    making many small products around the recursions (a decode's emissions,
    posteriors summed per tract, surface probabilities) holds this for all of
    them (the decoded outputs at 10^6 beds were the same byte for byte with
    one thread and with two).
    """
    controller = _blas_controller()
    if controller is None:  # pragma: no cover
        return contextlib.nullcontext()
    return controller.limit(limits=1, user_api="blas")


class _Batch:
    """Sequences of one batch, rows stored time-major.

    ``seq[j]`` is the input index of the batch's ``j``-th sequence (longest
    first); packed row ``offsets[t] + j`` is row ``t`` of sequence ``j`` and
    ``rows`` maps every packed row to its input row.
    """

    def __init__(self, seq: np.ndarray, lengths: np.ndarray, starts: np.ndarray) -> None:
        self.seq = seq
        self.lengths = lengths
        n_steps = int(lengths[0])
        # Sequences running at step t: those longer than t (a leading block).
        self.counts = np.searchsorted(-lengths, -np.arange(n_steps), side="left")
        self.offsets = np.concatenate(([0], np.cumsum(self.counts)))
        #: time step t of every packed row
        self.step = np.repeat(np.arange(n_steps), self.counts)
        #: batch position j of every packed row
        self.position = np.arange(self.offsets[-1]) - self.offsets[self.step]
        self.rows = starts[seq][self.position] + self.step
        #: packed row of the last observation of every sequence
        self.last = self.offsets[lengths - 1] + np.arange(seq.size)

    @property
    def n_rows(self) -> int:
        return int(self.rows.size)


def _batches(lengths: np.ndarray, batch_size: int, make: type = _Batch) -> Iterator[_Batch]:
    """Sequences grouped into batches of at most ``batch_size`` rows, longest first,
    each made by ``make`` (:class:`_Batch`, or :class:`_LockstepBatch` for Viterbi)."""
    starts = np.concatenate(([0], np.cumsum(lengths)[:-1]))
    order = np.argsort(-lengths, kind="stable")
    sorted_len = lengths[order]
    i, n = 0, len(order)
    while i < n:
        # Greedy: add sequences while the batch stays within batch_size rows
        # (a single longer sequence is a batch of its own).
        csum = np.cumsum(sorted_len[i:])
        stop = i + max(1, int(np.searchsorted(csum, batch_size, side="right")))
        yield make(order[i:stop], sorted_len[i:stop], starts)
        i = stop


def _buffer_rows(lengths: np.ndarray, rows_per_batch: int) -> int:
    """Rows of the largest batch :func:`_batches` can yield."""
    return int(min(lengths.sum(), max(rows_per_batch, lengths.max())))


def _as_items(array: np.ndarray) -> np.ndarray:
    """1-D view of a C-contiguous 2-D array with each row as one opaque item."""
    return array.view(np.dtype((np.void, array.shape[1] * array.itemsize))).ravel()


def _put_rows(out: np.ndarray, rows: np.ndarray, values: np.ndarray) -> None:
    """``out[rows] = values`` for C-contiguous 2-D arrays, row by row as one item.

    Scattering whole rows as opaque items is about three times faster than
    numpy's fancy-index assignment on 16-column float64 arrays (measured).
    """
    np.put(_as_items(out), rows, _as_items(np.ascontiguousarray(values)))


def _take_rows(source: np.ndarray, rows: np.ndarray, out: np.ndarray) -> None:
    """``out[:] = source[rows]`` for C-contiguous 2-D arrays, rows as opaque items
    (``rows`` already checked: no bounds check, no buffering)."""
    np.take(_as_items(source), rows, out=_as_items(out), mode="wrap")


def _impossible(batch: _Batch, packed_row: int, what: str) -> InputError:
    s = int(batch.seq[batch.position[packed_row]])
    t = int(batch.step[packed_row])
    return InputError(
        f"sequence {s} is impossible under the model: {what} at its row {t} "
        f"(row {int(batch.rows[packed_row])} of the log-emission array); check "
        "labels/clamps against the allowed tract transitions and the emissions"
    )


def _resolve_batch_size(
    batch_size: int | None, n_states: int, cells: int = DEFAULT_BATCH_CELLS
) -> int:
    if batch_size is None:
        return max(1, cells // n_states)
    if int(batch_size) < 1:
        raise ConfigError(f"batch_size must be >= 1, got {batch_size}")
    return int(batch_size)
