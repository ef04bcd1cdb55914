"""``faciesseq decode model.json SOURCE -o OUT``: tract columns and surface probabilities."""

from __future__ import annotations

import argparse
import json
import sys
import warnings
from pathlib import Path

from faciesseq.cli._common import (
    add_irregular_argument,
    add_output_arguments,
    add_source_arguments,
    announce,
    check_grid_size,
    column_mapping,
    input_files,
    read_in_models_units,
    read_source,
    regular_cores,
    require_file,
    say_irregular,
    scheme_for_model,
    stream_source,
)
from faciesseq.cli._hmm import warnings_to_stderr
from faciesseq.cli._parallel import add_parallel_arguments, parallel_options
from faciesseq.errors import ConfigError

FORMATS = ("csv", "json", "parquet", "las")
SUMMARIES = ("text", "json")
#: Schema metadata key of a Parquet table holding the ``probabilities`` record.
PARQUET_KEY = b"faciesseq.probabilities"

EXAMPLES = """\
examples:
  faciesseq decode model.json cores.csv -o decoded
  faciesseq decode model.json new-cores.csv --scheme my-scheme.yaml --plot -o decoded --force
  faciesseq decode model.json cores.csv --format parquet --summary json -o decoded
  faciesseq decode model.json cores.csv --format las --las-step 0.1 -o decoded
  faciesseq decode model.json big-database.parquet --jobs 4 -o decoded
  faciesseq decode model.json cores.csv --core "Well A" --core "Well C" -o decoded
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "decode",
        help="decode cores with a fitted model: tract column, posteriors, surface probabilities",
        description="Decode every core of SOURCE with a model written by `faciesseq fit`: "
        "the most likely tract of every bed (Viterbi), the posterior probability of each "
        "tract per bed, the probability of each named surface at every contact and the "
        "picked surfaces. Writes OUT/tracts.*, OUT/surfaces.*, OUT/picks.* and a tops table "
        "OUT/tops.csv; for a samples-layout SOURCE, OUT/samples.* (its rows with the decoded "
        "tract); with --format las one LAS 2.0 file per well in OUT/las/; with --plot "
        "one strip-log figure per core. Each table says whether its "
        "probabilities were checked against known tracts (a first '# ' line in CSV, a "
        "'probabilities' key in JSON, file metadata in Parquet). Prints one line per well "
        "(at most 30): thickness per tract, cycles, surface picks and the mean probability "
        "of the decoded tract; --summary json prints every well as one JSON document "
        "instead (--format chooses the files' format, not the printed summary's). An "
        "interpreter's tract column in SOURCE is not used to decode (unless --keep-labels: "
        "then its labelled beds keep their tract); where present, the agreement with it is "
        "reported. Warns, in one line each, of facies codes and contact "
        "types never seen in training (with their beds and cores, and how they are decoded; "
        "a facies outside the scheme is one of them, with a scheme or without) and of "
        "beds whose median thickness differs from the training beds' by more than a factor "
        "of 4 (a rule of thumb chosen, not tuned; a model fitted on beds records their "
        "median, older model files do not and are compared on their facies only). --scheme "
        "must keep the codes and ranks of the model's facies; it may add facies the model "
        "never saw (decoded as never seen, named and coloured by the scheme). An "
        "existing OUT is replaced as a whole with --force.",
        epilog=EXAMPLES,
    )
    parser.add_argument("model", metavar="MODEL", help="model file written by `faciesseq fit`")
    add_source_arguments(parser)
    add_output_arguments(parser, "OUT", "output folder", required=True)
    parser.add_argument(
        "--format",
        choices=FORMATS,
        default="csv",
        help="table format; las: CSV tables plus one LAS 2.0 file per well in OUT/las/",
    )
    parser.add_argument(
        "--las-step",
        type=float,
        metavar="X",
        help="depth step of the LAS curves, in the cores' units (default: half the median "
        "bed thickness, rounded down to 1, 2 or 5 times a power of ten)",
    )
    parser.add_argument("--plot", action="store_true", help="also draw a strip log per core")
    parser.add_argument(
        "--review-sheet",
        action="store_true",
        help="also write OUT/sheet.csv and OUT/sheet.xlsx for a geologist to correct the "
        "tracts (then `faciesseq relabel`), and OUT/scheme.yaml, the model's facies scheme, "
        "which the sheet names for the next fit (where --scheme is not given)",
    )
    parser.add_argument(
        "--view",
        action="store_true",
        help="also write view.html: every core in one interactive page",
    )
    parser.add_argument(
        "--summary",
        choices=SUMMARIES,
        default="text",
        help="printed summary of the wells: text lines, or one JSON document on stdout",
    )
    parser.add_argument(
        "--labels",
        metavar="COLUMN",
        help="interpreter's tract column to compare with (default 'tract'; used to decode "
        "only with --keep-labels)",
    )
    parser.add_argument(
        "--keep-labels",
        action="store_true",
        help="keep the tracts of the labelled beds of --labels (a relabelled table: the "
        "geologist's tracts): those beds are clamped to their label, as in a fit with "
        "labels, and the others are decoded around them; a clamped column in tracts and "
        "in the review sheet says which beds were held (default: the labels are only "
        "compared with, so that the agreement measures the model)",
    )
    parser.add_argument(
        "--core",
        action="append",
        metavar="NAME",
        help="decode only this core of SOURCE (repeat for several; default: every core); "
        "a name SOURCE lacks is a usage error naming it",
    )
    add_irregular_argument(parser, "decode")
    add_parallel_arguments(parser, "batches of 20,000 beds")
    parser.set_defaults(func=run)


def _write_csv(frame, path: Path, probabilities: dict | None) -> None:
    from faciesseq.report.csvtext import MEASURES, csv_blocks

    with path.open("wb") as handle:
        if probabilities is not None:
            handle.write(f"# {probabilities['note']}\n".encode())
        handle.writelines(csv_blocks(frame, measures=MEASURES))


def _write_json(frame, path: Path, probabilities: dict | None) -> None:
    records = frame.to_json(orient="records", indent=1, double_precision=8, force_ascii=False)
    if probabilities is None:
        path.write_text(records + "\n", encoding="utf-8")
        return
    doc = {"probabilities": probabilities, "records": json.loads(records)}
    path.write_text(json.dumps(doc, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")


def _write_parquet(frame, path: Path, probabilities: dict | None) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(frame, preserve_index=False)
    if probabilities is not None:
        meta = dict(table.schema.metadata or {})
        meta[PARQUET_KEY] = json.dumps(probabilities).encode("utf-8")
        table = table.replace_schema_metadata(meta)
    pq.write_table(table, path)


def _write_table(frame, path: Path, fmt: str, probabilities: dict | None = None) -> None:
    """Write one table; ``probabilities`` (``checked``, ``note``) goes in a first ``# ``
    line (CSV), a top-level key beside ``records`` (JSON) or file metadata (Parquet)."""
    writer = {"csv": _write_csv, "json": _write_json}.get(fmt, _write_parquet)
    writer(frame, path, probabilities)


class _Table:
    """One output table written a part at a time: CSV rows are appended as they come,
    JSON and Parquet (one document, one schema) are joined and written at the end."""

    def __init__(self, path: Path, fmt: str, probabilities: dict | None):
        self.path, self.fmt, self.probabilities = path, fmt, probabilities
        self.frames: list = []
        self.started = False

    def add(self, frame) -> None:
        if self.fmt != "csv":
            self.frames.append(frame)
        elif not self.started:
            _write_csv(frame, self.path, self.probabilities)
            self.started = True
        elif len(frame):
            from faciesseq.report.csvtext import MEASURES, csv_blocks

            with self.path.open("ab") as handle:
                handle.writelines(csv_blocks(frame, header=False, measures=MEASURES))

    def close(self) -> None:
        if self.frames:
            import pandas as pd

            kept = [f for f in self.frames if len(f)] or self.frames[:1]
            frame = kept[0] if len(kept) == 1 else pd.concat(kept, ignore_index=True)
            _write_table(frame, self.path, self.fmt, self.probabilities)


def probability_record(interp) -> dict:
    """``{"checked": bool, "note": str}`` of an interpretation, as the tables carry it."""
    return {"checked": interp.probabilities_checked, "note": interp.probabilities_note}


def _agreement(interp, column: str):
    """Bed agreement (thickness-weighted too) with an interpreter's column per core, or None."""
    import numpy as np
    import pandas as pd

    from faciesseq.surfaces import slice_sums

    beds = interp.beds
    if column not in beds.columns:
        return None
    codes = {str(t).upper(): t for t in interp.tracts}  # labels read in any case, as a fit
    labelled, text, others = _labels_read(beds[column], codes)
    if others:  # labels no tract of the model: left out, never scored as disagreement
        shown = "tract" if column == "interpreted_tract" else column  # as the source names it
        warnings.warn(
            f"beds of the {shown!r} column hold labels that are not tracts of the model "
            f"({', '.join(others[:5])}): left out of the agreement",
            stacklevel=2,
        )
    if not labelled.any():
        return None
    rows = np.flatnonzero(labelled)
    core_id, cores = pd.factorize(beds["core"].iloc[rows])
    same = (text[rows] == beds["tract"].iloc[rows].to_numpy()).astype(bool)
    w = beds["thickness"].to_numpy(float)[rows]
    starts = np.flatnonzero(np.r_[True, core_id[1:] != core_id[:-1]])
    ends = np.r_[starts[1:], len(rows)]
    counts = ends - starts
    agree = np.add.reduceat(same.astype(np.int64), starts) / counts
    # each core's sums as numpy sums its slice, to the last bit, all cores at once
    weight = slice_sums(w, starts, counts)
    agreeing = slice_sums(w * same, starts, counts)
    with np.errstate(invalid="ignore", divide="ignore"):
        hit = np.where(weight != 0, agreeing / weight, np.nan)
    return pd.DataFrame(
        {
            "core": np.asarray(cores, dtype=object)[core_id[starts]],
            "beds": counts,
            "agreement_beds": agree.astype(float),
            "agreement_thickness": hit,
        }
    )


