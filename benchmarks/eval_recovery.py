"""Recovery of known tracts and surfaces, and the real-data check; writes benchmarks/hmm_model.md.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/eval_recovery.py

1. Simulated cores with truth (``configs/scenario-ramp.yaml``,
   ``configs/scenario-hinge-table.yaml`` and
   ``configs/scenario-asymmetric-shelf.yaml``, the forward model of
   ``faciesseq.simulate``): fit on seeds 21-25, decode seeds 26-27 (seeds not
   used to tune anything; the stacking piece was designed on seeds 11-17), with
   the default features (labelled fits: the per-bed pieces and the stacking
   window) and with the per-bed pieces alone; supervised (``true_tract``),
   semi-supervised (the interpreter's ``tract`` column of the labelled wells)
   and unsupervised, beside the trend-rule baseline.
2. The project's small synthetic generator (``tests/hmm_synthetic.py``), seeds
   1001 (fit) and 1002 (decode).
3. Council Grove (real; Dubois et al. 2007; Hall 2016): agreement of decoded
   tracts with the marine / nonmarine half-cycles of the ``Formation`` column.

Scores on held-out cores: bed accuracy, thickness-weighted accuracy, per-tract
F1, and the fraction of cores whose every true maximum flooding surface has a
picked MFS at most one contact away. Every fit here reads amalgamated beds
(``unit="beds"``), so that "one bed" means what it meant before 2026-12-04; labelled
fits by default read the described intervals, measured by ``eval_unsupervised.py``
(``benchmarks/tract_model.md``, "Described intervals or amalgamated beds").
"""

from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import machine, stamp, write_section  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.hmm.baseline import trend_rule  # noqa: E402
from faciesseq.hmm.model import DEFAULT_FEATURES, TractHMM  # noqa: E402
from faciesseq.scheme import default_tract_model, load_scheme  # noqa: E402

TRAIN_SEEDS = (21, 22, 23, 24, 25)
TEST_SEEDS = (26, 27)
GRID_STEPS = (0.5,)


def _simulated(seeds, name="scenario-ramp.yaml"):
    from faciesseq.simulate import load_scenario, simulate

    scenario = load_scenario(ROOT / "configs" / name)
    frames, surfaces = [], []
    for seed in seeds:
        result = simulate(scenario, seed=seed)
        t = result.cores.to_frame()
        t["core"] = t["core"] + f"/s{seed}"
        frames.append(t)
        s = result.surfaces.copy()
        s["core"] = s["core"] + f"/s{seed}"
        surfaces.append(s)
    return CoreSet.from_frame(pd.concat(frames), units="m"), pd.concat(surfaces)


def _configurations():
    """(name, features): the default, and the per-bed pieces it extends. No tract model
    is passed, as `faciesseq fit` passes none: a labelled fit takes its graph from the
    labels, a fit without labels chooses one by BIC (passing the default tract model
    would impose the strict graph on labels that jump over tracts)."""
    return (
        ("default", None),
        ("per-bed pieces (no stacking)", DEFAULT_FEATURES),
        ("per-bed pieces + rank_step_above", (*DEFAULT_FEATURES, "rank_step_above")),
    )


def _rule_column(successions, scheme, tract_model):
    out = {}
    for s in successions:
        ranks = np.array([scheme.rank(f) if f in scheme else np.nan for f in s.facies])
        rule = trend_rule(ranks, np.array([len(s)]), tract_model)
        out.setdefault(s.core, []).append((s.segment, [tract_model.order[i] for i in rule][::-1]))
    return {c: [t for _, ts in sorted(p) for t in ts] for c, p in out.items()}


