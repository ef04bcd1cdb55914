"""Calibration of the tract posteriors: one temperature, chosen by cross-validation by core.

The emission pieces of a bed are multiplied as if they were independent, but
they read the same facies succession (the trend table, the rank step and the
stacking window all see the rank of the bed below), and the stacking trees are
learnt from the same few labelled cores; the posteriors are then more certain
than the decoded column is right (on the demo database, held-out beds decoded
with probability >= 0.9 were right 61 % of the time). Temperature scaling (Guo,
Pleiss, Sun & Weinberger 2017, "On calibration of modern neural networks",
ICML) divides every log-probability of the chain by one number ``T``:

- log-emissions become ``log p(obs | state) / T``;
- the start and transition probabilities are raised to ``1 / T`` and
  renormalised per row (structural zeros stay zero), so the tempered chain is
  again a hidden Markov model the engine decodes as it is.

``T`` is the one that minimises the Brier score (Brier 1950, Monthly Weather
Review 78:1-3) of the interpreter's tract over the labelled beds of held-out
cores, each decoded by a model fitted without its core (K folds of labelled
cores; unlabelled cores stay in every training set), kept only where it lowers
the held-out log loss too (:func:`fit_temperature`): else ``T = 1``. The Brier score rather
than the log-likelihood: both are proper scores and on the calibration folds
of the simulated scenarios they choose temperatures within 0.25 of each other
(1.9-3.4), but the log-likelihood is dominated by the few beds decoded wrong
with near certainty (cores from a part of the basin no labelled core comes
from) and on the demo database it flattens the posteriors below the accuracy
(T 7.0 and 15.5, mean probability of the most probable tract 0.47 and 0.36 for
0.55 and 0.56 of the beds right), where the Brier score stops at 5.2 and 5.2
(0.55 and 0.57; supervised and semi-supervised fits,
``python benchmarks/eval_calibration.py``). ``T > 1`` widens the posteriors; the
search never goes below 1, which would sharpen them (:func:`fit_temperature`). Only
probabilities change: the tract column is the Viterbi path
of the untempered model, and likelihoods, BIC and EM are untempered.

Limits: the temperature calibrates the probabilities to the labels it is
given, so with an interpreter who is often wrong they measure agreement with
that interpreter; and one number for the whole model cannot tell which cores
lie outside what the labelled cores cover (in the demo's cross-validation the
one interpreted southern core, decoded by models that saw no southern core,
keeps 0.51 of its beds at probability >= 0.9 for 0.21 of them right).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from faciesseq.core import Succession
from faciesseq.errors import InputError
from faciesseq.hmm import engine
from faciesseq.parallel import run_jobs

__all__ = [
    "TEMPERATURE_BOUNDS",
    "HeldOut",
    "calibrate_by_folds",
    "calibration_checked",
    "describe_calibration",
    "fit_temperature",
    "held_out_scores",
    "probability_meta",
    "probability_note",
    "temper",
]

#: Search interval of the temperature: from 1, so the calibration only ever widens the
#: probabilities (:func:`fit_temperature` says why), to 20.
TEMPERATURE_BOUNDS = (1.0, 20.0)


def temper(
    log_emission: np.ndarray, startprob: np.ndarray, transmat: np.ndarray, temperature: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The tempered chain: ``log_emission / T``, ``startprob ** (1/T)`` and
    ``transmat ** (1/T)`` renormalised per row; unchanged when ``T == 1``."""
    if temperature == 1.0:
        return log_emission, startprob, transmat
    inv = 1.0 / float(temperature)
    with np.errstate(divide="ignore"):
        pi = np.power(startprob, inv)
        A = np.power(transmat, inv)
    pi = pi / pi.sum()
    A = A / A.sum(axis=1, keepdims=True)
    return log_emission * inv, pi, A


@dataclass(frozen=True)
class HeldOut:
    """The log-emissions and chain of one held-out fold, with its labels.

    ``labels``: tract index of every row, -1 where the bed is unlabelled.
    ``state_tract``: tract index of every state.
    """

    log_emission: np.ndarray
    lengths: np.ndarray
    startprob: np.ndarray
    transmat: np.ndarray
    labels: np.ndarray
    state_tract: np.ndarray


def _tract_posteriors(fold: HeldOut, temperature: float) -> np.ndarray:
    le, pi, A = temper(fold.log_emission, fold.startprob, fold.transmat, temperature)
    gamma = engine.forward_backward(le, fold.lengths, pi, A).gamma
    n_tracts = int(fold.state_tract.max()) + 1
    out = np.zeros((len(gamma), n_tracts))
    for s, t in enumerate(fold.state_tract):
        out[:, t] += gamma[:, s]
    return out


