"""Tests for the candidate brands' review items (catmap.store.brand_items): one item per
candidate brand per feed, placed on the queued item of highest priority among its products or
else on its first product, the same one on every run; its priority ranks it behind three
quarters of the feed's low-confidence items; a verdict on the brand settles it in the same
transaction and setting the brand back brings it back; a node decision without a verdict keeps
the brand waiting; an old store migrates.

The store is built here: one feed whose products carry two invented candidate brands,
"Nimbra" (some of its products queued for their node) and "Solvex" (all accepted), beside
products of a dictionary brand queued for their node at known priorities."""

from __future__ import annotations

import sqlite3
from collections.abc import Iterator
from decimal import Decimal
from pathlib import Path

import numpy as np
import pytest

from catmap.attributes import BrandRegistry
from catmap.decide.queue import brand_candidate_priority
from catmap.records import Alternative, Attributes, Mapping, Product
from catmap.review import confirm_brand, reject_brand, reset_brand
from catmap.store import MappedRow, Store
from catmap.store.schema import SCHEMA_VERSION, migrate

FEED = "shop-a"
# Low-confidence priorities of the dictionary brand's products.
LOW = (0.9, 0.7, 0.5, 0.3, 0.2, 0.1, 0.05)


def _row(
    product_id: str,
    brand: str,
    brand_status: str,
    *,
    status: str = "accepted",
    priority: float = 0.0,
) -> MappedRow:
    product = Product(
        product_id=product_id, title=f"{brand} walking boot {product_id}", brand=brand,
        category_path=("Shoes", "Boots"), price=Decimal("59.90"), currency="EUR",
    )  # fmt: skip
    return MappedRow(
        product=product,
        mapping=Mapping("1523", 0.99 if status == "accepted" else 0.4, "model",
                        (Alternative("1524", 0.2),)),
        attributes=Attributes(
            brand=brand, brand_confidence=0.7, brand_status=brand_status,
            brand_evidence=f"title lead '{brand.lower()}' [candidate]"
            if brand_status == "candidate" else "field exact",
        ),
        status=status,
        group_key="Shoes > Boots",
        priority=priority,
        reasons=("low_confidence",) if status == "queued" else (),
    )  # fmt: skip


def _rows() -> list[MappedRow]:
    return [
        # Saved in this order: Solvex's first product in the feed is S-12, not S-11.
        _row("S-12", "Solvex", "candidate"),
        _row("S-11", "Solvex", "candidate"),
        _row("N-01", "Nimbra", "candidate"),
        _row("N-02", "Nimbra", "candidate", status="queued", priority=0.4),
        _row("N-03", "Nimbra", "candidate", status="queued", priority=0.6),
        _row("N-04", "Nimbra", "candidate"),
        *(
            _row(f"D-{n:02d}", "Lindor", "dictionary", status="queued", priority=p)
            for n, p in enumerate(LOW, start=1)
        ),
    ]


def _registry(store: Store) -> None:
    registry = BrandRegistry()
    for name in ("Nimbra", "Solvex"):
        registry.observe(name, feed=FEED)
    store.save_brand_records(registry.to_dict()["brands"])


def _build(store: Store, rows: list[MappedRow] | None = None) -> None:
    feed = store.add_feed(FEED, source_path=f"{FEED}.csv")
    run = store.start_run("onboard", feed=feed)
    store.save_mapped(feed, run, rows if rows is not None else _rows())
    store.finish_run(run, summary={"read": 1, "kept": 1, "rejected": 0})
    _registry(store)


@pytest.fixture
def store() -> Iterator[Store]:
    opened = Store.open(":memory:")
    _build(opened)
    yield opened
    opened.close()


BRANDS = {"Nimbra": ["Nimbra"], "Solvex": ["Solvex"]}


def _brand_items(store: Store) -> dict[str, tuple[int, str, tuple[str, ...], str, float]]:
    """Each waiting brand item: brand → (id, product, reasons, state, priority)."""
    rows = store._conn.execute(
        "SELECT id, product_id, brand, state, priority FROM review_items "
        "WHERE brand != '' AND state != 'done'"
    ).fetchall()
    out = {}
    for r in rows:
        item = store.item(r["id"])
        if "brand_candidate" in item.reasons:
            out[r["brand"]] = (r["id"], r["product_id"], item.reasons, r["state"], r["priority"])
    return out


