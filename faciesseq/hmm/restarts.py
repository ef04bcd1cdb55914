"""The restarts of an EM fit and the one kept: :class:`Restarts`.

EM finds a local optimum, so a fit runs it from several starts (``n_restarts``
seeds; one run where a fit on a sample hands its parameters over) and keeps the
best. Without labels the cyclic tract graph is the same after turning every name
one step round the cycle, so the best is taken among the runs whose most
deepening state carries the deepening tract's name (:mod:`faciesseq.hmm.identity`),
and where none does, the best is turned round the cycle and run again.
"""

from __future__ import annotations

import copy

import numpy as np

from faciesseq.hmm.context import ContextEmission
from faciesseq.hmm.em import TrainingData
from faciesseq.parallel import run_jobs

__all__ = ["Restarts"]


class Restarts:
    """The restarts of :class:`~faciesseq.hmm.model.TractHMM`'s EM (a mixin beside
    :class:`~faciesseq.hmm.em.ExpectationMaximisation`, whose ``_run`` it calls)."""

    def _named_runs(self, runs: list[dict], data: TrainingData, progress) -> list[dict]:
        """Mark (``named``) the restarts whose most deepening state carries the
        deepening tract's name (:mod:`faciesseq.hmm.identity`); when none does, turn
        the best one round the cycle and run EM again from there (an extra run, the
        only one marked). Fits without context pieces, or with other than one
        deepening tract, are left as they are."""
        from faciesseq.hmm.identity import deepening_scores, deepening_tracts, turn

        deep = deepening_tracts(self.tract_model_)
        scores = [deepening_scores(r["pieces"], self.states_.n_tracts) for r in runs]
        if len(deep) != 1 or any(s is None for s in scores) or data.clamp is not None:
            return runs
        for r, s in zip(runs, scores):
            r["named"] = int(np.argmax(s)) == deep[0]
        if any(r["named"] for r in runs):
            return runs
        best = max(runs, key=lambda r: r["objective"])
        shift = int(np.argmax(scores[runs.index(best)])) - deep[0]
        start = turn(best["pieces"], best["startprob"], best["transmat"], self.states_, shift)
        if start is None:  # no turned start to run from: every restart stays a candidate
            return [{**r, "named": True} for r in runs]
        again = self._run(data, best["seed"], len(runs), progress, start)
        again.update(named=True, turned=shift)
        return [*runs, again]

    # ------------------------------------------------------------------ API

    def _restarts(self, data: TrainingData, rng: np.random.Generator, progress) -> list[dict]:
        """The EM runs of a fit: one per restart seed, or one from a fit on a sample."""
        seeds = [int(x) for x in rng.integers(0, 2**31 - 1, size=int(self.n_restarts))]
        warm = self._warm_start_from(getattr(self, "warm_start_", None))
        if warm is not None:  # one run from a fit on a sample (graphs.choose_graph)
            self._refit_beds = data.beds  # for the calibration of _fit_choosing_graph
            return [{**self._run(data, seeds[0], 0, progress, warm), "from_sample": True}]
        if self._parallel() and len(seeds) > 1:
            # inside a restart, the chunks of a large E-step run in turn (no nested jobs)
            jobs = [(data, s, r, None, None, False) for r, s in enumerate(seeds)]
            runs = run_jobs(self._run, jobs, self.n_jobs, self.scheduler)
            if progress is not None:  # once per finished restart
                for r, run in enumerate(runs):
                    progress(r, run["monitor"].iter, run["objective"])
            return runs
        return [self._run(data, s, r, progress) for r, s in enumerate(seeds)]

    def _keep_best(self, runs: list[dict]) -> None:
        """The parameters of the best named run, and a record of every run."""
        kept = [r for r in range(len(runs)) if runs[r].get("named", True)]
        best = max(kept, key=lambda r: runs[r]["objective"])
        run = runs[best]
        self.emissions_ = run["pieces"]
        self.startprob_ = run["startprob"]
        self.transmat_ = run["transmat"]
        self.monitor_ = run["monitor"]
        self.log_likelihood_ = float(run["log_likelihood"])
        self.tract_changes_ = float(run["tract_changes"])
        self.objective_ = float(run["objective"])
        self.best_restart_ = best
        self.restarts_ = [
            {
                "restart": r,
                "seed": x["seed"],
                "objective": float(x["objective"]),
                "log_likelihood": float(x["log_likelihood"]),
                "n_iter": x["monitor"].iter,
                "converged": x["monitor"].reached_tolerance,
                "history": list(x["monitor"].history),
                "named": bool(x.get("named", True)),
                **({"from_sample": True} if x.get("from_sample") else {}),
                **({"turned": x["turned"]} if "turned" in x else {}),
            }
            for r, x in enumerate(runs)
        ]

    def _warm_start_from(self, other) -> tuple | None:
        """``(pieces, startprob, transmat)`` copied from ``other``, a fit of the same
        settings on a sample, when its vocabularies, features and states are this
        fit's; else None (the fit runs its restarts)."""
        if other is None:
            return None
        if not (self._same_coding(other) and other.states_.labels() == self.states_.labels()):
            return None
        pieces, startprob, transmat = copy.deepcopy(
            (other.emissions_, other.startprob_, other.transmat_)
        )
        for p in pieces:  # weighed as this fit's beds are (the sample's cycles differ)
            if isinstance(p, ContextEmission):
                p.weight = self.evidence_weights_.get(p.feature, 1.0)
        return pieces, startprob, transmat
