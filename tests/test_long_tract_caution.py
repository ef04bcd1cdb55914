"""A fit without labels whose chain stays in a tract longer than a core says so.

Every base-level cycle holds its systems tracts in turn (Van Wagoner et al. 1990,
AAPG Methods in Exploration 7; Catuneanu et al. 2009, Earth-Science Reviews 92:1-33),
so a core of a sequence or more shows several tracts. A fitted chain that, once in a
tract, stays there longer than a training core decodes most cores as that one tract:
what a fit without labels made of a table of facies in random order, sure of it at
p 0.95-0.97 (benchmarks/tract_model.md, "A tract that outlasts the cores").
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet
from faciesseq.hmm import TractHMM
from faciesseq.hmm.cautions import fit_cautions, long_tract_caution, long_tracts
from faciesseq.hmm.states import StateSpace
from faciesseq.scheme import FaciesScheme, default_tract_model


def _transmat(states: StateSpace, stay: float) -> np.ndarray:
    """Every tract one sub-state after another round the cycle; the last sub-state of
    FSST stays with probability ``stay``, those of the others with 0.5."""
    K, first, n = states.n_states, states.first, states.n_tracts
    A = np.zeros((K, K))
    for t, code in enumerate(states.tracts):
        a, nxt = first[t], first[(t + 1) % n]
        A[a, a + 1] = A[a + 1, a + 2] = 1.0
        p = stay if code == "FSST" else 0.5
        A[a + 2, a + 2], A[a + 2, nxt] = p, 1.0 - p
    return A


class _Fit:
    def __init__(self, stay: float, labelled: int = 0, beds: int = 200) -> None:
        self.n_labelled_ = labelled
        self.states_ = StateSpace.build(default_tract_model(), 3)
        self.transmat_ = _transmat(self.states_, stay)
        self.cores_ = ("A", "B", "C", "D")
        self.n_train_beds_ = beds


def test_a_tract_that_outlasts_the_cores_is_named_with_its_length():
    # FSST: 1 + 1 + 1 / (1 - 0.999) = 1002 beds per visit; 50 beds per core
    text = long_tract_caution(_Fit(0.999))
    assert text.startswith("caution: once entered, the fitted chain stays in FSST")
    assert "(FSST 1002 beds per visit, against 50 beds per core)" in text
    assert "fit --labels" in text


def test_no_caution_where_tracts_are_shorter_than_cores_or_beds_are_labelled():
    assert long_tract_caution(_Fit(0.5)) is None  # every tract 4 beds per visit
    assert long_tract_caution(_Fit(0.999, labelled=30)) is None
    # the same chain against cores longer than the visit: 1002 < 5000 / 4
    assert long_tract_caution(_Fit(0.999, beds=5000)) is None


def test_a_tract_never_left_reads_for_ever():
    text = long_tract_caution(_Fit(1.0))
    assert "(FSST for ever per visit" in text


FACIES = ["offshore", "lower shoreface", "upper shoreface", "foreshore", "coastal plain"]


def _cycles_without_stacking(seed: int) -> pd.DataFrame:
    """Four cores of shallowing-upward cycles, each from offshore or lower shoreface up
    to upper shoreface, foreshore or coastal plain at random: cycles, but no stacking
    of them into tracts (a new user's invented table was made so)."""
    rng = np.random.default_rng(seed)
    rows = []
    for name, n in (("A", 60), ("B", 45), ("C", 75), ("D", 35)):
        levels: list[int] = []
        while len(levels) < n:
            levels += list(range(int(rng.choice([0, 0, 1])), int(rng.choice([2, 3, 4])) + 1))
        base = 100.0
        for k in levels[:n]:  # base to top
            th = float(rng.uniform(0.2, 1.5))
            rows.append((f"Well {name}", base - th, base, FACIES[k]))
            base -= th
    return pd.DataFrame(rows, columns=["core", "top", "base", "facies"])


def test_cycles_that_do_not_stack_into_tracts_get_the_caution():
    scheme = FaciesScheme.from_dict(
        {"facies": [{"code": c, "name": c, "rank": 4 - i} for i, c in enumerate(FACIES)]}
    )
    model = TractHMM(scheme=scheme, random_state=0).fit(
        CoreSet.from_frame(_cycles_without_stacking(0), units="m")
    )
    per_core = model.n_train_beds_ / len(model.cores_)
    long = model.states_.mean_beds(model.transmat_) > per_core
    listed = [c for c in fit_cautions(model) if "longer than a training core" in c]
    assert long.any() and len(listed) == 1  # measured: one tract about 800 beds per visit
    assert all(t in listed[0] for t, x in zip(model.states_.tracts, long) if x)


def test_fit_json_decode_and_methods_carry_it(tmp_path, capsys):
    import json

    import yaml
    from _stacking import methods_text

    from faciesseq.cli import main
    from faciesseq.hmm.modelfile import load_model

    source, scheme = tmp_path / "beds.csv", tmp_path / "scheme.yaml"
    _cycles_without_stacking(0).to_csv(source, index=False)
    facies = [{"code": c, "name": c, "rank": 4 - i} for i, c in enumerate(FACIES)]
    scheme.write_text(yaml.safe_dump({"name": "invented", "facies": facies}))
    model_path = tmp_path / "m.json"
    args = ["fit", str(source), "--scheme", str(scheme), "-o", str(model_path)]
    assert main([*args, "--format", "json"]) == 0
    document = json.loads(capsys.readouterr().out)
    model = load_model(model_path)
    assert set(document["long_tracts"]) == set(long_tracts(model)) != set()
    assert any("longer than a training core" in c for c in document["cautions"])
    assert "longer than a training core" in methods_text(model)
    assert main(["decode", str(model_path), str(source), "-o", str(tmp_path / "out")]) == 0
    assert "longer than a training core" in capsys.readouterr().out
