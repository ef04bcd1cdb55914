"""Section 2 of the appendix: transition statistics of a ``faciesseq.markov.MarkovReport``.

Tables are the report's own matrices (``to_frames()``), shown as they are;
every test is also written out in the form a journal asks for,
``χ²(dof, N = n) = value, p = …``.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from faciesseq.report.document import (
    FigureBlock,
    Paragraph,
    Section,
    TableBlock,
    format_p_text,
    format_value,
)
from faciesseq.report.markov_text import (
    disagreement,
    not_testable_text,
    order_explanation,
    split_verdict,
)
from faciesseq.report.style import facies_colours
from faciesseq.scheme import FaciesScheme

__all__ = ["format_p", "format_test", "markov_section"]


#: p-values in the appendix's text as in its tables (``p = 0.034``, ``p < 0.001``).
format_p = format_p_text


def format_test(test) -> str:
    """A test as reported: ``χ²(12, N = 340) = 85.3, p < 0.001`` (G² for likelihood ratios);
    ``not testable (0 degrees of freedom; N = 52)`` for a test that cannot be run."""
    if not test.testable:
        return not_testable_text(test)
    symbol = "G²" if "G2" in test.name or "g2" in test.name.lower() else "χ²"
    text = (
        f"{symbol}({test.dof}, N = {test.n}) = {format_value(float(test.statistic))}, "
        f"{format_p(test.p_value)}"
    )
    if test.method == "monte carlo":
        text += f" (Monte Carlo, {test.n_surrogates} surrogates)"
    return text


def _labelled(matrix: np.ndarray, codes) -> pd.DataFrame:
    frame = pd.DataFrame(np.asarray(matrix), index=list(codes), columns=list(codes))
    frame.index.name = "from \\ to"
    return frame


def _matrix_blocks(mats: Section, report, codes: list[str], colours: dict) -> None:
    """Counts, probabilities, expected counts, differences and adjusted residuals."""
    from faciesseq.report import figures

    fo = report.first_order
    counts = _labelled(report.counts.astype(int), codes)
    n = f"N = {int(report.counts.sum())} upward transitions"
    blank = (
        "; blank cells are structural zeros (no bed lies on a bed of its own facies)"
        if np.asarray(fo.structural).any()
        else ""
    )
    mats.add(
        TableBlock(
            "markov_counts", f"Upward transition counts n_ij (row: lower facies); {n}.", counts
        ),
        TableBlock(
            "markov_probabilities",
            f"Transition probabilities p_ij = n_ij / n_i+ (row: lower facies); {n}.",
            _labelled(report.probabilities, codes),
            decimals={"*": 3},
        ),
        FigureBlock(
            "markov_probabilities",
            "Upward transition probabilities (rows sum to 1; blank cells cannot occur).",
            figures.heatmap(
                _masked(report.probabilities, fo.structural, codes),
                value_label="transition probability",
                fmt="{:.2f}",
                label_colours=colours,
            ),
        ),
    )
    low = _labelled(fo.low_expected, codes).astype(bool)
    mats.add(
        TableBlock(
            "markov_expected",
            f"Expected counts under {fo.model} (Goodman 1968); * marks cells with an expected "
            f"count below 5; {n}{blank}.",
            _masked(fo.expected, fo.structural, codes),
            marks=low,
            decimals={"*": 2},
        ),
        TableBlock(
            "markov_difference",
            f"Difference matrix: observed minus expected transition probabilities; {n}{blank}.",
            _masked(fo.difference, fo.structural, codes),
            decimals={"*": 3},
        ),
    )
    sig = _labelled(fo.significant, codes).astype(bool)
    mats.add(
        TableBlock(
            "markov_residuals",
            f"Adjusted residuals (Haberman 1973); * marks cells significant at the two-sided "
            f"{report.alpha:g} level (|r| > {_z(report.alpha):.2f}); {n}{blank}.",
            _labelled(fo.residuals, codes),
            marks=sig,
            decimals={"*": 2},
        ),
        FigureBlock(
            "markov_residuals",
            "Adjusted residuals: more (blue) or fewer (red) transitions than chance; framed "
            f"cells (*) are significant (|r| > {_z(report.alpha):.2f}); ! marks cells with an "
            "expected count below 5, where the residual is unreliable.",
            figures.heatmap(
                _labelled(fo.residuals, codes),
                value_label="adjusted residual",
                fmt="{:.2f}",  # one decimal showed 2.05 (significant) and 1.95 both as 2.0
                diverging=True,
                marks=sig,
                mark_label=f"significant (two-sided, {report.alpha:g}: |r| > "
                f"{_z(report.alpha):.2f})",
                cautions=low,
                caution_label="expected count below 5: residual unreliable",
                label_colours=colours,
            ),
        ),
    )


def _disagreement(homogeneity, alpha: float) -> str:
    """Where Pearson's χ² and the G² of one homogeneity null fall on either side of
    ``alpha``, a sentence saying so; otherwise nothing."""
    h = homogeneity
    if not split_verdict(h.pearson, h.g2, alpha):
        return ""
    tests = ("G²", "Pearson's χ²")
    differs, not_differs = tests if h.g2.p_value < alpha else tests[::-1]
    return f" The groups differ by {differs} but not by {not_differs}: {disagreement(alpha)}."


def _p_source(report) -> str:
    """How the p-values of the test table were obtained: the asymptotic distribution,
    and the Monte Carlo surrogates' number and seed where there are any."""
    asymptotic = "asymptotic (the χ² distribution with dof degrees of freedom)"
    if not report.surrogate_tests:
        return f"{asymptotic}; no Monte Carlo tests were run."
    seed = "an unfixed seed" if report.seed is None else f"seed {report.seed}"
    return (
        f"{asymptotic} or Monte Carlo ((1 + surrogates at least as extreme) / (1 + "
        f"surrogates), {report.n_surrogates} surrogate successions drawn with {seed})."
    )