def _labels_read(labels, codes: dict):
    """``(labelled, text, others)`` of an interpreter's column: per bed, whether its label,
    stripped and in upper case, is a key of ``codes``, and the tract that names (an object
    array); and the labels given that name no tract, sorted. Each distinct label is read
    once, by the same pandas text methods (a million beds hold a handful of labels)."""
    import numpy as np
    import pandas as pd

    ids, distinct = pd.factorize(labels, use_na_sentinel=True)  # -1: missing
    upper = pd.Series(distinct).astype(str).str.strip().str.upper()
    given = (upper != "").to_numpy(dtype=bool)
    labelled = given & upper.isin(list(codes)).to_numpy(dtype=bool)
    others = sorted(set(upper[given & ~labelled]))
    text = np.append(upper.map(codes).to_numpy(dtype=object), None)
    return np.append(labelled, False)[ids], text[ids], others


class _Written:
    """What the summary needs of the parts written: the first cores (those the text
    lists), every core's counts, the agreement with the interpreter's column and,
    where an output needs every core at once, the parts themselves."""

    def __init__(self, labels: str, keep: bool):
        from faciesseq.novelty import DecodedBeds

        self.labels, self.keep = labels, keep
        self.heads, self.wells, self.agreements, self.parts = [], [], [], []
        self.labels_found = False  # whether any part's beds hold the labels column
        self.clamped = 0  # beds held to their label (--keep-labels)
        self.beds = DecodedBeds()  # set beside the training beds at the end

    def add(self, part) -> None:
        from faciesseq.cli._summary import WELL_LIMIT
        from faciesseq.interpretation import CLAMPED

        wanted = WELL_LIMIT - sum(len(h) for h in self.heads)
        if wanted > 0 or not self.heads:  # a head of none would keep the part's text alive
            self.heads.append(part.head(wanted))
        self.wells.append(part.wells)
        if len(part.wells):
            self.beds.add(part.beds, str(part.wells["units"].iloc[0]))
        if CLAMPED in part.beds.columns:  # held to their labels: they agree by force
            self.clamped += int(part.beds[CLAMPED].sum())
        else:
            self.agreements.append(_agreement(part, self.labels))
        self.labels_found |= self.labels in part.beds.columns
        self.parts += [part] if self.keep else []

    def summary(self):
        """``(head, wells, agreement)``: the first cores as one interpretation, every
        core's row of ``Interpretation.wells``, the agreement table (or None)."""
        import pandas as pd

        from faciesseq.interpretation import Interpretation

        found = [a for a in self.agreements if a is not None]
        agreement = pd.concat(found, ignore_index=True) if found else None
        return Interpretation.concat(self.heads), pd.concat(self.wells), agreement