def held_out_scores(folds: Sequence[HeldOut], temperature: float) -> dict:
    """Scores of the tempered posteriors over the labelled beds of the folds:
    ``brier`` (mean ``sum_k (p_k - y_k)^2``), ``log_loss`` (mean ``-log p_y``),
    ``confidence`` (mean probability of the most probable tract),
    ``accuracy`` (fraction of beds whose most probable tract is the label) and
    ``even_brier``, the Brier score of an even guess among the K tracts, ``1 - 1/K``
    (a yardstick for the reader: ``(1 - 1/K)^2 + (K - 1)/K^2``)."""
    probs, labels = [], []
    for fold in folds:
        rows = np.flatnonzero(fold.labels >= 0)
        if rows.size:
            probs.append(_tract_posteriors(fold, temperature)[rows])
            labels.append(fold.labels[rows])
    if not probs:
        raise InputError("no labelled held-out beds to calibrate on")
    p, y = np.concatenate(probs), np.concatenate(labels)
    onehot = np.zeros_like(p)
    onehot[np.arange(len(y)), y] = 1.0
    return {
        "brier": float(np.mean(np.sum((p - onehot) ** 2, axis=1))),
        "log_loss": float(-np.mean(np.log(np.clip(p[np.arange(len(y)), y], 1e-12, None)))),
        "confidence": float(np.mean(p.max(axis=1))),
        "accuracy": float(np.mean(p.argmax(axis=1) == y)),
        "even_brier": 1.0 - 1.0 / p.shape[1],
    }


def fit_temperature(folds: Sequence[HeldOut]) -> dict:
    """The temperature minimising the held-out Brier score, at least 1, kept only where
    it also lowers the held-out log loss.

    Bounded one-dimensional search on ``log T`` (scipy's ``minimize_scalar``,
    method ``"bounded"``) within :data:`TEMPERATURE_BOUNDS`.

    *Never below 1.* The held-out folds are the labelled cores themselves, which a
    geologist chose and which the other folds resemble; they show how right the model
    is on cores like them, and measured on the forward model it reads the cores where
    no labelled core lies worse (0.56-0.76 against 0.79-0.94 balanced accuracy, three
    labelled cores; ``docs/hmm.md``, "Where three labelled cores leave the model
    unsure"). A temperature below 1 would spread the folds' certainty over the whole
    database: with two labelled cores, folds decoded all right drove the Brier score
    to the search's old floor of 0.25 and the mean probability of the decoded tract to
    1.00 on every core. Widening is what held-out folds can support; sharpening is
    not. On the simulated and demo folds of ``docs/hmm.md`` ("Calibration of the
    probabilities") every temperature chosen was above 1, so the floor changes none
    (``python benchmarks/eval_calibration.py``, 2026-12-05).

    *Both proper scores.* The Brier score and the log loss are both proper scores: a
    temperature that makes the model's probabilities more honest lowers both. Where
    the Brier score's temperature raises the log loss, the two disagree on whether
    the model is too sure or too unsure, and the held-out beds cannot settle it; the
    temperature is then 1 (the model's own probabilities), never a guess. Neither
    rule has a threshold to tune.

    Returns
    -------
    dict
        ``{"temperature", "n_beds", "before", "after"}``, the last two the
        :func:`held_out_scores` at ``T = 1`` and at the kept ``T``; where the Brier
        score's temperature was not kept, also ``"rejected"``: that temperature and
        its scores (``{"temperature", "scores"}``).
    """
    from scipy.optimize import minimize_scalar

    before = held_out_scores(folds, 1.0)
    n_beds = int(sum(int(np.sum(f.labels >= 0)) for f in folds))
    lo, hi = (math.log(b) for b in TEMPERATURE_BOUNDS)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        res = minimize_scalar(
            lambda x: held_out_scores(folds, math.exp(x))["brier"],
            bounds=(lo, hi),
            method="bounded",
            options={"xatol": 1e-3},
        )
    t = float(np.clip(math.exp(res.x), *TEMPERATURE_BOUNDS))
    after = held_out_scores(folds, t)
    if not after["brier"] < before["brier"]:  # never worse than leaving the model alone
        return {"temperature": 1.0, "n_beds": n_beds, "before": before, "after": before}
    if not after["log_loss"] <= before["log_loss"]:  # the two proper scores disagree
        return {
            "temperature": 1.0,
            "n_beds": n_beds,
            "before": before,
            "after": before,
            "rejected": {"temperature": t, "scores": after},
        }
    return {"temperature": t, "n_beds": n_beds, "before": before, "after": after}


