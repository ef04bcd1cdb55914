"""Simulation scenarios: the YAML file that drives the forward model.

A scenario names everything the forward model needs (see ``docs/simulate.md``
for every key with its units): duration and time step, the base-level curve,
subsidence, sediment supply, the initial shelf profile and the equilibrium
depositional profile, the facies scheme with the water-depth band of each
facies, the dip sections and the wells on them, the description noise and the
random seed. Every problem is reported with the file and the key path.

Units: time in kyr, distance along dip in km, elevation and water depth in m,
rates in m/kyr, sediment supply in m^2/kyr (cross-sectional area of a dip
section per unit width along strike).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from faciesseq.errors import ConfigError
from faciesseq.scheme import FaciesScheme, _read_yaml, load_scheme

__all__ = [
    "BaseLevelCurve",
    "Description",
    "Noise",
    "Profile",
    "RateCurve",
    "Scenario",
    "Section",
    "Subsidence",
    "Well",
    "load_scenario",
    "scenario_from_dict",
]


class _Reader:
    """Typed access to one mapping of the scenario, with located errors."""

    def __init__(self, data: Any, path: str, source: str | None, allowed: set[str]) -> None:
        if data is None:
            data = {}
        if not isinstance(data, Mapping):
            raise ConfigError(f"{path or 'scenario'}: must be a mapping", file=source)
        bad = set(data) - allowed
        if bad:
            raise ConfigError(
                f"{path or 'scenario'}: unknown key(s) {sorted(map(str, bad))}; expected some of "
                f"{sorted(allowed)}",
                file=source,
            )
        self.data = data
        self.path = path
        self.source = source

    def key(self, name: str) -> str:
        return f"{self.path}.{name}" if self.path else name

    def has(self, name: str) -> bool:
        return self.data.get(name) is not None

    def number(
        self,
        name: str,
        default: float | None = None,
        *,
        minimum: float | None = None,
        positive: bool = False,
    ) -> float:
        value = self.data.get(name, default)
        if value is None:
            raise ConfigError(f"{self.key(name)}: missing (a number is required)", file=self.source)
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise ConfigError(
                f"{self.key(name)}: must be a number, got {value!r}", file=self.source
            )
        value = float(value)
        if math.isnan(value):
            raise ConfigError(f"{self.key(name)}: must be a number, got NaN", file=self.source)
        if positive and not value > 0:
            raise ConfigError(
                f"{self.key(name)}: must be positive, got {value!r}", file=self.source
            )
        if minimum is not None and value < minimum:
            raise ConfigError(
                f"{self.key(name)}: must be at least {minimum}, got {value!r}", file=self.source
            )
        return value

    def text(self, name: str, default: str | None = None) -> str:
        value = self.data.get(name, default)
        if value is None:
            raise ConfigError(f"{self.key(name)}: missing (text is required)", file=self.source)
        if isinstance(value, bool) or not isinstance(value, str | int | float):
            raise ConfigError(f"{self.key(name)}: must be text, got {value!r}", file=self.source)
        return str(value)

    def optional_text(self, name: str) -> str | None:
        return self.text(name) if self.has(name) else None

    def flag(self, name: str, default: bool = False) -> bool:
        value = self.data.get(name, default)
        if not isinstance(value, bool):
            raise ConfigError(
                f"{self.key(name)}: must be true or false, got {value!r}", file=self.source
            )
        return value

    def child(self, name: str, allowed: set[str]) -> _Reader:
        return _Reader(self.data.get(name), self.key(name), self.source, allowed)

    def table(self, name: str, columns: int = 2) -> np.ndarray:
        """A list of ``[time, value]`` rows, times strictly increasing."""
        rows = self.data.get(name)
        here = self.key(name)
        if not isinstance(rows, list) or len(rows) < 2:
            raise ConfigError(
                f"{here}: must be a list of at least two [time, value] rows", file=self.source
            )
        out = []
        for i, row in enumerate(rows, start=1):
            if (
                not isinstance(row, list | tuple)
                or len(row) != columns
                or any(isinstance(v, bool) or not isinstance(v, int | float) for v in row)
            ):
                raise ConfigError(
                    f"{here}: row {i} must be [time, value] numbers, got {row!r}", file=self.source
                )
            out.append([float(v) for v in row])
        table = np.asarray(out, dtype=float)
        if np.any(np.diff(table[:, 0]) <= 0):
            raise ConfigError(f"{here}: times must increase strictly", file=self.source)
        return table


@dataclass(frozen=True)
class BaseLevelCurve:
    """Eustatic base level (m above the level at time 0 of a flat curve) through time.

    ``kind`` is ``"sinusoids"`` (a sum of ``amplitude_m * sin(2 pi (t / period_kyr)
    + phase)`` terms), ``"asymmetric"`` (per cycle a slow cosine rise over
    ``rise_fraction`` of the period from ``-amplitude`` to ``+amplitude``,
    then a faster cosine fall back) or ``"table"`` (linear interpolation of
    ``(time, level)`` rows, held constant beyond the ends). ``trend_m_per_kyr``
    adds a linear long-term trend to any kind.
    """

    kind: str
    components: tuple[tuple[float, float, float], ...] = ()
    amplitude_m: float = 0.0
    period_kyr: float = 1.0
    rise_fraction: float = 0.5
    phase: float = 0.0
    table: tuple[tuple[float, float], ...] = ()
    trend_m_per_kyr: float = 0.0

    def __call__(self, time_kyr: np.ndarray) -> np.ndarray:
        t = np.asarray(time_kyr, dtype=float)
        if self.kind == "sinusoids":
            level = np.zeros_like(t)
            for amplitude, period, phase in self.components:
                level = level + amplitude * np.sin(2.0 * np.pi * t / period + phase)
        elif self.kind == "asymmetric":
            tau = np.mod(t / self.period_kyr + self.phase / (2.0 * np.pi), 1.0)
            r = self.rise_fraction
            rising = tau < r
            level = np.where(
                rising,
                -self.amplitude_m * np.cos(np.pi * tau / r),
                self.amplitude_m * np.cos(np.pi * (tau - r) / (1.0 - r)),
            )
        else:
            table = np.asarray(self.table, dtype=float)
            level = np.interp(t, table[:, 0], table[:, 1])
        return level + self.trend_m_per_kyr * t


@dataclass(frozen=True)
class RateCurve:
    """A rate through time: constant, or linear interpolation of ``(time, rate)`` rows."""

    constant: float | None = None
    table: tuple[tuple[float, float], ...] = ()

    def __call__(self, time_kyr: np.ndarray) -> np.ndarray:
        t = np.asarray(time_kyr, dtype=float)
        if self.constant is not None:
            return np.full_like(t, self.constant)
        table = np.asarray(self.table, dtype=float)
        return np.interp(t, table[:, 0], table[:, 1])


@dataclass(frozen=True)
class Subsidence:
    """Subsidence rate (m/kyr, positive = down) along dip, hinge-type.

    ``rate(x) = landward + (basinward - landward) * (1 + tanh((x - hinge_km) /
    width_km)) / 2``; with ``landward == basinward`` it is constant.
    """

    landward_m_per_kyr: float
    basinward_m_per_kyr: float
    hinge_km: float = 0.0
    width_km: float = 10.0

    def __call__(self, x_km: np.ndarray) -> np.ndarray:
        x = np.asarray(x_km, dtype=float)
        step = 0.5 * (1.0 + np.tanh((x - self.hinge_km) / self.width_km))
        return self.landward_m_per_kyr + (self.basinward_m_per_kyr - self.landward_m_per_kyr) * step


@dataclass(frozen=True)
class Profile:
    """Initial shelf profile and the equilibrium depositional profile.

    Initial surface (m, relative to base level at time 0): a coastal plain
    rising landward at ``coastal_plain_gradient`` from the initial shoreline at
    ``shoreline_km``, a shelf deepening at ``shelf_gradient`` to the shelf break
    at ``shelf_break_km``, then a slope at ``slope_gradient`` (all gradients in
    m/km). Equilibrium profile translated with the shoreline: coastal plain at
    ``coastal_plain_gradient`` above base level; below it a shoreface whose
    depth approaches ``shoreface_depth_m`` with an e-folding distance of
    ``shoreface_width_km``, plus a clinoform toe deepening at ``toe_gradient``.
    """

    length_km: float
    cell_km: float
    shoreline_km: float
    coastal_plain_gradient: float
    shelf_gradient: float
    shelf_break_km: float
    slope_gradient: float
    shoreface_depth_m: float
    shoreface_width_km: float
    toe_gradient: float


@dataclass(frozen=True)
class Section:
    """One dip section: the scenario's supply scaled by ``supply_factor``, its own subsidence."""

    name: str
    supply_factor: float
    subsidence: Subsidence


