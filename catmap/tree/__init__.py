"""The tree stage: the shared category tree, its versions and what changed between them.

Input: tree files (``taxonomies/tree-v*.txt``) and change logs. Output: a
:class:`CategoryTree` to look nodes up and search in, and a :class:`Crosswalk` from one
version's nodes to the next one's.

- :mod:`~catmap.tree.treefile`: a :class:`Node` and the tree file's line format.
- :mod:`~catmap.tree.taxonomy`: the tree model, loading, look-ups.
- :mod:`~catmap.tree.search`: word-by-word search over node names and terms in every language.
- :mod:`~catmap.tree.changelog`: the documented change log between two versions.
- :mod:`~catmap.tree.diff`: diff two trees into a crosswalk (ids, labels, structure, products).
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from catmap.tree.search import SearchMatch, fold_text
from catmap.tree.taxonomy import (
    CategoryTree,
    default_tree_path,
    dump_tree,
    load_default_tree,
    load_tree,
    open_tree,
    summarize_tree,
)
from catmap.tree.treefile import Node, parse_audience

if TYPE_CHECKING:
    from catmap.tree.changelog import Change, ChangeLog, apply_changes, load_change_log
    from catmap.tree.diff import (
        Correspondence,
        Crosswalk,
        diff_trees,
        load_crosswalk,
        save_crosswalk,
    )

# Loaded on first use: a command that only reads the tree (``catmap map``) does not pay for the
# change log's and the diff's imports.
_LAZY = {
    "Change": "changelog",
    "ChangeLog": "changelog",
    "apply_changes": "changelog",
    "load_change_log": "changelog",
    "Correspondence": "diff",
    "Crosswalk": "diff",
    "diff_trees": "diff",
    "load_crosswalk": "diff",
    "save_crosswalk": "diff",
}

__all__ = [
    "CategoryTree",
    "Change",
    "ChangeLog",
    "Correspondence",
    "Crosswalk",
    "Node",
    "SearchMatch",
    "apply_changes",
    "default_tree_path",
    "diff_trees",
    "dump_tree",
    "fold_text",
    "load_change_log",
    "load_crosswalk",
    "load_default_tree",
    "load_tree",
    "open_tree",
    "parse_audience",
    "save_crosswalk",
    "summarize_tree",
]


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value
    return value
