"""Facies relationship diagram of a :class:`~faciesseq.markov.MarkovReport`.

Facies are placed from left (landward / shallow, low proximality rank) to
right (basinward / deep), alternately high and low so arrows stay readable;
an arrow is drawn for every transition more frequent than the null model
with a significant adjusted residual, its width growing with the upward
transition probability. Colours are the scheme's (or the project's fallback
palette).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

__all__ = ["facies_relationship_diagram"]


def facies_relationship_diagram(report, scheme=None, path_or_ax=None):
    """Draw the diagram; return the matplotlib Figure.

    Parameters
    ----------
    report
        A :class:`~faciesseq.markov.MarkovReport`.
    scheme
        :class:`~faciesseq.scheme.FaciesScheme` for ranks, names and colours;
        without one, facies keep the report's order and fallback colours.
    path_or_ax
        A file path (PNG, SVG or PDF by suffix) to write, a matplotlib Axes to
        draw on, or ``None`` (just return the figure).
    """
    import matplotlib

    if path_or_ax is None or isinstance(path_or_ax, str | Path):
        from matplotlib.figure import Figure

        fig = Figure(figsize=(8, 4.5), constrained_layout=True)
        ax = fig.add_subplot()
    else:
        ax = path_or_ax
        fig = ax.figure
    from matplotlib.patches import FancyArrowPatch

    codes = list(report.codes)
    fo = report.first_order
    m = len(codes)
    known = scheme is not None and all(c in scheme for c in codes)
    rank = [scheme.rank(c) if known else float(i) for i, c in enumerate(codes)]
    order = sorted(range(m), key=lambda i: (rank[i], i))
    fallback = matplotlib.colormaps["viridis"](np.linspace(0.1, 0.9, max(m, 2)))
    pos = {}
    for k, i in enumerate(order):
        pos[i] = (float(k), 0.6 if k % 2 == 0 else -0.6)
    p = report.probabilities
    residual = np.nan_to_num(fo.residuals, nan=0.0)
    edge = fo.significant & (residual > 0)
    for i in range(m):
        for j in range(m):
            if not edge[i, j] or i == j:
                continue
            width = 0.8 + 6.0 * float(p[i, j])
            colour = scheme.colour(codes[i]) if known else fallback[i]
            arrow = FancyArrowPatch(
                pos[i],
                pos[j],
                arrowstyle="-|>",
                mutation_scale=12 + 4 * width,
                linewidth=width,
                color=colour,
                alpha=0.85,
                shrinkA=18,
                shrinkB=18,
                connectionstyle="arc3,rad=0.25",
                zorder=2,
            )
            ax.add_patch(arrow)
            mx = (pos[i][0] + pos[j][0]) / 2 + 0.12 * (pos[j][1] - pos[i][1])
            my = (pos[i][1] + pos[j][1]) / 2 - 0.12 * (pos[j][0] - pos[i][0])
            ax.text(mx, my, f"{p[i, j]:.2f}", fontsize=7, ha="center", va="center", zorder=4)
    for i in range(m):
        colour = scheme.colour(codes[i]) if known else fallback[i]
        ax.scatter(*pos[i], s=900, color=colour, edgecolor="black", zorder=3)
        ax.text(
            *pos[i],
            codes[i],
            ha="center",
            va="center",
            fontsize=9,
            zorder=5,
            fontweight="bold",
            color="white" if _dark(colour) else "black",
        )
    ax.set_xlim(-0.8, m - 0.2)
    ax.set_ylim(-1.4, 1.4)
    ax.set_yticks([])
    ax.set_xticks([])
    for side in ("top", "right", "left"):
        ax.spines[side].set_visible(False)
    ax.set_xlabel(
        "proximality rank: landward / shallow  →  basinward / deep"
        if known
        else "facies (matrix order)"
    )
    ax.set_title(
        f"Upward transitions above the {fo.model} model "
        f"(adjusted residual significant at {fo.alpha:g}; width: probability)",
        fontsize=9,
    )
    if isinstance(path_or_ax, str | Path):
        _save_atomic(fig, Path(path_or_ax))
    return fig


def _dark(colour) -> bool:
    from matplotlib.colors import to_rgb

    r, g, b = to_rgb(colour)
    return 0.299 * r + 0.587 * g + 0.114 * b < 0.5


def _save_atomic(fig, path: Path) -> None:
    """Write the figure to a temporary file beside ``path``, then rename it."""
    import os
    import tempfile

    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    try:
        fig.savefig(tmp, dpi=150)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
