"""What a fit warns of: cautions printed by ``fit`` and ``decode`` and written into
the appendix's methods.

Each caution reads the fitted model alone, names what it saw and the measured loss
beside it, and says what the geologist can do (label a few cores, record contacts).
A fit with labels has none of these but the suggested ranks' and, where its labels
leave a tract out, the missing labels'; the contact caution also stays silent where
the user chose the features.
"""

from __future__ import annotations

import numpy as np

from faciesseq.hmm.reference import REFERENCE
from faciesseq.hmm.reference_check import unsure
from faciesseq.hmm.states import SHORT_VISIT
from faciesseq.markov.seriation import SUGGESTED

__all__ = [
    "contact_caution",
    "few_labelled_cores_caution",
    "fit_cautions",
    "long_tract_caution",
    "long_tracts",
    "missing_labels_caution",
    "read_cautions",
    "single_bed_caution",
    "single_bed_tracts",
    "suggested_ranks_caution",
    "tied_ranks_caution",
    "unlabelled_caution",
]


def fit_cautions(model) -> list[str]:
    """Every caution of a fitted model, in the order the outputs print them: those the
    fit recorded (``cautions_``, which :meth:`~faciesseq.hmm.model.TractHMM.fit` sets
    and the model file keeps as ``training.cautions``), else read from the model
    (:func:`read_cautions`; model files made before they were recorded)."""
    stored = getattr(model, "cautions_", None)
    if stored is not None:
        return list(stored)
    return read_cautions(model)


def read_cautions(model) -> list[str]:
    """The cautions read from a fitted model alone, whatever it recorded: what
    :meth:`~faciesseq.hmm.model.TractHMM.fit` records, whether it was called from
    Python or by ``faciesseq fit``."""
    found = (
        unlabelled_caution(model),
        reference_check_caution(model),
        tied_ranks_caution(model),
        missing_labels_caution(model),
        few_labelled_cores_caution(model),
        suggested_ranks_caution(model),
        single_bed_caution(model),
        long_tract_caution(model),
        contact_caution(model),
    )
    return [c for c in found if c]


#: Added to the probability note of every core decoded by a fit without labels (the
#: ``#`` line of decode's tables, the view, the appendix): the short form of
#: :func:`unlabelled_caution`, which the fit prints.
UNLABELLED_NOTE = (
    "No bed was labelled: the tract names rest on the model's priors, and on cores of "
    "generators it was not tuned on fits without labels named the tracts anywhere from "
    "near chance to 0.89 (README, 'What has been measured'); read the column as a first "
    "draft."
)


#: The caution of a fit without labels that read a reference model
#: (``benchmarks/eval_reference.py --seeds 631,632,633``; docs/hmm.md, "A reference
#: model"): each generator written blind held out, the reference learnt from the others.
REFERENCE_CAUTION = (
    "caution: no bed was labelled, so the tract names rest on the model's priors and on "
    "the reference model's trees, learnt from other cores; on cores of four generators "
    "written blind, each read with a reference learnt from the other three, fits read "
    "0.47-0.56, 0.60-0.65, 0.56-0.67 and 0.65-0.77 (balanced accuracy, chance 0.25; "
    "0.33-0.65 without the reference), and cores whose own stacking names their tracts "
    "lost up to 0.16, the demo's 0.14 (docs/hmm.md, 'A reference model'): read the column "
    "as a first draft, or label a few cores (fit --labels)"
)

#: The same note where the fit read a reference model.
REFERENCE_NOTE = (
    "No bed was labelled: the tract names rest on the model's priors and on a reference "
    "model learnt from other cores (docs/hmm.md, 'A reference model'); read the column as "
    "a first draft."
)


