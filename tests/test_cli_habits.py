"""One set of habits across the commands: -o/--output, --force, permissions, help, extras."""

import argparse
import ast
import json
import os
import stat
import subprocess
import sys
import tomllib
from pathlib import Path

import pandas as pd
import pytest

from faciesseq.cli import COMMANDS, build_parser, main

ROOT = Path(__file__).resolve().parents[1]
SCHEME = ROOT / "configs" / "scheme-shoreface.yaml"
QUICK_FIT = ["--restarts", "1", "--max-iter", "5", "--calibration-folds", "0"]


@pytest.fixture(scope="module")
def source(tmp_path_factory):
    """Three demo cores (two interpreted) as one CSV."""
    cores = pd.read_csv(ROOT / "demo_cores" / "cores.csv", keep_default_na=False)
    keep = cores[cores["core"].isin(["QB-01", "QB-02", "QN-1"])]
    path = tmp_path_factory.mktemp("src") / "cores.csv"
    keep.to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def model(source, tmp_path_factory):
    path = tmp_path_factory.mktemp("model") / "model.json"
    argv = ["fit", str(source), "--scheme", str(SCHEME), *QUICK_FIT, "-o", str(path)]
    assert main(argv) == 0
    return path


@pytest.fixture
def umask_022():
    old = os.umask(0o022)
    yield 0o022
    os.umask(old)


def _run(capsys, argv):
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _siblings(folder: Path) -> list[str]:
    """Hidden temporary files or folders left beside the outputs."""
    return sorted(p.name for p in folder.iterdir() if p.name.startswith("."))


def _subcommands():
    """(name, parser) of every command and sub-action, e.g. ``scheme draft``."""
    parser = build_parser()
    found = []

    def walk(p, prefix):
        for action in p._actions:
            if isinstance(action, argparse._SubParsersAction):
                for name, sub in action.choices.items():
                    found.append((f"{prefix} {name}".strip(), sub))
                    walk(sub, f"{prefix} {name}")

    walk(parser, "")
    return found


# -- 1. -o/--output everywhere; --out kept as a hidden alias -----------------------------


WRITERS = {
    "scheme draft": ["scheme", "draft", "x.csv"],
    "markov": ["markov", "x.csv"],
    "simulate": ["simulate", "s.yaml"],
    "fit": ["fit", "x.csv"],
    "decode": ["decode", "m.json", "x.csv"],
    "validate": ["validate", "x.csv", "--labels", "tract"],
    "appendix": ["appendix", "x.csv"],
    "demo": ["demo"],
}


@pytest.mark.parametrize("name", sorted(WRITERS))
@pytest.mark.parametrize("spelling", ["-o", "--output"])
def test_every_writing_command_takes_o_and_output_and_force(name, spelling):
    args = build_parser().parse_args([*WRITERS[name], spelling, "target", "--force"])
    assert args.output == "target" and args.force is True


@pytest.mark.parametrize("name", ["markov", "demo"])
def test_old_out_still_works_but_is_hidden_and_warns(name, capsys):
    args = build_parser().parse_args([*WRITERS[name], "--out", "target"])
    assert args.output == "target"
    assert "--out is deprecated; use -o/--output" in capsys.readouterr().err
    sub = dict(_subcommands())[name]
    assert "--out " not in sub.format_help() and "--output" in sub.format_help()


def test_demo_output_default_is_faciesseq_demo():
    assert build_parser().parse_args(["demo"]).output == "faciesseq-demo"


def test_markov_out_alias_writes_the_folder(source, tmp_path, capsys):
    out = tmp_path / "res"
    code, _, err = _run(capsys, ["markov", str(source), "--max-order", "1", "--out", str(out)])
    assert code == 0 and "deprecated" in err
    assert (out / "markov.json").is_file()


# -- 2. --force to replace anything that exists --------------------------------------------


