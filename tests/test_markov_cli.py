"""``faciesseq markov`` end to end: text, JSON and CSV on the Council Grove wells."""

import io
import json
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import pandas as pd
import pytest

from faciesseq.cli import main

DATA = Path(__file__).parent / "data" / "council_grove"
READ = [
    str(DATA / "facies_vectors_subset.csv"),
    "--layout",
    "samples",
    "--column",
    "core=Well Name",
    "--column",
    "depth=Depth",
    "--column",
    "facies=Facies",
    "--units",
    "ft",
    "--keep-first",
    "--scheme",
    str(DATA / "scheme.yaml"),
]


def _run(*args):
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(["markov", *args])
    return code, out.getvalue(), err.getvalue()


def test_text_output_has_one_line_per_test_in_reviewer_form():
    code, out, err = _run(*READ, "--max-order", "2")
    assert code == 0, err
    assert "χ²(55, N = 317) = 314.03, p = 5.8e-38" in out
    # the names padded to the longest, that of Bowker's test listed last
    assert "homogeneity by core (Pearson chi2)      χ²(140, N = 317) = 150.68" in out
    assert "\n  symmetry of the upward counts (Bowker)  χ²(" in out
    assert "left out: Recruit F9" in out


def test_json_output_follows_the_documented_contract():
    code, out, _ = _run(*READ, "--format", "json", "--surrogates", "99", "--seed", "4")
    assert code == 0
    doc = json.loads(out)
    assert doc["schema"] == "faciesseq.markov/1"
    for key in ("counts", "probabilities", "expected", "tests", "order", "entropy"):
        assert key in doc
    # matrices carry their facies labels, in the scheme's rank order
    assert doc["counts"]["facies"] == ["1", "2", "3", "7", "8", "6", "5", "9", "4"]
    assert sum(map(sum, doc["counts"]["matrix"])) == doc["n_transitions"] == 317
    for t in doc["tests"]:
        assert {"name", "statistic", "dof", "p_value"} <= set(t)
    assert [t["n_surrogates"] for t in doc["tests"] if t["method"] == "monte carlo"] == [99, 99]
    assert set(doc["order"]) >= {"aic", "bic", "best_aic", "best_bic"}
    assert len(doc["order"]["aic"]) == 4
    assert doc["excluded_cores"] == ["Recruit F9"]
    assert doc["seed"] == 4
    # the same seed gives the same Monte Carlo p-values
    _, again, _ = _run(*READ, "--format", "json", "--surrogates", "99", "--seed", "4")
    assert json.loads(again)["tests"] == doc["tests"]


def test_csv_and_out_folder(tmp_path):
    code, out, _ = _run(*READ, "--format", "csv", "-o", str(tmp_path / "res"))
    assert code == 0
    tests = pd.read_csv(io.StringIO(out))
    assert list(tests.columns[:4]) == ["name", "statistic", "dof", "p_value"]
    files = {p.name for p in (tmp_path / "res").iterdir()}
    assert {"counts.csv", "tests.csv", "markov.json", "facies_relationship.png"} <= files
    counts = pd.read_csv(tmp_path / "res" / "counts.csv", index_col=0)
    assert int(counts.to_numpy().sum()) == 317
    assert not any(p.name.startswith(".") for p in tmp_path.iterdir())


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--unit", "grid"], "--step"),
        (["--max-order", "0"], "--max-order"),
        (["--seed", "3"], "--surrogates"),
        (["--by", "no_such_column"], "no_such_column"),
    ],
)
def test_usage_mistakes_give_one_line_and_exit_2(tmp_path, args, message):
    code, _out, err = _run(*READ, *args, "-o", str(tmp_path / "never"))
    assert code == 2
    assert message in err and err.count("\n") == 1
    assert not (tmp_path / "never").exists()


def test_by_a_misspelt_column_lists_the_real_columns_and_the_near_name(tmp_path):
    # a table of the four required columns alone: the list of columns was empty
    table = tmp_path / "cores.csv"
    table.write_text(
        "core,top,base,facies\n"
        + "".join(f"A,{k},{k + 1},{'FGS'[k % 3]}\n" for k in range(12))
        + "".join(f"B,{k},{k + 1},{'FGS'[(k * 2) % 3]}\n" for k in range(12))
    )
    code, _out, err = _run(str(table), "--by", "cores")
    assert code == 2 and err.count("\n") == 1
    assert "by='cores' (--by): no such column to group by; did you mean 'core'?" in err
    assert "(columns: core, top, base, facies;" in err


def _renamed_table(tmp_path) -> Path:
    """Two cores whose core and lithology columns are named otherwise in the file."""
    table = tmp_path / "cores.csv"
    table.write_text(
        "hole,top,base,facies,rock\n"
        + "".join(f"A,{k},{k + 1},{'FGS'[k % 3]},{'ss' if k < 6 else 'sh'}\n" for k in range(12))
        + "".join(
            f"B,{k},{k + 1},{'FGS'[(k * 2) % 3]},{'ss' if k < 6 else 'sh'}\n" for k in range(12)
        )
    )
    return table


