"""Tests of first-order dependence on a transition count matrix.

Two null hypotheses, one per kind of succession:

- **beds** (embedded chain: successive beds always differ, so the diagonal is
  structurally zero): *quasi-independence* — the facies above a bed is drawn
  in proportion to fixed facies weights, among the facies other than the
  bed's own. Expected counts by iterative proportional fitting (Goodman 1968,
  JASA 63:1091–1131; Powers & Easterling 1982, J. Sed. Petrology 52:913–923).
- **grid** (depth-grid cells, self-transitions present): *independence* of the
  facies above from the facies below, expected counts ``r_i c_j / N``
  (Anderson & Goodman 1957, Ann. Math. Stat. 28:89–110).

Both are log-linear models with row and column effects on the cells that can
be filled; degrees of freedom are "cells that can be filled minus estimable
parameters" (Bishop, Fienberg & Holland 1975, Discrete Multivariate Analysis,
sec. 3.8), which gives (m−1)² − m for a full embedded chain and (m−1)² for a
full grid chain, and fewer when a facies never occurs below or above another
(an empty row or column) — those cells are counted and reported.

Cell diagnostics: adjusted residuals (Haberman 1973, Biometrics 29:205–220),
generalised to the quasi-independence model through the leverages of the
Poisson log-linear fit (Haberman 1974, The Analysis of Frequency Data), the
difference matrix (observed minus expected transition probabilities; Davis
2002, Statistics and Data Analysis in Geology, ch. 4), a flag for expected
counts below 5 (common practice for the χ² approximation), and Cramér's V.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from faciesseq.errors import InputError

__all__ = [
    "ContingencyResult",
    "TestResult",
    "adjusted_residuals",
    "fit_independence",
    "fit_quasi_independence",
    "independence_test",
    "pearson_batch",
]


@dataclass(frozen=True)
class TestResult:
    """One hypothesis test: statistic, degrees of freedom and p-value.

    ``method`` is ``"asymptotic"`` (χ² reference distribution) or
    ``"monte carlo"`` (``n_surrogates`` surrogate successions; the p-value is
    ``(1 + #{surrogate >= observed}) / (1 + n_surrogates)``, Davison & Hinkley
    1997, Bootstrap Methods, eq. 4.11). ``n`` is the number of transitions
    the statistic was computed on.

    A test with no degrees of freedom (or no transitions) cannot be run
    (:attr:`testable`): the null fits the counts exactly whatever they are, so the
    statistic is 0 or meaningless and a p-value, asymptotic or Monte Carlo, says
    nothing. Two facies are the common case: an embedded chain of two facies can
    only alternate A-B-A, and quasi-independence has (2 - 1)² - 2 < 1 degrees of
    freedom (the embedded chain's (n - 1)² - n; Goodman 1968, Powers & Easterling
    1982, cited from memory). Such a test is reported as not testable, with no
    statistic, p-value or conclusion (:meth:`to_dict`, the reports).
    """

    name: str
    statistic: float
    dof: int
    p_value: float
    n: int
    method: str = "asymptotic"
    n_surrogates: int = 0
    null: str = ""
    note: str = ""

    @property
    def testable(self) -> bool:
        """Whether the test can be run: some degrees of freedom and transitions."""
        return self.dof > 0 and self.n > 0

    @property
    def not_testable(self) -> str:
        """Why the test cannot be run (``not testable: 0 degrees of freedom``), or an
        empty string for a test that can."""
        if self.testable:
            return ""
        if self.note.startswith(NOT_TESTABLE):
            return self.note
        why = "no transitions" if self.n <= 0 else f"{max(self.dof, 0)} degrees of freedom"
        return f"{NOT_TESTABLE}: {why}"

    def to_dict(self) -> dict:
        """The test as plain values; a test that cannot be run has no statistic or
        p-value (None) and says why in ``note``."""
        run = self.testable
        return {
            "name": self.name,
            "statistic": float(self.statistic) if run else None,
            "dof": int(self.dof),
            "p_value": float(self.p_value) if run else None,
            "n": int(self.n),
            "method": self.method,
            "n_surrogates": int(self.n_surrogates),
            "null": self.null,
            "note": self.note if run else self.not_testable,
        }


#: First words of what is said of a test that cannot be run (:attr:`TestResult.not_testable`).
NOT_TESTABLE = "not testable"


def _chi2_sf(statistic: float, dof: int) -> float:
    """Upper tail of the chi-square distribution: ``scipy.stats.chi2.sf`` (1 below zero),
    from the special function it calls (importing ``scipy.stats`` costs a second;
    ``scipy.special`` is imported here, not with the module, which ``decode`` reads
    without calling this)."""
    from scipy import special

    if dof <= 0:
        return float("nan")
    return 1.0 if statistic < 0 else float(special.chdtrc(dof, statistic))


def fit_quasi_independence(
    counts: np.ndarray,
    structural: np.ndarray | None = None,
    *,
    tol: float = 1e-12,
    max_iter: int = 10_000,
) -> tuple[np.ndarray, int, bool]:
    """Expected counts under quasi-independence by iterative proportional fitting.

    ``e[i, j] = a_i b_j`` on cells that are not structural zeros, scaled in
    turn to the observed row and column totals until both match to ``tol``
    (relative). Goodman (1968), JASA 63:1091–1131; Bishop, Fienberg & Holland
    (1975), ch. 5. Own implementation: the fit is a few vector products per
    sweep, no library offers it for square tables with a structural diagonal.

    Parameters
    ----------
    counts
        Square matrix of upward transition counts.
    structural
        Boolean matrix of structural zeros; default the diagonal.

    Returns
    -------
    expected, iterations, converged
    """
    n = np.asarray(counts, dtype=float)
    if structural is None:
        structural = np.eye(len(n), dtype=bool)
    free = ~np.asarray(structural, dtype=bool)
    rows, cols = n.sum(axis=1), n.sum(axis=0)
    a = (rows > 0).astype(float)
    b = (cols > 0).astype(float)
    scale = max(rows.max(initial=0.0), 1.0)
    converged = False
    iterations = 0
    while iterations < max_iter:
        iterations += 1
        fa = free @ b
        a = np.divide(rows, fa, out=np.zeros_like(rows), where=fa > 0)
        fb = a @ free
        b = np.divide(cols, fb, out=np.zeros_like(cols), where=fb > 0)
        e = np.outer(a, b) * free
        if np.abs(e.sum(axis=1) - rows).max(initial=0.0) <= tol * scale:
            converged = True
            break
    return np.outer(a, b) * free, iterations, converged


def pearson_batch(counts: np.ndarray, *, embedded: bool, sweeps: int = 200) -> np.ndarray:
    """Pearson χ² of (quasi-)independence for a batch ``(B, m, m)`` of count matrices.

    The surrogate tests use it; the same fit as :func:`independence_test`
    (iterative proportional fitting for ``embedded``), vectorised over the batch.
    """
    n = np.asarray(counts, dtype=float)
    rows, cols = n.sum(axis=2), n.sum(axis=1)
    if embedded:
        free = ~np.eye(n.shape[-1], dtype=bool)
        a = (rows > 0).astype(float)
        b = (cols > 0).astype(float)
        for _ in range(sweeps):
            fa = b @ free.T
            a = np.divide(rows, fa, out=np.zeros_like(rows), where=fa > 0)
            fb = a @ free
            b_new = np.divide(cols, fb, out=np.zeros_like(cols), where=fb > 0)
            done = np.abs(b_new - b).max(initial=0.0) <= 1e-10 * max(cols.max(initial=1), 1)
            b = b_new
            if done:
                break
        e = a[:, :, None] * b[:, None, :] * free
    else:
        tot = n.sum(axis=(1, 2))[:, None, None]
        e = rows[:, :, None] * cols[:, None, :] / np.where(tot > 0, tot, 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.where(e > 0, (n - e) ** 2 / np.where(e > 0, e, 1.0), 0.0)
    return t.sum(axis=(1, 2))


def fit_independence(counts: np.ndarray) -> np.ndarray:
    """Expected counts under independence, ``r_i c_j / N`` (Pearson 1900)."""
    n = np.asarray(counts, dtype=float)
    total = n.sum()
    if total == 0:
        return np.zeros_like(n)
    return np.outer(n.sum(axis=1), n.sum(axis=0)) / total


def _design(active: np.ndarray) -> np.ndarray:
    """Poisson log-linear design (intercept, row and column effects) on the active cells."""
    idx_r, idx_c = np.nonzero(active)
    rows = np.unique(idx_r)
    cols = np.unique(idx_c)
    x = [np.ones(len(idx_r))]
    x += [(idx_r == r).astype(float) for r in rows[1:]]
    x += [(idx_c == c).astype(float) for c in cols[1:]]
    return np.column_stack(x)


def adjusted_residuals(counts: np.ndarray, expected: np.ndarray, active: np.ndarray) -> np.ndarray:
    """Adjusted (standardised Pearson) residuals of a row-and-column log-linear fit.

    ``(o - e) / sqrt(e (1 - h))`` with ``h`` the leverage of the cell in the
    Poisson log-linear fit (Haberman 1973, Biometrics 29:205–220; for plain
    independence ``1 - h = (1 - r_i/N)(1 - c_j/N)``). Approximately standard
    normal under the model. Cells that are not active (structural zeros,
    empty rows or columns) get ``nan``.
    """
    o = np.asarray(counts, dtype=float)
    e = np.asarray(expected, dtype=float)
    out = np.full(o.shape, np.nan)
    if not active.any():
        return out
    x = _design(active)
    w = e[active]
    xw = x * np.sqrt(w)[:, None]
    h = np.einsum("ij,jk,ik->i", xw, np.linalg.pinv(xw.T @ xw), xw)
    denom = w * (1.0 - h)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = (o[active] - w) / np.sqrt(np.where(denom > 1e-12, denom, np.nan))
    out[active] = r
    return out


@dataclass(frozen=True)
class ContingencyResult:
    """First-order dependence test of one transition count matrix, with cell diagnostics.

    Attributes
    ----------
    model
        ``"quasi-independence"`` (beds) or ``"independence"`` (grid).
    observed, expected
        Counts (``m × m``, rows = lower facies, columns = upper facies).
    structural
        Cells that cannot be filled (the diagonal of an embedded chain).
    active
        Cells that enter the test (not structural, row and column non-empty).
    pearson, g2
        Pearson χ² and likelihood-ratio G² tests.
    dof
        Degrees of freedom: active cells minus estimable parameters.
    n_structural_zeros
        Structural zeros inside the non-empty rows and columns.
    empty_rows, empty_columns
        Facies (indices) never below / never above another one.
    difference
        Observed minus expected transition probabilities (row-normalised).
    residuals
        Adjusted residuals (``nan`` outside ``active``).
    residual_p
        Two-sided normal p-value of each adjusted residual.
    significant
        ``|residual| > z(1 - alpha/2)``.
    low_expected
        Active cells with expected count below 5.
    cramers_v
        ``sqrt(χ² / (N (min(R, C) - 1)))`` on the active rows and columns.
    """

    model: str
    observed: np.ndarray
    expected: np.ndarray
    structural: np.ndarray
    active: np.ndarray
    pearson: TestResult
    g2: TestResult
    dof: int
    n: int
    n_structural_zeros: int
    empty_rows: tuple[int, ...]
    empty_columns: tuple[int, ...]
    difference: np.ndarray
    residuals: np.ndarray
    residual_p: np.ndarray
    significant: np.ndarray
    low_expected: np.ndarray
    cramers_v: float
    alpha: float = 0.05
    iterations: int = 0
    converged: bool = True
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def n_low_expected(self) -> int:
        return int(self.low_expected.sum())

    def to_frame(self, codes=None) -> pd.DataFrame:
        """One row per cell (``from`` below, ``to`` above) with every diagnostic."""
        m = len(self.observed)
        codes = list(codes) if codes is not None else [str(i) for i in range(m)]
        i, j = np.meshgrid(np.arange(m), np.arange(m), indexing="ij")
        return pd.DataFrame(
            {
                "from": np.array(codes, dtype=object)[i.ravel()],
                "to": np.array(codes, dtype=object)[j.ravel()],
                "observed": self.observed.ravel(),
                "expected": self.expected.ravel(),
                "difference": self.difference.ravel(),
                "adjusted_residual": self.residuals.ravel(),
                "residual_p": self.residual_p.ravel(),
                "significant": self.significant.ravel(),
                "low_expected": self.low_expected.ravel(),
                "structural": self.structural.ravel(),
            }
        )

    def to_dict(self) -> dict:
        """The tests and counts of degrees of freedom (matrices: see :meth:`to_frame`)."""
        return {
            "model": self.model,
            "tests": [self.pearson.to_dict(), self.g2.to_dict()],
            "dof": int(self.dof),
            "n": int(self.n),
            "structural_zeros": int(self.n_structural_zeros),
            "empty_rows": list(self.empty_rows),
            "empty_columns": list(self.empty_columns),
            "low_expected_cells": self.n_low_expected,
            "cramers_v": float(self.cramers_v),
            "notes": list(self.notes),
        }


def _statistics(o: np.ndarray, e: np.ndarray, active: np.ndarray) -> tuple[float, float]:
    oa, ea = o[active], e[active]
    pos = ea > 0
    pearson = float((((oa - ea) ** 2)[pos] / ea[pos]).sum())
    nz = oa > 0
    g2 = float(2.0 * (oa[nz] * np.log(oa[nz] / ea[nz])).sum())
    return pearson, g2


def independence_test(
    counts: np.ndarray,
    *,
    embedded: bool,
    structural: np.ndarray | None = None,
    alpha: float = 0.05,
) -> ContingencyResult:
    """Test that the facies above does not depend on the facies below.

    Null hypothesis: quasi-independence (``embedded=True``; the diagonal, and
    any other ``structural`` cells, cannot be filled) or independence
    (``embedded=False``). Both Pearson χ² and G² are referred to χ² with
    ``dof`` degrees of freedom.

    Parameters
    ----------
    counts
        Square matrix of upward transition counts (rows: lower facies).
    embedded
        Bed-to-bed (embedded) chain with a structurally zero diagonal.
    structural
        Extra structural zeros (boolean ``m × m``), or-ed with the diagonal when
        ``embedded``.
    alpha
        Level for flagging significant adjusted residuals.

    Examples
    --------
    Davis (2002, ch. 4) embedded chain of five lithologies: ``dof`` is
    ``(5-1)**2 - 5 = 11``.
    """
    o, struct = _observed_and_structural(counts, embedded, structural)
    rows, cols = o.sum(axis=1), o.sum(axis=0)
    live = np.outer(rows > 0, cols > 0)
    active = live & ~struct
    quasi = embedded or structural is not None
    iterations, converged = 0, True
    if quasi:
        e, iterations, converged = fit_quasi_independence(o, struct)
    else:
        e = fit_independence(o)
    n = int(o.sum())
    dof = _degrees_of_freedom(active)
    n_struct = int((live & struct).sum())
    n_rows, n_cols = int((rows > 0).sum()), int((cols > 0).sum())
    notes = _fit_notes(dof, len(o), embedded, n_struct, n_rows, n_cols, iterations, converged)
    pearson, g2 = _statistics(o, e, active)
    name = "quasi-independence" if quasi else "independence"
    t_pearson, t_g2 = _named_tests(name, pearson, g2, dof, n)
    resid, resid_p, significant = _cell_residuals(o, e, active, alpha)
    low = active & (e < 5)
    if low.any():
        notes.append(f"{int(low.sum())} of {int(active.sum())} cells have expected count below 5")
    return ContingencyResult(
        model=name,
        observed=o,
        expected=e,
        structural=struct,
        active=active,
        pearson=t_pearson,
        g2=t_g2,
        dof=dof,
        n=n,
        n_structural_zeros=n_struct,
        empty_rows=tuple(int(i) for i in np.nonzero(rows == 0)[0]),
        empty_columns=tuple(int(i) for i in np.nonzero(cols == 0)[0]),
        difference=_probability_difference(o, e, rows),
        residuals=resid,
        residual_p=resid_p,
        significant=significant,
        low_expected=low,
        cramers_v=_cramers_v(pearson, n, n_rows, n_cols),
        alpha=alpha,
        iterations=iterations,
        converged=converged,
        notes=tuple(notes),
    )


def _observed_and_structural(
    counts: np.ndarray, embedded: bool, structural: np.ndarray | None
) -> tuple[np.ndarray, np.ndarray]:
    """The counts as floats, checked square (and, embedded, with an empty diagonal), and
    the structural zeros: the diagonal when embedded, or-ed with ``structural``."""
    o = np.asarray(counts, dtype=float)
    if o.ndim != 2 or o.shape[0] != o.shape[1]:
        raise InputError(f"transition counts must be a square matrix, got shape {o.shape}")
    m = len(o)
    struct = np.zeros((m, m), dtype=bool)
    if embedded:
        struct |= np.eye(m, dtype=bool)
        off = o[np.eye(m, dtype=bool)]
        if (off > 0).any():
            raise InputError(
                "an embedded (bed-to-bed) chain has no self-transitions, but the counts have "
                f"{int(off.sum())} on the diagonal; use the depth grid for such data"
            )
    if structural is not None:
        struct |= np.asarray(structural, dtype=bool)
    return o, struct


def _degrees_of_freedom(active: np.ndarray) -> int:
    """Free cells less the parameters of the row and column effects they identify."""
    if not active.any():
        return 0
    return int(active.sum() - np.linalg.matrix_rank(_design(active)))


def _fit_notes(
    dof: int,
    m: int,
    embedded: bool,
    n_struct: int,
    n_rows: int,
    n_cols: int,
    iterations: int,
    converged: bool,
) -> list[str]:
    """Notes on the fit: degrees of freedom other than the textbook's, and a fit that
    did not converge."""
    notes: list[str] = []
    nominal = (m - 1) ** 2 - (m if embedded else 0)
    if dof != nominal:
        notes.append(
            f"degrees of freedom {dof} instead of {nominal}: {n_struct} structural zero cell(s) "
            f"in {n_rows} non-empty row(s) and {n_cols} non-empty column(s)"
        )
    if not converged:
        notes.append(f"iterative proportional fitting stopped after {iterations} sweeps")
    return notes


def _named_tests(
    name: str, pearson: float, g2: float, dof: int, n: int
) -> tuple[TestResult, TestResult]:
    """Pearson χ² and G² referred to χ² with ``dof`` degrees of freedom, with their null."""
    null = (
        "the facies above a bed is drawn from fixed weights among the other facies"
        if name == "quasi-independence"
        else "the facies above is independent of the facies below"
    )
    t_pearson = TestResult(
        f"{name} (Pearson chi2)", pearson, dof, _chi2_sf(pearson, dof), n, null=null
    )
    t_g2 = TestResult(f"{name} (G2)", g2, dof, _chi2_sf(g2, dof), n, null=null)
    return t_pearson, t_g2


def _probability_difference(o: np.ndarray, e: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """Observed less expected upward transition probabilities (0 in empty rows)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        p_obs = np.where(rows[:, None] > 0, o / np.where(rows > 0, rows, 1)[:, None], 0.0)
        er = e.sum(axis=1)
        p_exp = np.where(er[:, None] > 0, e / np.where(er > 0, er, 1)[:, None], 0.0)
    return p_obs - p_exp


def _cell_residuals(
    o: np.ndarray, e: np.ndarray, active: np.ndarray, alpha: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Adjusted residuals of the cells, their two-sided p-values, and which are
    significant at level ``alpha``."""
    from scipy import special

    resid = adjusted_residuals(o, e, active)
    resid_p = 2.0 * special.ndtr(-np.abs(resid))  # scipy.stats.norm.sf
    z = -special.ndtri(alpha / 2)  # scipy.stats.norm.isf
    significant = np.nan_to_num(np.abs(resid), nan=0.0) > z
    return resid, resid_p, significant


def _cramers_v(pearson: float, n: int, n_rows: int, n_cols: int) -> float:
    """Cramér's V of the table's non-empty rows and columns (NaN when undefined)."""
    k = min(n_rows, n_cols) - 1
    return float(np.sqrt(pearson / (n * k))) if n > 0 and k > 0 else float("nan")