def _mfs_within_one_bed(interp, true_surfaces):
    """Fraction of cores whose every cored true MFS has an MFS pick <= 1 contact away,
    the number of cores, the median depth error of the nearest pick (m), and the
    fraction of true MFSs (over all cores) with a pick <= 1 contact away, and the
    fraction of MFS picks with a true MFS <= 1 contact away (so that picking an MFS at
    every contact does not pass)."""
    ok, n = 0, 0
    errors = []
    hits = []
    good_picks = []
    for core in interp:
        truth = true_surfaces[
            (true_surfaces["core"] == core.core) & (true_surfaces["surface"] == "MFS")
        ]
        if "cored" in truth:
            truth = truth[truth["cored"].astype(bool)]
        contacts = core.boundaries["depth"].to_numpy(float)
        if len(truth) == 0 or len(contacts) == 0:
            continue
        picks = core.picks[core.picks["surface"] == "MFS"]["depth"].to_numpy(float)
        n += 1
        true_idx = np.abs(truth["depth"].to_numpy(float)[:, None] - contacts[None, :]).argmin(
            axis=1
        )
        for p in picks:
            k = int(np.argmin(np.abs(contacts - p)))
            good_picks.append(bool(np.min(np.abs(true_idx - k)) <= 1))
        good = True
        for d in truth["depth"].to_numpy(float):
            if d < contacts.min() - 1e-6 or d > contacts.max() + 1e-6:
                continue
            j = int(np.argmin(np.abs(contacts - d)))
            if len(picks) == 0:
                good = False
                hits.append(False)
                continue
            errors.append(float(np.min(np.abs(picks - d))))
            k = np.abs(picks[:, None] - contacts[None, :]).argmin(axis=1)
            hit = bool(np.min(np.abs(k - j)) <= 1)
            hits.append(hit)
            good = good and hit
        ok += good
    median = float(np.median(errors)) if errors else float("nan")
    per_surface = float(np.mean(hits)) if hits else float("nan")
    precision = float(np.mean(good_picks)) if good_picks else float("nan")
    return (ok / n if n else float("nan")), n, median, per_surface, precision


def _column_picks(interp, columns=None):
    """Stand-ins for decoded cores whose MFS picks are the contacts where a tract column
    changes upward from TST to another tract (beds top first in each segment): the true
    bed tract when ``columns`` is None, else ``columns[core]`` (one tract per bed, in the
    order of the core's bed table)."""
    from types import SimpleNamespace

    out = []
    for core in interp:
        beds = core.beds.assign(
            _col=core.beds["true_tract"] if columns is None else columns[core.core]
        )
        depths = []
        for _, part in beds.groupby("segment", sort=False):
            col = part["_col"].astype(str).to_numpy()  # top first
            lower_tst = (col[1:] == "TST") & (col[:-1] != "TST")
            depths += list(part["base"].to_numpy(float)[:-1][lower_tst])
        picks = pd.DataFrame({"surface": "MFS", "depth": np.asarray(depths, dtype=float)})
        out.append(SimpleNamespace(core=core.core, boundaries=core.boundaries, picks=picks))
    return out


def _scores(beds: pd.DataFrame, column: str, tracts) -> dict:
    from sklearn.metrics import f1_score

    truth = beds["true_tract"].astype(str).to_numpy()
    pred = beds[column].astype(str).to_numpy()
    w = beds["thickness"].to_numpy(float)
    f1 = f1_score(truth, pred, labels=list(tracts), average=None, zero_division=0)
    return {
        "tst_vs_rest": float(np.mean((truth == "TST") == (pred == "TST"))),
        "accuracy": float(np.mean(truth == pred)),
        "accuracy_thickness": float(np.sum(w * (truth == pred)) / np.sum(w)),
        **{f"F1 {t}": float(v) for t, v in zip(tracts, f1)},
    }


