"""Trees of one's own of depth 1, 2 and 7, end to end through the real CLI.

Each depth gets a project (``catmap init --tree``) trained on 300 invented labelled rows; then
``catmap map`` (with and without a model, and with a high back-off threshold), ``catmap
onboard``, ``catmap export``, the review screen, ``catmap tree diff`` and ``catmap remap --to``
a version 2 that moves nodes across depths. Expected paths are built from the tree file's own
parent column here, not by catmap. The trees and rows are in ``tests/_depth_trees.py``.
"""

from __future__ import annotations

import asyncio
import csv
import json
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest
from click.testing import CliRunner, Result
from textual.widgets import Static

from catmap.cli import main
from catmap.jobs.review import project_review_session
from catmap.review.app import ReviewApp, fit_path
from tests._depth_trees import TREES, DepthTree, write_feed, write_labelled

DEPTHS = {"flat": 1, "two": 2, "seven": 7}
ROOT = Path(__file__).resolve().parents[1]


def run(*args: str | Path) -> Result:
    return CliRunner().invoke(main, [str(a) for a in args])


def ok(*args: str | Path) -> Result:
    result = run(*args)
    assert result.exit_code == 0, f"{args}: {result.output}"
    return result


def tree_paths(text: str) -> dict[str, str]:
    """Node id -> its path of names, read from a tree file's id, parent and name cells."""
    rows = [
        [cell.strip() for cell in line.split("|")[:3]]
        for line in text.splitlines()
        if line.strip() and not line.startswith(("#", "@"))
    ]
    parent = {node: up for node, up, _ in rows}
    name = {node: title for node, _, title in rows}

    def path(node: str) -> str:
        names = []
        current = node
        while current != "-":
            names.append(name[current])
            current = parent[current]
        return " > ".join(reversed(names))

    return {node: path(node) for node in name}


def leaves_of(text: str) -> set[str]:
    rows = [line.split("|") for line in text.splitlines() if line and line[0].isdigit()]
    parents = {cells[1].strip() for cells in rows}
    return {cells[0].strip() for cells in rows} - parents


@dataclass
class Shop:
    """One depth's files and its trained project."""

    tree: DepthTree
    folder: Path
    project: Path
    feed: Path
    truth: dict[str, str]

    @property
    def tree_file(self) -> Path:
        return self.folder / "tree.txt"

    @property
    def tree_v2(self) -> Path:
        return self.folder / "tree-v2.txt"


