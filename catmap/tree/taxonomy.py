"""The shared category tree: load and validate tree files, look nodes up, search them.

A tree file (``taxonomies/tree-vN.txt``, format in ``taxonomies/README.md``) holds one node per
line. :func:`load_tree` reads and checks it and returns a :class:`CategoryTree`, which answers
the questions later stages ask: a node's path, its ancestors and leaves, who and which ages its
products are for, whether it is restricted, and which nodes a piece of text resembles.
The line format lives in :mod:`catmap.tree.treefile`, the fuzzy search in
:mod:`catmap.tree.search`.

Example:
    >>> tree = load_tree("taxonomies/tree-v1.txt")  # doctest: +SKIP
    >>> tree.path_text("1523")  # doctest: +SKIP
    'Footwear > Boots > Ankle boots'
"""

from __future__ import annotations

import os
from collections import Counter
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from typing import Any

from catmap._atomic import write_text_atomic
from catmap.errors import TreeError, UnknownNode
from catmap.tree.search import SearchMatch, TermIndex, fold_text
from catmap.tree.treefile import (
    FORMAT_HINT,
    LANGUAGES,
    MAX_LEVEL,
    SHARED_LEAF_LEVELS,
    Node,
    format_tree,
    is_language_code,
    parse_audience,
    parse_restriction,
    parse_tree_text,
)

__all__ = [
    "CategoryTree",
    "default_tree_path",
    "dump_tree",
    "load_default_tree",
    "load_tree",
    "open_tree",
    "path_label_reader",
    "summarize_tree",
]


