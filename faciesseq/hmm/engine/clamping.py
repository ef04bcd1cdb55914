"""Clamping: beds of known state keep it (partially labelled sequences)."""

from __future__ import annotations

import numpy as np

from faciesseq.errors import InputError
from faciesseq.hmm.engine.checks import _check_log_emission


def constrained_log_emission(log_emission: np.ndarray, clamp: np.ndarray) -> np.ndarray:
    """Copy of ``log_emission`` with forbidden states set to ``-inf``.

    Used for partially labelled (semi-supervised) sequences: an interpreted
    bed keeps its tract in :func:`forward_backward` (posterior 1) and in
    :func:`viterbi`.

    Parameters
    ----------
    log_emission
        ``(T, K)`` log-emission array.
    clamp
        Either ``(T,)`` integers, ``-1`` = free, ``k`` = the row must be in
        state ``k``; or a ``(T, K)`` boolean mask of allowed states (for a
        tract made of several sub-states, allow all of them).

    Returns
    -------
    numpy.ndarray
        ``(T, K)`` float64 copy; the input is not changed.

    Raises
    ------
    InputError
        Wrong shape, a state index outside ``-1 .. K-1``, or a mask row that
        allows no state (names the row).
    """
    le = np.array(_check_log_emission(log_emission), dtype=np.float64, copy=True)
    T, K = le.shape
    cl = np.asarray(clamp)
    if cl.dtype == np.bool_:
        if cl.shape != (T, K):
            raise InputError(f"clamp mask has shape {cl.shape}; expected ({T}, {K})")
        empty = np.flatnonzero(~cl.any(axis=1))
        if empty.size:
            raise InputError(f"clamp mask row {int(empty[0])} allows no state")
        le[~cl] = -np.inf
        return le
    if cl.shape != (T,):
        raise InputError(f"clamp has shape {cl.shape}; expected ({T},) or a ({T}, {K}) mask")
    if not np.issubdtype(cl.dtype, np.integer):
        raise InputError(f"clamp must hold integer states (-1 = free), got dtype {cl.dtype}")
    out_of_range = np.flatnonzero((cl < -1) | (cl >= K))
    if out_of_range.size:
        r = int(out_of_range[0])
        raise InputError(f"clamp row {r} is state {int(cl[r])}; expected -1 (free) or 0..{K - 1}")
    rows = np.flatnonzero(cl >= 0)
    kept = le[rows, cl[rows]]
    le[rows] = -np.inf
    le[rows, cl[rows]] = kept
    return le
