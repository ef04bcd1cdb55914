"""How low one temperature can bring the calibration error of fits without labels.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/eval_temperature_floor.py stacking-shoreface scenario-ramp

For each scenario (``configs/<name>.yaml``) the tract model is fitted without
labels on the tuning seeds' training cores (``eval_unsupervised.py``) and decodes
their held-out cores at a grid of posterior temperatures, then at the one its
parametric bootstrap chose. The lowest expected calibration error over the grid
is what a temperature chosen *with* the true tracts would reach: if it is above
the target, no better choice of one temperature meets it, and the miscalibration
lies in which beds the model is sure of, not in how sure it is overall.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from eval_unsupervised import SEEDS, _cores, _runner, _training_set, score  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.hmm import TractHMM  # noqa: E402

GRID = (0.5, 1.0, 2.0, 3.0, 5.0, 8.0, 12.0, 20.0)


def floor(name: str) -> str:
    runner, skip = _runner(ROOT / "configs" / f"{name}.yaml")
    if runner is None:
        return f"| {name} | {skip} |"
    scheme, run = runner
    fit_seeds, decode_seeds = SEEDS["tune"]
    train, _ = _cores(run, fit_seeds)
    test, surfaces = _cores(run, decode_seeds)
    cores, _ = _training_set(train, "unsupervised", [])
    held = CoreSet.from_frame(test.drop(columns=["tract"], errors="ignore"), units="m")
    model = TractHMM(scheme=scheme, random_state=fit_seeds[0]).fit(cores)
    chosen = float(model.temperature_)
    ece = {}
    for t in (*GRID, chosen):
        model.temperature_ = t
        ece[t] = score(model.decode(held), test, surfaces)["ece"]
    best = min(GRID, key=lambda t: ece[t])
    cells = " | ".join(f"{ece[t]:.3f}" for t in GRID)
    return f"| {name} | {cells} | {best:g}: {ece[best]:.3f} | {chosen:.2f}: {ece[chosen]:.3f} |"


def main(argv: list[str]) -> int:
    warnings.simplefilter("ignore")
    names = argv or ["stacking-shoreface", "stacking-thin-tracts", "stacking-equal-beds"]
    print("| scenario | " + " | ".join(f"T={t:g}" for t in GRID) + " | lowest | bootstrap's |")
    print("|---|" + "---|" * (len(GRID) + 2))
    for name in names:
        print(floor(name), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