class CategoryTree:
    """A validated category tree with fast look-ups and fuzzy search.

    Building one checks the structure (unique ids, known parents, no cycles, audience and
    restriction values, no node deeper than ``MAX_LEVEL``) and raises :class:`TreeError` naming
    the offending node's line.

    Args:
        nodes: the nodes, in file order.
        version: the tree version (the ``@tree-version`` header).
        path: the file the nodes came from, used in error messages.

    Raises:
        TreeError: the nodes do not form a valid tree.
    """

    def __init__(self, nodes: Iterable[Node], *, version: str = "1", path: str | None = None):
        self.version = str(version)
        self.path = path
        file_order = list(nodes)
        self._nodes: dict[str, Node] = {}
        for node in file_order:
            first = self._nodes.get(node.id)
            if first is not None:
                raise self._error(
                    f"duplicate id {node.id} (first on line {first.line})",
                    node,
                    "ids are never reused; give the node a new id",
                )
            self._nodes[node.id] = node

        own_audience: dict[str, tuple[frozenset[str] | None, frozenset[str] | None]] = {}
        for node in file_order:
            self._check_cells(node)
            try:
                own_audience[node.id] = parse_audience(node.audience)
                parse_restriction(node.restriction or "-")
            except ValueError as error:
                raise self._error(str(error), node, FORMAT_HINT) from None
            if node.parent is not None and node.parent not in self._nodes:
                raise self._error(
                    f"unknown parent {node.parent} of node {node.id}",
                    node,
                    "the parent must be the id of another node in the file, or '-'",
                )

        self._depth: dict[str, int] = {}
        for node in file_order:
            self._compute_depth(node)

        self._order: list[Node] = _parents_first(file_order)
        self._index: dict[str, int] = {n.id: i for i, n in enumerate(self._order)}
        self._children: dict[str | None, list[Node]] = {}
        for node in self._order:
            self._children.setdefault(node.parent, []).append(node)

        for node in file_order:
            level = self._depth[node.id]
            if level > MAX_LEVEL:
                raise self._error(
                    f"node {node.id} is at level {level}; nodes sit at most {MAX_LEVEL} levels "
                    "deep (a department is level 1)",
                    node,
                    "attach the node higher up, or check its parent id",
                )

        # Effective values, computed once in parents-first order so each parent is ready.
        self._lineage: dict[str, tuple[Node, ...]] = {}
        self._who: dict[str, frozenset[str]] = {}
        self._ages: dict[str, frozenset[str]] = {}
        self._restriction: dict[str, str | None] = {}
        empty: frozenset[str] = frozenset()
        for node in self._order:
            who, ages = own_audience[node.id]
            if node.parent is None:
                self._lineage[node.id] = (node,)
                self._who[node.id] = empty if who is None else who
                self._ages[node.id] = empty if ages is None else ages
                self._restriction[node.id] = node.restriction
            else:
                parent = node.parent
                self._lineage[node.id] = (*self._lineage[parent], node)
                self._who[node.id] = self._who[parent] if who is None else who
                self._ages[node.id] = self._ages[parent] if ages is None else ages
                self._restriction[node.id] = node.restriction or self._restriction[parent]

        self._term_index: TermIndex | None = None

    # -- construction helpers -------------------------------------------------------------

    def _error(self, message: str, node: Node, hint: str | None = None) -> TreeError:
        return TreeError(message, path=self.path, line=node.line or None, hint=hint)

    def _check_cells(self, node: Node) -> None:
        if not node.id.isdigit() or not node.id.isascii():
            raise self._error(f"id '{node.id}' is not all digits", node, "ids are digits only")
        if node.parent is not None and (not node.parent.isdigit() or not node.parent.isascii()):
            raise self._error(
                f"parent '{node.parent}' is not all digits",
                node,
                "give the parent's id, or '-' for a department",
            )
        if not node.name.strip():
            raise self._error(f"node {node.id} has an empty name", node, "write the name")
        if "|" in node.name:
            raise self._error(f"name of node {node.id} contains '|'", node, FORMAT_HINT)
        missing = [lang for lang in LANGUAGES if lang not in node.terms]
        if missing:
            raise self._error(
                f"missing language cell '{missing[0]}:' for node {node.id}", node, FORMAT_HINT
            )
        unknown = [lang for lang in node.terms if not is_language_code(lang)]
        if unknown:
            raise self._error(
                f"node {node.id}: '{unknown[0]}' is not a two-letter ISO 639-1 language code",
                node,
                FORMAT_HINT,
            )

    def check_leaf_levels(self, lowest: int, deepest: int) -> None:
        """Check that every leaf sits ``lowest`` to ``deepest`` levels deep (a department is 1).

        The shared tree's own rule (:data:`~catmap.tree.treefile.SHARED_LEAF_LEVELS`); a tree of
        one's own only has to keep within ``MAX_LEVEL``.

        Raises:
            TreeError: a leaf outside those levels, naming its line.
        """
        for node in self._order:
            level = self._depth[node.id]
            if node.id in self._children or lowest <= level <= deepest:
                continue
            side = "shallower" if level < lowest else "deeper"
            raise self._error(
                f"leaf {node.id} is at level {level}, {side} than the shared tree allows "
                f"(its leaves sit {lowest} to {deepest} levels deep)",
                node,
                "a tree of one's own may have any depth: give it with --tree-file",
            )

    def _compute_depth(self, start: Node) -> int:
        path: list[str] = []
        seen: set[str] = set()
        current: str | None = start.id
        base = 0
        while current is not None:
            if current in self._depth:
                base = self._depth[current]
                break
            if current in seen:
                cycle = path[path.index(current) :] + [current]
                first = min((self._nodes[i] for i in cycle), key=lambda n: n.line)
                raise self._error(
                    f"cycle in parents: {' -> '.join(cycle)}",
                    first,
                    "one node of the cycle must get another parent",
                )
            seen.add(current)
            path.append(current)
            current = self._nodes[current].parent
        for offset, node_id in enumerate(reversed(path), start=1):
            self._depth[node_id] = base + offset
        return self._depth[start.id]

    # -- container protocol ---------------------------------------------------------------

    def __getitem__(self, node_id: str) -> Node:
        try:
            return self._nodes[node_id]
        except (KeyError, TypeError):
            raise UnknownNode(
                f"no node with id '{node_id}' in tree version {self.version}",
                path=self.path,
                hint="find ids with `catmap tree search TEXT`",
            ) from None

    def __contains__(self, node_id: object) -> bool:
        return node_id in self._nodes

    def __iter__(self) -> Iterator[Node]:
        return iter(self._order)

    def __len__(self) -> int:
        return len(self._order)

    def __repr__(self) -> str:
        return f"CategoryTree(version={self.version!r}, nodes={len(self)}, path={self.path!r})"

    # -- structure ------------------------------------------------------------------------

    def departments(self) -> list[Node]:
        """Return the top-level nodes, in file order."""
        return list(self._children.get(None, ()))

    def children(self, node_id: str) -> list[Node]:
        """Return the direct children of a node, in file order.

        Raises:
            UnknownNode: no such node.
        """
        self[node_id]
        return list(self._children.get(node_id, ()))

    def ancestors(self, node_id: str) -> list[Node]:
        """Return the node's ancestors, department first, without the node itself."""
        self[node_id]
        return list(self._lineage[node_id][:-1])

    def lineage(self, node_id: str) -> list[Node]:
        """Return the ancestors followed by the node itself."""
        self[node_id]
        return list(self._lineage[node_id])

    def descendants(self, node_id: str) -> list[Node]:
        """Return every node below ``node_id`` (not itself), parents before children."""
        self[node_id]
        found: list[Node] = []
        stack = list(reversed(self._children.get(node_id, ())))
        while stack:
            node = stack.pop()
            found.append(node)
            stack.extend(reversed(self._children.get(node.id, ())))
        return found

    def leaves(self, under: str | None = None) -> list[Node]:
        """Return the leaves of the whole tree, or those under a node (itself if a leaf)."""
        if under is None:
            pool: Iterable[Node] = self._order
        else:
            pool = [self[under], *self.descendants(under)]
        return [n for n in pool if n.id not in self._children]

    def is_leaf(self, node_id: str) -> bool:
        """Return True when the node has no children."""
        self[node_id]
        return node_id not in self._children

    def depth(self, node_id: str) -> int:
        """Return the node's level: a department is 1."""
        self[node_id]
        return self._depth[node_id]

    def department(self, node_id: str) -> Node:
        """Return the department (top-level ancestor, or the node itself) of a node."""
        self[node_id]
        return self._lineage[node_id][0]

    def path_names(self, node_id: str) -> tuple[str, ...]:
        """Return the names from the department down to the node."""
        self[node_id]
        return tuple(n.name for n in self._lineage[node_id])

    def path_text(self, node_id: str, sep: str = " > ") -> str:
        """Return the node's path as text, e.g. ``"Footwear > Boots > Ankle boots"``."""
        return sep.join(self.path_names(node_id))

    def resolve(self, text: str) -> Node:
        """Return the node named by an id, or by a path of names separated by ``>``.

        Raises:
            UnknownNode: no node has that id or path.
        """
        text = text.strip()
        if text in self:
            return self[text]
        if text.isdigit():
            raise UnknownNode(
                f"no node with id '{text}' in tree version {self.version}",
                path=self.path,
                hint="find ids with `catmap tree search TEXT`",
            )
        return self.find_path(text)

    def find_path(self, path_text: str) -> Node:
        """Return the node at a path of names from a department down, separated by ``>``.

        Names compare case-insensitively with spaces collapsed.

        Raises:
            UnknownNode: no node has that path (the message says where the path left the tree).
        """
        names = [" ".join(part.split()).casefold() for part in path_text.split(">")]
        if not any(names):
            raise UnknownNode("empty node path", path=self.path, hint="give names joined by '>'")
        found: Node | None = None
        for name in names:
            pool = self._children.get(found.id if found else None, [])
            match = next((n for n in pool if " ".join(n.name.split()).casefold() == name), None)
            if match is None:
                where = f"under '{self.path_text(found.id)}'" if found else "among departments"
                known = ", ".join(n.name for n in pool[:12]) or "none"
                raise UnknownNode(
                    f"no node named '{name}' {where} (path '{path_text}')",
                    path=self.path,
                    hint=f"names there: {known}",
                )
            found = match
        assert found is not None
        return found

    # -- audience and restriction ---------------------------------------------------------

    def who(self, node_id: str) -> frozenset[str]:
        """Return whom the node's products are for (inherited); empty = gender does not apply."""
        self[node_id]
        return self._who[node_id]

    def ages(self, node_id: str) -> frozenset[str]:
        """Return the ages the node's products are for (inherited); empty = age does not apply."""
        self[node_id]
        return self._ages[node_id]

    def restriction(self, node_id: str) -> str | None:
        """Return the node's restriction, or its nearest restricted ancestor's, or None."""
        self[node_id]
        return self._restriction[node_id]

    # -- words and search -----------------------------------------------------------------

    def all_terms(self, node_id: str, *, lang: str | None = None) -> list[str]:
        """Return the node's name and its own terms, in all languages or in one.

        Args:
            node_id: the node.
            lang: a language code to keep only that language's terms; None for all.
        """
        node = self[node_id]
        terms = [node.name]
        for code, words in node.terms.items():
            if lang is None or code == lang:
                terms.extend(words)
        return terms

    def languages(self) -> tuple[str, ...]:
        """Return the language codes the tree has terms in (a node's keywords or synonyms):
        the required ones in the file format's order, then the extra ones (``it:``...) in the
        order the file first gives them; a language whose cells are all empty is not among
        them."""
        used = {code for node in self._order for code, words in node.terms.items() if words}
        extra = dict.fromkeys(
            code for node in self._order for code in node.terms if code not in LANGUAGES
        )
        return tuple(code for code in (*LANGUAGES, *extra) if code in used)

    def search_matches(
        self, text: str, *, limit: int = 10, under: str | None = None, min_score: float = 0.0
    ) -> list[SearchMatch]:
        """Find the nodes whose name or terms (any language) resemble ``text``.

        Matching is word by word on case- and accent-folded text, so "vetements" finds
        "vêtements" and "bande dess" finds "bande dessinée" before "bande" alone
        (:class:`~catmap.tree.search.TermIndex` scores it). Each node is ranked once, by all
        its own words and, counting less, its ancestors'; the match names its best term.

        Args:
            text: what to look for.
            limit: at most this many nodes.
            under: only nodes in this node's subtree (itself included).
            min_score: leave out nodes scoring below this (nodes scoring 0 are always left out).

        Returns:
            Matches, best first; on equal scores a node found by its display name first, then
            file order.
        """
        query = fold_text(text)
        if not query or limit <= 0:
            return []
        if self._term_index is None:
            self._term_index = TermIndex(self._order)
        within = None
        if under is not None:
            below = self.descendants(under)  # raises UnknownNode for an unknown id
            within = [self._index[under], *(self._index[n.id] for n in below)]
        return self._term_index.matches(query, limit=limit, min_score=min_score, within=within)

    def search(
        self, text: str, *, limit: int = 10, under: str | None = None
    ) -> list[tuple[Node, float]]:
        """Find nodes by fuzzy text: (node, score 0..100), best first.

        See :meth:`search_matches`, which also tells which term matched.
        """
        return [(m.node, m.score) for m in self.search_matches(text, limit=limit, under=under)]


