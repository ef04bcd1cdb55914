"""Markov statistics on real data: the Council Grove wells (Panoma–Hugoton field, Kansas).

Data: Dubois, Bohling & Chakrabarti (2007), Computers & Geosciences 33:599–617;
CSV of Hall (2016), The Leading Edge 35:906–909 (Apache 2.0); copied into
tests/data/council_grove/. The numbers asserted below were measured with this
code (``analyse(council_grove_coreset(), ...)``) and are recorded so that a
change in them is noticed; the reference facts are the data's own
(five real wells, one pseudo-well of scattered samples, 0.5 ft sampling).
"""

from pathlib import Path

import numpy as np
import pytest
from markov_data import PSEUDO_WELL, council_grove_coreset

from faciesseq.markov import analyse, screen_cores


@pytest.fixture(scope="module")
def coreset():
    return council_grove_coreset()


@pytest.fixture(scope="module")
def beds(coreset):
    return analyse(coreset, unit="beds", by="core", max_order=3)


def test_pseudo_well_is_flagged_irregular_and_left_out(coreset, beds):
    problems = screen_cores(coreset)
    assert [p.core for p in problems] == [PSEUDO_WELL]
    assert problems[0].kind == "irregular_sampling"
    assert "14%" in problems[0].message
    assert beds.excluded_cores == (PSEUDO_WELL,)
    assert any(PSEUDO_WELL in w for w in beds.warnings)
    assert beds.n_cores == 5


def test_pseudo_well_would_add_self_transitions_to_the_grid(coreset):
    kept = analyse(coreset, unit="grid", step=0.5, max_order=1)
    forced = analyse(coreset.successions("grid", 0.5), kept.codes, unit="grid", max_order=1)
    i = kept.codes.index("9")
    # its 80 bafflestone samples make 71 extra 9 -> 9 "transitions" if analysed
    assert forced.counts[i, i] - kept.counts[i, i] == 71


def test_first_order_dependence_of_the_real_wells(beds):
    fo = beds.first_order
    assert beds.n_transitions == 317
    assert fo.dof == 55  # 9 facies: (9-1)^2 - 9 = 55
    assert fo.pearson.statistic == pytest.approx(314.0, abs=0.1)
    assert fo.pearson.p_value < 1e-30
    # the cycle reads through marine facies; nonmarine 2 <-> 3 are strong partners
    two, three = beds.codes.index("2"), beds.codes.index("3")
    assert fo.residuals[two, three] > 3 and fo.residuals[three, two] > 3
    assert fo.cramers_v == pytest.approx(0.352, abs=0.001)


def test_order_estimates_of_the_real_wells(beds):
    # measured: AIC picks order 1; BIC, with 63 nominal parameters for order 1 and
    # only 278 transitions in the common sample, prefers quasi-independence (order 0),
    # although the likelihood-ratio test rejects it: BIC's penalty is heavy at this size
    assert beds.order.best_aic == 1
    assert beds.order.best_bic == 0
    assert beds.order.n == 278
    assert beds.order.n_parameters[:2] == (8, 63)
    # order 1 is not rejected against order 2 (asymptotically)
    assert beds.order.tests[1].p_value > 0.05


def test_wells_are_homogeneous_at_the_5_percent_level(beds):
    h = beds.homogeneity
    assert h.groups == ("SHRIMPLIN", "SHANKLE", "LUKE G U", "CROSS H CATTLE", "NOLAN")
    assert h.pearson.dof == 140
    assert h.pearson.statistic == pytest.approx(150.7, abs=0.1)
    assert h.pearson.p_value > 0.05


def test_monte_carlo_first_order_test_agrees_that_the_wells_are_ordered(coreset):
    report = analyse(coreset, unit="beds", max_order=2, surrogates=199, seed=3)
    mc = {t.name: t for t in report.surrogate_tests}
    assert mc["quasi-independence (Pearson chi2)"].p_value == pytest.approx(1 / 200)
    assert mc["order 1 vs 2 (G2)"].n_surrogates == 199
    assert np.isfinite(mc["order 1 vs 2 (G2)"].p_value)


def test_homogeneity_by_a_numeric_column_uses_labels_not_bed_means(coreset):
    # NM_M is 1 (nonmarine) or 2 (marine); a bed spanning both takes the label of
    # most of its thickness, never an average such as 1.5
    report = analyse(coreset, unit="beds", by="NM_M", max_order=1)
    h = report.homogeneity
    assert sorted(h.groups) == ["1", "2"]
    assert h.n_left_out == 54  # transitions from a nonmarine bed to a marine one, or back
    assert h.pearson.p_value < 1e-6  # marine and nonmarine beds follow different chains


