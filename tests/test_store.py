"""Tests of the project store: round trips, the review queue, decisions, undo, audit, migration."""

from __future__ import annotations

import dataclasses
import sqlite3
from collections.abc import Iterator
from datetime import UTC, datetime, timedelta
from decimal import Decimal
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from catmap.errors import StoreError
from catmap.records import (
    AGE_VALUES,
    BRAND_STATUSES,
    WHO_VALUES,
    Alternative,
    Attributes,
    Mapping,
    Product,
)
from catmap.store import (
    MIGRATIONS,
    SCHEMA_VERSION,
    MappedRow,
    NodeAttributes,
    Store,
    StoredMapping,
    migrate,
    product_from_json,
    product_to_json,
    store_path,
)


class FakeClock:
    """A clock the test moves by hand, to expire leases without waiting."""

    def __init__(self) -> None:
        self.now = datetime(2026, 1, 1, 12, 0, tzinfo=UTC)

    def __call__(self) -> datetime:
        return self.now

    def advance(self, seconds: float) -> None:
        self.now += timedelta(seconds=seconds)


@pytest.fixture
def clock() -> FakeClock:
    return FakeClock()


@pytest.fixture
def memory_store(clock: FakeClock) -> Iterator[Store]:
    with Store.open(":memory:", clock=clock) as store:
        yield store


@pytest.fixture
def file_store(tmp_path: Path, clock: FakeClock) -> Iterator[Store]:
    with Store.open(store_path(tmp_path / "project"), clock=clock) as store:
        yield store


@pytest.fixture(params=["memory", "file"])
def store(request: pytest.FixtureRequest) -> Store:
    return request.getfixturevalue(f"{request.param}_store")


def make_row(
    index: int,
    *,
    group: str = "Shoes > Boots",
    node: str = "1523",
    confidence: float = 0.5,
    status: str = "queued",
    reasons: tuple[str, ...] = (),
    priority: float | None = None,
) -> MappedRow:
    product = Product(
        product_id=f"p{index:04d}",
        title=f"Lindor walking boot {index}",
        description="Sturdy boot. " * 60,
        brand="Lindor",
        category_path=tuple(group.split(" > ")) if group else (),
        price=Decimal("59.90"),
        currency="EUR",
    )
    mapping = Mapping(node, confidence, "model", (Alternative("1524", 0.2),))
    return MappedRow(
        product=product,
        mapping=mapping,
        attributes=Attributes(brand="Lindor", brand_confidence=0.9, who="female", age="adult"),
        status=status,
        group_key=group,
        priority=1.0 - confidence if priority is None else priority,
        reasons=reasons,
    )


def seed(store: Store, rows: list[MappedRow], name: str = "shop-a") -> int:
    feed = store.add_feed(name, source_path=f"{name}.csv")
    run = store.start_run("onboard", feed=feed)
    store.save_mapped(feed, run, rows)
    store.finish_run(run, summary={"read": len(rows) + 1, "kept": len(rows), "rejected": 1})
    return feed


# --- opening, pragmas, schema ---------------------------------------------------------------


def test_file_store_uses_wal_foreign_keys_and_current_schema(file_store: Store) -> None:
    assert Path(file_store.path).name == "store.sqlite"
    conn = file_store._conn
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    assert conn.execute("PRAGMA foreign_keys").fetchone()[0] == 1
    assert conn.execute("PRAGMA busy_timeout").fetchone()[0] > 0
    assert file_store.schema_version == SCHEMA_VERSION == len(MIGRATIONS)


