"""The order of the review queue: spend review time where it changes the most mappings.

Pure functions, no I/O. Given each product's suggested node, confidence and whether it was
auto-accepted, :func:`plan_queue` decides

- which products are queued and why (``low_confidence``, ``brand_conflict``,
  ``audience_conflict``, ``audit_sample``; a candidate brand gets ``brand_candidate``, one item
  per brand per feed, placed once the feed's brands are known: :func:`brand_candidate_priority`
  and :mod:`catmap.store.brand_items`),
- the priority of each: the expected gain of reviewing it, ``uncertainty × products affected``
  (:func:`expected_gain`),
- which retailer categories are offered as one group item: when at least
  :data:`STRONG_GROUP_MIN_SIZE` products of a retailer category path share it and at least
  :data:`STRONG_GROUP_SHARE` of them sit on one node (common practice, no source), one key
  settles the whole group, so every queued item of the group carries the gain of the group;
- an audit slice: a seeded random share (default 2%, at least a few) of the auto-accepted
  products is queued too, so that the real error on each new feed can be measured
  (:func:`catmap.decide.threshold.estimate_error`).

The result feeds :meth:`catmap.store.Store.save_mapped` (status, group key, priority, reasons).
"""

from __future__ import annotations

import random
from collections import Counter, defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from catmap.decide.threshold import DEFAULT_AUDIT_MINIMUM, DEFAULT_AUDIT_RATE, audit_sample_rate

STRONG_GROUP_SHARE = 0.9
STRONG_GROUP_MIN_SIZE = 5
# An audit sample's worth is the error estimate, not a likely correction: it ranks behind a
# product that is more likely wrong than right, ahead of near-certain ones. (Our choice.)
DEFAULT_AUDIT_PRIORITY = 0.5
# A candidate brand's item ranks behind this share of the feed's low-confidence items: a brand
# verdict settles many products at once but rarely changes a node, so the uncertain nodes come
# first and the brand a little before the queue's tail. Chosen setting, no source.
BRAND_CANDIDATE_BEHIND = 0.75
# Its priority when the feed has no low-confidence item to rank against. Chosen setting, no
# source.
BRAND_CANDIDATE_PRIORITY = 0.3


@dataclass(frozen=True, slots=True)
class Candidate:
    """One mapped product, as the queue planner sees it.

    Attributes:
        product_id: the product.
        group_key: its retailer category path text ('' when the feed has none).
        node_id: the suggested node.
        confidence: the suggestion's calibrated confidence.
        accepted: True when the confidence passed the auto-accept threshold.
        brand_conflict: brand extraction disagrees with the feed's brand.
        brand_confidence: confidence of the extracted brand.
        audience_conflict: who / age from the text contradict the node's audience.
    """

    product_id: str
    group_key: str
    node_id: str
    confidence: float
    accepted: bool
    brand_conflict: bool = False
    brand_confidence: float = 1.0
    audience_conflict: bool = False


@dataclass(frozen=True, slots=True)
class GroupConsensus:
    """How much the products of one retailer category agree on a node."""

    group_key: str
    size: int
    top_node: str
    top_share: float
    strong: bool


@dataclass(frozen=True, slots=True)
class PlannedReview:
    """What the plan says about one product.

    Attributes:
        status: ``accepted``, ``queued`` (its node needs a person) or ``audit``.
        reasons: the review reasons it is queued for (empty: not queued).
        priority: expected gain of reviewing it.
        group_offer: its group can be settled in one key.
    """

    status: str
    reasons: tuple[str, ...]
    priority: float
    group_offer: bool


@dataclass(frozen=True, slots=True)
class QueueEntry:
    """One line of the planned queue, in review order."""

    product_id: str
    group_key: str
    reasons: tuple[str, ...]
    priority: float
    group_offer: bool


@dataclass(frozen=True, slots=True)
class QueuePlan:
    """The plan for a feed: per product, per group, and the queue in order."""

    reviews: dict[str, PlannedReview]
    groups: dict[str, GroupConsensus]
    audit_ids: tuple[str, ...]

    def entries(self, candidates: Iterable[Candidate]) -> list[QueueEntry]:
        """Return the queued products in review order (highest gain first, then product id)."""
        lines = [
            QueueEntry(c.product_id, c.group_key, plan.reasons, plan.priority, plan.group_offer)
            for c in candidates
            if (plan := self.reviews[c.product_id]).reasons
        ]
        lines.sort(key=lambda e: (-e.priority, e.product_id))
        return lines


def expected_gain(confidence: float, affected: int = 1) -> float:
    """Return the expected number of mappings a review corrects: ``(1 − confidence) × affected``.

    Args:
        confidence: probability that the suggestion is right (clipped to [0, 1]).
        affected: products the one decision settles.
    """
    return (1.0 - min(1.0, max(0.0, confidence))) * max(0, affected)


def group_consensus(
    candidates: Iterable[Candidate],
    *,
    min_share: float = STRONG_GROUP_SHARE,
    min_size: int = STRONG_GROUP_MIN_SIZE,
) -> dict[str, GroupConsensus]:
    """Return the consensus of each retailer category group.

    The group with an empty key (no retailer path) is never strong: nothing ties its products.
    """
    nodes: dict[str, Counter[str]] = defaultdict(Counter)
    for candidate in candidates:
        nodes[candidate.group_key][candidate.node_id] += 1
    result = {}
    for key, counts in nodes.items():
        size = sum(counts.values())
        # Ties broken by node id so the plan does not depend on input order.
        top_node, top = min(counts.items(), key=lambda item: (-item[1], item[0]))
        share = top / size
        strong = bool(key) and size >= min_size and share >= min_share
        result[key] = GroupConsensus(key, size, top_node, share, strong)
    return result


