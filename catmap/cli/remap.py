"""Remap commands: move the store onto a new tree version, report, roll back, finalise.

``catmap remap --to 2`` moves every stored mapping; ``catmap remap-report`` shows what the last
remap did; ``catmap remap-rollback`` undoes it; ``catmap remap-finalise`` keeps it for good.
"""

from __future__ import annotations

import getpass
from pathlib import Path
from typing import Any

import click
from rich.markup import escape

from catmap.cli._render import console, echo_json, json_option, model_option
from catmap.cli._render import project_option as _project_option
from catmap.jobs.remap import (
    RemapReport,
    finalise_project_remap,
    open_project_store,
    project_remap_state,
    remap_project,
    rollback_remap,
)
from catmap.project import project_dir


def _actor() -> str:
    try:
        return getpass.getuser()
    except (KeyError, OSError):  # no login name (e.g. a container without a passwd entry)
        return "catmap"


def render_nodes(facts: dict[str, Any]) -> None:
    """Print the remap's per-node lines: old → new, change, evidence, and the product counts."""
    nodes = facts.get("nodes") or {}
    if not nodes:
        console.print("  no changed node held a product")
        return
    console.print(
        "  per node: old -> new, change (source): moved as is / re-scored / to review; evidence"
    )
    for entry in nodes.values():
        new = ", ".join(entry["new_ids"]) or "-"
        console.print(
            f"    {entry['old_id']} -> {new}  {entry['change']} ({entry['source']}): "
            f"{entry['moved']:,} / {entry['rescored']:,} / {entry['queued']:,}",
            highlight=False,
        )
        console.print(f"      {escape(entry['old_path'])}", highlight=False)
        for path in entry["new_paths"]:
            console.print(f"      -> {escape(path)}", highlight=False)
        console.print(f"      evidence: {escape(entry['evidence'])}", highlight=False)


def render_report(facts: dict[str, Any]) -> None:
    """Print a remap report as readable lines."""
    total = facts["mappings"]
    console.print(
        f"Remap {facts['remap_id']}: tree version {facts['from_version']} -> "
        f"{facts['to_version']} ({facts['crosswalk']} crosswalk, re-scored with "
        f"{facts['scorer'].replace('_', ' ')})"
    )
    console.print(f"  mappings             {total:,}")
    console.print(f"  unchanged            {facts['unchanged']:,}")
    console.print(f"  moved automatically  {facts['moved_automatically']:,}")
    console.print(f"  re-scored            {facts['rescored']:,}")
    console.print(f"  back to review       {facts['requeued']:,}")
    console.print(f"  reviewed kept        {facts['reviewed_kept']:,}")
    console.print(f"  needed no review     {facts['no_review_share']:.1%}")
    if facts.get("not_in_old_tree"):
        console.print(f"  not in the old tree  {facts['not_in_old_tree']:,}")
    changes = {k: v for k, v in facts["by_change"].items() if k != "unchanged"}
    if changes:
        console.print("  per change            products  automatic  re-scored  to review")
        for kind, counts in sorted(changes.items()):
            console.print(
                f"    {kind:<20} {counts['products']:>8,} {counts['automatic']:>10,} "
                f"{counts['rescored']:>10,} {counts['requeued']:>9,}"
            )
    names = sorted(set(facts["departments_before"]) | set(facts["departments_after"]))
    if names:
        width = max(20, *(len(name) for name in names))
        console.print(f"  {'per department':<{width + 2}} {'before':>8} {'after':>9}")
        for name in names:
            console.print(
                f"    {escape(name):<{width}} {facts['departments_before'].get(name, 0):>8,} "
                f"{facts['departments_after'].get(name, 0):>9,}"
            )
    for feed, chosen in facts["thresholds"].items():
        value = chosen["threshold"]
        shown = "none (accepts nothing)" if value is None else f"{value:.3f}"
        console.print(
            f"  accept threshold     {shown} for {escape(feed)} ({escape(chosen['source'])})"
        )


