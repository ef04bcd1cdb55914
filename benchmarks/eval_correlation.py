"""Correlation of decoded surfaces across simulated wells, scored against same-age truth.

With ``--joint``: per-well against joint decoding (``joint_correlation.py``), with a
supervised and an unsupervised model, on the ramp or (``--section stacking``) the
stacking generator's section mode, whose surfaces carry their shared time step.

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
from joint_correlation import JointOptions, joint_decode

from faciesseq.core import Core, CoreSet
from faciesseq.correlation import AlignmentOptions, correlate
from faciesseq.correlation.picks import correlation_picks
from faciesseq.hmm.model import TractHMM
from faciesseq.scores import balanced_tract_accuracy
from faciesseq.simulate import load_scenario, load_stacking_scenario, simulate, simulate_stacking

SCENARIO = "configs/scenario-ramp.yaml"
STACKING = "configs/stacking-section.yaml"
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


def section_run(source: str, seed: int):
    """``(result, truth)`` of one simulated section: the forward model's ramp, or the
    stacking generator's section (whose surfaces carry their shared ``step``)."""
    if source == "ramp":
        result = simulate(load_scenario(SCENARIO), seed=seed)
        return result, true_surface_events(result)
    result = simulate_stacking(load_stacking_scenario(STACKING), seed=seed)
    return result, result.surfaces.rename(columns={"step": "event"})


def fit_model(source: str = "ramp", supervised: bool = True, step: float | None = None):
    """A tract model from the training seeds: supervised on the labelled cores, or
    unsupervised on every core (``TractHMM(random_state=0)``, defaults otherwise);
    on beds, or on a depth grid of ``step`` m."""
    cores = {}
    for seed in TRAIN_SEEDS:
        result, _ = section_run(source, seed)
        names = result.wells.loc[result.wells["labelled"] | (not supervised), "core"]
        for name in names:
            if name in result.cores.names:
                c = result.cores[name]
                cores[f"{name}-s{seed}"] = Core(f"{name}-s{seed}", c.intervals, c.units)
    grid = {"unit": "grid", "step": step} if step else {}
    model = TractHMM(scheme=result.scenario.scheme, random_state=0, **grid)
    return model.fit(CoreSet(cores, "m"), labels="tract" if supervised else None)


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
    """Counts of true, picked, recovered, reported and correct ties of one surface kind:
    ``true_ties``, ``picked_both``, ``recovered``, ``reported``, ``correct``,
    ``reported_sure`` and ``correct_sure`` (the ties not flagged doubtful)."""
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
    return {
        "true_ties": len(true_ties),
        "picked_both": reachable,
        "recovered": recovered,
        "reported": reported,
        "correct": correct,
        "reported_sure": sure,
        "correct_sure": correct_sure,
    }


def correlate_result(result, picks: pd.DataFrame, options: AlignmentOptions):
    wells = result.wells.rename(columns={"x_km": "position"})
    extents = {c.name: (c.top, c.base) for c in result.cores}
    return correlate(picks, extents, wells, options), wells


def run(
    seeds, kinds=("MFS", "SB"), options=None, tolerance=1.5, model=None, cache=None, threshold=1.0
):
    scenario = load_scenario(SCENARIO)
    options = options or AlignmentOptions()
    model = model if model is not None else fit_model("ramp")
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
                counts = score(corr, picks, truth, wells, kind, tolerance)
                rows.append({"seed": seed, "picks": label, "surface": kind, **counts})
    return pd.DataFrame(rows)


def tract_accuracy(interp, result) -> float:
    """Balanced accuracy (thickness-weighted) of the decoded tracts against the true ones.

    Every described interval takes the decoded tract of the bed holding its
    middle; scored by :func:`faciesseq.scores.balanced_tract_accuracy`.
    """
    rows = []
    table = interp.tracts_table()
    for core, own in result.cores.to_frame().groupby("core", sort=False):
        beds = table[table["core"] == core].sort_values("top")
        if not len(beds):
            continue
        mid = 0.5 * (own["top"].to_numpy(float) + own["base"].to_numpy(float))
        k = np.clip(np.searchsorted(beds["top"].to_numpy(float), mid, side="right") - 1, 0, None)
        rows.append(
            own.assign(tract=beds["tract"].to_numpy()[k], thickness=own["base"] - own["top"])
        )
    return balanced_tract_accuracy(pd.concat(rows)).balanced_accuracy


def contact_ties(result, truth, wells, model, kind, tolerance) -> int:
    """True same-age ties whose two surfaces both lie within ``tolerance`` of a bed
    contact of the model's successions: the most a decoder of beds can recover."""
    contacts: dict[str, list[float]] = {}
    for s in result.cores.successions(model.unit, model.step):
        contacts.setdefault(s.core, []).extend(s.beds["top"].tolist()[:-1])
    near = {}
    for t in truth[(truth["surface"] == kind) & truth["cored"]].itertuples(index=False):
        gap = np.abs(np.asarray(contacts.get(t.core, [np.inf])) - t.depth)
        near[(t.core, t.event)] = bool(gap.size and gap.min() <= tolerance)
    names = list(wells.sort_values("position")["core"])
    return sum(
        near.get((left, e), False) and near.get((right, e), False)
        for left, right in itertools.pairwise(names)
        for e in set(truth["event"])
    )


