"""``faciesseq appendix SOURCE -o DIR``: the statistical appendix of a core database."""

from __future__ import annotations

import argparse
import sys
import time

EXAMPLES = """\
examples:
  faciesseq appendix cores.csv --scheme my-scheme.yaml -o appendix
  faciesseq appendix cores.csv --model model.json --no-latex -o appendix --force
  faciesseq appendix cores.csv --scheme my-scheme.yaml --surrogates 999 --folds 5 -o appendix
  faciesseq appendix cores.csv --model model.json --wells wells.csv -o appendix
  faciesseq appendix cores.csv --scheme my-scheme.yaml --jobs 2 -o appendix
"""


def register(subparsers) -> None:
    from faciesseq.cli._common import add_output_arguments, add_source_arguments

    parser = subparsers.add_parser(
        "appendix",
        help="write the statistical appendix (HTML, LaTeX, CSV, JSON) of a core database",
        description=(
            "Compute the transition statistics, fit the tract model (or read one with "
            "--model), decode every core, cross-validate against interpreted cores where "
            "there are any, and write the appendix folder atomically: appendix.html (one "
            "self-contained file), appendix.tex with figures/*.pdf, tables/*.csv, "
            "appendix.json and provenance.json."
        ),
        epilog=EXAMPLES,
    )
    add_source_arguments(parser)
    add_appendix_arguments(parser)
    parser.add_argument(
        "--wells",
        metavar="WELLS",
        help="wells table (as for `faciesseq correlate`): adds a Correlation section, one "
        "sub-section per section name with its figure and ties (hung on the MFS)",
    )
    add_output_arguments(parser, "DIR", "folder to write", required=True)
    parser.set_defaults(func=run)


def _read_wells(args):
    """The wells table of ``--wells`` (read before the long job, so a bad file fails fast)."""
    if not getattr(args, "wells", None):
        return None
    from faciesseq.cli._common import require_file
    from faciesseq.correlation.wells import read_wells

    return read_wells(require_file(args.wells))


def _add_correlation(appendix, wells, cores, interpretation) -> None:
    """Correlate the decoded cores on the wells table; the section goes before Methods."""
    from faciesseq.correlation import correlate
    from faciesseq.correlation.wells import check_wells
    from faciesseq.report.appendix import add_section
    from faciesseq.report.correlation_section import correlation_section

    wells, problems = check_wells(wells, cores.names, cores.units)
    for p in (*wells.problems, *problems):
        sys.stderr.write(f"faciesseq appendix: {p}\n")
    # the cores with a well row only: correlate would warn again of the others, said above
    kept = set(wells.frame["core"])
    extents = {c.name: (c.top, c.base) for c in cores if c.name in kept}
    corr = correlate(interpretation.picks_table(), extents, wells.frame)
    section = correlation_section(
        corr,
        interpretation.tracts_table(),
        tuple(interpretation.tracts),
        units=cores.units,
        surface_order=tuple(interpretation.surfaces),
        position_label=wells.position_label,
    )
    add_section(appendix, section, "correlation", corr.to_dict())


