"""The project's brand registry between the store's plain records and
:class:`~catmap.attributes.registry.BrandRegistry`: load it, merge a feed's into it, confirm,
reject or reset a brand (with the products that carry it:
:func:`catmap.review.brands.settle_brand`). Every
change runs under the store's write lock (:meth:`Store.change_brand_records`).
"""

from __future__ import annotations

from typing import Any

from catmap.attributes.brand import BrandDictionary
from catmap.attributes.registry import (
    CONFIRMED,
    REGISTRY_FORMAT,
    REGISTRY_VERSION,
    REJECTED,
    BrandRegistry,
    RegistryBrand,
)
from catmap.review.brands import settle_brand
from catmap.store import BrandVerdict, Store


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
    joined across feeds; a brand a person confirmed (or rejected as no brand) stays so.

    The project's registry is rebuilt (``update`` with each feed's, then ``cluster_typos``)
    rather than added to, so that onboarding a feed again replaces its counts instead of
    adding them twice. A confirmed or rejected brand no feed shows any longer is kept as it
    was; a rejected spelling that now joins a dictionary brand stays the dictionary's.

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
        before = _registry(records, None)
        for brand in before.brands(CONFIRMED) + before.brands(REJECTED):
            now = next(
                (b for b in map(registry.resolve, (brand.name, *brand.variants)) if b), None
            )
            if now is None:
                kept.append(brand.to_dict())
            elif brand.status == CONFIRMED or not now.dictionary_name:
                now.status = brand.status
        return _records(registry) + kept, (joins, registry)

    return store.change_brand_records(
        merge, action="brands_merged", actor="onboard", feed=feed,
        feed_brands=found.to_dict(),
        detail=lambda result: {
            "brands": len(result[1]), "from_feed": len(found),
            "typo_joins": [list(pair) for pair in result[0]],
        },
    )  # fmt: skip


def settle_registry_brand(
    store: Store, name: str, status: str, *, actor: str = "cli"
) -> tuple[RegistryBrand, BrandVerdict]:
    """Confirm a brand of the registry, reject it as no brand or set it back to a candidate,
    with its products (audited); return the brand as now stored and the verdict (its status
    before, the products changed).

    Raises:
        InputError: no brand of that name or spelling is in the registry, or it is a brand
            of the dictionary and the status is not ``confirmed``.
    """
    verdict = settle_brand(store, name, status, actor=actor)
    brand = load_registry(store).resolve(verdict.name)
    assert brand is not None  # just saved
    return brand, verdict
