"""Cross-validation of the tract model by core, beside a simple trend-rule baseline.

Cores are dealt to ``K`` folds at random (seeded) and never split: each fold's
cores are decoded by a model fitted on the other folds' cores, so every score
is out of sample (Stone 1974, J. R. Statist. Soc. B 36:111-147; grouped by
core as a described core is one correlated unit -- common practice). Only
beds with an interpreter's label count.

Scores, for the model and for the baseline (:func:`faciesseq.hmm.baseline.trend_rule`):

- bed accuracy; per-tract precision, recall, F1 and support; confusion matrix
  (rows = interpreter's tract, columns = decoded);
- Brier score: mean over beds of ``sum_k (p_k - y_k)^2`` (Brier 1950, Monthly
  Weather Review 78:1-3; 0 is perfect, 2 the worst; the baseline's
  probabilities are 0/1);
- reliability curve: beds binned by the probability of their decoded tract;
  per bin the mean probability, the fraction correct and the count (DeGroot &
  Fienberg 1983, The Statistician 32:12-22);
- surface depth error: for each surface where the interpreter's column changes
  tract (named by the tract model), the nearest pick of the same surface in
  the same core segment; the error in depth units and in beds (contacts
  apart); ``within_one_bed`` is the fraction of true surfaces with a pick at
  most one contact away.
"""

from __future__ import annotations

import os
import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet, Succession
from faciesseq.errors import ConfigError, InputError
from faciesseq.hmm.baseline import trend_rule
from faciesseq.interpretation import Interpretation
from faciesseq.scheme import TractModel, as_scheme, permissive_tract_model
from faciesseq.surfaces import picks_frame, surface_codes, surface_names

__all__ = ["ScoreSet", "ValidationResult", "cross_validate", "score_interpretation"]


@dataclass(frozen=True)
class ScoreSet:
    """Scores of one method (``"model"`` or ``"baseline"``) over all held-out beds.

    Attributes
    ----------
    method
        ``"model"`` or ``"baseline"``.
    accuracy, brier, macro_f1
        Bed accuracy, Brier score, unweighted mean F1 over tracts with support.
    per_tract
        Index tract; columns ``precision``, ``recall``, ``f1``, ``support``.
    confusion
        Rows interpreter's tract, columns decoded tract, counts of beds.
    reliability
        ``bin_low``, ``bin_high``, ``mean_probability``, ``fraction_correct``, ``count``.
    surfaces
        Index surface code; ``n_true``, ``n_matched`` (a pick of that surface in
        the segment), ``within_one_bed`` (fraction of ``n_true``),
        ``median_abs_error`` (depth units), ``mean_abs_error_beds``.
    """

    method: str
    accuracy: float
    brier: float
    macro_f1: float
    per_tract: pd.DataFrame
    confusion: pd.DataFrame
    reliability: pd.DataFrame
    surfaces: pd.DataFrame

    def to_dict(self) -> dict[str, Any]:
        return {
            "method": self.method,
            "accuracy": self.accuracy,
            "brier": self.brier,
            "macro_f1": self.macro_f1,
            "per_tract": self.per_tract.reset_index().to_dict(orient="records"),
            "confusion": {
                "tracts": [str(c) for c in self.confusion.columns],
                "counts": self.confusion.to_numpy().tolist(),
            },
            "reliability": self.reliability.to_dict(orient="records"),
            "surfaces": self.surfaces.reset_index().to_dict(orient="records"),
        }


