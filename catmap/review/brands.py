"""A person's verdict on a brand of the project's registry: confirmed, or rejected as no brand.

New brands enter the registry as candidates (onboarding learns them from each feed); a person
confirms them, from the review screen or with ``catmap brands confirm``, before they are
trusted. :func:`settle_brand` writes the verdict and brings every product that carries the
brand as a candidate in line, in one store transaction, audited: a confirmed brand's products
become ``confirmed``; a rejected one's lose the brand (later onboarding runs never learn it
again and read a brand field holding it as empty). :func:`reset_brand` takes either back:
the brand is a candidate again, and so are its products.

The brand's ``brand_candidate`` review items (one per feed, :mod:`catmap.store.brand_items`)
go with the verdict, in the same transaction: settled by a confirmation or rejection, brought
back when the brand is set back to a candidate.
"""

from __future__ import annotations

from typing import Any

from catmap.attributes import CANDIDATE_MARK, BrandRegistry, brand_key
from catmap.attributes.registry import (
    CANDIDATE,
    CONFIRMED,
    REGISTRY_FORMAT,
    REGISTRY_VERSION,
    REJECTED,
)
from catmap.errors import InputError
from catmap.store import DEFAULT_LEASE_SECONDS, BrandVerdict, Store

__all__ = ["confirm_brand", "feed_own_names", "reject_brand", "reset_brand", "settle_brand"]


def settle_brand(
    store: Store,
    name: str,
    status: str,
    *,
    actor: str,
    item_id: int | None = None,
    taking_back: int | None = None,
    claim_items_for: str | None = None,
    lease_seconds: float = DEFAULT_LEASE_SECONDS,
) -> BrandVerdict:
    """Confirm a brand of the registry, reject it as no brand, or set it back to a candidate
    (audited). The brand's ``brand_candidate`` review items are settled, or placed again when
    it is set back (see :meth:`Store.settle_brand`).

    Args:
        store: the project store.
        name: the brand's name, or any spelling of it seen.
        status: ``confirmed``, ``rejected`` or ``candidate``.
        actor: who decides.
        item_id: the review item it was decided on, if any.
        taking_back: the audit entry of the verdict this takes back (see
            :meth:`Store.settle_brand`).
        claim_items_for: a reviewer who gets the brand's items brought back claimed.
        lease_seconds: the lease of those claims.

    Returns:
        The verdict: the brand's name, its status before, the products changed.

    Raises:
        InputError: no brand of that name or spelling is in the registry, or it is a brand of
            the dictionary (always trusted: only the dictionary file changes it).
        StoreError: ``taking_back`` is not the brand's last verdict.
        ValueError: an unknown status.
    """

    def decide(
        records: list[dict[str, Any]], values: list[str]
    ) -> tuple[list[dict[str, Any]], BrandVerdict]:
        registry = BrandRegistry.from_dict(
            {"format": REGISTRY_FORMAT, "version": REGISTRY_VERSION, "brands": records}
        )
        found = registry.resolve(name)
        if found is not None and found.dictionary_name and status != CONFIRMED:
            raise InputError(
                f"'{found.name}' is a brand of the brand dictionary: it is always trusted",
                field="brand",
                hint="to stop reading it as a brand, remove it from the dictionary "
                "(<project>/brands.csv) and onboard the feeds again",
            )
        was = found.status if found is not None else ""
        brand = registry.set_status(name, status)
        keys = brand.keys() | {brand_key(brand.name)}
        spellings = tuple(
            dict.fromkeys([*(v for v in values if brand_key(v) in keys), *brand.variants])
        )
        verdict = BrandVerdict(brand.name, status, was, spellings, name)
        return list(registry.to_dict()["brands"]), verdict

    return store.settle_brand(
        decide, actor=actor, item_id=item_id, candidate_mark=CANDIDATE_MARK,
        rejected_evidence=lambda v: f"'{v.name}' rejected as no brand by {actor}",
        taking_back=taking_back, claim_items_for=claim_items_for, lease_seconds=lease_seconds,
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


def reset_brand(
    store: Store,
    name: str,
    *,
    actor: str,
    item_id: int | None = None,
    taking_back: int | None = None,
    claim_items_for: str | None = None,
    lease_seconds: float = DEFAULT_LEASE_SECONDS,
) -> BrandVerdict:
    """Set a brand of the registry back to a candidate, taking its confirmation or rejection
    back: confirmed products are candidates again and the products its last rejection took
    it from get it back (see :func:`settle_brand`)."""
    return settle_brand(
        store, name, CANDIDATE, actor=actor, item_id=item_id, taking_back=taking_back,
        claim_items_for=claim_items_for, lease_seconds=lease_seconds,
    )  # fmt: skip


def feed_own_names(store: Store) -> dict[str, str]:
    """The shop names onboarding found in the feeds' brand fields (a retailer writing its own
    name there), so that a person is told before taking one for a brand.

    Read from each feed's latest finished onboarding run (``catmap onboard`` reports it).

    Returns:
        The name's brand key → the feed it is that feed's own name of.
    """
    found: dict[str, str] = {}
    latest: dict[int | None, dict[str, Any]] = {}
    for run in store.runs():
        if run.kind == "onboard" and run.finished_at and "brands" in run.summary:
            latest[run.feed_id] = run.summary
    names = {f.id: f.name for f in store.feeds()}
    for feed_id, summary in latest.items():
        retailer = (summary.get("brands") or {}).get("retailer")
        if isinstance(retailer, dict) and retailer.get("name"):
            key = brand_key(str(retailer["name"]))
            if key:
                found[key] = names.get(feed_id, "") if feed_id is not None else ""
    return found
