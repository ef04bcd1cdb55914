"""A fit without labels that spends a tract on single beds says so.

A systems tract is a stack of parasequences (Van Wagoner et al. 1990, AAPG Methods
in Exploration 7), so a tract whose fitted chain lasts about one bed per visit is
not read as a tract. On simulated cores of known tracts, such fits scored lower and
the short tract was the one misread (benchmarks/tract_model.md, "A tract spent on
single beds"); `fit`, its JSON and the appendix's methods say so.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from _stacking import methods_text

from faciesseq.cli import main
from faciesseq.hmm.cautions import single_bed_caution
from faciesseq.hmm.modelfile import load_model
from faciesseq.hmm.states import SHORT_VISIT, StateSpace
from faciesseq.scheme import default_tract_model

ROOT = Path(__file__).resolve().parents[1]
SCHEME = str(ROOT / "configs" / "scheme-shoreface.yaml")


def _transmat(states: StateSpace, short: str) -> np.ndarray:
    """Every tract: sub-states 1 -> 2 -> 3, the last stays with p 0.5 and leaves to the
    next tract of the cycle; ``short`` leaves from its first sub-state with p 0.9."""
    K = states.n_states
    A = np.zeros((K, K))
    first = states.first
    n = states.n_tracts
    for t, code in enumerate(states.tracts):
        a, nxt = first[t], first[(t + 1) % n]
        if code == short:
            A[a, a + 1], A[a, nxt] = 0.1, 0.9
        else:
            A[a, a + 1] = 1.0
        A[a + 1, a + 2] = 1.0
        A[a + 2, a + 2], A[a + 2, nxt] = 0.5, 0.5
    return A


def test_short_tracts_read_the_phase_type_mean():
    states = StateSpace.build(default_tract_model(), 3)
    A = _transmat(states, "FSST")
    # mean beds of the short tract: 1 + 0.1 * (1 + 2) = 1.3; of the others 1 + 1 + 2 = 4
    np.testing.assert_allclose(states.mean_beds(A), [4.0, 1.3, 4.0, 4.0])
    assert states.short_tracts(A) == pytest.approx({"FSST": 1.3})
    assert 1.3 < SHORT_VISIT < 4.0


def test_one_sub_state_is_never_short():
    states = StateSpace.build(default_tract_model(), 1)
    A = np.roll(np.eye(states.n_states), 1, axis=1)  # one bed each, round the cycle
    assert np.allclose(states.mean_beds(A), 1.0)
    assert states.short_tracts(A) == {}


class _Fit:
    def __init__(self, labelled: int) -> None:
        self.n_labelled_ = labelled
        self.states_ = StateSpace.build(default_tract_model(), 3)
        self.transmat_ = _transmat(self.states_, "HST")


def test_the_caution_names_the_tract_and_only_without_labels():
    text = single_bed_caution(_Fit(0))
    assert text.startswith("caution: HST lasts fewer than 1.5 beds per visit")
    assert "(HST 1.3)" in text and "fit --labels" in text
    assert single_bed_caution(_Fit(12)) is None


def test_fit_and_the_methods_say_it_where_the_model_has_such_a_tract(tmp_path, capsys):
    # the demo's cores without any attribute: whichever fit EM finds, the report, the
    # JSON and the methods agree with the model file's chain
    t = pd.read_csv(ROOT / "demo_cores" / "cores.csv")
    source = tmp_path / "beds.csv"
    t[["core", "top", "base", "facies"]].to_csv(source, index=False)
    model_path = tmp_path / "m.json"
    args = ["fit", str(source), "--scheme", SCHEME, "-o", str(model_path), "--restarts", "1"]
    assert main(args) == 0
    text = capsys.readouterr().out
    model = load_model(model_path)
    short = model.states_.short_tracts(model.transmat_)
    assert ("caution: " in text) == bool(short)
    for tract in short:
        assert f"{tract} {short[tract]:.1f}" in text
    assert ("Caution: " in methods_text(model)) == bool(short)
    assert "Note: the source has no contact types" in methods_text(model)
    assert main(["decode", str(model_path), str(source), "-o", str(tmp_path / "out")]) == 0
    assert ("caution: " in capsys.readouterr().out) == bool(short)
    assert main([*args, "--force", "--format", "json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["single_bed_tracts"] == pytest.approx(short)
    # the source has no contact column: the JSON carries the note the text prints
    assert "no contact types" in document["contact_note"]


def test_the_appendix_without_labels_fits_the_model_fit_fits_and_cautions(tmp_path):
    # Without labels the appendix fits the design whose accuracy docs/hmm.md reports
    # (that of `faciesseq fit`: three sub-states per tract on the stacking context),
    # not 1 and 2 sub-states compared by BIC as with labels, and its methods carry the
    # caution where that model spends a tract on single beds.
    from faciesseq.core import CoreSet
    from faciesseq.pipeline import run_appendix
    from faciesseq.scheme import load_scheme

    t = pd.read_csv(ROOT / "demo_cores" / "cores.csv")
    table = t[t["core"].isin(sorted(t["core"].unique())[:10])][["core", "top", "base", "facies"]]
    cores = CoreSet.from_frame(table, units="m")
    result = run_appendix(cores, load_scheme(SCHEME), surrogates=0, n_restarts=1, labels=None)
    model = result.model
    assert model.n_labelled_ == 0 and model.states_.substates == (3, 3, 3, 3)
    short = model.states_.short_tracts(model.transmat_)
    methods = result.appendix.document.sections[-1]
    assert methods.title == "Methods"

    def text(section) -> str:
        blocks = [getattr(b, "text", "") for b in section.blocks]
        return " ".join(blocks + [text(sub) for sub in section.subsections])

    assert ("Caution: " in text(methods)) == bool(short)
    assert "Note: the source has no contact types" in text(methods)  # no contact column
