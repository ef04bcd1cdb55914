"""``faciesseq simulate``: synthetic cores with known tracts from a scenario file."""

from __future__ import annotations

import argparse
import sys

from faciesseq.cli._common import add_output_arguments

EXAMPLES = """\
examples:
  faciesseq simulate configs/demo-quillerby.yaml -o quillerby
  faciesseq simulate my-scenario.yaml --seed 7 --no-figures -o runs/seed-7
  faciesseq simulate configs/demo-quillerby.yaml -o demo_cores --force
"""


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "simulate",
        help="forward model: synthetic cores with known systems tracts from a scenario",
        description=(
            "Run the forward model of a scenario YAML file (base level, subsidence, "
            "sediment supply, shelf profile, wells, noise) and write the described cores "
            "with their true tracts, the true surfaces, the time-step truth, figures and "
            "a SQLite file holding the same tables. A scenario with 'generator: stacking' "
            "runs the parasequence-stacking generator instead (tables only). With --force "
            "an existing output folder is replaced; files in it that no simulation writes "
            "(a README) are kept."
        ),
        epilog=EXAMPLES,
    )
    parser.add_argument("scenario", metavar="SCENARIO.yaml", help="scenario file")
    add_output_arguments(parser, "DIR", "output folder", required=True)
    parser.add_argument(
        "--seed", type=int, metavar="S", help="noise seed (default: the scenario's)"
    )
    parser.add_argument("--no-figures", action="store_true", help="write the tables only")
    parser.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from faciesseq._output import check_target
    from faciesseq.cli._common import require_file
    from faciesseq.errors import ConfigError
    from faciesseq.simulate import (
        StackingScenario,
        load_any_scenario,
        simulate,
        simulate_stacking,
    )
    from faciesseq.simulate.output import write_simulation

    if args.seed is not None and args.seed < 0:
        raise ConfigError(f"--seed must be a whole number >= 0, got {args.seed}")
    check_target(args.output, force=args.force, folder=True)
    scenario = load_any_scenario(require_file(args.scenario))
    if isinstance(scenario, StackingScenario):
        result = simulate_stacking(scenario, seed=args.seed)
    else:
        result = simulate(scenario, seed=args.seed)
    write_simulation(result, args.output, figures=not args.no_figures, force=args.force)
    summary = result.to_dict()
    sys.stdout.write(
        f"simulated {scenario.name!r} (seed {result.seed}): {summary['cores']} cores, "
        f"{summary['intervals']} intervals, {summary['surfaces']} surfaces -> {args.output}\n"
    )
    return 0
