"""The simulate command, its output folder and the committed demo database."""

from __future__ import annotations

import itertools
import sqlite3
from pathlib import Path

import pandas as pd
import pytest
import yaml

from faciesseq.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_cores"
TABLES = ("cores", "surfaces", "steps", "wells", "budget")


def _small_scenario(tmp_path: Path) -> Path:
    data = yaml.safe_load((ROOT / "configs" / "scenario-ramp.yaml").read_text())
    data["time"] = {"duration_kyr": 100, "step_kyr": 2}
    data["profile"]["cell_km"] = 1.0
    data["facies"]["scheme"] = str(ROOT / "configs" / "scheme-shoreface.yaml")
    data["wells"] = data["wells"][2:5]
    path = tmp_path / "small.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return path


def test_demo_database_regenerates_bit_for_bit(tmp_path):
    out = tmp_path / "demo"
    assert (
        main(
            [
                "simulate",
                str(ROOT / "configs" / "demo-quillerby.yaml"),
                "-o",
                str(out),
                "--no-figures",
            ]
        )
        == 0
    )
    for name in (*TABLES, "summary"):
        suffix = ".json" if name == "summary" else ".csv"
        assert (out / f"{name}{suffix}").read_bytes() == (DEMO / f"{name}{suffix}").read_bytes(), (
            name
        )


def test_demo_database_matches_the_issue():
    cores = pd.read_csv(DEMO / "cores.csv")
    wells = pd.read_csv(DEMO / "wells.csv")
    steps = pd.read_csv(DEMO / "steps.csv")
    assert 10 <= (wells["section"] == "central").sum() <= 14
    assert (wells["section"] != "central").sum() >= 3
    assert 2000 <= len(cores) <= 6000
    # three to five depositional sequences: sequence boundaries per section
    for section, part in steps.groupby("section"):
        tracts = part["tract"].tolist()
        starts = sum(1 for a, b in itertools.pairwise(tracts) if b == "LST" and a != "LST")
        assert 3 <= starts <= 5, section
    # the southern section subsides fast landward: no forced regression there
    assert "FSST" not in set(steps.loc[steps["section"] == "south", "tract"])
    assert "FSST" in set(steps.loc[steps["section"] == "central", "tract"])
    labelled = cores.groupby("core")["tract"].apply(lambda s: s.notna().all())
    assert labelled.any() and (~labelled).any()
    # the SQLite file holds the same tables
    with sqlite3.connect(DEMO / "cores.sqlite") as con:
        for name in TABLES:
            table = pd.read_sql(f"select * from {'intervals' if name == 'cores' else name}", con)
            pd.testing.assert_frame_equal(
                table, pd.read_csv(DEMO / f"{name}.csv"), check_dtype=False
            )
    con.close()


def test_demo_database_reads_back_through_the_io_reader():
    from faciesseq.io import read_cores

    for source in (DEMO / "cores.csv", DEMO / "cores.sqlite"):
        cores = read_cores(source, scheme=str(ROOT / "configs" / "scheme-shoreface.yaml"))
        assert cores.errors == []
        assert {p.kind for p in cores.problems} <= {"gap"}
        assert len(cores) == 17 and sum(len(c) for c in cores) == len(
            pd.read_csv(DEMO / "cores.csv")
        )
        assert {"contact", "grain_size", "tract", "true_tract"} <= set(cores["QB-05"].attributes)


def test_simulate_writes_tables_and_figures(tmp_path, capsys):
    out = tmp_path / "run"
    assert main(["simulate", str(_small_scenario(tmp_path)), "-o", str(out), "--seed", "5"]) == 0
    names = {p.name for p in out.iterdir()}
    assert {
        "cores.csv",
        "surfaces.csv",
        "steps.csv",
        "cores.sqlite",
        "summary.json",
        "section-dip.png",
        "base-level-dip.png",
        "cores-dip.png",
        "scenario.yaml",
    } <= names
    assert (out / "section-dip.png").read_bytes()[:4] == b"\x89PNG"
    assert "3 cores" in capsys.readouterr().out
    cores = pd.read_csv(out / "cores.csv")
    assert list(cores.columns[:7]) == [
        "core",
        "top",
        "base",
        "facies",
        "contact",
        "grain_size",
        "tract",
    ]
    assert (cores["top"] < cores["base"]).all()


def test_existing_output_needs_force(tmp_path, capsys):
    scenario = str(_small_scenario(tmp_path))
    out = tmp_path / "run"
    out.mkdir()
    (out / "keep.txt").write_text("x")
    assert main(["simulate", scenario, "-o", str(out), "--no-figures"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "--force" in err
    assert (out / "keep.txt").exists()
    (out / "cores.csv").write_text("stale")
    assert main(["simulate", scenario, "-o", str(out), "--no-figures", "--force"]) == 0
    assert (out / "keep.txt").read_text() == "x"  # files the run does not write are kept
    assert (out / "cores.csv").read_text().startswith("core,top,base")
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


@pytest.mark.parametrize(
    ("text", "needle"),
    [
        ("name: x\n", "time"),
        ("time: [1, 2\n", "not valid YAML"),
    ],
)
def test_bad_scenario_is_one_line_and_writes_nothing(tmp_path, capsys, text, needle):
    path = tmp_path / "bad.yaml"
    path.write_text(text)
    out = tmp_path / "run"
    assert main(["simulate", str(path), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and needle in err and "bad.yaml" in err
    assert "Traceback" not in err
    assert not out.exists()