def add_appendix_arguments(parser: argparse.ArgumentParser) -> None:
    """Options shared by ``appendix`` and ``demo``."""
    group = parser.add_argument_group("what the appendix computes")
    group.add_argument(
        "--model",
        metavar="FILE",
        help="fitted tract model file (JSON); without it a model is fitted with the defaults "
        "and the appendix says so",
    )
    group.add_argument(
        "--tracts",
        dest="tract_model",
        metavar="FILE",
        help="tract model YAML (default: the packaged four-tract model)",
    )
    group.add_argument(
        "--labels",
        default="tract",
        metavar="COLUMN",
        help="column of interpreted tracts for cross-validation (default: tract; skipped when "
        "absent)",
    )
    group.add_argument(
        "--validate-mode",
        choices=("supervised", "semi-supervised", "unsupervised"),
        default="supervised",
        help="cross-validation: each fold fitted on its labelled cores (supervised, default), "
        "on all its cores with labelled beds clamped, or without labels",
    )
    group.add_argument("--folds", type=int, default=3, metavar="K", help="cross-validation folds")
    group.add_argument(
        "--surrogates",
        type=int,
        default=199,
        metavar="N",
        help="Monte Carlo surrogates for exact p-values (default 199; 0 = none)",
    )
    group.add_argument(
        "--unit",
        choices=("beds", "grid"),
        default="beds",
        help="successions of beds (embedded chain, default) or of depth-grid cells",
    )
    group.add_argument("--step", type=float, metavar="X", help="grid cell height (depth units)")
    group.add_argument("--restarts", type=int, default=3, metavar="N", help="EM restarts")
    group.add_argument(
        "--substates",
        default=None,
        metavar="LIST",
        help="sub-states per tract of the candidate models compared by BIC when no --model is "
        "given (default: 1,2 with labels; without labels those of faciesseq fit)",
    )
    group.add_argument("--seed", type=int, default=0, help="seed of every random step")
    group.add_argument("--no-latex", action="store_true", help="skip appendix.tex and PDFs")
    group.add_argument("--title", help="title of the appendix (default: a generic one)")
    from faciesseq.cli._parallel import add_parallel_arguments

    add_parallel_arguments(
        parser,
        "surrogate blocks, EM restarts, candidate graphs, folds, decoding batches, "
        "E-step chunks of fits of 400,000 beds or more",
    )


def progress_printer(total: int, enabled: bool):
    """A progress callback printing ``[k/total] step: message (seconds)`` to stderr."""
    start = time.monotonic()
    seen: list[str] = []

    def report(step: str, message: str) -> None:
        if step not in seen:
            seen.append(step)
        if enabled:
            sys.stderr.write(
                f"[{len(seen)}/{total}] {step}: {message} ({time.monotonic() - start:.1f} s)\n"
            )
            sys.stderr.flush()

    return report


def check_numbers(args: argparse.Namespace) -> None:
    import math

    from faciesseq.cli._common import check_seed, check_surrogates
    from faciesseq.cli._hmm import MAX_RESTARTS, check_substates
    from faciesseq.errors import ConfigError

    try:
        args.substates_list = (
            None
            if args.substates is None
            else tuple(int(x) for x in str(args.substates).split(",") if x.strip())
        )
    except ValueError:
        raise ConfigError(
            f"--substates expects whole numbers separated by commas, got {args.substates!r}"
        ) from None
    if args.unit == "grid" and not (args.step and math.isfinite(args.step) and args.step > 0):
        raise ConfigError("--unit grid needs a positive --step (depth units)")
    if args.substates_list is not None:
        if not args.substates_list or min(args.substates_list) < 1:
            raise ConfigError(f"--substates expects numbers >= 1, got {args.substates!r}")
        for n in args.substates_list:
            check_substates(n)
    for name in ("folds", "surrogates", "restarts", "seed"):
        value = getattr(args, name)
        low = 2 if name == "folds" else (1 if name == "restarts" else 0)
        if value < low:
            raise ConfigError(f"--{name} must be a whole number >= {low}, got {value}")
    check_surrogates(args.surrogates)
    check_seed(args.seed)
    if args.restarts > MAX_RESTARTS:
        raise ConfigError(f"--restarts must be at most {MAX_RESTARTS:,}, got {args.restarts}")


