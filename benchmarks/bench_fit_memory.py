"""Peak memory of a tract-model fit on 10 million beds: bounded by the E-step batch.

Cores are sampled from a tract model (16 hidden states: four tracts of four
sub-states; facies given the bed below and the tract), then refitted for a few
EM iterations with two batch sizes, each in a fresh process. Peak resident
memory is read from ``getrusage`` before and after the fit; the data itself
(the bed tables) is held in memory in both, so the difference between the two
runs shows what the batch costs. Run from the repository root::

    python benchmarks/bench_fit_memory.py [--beds 10000000] [--iterations 3]

Writes its section of benchmarks/hmm_model.md.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))


def _rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # Linux: KiB


def _sample(n_beds: int, bed_per_core: int, seed: int):
    """Successions sampled from a tract model fitted on the synthetic generator."""
    import hmm_synthetic as synth

    from faciesseq.core import Succession
    from faciesseq.hmm.model import TractHMM

    source = TractHMM(
        scheme=synth.scheme(), features=("facies_trend",), substates=4, random_state=0
    ).fit(synth.cores(20, 100, seed=9), labels="true_tract")
    rng = np.random.default_rng(seed)
    n_cores = n_beds // bed_per_core
    A = np.cumsum(source.transmat_, axis=1)
    trend = np.cumsum(source.emission("facies_trend").trendprob_, axis=2)
    first = np.cumsum(source.emission("facies_trend").emissionprob_, axis=1)
    tract_of = source.states_.state_tract
    state = (np.cumsum(source.startprob_)[None, :] > rng.random((n_cores, 1))).argmax(axis=1)
    facies = np.empty((n_cores, bed_per_core), dtype=np.int64)
    facies[:, 0] = (first[tract_of[state]] > rng.random((n_cores, 1))).argmax(axis=1)
    for t in range(1, bed_per_core):
        state = (A[state] > rng.random((n_cores, 1))).argmax(axis=1)
        cum = trend[tract_of[state], facies[:, t - 1]]
        facies[:, t] = (cum > rng.random((n_cores, 1))).argmax(axis=1)
    codes = np.asarray(source.facies_, dtype=object)
    out = []
    thick = np.ones(bed_per_core)
    base = np.arange(bed_per_core, 0, -1, dtype=float)
    for k in range(n_cores):
        beds = pd.DataFrame(
            {"top": base - 1.0, "base": base, "thickness": thick, "facies": codes[facies[k]]}
        )
        out.append(Succession(f"M-{k}", 0, beds, "m"))
    return source, out


def child(n_beds: int, batch: int, iterations: int) -> None:
    import hmm_synthetic as synth

    from faciesseq.hmm.model import TractHMM

    t0 = time.perf_counter()
    _, successions = _sample(n_beds, 10_000, seed=1)
    built = time.perf_counter() - t0
    before = _rss_mb()
    t0 = time.perf_counter()
    model = TractHMM(
        scheme=synth.scheme(),
        features=("facies_trend",),
        substates=4,
        n_restarts=1,
        max_iter=iterations,
        tol=0.0,
        batch_size=batch,
        random_state=0,
    ).fit(successions)
    elapsed = time.perf_counter() - t0
    print(
        json.dumps(
            {
                "beds": int(sum(len(s) for s in successions)),
                "batch": batch,
                "states": model.states_.n_states,
                "iterations": model.monitor_.iter,
                "rss_before_fit_mb": before,
                "rss_peak_mb": _rss_mb(),
                "fit_s": elapsed,
                "sample_s": built,
            }
        )
    )


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--beds", type=int, default=10_000_000)
    parser.add_argument("--iterations", type=int, default=3)
    parser.add_argument("--child-batch", type=int)
    args = parser.parse_args()
    if args.child_batch:
        child(args.beds, args.child_batch, args.iterations)
        return
    from _results import machine, stamp, write_section

    rows = []
    for batch in (100_000, 1_000_000):
        out = subprocess.run(
            [
                sys.executable,
                __file__,
                "--beds",
                str(args.beds),
                "--iterations",
                str(args.iterations),
                "--child-batch",
                str(batch),
            ],
            check=True,
            capture_output=True,
            text=True,
            cwd=ROOT,
        )
        rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    lines = [
        "## Peak memory of a fit on 10 million beds",
        "",
        f"Measured {stamp()} on {machine()}, command: "
        f"`python benchmarks/bench_fit_memory.py --beds {args.beds} --iterations "
        f"{args.iterations}`. {rows[0]['states']} hidden states, feature `facies_trend`, "
        f"{args.beds // 10_000} cores of 10,000 beds, EM iterations per run: "
        f"{rows[0]['iterations']} (one restart).",
        "",
        "| batch (beds) | RSS before fit MB | peak RSS MB | fit cost MB | fit s |",
        "|---|---|---|---|---|",
    ]
    for r in rows:
        lines.append(
            f"| {r['batch']:,} | {r['rss_before_fit_mb']:.0f} | {r['rss_peak_mb']:.0f} | "
            f"{r['rss_peak_mb'] - r['rss_before_fit_mb']:.0f} | {r['fit_s']:.1f} |"
        )
    lines += [
        "",
        "'fit cost' = peak minus the resident memory once the bed tables are built: the coded "
        "observations (a few int64/float64 arrays per bed) plus one batch of E-step work "
        "arrays (log-emissions, forward/backward variables: a few x batch x states float64).",
    ]
    text = "\n".join(lines)
    write_section(
        ROOT / "benchmarks" / "hmm_model.md", "fit-memory", text, "Tract model: measurements"
    )
    print(text)


if __name__ == "__main__":
    main()
