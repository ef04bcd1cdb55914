"""Section 5 of the appendix: methods, equations, references and cautions.

The text is the project's own; the equations are the published ones, in the
notation of the cited papers where they have one.
"""

from __future__ import annotations

import re
from typing import Any

from faciesseq.report.document import Document, Equation, Paragraph, Section

__all__ = ["REFERENCES", "cited_references", "list_references", "methods_section"]

#: Reference list of the appendix (author year, title, journal, volume, pages).
REFERENCES = (
    "Anderson, T. W. & Goodman, L. A. (1957). Statistical inference about Markov chains. "
    "Annals of Mathematical Statistics 28, 89–110.",
    "Goodman, L. A. (1968). The analysis of cross-classified data: independence, "
    "quasi-independence, and interactions in contingency tables with or without missing "
    "entries. Journal of the American Statistical Association 63, 1091–1131.",
    "Powers, D. W. & Easterling, R. G. (1982). Improved methodology for using embedded Markov "
    "chains to describe cyclical sediments. Journal of Sedimentary Petrology 52, 913–923.",
    "Haberman, S. J. (1973). The analysis of residuals in cross-classified tables. "
    "Biometrics 29, 205–220.",
    "Tong, H. (1975). Determination of the order of a Markov chain by Akaike's information "
    "criterion. Journal of Applied Probability 12, 488–497.",
    "Katz, R. W. (1981). On some criteria for estimating the order of a Markov chain. "
    "Technometrics 23, 243–249.",
    "Bowker, A. H. (1948). A test for symmetry in contingency tables. Journal of the "
    "American Statistical Association 43, 572–574.",
    "Hattori, I. (1976). Entropy in Markov chains and discrimination of cyclic patterns in "
    "lithologic successions. Mathematical Geology 8, 477–497.",
    "Pethel, S. D. & Hahs, D. W. (2014). Exact test of independence using mutual information. "
    "Entropy 16, 2839–2849.",
    "Rabiner, L. R. (1989). A tutorial on hidden Markov models and selected applications in "
    "speech recognition. Proceedings of the IEEE 77, 257–286.",
    "Bourlard, H. & Morgan, N. (1994). Connectionist Speech Recognition: A Hybrid Approach. "
    "Kluwer Academic Publishers, Boston.",
    "Ke, G. et al. (2017). LightGBM: a highly efficient gradient boosting decision tree. "
    "Advances in Neural Information Processing Systems 30, 3146–3154.",
    "Guo, C., Pleiss, G., Sun, Y. & Weinberger, K. Q. (2017). On calibration of modern neural "
    "networks. Proceedings of the 34th International Conference on Machine Learning, PMLR 70, "
    "1321–1330.",
    "Brier, G. W. (1950). Verification of forecasts expressed in terms of probability. "
    "Monthly Weather Review 78, 1–3.",
    "Catuneanu, O. et al. (2009). Towards the standardization of sequence stratigraphy. "
    "Earth-Science Reviews 92, 1–33.",
)

CAUTION = (
    "This appendix is an interpretation aid. The systems tracts, surfaces and probabilities "
    "are the output of a statistical model fitted to facies codes; they inform, and do not "
    "replace, the judgement of a geologist, who weighs them against the cores, logs, "
    "biostratigraphy and regional framework. Decisions on "
    "wells, reservoirs and storage sites follow local regulations and licensed professional "
    "practice, not this document."
)


#: Read where the tract model was fitted on the stacking context of cycles.
CONTEXT_REFERENCES = (
    "Van Wagoner, J. C., Mitchum, R. M., Campion, K. M. & Rahmanian, V. D. (1990). "
    "Siliciclastic sequence stratigraphy in well logs, cores, and outcrops. AAPG Methods in "
    "Exploration Series 7.",
    "Cox, D. R. (1955). A use of complex probabilities in the theory of stochastic processes. "
    "Proceedings of the Cambridge Philosophical Society 51, 313–319.",
    "Efron, B. & Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman & Hall, "
    "New York.",
    "Künsch, H. R. (1989). The jackknife and the bootstrap for general stationary "
    "observations. Annals of Statistics 17, 1217–1241.",
    "Biernacki, C., Celeux, G. & Govaert, G. (2000). Assessing a mixture model for "
    "clustering with the integrated completed likelihood. IEEE Transactions on Pattern "
    "Analysis and Machine Intelligence 22, 719–725.",
)

