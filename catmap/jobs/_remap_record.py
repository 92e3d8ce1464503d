"""The store's record of a remap: its report and state, and undoing it (rollback) or keeping it
(finalise). Every changed mapping's previous columns sit in ``remap_previous`` and each review
item created or reopened in ``remap_items`` until the remap is finalised."""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

from catmap.errors import StoreError
from catmap.store import Store

BATCH_SIZE = 5000

PREVIOUS_COLUMNS = (
    "node_id",
    "confidence",
    "method",
    "alternatives",
    "reason",
    "model_version",
    "tree_version",
    "status",
    "group_key",
    "who",
    "age",
    "audience_evidence",
    "audience_conflict",
    "restriction",
)
# Previous columns saved only from schema version 4 on (NULL before: rollback keeps the value).
_ATTRIBUTE_COLUMNS = ("who", "age", "audience_evidence", "audience_conflict", "restriction")
ITEM_COLUMNS = (
    "feed_id",
    "product_id",
    "group_key",
    "reason",
    "priority",
    "state",
    "claimed_by",
    "lease_until",
    "created_at",
    "skips",
)


@dataclass
class RemapReport:
    """What a remap did (what ``catmap remap`` prints, and the run summary)."""

    remap_id: int = 0
    run_id: int = 0
    from_version: str = ""
    to_version: str = ""
    crosswalk: str = "computed"
    scorer: str = "cold_start"
    mappings: int = 0
    unchanged: int = 0
    moved_automatically: int = 0
    rescored: int = 0
    requeued: int = 0
    reviewed_kept: int = 0
    not_in_old_tree: int = 0
    by_change: dict[str, dict[str, int]] = field(default_factory=dict)
    departments_before: dict[str, int] = field(default_factory=dict)
    departments_after: dict[str, int] = field(default_factory=dict)
    queue_groups: dict[str, int] = field(default_factory=dict)
    thresholds: dict[str, dict[str, Any]] = field(default_factory=dict)
    # Per changed old node: old and new ids and paths, change, source, evidence, and how many
    # products moved as they were, were re-scored and went to review.
    nodes: dict[str, dict[str, Any]] = field(default_factory=dict)

    @property
    def no_review_share(self) -> float:
        """Share of the remapped products that the remap did not send to review."""
        return 1.0 - self.requeued / self.mappings if self.mappings else 1.0

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        facts = dict(self.__dict__)
        facts["no_review_share"] = round(self.no_review_share, 4)
        return facts

    @classmethod
    def from_dict(cls, facts: dict[str, Any]) -> RemapReport:
        """Rebuild a report saved by :meth:`to_dict`."""
        known = {k: v for k, v in facts.items() if k in cls.__dataclass_fields__}
        return cls(**known)


@dataclass(frozen=True, slots=True)
class RemapState:
    """A remap as the store records it."""

    id: int
    run_id: int | None
    from_version: str
    to_version: str
    state: str
    started_at: str
    finished_at: str | None
    pending_mappings: int
    report: RemapReport


def pending_remap(store: Store) -> dict[str, Any] | None:
    """Return the remap still running or waiting to be finalised (None when there is none)."""
    row = store._read(
        "SELECT * FROM remaps WHERE state IN ('running', 'pending') ORDER BY id DESC LIMIT 1"
    ).fetchone()
    return dict(row) if row is not None else None


def latest_remap(store: Store) -> RemapState | None:
    """Return the newest remap recorded in the store (None when there was none)."""
    row = store._read("SELECT * FROM remaps ORDER BY id DESC LIMIT 1").fetchone()
    if row is None:
        return None
    count = store._read(
        "SELECT COUNT(*) FROM remap_previous WHERE remap_id = ?", (row["id"],)
    ).fetchone()[0]
    return RemapState(
        id=row["id"],
        run_id=row["run_id"],
        from_version=row["from_version"],
        to_version=row["to_version"],
        state=row["state"],
        started_at=row["started_at"],
        finished_at=row["finished_at"],
        pending_mappings=int(count),
        report=RemapReport.from_dict(json.loads(row["report"])),
    )


