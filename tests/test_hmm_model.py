"""TractHMM: reference checks, EM invariants, identifiability, recovery on synthetic cores.

Outside reference: hmmlearn 0.3.3 ``CategoricalHMM`` (same parameters -> same
log-likelihoods, posteriors and Viterbi paths). EM's monotone objective is
Dempster, Laird & Rubin (1977), theorem 1. Synthetic cores come from
``tests/hmm_synthetic.py`` (invented); the seeds used here were not used to
tune the model (tuning used seeds 101 and 202).
"""

from __future__ import annotations

import itertools
import warnings

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq.core import Succession
from faciesseq.hmm.encoding import UnseenCategoryWarning
from faciesseq.hmm.labels import LabelWarning
from faciesseq.hmm.model import (
    DEFAULT_FEATURES,
    ConvergenceError,
    ConvergenceMonitor,
    TractHMM,
)
from faciesseq.hmm.selection import select_model
from faciesseq.scheme import TractModel, default_tract_model, permissive_tract_model

hmm = pytest.importorskip("hmmlearn.hmm")


def _succession(name: str, facies: np.ndarray) -> Succession:
    n = len(facies)
    top = np.arange(n, 0, -1) - 1.0  # base to top: depth decreasing
    beds = pd.DataFrame(
        {
            "top": top,
            "base": top + 1.0,
            "thickness": 1.0,
            "facies": [str(f) for f in facies],
        }
    )
    return Succession(name, 0, beds, "m")


def _bed_accuracy(interp, succ, truth="true_tract"):
    ok = n = 0
    for s in succ:
        beds = interp[s.core].beds
        pred = beds.loc[beds["segment"] == s.segment, "tract"].to_numpy()[::-1]
        ok += int((pred == s.beds[truth].to_numpy()).sum())
        n += len(s)
    return ok / n


# ----------------------------------------------------------------- reference
def test_matches_hmmlearn_categorical_hmm_on_random_data():
    # Reference: hmmlearn 0.3.3 CategoricalHMM with the same parameters, many
    # sequences of unequal length; trend, priors and sub-states off.
    rng = np.random.default_rng(5)
    V = 6
    lengths = rng.integers(2, 40, size=25)
    succ = [_succession(f"C{k}", rng.integers(0, V, size=n)) for k, n in enumerate(lengths)]
    succ[0].beds.loc[:, "facies"] = [str(i % V) for i in range(len(succ[0]))]  # all codes seen
    model = TractHMM(features=("facies",), prior_strength=0.0, substates=1, unit="grid")
    model.set_params(max_iter=1, n_restarts=1, random_state=0).fit(succ)
    K = model.states_.n_states
    assert model.facies_ == tuple(str(i) for i in range(V))
    allowed = model.states_.allowed
    transmat = np.where(allowed, rng.uniform(0.1, 1.0, size=(K, K)), 0.0)
    transmat /= transmat.sum(axis=1, keepdims=True)
    startprob = rng.dirichlet(np.ones(K))
    emission = rng.dirichlet(np.ones(V), size=K)
    model.startprob_, model.transmat_ = startprob, transmat
    model.emission("facies").emissionprob_ = emission

    ref = hmm.CategoricalHMM(n_components=K, init_params="", params="")
    ref.startprob_, ref.transmat_, ref.emissionprob_ = startprob, transmat, emission
    ref.n_features = V
    X = np.concatenate([s.beds["facies"].astype(int).to_numpy() for s in succ])[:, None]

    ours = model.score_samples(succ)
    theirs = [ref.score(x) for x in np.split(X, np.cumsum(lengths)[:-1])]
    np.testing.assert_allclose(ours, theirs, rtol=0, atol=1e-8)
    interp = model.decode(succ)
    post = np.concatenate(
        [interp[s.core].beds.iloc[::-1][[f"p_{t}" for t in model.states_.tracts]] for s in succ]
    )
    np.testing.assert_allclose(post, ref.predict_proba(X, lengths), atol=1e-8)
    _, path = ref.decode(X, lengths, algorithm="viterbi")
    ours_path = np.concatenate([interp[s.core].beds["tract"].to_numpy()[::-1] for s in succ])
    assert ours_path.tolist() == [model.states_.tracts[i] for i in path]


