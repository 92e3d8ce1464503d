"""``catmap tree from-paths``: write a tree file from a list of category paths, with the id of
every node beside it and the lines that could not be used (see :mod:`catmap.tree.frompaths`)."""

from __future__ import annotations

import csv
import io
from collections import Counter
from pathlib import Path
from typing import Any

from catmap._atomic import atomic_open, write_text_atomic
from catmap._cells import neutralise_cell
from catmap.errors import InputError
from catmap.feeds._sniff import detect_encoding
from catmap.tree.frompaths import tree_from_paths
from catmap.tree.taxonomy import load_tree
from catmap.tree.treefile import format_tree

__all__ = [
    "ID_COLUMNS",
    "PATH_COLUMNS",
    "ids_path",
    "read_paths",
    "rejects_path",
    "write_tree_from_paths",
]

# Header names of the path column and of the id column (compared case-insensitively).
PATH_COLUMNS = ("path", "category", "category_path", "category path", "breadcrumb", "full_path")
ID_COLUMNS = ("id", "node_id", "category_id", "cat_id", "code")


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


def read_paths(path: str | Path) -> list[tuple[int, str, str]]:
    """Read the path lines of a file: (line number, id given or "", path text).

    A CSV (comma, semicolon or tab) whose header names a path column (:data:`PATH_COLUMNS`)
    is read by that column, with an id column (:data:`ID_COLUMNS`) when there is one. Any
    other file is one path per line; blank lines and lines starting with ``#`` are skipped.

    Raises:
        InputError: the file cannot be read or decoded, or holds no path.
    """
    file = Path(path)
    try:
        data = file.read_bytes()
    except OSError as error:
        raise InputError(
            f"cannot read the category list: {error.strerror or error}",
            path=file,
            hint="give a text file with one category path per line",
        ) from error
    encoding, _source = detect_encoding(data[: 1 << 20], None, file)
    try:
        text = data.decode(encoding)
    except UnicodeDecodeError as error:
        raise InputError(
            f"the category list is not readable as {encoding}",
            path=file,
            hint="save it as UTF-8",
        ) from error
    lines = text.splitlines()
    header = lines[0] if lines else ""
    delimiter = max(",;\t", key=header.count)
    columns = [c.strip().strip('"').casefold() for c in header.split(delimiter)]
    rows: list[tuple[int, str, str]] = []
    if header.count(delimiter) and any(c in PATH_COLUMNS for c in columns):
        path_at = next(i for i, c in enumerate(columns) if c in PATH_COLUMNS)
        id_at = next((i for i, c in enumerate(columns) if c in ID_COLUMNS), None)
        reader = csv.reader(io.StringIO(text), delimiter=delimiter)
        next(reader)
        for record in reader:
            number = reader.line_num
            if not any(cell.strip() for cell in record):
                continue
            value = record[path_at] if path_at < len(record) else ""
            given = record[id_at] if id_at is not None and id_at < len(record) else ""
            rows.append((number, given, value))
    else:
        for number, line in enumerate(lines, start=1):
            stripped = line.strip()
            if stripped and not stripped.startswith("#"):
                rows.append((number, "", stripped))
    if not rows:
        raise InputError(
            "the category list holds no path",
            path=file,
            hint="one path per line, e.g. 'Garden > Tools > Spades', or a CSV with a 'path' "
            "column",
        )
    return rows