def test_not_a_store_is_a_store_error(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    path.write_bytes(b"this is not a database at all, just some text" * 20)
    with pytest.raises(StoreError, match="not a usable catmap store"):
        Store.open(path)


def test_newer_schema_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    conn = sqlite3.connect(path)
    conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    conn.close()
    with pytest.raises(StoreError, match="upgrade catmap"):
        Store.open(path)


def test_migration_from_version_1_keeps_the_data(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    conn = sqlite3.connect(path, isolation_level=None)
    assert migrate(conn, target=1) == 1
    conn.execute(
        "INSERT INTO feeds (name, source_path, profile_path, created_at) "
        "VALUES ('old-shop', 'old.csv', '', '2025-01-01T00:00:00.000000Z')"
    )
    product = Product(product_id="x1", title="Old lamp", price=Decimal("9.50"))
    conn.execute(
        "INSERT INTO products (feed_id, product_id, data, title, brand, retailer_path) "
        "VALUES (1, 'x1', ?, 'Old lamp', '', '')",
        (product_to_json(product),),
    )
    conn.execute(
        "INSERT INTO mappings (feed_id, product_id, node_id, confidence, method, status) "
        "VALUES (1, 'x1', '4100', 0.4, 'model', 'queued')"
    )
    conn.execute(
        "INSERT INTO review_items (feed_id, product_id, reason, priority, created_at) "
        "VALUES (1, 'x1', 'low_confidence', 0.6, '2025-01-01T00:00:00.000000Z')"
    )
    conn.close()

    with Store.open(path) as store:
        assert store.schema_version == SCHEMA_VERSION
        assert store.product("old-shop", "x1") == product
        item = store.claim_next("ann")
        assert item is not None and item.skips == 0  # column added by version 2
        decision = store.decide(item.id, "ann", "choose", node_id="4101")
        assert decision.undone_at is None and decision.bulk_id is None
        assert store.undo_last("ann") == [item.id]


def test_migration_to_version_8_merges_a_product_s_waiting_items(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    with Store.open(path) as store:
        seed(store, [make_row(1), make_row(2), make_row(3)])
    conn = sqlite3.connect(path, isolation_level=None)
    # Back to version 7, with the duplicates an older catmap made: p0001 has a second open
    # item (brand conflict, higher priority), p0002 a claimed one beside its open one, p0003 a
    # decided one beside an open one.
    conn.execute("PRAGMA user_version = 7")
    conn.execute("DROP TABLE brand_rejected_products")
    conn.execute("DROP TABLE feed_brands")
    conn.execute("DROP TABLE brand_registry")
    conn.execute("DROP INDEX mappings_brand_status")
    conn.execute("ALTER TABLE mappings DROP COLUMN brand_status")
    conn.execute("DROP INDEX IF EXISTS review_items_one_waiting")
    conn.execute("ALTER TABLE review_items DROP COLUMN reasons")
    now = "2026-01-01T00:00:00.000000Z"
    conn.executemany(
        "INSERT INTO review_items (feed_id, product_id, group_key, reason, priority, state, "
        "claimed_by, lease_until, created_at) VALUES (1, ?, 'Shoes > Boots', ?, ?, ?, ?, ?, ?)",
        [
            ("p0001", "brand_conflict", 0.9, "open", None, None, now),
            ("p0002", "audience_conflict", 0.1, "claimed", "bob", "2099-01-01", now),
        ],
    )
    conn.execute("UPDATE review_items SET state = 'done' WHERE product_id = 'p0003'")
    conn.execute(
        "INSERT INTO review_items (feed_id, product_id, reason, priority, created_at) "
        "VALUES (1, 'p0003', 'audit_sample', 0.2, ?)",
        (now,),
    )
    conn.close()
    with Store.open(path) as store:
        assert store.schema_version == SCHEMA_VERSION
        waiting = [i for i in store.items() if i.state != "done"]
        assert sorted(i.product_id for i in waiting) == ["p0001", "p0002", "p0003"]
        by_product = {i.product_id: i for i in waiting}
        # The kept item leads with its own reason (the higher priority one here).
        assert by_product["p0001"].reasons == ("brand_conflict", "low_confidence")
        assert by_product["p0001"].priority == 0.9
        assert by_product["p0002"].claimed_by == "bob"
        assert by_product["p0002"].reasons == ("audience_conflict", "low_confidence")
        assert by_product["p0003"].reasons == ("audit_sample",)
        merged = [i for i in store.items() if i.withdrawn]
        assert {i.withdrawn_reason for i in merged} == {
            f"merged into review item {by_product['p0001'].id}",
            f"merged into review item {by_product['p0002'].id}",
        }


def test_migration_to_version_10_reads_each_product_s_brand_status(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    conn = sqlite3.connect(path, isolation_level=None)
    assert migrate(conn, target=9) == 9
    now = "2026-01-01T00:00:00.000000Z"
    conn.execute(
        "INSERT INTO feeds (name, source_path, profile_path, created_at) "
        "VALUES ('shop', 'shop.csv', '', ?)",
        (now,),
    )
    # (product, brand, evidence, a reviewer set the brand) → the status version 10 reads.
    cases = {
        "p1": ("", "no brand found", False, "none"),
        "p2": ("Dorvanta", "title lead 'dorvanta' [candidate]", False, "candidate"),
        "p3": ("Acme", "field not in dictionary 'Acme'", False, "candidate"),
        "p4": ("Benchlow", "field not in dictionary 'bench low' → 'Benchlow'", False,
               "dictionary"),
        "p5": ("Vellomar", "field exact", False, "dictionary"),
        "p6": ("Ostravel Works", "title lead 'ostravel' [candidate]", True, "corrected"),
    }  # fmt: skip
    for product_id, (brand, evidence, corrected, _want) in cases.items():
        conn.execute(
            "INSERT INTO products (feed_id, product_id, data, title, brand, retailer_path) "
            "VALUES (1, ?, ?, 'Lamp', '', '')",
            (product_id, product_to_json(Product(product_id=product_id, title="Lamp"))),
        )
        conn.execute(
            "INSERT INTO mappings (feed_id, product_id, node_id, confidence, method, status, "
            "brand, brand_evidence) VALUES (1, ?, '4100', 0.4, 'model', 'reviewed', ?, ?)",
            (product_id, brand, evidence),
        )
        if corrected:
            item = conn.execute(
                "INSERT INTO review_items (feed_id, product_id, reason, reasons, state, "
                "created_at) VALUES (1, ?, 'low_confidence', 'low_confidence', 'done', ?)",
                (product_id, now),
            ).lastrowid
            conn.execute(
                "INSERT INTO decisions (item_id, reviewer, at, action, brand_from, brand_to) "
                "VALUES (?, 'ana', ?, 'fix_attributes', 'Ostravel', ?)",
                (item, now, brand),
            )
    conn.execute(
        "INSERT INTO brand_registry (position, name, status, data, updated_at) "
        "VALUES (0, 'Dorvanta', 'candidate', '{\"name\": \"Dorvanta\", "
        "\"status\": \"candidate\"}', ?)",
        (now,),
    )
    conn.close()
    with Store.open(path) as store:
        assert store.schema_version == SCHEMA_VERSION
        got = {p.product_id: m.attributes.brand_status for p, m in store.mappings("shop")}
        assert got == {pid: case[3] for pid, case in cases.items()}
        assert store.brand_records() == [{"name": "Dorvanta", "status": "candidate"}]
        # The rebuilt registry table takes the new status.
        store.save_brand_records([{"name": "Dorvanta", "status": "rejected"}])
        assert store.brand_records()[0]["status"] == "rejected"


def test_migration_to_version_12_rebuilds_the_queue_with_its_ids(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA foreign_keys=ON")
    assert migrate(conn, target=11) == 11
    conn.close()
    with Store.open(path, migrate_schema=False) as store:
        assert store.schema_version == 11
        seed(store, [make_row(1), make_row(2, status="accepted", confidence=0.95)])
        item = store.claim_next("ann")
        assert item is not None
        store.decide(item.id, "ann", "choose", node_id="1524")
    conn = sqlite3.connect(path, isolation_level=None)
    with pytest.raises(sqlite3.IntegrityError):  # version 11 does not know the reason
        conn.execute(
            "INSERT INTO review_items (feed_id, product_id, reason, created_at) "
            "VALUES (1, 'p0002', 'audit_over_target', 'x')"
        )
    conn.close()
    with Store.open(path) as store:
        assert store.schema_version == SCHEMA_VERSION
        assert store._conn.execute("PRAGMA foreign_keys").fetchone()[0] == 1
        (decision,) = store.decisions()
        assert decision.item_id == item.id and store.item(item.id).state == "done"
        assert store.requeue_accepted("shop-a", below=0.99, why="test") == ["p0002"]
        (again,) = [i for i in store.items() if i.product_id == "p0002"]
        assert again.reasons == ("audit_over_target",)
        indexes = {r[0] for r in store._conn.execute(
            "SELECT name FROM sqlite_master WHERE tbl_name = 'review_items' AND type = 'index' "
            "AND name NOT LIKE 'sqlite_%'")}  # fmt: skip
        assert indexes == {"review_items_group", "review_items_claim", "review_items_brand"}


def test_migrating_twice_changes_nothing(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    Store.open(path).close()
    with Store.open(path) as store:
        assert store.schema_version == SCHEMA_VERSION


# --- round trips ----------------------------------------------------------------------------

_text = st.text(max_size=30)
_products = st.builds(
    Product,
    product_id=st.text(min_size=1, max_size=20),
    title=_text,
    description=st.text(max_size=200),
    brand=_text,
    category_path=st.lists(_text, max_size=4).map(tuple),
    price=st.none() | st.decimals(allow_nan=False, allow_infinity=False, places=2),
    currency=st.none() | st.sampled_from(["EUR", "GBP", "CHF"]),
    gtin=st.none() | st.from_regex(r"\d{14}", fullmatch=True),
    gtin_raw=_text,
    gender_text=_text,
    colour=_text,
    size=_text,
    url=_text,
    image_url=_text,
    availability=st.sampled_from(["available", "limited", "sold_out", "coming_soon", "unknown"]),
    extra=st.dictionaries(_text, _text, max_size=4),
    flags=st.lists(_text, max_size=3).map(tuple),
    source_line=st.integers(min_value=0, max_value=10**9),
)
_unit = st.floats(min_value=0.0, max_value=1.0, allow_nan=False)
_mappings = st.builds(
    Mapping,
    node_id=st.from_regex(r"[1-9]\d{3}", fullmatch=True),
    confidence=_unit,
    method=st.sampled_from(["rule", "model", "backoff", "cold_start"]),
    alternatives=st.lists(
        st.builds(Alternative, st.from_regex(r"[1-9]\d{3}", fullmatch=True), _unit), max_size=3
    ).map(tuple),
    reason=_text,
)
_attributes = st.builds(
    Attributes,
    brand=_text,
    brand_confidence=_unit,
    brand_evidence=_text,
    brand_status=st.sampled_from(BRAND_STATUSES),
    who=st.sampled_from(WHO_VALUES),
    age=st.sampled_from(AGE_VALUES),
    audience_evidence=_text,
    audience_conflict=st.booleans(),
    colour_family=_text,
    restriction=_text,
)


@given(product=_products)
def test_product_json_round_trip(product: Product) -> None:
    assert product_from_json(product_to_json(product)) == product


@settings(max_examples=60, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    product=_products,
    mapping=_mappings,
    attributes=_attributes,
    status=st.sampled_from(["accepted", "queued", "audit"]),
    group_key=_text,
)
def test_whatever_the_store_saves_comes_back_unchanged(
    memory_store: Store,
    product: Product,
    mapping: Mapping,
    attributes: Attributes,
    status: str,
    group_key: str,
) -> None:
    feed = memory_store.add_feed("round-trip")
    row = MappedRow(product, mapping, attributes, status, group_key, 0.3)
    memory_store.save_mapped(feed, None, [row], model_version="m7", tree_version="1")
    assert memory_store.product(feed, product.product_id) == product
    stored = memory_store.mapping(feed, product.product_id)
    assert stored.mapping == mapping
    assert stored.attributes == attributes
    assert (stored.status, stored.group_key) == (status, group_key)
    assert (stored.model_version, stored.tree_version) == ("m7", "1")
    pairs = dict((p.product_id, (p, m)) for p, m in memory_store.mappings(feed))
    assert pairs[product.product_id] == (product, stored)


@settings(max_examples=25, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(product=_products, mapping=_mappings, attributes=_attributes)
def test_the_bulk_write_path_of_a_file_store_round_trips(
    file_store: Store, product: Product, mapping: Mapping, attributes: Attributes
) -> None:
    feed = file_store.add_feed("round-trip-file")
    row = MappedRow(product, mapping, attributes, "queued", "Shop > Aisle", 0.3)
    file_store.save_mapped(feed, None, [row], model_version="m7", tree_version="1")
    assert file_store.product(feed, product.product_id) == product
    stored = file_store.mapping(feed, product.product_id)
    assert (stored.mapping, stored.attributes) == (mapping, attributes)


def test_products_saved_in_the_older_object_format_still_read() -> None:
    # Written by hand in the format of schema versions 1-5 (one JSON object per product).
    text = (
        '{"product_id":"x1","title":"Oak lamp","description":"","brand":"Lumo",'
        '"category_path":["Home","Lamps"],"price":"19.90","currency":"EUR","gtin":null,'
        '"gtin_raw":"","gender_text":"","colour":"","size":"","url":"","image_url":"",'
        '"availability":"available","extra":{"wood":"oak"},"flags":["gtin_missing"],'
        '"source_line":4}'
    )
    assert product_from_json(text) == Product(
        product_id="x1",
        title="Oak lamp",
        brand="Lumo",
        category_path=("Home", "Lamps"),
        price=Decimal("19.90"),
        currency="EUR",
        availability="available",
        extra={"wood": "oak"},
        flags=("gtin_missing",),
        source_line=4,
    )


def _pragmas(store: Store) -> tuple[int, int, int]:
    return (
        store._read("PRAGMA synchronous").fetchone()[0],
        store._read("PRAGMA foreign_keys").fetchone()[0],
        store._read("PRAGMA wal_autocheckpoint").fetchone()[0],
    )


def test_bulk_writes_leave_decisions_fully_synchronous(file_store: Store) -> None:
    # synchronous 2 = FULL (SQLite documentation, PRAGMA synchronous); foreign keys on.
    assert _pragmas(file_store) == (2, 1, 1000)
    feed = seed(file_store, [make_row(i) for i in range(3)])
    assert _pragmas(file_store) == (2, 1, 1000)
    # A batch failing inside its transaction (NOT NULL group key) saves none of its rows and
    # still gives the settings back.
    broken = [make_row(10), dataclasses.replace(make_row(11), group_key=None)]
    with pytest.raises(sqlite3.IntegrityError):
        file_store.save_mapped(feed, None, broken)
    assert _pragmas(file_store) == (2, 1, 1000)
    with pytest.raises(StoreError):
        file_store.product(feed, "p0010")
    item = file_store.claim_next("ann")
    assert item is not None
    file_store.decide(item.id, "ann", "accept")
    assert _pragmas(file_store) == (2, 1, 1000)


def test_saving_for_an_unknown_run_is_refused(store: Store) -> None:
    feed = store.add_feed("shop-a")
    with pytest.raises(StoreError, match="no run 99"):
        store.save_mapped(feed, 99, [make_row(1)])


def test_runs_and_feeds_round_trip(store: Store) -> None:
    feed = store.add_feed("shop-b", source_path="in/shop-b.xml", profile_path="p/shop-b.toml")
    again = store.add_feed("shop-b", source_path="in/shop-b.xml.gz", profile_path="p/b.toml")
    assert again == feed
    assert store.feed("shop-b").source_path == "in/shop-b.xml.gz"
    run = store.start_run("onboard", feed=feed, params={"threshold": 0.8, "max_error": 0.02})
    store.finish_run(run, summary={"read": 10, "kept": 9, "rejected": 1})
    (record,) = store.runs("shop-b")
    assert record.params == {"threshold": 0.8, "max_error": 0.02}
    assert record.summary == {"read": 10, "kept": 9, "rejected": 1}
    assert record.status == "done" and record.finished_at is not None
    with pytest.raises(StoreError, match="no feed 'nope'"):
        store.feed("nope")


def test_rerun_is_idempotent_and_keeps_reviewed_mappings(store: Store) -> None:
    rows = [make_row(i) for i in range(6)]
    feed = seed(store, rows)
    item = store.claim_next("ann")
    assert item is not None
    store.decide(item.id, "ann", "choose", node_id="1530")
    before = store.queue_summary()
    # The same feed onboarded again with a new model: reviewed mapping stays, nothing doubles.
    store.save_mapped(feed, None, [make_row(i, confidence=0.6) for i in range(6)])
    assert store.queue_summary().total == before.total
    assert store.mapping(feed, item.product_id).mapping.node_id == "1530"
    other = next(r for r in rows if r.product.product_id != item.product_id)
    assert store.mapping(feed, other.product.product_id).mapping.confidence == 0.6


def test_save_mapped_queues_by_status_and_reasons(store: Store) -> None:
    rows = [
        make_row(1, status="accepted"),
        make_row(2, status="queued"),
        make_row(3, status="audit"),
        make_row(4, status="accepted", reasons=("brand_conflict",)),
        make_row(5, status="queued", reasons=("low_confidence", "audience_conflict")),
    ]
    seed(store, rows)
    summary = store.queue_summary("shop-a")
    assert summary.open == 4  # one item per product, counted under its leading reason
    assert {reason: counts["open"] for reason, counts in summary.by_reason.items()} == {
        "low_confidence": 2,
        "audit_sample": 1,
        "brand_conflict": 1,
    }
    reasons = {i.product_id: i.reasons for i in store.items()}
    assert reasons["p0005"] == ("low_confidence", "audience_conflict")


def test_a_second_reason_joins_the_product_s_waiting_item(store: Store) -> None:
    feed = seed(store, [make_row(1), make_row(2)])
    (first, second) = store.items()
    # A brand conflict found later on a queued product: no second item for it.
    assert store.enqueue(feed, first.product_id, "brand_conflict", priority=0.9) == first.id
    assert store.enqueue(feed, first.product_id, "brand_conflict", priority=0.9) == first.id
    assert len(store.items()) == 2
    assert store.item(first.id).reasons == ("low_confidence", "brand_conflict")
    # A claimed item takes the reason too; the one who holds it sees it.
    held = store.claim_next("ann")
    assert held is not None and held.id == first.id
    store.save_mapped(feed, None, [make_row(1, reasons=("low_confidence", "audience_conflict"))])
    assert store.item(first.id).reasons == (
        "low_confidence",
        "brand_conflict",
        "audience_conflict",
    )
    # Two reviewers cannot decide the product side by side: bob gets the other product.
    other = store.claim_next("bob")
    assert other is not None and other.id == second.id
    store.decide(first.id, "ann", "accept")
    assert store.claim_next("bob") == other  # his own claim comes back; nothing else waits
    # A group decision leaves an item with a conflict to a person.
    store.enqueue(feed, second.product_id, "brand_conflict")
    assert store.claim_group("carl", feed, "Shoes > Boots") == []


def test_withdrawing_a_reason_keeps_the_item_for_its_other_reasons(store: Store) -> None:
    feed = seed(store, [make_row(1), make_row(2)])
    store.enqueue(feed, "p0001", "brand_conflict")
    store.save_mapped(
        feed, None, [make_row(i, confidence=0.97, status="accepted") for i in (1, 2)]
    )
    withdrawn = store.withdraw_items(feed, why="accepted by run 2")
    items = {i.product_id: i for i in store.items(feed=feed)}
    assert withdrawn == [items["p0002"].id]
    assert items["p0001"].state == "open" and items["p0001"].reasons == ("brand_conflict",)
    assert items["p0001"].reason == "brand_conflict"


def test_stale_low_confidence_items_are_withdrawn_audited_and_can_reopen(
    store: Store, clock: FakeClock
) -> None:
    feed = seed(store, [make_row(i, confidence=0.5) for i in range(1, 6)])
    decided = store.claim_next("ann")
    assert decided is not None and decided.product_id == "p0001"
    store.decide(decided.id, "ann", "accept")
    held = store.claim_next("bob", lease_seconds=60)
    assert held is not None and held.product_id == "p0002"
    # A later run (a retrained model) accepts p0001..p0004; p0005 is still uncertain.
    store.save_mapped(
        feed,
        None,
        [make_row(i, confidence=0.97, status="accepted") for i in range(1, 5)]
        + [make_row(5, confidence=0.6)],
    )
    withdrawn = store.withdraw_items(feed, why="accepted by run 2")
    items = {i.product_id: i for i in store.items(feed=feed)}
    # Decided stays decided; bob's live claim is left to him; the still-queued one stays open.
    assert [items["p0003"].id, items["p0004"].id] == withdrawn
    assert items["p0001"].state == "done" and not items["p0001"].withdrawn
    assert items["p0002"].state == "claimed" and items["p0002"].claimed_by == "bob"
    assert items["p0005"].state == "open"
    assert items["p0003"].state == "done"
    assert items["p0003"].withdrawn_reason == "accepted by run 2"
    summary = store.queue_summary(feed)
    assert (summary.open, summary.claimed, summary.done, summary.withdrawn) == (1, 1, 1, 2)
    assert summary.by_reason["low_confidence"]["withdrawn"] == 2
    assert store.feed_status(feed).withdrawn_items == 2
    assert store.feed_status(feed).done_items == 1
    entry = store.audit_log()[-1]
    assert entry.action == "withdraw" and entry.detail["items"] == withdrawn
    assert entry.detail["why"] == "accepted by run 2"
    assert store.decisions(feed)[-1].product_id == "p0001"  # no decision was invented
    with pytest.raises(StoreError, match="withdrawn"):
        store.decide(items["p0003"].id, "ann", "accept")
    # Bob's lease runs out: the next withdrawal takes his item too. Nothing is withdrawn twice.
    clock.advance(120)
    assert store.withdraw_items(feed, why="again") == [items["p0002"].id]
    assert store.withdraw_items(feed, why="again") == []
    # A run that is unsure again queues p0003 again: the same item reopens.
    store.save_mapped(feed, None, [make_row(3, confidence=0.4)])
    again = store.item(items["p0003"].id)
    assert again.state == "open" and not again.withdrawn
    assert store.queue_summary(feed).withdrawn == 2


def test_enqueue_needs_a_saved_product(store: Store) -> None:
    feed = seed(store, [make_row(1, status="accepted")])
    item_id = store.enqueue(feed, "p0001", "remap", priority=0.4)
    assert store.enqueue(feed, "p0001", "remap", priority=0.7) == item_id
    assert store.item(item_id).priority == 0.7
    assert store.item(item_id).group_key == "Shoes > Boots"
    with pytest.raises(StoreError, match="no such product"):
        store.enqueue(feed, "missing", "remap")


# --- claims and leases ----------------------------------------------------------------------


def test_claim_order_and_resume(store: Store) -> None:
    seed(store, [make_row(i, confidence=0.1 * i) for i in range(1, 5)])
    first = store.claim_next("ann")
    assert first is not None and first.product_id == "p0001"  # lowest confidence, highest gain
    second = store.claim_next("bob")
    assert second is not None and second.product_id == "p0002"
    # Ann comes back (screen restarted): her own claimed item first.
    again = store.claim_next("ann")
    assert again is not None and again.id == first.id


def test_expired_lease_is_reclaimable(store: Store, clock: FakeClock) -> None:
    seed(store, [make_row(1)])
    item = store.claim_next("ann", lease_seconds=60)
    assert item is not None
    assert store.claim_next("bob") is None
    with pytest.raises(StoreError, match="claimed by ann"):
        store.decide(item.id, "bob", "accept")
    clock.advance(61)
    taken = store.claim_next("bob")
    assert taken is not None and taken.id == item.id and taken.claimed_by == "bob"


def test_an_expired_lease_and_an_open_item_are_taken_in_queue_order(
    store: Store, clock: FakeClock
) -> None:
    # Queue order: skipped least, then highest priority, then oldest.
    seed(store, [make_row(i, priority=p) for i, p in ((1, 0.9), (2, 0.5), (3, 0.1))])
    held = store.claim_next("ann", lease_seconds=60)
    assert held is not None and held.product_id == "p0001"
    clock.advance(61)
    # p0001's lease ran out and it outranks the open p0002: it comes first.
    taken = store.claim_next("bob")
    assert taken is not None and taken.id == held.id
    store.decide(taken.id, "bob", "skip")  # p0001 now goes behind the items never skipped
    other = store.claim_next("cy", lease_seconds=60)
    assert other is not None and other.product_id == "p0002"
    clock.advance(61)
    # The expired p0002 (never skipped) outranks the open, skipped p0001 and the open p0003
    # (lower priority).
    again = store.claim_next("dee")
    assert again is not None and again.id == other.id


def test_the_claim_reads_the_queue_from_its_index(store: Store) -> None:
    # reference: SQLite documentation, "EXPLAIN QUERY PLAN" (a USE TEMP B-TREE FOR ORDER BY
    # line means the rows are sorted, not read in order from an index).
    seed(store, [make_row(i, priority=0.1 * i) for i in range(20)])
    seed(store, [make_row(i) for i in range(3)], name="shop-b")
    seen: list[str] = []
    store._conn.set_trace_callback(seen.append)
    try:
        store.claim_next("ann")
        store.claim_next("bob", feed="shop-b")
    finally:
        store._conn.set_trace_callback(None)
    queue_reads = [q for q in seen if q.startswith("SELECT") and "ORDER BY skips" in q]
    assert len(queue_reads) == 4  # open and expired, with and without a feed
    for query in queue_reads:
        plan = " | ".join(r[3] for r in store._conn.execute("EXPLAIN QUERY PLAN " + query))
        assert "USING COVERING INDEX review_items_claim" in plan or (
            "USING INDEX review_items_claim" in plan
        ), plan
        assert "TEMP B-TREE" not in plan, plan


def test_release_and_skip_send_items_back(store: Store) -> None:
    seed(store, [make_row(1, confidence=0.1), make_row(2, confidence=0.2)])
    item = store.claim_next("ann")
    assert item is not None
    assert store.release(item.id, "bob") is False
    assert store.release(item.id, "ann") is True
    assert store.item(item.id).state == "open"
    item = store.claim_next("ann")
    assert item is not None and item.product_id == "p0001"
    store.decide(item.id, "ann", "skip")
    # A skipped item goes behind the items never skipped.
    nxt = store.claim_next("ann")
    assert nxt is not None and nxt.product_id == "p0002"


# --- decisions ------------------------------------------------------------------------------


def test_decisions_update_the_mapping_and_are_listed(store: Store) -> None:
    feed = seed(store, [make_row(i, confidence=0.1 * i) for i in range(1, 5)])
    a = store.claim_next("ann")
    assert a is not None
    store.decide(a.id, "ann", "accept", brand="Lindor Outdoor", note="brand has a line name")
    b = store.claim_next("ann")
    assert b is not None
    store.decide(b.id, "ann", "choose", node_id="1530", who="unisex")
    c = store.claim_next("ann")
    assert c is not None
    store.decide(c.id, "ann", "no_fit")

    ma = store.mapping(feed, a.product_id)
    assert (ma.status, ma.mapping.node_id, ma.mapping.method) == ("reviewed", "1523", "model")
    assert ma.attributes.brand == "Lindor Outdoor"
    mb = store.mapping(feed, b.product_id)
    assert (mb.mapping.node_id, mb.mapping.method, mb.mapping.confidence) == ("1530", "review", 1.0)
    assert mb.attributes.who == "unisex"
    assert store.mapping(feed, c.product_id).mapping.node_id == ""

    decisions = store.decisions("shop-a")
    assert [d.action for d in decisions] == ["accept", "choose", "no_fit"]
    assert (decisions[0].brand_from, decisions[0].brand_to) == ("Lindor", "Lindor Outdoor")
    assert (decisions[1].from_node, decisions[1].to_node) == ("1523", "1530")
    assert (decisions[1].who_from, decisions[1].who_to) == ("female", "unisex")
    assert decisions[0].at.endswith("Z")
    examples = store.training_examples()
    assert [(e.product.product_id, e.node_id) for e in examples] == [
        (a.product_id, "1523"),
        (b.product_id, "1530"),
    ]
    with pytest.raises(StoreError, match="already decided"):
        store.decide(a.id, "ann", "accept")


def test_bad_decisions_are_refused(store: Store) -> None:
    seed(store, [make_row(1)])
    item = store.claim_next("ann")
    assert item is not None
    with pytest.raises(ValueError, match="needs a node_id"):
        store.decide(item.id, "ann", "choose")
    with pytest.raises(ValueError, match="unknown action"):
        store.decide(item.id, "ann", "maybe")
    with pytest.raises(ValueError, match="unknown who"):
        store.decide(item.id, "ann", "fix_attributes", who="everyone")
    with pytest.raises(StoreError, match="no review item 999"):
        store.decide(999, "ann", "accept")


def test_undo_restores_the_mapping_and_reclaims_the_item(store: Store) -> None:
    feed = seed(store, [make_row(1), make_row(2)])
    item = store.claim_next("ann")
    assert item is not None
    before = store.mapping(feed, item.product_id)
    store.decide(item.id, "ann", "choose", node_id="1600", age="kids")
    assert store.undo_last("ann") == [item.id]
    assert store.mapping(feed, item.product_id) == before
    reopened = store.item(item.id)
    assert (reopened.state, reopened.claimed_by) == ("claimed", "ann")
    assert store.decisions() == []
    (undone,) = store.decisions(include_undone=True)
    assert undone.undone_at is not None
    assert [e.action for e in store.audit_log()][-2:] == ["decision", "undo"]
    assert store.undo_last("ann") == []


def test_undo_refuses_to_discard_a_later_decision_by_another_reviewer(store: Store) -> None:
    # A accepts one item of a product; B chooses another node on the product's second item;
    # A's undo must not put the mapping back under B's live decision.
    feed = seed(store, [make_row(1), make_row(2)])
    first = store.claim_next("ann")
    assert first is not None and first.product_id == "p0001"
    store.decide(first.id, "ann", "accept")
    second = store.enqueue(feed, "p0001", "audit_sample", priority=9.0)
    claimed = store.claim_next("bob")
    assert claimed is not None and claimed.id == second
    store.decide(second, "bob", "choose", node_id="1600")
    with pytest.raises(StoreError, match="bob decided it after you"):
        store.undo_last("ann")
    stored = store.mapping(feed, "p0001")
    assert (stored.status, stored.mapping.node_id) == ("reviewed", "1600")
    assert [d.reviewer for d in store.decisions()] == ["ann", "bob"]
    assert [t.node_id for t in store.training_examples(feed)] == ["1600"]
    assert store.item(first.id).state == "done"
    # Once bob takes his back (and leaves it), ann's undo restores what hers changed, and the
    # product is back to one waiting item, with both reasons.
    assert store.undo_last("bob") == [second]
    with pytest.raises(StoreError, match="bob has it on screen"):
        store.undo_last("ann")
    assert store.release(second, "bob")
    assert store.undo_last("ann") == [first.id]
    assert store.mapping(feed, "p0001").status == "queued"
    waiting = [i for i in store.items() if i.product_id == "p0001" and i.state != "done"]
    assert [(i.id, i.reasons) for i in waiting] == [
        (first.id, ("low_confidence", "audit_sample"))
    ]


def test_undoing_a_skip_does_not_take_the_item_from_another_reviewer(
    store: Store, clock: FakeClock
) -> None:
    seed(store, [make_row(1)])
    item = store.claim_next("ann")
    assert item is not None
    store.decide(item.id, "ann", "skip")
    assert store.claim_next("bob") is not None
    with pytest.raises(StoreError, match="bob has it on screen"):
        store.undo_last("ann")
    store.decide(item.id, "bob", "accept")
    with pytest.raises(StoreError, match="bob decided it after you"):
        store.undo_last("ann")
    assert store.item(item.id).state == "done"
    assert [d.action for d in store.decisions()] == ["skip", "accept"]


def test_review_item_gives_the_screen_everything(store: Store) -> None:
    rows = [make_row(i, confidence=0.6) for i in range(9)] + [
        make_row(9, node="1700", confidence=0.7)
    ]
    seed(store, rows)
    item = store.claim_next("ann")
    assert item is not None
    view = store.review_item(item.id)
    assert view.title.startswith("Lindor walking boot")
    assert (view.brand, view.price, view.currency) == ("Lindor", Decimal("59.90"), "EUR")
    assert view.retailer_path == "Shoes > Boots"
    assert (view.suggested_node, view.confidence) == ("1523", 0.6)
    assert view.alternatives == (Alternative("1524", 0.2),)
    assert view.attributes.who == "female"
    assert len(view.description_excerpt) <= 400 and view.description_excerpt.endswith("…")
    assert (view.group.size, view.group.top_node, view.group.top_share) == (10, "1523", 0.9)
    assert view.group.strong and view.group.open_items == 10


# --- groups ---------------------------------------------------------------------------------


def test_accept_group_one_decision_per_item_one_audit_entry(store: Store) -> None:
    rows = [make_row(i) for i in range(6)] + [make_row(9, group="Bags")]
    rows.append(make_row(10, status="audit"))  # audit samples are judged one by one
    feed = seed(store, rows)
    taken = store.claim_next("bob")  # bob holds one item of the group
    assert taken is not None
    decisions = store.accept_group("ann", feed, "Shoes > Boots", node_id="1523")
    assert len(decisions) == 5 and all(d.action == "accept" for d in decisions)
    assert len({d.bulk_id for d in decisions}) == 1
    bulk = [e for e in store.audit_log() if e.action == "bulk_accept"]
    assert len(bulk) == 1 and len(bulk[0].detail["items"]) == 5
    assert store.item(taken.id).claimed_by == "bob"
    # Undo takes the whole bulk back.
    assert sorted(store.undo_last("ann")) == sorted(d.item_id for d in decisions)
    assert store.decisions() == []


def test_accept_group_with_another_node_records_choices(store: Store) -> None:
    rows = [make_row(i) for i in range(4)] + [make_row(4, node="1530")]
    feed = seed(store, rows)
    claimed = store.claim_group("ann", feed, "Shoes > Boots")
    assert len(claimed) == 5
    decisions = store.accept_group("ann", feed, "Shoes > Boots", node_id="1530")
    assert sorted(d.action for d in decisions) == ["accept"] + ["choose"] * 4
    assert {m.mapping.node_id for _, m in store.mappings(feed)} == {"1530"}


def test_node_attributes_follow_a_chosen_node_and_undo_restores_them(store: Store) -> None:
    feed = seed(store, [make_row(1), make_row(2), make_row(3)])
    flagged = NodeAttributes(restriction="alcohol", who="not_applicable", age="not_applicable")
    a = store.claim_next("ann")
    assert a is not None
    before = store.mapping(feed, a.product_id)
    store.decide(a.id, "ann", "choose", node_id="8211", node_attributes=flagged)
    moved = store.mapping(feed, a.product_id).attributes
    assert (moved.restriction, moved.who, moved.age) == (
        "alcohol",
        "not_applicable",
        "not_applicable",
    )
    assert store.audit_log()[-1].detail["restriction"] == {"from": "", "to": "alcohol"}
    assert store.undo_last("ann") == [a.id]
    assert store.mapping(feed, a.product_id) == before
    store.release(a.id, "ann")

    # The reviewer's own who wins over the node's; the node's age and flag are written.
    b = store.claim_next("ann")
    assert b is not None
    store.decide(
        b.id,
        "ann",
        "choose",
        node_id="1011",
        who="male",
        node_attributes=NodeAttributes(restriction="", who="unisex", age="kids"),
    )
    chosen = store.mapping(feed, b.product_id).attributes
    assert (chosen.restriction, chosen.who, chosen.age) == ("", "male", "kids")

    # Accepting the suggestion keeps the node, so the node's attributes are not applied.
    c = store.claim_next("ann")
    assert c is not None
    store.decide(c.id, "ann", "accept", node_attributes=flagged)
    assert store.mapping(feed, c.product_id).attributes.restriction == ""
    with pytest.raises(ValueError, match="unknown who"):
        store.decide(
            c.id,
            "ann",
            "choose",
            node_id="8211",
            node_attributes=NodeAttributes(restriction="", who="everyone", age="adult"),
        )


def test_accept_group_reads_node_attributes_for_each_moved_product(store: Store) -> None:
    rows = [make_row(i) for i in range(4)] + [make_row(4, node="8211")]
    feed = seed(store, rows)
    asked: list[tuple[str, str]] = []

    def read(product: Product, stored: StoredMapping) -> NodeAttributes:
        asked.append((product.product_id, stored.mapping.node_id))
        return NodeAttributes(restriction="alcohol", who="not_applicable", age="not_applicable")

    decisions = store.accept_group(
        "ann", feed, "Shoes > Boots", node_id="8211", node_attributes=read
    )
    assert sorted(d.action for d in decisions) == ["accept"] + ["choose"] * 4
    # Only the products that move are asked about, each with its mapping before the move.
    assert sorted(asked) == [(f"p{i:04d}", "1523") for i in range(4)]
    for i in range(4):
        assert store.mapping(feed, f"p{i:04d}").attributes.restriction == "alcohol"
    # The one already on the node keeps what it had.
    assert store.mapping(feed, "p0004").attributes.restriction == ""
    store.undo_last("ann")
    assert {m.attributes.restriction for _, m in store.mappings(feed)} == {""}


# --- audit log, summaries, status -----------------------------------------------------------


def test_audit_log_refuses_update_and_delete(store: Store) -> None:
    store.record_event("import", "ann", detail={"file": "decisions.csv", "rows": 3})
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        store._conn.execute("UPDATE audit_log SET actor = 'mallory'")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        store._conn.execute("DELETE FROM audit_log")
    (entry,) = store.audit_log()
    assert (entry.actor, entry.action, entry.detail["rows"]) == ("ann", "import", 3)


def test_feed_status_counts_and_audit_error(store: Store) -> None:
    rows = [make_row(i, status="accepted") for i in range(5)]
    rows += [make_row(i, status="audit") for i in range(5, 9)]
    rows += [make_row(9, status="queued")]
    seed(store, rows)
    for action in ("accept", "accept", "accept", "choose"):
        item = store.claim_next("ann")
        assert item is not None and item.reason == "audit_sample"
        store.decide(item.id, "ann", action, node_id="1600" if action == "choose" else None)
    status = store.feed_status("shop-a")
    assert (status.read, status.kept, status.rejected) == (11, 10, 1)
    assert (status.products, status.accepted, status.queued, status.reviewed) == (10, 5, 1, 4)
    assert (status.open_items, status.done_items) == (1, 4)
    assert (status.audit_checked, status.audit_wrong) == (4, 1)
    assert status.audit_error is not None and status.audit_error.rate == 0.25
    assert status.audit_error.low < 0.25 < status.audit_error.high


def test_queue_summary_by_group(store: Store) -> None:
    seed(store, [make_row(i) for i in range(3)] + [make_row(7, group="Bags")])
    item = store.claim_next("ann")
    assert item is not None
    summary = store.queue_summary()
    assert (summary.open, summary.claimed, summary.done) == (3, 1, 0)
    groups = {g.group_key: (g.open, g.claimed, g.done) for g in summary.by_group}
    assert groups[item.group_key][1] == 1
    assert sum(sum(v) for v in groups.values()) == 4
