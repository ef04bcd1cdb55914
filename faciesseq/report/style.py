"""The project's figure style: tract and surface palettes, fonts, saving.

Every figure of the project takes its tract and surface colours from here, so
a tract has the same colour in a strip log, a heat map label and the tract
graph. Figures are built on :class:`matplotlib.figure.Figure` directly (never
``pyplot``), so drawing needs no screen and keeps no global state.

Sizes are in inches for print: a full page-width figure is
:data:`PAGE_WIDTH` wide, and fonts are 8-9 pt, readable when printed.
"""

from __future__ import annotations

import contextlib
import functools
import hashlib
import io
import os
import re
import warnings
from collections.abc import Iterator, Sequence
from pathlib import Path

import matplotlib as mpl
import numpy as np
from matplotlib.figure import Figure

from faciesseq._output import write_file
from faciesseq.errors import ConfigError

__all__ = [
    "FIGURE_SUFFIXES",
    "HELD_NOTE",
    "PAGE_WIDTH",
    "SURFACE_COLOURS",
    "TRACT_COLOURS",
    "check_figure_path",
    "facies_colour",
    "facies_colours",
    "figure_style",
    "held_ink",
    "missing_glyphs_once",
    "new_figure",
    "save_figure",
    "surface_colour",
    "tract_colour",
]

#: Printable width of a portrait A4 / letter page with margins (inches).
PAGE_WIDTH = 7.0

#: The project's own systems-tract palette (chosen for this project; readable in
#: grey-scale print as four distinct lightness steps).
TRACT_COLOURS: dict[str, str] = {
    "HST": "#2e6f62",  # dark teal: highstand
    "FSST": "#b84a3a",  # brick: falling stage
    "LST": "#e0a84a",  # ochre: lowstand
    "TST": "#7d9fd0",  # light slate blue: transgressive
}
# Tracts a user adds in their own tract model get these, in order.
_TRACT_EXTRA = ("#8d6a9f", "#9aa65a", "#5c5c5c", "#c97fa0", "#4f8fa8")

#: The project's own surface palette (lines and markers). Surface lines are drawn
#: over tract colours (sections, strip logs), so each surface colour, extras included,
#: lies at least 28 CIE76 units (20 CIEDE2000) from every tract colour, extras
#: included, and 40 from the others (a crimson SB once vanished over the FSST brick).
SURFACE_COLOURS: dict[str, str] = {
    "SB": "#880033",  # dark wine: sequence boundary
    "MFS": "#1f4e9c",  # deep blue: maximum flooding surface
    "MRS": "#118822",  # leaf green: maximum regressive surface
    "BSFR": "#ff6600",  # vivid orange: basal surface of forced regression
    "LHB": "#554411",  # dark olive-brown: lowstand-highstand boundary
}
_SURFACE_EXTRA = ("#00bb99", "#7700ff", "#ff00ff")

#: Font and line settings used for every figure (rcParams keys).
STYLE: dict[str, object] = {
    "font.size": 8,
    "axes.titlesize": 9,
    "axes.labelsize": 8,
    "xtick.labelsize": 7,
    "ytick.labelsize": 7,
    "legend.fontsize": 7,
    "legend.title_fontsize": 7.5,
    "figure.titlesize": 10,
    "axes.linewidth": 0.6,
    "lines.linewidth": 1.0,
    "savefig.dpi": 200,
    "figure.dpi": 100,
    "pdf.fonttype": 42,
    "svg.fonttype": "none",
    "axes.spines.top": False,
    "axes.spines.right": False,
}

#: zlib level of every PNG written (matplotlib's default through Pillow is 6): the
#: demo's strip logs encode in 0.035 s instead of 0.077 s each, files 16 % larger
#: (measured on a 1120 x 1876 strip log, 2026-12-03).
PNG_COMPRESSION = {"compress_level": 1}