def _statuses(store: Store) -> dict[str, str]:
    return {p.product_id: m.status for p, m in store.mappings(FEED)}


# -- the priority ------------------------------------------------------------------------------


def test_the_priority_ranks_behind_three_quarters_of_the_low_confidence_items() -> None:
    values = [0.05, 0.9, 0.3, 0.7, 0.1, 0.5, 0.2, 1.4]
    priority = brand_candidate_priority(values)
    # numpy's default (linear) percentile, counted from the bottom: the 25th.
    assert priority == pytest.approx(float(np.percentile(values, 25)))
    ahead = sum(v >= priority for v in values)
    assert ahead / len(values) >= 0.75
    assert sum(v > priority for v in values) / len(values) <= 0.75
    assert brand_candidate_priority([]) == 0.3
    assert brand_candidate_priority([0.8]) == 0.8
    with pytest.raises(ValueError, match="behind"):
        brand_candidate_priority(values, behind=1.5)


# -- placing -----------------------------------------------------------------------------------


def test_one_item_per_brand_joined_to_the_best_queued_item_else_on_the_first_product(
    store: Store,
) -> None:
    before = _statuses(store)
    placed = store.place_brand_items(FEED, BRANDS, run_id=None)
    items = _brand_items(store)
    assert placed == [items["Nimbra"][0], items["Solvex"][0]]
    # Nimbra rides on N-03's low-confidence item (priority 0.6 beats N-02's 0.4).
    assert items["Nimbra"][1:3] == ("N-03", ("low_confidence", "brand_candidate"))
    assert items["Nimbra"][4] == pytest.approx(0.6)
    # Solvex has no queued product: a brand-only item on the first product saved.
    assert items["Solvex"][1:4] == ("S-12", ("brand_candidate",), "open")
    low = [0.4, 0.6, *LOW]
    assert items["Solvex"][4] == pytest.approx(float(np.percentile(low, 25)))
    # The brand never changes a mapping's status.
    assert _statuses(store) == before
    (entry,) = [e for e in store.audit_log() if e.action == "queue_brand_items"]
    assert sorted(entry.detail["placed"]) == sorted(placed)
    assert store.brands_waiting() == ["Nimbra", "Solvex"]


def test_a_priority_given_places_brand_only_items_there_and_a_joined_item_keeps_its_own(
    store: Store,
) -> None:
    store.place_brand_items(FEED, BRANDS, priority=0.02)
    items = _brand_items(store)
    assert items["Solvex"][2] == ("brand_candidate",)
    assert items["Solvex"][4] == pytest.approx(0.02)
    # Nimbra joined N-03's item, worth more than the priority given: it keeps its 0.6.
    assert items["Nimbra"][1] == "N-03" and items["Nimbra"][4] == pytest.approx(0.6)
    (entry,) = [e for e in store.audit_log() if e.action == "queue_brand_items"]
    assert entry.detail["priority"] == pytest.approx(0.02)
    # Below every other waiting item: the brand-only item comes last in the queue.
    others = [i.priority for i in store.items(state="open") if i.id != items["Solvex"][0]]
    assert len(others) == len(LOW) + 2 and min(others) > 0.02  # D-01..D-07, N-02, N-03


def test_placing_again_and_onboarding_again_choose_the_same_items(store: Store) -> None:
    first = store.place_brand_items(FEED, BRANDS)
    items = len(store.items())
    assert store.place_brand_items(FEED, BRANDS) == first
    # The feed saved again (a re-run): the same products are chosen, nothing is added.
    run = store.start_run("onboard", feed=FEED)
    store.save_mapped(FEED, run, list(reversed(_rows())))
    assert store.place_brand_items(FEED, BRANDS) == first
    assert len(store.items()) == items
    assert _brand_items(store)["Nimbra"][2] == ("low_confidence", "brand_candidate")
    # Nothing changed on the second placing: no second audit entry.
    assert len([e for e in store.audit_log() if e.action == "queue_brand_items"]) == 1


