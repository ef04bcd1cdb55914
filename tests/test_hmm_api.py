"""The Python route to the tract model says what the command says: cautions, the
calibration, the accepted inputs and warnings said once per call."""

from __future__ import annotations

import json
import warnings
from dataclasses import replace
from pathlib import Path

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq.cli import main
from faciesseq.core import CoreSet
from faciesseq.errors import ConfigError, InputError
from faciesseq.hmm import calibration
from faciesseq.hmm.calibration import HeldOut, describe_calibration, fit_temperature
from faciesseq.hmm.encoding import UnseenCategoryWarning
from faciesseq.hmm.model import TractHMM
from faciesseq.hmm.modelfile import load_model, save_model
from faciesseq.io import read_cores
from faciesseq.markov.seriation import suggest_ranks
from faciesseq.scheme import load_scheme
from faciesseq.validation import cross_validate

TWO_LABELLED = Path(__file__).parent / "data" / "two_labelled_cores"


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 4, 40, seed=73)
    beds = pd.read_csv(folder / "cores.csv")[["core", "top", "base", "facies"]]
    beds.to_csv(folder / "plain.csv", index=False)
    return folder


def _cli_cautions(args: list[str], output: Path) -> list[str]:
    assert main(["fit", *args, "-o", str(output), "--restarts", "1", "--force"]) == 0
    return json.loads(output.read_text())["training"]["cautions"]


def test_a_python_fit_records_the_cautions_the_command_records(database, tmp_path, capsys):
    plain = database / "plain.csv"
    # no scheme: the command is asked for ranks suggested from the data, as Python asks
    cli = _cli_cautions([str(plain), "--suggest-ranks"], tmp_path / "cli.json")
    out = capsys.readouterr().out
    cores = read_cores(plain)
    scheme = suggest_ranks(cores.succession_table("beds")).scheme()
    model = TractHMM(scheme=scheme, n_restarts=1, random_state=0).fit(cores)
    assert model.cautions_ == cli
    assert any("ranks were suggested from the data" in c for c in cli)
    assert all(c in out for c in cli)  # the command prints what the fit recorded
    save_model(model, tmp_path / "py.json")
    assert json.loads((tmp_path / "py.json").read_text())["training"]["cautions"] == cli
    assert load_model(tmp_path / "py.json").cautions_ == cli
    # no ranks at all: scheme=None in Python, --no-suggest-ranks on the command line
    bare = _cli_cautions([str(plain), "--no-suggest-ranks"], tmp_path / "bare.json")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        none = TractHMM(n_restarts=1, random_state=0).fit(cores)
    assert none.cautions_ == bare
    assert any("read no facies ranks" in c for c in bare)
    flat = [w for w in caught if "trend prior is flat" in str(w.message)]
    assert len(flat) <= 1  # said once per fit, not once per candidate graph and refit


@pytest.fixture(scope="module")
def two_labelled():
    scheme = load_scheme(TWO_LABELLED / "myscheme.yaml")
    cores = read_cores(TWO_LABELLED / "labelled.csv", scheme=scheme, units="m")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=scheme, random_state=1).fit(cores, labels="tract")
    return model, cores


def test_two_labelled_cores_do_not_sharpen_the_probabilities(two_labelled):
    # The API audit's case: the Brier score of the two one-core folds was lowest at
    # the search's old floor, T = 0.25, which raised the held-out log loss 0.60 -> 1.41
    # and put every core's probabilities near 1. The search now starts at 1.
    model, _ = two_labelled
    cal = model.calibration_
    assert cal["folds"] == 2 and cal["cores"] == 2
    assert model.temperature_ == 1.0
    assert cal["after"] == cal["before"]
    assert "temperature of 0.25" not in describe_calibration(model.temperature_, cal)


def _disagreeing_fold():
    """Independent beds (one per succession), 95 of 100 right at p = 0.9 and 5 wrong
    with p = 0.97, the true tract at 0.01: sharpening lowers the Brier score (the right
    beds gain more than the wrong lose, since it is bounded) and raises the log loss
    (the wrong beds' true tract goes to 0): the scores disagree."""
    K, n = 4, 100
    probs = np.full((n, K), 0.1 / (K - 1))
    probs[:, 0] = 0.9
    probs[:5] = [0.97, 0.01, 0.01, 0.01]
    labels = np.zeros(n, dtype=int)
    labels[:5] = 1
    return HeldOut(
        np.log(probs), np.ones(n, dtype=int), np.full(K, 1 / K), np.eye(K), labels, np.arange(K)
    )


def test_the_temperature_never_sharpens():
    # the Brier score alone would sharpen these (below); the search starts at 1
    result = fit_temperature([_disagreeing_fold()])
    assert result["temperature"] == 1.0 and result["after"] == result["before"]


def test_a_temperature_is_kept_only_where_both_proper_scores_improve(monkeypatch):
    # the rule on its own: with the search opened below 1, the Brier score's
    # sharpening raises the log loss, so it is not kept
    monkeypatch.setattr(calibration, "TEMPERATURE_BOUNDS", (0.25, 20.0))
    fold = _disagreeing_fold()
    result = fit_temperature([fold])
    assert result["temperature"] == 1.0
    assert result["rejected"]["temperature"] < 1
    assert result["rejected"]["scores"]["brier"] < result["before"]["brier"]
    assert result["rejected"]["scores"]["log_loss"] > result["before"]["log_loss"]
    line = describe_calibration(1.0, {**result, "folds": 1, "cores": 1})
    assert "raised the log loss" in line
    assert line.endswith("left as the model gives them (temperature 1).")
    # a third of the beds wrong at p = 0.9: both scores widen, and the temperature is kept
    labels = fold.labels.copy()
    labels[:33] = 1
    widened = fit_temperature([replace(fold, labels=labels)])
    assert widened["temperature"] > 1 and "rejected" not in widened


