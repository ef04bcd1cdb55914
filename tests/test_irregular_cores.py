"""One decision for irregularly sampled cores: markov, fit and decode leave out the same ones.

A pseudo-well assembled from scattered samples is not a succession: its
"transitions" join samples that were never next to each other (common
practice). The synthetic cores are invented (tests/hmm_synthetic.py); the
Council Grove check uses real data (tests/data/council_grove/README.md).
"""

import json

import hmm_synthetic as synth
import pandas as pd
import pytest
from markov_data import PSEUDO_WELL, council_grove_coreset

from faciesseq.cli import main
from faciesseq.io import read_cores
from faciesseq.markov import analyse, leave_out_irregular

PSEUDO = "PSEUDO-1"


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    """Six invented cores and a pseudo-well: every fourth bed of the first core, the
    depths kept, so that it covers about a quarter of its depth span."""
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 6, 60, seed=72)
    table = pd.read_csv(folder / "cores.csv", dtype={"core": str})
    first = table[table["core"] == table["core"].iloc[0]]
    pseudo = first.iloc[::4].assign(core=PSEUDO, tract=None)
    pd.concat([table, pseudo], ignore_index=True).to_csv(folder / "cores.csv", index=False)
    return folder


def test_the_pseudo_well_of_council_grove_is_the_one_left_out():
    # Dubois, Bohling & Chakrabarti (2007), Computers & Geosciences 33:599-617, via the
    # data's README: Recruit F9 is a pseudo-well assembled from scattered samples.
    screening = leave_out_irregular(council_grove_coreset())
    assert screening.left_out == (PSEUDO_WELL,)
    assert PSEUDO_WELL not in screening.kept.names and len(screening.kept) == 5
    assert PSEUDO_WELL in screening.warning()


def test_markov_leaves_out_what_the_shared_screening_leaves_out(database):
    cores = read_cores(database / "cores.csv", scheme=database / "scheme.yaml")
    screening = leave_out_irregular(cores)
    assert screening.left_out == (PSEUDO,)
    assert analyse(cores, scheme=None).excluded_cores == screening.left_out
    assert screening.kept.names == [n for n in cores.names if n != PSEUDO]


def test_fit_and_decode_leave_out_the_pseudo_well_with_one_warning(database, tmp_path, capsys):
    csv, scheme = str(database / "cores.csv"), str(database / "scheme.yaml")
    model = tmp_path / "model.json"
    assert main(["fit", csv, "--scheme", scheme, "-o", str(model), "--restarts", "1"]) == 0
    err = capsys.readouterr().err
    warned = [line for line in err.splitlines() if "left out" in line]
    assert len(warned) == 1 and PSEUDO in warned[0] and warned[0].startswith("faciesseq fit:")
    trained = json.loads(model.read_text())["training"]["cores"]
    assert PSEUDO not in trained and len(trained) == 6

    assert main(["decode", str(model), csv, "-o", str(tmp_path / "out")]) == 0
    err = capsys.readouterr().err
    warned = [line for line in err.splitlines() if "left out" in line]
    assert len(warned) == 1 and PSEUDO in warned[0] and warned[0].startswith("faciesseq decode:")
    tracts = pd.read_csv(tmp_path / "out" / "tracts.csv", skiprows=1, dtype={"core": str})
    assert PSEUDO not in set(tracts["core"]) and tracts["core"].nunique() == 6


def test_keep_irregular_keeps_the_pseudo_well_in_fit_and_decode_and_says_so(
    database, tmp_path, capsys
):
    """The option markov has, with the same name and meaning on fit and decode."""
    csv, scheme = str(database / "cores.csv"), str(database / "scheme.yaml")
    model = tmp_path / "model.json"
    fit = ["fit", csv, "--scheme", scheme, "-o", str(model), "--restarts", "1"]
    assert main([*fit, "--keep-irregular"]) == 0
    err = capsys.readouterr().err
    assert [
        line for line in err.splitlines() if "kept (--keep-irregular)" in line and PSEUDO in line
    ]
    assert PSEUDO in json.loads(model.read_text())["training"]["cores"]
    out = tmp_path / "out"
    assert main(["decode", str(model), csv, "-o", str(out), "--keep-irregular"]) == 0
    capsys.readouterr()
    tracts = pd.read_csv(out / "tracts.csv", skiprows=1, dtype={"core": str})
    assert PSEUDO in set(tracts["core"])


def test_the_appendix_fits_decodes_and_validates_without_the_pseudo_well(database):
    from faciesseq.pipeline import run_appendix
    from faciesseq.scheme import load_scheme

    cores = read_cores(database / "cores.csv", scheme=database / "scheme.yaml")
    result = run_appendix(
        cores,
        load_scheme(database / "scheme.yaml"),
        surrogates=0,
        n_restarts=1,
        substates=(1,),
        folds=2,
    )
    assert result.markov.excluded_cores == (PSEUDO,)
    assert PSEUDO not in [c.core for c in result.interpretation]
    assert len(result.interpretation) == 6
    assert [n for n in result.notes if "left out" in n and PSEUDO in n]
