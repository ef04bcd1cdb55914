"""How well the tract model recovers known tracts and MFSs of simulated cores, by label mode.

Run from the repository root::

    python benchmarks/eval_unsupervised.py            # report seeds, three scenarios
    python benchmarks/eval_unsupervised.py --quick    # one scenario, fewer cores (seconds)
    python benchmarks/eval_unsupervised.py --tune     # tuning seeds (never the report's)
    python benchmarks/eval_unsupervised.py --scenario my-stacking.yaml --json out.json

The model is fitted on the training cores of each scenario and decodes held-out
cores of other seeds, in three modes:

- ``unsupervised``: no labels;
- ``semi-supervised``: the true tracts of three training cores (the scenario's
  labelled wells of the first fit seed, else its first three cores), no
  labels elsewhere;
- ``supervised``: the true tracts of every training core.

Scores (:mod:`faciesseq.scores`) on the held-out cores, against the described
beds of the core (the intervals of the core description, each with its true
tract; a decoded bed spans one or more of them): balanced accuracy
(thickness-weighted recall averaged over true tracts), decoded / true tract
boundaries, MFS pick recall and precision within 2 m (cored true MFSs only),
expected calibration error of the probability of the decoded tract (10 bins,
thickness-weighted; Guo et al. 2017, ICML), its thickness-weighted mean, and the
fit and decode wall time. Baseline in the same run: the trend rule
(:func:`faciesseq.hmm.baseline.trend_rule`; its MFS picks are the contacts with
TST below and another tract above; no probabilities, so no ECE). Ceiling in the
same run: the true tract of each amalgamated bed (a bed's tract is that of most of
its thickness), the best a column giving each bed one tract can score.

Scenarios: the physical forward model (``configs/scenario-*.yaml``,
:func:`faciesseq.simulate.simulate`), and any ``--scenario`` file; files with
``generator: stacking`` need :mod:`faciesseq.simulate.stacking` and are skipped,
with a message, where it is absent.

The model is made by :func:`make_model` alone, so another model with the same
``fit(cores, labels=...)`` / ``decode(cores)`` can be measured by changing it.
"""

from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import write_json  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.scores import (  # noqa: E402
    balanced_tract_accuracy,
    boundary_ratio,
    expected_calibration_error,
    half_cycle_accuracy,
    surface_pick_scores,
)

#: ``--model bed-level``: the tract model before the stacking context (bed-level
#: pieces, permissive graph), kept as the named baseline of the comparison;
#: ``--model weighted``: ``weigh_evidence=True`` (the default since 2026-12-03);
#: ``--model per-bed-evidence``: ``weigh_evidence=False`` (the default before).
MODEL = "default"
#: ``--unit``: what every fit reads (``auto``, the default: the described intervals
#: with labels, amalgamated beds without; ``beds``: the default before 2026-12-04).
UNIT = "auto"


def make_model(scheme, mode: str, seed: int):
    """The model measured: an unfitted estimator with ``fit(cores, labels)`` and ``decode``.

    ``mode`` is ``"unsupervised"``, ``"semi-supervised"`` or ``"supervised"``
    (the labels are given to ``fit``, not here); ``seed`` is the fit seed.
    """
    from faciesseq.hmm import TractHMM

    if MODEL == "bed-level":
        from faciesseq.hmm.model import DEFAULT_FEATURES
        from faciesseq.scheme import permissive_tract_model

        return _BedLevel(scheme, seed, DEFAULT_FEATURES, permissive_tract_model())
    return TractHMM(
        scheme=scheme,
        random_state=seed,
        weigh_evidence=MODEL != "per-bed-evidence",
        nested_start=MODEL != "priors-start",
        unit=UNIT,
    )


