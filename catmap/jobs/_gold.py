"""A feed's auto-accepted mappings compared with gold labels (the demo's measured error)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from catmap.store import Store


@dataclass(frozen=True, slots=True)
class GoldCheck:
    """The auto-accepted part of a feed compared with gold labels.

    Attributes:
        products: products of the feed with a gold label.
        accepted: of those, auto-accepted (audit samples included; reviewed ones left out).
        wrong: accepted ones whose node is not the gold node.
        queued: products with a gold label still queued.
    """

    products: int
    accepted: int
    wrong: int
    queued: int

    @property
    def coverage(self) -> float:
        """Share of gold-labelled products auto-accepted."""
        return self.accepted / self.products if self.products else 0.0

    @property
    def error(self) -> float:
        """Error rate of the auto-accepted part against gold."""
        return self.wrong / self.accepted if self.accepted else 0.0

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return {
            "products": self.products,
            "accepted": self.accepted,
            "wrong": self.wrong,
            "queued": self.queued,
            "coverage": round(self.coverage, 4),
            "error": round(self.error, 4),
        }


def check_against_gold(store: Store, feed: str, gold: dict[str, str]) -> GoldCheck:
    """Compare a feed's auto-accepted mappings with gold nodes (product id → node id)."""
    products = accepted = wrong = queued = 0
    for product, stored in store.mappings(feed):
        expected = gold.get(product.product_id)
        if not expected:
            continue
        products += 1
        if stored.status in ("accepted", "audit"):
            accepted += 1
            wrong += stored.mapping.node_id != expected
        elif stored.status == "queued":
            queued += 1
    return GoldCheck(products, accepted, wrong, queued)
