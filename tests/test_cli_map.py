"""catmap map on a tiny feed: with a trained model, with rules, and cold start."""

from __future__ import annotations

import csv
import json
import os
import subprocess
import sys
from pathlib import Path

import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner

from catmap.cli import main
from tests._classify_fixtures import write_labelled_feed, write_tree


@pytest.fixture()
def setup(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> tuple[Path, Path]:
    write_tree(tmp_path / "taxonomies")
    write_tree(tmp_path / "taxonomies", version=2)
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(tmp_path / "taxonomies"))
    return write_labelled_feed(tmp_path / "shop.csv"), tmp_path / "project"


def read_jsonl(path: Path) -> list[dict[str, object]]:
    return [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]


def test_map_with_a_trained_model(setup: tuple[Path, Path], tmp_path: Path) -> None:
    feed, project = setup
    runner = CliRunner()
    assert runner.invoke(main, ["train", str(feed), "--project", str(project)]).exit_code == 0
    out = tmp_path / "out"
    result = runner.invoke(
        main,
        [
            "map",
            str(feed),
            "--out",
            str(out),
            "--project",
            str(project),
            "--json",
            "--workers",
            "1",
        ],
    )
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["products"] == 240
    assert facts["accounting"]["read"] == 240
    rows = read_jsonl(out / "mappings.jsonl")
    assert len(rows) == 240
    labels = {r["product_id"]: r["gold_node"] for r in csv.DictReader(feed.open(encoding="utf-8"))}
    right = sum(r["node_id"] == labels[r["product_id"]] for r in rows if r["method"] == "model")
    assert right >= 0.9 * sum(r["method"] == "model" for r in rows)
    assert set(rows[0]) >= {"product_id", "node_path", "confidence", "alt1_node", "reason"}
    assert (out / "accounting.json").exists()
    paths = {p["path"]: p for p in facts["retailer_paths"]}
    assert paths["Maison > Café"]["count"] == 80


