"""The systems-tract hidden Markov model: :class:`TractHMM`.

Hidden states are the systems tracts of a tract model (each optionally a
left-to-right chain of sub-states, :mod:`faciesseq.hmm.states`); observations
are the beds (or depth-grid cells) of described cores, base to top; the
emission of a bed is the product of the selected pieces of
:mod:`faciesseq.hmm.emissions`. Fitting is EM (Baum et al. 1970; Dempster,
Laird & Rubin 1977) for the *maximum a posteriori* parameters under Dirichlet
pseudo-counts (and a variance prior for Gaussian pieces): beds with an
interpreter's tract are clamped to it, the others are free, so one algorithm
covers supervised (all labelled), semi-supervised and unsupervised fitting.

The recursions are :mod:`faciesseq.hmm.engine` (scaled forward-backward and
Viterbi on a log-emission array), not hmmlearn's: hmmlearn has no mixed or
previous-facies-conditioned emissions, no clamped (partially labelled)
sequences, no per-boundary two-slice posteriors and no non-pickle model
files. hmmlearn's ``CategoricalHMM`` is the reference the tests compare with.
"""

from __future__ import annotations

import math
import numbers
import warnings
from collections.abc import Mapping, Sequence
from os import PathLike
from typing import Any

import numpy as np
import pandas as pd

from faciesseq.core import UNITS, CoreSet, Succession, SuccessionTable
from faciesseq.cycles import CONTEXT_FEATURES, beds_per_cycle, cycle_inputs
from faciesseq.errors import ConfigError, InputError
from faciesseq.hmm import engine, nested
from faciesseq.hmm.baseline import trend_rule
from faciesseq.hmm.cautions import read_cautions
from faciesseq.hmm.context import evidence_weights
from faciesseq.hmm.decoding import Decoding, _succession_table
from faciesseq.hmm.em import (
    CHUNK_BEDS,
    ConvergenceError,
    ConvergenceMonitor,
    ExpectationMaximisation,
    ProgressCallback,
    TrainingData,
)
from faciesseq.hmm.emissions import EmissionPiece
from faciesseq.hmm.encoding import EncodedBeds, encode_beds
from faciesseq.hmm.features import (
    DEFAULT_FEATURES,
    FEATURES,
    resolve_features,
)
from faciesseq.hmm.inputs import as_successions, refuse_too_few_beds
from faciesseq.hmm.labels import (
    clamp_from_labels,
    graph_from_labels,
    labelled_beds,
    refuse_missing_label_column,
)
from faciesseq.hmm.pieces import make_piece
from faciesseq.hmm.reference import REFERENCE, ReferenceEmission, reference_model
from faciesseq.hmm.reference_check import REFERENCE_USES, check_reference
from faciesseq.hmm.restarts import Restarts
from faciesseq.hmm.said_once import said_once
from faciesseq.hmm.states import StateSpace
from faciesseq.scheme import (
    FaciesScheme,
    TractModel,
    as_scheme,
    default_tract_model,
)

__all__ = [
    "DEFAULT_FEATURES",
    "FEATURES",
    "ConvergenceError",
    "ConvergenceMonitor",
    "TractHMM",
]


def fit_unit(unit: str, labelled: bool) -> str:
    """The unit a fit reads: ``unit`` as given, or for ``"auto"`` the described
    intervals where the fit has labels and amalgamated beds where it has none.

    Why: two described intervals of one facies (a coastal-plain bed on another, an
    erosional contact between them) are two beds to the geologist who described
    them, and amalgamating them hides the contacts and bed boundaries where tracts
    change. With labels, reading the intervals raised the balanced accuracy of the
    forward model's report cores from 0.654 / 0.597 / 0.457 to 0.937 / 0.796 / 0.809
    (supervised; semi-supervised 0.568 / 0.447 / 0.368 to 0.679 / 0.531 / 0.456);
    without labels the stacking context, read on runs of one facies, named the
    tracts of the ramp wrongly on intervals (0.570 to 0.278;
    benchmarks/tract_model.md, "Described intervals or amalgamated beds").
    """
    if unit != "auto":
        return unit
    return "intervals" if labelled else "beds"


#: The largest seed: scikit-learn's trees take seeds of 32 bits, as ``--seed`` does.
MAX_SEED = 2**32 - 1

#: Sub-states per tract of fits on the stacking context (phase-type durations).
CONTEXT_SUBSTATES = 3


def _labelled_cores(data) -> tuple[str, ...]:
    """The cores with a bed held to one tract in a fit (its clamp), in order."""
    if data.clamp is None:
        return ()
    held = data.clamp.sum(axis=1) == 1
    ends = np.cumsum(data.beds.lengths)
    return tuple(
        dict.fromkeys(
            c for c, a, b in zip(data.cores, ends - data.beds.lengths, ends) if held[a:b].any()
        )
    )


def _training_successions(
    data: Any, unit: str, step: float | None, labels: Any
) -> Sequence[Succession]:
    """The non-empty successions to fit on. Without labels, one :class:`SuccessionTable`
    (a list of successions grouped by core, as decode does): whole columns, no frame
    per succession; measured, making 32,453 of them, joining them again to encode
    and to decode took about 60 of the 263 s of a profiled fit at 10^6 beds. With
    labels a list, which labels and calibration folds read a succession at a time.
    Refused as ``faciesseq fit`` refuses them: a core set with errors, a label column
    it lacks, no bed, or no succession of 2 beds or more."""
    if isinstance(data, CoreSet):
        data.require_valid()
        if isinstance(labels, str):
            refuse_missing_label_column(data, labels)
    if labels is None:
        succ = _succession_table(data, unit, step)
    else:
        succ = [s for s in as_successions(data, unit, step) if len(s)]
    if not len(succ):
        raise InputError("no beds to fit the tract model on")
    refuse_too_few_beds(succ, unit)
    return succ


