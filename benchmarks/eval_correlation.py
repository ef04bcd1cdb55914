"""Correlation of decoded surfaces across simulated wells, scored against same-age truth.

The forward model (``configs/scenario-ramp.yaml``, one dip section of 8 wells)
knows, for every well, its true surfaces and the age of every bed. A true
surface is given the time step of the base-level history at which the tract
changed across it (the history's own ``lower -> upper`` tract change nearest in
age to the beds on either side of the surface), so a *true same-age tie*
between neighbouring wells is the same surface of the same time step in both.

Two pick sets are correlated:

- ``decoded``: picks of a tract model fitted (supervised) on the labelled cores
  of seeds 1-4 (:class:`faciesseq.hmm.model.TractHMM`, ``random_state=0``) and
  decoded on the cores of the scored seeds;
- ``true tracts`` (the ceiling): the true surfaces themselves, probability 1,
  where cored.

A decoded pick is matched to the nearest true surface of its kind in its well
within ``--tolerance`` m; a reported tie is true when both its picks match true
surfaces of the same time step. Recall: true same-age ties between neighbours
(of the scored kind) that are reported; precision: reported ties that are true.

    python benchmarks/eval_correlation.py --seeds 21 22 23 24 25
"""

from __future__ import annotations

import argparse
import itertools
import time

import numpy as np
import pandas as pd

from faciesseq.core import Core, CoreSet
from faciesseq.correlation import AlignmentOptions, correlate
from faciesseq.correlation.picks import correlation_picks
from faciesseq.hmm.model import TractHMM
from faciesseq.simulate import load_scenario, simulate

SCENARIO = "configs/scenario-ramp.yaml"
TRAIN_SEEDS = (1, 2, 3, 4)


def history_events(steps: pd.DataFrame) -> pd.DataFrame:
    """Tract changes of the base-level history: ``lower``, ``upper``, ``time_kyr``, ``event``."""
    tract = steps["tract"].to_numpy()
    time_kyr = steps["time_kyr"].to_numpy(float)
    change = np.nonzero(tract[1:] != tract[:-1])[0]
    return pd.DataFrame(
        {
            "lower": tract[change],
            "upper": tract[change + 1],
            "time_kyr": time_kyr[change],
            "event": np.arange(len(change)),
        }
    )


def true_surface_events(result) -> pd.DataFrame:
    """The true surfaces of every well with the time step (``event``) each belongs to."""
    events = history_events(result.steps)
    cores = result.cores.to_frame()
    rows = []
    for s in result.surfaces.itertuples(index=False):
        beds = cores[cores["core"] == s.core]
        above = beds[np.isclose(beds["base"], s.depth)]["true_age_kyr"]
        below = beds[np.isclose(beds["top"], s.depth)]["true_age_kyr"]
        ages = [*above.tolist(), *below.tolist()]
        age = float(np.mean(ages)) if ages else np.nan
        same = events[(events["lower"] == s.lower_tract) & (events["upper"] == s.upper_tract)]
        if not len(same) or not np.isfinite(age):
            continue
        k = int(np.argmin(np.abs(same["time_kyr"].to_numpy() - age)))
        rows.append(
            {
                "core": s.core,
                "depth": float(s.depth),
                "surface": s.surface,
                "cored": bool(s.cored),
                "event": int(same["event"].iloc[k]),
            }
        )
    return pd.DataFrame(rows)


def fit_model(scenario):
    """A supervised tract model from the labelled cores of the training seeds."""
    cores = {}
    for seed in TRAIN_SEEDS:
        result = simulate(scenario, seed=seed)
        for name in result.wells.loc[result.wells["labelled"], "core"]:
            if name in result.cores.names:
                c = result.cores[name]
                cores[f"{name}-s{seed}"] = Core(f"{name}-s{seed}", c.intervals, c.units)
    return TractHMM(scheme=scenario.scheme, random_state=0).fit(CoreSet(cores, "m"), labels="tract")


def _assign(picks: pd.DataFrame, truth: pd.DataFrame, tolerance: float) -> dict:
    """(core, depth, surface) of each pick -> event of the nearest true surface of its kind."""
    out = {}
    for (core, kind), own in picks.groupby(["core", "surface"]):
        true = truth[(truth["core"] == core) & (truth["surface"] == kind)]
        if not len(true):
            continue
        for d in own["depth"]:
            gap = np.abs(true["depth"].to_numpy() - d)
            k = int(np.argmin(gap))
            if gap[k] <= tolerance:
                out[(core, round(float(d), 6), kind)] = int(true["event"].iloc[k])
    return out


