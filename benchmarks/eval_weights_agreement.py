"""How far the columns of the two evidence counts agree, fitted without labels.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/eval_weights_agreement.py

Each database is fitted twice without labels, with the context evidence weighed
(the default) and counted once per bed (``weigh_evidence=False``), with the same
seed; both decode the same held-out cores. Printed: the share of the decoded
thickness on which the two tract columns agree. The demo: fit on its 17 cores,
decode its 9 uninterpreted ones; the scenarios: fit on the report seeds 21-25,
decode 26-27 (as ``eval_unsupervised.py``). ``docs/hmm.md`` ("Reading a fit
without labels") reads it: agreement does not make a column right, but where the
two disagree over most of the thickness neither is to be trusted.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from eval_unsupervised import _cores, _runner  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.hmm import TractHMM  # noqa: E402
from faciesseq.scheme import load_scheme  # noqa: E402
from faciesseq.scores import balanced_tract_accuracy  # noqa: E402

SCENARIOS = (
    "stacking-shoreface",
    "stacking-thin-tracts",
    "stacking-equal-beds",
    "scenario-ramp",
    "scenario-hinge-table",
    "scenario-asymmetric-shelf",
)


def agreement(train: CoreSet, test: CoreSet, scheme, seed: int) -> float:
    """Thickness share of ``test`` decoded to the same tract by both fits."""
    tables = []
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for weigh in (True, False):
            model = TractHMM(scheme=scheme, random_state=seed, weigh_evidence=weigh)
            tables.append(model.fit(train).decode(test).tracts_table())
    a, b = tables  # the share of the thickness where one column "recalls" the other
    return balanced_tract_accuracy(a.assign(true_tract=b["tract"].to_numpy())).accuracy


def main() -> int:
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    table = pd.read_csv(ROOT / "demo_cores" / "cores.csv")
    blind = sorted(set(table["core"]) - set(table.loc[table["tract"].notna(), "core"]))
    cores = CoreSet.from_frame(table.drop(columns=["tract"]), units="m")
    print("| cores | thickness share decoded alike |\n|---|---|")
    demo = agreement(cores, cores.subset(blind), scheme, 0)
    print(f"| the demo's uninterpreted cores | {demo:.3f} |")
    for name in SCENARIOS:
        (scenario_scheme, run), _ = _runner(ROOT / "configs" / f"{name}.yaml")
        train, _ = _cores(run, (21, 22, 23, 24, 25))
        test, _ = _cores(run, (26, 27))
        a, b = (
            CoreSet.from_frame(t.drop(columns=["tract"], errors="ignore"), units="m")
            for t in (train, test)
        )
        print(f"| `configs/{name}.yaml` | {agreement(a, b, scenario_scheme, 21):.3f} |", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