# ---------------------------------------------------------------- invariants
@pytest.fixture(scope="module")
def train():
    return synth.cores(12, 80, seed=7)


@pytest.mark.parametrize("prior", [0.0, 2.0])
def test_em_objective_never_decreases(train, prior):
    model = TractHMM(scheme=synth.scheme(), prior_strength=prior, n_restarts=2, random_state=3)
    model.fit(train)
    for run in model.restarts_:
        assert np.all(np.diff(run["history"]) >= -1e-9 * abs(run["history"][-1]))
        assert run["n_iter"] >= 2


def test_monitor_treats_a_decrease_as_an_error():
    monitor = ConvergenceMonitor(tol=1e-3, max_iter=10)
    monitor.report(-100.0)
    monitor.report(-99.0)
    with pytest.raises(ConvergenceError, match="decreased"):
        monitor.report(-99.5)


@pytest.mark.parametrize(
    ("n_beds", "gain", "stops"),
    [
        (0, 9e-4, True),  # no bed count: the tolerance as it is
        (500, 9e-4, True),  # up to TOL_BEDS beds: as it is
        (1_000, 1.1e-3, False),
        (10**6, 0.9, True),  # 1e-3 per 1,000 beds: 1.0 on 10^6 beds
        (10**6, 1.1, False),
    ],
)
def test_monitor_tolerance_counts_per_thousand_beds_above_a_thousand(n_beds, gain, stops):
    monitor = ConvergenceMonitor(tol=1e-3, max_iter=10, n_beds=n_beds)
    monitor.report(-1e6)
    monitor.report(-1e6 + gain)
    assert monitor.reached_tolerance is stops
    assert monitor.converged is stops


def test_a_fit_records_its_beds_in_its_monitor(train):
    model = TractHMM(scheme=synth.scheme(), random_state=0, n_restarts=1).fit(train)
    assert model.monitor_.n_beds == model.n_train_beds_ == sum(len(s) for s in train)
    history = model.monitor_.history
    assert history[-1] - history[-2] < model.monitor_.threshold or len(history) == 200


def test_structural_zeros_stay_zero_and_posteriors_sum_to_one(train):
    model = TractHMM(scheme=synth.scheme(), substates=2, random_state=1, n_restarts=1).fit(train)
    assert np.all(model.transmat_[~model.states_.allowed] == 0)
    np.testing.assert_allclose(model.transmat_.sum(axis=1), 1.0)
    interp = model.decode(train[:3])
    for core in interp:
        p = core.beds[[f"p_{t}" for t in core.tracts]].to_numpy()
        np.testing.assert_allclose(p.sum(axis=1), 1.0, atol=1e-10)


def test_tract_posteriors_read_a_core_set_as_the_model_reads_it(train):
    from faciesseq.core import CoreSet

    model = TractHMM(scheme=synth.scheme(), random_state=0, n_restarts=1).fit(train[:6])
    frame = pd.concat([s.beds.assign(core=s.core) for s in train[6:9]], ignore_index=True)
    cores = CoreSet.from_frame(frame.drop(columns=["thickness", "true_tract"]), units="m")
    p = model.tract_posteriors(cores)
    assert p.shape == (sum(len(s) for s in cores.successions(model.unit_)), 4)
    np.testing.assert_allclose(p, model.tract_posteriors(cores.successions(model.unit_)))
    np.testing.assert_allclose(p.sum(axis=1), 1.0)


