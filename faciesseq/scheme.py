"""Facies schemes and tract models: the YAML configuration a geologist edits.

A *facies scheme* lists the facies codes used in a core database, each with a
name and a proximality ``rank`` (0 = most landward / shallow; larger = more
basinward / deep), and optionally an environment ``group``, a display
``colour``, a representative ``grain_size`` (a class number, larger is
coarser: 1 clay, 2 silt, 3 very fine sand, 4 fine, 5 medium, 6 coarse sand,
7 gravel) and ``aliases`` (raw database codes that mean this facies).

A *tract model* lists the systems tracts, their cyclic order upward
(older to younger), the tracts that may be absent (skips), the upward stacking
trend expected in each tract, and the surface named on each boundary.

Both are validated on load; every error names the file, the entry and the
problem.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from importlib import resources
from os import PathLike
from pathlib import Path
from typing import Any

import yaml

from faciesseq.errors import ConfigError

__all__ = [
    "Facies",
    "FaciesScheme",
    "Surface",
    "Tract",
    "TractModel",
    "as_scheme",
    "default_tract_model",
    "draft_scheme",
    "load_scheme",
    "load_tract_model",
]

_FACIES_KEYS = {
    "code",
    "name",
    "rank",
    "group",
    "colour",
    "grain_size",
    "aliases",
    "description",
    "cycle_base",
    "setting",
    "exposure",
}
_SCHEME_KEYS = {"name", "description", "facies", "version"}
_TRACT_KEYS = {"code", "name", "trend", "description"}
_SURFACE_KEYS = {"lower", "upper", "code", "name"}
_MODEL_KEYS = {
    "name",
    "description",
    "tracts",
    "order",
    "skips",
    "surfaces",
    "substates",
    "version",
}
TRENDS = ("deepening", "shallowing", "aggrading")
#: Most sub-states a tract may have (the transition matrix grows with the square of the
#: number of states; a handful is the useful range).
MAX_SUBSTATES = 100


def _read_yaml(path: str | Path) -> Any:
    return _read_yaml_node(path)[0]


def _read_yaml_node(path: str | Path) -> tuple[Any, yaml.Node | None]:
    """The parsed YAML file and its node tree (whose marks give the line of an entry)."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError("file not found", file=str(path)) from None
    except IsADirectoryError:
        raise ConfigError("a folder, not a YAML file", file=str(path)) from None
    except PermissionError:
        raise ConfigError("not readable (permission denied)", file=str(path)) from None
    except UnicodeDecodeError as exc:
        raise ConfigError(f"not UTF-8 text ({exc.reason})", file=str(path)) from None
    loader = yaml.SafeLoader(text)
    try:
        node = loader.get_single_node()
        return (None if node is None else loader.construct_document(node)), node
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f"line {mark.line + 1}: " if mark is not None else ""
        raise ConfigError(f"{line}not valid YAML", file=str(path)) from None
    finally:
        loader.dispose()


def _entry_lines(node: yaml.Node | None, key: str) -> tuple[int, ...]:
    """The 1-based line of each item of the list under ``key`` of a YAML mapping node
    (empty where the node holds no such list)."""
    if not isinstance(node, yaml.MappingNode):
        return ()
    for key_node, value in node.value:
        if key_node.value == key and isinstance(value, yaml.SequenceNode):
            return tuple(item.start_mark.line + 1 for item in value.value)
    return ()


def _at(lines: Sequence[int], i: int) -> str:
    """``line N: `` for entry ``i`` (1-based) where its line is known, else nothing."""
    return f"line {lines[i - 1]}: " if i <= len(lines) else ""


def _code(value: Any) -> str:
    """Codes are compared as text: ``3``, ``3.0`` and ``"3"`` are the same code."""
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    return str(value).strip()


#: Facies groups read as laid down above the shoreline when a facies has no
#: ``setting`` (common practice of facies description).
NONMARINE_GROUPS = (
    "nonmarine",
    "non-marine",
    "continental",
    "terrestrial",
    "coastal plain",
    "alluvial",
    "fluvial",
)
#: A facies name read as nonmarine where the facies has no ``setting`` (e.g. the
#: "nonmarine coarse siltstone" of Dubois et al. 2007): the word itself, in any case.
NONMARINE_NAME = re.compile(r"\bnon[- ]?marine\b", re.IGNORECASE)
SETTINGS = ("marine", "nonmarine")


