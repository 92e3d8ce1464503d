"""Two processes claiming from one store file never receive the same item."""

from __future__ import annotations

import multiprocessing
from decimal import Decimal
from pathlib import Path

from catmap.records import Attributes, Mapping, Product
from catmap.store import MappedRow, Store

ITEMS = 120


def _claim_until_empty(path: str, reviewer: str, out: multiprocessing.Queue[list[int]]) -> None:
    claimed: list[int] = []
    with Store.open(path, timeout=60.0) as store:
        while (item := store.claim_next(reviewer, lease_seconds=3600)) is not None:
            claimed.append(item.id)
            store.decide(item.id, reviewer, "accept")
    out.put(claimed)


def _seed(path: Path) -> None:
    rows = [
        MappedRow(
            Product(product_id=f"q{i:04d}", title=f"Tessaly mug {i}", price=Decimal("4.00")),
            Mapping("3120", 0.3 + (i % 50) / 100, "model"),
            Attributes(),
            status="queued",
            group_key="Kitchen > Mugs",
            priority=(i % 50) / 100,
        )
        for i in range(ITEMS)
    ]
    with Store.open(path) as store:
        feed = store.add_feed("shop-c")
        store.save_mapped(feed, None, rows)


def test_two_processes_never_claim_the_same_item(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    _seed(path)
    context = multiprocessing.get_context("fork")
    out: multiprocessing.Queue[list[int]] = context.Queue()
    workers = [
        context.Process(target=_claim_until_empty, args=(str(path), name, out))
        for name in ("ann", "bob")
    ]
    for worker in workers:
        worker.start()
    results = [out.get(timeout=120) for _ in workers]
    for worker in workers:
        worker.join(timeout=60)
        assert worker.exitcode == 0
    first, second = results
    assert not set(first) & set(second)
    assert len(first) + len(second) == ITEMS
    assert len(set(first) | set(second)) == ITEMS
    with Store.open(path) as store:
        summary = store.queue_summary()
        assert (summary.open, summary.claimed, summary.done) == (0, 0, ITEMS)
        decisions = store.decisions()
        assert len(decisions) == ITEMS and len({d.item_id for d in decisions}) == ITEMS
