"""Parasequence-stacking generator: systems tracts built as stacks of parasequences.

A second source of synthetic cores, different in kind from the forward model of
:mod:`faciesseq.simulate.model`: no base level, no profile, no time. A core is a
succession of depositional sequences; each sequence holds the tracts in their
cyclic order upward, HST -> FSST -> LST -> TST, and each tract is a stack of
parasequences, shallowing-upward cycles of beds bounded at their base by a
flooding surface (an abrupt upward deepening). Each tract stacks its
parasequences in its own way, written as the proximality rank of each
parasequence's base (deepest facies, on its flooding surface) and top
(shallowest facies) moving through the tract:

- HST: aggradational then progradational; tops shallow upward, the early
  parasequences thick; where a falling stage follows, the well lies basinward
  of the highstand shoreline and the tops stop below the shoreface;
- FSST: progradational with a downward shift; its first parasequence has no
  flooding surface at its base but lies shallower than the highstand top below
  it (facies missing across a sharp or erosional contact, the regressive
  surface of marine erosion: the BSFR of this generator); then thin, shallow
  parasequences that shallow fast (facies skipped), tops down to the shoreline;
- LST: the shallowest position, aggradational to slightly progradational; the
  sequence boundary (erosional contact) at its base, the MRS at its top;
- TST: retrogradational; each parasequence's base and top deeper than the one
  below, parasequences thinning upward; the MFS at the turnaround to the first
  highstand parasequence.

Inside a parasequence the beds step shallower upward from its base rank to its
top rank, one facies per bed, sometimes skipping one. Adjacent beds of one
facies inside a parasequence are one bed. The stacking rules follow Van Wagoner
et al. (1990, Siliciclastic sequence stratigraphy in well logs, cores and
outcrops, AAPG Methods in Exploration 7) and Catuneanu et al. (2009,
Earth-Science Reviews 92:1-33).

Scenarios are YAML files with ``generator: stacking`` (see ``docs/simulate.md``);
thicknesses are in the scenario's ``units``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from faciesseq.core import Core, CoreSet
from faciesseq.errors import ConfigError
from faciesseq.scheme import (
    FaciesScheme,
    TractModel,
    _read_yaml,
    permissive_tract_model,
)
from faciesseq.simulate.scenario import _probability, _Reader, scenario_scheme
from faciesseq.simulate.wells import history_tract_model, surface_path

__all__ = [
    "TRACTS",
    "StackingResult",
    "StackingScenario",
    "TractStacking",
    "load_stacking_scenario",
    "simulate_stacking",
    "stacking_scenario_from_dict",
]

#: Tracts of one sequence, in their cyclic order upward.
TRACTS = ("HST", "FSST", "LST", "TST")


@dataclass(frozen=True)
class TractStacking:
    """How one tract stacks its parasequences (ranks as fractions of the deepest rank).

    ``base`` and ``top``: the base and top rank of the first and of the last
    parasequence of the tract (linear between); ``skip``: probability that a
    step inside a parasequence skips a facies; ``thickness``: bed-thickness
    factor of the first and of the last parasequence (thinning or thickening
    upward; not used when bed thickness is equal in all tracts).
    """

    base: tuple[float, float]
    top: tuple[float, float]
    skip: float
    thickness: tuple[float, float]


#: The stacking of each tract (Van Wagoner et al. 1990; Catuneanu et al. 2009).
#: The FSST's first parasequence has no flooding surface at its base: it lies a
#: downward shift shallower than the top below (see :func:`_plan_tract`).
STACKING = {
    "HST": TractStacking(base=(1.0, 0.5), top=(0.6, 0.05), skip=0.1, thickness=(1.3, 0.8)),
    "FSST": TractStacking(base=(0.3, 0.25), top=(0.15, 0.0), skip=0.6, thickness=(0.8, 0.6)),
    "LST": TractStacking(base=(0.45, 0.35), top=(0.1, 0.0), skip=0.15, thickness=(1.0, 1.0)),
    "TST": TractStacking(base=(0.5, 1.0), top=(0.2, 0.85), skip=0.15, thickness=(1.2, 0.6)),
}

#: The highstand of a well where a falling stage follows: the well lies basinward of
#: the highstand shoreline, so the highstand's tops stop below the shoreface and
#: the forced-regressive shoreface can shift down onto them (Plint & Nummedal 2000,
#: Geol. Soc. London Spec. Publ. 172:1-17; Posamentier & Morris 2000, same volume).
HST_BEFORE_FALL = TractStacking(base=(1.0, 0.6), top=(0.6, 0.35), skip=0.1, thickness=(1.3, 0.8))

#: Smallest downward shift (ranks) at the base of the FSST: its first bed lies at
#: least this much shallower than the highstand top below (facies missing across
#: the regressive surface of marine erosion), where the scheme has room.
DOWNWARD_SHIFT = 2

#: Spread (in ranks) of a parasequence's base and top about the tract's trend.
RANK_SPREAD = 0.35

_DEFAULT_PARASEQUENCES = {"HST": (3, 6), "FSST": (2, 4), "LST": (2, 3), "TST": (3, 5)}
_DEFAULT_BED_MEAN = {"HST": 0.8, "FSST": 0.35, "LST": 0.6, "TST": 0.4}
_SURFACE_COLUMNS = ["core", "depth", "surface", "name", "lower_tract", "upper_tract", "cored"]
_PARASEQUENCE_COLUMNS = [
    "core",
    "sequence",
    "tract",
    "position",
    "top",
    "base",
    "base_facies",
    "top_facies",
]


@dataclass(frozen=True)
class SectionPlan:
    """Wells along one dip section sharing one sequence of base-level cycles.

    Every well has the same sequences, the same tracts in the same order and the
    same number of parasequences per tract (one parasequence, one time step);
    along the section, from the landward well (position 0) to the basinward one
    (position 1), a well changes as the trade expects (Van Wagoner et al. 1990;
    Catuneanu et al. 2009):

    - ``fsst_landward``: the FSST is absent from the wells within this fraction
      of the section from its landward end (the falling stage leaves a
      subaerial unconformity there, no deposit);
    - ``tst_thinning``: TST beds thin basinward by this fraction at the
      basinward end (transgressive deposits starved away from the shoreline);
    - ``facies_shift``: facies ranks deepen basinward by up to this many ranks.

    ``spacing_km`` is the distance between neighbouring wells.
    """

    spacing_km: float = 5.0
    fsst_landward: float = 0.3
    tst_thinning: float = 0.5
    facies_shift: int = 1


@dataclass(frozen=True)
class StackingScenario:
    """A parasequence-stacking scenario (see :func:`load_stacking_scenario`).

    Thicknesses are in ``units``; ``bed_mean`` maps each tract to its mean bed
    thickness (one value for all tracts when ``equal_beds``), ``bed_sigma`` is
    the log-normal spread of bed thickness.
    """

    name: str
    scheme: FaciesScheme
    cores: int = 8
    core_prefix: str = "ST-"
    sequences: tuple[int, int] = (2, 3)
    parasequences: Mapping[str, tuple[int, int]] = field(
        default_factory=lambda: dict(_DEFAULT_PARASEQUENCES)
    )
    thickness_scale: float = 1.0
    fsst_missing: float = 0.2
    tst_missing: float = 0.05
    facies_swap: float = 0.03
    thickness_jitter: float = 0.1
    equal_beds: bool = False
    bed_mean: Mapping[str, float] = field(default_factory=lambda: dict(_DEFAULT_BED_MEAN))
    bed_sigma: float = 0.35
    contacts: bool = True
    grain_size: bool = True
    labelled_fraction: float = 0.5
    units: str = "m"
    rounding: float = 0.01
    seed: int = 0
    description_text: str | None = None
    section: SectionPlan | None = None
    source: str | None = field(default=None, compare=False)


@dataclass(frozen=True)
class StackingResult:
    """What :func:`simulate_stacking` produced.

    Attributes
    ----------
    scenario, seed
        The scenario run and the seed used.
    cores
        Described cores (depth from the top of each core, in the scenario's
        units): ``facies``, ``contact`` (when the scenario writes contacts),
        ``grain_size`` (when it writes grain size), ``tract`` (interpreter's
        label; empty for unlabelled cores), ``true_tract``.
    surfaces
        True surfaces: ``core``, ``depth``, ``surface``, ``name``,
        ``lower_tract``, ``upper_tract``, ``cored``.
    parasequences
        Truth per parasequence: ``core``, ``sequence``, ``tract``, ``position``
        (1 = lowest in its tract), ``top``, ``base`` (depth), ``base_facies``,
        ``top_facies`` (the planned facies, before description noise).
    wells
        ``core``, ``labelled``, ``thickness`` (in the scenario's units).
    """

    scenario: StackingScenario
    seed: int
    cores: CoreSet
    surfaces: pd.DataFrame
    parasequences: pd.DataFrame
    wells: pd.DataFrame

    def to_frame(self) -> pd.DataFrame:
        """All beds in one table, as written to ``cores.csv`` (``units`` last)."""
        table = self.cores.to_frame()
        table["units"] = self.cores.units
        return table

    def tables(self) -> dict[str, pd.DataFrame]:
        """The truth tables written beside the cores."""
        return {
            "surfaces": self.surfaces,
            "parasequences": self.parasequences,
            "wells": self.wells,
        }

    def to_dict(self) -> dict:
        """A JSON-ready summary: scenario, seed, counts per core and per tract."""
        beds = {name: len(core) for name, core in self.cores.cores.items()}
        per_tract = self.parasequences["tract"].value_counts()
        return {
            "generator": "stacking",
            "scenario": self.scenario.name,
            "seed": int(self.seed),
            "cores": len(self.cores),
            "labelled_cores": int(self.wells["labelled"].sum()),
            "intervals": int(sum(beds.values())),
            "intervals_per_core": beds,
            "surfaces": len(self.surfaces),
            "parasequences_per_tract": {t: int(per_tract.get(t, 0)) for t in TRACTS},
        }


# -- reading ----------------------------------------------------------------

_TOP_KEYS = {
    "generator",
    "name",
    "description",
    "seed",
    "units",
    "scheme",
    "cores",
    "core_prefix",
    "sequences",
    "parasequences",
    "thickness_scale",
    "fsst_missing",
    "tst_missing",
    "noise",
    "bed_thickness",
    "contacts",
    "grain_size",
    "labelled_fraction",
    "rounding",
    "section",
}


def _section(r: _Reader) -> SectionPlan | None:
    """The ``section`` block (wells along one section), or None."""
    if not r.has("section"):
        return None
    block = r.child("section", {"spacing_km", "fsst_landward", "tst_thinning", "facies_shift"})
    shift = block.data.get("facies_shift", 1)
    if isinstance(shift, bool) or not isinstance(shift, int) or shift < 0:
        raise ConfigError(
            f"{block.key('facies_shift')}: must be a whole number >= 0, got {shift!r}",
            file=r.source,
        )
    return SectionPlan(
        spacing_km=block.number("spacing_km", 5.0, positive=True),
        fsst_landward=_probability(block, "fsst_landward", 0.3),
        tst_thinning=_probability(block, "tst_thinning", 0.5),
        facies_shift=shift,
    )


def _count_range(r: _Reader, name: str, default: tuple[int, int]) -> tuple[int, int]:
    """A whole number ``n`` or a range ``[low, high]`` of whole numbers >= 1."""
    value = r.data.get(name, list(default))
    if isinstance(value, int) and not isinstance(value, bool):
        value = [value, value]
    if (
        not isinstance(value, list)
        or len(value) != 2
        or any(isinstance(v, bool) or not isinstance(v, int) for v in value)
        or not 1 <= value[0] <= value[1]
    ):
        raise ConfigError(
            f"{r.key(name)}: must be a whole number >= 1 or a range [low, high], got {value!r}",
            file=r.source,
        )
    return int(value[0]), int(value[1])


def _whole(r: _Reader, name: str, default: int) -> int:
    value = r.data.get(name, default)
    if isinstance(value, bool) or not isinstance(value, int) or value < 1:
        raise ConfigError(
            f"{r.key(name)}: must be a whole number >= 1, got {value!r}", file=r.source
        )
    return value


def _flag(r: _Reader, name: str, default: bool) -> bool:
    value = r.data.get(name, default)
    if not isinstance(value, bool):
        raise ConfigError(f"{r.key(name)}: must be true or false, got {value!r}", file=r.source)
    return value


def _scheme(r: _Reader) -> FaciesScheme:
    """The facies scheme; without one, the shoreface scheme shipped with the package."""
    shipped = Path(str(resources.files("faciesseq").joinpath("data/demo/scheme-shoreface.yaml")))
    scheme = scenario_scheme(r, "scheme", default=shipped)
    if len(scheme) < 3:
        raise ConfigError(
            f"scheme: {scheme.name!r} has {len(scheme)} facies; parasequences need at least 3",
            file=r.source,
        )
    return scheme


def _bed_thickness(r: _Reader) -> tuple[bool, dict[str, float], float]:
    """``equal``, mean bed thickness per tract and the log-normal spread."""
    equal = _flag(r, "equal", False)
    sigma = r.number("sigma", 0.35, minimum=0.0)
    if equal:
        mean = r.number("mean", 0.5, positive=True)
        return True, dict.fromkeys(TRACTS, mean), sigma
    if r.has("mean") and not isinstance(r.data["mean"], Mapping):
        raise ConfigError(
            f"{r.key('mean')}: give the mean bed thickness per tract, e.g. "
            "{HST: 0.8, FSST: 0.35, LST: 0.6, TST: 0.4}, or set equal: true",
            file=r.source,
        )
    per_tract = r.child("mean", set(TRACTS))
    return (
        False,
        {t: per_tract.number(t, _DEFAULT_BED_MEAN[t], positive=True) for t in TRACTS},
        sigma,
    )


def stacking_scenario_from_dict(data: Any, source: str | None = None) -> StackingScenario:
    """Build and validate a :class:`StackingScenario` from parsed YAML.

    Every key has a default; an unknown key, or a value of the wrong kind, raises
    :class:`~faciesseq.errors.ConfigError` naming ``source`` and the key path.
    """
    top = _Reader(data, "", source, _TOP_KEYS)
    generator = top.text("generator", "stacking")
    if generator != "stacking":
        raise ConfigError(f"generator: must be 'stacking', got {generator!r}", file=source)
    units = top.text("units", "m")
    if units not in ("m", "ft"):
        raise ConfigError(f"units: must be 'm' or 'ft', got {units!r}", file=source)
    seed = top.data.get("seed", 0)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise ConfigError(f"seed: must be a whole number >= 0, got {seed!r}", file=source)
    stacks = top.child("parasequences", set(TRACTS))
    noise = top.child("noise", {"facies_swap", "thickness_jitter"})
    equal, mean, sigma = _bed_thickness(top.child("bed_thickness", {"equal", "mean", "sigma"}))
    return StackingScenario(
        name=top.text("name", Path(source).stem if source else "stacking"),
        scheme=_scheme(top),
        cores=_whole(top, "cores", 8),
        core_prefix=top.text("core_prefix", "ST-"),
        sequences=_count_range(top, "sequences", (2, 3)),
        parasequences={t: _count_range(stacks, t, _DEFAULT_PARASEQUENCES[t]) for t in TRACTS},
        thickness_scale=top.number("thickness_scale", 1.0, positive=True),
        fsst_missing=_probability(top, "fsst_missing", 0.2),
        tst_missing=_probability(top, "tst_missing", 0.05),
        facies_swap=_probability(noise, "facies_swap", 0.03),
        thickness_jitter=noise.number("thickness_jitter", 0.1, minimum=0.0),
        equal_beds=equal,
        bed_mean=mean,
        bed_sigma=sigma,
        contacts=_flag(top, "contacts", True),
        grain_size=_flag(top, "grain_size", True),
        labelled_fraction=_probability(top, "labelled_fraction", 0.5),
        units=units,
        rounding=top.number("rounding", 0.01, positive=True),
        seed=seed,
        description_text=top.optional_text("description"),
        section=_section(top),
        source=source,
    )


def load_stacking_scenario(path: str | Path) -> StackingScenario:
    """Read and validate a parasequence-stacking scenario YAML file.

    Parameters
    ----------
    path
        The scenario file (``generator: stacking``; keys in ``docs/simulate.md``).

    Returns
    -------
    StackingScenario
        The validated scenario; errors raise :class:`~faciesseq.errors.ConfigError`
        naming the file and the key.
    """
    return stacking_scenario_from_dict(_read_yaml(path), source=str(path))


# -- building cores -----------------------------------------------------------


def _lerp(pair: tuple[float, float], u: float) -> float:
    return pair[0] + (pair[1] - pair[0]) * u


def _core_tracts(scenario: StackingScenario, rng: np.random.Generator) -> list[tuple[int, str]]:
    """``(sequence, tract)`` upward; FSST and TST left out with their missing probabilities."""
    low, high = scenario.sequences
    out = []
    for sequence in range(1, int(rng.integers(low, high + 1)) + 1):
        for tract in TRACTS:
            if tract == "FSST" and rng.random() < scenario.fsst_missing:
                continue
            if tract == "TST" and rng.random() < scenario.tst_missing:
                continue
            out.append((sequence, tract))
    return out


def _plan_tract(
    tract: str,
    count: int,
    deepest: int,
    previous_top: int,
    rng: np.random.Generator,
    shift: int = 0,
    before_fall: bool = False,
) -> list[tuple[int, int, float]]:
    """``(base rank, top rank, position 0..1)`` of each parasequence of a tract, upward.

    Ranks follow the tract's stacking (:data:`STACKING`; :data:`HST_BEFORE_FALL`
    for a highstand with ``before_fall``, a falling stage above it) with a
    spread of :data:`RANK_SPREAD`; a top never reaches the deepest facies and
    each base lies deeper than the top below it, so every parasequence starts on
    a flooding surface (Van Wagoner et al. 1990), except the first of the FSST:
    forced regression shifts the facies down at its base, so that parasequence
    lies :data:`DOWNWARD_SHIFT` ranks shallower than the top below where the
    scheme has room. ``shift`` deepens both ranks (a basinward well of a section).
    """
    rule = HST_BEFORE_FALL if tract == "HST" and before_fall else STACKING[tract]
    plans = []
    for i in range(count):
        u = i / (count - 1) if count > 1 else 0.5
        base = round(_lerp(rule.base, u) * deepest + RANK_SPREAD * rng.standard_normal()) + shift
        top = round(_lerp(rule.top, u) * deepest + RANK_SPREAD * rng.standard_normal()) + shift
        top = int(np.clip(top, 0, deepest - 1))
        if tract == "FSST" and i == 0 and previous_top >= 0:
            top = min(top, max(previous_top - DOWNWARD_SHIFT, 0))
            base = int(np.clip(min(base, previous_top - DOWNWARD_SHIFT), top, deepest))
        else:
            base = int(np.clip(max(base, top, previous_top + 1), 0, deepest))
        plans.append((base, top, u))
        previous_top = top
    return plans


def _parasequence_ranks(
    base: int, top: int, skip: float, deepest: int, swap: float, rng: np.random.Generator
) -> list[int]:
    """Logged ranks of the beds of one parasequence, upward, same-facies runs merged.

    The beds step one rank shallower at a time from ``base`` to ``top``, a step
    skipping a facies with probability ``skip``; a describer logs a bed as a
    neighbouring facies with probability ``swap``.
    """
    ranks = [base]
    while ranks[-1] > top:
        ranks.append(max(top, ranks[-1] - (2 if rng.random() < skip else 1)))
    logged = []
    for rank in ranks:
        if rng.random() < swap:
            step = -1 if rng.random() < 0.5 else 1
            rank = rank + step if 0 <= rank + step <= deepest else rank - step
        if not logged or logged[-1] != rank:
            logged.append(rank)
    return logged


def _bed_thickness_draw(
    scenario: StackingScenario, tract: str, u: float, rng: np.random.Generator
) -> float:
    """One bed thickness: log-normal about the tract's mean, times its trend and the jitter."""
    factor = 1.0 if scenario.equal_beds else _lerp(STACKING[tract].thickness, u)
    sigma, jitter = scenario.bed_sigma, scenario.thickness_jitter
    spread = np.exp(sigma * rng.standard_normal() - sigma**2 / 2)
    noise = np.exp(jitter * rng.standard_normal() - jitter**2 / 2)
    return float(scenario.bed_mean[tract] * scenario.thickness_scale * factor * spread * noise)


