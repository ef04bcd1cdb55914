"""``faciesseq markov``: is the succession ordered, or could it be random?"""

from __future__ import annotations

import argparse
import sys

from faciesseq.cli._common import (
    add_irregular_argument,
    add_output_arguments,
    add_source_arguments,
    announce,
    check_grid_size,
    check_seed,
    check_surrogates,
    check_unit_step,
    input_files,
    load_scheme_option,
    read_source,
    stream_source,
)
from faciesseq.cli._parallel import add_parallel_arguments, parallel_options
from faciesseq.errors import ConfigError

HELP = "transition statistics, Markov-order, homogeneity and cyclicity tests"

DESCRIPTION = """\
Upward transition statistics of the facies successions (read base to top), pooled
over cores and never across a core boundary or gap: count and probability matrices,
the (quasi-)independence test with cell diagnostics, order tests with AIC/BIC,
Monte Carlo tests with surrogate successions, homogeneity across cores or groups,
entropies and the preferred upward path. Irregularly sampled cores (e.g. pseudo-wells
of scattered samples) are left out of the pooled statistics with a warning.
"""

EXAMPLES = """\
examples:
  faciesseq markov cores.csv --scheme my-scheme.yaml
  faciesseq markov cores.csv --surrogates 999 --seed 1 --format json
  faciesseq markov logs.csv --layout samples --unit grid --step 0.5 --by formation
  faciesseq markov cores.csv --scheme my-scheme.yaml -o markov-results
  faciesseq markov cores.csv --surrogates 9999 --seed 1 --jobs 2
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "markov",
        help=HELP,
        description=DESCRIPTION,
        epilog=EXAMPLES,
    )
    add_source_arguments(parser)
    group = parser.add_argument_group("statistics")
    group.add_argument(
        "--unit",
        choices=("beds", "grid"),
        default="beds",
        help="beds: bed-to-bed embedded chain (default); grid: cells of --step",
    )
    group.add_argument("--step", type=float, help="grid cell size, in depth units (--unit grid)")
    group.add_argument(
        "--max-order", type=int, default=3, metavar="K", help="highest Markov order (default 3)"
    )
    group.add_argument(
        "--surrogates",
        type=int,
        default=0,
        metavar="N",
        help="Monte Carlo tests with N surrogate successions (default 0: none; e.g. 999)",
    )
    group.add_argument("--seed", type=int, help="seed of the surrogates (printed when drawn)")
    group.add_argument(
        "--by",
        default="core",
        metavar="core|COLUMN",
        help="homogeneity across cores (default) or groups of a bed column; 'none' to skip",
    )
    group.add_argument(
        "--alpha", type=float, default=0.05, help="significance level of the cell tests"
    )
    group.add_argument("--per-core", action="store_true", help="also give each core's count matrix")
    add_irregular_argument(group, "analyse")
    add_parallel_arguments(parser, "blocks of 500 Monte Carlo surrogates")
    out = parser.add_argument_group("output")
    out.add_argument(
        "--format",
        choices=("text", "json", "csv"),
        default="text",
        help="standard output: text tables (default), JSON, or the tests as CSV",
    )
    add_output_arguments(
        out,
        "DIR",
        "also write markov.json, markov.txt, CSV tables and the facies relationship "
        "diagram into the folder DIR",
        old_out=True,
    )
    parser.set_defaults(func=run)


def _check(args: argparse.Namespace) -> None:
    check_unit_step(args)
    if args.max_order < 1:
        raise ConfigError(f"--max-order must be at least 1, got {args.max_order}")
    check_surrogates(args.surrogates)
    check_seed(args.seed)
    if args.seed is not None and args.surrogates == 0:
        raise ConfigError("--seed needs --surrogates N")
    if not 0 < args.alpha < 1:
        raise ConfigError(f"--alpha must be between 0 and 1, got {args.alpha}")


def _write_out(directory: str, report, scheme, text: str, json_text: str) -> None:
    """All files into a new folder beside DIR, then swapped in (nothing half-written)."""
    from faciesseq._output import new_folder
    from faciesseq.cli._hmm import warnings_to_stderr
    from faciesseq.report.markov_section import relationship_diagram
    from faciesseq.report.style import missing_glyphs_once, save_figure

    with warnings_to_stderr("markov"), missing_glyphs_once(), new_folder(directory) as tmp:
        (tmp / "markov.txt").write_text(text, encoding="utf-8")
        (tmp / "markov.json").write_text(json_text, encoding="utf-8")
        for name, frame in report.to_frames().items():
            # 6 significant digits, as decode, validate and correlate write theirs
            # (markov.json keeps every digit)
            frame.to_csv(
                tmp / f"{name}.csv", index=frame.index.name is not None, float_format="%.6g"
            )
        diagram = relationship_diagram(report, scheme)
        for suffix in (".png", ".svg"):
            save_figure(diagram, tmp / f"facies_relationship{suffix}")


def run(args: argparse.Namespace) -> int:
    import json

    import numpy as np

    from faciesseq.report.markov_text import markov_text

    _check(args)
    n_jobs, scheduler = parallel_options(args)
    if args.output:
        from faciesseq._output import check_target

        check_target(args.output, force=args.force, folder=True, inputs=input_files(args))
    scheme = load_scheme_option(args.scheme)
    seed = args.seed
    if args.surrogates and seed is None:
        seed = int(np.random.SeedSequence().entropy % 2**32)
    report = _analyse(args, scheme, seed, n_jobs, scheduler)
    text = markov_text(report)
    if args.surrogates:
        text += f"surrogates drawn with seed {seed} (repeat with --seed {seed})\n"
    json_text = json.dumps(report.to_dict(), indent=2, ensure_ascii=False) + "\n"
    if args.output:
        _write_out(args.output, report, scheme, text, json_text)
    if args.format == "text":
        sys.stdout.write(text)
    elif args.format == "json":
        sys.stdout.write(json_text)
    else:
        report.to_frames()["tests"].to_csv(sys.stdout, index=False, float_format="%.6g")
    return 0


def _analyse(args: argparse.Namespace, scheme, seed, n_jobs, scheduler):
    """The report of SOURCE: a batch of whole cores at a time where it can be streamed
    (beds only: a grid's size is checked on every core first), else read whole."""
    from faciesseq.io import NotStreamable
    from faciesseq.markov import analyse, analyse_batches

    by = None if args.by.lower() == "none" else args.by
    options = dict(
        unit=args.unit,
        step=args.step,
        max_order=args.max_order,
        surrogates=args.surrogates,
        seed=seed,
        by=by,
        per_core=args.per_core,
        alpha=args.alpha,
        scheme=scheme,
        exclude_irregular=not args.keep_irregular,
        n_jobs=n_jobs,
        scheduler=scheduler,
    )
    stream = stream_source(args, scheme) if args.unit == "beds" else None
    if stream is not None:
        try:
            report = analyse_batches(stream, **options)
        except NotStreamable:
            pass  # read whole below
        else:
            announce(args, stream.summary(), scheme)
            return report
    cores = read_source(args, scheme=scheme).require_valid()
    check_grid_size(cores, args.unit, args.step)
    return analyse(cores, **options)
