"""Facies ranks suggested from the data: the order of the facies along the profile.

A geologist ranks facies by proximality (0 = most landward or shallow). Where a
core database comes with no scheme, the order can be read from the successions
themselves. By Walther's law, facies that follow one another conformably upward
were laid down side by side (Middleton 1973, GSA Bulletin 84:979-988), and a
parasequence shallows upward step by step, from facies to neighbouring facies,
and deepens abruptly at its flooding surface (Van Wagoner et al. 1990, AAPG
Methods in Exploration 7). So the order is the path through every facies that
follows the most upward transitions from each facies to the next (each count
divided by the square root of the two facies' totals, so that common facies do
not pull the rest towards them): its start is the basinward end, its end the
landward one (rank 0). The path is exact, by the dynamic programme of Held &
Karp (1962, J. SIAM 10:196-210), up to :data:`EXACT_FACIES` facies; above, the
order is the spectral seriation of the symmetric table (the Fiedler vector of its
Laplacian; Atkins, Boman & Hendrickson 1998, SIAM J. Comput. 28:297-310), turned
so that most one-step transitions lead landward. Written here: neither numpy nor
scipy seriates. The spectral order alone read the shoreline facies of the demo's
cores and of the three forward-model scenarios the wrong way round (the path, of
the ramp's only), and 7 of 20 sets of simulated shallowing-upward cycles out of
order; the path read all 20 (``tests/test_seriation.py``'s cycles). Where every
cycle shallows to the same top facies and floods from it, its floods tie that
facies to the deep ones, and the path may cut the circle at the wrong place: a
geologist checks the two ends.

:attr:`RankSuggestion.share` is the share of the one-step transitions of the
order that lead landward, the suggestion's own measure of how clear the
direction is. A second cue, from the trade: facies that are neighbours on the
profile are joined both ways (shallowing steps and the occasional one-step
deepening), while a flooding surface is a one-way jump, rarely reversed. The
path cannot tell the two apart where the cycles climb to a top facies and flood
from it (coastal plain then offshore mud): it cut such a circle of a new user's
cycles at the top step and kept the flood, ordering coastal plain as the deepest
facies with 0.92 of the steps leading landward. So a neighbour step of the order
joined one way only (:attr:`RankSuggestion.one_way`) makes the direction
unclear, and is named. Measured on every generator of the project
(``benchmarks/tract_model.md``, 2026-12-05): it flagged the new user's cycles,
the ramp's (whose foreshore and coastal plain the path swaps) and four of five
sets of the shelf generator (whose lagoon it puts landward of the coastal plain),
at the step where each order goes wrong; no correctly ordered set lost its clear
verdict. Starting the path at the facies floods bring in (``anchored``, the
largest ``E_pre − E_post``) fixed the new user's order but lowered the agreement
with the schemes on 11 of 24 sets: an option, not the default.

The order is a suggestion for a geologist to check, never a scheme on
its own: facies of one setting that a geologist would tie (the nonmarine facies
of a cyclothem), or mixed carbonate and siliciclastic systems, are ordered here
as the transitions say. ``faciesseq scheme draft`` writes it beside each facies;
``faciesseq fit`` fits on it where there is no scheme and no label.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet, SuccessionTable
from faciesseq.markov.counts import _window_index, encode, encode_flat
from faciesseq.markov.cyclicity import entropies
from faciesseq.scheme import FaciesScheme

__all__ = [
    "EXACT_FACIES",
    "MOST_FACIES",
    "REVERSED_RHO",
    "SUGGESTED",
    "UNCLEAR_SHARE",
    "RankSuggestion",
    "step_counts",
    "suggest_ranks",
    "upward_steps",
]

#: Below this share of one-step transitions going landward the direction of the
#: suggested order is called unclear (a coin would give 0.5; 0.6, a plain majority
#: margin, was set before any measurement and fitted to none).
UNCLEAR_SHARE = 0.6

#: At or below this Spearman's rho against a clear suggested order a scheme's ranks are
#: said to run the other way (written 0 = deepest); set before any measurement.
REVERSED_RHO = -0.5

#: The name of the scheme :meth:`RankSuggestion.scheme` makes (what the cautions of a
#: fit on it look for).
SUGGESTED = "ranks suggested from the data"

#: Above this many facies no order is suggested (a table of every pair would not fit
#: in memory, and no geologist ranks so many facies along one profile).
MOST_FACIES = 500

#: Up to this many facies the path is exact (2^n x n^2 steps: 16 facies take about a
#: second); more are ordered by the spectral seriation.
EXACT_FACIES = 16


@dataclass(frozen=True)
class RankSuggestion:
    """Ranks suggested from the upward transitions (see the module docstring).

    ``ranks``: facies code -> rank (0 = the landward end of the order); facies that
    meet no other facies in an upward transition are left out. ``share``: the share
    of the upward transitions between neighbours of the order that go landward
    (usually above 0.5: the path follows the most transitions; the larger, the
    clearer the direction). ``n_steps``: how many such
    transitions there were. ``one_way``: the neighbour steps of the order joined in
    one direction only, ``(facies below, facies above, upward transitions)``, each
    perhaps a flooding surface taken for a neighbour relation."""

    ranks: dict[str, int]
    share: float
    n_steps: int
    one_way: tuple[tuple[str, str, int], ...] = ()

    @property
    def clear(self) -> bool:
        """Whether the direction of the order is clear: at least :data:`UNCLEAR_SHARE`
        of the steps lead landward, and every neighbour step is joined both ways."""
        return self.share >= UNCLEAR_SHARE and not self.one_way

    def __repr__(self) -> str:
        # the verdict beside the numbers: a share of 0.5 printed bare was read as fine
        return (
            f"RankSuggestion(order={self.order()}, share={self.share:.3f}, "
            f"n_steps={self.n_steps}, one_way={list(self.one_way)}, clear={self.clear})"
        )

    @property
    def undirected(self) -> bool:
        """Whether the transitions give the order no direction at all: fewer than
        :data:`UNCLEAR_SHARE` of its steps lead landward, near what a coin gives. (A
        neighbour step seen one way only also makes the direction unclear, :attr:`clear`,
        but every step of clean shallowing-upward cycles is one way: a caution there,
        not a reason to refuse the order.)"""
        return self.share < UNCLEAR_SHARE

    def order(self) -> list[str]:
        """The facies from landward (rank 0) to basinward."""
        return sorted(self.ranks, key=self.ranks.__getitem__)

    def describe(self) -> str:
        """The order and how clear its direction is, as every command prints it."""
        steps = f"{self.share:.2f} of {self.n_steps} upward steps between neighbours"
        if self.clear:
            return f"{', '.join(self.order())} ({steps} lead landward; direction clear)"
        if self.share < UNCLEAR_SHARE:
            return (
                f"{', '.join(self.order())} ({steps} lead landward; direction unclear: "
                "check which end is landward)"
            )
        one_way = "; ".join(f"{a} -> {b} {n} times" for a, b, n in self.one_way)
        return (
            f"{', '.join(self.order())} ({steps} lead landward, but the direction is "
            f"unclear: some neighbour steps are never seen the other way up ({one_way}), "
            "as where a flooding surface was taken for a step between neighbours; check "
            "which end is landward)"
        )

    def runs_against(self, rho: float | None) -> bool:
        """Whether a scheme whose :meth:`agreement` is ``rho`` runs the other way: rho
        at most :data:`REVERSED_RHO` where the direction of the order is clear."""
        return self.clear and rho is not None and rho <= REVERSED_RHO

    def agreement(self, scheme: FaciesScheme) -> float | None:
        """Spearman's rank correlation of a scheme's ranks with these, over the facies
        both rank (the Pearson correlation of average ranks; equal to scipy's
        ``spearmanr``, which ``tests/test_seriation.py`` checks, without importing
        ``scipy.stats`` into ``faciesseq check``); ``None`` where fewer than three are
        shared or either side ties them all. Near -1: the scheme runs the other way
        (0 = deepest?)."""
        codes = [c for c in self.ranks if c in scheme]
        theirs = pd.Series([scheme.rank(c) for c in codes], dtype=float)
        if len(codes) < 3 or theirs.nunique() < 2:
            return None
        ours = pd.Series([self.ranks[c] for c in codes], dtype=float)
        return float(np.corrcoef(ours.rank(), theirs.rank())[0, 1])

    def scheme(self) -> FaciesScheme:
        """A facies scheme of these ranks alone (no groups, settings or names), for a
        fit whose source comes with no scheme; its name says where the ranks came from."""
        described = "rank suggested from the upward transitions of the data"
        facies = [
            {"code": c, "name": f"facies {c}", "rank": r, "description": described}
            for c, r in self.ranks.items()
        ]
        return FaciesScheme.from_dict({"name": SUGGESTED, "facies": facies})


def upward_steps(successions: Sequence | SuccessionTable) -> pd.Series:
    """Upward transitions between facies of ``successions`` (as :func:`suggest_ranks`
    takes them): counts indexed by the pairs (facies below, facies above) that occur.
    Those of parts of one database add up (``a.add(b, fill_value=0)``) to the whole's."""
    if isinstance(successions, SuccessionTable):  # no Succession made per core
        t = successions
        enc = encode_flat(t.beds["facies"].to_numpy(), t.lengths, t.cores, t.segments)
    else:
        enc = encode(successions)
    starts = _window_index(enc, 2)
    return step_counts(enc.states[starts], enc.states[starts + 1], enc.codes)


