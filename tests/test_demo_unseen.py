"""Tests of the unseen-retailer part of the demo world (catmap.demo.unseen)."""

from __future__ import annotations

import csv
import json
import re
from pathlib import Path

import pytest

from catmap.demo._blocklist import is_blocked
from catmap.demo._products import audience_said
from catmap.demo._stamp import generated_dir
from catmap.demo._unseen_vocab import ITALIAN_AUDIENCE
from catmap.demo.unseen import (
    PARTS,
    STAMP,
    UNSEEN_RETAILERS,
    _synonym_table,
    _tree_words,
    build_unseen_world,
    ensure_unseen_world,
    unseen_paths,
)
from catmap.feeds import open_feed
from catmap.feeds.fieldmap import suggest_profile
from catmap.feeds.ingest import Accounting, iter_products
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree, load_default_tree, load_tree

SIZE = 80  # products per retailer: enough to meet every style, small enough for seconds
REPO = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def tree() -> CategoryTree:
    return load_default_tree(1)


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory, tree: CategoryTree) -> Path:
    root = tmp_path_factory.mktemp("unseen")
    build_unseen_world(root, size=SIZE, tree=tree)
    return root


def _rows(path: Path) -> list[dict[str, str]]:
    with path.open(encoding="utf-8", newline="") as fh:
        return list(csv.DictReader(fh))


def _folded(text: str) -> str:
    return re.sub(r"[^a-z0-9]", "", text.casefold())


def test_same_seed_gives_the_same_bytes(world: Path, tmp_path: Path, tree: CategoryTree) -> None:
    again = build_unseen_world(tmp_path, size=SIZE, tree=tree)
    first = unseen_paths(world)
    for mine, theirs in zip(first.all_files(), again.all_files(), strict=True):
        assert mine.read_bytes() == theirs.read_bytes(), mine.name


def test_another_seed_gives_other_products(world: Path, tmp_path: Path, tree: CategoryTree) -> None:
    other = build_unseen_world(tmp_path, seed=1, size=SIZE, tree=tree)
    assert other.labelled["test"].read_bytes() != unseen_paths(world).labelled["test"].read_bytes()


def test_ensure_builds_only_when_missing(world: Path) -> None:
    paths = unseen_paths(world)
    before = {f: f.stat().st_mtime_ns for f in paths.all_files()}
    ensure_unseen_world(world, size=SIZE)
    assert {f: f.stat().st_mtime_ns for f in paths.all_files()} == before