#: References of the evidence weights (``fit --weigh-evidence``).
WEIGHT_REFERENCES = (
    "Lindsay, B. G. (1988). Composite likelihood methods. Contemporary Mathematics 80, 221–239.",
    "Varin, C., Reid, N. & Firth, D. (2011). An overview of composite likelihood methods. "
    "Statistica Sinica 21, 5–42.",
)


def _weights_text(model: Any) -> str | None:
    """What the fit did with ``weigh_evidence``: the weights of its context pieces, or
    why it was fitted without them; ``None`` where it was not asked for."""
    weighed = {
        p.name: p.weight
        for p in getattr(model, "emissions_", ())
        if getattr(p, "weight", 1.0) != 1.0
    }
    rejected = getattr(model, "weights_rejected_", None)
    refused = (
        "The context evidence was to be weighed so that what the beds of a window or a "
        "cycle share counts once, but the fit so weighted expected more changes of tract "
        f"({rejected.get('expected_tract_changes')}) than the training cores have cycles "
        f"({rejected.get('cycles')}): tracts shorter than a parasequence, which the "
        "definition of a systems tract excludes (Van Wagoner et al. 1990). "
        if isinstance(rejected, dict)
        else ""
    )
    if weighed:
        listed = ", ".join(f"{name} {w:.2f}" for name, w in weighed.items())
        if refused:
            return (
                refused + "The model is the fit with the square roots of those weights, a "
                "weaker correction (a composite likelihood with weights; Lindsay 1988; "
                f"Varin et al. 2011): {listed}."
            )
        return (
            "The context evidence was weighed so that what the beds of a window or a cycle "
            "share counts once: each context feature's log-probability was multiplied by one "
            "over the beds its window spans, from the mean cycle length of the training cores "
            f"(a composite likelihood with weights; Lindsay 1988; Varin et al. 2011): {listed}."
        )
    if refused:
        return refused + "The model is the fit without them."
    return None


#: References of the nested start (:mod:`faciesseq.hmm.nested`), given from memory.
NESTED_REFERENCES = (
    "Ueda, N., Nakano, R., Ghahramani, Z. & Hinton, G. E. (2000). SMEM algorithm for "
    "mixture models. Neural Computation 12, 2109–2128.",
)


def _nested_text(model: Any) -> str | None:
    """How EM started where it started from a fit without some tracts; else ``None``."""
    nested = getattr(model, "nested_start_", None)
    if not isinstance(nested, dict):
        return None
    left_out = ", ".join(str(c) for c in nested.get("left_out", ()))
    kept = " → ".join(str(c) for c in nested.get("tracts", ()))
    text = (
        f"EM did not start from the priors alone: the model was first fitted without the "
        f"{left_out}, the tract the trade allows to be absent ({kept}), and EM of the full "
        f"graph started from that fit's tract posteriors, the {left_out} taking "
        f"{float(nested.get('share', 0)):.0%} of the posteriors of the tracts on either side "
        "of it. Without this start, a thin or rare falling stage let EM spend its state on "
        "part of another tract, and the tracts named after it by their order moved by one "
        "place; the likelihood alone did not tell the two readings apart. Starting a larger "
        "model from a fitted smaller one is common practice in EM (e.g. Ueda et al. 2000)."
    )
    return text if "kept" not in nested else f"{text} {_kept_text(nested)}"


def _kept_text(nested: dict) -> str:
    """The comparison with the fit from the priors alone, and which fit was kept."""
    deep = nested.get("tst_deepening") or {}
    scores = (
        f" (TST deepening score {deep['priors']:.2f} from the priors, {deep['nested']:.2f} nested)"
        if None not in (deep.get("nested"), deep.get("priors"))
        else ""
    )
    which = "the fit from the priors" if nested["kept"] == "priors" else "the nested fit"
    return (
        "Every candidate graph was also fitted from the priors alone, and the lowest-ICL fit "
        "of those was to be kept instead where its TST deepens upward more clearly (a score "
        f"higher by over {float(nested.get('margin', 0.25)):.2f}): where the TST is missing "
        "from many cycles the fit without the FSST must still find a transgression in each "
        f"and reads the lowstands as one. Here {which} was kept{scores}."
    )


