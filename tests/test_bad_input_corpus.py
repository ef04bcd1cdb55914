"""The bad-input corpus (``tests/data/bad_inputs/``) run through the command line.

Each row of the table in ``tests/data/bad_inputs/README.md`` names a file with one
defect, the command run on it, the exit code (1 data, 2 usage or configuration)
and the words the one-line message must contain. Every file must end in exactly
one line on standard error holding those words, no traceback, and nothing
written: a command given an output that does not exist leaves none (nor a hidden
temporary one), and one given an existing output leaves it byte-identical,
without ``--force`` (refused) and with it (the defect found first). Files too
big to store, or made from a fitted model, are made here from the recipes the
README's second table lists.

Placeholders in the commands: ``{file}`` the corpus file, ``{out}`` the output,
``{cores}``, ``{scheme}``, ``{model}`` and ``{wells}`` a small valid database
(three invented cores of ``hmm_synthetic``, their scheme, a model fitted on them
and a wells table), so that the corpus file is the only thing wrong.
"""

from __future__ import annotations

import json
import re
import shlex
import sqlite3
from collections.abc import Callable
from pathlib import Path

import hmm_synthetic as synth
import pytest

from faciesseq.cli import main

CORPUS = Path(__file__).parent / "data" / "bad_inputs"
README = CORPUS / "README.md"

#: Commands whose ``-o`` names a file (the others write a folder).
FILE_OUTPUTS = {"fit", "scheme"}


# ------------------------------------------------------------------ the README's tables
def _table(title: str) -> list[list[str]]:
    """The cells of the markdown table under the heading ``title``."""
    text = README.read_text(encoding="utf-8")
    section = text.split(f"## {title}\n", 1)[1].split("\n## ", 1)[0]
    rows = [line for line in section.splitlines() if line.startswith("|")]
    return [[c.strip() for c in row.strip("|").split(" | ")] for row in rows[2:]]


def _ticked(cell: str) -> list[str]:
    """The `code spans` of a cell, in order."""
    return re.findall(r"`([^`]+)`", cell)


def _cases() -> list[tuple[str, str, int, list[str]]]:
    cases = []
    for file, _defect, command, code, words in _table("Files"):
        (name,) = _ticked(file)
        (argv,) = _ticked(command)
        cases.append((name, argv, int(code), _ticked(words)))
    return cases


CASES = _cases()


# ------------------------------------------------------------------ a valid database
@pytest.fixture(scope="module")
def good(tmp_path_factory) -> dict[str, Path]:
    """Three invented cores, their scheme, a model fitted on them and a wells table."""
    folder = tmp_path_factory.mktemp("good")
    synth.write_database(folder, 3, 40, seed=5)
    (folder / "wells.csv").write_text("core,section,x_km\nS-5-1,c,0\nS-5-2,c,5\nS-5-3,c,9\n")
    model = folder / "model.json"
    fit = ["fit", str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml")]
    assert main([*fit, "-o", str(model), "--restarts", "1", "--max-iter", "10"]) == 0
    return {
        "cores": folder / "cores.csv",
        "scheme": folder / "scheme.yaml",
        "model": model,
        "wells": folder / "wells.csv",
    }


# ------------------------------------------------------------------ recipes of generated files
def _model_doc(good) -> dict:
    return json.loads(good["model"].read_text())


def _model_with(change: Callable[[dict], None]) -> Callable[[Path, dict], None]:
    def make(path: Path, good: dict) -> None:
        doc = _model_doc(good)
        change(doc)
        path.write_text(json.dumps(doc))

    return make


def _set(*keys_value):
    *keys, value = keys_value

    def change(doc: dict) -> None:
        for key in keys[:-1]:
            doc = doc[key]
        doc[keys[-1]] = value

    return change


def _rows_not_summing(doc: dict) -> None:
    doc["parameters"]["transmat"][0] = [v * 0.5 for v in doc["parameters"]["transmat"][0]]


def _outside_graph(doc: dict) -> None:
    # HST.1 -> TST.1 is not an edge of the strict cyclic graph; put a little weight there
    labels = doc["states"]["labels"]
    row = doc["parameters"]["transmat"][labels.index("HST.1")]
    j = labels.index("TST.1")
    k = max(range(len(row)), key=row.__getitem__)
    row[j], row[k] = 0.01, row[k] - 0.01


def _five_thousand_digits(path: Path, good: dict) -> None:
    text = good["model"].read_text()
    path.write_text(text.replace('"version": 1', '"version": 1' + "0" * 5000, 1))


def _nested(path: Path, good: dict) -> None:
    path.write_text("[" * 200_000 + "]" * 200_000)


def _other_scheme_model(path: Path, good: dict) -> None:
    """A model fitted on the same cores with every code renamed (another scheme)."""
    folder = path.parent / "other-scheme-fit"
    folder.mkdir()
    renamed = {c: f"X{i}" for i, c in enumerate(synth.CODES)}
    text = good["cores"].read_text()
    for code, new in renamed.items():
        text = re.sub(rf",{code},", f",{new},", text)
    (folder / "cores.csv").write_text(text)
    (folder / "scheme.yaml").write_text(
        "facies:\n"
        + "".join(
            f"  - {{code: {n}, name: {n}, rank: {i}}}\n" for i, n in enumerate(renamed.values())
        )
    )
    argv = ["fit", str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml")]
    assert main([*argv, "-o", str(path), "--restarts", "1", "--max-iter", "5"]) == 0


def _wide(path: Path, good: dict) -> None:
    extra = [f"c{i}" for i in range(20_000)]
    path.write_text(
        ",".join(["core", "top", "base", "facies", *extra])
        + "\n"
        + ",".join(["W1", "0", "1", "SHM", *("1" for _ in extra)])
        + "\n"
    )


def _truncated_parquet(path: Path, good: dict) -> None:
    import pandas as pd

    pd.read_csv(good["cores"]).to_parquet(path)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])


