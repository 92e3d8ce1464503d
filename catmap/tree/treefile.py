"""A node of the category tree and the tree file format: value sets, line parser, line writer.

A tree file (``taxonomies/tree-vN.txt``, format in ``taxonomies/README.md``) holds an
``@tree-version N`` header and one node per line. :func:`parse_tree_text` turns the text into
the version and its :class:`Node` list, checking each line on its own; the checks that need the
whole tree (parents, cycles, depth) belong to :class:`catmap.tree.taxonomy.CategoryTree`.
:func:`format_tree` writes nodes back as text. Nothing here reads or writes files.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field

from catmap.errors import TreeError
from catmap.tree._langcodes import ISO_639_1_CODES

__all__ = [
    "AGE_VALUES",
    "FORMAT_HINT",
    "LANGUAGES",
    "is_language_code",
    "MAX_LEVEL",
    "SHARED_LEAF_LEVELS",
    "RESTRICTION_VALUES",
    "WHO_VALUES",
    "Node",
    "format_tree",
    "parse_audience",
    "parse_node",
    "parse_restriction",
    "parse_tree_text",
    "split_cells",
]

# The required language cells, in the order every node line gives them. A line may add more
# (``| it: ...``, any ISO 639-1 code once) after these.
LANGUAGES: tuple[str, ...] = ("en", "fr", "de", "es")
WHO_VALUES: tuple[str, ...] = ("female", "male", "unisex")
AGE_VALUES: tuple[str, ...] = ("adult", "kids", "baby")
RESTRICTION_VALUES: tuple[str, ...] = ("alcohol", "tobacco", "weapons", "adult", "medicine")
# The deepest level a node of any tree may sit at (a department is level 1). A chosen setting,
# generous on purpose: real trees of one's own run from a flat list of categories to eight or
# so levels; the limit only stops a file whose parents run away (a mistaken parent column).
MAX_LEVEL = 10
# The shared tree's own, stricter rule (taxonomies/README.md): its leaves sit three to five
# levels deep. A tree of one's own may have leaves at any level from 1 to MAX_LEVEL.
SHARED_LEAF_LEVELS = (3, 5)

HEADER = "@tree-version"
_CELLS = 5 + len(LANGUAGES)
FORMAT_HINT = "see taxonomies/README.md for the tree file format"


@dataclass(frozen=True, slots=True)
class Node:
    """One node of the category tree, as its line in the tree file gives it.

    Attributes:
        id: stable identifier, digits only.
        parent: the parent's id, None for a department (a top-level node).
        name: English display name.
        terms: language code -> the node's own keywords and synonyms: the required
            :data:`LANGUAGES` first, then any extra language the line gives, in its order.
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


def parse_restriction(cell: str) -> str | None:
    """Parse a restriction cell: None for "-", else one of :data:`RESTRICTION_VALUES`.

    Raises:
        ValueError: the cell is neither (the message says what is allowed).
    """
    cell = cell.strip()
    if cell == "-":
        return None
    if cell not in RESTRICTION_VALUES:
        raise ValueError(
            f"bad restriction '{cell}' (use '-' or one of {', '.join(RESTRICTION_VALUES)})"
        )
    return cell


def is_language_code(code: str) -> bool:
    """Whether ``code`` is a two-letter ISO 639-1 language code, in lower case ("it", "nl")."""
    return code in ISO_639_1_CODES


def _split_terms(words: str) -> tuple[str, ...]:
    return tuple(filter(None, map(str.strip, words.split(";"))))


def split_cells(text: str) -> list[str]:
    """Split a node line into its stripped cells."""
    return [cell.strip() for cell in text.split("|")]


