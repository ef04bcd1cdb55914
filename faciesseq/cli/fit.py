"""``faciesseq fit SOURCE -o model.json``: fit the systems-tract model on a core database."""

from __future__ import annotations

import argparse
import sys

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
from faciesseq.errors import ConfigError
from faciesseq.hmm.graphs import graph_line, graph_selection_line

EXAMPLES = """\
examples:
  faciesseq fit cores.csv --scheme my-scheme.yaml --labels tract -o model.json
  faciesseq fit cores.csv -o model.json   # no scheme: ranks suggested from the data
  faciesseq fit cores.csv --scheme my-scheme.yaml --reference other-field.json -o model.json
  faciesseq fit cores.csv --scheme my-scheme.yaml --substates 1,2 --restarts 5 -o model.json
  faciesseq fit cores.csv --scheme my-scheme.yaml --tracts my-tracts.yaml -o model.json --force
  faciesseq fit cores.csv --scheme my-scheme.yaml -o model.json --format json > wells.json
  faciesseq fit cores.csv --scheme my-scheme.yaml --jobs 4 -o model.json
  faciesseq fit cores.csv --scheme my-scheme.yaml --scheduler tcp://10.0.0.5:8786 -o model.json
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "fit",
        help="fit the systems-tract hidden Markov model; write a model file (JSON)",
        description="Fit the hidden Markov model whose hidden states are systems tracts on "
        "the cores of SOURCE and write it as a JSON model file. With --labels, beds with an "
        "interpreter's tract keep it (supervised where every bed is labelled, "
        "semi-supervised where some are); without, the fit is unsupervised and the facies "
        "ranks of the scheme tell the tracts apart. Several --features or --substates values "
        "are compared by BIC and the best is written. The training cores are then decoded by "
        "the fitted model and summarised one line per well (at most 30): thickness per "
        "tract, cycles, surface picks and the mean probability of the decoded tract; "
        "--format json prints every well as one JSON document instead.",
        epilog=EXAMPLES,
    )
    add_source_arguments(parser)
    add_output_arguments(parser, "FILE", "model file (JSON) to write", required=True)
    parser.add_argument(
        "--labels", metavar="COLUMN", help="bed column with the interpreter's tract codes"
    )
    add_model_arguments(parser)
    add_reference_arguments(parser)
    add_irregular_argument(parser, "train on")
    add_parallel_arguments(
        parser,
        "EM restarts, candidate tract graphs, calibration folds, decoding batches, "
        "E-step chunks of 200,000 beds in fits of 400,000 beds or more",
    )
    parser.add_argument(
        "--format",
        choices=("text", "json"),
        default="text",
        help="printed report: text lines, or one JSON document with every well",
    )
    parser.add_argument(
        "--verbose",
        action="store_true",
        help="print the model-selection and EM diagnostics too (features and states, the "
        "ICL of every candidate graph, evidence weights, the EM start, log-likelihood, BIC "
        "and restarts, calibration, tract lengths); the model file keeps them either way",
    )
    parser.set_defaults(func=run)


def _provenance(args: argparse.Namespace, cores, tracts_file: str | None) -> dict:
    from pathlib import Path

    from faciesseq.hmm.modelfile import coreset_digest, file_digest
    from faciesseq.report.provenance import mask_url

    source = Path(args.source)
    digests = {}
    if source.is_file():
        digests[str(source)] = file_digest(source)
    elif source.is_dir():
        for p in sorted(source.iterdir()):
            if p.is_file():
                digests[str(p)] = file_digest(p)
    for extra in (args.scheme, tracts_file):
        if extra:
            digests[str(extra)] = file_digest(extra)
    from faciesseq.review import label_source_counts

    sources = label_source_counts(cores)  # labels per review sheet, after `relabel`
    return ({"label_sources": sources} if sources else {}) | {
        "source": mask_url(str(args.source)),
        "input_hashes": digests,
        "data_hash": coreset_digest(cores),
        "labels": args.labels,
        "command": ["faciesseq", *map(mask_url, sys.argv[1:])] if sys.argv else None,
        "seed": args.seed,
    }


def _successions(args: argparse.Namespace, scheme):
    """The training successions of SOURCE, refused where there is nothing to fit on."""
    from faciesseq.hmm.inputs import refuse_too_few_beds

    cores = regular_cores(read_source(args, scheme).require_valid(), "fit", args.keep_irregular)
    check_grid_size(cores, args.unit, args.step)
    successions = cores.succession_table(args.unit, args.step)
    if not len(successions):
        raise ConfigError("the source holds no beds to fit on", file=args.source)
    refuse_too_few_beds(successions, args.unit, file=args.source)
    return cores, successions


def _select(
    args: argparse.Namespace, successions, scheme, tract_model, substates, parallel, reference
):
    from faciesseq.hmm.selection import select_model

    progress = Progress("fit", args.restarts)
    with warnings_to_stderr("fit"):
        try:
            return select_model(
                successions,
                features=feature_sets(args),
                substates=substates,
                labels=args.labels,
                progress=progress.fit,
                tract_model=tract_model,
                scheme=scheme,
                prior_strength=args.prior_strength,
                cycle_prior=args.cycle_prior,
                n_restarts=args.restarts,
                tol=args.tol,
                max_iter=args.max_iter,
                unit=args.unit,
                step=args.step,
                n_jobs=parallel[0],
                scheduler=parallel[1],
                calibration_folds=args.calibration_folds,
                weigh_evidence=weigh_evidence(args),
                nested_start=args.nested_start,
                reference=reference,
                reference_weight=args.reference_weight,
                reference_use=args.reference_use,
                random_state=args.seed,
            )
        finally:
            progress.close()


def _print_weights(model, asked: bool | None, verbose: bool) -> None:
    """Whether the context evidence was weighed, and if it was not kept, why; that
    the weights were not used only where ``--weigh-evidence`` was given (``asked``).
    The weights, and why they were not kept where nobody asked for them, are
    diagnostics (``verbose``); what became of an option given is always said."""
    rejected = getattr(model, "weights_rejected_", None)
    if rejected and (verbose or asked):
        weaker = rejected.get("refitted_with") == "square roots of the weights"
        print(
            f"evidence weights not kept: the weighted fit changed tract about "
            f"{rejected['expected_tract_changes']:.0f} times in {rejected['cycles']:.0f} "
            "cycles (tracts shorter than a parasequence); fitted "
            + ("again with their square roots" if weaker else "without them")
        )
    weights = getattr(model, "evidence_weights_", None)
    if weights and verbose:
        w = ", ".join(f"{k} {v:.2f}" for k, v in weights.items() if v < 1)
        print(f"evidence weights of the context: {w}")
    elif not weights and asked and not rejected:
        print(
            "evidence weights not used: this fit reads no stacking context (that needs a "
            "scheme with ranks, --unit beds and no labels)"
        )


def _print_fit(args: argparse.Namespace, selection) -> None:
    """What was fitted: cores, beds, mode and tract graph (and the candidate chosen,
    where several were compared); with ``--verbose`` the model-selection and EM
    diagnostics too."""
    model, table = selection.best, selection.table
    mode = (
        "unsupervised"
        if not model.n_labelled_
        else "supervised"
        if model.n_labelled_ == model.n_train_beds_
        else "semi-supervised"
    )
    chosen = table[table["selected"]].iloc[0]
    varied = [c for c in ("features", "substates") if table[c].astype(str).nunique() > 1]
    candidates = (
        "; " + ", ".join(f"{c} {chosen[c]}" for c in varied) + f": the lowest BIC of "
        f"{len(table)} candidates"
        if len(table) > 1
        else ""
    )
    print(
        f"fitted on {len(model.cores_)} core(s), {model.n_train_beds_} {args.unit} "
        f"({model.n_labelled_} labelled, {mode}){candidates}"
    )
    print(graph_line(model, "" if args.verbose else "; --verbose for their scores"))
    check = getattr(model, "reference_check_", None)
    if check:
        print(_reference_check_line(check))
    if args.verbose:
        _print_diagnostics(args, selection)
    else:
        _print_weights(model, args.weigh_evidence, verbose=False)


def _reference_check_line(check: dict) -> str:
    """What ``--reference-use check`` found and kept (:mod:`faciesseq.hmm.reference_check`)."""
    kept = "the fit reading the reference" if check["kept"] == "reference" else "the fit without it"
    return (
        f"reference checked: the fits with and without it give one tract to "
        f"{check['agreement']:.2f} of the thickness; kept {kept} (the reference's is kept "
        f"below {check['keep_reference_below']:.2f})"
    )


def _print_diagnostics(args: argparse.Namespace, selection) -> None:
    """The model-selection and EM diagnostics (``--verbose``): every candidate, the
    features and states, the ICL of the candidate graphs, the evidence weights, the
    EM start, the log-likelihood and restarts, the calibration."""
    from faciesseq.hmm.calibration import describe_calibration

    model, table = selection.best, selection.table
    if len(table) > 1:
        print("candidates (lowest BIC written):")
        for row in table.itertuples(index=False):
            mark = "*" if row.selected else " "
            print(
                f" {mark} features {row.features}; substates {row.substates}: "
                f"{row.n_parameters} parameters, log-likelihood {row.log_likelihood:.2f}, "
                f"BIC {row.bic:.2f}"
            )
    print(f"features {','.join(model.features_)}; states {','.join(model.states_.labels())}")
    graphs = graph_selection_line(model)
    if graphs:
        print(graphs)
    _print_weights(model, args.weigh_evidence, verbose=True)
    nested = getattr(model, "nested_start_", None)
    if nested:
        print(
            f"EM started from a fit without the {', '.join(nested['left_out'])} "
            f"({' -> '.join(nested['tracts'])}), so that a thin or rare "
            f"{' or '.join(nested['left_out'])} leaves the other tract names in place"
        )
        if "kept" in nested:
            print(_kept_start(nested))
    chosen = table[table["selected"]].iloc[0]
    best = model.restarts_[model.best_restart_]
    converged = "converged" if best["converged"] else "stopped at the iteration cap"
    clamped = f" ({model.log_likelihood_:.3f} with the labels clamped)" if model.n_labelled_ else ""
    print(
        f"log-likelihood {chosen['log_likelihood']:.3f}{clamped}, BIC {chosen['bic']:.2f}; "
        f"best of {len(model.restarts_)} restart(s) (seed {best['seed']}), "
        f"{best['n_iter']} iterations, {converged}"
    )
    print(describe_calibration(model.temperature_, model.calibration_))


def _kept_start(nested: dict) -> str:
    """Which start the fit kept, and why (:func:`faciesseq.hmm.nested.kept_start`)."""
    deep = nested.get("tst_deepening") or {}
    scores = (
        f"TST deepening score {deep['priors']:.2f} from the priors alone, "
        f"{deep['nested']:.2f} nested"
        if None not in (deep.get("nested"), deep.get("priors"))
        else "TST deepening scores not known"
    )
    if nested["kept"] == "priors":
        return (
            f"kept the fit from the priors alone, whose TST deepens upward more clearly "
            f"({scores}), as where the TST is missing from many cycles"
        )
    return f"kept the nested fit over the one from the priors alone ({scores})"


def _durations(model, interp, scheme) -> dict[str, dict]:
    """:func:`faciesseq.interpretation.tract_durations` of the decoded training cores
    beside the fitted chain's expected beds per visit; in cycles too where the scheme
    gives ranks."""
    from faciesseq.interpretation import bed_cycles, tract_durations

    expected = model.states_.mean_beds(model.transmat_)
    table = interp.tracts_table()
    cycles = None
    if scheme is not None and "facies" in table.columns:
        cycles = bed_cycles(table, scheme)
    return tract_durations(table, model.states_.tracts, expected, cycles)


def _durations_line(durations: dict[str, dict], units: str, listed_only: bool = False) -> str:
    """One line: beds per visit of the fitted chain, median run of the decoded cores
    (``listed_only``: of the cores the text lists, not every training core)."""
    parts = []
    for t, d in durations.items():
        chain = "-" if d["beds_per_visit"] is None else f"{d['beds_per_visit']:.1f}"
        run = (
            "no run"
            if not d["runs"]
            else f"median {d['median_thickness']:.3g} {units}, {_count(d['median_beds'], 'bed')}"
            + (
                f" and {_count(d['median_cycles'], 'cycle')}"
                if d.get("median_cycles") is not None
                else ""
            )
            + f" over {_count(d['runs'], 'run')}"
        )
        parts.append(f"{t} {chain} ({run})")
    cores = "the decoded cores listed below" if listed_only else "decoded training cores"
    return f"tract lengths, beds per visit of the fitted chain ({cores}): " + "; ".join(parts)


def _count(n: float, noun: str) -> str:
    """``1 bed``, ``1.5 beds``, ``3 beds``."""
    return f"{n:g} {noun}" + ("" if n == 1 else "s")


def _report(args: argparse.Namespace, selection, successions, scheme) -> None:
    """The fit's report and the per-well summary of the training cores, decoded by
    the fitted model (:mod:`faciesseq.cli._summary`), as text or one JSON document.
    The text lists the first wells only, so only they are decoded (at 10^6 beds,
    decoding every core for 30 lines was 6.8 of the fit's 33 s of CPU)."""
    from faciesseq.cli._summary import (
        WELL_LIMIT,
        print_json,
        print_summary,
        rounded,
        summary_document,
    )
    from faciesseq.hmm.cautions import (
        contact_caution,
        fit_cautions,
        long_tracts,
        single_bed_tracts,
    )

    model = selection.best
    if args.format == "json":
        with warnings_to_stderr("fit"):
            interp = model.decode(successions)
        document = summary_document(interp, scheme, "fit", output=str(args.output))
        durations = {
            t: {**d, "median_thickness": rounded(d["median_thickness"])}
            for t, d in _durations(model, interp, scheme).items()
        }
        notes = {
            "cautions": fit_cautions(model),
            "single_bed_tracts": single_bed_tracts(model),
            # a tract never left: null (JSON has no infinity)
            "long_tracts": {
                t: b if b < float("inf") else None for t, b in long_tracts(model).items()
            },
            "contact_note": contact_caution(model),
        }
        diagnostics = {"diagnostics": _diagnostics(selection)}
        print_json({**document, "tract_durations": durations, **notes, **diagnostics})
        return
    listed, n_cores = _first_cores(successions, WELL_LIMIT)
    with warnings_to_stderr("fit"):
        interp = model.decode(listed)
    _print_fit(args, selection)
    if args.verbose:
        units = next(iter(interp)).units if len(interp) else ""
        print(_durations_line(_durations(model, interp, scheme), units, len(interp) < n_cores))
    for caution in fit_cautions(model):
        print(caution)
    # a fit without labels prints its own caution instead of the note
    note = interp.tracts_labelled
    print_summary(interp, scheme, "all in --format json", note=note, total=n_cores)
    print(f"model written to {args.output}")


def _diagnostics(selection) -> dict:
    """The model-selection and EM diagnostics ``--verbose`` prints, for ``--format
    json``: as the model file's ``training`` section keeps them (restarts without their
    log-likelihood histories), with the features, states and evidence weights."""
    from faciesseq.hmm.modelfile import model_to_dict

    model = selection.best
    training = model_to_dict(model, {"selection": selection.to_dict()["candidates"]})["training"]
    kept = (
        "selection",
        "graph_selection",
        "nested_start",
        "evidence_weights_rejected",
        "reference_check",
    )
    found = {k: training[k] for k in kept if k in training}
    best = training["restarts"][training["best_restart"]]
    weights = getattr(model, "evidence_weights_", None) or {}
    return {
        "features": list(model.features_),
        "states": list(model.states_.labels()),
        **found,
        "evidence_weights": {k: float(v) for k, v in weights.items()} or None,
        "log_likelihood": training["log_likelihood"],
        "restarts": len(training["restarts"]),
        "best_restart": {k: v for k, v in best.items() if k != "history"},
        "calibration": training["calibration"],
    }


def _first_cores(successions, n: int):
    """The successions of the first ``n`` cores of a succession table (each core's
    successions one after another), and the number of cores."""
    import numpy as np

    cores = successions.cores
    first = np.flatnonzero(np.r_[True, cores[1:] != cores[:-1]])
    stop = int(first[n]) if len(first) > n else len(cores)
    return successions.part(0, stop), len(first)


def run(args: argparse.Namespace) -> int:
    check_unit(args)
    parallel = parallel_options(args)
    from faciesseq._output import check_target

    check_target(args.output, force=args.force, folder=False, inputs=input_files(args))
    from faciesseq.hmm.modelfile import save_model

    labelled = args.labels is not None
    resolve_unit(args, labelled)
    resolve_suggest_ranks(args)
    scheme = load_scheme_option(args.scheme)
    tract_model = load_tracts_option(args.tracts)
    from faciesseq.scheme import default_tract_model

    substates = substate_counts(args, len((tract_model or default_tract_model()).order))
    reference = reference_option(args, labelled)
    cores, successions = _successions(args, scheme)
    check_features(args, cores)
    check_labels(cores, args.labels, tract_model or default_tract_model(), args.source)
    scheme = scheme_for_fit(args, cores, scheme, "fit", labelled)
    selection = _select(args, successions, scheme, tract_model, substates, parallel, reference)
    provenance = _provenance(args, cores, args.tracts)
    provenance["selection"] = selection.to_dict()["candidates"]
    if selection.best.unit_ != "grid":  # for decode to compare its beds with (faciesseq.novelty)
        from faciesseq.novelty import labelled_rank_range, training_beds

        provenance |= training_beds(successions)
        provenance |= labelled_rank_range(successions, selection.best, args.labels)
    save_model(selection.best, args.output, provenance)
    _report(args, selection, successions, scheme)
    return 0