def savefig_options(fmt: str) -> dict[str, object]:
    """Keyword arguments of ``savefig`` that depend on the format only."""
    return {"pil_kwargs": PNG_COMPRESSION} if fmt == "png" else {}


def tract_colour(code: str, tracts: Sequence[str] = ()) -> str:
    """Colour of tract ``code``; unknown tracts get extras by their place in ``tracts``."""
    if code in TRACT_COLOURS:
        return TRACT_COLOURS[code]
    extras = [t for t in tracts if t not in TRACT_COLOURS]
    k = extras.index(code) if code in extras else sum(map(ord, code))
    return _TRACT_EXTRA[k % len(_TRACT_EXTRA)]


#: What the hatching of a bed held at the geologist's label means (``decode
#: --keep-labels``), in the strip logs and the view: its tract and probability are the
#: label's, not the model's.
HELD_NOTE = "hatched: held at geologist's label"
#: The two inks of that hatching: white over a dark tract colour, the page's ink over a
#: light one (as the tract column writes its names).
_HELD_INKS = ("#ffffff", "#1d2327")


def _luminance(colour: str) -> float:
    """Relative luminance of a ``#rrggbb`` colour (WCAG 2.1, after sRGB IEC 61966-2-1)."""
    rgb = np.array([int(colour[k : k + 2], 16) for k in (1, 3, 5)]) / 255.0
    linear = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    return float(linear @ [0.2126, 0.7152, 0.0722])


def held_ink(colour: str) -> str:
    """The ink of the held hatching over a tract drawn in ``colour``: of white and the
    page's ink, the one of higher contrast ratio with it (WCAG 2.1, "Web Content
    Accessibility Guidelines", contrast ratio (L1 + 0.05) / (L2 + 0.05))."""
    lum = _luminance(colour)
    light, dark = (_luminance(ink) for ink in _HELD_INKS)
    white_ratio = (light + 0.05) / (lum + 0.05)
    ink_ratio = (lum + 0.05) / (dark + 0.05)
    return _HELD_INKS[0] if white_ratio >= ink_ratio else _HELD_INKS[1]


def surface_colour(code: str, surfaces: Sequence[str] = ()) -> str:
    """Colour of surface ``code``; unknown surfaces get extras by their place in ``surfaces``."""
    if code in SURFACE_COLOURS:
        return SURFACE_COLOURS[code]
    extras = [s for s in surfaces if s not in SURFACE_COLOURS]
    k = extras.index(code) if code in extras else sum(map(ord, code))
    return _SURFACE_EXTRA[k % len(_SURFACE_EXTRA)]


#: The project's own facies ramp, landward to basinward (position 0 to 1): soil
#: browns, beach and shoreface sands, then grey-greens darkening into the blue-grey
#: of the deepest muds, so that a darker, bluer box reads as deeper water.
FACIES_RAMP: tuple[tuple[float, str], ...] = (
    (0.0, "#6e5434"),  # umber: soils, coal-bearing plains
    (0.12, "#9a7b45"),  # ochre-brown: coastal and delta plains
    (0.26, "#e3c566"),  # straw: beach, foreshore
    (0.40, "#d3b679"),  # buff sand: upper shoreface
    (0.52, "#b9b58f"),  # khaki: lower shoreface
    (0.66, "#8da58f"),  # sage: offshore transition
    (0.82, "#5d7f84"),  # slate teal: offshore mud
    (1.0, "#34445c"),  # dark blue-grey: outer shelf, basin
)
#: Nonmarine facies of a scheme that tells settings span this part of the ramp, the
#: marine ones the rest.
_NONMARINE_SPAN = (0.0, 0.2)
_MARINE_SPAN = (0.24, 1.0)

