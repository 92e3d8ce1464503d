"""``catmap train``: learn the mapping model from labelled feeds (``catmap map`` is in
:mod:`catmap.cli.map`, which does not import training)."""

from __future__ import annotations

from pathlib import Path

import click
from rich.markup import escape

from catmap.classify.training import MAX_UNKNOWN_LABEL_SHARE, default_max_per_class
from catmap.cli._render import (
    PipedProgress,
    console,
    echo_json,
    json_option,
    model_option,
    spinner,
    tree_file_option,
)
from catmap.cli._render import project_option as _project_option
from catmap.cli._render import tree_version_option as _tree_version_option
from catmap.jobs.train import train_project
from catmap.project import project_dir


@click.command("train")
@click.argument("feeds", nargs=-1, type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option(
    "--label-column",
    default="gold_node",
    show_default=True,
    help="Column holding the node id of each product.",
)
@_tree_version_option
@tree_file_option()
@click.option(
    "--max-per-class",
    type=click.IntRange(min=0),
    default=default_max_per_class() or 0,
    show_default=True,
    help="Train on at most this many products of one class (a seeded sample); 0: no cap. "
    "The summary says how many rows it left out.",
)
@click.option(
    "--max-unknown-share",
    type=click.FloatRange(0, 1),
    default=MAX_UNKNOWN_LABEL_SHARE,
    show_default=True,
    help="Stop (exit 3) when more than this share of labelled rows name node ids the tree "
    "lacks: the labels likely belong to another tree.",
)
@click.option(
    "--labels-tree",
    metavar="VERSION|FILE",
    default=None,
    help="The labels name nodes of this older tree (a version of the shared tree, a tree "
    "file, or a version a project of its own was remapped from): they are read through the "
    "changes to the project's tree; labels of split or removed nodes are dropped and counted. "
    "Onboarding's calibration reads them the same way.",
)
@click.option(
    "--labels-changes",
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    default=None,
    help="Change log from --labels-tree to the project's tree: it decides where labels go "
    "(as with `catmap remap --changes`); without it the two trees' diff does.",
)
@click.option(
    "--refit/--no-refit",
    default=True,
    show_default=True,
    help="Once calibrated on the validation rows, train again on them too: more data for "
    "the model, at the cost of training the chosen model a second time. Onboarding then "
    "chooses its accept threshold on the predictions those rows got before (kept in the "
    "model folder).",
)
@click.option(
    "--classifier",
    type=click.Choice(("linear_svc", "sgd", "logistic")),
    default="linear_svc",
    show_default=True,
    help="Linear model to train.",
)
@model_option("Model folder to write (default: <project>/models/current).")
@click.option(
    "--with-reviews/--without-reviews",
    default=True,
    show_default=True,
    help="Add the products reviewers decided in the project store as training examples.",
)
@_project_option
@json_option
def train_command(
    feeds: tuple[Path, ...],
    label_column: str,
    tree_version: str | None,
    tree_file: Path | None,
    max_per_class: int,
    max_unknown_share: float,
    labels_tree: str | None,
    labels_changes: Path | None,
    refit: bool,
    classifier: str,
    model_path: Path | None,
    with_reviews: bool,
    project: str | None,
    as_json: bool,
) -> None:
    """Train the mapping model on labelled feeds (default: the project's, see `catmap init`).

    A labelled feed has a column of node ids (--label-column). Rows with split=train train and
    rows with split=valid calibrate when a split column exists; else a seeded 90/10 split is made.
    The project of `catmap demo` trains on the demo reference catalog.
    """
    with spinner() as progress, PipedProgress("training") as lines:
        task = progress.add_task("starting", total=None)

        def show(text: str) -> None:
            progress.update(task, description=text)
            lines.update(text)

        facts = train_project(
            feeds,
            project=project_dir(project),
            tree_version=tree_version,
            tree_file=tree_file,
            label_column=label_column,
            classifier=classifier,
            model_dir=model_path,
            with_reviews=with_reviews,
            on_stage=show,
            max_per_class=max_per_class,
            max_unknown_share=max_unknown_share,
            labels_tree=labels_tree,
            labels_changes=labels_changes,
            refit=refit,
        )
    if as_json:
        echo_json(facts)
        return
    metrics = facts["metrics"]
    per_class = facts["per_class"]
    cap = facts["max_per_class"]
    refit_products = metrics.get("refit_products") if facts.get("refit") else None
    console.print(
        f"Trained on {facts['products_used']:,} products"
        + (f", then on {refit_products:,} with the validation products" if refit_products else "")
        + f", {facts['classes']:,} classes "
        f"(tree version {facts['tree_version']}, {escape(facts['tree_file'] or 'in memory')})"
    )
    console.print(f"  rows read            {facts['rows_read']:,} ({facts['rejected']:,} rejected)")
    console.print(
        f"  training rows        {facts['products_train']:,}, of which "
        + (
            f"{facts['left_out_by_cap']:,} left out by the cap of {cap:,} per class"
            if cap
            else "none left out: no cap per class"
        )
        + " (--max-per-class)"
    )
    console.print(
        f"  per class            min {per_class['min']:,}, median {per_class['median']:,.0f}, "
        f"max {per_class['max']:,} products used"
    )
    if metrics.get("refit_skipped"):
        held = " (taken from the training products: the feeds have no validation rows)"
    elif facts.get("refit"):
        held = " (calibrated on, then trained on too; --no-refit: not trained on)"
    else:
        held = " (calibrated on, never trained on: --no-refit)"
    console.print(f"  validation products  {facts['products_valid']:,}{held}")
    console.print(f"  reviewed examples    {facts['reviewed_examples']:,} (from the project store)")
    console.print(f"  validation accuracy  {metrics.get('valid_accuracy', 0):.3f}")
    console.print(
        f"  ECE (15 bins)        {metrics.get('valid_ece_before_calibration', 0):.3f} before "
        f"calibration, {metrics.get('valid_ece', 0):.3f} after"
    )
    if "structure_reason" in metrics:
        console.print(
            f"  structure            {metrics['structure']} ({metrics['structure_reason']})"
        )
    console.print(f"  keyword weight       {metrics.get('keyword_weight', 0):.2f}")
    console.print(f"  consensus weight     {metrics.get('consensus_weight', 0):.2f}")
    console.print(f"  training time        {facts['training_seconds']:.1f} s")
    console.print(f"  model size           {facts['model_bytes'] / 1e6:.1f} MB")
    if facts["unknown_labels"] or facts["unlabelled"]:
        examples = ", ".join(facts["unknown_examples"])
        console.print(
            # A label may be a path of names as well as an id: say what both have in common.
            f"  skipped              {facts['unknown_labels']:,} rows whose label names no node "
            f"of the tree ({facts['unknown_share']:.1%}"
            f"{': ' + escape(examples) if examples else ''}), "
            f"{facts['unlabelled']:,} without a label"
        )
    if facts.get("labels_as_paths"):
        console.print(
            f"  labels as paths      {facts['labels_as_paths']:,} rows name their node by its "
            "path of names (read as the node's id)"
        )
    moved = facts.get("labels_translation")
    if moved:
        dropped = moved["dropped"]
        console.print(
            f"  labels of tree {escape(moved['from_version'])}  {moved['kept']:,} of unchanged "
            f"nodes, {moved['translated']:,} read as their node's new id, "
            f"{sum(dropped.values()):,} dropped"
            + (
                " (" + escape(", ".join(f"{k} {v:,}" for k, v in dropped.items())) + ": their "
                "products may now belong to any of several nodes; review decisions teach those)"
                if dropped
                else ""
            )
        )
    if facts["inner_labels"]:
        console.print(
            f"  inner nodes          {facts['inner_labels']:,} training rows are labelled with "
            f"nodes that have children ({escape(', '.join(facts['inner_examples']))}): "
            "products like them are mapped to those nodes, not to a leaf below; label them "
            "with leaves for leaf answers"
        )
    older = facts.get("older_labels")
    if older:
        console.print(
            f"  labelled feeds       the project's labelled feeds name tree {escape(older)}'s "
            f"nodes and were left out: `catmap train --labels-tree {escape(older)}` learns from "
            "them, read through the changes (with `--labels-changes LOG` if you have the "
            "change log)"
        )
    console.print(f"Model saved to {escape(facts['model_dir'])}")


def register(main: click.Group) -> None:
    """Add ``train`` to the catmap command group."""
    main.add_command(train_command)
