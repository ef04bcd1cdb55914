"""Time reading and validating a large interval database against plain pandas.read_csv.

Usage: python benchmarks/io_read.py [n_cores] [intervals_per_core]

Writes an invented interval table (CSV and Parquet) in a temporary folder,
then times, in the same run, pandas.read_csv (the baseline: parsing only) and
faciesseq.io.read_cores (parsing, column roles, every check, CoreSet), best of
three. Prints one line per measurement and the ratio to the baseline.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.io import read_cores, summarise


def _table(n_cores: int, per_core: int, seed: int = 7) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    frames = []
    for k in range(n_cores):
        thick = np.round(rng.gamma(2.0, 0.4, per_core) + 0.05, 2)
        base = 1000.0 + np.cumsum(thick)
        frames.append(
            pd.DataFrame(
                {
                    "core": f"BM-{k:04d}",
                    "top": np.round(base - thick, 2),
                    "base": np.round(base, 2),
                    "facies": rng.choice(["CP", "FS", "USF", "LSF", "OTZ", "OFF", "SHM"], per_core),
                    "grain_size": rng.integers(1, 7, per_core).astype(float),
                    "contact": rng.choice(["sharp", "gradational", "erosional"], per_core),
                }
            )
        )
    return pd.concat(frames, ignore_index=True)


def _best(func, repeats: int = 3) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        func()
        times.append(time.perf_counter() - start)
    return min(times)


def main() -> None:
    n_cores = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    per_core = int(sys.argv[2]) if len(sys.argv) > 2 else 500
    table = _table(n_cores, per_core)
    with tempfile.TemporaryDirectory() as tmp:
        csv = Path(tmp) / "cores.csv"
        table.to_csv(csv, index=False)
        parquet = Path(tmp) / "cores.parquet"
        table.to_parquet(parquet, index=False)
        rows = len(table)
        base_csv = _best(lambda: pd.read_csv(csv))
        ours_csv = _best(lambda: read_cores(csv, units="m"))
        base_pq = _best(lambda: pd.read_parquet(parquet))
        ours_pq = _best(lambda: read_cores(parquet, units="m"))
        cores = read_cores(csv, units="m")
        summary = _best(lambda: summarise(cores), repeats=1)
    print(f"{rows} intervals in {n_cores} cores")
    print(f"pandas.read_csv      {base_csv:8.3f} s")
    print(f"read_cores(csv)      {ours_csv:8.3f} s  ratio {ours_csv / base_csv:6.1f}")
    print(f"pandas.read_parquet  {base_pq:8.3f} s")
    print(f"read_cores(parquet)  {ours_pq:8.3f} s  ratio {ours_pq / base_pq:6.1f}")
    print(f"summarise            {summary:8.3f} s")


if __name__ == "__main__":
    main()
