"""Ties of ``faciesseq correlate`` on the demo, scored by the true ages the demo cores carry.

The demo cores (``demo_cores/cores.csv``) keep ``true_age_kyr`` of every bed. A
pick's age is the mean age of the beds directly above and below its depth; a tie
joins two picks whose ages differ by ``|age_left - age_right|``. The demo's
base-level cycles last 100 kyr, so a tie more than 25 kyr apart joins surfaces
of different cycles (or the wrong half of one).

    faciesseq correlate demo_cores/cores.csv --wells demo_cores/wells.csv \\
        --model DEMO/model.json -o corr
    python benchmarks/demo_tie_ages.py corr/ties.csv demo_cores/cores.csv
"""

from __future__ import annotations

import argparse

import numpy as np
import pandas as pd


def pick_age(beds: pd.DataFrame, depth: float) -> float:
    """Mean true age of the beds touching ``depth`` (above and below)."""
    near = beds[np.isclose(beds["base"], depth) | np.isclose(beds["top"], depth)]
    if not len(near):
        near = beds[(beds["top"] <= depth) & (beds["base"] >= depth)]
    return float(near["true_age_kyr"].mean()) if len(near) else np.nan


def tie_ages(ties: pd.DataFrame, cores: pd.DataFrame) -> pd.DataFrame:
    by_core = {name: beds for name, beds in cores.groupby("core")}
    left = [pick_age(by_core[c], d) for c, d in zip(ties["core_left"], ties["depth_left"])]
    right = [pick_age(by_core[c], d) for c, d in zip(ties["core_right"], ties["depth_right"])]
    return ties.assign(age_left=left, age_right=right, age_gap=np.abs(np.subtract(left, right)))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("ties")
    parser.add_argument("cores")
    parser.add_argument("--kyr", type=float, default=25.0, help="a tie is wrong beyond this")
    args = parser.parse_args()
    scored = tie_ages(pd.read_csv(args.ties), pd.read_csv(args.cores))
    sure = scored[~scored["doubtful"]]
    wrong = sure[sure["age_gap"] > args.kyr]
    wrong_all = scored[scored["age_gap"] > args.kyr]
    print(
        f"ties {len(scored)}, not doubtful {len(sure)}; more than {args.kyr:g} kyr apart: "
        f"{len(wrong)} not doubtful, {len(wrong_all)} in all; "
        f"not doubtful within {args.kyr:g} kyr: {len(sure) - len(wrong)}"
    )
    columns = ["surface_id", "core_left", "depth_left", "core_right", "depth_right"]
    print(wrong[[*columns, "confidence", "age_gap"]].to_string(index=False))


if __name__ == "__main__":
    main()