def parse_node(cells: list[str], line: int, path: str) -> Node:
    """Build the node one tree file line describes, checking each cell.

    Args:
        cells: the line's cells (:func:`split_cells`).
        line: the line number, for errors and :attr:`Node.line`.
        path: the file, for errors.

    Returns:
        The node.

    Raises:
        TreeError: a cell is missing or malformed; the message says which.
    """

    def fail(message: str, hint: str = FORMAT_HINT) -> TreeError:
        return TreeError(message, path=path, line=line, hint=hint)

    if len(cells) < _CELLS:
        present = {c.partition(":")[0].strip() for c in cells[5:] if ":" in c}
        missing = [lang for lang in LANGUAGES if lang not in present]
        message = f"expected at least {_CELLS} cells separated by ' | ', found {len(cells)}"
        if missing:
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
        own_restriction = parse_restriction(restriction)
    except ValueError as error:
        raise fail(str(error)) from None
    terms: dict[str, tuple[str, ...]] = {}
    for position, (lang, cell) in enumerate(zip(LANGUAGES, cells[5:_CELLS], strict=True), start=6):
        code, sep, words = cell.partition(":")
        code = code.strip()
        if not sep or code != lang:
            if sep and code in LANGUAGES:
                message = (
                    f"cell {position} is '{code}:' but should be '{lang}:' "
                    f"(language cells go {', '.join(LANGUAGES)})"
                )
            else:
                message = f"missing language cell '{lang}:' (cell {position} is '{cell[:30]}')"
            if len(cells) > _CELLS:
                message = (
                    f"expected {_CELLS} cells separated by ' | ' (then any extra language "
                    f"cells), found {len(cells)}: {message}"
                )
            raise fail(message)
        terms[lang] = _split_terms(words)
    for position, cell in enumerate(cells[_CELLS:], start=_CELLS + 1):
        code, sep, words = cell.partition(":")
        code = code.strip()
        if not sep:
            raise fail(
                f"cell {position} '{cell[:30]}' is not a language cell "
                "(extra cells after the four required ones are 'xx: term; term')"
            )
        if not is_language_code(code):
            raise fail(
                f"cell {position}: '{code}' is not a two-letter ISO 639-1 language code",
                "extra language cells start with a code such as 'it:', 'nl:' or 'pt:'",
            )
        if code in terms:
            raise fail(f"cell {position}: language '{code}:' given twice")
        terms[code] = _split_terms(words)
    return Node(
        id=node_id,
        parent=None if parent == "-" else parent,
        name=name,
        terms=terms,
        audience=audience,
        restriction=own_restriction,
        line=line,
    )


def parse_tree_text(text: str, path: str) -> tuple[str, list[Node]]:
    """Parse the text of a tree file into its version and its nodes, in file order.

    Blank lines and ``#`` comments are skipped.

    Args:
        text: the decoded file.
        path: the file, for errors.

    Returns:
        The version (the ``@tree-version`` header, as a plain integer string) and the nodes.

    Raises:
        TreeError: the header is missing, repeated or bad, or a node line is bad; the error
            names the line.
    """
    shown = path
    version: str | None = None
    nodes: list[Node] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        stripped = raw.strip()
        if not stripped or stripped.startswith("#"):
            continue
        if stripped.startswith("@"):
            keyword, _, value = stripped.partition(" ")
            if keyword != HEADER:
                raise TreeError(
                    f"unknown header '{keyword}'", path=shown, line=number, hint=FORMAT_HINT
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
        nodes.append(parse_node(split_cells(stripped), number, shown))
    if version is None:
        raise TreeError(
            "missing header '@tree-version N' (the file has no nodes either)",
            path=shown,
            line=1,
            hint="add a line such as '@tree-version 1' at the top",
        )
    return version, nodes


def _node_line(node: Node) -> str:
    cells = [
        node.id,
        node.parent if node.parent is not None else "-",
        node.name,
        node.audience,
        node.restriction or "-",
    ]
    extra = [lang for lang in node.terms if lang not in LANGUAGES]
    for lang in (*LANGUAGES, *extra):
        words = "; ".join(node.terms.get(lang, ()))
        cells.append(f"{lang}: {words}" if words else f"{lang}:")
    return " | ".join(cells)


def format_tree(version: str, nodes: Iterable[Node]) -> str:
    """Return the text of a tree file holding these nodes; :func:`parse_tree_text` reads it back.

    Args:
        version: the tree version for the header.
        nodes: the nodes, in the order to write them.
    """
    lines = [f"{HEADER} {version}"]
    lines.extend(_node_line(node) for node in nodes)
    return "\n".join(lines) + "\n"