#: Words of a facies name and where they place it on :data:`FACIES_RAMP`, read where
#: no scheme gives a rank (common usage of the trade; the first listed word found
#: wins, so "lower shoreface" is read before "shoreface" and "offshore transition"
#: before "offshore").
FACIES_WORDS: tuple[tuple[str, float], ...] = (
    ("coal", 0.0),
    ("paleosol", 0.02),
    ("palaeosol", 0.02),
    ("soil", 0.03),
    ("alluvial", 0.05),
    ("fluvial", 0.06),
    ("channel", 0.07),
    ("floodplain", 0.08),
    ("flood plain", 0.08),
    ("swamp", 0.09),
    ("marsh", 0.1),
    ("coastal plain", 0.1),
    ("delta plain", 0.11),
    ("nonmarine", 0.1),
    ("lagoon", 0.16),
    ("estuar", 0.17),
    ("tidal flat", 0.18),
    ("beach", 0.25),
    ("foreshore", 0.26),
    ("upper shoreface", 0.38),
    ("middle shoreface", 0.44),
    ("lower shoreface", 0.52),
    ("shoreface", 0.45),
    ("mouth bar", 0.42),
    ("delta front", 0.5),
    ("prodelta", 0.72),
    ("offshore transition", 0.64),
    ("transition", 0.64),
    ("outer shelf", 0.9),
    ("offshore", 0.8),
    ("shelf", 0.84),
    ("slope", 0.92),
    ("turbidite", 0.95),
    ("basin", 0.97),
    ("pelagic", 1.0),
    ("deep", 0.97),
    # lithology alone says less: read only where no setting word is found
    ("conglomerate", 0.08),
    ("gravel", 0.08),
    ("sandstone", 0.4),
    ("sand", 0.4),
    ("heterolith", 0.62),
    ("siltstone", 0.66),
    ("mudstone", 0.8),
    ("shale", 0.82),
    ("claystone", 0.84),
)

#: Colours of facies whose name says nothing of their setting, chosen by a digest of
#: the name (the project's own, apart from the ramp's browns and blue-greys).
_NAMED_COLOURS = (
    "#b07aa1",
    "#c98b5a",
    "#7f9c4a",
    "#6c8fb3",
    "#c4677a",
    "#9a8fc1",
    "#d09f3f",
    "#5f9e93",
    "#a86b4f",
    "#8a8a5c",
)


def _ramp(position: float) -> tuple[float, float, float]:
    """RGB (0-1) of ``position`` (0 landward ... 1 basinward) on :data:`FACIES_RAMP`."""
    from matplotlib.colors import to_rgb

    xs = [x for x, _ in FACIES_RAMP]
    channels = zip(*(to_rgb(c) for _, c in FACIES_RAMP), strict=True)
    return tuple(float(np.interp(position, xs, c)) for c in channels)  # type: ignore[return-value]


def _digest(text: str) -> int:
    """A number from ``text`` that is the same in every run (``hash`` is salted)."""
    return int.from_bytes(hashlib.sha1(text.encode("utf-8")).digest()[:4], "big")


def _shade(rgb: Sequence[float], text: str) -> str:
    """``rgb`` lightened or darkened a little by ``text`` (facies sharing a place on
    the ramp stay apart), as hex."""
    from matplotlib.colors import to_hex

    step = (_digest(text) % 5 - 2) * 0.045
    return to_hex([min(max(c + step, 0.0), 1.0) for c in rgb])


def name_position(name: str) -> float | None:
    """Where the words of a facies name place it on :data:`FACIES_RAMP` (0 landward,
    1 basinward), or ``None`` where they say nothing of its setting."""
    text = " ".join(str(name).lower().replace("_", " ").replace("-", " ").split())
    for word, position in FACIES_WORDS:
        if word in text:
            return position
    return None


def _rank_position(scheme, code: str) -> float:
    """Place of ``code`` on the ramp from its rank in ``scheme`` (and its setting where
    the scheme tells nonmarine facies from marine ones)."""
    facies = scheme[code]
    if scheme.tells_settings:
        nonmarine = bool(facies.nonmarine)
        ranks = sorted({f.rank for f in scheme.facies if bool(f.nonmarine) == nonmarine})
        lo, hi = _NONMARINE_SPAN if nonmarine else _MARINE_SPAN
    else:
        ranks = sorted({f.rank for f in scheme.facies})
        lo, hi = 0.0, 1.0
    if len(ranks) == 1:
        return (lo + hi) / 2
    return lo + (hi - lo) * ranks.index(facies.rank) / (len(ranks) - 1)


