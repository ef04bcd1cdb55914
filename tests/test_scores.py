"""Scores of a decoded tract column against a known one (faciesseq.scores).

Every expected number is worked out by hand in a comment beside the table, or taken
from scikit-learn where the tests say so.
"""

import warnings

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics import (
    accuracy_score,
    balanced_accuracy_score,
    precision_recall_fscore_support,
)

from faciesseq.errors import InputError
from faciesseq.scores import (
    balanced_tract_accuracy,
    boundary_f1,
    boundary_ratio,
    expected_calibration_error,
    half_cycle_accuracy,
    half_cycle_boundaries,
    surface_pick_scores,
)


def _beds(rows):
    return pd.DataFrame(rows, columns=["core", "top", "base", "true_tract", "tract"])


def test_balanced_tract_accuracy_weighs_recall_by_thickness_and_averages_true_tracts():
    beds = _beds(
        [
            ("A", 0.0, 1.0, "HST", "HST"),  # HST 1 m right
            ("A", 1.0, 4.0, "HST", "FSST"),  # HST 3 m wrong
            ("A", 4.0, 6.0, "TST", "TST"),  # TST 2 m right
            ("B", 0.0, 4.0, "TST", "TST"),  # TST 4 m right
            ("B", 4.0, 5.0, "LST", "TST"),  # LST 1 m wrong
        ]
    )
    beds["thickness"] = beds["base"] - beds["top"]
    # recall HST = 1 / 4 = 0.25; TST = 6 / 6 = 1; LST = 0 / 1 = 0;
    # FSST is not in the truth, so not averaged: balanced = (0.25 + 1 + 0) / 3 = 0.41667
    # plain thickness accuracy = (1 + 2 + 4) / 11 = 0.63636
    res = balanced_tract_accuracy(beds)
    assert res.recall == pytest.approx({"HST": 0.25, "TST": 1.0, "LST": 0.0})
    assert res.support == pytest.approx({"HST": 4.0, "TST": 6.0, "LST": 1.0})
    assert res.balanced_accuracy == pytest.approx(1.25 / 3)
    assert res.accuracy == pytest.approx(7 / 11)
    assert res.to_dict()["recall"]["HST"] == pytest.approx(0.25)
    # by bed count instead: HST 1/2, TST 2/2, LST 0/1 -> (0.5 + 1 + 0) / 3 = 0.5
    assert balanced_tract_accuracy(beds, weight=None).balanced_accuracy == pytest.approx(0.5)
    # without a thickness column the thickness comes from top and base: same answer
    same = balanced_tract_accuracy(beds.drop(columns="thickness"))
    assert same.balanced_accuracy == pytest.approx(1.25 / 3)
    with pytest.raises(InputError, match="no column 'weight_x'"):
        balanced_tract_accuracy(beds, weight="weight_x")


def test_half_cycle_accuracy_scores_the_transgressive_tract_against_the_rest():
    beds = _beds(
        [
            ("A", 0.0, 1.0, "HST", "HST"),  # regressive read regressive, 1 m
            ("A", 1.0, 4.0, "HST", "FSST"),  # regressive read regressive (wrong name), 3 m
            ("A", 4.0, 6.0, "TST", "TST"),  # transgressive right, 2 m
            ("B", 0.0, 4.0, "TST", "LST"),  # transgressive read regressive, 4 m
            ("B", 4.0, 5.0, "LST", "TST"),  # regressive read transgressive, 1 m
            ("B", 5.0, 6.0, None, "TST"),  # no truth: left out
        ]
    )
    # transgressive: 2 of 6 m = 1/3; regressive: 4 of 5 m = 0.8; balanced (1/3 + 0.8) / 2
    res = half_cycle_accuracy(beds)
    assert res.recall == pytest.approx({"regressive": 0.8, "transgressive": 1 / 3})
    assert res.balanced_accuracy == pytest.approx((1 / 3 + 0.8) / 2)
    # the four names themselves: HST 1/4, TST 2/6, LST 0/1 -> much lower
    assert balanced_tract_accuracy(beds).balanced_accuracy == pytest.approx((0.25 + 1 / 3) / 3)
    # a tract model whose rising tracts are named otherwise
    other = beds.replace({"TST": "T"})
    same = half_cycle_accuracy(other, transgressive=("T",))
    assert same.balanced_accuracy == pytest.approx(res.balanced_accuracy)