def write_output(parts, out: Path, fmt: str, labels: str, extra=None, check=None) -> _Written:
    """Write the tables of each decoded part as it comes into a new folder, swapped in
    for ``out`` once every part is written (nothing is left half-written or replaced
    on failure). ``extra(interp, folder)``, where given, writes what needs every core
    at once (then the parts are kept and joined); ``check(written)``, where given, may
    refuse what was decoded before the folder is swapped in."""
    from faciesseq._output import new_folder
    from faciesseq.report import exports

    fmt = "csv" if fmt == "las" else fmt
    written = _Written(labels, keep=extra is not None)
    with new_folder(out) as temp:
        tables: dict[str, _Table] = {}
        for part in parts:
            record = probability_record(part)
            names = ["tops.csv", *(f"{name}.{fmt}" for name in ("tops", *_TABLES))]
            for name in names:
                tables.setdefault(name, _Table(temp / name, name.split(".")[1], record))
            tops = exports.tops_table(part)
            for name in dict.fromkeys(names[:2]):
                tables[name].add(tops)
            for name, make in _TABLES.items():
                make = _CSV_TABLES.get(name, make) if fmt == "csv" else make
                tables[f"{name}.{fmt}"].add(make(part))
            written.add(part)
        for table in tables.values():
            table.close()
        if check is not None:
            check(written)
        agreement = written.summary()[2]
        if agreement is not None:
            _write_table(agreement, temp / f"agreement.{fmt}", fmt)
        if extra is not None:
            from faciesseq.interpretation import Interpretation

            extra(Interpretation.concat(written.parts), temp)
    return written


