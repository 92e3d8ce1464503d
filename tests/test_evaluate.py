"""Tests of the evaluation metrics, each against an outside source named beside the check."""

from __future__ import annotations

import random

import pytest
from sklearn.metrics import accuracy_score, f1_score, precision_recall_fscore_support

from catmap.evaluate import (
    accuracy,
    brand_scores,
    calibration_bins,
    expected_calibration_error,
    f1_scores,
    group_accuracy,
    hierarchical_scores,
    label_accuracy,
    per_node_scores,
    risk_coverage,
    top_confusions,
)


def _random_labels(seed: int, n: int, classes: int) -> tuple[list[str], list[str]]:
    rng = random.Random(seed)
    names = [f"{1000 + k}" for k in range(classes)]
    # predicted labels come from a slightly larger set, so some are never true
    extra = [*names, "9998", "9999"]
    y_true = [rng.choice(names) for _ in range(n)]
    y_pred = [t if rng.random() < 0.4 else rng.choice(extra) for t in y_true]
    return y_true, y_pred


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_flat_scores_match_sklearn(seed: int) -> None:
    # reference: sklearn.metrics.f1_score (average="macro" / "weighted"), accuracy_score
    y_true, y_pred = _random_labels(seed, 300, 12)
    macro, weighted = f1_scores(y_true, y_pred)
    assert macro == pytest.approx(f1_score(y_true, y_pred, average="macro", zero_division=0))
    assert weighted == pytest.approx(
        f1_score(y_true, y_pred, average="weighted", zero_division=0)
    )
    assert accuracy(y_true, y_pred) == pytest.approx(accuracy_score(y_true, y_pred))


def test_per_node_scores_match_sklearn() -> None:
    # reference: sklearn.metrics.precision_recall_fscore_support(average=None)
    y_true, y_pred = _random_labels(5, 200, 6)
    labels = sorted(set(y_true) | set(y_pred))
    precision, recall, f1, support = precision_recall_fscore_support(
        y_true, y_pred, labels=labels, zero_division=0
    )
    scores = per_node_scores(y_true, y_pred)
    assert [s.node_id for s in scores] == labels
    for k, s in enumerate(scores):
        assert s.precision == pytest.approx(precision[k])
        assert s.recall == pytest.approx(recall[k])
        assert s.f1 == pytest.approx(f1[k])
        assert s.support == support[k]


def test_empty_inputs_give_zero() -> None:
    assert accuracy([], []) == 0.0
    assert f1_scores([], []) == (0.0, 0.0)
    assert risk_coverage([], []).aurc == 0.0
    assert expected_calibration_error([], []) == 0.0


def test_length_mismatch_is_refused() -> None:
    with pytest.raises(ValueError, match="different lengths"):
        accuracy(["1"], ["1", "2"])


# A small tree for the hierarchical example:
#   A ── A1 ── A1a
#    │     └── A1b
#    └── A2
#   B ── B1
PARENTS: dict[str, str | None] = {
    "A": None,
    "A1": "A",
    "A1a": "A1",
    "A1b": "A1",
    "A2": "A",
    "B": None,
    "B1": "B",
}