#: How a fit on the stacking context reads the cores (replaces the bed-level sentence).
CONTEXT_TEXT = (
    "The model was fitted on the stacking of parasequence-scale cycles (Van Wagoner et al. "
    "1990; Catuneanu et al. 2009) rather than on bed-to-bed steps: each succession is cut into "
    "cycles at flooding surfaces (an upward rise of the proximality rank, a facies marked to "
    "start a cycle, or a marine bed on a nonmarine one), and every bed is described by the "
    "stacking of its cycle against the cycles below and above (progradational, aggradational "
    "or retrogradational), the shift of the cycle's base, the trend and position of "
    "proximality around it, the cycle's amplitude and, where known, its share of sharp "
    "contacts and whether the bed is nonmarine; each is binned and emitted given the tract. "
    "Tracts follow the strict cyclic order HST → FSST → LST → TST, with at most one of the "
    "skips the trade allows, chosen by the integrated completed likelihood (ICL: BIC plus "
    "twice the entropy of the beds' tract posteriors, which prefers among fits that explain "
    "the beds about as well the one whose tracts are told apart; Biernacki et al. 2000); "
    "each tract is a chain of sub-states, so its "
    "length in beds is a Coxian phase-type duration (Cox 1955). The tracts are named by "
    "the one deepening tract and the cyclic order."
)

#: How a fit reads facies that a scheme marks as the record of subaerial exposure.
EXPOSURE_TEXT = (
    "The facies scheme marks facies that record the subaerial exposure of the site after a "
    "base-level fall; beds of these facies were held out of the transgressive and highstand "
    "tracts, and a marine bed on one of them out of the falling-stage and lowstand tracts, "
    "as a transgressive surface at its base (each at a probability of 10^-4, so that a "
    "marine-nonmarine cycle too thin for the tract order still has a reading): the "
    "transgressive tract begins at the first marine flooding above the sequence boundary "
    "(Van Wagoner et al. 1990; Catuneanu et al. 2009)."
)

BOOTSTRAP_TEXT = (
    "Without interpreted cores nothing is held out, so the temperature is chosen on cores "
    "simulated from the fitted model (a parametric bootstrap; Efron & Tibshirani 1993): tract "
    "paths are drawn from the fitted chain and each run of one tract is filled with real "
    "cycles of the training cores, drawn by the model's posterior probability of that tract "
    "(a block bootstrap whose blocks are cycles; Künsch 1989). These probabilities say how "
    "sure the model is of its own reading, not how often it agrees with a geologist."
)


#: What the tract model read, by the unit it was fitted on.
UNIT_TEXT = {
    "intervals": (
        "The tract model read the described intervals as they are: two adjacent intervals "
        "of one facies are two beds, since a tract may change at the bedding surface "
        "between them."
    ),
    "beds": (
        "The tract model read beds: adjacent intervals of one facies amalgamated, as in "
        "the transition statistics."
    ),
}


#: How a fit without labels read a reference model (:mod:`faciesseq.hmm.reference`).
REFERENCE_TEXT = (
    "No core was labelled; the tract names were read with a reference model fitted with "
    "labels on other cores: its boosted trees, which read the ranks, thicknesses and "
    "contacts of the beds and cycles around each bed (never facies names), were applied "
    "to these cores with their ranks stretched linearly onto the reference's range, and "
    "their posterior divided by the class prior entered the emissions as a scaled "
    "likelihood beside the stacking context, which EM fitted. On cores of generators "
    "written blind this lifted the fits without labels, and on cores whose own stacking "
    "named their tracts it cost accuracy (docs/hmm.md, 'A reference model')."
)


def _reference_check_text(model: Any) -> str | None:
    """What the check of a reference measured and kept (``reference_use="check"``,
    :mod:`faciesseq.hmm.reference_check`), or None for a fit that made none."""
    from faciesseq.hmm.reference_check import recorded_share

    record = getattr(model, "reference_check_", None)
    share = recorded_share(record)
    if share is None:
        return None
    kept = "reading the reference" if record.get("kept") == "reference" else "without it"
    return (
        "The reference was checked against the same fit without it: the two tract columns "
        f"of these cores gave one tract to {share:.2f} of the thickness, and "
        f"the fit {kept} was kept (the reference's is kept below a third; below a half the "
        "tract names are unsure; docs/hmm.md, 'Checking a reference')."
    )