def test_ensure_rebuilds_what_other_inputs_built(tmp_path: Path, tree: CategoryTree) -> None:
    """Files built from another size (or seed, tree, generator) are not reused: their record
    of what they were built from differs; a damaged record counts as absent."""
    small = build_unseen_world(tmp_path, size=SIZE // 2, tree=tree)
    half = small.labelled["test"].read_bytes()
    again = ensure_unseen_world(tmp_path, size=SIZE, tree=tree)
    assert again.labelled["test"].read_bytes() != half
    assert len(_rows(again.labelled["test"])) > len(half.splitlines()) - 1
    stamp = again.root / STAMP
    stamp.write_text("{ not json", encoding="utf-8")
    before = again.labelled["test"].stat().st_mtime_ns
    rebuilt = ensure_unseen_world(tmp_path, size=SIZE, tree=tree)
    assert rebuilt.labelled["test"].stat().st_mtime_ns != before
    assert json.loads(stamp.read_text(encoding="utf-8"))["size"] == SIZE


def test_another_tree_in_the_repository_demo_folder_gets_a_folder_of_its_own() -> None:
    """A test's or project's tree never overwrites the demo's generated files."""
    own = load_default_tree(1)
    small = load_tree(REPO / "tests" / "data" / "trees" / "small_world.txt")
    demo = REPO / "feeds_demo"
    assert generated_dir(demo, own) == demo / "generated"
    other = generated_dir(demo, small)
    assert other.parent == demo / "generated" and other.name.startswith("tree-")
    # Elsewhere (a test's own demo folder) the layout stays as it is.
    assert generated_dir(Path("/somewhere"), small) == Path("/somewhere/generated")


def test_parts_are_disjoint_in_retailers_and_products(world: Path) -> None:
    paths = unseen_paths(world)
    validation, test = (_rows(paths.labelled[part]) for part in PARTS)
    assert {r["retailer"] for r in validation}.isdisjoint({r["retailer"] for r in test})
    assert {r["product_id"] for r in validation}.isdisjoint({r["product_id"] for r in test})
    assert len({r["retailer"] for r in validation}) == 3 == len({r["retailer"] for r in test})


def test_retailers_are_new(world: Path) -> None:
    from catmap.demo._retailers import ALL_RETAILERS

    old = {r.name for r in ALL_RETAILERS}
    assert old.isdisjoint(r.name for r in UNSEEN_RETAILERS)
    assert not any(is_blocked(r.name) for r in UNSEEN_RETAILERS)
    assert not any(is_blocked(word) for r in UNSEEN_RETAILERS for word in r.name.split())


def test_unknown_brands_are_absent_from_the_brand_list(world: Path) -> None:
    listed: set[str] = set()
    names: set[str] = set()
    for row in _rows(REPO / "feeds_demo" / "brands.csv"):
        names.add(row["brand"])
        listed.add(_folded(row["brand"]))
        listed.update(_folded(v) for v in row["variants"].split(";") if v)
    retailers = {r.name for r in UNSEEN_RETAILERS}
    paths = unseen_paths(world)
    unknown = known = 0
    for part in PARTS:
        for row in _rows(paths.labelled[part]):
            if row["gold_brand_known"] == "false" and row["gold_brand"]:
                unknown += 1
                assert _folded(row["gold_brand"]) not in listed, row
                if row["brand"] and row["brand"] not in retailers:
                    assert _folded(row["brand"]) not in listed, row
            elif row["gold_brand_known"] == "true":
                known += 1
                assert row["gold_brand"] in names, row
            else:
                assert row["gold_brand_known"] == "false" and not row["gold_brand"], row
    assert unknown > known > 0


def test_every_feed_file_reads_through_catmap(world: Path) -> None:
    paths = unseen_paths(world)
    for file in paths.all_files():
        feed = open_feed(file)
        profile = suggest_profile(feed.info, feed.sample(200))
        accounting = Accounting()
        products = [p for p in iter_products(feed, profile, accounting) if isinstance(p, Product)]
        expected = SIZE * (3 if file in paths.labelled.values() else 1)
        assert len(products) == expected, file.name
        assert all(p.title for p in products), file.name


def test_feed_shapes_are_mixed(world: Path) -> None:
    suffixes = {f.suffix for f in unseen_paths(world).feeds.values()}
    assert suffixes == {".csv", ".tsv", ".jsonl", ".xml"}


def test_gold_labels_agree_with_tree_v1(world: Path, tree: CategoryTree) -> None:
    paths = unseen_paths(world)
    for part in PARTS:
        for row in _rows(paths.labelled[part]):
            node = row["gold_node"]
            assert node in tree and tree.is_leaf(node), row
            assert row["gold_restriction"] == (tree.restriction(node) or "none"), row
            who, ages = tree.who(node), tree.ages(node)
            assert row["gold_who"] in (who or {"not_applicable"}), row
            assert row["gold_age"] in (ages or {"not_applicable"}), row


def test_an_open_audience_is_said_in_the_fields(world: Path, tree: CategoryTree) -> None:
    """Where the node leaves gender open, a female / male product names it somewhere."""
    checked = 0
    for part in PARTS:
        for row in _rows(unseen_paths(world).labelled[part]):
            if row["gold_who"] in ("female", "male") and len(tree.who(row["gold_node"])) > 1:
                text = f"{row['title']} | {row['gender']}"
                said = audience_said(text)
                # the demo's reader knows no Italian: the part's own Italian words count too
                words = set(text.casefold().split())
                said |= {who for (who, _age), cues in ITALIAN_AUDIENCE.items()
                         if any(set(cue.split()) <= words for cue in cues)}
                assert row["gold_who"] in said, row
                checked += 1
    assert checked > 10


def test_synonyms_are_words_the_tree_lacks(tree: CategoryTree) -> None:
    words = _tree_words(tree)
    table = _synonym_table(words)
    assert len(table) > 40
    for options in table.values():
        for option in options:
            assert not set(option.casefold().split()) & words, option


def test_part_has_the_stated_styles(world: Path) -> None:
    rows = [r for part in PARTS for r in _rows(unseen_paths(world).labelled[part])]
    titles = [r["title"] for r in rows]
    assert any(" by " in t for t in titles) and any(": " in t for t in titles)
    assert any(t.isupper() for t in titles)
    assert sum(1 for r in rows if not r["brand"] and r["gold_brand"]) > 0  # brand in title only
    retailers = {r.name for r in UNSEEN_RETAILERS}
    assert any(r["brand"] in retailers for r in rows)  # the retailer's own name as brand
    numeric = [r for r in rows if re.fullmatch(r"[\d\s>|/:›]+", r["retailer_category"])]
    assert numeric and all(r["gold_path_kind"] == "numeric" for r in numeric)
    assert {r["gold_title_lang"] for r in rows} == {"en", "fr", "de", "es", "it"}
    assert all(r["title"].isupper() for r in rows if "+caps" in r["gold_title_style"])
    bad = {"numeric", "code", "bucket", "other_department"}
    assert 0.2 < sum(r["gold_path_kind"] in bad for r in rows) / len(rows) < 0.4


def test_leaf_paths_name_the_gold_leaf(world: Path, tree: CategoryTree) -> None:
    """A path of kind "leaf" ends with the gold leaf's name (in the retailer's path language)."""
    from catmap.demo._products import leaf_infos

    names = {leaf.id: {p[-1] for p in leaf.path.values()} for leaf in leaf_infos(tree)}
    seps = {r.name: r.category_sep for r in UNSEEN_RETAILERS}
    for part in PARTS:
        for row in _rows(unseen_paths(world).labelled[part]):
            if row["gold_path_kind"] == "leaf":
                last = row["retailer_category"].split(seps[row["retailer"]])[-1]
                assert last in names[row["gold_node"]], row