def test_fit_refuses_to_overwrite_a_model_without_force(source, tmp_path, capsys):
    target = tmp_path / "model.json"
    target.write_text("an earlier model")
    argv = ["fit", str(source), "--scheme", str(SCHEME), *QUICK_FIT, "-o", str(target)]
    code, out, err = _run(capsys, argv)
    assert code == 2 and out == ""
    assert err == (
        f"faciesseq fit: {target}: exists; pass --force to replace it, or choose another -o\n"
    )
    assert target.read_text() == "an earlier model"
    assert _siblings(tmp_path) == []
    code, _, _ = _run(capsys, [*argv, "--force"])
    assert code == 0
    assert json.loads(target.read_text())["format"] == "faciesseq-tract-model"
    assert _siblings(tmp_path) == []


def test_fit_refuses_before_reading_anything(tmp_path, capsys):
    """The output check comes first: a missing source is not even looked at."""
    target = tmp_path / "model.json"
    target.write_text("x")
    code, _, err = _run(capsys, ["fit", str(tmp_path / "missing.csv"), "-o", str(target)])
    assert code == 2 and "exists; pass --force" in err


def test_a_read_only_output_folder_is_one_line_before_any_work(
    source, tmp_path, capsys, monkeypatch
):
    """A folder the user may not write in (chmod, whatever the user running the
    tests) is refused when the command starts, as a missing folder is; before, the
    fit ran and ended in a PermissionError traceback."""
    folder = tmp_path / "shared"
    folder.mkdir()
    real = os.access
    monkeypatch.setattr(os, "access", lambda p, mode: Path(p).resolve() != folder and real(p, mode))
    monkeypatch.chdir(tmp_path)
    for argv in (
        ["fit", str(source), "--scheme", str(SCHEME), *QUICK_FIT, "-o", "shared/m.json"],
        ["markov", str(source), "-o", "shared/stats"],
        ["scheme", "draft", str(source), "-o", "shared/new/s.yaml"],
    ):
        code, out, err = _run(capsys, argv)
        assert code == 2 and out == ""
        assert err == (
            f"faciesseq {argv[0]}: {argv[-1]}: cannot write in folder 'shared' "
            "(permission denied); choose another folder\n"
        )
    assert list(folder.iterdir()) == []


@pytest.mark.parametrize("kind", ["file", "folder"])
def test_an_output_the_system_refuses_at_writing_is_one_line(
    source, model, tmp_path, capsys, monkeypatch, kind
):
    """A file system that refuses the temporary (read-only, immutable, full) where the
    folder looked writable: one line naming the folder, exit code 2, no traceback."""
    import tempfile

    def refuse(*args, **kwargs):
        raise PermissionError(1, "Operation not permitted")

    monkeypatch.setattr(tempfile, "mkstemp" if kind == "file" else "mkdtemp", refuse)
    monkeypatch.chdir(tmp_path)
    if kind == "file":
        argv = ["fit", str(source), "--scheme", str(SCHEME), *QUICK_FIT, "-o", "m.json"]
    else:
        argv = ["decode", str(model), str(source), "-o", "decoded"]
    code, _, err = _run(capsys, argv)
    assert code == 2
    assert err.endswith(
        f": {argv[-1]}: cannot write in folder '.' (operation not permitted); "
        "choose another folder\n"
    )
    assert "Traceback" not in err and list(tmp_path.iterdir()) == []


def test_decode_force_replaces_the_folder_without_stale_files(source, model, tmp_path, capsys):
    out = tmp_path / "decoded"
    argv = ["decode", str(model), str(source), "-o", str(out)]
    assert _run(capsys, argv)[0] == 0
    (out / "notes-from-last-run.txt").write_text("stale")
    before = sorted(p.name for p in out.iterdir())

    code, stdout, err = _run(capsys, [*argv, "--format", "json"])
    assert code == 2 and stdout == "" and err.count("\n") == 1
    assert str(out) in err and "--force" in err
    assert sorted(p.name for p in out.iterdir()) == before

    code, _, _ = _run(capsys, [*argv, "--format", "json", "--force"])
    assert code == 0
    names = sorted(p.name for p in out.iterdir())
    expected = ["agreement.json", "picks.json", "surfaces.json", "tops.csv", "tops.json"]
    assert names == [*expected, "tracts.json"]
    assert _siblings(tmp_path) == []


