"""How a reading message names the option that fixes it: as the command line spells it
(``--column base=NAME``) or as Python does (``columns={'base': 'NAME'}``).

A file is read for the command line and for Python alike, so its messages keep the
command line's words (the CLI's output is what the tests of every command compare);
a pandas DataFrame is only ever given from Python, so its messages use the Python ones.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

__all__ = ["COMMAND_LINE", "PYTHON", "Wording"]


@dataclass(frozen=True)
class Wording:
    """The spelling of the reading options named in messages (``python``: as arguments of
    :func:`faciesseq.io.read_cores` and :meth:`faciesseq.core.CoreSet.from_frame`)."""

    python: bool = False

    def columns(self, roles: Sequence[str], quoted: bool = False) -> str:
        """The option mapping ``roles`` to columns: ``--column base=NAME`` (``quoted``:
        ``--column base="NAME"``) or ``columns={'base': 'NAME'}``."""
        if self.python:
            return "columns={" + ", ".join(f"'{role}': 'NAME'" for role in roles) + "}"
        name = '"NAME"' if quoted else "NAME"
        return " ".join(f"--column {role}={name}" for role in roles)

    def sheet(self, name: str) -> str:
        """The option reading sheet ``name`` of a workbook."""
        return f"sheet={name!r}" if self.python else f'--sheet "{name}"'

    def units(self, value: str | None = None) -> str:
        """The depth-units option: ``--units ft`` or ``units='ft'``; without ``value``,
        the option itself."""
        if self.python:
            return f"units={value!r}" if value else "units='m' or units='ft'"
        return f"--units {value}" if value else "--units"

    def units_fix(self) -> str:
        """How to state that depths are feet (or really metres)."""
        if self.python:
            return "give units='ft' (units='m' if they really are metres)"
        return (
            "give --units ft, or units: ft in the source file (units: m if they really are metres)"
        )

    def keep_first(self) -> str:
        """The option keeping the first of repeated sample depths."""
        return "repeated_depths='keep-first'" if self.python else "--keep-first"


#: Messages of a source named on the command line (or a path given from Python).
COMMAND_LINE = Wording()
#: Messages of a DataFrame given from Python.
PYTHON = Wording(python=True)
