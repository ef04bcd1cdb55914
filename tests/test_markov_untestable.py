"""Tests with no degrees of freedom are said not testable, with no statistic and no
conclusion: ``markov`` on two facies or on one transition wrote "Could be random ...
χ²(0, N = 52) = 0.00 ... The Monte Carlo test agrees: p = 1", "the groups do not
differ", "cycle type: random" and Bowker's χ²(0).

With two facies an embedded chain (no facies above itself) can only alternate
A-B-A: quasi-independence has (2 - 1)² - 2 < 1 degrees of freedom, the embedded
chain's (n - 1)² - n (Goodman 1968; Powers & Easterling 1982; cited from memory).
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

import faciesseq as fs
from faciesseq.cli import main


def _write(path: Path, cores: dict[str, list[str]]) -> Path:
    rows = []
    for core, codes in cores.items():
        rows += [(core, float(k), k + 1.0, code) for k, code in enumerate(codes)]
    pd.DataFrame(rows, columns=["core", "top", "base", "facies"]).to_csv(path, index=False)
    return path


def _markov(tmp_path: Path, source: Path, *extra) -> tuple[str, dict, pd.DataFrame]:
    out = tmp_path / "markov"
    assert main(["markov", str(source), "-o", str(out), *extra]) == 0
    document = json.loads((out / "markov.json").read_text(encoding="utf-8"))
    return (
        (out / "markov.txt").read_text(encoding="utf-8"),
        document,
        pd.read_csv(out / "tests.csv"),
    )


@pytest.fixture
def two_facies(tmp_path):
    return _write(tmp_path / "two.csv", {f"C{k}": ["A", "B"] * 7 for k in range(4)})


def test_two_facies_are_said_not_testable_with_no_conclusion(tmp_path, two_facies, capsys):
    text, document, tests = _markov(tmp_path, two_facies, "--surrogates", "19", "--seed", "1")
    answer = text.split("Answer")[1].split("Tests")[0]
    assert "Not testable (0 degrees of freedom, N = 52; with two facies" in answer
    assert "no conclusion on ordered or random" in answer
    assert "The 4 groups by core: not testable (0 degrees of freedom; N = 52)" in answer
    for said in ("Could be random", "agrees", "do not differ", "rejected"):
        assert said not in text
    assert "χ²(0" not in text and "G²(0" not in text and "Cramér's V" not in text
    assert (
        "cycle type: not determined; symmetry of the upward counts (Bowker): not testable" in text
    )
    # JSON and CSV: no statistic or p-value for any test, and why
    assert document["entropy"]["cycle_type"] == "not determined"
    assert all(t["statistic"] is None and t["p_value"] is None for t in document["tests"])
    assert {t["note"] for t in document["tests"]} >= {"not testable: 0 degrees of freedom"}
    assert tests["statistic"].isna().all() and tests["p_value"].isna().all()
    assert tests["note"].str.startswith("not testable: 0 degrees of freedom").all()


def test_one_transition_is_said_not_testable_and_chooses_no_order(tmp_path, capsys):
    text, document, _ = _markov(tmp_path, _write(tmp_path / "one.csv", {"W": ["CP", "USF"]}))
    answer = text.split("Answer")[1].split("Tests")[0]
    assert "Not testable (0 degrees of freedom, N = 1" in answer
    assert "Order not chosen: the orders are fitted on 0 transitions." in answer
    assert "Could be random" not in text and "χ²(0" not in text
    assert "best order: not chosen (no transitions)" in text
    assert document["entropy"]["cycle_type"] == "not determined"
    assert document["entropy"]["symmetry_test"]["statistic"] is None


def test_the_appendix_says_not_testable_in_place_of_the_statistics(two_facies):
    from faciesseq.report.document import Document, Paragraph, TableBlock
    from faciesseq.report.markov_section import markov_section
    from faciesseq.scheme import Facies, FaciesScheme

    cores = fs.read_cores(two_facies).require_valid()
    report = fs.analyse(cores, by="core")
    scheme = FaciesScheme((Facies("A", "A", 0.0), Facies("B", "B", 1.0)))
    document = Document("appendix", sections=[markov_section(report, scheme)])
    text = " ".join(b.text for b in document.blocks() if isinstance(b, Paragraph))
    assert "First-order dependence (quasi-independence): not testable (0 degrees" in text
    assert "Cycle type: not determined" in text
    assert "χ²(0" not in text and "G²(0" not in text and "Cramér" not in text
    table = next(
        b for b in document.blocks() if isinstance(b, TableBlock) and b.key == "markov_tests"
    )
    said = table.header().index("reported as")
    assert all(cells[said].startswith("not testable") for cells, _ in table.rows())


def test_a_table_of_several_facies_keeps_its_tests_and_verdict(tmp_path, capsys):
    # an upward-shallowing cycle of four facies, repeated: testable, and ordered
    cycle = ["OFF", "LSF", "USF", "CP"]
    source = _write(tmp_path / "four.csv", {f"C{k}": cycle * 6 for k in range(3)})
    text, document, tests = _markov(tmp_path, source)
    answer = text.split("Answer")[1].split("Tests")[0]
    assert "Ordered, not random: the quasi-independence null is rejected, χ²(5, N = 69)" in answer
    assert "not testable" not in answer.split("First order")[0]
    assert document["entropy"]["cycle_type"] != "not determined"
    first = document["tests"][0]
    assert first["dof"] == 5 and first["statistic"] > 0 and first["p_value"] < 0.05
    assert first["note"] == ""
    assert tests["statistic"].iloc[0] == pytest.approx(first["statistic"], rel=1e-5)


@pytest.fixture
def line_of_facies(tmp_path):
    # four facies joined only along the line A-B-C-D (up and down it, never A-C or
    # A-D): the joined pairs close no cycle, so Bowker's test of the transition
    # counts has 0 degrees of freedom, while the first-order test has 5 and rejects
    log = ["A", "B", "C", "D", "C", "B", "A", "B", "C", "B", "C", "D", "C", "B"] * 2
    return _write(tmp_path / "line.csv", {f"C{k}": log for k in range(3)})


def test_an_untestable_symmetry_test_leaves_the_cycle_type_not_determined(
    tmp_path, line_of_facies, capsys
):
    text, document, tests = _markov(tmp_path, line_of_facies)
    answer = text.split("Answer")[1].split("Tests")[0]
    assert "Ordered, not random: the quasi-independence null is rejected, χ²(5" in answer
    cycle_line = next(line for line in text.splitlines() if "cycle type:" in line)
    assert "symmetric" not in cycle_line.replace("symmetry", "")
    assert cycle_line.startswith("  cycle type: not determined; symmetry of the upward counts")
    assert "not testable (0 degrees of freedom, the facies are joined only along a line" in text
    entropy = document["entropy"]
    assert entropy["cycle_type"] == "not determined" and entropy["cycle_direction"] == []
    bowker = entropy["symmetry_test"]
    assert bowker["dof"] == 0 and bowker["statistic"] is None and bowker["p_value"] is None
    assert bowker["note"].startswith("not testable: 0 degrees of freedom")
    # the CSV of the tests carries Bowker's test too, with no statistic and the reason
    row = tests.set_index("name").loc["symmetry of the upward counts (Bowker)"]
    assert row["dof"] == 0 and pd.isna(row["statistic"]) and pd.isna(row["p_value"])
    assert row["note"].startswith("not testable: 0 degrees of freedom")


def test_the_appendix_says_the_cycle_type_is_not_determined_where_bowker_cannot_run(
    line_of_facies,
):
    from faciesseq.report.document import Document, Paragraph, TableBlock
    from faciesseq.report.markov_section import markov_section
    from faciesseq.scheme import Facies, FaciesScheme

    report = fs.analyse(fs.read_cores(line_of_facies).require_valid())
    scheme = FaciesScheme(tuple(Facies(c, c, float(k)) for k, c in enumerate("ABCD")))
    document = Document("appendix", sections=[markov_section(report, scheme)])
    text = " ".join(b.text for b in document.blocks() if isinstance(b, Paragraph))
    assert "Cycle type: not determined (symmetry of the upward counts, Bowker 1948: not " in text
    assert "Cycle type: symmetric" not in text
    table = next(
        b for b in document.blocks() if isinstance(b, TableBlock) and b.key == "markov_tests"
    )
    rows = {cells[0]: cells for cells, _ in table.rows()}
    said = table.header().index("reported as")
    assert rows["symmetry of the upward counts (Bowker)"][said].startswith("not testable")