def test_decode_output_that_is_a_file_is_refused_even_with_force(source, model, tmp_path, capsys):
    out = tmp_path / "decoded"
    out.write_text("a file")
    code, _, err = _run(capsys, ["decode", str(model), str(source), "-o", str(out), "--force"])
    assert code == 2 and "is a file" in err and out.read_text() == "a file"


def test_markov_force_replaces_the_folder(source, tmp_path, capsys):
    out = tmp_path / "res"
    out.mkdir()
    (out / "old.csv").write_text("stale")
    argv = ["markov", str(source), "--max-order", "1", "-o", str(out)]
    code, _, err = _run(capsys, argv)
    assert code == 2 and "--force" in err and [p.name for p in out.iterdir()] == ["old.csv"]
    assert _run(capsys, [*argv, "--force"])[0] == 0
    assert not (out / "old.csv").exists() and (out / "markov.json").is_file()
    assert _siblings(tmp_path) == []


def test_validate_force_replaces_the_folder(source, tmp_path, capsys):
    out = tmp_path / "cv"
    out.mkdir()
    (out / "old.csv").write_text("stale")
    argv = [
        "validate",
        str(source),
        "--scheme",
        str(SCHEME),
        "--labels",
        "tract",
        "--folds",
        "2",
        *QUICK_FIT,
        "-o",
        str(out),
    ]
    code, _, err = _run(capsys, argv)
    assert code == 2 and "--force" in err and [p.name for p in out.iterdir()] == ["old.csv"]
    assert _run(capsys, [*argv, "--force"])[0] == 0
    assert not (out / "old.csv").exists() and (out / "validation.json").is_file()


def test_scheme_draft_refuses_without_force(source, tmp_path, capsys):
    out = tmp_path / "scheme.yaml"
    out.write_text("mine")
    code, _, err = _run(capsys, ["scheme", "draft", str(source), "-o", str(out)])
    assert code == 2 and err.count("\n") == 1 and str(out) in err and "--force" in err
    assert out.read_text() == "mine"


def test_demo_refuses_an_existing_folder_without_force(tmp_path, capsys):
    out = tmp_path / "faciesseq-demo"
    out.mkdir()
    (out / "notes.txt").write_text("keep")
    code, _, err = _run(capsys, ["demo", "-o", str(out)])
    assert code == 2 and err.count("\n") == 1 and "--force" in err
    assert [p.name for p in out.iterdir()] == ["notes.txt"]


def test_new_folder_leaves_the_old_one_when_the_run_fails(tmp_path):
    from faciesseq._output import new_folder

    out = tmp_path / "out"
    out.mkdir()
    (out / "kept.txt").write_text("x")
    with pytest.raises(RuntimeError), new_folder(out) as temp:
        (temp / "half.txt").write_text("half")
        raise RuntimeError("interrupted")
    assert [p.name for p in out.iterdir()] == ["kept.txt"]
    assert _siblings(tmp_path) == []


# -- 3. folders and files with the user's ordinary permissions -------------------------------


@pytest.mark.parametrize("mask", [0o022, 0o002, 0o077])
def test_markov_folder_gets_the_users_ordinary_permissions(source, tmp_path, capsys, mask):
    """Common practice: new folders are 0o777 less the umask (mkdtemp would give 0o700)."""
    old = os.umask(mask)
    try:
        out = tmp_path / "res"
        assert main(["markov", str(source), "--max-order", "1", "-o", str(out)]) == 0
    finally:
        os.umask(old)
    capsys.readouterr()
    assert stat.S_IMODE(out.stat().st_mode) == 0o777 & ~mask
    assert stat.S_IMODE((out / "markov.json").stat().st_mode) == 0o666 & ~mask


