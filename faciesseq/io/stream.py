"""A plain CSV file read a batch of whole cores at a time.

What a command needs of each core alone (the transition counts of ``markov``, the
decoded tracts of ``decode``) can be had from a large database a batch of whole
cores at a time, so that memory holds one batch, not the file. Each batch is read
from the file by the plain reader (:mod:`faciesseq.io.plaincsv`), cut where a core
ends, and validated as the whole file would be (:func:`~faciesseq.io.validate.build_coreset`);
its rows keep their numbers in the file.

A streamed read gives what reading the whole file gives, or says it cannot
(:class:`NotStreamable`, for the caller to read the file whole). It can when:

- the source is one plain CSV file (comma-delimited, UTF-8, no quote character,
  see :mod:`faciesseq.io.plaincsv`) in the interval layout, with a core column;
- each core's rows are together (the file is grouped by core, as exports write it:
  a core found again in a later batch stops the read);
- every batch reads its columns alike (a column of numbers in one batch is one of
  numbers in every batch) and states its depth units alike;
- errors without a core (a row without a core name) are in one batch at most.

Errors end the read as :meth:`~faciesseq.core.CoreSet.require_valid` would end the
whole file's: once a batch holds one, no batch is handed on, the rest of the file
is checked and the first error is raised, with the count of them all.
"""

from __future__ import annotations

from collections.abc import Collection, Iterator
from pathlib import Path

import numpy as np

from faciesseq.core import CoreSet, CoreTable
from faciesseq.errors import FaciesseqError, Problem
from faciesseq.io.columns import match_columns
from faciesseq.io.plaincsv import NotPlain, plain_blocks, plain_frame
from faciesseq.io.raw import RawTable
from faciesseq.io.source import SourceSpec
from faciesseq.io.sql import is_url
from faciesseq.io.tabular import TEXT_SUFFIXES, plain_header, raw_rows
from faciesseq.io.validate import attribute_name, build_coreset, feet_suspected_in
from faciesseq.scheme import FaciesScheme

__all__ = ["BATCH_ROWS", "CoreStream", "NotStreamable", "open_stream"]

#: Rows of the file (at least) per batch: about 200,000 beds of the demo's kind.
BATCH_ROWS = 1 << 20


class NotStreamable(Exception):
    """The file must be read whole (see the module notes); found while reading."""


def open_stream(
    spec: SourceSpec,
    scheme: FaciesScheme | None,
    rows: int | None = None,
    others: Collection[str] | None = None,
    unstated_units: str = "m",
) -> CoreStream | None:
    """A stream of the cores of ``spec``, or ``None`` when its source is not one plain
    CSV file with a core column, read with the options of a CSV file (then it is read
    whole, which names any mistake in the options).

    ``others``: of the columns matched to no role (attributes kept under their own
    names, see :class:`~faciesseq.io.columns.ColumnMatch`), those to read, by the
    name a bed table gives them; the rest are left unread, as if the file had not held
    them (no problem is ever reported of such a column). Default: every column."""
    path = Path(spec.source)
    other = (spec.sheet, spec.table, spec.query, spec.curve, spec.encoding)
    if is_url(spec.source) or any(o is not None for o in other) or spec.layout == "samples":
        return None
    if path.suffix.lower() not in TEXT_SUFFIXES or not path.is_file():
        return None
    try:
        header = plain_header(path)
        if header is None or header[0] != ",":
            return None
        match = match_columns(header[1], spec.columns, file=str(path))
    except (FaciesseqError, OSError):
        return None
    if "core" not in match.roles:
        return None
    names = header[1]
    if others is not None:
        wanted = set(others)
        unread = {c for c in match.others if attribute_name(c) not in wanted}
        names = [n for n in names if n not in unread]
    core = names.index(match.roles["core"])
    return CoreStream(path, header[1], core, spec, scheme, rows, names, unstated_units)