@dataclass(frozen=True)
class Well:
    """A cored well at ``x_km`` along dip on a section; ``labelled``: interpreter's tracts given."""

    name: str
    section: str
    x_km: float
    labelled: bool = False


@dataclass(frozen=True)
class Noise:
    """How the described cores differ from the deposited record.

    ``facies_swap``: probability that a described bed is logged as a facies one
    rank away; ``thickness_jitter``: standard deviation of the natural log of a
    factor applied to each described thickness; ``missing_per_100m``: expected
    number of missing core intervals per 100 m of core, each of a length drawn
    uniformly from ``missing_length_m``; ``label_shift``: probability that an
    interpreter places a tract boundary one bed too high or too low.
    """

    facies_swap: float = 0.0
    thickness_jitter: float = 0.0
    missing_per_100m: float = 0.0
    missing_length_m: tuple[float, float] = (0.5, 2.0)
    label_shift: float = 0.0


@dataclass(frozen=True)
class Description:
    """How a core is described: median bed thickness (m) and its log spread; rounding (m).

    ``hiatus_sharp_kyr``: a gap in deposition at least this long makes a sharp contact.
    """

    bed_thickness_m: float = 0.5
    bed_thickness_sigma: float = 0.5
    rounding_m: float = 0.01
    hiatus_sharp_kyr: float = 2.0


