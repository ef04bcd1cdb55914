"""Where the true tract boundaries of simulated cores lie: on contacts, shifts, cycle bases?

Run from the repository root::

    python benchmarks/diagnose_boundaries.py stacking-shoreface scenario-ramp

For each scenario (``configs/<name>.yaml``; tuning seeds 11-15 of
``eval_unsupervised.py``) the cores are cut into amalgamated beds as the tract
model reads them, and every change of the true tract between successive beds is
counted by kind (lower tract > upper tract, base to top) together with the
fraction of them that fall on a bed whose base is a flooding step (a rise of
one rank or more: a cycle base), a sharp or erosional contact, a drop of two
ranks or more, or any of the three; the first line gives how common each of
these is among all bed boundaries. A fact about the generators, used by no model.
"""

from __future__ import annotations

import sys
import warnings
from collections import Counter
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from eval_unsupervised import SEEDS, _cores, _runner  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.cycles import sharp_contacts  # noqa: E402

KINDS = ("rise", "sharp", "drop2", "any")


def _marks(beds, scheme) -> dict[str, np.ndarray]:
    ranks = np.array([scheme.rank(f) if f in scheme else np.nan for f in beds["facies"]])
    step = np.r_[np.nan, np.diff(ranks)]
    with np.errstate(invalid="ignore"):
        marks = {"rise": step >= 1, "drop2": step <= -2}
    contact = beds["contact"].to_numpy(object) if "contact" in beds else np.full(len(beds), None)
    marks["sharp"] = sharp_contacts(contact) == 1
    marks["any"] = marks["rise"] | marks["sharp"] | marks["drop2"]
    return marks


def diagnose(name: str) -> str:
    runner, skip = _runner(ROOT / "configs" / f"{name}.yaml")
    if runner is None:
        return f"{name}: {skip}"
    scheme, run = runner
    table, _ = _cores(run, SEEDS["tune"][0] + SEEDS["tune"][1])
    cores = CoreSet.from_frame(table.drop(columns=["tract"], errors="ignore"), units="m")
    changes, on = Counter(), {k: Counter() for k in KINDS}
    n_bounds, n_marked = 0, Counter()
    for s in cores.successions("beds"):
        marks = _marks(s.beds, scheme)
        tract = s.beds["true_tract"].astype(str).to_numpy()
        n_bounds += len(tract) - 1
        for k in KINDS:
            n_marked[k] += int(marks[k][1:].sum())
        for t in np.flatnonzero(tract[1:] != tract[:-1]) + 1:
            key = f"{tract[t - 1]} > {tract[t]}"
            changes[key] += 1
            for k in KINDS:
                on[k][key] += int(marks[k][t])
    lines = [
        f"### {name}",
        "",
        f"{n_bounds} bed boundaries; marked: "
        + ", ".join(f"{k} {n_marked[k] / max(n_bounds, 1):.2f}" for k in KINDS),
        "",
        "| true change | count | " + " | ".join(f"on {k}" for k in KINDS) + " |",
        "|---|---|" + "---|" * len(KINDS),
    ]
    for key, n in sorted(changes.items()):
        shares = " | ".join(f"{on[k][key] / n:.2f}" for k in KINDS)
        lines.append(f"| {key} | {n} | {shares} |")
    return "\n".join(lines)


def main(argv: list[str]) -> int:
    warnings.simplefilter("ignore")
    names = argv or ["stacking-shoreface", "stacking-thin-tracts", "scenario-ramp"]
    for name in names:
        print(diagnose(name) + "\n", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
