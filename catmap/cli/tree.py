"""The ``catmap tree`` commands: check the category tree, show a part of it, search it, diff it."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import Any, TypeVar

import click
from rich.table import Table
from rich.text import Text
from rich.tree import Tree

from catmap.cli._render import console, echo_json, json_option, project_option
from catmap.errors import InputError
from catmap.jobs.tree_from_paths import write_tree_from_paths
from catmap.tree._langcodes import ISO_639_1_CODES
from catmap.tree.taxonomy import (
    CategoryTree,
    Node,
    load_default_tree,
    load_tree,
    open_tree,
    summarize_tree,
)

F = TypeVar("F", bound=Callable[..., Any])


def _tree_version_option(func: F) -> F:
    return click.option(
        "--tree-version",
        type=click.IntRange(min=1),
        default=None,
        metavar="N",
        help="Use the shared tree of this version (taxonomies/tree-vN.txt). Default: the "
        "project's tree (its own from `catmap init`, else shared version 1).",
    )(func)


def _tree_file_option(func: F) -> F:
    return click.option(
        "--tree-file",
        type=click.Path(dir_okay=False),
        default=None,
        metavar="FILE",
        help="Use this tree file instead of the shared tree.",
    )(func)


def _say(text: str) -> None:
    """Print one plain line: no markup (names may hold brackets), no wrapping of long paths."""
    console.print(text, markup=False, soft_wrap=True)


def _open_tree(
    tree_file: str | None, tree_version: int | None, project: str | None
) -> CategoryTree:
    """The tree given, else the shared tree of the version given, else the project's tree."""
    if tree_file is not None:
        return load_tree(tree_file)
    if tree_version is not None:
        return load_default_tree(tree_version)
    from catmap.jobs._project_tree import open_project_tree
    from catmap.project import project_dir

    return open_project_tree(project_dir(project))


@click.group("tree")
def tree_group() -> None:
    """Check, show, search and diff the category tree (the project's, or a shared version)."""


@tree_group.command("validate")
@click.argument("tree_file", required=False, type=click.Path(dir_okay=False))
@_tree_version_option
@project_option
@json_option
def validate_command(
    tree_file: str | None, tree_version: int | None, project: str | None, as_json: bool
) -> None:
    """Check a tree file and count its nodes.

    TREE_FILE defaults to the project's tree (see --tree-version for a shared one). A broken
    file stops with one line naming the file and line of the first problem.
    """
    facts = summarize_tree(_open_tree(tree_file, tree_version, project))
    if as_json:
        echo_json(facts)
        return
    _say(f"Tree file: {facts['path']}")
    _say(f"Tree version: {facts['version']}")
    _say(f"Nodes: {facts['nodes']}")
    levels = ", ".join(f"level {level}: {count}" for level, count in facts["levels"].items())
    _say(f"Nodes per level: {levels}")
    _say(f"Languages: {', '.join(facts['languages']) or 'none'}")
    table = Table(title="Nodes per department", title_justify="left")
    table.add_column("Id")
    table.add_column("Department")
    table.add_column("Nodes", justify="right")
    table.add_column("Leaves", justify="right")
    for dept in facts["departments"]:
        table.add_row(dept["id"], Text(dept["name"]), str(dept["nodes"]), str(dept["leaves"]))
    console.print(table)
    _say(f"Leaves: {facts['leaves']}")
    kinds = ", ".join(f"{kind}: {count}" for kind, count in facts["restricted"].items())
    restricted = f"Restricted nodes: {facts['restricted_nodes']}"
    _say(restricted + (f" ({kinds})" if kinds else ""))
    _say("valid")


