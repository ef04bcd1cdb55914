"""The facies order suggested from the transitions, with and without its basinward end
anchored at the facies floods bring in, against the schemes' ranks.

Run from the repository root::

    python benchmarks/eval_rank_cue.py [--newuser CSV]

Set before measuring (2026-12-05). Method: ``suggest_ranks(..., anchored=True)``
starts the Held-Karp path at :func:`faciesseq.markov.seriation.flooded_facies` (the
largest E_pre - E_post of Hattori 1976), otherwise the same path. Rule: the anchored
order becomes the default only if (1) it orders the new user's shallowing-upward
cycles (``--newuser``: offshore mudstone, lower shoreface, upper shoreface,
foreshore, coastal plain) with rho = 1, and (2) on no other set below is its
Spearman's rho against the scheme's ranks lower than the path's by more than 0.001.
Otherwise the path stays, and the anchor only serves as a second cue: where it and
the path disagree on the basinward end, the direction is called unclear.

Result of that rule: not kept (the anchored path lowers rho on 11 of the 24 other sets;
its disagreement with the path on the basinward end would turn the clear verdict of 7
sets unclear, 3 of them ordered with rho >= 0.96).

Set before the second measurement (2026-12-05), the cue of the trade: facies that are
true neighbours on the depth profile are joined both ways (shallowing steps and the
occasional one-step deepening), a flooding surface is a one-way jump. Cue: a
neighbour step of the path's order joined one way only (``N_ij > 0``, ``N_ji = 0``)
may be a flooding surface taken for a neighbour; the direction is then called
unclear and the step named. Rule: kept if it calls the new user's order unclear and
turns no clear verdict of a set with rho >= 0.9 unclear; the last column shows it.

Sets: every scenario under ``configs/`` with a scheme (``faciesseq simulate``, fit
seeds 201-203 pooled, as ``eval_suggested_ranks.py``); ``blind_generator.py`` and
``shelf_generator.py``, seeds 11-15, 8 cores each, their own schemes; the demo's
``demo_cores/cores.csv`` with ``configs/scheme-shoreface.yaml``; the Council Grove
wells (``tests/data/council_grove``, the project's ranks).
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import warnings
from pathlib import Path

import pandas as pd
from scipy.stats import spearmanr

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from eval_suggested_ranks import council_grove_successions  # noqa: E402
from eval_unsupervised import _cores, _runner  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.markov.seriation import UNCLEAR_SHARE, suggest_ranks  # noqa: E402
from faciesseq.scheme import load_scheme  # noqa: E402

MINIMAL = ["core", "top", "base", "facies"]
NEWUSER = {
    "offshore mudstone": 4,
    "lower shoreface": 3,
    "upper shoreface": 2,
    "foreshore": 1,
    "coastal plain": 0,
}


def _rho(suggestion, rank_of) -> float:
    codes = [c for c in suggestion.ranks if rank_of(c) is not None]
    return float(spearmanr([suggestion.ranks[c] for c in codes], [rank_of(c) for c in codes])[0])


def _row(name: str, successions, rank_of) -> str:
    path = suggest_ranks(successions)
    anchored = suggest_ranks(successions, anchored=True)
    before = "clear" if path.share >= UNCLEAR_SHARE else "unclear"
    now = "clear" if path.clear else "unclear"
    end = f"{path.order()[-1]} / {anchored.order()[-1]}"
    return (
        f"| {name} | {_rho(path, rank_of):.3f} | {path.share:.2f} of {path.n_steps} | "
        f"{before} | {now} | {_rho(anchored, rank_of):.3f} | {end} | "
        + (", ".join(f"{a}->{b} {n}:0" for a, b, n in path.one_way) or "none")
        + " |"
    )


def _scheme_rank(scheme):
    return lambda c: scheme.rank(c) if c in scheme else None


def _scenario_rows():
    for path in sorted((ROOT / "configs").glob("*.yaml")):
        if path.name.startswith(("scheme-", "tracts-")):
            continue
        runner, reason = _runner(path)
        if runner is None:
            yield f"| {path.stem} | {reason} | | |"
            continue
        scheme, run = runner
        train, _ = _cores(run, [201, 202, 203])
        cores = CoreSet.from_frame(train[MINIMAL], units="m")
        yield _row(path.stem, cores.successions("beds"), _scheme_rank(scheme))


def _generator_rows(script: str, seeds):
    with tempfile.TemporaryDirectory() as tmp:
        for seed in seeds:
            table, scheme = Path(tmp, f"{seed}.csv"), Path(tmp, f"{seed}.yaml")
            subprocess.run(
                [
                    *(sys.executable, str(ROOT / "benchmarks" / script), "--seed", str(seed)),
                    *("-o", str(table), "--scheme", str(scheme)),
                ],
                check=True,
            )
            frame = pd.read_csv(table)
            cores = CoreSet.from_frame(frame[MINIMAL], units="m")
            yield _row(
                f"{script} seed {seed}",
                cores.successions("beds"),
                _scheme_rank(load_scheme(scheme)),
            )


def _demo_row() -> str:
    table = pd.read_csv(ROOT / "demo_cores" / "cores.csv")
    cores = CoreSet.from_frame(table[MINIMAL], units="m")
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    return _row("demo (scheme-shoreface)", cores.successions("beds"), _scheme_rank(scheme))


def _council_grove_row() -> str:
    _, scheme, successions = council_grove_successions()
    return _row("Council Grove, 6 wells", successions, _scheme_rank(scheme))


def _newuser_row(path: str) -> str:
    cores = CoreSet.from_frame(pd.read_csv(path)[MINIMAL], units="m")
    return _row(f"new user's cycles ({path})", cores.successions("beds"), NEWUSER.get)


def main() -> int:
    args = sys.argv[1:]
    print(
        "| set | rho, path | steps leading landward | direction, share alone (before) | "
        "direction with the one-way cue (now) | rho, anchored path | basinward end: "
        "path / anchored | neighbour steps of the path joined one way |"
    )
    print("|---|---|---|---|---|---|---|---|")
    rows = []
    if "--newuser" in args:
        rows.append(_newuser_row(args[args.index("--newuser") + 1]))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for row in [
            *rows,
            *_scenario_rows(),
            *_generator_rows("blind_generator.py", range(11, 16)),
            *_generator_rows("shelf_generator.py", range(11, 16)),
            _demo_row(),
            _council_grove_row(),
        ]:
            print(row, flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
