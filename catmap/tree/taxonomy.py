"""The shared category tree: load and validate tree files, look nodes up, search them.

A tree file (``taxonomies/tree-vN.txt``, format in ``taxonomies/README.md``) holds one node per
line. :func:`load_tree` reads and checks it and returns a :class:`CategoryTree`, which answers
the questions later stages ask: a node's path, its ancestors and leaves, who and which ages its
products are for, whether it is restricted, and which nodes a piece of text resembles.

Example:
    >>> tree = load_tree("taxonomies/tree-v1.txt")  # doctest: +SKIP
    >>> tree.path_text("1523")  # doctest: +SKIP
    'Footwear > Boots > Ankle boots'
"""

from __future__ import annotations

import os
import re
import unicodedata
from collections import Counter
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from catmap.errors import TreeError, UnknownNode

if TYPE_CHECKING:
    import numpy as np

    # The search index: folded terms; their (node id, term, language, is name); term lengths;
    # the file-order rank of each term's node.
    _SearchIndex = tuple[
        list[str], list[tuple[str, str, str, bool]], np.ndarray[Any, Any], np.ndarray[Any, Any]
    ]

__all__ = [
    "AGE_VALUES",
    "LANGUAGES",
    "MAX_LEAF_LEVEL",
    "MIN_LEAF_LEVEL",
    "RESTRICTION_VALUES",
    "WHO_VALUES",
    "CategoryTree",
    "Node",
    "SearchMatch",
    "default_tree_path",
    "dump_tree",
    "fold_text",
    "load_default_tree",
    "load_tree",
    "parse_audience",
    "summarize_tree",
]

LANGUAGES: tuple[str, ...] = ("en", "fr", "de", "es")
WHO_VALUES: tuple[str, ...] = ("female", "male", "unisex")
AGE_VALUES: tuple[str, ...] = ("adult", "kids", "baby")
RESTRICTION_VALUES: tuple[str, ...] = ("alcohol", "tobacco", "weapons", "adult", "medicine")
MIN_LEAF_LEVEL = 3
MAX_LEAF_LEVEL = 5

_HEADER = "@tree-version"
_CELLS = 5 + len(LANGUAGES)
_FORMAT_HINT = "see taxonomies/README.md for the tree file format"


@dataclass(frozen=True, slots=True)
class Node:
    """One node of the category tree, as its line in the tree file gives it.

    Attributes:
        id: stable identifier, digits only.
        parent: the parent's id, None for a department (a top-level node).
        name: English display name.
        terms: language code ("en", "fr", "de", "es") -> the node's own keywords and synonyms.
        audience: the raw audience cell: ".", "none" or "who=... age=...".
        restriction: the node's own restriction, None for "-". Use
            :meth:`CategoryTree.restriction` for the effective (inherited) value.
        line: line of the node in the tree file (0 when built in code). Not part of equality,
            so that a tree written back and read again compares equal.
    """

    id: str
    parent: str | None
    name: str
    terms: Mapping[str, tuple[str, ...]]
    audience: str = "."
    restriction: str | None = None
    line: int = field(default=0, compare=False)

    def __hash__(self) -> int:
        # ``terms`` is a mapping, so the generated hash would fail; equal nodes share an id.
        return hash((self.id, self.parent, self.name))


@dataclass(frozen=True, slots=True)
class SearchMatch:
    """One result of :meth:`CategoryTree.search_matches`.

    Attributes:
        node: the node found.
        score: similarity 0..100 of its best term to the query.
        term: that best term, as written in the tree file.
        language: the term's language ("en" for the node name).
        is_name: True when the best term is the node's display name.
    """

    node: Node
    score: float
    term: str
    language: str
    is_name: bool


# Letters that Unicode decomposition leaves alone but a shopper types without the mark.
_FOLD_EXTRA = str.maketrans({"ø": "o", "æ": "ae", "œ": "oe", "ł": "l", "đ": "d", "ð": "d"})
_NON_WORD = re.compile(r"[\W_]+")


def fold_text(text: str) -> str:
    """Fold text for matching: case-folded, accents removed, punctuation turned into spaces.

    Args:
        text: any text.

    Returns:
        The folded text, words separated by single spaces.

    Example:
        >>> fold_text("Vêtements  d'Été")
        'vetements d ete'
    """
    folded = unicodedata.normalize("NFKD", text.casefold())
    folded = "".join(c for c in folded if not unicodedata.combining(c)).translate(_FOLD_EXTRA)
    return _NON_WORD.sub(" ", folded).strip()