def test_surface_probabilities_agree_with_state_posteriors_on_both_sides(train):
    model = TractHMM(scheme=synth.scheme(), random_state=0, n_restarts=1).fit(train)
    tm = default_tract_model()
    for core in model.decode(train[:4]):
        beds = core.beds  # depth order: bed i+1 lies below contact i... check by depth
        by_top = {round(t, 9): i for i, t in enumerate(beds["top"])}
        by_base = {round(b, 9): i for i, b in enumerate(beds["base"])}
        total = np.zeros(len(core.boundaries))
        for k, b in enumerate(core.boundaries.itertuples(index=False)):
            lower = beds.iloc[by_top[round(b.depth, 9)]]  # the bed whose top is the contact
            upper = beds.iloc[by_base[round(b.depth, 9)]]
            for code in core.surfaces:
                p = getattr(b, f"p_{code}")
                pairs = [(s.lower, s.upper) for s in tm.surfaces if s.code == code]
                assert p <= sum(lower[f"p_{lo}"] for lo in {lo for lo, _ in pairs}) + 1e-9
                assert p <= sum(upper[f"p_{up}"] for up in {up for _, up in pairs}) + 1e-9
                total[k] += p
            # TST is only followed by HST: P(TST below) = P(TST on both sides) + P(MFS)
            assert b.p_MFS <= lower["p_TST"] + 1e-9
        assert np.all(total <= 1 + 1e-9)


def test_clamped_beds_keep_their_labels(train):
    succ = train[:4]
    labels = []
    for s in succ:
        lab = s.beds["true_tract"].astype(object).to_numpy().copy()
        lab[1::2] = None
        labels.append(list(lab))
    model = TractHMM(scheme=synth.scheme(), random_state=0, n_restarts=1).fit(succ, labels=labels)
    interp = model.decode(succ, labels=labels)
    for s, lab in zip(succ, labels):
        beds = interp[s.core].beds.iloc[::-1].reset_index(drop=True)
        for i, v in enumerate(lab):
            if v is not None:
                assert beds.loc[i, "tract"] == v
                assert beds.loc[i, f"p_{v}"] == pytest.approx(1.0)


def test_labels_that_keep_the_cyclic_order_give_the_strict_graph(train):
    # The synthetic cores walk the default graph (FSST and TST skippable), so their
    # labels never jump over a tract the strict order requires: the fit takes that
    # graph, and neither the fit nor the decoded column may join LST to FSST.
    labels = [list(s.beds["true_tract"].astype(object)) for s in train[:6]]
    for lab in labels:
        lab[1::3] = [None] * len(lab[1::3])  # semi-supervised: a third of the beds free
    model = TractHMM(scheme=synth.scheme(), random_state=0, n_restarts=1)
    model.fit(train[:6] + train[6:8], labels=labels + [[None] * len(s) for s in train[6:8]])
    assert model.label_graph_["graph"] == "strict"
    assert model.label_graph_["n_forbidden"] == 0 and model.label_graph_["n_boundaries"] > 10
    assert model.tract_model_.skips == default_tract_model().skips
    order = list(model.tract_model_.order)
    lst, fsst = model.states_.first[order.index("LST")], model.states_.first[order.index("FSST")]
    assert model.transmat_[lst, fsst] == 0.0
    for core in model.decode(train[8:]):
        upward = core.beds["tract"].to_numpy()[::-1]
        pairs = set(itertools.pairwise(upward))
        assert not pairs & {("LST", "FSST"), ("TST", "LST"), ("TST", "FSST"), ("FSST", "HST")}


