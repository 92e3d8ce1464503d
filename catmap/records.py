"""The plain data that flows between catmap's stages.

A feed reader yields :class:`SourceRecord` (raw text fields plus where they came from); the
normaliser turns one into a :class:`Product` or a :class:`Reject`. Later stages add a
:class:`Mapping` (the node of the shared tree) and :class:`Attributes` (brand, who, age, colour,
restriction). All are frozen: a stage returns new values instead of changing old ones.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import Decimal

# catmap's own availability values (a small closed set; anything unrecognised is "unknown").
AVAILABILITY_VALUES = ("available", "limited", "sold_out", "coming_soon", "unknown")

# catmap's own audience values: who a product is for, and for which age.
WHO_VALUES = ("female", "male", "unisex", "not_applicable")
AGE_VALUES = ("adult", "kids", "baby", "not_applicable")

# How far a product's brand is trusted (catmap's own values): named by the brand dictionary,
# confirmed by a person in the project's brand registry, a candidate the feed showed that no
# person has confirmed yet, set on this product by a reviewer, or no brand.
BRAND_STATUSES = ("dictionary", "confirmed", "candidate", "corrected", "none")

# How a node was chosen for a product.
MAPPING_METHODS = ("rule", "model", "backoff", "cold_start", "review")


@dataclass(frozen=True, slots=True)
class SourceRecord:
    """One record as a feed reader found it, before any cleaning.

    Attributes:
        fields: source column (CSV), dotted element path (XML) or key (JSON) → raw text.
            A missing value is an absent key; values are never None.
        line: 1-based line where the record starts in the decoded feed (0 when unknown).
        location: a human description of where it is ("line 12", "<item> #3 at line 40").
    """

    fields: dict[str, str]
    line: int
    location: str


@dataclass(frozen=True, slots=True)
class Product:
    """A normalised product record: the trade's fields, every other source column in ``extra``.

    ``gtin`` holds the GTIN-14 form when the check digit is valid; an invalid or malformed code is
    kept in ``gtin_raw`` and flagged, never silently dropped. ``flags`` lists what normalisation
    noticed but did not reject for (e.g. ``gtin_invalid``, ``price_unparsed``).
    """

    product_id: str
    title: str
    description: str = ""
    brand: str = ""
    category_path: tuple[str, ...] = ()
    price: Decimal | None = None
    currency: str | None = None
    gtin: str | None = None
    gtin_raw: str = ""
    gender_text: str = ""
    colour: str = ""
    size: str = ""
    url: str = ""
    image_url: str = ""
    availability: str = "unknown"
    extra: dict[str, str] = field(default_factory=dict)
    flags: tuple[str, ...] = ()
    source_line: int = 0


@dataclass(frozen=True, slots=True)
class Reject:
    """A source record that could not become a product, and why.

    Attributes:
        reason: a reason code of catmap's own (e.g. ``missing_title``, ``duplicate_id``).
        detail: one human sentence.
        line: 1-based source line (0 when unknown).
        location: as in :class:`SourceRecord`.
        excerpt: the start of the raw record, for the person who fixes the feed.
        product_id: when one could be read.
    """

    reason: str
    detail: str
    line: int
    location: str
    excerpt: str
    product_id: str = ""


@dataclass(frozen=True, slots=True)
class Alternative:
    """A candidate node with its calibrated probability."""

    node_id: str
    confidence: float


@dataclass(frozen=True, slots=True)
class Mapping:
    """Where a product sits in the shared tree, and how sure catmap is.

    Attributes:
        node_id: the chosen node (a leaf, or an inner node after back-off).
        confidence: calibrated probability that ``node_id`` is right (for an inner node: that the
            true leaf lies under it).
        method: one of :data:`MAPPING_METHODS`.
        alternatives: the next best leaves, best first.
        reason: for a rule, the rule's text; for back-off, the leaf it backed off from.
    """

    node_id: str
    confidence: float
    method: str
    alternatives: tuple[Alternative, ...] = ()
    reason: str = ""


@dataclass(frozen=True, slots=True)
class Attributes:
    """Product attributes catmap extracts, each with its confidence and evidence.

    ``brand_status`` is one of :data:`BRAND_STATUSES`: how far the brand is trusted.
    """

    brand: str = ""
    brand_confidence: float = 0.0
    brand_evidence: str = ""
    brand_status: str = "none"
    who: str = "not_applicable"
    age: str = "not_applicable"
    audience_evidence: str = ""
    audience_conflict: bool = False
    colour_family: str = ""
    restriction: str = ""