def unlabelled_caution(model) -> str | None:
    """A caution for every fit without labels: its tract names rest on the priors (the
    cyclic order, the one deepening tract), which were tuned on the project's own
    generators. On held-out cores of four generators written blind (with their schemes)
    it read 0.33-0.43 on one and 0.57-0.83 on another (seeds 471-475), 0.52-0.89 on the
    carbonate ramp (seeds 701-705), 0.35-0.57 on the river-dominated delta (seeds
    901-903), TST against the other tracts 0.59-0.94, and 0.72-0.96 with three
    labelled cores
    (``python benchmarks/eval_blind_generator.py --seeds 471,472,473,474,475``, with
    ``--generator``; README "What has been measured")."""
    if getattr(model, "n_labelled_", 0):
        return None
    if REFERENCE in getattr(model, "features_", ()):
        return REFERENCE_CAUTION
    if _default_tracts(model):
        measured = (
            "on cores of four generators it was not tuned on, fits without labels read "
            "0.33-0.43, 0.57-0.83, 0.52-0.89 and 0.35-0.57 (balanced accuracy, chance "
            "0.25; TST against the other tracts 0.59-0.94), against 0.72-0.96 with three "
            "labelled cores (README, 'What has been measured')"
        )
    else:
        order = " -> ".join(model.tract_model_.order)
        measured = (
            "the accuracies measured without labels (README, 'What has been measured') are "
            f"those of the default four-tract model, and this one ({order}) was not measured"
        )
    return (
        "caution: no bed was labelled, so the tract names rest on the model's priors (the "
        f"cyclic order, the one deepening tract); {measured}: read the column as a first "
        f"draft, or label a few cores (fit --labels){_reference_hint(model)}"
    )


def _reference_hint(model) -> str:
    """Where a fit without labels could read the packaged reference (the stacking
    context, the default tracts): that its check says how sure the names are."""
    if not (getattr(model, "reads_context", lambda: False)() and _default_tracts(model)):
        return ""
    return (
        "; fit --reference generators --reference-use check says how far a reference "
        "learnt elsewhere agrees with it (docs/hmm.md, 'Checking a reference')"
    )


def reference_check_caution(model) -> str | None:
    """A caution where a fit checked a reference (``reference_use="check"``,
    :mod:`faciesseq.hmm.reference_check`) and the columns with and without it shared
    less than half of the thickness: on cores of generators written blind and the
    project's scenarios, fits without a reference read 0.39 / 0.41 of the tracts
    (balanced accuracy; tuning seeds 11-13 / report seeds 651-653, 18 sets each) where
    the share was below 0.5, 0.60 / 0.58 above it; below a third fits with the reference
    read 0.66 / 0.71 against 0.39 / 0.40 without (``python benchmarks/eval_reference.py
    --seeds 651,652,653``; benchmarks/tract_model.md, "Checking the reference against the
    database's own fit")."""
    record = getattr(model, "reference_check_", None)
    if not unsure(record):
        return None
    share = f"{record['agreement']:.2f}"
    if record.get("kept") == "reference":
        kept = (
            "the fit reading it was kept, as where this share was below a third fits with "
            "the reference read 0.66-0.71 of the tracts against 0.39-0.40 without it, but "
            "not on the demo's cores (share 0.09: 0.29 against 0.43)"
        )
    else:
        kept = (
            "the fit without it was kept, and where this share was between a third and a "
            "half fits without a reference read 0.40-0.42 of the tracts (near chance)"
        )
    return (
        f"caution: the tract names are unsure: the fits with and without the reference "
        f"model gave the same tract to {share} of the thickness of these cores; {kept} "
        "(balanced accuracy on cores of generators written blind; docs/hmm.md, 'Checking "
        "a reference'): label a few cores (fit --labels)"
    )


def _default_tracts(model) -> bool:
    """Whether the model's tracts are those of the packaged four-tract model (the one
    the measured accuracies are of), whatever its skips."""
    from faciesseq.scheme import default_tract_model

    return tuple(model.tract_model_.order) == tuple(default_tract_model().order)


def tied_ranks_caution(model) -> str | None:
    """A caution where a fit without labels read no facies ranks (no scheme, or a
    scheme without ranks) or a scheme that gives every facies one rank: no bed is then
    deeper or shallower than another, so there is no stacking to read and the tract
    names rest on nothing. Without ranks and labels, the stacking generator's cores
    read at balanced accuracy 0.01-0.35, against 0.67-0.85 with ranks suggested from
    the data (docs/hmm.md, "Ranks suggested from the data")."""
    if getattr(model, "n_labelled_", 0):
        return None
    ranks = getattr(model, "ranks_", None)
    known = np.unique(ranks[np.isfinite(ranks)]) if ranks is not None else np.array([])
    if len(known) > 1:
        return None
    if len(known) == 0:
        return (
            "caution: the fit read no facies ranks (no scheme, or none with ranks) and no "
            "labels, so no bed is deeper or shallower than another and the tracts are not "
            "identified (balanced accuracy 0.01-0.35 on the stacking generator's cores, "
            "0.67-0.85 with ranks suggested from the data; docs/hmm.md): give a scheme with "
            "proximality ranks (0 = most landward), fit on ranks suggested from the data "
            "(faciesseq fit without --scheme; in Python "
            "faciesseq.markov.seriation.suggest_ranks), or label a few cores (fit --labels)"
        )
    return (
        "caution: the scheme gives every facies the same rank, so no bed is "
        "deeper or shallower than another and the tracts are not identified: give the "
        "facies their proximality ranks (0 = most landward; faciesseq scheme draft "
        "--fill-ranks suggests them), or label a few cores (fit --labels)"
    )