def test_labels_that_jump_over_a_tract_keep_the_permissive_graph(train):
    # One labelled TST directly under an LST (a tract thinner than a bed between them)
    # is a boundary the strict order forbids: the fit keeps the permissive graph, so
    # the label is used as given (no warning), and says how many boundaries jumped.
    s = train[0]
    lab = list(s.beds["true_tract"].astype(object))
    lab[0], lab[1] = "TST", "LST"
    with warnings.catch_warnings():
        warnings.simplefilter("error", LabelWarning)
        model = TractHMM(scheme=synth.scheme(), random_state=0, n_restarts=1).fit([s], labels=[lab])
    assert model.label_graph_["graph"] == "permissive"
    assert model.label_graph_["n_forbidden"] >= 1
    assert model.tract_model_.skips == permissive_tract_model().skips
    assert model.n_labelled_ == len(s)
    # graph="fixed" keeps the permissive graph whatever the labels show
    ordered = [list(t.beds["true_tract"].astype(object)) for t in train[1:3]]
    fixed = TractHMM(scheme=synth.scheme(), graph="fixed", n_restarts=1, max_iter=3)
    assert fixed.fit(train[1:3], labels=ordered).label_graph_["graph"] == "permissive"


def test_impossible_labels_are_freed_with_a_warning_naming_core_and_depth(train):
    from faciesseq.errors import InputError
    from faciesseq.hmm.labels import LabelWarning
    from faciesseq.simulate.wells import history_tract_model

    # the cycle with only FSST and TST skippable (the default lets any tract be absent)
    cycle = history_tract_model(default_tract_model())
    s = train[0]
    lab = [None] * len(s)
    lab[0], lab[1], lab[2] = "TST", "LST", "LST"  # TST -> LST upward is not in that graph
    with pytest.warns(LabelWarning, match=rf"core {s.core}, depth .*TST -> LST"):
        model = TractHMM(tract_model=cycle, scheme=synth.scheme(), n_restarts=1).fit(
            [s], labels=[lab]
        )
    assert model.n_labelled_ == 1
    lab[0] = "ZZ"
    with pytest.raises(InputError, match=rf"core {s.core}.*'ZZ' is not a tract"):
        TractHMM(scheme=synth.scheme()).fit([s], labels=[lab])


def test_missing_values_are_marginalised(train):
    model = TractHMM(
        scheme=synth.scheme(), features=("facies", "thickness"), random_state=0, n_restarts=1
    ).fit(train)
    plain = TractHMM(scheme=synth.scheme(), features=("facies",), n_restarts=1).fit(train)
    plain.startprob_, plain.transmat_ = model.startprob_, model.transmat_
    plain.emissions_ = [model.emission("facies")]
    s = train[0]
    beds = s.beds.copy()
    beds["thickness"] = np.nan
    blank = Succession(s.core, 0, beds, "m")
    assert model.score([blank]) == pytest.approx(plain.score([blank]), abs=1e-9)
    assert model.score([s]) != pytest.approx(plain.score([s]), abs=1e-3)


def test_unseen_facies_decodes_with_a_warning(train):
    model = TractHMM(
        scheme=synth.scheme(), features=DEFAULT_FEATURES, random_state=0, n_restarts=1
    ).fit(train[:6])
    s = train[7]
    beds = s.beds.copy()
    beds.loc[3, "facies"] = "XX"
    beds.loc[4, "contact"] = "burrowed"
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        interp = model.decode([Succession(s.core, 0, beds, "m")])
    messages = [str(w.message) for w in caught if w.category is UnseenCategoryWarning]
    assert any("facies ['XX']" in m and s.core in m for m in messages)
    assert any("contact type ['burrowed']" in m for m in messages)
    core = interp[s.core]
    assert np.isfinite(core.log_likelihood)
    p = core.beds[[f"p_{t}" for t in core.tracts]].to_numpy()
    np.testing.assert_allclose(p.sum(axis=1), 1.0)


