"""A fit whose labels lie on one or two cores says so, and that its probabilities
were not checked where they could not be.

The accuracy with labels was measured with three labelled cores spread over the
sites (README, "What has been measured"); one core's stacking is one site's, which
other sites express differently (benchmarks/tract_model.md, "Where three labelled
cores leave the model unsure"). Calibration needs labels on two cores
(faciesseq.hmm.calibration), so a fit labelled on one core printed mean
probabilities of 0.92-0.99 with no word that nobody checked them.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from faciesseq.cli import main

ROOT = Path(__file__).resolve().parents[1]
SCHEME = str(ROOT / "configs" / "scheme-shoreface.yaml")
DEMO = ROOT / "demo_cores" / "cores.csv"


def _labelled_on(tmp_path: Path, n: int) -> Path:
    t = pd.read_csv(DEMO)
    t = t[t["core"].isin(sorted(t["core"].unique())[:8])]
    keep = sorted(t["core"].unique())[:n]
    t["tract"] = t["true_tract"].where(t["core"].isin(keep))
    out = tmp_path / "beds.csv"
    t[["core", "top", "base", "facies", "tract"]].to_csv(out, index=False)
    return out


@pytest.mark.parametrize(("n", "cautioned", "noted"), [(1, True, True), (3, False, False)])
def test_labels_on_fewer_than_three_cores_are_cautioned(tmp_path, capsys, n, cautioned, noted):
    source = _labelled_on(tmp_path, n)
    model = tmp_path / "model.json"
    args = ["fit", str(source), "--scheme", SCHEME, "--labels", "tract", "-o", str(model)]
    assert main([*args, "--restarts", "1"]) == 0, capsys.readouterr().err
    printed = capsys.readouterr().out
    assert ("caution: labels on 1 core(s) only" in printed) == cautioned
    assert ("not checked against known tracts" in printed) == noted
    # decode repeats the fit's cautions from the model file
    out = tmp_path / "decoded"
    assert main(["decode", str(model), str(source), "-o", str(out)]) == 0
    assert ("labels on 1 core(s) only" in capsys.readouterr().out) == cautioned


def test_a_fit_with_no_order_to_suggest_and_no_labels_is_refused(tmp_path, capsys):
    """Two facies give no order to suggest: with no scheme and no labels nothing names
    the tracts, which the fit refuses as it refuses an order with no direction, unless
    --no-suggest-ranks asks for a fit without ranks (docs/hmm.md, "Ranks suggested from
    the data")."""
    t = pd.read_csv(DEMO)
    t = t[t["core"].isin(sorted(t["core"].unique())[:4])][["core", "top", "base", "facies"]]
    t["facies"] = t["facies"].where(t["facies"].isin(["OFF", "OTZ"]), "LSF")
    t["facies"] = t["facies"].replace({"OTZ": "OFF"})
    source = tmp_path / "two.csv"
    t.to_csv(source, index=False)
    model = tmp_path / "model.json"
    args = ["fit", str(source), "-o", str(model), "--restarts", "1"]
    assert main(args) == 1
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "no facies order to suggest" in err
    assert "--no-suggest-ranks" in err and not model.exists()
    assert main([*args, "--no-suggest-ranks"]) == 0
    assert "without facies ranks the tracts are not identified" in capsys.readouterr().err
