"""What the store holds and gives back: the value sets of its columns and its records.

Plain frozen dataclasses, so that callers (onboarding, review, remap, export) never see a
database row.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

from catmap.records import Alternative, Attributes, Mapping, Product

MAPPING_STATUSES = ("accepted", "queued", "audit", "reviewed")
REVIEW_REASONS = (
    "low_confidence",
    "audit_sample",
    "brand_conflict",
    "audience_conflict",
    "remap",
    "audit_over_target",
    "brand_candidate",
)
ITEM_STATES = ("open", "claimed", "done")
DECISION_ACTIONS = ("accept", "choose", "no_fit", "skip", "fix_attributes")
# Reasons a whole retailer category can be settled for in one key; conflicts, audit samples and
# candidate brands are judged one product (or one brand) at a time (an audit sample accepted in
# bulk would measure nothing).
GROUP_REASONS = ("low_confidence", "remap")
# What a person can decide about a brand of the registry.
BRAND_VERDICTS = ("confirmed", "rejected", "candidate")
# The audit log's action for each verdict ("candidate": set back, taking the last one back).
BRAND_VERDICT_ACTIONS = {
    "confirmed": "brand_confirmed", "rejected": "brand_rejected", "candidate": "brand_reset",
}



@dataclass(frozen=True, slots=True)
class BrandVerdict:
    """A person's verdict on a brand of the project's registry, as the store applies it.

    Attributes:
        name: the brand's canonical name.
        status: ``confirmed``, ``rejected`` as no brand, or ``candidate`` again (set back,
            taking the last verdict back; one of :data:`BRAND_VERDICTS`).
        was: its status before.
        spellings: the brand's spellings, among them every brand value of products that is
            this brand (they change with it).
        asked: the name or spelling the person gave.
        products: how many products' brand changed (filled in by the store).
        audit_id: the verdict's audit log entry (filled in by the store).
        items: the ``brand_candidate`` review items the verdict settled, or brought back when
            it sets the brand back to a candidate (filled in by the store).
    """

    name: str
    status: str
    was: str
    spellings: tuple[str, ...] = ()
    asked: str = ""
    products: int = 0
    audit_id: int = 0
    items: tuple[int, ...] = ()


@dataclass(frozen=True, slots=True)
class FeedRecord:
    """A feed known to the project."""

    id: int
    name: str
    source_path: str
    profile_path: str
    created_at: str


@dataclass(frozen=True, slots=True)
class RunRecord:
    """One run of a command (onboard, map, remap, import...) and its summary.

    ``process`` is the process id and host that ran it (None for runs recorded before it
    was kept).
    """

    id: int
    feed_id: int | None
    kind: str
    params: dict[str, Any]
    started_at: str
    finished_at: str | None
    status: str
    summary: dict[str, Any]
    process: dict[str, Any] | None = None


@dataclass(frozen=True, slots=True)
class MappedRow:
    """One product as the mapping stage leaves it, ready for :meth:`Store.save_mapped`.

    Attributes:
        product: the normalised product.
        mapping: the chosen node and its confidence.
        attributes: brand, who, age, colour family, restriction.
        status: one of :data:`MAPPING_STATUSES` (``accepted``, ``queued`` or ``audit``).
        group_key: the retailer category path text the product is grouped under for review.
        priority: expected gain of reviewing it (see :mod:`catmap.decide.queue`).
        reasons: review reasons to queue it for; when empty, ``queued`` means
            ``low_confidence`` and ``audit`` means ``audit_sample``.
    """

    product: Product
    mapping: Mapping
    attributes: Attributes = field(default_factory=Attributes)
    status: str = "accepted"
    group_key: str = ""
    priority: float = 0.0
    reasons: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class StoredMapping:
    """A product's mapping as stored, with its attributes and review status."""

    feed_id: int
    product_id: str
    mapping: Mapping
    attributes: Attributes
    status: str
    group_key: str
    model_version: str
    tree_version: str
    run_id: int | None


@dataclass(frozen=True, slots=True)
class NodeAttributes:
    """The attributes a product's node decides, read for the node a reviewer moves it to.

    The store holds no category tree: the caller reads these from the tree (see
    :func:`catmap.review.follow.node_attributes`) and the store writes them in the same
    transaction as the decision, so a product never sits on a new node with the old node's
    restriction flag or who / age applicability.

    Attributes:
        restriction: the restriction flag on the new node ('' = none).
        who: who on the new node (``not_applicable`` where the node says gender does not apply).
        age: age on the new node (``not_applicable`` where the node says age does not apply).
    """

    restriction: str
    who: str
    age: str


NodeAttributesFor = Callable[[Product, StoredMapping], NodeAttributes]
"""Reads :class:`NodeAttributes` for a product (and its mapping as stored) on a group's node."""