def simulated_section(name: str) -> str:
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    train, _ = _simulated(TRAIN_SEEDS, name)
    test, true_surfaces = _simulated(TEST_SEEDS, name)
    tr, te = train.successions("beds"), test.successions("beds")
    lines = [
        f"Simulated cores (`configs/{name}`): fit on seeds {TRAIN_SEEDS} "
        f"({len(train)} cores, {sum(len(s) for s in tr)} beds), decode seeds {TEST_SEEDS} "
        f"({len(test)} cores, {sum(len(s) for s in te)} beds). Beds. "
        "Default features: labelled fits "
        "(supervised, semi-supervised) add the "
        "stacking window to the per-bed pieces; unsupervised fits read the stacking context "
        "(`faciesseq.hmm.context`) with three sub-states per tract and the graph chosen by BIC. "
        "No tract model is passed (as `faciesseq fit` passes none).",
        "",
        "| model | method | bed accuracy | thickness accuracy | TST vs rest | F1 HST "
        "| F1 FSST | F1 LST | F1 TST | cores with every MFS within 1 bed | MFS within 1 bed "
        "| MFS picks within 1 bed of a true MFS | MFS median error m | fit s |",
        "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|",
    ]
    truth_counts = pd.concat([s.beds for s in te])["true_tract"].value_counts()
    tm = default_tract_model()
    for tm_name, features in _configurations():
        rule = _rule_column(te, scheme, tm)
        for method, labels in (
            ("supervised", "true_tract"),
            ("semi-supervised", "tract"),
            ("unsupervised", None),
        ):
            t0 = time.perf_counter()
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                model = TractHMM(scheme=scheme, features=features, random_state=0, unit="beds").fit(
                    tr, labels=labels
                )
            elapsed = time.perf_counter() - t0
            interp = model.decode(te)
            beds = pd.concat([c.beds.assign(core=c.core) for c in interp], ignore_index=True)
            beds["rule"] = [t for c in interp for t in rule[c.core]]
            sc = _scores(beds, "tract", tm.order)
            mfs, n_cores, mfs_error, per_surface, precision = _mfs_within_one_bed(
                interp, true_surfaces
            )
            lines.append(
                f"| {tm_name} | {method} | {sc['accuracy']:.3f} | {sc['accuracy_thickness']:.3f} | "
                f"{sc['tst_vs_rest']:.3f} | "
                + " | ".join(f"{sc[f'F1 {t}']:.2f}" for t in ("HST", "FSST", "LST", "TST"))
                + f" | {mfs:.2f} of {n_cores} | {per_surface:.2f} | {precision:.2f} "
                f"| {mfs_error:.2f} "
                f"| {elapsed:.1f} |"
            )
        sc = _scores(beds, "rule", tm.order)
        mfs, n_cores, mfs_error, per_surface, precision = _mfs_within_one_bed(
            _column_picks(interp, rule), true_surfaces
        )
        lines.append(
            f"| {tm_name} | trend rule (baseline) | {sc['accuracy']:.3f} | "
            f"{sc['accuracy_thickness']:.3f} | {sc['tst_vs_rest']:.3f} | "
            + " | ".join(f"{sc[f'F1 {t}']:.2f}" for t in ("HST", "FSST", "LST", "TST"))
            + f" | {mfs:.2f} of {n_cores} | {per_surface:.2f} | {precision:.2f} "
            f"| {mfs_error:.2f} | - |"
        )
    # the ceiling of any bed-scale column: an MFS at every upward TST -> other change of
    # the true tract of each bed (its majority tract), scored like the model's picks
    mfs, n_cores, mfs_error, per_surface, precision = _mfs_within_one_bed(
        _column_picks(interp), true_surfaces
    )
    lines.append(
        "| true bed labels (ceiling of bed-scale MFS picks) | - | 1.000 | - | - | - | - | - | - "
        f"| {mfs:.2f} of {n_cores} | {per_surface:.2f} | {precision:.2f} | {mfs_error:.2f} | - |"
    )
    # a depth grid instead of beds: can the model place a boundary inside a bed?
    grid = []
    for step in GRID_STEPS:
        tr_g, te_g = train.successions("grid", step), test.successions("grid", step)
        for method, labels in (("supervised", "true_tract"), ("unsupervised", None)):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                model = TractHMM(scheme=scheme, unit="grid", step=step, random_state=0).fit(
                    tr_g, labels=labels
                )
            cells = pd.concat([c.beds for c in model.decode(te_g)], ignore_index=True)
            acc = float(np.mean(cells["true_tract"].astype(str) == cells["tract"].astype(str)))
            grid.append(f"{method} {acc:.3f} (step {step} m)")
    lines += [
        "",
        'Depth grid (`unit="grid"`, default model; share of grid cells decoded right, '
        "to compare with the thickness accuracy of beds): " + ", ".join(grid) + ".",
    ]
    lines += [
        "",
        "True tracts of the decoded beds: "
        + ", ".join(f"{k} {v}" for k, v in truth_counts.items())
        + ".",
    ]
    return "\n".join(lines)


def synthetic_section() -> str:
    import hmm_synthetic as synth

    train, test = synth.cores(20, 100, seed=1001), synth.cores(10, 100, seed=1002)
    tm = default_tract_model()
    scheme = synth.scheme()
    rule = _rule_column(test, scheme, tm)
    lines = [
        "Project synthetic generator (`tests/hmm_synthetic.py`): fit on seed 1001 "
        "(20 cores x 100 beds), decode seed 1002 (10 cores x 100 beds).",
        "",
        "| method | bed accuracy | F1 HST | F1 FSST | F1 LST | F1 TST |",
        "|---|---|---|---|---|---|",
    ]
    for method, labels in (("supervised", "true_tract"), ("unsupervised", None)):
        model = TractHMM(scheme=scheme, random_state=0).fit(train, labels=labels)
        interp = model.decode(test)
        beds = pd.concat([c.beds.assign(core=c.core) for c in interp], ignore_index=True)
        beds["rule"] = [t for c in interp for t in rule[c.core]]
        sc = _scores(beds, "tract", tm.order)
        lines.append(
            f"| {method} | {sc['accuracy']:.3f} | "
            + " | ".join(f"{sc[f'F1 {t}']:.2f}" for t in tm.order)
            + " |"
        )
    sc = _scores(beds, "rule", tm.order)
    lines.append(
        f"| trend rule (baseline) | {sc['accuracy']:.3f} | "
        + " | ".join(f"{sc[f'F1 {t}']:.2f}" for t in tm.order)
        + " |"
    )
    return "\n".join(lines)


