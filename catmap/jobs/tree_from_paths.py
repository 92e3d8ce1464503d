"""``catmap tree from-paths``: write a tree file from a list of category paths, with the id of
every node beside it and the lines that could not be used (see :mod:`catmap.tree.frompaths`)."""

from __future__ import annotations

import csv
from collections import Counter
from pathlib import Path
from typing import Any

from catmap._atomic import atomic_open, write_text_atomic
from catmap._cells import neutralise_cell
from catmap.tree.frompaths import read_paths, tree_from_paths
from catmap.tree.taxonomy import load_tree
from catmap.tree.treefile import format_tree

__all__ = ["ids_path", "rejects_path", "write_tree_from_paths"]


def ids_path(out: Path) -> Path:
    """Where the id list of a tree written to ``out`` goes: ``<stem>.ids.csv`` beside it."""
    return out.with_name(f"{out.stem}.ids.csv")


def rejects_path(out: Path) -> Path:
    """Where the lines not used go: ``<stem>.rejects.csv`` beside the tree."""
    return out.with_name(f"{out.stem}.rejects.csv")


def _write_csv(path: Path, header: list[str], rows: list[list[str]]) -> None:
    with atomic_open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows([[neutralise_cell(str(cell)) for cell in row] for row in rows])


def write_tree_from_paths(
    source: str | Path,
    out: str | Path,
    *,
    separator: str | None = None,
    language: str = "en",
    version: int = 1,
) -> dict[str, Any]:
    """Read the category list, write the tree file, its id list and its rejects (if any).

    Every file is written atomically; the tree is read back with the tree loader before this
    returns, so what it wrote is a valid tree file.

    Args:
        source: the category list (one path per line, or a CSV with a path column).
        out: the tree file to write.
        separator: what separates levels (default: detected).
        language: the language of the names.
        version: the tree version for the header.

    Returns:
        The facts: counts, the separator, the files written, rejects by reason.

    Raises:
        InputError: the list cannot be read, or holds no usable path.
    """
    from catmap.errors import InputError

    source, out = Path(source), Path(out)
    built = tree_from_paths(read_paths(source), separator=separator, language=language)
    rejected = rejects_path(out)
    if built.rejects:
        _write_csv(
            rejected,
            ["line", "reason", "explanation", "text"],
            [[str(n), code, why, text] for n, code, why, text in built.rejects],
        )
    elif rejected.exists():
        rejected.unlink()  # from an earlier conversion: it no longer applies
    if not built.nodes:
        raise InputError(
            "no line of the category list could be used",
            path=source,
            hint=f"the reasons are in {rejected}; check the separator (--separator)",
        )
    write_text_atomic(out, format_tree(str(version), built.nodes))
    _write_csv(ids_path(out), ["source_id", "node_id", "path"], [list(r) for r in built.ids])
    tree = load_tree(out)
    return {
        "source": str(source),
        "tree_file": str(out),
        "ids_file": str(ids_path(out)),
        "rejects_file": str(rejected) if built.rejects else None,
        "separator": built.separator,
        "language": language,
        "lines": built.lines,
        "repeated": built.repeated,
        "rejected": len(built.rejects),
        "rejected_by_reason": dict(Counter(code for _n, code, _w, _t in built.rejects)),
        "nodes": len(tree),
        "departments": sum(node.parent is None for node in built.nodes),
        "leaves": built.leaves(),
        "depth": built.depth(),
        "ids_given": sum(1 for given, node_id, _p in built.ids if given and given == node_id),
        "ids_made": sum(1 for given, node_id, _p in built.ids if given != node_id),
    }
