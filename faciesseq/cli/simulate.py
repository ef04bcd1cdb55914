"""``faciesseq simulate``: synthetic cores with known tracts from a scenario file."""

from __future__ import annotations

import argparse
import sys


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "simulate",
        help="forward model: synthetic cores with known systems tracts from a scenario",
        description=(
            "Run the forward model of a scenario YAML file (base level, subsidence, "
            "sediment supply, shelf profile, wells, noise) and write the described cores "
            "with their true tracts, the true surfaces, the time-step truth, figures and "
            "a SQLite file holding the same tables. A scenario with 'generator: stacking' "
            "runs the parasequence-stacking generator instead (tables only)."
        ),
    )
    parser.add_argument("scenario", metavar="SCENARIO.yaml", help="scenario file")
    parser.add_argument("-o", "--output", required=True, metavar="DIR", help="output folder")
    parser.add_argument(
        "--seed", type=int, metavar="S", help="noise seed (default: the scenario's)"
    )
    parser.add_argument("--no-figures", action="store_true", help="write the tables only")
    parser.add_argument("--force", action="store_true", help="replace an existing output folder")
    parser.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
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
    from pathlib import Path

    if Path(args.output).exists() and not args.force:
        raise ConfigError(
            "output folder exists; choose another -o or pass --force to replace it",
            file=args.output,
        )
    scenario = load_any_scenario(args.scenario)
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