def _test_blocks(tests: Section, report, codes: list[str]) -> None:
    """Every test of independence, the Markov order and the homogeneity across cores."""
    fo = report.first_order
    low_cells = ", ".join(f"{codes[i]}→{codes[j]}" for i, j in zip(*np.nonzero(fo.low_expected)))
    tests.add(
        Paragraph(
            f"First-order dependence ({fo.model}): {format_test(fo.pearson)}; "
            f"{format_test(fo.g2)}; "
            + (f"Cramér's V = {format_value(fo.cramers_v)}; " if fo.pearson.testable else "")
            + f"{fo.n_low_expected} of the tested cells have expected counts below 5"
            + (f" ({low_cells})." if fo.n_low_expected else ".")
        )
    )
    rows = []
    for t in report.tests:
        rows.append(
            {
                "test": t.name,
                "null hypothesis": t.null,
                "statistic": float(t.statistic) if t.testable else math.nan,
                "dof": int(t.dof),
                "N": int(t.n),
                "p": float(t.p_value) if t.testable else math.nan,
                "method": t.method,
                "surrogates": int(t.n_surrogates),
                "reported as": format_test(t),
            }
        )
    tests.add(
        TableBlock(
            "markov_tests",
            "Every test: statistic, degrees of freedom (dof), number of transitions N and "
            f"p-value, {_p_source(report)}",
            pd.DataFrame(rows).set_index("test"),
        )
    )
    if not report.surrogate_tests:
        tests.add(Paragraph("No surrogate (Monte Carlo) tests were run.", kind="missing"))
    order = report.order
    order_frame = order.to_frame().set_index("order")
    order_frame.columns = ["log-likelihood", "parameters", "AIC", "BIC"]
    tests.add(
        TableBlock(
            "markov_order",
            f"Markov order: log-likelihood, free parameters, AIC (Tong 1975) and BIC "
            f"(Katz 1981) per order on {order.n} common transitions; "
            + (
                f"lowest AIC at order {order.best_aic}, lowest BIC at order {order.best_bic}."
                if order.n > 0
                else "no order chosen on no transitions."
            ),
            order_frame,
        )
    )
    explanation = order_explanation(report)
    if explanation is not None:
        tests.add(Paragraph(explanation))
    if report.homogeneity is not None:
        h = report.homogeneity
        tests.add(
            Paragraph(
                f"Homogeneity across {h.by} groups ({len(h.groups)} groups): "
                f"{format_test(h.pearson)}; {format_test(h.g2)}; {h.n_left_out} transitions "
                "between groups left out." + _disagreement(h, report.alpha)
            ),
            TableBlock(
                "markov_homogeneity",
                f"Transitions per {h.by} in the homogeneity test.",
                h.to_frame().set_index("group").rename(columns={"n_transitions": "transitions"}),
            ),
        )
    else:
        tests.add(Paragraph("Homogeneity across cores was not tested.", kind="missing"))


def _entropy_blocks(ent: Section, report, codes: list[str]) -> None:
    """Entropies before and after each facies and the cycle type."""
    cyc = report.cyclicity
    entropy = pd.DataFrame(
        {
            "E_post (bits)": cyc.e_post,
            "E_pre (bits)": cyc.e_pre,
            "fixed vector": report.fixed_vector,
        },
        index=pd.Index(codes, name="facies"),
    )
    ent.add(
        TableBlock(
            "markov_entropy",
            "Entropy after (E_post) and before (E_pre) each facies (Hattori 1976), and the "
            "stationary (fixed) probability vector.",
            entropy,
        ),
        Paragraph(
            f"Whole chain: E_post = {format_value(cyc.e_post_total)} bits, E_pre = "
            f"{format_value(cyc.e_pre_total)} bits, of at most {format_value(cyc.e_max)} bits "
            f"(normalised {format_value(cyc.e_post_normalised)} and "
            f"{format_value(cyc.e_pre_normalised)}). Cycle type: {cyc.describe_type()} "
            f"(symmetry of the upward counts, Bowker 1948: {format_test(cyc.symmetry)}). "
            + (
                "Preferred upward path of significant transitions: "
                + " → ".join(cyc.path)
                + (" (closes a cycle)." if cyc.path_is_cycle else ".")
                if cyc.path
                else "No path of significant transitions."
            )
        ),
    )


