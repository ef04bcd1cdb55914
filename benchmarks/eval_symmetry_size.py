"""How often Bowker's symmetry test of the upward counts rejects a reversible chain.

Run from the repository root::

    python benchmarks/eval_symmetry_size.py

A reversible embedded chain of 5 facies (a random walk on a complete graph with
symmetric random weights, seed 1), cut into successions of several lengths; 2,000
sets of successions each. Prints the share of p-values below 0.05 with the degrees
of freedom :func:`faciesseq.markov.cyclicity.symmetry_test` uses (the cycle rank of
the joined pairs) and with Bowker's (the number of pairs). A well-sized test rejects
5 %.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
from scipy.stats import chi2

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from faciesseq.markov.cyclicity import symmetry_test

M, REPEATS = 5, 2000


def main() -> None:
    rng = np.random.default_rng(1)
    weights = rng.random((M, M))
    weights = weights + weights.T
    np.fill_diagonal(weights, 0.0)
    cumulative = np.cumsum(weights / weights.sum(axis=1, keepdims=True), axis=1)
    print("| successions x beds | rejected at 0.05, cycle rank dof | Bowker's dof |")
    print("|---|---|---|")
    for n_successions, n_beds in ((1, 400), (10, 40), (40, 10)):
        ours, bowker = [], []
        for _ in range(REPEATS):
            counts = np.zeros((M, M))
            for _ in range(n_successions):
                x = int(rng.integers(M))
                for u in rng.random(n_beds):
                    y = int(np.searchsorted(cumulative[x], u * cumulative[x, -1]))
                    counts[x, y] += 1
                    x = y
            test = symmetry_test(counts)
            ours.append(test.p_value < 0.05)
            bowker.append(chi2.sf(test.statistic, M * (M - 1) // 2) < 0.05)
        print(
            f"| {n_successions} x {n_beds} | {np.mean(ours):.3f} (dof {test.dof}) | "
            f"{np.mean(bowker):.3f} |"
        )


if __name__ == "__main__":
    main()