def _contact(
    below: dict | None, tract: str, rank: int, start: str | None, rng: np.random.Generator
) -> str:
    """Contact at the base of a new bed; ``start`` is ``"tract"``, ``"parasequence"`` or None.

    Under the LST the sequence boundary is erosional (subaerial unconformity); at
    the base of the FSST the contact is sharp or erosional (regressive surface of
    marine erosion); other flooding surfaces are sharp; inside a parasequence a
    contact is sharp where a facies is skipped, else gradational (Van Wagoner et
    al. 1990; common practice of core description).
    """
    if below is None:
        return "sharp"
    if start == "tract" and tract == "LST":
        return "erosional"
    if start == "tract" and tract == "FSST":
        return "erosional" if rng.random() < 0.5 else "sharp"
    if start is not None:
        return "sharp"
    return "sharp" if abs(rank - below["rank"]) >= 2 else "gradational"


def _core_beds(
    scenario: StackingScenario, rng: np.random.Generator, well: dict | None = None
) -> tuple[list[dict], list[dict]]:
    """Beds of one core base to top, and its parasequences (bed index ranges, planned ranks).

    ``well`` (section mode, see :func:`_well_plan`): the shared ``steps``
    (sequence, tract, parasequence count) this well has, its TST thickness
    ``factor`` and rank ``shift``; None draws the core's own sequences.
    """
    deepest = len(scenario.scheme) - 1
    beds: list[dict] = []
    parasequences: list[dict] = []
    previous_top = -1
    if well is None:
        steps = [
            (k, seq, tract, None) for k, (seq, tract) in enumerate(_core_tracts(scenario, rng))
        ]
        well = {"steps": steps, "tst_factor": 1.0, "shift": 0}
    above = [s[2] for s in well["steps"][1:]] + [None]
    for (step, sequence, tract, count), next_tract in zip(well["steps"], above, strict=True):
        if count is None:
            low, high = scenario.parasequences[tract]
            count = int(rng.integers(low, high + 1))
        plans = _plan_tract(
            tract, count, deepest, previous_top, rng, well["shift"], next_tract == "FSST"
        )
        factor = well["tst_factor"] if tract == "TST" else 1.0
        for position, (base, top, u) in enumerate(plans, start=1):
            first = len(beds)
            ranks = _parasequence_ranks(
                base, top, STACKING[tract].skip, deepest, scenario.facies_swap, rng
            )
            for k, rank in enumerate(ranks):
                start = ("tract" if position == 1 else "parasequence") if k == 0 else None
                below = beds[-1] if beds else None
                beds.append(
                    {
                        "rank": rank,
                        "tract": tract,
                        "step": step,
                        "contact": _contact(below, tract, rank, start, rng),
                        "thickness": factor * _bed_thickness_draw(scenario, tract, u, rng),
                    }
                )
            parasequences.append(
                {
                    "sequence": sequence,
                    "tract": tract,
                    "position": position,
                    "first": first,
                    "last": len(beds) - 1,
                    "base_rank": base,
                    "top_rank": top,
                }
            )
            previous_top = top
    return beds, parasequences


