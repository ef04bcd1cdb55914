"""From the simulated section to described cores: well records, description noise, truth.

At a well the forward model leaves one layer per time step, of the thickness
preserved after all later erosion. Each layer takes the facies of the water
depth at the well when it was laid down: the facies belt that lay at that
position on the profile then, so vertical successions obey Walther's law
because they come from lateral belts moving past the well, not from a table
of tracts. Layers are merged into facies units (a new unit at each change of
facies, of true tract, at an erosion surface or at a long hiatus) and the
units are described as beds:

- contact at the base of a unit: ``erosional`` if sediment was eroded at the
  well since the layer below was laid down; ``sharp`` if deposition stopped for
  at least ``hiatus_sharp_kyr`` or the facies jumps by two ranks or more;
  ``gradational`` otherwise (common practice of core description); contacts
  between beds inside a unit are ``sharp`` bedding planes;
- bed thicknesses inside a unit are drawn from a log-normal distribution;
- noise: a bed may be logged as a neighbouring facies (one rank away), its
  thickness jittered, stretches of core missing, and an interpreter may put a
  tract boundary one bed off.

Truth kept with every bed: ``true_tract``, the water depth at deposition and
the age. Surfaces are placed where the true tract changes upward between
successive beds; where tracts are missing at a well (not deposited or eroded)
the surfaces of the shortest path through the tract succession in time
(:func:`history_tract_model`) sit at one depth
(e.g. a sequence boundary directly on a highstand where no falling-stage
deposits reached the well).
"""

from __future__ import annotations

import dataclasses
import itertools
from collections import deque

import numpy as np
import pandas as pd

from faciesseq.scheme import TractModel
from faciesseq.simulate.model import SectionHistory
from faciesseq.simulate.scenario import Scenario, Well

__all__ = ["describe_well", "history_tract_model", "surface_path", "well_layers"]

_THIN = 1e-9


def facies_of_depth(water_depth: np.ndarray, bands: tuple[tuple[str, float], ...]) -> np.ndarray:
    """Facies code for each water depth (m; negative = exposed) from the depth bands."""
    limits = np.array([b[1] for b in bands], dtype=float)
    codes = np.array([b[0] for b in bands], dtype=object)
    idx = np.searchsorted(limits, water_depth, side="left")
    return codes[np.minimum(idx, len(codes) - 1)]


def well_layers(history: SectionHistory, well: Well, scenario: Scenario) -> pd.DataFrame:
    """The preserved layers at a well, base to top.

    One layer per time step with sediment kept, split where the water depth at
    deposition (linear through the step, from the depth at the end of the step
    before to the depth at its end) crosses a facies limit inside it: a step
    that fills the shoreface holds lower shoreface, upper shoreface and
    foreshore upward.

    Columns: ``step``, ``age_kyr`` (end of the step), ``thickness`` (m),
    ``facies``, ``true_tract``, ``water_depth`` (m at deposition, mid-layer), ``eroded_below``
    (m eroded at the well since the previous kept layer), ``hiatus_kyr``
    (time without preserved deposition below the layer).
    """
    j = int(np.argmin(np.abs(history.x_km - well.x_km)))
    h = history.sediment_m[:, j]
    preserved = np.minimum.accumulate(h[::-1])[::-1]
    thickness = np.diff(preserved)
    steps = np.arange(1, history.n_steps + 1)
    elevation = (
        history.initial_surface_m[j] - history.subsidence_m_per_kyr[j] * history.time_kyr + h
    )
    water_depth = history.base_level_m - elevation  # at the end of each step, (N + 1,)
    keep = np.nonzero(thickness > _THIN)[0]
    eroded = history.eroded_m[:, j]
    cum_eroded = np.r_[0.0, np.cumsum(eroded)]
    prev = np.r_[-1, keep[:-1]]
    eroded_below = cum_eroded[keep + 1] - cum_eroded[prev + 1]
    hiatus = (keep - prev - 1) * (history.time_kyr[1] - history.time_kyr[0])
    # Deposition and the change of water depth go on together through a step: the
    # base of a kept layer was laid down at the water depth of the end of the step
    # before, its top (if not cut later) at the depth of the end of the step, linear
    # between. Where that range crosses a facies limit the layer is split, so a step
    # that fills a shoreface holds its facies upward.
    limits = np.array([b[1] for b in scenario.depth_bands[:-1]], dtype=float)
    rows: dict[str, list] = {c: [] for c in _LAYER_COLUMNS if c != "facies"}
    for n, i in enumerate(keep):
        base_depth = water_depth[i]
        deposited = h[i + 1] - h[i]  # > 0: a kept layer starts on the surface of step i
        top_depth = base_depth + (water_depth[i + 1] - base_depth) * thickness[i] / deposited
        lo, hi = sorted((base_depth, top_depth))
        inside = limits[(limits > lo) & (limits < hi)]
        if top_depth < base_depth:
            inside = inside[::-1]
        edges = np.r_[base_depth, inside, top_depth]
        span = abs(top_depth - base_depth)
        for part, (lower, upper) in enumerate(itertools.pairwise(edges)):
            share = abs(upper - lower) / span if span > 0 else 1.0
            rows["step"].append(int(steps[i]))
            rows["age_kyr"].append(float(history.time_kyr[i + 1]))
            rows["thickness"].append(float(thickness[i] * share))
            rows["true_tract"].append(history.tract[i])
            rows["water_depth"].append(float(0.5 * (lower + upper)))
            rows["eroded_below"].append(float(eroded_below[n]) if part == 0 else 0.0)
            rows["hiatus_kyr"].append(float(hiatus[n]) if part == 0 else 0.0)
    table = pd.DataFrame(rows)
    table["facies"] = facies_of_depth(
        table["water_depth"].to_numpy(dtype=float), scenario.depth_bands
    )
    return table[list(_LAYER_COLUMNS)]