@dataclass(frozen=True)
class Facies:
    """One facies of a scheme."""

    code: str
    name: str
    rank: float
    group: str | None = None
    colour: str | None = None
    grain_size: float | None = None
    aliases: tuple[str, ...] = ()
    description: str | None = None
    cycle_base: bool = False
    setting: str | None = None
    exposure: bool = False

    @property
    def nonmarine(self) -> bool | None:
        """Whether the facies was laid down above the shoreline (``None``: not said).

        From ``setting`` (``marine`` / ``nonmarine``) or, where that is not
        given, from ``exposure``, a ``group`` named by one of
        :data:`NONMARINE_GROUPS` or a name that says it (``nonmarine sandstone``,
        :data:`NONMARINE_NAME`; only that word, since a name such as "continental
        shelf mudstone" or "fluvial-dominated delta front" is marine).
        """
        if self.exposure:
            return True
        if self.setting is not None:
            return self.setting == "nonmarine"
        if self.group is not None and self.group.strip().lower() in NONMARINE_GROUPS:
            return True
        if NONMARINE_NAME.search(self.name):
            return True
        return None

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"code": self.code, "name": self.name, "rank": self.rank}
        for key in ("group", "colour", "grain_size", "description"):
            if getattr(self, key) is not None:
                out[key] = getattr(self, key)
        if self.aliases:
            out["aliases"] = list(self.aliases)
        if self.cycle_base:
            out["cycle_base"] = True
        if self.setting is not None:
            out["setting"] = self.setting
        if self.exposure:
            out["exposure"] = True
        return out


