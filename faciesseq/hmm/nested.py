"""The nested start: EM of a tract graph starts from a fit without the tracts that may be absent.

A tract the trade allows to be missing, the falling stage above all (absent
where subsidence outpaces the base-level fall; Catuneanu et al. 2009,
Earth-Science Reviews 92:1-33), can be thin or rare in a whole database. EM on
the full graph does not then leave its state empty: it spends it on part of
another tract (the deep lower beds of every highstand, say), and since the
tracts are named by their order after the one rising tract, each name after it
moves by one place. The likelihood cannot tell the two readings apart: on the
stacking generator with two or three parasequences per tract the misnamed fit
had the *higher* objective (``benchmarks/tract_model.md``, "The nested start").

A fit without those tracts has no state to spare and names the tracts it keeps
from their order; its tract posteriors, with a share of the posteriors of the
kept tracts on either side of each left-out tract given to it, are the weights
EM of the full graph starts from. EM may then move anywhere; it settles on the
optimum near that reading. Starting a larger mixture or hidden Markov model
from a fitted smaller one and splitting states is common practice in EM (e.g.
the mixture splitting of speech recognisers, Young et al., The HTK Book;
the split moves of Ueda et al. 2000, Neural Computation 12:2109-2128; both from
memory). Written here because no library fits these models.

It fails the other way where the TST is often missing: the reduced fit must still
find a transgression in every cycle and spends that state on the lowstands
(``configs/stacking-missing-transgression.yaml``; ``benchmarks/tract_model.md``,
"What the nested start costs"), and its transgressive tract then deepens less
upward than the one a fit from the priors finds. So graph choice
(:func:`faciesseq.hmm.graphs.choose_graph`) fits its candidates from the priors
alone as well, and :func:`kept_start` keeps the lowest-BIC of those where its
TST deepens clearly more (:data:`PRIORS_MARGIN`): the trade names the TST by its
deepening-upward stacking (Catuneanu et al. 2009), so a reading whose TST deepens
less has found the transgression less well. ``TractHMM(nested_start=False)`` and ``faciesseq fit
--no-nested-start`` start from the priors alone.
"""

from __future__ import annotations

import numpy as np

from faciesseq.hmm.em import TrainingData
from faciesseq.hmm.encoding import EncodedBeds
from faciesseq.scheme import TractModel

__all__ = [
    "PRIORS_MARGIN",
    "SHARE",
    "fit_reduced",
    "kept_start",
    "reduced_tract_model",
    "start_weights",
    "tst_deepening",
    "with_nested_start",
]

#: Share of the posterior of each kept neighbour that a left-out tract starts with.
#: Chosen before measuring; 0.15 and 0.4 gave the same fits on the tuning seeds.
SHARE = 0.25
#: How much more the TST of the lowest-BIC fit from the priors alone must deepen (the
#: score of :func:`faciesseq.hmm.identity.deepening_scores`) than that of the
#: lowest-BIC nested fit for it to be kept. Set on 18 fits of known tracts, then checked on 42
#: fits of seeds never looked at (``benchmarks/tract_model.md``, "Two starts").
PRIORS_MARGIN = 0.25


def reduced_tract_model(tract_model: TractModel) -> TractModel | None:
    """``tract_model`` without the regressive tracts that may be absent (its
    ``skips`` whose trend is not deepening), in the same cyclic order, with no
    skips and the surfaces between the tracts that become neighbours; ``None``
    where there is no such tract or fewer than two tracts would be left."""
    from dataclasses import replace

    left_out = {c for c in tract_model.skips if tract_model.tract(c).trend != "deepening"}
    order = tuple(c for c in tract_model.order if c not in left_out)
    if not left_out or len(order) < 2:
        return None
    reduced = replace(
        tract_model,
        tracts=tuple(t for t in tract_model.tracts if t.code in order),
        order=order,
        skips=(),
        substates={c: n for c, n in tract_model.substates.items() if c in order},
    )
    return reduced.with_allowed_surfaces()