def missing_labels_caution(model) -> str | None:
    """A caution where a fit with labels read by the stacking trees saw no labelled bed
    of some tract: the trees learn only the tracts they are shown and give the others
    their floor probability (:class:`~faciesseq.hmm.stacking_piece.StackingEmission`),
    so the fit almost never decodes them and is sure of the tracts it does decode."""
    counts = getattr(model, "labelled_beds_", None)
    if not getattr(model, "n_labelled_", 0) or not counts:
        return None
    if "stacking" not in getattr(model, "features_", ()):
        return None
    missing = [t for t, n in counts.items() if n == 0]
    if not missing:
        return None
    seen = ", ".join(f"{t} {n}" for t, n in counts.items() if n)
    one = len(missing) == 1
    return (
        f"caution: no bed is labelled {' or '.join(missing)} (labelled beds: {seen}); the "
        "stacking trees learn only the tracts they are shown, so the fit will hardly ever "
        f"decode {'that tract' if one else 'those tracts'}, and its probabilities do not "
        "allow for them: label beds of every tract the cores hold, or fit without labels"
    )


#: Fewer labelled cores than this get :func:`few_labelled_cores_caution`: three were
#: what the accuracy with labels was measured with (README, "What has been measured").
FEW_LABELLED_CORES = 3


def few_labelled_cores_caution(model) -> str | None:
    """A caution where a fit's labels lie on fewer than :data:`FEW_LABELLED_CORES`
    cores: the tracts are learnt from one or two cores' stacking, which other sites
    express differently (with labels on one core the probabilities are not checked
    either, which the probability note says)."""
    cores = getattr(model, "labelled_cores_", None) or ()
    if not cores or len(cores) >= FEW_LABELLED_CORES:
        return None
    return (
        f"caution: labels on {len(cores)} core(s) only ({', '.join(cores)}): the fit learns "
        "the tracts from their stacking alone; three labelled cores spread over the "
        "area and the facies belts are what the measured accuracy with labels rests on "
        "(README, 'What has been measured')"
    )


def suggested_ranks_caution(model) -> str | None:
    """A caution where the fit's facies ranks were suggested from the data
    (``faciesseq fit --suggest-ranks``; :mod:`faciesseq.markov.seriation`), not given
    by a geologist: the tract names rest on their order."""
    scheme = getattr(model, "scheme", None)
    if scheme is None or scheme.name != SUGGESTED:
        return None
    order = ", ".join(scheme.codes_by_rank)
    leans = (
        "the stacking features read that order"
        if getattr(model, "n_labelled_", 0)
        else "the tract names rest on that order"
    )
    return (
        f"caution: the facies ranks were suggested from the data's transitions (landward to "
        f"basinward {order}), not given by a geologist, and {leans}; check it (faciesseq "
        "scheme draft --fill-ranks writes it as a scheme)"
    )


def single_bed_tracts(model) -> dict[str, float]:
    """The tracts a fit without labels spends on single beds, with their beds per visit
    (:meth:`~faciesseq.hmm.states.StateSpace.short_tracts`); none for a fit with labels."""
    if getattr(model, "n_labelled_", 0):
        return {}
    return model.states_.short_tracts(model.transmat_)


