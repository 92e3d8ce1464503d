"""Tests of one tree version per store (catmap.jobs._remap_versions and the checks that use it):
onboarding, review, undo and export refuse a mix; export reads each path on its mapping's
version; a property test runs random sequences of onboard, remap, review, undo, finalise and
rollback and finds no store holding two versions."""

from __future__ import annotations

import csv
from collections.abc import Iterator
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from catmap.errors import EXIT_MODEL, StoreError, TreeVersionMismatch
from catmap.jobs._remap_versions import (
    check_onboarding,
    check_one_version,
    feed_tree_versions,
    mapping_tree_versions,
    record_feed_versions,
)
from catmap.jobs.export import export_feed
from catmap.jobs.remap import finalise_remap, remap_store, rollback_remap
from catmap.records import Mapping, Product
from catmap.store import MappedRow, Store
from catmap.tree.changelog import load_change_log
from catmap.tree.taxonomy import CategoryTree, default_tree_path, load_default_tree, load_tree

DATA = Path(__file__).parent / "data" / "treediff"
OLD = load_tree(DATA / "old.txt")  # version 1
NEW = load_tree(DATA / "split.txt")  # version 2: 211 Headphones split into 214 and 215
TREES = {"1": OLD, "2": NEW}
# Products on nodes both versions keep (121 Running shoes, 212 Radios) and on 211 (v1 only).
TITLES = {"121": "Light running shoes", "212": "Portable radio", "211": "In-ear earbuds"}


@pytest.fixture()
def store(tmp_path: Path) -> Iterator[Store]:
    with Store.open(tmp_path / "store.sqlite") as opened:
        yield opened


def _onboard(store: Store, feed: str, version: str, *, queued: bool = True) -> None:
    """What onboarding does to the store: the check, the mappings, the feed's version."""
    check_onboarding(store, version)
    store.add_feed(feed, source_path=f"{feed}.csv")
    run = store.start_run("onboard", feed=feed)
    nodes = ["121", "212"] + (["211"] if version == "1" else ["214"])
    rows = [
        MappedRow(
            product=Product(product_id=f"{feed}-{n}", title=TITLES.get(n, "Over-ear headphones"),
                            category_path=("Shop",)),
            mapping=Mapping(node_id=n, confidence=0.5 if queued else 0.95, method="model"),
            status="queued" if queued else "accepted",
            group_key="Shop",
        )
        for n in nodes
    ]
    store.save_mapped(feed, run, rows, model_version="m", tree_version=version)
    record_feed_versions(store, version, feed)
    store.finish_run(run, summary={"threshold": 0.8})


def _versions(store: Store) -> set[str]:
    return {v for v in mapping_tree_versions(store) if v} | {
        v for v in feed_tree_versions(store).values() if v
    }


def test_onboarding_is_refused_while_a_remap_is_pending(store: Store) -> None:
    _onboard(store, "shop-a", "1")
    remap_store(store, OLD, NEW)
    with pytest.raises(TreeVersionMismatch, match="cannot onboard while remap 1") as caught:
        _onboard(store, "shop-b", "2")
    assert caught.value.exit_code == EXIT_MODEL == 4
    assert "remap-finalise" in str(caught.value) and "then onboard again" in str(caught.value)
    finalise_remap(store)
    _onboard(store, "shop-b", "2")
    assert _versions(store) == {"2"}


def test_onboarding_on_another_version_than_the_store_s_is_refused(store: Store) -> None:
    _onboard(store, "shop-a", "1")
    with pytest.raises(TreeVersionMismatch, match="mappings are on version 1"):
        _onboard(store, "shop-b", "2")
    assert feed_tree_versions(store) == {"shop-a": "1"}


def test_a_store_that_mixes_versions_is_refused_with_the_counts(store: Store) -> None:
    _onboard(store, "shop-a", "1")
    run = store.start_run("onboard", feed="shop-a")
    product = Product(product_id="odd", title="Radio", category_path=("Shop",))
    store.save_mapped(
        "shop-a",
        run,
        [
            MappedRow(
                product=product,
                mapping=Mapping("212", 0.9, "model"),
                status="accepted",
                group_key="Shop",
            )
        ],
        model_version="m", tree_version="2",
    )
    with pytest.raises(TreeVersionMismatch, match="cannot review: the store mixes") as caught:
        check_one_version(store, "review")
    assert "3 on version 1, 1 on version 2" in str(caught.value)


