"""Tests of the evaluation metrics, each against an outside source named beside the check."""

from __future__ import annotations

import json
import random
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pytest
from sklearn.metrics import accuracy_score, f1_score, precision_recall_fscore_support

from catmap.errors import InputError
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
from catmap.evaluate.report_html import write_report
from catmap.evaluate.run import Gold, collect, evaluation_report, model_mapper, read_gold_csv
from catmap.records import Attributes, Mapping, Product, Reject
from catmap.tree.taxonomy import CategoryTree, load_tree


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
    assert weighted == pytest.approx(f1_score(y_true, y_pred, average="weighted", zero_division=0))
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
    scores = label_accuracy(["female", "male", "male", ""], ["female", "female", "male", "unisex"])
    assert scores.products == 3
    assert scores.accuracy == pytest.approx(2 / 3)
    assert scores.confusion == {"female": {"female": 1}, "male": {"female": 1, "male": 1}}


# -- report data and the HTML report ----------------------------------------------------------

AUDIENCE_ALL = "who=female,male,unisex age=adult,kids,baby"
TREE_TEXT = "\n".join(
    [
        "@tree-version 1",
        f"1000 | - | Apparel | {AUDIENCE_ALL} | - | en: clothing | fr: habits | de: Kleidung"
        " | es: ropa",
        "1010 | 1000 | Tops | . | - | en: tops | fr: hauts | de: Oberteile | es: tops",
        "1011 | 1010 | T-shirts | . | - | en: tee | fr: tee-shirt | de: T-Shirt | es: camiseta",
        "1012 | 1010 | Blouses | who=female | - | en: blouse | fr: chemisier | de: Bluse"
        " | es: blusa",
        "1500 | - | Kitchen | none | - | en: kitchen | fr: cuisine | de: Küche | es: cocina",
        "1505 | 1500 | Cookware | . | - | en: cookware | fr: batterie | de: Kochgeschirr"
        " | es: menaje",
        "1510 | 1505 | Pans | . | - | en: pan | fr: poêle | de: Pfanne | es: sartén",
        "",
    ]
)


@pytest.fixture()
def small_tree(tmp_path: Path) -> CategoryTree:
    path = tmp_path / "tree.txt"
    path.write_text(TREE_TEXT, encoding="utf-8")
    return load_tree(path)


def _mapping(node: str, confidence: float, method: str = "model") -> Mapping:
    return Mapping(node_id=node, confidence=confidence, method=method)


def test_evaluation_report_figures(small_tree: CategoryTree) -> None:
    # Four products worked by hand:
    #   gold 1011, answer 1011 @0.9  → right (leaf and under-gold)
    #   gold 1012, answer 1011 @0.8  → wrong
    #   gold 1012, answer 1010 @0.6 (back-off) → leaf-wrong, but 1012 lies under 1010
    #   gold 1510, answer 1510 @0.7  → right
    # leaf accuracy 2/4; answered under gold 3/4; ECE over 15 bins:
    #   0.9 → bin 14 ((13/15, 14/15]) right: |1 − 0.9| = 0.1;  0.8 → bin 12 wrong: 0.8
    #   0.6 → bin 9 right: 0.4;  0.7 → bin 11 right: 0.3;  ECE = (0.1+0.8+0.4+0.3)/4 = 0.4
    gold = [Gold("1011"), Gold("1012"), Gold("1012"), Gold("1510")]
    mappings = [
        _mapping("1011", 0.9),
        _mapping("1011", 0.8),
        _mapping("1010", 0.6, "backoff"),
        _mapping("1510", 0.7),
    ]
    report = evaluation_report(tree=small_tree, gold=gold, mappings=mappings)
    assert report["products"] == 4
    assert report["mapping"]["accuracy"] == pytest.approx(0.5)
    assert report["mapping"]["answered_under_gold"] == pytest.approx(0.75)
    assert report["mapping"]["ece"] == pytest.approx(0.4)
    assert report["mapping"]["by_method"] == {"backoff": 1, "model": 3}
    assert report["confusions"][0] == {
        "true": "1012",
        "true_path": "Apparel > Tops > Blouses",
        "predicted": "1010",
        "predicted_path": "Apparel > Tops",
        "count": 1,
    }
    assert {d["node_id"]: d["accuracy"] for d in report["departments"]} == {
        "1000": pytest.approx(1 / 3),
        "1500": pytest.approx(1.0),
    }
    assert report["attributes"] is None
    assert report["at_accept_threshold"] is None
    json.dumps(report)  # the report must be JSON-ready as it is