_INTERVAL_COLUMNS = (
    "top",
    "base",
    "facies",
    "contact",
    "grain_size",
    "tract",
    "true_tract",
    "true_facies",
    "true_water_depth",
    "true_age_kyr",
)

_LAYER_COLUMNS = (
    "step",
    "age_kyr",
    "thickness",
    "facies",
    "true_tract",
    "water_depth",
    "eroded_below",
    "hiatus_kyr",
)


def _units(layers: pd.DataFrame, scenario: Scenario) -> list[dict]:
    """Merge layers into facies units, base to top, with the contact at each base."""
    rank = scenario.scheme.rank
    units: list[dict] = []
    for row in layers.itertuples(index=False):
        eroded = row.eroded_below > _THIN
        gap = row.hiatus_kyr >= scenario.description.hiatus_sharp_kyr - 1e-9
        last = units[-1] if units else None
        if (
            last is not None
            and not eroded
            and not gap
            and last["facies"] == row.facies
            and last["true_tract"] == row.true_tract
        ):
            last["thickness"] += row.thickness
            last["_wd"] += row.water_depth * row.thickness
            last["age_top"] = row.age_kyr
            continue
        if last is None:
            contact = "sharp"
        elif eroded:
            contact = "erosional"
        elif gap or abs(rank(row.facies) - rank(last["facies"])) >= 2:
            contact = "sharp"
        else:
            contact = "gradational"
        units.append(
            {
                "thickness": row.thickness,
                "facies": row.facies,
                "true_tract": row.true_tract,
                "contact": contact,
                "_wd": row.water_depth * row.thickness,
                "age_base": row.age_kyr,
                "age_top": row.age_kyr,
            }
        )
    for u in units:
        u["water_depth"] = u.pop("_wd") / u["thickness"]
    return units


def _beds(units: list[dict], scenario: Scenario, rng: np.random.Generator) -> list[dict]:
    """Split units into described beds (log-normal thicknesses), base to top."""
    d = scenario.description
    beds: list[dict] = []
    for u in units:
        total = u["thickness"]
        parts: list[float] = []
        left = total
        while left > 0:
            t = float(d.bed_thickness_m * np.exp(d.bed_thickness_sigma * rng.standard_normal()))
            if left - t < 0.5 * d.bed_thickness_m:
                parts.append(left)
                break
            parts.append(t)
            left -= t
        # thin tops are drawn into the bed below them: bed tops stay within the unit
        span = u["age_top"] - u["age_base"]
        below = 0.0
        for i, t in enumerate(parts):
            bed = dict(u)
            bed["thickness"] = t
            bed["contact"] = u["contact"] if i == 0 else "sharp"
            bed["true_age_kyr"] = u["age_base"] + span * (below + t / 2) / total
            below += t
            beds.append(bed)
    return beds


#: Tracts the base-level history itself may lack (the step rule of
#: :mod:`faciesseq.simulate.model`): no FSST without a relative fall, no TST where
#: supply outpaces the rise. HST and LST always last at least one step.
HISTORY_SKIPS = ("FSST", "TST")