@dataclass(frozen=True)
class FaciesScheme:
    """An ordered set of facies with ranks, colours and aliases.

    Use :func:`load_scheme` to read one from YAML, or :meth:`from_dict`.
    """

    facies: tuple[Facies, ...]
    name: str = "unnamed scheme"
    description: str | None = None
    source: str | None = field(default=None, compare=False)
    _lookup: dict[str, str] = field(default_factory=dict, repr=False, compare=False)
    #: Whether a reader takes codes outside the scheme as they are (aliases still
    #: resolved) instead of refusing them: see :meth:`admitting_other_codes`.
    admits_other_codes: bool = field(default=False, compare=False)

    def __post_init__(self) -> None:
        lookup: dict[str, str] = {}
        for f in self.facies:
            lookup[f.code] = f.code
        for f in self.facies:
            for alias in f.aliases:
                lookup.setdefault(alias, f.code)
        object.__setattr__(self, "_lookup", lookup)

    # -- construction -----------------------------------------------------
    @classmethod
    def from_dict(
        cls, data: Any, source: str | None = None, *, lines: Sequence[int] = ()
    ) -> FaciesScheme:
        """Build and validate a scheme from parsed YAML (``source`` names the file,
        ``lines`` the line of each facies entry, named in its errors)."""
        if not isinstance(data, Mapping):
            raise ConfigError("a facies scheme must be a mapping with a 'facies' list", file=source)
        _check_keys(data, _SCHEME_KEYS, "", source)
        entries = data.get("facies")
        if not isinstance(entries, list) or not entries:
            raise ConfigError("'facies' must be a non-empty list of facies entries", file=source)
        seen: dict[str, int] = {}  # code -> its entry number
        facies = [
            _facies_entry(entry, i, seen, source, _at(lines, i))
            for i, entry in enumerate(entries, 1)
        ]
        _check_aliases(facies, seen, source, lines)
        return cls(
            facies=tuple(facies),
            name=str(data.get("name", "unnamed scheme")),
            description=data.get("description"),
            source=source,
        )

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"name": self.name}
        if self.description:
            out["description"] = self.description
        out["facies"] = [f.to_dict() for f in self.facies]
        return out

    def admitting_other_codes(self) -> FaciesScheme:
        """This scheme for reading cores to decode: its aliases resolved, a code
        outside it read as it is (a facies the model never saw, which ``decode`` warns
        of in one line), not refused as the reading of a scheme's own data would."""
        return replace(self, admits_other_codes=True)

    # -- queries ------------------------------------------------------------
    @property
    def codes(self) -> tuple[str, ...]:
        """Codes in scheme order."""
        return tuple(f.code for f in self.facies)

    @property
    def codes_by_rank(self) -> tuple[str, ...]:
        """Codes from most landward/shallow to most basinward/deep (stable on ties)."""
        return tuple(f.code for f in sorted(self.facies, key=lambda f: f.rank))

    def __contains__(self, code: object) -> bool:
        return code in self._lookup

    def __len__(self) -> int:
        return len(self.facies)

    def __getitem__(self, code: str) -> Facies:
        code = self._lookup[code]
        return next(f for f in self.facies if f.code == code)

    def resolve(self, raw: Any) -> str | None:
        """The scheme code for a raw database code (via aliases), or ``None``."""
        return self._lookup.get(_code(raw))

    def rank(self, code: str) -> float:
        return self[code].rank

    @property
    def tells_settings(self) -> bool:
        """Whether the scheme tells nonmarine facies from marine ones: some facies
        are nonmarine (:attr:`Facies.nonmarine`), and not all."""
        return {bool(f.nonmarine) for f in self.facies} == {True, False}

    def settings(self, codes: Iterable[str]) -> Any:
        """``(n,)`` 1.0 where a code's facies was laid down above the shoreline, 0.0
        below it, ``NaN`` for a code not in the scheme; ``None`` where the scheme
        does not tell nonmarine facies from marine ones (:attr:`tells_settings`).
        Once some facies are nonmarine, the others are marine."""
        import numpy as np

        if not self.tells_settings:
            return None
        return np.array(
            [float(bool(self[c].nonmarine)) if c in self else np.nan for c in codes], dtype=float
        )

    @property
    def marks_exposure(self) -> bool:
        """Whether some facies are marked as the record of subaerial exposure
        (:attr:`Facies.exposure`) in a scheme that tells settings."""
        return self.tells_settings and any(f.exposure for f in self.facies)

    def exposures(self, codes: Iterable[str]) -> Any:
        """``(n,)`` 1.0 where a code's facies records subaerial exposure, 0.0 where it
        is marine, ``NaN`` for another nonmarine facies or a code not in the scheme;
        ``None`` where the scheme marks no exposure facies (:attr:`marks_exposure`)."""
        import numpy as np

        if not self.marks_exposure:
            return None

        def value(code: str) -> float:
            if code not in self:
                return np.nan
            f = self[code]
            return 1.0 if f.exposure else np.nan if f.nonmarine else 0.0

        return np.array([value(c) for c in codes], dtype=float)

    def cycle_bases(self, codes: Iterable[str]) -> Any:
        """``(n,)`` True where a code's facies is marked to start a cycle."""
        import numpy as np

        return np.array([c in self and self[c].cycle_base for c in codes], dtype=bool)

    def ranks(self, codes: Iterable[str] | None = None) -> dict[str, float]:
        codes = self.codes if codes is None else codes
        return {c: self[c].rank for c in codes}


def _check_keys(
    data: Mapping, allowed: set[str], here: str, source: str | None, expected: str = "some of "
) -> None:
    """Refuse keys of a mapping that are not in ``allowed`` (``here`` names the mapping)."""
    unknown = set(data) - allowed
    if unknown:
        raise ConfigError(
            f"{here + ': ' if here else ''}unknown key(s) {sorted(map(str, unknown))}; "
            f"expected {expected}{sorted(allowed)}",
            file=source,
        )


def _check_present(entry: Mapping, keys: tuple[str, ...], here: str, source: str | None) -> None:
    """Refuse an entry where one of ``keys`` is missing or empty (the first such is named)."""
    for key in keys:
        if not entry.get(key):
            raise ConfigError(f"{here}: missing {key!r}", file=source)


