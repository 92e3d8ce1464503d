"""Tests for the store's brand registry records (catmap.store.brands), and for a person's
verdict on a brand (`Store.settle_brand`): confirmed, rejected as no brand, set back to a
candidate; the products that carry the brand follow, a brand a reviewer typed is left alone,
every verdict is audited, and one verdict is never taken back over another person's later one.

The verdicts are tried on the review screen's sample store (catmap.review.sample): six boots
carry the candidate brand "Ostravel" (learned from their titles); the totes and the socks carry
candidate brands of their own, the other products brands taken as the dictionary's."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from catmap.errors import InputError, StoreError
from catmap.review import settle_brand
from catmap.review.sample import SAMPLE_FEED, build_sample_store
from catmap.store import BrandVerdict, Store

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


# -- a person's verdict on a brand ------------------------------------------------------------

BOOTS = [f"BT-{n:03d}" for n in range(1, 7)]
Decide = Callable[[list[dict[str, Any]], list[str]], tuple[list[dict[str, Any]], BrandVerdict]]


@pytest.fixture
def store() -> Iterator[Store]:
    opened = build_sample_store(":memory:")
    yield opened
    opened.close()


def _decide(name: str, status: str) -> Decide:
    """A verdict straight on the records (what catmap.review.brands does through the
    registry): the record's status set, the product values equal to the name follow."""

    def decide(
        records: list[dict[str, Any]], values: list[str]
    ) -> tuple[list[dict[str, Any]], BrandVerdict]:
        (record,) = [r for r in records if r["name"] == name]
        was = record["status"]
        record["status"] = status
        spellings = tuple(v for v in values if v == name)
        return records, BrandVerdict(name, status, was, spellings, name)

    return decide


def _settle(store: Store, status: str, actor: str = "ana", **options: Any) -> BrandVerdict:
    return store.settle_brand(
        _decide("Ostravel", status), actor=actor, candidate_mark="[candidate]",
        rejected_evidence=lambda v: f"'{v.name}' rejected as no brand by {actor}", **options,
    )  # fmt: skip


def _products(store: Store) -> dict[str, tuple[str, float, str, str]]:
    return {
        p.product_id: (
            m.attributes.brand, m.attributes.brand_confidence, m.attributes.brand_status,
            m.attributes.brand_evidence,
        )
        for p, m in store.mappings(SAMPLE_FEED)
    }  # fmt: skip


def _status(store: Store) -> str:
    (record,) = [r for r in store.brand_records() if r["name"] == "Ostravel"]
    return str(record["status"])


def _verdicts(store: Store) -> list[tuple[str, str, dict[str, Any]]]:
    return [
        (e.action, e.actor, e.detail) for e in store.audit_log() if e.action.startswith("brand_")
    ]


def test_the_sample_starts_with_six_candidates(store: Store) -> None:
    products = _products(store)
    assert {products[b][2] for b in BOOTS} == {"candidate"}
    assert all(products[b][3].endswith(" [candidate]") for b in BOOTS)
    assert _status(store) == "candidate"


def test_confirm_trusts_the_brand_and_its_products(store: Store) -> None:
    before = _products(store)
    verdict = _settle(store, "confirmed", item_id=None)
    assert (verdict.name, verdict.was, verdict.products) == ("Ostravel", "candidate", 6)
    after = _products(store)
    for boot in BOOTS:
        brand, confidence, status, evidence = after[boot]
        assert (brand, confidence, status) == (before[boot][0], before[boot][1], "confirmed")
        assert evidence == before[boot][3].removesuffix(" [candidate]")
    assert {k: v for k, v in after.items() if k not in BOOTS} == {
        k: v for k, v in before.items() if k not in BOOTS
    }
    assert _status(store) == "confirmed"
    assert _verdicts(store) == [("brand_confirmed", "ana", {
        "brand": "Ostravel", "asked": "Ostravel", "was": "candidate", "products": 6,
    })]  # fmt: skip
    assert verdict.audit_id == store.audit_log()[-1].id


def test_reject_takes_the_brand_off_and_reset_gives_it_back(store: Store) -> None:
    before = _products(store)
    verdict = _settle(store, "rejected")
    assert (verdict.was, verdict.products) == ("candidate", 6)
    after = _products(store)
    rejected = ("", 0.0, "none", "'Ostravel' rejected as no brand by ana")
    assert {after[b] for b in BOOTS} == {rejected}
    assert _status(store) == "rejected"

    back = _settle(store, "candidate", actor="bob")
    assert (back.was, back.products) == ("rejected", 6)
    assert _products(store) == before  # exactly as before: brand, confidence, evidence
    assert _status(store) == "candidate"
    assert [(a, who, d["was"], d["products"]) for a, who, d in _verdicts(store)] == [
        ("brand_rejected", "ana", "candidate", 6),
        ("brand_reset", "bob", "rejected", 6),
    ]
    assert _verdicts(store)[0][2]["evidence"] == "'Ostravel' rejected as no brand by ana"