def test_boundary_ratio_counts_changes_between_beds_in_contact_only():
    beds = _beds(
        [
            # core A, given out of order on purpose
            ("A", 2.0, 3.0, "HST", "TST"),
            ("A", 0.0, 1.0, "TST", "TST"),
            ("A", 1.0, 2.0, "TST", "HST"),
            ("A", 5.0, 6.0, "HST", "LST"),  # gap 3-5 above: no boundary counted across it
            ("A", 6.0, 7.0, "FSST", "LST"),
            # core B starts: no boundary between A's last bed and B's first
            ("B", 0.0, 1.0, "LST", "TST"),
            ("B", 1.0, 2.0, "LST", "HST"),
        ]
    )
    # A in depth order: truth TST TST HST | HST FSST -> changes at 2.0 and 6.0 = 2
    #                   decoded TST HST TST | LST LST -> changes at 1.0 and 2.0 = 2
    # B: truth LST LST -> 0; decoded TST HST -> 1
    # overall 3 decoded / 2 true = 1.5; A 2/2 = 1; B 1/0 = NaN
    res = boundary_ratio(beds)
    assert (res.n_pred, res.n_true) == (3, 2)
    assert res.ratio == pytest.approx(1.5)
    per = res.per_core.set_index("core")
    assert per.loc["A", ["n_pred", "n_true"]].tolist() == [2, 2]
    assert per.loc["A", "ratio"] == pytest.approx(1.0)
    assert per.loc["B", ["n_pred", "n_true"]].tolist() == [1, 0]
    assert np.isnan(per.loc["B", "ratio"])
    assert res.to_dict()["per_core"][0]["core"] == "A"


def test_surface_pick_scores_counts_matches_within_the_tolerance_in_the_same_core():
    truth = pd.DataFrame(
        {
            "core": ["A", "A", "A", "B"],
            "surface": ["MFS", "MFS", "SB", "MFS"],
            "depth": [10.0, 30.0, 12.0, 5.0],
        }
    )
    picks = pd.DataFrame(
        {
            "core": ["A", "A", "A", "B", "C"],
            "surface": ["MFS", "MFS", "SB", "MFS", "MFS"],
            "depth": [11.5, 25.0, 30.0, 7.0, 10.0],
        }
    )
    # true MFS: A 10 (pick 11.5, 1.5 m: found), A 30 (nearest MFS pick 25, 5 m; the SB
    # pick at 30 is another kind: not found), B 5 (pick 7, 2 m: found, inclusive)
    # -> recall 2 / 3
    # MFS picks: A 11.5 (right), A 25 (no), B 7 (right), C 10 (no true surface in C)
    # -> precision 2 / 4
    res = surface_pick_scores(picks, truth, surface="MFS", tolerance=2.0)
    assert (res.n_true, res.n_true_found, res.n_picks, res.n_picks_right) == (3, 2, 4, 2)
    assert res.recall == pytest.approx(2 / 3)
    assert res.precision == pytest.approx(0.5)
    # SB: true A 12, pick A 30 -> 0 of 1 both ways
    sb = surface_pick_scores(picks, truth, surface="SB", tolerance=2.0)
    assert (sb.recall, sb.precision) == (0.0, 0.0)
    # no picks of a kind: precision undefined
    none = surface_pick_scores(picks.iloc[:0], truth)
    assert none.recall == 0.0 and np.isnan(none.precision)
    assert none.to_dict()["n_true"] == 3