def _xlsx_header_only(path: Path, good: dict) -> None:
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    book.active.title = "intervals"
    book.active.append(["core", "top", "base", "facies"])
    book.save(path)


def _sqlite(*tables: str) -> Callable[[Path, dict], None]:
    def make(path: Path, good: dict) -> None:
        with sqlite3.connect(path) as conn:
            for table in tables:
                conn.execute(f"CREATE TABLE {table} (core TEXT, top REAL, base REAL, facies TEXT)")
        conn.close()

    return make


RECIPES: dict[str, Callable[[Path, dict], None]] = {
    "empty-folder": lambda path, good: path.mkdir(),
    "wide-20000-columns.csv": _wide,
    "model-5001-digit-number.json": _five_thousand_digits,
    "model-nested-200000-deep.json": _nested,
    "model-version-99.json": _model_with(_set("version", 99)),
    "model-nan-startprob.json": _model_with(
        lambda doc: doc["parameters"]["startprob"].__setitem__(0, float("nan"))
    ),
    "model-rows-not-summing.json": _model_with(_rows_not_summing),
    "model-transition-outside-graph.json": _model_with(_outside_graph),
    "model-billion-substates.json": _model_with(_set("states", "substates", [10**9, 1, 1, 1])),
    "model-temperature-negative.json": _model_with(_set("parameters", "temperature", -1.0)),
    "model-unknown-unit.json": _model_with(_set("hyperparameters", "unit", "metres")),
    "model-of-another-scheme.json": _other_scheme_model,
    "truncated.parquet": _truncated_parquet,
    "header-only.xlsx": _xlsx_header_only,
    "two-tables.sqlite": _sqlite("logs", "cores_old"),
    "no-tables.sqlite": _sqlite(),
}


def _generated() -> list[str]:
    return [_ticked(row[0])[0] for row in _table("Generated files")]


# ------------------------------------------------------------------ the tests
def test_the_corpus_and_its_readme_list_the_same_files():
    stored = {p.name for p in CORPUS.iterdir() if p.name != "README.md"}
    listed = [name for name, *_ in CASES]
    generated = set(_generated())
    assert len(listed) == len(set(listed)), "a file listed twice"
    assert set(listed) == stored | generated
    assert not stored & generated
    assert generated == set(RECIPES)
    assert len(listed) >= 60


def _snapshot(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` (hidden ones too) and its bytes."""
    return {
        str(p.relative_to(folder)): p.read_bytes() if p.is_file() else b"<folder>"
        for p in sorted(folder.rglob("*"))
    }


def _run(argv: list[str], capsys) -> tuple[int, str]:
    code = main(argv)
    return code, capsys.readouterr().err


def _check_one_line(err: str, words: list[str]) -> None:
    assert err.count("\n") == 1 and err.endswith("\n"), err
    assert "Traceback" not in err, err
    for word in words:
        assert word in err, (word, err)


@pytest.mark.parametrize(("name", "command", "code", "words"), CASES, ids=[c[0] for c in CASES])
def test_each_bad_input_is_one_line_and_writes_nothing(
    name, command, code, words, good, tmp_path, monkeypatch, capsys
):
    work = tmp_path / "work"  # the current folder: nothing may appear in it
    outputs = tmp_path / "outputs"  # holds the output, and nothing else
    work.mkdir()
    outputs.mkdir()
    monkeypatch.chdir(work)
    if name in RECIPES:
        made = tmp_path / "generated"
        made.mkdir()
        source = made / name
        RECIPES[name](source, good)
        capsys.readouterr()  # what a recipe's own fit printed
    else:
        source = CORPUS / name
    before = _snapshot(CORPUS)
    tokens = shlex.split(command)
    out = outputs / ("result.out" if tokens[0] in FILE_OUTPUTS else "result")
    places = {key: str(value) for key, value in good.items()}
    argv = [t.format(file=source, out=out, **places) for t in tokens]

    got, err = _run(argv, capsys)
    assert got == code, err
    _check_one_line(err, words)
    assert _snapshot(outputs) == {}, "something was written"
    assert _snapshot(work) == {}, "something was written in the current folder"
    assert _snapshot(CORPUS) == before

    if "{out}" not in command:
        return
    # an existing output is left as it was, with or without --force
    if tokens[0] in FILE_OUTPUTS:
        out.write_bytes(b"an earlier result\n")
    else:
        out.mkdir()
        (out / "earlier.csv").write_bytes(b"an earlier result\n")
    earlier = _snapshot(outputs)
    # without --force: refused (the output exists) or failed on the defect, untouched
    got, err = _run(argv, capsys)
    assert got in (1, 2), err
    _check_one_line(err, [])
    assert _snapshot(outputs) == earlier
    # with --force: the defect is found before the output is touched
    got, err = _run([*argv, "--force"], capsys)
    assert got == code, err
    _check_one_line(err, words)
    assert _snapshot(outputs) == earlier, "an existing output was replaced or added to"
    assert _snapshot(work) == {}