@dataclass(frozen=True)
class Scenario:
    """A complete forward-model scenario (see :func:`load_scenario`)."""

    name: str
    duration_kyr: float
    step_kyr: float
    base_level: BaseLevelCurve
    supply: RateCurve
    profile: Profile
    sections: tuple[Section, ...]
    wells: tuple[Well, ...]
    scheme: FaciesScheme
    depth_bands: tuple[tuple[str, float], ...]
    mud_fraction: float = 0.3
    mud_decay_km: float = 15.0
    mud_min_depth_m: float = 8.0
    erosion_m_per_kyr: float = 1.0
    initial_tract: str = "HST"
    min_tract_kyr: float = 2.0
    noise: Noise = field(default_factory=Noise)
    description: Description = field(default_factory=Description)
    seed: int = 0
    description_text: str | None = None
    source: str | None = field(default=None, compare=False)

    def section(self, name: str) -> Section:
        return next(s for s in self.sections if s.name == name)

    def with_changes(self, **changes: Any) -> Scenario:
        """A copy with some fields replaced (e.g. for sensitivity runs)."""
        from dataclasses import replace

        return replace(self, **changes)


_TOP_KEYS = {
    "name",
    "description",
    "time",
    "base_level",
    "subsidence",
    "supply",
    "profile",
    "mud",
    "erosion",
    "facies",
    "sections",
    "wells",
    "noise",
    "core_description",
    "initial_tract",
    "seed",
}


