"""``faciesseq appendix`` and ``faciesseq demo`` from the command line."""

import csv
import json
import re
from pathlib import Path

import pandas as pd
import pytest
from _chromium import CHROMIUM, open_page, page_errors
from _html_tables import mismatches, read_tables
from _latex_log import compile_latex, page_count, table_overfulls

from faciesseq.cli import main
from faciesseq.pipeline import demo_source
from faciesseq.report.provenance import sha256_file

ROOT = Path(__file__).resolve().parents[1]
SCHEME = ROOT / "configs" / "scheme-shoreface.yaml"
FAST = ["--surrogates", "19", "--restarts", "1", "--folds", "2", "--no-latex"]


@pytest.fixture(scope="module")
def small_source(tmp_path_factory):
    """Three demo cores (interpreted and not) as one CSV."""
    cores = pd.read_csv(ROOT / "demo_cores" / "cores.csv", keep_default_na=False)
    keep = cores[cores["core"].isin(["QB-01", "QB-02", "QN-1"])]
    path = tmp_path_factory.mktemp("src") / "cores.csv"
    keep.to_csv(path, index=False)
    return path


def _run(capsys, argv):
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_packaged_demo_database_equals_the_repository_copy():
    packaged = demo_source()
    assert sha256_file(packaged / "cores.csv") == sha256_file(ROOT / "demo_cores" / "cores.csv")
    assert sha256_file(packaged / "scheme-shoreface.yaml") == sha256_file(SCHEME)


def test_appendix_command_writes_the_folder_and_says_where(tmp_path, capsys, small_source):
    out = tmp_path / "app"
    code, stdout, err = _run(
        capsys, ["appendix", str(small_source), "--scheme", str(SCHEME), "-o", str(out), *FAST]
    )
    assert code == 0, err
    assert f"appendix: {out / 'appendix.html'}" in stdout
    # quiet when stderr is not a terminal, but for the units and scheme in force
    assert err.startswith("faciesseq appendix: units: m (stated in the data); scheme: ")
    assert err.count("\n") == 1
    data = json.loads((out / "appendix.json").read_text(encoding="utf-8"))
    assert data["sections"][0] == "1 Data"
    html = (out / "appendix.html").read_text(encoding="utf-8")
    assert "fitted to these cores with the default settings" in html
    assert str(small_source.parent) not in html  # no folder of the user's in the document
    # the free parameters beside the rows they are fitted on: a labelled fit reads the
    # described intervals, and says so (a new user read "265 beds" beside "128 beds")
    assert re.search(
        r"fitted on \d+ described intervals of \d+ cores with \d+ free parameters", html
    )
    prov = json.loads((out / "provenance.json").read_text(encoding="utf-8"))
    source = next(r for r in prov["inputs"] if r["role"] == "source")
    assert source["sha256"] == sha256_file(small_source)
    assert prov["command_line"][:2] == ["faciesseq", "appendix"] or prov["command_line"][0] == (
        "faciesseq"
    )


@pytest.mark.slow
def test_appendix_command_twice_with_one_seed_gives_the_same_numbers(
    tmp_path, capsys, small_source
):
    folders = [tmp_path / "first", tmp_path / "second"]
    for out in folders:
        code, _, err = _run(
            capsys, ["appendix", str(small_source), "--scheme", str(SCHEME), "-o", str(out), *FAST]
        )
        assert code == 0, err
    first, second = ((f / "appendix.json").read_bytes() for f in folders)
    assert first == second
    for csv_file in (folders[0] / "tables").iterdir():
        assert (folders[1] / "tables" / csv_file.name).read_bytes() == csv_file.read_bytes()


def test_appendix_command_usage_errors_are_one_line(tmp_path, capsys, small_source):
    out = tmp_path / "exists"
    out.mkdir()
    argv = ["appendix", str(small_source), "--scheme", str(SCHEME)]
    code, _, err = _run(capsys, [*argv, "-o", str(out)])
    assert code == 2 and err.count("\n") == 1 and "--force" in err
    code, _, err = _run(capsys, ["appendix", str(small_source), "-o", str(tmp_path / "x")])
    assert code == 2 and "--scheme" in err and err.count("\n") == 1
    code, _, err = _run(capsys, [*argv, "-o", str(tmp_path / "y"), "--folds", "1"])
    assert code == 2 and "--folds" in err
    code, _, err = _run(capsys, [*argv, "-o", str(tmp_path / "y"), "--substates", "1,x"])
    assert code == 2 and "--substates" in err and err.count("\n") == 1
    assert not (tmp_path / "x").exists() and not (tmp_path / "y").exists()