#: The calibration record of a fit whose calibration was put off (``fit(calibrate=False)``).
_NOT_YET = "not calibrated yet: fitted with calibrate=False; TractHMM.calibrate() calibrates"


def _bed_tables(succ: Sequence[Succession]) -> tuple[list[pd.DataFrame], np.ndarray | None]:
    """The bed tables of ``succ`` for :meth:`TractHMM._encode`, with the beds of each
    succession where they are one table."""
    if isinstance(succ, SuccessionTable):
        return [succ.beds], succ.lengths
    return [s.beds for s in succ], None


def _distinct(tables: Sequence[pd.DataFrame], column: str) -> set[str]:
    out: set[str] = set()
    parts = [t[column] for t in tables if column in t.columns]
    if len(parts) > 1 and all(p.dtype == parts[0].dtype for p in parts):
        parts = [pd.concat(parts, ignore_index=True)]  # one pass over every table's column
    for values in parts:
        text = values.dropna().astype("string").str.strip()
        out.update(v for v in text.unique().tolist() if v and v.lower() != "nan")
    return out


class TractHMM(Restarts, ExpectationMaximisation, Decoding):
    """Hidden Markov model whose hidden states are systems tracts.

    Parameters
    ----------
    tract_model
        Tracts, their cyclic order, skips and surfaces; default
        :func:`faciesseq.scheme.default_tract_model`.
    scheme
        Facies scheme, or the path of its YAML file (read by
        :func:`faciesseq.scheme.load_scheme` when the fit starts): gives the facies
        list and the proximality ranks the trend priors are built from. Without one,
        facies are those of the training beds and the trend prior is flat (tract
        identity is then anchored only by the starting rule and the tract graph; a
        warning and the fit's cautions say so). Ranks are never guessed here; ranks
        suggested from the data's transitions, as ``faciesseq fit`` suggests them
        without ``--scheme``, are ``suggest_ranks(cores.succession_table("beds")).scheme()``
        (:func:`faciesseq.markov.seriation.suggest_ranks`), and a fit on them carries
        the same caution as the command's.
    features
        Emission pieces, multiplied per bed: ``"facies"``, ``"facies_trend"``
        (facies given the bed below: the stacking trend), ``"thickness"`` (log
        thickness, Gaussian), ``"contact"``, ``"rank_step"`` (the rank jump at
        the bed's base, categorical; needs a scheme), ``"rank_step_above"``
        (the same jump at the bed's top: the bed above minus this bed; needs a
        scheme), ``"rank_trend"`` (slope
        of the rank over five beds, binned, categorical; needs a scheme), ``"stacking"``
        (boosted trees over a window of beds and cycles, learnt from labelled beds),
        the stacking context of :data:`faciesseq.cycles.CONTEXT_FEATURES` (needs a
        scheme) and any numeric bed attribute (Gaussian). ``None``: the defaults of
        :mod:`faciesseq.hmm.features` that the beds and the scheme can feed: with
        labels ``facies_trend``, ``thickness``, ``contact`` and, with a scheme,
        ``rank_step`` and ``stacking``; without labels, with a scheme and not on a
        depth grid, the stacking context, ``contact`` and ``rank_step``; else
        ``facies_trend``, ``thickness``, ``contact`` and ``rank_step`` (each rank
        feature only with a scheme, ``contact`` only where the beds have contact
        types, ``thickness`` not on a depth grid).
    substates
        Sub-states per tract (left-to-right chain); an int for every tract, a
        mapping tract -> int, or ``None`` for the tract model's own.
    prior_strength
        Scale of the Dirichlet pseudo-counts (trend cells favoured by a
        tract's trend get this many pseudo-beds; every other cell a tenth of
        it). 0 turns every prior off, ``cycle_prior`` included (maximum
        likelihood).
    cycle_prior
        Weight of transition pseudo-counts taken from the trend rule's tract
        column (a fraction of its counts; needs a scheme): keeps EM from
        turning tracts into absorbing "kinds of core" instead of phases of a
        cycle. 0 turns it off.
    n_restarts
        EM runs from perturbed starts; the best final objective wins.
    tol, max_iter
        Convergence monitor (see :class:`ConvergenceMonitor`).
    unit, step
        How cores become successions when a :class:`~faciesseq.core.CoreSet` is
        given: ``"beds"`` (runs of one facies amalgamated: successive beds never
        share a facies, so the trend table has a structural zero diagonal),
        ``"intervals"`` (the described intervals as they are), ``"grid"`` with
        ``step`` in depth units, or ``"auto"`` (:func:`fit_unit`: intervals with
        labels, beds without). The unit fitted is ``unit_``; successions given
        directly are taken to be of that unit (pass ``unit="beds"`` with
        amalgamated beds and labels).
    batch_size
        Beds per E-step batch (memory is bounded by the batch, not the database).
    chunk_beds
        An EM run on at least twice this many beds cuts its E-step into chunks of
        whole successions of about this many beds (:func:`~faciesseq.hmm.em.chunk_bounds`),
        computed on the workers of ``n_jobs`` / ``scheduler`` when a fit is
        parallel and here in turn when not, and sums their statistics in chunk
        order; the M-step stays here. The fitted parameters do not depend on the
        workers; fits on fewer beds run one E-step as they always did.
    n_jobs, scheduler
        Independent jobs (restarts, calibration folds, candidate graphs) run in
        ``n_jobs`` local processes, or on the Dask cluster at ``scheduler``
        (``tcp://host:port``) when given (:mod:`faciesseq.parallel`); the
        fitted parameters do not depend on either.
    graph
        ``"auto"``: a fit without labels and without an explicit
        ``tract_model`` fits the cyclic order with each set of the skips the
        trade allows (none, FSST, TST, both) and keeps the lowest ICL
        (``graph_selection_`` records every candidate); a fit with labels
        takes the strict cyclic order of the default tract model where every
        labelled boundary follows it, else the permissive graph
        (``label_graph_`` says which and why); ``"fixed"``: the tract model as
        given (or the default; the permissive graph with labels).
    calibration_folds
        After a fit with labels on at least two cores: the tract posteriors
        are calibrated by one temperature chosen by this many folds of
        cross-validation by core over the labelled cores
        (:mod:`faciesseq.hmm.calibration`); 0 or 1 turns calibration off
        (temperature 1). Only probabilities change, never the tract column.
    weigh_evidence
        In fits on the stacking context: multiply each context piece's
        log-probability by the share of its evidence that is a bed's own, one
        over the beds its window spans
        (:func:`~faciesseq.hmm.context.evidence_weights`), so that evidence shared
        by the beds of a cycle or a window counts once, not once per bed. On by
        default: measured, it raises the balanced accuracy on the
        parasequence-stacking generator, calibrates its probabilities there, and
        reads the half-cycles of real wells left out of the fit better; on the
        physical forward model it scores as low as without weights and is surer
        of itself (``docs/hmm.md``, "Evidence counted once"). A weighted fit whose
        tracts are shorter than a parasequence is done again with the square roots
        of the weights, and if those still give such tracts, without weights
        (``weights_rejected_``). ``False`` counts the context once per bed (the
        default before 2026-12-03); a number in (0, 1] raises every weight to that
        power (``True`` is 1).
    nested_start
        In fits without labels on the stacking context: EM of the tract graph
        starts from a fit without the regressive tracts the tract model allows to
        be absent (its ``skips``: the FSST by default; :mod:`faciesseq.hmm.nested`),
        so that a thin or rare falling stage does not move every tract name after
        the TST by one place (``nested_start_`` records it). Graph choice also fits
        every candidate from the priors alone and keeps that fit where its TST
        deepens clearly more (:func:`faciesseq.hmm.nested.kept_start`). ``False``
        starts from the priors alone.
    reference
        In fits without labels on the stacking context: a model fitted with labels on
        other cores (a ``TractHMM``, the path of its model file, or ``"generators"``
        for the one packaged with faciesseq) whose stacking trees are read as a static
        piece beside the context pieces (:mod:`faciesseq.hmm.reference`); measured
        in docs/hmm.md, "A reference model". ``None`` (the default): none.
    reference_weight
        The multiplier of the reference piece's log-likelihood (> 0).
    reference_use
        ``"always"`` (the default): the fit reads the reference. ``"check"``: the
        same fit without the reference too, and the two columns of the training cores
        compared (:mod:`faciesseq.hmm.reference_check`); the fit with the
        reference is kept only where they give one tract to less than a third of the
        thickness, and ``reference_check_`` records the share and the choice.
    random_state
        Seed (int) or ``numpy.random.Generator`` for the restarts.

    Attributes
    ----------
    states_ : StateSpace
    facies_, contacts_ : tuple of str
    startprob_ : ndarray (K,)
    transmat_ : ndarray (K, K)
    emissions_ : list of EmissionPiece
    monitor_ : ConvergenceMonitor of the best restart
    restarts_ : list of dict, one per restart (seed, objective, n_iter, converged, history)
    log_likelihood_ : float, training log-likelihood of the best restart
    n_train_beds_ : int
    labelled_beds_ : dict, beds labelled with each tract (empty without labels)
    labelled_cores_ : tuple of str, the cores with labelled beds (empty without labels)
    label_graph_ : dict or None, in fits with labels and no ``tract_model``:
        ``graph`` (``"strict"`` or ``"permissive"``), ``n_boundaries`` (labelled
        tract changes) and ``n_forbidden`` (those the strict cyclic order does
        not allow)
    temperature_ : float, the posterior temperature (1: not calibrated)
    evidence_weights_ : dict, the weight of each context piece (empty: every bed
        counted in full)
    weights_rejected_ : dict or None, where ``weigh_evidence`` was asked for but the
        weighted fit changed tract more often than the training cores change cycle,
        so the model is the fit without weights: the expected tract changes and the
        cycles (``training.evidence_weights_rejected`` in the model file)
    calibration_ : dict, how the temperature was chosen (folds, cores, held-out
        beds, their scores before and after: :func:`faciesseq.hmm.calibration.fit_temperature`)
        or why it was not (``{"skipped": reason}``)

    References
    ----------
    L. E. Baum, T. Petrie, G. Soules, N. Weiss (1970), Ann. Math. Statist.
    41(1):164-171. A. P. Dempster, N. M. Laird, D. B. Rubin (1977), J. R.
    Statist. Soc. B 39(1):1-38. L. R. Rabiner (1989), Proc. IEEE 77(2):257-286.
    """

    def __init__(
        self,
        tract_model: TractModel | None = None,
        scheme: FaciesScheme | str | PathLike | None = None,
        features: Sequence[str] | None = None,
        substates: int | Mapping[str, int] | None = None,
        prior_strength: float = 2.0,
        cycle_prior: float = 0.2,
        n_restarts: int = 3,
        tol: float = 1e-3,
        max_iter: int = 200,
        unit: str = "auto",
        step: float | None = None,
        batch_size: int = 200_000,
        chunk_beds: int = CHUNK_BEDS,
        n_jobs: int = 1,
        scheduler: str | None = None,
        calibration_folds: int = 5,
        graph: str = "auto",
        weigh_evidence: bool | float = True,
        nested_start: bool = True,
        reference: TractHMM | str | PathLike | None = None,
        reference_weight: float = 1.0,
        reference_use: str = "always",
        random_state: int | np.random.Generator | None = None,
    ) -> None:
        self.tract_model = tract_model
        self.scheme = scheme
        self.features = features
        self.substates = substates
        self.prior_strength = prior_strength
        self.cycle_prior = cycle_prior
        self.n_restarts = n_restarts
        self.tol = tol
        self.max_iter = max_iter
        self.unit = unit
        self.step = step
        self.batch_size = batch_size
        self.chunk_beds = chunk_beds
        self.n_jobs = n_jobs
        self.scheduler = scheduler
        self.calibration_folds = calibration_folds
        self.graph = graph
        self.weigh_evidence = weigh_evidence
        self.nested_start = nested_start
        self.reference = reference
        self.reference_weight = reference_weight
        self.reference_use = reference_use
        self.random_state = random_state

    # ------------------------------------------------------------------ setup
    @property
    def tract_model_(self) -> TractModel:
        if self.tract_model is not None:
            return self.tract_model
        return getattr(self, "_default_graph", None) or default_tract_model()

    def _parallel(self) -> bool:
        """Whether independent jobs leave this process (:mod:`faciesseq.parallel`)."""
        return int(self.n_jobs) > 1 or bool(self.scheduler)

    def _check_hyper(self) -> None:
        """Check the hyper-parameters at the start of a fit; a scheme given as the path of
        its YAML file is read here (:func:`~faciesseq.scheme.as_scheme`)."""
        self.scheme = as_scheme(self.scheme)
        seed = self.random_state
        if not (seed is None or isinstance(seed, np.random.Generator)) and (
            isinstance(seed, bool)
            or not isinstance(seed, numbers.Integral)
            or not 0 <= seed <= MAX_SEED
        ):
            raise ConfigError(
                f"random_state must be an integer from 0 to {MAX_SEED}, a numpy Generator or "
                f"None, got {seed!r}"
            )
        if self.unit not in ("auto", *UNITS):
            raise ConfigError(f"unit must be one of auto, {', '.join(UNITS)}, got {self.unit!r}")
        if not self.prior_strength >= 0:
            raise ConfigError(f"prior_strength must be >= 0, got {self.prior_strength!r}")
        if not self.cycle_prior >= 0:
            raise ConfigError(f"cycle_prior must be >= 0, got {self.cycle_prior!r}")
        if int(self.n_restarts) < 1:
            raise ConfigError(f"n_restarts must be >= 1, got {self.n_restarts!r}")
        if int(self.chunk_beds) < 1:
            raise ConfigError(f"chunk_beds must be >= 1, got {self.chunk_beds!r}")
        if int(self.max_iter) < 1:
            raise ConfigError(f"max_iter must be >= 1, got {self.max_iter!r}")
        if self.graph not in ("auto", "fixed"):
            raise ConfigError(f"graph must be 'auto' or 'fixed', got {self.graph!r}")
        if int(self.calibration_folds) < 0:
            raise ConfigError(f"calibration_folds must be >= 0, got {self.calibration_folds!r}")
        w = self.weigh_evidence
        if not isinstance(w, bool) and not (isinstance(w, int | float) and 0 < w <= 1):
            raise ConfigError(f"weigh_evidence must be true, false or in (0, 1], got {w!r}")
        if not isinstance(self.nested_start, bool):
            raise ConfigError(f"nested_start must be true or false, got {self.nested_start!r}")
        if not 0 < float(self.reference_weight) < np.inf:
            raise ConfigError(f"reference_weight must be > 0, got {self.reference_weight!r}")
        if self.reference_use not in REFERENCE_USES:
            raise ConfigError(
                f"reference_use must be one of {', '.join(REFERENCE_USES)}, "
                f"got {self.reference_use!r}"
            )

    def reads_context(self) -> bool:
        """Whether the emissions read the stacking context (their priors pin the
        tracts, so EM starts from them, not from the trend rule)."""
        return bool(set(self.features_) & set(CONTEXT_FEATURES))

    def _vocabularies(self, tables: Sequence[pd.DataFrame], labelled: bool = False) -> None:
        seen = sorted(_distinct(tables, "facies"), key=lambda c: (len(c), c))
        if self.scheme is not None:
            facies = list(self.scheme.codes)
            facies += [c for c in seen if c not in facies]
            ranks = [self.scheme.rank(c) if c in self.scheme else np.nan for c in facies]
            self.ranks_ = np.asarray(ranks, dtype=float)
        else:
            facies = seen
            self.ranks_ = None
            if "facies_trend" in self.features_ and not labelled:  # labels name the tracts
                warnings.warn(
                    "no facies scheme: the trend prior is flat, so which state is which tract "
                    "rests on the starting rule and the tract graph only",
                    UserWarning,
                    stacklevel=3,
                )
        self.facies_ = tuple(facies)
        contacts = sorted(_distinct(tables, "contact"))
        self.contacts_ = tuple(contacts)
        if "contact" in self.features_ and not contacts:
            raise ConfigError("feature 'contact' needs contact types in the beds; none found")

    def _encode(
        self,
        tables: Sequence[pd.DataFrame],
        lengths: np.ndarray | None = None,
        training: bool = False,
    ) -> EncodedBeds:
        """The beds coded for the pieces; the depth windows of the stacking trees in
        the fitted trees' unit, or for ``training`` beds in their own."""
        skip = ("facies", "facies_trend", "contact", REFERENCE)
        numeric = [f for f in self.features_ if f not in skip]
        if {"stacking", REFERENCE} & set(self.features_) and "thickness" not in numeric:
            numeric.append("thickness")
        marks, nonmarine = self._facies_marks()
        exposed = None if self.scheme is None else self.scheme.exposures(self.facies_)
        return encode_beds(
            tables,
            self.facies_,
            self.contacts_,
            numeric,
            self.ranks_,
            marks,
            lengths,
            nonmarine,
            exposed,
            None if training else self._depth_unit(),
        )

    def _depth_unit(self) -> float | None:
        """The unit of the depth windows of the fitted stacking trees, if any."""
        trees = [p for p in getattr(self, "emissions_", ()) if p.kind == "stacking"]
        return trees[0].depth_unit if trees else None

    def _facies_marks(self) -> tuple[np.ndarray | None, np.ndarray | None]:
        """The scheme's ``cycle_base`` marks and settings of each of ``facies_``
        (``None`` without a scheme, or where it names no facies nonmarine)."""
        if self.scheme is None:
            return None, None
        return self.scheme.cycle_bases(self.facies_), self.scheme.settings(self.facies_)

    def _train_static(self, beds: EncodedBeds, clamp: np.ndarray | None) -> dict:
        """The static pieces (learnt once from the labelled beds, before EM), by feature."""
        out = {}
        if REFERENCE in self.features_:
            out[REFERENCE] = self._reference_piece(beds)
        if "stacking" not in self.features_:
            return out
        piece = make_piece(
            "stacking",
            facies=self.facies_,
            contacts=self.contacts_,
            n_tracts=self.states_.n_tracts,
            ranks=self.ranks_,
            trends=(),
            prior_strength=float(self.prior_strength),
            embedded=self.unit_ == "beds",
        )
        labels = np.full(len(beds), -1, dtype=np.int64)
        if clamp is not None:
            one = clamp.sum(axis=1) == 1
            labels[one] = np.argmax(clamp[one], axis=1)
        seed = self.random_state if isinstance(self.random_state, int) else 0
        piece.train(beds, labels, random_state=seed)
        out["stacking"] = piece
        return out

    def _with_reference(self, features: tuple[str, ...], n_labelled: int) -> tuple[str, ...]:
        """``features`` with the reference piece where a reference is given (fits
        without labels on the stacking context only), refused where it cannot be read."""
        if self.reference is None:
            if REFERENCE in features:
                raise ConfigError(
                    "feature 'reference' needs a reference model (fit --reference; reference= "
                    "from Python)"
                )
            return features
        if n_labelled:
            raise ConfigError(
                "a reference model is read by fits without labels; with labels the "
                "labelled cores name the tracts (leave the reference out)"
            )
        if not self.reads_context():
            raise ConfigError(
                "a reference model is read beside the stacking context: it needs a "
                "scheme with ranks and beds (not a depth grid)"
            )
        return features if REFERENCE in features else (*features, REFERENCE)

    def _reference_piece(self, beds: EncodedBeds) -> EmissionPiece:
        """The reference's stacking trees on this model's facies and tracts, their depth
        windows in the median cycle of ``beds`` (:mod:`faciesseq.hmm.reference`)."""
        marks, nonmarine = self._facies_marks()
        piece = ReferenceEmission.of(
            reference_model(self.reference),
            self.tract_model_.order,
            self.ranks_,
            marks,
            nonmarine,
            float(self.reference_weight),
        )
        piece.train(beds, np.full(len(beds), -1))
        return piece

    def _new_pieces(
        self, beds: EncodedBeds, trained: Mapping[str, EmissionPiece] | None = None
    ) -> list[EmissionPiece]:
        tm = self.tract_model_
        trends = [tm.tract(t).trend for t in tm.order]
        pieces = []
        trained = trained or {}
        for f in self.features_:
            if f in trained:
                pieces.append(trained[f])
                continue
            scale = (0.0, 1.0)
            if f in beds.numeric:
                x = beds.numeric[f]
                x = x[np.isfinite(x)]
                if len(x):
                    scale = (float(x.mean()), float(x.var()) if len(x) > 1 else 1.0)
            pieces.append(
                make_piece(
                    f,
                    facies=self.facies_,
                    contacts=self.contacts_,
                    n_tracts=len(tm.order),
                    ranks=self.ranks_,
                    trends=trends,
                    prior_strength=float(self.prior_strength),
                    embedded=self.unit_ == "beds",
                    numeric_scale=scale,
                    weight=getattr(self, "evidence_weights_", {}).get(f, 1.0),
                )
            )
        return pieces

    def _evidence_weights(self, beds: EncodedBeds) -> dict[str, float]:
        """The weights of the context pieces, from the mean cycle length of the
        training beds (:func:`~faciesseq.hmm.context.evidence_weights`); none
        unless ``weigh_evidence`` and the fit reads the stacking context."""
        self.n_cycles_ = None
        if not (self.weigh_evidence and self.reads_context()):
            return {}
        marks, nonmarine = self._facies_marks()
        ranks, starts, setting = cycle_inputs(beds.facies, self.ranks_, marks, nonmarine)
        per_cycle = beds_per_cycle(ranks, beds.lengths, starts, setting)
        self.n_cycles_ = len(beds) / per_cycle
        weights = evidence_weights(per_cycle, float(self.weigh_evidence))
        return {f: w for f, w in weights.items() if f in self.features_}

    def _graph_from_labels(self, successions: Sequence[Succession], labels: Any) -> TractModel:
        """The tract graph of a fit with labels and no tract model of its own
        (:func:`~faciesseq.hmm.labels.graph_from_labels`); ``label_graph_`` records it."""
        graph, self.label_graph_ = graph_from_labels(successions, labels, self.graph == "auto")
        return graph

    def _labels(
        self, successions: Sequence[Succession], labels: Any
    ) -> tuple[np.ndarray | None, int]:
        """Clamp mask ``(T, n_tracts)`` from a label column or per-succession arrays
        (:func:`~faciesseq.hmm.labels.clamp_from_labels`)."""
        if labels is None:
            return None, 0
        return clamp_from_labels(successions, labels, self.tract_model_)

    # --------------------------------------------------------------- E and M
    def _log_emission(
        self,
        pieces: Sequence[EmissionPiece],
        beds: EncodedBeds,
        static: np.ndarray | None = None,
    ) -> np.ndarray:
        """Log-emission of every bed under every state; ``static``: the summed
        log-probabilities of the static pieces, computed once (else computed here)."""
        tract_lp = np.zeros((len(beds), self.states_.n_tracts))
        for p in pieces:
            if static is None or not p.static:
                tract_lp += p.log_prob(beds)
        if static is not None:
            tract_lp += static
        return tract_lp[:, self.states_.state_tract]

    def _static_log_prob(self, pieces: Sequence[EmissionPiece], beds: EncodedBeds):
        """Summed log-probabilities of the static pieces, ``(T, n_tracts)``, or None."""
        fixed = [p for p in pieces if p.static]
        if not fixed:
            return None
        out = np.zeros((len(beds), self.states_.n_tracts))
        for a, b, lengths, _ in self._batches(beds.lengths):
            part = beds.slice(a, b, lengths)
            for p in fixed:
                out[a:b] += p.log_prob(part)
        return out

    def _e_step_estimator(self) -> TractHMM:
        """A model holding only what the E-step of a chunk reads (the states and the
        batch size): what is sent to the workers with every iteration, instead of
        this model and what its fit carries."""
        estimator = type(self)(batch_size=self.batch_size)
        estimator.states_ = self.states_
        return estimator

    def _batches(self, lengths: np.ndarray, most: int | None = None):
        """``(start, stop, lengths, first)`` of batches of whole successions, of at most
        ``batch_size`` beds (and at most ``most``) unless one succession is longer."""
        limit = max(1, min(int(self.batch_size), most or int(self.batch_size)))
        ends = np.cumsum(lengths)
        i, start = 0, 0
        while i < len(lengths):
            j = i
            while j + 1 < len(lengths) and ends[j + 1] - start <= limit:
                j += 1
            stop = int(ends[j])
            yield start, stop, lengths[i : j + 1], i
            start, i = stop, j + 1

    def fit(
        self,
        successions: CoreSet | Sequence[Succession],
        labels: str | Sequence[Sequence[str | None]] | None = None,
        progress: ProgressCallback | None = None,
        *,
        calibrate: bool = True,
    ) -> TractHMM:
        """Fit by EM; labelled beds are clamped to their tract.

        Parameters
        ----------
        successions
            A core set (cut into successions by ``unit``/``step``) or
            successions, each base to top.
        labels
            ``None`` (unsupervised), the name of a bed column holding tract
            codes (empty = unlabelled), or one sequence of codes / ``None`` per
            succession. All beds labelled = supervised; some = semi-supervised.
        progress
            Called as ``progress(restart, iteration, objective)`` after every
            EM iteration (in parallel runs, once per finished restart).
        calibrate
            False leaves the temperature at 1 until :meth:`calibrate` is called
            (model choice calibrates only the kept candidate).

        Returns
        -------
        self
        """
        self._check_hyper()
        unit = fit_unit(self.unit, labels is not None)
        succ = _training_successions(successions, unit, self.step, labels)
        self.units_ = succ.units if isinstance(succ, SuccessionTable) else succ[0].units
        with said_once():  # the candidate graphs and refits would repeat each warning
            self._fit_once(succ, labels, progress)
            if self._tracts_shorter_than_cycles():
                self._fit_with_weaker_weights(succ, labels, progress)
            self.reference_check_ = None
            if self.reference_use == "check" and self.reference is not None and labels is None:
                self._check_reference(successions, progress)
        self.cautions_ = read_cautions(self)
        if calibrate:
            self.calibrate()
        return self

    def calibrate(self) -> TractHMM:
        """Choose the temperature of the posteriors of a fit made with
        ``calibrate=False``: by folds of the labelled cores
        (:func:`~faciesseq.hmm.calibration.calibrate_by_folds`), else by cores
        simulated from the fit (:func:`~faciesseq.hmm.bootstrap.calibrate_by_simulation`),
        with the same folds and draws as the fit would have used. Nothing to do
        where ``calibration_folds`` is 0 or the fit was calibrated already.

        Returns
        -------
        self
        """
        self._check_fitted()
        job = self.__dict__.pop("_calibration_job", None)
        if job is None:
            return self
        kind, params, *args = job
        if kind == "folds":
            from faciesseq.hmm.calibration import calibrate_by_folds

            self.calibration_ = calibrate_by_folds(self, *args, params=params)
            self.temperature_ = float(self.calibration_.get("temperature", 1.0))
        else:
            self.calibration_ = {"skipped": "no labelled beds"}
            self._calibrate_without_labels(*args)
        return self

    def _tracts_shorter_than_cycles(self) -> bool:
        """Whether a weighted fit changes tract more often than the training cores
        change cycle: tracts shorter than a parasequence, which the trade's
        definition excludes (a systems tract is made of parasequences and
        parasequence sets; Van Wagoner et al. 1990)."""
        return bool(self.evidence_weights_) and self.tract_changes_ > self.n_cycles_

    def _fit_with_weaker_weights(self, succ, labels, progress) -> None:
        """The fit again with the square roots of the evidence weights, and where
        that still gives tracts shorter than a cycle, without weights. Seen on the
        thin-tract scenario of the stacking generator in three seed sets of four,
        where the square roots scored 0.76-0.78 against 0.71-0.74 without weights
        (benchmarks/tract_model.md, "The square roots before no weights")."""
        rejected = {
            "expected_tract_changes": round(self.tract_changes_, 3),
            "cycles": round(self.n_cycles_, 3),
        }
        for power, name in ((0.5, "square roots of the weights"), (False, "no weights")):
            weaker = type(self)(**{**self.get_params(), "weigh_evidence": power})
            weaker._fit_once(succ, labels, progress)
            rejected["refitted_with"] = name
            if not weaker._tracts_shorter_than_cycles():  # never true without weights
                break
        self._take_fit(weaker)
        self.weights_rejected_ = rejected

    def _check_reference(self, successions, progress) -> None:
        """Fit again without the reference, and keep that fit unless the two columns of
        the training cores share too little
        (:func:`~faciesseq.hmm.reference_check.check_reference`)."""
        own = type(self)(**{**self.get_params(), "reference": None, "reference_use": "always"})
        own.fit(successions, None, progress, calibrate=False)
        record = check_reference(self, own, successions)
        if record["kept"] == "without":
            self._take_fit(own)
        self.reference_check_ = record

    def _take_fit(self, other: TractHMM) -> None:
        """The fitted state of ``other`` (a fit of other settings), this model keeping
        its own hyper-parameters."""
        hyper = self.get_params()
        self.__dict__.update(other.__dict__)
        self.set_params(**hyper)

    def _fit_once(self, succ, labels, progress) -> TractHMM:
        """One fit of checked settings on ``succ`` (:func:`_training_successions`):
        :meth:`fit` without its check of the evidence weights (the candidate graphs of
        :mod:`faciesseq.hmm.graphs` are fitted by this, so that their ICLs compare fits
        of one kind) and, where ``calibration_folds`` is above 0, without the
        calibration, which it leaves to :meth:`calibrate`."""
        self.weights_rejected_ = self.nested_start_ = self.cautions_ = None
        self.unit_ = fit_unit(self.unit, labels is not None)
        if self.graph == "auto" and self.tract_model is None and labels is None:
            return self._fit_choosing_graph(succ, progress)
        data, n_labelled = self._training_data(succ, labels)
        if labels is None:
            data = nested.with_nested_start(self, succ, data)
        rng = (
            self.random_state
            if isinstance(self.random_state, np.random.Generator)
            else np.random.default_rng(self.random_state)
        )
        runs = self._restarts(data, rng, progress)
        self._keep_best(self._named_runs(runs, data, progress))
        self.n_train_beds_ = len(data.beds)
        self.n_labelled_ = n_labelled
        self.labelled_beds_ = labelled_beds(data.clamp, self.tract_model_.order)
        self.cores_ = tuple(dict.fromkeys(data.cores))
        self.labelled_cores_ = _labelled_cores(data)
        self.graph_selection_ = []
        # The parameters of the last E-step are the returned ones, so the
        # recorded log-likelihood belongs to them.
        self.temperature_ = 1.0
        self.calibration_ = {"skipped": _NOT_YET}
        if data.clamp is not None and n_labelled:
            self._calibration_job = ("folds", self.get_params(), succ, data.clamp, rng)
        else:
            self._calibration_job = ("simulation", None, succ, rng, data.beds)
        if not int(self.calibration_folds):  # records why the fit is not calibrated
            self.calibrate()
        return self

    def _same_coding(self, other: TractHMM) -> bool:
        """Whether ``other`` codes beds as this fit does (vocabularies and features)."""
        return (
            other.facies_ == self.facies_
            and other.contacts_ == self.contacts_
            and other.features_ == self.features_
        )

    def _training_data(self, succ: SuccessionTable, labels) -> tuple[TrainingData, int]:
        """States, features, vocabularies and encoded beds of a fit; the number of
        labelled beds."""
        tables, lengths = _bed_tables(succ)
        cores = tuple(succ.cores) if lengths is not None else tuple(s.core for s in succ)
        self._default_graph = None
        self.label_graph_ = None
        if labels is not None and self.tract_model is None:
            self._default_graph = self._graph_from_labels(succ, labels)
        self.states_ = StateSpace.build(self.tract_model_, self.substates)
        clamp, n_labelled = self._labels(succ, labels)
        self.features_ = resolve_features(
            self.features, tables, self.scheme, self.unit_, labelled=n_labelled > 0
        )
        if self.reads_context() and self.substates is None:
            self.states_ = StateSpace.build(self.tract_model_, CONTEXT_SUBSTATES)
        self.features_ = self._with_reference(self.features_, n_labelled)
        if "stacking" in self.features_ and n_labelled == 0:
            raise ConfigError(
                "feature 'stacking' is learnt from labelled beds; give a label column "
                "(--labels) or leave the feature out"
            )
        self._vocabularies(tables, labelled=n_labelled > 0)
        beds = self._encode(tables, lengths, training=True)
        self.evidence_weights_ = self._evidence_weights(beds)
        ranks = (
            np.full(len(beds), np.nan)
            if self.ranks_ is None
            else np.where(beds.facies >= 0, self.ranks_[np.maximum(beds.facies, 0)], np.nan)
        )
        # fits on the stacking context start from its priors, not from the trend rule
        rule = None if self.reads_context() else trend_rule(ranks, beds.lengths, self.tract_model_)
        free = None if clamp is None else clamp.all(axis=1)
        self._cycle_pseudo = (
            self._cycle_counts(rule, beds.lengths, free)
            if self.cycle_prior
            and self.prior_strength
            and self.ranks_ is not None
            and not self.reads_context()
            else None
        )
        trained = self._train_static(beds, clamp)
        static = self._static_log_prob(list(trained.values()), beds)
        return TrainingData(beds, clamp, ranks, rule, cores, static, trained), n_labelled

    def _calibrate_without_labels(self, succ, rng, beds: EncodedBeds | None = None) -> None:
        """Temperature from cores simulated from the fitted model
        (:mod:`faciesseq.hmm.bootstrap`), for fits on the stacking context; other
        fits keep their record of why they were not calibrated."""
        if not (self.reads_context() and int(self.calibration_folds) > 0):
            return
        from faciesseq.hmm.bootstrap import calibrate_by_simulation

        tables, lengths = _bed_tables(succ)
        beds = self._encode(tables, lengths) if beds is None else beds
        self.calibration_ = calibrate_by_simulation(self, beds, tables, rng)
        self.temperature_ = float(self.calibration_.get("temperature", 1.0))

    def _fit_choosing_graph(self, succ: SuccessionTable, progress) -> TractHMM:
        """The fit of the lowest-ICL tract graph (:mod:`faciesseq.hmm.graphs`),
        calibrated afterwards (from the beds the refit on every bed encoded, where the
        graph was chosen on a sample: encoding 10^6 beds again took about 1 s)."""
        from faciesseq.hmm.graphs import choose_graph

        best, rows = choose_graph(self, succ, progress)
        self._take_fit(best)
        beds = self.__dict__.pop("_refit_beds", None)  # every bed, encoded by the refit
        self._default_graph = best.tract_model
        self.graph_selection_ = rows
        seed = self.random_state if isinstance(self.random_state, int) else None
        self._calibration_job = ("simulation", None, succ, np.random.default_rng(seed), beds)
        self.temperature_, self.calibration_ = 1.0, {"skipped": _NOT_YET}
        return self

    def _check_fitted(self) -> None:
        if not hasattr(self, "transmat_"):
            raise ConfigError("the tract model is not fitted yet; call fit() or load a model file")

    def n_parameters(self) -> int:
        """Free parameters: emissions, transitions (allowed cells minus one per row), start."""
        self._check_fitted()
        allowed = self.states_.allowed.sum(axis=1)
        trans = int(np.sum(np.maximum(allowed - 1, 0)))
        return sum(p.n_parameters() for p in self.emissions_) + trans + self.states_.n_states - 1

    def _prepare(self, successions) -> tuple[list[Succession], EncodedBeds]:
        self._check_fitted()
        succ = [s for s in as_successions(successions, self.unit_, self.step) if len(s)]
        if not succ:
            raise InputError("no beds to decode")
        beds = self._encode([s.beds for s in succ])
        return succ, beds

    def score_samples(self, successions) -> np.ndarray:
        """Log-likelihood of each succession (natural log)."""
        succ, beds = self._prepare(successions)
        out = np.empty(len(succ))
        for a, b, lengths, first in self._batches(beds.lengths):
            le = self._log_emission(self.emissions_, beds.slice(a, b, lengths))
            post = engine.forward_backward(le, lengths, self.startprob_, self.transmat_)
            out[first : first + len(lengths)] = post.log_likelihood
        return out

    def _tract_posteriors(self, beds: EncodedBeds) -> np.ndarray:
        """``(beds, n_tracts)`` posterior of each tract at the fitted parameters
        (untempered), batch by batch."""
        out = np.empty((len(beds), self.states_.n_tracts))
        for a, b, lengths, _ in self._batches(beds.lengths):
            le = self._log_emission(self.emissions_, beds.slice(a, b, lengths))
            post = engine.forward_backward(le, lengths, self.startprob_, self.transmat_)
            out[a:b] = self.states_.to_tracts(post.gamma)
        return out

    def tract_posteriors(self, successions) -> np.ndarray:
        """``(beds, n_tracts)`` posterior of each tract of the beds of ``successions``
        (a :class:`~faciesseq.core.CoreSet`, read as the model's unit, a
        :class:`~faciesseq.core.SuccessionTable` or successions), in their order, at
        the fitted parameters (untempered: the model's own, before calibration)."""
        self._check_fitted()
        table = _succession_table(successions, self.unit_, self.step)
        return self._tract_posteriors(self._encode([table.beds], table.lengths))

    def score(self, successions) -> float:
        """Total log-likelihood of the successions under the model."""
        return float(np.sum(self.score_samples(successions)))

    def bic(self, successions=None) -> float:
        """Bayesian information criterion ``-2 log L + p log n`` (Schwarz 1978), n = beds.

        Without ``successions``, of the training beds of a fit without labels,
        from the log-likelihood its last E-step recorded (the same number as
        scoring them again, without encoding them again); a labelled fit's E-step
        saw clamped beds, so it needs the successions.
        """
        self._check_fitted()
        if successions is None:
            if self.n_labelled_:
                raise ConfigError("the BIC of a labelled fit needs the successions to score")
            n, loglik = self.n_train_beds_, self.log_likelihood_
        else:
            succ = [s for s in as_successions(successions, self.unit_, self.step) if len(s)]
            n, loglik = sum(len(s) for s in succ), self.score(succ)
        return -2.0 * loglik + self.n_parameters() * math.log(n)

    # ------------------------------------------------------ parameter access
    def emission(self, name: str) -> EmissionPiece:
        """The fitted emission piece called ``name``."""
        self._check_fitted()
        for p in self.emissions_:
            if p.name == name:
                return p
        raise KeyError(name)

    def get_params(self, deep: bool = True) -> dict[str, Any]:
        """Hyper-parameters (scikit-learn convention)."""
        import inspect

        keys = [k for k in inspect.signature(type(self).__init__).parameters if k != "self"]
        return {k: getattr(self, k) for k in keys}

    def set_params(self, **params: Any) -> TractHMM:
        """Set hyper-parameters by name (scikit-learn convention); an unknown name is a
        :class:`~faciesseq.errors.ConfigError`.

        Returns
        -------
        self
        """
        valid = self.get_params()
        for k, v in params.items():
            if k not in valid:
                raise ConfigError(f"unknown hyper-parameter {k!r}")
            setattr(self, k, v)
        return self

    def __repr__(self) -> str:
        """The hyper-parameters set away from their defaults, as scikit-learn shows
        them; a scheme or tract model by its name."""
        import inspect

        defaults = inspect.signature(type(self).__init__).parameters
        shown = [
            f"{k}={_short_repr(v)}"
            for k, v in self.get_params().items()
            if not _is_default(v, defaults[k].default)
        ]
        return f"TractHMM({', '.join(shown)})"


def _is_default(value: Any, default: Any) -> bool:
    """Whether a hyper-parameter holds its default (numbers by value, ``2`` for ``2.0``)."""
    if value is default:
        return True
    if isinstance(value, bool) or isinstance(default, bool):
        return False
    if isinstance(value, numbers.Real) and isinstance(default, numbers.Real):
        return value == default
    return isinstance(value, str) and value == default


def _short_repr(value: Any) -> str:
    """A hyper-parameter as :meth:`TractHMM.__repr__` shows it: a scheme or tract model
    by its name and size, not every facies and tract field by field."""
    if isinstance(value, FaciesScheme):
        return f"<FaciesScheme {value.name!r}, {len(value)} facies>"
    if isinstance(value, TractModel):
        return f"<TractModel {value.name!r}: {', '.join(value.order)}>"
    return repr(value)
