"""Scores of a decoded tract column against a known one.

Pure functions on pandas tables (no model, no printing): the measuring
instruments of the benchmarks. Tables of beds or intervals are one row per bed,
with a core column, ``top`` and ``base`` depths (positive downward) and the
columns to compare. Successive rows of a core are *in contact* where the base of
the upper equals the top of the lower; elsewhere there is a gap, and nothing is
counted across a gap or a core change.

- :func:`balanced_tract_accuracy`: thickness-weighted recall per true tract and
  its mean (balanced accuracy);
- :func:`half_cycle_accuracy`: the same on the transgressive / regressive halves of
  the base-level cycle (TST against the other tracts);
- :func:`boundary_ratio`: decoded tract boundaries per true boundary;
- :func:`surface_pick_scores`: recall and precision of picked surfaces within a
  depth tolerance;
- :func:`expected_calibration_error`: ECE of the probability of the decoded tract;
- :func:`half_cycle_boundaries` and :func:`boundary_f1`: boundaries of a
  two-valued (marine / nonmarine) column and their one-to-one matching.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from faciesseq.errors import InputError

__all__ = [
    "BoundaryMatch",
    "BoundaryRatio",
    "PickScores",
    "TractAccuracy",
    "balanced_tract_accuracy",
    "boundary_f1",
    "boundary_ratio",
    "expected_calibration_error",
    "half_cycle_accuracy",
    "half_cycle_boundaries",
    "surface_pick_scores",
]

#: Depth tolerance for deciding that two successive rows are in contact.
CONTACT_TOL = 1e-6


def _need(table: pd.DataFrame, columns: Iterable[str], what: str) -> None:
    missing = [c for c in columns if c not in table.columns]
    if missing:
        raise InputError(
            f"{what}: the table has no column {', '.join(map(repr, missing))}; "
            f"its columns are {', '.join(map(str, table.columns))}"
        )


def _ratio(num: float, den: float) -> float:
    return float(num) / float(den) if den else float("nan")


def _in_depth_order(
    beds: pd.DataFrame, core_col: str, top_col: str, base_col: str
) -> tuple[pd.DataFrame, np.ndarray]:
    """The table sorted by core (first appearance) and top, and a mask of the
    rows in contact with the row above them (same core, base == top)."""
    order = {c: i for i, c in enumerate(pd.unique(beds[core_col]))}
    t = beds.assign(_core_order=beds[core_col].map(order)).sort_values(
        ["_core_order", top_col], kind="stable"
    )
    core = t[core_col].to_numpy()
    top = t[top_col].to_numpy(float)
    base = t[base_col].to_numpy(float)
    contact = np.zeros(len(t), dtype=bool)
    if len(t) > 1:
        contact[1:] = (core[1:] == core[:-1]) & (np.abs(top[1:] - base[:-1]) <= CONTACT_TOL)
    return t.drop(columns="_core_order").reset_index(drop=True), contact


# --------------------------------------------------------------- tract accuracy
@dataclass(frozen=True)
class TractAccuracy:
    """Balanced accuracy of a tract column.

    Attributes
    ----------
    balanced_accuracy
        Mean over the tracts present in the truth with a positive weight of their
        weighted recall.
    recall
        Tract -> weighted recall (share of the tract's true weight decoded as it;
        NaN for a tract whose true rows weigh nothing, e.g. beds of no thickness).
    support
        Tract -> total weight of the tract in the truth.
    accuracy
        Weighted share of rows decoded right (not balanced), for reference.
    """

    balanced_accuracy: float
    recall: Mapping[str, float]
    support: Mapping[str, float]
    accuracy: float

    def to_dict(self) -> dict:
        return {
            "balanced_accuracy": self.balanced_accuracy,
            "accuracy": self.accuracy,
            "recall": dict(self.recall),
            "support": dict(self.support),
        }


def balanced_tract_accuracy(
    beds: pd.DataFrame,
    truth_col: str = "true_tract",
    pred_col: str = "tract",
    weight: str | None = "thickness",
) -> TractAccuracy:
    """Balanced accuracy: the mean over true tracts of their weighted recall.

    Parameters
    ----------
    beds
        One row per bed (or interval).
    truth_col, pred_col
        Known and decoded tract columns (compared as text). Rows whose truth is
        missing are left out.
    weight
        Column of row weights (thickness by default, so a score is a share of
        the cored thickness); ``"thickness"`` is computed as ``base - top`` when
        the table has no such column; ``None`` weighs every row 1.

    Returns
    -------
    TractAccuracy

    Notes
    -----
    Balanced accuracy (the macro average of per-class recall) does not reward a
    decoder for favouring the commonest tract: Brodersen, Ong, Stephan &
    Buhmann (2010), "The balanced accuracy and its posterior distribution",
    ICPR, 3121-3124.
    """
    _need(beds, (truth_col, pred_col), "balanced_tract_accuracy")
    t = beds[beds[truth_col].notna()]
    if weight is None:
        w = np.ones(len(t))
    elif weight in t.columns:
        w = t[weight].to_numpy(float)
    elif weight == "thickness":
        _need(t, ("top", "base"), "balanced_tract_accuracy (thickness from top and base)")
        w = (t["base"] - t["top"]).to_numpy(float)
    else:
        _need(t, (weight,), "balanced_tract_accuracy")  # raises: no such column
    truth = t[truth_col].astype(str).to_numpy()
    pred = t[pred_col].astype(str).to_numpy()
    right = truth == pred
    recall, support = {}, {}
    for tract in pd.unique(truth):
        sel = truth == tract
        support[str(tract)] = float(w[sel].sum())
        recall[str(tract)] = _ratio(w[sel & right].sum(), w[sel].sum())
    # a tract true only on rows of no weight (beds of no thickness) has no recall to
    # average, as in scikit-learn's weighted balanced_accuracy_score
    weighed = [recall[t] for t in recall if support[t] > 0]
    balanced = float(np.mean(weighed)) if weighed else float("nan")
    return TractAccuracy(balanced, recall, support, _ratio(w[right].sum(), w.sum()))


def half_cycle_accuracy(
    beds: pd.DataFrame,
    truth_col: str = "true_tract",
    pred_col: str = "tract",
    transgressive: Iterable[str] = ("TST",),
    weight: str | None = "thickness",
) -> TractAccuracy:
    """Balanced accuracy of the two halves of the base-level cycle: the transgressive
    tracts (``transgressive``) against every other tract, the regressive half.

    The transgressive-regressive reading of a succession (Embry & Johannessen 1992,
    "T-R sequence stratigraphy", in *Arctic Geology and Petroleum Potential*, NPF
    Special Publication 2:121-146) asks less of a decoded column than the four
    tract names: where the names of the regressive tracts are unsure, this score
    says how far the column still tells deepening from shallowing. Arguments and
    result as :func:`balanced_tract_accuracy`, whose recall is keyed
    ``transgressive`` and ``regressive``.
    """
    _need(beds, (truth_col, pred_col), "half_cycle_accuracy")
    rising = {str(t) for t in transgressive}
    halves = beds.copy()
    for col in (truth_col, pred_col):
        known = halves[col].notna()
        half = np.where(halves[col].astype(str).isin(rising), "transgressive", "regressive")
        halves[col] = pd.Series(half, index=halves.index).where(known)
    return balanced_tract_accuracy(halves, truth_col, pred_col, weight)


# --------------------------------------------------------------- boundary ratio
def _changes(table: pd.DataFrame, contact: np.ndarray, column: str) -> pd.DataFrame:
    """Rows (in depth order) whose ``column`` differs from the row above, in contact."""
    v = table[column].astype(str).to_numpy()
    change = np.zeros(len(v), dtype=bool)
    if len(v) > 1:
        change[1:] = contact[1:] & (v[1:] != v[:-1])
    return table[change]


@dataclass(frozen=True)
class BoundaryRatio:
    """Decoded tract boundaries per true boundary.

    Attributes
    ----------
    ratio
        All decoded boundaries over all true boundaries (NaN without any true one).
    n_pred, n_true
        Counts over all cores.
    per_core
        ``core``, ``n_pred``, ``n_true``, ``ratio`` (NaN where ``n_true`` is 0).
    """

    ratio: float
    n_pred: int
    n_true: int
    per_core: pd.DataFrame = field(repr=False)

    def to_dict(self) -> dict:
        return {
            "ratio": self.ratio,
            "n_pred": self.n_pred,
            "n_true": self.n_true,
            "per_core": self.per_core.to_dict(orient="records"),
        }

    def to_frame(self) -> pd.DataFrame:
        return self.per_core.copy()


def boundary_ratio(
    beds: pd.DataFrame,
    truth_col: str = "true_tract",
    pred_col: str = "tract",
    core_col: str = "core",
    top_col: str = "top",
    base_col: str = "base",
) -> BoundaryRatio:
    """Number of decoded tract boundaries divided by the number of true ones.

    A boundary is a change of tract between two successive rows of one core,
    in depth order, that are in contact (the base of the upper is the top of
    the lower); a gap or a change of core is not a boundary. Above 1 the
    decoded column is choppier than the truth, below 1 smoother.

    Parameters
    ----------
    beds
        One row per bed or interval; any order (sorted here by core, then top).
    truth_col, pred_col
        Known and decoded tract columns.
    core_col, top_col, base_col
        Core identifier and depths.

    Returns
    -------
    BoundaryRatio
    """
    _need(beds, (truth_col, pred_col, core_col, top_col, base_col), "boundary_ratio")
    t, contact = _in_depth_order(beds, core_col, top_col, base_col)
    pred = _changes(t, contact, pred_col)[core_col].value_counts()
    true = _changes(t, contact, truth_col)[core_col].value_counts()
    cores = list(pd.unique(t[core_col]))
    per_core = pd.DataFrame(
        {
            "core": cores,
            "n_pred": [int(pred.get(c, 0)) for c in cores],
            "n_true": [int(true.get(c, 0)) for c in cores],
        }
    )
    per_core["ratio"] = [_ratio(p, n) for p, n in zip(per_core["n_pred"], per_core["n_true"])]
    n_pred, n_true = int(per_core["n_pred"].sum()), int(per_core["n_true"].sum())
    return BoundaryRatio(_ratio(n_pred, n_true), n_pred, n_true, per_core)


# --------------------------------------------------------------- surface picks
@dataclass(frozen=True)
class PickScores:
    """Recall and precision of picked surfaces of one kind.

    Attributes
    ----------
    surface, tolerance
        The surface code scored and the depth tolerance.
    recall
        ``n_true_found / n_true``: share of true surfaces with a pick of the
        kind within the tolerance in the same core.
    precision
        ``n_picks_right / n_picks``: share of picks within the tolerance of a
        true surface of the kind in the same core.
    n_true, n_true_found, n_picks, n_picks_right
        The counts.
    """

    surface: str
    tolerance: float
    recall: float
    precision: float
    n_true: int
    n_true_found: int
    n_picks: int
    n_picks_right: int

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def surface_pick_scores(
    picks: pd.DataFrame,
    true_surfaces: pd.DataFrame,
    surface: str = "MFS",
    tolerance: float = 2.0,
) -> PickScores:
    """Recall and precision of the picks of one surface within a depth tolerance.

    Matching is not one-to-one: one pick may find two true surfaces within the
    tolerance, and two picks may share a true surface (so the tolerance should
    be smaller than half the usual spacing of the surfaces).

    Parameters
    ----------
    picks
        ``core``, ``surface``, ``depth`` (e.g. ``Interpretation.picks_table()``).
    true_surfaces
        ``core``, ``surface``, ``depth`` of the known surfaces. Leave out
        beforehand those that could not be picked (e.g. not cored).
    surface
        Surface code scored (``"MFS"``, ``"SB"``, ...).
    tolerance
        Largest depth difference (depth units) that counts as a match, inclusive.

    Returns
    -------
    PickScores
    """
    cols = ("core", "surface", "depth")
    _need(picks, cols, "surface_pick_scores (picks)")
    _need(true_surfaces, cols, "surface_pick_scores (true surfaces)")
    p = picks[picks["surface"].astype(str) == surface]
    t = true_surfaces[true_surfaces["surface"].astype(str) == surface]
    p_depth = {c: g["depth"].to_numpy(float) for c, g in p.groupby("core", sort=False)}
    t_depth = {c: g["depth"].to_numpy(float) for c, g in t.groupby("core", sort=False)}

    def hits(a: dict, b: dict) -> int:
        n = 0
        for core, depths in a.items():
            other = b.get(core)
            if other is None or not len(other):
                continue
            n += int((np.abs(depths[:, None] - other[None, :]).min(axis=1) <= tolerance).sum())
        return n

    found, right = hits(t_depth, p_depth), hits(p_depth, t_depth)
    return PickScores(
        surface,
        float(tolerance),
        _ratio(found, len(t)),
        _ratio(right, len(p)),
        len(t),
        found,
        len(p),
        right,
    )


# ------------------------------------------------------------------ calibration
def expected_calibration_error(
    probabilities: Sequence[float] | np.ndarray,
    correct: Sequence[bool] | np.ndarray,
    weights: Sequence[float] | np.ndarray | None = None,
    bins: int = 10,
) -> float:
    """Expected calibration error of the probability given to the decoded tract.

    ``ECE = sum_m (W_m / W) |acc(B_m) - conf(B_m)|`` over ``bins`` equal-width
    bins ``B_m = ((m - 1) / M, m / M]`` of the probability (a probability of 0
    falls in the first bin), where ``acc`` and ``conf`` are the (weighted) mean
    correctness and mean probability of the rows in the bin and ``W_m`` their
    weight.

    Parameters
    ----------
    probabilities
        Probability the model gives to its decoded tract, one per row, in [0, 1].
    correct
        Whether the decoded tract is the true one.
    weights
        Row weights (e.g. bed thickness); ``None`` weighs every row 1.
    bins
        Number of equal-width bins.

    Returns
    -------
    float, in [0, 1]; NaN without any row.

    References
    ----------
    C. Guo, G. Pleiss, Y. Sun, K. Q. Weinberger (2017), "On calibration of
    modern neural networks", ICML, PMLR 70:1321-1330 (eq. 3). M. P. Naeini,
    G. F. Cooper, M. Hauskrecht (2015), AAAI, 2901-2907.
    """
    p = np.asarray(probabilities, dtype=float)
    c = np.asarray(correct, dtype=float)
    w = np.ones(len(p)) if weights is None else np.asarray(weights, dtype=float)
    if not (p.shape == c.shape == w.shape) or p.ndim != 1:
        raise InputError(
            "expected_calibration_error: probabilities, correct and weights must be "
            f"1-D and of one length (got {p.shape}, {c.shape}, {w.shape})"
        )
    if int(bins) < 1:
        raise InputError(f"expected_calibration_error: bins must be at least 1 (got {bins})")
    if len(p) and (np.nanmin(p) < 0 or np.nanmax(p) > 1 or np.isnan(p).any()):
        raise InputError("expected_calibration_error: probabilities must lie in [0, 1]")
    total = w.sum()
    if not len(p) or total <= 0:
        return float("nan")
    # bin m (0-based) holds (m / M, (m + 1) / M]; 0 goes to bin 0
    # (rounded first, so that 0.3 * 10 = 3.0000000000000004 stays in bin 2)
    m = np.clip(np.ceil(np.round(p * bins, 9)).astype(int) - 1, 0, int(bins) - 1)
    ece = 0.0
    for b in range(int(bins)):
        sel = m == b
        wb = w[sel].sum()
        if wb <= 0:
            continue
        acc = np.sum(w[sel] * c[sel]) / wb
        conf = np.sum(w[sel] * p[sel]) / wb
        ece += wb / total * abs(acc - conf)
    return float(ece)


# --------------------------------------------------------- half-cycle boundaries
def _is_in(values: pd.Series, members: Iterable[object]) -> np.ndarray:
    """Membership by number for a numeric column and numeric members (so 2 matches
    2.0), else by text."""
    members = list(members)
    numeric = all(
        isinstance(m, int | float | np.number) and not isinstance(m, bool) for m in members
    )
    if numeric and pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values):
        return values.isin([float(m) for m in members]).to_numpy()
    return values.astype(str).isin({str(m) for m in members}).to_numpy()


def half_cycle_boundaries(
    beds: pd.DataFrame,
    column: str = "tract",
    marine: Iterable[object] = ("TST", "HST"),
    core_col: str = "core",
    top_col: str = "top",
    base_col: str = "base",
) -> pd.DataFrame:
    """Depths where a column changes between its marine and its other values.

    For a decoded tract column with the default ``marine``: changes between
    {TST, HST} and {FSST, LST}, whatever the tract on either side (HST -> FSST
    is one, TST -> HST is none). For a marine / nonmarine indicator, give its
    marine values (e.g. ``marine=(2,)`` for ``NM_M`` of the Council Grove data).

    Parameters
    ----------
    beds
        One row per bed, interval or sample; any order (sorted here by core,
        then top). Changes are counted only between rows in contact (a gap or a
        change of core is not a boundary).
    column
        Column read; rows whose value is in ``marine`` are marine.
    marine
        The marine values (compared as numbers when the column and the values
        are numeric, so ``2`` matches ``2.0``; else as text).
    core_col, top_col, base_col
        Core identifier and depths.

    Returns
    -------
    DataFrame ``core``, ``depth`` (the contact: top of the lower row),
    ``upper_marine``, ``lower_marine``, in depth order within cores.
    """
    _need(beds, (column, core_col, top_col, base_col), "half_cycle_boundaries")
    t, contact = _in_depth_order(beds, core_col, top_col, base_col)
    is_marine = _is_in(t[column], marine)
    change = np.zeros(len(t), dtype=bool)
    if len(t) > 1:
        change[1:] = contact[1:] & (is_marine[1:] != is_marine[:-1])
    idx = np.flatnonzero(change)
    return pd.DataFrame(
        {
            "core": t[core_col].to_numpy()[idx],
            "depth": t[top_col].to_numpy(float)[idx],
            "upper_marine": is_marine[idx - 1] if len(idx) else np.zeros(0, dtype=bool),
            "lower_marine": is_marine[idx],
        }
    )


@dataclass(frozen=True)
class BoundaryMatch:
    """One-to-one matching of decoded boundaries to true ones.

    Attributes
    ----------
    precision, recall, f1
        ``n_matched / n_pred``, ``n_matched / n_true`` (NaN without any decoded,
        resp. true, boundary) and ``F1 = 2 n_matched / (n_pred + n_true)``, their
        harmonic mean where both are defined (0 when only one side has
        boundaries, NaN when neither has).
    n_pred, n_true, n_matched
        Counts.
    tolerance
        Largest depth difference of a match, inclusive.
    """

    precision: float
    recall: float
    f1: float
    n_pred: int
    n_true: int
    n_matched: int
    tolerance: float

    @property
    def ratio(self) -> float:
        """Decoded boundaries per true boundary."""
        return _ratio(self.n_pred, self.n_true)

    def to_dict(self) -> dict:
        return {**self.__dict__, "ratio": self.ratio}


def boundary_f1(
    pred_depths: Sequence[float] | np.ndarray,
    true_depths: Sequence[float] | np.ndarray,
    tolerance: float,
) -> BoundaryMatch:
    """Precision, recall and F1 of boundary depths of one core, matched one to one.

    Greedy matching: of all (decoded, true) pairs at most ``tolerance`` apart,
    the closest pair is matched first, then the closest pair among the
    boundaries still free, and so on (ties: shallower decoded, then shallower
    true boundary first). Each boundary is matched at most once, so a decoder
    cannot score by placing many boundaries around one true one.

    Parameters
    ----------
    pred_depths, true_depths
        Depths of the decoded and the true boundaries of one core (any order).
    tolerance
        Largest depth difference of a match, inclusive.

    Returns
    -------
    BoundaryMatch

    Notes
    -----
    Boundary precision / recall within a tolerance window, as in the evaluation
    of change-point detection (common practice): C. Truong, L. Oudre, N. Vayatis
    (2020), "Selective review of offline change point detection methods",
    Signal Processing 167:107299.
    """
    pred = np.sort(np.asarray(pred_depths, dtype=float))
    true = np.sort(np.asarray(true_depths, dtype=float))
    matched = 0
    if len(pred) and len(true):
        dist = np.abs(pred[:, None] - true[None, :])
        i, j = np.nonzero(dist <= tolerance)
        order = np.lexsort((j, i, dist[i, j]))
        used_p, used_t = set(), set()
        for k in order:
            a, b = int(i[k]), int(j[k])
            if a in used_p or b in used_t:
                continue
            used_p.add(a)
            used_t.add(b)
            matched += 1
    precision, recall = _ratio(matched, len(pred)), _ratio(matched, len(true))
    return BoundaryMatch(
        precision,
        recall,
        _ratio(2 * matched, len(pred) + len(true)),
        len(pred),
        len(true),
        matched,
        float(tolerance),
    )
