"""Onboarding on a 2-worker dask LocalCluster leaves the same store as one process.

The workers are threads of the test process (``processes=False``): the run goes through the
same scheduler, tasks and work folder as on separate machines, and starts in about a second.
The small world of ``tests/test_onboard.py`` (a tiny tree, its demo feeds and model) is reused;
small partitions and chunks make every feed cross several of each.
"""

from __future__ import annotations

import json
import sqlite3
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest

from catmap.errors import InputError
from catmap.jobs._onboard_cluster import chunk_slices, onboard_rounds
from catmap.jobs.cluster import ClusterProgress, open_cluster
from catmap.jobs.export import export_project
from catmap.jobs.onboard import (
    OnboardOptions,
    onboard_feed,
    onboard_feeds,
    prepare_onboarding,
    store_onboarding,
)
from catmap.store import store_path
from tests.test_onboard import TEST_MAX_ERROR, SmallWorld, new_project

pytest.importorskip("distributed")

# Products per chunk: the small world's feeds hold about a hundred.
CHUNK = 23


pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


@pytest.fixture(scope="module")
def client() -> Iterator[Any]:
    with open_cluster("local:2", processes=False) as started:
        yield started


def options() -> OnboardOptions:
    return OnboardOptions(max_error=TEST_MAX_ERROR, chunk_size=CHUNK)


def store_contents(project: Path) -> dict[str, list[tuple[Any, ...]]]:
    """Every table of the project's store in row order, without clock times, run seconds and
    the project's own path."""
    connection = sqlite3.connect(store_path(project))
    try:
        tables = [
            name for (name,) in connection.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name"
            )
        ]  # fmt: skip
        contents = {}
        for table in tables:
            try:
                cursor = connection.execute(f"SELECT * FROM {table} ORDER BY rowid")
            except sqlite3.OperationalError:  # a table without rowid: in key order
                cursor = connection.execute(f"SELECT * FROM {table}")
            names = [column[0] for column in cursor.description]
            rows = []
            for row in cursor:
                kept = []
                for name, value in zip(names, row, strict=True):
                    if name == "at" or name.endswith("_at"):
                        continue
                    if table == "runs" and name == "summary":
                        facts = json.loads(value)
                        facts.pop("seconds", None)
                        facts.pop("cluster", None)
                        value = json.dumps(facts)
                    if isinstance(value, str):  # the two projects' own paths
                        value = value.replace(str(project), "PROJECT")
                    kept.append(value)
                rows.append(tuple(kept))
            contents[table] = rows
        return contents
    finally:
        connection.close()


def _exported(project: Path, out: Path) -> dict[str, Any]:
    """``catmap export``'s files: products and rejects byte for byte, the accounting's facts
    without its clock times."""
    export_project(project, out, format="jsonl")
    files: dict[str, Any] = {}
    for path in sorted(out.iterdir()):
        data = path.read_bytes().replace(str(out).encode(), b"OUT")
        data = data.replace(str(project).encode(), b"PROJECT")
        if path.suffix == ".json":
            facts = json.loads(data)
            files[path.name] = {k: v for k, v in facts.items() if not k.endswith("_at")}
        else:
            files[path.name] = data
    return files


def _project(world: SmallWorld, folder: Path) -> Path:
    project = new_project(world, folder)
    return project


def test_chunks_cut_across_partitions() -> None:
    assert chunk_slices([3, 0, 4], 5) == [[(0, 0, 3), (2, 0, 2)], [(2, 2, 4)]]
    assert chunk_slices([0, 0], 5) == []
    assert chunk_slices([5], 5) == [[(0, 0, 5)]]


@pytest.mark.parametrize("feed", ["ferravelle", "quorvane"])
def test_onboard_on_the_cluster_stores_bit_for_bit(
    feed: str, world: SmallWorld, tmp_path: Path, client: Any
) -> None:
    validation = [world.paths.reference]
    single = _project(world, tmp_path / "single")
    spread = _project(world, tmp_path / "cluster")
    opts = OnboardOptions(max_error=TEST_MAX_ERROR, chunk_size=CHUNK, validation_feed=validation)
    alone = onboard_feed(world.paths.feeds[feed], project=single, tree=world.tree, options=opts)

    prepared = prepare_onboarding(
        world.paths.feeds[feed], project=spread, tree=world.tree, options=opts
    )
    seen: list[ClusterProgress] = []
    # Small partitions: the CSV cut in byte ranges, the XML in blocks of 17 records.
    with onboard_rounds(
        client, prepared, on_progress=seen.append, partition_bytes=3000, block_records=17
    ) as rounds:
        assert rounds.partitions["partitions"] > 2 and rounds.partitions["chunks"] > 2
        together = store_onboarding(prepared, rounds, started=time.perf_counter())
    assert store_contents(single) == store_contents(spread)
    assert _exported(single, tmp_path / "out1") == _exported(spread, tmp_path / "out2")
    assert Path(alone.rejects_file).read_bytes() == Path(together.rejects_file).read_bytes()
    facts, theirs = alone.to_dict(), together.to_dict()
    for key in ("seconds", "store", "rejects_file", "cluster"):
        facts.pop(key, None)
        theirs.pop(key, None)
    assert facts == theirs  # accounting, accepted, queued, audit, brands, feed check...
    assert alone.accounting["by_reason"].get("duplicate_id", 0) > 0
    assert together.cluster is not None and together.cluster["dashboard"]
    stages = [p.stage for p in seen]
    assert stages[0] == "loading" and stages[-1] == "mapping"
    assert {"keys", "duplicates", "reading"} <= set(stages)
    reading = [p for p in seen if p.stage == "reading"][-1]
    assert reading.done == reading.total and reading.rows == alone.accounting["read"]
    assert not list(spread.glob(".cluster-*"))  # the work folder is removed


