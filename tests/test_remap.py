"""Tests of catmap.jobs.remap: moving stored mappings onto a new tree version, rollback, finalise.

The trees are the small hand-made pairs of tests/data/treediff (old.txt is version 1, each other
file one change, version 2); the expected nodes are read from each file's header comment.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from catmap.attributes import AttributeExtractor, BrandDictionary
from catmap.classify.model import CategoryModel
from catmap.classify.storage import load_model, save_model
from catmap.errors import ModelTreeMismatch, StoreError, TreeError
from catmap.jobs.remap import (
    RemapScorer,
    finalise_remap,
    latest_remap,
    remap_group_key,
    remap_store,
    remapped_examples,
    rollback_remap,
)
from catmap.records import Mapping, Product
from catmap.store import MappedRow, Store
from catmap.tree.changelog import load_change_log
from catmap.tree.taxonomy import CategoryTree, load_tree
from tests._classify_fixtures import labelled_rows, write_tree

DATA = Path(__file__).parent / "data" / "treediff"
FEED = "shop-a"


def _tree(name: str) -> CategoryTree:
    return load_tree(DATA / name)


@pytest.fixture()
def store(tmp_path: Path) -> Iterator[Store]:
    with Store.open(tmp_path / "store.sqlite") as opened:
        opened.add_feed(FEED, source_path="shop-a.csv")
        yield opened


def _save(
    store: Store,
    products: list[tuple[str, str, str, float, str]],
    *,
    tree_version: str = "1",
    threshold: float | None = 0.8,
) -> None:
    """Save (product id, title, node, confidence, status) rows as one run."""
    run = store.start_run("onboard", feed=FEED)
    rows = [
        MappedRow(
            product=Product(product_id=pid, title=title, category_path=("Shop", "Things")),
            mapping=Mapping(node_id=node, confidence=confidence, method="model"),
            status=status,
            group_key="Shop > Things",
        )
        for pid, title, node, confidence, status in products
    ]
    store.save_mapped(FEED, run, rows, model_version="m1", tree_version=tree_version)
    store.finish_run(run, summary={"threshold": threshold})


def _review(store: Store, product_id: str, action: str = "accept") -> None:
    item = next(i for i in store.items() if i.product_id == product_id and i.state == "open")
    store.decide(item.id, "ana", action)


def _node(store: Store, product_id: str) -> tuple[str, str, str, float]:
    stored = store.mapping(FEED, product_id)
    return (
        stored.mapping.node_id,
        stored.status,
        stored.tree_version,
        round(stored.mapping.confidence, 4),
    )


def _dump(path: str) -> dict[str, list[tuple[Any, ...]]]:
    conn = sqlite3.connect(path)
    try:
        return {
            table: conn.execute(f"SELECT * FROM {table} ORDER BY 1, 2").fetchall()
            for table in ("mappings", "review_items", "decisions", "products")
        }
    finally:
        conn.close()


# -- one change type at a time ----------------------------------------------------------------


def test_renamed_node_moves_with_no_model_call_and_keeps_its_confidence(store: Store) -> None:
    _save(store, [("p1", "Trail sneakers", "121", 0.93, "accepted")])
    report = remap_store(store, _tree("old.txt"), _tree("renamed.txt"))
    # renamed.txt: node 120 renamed; its leaf 121 keeps its id and parent.
    assert _node(store, "p1") == ("121", "accepted", "2", 0.93)
    assert report.mappings == 1 and report.rescored == 0 and report.requeued == 0


def test_reviewed_decision_survives_a_rename(store: Store) -> None:
    # A person said yes to the inner node 120 (Trainers), which is renamed in version 2.
    _save(store, [("p1", "Plain trainers", "120", 0.4, "queued")])
    _review(store, "p1")
    report = remap_store(store, _tree("old.txt"), _tree("renamed.txt"))
    assert _node(store, "p1") == ("120", "reviewed", "2", 0.4)
    assert report.by_change["renamed"] == {
        "products": 1,
        "automatic": 1,
        "rescored": 0,
        "requeued": 0,
    }
    assert report.reviewed_kept == 1


def test_reviewed_decision_survives_a_move(store: Store) -> None:
    _save(store, [("p1", "Hiking shoes", "122", 0.55, "queued")])
    _review(store, "p1")
    report = remap_store(store, _tree("old.txt"), _tree("moved.txt"))
    new = _tree("moved.txt")
    assert _node(store, "p1") == ("122", "reviewed", "2", 0.55)
    # moved.txt: 122 Walking shoes now sits under 110 Boots.
    assert new.path_text("122") == "Footwear > Boots > Walking shoes"
    assert report.by_change["moved"]["automatic"] == 1
    assert report.departments_before == {"Footwear": 1}
    assert report.departments_after == {"Footwear": 1}


def test_split_node_is_rescored_over_its_targets_only(store: Store) -> None:
    _save(
        store,
        [
            ("p1", "Closed-back over-ear headphones", "211", 0.97, "accepted"),
            ("p2", "Wireless earbuds in-ear headphones", "211", 0.97, "accepted"),
        ],
    )
    report = remap_store(store, _tree("old.txt"), _tree("split.txt"), min_confidence=0.5)
    # split.txt: 211 Headphones split into 214 Over-ear and 215 In-ear headphones.
    assert _node(store, "p1")[0] == "214"
    assert _node(store, "p2")[0] == "215"
    stored = store.mapping(FEED, "p1")
    assert stored.mapping.method == "cold_start"
    assert stored.mapping.reason.startswith("remap from 211")
    # The only alternative is the other split target: the candidates are the targets alone.
    assert [a.node_id for a in stored.mapping.alternatives] == ["215"]
    # P(old node right) x P(target | old node) can only lower the stored confidence.
    assert 0 < stored.mapping.confidence <= 0.97
    assert report.by_change["split"]["rescored"] == 2


def test_split_below_the_threshold_goes_back_to_review_grouped_by_old_node(store: Store) -> None:
    _save(store, [("p1", "Closed-back over-ear headphones", "211", 0.97, "accepted")])
    old = _tree("old.txt")
    report = remap_store(store, old, _tree("split.txt"), min_confidence=1.0)
    assert report.requeued == 1 and report.by_change["split"]["requeued"] == 1
    (item,) = store.items()
    assert item.reason == "remap" and item.state == "open"
    assert item.group_key == "remap 211: Audio > Listening > Headphones"
    assert store.mapping(FEED, "p1").status == "queued"


@pytest.mark.parametrize(
    ("tree_file", "before", "after"),
    [
        # merged_kept.txt: 124 Squash shoes merged into the kept node 123.
        ("merged_kept.txt", "124", "123"),
        # merged_new.txt: 123 and 124 merged into the new node 125.
        ("merged_new.txt", "124", "125"),
        ("merged_new.txt", "123", "125"),
    ],
)
def test_merge_found_by_the_diff_alone_moves_no_product_without_a_model_look(
    store: Store, tree_file: str, before: str, after: str
) -> None:
    _save(store, [("p1", "Indoor court shoes", before, 0.91, "accepted")])
    report = remap_store(store, _tree("old.txt"), _tree(tree_file))
    node, status, version, _ = _node(store, "p1")
    assert (node, version) == (after, "2")
    assert report.by_change["merged"]["automatic"] == 0
    assert report.by_change["merged"]["rescored"] == 1
    assert report.nodes[before]["rescored"] == 1 and report.nodes[before]["moved"] == 0


def _merge_log(tmp_path: Path) -> Path:
    """The change log of merged_new.txt: 123 and 124 merged into the new node 125."""
    line = next(
        raw for raw in (DATA / "merged_new.txt").read_text("utf-8").splitlines()
        if raw.startswith("125 |")
    )
    log = tmp_path / "changes.txt"
    log.write_text(f"@tree-change 1 -> 2\nmerge 123, 124 -> 125\n+ {line}\n", "utf-8")
    return log


@pytest.mark.parametrize("before", ["123", "124"])
def test_merge_stated_by_a_change_log_moves_one_to_one(
    store: Store, tmp_path: Path, before: str
) -> None:
    _save(store, [("p1", "Indoor court shoes", before, 0.91, "accepted")])
    log = load_change_log(_merge_log(tmp_path))
    report = remap_store(store, _tree("old.txt"), _tree("merged_new.txt"), changes=log)
    assert _node(store, "p1") == ("125", "accepted", "2", 0.91)
    assert report.crosswalk == "change log"
    assert report.by_change["merged"]["automatic"] == 1
    entry = report.nodes[before]
    assert entry["source"] == "log" and entry["moved"] == 1
    assert entry["evidence"].startswith("change log line 2")


def test_a_change_log_for_other_trees_is_refused(store: Store, tmp_path: Path) -> None:
    _save(store, [("p1", "Indoor court shoes", "123", 0.91, "accepted")])
    log = load_change_log(_merge_log(tmp_path))
    with pytest.raises(TreeError, match="the log makes node 120 'Trainers' under 100"):
        remap_store(store, _tree("old.txt"), _tree("renamed.txt"), changes=log)


def test_removed_node_is_rescored_over_the_whole_new_tree(store: Store) -> None:
    _save(store, [("p1", "Portable radio with tape player", "213", 0.95, "accepted")])
    old = _tree("old.txt")
    report = remap_store(store, old, _tree("removed.txt"), min_confidence=1.0)
    node, status, version, _ = _node(store, "p1")
    assert node in _tree("removed.txt") and version == "2" and status == "queued"
    assert report.by_change["removed"] == {
        "products": 1,
        "automatic": 0,
        "rescored": 1,
        "requeued": 1,
    }
    (item,) = store.items()
    assert item.group_key == remap_group_key(old, "213")


def test_added_node_moves_nothing(store: Store) -> None:
    _save(store, [("p1", "Earbuds", "211", 0.9, "accepted"), ("p2", "Radio", "212", 0.9, "queued")])
    report = remap_store(store, _tree("old.txt"), _tree("added.txt"))
    assert _node(store, "p1") == ("211", "accepted", "2", 0.9)
    assert _node(store, "p2") == ("212", "queued", "2", 0.9)
    assert report.unchanged == 2 and report.moved_automatically == 0


def test_threshold_comes_from_the_onboarding_run(store: Store) -> None:
    _save(store, [("p1", "Closed-back over-ear headphones", "211", 1.0, "accepted")])
    report = remap_store(store, _tree("old.txt"), _tree("split.txt"))
    assert report.thresholds[FEED]["threshold"] == 0.8
    assert report.thresholds[FEED]["source"].startswith("onboard run")


def test_a_feed_that_accepts_nothing_accepts_no_re_scored_mapping(store: Store) -> None:
    # Onboarding found no threshold for the feed (its calibration allowed none): every product
    # waits for a person, and a remap must not accept one at a default threshold instead.
    _save(
        store,
        [("p1", "Closed-back over-ear headphones", "211", 1.0, "queued")],
        threshold=None,
    )
    report = remap_store(store, _tree("old.txt"), _tree("split.txt"))
    assert report.thresholds[FEED]["threshold"] is None
    assert report.thresholds[FEED]["source"].startswith("onboard run")
    assert report.rescored == 1
    node, status, version, _confidence = _node(store, "p1")
    assert (status, version) == ("queued", "2") and node != "211"


def test_an_audit_raise_is_the_threshold_re_scored_mappings_meet(store: Store) -> None:
    _save(store, [("p1", "Closed-back over-ear headphones", "211", 1.0, "accepted")])
    run = store.start_run("audit-check", feed=FEED)
    store.finish_run(run, summary={"threshold": 0.999})
    report = remap_store(store, _tree("old.txt"), _tree("split.txt"))
    assert report.thresholds[FEED] == {"threshold": 0.999, "source": f"audit-check run {run}"}


# -- rollback and finalise --------------------------------------------------------------------


def _combined_tree(tmp_path: Path) -> CategoryTree:
    """split.txt without node 213: one split and one removal in the same version."""
    text = (DATA / "split.txt").read_text(encoding="utf-8")
    lines = [line for line in text.splitlines() if not line.startswith("213 |")]
    path = tmp_path / "combined.txt"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return load_tree(path)


def _mixed_store(store: Store) -> None:
    _save(
        store,
        [
            ("a1", "Over-ear headphones closed back", "211", 0.95, "accepted"),
            ("a2", "In-ear earbuds", "211", 0.6, "queued"),
            ("a3", "Cassette walkman", "213", 0.9, "accepted"),
            ("a4", "Tape player", "213", 0.99, "accepted"),
            ("a5", "Running shoes", "121", 0.97, "accepted"),
            ("a6", "Snow boots", "113", 0.5, "queued"),
        ],
    )
    _review(store, "a6", "accept")


def test_rollback_restores_the_store_exactly(store: Store, tmp_path: Path) -> None:
    _mixed_store(store)
    before = _dump(store.path)
    report = remap_store(
        store, _tree("old.txt"), _combined_tree(tmp_path), min_confidence=1.0, batch_size=2
    )
    assert report.requeued >= 3
    assert _dump(store.path) != before
    restored = rollback_remap(store)
    assert restored == 6
    assert _dump(store.path) == before
    assert latest_remap(store) is not None and latest_remap(store).state == "rolled_back"  # type: ignore[union-attr]


def test_queued_items_are_grouped_by_old_node(store: Store, tmp_path: Path) -> None:
    _mixed_store(store)
    old = _tree("old.txt")
    report = remap_store(store, old, _combined_tree(tmp_path), min_confidence=1.0)
    groups = {i.group_key for i in store.items() if i.reason == "remap"}
    assert groups == {remap_group_key(old, "211"), remap_group_key(old, "213")}
    # a2 already waited in the queue (low confidence): it is not queued a second time.
    assert [i.reason for i in store.items() if i.product_id == "a2"] == ["low_confidence"]
    assert report.queue_groups[remap_group_key(old, "213")] == 2
    info = store.group_info(FEED, remap_group_key(old, "213"))
    assert info.size == 2 and info.open_items == 2


def test_rollback_is_refused_after_a_new_decision(store: Store, tmp_path: Path) -> None:
    _mixed_store(store)
    remap_store(store, _tree("old.txt"), _combined_tree(tmp_path), min_confidence=1.0)
    item = next(i for i in store.items() if i.reason == "remap")
    store.decide(item.id, "ana", "accept")
    with pytest.raises(StoreError, match="decision.*after remap") as error:
        rollback_remap(store)
    assert "remap-finalise" in str(error.value)


def test_finalise_keeps_the_new_mappings_and_ends_rollback(store: Store, tmp_path: Path) -> None:
    _mixed_store(store)
    remap_store(store, _tree("old.txt"), _combined_tree(tmp_path), min_confidence=1.0)
    after = _dump(store.path)
    assert finalise_remap(store) == 6
    assert _dump(store.path) == after
    with pytest.raises(StoreError, match="no remap to roll back"):
        rollback_remap(store)
    state = latest_remap(store)
    assert state is not None and state.state == "finalised" and state.pending_mappings == 0


def test_second_remap_waits_for_the_first_to_be_finalised(store: Store) -> None:
    _save(store, [("p1", "Trail sneakers", "121", 0.93, "accepted")])
    remap_store(store, _tree("old.txt"), _tree("renamed.txt"))
    with pytest.raises(StoreError, match="not finalised yet"):
        remap_store(store, _tree("old.txt"), _tree("moved.txt"))


def test_audit_log_records_remap_rollback_and_finalise(store: Store) -> None:
    _save(store, [("p1", "Trail sneakers", "121", 0.93, "accepted")])
    remap_store(store, _tree("old.txt"), _tree("renamed.txt"), actor="ana")
    rollback_remap(store, actor="ana")
    remap_store(store, _tree("old.txt"), _tree("renamed.txt"), actor="ana")
    finalise_remap(store, actor="ana")
    actions = [e.action for e in store.audit_log() if e.action.startswith("remap")]
    assert actions == [
        "remap",
        "remap_done",
        "remap_rollback",
        "remap",
        "remap_done",
        "remap_finalise",
    ]


def test_summary_is_saved_in_the_run(store: Store) -> None:
    _save(store, [("p1", "Trail sneakers", "121", 0.93, "accepted")])
    report = remap_store(store, _tree("old.txt"), _tree("renamed.txt"))
    run = next(r for r in store.runs() if r.kind == "remap")
    assert run.summary["mappings"] == 1 and run.id == report.run_id
    assert run.summary["no_review_share"] == 1.0


# -- the model follows the tree ---------------------------------------------------------------


def test_remapped_catalog_gives_training_examples_on_the_new_tree(store: Store) -> None:
    _save(
        store,
        [
            ("p1", "Indoor court shoes", "124", 0.91, "accepted"),
            ("p2", "Snow boots", "113", 0.5, "queued"),
        ],
    )
    new = _tree("merged_kept.txt")
    assert list(remapped_examples(store, new)) == []
    remap_store(store, _tree("old.txt"), new)
    examples = [(p.product_id, node) for p, node in remapped_examples(store, new)]
    assert examples == [("p1", "123")]  # the queued product is not settled yet


def _tiny_model(tree: CategoryTree) -> CategoryModel:
    from catmap.classify.features import ProductTexts

    rows = labelled_rows(120)
    texts = ProductTexts(
        [r["title"] for r in rows],
        [r["retailer_category"] for r in rows],
        [r["brand"] for r in rows],
        [r["description"] for r in rows],
    )
    return CategoryModel(tree=tree, min_df=1).fit(texts, [r["gold_node"] for r in rows])


def test_old_tree_model_is_refused_on_the_new_tree(tmp_path: Path) -> None:
    old = load_tree(write_tree(tmp_path / "v1", version=1))
    new = load_tree(write_tree(tmp_path / "v2", version=2))
    save_model(_tiny_model(old), tmp_path / "model")
    with pytest.raises(ModelTreeMismatch, match="tree version 1.*version 2") as error:
        load_model(tmp_path / "model", new)
    assert str(tmp_path / "v1") in str(error.value)  # the model's tree file is named
    assert str(tmp_path / "v2") in str(error.value)
    with pytest.raises(ValueError, match="new tree"):
        RemapScorer(new, new_model=_tiny_model(old))


# -- attributes follow the new node -----------------------------------------------------------

_LANGS = "en: {w} | fr: {w} | de: {w} | es: {w}"
# id, parent, name, audience, restriction (version 1); version 2 moves 311 under the restricted
# Spirits (320), 321 out of it to Soft drinks (310) and 411 from Clothing to Gifts (no audience).
_FLAG_TREE_V1 = (
    ("300", "-", "Food and drink", "none", "-"),
    ("310", "300", "Soft drinks", ".", "-"),
    ("311", "310", "Cocktail mixers", ".", "-"),
    ("320", "300", "Spirits", ".", "alcohol"),
    ("321", "320", "Alcohol-free spirits", ".", "-"),
    ("322", "320", "Gin", ".", "-"),
    ("400", "-", "Clothing", "who=female,male,unisex age=adult,kids,baby", "-"),
    ("410", "400", "Tops", ".", "-"),
    ("411", "410", "T-shirts", ".", "-"),
    ("412", "410", "Shirts", ".", "-"),
    ("500", "-", "Gifts", "none", "-"),
    ("510", "500", "Keepsake boxes", ".", "-"),
    ("511", "510", "Memory boxes", ".", "-"),
)
_FLAG_MOVES = {"311": "320", "321": "310", "411": "510"}


def _flag_tree(tmp_path: Path, version: int) -> CategoryTree:
    lines = [f"@tree-version {version}"]
    for node, parent, name, audience, restriction in _FLAG_TREE_V1:
        if version == 2:
            parent = _FLAG_MOVES.get(node, parent)
        words = _LANGS.format(w=name.lower())
        lines.append(f"{node} | {parent} | {name} | {audience} | {restriction} | {words}")
    path = tmp_path / f"flags-v{version}.txt"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return load_tree(path)


def _save_with_attributes(
    store: Store, tree: CategoryTree, products: list[tuple[str, str, str, str]]
) -> None:
    """Save (product id, title, node, status) with attributes extracted as onboarding does."""
    extractor = AttributeExtractor(brands=BrandDictionary([]), tree=tree)
    run = store.start_run("onboard", feed=FEED)
    rows = []
    for pid, title, node, status in products:
        product = Product(product_id=pid, title=title, category_path=("Shop", "Things"))
        rows.append(
            MappedRow(
                product=product,
                mapping=Mapping(node_id=node, confidence=0.95, method="model"),
                attributes=extractor.extract(product, node),
                status=status,
                group_key="Shop > Things",
            )
        )
    store.save_mapped(FEED, run, rows, model_version="m1", tree_version=str(tree.version))
    store.finish_run(run, summary={"threshold": 0.8})


def _attributes(store: Store, product_id: str) -> tuple[str, str, str]:
    stored = store.mapping(FEED, product_id).attributes
    return stored.restriction, stored.who, stored.age


def test_restriction_and_audience_follow_the_new_node(store: Store, tmp_path: Path) -> None:
    old, new = _flag_tree(tmp_path, 1), _flag_tree(tmp_path, 2)
    _save_with_attributes(
        store,
        old,
        [
            ("mixer", "Tonic water mixer", "311", "accepted"),
            ("free", "Juniper botanical drink", "321", "accepted"),
            ("gin", "Juniper gin", "322", "accepted"),
            ("tee", "Women's cotton t-shirt", "411", "accepted"),
        ],
    )
    # Before: the flag comes from Spirits (320) for its leaves; the t-shirt is for women adults.
    assert _attributes(store, "mixer")[0] == ""
    assert _attributes(store, "free")[0] == "alcohol"
    assert _attributes(store, "tee") == ("", "female", "adult")

    remap_store(store, old, new)

    # Moved under the restricted Spirits node: flagged.
    assert _attributes(store, "mixer")[0] == "alcohol"
    # Moved out of it, to Soft drinks: no longer flagged.
    assert _attributes(store, "free")[0] == ""
    # Not moved: still flagged.
    assert _attributes(store, "gin")[0] == "alcohol"
    # Gifts says gender and age do not apply ("none" audience).
    assert _attributes(store, "tee") == ("", "not_applicable", "not_applicable")


def test_reviewed_audience_kept_only_where_it_applies(store: Store, tmp_path: Path) -> None:
    old, new = _flag_tree(tmp_path, 1), _flag_tree(tmp_path, 2)
    _save_with_attributes(store, old, [("tee", "Cotton t-shirt", "411", "queued")])
    item = next(i for i in store.items() if i.product_id == "tee")
    store.decide(item.id, "ana", "accept", who="male", age="kids")
    remap_store(store, old, new)
    stored = store.mapping(FEED, "tee")
    assert stored.status == "reviewed" and stored.mapping.node_id == "411"
    assert _attributes(store, "tee") == ("", "not_applicable", "not_applicable")


def test_rollback_restores_the_attributes_too(store: Store, tmp_path: Path) -> None:
    old, new = _flag_tree(tmp_path, 1), _flag_tree(tmp_path, 2)
    _save_with_attributes(
        store,
        old,
        [
            ("mixer", "Tonic water mixer", "311", "accepted"),
            ("free", "Juniper botanical drink", "321", "accepted"),
            ("tee", "Women's cotton t-shirt", "411", "accepted"),
        ],
    )
    before = _dump(store.path)
    remap_store(store, old, new)
    assert _dump(store.path) != before
    rollback_remap(store)
    assert _dump(store.path) == before


def test_remapped_catalog_is_a_labelled_feed_catmap_can_train_on(
    store: Store, tmp_path: Path
) -> None:
    from catmap.classify.training import read_labelled
    from catmap.jobs.remap import write_remapped_catalog

    _save(
        store,
        [
            ("p1", "=HYPERLINK(0) Indoor court shoes", "124", 0.91, "accepted"),
            ("p2", "Snow boots", "113", 0.5, "queued"),
        ],
    )
    new = _tree("merged_kept.txt")
    remap_store(store, _tree("old.txt"), new)
    catalog = tmp_path / "remapped.jsonl"
    assert write_remapped_catalog(store, new, catalog) == 1
    # Machine-only JSON Lines: no spreadsheet formula cell, and the title reads back as it was.
    assert catalog.read_text(encoding="utf-8").startswith('{"product_id": "p1"')
    data = read_labelled([catalog], tree=new, project=tmp_path)
    rows = data.train + data.valid + data.test
    assert [(product.product_id, label) for product, label in rows] == [("p1", "123")]
    assert rows[0][0].title == "=HYPERLINK(0) Indoor court shoes"