def test_decode_folder_and_model_file_permissions(source, model, tmp_path, capsys, umask_022):
    out = tmp_path / "decoded"
    assert main(["decode", str(model), str(source), "-o", str(out)]) == 0
    capsys.readouterr()
    assert stat.S_IMODE(out.stat().st_mode) == 0o755
    assert stat.S_IMODE(model.stat().st_mode) == 0o644


@pytest.mark.parametrize("name", ["t.csv", "t.tsv", "t.parquet", "t.xlsx", "t.sqlite"])
def test_written_core_tables_get_ordinary_permissions(source, tmp_path, umask_022, name):
    """The table writer's files were left with tempfile's private 0o600 (found 2026-12-03)."""
    from faciesseq.io import read_cores
    from faciesseq.io.writer import write_cores

    path = write_cores(read_cores(source), tmp_path / name)
    assert stat.S_IMODE(path.stat().st_mode) == 0o644
    assert _siblings(tmp_path) == []


def test_a_las_folder_is_not_written_over_a_file(source, tmp_path):
    from faciesseq.errors import ConfigError
    from faciesseq.io import read_cores
    from faciesseq.io.writer import write_cores

    target = tmp_path / "logs"
    target.write_text("keep")
    with pytest.raises(ConfigError, match="not a folder"):
        write_cores(read_cores(source), target, format="las", step=0.5)
    assert target.read_text() == "keep" and _siblings(tmp_path) == []


def test_write_file_is_atomic_and_ordinary(tmp_path, umask_022):
    from faciesseq._output import write_file

    path = write_file(tmp_path / "a.txt", "one")
    write_file(path, b"two")
    assert path.read_text() == "two" and stat.S_IMODE(path.stat().st_mode) == 0o644
    assert _siblings(tmp_path) == []


def test_figures_get_the_users_ordinary_permissions(tmp_path, umask_022):
    """A figure written through a temporary file (mkstemp: 0o600) ends as 0o666 less the umask."""
    from faciesseq.report.style import new_figure, save_figure

    fig = new_figure(2, 2)
    fig.add_subplot().plot([0, 1])
    path = save_figure(fig, tmp_path / "f.png")
    assert stat.S_IMODE(path.stat().st_mode) == 0o644
    assert _siblings(tmp_path) == []


def test_appendix_folder_permissions_follow_the_umask(tmp_path):
    """write_appendix used to give 0o755 whatever the umask."""
    from faciesseq._output import new_folder

    old = os.umask(0o002)
    try:
        with new_folder(tmp_path / "a") as temp:
            (temp / "f").write_text("x")
    finally:
        os.umask(old)
    assert stat.S_IMODE((tmp_path / "a").stat().st_mode) == 0o775


# -- 4. help: examples and defaults ---------------------------------------------------------


def _meaningful(default) -> bool:
    return not (
        default is None or default is False or default == [] or default == argparse.SUPPRESS
    )


@pytest.mark.parametrize("name", [n for n, _ in _subcommands()])
def test_every_help_has_examples_and_states_every_default(name):
    parser = dict(_subcommands())[name]
    text = parser.format_help()
    assert "examples:" in text.lower() and f"faciesseq {name} " in text.split("examples:")[1]
    formatter = parser._get_formatter()
    for action in parser._actions:
        if action.help == argparse.SUPPRESS or not _meaningful(action.default):
            continue
        rendered = formatter._format_action(action)
        assert "default" in rendered, (name, action.option_strings)


def test_every_command_is_covered_by_the_help_test():
    names = {n.split()[0] for n, _ in _subcommands()}
    assert names == set(COMMANDS)


def test_defaults_are_stated_once():
    for name, parser in _subcommands():
        formatter = parser._get_formatter()
        for action in parser._actions:
            rendered = formatter._format_action(action)
            assert rendered.count("default") <= 1 or "default:" not in rendered, (name, rendered)


# -- 5. a missing file named by an option: as a missing SOURCE -----------------------------


def test_missing_source_gives_exit_1_and_file_not_found(tmp_path, capsys):
    missing = tmp_path / "nope.csv"
    code, _, err = _run(capsys, ["check", str(missing)])
    assert code == 1 and err == f"faciesseq check: {missing}: file or folder not found\n"


