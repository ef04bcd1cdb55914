"""Whether the true tracts are where the likelihood of a cycle-level model peaks.

Run from the repository root (about 2 minutes)::

    python benchmarks/eval_cycle_likelihood.py --seeds 601,602,603 --out /tmp/cyclik
    python benchmarks/eval_cycle_likelihood.py --generator benchmarks/shelf_generator.py \
        --settings default,equal,nofsst,proximal,distal --seeds 601,602,603 --out /tmp/cyclik-shelf

A probe of the question behind fits without labels, outside the package's model: cut
each core of a generator written blind (``benchmarks/blind_generator.py``, or
``--generator``) into cycles at every rise of rank (its scheme's ranks; the
generator's parasequences are shallowing-upward), describe each cycle by seven numbers
(deepest and shallowest rank, the change of the shallowest rank from the cycle below
and to the cycle above, the change of the deepest rank, whether two ranks are skipped
inside it, log mean bed thickness), and fit a four-state Gaussian hidden Markov model
(hmmlearn's ``GaussianHMM``, diagonal covariances; a reference library) whose states
follow the cyclic order HST -> FSST -> LST -> TST -> HST (HST -> LST allowed):

- ``labelled``: the states' means, variances and transitions set from the cycles' true
  tracts (each cycle's tract that of most of its thickness), no EM: how far these
  numbers tell the tracts apart;
- ``unlabelled``: EM from 10 random starts, the best likelihood kept, the state whose
  shallowest rank rises most named TST and the others by the order;
- ``em_from_labelled``: EM started from the labelled model: does the likelihood hold
  the true partition or leave it?

Each decodes 4 test cores (seed + 100) scored as ``eval_blind_generator.py`` scores
(balanced accuracy of the four tracts on a 0.01 m grid), beside the training
log-likelihood of each model. Writes ``OUT/<setting>/<seed>/`` and prints the table.
"""

import argparse
import logging
import os
import subprocess
import sys
import warnings

import numpy as np
import pandas as pd
import yaml
from hmmlearn.hmm import GaussianHMM

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import eval_blind_generator as blind  # noqa: E402

TRACTS = ["HST", "FSST", "LST", "TST"]
FEATURES = ["base", "top", "top_below", "top_above", "base_below", "skip", "log_bed"]


def cycles(beds: pd.DataFrame, ranks: dict) -> pd.DataFrame:
    """One row per cycle (cut at every rise of rank, base to top) with its numbers."""
    rows = []
    for core, g in beds.groupby("core", sort=False):
        g = g.sort_values("top", ascending=False)  # base to top
        r = g["facies"].map(ranks).to_numpy(float)
        cycle = np.r_[0, np.cumsum(np.diff(r) > 0)]
        thick = (g["base"] - g["top"]).to_numpy(float)
        for c in np.unique(cycle):
            m = cycle == c
            rr = r[m]
            rows.append(
                dict(
                    core=core,
                    rows=g.index.to_numpy()[m],
                    base=rr[0],
                    top=rr.min(),
                    skip=float((np.diff(rr) <= -2).any()),
                    log_bed=np.log(thick[m].mean()),
                )
            )
    out = pd.DataFrame(rows)
    by_core = out.groupby("core", sort=False)
    out["top_below"] = by_core["top"].diff().fillna(0.0)
    out["top_above"] = (-by_core["top"].diff(-1)).fillna(0.0)
    out["base_below"] = by_core["base"].diff().fillna(0.0)
    return out


def cyclic_transitions() -> np.ndarray:
    a = np.zeros((4, 4))
    for i in range(4):
        a[i, i], a[i, (i + 1) % 4] = 0.6, 0.4
    a[0, 2] = 0.1  # HST -> LST: no falling stage
    return a / a.sum(axis=1, keepdims=True)


def labelled_model(c: pd.DataFrame, y: np.ndarray) -> GaussianHMM:
    x = c[FEATURES].to_numpy(float)
    m = GaussianHMM(4, covariance_type="diag", min_covar=0.05, init_params="", n_iter=200)
    seen = [x[y == k] if (y == k).any() else x for k in range(4)]  # a tract absent: all
    m.means_ = np.array([v.mean(axis=0) for v in seen])
    m.covars_ = np.array([v.var(axis=0) + 0.05 for v in seen])
    counts, start = np.full((4, 4), 0.01), np.ones(4)
    for _, g in c.assign(y=y).groupby("core", sort=False):
        yy = g["y"].to_numpy()
        start[yy[0]] += 1
        np.add.at(counts, (yy[:-1], yy[1:]), 1)
    m.transmat_ = counts / counts.sum(axis=1, keepdims=True)
    m.startprob_ = start / start.sum()
    return m