class CoreStream:
    """The cores of a plain CSV file, a batch of whole cores at a time.

    Iterating gives one valid :class:`~faciesseq.core.CoreSet` per batch, in file
    order; :meth:`summary` then holds what the whole file's core set says of itself
    (units, sources, and the problems about its depths: the ``units``,
    ``units-suspect`` and ``negative-depth`` warnings; every problem when read with
    ``valid=False``). Each
    iteration reads the file again. ``names``: the header's; ``read``: the columns
    converted (default all; see :func:`open_stream`), ``core_column`` indexing them.

    Raises (while iterating)
    ------------------------
    InputError
        The first error of the file (as the whole file's ``require_valid``).
    NotStreamable
        The file must be read whole.
    """

    def __init__(
        self,
        path: Path,
        names: list[str],
        core_column: int,
        spec: SourceSpec,
        scheme: FaciesScheme | None,
        rows: int | None = None,
        read: list[str] | None = None,
        unstated_units: str = "m",
    ):
        self.path, self.names, self.core_column = path, names, core_column
        #: the columns read (of ``names``, in their order); ``core_column`` indexes them
        self.read = list(names) if read is None else list(read)
        self.spec, self.scheme = spec, scheme
        self.rows = max(1, int(rows or BATCH_ROWS))
        self.units: str | None = None
        self.problems: list[Problem] = []
        #: the units of the depths when neither the options nor the file state any
        self.unstated_units = unstated_units

    @property
    def file(self) -> str:
        return str(self.path)

    def __iter__(self) -> Iterator[CoreSet]:
        return self.batches()

    def batches(self, valid: bool = True) -> Iterator[CoreSet]:
        """The batches in file order: the valid ones (``valid``, see the class notes),
        or every batch, errors and all, for a summary of the file (then :attr:`problems`
        holds every problem of the file, in the whole file's order, once read; a problem
        of the file rather than of a core, other than the units warning, stops the read:
        :class:`NotStreamable`)."""
        self.units, self.problems = None, []
        seen: set[str] = set()
        form = None  # how the first batch with cores reads its columns and units
        errors: list[list[Problem]] = []
        deepest = -np.inf
        for raw in self._raw_tables():
            batch = self._validate(raw)
            if self.units is None:
                self.units = batch.units
                self.problems = [p for p in batch.problems if p.kind == "units"]
            if len(batch.names):
                form = form or _form(batch)
                if _form(batch) != form:
                    raise NotStreamable("the batches read their columns or units differently")
                deepest = max(deepest, float(batch.column("base").astype(float).max()))
            names = _named(batch)
            if seen.intersection(names):
                raise NotStreamable("a core's rows are apart in the file")
            seen.update(names)
            if not valid:
                self.problems += _of_cores(batch.problems)
            else:
                self.problems += [p for p in batch.problems if p.kind in _KEPT_OF_CORES]
                if batch.errors or errors:
                    errors.append(batch.errors)
                    continue
            yield batch
        self._finish(errors, form is not None, deepest)

    def summary(self) -> CoreSet:
        """The whole file's units, sources and kept problems, without its cores."""
        return CoreSet({}, self.units or self.unstated_units, tuple(self.problems), (self.file,))

    def _validate(self, raw: RawTable) -> CoreSet:
        spec = self.spec
        batch = build_coreset(
            [raw],
            layout=spec.layout,
            columns=spec.columns,
            units=spec.units,
            scheme=self.scheme,
            sources=(self.file,),
            unstated_units=self.unstated_units,
        )
        if "samples" in dict(batch.meta.get("layout", {})).values():
            raise NotStreamable("samples layout")
        return batch

    def _finish(self, errors: list[list[Problem]], kept: bool, deepest: float) -> None:
        """The whole file's ``units-suspect`` warning; its first error raised. A file
        that kept no core (``kept``: some batch did) is read whole, which names that."""
        if errors:
            if sum(any(p.core is None for p in found) for found in errors) > 1:
                raise NotStreamable("errors without a core in several batches")
            found = [p for part in errors for p in part]
            found.sort(key=lambda p: p.core is not None)  # as the whole file's order
            CoreSet(
                {}, self.units or self.unstated_units, tuple(found), (self.file,)
            ).require_valid()
        if not kept:
            raise NotStreamable("no cores")  # the whole file's read names it
        assumed_metres = self.units == "m" and any(p.kind == "units" for p in self.problems)
        if assumed_metres and np.isfinite(deepest):
            suspect = feet_suspected_in(np.zeros(0), deepest, {})
            if suspect is not None:
                self.problems.insert(0, suspect)

    def _raw_tables(self) -> Iterator[RawTable]:
        """The file's rows, a batch of at least :attr:`rows` rows (and whole cores, cut
        where the core column's text changes) at a time."""
        blocks = plain_blocks(self.path, ",", self.names, self.read)
        if blocks is None:
            raise NotStreamable("not a plain file")
        pending: list[list] = []
        held, first = 0, 1
        try:
            for block in blocks:
                pending.append(block)
                held += len(block[0][0])
                cut = _last_core_start(block[self.core_column][0])
                if held < self.rows or cut is None:
                    continue
                rest = len(block[0][0]) - cut
                pending[-1] = [(codes[:cut], text) for codes, text in block]
                yield self._raw(pending, first)
                first += held - rest
                pending, held = [[(codes[cut:], text) for codes, text in block]], rest
        except NotPlain:
            raise NotStreamable("not a plain file") from None
        if held:
            yield self._raw(pending, first)

    def _raw(self, blocks: list[list], first: int) -> RawTable:
        columns = [[block[j] for block in blocks] for j in range(len(self.read))]
        frame = plain_frame(columns, self.read)
        if frame is None:
            raise NotStreamable("a cell holds a quote character or a NUL byte")
        raw = raw_rows(frame, self.file, [], first=first)
        raw.core = self.path.stem  # as the whole file's reader names a core-less table
        return raw


def _named(batch: CoreSet) -> list[str]:
    """The cores of a batch, those whose every row has an error too."""
    return [*batch.names, *(p.core for p in batch.problems if p.kind == "empty-core")]


def _of_cores(problems: tuple[Problem, ...]) -> list[Problem]:
    """The problems of a batch's cores; a problem of the file other than the units
    warning and the ones made again for the whole file stops the read."""
    if any(p.core is None and p.kind not in _OF_FILE for p in problems):
        raise NotStreamable("a problem of the file, not of a core")
    if any(p.kind == "blank-core" for p in problems):  # a batch may start in a block
        raise NotStreamable("core names written once for their block of rows")
    return [p for p in problems if p.core is not None]


#: Problems of a core that a valid read keeps in the summary (said on standard error).
_KEPT_OF_CORES = ("negative-depth",)

#: Problems of the file a batch reports, that the whole file's read makes once.
_OF_FILE = ("units", "units-suspect", "no-cores")


def _last_core_start(codes: np.ndarray) -> int | None:
    """The row where the block's last core begins, ``None`` when it holds one core."""
    changes = np.flatnonzero(codes[1:] != codes[:-1])
    return int(changes[-1]) + 1 if len(changes) else None


def _form(batch: CoreSet) -> tuple:
    """How a batch reads its columns (their types) and its depth units."""
    columns = ()
    if isinstance(batch.cores, CoreTable):
        columns = tuple((c, str(t)) for c, t in batch.cores.table.dtypes.items())
    stated = any(p.kind == "units" for p in batch.problems)
    return batch.units, stated, columns