@dataclass(frozen=True, slots=True)
class ReviewItem:
    """One entry of the review queue: one product, with every reason it is queued for.

    ``reason`` is the leading reason (the first of ``reasons``).
    """

    id: int
    feed_id: int
    feed_name: str
    product_id: str
    group_key: str
    reason: str
    priority: float
    state: str
    claimed_by: str | None
    lease_until: str | None
    skips: int
    withdrawn_reason: str | None = None
    reasons: tuple[str, ...] = ()

    @property
    def withdrawn(self) -> bool:
        """The item was closed without a decision (see :meth:`Store.withdraw_items`)."""
        return self.withdrawn_reason is not None


@dataclass(frozen=True, slots=True)
class GroupInfo:
    """The retailer category an item belongs to, and how much its products agree.

    Attributes:
        key: the group key (retailer category path text).
        size: products of the feed in this group.
        open_items: items of the group still to review (open or claimed), any reason.
        top_node: the node most of the group's products are mapped to ('' when empty).
        top_share: the share of the group's products on ``top_node`` (0..1).
        strong: a consensus strong enough to offer the whole group in one key.
    """

    key: str
    size: int
    open_items: int
    top_node: str
    top_share: float
    strong: bool


@dataclass(frozen=True, slots=True)
class ReviewView:
    """Everything the review screen shows for one item."""

    item: ReviewItem
    product: Product
    mapping: Mapping
    attributes: Attributes
    status: str
    group: GroupInfo
    description_excerpt: str

    @property
    def title(self) -> str:
        """The product title."""
        return self.product.title

    @property
    def brand(self) -> str:
        """The brand as the feed gave it."""
        return self.product.brand

    @property
    def price(self) -> Decimal | None:
        """The price, if one was read."""
        return self.product.price

    @property
    def currency(self) -> str | None:
        """The ISO 4217 currency code, if known."""
        return self.product.currency

    @property
    def retailer_path(self) -> str:
        """The retailer's own category path, as text."""
        return " > ".join(self.product.category_path)

    @property
    def suggested_node(self) -> str:
        """The node catmap suggests."""
        return self.mapping.node_id

    @property
    def confidence(self) -> float:
        """The suggestion's calibrated confidence."""
        return self.mapping.confidence

    @property
    def alternatives(self) -> tuple[Alternative, ...]:
        """The next best nodes, best first."""
        return self.mapping.alternatives


@dataclass(frozen=True, slots=True)
class Decision:
    """What a reviewer decided about one item."""

    id: int
    item_id: int
    feed_id: int
    product_id: str
    reason: str
    reviewer: str
    at: str
    action: str
    from_node: str | None
    to_node: str | None
    brand_from: str | None
    brand_to: str | None
    who_from: str | None
    who_to: str | None
    age_from: str | None
    age_to: str | None
    note: str
    bulk_id: str | None
    undone_at: str | None


@dataclass(frozen=True, slots=True)
class GroupCount:
    """Queue counts of one retailer category group."""

    feed_id: int
    group_key: str
    open: int
    claimed: int
    done: int


@dataclass(frozen=True, slots=True)
class QueueSummary:
    """How much of the review queue is open, claimed and done.

    ``done`` counts items a person decided; ``withdrawn`` those closed without a decision
    because a later run settled them (they are in ``by_reason`` under ``"withdrawn"``).
    """

    open: int
    claimed: int
    done: int
    by_reason: dict[str, dict[str, int]]
    by_group: list[GroupCount]
    withdrawn: int = 0

    @property
    def total(self) -> int:
        """All items."""
        return self.open + self.claimed + self.done + self.withdrawn


@dataclass(frozen=True, slots=True)
class TrainingExample:
    """A product whose node a person decided: training data for ``catmap train``."""

    feed_id: int
    product: Product
    node_id: str
    reviewer: str
    decided_at: str


@dataclass(frozen=True, slots=True)
class AuditEntry:
    """One line of the append-only audit log."""

    id: int
    at: str
    actor: str
    action: str
    feed_id: int | None
    item_id: int | None
    detail: dict[str, Any]


@dataclass(frozen=True, slots=True)
class FeedStatus:
    """Where a feed stands: rows read, products mapped, review progress, audited error.

    ``audit_error`` is the observed error among reviewed audit samples with its Clopper-Pearson
    interval (:func:`catmap.decide.threshold.estimate_error`), None before any audit sample is
    reviewed.
    """

    feed: FeedRecord
    read: int | None
    kept: int | None
    rejected: int | None
    products: int
    accepted: int
    queued: int
    audit: int
    reviewed: int
    open_items: int
    claimed_items: int
    done_items: int
    audit_checked: int
    audit_wrong: int
    audit_error: Any = None  # catmap.decide.threshold.ErrorEstimate | None
    withdrawn_items: int = 0
    # products per brand status (catmap.records.BRAND_STATUSES), the statuses present only
    brand_statuses: dict[str, int] = field(default_factory=dict)