def test_map_spills_pass_one_to_disk_with_the_same_result(
    setup: tuple[Path, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import catmap.classify.mapping as mapping

    feed, project = setup
    runner = CliRunner()
    assert runner.invoke(main, ["train", str(feed), "--project", str(project)]).exit_code == 0
    outputs = []
    for budget in (mapping.IN_MEMORY_PRODUCTS, 0):
        monkeypatch.setattr(mapping, "IN_MEMORY_PRODUCTS", budget)
        monkeypatch.setattr(mapping, "CHUNK_SIZE", 50)
        monkeypatch.setattr(
            mapping.map_feed,
            "__kwdefaults__",
            {**mapping.map_feed.__kwdefaults__, "chunk_size": 50},
        )
        out = tmp_path / f"out-{budget}"
        args = ["map", str(feed), "--out", str(out), "--project", str(project), "--workers", "1"]
        assert runner.invoke(main, args).exit_code == 0
        outputs.append((out / "mappings.jsonl").read_text(encoding="utf-8"))
    assert len(outputs[1].splitlines()) == 240
    assert outputs[0] == outputs[1]


def test_map_applies_rules_and_reports_conflicts(setup: tuple[Path, Path], tmp_path: Path) -> None:
    feed, project = setup
    rules = tmp_path / "shop.rules"
    rules.write_text(
        '# test rules\npath contains "Bottines" => 1101\ntitle contains "botines" => 1102\n',
        encoding="utf-8",
    )
    out = tmp_path / "out"
    result = CliRunner().invoke(
        main,
        [
            "map",
            str(feed),
            "--out",
            str(out),
            "--project",
            str(project),
            "--rules",
            str(rules),
            "--format",
            "csv",
            "--json",
            "--workers",
            "1",
        ],
    )
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["mode"] == "cold_start"
    assert facts["by_method"]["rule"] == 40
    assert facts["rules"]["conflicts"] > 0
    assert facts["rules"]["conflict_examples"][0]["rule_line"] == 2
    with open(out / "mappings.csv", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    ruled = [r for r in rows if r["method"] == "rule"]
    assert all(r["node_id"] == "1101" and "rule line 2" in r["reason"] for r in ruled)


def test_map_refuses_a_model_of_another_tree_version(
    setup: tuple[Path, Path], tmp_path: Path
) -> None:
    feed, project = setup
    runner = CliRunner()
    assert runner.invoke(main, ["train", str(feed), "--project", str(project)]).exit_code == 0
    result = runner.invoke(
        main,
        [
            "map",
            str(feed),
            "--out",
            str(tmp_path / "out"),
            "--project",
            str(project),
            "--tree-version",
            "2",
        ],
    )
    assert result.exit_code == 4
    # The error names the cause (both trees), not only a remedy.
    assert "the model was trained on tree version 1" in result.stderr
    assert "the tree in use is version 2" in result.stderr


def _small_chunks(monkeypatch: pytest.MonkeyPatch, size: int) -> None:
    """Map in chunks of ``size`` products (the 240-product feed is then several chunks)."""
    import catmap.classify.mapping as mapping

    defaults = {**mapping.map_feed.__kwdefaults__, "chunk_size": size}
    monkeypatch.setattr(mapping.map_feed, "__kwdefaults__", defaults)


def _count_forks(monkeypatch: pytest.MonkeyPatch, events: list[object]) -> None:
    """Record each worker pool forked (with its size) in ``events``; the pool still runs."""
    import catmap.classify.mapping as mapping

    real = mapping._fork_pool

    def fork(workers: int) -> object:
        events.append(("fork", workers))
        return real(workers)

    monkeypatch.setattr(mapping, "_fork_pool", fork)


def test_map_summary_uses_two_workers_and_writes_parquet(
    setup: tuple[Path, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    feed, project = setup
    _small_chunks(monkeypatch, 100)  # three chunks: the two workers are started
    forks: list[object] = []
    _count_forks(monkeypatch, forks)
    out = tmp_path / "out"
    result = CliRunner().invoke(
        main,
        ["map", str(feed), "--out", str(out), "--project", str(project), "--format", "parquet"],
    )
    assert result.exit_code == 0, result.output
    assert forks == [("fork", 2)]
    assert "Mapped 240 products with the cold start" in result.stdout
    assert "'Maison > Café': 80 products" in result.stdout
    table = pq.read_table(out / "mappings.parquet")
    assert table.num_rows == 240
    assert table.column_names[:3] == ["product_id", "title", "node_id"]


def test_the_worker_pool_is_forked_once_a_second_chunk_is_read(
    setup: tuple[Path, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from catmap.classify.mapping import Mapper, map_feed
    from catmap.feeds.profiled import open_profiled_feed
    from catmap.tree.taxonomy import load_default_tree

    feed, project = setup
    events: list[object] = []
    _count_forks(monkeypatch, events)
    mapper = Mapper(load_default_tree(1), None)
    outputs = []
    for workers in (2, 1):
        out = tmp_path / f"out-{workers}"
        map_feed(
            open_profiled_feed(feed, project), out, mapper=mapper, chunk_size=100,
            workers=workers, on_progress=lambda read: events.append(("read", read)),
        )  # fmt: skip
        outputs.append((out / "mappings.jsonl").read_bytes())
    # Two workers: the first chunk waits for the second, then the pool starts and takes both.
    assert events[:4] == [("read", 100), ("fork", 2), ("read", 200), ("read", 240)]
    assert events[4:] == [("read", 100), ("read", 200), ("read", 240)]  # one worker: no pool
    assert outputs[0] == outputs[1]


def test_a_feed_of_one_chunk_is_mapped_without_forking_workers(
    setup: tuple[Path, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    feed, project = setup
    runner = CliRunner()
    assert runner.invoke(main, ["train", str(feed), "--project", str(project)]).exit_code == 0
    forks: list[object] = []
    _count_forks(monkeypatch, forks)
    outputs = []
    for workers in ("2", "1"):
        out = tmp_path / f"out-{workers}"
        args = ["map", str(feed), "--out", str(out), "--project", str(project),
                "--workers", workers]  # fmt: skip
        assert runner.invoke(main, args).exit_code == 0
        outputs.append((out / "mappings.jsonl").read_bytes())
    assert forks == []  # 240 products: one chunk, mapped in this process
    assert outputs[0] == outputs[1]
    assert len(outputs[0].splitlines()) == 240


# Modules `catmap map` has no use for on a CSV feed with a trained model and a saved profile:
# onboarding and what only it uses, training, the tree diff, and the libraries of other feeds
# and of fitting.
NOT_IMPORTED_BY_MAP = (
    "catmap.jobs.onboard", "catmap.store", "catmap.attributes", "catmap.review",
    "catmap.decide", "catmap.classify.training", "catmap.jobs.train", "catmap.tree.diff",
    "catmap.tree.changelog", "ftfy", "rapidfuzz", "lxml", "sqlite3",
    "sklearn", "pandas", "scipy.stats", "scipy.optimize", "textual",
)  # fmt: skip


def test_map_in_a_fresh_process_imports_only_what_mapping_needs(
    setup: tuple[Path, Path], tmp_path: Path
) -> None:
    feed, project = setup
    runner = CliRunner()
    # Training saves the feed's profile too (suggesting one would compare names).
    assert runner.invoke(main, ["train", str(feed), "--project", str(project)]).exit_code == 0
    assert (project / "profiles" / "shop.toml").is_file()
    out = tmp_path / "out"
    code = (
        "import json, sys\n"
        "from catmap.cli import main\n"
        "try:\n"
        f"    main({['map', str(feed), '--out', str(out), '--project', str(project)]!r})\n"
        "except SystemExit as done:\n"
        "    assert not done.code, done.code\n"
        f"print(json.dumps(sorted(m for m in sys.modules if m.split('.')[0] in "
        f"('catmap', 'ftfy', 'rapidfuzz', 'lxml', 'sqlite3', 'sklearn', "
        f"'pandas', 'scipy', 'textual'))))\n"
    )
    root = Path(__file__).resolve().parents[1]
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=False,
        cwd=tmp_path, env={**os.environ, "PYTHONPATH": str(root)},
    )  # fmt: skip
    assert done.returncode == 0, done.stderr
    imported = set(json.loads(done.stdout.splitlines()[-1]))
    assert len(read_jsonl(out / "mappings.jsonl")) == 240
    # The check sees what mapping does import...
    assert {"catmap.classify.mapping", "catmap.jobs.map", "catmap.feeds.profiled"} <= imported
    # ...and none of what it has no use for.
    unneeded = {m for m in imported for name in NOT_IMPORTED_BY_MAP
                if m == name or m.startswith(name + ".")}  # fmt: skip
    assert unneeded == set()


@pytest.mark.parametrize("workers", ["1", "2"])
def test_map_writes_the_products_read_before_a_fatal_feed_error(
    setup: tuple[Path, Path], tmp_path: Path, workers: str, oversized_cell: bytes
) -> None:
    feed, project = setup
    broken = tmp_path / "broken.csv"
    # A cell past the cell size limit on the last line stops the reading after 240 records.
    broken.write_bytes(feed.read_bytes() + b"p-broken," + oversized_cell + b"\n")
    out = tmp_path / "out"
    result = CliRunner().invoke(
        main,
        ["map", str(broken), "--out", str(out), "--project", str(project), "--json",
         "--workers", workers],
    )
    assert result.exit_code == 3, result.output
    accounting = json.loads((out / "accounting.json").read_text(encoding="utf-8"))
    rows = read_jsonl(out / "mappings.jsonl")
    assert accounting["kept"] == 240
    assert len(rows) == accounting["kept"]


def test_map_summary_counts_the_products_mapped_before_a_fatal_feed_error(
    setup: tuple[Path, Path], tmp_path: Path, oversized_cell: bytes
) -> None:
    feed, project = setup
    broken = tmp_path / "broken.csv"
    broken.write_bytes(feed.read_bytes() + b"p-broken," + oversized_cell + b"\n")
    out = tmp_path / "out"
    args = ["map", str(broken), "--out", str(out), "--project", str(project), "--workers", "1"]
    result = CliRunner().invoke(main, [*args, "--json"])
    assert result.exit_code == 3, result.output
    facts = json.loads(result.stdout)
    accounting = json.loads((out / "accounting.json").read_text(encoding="utf-8"))
    assert facts["products"] == accounting["kept"] == 240
    assert facts["accounting"]["stopped_early"] == accounting["stopped_early"]
    assert "larger than 64 KiB" in accounting["stopped_early"]
    text = CliRunner().invoke(main, args)
    assert text.exit_code == 3
    assert "read 240 = kept 240 + rejected 0" in text.stdout
    assert "Mapped 240 products" in text.stdout


def test_progress_lines_go_to_a_piped_stderr(
    setup: tuple[Path, Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import catmap.cli._render as render

    # Every update prints (the real interval is a few seconds); CliRunner's stderr is no tty.
    monkeypatch.setattr(render, "PIPED_PROGRESS_SECONDS", 0.0)
    feed, project = setup
    runner = CliRunner()
    trained = runner.invoke(main, ["train", str(feed), "--project", str(project)])
    assert trained.exit_code == 0, trained.output
    assert "catmap: training: " in trained.stderr
    result = runner.invoke(
        main,
        ["map", str(feed), "--out", str(tmp_path / "out"), "--project", str(project),
         "--workers", "1"],
    )
    assert result.exit_code == 0, result.output
    assert "catmap: mapping shop.csv, 240 records (" in result.stderr


def test_map_writes_the_products_read_before_a_gzip_cut_short(
    setup: tuple[Path, Path], tmp_path: Path
) -> None:
    import gzip

    feed, project = setup
    data = gzip.compress(feed.read_bytes())
    # Cut inside the part the format sniffing reads first: a small truncated download.
    cut = tmp_path / "cut.csv.gz"
    cut.write_bytes(data[: len(data) * 3 // 4])
    out = tmp_path / "out"
    result = CliRunner().invoke(
        main,
        ["map", str(cut), "--out", str(out), "--project", str(project), "--json",
         "--workers", "1"],
    )
    assert result.exit_code == 3, result.output
    assert "gzip data is damaged or cut short" in result.stderr
    accounting = json.loads((out / "accounting.json").read_text(encoding="utf-8"))
    rows = read_jsonl(out / "mappings.jsonl")
    assert 0 < accounting["kept"] < 240
    assert len(rows) == accounting["kept"]


@pytest.mark.parametrize("top_k", [10, 1])
@pytest.mark.parametrize("cold_start", [False, True])
def test_map_and_evaluate_give_the_same_confidence_to_every_answer(
    setup: tuple[Path, Path],
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    top_k: int,
    cold_start: bool,
) -> None:
    """A back-off answer's confidence sums every class under it, not only the classes kept for
    pass 2 (with 1 kept, the sum over it alone would fall short)."""
    import catmap.classify.mapping as mapping
    from catmap.classify.storage import load_model
    from catmap.evaluate.run import model_mapper
    from catmap.feeds.profiled import open_profiled_feed
    from catmap.records import Product
    from catmap.tree.taxonomy import load_default_tree

    feed, project = setup
    assert CliRunner().invoke(main, ["train", str(feed), "--project", str(project)]).exit_code == 0
    tree = load_default_tree(1)
    model, _ = load_model(project / "models" / "current", tree)
    # The tiny model is sure of everything; a flatter final temperature makes answers back off.
    model.blend_temperature_ *= 30
    mapper = mapping.Mapper(tree, None if cold_start else model)
    monkeypatch.setattr(mapping, "TOP_K", top_k)
    products = [
        p for p in open_profiled_feed(feed, project).products() if isinstance(p, Product)
    ]
    # Halfway between two best-leaf confidences near the median: about half the answers back
    # off, and none lies on the threshold itself (float32 vs float64 rounding).
    confidences = sorted({round(m.confidence, 4) for m in model_mapper(mapper, 0.0)(products)})
    middle = len(confidences) // 2
    threshold = (confidences[middle - 1] + confidences[middle]) / 2
    mapping.map_feed(
        open_profiled_feed(feed, project), tmp_path / "out", mapper=mapper,
        threshold=threshold, workers=1,
    )
    written = {r["product_id"]: r for r in read_jsonl(tmp_path / "out" / "mappings.jsonl")}
    evaluated = model_mapper(mapper, threshold)(products)
    backed_off = 0
    for product, expected in zip(products, evaluated, strict=True):
        row = written[product.product_id]
        assert (row["node_id"], row["method"]) == (expected.node_id, expected.method)
        assert row["confidence"] == pytest.approx(expected.confidence, abs=1e-4)
        backed_off += expected.method == "backoff"
    assert backed_off > 0


def test_map_warns_of_a_feed_in_a_language_the_tree_has_no_terms_in(tmp_path: Path) -> None:
    own = Path(__file__).parent / "data" / "own-tree"
    common = ["--project", str(tmp_path / "p"), "--tree-file", str(own / "english-only.txt")]
    args = ["map", str(own / "gartenladen.csv"), "--out", str(tmp_path / "out"), *common]
    result = CliRunner().invoke(main, [*args, "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["language"]["language"] == "de"
    assert len(facts["warnings"]) == 1
    assert "in German" in facts["warnings"][0]
    assert "(it has English)" in facts["warnings"][0]
    text = " ".join(CliRunner().invoke(main, args).stdout.split())
    assert "Warning: the feed seems to be in German" in text
    # The same feed on the shared tree, which has German terms: no warning.
    shared = CliRunner().invoke(main, [*args[:4], "--project", str(tmp_path / "p"), "--json"])
    assert json.loads(shared.stdout)["warnings"] == []