def _facies_entry(
    entry: Any, i: int, seen: dict[str, int], source: str | None, at: str = ""
) -> Facies:
    """Read facies entry ``i``: its keys, then code, name, rank, grain size, colour, the
    cycle base, setting and exposure flags and the aliases, in that order. ``seen``
    (code -> entry number) gets the code; ``at`` (``line N: ``) leads every error."""
    here = f"{at}facies entry {i}"
    if not isinstance(entry, Mapping):
        raise ConfigError(f"{here}: must be a mapping with code, name and rank", file=source)
    _check_keys(entry, _FACIES_KEYS, here, source)
    code = _facies_code(entry, i, seen, source, at)
    here = f"{at}facies entry {i} (code {code!r})"
    name = entry.get("name")
    if not name:
        raise ConfigError(f"{here}: missing 'name'", file=source)
    rank = _facies_rank(entry.get("rank"), here, source)
    grain = entry.get("grain_size")
    if grain is not None and (isinstance(grain, bool) or not isinstance(grain, int | float)):
        raise ConfigError(f"{here}: 'grain_size' must be a number, got {grain!r}", file=source)
    colour = _facies_colour(entry.get("colour"), here, source)
    cycle_base, setting, exposure = _facies_setting(entry, here, source)
    raw_aliases = entry.get("aliases") or []
    if not isinstance(raw_aliases, list):
        raw_aliases = [raw_aliases]
    aliases = tuple(_code(a) for a in raw_aliases)
    return Facies(
        code=code,
        name=str(name),
        rank=float(rank),
        group=None if entry.get("group") is None else str(entry["group"]),
        colour=colour,
        grain_size=None if grain is None else float(grain),
        aliases=aliases,
        description=entry.get("description"),
        cycle_base=cycle_base,
        setting=setting,
        exposure=exposure,
    )


def _facies_code(
    entry: Mapping, i: int, seen: dict[str, int], source: str | None, at: str = ""
) -> str:
    """The code of facies entry ``i``: present, not a YAML yes/no, not the code of an
    earlier entry; recorded in ``seen``."""
    if entry.get("code") is None:
        raise ConfigError(f"{at}facies entry {i}: missing 'code'", file=source)
    if isinstance(entry["code"], bool):
        raise ConfigError(
            f"{at}facies entry {i}: code {entry['code']!r} was read as a yes/no value; put the "
            'code in quotes (e.g. code: "OFF")',
            file=source,
        )
    code = _code(entry["code"])
    if code in seen:
        raise ConfigError(
            f"{at}facies entry {i} (code {code!r}): duplicate code, already used by facies entry "
            f"{seen[code]}",
            file=source,
        )
    seen[code] = i
    return code


def _facies_rank(rank: Any, here: str, source: str | None) -> float:
    """The rank (proximality) of a facies entry: present, a finite number."""
    if rank is None:
        raise ConfigError(
            f"{here}: missing 'rank' (proximality: 0 = most landward/shallow, "
            "larger = more basinward/deep)",
            file=source,
        )
    if isinstance(rank, bool) or not isinstance(rank, int | float):
        raise ConfigError(f"{here}: 'rank' must be a number, got {rank!r}", file=source)
    if not math.isfinite(rank):
        raise ConfigError(f"{here}: 'rank' must be a finite number, got {rank!r}", file=source)
    return rank


def _facies_colour(colour: Any, here: str, source: str | None) -> str | None:
    """The colour of a facies entry as text: ``#rgb`` or ``#rrggbb`` hex, or ``None``."""
    if colour is None:
        return None
    colour = str(colour)
    digits = set(colour[1:].lower())  # '#zzzzzz' would break every figure
    if not (colour.startswith("#") and len(colour) in (4, 7) and digits <= set("0123456789abcdef")):
        raise ConfigError(
            f"{here}: 'colour' must be a hex colour such as '#3b6e8f', got {colour!r}",
            file=source,
        )
    return colour