def _with_homogeneity_p(report, pearson_p, g2_p):
    from dataclasses import replace

    h = report.homogeneity
    h = replace(h, pearson=replace(h.pearson, p_value=pearson_p), g2=replace(h.g2, p_value=g2_p))
    return replace(report, homogeneity=h)


def test_homogeneity_verdict_says_when_pearson_and_g2_disagree(beds):
    from faciesseq.report.markov_text import verdict

    # invented p-values on the real report: Pearson above 0.05, G² below
    split = " ".join(verdict(_with_homogeneity_p(beds, 0.090, 0.008)))
    assert "The 5 groups by core do not differ significantly by Pearson's χ²" in split
    assert "p = 0.090, but do by the likelihood-ratio G²" in split
    assert "p = 0.008: the tests disagree at the 0.05 level" in split
    assert "Agresti 2013" in split
    other = " ".join(verdict(_with_homogeneity_p(beds, 0.008, 0.090)))
    assert "differ by Pearson's χ²" in other and "but do not by the likelihood-ratio G²" in other
    # where both tests agree the sentence quotes Pearson's χ² alone, as before
    agree = " ".join(verdict(_with_homogeneity_p(beds, 0.090, 0.20)))
    assert "The 5 groups by core do not differ significantly: χ²(" in agree
    assert "disagree" not in agree


def test_first_order_verdict_says_when_pearson_and_g2_disagree(beds):
    from dataclasses import replace

    from faciesseq.report.markov_text import verdict

    fo = beds.first_order
    # invented p-values on the real report: Pearson rejects the null, G² does not
    split = replace(fo, pearson=replace(fo.pearson, p_value=0.02), g2=replace(fo.g2, p_value=0.09))
    text = " ".join(verdict(replace(beds, first_order=split)))
    assert "Ordered, not random" in text
    assert "The likelihood-ratio G² of the same null falls on the other side" in text
    assert "p = 0.090: the tests disagree at the 0.05 level" in text
    assert "falls on the other side" not in " ".join(verdict(beds))  # both reject: one test


def test_appendix_homogeneity_paragraph_says_when_the_tests_disagree(beds):
    from faciesseq.report.document import Document, Paragraph
    from faciesseq.report.markov_section import markov_section
    from faciesseq.scheme import as_scheme

    scheme = as_scheme(Path(__file__).parent / "data" / "council_grove" / "scheme.yaml")

    def paragraphs(report):
        document = Document("appendix", sections=[markov_section(report, scheme)])
        return " ".join(b.text for b in document.blocks() if isinstance(b, Paragraph))

    text = paragraphs(_with_homogeneity_p(beds, 0.090, 0.008))
    assert "The groups differ by G² but not by Pearson's χ²: the tests disagree" in text
    assert "disagree" not in paragraphs(_with_homogeneity_p(beds, 0.090, 0.20))


def test_appendix_tests_table_p_column_and_reported_as_agree(beds):
    # the first-order tests have p far below 0.001; the p column showed "< 0.001" and
    # "reported as" said "p < 0.0001" on the same row
    from faciesseq.report.document import Document, TableBlock, format_p_text
    from faciesseq.report.markov_section import markov_section
    from faciesseq.scheme import as_scheme

    scheme = as_scheme(Path(__file__).parent / "data" / "council_grove" / "scheme.yaml")
    document = Document("appendix", sections=[markov_section(beds, scheme)])
    table = next(
        b for b in document.blocks() if isinstance(b, TableBlock) and b.key == "markov_tests"
    )
    header = table.header()
    p_col, said_col = header.index("p"), header.index("reported as")
    rows = [cells for cells, _ in table.rows()]
    assert any(cells[p_col] == "< 0.001" for cells in rows)
    for cells in rows:
        shown = cells[p_col]
        said = cells[said_col].split(", p")[1].split(" (Monte Carlo")[0]
        assert said == (f" {shown}" if shown.startswith("<") else f" = {shown}")
    assert format_p_text(0.00012) == "p < 0.001"
    assert format_p_text(0.0123) == "p = 0.012"
    assert format_p_text(float("nan")) == "p not available"
