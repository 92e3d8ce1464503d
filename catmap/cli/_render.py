"""Shared rendering helpers for the CLI: one rich console, JSON output for --json."""

from __future__ import annotations

import json
from collections.abc import Mapping
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

import click
from rich.console import Console

console = Console(highlight=False)
err_console = Console(stderr=True, highlight=False)


def _default(value: Any) -> Any:
    if isinstance(value, Decimal):
        return str(value)
    if isinstance(value, (datetime, date)):
        return value.isoformat()
    if isinstance(value, Path):
        return str(value)
    if isinstance(value, (set, frozenset, tuple)):
        return list(value)
    raise TypeError(f"not JSON serialisable: {type(value).__name__}")


def echo_json(facts: Mapping[str, Any]) -> None:
    """Print the facts of a report as one JSON document on stdout (for --json)."""
    click.echo(json.dumps(facts, default=_default, ensure_ascii=False, indent=2))


json_option = click.option(
    "--json", "as_json", is_flag=True, help="Print the same facts as JSON, for scripts and CI."
)

project_option = click.option(
    "--project",
    "project",
    default=None,
    help="Project folder (default: $CATMAP_PROJECT or ./catmap-work).",
)


def model_option(help_text: str) -> Any:
    """The ``--model DIR`` option (a model folder), with a command's own help text."""
    return click.option(
        "--model",
        "model_path",
        default=None,
        type=click.Path(file_okay=False, path_type=Path),
        help=help_text,
    )

feed_name_option = click.option(
    "--feed",
    "feed_name",
    default=None,
    metavar="NAME",
    help="The feed's name, which keeps its profile, rules and reviews (default: the file name "
    "without suffixes, dates and run counters: shop-a_2026-11-30.csv is shop-a).",
)


_TREE_FILE_HELP = "A category tree file of your own (default: the project's tree)."


def tree_file_option(help_text: str = _TREE_FILE_HELP) -> Any:
    """The ``--tree-file FILE`` option: a tree file that wins over the project's tree."""
    return click.option(
        "--tree-file",
        "tree_file",
        default=None,
        type=click.Path(exists=True, dir_okay=False, path_type=Path),
        help=help_text,
    )


tree_version_option = click.option(
    "--tree-version",
    default=None,
    help="Version of the shared category tree (default: the project's tree).",
)
