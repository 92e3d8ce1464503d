"""Build a tree file from a list of category paths: the tree a team already has, in the form
most systems can export it (one path per line, or a CSV with a path column and maybe an id).

Every prefix of a path becomes a node ("Garden > Tools > Spades" makes Garden, Garden > Tools
and the spade leaf). Ids given in the file are kept where they are digits; every other node
gets an id made from its path (a hash: the same path gets the same id when the list is
converted again, so labels and mappings keep pointing at it). The node's name goes into the
keyword cell of the list's language, with its parts ("Tops and T-shirts": "tops",
"t-shirts"); the other cells stay empty, audience inherits and nothing is restricted, all to
edit by hand (taxonomies/README.md).

Nothing good is lost: a line that cannot be a path (too deep, an id given twice to different
paths...) is rejected with its line number and the reason, and the rest is built."""

from __future__ import annotations

import hashlib
import re
from collections import Counter
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

from catmap.tree._langcodes import ISO_639_1_CODES
from catmap.tree.treefile import MAX_LEVEL, Node

__all__ = [
    "SEPARATORS",
    "PathsTree",
    "detect_separator",
    "tree_from_paths",
]

# Separators tried, most specific first; the one found in the most lines wins.
SEPARATORS: tuple[str, ...] = (" > ", ">", " | ", "|", " » ", "»", " › ", "›", " / ", "/", "::")
# Words that join two names in one node's name, per language ("Tops and T-shirts").
_JOINERS = {"en": "and", "fr": "et", "de": "und", "es": "y", "it": "e", "nl": "en", "pt": "e"}
# Generated ids: this many digits, so that they never meet the short ids a team writes.
_ID_DIGITS = 9


@dataclass(frozen=True, slots=True)
class PathsTree:
    """A tree built from category paths, with what happened to each line.

    Attributes:
        nodes: the nodes, parents before children, in the order the paths first name them.
        ids: (the id the file gave or "", the node id, the path as text) for every node.
        rejects: (line number, reason code, explanation, the line) of each line not used.
        separator: the separator that split the paths.
        lines: path lines read (blank and comment lines not counted).
        repeated: lines that named a path already read (used once).
    """

    nodes: list[Node]
    ids: list[tuple[str, str, str]]
    rejects: list[tuple[int, str, str, str]] = field(default_factory=list)
    separator: str = " > "
    lines: int = 0
    repeated: int = 0

    def depth(self) -> int:
        """The deepest level (a department is level 1)."""
        level: dict[str, int] = {}
        for node in self.nodes:
            level[node.id] = 1 if node.parent is None else level[node.parent] + 1
        return max(level.values(), default=0)

    def leaves(self) -> int:
        """How many nodes have no child."""
        parents = {node.parent for node in self.nodes}
        return sum(node.id not in parents for node in self.nodes)


def detect_separator(paths: Iterable[str]) -> str:
    """Return the separator of :data:`SEPARATORS` found in the most lines (" > " when none is).

    A spaced form wins over its bare form when it is in as many lines ("A > B" is split on
    " > ", so that a name may hold a bare ">" only if it has no spaces around it).
    """
    counts: Counter[str] = Counter()
    for text in paths:
        for separator in SEPARATORS:
            if separator in text:
                counts[separator] += 1
    if not counts:
        return " > "
    best = max(counts.values())
    return next(s for s in SEPARATORS if counts[s] == best)


def _clean(name: str) -> str:
    return " ".join(name.replace("|", "/").split())


def _split(text: str, separator: str) -> list[str]:
    return [_clean(part) for part in text.split(separator.strip() or separator)]


def _terms(name: str, language: str) -> tuple[str, ...]:
    """The name and its parts as keywords, lower case: "Tops and T-shirts" gives
    ("tops and t-shirts", "tops", "t-shirts")."""
    joiner = _JOINERS.get(language, "and")
    words = name.casefold()
    parts = [p.strip() for p in re.split(rf",|&|\+|/|;|\s{joiner}\s", words) if p.strip()]
    terms = [words.replace(";", ",")] + [p for p in parts if p != words]
    return tuple(dict.fromkeys(terms))