def single_bed_caution(model) -> str | None:
    """A caution where a fit without labels spends a tract on single beds
    (:meth:`~faciesseq.hmm.states.StateSpace.short_tracts`), else None.

    On simulated cores of known tracts, fits without labels with such a tract read
    the tracts worse, and the short tract was the one misread: its beds, or those of
    its neighbour named after it (``benchmarks/tract_model.md``, "A tract spent on
    single beds")."""
    short = single_bed_tracts(model)
    if not short:
        return None
    listed = ", ".join(f"{t} {b:.1f}" for t, b in short.items())
    one = len(short) == 1
    return (
        f"caution: {', '.join(short)} {'lasts' if one else 'last'} fewer than "
        f"{SHORT_VISIT:g} beds per visit of the fitted chain ({listed}): a tract is a stack "
        "of parasequences, and on simulated cores fits without labels that spent a tract on "
        "single beds misread it, or named a neighbouring tract after it (mean balanced "
        "accuracy 0.55-0.60 against 0.73-0.79 for the other fits); read "
        f"{'that tract and its' if one else 'those tracts and their'} neighbours as unsure, "
        "or label a few cores (fit --labels); where a cycle is itself one or two beds (thin "
        "cyclothems), tracts this short are expected"
    )


def long_tracts(model) -> dict[str, float]:
    """The tracts of a fit without labels whose expected beds per visit
    (:meth:`~faciesseq.hmm.states.StateSpace.mean_beds`, ``inf`` for a tract never
    left) exceed the training beds per core, with that number; none for a fit with
    labels or a model that does not record its training cores."""
    cores = len(getattr(model, "cores_", ()) or ())
    n_beds = getattr(model, "n_train_beds_", None)
    if getattr(model, "n_labelled_", 0) or not cores or not n_beds:
        return {}
    beds = model.states_.mean_beds(model.transmat_)
    return {t: float(b) for t, b in zip(model.states_.tracts, beds) if b > n_beds / cores}


def long_tract_caution(model) -> str | None:
    """A caution where a fit without labels, once in a tract, stays there longer on
    average than a whole training core (expected beds per visit,
    :meth:`~faciesseq.hmm.states.StateSpace.mean_beds`, against the training beds per
    core), else None.

    A base-level cycle holds its systems tracts in turn, so a core holding a sequence
    or more shows several (common practice). A chain that does not leave a tract
    within a core's length decodes whole cores as that tract: what a fit without
    labels made of a new user's invented cores, shallowing-upward cycles of random
    amplitude that do not stack into tracts (every bed of four cores one tract at
    probability 0.95-0.97, the calibration by simulation satisfied, since the model's
    own cores are one tract too). On 18 fits without labels of simulated cores of known
    tracts it spoke on 3, which read them at balanced accuracy 0.23-0.29 (chance 0.25),
    and was silent on the 15 others (0.20-0.79): a sign of a fit gone wrong where it
    speaks, no guarantee where it is silent (benchmarks/tract_model.md, "A tract that
    outlasts the cores").
    """
    long = long_tracts(model)
    if not long:
        return None
    per_core = model.n_train_beds_ / len(model.cores_)
    listed = ", ".join(
        f"{t} {'for ever' if not np.isfinite(b) else f'{b:.0f} beds'}" for t, b in long.items()
    )
    return (
        f"caution: once entered, the fitted chain stays in {', '.join(long)} longer than a "
        f"training core ({listed} per visit, against {per_core:.0f} beds per core), so it reads "
        "whole cores as one tract, as fits without labels do where the cycles do not stack "
        "into tracts; on simulated cores such fits read the tracts at chance: the column is "
        "not an interpretation, whatever its probabilities say; check the facies ranks and "
        "the cycles (faciesseq markov), or label a few cores (fit --labels)"
    )


def contact_caution(model) -> str | None:
    """A note where a fit without labels, on the default features, read no contact
    types (the source has none): the falling stage's sharp or erosional base (the
    regressive surface of marine erosion under a sharp-based shoreface; common
    practice) is its clearest mark without labels.
    Measured on the stacking generator's shoreface cores written without contacts
    (``configs/stacking-minimal-table.yaml``, report seeds): falling-stage recall
    0.51 -> 0.22, balanced accuracy 0.854 -> 0.776; three labelled cores 0.972."""
    if getattr(model, "n_labelled_", 0) or model.features is not None:
        return None  # labelled, or the features chosen by the user
    if "contact" in model.features_ or not model.reads_context():
        return None
    if "FSST" not in model.tract_model_.order:
        return None  # no falling stage to miss
    return (
        "note: the source has no contact types (a contact column: sharp, erosional, "
        "gradational), so the falling stage's sharp or erosional base is not seen; on "
        "simulated shoreface cores without them its recall fell from 0.51 to 0.22 "
        "(docs/hmm.md); record contacts, or label a few cores (--labels)"
    )
