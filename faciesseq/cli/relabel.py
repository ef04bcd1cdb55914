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
        "written). The label column and the tract codes default to those the sheet's record "
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


def _next_fit(args: argparse.Namespace, result, record: dict | None = None) -> str:
    """The ``fit`` command to run next on the labelled table: the options of this run
    that the fit needs too (the scheme, the tract model; the table written holds its
    units and the columns under their roles, so no reading option is needed). Without
    ``--scheme``, the scheme the sheet's decode read (its record): a fit without one
    would rank the facies from the data instead of the scheme the model was fitted with."""
    import shlex

    words = ["faciesseq", "fit", args.output]
    scheme = args.scheme or (record or {}).get("scheme", "none")
    if scheme != "none":
        words += ["--scheme", scheme]
    if args.tracts:
        words += ["--tracts", args.tracts]
    words += ["--labels", result.labels, "-o", "model.json"]
    return shlex.join(words)


def _report(result, output: str, next_fit: str) -> list[str]:
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
    return lines


def run(args: argparse.Namespace) -> int:
    from faciesseq._output import check_target
    from faciesseq.cli._hmm import load_tracts_option
    from faciesseq.io import write_cores
    from faciesseq.review import check_edits, read_sheet, relabel, relabel_settings
    from faciesseq.scheme import default_tract_model

    check_target(args.output, force=args.force, folder=False, inputs=input_files(args))
    tract_model = load_tracts_option(args.tracts)
    sheet = read_sheet(require_file(args.review_sheet))
    name = Path(args.review_sheet).name
    codes = tract_model.codes if tract_model else None
    settings = relabel_settings(sheet.attrs.get("record"), name, labels=args.labels, tracts=codes)
    sheet.attrs["record"] = settings.record  # a damaged one set aside checks nothing
    scheme = load_scheme_option(args.scheme)
    cores = read_source(args, scheme).require_valid()
    result = relabel(sheet, cores, settings.tracts, file=name, labels=settings.labels)
    check_edits(sheet, name)  # after the sheet's beds are found in SOURCE: what is wrong first
    write_cores(result.cores, args.output)
    next_fit = _next_fit(args, result, settings.record)
    print("\n".join(_report(result, args.output, next_fit)))
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
