"""Homogeneity: are all cores (or groups of cores) the same Markov chain?

Anderson & Goodman (1957, Ann. Math. Stat. 28:89–110, sec. 3.3): with
``n[g, i, j]`` the upward transitions from ``i`` to ``j`` in group ``g``, the
null hypothesis is that every group has the same transition probabilities
``p[i, j]``. For each lower facies ``i`` the groups-by-upper-facies table is
tested for homogeneity of its rows; the statistics and degrees of freedom add
over ``i``. Degrees of freedom count only non-empty rows and columns of each
table (Bishop, Fienberg & Holland 1975, sec. 3.8), so a facies that a group
never has, or the structural diagonal of an embedded chain, is not counted.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.markov.contingency import TestResult, _chi2_sf

__all__ = ["HomogeneityResult", "homogeneity_test"]


@dataclass(frozen=True)
class HomogeneityResult:
    """Test that all groups share one transition matrix.

    Attributes
    ----------
    by
        What the groups are (``"core"`` or a column name).
    groups
        Group labels, in order.
    counts
        ``(n_groups, m, m)`` upward transition counts per group.
    pearson, g2
        The tests (statistic, dof, p-value).
    n_left_out
        Transitions between beds of different groups (not in any group).
    """

    by: str
    groups: tuple[str, ...]
    counts: np.ndarray
    pearson: TestResult
    g2: TestResult
    n_left_out: int = 0

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame(
            {
                "group": list(self.groups),
                "n_transitions": self.counts.sum(axis=(1, 2)).astype(int).tolist(),
            }
        )

    def to_dict(self) -> dict:
        return {
            "by": self.by,
            "groups": list(self.groups),
            "n_transitions": self.counts.sum(axis=(1, 2)).astype(int).tolist(),
            "n_left_out": int(self.n_left_out),
            "tests": [self.pearson.to_dict(), self.g2.to_dict()],
        }


def homogeneity_test(
    group_counts: np.ndarray, groups: Sequence[str], by: str = "core", n_left_out: int = 0
) -> HomogeneityResult:
    """Anderson–Goodman test that every group has the same transition probabilities.

    Parameters
    ----------
    group_counts
        ``(n_groups, m, m)`` transition counts, one matrix per group.
    groups
        Group labels.
    by
        Name of the grouping, for the report.
    n_left_out
        Transitions that belong to no group (recorded only).

    Notes
    -----
    ``G² = 2 Σ_g Σ_i Σ_j n_gij ln(p̂_gij / p̂_ij)``; Pearson
    ``χ² = Σ n_gi (p̂_gij − p̂_ij)² / p̂_ij``; dof ``Σ_i (G_i − 1)(J_i − 1)``.
    """
    n = np.asarray(group_counts, dtype=float)
    row_g = n.sum(axis=2, keepdims=True)  # (G, m, 1)
    pooled = n.sum(axis=0, keepdims=True)  # (1, m, m)
    row = pooled.sum(axis=2, keepdims=True)  # (1, m, 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        e = row_g * pooled / np.where(row > 0, row, 1.0)
        g = np.where(n > 0, n * np.log(np.where(n > 0, n, 1) / np.where(e > 0, e, 1)), 0.0)
        p = np.where(e > 0, (n - e) ** 2 / np.where(e > 0, e, 1), 0.0)
    g2 = float(2 * g.sum())
    chi2 = float(p.sum())
    g_i = (row_g[:, :, 0] > 0).sum(axis=0)
    j_i = (pooled[0] > 0).sum(axis=1)
    dof = int((np.clip(g_i - 1, 0, None) * np.clip(j_i - 1, 0, None)).sum())
    total = int(n.sum())
    null = f"every {by} has the same upward transition probabilities"
    return HomogeneityResult(
        by,
        tuple(str(x) for x in groups),
        n,
        TestResult(
            f"homogeneity by {by} (Pearson chi2)", chi2, dof, _chi2_sf(chi2, dof), total, null=null
        ),
        TestResult(f"homogeneity by {by} (G2)", g2, dof, _chi2_sf(g2, dof), total, null=null),
        n_left_out,
    )