@dataclass(frozen=True)
class ValidationResult:
    """Cross-validation by core: scores of the model and of the baseline.

    Attributes
    ----------
    folds
        Number of folds ``K``.
    units
        Depth units of the surface errors.
    fold_of_core
        Core -> fold number (0-based).
    model, baseline
        :class:`ScoreSet` of each.
    beds
        Every scored bed: ``core``, ``fold``, ``segment``, ``top``, ``base``,
        ``facies``, ``label``, ``model``, ``baseline`` and ``p_<TRACT>``.
    settings
        What was run (labels column, mode, features, seed...);
        ``labelled_cores_dealt_first`` is ``True`` where the plain deal put every
        labelled core in one fold and the labelled cores were dealt first instead.
    """

    folds: int
    units: str
    fold_of_core: dict[str, int]
    model: ScoreSet
    baseline: ScoreSet
    beds: pd.DataFrame
    settings: dict[str, Any] = field(default_factory=dict)

    def summary(self) -> pd.DataFrame:
        """One row per method: accuracy, macro F1, Brier score, MFS within one bed."""
        rows = []
        for s in (self.model, self.baseline):
            mfs = (
                float(s.surfaces.loc["MFS", "within_one_bed"])
                if "MFS" in s.surfaces.index
                else float("nan")
            )
            rows.append(
                {
                    "method": s.method,
                    "accuracy": s.accuracy,
                    "macro_f1": s.macro_f1,
                    "brier": s.brier,
                    "mfs_within_one_bed": mfs,
                }
            )
        return pd.DataFrame(rows)

    def to_frames(self) -> dict[str, pd.DataFrame]:
        """Tables by name: ``summary``, ``per_tract``, ``confusion_model``,
        ``confusion_baseline``, ``reliability``, ``surfaces``, ``beds``."""
        per_tract = pd.concat(
            [s.per_tract.assign(method=s.method) for s in (self.model, self.baseline)]
        ).reset_index()
        reliability = pd.concat(
            [s.reliability.assign(method=s.method) for s in (self.model, self.baseline)],
            ignore_index=True,
        )
        surfaces = pd.concat(
            [s.surfaces.assign(method=s.method) for s in (self.model, self.baseline)]
        ).reset_index()
        return {
            "summary": self.summary(),
            "per_tract": per_tract,
            "confusion_model": self.model.confusion,
            "confusion_baseline": self.baseline.confusion,
            "reliability": reliability,
            "surfaces": surfaces,
            "beds": self.beds,
        }

    def to_dict(self) -> dict[str, Any]:
        return {
            "folds": self.folds,
            "units": self.units,
            "fold_of_core": dict(self.fold_of_core),
            "settings": dict(self.settings),
            "summary": self.summary().to_dict(orient="records"),
            "model": self.model.to_dict(),
            "baseline": self.baseline.to_dict(),
        }


def _true_surfaces(
    beds: pd.DataFrame, column: str, tract_model: TractModel
) -> list[tuple[str, int, int, float]]:
    """(surface, segment, contact index in depth order, depth) where ``column`` changes."""
    out = []
    for seg, part in beds.groupby("segment", sort=False):
        labels = part[column].to_numpy(dtype=object)
        tops = part["top"].to_numpy(float)
        # depth order: bed i above bed i+1; contact i = top of bed i+1
        for i in range(len(part) - 1):
            upper, lower = labels[i], labels[i + 1]
            if upper is None or lower is None or upper == lower:
                continue
            s = tract_model.surface(str(lower), str(upper))
            if s is not None:
                out.append((s.code, int(seg), i, float(tops[i + 1])))
    return out


def _surface_errors(
    beds: pd.DataFrame,
    picks: pd.DataFrame,
    label: str,
    tract_model: TractModel,
) -> list[dict[str, Any]]:
    rows = []
    for code, seg, contact, depth in _true_surfaces(beds, label, tract_model):
        part = beds[beds["segment"] == seg]
        contacts = part["top"].to_numpy(float)[1:]
        cand = picks[(picks["surface"] == code) & (picks["segment"] == seg)]
        if len(cand) == 0:
            rows.append({"surface": code, "matched": False, "error": np.nan, "beds": np.nan})
            continue
        d = cand["depth"].to_numpy(float)
        k = int(np.argmin(np.abs(d - depth)))
        j = int(np.argmin(np.abs(contacts - d[k])))
        rows.append(
            {
                "surface": code,
                "matched": True,
                "error": float(abs(d[k] - depth)),
                "beds": abs(j - contact),
            }
        )
    return rows


