"""Figures of a forward-model run: the dip section and the base-level curve.

Functions return a matplotlib :class:`~matplotlib.figure.Figure`; the caller
saves it. Colours: facies from the scheme, tracts from the project's own palette
(:data:`faciesseq.report.style.TRACT_COLOURS`, as in the strip logs, sections and views).
"""

from __future__ import annotations

import numpy as np

from faciesseq.report.style import TRACT_COLOURS, facies_colour

__all__ = ["base_level_figure", "cores_figure", "section_figure"]


def _tract_spans(time: np.ndarray, tract: np.ndarray) -> list[tuple[float, float, str]]:
    """``(start, end, tract)`` runs; step ``k`` spans ``time[k]..time[k + 1]``."""
    spans = []
    start = 0
    for k in range(1, len(tract) + 1):
        if k == len(tract) or tract[k] != tract[start]:
            spans.append((float(time[start]), float(time[k]), str(tract[start])))
            start = k
    return spans


def section_figure(history, scenario, wells=(), timeline_kyr: float = 10.0):
    """The final dip section: facies of every layer, time lines, shoreline trajectory, wells.

    Parameters
    ----------
    history
        A :class:`faciesseq.simulate.SectionHistory`.
    scenario
        The scenario (facies scheme and depth bands for the colours).
    wells
        The :class:`~faciesseq.simulate.scenario.Well` objects on this section.
    timeline_kyr
        Spacing of the thin time lines (kyr).
    """
    import matplotlib.pyplot as plt
    from matplotlib.colors import ListedColormap
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    scheme = scenario.scheme
    codes = [c for c in scheme.codes_by_rank if any(c == b[0] for b in scenario.depth_bands)]
    index = {c: i for i, c in enumerate(codes)}
    x = history.x_km
    n = history.n_steps
    elevation = history.final_elevation()
    # water depth of every step and cell, at the middle of each quad (so thin wedges
    # do not alias), mapped to the facies bands and then to the colour index
    time = history.time_kyr[1:, None]
    depth = history.base_level_m[1:, None] - (
        history.initial_surface_m[None, :]
        - history.subsidence_m_per_kyr[None, :] * time
        + history.sediment_m[1:]
    )
    middle = 0.5 * (depth[:, 1:] + depth[:, :-1])
    limits = np.array([b[1] for b in scenario.depth_bands], dtype=float)
    band = np.minimum(np.searchsorted(limits, middle, side="left"), len(limits) - 1)
    colour_of_band = np.array([index[b[0]] for b in scenario.depth_bands], dtype=float)
    facies_idx = colour_of_band[band]
    thick = np.diff(elevation, axis=0)[:, :-1]
    facies_idx = np.ma.masked_where(thick <= 1e-6, facies_idx)

    fig, ax = plt.subplots(figsize=(12, 5.5), layout="constrained")
    cmap = ListedColormap([facies_colour(c, scheme) for c in codes])
    xx = np.broadcast_to(x, elevation.shape)
    ax.pcolormesh(
        xx,
        elevation,
        facies_idx,
        cmap=cmap,
        vmin=-0.5,
        vmax=len(codes) - 0.5,
        shading="flat",
        rasterized=True,
    )
    basement = elevation[0]
    ax.plot(x, basement, color="0.2", lw=1.0)
    dt = history.time_kyr[1] - history.time_kyr[0]
    every = max(1, round(timeline_kyr / dt))
    for k in range(every, n + 1, every):
        ax.plot(x, elevation[k], color="0.25", lw=0.3, alpha=0.7)
    # tract boundaries as heavier time lines
    tract = history.tract
    for k in np.nonzero(tract[1:] != tract[:-1])[0] + 1:
        ax.plot(x, elevation[k], color=TRACT_COLOURS.get(str(tract[k]), "k"), lw=1.2)
    ax.plot(x, elevation[-1], color="k", lw=1.0)

    # shoreline trajectory: the shoreline of each step, carried down by later subsidence
    s = history.shoreline_km[1:]
    sigma_s = np.interp(s, x, history.subsidence_m_per_kyr)
    z_s = history.base_level_m[1:] - sigma_s * (history.time_kyr[-1] - history.time_kyr[1:])
    colours = [TRACT_COLOURS.get(str(t), "k") for t in tract]
    ax.scatter(s, z_s, c=colours, s=4, edgecolors="none", zorder=4)
    ax.axhline(history.base_level_m[-1], color="#3a7bd5", lw=0.8, ls="--")

    top = elevation[-1]
    for w in wells:
        j = int(np.argmin(np.abs(x - w.x_km)))
        ax.plot([x[j], x[j]], [basement[j], top[j]], color="k", lw=1.4, zorder=5)
        ax.annotate(
            w.name,
            (x[j], top[j]),
            xytext=(0, 6),
            textcoords="offset points",
            ha="center",
            fontsize=7,
            rotation=90,
        )
    lo = float(np.min(basement[x <= max([w.x_km for w in wells], default=x[-1]) + 10]))
    ax.set_ylim(lo - 5, float(np.max(top)) + 12)
    ax.set_xlim(x[0], x[-1])
    ax.set_xlabel("distance along dip (km)")
    ax.set_ylabel("elevation (m, base level of the last step dashed)")
    ax.set_title(
        f"{scenario.name}: dip section {history.name!r} after "
        f"{history.time_kyr[-1]:g} kyr (time lines every {timeline_kyr:g} kyr)"
    )
    handles = [Patch(color=facies_colour(c, scheme), label=f"{c}") for c in codes]
    handles += [
        Line2D([], [], color=TRACT_COLOURS[t], marker="o", lw=0, label=f"shoreline, {t}")
        for t in TRACT_COLOURS
    ]
    ax.legend(handles=handles, loc="lower left", fontsize=7, ncol=2, framealpha=0.85)
    return fig