def shared_misses(picks, truth, wells, kind, tolerance) -> tuple[int, int]:
    """True cored surfaces of ``kind`` with no pick within ``tolerance``, and how many
    of them every cored neighbour misses too (or that have no cored neighbour)."""
    true = truth[(truth["surface"] == kind) & truth["cored"]]
    hit = {}
    for t in true.itertuples(index=False):
        own = picks[(picks["core"] == t.core) & (picks["surface"] == kind)]
        hit[(t.core, t.event)] = bool((np.abs(own["depth"] - t.depth) <= tolerance).any())
    names = list(wells.sort_values("position")["core"])
    missed = shared = 0
    for (core, event), found in hit.items():
        if found:
            continue
        k = names.index(core)
        around = [hit.get((n, event)) for n in names[max(k - 1, 0) : k + 2] if n != core]
        missed += 1
        shared += not any(h for h in around if h is not None)
    return missed, shared


def run_joint(seeds, models, kinds=("MFS", "SB"), tolerance=1.5, joint_options=None, source="ramp"):
    """Per-well against joint decoding, for each named model: ties and tract accuracy."""
    options = AlignmentOptions()
    rows = []
    for seed in seeds:
        result, truth = section_run(source, seed)
        wells = result.wells.rename(columns={"x_km": "position"})
        for label, model in models.items():
            plain = model.decode(result.cores)
            joint = joint_decode(model, result.cores, wells, joint_options, options)
            for mode, interp in (("per well", plain), ("joint", joint.interpretation)):
                picks = correlation_picks(interp)
                corr, _ = correlate_result(result, picks, options)
                accuracy = tract_accuracy(interp, result)
                for kind in kinds:
                    missed, around = shared_misses(picks, truth, wells, kind, tolerance)
                    rows.append(
                        {
                            "seed": seed,
                            "model": label,
                            "decoding": mode,
                            "surface": kind,
                            "tract_accuracy": accuracy,
                            "at_contacts": contact_ties(
                                result, truth, wells, model, kind, tolerance
                            ),
                            "missed": missed,
                            "missed_around": around,
                            **score(corr, picks, truth, wells, kind, tolerance),
                        }
                    )
    return pd.DataFrame(rows)


def joint_summary(frame: pd.DataFrame) -> pd.DataFrame:
    keys = ["model", "decoding", "surface"]
    total = frame.groupby(keys, sort=False)[
        [
            "true_ties",
            "at_contacts",
            "picked_both",
            "recovered",
            "reported",
            "correct",
            "missed",
            "missed_around",
        ]
    ].sum()
    total["ceiling"] = total["at_contacts"] / total["true_ties"]
    total["recall"] = total["recovered"] / total["true_ties"]
    total["precision"] = total["correct"] / total["reported"]
    total["tract_accuracy"] = frame.groupby(keys, sort=False)["tract_accuracy"].mean()
    return total


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


def _key_values(text: str) -> dict:
    """``"a=1,b=0.5"`` -> ``{"a": 1, "b": 0.5}`` (numbers only)."""
    pairs = (item.split("=", 1) for item in text.split(",") if item.strip())
    return {k.strip(): (int(v) if v.strip().isdigit() else float(v)) for k, v in pairs}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--seeds", type=int, nargs="+", default=[21, 22, 23, 24, 25])
    parser.add_argument("--tolerance", type=float, default=1.5, help="pick-to-truth match (m)")
    parser.add_argument("--kinds", nargs="+", default=["MFS", "SB"], help="surface kinds scored")
    parser.add_argument(
        "--joint",
        action="store_true",
        help="compare per-well and joint decoding, supervised and unsupervised models",
    )
    parser.add_argument(
        "--joint-options",
        default="",
        metavar="K=V,...",
        help="with --joint: JointOptions of joint_correlation.py, e.g. agreement=0.7,margin=0",
    )
    parser.add_argument(
        "--step",
        type=float,
        help="with --joint: models on a depth grid of this step (m) instead of beds",
    )
    parser.add_argument(
        "--section",
        choices=("ramp", "stacking"),
        default="ramp",
        help="with --joint: the forward model's ramp or the stacking generator's section",
    )
    args = parser.parse_args()
    start = time.perf_counter()
    pd.set_option("display.width", 160)
    if args.joint:
        models = {
            "supervised": fit_model(args.section, True, args.step),
            "unsupervised": fit_model(args.section, False, args.step),
        }
        options = JointOptions(**_key_values(args.joint_options))
        frame = run_joint(args.seeds, models, args.kinds, args.tolerance, options, args.section)
        print(frame.to_string(index=False))
        print()
        print(joint_summary(frame).round(3).to_string())
    else:
        frame = run(args.seeds, kinds=tuple(args.kinds), tolerance=args.tolerance)
        print(frame.to_string(index=False))
        print()
        print(summary(frame).round(3).to_string())
    print(f"\n{time.perf_counter() - start:.1f} s")


if __name__ == "__main__":
    main()