def _sense(interp, scheme) -> dict:
    """Stacking of the decoded column: deepening / shallowing steps per tract, MFS placement."""
    steps: dict[str, list[float]] = {}
    at_turn = []
    for c in interp:
        for _, part in c.beds.groupby("segment", sort=False):
            b = part.iloc[::-1]  # base to top
            rank = b["facies"].map(scheme.rank).to_numpy(float)
            tract = b["tract"].to_numpy(dtype=object)
            for i in range(1, len(b)):
                if tract[i] == tract[i - 1]:
                    steps.setdefault(tract[i], []).append(np.sign(rank[i] - rank[i - 1]))
            runs = [0] + [i for i in range(1, len(b)) if tract[i] != tract[i - 1]] + [len(b)]
            for k in range(1, len(runs) - 1):
                start, cut = runs[k - 1], runs[k]
                if tract[start] != "TST":
                    continue
                stop = runs[k + 1]
                deepest = start + int(np.argmax(rank[start:stop]))
                # the MFS lies on the contact below bed `cut`: the deepest bed is the one
                # below or above it
                at_turn.append(cut - 2 <= deepest <= cut + 1)
    out = {
        t: (float(np.mean(np.asarray(v) > 0)), float(np.mean(np.asarray(v) < 0)), len(v))
        for t, v in steps.items()
    }
    out["mfs_at_turn"] = (float(np.mean(at_turn)) if at_turn else float("nan"), len(at_turn))
    return out


def demo_sense_section() -> str:
    """Does the decoded column of the demo make geological sense?"""
    from faciesseq.simulate import load_scenario, simulate

    scenario = load_scenario(ROOT / "configs" / "demo-quillerby.yaml")
    scheme = scenario.scheme
    cores = simulate(scenario).cores
    succ = cores.successions("beds")
    lines = [
        "Demo (`configs/demo-quillerby.yaml`, its own seed: the `demo_cores/` database), "
        f"{len(cores)} cores, {sum(len(s) for s in succ)} beds; fit and decode of the same "
        "cores with the default model. Steps between successive beds of one decoded tract "
        "that deepen / shallow upward (facies rank up / down), and the share of decoded MFSs "
        "(a decoded TST run ending) with the deepest bed of the TST and the tract above it "
        "on one of the two beds beside the contact, or one further.",
        "",
        "| fit | accuracy vs truth | TST steps deepening | HST steps shallowing | "
        "FSST steps shallowing | LST steps shallowing | MFS at the deepest bed |",
        "|---|---|---|---|---|---|---|",
    ]
    for method, labels in (("supervised", "true_tract"), ("unsupervised", None)):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            model = TractHMM(scheme=scheme, random_state=0, unit="beds").fit(succ, labels=labels)
        interp = model.decode(succ)
        beds = pd.concat([c.beds for c in interp], ignore_index=True)
        acc = float(np.mean(beds["true_tract"] == beds["tract"]))
        sense = _sense(interp, scheme)

        def cell(t, k, sense=sense):
            v = sense.get(t)
            return f"{v[k]:.2f} of {v[2]}" if v else "-"

        lines.append(
            f"| {method} | {acc:.3f} | {cell('TST', 0)} | {cell('HST', 1)} | {cell('FSST', 1)} | "
            f"{cell('LST', 1)} | {sense['mfs_at_turn'][0]:.2f} of {sense['mfs_at_turn'][1]} |"
        )
    truth = [_Truth(s) for s in succ]
    sense = _sense(truth, scheme)
    lines.append(
        "| true tracts | 1.000 | "
        + " | ".join(
            f"{sense[t][k]:.2f} of {sense[t][2]}"
            for t, k in (("TST", 0), ("HST", 1), ("FSST", 1), ("LST", 1))
        )
        + f" | {sense['mfs_at_turn'][0]:.2f} of {sense['mfs_at_turn'][1]} |"
    )
    return "\n".join(lines)