def _parents_first(nodes: list[Node]) -> list[Node]:
    """Order nodes as in the file, but hold a node back until its parent has been placed."""
    ids = {n.id for n in nodes}
    placed: set[str] = set()
    waiting: dict[str, list[Node]] = {}
    order: list[Node] = []
    for node in nodes:
        if node.parent is not None and node.parent in ids and node.parent not in placed:
            waiting.setdefault(node.parent, []).append(node)
            continue
        stack = [node]
        while stack:
            current = stack.pop()
            order.append(current)
            placed.add(current.id)
            stack.extend(reversed(waiting.pop(current.id, [])))
    return order


# catmap's own shared trees: the only files held to the shared tree's stricter leaf levels.
_SHIPPED_TAXONOMIES = Path(__file__).resolve().parents[2] / "taxonomies"


def path_label_reader(tree: CategoryTree) -> Callable[[str], str]:
    """Return a reader of labels written as paths of names: the node's id, "" for no node.

    Only labels with a ``>`` are read (a bare name may be the name of several nodes); each
    distinct label is looked up once.
    """
    known: dict[str, str] = {}

    def node_of(label: str) -> str:
        if ">" not in label:
            return ""
        if label not in known:
            try:
                known[label] = tree.find_path(label).id
            except UnknownNode:
                known[label] = ""
        return known[label]

    return node_of