def score_interpretation(
    method: str,
    labels: np.ndarray,
    predicted: np.ndarray,
    probabilities: np.ndarray,
    tracts: Sequence[str],
    surface_rows: Sequence[dict[str, Any]],
    surfaces: Sequence[str],
    n_bins: int = 10,
) -> ScoreSet:
    """Scores of one method on labelled beds (see the module docstring)."""
    from sklearn.metrics import confusion_matrix, precision_recall_fscore_support

    tracts = list(tracts)
    labels = np.asarray(labels, dtype=object)
    predicted = np.asarray(predicted, dtype=object)
    if len(labels) == 0:
        raise InputError("no labelled beds to score")
    prec, rec, f1, support = precision_recall_fscore_support(
        labels, predicted, labels=tracts, zero_division=0
    )
    per_tract = pd.DataFrame(
        {"precision": prec, "recall": rec, "f1": f1, "support": support},
        index=pd.Index(tracts, name="tract"),
    )
    confusion = pd.DataFrame(
        confusion_matrix(labels, predicted, labels=tracts),
        index=pd.Index(tracts, name="label"),
        columns=pd.Index(tracts, name="decoded"),
    )
    onehot = (labels[:, None] == np.asarray(tracts, dtype=object)[None, :]).astype(float)
    brier = float(np.mean(np.sum((probabilities - onehot) ** 2, axis=1)))
    chosen = probabilities[np.arange(len(predicted)), [tracts.index(p) for p in predicted]]
    correct = predicted == labels
    edges = np.linspace(0, 1, n_bins + 1)
    which = np.clip(np.digitize(chosen, edges[1:-1], right=True), 0, n_bins - 1)
    rel = []
    for b in range(n_bins):
        m = which == b
        rel.append(
            {
                "bin_low": edges[b],
                "bin_high": edges[b + 1],
                "mean_probability": float(chosen[m].mean()) if m.any() else np.nan,
                "fraction_correct": float(correct[m].mean()) if m.any() else np.nan,
                "count": int(m.sum()),
            }
        )
    srows = pd.DataFrame(list(surface_rows), columns=["surface", "matched", "error", "beds"])
    surf = []
    for code in surfaces:
        part = srows[srows["surface"] == code]
        n = len(part)
        beds_err = part["beds"].to_numpy(float)
        surf.append(
            {
                "surface": code,
                "n_true": n,
                "n_matched": int(part["matched"].sum()) if n else 0,
                "within_one_bed": float(np.mean(np.nan_to_num(beds_err, nan=np.inf) <= 1))
                if n
                else np.nan,
                "median_abs_error": float(np.nanmedian(part["error"]))
                if part["matched"].any()
                else np.nan,
                "mean_abs_error_beds": float(np.nanmean(beds_err))
                if part["matched"].any()
                else np.nan,
            }
        )
    supported = per_tract["support"] > 0
    return ScoreSet(
        method,
        float(np.mean(correct)),
        brier,
        float(per_tract.loc[supported, "f1"].mean()) if supported.any() else float("nan"),
        per_tract,
        confusion,
        pd.DataFrame(rel),
        pd.DataFrame(surf).set_index("surface"),
    )


def _baseline(
    succ: Sequence[Succession], interp: Interpretation, scheme, tract_model: TractModel
) -> dict[str, tuple[pd.DataFrame, pd.DataFrame]]:
    """Trend-rule tract column and its surfaces (picked where the column changes)."""
    order = list(tract_model.order)
    codes = surface_codes(tract_model)
    names = surface_names(tract_model)
    out: dict[str, list] = {}
    for s in succ:
        if scheme is not None:
            ranks = np.array([scheme.rank(f) if f in scheme else np.nan for f in s.facies])
        else:
            ranks = np.full(len(s), np.nan)
        rule = trend_rule(ranks, np.array([len(s)]), tract_model)[::-1]  # depth order
        tracts = [order[i] for i in rule]
        depth = s.beds["top"].to_numpy(float)[:-1][::-1]
        probs = np.zeros((len(depth), len(codes)))
        for i in range(len(depth)):
            upper, lower = tracts[i], tracts[i + 1]
            sf = tract_model.surface(lower, upper) if upper != lower else None
            if sf is not None:
                probs[i, codes.index(sf.code)] = 1.0
        picks = picks_frame(depth, probs, codes, names, s.segment, threshold=0.5)
        out.setdefault(s.core, []).append((s.segment, tracts, picks))
    result = {}
    for core, parts in out.items():
        parts.sort(key=lambda p: p[0])
        tracts = [t for _, ts, _ in parts for t in ts]
        picks = pd.concat([p for _, _, p in parts], ignore_index=True)
        result[core] = (tracts, picks)
    return result