def _base_level(r: _Reader) -> BaseLevelCurve:
    kind = r.text("kind", "sinusoids")
    trend = r.number("trend_m_per_kyr", 0.0)
    if kind == "sinusoids":
        comps = r.data.get("components")
        if not isinstance(comps, list) or not comps:
            raise ConfigError(
                f"{r.key('components')}: list at least one {{amplitude_m, period_kyr}}",
                file=r.source,
            )
        out = []
        for i, entry in enumerate(comps, start=1):
            c = _Reader(
                entry,
                f"{r.key('components')}[{i}]",
                r.source,
                {"amplitude_m", "period_kyr", "phase_deg"},
            )
            out.append(
                (
                    c.number("amplitude_m", minimum=0.0),
                    c.number("period_kyr", positive=True),
                    math.radians(c.number("phase_deg", 0.0)),
                )
            )
        return BaseLevelCurve("sinusoids", components=tuple(out), trend_m_per_kyr=trend)
    if kind == "asymmetric":
        rise = r.number("rise_fraction", 0.7)
        if not 0.0 < rise < 1.0:
            raise ConfigError(
                f"{r.key('rise_fraction')}: must lie between 0 and 1, got {rise}", file=r.source
            )
        return BaseLevelCurve(
            "asymmetric",
            amplitude_m=r.number("amplitude_m", minimum=0.0),
            period_kyr=r.number("period_kyr", positive=True),
            rise_fraction=rise,
            phase=math.radians(r.number("phase_deg", 0.0)),
            trend_m_per_kyr=trend,
        )
    if kind == "table":
        table = r.table("table")
        return BaseLevelCurve("table", table=tuple(map(tuple, table)), trend_m_per_kyr=trend)
    raise ConfigError(
        f"{r.key('kind')}: must be 'sinusoids', 'asymmetric' or 'table', got {kind!r}",
        file=r.source,
    )


_SUBSIDENCE_KEYS = {
    "rate_m_per_kyr",
    "landward_m_per_kyr",
    "basinward_m_per_kyr",
    "hinge_km",
    "width_km",
}


def _subsidence(r: _Reader) -> Subsidence:
    if r.has("rate_m_per_kyr"):
        if r.has("landward_m_per_kyr") or r.has("basinward_m_per_kyr"):
            raise ConfigError(
                f"{r.path}: give either rate_m_per_kyr or landward/basinward rates, not both",
                file=r.source,
            )
        rate = r.number("rate_m_per_kyr")
        return Subsidence(rate, rate)
    if not (r.has("landward_m_per_kyr") or r.has("basinward_m_per_kyr")):
        raise ConfigError(
            f"{r.path}: missing: give rate_m_per_kyr (constant) or landward_m_per_kyr and "
            "basinward_m_per_kyr (a hinge)",
            file=r.source,
        )
    return Subsidence(
        r.number("landward_m_per_kyr"),
        r.number("basinward_m_per_kyr"),
        r.number("hinge_km", 0.0),
        r.number("width_km", 10.0, positive=True),
    )


def _rate(r: _Reader, constant_key: str) -> RateCurve:
    if r.has(constant_key):
        return RateCurve(constant=r.number(constant_key, minimum=0.0))
    if not r.has("table"):
        raise ConfigError(
            f"{r.path}: missing: give {constant_key} (a constant rate) or table "
            "([[time, rate], ...])",
            file=r.source,
        )
    table = r.table("table")
    if np.any(table[:, 1] < 0):
        raise ConfigError(f"{r.key('table')}: rates must not be negative", file=r.source)
    return RateCurve(table=tuple(map(tuple, table)))


_TIME_KEYS = {"duration_kyr", "step_kyr", "min_tract_kyr"}
_BASE_LEVEL_KEYS = {
    "kind",
    "components",
    "amplitude_m",
    "period_kyr",
    "rise_fraction",
    "phase_deg",
    "table",
    "trend_m_per_kyr",
}
_PROFILE_KEYS = {
    "length_km",
    "cell_km",
    "shoreline_km",
    "coastal_plain_gradient",
    "shelf_gradient",
    "shelf_break_km",
    "slope_gradient",
    "shoreface_depth_m",
    "shoreface_width_km",
    "toe_gradient",
}
_NOISE_KEYS = {
    "facies_swap",
    "thickness_jitter",
    "missing_per_100m",
    "missing_length_m",
    "label_shift",
}
_DESCRIPTION_KEYS = {"bed_thickness_m", "bed_thickness_sigma", "rounding_m", "hiatus_sharp_kyr"}


