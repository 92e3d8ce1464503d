"""Onboarding commands: ``catmap onboard`` (a feed end to end into the project store),
``catmap status``, ``catmap export``, ``catmap decisions export / import`` (review in a
spreadsheet) and ``catmap demo`` (the whole job on the invented demo world)."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import AbstractContextManager, contextmanager, nullcontext
from pathlib import Path
from typing import Any

import click
from rich import box
from rich.markup import escape
from rich.progress import Progress
from rich.table import Table

from catmap.cli._render import (
    PipedProgress,
    console,
    echo_json,
    err_console,
    feed_name_option,
    fit_table,
    json_option,
    spinner,
    tree_file_option,
    tree_version_option,
)
from catmap.cli._render import project_option as _project_option
from catmap.cli.audit import audit_lines
from catmap.decide.threshold import DEFAULT_DELTA, DEFAULT_MAX_ERROR
from catmap.errors import InputError
from catmap.feeds.writers import FORMATS
from catmap.jobs.decisions import export_project_decisions, import_project_decisions
from catmap.jobs.demo import run_demo
from catmap.jobs.export import export_project
from catmap.jobs.onboard import (
    DEFAULT_AUDIT_SHARE,
    OnboardOptions,
    onboard_feeds,
    project_tree,
)
from catmap.jobs.status import project_status
from catmap.project import project_dir


def _say(*objects: Any) -> None:
    """Print without wrapping long lines: paths stay whole and can be copied."""
    console.print(*objects, soft_wrap=True)


def _progress() -> Progress:
    return spinner("{task.description}", "{task.completed:,.0f} records")


@contextmanager
def _onboarding_progress(
    feed: Path, lines: PipedProgress | None = None
) -> Iterator[Callable[[str, int], None]]:
    """A progress line on stderr while a feed is onboarded: its stage and records read.

    On a piped stderr the lines go through ``lines`` when given (the demo's, which runs
    through every stage), else through their own.
    """
    # The demo's lines are already running: entering them again would stop them at the end.
    own = nullcontext(lines) if lines is not None else PipedProgress(f"onboarding {feed.name}")
    with _progress() as progress, own as piped:

        def show(stage: str, count: int) -> None:
            progress.update(task, description=f"{feed.name}: {stage}", completed=count)
            piped.update(f"{feed.name}: {stage}" if lines is not None else stage, count)

        task = progress.add_task(feed.name, total=None)
        yield show


# -- onboard ----------------------------------------------------------------------------------


# Shared by onboard and demo: the error rate allowed among auto-accepted mappings.
_max_error_option = click.option(
    "--max-error",
    default=DEFAULT_MAX_ERROR,
    show_default=True,
    type=click.FloatRange(0, 1, min_open=True, max_open=True),
    help="Error rate allowed among auto-accepted mappings.",
)


@click.command("onboard")
@click.argument(
    "feeds", nargs=-1, required=True, type=click.Path(exists=True, dir_okay=False, path_type=Path)
)
@_max_error_option
@click.option(
    "--confidence",
    default=1 - DEFAULT_DELTA,
    show_default=True,
    type=click.FloatRange(0, 1, min_open=True, max_open=True),
    help="How sure the error bound must be: 1 - the chance that the calibration data "
    "misleads, and the share of feeds like it that must stay within --max-error.",
)
@click.option(
    "--audit-share",
    default=DEFAULT_AUDIT_SHARE,
    show_default=True,
    type=click.FloatRange(0, 1),
    help="Share of auto-accepted products queued as audit samples.",
)
@click.option(
    "--rules",
    "rules",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Rules file applied before the model (default: <project>/rules/<feed>.rules).",
)
@click.option(
    "--validation",
    "validation_feed",
    multiple=True,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Labelled feed that sets the accept threshold, best one from a retailer the model "
    "was not trained on: all its rows calibrate (a feed with a split column gives its "
    "split=valid rows). Repeat it for several sources: the strictest threshold wins. "
    "Default: the project's labelled feeds, the part training held out (the demo's project: "
    "the reference catalog's valid split and the Oskelund feed). Computed once per model.",
)
@click.option(
    "--cluster",
    default=None,
    metavar="ADDRESS",
    help="Read, normalise, map and extract on a dask.distributed cluster: local:N starts N "
    "workers on this machine, tcp://HOST:PORT uses a running scheduler (needs the cluster "
    "extra). Workers must see the feeds and the project folder at the same paths. This "
    "process writes the store; the result is the same as without --cluster.",
)
@feed_name_option
@tree_version_option
@tree_file_option()
@_project_option
@json_option
def onboard_command(
    feeds: tuple[Path, ...],
    max_error: float,
    confidence: float,
    audit_share: float,
    rules: Path | None,
    validation_feed: tuple[Path, ...],
    cluster: str | None,
    feed_name: str | None,
    tree_version: str | None,
    tree_file: Path | None,
    project: str | None,
    as_json: bool,
) -> None:
    """Read, normalise, map and store a feed; auto-accept what is safe, queue the rest.

    Each feed's accept threshold keeps the share of wrong mappings among its auto-accepted
    products at or below --max-error, with the stated --confidence over the calibration data
    (--validation) and in that share of the feeds like it (its size counts: the fewer
    products a threshold accepts, the more that share varies by chance, so the stricter it
    is). The reviewed audit sample measures each feed's real error. Running it again on the
    same feed updates the store in place (reviewed mappings are kept).

    Several feeds are onboarded one after another, or all at once with --cluster (one
    cluster, a progress line per feed: partitions done, records per second), and stored in
    the order given: the store is the same as after onboarding them one by one.
    """
    folder = project_dir(project)
    tree = project_tree(folder, tree_file=tree_file, tree_version=tree_version)
    options = OnboardOptions(
        max_error=max_error,
        delta=1 - confidence,
        audit_share=audit_share,
        rules=rules,
        validation_feed=validation_feed or None,
    )
    if len(feeds) == 1 and cluster is None:
        with _onboarding_progress(feeds[0]) as show:
            (outcome,) = onboard_feeds(
                list(feeds), project=folder, tree=tree, options=options, feed=feed_name,
                on_progress=lambda _name, stage, count: show(stage, count),
            )  # fmt: skip
        # A feed that stopped on a fatal error still shows what was saved before it.
        if outcome.summary is not None:
            facts = outcome.summary.to_dict()
            if as_json:
                echo_json(facts)
            else:
                _render_onboard(facts)
        if outcome.error is not None:
            raise outcome.error
        return
    with _feeds_progress(list(feeds)) as (show, show_cluster):
        outcomes = onboard_feeds(
            list(feeds), project=folder, tree=tree, options=options, cluster=cluster,
            feed=feed_name, on_progress=show, on_cluster_progress=show_cluster,
        )  # fmt: skip
    done = [o.summary.to_dict() for o in outcomes if o.summary is not None]
    if as_json:
        echo_json(done[0] if len(feeds) == 1 and done else {"feeds": done})
    else:
        for facts in done:
            _render_onboard(facts)
            if facts.get("cluster"):
                c = facts["cluster"]
                _say(
                    f"  cluster: {c['partitions']:,} partitions ({c['kind']}), "
                    f"{c['chunks']:,} chunks mapped on the workers"
                )
    for outcome in outcomes:
        if outcome.error is not None:
            raise outcome.error


@contextmanager
def _feeds_progress(
    feeds: list[Path],
) -> Iterator[tuple[Callable[[str, str, int], None], Callable[[str, Any], None]]]:
    """A progress line per feed while several feeds (or one on a cluster) are onboarded.

    Yields:
        Two callbacks: a feed's stage and count, and a feed's cluster progress (partitions
        done of total, records, records per second; the dashboard's address is printed once).
    """
    shown: set[str] = set()
    label = f"onboarding {len(feeds)} feeds" if len(feeds) > 1 else f"onboarding {feeds[0].name}"
    with spinner() as progress, PipedProgress(label) as piped:
        tasks: dict[str, Any] = {}

        def text(name: str, what: str, count: int | None) -> None:
            if name not in tasks:
                tasks[name] = progress.add_task(name, total=None)
            progress.update(tasks[name], description=f"{name}: {what}")
            piped.update(f"{name}: {what}", count)

        def show(name: str, stage: str, count: int) -> None:
            text(name, f"{stage}, {count:,} records" if count else stage, count)

        def show_cluster(name: str, where: Any) -> None:
            if where.dashboard and "dashboard" not in shown:
                shown.add("dashboard")
                err_console.print(f"cluster dashboard: {where.dashboard}")
            unit = {"mapping": "chunks", "duplicates": "buckets"}.get(where.stage, "partitions")
            text(
                name,
                f"{where.stage} {where.done}/{where.total} {unit}, {where.rows:,} records, "
                f"{where.rows_per_second:,.0f}/s",
                None,
            )

        yield show, show_cluster


def _render_onboard(facts: dict[str, Any]) -> None:
    _say(f"[bold]{escape(facts['feed'])}[/bold]  ({escape(facts['path'])})")
    a = facts["accounting"]
    _say(f"  read {a['read']:,} = kept {a['kept']:,} + rejected {a['rejected']:,}")
    if a["by_reason"]:
        reasons = ", ".join(f"{k} {v:,}" for k, v in a["by_reason"].items())
        _say(f"  rejects: {escape(reasons)} → {escape(facts['rejects_file'])}")
    for line in facts.get("flag_advice", []):
        _say(f"  kept but flagged, {escape(line)}")
    mapped = facts["mapped"]
    accepted = facts["accepted"] + facts["audit"]
    _say(
        f"  auto-accepted {accepted:,} of {mapped:,} ({facts['coverage']:.1%}), "
        f"queued {facts['queued']:,}, audit sample {facts['audit']:,}"
    )
    if facts["queued_by_reason"]:
        reasons = ", ".join(f"{k} {v:,}" for k, v in facts["queued_by_reason"].items())
        _say(f"  review items by reason: {escape(reasons)}")
    if facts.get("withdrawn"):
        _say(
            f"  withdrawn from the queue: {facts['withdrawn']:,} items of an earlier run "
            "now accepted"
        )
    if facts["threshold"] is None:
        _say("  [bold red]accept threshold: none[/bold red]")
    else:
        _say(
            f"  accept threshold {facts['threshold']:.3f} (validation coverage "
            f"{facts['coverage_validation']:.1%} of {facts['validation_products']:,})"
        )
    _say(f"  {escape(facts['statement'])}")
    _say(
        f"  (the guarantee rests on {escape(facts['validation_source'])}; it holds for feeds "
        "like them: the reviewed audit sample measures this feed's real error, see "
        "`catmap status`)"
    )
    if facts["by_department"]:
        table = Table(title="By department", title_justify="left")
        table.add_column("department")
        table.add_column("products", justify="right")
        table.add_column("accepted", justify="right")
        rows = sorted(facts["by_department"].items(), key=lambda i: -i[1]["products"])
        for name, entry in rows:
            table.add_row(escape(name), f"{entry['products']:,}", f"{entry['accepted']:,}")
        _say(table)
    if facts["restricted"]:
        flags = ", ".join(f"{k} {v:,}" for k, v in sorted(facts["restricted"].items()))
        _say(f"  restriction flags: {escape(flags)}")
        _say(f"  Note: {escape(facts['caution'])}")
    if facts["rule_conflicts"]:
        _say(f"  rule conflicts: {facts['rule_conflicts']:,}")
    for run in facts.get("stale_runs_stopped", []):
        started = escape(run["started_at"])
        _say(
            f"  marked run {run['run']} ({escape(run['kind'])}, started {started}) as stopped: "
            "its process ended without finishing"
        )
    _render_brands(facts.get("brands") or {})
    if facts["stopped_early"]:
        stopped = escape(facts["stopped_early"])
        _say(f"  [bold red]reading stopped early:[/bold red] {stopped}")
    _say(f"  store: {escape(facts['store'])}  ({facts['seconds']:.1f} s)")


def _render_brands(brands: dict[str, Any]) -> None:
    if not brands:
        return
    _say(
        f"  brands: {brands['feed_brands']:,} in this feed ({brands['feed_candidates']:,} "
        f"unconfirmed); registry {brands['registry_brands']:,} "
        f"({brands['registry_candidates']:,} to confirm: `catmap brands list`)"
    )
    retailer = brands.get("retailer")
    if retailer:
        why = "matches the feed's name" if retailer["reason"] == "feed name" else (
            f"on {retailer['share']:.0%} of branded products in {retailer['departments']} "
            "departments"
        )
        then = (
            "read as no brand" if retailer["as_no_brand"]
            else "kept as a brand; set retailer_as_no_brand = true in the feed's profile to "
            "read it as no brand"
        )
        _say(
            f"  [bold]retailer's own name in the brand field:[/bold] "
            f"{escape(retailer['name'])} ({why}); {then}"
        )


# -- status -----------------------------------------------------------------------------------


@click.command("status")
@_project_option
@click.option("--feed", default=None, help="Only this feed (its name: the file stem).")
@json_option
def status_command(project: str | None, feed: str | None, as_json: bool) -> None:
    """Show where each feed stands: rows, accepted, queue, reviews and the audited error.

    "queued" and "reviewed" count products by the state of their mapping; "open" and "done"
    count review items, which also check products whose node is accepted (a brand
    conflict, the audit sample, the audience, a candidate brand: one item per brand and feed),
    so there can be more open items than queued products; the brands waiting for a verdict are
    counted once each. The audited error is the share of reviewed audit samples that were
    wrong, with its exact (Clopper-Pearson) 95% interval: the real error of the auto-accepted
    part.
    """
    facts = project_status(project_dir(project), feed)
    if as_json:
        echo_json(facts)
        return
    feeds = facts["feeds"]
    table = Table(
        title=f"Feeds in {escape(facts['store'])}",
        title_justify="left",
        box=box.SIMPLE_HEAD,
        padding=(0, 1),
        pad_edge=False,
        collapse_padding=True,
    )
    table.add_column("feed", no_wrap=True)
    table.add_column("tree", justify="right", no_wrap=True)
    for header in ("read", "kept", "rejected", "accepted", "queued", "reviewed", "open",
                   "done"):
        table.add_column(header, justify="right", no_wrap=True)

    def number(value: int | None) -> str:
        return "-" if value is None else f"{value:,}"

    for f in feeds:
        table.add_row(
            escape(f["feed"]), escape(f["tree_version"] or "-"), number(f["read"]),
            number(f["kept"]), number(f["rejected"]),
            number(f["accepted"]), number(f["queued"]), number(f["reviewed"]),
            number(f["open_items"]), number(f["done_items"]),
        )
    _say(fit_table(table))
    _say(
        "queued / reviewed count products by mapping state; open / done count review items, "
        "which also check accepted products (brand conflict, audit sample, audience)."
    )
    for f in feeds:
        if f["open_by_reason"]:
            reasons = ", ".join(f"{k} {v:,}" for k, v in f["open_by_reason"].items())
            _say(f"{escape(f['feed'])}: open items by leading reason: {escape(reasons)}")
    waiting = facts.get("brands_waiting", 0)
    if waiting:
        brands = "1 brand waits" if waiting == 1 else f"{waiting:,} brands wait"
        _say(
            f"{brands} in the review queue for a verdict (c / r in `catmap review`, or "
            "`catmap brands confirm / reject NAME`)"
        )
    for f in feeds:
        candidates = f["brand_status"].get("candidate", 0)
        if candidates:
            carry = "product carries" if candidates == 1 else "products carry"
            _say(
                f"{escape(f['feed'])}: {candidates:,} {carry} a candidate brand "
                "(confirm it in `catmap review` or with `catmap brands confirm NAME`)"
            )
    for f in feeds:
        if f["audit_error"] is None:
            _say(f"{escape(f['feed'])}: no audit sample reviewed yet")
        else:
            _say(
                f"{escape(f['feed'])}: audited error of the auto-accepted part: "
                f"{escape(f['audit_error']['text'])}"
            )
    for line in audit_lines([f["audit_check"] for f in feeds if f["audit_check"].get("audited")]):
        _say(line)


# -- export -----------------------------------------------------------------------------------


@click.command("export")
@click.option("--feed", default=None, help="Only this feed (default: every feed).")
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for the enriched products, rejects and accounting.",
)
@click.option(
    "--format",
    "output_format",
    type=click.Choice(FORMATS),
    default="csv",
    show_default=True,
    help="File format of the products.",
)
@_project_option
@json_option
def export_command(
    feed: str | None, out_dir: Path, output_format: str, project: str | None, as_json: bool
) -> None:
    """Write each feed's enriched products (node, confidence, status, attributes), its rejects
    and the accounting of its last run."""
    results = export_project(project_dir(project), out_dir, feed=feed, format=output_format)
    exported = [r.to_dict() for r in results]
    if as_json:
        echo_json({"out": str(out_dir), "feeds": exported})
        return
    _render_export(exported)


def _render_export(feeds: list[dict[str, Any]]) -> None:
    caution = ""
    for f in feeds:
        statuses = ", ".join(f"{k} {v:,}" for k, v in sorted(f["by_status"].items()))
        _say(
            f"{escape(f['feed'])}: {f['rows']:,} products on tree version "
            f"{escape(f['tree_version'])} ({escape(statuses)})"
        )
        _say(f"  products:   {escape(f['products'])}")
        if f["rejects"]:
            _say(f"  rejects:    {escape(f['rejects'])}")
        _say(f"  accounting: {escape(f['accounting'])}")
        if f["restricted"]:
            flags = ", ".join(f"{k} {v:,}" for k, v in sorted(f["restricted"].items()))
            _say(f"  restriction flags: {escape(flags)}")
            caution = f["caution"]
    if caution:
        _say(f"Note: {escape(caution)}")


# -- decisions --------------------------------------------------------------------------------


@click.group("decisions")
def decisions_group() -> None:
    """Review in a spreadsheet: export the queue to CSV, import the filled rows."""


@decisions_group.command("export")
@click.option(
    "--out",
    "out",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="The CSV file to write.",
)
@click.option("--feed", default=None, help="Only this feed's items.")
@_project_option
@json_option
def decisions_export_command(
    out: Path, feed: str | None, project: str | None, as_json: bool
) -> None:
    """Write the review queue to a CSV: open items with empty columns to fill (reviewer_node,
    action, brand, who, age, note), and the items already decided."""
    counts = export_project_decisions(project_dir(project), out, feed=feed)
    if as_json:
        echo_json(counts.to_dict())
        return
    _say(
        f"Wrote {counts.open:,} open and {counts.done:,} decided items to {escape(str(out))}"
    )
    _say(
        "Fill reviewer_node (a node id, or its path as in suggested_path) and/or action "
        "(accept, choose, no_fit, fix_attributes), then run `catmap decisions import FILE`."
    )


@decisions_group.command("import")
@click.argument("file", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--reviewer", default="spreadsheet", show_default=True,
              help="Who the decisions are recorded for.")
@click.option(
    "--rejects",
    default=None,
    type=click.Path(dir_okay=False, path_type=Path),
    help="Where to write bad rows (default: <file>.rejects.csv beside the file).",
)
@click.option(
    "--encoding",
    default="utf-8",
    show_default=True,
    help="The file's text encoding, e.g. cp1252 for a file a spreadsheet saved as plain CSV.",
)
@_project_option
@json_option
def decisions_import_command(
    file: Path,
    reviewer: str,
    rejects: Path | None,
    encoding: str,
    project: str | None,
    as_json: bool,
) -> None:
    """Apply the filled rows of a decisions CSV (each one audited); bad rows are reported with
    their line and reason and written to a rejects CSV, good rows are applied. Exits with 3
    when any row was bad. Comma, semicolon or tab separated; a byte-order mark is fine."""
    result = import_project_decisions(
        project_dir(project), file, reviewer=reviewer, rejects=rejects, encoding=encoding
    )
    facts = result.to_dict()
    if as_json:
        echo_json(facts)
    else:
        actions = ", ".join(f"{k} {v:,}" for k, v in sorted(result.by_action.items()))
        _say(
            f"Applied {result.applied:,} decisions ({escape(actions) or 'none'}); "
            f"{result.bad_count:,} bad rows; {result.empty:,} rows left empty."
        )
        for bad in result.bad:
            _say(f"  {escape(str(file))}:{bad.line}: {escape(bad.reason)}")
        if result.bad_count > len(result.bad):
            _say(f"  ... and {result.bad_count - len(result.bad):,} more")
        telling = [f for f in result.audit_checks if f["verdict"].startswith("over_target")]
        for line in audit_lines(telling):
            _say(line)
    if result.rejects_file:
        # The good rows are applied; the bad ones make the run fail so a script notices them.
        raise InputError(
            f"{result.bad_count:,} of {result.rows:,} filled rows were not applied; "
            f"they are written with their reasons to {result.rejects_file}",
            path=file,
            hint="fix them in that file and import it again",
        )


# -- demo -------------------------------------------------------------------------------------


class _DemoScreen:
    """Shows on stderr what the demo does: its world, a training spinner, onboarding progress.

    On a piped stderr, one :class:`PipedProgress` runs through the whole demo, so the world
    build and the calibration print lines too.
    """

    def __init__(self, lines: PipedProgress) -> None:
        self.lines = lines

    def world(self, root: Path) -> None:
        err_console.print(f"demo world: {root}")
        self.lines.update("building or reading the demo world")

    @contextmanager
    def training(self) -> Iterator[Callable[[str], None]]:
        with err_console.status("training on the demo reference catalog") as status:

            def show(text: str) -> None:
                status.update(f"training: {text}")
                self.lines.update(f"training: {text}")

            yield show
        self.lines.update("choosing the accept threshold")

    def onboarding(self, feed: Path) -> AbstractContextManager[Callable[[str, int], None]]:
        return _onboarding_progress(feed, self.lines)


@click.command("demo")
@_project_option
@click.option(
    "--world",
    default=None,
    type=click.Path(file_okay=False, path_type=Path),
    help="Demo world folder (default: feeds_demo of this checkout; built when missing).",
)
@_max_error_option
@click.option(
    "--validation",
    "validation_feed",
    multiple=True,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Labelled feed that sets the accept threshold; repeat for several (the strictest "
    "wins). Default: the reference catalog's valid split and the Oskelund feed, a retailer "
    "outside the reference catalog.",
)
@json_option
def demo_command(
    project: str | None,
    world: Path | None,
    max_error: float,
    validation_feed: tuple[Path, ...],
    as_json: bool,
) -> None:
    """Run the whole job on the invented demo world: build it, train, onboard, measure, export.

    Trains a model on the demo reference catalog if the project has none, onboards each demo
    feed, compares the auto-accepted part with the feeds' gold labels and exports the result to
    <project>/export/. The accept threshold must hold both on the reference catalog's valid
    split and on the labelled feed of Oskelund, a retailer the model never trained on (the
    feeds to onboard come from new retailers); the strictest of the two is used.
    """
    with PipedProgress("demo") as lines:
        facts = run_demo(
            project_dir(project),
            world=world,
            max_error=max_error,
            validation_feed=validation_feed,
            reporter=_DemoScreen(lines),
        )
    if as_json:
        echo_json(facts)
        return
    _render_demo(facts)


def _render_demo(facts: dict[str, Any]) -> None:
    if facts["trained"]:
        t = facts["trained"]
        refit = t.get("metrics", {}).get("refit_products") if t.get("refit") else None
        _say(
            f"Trained on {t['products_train']:,} products"
            + (f", then on {refit:,} with the held-out ones" if refit else "")
            + f", {t['classes']:,} classes in {t['training_seconds']:.0f} s"
        )
    table = Table(title="Demo feeds", title_justify="left", box=box.SIMPLE_HEAD,
                  padding=(0, 1), pad_edge=False, collapse_padding=True)
    table.add_column("feed", no_wrap=True)
    for header in ("read", "kept", "rejected", "accepted", "queued", "coverage", "gold error"):
        table.add_column(header, justify="right", no_wrap=True)
    for f in facts["feeds"]:
        a, g = f["accounting"], f["gold"]
        table.add_row(
            escape(f["feed"]),
            f"{a['read']:,}",
            f"{a['kept']:,}",
            f"{a['rejected']:,}",
            f"{f['accepted'] + f['audit']:,}",
            f"{f['queued']:,}",
            f"{g['coverage']:.1%}",
            f"{g['error']:.2%}",
        )
    _say(fit_table(table))
    if facts["feeds"]:
        first = facts["feeds"][0]
        _say(escape(first["calibration_statement"] or first["statement"]))
        thresholds = ", ".join(
            f"{escape(f['feed'])} "
            + ("none" if f["threshold"] is None else f"{f['threshold']:.3f}")
            for f in facts["feeds"]
        )
        _say(
            f"Each feed's own threshold ({thresholds}) keeps the share of wrong mappings among "
            f"its auto-accepted products at or below {first['max_error']:.1%} in all but "
            f"{first['delta']:.0%} of feeds like it, its own sampling included: the fewer "
            "products it accepts, the stricter; a feed unlike the calibration data gets a "
            "stricter one still (`catmap demo --json` gives each feed's check)."
        )
        _say(
            f"Calibration data: {escape(facts['feeds'][0]['validation_source'])}. "
            "The gold error column measures each feed's real error; on your own feeds the "
            "reviewed audit sample does (`catmap status`)."
        )
    _say(f"Exported to {escape(facts['export'])}/")
    _say(f"Review the queue: [bold]{escape(facts['review_command'])}[/bold]")
    _say(f"({facts['seconds']:.0f} s)")


def register(main: click.Group) -> None:
    """Add ``onboard``, ``status``, ``export``, ``decisions`` and ``demo`` to catmap."""
    main.add_command(onboard_command)
    main.add_command(status_command)
    main.add_command(export_command)
    main.add_command(decisions_group)
    main.add_command(demo_command)