def _open_remap(store: Store, action: str) -> dict[str, Any]:
    pending = pending_remap(store)
    if pending is None:
        raise StoreError(
            f"no remap to {action}",
            path=store.path,
            hint="run `catmap remap --to VERSION` first",
        )
    return pending


def rollback_remap(store: Store, *, actor: str = "catmap", batch_size: int = BATCH_SIZE) -> int:
    """Put back every mapping and review item as it was before the pending remap.

    Args:
        store: the project store.
        actor: who rolls back (for the audit log).
        batch_size: mappings restored per statement page.

    Returns:
        How many mappings were restored.

    Raises:
        StoreError: no remap to roll back, or a reviewer decided something since the remap
            (rolling back would lose it).
    """
    remap = _open_remap(store, "roll back")
    remap_id = int(remap["id"])
    with store._transaction() as conn:
        later = conn.execute(
            "SELECT COUNT(*) FROM decisions WHERE id > ?", (remap["last_decision_id"],)
        ).fetchone()[0]
        if later:
            raise StoreError(
                f"{later} review decision(s) were made after remap {remap_id}; "
                "rolling back would lose them",
                path=store.path,
                hint="finalise the remap with `catmap remap-finalise` instead",
            )
        restored = conn.execute(
            "UPDATE mappings SET "
            + ", ".join(
                f"{c} = COALESCE(p.{c}, mappings.{c})"
                if c in _ATTRIBUTE_COLUMNS
                else f"{c} = p.{c}"
                for c in PREVIOUS_COLUMNS
            )
            + " FROM remap_previous AS p WHERE p.remap_id = ? "
            "AND mappings.feed_id = p.feed_id AND mappings.product_id = p.product_id",
            (remap_id,),
        ).rowcount
        for item in conn.execute(
            "SELECT item_id, before FROM remap_items WHERE remap_id = ?", (remap_id,)
        ).fetchall():
            if item["before"] is None:
                conn.execute("DELETE FROM review_items WHERE id = ?", (item["item_id"],))
            else:
                saved = json.loads(item["before"])
                conn.execute(
                    "UPDATE review_items SET "
                    + ", ".join(f"{c} = ?" for c in ITEM_COLUMNS)
                    + " WHERE id = ?",
                    [saved[c] for c in ITEM_COLUMNS] + [item["item_id"]],
                )
        conn.execute("DELETE FROM remap_items WHERE remap_id = ?", (remap_id,))
        conn.execute("DELETE FROM remap_previous WHERE remap_id = ?", (remap_id,))
        conn.execute("UPDATE feeds SET tree_version = ?", (remap["from_version"],))
        conn.execute(
            "UPDATE remaps SET state = 'rolled_back', finished_at = ? WHERE id = ?",
            (store._now(), remap_id),
        )
        store._audit(
            conn,
            "remap_rollback",
            actor,
            detail={"remap_id": remap_id, "mappings_restored": restored},
        )
    return int(restored)


def finalise_remap(store: Store, *, actor: str = "catmap") -> int:
    """Keep the pending remap: drop the saved previous mappings (no rollback after this).

    Returns:
        How many saved previous mappings were dropped.

    Raises:
        StoreError: no remap waiting to be finalised (or one still running).
    """
    remap = _open_remap(store, "finalise")
    remap_id = int(remap["id"])
    if remap["state"] == "running":
        raise StoreError(
            f"remap {remap_id} did not finish",
            path=store.path,
            hint="run `catmap remap` again to complete it, or `catmap remap-rollback`",
        )
    with store._transaction() as conn:
        dropped = conn.execute(
            "DELETE FROM remap_previous WHERE remap_id = ?", (remap_id,)
        ).rowcount
        conn.execute("DELETE FROM remap_items WHERE remap_id = ?", (remap_id,))
        conn.execute(
            "UPDATE remaps SET state = 'finalised', finished_at = ? WHERE id = ?",
            (store._now(), remap_id),
        )
        store._audit(
            conn, "remap_finalise", actor, detail={"remap_id": remap_id, "mappings": dropped}
        )
    return int(dropped)
