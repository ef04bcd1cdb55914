"""``faciesseq fit`` and ``decode``, as whole commands, on cores of a generator written blind.

Run from the repository root (about 4 minutes for 5 seeds and 3 settings)::

    python benchmarks/eval_blind_generator.py --seeds 11,12,13,14,15 --out /tmp/blind

``--generator benchmarks/shelf_generator.py`` reads the cores of the second generator
written blind instead (its settings also ``proximal`` and ``distal``: every core at a
landward or a basinward site).

For each setting (``default``; ``equal``: every bed 0.6 m; ``nofsst``: half the
sequences without a falling stage) and each seed, 8 training cores (that seed) and 4
test cores (seed + 100) from ``benchmarks/blind_generator.py``; four fits: without
labels on the minimal table ``core, top, base, facies`` without a scheme (a) and with
the generator's scheme (b), with the tracts of 3 training cores with the scheme (c)
and without it (d); each decodes the test cores' minimal table, scored on a 0.01 m
grid against the true tracts: balanced accuracy (mean over the four tracts of the
thickness recalled), decoded tract boundaries against true ones, mean probability of
the decoded tract, and the balanced accuracy of TST against the other tracts
(``half_bacc``: the transgressive and regressive halves of the cycle), and the MFS picks
within 2 m of a true MFS (the top of each TST; recall and precision pooled over the
seeds, ``mfs_recall`` and ``mfs_precision`` in the summary). Writes
``OUT/runs/<setting>/<seed>/``, ``OUT/results.csv``, ``OUT/summary.md`` (with the summed
confusion tables) and ``OUT/commands.log``.
"""

import argparse
import itertools
import os
import subprocess
import sys
import time

import numpy as np
import pandas as pd

GENERATOR = os.path.join(os.path.dirname(os.path.abspath(__file__)), "blind_generator.py")
PY = sys.executable
FQ = [PY, "-m", "faciesseq"]
HERE = "/tmp/blind"  # --out
TRACTS = ["HST", "FSST", "LST", "TST"]
SETTINGS = {
    "default": [],
    "equal": ["--equal-beds"],
    "nofsst": ["--no-fsst-prob", "0.5"],
    "proximal": ["--site", "proximal"],  # shelf_generator.py only
    "distal": ["--site", "distal"],  # shelf_generator.py only
}


def run(cmd, cwd):
    t0 = time.time()
    p = subprocess.run(cmd, cwd=cwd, capture_output=True, text=True)
    dt = time.time() - t0
    with open(os.path.join(HERE, "commands.log"), "a") as f:
        f.write(f"\n$ (cd {cwd} && {' '.join(cmd)})  # rc={p.returncode} {dt:.1f}s\n")
        if p.stderr.strip():
            f.write("STDERR:\n" + p.stderr + "\n")
        f.write("STDOUT (head):\n" + "\n".join(p.stdout.splitlines()[:12]) + "\n")
    if p.returncode != 0:
        print(f"FAILED rc={p.returncode}: {' '.join(cmd)}\n{p.stderr}", file=sys.stderr)
    return p, dt


def grid_labels(df, col, step=0.01):
    """Per core, an array of labels on a regular depth grid of cell midpoints."""
    out = {}
    for core, g in df.groupby("core", sort=False):
        g = g.sort_values("top")
        top, base = g["top"].min(), g["base"].max()
        n = round((base - top) / step)
        mids = top + (np.arange(n) + 0.5) * step
        idx = np.searchsorted(g["top"].to_numpy(), mids, side="right") - 1
        lab = g[col].to_numpy()[np.clip(idx, 0, len(g) - 1)].astype(object)
        inside = (idx >= 0) & (mids < g["base"].to_numpy()[np.clip(idx, 0, len(g) - 1)])
        lab[~inside] = None
        out[core] = (top, lab)
    return out


def changes(seq):
    seq = [s for s in seq if isinstance(s, str)]
    return sum(1 for a, b in itertools.pairwise(seq) if a != b)


def _half_cycles(conf):
    """Balanced accuracy of TST against the other tracts (the transgressive and the
    regressive halves of the cycle, ``faciesseq.scores.half_cycle_accuracy``), from
    the confusion in metres (undecoded depth counts as wrong)."""
    rest = [t for t in TRACTS if t != "TST"]
    t_all = conf.loc["TST"].sum()
    r_all = conf.loc[rest].to_numpy().sum()
    recalls = []
    if t_all:
        recalls.append(conf.loc["TST", "TST"] / t_all)
    if r_all:
        recalls.append(conf.loc[rest, rest].to_numpy().sum() / r_all)
    return float(np.mean(recalls)) if recalls else np.nan


