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


def _mixed_tree(tmp_path: Path) -> CategoryTree:
    """Two levels, with one department that is a leaf itself (Gift cards, 30)."""
    path = tmp_path / "mixed.txt"
    lines = ["@tree-version 1"]
    for node, parent, name in (
        ("10", "-", "Kitchen"), ("11", "10", "Whisks"), ("12", "10", "Ladles"),
        ("20", "-", "Garden"), ("21", "20", "Swings"), ("30", "-", "Gift cards"),
    ):  # fmt: skip
        lines.append(
            f"{node} | {parent} | {name} | none | - | en: {name.lower()} | fr: | de: | es:"
        )
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return load_tree(path)


def test_a_level_one_leaf_has_nothing_to_back_off_to(tmp_path: Path) -> None:
    mixed = _mixed_tree(tmp_path)
    # Gift cards is the best leaf and the most probable department: it stays, not backed off.
    result = backoff({"11": 0.2, "21": 0.35, "30": 0.45}, mixed, 0.9)
    assert (result.node_id, result.backed_off_from) == ("30", None)
    assert result.confidence == pytest.approx(0.45)
    # Where another department reaches the threshold, the climb goes there, as anywhere.
    result = backoff({"11": 0.3, "12": 0.3, "30": 0.4}, mixed, 0.5)
    assert (result.node_id, result.backed_off_from) == ("10", "30")
    assert result.confidence == pytest.approx(0.6)


def test_a_flat_tree_never_backs_off(tmp_path: Path) -> None:
    path = tmp_path / "flat.txt"
    path.write_text(
        "@tree-version 1\n"
        + "".join(f"{n} | - | Name {n} | none | - | en: w{n} | fr: | de: | es:\n" for n in "123"),
        encoding="utf-8",
    )
    flat = load_tree(path)
    classes = ["1", "2", "3"]
    probabilities = np.random.default_rng(1).dirichlet(np.ones(3), size=100)
    best, chosen, chosen_p, backed = backoff_rows(probabilities, NodeIndex(flat, classes), 0.9)
    assert not backed.any() and (chosen == -1).all()
    assert np.allclose(chosen_p, probabilities.max(axis=1))
    for row in probabilities[:10]:
        result = backoff(dict(zip(classes, row, strict=True)), flat, 0.9)
        assert result.backed_off_from is None
        assert result.node_id == classes[int(row.argmax())]


def test_vectorised_backoff_agrees_on_a_tree_with_a_level_one_leaf(tmp_path: Path) -> None:
    mixed = _mixed_tree(tmp_path)
    classes = ["11", "12", "21", "30"]
    index = NodeIndex(mixed, classes)
    probabilities = np.random.default_rng(2).dirichlet(np.full(4, 0.7), size=300)
    best, chosen, chosen_p, backed = backoff_rows(probabilities, index, 0.6)
    assert backed.any() and not backed.all()
    for row in range(len(probabilities)):
        expected = backoff(dict(zip(classes, probabilities[row], strict=True)), mixed, 0.6)
        answer = index.nodes[chosen[row]] if backed[row] else classes[best[row]]
        assert answer == expected.node_id
        assert bool(backed[row]) == (expected.backed_off_from is not None)
        assert chosen_p[row] == pytest.approx(expected.confidence)
        if backed[row]:  # a back-off answer is always an inner node
            assert not mixed.is_leaf(answer)