class _BedLevel:
    """The bed-level pieces (contact only where the cores have it) on the permissive graph."""

    def __init__(self, scheme, seed, features, tract_model) -> None:
        self.args = {"scheme": scheme, "random_state": seed, "tract_model": tract_model}
        self.features = features

    def fit(self, cores, labels=None):
        from faciesseq.hmm import TractHMM

        columns = cores.to_frame().columns
        feats = [f for f in self.features if f != "contact" or "contact" in columns]
        return TractHMM(features=feats, **self.args).fit(cores, labels=labels)


MODES = ("unsupervised", "semi-supervised", "supervised")
SCENARIOS = ("scenario-ramp.yaml", "scenario-hinge-table.yaml", "scenario-asymmetric-shelf.yaml")
SEEDS = {
    # (fit seeds, decode seeds); tuning and report seeds never overlap
    "tune": ((11, 12, 13), (14, 15)),
    "report": ((21, 22, 23, 24, 25), (26, 27)),
}
QUICK = {"tune": ((11, 12), (14,)), "report": ((21, 22), (26,))}
N_SEMI = 3
TOLERANCE_M = 2.0


# ------------------------------------------------------------------ scenarios
def _generator(path: Path) -> str:
    with open(path, encoding="utf-8") as fh:
        data = yaml.safe_load(fh) or {}
    return str(data.get("generator", "physical")) if isinstance(data, dict) else "physical"


def _runner(path: Path):
    """(scheme, seed -> (CoreSet, surfaces)) for a scenario file, or a reason to skip it."""
    if _generator(path) == "stacking":
        try:
            from faciesseq.simulate.stacking import load_stacking_scenario, simulate_stacking
        except ImportError as exc:
            return None, f"skipped: `generator: stacking` needs faciesseq.simulate.stacking ({exc})"
        scenario = load_stacking_scenario(path)
        return (scenario.scheme, lambda seed: simulate_stacking(scenario, seed)), None
    from faciesseq.simulate import load_scenario, simulate

    scenario = load_scenario(path)
    return (scenario.scheme, lambda seed: simulate(scenario, seed=seed)), None


