"""``catmap init``: start a project of one's own (its tree, brand list and labelled feeds)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click
from rich.markup import escape

from catmap.cli._render import console, echo_json, json_option
from catmap.jobs.init import init_project


@click.command("init")
@click.argument("folder", type=click.Path(file_okay=False, path_type=Path))
@click.option(
    "--tree",
    "tree_file",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="A category tree file of your own (format in taxonomies/README.md); it is validated, "
    "copied into the project and fingerprinted. Default: the shared tree.",
)
@click.option(
    "--tree-version",
    default="1",
    show_default=True,
    help="Version of the shared tree, when no --tree is given.",
)
@click.option(
    "--brands",
    "brands_file",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Brand list CSV (columns brand, variants, departments), copied into the project. "
    "Default: none (brands are then read from the feed's brand field only).",
)
@click.option(
    "--labelled",
    "labelled",
    multiple=True,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="A labelled feed (a column of node ids) that `catmap train` learns from; repeat for "
    "several.",
)
@json_option
def init_command(
    folder: Path,
    tree_file: Path | None,
    tree_version: str,
    brands_file: Path | None,
    labelled: tuple[Path, ...],
    as_json: bool,
) -> None:
    """Start a project of your own in FOLDER: its tree, brand list and labelled feeds.

    Nothing of the demo world is used. Then: `catmap train --project FOLDER`, `catmap onboard
    FEED --project FOLDER`, `catmap review --project FOLDER`.
    """
    facts = init_project(
        folder,
        tree_file=tree_file,
        tree_version=tree_version,
        brands_file=brands_file,
        labelled=labelled,
    )
    if as_json:
        echo_json(facts)
        return
    _render(facts)


def _render(facts: dict[str, Any]) -> None:
    tree = facts["tree"]
    brands = facts["brands"]
    project = escape(facts["project"])
    console.print(f"Project started in {project}", soft_wrap=True)
    whose = "your own, copied from " + escape(tree["given"]) if tree["own"] else "the shared tree"
    console.print(
        f"  tree       {whose}: version {tree['version']}, {tree['nodes']:,} nodes, "
        f"{tree['leaves']:,} leaves, fingerprint {tree['fingerprint'][:12]}",
        soft_wrap=True,
    )
    if brands["file"]:
        console.print(
            f"  brands     {brands['count']:,} in {escape(brands['file'])}", soft_wrap=True
        )
    else:
        console.print("  brands     none (add some with `catmap brands accept NAME`)")
    if facts["labelled"]:
        for feed in facts["labelled"]:
            console.print(f"  labelled   {escape(feed)}", soft_wrap=True)
    else:
        console.print("  labelled   none (give labelled feeds to `catmap train FEED...`)")
    console.print(f"Settings: {escape(facts['settings'])}", soft_wrap=True)
    console.print(f"Next: catmap train --project {project}", soft_wrap=True)


def register(main: click.Group) -> None:
    """Add ``init`` to the catmap command group."""
    main.add_command(init_command)
