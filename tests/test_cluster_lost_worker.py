"""A worker killed in the middle of a cluster run: the scheduler runs its tasks again, and the
output is the same as one process's, with no row lost and none doubled.

The workers are processes here (a thread cannot be killed). A worker plugin (dask's
``WorkerPlugin.transition`` hook, documented in distributed's plugin guide) ends its own worker
process the first time a chosen task finishes, before the scheduler hears of the result: the
kill is tied to that task, not to a clock, so the test fails or passes the same way every time.
The nanny starts a new worker; the scheduler runs the lost task again (and any result the dead
worker held), and the task writes its part again under the same name.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from catmap.classify.mapping import map_feed
from catmap.feeds.profiled import open_profiled_feed
from catmap.jobs.cluster import map_feed_on_cluster, open_cluster
from catmap.jobs.map import project_mapper
from catmap.jobs.onboard import OnboardOptions, onboard_feed
from catmap.tree.taxonomy import load_default_tree
from tests.test_jobs_onboard_cluster import CHUNK, store_contents
from tests.test_onboard import TEST_MAX_ERROR, SmallWorld, new_project, small_world

distributed = pytest.importorskip("distributed")

DEMO = Path(__file__).resolve().parents[1] / "feeds_demo"


class KillOnce(distributed.WorkerPlugin):
    """End this worker's process when a task whose key matches ``pattern`` first finishes.

    ``marker`` is a file every worker sees: the first worker to finish such a task creates it
    and dies; the task's next run (on any worker) finds it and lives.
    """

    def __init__(self, pattern: str, marker: str) -> None:
        self.pattern = pattern
        self.marker = marker

    def transition(self, key: Any, start: str, finish: str, **kwargs: Any) -> None:
        if finish != "memory" or not re.fullmatch(self.pattern, str(key)):
            return
        try:
            with open(self.marker, "x", encoding="utf-8") as handle:
                handle.write(f"{os.getpid()} {key}\n")
        except FileExistsError:
            return
        os._exit(1)  # as a machine lost: no clean-up, no goodbye to the scheduler


@pytest.fixture(scope="module")
def client() -> Iterator[Any]:
    with open_cluster("local:2") as started:
        yield started


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory) -> SmallWorld:
    return small_world(tmp_path_factory)


def _kill_once(client: Any, stage: str, task: int, marker: Path) -> None:
    client.register_plugin(
        KillOnce(rf"catmap-{stage}-[0-9a-f]+-{task}", str(marker)), name=f"kill-{marker.name}"
    )


def _pids(client: Any) -> set[int]:
    return set(client.run(os.getpid).values())


def test_onboard_survives_a_killed_worker(
    world: SmallWorld, tmp_path: Path, client: Any
) -> None:
    # The small world's tree goes to the workers with the mapper: no CATMAP_TAXONOMIES here,
    # or a worker started again during the run would keep it for the map test.
    opts = OnboardOptions(
        max_error=TEST_MAX_ERROR, chunk_size=CHUNK, validation_feed=[world.paths.reference]
    )
    feed = world.paths.feeds["quorvane"]  # XML: blocks of records
    single = new_project(world, tmp_path / "single")
    alone = onboard_feed(feed, project=single, tree=world.tree, options=opts)

    before = _pids(client)
    # One worker dies after reading a block, another after mapping a chunk.
    _kill_once(client, "reading", 0, tmp_path / "read.killed")
    _kill_once(client, "mapping", 1, tmp_path / "map.killed")
    spread = new_project(world, tmp_path / "cluster")
    together = onboard_feed(feed, project=spread, tree=world.tree, options=opts, client=client)
    assert (tmp_path / "read.killed").exists() and (tmp_path / "map.killed").exists()
    assert len(_pids(client) - before) >= 1  # new worker processes took the dead ones' place

    assert store_contents(single) == store_contents(spread)
    assert together.mapped == alone.mapped == alone.accounting["kept"]
    assert together.accounting == alone.accounting
    assert Path(alone.rejects_file).read_bytes() == Path(together.rejects_file).read_bytes()


def test_map_survives_a_killed_worker(tmp_path: Path, client: Any) -> None:
    feed = tmp_path / "tallimbra.tsv"  # the first 2,000 products keep the test short
    feed.write_bytes(b"".join((DEMO / "tallimbra.tsv").read_bytes().splitlines(True)[:2001]))
    project = tmp_path / "project"
    mapper = project_mapper(project, load_default_tree("1"))[0]
    single, spread = tmp_path / "single", tmp_path / "cluster"
    map_feed(open_profiled_feed(feed, project), single, mapper=mapper, workers=1)
    _kill_once(client, "pass1", 2, tmp_path / "pass1.killed")
    facts, error = map_feed_on_cluster(
        feed, spread, client=client, project=project, partition_bytes=20_000, chunk_size=300
    )
    assert error is None and (tmp_path / "pass1.killed").exists()
    for name in ("mappings.jsonl", "rejects.jsonl"):
        assert (single / name).read_bytes() == (spread / name).read_bytes()
    lines = (spread / "mappings.jsonl").read_bytes().splitlines()
    assert len(lines) == len(set(lines)) == facts["accounting"]["kept"]
