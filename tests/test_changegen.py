"""Tests of catmap.tree.changegen: seeded random change sets on the shipped tree."""

from __future__ import annotations

from collections import Counter

import pytest

from catmap.tree.changegen import ChangeSetSizes, generate_change_set
from catmap.tree.changelog import apply_changes
from catmap.tree.diff import crosswalk_from_changes, diff_trees, score_against_changelog
from catmap.tree.search import fold_text
from catmap.tree.taxonomy import CategoryTree, load_default_tree


@pytest.fixture(scope="module")
def tree() -> CategoryTree:
    return load_default_tree(1)


def _products(tree: CategoryTree) -> list[tuple[str, str, str]]:
    """Two labelled products per leaf, titled with the leaf's first and last English keyword."""
    rows = []
    for node in tree:
        if tree.is_leaf(node.id):
            words = node.terms["en"]
            rows.append((f"{node.id}-a", f"Plain {words[0]}", node.id))
            rows.append((f"{node.id}-b", f"Large {words[-1]}", node.id))
    return rows


def test_the_same_seed_gives_the_same_change_set(tree: CategoryTree) -> None:
    first = generate_change_set(tree, 3, products=_products(tree))
    again = generate_change_set(tree, 3, products=_products(tree))
    assert first.log.changes == again.log.changes and first.instances == again.instances
    assert generate_change_set(tree, 4).log.changes != first.log.changes


def test_a_change_set_holds_every_kind_and_replays_to_a_valid_tree(tree: CategoryTree) -> None:
    sizes = ChangeSetSizes(renames=3, moves=2, splits=2, merges=2, additions=2, removals=2)
    change_set = generate_change_set(tree, 11, products=_products(tree), sizes=sizes)
    kinds = Counter(c.kind for c in change_set.log.changes)
    assert kinds == {"rename": 3, "move": 2, "split": 2, "merge": 2, "add": 2, "remove": 2}
    # The log replays on the old tree to the new one, which the tree loader's rules accept.
    again = apply_changes(tree, change_set.log.changes, version="2")
    assert [n.id for n in again] == [n.id for n in change_set.new_tree]
    # New ids are never ids used before, and every node is touched by one change at most.
    old_ids = {n.id for n in tree}
    assert not {n.id for n in change_set.new_tree if n.id not in old_ids} & old_ids
    touched = [c.node_id for c in change_set.log.changes if c.kind in ("rename", "move", "remove")]
    assert len(touched) == len(set(touched))


def test_renames_use_the_node_s_own_keywords(tree: CategoryTree) -> None:
    change_set = generate_change_set(tree, 5, products=_products(tree))
    for change in change_set.log.changes:
        if change.kind == "rename":
            node = tree[change.node_id]
            own = {fold_text(t) for terms in node.terms.values() for t in terms}
            assert fold_text(str(change.new).split(" (")[0]) in own


def test_instances_send_split_and_merged_products_to_the_new_nodes(tree: CategoryTree) -> None:
    products = _products(tree)
    change_set = generate_change_set(tree, 7, products=products)
    truth = crosswalk_from_changes(tree, change_set.new_tree, change_set.log)
    targets = {c.old_id: set(c.new_ids) for c in truth.correspondences}
    node_of = {pid: node for pid, _title, node in products}
    assert change_set.instances
    for product_id, new_id in change_set.instances.items():
        assert new_id in targets[node_of[product_id]]


def test_the_diff_finds_a_generated_change_set(tree: CategoryTree) -> None:
    # A tuning seed (benchmarks/bench_treediff.py keeps the held-out seeds apart).
    change_set = generate_change_set(tree, 2, products=_products(tree))
    scores = score_against_changelog(
        diff_trees(tree, change_set.new_tree), change_set.log.changes
    )
    assert scores["per_type"]["split"]["correct"] == scores["per_type"]["split"]["reference"]
    assert scores["per_type"]["merged"]["recall"] == 1.0
