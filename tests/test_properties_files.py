"""Property tests (hypothesis) of what users hand the tool: a model file with any one
value changed, and a CSV core table with any bytes changed, is either read as valid
or refused with the project's own error (exit 1 or 2 on the command line), never
another exception. Model files: every leaf of a fitted model's JSON document may be
replaced by any JSON value; tables: the demo's first rows with bytes replaced,
inserted or deleted."""

from __future__ import annotations

import contextlib
import copy
import json
import warnings
from pathlib import Path

import hmm_synthetic as synth
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from faciesseq.errors import FaciesseqError
from faciesseq.hmm.model import TractHMM
from faciesseq.hmm.modelfile import model_from_dict, model_to_dict
from faciesseq.io import read_cores

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "faciesseq" / "data" / "demo"


def _fitted(labels=None, **params):
    """A quick fit on invented cores, and the cores."""
    train = synth.cores(4, 30, seed=5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=synth.scheme(), n_restarts=1, max_iter=5, random_state=2, **params)
        model.fit(train, labels=labels)
    return model, train


@pytest.fixture(scope="module")
def document():
    model, train = _fitted(labels="true_tract")
    return json.loads(json.dumps(model_to_dict(model))), train


def _leaves(doc, path=()):
    """Every path to a leaf (a value that is not a list or an object) of ``doc``."""
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield from _leaves(v, (*path, k))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield from _leaves(v, (*path, i))
    else:
        yield path


_json = st.recursive(
    st.none()
    | st.booleans()
    | st.integers(-(10**30), 10**30)
    | st.floats(allow_nan=False)
    | st.text(max_size=8),
    lambda inner: (
        st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner, max_size=3)
    ),
    max_leaves=6,
)


@pytest.fixture(scope="module", params=["labelled", "weighted"])
def any_document(request, document, weighted_document):
    """Each model file the property test changes: a labelled fit (boosted trees, bed
    pieces) and a weighted fit without labels (context pieces and their weights)."""
    return document if request.param == "labelled" else weighted_document


@settings(
    max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data(), value=_json)
def test_a_model_file_with_any_value_changed_is_read_or_refused_with_a_clear_error(
    any_document, data, value
):
    doc, train = any_document
    paths = list(_leaves(doc))
    path = data.draw(st.sampled_from(paths))
    changed = copy.deepcopy(doc)
    node = changed
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    try:
        model = model_from_dict(changed, source="model.json")
    except FaciesseqError:
        return
    with warnings.catch_warnings(), contextlib.suppress(FaciesseqError):
        warnings.simplefilter("ignore")
        model.decode(train)


@pytest.fixture(scope="module")
def weighted_document():
    """A fit without labels on the stacking context, its pieces weighed, and the record
    of weights not kept (set by hand: a real fit keeps one or the other)."""
    model, train = _fitted(weigh_evidence=True)
    assert model.evidence_weights_
    model.weights_rejected_ = {"expected_tract_changes": 9.5, "cycles": 8.0}
    return json.loads(json.dumps(model_to_dict(model))), train


_HEAD = (DEMO / "cores.csv").read_bytes().splitlines(keepends=True)[:40]


@pytest.mark.parametrize(
    ("path", "value"),
    [  # values that once escaped as a TypeError, ValueError or OverflowError
        (("ranks", 0), []),
        (("ranks", 0), {}),
        (("parameters", "emissions", 4, "kind"), []),
        (("parameters", "emissions", 3, "unseen_pseudo"), None),
        (("parameters", "emissions", 4, "trees", "trees", 0, 0, "feature", 0), 2**63),
    ],
)
def test_values_found_by_the_property_test_are_refused_with_a_clear_error(document, path, value):
    from faciesseq.errors import ModelFileError

    changed = copy.deepcopy(document[0])
    node = changed
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    with pytest.raises(ModelFileError):
        model_from_dict(changed, source="model.json")


def test_a_nul_byte_and_a_lone_carriage_return_are_refused_with_a_clear_error(tmp_path):
    text = bytearray(b"".join(_HEAD))
    text[0:1] = b"\x00"
    text[217:218] = b"\r"
    path = tmp_path / "cores.csv"
    path.write_bytes(bytes(text))
    with pytest.raises(FaciesseqError, match="not a readable delimited table"):
        read_cores(path, scheme=DEMO / "scheme-shoreface.yaml")


@settings(
    max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    edits=st.lists(
        st.tuples(
            st.sampled_from(["replace", "insert", "delete"]),
            st.integers(0, 10**6),
            st.binary(min_size=1, max_size=3),
        ),
        min_size=1,
        max_size=4,
    )
)
def test_a_core_table_with_any_bytes_changed_is_read_or_refused_with_a_clear_error(
    tmp_path_factory, edits
):
    text = bytearray(b"".join(_HEAD))
    for kind, at, data in edits:
        at %= len(text) + 1
        if kind == "replace":
            text[at : at + len(data)] = data
        elif kind == "insert":
            text[at:at] = data
        else:
            del text[at : at + len(data)]
    path = tmp_path_factory.mktemp("fuzz") / "cores.csv"
    path.write_bytes(bytes(text))
    try:
        cores = read_cores(path, scheme=DEMO / "scheme-shoreface.yaml")
    except FaciesseqError:
        return
    for core in cores:  # whatever was read has finite depths, top above base
        beds = core.beds() if callable(getattr(core, "beds", None)) else None
        if beds is not None and len(beds):
            assert (beds["top"] < beds["base"]).all()
