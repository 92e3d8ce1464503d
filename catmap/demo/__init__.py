"""The invented demo world: brands, a labelled reference catalog and new retailer feeds.

Everything is generated from a seed and the category tree; all names are invented. The
unseen-retailer part (:mod:`catmap.demo.unseen`) is built apart, on demand, for measuring how
a model holds on retailers it never trained on.
"""

from __future__ import annotations

from catmap.demo.unseen import UnseenPaths, ensure_unseen_world, unseen_paths
from catmap.demo.world import (
    DemoPaths,
    build_demo_world,
    demo_paths,
    ensure_demo_world,
    split_of,
)

__all__ = [
    "DemoPaths",
    "UnseenPaths",
    "build_demo_world",
    "demo_paths",
    "ensure_demo_world",
    "ensure_unseen_world",
    "split_of",
    "unseen_paths",
]
