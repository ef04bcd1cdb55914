"""Does moving MFS picks to the facies turnaround help? Writes benchmarks/mfs.md.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/eval_mfs_turnaround.py

Common practice (Catuneanu et al. 2009, Earth-Science Reviews 92:1-33) puts the
maximum flooding surface at the top of the most distal (deepest-ranked) facies
of the turnaround from deepening- to shallowing-upward. This script fits the
default tract model (and the default with ``rank_step_above``) on simulated
cores (seeds 21-25 of the three scenarios of ``eval_recovery.py``), decodes
the held-out seeds 26-27, and re-picks the MFS from the decoded per-contact
MFS probabilities with four rules:

- ``peak``: the package's rule (most probable contact of each cluster);
- ``zone deepest``: the contact at the top of the deepest bed of the cluster
  (runs of contacts with probability >= 0.02 split at interior minima, mass
  >= 0.5), ties to the uppermost;
- ``interval deepest``: the same within the 90 % interval around the peak;
- ``nearest turnaround``: the contact of the cluster nearest the peak whose
  lower bed is a local rank maximum (deeper than or as deep as the beds on
  either side).

It also reports how much MFS probability the model puts near each true MFS
(within one contact): no re-placement inside a zone can recover a true MFS
that has no zone near it.
"""

from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import machine, stamp, write_section  # noqa: E402
from eval_recovery import TEST_SEEDS, TRAIN_SEEDS, _mfs_within_one_bed, _simulated  # noqa: E402

from faciesseq.hmm.model import DEFAULT_FEATURES, TractHMM  # noqa: E402
from faciesseq.scheme import load_scheme  # noqa: E402
from faciesseq.surfaces import surface_clusters  # noqa: E402

SCENARIOS = ("scenario-ramp.yaml", "scenario-hinge-table.yaml", "scenario-asymmetric-shelf.yaml")
#: (name, emission features): the default and the default with the jump at the bed's top.
FEATURE_SETS = (
    ("default", None),
    ("+ rank_step_above", (*DEFAULT_FEATURES, "rank_step_above")),
)
RULES = ("peak", "zone deepest", "interval deepest", "nearest turnaround")


def _pick(rule, p, rank):
    """Contact indices (depth order, shallowest first) of the MFS picks under ``rule``."""
    rank = np.where(np.isnan(rank), -np.inf, rank)
    up = np.r_[-np.inf, rank[:-1]]  # the bed above contact i is the lower bed of contact i-1
    down = np.r_[rank[1:], -np.inf]
    turn = (rank >= up) & (rank >= down) & ((rank > up) | (rank > down))
    picks = []
    for a, b, peak, lo, hi in surface_clusters(p):
        if rule == "peak":
            picks.append(peak)
        elif rule == "zone deepest":
            picks.append(a + int(np.argmax(rank[a : b + 1])))
        elif rule == "interval deepest":
            picks.append(lo + int(np.argmax(rank[lo : hi + 1])))
        else:
            cand = [k for k in range(a, b + 1) if turn[k]]
            picks.append(min(cand, key=lambda k: (abs(k - peak), -rank[k], k)) if cand else peak)
    return picks


def _repicked(interp, scheme, rule):
    cores = []
    for core in interp:
        depths = []
        for seg, bnd in core.boundaries.groupby("segment", sort=False):
            beds = core.beds[core.beds["segment"] == seg]
            rank = np.array([scheme.rank(f) if f in scheme else np.nan for f in beds["facies"]])
            p = bnd["p_MFS"].to_numpy(float)
            d = bnd["depth"].to_numpy(float)
            depths += [d[k] for k in _pick(rule, p, rank[1:])]
        picks = pd.DataFrame({"surface": "MFS", "depth": depths})
        cores.append(SimpleNamespace(core=core.core, boundaries=core.boundaries, picks=picks))
    return cores


def _mass_near_truth(interp, true_surfaces):
    """Share of true MFSs with MFS probability >= 0.5 / >= 0.2 summed over +-1 contact."""
    near = []
    for core in interp:
        truth = true_surfaces[
            (true_surfaces["core"] == core.core) & (true_surfaces["surface"] == "MFS")
        ]
        if "cored" in truth:
            truth = truth[truth["cored"].astype(bool)]
        d = core.boundaries["depth"].to_numpy(float)
        p = core.boundaries["p_MFS"].to_numpy(float)
        if len(d) == 0:
            continue
        for t in truth["depth"].to_numpy(float):
            if t < d.min() - 1e-6 or t > d.max() + 1e-6:
                continue
            j = int(np.argmin(np.abs(d - t)))
            near.append(float(p[max(j - 1, 0) : j + 2].sum()))
    near = np.asarray(near)
    return float(np.mean(near >= 0.5)), float(np.mean(near >= 0.2)), len(near)


def main() -> None:
    t0 = time.perf_counter()
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    lines = [
        f"Measured {stamp()} on {machine()}, command: "
        "`MPLBACKEND=Agg python benchmarks/eval_mfs_turnaround.py`. Default tract model and "
        f"features, fit on seeds {TRAIN_SEEDS}, decode seeds {TEST_SEEDS}. Cells: MFS within "
        "1 bed (share of true MFSs with a pick <= 1 contact away) / MFS picks within 1 bed "
        "of a true MFS / median depth error of the nearest pick (m).",
        "",
        "| scenario | features | method | true MFSs | mass >= 0.5 near truth "
        "| mass >= 0.2 near truth | " + " | ".join(RULES) + " |",
        "|---|---|---|---|---|---|" + "---|" * len(RULES),
    ]
    for name in SCENARIOS:
        train, _ = _simulated(TRAIN_SEEDS, name)
        test, true_surfaces = _simulated(TEST_SEEDS, name)
        tr, te = train.successions("beds"), test.successions("beds")
        for (fname, features), (method, labels) in (
            (f, m)
            for f in FEATURE_SETS
            for m in (
                ("supervised", "true_tract"),
                ("semi-supervised", "tract"),
                ("unsupervised", None),
            )
        ):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                model = TractHMM(scheme=scheme, features=features, random_state=0)
                model.fit(tr, labels=labels)
            interp = model.decode(te)
            m5, m2, n = _mass_near_truth(interp, true_surfaces)
            cells = []
            for rule in RULES:
                _, _, err, recall, precision = _mfs_within_one_bed(
                    _repicked(interp, scheme, rule), true_surfaces
                )
                cells.append(f"{recall:.2f} / {precision:.2f} / {err:.2f}")
            lines.append(
                f"| {name.removesuffix('.yaml')} | {fname} | {method} | {n} "
                f"| {m5:.2f} | {m2:.2f} | " + " | ".join(cells) + " |"
            )
    lines += ["", f"(whole evaluation: {time.perf_counter() - t0:.0f} s)"]
    text = "\n".join(lines)
    write_section(ROOT / "benchmarks" / "mfs.md", "turnaround", text, "MFS picks: measurements")
    print(text)


if __name__ == "__main__":
    main()