#: The tables written from each decoded part, by name.
def _tracts_table(part):
    """The tracts table of a part, with the ``clamped`` column of ``--keep-labels``."""
    from faciesseq.interpretation import CLAMPED

    table = part.tracts_table()
    if CLAMPED in part.beds.columns:
        table.insert(table.columns.get_loc("tract") + 1, CLAMPED, part.beds[CLAMPED].to_numpy())
    return table


_TABLES = {
    "tracts": _tracts_table,
    "surfaces": lambda part: part.surfaces_table(),
    "picks": lambda part: part.picks_table(),
}

#: The tables whose CSV text is written from categorical text columns (the same text;
#: each distinct text laid out once, not millions of texts made and encoded again).
_CSV_TABLES = {"surfaces": lambda part: part.surfaces_table(categorical=True)}


def _extra_outputs(args, scheme, tract_model, samples):
    """The writer of the outputs that need every core at once (samples, LAS files,
    strip logs, the review sheet, the view), or None where none is asked for."""
    wanted = (samples is not None, args.format == "las", args.plot, args.review_sheet, args.view)
    if not any(wanted):
        return None

    def _sheet_scheme(folder: Path) -> str | None:
        """The scheme file the sheet records for the next fit: ``--scheme``, or the
        model's own written as OUT/scheme.yaml (a model file is no scheme file)."""
        if args.scheme:
            return str(Path(args.scheme).resolve())
        if scheme is None:
            return None
        import yaml

        text = yaml.safe_dump(scheme.to_dict(), sort_keys=False, allow_unicode=True)
        (folder / "scheme.yaml").write_text(text, encoding="utf-8")
        return str(Path(args.output).resolve() / "scheme.yaml")

    def write(interp, folder: Path) -> None:
        from faciesseq.report import exports

        record = probability_record(interp)
        fmt = "csv" if args.format == "las" else args.format
        if samples is not None:
            table = exports.samples_table(interp, samples)
            _write_table(table, folder / f"samples.{fmt}", fmt, record)
        if args.format == "las":
            exports.write_las_files(
                interp, folder / "las", step=args.las_step, scheme=scheme, tract_model=tract_model
            )
        if args.plot:
            _write_strip_logs(interp, folder / "striplogs", scheme, tract_model)
        if args.review_sheet:  # the review sheet, for `faciesseq relabel`
            from faciesseq.review import write_sheet

            model = str(Path(args.model).resolve())
            write_sheet(interp, folder, args.labels, model=model, scheme=_sheet_scheme(folder))
        if args.view:
            from faciesseq.report.view import view_html

            html = view_html(interp, scheme, tract_model)
            (folder / "view.html").write_text(html, encoding="utf-8")

    return write


def _write_strip_logs(interp, figures: Path, scheme, tract_model) -> None:
    from faciesseq.io.writer import FileStems
    from faciesseq.report.striplog import strip_log
    from faciesseq.report.style import missing_glyphs_once

    figures.mkdir()
    stems = FileStems()
    with missing_glyphs_once():  # one line for every figure, not one per character
        for core in interp:
            name = stems(core.core)
            strip_log(
                core,
                scheme,
                tract_model,
                figures / f"{name}.png",
                checked=interp.probabilities_checked,
            )


def _model(args: argparse.Namespace):
    """The model and the facies scheme in force (``--scheme`` or the model's)."""
    from faciesseq._output import check_target
    from faciesseq.hmm.modelfile import load_model

    check_target(args.output, force=args.force, folder=True, inputs=input_files(args))
    n_jobs, scheduler = parallel_options(args)
    model = load_model(require_file(args.model)).set_params(n_jobs=n_jobs, scheduler=scheduler)
    read_in_models_units(args, model)
    scheme = scheme_for_model(args.scheme, model)
    if args.plot and scheme is None:
        raise ConfigError("--plot needs a facies scheme (--scheme, or a model fitted with one)")
    return model, scheme


def _reading_scheme(scheme):
    """The scheme the source's facies codes are read with: its aliases resolved, and a
    code outside it (or outside the ranks suggested from the model's training cores)
    decoded as a facies never seen in training (one warning line, no rank), not refused:
    a model fitted with a scheme or without one decodes the same cores."""
    return None if scheme is None else scheme.admitting_other_codes()