@pytest.mark.parametrize(
    ("by", "same_as"), [("rock", "lithology"), ("ROCK", "lithology"), ("hole", "core")]
)
def test_by_takes_a_columns_name_in_the_file_as_its_role(tmp_path, by, same_as):
    # --by rock was refused although --column lithology=rock named it so
    mapping = ["--column", "core=hole", "--column", "lithology=rock", "--format", "json"]
    code, out, err = _run(str(_renamed_table(tmp_path)), *mapping, "--by", by)
    assert code == 0, err
    code, expected, _ = _run(str(_renamed_table(tmp_path)), *mapping, "--by", same_as)
    assert code == 0
    tests = [t for t in json.loads(out)["tests"] if t["name"].startswith("homogeneity")]
    assert tests and all(f"by {same_as}" in t["name"] for t in tests)
    assert json.loads(out) == json.loads(expected)


def test_by_neither_a_role_nor_a_files_name_lists_both(tmp_path):
    mapping = ["--column", "core=hole", "--column", "lithology=rock"]
    code, _out, err = _run(str(_renamed_table(tmp_path)), *mapping, "--by", "stone")
    assert code == 2 and err.count("\n") == 1
    assert (
        "(columns: core ('hole' in the file), top, base, facies, lithology ('rock' in the "
        "file);" in err
    )


def test_grid_unit_warns_about_the_sampling_step():
    code, out, _ = _run(*READ, "--unit", "grid", "--step", "0.5", "--by", "none")
    assert code == 0
    assert "χ²(64," in out
    assert "sampling step" in out


def test_text_output_opens_with_the_answer():
    code, out, _ = _run(*READ, "--max-order", "2", "--surrogates", "99", "--seed", "1")
    assert code == 0
    answer = out.split("Answer\n", 1)[1].split("\n\n", 1)[0]
    assert answer.startswith("  Ordered, not random: the quasi-independence null is rejected")
    assert "The Monte Carlo test agrees: p = 0.01 with 99 surrogates." in answer
    assert "First order is not rejected against second order" in answer


def test_facies_codes_the_font_cannot_draw_are_one_warning_line(tmp_path):
    # matplotlib warned once per character and figure drawn: a flood on stderr
    cycle = ["砂岩", "泥岩", "灰岩", "\ue000"]  # CJK codes, a private-use one no font draws
    rows = [f"W1,{k},{k + 1},{cycle[k % 4]}" for k in range(40)]
    rows += [f"W2,{k},{k + 1},{cycle[(k * 3) % 4]}" for k in range(40)]
    source = tmp_path / "cores.csv"
    source.write_text("core,top,base,facies\n" + "\n".join(rows) + "\n", encoding="utf-8")
    code, _, err = _run(str(source), "--units", "m", "-o", str(tmp_path / "res"))
    assert code == 0
    lines = [line for line in err.splitlines() if "glyph" in line.lower()]
    assert len(lines) == 1, err
    assert lines[0].startswith("faciesseq markov: warning: the figures' font (")
    assert "\ue000" in lines[0] and "drawn as empty boxes" in lines[0]


def test_markov_tables_are_written_with_six_significant_digits(tmp_path, capsys):
    # cells.csv held 3.033675829819265 and 1.1245883104937882e-17: float noise in a table
    # read by people (markov.json keeps every digit)
    from pathlib import Path

    from faciesseq.cli import main

    source = Path(__file__).resolve().parents[1] / "demo_cores" / "cores.csv"
    out = tmp_path / "res"
    argv = ["markov", str(source), "--surrogates", "0", "-o", str(out), "--format", "json"]
    assert main(argv) == 0
    capsys.readouterr()
    import re

    for name in ("cells.csv", "expected.csv", "tests.csv"):
        text = (out / name).read_text()
        digits = [len(m.replace(".", "").lstrip("0")) for m in re.findall(r"\d+\.\d+", text)]
        assert digits and max(digits) <= 6, name


@pytest.mark.parametrize(
    ("rows", "message"),
    [
        # one facies throughout: amalgamated, every core is one bed
        ("A,0,1,SS\nA,1,2,SS\nB,0,2,SS\n", "only one facies (SS) is present"),
        ("A,0,1,SS\nB,0,2,SH\n", "every succession has a single bed or cell"),
    ],
)
def test_no_transitions_says_why_in_one_line(tmp_path, capsys, rows, message):
    source = tmp_path / "cores.csv"
    source.write_text("core,top,base,facies\n" + rows)
    assert main(["markov", str(source)]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert any(message in line for line in err) and "Traceback" not in "\n".join(err)


def test_an_order_test_without_degrees_of_freedom_says_why_it_has_no_p_value():
    # strict cycles X Y Z: every context has one successor, nothing left to compare;
    # the test was listed with p None and an empty note
    import faciesseq as fs

    rows, depth = [], 0.0
    for core in ("A", "B"):
        for code in ["X", "Y", "Z"] * 4:
            rows.append((core, depth, depth + 1.0, code))
            depth += 1.0
    frame = pd.DataFrame(rows, columns=["core", "top", "base", "facies"])
    report = fs.analyse(fs.CoreSet.from_frame(frame, units="m"))
    tested = {t.name: t for t in report.order.tests}
    assert tested["order 1 vs 2 (G2)"].dof == 0
    assert tested["order 1 vs 2 (G2)"].note.startswith("not testable: 0 degrees of freedom")
    assert tested["order 0 vs 1 (G2)"].note == ""
