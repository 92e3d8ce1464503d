"""Feed commands: ``catmap inspect`` (what is this feed, which column is which field) and
``catmap normalise`` (feed → clean products, rejects and the row accounting)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click
from rich.markup import escape
from rich.table import Table

from catmap.cli._render import (
    console,
    echo_json,
    feed_name_option,
    json_option,
    spinner,
)
from catmap.cli._render import project_option as _project_option
from catmap.feeds.ingest import Accounting, OutputPaths
from catmap.feeds.normalize import normalize_currency
from catmap.feeds.writers import FORMATS
from catmap.jobs.inspect import inspect_feed
from catmap.jobs.normalize import normalize_project_feed
from catmap.project import project_dir

DUPLICATES_SHOWN = 5

_feed_argument = click.argument(
    "feed", type=click.Path(exists=True, dir_okay=False, path_type=Path)
)
_encoding_option = click.option(
    "--encoding", default=None, help="Text encoding of the feed (default: detected)."
)
_record_path_option = click.option(
    "--record-path",
    default=None,
    help="XML only: the repeating record element, e.g. /catalog/products/product.",
)
_delimiter_option = click.option(
    "--delimiter",
    default=None,
    help="Delimited text only: the column separator (default: detected).",
)


@click.command("inspect")
@_feed_argument
@_encoding_option
@_record_path_option
@_delimiter_option
@_project_option
@click.option("--fresh", is_flag=True, help="Suggest the mapping anew even if one is saved.")
@feed_name_option
@json_option
def inspect_command(
    feed: Path,
    encoding: str | None,
    record_path: str | None,
    delimiter: str | None,
    project: str | None,
    fresh: bool,
    feed_name: str | None,
    as_json: bool,
) -> None:
    """Show what a feed is and which column feeds which field; save that as the feed's profile.

    The profile is saved in <project>/profiles/<feed name>.toml; edit it to fix the mapping.
    An existing profile is shown as it is (use --fresh to suggest a new one).
    """
    facts = inspect_feed(
        feed,
        project=project_dir(project),
        encoding=encoding,
        record_path=record_path,
        delimiter=delimiter,
        fresh=fresh,
        feed_name=feed_name,
    )
    if as_json:
        echo_json(facts)
        return
    _render_inspect(facts)


def _render_inspect(facts: dict[str, Any]) -> None:
    how = {
        "bom": "from its byte-order mark",
        "detected": "detected",
        "given": "as given",
        "profile": "kept in the feed's profile",
    }
    console.print(f"[bold]{escape(facts['feed'])}[/bold]")
    console.print(f"  format       {facts['format']}")
    source = how.get(facts["encoding_source"], facts["encoding_source"])
    console.print(f"  encoding     {facts['encoding']} ({source})")
    others = facts.get("encoding_alternatives") or []
    if others:
        console.print(
            f"  [yellow]so few bytes that {' and '.join(others)} "
            f"{'reads' if len(others) == 1 else 'read'} them too: check the titles, or pass "
            "--encoding[/yellow]"
        )
    console.print(f"  compression  {facts['compression'] or 'none'}")
    if facts["format"] == "delimited":
        header = "" if facts["has_header"] else ", no header row"
        console.print(f"  delimiter    {escape(repr(facts['delimiter']))}{header}")
    if facts["format"] == "xml":
        console.print(f"  records      {escape(str(facts['record_path']))}")

    table = Table(title="Suggested mapping" if facts["profile_status"] == "saved" else "Mapping")
    for header in ("field", "source column", "confidence", "evidence for", "evidence against",
                   "sample values"):  # fmt: skip
        table.add_column(header)
    for row in facts["mapping"]:
        if not row["column"] and not row["against"]:
            continue  # nothing fits and nothing was ruled out: listed under "Not found"
        confidence = "-" if row["confidence"] is None else f"{row['confidence']:.2f}"
        table.add_row(
            row["field"],
            escape(row["column"] or "(none)"),
            confidence,
            escape(row["evidence"]) if row["column"] else "",
            escape("; ".join(row["against"])),
            escape(" | ".join(_short(v) for v in row["samples"])),
        )
    console.print(table)

    if facts["missing"]:
        parts = [
            f"[bold red]{name} (required)[/bold red]" if name in facts["missing_required"] else name
            for name in facts["missing"]
        ]
        console.print("Not found: " + ", ".join(parts))
    if facts["extras"]:
        console.print("Other columns (kept as extras): " + escape(", ".join(facts["extras"])))
    _render_preview(facts["preview"])
    _render_warnings(facts)
    if facts["profile_status"] == "mismatch":
        console.print(
            f"[bold yellow]The saved profile {escape(facts['profile'])} does not fit this file: "
            f"{escape(facts['profile_mismatch'])}.[/bold yellow] The mapping above is a new "
            "suggestion and was not saved: run with --fresh to replace the profile with it, or "
            "give this file its own name with --feed NAME if it is another feed."
        )
    elif facts["profile_status"] == "existing":
        console.print(
            f"Using the saved profile {escape(facts['profile'])} "
            "(edit it to change the mapping, or run with --fresh to suggest it anew)."
        )
    else:
        console.print(
            f"Profile saved to {escape(facts['profile'])}: edit it to fix the mapping; "
            "`catmap normalise` uses it."
        )


def _render_preview(preview: list[dict[str, Any]]) -> None:
    if not preview:
        console.print("No preview: the profile maps no product id or no title.")
        return
    table = Table(title=f"First {len(preview)} records, normalised")
    for header in ("line", "product id", "title", "price", "category path", "brand",
                   "availability", "flags"):  # fmt: skip
        table.add_column(header)
    for item in preview:
        if "rejected" in item:
            table.add_row(str(item["line"]), "", f"[red]rejected: {escape(item['rejected'])}[/red]",
                          "", "", "", "", escape(_short(item["detail"], 60)))  # fmt: skip
            continue
        price = f"{item['price']} {item['currency'] or ''}".strip() if item["price"] else ""
        table.add_row(
            str(item["source_line"]),
            escape(item["product_id"]),
            escape(_short(item["title"], 40)),
            escape(price),
            escape(" > ".join(item["category_path"])),
            escape(item["brand"]),
            item["availability"],
            escape(", ".join(item["flags"])),
        )
    console.print(table)


def _short(value: str, limit: int = 30) -> str:
    value = " ".join(value.split())
    return value if len(value) <= limit else value[: limit - 1] + "…"


@click.command("normalise")
@_feed_argument
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for products, rejects and accounting.json.",
)
@click.option(
    "--format",
    "output_format",
    type=click.Choice(FORMATS),
    default="jsonl",
    show_default=True,
    help="File format of the products (rejects are CSV with csv, else JSON Lines).",
)
@_encoding_option
@_record_path_option
@_delimiter_option
@click.option("--currency", default=None, help="Currency of prices that name none, e.g. EUR.")
@click.option(
    "--profile",
    "profile_file",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Use this profile instead of the feed's saved one.",
)
@feed_name_option
@_project_option
@json_option
def normalize_command(
    feed: Path,
    out_dir: Path,
    output_format: str,
    encoding: str | None,
    record_path: str | None,
    delimiter: str | None,
    currency: str | None,
    profile_file: Path | None,
    feed_name: str | None,
    project: str | None,
    as_json: bool,
) -> None:
    """Clean every record of a feed into products; write them, the rejects and the accounting.

    Uses the feed's saved profile (see `catmap inspect`), or suggests and saves one.
    Every record is either kept or rejected with a reason: read = kept + rejected.
    """
    default_currency: str | None = None
    if currency is not None:
        default_currency = normalize_currency(currency)
        if default_currency is None:
            raise click.BadParameter(
                f"'{currency}' is not a currency catmap knows; use an ISO 4217 code such as EUR",
                param_hint="--currency",
            )

    with spinner("normalising {task.description}", "{task.completed:,.0f} records") as progress:
        task = progress.add_task(feed.name, total=None)

        def show(current: Accounting) -> None:
            progress.update(task, completed=current.read)

        result = normalize_project_feed(
            feed,
            out_dir,
            project=project_dir(project),
            format=output_format,
            encoding=encoding,
            record_path=record_path,
            delimiter=delimiter,
            default_currency=default_currency,
            profile_file=profile_file,
            on_progress=show,
            feed_name=feed_name,
        )
    if as_json:
        echo_json(result.facts)
    else:
        _render_normalize(result.facts, result.paths)
    if result.error is not None:
        raise result.error


def _render_normalize(facts: dict[str, Any], paths: OutputPaths) -> None:
    console.print(
        f"read {facts['read']:,} = kept {facts['kept']:,} + rejected {facts['rejected']:,}"
    )
    if facts["by_reason"]:
        table = Table(title="Rejects by reason")
        table.add_column("reason")
        table.add_column("count", justify="right")
        for reason, count in facts["by_reason"].items():
            table.add_row(reason, f"{count:,}")
        console.print(table)
    if facts.get("by_flag"):
        table = Table(title="Kept but flagged")
        table.add_column("flag")
        table.add_column("products", justify="right")
        for flag, count in facts["by_flag"].items():
            table.add_row(flag, f"{count:,}")
        console.print(table)
        for line in facts.get("flag_advice", []):
            console.print(f"  {escape(line)}")
    if facts["duplicate_id_count"]:
        shown = list(facts["duplicate_ids"].items())[:DUPLICATES_SHOWN]
        listed = ", ".join(
            f"{escape(key)} (line{'s' if len(lines) > 1 else ''} "
            f"{', '.join(str(n) for n in lines)})"
            for key, lines in shown
        )
        more = " …" if len(facts["duplicate_ids"]) > DUPLICATES_SHOWN else ""
        console.print(
            f"Duplicate ids: {facts['duplicate_id_count']:,} later records rejected: {listed}{more}"
        )
    if facts["stopped_early"]:
        console.print(
            f"[bold red]Reading stopped early:[/bold red] {escape(facts['stopped_early'])}"
        )
    _render_warnings(facts)
    status = {
        "saved": "suggested and saved",
        "existing": "saved",
        "given": "given",
    }[facts["profile_status"]]
    console.print(f"Profile ({status}): {escape(facts['profile'])}")
    console.print(f"Products:   {escape(str(paths.products))}")
    console.print(f"Rejects:    {escape(str(paths.rejects))}")
    console.print(f"Accounting: {escape(str(paths.accounting))}")


def _render_warnings(facts: dict[str, Any]) -> None:
    language = facts.get("language") or {}
    if language.get("name"):
        console.print(f"Language:   {language['name']} ({language['share']:.0%} of marker words)")
    for warning in facts.get("warnings", []):
        console.print(f"[bold yellow]Warning:[/bold yellow] {escape(warning)}")


def register(main: click.Group) -> None:
    """Add ``inspect`` and ``normalise`` to the catmap command group."""
    main.add_command(inspect_command)
    main.add_command(normalize_command)