def parse_audience(cell: str) -> tuple[frozenset[str] | None, frozenset[str] | None]:
    """Parse an audience cell into (who, ages); None in either place means "inherit".

    Args:
        cell: ".", "none", or "who=A,B" and/or "age=C,D" separated by a space.

    Returns:
        ``(None, None)`` for ".", two empty sets for "none", otherwise the parts given.

    Raises:
        ValueError: the cell uses a value outside the format (the message says which).
    """
    cell = cell.strip()
    if cell == ".":
        return None, None
    if cell == "none":
        return frozenset(), frozenset()
    if not cell:
        raise ValueError("empty audience cell (use '.' to inherit the parent's)")
    parts: dict[str, frozenset[str]] = {}
    for token in cell.split():
        key, sep, values = token.partition("=")
        if not sep or key not in ("who", "age"):
            raise ValueError(
                f"bad audience part '{token}' (expected '.', 'none', 'who=...' or 'age=...')"
            )
        if key in parts:
            raise ValueError(f"audience part '{key}=' given twice")
        allowed = WHO_VALUES if key == "who" else AGE_VALUES
        chosen = [v.strip() for v in values.split(",")]
        for value in chosen:
            if value not in allowed:
                raise ValueError(
                    f"bad audience value '{value}' for {key}= (one of {', '.join(allowed)})"
                )
        parts[key] = frozenset(chosen)
    return parts.get("who"), parts.get("age")


def _parse_restriction(cell: str) -> str | None:
    cell = cell.strip()
    if cell == "-":
        return None
    if cell not in RESTRICTION_VALUES:
        raise ValueError(
            f"bad restriction '{cell}' (use '-' or one of {', '.join(RESTRICTION_VALUES)})"
        )
    return cell


