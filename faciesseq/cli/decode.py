"""``faciesseq decode model.json SOURCE -o OUT``: tract columns and surface probabilities."""

from __future__ import annotations

import argparse
from collections.abc import Collection
from pathlib import Path

from faciesseq.cli._common import (
    add_output_arguments,
    add_source_arguments,
    check_grid_size,
    load_scheme_option,
    read_source,
    require_file,
)
from faciesseq.cli._hmm import warnings_to_stderr
from faciesseq.errors import ConfigError

FORMATS = ("csv", "json", "parquet")

EXAMPLES = """\
examples:
  faciesseq decode model.json cores.csv -o decoded
  faciesseq decode model.json new-cores.csv --scheme my-scheme.yaml --plot -o decoded --force
  faciesseq decode model.json cores.csv --format parquet --threshold 0.6 -o decoded
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "decode",
        help="decode cores with a fitted model: tract column, posteriors, surface probabilities",
        description="Decode every core of SOURCE with a model written by `faciesseq fit`: "
        "the most likely tract of every bed (Viterbi), the posterior probability of each "
        "tract per bed, the probability of each named surface at every contact and the "
        "picked surfaces. Writes OUT/tracts.*, OUT/surfaces.* and OUT/picks.*; with --plot "
        "one strip-log figure per core. An interpreter's tract column in SOURCE is not used "
        "to decode; where present, the agreement with it is reported. An existing OUT is "
        "replaced as a whole with --force.",
        epilog=EXAMPLES,
    )
    parser.add_argument("model", metavar="MODEL", help="model file written by `faciesseq fit`")
    add_source_arguments(parser)
    add_output_arguments(parser, "OUT", "output folder", required=True)
    parser.add_argument("--format", choices=FORMATS, default="csv", help="table format")
    parser.add_argument("--plot", action="store_true", help="also draw a strip log per core")
    parser.add_argument(
        "--threshold",
        type=float,
        default=0.5,
        metavar="P",
        help="pick a surface where its probability mass around a peak reaches P",
    )
    parser.add_argument(
        "--labels",
        default="tract",
        metavar="COLUMN",
        help="interpreter's tract column to compare with (default 'tract'; never used to decode)",
    )
    parser.set_defaults(func=run)


def _write_table(frame, path: Path, fmt: str) -> None:
    if fmt == "csv":
        frame.to_csv(path, index=False, float_format="%.6g")
    elif fmt == "json":
        path.write_text(frame.to_json(orient="records", indent=1, double_precision=8) + "\n")
    else:
        frame.to_parquet(path, index=False)


def _agreement(interp, column: str):
    """Bed agreement (thickness-weighted too) with an interpreter's column, or None."""
    import numpy as np
    import pandas as pd

    rows = []
    for core in interp:
        beds = core.beds
        if column not in beds.columns:
            continue
        labelled = beds[column].notna() & (beds[column].astype(str).str.strip() != "")
        if not labelled.any():
            continue
        b = beds[labelled]
        same = b[column].astype(str).str.strip().to_numpy() == b["tract"].to_numpy()
        w = b["thickness"].to_numpy(float)
        rows.append(
            {
                "core": core.core,
                "beds": len(b),
                "agreement_beds": float(np.mean(same)),
                "agreement_thickness": float(np.sum(w * same) / np.sum(w)) if w.sum() else np.nan,
            }
        )
    return pd.DataFrame(rows) if rows else None


def figure_name(core: str, used: Collection[str] = ()) -> str:
    """A safe, short file name (without suffix) for a core's figure; see
    :func:`faciesseq.io.writer.safe_stem` (long or clashing names get a hash)."""
    from faciesseq.io.writer import safe_stem

    return safe_stem(core, used)


def write_output(interp, out: Path, fmt: str, agreement, plot, scheme, tract_model) -> None:
    """Write the tables (and figures) into a new folder, then swap it in for ``out``."""
    from faciesseq._output import new_folder

    with new_folder(out) as temp:
        _write_table(interp.tracts_table(), temp / f"tracts.{fmt}", fmt)
        _write_table(interp.surfaces_table(), temp / f"surfaces.{fmt}", fmt)
        _write_table(interp.picks_table(), temp / f"picks.{fmt}", fmt)
        if agreement is not None:
            _write_table(agreement, temp / f"agreement.{fmt}", fmt)
        if plot:
            from faciesseq.report.striplog import strip_log

            figures = temp / "striplogs"
            figures.mkdir()
            used: set[str] = set()
            for core in interp:
                name = figure_name(core.core, used)
                used.add(name)
                strip_log(core, scheme, tract_model, figures / f"{name}.png")


def run(args: argparse.Namespace) -> int:
    if not 0 < args.threshold <= 1:
        raise ConfigError(f"--threshold must be in (0, 1], got {args.threshold}")
    from faciesseq._output import check_target
    from faciesseq.hmm.modelfile import load_model

    check_target(args.output, force=args.force, folder=True)
    model = load_model(require_file(args.model))
    scheme = load_scheme_option(args.scheme) or model.scheme
    if args.plot and scheme is None:
        raise ConfigError("--plot needs a facies scheme (--scheme, or a model fitted with one)")
    cores = read_source(args, scheme).require_valid()
    check_grid_size(cores, model.unit, model.step, option="the model's grid step")
    successions = cores.successions(model.unit, model.step)
    if not successions:
        raise ConfigError("the source holds no beds to decode", file=args.source)
    with warnings_to_stderr("decode"):
        interp = model.decode(successions, threshold=args.threshold)
    agreement = _agreement(interp, "interpreted_tract" if args.labels == "tract" else args.labels)
    write_output(
        interp, Path(args.output), args.format, agreement, args.plot, scheme, model.tract_model_
    )
    n_beds = sum(len(c.beds) for c in interp)
    n_picks = sum(len(c.picks) for c in interp)
    print(
        f"decoded {len(interp)} core(s), {n_beds} {model.unit}; {n_picks} surface pick(s); "
        f"log-likelihood {sum(c.log_likelihood for c in interp):.3f}"
    )
    if agreement is not None:
        w = agreement["beds"]
        overall = float((agreement["agreement_beds"] * w).sum() / w.sum())
        print(
            f"agreement with the interpreter's {args.labels!r} column: {100 * overall:.1f} % of "
            f"{int(w.sum())} labelled beds in {len(agreement)} core(s)"
        )
    print(f"written to {args.output}/ (tracts, surfaces, picks as {args.format})")
    return 0
