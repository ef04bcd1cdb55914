"""Test data for the Markov statistics: the Council Grove wells as a CoreSet.

Real, open data copied into ``tests/data/council_grove/`` (see its README):
Dubois, Bohling & Chakrabarti (2007), Computers & Geosciences 33:599–617;
CSV published by Hall (2016), The Leading Edge 35:906–909 (Apache 2.0).
One row per 0.5 ft sample; here each sample becomes the interval
``[depth - 0.25, depth + 0.25]`` ft, samples are sorted by depth within a
well, a repeated depth keeps its first sample, and a depth step above
0.75 ft is a gap (as the task's data contract says).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet

DATA = Path(__file__).parent / "data" / "council_grove" / "facies_vectors_subset.csv"
PSEUDO_WELL = "Recruit F9"


def council_grove_samples() -> pd.DataFrame:
    return pd.read_csv(DATA)


def council_grove_coreset() -> CoreSet:
    """The six wells (five real, one pseudo-well) as intervals in feet."""
    raw = council_grove_samples()
    frames = []
    for well, part in raw.groupby("Well Name", sort=False):
        part = part.sort_values("Depth", kind="stable").drop_duplicates("Depth", keep="first")
        depth = part["Depth"].to_numpy(dtype=float)
        frames.append(
            pd.DataFrame(
                {
                    "core": well,
                    "top": depth - 0.25,
                    "base": depth + 0.25,
                    "facies": part["Facies"].astype(str).to_numpy(),
                    "formation": part["Formation"].to_numpy(),
                    "nm_m": part["NM_M"].to_numpy(dtype=float),
                }
            )
        )
    return CoreSet.from_frame(pd.concat(frames, ignore_index=True), units="ft")


def sample_steps(well: str) -> np.ndarray:
    raw = council_grove_samples()
    return np.diff(raw.loc[raw["Well Name"] == well, "Depth"].to_numpy(dtype=float))
