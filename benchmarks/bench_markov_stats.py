"""Markov statistics on a 1,000-core database: ``analyse`` against a plain Python count.

    python benchmarks/bench_markov_stats.py [--cores 1000] [--repeat 5]

Builds ``--cores`` invented cores (7 facies, 2-4 successions of 10-60 beds
each, drawn from an embedded chain), then times

1. ``analyse(successions, codes, max_order=3, by="core")`` (counts, the
   quasi-independence test with diagnostics, order tests and AIC/BIC, the
   homogeneity test across cores, entropies and the preferred path);
2. the baseline: counting the pair and triple transitions of the same
   successions with a plain Python loop and ``collections.Counter`` (only the
   counting, which is a small part of what ``analyse`` does);
3. the same counts the vectorised way (``encode`` + ``ngram_counts``).

Best of ``--repeat`` runs each.
"""

from __future__ import annotations

import argparse
import collections
import platform
import time

import numpy as np
import pandas as pd

from faciesseq.core import Succession
from faciesseq.markov import analyse, encode, ngram_counts


def database(n_cores: int, seed: int = 0) -> tuple[list[Succession], list[str]]:
    rng = np.random.default_rng(seed)
    codes = ["CP", "FS", "USF", "LSF", "OTZ", "OFF", "SHM"]
    m = len(codes)
    p = rng.dirichlet(np.ones(m), size=m)
    np.fill_diagonal(p, 0.0)
    p /= p.sum(axis=1, keepdims=True)
    cum = np.cumsum(p, axis=1)
    out = []
    for c in range(n_cores):
        for s in range(int(rng.integers(2, 5))):
            n = int(rng.integers(10, 61))
            x = np.empty(n, dtype=np.int64)
            x[0] = rng.integers(m)
            u = rng.random(n)
            for i in range(1, n):
                x[i] = min(int(np.searchsorted(cum[x[i - 1]], u[i], side="right")), m - 1)
            beds = pd.DataFrame({"facies": np.array(codes, dtype=object)[x]})
            out.append(Succession(f"C{c:04d}", s, beds))
    return out, codes


def baseline(successions: list[Succession]) -> tuple[collections.Counter, collections.Counter]:
    pairs: collections.Counter = collections.Counter()
    triples: collections.Counter = collections.Counter()
    for succ in successions:
        f = list(succ.beds["facies"])
        for i in range(len(f) - 1):
            pairs[(f[i], f[i + 1])] += 1
        for i in range(len(f) - 2):
            triples[(f[i], f[i + 1], f[i + 2])] += 1
    return pairs, triples


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--cores", type=int, default=1000)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument(
        "--surrogates", type=int, default=0, help="also time the Monte Carlo tests (one run)"
    )
    args = ap.parse_args()
    successions, codes = database(args.cores)
    n_beds = sum(len(s) for s in successions)
    print(f"machine: {platform.machine()} python {platform.python_version()}")
    print(f"{args.cores} cores, {len(successions)} successions, {n_beds} beds, {len(codes)} facies")

    def timed(fn) -> float:
        best = float("inf")
        for _ in range(args.repeat):
            t = time.perf_counter()
            fn()
            best = min(best, time.perf_counter() - t)
        return best

    report = analyse(successions, codes, max_order=3, by="core")
    assert report.n_cores == args.cores
    ta = timed(lambda: analyse(successions, codes, max_order=3, by="core"))
    tb = timed(lambda: baseline(successions))

    def vector_counts():
        enc = encode(successions, codes)
        return ngram_counts(enc, 1), ngram_counts(enc, 2)

    tc = timed(vector_counts)
    pairs, _ = baseline(successions)
    assert sum(pairs.values()) == int(vector_counts()[0].sum())
    print(f"analyse (max_order 3, homogeneity by core): {ta:.3f} s")
    print(f"baseline, Python Counter of pairs and triples only: {tb:.3f} s")
    print(f"same counts, encode + ngram_counts: {tc:.3f} s")
    print(f"ratio baseline / analyse: {tb / ta:.2f}; counting alone: {tb / tc:.1f}")
    if args.surrogates:
        t = time.perf_counter()
        analyse(successions, codes, max_order=2, surrogates=args.surrogates, seed=1)
        took = time.perf_counter() - t
        print(f"analyse with {args.surrogates} surrogates (max_order 2): {took:.1f} s")


if __name__ == "__main__":
    main()