def test_a_fatal_error_keeps_the_same_rows(
    world: SmallWorld, tmp_path: Path, client: Any, oversized_cell: bytes
) -> None:
    lines = world.paths.feeds["tallimbra"].read_bytes().splitlines(keepends=True)
    feed = tmp_path / "feeds" / "tallimbra.tsv"
    feed.parent.mkdir()
    feed.write_bytes(b"".join(lines[:80]) + b"X1\t" + oversized_cell + b"\n")
    opts = OnboardOptions(
        max_error=TEST_MAX_ERROR, chunk_size=CHUNK, validation_feed=[world.paths.reference]
    )
    errors = []
    for name, use in (("single", None), ("cluster", client)):
        project = _project(world, tmp_path / name)
        with pytest.raises(InputError) as raised:
            onboard_feed(feed, project=project, tree=world.tree, options=opts, client=use)
        errors.append(str(raised.value))
    assert errors[0] == errors[1]
    assert store_contents(tmp_path / "single") == store_contents(tmp_path / "cluster")


def test_several_feeds_on_one_cluster_as_one_by_one(
    world: SmallWorld, tmp_path: Path, client: Any, monkeypatch: pytest.MonkeyPatch
) -> None:
    from contextlib import contextmanager

    import catmap.jobs._onboard_cluster as onboard_cluster

    @contextmanager
    def the_test_cluster(address: str) -> Iterator[Any]:
        assert address == "local:2"
        yield client

    monkeypatch.setattr(onboard_cluster, "open_cluster", the_test_cluster)
    feeds = [world.paths.feeds[name] for name in ("tallimbra", "ferravelle", "quorvane")]
    opts = OnboardOptions(
        max_error=TEST_MAX_ERROR, chunk_size=CHUNK, validation_feed=[world.paths.reference]
    )
    single = _project(world, tmp_path / "single")
    for feed in feeds:
        onboard_feed(feed, project=single, tree=world.tree, options=opts)
    spread = _project(world, tmp_path / "cluster")
    seen: dict[str, list[ClusterProgress]] = {}
    outcomes = onboard_feeds(
        feeds, project=spread, tree=world.tree, options=opts, cluster="local:2",
        on_cluster_progress=lambda name, where: seen.setdefault(name, []).append(where),
    )  # fmt: skip
    assert [o.feed for o in outcomes] == feeds and all(o.error is None for o in outcomes)
    assert store_contents(single) == store_contents(spread)
    assert sorted(seen) == ["ferravelle", "quorvane", "tallimbra"]
    for where in seen.values():
        assert where[-1].stage == "mapping" and where[-1].done == where[-1].total
    assert not list(spread.glob(".cluster-*"))


def test_a_broken_feed_among_several_keeps_its_rows_and_the_others_go_on(
    world: SmallWorld,
    tmp_path: Path,
    client: Any,
    monkeypatch: pytest.MonkeyPatch,
    oversized_cell: bytes,
) -> None:
    import catmap.jobs._onboard_cluster as onboard_cluster

    @contextmanager
    def the_test_cluster(address: str) -> Iterator[Any]:
        yield client

    monkeypatch.setattr(onboard_cluster, "open_cluster", the_test_cluster)
    lines = world.paths.feeds["tallimbra"].read_bytes().splitlines(keepends=True)
    broken = tmp_path / "feeds" / "tallimbra.tsv"
    broken.parent.mkdir()
    broken.write_bytes(b"".join(lines[:60]) + b"X1\t" + oversized_cell + b"\n")
    feeds = [broken, world.paths.feeds["ferravelle"]]
    opts = OnboardOptions(
        max_error=TEST_MAX_ERROR, chunk_size=CHUNK, validation_feed=[world.paths.reference]
    )
    single = _project(world, tmp_path / "single")
    with pytest.raises(InputError) as raised:
        onboard_feed(broken, project=single, tree=world.tree, options=opts)
    onboard_feed(feeds[1], project=single, tree=world.tree, options=opts)
    for cluster in (None, "local:2"):  # one after another here, and at once on the cluster
        project = _project(world, tmp_path / f"several-{cluster}")
        outcomes = onboard_feeds(
            feeds, project=project, tree=world.tree, options=opts, cluster=cluster
        )
        # The broken feed keeps the summary of what was saved before its error.
        stopped = outcomes[0].summary
        assert str(outcomes[0].error) == str(raised.value) and stopped is not None
        assert stopped.stopped_early == str(raised.value)
        assert stopped.accounting["kept"] == stopped.mapped > 0
        assert outcomes[1].error is None and outcomes[1].summary is not None
        assert store_contents(single) == store_contents(project)