#: Works cited outside the methods text (table captions, the order and homogeneity
#: sentences, the correlation section), listed where the appendix cites them.
OTHER_REFERENCES = (
    "Schwarz, G. (1978). Estimating the dimension of a model. Annals of Statistics 6, 461–464.",
    "Cohen, J. (1988). Statistical Power Analysis for the Behavioral Sciences, 2nd edn. "
    "Lawrence Erlbaum, Hillsdale, NJ.",
    "Agresti, A. (2013). Categorical Data Analysis, 3rd edn. Wiley, Hoboken, NJ.",
    "Needleman, S. B. & Wunsch, C. D. (1970). A general method applicable to the search for "
    "similarities in the amino acid sequence of two proteins. Journal of Molecular Biology "
    "48, 443–453.",
    "Smith, T. F. & Waterman, M. S. (1980). New stratigraphic correlation techniques. "
    "Journal of Geology 88, 451–457.",
    "Waterman, M. S. & Raymond, R. (1987). The match game: new stratigraphic correlation "
    "algorithms. Mathematical Geology 19, 109–127.",
)

#: A citation in running text: the first author's surname (its last word), "et al." or
#: "& second author", then the year, bare or in parentheses ("Bowker's (1948)").
_CITATION = re.compile(
    r"([A-Z][A-Za-zäöüé-]+)(?:'s)?(?: et al\.| & [A-Z][A-Za-zäöüé-]+)? "
    r"\(?((?:1[89]|20)\d\d)\)?(?![\d-])"
)


def _reference_key(reference: str) -> tuple[str, str]:
    """(last word of the first author's surname, year) of a reference-list entry."""
    year = re.search(r"\((\d{4})\)", reference)
    return reference.split(",")[0].split()[-1], year[1] if year else ""


def cited_references(text: str) -> list[str]:
    """The entries of the project's reference lists that ``text`` cites, in
    alphabetical order (a work listed but never cited, or cited but never listed, is
    what a reviewer returns first)."""
    cited = {(m[1], m[2]) for m in _CITATION.finditer(text)}
    catalogue = (
        REFERENCES + CONTEXT_REFERENCES + WEIGHT_REFERENCES + NESTED_REFERENCES + OTHER_REFERENCES
    )
    return sorted({r for r in catalogue if _reference_key(r) in cited})


def _text(sections) -> str:
    """Every sentence and caption of ``sections`` and their sub-sections, the
    reference lists left out."""
    out: list[str] = []
    for section in sections:
        if section.title == "References":
            continue
        out += [getattr(b, "caption", None) or getattr(b, "text", "") for b in section.blocks]
        out.append(_text(section.subsections))
    return " ".join(out)


def list_references(document: Document) -> None:
    """Fill the References sub-section of ``document`` with the works it cites."""
    for _, _, section in document.walk():
        if section.title == "References":
            section.blocks = [Paragraph(r) for r in cited_references(_text(document.sections))]


def methods_section(unit: str = "beds", model: Any = None) -> Section:
    """The methods section: what was computed, with equations and references.

    ``unit`` is ``"beds"`` (embedded chain, no self-transitions) or ``"grid"``;
    ``model``, the fitted tract model, when known: a fit on the stacking context of
    cycles and a temperature from simulated cores are described as such.
    """
    context = bool(model is not None and getattr(model, "reads_context", lambda: False)())
    boot = isinstance(getattr(model, "calibration_", None), dict) and (
        model.calibration_.get("method") == "parametric bootstrap"
    )
    s = Section("Methods")
    s.sub("Successions").add(_successions_paragraph(unit))
    s.sub("Transition statistics").add(*_transition_blocks())
    hmm = s.sub("Systems-tract hidden Markov model")
    hmm.add(*_hmm_blocks())
    if getattr(model, "unit_", None) in UNIT_TEXT:
        hmm.add(Paragraph(UNIT_TEXT[model.unit_]))
    if context:
        hmm.add(Paragraph(CONTEXT_TEXT))
    if context and "exposure" in getattr(model, "features_", ()):
        hmm.add(Paragraph(EXPOSURE_TEXT))
    weights = _weights_text(model)
    if context and weights:
        hmm.add(Paragraph(weights))
    nested = _nested_text(model)
    if context and nested:
        hmm.add(Paragraph(nested))
    if context and "reference" in getattr(model, "features_", ()):
        hmm.add(Paragraph(REFERENCE_TEXT))
    check = _reference_check_text(model)
    if context and check:
        hmm.add(Paragraph(check))
    if boot:
        hmm.add(Paragraph(BOOTSTRAP_TEXT))
    for caution in _caution_texts(model) if context else ():
        hmm.add(Paragraph(caution, kind="note"))
    s.sub("Cautions").add(Paragraph(CAUTION, kind="note"))
    refs = s.sub("References")
    refs.add(*(Paragraph(r) for r in cited_references(_text([s]))))
    return s