def calibration_checked(calibration: object) -> bool:
    """Whether a model's tract probabilities were checked against known tracts.

    Parameters
    ----------
    calibration
        The calibration record of a fit (``TractHMM.calibration_``), as read
        from a model file (``None`` or anything else for old or odd files).

    Returns
    -------
    bool
        True where the record holds the scores ``after`` calibration: held-out
        labelled cores, or cores simulated from the fitted model (parametric
        bootstrap).
    """
    return isinstance(calibration, dict) and isinstance(calibration.get("after"), dict)


def _bootstrap(cal: dict) -> bool:
    return cal.get("method") == "parametric bootstrap"


def _checked_at_one(cal: dict) -> str:
    where = (
        "cores simulated from the fitted model (parametric bootstrap)"
        if _bootstrap(cal)
        else "held-out labelled cores"
    )
    rejected = cal.get("rejected")
    try:
        t, b, a = rejected["temperature"], cal["before"], rejected["scores"]
        return (
            f"Tract probabilities checked on {where}, {cal['n_beds']} beds: the Brier score "
            f"was lowest at a temperature of {t:.2f} ({b['brier']:.3f} -> {a['brier']:.3f}), "
            f"but that raised the log loss from {b['log_loss']:.2f} to {a['log_loss']:.2f} "
            f"(mean probability of the most probable tract {b['confidence']:.2f} -> "
            f"{a['confidence']:.2f}, for {b['accuracy']:.2f} of the beds right at temperature "
            "1); the two scores disagree, so the probabilities are left as the model gives "
            "them (temperature 1)."
        )
    except (KeyError, TypeError, ValueError):
        pass
    return (
        f"Tract probabilities checked on {where}: no temperature scored "
        "better than 1, so they are left as the model gives them."
    )


def _chosen_by(cal: dict) -> str:
    if _bootstrap(cal):
        return (
            f"chosen on {cal['simulated_successions']} successions simulated from the fitted "
            "model (parametric bootstrap): on their"
        )
    return (
        f"chosen by {cal['folds']}-fold cross-validation over {cal['cores']} labelled cores: "
        "on their"
    )


def describe_calibration(temperature: float, calibration: dict | None) -> str:
    """One sentence on how a model's tract probabilities were calibrated.

    Parameters
    ----------
    temperature
        The model's temperature (``TractHMM.temperature_``).
    calibration
        The record a fit leaves (``TractHMM.calibration_``), read from a model
        file as it is: cross-validation folds, a parametric bootstrap, a
        ``skipped`` reason, or anything else.

    Returns
    -------
    str
        One line (no newline), for the ``fit`` command's report, the decode
        outputs and the appendix.
    """
    cal = calibration if isinstance(calibration, dict) else {}
    if temperature == 1.0 and "skipped" not in cal and "after" in cal:
        return _checked_at_one(cal)
    if temperature == 1.0:
        why = cal.get("skipped", "no record of a calibration in the model")
        return f"Tract probabilities not calibrated ({why}): temperature 1."
    try:
        b, a = cal["before"], cal["after"]
        return (
            f"Tract probabilities calibrated by a temperature of {temperature:.2f}"
            + (
                " (the largest the search allows: the model reads its own cores no better "
                "than this)"
                if temperature >= 0.99 * TEMPERATURE_BOUNDS[1]
                else ""
            )
            + f", {_chosen_by(cal)} {cal['n_beds']} held-out beds the Brier score fell from "
            f"{b['brier']:.3f} to {a['brier']:.3f}{_yardstick(a)} and the mean probability "
            f"of the most probable tract from {b['confidence']:.2f} to {a['confidence']:.2f}, for "
            f"{a['accuracy']:.2f} of the beds right; the tract column is not changed by it"
            + (
                " (checked against the model's own simulations, not against a geologist's reading)."
                if _bootstrap(cal)
                else "."
            )
        )
    except (KeyError, TypeError, ValueError):
        return (
            f"Tract probabilities at a temperature of {temperature:.2f} (the model file "
            "does not say how it was chosen); the tract column is not changed by it."
        )


def _yardstick(scores: dict) -> str:
    """The Brier score of an even guess beside the calibrated one, where the record has
    it (model files from 2026-12-05 on): 0.69 reads as a success without it."""
    even = scores.get("even_brier")
    if not isinstance(even, int | float) or not 0 < even < 1:
        return ""
    return f" (an even guess among the {round(1 / (1 - even))} tracts scores {even:.2f})"