class CategoryTree:
    """A validated category tree with fast look-ups and fuzzy search.

    Building one checks the structure (unique ids, known parents, no cycles, audience and
    restriction values, leaves three to five levels deep) and raises :class:`TreeError` naming
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
                _parse_restriction(node.restriction or "-")
            except ValueError as error:
                raise self._error(str(error), node, _FORMAT_HINT) from None
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
            if level > MAX_LEAF_LEVEL:
                raise self._error(
                    f"node {node.id} is at level {level}; leaves sit {MIN_LEAF_LEVEL} to "
                    f"{MAX_LEAF_LEVEL} levels deep, deeper than {MAX_LEAF_LEVEL} is not allowed",
                    node,
                    "attach the node higher up",
                )
            if level < MIN_LEAF_LEVEL and node.id not in self._children:
                raise self._error(
                    f"leaf {node.id} is at level {level}, shallower than {MIN_LEAF_LEVEL}; "
                    f"leaves sit {MIN_LEAF_LEVEL} to {MAX_LEAF_LEVEL} levels deep",
                    node,
                    "give it children or move it down",
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

        self._search_index: _SearchIndex | None = None

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
            raise self._error(f"name of node {node.id} contains '|'", node, _FORMAT_HINT)
        missing = [lang for lang in LANGUAGES if lang not in node.terms]
        if missing:
            raise self._error(
                f"missing language cell '{missing[0]}:' for node {node.id}", node, _FORMAT_HINT
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

    def _build_search_index(self) -> _SearchIndex:
        # numpy and rapidfuzz are imported on first search, so that commands that only look
        # nodes up start faster.
        import numpy as np

        if self._search_index is None:
            choices: list[str] = []
            owners: list[tuple[str, str, str, bool]] = []  # node id, term, language, is name
            for node in self._order:
                seen: set[str] = set()
                candidates = [(node.name, "en", True)] + [
                    (term, code, False) for code, words in node.terms.items() for term in words
                ]
                for term, code, is_name in candidates:
                    folded = fold_text(term)
                    if folded and folded not in seen:
                        seen.add(folded)
                        choices.append(folded)
                        owners.append((node.id, term, code, is_name))
            lengths = np.fromiter((len(c) for c in choices), dtype=np.int32, count=len(choices))
            node_rank = np.fromiter(
                (self._index[owner[0]] for owner in owners), dtype=np.int32, count=len(owners)
            )
            self._search_index = (choices, owners, lengths, node_rank)
        return self._search_index

    def search_matches(
        self, text: str, *, limit: int = 10, under: str | None = None, min_score: float = 0.0
    ) -> list[SearchMatch]:
        """Find the nodes whose name or terms (any language) resemble ``text``.

        Matching is fuzzy on case- and accent-folded text, so "vetements" finds "vêtements"
        (see :func:`_score_terms` for the score). Each node is ranked once, by its best term.

        Args:
            text: what to look for.
            limit: at most this many nodes.
            under: only nodes in this node's subtree (itself included).
            min_score: leave out nodes scoring below this (nodes scoring 0 are always left out).

        Returns:
            Matches, best first; on equal scores the term closest to the whole query first, then
            file order.
        """
        import numpy as np

        query = fold_text(text)
        if not query or limit <= 0:
            return []
        choices, owners, lengths, node_rank = self._build_search_index()
        scores, whole = _score_terms(query, choices, lengths)
        keep = scores >= max(min_score, 0.05)
        if under is not None:
            inside = np.zeros(len(self._order), dtype=bool)
            below = self.descendants(under)  # raises UnknownNode for an unknown id
            inside[[self._index[under], *(self._index[n.id] for n in below)]] = True
            keep &= inside[node_rank]
        candidates = np.flatnonzero(keep)
        # Best score first; ties (frequent: a term whose words all occur in the query scores 95)
        # go to the term most like the whole query, then to file order (terms are indexed in
        # file order, so the position breaks the last tie).
        ranked = candidates[np.lexsort((candidates, -whole[candidates], -scores[candidates]))]
        matches: list[SearchMatch] = []
        seen: set[str] = set()
        for position in ranked.tolist():
            node_id, term, code, is_name = owners[position]
            if node_id in seen:
                continue
            seen.add(node_id)
            node = self._nodes[node_id]
            matches.append(SearchMatch(node, float(scores[position]), term, code, is_name))
            if len(matches) == limit:
                break
        return matches

    def search(
        self, text: str, *, limit: int = 10, under: str | None = None
    ) -> list[tuple[Node, float]]:
        """Find nodes by fuzzy text: (node, score 0..100), best first.

        See :meth:`search_matches`, which also tells which term matched.
        """
        return [(m.node, m.score) for m in self.search_matches(text, limit=limit, under=under)]


# Weights of the three similarity measures. Whole-term similarity counts fully; a term whose
# words all appear in the query (or the reverse) a little less, so that an exact term still
# ranks first; a query typed as the start or a piece of a longer term less again. These are
# tuning choices (common practice, no source), checked by the search tests.
_TOKEN_SET_WEIGHT = 0.95
_PARTIAL_WEIGHT = 0.8
_PARTIAL_MIN_LENGTH = 4


def _score_terms(query: str, choices: list[str], lengths: np.ndarray[Any, Any]) -> tuple[Any, Any]:
    """Score a folded query against every folded term at once.

    rapidfuzz's ``cdist`` runs each measure over all terms in C. Partial matching is only used
    for queries of four characters or more and only when the query is the shorter string, so
    that a short term hidden inside a long query ("te" in "vetements") does not score high.

    Returns:
        Two arrays of 0..100: the score, and the plain whole-string similarity used to break
        ties.
    """
    import numpy as np
    from rapidfuzz import fuzz, process

    if not choices:
        return np.zeros(0), np.zeros(0)
    whole = process.cdist([query], choices, scorer=fuzz.ratio, dtype=np.float32)[0]
    tokens = process.cdist([query], choices, scorer=fuzz.token_set_ratio, dtype=np.float32)[0]
    scores = np.maximum(whole, tokens * _TOKEN_SET_WEIGHT)
    if len(query) >= _PARTIAL_MIN_LENGTH:
        partial = process.cdist([query], choices, scorer=fuzz.partial_ratio, dtype=np.float32)[0]
        partial[lengths < len(query)] = 0
        scores = np.maximum(scores, partial * _PARTIAL_WEIGHT)
    return np.round(scores.astype(np.float64), 1), whole


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


# -- reading and writing files ------------------------------------------------------------


def _split_cells(text: str) -> list[str]:
    return [cell.strip() for cell in text.split("|")]


def _parse_node(cells: list[str], line: int, path: str) -> Node:
    def fail(message: str, hint: str = _FORMAT_HINT) -> TreeError:
        return TreeError(message, path=path, line=line, hint=hint)

    if len(cells) != _CELLS:
        present = {c.partition(":")[0].strip() for c in cells[5:] if ":" in c}
        missing = [lang for lang in LANGUAGES if lang not in present]
        message = f"expected {_CELLS} cells separated by ' | ', found {len(cells)}"
        if len(cells) < _CELLS and missing:
            message = f"missing language cell '{missing[0]}:' ({message})"
        raise fail(message)
    node_id, parent, name, audience, restriction = cells[:5]
    if not node_id.isdigit() or not node_id.isascii():
        raise fail(f"id '{node_id}' is not all digits", "ids are digits only")
    if parent != "-" and (not parent.isdigit() or not parent.isascii()):
        raise fail(
            f"parent '{parent}' is not all digits", "give the parent's id, or '-' for a department"
        )
    if not name:
        raise fail(f"node {node_id} has an empty name", "write the name")
    try:
        parse_audience(audience)
        own_restriction = _parse_restriction(restriction)
    except ValueError as error:
        raise fail(str(error)) from None
    terms: dict[str, tuple[str, ...]] = {}
    for position, (lang, cell) in enumerate(zip(LANGUAGES, cells[5:], strict=True), start=6):
        code, sep, words = cell.partition(":")
        code = code.strip()
        if not sep or code != lang:
            if sep and code in LANGUAGES:
                raise fail(
                    f"cell {position} is '{code}:' but should be '{lang}:' "
                    f"(language cells go {', '.join(LANGUAGES)})"
                )
            raise fail(f"missing language cell '{lang}:' (cell {position} is '{cell[:30]}')")
        terms[lang] = tuple(filter(None, map(str.strip, words.split(";"))))
    return Node(
        id=node_id,
        parent=None if parent == "-" else parent,
        name=name,
        terms=terms,
        audience=audience,
        restriction=own_restriction,
        line=line,
    )


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

    version: str | None = None
    nodes: list[Node] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        stripped = raw.strip()
        if not stripped or stripped.startswith("#"):
            continue
        if stripped.startswith("@"):
            keyword, _, value = stripped.partition(" ")
            if keyword != _HEADER:
                raise TreeError(
                    f"unknown header '{keyword}'", path=shown, line=number, hint=_FORMAT_HINT
                )
            if version is not None:
                raise TreeError("second '@tree-version' header", path=shown, line=number)
            value = value.strip()
            if not value.isdigit() or not value.isascii():
                raise TreeError(
                    f"tree version '{value}' is not an integer", path=shown, line=number
                )
            version = str(int(value))
            continue
        if version is None:
            raise TreeError(
                "missing header '@tree-version N' before the first node",
                path=shown,
                line=number,
                hint="add a line such as '@tree-version 1' at the top",
            )
        nodes.append(_parse_node(_split_cells(stripped), number, shown))
    if version is None:
        raise TreeError(
            "missing header '@tree-version N' (the file has no nodes either)",
            path=shown,
            line=1,
            hint="add a line such as '@tree-version 1' at the top",
        )
    return CategoryTree(nodes, version=version, path=shown)


def _node_line(node: Node) -> str:
    cells = [
        node.id,
        node.parent if node.parent is not None else "-",
        node.name,
        node.audience,
        node.restriction or "-",
    ]
    for lang in LANGUAGES:
        words = "; ".join(node.terms.get(lang, ()))
        cells.append(f"{lang}: {words}" if words else f"{lang}:")
    return " | ".join(cells)


def dump_tree(tree: CategoryTree, path: str | Path) -> None:
    """Write a tree in the tree file format; :func:`load_tree` reads back equal nodes.

    Comments of the original file are not kept.

    Args:
        tree: the tree to write.
        path: the file to write (replaced if it exists).
    """
    lines = [f"{_HEADER} {tree.version}"]
    lines.extend(_node_line(node) for node in tree)
    Path(path).write_text("\n".join(lines) + "\n", encoding="utf-8")


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
    base = Path(folder) if folder else Path(__file__).resolve().parents[2] / "taxonomies"
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


def summarize_tree(tree: CategoryTree) -> dict[str, Any]:
    """Return the facts ``catmap tree validate`` reports, as plain JSON-ready data.

    Returns:
        A dict with path, version, node count, nodes per level, per-department counts,
        leaf count, restricted node counts (effective) and ``valid``.
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
                "leaves": sum(1 for n in below if tree.is_leaf(n.id)),
            }
        )
    return {
        "path": tree.path,
        "version": tree.version,
        "nodes": len(tree),
        "levels": {str(level): levels[level] for level in sorted(levels)},
        "departments": departments,
        "leaves": len(tree.leaves()),
        "restricted_nodes": sum(restricted.values()),
        "restricted": dict(sorted(restricted.items())),
        "valid": True,
    }