def _facies_setting(entry: Mapping, here: str, source: str | None) -> tuple[bool, Any, bool]:
    """``cycle_base``, ``setting`` and ``exposure`` of a facies entry: true/false, one of
    :data:`SETTINGS`, true/false; an exposure facies cannot be marine."""
    cycle_base = entry.get("cycle_base", False)
    if not isinstance(cycle_base, bool):
        raise ConfigError(
            f"{here}: 'cycle_base' must be true or false, got {cycle_base!r}", file=source
        )
    setting = entry.get("setting")
    if setting is not None and setting not in SETTINGS:
        raise ConfigError(
            f"{here}: 'setting' must be one of {', '.join(SETTINGS)}, got {setting!r}",
            file=source,
        )
    exposure = entry.get("exposure", False)
    if not isinstance(exposure, bool):
        raise ConfigError(
            f"{here}: 'exposure' must be true or false, got {exposure!r}", file=source
        )
    if exposure and setting == "marine":
        raise ConfigError(
            f"{here}: 'exposure: true' records the site above base level, so the "
            "facies cannot have 'setting: marine'; give 'setting: nonmarine' or none",
            file=source,
        )
    return cycle_base, setting, exposure


def _check_aliases(
    facies: list[Facies], seen: dict[str, int], source: str | None, lines: Sequence[int] = ()
) -> None:
    """Refuse an alias that is another facies' code or an alias of another facies."""
    owner: dict[str, str] = {}
    for f in facies:
        at = _at(lines, seen[f.code])
        for alias in f.aliases:
            if alias in seen and alias != f.code:
                raise ConfigError(
                    f"{at}facies {f.code!r}: alias {alias!r} clashes with the code of "
                    f"facies entry {seen[alias]}",
                    file=source,
                )
            if alias in owner and owner[alias] != f.code:
                raise ConfigError(
                    f"{at}facies {f.code!r}: alias {alias!r} is already an alias of "
                    f"facies {owner[alias]!r}",
                    file=source,
                )
            owner[alias] = f.code


@dataclass(frozen=True)
class Tract:
    """A systems tract (trade term) and its expected upward stacking trend."""

    code: str
    name: str
    trend: str
    description: str | None = None


@dataclass(frozen=True)
class Surface:
    """The surface named on the boundary from ``lower`` (older) to ``upper`` tract."""

    lower: str
    upper: str
    code: str
    name: str


@dataclass(frozen=True)
class TractModel:
    """Systems tracts, their cyclic order upward, allowed skips and surfaces.

    ``order`` is the cyclic succession upward (older to younger), e.g.
    HST -> FSST -> LST -> TST -> HST. ``skips`` are tracts that may be absent:
    skipping tract X allows the boundary from the tract before X straight to
    the tract after X (skips in a row chain: with every tract listed, any tract
    may follow any other, and only fitted transition priors favour the order).
    ``substates`` is the number of left-to-right sub-states per tract used by
    the hidden Markov model (1 = a plain state).
    """

    tracts: tuple[Tract, ...]
    order: tuple[str, ...]
    skips: tuple[str, ...] = ()
    surfaces: tuple[Surface, ...] = ()
    substates: Mapping[str, int] = field(default_factory=dict)
    name: str = "tract model"
    source: str | None = field(default=None, compare=False)

    @property
    def codes(self) -> tuple[str, ...]:
        return self.order

    def tract(self, code: str) -> Tract:
        return next(t for t in self.tracts if t.code == code)

    def successors(self, code: str) -> tuple[str, ...]:
        """Tracts that may follow ``code`` upward (not counting itself)."""
        order = self.order
        n = len(order)
        i = order.index(code)
        out = [order[(i + 1) % n]]
        step = 1
        # Each skipped tract in a row lets the boundary jump one further.
        while order[(i + step) % n] in self.skips and step < n - 1:
            step += 1
            nxt = order[(i + step) % n]
            if nxt != code:
                out.append(nxt)
        return tuple(out)

    def allowed(self) -> list[list[bool]]:
        """Boolean matrix (rows = lower tract, columns = upper) in ``order``."""
        idx = {c: k for k, c in enumerate(self.order)}
        n = len(self.order)
        out = [[False] * n for _ in range(n)]
        for c in self.order:
            out[idx[c]][idx[c]] = True
            for s in self.successors(c):
                out[idx[c]][idx[s]] = True
        return out

    def with_allowed_surfaces(self) -> TractModel:
        """This graph keeping only the surfaces of boundaries it allows between its
        own tracts (a skip or a left-out tract makes others impossible)."""
        allowed = self.allowed()
        index = {c: i for i, c in enumerate(self.order)}
        kept = tuple(
            sf
            for sf in self.surfaces
            if sf.lower in index and sf.upper in index and allowed[index[sf.lower]][index[sf.upper]]
        )
        return replace(self, surfaces=kept)

    def surface(self, lower: str, upper: str) -> Surface | None:
        for s in self.surfaces:
            if s.lower == lower and s.upper == upper:
                return s
        return None

    def n_substates(self, code: str) -> int:
        return int(self.substates.get(code, 1))

    @classmethod
    def from_dict(cls, data: Any, source: str | None = None) -> TractModel:
        """Build and validate a tract model from parsed YAML."""
        if not isinstance(data, Mapping):
            raise ConfigError(
                "a tract model must be a mapping with 'tracts' and 'order'", file=source
            )
        _check_keys(data, _MODEL_KEYS, "", source)
        tracts = _tracts(data.get("tracts"), source)
        codes = [t.code for t in tracts]
        order = _tract_order(data.get("order", codes), codes, source)
        skips = _skips(data.get("skips"), codes, source)
        substates = _substates(data.get("substates"), codes, source)
        model = cls(
            tuple(tracts),
            tuple(order),
            tuple(skips),
            (),
            substates,
            str(data.get("name", "tract model")),
            source,
        )
        surfaces = _surfaces(data.get("surfaces") or [], model, source)
        return cls(
            tuple(tracts),
            tuple(order),
            tuple(skips),
            tuple(surfaces),
            substates,
            model.name,
            source,
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "tracts": [
                {"code": t.code, "name": t.name, "trend": t.trend}
                | ({"description": t.description} if t.description else {})
                for t in self.tracts
            ],
            "order": list(self.order),
            "skips": list(self.skips),
            "surfaces": [
                {"lower": s.lower, "upper": s.upper, "code": s.code, "name": s.name}
                for s in self.surfaces
            ],
            "substates": dict(self.substates),
        }