#: How each fold's model is fitted (see :func:`cross_validate`).
VALIDATION_MODES = ("supervised", "semi-supervised", "unsupervised")


def _has_label(succession: Succession, labels: str) -> bool:
    """Whether any bed of the succession carries a (non-blank) label."""
    values = succession.beds[labels]
    return bool(
        values.notna().to_numpy().any() and (values.dropna().astype(str).str.strip() != "").any()
    )


def _core_frame(core: str, k: int, test, ci, base_tracts, labels: str, tracts):
    """One decoded test core of fold ``k`` as rows of the scored-bed table, and its
    beds with the interpreter's label (``_label``) for the surface errors."""
    beds = ci.beds
    # labels from the successions themselves, in the interpretation's depth order
    # (segments in order, each top first): never from the decoded table, whose
    # ``tract`` column is the model's
    parts = sorted((s for s in test if s.core == core), key=lambda s: s.segment)
    raw = np.concatenate([s.beds[labels].to_numpy(dtype=object)[::-1] for s in parts])
    label = pd.Series(
        [
            None
            if (v is None or (isinstance(v, float) and np.isnan(v)) or str(v).strip() == "")
            else str(v).strip()
            for v in raw
        ],
        index=beds.index,
        dtype=object,
    )
    frame = pd.DataFrame(
        {
            "core": core,
            "fold": k,
            "segment": beds["segment"].to_numpy(),
            "top": beds["top"].to_numpy(float),
            "base": beds["base"].to_numpy(float),
            "facies": beds["facies"].to_numpy(),
            "label": label.to_numpy(),
            "model": beds["tract"].to_numpy(),
            "baseline": base_tracts,
        }
    )
    for t in tracts:
        frame[f"p_{t}"] = beds[f"p_{t}"].to_numpy(float)
    return frame, beds.assign(_label=label.to_numpy())


def _check_params(params: dict) -> None:
    """Refuse keyword arguments of :func:`cross_validate` that are neither its own nor
    :class:`~faciesseq.hmm.model.TractHMM` hyper-parameters, naming the right one for
    ``seed`` (other faciesseq functions take ``seed=``; this one and the model
    ``random_state=``)."""
    from faciesseq.hmm.model import TractHMM

    known = set(TractHMM().get_params()) - {"random_state"}
    for name in params:
        if name in known:
            continue
        if name == "seed":
            raise TypeError(
                "cross_validate() takes random_state=, not seed= (the seed of the deal of "
                "cores to folds and of the model's restarts, as TractHMM(random_state=...))"
            )
        raise TypeError(
            f"cross_validate() got an unexpected keyword argument {name!r}; it takes mode, "
            f"random_state, progress and TractHMM's hyper-parameters: {', '.join(sorted(known))}"
        )


def _fold_params(params: dict[str, Any], mode: str) -> dict[str, Any]:
    """The model's hyper-parameters checked, the scheme read and the fitting unit settled."""
    from faciesseq.hmm.model import fit_unit

    _check_params(params)
    if "scheme" in params:
        params = {**params, "scheme": as_scheme(params["scheme"])}
    if mode not in VALIDATION_MODES:
        raise ConfigError(f"mode must be one of {list(VALIDATION_MODES)}, got {mode!r}")
    unit = fit_unit(params.get("unit", "auto"), mode != "unsupervised")
    return {**params, "unit": unit}