def _depth_edges(beds: list[dict], rounding: float) -> np.ndarray:
    """Bed edges in depth from the top of the core (youngest bed first), on the rounding grid."""
    thickness = np.array([b["thickness"] for b in beds[::-1]], dtype=float)
    steps = np.maximum(1, np.rint(thickness / rounding)).astype(int)
    return np.round(np.r_[0, np.cumsum(steps)] * rounding, 6)


def _core_table(
    beds: list[dict], edges: np.ndarray, scenario: StackingScenario, labelled: bool
) -> pd.DataFrame:
    """The described core in depth order: the optional columns as the scenario asks."""
    codes = scenario.scheme.codes_by_rank
    top_down = beds[::-1]
    table = pd.DataFrame(
        {"top": edges[:-1], "base": edges[1:], "facies": [codes[b["rank"]] for b in top_down]}
    )
    if scenario.contacts:
        table["contact"] = [b["contact"] for b in top_down]
    if scenario.grain_size:
        table["grain_size"] = [scenario.scheme[c].grain_size for c in table["facies"]]
    truth = [b["tract"] for b in top_down]
    table["tract"] = truth if labelled else [None] * len(truth)
    table["true_tract"] = truth
    return table


def _step_of(tract: str, lower: int, upper: int, plan: list[tuple] | None) -> int:
    """Shared time step of ``tract`` crossed between the steps ``lower`` and ``upper``."""
    for k in range(lower + 1, upper):
        if plan is not None and plan[k][2] == tract:
            return k
    return upper


