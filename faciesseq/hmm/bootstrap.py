"""Probabilities checked without labels: a parametric bootstrap of a fitted tract model.

Cores are simulated from the fitted model (tract paths from its chain, facies
from a per-tract facies chain, thicknesses from a per-tract log-normal, contact
types from its contact piece, all weighted by the tract posteriors of the
training beds), decoded by the model, and the temperature that best matches
their known tracts is kept (Efron & Tibshirani 1993, An Introduction to the
Bootstrap, ch. 6; temperature scaling, :mod:`faciesseq.hmm.calibration`). The
stacking context of the simulated beds is computed as for real cores, so the
evidence that overlapping windows count more than once is kept and corrected;
a model whose idea of a tract is not the geologist's is not.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from faciesseq.hmm import engine
from faciesseq.hmm.encoding import EncodedBeds

__all__ = ["calibrate_by_simulation", "simulate_beds"]


def _tract_posteriors(model, beds: EncodedBeds) -> np.ndarray:
    out = np.zeros((len(beds), model.states_.n_tracts))
    for a, b, lengths, _ in model._batches(beds.lengths):
        le = model._log_emission(model.emissions_, beds.slice(a, b, lengths))
        post = engine.forward_backward(le, lengths, model.startprob_, model.transmat_)
        out[a:b] = model.states_.to_tracts(post.gamma)
    return out


def _generator(model, beds: EncodedBeds, tables) -> tuple[np.ndarray, np.ndarray]:
    """Per-tract facies chain and log-thickness (mean, sd), weighted by the
    fitted model's tract posteriors of the training beds."""
    gamma = _tract_posteriors(model, beds)
    S, V = model.states_.n_tracts, len(model.facies_)
    chain = np.full((S, V + 1, V), 0.01)
    if model.unit == "beds":
        chain[:, np.arange(V), np.arange(V)] = 0.0
    below = np.where(beds.previous >= 0, beds.previous, V)
    ok = beds.facies >= 0
    for s in range(S):
        np.add.at(chain[s], (below[ok], beds.facies[ok]), gamma[ok, s])
    chain /= chain.sum(axis=2, keepdims=True)
    th = np.concatenate([t["thickness"].to_numpy(float) for t in tables])
    log_th = np.log(np.where(th > 0, th, 1.0))
    w = gamma / np.maximum(gamma.sum(axis=0), 1e-12)
    mean = w.T @ log_th
    sd = np.sqrt(np.maximum(w.T @ log_th**2 - mean**2, 1e-6))
    return chain, np.column_stack([mean, sd])


def calibrate_by_simulation(model, beds: EncodedBeds, tables, rng) -> dict:
    """Temperature from a parametric bootstrap: cores simulated from the fitted
    model (:func:`faciesseq.hmm.calibration.simulate_beds`) are decoded, and
    the temperature that best matches their known tracts is kept."""
    from faciesseq.hmm.calibration import HeldOut, fit_temperature

    chain, thickness = _generator(model, beds, tables)
    lengths = [int(n) for n in beds.lengths if n > 0]
    budget, chosen = 20_000, []
    for i in rng.permutation(len(lengths)):
        if sum(chosen) >= budget:
            break
        chosen.append(lengths[i])
    drawn, tracts = simulate_beds(
        chosen,
        model.startprob_,
        model.transmat_,
        model.states_.state_tract,
        chain,
        thickness,
        rng,
    )
    frames = [_simulated_table(model, d, tracts_of) for d, tracts_of in _split(drawn, tracts)]
    sim = model._encode(frames)
    le = model._log_emission(model.emissions_, sim)
    held = HeldOut(
        le, sim.lengths, model.startprob_, model.transmat_, tracts, model.states_.state_tract
    )
    result = fit_temperature([held])
    return {**result, "method": "parametric bootstrap", "simulated_successions": len(chosen)}


def _simulated_table(model, drawn: dict, tracts: np.ndarray) -> pd.DataFrame:
    table = pd.DataFrame(
        {
            "facies": np.asarray(model.facies_, dtype=object)[drawn["facies"]],
            "thickness": drawn["thickness"],
        }
    )
    contact = next((p for p in model.emissions_ if p.name == "contact"), None)
    if contact is not None and len(model.contacts_):
        rng = np.random.default_rng(len(table))
        probs = contact.emissionprob_[tracts]
        cum = probs.cumsum(axis=1)
        pick = (rng.random(len(table))[:, None] > cum).sum(axis=1)
        table["contact"] = np.asarray(model.contacts_, dtype=object)[
            np.minimum(pick, len(model.contacts_) - 1)
        ]
    return table


def _split(drawn: list[dict], tracts: np.ndarray):
    """Pairs (drawn succession, its tracts) from :func:`simulate_beds` output."""
    start = 0
    for d in drawn:
        n = len(d["facies"])
        yield d, tracts[start : start + n]
        start += n


def _chain_path(startprob, transmat, n, rng) -> np.ndarray:
    path = np.empty(n, dtype=np.int64)
    path[0] = rng.choice(len(startprob), p=startprob)
    cum = np.cumsum(transmat, axis=1)
    for t in range(1, n):
        path[t] = min(int(np.searchsorted(cum[path[t - 1]], rng.random())), len(startprob) - 1)
    return path


def simulate_beds(
    lengths: Sequence[int],
    startprob: np.ndarray,
    transmat: np.ndarray,
    state_tract: np.ndarray,
    facies_chain: np.ndarray,
    thickness: np.ndarray,
    rng: np.random.Generator,
) -> tuple[list, np.ndarray]:
    """Successions of beds drawn from a fitted tract model (a parametric bootstrap).

    The tract path follows the fitted chain; within a tract the facies follow
    ``facies_chain[tract, below, above]`` (row ``below = V`` for the first bed of
    a succession) and the log thickness ``thickness[tract] = (mean, sd)``. The
    stacking context of these beds is then computed as for real cores, so the
    overlap of neighbouring windows -- the evidence the emission pieces count
    more than once -- is kept (Efron & Tibshirani 1993, An Introduction to the
    Bootstrap, ch. 6). Returns ``(tables, tract index of every bed)``, each
    table base to top with ``facies`` (index), ``thickness``.
    """
    tables, tracts = [], []
    V = facies_chain.shape[2]
    for n in lengths:
        tract = state_tract[_chain_path(startprob, transmat, int(n), rng)]
        fac = np.empty(int(n), dtype=np.int64)
        below = V
        for t in range(int(n)):
            p = facies_chain[tract[t], below]
            fac[t] = rng.choice(V, p=p)
            below = fac[t]
        mean, sd = thickness[tract, 0], thickness[tract, 1]
        tables.append({"facies": fac, "thickness": np.exp(mean + sd * rng.standard_normal(n))})
        tracts.append(tract)
    return tables, np.concatenate(tracts) if tracts else np.zeros(0, dtype=np.int64)