def load_tree(path: str | Path) -> CategoryTree:
    """Read and validate a tree file.

    Args:
        path: the tree file (UTF-8, format in ``taxonomies/README.md``).

    Returns:
        The validated tree.

    Raises:
        TreeError: the file is missing, unreadable or invalid; the error names the line.
    """
    shown = str(path)
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        raise TreeError(
            "tree file not found",
            path=shown,
            hint="give an existing file, or set CATMAP_TAXONOMIES to the tree folder",
        ) from None
    except OSError as error:
        raise TreeError(f"cannot read the tree file: {error.strerror}", path=shown) from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = data[: error.start].count(b"\n") + 1
        raise TreeError(
            "the tree file is not valid UTF-8", path=shown, line=line, hint="save it as UTF-8"
        ) from None
    version, nodes = parse_tree_text(text, shown)
    tree = CategoryTree(nodes, version=version, path=shown)
    if Path(path).resolve().parent == _SHIPPED_TAXONOMIES:
        tree.check_leaf_levels(*SHARED_LEAF_LEVELS)
    return tree


def dump_tree(tree: CategoryTree, path: str | Path) -> None:
    """Write a tree in the tree file format; :func:`load_tree` reads back equal nodes.

    Comments of the original file are not kept.

    Args:
        tree: the tree to write.
        path: the file to write (replaced if it exists).
    """
    write_text_atomic(path, format_tree(tree.version, tree))