class _Truth:
    """A succession shown as a decoded core (depth order) for :func:`_sense`."""

    def __init__(self, succession):
        beds = succession.beds.iloc[::-1]
        self.beds = beds.assign(segment=succession.segment, tract=beds["true_tract"])


def council_grove_section() -> str:
    from faciesseq.io import read_cores

    data = ROOT / "tests" / "data" / "council_grove"
    cores = read_cores(
        data / "facies_vectors_subset.csv",
        layout="samples",
        columns={"core": "Well Name", "depth": "Depth", "facies": "Facies"},
        units="ft",
        repeated_depths="keep-first",
        scheme=data / "scheme.yaml",
    )
    cores = cores.subset([n for n in cores.names if n != "Recruit F9"])
    succ = cores.successions("beds")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=load_scheme(data / "scheme.yaml"), random_state=0).fit(succ)
    interp = model.decode(succ)
    beds = pd.concat([c.beds.assign(core=c.core) for c in interp], ignore_index=True)
    marine = beds["Formation"].astype(str).str.endswith("LM").to_numpy()
    dec = beds["tract"].isin(["TST", "HST"]).to_numpy()
    w = beds["thickness"].to_numpy(float)
    agreement = float(np.sum(w * (marine == dec)) / np.sum(w))
    table = pd.crosstab(
        beds["tract"], np.where(marine, "marine (LM)", "nonmarine (SH)"), values=w, aggfunc="sum"
    ).fillna(0.0)
    dist = []
    for c in interp:
        b = c.beds
        fm = b["Formation"].astype(str).to_numpy()
        tops = b["top"].to_numpy(float)
        seg = b["segment"].to_numpy()
        tr = b["tract"].to_numpy()
        changes = np.array([tops[i + 1] for i in range(len(b) - 1) if tr[i] != tr[i + 1]])
        for i in range(len(b) - 1):
            if fm[i] != fm[i + 1] and seg[i] == seg[i + 1]:
                dist.append(np.min(np.abs(changes - tops[i + 1])) if len(changes) else np.inf)
    dist = np.asarray(dist)
    lines = [
        f"Council Grove (real; five wells, Recruit F9 left out): {len(beds)} beds, "
        f"{w.sum():.1f} ft; unsupervised fit and decode of the same wells (the `Formation` "
        "column is never shown to the model).",
        "",
        f"- decoded TST+HST vs marine (`LM`) half-cycles, FSST+LST vs nonmarine (`SH`): "
        f"**{100 * agreement:.1f} %** of the cored thickness agree.",
        f"- formation boundaries at bed contacts: {len(dist)}; a decoded tract boundary at the "
        f"same contact for {100 * np.mean(dist <= 0.01):.0f} %, within 2 ft for "
        f"{100 * np.mean(dist <= 2):.0f} %, within 5 ft for {100 * np.mean(dist <= 5):.0f} % "
        f"(median distance {np.median(dist):.1f} ft).",
        "",
        "Thickness (ft) by decoded tract and half-cycle:",
        "",
        "| tract | " + " | ".join(table.columns) + " |",
        "|---|" + "---|" * len(table.columns),
    ]
    for t, row in table.iterrows():
        lines.append(f"| {t} | " + " | ".join(f"{v:.1f}" for v in row) + " |")
    return "\n".join(lines)


def main() -> None:
    t0 = time.perf_counter()
    parts = [
        "## Recovery of known tracts, and real data",
        "",
        f"Measured {stamp()} on {machine()}, "
        "command: `MPLBACKEND=Agg python benchmarks/eval_recovery.py`.",
        "",
        simulated_section("scenario-ramp.yaml"),
        "",
        simulated_section("scenario-hinge-table.yaml"),
        "",
        simulated_section("scenario-asymmetric-shelf.yaml"),
        "",
        synthetic_section(),
        "",
        demo_sense_section(),
        "",
        council_grove_section(),
    ]
    parts += ["", f"(whole evaluation: {time.perf_counter() - t0:.0f} s)"]
    text = "\n".join(parts)
    write_section(
        ROOT / "benchmarks" / "hmm_model.md", "recovery", text, "Tract model: measurements"
    )
    print(text)


if __name__ == "__main__":
    main()