def test_decode_reads_one_core_and_fit_and_decode_name_what_they_accept(two_labelled):
    model, cores = two_labelled
    one = model.decode(cores["SF-3"])
    assert list(one.cores) == ["SF-3"]
    whole = model.decode(cores)
    np.testing.assert_array_equal(one["SF-3"].beds["tract"], whole["SF-3"].beds["tract"])
    frame = pd.read_csv(TWO_LABELLED / "labelled.csv")
    for bad in (frame, "labelled.csv", frame.to_dict("records"), 3):
        with pytest.raises(TypeError, match=r"^expected a CoreSet, a Core, .*CoreSet\.from_frame"):
            model.decode(bad)
    with pytest.raises(TypeError, match=r"got DataFrame: make one with CoreSet\.from_frame"):
        TractHMM().fit(frame)
    with pytest.raises(TypeError, match="got a list holding dict"):
        TractHMM().fit(frame.to_dict("records"))


def test_decoding_no_core_is_refused_by_name(two_labelled):
    # an empty subset once reached the bed table and broke there with an IndexError
    model, cores = two_labelled
    for empty, kind in ((cores.subset([]), "CoreSet"), ([], "list")):
        with pytest.raises(InputError, match=rf"^no cores to decode: the {kind} is empty$"):
            model.decode(empty)
        with pytest.raises(InputError, match=r"^no cores to decode"):
            next(model.decode_parts(empty))


def test_a_python_fit_refuses_what_the_fit_command_refuses(two_labelled):
    frame = pd.read_csv(TWO_LABELLED / "labelled.csv")
    repeated = CoreSet.from_frame(pd.concat([frame, frame.iloc[[3]]]), units="m")
    with pytest.raises(InputError, match=r"repeats data row 4 \(1003\.92-1005\.3\)"):
        TractHMM().fit(repeated)
    one_bed = CoreSet.from_frame(frame.iloc[:1], units="m")
    with pytest.raises(InputError, match=r"^too few beds to fit on: 1 beds in 1 succession\(s\)"):
        TractHMM().fit(one_bed)


def test_a_label_column_the_source_lacks_lists_the_sources_columns(two_labelled):
    _, cores = two_labelled
    plain = CoreSet.from_frame(cores.to_frame()[["core", "top", "base", "facies"]], units="m")
    listed = r"\(columns: core, top, base, facies\)$"
    with pytest.raises(ConfigError, match=r"^no column 'nope' for labels= " + listed):
        TractHMM().fit(plain, labels="nope")
    with pytest.raises(ConfigError, match=r"^no column 'tract' for labels= " + listed):
        cross_validate(plain, labels="tract", folds=2)
    with pytest.raises(ConfigError, match=r"did you mean labels='tract'\? names are read as"):
        TractHMM().fit(cores, labels="Tract")


def test_a_scheme_may_be_given_as_the_path_of_its_file(two_labelled):
    model, cores = two_labelled
    path = TWO_LABELLED / "myscheme.yaml"
    fitted = TractHMM(scheme=str(path), n_restarts=1, random_state=0, calibration_folds=0)
    fitted.fit(cores.subset(["SF-1", "SF-2"]), labels="tract")
    assert fitted.scheme.codes == model.scheme.codes
    with pytest.raises(TypeError, match="scheme must be a FaciesScheme, the path of"):
        TractHMM(scheme=3).fit(cores)
    result = cross_validate(
        cores.subset(["SF-1", "SF-2"]), "tract", folds=2, scheme=path, n_restarts=1
    )
    assert result.settings["n_cores"] == 2


def test_cross_validate_names_random_state_where_given_seed(two_labelled):
    _, cores = two_labelled
    with pytest.raises(TypeError, match=r"takes random_state=, not seed="):
        cross_validate(cores, "tract", folds=2, seed=0)
    with pytest.raises(TypeError, match="unexpected keyword argument 'restarts'"):
        cross_validate(cores, "tract", folds=2, restarts=1)
    with pytest.raises(ConfigError, match=r"^folds must be at least 2 \(--folds on the command"):
        cross_validate(cores, "tract", folds=1)


def test_a_grid_without_a_step_is_refused_in_python_words(two_labelled):
    _, cores = two_labelled
    with pytest.raises(ConfigError, match=r"^unit='grid' needs a positive step .*\(--step on"):
        TractHMM(unit="grid").fit(cores)


def test_unseen_facies_are_named_once_per_decode(two_labelled):
    model, cores = two_labelled
    frame = cores.to_frame()[["core", "top", "base", "facies"]]
    renamed = frame.assign(facies=frame["facies"].replace({"HCS": "XX", "HET": "YY"}))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        model.decode(CoreSet.from_frame(renamed, units="m"))
    unseen = [str(w.message) for w in caught if w.category is UnseenCategoryWarning]
    n_cores, n_beds = frame["core"].nunique(), int(frame["facies"].isin(["HCS", "HET"]).sum())
    assert len(unseen) == 1
    assert f"and {n_cores - 1} other core(s): facies ['XX', 'YY'] not seen in training" in unseen[0]
    assert f"in {n_cores} cores)" in unseen[0] and f"({n_beds} of " in unseen[0]
    # cores none of whose facies the model saw are refused, as faciesseq decode refuses them
    foreign = frame.assign(facies="ZZ")
    with pytest.raises(InputError, match="none of the facies codes of these cores"):
        model.decode(CoreSet.from_frame(foreign, units="m"))