def history_tract_model(model: TractModel) -> TractModel:
    """The tract model with only the skips of base-level history (:data:`HISTORY_SKIPS`).

    A tract model for decoding cores may let any tract be absent at a well (a thin
    highstand inside one described bed, a lowstand confined basinward); the true
    surfaces of a simulated well are named along the tract succession in time, so
    where a tract that did exist in time is missing at the well, its bounding
    surfaces are listed together at one depth (e.g. an MFS and a BSFR where the
    highstand is missing; Catuneanu et al. 2009, Earth-Science Reviews 92:1-33).
    """
    skips = tuple(t for t in HISTORY_SKIPS if t in model.order)
    return dataclasses.replace(model, skips=skips)


def surface_path(model: TractModel, lower: str, upper: str) -> list[tuple[str, str]]:
    """Boundaries of the shortest path from ``lower`` to ``upper`` upward in the tract model."""
    if lower == upper:
        return []
    previous: dict[str, str | None] = {lower: None}
    queue = deque([lower])
    while queue:
        code = queue.popleft()
        if code == upper:
            break
        for nxt in model.successors(code):
            if nxt not in previous:
                previous[nxt] = code
                queue.append(nxt)
    if upper not in previous:
        return [(lower, upper)]
    path = [upper]
    while previous[path[-1]] is not None:
        path.append(previous[path[-1]])
    path.reverse()
    return list(itertools.pairwise(path))


