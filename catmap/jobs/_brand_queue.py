"""Onboarding's last queue step: one ``brand_candidate`` review item per candidate brand of the
feed (:mod:`catmap.store.brand_items` places them), the feed's brand values grouped under the
project registry's brands (a brand seen in several spellings gets one item)."""

from __future__ import annotations

from catmap.jobs._brand_registry import load_registry
from catmap.store import Store

__all__ = ["queue_brand_candidates"]


def queue_brand_candidates(store: Store, feed: str, run_id: int | None) -> dict[str, int]:
    """Place the feed's candidate brands on the review queue (audited by the store).

    Call it after the feed's brands are merged into the project's registry.

    Args:
        store: the project store.
        feed: the feed's name.
        run_id: the onboarding run.

    Returns:
        ``{"brand_candidate": items}`` (empty when the feed has no candidate brand), to add
        to the run's queued products by reason.
    """
    registry = load_registry(store)
    brands: dict[str, list[str]] = {}
    for value in store.candidate_brand_values(feed):
        found = registry.resolve(value)
        brands.setdefault(found.name if found is not None else value, []).append(value)
    placed = store.place_brand_items(feed, brands, run_id=run_id)
    return {"brand_candidate": len(placed)} if placed else {}