def _caution_texts(model: Any) -> list[str]:
    """The cautions of :func:`faciesseq.hmm.cautions.fit_cautions`, as sentences."""
    from faciesseq.hmm.cautions import fit_cautions

    out = []
    for caution in fit_cautions(model):
        kind, text = caution.split(": ", 1)
        text = text.replace("(fit --labels)", "(faciesseq fit --labels)")
        text = text.replace("(--labels)", "(faciesseq fit --labels)")
        out.append(f"{kind.capitalize()}: {text}.")
    return out


def _successions_paragraph(unit: str) -> Paragraph:
    """How cores become successions: depth convention, gaps, beds or grid cells."""
    return Paragraph(
        "Depths are positive downward. Each core is split at gaps into unbroken successions, "
        "analysed base to top (older to younger), so a transition A → B means that facies B "
        "lies directly on facies A. No transition is counted across a gap or between cores. "
        + (
            "Adjacent intervals of one facies are amalgamated into beds, so no bed follows a "
            "bed of its own facies (an embedded chain: the diagonal of the count matrix is a "
            "structural zero)."
            if unit == "beds"
            else "Facies are sampled on a regular depth grid, so self-transitions are counted."
        )
    )


def _transition_blocks() -> tuple[Paragraph | Equation, ...]:
    """Transition statistics: probabilities, the independence tests and their residuals,
    the order tests and the entropies, with equations 1 to 3."""
    return (
        Paragraph(
            "With n_ij the number of upward transitions from facies i to facies j, n_i+ the row "
            "sums and N the total, the transition probabilities are p_ij = n_ij / n_i+. For an "
            "embedded chain the expected counts under independence are fitted to the "
            "off-diagonal cells only (quasi-independence, Goodman 1968; Powers & Easterling "
            "1982), by iterative proportional fitting of E_ij = a_i b_j (i ≠ j) to the row and "
            "column sums, with (m − 1)² − m degrees of freedom for m facies. For a depth grid, "
            "E_ij = n_i+ n_+j / N with (m − 1)² degrees of freedom."
        ),
        Equation(
            "χ² = Σ (n_ij − E_ij)² / E_ij        G² = 2 Σ n_ij ln(n_ij / E_ij)",
            r"\chi^2 = \sum_{i,j} \frac{(n_{ij} - E_{ij})^2}{E_{ij}}, \qquad "
            r"G^2 = 2 \sum_{i,j} n_{ij} \ln \frac{n_{ij}}{E_{ij}}",
            "1",
        ),
        Paragraph(
            "Tests are reported as χ²(dof, N) = value, p = …, with G² and Cramér's "
            "V = √(χ² / (N (m − 1))). Cells with expected counts below 5 are listed, because the "
            "χ² approximation is poor there. Monte Carlo p-values from surrogate successions are "
            "given beside the asymptotic ones: for the first-order test, random re-orderings of "
            "each succession's beds that keep no facies above itself; for the order test, "
            "successions with the same first-order transition counts (Pethel & Hahs 2014); the "
            "p-value is (1 + the number of surrogates at least as extreme) / (1 + the number of "
            "surrogates). Cells that deviate from chance are "
            "found by adjusted residuals (Haberman 1973), approximately standard normal under "
            "independence:"
        ),
        Equation(
            "r_ij = (n_ij − E_ij) / √( E_ij (1 − n_i+ / N) (1 − n_+j / N) )",
            r"r_{ij} = \frac{n_{ij} - E_{ij}}"
            r"{\sqrt{E_{ij}\,(1 - n_{i+}/N)\,(1 - n_{+j}/N)}}",
            "2",
        ),
        Paragraph(
            "The Markov order is tested by likelihood-ratio tests of order k against order k + 1 "
            "(Anderson & Goodman 1957) and chosen by the information criteria AIC (Tong 1975) and "
            "BIC (Katz 1981). Homogeneity across cores compares each core's transition counts "
            "with the pooled ones (Anderson & Goodman 1957). The entropies of Hattori (1976) "
            "measure how ordered the succession is after (E_post) and before (E_pre) each facies; "
            "whether the succession is random; whether its cycle is symmetric (A B C B A) or "
            "asymmetric (A B C A) is judged by Bowker's (1948) test of symmetry of the upward "
            "counts, since the whole-chain entropies of a stationary chain are equal upward and "
            "downward by construction."
        ),
        Equation(
            "E_post(i) = − Σ_j p_ij log₂ p_ij        E_pre(j) = − Σ_i q_ij log₂ q_ij, "
            "q_ij = n_ij / n_+j",
            r"E^{\mathrm{post}}_i = -\sum_j p_{ij}\log_2 p_{ij}, \qquad "
            r"E^{\mathrm{pre}}_j = -\sum_i q_{ij}\log_2 q_{ij},\; q_{ij} = n_{ij}/n_{+j}",
            "3",
        ),
    )