def _read(args: argparse.Namespace, model, scheme, places: _UnseenPlaces | None = None):
    """The successions of the cores read whole, and whether any core was read in the
    samples layout; the first place of each facies code the model never saw noted in
    ``places``."""
    source = read_source(args, _reading_scheme(scheme)).require_valid()
    chosen = _Chosen(args)
    source = chosen(source)
    chosen.check()
    cores = regular_cores(source, "decode", args.keep_irregular)
    if places is not None:
        places.add(cores)
    step = model.grid_step(cores.units)
    check_grid_size(cores, model.unit_, step, option="the model's grid step")
    successions = cores.succession_table(model.unit_, step)
    if not len(successions):
        raise ConfigError("the source holds no beds to decode", file=args.source)
    sampled = "samples" in dict(cores.meta.get("layout", {})).values()
    return successions, sampled


#: Grid cells from which decode says, before it starts, how long it may take.
LONG_GRID_CELLS = 1_000_000
#: Seconds a grid cell took to decode: 1.08 million cells (the demo cores at a 1 mm
#: step) in 24 s on 2 cores, --jobs 1 (2026-12-04). The recursions step through the
#: cells of a batch's longest core one at a time, so long cores are the slow case.
SECONDS_PER_CELL = 22e-6


def _with_progress(parts, model, successions):
    """``parts`` as they are decoded; on a fine grid (:data:`LONG_GRID_CELLS` cells or
    more) one line first saying how long it may take, then the cells decoded so far
    (on a terminal), so that a long decode is never a silent one."""
    from faciesseq.cli._hmm import Progress

    total = len(successions.beds)
    if model.unit_ != "grid" or total < LONG_GRID_CELLS:
        yield from parts
        return
    seconds = total * SECONDS_PER_CELL
    took = f"{seconds:.0f} s" if seconds < 90 else f"{seconds / 60:.0f} min"
    sys.stderr.write(
        f"faciesseq decode: {total:,} grid cells of {model.grid_step(successions.units):g} "
        f"{successions.units} to decode: about {took} at {SECONDS_PER_CELL * 1e3:.3f} ms a "
        "cell (measured on 2 cores, --jobs 1); a model fitted with a larger step is faster\n"
    )
    progress, done = Progress("faciesseq decode", total), 0
    try:
        for part in parts:
            done += len(part.beds)
            progress.count(done, "grid cells decoded")
            yield part
    finally:
        progress.close()


class _UnseenPlaces:
    """The first place of each facies code the model never saw in training, gathered
    from the cores as they are read (before their intervals become beds, which keep no
    data row): core and depth, and the data row (and file of a folder) where the
    reader kept them, as ``check`` and ``fit`` name a bad row."""

    def __init__(self, model, source: str) -> None:
        from faciesseq.novelty import seen_facies

        self.seen = seen_facies(model)
        self.source = source
        #: code -> the keywords of :func:`faciesseq.errors.where` naming its first place
        self.first: dict[str, dict] = {}

    def add(self, cores) -> None:
        """Note the first interval of each unseen code of ``cores`` not noted yet."""
        import numpy as np
        import pandas as pd

        new = _unseen(cores, [*self.seen, *self.first])
        if not new.any():
            return
        facies = np.asarray(cores.column("facies"))
        table = cores.to_frame(provenance=True)[new]
        table = table.assign(code=facies[new].astype(str)).drop_duplicates("code")
        for row in table.to_dict("records"):
            file, data_row = row.get("_file"), row.get("_row")
            if pd.isna(file) or Path(str(file)) == Path(self.source):
                file = None  # the source itself: named where it is one of a folder's files
            # kept unformatted: the finding names at most ten codes
            self.first[row["code"]] = dict(
                file=file,
                row=None if pd.isna(data_row) else int(data_row),
                core=str(row["core"]),
                depth=float(row["top"]) if "top" in row else None,
                units=cores.units,
            )


def _unseen(cores, known: list[str]):
    """Where the facies code of an interval of ``cores``, as ``str`` writes it, is not in
    ``known``, as a boolean array; each distinct code converted and looked up once (a
    million codes converted one by one took 0.3 s of ``decode``)."""
    import numpy as np

    ids, distinct = _facies_ids(cores)
    new = ~np.isin(np.asarray(distinct, dtype=object).astype(str), known)
    new = np.append(new, False)[ids]
    missing = np.flatnonzero(ids < 0)
    if len(missing):  # None or NaN: as ``str`` writes each
        facies = np.asarray(cores.column("facies"))
        new[missing] = ~np.isin(facies[missing].astype(str), known)
    return new