def test_hierarchical_scores_worked_example() -> None:
    # Definition: Kiritchenko, Matwin, Nock & Famili (2006), "Learning and evaluation in the
    # presence of class hierarchies": extend true set T and predicted set P with all ancestors,
    # hP = Σ|T∩P| / Σ|P|, hR = Σ|T∩P| / Σ|T|, hF = 2·hP·hR / (hP + hR). Worked by hand:
    #   1. true A1a, pred A1a: T={A,A1,A1a} P={A,A1,A1a}  |T∩P|=3 |P|=3 |T|=3
    #   2. true A1a, pred A1b: T={A,A1,A1a} P={A,A1,A1b}  |T∩P|=2 |P|=3 |T|=3
    #   3. true A1b, pred A1 (an inner node, back-off): T={A,A1,A1b} P={A,A1}
    #                                                     |T∩P|=2 |P|=2 |T|=3
    #   4. true A2,  pred B1:  T={A,A2} P={B,B1}          |T∩P|=0 |P|=2 |T|=2
    #   Σ|T∩P| = 7, Σ|P| = 10, Σ|T| = 11
    #   hP = 7/10 = 0.7, hR = 7/11, hF = 2·0.7·(7/11) / (0.7 + 7/11) = 9.8 / 14.7 = 2/3
    scores = hierarchical_scores(["A1a", "A1a", "A1b", "A2"], ["A1a", "A1b", "A1", "B1"], PARENTS)
    assert (scores.overlap, scores.predicted, scores.true) == (7, 10, 11)
    assert scores.precision == pytest.approx(0.7)
    assert scores.recall == pytest.approx(7 / 11)
    assert scores.f1 == pytest.approx(2 / 3)


def test_hierarchical_no_answer_is_an_empty_set() -> None:
    # Same definition: no prediction adds nothing to Σ|P| and Σ|T∩P| but its |T| to Σ|T|.
    #   true A1a, pred A1a: 3/3/3;  true A2, no answer: T={A,A2} P={} → 0/0/2
    #   hP = 3/3 = 1, hR = 3/5
    scores = hierarchical_scores(["A1a", "A2"], ["A1a", None], PARENTS)
    assert scores.precision == pytest.approx(1.0)
    assert scores.recall == pytest.approx(0.6)


def test_hierarchical_unknown_node_raises() -> None:
    with pytest.raises(KeyError, match="Z9"):
        hierarchical_scores(["A1a"], ["Z9"], PARENTS)


def test_ece_worked_example() -> None:
    # Definition: Guo, Pleiss, Sun & Weinberger (2017), "On Calibration of Modern Neural
    # Networks": M = 15 equal-width bins, bin m holds confidences in ((m-1)/M, m/M],
    # ECE = Σ_m |B_m|/n · |acc(B_m) − conf(B_m)|. Worked by hand (n = 4):
    #   0.95 right, 0.97 wrong → bin 15 (14/15 ≈ 0.933, 1]: conf 0.96, acc 0.5, gap 0.46
    #   0.50 right             → bin 8 (7/15 ≈ 0.467, 8/15 ≈ 0.533]: conf 0.5, acc 1, gap 0.5
    #   0.25 wrong             → bin 4 (3/15 = 0.2, 4/15 ≈ 0.267]: conf 0.25, acc 0, gap 0.25
    #   ECE = (2·0.46 + 1·0.5 + 1·0.25) / 4 = 1.67 / 4 = 0.4175
    confidences = [0.95, 0.97, 0.5, 0.25]
    correct = [True, False, True, False]
    bins = calibration_bins(confidences, correct)
    assert bins.ece == pytest.approx(0.4175)
    assert expected_calibration_error(confidences, correct) == pytest.approx(0.4175)
    assert len(bins.counts) == 15
    assert bins.counts[14] == 2 and bins.counts[7] == 1 and bins.counts[3] == 1
    assert bins.mean_confidence[14] == pytest.approx(0.96)
    assert bins.accuracy[14] == pytest.approx(0.5)


def test_ece_bin_edges() -> None:
    # Same definition: bins are closed on the right, so 1.0 is in the last bin; 0.0 has no
    # bin in ((m-1)/M, m/M] and is put in the first (it cannot be correct-and-confident).
    bins = calibration_bins([0.0, 1.0], [False, True])
    assert bins.counts[0] == 1 and bins.counts[14] == 1
    assert bins.ece == pytest.approx(0.0)


def test_ece_refuses_out_of_range() -> None:
    with pytest.raises(ValueError, match="0..1"):
        expected_calibration_error([1.2], [True])