def facies_colour(code: str, scheme=None, among: Sequence[str] = ()) -> str:
    """The colour of facies ``code`` in every figure and page of the project.

    The scheme's own ``colour`` where it gives one; else a place on the project's
    landward-to-basinward ramp (:data:`FACIES_RAMP`) from the facies' rank among the
    scheme's ranks (nonmarine facies in the ramp's browns, marine ones in the rest
    where the scheme tells settings); else, with no scheme, a code outside it or ranks
    only suggested from the data (not a geologist's), from the facies' name: its words
    of the trade (:data:`FACIES_WORDS`) place it on the ramp, and a name without such
    words gets a colour by a digest of the name, the next free colour where another code
    coloured so took it (:func:`_named_slots`): another code of a scheme of suggested
    ranks, or of ``among`` (the codes of one figure; :func:`facies_colours`). Facies
    sharing a place differ a little in lightness, by their code. The same facies has the
    same colour in every run.
    """
    from faciesseq.markov.seriation import SUGGESTED

    code = str(code)
    if scheme is not None and code in scheme:
        facies = scheme[code]
        if facies.colour:
            return facies.colour
        if scheme.name != SUGGESTED:
            return _shade(_ramp(_rank_position(scheme, code)), facies.code)
        code = facies.code
    position = _name_place(code, scheme)
    if position is None:
        slots = _named_slots(_named_codes(scheme, among))
        return _NAMED_COLOURS[slots.get(code, _digest(code) % len(_NAMED_COLOURS))]
    return _shade(_ramp(position), code)


def facies_colours(codes: Sequence[str], scheme=None) -> dict[str, str]:
    """The colour of each of ``codes`` (:func:`facies_colour`), those coloured by digest
    told apart among ``codes``: for a figure that draws them side by side."""
    among = tuple(str(c) for c in codes)
    return {c: facies_colour(c, scheme, among) for c in codes}


def _name_place(code: str, scheme) -> float | None:
    """Where the code, else its name in ``scheme``, places the facies on the ramp."""
    position = name_position(code)
    if position is None and scheme is not None and code in scheme:
        position = name_position(scheme[code].name)
    return position


def _by_digest(code: str, scheme) -> bool:
    """Whether :func:`facies_colour` colours ``code`` by a digest."""
    from faciesseq.markov.seriation import SUGGESTED

    if scheme is not None and code in scheme:
        facies = scheme[code]
        if facies.colour or scheme.name != SUGGESTED:
            return False
    return _name_place(code, scheme) is None


def _named_codes(scheme, among: Sequence[str] = ()) -> tuple[str, ...]:
    """The codes coloured by digest that must not share a colour: those of ``among``,
    and every code of a scheme of suggested ranks (a geologist's ranks place its facies
    on the ramp instead), sorted."""
    from faciesseq.markov.seriation import SUGGESTED

    codes = set(among)
    if scheme is not None and scheme.name == SUGGESTED:
        codes.update(f.code for f in scheme.facies)
    return tuple(sorted(c for c in codes if _by_digest(c, scheme)))


@functools.lru_cache(maxsize=64)
def _named_slots(codes: tuple[str, ...]) -> dict[str, int]:
    """A slot of :data:`_NAMED_COLOURS` for each of ``codes``: its digest's slot, or the
    next free one where another of ``codes`` took it (codes in the order of their
    digests), so that no two of them share a colour while there are colours left; a
    code alone keeps the colour it has without a scheme."""
    n = len(_NAMED_COLOURS)
    slots: dict[str, int] = {}
    taken: set[int] = set()
    for code in sorted(codes, key=lambda c: (_digest(c), c)):
        slot = _digest(code) % n
        while slot in taken and len(taken) < n:
            slot = (slot + 1) % n
        slots[code] = slot
        taken.add(slot)
    return slots


