"""Facies ranks suggested from the data, against the schemes' ranks, and what a fit
without labels reads with them.

Run from the repository root::

    python benchmarks/eval_suggested_ranks.py

For each scenario, on cores of fit seeds 201-203 (decode seeds 204-205), written as
the minimal table ``core, top, base, facies``: the rank order suggested by the
upward transitions (:mod:`faciesseq.markov.seriation`) against the scenario
scheme's ranks (Spearman's rho, scipy), the share of one-step transitions that
lead landward (how clear the direction is), and the balanced accuracy of a fit
without labels with no scheme, with the suggested ranks and with the scenario's
scheme and with that scheme's ranks reversed (0 = deepest, the mistake ``faciesseq
fit`` warns of) (``TractHMM(random_state=201)``, not calibrated: the column is the
same).
With ``--labelled`` (seeds 221-225), fits with the tracts of three cores and of every
core on the minimal table and its ``tract`` column, without ranks and with the
suggested ones (``faciesseq fit --labels`` suggests them by default since
2026-12-04).

Then the demo database's minimal table (all 17 cores fitted, the 9 uninterpreted
ones decoded against their ``true_tract``, ``random_state=0``, calibrated), and the
real Council Grove wells (``tests/data/council_grove``, Dubois et al.
2007): rho against the project's ranks, and whether the suggested order puts
every nonmarine facies landward of every marine one (each facies marine or nonmarine
by the majority of its samples in the ``NM_M`` column of the data: a fact of the
wells, not of the project).
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

import pandas as pd
from scipy.stats import spearmanr

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from eval_unsupervised import _cores, _runner, minimal_labelled_sets, score  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.hmm import TractHMM  # noqa: E402
from faciesseq.markov.seriation import suggest_ranks  # noqa: E402
from faciesseq.scheme import FaciesScheme, load_scheme  # noqa: E402

SCENARIOS = (
    "stacking-minimal-table",
    "stacking-thin-tracts",
    "stacking-equal-beds",
    "scenario-ramp",
    "scenario-hinge-table",
    "scenario-asymmetric-shelf",
)
FIT, DECODE = [201, 202, 203], [204, 205]
MINIMAL = ["core", "top", "base", "facies"]


def _reversed(scheme: FaciesScheme) -> FaciesScheme:
    """``scheme`` with its ranks the wrong way round (0 = deepest): a user's mistake
    that ``faciesseq fit`` warns of."""
    data = scheme.to_dict()
    top = max(f["rank"] for f in data["facies"])
    for f in data["facies"]:
        f["rank"] = top - f["rank"]
    return FaciesScheme.from_dict(data)


def _scenario_row(name: str) -> str:
    (scheme, run), _ = _runner(ROOT / "configs" / f"{name}.yaml")
    train, _ = _cores(run, FIT)
    test, truth = _cores(run, DECODE)
    cores = CoreSet.from_frame(train[MINIMAL], units="m")
    blind = CoreSet.from_frame(test[MINIMAL], units="m")
    suggestion = suggest_ranks(cores.successions("beds"))
    codes = [c for c in suggestion.ranks if c in scheme]
    rho = spearmanr([suggestion.ranks[c] for c in codes], [scheme.rank(c) for c in codes])[0]
    scores = []
    for used in (None, suggestion.scheme(), scheme, _reversed(scheme)):
        model = TractHMM(scheme=used, random_state=FIT[0]).fit(cores, calibrate=False)
        scores.append(score(model.decode(blind), test, truth)["balanced_accuracy"])
    rho_reversed = suggestion.agreement(_reversed(scheme))
    return (
        f"| {name} | {rho:.3f} ({rho_reversed:.3f} reversed) | {suggestion.share:.2f} of "
        f"{suggestion.n_steps} | " + " | ".join(f"{s:.3f}" for s in scores) + " |"
    )


def _demo_row() -> str:
    table = pd.read_csv(ROOT / "demo_cores" / "cores.csv")
    truth = pd.read_csv(ROOT / "demo_cores" / "surfaces.csv")
    blind = sorted(set(table["core"]) - set(table.loc[table["tract"].notna(), "core"]))
    cores = CoreSet.from_frame(table[MINIMAL], units="m")
    suggestion = suggest_ranks(cores.successions("beds"))
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    codes = list(suggestion.ranks)
    rho = spearmanr([suggestion.ranks[c] for c in codes], [scheme.rank(c) for c in codes])[0]
    intervals = table[table["core"].isin(blind)]
    scores = []
    for used in (None, suggestion.scheme(), scheme, _reversed(scheme)):
        model = TractHMM(scheme=used, random_state=0).fit(cores)
        scores.append(score(model.decode(cores.subset(blind)), intervals, truth))
    rho_reversed = suggestion.agreement(_reversed(scheme))
    return (
        f"| demo, 9 uninterpreted cores | {rho:.3f} ({rho_reversed:.3f} reversed) | "
        f"{suggestion.share:.2f} of "
        f"{suggestion.n_steps} | "
        + " | ".join(f"{s['balanced_accuracy']:.3f}" for s in scores)
        + " |"
    )


def council_grove_successions() -> tuple[pd.DataFrame, FaciesScheme, list[list[str]]]:
    """The Council Grove samples, the project's scheme of them, and each well's beds
    (runs of one facies) base to top."""
    data = ROOT / "tests" / "data" / "council_grove"
    table = pd.read_csv(data / "facies_vectors_subset.csv")
    scheme = load_scheme(data / "scheme.yaml")
    successions = []
    for _, well in table.groupby("Well Name", sort=False):
        codes = well.sort_values("Depth", ascending=False)["Facies"].astype(str).tolist()
        successions.append([c for k, c in enumerate(codes) if k == 0 or c != codes[k - 1]])
    return table, scheme, successions


def _council_grove() -> str:
    table, scheme, successions = council_grove_successions()
    suggestion = suggest_ranks(successions)
    codes = list(suggestion.ranks)
    rho = spearmanr([suggestion.ranks[c] for c in codes], [scheme.rank(c) for c in codes])[0]
    # each facies marine or nonmarine by the majority of its samples' NM_M (1 nonmarine)
    majority = table.groupby(table["Facies"].astype(str))["NM_M"].median()
    marine, nonmarine = set(majority.index[majority >= 1.5]), set(majority.index[majority < 1.5])
    split = max(suggestion.ranks[c] for c in nonmarine) < min(suggestion.ranks[c] for c in marine)
    return (
        f"Council Grove ({len(successions)} wells, {suggestion.n_steps} one-step transitions): "
        f"nonmarine by majority {', '.join(sorted(nonmarine))}; order "
        f"{', '.join(suggestion.order())}; rho {rho:.3f} against the project's ranks; "
        f"{suggestion.share:.2f} lead landward; every nonmarine facies landward of every "
        f"marine one: {'yes' if split else 'no'}"
    )


def _labelled_row(name: str) -> str:
    """Fits with labels on the minimal table and its tract column, without a scheme and
    with the suggested ranks: three labelled cores (the benchmark's choice), then every
    core labelled; fit seeds 221-223, decode seeds 224-225 (used for no choice before)."""
    (_, run), _ = _runner(ROOT / "configs" / f"{name}.yaml")
    fit, decode = [221, 222, 223], [224, 225]
    sets, blind, test, truth = minimal_labelled_sets(run, fit, decode)
    scores = []
    for cores in sets:
        for used in (None, suggest_ranks(cores.successions("beds")).scheme()):
            model = TractHMM(scheme=used, random_state=fit[0])
            model.fit(cores, labels="tract", calibrate=False)
            scores.append(score(model.decode(blind), test, truth)["balanced_accuracy"])
    return f"| {name} | " + " | ".join(f"{s:.3f}" for s in scores) + " |"


def _table(title: str, columns: list[str], rows) -> None:
    """A markdown table, a row printed as soon as ``rows`` yields it."""
    print(f"## {title}\n")
    print("| " + " | ".join(columns) + " |")
    print("|" + "---|" * len(columns))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for row in rows:
            print(row, flush=True)


def _unlabelled_rows():
    yield from (_scenario_row(name) for name in SCENARIOS)
    yield _demo_row()


def main() -> int:
    if "--labelled" in sys.argv[1:]:
        _table(
            "Labelled fits on the minimal table: no ranks, or the suggested ones",
            [
                "scenario",
                "3 labelled cores, no ranks",
                "3 labelled cores, suggested ranks",
                "every core labelled, no ranks",
                "every core labelled, suggested ranks",
            ],
            (_labelled_row(name) for name in SCENARIOS),
        )
        return 0
    _table(
        "Facies ranks suggested from the upward transitions",
        [
            "scenario",
            "rho, suggested vs scheme ranks",
            "one-step transitions leading landward",
            "BA without a scheme",
            "BA with the suggested ranks",
            "BA with the scenario's scheme",
            "BA with the scheme reversed",
        ],
        _unlabelled_rows(),
    )
    print()
    print(_council_grove())
    return 0


if __name__ == "__main__":
    sys.exit(main())
