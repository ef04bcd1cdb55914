"""``faciesseq relabel SHEET SOURCE -o labelled.csv``: a geologist's corrections as labels."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from faciesseq.cli._common import (
    add_output_arguments,
    add_source_arguments,
    input_files,
    load_scheme_option,
    read_source,
    require_file,
)
from faciesseq.errors import some_of

EXAMPLES = """\
examples:
  faciesseq decode model.json cores.csv --review-sheet -o decoded
  faciesseq relabel decoded/sheet.xlsx cores.csv -o labelled.csv
  faciesseq fit labelled.csv --scheme my-scheme.yaml --labels tract -o model-2.json
  faciesseq relabel sheet.csv cores.csv --labels interpreted -o labelled.csv --force
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "relabel",
        help="put a geologist's tracts from a filled review sheet on the source; "
        "write a labelled table to fit on",
        description="Read an interpretation sheet written by `faciesseq decode --review-sheet` "
        "and filled in by a geologist (CSV or XLSX) and the SOURCE it was decoded from. Every "
        "source interval of a sheet bed takes the bed's geologist_tract where that cell is "
        "filled; elsewhere the source's label is kept. Writes the source table with the label "
        "column filled and a label_source column (the sheet's file name, or 'source' for a "
        "kept label), which `faciesseq fit --labels` records in the model file. Prints the "
        "beds relabelled per core, the cores now labelled and the model's agreement with the "
        "geologist before refitting, and the fit to run next (with the scheme the sheet's "
        "decode read, recorded in the sheet). The sheet's notes go in a review_note column, "
        "shown again in the next sheet. A sheet bed that matches no source interval, a tract "
        "code not in the tract model, a sheet whose decoded_tract column was edited (write "
        "in geologist_tract) and a sheet with nothing edited are errors (exit 1, nothing "
        "written); so is a SOURCE read in other depth units than the sheet's, its record's "
        "(exit 2). The label column and the tract codes default to those the sheet's record "
        "line names (its decode's --labels and the model's tracts); a damaged record line "
        "is an error unless both options are given.",
        epilog=EXAMPLES,
    )
    parser.add_argument(
        "review_sheet", metavar="SHEET", help="the filled sheet (sheet.csv or sheet.xlsx of decode)"
    )
    add_source_arguments(parser)
    add_output_arguments(
        parser, "FILE", "labelled table to write (.csv, .tsv, .xlsx, .parquet)", required=True
    )
    parser.add_argument(
        "--labels",
        metavar="COLUMN",
        help="label column of the source to fill, created where absent (default: the "
        "column the sheet's record names, the --labels of its decode; tract for a sheet "
        "without a record)",
    )
    parser.add_argument(
        "--tracts",
        metavar="FILE",
        help="tract-model YAML whose codes geologist_tract may hold (default: the tracts "
        "of the model the sheet's record names; the four tracts for a sheet without them)",
    )
    parser.set_defaults(func=run)


def _check_units(sheet_units: str | None, units: str, args: argparse.Namespace, file: str) -> None:
    """Refuse a source read in other units than the sheet's depths (its record's, the
    units its decode read): its depths matched the sheet's as numbers and the labelled
    table stated the other unit (``--units m`` on a sheet decoded in feet), or none
    matched and the error asked whether the sheet was decoded from SOURCE."""
    from faciesseq.errors import ConfigError

    if sheet_units is None or sheet_units == units:
        return
    why = "--units" if args.units else "as it states them"
    raise ConfigError(
        f"the sheet's depths are in {sheet_units} (the units its decode read, as its record "
        f"says), SOURCE is read in {units} ({why}): give --units {sheet_units}, or decode "
        f"again with --units {units} for a sheet in {units}",
        file=file,
    )


