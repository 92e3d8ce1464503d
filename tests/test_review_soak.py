"""The seeded soak of two reviewers sharing one queue (catmap/review/soak.py): after thousands
of random accepts, choices, undos, group decisions, skips and quits, every live decision is in
its mapping and no item is decided twice. A longer run: benchmarks/soak_review.py."""

from __future__ import annotations

from pathlib import Path

from catmap.review.soak import (
    SoakClock,
    SoakReport,
    build_soak_store,
    check_store,
    run_soak,
    soak_file_stores,
)
from catmap.store import Store


def test_two_reviewers_3000_actions_keep_every_promise() -> None:
    clock = SoakClock()
    with Store.open(":memory:", clock=clock) as store:
        build_soak_store(store, 1500, groups=150, seed=0)
        report = run_soak([store], actions=3000, seed=0, clock=clock)
    assert report.problems == []
    assert report.total == 3000
    assert set(report.actions) >= {"accept", "choose", "undo", "group", "skip", "quit"}
    assert report.idle < 30  # the queue never ran dry: the reviewers kept meeting
    # The run reached the cases the checks are for: undos refused because the other reviewer
    # decided the product since, decisions undone, products decided more than once.
    assert report.refused["undo"] > 0
    assert report.undone > 100 and report.decisions > 1000


def test_two_reviewers_on_separate_connections(tmp_path: Path) -> None:
    clock = SoakClock()
    stores = soak_file_stores(tmp_path, products=200, groups=20, seed=1, reviewers=2, clock=clock)
    try:
        report = run_soak(stores, actions=300, seed=1, clock=clock)
    finally:
        for store in stores:
            store.close()
    assert report.problems == [] and report.total == 300


def test_the_checks_catch_a_mapping_that_lost_its_decision() -> None:
    # The checks themselves must see a broken store: a decided product put back by hand.
    clock = SoakClock()
    with Store.open(":memory:", clock=clock) as store:
        build_soak_store(store, 20, groups=2, seed=0)
        item = store.claim_next("ana")
        assert item is not None
        store.decide(item.id, "ana", "choose", node_id="1011")
        with store._transaction() as conn:
            conn.execute(
                "UPDATE mappings SET status = 'queued' WHERE product_id = ?", (item.product_id,)
            )
        problems = check_store(store, SoakReport()).problems
    assert any(item.product_id in p and "newest live decision" in p for p in problems)
