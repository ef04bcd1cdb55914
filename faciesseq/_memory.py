"""How a process of this project takes memory from the C library."""

from __future__ import annotations

__all__ = ["keep_freed_memory"]

#: glibc's ``mallopt`` parameters (``malloc.h``).
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
#: Blocks below this size come from the heap, and the heap's freed top is kept up to
#: twice it, where the user set neither ``MALLOC_MMAP_THRESHOLD_`` nor ``MALLOC_TRIM_THRESHOLD_``.
_MALLOC_KEEP = 1 << 28


def keep_freed_memory() -> None:
    """glibc's allocator keeps freed blocks of up to 256 MiB for the next ones.

    By default glibc maps each block above a few MiB afresh and unmaps it when freed,
    so every array of every batch is new pages, each zeroed by the kernel on first
    touch. Kept in the heap, the next batch's arrays reuse them: in ``decode`` at
    10^6 beds about 470,000 page faults fell to 300,000 (single runs), for a few
    percent more peak memory; in a local worker of ``fit --jobs 2`` (EM on a sample
    of 50,000 beds, whose arrays of a few MiB are made and freed every iteration)
    the fit at 10^5 beds went from 2.4 million page faults and 6.9 s of system time
    to 0.1 million and 0.8 s (one run each; benchmarks/parallel.md). Nothing is done
    on another C library, or where the user set either threshold."""
    import ctypes
    import os
    import sys

    if not sys.platform.startswith("linux") or any(
        name in os.environ for name in ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_")
    ):
        return
    try:
        mallopt = ctypes.CDLL(None).mallopt  # the C library the interpreter runs on
    except (OSError, AttributeError):
        return  # not glibc
    mallopt.argtypes, mallopt.restype = [ctypes.c_int, ctypes.c_int], ctypes.c_int
    mallopt(_M_MMAP_THRESHOLD, _MALLOC_KEEP)
    mallopt(_M_TRIM_THRESHOLD, 2 * _MALLOC_KEEP)
