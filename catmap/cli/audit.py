"""``catmap audit-check``: feed each feed's audited error back into its accept threshold."""

from __future__ import annotations

from typing import Any

import click
from rich.markup import escape

from catmap.cli._render import console, echo_json, json_option, project_option
from catmap.jobs.audit import audit_check_project
from catmap.project import project_dir


def audit_lines(feeds: list[dict[str, Any]]) -> list[str]:
    """One line per feed saying what its audit check found and did (rich markup escaped).

    Args:
        feeds: the per-feed facts of :func:`catmap.jobs.audit.check_feed_audit`.

    Returns:
        The lines to print.
    """
    lines = []
    for f in feeds:
        at = f" at threshold {f['threshold']:.3f}" if f.get("threshold") is not None else ""
        line = f"{escape(f['feed'])}: audit check{at}: {escape(f['text'])}"
        if f["verdict"] == "over_target":
            if f.get("applied"):
                line += f"; {f['requeued']:,} accepted mappings back in the review queue"
            else:
                line += (
                    f"; {f.get('would_requeue', 0):,} accepted mappings would go back to the "
                    "review queue (run `catmap audit-check`)"
                )
            line += (
                f". The new threshold rests on {f['audited_above']:,} audited mappings above it "
                f"({f['wrong_above']:,} wrong); {f['audits_to_certify']:,} more audits there, "
                "all right, would confirm it"
            )
        lines.append(line)
    return lines


def register(main: click.Group) -> None:
    """Add ``catmap audit-check`` to the command group."""

    @main.command("audit-check")
    @project_option
    @click.option("--feed", default=None, help="Only this feed (default: every feed).")
    @click.option(
        "--dry-run",
        is_flag=True,
        help="Only say what the audit shows; raise no threshold, re-queue nothing.",
    )
    @json_option
    def audit_check(project: str | None, feed: str | None, dry_run: bool, as_json: bool) -> None:
        """Check each feed's audited error against its target; raise the threshold when over.

        The reviewed audit samples of the part a feed auto-accepts are compared with the feed's
        target error. Over the target with 95% confidence (one-sided exact binomial test), the
        feed's threshold is raised to the lowest one whose audited error is within target and
        the auto-accepted mappings below it go back to the review queue (reason
        audit_over_target), recorded in the audit log. Over the target without that confidence,
        it says how many more audits would tell. It also runs at the end of `catmap review`.
        """
        facts = audit_check_project(project_dir(project), feed, apply=not dry_run)
        if as_json:
            echo_json(facts)
            return
        if not facts["feeds"]:
            console.print("No feed in the store yet.", soft_wrap=True)
        for line in audit_lines(facts["feeds"]):
            console.print(line, soft_wrap=True)
