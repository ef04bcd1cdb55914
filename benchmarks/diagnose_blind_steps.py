"""The facies rank step at the true tract boundaries of the blind generator's cores.

Run from the repository root::

    python benchmarks/diagnose_blind_steps.py --seed 281 --cores 20

Writes the cores with ``benchmarks/blind_generator.py`` into a temporary folder and
prints, for each kind of true boundary (tract below -> tract above), how many there
are and the step of the water-depth index from the bed below to the bed above
(positive = deeper upward: what a flooding surface looks like in a core). It says
which boundaries of that generator a reading of the facies alone can see as a
deepening, a shallowing or neither.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
from pathlib import Path

import pandas as pd

HERE = Path(__file__).resolve().parent
DEPTH_INDEX = {"CPL": 0, "FSH": 1, "USF": 2, "LSF": 3, "OTR": 4, "OFF": 5}  # the generator's


def boundary_steps(cores: pd.DataFrame) -> pd.DataFrame:
    """One row per true tract boundary: ``below, above, step`` (base to top)."""
    rows = []
    for _, beds in cores.groupby("core", sort=False):
        beds = beds.sort_values("top", ascending=False)  # base to top
        rank = beds["facies"].map(DEPTH_INDEX).to_numpy()
        tract = beds["tract"].to_numpy()
        for i in range(1, len(beds)):
            if tract[i] != tract[i - 1]:
                rows.append((tract[i - 1], tract[i], int(rank[i] - rank[i - 1])))
    return pd.DataFrame(rows, columns=["below", "above", "step"])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, default=281)
    ap.add_argument("--cores", type=int, default=20)
    a = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "cores.csv"
        generator = [sys.executable, str(HERE / "blind_generator.py")]
        subprocess.run(
            [*generator, "--seed", str(a.seed), "--cores", str(a.cores), "-o", path], check=True
        )
        cores = pd.read_csv(path)
    table = boundary_steps(cores).groupby(["below", "above"])["step"]
    summary = table.agg(["count", "mean", "min", "max"])
    summary["deepening"] = table.apply(lambda s: float((s > 0).mean()))
    print(f"blind generator, seed {a.seed}, {a.cores} cores: facies step at true boundaries\n")
    print("| below -> above | boundaries | mean step | min | max | share deepening |")
    print("|---|---|---|---|---|---|")
    for (below, above), row in summary.iterrows():
        print(
            f"| {below} -> {above} | {int(row['count'])} | {row['mean']:+.2f} | "
            f"{int(row['min']):+d} | {int(row['max']):+d} | {row['deepening']:.2f} |"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main())
