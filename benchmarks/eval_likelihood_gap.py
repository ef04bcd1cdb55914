"""Does maximum likelihood prefer the true tracts? The unsupervised optimum against the truth.

Run from the repository root::

    python benchmarks/eval_likelihood_gap.py

On the tuning seeds (fit 11-13) of the parasequence-stacking generator
(``configs/stacking-shoreface.yaml``), the tract model without labels (default
features, the strict graph, three sub-states) is fitted twice on the same cores:
by EM without labels, and with every bed clamped to its true tract. Both
parameter sets are scored on the same cores without labels (log-likelihood):
if the truth-fitted one scores lower, the model family itself prefers another
partition of the beds, and no restart or start will find the true one.

``--blind``: the same on 8 cores of each of the seeds 11-13 of
``benchmarks/blind_generator.py`` with its own scheme (minimal tables, so no contact
features).
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.hmm.features import DEFAULT_UNLABELLED_FEATURES  # noqa: E402
from faciesseq.hmm.model import TractHMM  # noqa: E402
from faciesseq.scheme import default_tract_model, load_scheme  # noqa: E402
from faciesseq.simulate import load_stacking_scenario, simulate_stacking  # noqa: E402


def _stacking() -> tuple:
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    scenario = load_stacking_scenario(ROOT / "configs" / "stacking-shoreface.yaml")
    frames = []
    for seed in (11, 12, 13):
        t = simulate_stacking(scenario, seed=seed).cores.to_frame()
        t["core"] = t["core"] + f"/s{seed}"
        frames.append(t)
    return scheme, pd.concat(frames, ignore_index=True), DEFAULT_UNLABELLED_FEATURES


def _blind(folder: Path) -> tuple:
    frames = []
    for seed in (11, 12, 13):
        out = folder / f"cores{seed}.csv"
        args = [
            "--seed",
            str(seed),
            "--cores",
            "8",
            "-o",
            str(out),
            "--scheme",
            str(folder / "s.yaml"),
        ]
        subprocess.run(
            [sys.executable, str(ROOT / "benchmarks" / "blind_generator.py"), *args], check=True
        )
        t = pd.read_csv(out, dtype={"core": str}).rename(columns={"tract": "true_tract"})
        t["core"] = t["core"] + f"/s{seed}"
        frames.append(t)
    scheme = load_scheme(folder / "s.yaml")
    feats = [f for f in DEFAULT_UNLABELLED_FEATURES if f not in ("contact", "cycle_sharpness")]
    return scheme, pd.concat(frames, ignore_index=True), feats


def main() -> int:
    with tempfile.TemporaryDirectory() as folder:
        blind = "--blind" in sys.argv[1:]
        scheme, table, features = _blind(Path(folder)) if blind else _stacking()
    free = CoreSet.from_frame(table.assign(tract=np.nan), units="m")
    true = CoreSet.from_frame(table.assign(tract=table["true_tract"]), units="m")
    common = dict(
        scheme=scheme,
        features=features,
        tract_model=default_tract_model(),
        substates=3,
        calibration_folds=0,
        random_state=0,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        em = TractHMM(**common).fit(free)
        truth = TractHMM(**common).fit(true, labels="tract")
    succ = free.successions()
    n = sum(len(s) for s in succ)
    print(f"beds: {n}")
    print(f"log-likelihood, unsupervised EM optimum: {em.score(succ):.1f}")
    print(f"log-likelihood, parameters fitted on the true tracts: {truth.score(succ):.1f}")
    print(f"gap (EM minus truth): {em.score(succ) - truth.score(succ):.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
