"""Synthetic decoded cores for figure and appendix tests (invented numbers)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.interpretation import CoreInterpretation, Interpretation
from faciesseq.scheme import TractModel

#: The shoreface facies scheme of the repository (path independent of the working folder).
SHOREFACE = str(Path(__file__).resolve().parents[1] / "configs" / "scheme-shoreface.yaml")


def synthetic_core(
    model: TractModel,
    name: str = "W-1",
    n_beds: int = 40,
    seed: int = 0,
    facies: tuple[str, ...] = ("CP", "FS", "USF", "LSF", "OTZ", "OFF", "SHM"),
    gap_after: int | None = 25,
    grain: bool = False,
) -> CoreInterpretation:
    """A core of ``n_beds`` beds with cyclic tracts, a gap, posteriors and picks."""
    rng = np.random.default_rng(seed)
    tracts = model.order
    surfaces = tuple(dict.fromkeys(s.code for s in model.surfaces))
    thickness = rng.uniform(0.3, 2.5, n_beds)
    top = 100.0 + np.r_[0.0, np.cumsum(thickness[:-1])]
    segment = np.zeros(n_beds, dtype=int)
    if gap_after is not None:
        top[gap_after:] += 3.0
        segment[gap_after:] = 1
    base = top + thickness
    # tracts in runs of 4-8 beds, cycling through the order (depth order: youngest first)
    run = np.repeat(np.arange(n_beds), rng.integers(4, 9, n_beds))[:n_beds]
    tract = np.array([tracts[(-r) % len(tracts)] for r in run])
    post = rng.dirichlet(np.ones(len(tracts)) * 0.4, n_beds)
    for i, t in enumerate(tract):
        post[i] = 0.35 * post[i]
        post[i, tracts.index(t)] += 0.65
    beds = pd.DataFrame(
        {
            "segment": segment,
            "top": top,
            "base": base,
            "thickness": thickness,
            "facies": [facies[k % len(facies)] for k in rng.integers(0, len(facies), n_beds)],
        }
    )
    if grain:
        beds["grain_size"] = rng.uniform(1, 6, n_beds).round(1)
    beds["tract"] = tract
    for k, t in enumerate(tracts):
        beds[f"p_{t}"] = post[:, k]
    rows = []
    for i in range(n_beds - 1):
        if segment[i] != segment[i + 1]:
            continue
        row = {
            "segment": int(segment[i]),
            "depth": float(base[i]),
            "lower_tract": tract[i + 1],
            "upper_tract": tract[i],
        }
        change = tract[i] != tract[i + 1]
        for s in surfaces:
            high = change and s == "MFS"
            row[f"p_{s}"] = float(rng.uniform(0.4, 0.95) if high else rng.uniform(0, 0.08))
        rows.append(row)
    boundaries = pd.DataFrame(rows)
    best = boundaries.sort_values("p_MFS", ascending=False).head(2)
    picks = pd.DataFrame(
        {
            "surface": "MFS",
            "name": "maximum flooding surface",
            "depth": best["depth"].to_numpy(),
            "probability": best["p_MFS"].to_numpy(),
            "depth_top": best["depth"].to_numpy() - 0.6,
            "depth_base": best["depth"].to_numpy() + 0.4,
            "segment": best["segment"].to_numpy(),
        }
    )
    return CoreInterpretation(name, "m", tracts, surfaces, beds, boundaries, picks, -123.4)


def synthetic_interpretation(model: TractModel, names=("W-1", "W-2")) -> Interpretation:
    cores = {n: synthetic_core(model, n, seed=k) for k, n in enumerate(names)}
    first = next(iter(cores.values()))
    return Interpretation.from_cores(cores, first.tracts, first.surfaces)


def held_at_labels(decoded, rows):
    """``decoded`` (a core's or several cores' interpretation) as a decode with
    ``--keep-labels`` gives it: the beds of ``rows`` (of its beds table) held at their
    label (``clamped``), their tract's probability 1."""
    import dataclasses

    beds = decoded.beds.copy()
    held = np.zeros(len(beds), dtype=bool)
    held[list(rows)] = True
    for t in decoded.tracts:
        beds.loc[held, f"p_{t}"] = (beds.loc[held, "tract"] == t).astype(float)
    return dataclasses.replace(decoded, beds=beds.assign(clamped=held))


def synthetic_coreset(interpretation: Interpretation, units: str = "m"):
    """The core set whose beds are those of ``interpretation`` (one interval per bed)."""
    from faciesseq.core import CoreSet

    frames = [c.beds[["top", "base", "facies"]].assign(core=c.core) for c in interpretation]
    return CoreSet.from_frame(pd.concat(frames, ignore_index=True), units=units)
