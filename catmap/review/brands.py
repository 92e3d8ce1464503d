"""A person's verdict on a brand of the project's registry: confirmed, or rejected as no brand.

New brands enter the registry as candidates (onboarding learns them from each feed); a person
confirms them, from the review screen or with ``catmap brands confirm``, before they are
trusted. :func:`settle_brand` writes the verdict and brings every product that carries the
brand as a candidate in line, in one store transaction, audited: a confirmed brand's products
become ``confirmed``; a rejected one's lose the brand (later onboarding runs never learn it
again and read a brand field holding it as empty).
"""

from __future__ import annotations

from typing import Any

from catmap.attributes import CANDIDATE_MARK, BrandRegistry, brand_key
from catmap.attributes.registry import (
    CONFIRMED,
    REGISTRY_FORMAT,
    REGISTRY_VERSION,
    REJECTED,
)
from catmap.store import BrandVerdict, Store

__all__ = ["confirm_brand", "reject_brand", "settle_brand"]


def settle_brand(
    store: Store, name: str, status: str, *, actor: str, item_id: int | None = None
) -> BrandVerdict:
    """Confirm a brand of the registry, or reject it as no brand (audited).

    Args:
        store: the project store.
        name: the brand's name, or any spelling of it seen.
        status: ``confirmed`` or ``rejected``.
        actor: who decides.
        item_id: the review item it was decided on, if any.

    Returns:
        The verdict: the brand's name, its status before, the products changed.

    Raises:
        InputError: no brand of that name or spelling is in the registry.
        ValueError: an unknown status.
    """

    def decide(
        records: list[dict[str, Any]], values: list[str]
    ) -> tuple[list[dict[str, Any]], BrandVerdict]:
        registry = BrandRegistry.from_dict(
            {"format": REGISTRY_FORMAT, "version": REGISTRY_VERSION, "brands": records}
        )
        found = registry.resolve(name)
        was = found.status if found is not None else ""
        brand = registry.set_status(name, status)
        keys = brand.keys() | {brand_key(brand.name)}
        spellings = tuple(v for v in values if brand_key(v) in keys)
        verdict = BrandVerdict(brand.name, status, was, spellings, name)
        return list(registry.to_dict()["brands"]), verdict

    return store.settle_brand(
        decide, actor=actor, item_id=item_id, candidate_mark=CANDIDATE_MARK,
        rejected_evidence=lambda v: f"'{v.name}' rejected as no brand by {actor}",
    )  # fmt: skip


def confirm_brand(
    store: Store, name: str, *, actor: str, item_id: int | None = None
) -> BrandVerdict:
    """Confirm a brand of the registry: it and its products are trusted (see
    :func:`settle_brand`)."""
    return settle_brand(store, name, CONFIRMED, actor=actor, item_id=item_id)


def reject_brand(
    store: Store, name: str, *, actor: str, item_id: int | None = None
) -> BrandVerdict:
    """Reject a brand of the registry as no brand (see :func:`settle_brand`)."""
    return settle_brand(store, name, REJECTED, actor=actor, item_id=item_id)
