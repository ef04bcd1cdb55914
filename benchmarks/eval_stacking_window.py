"""Which classifier over which window of beds, for the ``stacking`` piece; writes
a section of benchmarks/hmm_model.md.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/eval_stacking_window.py

On the tuning seeds of the simulated scenarios (fit 11-15, decode 16-17; the
held-out seeds 21-27 of ``eval_recovery.py`` are not touched), the stacking
window of ``faciesseq.hmm.encoding.stacking_window`` with 2, 4 or 6 beds on
each side is given to three scikit-learn classifiers: gradient-boosted trees
(the settings of ``faciesseq.hmm.boosting.fit_boosted``), a small neural network
and logistic regression (missing values set to 0 for the last two, after
standardising). Scores are the share of held-out beds whose true tract is the
classifier's most probable one, alone and inside the HMM (Viterbi with the
tract-to-tract transitions counted from the training labels, the scaled
likelihood of Bourlard & Morgan 1994 as the emission).
"""

from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import machine, stamp, write_section  # noqa: E402
from eval_recovery import _simulated  # noqa: E402

from faciesseq.hmm.encoding import encode_beds  # noqa: E402
from faciesseq.hmm.engine import viterbi  # noqa: E402
from faciesseq.scheme import load_scheme  # noqa: E402

TRACTS = ("HST", "FSST", "LST", "TST")
SCENARIOS = ("scenario-ramp.yaml", "scenario-hinge-table.yaml", "scenario-asymmetric-shelf.yaml")


def _window(successions, scheme, half_width):
    from faciesseq.hmm.encoding import stacking_window

    tables = [s.beds for s in successions]
    facies = list(scheme.codes)
    contacts = sorted({str(c) for t in tables for c in t["contact"].dropna()})
    ranks = np.array([scheme.rank(f) for f in facies], dtype=float)
    beds = encode_beds(tables, facies, contacts, ["thickness"], ranks)
    x = stacking_window(
        beds.facies, beds.lengths, ranks, beds.numeric["thickness"], beds.contact, half_width
    )
    y = np.concatenate([[TRACTS.index(v) for v in t["true_tract"]] for t in tables])
    return x.astype(float), y, beds.lengths


def _transitions(y, lengths):
    a, start = np.full((4, 4), 0.5), np.full(4, 0.5)
    i = 0
    for n in lengths:
        c = y[i : i + n]
        start[c[0]] += 1
        np.add.at(a, (c[:-1], c[1:]), 1)
        i += n
    return start / start.sum(), a / a.sum(axis=1, keepdims=True)


def _classifiers():
    from sklearn.ensemble import HistGradientBoostingClassifier
    from sklearn.linear_model import LogisticRegression
    from sklearn.neural_network import MLPClassifier
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    return (
        (
            "boosted trees",
            lambda: HistGradientBoostingClassifier(
                max_iter=100,
                learning_rate=0.1,
                max_leaf_nodes=15,
                min_samples_leaf=10,
                l2_regularization=1.0,
                early_stopping=False,
                random_state=0,
            ),
            False,
        ),
        (
            "neural network (32 units)",
            lambda: make_pipeline(
                StandardScaler(),
                MLPClassifier((32,), alpha=1e-2, max_iter=2000, random_state=0),
            ),
            True,
        ),
        (
            "logistic regression",
            lambda: make_pipeline(StandardScaler(), LogisticRegression(max_iter=2000)),
            True,
        ),
    )


def main() -> None:
    t0 = time.perf_counter()
    scheme = load_scheme(ROOT / "configs" / "scheme-shoreface.yaml")
    lines = [
        f"Measured {stamp()} on {machine()}, command: "
        "`MPLBACKEND=Agg python benchmarks/eval_stacking_window.py`. Tuning seeds only "
        "(fit 11-15, decode 16-17). Cells: classifier alone / inside the HMM.",
        "",
        "| classifier | beds each side | "
        + " | ".join(s.removesuffix(".yaml") for s in SCENARIOS)
        + " |",
        "|---|---|" + "---|" * len(SCENARIOS),
    ]
    data = {}
    for name in SCENARIOS:
        train, _ = _simulated((11, 12, 13, 14, 15), name)
        test, _ = _simulated((16, 17), name)
        data[name] = (train.successions("beds"), test.successions("beds"))
    for label, make, fill in _classifiers():
        for half_width in (2, 4, 6):
            cells = []
            for name in SCENARIOS:
                tr, te = data[name]
                xtr, ytr, ltr = _window(tr, scheme, half_width)
                xte, yte, lte = _window(te, scheme, half_width)
                if fill:
                    xtr, xte = np.nan_to_num(xtr), np.nan_to_num(xte)
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    clf = make().fit(xtr, ytr)
                p = np.full((len(yte), 4), 1e-3)
                p[:, clf.classes_] = np.maximum(clf.predict_proba(xte), 1e-3)
                prior = np.maximum(np.bincount(ytr, minlength=4) / len(ytr), 1e-3)
                start, trans = _transitions(ytr, ltr)
                path, _ = viterbi(np.log(p) - np.log(prior), lte, start, trans)
                alone = float(np.mean(p.argmax(axis=1) == yte))
                hmm = float(np.mean(path == yte))
                cells.append(f"{alone:.3f} / {hmm:.3f}")
            lines.append(f"| {label} | {half_width} | " + " | ".join(cells) + " |")
    lines += ["", f"(whole evaluation: {time.perf_counter() - t0:.0f} s)"]
    text = "\n".join(lines)
    print(text)
    write_section(
        ROOT / "benchmarks" / "hmm_model.md",
        "stacking-window",
        "## Stacking window\n\n" + text,
        "Tract model: measurements",
    )


if __name__ == "__main__":
    main()
