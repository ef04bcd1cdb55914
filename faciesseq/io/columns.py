"""Column roles: which column of a source table holds the core, depths, facies...

Column names are matched case-insensitively, ignoring spaces, underscores,
dashes and a trailing unit (``Depth (ft)``, ``top_m``), against a list of
common variants per role. An explicit mapping (``--column ROLE=NAME`` or
``columns:`` in a YAML source file) always wins over the variants.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

from faciesseq.errors import ConfigError, InputError
from faciesseq.io.wording import COMMAND_LINE, Wording

__all__ = ["ROLES", "ColumnMatch", "match_columns", "normalise_units"]

#: Role -> accepted column-name variants (already normalised, see :func:`_key`).
ROLES: dict[str, tuple[str, ...]] = {
    "core": (
        "core",
        "coreid",
        "corename",
        "well",
        "wellname",
        "wellid",
        "borehole",
        "boreholeid",
        "hole",
        "holeid",
        "uwi",
        "site",
    ),
    "top": ("top", "topdepth", "depthtop", "from", "depthfrom", "fromdepth", "mdtop", "topmd"),
    "base": (
        "base",
        "basedepth",
        "depthbase",
        "bottom",
        "bottomdepth",
        "depthbottom",
        "btm",
        "to",
        "depthto",
        "todepth",
        "mdbase",
        "basemd",
    ),
    "depth": ("depth", "dept", "md", "measureddepth", "sampledepth", "depthmd"),
    "facies": (
        "facies",
        "faciescode",
        "faciesid",
        "lithofacies",
        "fac",
        "faciesclass",
        "corefacies",
    ),
    "grain_size": ("grainsize", "grain", "gs", "grainclass", "grainsizeclass"),
    "contact": ("contact", "contacttype", "lowercontact", "basecontact", "basalcontact"),
    "tract": ("tract", "systemstract", "systemtract", "tractlabel", "interpretedtract"),
    "lithology": ("lithology", "lith", "rocktype"),
    "units": ("units", "unit", "depthunits", "depthunit", "uom"),
}

#: Roles whose values are depths (a unit in their header name is read).
DEPTH_ROLES = ("top", "base", "depth")

_UNIT_WORDS = {
    "m": "m",
    "metre": "m",
    "metres": "m",
    "meter": "m",
    "meters": "m",
    "ft": "ft",
    "f": "ft",
    "feet": "ft",
    "foot": "ft",
    "usft": None,  # US survey foot: not the international foot; refused below
}

_UNIT_SUFFIX = re.compile(r"^(?P<name>.*?)[\s_\-]*[\(\[](?P<unit>[^\)\]]*)[\)\]]\s*$")


def normalise_units(text: object, *, where: str | None = None) -> str:
    """``"m"`` or ``"ft"`` for a unit as written (``M``, ``metres``, ``FT``, ``F``...).

    Raises :class:`InputError` for anything else (US survey feet included: the
    project converts with the international foot, 0.3048 m exactly).
    """
    key = str(text).strip().lower().rstrip(".")
    if key in _UNIT_WORDS and _UNIT_WORDS[key] is not None:
        return _UNIT_WORDS[key]
    raise InputError(f"unknown depth units {text!r}; expected m or ft", file=where)


def units_option(units: object, *, file: str | None = None) -> str | None:
    """The depth units of an option (``units=`` from Python, ``units:`` of a YAML source
    file) as ``"m"`` or ``"ft"``, written as a units column may write them (``metres``,
    ``feet``, ``FT``...); ``None`` stays ``None``; anything else a
    :class:`ConfigError` (a usage error, where a units column's is a data error)."""
    if units is None:
        return None
    try:
        return normalise_units(units)
    except InputError:
        raise ConfigError(
            f"units must be 'm' or 'ft' (or metres, feet...), got {units!r}", file=file
        ) from None


def _key(name: str) -> str:
    return re.sub(r"[^0-9a-z]+", "", name.lower())


def split_unit(name: str) -> tuple[str, str | None]:
    """``"Depth (ft)"`` -> ``("Depth", "ft")``; ``"top_m"`` -> ``("top", "m")``."""
    m = _UNIT_SUFFIX.match(name)
    if m and m.group("unit").strip().lower() in _UNIT_WORDS:
        return m.group("name"), m.group("unit").strip()
    m = re.match(r"^(?P<name>.*?)[\s_\-]+(?P<unit>m|ft|feet|metres|meters)$", name, re.I)
    if m:
        return m.group("name"), m.group("unit")
    return name, None


@dataclass(frozen=True)
class ColumnMatch:
    """The result of matching a table's columns to roles.

    Attributes
    ----------
    roles
        Role -> source column name, for the roles found.
    units
        Depth units stated in the header of a depth column (``Depth (ft)``),
        or ``None``.
    others
        Source columns with no role, kept as attributes under their own names.
    """

    roles: dict[str, str]
    units: str | None
    others: tuple[str, ...]


def match_columns(
    columns: Iterable[object],
    explicit: Mapping[str, str] | None = None,
    *,
    file: str | None = None,
    wording: Wording = COMMAND_LINE,
) -> ColumnMatch:
    """Match source columns to roles: the explicit mapping first, then the variants.

    Parameters
    ----------
    columns
        Column names of the source table, in order.
    explicit
        Role -> column name (matched case-insensitively), e.g.
        ``{"core": "Well Name", "depth": "Depth"}``.
    file
        Source file, named in error messages.
    wording
        How messages name the option mapping a column.

    Raises
    ------
    ConfigError
        An explicit role that the project does not know.
    InputError
        An explicit column that the table does not have, or two columns that
        both look like one role (name one with ``--column``).
    """
    names = [str(c) for c in columns]
    explicit = dict(explicit or {})
    roles: dict[str, str] = {}
    for role, name in explicit.items():
        if role not in ROLES:
            raise ConfigError(
                f"unknown column role {role!r}; roles are {', '.join(ROLES)}", file=file
            )
        hits = [c for c in names if c == name] or [
            c for c in names if c.strip().lower() == str(name).strip().lower()
        ]
        if not hits:
            raise InputError(
                f"column {name!r} (given for role {role}) not found; the columns are "
                f"{', '.join(repr(c) for c in names)}",
                file=file,
            )
        roles[role] = hits[0]
    taken = set(roles.values())
    for role, variants in ROLES.items():
        if role in roles:
            continue
        hits = []
        for c in names:
            if c in taken:
                continue
            base, _ = split_unit(c)
            if _key(base) in variants or _key(c) in variants:
                hits.append(c)
        if len(hits) > 1:
            raise InputError(
                f"columns {', '.join(repr(h) for h in hits)} all look like the {role} column; "
                f"name one with {wording.columns([role], quoted=True)}",
                file=file,
            )
        if hits:
            roles[role] = hits[0]
            taken.add(hits[0])
    units: str | None = None
    for role in DEPTH_ROLES:
        if role in roles:
            _, unit = split_unit(roles[role])
            if unit is not None:
                found = normalise_units(unit, where=file)
                if units is not None and found != units:
                    raise InputError(
                        f"depth columns state different units ({units} and {found})", file=file
                    )
                units = found
    others = tuple(c for c in names if c not in taken)
    return ColumnMatch(roles, units, others)
