"""The project's brand registry between the store's plain records and
:class:`~catmap.attributes.registry.BrandRegistry`: load it, merge a feed's into it, confirm
a brand. Every change runs under the store's write lock (:meth:`Store.change_brand_records`).
"""

from __future__ import annotations

from typing import Any

from catmap.attributes.brand import BrandDictionary
from catmap.attributes.registry import (
    CONFIRMED,
    REGISTRY_FORMAT,
    REGISTRY_VERSION,
    BrandRegistry,
    RegistryBrand,
)
from catmap.store import Store


def _registry(records: list[dict[str, Any]], dictionary: BrandDictionary | None) -> BrandRegistry:
    return BrandRegistry.from_dict(
        {"format": REGISTRY_FORMAT, "version": REGISTRY_VERSION, "brands": records},
        dictionary=dictionary,
    )


def _records(registry: BrandRegistry) -> list[dict[str, Any]]:
    return list(registry.to_dict()["brands"])


def load_registry(store: Store, dictionary: BrandDictionary | None = None) -> BrandRegistry:
    """Return the project's brand registry (empty before the first onboarding).

    Raises:
        InputError: a stored brand record is malformed.
    """
    return _registry(store.brand_records(), dictionary)


def merge_feed_registry(
    store: Store, found: BrandRegistry, *, dictionary: BrandDictionary | None, feed: str
) -> tuple[list[tuple[str, str]], BrandRegistry]:
    """Save a feed's brands and rebuild the project's registry from every feed's, typos
    joined across feeds; a brand a person confirmed stays confirmed.

    The project's registry is rebuilt (``update`` with each feed's, then ``cluster_typos``)
    rather than added to, so that onboarding a feed again replaces its counts instead of
    adding them twice. A confirmed brand no feed shows any longer is kept as it was.

    Args:
        store: the project store.
        found: the brands the feed showed (a fitted learner's ``registry_``).
        dictionary: the brand dictionary in use.
        feed: the feed's name (it must be in the store).

    Returns:
        The typo joins made across feeds as (joined, into) names, and the registry as saved.
    """

    def merge(
        records: list[dict[str, Any]], feeds: dict[str, dict[str, Any]]
    ) -> tuple[list[dict[str, Any]], tuple[list[tuple[str, str]], BrandRegistry]]:
        registry = BrandRegistry(dictionary)
        for data in feeds.values():
            registry.update(BrandRegistry.from_dict(data))
        joins = registry.cluster_typos()
        kept: list[dict[str, Any]] = []
        for brand in _registry(records, None).brands(CONFIRMED):
            now = next(
                (b for b in map(registry.resolve, (brand.name, *brand.variants)) if b), None
            )
            if now is None:
                kept.append(brand.to_dict())
            else:
                now.status = CONFIRMED
        return _records(registry) + kept, (joins, registry)

    return store.change_brand_records(
        merge, action="brands_merged", actor="onboard", feed=feed,
        feed_brands=found.to_dict(),
        detail=lambda result: {
            "brands": len(result[1]), "from_feed": len(found),
            "typo_joins": [list(pair) for pair in result[0]],
        },
    )  # fmt: skip


def confirm_brand(store: Store, name: str, *, actor: str = "cli") -> tuple[RegistryBrand, str]:
    """Mark a brand of the registry confirmed (audited); return it and its status before.

    Raises:
        InputError: no brand of that name or spelling is in the registry.
    """

    def confirm(
        records: list[dict[str, Any]], _feeds: dict[str, dict[str, Any]]
    ) -> tuple[list[dict[str, Any]], tuple[RegistryBrand, str]]:
        registry = _registry(records, None)
        found = registry.resolve(name)
        before = found.status if found is not None else ""
        brand = registry.confirm(name)
        return _records(registry), (brand, before)

    return store.change_brand_records(
        confirm, action="brand_confirmed", actor=actor,
        detail=lambda result: {"brand": result[0].name, "asked": name, "was": result[1]},
    )  # fmt: skip