def render_tree(
    tree: CategoryTree,
    root: str | None,
    depth: int,
    counts: Mapping[str, int] | None = None,
) -> Tree:
    """Build a rich Tree of a part of the category tree.

    Each line reads ``name  [id]``. A node whose children are cut off by ``depth`` also says how
    many nodes lie below it; a leaf shows nothing more. With ``counts`` every line ends with the
    count given for its node id (missing ids count 0), e.g. products mapped there.

    Args:
        tree: the category tree.
        root: the node to start from, or None for the whole tree (departments first).
        depth: how many levels below the root to show (at least 1).
        counts: optional node id -> number to show beside each node.

    Returns:
        The rich Tree, ready for ``console.print``.
    """

    def label(node: Node, cut_below: bool) -> Text:
        text = Text(node.name)
        text.append(f"  [{node.id}]", style="dim")
        if counts is not None:
            text.append(f"  {counts.get(node.id, 0)}", style="bold")
        if cut_below and not tree.is_leaf(node.id):
            text.append(f"  (+{len(tree.descendants(node.id))} below)", style="dim italic")
        return text

    def grow(branch: Tree, nodes: list[Node], level: int) -> None:
        for child in nodes:
            twig = branch.add(label(child, cut_below=level >= depth))
            if level < depth:
                grow(twig, tree.children(child.id), level + 1)

    if root is None:
        top = Tree(Text(f"Category tree v{tree.version}"))
        if depth >= 1:
            grow(top, tree.departments(), 1)
        return top
    node = tree[root]
    head = label(node, cut_below=depth < 1)
    parents = tree.path_names(root)[:-1]
    if parents:
        head = Text(" > ".join(parents) + " > ", style="dim") + head
    top = Tree(head)
    if depth >= 1:
        grow(top, tree.children(node.id), 1)
    return top


@tree_group.command("show")
@click.argument("node", required=False)
@click.option(
    "--depth",
    type=click.IntRange(min=1),
    default=1,
    show_default=True,
    metavar="N",
    help="How many levels below NODE (or below the top) to show.",
)
@_tree_version_option
@_tree_file_option
@project_option
def show_command(
    node: str | None, depth: int, tree_version: int | None, tree_file: str | None,
    project: str | None,
) -> None:
    """Show the tree as an indented outline.

    NODE is a node id (e.g. 1510) or a path of names such as
    "Groceries and drinks > Coffee".
    Without NODE the departments are shown; use --depth to go deeper.
    """
    tree = _open_tree(tree_file, tree_version, project)
    root = tree.resolve(node).id if node is not None else None
    console.print(render_tree(tree, root, depth))


@tree_group.command("search")
@click.argument("text")
@click.option(
    "--limit",
    type=click.IntRange(min=1),
    default=10,
    show_default=True,
    metavar="N",
    help="Show at most this many nodes.",
)
@click.option(
    "--under",
    metavar="NODE",
    default=None,
    help="Only search below this node (an id or a path of names).",
)
@click.option(
    "--min-score",
    type=click.FloatRange(0, 100),
    default=40.0,
    show_default=True,
    metavar="SCORE",
    help="Leave out nodes scoring below this (0 to 100).",
)
@_tree_version_option
@_tree_file_option
@project_option
@json_option
def search_command(
    text: str,
    limit: int,
    under: str | None,
    min_score: float,
    tree_version: int | None,
    tree_file: str | None,
    project: str | None,
    as_json: bool,
) -> None:
    """Find nodes whose name or keywords resemble TEXT, in any of the tree's languages.

    Word by word: a node holding every word of TEXT ranks first; a word may be begun, carry a
    small typing mistake, be a plural or part of a compound. Accents and letter case do not
    matter. The score runs from 0 to 100; a node none of whose words match scores 50 at most.
    """
    tree = _open_tree(tree_file, tree_version, project)
    under_id = tree.resolve(under).id if under is not None else None
    matches = tree.search_matches(text, limit=limit, under=under_id, min_score=min_score)
    rows = [
        {
            "score": m.score,
            "id": m.node.id,
            "path": tree.path_text(m.node.id),
            "term": m.term,
            "language": m.language,
            "matched_name": m.is_name,
        }
        for m in matches
    ]
    if as_json:
        echo_json({"query": text, "tree_version": tree.version, "matches": rows})
        return
    if not rows:
        _say(f"No node resembles '{text}'.")
        return
    table = Table(title=Text(f"Nodes resembling '{text}'"), title_justify="left")
    table.add_column("Score", justify="right")
    table.add_column("Id")
    table.add_column("Path")
    table.add_column("Matched term")
    table.add_column("Language")
    for match in matches:
        language = f"{match.language} (name)" if match.is_name else match.language
        table.add_row(
            f"{match.score:.0f}",
            match.node.id,
            Text(tree.path_text(match.node.id)),
            Text(match.term),
            language,
        )
    console.print(table)