def scenario_from_dict(data: Any, source: str | None = None) -> Scenario:
    """Build and validate a :class:`Scenario` from parsed YAML.

    ``source`` names the file; a relative facies-scheme path is resolved from
    the scenario file's folder first, then from the working directory.
    """
    # the blocks are read in the order of the file's documentation; a few keys
    # (mud decay and depth, erosion, min_tract_kyr) are read last, and the first
    # problem found is the one reported
    top = _Reader(data, "", source, _TOP_KEYS)
    name = top.text("name", Path(source).stem if source else "scenario")
    time = top.child("time", _TIME_KEYS)
    duration, step = _time_steps(time)
    base_level = _base_level(top.child("base_level", _BASE_LEVEL_KEYS))
    subsidence = _subsidence(top.child("subsidence", _SUBSIDENCE_KEYS))
    supply = _rate(top.child("supply", {"rate_m2_per_kyr", "table"}), "rate_m2_per_kyr")
    profile = _profile(top.child("profile", _PROFILE_KEYS))
    mud = top.child("mud", {"fraction", "decay_km", "min_depth_m"})
    mud_fraction = _mud_fraction(mud)
    erosion = top.child("erosion", {"max_rate_m_per_kyr"})
    scheme, bands = _facies(top.child("facies", {"scheme", "water_depth_m"}))
    sections = _sections(top, subsidence)
    wells = _wells(top, sections, profile)
    noise = _noise(top.child("noise", _NOISE_KEYS))
    description = _description(top.child("core_description", _DESCRIPTION_KEYS))
    seed = _seed(top)
    initial = _initial_tract(top)
    return Scenario(
        name=name,
        duration_kyr=duration,
        step_kyr=step,
        base_level=base_level,
        supply=supply,
        profile=profile,
        sections=sections,
        wells=wells,
        scheme=scheme,
        depth_bands=bands,
        mud_fraction=mud_fraction,
        mud_decay_km=mud.number("decay_km", 15.0, positive=True),
        mud_min_depth_m=mud.number("min_depth_m", 8.0, minimum=0.0),
        erosion_m_per_kyr=erosion.number("max_rate_m_per_kyr", 1.0, minimum=0.0),
        initial_tract=initial,
        min_tract_kyr=time.number("min_tract_kyr", 2.0, minimum=0.0),
        noise=noise,
        description=description,
        seed=seed,
        description_text=top.optional_text("description"),
        source=source,
    )


def _time_steps(time: _Reader) -> tuple[float, float]:
    """Read ``time.duration_kyr`` and ``time.step_kyr``; check the step count is sane."""
    duration = time.number("duration_kyr", positive=True)
    step = time.number("step_kyr", positive=True)
    if step > duration:
        raise ConfigError("time.step_kyr: longer than time.duration_kyr", file=time.source)
    if duration / step > 200_000:
        raise ConfigError(
            "time: more than 200000 time steps; use a longer step_kyr", file=time.source
        )
    return duration, step


def _profile(p: _Reader) -> Profile:
    """Read the ``profile`` block; check the cell count and the order of its positions."""
    profile = Profile(
        length_km=p.number("length_km", positive=True),
        cell_km=p.number("cell_km", 0.1, positive=True),
        shoreline_km=p.number("shoreline_km", minimum=0.0),
        coastal_plain_gradient=p.number("coastal_plain_gradient", 0.2, minimum=0.0),
        shelf_gradient=p.number("shelf_gradient", positive=True),
        shelf_break_km=p.number("shelf_break_km", positive=True),
        slope_gradient=p.number("slope_gradient", 20.0, positive=True),
        shoreface_depth_m=p.number("shoreface_depth_m", 10.0, positive=True),
        shoreface_width_km=p.number("shoreface_width_km", 2.0, positive=True),
        toe_gradient=p.number("toe_gradient", 2.0, positive=True),
    )
    if profile.length_km / profile.cell_km > 20_000:
        raise ConfigError("profile: more than 20000 cells; use a larger cell_km", file=p.source)
    if not profile.shoreline_km < profile.shelf_break_km <= profile.length_km:
        raise ConfigError("profile: need shoreline_km < shelf_break_km <= length_km", file=p.source)
    return profile