def true_mfs(truth):
    """The true maximum flooding surfaces of a truth table (``core, top, base, tract``):
    each top of a TST interval with another tract above it (``core, surface, depth``)."""
    rows = []
    for core, g in truth.groupby("core", sort=False):
        g = g.sort_values("top")
        tract, top = g["tract"].to_numpy(object), g["top"].to_numpy(float)
        for i in range(1, len(g)):
            if tract[i] == "TST" and tract[i - 1] != "TST":
                rows.append((core, "MFS", top[i]))
    return pd.DataFrame(rows, columns=["core", "surface", "depth"])


def mfs_scores(truth, dec_dir, tolerance=2.0):
    """MFS picks of a decode within ``tolerance`` m of a true MFS, and the true ones
    found (:func:`faciesseq.scores.surface_pick_scores`): found, true, right, picks."""
    from faciesseq.scores import surface_pick_scores

    picks = pd.read_csv(os.path.join(dec_dir, "picks.csv"), comment="#")
    s = surface_pick_scores(picks, true_mfs(truth), "MFS", tolerance)
    return dict(
        mfs_found=s.n_true_found, mfs_true=s.n_true, mfs_right=s.n_picks_right, mfs_picks=s.n_picks
    )


def score(truth_csv, dec_dir):
    truth = pd.read_csv(truth_csv)
    dec = pd.read_csv(os.path.join(dec_dir, "tracts.csv"), comment="#")
    tg = grid_labels(truth, "tract")
    dg = grid_labels(dec, "tract")
    tot = {t: 0 for t in TRACTS}
    hit = {t: 0 for t in TRACTS}
    conf = pd.DataFrame(0.0, index=TRACTS, columns=[*TRACTS, "none"])
    for core, (top, lab) in tg.items():
        dtop, dlab = dg[core]
        off = round((dtop - top) / 0.01)
        d = np.full(len(lab), None, dtype=object)
        # align grids (both start at the same core top in practice)
        src = dlab[max(0, -off) : max(0, -off) + len(lab) - max(0, off)]
        d[max(0, off) : max(0, off) + len(src)] = src
        for t in TRACTS:
            m = lab == t
            tot[t] += m.sum()
            hit[t] += (d[m] == t).sum()
            for u in TRACTS:
                conf.loc[t, u] += (d[m] == u).sum() * 0.01
            conf.loc[t, "none"] += sum(1 for x in d[m] if x is None) * 0.01
    recall = {t: (hit[t] / tot[t] if tot[t] else np.nan) for t in TRACTS}
    bacc = np.nanmean(list(recall.values()))
    half = _half_cycles(conf)
    tb = sum(changes(g.sort_values("top")["tract"].tolist()) for _, g in truth.groupby("core"))
    db = sum(changes(g.sort_values("top")["tract"].tolist()) for _, g in dec.groupby("core"))
    pcols = [f"p_{t}" for t in TRACTS]
    if all(c in dec.columns for c in pcols):
        pd_ = dec.apply(lambda r: r.get(f"p_{r['tract']}", np.nan), axis=1)
        meanp = float(np.nanmean(pd_))
        th = dec["base"] - dec["top"]
        meanp_thk = float((pd_ * th).sum() / th.sum())
    else:
        meanp = meanp_thk = np.nan
    acc = sum(hit.values()) / sum(tot.values())  # thickness-weighted overall accuracy
    # bed-weighted accuracy of decoded beds (for comparison with mean p)
    return dict(
        bacc=bacc,
        half_bacc=half,
        acc=acc,
        true_bounds=tb,
        dec_bounds=db,
        meanp=meanp,
        meanp_thk=meanp_thk,
        **{f"rec_{t}": recall[t] for t in TRACTS},
        **mfs_scores(truth, dec_dir),
    ), conf


