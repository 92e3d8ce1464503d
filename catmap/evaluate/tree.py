"""The small bridge between the category tree and the metrics: a node → parent map."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree


def parent_map(tree: CategoryTree) -> dict[str, str | None]:
    """Return node id → parent id (``None`` for a department) for every node of the tree."""
    return {node.id: node.parent for node in tree}
