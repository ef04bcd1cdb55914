"""Model files: JSON round trip, and every kind of bad file rejected with a clear error."""

import copy
import json

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq.errors import ModelFileError
from faciesseq.hmm.model import TractHMM
from faciesseq.hmm.modelfile import load_model, model_to_dict, save_model


@pytest.fixture(scope="module")
def fitted():
    train = synth.cores(6, 50, seed=81)
    model = TractHMM(scheme=synth.scheme(), substates={"HST": 2}, n_restarts=2, random_state=4)
    return model.fit(train, labels="true_tract"), train


def test_round_trip_decodes_identically(fitted, tmp_path):
    model, train = fitted
    path = save_model(model, tmp_path / "m.json", {"source": "synthetic"})
    text = path.read_text()
    assert "pickle" not in text
    loaded = load_model(path)
    pd.testing.assert_frame_equal(
        model.decode(train).tracts_table(), loaded.decode(train).tracts_table()
    )
    assert loaded.score(train) == pytest.approx(model.score(train), abs=1e-9)
    assert loaded.training_["source"] == "synthetic"
    assert loaded.states_.labels() == model.states_.labels()
    assert loaded.monitor_.history == model.monitor_.history


def _bad(doc, tmp_path, name="bad.json"):
    path = tmp_path / name
    path.write_text(json.dumps(doc))
    return path


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda d: d.update(format="other"), "not a faciesseq model file"),
        (lambda d: d.update(version=2), "version 2 is not supported"),
        (lambda d: d["parameters"].update(startprob=[0.5, 0.5]), r"startprob: shape \(2,\)"),
        (
            lambda d: d["parameters"]["transmat"][0].__setitem__(0, 0.9999),
            "transmat: rows must sum to 1",
        ),
        (lambda d: d["parameters"]["emissions"].pop(), "one entry per feature"),
        (lambda d: d["parameters"]["emissions"][0].update(kind="neural"), "unknown emission kind"),
        (lambda d: d["states"].update(labels=["A"]), "do not match the tract model"),
        (lambda d: d.pop("hyperparameters"), "missing entry 'hyperparameters'"),
        (  # once read letter by letter: "one entry per feature ['f', 'a', ...]"
            lambda d: d["hyperparameters"].update(features="facies"),
            r"hyperparameters\.features: a list of feature names expected, not 'facies'$",
        ),
        (
            lambda d: d["hyperparameters"].update(features=["facies", 3]),
            r"hyperparameters\.features: a list of feature names expected",
        ),
        (
            lambda d: d["training"].update(facies_beds={"CP": -3}),
            r"training\.facies_beds: a count of beds per facies",
        ),
        (
            lambda d: d["training"].update(bed_thickness_median=-1.0),
            r"training\.bed_thickness_median: a positive number",
        ),
    ],
)
def test_bad_files_are_rejected_naming_the_file(fitted, tmp_path, change, message):
    model, _ = fitted
    doc = copy.deepcopy(model_to_dict(model))
    change(doc)
    path = _bad(doc, tmp_path)
    with pytest.raises(ModelFileError, match=message) as info:
        load_model(path)
    assert str(path) in str(info.value)


def test_training_entries_left_null_load_as_in_files_that_leave_them_out(fitted, tmp_path):
    # null is allowed for every training entry; these four raised a TypeError
    model, _ = fitted
    doc = model_to_dict(model)
    for key in ("cores", "restarts", "graph_selection", "cautions"):
        doc["training"][key] = None
    loaded = load_model(_bad(doc, tmp_path))
    assert loaded.cores_ == () and loaded.restarts_ == [] and loaded.graph_selection_ == []


def test_a_transition_outside_the_tract_graph_is_rejected(fitted, tmp_path):
    model, _ = fitted
    doc = model_to_dict(model)
    labels = doc["states"]["labels"]
    A = np.array(doc["parameters"]["transmat"])
    # every tract may follow any other in the default graph, but a tract is entered at
    # its first sub-state: TST -> HST.2 is a structural zero
    i, j = labels.index("TST"), labels.index("HST.2")
    A[i, j] = 0.1
    A[i] /= A[i].sum()
    doc["parameters"]["transmat"] = A.tolist()
    with pytest.raises(ModelFileError, match=r"TST -> HST\.2 is outside the tract graph"):
        load_model(_bad(doc, tmp_path))


def test_not_json_and_missing_files(tmp_path):
    path = tmp_path / "m.json"
    path.write_bytes(b"\x80\x04\x95 pickled bytes")
    with pytest.raises(ModelFileError, match=r"cannot read|not JSON"):
        load_model(path)
    with pytest.raises(ModelFileError, match="not found"):
        load_model(tmp_path / "absent.json")


def test_the_data_digest_ignores_the_source_format_and_sees_one_changed_depth(tmp_path):
    """The training data's digest (provenance ``data_hash``) is the same read from CSV
    and from Parquet, and changes when one interval's base moves by a centimetre."""
    from faciesseq.hmm.modelfile import coreset_digest
    from faciesseq.io import read_cores

    frame = pd.DataFrame(
        {
            "core": ["A", "A", "B"],
            "top": [0.0, 1.5, 10.0],
            "base": [1.5, 3.0, 12.0],
            "facies": ["SH", "SS", "SH"],
        }
    )
    frame.to_csv(tmp_path / "a.csv", index=False)
    frame.to_parquet(tmp_path / "a.parquet")
    moved = frame.assign(base=[1.5, 3.01, 12.0], top=[0.0, 1.5, 10.0])
    moved.to_csv(tmp_path / "b.csv", index=False)
    digests = [coreset_digest(read_cores(tmp_path / n)) for n in ("a.csv", "a.parquet")]
    assert digests[0] == digests[1]
    assert coreset_digest(read_cores(tmp_path / "b.csv")) != digests[0]


def test_the_data_digest_of_one_table_is_that_of_the_same_cores_one_by_one():
    """The digest read from the categorical columns of the one table of a database
    (its fast path) equals the digest of ``to_frame()`` of the same cores held core by
    core (the demo database; invented)."""
    from pathlib import Path

    from faciesseq.core import CoreSet, CoreTable
    from faciesseq.hmm.modelfile import coreset_digest
    from faciesseq.io import read_cores

    root = Path(__file__).resolve().parents[1] / "faciesseq" / "data" / "demo"
    table = read_cores(root / "cores.csv", scheme=root / "scheme-shoreface.yaml")
    assert isinstance(table.cores, CoreTable)
    per_core = CoreSet.from_frame(table.to_frame(), units=table.units)
    assert not isinstance(per_core.cores, CoreTable)
    assert coreset_digest(table) == coreset_digest(per_core)