def _tracts(entries: Any, source: str | None) -> list[Tract]:
    """Read the ``tracts`` list: at least two entries, each a mapping of known keys with a
    code, name and trend (one of :data:`TRENDS`), codes not repeated."""
    if not isinstance(entries, list) or len(entries) < 2:
        raise ConfigError("'tracts' must list at least two tracts", file=source)
    tracts: list[Tract] = []
    for i, entry in enumerate(entries, start=1):
        here = f"tract entry {i}"
        if not isinstance(entry, Mapping):
            raise ConfigError(f"{here}: must be a mapping with code, name, trend", file=source)
        _check_keys(entry, _TRACT_KEYS, here, source)
        _check_present(entry, ("code", "name", "trend"), here, source)
        if entry["trend"] not in TRENDS:
            raise ConfigError(
                f"{here} ({entry['code']}): trend must be one of {list(TRENDS)}, "
                f"got {entry['trend']!r}",
                file=source,
            )
        code = str(entry["code"])
        if any(t.code == code for t in tracts):
            raise ConfigError(f"{here}: duplicate tract code {code!r}", file=source)
        tracts.append(
            Tract(code, str(entry["name"]), str(entry["trend"]), entry.get("description"))
        )
    return tracts


def _tract_order(order: Any, codes: list[str], source: str | None) -> list[str]:
    """Read ``order``: every tract code exactly once (the tracts' own order by default)."""
    if not isinstance(order, list) or sorted(map(str, order)) != sorted(codes):
        raise ConfigError(
            f"'order' must list every tract exactly once (tracts: {codes}), got {order!r}",
            file=source,
        )
    return [str(o) for o in order]


def _skips(raw: Any, codes: list[str], source: str | None) -> list[str]:
    """Read ``skips``: a list of known tract codes, none listed twice."""
    if raw is not None and not isinstance(raw, list | tuple):
        raise ConfigError(f"skips: a list of tract codes expected, got {raw!r}", file=source)
    skips = [str(s) for s in (raw or [])]
    for s in skips:
        if s not in codes:
            raise ConfigError(f"skips: unknown tract {s!r} (tracts: {codes})", file=source)
    if len(set(skips)) != len(skips):
        raise ConfigError(f"skips: a tract is listed twice ({skips})", file=source)
    return skips