def _model_document(model_path: str) -> dict | None:
    """The model file as JSON (read once for the two questions asked of it below), or
    None where it cannot be read."""
    import json

    try:
        doc = json.loads(Path(model_path).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return doc if isinstance(doc, dict) else None


def _fitted_units(doc: dict | None) -> str | None:
    """The depth units the model (its file as JSON, :func:`_model_document`) was fitted
    on, as :func:`faciesseq.cli._common.read_in_models_units` takes them for decode;
    ``None`` for a model file without them or unreadable (metres assumed, as there)."""
    training = (doc or {}).get("training")
    units = training.get("units") if isinstance(training, dict) else None
    return units if units in ("m", "ft") else None


def _fitted_scheme(model_path: str, doc: dict | None) -> str | None:
    """The scheme file the model at ``model_path`` was fitted with, where it still
    exists unchanged, or None (no such file, changed since, a fit without a scheme
    file, a model file unreadable or made before its inputs were recorded).

    The model file records the digest of every file the fit read under the path the
    fit was given (``training.input_hashes``), relative to the folder it ran in; a
    path is looked for from that folder (where the fit's ``-o`` was relative and led to
    the model file), from here and beside the model, and taken where the file there
    holds the recorded bytes and is a scheme with the model's facies codes."""
    from faciesseq.errors import FaciesseqError
    from faciesseq.hmm.modelfile import file_digest
    from faciesseq.scheme import load_scheme

    model = Path(model_path)
    try:
        digests = dict(doc["training"]["input_hashes"])
        codes = [f["code"] for f in doc["scheme"]["facies"]]
        source = doc["training"].get("source")
        command = [str(w) for w in (doc.get("provenance") or {}).get("command") or []]
    except (OSError, ValueError, KeyError, TypeError):
        return None
    folders = [Path.cwd(), model.parent]
    output = _option(command, "-o", "--output")
    if output and not Path(output).is_absolute() and model.resolve().match(output):
        # the fit ran where its relative -o led to the model file
        folders.insert(0, model.resolve().parents[len(Path(output).parts) - 1])
    for given, digest in digests.items():
        if given == source or not given.endswith((".yaml", ".yml")):
            continue
        for folder in folders:
            candidate = folder / given
            try:
                if not candidate.is_file() or file_digest(candidate) != digest:
                    continue
                if list(load_scheme(candidate).codes) == codes:
                    return str(candidate.resolve())
            except (OSError, FaciesseqError):
                continue
    return None


def _option(words: list[str], *names: str) -> str | None:
    """The value of the first of ``names`` in a command (``--name VALUE`` or
    ``--name=VALUE``), or None."""
    for k, word in enumerate(words):
        for name in names:
            if word == name and k + 1 < len(words):
                return words[k + 1]
            if word.startswith(name + "=") and name.startswith("--"):
                return word.split("=", 1)[1]
    return None


def _sheet_model(record: dict | None) -> dict | None:
    """The model file the sheet's record names, as JSON (:func:`_model_document`), read
    once for the questions :func:`_next_scheme` and :func:`_training_cores_left_out`
    ask of it; None where the record names none or it cannot be read."""
    model = (record or {}).get("model", "none")
    return _model_document(model) if model != "none" else None


def _next_scheme(
    args: argparse.Namespace, record: dict | None, doc: dict | None
) -> tuple[str | None, str]:
    """The scheme file the next fit takes, and what it is: ``--scheme``; else the
    ``--scheme`` the sheet's decode read (its record), a geologist's file; else the file
    the sheet's model (``doc``, :func:`_sheet_model`) was fitted with, where it still
    exists unchanged; else the copy of the model's scheme the decode wrote in its output
    folder (which a decode with ``--force`` into that folder replaces); else none."""
    if args.scheme:
        return args.scheme, "--scheme"
    record = record or {}
    scheme, model = record.get("scheme", "none"), record.get("model", "none")
    if scheme != "none" and not _decode_copy(scheme):
        return scheme, "the --scheme of the sheet's decode, its record"
    fitted = _fitted_scheme(model, doc) if doc is not None else None
    if fitted is not None:
        return fitted, f"the file the model was fitted with, as {Path(model).name} records it"
    if scheme == "none":
        return None, "none"
    why = (
        "the file the model was fitted with is not found, or has changed since"
        if _fitted_with_file(doc)
        else "the model was fitted without a scheme file"
    )
    return scheme, (
        f"the copy of the model's scheme its decode wrote, as {why}; a decode with --force "
        "into that folder replaces it: keep a copy elsewhere"
    )


def _decode_copy(scheme: str) -> bool:
    """Whether a scheme file of a sheet's record is the copy of the model's scheme that
    decode writes in its output folder (``OUT/scheme.yaml`` beside ``OUT/tracts.csv``)."""
    path = Path(scheme)
    return path.name == "scheme.yaml" and (path.parent / "tracts.csv").is_file()


def _fitted_with_file(doc: dict | None) -> bool:
    """Whether the model (its file as JSON, :func:`_model_document`) was fitted with a
    scheme file (not with ranks suggested from the data); True where the model file
    cannot be read (then the file is said not found, not that there was none)."""
    try:
        return doc["scheme"].get("name") != "ranks suggested from the data"
    except (KeyError, TypeError, AttributeError):
        return True


def _next_fit(args: argparse.Namespace, result, scheme: str | None) -> str:
    """The ``fit`` command to run next on the labelled table: the options of this run
    that the fit needs too (the scheme, the tract model; the table written holds its
    units and the columns under their roles, so no reading option is needed). Without
    ``--scheme``, the scheme of :func:`_next_scheme`: a fit without one would rank the
    facies from the data instead of the scheme the model was fitted with."""
    import shlex

    words = ["faciesseq", "fit", args.output]
    if scheme is not None:
        words += ["--scheme", scheme]
    if args.tracts:
        words += ["--tracts", args.tracts]
    words += ["--labels", result.labels, "-o", _free_name("model")]
    return shlex.join(words)


def _free_name(stem: str) -> str:
    """``model.json``, or ``model-2.json``, ``model-3.json``... where the name is taken
    in the working folder, so that the fit suggested does not stop at an existing file
    (it refuses to replace one without --force)."""
    name, k = f"{stem}.json", 1
    while Path(name).exists():
        k += 1
        name = f"{stem}-{k}.json"
    return name


def _training_cores_left_out(doc: dict | None, cores) -> str | None:
    """A line where the sheet's model (``doc``, :func:`_sheet_model`) was fitted on cores
    the labelled table does not hold: the fit suggested would see only the table's cores
    (a review of one newly decoded core would otherwise refit on that core alone), or
    None."""
    try:
        trained = [str(c) for c in doc["training"]["cores"]]
    except (KeyError, TypeError):
        return None
    have = set(cores.names)
    missing = [c for c in trained if c not in have]
    if not missing:
        return None
    return (
        f"note: the model was fitted on {len(trained)} core(s), {len(missing)} of them not "
        f"in this table ({some_of(missing)}): the fit above reads only the {len(have)} "
        "core(s) here; to refit on all of them, give the fit one source holding both "
        "(the training table with these rows added, or a folder of the two files)"
    )


def _report(result, output: str, next_fit: str, scheme: tuple[str | None, str]) -> list[str]:
    n_filled, n_changed = sum(result.filled.values()), sum(result.changed.values())
    lines = [
        f"{result.sheet}: {n_filled} bed(s) given a tract by the geologist in "
        f"{len(result.filled)} core(s); {n_changed} relabelled (a new label or another "
        f"tract), {result.intervals_changed} source interval(s) changed"
    ]
    for core, n in result.filled.items():
        lines.append(f"  {core}: {result.changed[core]} relabelled of {n}")
    n_cores = len(result.cores)
    new = result.newly_labelled
    lines.append(
        f"cores labelled: {len(result.labelled_after)} of {n_cores}"
        + (f" ({len(new)} new: {', '.join(new)})" if new else "")
    )
    if result.agreement is None:
        lines.append("model's agreement with the geologist: - (no filled bed with a decoded tract)")
    else:
        u = result.cores.units
        lines.append(
            f"model's agreement with the geologist before refitting: "
            f"{100 * result.agreement:.1f} % of {result.agreement_thickness:.2f} {u} "
            f"({100 * result.agreement_beds:.1f} % of {n_filled} bed(s))"
        )
    if result.notes:
        lines.append(f"geologist's notes of {result.notes} bed(s) kept in 'review_note'")
    lines.append(
        f"written to {output} (labels in {result.labels!r}, origin in 'label_source'); "
        f"next: {next_fit}"
    )
    if scheme[0] is not None:
        lines.append(f"scheme of that fit: {scheme[0]} ({scheme[1]})")
    return lines


def run(args: argparse.Namespace) -> int:
    from faciesseq._output import check_target
    from faciesseq.cli._hmm import load_tracts_option
    from faciesseq.io import write_cores
    from faciesseq.review import (
        check_edits,
        read_sheet,
        relabel,
        relabel_settings,
        row_count_note,
    )
    from faciesseq.scheme import default_tract_model

    check_target(args.output, force=args.force, folder=False, inputs=input_files(args))
    tract_model = load_tracts_option(args.tracts)
    sheet = read_sheet(require_file(args.review_sheet))
    name = Path(args.review_sheet).name
    codes = tract_model.codes if tract_model else None
    settings = relabel_settings(sheet.attrs.get("record"), name, labels=args.labels, tracts=codes)
    sheet.attrs["record"] = settings.record  # a damaged one set aside checks nothing
    scheme = load_scheme_option(args.scheme)
    doc = _sheet_model(settings.record)
    # a source stating no units is read as the sheet's decode read it: in the units its
    # record names, else (a sheet of an older decode) in the model's, where its file is read
    args.unstated_units = settings.units or _fitted_units(doc)
    args.unstated_from = "the sheet's" if settings.units else "the model's"
    cores = read_source(args, scheme).require_valid()
    _check_units(settings.units, cores.units, args, name)
    result = relabel(sheet, cores, settings.tracts, file=name, labels=settings.labels)
    check_edits(sheet, name)  # after the sheet's beds are found in SOURCE: what is wrong first
    write_cores(result.cores, args.output)
    scheme_file = _next_scheme(args, settings.record, doc)
    next_fit = _next_fit(args, result, scheme_file[0])
    if scheme_file[0] is not None and not args.scheme and getattr(args, "settings_line", None):
        # the source was read without a scheme; the fit suggested takes one: say both
        args.settings_line += (
            f" (the source read without one); the fit below takes {scheme_file[0]}"
        )
    print("\n".join(_report(result, args.output, next_fit, scheme_file)))
    left_out = _training_cores_left_out(doc, result.cores)
    if left_out:
        print(left_out)
    rows_note = row_count_note(sheet)
    if rows_note:
        print(f"faciesseq relabel: {name}: {rows_note}", file=sys.stderr)
    if settings.record is None:
        what = f"a damaged record ({settings.damaged})" if settings.damaged else "no record"
        print(
            f"faciesseq relabel: {name} holds {what} of its decode (a sheet of an older "
            "decode, or its first line deleted or edited): its decoded_tract could not be "
            "checked, and the fit above names no scheme unless --scheme was given; give the "
            "fit the scheme the model was fitted with",
            file=sys.stderr,
        )
    if args.tracts is None and settings.tracts != default_tract_model().codes:
        print(
            f"faciesseq relabel: the sheet's model has the tracts {', '.join(settings.tracts)} "
            "(its record), not the four tracts: give the fit above the tract-model file the "
            "model was fitted with (--tracts FILE)",
            file=sys.stderr,
        )
    return 0
