"""Section 3 of the appendix: the fitted tract model, its diagnostics and its validation.

Reads a fitted ``faciesseq.hmm.TractHMM`` (learned attributes ``startprob_``,
``transmat_``, ``emissions_``, ``restarts_``, ``states_``...), an optional
``faciesseq.hmm.selection.ModelSelection`` (BIC of candidates) and an
optional ``faciesseq.validation.ValidationResult``.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from faciesseq.core import row_word
from faciesseq.report.document import (
    FigureBlock,
    Paragraph,
    Section,
    TableBlock,
    depth_decimals,
    format_value,
)
from faciesseq.scheme import TractModel

__all__ = ["model_section", "model_seed", "parameters_note", "tract_transitions"]


_READABLE = {
    "accuracy": "accuracy",
    "macro_f1": "macro F1",
    "brier": "Brier score",
    "mfs_within_one_bed": "MFS within one bed",
    "support": "beds",
    "f1": "F1",
    "bin_low": "bin from",
    "bin_high": "bin to",
    "mean_probability": "mean probability",
    "fraction_correct": "fraction correct",
    "count": "beds",
}


def _readable_units(units: str) -> dict[str, str]:
    return {
        "n_true": "interpreted",
        "n_matched": "picked",
        "within_one_bed": "within one bed",
        "median_abs_error": f"median |error| ({units})",
        "mean_abs_error_beds": "mean |error| (beds)",
    }


def _tract_colours(tracts) -> dict[str, str]:
    from faciesseq.report.style import tract_colour

    return {t: tract_colour(t, tracts) for t in tracts}


def _facies_colours(scheme, codes) -> dict[str, str]:
    from faciesseq.report.style import facies_colours

    if scheme is None:
        return {}
    return facies_colours(list(codes), scheme)


def _stationary(transmat: np.ndarray) -> np.ndarray:
    """Stationary distribution of a row-stochastic matrix (uniform if it is not unique)."""
    values, vectors = np.linalg.eig(transmat.T)
    k = int(np.argmin(np.abs(values - 1.0)))
    pi = np.abs(np.real(vectors[:, k]))
    total = pi.sum()
    if not np.isfinite(total) or total <= 0:
        return np.full(len(transmat), 1.0 / len(transmat))
    return pi / total


def tract_transitions(model: Any) -> pd.DataFrame:
    """Tract-to-tract transition probabilities of a fitted model, per bed.

    With one state per tract this is ``transmat_``; with sub-states, the
    states of a tract are weighted by their stationary probability:
    ``T_ab = Σ_{i∈a} π_i Σ_{j∈b} A_ij / Σ_{i∈a} π_i``.
    """
    states = model.states_
    A = np.asarray(model.transmat_, dtype=float)
    mask = states.tract_mask().astype(float)  # (n_tracts, K)
    pi = _stationary(A)
    weights = mask * pi[None, :]
    row_weight = weights.sum(axis=1, keepdims=True)
    weights = np.where(
        row_weight > 0,
        weights / np.where(row_weight > 0, row_weight, 1),
        mask / mask.sum(axis=1, keepdims=True),
    )
    T = weights @ A @ mask.T
    frame = pd.DataFrame(T, index=list(states.tracts), columns=list(states.tracts))
    frame.index.name = "from \\ to"
    return frame


def _rows(model: Any, n: int) -> pd.Index:
    """Row labels of a table of ``n`` rows: per tract where emissions are (sub-states
    share their tract's), per state where chains are."""
    labels = model.states_.labels()
    if n == model.states_.n_tracts and len(labels) != n:
        return pd.Index(list(model.states_.tracts), name="tract")
    return pd.Index(labels, name="state")


def _state_frame(values: np.ndarray, model: Any, columns) -> pd.DataFrame:
    values = np.asarray(values, dtype=float)
    return pd.DataFrame(values, index=_rows(model, len(values)), columns=list(columns))


def _emission_blocks(model: Any, sub: Section, scheme) -> None:
    """Tables and heat maps of every emission piece, added to ``sub``.

    A piece is shown by what it carries: emission probabilities (categorical
    pieces), a stacking trend (``trendprob_``), boosted trees (``stacking``) or
    means and variances (Gaussian pieces).
    """
    ranks = getattr(model, "ranks_", None)
    for piece in model.emissions_:
        kind = getattr(piece, "kind", "")
        key = _emission_key(piece.name)
        if kind in ("categorical", "facies", "contact") or (
            hasattr(piece, "emissionprob_") and not hasattr(piece, "trendprob_")
        ):
            _categorical_blocks(sub, piece, key, model, scheme)
        elif hasattr(piece, "trendprob_"):
            _facies_trend_blocks(sub, piece, key, model, scheme, ranks)
        elif kind == "stacking":
            _stacking_blocks(sub, piece, key, getattr(model, "units_", None))
        elif hasattr(piece, "means_"):
            _gaussian_blocks(sub, piece, key, model)


def _emission_key(name: str) -> str:
    """The key (and file stem) of a piece's blocks: ``model_emission_`` and its name."""
    key = "model_emission_" + "".join(c if c.isalnum() else "_" for c in name.lower())
    if len(key.encode("utf-8")) > 100:  # a long column name; keys name files
        from faciesseq.io.writer import safe_stem

        key = safe_stem(key, {key})
    return key


#: What each categorical emission feature is, in words, for the titles of its figure
#: and table (the bins are named in :data:`faciesseq.hmm.context.CONTEXT_CATEGORIES`;
#: what they read in :func:`faciesseq.cycles.bed_context`).
FEATURE_TITLES: dict[str, str] = {
    "facies": "facies",
    "contact": "lower contact of the bed",
    "rank_step": "rank jump at the bed's base (+ = deeper upward)",
    "rank_step_above": "rank jump at the bed's top (+ = deeper upward)",
    "rank_trend": "rank trend over the bed and two beds on each side",
    "cycle_stacking": "stacking of the bed's cycle against the cycles below and above",
    "base_shift": "shift of the cycle's base against the cycle below",
    "trend": "trend of proximality over the beds around",
    "position": "place between the shallowest and deepest facies around",
    "local_position": "place within the bed's cycle and the cycles next to it",
    "cycle_sharpness": "share of sharp contacts in the bed's cycle",
    "cycle_amplitude": "how far the bed's cycle shallows",
    "setting": "setting of the bed's facies",
    "exposure": "subaerial exposure",
}


def feature_title(name: str) -> str:
    """The feature ``name`` in words (:data:`FEATURE_TITLES`; another name, a bed
    attribute, with its underscores as spaces)."""
    if "facies" in name:
        return "facies"
    return FEATURE_TITLES.get(name, name.replace("_", " "))


def _probability_heatmap(table: pd.DataFrame, model: Any, scheme, categories, what: str):
    """Heat map of a table of probabilities per state, states labelled in their tract
    colours; categories in their facies colours where they are facies, else plain (a
    colour per bin of a context feature looked like a facies or a tract, and repeated)."""
    from faciesseq.report import figures

    colours = _tract_colours(model.states_.tracts)
    if what == "facies":
        colours |= _facies_colours(scheme, categories)
    return figures.heatmap(
        table,
        value_label="probability",
        row_title="state",
        column_title=what,
        label_colours=colours,
    )


def _categorical_blocks(sub: Section, piece: Any, key: str, model: Any, scheme) -> None:
    """Table and heat map of a categorical piece's ``emissionprob_`` (state by category)."""
    name = piece.name
    table = _state_frame(piece.emissionprob_, model, piece.categories)
    what = feature_title(name)
    sub.add(
        TableBlock(
            key,
            f"Emission probabilities P({what} | state) of the {name} piece.",
            table,
            parameters=("*",),
        ),
        FigureBlock(
            key,
            f"Emission probabilities of the {what}, per state ({name} piece).",
            _probability_heatmap(table, model, scheme, piece.categories, what),
        ),
    )


def _facies_trend_blocks(
    sub: Section, piece: Any, key: str, model: Any, scheme, ranks: Any
) -> None:
    """Blocks of a facies-trend piece: the lowest bed's facies (table and heat map), the
    trend P(facies | facies below, state), and, where every facies has a finite rank,
    the trend's prior and its summary as rank changes."""
    first = _state_frame(piece.emissionprob_, model, piece.categories)
    sub.add(
        TableBlock(
            key + "_first",
            "Facies of the lowest bed of a succession (no bed below), per state: "
            f"P(facies | state) of the {piece.name} piece.",
            first,
            parameters=("*",),
        ),
        FigureBlock(
            key + "_first",
            "Facies probabilities of a succession's lowest bed, per state.",
            _probability_heatmap(first, model, scheme, piece.categories, "facies"),
        ),
    )
    trend = np.asarray(piece.trendprob_, dtype=float)  # (S, below, above)
    cats = list(piece.categories)
    index = _rows(model, len(trend))
    sub.add(_trend_table(piece.name, key, trend, cats, index))
    if ranks is not None and len(ranks) == len(cats) and np.isfinite(ranks).all():
        r = np.asarray(ranks, dtype=float)
        change = r[None, None, :] - r[None, :, None]  # above minus below
        pseudo = np.asarray(getattr(piece, "trend_pseudo", np.zeros_like(trend)), float)
        sub.add(_trend_prior_table(key, pseudo, change, index))
        first_p = np.asarray(piece.emissionprob_, dtype=float)
        sub.add(_trend_summary_table(key, trend, first_p, change, index))


def _trend_table(name: str, key: str, trend: np.ndarray, cats: list, index: pd.Index) -> TableBlock:
    """The stacking trend as a long table: one row per state and facies below (not shown)."""
    rows = []
    for s, label in enumerate(index):
        for g, below in enumerate(cats):
            rows.append(
                {
                    index.name: label,
                    "facies below": below,
                    **dict(zip(cats, trend[s, g], strict=True)),
                }
            )
    return TableBlock(
        key + "_trend",
        f"P(facies | facies below, state) of the {name} piece (stacking trend), "
        "one row per state and facies below.",
        pd.DataFrame(rows),
        index=False,
        shown=False,
    )


def _trend_prior_table(
    key: str, pseudo: np.ndarray, change: np.ndarray, index: pd.Index
) -> TableBlock:
    """The trend's Dirichlet prior per state: pseudo-counts into deeper and shallower facies."""
    deeper = (pseudo * (change > 0)).sum(axis=(1, 2))
    shallower = (pseudo * (change < 0)).sum(axis=(1, 2))
    return TableBlock(
        key + "_prior",
        "Dirichlet prior of the stacking trend: pseudo-counts (pseudo-beds) "
        "given to transitions into a deeper (more basinward) and into a "
        "shallower facies, per state; this is how the expected trend of each "
        "tract anchors which state is which.",
        pd.DataFrame(
            {
                "pseudo-counts, deeper above": deeper,
                "pseudo-counts, shallower above": shallower,
                "share deeper": deeper / np.where(deeper + shallower > 0, deeper + shallower, 1),
            },
            index=index,
        ),
    )


def _trend_summary_table(
    key: str, trend: np.ndarray, first_p: np.ndarray, change: np.ndarray, index: pd.Index
) -> TableBlock:
    """Each state's expected rank change upward, weighted by its facies probabilities."""
    expected = (trend * change).sum(axis=2)  # (S, below)
    mean_change = (expected * first_p).sum(axis=1)
    frame = pd.DataFrame(
        {
            "mean rank change upward": mean_change,
            "P(deeper facies above)": ((trend * (change > 0)).sum(axis=2) * first_p).sum(axis=1),
        },
        index=index,
    )
    return TableBlock(
        key + "_trend_summary",
        "Stacking trend of each state: expected change of proximality rank from a "
        "bed to the bed above (positive = deepening upward, negative = "
        "shallowing upward), averaged over the facies below weighted by the "
        "state's facies probabilities.",
        frame,
    )


def _stacking_blocks(sub: Section, piece: Any, key: str, units: str | None = None) -> None:
    """How often the stacking piece's boosted trees split on each window feature."""
    counts = piece.trees.split_counts()
    columns = piece.columns()
    total = max(int(counts.sum()), 1)
    frame = pd.DataFrame(
        {"splits": counts, "share": counts / total},
        index=pd.Index(columns, name="window feature"),
    ).sort_values("splits", ascending=False, kind="stable")
    sub.add(
        TableBlock(
            key,
            f"Stacking piece: boosted trees ({piece.trees.n_iterations} rounds, "
            f"{piece.trees.n_parameters()} leaves) over a window of {piece.half_width} "
            f"beds below and above each bed{_cycles_read(piece, units)}, learnt from the labelled "
            "beds; how often each window feature is split on (offsets: beds or cycles "
            "below negative, above positive; rank_step = rank of that bed minus the "
            "bed's own; top / base = shallowest / deepest rank of a cycle).",
            frame.head(12),
        )
    )


def _cycles_read(piece: Any, units: str | None = None) -> str:
    """How many cycles around each bed the stacking trees read, and the depth windows
    ("" for neither: model files written before 2026-12-04 and 2026-12-05)."""
    from faciesseq.cycles import CYCLE_WINDOW_HALF_WIDTH, cycle_window_columns
    from faciesseq.hmm.encoding import DEPTH_SCALES, depth_window_columns

    read = set(piece.columns())
    out = ""
    if read & set(cycle_window_columns()):
        out += f" and the {CYCLE_WINDOW_HALF_WIDTH} cycles below and above it"
    if read & set(depth_window_columns()) and piece.depth_unit:
        widths = ", ".join(f"{w:g}" for w in DEPTH_SCALES)
        out += (
            f", and the facies ranks within {widths} median cycle thicknesses "
            f"({piece.depth_unit:.3g} {units or 'depth units'} each) below and above it"
        )
    return out


def _gaussian_blocks(sub: Section, piece: Any, key: str, model: Any) -> None:
    """Mean and standard deviation per state of a Gaussian piece."""
    name = piece.name
    frame = pd.DataFrame(
        {"mean": piece.means_, "sd": np.sqrt(np.asarray(piece.vars_, dtype=float))},
        index=_rows(model, len(piece.means_)),
    )
    sub.add(
        TableBlock(
            key,
            f"Gaussian emission of {name} per state: mean and standard deviation"
            + (" (natural log of thickness)." if "thick" in name else "."),
            frame,
        )
    )


def model_seed(model: Any) -> str:
    """``seed 3``, or for a model read from a file without one, the seeds of its restarts.

    A loaded model's ``random_state`` may be unset; its file keeps the seed in
    ``training.random_state`` and each restart's seed in ``training.restarts``.
    """
    seed = model.random_state
    if not isinstance(seed, int | np.integer):
        seed = (getattr(model, "training_", None) or {}).get("random_state")
    if isinstance(seed, int | np.integer) and not isinstance(seed, bool):
        return f"seed {int(seed)}"
    seeds = [r.get("seed") for r in getattr(model, "restarts_", None) or []]
    seeds = [int(x) for x in seeds if isinstance(x, int | np.integer)]
    if seeds:
        return f"restart seed{'s' if len(seeds) > 1 else ''} {', '.join(map(str, seeds))}"
    return "seed not recorded"


def parameters_note(n_parameters: int, n_beds: int, rows: str = "beds") -> str:
    """A caution when free parameters exceed a tenth of the beds they are fitted on, else ``""``.

    Ten observations per parameter is a common rule of thumb (common practice);
    below it the training fit says little about the model's worth.
    """
    if n_beds <= 0 or n_parameters * 10 <= n_beds:
        return ""
    return (
        f"The model has {n_parameters} free parameters for {n_beds} {rows}, more than one "
        f"for every ten {rows}: the training log-likelihood and BIC flatter it, and single "
        "parameters (the emissions of rare facies above all) are held mostly by the "
        "Dirichlet prior, not by the data. Judge the model by its cross-validation on "
        "cores it was not fitted to."
    )


def _summary_blocks(s: Section, model: Any, note: str, fit_notes, numbers: dict) -> None:
    """What was fitted, on what, and how its probabilities were checked."""
    from faciesseq.hmm.calibration import describe_calibration
    from faciesseq.hmm.modelfile import model_to_dict

    doc = model_to_dict(model)
    doc.pop("provenance", None)  # the date belongs in provenance.json, not with the numbers
    numbers["model"] = doc
    if note:
        s.add(Paragraph(note, kind="note"))
    if fit_notes:
        s.add(
            _warnings_table(
                "model_fit_warnings", "warnings raised while fitting the tract model", fit_notes
            )
        )
    states = model.states_
    bic = None
    # with interpreted beds held to their tracts the training likelihood is not that of
    # the beds alone, so no BIC is formed from it (the candidates' table has the BIC)
    if model.n_train_beds_ > 0 and not model.n_labelled_:
        # BIC = -2 log L + p log n on the training beds (Schwarz 1978)
        bic = -2.0 * model.log_likelihood_ + model.n_parameters() * np.log(model.n_train_beds_)
    numbers["bic_training"] = bic
    features = ", ".join(getattr(model, "features_", ()))
    s.add(
        Paragraph(
            f"{len(states.tracts)} systems tracts ({', '.join(states.tracts)}) in "
            f"{states.n_states} hidden states; emission pieces: {features}; fitted on "
            f"{model.n_train_beds_} {row_word(getattr(model, 'unit_', 'beds'))} of "
            f"{len(model.cores_)} cores with "
            f"{model.n_parameters()} free parameters"
            + (
                f", {model.n_labelled_} of them labelled by an interpreter"
                if model.n_labelled_
                else ", unsupervised"
            )
            + f"; {model.n_restarts} random restarts ({model_seed(model)}); Dirichlet prior "
            f"strength {format_value(float(model.prior_strength))}; "
            f"training log-likelihood {format_value(model.log_likelihood_)}"
            + (" (interpreted beds held to their tracts)" if model.n_labelled_ else "")
            + (f", BIC {format_value(bic)}." if bic is not None else ".")
        )
    )
    crowded = parameters_note(
        model.n_parameters(), model.n_train_beds_, row_word(getattr(model, "unit_", "beds"))
    )
    if crowded:
        s.add(Paragraph(crowded, kind="note"))
    s.add(Paragraph(describe_calibration(model.temperature_, model.calibration_)))


def graph_text(model: Any) -> str:
    """Which tract graph the model was fitted on and why: chosen by ICL among the trade's
    graphs, taken from the labels, or the tract model as given."""
    from faciesseq.hmm.graphs import graph_line, graph_selection_line

    line = graph_line(model).replace(" -> ", " → ")
    chosen = getattr(model, "graph_selection_", None) or getattr(model, "label_graph_", None)
    given = "" if chosen else " (the tract model as given: no graph was chosen among candidates)"
    selection = graph_selection_line(model)
    more = f" {selection[0].upper()}{selection[1:]}." if selection else ""
    return f"The model was fitted on the {line}{given}.{more}"


def _graph_blocks(graph: Section, model: Any, tract_model: TractModel) -> None:
    """Which graph was fitted and why, the tracts, their surfaces and the fitted graph."""
    from faciesseq.report import figures

    graph.add(Paragraph(graph_text(model)))

    states = model.states_
    tracts = pd.DataFrame(
        [
            {
                "tract": t.code,
                "name": t.name,
                "expected trend upward": t.trend,
                "may be absent": t.code in tract_model.skips,
                "sub-states": states.substates[list(states.tracts).index(t.code)]
                if t.code in states.tracts
                else np.nan,
            }
            for t in tract_model.tracts
        ]
    ).set_index("tract")
    surfaces = pd.DataFrame(
        [
            {"lower tract": x.lower, "upper tract": x.upper, "surface": x.code, "name": x.name}
            for x in tract_model.surfaces
        ]
    )
    T = tract_transitions(model)
    graph.add(
        TableBlock(
            "model_tracts",
            f"Tracts of the tract model “{tract_model.name}”, their cyclic order upward and the "
            "stacking trend each is expected to show (the priors are built from these trends).",
            tracts,
        ),
        TableBlock(
            "model_surfaces",
            "Surfaces named on the tract boundaries the graph allows.",
            surfaces,
            index=False,
        ),
        FigureBlock(
            "model_tract_graph",
            "Tract graph with the fitted probabilities of moving from one tract to the next "
            "between successive beds; 'stay' is the probability that the next bed belongs to "
            "the same tract.",
            figures.tract_graph(tract_model, T),
        ),
    )


def _parameter_blocks(params: Section, model: Any, scheme) -> None:
    """Start and transition probabilities of the states, and the emission tables."""
    from faciesseq.report import figures

    states = model.states_
    labels = states.labels()
    T = tract_transitions(model)
    A = pd.DataFrame(np.asarray(model.transmat_, dtype=float), index=labels, columns=labels)
    A.index.name = "from \\ to"
    start = pd.DataFrame(
        {"start probability": np.asarray(model.startprob_, dtype=float)},
        index=pd.Index(labels, name="state"),
    )
    params.add(
        TableBlock(
            "model_transitions",
            "Transition matrix between hidden states, bed to bed upward (zeros are boundaries "
            "the tract graph forbids; < 0.001 a boundary it allows, fitted below 0.001).",
            A,
            parameters=("*",),
        ),
        FigureBlock(
            "model_transitions",
            "Transition probabilities between hidden states (row: lower bed's state).",
            figures.heatmap(
                A,
                value_label="probability",
                row_title="state below",
                column_title="state above",
                label_colours=_tract_colours(states.tracts),
            ),
        ),
        TableBlock(
            "model_start",
            "Probability of each state at the lowest bed of a succession.",
            start,
            parameters=("*",),
        ),
    )
    if len(T) != len(A):
        params.add(
            TableBlock(
                "model_tract_transitions",
                "Tract-to-tract transition probabilities (sub-states weighted by their "
                "stationary probability).",
                T,
                parameters=("*",),
            )
        )
    _emission_blocks(model, params, scheme)  # their numbers are in the model-file document


def _diagnostic_blocks(diag: Section, model: Any, selection: Any, numbers: dict) -> None:
    """The EM restarts, their traces and the candidate models."""
    from faciesseq.report import figures

    restarts = pd.DataFrame(
        [
            {
                "restart": r["restart"],
                "seed": r["seed"],
                "iterations": r["n_iter"],
                "converged": bool(r["converged"]),
                "objective": r["objective"],
                "log-likelihood": r["log_likelihood"],
                "best": r["restart"] == model.best_restart_,
            }
            for r in model.restarts_
        ]
    ).set_index("restart")
    traces = {f"restart {r['restart']} (seed {r['seed']})": r["history"] for r in model.restarts_}
    best = f"restart {model.best_restart_} (seed {model.restarts_[model.best_restart_]['seed']})"
    n_conv = int(restarts["converged"].sum())
    diag.add(
        Paragraph(
            f"{n_conv} of {len(restarts)} restarts reached the convergence tolerance "
            f"({format_value(float(model.tol))} in objective per iteration, at most "
            f"{model.max_iter} iterations); the restart with the highest objective "
            "(log-likelihood plus log-prior) is kept."
        ),
        TableBlock(
            "model_restarts",
            "EM restarts: seed, iterations, convergence, final objective and log-likelihood.",
            restarts,
        ),
        FigureBlock(
            "model_loglik_trace",
            "EM objective (log-likelihood plus log-prior) after each iteration, one line per "
            "restart.",
            figures.loglik_trace(
                traces, best=best, ylabel="objective (log-likelihood + log-prior)"
            ),
        ),
    )
    if selection is not None:
        diag.add(
            TableBlock(
                "model_selection",
                "Candidate models fitted on the same beds: free parameters, log-likelihood of "
                "the beds (no tract imposed) and BIC = −2 log L + p log n (Schwarz 1978); the "
                "selected one has the lowest BIC.",
                selection.to_frame().rename(
                    columns={
                        "substates": "sub-states per tract",
                        "n_parameters": "parameters",
                        "log_likelihood": "log-likelihood",
                        "bic": "BIC",
                    }
                ),
                index=False,
            )
        )
        numbers["selection"] = selection.to_dict()


def _validation_blocks(
    val: Section, validation: Any, reason: str, notes: Sequence[str], numbers: dict
) -> None:
    """Cross-validation by core against the interpreters' tracts, where there is one.

    Adds to ``val`` the scores, the confusion matrices, the surface picks, the
    reliability of the probabilities and the warnings of the folds, in that order;
    without a validation, one paragraph saying why (``reason``).
    """
    if validation is None:
        val.add(Paragraph(f"Not available: {reason}.", kind="missing"))
        return
    numbers["validation"] = validation.to_dict()
    frames = validation.to_frames()
    _validation_score_blocks(val, validation, frames)
    _confusion_blocks(val, validation, frames)
    val.add(
        TableBlock(
            "validation_surfaces",
            f"Surfaces: interpreted, matched by a pick, fraction within one bed, and depth "
            f"error ({validation.units}).",
            frames["surfaces"]
            .set_index(frames["surfaces"].columns[0])
            .rename(columns=_readable_units(validation.units)),
            decimals={"within one bed": 2, "mean |error| (beds)": 1},
        ),
    )
    _reliability_blocks(val, validation, frames)
    if notes:
        _validation_warning_blocks(val, notes)


#: Fewest scored beds for a third decimal of an accuracy (below, one bed moves the second).
THIRD_DECIMAL_BEDS = 1000


def score_decimals(n_beds: int) -> int:
    """Decimals of an accuracy, F1 or Brier score resting on ``n_beds`` scored beds:
    2, or 3 from :data:`THIRD_DECIMAL_BEDS` beds (one bed in 97 is 0.01 of accuracy)."""
    return 3 if n_beds >= THIRD_DECIMAL_BEDS else 2


def folds_text(validation: Any) -> str:
    """The folds actually used: the cores dealt, the labelled cores scored and the folds
    they fell in (a fold of unlabelled cores scores nothing)."""
    settings = dict(getattr(validation, "settings", {}) or {})
    fold_of = dict(getattr(validation, "fold_of_core", {}) or {})
    beds = validation.beds
    scored = beds[beds["label"].notna()] if "label" in beds else beds
    scored_cores = list(dict.fromkeys(scored["core"])) if "core" in scored else []
    used = sorted({fold_of[c] for c in scored_cores if c in fold_of})
    n_cores = int(settings.get("n_cores", len(fold_of)))
    rows = _unit_word(settings)
    text = (
        f"Cross-validation by core ({settings.get('mode', 'supervised')} fits): "
        f"{n_cores} cores dealt to {validation.folds} folds"
    )
    if len(used) != validation.folds or len(scored_cores) != n_cores:
        text += (
            f"; {len(scored_cores)} labelled core{'s' if len(scored_cores) != 1 else ''} "
            f"scored, in {len(used)} of the folds, so in effect {len(used)}-fold"
        )
    return (
        f"{text}. Each scored core is decoded by a model fitted without its fold and "
        f"compared with the interpreter's tracts ({settings.get('labels', 'labels')}), "
        f"{len(scored)} {rows} in all; the baseline assigns tracts by a stacking-trend rule "
        "without a model."
    )


def _unit_word(settings: dict) -> str:
    return row_word(settings.get("unit", "beds"))


def _validation_score_blocks(val: Section, validation: Any, frames: dict) -> None:
    """What was cross-validated (folds, mode, labels), then the scores overall and per tract,
    each score to the decimals its number of scored beds bears (:func:`score_decimals`)."""
    settings = dict(getattr(validation, "settings", {}) or {})
    beds = validation.beds
    scored = beds[beds["label"].notna()] if "label" in beds else beds
    n_scored = len(scored)
    n_cores = int(scored["core"].nunique()) if "core" in scored else 0
    rows = _unit_word(settings)
    places = score_decimals(n_scored)
    summary = frames["summary"].set_index("method").rename(columns=_READABLE)
    summary[rows] = n_scored
    summary["cores"] = n_cores
    per_tract = (
        frames["per_tract"].set_index(frames["per_tract"].columns[0]).rename(columns=_READABLE)
    )
    per_tract = per_tract.rename(columns={"beds": rows})
    val.add(
        Paragraph(folds_text(validation)),
        TableBlock(
            "validation_summary",
            f"Scores of the tract model and of the baseline on {n_scored} {rows} of {n_cores} "
            "labelled cores: accuracy, macro-averaged F1, Brier score of the tract "
            "probabilities and the fraction of maximum flooding surfaces picked within one "
            f"bed ({places} decimals: one of {n_scored} is {1 / max(n_scored, 1):.2g}).",
            summary,
            decimals={
                "accuracy": places,
                "macro F1": places,
                "Brier score": 3,
                "MFS within one bed": 2,
            },
        ),
        TableBlock(
            "validation_per_tract",
            f"Precision, recall, F1 and support ({rows}) per tract.",
            per_tract,
            decimals={"precision": places, "recall": places, "F1": places},
        ),
    )


def _confusion_blocks(val: Section, validation: Any, frames: dict) -> None:
    """Confusion matrices of the model and of the baseline, and the model's as a heat map."""
    from faciesseq.report import figures

    for method in ("model", "baseline"):
        confusion = frames[f"confusion_{method}"].copy()
        confusion.index.name = "interpreted \\ decoded"
        val.add(
            TableBlock(
                f"validation_confusion_{method}",
                f"Confusion matrix of the {method} (beds; rows: interpreter's tract, "
                "columns: decoded tract).",
                confusion,
            )
        )
    val.add(
        FigureBlock(
            "validation_confusion",
            "Confusion matrix of the tract model (beds).",
            figures.heatmap(
                frames["confusion_model"].astype(float),
                label_colours=_tract_colours(validation.model.confusion.columns),
                value_label="beds",
                fmt="{:.0f}",
                row_title="interpreted tract",
                column_title="decoded tract",
            ),
        ),
    )


def _reliability_blocks(val: Section, validation: Any, frames: dict) -> None:
    """Reliability of the tract probabilities per bin: a table, and the curves of the model
    and of the baseline."""
    from faciesseq.report import figures

    rel = {}
    for method in ("model", "baseline"):
        r = getattr(validation, method).reliability
        rel[method] = pd.DataFrame(
            {
                "predicted": r["mean_probability"],
                "observed": r["fraction_correct"],
                "count": r["count"],
            }
        ).dropna()
    rows = _unit_word(dict(getattr(validation, "settings", {}) or {}))
    table = frames["reliability"][frames["reliability"]["count"] > 0].rename(columns=_READABLE)
    table = table.rename(columns={"beds": rows})
    edges = table[["bin from", "bin to"]].to_numpy(float).ravel() if len(table) else []
    few = figures.MIN_RELIABILITY_BEDS
    val.add(
        TableBlock(
            "validation_reliability",
            "Reliability of the tract probabilities: per probability bin (bins without "
            f"{rows} left out), the mean predicted probability and the fraction of {rows} "
            "where that tract was the interpreter's.",
            table,
            index=False,
            decimals={
                "bin from": depth_decimals(edges) if len(edges) else 1,
                "bin to": depth_decimals(edges) if len(edges) else 1,
                "mean probability": 2,
                "fraction correct": 2,
            },
        ),
        FigureBlock(
            "validation_reliability",
            "Reliability curve: observed frequency against predicted tract probability, "
            f"tract model beside the baseline; bins of fewer than {few} {rows} are open "
            "markers, not joined into the line.",
            figures.reliability_curve(rel["model"], baseline=rel["baseline"], min_count=few),
        ),
    )


def _validation_warning_blocks(val: Section, notes: Sequence[str]) -> None:
    """The warnings raised while fitting and decoding the folds: the first, and all in a table."""
    val.add(
        Paragraph(
            f"{len(notes)} warning(s) while fitting and decoding the folds "
            "(listed in full in tables/validation_warnings.csv); the first: "
            f"{notes[0]}",
            kind="note",
        ),
        _warnings_table("validation_warnings", "warnings raised during cross-validation", notes),
    )


def model_section(
    model: Any,
    tract_model: TractModel,
    validation: Any = None,
    note: str = "",
    selection: Any = None,
    scheme: Any = None,
    validation_reason: str = "no interpreted (labelled) cores to validate against",
    validation_notes: Sequence[str] = (),
    fit_notes: Sequence[str] = (),
) -> tuple[Section, dict[str, Any]]:
    """The tract-model section and the numbers behind it (``model``, ``validation``)."""
    s = Section("The tract model")
    numbers: dict[str, Any] = {}
    _summary_blocks(s, model, note, fit_notes, numbers)
    _graph_blocks(s.sub("Tract graph"), model, tract_model)
    _parameter_blocks(s.sub("Transition and emission parameters"), model, scheme)
    _diagnostic_blocks(s.sub("Fitting diagnostics"), model, selection, numbers)
    _validation_blocks(
        s.sub("Cross-validation"), validation, validation_reason, validation_notes, numbers
    )
    return s, numbers


def _warnings_table(key: str, title: str, notes) -> TableBlock:
    """Warnings as a table of the appendix's files, not shown on the page."""
    return TableBlock(key, title, pd.DataFrame({"warning": list(notes)}), index=False, shown=False)
