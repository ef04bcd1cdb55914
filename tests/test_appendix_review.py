"""What a journal's or a regulator's reviewer reads first in the appendix: every work cited
is in the reference list and every listed work is cited, the test table says how its
p-values were obtained, axes name what they draw, depths keep the input's precision.

Built from two demo cores with their interpreter's tracts and a short labelled fit
(one restart, five EM iterations): the text, not the fit, is under test.
"""

import re
import warnings
from pathlib import Path

import pandas as pd
import pytest

from faciesseq.hmm.selection import select_model
from faciesseq.io import read_cores
from faciesseq.markov import analyse
from faciesseq.report.appendix import add_section, build_appendix
from faciesseq.report.document import FigureBlock, Paragraph, Section, TableBlock
from faciesseq.scheme import load_scheme

DEMO = Path(__file__).resolve().parents[1] / "faciesseq" / "data" / "demo"
SURROGATES, SEED = 19, 5

#: A citation in the text: first author's surname (the last word of it), optional
#: "et al." or "& second author", then the year, bare or in parentheses.
CITATION = re.compile(
    r"([A-Z][A-Za-zäöüé-]+)(?:'s)?(?: et al\.| & [A-Z][A-Za-zäöüé-]+)? "
    r"\(?((?:1[89]|20)\d\d)\)?(?![\d-])"
)


@pytest.fixture(scope="module")
def labelled(tmp_path_factory):
    table = pd.read_csv(DEMO / "cores.csv")
    path = tmp_path_factory.mktemp("cores") / "cores.csv"
    table[table["core"].isin(["QS-1", "QS-2"])].to_csv(path, index=False)
    scheme = load_scheme(DEMO / "scheme-shoreface.yaml")
    cores = read_cores(path, scheme=scheme)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        selection = select_model(
            cores,
            substates=(1,),
            labels="tract",
            scheme=scheme,
            n_restarts=1,
            max_iter=5,
            calibration_folds=0,
        )
    model = selection.best
    report = analyse(cores, scheme=scheme, surrogates=SURROGATES, seed=SEED, by="core")
    return build_appendix(
        cores, scheme, model.tract_model_, markov=report, model=model, selection=selection
    )


def _texts(document) -> str:
    """Every sentence and caption of the document except the reference list."""
    out = []
    for _, _, section in document.walk():
        if section.title == "References":
            continue
        for block in section.blocks:
            out.append(getattr(block, "text", "") or getattr(block, "caption", ""))
    return " ".join(out)


def _references(document) -> list[str]:
    sections = [s for _, _, s in document.walk() if s.title == "References"]
    assert len(sections) == 1
    return [b.text for b in sections[0].blocks]


def _key(reference: str) -> tuple[str, str]:
    """(last word of the first author's surname, year) of a reference list entry."""
    return reference.split(",")[0].split()[-1], re.search(r"\((\d{4})\)", reference)[1]


def _cited(document) -> set[tuple[str, str]]:
    return {(m[1], m[2]) for m in CITATION.finditer(_texts(document))}


def test_every_citation_is_listed_and_every_listed_work_cited(labelled):
    """Bowker (1948) and Schwarz (1978) were cited without an entry, and Ke et al. (2017)
    listed without a citation."""
    document = labelled.document
    listed = {_key(r) for r in _references(document)}
    cited = _cited(document)
    assert cited - listed == set(), "cited but not listed"
    assert listed - cited == set(), "listed but not cited"


def test_a_section_added_later_brings_its_references(labelled):
    """The correlation section (appendix --wells) is added after the appendix is built;
    its alignment references were cited without an entry."""
    from copy import deepcopy

    from faciesseq.report.correlation_section import METHOD

    appendix = deepcopy(labelled)
    add_section(appendix, Section("Correlation").add(Paragraph(METHOD)), "correlation", {})
    listed = {_key(r) for r in _references(appendix.document)}
    assert {("Needleman", "1970"), ("Smith", "1980"), ("Waterman", "1987")} <= listed
    assert _cited(appendix.document) == listed


def test_the_test_table_says_how_each_p_value_was_obtained(labelled):
    """The caption said "asymptotic χ², or Monte Carlo" without the surrogates' number
    or seed, which no reader could then repeat."""
    table = next(t for t in labelled.document.tables() if t.key == "markov_tests")
    caption = table.caption
    assert "degrees of freedom" in caption and "asymptotic" in caption
    assert f"{SURROGATES} surrogate" in caption and f"seed {SEED}" in caption


def test_the_em_trace_names_the_quantity_it_draws(labelled):
    """The trace drew EM's objective (log-likelihood plus log-prior), as its caption
    says, under an axis labelled "log-likelihood"."""
    figure = next(
        b
        for b in labelled.document.blocks()
        if isinstance(b, FigureBlock) and b.key == "model_loglik_trace"
    )
    label = figure.figure.axes[0].get_ylabel()
    assert "objective" in label and "log-prior" in label


def test_problem_depths_keep_the_precision_of_the_input(labelled):
    """A gap at 48.36 m was shown at 48.4 m beside a message saying 48.36."""
    table = next(t for t in labelled.document.tables() if t.key == "data_problems")
    assert isinstance(table, TableBlock)
    j = table.header().index("depth")
    depths = [cells[j] for cells, _ in table.rows() if cells[j]]
    assert depths and all(len(d.partition(".")[2]) == 2 for d in depths), depths
    assert "depth in m" in table.caption


