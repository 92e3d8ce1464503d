"""catmap map --cluster: a malformed address is one clear line, not a traceback."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.cli import main

pytest.importorskip("distributed")

FEED = Path(__file__).resolve().parents[1] / "feeds_demo" / "tallimbra.tsv"


@pytest.fixture
def thread_workers(monkeypatch: pytest.MonkeyPatch) -> None:
    """A local cluster whose workers are threads of this process."""
    from collections.abc import Iterator
    from contextlib import contextmanager
    from typing import Any

    import catmap.jobs.cluster as cluster

    real = cluster.open_cluster

    @contextmanager
    def threads(address: str) -> Iterator[Any]:
        with real(address, processes=False) as client:
            yield client

    monkeypatch.setattr(cluster, "open_cluster", threads)


def _own_example() -> tuple[Path, Path, set[str]]:
    """The garden-and-crafts example's tree file, a feed of that shop and the tree's ids."""
    example = Path(__file__).resolve().parents[1] / "examples" / "own-project"
    tree = example / "tree.txt"
    own_ids = {line.split("|")[0].strip() for line in tree.read_text("utf-8").splitlines()
               if "|" in line}
    return tree, example / "new-shop_2026-11-30.csv", own_ids


@pytest.mark.parametrize("address", ["local:0", "somewhere:8786"])
def test_a_bad_cluster_address_is_a_user_error(address: str, tmp_path: Path) -> None:
    result = CliRunner().invoke(
        main,
        ["map", str(FEED), "--out", str(tmp_path / "out"), "--project", str(tmp_path / "p"),
         "--cluster", address],
    )
    assert result.exit_code == 1
    assert "--cluster" in result.output and "Traceback" not in result.output


def test_several_feeds_map_at_once_as_each_alone(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from collections.abc import Iterator
    from contextlib import contextmanager
    from typing import Any

    import catmap.cli._render as render
    import catmap.jobs.cluster as cluster

    real = cluster.open_cluster
    asked: list[str] = []

    @contextmanager
    def threads(address: str) -> Iterator[Any]:  # the workers are threads of this process
        asked.append(address)
        with real(address, processes=False) as client:
            yield client

    monkeypatch.setattr(cluster, "open_cluster", threads)
    monkeypatch.setattr(render, "PIPED_PROGRESS_SECONDS", 0.0)
    demo = FEED.parent
    feeds = []
    for name in ("ferravelle.csv", "tallimbra.tsv"):  # their first 1,000 lines: a short test
        feed = tmp_path / "feeds" / name
        feed.parent.mkdir(exist_ok=True)
        feed.write_bytes(b"".join((demo / name).read_bytes().splitlines(True)[:1000]))
        feeds.append(str(feed))
    project = ["--project", str(tmp_path / "p")]
    alone = CliRunner().invoke(
        main, ["map", *feeds, "--out", str(tmp_path / "alone"), "--workers", "1", *project]
    )
    assert alone.exit_code == 0, alone.output
    result = CliRunner().invoke(
        main, ["map", *feeds, "--out", str(tmp_path / "spread"), "--cluster", "local:2",
               "--json", *project],
    )
    assert result.exit_code == 0, result.output
    assert asked == ["local:2"]  # one cluster for both feeds
    facts = json.loads(result.stdout)["feeds"]
    assert [Path(f["feed"]).name for f in facts] == [Path(f).name for f in feeds]
    for stem in ("ferravelle", "tallimbra"):
        for name in ("mappings.jsonl", "rejects.jsonl", "accounting.json"):
            mine = (tmp_path / "alone" / stem / name).read_bytes()
            theirs = (tmp_path / "spread" / stem / name).read_bytes()
            alone_dir, spread_dir = (str(tmp_path / d).encode() for d in ("alone", "spread"))
            assert mine.replace(alone_dir, b"OUT") == theirs.replace(spread_dir, b"OUT"), name
        assert f"{stem}: pass 2 " in result.stderr  # a progress line per feed


def test_a_tree_file_maps_on_a_cluster_as_in_one_process(
    tmp_path: Path, thread_workers: None
) -> None:
    # A tree file of one's own (the garden-and-crafts example) and a feed of that shop.
    tree, feed, own_ids = _own_example()
    common = ["--project", str(tmp_path / "p"), "--tree-file", str(tree)]
    alone = CliRunner().invoke(
        main, ["map", str(feed), "--out", str(tmp_path / "alone"), "--workers", "1", *common]
    )
    assert alone.exit_code == 0, alone.output
    spread = CliRunner().invoke(
        main, ["map", str(feed), "--out", str(tmp_path / "spread"), "--cluster", "local:2",
               "--json", *common],
    )
    assert spread.exit_code == 0, spread.output
    for name in ("mappings.jsonl", "rejects.jsonl"):
        mine = (tmp_path / "alone" / name).read_bytes()
        theirs = (tmp_path / "spread" / name).read_bytes()
        assert mine == theirs, name
    mapped = [json.loads(line) for line in (tmp_path / "spread" / "mappings.jsonl").open()]
    # every product sits in the file's tree, whose ids the shared tree does not use
    assert mapped and {m["node_id"] for m in mapped} <= own_ids


def test_a_project_of_ones_own_maps_on_a_cluster_with_its_own_tree(
    tmp_path: Path, thread_workers: None
) -> None:
    tree, feed, own_ids = _own_example()
    project = tmp_path / "p"
    assert CliRunner().invoke(main, ["init", str(project), "--tree", str(tree)]).exit_code == 0
    # No --tree-file: the project's own tree, on the workers as in one process.
    common = ["--project", str(project)]
    alone = CliRunner().invoke(
        main, ["map", str(feed), "--out", str(tmp_path / "alone"), "--workers", "1", *common]
    )
    assert alone.exit_code == 0, alone.output
    spread = CliRunner().invoke(
        main, ["map", str(feed), "--out", str(tmp_path / "spread"), "--cluster", "local:2",
               *common],
    )
    assert spread.exit_code == 0, spread.output
    mapped = [json.loads(line) for line in (tmp_path / "spread" / "mappings.jsonl").open()]
    assert mapped and {m["node_id"] for m in mapped} <= own_ids
    mine = (tmp_path / "alone" / "mappings.jsonl").read_bytes()
    assert (tmp_path / "spread" / "mappings.jsonl").read_bytes() == mine
