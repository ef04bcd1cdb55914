"""The minimal bed table ``core, top, base, facies[, tract]`` fits and decodes in every mode.

A bed table without contact types, grain sizes or any other attribute is the most
common input there is (common practice: many core descriptions record only the
facies). With scikit-learn >= 1.9 an all-empty column of the stacking window
reached the boosted trees and a labelled fit died with a traceback.
"""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from faciesseq.cli import main

ROOT = Path(__file__).resolve().parents[1]
SCHEME = str(ROOT / "configs" / "scheme-shoreface.yaml")
DEMO = ROOT / "demo_cores" / "cores.csv"


def _table(tmp_path: Path, columns: list[str], labelled_cores: int | None) -> Path:
    t = pd.read_csv(DEMO)
    t = t[t["core"].isin(sorted(t["core"].unique())[:10])]
    if labelled_cores is not None:
        keep = sorted(t["core"].unique())[:labelled_cores]
        t["tract"] = t["true_tract"].where(t["core"].isin(keep))
    out = tmp_path / "beds.csv"
    t[columns].to_csv(out, index=False)
    return out


@pytest.mark.parametrize(
    ("extra", "labelled"),
    [
        ([], None),  # unsupervised, no attribute at all
        (["tract"], 10),  # supervised
        (["tract"], 3),  # semi-supervised
        (["tract", "contact"], 10),
        (["tract", "grain_size"], 3),
        (["contact", "grain_size"], None),
    ],
)
def test_minimal_table_fits_and_decodes(tmp_path, capsys, extra, labelled):
    source = _table(tmp_path, ["core", "top", "base", "facies", *extra], labelled)
    model = tmp_path / "model.json"
    args = ["fit", str(source), "--scheme", SCHEME, "-o", str(model), "--restarts", "1"]
    if labelled is not None:
        args += ["--labels", "tract"]
    assert main(args) == 0, capsys.readouterr().err
    # without labels, a source without contact types is told what it misses, and every
    # fit without labels that its tract names rest on the priors
    printed = capsys.readouterr().out
    no_contacts = "no contact types" in printed
    assert no_contacts == (labelled is None and "contact" not in extra)
    assert ("no bed was labelled" in printed) == (labelled is None)
    # the per-well mean probability of a fit without labels is said to be no accuracy
    assert ("not a measured accuracy" in printed) == (labelled is None)
    out = tmp_path / "decoded"
    assert main(["decode", str(model), str(source), "-o", str(out)]) == 0
    # the model file keeps the fit's cautions, and decode repeats them
    recorded = json.loads(model.read_text())["training"]["cautions"]
    assert any("no contact types" in c for c in recorded) == no_contacts
    printed = capsys.readouterr().out
    assert ("no contact types" in printed) == no_contacts
    assert ("no bed was labelled" in printed) == (labelled is None)
    assert ("not a measured accuracy" in printed) == (labelled is None)
    tracts = pd.read_csv(out / "tracts.csv", comment="#")
    assert len(tracts) > 0
    assert tracts["tract"].isin(["HST", "FSST", "LST", "TST"]).all()
    # a fit with labels reads the described intervals, one without the beds (runs of
    # one facies, which the demo's cores hold)
    unit = json.loads(model.read_text())["hyperparameters"]["unit"]
    rows = len(pd.read_csv(source))
    if labelled is None:
        assert unit == "beds" and len(tracts) < rows
    else:
        assert unit == "intervals" and len(tracts) == rows


def test_the_unit_asked_for_is_the_unit_fitted(tmp_path, capsys):
    source = _table(tmp_path, ["core", "top", "base", "facies", "tract"], 10)
    model = tmp_path / "model.json"
    args = ["fit", str(source), "--scheme", SCHEME, "--labels", "tract", "--restarts", "1"]
    assert main([*args, "--unit", "beds", "-o", str(model)]) == 0, capsys.readouterr().err
    assert json.loads(model.read_text())["hyperparameters"]["unit"] == "beds"
    assert main([*args, "--unit", "intervals", "--step", "0.5", "-o", str(model), "--force"]) == 2
    assert "--step is only used with --unit grid" in capsys.readouterr().err


def test_labels_that_leave_tracts_out_are_cautioned(tmp_path, capsys):
    # labels of one tract teach the stacking trees that tract alone: the fit then reads
    # every bed as it, surely, so it says which tracts had no labelled bed
    source = _table(tmp_path, ["core", "top", "base", "facies", "tract"], 10)
    beds = pd.read_csv(source)
    assert set(beds["tract"].dropna()) == {"HST", "FSST", "LST", "TST"}
    model = tmp_path / "model.json"
    args = ["fit", str(source), "--scheme", SCHEME, "--labels", "tract", "--restarts", "1"]
    assert main([*args, "-o", str(model)]) == 0
    assert "no bed is labelled" not in capsys.readouterr().out
    beds.assign(tract=beds["tract"].where(beds["tract"] == "TST")).to_csv(source, index=False)
    assert main([*args, "-o", str(model), "--force"]) == 0
    printed = capsys.readouterr().out
    assert "no bed is labelled HST or FSST or LST (labelled beds: TST " in printed
    recorded = json.loads(model.read_text())["training"]["cautions"]
    assert any("no bed is labelled HST or FSST or LST" in c for c in recorded)


