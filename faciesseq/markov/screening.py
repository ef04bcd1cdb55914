"""Screening cores before pooling: irregularly sampled cores are left out, and said so.

A core whose described intervals cover only a small part of its depth span,
broken by many gaps, is not a succession: its "transitions" join samples that
were never next to each other (a pseudo-well assembled from scattered samples
is the typical case). Such a core is flagged ``irregular_sampling`` and left
out of pooled statistics, with a warning in the report; it is never silently
analysed. Problems that the reader already recorded for a core with one of the
kinds in :data:`IRREGULAR_KINDS` flag it too.
"""

from __future__ import annotations

import numpy as np

from faciesseq.core import CoreSet
from faciesseq.errors import Problem

__all__ = ["IRREGULAR_KINDS", "core_coverage", "screen_cores"]

#: Problem kinds (from reading or from here) that keep a core out of pooled statistics.
IRREGULAR_KINDS = frozenset({"irregular_sampling", "irregular-spacing"})


def core_coverage(core) -> tuple[float, int]:
    """Described thickness / depth span of a core, and its number of gaps."""
    span = core.base - core.top
    if not span > 0:
        return float("nan"), 0
    return core.thickness / span, len(core.gaps())


def screen_cores(coreset: CoreSet, *, min_coverage: float = 0.5) -> list[Problem]:
    """Problems that keep cores out of pooled Markov statistics.

    Parameters
    ----------
    coreset
        The core database.
    min_coverage
        A core whose described intervals cover less than this fraction of its
        depth span (from its top to its base) is irregular. Real cores of the
        Council Grove data cover 93–100 % of their span; the pseudo-well there
        covers 14 % (``tests/test_markov_council_grove.py``).

    Returns
    -------
    list of Problem
        One ``irregular_sampling`` warning per flagged core (plus the reader's
        problems of the kinds in :data:`IRREGULAR_KINDS`), naming the core and
        what was measured.
    """
    out: list[Problem] = [
        p for p in coreset.problems if p.kind in IRREGULAR_KINDS and p.core is not None
    ]
    flagged = {p.core for p in out}
    for core in coreset:
        if core.name in flagged or len(core) == 0:
            continue
        coverage, gaps = core_coverage(core)
        if np.isfinite(coverage) and coverage < min_coverage:
            out.append(
                Problem(
                    "warning",
                    "irregular_sampling",
                    f"described intervals cover {coverage:.0%} of the core's "
                    f"{core.base - core.top:.1f} {core.units} span, broken by {gaps} gap(s): "
                    "not a succession; left out of pooled statistics",
                    core=core.name,
                    depth=core.top,
                    units=core.units,
                )
            )
    return out