def fit_reduced(model, succ, tract_model: TractModel):
    """``model``'s settings fitted on ``succ`` with the tracts of ``tract_model``
    that may be absent left out (:func:`reduced_tract_model`), no calibration;
    ``None`` where nothing is left out."""
    reduced = reduced_tract_model(tract_model)
    if reduced is None:
        return None
    params = {
        **model.get_params(),
        "tract_model": reduced,
        "graph": "fixed",
        "calibration_folds": 0,
        "nested_start": False,
    }
    fitted = type(model)(**params)
    fitted._check_hyper()
    return fitted._fit_once(succ, None, None)


def start_weights(reduced_fit, beds: EncodedBeds, order: tuple[str, ...]) -> np.ndarray:
    """``(beds, len(order))`` starting weights of EM on the tracts ``order``: the
    tract posteriors of ``reduced_fit`` on ``beds``, each left-out tract taking
    :data:`SHARE` of the posterior of the nearest kept tract below and above it
    in the cycle."""
    kept = list(reduced_fit.tract_model_.order)
    post = reduced_fit._tract_posteriors(beds)
    out = np.zeros((len(post), len(order)))
    for j, code in enumerate(order):
        if code in kept:
            out[:, j] = post[:, kept.index(code)]
    for j, code in enumerate(order):
        if code in kept:
            continue
        for step in (-1, 1):
            k = j + step
            while order[k % len(order)] not in kept:
                k += step
            moved = SHARE * post[:, kept.index(order[k % len(order)])]
            out[:, j] += moved
            out[:, k % len(order)] -= moved
    return out / out.sum(axis=1, keepdims=True)


def tst_deepening(model) -> float | None:
    """How much the fitted TST of ``model`` deepens upward: its score of
    :func:`faciesseq.hmm.identity.deepening_scores` (``None`` where the model has
    no deepening pieces or not one deepening tract)."""
    from faciesseq.hmm.identity import deepening_scores, deepening_tracts

    deep = deepening_tracts(model.tract_model_)
    scores = deepening_scores(model.emissions_, model.states_.n_tracts)
    return None if scores is None or len(deep) != 1 else float(scores[deep[0]])


def kept_start(nested_fit, priors_fit) -> dict:
    """Which of two fits of one database to keep, the one started nested or the one
    started from the priors alone (each the lowest ICL of its candidates): the nested
    fit, unless the other's TST deepens more by over :data:`PRIORS_MARGIN`. The
    record: ``kept`` (``"nested"`` or ``"priors"``), ``tst_deepening`` of each,
    ``margin``."""
    deep = {"nested": tst_deepening(nested_fit), "priors": tst_deepening(priors_fit)}
    clearer = None not in deep.values() and deep["priors"] > deep["nested"] + PRIORS_MARGIN
    return {
        "kept": "priors" if clearer else "nested",
        "tst_deepening": deep,
        "margin": PRIORS_MARGIN,
    }


def with_nested_start(model, succ, data: TrainingData) -> TrainingData:
    """``data`` of a fit of ``model`` without labels with the starting weights of the
    nested start: from the fit handed over by
    :func:`~faciesseq.hmm.graphs.choose_graph` (``model.nested_from_``) or one made
    here from the model's tract graph; unchanged where there is none or its
    vocabularies are not the model's. Records ``model.nested_start_``."""
    from dataclasses import replace

    warm = getattr(model, "warm_start_", None)
    if warm is not None:  # one EM run from a fit on a sample, which had the start
        model.nested_start_ = getattr(warm, "nested_start_", None)
        return data
    reduced = getattr(model, "nested_from_", None)
    if reduced is None and model.nested_start and model.reads_context():
        reduced = fit_reduced(model, succ, model.tract_model_)
    if reduced is None or not model._same_coding(reduced):
        return data
    order = model.tract_model_.order
    model.nested_start_ = {
        "tracts": list(reduced.tract_model_.order),
        "left_out": [c for c in order if c not in reduced.tract_model_.order],
        "share": SHARE,
        "log_likelihood": float(reduced.log_likelihood_),
    }
    return replace(data, start=start_weights(reduced, data.beds, order))