def test_error_rate_at_the_accept_threshold_and_nodes_by_errors(
    small_tree: CategoryTree,
) -> None:
    # The four products above, worked by hand at threshold 0.75: 1011 @0.9 (right) and 1011
    # @0.8 (wrong, gold 1012) are accepted; the back-off never is; 1510 @0.7 is below.
    gold = [Gold("1011"), Gold("1012"), Gold("1012"), Gold("1510")]
    mappings = [
        _mapping("1011", 0.9),
        _mapping("1011", 0.8),
        _mapping("1010", 0.6, "backoff"),
        _mapping("1510", 0.7),
    ]
    report = evaluation_report(
        tree=small_tree, gold=gold, mappings=mappings, accept_threshold=0.75
    )
    assert report["at_accept_threshold"] == {
        "threshold": 0.75, "accepted": 2, "coverage": 0.5, "wrong": 1, "error_rate": 0.5,
    }
    # 1012: both its products missed (2 errors); 1011: one wrongly here; 1010: one wrongly
    # here; 1510: none. Most errors first, then most gold products.
    nodes = [(n["node_id"], n["errors"], n["missed"], n["wrongly_here"]) for n in report["nodes"]]
    assert nodes == [("1012", 2, 2, 0), ("1011", 1, 0, 1), ("1010", 1, 0, 1), ("1510", 0, 0, 0)]


def test_evaluation_report_attributes(small_tree: CategoryTree) -> None:
    # By hand: brands Alvero=alvero (TP), Brimsel vs "" (FN); who 1 of 2 right; age 2 of 2.
    gold = [Gold("1011", "Alvero", "male", "adult"), Gold("1012", "Brimsel", "female", "adult")]
    attributes = [
        Attributes(brand="Alvero", who="male", age="adult"),
        Attributes(brand="", who="unisex", age="adult"),
    ]
    mappings = [_mapping("1011", 0.9), _mapping("1012", 0.9)]
    report = evaluation_report(tree=small_tree, gold=gold, mappings=mappings, attributes=attributes)
    brand = report["attributes"]["brand"]
    assert (brand["precision"], brand["recall"]) == (pytest.approx(1.0), pytest.approx(0.5))
    assert report["attributes"]["who"]["accuracy"] == pytest.approx(0.5)
    assert report["attributes"]["who"]["confusion"] == {
        "female": {"unisex": 1},
        "male": {"male": 1},
    }
    assert report["attributes"]["age"]["accuracy"] == pytest.approx(1.0)


def test_html_report_is_self_contained_and_escaped(
    small_tree: CategoryTree, tmp_path: Path
) -> None:
    gold = [Gold("1011"), Gold("1012"), Gold("1510")]
    mappings = [_mapping("1011", 0.9), _mapping("1011", 0.4), _mapping("1510", 0.7)]
    report = evaluation_report(tree=small_tree, gold=gold, mappings=mappings)
    report["feed"] = "<shop & co>.csv"
    html_path, json_path = write_report(report, tmp_path / "out")
    html = html_path.read_text(encoding="utf-8")
    assert html.count('src="data:image/png;base64,') == 3
    assert "&lt;shop &amp; co&gt;.csv" in html and "<shop & co>" not in html
    assert "http://" not in html and "https://" not in html  # nothing fetched when opened
    assert json.loads(json_path.read_text(encoding="utf-8"))["products"] == 3


def test_read_gold_csv(tmp_path: Path) -> None:
    path = tmp_path / "gold.csv"
    path.write_text(
        "\ufeffproduct_id,gold_node,gold_brand,gold_who,gold_age\n"
        "a1,1011,Alvero,male,adult\n"
        "a2,1510,,not_applicable,not_applicable\n"
        "a1,1012,Other,female,adult\n",
        encoding="utf-8",
    )
    gold = read_gold_csv(path)
    assert gold == {
        "a1": Gold("1011", "Alvero", "male", "adult"),
        "a2": Gold("1510", "", "not_applicable", "not_applicable"),
    }


def test_read_gold_csv_names_missing_column(tmp_path: Path) -> None:
    path = tmp_path / "gold.csv"
    path.write_text("product_id,node\na1,1011\n", encoding="utf-8")
    with pytest.raises(InputError, match="no 'gold_node' column") as caught:
        read_gold_csv(path)
    assert caught.value.line == 1 and "columns found: product_id, node" in str(caught.value)


def test_collect_joins_gold_and_counts_left_out(small_tree: CategoryTree) -> None:
    products: list[Product | Reject] = [
        Product("a1", "Tee", extra={"gold_node": "1011", "split": "test"}),
        Product("a2", "Pan", extra={"gold_node": "1510", "split": "train"}),
        Product("a3", "Thing", extra={"gold_node": "", "split": "test"}),
        Product("a4", "Thing", extra={"gold_node": "7777", "split": "test"}),
        Reject("missing_title", "no title", 5, "line 5", "a5,,"),
    ]
    seen: list[str] = []

    def mapper(chunk: Sequence[Product]) -> list[Mapping]:
        seen.extend(p.product_id for p in chunk)
        return [_mapping("1011", 0.5) for _ in chunk]

    collected = collect(iter(products), tree=small_tree, mapper=mapper, split="test")
    assert seen == ["a1"]
    assert collected.product_ids == ["a1"]
    assert (collected.other_split, collected.without_gold, collected.rejected) == (1, 1, 1)
    assert collected.unknown_gold == {"7777": 1}