@pytest.mark.parametrize(
    ("argv", "missing"),
    [
        (["check", "{src}", "--scheme", "{miss}"], "scheme.yaml"),
        (["markov", "{src}", "--scheme", "{miss}"], "scheme.yaml"),
        (["fit", "{src}", "--tracts", "{miss}", "-o", "{out}/m.json"], "tracts.yaml"),
        (["validate", "{src}", "--labels", "tract", "--tracts", "{miss}"], "tracts.yaml"),
        (["decode", "{miss}", "{src}", "-o", "{out}/d"], "model.json"),
        (["appendix", "{src}", "--scheme", "{scheme}", "--model", "{miss}", "-o", "{out}/a"], "m"),
        (["appendix", "{src}", "--scheme", "{scheme}", "--tracts", "{miss}", "-o", "{out}/a"], "t"),
        (["simulate", "{miss}", "-o", "{out}/s"], "scenario.yaml"),
        (["scheme", "show", "{miss}"], "scheme.yaml"),
    ],
)
def test_a_missing_file_named_by_an_option_is_reported_like_a_missing_source(
    argv, missing, source, tmp_path, capsys
):
    miss = tmp_path / "absent" / missing
    values = {"src": source, "miss": miss, "out": tmp_path, "scheme": SCHEME}
    code, out, err = _run(capsys, [a.format(**values) for a in argv])
    command = argv[0]
    assert code == 1 and out == ""
    assert err == f"faciesseq {command}: {miss}: file not found\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == []


def test_a_folder_given_as_a_scheme_file_is_one_line(source, tmp_path, capsys):
    code, _, err = _run(capsys, ["check", str(source), "--scheme", str(tmp_path)])
    assert code == 1 and err == f"faciesseq check: {tmp_path}: is a folder, not a file\n"


# -- 6. dependencies: optional readers as extras ---------------------------------------------


def _project():
    return tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]


def _names(requirements):
    import re

    return {re.split(r"[<>=!~\[ ;]", r, maxsplit=1)[0].lower() for r in requirements}


def test_heavy_readers_are_extras_and_the_test_extra_has_them_all():
    project = _project()
    core = _names(project["dependencies"])
    extras = project["optional-dependencies"]
    assert not core & {"hmmlearn", "sqlalchemy", "psycopg2-binary", "openpyxl", "lasio"}
    assert {"pandas", "pyarrow"} <= core  # CSV and Parquet with a plain install
    assert _names(extras["sql"]) == {"sqlalchemy", "psycopg2-binary"}
    assert _names(extras["excel"]) == {"openpyxl"}
    assert _names(extras["las"]) == {"lasio"}
    assert "hmmlearn" in _names(extras["test"])
    assert "faciesseq[sql,excel,las]" in extras["test"]
    assert not core & {"dask", "distributed"} and "faciesseq[dask]" in extras["test"]


def test_the_package_never_imports_hmmlearn():
    for path in (ROOT / "faciesseq").rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [node.module or ""]
            else:
                continue
            assert not any(n.split(".")[0] == "hmmlearn" for n in names), path


@pytest.mark.parametrize(
    ("module", "extra", "suffix"),
    [("openpyxl", "excel", ".xlsx"), ("lasio", "las", ".las")],
)
def test_a_missing_optional_package_names_its_extra(
    module, extra, suffix, tmp_path, capsys, monkeypatch
):
    path = tmp_path / f"cores{suffix}"
    path.write_bytes(b"whatever")
    monkeypatch.setitem(sys.modules, module, None)  # import fails as if not installed
    code, out, err = _run(capsys, ["check", str(path)])
    assert code == 2 and out == "" and err.count("\n") == 1
    assert f'pip install "faciesseq[{extra}]"' in err and module in err