def failed(rows, setting, seed, mode, p) -> bool:
    """Record a failed command as a row of errors; whether it failed."""
    if p.returncode != 0:
        rows.append(dict(setting=setting, seed=seed, mode=mode, error=p.stderr.strip()[-300:]))
    return p.returncode != 0


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--seeds", default="11,12,13")
    ap.add_argument("--settings", default="default,equal,nofsst")
    ap.add_argument("--train-cores", type=int, default=8)
    ap.add_argument("--test-cores", type=int, default=4)
    ap.add_argument("--labelled-cores", type=int, default=3)
    ap.add_argument("--out", default=HERE, help="folder of the runs and results")
    ap.add_argument("--generator", default=GENERATOR, help="the generator script")
    a = ap.parse_args()
    generator = os.path.abspath(a.generator)
    globals()["HERE"] = os.path.abspath(a.out)
    rows = []
    confs = {}
    for setting in a.settings.split(","):
        for seed in [int(s) for s in a.seeds.split(",")]:
            wd = os.path.join(HERE, "runs", setting, str(seed))
            os.makedirs(wd, exist_ok=True)
            extra = SETTINGS[setting]
            test_seed = seed + 100
            run(
                [
                    *(PY, generator, "--seed", str(seed), "--cores", str(a.train_cores)),
                    *("-o", "train.csv", "--scheme", "scheme.yaml", "--prefix", "TR", *extra),
                ],
                wd,
            )
            run(
                [
                    *(PY, generator, "--seed", str(test_seed), "--cores", str(a.test_cores)),
                    *("-o", "test.csv", "--prefix", "TE", *extra),
                ],
                wd,
            )
            tr = pd.read_csv(os.path.join(wd, "train.csv"))
            te = pd.read_csv(os.path.join(wd, "test.csv"))
            tr[["core", "top", "base", "facies"]].to_csv(
                os.path.join(wd, "train_min.csv"), index=False
            )
            te[["core", "top", "base", "facies"]].to_csv(
                os.path.join(wd, "test_min.csv"), index=False
            )
            lab = tr.copy()
            keep = lab["core"].drop_duplicates().tolist()[: a.labelled_cores]
            lab.loc[~lab["core"].isin(keep), "tract"] = ""
            lab.to_csv(os.path.join(wd, "train_semi.csv"), index=False)
            modes = {
                "a_unsup_noscheme": (["train_min.csv", "--suggest-ranks"], []),
                "b_unsup_scheme": (
                    ["train_min.csv", "--scheme", "scheme.yaml"],
                    ["--scheme", "scheme.yaml"],
                ),
                "c_semi3_scheme": (
                    ["train_semi.csv", "--scheme", "scheme.yaml", "--labels", "tract"],
                    ["--scheme", "scheme.yaml"],
                ),
                "d_semi3_noscheme": (["train_semi.csv", "--labels", "tract"], []),
            }
            for mode, (fargs, dargs) in modes.items():
                model = f"model_{mode}.json"
                p, tfit = run([*FQ, "fit", *fargs[:1], "-o", model, "--force", *fargs[1:]], wd)
                if failed(rows, setting, seed, mode, p):
                    continue
                out = f"dec_{mode}"
                p, _tdec = run(
                    [*FQ, "decode", model, "test_min.csv", "-o", out, "--force", *dargs], wd
                )
                if failed(rows, setting, seed, mode, p):
                    continue
                s, conf = score(os.path.join(wd, "test.csv"), os.path.join(wd, out))
                confs[(setting, seed, mode)] = conf
                rows.append(dict(setting=setting, seed=seed, mode=mode, fit_s=round(tfit, 1), **s))
                print(
                    setting,
                    seed,
                    mode,
                    {k: (round(v, 3) if isinstance(v, float) else v) for k, v in s.items()},
                    flush=True,
                )
    res = pd.DataFrame(rows)
    res.to_csv(os.path.join(HERE, "results.csv"), index=False)
    ok = res.dropna(subset=["bacc"]) if "bacc" in res else res
    agg = ok.groupby(["setting", "mode"]).agg(
        bacc=("bacc", "mean"),
        bacc_min=("bacc", "min"),
        bacc_max=("bacc", "max"),
        half_bacc=("half_bacc", "mean"),
        half_min=("half_bacc", "min"),
        half_max=("half_bacc", "max"),
        dec_bounds=("dec_bounds", "sum"),
        true_bounds=("true_bounds", "sum"),
        meanp=("meanp", "mean"),
        acc=("acc", "mean"),
        meanp_thk=("meanp_thk", "mean"),
        rec_HST=("rec_HST", "mean"),
        rec_FSST=("rec_FSST", "mean"),
        rec_LST=("rec_LST", "mean"),
        rec_TST=("rec_TST", "mean"),
        fit_s=("fit_s", "mean"),
        mfs_found=("mfs_found", "sum"),
        mfs_true=("mfs_true", "sum"),
        mfs_right=("mfs_right", "sum"),
        mfs_picks=("mfs_picks", "sum"),
    )
    agg["bounds_ratio"] = agg["dec_bounds"] / agg["true_bounds"]
    # MFS picks within 2 m, pooled over the seeds
    agg["mfs_recall"] = agg["mfs_found"] / agg["mfs_true"]
    agg["mfs_precision"] = agg["mfs_right"] / agg["mfs_picks"]
    with open(os.path.join(HERE, "summary.md"), "w") as f:
        f.write(agg.round(3).to_string() + "\n\n")
        # summed confusion (metres) per setting/mode
        for key in sorted({(k[0], k[2]) for k in confs}):
            tot = sum(c for k, c in confs.items() if (k[0], k[2]) == key)
            f.write(f"\nconfusion (m, rows true, cols decoded) {key}\n{tot.round(1).to_string()}\n")
    print(agg.round(3).to_string())
    if "error" in res:
        print(res.dropna(subset=["error"])[["setting", "seed", "mode", "error"]].to_string())


if __name__ == "__main__":
    main()
