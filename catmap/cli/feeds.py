"""Feed commands: ``catmap inspect`` (what is this feed, which column is which field) and
``catmap normalize`` (feed → clean products, rejects and the row accounting)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click
from rich.markup import escape
from rich.progress import Progress, SpinnerColumn, TextColumn, TimeElapsedColumn
from rich.table import Table

from catmap.cli._render import console, echo_json, err_console, json_option
from catmap.cli._render import project_option as _project_option
from catmap.errors import InputError
from catmap.feeds.fieldmap import (
    REQUIRED_FIELDS,
    TARGET_FIELDS,
    FeedProfile,
    load_profile,
    save_profile,
    suggest_profile,
)
from catmap.feeds.ingest import (
    FATAL_FEED_ERRORS,
    Accounting,
    OutputPaths,
    check_profile,
    normalize_feed_to,
    output_paths,
)
from catmap.feeds.normalize import normalize_currency
from catmap.feeds.read import Feed, open_feed
from catmap.feeds.writers import FORMATS
from catmap.project import profile_path, project_dir

SAMPLE_SIZE = 200
SAMPLES_SHOWN = 3
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


def _open(
    feed_path: Path,
    profile: FeedProfile | None,
    encoding: str | None,
    record_path: str | None,
    delimiter: str | None,
) -> Feed:
    """Open a feed; options given now win over the ones remembered in the profile."""
    if profile is not None:
        encoding = encoding or profile.encoding
        record_path = record_path or profile.record_path
        delimiter = delimiter or profile.delimiter
    return open_feed(feed_path, encoding=encoding, record_path=record_path, delimiter=delimiter)


def _remember_options(
    profile: FeedProfile, encoding: str | None, record_path: str | None, delimiter: str | None
) -> None:
    if encoding:
        profile.encoding = encoding
    if record_path:
        profile.record_path = record_path
    if delimiter:
        profile.delimiter = delimiter


def _mapping_rows(profile: FeedProfile, feed: Feed, sample_needed: bool) -> list[dict[str, Any]]:
    """One row per mapped field: column, confidence, evidence, sample values."""
    by_field = {s.field: s for s in profile.suggestions if s.column}
    samples: list[dict[str, str]] = []
    if sample_needed:
        samples = [record.fields for record in feed.sample(SAMPLE_SIZE)]
    rows = []
    for name in TARGET_FIELDS:
        column = profile.columns.get(name)
        if not column:
            continue
        suggestion = by_field.get(name)
        if suggestion is not None and suggestion.column == column:
            confidence: float | None = suggestion.confidence
            evidence = suggestion.evidence
            values = list(suggestion.samples[:SAMPLES_SHOWN])
        else:
            confidence = None
            evidence = "from the saved profile"
            values = [r[column] for r in samples if r.get(column)][:SAMPLES_SHOWN]
        rows.append(
            {
                "field": name,
                "column": column,
                "confidence": confidence,
                "evidence": evidence,
                "samples": values,
            }
        )
    return rows


@click.command("inspect")
@_feed_argument
@_encoding_option
@_record_path_option
@_delimiter_option
@_project_option
@click.option("--fresh", is_flag=True, help="Suggest the mapping anew even if one is saved.")
@json_option
def inspect_command(
    feed: Path,
    encoding: str | None,
    record_path: str | None,
    delimiter: str | None,
    project: str | None,
    fresh: bool,
    as_json: bool,
) -> None:
    """Show what a feed is and which column feeds which field; save that as the feed's profile.

    The profile is saved in <project>/profiles/<feed name>.toml; edit it to fix the mapping.
    An existing profile is shown as it is (use --fresh to suggest a new one).
    """
    saved_path = profile_path(project_dir(project), feed)
    existing = saved_path.exists() and not fresh
    profile = load_profile(saved_path) if existing else None
    opened = _open(feed, profile, encoding, record_path, delimiter)
    info = opened.info
    if profile is None:
        profile = suggest_profile(info, opened.sample(SAMPLE_SIZE))
        _remember_options(profile, encoding, record_path, delimiter)
        saved_path.parent.mkdir(parents=True, exist_ok=True)
        save_profile(profile, saved_path)
    rows = _mapping_rows(profile, opened, sample_needed=existing)
    mapped_columns = set(profile.columns.values())
    missing = profile.missing()
    facts: dict[str, Any] = {
        "feed": str(feed),
        "format": info.format,
        "encoding": info.encoding,
        "encoding_source": info.encoding_source,
        "compression": info.compression,
        "delimiter": info.delimiter,
        "has_header": info.has_header,
        "record_path": info.record_path,
        "columns": list(info.columns),
        "mapping": rows,
        "missing": missing,
        "missing_required": [name for name in missing if name in REQUIRED_FIELDS],
        "extras": [column for column in info.columns if column not in mapped_columns],
        "profile": str(saved_path),
        "profile_status": "existing" if existing else "saved",
    }
    if as_json:
        echo_json(facts)
        return
    _render_inspect(facts)


def _render_inspect(facts: dict[str, Any]) -> None:
    how = {"bom": "from its byte-order mark", "detected": "detected", "given": "as given"}
    console.print(f"[bold]{escape(facts['feed'])}[/bold]")
    console.print(f"  format       {facts['format']}")
    source = how.get(facts["encoding_source"], facts["encoding_source"])
    console.print(f"  encoding     {facts['encoding']} ({source})")
    console.print(f"  compression  {facts['compression'] or 'none'}")
    if facts["format"] == "delimited":
        header = "" if facts["has_header"] else ", no header row"
        console.print(f"  delimiter    {escape(repr(facts['delimiter']))}{header}")
    if facts["format"] == "xml":
        console.print(f"  records      {escape(str(facts['record_path']))}")

    table = Table(title="Suggested mapping" if facts["profile_status"] == "saved" else "Mapping")
    for header in ("field", "source column", "confidence", "evidence", "sample values"):
        table.add_column(header)
    for row in facts["mapping"]:
        confidence = "-" if row["confidence"] is None else f"{row['confidence']:.2f}"
        table.add_row(
            row["field"],
            escape(row["column"]),
            confidence,
            escape(row["evidence"]),
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
    if facts["profile_status"] == "existing":
        console.print(
            f"Using the saved profile {escape(facts['profile'])} "
            "(edit it to change the mapping, or run with --fresh to suggest it anew)."
        )
    else:
        console.print(
            f"Profile saved to {escape(facts['profile'])}: edit it to fix the mapping; "
            "`catmap normalize` uses it."
        )


def _short(value: str, limit: int = 30) -> str:
    value = " ".join(value.split())
    return value if len(value) <= limit else value[: limit - 1] + "…"


@click.command("normalize")
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

    path = profile_file or profile_path(project_dir(project), feed)
    profile_status = "given" if profile_file else "existing"
    profile = load_profile(path) if path.exists() else None
    opened = _open(feed, profile, encoding, record_path, delimiter)
    if profile is None:
        profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
        _remember_options(profile, encoding, record_path, delimiter)
        path.parent.mkdir(parents=True, exist_ok=True)
        save_profile(profile, path)
        profile_status = "saved"
    if default_currency is not None:
        profile.default_currency = default_currency
    check_profile(profile, opened.info, profile_path=path)

    accounting = Accounting()
    paths = output_paths(out_dir, output_format)
    error: InputError | None = None
    with Progress(
        SpinnerColumn(),
        TextColumn("normalising {task.description}"),
        TextColumn("{task.completed:,.0f} records"),
        TimeElapsedColumn(),
        console=err_console,
        transient=True,
        disable=not err_console.is_terminal,
    ) as progress:
        task = progress.add_task(feed.name, total=None)

        def show(current: Accounting) -> None:
            progress.update(task, completed=current.read)

        try:
            normalize_feed_to(
                opened,
                profile,
                out_dir,
                format=output_format,
                accounting=accounting,
                on_progress=show,
            )
        except FATAL_FEED_ERRORS as fatal:
            error = fatal

    facts: dict[str, Any] = {
        "feed": str(feed),
        **accounting.to_dict(),
        "duplicate_id_count": accounting.by_reason.get("duplicate_id", 0),
        "outputs": paths.to_dict(),
        "format": output_format,
        "profile": str(path),
        "profile_status": profile_status,
    }
    if as_json:
        echo_json(facts)
    else:
        _render_normalize(facts, paths)
    if error is not None:
        raise error


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
    status = {
        "saved": "suggested and saved",
        "existing": "saved",
        "given": "given",
    }[facts["profile_status"]]
    console.print(f"Profile ({status}): {escape(facts['profile'])}")
    console.print(f"Products:   {escape(str(paths.products))}")
    console.print(f"Rejects:    {escape(str(paths.rejects))}")
    console.print(f"Accounting: {escape(str(paths.accounting))}")


def register(main: click.Group) -> None:
    """Add ``inspect`` and ``normalize`` to the catmap command group."""
    main.add_command(inspect_command)
    main.add_command(normalize_command)
