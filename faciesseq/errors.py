"""One exception family, and located problems found while reading data.

Every message says *where* (file, row, core, depth), *what*, and, when it
helps, *how to fix it*. The command line turns a :class:`FaciesseqError` into
one line on standard error and the exception's ``exit_code``.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

Severity = Literal["error", "warning", "repair"]


def some_of(names: Sequence[str], shown: int = 5) -> str:
    """The first ``shown`` of ``names`` joined by commas, then how many more: the one
    way a message lists what may run to thousands (``A, B, C and 12 more``)."""
    listed = ", ".join(names[:shown])
    return listed + (f" and {len(names) - shown} more" if len(names) > shown else "")


def mask_url(url: str) -> str:
    """A database URL with any password replaced by ``***`` (every message, model file
    and provenance record names a database source this way)."""
    return re.sub(r"(://[^/:@]+:)[^@/]*@", r"\1***@", url)


def where(
    file: str | None = None,
    row: int | None = None,
    core: str | None = None,
    depth: float | None = None,
    units: str | None = None,
) -> str:
    """Format a location as ``file, data row 12, core W-3, depth 123.40 m``.

    Parts that are ``None`` are left out; an empty string means "nowhere in
    particular". ``row`` is the 1-based data row of the source (the header is not
    counted: data row 12 of a CSV file with one header line is its line 13, and row
    13 of a spreadsheet), named "data row" so that nobody takes it for a line. A
    database URL is named without its password (:func:`mask_url`).
    """
    parts: list[str] = []
    if file:
        parts.append(mask_url(str(file)))
    if row is not None:
        parts.append(f"data row {row}")
    if core is not None:
        parts.append(f"core {core}")
    if depth is not None:
        parts.append(f"depth {depth:.2f}{' ' + units if units else ''}")
    return ", ".join(parts)


class FaciesseqError(Exception):
    """Base of every error the project raises on purpose.

    Parameters
    ----------
    message
        What went wrong and, where it helps, how to fix it.
    file, row, core, depth, units
        Where it went wrong; put in front of the message.
    """

    exit_code = 1

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        row: int | None = None,
        core: str | None = None,
        depth: float | None = None,
        units: str | None = None,
    ) -> None:
        self.message = message
        self.file = file
        self.row = row
        self.core = core
        self.depth = depth
        self.units = units
        loc = where(file, row, core, depth, units)
        super().__init__(f"{loc}: {message}" if loc else message)


class InputError(FaciesseqError):
    """The data cannot be used as it is (exit code 1)."""

    exit_code = 1


class ConfigError(FaciesseqError):
    """A usage, option or configuration-file mistake (exit code 2)."""

    exit_code = 2


class ModelFileError(InputError):
    """A model file that is not a valid faciesseq model: not JSON, truncated, entries of
    the wrong type or shape (exit code 1: a corrupt input file is bad data, as a corrupt
    table is)."""


@dataclass(frozen=True)
class Problem:
    """One thing found while reading or validating a core database.

    ``severity`` is ``"error"`` (the data cannot be used until it is fixed),
    ``"warning"`` (usable, but worth a look) or ``"repair"`` (something was
    changed on reading, e.g. a small overlap snapped; never silent).
    ``kind`` is a short stable key (e.g. ``"overlap"``, ``"gap"``) that tests
    and JSON output can rely on.
    """

    severity: Severity
    kind: str
    message: str
    file: str | None = None
    row: int | None = None
    core: str | None = None
    depth: float | None = None
    units: str | None = None

    def __post_init__(self) -> None:
        # a missing core name read from a table arrives as NaN: keep it None, so
        # that the JSON of `check` stays valid and messages name no "nan" core
        if self.core is not None and not isinstance(self.core, str) and self.core != self.core:
            object.__setattr__(self, "core", None)
        if self.depth is not None and self.depth != self.depth:
            object.__setattr__(self, "depth", None)

    def __str__(self) -> str:
        loc = where(self.file, self.row, self.core, self.depth, self.units)
        return (
            f"{self.severity}: {loc}: {self.message}"
            if loc
            else (f"{self.severity}: {self.message}")
        )

    def as_error(self, more: str = "") -> InputError:
        """This problem as the error that stops a command, located as it is, with
        ``more`` (e.g. how many other problems there are) after its message."""
        return InputError(
            self.message + more,
            file=self.file,
            row=self.row,
            core=self.core,
            depth=self.depth,
            units=self.units,
        )

    def to_dict(self) -> dict:
        return {
            "severity": self.severity,
            "kind": self.kind,
            "message": self.message,
            "file": self.file,
            "row": self.row,
            "core": self.core,
            "depth": self.depth,
            "units": self.units,
        }