def make(
    args: argparse.Namespace, cores, scheme, output, force: bool, extra_model: bool, model=None
):
    """Run the job and write the folder; return the folder (shared by ``demo``);
    ``model``: the model file of ``--model`` where the caller has read it already."""
    import json

    from faciesseq.cli._common import require_file
    from faciesseq.cli._hmm import warnings_to_stderr
    from faciesseq.pipeline import run_appendix
    from faciesseq.report.appendix import write_appendix
    from faciesseq.report.provenance import provenance
    from faciesseq.scheme import default_tract_model, load_tract_model

    if args.model:
        from faciesseq.cli._common import model_scheme
        from faciesseq.hmm.modelfile import load_model

        model = model if model is not None else load_model(require_file(args.model))
        model_scheme(scheme, model, args.scheme)  # the model's own scheme, or a usage error
    if args.tract_model:
        tract_model = load_tract_model(require_file(args.tract_model))
    elif model is not None:
        tract_model = model.tract_model_  # the tract model the file was fitted with
    else:
        # none given: the fit and its cross-validation choose the graph as `fit` and
        # `validate` do (from the labels, or among the trade's strict graphs by ICL);
        # the packaged tract model passed here fitted its permissive graph instead
        tract_model = None
    prov = provenance(
        sources=[args.source],
        scheme=args.scheme or getattr(scheme, "source", None),
        tract_model=args.tract_model or (tract_model or default_tract_model()).source,
        model_file=args.model,
        seeds={"markov_surrogates": args.seed, "fit": args.seed, "cross_validation": args.seed},
        command_line=["faciesseq", *sys.argv[1:]],
    )
    wells = _read_wells(args)
    from faciesseq.cli._parallel import parallel_options

    n_jobs, scheduler = parallel_options(args)
    progress = progress_printer(7, sys.stderr.isatty())
    result = run_appendix(
        cores,
        scheme,
        tract_model,
        model=model,
        model_source=args.model,
        labels=args.labels,
        validate_mode=args.validate_mode,
        folds=args.folds,
        surrogates=args.surrogates,
        seed=args.seed,
        n_restarts=args.restarts,
        substates=args.substates_list,
        unit=args.unit,
        step=args.step,
        provenance=prov,
        progress=progress,
        title=args.title,
        n_jobs=n_jobs,
        scheduler=scheduler,
    )
    if wells is not None:
        _add_correlation(result.appendix, wells, cores, result.interpretation)
    extra = {}
    if extra_model and model is None:
        from faciesseq.hmm.modelfile import model_to_dict

        doc = model_to_dict(result.model)
        extra["model.json"] = json.dumps(doc, indent=1, ensure_ascii=False, allow_nan=False) + "\n"
    with warnings_to_stderr(args.command):  # one line (characters the font lacks)
        out = write_appendix(
            result.appendix, output, force=force, latex=not args.no_latex, extra=extra
        )
    progress("write", f"{out}")
    return out, result


def run(args: argparse.Namespace) -> int:
    from faciesseq._output import check_target
    from faciesseq.cli._common import (
        check_grid_size,
        input_files,
        load_scheme_option,
        read_in_models_units,
        read_source,
        require_file,
    )
    from faciesseq.errors import ConfigError

    check_numbers(args)
    check_target(args.output, force=args.force, folder=True, inputs=input_files(args))
    require_file(args.model)
    require_file(args.tract_model)
    scheme = load_scheme_option(args.scheme)
    model = None
    if args.model:
        from faciesseq.hmm.modelfile import load_model

        model = load_model(args.model)  # read once: its units, its scheme, then the job's
        read_in_models_units(args, model)
        scheme = model.scheme if scheme is None else scheme
    if scheme is None:
        raise ConfigError(
            "the appendix needs a facies scheme (ranks, names, colours): pass --scheme FILE "
            "(faciesseq scheme draft SOURCE --fill-ranks -o FILE starts one from the data)"
        )
    cores = read_source(args, scheme=scheme)
    check_grid_size(cores, args.unit, args.step)
    out, _ = make(args, cores, scheme, args.output, args.force, extra_model=False, model=model)
    sys.stdout.write(
        f"appendix: {out / 'appendix.html'}\n"
        f"figures:  {out / 'figures'}\n"
        f"tables:   {out / 'tables'}\n"
    )
    return 0