def test_demo_refuses_to_replace_a_folder_without_force(tmp_path, capsys):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("keep")
    code, _, err = _run(capsys, ["demo", "-o", str(out)])
    assert code == 2 and "exists; pass --force" in err and err.count("\n") == 1
    assert [p.name for p in out.iterdir()] == ["notes.txt"]


def test_appendix_command_refuses_data_with_errors(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("core,top,base,facies\nA,0,1,CP\nA,2,1,FS\n", encoding="utf-8")
    code, _, err = _run(
        capsys, ["appendix", str(bad), "--scheme", str(SCHEME), "-o", str(tmp_path / "out")]
    )
    assert code == 1 and err.count("\n") == 1
    assert not (tmp_path / "out").exists()


@pytest.mark.slow
def test_demo_end_to_end(tmp_path, capsys):
    """The README's main command: every section, tables equal CSVs, JSON equals the API."""
    from faciesseq.hmm.modelfile import load_model
    from faciesseq.io import read_cores
    from faciesseq.markov import analyse
    from faciesseq.report.appendix import jsonable
    from faciesseq.scheme import load_scheme

    out = tmp_path / "demo"
    code, stdout, err = _run(capsys, ["demo", "-o", str(out), "--no-latex"])
    assert code == 0, err
    assert f"appendix: {out / 'appendix.html'}" in stdout
    assert f"figures:  {out / 'figures'}" in stdout
    html = (out / "appendix.html").read_text(encoding="utf-8")
    data = json.loads((out / "appendix.json").read_text(encoding="utf-8"))
    for title in ("1 Data", "2 Transition statistics", "3 The tract model", "4 Cores", "5 Methods"):
        assert title in data["sections"]
        assert f">{title}<" in html
    for sub in ("Tract graph", "Fitting diagnostics", "Cross-validation", "Facies relationship"):
        assert any(sub in s for s in data["sections"])
    assert len(list((out / "figures").glob("*_striplog.png"))) == 17
    # no installation path (the packaged demo's folder) in the document
    assert str(demo_source()) not in html and "site-packages" not in html
    # every shown table equals its CSV (cell by cell, to the digits shown)
    page = read_tables(html)
    n_shown = 0
    for key in data["tables"]:
        if f"table-{key}" not in page.tables:
            continue  # CSV-only data file
        n_shown += 1
        shown = page.tables[f"table-{key}"]
        with open(out / "tables" / f"{key}.csv", newline="", encoding="utf-8") as f:
            stored = list(csv.reader(f))
        assert mismatches(shown["header"], shown["rows"], stored) == [], key
    assert n_shown == len(page.tables) > 40
    # the JSON numbers are those of the Python API run the same way
    folder = demo_source()
    scheme = load_scheme(folder / "scheme-shoreface.yaml")
    cores = read_cores(folder / "cores.csv", scheme=scheme)
    report = analyse(cores, scheme=scheme, surrogates=199, seed=0, by="core")
    assert data["results"]["markov"] == jsonable(report.to_dict())
    model = load_model(out / "model.json")
    assert data["results"]["model"]["parameters"]["transmat"] == model.transmat_.tolist()
    # the demo's tract model is fitted as `faciesseq fit --labels` fits it, on the
    # described intervals, while the transition statistics read amalgamated beds
    assert model.unit_ == "intervals"
    assert "read the described intervals as they are" in html
    assert "amalgamated into beds" in html
    assert data["results"]["data"]["summary"]["cores"] == 17
    if CHROMIUM:
        dom, log = open_page(out / "appendix.html", tmp_path / "demo.png", size="1200,3000")
        assert page_errors(log) == []
        assert dom.count("<img") == len(data["figures"])


def test_appendix_with_a_model_file_uses_it_and_hashes_it(tmp_path, capsys, small_source):
    from faciesseq.hmm.model import TractHMM
    from faciesseq.hmm.modelfile import save_model
    from faciesseq.io import read_cores
    from faciesseq.scheme import load_scheme

    scheme = load_scheme(SCHEME)
    cores = read_cores(small_source, scheme=scheme)
    model = TractHMM(scheme=scheme, n_restarts=1, random_state=3).fit(cores)
    path = save_model(model, tmp_path / "model.json")
    out = tmp_path / "app"
    argv = ["appendix", str(small_source), "--model", str(path), "-o", str(out)]
    code, _, err = _run(capsys, [*argv, "--surrogates", "0", "--labels", "none", "--no-latex"])
    assert code == 0, err
    html = (out / "appendix.html").read_text(encoding="utf-8")
    # the file by name, no folder of the user's; the seed of the loaded model
    assert "Model read from model.json." in html and str(tmp_path) not in html
    assert "(seed 3)" in html and "seed None" not in html
    assert "no interpreted tracts in a column &#x27;none&#x27;" in html
    data = json.loads((out / "appendix.json").read_text(encoding="utf-8"))
    assert data["results"]["model"]["parameters"]["transmat"] == model.transmat_.tolist()
    prov = json.loads((out / "provenance.json").read_text(encoding="utf-8"))
    record = next(r for r in prov["inputs"] if r["role"] == "model")
    assert record["sha256"] == sha256_file(path)


@pytest.mark.slow
def test_demo_latex_tables_fit_the_page(tmp_path, capsys):
    """The demo's appendix.tex typesets with no table wider than the text (3 pt allowed)."""
    import shutil

    if shutil.which("pdflatex") is None:
        pytest.skip("pdflatex not installed: LaTeX compile check skipped")
    out = tmp_path / "demo"
    code, _, err = _run(
        capsys, ["demo", "-o", str(out), "--surrogates", "19", "--restarts", "1", "--latex"]
    )
    assert code == 0, err
    log = compile_latex(out)
    tex = (out / "appendix.tex").read_text(encoding="utf-8")
    assert r"\begin{tabular}" in tex
    assert table_overfulls(tex, log) == []
    assert page_count(log) > 20


def test_demo_writes_latex_only_when_asked_and_appendix_by_default():
    from faciesseq.cli import build_parser

    parser = build_parser()
    assert parser.parse_args(["demo"]).no_latex is True
    assert parser.parse_args(["demo", "--latex"]).no_latex is False
    assert parser.parse_args(["demo", "--no-latex"]).no_latex is True
    assert parser.parse_args(["appendix", "cores.csv", "-o", "a"]).no_latex is False


def test_appendix_refuses_a_model_fitted_with_another_scheme(small_source, tmp_path, capsys):
    """``--model`` with a ``--scheme`` of other ranks is a usage error before any work
    (as in ``decode``); nothing is written."""
    import yaml

    scheme = ROOT / "configs" / "scheme-shoreface.yaml"
    model = tmp_path / "model.json"
    fit = ["fit", str(small_source), "--scheme", str(scheme), "-o", str(model)]
    assert main([*fit, "--restarts", "1", "--max-iter", "5"]) == 0
    other = yaml.safe_load(scheme.read_text())
    ranks = [f["rank"] for f in other["facies"]]
    for f, r in zip(other["facies"], reversed(ranks), strict=True):
        f["rank"] = r
    reranked = tmp_path / "reranked.yaml"
    reranked.write_text(yaml.safe_dump(other))
    capsys.readouterr()
    out = tmp_path / "appendix"
    argv = ["appendix", str(small_source), "--model", str(model), "--scheme", str(reranked)]
    code, _, err = _run(capsys, [*argv, "-o", str(out), "--no-latex", "--surrogates", "0"])
    assert code == 2 and err.count("\n") == 1 and "Traceback" not in err
    assert "reranked.yaml" in err and "not the one the model was fitted with" in err
    assert not out.exists() and not any(p.name.startswith(".appendix") for p in tmp_path.iterdir())
