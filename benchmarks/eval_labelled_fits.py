"""Fits with labels (three labelled cores, and every core) on the minimal table, on
the project's six scenarios and on the blind generator's cores, as Python calls.

Run from the repository root::

    python benchmarks/eval_labelled_fits.py --seed 241

For each scenario: fit seeds SEED..SEED+2, decode SEED+3, SEED+4, the scenario's
scheme, the cores as ``core, top, base, facies`` plus the ``tract`` of three cores
(the benchmark's choice of labelled wells, ``eval_unsupervised._semi_cores``) or of
every core; balanced accuracy of the decoded held-out cores (``eval_unsupervised.score``).
For the blind generator (``benchmarks/blind_generator.py``), each of the seeds
SEED..SEED+2 and its three settings (default, every bed 0.6 m, half the sequences
without a falling stage): 8 training cores (the first 3, then all, labelled) and 4
test cores (seed + 100), its scheme, balanced accuracy by thickness on the beds.
Rows print as they come: scenario / setting, 3 labelled cores, every core labelled.

``--features a,b`` fits with those emission features instead of the defaults (e.g. the
context features of fits without labels, to hold the stacking trees against them).
``--substates N`` gives every tract N sub-states. ``--generator
benchmarks/shelf_generator.py`` reads the second generator written blind in place of
the first (``blind_generator.py``). ``--root DIR`` reads faciesseq from another
checkout (e.g. ``git worktree add /tmp/before <commit>``) to compare a change with
the code before it on the same cores.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
SETTINGS = ((), ("--equal-beds",), ("--no-fsst-prob", "0.5"))
MINIMAL = ["core", "top", "base", "facies"]
TRACTS = ("HST", "FSST", "LST", "TST")


def scenario_row(name: str, seed: int, root: Path, features=None, substates=None) -> list[float]:
    from eval_unsupervised import _runner, minimal_labelled_sets, score

    from faciesseq.hmm import TractHMM

    fit, decode = [seed, seed + 1, seed + 2], [seed + 3, seed + 4]
    (scheme, run), _ = _runner(root / "configs" / f"{name}.yaml")
    sets, blind, test, truth = minimal_labelled_sets(run, fit, decode)
    out = []
    for cores in sets:
        model = TractHMM(scheme=scheme, random_state=fit[0], features=features, substates=substates)
        model.fit(cores, labels="tract", calibrate=False)
        out.append(score(model.decode(blind), test, truth)["balanced_accuracy"])
    return out


def balanced_accuracy(truth: pd.DataFrame, decoded: pd.DataFrame) -> float:
    """Mean over the tracts of the true thickness decoded as that tract."""
    recall = []
    for tract in TRACTS:
        hit = total = 0.0
        for core, beds in truth[truth["tract"] == tract].groupby("core"):
            d = decoded[(decoded["core"] == core) & (decoded["tract"] == tract)]
            top, base = d["top"].to_numpy(), d["base"].to_numpy()
            for t, b in zip(beds["top"], beds["base"], strict=True):
                hit += np.clip(np.minimum(base, b) - np.maximum(top, t), 0, None).sum()
                total += b - t
        if total:
            recall.append(hit / total)
    return float(np.mean(recall))


def blind_row(
    seed: int,
    setting: tuple[str, ...],
    folder: Path,
    features=None,
    substates=None,
    generator: Path = HERE / "blind_generator.py",
) -> list[float]:
    from faciesseq.core import CoreSet
    from faciesseq.hmm import TractHMM
    from faciesseq.scheme import load_scheme

    generator = [sys.executable, str(generator)]
    train, test, scheme = folder / "train.csv", folder / "test.csv", folder / "scheme.yaml"
    subprocess.run(
        [
            *generator,
            "--seed",
            str(seed),
            "--cores",
            "8",
            "-o",
            train,
            "--scheme",
            scheme,
            "--prefix",
            "TR",
            *setting,
        ],
        check=True,
    )
    subprocess.run(
        [
            *generator,
            "--seed",
            str(seed + 100),
            "--cores",
            "4",
            "-o",
            test,
            "--prefix",
            "TE",
            *setting,
        ],
        check=True,
    )
    tr, te = pd.read_csv(train), pd.read_csv(test)
    out = []
    for n_labelled in (3, 8):
        labelled = tr["core"].drop_duplicates().tolist()[:n_labelled]
        cores = CoreSet.from_frame(tr.assign(tract=tr["tract"].where(tr["core"].isin(labelled))))
        model = TractHMM(
            scheme=load_scheme(scheme), random_state=seed, features=features, substates=substates
        )
        model.fit(cores, labels="tract", calibrate=False)
        decoded = model.decode(CoreSet.from_frame(te[MINIMAL])).tracts_table()
        out.append(balanced_accuracy(te, decoded))
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seed", type=int, required=True, help="first of the seeds")
    ap.add_argument("--root", type=Path, default=HERE.parent, help="faciesseq checkout")
    ap.add_argument("--only", choices=("scenarios", "blind"), help="one half of the rows")
    ap.add_argument("--features", help="emission features, comma-separated (default: the fit's)")
    ap.add_argument("--substates", type=int, help="sub-states per tract (default: the fit's)")
    ap.add_argument(
        "--generator",
        type=Path,
        default=HERE / "blind_generator.py",
        help="generator written blind (blind_generator.py or shelf_generator.py)",
    )
    a = ap.parse_args(argv)
    sys.path[:0] = [str(a.root), str(HERE)]
    import faciesseq  # from --root, before a benchmark module puts its own checkout first

    warnings.simplefilter("ignore")
    features = a.features.split(",") if a.features else None
    source = Path(faciesseq.__file__).parent
    print(
        f"faciesseq from {source}; seed {a.seed}; features {features or 'default'}; "
        f"sub-states {a.substates or 'default'}\n"
    )
    print("| cores | 3 labelled cores | every core labelled |\n|---|---|---|")
    if a.only != "blind":
        from eval_suggested_ranks import SCENARIOS  # the project's six, as there

        for name in SCENARIOS:
            row = scenario_row(name, a.seed, a.root, features, a.substates)
            print(f"| {name} | " + " | ".join(f"{x:.3f}" for x in row) + " |", flush=True)
    if a.only != "scenarios":
        for seed in (a.seed, a.seed + 1, a.seed + 2):
            for setting in SETTINGS:
                with tempfile.TemporaryDirectory() as tmp:
                    row = blind_row(
                        seed, setting, Path(tmp), features, a.substates, a.generator.resolve()
                    )
                label = " ".join((a.generator.stem.split("_")[0], str(seed), *setting))
                print(f"| {label} | " + " | ".join(f"{x:.3f}" for x in row) + " |", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