def probability_note(temperature: float, calibration: object) -> str:
    """One line saying whether and how a model's probabilities were checked.

    Parameters
    ----------
    temperature, calibration
        As for :func:`describe_calibration`.

    Returns
    -------
    str
        For a checked model (:func:`calibration_checked`) the sentence of
        :func:`describe_calibration`; otherwise that the probabilities are the
        model's own and were not checked against known tracts, with the reason.
    """
    if calibration_checked(calibration):
        return describe_calibration(temperature, calibration)
    cal = calibration if isinstance(calibration, dict) else {}
    why = cal.get("skipped", "no record of a calibration in the model")
    return (
        "Tract and surface probabilities are the model's own and were not checked against "
        f"known tracts ({why})."
    )


def probability_meta(temperature: float, calibration: object) -> dict[str, object]:
    """The entries ``TractHMM.decode`` adds to ``Interpretation.meta``.

    Parameters
    ----------
    temperature, calibration
        As for :func:`describe_calibration`.

    Returns
    -------
    dict
        ``probabilities_checked`` (:func:`calibration_checked`) and
        ``probabilities_note`` (:func:`probability_note`).
    """
    return {
        "probabilities_checked": calibration_checked(calibration),
        "probabilities_note": probability_note(temperature, calibration),
    }


def calibrate_by_folds(
    model,
    succ: Sequence[Succession],
    clamp: np.ndarray,
    rng: np.random.Generator,
    params: dict | None = None,
) -> dict:
    """Temperature of ``model``'s posteriors by K-fold cross-validation over the
    labelled cores (the module docstring): each fold's model is fitted,
    with one restart and the same hyper-parameters (``params``, default
    ``model``'s), on every succession but those of its held-out cores, whose
    labelled beds are then scored. The folds are independent jobs
    (:func:`faciesseq.parallel.run_jobs`)."""
    tracts = list(model.tract_model_.order)
    codes = [
        np.where(m.sum(axis=1) == 1, m.argmax(axis=1), -1)
        for m in np.split(clamp, np.cumsum([len(s) for s in succ])[:-1])
    ]
    cores = list(dict.fromkeys(s.core for s, c in zip(succ, codes) if (c >= 0).any()))
    k = min(int(model.calibration_folds), len(cores))
    if k < 2:
        return {
            "skipped": f"calibration needs labels on 2 cores and 2 folds; {len(cores)} "
            f"labelled core(s), calibration_folds={model.calibration_folds}"
        }
    fold_of = {c: i % k for i, c in enumerate(cores[j] for j in rng.permutation(len(cores)))}
    params = {**(params or model.get_params()), "calibration_folds": 0, "n_restarts": 1}
    params["tract_model"] = model.tract_model_  # the fit's graph, whatever a fold's labels show
    params.update(n_jobs=1, scheduler=None)  # the folds are the jobs
    jobs = []
    for f in range(k):
        train = [i for i, s in enumerate(succ) if fold_of.get(s.core) != f]
        test = [i for i, s in enumerate(succ) if fold_of.get(s.core) == f]
        seed = int(rng.integers(0, 2**31 - 1))  # drawn in fold order, as before any job runs
        labels = [[tracts[j] if j >= 0 else None for j in codes[i]] for i in train]
        held_out = ([succ[i] for i in test], np.concatenate([codes[i] for i in test]))
        fold = params | {"random_state": seed}
        jobs.append((type(model), fold, [succ[i] for i in train], labels, *held_out))
    held = run_jobs(_held_out_fold, jobs, model.n_jobs, model.scheduler)
    return {**fit_temperature(held), "folds": k, "cores": len(cores)}


def _held_out_fold(
    estimator: type, params: dict, train: list, labels: list, test: list, test_codes: np.ndarray
) -> HeldOut:
    """One fold of :func:`calibrate_by_folds`: an ``estimator`` (the tract model's class)
    fitted on ``train`` (one job of :func:`faciesseq.parallel.run_jobs`), and its chain
    and log-emissions of ``test``."""
    sub = estimator(**params)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the main fit has said it all
        sub.fit(train, labels=labels)
        beds = sub._encode([s.beds for s in test])
        le = sub._log_emission(sub.emissions_, beds)
    return HeldOut(
        le, beds.lengths, sub.startprob_, sub.transmat_, test_codes, sub.states_.state_tract
    )
