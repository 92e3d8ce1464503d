"""Hierarchical back-off: when no leaf is sure enough, answer the deepest node that is.

A node's probability is the sum of the probabilities of the classes (leaves) under it. When the
best leaf reaches the threshold it is the answer; otherwise the answer climbs to the deepest node
whose probability reaches the threshold (ties at one depth: the more probable node). When not
even a department reaches it, the most probable department is answered.

A back-off answer is always an inner node. Where the climb would end on a leaf, there is
nothing above it to answer: the best leaf is a department itself (a one-level tree, or a leaf
at level 1 of a deeper tree) and the most probable department, so the best leaf stays the
answer with its own probability, not backed off (below the threshold, it goes to review like
any unsure mapping). The tree has no single root, so a back-off never answers "everything".
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "BackoffResult",
    "NodeIndex",
    "backoff",
    "backoff_rows",
    "choose_nodes",
    "keep_leaf_answers",
]


@dataclass(frozen=True, slots=True)
class BackoffResult:
    """The answer of :func:`backoff`.

    Attributes:
        node_id: the chosen node.
        confidence: its probability.
        backed_off_from: the best leaf when the answer climbed above it, else None.
    """

    node_id: str
    confidence: float
    backed_off_from: str | None


def backoff(
    probabilities_by_leaf: Mapping[str, float], tree: CategoryTree, threshold: float = 0.5
) -> BackoffResult:
    """Choose a node from leaf probabilities, climbing when the best leaf is below threshold.

    Args:
        probabilities_by_leaf: leaf (or class node) id -> probability; absent leaves count 0.
        tree: the category tree.
        threshold: the probability the answer must reach.

    Returns:
        The chosen node, its probability and the leaf it backed off from (None if it did not).

    Raises:
        ValueError: no probabilities.
        UnknownNode: an id that is not in the tree.
    """
    if not probabilities_by_leaf:
        raise ValueError("no probabilities to back off from")
    best_leaf, best = max(probabilities_by_leaf.items(), key=lambda item: (item[1], item[0]))
    if best >= threshold:
        return BackoffResult(best_leaf, float(best), None)
    node_probability: dict[str, float] = {}
    for leaf, probability in probabilities_by_leaf.items():
        for node in tree.lineage(leaf):
            node_probability[node.id] = node_probability.get(node.id, 0.0) + probability
    reached = [(tree.depth(n), p, n) for n, p in node_probability.items() if p >= threshold]
    if reached:
        _, probability, node_id = max(reached)
    else:
        departments = [(p, n) for n, p in node_probability.items() if tree.depth(n) == 1]
        probability, node_id = max(departments)
    if tree.is_leaf(node_id):
        # A leaf at level 1 with nothing above it: no inner node to back off to.
        return BackoffResult(best_leaf, float(best), None)
    return BackoffResult(node_id, float(probability), best_leaf)


class NodeIndex:
    """The class → node matrix that turns class probabilities into node probabilities fast.

    Args:
        tree: the category tree.
        classes: the class node ids (the columns of the probability matrices).
    """

    def __init__(self, tree: CategoryTree, classes: Sequence[str]) -> None:
        self.nodes: list[str] = [node.id for node in tree]
        position = {node_id: i for i, node_id in enumerate(self.nodes)}
        rows, cols = [], []
        for c, class_id in enumerate(classes):
            for node in tree.lineage(class_id):
                rows.append(c)
                cols.append(position[node.id])
        self.matrix = sp.csr_matrix(
            (np.ones(len(rows), dtype=np.float32), (rows, cols)),
            shape=(len(classes), len(self.nodes)),
        )
        self.depth = np.array([tree.depth(n) for n in self.nodes], dtype=np.float64)
        self.leaf = np.array([tree.is_leaf(n) for n in self.nodes], dtype=bool)
        self.classes = list(classes)


def backoff_rows(
    probabilities: np.ndarray[Any, Any] | sp.spmatrix, index: NodeIndex, threshold: float
) -> tuple[np.ndarray[Any, Any], np.ndarray[Any, Any], np.ndarray[Any, Any], np.ndarray[Any, Any]]:
    """Back off many products at once; same answers as :func:`backoff` row by row.

    Args:
        probabilities: (n, classes) class probabilities (dense or sparse).
        index: the class → node matrix of the same classes.
        threshold: the probability the answer must reach.

    Returns:
        (best class column, node column in ``index.nodes`` (-1 when the row did not back off),
        the answer's probability, whether the row backed off).
    """
    matrix = sp.csr_matrix(probabilities, dtype=np.float64)
    n = matrix.shape[0]
    best_class = np.asarray(matrix.argmax(axis=1)).ravel()
    best = np.asarray(matrix[np.arange(n), best_class]).ravel()
    backed = best < threshold
    chosen = np.full(n, -1, dtype=np.int64)
    chosen_p = best.copy()
    rows = np.flatnonzero(backed)
    if len(rows):
        node_p = np.asarray((matrix[rows] @ index.matrix).toarray())
        chosen[rows], chosen_p[rows] = choose_nodes(node_p, index, threshold)
        keep_leaf_answers(rows, best, index, backed, chosen, chosen_p)
    return best_class, chosen, chosen_p, backed


def keep_leaf_answers(
    rows: np.ndarray[Any, Any],
    best: np.ndarray[Any, Any],
    index: NodeIndex,
    backed: np.ndarray[Any, Any],
    chosen: np.ndarray[Any, Any],
    chosen_p: np.ndarray[Any, Any],
) -> None:
    """Undo the back-off of the rows whose climb ended on a leaf (in place).

    That leaf is a department with nothing above it (see the module docstring): the row keeps
    its best class, with that class's probability ``best``, and is not backed off.
    """
    stays = rows[index.leaf[chosen[rows]]]
    backed[stays] = False
    chosen[stays] = -1
    chosen_p[stays] = best[stays]


def choose_nodes(
    node_p: np.ndarray[Any, Any], index: NodeIndex, threshold: float
) -> tuple[np.ndarray[Any, Any], np.ndarray[Any, Any]]:
    """The back-off answer of rows of node probabilities (columns as ``index.nodes``).

    The deepest node reaching the threshold, at one depth the more probable one; when none
    reaches it, the most probable department.

    Returns:
        (node column, its probability) per row.
    """
    reached = node_p >= threshold
    key = np.where(reached, index.depth[None, :] * 2.0 + np.minimum(node_p, 1.0), -1.0)
    fallback = np.where((index.depth == 1)[None, :], node_p, -1.0)
    picked = np.where(reached.any(axis=1), key.argmax(axis=1), fallback.argmax(axis=1))
    return picked, node_p[np.arange(len(node_p)), picked]