def _substates(raw: Any, codes: list[str], source: str | None) -> dict[str, int]:
    """Read ``substates``: one whole number for every tract, or a mapping tract -> number,
    each from 1 to :data:`MAX_SUBSTATES`."""
    if raw is None:
        raw = {}
    if isinstance(raw, int) and not isinstance(raw, bool):
        raw = {c: raw for c in codes}
    if not isinstance(raw, Mapping):
        raise ConfigError(
            "'substates' must be a whole number or a mapping tract -> number", file=source
        )
    substates: dict[str, int] = {}
    for c, n in raw.items():
        if c not in codes:
            raise ConfigError(f"substates: unknown tract {c!r}", file=source)
        if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= MAX_SUBSTATES:
            raise ConfigError(
                f"substates: {c}: must be a whole number from 1 to {MAX_SUBSTATES}, got {n!r}",
                file=source,
            )
        substates[str(c)] = n
    return substates


def _surfaces(entries: Any, model: TractModel, source: str | None) -> list[Surface]:
    """Read the ``surfaces`` list: each a mapping of known keys with lower, upper, code and
    name, on a boundary of known tracts that the order and skips allow, named once."""
    if not isinstance(entries, list | tuple):
        raise ConfigError(f"surfaces: a list of entries expected, got {entries!r}", file=source)
    codes = [t.code for t in model.tracts]
    allowed = model.allowed()
    idx = {c: k for k, c in enumerate(model.order)}
    surfaces: list[Surface] = []
    for i, entry in enumerate(entries, start=1):
        here = f"surface entry {i}"
        if not isinstance(entry, Mapping):
            raise ConfigError(
                f"{here}: must be a mapping with lower, upper, code, name", file=source
            )
        _check_keys(entry, _SURFACE_KEYS, here, source, expected="")
        _check_present(entry, ("lower", "upper", "code", "name"), here, source)
        lo, up = str(entry["lower"]), str(entry["upper"])
        for t in (lo, up):
            if t not in codes:
                raise ConfigError(f"{here}: unknown tract {t!r} (tracts: {codes})", file=source)
        if lo == up or not allowed[idx[lo]][idx[up]]:
            raise ConfigError(
                f"{here}: {lo} -> {up} is not a boundary the tract order and skips allow",
                file=source,
            )
        if any(s.lower == lo and s.upper == up for s in surfaces):
            raise ConfigError(f"{here}: a surface for {lo} -> {up} is already named", file=source)
        surfaces.append(Surface(lo, up, str(entry["code"]), str(entry["name"])))
    return surfaces


def load_scheme(path: str | Path) -> FaciesScheme:
    """Read and validate a facies scheme YAML file (errors name the entry's line)."""
    data, node = _read_yaml_node(path)
    return FaciesScheme.from_dict(data, source=str(path), lines=_entry_lines(node, "facies"))


def as_scheme(scheme: FaciesScheme | str | PathLike | None) -> FaciesScheme | None:
    """``scheme`` as a :class:`FaciesScheme`: as given, or read from the path of its
    YAML file (:func:`load_scheme`, as :func:`faciesseq.io.read_cores` reads it);
    ``None`` stays ``None``. Every Python entry point that takes a scheme takes it
    through here.

    Raises
    ------
    TypeError
        For anything else.
    """
    if scheme is None or isinstance(scheme, FaciesScheme):
        return scheme
    if isinstance(scheme, str | PathLike):
        return load_scheme(scheme)
    raise TypeError(
        f"scheme must be a FaciesScheme, the path of a scheme YAML file or None, got "
        f"{type(scheme).__name__}: load one with faciesseq.scheme.load_scheme(path)"
    )


def load_tract_model(path: str | Path) -> TractModel:
    """Read and validate a tract-model YAML file."""
    return TractModel.from_dict(_read_yaml(path), source=str(path))


def default_tract_model() -> TractModel:
    """The default four-tract model shipped with the package (``data/tracts.yaml``)."""
    text = resources.files("faciesseq").joinpath("data/tracts.yaml").read_text(encoding="utf-8")
    return TractModel.from_dict(yaml.safe_load(text), source="faciesseq:data/tracts.yaml")