def _surfaces(
    table: pd.DataFrame, model: TractModel, steps=None, plan: list[tuple] | None = None
) -> list[dict]:
    """True surfaces where the true tract changes, in depth order (younger first at one depth).

    Missing tracts are crossed along the tract succession in time, as the
    forward model names them (:func:`faciesseq.simulate.wells.surface_path`).
    With ``steps`` (the shared step of each row) and the section's ``plan``,
    each surface carries the ``step`` of the tract above it: the same step in
    two wells is the same surface in time.
    """
    history = history_tract_model(model)
    tracts = table["true_tract"].to_numpy(dtype=object)
    rows = []
    for j in range(len(tracts) - 1):
        upper, lower = tracts[j], tracts[j + 1]
        if upper == lower:
            continue
        for a, b in reversed(surface_path(history, lower, upper)):
            named = model.surface(a, b)
            if named is not None:
                row = {
                    "depth": float(table["base"].iloc[j]),
                    "surface": named.code,
                    "name": named.name,
                    "lower_tract": a,
                    "upper_tract": b,
                    "cored": True,
                }
                if steps is not None:
                    row["step"] = (
                        steps[j] if b == upper else _step_of(b, steps[j + 1], steps[j], plan)
                    )
                rows.append(row)
    return rows


def _parasequence_rows(
    parasequences: list[dict], edges: np.ndarray, scheme: FaciesScheme
) -> list[dict]:
    """Parasequence truth with depths, youngest first (depth order)."""
    n = len(edges) - 1
    codes = scheme.codes_by_rank
    rows = [
        {
            "sequence": p["sequence"],
            "tract": p["tract"],
            "position": p["position"],
            "top": float(edges[n - 1 - p["last"]]),
            "base": float(edges[n - p["first"]]),
            "base_facies": codes[p["base_rank"]],
            "top_facies": codes[p["top_rank"]],
        }
        for p in parasequences
    ]
    return rows[::-1]