def test_model_mapper_backs_off_like_the_definition(small_tree: CategoryTree) -> None:
    # Back-off as the model task defines it (a node's probability is the sum of its leaves';
    # below the threshold, answer the deepest node reaching it). Worked by hand, threshold 0.5:
    #   row 1: 1011 0.7 ≥ 0.5 → 1011, method "model"
    #   row 2: leaves 1011 0.25, 1012 0.35, 1510 0.4 → best 0.4 < 0.5; node sums:
    #          1010 = 0.6 (depth 2), 1000 = 0.6 (depth 1), 1505 = 1500 = 0.4 → 1010 at 0.6
    import numpy as np

    from catmap.classify.backoff import NodeIndex

    classes = ["1011", "1012", "1510"]

    class FakeClassifier:
        method = "model"

        def __init__(self) -> None:
            self.classes = classes
            self.index = NodeIndex(small_tree, classes)

        def predict_proba(self, texts: object) -> np.ndarray:
            return np.array([[0.7, 0.2, 0.1], [0.25, 0.35, 0.4]])

    mappings = model_mapper(FakeClassifier(), 0.5)([Product("a", "x"), Product("b", "y")])
    assert (mappings[0].node_id, mappings[0].method) == ("1011", "model")
    assert mappings[0].confidence == pytest.approx(0.7)
    assert (mappings[1].node_id, mappings[1].method) == ("1010", "backoff")
    assert mappings[1].confidence == pytest.approx(0.6)
    assert mappings[1].reason == "backed off from 1510"
    assert [a.node_id for a in mappings[1].alternatives] == ["1510", "1012", "1011"]


def test_model_mapper_scores_sparsely_and_falls_back_to_dense_rows(
    small_tree: CategoryTree,
) -> None:
    # A trained model's products are scored sparsely; rows whose answer could depend on the
    # classes left out are scored densely, so the answers are those of the dense rows.
    # Worked by hand, threshold 0.5, one alternative (two classes listed):
    #   r0: dense 1011 0.7, 1012 0.2, 1510 0.1; sparse keeps 1011, 1012 (0.1 left out);
    #       second listed 0.2 > 0.1 left out → sparse: 1011 at 0.7, alternative 1012 0.2
    #   r1: dense 1011 0.6, 1012 0.1, 1510 0.3; sparse keeps 1011, 1012 (0.3 left out);
    #       0.1 < 0.3 → dense: 1011 at 0.6, alternative 1510 0.3
    #   r2: dense 1011 0.25, 1012 0.35, 1510 0.4; sparse keeps 1012, 1510; best 0.4 < 0.5
    #       → dense back-off: 1010 = 0.25 + 0.35 = 0.6 → 1010 at 0.6, alternative 1510 0.4
    import numpy as np
    import scipy.sparse as sp

    from catmap.classify.backoff import NodeIndex

    classes = ["1011", "1012", "1510"]
    dense_rows = {
        "r0": [0.7, 0.2, 0.1],
        "r1": [0.6, 0.1, 0.3],
        "r2": [0.25, 0.35, 0.4],
    }
    sparse_rows = {"r0": [0.7, 0.2, 0.0], "r1": [0.6, 0.1, 0.0], "r2": [0.0, 0.35, 0.4]}
    densely_scored: list[str] = []

    class FakeModel:
        def predict_sparse(self, texts: Any) -> sp.csr_matrix:
            return sp.csr_matrix(np.array([sparse_rows[t] for t in texts.title]))

        def predict_proba(self, texts: Any) -> np.ndarray:
            densely_scored.extend(texts.title)
            return np.array([dense_rows[t] for t in texts.title])

    class FakeClassifier:
        method = "model"

        def __init__(self) -> None:
            self.classes = classes
            self.index = NodeIndex(small_tree, classes)
            self.model = FakeModel()

    products = [Product(f"p{i}", f"r{i}") for i in range(3)]
    mappings = model_mapper(FakeClassifier(), 0.5, alternatives=1)(products)
    assert densely_scored == ["r1", "r2"]
    got = [
        (m.node_id, m.confidence, m.method, [(a.node_id, a.confidence) for a in m.alternatives])
        for m in mappings
    ]
    assert got == [
        ("1011", pytest.approx(0.7), "model", [("1012", pytest.approx(0.2))]),
        ("1011", pytest.approx(0.6), "model", [("1510", pytest.approx(0.3))]),
        ("1010", pytest.approx(0.6), "backoff", [("1510", pytest.approx(0.4))]),
    ]