def test_risk_coverage_worked_example() -> None:
    # Definition: Geifman & El-Yaniv (2017), "Selective Classification for Deep Neural
    # Networks": keep the k most confident answers; coverage k/n, risk = errors among them / k;
    # AURC (Geifman, Uziel & El-Yaniv, 2019) = mean risk over k = 1..n. Worked by hand:
    #   confidences 0.9 0.8 0.7 0.6, right / wrong / right / wrong
    #   errors kept: 0 1 1 2  → risk 0/1, 1/2, 1/3, 2/4
    #   AURC = (0 + 0.5 + 1/3 + 0.5) / 4 = 1/3
    curve = risk_coverage([0.7, 0.9, 0.6, 0.8], [True, True, False, False])
    assert curve.coverage == pytest.approx([0.25, 0.5, 0.75, 1.0])
    assert curve.risk == pytest.approx([0.0, 0.5, 1 / 3, 0.5])
    assert curve.thresholds == pytest.approx([0.9, 0.8, 0.7, 0.6])
    assert curve.aurc == pytest.approx(1 / 3)


def test_risk_coverage_ties_use_the_expected_order() -> None:
    # Same definition, with two answers tied at 0.5 (one right, one wrong): over both orders
    # the expected errors after taking one of them is 0.5. By hand:
    #   k=1: 0.9 right → risk 0;  k=2: 0.5/2 = 0.25;  k=3: 1/3
    #   AURC = (0 + 0.25 + 1/3) / 3 = 7/36
    first = risk_coverage([0.9, 0.5, 0.5], [True, True, False])
    second = risk_coverage([0.5, 0.9, 0.5], [False, True, True])
    assert first.risk == pytest.approx([0.0, 0.25, 1 / 3])
    assert second.risk == pytest.approx(first.risk)
    assert first.aurc == pytest.approx(7 / 36)


def test_top_confusions_by_hand() -> None:
    # Counted by hand: 1→2 twice, 3→1 once, 2→3 once; correct answers are not confusions.
    y_true = ["1", "1", "1", "3", "2", "2"]
    y_pred = ["2", "2", "1", "1", "3", "2"]
    assert top_confusions(y_true, y_pred) == [("1", "2", 2), ("2", "3", 1), ("3", "1", 1)]
    assert top_confusions(y_true, y_pred, limit=1) == [("1", "2", 2)]


def test_group_accuracy_by_hand() -> None:
    # By hand: group x has 2 products, 1 right; group y has 1 product, right.
    result = group_accuracy(["1", "2", "3"], ["1", "9", "3"], ["x", "x", "y"])
    assert result == {"x": (0.5, 2), "y": (1.0, 1)}


def test_brand_scores_by_hand() -> None:
    # Counting rule of the task (common practice, no source): per product
    #   gold Alvero,  pred alvero   → TP (case is ignored)
    #   gold Alvero,  pred ""       → FN
    #   gold Brimsel, pred Tovaro   → FP and FN
    #   gold "",      pred Tovaro   → FP
    #   gold "",      pred ""       → nothing
    # TP=1 FP=2 FN=2 → P = 1/3, R = 1/3, F1 = 1/3
    scores = brand_scores(
        ["Alvero", "Alvero", "Brimsel", "", ""], ["alvero", "", "Tovaro", "Tovaro", ""]
    )
    assert (scores.true_positives, scores.false_positives, scores.false_negatives) == (1, 2, 2)
    assert scores.precision == pytest.approx(1 / 3)
    assert scores.recall == pytest.approx(1 / 3)
    assert scores.f1 == pytest.approx(1 / 3)


def test_label_accuracy_and_confusion_by_hand() -> None:
    # By hand: 3 products with gold (the empty gold is left out), 2 right.
    scores = label_accuracy(
        ["female", "male", "male", ""], ["female", "female", "male", "unisex"]
    )
    assert scores.products == 3
    assert scores.accuracy == pytest.approx(2 / 3)
    assert scores.confusion == {"female": {"female": 1}, "male": {"female": 1, "male": 1}}