def _section_plan(scenario: StackingScenario, rng: np.random.Generator) -> list[tuple]:
    """The shared ``(step, sequence, tract, parasequence count)`` of a section, upward."""
    plan = []
    for k, (sequence, tract) in enumerate(_core_tracts(scenario, rng)):
        low, high = scenario.parasequences[tract]
        plan.append((k, sequence, tract, int(rng.integers(low, high + 1))))
    return plan


def _well_plan(section: SectionPlan, plan: list[tuple], x: float) -> dict:
    """One well's share of the section plan at position ``x`` (0 landward, 1 basinward)."""
    landward = x < section.fsst_landward
    return {
        "steps": [p for p in plan if not (landward and p[2] == "FSST")],
        "tst_factor": 1.0 - section.tst_thinning * x,
        "shift": round(section.facies_shift * x),
    }


def simulate_stacking(
    scenario: StackingScenario, seed: int | None = None, tract_model: TractModel | None = None
) -> StackingResult:
    """Build synthetic cores as stacks of parasequences, tract by tract.

    Parameters
    ----------
    scenario
        A stacking scenario (see :func:`load_stacking_scenario`).
    seed
        Seed of all randomness; ``None`` uses the scenario's ``seed``. The same
        scenario and seed give the same tables bit for bit; each core has its
        own generator, so adding a core leaves the others unchanged.
    tract_model
        Names the surfaces; the package default when ``None``.

    Returns
    -------
    StackingResult
        Cores with their true tracts, the true surfaces and the parasequences.

    Notes
    -----
    Tracts are stacks of shallowing-upward parasequences bounded by flooding
    surfaces; retrogradational (TST), aggradational to progradational (HST),
    progradational with a downward shift (FSST) and aggradational at the lowest
    position (LST): Van Wagoner et al. 1990, Siliciclastic sequence stratigraphy
    in well logs, cores and outcrops (AAPG Methods in Exploration 7); Catuneanu
    et al. 2009, Earth-Science Reviews 92:1-33.
    """
    seed = scenario.seed if seed is None else int(seed)
    model = permissive_tract_model() if tract_model is None else tract_model
    section = scenario.section
    spawned = np.random.SeedSequence(seed).spawn(scenario.cores + 1 + (section is not None))
    label_seed, *core_seeds = spawned[: scenario.cores + 1]
    plan = _section_plan(scenario, np.random.default_rng(spawned[-1])) if section else None
    n_labelled = int(np.floor(scenario.labelled_fraction * scenario.cores + 0.5))
    labelled = set(np.random.default_rng(label_seed).permutation(scenario.cores)[:n_labelled])
    cores, surfaces, parasequences, wells = {}, [], [], []
    for i, child in enumerate(core_seeds):
        name = f"{scenario.core_prefix}{i + 1:02d}"
        x = i / max(scenario.cores - 1, 1)
        well = _well_plan(section, plan, x) if section else None
        beds, stacks = _core_beds(scenario, np.random.default_rng(child), well)
        edges = _depth_edges(beds, scenario.rounding)
        table = _core_table(beds, edges, scenario, i in labelled)
        cores[name] = Core(name, table, scenario.units)
        steps = [b["step"] for b in beds[::-1]] if section else None
        surfaces += [{"core": name, **row} for row in _surfaces(table, model, steps, plan)]
        parasequences += [
            {"core": name, **row} for row in _parasequence_rows(stacks, edges, scenario.scheme)
        ]
        wells.append({"core": name, "labelled": i in labelled, "thickness": float(edges[-1])})
        if section:
            wells[-1] |= {"section": scenario.name, "x_km": i * section.spacing_km}
    extra = ["section", "x_km"] if section else []
    return StackingResult(
        scenario=scenario,
        seed=seed,
        cores=CoreSet(cores, scenario.units, sources=(scenario.source or scenario.name,)),
        surfaces=pd.DataFrame(surfaces, columns=_SURFACE_COLUMNS + (["step"] if section else [])),
        parasequences=pd.DataFrame(parasequences, columns=_PARASEQUENCE_COLUMNS),
        wells=pd.DataFrame(wells, columns=["core", "labelled", "thickness", *extra]),
    )
