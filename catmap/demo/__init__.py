"""The invented demo world: brands, a labelled reference catalog and new retailer feeds.

Everything is generated from a seed and the category tree; all names are invented.
"""

from __future__ import annotations

from catmap.demo.world import (
    DemoPaths,
    build_demo_world,
    demo_paths,
    ensure_demo_world,
    split_of,
)

__all__ = ["DemoPaths", "build_demo_world", "demo_paths", "ensure_demo_world", "split_of"]
