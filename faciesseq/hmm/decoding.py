"""Decoding with a fitted tract model: tract columns, posteriors, surfaces and picks.

Batches of whole successions (each one job of :mod:`faciesseq.parallel`) get
the tempered forward-backward posteriors, the Viterbi column of the model
itself and the two-slice surface probabilities; each core's beds, boundaries
and picks are then assembled in depth order (shallowest first).
:class:`~faciesseq.hmm.model.TractHMM` takes these methods from :class:`Decoding`.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet, Succession
from faciesseq.hmm import engine
from faciesseq.hmm.calibration import probability_meta, temper
from faciesseq.hmm.encoding import EncodedBeds, UnseenCategoryWarning
from faciesseq.interpretation import CoreInterpretation, Interpretation
from faciesseq.parallel import run_jobs
from faciesseq.surfaces import (
    PICK_COLUMNS,
    boundary_probabilities,
    pick_rows,
    surface_codes,
)

__all__ = ["DECODE_BATCH", "Decoding"]

#: Beds per batch decoded as one job (at most ``batch_size``). Fixed, so that the
#: batches -- whose make-up moves the posteriors in the last bit -- and hence
#: the decoded columns do not depend on the number of workers.
DECODE_BATCH = 20_000


class Decoding:
    """Decoding of :class:`~faciesseq.hmm.model.TractHMM` (a fitted model)."""

    def _warn_unseen(self, succ: Sequence[Succession], beds: EncodedBeds) -> None:
        start = 0
        for s in succ:
            n = len(s)
            for what, codes in (("facies", beds.facies), ("contact type", beds.contact)):
                if what == "contact type" and "contact" not in self.features_:
                    continue
                if what == "facies" and not ({"facies", "facies_trend"} & set(self.features_)):
                    continue
                bad = np.nonzero(codes[start : start + n] == -2)[0]
                if len(bad):
                    col = "facies" if what == "facies" else "contact"
                    values = sorted({str(v) for v in s.beds[col].iloc[bad]})
                    warnings.warn(
                        UnseenCategoryWarning(
                            f"core {s.core}, depth {float(s.beds['top'].iloc[bad[0]]):.2f} "
                            f"{s.units}: {what} {values} not seen in training "
                            f"({len(bad)} bed(s)); decoded with a smoothed probability"
                        ),
                        stacklevel=3,
                    )
            start += n

    def decode(
        self,
        successions: CoreSet | Sequence[Succession],
        threshold: float = 0.5,
        mass: float = 0.9,
        labels: str | Sequence[Sequence[str | None]] | None = None,
    ) -> Interpretation:
        """Tract column, posteriors, surface probabilities and picks of every core.

        Any interpreter's ``tract`` column is ignored (it is kept in the bed
        tables as ``interpreted_tract``) unless named by ``labels``: then its
        labelled beds are clamped (they keep their tract, posterior 1) and the
        rest is decoded around them. ``threshold`` and
        ``mass`` are the surface-pick options of
        :func:`faciesseq.surfaces.pick_surfaces`.

        Returns
        -------
        Interpretation, tables in depth order (shallowest first).
        """
        succ, beds = self._prepare(successions)
        self._warn_unseen(succ, beds)
        clamp, _ = self._labels(succ, labels)
        tm = self.tract_model_
        codes = surface_codes(tm)
        tracts = self.states_.tracts
        per_core: dict[str, list] = {}
        batches = list(self._batches(beds.lengths, DECODE_BATCH))
        jobs = [
            (beds.slice(a, b, lengths), None if clamp is None else clamp[a:b])
            for a, b, lengths, _ in batches
        ]
        decoded = run_jobs(self._decode_batch, jobs, self.n_jobs, self.scheduler)
        for (_, _, lengths, first), (gamma, vit, surf, loglik) in zip(batches, decoded):
            row, bnd = 0, 0
            for k, n in enumerate(lengths):
                s = succ[first + k]
                per_core.setdefault(s.core, []).append(
                    (
                        s,
                        gamma[row : row + n],
                        vit[row : row + n],
                        surf[bnd : bnd + n - 1],
                        float(loglik[k]),
                    )
                )
                row += n
                bnd += n - 1
        cores = {}
        for core, parts in per_core.items():
            cores[core] = self._core_interpretation(core, parts, codes, mass)
        return Interpretation(
            cores,
            tracts,
            codes,
            meta={"unit": self.unit, "step": self.step, "features": list(self.features_)}
            | probability_meta(self.temperature_, self.calibration_),
        )

    def _decode_batch(self, beds: EncodedBeds, clamp: np.ndarray | None):
        """Tract posteriors, Viterbi tracts, surface probabilities and log-likelihoods
        of one batch of whole successions (one job of :mod:`faciesseq.parallel`)."""
        le = self._log_emission(self.emissions_, beds)
        if clamp is not None:
            le = engine.constrained_log_emission(le, clamp[:, self.states_.state_tract])
        # probabilities from the calibrated (tempered) chain; the log-likelihood
        # and the Viterbi column from the model itself
        tle, tpi, tA = temper(le, self.startprob_, self.transmat_, self.temperature_)
        post = engine.forward_backward(tle, beds.lengths, tpi, tA, return_xi=True)
        loglik = (
            post.log_likelihood
            if self.temperature_ == 1.0
            else engine.forward_backward(
                le, beds.lengths, self.startprob_, self.transmat_
            ).log_likelihood
        )
        path, _ = engine.viterbi(le, beds.lengths, self.startprob_, self.transmat_)
        surf = boundary_probabilities(post.xi, self.tract_model_, self.states_.state_tract)
        return self.states_.to_tracts(post.gamma), self.states_.state_tract[path], surf, loglik

    def _core_interpretation(self, core, parts, codes, mass):
        """One core's tables from its decoded successions, each column built whole."""
        tracts = np.asarray(self.states_.tracts, dtype=object)
        units = parts[0][0].units
        # depth order: shallowest segment first, top of each succession first
        parts = sorted(parts, key=lambda p: p[0].segment)
        contacts = [_contacts(s, vit, surf, tracts) for s, _, vit, surf, _ in parts]
        found = []
        for (s, *_), (depth, lower, upper, surf) in zip(parts, contacts, strict=True):
            by_code = {code: surf[:, c] for c, code in enumerate(codes)}
            found += pick_rows(depth, lower, upper, by_code, self.tract_model_, s.segment, mass)
        surf = np.concatenate([c[3] for c in contacts])
        boundaries = pd.DataFrame(
            {
                "segment": np.concatenate(
                    [np.full(len(c[0]), p[0].segment) for p, c in zip(parts, contacts)]
                ),
                "depth": np.concatenate([c[0] for c in contacts]),
                "lower_tract": np.concatenate([c[1] for c in contacts]),
                "upper_tract": np.concatenate([c[2] for c in contacts]),
            }
            | {f"p_{code}": surf[:, c] for c, code in enumerate(codes)}
        )
        picks = pd.DataFrame(found, columns=PICK_COLUMNS).sort_values(
            ["depth", "surface"], kind="stable"
        )
        return CoreInterpretation(
            core,
            units,
            tuple(self.states_.tracts),
            tuple(codes),
            self._bed_table(parts, tracts),
            boundaries,
            picks.reset_index(drop=True),
            float(sum(p[4] for p in parts)),
        )

    def _bed_table(self, parts, tracts: np.ndarray) -> pd.DataFrame:
        """The decoded beds of one core in depth order: the described columns, then the
        tract and its posteriors (an interpreter's ``tract`` kept as ``interpreted_tract``);
        built from whole columns, one frame per core."""
        tables = [p[0].beds.iloc[::-1] for p in parts]
        beds = tables[0] if len(tables) == 1 else pd.concat(tables, ignore_index=True)
        names = list(beds.columns)
        gamma = np.concatenate([p[1][::-1] for p in parts])
        added = {"tract": tracts[np.concatenate([p[2][::-1] for p in parts])]} | {
            f"p_{t}": gamma[:, j] for j, t in enumerate(self.states_.tracts)
        }
        renamed = {"tract": "interpreted_tract"}  # an interpreter's column: kept, never used
        first = ["top", "base", "thickness", "facies"]
        order = [c for c in first if c in names] + [
            c for c in names if c not in (*first, "segment", *added) or c == "tract"
        ]
        columns = {"segment": np.concatenate([np.full(len(p[2]), p[0].segment) for p in parts])}
        for c in order:
            columns[renamed.get(c, c)] = beds[c].to_numpy()
        return pd.DataFrame(columns | added)


def _contacts(s: Succession, vit: np.ndarray, surf: np.ndarray, tracts: np.ndarray):
    """Depth, lower and upper tract and surface probabilities of the contacts of one
    decoded succession, top first (contact ``t``: the top of the lower bed)."""
    depth = s.beds["top"].to_numpy(float)[:-1][::-1]
    return depth, tracts[vit[:-1]][::-1], tracts[vit[1:]][::-1], surf[::-1]
