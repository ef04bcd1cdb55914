"""``faciesseq correlate SOURCE --wells WELLS --model model.json -o OUT``: tie decoded surfaces."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from faciesseq.cli._common import (
    add_output_arguments,
    add_source_arguments,
    check_grid_size,
    input_files,
    read_in_models_units,
    read_source,
    require_file,
    scheme_for_model,
)
from faciesseq.cli._hmm import warnings_to_stderr
from faciesseq.errors import ConfigError

FIGURE_FORMATS = ("png", "svg", "pdf")

EXAMPLES = """\
examples:
  faciesseq fit demo_cores/cores.csv -o model.json
  faciesseq correlate demo_cores/cores.csv --wells demo_cores/wells.csv --model model.json -o corr
  faciesseq correlate cores.csv --wells wells.xlsx --model model.json --datum depth \\
      --figure-format pdf -o corr --force
  faciesseq correlate cores.csv --wells wells.csv --model model.json --view -o corr
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "correlate",
        help="tie decoded surfaces from well to well along sections; section figures",
        description="Decode every core of SOURCE with a model written by `faciesseq fit`, "
        "then tie each well's surface picks to its neighbours' along each section of the "
        "wells table (order-preserving alignment: same kinds only, no crossing ties, a "
        "surface may be absent where its tract pinches out). Writes OUT/correlation.csv "
        "(one row per pick of a correlated surface, with the tie's confidence), "
        "OUT/ties.csv, and one section figure per section. A correlation from cores alone "
        "is a hypothesis to test against seismic, biostratigraphy and well logs. An "
        "existing OUT is replaced as a whole with --force.",
        epilog=EXAMPLES,
    )
    add_source_arguments(parser)
    parser.add_argument(
        "--wells",
        required=True,
        metavar="WELLS",
        help="wells table (a file, a database's table 'wells', or a YAML source file with "
        "path: and table:): core (or name), distance (or x_km) or x and y; optional section, "
        "order, elevation, datum_depth",
    )
    parser.add_argument("--model", required=True, metavar="MODEL", help="model file from `fit`")
    add_output_arguments(parser, "OUT", "output folder", required=True)
    parser.add_argument(
        "--datum",
        default="MFS",
        help="hang the section on: a surface kind of the model (its correlated surface in most "
        "wells; the core tops, with a warning, in a section without one), a surface id (e.g. "
        "dip:MFS-2), depth, elevation or datum_depth",
    )
    parser.add_argument(
        "--figure-format", choices=FIGURE_FORMATS, default="png", help="section figure format"
    )
    parser.add_argument(
        "--view",
        action="store_true",
        help="also write OUT/section.html: the sections as one interactive page (hover a "
        "correlation line for its surface, depths, probabilities and confidence)",
    )
    parser.add_argument(
        "--doubtful",
        type=float,
        default=0.5,
        metavar="C",
        help="ties with a confidence below C are flagged doubtful",
    )
    parser.set_defaults(func=run)


def _decode(args):
    """Read the wells, the model and the cores; decode the cores on the wells table.
    ``args.datum`` is set to the datum as the project spells it (``mfs``: ``MFS``), and
    a datum read from the wells table is checked there, before any core is decoded."""
    from faciesseq.correlation.wells import check_wells, read_wells
    from faciesseq.hmm.modelfile import load_model
    from faciesseq.report.section import check_datum, check_datum_values
    from faciesseq.surfaces import surface_codes

    wells = read_wells(require_file(args.wells))
    model = load_model(require_file(args.model))
    args.datum = check_datum(args.datum, surface_codes(model.tract_model_), option="--datum")
    read_in_models_units(args, model)
    scheme = scheme_for_model(args.scheme, model)
    cores = read_source(args, scheme).require_valid()
    step = model.grid_step(cores.units)
    check_grid_size(cores, model.unit_, step, option="the model's grid step")
    wells, problems = check_wells(wells, cores.names, cores.units)
    if args.datum in ("elevation", "datum_depth"):
        check_datum_values(wells.frame, args.datum, option="--datum")
    for p in (*wells.problems, *problems):
        sys.stderr.write(f"faciesseq correlate: {p}\n")
    cores = cores.subset(list(wells.frame["core"]))
    with warnings_to_stderr("correlate"):
        interp = model.decode(cores.successions(model.unit_, step))
    return wells, cores, interp