def test_a_broken_sqlite_file_without_sqlalchemy_is_a_data_error(tmp_path, capsys, monkeypatch):
    """SQLite is read by Python's own sqlite3: a bad file is the data's fault (exit 1)."""
    path = tmp_path / "cores.sqlite"
    path.write_bytes(b"whatever")
    monkeypatch.setitem(sys.modules, "sqlalchemy", None)
    code, out, err = _run(capsys, ["check", str(path)])
    assert code == 1 and out == "" and err.count("\n") == 1
    assert "database error: file is not a database" in err and "faciesseq[sql]" not in err


def test_a_sqlite_file_is_read_without_sqlalchemy_as_sqlalchemy_reads_it(source, tmp_path):
    """The base install reads the SQLite it writes (file, sqlite:/// URL, --table,
    --query) without importing SQLAlchemy, into the table SQLAlchemy gives."""
    from sqlalchemy import create_engine, text

    from faciesseq.io import read_cores, write_cores

    db = tmp_path / "cores.sqlite"
    write_cores(read_cores(source), db, tables={"truth": pd.DataFrame({"core": ["QB-01"]})})
    engine = create_engine(f"sqlite:///{db}")
    with engine.connect() as conn:
        expected = pd.read_sql_query(text("SELECT * FROM intervals"), conn).astype(object)
    engine.dispose()
    got = tmp_path / "got.pkl"
    script = (
        BLOCKER
        + f"""
from faciesseq.io.sql import read_sql
db, url = {str(db)!r}, {"sqlite:///" + str(db)!r}
assert main(["check", db]) == 0
assert main(["check", url, "--table", "intervals"]) == 0
assert main(["check", db, "--query", "SELECT * FROM intervals WHERE core = 'QB-01'"]) == 0
assert main(["check", db, "--query", "DELETE FROM intervals"]) == 2
read_sql(db).frame.to_pickle({str(got)!r})
assert read_sql(url).frame.equals(read_sql(db).frame)
assert not [m for m in sys.modules if m.split(".")[0] in BLOCKED]
"""
    )
    env = {**os.environ, "PYTHONPATH": str(ROOT), "MPLBACKEND": "Agg"}
    done = subprocess.run(
        [sys.executable, "-c", script], env=env, capture_output=True, text=True, timeout=600
    )
    assert done.returncode == 0, done.stderr[-2000:]
    assert "--query must be a read-only SELECT statement" in done.stderr
    pd.testing.assert_frame_equal(pd.read_pickle(got), expected)


def test_a_database_url_without_sqlalchemy_names_the_sql_extra(capsys, monkeypatch):
    monkeypatch.setitem(sys.modules, "sqlalchemy", None)
    code, _, err = _run(capsys, ["check", "postgresql://geo@localhost/cores"])
    assert code == 2 and 'pip install "faciesseq[sql]"' in err and err.count("\n") == 1


BLOCKER = """
import sys
BLOCKED = ("hmmlearn", "sqlalchemy", "psycopg2", "psycopg", "openpyxl", "lasio")
class Block:
    def find_spec(self, name, path=None, target=None):
        if name.split(".")[0] in BLOCKED:
            raise ModuleNotFoundError(f"No module named {name!r}", name=name)
sys.meta_path.insert(0, Block())
from faciesseq.cli import main
"""