def describe_well(
    history: SectionHistory,
    well: Well,
    scenario: Scenario,
    model: TractModel,
    rng: np.random.Generator,
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The described core of one well and its true surfaces.

    Parameters
    ----------
    history
        The section the well stands on.
    well, scenario
        The well and the scenario (description and noise settings).
    model
        Tract model naming the surfaces.
    rng
        Random generator (the only source of randomness).

    Returns
    -------
    intervals : DataFrame
        Depth order (top first): ``top``, ``base`` (m below the top of the core),
        ``facies``, ``contact``, ``grain_size``, ``tract`` (the interpreter's label,
        empty for unlabelled wells), ``true_tract``, ``true_facies`` (before
        description noise), ``true_water_depth`` (m), ``true_age_kyr``.
    surfaces : DataFrame
        ``depth``, ``surface`` (code), ``name``, ``lower_tract``, ``upper_tract``,
        ``cored`` (False when the surface lies in a missing stretch of core).
    """
    noise = scenario.noise
    scheme = scenario.scheme
    by_rank = scheme.codes_by_rank
    layers = well_layers(history, well, scenario)
    beds = _beds(_units(layers, scenario), scenario, rng)
    if not beds:  # nothing preserved at this well
        return pd.DataFrame(columns=list(_INTERVAL_COLUMNS)), pd.DataFrame(
            columns=["depth", "surface", "name", "lower_tract", "upper_tract", "cored"]
        )

    _describe(beds, noise, by_rank, rng)
    r = scenario.description.rounding_m
    table = _depth_table(beds, r)
    tracts = table["true_tract"].to_numpy(dtype=object)
    surfaces_table = _true_surfaces(table, model)
    table["tract"] = _interpreter_labels(tracts, noise, rng) if well.labelled else None
    total = float(table["base"].iloc[-1]) if len(table) else 0.0
    gaps = _missing_core(total, noise, r, rng)
    if gaps:
        table = _cut(table, gaps)
    surfaces_table["cored"] = [
        not any(g0 < d < g1 for g0, g1 in gaps) for d in surfaces_table["depth"]
    ]
    table["grain_size"] = [scheme[c].grain_size for c in table["facies"]]
    table = table.rename(columns={"water_depth": "true_water_depth"})
    table = table[list(_INTERVAL_COLUMNS)].reset_index(drop=True)
    table["true_water_depth"] = table["true_water_depth"].round(3)
    table["true_age_kyr"] = table["true_age_kyr"].round(3)
    return table, surfaces_table


def _describe(beds: list[dict], noise, by_rank, rng: np.random.Generator) -> None:
    """Description noise, bed by bed (base to top), in place: a facies logged as its
    neighbour in rank (``true_facies`` keeps the one deposited), thickness jitter."""
    for bed in beds:
        bed["true_facies"] = bed["facies"]
        if noise.facies_swap > 0 and rng.random() < noise.facies_swap:
            i = by_rank.index(bed["facies"])
            step = -1 if rng.random() < 0.5 else 1
            if not 0 <= i + step < len(by_rank):
                step = -step
            bed["facies"] = by_rank[i + step]
        if noise.thickness_jitter > 0:
            bed["thickness"] *= float(np.exp(noise.thickness_jitter * rng.standard_normal()))


def _depth_table(beds: list[dict], r: float) -> pd.DataFrame:
    """The beds (base to top) as a table in depth order, with depths from the top of
    the core rounded to ``r`` as a describer reads them; beds rounded away dropped."""
    thickness = np.array([b["thickness"] for b in beds], dtype=float)[::-1]
    edges = np.round(np.r_[0.0, np.cumsum(thickness)] / r) * r
    edges = np.round(edges, 6)
    table = pd.DataFrame(beds[::-1])
    table["top"] = edges[:-1]
    table["base"] = edges[1:]
    return table[table["base"] > table["top"]].reset_index(drop=True)


def _true_surfaces(table: pd.DataFrame, model: TractModel) -> pd.DataFrame:
    """The true surfaces where the true tract changes upward, in depth order (at one
    depth the younger surface first, as read down the core)."""
    surfaces = []
    tracts = table["true_tract"].to_numpy(dtype=object)
    history = history_tract_model(model)
    for i in range(len(table) - 1, 0, -1):
        lower, upper = tracts[i], tracts[i - 1]
        if lower == upper:
            continue
        for a, b in surface_path(history, lower, upper):
            named = model.surface(a, b)
            if named is None:
                continue
            surfaces.append(
                {
                    "depth": float(table["base"].iloc[i - 1]),
                    "surface": named.code,
                    "name": named.name,
                    "lower_tract": a,
                    "upper_tract": b,
                }
            )
    return pd.DataFrame(
        surfaces[::-1], columns=["depth", "surface", "name", "lower_tract", "upper_tract"]
    ).sort_values("depth", kind="stable", ignore_index=True)


def _interpreter_labels(tracts: np.ndarray, noise, rng: np.random.Generator) -> np.ndarray:
    """The interpreter's tract of every row (depth order) of a labelled well: the true
    tract, each boundary placed one bed too high or too low with chance
    ``noise.label_shift``."""
    labels = tracts.copy()
    if noise.label_shift > 0:
        change = np.nonzero(tracts[1:] != tracts[:-1])[0]
        for c in change:  # boundary between row c (above) and c + 1 (below)
            if rng.random() < noise.label_shift:
                if rng.random() < 0.5:
                    labels[c] = tracts[c + 1]  # boundary placed one bed too high
                else:
                    labels[c + 1] = tracts[c]  # one bed too low
    return labels


def _missing_core(total: float, noise, r: float, rng: np.random.Generator) -> list:
    """Stretches of missing core ``(top, base)`` in a core ``total`` long, rounded to
    ``r``: a Poisson number per 100 m, each of a uniform length in the noise range."""
    gaps: list[tuple[float, float]] = []
    if noise.missing_per_100m > 0 and total > 0:
        n_gaps = int(rng.poisson(noise.missing_per_100m * total / 100.0))
        lo, hi = noise.missing_length_m
        for _ in range(n_gaps):
            start = float(rng.uniform(0.0, total))
            length = float(rng.uniform(lo, hi))
            gaps.append(
                (round(np.round(start / r) * r, 6), round(np.round((start + length) / r) * r, 6))
            )
    return gaps


def _cut(table: pd.DataFrame, gaps: list[tuple[float, float]]) -> pd.DataFrame:
    """Remove the missing stretches ``(top, base)`` from an interval table (depth order)."""
    rows = []
    for row in table.to_dict("records"):
        pieces = [(row["top"], row["base"])]
        for g0, g1 in gaps:
            nxt = []
            for a, b in pieces:
                if g1 <= a or g0 >= b:
                    nxt.append((a, b))
                    continue
                if a < g0:
                    nxt.append((a, g0))
                if g1 < b:
                    nxt.append((g1, b))
            pieces = nxt
        for a, b in pieces:
            if b - a <= 1e-9:
                continue
            piece = dict(row)
            piece["top"], piece["base"] = a, b
            if b < row["base"] - 1e-9:
                piece["contact"] = None  # its base lies on missing core: not seen
            rows.append(piece)
    return pd.DataFrame(rows, columns=table.columns)
