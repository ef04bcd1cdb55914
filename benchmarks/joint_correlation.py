"""Joint decoding (an experiment, measured and not kept): the wells of a section held
to one sequence of tracts. Run by ``eval_correlation.py --joint``; results in
``benchmarks/correlation.md``.

A per-well decoder reads each core alone; where a tract has no facies
expression (an MFS inside coastal-plain beds landward) it misses the cycle,
and the correlation then lacks the surface in that well. Joint decoding lets
the neighbours speak: the wells of a section share the sequence of base-level
cycles (the same tracts in the same order, each well with its own thicknesses),
the premise of sequence-stratigraphic correlation (Van Wagoner et al. 1990,
AAPG Methods in Exploration 7; Catuneanu et al. 2009, Earth-Science Reviews
92:1-33). The iteration:

1. decode every well alone and correlate the picks (:func:`correlate`);
2. for every well, carry its neighbours' tract posteriors onto its beds: the
   depth scale of a neighbour is mapped piecewise linearly between the
   surfaces the two wells share (the ties), and between the top and base of
   the two columns;
3. where the neighbours agree on a tract (their mean posterior at least
   ``agreement``, over a window of ``margin`` of the column on either side,
   so the beds around a change of tract stay free) and the well's own
   posterior does not rule it out (at least ``floor``), the bed is clamped to
   that tract; the well is decoded again, its beds between the clamps free
   (the cyclic tract graph then places every boundary the common sequence
   needs, from the well's own facies);
4. correlate again and repeat ``iterations`` times.

Posteriors of a joint decoding are conditional on the clamps (a clamped bed
has its tract with probability 1), and the clamps come from the neighbours: a
joint correlation is a stronger hypothesis, not a better-tested one.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from faciesseq.correlation.align import AlignmentOptions
from faciesseq.correlation.chain import Correlation, correlate
from faciesseq.errors import InputError

__all__ = ["JointDecoding", "JointOptions", "joint_decode"]


@dataclass(frozen=True)
class JointOptions:
    """How strongly the neighbours hold a well to the common sequence.

    Attributes
    ----------
    agreement
        Mean neighbour posterior of a tract from which a bed is clamped to it.
    margin
        Half-width (fraction of the column) of the window over which the
        neighbours must agree; beds nearer a change of tract stay free.
    floor
        A bed is not clamped to a tract its own (per-well) posterior gives
        less than this.
    iterations
        Rounds of correlate-then-decode after the per-well decoding.
    """

    agreement: float = 0.9
    margin: float = 0.03
    floor: float = 0.0
    iterations: int = 2

    def __post_init__(self) -> None:
        if not 0.5 < self.agreement <= 1:
            raise ValueError(f"agreement must lie in (0.5, 1], got {self.agreement!r}")
        if not 0 <= self.margin < 0.5:
            raise ValueError(f"margin must lie in [0, 0.5), got {self.margin!r}")
        if not 0 <= self.floor < 1:
            raise ValueError(f"floor must lie in [0, 1), got {self.floor!r}")
        if self.iterations < 1:
            raise ValueError(f"iterations must be at least 1, got {self.iterations!r}")


@dataclass(frozen=True)
class JointDecoding:
    """Result of :func:`joint_decode`.

    Attributes
    ----------
    interpretation
        The last decoding (posteriors conditional on the clamps).
    correlation
        The correlation of its picks.
    clamped
        ``core``, ``iteration``, ``beds``, ``clamped`` (beds held to the
        neighbours' tract), ``released`` (true where the clamps allowed no path
        through the tract graph and the well was decoded alone).
    """

    interpretation: object
    correlation: Correlation
    clamped: pd.DataFrame


def _posterior_at(beds: pd.DataFrame, depth: np.ndarray, tracts) -> np.ndarray:
    """Tract posteriors of the bed holding each depth (the nearest bed in a gap)."""
    beds = beds.sort_values("top", kind="stable")
    top = beds["top"].to_numpy(float)
    base = beds["base"].to_numpy(float)
    post = beds[[f"p_{t}" for t in tracts]].to_numpy(float)
    k = np.clip(np.searchsorted(top, depth, side="right") - 1, 0, len(top) - 1)
    after = np.minimum(k + 1, len(top) - 1)
    nearer_next = (depth > base[k]) & (top[after] - depth < depth - base[k])
    return post[np.where(nearer_next, after, k)]


def _depth_map(corr: Correlation, core: str, other: str, extents) -> tuple[np.ndarray, np.ndarray]:
    """Anchors (depth in ``core``, depth in ``other``): column ends and shared ties."""
    ties = corr.ties
    a = ties[(ties["core_left"] == core) & (ties["core_right"] == other)]
    b = ties[(ties["core_left"] == other) & (ties["core_right"] == core)]
    here = np.r_[a["depth_left"].to_numpy(float), b["depth_right"].to_numpy(float)]
    there = np.r_[a["depth_right"].to_numpy(float), b["depth_left"].to_numpy(float)]
    (t0, b0), (t1, b1) = extents[core], extents[other]
    order = np.argsort(here, kind="stable")
    return np.r_[t0, here[order], b0], np.r_[t1, there[order], b1]


def _window_min(fraction: np.ndarray, values: np.ndarray, margin: float) -> np.ndarray:
    """Minimum of ``values`` over rows within ``margin`` of each row's fraction."""
    order = np.argsort(fraction, kind="stable")
    f, v = fraction[order], values[order]
    lo = np.searchsorted(f, f - margin, side="left")
    hi = np.searchsorted(f, f + margin, side="right")
    out = np.empty_like(v)
    for i in range(len(f)):
        out[i] = v[lo[i] : hi[i]].min(axis=0)
    result = np.empty_like(out)
    result[order] = out
    return result


