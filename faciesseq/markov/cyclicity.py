"""Cyclicity: entropies of the upward and downward matrices, the preferred upward path.

Entropy (Hattori 1976, Math. Geology 8:477–497): for facies ``i``,
``E_post(i) = −Σ_j p_ij log2 p_ij`` from the upward matrix (what follows
``i``) and ``E_pre(i) = −Σ_j q_ij log2 q_ij`` from the downward matrix
``q_ij = n_ji / n_·i`` (what lies below ``i``). Both are also given
normalised by their maximum, ``log2(m − 1)`` for an embedded chain and
``log2 m`` for a depth grid. Whole-chain values are the means weighted by
the share of transitions from (resp. into) each facies.

The *cycle type*: ``not determined`` when the first-order test cannot be run (no
degrees of freedom, as for two facies in an embedded chain, or no transitions:
its p-value is NaN), or when it rejects but the symmetry test below cannot be run
(0 degrees of freedom: the facies are joined only along a line, whose pairs close
no cycle, so there is nothing to tell a symmetric cycle from an asymmetric one by);
``random`` when the first-order test is not significant or
both normalised entropies exceed ``random_level`` (the project's reading of
Hattori's diagram; thresholds our own). Otherwise the cycle is judged by the
symmetry of the upward count matrix, not by the whole-chain entropies: for a
stationary chain those are equal by construction (``H(X_t+1 | X_t) = H(X_t,
X_t+1) − H(X_t) = H(X_t | X_t+1)``), so they cannot tell a symmetric cycle
from an asymmetric one (the demo's shallowing-upward cycles read 0.400 and
0.401). A symmetric cycle (A B C B A) is a reversible chain, whose counts
``N_ij`` and ``N_ji`` have the same expectation; an asymmetric one (A B C A)
is not. :func:`symmetry_test` is Bowker's (1948, JASA 43:572–574) test of
symmetry of a square table on the upward counts; ``symmetric`` when it is not
significant at ``alpha``, else ``asymmetric``, read upward along the
preferred path when that closes a cycle around which more transitions go
forward than back (:attr:`CyclicityResult.direction`).

Preferred upward path: the facies cycle read from the significant positive
adjusted residuals (the transitions that happen more often than under the
null model): the longest simple cycle of that directed graph, ties broken by
the sum of residuals; the longest simple path when there is no cycle (Davis
2002, ch. 4, reads the cycle by hand from the same table).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.markov.contingency import NOT_TESTABLE, TestResult, _chi2_sf
from faciesseq.markov.counts import transition_probabilities

__all__ = ["CyclicityResult", "cyclicity", "entropies", "preferred_path", "symmetry_test"]

#: The cycle type where the first-order test cannot be run.
NOT_DETERMINED = "not determined"

#: The name of the symmetry test in reports.
SYMMETRY_TEST = "symmetry of the upward counts (Bowker)"

#: Why the symmetry test of transition counts has no degrees of freedom where pairs
#: of facies are joined: the joined pairs close no cycle.
LINE_ONLY = "0 degrees of freedom, the facies are joined only along a line, which closes no cycle"


@dataclass(frozen=True)
class CyclicityResult:
    """Entropies per facies and for the chain, the cycle type and the preferred path.

    ``cycle_type``: ``not determined``, ``random``, ``symmetric`` or ``asymmetric``
    (see the module notes); ``symmetry``: Bowker's test of the upward counts, which
    decides between ``symmetric`` and ``asymmetric``; ``direction``: the facies of an asymmetric
    cycle in upward order (empty where it is not asymmetric or the preferred path
    does not close a cycle with a positive net flow around it)."""

    codes: tuple[str, ...]
    e_post: np.ndarray
    e_pre: np.ndarray
    e_max: float
    e_post_total: float
    e_pre_total: float
    cycle_type: str
    path: tuple[str, ...]
    path_is_cycle: bool
    symmetry: TestResult
    direction: tuple[str, ...] = ()

    def describe_type(self) -> str:
        """The cycle type with the upward order of an asymmetric cycle, as reports
        print it: ``asymmetric, upward A -> B -> C -> A``."""
        if self.cycle_type != "asymmetric":
            return self.cycle_type
        if not self.direction:
            return "asymmetric (upward order unclear)"
        return "asymmetric, upward " + " -> ".join([*self.direction, self.direction[0]])

    @property
    def e_post_normalised(self) -> float:
        return self.e_post_total / self.e_max if self.e_max > 0 else float("nan")

    @property
    def e_pre_normalised(self) -> float:
        return self.e_pre_total / self.e_max if self.e_max > 0 else float("nan")

    def to_frame(self) -> pd.DataFrame:
        """Entropies per facies (bits)."""
        return pd.DataFrame(
            {"facies": list(self.codes), "e_post": self.e_post, "e_pre": self.e_pre}
        )

    def to_dict(self) -> dict:
        return {
            "codes": list(self.codes),
            "e_post": [float(x) for x in self.e_post],
            "e_pre": [float(x) for x in self.e_pre],
            "e_max": float(self.e_max),
            "e_post_total": float(self.e_post_total),
            "e_pre_total": float(self.e_pre_total),
            "e_post_normalised": float(self.e_post_normalised),
            "e_pre_normalised": float(self.e_pre_normalised),
            "cycle_type": self.cycle_type,
            "cycle_direction": list(self.direction),
            "symmetry_test": self.symmetry.to_dict(),
            "preferred_path": list(self.path),
            "path_is_cycle": bool(self.path_is_cycle),
        }


def _row_entropy(p: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(p > 0, -p * np.log2(np.where(p > 0, p, 1.0)), 0.0)
    return t.sum(axis=1)


def entropies(counts: np.ndarray, *, embedded: bool) -> tuple[np.ndarray, np.ndarray, float]:
    """``E_post`` and ``E_pre`` per facies (bits) and the maximum entropy (Hattori 1976)."""
    n = np.asarray(counts, dtype=float)
    present = (n.sum(axis=0) + n.sum(axis=1)) > 0
    m = int(present.sum())
    e_max = float(np.log2(m - 1)) if embedded and m > 2 else float(np.log2(max(m, 1)))
    return (
        _row_entropy(transition_probabilities(n)),
        _row_entropy(transition_probabilities(n.T)),
        e_max,
    )


def symmetry_test(counts: np.ndarray, *, chain: bool = True) -> TestResult:
    """Bowker's (1948) test of symmetry of the upward transition counts.

    Null hypothesis: every pair of facies is joined as often upward as downward,
    ``E[N_ij] = E[N_ji]`` (a reversible chain: a symmetric cycle, or none).

    Statistic (Bowker, A.H. 1948, "A test for symmetry in contingency tables",
    JASA 43:572–574): ``Σ_{i<j} (N_ij − N_ji)² / (N_ij + N_ji)`` over the pairs
    with ``N_ij + N_ji > 0``; the diagonal takes no part (structurally zero in an
    embedded chain, a cell on itself on a grid), and a pair never joined carries
    no information and is left out of the degrees of freedom.

    Degrees of freedom: with ``chain=False`` Bowker's, the number of such pairs
    (a table of paired observations). With ``chain=True`` (transition counts) fewer:
    a succession enters each facies as often as it leaves it (but for its first and
    last bed), so the net flows ``N_ij − N_ji`` add up to zero at every facies and
    only the flows around the cycles of the graph of joined pairs are free: its
    cycle rank, pairs − facies + connected parts. Of a reversible 5-facies chain
    (``tests/test_markov_cyclicity.py``) Bowker's 10 dof rejected 0.5 % at 0.05,
    the cycle rank's 6 about 5 %. Two facies, or facies joined only along one line,
    leave no cycle: 0 dof and a p-value of NaN, a test that cannot be run
    (``TestResult.testable`` false; its note says why).

    Returns
    -------
    TestResult
        ``statistic``, ``dof``, ``p_value`` (χ² upper tail) and ``n`` (the
        transitions between different facies).
    """
    n = np.asarray(counts, dtype=float)
    upper = np.triu_indices(len(n), 1)
    forward, back = n[upper], n.T[upper]
    joined = (forward + back) > 0
    statistic = float(((forward - back)[joined] ** 2 / (forward + back)[joined]).sum())
    pairs = int(joined.sum())
    if chain:
        facies = np.unique(np.concatenate([upper[0][joined], upper[1][joined]]))
        dof = pairs - facies.size + _connected_parts(upper[0][joined], upper[1][joined])
        note = f"dof: cycle rank of the joined pairs (Bowker's: {pairs})"
        if dof <= 0 and pairs > 0:
            note = f"{NOT_TESTABLE}: {LINE_ONLY}"
    else:
        dof, note = pairs, ""
    return TestResult(
        name=SYMMETRY_TEST,
        statistic=statistic,
        dof=int(dof),
        p_value=_chi2_sf(statistic, int(dof)),
        n=int((forward + back).sum()),
        null="each pair of facies joined as often upward as downward (a reversible chain)",
        note=note,
    )


def _connected_parts(a: np.ndarray, b: np.ndarray) -> int:
    """Connected parts of the graph of the edges ``a[k]``–``b[k]`` (union-find)."""
    parent: dict[int, int] = {}

    def root(x: int) -> int:
        parent.setdefault(x, x)
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for i, j in zip(a.tolist(), b.tolist()):
        parent[root(i)] = root(j)
    return len({root(x) for x in parent})


def preferred_path(
    residuals: np.ndarray, significant: np.ndarray, codes: Sequence[str], max_facies: int = 14
) -> tuple[tuple[str, ...], bool]:
    """The facies cycle read from significant positive residuals (see module docstring)."""
    m = len(codes)
    r = np.nan_to_num(np.asarray(residuals, dtype=float), nan=0.0)
    edge = np.asarray(significant, dtype=bool) & (r > 0)
    np.fill_diagonal(edge, False)
    if not edge.any():
        return (), False
    if m > max_facies:  # enumeration would be too slow; follow the strongest link
        start = int(np.argmax((r * edge).max(axis=1)))
        path, seen = [start], {start}
        while True:
            nxt = [j for j in np.argsort(-r[path[-1]]) if edge[path[-1], j]]
            nxt = [j for j in nxt if j not in seen]
            if not nxt:
                break
            path.append(int(nxt[0]))
            seen.add(int(nxt[0]))
        return tuple(codes[i] for i in path), False
    best: tuple[int, float, list[int]] = (0, -np.inf, [])

    def walk(path: list[int], score: float) -> None:
        # each simple cycle is enumerated once, from its smallest facies index
        nonlocal best
        last = path[-1]
        for j in np.nonzero(edge[last])[0]:
            j = int(j)
            if j == path[0] and len(path) >= 2:
                s = score + r[last, j]
                if (len(path), s) > best[:2]:
                    best = (len(path), s, list(path))
            elif j > path[0] and j not in path:
                walk([*path, j], score + r[last, j])

    for start in range(m):
        walk([start], 0.0)
    if best[2]:
        return tuple(codes[i] for i in best[2]), True
    return tuple(codes[i] for i in _longest_path(edge, r)), False


def _longest_path(edge: np.ndarray, r: np.ndarray) -> list[int]:
    m = len(edge)
    best: tuple[int, float, list[int]] = (0, -np.inf, [])

    def walk(path: list[int], score: float) -> None:
        nonlocal best
        if (len(path), score) > best[:2]:
            best = (len(path), score, list(path))
        for j in np.nonzero(edge[path[-1]])[0]:
            if int(j) not in path:
                walk([*path, int(j)], score + r[path[-1], j])

    for start in range(m):
        walk([start], 0.0)
    return best[2]


def cyclicity(
    counts: np.ndarray,
    residuals: np.ndarray,
    significant: np.ndarray,
    codes: Sequence[str],
    *,
    embedded: bool,
    first_order_p: float,
    alpha: float = 0.05,
    random_level: float = 0.9,
) -> CyclicityResult:
    """Entropies, cycle type (with Bowker's symmetry test) and preferred path of one
    transition matrix (see the module docstring)."""
    n = np.asarray(counts, dtype=float)
    e_post, e_pre, e_max = entropies(n, embedded=embedded)
    rows, cols = n.sum(axis=1), n.sum(axis=0)
    tot = n.sum()
    post = float((rows * e_post).sum() / tot) if tot else float("nan")
    pre = float((cols * e_pre).sum() / tot) if tot else float("nan")
    rp, rq = (post / e_max, pre / e_max) if e_max > 0 else (np.nan, np.nan)
    symmetry = symmetry_test(n, chain=True)
    if not math.isfinite(first_order_p):  # the first-order test could not be run
        kind = NOT_DETERMINED
    elif not (first_order_p < alpha) or min(rp, rq) > random_level:
        kind = "random"
    elif not symmetry.testable:  # no cycle among the joined pairs: no conclusion
        kind = NOT_DETERMINED
    elif symmetry.p_value < alpha:
        kind = "asymmetric"
    else:
        kind = "symmetric"
    path, is_cycle = preferred_path(residuals, significant, codes)
    direction: tuple[str, ...] = ()
    if kind == "asymmetric" and is_cycle:
        at = {c: k for k, c in enumerate(codes)}
        ring = [at[c] for c in path]
        net = sum(n[i, j] - n[j, i] for i, j in zip(ring, ring[1:] + ring[:1]))
        direction = path if net > 0 else ()
    return CyclicityResult(
        tuple(codes), e_post, e_pre, e_max, post, pre, kind, path, is_cycle, symmetry, direction
    )
