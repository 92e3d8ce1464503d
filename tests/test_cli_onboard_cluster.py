"""catmap onboard --cluster: one feed or several at once leave the store one process leaves.

The cluster is a 2-worker dask LocalCluster whose workers are threads of the test process
(``open_cluster`` with ``processes=False``: the same scheduler, tasks and work folder, started
in about a second); ``tests/test_cluster_lost_worker.py`` runs onboarding on worker processes.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

import catmap.cli._render as render
import catmap.jobs._onboard_cluster as onboard_cluster
from catmap.cli import main
from catmap.jobs.cluster import open_cluster
from tests.test_cli_onboard import onboard
from tests.test_jobs_onboard_cluster import _exported, store_contents
from tests.test_onboard import SmallWorld, new_project

pytest.importorskip("distributed")


pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


@pytest.fixture()
def threads_cluster(monkeypatch: pytest.MonkeyPatch) -> list[str]:
    asked: list[str] = []

    @contextmanager
    def local(address: str) -> Iterator[Any]:
        asked.append(address)
        with open_cluster(address, processes=False) as client:
            yield client

    monkeypatch.setattr(onboard_cluster, "open_cluster", local)
    return asked


def test_onboard_several_feeds_on_a_cluster_as_one_by_one(
    world: SmallWorld, tmp_path: Path, threads_cluster: list[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.setattr(render, "PIPED_PROGRESS_SECONDS", 0.0)  # every progress line
    names = ["ferravelle", "quorvane", "tallimbra"]
    single = new_project(world, tmp_path / "single")
    for name in names:
        assert onboard(world, single, name).exit_code == 0
    spread = new_project(world, tmp_path / "cluster")
    result = CliRunner().invoke(
        main,
        ["onboard", *(str(world.paths.feeds[n]) for n in names), "--cluster", "local:2",
         "--project", str(spread), "--max-error", "0.1", "--validation",
         str(world.paths.reference), "--json"],
        catch_exceptions=False,
    )
    assert result.exit_code == 0, result.output
    assert threads_cluster == ["local:2"]  # one cluster for the three feeds
    facts = json.loads(result.stdout)
    assert [f["feed"] for f in facts["feeds"]] == names
    assert all(f["cluster"]["dashboard"] for f in facts["feeds"])
    assert store_contents(single) == store_contents(spread)
    assert _exported(single, tmp_path / "out1") == _exported(spread, tmp_path / "out2")
    # A progress line per feed: its round, tasks done of total, records per second.
    for name in names:
        assert f"{name}: reading 1/1 partitions, " in result.stderr
        assert f"{name}: mapping 1/1 chunks, " in result.stderr
    assert "records, " in result.stderr and "/s" in result.stderr


def test_one_feed_on_a_cluster_prints_the_summary(
    world: SmallWorld, tmp_path: Path, threads_cluster: list[str]
) -> None:
    project = new_project(world, tmp_path / "p")
    result = onboard(world, project, "ferravelle", "--cluster", "local:2")
    assert result.exit_code == 0, result.output
    text = " ".join(result.stdout.split())
    assert text.startswith("ferravelle (") and "auto-accepted" in text
    assert "cluster: 1 partitions (byte ranges), 1 chunks mapped on the workers" in text


def test_two_feeds_of_one_name_or_a_bad_address_are_user_errors(
    world: SmallWorld, tmp_path: Path
) -> None:
    project = new_project(world, tmp_path / "p")
    feed = world.paths.feeds["ferravelle"]
    twin = tmp_path / "other" / "ferravelle.csv"
    twin.parent.mkdir()
    twin.write_bytes(feed.read_bytes())
    result = onboard(world, project, "ferravelle", str(twin))
    assert result.exit_code != 0 and "two feeds are named 'ferravelle'" in result.stderr
    result = onboard(world, project, "ferravelle", "--cluster", "somewhere:8786")
    assert result.exit_code == 1 and "--cluster" in result.stderr
    assert "Traceback" not in result.output


def test_onboard_help_names_the_cluster() -> None:
    result = CliRunner().invoke(main, ["onboard", "--help"])
    assert "--cluster" in result.stdout and "local:N" in result.stdout
