"""``catmap map``: map every product of a feed (or several feeds) to a node of the tree.

Apart from training (:mod:`catmap.cli.model`): mapping imports only what it uses, and a
one-row feed answers in about a second (``benchmarks/bench_startup.py``).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click
from rich.markup import escape
from rich.table import Table

from catmap.classify.mapping import CHUNK_SIZE
from catmap.cli._render import (
    PipedProgress,
    console,
    echo_json,
    err_console,
    feed_name_option,
    json_option,
    model_option,
    spinner,
    tree_file_option,
)
from catmap.cli._render import project_option as _project_option
from catmap.cli._render import tree_version_option as _tree_version_option
from catmap.feeds.writers import FORMATS
from catmap.jobs._project_tree import project_tree
from catmap.jobs.map import map_project_feed
from catmap.project import project_dir
from catmap.tree.taxonomy import CategoryTree, default_tree_path, load_tree


@click.command("map")
@click.argument(
    "feeds", nargs=-1, required=True, type=click.Path(exists=True, dir_okay=False, path_type=Path)
)
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for mappings, rejects and accounting.json (with several feeds: one folder "
    "per feed in it, named after the feed).",
)
@click.option(
    "--format",
    "output_format",
    type=click.Choice(FORMATS),
    default="jsonl",
    show_default=True,
    help="File format of the mappings.",
)
@click.option(
    "--backoff-threshold",
    type=click.FloatRange(0.0, 1.0),
    default=0.5,
    show_default=True,
    help="Below this confidence, answer the deepest sure parent node.",
)
@click.option(
    "--rules",
    "rules_file",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Rules file (default: <project>/rules/<feed name>.rules if it exists).",
)
@model_option("Model folder (default: <project>/models/current; none = keywords only).")
@_tree_version_option
@tree_file_option()
@feed_name_option
@click.option(
    "--workers",
    type=click.IntRange(1, 64),
    default=2,
    show_default=True,
    help=f"Processes computing probabilities (started once the feed has more than one chunk "
    f"of {CHUNK_SIZE:,} products: a smaller feed is mapped in the main process).",
)
@click.option(
    "--cluster",
    "cluster",
    default=None,
    metavar="ADDRESS",
    help="Map on a dask.distributed cluster: local:N starts N workers on this machine, "
    "tcp://HOST:PORT uses a running scheduler (needs the cluster extra). Several feeds are "
    "mapped at once on it.",
)
@_project_option
@json_option
def map_command(
    feeds: tuple[Path, ...],
    out_dir: Path,
    output_format: str,
    backoff_threshold: float,
    rules_file: Path | None,
    model_path: Path | None,
    tree_version: str | None,
    tree_file: Path | None,
    feed_name: str | None,
    workers: int,
    cluster: str | None,
    project: str | None,
    as_json: bool,
) -> None:
    """Map every product of a feed to a node of the tree, with a calibrated confidence.

    Per-feed rules apply first (one per line, e.g. path contains "Bottines" => 1511; # comments;
    every operator in docs/rules.md), then the trained model, or the tree's own keywords when no
    model is trained yet. Give several feeds to map each into its own folder under --out.
    """
    if cluster is not None and tree_version is None and tree_file is not None:
        # A tree file wins over the version; the run's facts name the file's own version.
        tree_version = str(load_tree(tree_file).version)
    elif cluster is not None and tree_version is None:
        # Workers load the tree by its file, else the shared tree by its version: the
        # project's own tree file (`catmap init --tree`), else its version (or its model's).
        tree = project_tree(project_dir(project))
        tree_version = str(tree.version)
        if tree.path is not None and not _is_shared_tree(tree):
            tree_file = Path(tree.path)
    if len(feeds) > 1:
        _map_several(
            list(feeds), out_dir, cluster=cluster, project=project, feed_name=feed_name,
            as_json=as_json, tree_version=tree_version, tree_file=tree_file,
            model_dir=model_path, rules_file=rules_file, backoff_threshold=backoff_threshold,
            format=output_format, workers=workers,
        )  # fmt: skip
        return
    feed = feeds[0]
    if cluster is not None:
        _map_on_cluster(
            feed,
            out_dir,
            cluster=cluster,
            project=project,
            tree_version=tree_version,
            tree_file=tree_file,
            model_dir=model_path,
            rules_file=rules_file,
            backoff_threshold=backoff_threshold,
            format=output_format,
            as_json=as_json,
        )
        return
    with (
        spinner("mapping {task.description}", "{task.completed:,.0f} records") as progress,
        PipedProgress(f"mapping {feed.name}") as lines,
    ):
        task = progress.add_task(feed.name, total=None)

        def show(read: int) -> None:
            progress.update(task, completed=read)
            lines.update(count=read)

        result = map_project_feed(
            feed,
            out_dir,
            project=project_dir(project),
            tree_version=tree_version,
            tree_file=tree_file,
            feed_name_given=feed_name,
            model_dir=model_path,
            rules_file=rules_file,
            backoff_threshold=backoff_threshold,
            format=output_format,
            workers=workers,
            on_progress=show,
        )
    if as_json:
        echo_json(result.facts)
    else:
        _render_map(result.facts)
    if result.error is not None:
        raise result.error


def _map_on_cluster(
    feed: Path,
    out_dir: Path,
    *,
    cluster: str,
    project: str | None,
    as_json: bool,
    **options: Any,
) -> None:
    """``catmap map --cluster``: progress (partitions, rows per second, dashboard), facts."""
    from catmap.jobs.cluster import ClusterProgress, map_project_feed_on_cluster

    shown: set[str] = set()

    def show(where: ClusterProgress) -> None:
        if where.dashboard and "dashboard" not in shown:
            shown.add("dashboard")
            err_console.print(f"cluster dashboard: {where.dashboard}")
        progress.update(
            task,
            description=f"{where.stage}: {where.done}/{where.total} partitions, "
            f"{where.rows:,} records, {where.rows_per_second:,.0f}/s",
        )

    with spinner() as progress:
        task = progress.add_task(f"starting {cluster}", total=None)
        result = map_project_feed_on_cluster(
            feed,
            out_dir,
            cluster=cluster,
            project=project_dir(project),
            on_progress=show,
            **options,
        )
    if as_json:
        echo_json(result.facts)
    else:
        _render_map(result.facts)
        parts = result.facts["cluster"]["partitions"]
        console.print(f"cluster: {parts['count']} partitions ({parts['kind']})")
    if result.error is not None:
        raise result.error


def _map_several(
    feeds: list[Path],
    out_dir: Path,
    *,
    cluster: str | None,
    project: str | None,
    feed_name: str | None,
    as_json: bool,
    tree_version: str | None,
    tree_file: Path | None,
    workers: int,
    **options: Any,
) -> None:
    """``catmap map FEED FEED...``: each feed into ``<out>/<feed name>/``; on a cluster, all at
    once with a progress line per feed; the first fatal feed error is raised at the end."""
    from catmap.jobs.cluster import (
        ClusterProgress,
        map_project_feeds_on_cluster,
    )
    from catmap.project import feed_names

    names = feed_names(feeds, feed_name, verb="map")
    folder = project_dir(project)
    with spinner() as progress, PipedProgress(f"mapping {len(feeds)} feeds") as lines:
        tasks = {name: progress.add_task(f"{name}: waiting", total=None) for name in names}
        shown: set[str] = set()

        def show(name: str, text: str, count: int | None = None) -> None:
            progress.update(tasks[name], description=f"{name}: {text}")
            lines.update(f"{name}: {text}", count)

        def on_cluster(name: str, where: ClusterProgress) -> None:
            if where.dashboard and "dashboard" not in shown:
                shown.add("dashboard")
                err_console.print(f"cluster dashboard: {where.dashboard}")
            show(
                name,
                f"{where.stage} {where.done}/{where.total} partitions, {where.rows:,} "
                f"records, {where.rows_per_second:,.0f}/s",
            )

        if cluster is not None:
            results = map_project_feeds_on_cluster(
                feeds, out_dir, cluster=cluster, project=folder, on_progress=on_cluster,
                tree_version=tree_version, tree_file=tree_file, **options,
            )  # fmt: skip
        else:
            results = []
            for feed, name in zip(feeds, names, strict=True):

                def on_read(read: int, name: str = name) -> None:
                    show(name, "mapping", read)

                results.append(
                    map_project_feed(
                        feed, out_dir / name, project=folder, tree_version=tree_version,
                        tree_file=tree_file, workers=workers, on_progress=on_read, **options,
                    )
                )  # fmt: skip
                show(name, "done")
    if as_json:
        echo_json({"feeds": [result.facts for result in results]})
    else:
        for name, result in zip(names, results, strict=True):
            console.print(f"[bold]{escape(name)}[/bold]")
            _render_map(result.facts)
            if "cluster" in result.facts:
                parts = result.facts["cluster"]["partitions"]
                console.print(f"cluster: {parts['count']} partitions ({parts['kind']})")
    for result in results:
        if result.error is not None:
            raise result.error


def _is_shared_tree(tree: CategoryTree) -> bool:
    """Whether the tree is the shared tree file of its version (``taxonomies/tree-vN.txt``)."""
    shared = default_tree_path(tree.version)
    return tree.path is not None and Path(tree.path).resolve() == shared.resolve()


def _render_map(facts: dict[str, Any]) -> None:
    acc = facts["accounting"]
    console.print(
        f"read {acc.get('read', 0):,} = kept {acc.get('kept', 0):,} + "
        f"rejected {acc.get('rejected', 0):,}"
    )
    mode = "trained model" if facts["mode"] == "model" else "cold start (tree keywords only)"
    console.print(
        f"Mapped {facts['products']:,} products with the {mode}, "
        f"back-off below {facts['threshold']:.2f}"
    )
    for title, column, counts in (
        ("By method", "method", facts["by_method"]),
        ("Confidence", "band", facts["confidence_bands"]),
        ("By department", "department", facts["by_department"]),
    ):
        table = Table(title=title)
        table.add_column(column)
        table.add_column("products", justify="right")
        for name, count in counts.items():
            table.add_row(escape(name), f"{count:,}")
        console.print(table)
    if facts["retailer_paths"]:
        console.print("[bold]Largest retailer paths[/bold]")
        for item in facts["retailer_paths"]:
            top = item["top"][0] if item["top"] else None
            where = (
                f"{top['share']:.0%} → {top['node_id']} {escape(top['node_path'])}" if top else "-"
            )
            console.print(f"  '{escape(item['path'])}': {item['count']:,} products, {where}")
    rules = facts["rules"]
    if rules.get("rules"):
        console.print(
            f"Rules: {rules['rules']} from {escape(str(rules['file']))}, "
            f"{rules['products_matched']:,} products decided, "
            f"{rules['conflicts']:,} conflicts"
        )
        for example in rules["conflict_examples"][:5]:
            console.print(
                f"  product {escape(example['product_id'])}: rule line "
                f"{example['rule_line']} wins over line(s) "
                f"{', '.join(str(n) for n in example['other_rule_lines'])}"
            )
    for warning in facts.get("warnings", []):
        console.print(f"[bold yellow]Warning:[/bold yellow] {escape(warning)}")
    for name, path in facts["outputs"].items():
        console.print(f"{name.capitalize() + ':':<12}{escape(path)}")


def register(main: click.Group) -> None:
    """Add ``map`` to the catmap command group."""
    main.add_command(map_command)
