"""``catmap review``: work through the review queue in a full-screen terminal view."""

from __future__ import annotations

import getpass
import sys

import click

from catmap.cli._render import console, project_option
from catmap.cli.audit import audit_lines
from catmap.errors import NoTerminal
from catmap.jobs.audit import audit_check_project
from catmap.jobs.review import project_review_session
from catmap.project import project_dir
from catmap.review.session import ReviewSession


def _default_reviewer() -> str:
    try:
        return getpass.getuser()
    except (KeyError, OSError):  # no login name (e.g. a container without a passwd entry)
        return "reviewer"


def _has_terminal() -> bool:
    """True when both stdin and stdout are a terminal (the screen reads keys and draws)."""
    return sys.stdin.isatty() and sys.stdout.isatty()


def run_screen(session: ReviewSession) -> None:
    """Open the review screen on a session whose first item is claimed (kept apart for tests)."""
    from catmap.review.app import ReviewApp

    ReviewApp(session).run()


def register(main: click.Group) -> None:
    """Add ``catmap review`` to the command group."""

    @main.command("review")
    @project_option
    @click.option("--feed", default=None, help="Only review the items of this feed.")
    @click.option(
        "--reviewer",
        default=None,
        help="Your name on claims and decisions (default: your login name).",
    )
    def review(project: str | None, feed: str | None, reviewer: str | None) -> None:
        """Review uncertain mappings one product at a time, with single keys.

        Items are claimed with a lease, so several reviewers can share one project. Quit with
        q; the next `catmap review` resumes on the item you left.
        """
        folder = project_dir(project)
        with project_review_session(
            folder, reviewer or _default_reviewer(), feed=feed
        ) as session:
            if session.next() is None:
                where = f"feed {feed}" if feed else str(folder)
                click.echo(f"The review queue of {where} is empty: nothing to review.")
                return
            if not _has_terminal():
                # Drawing the screen into a pipe would print escape codes and wait for keys
                # that never come.
                session.close()
                raise NoTerminal(
                    "catmap review needs a terminal: stdin and stdout must not be redirected",
                    hint="run it in a terminal window; `catmap decisions` exports and "
                    "imports decisions as a file",
                )
            run_screen(session)
            session.close()  # idempotent; the screen closes it too
            pace = session.pace()
            click.echo(
                f"Reviewed {pace.done} item{'s' if pace.done != 1 else ''} this session; "
                f"{pace.left} left in the queue."
            )
        # The audit samples decided (in this session or beside it) may put a feed over its
        # target: act on it now, and say so when the audit asks for something.
        checked = audit_check_project(folder, feed, actor=reviewer or _default_reviewer())
        telling = [f for f in checked["feeds"] if f["verdict"].startswith("over_target")]
        for line in audit_lines(telling):
            console.print(line, soft_wrap=True)
