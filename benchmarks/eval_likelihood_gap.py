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
"""

from __future__ import annotations

import sys
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


def main() -> int:
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    scenario = load_stacking_scenario(ROOT / "configs" / "stacking-shoreface.yaml")
    frames = []
    for seed in (11, 12, 13):
        t = simulate_stacking(scenario, seed=seed).cores.to_frame()
        t["core"] = t["core"] + f"/s{seed}"
        frames.append(t)
    table = pd.concat(frames, ignore_index=True)
    free = CoreSet.from_frame(table.assign(tract=np.nan), units="m")
    true = CoreSet.from_frame(table.assign(tract=table["true_tract"]), units="m")
    common = dict(
        scheme=scheme,
        features=DEFAULT_UNLABELLED_FEATURES,
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