@tree_group.command("diff")
@click.argument("old")
@click.argument("new")
@click.option(
    "--out",
    type=click.Path(dir_okay=False),
    default=None,
    metavar="FILE",
    help="Write the crosswalk (tab-separated: old_id, new_ids, change, confidence, evidence).",
)
@click.option(
    "--changes",
    "changes_file",
    type=click.Path(exists=True, dir_okay=False),
    default=None,
    metavar="FILE",
    help="Change log between the two trees: it is the crosswalk, the computed one a suggestion.",
)
@json_option
def diff_command(
    old: str, new: str, out: str | None, changes_file: str | None, as_json: bool
) -> None:
    """Show what changed between two trees and where each old node's products go.

    OLD and NEW are tree files or versions of the shared tree ("1", "2"). Ids decide first;
    where ids changed, nodes are matched on their words in all languages and their place.
    With --changes the change log decides, and each line says whether the diff agreed.
    """
    from catmap.tree.changelog import load_change_log
    from catmap.tree.diff import (
        crosswalk_from_changes,
        diff_trees,
        overridden,
        reconcile,
        save_crosswalk,
    )

    old_tree, new_tree = open_tree(old), open_tree(new)
    crosswalk = diff_trees(old_tree, new_tree)
    overrides: list[str] | None = None
    if changes_file is not None:
        log = load_change_log(changes_file)
        crosswalk = reconcile(crosswalk, crosswalk_from_changes(old_tree, new_tree, log))
        overrides = [c.old_id or ",".join(c.new_ids) for c in overridden(crosswalk)]
    if out is not None:
        save_crosswalk(crosswalk, out)

    def paths(tree: CategoryTree, ids: tuple[str, ...] | list[str]) -> list[str]:
        return [tree.path_text(i) for i in ids if i in tree]

    rows: list[dict[str, Any]] = [
        {
            "old_id": c.old_id,
            "new_ids": list(c.new_ids),
            "change": "+".join(c.changes),
            "confidence": c.confidence,
            "source": c.source,
            "old_path": old_tree.path_text(c.old_id) if c.old_id else None,
            "new_paths": paths(new_tree, c.new_ids),
            "evidence": c.evidence,
        }
        for c in crosswalk.changed()
    ]
    if as_json:
        echo_json(
            {
                "old": {"path": old_tree.path, "version": old_tree.version},
                "new": {"path": new_tree.path, "version": new_tree.version},
                "counts": crosswalk.counts(),
                "change_log": changes_file,
                "overridden": overrides,
                "changes": rows,
                "crosswalk_file": out,
            }
        )
        return
    _say(f"Old tree: {old_tree.path} (version {old_tree.version}, {len(old_tree)} nodes)")
    _say(f"New tree: {new_tree.path} (version {new_tree.version}, {len(new_tree)} nodes)")
    counts = Table(title="Changes per type", title_justify="left")
    counts.add_column("Change")
    counts.add_column("Nodes", justify="right")
    for kind, count in crosswalk.counts().items():
        counts.add_row(kind, str(count))
    console.print(counts)
    if overrides is not None:
        _say(
            f"Change log {changes_file}: the crosswalk; the diff disagreed on "
            f"{len(overrides)} node(s)" + (f": {', '.join(overrides)}" if overrides else "")
        )
    if rows:
        table = Table(title="Changes", title_justify="left")
        table.add_column("Change")
        table.add_column("Old")
        table.add_column("New")
        table.add_column("Conf.", justify="right")
        for row in rows:
            old_text = f"{row['old_path']} [{row['old_id']}]" if row["old_id"] else "-"
            new_text = "\n".join(
                f"{p} [{i}]" for p, i in zip(row["new_paths"], row["new_ids"], strict=False)
            )
            table.add_row(
                str(row["change"]),
                Text(old_text),
                Text(new_text or "-"),
                f"{row['confidence']:.2f}",
            )
        console.print(table)
    else:
        _say("No changes.")
    if out is not None:
        _say(f"Crosswalk written to {out}")


