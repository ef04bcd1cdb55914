"""Calibration of the tract posteriors on held-out cores; writes benchmarks/calibration.md.

Run from the repository root::

    python benchmarks/eval_calibration.py

For each data set a model is fitted twice, with ``calibration_folds=0``
(temperature 1) and with the default (a temperature chosen by 5 folds of
cross-validation over the labelled training cores,
``faciesseq.hmm.calibration``), and both decode cores neither has seen. Scored
against the true tract of every bed: accuracy of the decoded (Viterbi) column,
Brier score, mean probability of the decoded tract ("confidence") and the
expected calibration error (ECE: ten bins of that probability, the
bed-weighted mean of ``|confidence - fraction right|``; Naeini, Cooper &
Hauskrecht 2015).

Data sets:

- simulated scenarios (ramp, hinge table, asymmetric shelf; the forward model
  of ``faciesseq.simulate``): fit on seeds 21-25, decode seeds 26-27;
  supervised (true tracts) and semi-supervised (the interpreter's ``tract``
  column of the labelled wells, which is one bed off at 15 % of boundaries);
- the demo database: fit on its 8 interpreted cores (supervised) or on all 17
  (semi-supervised), decode the 9 uninterpreted cores, scored with
  ``true_tract``.

A second table compares the objective the temperature is chosen by, on the
calibration folds themselves: the temperature minimising the Brier score (the
one used) and the one minimising the log-loss.
"""

from __future__ import annotations

import math
import sys
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import machine, stamp, write_section  # noqa: E402

import faciesseq.hmm.calibration as calibration  # noqa: E402
from faciesseq.hmm.model import TractHMM  # noqa: E402
from faciesseq.io import read_cores  # noqa: E402
from faciesseq.scheme import load_scheme  # noqa: E402

SCENARIOS = ("ramp", "hinge-table", "asymmetric-shelf")
TRAIN_SEEDS = (21, 22, 23, 24, 25)
TEST_SEEDS = (26, 27)


def _datasets():
    from hmm_synthetic import simulated_beds

    from faciesseq.simulate import load_scenario

    for name in SCENARIOS:
        scenario = load_scenario(ROOT / "configs" / f"scenario-{name}.yaml")
        train, test = simulated_beds(scenario, TRAIN_SEEDS), simulated_beds(scenario, TEST_SEEDS)
        yield name, "supervised", train, test, "true_tract"
        yield name, "semi-supervised", train, test, "tract"
    succ = read_cores(ROOT / "demo_cores" / "cores.csv").successions("beds")
    labelled = {s.core for s in succ if s.beds["tract"].notna().any()}
    test = [s for s in succ if s.core not in labelled]
    yield "demo", "supervised", [s for s in succ if s.core in labelled], test, "tract"
    yield "demo", "semi-supervised", succ, test, "tract"


def _scores(model, test):
    it = model.decode(test)
    tracts = list(it.tracts)
    beds = [it[c].beds for c in it.cores]
    p = np.concatenate([b[[f"p_{t}" for t in tracts]].to_numpy(float) for b in beds])
    y = np.concatenate([[tracts.index(t) for t in b["true_tract"]] for b in beds])
    column = np.concatenate([[tracts.index(t) for t in b["tract"]] for b in beds])
    right = column == y
    conf = p[np.arange(len(y)), column]
    bins = np.clip((conf * 10).astype(int), 0, 9)
    ece = sum(
        abs(conf[bins == b].mean() - right[bins == b].mean()) * np.mean(bins == b)
        for b in range(10)
        if np.any(bins == b)
    )
    high = conf >= 0.9
    return {
        "accuracy": float(right.mean()),
        "brier": float(np.mean(np.sum((p - np.eye(len(tracts))[y]) ** 2, axis=1))),
        "confidence": float(conf.mean()),
        "ece": float(ece),
        "high": f"{high.mean():.2f} / {right[high].mean():.2f}" if high.any() else "0.00 / -",
    }