# ----------------------------------------------------- identity and recovery
def test_rank_priors_pin_tract_identity_across_seeds():
    # No label switching: unsupervised fits from different seeds (and a
    # shuffled core order) name the tracts the same way as the truth.
    train = synth.cores(16, 90, seed=11)
    test = synth.cores(6, 90, seed=12)
    columns = []
    for seed, order in ((0, None), (1, None), (2, "reversed")):
        data = train[::-1] if order else train
        model = TractHMM(
            scheme=synth.scheme(),
            features=DEFAULT_FEATURES,
            tract_model=permissive_tract_model(),
            n_restarts=2,
            random_state=seed,
        )
        model = model.fit(data)
        interp = model.decode(test)
        assert _bed_accuracy(interp, test) >= 0.75
        tst = model.emission("facies_trend").trendprob_[model.states_.tracts.index("TST")]
        ranks = np.arange(len(synth.CODES))
        deepening = (ranks[None, :] > ranks[:, None]).astype(float)
        # TST's emissions favour deepening-upward steps (mass on rank increase > 0.5 per row)
        assert np.mean((tst * deepening).sum(axis=1)) > 0.5
        columns.append(np.concatenate([interp[s.core].beds["tract"].to_numpy() for s in test]))
    assert np.mean(columns[0] == columns[1]) > 0.95
    assert np.mean(columns[0] == columns[2]) > 0.95


def test_recovery_on_synthetic_cores_beats_the_trend_rule():
    from faciesseq.hmm.baseline import trend_rule

    train = synth.cores(20, 100, seed=31)
    test = synth.cores(8, 100, seed=32)
    sup = TractHMM(scheme=synth.scheme(), random_state=0, n_restarts=1)
    sup.fit(train, labels="true_tract")
    uns = TractHMM(
        scheme=synth.scheme(),
        features=DEFAULT_FEATURES,
        tract_model=permissive_tract_model(),
        random_state=0,
        n_restarts=2,
    )
    uns = uns.fit(train)
    acc_sup = _bed_accuracy(sup.decode(test), test)
    acc_uns = _bed_accuracy(uns.decode(test), test)
    ranks = np.concatenate(
        [s.beds["facies"].map({c: i for i, c in enumerate(synth.CODES)}).to_numpy() for s in test]
    ).astype(float)
    rule = trend_rule(ranks, np.array([len(s) for s in test]), default_tract_model())
    truth = np.concatenate([s.beds["true_tract"].to_numpy() for s in test])
    acc_rule = np.mean(np.array(default_tract_model().order)[rule] == truth)
    # measured 2026-12-01 (seeds 31/32): supervised 0.948 (0.909 before the stacking
    # piece; 0.944 on 2026-12-04 with the cycles in the stacking window), unsupervised
    # 0.911, rule 0.579
    assert acc_sup >= 0.85
    assert acc_uns >= 0.80
    assert acc_sup > acc_rule + 0.15


def test_bic_prefers_the_trend_emission_where_there_is_a_trend(train):
    sel = select_model(
        train,
        features=[("facies",), ("facies_trend",)],
        substates=[1],
        scheme=synth.scheme(),
        n_restarts=1,
        random_state=0,
    )
    assert sel.table.loc[sel.table["selected"], "features"].item() == "facies_trend"
    assert sel.table["bic"].notna().all()


def test_substates_expand_each_tract_into_a_left_to_right_chain():
    tm = default_tract_model()
    model = TractHMM(tract_model=tm, substates={"HST": 3, "TST": 2})
    from faciesseq.hmm.states import StateSpace

    states = StateSpace.build(tm, model.substates)
    assert states.labels() == ["HST.1", "HST.2", "HST.3", "FSST", "LST", "TST.1", "TST.2"]
    A = states.allowed
    assert A[0, 1] and not A[0, 2] and A[2, 3]  # one step along the chain at a time
    assert A[0, 3] and A[1, 3]  # a tract may end in any sub-state (a one-bed tract is possible)
    assert not A[1, 0]  # never back down the chain
    assert A[6, 0] and A[5, 0] and not A[5, 1]  # other tracts are entered at sub-state 1 only
    assert not A[3, 6]  # FSST -> TST.2: never into the middle of a tract


