"""Warnings said once per call: a fit tries several tract graphs and refits, and a
decode reads many cores, each of which would repeat the same warning."""

from __future__ import annotations

import warnings
from collections.abc import Callable, Iterator
from contextlib import contextmanager

__all__ = ["said_once"]


@contextmanager
def said_once(
    merge: Callable[[list[warnings.WarningMessage]], list[Warning]] | None = None,
) -> Iterator[None]:
    """Hold the warnings raised inside, then say each distinct one (category and
    text) once, in the order first raised, through the caller's warning filters.

    ``merge``, where given, replaces the held warnings by those it returns (a
    summary of many alike, e.g. one per core) before the duplicates are dropped.
    """
    caught: list[warnings.WarningMessage] = []
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            yield
    finally:  # said on the way out of an error too
        _say(merge(caught) if merge is not None else [w.message for w in caught])


def _say(held: list) -> None:
    said: set[tuple[type, str]] = set()
    for message in held:
        category = message.__class__ if isinstance(message, Warning) else UserWarning
        key = (category, str(message))
        if key in said:
            continue
        said.add(key)
        # this frame, said_once's, contextlib's exit, the method: the method's caller
        warnings.warn(message, category, stacklevel=5)