def score(correlation, picks, truth: pd.DataFrame, wells: pd.DataFrame, kind: str, tolerance):
    """Counts of true, picked, recovered, reported and correct ties of one surface kind."""
    assign = _assign(picks, truth, tolerance)
    names = list(wells.sort_values("position")["core"])
    true_ties = set()
    for left, right in itertools.pairwise(names):
        a = truth[(truth["core"] == left) & (truth["surface"] == kind) & truth["cored"]]
        b = truth[(truth["core"] == right) & (truth["surface"] == kind) & truth["cored"]]
        for e in set(a["event"]) & set(b["event"]):
            true_ties.add((left, right, e))
    ties = correlation.ties[correlation.ties["surface"] == kind]
    found, reported, correct, sure, correct_sure = set(), 0, 0, 0, 0
    for t in ties.itertuples(index=False):
        ea = assign.get((t.core_left, round(float(t.depth_left), 6), kind))
        eb = assign.get((t.core_right, round(float(t.depth_right), 6), kind))
        ok = ea is not None and ea == eb
        reported += 1
        correct += ok
        sure += not t.doubtful
        correct_sure += ok and not t.doubtful
        if ok:
            found.add((t.core_left, t.core_right, ea))
    recovered = len(found & true_ties)
    picked = set(assign.items())
    reachable = sum(
        ((left, e) in {(c, v) for (c, _, _), v in picked})
        and ((right, e) in {(c, v) for (c, _, _), v in picked})
        for left, right, e in true_ties
    )
    return len(true_ties), reachable, recovered, reported, correct, sure, correct_sure


def correlate_result(result, picks: pd.DataFrame, options: AlignmentOptions):
    wells = result.wells.rename(columns={"x_km": "position"})
    extents = {c.name: (c.top, c.base) for c in result.cores}
    return correlate(picks, extents, wells, options), wells


def run(
    seeds, kinds=("MFS", "SB"), options=None, tolerance=1.5, model=None, cache=None, threshold=1.0
):
    scenario = load_scenario(SCENARIO)
    options = options or AlignmentOptions()
    model = model if model is not None else fit_model(scenario)
    rows = []
    for seed in seeds:
        if cache is not None and (seed, threshold) in cache:
            result, decoded = cache[(seed, threshold)]
        else:
            result = simulate(scenario, seed=seed)
            decoded = correlation_picks(model.decode(result.cores), threshold)
            if cache is not None:
                cache[(seed, threshold)] = (result, decoded)
        truth = true_surface_events(result)
        ceiling = truth[truth["cored"]].assign(probability=1.0)
        for label, picks in (("decoded", decoded), ("true tracts", ceiling)):
            corr, wells = correlate_result(result, picks, options)
            for kind in kinds:
                n_true, reach, rec, rep, cor, sure, cor_sure = score(
                    corr, picks, truth, wells, kind, tolerance
                )
                rows.append(
                    {
                        "seed": seed,
                        "picks": label,
                        "surface": kind,
                        "true_ties": n_true,
                        "picked_both": reach,
                        "recovered": rec,
                        "reported": rep,
                        "correct": cor,
                        "reported_sure": sure,
                        "correct_sure": cor_sure,
                    }
                )
    return pd.DataFrame(rows)


def summary(frame: pd.DataFrame) -> pd.DataFrame:
    total = frame.groupby(["picks", "surface"], sort=False)[
        [
            "true_ties",
            "picked_both",
            "recovered",
            "reported",
            "correct",
            "reported_sure",
            "correct_sure",
        ]
    ].sum()
    total["recall"] = total["recovered"] / total["true_ties"]
    total["recall_of_picked"] = total["recovered"] / total["picked_both"]
    total["precision"] = total["correct"] / total["reported"]
    total["precision_not_doubtful"] = total["correct_sure"] / total["reported_sure"]
    return total


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--seeds", type=int, nargs="+", default=[21, 22, 23, 24, 25])
    parser.add_argument("--tolerance", type=float, default=1.5, help="pick-to-truth match (m)")
    args = parser.parse_args()
    start = time.perf_counter()
    frame = run(args.seeds, tolerance=args.tolerance)
    pd.set_option("display.width", 160)
    print(frame.to_string(index=False))
    print()
    print(summary(frame).round(3).to_string())
    print(f"\n{time.perf_counter() - start:.1f} s")


if __name__ == "__main__":
    main()
