"""Checks of the engine's inputs: log-emissions, codes, lengths, parameters."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from faciesseq.errors import ConfigError, InputError

# Tolerance on probabilities summing to one.
_SUM_TOL = 1e-6


def _check_log_emission(log_emission: np.ndarray) -> np.ndarray:
    le = np.asarray(log_emission, dtype=np.float64)
    if le.ndim != 2:
        raise InputError(f"log-emission array must be 2-D (rows, states), got shape {le.shape}")
    if le.shape[1] == 0:
        raise InputError("log-emission array has no state columns")
    # One fast reduction for the common case: the maximum is NaN if any
    # entry is NaN, and +inf if any entry is +inf.
    top = le.max() if le.size else 0.0
    if np.isnan(top) or top == np.inf:
        r, k = np.argwhere(np.isnan(le) | (le == np.inf))[0]
        raise InputError(
            f"log-emission row {r}, state {k} is {le[r, k]}; "
            "expected a log-probability (finite or -inf)"
        )
    return le


def _check_codes(codes: np.ndarray | Sequence[int], n_codes: int) -> np.ndarray:
    arr = np.asarray(codes)
    if arr.ndim != 1 or not np.issubdtype(arr.dtype, np.integer):
        raise InputError(
            f"codes must be a 1-D integer array, got shape {arr.shape}, dtype {arr.dtype}"
        )
    bad = np.flatnonzero((arr < 0) | (arr >= n_codes))
    if bad.size:
        r = int(bad[0])
        raise InputError(
            f"codes row {r} is {int(arr[r])}; expected 0..{n_codes - 1} "
            "(a row of the log-emission table)"
        )
    return arr.astype(np.intp, copy=False)


def _check_lengths(lengths: np.ndarray | Sequence[int] | None, n_rows: int) -> np.ndarray:
    if lengths is None:
        if n_rows == 0:
            raise InputError("log-emission array has no rows")
        return np.array([n_rows], dtype=np.intp)
    arr = np.asarray(lengths)
    if arr.ndim != 1 or arr.size == 0:
        raise InputError(f"lengths must be a non-empty 1-D array, got shape {arr.shape}")
    integral = np.issubdtype(arr.dtype, np.integer) or (
        np.issubdtype(arr.dtype, np.floating) and bool(np.all(arr == np.round(arr)))
    )
    if not integral:
        raise InputError(f"lengths must be integers, got dtype {arr.dtype}")
    arr = arr.astype(np.intp)
    short = np.flatnonzero(arr < 1)
    if short.size:
        s = int(short[0])
        raise InputError(f"sequence {s} has length {arr[s]}; every sequence needs >= 1 row")
    if int(arr.sum()) != n_rows:
        raise InputError(
            f"lengths sum to {int(arr.sum())} but the log-emission array has {n_rows} rows"
        )
    return arr


def _check_params(
    startprob: np.ndarray, transmat: np.ndarray, n_states: int
) -> tuple[np.ndarray, np.ndarray]:
    pi = np.asarray(startprob, dtype=np.float64)
    A = np.asarray(transmat, dtype=np.float64)
    if pi.shape != (n_states,):
        raise ConfigError(
            f"startprob has shape {pi.shape}; expected ({n_states},) to match the "
            "log-emission columns"
        )
    if A.shape != (n_states, n_states):
        raise ConfigError(f"transmat has shape {A.shape}; expected ({n_states}, {n_states})")
    if not (np.all(np.isfinite(pi)) and np.all(pi >= 0)):
        raise ConfigError("startprob must hold finite probabilities >= 0")
    if not (np.all(np.isfinite(A)) and np.all(A >= 0)):
        raise ConfigError("transmat must hold finite probabilities >= 0")
    if abs(pi.sum() - 1.0) > _SUM_TOL:
        raise ConfigError(f"startprob sums to {pi.sum():.8g}; expected 1")
    rows = A.sum(axis=1)
    off = np.flatnonzero(np.abs(rows - 1.0) > _SUM_TOL)
    if off.size:
        i = int(off[0])
        raise ConfigError(f"transmat row {i} sums to {rows[i]:.8g}; expected 1")
    return pi, A


def _log(p: np.ndarray) -> np.ndarray:
    """Natural log with exact ``-inf`` for zeros and no warning."""
    out = np.full(p.shape, -np.inf)
    np.log(p, out=out, where=p > 0)
    return out