def test_custom_tract_model_without_skips():
    tm = TractModel.from_dict(
        {
            "tracts": [
                {"code": "R", "name": "regressive", "trend": "shallowing"},
                {"code": "T", "name": "transgressive", "trend": "deepening"},
            ],
            "order": ["R", "T"],
            "surfaces": [
                {"lower": "R", "upper": "T", "code": "MRS", "name": "maximum regressive"},
                {"lower": "T", "upper": "R", "code": "MFS", "name": "maximum flooding"},
            ],
        }
    )
    train = synth.cores(6, 60, seed=41)
    labels = [["T" if t == "TST" else "R" for t in s.beds["true_tract"]] for s in train]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        model = TractHMM(tract_model=tm, scheme=synth.scheme(), n_restarts=1).fit(
            train, labels=labels
        )
    interp = model.decode(train[:2])
    assert interp.tracts == ("R", "T")
    assert interp.surfaces == ("MRS", "MFS")


def test_parallel_restarts_give_the_serial_result(train):
    serial = TractHMM(scheme=synth.scheme(), n_restarts=2, random_state=8).fit(train[:6])
    parallel = TractHMM(scheme=synth.scheme(), n_restarts=2, random_state=8, n_jobs=2)
    parallel.fit(train[:6])
    assert [r["objective"] for r in parallel.restarts_] == [
        r["objective"] for r in serial.restarts_
    ]
    np.testing.assert_array_equal(parallel.transmat_, serial.transmat_)


@pytest.mark.slow
def test_supervised_fit_on_simulated_cores_beats_the_trend_rule():
    # Forward model of faciesseq.simulate, out-of-sample scenario
    # configs/scenario-ramp.yaml; seeds 41-43 fit, 44 decode (not used to tune).
    from pathlib import Path

    from faciesseq.hmm.baseline import trend_rule
    from faciesseq.scheme import load_scheme
    from faciesseq.simulate import load_scenario

    root = Path(__file__).resolve().parents[1]
    scenario = load_scenario(root / "configs" / "scenario-ramp.yaml")
    scheme = load_scheme(root / "configs" / "scheme-shoreface.yaml")

    train = synth.simulated_beds(scenario, (41, 42, 43))
    test = synth.simulated_beds(scenario, (44,))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = TractHMM(scheme=scheme, random_state=0).fit(train, labels="true_tract")
    acc = _bed_accuracy(model.decode(test), test)
    tm = default_tract_model()
    ranks = np.concatenate([[scheme.rank(f) for f in s.facies] for s in test])
    rule = trend_rule(ranks, np.array([len(s) for s in test]), tm)
    truth = np.concatenate([s.beds["true_tract"].to_numpy() for s in test])
    acc_rule = float(np.mean(np.array(tm.order)[rule] == truth))
    # measured 2026-12-01: 0.927 against 0.443 (0.797 with the per-bed pieces only,
    # 0.703 with the bare cycle graph and no rank_step feature)
    assert acc > acc_rule + 0.25


def test_one_bed_segments_and_missing_facies_decode(train, tmp_path):
    from faciesseq.hmm.modelfile import load_model, save_model

    with pytest.warns(UserWarning, match="no facies scheme"):
        model = TractHMM(n_restarts=1, random_state=0).fit(train[:4])
    path = save_model(model, tmp_path / "m.json")
    model = load_model(path)
    assert model.scheme is None and model.ranks_ is None
    one = Succession("ONE", 0, train[0].beds.iloc[:1].reset_index(drop=True), "m")
    blank = train[1].beds.copy()
    blank["facies"] = None
    interp = model.decode([one, Succession("BLANK", 0, blank, "m")])
    assert len(interp["ONE"].beds) == 1 and len(interp["ONE"].boundaries) == 0
    assert len(interp["ONE"].picks) == 0
    p = interp["BLANK"].beds[[f"p_{t}" for t in interp.tracts]].to_numpy()
    np.testing.assert_allclose(p.sum(axis=1), 1.0)


def test_bic_refuses_feature_sets_that_observe_different_variables(train):
    from faciesseq.errors import ConfigError

    with pytest.raises(ConfigError, match="same bed variables"):
        select_model(train, features=[("facies",), ("facies", "contact")], scheme=synth.scheme())