def _labelled_successions(
    successions: CoreSet | Sequence[Succession], labels: str, params: dict[str, Any]
) -> list[Succession]:
    """The non-empty successions in the model's unit, checked to carry the label column."""
    from faciesseq.hmm.inputs import as_successions
    from faciesseq.hmm.labels import refuse_missing_label_column

    if isinstance(successions, CoreSet):  # the source's columns, not the beds'
        refuse_missing_label_column(successions, labels)
    succ = [s for s in as_successions(successions, params["unit"], params.get("step")) if len(s)]
    if succ and labels not in succ[0].beds.columns:
        raise ConfigError(
            f"label column {labels!r} not found (columns: {sorted(map(str, succ[0].beds.columns))})"
        )
    return succ


def _check_folds(folds: int, n_cores: int) -> None:
    """Refuse fewer than 2 folds, or more folds than cores (a core is never split)."""
    if folds < 2:
        raise ConfigError(f"folds must be at least 2 (--folds on the command line), got {folds}")
    if n_cores < folds:
        fewer = (
            f"give folds={n_cores} (--folds {n_cores} on the command line)"
            if n_cores >= 2
            else "cross-validation by core needs 2 cores or more"
        )
        raise ConfigError(
            f"{folds} folds need at least {folds} cores; the data has {n_cores}: {fewer}"
        )


def _check_labelled_cores(succ: list[Succession], labels: str, mode: str) -> None:
    """Refuse a supervised cross-validation with labels on fewer than two cores: the
    fold holding out the one labelled core has none to train on, whatever the folds."""
    labelled = list(dict.fromkeys(s.core for s in succ if _has_label(s, labels)))
    if mode == "supervised" and len(labelled) < 2:
        raise ConfigError(
            f"only {len(labelled)} core(s) carry labels in {labels!r} ({', '.join(labelled)}): "
            "supervised cross-validation by core trains each fold on labelled cores other "
            "than those it holds out, so it needs two or more; label another core, or use "
            f"mode='semi-supervised' ({SEMI_OPTION})"
        )


#: How the semi-supervised mode is asked for on the command line, where each command
#: that cross-validates names its option.
SEMI_OPTION = "--mode semi-supervised of validate, --validate-mode of appendix and demo"


def _deal_cores(cores: list[str], folds: int, random_state: int | None) -> dict[str, int]:
    """Core -> fold: the cores shuffled (seeded), then dealt round the folds."""
    rng = np.random.default_rng(random_state)
    shuffled = [cores[i] for i in rng.permutation(len(cores))]
    return {c: k % folds for k, c in enumerate(shuffled)}


def _deal_labelled_first(
    cores: list[str], labelled: list[str], folds: int, random_state: int | None
) -> dict[str, int]:
    """Core -> fold with the labelled cores dealt first round the folds (seeded shuffle),
    then the unlabelled ones continuing the round: two labelled cores or more never
    share one fold alone, so every fold keeps a labelled core to train on."""
    rng = np.random.default_rng(random_state)
    unlabelled = [c for c in cores if c not in set(labelled)]
    order = [labelled[i] for i in rng.permutation(len(labelled))]
    order += [unlabelled[i] for i in rng.permutation(len(unlabelled))]
    return {c: k % folds for k, c in enumerate(order)}


def _deal_for_mode(
    succ: list[Succession], labels: str, mode: str, folds: int, random_state: int | None
) -> tuple[dict[str, int], bool]:
    """The deal of cores to folds, and whether the labelled cores were dealt first.

    The plain deal (:func:`_deal_cores`) is kept wherever it leaves every fold a
    labelled core to train on, so that its results stay as they were; in supervised
    mode a deal that puts every labelled core in one fold is replaced by
    :func:`_deal_labelled_first`; in semi-supervised mode too, where that fold's model
    would otherwise be fitted without a label and its score be that of a fit without
    labels. One labelled core in semi-supervised mode is warned of, for that reason."""
    cores = list(dict.fromkeys(s.core for s in succ))
    fold_of = _deal_cores(cores, folds, random_state)
    if mode == "unsupervised":
        return fold_of, False
    labelled = list(dict.fromkeys(s.core for s in succ if _has_label(s, labels)))
    if len(labelled) == 1 and mode == "semi-supervised":
        warnings.warn(
            f"only {labelled[0]!r} carries labels in {labels!r}: the fold holding it out is "
            "fitted without a label, so the scores are those of a fit without labels; "
            "label another core",
            stacklevel=3,
        )
    if len({fold_of[c] for c in labelled}) != 1 or len(labelled) < 2:
        return fold_of, False
    return _deal_labelled_first(cores, labelled, folds, random_state), True