def test_reset_takes_a_confirmation_back(store: Store) -> None:
    before = _products(store)
    _settle(store, "confirmed")
    verdict = _settle(store, "candidate")
    assert (verdict.was, verdict.products) == ("confirmed", 6)
    assert _products(store) == before  # the candidate mark is back on the evidence


def test_a_brand_a_reviewer_typed_is_left_alone(store: Store) -> None:
    # The reviewer typed the very same name by hand on one boot: their brand, not a candidate.
    (item,) = [i for i in store.items() if i.product_id == "BT-001"]
    store.decide(item.id, "cy", "accept", brand="Ostravel")
    typed = _products(store)["BT-001"]
    assert typed[2] == "corrected"
    assert _settle(store, "rejected").products == 5
    assert _products(store)["BT-001"] == typed
    assert _settle(store, "candidate").products == 5
    assert _settle(store, "confirmed").products == 5
    assert _products(store)["BT-001"] == typed


def test_reset_gives_back_only_what_the_rejection_left_as_it_was(store: Store) -> None:
    _settle(store, "rejected")
    # Since the rejection a reviewer set another brand on one boot.
    (item,) = [i for i in store.items() if i.product_id == "BT-002"]
    store.decide(item.id, "cy", "accept", brand="Ostra Works")
    assert _settle(store, "candidate").products == 5
    brand, _confidence, status, _evidence = _products(store)["BT-002"]
    assert (brand, status) == ("Ostra Works", "corrected")


def test_verdicts_repeated_change_nothing_and_are_not_taken_for_the_last(store: Store) -> None:
    assert _settle(store, "candidate").products == 0  # never settled: nothing to take back
    _settle(store, "rejected")
    once = _products(store)
    again = _settle(store, "rejected", actor="bob")
    assert (again.was, again.products) == ("rejected", 0)
    assert _products(store) == once
    # The repeat changed nothing, so the reset still takes the first rejection back.
    assert _settle(store, "candidate").products == 6
    assert _settle(store, "candidate").products == 0
    _settle(store, "confirmed")
    assert _settle(store, "confirmed").products == 0
    assert [d["products"] for _a, _w, d in _verdicts(store)] == [0, 6, 0, 6, 0, 6, 0]


def test_taking_back_is_refused_over_someone_elses_later_verdict(store: Store) -> None:
    mine = _settle(store, "rejected", actor="ana")
    _settle(store, "candidate", actor="bob")
    _settle(store, "confirmed", actor="bob")
    settled = _products(store)
    with pytest.raises(StoreError, match=r"'Ostravel' was confirmed by bob at .* since; nothing"):
        _settle(store, "candidate", actor="ana", taking_back=mine.audit_id)
    assert _products(store) == settled
    assert _status(store) == "confirmed"
    assert len(_verdicts(store)) == 3


def test_taking_back_ones_own_last_verdict(store: Store) -> None:
    before = _products(store)
    mine = _settle(store, "rejected", actor="ana")
    back = _settle(store, "candidate", actor="ana", taking_back=mine.audit_id)
    assert back.products == 6
    assert _products(store) == before


def test_an_unknown_verdict_is_a_value_error_and_changes_nothing(store: Store) -> None:
    before = _products(store)
    with pytest.raises(ValueError, match="unknown brand verdict 'maybe'"):
        _settle(store, "maybe")
    assert _products(store) == before
    assert _status(store) == "candidate"
    assert _verdicts(store) == []


def test_an_unknown_brand_names_it_and_says_what_to_do(store: Store) -> None:
    with pytest.raises(InputError) as raised:
        settle_brand(store, "Nowhere", "rejected", actor="ana")
    assert str(raised.value) == (
        "field 'brand': no brand 'Nowhere' in the project's brand registry (`catmap brands "
        "list` shows the brands `catmap onboard` has seen; use one of their names or spellings)"
    )
    assert _verdicts(store) == []


def test_through_the_registry_any_spelling_names_the_brand(store: Store) -> None:
    verdict = settle_brand(store, "OSTRAVEL", "rejected", actor="ana")
    assert (verdict.name, verdict.asked, verdict.products) == ("Ostravel", "OSTRAVEL", 6)
    assert settle_brand(store, "ostravel", "candidate", actor="ana").products == 6


def test_example_titles_come_from_the_products_that_carry_the_brand(store: Store) -> None:
    titles = store.brand_example_titles(["Ostravel"], limit=2)
    assert len(titles) == 2 and all(t.startswith("Ostravel ") for t in titles)
    _settle(store, "rejected")
    # Rejected: the titles of the products it was taken from.
    assert store.brand_example_titles(["Ostravel"], limit=1) == titles[:1]
    assert store.brand_example_titles(["Nowhere"]) == []
