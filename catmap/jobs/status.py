"""Where each feed of a project stands: rows read and kept, accepted, queued, reviewed, products
per brand status, and the audited error of the auto-accepted part (the facts ``catmap status``
prints)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from catmap.errors import StoreError
from catmap.jobs._remap_versions import feed_tree_versions, mapping_tree_versions
from catmap.jobs.audit import check_feed_audit
from catmap.project import NO_STORE_HINT
from catmap.records import BRAND_STATUSES
from catmap.store import Store, store_path

__all__ = ["AUDIT_CONFIDENCE", "feed_status_facts", "project_status"]

# Confidence of the exact (Clopper-Pearson) interval around the audited error.
AUDIT_CONFIDENCE = 0.95


def feed_status_facts(
    store: Store, feed: str | None = None, confidence: float = AUDIT_CONFIDENCE
) -> list[dict[str, Any]]:
    """Return the status facts of one feed, or of every feed in the store.

    Args:
        store: the project store.
        feed: only this feed (its name); default: every feed.
        confidence: confidence of the interval around the audited error.

    Returns:
        One dict per feed, JSON-ready.
    """
    names = [feed] if feed else [record.name for record in store.feeds()]
    versions = feed_tree_versions(store)
    out = []
    for name in names:
        status = store.feed_status(name, confidence=confidence)
        error = status.audit_error
        by_reason = store.queue_summary(name).by_reason
        open_by_reason = {
            reason: states.get("open", 0) + states.get("claimed", 0)
            for reason, states in sorted(by_reason.items())
            if states.get("open", 0) + states.get("claimed", 0)
        }
        check = check_feed_audit(store, name, apply=False)
        out.append(
            {
                "feed": name,
                "threshold": check.get("threshold"),
                "tree_version": versions.get(name, "")
                or ",".join(sorted(v for v in mapping_tree_versions(store, name) if v)),
                "read": status.read,
                "kept": status.kept,
                "rejected": status.rejected,
                "products": status.products,
                "accepted": status.accepted + status.audit,
                "queued": status.queued,
                "reviewed": status.reviewed,
                "open_items": status.open_items + status.claimed_items,
                "open_by_reason": open_by_reason,
                # Candidate brands whose review item waits: one verdict each settles them.
                "brands_waiting": len(store.brands_waiting(name)),
                "done_items": status.done_items,
                "brand_status": {
                    name: status.brand_statuses[name]
                    for name in BRAND_STATUSES
                    if name in status.brand_statuses
                },
                "audit_checked": status.audit_checked,
                "audit_wrong": status.audit_wrong,
                "audit_error": None
                if error is None
                else {
                    "rate": error.rate,
                    "low": error.low,
                    "high": error.high,
                    "confidence": error.confidence,
                    "text": error.describe(),
                },
                # What the audit says about the threshold (``catmap audit-check`` acts on it).
                "audit_check": check,
            }
        )
    return out


def project_status(
    project: str | Path, feed: str | None = None, *, confidence: float = AUDIT_CONFIDENCE
) -> dict[str, Any]:
    """Return where each feed of a project stands: ``{"store": path, "feeds": [...],
    "brands_waiting": N}`` (the candidate brands waiting in the review queue, each counted
    once however many feeds it waits in).

    Args:
        project: the project folder.
        feed: only this feed (its name); default: every feed.
        confidence: confidence of the interval around the audited error.

    Raises:
        StoreError: the project has no store yet.
    """
    path = store_path(project)
    if not path.exists():
        raise StoreError("no project store here", path=path, hint=NO_STORE_HINT)
    with Store.open(path) as store:
        feeds = feed_status_facts(store, feed, confidence)
        waiting = len(store.brands_waiting(feed))
    return {"store": str(path), "feeds": feeds, "brands_waiting": waiting}
