"""Which fitted state is which tract: the one rising tract and the cyclic order.

The strict cyclic graph HST -> FSST -> LST -> TST -> HST looks the same after
turning every name one step round the cycle, so likelihood alone cannot say
which state is the transgressive tract; the priors of the emission pieces only
lean one way, and on thousands of beds EM from a perturbed start can settle on a
turned solution of about the same likelihood (measured on the ramp scenario: the
best of three restarts named 0.13 of the thickness right against 0.39 for
another restart of the same objective within 0.5 %). Common practice names the
tracts by the one deepening-upward (retrogradational) tract, the TST, and the
order of the others after it (Catuneanu et al. 2009, Earth-Science Reviews
92:1-33). :func:`deepening_scores` measures how deepening each state's
emissions are; :func:`turn` renames the states one or more steps round the
cycle so that the most deepening one carries the deepening tract's name.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from faciesseq.hmm.context import CONTEXT_BINS, ContextEmission, bin_centres
from faciesseq.hmm.emissions import CategoricalEmission, EmissionPiece
from faciesseq.hmm.states import StateSpace

__all__ = [
    "deepening_scores",
    "deepening_tracts",
    "turn",
]

#: Context features whose larger values mean deepening upward.
DEEPENING_FEATURES = ("trend", "cycle_stacking")


def deepening_tracts(tract_model) -> list[int]:
    """Indices, in ``tract_model.order``, of the tracts whose trend is deepening upward
    (the TST alone in the trade's tract model)."""
    return [i for i, c in enumerate(tract_model.order) if tract_model.tract(c).trend == "deepening"]


def deepening_scores(pieces: Sequence[EmissionPiece], n_tracts: int) -> np.ndarray | None:
    """Expected deepening of each tract: the mean bin centre of the trend and
    stacking pieces (each scaled to its largest centre), summed; ``None`` when the
    model has neither."""
    score = np.zeros(n_tracts)
    found = False
    for p in pieces:
        if isinstance(p, ContextEmission) and p.feature in DEEPENING_FEATURES:
            centres = bin_centres(CONTEXT_BINS[p.feature])
            score += p.emissionprob_ @ (centres / np.abs(centres).max())
            found = True
    return score if found else None


def turn(
    pieces: Sequence[EmissionPiece],
    startprob: np.ndarray,
    transmat: np.ndarray,
    states: StateSpace,
    shift: int,
) -> tuple[list[EmissionPiece], np.ndarray, np.ndarray] | None:
    """Parameters with tract ``t`` taking those of tract ``(t + shift) % n``.

    Transitions the graph forbids after the turn are set to zero, and every
    table is mixed with a tenth of a uniform one over what the graph allows, so
    that no allowed cell starts at zero (EM starts again from these). ``None`` when the turn is not
    defined: tracts with different numbers of sub-states, or a piece other than a
    categorical table.
    """
    S = states.n_tracts
    m = states.substates[0]
    if any(n != m for n in states.substates) or not all(
        isinstance(p, CategoricalEmission) for p in pieces
    ):
        return None
    old_tract = (np.arange(S) + shift) % S
    perm = (old_tract[:, None] * m + np.arange(m)[None, :]).ravel()
    for p in pieces:
        p.emissionprob_ = p.emissionprob_[old_tract].copy()
        p.unseen_prob_ = np.asarray(p.unseen_prob_)[old_tract].copy()
    for p in pieces:
        p.emissionprob_ = 0.9 * p.emissionprob_ + 0.1 / p.emissionprob_.shape[1]
        if isinstance(p, ContextEmission):
            p.hold_exclusions()  # the exclusions belong to the names, not to the tables
    A = np.where(states.allowed, transmat[np.ix_(perm, perm)], 0.0)
    rows = A.sum(axis=1, keepdims=True)
    uniform = states.allowed / states.allowed.sum(axis=1, keepdims=True)
    A = 0.9 * np.where(rows > 0, A / np.where(rows > 0, rows, 1.0), uniform) + 0.1 * uniform
    pi = 0.9 * startprob[perm] / startprob.sum() + 0.1 / len(startprob)
    return list(pieces), pi, A
