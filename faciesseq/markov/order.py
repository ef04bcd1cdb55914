"""Markov order: likelihood-ratio tests of order k against k+1, AIC and BIC.

Successions are read base to top. The test of order ``k`` against ``k+1``
(Anderson & Goodman 1957, Ann. Math. Stat. 28:89–110, sec. 3.4) asks whether,
given the ``k`` facies below, the facies above still depends on the facies
``k+1`` below. It is a test of conditional independence in the table of
``(k+2)``-facies runs; its degrees of freedom are counted per context from
the rows and columns that are not empty (Bishop, Fienberg & Holland 1975,
sec. 3.8), so structural zeros (an embedded chain never repeats a facies) and
unseen contexts are not counted as free cells. For an embedded chain the
test of order 0 against 1 is the quasi-independence test
(:mod:`faciesseq.markov.contingency`).

Order estimates: AIC (Tong 1975, J. Appl. Prob. 12:488–497) and BIC (Katz
1981, Technometrics 23:243–249), all orders fitted on the same transitions
(the ones with at least ``max_order`` facies below them in their succession).
Number of free parameters, with ``m`` the facies present:
``m^k (m-1)`` for a depth-grid chain; for an embedded chain ``m - 1`` at order
0 (quasi-independence weights) and ``m (m-1)^(k-1) (m-2)`` at order ``k >= 1``
(contexts without a repeated facies, each with ``m - 1`` possible facies above).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from faciesseq.markov.contingency import TestResult, _chi2_sf, fit_quasi_independence
from faciesseq.markov.counts import EncodedSuccessions, ngram_counts

__all__ = ["OrderResult", "conditional_g2", "order_analysis"]


def conditional_g2(table: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """G², Pearson χ² and dof of ``h ⊥ j | context`` for tables ``(..., H, M, J)``.

    ``table[..., h, a, j]`` counts runs ``h, a..., j``. Leading axes are
    batch axes (e.g. one per surrogate). Returns arrays over the batch axes.
    """
    t = np.asarray(table, dtype=float)
    row = t.sum(axis=-1, keepdims=True)  # (.., H, M, 1)
    col = t.sum(axis=-3, keepdims=True)  # (.., 1, M, J)
    tot = t.sum(axis=(-1, -3), keepdims=True)  # (.., 1, M, 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        e = row * col / np.where(tot > 0, tot, 1.0)
        g = np.where(t > 0, t * np.log(np.where(t > 0, t, 1.0) / np.where(e > 0, e, 1.0)), 0.0)
        p = np.where(e > 0, (t - e) ** 2 / np.where(e > 0, e, 1.0), 0.0)
    g2 = 2.0 * g.sum(axis=(-1, -2, -3))
    chi2 = p.sum(axis=(-1, -2, -3))
    r_k = (row[..., 0] > 0).sum(axis=-2)  # (.., M)
    c_k = (col[..., 0, :, :] > 0).sum(axis=-1)  # (.., M)
    dof = (np.clip(r_k - 1, 0, None) * np.clip(c_k - 1, 0, None)).sum(axis=-1)
    return g2, chi2, dof


def _context_table(counts: np.ndarray, m: int) -> np.ndarray:
    """Reshape ``(m,)*(k+2)`` run counts to ``(m, m**k, m)`` (first, context, last)."""
    k = counts.ndim - 2
    return counts.reshape(m, m**k, m)


@dataclass(frozen=True)
class OrderResult:
    """Order tests and information criteria.

    Attributes
    ----------
    tests
        Likelihood-ratio tests of order ``k`` against ``k + 1``,
        ``k = 0 .. max_order - 1`` (G² with its Pearson χ² companion in
        ``pearson``).
    pearson
        Pearson χ² versions of the same tests.
    orders
        ``0 .. max_order``.
    log_likelihood, n_parameters, aic, bic
        Per order, on the common ``n`` transitions.
    best_aic, best_bic
        Orders with the smallest AIC and BIC.
    n
        Transitions used for AIC/BIC (those with ``max_order`` facies below).
    """

    tests: tuple[TestResult, ...]
    pearson: tuple[TestResult, ...]
    orders: tuple[int, ...]
    log_likelihood: tuple[float, ...]
    n_parameters: tuple[int, ...]
    aic: tuple[float, ...]
    bic: tuple[float, ...]
    best_aic: int
    best_bic: int
    n: int
    embedded: bool

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame(
            {
                "order": list(self.orders),
                "log_likelihood": list(self.log_likelihood),
                "n_parameters": list(self.n_parameters),
                "aic": list(self.aic),
                "bic": list(self.bic),
            }
        )

    def to_dict(self) -> dict:
        return {
            "orders": list(self.orders),
            "log_likelihood": [float(x) for x in self.log_likelihood],
            "n_parameters": [int(x) for x in self.n_parameters],
            "aic": [float(x) for x in self.aic],
            "bic": [float(x) for x in self.bic],
            "best_aic": int(self.best_aic),
            "best_bic": int(self.best_bic),
            "n": int(self.n),
            "tests": [t.to_dict() for t in self.tests],
        }


def _loglik(enc: EncodedSuccessions, k: int, max_order: int, embedded: bool) -> float:
    m = enc.m
    runs = ngram_counts(enc, k, skip=max_order - k).astype(float)
    if k == 0:
        if not embedded:
            n = runs
            tot = n.sum()
            nz = n > 0
            return float((n[nz] * np.log(n[nz] / tot)).sum())
        pairs = ngram_counts(enc, 1, skip=max_order - 1).astype(float)
        e, _, _ = fit_quasi_independence(pairs)
        rows = pairs.sum(axis=1, keepdims=True)
        nz = pairs > 0
        p = e / np.where(rows > 0, rows, 1.0)
        return float((pairs[nz] * np.log(p[nz])).sum())
    t = runs.reshape(m**k, m)
    tot = t.sum(axis=1, keepdims=True)
    nz = t > 0
    return float((t[nz] * np.log((t / np.where(tot > 0, tot, 1.0))[nz])).sum())


def _n_parameters(m: int, k: int, embedded: bool) -> int:
    if not embedded:
        return m**k * (m - 1)
    if k == 0:
        return m - 1
    return m * (m - 1) ** (k - 1) * max(m - 2, 0)


def order_tests(enc: EncodedSuccessions, max_order: int, embedded: bool) -> tuple[list, list]:
    """LR (G²) and Pearson tests of order k against k+1 for k = 0 .. max_order-1."""
    from faciesseq.markov.contingency import independence_test

    m = enc.m
    g_tests: list[TestResult] = []
    p_tests: list[TestResult] = []
    for k in range(max_order):
        if k == 0:
            pairs = ngram_counts(enc, 1)
            res = independence_test(pairs, embedded=embedded)
            g_tests.append(
                TestResult(
                    "order 0 vs 1 (G2)",
                    res.g2.statistic,
                    res.dof,
                    res.g2.p_value,
                    res.n,
                    null=f"order 0 ({res.model})",
                )
            )
            p_tests.append(
                TestResult(
                    "order 0 vs 1 (Pearson chi2)",
                    res.pearson.statistic,
                    res.dof,
                    res.pearson.p_value,
                    res.n,
                    null=f"order 0 ({res.model})",
                )
            )
            continue
        runs = ngram_counts(enc, k + 1)
        g2, chi2, dof = conditional_g2(_context_table(runs, m))
        n = int(runs.sum())
        null = f"order {k}: given the {k} facies below, the one {k + 1} below does not matter"
        # no context seen with two facies below it and two above: nothing to compare
        note = (
            ""
            if dof > 0
            else "not testable: 0 degrees of freedom, the contexts seen leave nothing to compare"
        )
        g_tests.append(
            TestResult(
                f"order {k} vs {k + 1} (G2)",
                float(g2),
                int(dof),
                _chi2_sf(float(g2), int(dof)),
                n,
                null=null,
                note=note,
            )
        )
        p_tests.append(
            TestResult(
                f"order {k} vs {k + 1} (Pearson chi2)",
                float(chi2),
                int(dof),
                _chi2_sf(float(chi2), int(dof)),
                n,
                null=null,
                note=note,
            )
        )
    return g_tests, p_tests


def order_analysis(enc: EncodedSuccessions, max_order: int = 3, *, embedded: bool) -> OrderResult:
    """Order tests and AIC/BIC order estimates for orders ``0 .. max_order``.

    Parameters
    ----------
    enc
        Encoded successions (base to top).
    max_order
        Highest order considered (``>= 1``).
    embedded
        Bed-to-bed chain (no self-transitions).

    Notes
    -----
    ``AIC(k) = -2 L_k + 2 p_k`` (Tong 1975) and ``BIC(k) = -2 L_k + p_k ln n``
    (Katz 1981), with ``L_k`` the maximised log-likelihood of order ``k``
    on the common ``n`` transitions and ``p_k`` its free parameters (module
    docstring). Differences from the published forms, which subtract the
    statistic of the highest order, are constants that do not move the minimum.
    """
    if max_order < 1:
        from faciesseq.errors import ConfigError

        raise ConfigError(f"max_order must be at least 1 (--max-order), got {max_order}")
    present = np.zeros(enc.m, dtype=bool)
    present[np.unique(enc.states)] = True
    m_eff = int(present.sum())
    g_tests, p_tests = order_tests(enc, max_order, embedded)
    n = int(ngram_counts(enc, 0, skip=max_order).sum())
    ll, npar, aic, bic = [], [], [], []
    for k in range(max_order + 1):
        lk = _loglik(enc, k, max_order, embedded) if n > 0 else float("nan")
        pk = _n_parameters(m_eff, k, embedded)
        ll.append(lk)
        npar.append(pk)
        aic.append(-2 * lk + 2 * pk)
        bic.append(-2 * lk + pk * np.log(n) if n > 0 else float("nan"))
    best_aic = int(np.nanargmin(aic)) if n > 0 else 0
    best_bic = int(np.nanargmin(bic)) if n > 0 else 0
    return OrderResult(
        tuple(g_tests),
        tuple(p_tests),
        tuple(range(max_order + 1)),
        tuple(ll),
        tuple(npar),
        tuple(aic),
        tuple(bic),
        best_aic,
        best_bic,
        n,
        embedded,
    )