def _cores(run, seeds) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Interval table and true surfaces of the cores of several seeds (core names + /s<seed>)."""
    frames, surfaces = [], []
    for seed in seeds:
        result = run(seed)
        t = result.cores.to_frame()
        t["core"] = t["core"].astype(str) + f"/s{seed}"
        frames.append(t)
        s = result.surfaces.copy()
        s["core"] = s["core"].astype(str) + f"/s{seed}"
        surfaces.append(s)
    return pd.concat(frames, ignore_index=True), pd.concat(surfaces, ignore_index=True)


def _semi_cores(train: pd.DataFrame, first_seed: int) -> list[str]:
    """The scenario's labelled wells of the first fit seed (its interpreter's ``tract``
    column is filled there), topped up with its first cores, then with the cores of the
    other fit seeds in order, ``N_SEMI`` (3; ``--labelled-cores``) in all."""
    first = train[train["core"].str.endswith(f"/s{first_seed}")]
    names = list(pd.unique(first["core"]))
    labelled = []
    if "tract" in first:
        has = first.groupby("core", sort=False)["tract"].apply(lambda s: s.notna().any())
        labelled = [c for c in names if has.get(c, False)]
    others = [c for c in pd.unique(train["core"]) if c not in names]
    return (labelled + [c for c in names if c not in labelled] + others)[:N_SEMI]


def _training_set(train: pd.DataFrame, mode: str, semi: list[str]) -> tuple[CoreSet, str | None]:
    t = train.drop(columns=["tract"], errors="ignore")
    if mode == "unsupervised":
        return CoreSet.from_frame(t, units="m"), None
    t["tract"] = (
        t["true_tract"] if mode == "supervised" else t["true_tract"].where(t["core"].isin(semi))
    )
    return CoreSet.from_frame(t, units="m"), "tract"


def minimal_labelled_sets(run, fit, decode) -> tuple:
    """Cores of the fit seeds as the minimal table ``core, top, base, facies`` with the
    ``tract`` of three cores (:func:`_semi_cores`), then of every core; the decode seeds'
    minimal table; and their intervals and true surfaces, for :func:`score`:
    ``([three labelled, every core labelled], blind, test, truth)``."""
    columns = ["core", "top", "base", "facies"]
    train, _ = _cores(run, fit)
    test, truth = _cores(run, decode)
    semi = train["core"].isin(_semi_cores(train, fit[0]))
    sets = [
        CoreSet.from_frame(train[columns].assign(tract=tract), units="m")
        for tract in (train["true_tract"].where(semi), train["true_tract"])
    ]
    return sets, CoreSet.from_frame(test[columns], units="m"), test, truth


# ------------------------------------------------------------------ baseline
def trend_rule_table(cores: CoreSet, scheme) -> pd.DataFrame:
    """The trend rule's tract for every bed (``core, top, base, tract``): the baseline
    (:func:`faciesseq.hmm.baseline.trend_rule`, no fitted parameter)."""
    from faciesseq.hmm.baseline import trend_rule
    from faciesseq.scheme import default_tract_model

    tm = default_tract_model()
    rows = []
    for s in cores.successions("beds"):  # each base to top
        ranks = np.array([scheme.rank(f) if f in scheme else np.nan for f in s.facies])
        rule = trend_rule(ranks, np.array([len(s)]), tm)
        rows.append(s.beds[["top", "base"]].assign(core=s.core, tract=[tm.order[i] for i in rule]))
    return pd.concat(rows, ignore_index=True)


def _column_mfs_picks(tracts: pd.DataFrame) -> pd.DataFrame:
    """MFS picks of a tract column: the contacts with TST below and another tract above."""
    t = tracts.sort_values(["core", "top"], kind="stable")
    core, top = t["core"].to_numpy(), t["top"].to_numpy(float)
    base, tract = t["base"].to_numpy(float), t["tract"].astype(str).to_numpy()
    at = (
        (core[1:] == core[:-1])
        & (np.abs(top[1:] - base[:-1]) <= 1e-6)
        & (tract[1:] == "TST")
        & (tract[:-1] != "TST")
    )
    return pd.DataFrame({"core": core[1:][at], "surface": "MFS", "depth": top[1:][at]})


class _RuleDecode:
    """The trend rule seen as a decode result (no probabilities)."""

    def __init__(self, cores: CoreSet, scheme) -> None:
        self._tracts = trend_rule_table(cores, scheme)

    def tracts_table(self) -> pd.DataFrame:
        return self._tracts

    def picks_table(self) -> pd.DataFrame:
        return _column_mfs_picks(self._tracts)


class _BedCeiling(_RuleDecode):
    """The true tract of each amalgamated bed (the tract of most of its thickness):
    the best any column that gives a whole bed one tract can score, as the model's
    columns do. No probabilities, so no ECE."""

    def __init__(self, beds: pd.DataFrame) -> None:
        self._tracts = beds[["core", "top", "base"]].assign(tract=beds["true_tract"])


# ------------------------------------------------------------------ scoring
def _decoded_on_intervals(tracts: pd.DataFrame, intervals: pd.DataFrame) -> pd.DataFrame:
    """Each described interval with the decoded bed that holds its mid-depth: ``tract``
    and ``p_tract`` (the probability of that tract); None / NaN where no bed holds it."""
    pcols = [c for c in tracts.columns if c.startswith("p_")]
    col = pd.Index([c[2:] for c in pcols]).get_indexer(tracts["tract"].astype(str))
    probs = tracts[pcols].to_numpy(float)
    p_tract = np.full(len(tracts), np.nan)
    if pcols:
        p_tract = np.where(col >= 0, probs[np.arange(len(tracts)), np.maximum(col, 0)], np.nan)
    tracts = tracts.assign(p_tract=p_tract)
    out = []
    for core, iv in intervals.groupby("core", sort=False):
        beds = tracts[tracts["core"] == core].sort_values("top")
        mid = ((iv["top"] + iv["base"]) / 2).to_numpy(float)
        top, base = beds["top"].to_numpy(float), beds["base"].to_numpy(float)
        iv = iv.assign(tract=None, p_tract=np.nan)
        if len(beds):
            k = np.clip(np.searchsorted(top, mid, side="right") - 1, 0, len(beds) - 1)
            inside = (mid >= top[k]) & (mid <= base[k])
            iv["tract"] = np.where(inside, beds["tract"].astype(str).to_numpy()[k], None)
            iv["p_tract"] = np.where(inside, beds["p_tract"].to_numpy(float)[k], np.nan)
        out.append(iv)
    return pd.concat(out, ignore_index=True)


def score(interp, intervals: pd.DataFrame, true_surfaces: pd.DataFrame) -> dict:
    """Every score of one decode (see the module docstring)."""
    iv = _decoded_on_intervals(interp.tracts_table(), intervals)
    iv["thickness"] = iv["base"] - iv["top"]
    undecoded = iv["tract"].isna()
    iv = iv[~undecoded]
    acc = balanced_tract_accuracy(iv)
    ratio = boundary_ratio(iv)
    truth = true_surfaces
    if "cored" in truth:
        truth = truth[truth["cored"].astype(bool)]
    mfs = surface_pick_scores(interp.picks_table(), truth, "MFS", TOLERANCE_M)
    w = iv["thickness"].to_numpy(float)
    right = iv["tract"].astype(str).to_numpy() == iv["true_tract"].astype(str).to_numpy()
    p = iv["p_tract"].to_numpy(float)
    return {
        "balanced_accuracy": acc.balanced_accuracy,
        "half_cycle_accuracy": half_cycle_accuracy(iv).balanced_accuracy,
        "accuracy": acc.accuracy,
        "recall": dict(acc.recall),
        "boundary_ratio": ratio.ratio,
        "n_boundaries_decoded": ratio.n_pred,
        "n_boundaries_true": ratio.n_true,
        "mfs_recall": mfs.recall,
        "mfs_precision": mfs.precision,
        "mfs": mfs.to_dict(),
        "ece": expected_calibration_error(p, right, weights=w, bins=10)
        if np.isfinite(p).all()
        else float("nan"),
        "mean_probability": float(np.sum(w * p) / np.sum(w)),
        "undecoded_intervals": int(undecoded.sum()),
    }


def _self_decoded(model) -> float:
    """Share of the beds of cores simulated from the fitted model that it decodes
    right, where its probabilities were checked by simulation (else NaN)."""
    cal = getattr(model, "calibration_", None)
    if isinstance(cal, dict) and cal.get("method") == "parametric bootstrap":
        return float(cal["after"]["accuracy"])
    return float("nan")


# ------------------------------------------------------------------ run
def evaluate(path: Path, fit_seeds, decode_seeds, modes=MODES) -> dict:
    runner, skip = _runner(path)
    if runner is None:
        return {"scenario": str(path), "skipped": skip}
    scheme, run = runner
    train, _ = _cores(run, fit_seeds)
    test, true_surfaces = _cores(run, decode_seeds)
    test_set = CoreSet.from_frame(test.drop(columns=["tract"], errors="ignore"), units="m")
    semi = _semi_cores(train, fit_seeds[0])
    # the boundaries a bed-scale column can reach: changes of the true tract between the
    # amalgamated beds (successive described beds of one facies merged; bed true_tract)
    beds = pd.concat([s.beds.assign(core=s.core) for s in test_set.successions("beds")])
    reachable = boundary_ratio(beds.assign(tract=beds["true_tract"])).n_true
    rows = []
    for mode in modes:
        cores, labels = _training_set(train, mode, semi)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            t0 = time.perf_counter()
            model = make_model(scheme, mode, fit_seeds[0]).fit(cores, labels=labels)
            fit_s = time.perf_counter() - t0
            t0 = time.perf_counter()
            interp = model.decode(test_set)
            decode_s = time.perf_counter() - t0
        rows.append(
            {
                "mode": mode,
                **score(interp, test, true_surfaces),
                "fit_s": fit_s,
                "decode_s": decode_s,
                "temperature": getattr(model, "temperature_", float("nan")),
                # the model decoding its own simulated cores (the bootstrap's record)
                "self_decoded": _self_decoded(model),
                "warnings": sorted({str(w.message).split("\n")[0] for w in caught}),
            }
        )
    t0 = time.perf_counter()
    rule = _RuleDecode(test_set, scheme)
    rows.append(
        {
            "mode": "trend rule (baseline)",
            **score(rule, test, true_surfaces),
            "fit_s": float("nan"),
            "decode_s": time.perf_counter() - t0,
            "warnings": [],
        }
    )
    rows.append(
        {
            "mode": "true tract per bed (ceiling)",
            **score(_BedCeiling(beds), test, true_surfaces),
            "fit_s": float("nan"),
            "decode_s": float("nan"),
            "warnings": [],
        }
    )
    return {
        "scenario": str(path.relative_to(ROOT) if path.is_relative_to(ROOT) else path),
        "fit_seeds": list(fit_seeds),
        "decode_seeds": list(decode_seeds),
        "n_fit_cores": int(train["core"].nunique()),
        "n_fit_intervals": len(train),
        "n_decode_cores": int(test["core"].nunique()),
        "n_decode_intervals": len(test),
        "semi_supervised_cores": semi,
        "n_boundaries_true_between_amalgamated_beds": reachable,
        "true_tract_thickness_m": {
            str(k): float(v)
            for k, v in (test["base"] - test["top"]).groupby(test["true_tract"]).sum().items()
        },
        "rows": rows,
    }


def _f(x: float, nd: int = 3) -> str:
    return "-" if x is None or (isinstance(x, float) and np.isnan(x)) else f"{x:.{nd}f}"


def markdown(result: dict) -> str:
    if "skipped" in result:
        return f"### `{result['scenario']}`\n\n{result['skipped']}"
    thick = ", ".join(f"{k} {v:.0f} m" for k, v in result["true_tract_thickness_m"].items())
    lines = [
        f"### `{result['scenario']}`",
        "",
        f"Fit seeds {result['fit_seeds']} ({result['n_fit_cores']} cores, "
        f"{result['n_fit_intervals']} described beds); decode seeds {result['decode_seeds']} "
        f"({result['n_decode_cores']} cores, {result['n_decode_intervals']} described beds; "
        f"true thickness {thick}). Semi-supervised labels on "
        + ", ".join(f"`{c}`" for c in result["semi_supervised_cores"])
        + f". True tract boundaries: {result['rows'][0]['n_boundaries_true']} between "
        f"described beds, {result['n_boundaries_true_between_amalgamated_beds']} between "
        "the amalgamated beds (one facies) that the model decodes.",
        "",
        "| mode | balanced accuracy | boundaries decoded / true | MFS recall (2 m) "
        "| MFS precision (2 m) | ECE | mean p(decoded tract) | fit s | decode s |",
        "|---|---|---|---|---|---|---|---|---|",
    ]
    for r in result["rows"]:
        mfs = r["mfs"]
        lines.append(
            f"| {r['mode']} | {_f(r['balanced_accuracy'])} "
            f"| {_f(r['boundary_ratio'], 2)} ({r['n_boundaries_decoded']}/"
            f"{r['n_boundaries_true']}) "
            f"| {_f(r['mfs_recall'], 2)} ({mfs['n_true_found']}/{mfs['n_true']}) "
            f"| {_f(r['mfs_precision'], 2)} ({mfs['n_picks_right']}/{mfs['n_picks']}) "
            f"| {_f(r['ece'])} | {_f(r['mean_probability'])} "
            f"| {_f(r['fit_s'], 1)} | {_f(r['decode_s'], 2)} |"
        )
    recall = [
        f"{r['mode']}: " + ", ".join(f"{k} {v:.2f}" for k, v in r["recall"].items())
        for r in result["rows"]
    ]
    lines += ["", "Recall per true tract (thickness-weighted): " + "; ".join(recall) + "."]
    checked = [r for r in result["rows"] if np.isfinite(r.get("self_decoded", float("nan")))]
    if checked:
        lines += [
            "",
            "Checked by simulation: "
            + "; ".join(
                f"{r['mode']}: temperature {r['temperature']:.2f}, its own simulated beds "
                f"decoded right {r['self_decoded']:.3f}"
                for r in checked
            )
            + ".",
        ]
    warned = sorted({w for r in result["rows"] for w in r["warnings"]})
    if warned:
        lines += ["", "Warnings during fit / decode: " + "; ".join(warned)]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    global MODEL, UNIT, N_SEMI
    parser = argparse.ArgumentParser(description=__doc__.split("\n", 1)[0])
    parser.add_argument(
        "--tune", action="store_true", help="tuning seeds (fit 11-13, decode 14-15)"
    )
    parser.add_argument("--quick", action="store_true", help="one scenario, fewer cores")
    parser.add_argument(
        "--scenario", action="append", default=[], type=Path, help="extra scenario file"
    )
    parser.add_argument("--json", type=Path, help="also write the results as JSON here")
    parser.add_argument(
        "--model",
        choices=("default", "weighted", "per-bed-evidence", "priors-start", "bed-level"),
        default="default",
        help="the model measured: today's default (evidence weights, nested start), the "
        "same named 'weighted', the context counted once per bed (weigh_evidence=False, "
        "the default before 2026-12-03), EM started from the priors alone "
        "(nested_start=False, the default before 2026-12-03 evening), or the bed-level "
        "baseline",
    )
    parser.add_argument(
        "--seeds",
        metavar="FIT/DECODE",
        help="other seeds than --tune's or the report's, e.g. 31,32,33/34,35",
    )
    parser.add_argument("--modes", default=",".join(MODES), help="comma-separated label modes")
    parser.add_argument(
        "--labelled-cores",
        type=int,
        default=N_SEMI,
        metavar="N",
        help="cores with labels in the semi-supervised fits (default 3)",
    )
    parser.add_argument(
        "--unit",
        choices=("auto", "beds", "intervals"),
        default="auto",
        help="what every fit reads (beds: every fit on amalgamated beds, before 2026-12-04)",
    )
    args = parser.parse_args(argv)
    MODEL, UNIT, N_SEMI = args.model, args.unit, args.labelled_cores
    kind = "tune" if args.tune else "report"
    fit_seeds, decode_seeds = (QUICK if args.quick else SEEDS)[kind]
    if args.seeds:
        kind = f"seeds {args.seeds}"
        fit_seeds, decode_seeds = (
            tuple(int(x) for x in part.split(",")) for part in args.seeds.split("/")
        )
    assert not set(fit_seeds) & set(decode_seeds)
    paths = [ROOT / "configs" / n for n in (SCENARIOS[:1] if args.quick else SCENARIOS)]
    paths += [p.resolve() for p in args.scenario]
    t0 = time.perf_counter()
    results = []
    print(f"## Tract recovery by label mode ({kind} seeds{', quick' if args.quick else ''})\n")
    for path in paths:
        results.append(evaluate(path, fit_seeds, decode_seeds, tuple(args.modes.split(","))))
        print(markdown(results[-1]) + "\n", flush=True)
    print(f"(whole evaluation: {time.perf_counter() - t0:.0f} s)")
    if args.json:
        write_json(args.json, results)
    return 0


if __name__ == "__main__":
    sys.exit(main())