def test_a_scheme_of_tied_ranks_is_cautioned(tmp_path, capsys):
    # one rank for every facies: no bed deeper than another, nothing to name tracts by
    import re

    tied = tmp_path / "tied.yaml"
    text = (ROOT / "configs" / "scheme-shoreface.yaml").read_text()
    tied.write_text(re.sub(r"rank: \d+", "rank: 2", text))
    source = _table(tmp_path, ["core", "top", "base", "facies"], None)
    for scheme, cautioned in ((SCHEME, False), (str(tied), True)):
        args = ["fit", str(source), "--scheme", scheme, "--restarts", "1", "--force"]
        assert main([*args, "-o", str(tmp_path / "model.json")]) == 0
        printed = capsys.readouterr().out
        assert ("the scheme gives every facies the same rank" in printed) == cautioned


def test_an_output_never_replaces_what_the_command_reads(tmp_path, capsys):
    # `--force` replaces an earlier output, never the source: a model written over
    # the table it was fitted on, or a decode folder swapped in over a folder holding
    # its source, would lose the data
    source = _table(tmp_path, ["core", "top", "base", "facies"], None)
    before = source.read_bytes()
    args = ["fit", str(source), "--scheme", SCHEME, "--restarts", "1", "--force"]
    assert main([*args, "-o", str(source)]) == 2
    assert "which this command reads" in capsys.readouterr().err
    assert source.read_bytes() == before
    model = tmp_path / "model.json"
    assert main([*args, "-o", str(model)]) == 0
    capsys.readouterr()
    assert main(["decode", str(model), str(source), "-o", str(tmp_path), "--force"]) == 2
    assert f"holds {source}" in capsys.readouterr().err
    assert source.read_bytes() == before
    assert main(["fit", str(source), "--scheme", SCHEME, "-o", SCHEME, "--force"]) == 2


def test_decode_scores_only_labels_that_are_tracts_of_the_model(tmp_path, capsys):
    # a fit reads labels whatever their case and refuses other names; the agreement
    # decode prints reads them the same way, leaving out (and naming) the others
    source = _table(tmp_path, ["core", "top", "base", "facies", "tract"], 10)
    model = tmp_path / "model.json"
    fit = ["fit", str(source), "--scheme", SCHEME, "--labels", "tract", "--restarts", "1"]
    assert main([*fit, "-o", str(model)]) == 0
    capsys.readouterr()

    def agreement(table: pd.DataFrame) -> str:
        table.to_csv(tmp_path / "new.csv", index=False)
        out = tmp_path / "decoded"
        argv = ["decode", str(model), str(tmp_path / "new.csv"), "-o", str(out), "--force"]
        assert main(argv) == 0
        printed = capsys.readouterr()
        line = [ln for ln in printed.out.splitlines() if ln.startswith("agreement")]
        return line[0] + "\n" + printed.err

    def scored(text: str) -> int:  # "... % of N labelled beds ..."
        return int(text.split(" labelled beds")[0].split()[-1])

    beds = pd.read_csv(source)
    as_given = agreement(beds)
    lower = agreement(beds.assign(tract=beds["tract"].str.lower()))
    assert as_given.split("\n")[0] == lower.split("\n")[0]
    odd = agreement(beds.assign(tract=beds["tract"].where(beds.index % 2 == 0, "RST")))
    assert "not tracts of the model (RST): left out of the agreement" in odd
    assert "not tracts of the model" not in as_given
    assert 0 < scored(odd) < scored(as_given)


TWO_TRACTS = """\
name: transgressive-regressive cycle
tracts:
  - {code: RST, name: regressive systems tract, trend: shallowing}
  - {code: TST, name: transgressive systems tract, trend: deepening}
order: [RST, TST]
surfaces:
  - {lower: RST, upper: TST, code: MRS, name: maximum regressive surface}
  - {lower: TST, upper: RST, code: MFS, name: maximum flooding surface}
"""


def test_a_tract_model_of_its_own_is_not_given_the_default_models_numbers(tmp_path, capsys):
    # the transgressive-regressive cycle of two tracts (Embry & Johannessen 1992, T-R
    # sequence stratigraphy): the accuracies measured without labels are of the
    # four-tract model, and a model without a falling stage has no sharp base to miss
    source = _table(tmp_path, ["core", "top", "base", "facies"], None)
    tracts = tmp_path / "tracts-tr.yaml"
    tracts.write_text(TWO_TRACTS)
    model = tmp_path / "model.json"
    args = ["fit", str(source), "--scheme", SCHEME, "--tracts", str(tracts), "-o", str(model)]
    assert main([*args, "--restarts", "1"]) == 0, capsys.readouterr().err
    printed = capsys.readouterr().out
    assert "no bed was labelled" in printed
    assert "RST -> TST) was not measured" in printed and "0.33-0.43" not in printed
    assert "no contact types" not in printed
    out = tmp_path / "decoded"
    assert main(["decode", str(model), str(source), "-o", str(out)]) == 0
    decoded = pd.read_csv(out / "tracts.csv", comment="#")
    assert set(decoded["tract"]) <= {"RST", "TST"}
    assert {"p_RST", "p_TST"} <= set(decoded.columns)


def test_a_labels_column_named_in_another_case_is_suggested(tmp_path, capsys):
    source = _table(tmp_path, ["core", "top", "base", "facies", "tract"], 3)
    args = ["fit", str(source), "--scheme", SCHEME, "-o", str(tmp_path / "m.json")]
    assert main([*args, "--labels", "Tract"]) == 2
    err = capsys.readouterr().err
    assert "no column 'Tract' for --labels" in err and "did you mean --labels tract?" in err
    assert not (tmp_path / "m.json").exists()
