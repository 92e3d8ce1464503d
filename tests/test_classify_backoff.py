"""Back-off on a small tree with known probabilities."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from catmap.classify.backoff import NodeIndex, backoff, backoff_rows
from catmap.tree.taxonomy import CategoryTree, load_tree
from tests._classify_fixtures import write_tree


@pytest.fixture()
def tree(tmp_path: Path) -> CategoryTree:
    return load_tree(write_tree(tmp_path))


def test_sure_leaf_is_kept(tree: CategoryTree) -> None:
    result = backoff({"1101": 0.7, "1102": 0.2, "2101": 0.1}, tree, 0.5)
    assert (result.node_id, result.backed_off_from) == ("1101", None)
    assert result.confidence == pytest.approx(0.7)


def test_climbs_to_parent_whose_leaves_sum_past_threshold(tree: CategoryTree) -> None:
    # Boots = 0.4 + 0.35 = 0.75 reaches 0.5; Footwear (0.85) does too but is shallower.
    result = backoff({"1101": 0.4, "1102": 0.35, "1201": 0.1, "2101": 0.15}, tree, 0.5)
    assert result.node_id == "1100"
    assert result.confidence == pytest.approx(0.75)
    assert result.backed_off_from == "1101"


def test_climbs_to_department_when_no_parent_is_sure(tree: CategoryTree) -> None:
    result = backoff({"1101": 0.3, "1201": 0.3, "2101": 0.2, "2102": 0.2}, tree, 0.5)
    assert result.node_id == "1000"
    assert result.confidence == pytest.approx(0.6)


def test_no_node_reaches_threshold_answers_best_department(tree: CategoryTree) -> None:
    result = backoff({"1101": 0.45, "2101": 0.55}, tree, 0.9)
    assert result.node_id == "2000"
    assert result.backed_off_from == "2101"


def test_vectorised_backoff_agrees_with_the_pure_function(tree: CategoryTree) -> None:
    classes = ["1101", "1102", "1201", "1202", "2101", "2102"]
    index = NodeIndex(tree, classes)
    rng = np.random.default_rng(0)
    probabilities = rng.dirichlet(np.full(len(classes), 0.7), size=200)
    best, chosen, chosen_p, backed = backoff_rows(probabilities, index, 0.5)
    for row in range(len(probabilities)):
        expected = backoff(dict(zip(classes, probabilities[row], strict=True)), tree, 0.5)
        if backed[row]:
            assert index.nodes[chosen[row]] == expected.node_id
        else:
            assert classes[best[row]] == expected.node_id
        assert chosen_p[row] == pytest.approx(expected.confidence)