def _mud_fraction(mud: _Reader) -> float:
    """Read ``mud.fraction``, a fraction between 0 and 1 (the other mud keys are read last)."""
    fraction = mud.number("fraction", 0.3, minimum=0.0)
    if fraction > 1:
        raise ConfigError(
            f"mud.fraction: must lie between 0 and 1, got {fraction}", file=mud.source
        )
    return fraction


def _facies(fac: _Reader) -> tuple[FaciesScheme, tuple[tuple[str, float], ...]]:
    """Read the ``facies`` block: load its scheme, then check the water-depth bands.

    Every band names a code of the scheme and a number; the limits increase,
    shallowest first. Codes are returned as the scheme's own (aliases resolved).
    """
    scheme = scenario_scheme(fac, "scheme")
    bands_raw = fac.data.get("water_depth_m")
    if not isinstance(bands_raw, Mapping) or not bands_raw:
        raise ConfigError(
            "facies.water_depth_m: map each facies code to the greatest water depth (m) it "
            "occupies, shallowest first, e.g. {CP: 0, FS: 1.5, ...}",
            file=fac.source,
        )
    bands: list[tuple[str, float]] = []
    for code, limit in bands_raw.items():
        code = str(code)
        if code not in scheme:
            raise ConfigError(
                f"facies.water_depth_m: {code!r} is not a code of scheme {scheme.name!r} "
                f"(codes: {list(scheme.codes)})",
                file=fac.source,
            )
        if isinstance(limit, bool) or not isinstance(limit, int | float):
            raise ConfigError(
                f"facies.water_depth_m.{code}: must be a number, got {limit!r}", file=fac.source
            )
        bands.append((scheme.resolve(code), float(limit)))
    limits = [b[1] for b in bands]
    if any(b <= a for a, b in itertools.pairwise(limits)):
        raise ConfigError(
            "facies.water_depth_m: depth limits must increase, shallowest first", file=fac.source
        )
    return scheme, tuple(bands)


def scenario_scheme(r: _Reader, name: str, default: Path | None = None) -> FaciesScheme:
    """The facies scheme a scenario names under ``name`` (``default`` where it names
    none): a relative path beside the scenario file first, then from the working
    folder; a file in neither is refused naming the scenario and the key."""
    text = r.text(name) if r.has(name) or default is None else str(default)
    path = Path(text)
    if not path.is_absolute() and r.source is not None:
        beside = Path(r.source).parent / path
        if beside.exists():
            path = beside
    if not path.exists():
        raise ConfigError(
            f"{r.key(name)}: scheme file {text!r} not found (looked beside the scenario "
            "file and in the working folder)",
            file=r.source,
        )
    return load_scheme(path)


def _sections(top: _Reader, subsidence: Subsidence) -> tuple[Section, ...]:
    """Read ``sections`` (one section ``dip`` when absent): unique names, own subsidence or
    the scenario's."""
    sections: list[Section] = []
    raw_sections = top.data.get("sections") or [{"name": "dip"}]
    if not isinstance(raw_sections, list):
        raise ConfigError("sections: must be a list", file=top.source)
    for i, entry in enumerate(raw_sections, start=1):
        s = _Reader(entry, f"sections[{i}]", top.source, {"name", "supply_factor", "subsidence"})
        sec_name = s.text("name")
        if any(x.name == sec_name for x in sections):
            raise ConfigError(
                f"sections[{i}]: duplicate section name {sec_name!r}", file=top.source
            )
        sub = (
            _subsidence(s.child("subsidence", _SUBSIDENCE_KEYS))
            if s.has("subsidence")
            else subsidence
        )
        sections.append(Section(sec_name, s.number("supply_factor", 1.0, minimum=0.0), sub))
    return tuple(sections)


