"""What the tract model accepts from a Python caller, checked once at the boundary.

The cores to fit or decode (a :class:`~faciesseq.core.CoreSet`, one
:class:`~faciesseq.core.Core`, a :class:`~faciesseq.core.SuccessionTable` or
successions; the facies scheme goes through :func:`faciesseq.scheme.as_scheme`).
Anything else is a one-line :class:`TypeError` naming
what is accepted and how to make it.
"""

from __future__ import annotations

from collections.abc import Sequence
from os import PathLike
from typing import Any

from faciesseq.core import Core, CoreSet, Succession, SuccessionTable, check_grid_step
from faciesseq.errors import InputError

__all__ = [
    "ACCEPTED_CORES",
    "as_successions",
    "cores_type_error",
    "refuse_too_few_beds",
]

#: The kinds of cores ``fit`` and ``decode`` read, as the error names them.
ACCEPTED_CORES = "a CoreSet, a Core, a SuccessionTable or a list of Succession objects"


def cores_type_error(data: Any, in_list: bool = False) -> TypeError:
    """The error for cores of a kind the model does not read (``in_list``: an item of a
    list), with how to make a CoreSet."""
    got = f"a list holding {type(data).__name__}" if in_list else type(data).__name__
    how = (
        "make one with CoreSet.from_frame(frame) (faciesseq.core) or read_cores(path) "
        "(faciesseq.io)"
    )
    return TypeError(f"expected {ACCEPTED_CORES}, got {got}: {how}")


def as_successions(data: Any, unit: str, step: float | None) -> list[Succession]:
    """The successions of ``data`` (see :data:`ACCEPTED_CORES`), cores cut by ``unit``
    and ``step`` (:meth:`~faciesseq.core.CoreSet.successions`).

    Raises
    ------
    TypeError
        For anything else (a DataFrame, a path, a list of other objects).
    """
    if isinstance(data, CoreSet | Core):
        check_grid_step(unit, step)
        return data.successions(unit, step)
    if isinstance(data, SuccessionTable):
        return list(data)
    if isinstance(data, Succession):
        return [data]
    if isinstance(data, str | bytes | PathLike) or not hasattr(data, "__iter__"):
        raise cores_type_error(data)
    if hasattr(data, "columns"):  # a DataFrame iterates over its column names
        raise cores_type_error(data)
    out = list(data)
    if not all(isinstance(s, Succession) for s in out):
        odd = next(s for s in out if not isinstance(s, Succession))
        raise cores_type_error(odd, in_list=True)
    return out


def refuse_too_few_beds(
    successions: SuccessionTable | Sequence[Succession], unit: str, file: str | None = None
) -> None:
    """Refuse training successions none of which holds an upward transition (every one of
    a single bed, or ``unit`` row): a fit on them learns nothing of the tracts' order, and
    its decode gives every tract the same probability. ``file`` names the source.

    Raises
    ------
    InputError
        Naming the number of beds and successions, and what the fit needs.
    """
    if isinstance(successions, SuccessionTable):
        lengths = successions.lengths.tolist()
    else:
        lengths = [len(s) for s in successions]
    if lengths and max(lengths) < 2:
        raise InputError(
            f"too few beds to fit on: {sum(lengths)} {unit} in {len(lengths)} succession(s) "
            "and no upward transition; the fit needs at least one core (or part between "
            "gaps) of 2 or more beds",
            file=file,
        )
