"""Decode names the cores more landward or basinward than every labelled core.

A fit with labels records the range of its labelled cores' mean facies rank
(weighted by thickness); decode names the cores whose mean rank lies outside it. The
forward model's cores outside that range read the tracts worse (balanced accuracy
0.27-0.64 against 0.57-0.77 within it, benchmarks/tract_model.md, "Cores outside the
labelled cores' facies range"), so the line is the measured warning, checked here by
hand-computed ranges.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import yaml

from faciesseq.cli import main
from faciesseq.core import CoreSet
from faciesseq.errors import ModelFileError
from faciesseq.hmm.modelfile import load_model
from faciesseq.novelty import labelled_rank_range

#: landward (rank 0) to basinward (rank 4)
FACIES = ["coastal plain", "foreshore", "upper shoreface", "lower shoreface", "offshore"]
ORDER = ["HST", "FSST", "LST", "TST"]


def _core(name: str, rng, deepest: int, shallowest: int, n: int = 60) -> list[tuple]:
    """Shallowing-upward cycles from rank ``deepest`` up to rank ``shallowest`` or one
    less, base to top, with tracts in cyclic order every 12 beds."""
    ranks: list[int] = []
    while len(ranks) < n:
        top = shallowest + int(rng.integers(0, 2))
        ranks += list(range(deepest, top - 1, -1))
    rows, base = [], 500.0
    for k, r in enumerate(ranks[:n]):
        th = float(rng.uniform(0.4, 1.2))
        rows.append((name, base - th, base, FACIES[r], ORDER[(k // 12) % 4]))
        base -= th
    return rows


def _table(rng, spec) -> pd.DataFrame:
    rows = [row for name, deep, shallow in spec for row in _core(name, rng, deep, shallow)]
    return pd.DataFrame(rows, columns=["core", "top", "base", "facies", "tract"])


@pytest.fixture
def files(tmp_path):
    rng = np.random.default_rng(3)
    train = _table(rng, [("W1", 3, 1), ("W2", 3, 0), ("W3", 3, 1), ("W4", 4, 1)])
    train.loc[train["core"] == "W4", "tract"] = None  # three labelled cores
    near = train[train["core"] == "W1"].assign(core="near")  # a labelled core's beds
    distal = _table(rng, [("distal", 4, 3)])
    decode = pd.concat([near, distal], ignore_index=True).drop(columns="tract")
    scheme = {
        "name": "invented",
        "facies": [{"code": c, "name": c, "rank": i} for i, c in enumerate(FACIES)],
    }
    paths = {k: tmp_path / f"{k}.csv" for k in ("train", "decode")}
    train.to_csv(paths["train"], index=False)
    decode.to_csv(paths["decode"], index=False)
    (tmp_path / "scheme.yaml").write_text(yaml.safe_dump(scheme))
    return train, paths, tmp_path / "scheme.yaml"


def _mean_rank(t: pd.DataFrame) -> pd.Series:
    r = t["facies"].map({c: i for i, c in enumerate(FACIES)})
    w = t["base"] - t["top"]
    return (r * w).groupby(t["core"]).sum() / w.groupby(t["core"]).sum()


def test_the_range_is_the_labelled_cores_mean_ranks(files):
    train, _, _ = files

    class _Model:
        facies_ = tuple(FACIES)
        ranks_ = np.arange(5, dtype=float)

    table = CoreSet.from_frame(train, units="m").succession_table("intervals")
    got = labelled_rank_range(table, _Model(), "tract")["labelled_mean_rank"]
    expected = _mean_rank(train[train["core"].isin(["W1", "W2", "W3"])])
    assert got == pytest.approx([expected.min(), expected.max()])
    assert labelled_rank_range(table, _Model(), None) == {}
    # two labelled cores make a range of two values, where the rule was not measured
    two = train.assign(tract=train["tract"].where(train["core"] != "W3"))
    table = CoreSet.from_frame(two, units="m").succession_table("intervals")
    assert labelled_rank_range(table, _Model(), "tract") == {}


def test_decode_names_the_cores_outside_the_range(files, tmp_path, capsys):
    _, paths, scheme = files
    model = tmp_path / "m.json"
    fit = ["fit", str(paths["train"]), "--scheme", str(scheme), "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "--calibration-folds", "0", "-o", str(model)]) == 0
    lo, hi = json.loads(model.read_text())["training"]["labelled_mean_rank"]
    capsys.readouterr()
    out = tmp_path / "out"
    assert main(["decode", str(model), str(paths["decode"]), "-o", str(out)]) == 0
    lines = [x for x in capsys.readouterr().err.splitlines() if "outside the facies range" in x]
    distal = _mean_rank(pd.read_csv(paths["decode"]))
    assert distal["distal"] > hi and lo <= distal["near"] <= hi  # as the table was made
    assert len(lines) == 1
    said = "1 of 2 core(s) lie outside the facies range of the labelled cores"
    assert f"{said} (mean facies rank {lo:.2f}-{hi:.2f}" in lines[0]
    assert f"distal ({distal['distal']:.2f})" in lines[0] and "near (" not in lines[0]


def test_a_model_file_with_a_reversed_range_is_refused(files, tmp_path):
    _, paths, scheme = files
    model = tmp_path / "m.json"
    fit = ["fit", str(paths["train"]), "--scheme", str(scheme), "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "--calibration-folds", "0", "-o", str(model)]) == 0
    doc = json.loads(model.read_text())
    lo, hi = doc["training"]["labelled_mean_rank"]
    doc["training"]["labelled_mean_rank"] = [hi + 1, lo]
    model.write_text(json.dumps(doc))
    with pytest.raises(ModelFileError, match="labelled_mean_rank"):
        load_model(model)
    del doc["training"]["labelled_mean_rank"]  # files written before: load, say nothing
    model.write_text(json.dumps(doc))
    assert "labelled_mean_rank" not in load_model(model).training_