def _log_loss_temperature(folds) -> float:
    from scipy.optimize import minimize_scalar

    lo, hi = (math.log(b) for b in calibration.TEMPERATURE_BOUNDS)
    res = minimize_scalar(
        lambda x: calibration.held_out_scores(folds, math.exp(x))["log_loss"],
        bounds=(lo, hi),
        method="bounded",
        options={"xatol": 1e-3},
    )
    return float(math.exp(res.x))


def main() -> None:
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    captured = {}
    original = calibration.fit_temperature

    def spy(folds):
        captured["folds"] = folds
        return original(folds)

    calibration.fit_temperature = spy
    rows, objective = [], []
    t0 = time.time()
    for name, mode, train, test, labels in _datasets():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            plain = TractHMM(scheme=scheme, random_state=0, calibration_folds=0)
            plain.fit(train, labels=labels)
            start = time.time()
            model = TractHMM(scheme=scheme, random_state=0).fit(train, labels=labels)
            seconds = time.time() - start
            before, after = _scores(plain, test), _scores(model, test)
        folds = captured["folds"]
        at = {t: calibration.held_out_scores(folds, t) for t in (1.0, model.temperature_)}
        t_log = _log_loss_temperature(folds)
        at_log = calibration.held_out_scores(folds, t_log)
        objective.append(
            f"| {name} | {mode} | {model.temperature_:.2f} | {at[model.temperature_]['brier']:.3f}"
            f" | {at[model.temperature_]['confidence']:.2f} | {t_log:.2f} | "
            f"{at_log['brier']:.3f} | {at_log['confidence']:.2f} | "
            f"{at[1.0]['accuracy']:.2f} |"
        )
        rows.append(
            f"| {name} | {mode} | {model.temperature_:.2f} | {before['accuracy']:.3f} | "
            f"{after['accuracy']:.3f} | {before['brier']:.3f} -> {after['brier']:.3f} | "
            f"{before['confidence']:.2f} -> {after['confidence']:.2f} | "
            f"{before['ece']:.3f} -> {after['ece']:.3f} | {before['high']} -> {after['high']} | "
            f"{seconds:.1f} |"
        )
        print(rows[-1], flush=True)
    calibration.fit_temperature = original
    text = "\n".join(
        [
            "## Calibration of the tract probabilities",
            "",
            f"Measured {stamp()} on {machine()}, command: `python benchmarks/eval_calibration.py`.",
            "",
            "Held-out cores (simulated: fit seeds 21-25, decode 26-27; demo: the 9 "
            "uninterpreted cores), scored against the true tracts. Before -> after: "
            "temperature 1 -> the temperature chosen by 5 folds of cross-validation by core "
            "over the labelled training cores. 'p >= 0.9': fraction of beds decoded with "
            "probability at least 0.9 / fraction of those right. Fit s: the calibrated fit.",
            "",
            "| data | fit | temperature | accuracy T=1 | accuracy calibrated | Brier | "
            "mean probability of the decoded tract | ECE | p >= 0.9 | fit s |",
            "|---|---|---|---|---|---|---|---|---|---|",
            *rows,
            "",
            "The objective on the calibration folds (labels as given to the fit): the "
            "temperature minimising the Brier score (used) against the one minimising the "
            "log-loss, with the folds' Brier score and mean probability of the most probable "
            "tract at each, beside the folds' accuracy.",
            "",
            "| data | fit | T (Brier) | Brier | mean probability | T (log-loss) | Brier | "
            "mean probability | accuracy |",
            "|---|---|---|---|---|---|---|---|---|",
            *objective,
            "",
            f"(whole evaluation: {time.time() - t0:.0f} s)",
        ]
    )
    write_section(ROOT / "benchmarks" / "calibration.md", "calibration", text, "Calibration")
    print(text)


if __name__ == "__main__":
    main()
