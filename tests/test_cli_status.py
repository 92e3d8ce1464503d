"""Tests for `catmap status`: per-feed counts and the audited error with its exact interval."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner
from scipy.stats import binomtest
from test_cli_onboard import onboard
from test_onboard import SmallWorld, new_project

from catmap.cli import main
from catmap.errors import EXIT_STORE
from catmap.store import Store, store_path

pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


def _status(project: Path, *more: str) -> Any:
    return CliRunner().invoke(
        main, ["status", "--project", str(project), *more], catch_exceptions=False
    )


def test_status_before_and_after_reviewing_audit_samples(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    assert onboard(world, project, "ferravelle").exit_code == 0
    assert onboard(world, project, "quorvane").exit_code == 0

    result = _status(project, "--json")
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    feeds = {f["feed"]: f for f in facts["feeds"]}
    assert set(feeds) == {"ferravelle", "quorvane"}
    for feed in feeds.values():
        assert feed["read"] == feed["kept"] + feed["rejected"]
        assert feed["products"] == feed["kept"]
        assert feed["accepted"] + feed["queued"] == feed["products"]
        assert feed["audit_error"] is None
        assert feed["done_items"] == 0
        assert feed["tree_version"] == str(world.tree.version)
        # Open items are more than queued products: they also check accepted ones.
        assert sum(feed["open_by_reason"].values()) == feed["open_items"]
        assert feed["open_by_reason"].get("audit_sample", 0) > 0
    text = " ".join(_status(project).stdout.split())
    assert (
        "queued / reviewed count products by mapping state; open / done count review items, "
        "which also check accepted products (brand conflict, audit sample, audience)." in text
    )
    assert "ferravelle: open items by leading reason: " in text

    # Review every audit sample of ferravelle: one is judged wrong, the rest right.
    with Store.open(store_path(project)) as store:
        audits = [i for i in store.items(feed="ferravelle") if i.reason == "audit_sample"]
        assert len(audits) >= 5
        first = audits[0]
        node = store.mapping("ferravelle", first.product_id).mapping.node_id
        other = next(leaf.id for leaf in world.tree.leaves() if leaf.id != node)
        store.decide(first.id, "auditor", "choose", node_id=other)
        for item in audits[1:]:
            store.decide(item.id, "auditor", "accept")

    result = _status(project, "--feed", "ferravelle", "--json")
    feed = json.loads(result.stdout)["feeds"][0]
    n = len(audits)
    assert (feed["audit_checked"], feed["audit_wrong"]) == (n, 1)
    assert feed["reviewed"] == n
    assert feed["done_items"] == n
    error = feed["audit_error"]
    assert error["rate"] == pytest.approx(1 / n)
    # reference: scipy.stats.binomtest(...).proportion_ci(method="exact") is Clopper-Pearson.
    interval = binomtest(1, n).proportion_ci(confidence_level=0.95, method="exact")
    assert error["low"] == pytest.approx(interval.low, rel=1e-6)
    assert error["high"] == pytest.approx(interval.high, rel=1e-6)

    text = " ".join(_status(project).stdout.split())
    assert f"ferravelle: audited error of the auto-accepted part: 1 wrong of {n} audited" in text
    assert "quorvane: no audit sample reviewed yet" in text


def test_status_without_a_store_is_a_store_error(tmp_path: Path) -> None:
    result = _status(tmp_path / "nothing")
    assert result.exit_code == EXIT_STORE
    assert "no project store here" in result.stderr
    assert "catmap onboard FEED" in result.stderr
    # Run from the wrong folder: the message says how to point at the project.
    assert "--project DIR" in result.stderr and "CATMAP_PROJECT=DIR" in result.stderr


STATUS_HEADERS = "feed tree read kept rejected accepted queued reviewed open done".split()


def _status_lines(project: Path, columns: int) -> list[str]:
    """The table lines of `catmap status` printed for a terminal this many columns wide."""
    run = subprocess.run(
        [sys.executable, "-m", "catmap", "status", "--project", str(project)],
        env={**os.environ, "COLUMNS": str(columns)},
        capture_output=True,
        text=True,
        check=True,
    )
    lines = run.stdout.splitlines()
    start = next(i for i, line in enumerate(lines) if line.split()[:2] == ["feed", "tree"])
    return lines[start : start + 4]  # header, rule, the two feeds


def test_status_table_keeps_every_header_whole_in_a_narrow_terminal(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    assert onboard(world, project, "ferravelle").exit_code == 0
    assert onboard(world, project, "quorvane").exit_code == 0
    roomy = _status_lines(project, 200)
    assert roomy[0].split() == STATUS_HEADERS
    width = max(len(line.rstrip()) for line in roomy)
    # One column short of the roomy table: the spacing gives way, not the words.
    narrow = _status_lines(project, width - 1)
    assert narrow[0].split() == STATUS_HEADERS
    assert all(len(line) <= width - 1 and "…" not in line for line in narrow)
    assert [line.split() for line in narrow[2:]] == [line.split() for line in roomy[2:]]