def unlabelled_model(x: np.ndarray, lengths: np.ndarray, seed: int) -> tuple:
    best = None
    for s in range(10):
        m = GaussianHMM(
            4,
            covariance_type="diag",
            min_covar=0.05,
            n_iter=200,
            random_state=seed * 100 + s,
            init_params="mc",
        )
        m.startprob_, m.transmat_ = np.full(4, 0.25), cyclic_transitions()
        m.fit(x, lengths)
        ll = m.score(x, lengths)
        if best is None or ll > best[0]:
            best = (ll, m)
    m = best[1]
    tst = int(np.argmax(m.means_[:, FEATURES.index("top_below")]))
    names = {(tst + 1 + k) % 4: k for k in range(4)}  # the state after TST is HST
    return m, np.array([names[s] for s in range(4)])


def scored(model, names, test_cycles, test, wd, label) -> float:
    x = test_cycles[FEATURES].to_numpy(float)
    state = model.predict(x, test_cycles.groupby("core", sort=False).size().to_numpy())
    dec = test[["core", "top", "base"]].copy()
    dec["tract"] = ""
    for rows, s in zip(test_cycles["rows"], state, strict=True):
        dec.loc[rows, "tract"] = TRACTS[names[s]]
    out = os.path.join(wd, f"dec_{label}")
    os.makedirs(out, exist_ok=True)
    dec.to_csv(os.path.join(out, "tracts.csv"), index=False)
    pd.DataFrame(columns=["core", "surface", "depth"]).to_csv(
        os.path.join(out, "picks.csv"), index=False
    )
    return blind.score(os.path.join(wd, "test.csv"), out)[0]["bacc"]


def one_set(generator, setting, seed, out) -> dict:
    wd = os.path.join(out, setting, str(seed))
    os.makedirs(wd, exist_ok=True)
    extra = blind.SETTINGS[setting]
    for s, n, name, more in (
        (seed, 8, "train", ["--scheme", "scheme.yaml"]),
        (seed + 100, 4, "test", []),
    ):
        cmd = [sys.executable, generator, "--seed", str(s), "--cores", str(n), "-o", f"{name}.csv"]
        subprocess.run([*cmd, *more, "--prefix", name[:2].upper(), *extra], cwd=wd, check=True)
    with open(os.path.join(wd, "scheme.yaml")) as f:
        scheme = yaml.safe_load(f)
    ranks = {f["code"]: f["rank"] for f in scheme["facies"]}
    train, test = (pd.read_csv(os.path.join(wd, f"{n}.csv")) for n in ("train", "test"))
    ctr, cte = cycles(train, ranks), cycles(test, ranks)
    thick = train.assign(th=train["base"] - train["top"])
    y = np.array(
        [TRACTS.index(thick.loc[r].groupby("tract")["th"].sum().idxmax()) for r in ctr["rows"]]
    )
    x, lengths = ctr[FEATURES].to_numpy(float), ctr.groupby("core", sort=False).size().to_numpy()
    ident = np.arange(4)
    lab = labelled_model(ctr, y)
    row = dict(setting=setting, seed=seed, ll_labelled=lab.score(x, lengths))
    row["labelled"] = scored(lab, ident, cte, test, wd, "labelled")
    unl, names = unlabelled_model(x, lengths, seed)
    row["ll_unlabelled"], row["unlabelled"] = (
        unl.score(x, lengths),
        scored(unl, names, cte, test, wd, "unlabelled"),
    )
    lab.params = "stmc"
    lab.fit(x, lengths)
    row["ll_em_from_labelled"] = lab.score(x, lengths)
    row["em_from_labelled"] = scored(lab, ident, cte, test, wd, "em")
    return row


def main() -> None:
    ap = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    ap.add_argument("--generator", default=os.path.join(HERE, "blind_generator.py"))
    ap.add_argument("--seeds", default="601,602,603")
    ap.add_argument("--settings", default="default,equal,nofsst")
    ap.add_argument("--out", default="/tmp/cyclik")
    a = ap.parse_args()
    warnings.filterwarnings("ignore")
    logging.disable(logging.WARNING)  # hmmlearn's convergence notes
    generator = os.path.abspath(a.generator)
    rows = [
        one_set(generator, setting, int(seed), os.path.abspath(a.out))
        for setting in a.settings.split(",")
        for seed in a.seeds.split(",")
    ]
    table = pd.DataFrame(rows)
    pd.set_option("display.width", 160)
    print(table.round(3).to_string(index=False))
    print(table.drop(columns="seed").groupby("setting").mean().round(3).to_string())
    print("mean:", table.drop(columns=["setting", "seed"]).mean().round(3).to_dict())


if __name__ == "__main__":
    main()