def base_level_figure(history, scenario):
    """Base level through time with the tracts shaded; below, the rates at the shoreline."""
    import matplotlib.pyplot as plt
    from matplotlib.patches import Patch

    t = history.time_kyr
    fig, (ax, ax2, ax3) = plt.subplots(
        3, 1, figsize=(10, 7.5), sharex=True, layout="constrained", height_ratios=(2, 1.4, 1.4)
    )
    for start, end, tract in _tract_spans(t, history.tract):
        for a in (ax, ax2, ax3):
            a.axvspan(start, end, color=TRACT_COLOURS.get(tract, "0.8"), alpha=0.45, lw=0)
    ax.plot(t, history.base_level_m, color="k", lw=1.3, label="eustatic\nbase level")
    ax.set_ylabel("base level (m)")
    ax.set_title(f"{scenario.name}: base level and systems tracts (section {history.name!r})")
    handles = [Patch(color=c, alpha=0.6, label=k) for k, c in TRACT_COLOURS.items()]
    # beside the panels, not on them: a legend inside hid the peaks of the curves
    beside = {"fontsize": 8, "loc": "upper left", "bbox_to_anchor": (1.01, 1.0)}
    ax.legend(handles=[*ax.get_legend_handles_labels()[0], *handles], **beside)
    mid = 0.5 * (t[1:] + t[:-1])
    ax2.plot(
        mid,
        history.relative_rate_m_per_kyr,
        color="k",
        lw=1.0,
        label="relative base-level\nrate at shoreline",
    )
    # the rate at the previous shoreline jumps from step to step as the shoreline crosses
    # cells; a running mean over five steps shows its course (bypass steps left out)
    rate = np.where(
        np.isfinite(history.sedimentation_rate_m_per_kyr),
        history.sedimentation_rate_m_per_kyr,
        np.nan,
    )
    kernel = np.ones(5) / 5
    valid = np.convolve(np.isfinite(rate), kernel, mode="same")
    smooth = np.convolve(np.nan_to_num(rate), kernel, mode="same") / np.where(valid > 0, valid, 1)
    smooth[valid == 0] = np.nan
    ax2.plot(
        mid,
        smooth,
        color="#8c6d3f",
        lw=1.0,
        label="sedimentation rate\nat shoreline (5-step\nrunning mean)",
    )
    ax2.axhline(0, color="0.3", lw=0.6)
    ax2.set_ylabel("rate (m/kyr)")
    ax2.legend(**beside)
    ax3.plot(t, history.shoreline_km, color="#3a7bd5", lw=1.2)
    ax3.set_ylabel("shoreline (km along dip)")
    ax3.invert_yaxis()
    ax3.set_xlabel("time (kyr)")
    return fig


#: Line styles of the surfaces on the core figure.
_SURFACE_STYLE = {"BSFR": ":", "SB": "-", "MRS": "--", "MFS": "-.", "LHB": ":"}


