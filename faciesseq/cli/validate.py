"""``faciesseq validate SOURCE --labels COLUMN``: cross-validation of the tract model by core."""

from __future__ import annotations

import argparse
import json
import math
from pathlib import Path

from faciesseq.cli._common import (
    add_irregular_argument,
    add_output_arguments,
    add_source_arguments,
    check_grid_size,
    check_labels,
    input_files,
    load_scheme_option,
    read_source,
    regular_cores,
)
from faciesseq.cli._hmm import (
    Progress,
    add_model_arguments,
    add_reference_arguments,
    check_features,
    check_unit,
    feature_sets,
    load_tracts_option,
    reference_option,
    resolve_suggest_ranks,
    resolve_unit,
    scheme_for_fit,
    substate_counts,
    warnings_to_stderr,
    weigh_evidence,
)
from faciesseq.cli._parallel import add_parallel_arguments, parallel_options
from faciesseq.core import row_word
from faciesseq.errors import ConfigError

EXAMPLES = """\
examples:
  faciesseq validate cores.csv --scheme my-scheme.yaml --labels tract
  faciesseq validate cores.csv --scheme my-scheme.yaml --labels tract --folds 3 --seed 0 -o cv
  faciesseq validate cores.csv --labels tract --mode unsupervised --format json
  faciesseq validate cores.csv --labels tract --mode unsupervised --reference other-field.json
  faciesseq validate cores.csv --scheme my-scheme.yaml --labels tract --jobs 2
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "validate",
        help="cross-validate the tract model by core against an interpreter's tract column",
        description="K-fold cross-validation by core (a core is never split): each fold's "
        "cores are decoded by a model fitted on the others and compared with the "
        "interpreter's tracts: bed accuracy, per-tract precision/recall/F1, confusion "
        "matrix, surface depth error, Brier score and a reliability curve, beside a simple "
        "rule that reads only the deepening/shallowing trend of the facies ranks.",
        epilog=EXAMPLES,
    )
    add_source_arguments(parser)
    add_irregular_argument(parser, "cross-validate on")
    parser.add_argument(
        "--labels", required=True, metavar="COLUMN", help="bed column with the interpreter's tracts"
    )
    parser.add_argument("--folds", type=int, default=5, metavar="K", help="folds")
    parser.add_argument(
        "--mode",
        choices=("supervised", "semi-supervised", "unsupervised"),
        default="supervised",
        help="fit each fold on its labelled cores (supervised, default), on all its cores "
        "with labelled beds clamped (semi-supervised), or without labels (unsupervised: "
        "tests identifiability)",
    )
    add_output_arguments(parser, "OUT", "also write the tables to this folder")
    parser.add_argument("--format", choices=("text", "json"), default="text", help="stdout format")
    add_model_arguments(parser, select=False)
    add_reference_arguments(parser)
    add_parallel_arguments(
        parser,
        "EM restarts, candidate tract graphs, calibration folds, "
        "E-step chunks of fits of 400,000 beds or more",
    )
    parser.set_defaults(func=run)


def _pct(x: float) -> str:
    return "-" if x is None or (isinstance(x, float) and math.isnan(x)) else f"{100 * x:.1f} %"


def _read_reference(settings: dict) -> str:
    """The reference model the folds read, if any, for the first line."""
    name = settings.get("reference")
    return "" if name is None else f", with the reference model {name}"


def format_text(result) -> str:
    dealt = (
        "; the labelled cores dealt first round the folds, so that every fold has one to train on"
        if result.settings.get("labelled_cores_dealt_first")
        else ""
    )
    rows = row_word(result.settings.get("unit"))
    lines = [
        f"cross-validation by core: {result.folds} folds, {result.settings['n_cores']} cores, "
        f"{result.settings['n_beds_scored']} labelled {rows} "
        f"scored ({result.settings['mode']})"
        f"{_read_reference(result.settings)}{dealt}",
        "",
        "method     accuracy  macro F1   Brier  MFS within 1 bed",
    ]
    for row in result.summary().itertuples(index=False):
        lines.append(
            f"{row.method:<9}  {_pct(row.accuracy):>8}  {_pct(row.macro_f1):>8}  "
            f"{row.brier:6.3f}  {_pct(row.mfs_within_one_bed):>16}"
        )
    for scores in (result.model, result.baseline):
        lines += ["", f"{scores.method}: per tract", f"tract   precision  recall      F1  {rows}"]
        for t, r in scores.per_tract.iterrows():
            lines.append(
                f"{t:<6}  {_pct(r['precision']):>9}  {_pct(r['recall']):>6}  {_pct(r['f1']):>6}"
                f"  {int(r['support']):>4}"
            )
        lines += ["", f"{scores.method}: confusion (rows interpreter, columns decoded)"]
        conf = scores.confusion
        lines.append("        " + "".join(f"{c:>7}" for c in conf.columns))
        for t, r in conf.iterrows():
            lines.append(f"{t:<8}" + "".join(f"{int(v):>7}" for v in r))
        lines += [
            "",
            f"{scores.method}: surfaces (depth error in {result.units})",
            "surface  true  picked  within 1 bed  median error  mean error (beds)",
        ]
        for code, r in scores.surfaces.iterrows():
            med = "-" if math.isnan(r["median_abs_error"]) else f"{r['median_abs_error']:.2f}"
            mean = (
                "-" if math.isnan(r["mean_abs_error_beds"]) else f"{r['mean_abs_error_beds']:.2f}"
            )
            lines.append(
                f"{code:<7}  {int(r['n_true']):>4}  {int(r['n_matched']):>6}  "
                f"{_pct(r['within_one_bed']):>12}  {med:>12}  {mean:>17}"
            )
    lines += ["", "model: reliability (probability of the decoded tract vs fraction correct)"]
    for r in result.model.reliability.itertuples(index=False):
        if r.count:
            lines.append(
                f"  {r.bin_low:.1f}-{r.bin_high:.1f}: mean {r.mean_probability:.3f}, "
                f"correct {r.fraction_correct:.3f}, {r.count} {rows}"
            )
    return "\n".join(lines)


def _clean(value):
    """JSON-ready: NaN and infinity become null."""
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    if hasattr(value, "item") and not isinstance(value, str):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _write(result, out: Path) -> None:
    """The tables and ``validation.json`` into a new folder, swapped in for ``out``."""
    from faciesseq._output import new_folder
    from faciesseq.report.csvtext import MEASURES, csv_bytes

    with new_folder(out) as temp:
        for name, frame in result.to_frames().items():
            # the beds' depths exact, as decode writes them; statistics (scores,
            # probabilities, errors) to 6 significant digits
            table = frame.reset_index() if name.startswith("confusion") else frame
            (temp / f"{name}.csv").write_bytes(csv_bytes(table, measures=MEASURES))
        (temp / "validation.json").write_text(
            json.dumps(_clean(result.to_dict()), indent=1, ensure_ascii=False, allow_nan=False)
            + "\n",
            encoding="utf-8",
        )


def run(args: argparse.Namespace) -> int:
    check_unit(args)
    n_jobs, scheduler = parallel_options(args)
    feats = feature_sets(args)
    subs = substate_counts(args)
    if len(feats) > 1 or len(subs) > 1:
        raise ConfigError("validate takes one --features set and one --substates value")
    if args.output:
        from faciesseq._output import check_target

        check_target(args.output, force=args.force, folder=True, inputs=input_files(args))
    from faciesseq.scheme import default_tract_model
    from faciesseq.validation import cross_validate

    labelled = args.mode != "unsupervised"
    resolve_unit(args, labelled)
    resolve_suggest_ranks(args)
    scheme = load_scheme_option(args.scheme)
    tract_model = load_tracts_option(args.tracts)
    reference = reference_option(args, labelled)
    cores = regular_cores(
        read_source(args, scheme).require_valid(), "validate", args.keep_irregular
    )
    check_grid_size(cores, args.unit, args.step)
    check_features(args, cores)
    check_labels(cores, args.labels, tract_model or default_tract_model(), args.source)
    scheme = scheme_for_fit(args, cores, scheme, "validate", labelled)
    progress = Progress("validate")
    with warnings_to_stderr("validate"):
        try:
            result = cross_validate(
                cores.successions(args.unit, args.step),
                args.labels,
                args.folds,
                mode=args.mode,
                random_state=args.seed,
                progress=progress.fold,
                tract_model=tract_model,
                scheme=scheme,
                features=feats[0],
                substates=subs[0],
                prior_strength=args.prior_strength,
                cycle_prior=args.cycle_prior,
                n_restarts=args.restarts,
                tol=args.tol,
                max_iter=args.max_iter,
                unit=args.unit,
                step=args.step,
                n_jobs=n_jobs,
                scheduler=scheduler,
                calibration_folds=args.calibration_folds,
                weigh_evidence=weigh_evidence(args),
                nested_start=args.nested_start,
                reference=reference,
                reference_weight=args.reference_weight,
                reference_use=args.reference_use,
            )
        finally:
            progress.close()
    if args.output:
        _write(result, Path(args.output))
    if args.format == "json":
        print(json.dumps(_clean(result.to_dict()), indent=1, allow_nan=False))
    else:
        print(format_text(result))
    return 0
