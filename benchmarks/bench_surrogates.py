"""Surrogate successions: vectorised draws against a plain Python loop, same run.

    MPLBACKEND=Agg python benchmarks/bench_surrogates.py [--beds 10000] [--surrogates 9999]

Times, for one succession of ``--beds`` beds drawn from an invented
six-facies embedded chain:

1. ``transition_surrogates`` (same first-order transition counts and first bed,
   Pethel & Hahs 2014), ``--surrogates`` of them, plus the order 1 vs 2 G² of
   each (what the Monte Carlo order test does);
2. the plain-Python loop version (``transition_surrogates_loop``) on
   ``--loop`` surrogates, scaled to ``--surrogates`` (it is too slow to run
   them all);
3. ``restricted_permutations`` (no facies above itself) on ``--perm``
   surrogates, scaled.

Prints one line per measurement and the ratio loop / vectorised.
"""

from __future__ import annotations

import argparse
import platform
import time

import numpy as np

from faciesseq.markov.counts import batch_ngram_counts, encode
from faciesseq.markov.order import conditional_g2
from faciesseq.markov.surrogates import (
    restricted_permutations,
    transition_surrogates,
    transition_surrogates_loop,
)


def succession(beds: int, m: int = 6, seed: int = 0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    p = rng.dirichlet(np.ones(m), size=m)
    np.fill_diagonal(p, 0.0)
    p /= p.sum(axis=1, keepdims=True)
    x = np.empty(beds, dtype=np.int64)
    x[0] = 0
    for i in range(1, beds):
        x[i] = rng.choice(m, p=p[x[i - 1]])
    return x


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--beds", type=int, default=10_000)
    ap.add_argument("--surrogates", type=int, default=9_999)
    ap.add_argument("--loop", type=int, default=300)
    ap.add_argument("--perm", type=int, default=500)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    x = succession(args.beds)
    m = int(x.max()) + 1
    enc = encode([x])
    print(f"machine: {platform.machine()} python {platform.python_version()}")
    print(f"{args.beds} beds, {m} facies; best of {args.repeat} runs")

    def vectorised() -> float:
        t = time.perf_counter()
        n = 0
        for batch in transition_surrogates(enc, args.surrogates, 1):
            runs = batch_ngram_counts(enc, batch, 2)
            conditional_g2(runs.reshape(batch.shape[0], m, m, m))
            n += batch.shape[0]
        assert n == args.surrogates
        return time.perf_counter() - t

    def loop() -> float:
        t = time.perf_counter()
        transition_surrogates_loop(x, m, args.loop, 1)
        return (time.perf_counter() - t) * args.surrogates / args.loop

    def perm() -> float:
        t = time.perf_counter()
        for _ in restricted_permutations(enc, args.perm, 1):
            pass
        return (time.perf_counter() - t) * args.surrogates / args.perm

    tv = min(vectorised() for _ in range(args.repeat))
    tl = min(loop() for _ in range(args.repeat))
    print(f"transition surrogates, vectorised, {args.surrogates} (with G2): {tv:.2f} s")
    print(
        f"transition surrogates, Python loop, {args.loop} scaled to {args.surrogates}: {tl:.1f} s"
    )
    print(f"ratio loop / vectorised: {tl / tv:.1f}")
    tp = perm()
    print(f"restricted permutations, {args.perm} scaled to {args.surrogates}: {tp:.1f} s")


if __name__ == "__main__":
    main()
