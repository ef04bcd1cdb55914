"""The hidden states of the tract model: tracts, each a left-to-right chain of sub-states.

A tract with ``n`` sub-states is entered at its first sub-state, may stay in a
sub-state or move to the next, and may be left from any of its sub-states to
the first sub-state of a tract the tract model allows next. The number of beds
in a tract is then a phase-type (Coxian) duration -- with exits from the last
sub-state only it would be a sum of ``n`` geometric durations -- and is no
longer forced to be geometric, while a tract of a single bed stays possible
(Rabiner 1989, section IV.D; the left-to-right model of Bakis 1976; Coxian
phase-type durations, Cox 1955). Every other transition is a structural zero, and stays
zero through fitting because EM re-estimates a transition from its expected
count, which is zero where the transition probability is zero.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from faciesseq.errors import ConfigError
from faciesseq.scheme import TractModel

__all__ = ["SHORT_VISIT", "StateSpace"]

#: A tract whose fitted chain lasts fewer beds than this per visit, on average, is
#: spent on single beds (:meth:`StateSpace.short_tracts`). A systems tract is a stack
#: of parasequences (Van Wagoner et al. 1990); in fits without labels such a tract
#: was, on simulated cores, the one misread (benchmarks/tract_model.md, "A tract
#: spent on single beds").
SHORT_VISIT = 1.5


@dataclass(frozen=True)
class StateSpace:
    """Hidden states expanded from a tract model.

    Attributes
    ----------
    tracts
        Tract codes in the tract model's order.
    substates
        Number of sub-states of each tract (same order).
    state_tract
        Index (into ``tracts``) of the tract of every hidden state, shape ``(K,)``.
    allowed
        Boolean ``(K, K)`` matrix of the transitions the graph allows (row =
        lower / older state, column = upper / younger state).
    """

    tracts: tuple[str, ...]
    substates: tuple[int, ...]
    state_tract: np.ndarray
    allowed: np.ndarray

    @classmethod
    def build(cls, tract_model: TractModel, substates: int | Mapping[str, int] | None = None):
        """States for ``tract_model``; ``substates`` overrides the model's own counts."""
        tracts = tuple(tract_model.order)
        if substates is None:
            counts = [tract_model.n_substates(t) for t in tracts]
        elif isinstance(substates, Mapping):
            unknown = set(substates) - set(tracts)
            if unknown:
                raise ConfigError(f"substates: unknown tract(s) {sorted(unknown)}")
            counts = [int(substates.get(t, tract_model.n_substates(t))) for t in tracts]
        else:
            counts = [int(substates)] * len(tracts)
        if any(c < 1 for c in counts):
            raise ConfigError(f"substates must be whole numbers >= 1, got {counts}")
        state_tract = np.repeat(np.arange(len(tracts)), counts)
        first = np.r_[0, np.cumsum(counts)[:-1]]
        last = np.cumsum(counts) - 1
        K = int(sum(counts))
        allowed = np.zeros((K, K), dtype=bool)
        tract_allowed = np.asarray(tract_model.allowed(), dtype=bool)
        for a in range(len(tracts)):
            for j in range(first[a], last[a] + 1):
                allowed[j, j] = True
                if j < last[a]:
                    allowed[j, j + 1] = True
            for b in range(len(tracts)):
                if b != a and tract_allowed[a, b]:
                    allowed[first[a] : last[a] + 1, first[b]] = True
        return cls(tracts, tuple(counts), state_tract, allowed)

    @property
    def n_states(self) -> int:
        return len(self.state_tract)

    @property
    def n_tracts(self) -> int:
        return len(self.tracts)

    @property
    def first(self) -> np.ndarray:
        """Index of the first sub-state of each tract."""
        return np.r_[0, np.cumsum(self.substates)[:-1]].astype(int)

    def labels(self) -> list[str]:
        """State names: ``"TST"`` or, with sub-states, ``"TST.1"``, ``"TST.2"``..."""
        out = []
        for t, n in zip(self.tracts, self.substates):
            out += [t] if n == 1 else [f"{t}.{i + 1}" for i in range(n)]
        return out

    def tract_mask(self) -> np.ndarray:
        """Boolean ``(n_tracts, K)``: which states belong to each tract."""
        return self.state_tract[None, :] == np.arange(self.n_tracts)[:, None]

    def to_tracts(self, state_values: np.ndarray) -> np.ndarray:
        """Sum a ``(..., K)`` array of state probabilities into ``(..., n_tracts)``."""
        return state_values @ self.tract_mask().T.astype(float)

    def mean_beds(self, transmat: np.ndarray) -> np.ndarray:
        """Expected beds per visit of each tract under ``transmat``, entered at its
        first sub-state: the mean of its phase-type duration, ``(I - Q)^-1 1`` of
        the within-tract block ``Q`` (Neuts 1981, Matrix-geometric solutions in
        stochastic models, ch. 2); ``inf`` for a tract that is never left."""
        out = np.empty(self.n_tracts)
        for t, a in enumerate(self.first):
            idx = np.arange(a, a + self.substates[t])
            q = np.asarray(transmat, dtype=float)[np.ix_(idx, idx)]
            try:
                out[t] = np.linalg.solve(np.eye(len(idx)) - q, np.ones(len(idx)))[0]
            except np.linalg.LinAlgError:
                out[t] = np.inf
        return np.where(np.isfinite(out) & (out > 0), out, np.inf)

    def short_tracts(self, transmat: np.ndarray) -> dict[str, float]:
        """The tracts of more than one sub-state whose expected beds per visit
        (:meth:`mean_beds`) are below :data:`SHORT_VISIT`, with that number."""
        beds = self.mean_beds(transmat)
        return {
            t: float(b)
            for t, n, b in zip(self.tracts, self.substates, beds)
            if n > 1 and b < SHORT_VISIT
        }