@tree_group.command("from-paths")
@click.argument("paths_file", type=click.Path(exists=True, dir_okay=False))
@click.option(
    "--out",
    "out",
    required=True,
    type=click.Path(dir_okay=False),
    metavar="TREE_FILE",
    help="The tree file to write; the id list (<name>.ids.csv) and any lines not used "
    "(<name>.rejects.csv) go beside it.",
)
@click.option(
    "--separator",
    default=None,
    metavar="TEXT",
    help="What separates the levels of a path (default: detected, e.g. ' > ' or '/').",
)
@click.option(
    "--language",
    type=click.Choice(sorted(ISO_639_1_CODES)),
    default="en",
    show_default=True,
    metavar="CODE",
    help="The language of the names (a two-letter ISO 639-1 code): its keyword cell gets "
    "them, an extra cell after the four required ones for a language other than en, fr, de, "
    "es.",
)
@click.option(
    "--tree-version",
    "version",
    type=click.IntRange(min=1),
    default=1,
    show_default=True,
    metavar="N",
    help="The version written in the tree file's header.",
)
@json_option
def from_paths_command(
    paths_file: str, out: str, separator: str | None, language: str, version: int, as_json: bool
) -> None:
    """Write a tree file from a list of category paths.

    PATHS_FILE holds one path of your own names per line, such as 'Garden > Tools > Spades',
    or is a CSV with a path
    column (path, category, breadcrumb...) and maybe an id column. Every level becomes a node;
    ids in the file are kept where they are digits, the other nodes get ids made from their
    path (the same on every conversion). Edit the result's keywords, audience and
    restrictions by hand (taxonomies/README.md), then `catmap init DIR --tree TREE_FILE`.
    Lines that cannot be used are written with their reasons, and the command exits with 3.
    """
    facts = write_tree_from_paths(
        paths_file, out, separator=separator, language=language, version=version
    )
    if as_json:
        echo_json(facts)
    else:
        _say(f"Tree file: {facts['tree_file']} (version {version})")
        _say(
            f"Read {facts['lines']:,} paths (levels split on '{facts['separator']}'): "
            f"{facts['nodes']:,} nodes, {facts['departments']:,} departments, "
            f"{facts['leaves']:,} leaves, {facts['depth']} levels deep"
        )
        if facts["repeated"]:
            named = "path named" if facts["repeated"] == 1 else "paths named"
            _say(f"  {facts['repeated']:,} {named} more than once: used once")
        _say(
            f"Ids: {facts['ids_given']:,} kept from the file, {facts['ids_made']:,} made from "
            f"the paths; the list: {facts['ids_file']}"
        )
        _say(
            f"Next: edit its keywords, audience and restrictions (taxonomies/README.md), then "
            f"`catmap tree validate {facts['tree_file']}` and "
            f"`catmap init DIR --tree {facts['tree_file']}`"
        )
    if facts["rejects_file"]:
        reasons = ", ".join(f"{code} {n}" for code, n in facts["rejected_by_reason"].items())
        raise InputError(
            f"{facts['rejected']:,} of {facts['lines']:,} lines were not used ({reasons}); "
            f"they are written with their reasons to {facts['rejects_file']}",
            path=paths_file,
            hint="fix them in the list and convert it again",
        )


def register(main: click.Group) -> None:
    """Add the ``tree`` command group to catmap's command line."""
    main.add_command(tree_group)
