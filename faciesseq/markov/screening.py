"""Screening cores before pooling: irregularly sampled cores are left out, and said so.

A core whose described intervals cover only a small part of its depth span,
broken by many gaps, is not a succession: its "transitions" join samples that
were never next to each other (a pseudo-well assembled from scattered samples
is the typical case). Such a core is flagged ``irregular_sampling`` and left
out of pooled statistics, with a warning in the report; it is never silently
analysed. Problems that the reader already recorded for a core with one of the
kinds in :data:`IRREGULAR_KINDS` flag it too.

:func:`leave_out_irregular` is the one decision every command uses (``markov``,
``fit``, ``decode``, ``validate``, ``appendix``): the same cores are left out everywhere, and
:meth:`Screening.warning` is the one line that names them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from faciesseq.core import CoreSet
from faciesseq.errors import Problem

__all__ = ["IRREGULAR_KINDS", "Screening", "leave_out_irregular", "screen_cores"]

#: Names shown in the one-line warning before "and N more".
SHOWN_NAMES = 10

#: Problem kinds (from reading or from here) that keep a core out of pooled statistics.
IRREGULAR_KINDS = frozenset({"irregular_sampling", "irregular-spacing"})


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
    extents = coreset.extents()
    span = (extents["base"] - extents["top"]).to_numpy()
    with np.errstate(invalid="ignore", divide="ignore"):
        coverage = np.where(span > 0, extents["thickness"].to_numpy() / span, np.nan)
    low = np.isfinite(coverage) & (coverage < min_coverage)
    for k in np.flatnonzero(low):
        name = extents.index[k]
        if name in flagged:
            continue
        top = float(extents["top"].iloc[k])
        out.append(
            Problem(
                "warning",
                "irregular_sampling",
                f"described intervals cover {coverage[k]:.0%} of the core's "
                f"{span[k]:.1f} {coreset.units} span, broken by {extents['gaps'].iloc[k]} gap(s): "
                "not a succession; left out of pooled statistics",
                core=name,
                depth=top,
                units=coreset.units,
            )
        )
    return out


@dataclass(frozen=True)
class Screening:
    """The cores kept for analysis and those left out as irregularly sampled.

    Attributes
    ----------
    kept
        The core set without the cores left out (their problems dropped with them).
    left_out
        Names of the cores left out, in database order.
    problems
        The findings that flagged them (see :func:`screen_cores`).
    """

    kept: CoreSet
    left_out: tuple[str, ...]
    problems: tuple[Problem, ...]

    def warning(self) -> str | None:
        """One line naming the cores left out (``None`` when none was)."""
        if not self.left_out:
            return None
        names = ", ".join(self.left_out[:SHOWN_NAMES])
        more = len(self.left_out) - SHOWN_NAMES
        if more > 0:
            names += f" and {more} more"
        return (
            f"{len(self.left_out)} irregularly sampled core(s) left out (not a succession: "
            f"pseudo-well or scattered samples; see `faciesseq markov`): {names}"
        )


def leave_out_irregular(coreset: CoreSet, *, min_coverage: float = 0.5) -> Screening:
    """The core set without the cores :func:`screen_cores` flags.

    Parameters
    ----------
    coreset
        The core database.
    min_coverage
        See :func:`screen_cores`.

    Returns
    -------
    Screening
    """
    problems = screen_cores(coreset, min_coverage=min_coverage)
    flagged = {p.core for p in problems}
    left_out = tuple(name for name in coreset.names if name in flagged)
    if not left_out:
        return Screening(coreset, (), tuple(problems))
    kept = coreset.subset([name for name in coreset.names if name not in flagged])
    return Screening(kept, left_out, tuple(problems))