def test_expected_calibration_error_by_equal_width_bins():
    # Guo et al. (2017), eq. 3, M = 10 bins ((0, .1], ..., (.9, 1]).
    p = [0.95, 0.95, 0.95, 0.95, 0.55, 0.55, 0.0]
    ok = [1, 1, 1, 0, 1, 0, 0]
    # bin (.9, 1]: 4 rows, acc 3/4 = 0.75, conf 0.95 -> |diff| 0.20, share 4/7
    # bin (.5, .6]: 2 rows, acc 0.5, conf 0.55 -> 0.05, share 2/7
    # bin [0, .1]: 1 row, acc 0, conf 0 -> 0, share 1/7
    # ECE = 4/7 * 0.2 + 2/7 * 0.05 = 0.9 / 7 = 0.128571...
    assert expected_calibration_error(p, ok) == pytest.approx(0.9 / 7)
    # weights: the wrong 0.95 row weighs 3 -> bin (.9, 1] weight 6, acc 3/6 = 0.5,
    # |0.5 - 0.95| = 0.45; total weight 9: ECE = 6/9 * 0.45 + 2/9 * 0.05 = 2.8 / 9
    w = [1, 1, 1, 3, 1, 1, 1]
    assert expected_calibration_error(p, ok, weights=w) == pytest.approx(2.8 / 9)
    # one bin: |mean acc - mean conf| = |4/7 - (4 * 0.95 + 2 * 0.55) / 7| = 0.9 / 7
    assert expected_calibration_error(p, ok, bins=1) == pytest.approx(0.9 / 7)
    # 0.3 * 10 is 3.0000000000000004 in floating point: 0.3 still belongs to (.2, .3]
    # with 0.25 -> one bin: acc 0.5, conf 0.275 -> 0.225
    assert expected_calibration_error([0.3, 0.25], [1, 0]) == pytest.approx(0.225)
    # a right edge belongs to the lower bin: p = 0.5 is in (.4, .5], with 0.45
    # -> one bin: acc 0.5, conf 0.475 -> 0.025
    assert expected_calibration_error([0.5, 0.45], [1, 0]) == pytest.approx(0.025)
    assert np.isnan(expected_calibration_error([], []))
    with pytest.raises(InputError, match="one length"):
        expected_calibration_error([0.5], [1, 0])
    with pytest.raises(InputError, match=r"\[0, 1\]"):
        expected_calibration_error([1.2], [1])


def test_half_cycle_boundaries_of_a_tract_column_and_of_a_marine_indicator():
    beds = pd.DataFrame(
        {
            "core": ["W"] * 6 + ["V"] * 2,
            "top": [0.0, 1.0, 2.0, 3.0, 6.0, 7.0, 0.0, 1.0],
            "base": [1.0, 2.0, 3.0, 4.0, 7.0, 8.0, 1.0, 2.0],
            "tract": ["TST", "HST", "FSST", "LST", "HST", "TST", "LST", "TST"],
            "NM_M": [2, 2, 1, 1, 2, 1, 1, 2],
        }
    )
    # W tract: TST|HST (both marine: none), HST|FSST at 2.0 (yes), FSST|LST (none),
    # LST | gap 4-6 | HST (across a gap: none), HST|TST (none) -> [2.0]
    # V: LST|TST at 1.0 -> [1.0]
    got = half_cycle_boundaries(beds)
    assert list(zip(got["core"], got["depth"])) == [("W", 2.0), ("V", 1.0)]
    assert got["upper_marine"].tolist() == [True, False]
    # NM_M (2 marine): W 2|2, 2|1 at 2.0, 1|1, gap, 2|1 at 7.0 -> [2.0, 7.0]; V 1|2 at 1.0
    nm = half_cycle_boundaries(beds, column="NM_M", marine=(2,))
    assert list(zip(nm["core"], nm["depth"])) == [("W", 2.0), ("W", 7.0), ("V", 1.0)]
    # the same column read as floats (as a CSV with missing values gives it): 2 is 2.0
    as_float = half_cycle_boundaries(beds.astype({"NM_M": float}), column="NM_M", marine=(2,))
    assert as_float["depth"].tolist() == [2.0, 7.0, 1.0]
    # text values compare as text
    as_text = half_cycle_boundaries(beds.astype({"NM_M": str}), column="NM_M", marine=("2",))
    assert as_text["depth"].tolist() == [2.0, 7.0, 1.0]