def markov_section(report, scheme: FaciesScheme) -> Section:
    """The transition-statistics section (section 2 of the appendix)."""
    codes = list(report.codes)
    embedded = report.embedded
    colours = facies_colours(codes, scheme)
    s = Section("Transition statistics")
    unit = (
        "beds (embedded chain: no facies above itself)"
        if embedded
        else f"depth-grid cells of {format_value(report.step)}"
    )
    s.add(
        Paragraph(
            f"{report.n_transitions} upward transitions in {report.n_successions} unbroken "
            f"successions of {report.n_cores} cores, counted between {unit}; rows are the lower "
            "facies, columns the upper, facies in order of proximality rank."
        )
    )
    for warning in report.warnings:
        s.add(Paragraph(f"Note: {warning}.", kind="note"))

    _matrix_blocks(s.sub("Transition matrices"), report, codes, colours)
    _test_blocks(s.sub("Tests of independence, order and homogeneity"), report, codes)
    _entropy_blocks(s.sub("Entropy and cycle type"), report, codes)
    frd = s.sub("Facies relationship diagram")
    frd.add(
        FigureBlock(
            "markov_frd",
            "Facies relationship diagram: arrows for upward transitions more frequent than "
            "chance (observed minus expected probability above 0.05); solid where the "
            "adjusted residual is significant.",
            relationship_diagram(report, scheme),
        )
    )
    return s


def relationship_diagram(report, scheme: FaciesScheme | None = None):
    """The facies relationship diagram of a :class:`~faciesseq.markov.MarkovReport`.

    Arrows for cells of the first-order difference matrix above chance (structural
    zeros left out), solid where the adjusted residual is significant; of a grid
    analysis, those of its transitions between different facies
    (:func:`_between_facies`); see
    :func:`faciesseq.report.figures.facies_relationship_diagram`.
    """
    from faciesseq.report import figures

    fo = report.first_order if report.embedded else _between_facies(report)
    codes = list(report.codes)
    return figures.facies_relationship_diagram(
        _masked(fo.difference, fo.structural, codes),
        scheme,
        significant=_labelled(fo.significant, codes).astype(bool),
        order=None if scheme is not None else _suggested_order(report.counts, codes),
        title="" if report.embedded else GRID_DIAGRAM_TITLE,
    )


#: The title of the diagram of a grid analysis, which reads its transitions between
#: different facies.
GRID_DIAGRAM_TITLE = "transitions between different facies (cells of one facies merged)"


def _between_facies(report):
    """The quasi-independence test of a grid analysis' transitions between different
    facies: what a relationship diagram draws (Miall 1973 draws the embedded chain).
    The grid's own test counts every cell's step to the next, so that the diagonal
    holds most of its transitions and every step to another facies falls below what
    independence expects: its difference matrix has no cell to draw."""
    from faciesseq.markov.contingency import independence_test

    counts = np.asarray(report.counts, dtype=float).copy()
    np.fill_diagonal(counts, 0.0)
    return independence_test(counts, embedded=True, alpha=report.alpha)


def _suggested_order(counts, codes) -> list[str] | None:
    """The facies, most landward first, in the order their upward transitions suggest
    (:func:`faciesseq.markov.seriation.suggest_ranks`, as ``scheme draft`` suggests
    ranks), or ``None`` where fewer than three facies follow one another."""
    from faciesseq.markov.seriation import suggest_ranks

    steps = _labelled(counts, codes).astype(float).stack()
    steps.index = steps.index.set_names(["below", "above"])
    suggestion = suggest_ranks(steps[steps > 0])
    if suggestion is None:
        return None
    return sorted(suggestion.ranks, key=lambda c: (suggestion.ranks[c], codes.index(c)))


def _masked(matrix: np.ndarray, structural: np.ndarray, codes) -> pd.DataFrame:
    values = np.asarray(matrix, dtype=float).copy()
    values[np.asarray(structural, dtype=bool)] = np.nan
    return _labelled(values, codes)


def _z(alpha: float) -> float:
    from scipy.stats import norm

    return float(norm.ppf(1 - alpha / 2))