def default_tree_path(version: int | str = 1) -> Path:
    """Return the path of the shared tree file ``tree-v{N}.txt``.

    The folder is ``taxonomies/`` next to the catmap package, or the folder named by the
    environment variable ``CATMAP_TAXONOMIES``.

    Raises:
        TreeError: the version is not an integer.
    """
    text = str(version).strip().removeprefix("v")
    if not text.isdigit():
        raise TreeError(f"tree version '{version}' is not an integer", hint="use 1 or 2")
    folder = os.environ.get("CATMAP_TAXONOMIES")
    base = Path(folder) if folder else _SHIPPED_TAXONOMIES
    return base / f"tree-v{int(text)}.txt"


_DEFAULT_CACHE: dict[str, tuple[tuple[int, int], CategoryTree]] = {}


def load_default_tree(version: int | str = 1) -> CategoryTree:
    """Load the shared tree of a version, once per path (reloaded if the file changes).

    Raises:
        TreeError: the file is missing or invalid.
    """
    path = default_tree_path(version)
    key = str(path)
    try:
        stat = path.stat()
        stamp = (stat.st_mtime_ns, stat.st_size)
    except OSError:
        stamp = (-1, -1)
    cached = _DEFAULT_CACHE.get(key)
    if cached is not None and cached[0] == stamp:
        return cached[1]
    tree = load_tree(path)
    _DEFAULT_CACHE[key] = (stamp, tree)
    return tree


def open_tree(version_or_file: str | Path) -> CategoryTree:
    """Return the tree of a file, or the shared tree of a version ("2" or "v2").

    An existing file wins over a version of the same name.

    Raises:
        TreeError: the file is missing or invalid, or the version has no tree file.
    """
    text = str(version_or_file).strip()
    if Path(text).is_file():
        return load_tree(text)
    if text.removeprefix("v").isdigit():
        return load_default_tree(text)
    return load_tree(text)


def summarize_tree(tree: CategoryTree) -> dict[str, Any]:
    """Return the facts ``catmap tree validate`` reports, as plain JSON-ready data.

    Returns:
        A dict with path, version, node count, nodes per level, the languages the tree has
        terms in (:meth:`CategoryTree.languages`), per-department counts, leaf count,
        restricted node counts (effective) and ``valid``.
    """
    levels = Counter(tree.depth(n.id) for n in tree)
    restricted = Counter(r for n in tree if (r := tree.restriction(n.id)) is not None)
    departments = []
    for dept in tree.departments():
        below = tree.descendants(dept.id)
        departments.append(
            {
                "id": dept.id,
                "name": dept.name,
                "nodes": 1 + len(below),
                # A department with no children is a leaf itself (a one-level tree).
                "leaves": len(tree.leaves(dept.id)),
            }
        )
    return {
        "path": tree.path,
        "version": tree.version,
        "nodes": len(tree),
        "levels": {str(level): levels[level] for level in sorted(levels)},
        "languages": list(tree.languages()),
        "departments": departments,
        "leaves": len(tree.leaves()),
        "restricted_nodes": sum(restricted.values()),
        "restricted": dict(sorted(restricted.items())),
        "valid": True,
    }
