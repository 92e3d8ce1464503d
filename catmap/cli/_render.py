"""Shared rendering helpers for the CLI: one rich console, JSON output for --json."""

from __future__ import annotations

import json
import threading
import time
from collections.abc import Mapping
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import TYPE_CHECKING, Any

import click
from rich.console import Console

if TYPE_CHECKING:
    from rich.table import Table

console = Console(highlight=False)
err_console = Console(stderr=True, highlight=False)

_UNBOUNDED = 100_000


def fit_table(table: Table) -> Table:
    """Drop a table's cell padding when it is wider than the terminal, then return it.

    Columns that must stay whole (``no_wrap``: counts, feed names) would otherwise be cut to
    ``accept…`` in an 80-column terminal; without the padding each column is still set apart
    by the box's column divider.
    """
    wide = console.options.update_width(_UNBOUNDED)
    if console.measure(table, options=wide).maximum > console.width:
        table.padding = (0, 0)
    return table


def spinner(*middle: str) -> Any:
    """A transient progress line on stderr (only on a terminal): spinner, the task's
    description (or the ``middle`` columns' templates, when given), elapsed time."""
    from rich.progress import Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    columns = [TextColumn(text) for text in (middle or ("{task.description}",))]
    return Progress(
        SpinnerColumn(),
        *columns,
        TimeElapsedColumn(),
        console=err_console,
        transient=True,
        disable=not err_console.is_terminal,
    )


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

# Seconds between two progress lines when stderr is not a terminal (a log, a pipe, CI).
PIPED_PROGRESS_SECONDS = 5.0


class PipedProgress:
    """Progress as plain lines on stderr, every few seconds, when stderr is not a terminal.

    A terminal gets rich's live progress line instead; a pipe or a log file would only get
    silence from it. Here each :meth:`update` prints a line when :data:`PIPED_PROGRESS_SECONDS`
    have passed since the last one (stage, records so far, rate), and a background thread
    prints a "still ..." line through long stretches without an update (model fitting).

    Args:
        label: what runs, e.g. "mapping shop.csv".
        enabled: print at all (default: when stderr is not a terminal).
    """

    def __init__(self, label: str, *, enabled: bool | None = None) -> None:
        self.label = label
        self.enabled = (not err_console.is_terminal) if enabled is None else enabled
        self.stage = ""
        self.count: int | None = None
        self._started = self._last = time.monotonic()
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    def __enter__(self) -> PipedProgress:
        if self.enabled:
            self._thread = threading.Thread(target=self._heartbeat, daemon=True)
            self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        if self._thread is not None:
            self._thread.join()

    def update(self, stage: str | None = None, count: int | None = None) -> None:
        """Record the stage and / or the records so far; print a line when one is due."""
        with self._lock:
            if stage is not None:
                self.stage = stage
            if count is not None:
                self.count = count
            if self.enabled and time.monotonic() - self._last >= PIPED_PROGRESS_SECONDS:
                self._print("")

    def _heartbeat(self) -> None:
        while not self._stop.wait(max(PIPED_PROGRESS_SECONDS, 0.05)):
            with self._lock:
                if time.monotonic() - self._last >= PIPED_PROGRESS_SECONDS:
                    self._print("still ")

    def _print(self, prefix: str) -> None:
        now = time.monotonic()
        elapsed = now - self._started
        parts = [f"catmap: {prefix}{self.label}"]
        if self.stage:
            parts.append(self.stage)
        text = ": ".join(parts)
        if self.count is not None:
            rate = self.count / elapsed if elapsed > 0 else 0.0
            text += f", {self.count:,} records ({rate:,.0f}/s)"
        click.echo(f"{text}, {elapsed:.0f} s", err=True)
        self._last = now
