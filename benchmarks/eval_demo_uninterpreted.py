"""The demo database's uninterpreted cores against their true tracts.

Run from the repository root::

    python benchmarks/eval_demo_uninterpreted.py [--per-bed-evidence] [--unit beds|intervals]

The invented Quillerby Basin (``demo_cores/cores.csv``, made by the forward model)
has 8 interpreted and 9 uninterpreted cores; every core keeps its ``true_tract``.
Three fits, all on all 17 cores: without labels (the tract model a company
database without interpretations gets), with the interpreters' ``tract``
column (what ``faciesseq demo`` fits), and with the generator's true tracts of
the same 8 cores as labels (how much of the demo's truth the model learns where
it is known exactly). Each decodes the 9 uninterpreted cores;
scores (:mod:`faciesseq.scores`) on their described intervals: balanced
accuracy (thickness-weighted recall per true tract, averaged), recall per
tract, decoded / true tract boundaries, expected calibration error and mean
probability of the decoded tract. The trend rule is the baseline of the same
run; the true tract of each amalgamated bed (a bed's tract is that of most of its
thickness) is the ceiling of any column that gives each bed one tract.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from eval_unsupervised import _BedCeiling, _RuleDecode, score  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.hmm import TractHMM  # noqa: E402
from faciesseq.scheme import load_scheme  # noqa: E402

#: ``--per-bed-evidence``: fit with ``weigh_evidence=False`` (the default before
#: 2026-12-03); the default weighs the evidence.
WEIGH = "--per-bed-evidence" not in sys.argv[1:]
#: ``--unit beds`` / ``--unit intervals``: what every fit reads (default ``auto``: the
#: described intervals with labels, amalgamated beds without).
UNIT = sys.argv[sys.argv.index("--unit") + 1] if "--unit" in sys.argv else "auto"


#: The fits compared: a name and the label column (None: without labels). The last
#: takes the generator's true tracts of the 8 interpreted cores as labels: how much
#: of the demo's truth the model learns from cores where it is known exactly.
FITS = (
    ("without labels", None),
    ("with the interpreters' labels", "tract"),
    ("with the true tracts of the 8 interpreted cores", "true_of_interpreted"),
)


def main() -> int:
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    table = pd.read_csv(ROOT / "demo_cores" / "cores.csv")
    truth = pd.read_csv(ROOT / "demo_cores" / "surfaces.csv")
    labelled = set(table.loc[table["tract"].notna(), "core"])
    blind = sorted(set(table["core"]) - labelled)
    # the generator's own tracts as labels: what the model reads of the demo's truth
    table["true_of_interpreted"] = table["true_tract"].where(table["core"].isin(labelled))
    cores = CoreSet.from_frame(table, units="m")
    intervals = table[table["core"].isin(blind)]
    test = cores.subset(blind)
    rows = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for name, labels in FITS:
            model = TractHMM(scheme=scheme, random_state=0, weigh_evidence=WEIGH, unit=UNIT).fit(
                cores, labels=labels
            )
            rows[name] = score(model.decode(test), intervals, truth)
        rule = _RuleDecode(test, scheme)
        beds = pd.concat([s.beds.assign(core=s.core) for s in test.successions("beds")])
        ceiling = _BedCeiling(beds)
    print(f"## Demo: the {len(blind)} uninterpreted cores against their true tracts\n")
    print(
        "| fit | balanced accuracy | half-cycles (TST against the rest) | recall per tract "
        "| boundaries decoded / true | ECE | mean p |"
    )
    print("|---|---|---|---|---|---|---|")
    for name, r in rows.items():
        recall = ", ".join(f"{t} {v:.2f}" for t, v in r["recall"].items())
        print(
            f"| {name} | {r['balanced_accuracy']:.3f} | {r['half_cycle_accuracy']:.3f} | {recall} "
            f"| {r['boundary_ratio']:.2f} | "
            f"{r['ece']:.3f} | {r['mean_probability']:.3f} |"
        )
    print(f"\n(trend rule, same cores: {_rule(rule, intervals, truth)})")
    print(f"(true tract per amalgamated bed, the ceiling: {_rule(ceiling, intervals, truth)})")
    return 0


def _rule(rule, intervals, truth) -> str:
    r = score(rule, intervals, truth)
    return f"balanced accuracy {r['balanced_accuracy']:.3f}, boundaries {r['boundary_ratio']:.2f}"


if __name__ == "__main__":
    sys.exit(main())