@click.command("remap")
@click.option("--to", "to", required=True, help="New tree: a version number or a tree file.")
@click.option(
    "--from",
    "from_",
    default=None,
    help="Tree the stored mappings use (default: the version recorded with them: the "
    "project's own tree when it has that version, else the shared tree).",
)
@click.option(
    "--crosswalk",
    "crosswalk_file",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Crosswalk file to use (default: computed by comparing the two trees).",
)
@click.option(
    "--changes",
    "changes_file",
    default=None,
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="Change log between the two trees: it is the crosswalk; a computed one only suggests.",
)
@click.option(
    "--min-confidence",
    type=click.FloatRange(0.0, 1.0),
    default=None,
    help="Accept threshold for re-scored mappings (default: each feed's own, from its "
    "onboarding or its audit check's raise; a feed that accepts nothing accepts none).",
)
@model_option("Model folder (default: <project>/models/current).")
@_project_option
@json_option
def remap_command(
    to: str,
    from_: str | None,
    crosswalk_file: Path | None,
    changes_file: Path | None,
    min_confidence: float | None,
    model_path: Path | None,
    project: str | None,
    as_json: bool,
) -> None:
    """Move every stored mapping onto a new version of the category tree.

    Unchanged nodes, and renamed or moved ones the crosswalk is sure keep their meaning,
    move as they are, as do merges a change log states; products of split nodes, of merges
    or removals the diff found alone, and of any change it is unsure of are re-scored, and
    those below the accept threshold go back to review (reason remap, grouped by old node).
    Keep the result with `catmap remap-finalise` or undo it with `catmap remap-rollback`.
    """
    report = remap_project(
        project_dir(project),
        to,
        from_=from_,
        crosswalk_file=crosswalk_file,
        changes_file=changes_file,
        min_confidence=min_confidence,
        model_dir=model_path,
        actor=_actor(),
    )
    facts = report.to_dict()
    if as_json:
        echo_json(facts)
        return
    render_report(facts)
    console.print(
        "Keep it with `catmap remap-finalise`, or undo it with `catmap remap-rollback`."
    )


@click.command("remap-report")
@_project_option
@json_option
def remap_report_command(project: str | None, as_json: bool) -> None:
    """Show what the last remap did, node by node, and whether it can still be rolled back.

    Per changed node: old -> new ids and paths, the change and its source (diff or change
    log), the evidence, and how many products moved as they were, were re-scored and went
    to review.
    """
    state = project_remap_state(project_dir(project))
    facts = {**state.report.to_dict(), "state": state.state}
    if as_json:
        echo_json(facts)
        return
    render_report(facts)
    console.print(f"  state                {state.state}")
    render_nodes(facts)


@click.command("remap-rollback")
@_project_option
@json_option
def remap_rollback_command(project: str | None, as_json: bool) -> None:
    """Undo the last remap: every mapping and review item goes back as it was."""
    with open_project_store(project_dir(project)) as store:
        restored = rollback_remap(store, actor=_actor())
    if as_json:
        echo_json({"mappings_restored": restored})
        return
    console.print(f"Rolled back: {restored:,} mappings restored.")


@click.command("remap-finalise")
@_project_option
@json_option
def remap_finalise_command(project: str | None, as_json: bool) -> None:
    """Keep the last remap for good (the previous mappings are dropped)."""
    dropped, adopted = finalise_project_remap(project_dir(project), actor=_actor())
    if as_json:
        echo_json(
            {
                "previous_mappings_dropped": dropped,
                "project_tree": str(adopted) if adopted else None,
            }
        )
        return
    console.print(f"Finalised: {dropped:,} previous mappings dropped; no rollback now.")
    if adopted is not None:
        console.print(
            f"The project's tree is now {escape(str(adopted))}: train, onboard and map use it."
        )


def register(main: click.Group) -> None:
    """Add ``remap``, ``remap-report``, ``remap-rollback`` and ``remap-finalise``."""
    main.add_command(remap_command)
    main.add_command(remap_report_command)
    main.add_command(remap_rollback_command)
    main.add_command(remap_finalise_command)


__all__ = ["RemapReport", "register", "render_nodes", "render_report"]