def _training_cores(train: list[Succession], labels: str, mode: str, k: int) -> list[Succession]:
    """The training successions of fold ``k``: in supervised mode only the labelled cores."""
    if mode != "supervised":
        return train
    with_labels = {s.core for s in train if _has_label(s, labels)}
    train = [s for s in train if s.core in with_labels]
    if not train:
        # the deal gives every fold a labelled core to train on when two or more cores
        # carry labels, so only a lone labelled core (refused earlier) ends here
        raise ConfigError(
            f"fold {k + 1}: no training core carries labels in {labels!r}: every labelled "
            "core is held out in this fold; label another core, or use "
            f"mode='semi-supervised' ({SEMI_OPTION})"
        )
    return train


@dataclass
class _HeldOut:
    """What the folds gather: the scored-bed rows of every held-out core and the surface
    errors of the model and of the baseline."""

    frames: list[pd.DataFrame] = field(default_factory=list)
    rows_model: list[dict] = field(default_factory=list)
    rows_base: list[dict] = field(default_factory=list)


def _run_fold(
    k: int,
    succ: list[Succession],
    fold_of: dict[str, int],
    labels: str,
    mode: str,
    random_state: int | None,
    params: dict[str, Any],
    tract_model: TractModel,
    held_out: _HeldOut,
) -> None:
    """Fit fold ``k``'s model on the other folds' cores, decode its own cores beside the
    baseline, and add their beds and surface errors to ``held_out``."""
    from faciesseq.hmm.model import TractHMM

    train = [s for s in succ if fold_of[s.core] != k]
    test = [s for s in succ if fold_of[s.core] == k]
    train = _training_cores(train, labels, mode, k)
    model = TractHMM(random_state=random_state, **params)
    model.fit(train, labels=None if mode == "unsupervised" else labels)
    interp = model.decode(test)
    base = _baseline(test, interp, params.get("scheme"), tract_model)
    tracts = list(tract_model.order)
    for core in dict.fromkeys(s.core for s in test):
        frame, lab_beds = _core_frame(core, k, test, interp[core], base[core][0], labels, tracts)
        held_out.frames.append(frame)
        held_out.rows_model += _surface_errors(lab_beds, interp[core].picks, "_label", tract_model)
        held_out.rows_base += _surface_errors(lab_beds, base[core][1], "_label", tract_model)


def _scored_beds(beds: pd.DataFrame, labels: str, tracts: list[str]) -> pd.DataFrame:
    """The held-out beds with an interpreter's label, checked to hold only tracts."""
    scored = beds[beds["label"].notna()]
    unknown = sorted(set(scored["label"]) - set(tracts))
    if unknown:
        raise InputError(f"label column {labels!r} holds codes that are not tracts: {unknown}")
    return scored


def _score_methods(
    scored: pd.DataFrame, tracts: list[str], held_out: _HeldOut, tract_model: TractModel
) -> tuple[ScoreSet, ScoreSet]:
    """Scores of the model (its probabilities) and of the baseline (0/1 probabilities)."""
    codes = surface_codes(tract_model)
    probs = scored[[f"p_{t}" for t in tracts]].to_numpy(float)
    base_probs = (
        scored["baseline"].to_numpy(dtype=object)[:, None]
        == np.asarray(tracts, dtype=object)[None, :]
    ).astype(float)
    label_arr = scored["label"].to_numpy(dtype=object)
    model_scores = score_interpretation(
        "model",
        label_arr,
        scored["model"].to_numpy(dtype=object),
        probs,
        tracts,
        held_out.rows_model,
        codes,
    )
    base_scores = score_interpretation(
        "baseline",
        label_arr,
        scored["baseline"].to_numpy(dtype=object),
        base_probs,
        tracts,
        held_out.rows_base,
        codes,
    )
    return model_scores, base_scores