def _boxes(left: np.ndarray, right: np.ndarray, top: np.ndarray, base: np.ndarray) -> np.ndarray:
    """Corner coordinates of rectangles, shape ``(n, 4, 2)``."""
    return np.stack(
        [
            np.stack([left, top], axis=1),
            np.stack([right, top], axis=1),
            np.stack([right, base], axis=1),
            np.stack([left, base], axis=1),
        ],
        axis=1,
    )


def cores_figure(result, section: str, max_cores: int = 14):
    """Described cores of one section side by side, with the true tracts and surfaces.

    Each core is drawn as a log: bar width from the grain size of the logged
    facies, colour from the scheme; beside it a strip of the true tract; the
    true surfaces as lines across the log. Depth downward, shared scale.

    Parameters
    ----------
    result
        A :class:`faciesseq.simulate.SimulationResult`.
    section
        Section name; its wells are drawn in order along dip.
    max_cores
        At most this many cores (spread evenly along the section).
    """
    import matplotlib.pyplot as plt
    from matplotlib.collections import PolyCollection
    from matplotlib.patches import Patch, Rectangle

    scheme = result.scenario.scheme
    wells = result.wells[result.wells["section"] == section].sort_values("x_km")
    names = [n for n in wells["core"] if n in result.cores.names]
    if len(names) > max_cores:
        pick = np.unique(np.round(np.linspace(0, len(names) - 1, max_cores)).astype(int))
        names = [names[i] for i in pick]
    depth_max = max((result.cores[n].base for n in names), default=1.0)
    fig, axes = plt.subplots(
        1,
        max(len(names), 1),
        figsize=(1.0 + 0.95 * max(len(names), 1), 7.5),
        sharey=True,
        layout="constrained",
        squeeze=False,
    )
    grains = [f.grain_size for f in scheme.facies if f.grain_size is not None]
    g_max = max(grains, default=1.0)
    for ax, name in zip(axes[0], names):
        core = result.cores[name]
        table = core.intervals
        top = table["top"].to_numpy(dtype=float)
        base = table["base"].to_numpy(dtype=float)
        grain = table["grain_size"].fillna(0.0).to_numpy(dtype=float)
        width = 0.15 + 0.6 * grain / g_max
        ax.add_collection(
            PolyCollection(
                _boxes(np.zeros_like(top), width, top, base),
                facecolors=[facies_colour(f, scheme) for f in table["facies"]],
                edgecolors="none",
            )
        )
        ax.add_collection(
            PolyCollection(
                _boxes(np.full_like(top, 0.8), np.full_like(top, 1.0), top, base),
                facecolors=[TRACT_COLOURS.get(str(t), "0.8") for t in table["true_tract"]],
                edgecolors="none",
            )
        )
        for g0, g1 in core.gaps():
            ax.add_patch(
                Rectangle(
                    (0, g0), 1.0, g1 - g0, facecolor="white", hatch="xx", edgecolor="0.6", lw=0
                )
            )
        picks = result.surfaces[result.surfaces["core"] == name]
        for row in picks.itertuples(index=False):
            ax.plot(
                [0, 1],
                [row.depth, row.depth],
                color="k",
                lw=0.8,
                ls=_SURFACE_STYLE.get(row.surface, "-"),
            )
        x_km = float(wells.loc[wells["core"] == name, "x_km"].iloc[0])
        labelled = bool(wells.loc[wells["core"] == name, "labelled"].iloc[0])
        ax.set_title(f"{name}\n{x_km:g} km{' (L)' if labelled else ''}", fontsize=8)
        ax.set_xlim(0, 1)
        ax.set_xticks([])
    axes[0][0].set_ylim(depth_max * 1.01, 0)
    axes[0][0].set_ylabel("depth below top of core (m)")
    codes = [c for c in scheme.codes_by_rank if any(c == b[0] for b in result.scenario.depth_bands)]
    handles = [Patch(color=facies_colour(c, scheme), label=c) for c in codes]
    handles += [Patch(color=c, label=f"true {t}") for t, c in TRACT_COLOURS.items()]
    from matplotlib.lines import Line2D

    handles += [
        Line2D([], [], color="k", ls=s, lw=0.8, label=k)
        for k, s in _SURFACE_STYLE.items()
        if k != "LHB"
    ]
    fig.legend(handles=handles, loc="outside right center", fontsize=7)
    fig.suptitle(
        f"{result.scenario.name}: described cores of section {section!r} "
        "(bar width: grain size; strip: true tract; L: labelled)",
        fontsize=9,
    )
    return fig