def _facies_ids(cores):
    """``(ids, distinct)`` of the facies codes of every interval of ``cores`` (-1: missing):
    the categorical column's own codes and categories where the cores are one table,
    instead of ``pandas.factorize`` of an object array of millions of codes made from it."""
    import numpy as np
    import pandas as pd

    from faciesseq.core import CoreTable

    if isinstance(cores.cores, CoreTable):
        column = cores.cores.table["facies"]
        if isinstance(column.dtype, pd.CategoricalDtype):
            return column.cat.codes.to_numpy(), np.asarray(column.cat.categories, dtype=object)
    return pd.factorize(np.asarray(cores.column("facies")))


def _one_form(name: str) -> str:
    """``name`` in Unicode's composed form (NFC), as two spellings of one name compare."""
    import unicodedata

    return unicodedata.normalize("NFC", name)


class _Chosen:
    """The cores of ``--core`` (every core where it is not given), taken from each core
    set or batch of whole cores read; :meth:`check` refuses the names none held."""

    def __init__(self, args: argparse.Namespace) -> None:
        self.source = args.source
        # an accented name typed in the other Unicode form than the source's is the same name
        self.wanted = dict.fromkeys(_one_form(n) for n in args.core or ())
        self.seen: list[str] = []  # every core read, to list beside a name not found

    def __call__(self, cores):
        if not self.wanted:
            return cores
        self.seen += cores.names
        return cores.subset([n for n in cores.names if _one_form(n) in self.wanted])

    def check(self) -> None:
        seen = {_one_form(n) for n in self.seen}
        missing = [n for n in self.wanted if n not in seen]
        if missing:
            shown = ", ".join(self.seen[:10]) + (" ..." if len(self.seen) > 10 else "")
            raise ConfigError(
                f"--core: no core {', '.join(map(repr, missing))} in the source (its cores: "
                f"{shown or 'none'})",
                file=self.source,
            )


class _Streamed:
    """The successions of SOURCE a batch of whole cores at a time (beds or intervals: a grid's
    size is checked on every core first); the irregular cores are named at the end."""

    def __init__(self, args: argparse.Namespace, stream, places: _UnseenPlaces | None = None):
        self.args, self.stream, self.places = args, stream, places
        self.left_out: list[str] = []

    def tables(self, model):
        from faciesseq.markov.screening import leave_out_irregular

        beds = 0
        chosen = _Chosen(self.args)
        for batch in self.stream:
            batch = chosen(batch)
            screening = leave_out_irregular(batch)
            self.left_out += screening.left_out
            cores = batch if self.args.keep_irregular else screening.kept
            if not len(cores):  # none of --core's names in it, or only irregular cores
                continue
            if self.places is not None:
                self.places.add(cores)
            table = cores.succession_table(model.unit_, model.grid_step(cores.units))
            beds += len(table.beds)
            yield table
        chosen.check()
        if not beds:
            raise ConfigError("the source holds no beds to decode", file=self.args.source)

    def announce(self, scheme) -> None:
        from faciesseq.markov.screening import Screening

        screening = Screening(self.stream.summary(), tuple(self.left_out), ())
        say_irregular(screening, "decode", self.args.keep_irregular)
        announce(self.args, self.stream.summary(), scheme)


def _overall_agreement(agreement) -> float | None:
    if agreement is None:
        return None
    w = agreement["beds"]
    return float((agreement["agreement_beds"] * w).sum() / w.sum())


def _labelled_in_fit(model, agreement) -> list[str] | None:
    """The cores of the agreement that were labelled in the model's own fit (their beds
    held to those labels there, so agreeing with them tests nothing: a new user read 100 %
    on the training cores as the model's accuracy); None where the model file does not
    say which cores held labels (an older file) or the fit had none."""
    labelled = getattr(model, "labelled_cores_", None)
    if not getattr(model, "n_labelled_", 0) or not labelled:
        return None
    return [c for c in agreement["core"] if c in set(labelled)]


def _fitted_on(model, agreement) -> str:
    """The words the agreement line adds for :func:`_labelled_in_fit`."""
    seen = _labelled_in_fit(model, agreement)
    if not seen:
        return ""
    which = "all of these cores" if len(seen) == len(agreement) else f"{len(seen)} of these cores"
    return (
        f"; {which} labelled in the model's fit: agreement with its own training labels, "
        "not a test (faciesseq validate cross-validates by core)"
    )