def test_boundary_f1_matches_one_to_one_closest_pair_first():
    # true 10, 20; decoded 9, 11, 19.5, 40; tolerance 2
    # pairs within 2: (9,10) 1.0, (11,10) 1.0, (19.5,20) 0.5
    # closest first: (19.5, 20); then the tie 9 / 11 for 10 -> shallower decoded (9)
    # wins; 11 has nothing left. matched 2: precision 2/4, recall 2/2,
    # F1 = 2 * 2 / (4 + 2) = 2/3
    res = boundary_f1([11, 9, 40, 19.5], [20, 10], tolerance=2)
    assert (res.n_pred, res.n_true, res.n_matched) == (4, 2, 2)
    assert (res.precision, res.recall) == (0.5, 1.0)
    assert res.f1 == pytest.approx(2 / 3)
    assert res.ratio == 2.0
    # greedy by distance, not by depth: true 10, 13; decoded 11.9 (1.9 from 10, 1.1 from
    # 13) and 12.5 (0.5 from 13). Closest is (12.5, 13); (11.9, 13) at 1.1 is then
    # taken, so (11.9, 10) at 1.9 -> 2 matched
    assert boundary_f1([11.9, 12.5], [10, 13], tolerance=2).n_matched == 2
    # the tolerance is inclusive; one decoded boundary cannot match two true ones
    assert boundary_f1([5.0], [3.0, 7.0], tolerance=2).n_matched == 1
    # no decoded boundary: precision undefined, recall 0, F1 0
    empty = boundary_f1([], [1.0], tolerance=1)
    assert np.isnan(empty.precision) and empty.recall == 0 and empty.f1 == 0
    assert np.isnan(boundary_f1([], [], tolerance=1).f1)
    assert boundary_f1([1.0], [1.0], 0.0).to_dict()["f1"] == 1.0


# ---------------------------------------------------------------- scikit-learn as reference
# The numbers below are pinned to scikit-learn (sklearn.metrics, the version the test
# extra installs), an implementation of the same definitions written independently of
# this project: balanced_accuracy_score, accuracy_score, confusion_matrix,
# precision_recall_fscore_support, f1_score, brier_score_loss, log_loss and
# sklearn.calibration.calibration_curve.

SK_TRACTS = ["HST", "FSST", "LST", "TST"]


def _column(rows):
    """Beds of one core in contact from (truth, decoded, thickness) rows."""
    thick = np.array([r[2] for r in rows], dtype=float)
    top = np.concatenate([[0.0], np.cumsum(thick)[:-1]])
    return pd.DataFrame(
        {
            "core": "A",
            "top": top,
            "base": top + thick,
            "true_tract": [r[0] for r in rows],
            "tract": [r[1] for r in rows],
        }
    )


def test_balanced_tract_accuracy_is_scikit_learns_weighted_balanced_accuracy():
    # FSST is decoded but never true (its recall is not averaged); HST is true but
    # never decoded (recall 0)
    beds = _column(
        [
            ("TST", "TST", 2.0),
            ("TST", "FSST", 0.5),
            ("HST", "TST", 1.5),
            ("HST", "FSST", 1.0),
            ("LST", "LST", 3.0),
            ("LST", "TST", 1.0),
        ]
    )
    res = balanced_tract_accuracy(beds)
    y, pred, w = beds["true_tract"], beds["tract"], beds["base"] - beds["top"]
    with warnings.catch_warnings():  # scikit-learn warns of FSST, decoded and never true
        warnings.simplefilter("ignore", UserWarning)
        reference = balanced_accuracy_score(y, pred, sample_weight=w)
    assert res.balanced_accuracy == pytest.approx(reference)
    assert res.accuracy == pytest.approx(accuracy_score(y, pred, sample_weight=w))
    assert set(res.recall) == {"TST", "HST", "LST"}
    _, sk_recall, _, _ = precision_recall_fscore_support(
        y, pred, labels=["TST", "HST", "LST"], sample_weight=w, zero_division=0
    )
    assert [res.recall[t] for t in ("TST", "HST", "LST")] == pytest.approx(sk_recall)
    # unweighted, as scikit-learn without sample_weight
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        unweighted = balanced_accuracy_score(y, pred)
    assert balanced_tract_accuracy(beds, weight=None).balanced_accuracy == pytest.approx(unweighted)


def test_balanced_tract_accuracy_leaves_out_a_tract_whose_beds_have_no_thickness():
    # LST is true only on beds of zero thickness: it has no weight in the truth, so no
    # recall to average, and scikit-learn's weighted balanced accuracy leaves it out
    # (TST 2 / 3 m right, HST 1 / 1 m: (2/3 + 1) / 2); it must not turn the score NaN
    beds = _column(
        [
            ("TST", "TST", 2.0),
            ("LST", "TST", 0.0),
            ("TST", "HST", 1.0),
            ("LST", "LST", 0.0),
            ("HST", "HST", 1.0),
        ]
    )
    res = balanced_tract_accuracy(beds)
    w = beds["base"] - beds["top"]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)
        reference = balanced_accuracy_score(beds["true_tract"], beds["tract"], sample_weight=w)
    assert reference == pytest.approx((2 / 3 + 1) / 2)
    assert res.balanced_accuracy == pytest.approx(reference)
    assert res.support["LST"] == 0.0 and np.isnan(res.recall["LST"])
    # zero-thickness beds weigh nothing in the plain accuracy either: 3 of 4 m
    plain = accuracy_score(beds["true_tract"], beds["tract"], sample_weight=w)
    assert res.accuracy == pytest.approx(plain)
    assert res.accuracy == pytest.approx(0.75)


