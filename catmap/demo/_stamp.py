"""What a generated demo file was built from, kept beside it so a changed input rebuilds it.

The generated files (the reference catalog, the unseen-retailer part) are built on first use
and then reused. Reuse is only right when they were built from the same inputs: the same
seed and size, the same tree (a test or a project may point the shared tree elsewhere) and the
same generator code. The facts are written as JSON beside the files after they are built; a
missing, unreadable or different record means "build again", never an error.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path
from typing import TYPE_CHECKING, Any

from catmap._atomic import write_text_atomic

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree

__all__ = ["build_facts", "generated_dir", "stamp_matches", "write_stamp"]

_HERE = Path(__file__).resolve().parent
# The tree the demo world is made for: the repository's shared tree, version 1.
_OWN_TREE = _HERE.parents[1] / "taxonomies" / "tree-v1.txt"
_OWN_DEMO = _HERE.parents[1] / "feeds_demo"


def _tree_digest(tree: CategoryTree) -> str:
    """The tree's file bytes when it has a file, else its nodes (id, parent, name)."""
    digest = hashlib.sha256()
    path = Path(tree.path) if tree.path else None
    if path is not None and path.is_file():
        digest.update(path.read_bytes())
    else:
        for node in tree:
            digest.update(f"{node.id}\t{node.parent}\t{node.name}\n".encode())
    return digest.hexdigest()


def _code_digest() -> str:
    """The demo generator's own source (every module of this package)."""
    digest = hashlib.sha256()
    for module in sorted(_HERE.glob("*.py")):
        digest.update(module.name.encode() + b"\0" + module.read_bytes())
    return digest.hexdigest()


def generated_dir(demo_root: Path, tree: CategoryTree) -> Path:
    """Where files generated for ``tree`` go under ``demo_root``.

    ``generated/``, except in the repository's own demo folder for another tree than the
    demo's: there a folder of that tree's own (``generated/tree-<digest>/``), so that a run on
    another tree (a test's small tree, say) never replaces the demo's files with its own.
    """
    base = demo_root / "generated"
    if demo_root.resolve() != _OWN_DEMO:
        return base
    digest = _tree_digest(tree)
    try:
        own = hashlib.sha256(_OWN_TREE.read_bytes()).hexdigest()
    except OSError:
        own = ""
    return base if digest == own else base / f"tree-{digest[:12]}"


def build_facts(tree: CategoryTree, **params: Any) -> dict[str, Any]:
    """The inputs a generated file depends on: ``params`` (seed, size...), tree and code."""
    return {**params, "tree": _tree_digest(tree), "code": _code_digest()}


def stamp_matches(stamp: Path, facts: dict[str, Any]) -> bool:
    """True when ``stamp`` records exactly ``facts`` (a damaged record counts as absent)."""
    try:
        return bool(json.loads(stamp.read_text(encoding="utf-8")) == facts)
    except (OSError, ValueError):
        return False


def write_stamp(stamp: Path, facts: dict[str, Any]) -> None:
    """Record ``facts`` beside the files just built (atomically)."""
    write_text_atomic(stamp, json.dumps(facts, sort_keys=True, indent=1) + "\n")