def test_the_picks_tables_explain_every_column():
    """The picks tables showed "p_contact" and "segment" columns their caption did not
    name: a reader could not tell the pick's probability from the contact's."""
    from _synthetic import SHOREFACE, synthetic_coreset, synthetic_interpretation

    from faciesseq.scheme import default_tract_model

    tract_model = default_tract_model()
    interp = synthetic_interpretation(tract_model, names=("W-1",))
    appendix = build_appendix(
        synthetic_coreset(interp), load_scheme(SHOREFACE), tract_model, interpretation=interp
    )
    tables = [t for t in appendix.document.tables() if t.key.endswith("_picks")]
    assert tables
    for table in tables:
        columns = [c.split(" (")[0] for c in table.header()[1:]]
        assert "segment" in columns and "probability" in columns
        for column in columns:
            assert column in table.caption, (column, table.caption)


def test_the_cautions_say_the_model_informs_and_does_not_replace_judgement(labelled):
    """ "To be judged by a geologist" left open whether the model's columns could stand
    in for the judgement; a reviewer asks that they say they cannot."""
    cautions = next(s for _, _, s in labelled.document.walk() if s.title == "Cautions")
    text = " ".join(b.text for b in cautions.blocks)
    assert "inform" in text and "do not replace" in text and "geologist" in text
    assert "local regulations and licensed professional practice" in text


def test_the_transition_matrices_give_n_and_say_why_cells_are_blank(labelled):
    """The five matrices of section 2.1 gave no N, and the expected, difference and
    residual tables left the diagonal blank without a word (an embedded chain's
    structural zeros)."""
    tables = {t.key: t for t in labelled.document.tables()}
    n = int(tables["markov_counts"].frame.to_numpy().sum())
    for key in ("counts", "probabilities", "expected", "difference", "residuals"):
        caption = tables[f"markov_{key}"].caption
        assert f"N = {n} upward transitions" in caption, caption
    for key in ("expected", "difference", "residuals"):
        table = tables[f"markov_{key}"]
        blanks = [c for cells, _ in table.rows() for c in cells[1:] if c == ""]
        assert blanks and "structural zero" in table.caption, table.caption


def test_the_model_probabilities_are_shown_with_one_precision_and_bounds(labelled):
    """The contact table showed 0.00125 beside 0.1753, the state transitions 0.9928: as
    many digits as each column's largest value allowed, one precision per column, a
    1.0000 possible for a probability short of 1. Now 3 decimals everywhere, with
    "< 0.001" and "> 0.999" at the ends (as a p-value below 0.001)."""
    tables = {t.key: t for t in labelled.document.tables()}
    keys = ["model_transitions", "model_start"] + [
        k
        for k, t in tables.items()
        if t.caption.startswith(("Emission probabilities P", "Facies of the lowest"))
    ]
    assert len(keys) >= 4
    for key in keys:
        table = tables[key]
        values = table.frame.to_numpy(float)
        cells = [cells[1:] for cells, _ in table.rows()]
        for i, row in enumerate(cells):
            for j, cell in enumerate(row):
                v = values[i, j]
                if 0 < v < 0.001:
                    assert cell == "< 0.001", (key, v, cell)
                elif 0.999 < v < 1:
                    assert cell == "> 0.999", (key, v, cell)
                else:
                    assert cell == f"{v:.3f}", (key, v, cell)


def test_the_tract_model_section_says_which_graph_was_fitted_and_why(labelled):
    """Nothing said which tract graph the model was fitted on, nor why: chosen by ICL,
    read from the labels, or the tract model as given."""
    from types import SimpleNamespace

    from faciesseq.report.model_section import graph_text
    from faciesseq.scheme import default_tract_model

    graph = next(s for _, _, s in labelled.document.walk() if s.title == "Tract graph")
    text = " ".join(getattr(b, "text", "") for b in graph.blocks)
    assert "tract graph: HST → FSST → LST → TST, cyclic; tracts that may be absent" in text
    assert "labelled boundaries" in text or "labelled neighbours" in text
    given = graph_text(SimpleNamespace(tract_model_=default_tract_model()))
    assert "the tract model as given: no graph was chosen among candidates" in given


def test_appendix_without_a_model_chooses_the_graph_as_fit_does(tmp_path):
    # no model file and no --tracts: the appendix's fit without labels chooses its
    # graph among the trade's strict graphs by ICL, as `faciesseq fit` does (it fitted
    # the packaged tract model's permissive graph, every tract allowed to be absent,
    # which a fit without labels reads worst), and the appendix says which was chosen
    import json

    from faciesseq.cli import main

    table = pd.read_csv(DEMO / "cores.csv")
    minimal = table[table["core"].isin(["QB-05", "QB-06", "QB-07", "QB-08"])]
    minimal[["core", "top", "base", "facies"]].to_csv(tmp_path / "c.csv", index=False)
    out = tmp_path / "A"
    args = ["appendix", str(tmp_path / "c.csv"), "--scheme", str(DEMO / "scheme-shoreface.yaml")]
    args += ["--restarts", "1", "--surrogates", "19", "--no-latex", "-o", str(out)]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        assert main(args) == 0
    training = json.loads((out / "appendix.json").read_text())["results"]["model"]["training"]
    assert len(training["graph_selection"]) >= 2
    assert "the lowest ICL" in (out / "appendix.html").read_text()
