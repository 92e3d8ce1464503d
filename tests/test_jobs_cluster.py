"""Mapping on a 2-worker dask LocalCluster gives the same files and facts as one process.

The workers are threads of the test process (``processes=False``): the run goes through the
same scheduler, tasks and work folder as on separate machines, and starts in about a second.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pyarrow.parquet as pq
import pytest

from catmap.classify.mapping import map_feed
from catmap.classify.rules import load_rules
from catmap.feeds.profiled import open_profiled_feed
from catmap.jobs.cluster import ClusterError, ClusterProgress, map_feed_on_cluster, open_cluster
from catmap.jobs.map import project_mapper
from catmap.tree.taxonomy import load_default_tree

pytest.importorskip("distributed")

DEMO = Path(__file__).resolve().parents[1] / "feeds_demo"


@pytest.fixture(scope="module")
def client() -> Iterator[Any]:
    with open_cluster("local:2", processes=False) as started:
        yield started


@pytest.fixture(scope="module")
def mapper() -> Any:
    # The project has no model: the tree's keywords map (the worker loads the same).
    return project_mapper(Path("unused"), load_default_tree("1"))[0]


def _files(folder: Path) -> dict[str, bytes]:
    return {
        path.name: path.read_bytes().replace(str(folder).encode(), b"OUT")
        for path in sorted(folder.iterdir())
        if path.suffix != ".parquet"
    }


def _run_both(
    feed: Path, tmp_path: Path, client: Any, mapper: Any, *, format: str = "jsonl",
    rules_file: Path | None = None,
) -> tuple[Path, Path, dict[str, Any], dict[str, Any], list[ClusterProgress]]:
    project = tmp_path / "project"
    single, spread = tmp_path / "single", tmp_path / "cluster"
    rules = load_rules(rules_file, tree=mapper.tree) if rules_file else None
    fatal_single = None
    try:
        summary = map_feed(
            open_profiled_feed(feed, project), single, mapper=mapper, rules=rules, format=format,
            workers=1,
        ).to_dict()
    except Exception as error:  # a fatal feed error: the outputs are written before it
        fatal_single = str(error)
        summary = {}
    seen: list[ClusterProgress] = []
    facts, error = map_feed_on_cluster(
        feed, spread, client=client, project=project, format=format, rules_file=rules_file,
        partition_bytes=40_000, block_records=900, chunk_size=700, on_progress=seen.append,
    )
    assert (str(error) if error else None) == fatal_single
    return single, spread, summary, facts, seen


@pytest.mark.parametrize("name", ["ferravelle.csv", "tallimbra.tsv", "quorvane.xml"])
def test_demo_feeds_map_bit_for_bit(name: str, tmp_path: Path, client: Any, mapper: Any) -> None:
    single, spread, summary, facts, seen = _run_both(DEMO / name, tmp_path, client, mapper)
    assert _files(single) == _files(spread)  # mappings, rejects and accounting, byte for byte
    expected = {key: value for key, value in summary.items() if key != "outputs"}
    assert {key: facts[key] for key in expected} == expected
    accounting = json.loads((spread / "accounting.json").read_text(encoding="utf-8"))
    assert accounting["by_reason"].get("duplicate_id", 0) > 0  # found across partitions
    assert facts["cluster"]["partitions"]["count"] > 1
    assert [p.stage for p in seen][-1] == "writing"
    assert seen[-1].rows == accounting["read"] and seen[-1].dashboard
    assert not [p for p in spread.iterdir() if p.name.startswith(".")]  # work folder removed


def test_rules_csv_and_parquet_outputs(tmp_path: Path, client: Any, mapper: Any) -> None:
    rules = tmp_path / "shop.rules"
    rules.write_text('path contains "Auto" => 9533\ntitle contains "bio" => 9531\n',
                     encoding="utf-8")
    feed = tmp_path / "short.csv"  # the first 1,200 products keep the test short
    feed.write_bytes(b"".join((DEMO / "ferravelle.csv").read_bytes().splitlines(True)[:1201]))
    for format in ("csv", "parquet"):
        where = tmp_path / format
        single, spread, summary, facts, _ = _run_both(
            feed, where, client, mapper, format=format, rules_file=rules
        )
        assert _files(single) == _files(spread)
        assert facts["rules"] == summary["rules"] and summary["rules"]["products_matched"] > 0
        if format == "parquet":
            assert pq.read_table(spread / "mappings.parquet").equals(
                pq.read_table(single / "mappings.parquet")
            )


def test_a_fatal_error_stops_both_runs_at_the_same_record(
    tmp_path: Path, client: Any, mapper: Any, oversized_cell: bytes
) -> None:
    lines = (DEMO / "tallimbra.tsv").read_bytes().splitlines(keepends=True)
    feed = tmp_path / "cut.tsv"
    feed.write_bytes(b"".join(lines[:1500]) + b"X1\t" + oversized_cell + b"\n")
    single, spread, _, _, _ = _run_both(feed, tmp_path, client, mapper)
    mine, theirs = _files(single), _files(spread)
    # Mappings, rejects and accounting byte for byte: both map the products read before the
    # error, the last partial chunk included.
    assert mine == theirs
    accounting = json.loads(theirs["accounting.json"])
    assert accounting["stopped_early"]
    assert accounting["read"] == accounting["kept"] + accounting["rejected"]
    # Every product read before the error is mapped (the documented behaviour of map_feed).
    assert theirs["mappings.jsonl"].count(b"\n") == accounting["kept"]


def test_bad_addresses_are_user_errors() -> None:
    for address in ("local:0", "local:two", "somewhere:8786"):
        with pytest.raises(ClusterError):
            with open_cluster(address):
                pass