def _run_settings(
    labels: str,
    mode: str,
    random_state: int | None,
    n_cores: int,
    n_beds_scored: int,
    params: dict[str, Any],
) -> dict[str, Any]:
    """What was run, for the record: the labels, mode and seed, then the model's design."""
    settings = {
        "labels": labels,
        "mode": mode,
        "random_state": random_state,
        "n_cores": n_cores,
        "n_beds_scored": n_beds_scored,
    }
    settings.update(
        {
            k: v
            for k, v in params.items()
            if k in ("features", "substates", "prior_strength", "cycle_prior", "unit", "step")
        }
    )
    if params.get("reference") is not None:  # the model itself is not a setting to print
        settings["reference"] = _reference_name(params["reference"])
        settings["reference_weight"] = float(params.get("reference_weight", 1.0))
        settings["reference_use"] = str(params.get("reference_use", "always"))
    return settings


def _reference_name(reference: Any) -> str:
    """How a reference model is named in the settings: its file or the packaged one's
    name, or that it was given from Python."""
    if isinstance(reference, str | os.PathLike):
        return str(reference)
    return "a model given from Python"


def cross_validate(
    successions: CoreSet | Sequence[Succession],
    labels: str,
    folds: int = 5,
    *,
    mode: str = "supervised",
    random_state: int | None = 0,
    progress: Callable[[int, int], None] | None = None,
    **params: Any,
) -> ValidationResult:
    """K-fold cross-validation by core.

    Parameters
    ----------
    successions
        Core set or successions (base to top) carrying the label column.
    labels
        Bed column with the interpreter's tract (blank = unlabelled, not scored).
    folds
        Number of folds (at most the number of cores). The cores are shuffled
        (seeded) and dealt round the folds; in supervised and semi-supervised mode,
        where that deal would put every labelled core in one fold (leaving it none to
        train on), the labelled cores are dealt first and the unlabelled ones continue
        the round.
    mode
        ``"supervised"`` (default): each fold's model is fitted on the training
        cores that carry labels, their labelled beds clamping the states;
        ``"semi-supervised"``: fitted on every training core, labelled beds
        clamped and the rest by EM; ``"unsupervised"``: fitted on every training
        core with the labels ignored (tests identifiability).
    random_state
        Seeds the deal of cores to folds and the model's restarts (the name
        :class:`~faciesseq.hmm.model.TractHMM` gives its seed; ``seed=`` is refused
        with a pointer here rather than taken as a second name for it).
    progress
        Called as ``progress(fold, folds)`` after each fold.
    **params
        :class:`~faciesseq.hmm.model.TractHMM` hyper-parameters (``scheme``, a
        :class:`~faciesseq.scheme.FaciesScheme` or the path of its YAML file,
        ``tract_model``, ``features``...); any other name is a :class:`TypeError`.
    """
    params = _fold_params(params, mode)
    succ = _labelled_successions(successions, labels, params)
    cores = list(dict.fromkeys(s.core for s in succ))
    _check_folds(folds, len(cores))
    _check_labelled_cores(succ, labels, mode)
    fold_of, labelled_first = _deal_for_mode(succ, labels, mode, folds, random_state)
    # the labels' surfaces are named on the permissive graph, which names every boundary
    # a label column can hold (the strict graph a labelled fit may take gives the same
    # names to the boundaries it allows)
    tract_model = params.get("tract_model") or permissive_tract_model()
    tracts = list(tract_model.order)
    held_out = _HeldOut()
    for k in range(folds):
        _run_fold(k, succ, fold_of, labels, mode, random_state, params, tract_model, held_out)
        if progress is not None:
            progress(k + 1, folds)
    beds = pd.concat(held_out.frames, ignore_index=True)
    scored = _scored_beds(beds, labels, tracts)
    model_scores, base_scores = _score_methods(scored, tracts, held_out, tract_model)
    settings = _run_settings(labels, mode, random_state, len(cores), len(scored), params)
    if labelled_first:
        settings["labelled_cores_dealt_first"] = True
    units = succ[0].units if succ else "m"
    return ValidationResult(folds, units, fold_of, model_scores, base_scores, beds, settings)
