"""Brand commands: ``catmap brands candidates`` (unknown names that repeat in a feed) and
``catmap brands accept`` (add a brand to the project's brand dictionary)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click
from rich.markup import escape
from rich.table import Table

from catmap.attributes import BrandCandidates, BrandDictionary
from catmap.attributes.brand import (
    append_brand,
    demo_dictionary_path,
    dictionary_in_use,
    project_dictionary_path,
)
from catmap.cli._render import console, echo_json, json_option
from catmap.cli._render import project_option as _project_option
from catmap.cli.feeds import SAMPLE_SIZE, _open
from catmap.feeds.fieldmap import load_profile, suggest_profile
from catmap.feeds.ingest import FATAL_FEED_ERRORS, Accounting, iter_products
from catmap.project import profile_path, project_dir
from catmap.records import Product

_dictionary_option = click.option(
    "--dictionary",
    "dictionary",
    default=None,
    type=click.Path(dir_okay=False, path_type=Path),
    help="Brand dictionary CSV (default: <project>/brands.csv, else the demo one).",
)


@click.group("brands")
def brands_group() -> None:
    """Find brands the dictionary does not know yet, and add them."""


@brands_group.command("candidates")
@click.argument("feed", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option(
    "--min-count",
    default=5,
    show_default=True,
    type=click.IntRange(min=1),
    help="Show names seen at least this many times.",
)
@click.option(
    "--retailer",
    "retailers",
    multiple=True,
    help="The retailer's own name (never a candidate); repeat for several.",
)
@_dictionary_option
@_project_option
@json_option
def candidates_command(
    feed: Path,
    min_count: int,
    retailers: tuple[str, ...],
    dictionary: Path | None,
    project: str | None,
    as_json: bool,
) -> None:
    """List names that repeat in a feed's brand field or leading title words but are unknown.

    Uses the feed's saved profile (see `catmap inspect`), or suggests one without saving it.
    """
    folder = project_dir(project)
    dictionary_path = dictionary_in_use(folder, dictionary)
    brands = BrandDictionary.from_csv(dictionary_path) if dictionary_path else BrandDictionary([])
    saved = profile_path(folder, feed)
    profile = load_profile(saved) if saved.exists() else None
    opened = _open(feed, profile, None, None, None)
    if profile is None:
        profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    collector = BrandCandidates(brands, retailer_names=retailers)
    accounting = Accounting()
    stopped: str | None = None
    try:
        for item in iter_products(opened, profile, accounting):
            if isinstance(item, Product):
                collector.add(item.brand, item.title)
    except FATAL_FEED_ERRORS as error:
        stopped = str(error)
    found = collector.candidates(min_count)
    facts: dict[str, Any] = {
        "feed": str(feed),
        "dictionary": str(dictionary_path) if dictionary_path else None,
        "products": accounting.kept,
        "min_count": min_count,
        "candidates": [
            {"name": c.name, "count": c.count, "source": c.source, "examples": c.examples}
            for c in found
        ],
        "stopped_early": stopped,
    }
    if as_json:
        echo_json(facts)
        return
    if not found:
        console.print(
            f"No unknown name seen {min_count} times or more in {facts['products']:,} products."
        )
    else:
        table = Table(title=f"Brand candidates ({facts['products']:,} products)")
        for header in ("name", "count", "seen in", "example titles"):
            table.add_column(header, justify="right" if header == "count" else "left")
        for c in found:
            table.add_row(
                escape(c.name), f"{c.count:,}", c.source, escape(" | ".join(c.examples))
            )
        console.print(table)
        console.print("Add one with: catmap brands accept NAME [--department ID]")
    if stopped:
        console.print(f"[bold red]Reading stopped early:[/bold red] {escape(stopped)}")


@brands_group.command("accept")
@click.argument("name")
@click.option("--variant", "variants", multiple=True, help="Another spelling; repeat for several.")
@click.option(
    "--department", "departments", multiple=True, help="Department node id; repeat for several."
)
@_dictionary_option
@_project_option
@json_option
def accept_command(
    name: str,
    variants: tuple[str, ...],
    departments: tuple[str, ...],
    dictionary: Path | None,
    project: str | None,
    as_json: bool,
) -> None:
    """Add a brand (with case, joined and legal-suffix spellings) to the brand dictionary.

    The project's dictionary <project>/brands.csv is created from the demo one on first use.
    """
    path = dictionary or project_dictionary_path(project_dir(project))
    created = not path.exists()
    entry = append_brand(
        path, name, variants=variants, departments=departments, seed_from=demo_dictionary_path()
    )
    facts = {
        "brand": entry.name,
        "variants": list(entry.variants),
        "departments": list(entry.departments),
        "dictionary": str(path),
        "created": created,
    }
    if as_json:
        echo_json(facts)
        return
    console.print(f"Added {escape(entry.name)} to {escape(str(path))}"
                  + (" (created)" if created else ""))
    console.print("Spellings: " + escape(", ".join(entry.variants)))
    if entry.departments:
        console.print("Departments: " + escape(", ".join(entry.departments)))


def register(main: click.Group) -> None:
    """Add the ``brands`` group to the catmap command group."""
    main.add_command(brands_group)