def permissive_tract_model() -> TractModel:
    """The four tracts with every boundary allowed (``data/tracts-permissive.yaml``):
    any tract may be missing at a well. The simulators name their true surfaces
    with it; a fit uses it only when asked (``--tracts``)."""
    path = "data/tracts-permissive.yaml"
    text = resources.files("faciesseq").joinpath(path).read_text(encoding="utf-8")
    return TractModel.from_dict(yaml.safe_load(text), source=f"faciesseq:{path}")


def draft_scheme(
    codes: Iterable[Any],
    name: str = "draft scheme",
    suggested: Mapping[str, int] | None = None,
    fill: bool = False,
) -> str:
    """A starting facies scheme (YAML text) listing ``codes``, ranks left to fill in.

    The ranks are written as ``null`` with a ``TODO`` comment so that loading
    the draft fails until a geologist has given every facies its rank. With
    ``suggested`` ranks (:func:`faciesseq.markov.seriation.suggest_ranks`) the facies
    are listed in that order and each comment gives its suggestion; with ``fill``
    the suggestions are written as the ranks, each marked to be checked.
    """
    suggested = {str(k): int(v) for k, v in (suggested or {}).items()}
    unique = sorted(
        {_code(c) for c in codes},
        key=lambda c: (c not in suggested, suggested.get(c, 0), len(c), c),
    )
    filled = fill and bool(suggested)
    lines = [
        f"# {name}: written by `faciesseq scheme draft` from the codes found in the data.",
        "# Fill in every 'rank' (proximality / relative water depth: 0 = most landward",
        "# or shallow, larger = more basinward or deep) and a 'name' a reader understands.",
        "# The scheme does not load until every rank is filled in.",
        f"name: {_yaml_scalar(name)}",
        "facies:",
    ]
    if filled:
        lines[1:4] = [
            "# The ranks were suggested from the upward transitions of the data (Walther's",
            "# law; faciesseq.markov.seriation): check every one (0 = most landward or",
            "# shallow, larger = more basinward or deep) and give each a 'name'.",
        ]
    lines[4:4] = [
        "# Every field a facies can hold is listed; the optional ones (group, colour,",
        "# grain_size, aliases, description, cycle_base, setting, exposure) may be filled in",
        "# or left as they are.",
    ]
    for code in unique:
        lines += [
            f"  - code: {_yaml_scalar(code)}  # the code as written in the data",
            f"    name: {_yaml_scalar(f'facies {code}')}  # a name a reader understands",
            _draft_rank(suggested.get(code), filled),
            "    group: null  # optional: facies association, e.g. shoreface",
            "    colour: null  # optional: hex colour of strip logs, e.g. '#c9a227'",
            "    grain_size: null  # optional: class number (1 clay, 2 silt, 3-6.5 sand, 7 gravel)",
            "    aliases: []  # optional: other spellings of this code in the data",
            "    description: null  # optional: what the geologist sees",
            "    cycle_base: false  # optional: true if a cycle starts at its base (e.g. a lag)",
            "    setting: null  # optional: marine or nonmarine (laid down above the shoreline)",
            "    exposure: false  # optional: true if it records the site's subaerial exposure",
        ]
    return "\n".join(lines) + "\n"


def _yaml_scalar(text: str) -> str:
    """``text`` as one YAML scalar, quoted where YAML needs it (``NA: x``, ``#3``), its
    characters as written (``grès``, ``砂岩``), not escaped."""
    return yaml.safe_dump(text, allow_unicode=True, width=10**6).strip().removesuffix("...").strip()


def _draft_rank(suggestion: int | None, fill: bool) -> str:
    """The rank line of one facies of :func:`draft_scheme`."""
    if suggestion is None:
        return "    rank: null  # TODO: proximality rank (0 = most landward/shallow)"
    if fill:
        return f"    rank: {suggestion}  # suggested from the transitions: check it"
    return (
        "    rank: null  # TODO: proximality rank (0 = most landward/shallow); "
        f"suggested from the transitions: {suggestion}"
    )