def audit_sample(
    product_ids: Sequence[str],
    *,
    rate: float = DEFAULT_AUDIT_RATE,
    minimum: int = DEFAULT_AUDIT_MINIMUM,
    random_state: int = 0,
) -> list[str]:
    """Draw the audit slice: a seeded random share of the auto-accepted products.

    Args:
        product_ids: the auto-accepted products.
        rate: the share to audit.
        minimum: the fewest to audit (all of them when there are fewer).
        random_state: the seed; the same ids and seed give the same sample.

    Returns:
        The sampled ids, in the order given.
    """
    ids = sorted(set(product_ids))
    if not ids:
        return []
    share = audit_sample_rate(len(ids), rate=rate, minimum=minimum)
    count = min(len(ids), max(minimum, round(share * len(ids))))
    chosen = set(random.Random(random_state).sample(ids, count))
    return [pid for pid in dict.fromkeys(product_ids) if pid in chosen]


def plan_queue(
    candidates: Sequence[Candidate],
    *,
    min_share: float = STRONG_GROUP_SHARE,
    min_size: int = STRONG_GROUP_MIN_SIZE,
    audit_rate: float = DEFAULT_AUDIT_RATE,
    audit_minimum: int = DEFAULT_AUDIT_MINIMUM,
    audit_priority: float = DEFAULT_AUDIT_PRIORITY,
    random_state: int = 0,
) -> QueuePlan:
    """Plan the review of a feed's mapped products.

    Args:
        candidates: every mapped product of the feed (unique product ids).
        min_share: share on one node that makes a group strong.
        min_size: products a strong group needs.
        audit_rate: share of auto-accepted products to audit.
        audit_minimum: the fewest audit samples.
        audit_priority: priority of an audit sample.
        random_state: seed of the audit sample.

    Returns:
        The plan.

    Raises:
        ValueError: a product id appears twice.
    """
    seen: set[str] = set()
    for candidate in candidates:
        if candidate.product_id in seen:
            raise ValueError(f"product id {candidate.product_id!r} appears twice")
        seen.add(candidate.product_id)

    groups = group_consensus(candidates, min_share=min_share, min_size=min_size)
    # The gain of settling a strong group in one key: the uncertainty summed over its queued items.
    group_gain: dict[str, float] = defaultdict(float)
    for c in candidates:
        if not c.accepted and groups[c.group_key].strong:
            group_gain[c.group_key] += expected_gain(c.confidence)

    audit_ids = audit_sample(
        [c.product_id for c in candidates if c.accepted],
        rate=audit_rate,
        minimum=audit_minimum,
        random_state=random_state,
    )
    audited = set(audit_ids)

    reviews: dict[str, PlannedReview] = {}
    for c in candidates:
        reasons: list[str] = []
        gains: list[float] = []
        group_offer = False
        if c.accepted:
            status = "audit" if c.product_id in audited else "accepted"
            if status == "audit":
                reasons.append("audit_sample")
                gains.append(audit_priority)
        else:
            status = "queued"
            reasons.append("low_confidence")
            if groups[c.group_key].strong:
                group_offer = True
                gains.append(group_gain[c.group_key])
            else:
                gains.append(expected_gain(c.confidence))
        if c.brand_conflict:
            reasons.append("brand_conflict")
            gains.append(expected_gain(c.brand_confidence))
        if c.audience_conflict:
            reasons.append("audience_conflict")
            # The text and the node disagree: as likely one way as the other.
            gains.append(expected_gain(0.5))
        reviews[c.product_id] = PlannedReview(
            status, tuple(reasons), max(gains, default=0.0), group_offer
        )
    return QueuePlan(reviews, groups, tuple(audit_ids))


def brand_candidate_priority(
    low_confidence: Iterable[float],
    *,
    behind: float = BRAND_CANDIDATE_BEHIND,
    default: float = BRAND_CANDIDATE_PRIORITY,
) -> float:
    """Return the priority of a candidate brand's review item in a feed.

    The item ranks behind ``behind`` of the feed's low-confidence items: its priority is the
    value that share of their priorities reaches or passes, i.e. the ``1 − behind`` quantile of
    their priorities (linear interpolation between the sorted values). With ``behind = 0.75``
    that is the 75th percentile counted down the queue from its head (the 25th of the values).

    Args:
        low_confidence: the priorities of the feed's waiting low-confidence items.
        behind: the share of them that ranks ahead of the brand's item (0..1).
        default: the priority when there are none.

    Returns:
        The priority.

    Raises:
        ValueError: ``behind`` is outside [0, 1].
    """
    if not 0.0 <= behind <= 1.0:
        raise ValueError(f"behind must be within [0, 1], got {behind}")
    values = sorted(float(p) for p in low_confidence)
    if not values:
        return default
    position = (1.0 - behind) * (len(values) - 1)
    low = int(position)
    high = min(low + 1, len(values) - 1)
    return values[low] + (values[high] - values[low]) * (position - low)
