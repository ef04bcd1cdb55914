"""The picks a correlation reads: the decoded column's, and, optionally, weaker peaks.

``decode`` picks a surface wherever the most likely tract column changes
(:func:`faciesseq.surfaces.pick_table`). A surface the column skips may still
carry some probability; with ``threshold`` below 1, every cluster of contacts
whose probability mass of a surface reaches ``threshold``
(:func:`faciesseq.surfaces.surface_clusters`) and holds no column pick of that
surface is added as a candidate, with its mass as its probability. The
alignment's gap cost is proportional to a pick's probability, so a weak
candidate is tied only where its neighbours support it.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from faciesseq.surfaces import surface_clusters

__all__ = ["correlation_picks"]


def correlation_picks(interpretation, threshold: float = 1.0, mass: float = 0.9) -> pd.DataFrame:
    """``core, surface, depth, probability, source`` (``column`` or ``candidate``).

    Parameters
    ----------
    interpretation
        A decoded :class:`faciesseq.interpretation.Interpretation`.
    threshold
        Cluster mass from which a surface peak the column skipped is a
        candidate; 1 or more adds none (the column's picks only).
    mass
        Probability mass of a candidate's uncertainty interval.
    """
    rows = []
    for core in interpretation:
        picks = core.picks
        for p in picks.itertuples(index=False):
            rows.append(
                {
                    "core": core.core,
                    "surface": p.surface,
                    "depth": float(p.depth),
                    "probability": float(p.probability),
                    "source": "column",
                }
            )
        if threshold >= 1:
            continue
        for _, bnd in core.boundaries.groupby("segment", sort=False):
            depth = bnd["depth"].to_numpy(float)
            for code in core.surfaces:
                prob = bnd[f"p_{code}"].to_numpy(float)
                own = picks[picks["surface"] == code]
                for a, b, peak, lo, hi in surface_clusters(prob, threshold, mass):
                    top, base = depth[min(a, lo)], depth[max(b, hi)]
                    if ((own["depth"] >= top) & (own["depth"] <= base)).any():
                        continue
                    rows.append(
                        {
                            "core": core.core,
                            "surface": code,
                            "depth": float(depth[peak]),
                            "probability": float(min(np.sum(prob[a : b + 1]), 1.0)),
                            "source": "candidate",
                        }
                    )
    return pd.DataFrame(rows, columns=["core", "surface", "depth", "probability", "source"])
