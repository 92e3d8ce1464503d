"""``catmap evaluate``: map a labelled feed and compare with its gold labels; write the report."""

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
    model_option,
    project_option,
    tree_file_option,
    tree_version_option,
)
from catmap.jobs.evaluate import evaluate_and_report
from catmap.project import project_dir

CONFUSIONS_SHOWN = 10
NODES_SHOWN = 10


@click.command("evaluate")
@click.argument("labelled_feed", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option(
    "--gold",
    "gold_file",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Gold labels CSV joined by product_id (default: the feed's own gold columns).",
)
@click.option(
    "--label-column",
    default="gold_node",
    show_default=True,
    help="Column holding the gold node id.",
)
@model_option("Model folder (default: <project>/models/current; none = keywords only).")
@click.option(
    "--out",
    "out_dir",
    default=None,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for report.html and metrics.json (default: <project>/reports/<feed name>).",
)
@click.option("--split", default=None, help="Evaluate only rows whose 'split' column is this.")
@click.option(
    "--backoff-threshold",
    type=click.FloatRange(0.0, 1.0),
    default=0.5,
    show_default=True,
    help="Below this confidence, answer the deepest sure parent node.",
)
@tree_version_option
@tree_file_option()
@feed_name_option
@click.option(
    "--accept-threshold",
    type=click.FloatRange(0.0, 1.0),
    default=None,
    help="Give the error rate among products accepted at this confidence (default: the "
    "threshold of the project's latest onboarding run).",
)
@project_option
@json_option
def evaluate_command(
    labelled_feed: Path,
    gold_file: Path | None,
    label_column: str,
    model_path: Path | None,
    out_dir: Path | None,
    split: str | None,
    backoff_threshold: float,
    tree_version: str | None,
    tree_file: Path | None,
    feed_name: str | None,
    accept_threshold: float | None,
    project: str | None,
    as_json: bool,
) -> None:
    """Measure mapping and attribute quality on a feed with gold labels.

    The gold labels are the feed's own gold_node column, or a separate CSV given with --gold
    (e.g. catmap evaluate feeds_demo/ferravelle.csv --gold feeds_demo/gold/ferravelle.csv).
    Prints accuracy, F1, hierarchical F1, calibration error (ECE), AURC, the error rate at the
    auto-accept threshold, the top confusions, the nodes with most errors and brand / who / age
    scores; writes report.html (with plots) and metrics.json.
    """
    result = evaluate_and_report(
        labelled_feed,
        project=project_dir(project),
        gold_file=gold_file,
        label_column=label_column,
        model_dir=model_path,
        out_dir=out_dir,
        split=split,
        backoff_threshold=backoff_threshold,
        tree_version=tree_version,
        tree_file=tree_file,
        feed_name=feed_name,
        accept_threshold=accept_threshold,
    )
    if as_json:
        echo_json(result.report)
        return
    _render(result.report, result.html_path, result.json_path)


def _f(value: float) -> str:
    return f"{value:.3f}"


def _render(report: dict[str, Any], html_path: Path, json_path: Path) -> None:
    mapping = report["mapping"]
    left = ", ".join(f"{k.replace('_', ' ')} {v:,}" for k, v in report["left_out"].items() if v)
    console.print(
        f"[bold]{escape(report['feed'])}[/bold]: {report['products']:,} products evaluated"
        + (f" (left out: {escape(left)})" if left else "")
    )
    console.print(f"Model: {escape(report['model'])}")
    if report.get("trained_on"):
        console.print(f"[yellow]Note: {escape(report['trained_on'])}[/yellow]")
    table = Table(title="Mapping")
    table.add_column("metric")
    table.add_column("value", justify="right")
    for label, value in (
        ("leaf accuracy", _f(mapping["accuracy"])),
        ("macro-F1", _f(mapping["macro_f1"])),
        ("weighted F1", _f(mapping["weighted_f1"])),
        ("hierarchical precision", _f(mapping["hierarchical_precision"])),
        ("hierarchical recall", _f(mapping["hierarchical_recall"])),
        ("hierarchical F1", _f(mapping["hierarchical_f1"])),
        (f"ECE ({mapping['ece_bins']} bins)", f"{mapping['ece']:.4f}"),
        ("AURC", f"{mapping['aurc']:.4f}"),
        *[(f"method {m}", f"{n:,}") for m, n in mapping["by_method"].items()],
    ):
        table.add_row(label, value)
    console.print(table)
    console.print(
        "ECE: the mean gap between the stated confidence and the share right, over confidence "
        "bins (0 = confidence means what it says).\n"
        "AURC: the mean error rate over all accept thresholds, products taken most confident "
        "first (lower = confidence ranks right answers first)."
    )
    accepted = report.get("at_accept_threshold")
    if accepted is None:
        console.print(
            "Error rate at the auto-accept threshold: no onboarding run yet "
            "(give --accept-threshold)"
        )
    else:
        console.print(
            f"At the auto-accept threshold {accepted['threshold']:.3f}: "
            f"{accepted['accepted']:,} products accepted ({accepted['coverage']:.1%}), "
            f"{accepted['wrong']:,} wrong: error rate {accepted['error_rate']:.2%}"
        )

    if report["confusions"]:
        confusions = Table(title="Most frequent confusions")
        confusions.add_column("count", justify="right")
        confusions.add_column("gold")
        confusions.add_column("mapped to")
        for c in report["confusions"][:CONFUSIONS_SHOWN]:
            confusions.add_row(
                str(c["count"]),
                escape(f"{c['true']} {c['true_path']}"),
                escape(f"{c['predicted']} {c['predicted_path']}"),
            )
        console.print(confusions)

    worst = [n for n in report["nodes"] if n["errors"]][:NODES_SHOWN]
    if worst:
        nodes = Table(title="Nodes with most errors")
        for header in ("node", "path", "errors", "missed", "wrongly here", "gold products"):
            nodes.add_column(header, justify="left" if header in ("node", "path") else "right")
        for n in worst:
            nodes.add_row(
                escape(n["node_id"]), escape(n["path"]), f"{n['errors']:,}", f"{n['missed']:,}",
                f"{n['wrongly_here']:,}", f"{n['support']:,}",
            )
        console.print(nodes)

    attributes = report.get("attributes") or {}
    brand = attributes.get("brand")
    if brand:
        console.print(
            f"Brand: precision {_f(brand['precision'])}, recall {_f(brand['recall'])}, "
            f"F1 {_f(brand['f1'])} over {brand['products']:,} products"
        )
    for name in ("who", "age"):
        section = attributes.get(name)
        if not section:
            continue
        values = sorted({p for row in section["confusion"].values() for p in row})
        grid = Table(
            title=f"{name}: accuracy {_f(section['accuracy'])} over {section['products']:,}"
        )
        grid.add_column("gold \\ extracted")
        for value in values:
            grid.add_column(escape(value), justify="right")
        for gold_value, row in section["confusion"].items():
            grid.add_row(escape(gold_value), *[f"{row.get(v, 0):,}" for v in values])
        console.print(grid)
    console.print(f"Report:  {escape(str(html_path))}")
    console.print(f"Metrics: {escape(str(json_path))}")


def register(main: click.Group) -> None:
    """Add ``evaluate`` to the catmap command group."""
    main.add_command(evaluate_command)
