"""Tests for `catmap review`: errors, the empty queue, the reviewer's name, resuming.

The screen itself is tested in tests/test_review.py; here it is replaced by a stand-in that
records the session it was given.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from catmap.cli import main
from catmap.cli import review as review_command
from catmap.review import confirm_brand
from catmap.review.sample import BRAND_ONLY, JOINED_BRAND, SAMPLE_FEED, build_sample_store
from catmap.review.session import ReviewSession
from catmap.store import Store, store_path


@pytest.fixture()
def project(tmp_path: Path) -> Path:
    folder = tmp_path / "project"
    build_sample_store(store_path(folder)).close()
    return folder


@pytest.fixture()
def screens(monkeypatch: pytest.MonkeyPatch) -> list[ReviewSession]:
    """Replace the screen: record each session it would show, decide nothing."""
    shown: list[ReviewSession] = []
    monkeypatch.setattr(review_command, "run_screen", shown.append)
    monkeypatch.setattr(review_command, "_has_terminal", lambda: True)
    return shown


def _run(*args: str) -> Result:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def test_no_store_is_a_one_line_error(tmp_path: Path, screens: list[ReviewSession]) -> None:
    folder = tmp_path / "empty"
    result = _run("review", "--project", str(folder))
    assert result.exit_code == 5  # EXIT_STORE
    assert result.stderr == (
        f"catmap: error: no project store in {folder} (run `catmap onboard FEED` first, or name "
        "the project folder with --project DIR or CATMAP_PROJECT=DIR)\n"
    )
    assert screens == []


def test_empty_queue_says_so_without_the_screen(
    project: Path, screens: list[ReviewSession]
) -> None:
    with Store.open(store_path(project)) as store:
        # The candidate brands' items wait for a verdict on the brand, not for a decision.
        for brand in (JOINED_BRAND, BRAND_ONLY):
            confirm_brand(store, brand, actor="setup")
        for item in store.items(state="open"):
            store.decide(item.id, "setup", "accept")
    result = _run("review", "--project", str(project), "--reviewer", "ana")
    assert result.exit_code == 0
    assert result.stdout == f"The review queue of {project} is empty: nothing to review.\n"
    assert screens == []


def test_opens_the_screen_on_a_claimed_item(project: Path, screens: list[ReviewSession]) -> None:
    result = _run("review", "--project", str(project), "--reviewer", "ana")
    assert result.exit_code == 0, result.output
    (session,) = screens
    assert session.reviewer == "ana"
    assert result.stdout == "Reviewed 0 items this session; 13 left in the queue.\n"
    with Store.open(store_path(project)) as store:
        claimed = store.items(state="claimed")
    assert [(i.product_id, i.claimed_by) for i in claimed] == [("BT-001", "ana")]


def test_resumes_on_the_claimed_item(project: Path, screens: list[ReviewSession]) -> None:
    with Store.open(store_path(project)) as store:
        store.accept_group("setup", SAMPLE_FEED, "Shoes > Boots")
        first = ReviewSession(store, "ana").next()
        assert first is not None and first.product.product_id == "WN-001"
        store.claim_next("bo")  # another reviewer takes the next item meanwhile
    _run("review", "--project", str(project), "--reviewer", "ana")
    assert screens[0].reviewer == "ana"
    with Store.open(store_path(project)) as store:
        mine = [i.product_id for i in store.items(state="claimed") if i.claimed_by == "ana"]
    assert mine == ["WN-001"]


def test_reviewer_defaults_to_the_login_name(
    project: Path, screens: list[ReviewSession], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(review_command.getpass, "getuser", lambda: "lena")
    result = _run("review", "--project", str(project))
    assert result.exit_code == 0
    assert screens[0].reviewer == "lena"


def test_project_from_the_environment(
    project: Path, screens: list[ReviewSession], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("CATMAP_PROJECT", str(project))
    result = _run("review", "--reviewer", "ana")
    assert result.exit_code == 0
    assert len(screens) == 1


def test_unknown_feed(project: Path, screens: list[ReviewSession]) -> None:
    result = _run("review", "--project", str(project), "--feed", "shop-zz", "--reviewer", "ana")
    assert result.exit_code == 5
    assert "no feed 'shop-zz' in the store" in result.stderr
    assert "run `catmap onboard FEED` first" in result.stderr
    assert screens == []


def test_feed_option_limits_the_queue(project: Path, screens: list[ReviewSession]) -> None:
    with Store.open(store_path(project)) as store:
        store.add_feed("shop-other")
    result = _run("review", "--project", str(project), "--feed", "shop-other")
    assert result.exit_code == 0
    assert result.stdout == "The review queue of feed shop-other is empty: nothing to review.\n"
    result = _run("review", "--project", str(project), "--feed", SAMPLE_FEED, "--reviewer", "ana")
    assert result.exit_code == 0
    assert screens[0].feed == SAMPLE_FEED


def test_help_text() -> None:
    result = _run("review", "--help")
    assert result.exit_code == 0
    for option in ("--project", "--feed", "--reviewer"):
        assert option in result.stdout


def test_without_a_terminal_it_says_so_and_exits(project: Path) -> None:
    # stdin and stdout are pipes here, as in a script or CI: no screen, no escape codes.
    done = subprocess.run(
        [sys.executable, "-c", "from catmap.cli import main; main()", "review",
         "--project", str(project), "--reviewer", "ana"],
        stdin=subprocess.DEVNULL,
        capture_output=True,
        text=True,
        timeout=120,
        env={**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1])},
    )
    assert done.returncode == 2
    assert done.stdout == ""
    (line,) = done.stderr.splitlines()
    assert "needs a terminal" in line and "\x1b" not in line
    with Store.open(store_path(project)) as store:  # the first item was given back
        taken = store.claim_next("bo")
        assert taken is not None and taken.product_id == "BT-001"