@pytest.fixture(scope="module", params=list(DEPTHS))
def shop(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Shop:
    tree = TREES[request.param]
    folder = tmp_path_factory.mktemp(f"depth-{request.param}")
    (folder / "tree.txt").write_text(tree.text, encoding="utf-8")
    (folder / "tree-v2.txt").write_text(tree.text_v2, encoding="utf-8")
    write_labelled(folder / "labelled.csv", tree, 300)
    truth = write_feed(folder / "shop-a.csv", tree, 60)
    project = folder / "proj"
    ok("init", project, "--tree", folder / "tree.txt", "--labelled", folder / "labelled.csv")
    ok("train", "--project", project)
    return Shop(tree, folder, project, folder / "shop-a.csv", truth)


def read_jsonl(path: Path) -> list[dict[str, object]]:
    return [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]


def test_tree_validate_accepts_the_tree_and_counts_its_levels(shop: Shop) -> None:
    facts = json.loads(ok("tree", "validate", shop.tree_file, "--json").stdout)
    depth = DEPTHS[shop.tree.name]
    assert max(int(level) for level in facts["levels"]) == depth
    leaves = leaves_of(shop.tree.text)
    assert facts["leaves"] == len(leaves)
    # Every leaf is counted in its department, a department that is a leaf included.
    assert sum(d["leaves"] for d in facts["departments"]) == len(leaves)


def test_training_chooses_the_flat_model_when_each_class_is_a_department(shop: Shop) -> None:
    manifest = json.loads((shop.project / "models/current/manifest.json").read_text("utf-8"))
    metrics = manifest["metrics"]
    if shop.tree.name == "flat":
        assert metrics["structure"] == "flat"
        assert metrics["structure_reason"] == "each class is its own department"
    else:  # both structures were trained and compared
        assert "valid_macro_f1" in metrics
    assert metrics["valid_accuracy"] >= 0.9
    assert set(manifest["class_ids"]) == leaves_of(shop.tree.text)


def test_map_answers_leaves_of_the_tree_with_their_paths(shop: Shop, tmp_path: Path) -> None:
    ok("map", shop.feed, "--project", shop.project, "--out", tmp_path)
    rows = read_jsonl(tmp_path / "mappings.jsonl")
    paths = tree_paths(shop.tree.text)
    assert len(rows) == len(shop.truth)
    assert {r["method"] for r in rows} == {"model"}
    assert {r["node_id"] for r in rows} <= leaves_of(shop.tree.text)
    assert all(r["node_path"] == paths[str(r["node_id"])] for r in rows)
    right = sum(r["node_id"] == shop.truth[str(r["product_id"])] for r in rows)
    assert right >= 0.9 * len(rows)


def test_map_with_keywords_only_answers_leaves_or_inner_nodes(shop: Shop, tmp_path: Path) -> None:
    untrained = tmp_path / "untrained"  # a project with no model maps by keywords alone
    ok("init", untrained, "--tree", shop.tree_file)
    ok("map", shop.feed, "--project", untrained, "--out", tmp_path / "out")
    rows = read_jsonl(tmp_path / "out" / "mappings.jsonl")
    leaves = leaves_of(shop.tree.text)
    for row in rows:
        if row["method"] == "backoff":
            assert row["node_id"] not in leaves
        else:
            assert row["method"] == "cold_start" and row["node_id"] in leaves
    right = sum(r["node_id"] == shop.truth[str(r["product_id"])] for r in rows)
    assert right >= 0.5 * len(rows)


def test_back_off_climbs_to_inner_nodes_only(shop: Shop, tmp_path: Path) -> None:
    # A model trained on labels of which 30% are random is unsure: with a threshold of 0.9
    # most products back off, as far as the tree allows.
    labelled = tmp_path / "noisy.csv"
    write_labelled(labelled, shop.tree, 300, noise=0.3)
    project = tmp_path / "noisy"
    ok("init", project, "--tree", shop.tree_file, "--labelled", labelled)
    # The first model, calibrated on its own held-out rows: a refit on 300 noisy rows keeps
    # temperatures fitted for a model it no longer is, and this checks where confidence leads.
    ok("train", "--project", project, "--no-refit")
    out = tmp_path / "out"
    ok("map", shop.feed, "--project", project, "--backoff-threshold", "0.9", "--out", out)
    rows = read_jsonl(out / "mappings.jsonl")
    text = shop.tree.text
    leaves, paths = leaves_of(text), tree_paths(text)
    departments = {node for node, path in paths.items() if " > " not in path}
    for row in rows:
        node = str(row["node_id"])
        if row["method"] == "backoff":
            # An inner node of the tree (it has no single root to fall back to).
            assert node not in leaves and node in paths
            assert str(row["reason"]).startswith("backed off from ")
        else:
            assert row["method"] == "model" and node in leaves
            # Below the threshold only where there is nothing above: a department leaf.
            assert float(row["confidence"]) >= 0.9 or node in departments  # type: ignore[arg-type]
    backed = [r for r in rows if r["method"] == "backoff"]
    if shop.tree.name == "flat":
        assert not backed  # every leaf is a department: nothing to back off to
        assert any(float(r["confidence"]) < 0.9 for r in rows)  # type: ignore[arg-type]
        return
    assert len(backed) >= len(rows) / 2
    # A product backs off onto its own leaf's branch.
    on_own_branch = sum(
        (paths[shop.truth[str(r["product_id"])]] + " > ").startswith(paths[str(r["node_id"])])
        for r in backed
    )
    assert on_own_branch >= 0.9 * len(backed)
    if shop.tree.name == "two":  # Gift cards (300) is a leaf at level 1
        # Unsure Gift cards products stay on it: nothing above it to back off to.
        unsure = [r for r in rows if r["method"] == "model" and float(r["confidence"]) < 0.9]  # type: ignore[arg-type]
        assert unsure and {r["node_id"] for r in unsure} == {"300"}
        assert all(shop.truth[str(r["product_id"])] == "300" for r in unsure)


def _export(shop: Shop, out: Path) -> dict[str, dict[str, str]]:
    ok("export", "--project", shop.project, "--out", out)
    with open(out / "shop-a.products.csv", encoding="utf-8", newline="") as handle:
        return {row["product_id"]: row for row in csv.DictReader(handle)}


def test_onboard_and_export_write_the_full_paths(shop: Shop, tmp_path: Path) -> None:
    project = tmp_path / "proj"
    shutil.copytree(shop.project, project)
    ok("onboard", shop.feed, "--project", project)
    exported = _export(Shop(shop.tree, shop.folder, project, shop.feed, shop.truth), tmp_path)
    paths = tree_paths(shop.tree.text)
    depth = DEPTHS[shop.tree.name]
    assert len(exported) == len(shop.truth)
    for row in exported.values():
        assert row["node_path"] == paths[row["node_id"]]
    assert max(len(row["node_path"].split(" > ")) for row in exported.values()) == depth
    # Restriction and audience follow the node's ancestors.
    by_leaf = {row["node_id"]: row for row in exported.values()}
    if shop.tree.name == "flat":
        assert by_leaf["60"]["restriction"] == "alcohol"
        assert (by_leaf["50"]["who"], by_leaf["50"]["age"]) == ("unisex", "kids")
    if shop.tree.name == "two":
        assert {by_leaf[n]["restriction"] for n in ("210", "220")} == {"alcohol"}
        assert (by_leaf["420"]["who"], by_leaf["420"]["age"]) == ("unisex", "kids")
        assert by_leaf["300"]["node_path"] == "Gift cards"
    if shop.tree.name == "seven":
        assert by_leaf["1114"]["node_path"] == (
            "Workshop > Hand tools > Cutting tools > Saws > Hand saws > Japanese-style saws > "
            "Ryoba saws"
        )


def _screen(app: ReviewApp, widget: str) -> str:
    return str(app.query_one(f"#{widget}", Static).render())


def test_the_review_screen_shows_paths_and_finds_nodes(shop: Shop, tmp_path: Path) -> None:
    project = tmp_path / "proj"
    shutil.copytree(shop.project, project)
    ok("onboard", shop.feed, "--project", project)
    paths = tree_paths(shop.tree.text)

    async def review() -> tuple[str, str, str, str]:
        with project_review_session(project, "ana") as session:
            app = ReviewApp(session)
            async with app.run_test(size=(140, 40)) as pilot:
                await pilot.pause()
                shown = _screen(app, "suggestion")
                current = session.current
                assert current is not None
                product, suggested = current.product.product_id, current.mapping.node_id
                # The deepest leaf that is not the suggestion, found by one of its words.
                target = max(
                    (n for n in shop.tree.words if n != suggested),
                    key=lambda n: (len(paths[n].split(" > ")), n),
                )
                await pilot.press("slash")
                await pilot.pause()
                await pilot.press(*shop.tree.words[target][0])
                await pilot.pause()
                await pilot.press("enter")
                await pilot.pause()
                await pilot.press("q")
            (decision,) = session.store.decisions()
            assert decision.product_id == product
            # The path takes up to three lines, each broken after a " >".
            lines = shown.split("\n")
            taken = next(i for i, line in enumerate(lines) if not line.endswith(" >"))
            first, full = " ".join(lines[: taken + 1]), paths[suggested]
            if first != full:  # a deep path keeps its department and its end
                department, _, end = first.partition(" > … > ")
                assert department == full.split(" > ")[0] and full.endswith(" > " + end)
            return target, decision.action, decision.to_node, paths[suggested]

    target, action, chosen, suggested_path = asyncio.run(review())
    assert (action, chosen) == ("choose", target)
    assert len(suggested_path.split(" > ")) <= DEPTHS[shop.tree.name]


def test_a_deep_path_on_the_screen_keeps_its_department_and_its_end() -> None:
    path = tree_paths(TREES["seven"].text)["1114"]
    assert fit_path(path, 200) == path
    assert fit_path(path, 60) == "Workshop > … > Hand saws > Japanese-style saws > Ryoba saws"
    assert fit_path(path, 35) == "Workshop > … > Ryoba saws"
    # Short of room the department goes too, then the name is cut at its end.
    assert fit_path(path, 20) == "… > Ryoba saws"
    assert fit_path("Kites", 3) == "Ki…"


def test_tree_diff_follows_moves_across_depths(shop: Shop, tmp_path: Path) -> None:
    out = tmp_path / "crosswalk.tsv"
    ok("tree", "diff", shop.tree_file, shop.tree_v2, "--out", out)
    rows = {
        line.split("\t")[0]: line.split("\t")
        for line in out.read_text(encoding="utf-8").splitlines()
        if line and not line.startswith(("#", "@", "old_id"))
    }
    if shop.tree.name == "flat":
        assert rows["50"][1:3] == ["-", "removed"]  # a department: no ancestor to go to
        assert rows["60"][1:3] == ["65", "renamed"]  # found under its new id, not a split
        assert rows["-"][1:3] == ["70", "added"]
    if shop.tree.name == "two":
        assert rows["130"][1:3] == ["130", "moved"]  # level 2 -> 1
        assert rows["300"][1:3] == ["300", "moved"]  # level 1 -> 2
        assert rows["410"][1:3] == ["410", "renamed"]
    if shop.tree.name == "seven":
        assert rows["1115"][1:3] == ["1115", "moved"]  # level 7 -> 4
        assert all(row[2] == "unchanged" for node, row in rows.items() if node != "1115")


def test_remap_to_version_two_moves_products_across_depths(shop: Shop, tmp_path: Path) -> None:
    project = tmp_path / "proj"
    shutil.copytree(shop.project, project)
    ok("onboard", shop.feed, "--project", project)
    facts = json.loads(ok("remap", "--to", shop.tree_v2, "--project", project, "--json").stdout)
    assert facts["from_version"] == "1" and facts["mappings"] == len(shop.truth)
    ok("remap-finalise", "--project", project)
    exported = _export(Shop(shop.tree, shop.folder, project, shop.feed, shop.truth), tmp_path)
    new_paths = tree_paths(shop.tree.text_v2)
    new_leaves = leaves_of(shop.tree.text_v2)
    for product_id, row in exported.items():
        if row["node_id"]:  # a product the remap sent back to review may have no node
            assert row["node_path"] == new_paths[row["node_id"]]
        truth = shop.truth[product_id]
        if shop.tree.name == "two" and truth in ("130", "300"):
            assert row["node_id"] == truth
        if shop.tree.name == "seven" and truth == "1115":
            assert row["node_id"] == "1115"
            assert row["node_path"] == "Workshop > Hand tools > Cutting tools > Dozuki saws"
        if shop.tree.name == "flat" and truth == "60":
            assert row["node_id"] == "65"
        if shop.tree.name == "flat" and truth == "50":  # Kites is gone: re-scored elsewhere
            assert row["node_id"] != "50"
            assert not row["node_id"] or row["node_id"] in new_leaves
    if shop.tree.name == "two":
        assert new_paths["130"] == "Sieves" and new_paths["300"] == "Kitchen > Gift cards"


def test_the_shipped_trees_alone_keep_the_shared_levels(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    for version in ("1", "2"):  # catmap's own trees still pass their stricter rule
        ok("tree", "validate", "--tree-version", version)
        ok("tree", "validate", ROOT / "taxonomies" / f"tree-v{version}.txt")
    shallow = TREES["two"].text
    own = tmp_path / "own" / "tree-v1.txt"
    own.parent.mkdir()
    own.write_text(shallow, encoding="utf-8")
    ok("tree", "validate", own)
    # The same file where catmap keeps its shared trees is held to the shared rule.
    shipped = tmp_path / "taxonomies"
    shipped.mkdir()
    shutil.copy(own, shipped / "tree-v1.txt")
    monkeypatch.setattr("catmap.tree.taxonomy._SHIPPED_TAXONOMIES", shipped)
    refused = run("tree", "validate", shipped / "tree-v1.txt")
    assert refused.exit_code == 3
    assert "shallower than the shared tree allows" in refused.stderr
    assert "--tree-file" in refused.stderr