def _labels(succession, interp, neighbours, corr, extents, tracts, options) -> list:
    """Clamp labels of one succession (base to top): a tract or ``None`` per bed."""
    beds = succession.beds
    mid = 0.5 * (beds["top"].to_numpy(float) + beds["base"].to_numpy(float))
    core = succession.core
    mapped = []
    for other in neighbours:
        here, there = _depth_map(corr, core, other, extents)
        mapped.append(_posterior_at(interp[other].beds, np.interp(mid, here, there), tracts))
    consensus = np.mean(mapped, axis=0)
    top, base = extents[core]
    fraction = (mid - top) / max(base - top, 1e-9)
    held = _window_min(fraction, consensus, options.margin)
    own = _posterior_at(interp[core].beds, mid, tracts)
    k = np.argmax(held, axis=1)
    rows = np.arange(len(k))
    keep = (held[rows, k] >= options.agreement) & (own[rows, k] >= options.floor)
    return [tracts[j] if ok else None for j, ok in zip(k, keep)]


def _neighbours(wells: pd.DataFrame) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    ordered = wells.sort_values(["section", "position", "core"], kind="stable")
    for _, group in ordered.groupby("section", sort=True):
        for left, right in itertools.pairwise(list(group["core"])):
            out.setdefault(left, []).append(right)
            out.setdefault(right, []).append(left)
    return out


def _decode_held(model, successions, labels, plain):
    """Decode with the clamps; a well whose clamps admit no path keeps its plain decoding."""
    try:
        return model.decode(successions, labels=labels), set()
    except InputError:  # some well's clamps admit no path: decode well by well
        pass
    cores, released = dict(plain.cores), set()
    for core in dict.fromkeys(s.core for s in successions):
        own = [k for k, s in enumerate(successions) if s.core == core]
        try:
            held = model.decode([successions[k] for k in own], labels=[labels[k] for k in own])
        except InputError:
            released.add(core)
            continue
        cores[core] = held[core]
    return replace(plain, cores=cores), released


def joint_decode(
    model,
    cores,
    wells: pd.DataFrame,
    options: JointOptions | None = None,
    alignment: AlignmentOptions | None = None,
) -> JointDecoding:
    """Decode the wells of each section toward their common sequence of tracts.

    Parameters
    ----------
    model
        A fitted :class:`faciesseq.hmm.model.TractHMM`.
    cores
        The cores (:class:`faciesseq.core.CoreSet`) of the wells.
    wells
        ``core``, ``section``, ``position`` (see
        :func:`faciesseq.correlation.wells.read_wells`).
    options, alignment
        Joint-decoding and alignment options (defaults when ``None``).

    Returns
    -------
    JointDecoding
    """
    options = options or JointOptions()
    successions = [s for s in cores.successions(model.unit, model.step) if len(s)]
    extents = {c.name: (c.top, c.base) for c in cores}
    wells = wells[wells["core"].isin(list(extents))]
    neighbours = _neighbours(wells)
    plain = model.decode(successions)
    interp = plain
    tracts = list(interp.tracts)
    rows = []
    corr = correlate(interp.picks_table(), extents, wells, alignment)
    for iteration in range(1, options.iterations + 1):
        labels = [
            _labels(s, interp, neighbours[s.core], corr, extents, tracts, options)
            if neighbours.get(s.core)
            else [None] * len(s)
            for s in successions
        ]
        interp, released = _decode_held(model, successions, labels, plain)
        counts: dict[str, list[int]] = {}
        for s, lab in zip(successions, labels):
            n = counts.setdefault(s.core, [0, 0])
            n[0] += len(lab)
            n[1] += sum(v is not None for v in lab)
        rows += [
            {
                "core": core,
                "iteration": iteration,
                "beds": n[0],
                "clamped": n[1],
                "released": core in released,
            }
            for core, n in counts.items()
        ]
        corr = correlate(interp.picks_table(), extents, wells, alignment)
    return JointDecoding(interp, corr, pd.DataFrame(rows))