def _print_text(args, model, scheme, written: _Written) -> None:
    from faciesseq.cli._summary import print_summary
    from faciesseq.core import row_word
    from faciesseq.hmm.cautions import fit_cautions

    head, wells, agreement = written.summary()
    print(
        f"decoded {len(wells)} core(s), {int(wells['beds'].sum())} "
        f"{row_word(model.unit_)}; "
        f"{int(wells['picks'].sum())} surface pick(s); "
        f"log-likelihood {sum(wells['log_likelihood'].tolist()):.3f}"
    )
    print_summary(head, scheme, "see the output files", total=len(wells))
    if args.keep_labels:
        print(
            f"kept the tracts of {written.clamped} labelled bed(s) of the {args.labels!r} column "
            "(clamped, --keep-labels: 'clamped' in the tracts table); the others decoded "
            "around them"
        )
    elif agreement is not None:
        print(
            f"agreement with the interpreter's {args.labels!r} column: "
            f"{100 * _overall_agreement(agreement):.1f} % of {int(agreement['beds'].sum())} "
            f"labelled beds in {len(agreement)} core(s)" + _fitted_on(model, agreement)
        )
    for caution in fit_cautions(model):
        print(f"{caution} (the model's own fit)")
    shown = "csv, and LAS files in las/" if args.format == "las" else args.format
    print(f"written to {args.output}/ (tracts, surfaces, picks, tops as {shown})")


def _print_json(args, model, scheme, written: _Written) -> None:
    from faciesseq.cli._summary import print_json, rounded, summary_document
    from faciesseq.interpretation import Interpretation

    agreement = written.summary()[2]
    doc = summary_document(
        Interpretation.concat(written.parts),
        scheme,
        "decode",
        output=str(args.output),
        format=args.format,
        agreement=rounded(_overall_agreement(agreement)),
    )
    if args.keep_labels:  # held to their labels: no agreement to report, the count instead
        doc["clamped_beds"] = written.clamped
    elif agreement is not None:
        seen = _labelled_in_fit(model, agreement)
        if seen is not None:  # the cores whose agreement tests nothing, as the text says
            doc["agreement_cores_labelled_in_fit"] = seen
    print_json(doc)


def _samples(args: argparse.Namespace):
    """The source's sample rows for ``samples.<fmt>`` (None for the interval layout)."""
    from faciesseq.io.samples import read_samples

    names = ("layout", "units", "sheet", "table", "query", "curve")
    options = {k: getattr(args, k) for k in names}
    return read_samples(args.source, columns=column_mapping(args.column), **options)


def _memory_habits() -> None:
    """How this process takes memory, where the user chose nothing else: Arrow's
    jemalloc pool where the build has one (``ARROW_DEFAULT_MEMORY_POOL`` otherwise),
    and numpy's large arrays on ordinary pages (``NUMPY_MADVISE_HUGEPAGE`` otherwise).
    The streamed decode makes and drops buffers part after part: the default Arrow pool
    (mimalloc) keeps handing them back to the system, and every fresh huge page of a
    numpy array is 2 MiB zeroed by the kernel. At 10^6 beds (paired runs) the CPU time
    was 0.87 of it with jemalloc, and 0.90 of that on ordinary pages; outputs the same.
    Freed memory is kept for the next part's buffers: by jemalloc for 10 s, by glibc's
    allocator (:func:`faciesseq._memory.keep_freed_memory`); at 10^6 beds about 470,000
    page faults fell to 260,000 (single runs), each a page zeroed by the kernel."""
    import contextlib
    import os

    import numpy as np
    import pyarrow as pa

    from faciesseq._memory import keep_freed_memory

    if not os.environ.get("ARROW_DEFAULT_MEMORY_POOL"):
        with contextlib.suppress(NotImplementedError, pa.ArrowNotImplementedError):
            pa.set_memory_pool(pa.jemalloc_memory_pool())  # else the build's default pool
            # freed pages kept 10 s for the next part's buffers, not handed back at once
            pa.jemalloc_set_decay_ms(_ARROW_DECAY_MS)
    if "NUMPY_MADVISE_HUGEPAGE" not in os.environ:
        advise = getattr(np._core.multiarray, "_set_madvise_hugepage", None)
        if advise is not None:
            advise(False)
    keep_freed_memory()


#: How long Arrow's jemalloc pool keeps freed pages before handing them back to the system.
_ARROW_DECAY_MS = 10_000


def run(args: argparse.Namespace) -> int:
    from faciesseq.hmm.engine import single_thread_blas

    _memory_habits()
    # one BLAS thread for the whole command: its products are small, and an idle
    # OpenBLAS thread spins between them (about 1.5 s of CPU fewer at 10^6 beds)
    with single_thread_blas():
        return _run(args)


