"""The change log between two versions of the category tree: read it, check it, apply it.

A change log (``taxonomies/changes-v1-v2.txt``, format in ``taxonomies/README.md``) lists, one
change per line, what a taxonomy team did to go from one tree version to the next: renames,
moves, splits, merges, additions and removals. :func:`load_changes` reads and checks the file;
:func:`apply_changes` replays it on the older tree and returns the newer one, so that the two
tree files and the log can be checked against each other.

Example:
    >>> changes = load_changes("taxonomies/changes-v1-v2.txt")  # doctest: +SKIP
    >>> v2 = apply_changes(load_tree("taxonomies/tree-v1.txt"), changes)  # doctest: +SKIP
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

from catmap.errors import TreeError
from catmap.tree.taxonomy import CategoryTree
from catmap.tree.treefile import LANGUAGES, Node, parse_node, split_cells

__all__ = [
    "CHANGE_KINDS",
    "Change",
    "ChangeLog",
    "apply_changes",
    "load_change_log",
    "load_changes",
]

CHANGE_KINDS: tuple[str, ...] = ("rename", "move", "split", "merge", "add", "remove")

_HEADER = "@tree-change"
_FORMAT_HINT = "see taxonomies/README.md, 'Version 2 and the change log'"
_ID = r"\d+"
_ID_LIST = re.compile(rf"^{_ID}(\s*,\s*{_ID})*$")
_NOTE = "note:"


@dataclass(frozen=True, slots=True)
class Change:
    """One line of the change log (with the node lines that belong to it).

    Attributes:
        kind: one of :data:`CHANGE_KINDS`.
        node_id: the node concerned: the renamed, moved, added or removed node; the old id of a
            split; the target of a merge.
        old: rename: the old name; move: the old parent id ("-" for a department).
        new: rename: the new name; move: the new parent id; remove: the node that takes the
            removed node's products (None when not said).
        sources: split: the old id; merge: every merged id (the target too when it is kept).
        targets: split: the ids of the parts; merge: the target id; add: the new id.
        nodes: the new nodes this change creates (an added node, the parts of a split, the new
            target of a merge), in the tree file's node format.
        note: free text after ``note:``, or None.
        line: line of the change in the log file.
    """

    kind: str
    node_id: str
    old: str | None = None
    new: str | None = None
    sources: tuple[str, ...] = ()
    targets: tuple[str, ...] = ()
    nodes: tuple[Node, ...] = ()
    note: str | None = None
    line: int = 0


@dataclass(frozen=True, slots=True)
class ChangeLog:
    """A whole change log file: the versions it goes between and its changes.

    Attributes:
        from_version: the version the changes apply to.
        to_version: the version they produce.
        changes: the changes, in file order.
        path: the file read.
    """

    from_version: str
    to_version: str
    changes: tuple[Change, ...]
    path: str | None = None


def _split_note(cells: list[str]) -> tuple[list[str], str | None]:
    if cells and cells[-1].startswith(_NOTE):
        return cells[:-1], cells[-1][len(_NOTE) :].strip() or None
    return cells, None


def _ids(text: str) -> tuple[str, ...]:
    return tuple(part.strip() for part in text.split(","))


def load_change_log(path: str | Path) -> ChangeLog:
    """Read and check a change log file.

    Args:
        path: the change log (UTF-8).

    Returns:
        The change log with its versions and changes.

    Raises:
        TreeError: the file is missing or a line is malformed; the error names the line.
    """
    shown = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise TreeError("change log not found", path=shown, hint="give an existing file") from None
    except (OSError, UnicodeDecodeError) as error:
        raise TreeError(f"cannot read the change log: {error}", path=shown) from None

    reader = _ChangeLogReader(shown)
    lines = text.splitlines()
    for number, raw in enumerate(lines, start=1):
        stripped = raw.strip()
        if not stripped or stripped.startswith("#"):
            continue
        if stripped.startswith("@"):
            reader.header(stripped, number)
        elif reader.versions is None:
            raise reader.fail(
                "missing header '@tree-change N -> M' before the first change",
                number,
                "add a line such as '@tree-change 1 -> 2' at the top",
            )
        elif stripped.startswith("+"):
            reader.node_line(stripped, number)
        else:
            reader.change_line(stripped, number)
    reader.close(len(lines))
    if reader.versions is None:
        raise reader.fail(
            "missing header '@tree-change N -> M'",
            1,
            "add a line such as '@tree-change 1 -> 2' at the top",
        )
    reader.check_repeats()
    old_version, new_version = reader.versions
    return ChangeLog(old_version, new_version, tuple(reader.changes), shown)


class _ChangeLogReader:
    """The state of reading a change log line by line: header, changes, a pending split / merge."""

    def __init__(self, path: str) -> None:
        self.path = path
        self.versions: tuple[str, str] | None = None
        self.changes: list[Change] = []
        self.pending: Change | None = None  # a split or merge waiting for its '+' node lines
        self.wanted: set[str] = set()

    def fail(self, message: str, line: int, hint: str = _FORMAT_HINT) -> TreeError:
        return TreeError(message, path=self.path, line=line, hint=hint)

    def header(self, stripped: str, number: int) -> None:
        """Read the ``@tree-change N -> M`` header."""
        keyword, _, value = stripped.partition(" ")
        if keyword != _HEADER:
            raise self.fail(f"unknown header '{keyword}'", number)
        if self.versions is not None:
            raise self.fail(f"second '{_HEADER}' header", number)
        match = re.fullmatch(r"(\d+)\s*->\s*(\d+)", value.strip())
        if match is None:
            raise self.fail(f"bad header '{stripped}'", number, "write '@tree-change 1 -> 2'")
        self.versions = (str(int(match[1])), str(int(match[2])))

    def node_line(self, stripped: str, number: int) -> None:
        """Read a '+' line: a new node of the pending split or merge."""
        pending = self.pending
        if pending is None:
            raise self.fail("a '+' node line must follow a split or merge", number)
        cells, _ = _split_note(split_cells(stripped[1:]))
        node = parse_node(cells, number, self.path)
        if node.id not in self.wanted:
            raise self.fail(
                f"node {node.id} is not one of the new ids of the {pending.kind} "
                f"on line {pending.line}",
                number,
            )
        self.wanted.discard(node.id)
        self.pending = replace(pending, nodes=(*pending.nodes, node))
        self.changes[-1] = self.pending

    def change_line(self, stripped: str, number: int) -> None:
        """Read a change line; a split or a merge into a new id then waits for its node lines."""
        self.close(number)
        kind, _, rest = stripped.partition(" ")
        rest = rest.strip()
        if kind not in CHANGE_KINDS:
            raise self.fail(f"unknown change '{kind}' (one of {', '.join(CHANGE_KINDS)})", number)
        change = _parse_change(kind, rest, number, self.path)
        self.changes.append(change)
        if kind == "split":
            self.wanted = set(change.targets)
            self.pending = change
        elif kind == "merge" and change.node_id not in change.sources:
            self.wanted = {change.node_id}
            self.pending = change

    def close(self, line: int) -> None:
        """End the pending split or merge: each of its new ids must have had its node line."""
        if self.pending is not None and self.wanted:
            missing = ", ".join(sorted(self.wanted, key=int))
            raise self.fail(
                f"{self.pending.kind} on line {self.pending.line} lacks the node line of {missing}",
                line,
                "give each new id a '+ id | parent | name | ...' line below it",
            )
        self.pending = None

    def check_repeats(self) -> None:
        """No change is listed twice for the same node."""
        seen: dict[str, int] = {}
        for change in self.changes:
            key = f"{change.kind} {change.node_id}"
            if key in seen:
                raise self.fail(f"'{key}' listed twice (first on line {seen[key]})", change.line)
            seen[key] = change.line


def _parse_change(kind: str, rest: str, line: int, path: str) -> Change:
    def fail(message: str, hint: str = _FORMAT_HINT) -> TreeError:
        return TreeError(message, path=path, line=line, hint=hint)

    if kind == "add":
        cells, note = _split_note(split_cells(rest))
        node = parse_node(cells, line, path)
        return Change("add", node.id, targets=(node.id,), nodes=(node,), note=note, line=line)

    cells, note = _split_note(split_cells(rest))
    if kind in ("rename", "move"):
        if len(cells) != 2 or "->" not in cells[1] or not cells[0].isdigit():
            example = (
                "rename ID | old name -> new name"
                if kind == "rename"
                else ("move ID | old parent -> new parent")
            )
            raise fail(f"bad {kind} line", f"write '{example}'")
        old, _, new = (part.strip() for part in cells[1].partition("->"))
        if not old or not new:
            raise fail(f"{kind} {cells[0]}: both sides of '->' are needed")
        if kind == "move":
            for value in (old, new):
                if value != "-" and not value.isdigit():
                    raise fail(f"move {cells[0]}: parent '{value}' is not an id or '-'")
        if old == new:
            raise fail(f"{kind} {cells[0]} changes nothing ('{old}' both sides)")
        return Change(kind, cells[0], old=old, new=new, note=note, line=line)

    if len(cells) != 1:
        raise fail(f"bad {kind} line (too many cells)")
    left, arrow, right = (part.strip() for part in cells[0].partition("->"))
    if kind == "remove":
        if not left.isdigit() or (arrow and not right.isdigit()):
            raise fail(
                "bad remove line", "write 'remove ID' or 'remove ID -> ID taking its products'"
            )
        return Change("remove", left, new=right or None, note=note, line=line)
    if not arrow or not _ID_LIST.match(left) or not _ID_LIST.match(right):
        raise fail(f"bad {kind} line", f"write '{kind} ID, ... -> ID, ...'")
    sources, targets = _ids(left), _ids(right)
    if kind == "split":
        if len(sources) != 1 or len(targets) < 2:
            raise fail("a split takes one id into two or more new ids")
        if sources[0] in targets:
            raise fail(f"split {sources[0]}: the old id is retired and cannot be a part")
        return Change("split", sources[0], sources=sources, targets=targets, note=note, line=line)
    if len(sources) < 2 or len(targets) != 1:
        raise fail("a merge takes two or more ids into one")
    return Change("merge", targets[0], sources=sources, targets=targets, note=note, line=line)


def load_changes(path: str | Path) -> list[Change]:
    """Read and check a change log file and return its changes, in file order.

    Raises:
        TreeError: the file is missing or a line is malformed; the error names the line.
    """
    return list(load_change_log(path).changes)


def _merge_terms(nodes: Iterable[Node]) -> dict[str, tuple[str, ...]]:
    """The nodes' terms together, per language: the required languages, then any extra one
    (``it``...) any of them has, in the order they are first met."""
    merged: dict[str, list[str]] = {lang: [] for lang in LANGUAGES}
    for node in nodes:
        for lang, terms in node.terms.items():
            words = merged.setdefault(lang, [])
            for term in terms:
                if term.casefold() not in {t.casefold() for t in words}:
                    words.append(term)
    return {lang: tuple(words) for lang, words in merged.items()}


def apply_changes(
    tree: CategoryTree,
    changes: Sequence[Change],
    *,
    version: str | None = None,
    path: str | None = None,
) -> CategoryTree:
    """Replay changes on a tree, in order, and return the resulting tree.

    A merge into a kept node adds the merged nodes' keywords to it, so that search still
    finds the merged products' words. Children keep their order; a moved or added node comes
    last among its new siblings; the parts of a split and a merge's new node take the place
    of the (first) old node.

    Args:
        tree: the older tree.
        changes: the changes, as :func:`load_changes` gives them.
        version: the new tree's version (default: the old version plus one).
        path: the change log's path, for error messages.

    Returns:
        The new, validated tree.

    Raises:
        TreeError: a change does not fit the tree (unknown id, wrong old name or parent,
            reused id, removing a node that still has children...); the error names the
            change's line.
    """
    replay = _Replay(tree, path)
    for change in changes:
        replay.apply(change)
    for change in changes:
        if change.kind == "remove" and change.new is not None and change.new not in replay.nodes:
            raise _change_error(
                f"the products' new node {change.new} is not in the result", change, path
            )
    result = _parents_first(replay.nodes, replay.order, path)
    new_version = version if version is not None else str(int(tree.version) + 1)
    return CategoryTree(result, version=new_version, path=path)


def _change_error(
    message: str, change: Change, path: str | None, hint: str | None = None
) -> TreeError:
    return TreeError(
        f"{change.kind} {change.node_id}: {message}",
        path=path,
        line=change.line or None,
        hint=hint,
    )


class _Replay:
    """A tree being changed one change at a time: its nodes and their order.

    Args:
        tree: the tree before the changes.
        path: the change log's path, for error messages.
    """

    def __init__(self, tree: CategoryTree, path: str | None = None) -> None:
        self.path = path
        self.nodes: dict[str, Node] = {node.id: node for node in tree}
        self.order: list[str] = [node.id for node in tree]
        self.used: set[str] = set(self.nodes)

    def apply(self, change: Change) -> None:
        """Apply one change.

        Raises:
            TreeError: the change does not fit the tree as it is now.
        """
        if change.kind == "rename":
            self.rename(change)
        elif change.kind == "move":
            self.move(change)
        elif change.kind == "add":
            self.create(change.nodes[0], change, None)
        elif change.kind == "remove":
            self.need(change.node_id, change)
            self.need_leaf(change.node_id, change)
            self.retire(change.node_id)
        elif change.kind == "split":
            self.split(change)
        elif change.kind == "merge":
            self.merge(change)
        else:  # pragma: no cover - load_changes only makes the kinds above
            raise self.fail("unknown change", change)

    def rename(self, change: Change) -> None:
        node = self.need(change.node_id, change)
        if node.name != change.old:
            raise self.fail(f"the old name is '{node.name}', not '{change.old}'", change)
        self.nodes[node.id] = replace(node, name=change.new or node.name)

    def move(self, change: Change) -> None:
        node = self.need(change.node_id, change)
        if (node.parent or "-") != change.old:
            raise self.fail(f"the old parent is {node.parent or '-'}, not {change.old}", change)
        new_parent = None if change.new == "-" else change.new
        if new_parent is not None:
            self.need(new_parent, change)
        self.nodes[node.id] = replace(node, parent=new_parent)
        self.order.remove(node.id)
        self.order.append(node.id)

    def split(self, change: Change) -> None:
        self.need(change.node_id, change)
        self.need_leaf(change.node_id, change)
        position = self.retire(change.node_id)
        for offset, part in enumerate(change.nodes):
            self.create(part, change, position + offset)

    def merge(self, change: Change) -> None:
        sources = [self.need(source, change) for source in change.sources]
        for source in change.sources:
            self.need_leaf(source, change)
        if change.node_id in change.sources:
            target = self.nodes[change.node_id]
            terms = _merge_terms([target, *(s for s in sources if s.id != target.id)])
            self.nodes[target.id] = replace(target, terms=terms)
            for source in change.sources:
                if source != target.id:
                    self.retire(source)
        else:
            position = min(self.order.index(source) for source in change.sources)
            for source in change.sources:
                self.retire(source)
            self.create(change.nodes[0], change, position)

    def fail(self, message: str, change: Change, hint: str | None = None) -> TreeError:
        return _change_error(message, change, self.path, hint)

    def need(self, node_id: str, change: Change) -> Node:
        if node_id not in self.nodes:
            raise self.fail(f"no node {node_id} at this point", change)
        return self.nodes[node_id]

    def need_leaf(self, node_id: str, change: Change) -> None:
        if any(n.parent == node_id for n in self.nodes.values()):
            raise self.fail(
                f"node {node_id} still has children", change, "move or remove its children first"
            )

    def create(self, new: Node, change: Change, at: int | None) -> None:
        if new.id in self.used:
            raise self.fail(f"id {new.id} is already used (ids are never reused)", change)
        if new.parent is not None:
            self.need(new.parent, change)
        self.used.add(new.id)
        self.nodes[new.id] = new
        if at is None:
            self.order.append(new.id)
        else:
            self.order.insert(at, new.id)

    def retire(self, node_id: str) -> int:
        position = self.order.index(node_id)
        self.order.pop(position)
        del self.nodes[node_id]
        return position


def _parents_first(nodes: dict[str, Node], order: list[str], path: str | None) -> list[Node]:
    """Order the nodes depth first from the departments, siblings in ``order``.

    Raises:
        TreeError: some nodes cannot be reached from a department (a move cut them off).
    """
    rank = {node_id: index for index, node_id in enumerate(order)}
    children: dict[str | None, list[str]] = {}
    for node_id in order:
        children.setdefault(nodes[node_id].parent, []).append(node_id)
    result: list[Node] = []
    stack = list(reversed(children.get(None, [])))
    while stack:
        node_id = stack.pop()
        result.append(nodes[node_id])
        stack.extend(reversed(sorted(children.get(node_id, []), key=rank.__getitem__)))
    if len(result) != len(nodes):
        orphans = sorted(set(nodes) - {n.id for n in result}, key=int)
        raise TreeError(
            f"nodes cut off from the tree by the changes: {', '.join(orphans)}",
            path=path,
            hint="check the moves",
        )
    return result
