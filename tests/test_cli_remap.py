"""Tests for `catmap remap`, `remap-report`, `remap-rollback` and `remap-finalise`.

The trees are the small hand-made pair tests/data/treediff/old.txt (version 1) and split.txt
(version 2: node 211 Headphones split into 214 and 215).
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from catmap.cli import main
from catmap.errors import EXIT_STORE, TreeVersionMismatch
from catmap.jobs._project_tree import open_project_tree
from catmap.jobs._remap_versions import check_onboarding
from catmap.jobs.review import project_review_session
from catmap.project import load_settings
from catmap.records import Mapping, Product
from catmap.store import MappedRow, Store, store_path

DATA = Path(__file__).parent / "data" / "treediff"
OLD, NEW = str(DATA / "old.txt"), str(DATA / "split.txt")


@pytest.fixture()
def project(tmp_path: Path) -> Path:
    folder = tmp_path / "project"
    with Store.open(store_path(folder)) as store:
        store.add_feed("shop-a")
        run = store.start_run("onboard", feed="shop-a")
        rows = [
            MappedRow(
                product=Product(product_id=pid, title=title),
                mapping=Mapping(node_id=node, confidence=0.95, method="model"),
                group_key="Audio",
            )
            for pid, title, node in (
                ("p1", "Closed-back over-ear headphones", "211"),
                ("p2", "Wireless in-ear earbuds", "211"),
                ("p3", "Portable radio", "212"),
            )
        ]
        store.save_mapped("shop-a", run, rows, tree_version="1")
        store.finish_run(run, summary={"threshold": 0.5})
    return folder


def _run(*args: str) -> Result:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def test_remap_prints_the_report(project: Path) -> None:
    result = _run("remap", "--to", NEW, "--from", OLD, "--project", str(project))
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert lines[0] == (
        "Remap 1: tree version 1 -> 2 (computed crosswalk, re-scored with cold start)"
    )
    assert "  mappings             3" in lines
    assert "  re-scored            2" in lines
    assert "  accept threshold     0.500 for shop-a (onboard run 1)" in lines
    assert lines[-1].startswith("Keep it with `catmap remap-finalise`")


def test_remap_json_and_report_agree(project: Path) -> None:
    result = _run(
        "remap",
        "--to",
        NEW,
        "--from",
        OLD,
        "--project",
        str(project),
        "--json",
        "--min-confidence",
        "1",
    )
    facts = json.loads(result.output)
    assert facts["mappings"] == 3 and facts["requeued"] == 2
    assert facts["by_change"]["split"] == {
        "products": 2,
        "automatic": 0,
        "rescored": 2,
        "requeued": 2,
    }
    assert facts["queue_groups"] == {"remap 211: Audio > Listening > Headphones": 2}
    saved = json.loads(_run("remap-report", "--project", str(project), "--json").output)
    assert saved["state"] == "pending"
    assert {k: v for k, v in saved.items() if k != "state"} == facts


def test_rollback_then_finalise_messages(project: Path) -> None:
    _run("remap", "--to", NEW, "--from", OLD, "--project", str(project))
    result = _run("remap-rollback", "--project", str(project))
    assert result.output == "Rolled back: 3 mappings restored.\n"
    with Store.open(store_path(project)) as store:
        assert store.mapping("shop-a", "p1").mapping.node_id == "211"
    _run("remap", "--to", NEW, "--from", OLD, "--project", str(project))
    result = _run("remap-finalise", "--project", str(project))
    assert result.output == "Finalised: 3 previous mappings dropped; no rollback now.\n"


def test_nothing_to_roll_back_is_a_one_line_error(project: Path) -> None:
    result = CliRunner().invoke(main, ["remap-rollback", "--project", str(project)])
    assert result.exit_code == EXIT_STORE
    assert result.output.startswith("catmap: error: ")
    assert "no remap to roll back" in result.output
    assert len(result.output.strip().splitlines()) == 1


def test_version_detected_from_the_store(project: Path) -> None:
    result = _run("remap", "--to", NEW, "--project", str(project), "--json")
    # Without --from, the old tree is the version recorded with the stored mappings.
    assert json.loads(result.output)["from_version"] == "1"


def test_a_project_of_ones_own_remaps_from_its_own_tree(tmp_path: Path) -> None:
    folder = tmp_path / "own"
    assert _run("init", str(folder), "--tree", OLD).exit_code == 0
    with Store.open(store_path(folder)) as store:
        store.add_feed("shop-a")
        run = store.start_run("onboard", feed="shop-a")
        rows = [
            MappedRow(
                product=Product(product_id=pid, title=title),
                mapping=Mapping(node_id=node, confidence=0.95, method="model"),
                group_key="Footwear",
            )
            for pid, title, node in (("p1", "Suede ankle boots", "111"), ("p2", "Earbuds", "211"))
        ]
        store.save_mapped("shop-a", run, rows, tree_version="1")
        store.finish_run(run, summary={"threshold": 0.5})
    # Without --from: the project's own tree of the stored version, not the shared tree 1.
    result = _run("remap", "--to", NEW, "--project", str(folder), "--json")
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    assert facts["from_version"] == "1"
    assert facts["by_change"]["unchanged"]["products"] == 1  # 111 Ankle boots
    assert facts["by_change"]["split"]["products"] == 1  # 211 Headphones
    # The new tree file stays with the project, so that the commands finding a tree by the
    # stored version (export, review, decisions) read the remapped mappings on it.
    kept = folder / "tree-v2.txt"
    assert kept.read_bytes() == Path(NEW).read_bytes()
    first = (folder / "tree.txt").read_bytes()
    finalised = _run("remap-finalise", "--project", str(folder))
    assert finalised.exit_code == 0, finalised.output
    # (the console may break the long path anywhere)
    said = "".join(finalised.output.split())
    assert "".join(f"The project's tree is now {kept}: train, onboard and map".split()) in said
    # From now on the project's own tree is version 2 (no --tree-file needed); version 1 is
    # kept beside it for the records of that version.
    assert open_project_tree(folder).version == "2"
    assert (load_settings(folder).tree_file, load_settings(folder).tree_version) == (
        "tree-v2.txt",
        "2",
    )
    # The labelled feeds' labels still name version 1's nodes: the settings say so.
    assert load_settings(folder).labels_tree_version == "1"
    assert (folder / "tree-v1.txt").read_bytes() == first
    exported = _run("export", "--project", str(folder), "--out", str(tmp_path / "out"))
    assert exported.exit_code == 0, exported.output
    with open(tmp_path / "out" / "shop-a.products.csv", encoding="utf-8", newline="") as handle:
        paths = {row["product_id"]: row["node_path"] for row in csv.DictReader(handle)}
    assert paths["p1"] == "Footwear > Boots > Ankle boots"
    new_paths = {line.split(" | ")[0]: line.split(" | ")[2] for line in Path(NEW).open()
                 if " | " in line}  # fmt: skip
    assert paths["p2"].rsplit(" > ", 1)[-1] in {new_paths["214"], new_paths["215"]}
    # The review screen shows the remapped products on that tree too.
    with project_review_session(folder, "ana") as session:
        assert session.tree.version == "2"
        assert session.path_text("214") == f"Audio > Listening > {new_paths['214']}"
    # Onboarding on the project's first tree is refused, naming the kept file to use.
    with Store.open(store_path(folder)) as store, pytest.raises(TreeVersionMismatch) as refused:
        check_onboarding(store, "1", folder)
    assert f"--tree-file {kept}" in str(refused.value)


def test_commands_have_help() -> None:
    for command in ("remap", "remap-report", "remap-rollback", "remap-finalise"):
        result = _run(command, "--help")
        assert result.exit_code == 0 and "Usage:" in result.output


def _split_log(tmp_path: Path) -> Path:
    """The change log of split.txt: 211 split into 214 and 215 (node lines from the file)."""
    parts = [
        line for line in Path(NEW).read_text("utf-8").splitlines()
        if line.startswith(("214 |", "215 |"))
    ]
    log = tmp_path / "changes.txt"
    log.write_text(
        "@tree-change 1 -> 2\nsplit 211 -> 214, 215 | note: two kinds of headphones\n"
        + "".join(f"+ {line}\n" for line in parts),
        "utf-8",
    )
    return log


def test_remap_with_a_change_log_and_the_per_node_report(project: Path, tmp_path: Path) -> None:
    log = _split_log(tmp_path)
    result = _run(
        "remap", "--to", NEW, "--from", OLD, "--changes", str(log), "--project", str(project),
        "--min-confidence", "1",
    )
    assert result.exit_code == 0, result.output
    assert "(change log crosswalk, re-scored with cold start)" in result.output.splitlines()[0]
    report = _run("remap-report", "--project", str(project))
    lines = report.output.splitlines()
    assert "    211 -> 214, 215  split (log): 0 / 2 / 2" in lines
    assert any(line.startswith("      evidence: change log line 2: two kinds") for line in lines)
    facts = json.loads(_run("remap-report", "--project", str(project), "--json").output)
    node = facts["nodes"]["211"]
    assert (node["moved"], node["rescored"], node["queued"]) == (0, 2, 2)
    assert node["new_ids"] == ["214", "215"] and node["change"] == "split"
    assert node["old_path"] == "Audio > Listening > Headphones"