def _labelled_example():
    """Five beds: LST is never true, FSST never decoded (scores 0 there, not an error)."""
    truth = np.array(["HST", "HST", "TST", "TST", "FSST", "TST"], dtype=object)
    decoded = np.array(["HST", "TST", "TST", "LST", "TST", "TST"], dtype=object)
    probabilities = np.array(  # columns SK_TRACTS: HST, FSST, LST, TST
        [
            [0.62, 0.08, 0.10, 0.20],
            [0.33, 0.11, 0.08, 0.48],
            [0.05, 0.10, 0.12, 0.73],
            [0.14, 0.09, 0.47, 0.30],
            [0.21, 0.17, 0.18, 0.44],
            [0.02, 0.03, 0.04, 0.91],
        ]
    )
    return truth, decoded, probabilities


def test_validation_scores_are_scikit_learns():
    from sklearn.metrics import brier_score_loss, confusion_matrix, f1_score

    from faciesseq.validation import score_interpretation

    truth, decoded, probs = _labelled_example()
    s = score_interpretation("model", truth, decoded, probs, SK_TRACTS, [], ["MFS"])
    assert s.accuracy == pytest.approx(accuracy_score(truth, decoded))
    prec, rec, f1, support = precision_recall_fscore_support(
        truth, decoded, labels=SK_TRACTS, zero_division=0
    )
    got = s.per_tract.loc[SK_TRACTS]
    assert got["precision"].to_numpy() == pytest.approx(prec)
    assert got["recall"].to_numpy() == pytest.approx(rec)
    assert got["f1"].to_numpy() == pytest.approx(f1)
    assert got["support"].tolist() == support.tolist() == [2, 1, 0, 3]
    assert s.confusion.loc[SK_TRACTS, SK_TRACTS].to_numpy().tolist() == (
        confusion_matrix(truth, decoded, labels=SK_TRACTS).tolist()
    )
    # macro F1 over the tracts the interpreter used (LST has no support)
    used = ["HST", "FSST", "TST"]
    assert s.macro_f1 == pytest.approx(
        f1_score(truth, decoded, labels=used, average="macro", zero_division=0)
    )
    # scikit-learn's multiclass Brier score is mean sum_k (p_k - y_k)^2 (0 to 2), with
    # the columns in sorted label order
    order = sorted(SK_TRACTS)
    sorted_probs = probs[:, [SK_TRACTS.index(t) for t in order]]
    assert s.brier == pytest.approx(brier_score_loss(truth, sorted_probs, labels=order))
    # the baseline's 0/1 probabilities: Brier 2 x the error rate
    onehot = (decoded[:, None] == np.asarray(SK_TRACTS)[None, :]).astype(float)
    base = score_interpretation("baseline", truth, decoded, onehot, SK_TRACTS, [], ["MFS"])
    assert base.brier == pytest.approx(2 * (1 - accuracy_score(truth, decoded)))


def test_validation_reliability_is_scikit_learns_calibration_curve():
    from sklearn.calibration import calibration_curve

    from faciesseq.validation import score_interpretation

    truth, decoded, probs = _labelled_example()
    s = score_interpretation("model", truth, decoded, probs, SK_TRACTS, [], ["MFS"])
    chosen = probs[np.arange(len(decoded)), [SK_TRACTS.index(t) for t in decoded]]
    right = decoded == truth
    # scikit-learn's uniform bins are (lo, hi] with 0 in the first, as here; no
    # probability of this example lies on an edge
    frac, mean = calibration_curve(right, chosen, n_bins=10, strategy="uniform")
    filled = s.reliability[s.reliability["count"] > 0]
    assert filled["fraction_correct"].to_numpy() == pytest.approx(frac)
    assert filled["mean_probability"].to_numpy() == pytest.approx(mean)
    counts = np.histogram(chosen, bins=10, range=(0, 1))[0]
    assert filled["count"].tolist() == counts[counts > 0].tolist() == [3, 1, 1, 1]