def _hmm_blocks() -> tuple[Paragraph | Equation, ...]:
    """The tract model: states, emissions, fitting, posteriors (equation 4), surfaces,
    calibration and validation."""
    return (
        Paragraph(
            "The hidden states are systems tracts (falling-stage, lowstand, transgressive and "
            "highstand; Catuneanu et al. 2009) joined only by the boundaries the tract model "
            "allows. Each bed's facies is emitted given its tract and, optionally, the facies of "
            "the bed below, so that a tract is a stacking trend rather than a set of facies. "
            "When interpreted beds are available, a gradient-boosted tree classifier "
            "(histogram-based, after Ke et al. 2017, as scikit-learn trains it) learnt "
            "from them reads a window of beds below and above each bed (rank jumps, thickness, "
            "contacts), the cycles around it and the facies ranks within depth windows of up "
            "to twelve median cycle thicknesses, and its posterior divided by the tract "
            "frequency enters as one more "
            "emission factor (the hybrid classifier-HMM of Bourlard & Morgan 1994). "
            "Parameters are estimated by expectation-maximisation (Baum-Welch) from several "
            "random starts with Dirichlet priors anchored by the facies' proximality ranks; "
            "forbidden transitions stay zero. With α and β the scaled forward and backward "
            "variables (Rabiner 1989), the posterior of tract i at bed t and the two-slice "
            "posterior of the boundary above bed t are"
        ),
        Equation(
            "γ_t(i) = α_t(i) β_t(i) / Σ_k α_t(k) β_t(k)        "
            "ξ_t(i, j) ∝ α_t(i) a_ij b_j(o_t+1) β_t+1(j)",
            r"\gamma_t(i) = \frac{\alpha_t(i)\,\beta_t(i)}{\sum_k \alpha_t(k)\,\beta_t(k)}, \qquad "
            r"\xi_t(i,j) \propto \alpha_t(i)\, a_{ij}\, b_j(o_{t+1})\, \beta_{t+1}(j)",
            "4",
        ),
        Paragraph(
            "The probability of a surface at a contact is the sum of ξ over the tract pairs the "
            "tract model maps to that surface (e.g. TST → HST for the maximum flooding surface). "
            "The tract column is the most likely path (Viterbi; Rabiner 1989). Where interpreted "
            "cores exist, the probabilities are calibrated by temperature scaling (Guo et al. "
            "2017): every log-probability of the chain is divided by one temperature, chosen "
            "to minimise the Brier score (Brier 1950) of the interpreter's tracts on cores "
            "left out of the fit; the tract column does not change. The model is validated by "
            "leaving cores out: accuracy, per-tract F1, confusion matrix, the depth error of "
            "picked surfaces and a reliability curve, beside a baseline."
        ),
    )