def _made_id(path: tuple[str, ...], taken: set[str]) -> str:
    """A digits-only id from the path (stable over conversions), unused so far."""
    key = "\x1f".join(part.casefold() for part in path)
    salt = 0
    while True:
        digest = hashlib.sha256(f"{key}\x1e{salt}".encode()).hexdigest()
        low = 10 ** (_ID_DIGITS - 1)
        made = str(low + int(digest, 16) % (9 * low))
        if made not in taken:
            return made
        salt += 1


def tree_from_paths(
    rows: Sequence[tuple[int, str, str]],
    *,
    separator: str | None = None,
    language: str = "en",
) -> PathsTree:
    """Build the nodes of the paths given.

    Args:
        rows: (line number, the id given or "", the path text) of each path line.
        separator: what separates levels; None detects it (:func:`detect_separator`).
        language: the language of the names (its keyword cell gets them).

    Returns:
        The tree, with its id list and the rejected lines.

    Raises:
        ValueError: ``language`` is not a two-letter ISO 639-1 code.
    """
    if language not in ISO_639_1_CODES:
        raise ValueError(f"'{language}' is not a two-letter ISO 639-1 language code")
    separator = separator or detect_separator(text for _n, _i, text in rows)
    rejects: list[tuple[int, str, str, str]] = []
    # First pass: the paths, and the ids the file gives, checked against each other.
    paths: list[tuple[int, str, tuple[str, ...]]] = []
    given_by_path: dict[tuple[str, ...], str] = {}
    path_by_given: dict[str, tuple[str, ...]] = {}
    written: dict[tuple[str, ...], str] = {}  # a path as the file first wrote it
    repeated = 0
    for number, given, text in rows:
        parts = [p for p in _split(text, separator) if p]
        if not parts:
            rejects.append((number, "empty_path", "no category name on the line", text))
            continue
        if len(parts) > MAX_LEVEL:
            rejects.append((
                number, "too_deep",
                f"{len(parts)} levels; a tree holds at most {MAX_LEVEL} (check the separator: "
                f"'{separator}')",
                text,
            ))  # fmt: skip
            continue
        key = tuple(p.casefold() for p in parts)
        given = given.strip()
        if given:
            if given in path_by_given and path_by_given[given] != key:
                rejects.append((
                    number, "id_reused",
                    f"id {given} is already the id of '{written[path_by_given[given]]}'",
                    text,
                ))  # fmt: skip
                continue
            if key in given_by_path and given_by_path[key] != given:
                rejects.append((
                    number, "path_with_two_ids",
                    f"this path already has id {given_by_path[key]}",
                    text,
                ))  # fmt: skip
                continue
            path_by_given[given] = key
            given_by_path[key] = given
        written.setdefault(key, " > ".join(parts))
        paths.append((number, given, tuple(parts)))
    # Second pass: every prefix a node, parents first, with its id.
    taken = {g for g in given_by_path.values() if g.isdigit()}
    id_of: dict[tuple[str, ...], str] = {}
    nodes: list[Node] = []
    ids: list[tuple[str, str, str]] = []
    seen: set[tuple[str, ...]] = set()
    for _number, _given, levels in paths:
        key = tuple(p.casefold() for p in levels)
        if key in seen:
            repeated += 1
            continue
        seen.add(key)
        for depth in range(1, len(levels) + 1):
            prefix = key[:depth]
            if prefix in id_of:
                continue
            source = given_by_path.get(prefix, "")
            node_id = source if source.isdigit() else _made_id(prefix, taken)
            taken.add(node_id)
            id_of[prefix] = node_id
            name = levels[depth - 1]
            nodes.append(
                Node(
                    id=node_id,
                    parent=id_of[prefix[:-1]] if depth > 1 else None,
                    name=name,
                    terms={language: _terms(name, language)},
                )
            )
            ids.append((source, node_id, " > ".join(levels[:depth])))
    return PathsTree(nodes, ids, rejects, separator, len(rows), repeated)