def _run(args: argparse.Namespace) -> int:
    from faciesseq.io import NotStreamable

    if args.las_step is not None and (args.format != "las" or not args.las_step > 0):
        raise ConfigError("--las-step takes a positive depth step, with --format las")
    model, scheme = _model(args)
    labels_given, args.labels = args.labels is not None, args.labels or "tract"
    labels = "interpreted_tract" if args.labels == "tract" else args.labels
    others = _attributes_used(args, model, labels)
    reading = _reading_scheme(scheme)
    streamable = model.unit_ != "grid" and not args.keep_labels  # the labels: read whole
    stream = stream_source(args, reading, others) if streamable else None
    with warnings_to_stderr("decode"):
        from faciesseq.hmm.encoding import UnseenCategoryWarning

        # facies and contact types never seen in training: one line each for every core
        # at the end (below)
        warnings.filterwarnings(
            "ignore", r"core .*: (facies|contact type) \[", UnseenCategoryWarning
        )
        written, sampled_source = None, False
        places = _UnseenPlaces(model, args.source)
        if stream is not None:
            streamed = _Streamed(args, stream, places)
            parts = model.decode_stream(streamed.tables(model))
            try:
                written = _write(args, model, scheme, parts, labels, sampled=False)
            except NotStreamable:
                pass  # read whole below
            else:
                streamed.announce(scheme)
        if written is None:
            places = _UnseenPlaces(model, args.source)  # afresh: the cores read again
            successions, sampled_source = _read(args, model, scheme, places)
            if args.keep_labels:
                kept = _kept_labels(successions, model, args.labels)
                parts = model.decode_parts(successions, labels=kept)
            else:
                parts = model.decode_parts(successions)
            parts = _with_progress(parts, model, successions)
            written = _write(args, model, scheme, parts, labels, sampled_source)
        written.beds.first_places = places.first
        written.beds.sampled = sampled_source
        for finding in written.beds.findings(model):
            warnings.warn(finding, stacklevel=1)
        if labels_given and not written.labels_found and not args.keep_labels:
            warnings.warn(
                f"no column {args.labels!r} in the source to compare the decoded tracts with "
                "(--labels); no agreement reported",
                stacklevel=1,
            )
    if args.summary == "json":
        _print_json(args, model, scheme, written)
    else:
        _print_text(args, model, scheme, written)
    if args.review_sheet:
        from faciesseq.review import sheet_note

        stream = sys.stderr if args.summary == "json" else sys.stdout
        print(sheet_note(Path(args.output)), file=stream)
    return 0


def _kept_labels(successions, model, column: str) -> list[list[str | None]]:
    """The labels of ``column`` a decode with ``--keep-labels`` clamps, per succession
    (``None`` where a bed is free), and a ``clamped`` column added to the beds.

    The clamp is the one a fit with labels makes
    (:func:`~faciesseq.hmm.labels.clamp_from_labels`, which warns of a labelled
    boundary the model's graph does not allow and frees its two beds); the beds it
    holds are handed to the decode as labels, which clamps them again, and no more."""
    import numpy as np

    from faciesseq.hmm.labels import DECODE_REMEDY, clamp_from_labels
    from faciesseq.interpretation import CLAMPED

    clamp, _ = clamp_from_labels(list(successions), column, model.tract_model_, DECODE_REMEDY)
    held = clamp.sum(axis=1) == 1
    tracts = np.asarray(model.tract_model_.order, dtype=object)
    label = np.where(held, tracts[np.argmax(clamp, axis=1)], None)
    successions.beds[CLAMPED] = held
    return [list(x) for x in np.split(label, np.cumsum(successions.lengths)[:-1])]


def _attributes_used(args: argparse.Namespace, model, labels: str) -> set[str] | None:
    """The bed attributes a decode with these options reads (the model's features, the
    interpreter's column), or None (every column) where an output shows the beds'
    attributes (LAS files, strip logs, the review sheet, the view, the JSON summary).
    The other columns of a streamed file are not converted: nothing written shows them."""
    if args.format == "las" or args.plot or args.review_sheet or args.view:
        return None
    if args.summary != "text":
        return None
    return {*model.features_, labels}


def _write(args, model, scheme, parts, labels: str, sampled: bool) -> _Written:
    """The decoded ``parts`` written into OUT (see :func:`write_output`)."""
    samples = _samples(args) if sampled else None  # no second read for intervals
    extra = _extra_outputs(args, scheme, model.tract_model_, samples)
    if extra is None and args.summary == "json":
        extra = lambda interp, folder: None  # noqa: E731  (keep the parts for the summary)
    return write_output(
        parts, Path(args.output), args.format, labels, extra, lambda w: _foreign(args, model, w)
    )


def _foreign(args: argparse.Namespace, model, written: _Written) -> None:
    """Refuse cores none of whose facies the model saw in training (nothing written)."""
    from faciesseq.errors import InputError
    from faciesseq.novelty import foreign_facies

    why = foreign_facies(written.beds, model)
    if why is not None:
        raise InputError(why, file=args.source)