@contextlib.contextmanager
def figure_style() -> Iterator[None]:
    """Apply the project's figure settings while artists are created."""
    with mpl.rc_context(STYLE):
        yield


#: matplotlib's warning of a character its font cannot draw (one per character and
#: drawing): "Glyph 23721 (\\N{CJK UNIFIED IDEOGRAPH-5CA9}) missing from font(s) DejaVu
#: Sans." (3.10 and later; "... missing from current font." before).
_GLYPH = re.compile(r"Glyph (\d+) .*missing from (?:font\(s\) (.+?)|current font)\.?$")


class MissingGlyphWarning(UserWarning):
    """Characters of the figures' text that their font has no glyph for."""


@contextlib.contextmanager
def missing_glyphs_once() -> Iterator[None]:
    """Figures drawn inside that hold characters their font cannot draw (facies codes
    in CJK script with the default DejaVu Sans): matplotlib's warning per character and
    figure, a flood on a long job, become one :class:`MissingGlyphWarning` at the end
    naming the characters and the font. Other warnings are raised again as they came."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield
    characters: dict[str, None] = {}
    fonts: dict[str, None] = {}
    for w in caught:
        found = _GLYPH.match(str(w.message))
        if found is None:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno, source=w.source)
            continue
        characters[chr(int(found[1]))] = None
        fonts[found[2] or "the current font"] = None
    if characters:
        warnings.warn(_glyph_message(list(characters), list(fonts)), MissingGlyphWarning, 2)


def _glyph_message(characters: list[str], fonts: list[str]) -> str:
    shown = " ".join(characters[:20]) + (" ..." if len(characters) > 20 else "")
    return (
        f"the figures' font ({', '.join(fonts)}) has no glyph for {len(characters)} "
        f"character(s) of their text ({shown}): drawn as empty boxes; a font that has "
        "them, first in matplotlib's font.sans-serif (matplotlibrc), draws them"
    )


def new_figure(width: float = PAGE_WIDTH, height: float = 4.0, **kwargs) -> Figure:
    """A screen-free figure of ``width`` x ``height`` inches (call inside :func:`figure_style`)."""
    return Figure(figsize=(width, height), layout=kwargs.pop("layout", None), **kwargs)


def save_figure(fig: Figure, path: str | os.PathLike, **kwargs) -> Path:
    """Write ``fig`` to ``path`` atomically (format from the suffix: png, pdf, svg).

    The figure is rendered in memory and written by
    :func:`faciesseq._output.write_file` (a temporary sibling renamed into place,
    with the user's ordinary permissions), so a reader never sees half a file.
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fmt = path.suffix.lstrip(".").lower() or "png"
    buffer = io.BytesIO()
    with mpl.rc_context(STYLE):
        options = {"bbox_inches": "tight"} | savefig_options(fmt) | kwargs
        fig.savefig(buffer, format=fmt, **options)
    return write_file(path, buffer.getvalue())


#: Suffixes of the figure files written (the format follows the suffix).
FIGURE_SUFFIXES = (".png", ".pdf", ".svg")


def check_figure_path(path: str | os.PathLike) -> Path:
    """``path`` as a :class:`~pathlib.Path`, if a figure may be written there: a
    ``.png``, ``.pdf`` or ``.svg`` file in a folder that exists (as
    :func:`faciesseq.hmm.save_model` refuses a missing folder)."""
    path = Path(path)
    if path.suffix.lower() not in FIGURE_SUFFIXES:
        found = repr(path.suffix) if path.suffix else "a name without one"
        raise ConfigError(
            f"a figure is written as .png, .pdf or .svg (by its suffix), not {found}",
            file=str(path),
        )
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise ConfigError(f"folder {str(parent)!r} does not exist", file=str(path))
    return path
