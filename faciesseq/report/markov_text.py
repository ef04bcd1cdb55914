"""Plain-text tables of a :class:`~faciesseq.markov.MarkovReport`, for the terminal.

Every test is written on one line in the form a reviewer expects,
``χ²(dof, N = n) = value, p = …`` (G² for likelihood-ratio statistics).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

__all__ = [
    "format_p",
    "format_test",
    "homogeneity_sentence",
    "markov_text",
    "not_testable_text",
    "order_explanation",
    "verdict",
]


def format_p(p: float) -> str:
    """``p = 0.034``, ``p = 2.1e-05``; ``p not available`` for NaN."""
    if p is None or not math.isfinite(p):
        return "p not available"
    if p >= 0.001:
        return f"p = {p:.3f}"
    return f"p = {p:.2g}"


def not_testable_text(test) -> str:
    """A test that cannot be run, as reports write it in place of its statistic:
    ``not testable (0 degrees of freedom; N = 52)``."""
    return f"not testable ({_why_not(test)}; N = {test.n})"


def _why_not(test) -> str:
    """Why a test cannot be run: ``0 degrees of freedom``."""
    return test.not_testable.split(":", 1)[-1].strip()


def format_test(test) -> str:
    """``χ²(11, N = 396) = 173.61, p = 2.1e-31`` (and the Monte Carlo size when there is
    one); :func:`not_testable_text` for a test that cannot be run, no statistic."""
    symbol = "G²" if "(G2)" in test.name else "χ²"
    text = (
        f"{symbol}({test.dof}, N = {test.n}) = {test.statistic:.2f}, {format_p(test.p_value)}"
        if test.testable
        else not_testable_text(test)
    )
    if test.method == "monte carlo":
        text += f"  [Monte Carlo, {test.n_surrogates} surrogates]"
    return text


#: Why the Pearson p-value is the safer of the two where they disagree: for a fixed
#: number of cells X² usually converges to its χ² reference faster than G², and the
#: approximation is usually poor for G² when there are fewer than about 5
#: transitions per cell (Agresti 2013, Categorical Data Analysis, 3rd ed., Wiley,
#: on the sample size the chi-squared tests need).
SPARSE_TABLES_NOTE = (
    "in sparse tables the χ² approximation is usually poorer for G² than for Pearson's χ² "
    "(Agresti 2013, Categorical Data Analysis)"
)


def split_verdict(pearson, g2, alpha: float) -> bool:
    """Whether Pearson's χ² and the G² of one null fall on either side of ``alpha``
    (never for tests that cannot be run)."""
    testable = pearson.testable and g2.testable
    return testable and (pearson.p_value < alpha) != (g2.p_value < alpha)


def disagreement(alpha: float) -> str:
    """What the text says of a :func:`split_verdict`: that the tests disagree, and which
    to trust in sparse tables (:data:`SPARSE_TABLES_NOTE`)."""
    return f"the tests disagree at the {alpha:g} level; {SPARSE_TABLES_NOTE}"


def homogeneity_sentence(homogeneity, alpha: float) -> str:
    """The homogeneity verdict: whether the groups differ, quoting Pearson's χ², and
    where the likelihood-ratio G² of the same null falls on the other side of
    ``alpha``, both tests and that they disagree."""
    h = homogeneity
    groups = f"The {len(h.groups)} groups by {h.by}"
    if not h.pearson.testable:
        why = not_testable_text(h.pearson)
        return f"{groups}: {why}; no conclusion on whether they differ."
    pearson_differs = h.pearson.p_value < alpha
    if not split_verdict(h.pearson, h.g2, alpha):
        word = "differ" if pearson_differs else "do not differ significantly"
        return f"{groups} {word}: {format_test(h.pearson)}."
    first, then = ("differ", "do not") if pearson_differs else ("do not differ significantly", "do")
    return (
        f"{groups} {first} by Pearson's χ², {format_test(h.pearson)}, but {then} by the "
        f"likelihood-ratio G², {format_test(h.g2)}: {disagreement(alpha)}."
    )


def _table(frame: pd.DataFrame, digits: int) -> str:
    def cell(v) -> str:
        if isinstance(v, float | np.floating):
            if not math.isfinite(v):
                return "."
            return f"{v:.{digits}f}"
        return str(v)

    rows = [[str(frame.index.name or "")] + [str(c) for c in frame.columns]]
    columns = [frame[c].to_numpy() for c in frame.columns]
    for k, idx in enumerate(frame.index):
        rows.append([str(idx)] + [cell(col[k]) for col in columns])
    widths = [max(len(r[k]) for r in rows) for k in range(len(rows[0]))]
    return "\n".join(
        "  ".join(s.rjust(w) if k else s.ljust(w) for k, (s, w) in enumerate(zip(r, widths)))
        for r in rows
    )


def _matrix(matrix: np.ndarray, codes, digits: int) -> str:
    frame = pd.DataFrame(np.asarray(matrix), index=list(codes), columns=list(codes))
    frame.index.name = "below\\above"
    return _table(frame, digits)


#: Effect size w = sqrt(G² / N) below which a departure is small (Cohen 1988,
#: Statistical Power Analysis, sec. 7.2: 0.1 small, 0.3 medium, 0.5 large).
SMALL_EFFECT = 0.3


def order_explanation(report) -> str | None:
    """Why an order test can reject first order while AIC or BIC choose it, or ``None``.

    The two weigh the same pair of models (first against second order) with
    different parameter counts: the likelihood-ratio (G²) test counts as degrees
    of freedom only the free cells of the second-order contexts the successions
    show (Bishop, Fienberg & Holland 1975, sec. 3.8), whereas AIC (Tong 1975) and
    BIC (Katz 1981) charge the nominal parameters of a second-order chain, every
    context included, seen or not. The sentence names both counts, and says the
    departure is small only where its effect size w = sqrt(G² / N) is below
    :data:`SMALL_EFFECT` (Cohen 1988).
    """
    order = report.order
    a = report.first_order.alpha
    one_two = next((t for t in order.tests if t.name.startswith("order 1 vs 2")), None)
    if one_two is None or not one_two.p_value < a:
        return None
    criteria = (("AIC", order.best_aic), ("BIC", order.best_bic))
    chosen = [name for name, best in criteria if best == 1]
    if not chosen:
        return None
    names = " and ".join(chosen)
    orders = list(order.orders)
    charged = ""
    if 1 in orders and 2 in orders:
        k1, k2 = (order.n_parameters[orders.index(k)] for k in (1, 2))
        charged = (
            f" {names} charge{'' if len(chosen) > 1 else 's'} a second-order chain "
            f"{k2 - k1} more free parameters than first order (every context of two "
            f"facies, seen or not), where the test counts {one_two.dof} degrees of freedom "
            "(the free cells of the contexts the successions show)."
        )
    w = math.sqrt(max(float(one_two.statistic), 0.0) / one_two.n) if one_two.n else math.nan
    head = (
        f"The order test rejects first order against second (G²({one_two.dof}, "
        f"N = {one_two.n}) = {one_two.statistic:.1f}) while {names} "
        f"{'choose' if len(chosen) > 1 else 'chooses'} first order."
    )
    if w < SMALL_EFFECT:
        return (
            f"{head}{charged} Both can hold: the departure from first order is small "
            f"(w = √(G²/N) = {w:.2f}), below the medium effect of {SMALL_EFFECT:g} "
            f"(Cohen 1988), and with N = {one_two.n} transitions the G² test "
            f"detects it, whereas {names} weigh{'' if len(chosen) > 1 else 's'} it against "
            "the parameters a second-order chain adds: the second-order effect is "
            "detectable but does not pay for its parameters."
        )
    return (
        f"{head}{charged} The departure is not small (w = √(G²/N) = {w:.2f}, above "
        f"{SMALL_EFFECT:g}, a medium effect; Cohen 1988): {names} "
        f"turn{'' if len(chosen) > 1 else 's'} it down for parameters of contexts the "
        "cores never show, which no number of such beds can estimate; judge the "
        "second-order effect by the test, and by more cores where the contexts are rare."
    )


def _alternation(report) -> str:
    """Why two facies leave nothing to test in an embedded chain (empty otherwise)."""
    if report.embedded and len(report.codes) == 2:
        return "; with two facies an embedded chain can only alternate A-B-A"
    return ""


def _first_order_lines(report, mc: dict) -> list[str]:
    """The first-order verdict, its G² where it disagrees and its Monte Carlo test;
    no verdict where the test cannot be run."""
    fo = report.first_order
    a, first = fo.alpha, fo.pearson
    if not first.testable:
        return [
            f"Not testable ({_why_not(first)}, N = {first.n}{_alternation(report)}): no "
            f"conclusion on ordered or random (the {fo.model} null)."
        ]
    word = "Ordered, not random" if first.p_value < a else "Could be random"
    lines = [
        f"{word}: the {fo.model} null is {'' if first.p_value < a else 'not '}rejected, "
        f"{format_test(first)}."
    ]
    if split_verdict(first, fo.g2, a):
        lines.append(
            f"The likelihood-ratio G² of the same null falls on the other side, "
            f"{format_test(fo.g2)}: {disagreement(a)}."
        )
    mc_first = mc.get(first.name)
    if mc_first is not None:
        agree = (mc_first.p_value < a) == (first.p_value < a)
        lines.append(
            f"The Monte Carlo test {'agrees' if agree else 'disagrees'}: "
            f"p = {mc_first.p_value:.3g} with {mc_first.n_surrogates} surrogates."
        )
    return lines


def _order_lines(report, mc: dict) -> list[str]:
    """First against second order (with its Monte Carlo test) and the orders AIC and
    BIC choose; no verdict where the test cannot be run or no transition was fitted."""
    order, a = report.order, report.first_order.alpha
    lines = []
    one_two = next((t for t in order.tests if t.name.startswith("order 1 vs 2")), None)
    if one_two is not None and not one_two.testable:
        lines.append(f"First order against second order: {not_testable_text(one_two)}.")
    elif one_two is not None:
        word = "rejected" if one_two.p_value < a else "not rejected"
        line = f"First order is {word} against second order, {format_test(one_two)}"
        mc_order = mc.get("order 1 vs 2 (G2)")
        if mc_order is not None:
            line += (
                f" (Monte Carlo p = {mc_order.p_value:.3g}, {mc_order.n_surrogates} surrogates "
                "with the same transition counts)"
            )
        lines.append(line + ".")
    lines.append(_order_choice(order))
    return lines


def _order_choice(order) -> str:
    """The orders AIC and BIC choose, or that none is chosen on no transitions."""
    if order.n <= 0:
        return "Order not chosen: the orders are fitted on 0 transitions."
    return f"Order chosen by AIC: {order.best_aic}; by BIC: {order.best_bic}."


def verdict(report) -> list[str]:
    """Plain sentences answering "ordered or random?", each quoting the test it rests on;
    a test that cannot be run (no degrees of freedom) is said so, with no conclusion."""
    fo = report.first_order
    mc = {t.name: t for t in report.surrogate_tests}
    lines = _first_order_lines(report, mc) + _order_lines(report, mc)
    explanation = order_explanation(report)
    if explanation is not None:
        lines.append(explanation)
    if report.homogeneity is not None:
        lines.append(homogeneity_sentence(report.homogeneity, fo.alpha))
    if fo.n_low_expected and fo.pearson.testable:
        lines.append(
            f"{fo.n_low_expected} of {int(fo.active.sum())} cells expect fewer than 5 "
            "transitions: prefer the Monte Carlo p-values (--surrogates)."
            if not report.surrogate_tests
            else f"{fo.n_low_expected} of {int(fo.active.sum())} cells expect fewer than 5 "
            "transitions: the Monte Carlo p-values are the ones to quote."
        )
    return lines


def markov_text(report) -> str:
    """The whole report as text: what was analysed, the tests, then the tables."""
    fo = report.first_order
    codes = list(report.codes)
    unit = (
        "beds (embedded chain, no self-transitions)"
        if report.embedded
        else f"depth-grid cells of {report.step} (self-transitions counted)"
    )
    lines = [
        "Transition statistics (successions read base to top, upward transitions)",
        f"unit: {unit}",
        f"{report.n_transitions} transitions in {report.n_successions} successions of "
        f"{report.n_cores} cores; facies (matrix order): {' '.join(codes)}",
    ]
    if report.excluded_cores:
        lines.append(f"left out: {', '.join(report.excluded_cores)}")
    lines += ["", "Answer"] + [f"  {v}" for v in verdict(report)]
    lines.append("")
    lines.append("Tests")
    width = max(len(t.name) for t in report.tests)
    for t in report.tests:
        lines.append(f"  {t.name.ljust(width)}  {format_test(t)}")
    strength = f"Cramér's V = {fo.cramers_v:.3f}; " if fo.pearson.testable else ""
    lines.append(
        f"  {strength}{fo.n_low_expected} of {int(fo.active.sum())} "
        f"cells expected below 5; {fo.n_structural_zeros} structural zero cell(s)"
    )
    order = report.order
    lines += ["", f"Order (all fitted on the same {order.n} transitions)"]
    frame = order.to_frame().set_index("order")
    lines.append(_table(frame, 1))
    lines.append(
        f"best order: AIC {order.best_aic}, BIC {order.best_bic}"
        if order.n > 0
        else "best order: not chosen (no transitions)"
    )
    cyc = report.cyclicity
    lines += [
        "",
        "Cyclicity (Hattori 1976 entropies, bits)",
        f"  upward E_post = {cyc.e_post_total:.3f}, downward E_pre = {cyc.e_pre_total:.3f}, "
        f"maximum {cyc.e_max:.3f} (normalised {cyc.e_post_normalised:.3f} / "
        f"{cyc.e_pre_normalised:.3f})",
        f"  cycle type: {cyc.describe_type()}; {cyc.symmetry.name}: {format_test(cyc.symmetry)}",
        "  preferred upward path: "
        + (" -> ".join(cyc.path) + (" -> " + cyc.path[0] if cyc.path_is_cycle else ""))
        if cyc.path
        else "  preferred upward path: none (no significant positive transition)",
    ]
    if report.homogeneity is not None:
        h = report.homogeneity
        lines += [
            "",
            f"Homogeneity by {h.by}: {len(h.groups)} groups"
            + (f", {h.n_left_out} transitions between groups left out" if h.n_left_out else ""),
        ]
    lines += ["", "Upward transition counts (row: facies below, column: facies above)"]
    lines.append(_matrix(report.counts.astype(int), codes, 0))
    lines += ["", "Transition probabilities"]
    lines.append(_matrix(report.probabilities, codes, 3))
    lines += ["", f"Expected counts ({fo.model})"]
    lines.append(_matrix(fo.expected, codes, 1))
    lines += ["", "Difference matrix (observed - expected probability)"]
    lines.append(_matrix(fo.difference, codes, 3))
    lines += ["", f"Adjusted residuals (* significant at {fo.alpha:g}, ! expected below 5)"]
    marked = np.empty(fo.residuals.shape, dtype=object)
    for i in range(len(codes)):
        for j in range(len(codes)):
            r = fo.residuals[i, j]
            s = "." if not math.isfinite(r) else f"{r:.2f}"
            s += "*" if fo.significant[i, j] else ""
            s += "!" if fo.low_expected[i, j] else ""
            marked[i, j] = s
    lines.append(_matrix(marked, codes, 2))
    lines += ["", "Fixed (stationary) vector"]
    lines.append("  " + "  ".join(f"{c}: {p:.3f}" for c, p in zip(codes, report.fixed_vector)))
    if report.warnings:
        lines += ["", "Warnings"] + [f"  - {w}" for w in report.warnings]
    return "\n".join(lines) + "\n"