def _wells(top: _Reader, sections: tuple[Section, ...], profile: Profile) -> tuple[Well, ...]:
    """Read ``wells`` (at least one): unique names, a known section (the first by default),
    a position on the profile."""
    wells: list[Well] = []
    raw_wells = top.data.get("wells")
    if not isinstance(raw_wells, list) or not raw_wells:
        raise ConfigError("wells: list at least one well {name, x_km}", file=top.source)
    for i, entry in enumerate(raw_wells, start=1):
        w = _Reader(entry, f"wells[{i}]", top.source, {"name", "section", "x_km", "labelled"})
        well_name = w.text("name")
        if any(x.name == well_name for x in wells):
            raise ConfigError(f"wells[{i}]: duplicate well name {well_name!r}", file=top.source)
        section = w.text("section", sections[0].name)
        if not any(x.name == section for x in sections):
            raise ConfigError(
                f"wells[{i}] ({well_name}): unknown section {section!r} "
                f"(sections: {[x.name for x in sections]})",
                file=top.source,
            )
        x_km = w.number("x_km", minimum=0.0)
        if x_km > profile.length_km:
            raise ConfigError(
                f"wells[{i}] ({well_name}): x_km {x_km} lies beyond profile.length_km",
                file=top.source,
            )
        wells.append(Well(well_name, section, x_km, w.flag("labelled")))
    return tuple(wells)


def _noise(n: _Reader) -> Noise:
    """Read the ``noise`` block: the missing-length range first, then probabilities and rates."""
    missing_length = n.data.get("missing_length_m", [0.5, 2.0])
    if (
        not isinstance(missing_length, list)
        or len(missing_length) != 2
        or not all(
            isinstance(v, int | float) and not isinstance(v, bool) and v > 0 for v in missing_length
        )
        or missing_length[1] < missing_length[0]
    ):
        raise ConfigError("noise.missing_length_m: must be [shortest, longest] in m", file=n.source)
    return Noise(
        facies_swap=_probability(n, "facies_swap"),
        thickness_jitter=n.number("thickness_jitter", 0.0, minimum=0.0),
        missing_per_100m=n.number("missing_per_100m", 0.0, minimum=0.0),
        missing_length_m=(float(missing_length[0]), float(missing_length[1])),
        label_shift=_probability(n, "label_shift"),
    )


def _description(d: _Reader) -> Description:
    """Read the ``core_description`` block (bed thickness, its spread, rounding, hiatus)."""
    return Description(
        bed_thickness_m=d.number("bed_thickness_m", 0.5, positive=True),
        bed_thickness_sigma=d.number("bed_thickness_sigma", 0.5, minimum=0.0),
        rounding_m=d.number("rounding_m", 0.01, positive=True),
        hiatus_sharp_kyr=d.number("hiatus_sharp_kyr", 2.0, minimum=0.0),
    )


def _seed(top: _Reader) -> int:
    """Read ``seed``: a whole number >= 0 (0 when absent)."""
    seed = top.data.get("seed", 0)
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise ConfigError(f"seed: must be a whole number >= 0, got {seed!r}", file=top.source)
    return seed


def _initial_tract(top: _Reader) -> str:
    """Read ``initial_tract``: HST (the default) or LST."""
    initial = top.text("initial_tract", "HST")
    if initial not in ("HST", "LST"):
        raise ConfigError(
            f"initial_tract: must be 'HST' or 'LST', got {initial!r}", file=top.source
        )
    return initial


def _probability(r: _Reader, name: str, default: float = 0.0) -> float:
    value = r.number(name, default, minimum=0.0)
    if value > 1:
        raise ConfigError(
            f"{r.key(name)}: a probability must lie between 0 and 1, got {value}", file=r.source
        )
    return value


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario YAML file.

    Parameters
    ----------
    path
        The scenario file (see ``docs/simulate.md`` for its keys and units).

    Returns
    -------
    Scenario
        The validated scenario; errors raise :class:`~faciesseq.errors.ConfigError`
        naming the file and the key.
    """
    return scenario_from_dict(_read_yaml(path), source=str(path))
