"""``faciesseq demo``: the whole job on the bundled demo cores, ending in an appendix."""

from __future__ import annotations

import argparse
import sys

EXAMPLES = """\
examples:
  faciesseq demo
  faciesseq demo -o my-demo --latex
  faciesseq demo --force --surrogates 999
  faciesseq demo --force --jobs 2
"""


def register(subparsers) -> None:
    from faciesseq.cli._common import add_output_arguments
    from faciesseq.cli.appendix import add_appendix_arguments

    parser = subparsers.add_parser(
        "demo",
        help="run check, markov, fit, decode, validate and appendix on the bundled demo cores",
        description=(
            "Run the whole job on the bundled demo database (17 invented cores of the "
            "Quillerby Basin, some interpreted): check the data, compute the transition "
            "statistics, fit the tract model, decode every core, cross-validate against the "
            "interpreted cores and write the appendix. Progress goes to the terminal; the "
            "last lines say where the appendix and its figures are."
        ),
        epilog=EXAMPLES,
    )
    add_output_arguments(parser, "DIR", "folder to write", default="faciesseq-demo", old_out=True)
    add_appendix_arguments(parser)
    # The demo is read in a browser: the LaTeX version and its PDF figures
    # (embedding TrueType fonts, about as much CPU as the rest of the demo)
    # are written only on request.
    parser.add_argument(
        "--latex",
        dest="no_latex",
        action="store_false",
        help="also write appendix.tex and the PDF figures (skipped by default in the demo)",
    )
    parser.set_defaults(func=run, model=None, no_latex=True)


def run(args: argparse.Namespace) -> int:
    from faciesseq._output import check_target
    from faciesseq.cli.appendix import check_numbers, make
    from faciesseq.io import read_cores
    from faciesseq.pipeline import demo_source
    from faciesseq.scheme import load_scheme

    check_numbers(args)
    out = check_target(args.output, force=args.force, folder=True)
    folder = demo_source()
    args.source = str(folder / "cores.csv")
    args.scheme = str(folder / "scheme-shoreface.yaml")
    scheme = load_scheme(args.scheme)
    cores = read_cores(args.source, scheme=scheme)
    written, result = make(args, cores, scheme, out, args.force, extra_model=True)
    html = written / "appendix.html"
    pdf = "" if args.no_latex else ", and PDF for appendix.tex"
    sys.stdout.write(
        f"demo done: {len(cores)} cores of {folder / 'cores.csv'}\n"
        f"appendix: {html}\n"
        f"figures:  {written / 'figures'} ({len(result.appendix.figures())} PNG{pdf})\n"
        f"tables:   {written / 'tables'}\n"
        f"model:    {written / 'model.json'}\n"
        f"open {html.resolve().as_uri()} in a browser\n"
    )
    return 0