def test_undo_after_a_finalised_remap_is_refused(store: Store) -> None:
    _onboard(store, "shop-a", "1")
    item = next(i for i in store.items() if i.product_id == "shop-a-121")
    store.decide(item.id, "ana", "accept")
    remap_store(store, OLD, NEW)
    finalise_remap(store)
    with pytest.raises(TreeVersionMismatch, match="decision 1 was made on tree version 1"):
        store.undo_last("ana")
    assert mapping_tree_versions(store) == {"2": 3}


def test_export_reads_every_path_on_the_mapping_s_version(store: Store, tmp_path: Path) -> None:
    """The found case: after remap and finalise, export printed version-1 paths."""
    v1, v2 = load_default_tree(1), load_default_tree(2)
    store.add_feed("shop-a", source_path="shop-a.csv")
    run = store.start_run("onboard", feed="shop-a")
    # 1530 renamed, 3713 moved, 4033 merged into 4031, 5016 removed (-> 5010): paths change.
    nodes = {"p1": "1530", "p2": "3713", "p3": "4033", "p4": "5016", "p5": "1011"}
    rows = [
        MappedRow(
            product=Product(product_id=pid, title=v1[node].name, category_path=("Shop",)),
            mapping=Mapping(node, 0.99, "model"),
            status="accepted",
            group_key="Shop",
        )
        for pid, node in nodes.items()
    ]
    store.save_mapped("shop-a", run, rows, model_version="m", tree_version="1")
    log = load_change_log(default_tree_path(1).parent / "changes-v1-v2.txt")
    remap_store(store, v1, v2, changes=log, min_confidence=0.0)
    finalise_remap(store)
    # The model's tree is still version 1: export must not read the paths on it.
    result = export_feed(store, "shop-a", tmp_path / "out", tree=v1, project=tmp_path)
    assert result.tree_version == "1"  # the tree given; each row is read on its own version
    with result.products.open(encoding="utf-8", newline="") as handle:
        exported = list(csv.DictReader(handle))
    assert len(exported) == 5
    for row in exported:
        stored = store.mapping("shop-a", row["product_id"])
        assert stored.tree_version == "2"
        assert row["node_path"] == v2.path_text(stored.mapping.node_id)


# -- any sequence of steps leaves one version ---------------------------------------------------

_STEPS = st.lists(
    st.sampled_from(
        ["onboard 1", "onboard 2", "remap", "review", "undo", "finalise", "rollback"]
    ),
    min_size=1,
    max_size=8,
)


def _current(store: Store) -> str | None:
    versions = _versions(store)
    return versions.pop() if versions else None


def _step(store: Store, step: str, feeds: list[str]) -> None:
    """Run one step; a refusal (a catmap error) is a fine answer, a mix is not."""
    try:
        if step.startswith("onboard"):
            name = f"shop-{len(feeds)}"
            _onboard(store, name, step.split()[1])
            feeds.append(name)
        elif step == "remap":
            current = _current(store)
            if current is not None:
                target = "2" if current == "1" else "1"
                remap_store(store, TREES[current], TREES[target], min_confidence=0.0)
        elif step == "review":
            check_one_version(store, "review")
            item = next((i for i in store.items() if i.state == "open"), None)
            if item is not None:
                store.decide(item.id, "ana", "accept")
        elif step == "undo":
            store.undo_last("ana")
        elif step == "finalise":
            finalise_remap(store)
        else:
            rollback_remap(store)
    except (TreeVersionMismatch, StoreError):
        pass


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(steps=_STEPS)
def test_no_sequence_of_steps_mixes_tree_versions(tmp_path_factory: pytest.TempPathFactory,
                                                  steps: list[str]) -> None:
    path = tmp_path_factory.mktemp("steps") / "store.sqlite"
    feeds: list[str] = []
    with Store.open(path) as store:
        for step in steps:
            _step(store, step, feeds)
            assert len(_versions(store)) <= 1, (steps, mapping_tree_versions(store))
            version = _current(store)
            if version is not None:
                tree: CategoryTree = TREES[version]
                nodes = store._read("SELECT DISTINCT node_id FROM mappings").fetchall()
                assert all(r[0] in tree for r in nodes if r[0]), (steps, version)