def test_expected_calibration_error_against_scikit_learns_calibration_curve():
    from sklearn.calibration import calibration_curve

    truth, decoded, probs = _labelled_example()
    chosen = probs[np.arange(len(decoded)), [SK_TRACTS.index(t) for t in decoded]]
    right = decoded == truth
    frac, mean = calibration_curve(right, chosen, n_bins=10, strategy="uniform")
    counts = np.histogram(chosen, bins=10, range=(0, 1))[0]  # no value on an edge
    counts = counts[counts > 0]
    reference = float(np.sum(counts / counts.sum() * np.abs(frac - mean)))
    assert expected_calibration_error(chosen, right) == pytest.approx(reference)
    # by hand: bins (.4,.5] {0.48 wrong, 0.47 wrong, 0.44 wrong}: |0 - 0.46333| x 3/6;
    # (.6,.7] {0.62 right}: 0.38 x 1/6; (.7,.8] {0.73 right}: 0.27 x 1/6;
    # (.9,1] {0.91 right}: 0.09 x 1/6 -> (1.39 + 0.38 + 0.27 + 0.09) / 6 = 2.13 / 6
    assert reference == pytest.approx(2.13 / 6)


def test_held_out_log_loss_and_brier_are_scikit_learns():
    from sklearn.metrics import brier_score_loss, log_loss

    from faciesseq.hmm.calibration import HeldOut, held_out_scores

    truth, _, probs = _labelled_example()
    # one state per tract, even start and transitions: the posterior of every bed is
    # its emission normalised, so the held-out beds carry exactly these probabilities
    fold = HeldOut(
        log_emission=np.log(probs),
        lengths=np.array([len(probs)]),
        startprob=np.full(4, 0.25),
        transmat=np.full((4, 4), 0.25),
        labels=np.array([SK_TRACTS.index(t) for t in truth]),
        state_tract=np.arange(4),
    )
    got = held_out_scores([fold], 1.0)
    order = sorted(SK_TRACTS)
    sorted_probs = probs[:, [SK_TRACTS.index(t) for t in order]]
    assert got["log_loss"] == pytest.approx(log_loss(truth, sorted_probs, labels=order))
    assert got["brier"] == pytest.approx(brier_score_loss(truth, sorted_probs, labels=order))
    assert got["accuracy"] == pytest.approx(
        accuracy_score(truth, np.asarray(SK_TRACTS)[probs.argmax(axis=1)])
    )


def test_boundary_f1_of_a_core_worked_by_hand():
    # true boundaries 5, 12, 20, 31; decoded 4.2, 5.5, 13.4, 18.6, 26; tolerance 1.5 m.
    # Pairs within 1.5: (4.2, 5) 0.8, (5.5, 5) 0.5, (13.4, 12) 1.4, (18.6, 20) 1.4.
    # Closest first: 5.5 takes 5; 4.2 then has nothing free (one to one); 13.4 takes 12
    # and 18.6 takes 20 (1.4 each); 26 is 5 from 31 and 6 from 20: unmatched; 31 is
    # never found. matched 3 of 5 decoded and of 4 true:
    # precision 3/5, recall 3/4, F1 = 2 x 3 / (5 + 4) = 2/3 (= 2PR / (P + R) = 0.9/1.35)
    res = boundary_f1([26.0, 4.2, 18.6, 5.5, 13.4], [31.0, 5.0, 20.0, 12.0], tolerance=1.5)
    assert (res.n_pred, res.n_true, res.n_matched) == (5, 4, 3)
    assert res.precision == pytest.approx(3 / 5)
    assert res.recall == pytest.approx(3 / 4)
    assert res.f1 == pytest.approx(2 / 3)
    assert res.f1 == pytest.approx(2 * res.precision * res.recall / (res.precision + res.recall))
    # a tolerance of 1.3 loses the two pairs 1.4 apart: 1 matched, F1 = 2 / 9
    assert boundary_f1([26.0, 4.2, 18.6, 5.5, 13.4], [31.0, 5.0, 20.0, 12.0], 1.3).f1 == (
        pytest.approx(2 / 9)
    )