def step_counts(below: np.ndarray, above: np.ndarray, codes: Sequence) -> pd.Series:
    """:func:`upward_steps` of steps given as integer codes (positions in ``codes``) of
    the facies below and above each: only the pairs that occur are counted."""
    m = len(codes)
    pairs, n = np.unique(np.asarray(below, np.int64) * m + above, return_counts=True)
    names = np.array([str(c) for c in codes], dtype=object)
    index = pd.MultiIndex.from_arrays(
        [names[pairs // m], names[pairs % m]], names=["below", "above"]
    )
    return pd.Series(n, index=index, dtype=float)


def suggest_ranks(
    successions: CoreSet | Sequence | SuccessionTable | pd.Series, *, anchored: bool = False
) -> RankSuggestion | None:
    """Ranks of the facies of ``successions`` (beds base to top: a core set, read as its
    amalgamated beds, a succession table, successions of a core set, sequences of
    codes, or their :func:`upward_steps`) from
    their upward transitions; ``None`` where fewer than three facies, or more than
    :data:`MOST_FACIES`, meet in transitions. ``anchored``: the path starts at
    :func:`flooded_facies` (measured in ``benchmarks/tract_model.md``, 2026-12-05)."""
    if isinstance(successions, CoreSet):  # as fit and scheme draft read it
        if not len(successions.names):
            return None
        successions = successions.succession_table("beds")
    elif isinstance(successions, pd.DataFrame):
        raise TypeError(
            "suggest_ranks reads a CoreSet or its successions, not a DataFrame: "
            "CoreSet.from_frame(frame) reads one"
        )
    steps = successions if isinstance(successions, pd.Series) else upward_steps(successions)
    below, above = steps.index.get_level_values(0), steps.index.get_level_values(1)
    steps = steps[(steps.to_numpy() > 0) & (below != above)]
    below, above = steps.index.get_level_values(0), steps.index.get_level_values(1)
    codes = sorted({*below, *above})  # amalgamated beds: no facies follows itself
    n = len(codes)
    if not 3 <= n <= MOST_FACIES:
        return None
    at = {c: k for k, c in enumerate(codes)}
    counts = np.zeros((n, n))
    counts[[at[c] for c in below], [at[c] for c in above]] = steps.to_numpy(dtype=float)
    total = counts.sum(axis=0) + counts.sum(axis=1)
    table = counts / np.sqrt(np.outer(total, total))
    start = flooded_facies(counts) if anchored else None
    order = _best_path(table, start) if n <= EXACT_FACIES else _spectral_order(table)
    position = np.empty(n, dtype=np.int64)
    position[order] = np.arange(n)
    up, down = _neighbour_steps(counts, position)
    if n > EXACT_FACIES and down > up:  # the spectral order has no direction
        position, (up, down) = n - 1 - position, (down, up)
    ranks = n - 1 - position  # the order runs basinward to landward
    n_steps = int(up + down)
    share = up / n_steps if n_steps else 0.5
    one_way = []
    path = np.argsort(position)
    for i, j in itertools.pairwise(path.tolist()):
        if (counts[i, j] > 0) != (counts[j, i] > 0):
            below, above = (i, j) if counts[i, j] > 0 else (j, i)
            one_way.append((codes[below], codes[above], int(counts[below, above])))
    return RankSuggestion(dict(zip(codes, ranks.tolist())), float(share), n_steps, tuple(one_way))


def flooded_facies(counts: np.ndarray) -> int:
    """The facies a flooding surface brings in: the one whose facies below are the
    least predictable and whose facies above the most, the largest ``E_pre − E_post``
    (Hattori 1976 entropies of the upward ``counts``, :func:`~faciesseq.markov.
    cyclicity.entropies`). A flooding surface puts the deep facies that starts a
    shallowing-upward cycle on whichever facies the last cycle reached, and the cycle
    then climbs from it one neighbour at a time (Van Wagoner et al. 1990); ties go to
    the first facies."""
    e_post, e_pre, _ = entropies(counts, embedded=True)
    return int(np.argmax(e_pre - e_post))


def _best_path(weights: np.ndarray, start: int | None = None) -> np.ndarray:
    """The facies in the order of the path through all of them with the largest sum of
    ``weights[i, j]`` from each to the next (Held & Karp 1962), one subset at a time;
    one that begins at ``start`` where it is given."""
    n = len(weights)
    full = 1 << n
    best = np.full((full, n), -np.inf)
    came = np.full((full, n), -1, dtype=np.int64)
    first = np.arange(n) if start is None else np.array([start])
    best[1 << first, first] = 0.0
    for mask in range(1, full):
        row = best[mask]
        if not np.isfinite(row).any():
            continue
        free = np.flatnonzero(((mask >> np.arange(n)) & 1) == 0)
        steps = row[:, None] + weights[:, free]  # from each end i to each free facies
        frm = np.argmax(steps, axis=0)
        gain = steps[frm, np.arange(free.size)]
        into = mask | (1 << free)
        better = gain > best[into, free]
        best[into[better], free[better]] = gain[better]
        came[into[better], free[better]] = frm[better]
    end, mask, path = int(np.argmax(best[full - 1])), full - 1, []
    while end >= 0:
        path.append(end)
        end, mask = int(came[mask, end]), mask ^ (1 << end)
    return np.array(path[::-1])


def _spectral_order(table: np.ndarray) -> np.ndarray:
    """The facies in the order of the Fiedler vector of the symmetric ``table``
    (Atkins et al. 1998); ties broken by index."""
    s = table + table.T
    laplacian = np.diag(s.sum(axis=1)) - s
    _, vectors = np.linalg.eigh(laplacian)
    fiedler = vectors[:, 1]
    return np.lexsort((np.arange(len(fiedler)), np.round(fiedler, 12)))


def _neighbour_steps(counts: np.ndarray, position: np.ndarray) -> tuple[float, float]:
    """Upward transitions from each facies to its neighbour one place along the order
    (towards its end: landward) and one place back."""
    step = position[None, :] - position[:, None]  # position above minus below
    return float(counts[step == 1].sum()), float(counts[step == -1].sum())
