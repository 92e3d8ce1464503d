"""Tests for the store's brand registry records (catmap.store.brands)."""

from __future__ import annotations

from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from catmap.store import Store

Records = list[dict[str, Any]]


def _record(name: str, status: str = "candidate", count: int = 1) -> dict[str, Any]:
    return {"name": name, "status": status,
            "variants": [{"spelling": name, "count": count, "feeds": {"f": count}}]}


def test_records_round_trip_in_order() -> None:
    with Store.open(":memory:") as store:
        assert store.brand_records() == []
        records = [_record("Benchlow", count=5), _record("Dorvanta", "confirmed")]
        store.save_brand_records(records)
        assert store.brand_records() == records
        store.save_brand_records(records[1:])
        assert store.brand_records() == records[1:]


@settings(max_examples=25, deadline=None)
@given(st.lists(st.tuples(st.text(min_size=1, max_size=20),
                          st.sampled_from(["candidate", "confirmed"])), max_size=8))
def test_what_the_store_saves_comes_back_unchanged(pairs: list[tuple[str, str]]) -> None:
    records = [_record(name, status) for name, status in pairs]
    with Store.open(":memory:") as store:
        store.save_brand_records(records)
        assert store.brand_records() == records


def test_a_change_saves_the_feeds_brands_and_is_audited() -> None:
    with Store.open(":memory:") as store:
        store.add_feed("shop-a")
        seen: list[dict[str, Any]] = []

        def change(records: Records, feeds: dict[str, Any]) -> tuple[Records, int]:
            seen.append(feeds)
            return [*records, _record(f"Brand{len(records)}")], len(records) + 1

        first = store.change_brand_records(
            change, action="brands_merged", actor="test", feed="shop-a",
            feed_brands={"brands": [1]}, detail=lambda n: {"brands": n},
        )  # fmt: skip
        second = store.change_brand_records(
            change, action="brands_merged", actor="test", feed="shop-a",
            feed_brands={"brands": [2]}, detail=lambda n: {"brands": n},
        )  # fmt: skip
        assert (first, second) == (1, 2)
        # The feed's brands are replaced, not added to.
        assert seen == [{"shop-a": {"brands": [1]}}, {"shop-a": {"brands": [2]}}]
        assert store.feed_brand_records() == {"shop-a": {"brands": [2]}}
        assert [r["name"] for r in store.brand_records()] == ["Brand0", "Brand1"]
        entries = [e for e in store.audit_log() if e.action == "brands_merged"]
        assert [e.detail for e in entries] == [{"brands": 1}, {"brands": 2}]


def test_a_failed_change_leaves_the_registry_as_it_was() -> None:
    with Store.open(":memory:") as store:
        store.add_feed("shop-a")
        store.save_brand_records([_record("Benchlow")])

        def fail(records: Records, feeds: dict[str, Any]) -> tuple[Records, None]:
            raise ValueError("stop")

        with pytest.raises(ValueError):
            store.change_brand_records(
                fail, action="brands_merged", actor="test", feed="shop-a",
                feed_brands={"brands": []},
            )  # fmt: skip
        assert store.brand_records() == [_record("Benchlow")]
        assert store.feed_brand_records() == {}
        assert not [e for e in store.audit_log() if e.action == "brands_merged"]
