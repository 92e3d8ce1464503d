"""The tree stage: the shared category tree, its versions and what changed between them.

Input: tree files (``taxonomies/tree-v*.txt``) and change logs. Output: a
:class:`CategoryTree` to look nodes up and search in, and a :class:`Crosswalk` from one
version's nodes to the next one's.

- :mod:`~catmap.tree.taxonomy`: the tree model, loading, look-ups, fuzzy search.
- :mod:`~catmap.tree.changelog`: the documented change log between two versions.
- :mod:`~catmap.tree.diff`: diff two trees into a crosswalk (ids, labels, structure, products).
"""

from __future__ import annotations

from catmap.tree.changelog import Change, ChangeLog, apply_changes, load_change_log
from catmap.tree.diff import Correspondence, Crosswalk, diff_trees, load_crosswalk, save_crosswalk
from catmap.tree.taxonomy import CategoryTree, Node, load_default_tree, load_tree

__all__ = [
    "CategoryTree",
    "Change",
    "ChangeLog",
    "Correspondence",
    "Crosswalk",
    "Node",
    "apply_changes",
    "diff_trees",
    "load_change_log",
    "load_crosswalk",
    "load_default_tree",
    "load_tree",
    "save_crosswalk",
]