def test_a_brand_no_longer_a_candidate_in_the_feed_loses_its_item(store: Store) -> None:
    store.place_brand_items(FEED, BRANDS)
    solvex = _brand_items(store)["Solvex"][0]
    # A re-run reads Solvex from the dictionary now.
    rows = [r for r in _rows() if r.attributes.brand != "Solvex"]
    rows += [_row("S-12", "Solvex", "dictionary"), _row("S-11", "Solvex", "dictionary")]
    run = store.start_run("onboard", feed=FEED)
    store.save_mapped(FEED, run, rows)
    store.place_brand_items(FEED, {"Nimbra": ["Nimbra"]}, run_id=run)
    item = store.item(solvex)
    assert item.state == "done"
    assert item.withdrawn_reason == (
        f"the brand is no longer a candidate in this feed (onboard run {run})"
    )
    assert set(_brand_items(store)) == {"Nimbra"}


# -- verdicts ----------------------------------------------------------------------------------


def test_a_verdict_settles_the_items_and_a_reset_brings_them_back(store: Store) -> None:
    store.place_brand_items(FEED, BRANDS)
    items = _brand_items(store)
    solvex, nimbra = items["Solvex"][0], items["Nimbra"][0]
    before = _statuses(store)

    verdict = confirm_brand(store, "Solvex", actor="ana")
    assert verdict.items == (solvex,)
    item = store.item(solvex)
    assert (item.state, item.withdrawn_reason) == ("done", "brand 'Solvex' confirmed by ana")
    (entry,) = [e for e in store.audit_log() if e.action == "brand_confirmed"]
    assert entry.detail["items"] == [solvex]

    verdict = reject_brand(store, "Nimbra", actor="ana")
    assert verdict.items == (nimbra,)
    # Queued for its node too: it stays open for that, without the brand.
    item = store.item(nimbra)
    assert (item.state, item.reasons) == ("open", ("low_confidence",))
    assert store.brands_waiting() == []
    assert _statuses(store) == before

    back = reset_brand(store, "Solvex", actor="ana")
    assert back.items == (solvex,)
    item = store.item(solvex)
    assert (item.state, item.reasons, item.withdrawn_reason) == (
        "open",
        ("brand_candidate",),
        None,
    )
    back = reset_brand(store, "Nimbra", actor="ana")
    assert back.items == (nimbra,)
    assert store.item(nimbra).reasons == ("low_confidence", "brand_candidate")
    (entry,) = [
        e for e in store.audit_log()
        if e.action == "brand_reset" and e.detail["brand"] == "Nimbra"
    ]  # fmt: skip
    assert entry.detail["items"] == [nimbra]
    assert store.brands_waiting() == ["Nimbra", "Solvex"]
    assert _statuses(store) == before


def test_the_undo_of_a_verdict_gives_the_item_back_to_the_reviewer(store: Store) -> None:
    store.place_brand_items(FEED, BRANDS)
    solvex = _brand_items(store)["Solvex"][0]
    verdict = reject_brand(store, "Solvex", actor="ana")
    back = reset_brand(
        store, "Solvex", actor="ana", taking_back=verdict.audit_id, claim_items_for="ana"
    )
    item = store.item(solvex)
    assert back.items == (solvex,)
    assert (item.state, item.claimed_by, item.reasons) == ("claimed", "ana", ("brand_candidate",))
    assert {m.attributes.brand for p, m in store.mappings(FEED) if p.product_id[0] == "S"} == {
        "Solvex"
    }


# -- decisions without a verdict -------------------------------------------------------------


def _claim(store: Store, item_id: int, reviewer: str = "bo") -> None:
    store._conn.execute(
        "UPDATE review_items SET state = 'claimed', claimed_by = ?, "
        "lease_until = '2999-01-01T00:00:00.000000Z' WHERE id = ?",
        (reviewer, item_id),
    )