def test_a_plain_install_reads_csv_and_parquet_and_simulates(source, tmp_path):
    """Without any extra: check, markov, fit, decode and simulate (SQLite by the stdlib)."""
    pd.read_csv(source, keep_default_na=False).to_parquet(tmp_path / "cores.parquet")
    scenario = tmp_path / "small.yaml"
    import yaml

    data = yaml.safe_load((ROOT / "configs" / "scenario-ramp.yaml").read_text())
    data["time"] = {"duration_kyr": 100, "step_kyr": 2}
    data["profile"]["cell_km"] = 1.0
    data["facies"]["scheme"] = str(SCHEME)
    data["wells"] = data["wells"][2:4]
    scenario.write_text(yaml.safe_dump(data, sort_keys=False))
    script = (
        BLOCKER
        + f"""
src, pq, out = {str(source)!r}, {str(tmp_path / "cores.parquet")!r}, {str(tmp_path)!r}
assert main(["check", src]) == 0
assert main(["check", pq]) == 0
assert main(["markov", src, "--max-order", "1"]) == 0
assert main(["fit", src, "--scheme", {str(SCHEME)!r}, *{QUICK_FIT!r}, "-o", out + "/m.json"]) == 0
assert main(["decode", out + "/m.json", pq, "-o", out + "/d"]) == 0
assert main(["simulate", {str(scenario)!r}, "--no-figures", "-o", out + "/sim"]) == 0
assert not [m for m in sys.modules if m.split(".")[0] in BLOCKED]
"""
    )
    env = {**os.environ, "PYTHONPATH": str(ROOT), "MPLBACKEND": "Agg"}
    done = subprocess.run(
        [sys.executable, "-c", script], env=env, capture_output=True, text=True, timeout=1200
    )
    assert done.returncode == 0, done.stderr[-2000:]
    import sqlite3

    with sqlite3.connect(tmp_path / "sim" / "cores.sqlite") as con:
        n = con.execute("select count(*) from intervals").fetchone()[0]
    con.close()
    assert n == len(pd.read_csv(tmp_path / "sim" / "cores.csv"))


@pytest.mark.slow
def test_the_demo_runs_on_a_plain_install(tmp_path):
    script = (
        BLOCKER
        + f"""
assert main(["demo", "--no-latex", "-o", {str(tmp_path / "demo")!r}]) == 0
"""
    )
    env = {**os.environ, "PYTHONPATH": str(ROOT), "MPLBACKEND": "Agg"}
    done = subprocess.run(
        [sys.executable, "-c", script], env=env, capture_output=True, text=True, timeout=600
    )
    assert done.returncode == 0, done.stderr[-2000:]
    assert (tmp_path / "demo" / "appendix.html").is_file()


# ---------------------------------------------------------------- usage errors in one line


@pytest.mark.parametrize(
    "argv, expected",
    [
        (
            ["markov", "cores.csv", "--format", "xlsx"],
            "faciesseq markov: --format: 'xlsx' is not one of text, json, csv "
            "(see faciesseq markov --help)",
        ),
        (
            ["check", "cores.csv", "--units", "metres"],
            "faciesseq check: --units: 'metres' is not one of m, ft (see faciesseq check --help)",
        ),
        (
            ["markov", "cores.csv", "--unit", "bed"],
            "faciesseq markov: --unit: 'bed' is not one of beds, grid "
            "(see faciesseq markov --help)",
        ),
        (
            # options are given whole: decode has --units, not --unit (fit has both)
            ["decode", "m.json", "cores.csv", "-o", "out", "--unit", "bed"],
            "faciesseq decode: unrecognized arguments: --unit bed (see faciesseq decode --help)",
        ),
        (
            ["check", "cores.csv", "--no-such-option"],
            "faciesseq check: unrecognized arguments: --no-such-option "
            "(see faciesseq check --help)",
        ),
        (
            ["scheme", "draft", "cores.csv"],
            "faciesseq scheme draft: the following arguments are required: -o/--output "
            "(see faciesseq scheme draft --help)",
        ),
    ],
)
def test_a_usage_error_is_one_line_naming_the_command_and_option(argv, expected, capsys):
    with pytest.raises(SystemExit) as exc:
        main(argv)
    captured = capsys.readouterr()
    assert exc.value.code == 2
    assert captured.err == expected + "\n" and captured.out == ""


def test_fit_refuses_an_unknown_feature_before_any_work(source, tmp_path, capsys):
    out = tmp_path / "model.json"
    code, stdout, err = _run(
        capsys, ["fit", str(source), "--features", "facies,foo", "-o", str(out)]
    )
    assert code == 2 and stdout == ""
    assert err.count("\n") == 1 and err.startswith("faciesseq fit: --features: feature 'foo' ")
    assert "rank_step" in err and "stacking" in err  # the names a user can give
    for internal in ("n_intervals", "segment", "'top'"):
        assert internal not in err
    assert not out.exists()
