"""Tests of the review queue plan: groups, expected gain, conflicts, audit slice."""

from __future__ import annotations

import pytest

from catmap.decide.queue import (
    Candidate,
    audit_sample,
    expected_gain,
    group_consensus,
    plan_queue,
)


def _group(
    key: str, nodes: list[str], confidence: float, accepted: bool = False
) -> list[Candidate]:
    slug = key.replace(" > ", "-").lower()
    return [
        Candidate(f"{slug}-{i}", key, node, confidence, accepted) for i, node in enumerate(nodes)
    ]


def test_expected_gain_is_uncertainty_times_products() -> None:
    assert expected_gain(0.75, 4) == pytest.approx(1.0)
    assert expected_gain(1.2) == 0.0  # clipped
    assert expected_gain(0.4) == pytest.approx(0.6)


def test_group_consensus_strong_only_with_share_and_size() -> None:
    # Thresholds: ≥ 90% on one node and ≥ 5 products (common practice, no source).
    candidates = (
        _group("Shoes > Boots", ["1523"] * 9 + ["1524"], 0.5)
        + _group("Bags", ["2100"] * 4, 0.5)
        + _group("Toys", ["3100"] * 8 + ["3101"] * 2, 0.5)
        + _group("", ["9000"] * 6, 0.5)
    )
    groups = group_consensus(candidates)
    boots = groups["Shoes > Boots"]
    assert (boots.size, boots.top_node, boots.top_share, boots.strong) == (10, "1523", 0.9, True)
    assert not groups["Bags"].strong  # too small
    assert not groups["Toys"].strong  # 80% only
    assert not groups[""].strong  # no retailer path ties these together


def test_strong_group_items_carry_the_gain_of_the_whole_group() -> None:
    candidates = _group("Shoes > Boots", ["1523"] * 6, 0.7) + [
        Candidate("lone", "Odd things", "5000", 0.1, False)
    ]
    plan = plan_queue(candidates, audit_minimum=0)
    boot = plan.reviews["shoes-boots-0"]
    assert boot.group_offer and boot.status == "queued"
    assert boot.priority == pytest.approx(6 * 0.3)  # six products at 30% uncertainty
    lone = plan.reviews["lone"]
    assert not lone.group_offer and lone.priority == pytest.approx(0.9)
    order = [entry.product_id for entry in plan.entries(candidates)]
    assert order[:6] == [f"shoes-boots-{i}" for i in range(6)]
    assert order[-1] == "lone"


def test_conflicts_queue_even_when_accepted() -> None:
    candidates = [
        Candidate("a", "Tops", "1100", 0.99, True, brand_conflict=True, brand_confidence=0.4),
        Candidate("b", "Tops", "1100", 0.99, True, audience_conflict=True),
        Candidate("c", "Tops", "1100", 0.99, True),
    ]
    plan = plan_queue(candidates, audit_minimum=0, audit_rate=0.0)
    assert plan.reviews["a"].reasons == ("brand_conflict",)
    assert plan.reviews["a"].status == "accepted"
    assert plan.reviews["a"].priority == pytest.approx(0.6)
    assert plan.reviews["b"].reasons == ("audience_conflict",)
    assert plan.reviews["c"].reasons == ()
    assert [e.product_id for e in plan.entries(candidates)] == ["a", "b"]


def test_audit_slice_is_seeded_and_has_a_minimum() -> None:
    ids = [f"p{i}" for i in range(1000)]
    first = audit_sample(ids, rate=0.02, minimum=5, random_state=0)
    assert len(first) == 20
    assert audit_sample(ids, rate=0.02, minimum=5, random_state=0) == first
    assert audit_sample(ids, rate=0.02, minimum=5, random_state=1) != first
    assert len(audit_sample(ids[:100], rate=0.02, minimum=5)) == 5
    assert sorted(audit_sample(ids[:3], minimum=5)) == ["p0", "p1", "p2"]
    assert audit_sample([]) == []


def test_plan_marks_audit_samples_among_accepted_only() -> None:
    accepted = _group("Lamps", ["4100"] * 400, 0.97, accepted=True)
    queued = _group("Rugs", ["4200"] * 3, 0.4)
    plan = plan_queue(accepted + queued, random_state=0)
    audited = [pid for pid, review in plan.reviews.items() if review.status == "audit"]
    assert len(audited) == 8 and set(audited) == set(plan.audit_ids)
    assert all(pid.startswith("lamps-") for pid in audited)
    assert all(plan.reviews[pid].reasons == ("audit_sample",) for pid in audited)


def test_duplicate_ids_are_refused() -> None:
    with pytest.raises(ValueError, match="appears twice"):
        plan_queue([Candidate("x", "", "1", 0.5, False)] * 2)