def test_accepting_the_node_of_a_brand_only_item_keeps_it_waiting(store: Store) -> None:
    store.place_brand_items(FEED, BRANDS)
    solvex = _brand_items(store)["Solvex"][0]
    _claim(store, solvex)
    store.decide(solvex, "bo", "accept")
    item = store.item(solvex)
    # The node is reviewed, the brand still waits on the same item, held by the reviewer.
    assert (item.state, item.claimed_by, item.reasons) == ("claimed", "bo", ("brand_candidate",))
    assert store.mapping(FEED, "S-12").status == "reviewed"
    assert store.mapping(FEED, "S-12").attributes.brand_status == "candidate"
    # A later run keeps that item.
    assert store.place_brand_items(FEED, BRANDS)[1] == solvex
    # The verdict then settles it.
    confirm_brand(store, "Solvex", actor="bo")
    assert store.item(solvex).state == "done"


def test_deciding_a_joined_item_hands_the_brand_to_a_brand_only_item(store: Store) -> None:
    store.place_brand_items(FEED, BRANDS)
    nimbra = _brand_items(store)["Nimbra"][0]
    _claim(store, nimbra)
    store.decide(nimbra, "bo", "choose", node_id="1524")
    decided = store.item(nimbra)
    # The decided item keeps what it was queued for; the brand waits on N-03, held by bo.
    assert (decided.state, decided.reasons) == ("done", ("low_confidence", "brand_candidate"))
    waiting = _brand_items(store)["Nimbra"]
    assert waiting[1:4] == ("N-03", ("brand_candidate",), "claimed")
    # At the feed's brand priority, not the decided item's.
    assert waiting[4] == pytest.approx(brand_candidate_priority([0.4, *LOW]))
    assert store.claim_next("bo").id == waiting[0]  # type: ignore[union-attr]
    # Undo folds the brand back into the reopened item.
    assert store.undo_last("bo") == [nimbra]
    assert _brand_items(store)["Nimbra"][:3] == (
        nimbra,
        "N-03",
        ("low_confidence", "brand_candidate"),
    )
    assert store.item(waiting[0]).state == "done"


def test_correcting_the_brand_moves_the_brand_item_to_another_product(store: Store) -> None:
    store.place_brand_items(FEED, BRANDS)
    solvex = _brand_items(store)["Solvex"][0]
    _claim(store, solvex)
    store.decide(solvex, "bo", "accept", brand="Solveks")
    assert store.item(solvex).state == "done"
    assert _brand_items(store)["Solvex"][1:3] == ("S-11", ("brand_candidate",))


# -- migration ---------------------------------------------------------------------------------


def test_a_store_of_version_12_migrates_with_its_items(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA foreign_keys=ON")
    assert migrate(conn, target=12) == 12
    conn.close()
    with Store.open(path, migrate_schema=False) as old:
        feed = old.add_feed(FEED, source_path=f"{FEED}.csv")
        run = old.start_run("onboard", feed=feed)
        old.save_mapped(feed, run, _rows())
        before = [(i.id, i.product_id, i.reasons, i.state) for i in old.items()]
    conn = sqlite3.connect(path, isolation_level=None)
    with pytest.raises(sqlite3.IntegrityError):  # version 12 does not know the reason
        conn.execute(
            "INSERT INTO review_items (feed_id, product_id, reason, created_at) "
            "VALUES (1, 'S-12', 'brand_candidate', 'x')"
        )
    conn.close()
    with Store.open(path) as store:
        assert store.schema_version == SCHEMA_VERSION
        assert [(i.id, i.product_id, i.reasons, i.state) for i in store.items()] == before
        assert {r[0] for r in store._conn.execute("SELECT brand FROM review_items")} == {""}
        _registry(store)
        store.place_brand_items(FEED, BRANDS)
        assert set(_brand_items(store)) == {"Nimbra", "Solvex"}


def test_a_group_decision_leaves_the_brand_item_to_a_person(store: Store) -> None:
    store.place_brand_items(FEED, BRANDS)
    nimbra = _brand_items(store)["Nimbra"][0]
    decisions = store.accept_group("bo", FEED, "Shoes > Boots")
    # Every low-confidence item of the group is settled in bulk, not the one with the brand.
    assert nimbra not in {d.item_id for d in decisions}
    assert len(decisions) == len(LOW) + 1  # D-01..D-07 and N-02
    item = store.item(nimbra)
    assert (item.state, item.reasons) == ("open", ("low_confidence", "brand_candidate"))
