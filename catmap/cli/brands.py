"""Brand commands: ``catmap brands candidates`` (unknown names that repeat in a feed),
``catmap brands accept`` (add a brand to the project's brand dictionary), ``catmap brands list``
(the project's brand registry), ``catmap brands confirm`` (trust a brand of the registry),
``catmap brands reject`` (say it is no brand) and ``catmap brands reset`` (a candidate again)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click
from rich.markup import escape
from rich.table import Table

from catmap.cli._render import console, echo_json, feed_name_option, json_option
from catmap.cli._render import project_option as _project_option
from catmap.jobs.brands import (
    accept_brand,
    brand_candidates,
    confirm_registry_brand,
    registry_brands,
    reject_registry_brand,
    reset_registry_brand,
)
from catmap.project import project_dir

_dictionary_option = click.option(
    "--dictionary",
    "dictionary",
    default=None,
    type=click.Path(dir_okay=False, path_type=Path),
    help="Brand dictionary CSV (default: <project>/brands.csv; the demo's project: the demo "
    "one).",
)


@click.group("brands")
def brands_group() -> None:
    """Find brands the dictionary does not know yet, add them, and confirm or reject found
    ones."""


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
@feed_name_option
@_project_option
@json_option
def candidates_command(
    feed: Path,
    min_count: int,
    retailers: tuple[str, ...],
    dictionary: Path | None,
    feed_name: str | None,
    project: str | None,
    as_json: bool,
) -> None:
    """List names that repeat in a feed's brand field or leading title words but are unknown.

    Uses the feed's saved profile (see `catmap inspect`), or suggests one without saving it.
    """
    facts = brand_candidates(
        feed,
        project=project_dir(project),
        min_count=min_count,
        retailers=retailers,
        dictionary=dictionary,
        feed_name=feed_name,
    )
    found = facts["candidates"]
    stopped = facts["stopped_early"]
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
                escape(c["name"]), f"{c['count']:,}", c["source"], escape(" | ".join(c["examples"]))
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
    facts = accept_brand(
        name,
        project=project_dir(project),
        variants=variants,
        departments=departments,
        dictionary=dictionary,
    )
    if as_json:
        echo_json(facts)
        return
    console.print(f"Added {escape(facts['brand'])} to {escape(facts['dictionary'])}"
                  + (" (created)" if facts["created"] else ""))
    console.print("Spellings: " + escape(", ".join(facts["variants"])))
    if facts["departments"]:
        console.print("Departments: " + escape(", ".join(facts["departments"])))


@brands_group.command("list")
@click.option(
    "--status",
    type=click.Choice(["candidate", "confirmed", "rejected"]),
    default=None,
    help="Show only brands of this status (default: all).",
)
@click.option(
    "--limit",
    default=50,
    show_default=True,
    type=click.IntRange(min=0),
    help="Rows shown in the table (0: all); --json always gives all.",
)
@_project_option
@json_option
def list_command(status: str | None, limit: int, project: str | None, as_json: bool) -> None:
    """List the project's brand registry: each canonical brand with its status, spellings,
    sightings and feeds (filled by `catmap onboard`; "seen" counts a product's brand field and
    its title once each)."""
    facts = registry_brands(project_dir(project), status=status)
    if as_json:
        echo_json(facts)
        return
    found = facts["brands"]
    counts = facts["by_status"]
    if not found:
        console.print("No brand in the registry yet: `catmap onboard FEED` fills it."
                      if not facts["total"] else f"No {status} brand in the registry.")
        return
    table = Table(
        title=f"Brand registry: {facts['total']:,} brands ({counts['confirmed']:,} confirmed, "
        f"{counts['candidate']:,} candidates"
        + (f", {counts['rejected']:,} rejected" if counts["rejected"] else "") + ")"
    )
    for header in ("brand", "status", "seen", "feeds", "spellings", "example titles"):
        table.add_column(header, justify="right" if header == "seen" else "left")
    for b in found[: limit or None]:
        spellings = ", ".join(f"{v['spelling']} ({v['seen']:,})" for v in b["variants"][:4])
        more = len(b["variants"]) - 4
        own = b["feed_own_name"]
        table.add_row(
            escape(b["name"])
            + (f"\n[bold yellow]{_own_name_words(own)}[/bold yellow]" if own is not None else ""),
            b["status"] + (" (dictionary)" if b["in_dictionary"] else ""),
            f"{b['seen']:,}",
            escape(", ".join(f"{feed} ({n:,})" for feed, n in b["feeds"].items())),
            escape(spellings + (f", +{more}" if more > 0 else "")),
            escape(" | ".join(b["examples"])),
        )
    console.print(table)
    if limit and len(found) > limit:
        console.print(f"{len(found) - limit:,} more: use --limit 0 or --json.")
    if any(b["feed_own_name"] is not None for b in found):
        console.print(
            "A feed's own name is the shop writing its name in the brand field, seldom a "
            "brand: reject it, or set retailer_as_no_brand = true in that feed's profile."
        )
    if counts["candidate"]:
        console.print(
            "Trust a candidate with: catmap brands confirm NAME; "
            "say it is no brand with: catmap brands reject NAME"
        )


def _own_name_words(feed: str | None) -> str:
    return f"the feed's own name ({feed})" if feed else "a feed's own name"


def _print_settled(facts: dict[str, Any], done: str, products: str, *, action: str) -> None:
    if facts["was"] == facts["status"]:
        console.print(f"{escape(facts['name'])} was already {done}.")
    else:
        console.print(
            action.format(name=escape(facts["name"])) + f" (was {facts['was']}; seen "
            f"{facts['seen']:,} times; {facts['products_changed']:,} products {products})."
        )
    if facts["feed_own_name"] is not None:
        console.print(
            f"Note: {escape(facts['name'])} is {_own_name_words(facts['feed_own_name'])}."
        )
    console.print("Spellings: " + escape(", ".join(v["spelling"] for v in facts["variants"])))


@brands_group.command("confirm")
@click.argument("name")
@_project_option
@json_option
def confirm_command(name: str, project: str | None, as_json: bool) -> None:
    """Confirm a candidate brand of the registry (NAME or any spelling seen of it): its
    products and later runs trust it as a brand of the dictionary."""
    facts = confirm_registry_brand(name, project=project_dir(project))
    if as_json:
        echo_json(facts)
        return
    _print_settled(facts, "confirmed", "now carry it as confirmed", action="Confirmed {name}")


@brands_group.command("reject")
@click.argument("name")
@_project_option
@json_option
def reject_command(name: str, project: str | None, as_json: bool) -> None:
    """Reject a brand of the registry as no brand (NAME or any spelling seen of it): the
    products that carry it as a candidate lose it, and later runs never learn it again."""
    facts = reject_registry_brand(name, project=project_dir(project))
    if as_json:
        echo_json(facts)
        return
    _print_settled(facts, "rejected", "lost it as their brand", action="Rejected {name}")


@brands_group.command("reset")
@click.argument("name")
@_project_option
@json_option
def reset_command(name: str, project: str | None, as_json: bool) -> None:
    """Set a confirmed or rejected brand of the registry back to a candidate (NAME or any
    spelling seen of it), taking the verdict back: its products are candidates of it again."""
    facts = reset_registry_brand(name, project=project_dir(project))
    if as_json:
        echo_json(facts)
        return
    if facts["was"] == "candidate" and not facts["products_changed"]:
        console.print(f"{escape(facts['name'])} was already a candidate.")
        console.print("Spellings: " + escape(", ".join(v["spelling"] for v in facts["variants"])))
        return
    _print_settled(
        facts, "a candidate", "are candidates of it again",
        action="Set {name} back to a candidate",
    )  # fmt: skip


def register(main: click.Group) -> None:
    """Add the ``brands`` group to the catmap command group."""
    main.add_command(brands_group)