def _write_view(path, corr, tracts, interp, args, wells, cores) -> None:
    from faciesseq._output import write_file
    from faciesseq.report.section_view import section_view_html

    html = section_view_html(
        corr,
        tracts,
        tuple(interp.tracts),
        title="Correlation",
        surface_order=tuple(interp.surfaces),
        datum=args.datum,
        units=cores.units,
        position_label=wells.position_label,
        note=f"Pick probabilities (from the model file): {interp.probabilities_note}",
    )
    write_file(path, html)


def run(args: argparse.Namespace) -> int:
    from faciesseq._output import check_target, new_folder
    from faciesseq.correlation import AlignmentOptions, correlate
    from faciesseq.correlation.wells import DEFAULT_SECTION, section_prefix
    from faciesseq.io.writer import FileStems
    from faciesseq.report.csvtext import MEASURES, csv_bytes
    from faciesseq.report.section import hang_section, hanging_datum, section_figure

    check_target(args.output, force=args.force, folder=True, inputs=input_files(args))
    if not 0 <= args.doubtful <= 1:
        raise ConfigError(f"--doubtful must lie between 0 and 1, got {args.doubtful}")
    wells, scheme_cores, interp = _decode(args)
    extents = {c.name: (c.top, c.base) for c in scheme_cores}
    corr = correlate(
        interp.picks_table(), extents, wells.frame, AlignmentOptions(doubtful=args.doubtful)
    )
    for message in (*corr.order_tied_messages(), *corr.untied_messages()):
        sys.stderr.write(f"faciesseq correlate: {message}\n")
    tracts = interp.tracts_table()
    out = Path(args.output)
    with new_folder(out) as temp:
        (temp / "correlation.csv").write_bytes(csv_bytes(corr.to_frame(), measures=MEASURES))
        (temp / "ties.csv").write_bytes(csv_bytes(corr.ties, measures=MEASURES))
        stems = FileStems()
        for section in sorted(corr.wells["section"].unique()):
            # one section without a name in the wells table: section.png, not section-section.png
            unnamed = section == DEFAULT_SECTION and corr.wells["section"].nunique() == 1
            stem = stems("section" if unnamed else f"section-{section}")
            datum, note = hanging_datum(corr, section, args.datum, option="--datum")
            if note:
                sys.stderr.write(f"faciesseq correlate: {note}\n")
            hanging = hang_section(corr, section, datum, tracts, option="--datum")
            for line in hanging.notes:
                sys.stderr.write(f"faciesseq correlate: {section_prefix(section)}{line}\n")
            section_figure(
                corr,
                section,
                tracts,
                temp / f"{stem}.{args.figure_format}",
                datum=datum,
                units=scheme_cores.units,
                position_label=wells.position_label,
                tract_order=tuple(interp.tracts),
                surface_order=tuple(interp.surfaces),
                hanging=hanging,
                datum_note=note or "",
            )
        if args.view:
            _write_view(temp / "section.html", corr, tracts, interp, args, wells, scheme_cores)
    ties = corr.ties
    n_order = int((ties["tied_by"] == "order").sum())
    print(
        f"correlated {len(corr.wells)} well(s) in {corr.wells['section'].nunique()} section(s): "
        f"{corr.picks['surface_id'].nunique()} surface(s), {len(ties)} tie(s), "
        f"{int(ties['doubtful'].sum())} doubtful"
        + (f" ({n_order} by the order of picks alone)" if n_order else "")
        + (f", {len(corr.untied_pairs)} pair(s) of wells untied" if len(corr.untied_pairs) else "")
    )
    extra = ", section.html" if args.view else ""
    print(f"written to {out}/ (correlation.csv, ties.csv, section figures{extra})")
    print(
        "A correlation from cores alone is a hypothesis to test against seismic, "
        "biostratigraphy and well logs."
    )
    return 0
