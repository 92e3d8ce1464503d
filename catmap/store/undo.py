"""Undo: a reviewer's last decision (or last bulk accept, as a whole) taken back.

A decision is never deleted: undo marks it undone, restores the mapping it saved and reopens
its item, claimed by the reviewer, in one transaction with its audit entry.
"""

from __future__ import annotations

import json
from typing import Any

from catmap.errors import TreeVersionMismatch
from catmap.store.audit import AuditMixin
from catmap.store.queue import DEFAULT_LEASE_SECONDS


class UndoMixin(AuditMixin):
    """Taking decisions back."""

    def undo_last(
        self, reviewer: str, *, lease_seconds: float = DEFAULT_LEASE_SECONDS
    ) -> list[int]:
        """Undo the reviewer's last decision (or last bulk accept, as a whole).

        The mapping goes back to what it was, the decision is marked undone (never deleted), the
        item is reopened and claimed by the reviewer, and the undo is audited.

        Returns:
            The ids of the items reopened (empty when there is nothing to undo).

        Raises:
            TreeVersionMismatch: the decision was made on another tree version than the
                mapping's now (a remap came between): undoing it would mix versions.
        """
        with self._transaction() as conn:
            last = conn.execute(
                "SELECT id, bulk_id FROM decisions WHERE reviewer = ? AND undone_at IS NULL "
                "ORDER BY id DESC LIMIT 1",
                (reviewer,),
            ).fetchone()
            if last is None:
                return []
            if last["bulk_id"]:
                rows = conn.execute(
                    "SELECT * FROM decisions WHERE bulk_id = ? AND undone_at IS NULL "
                    "ORDER BY id DESC",
                    (last["bulk_id"],),
                ).fetchall()
            else:
                rows = conn.execute(
                    "SELECT * FROM decisions WHERE id = ?", (last["id"],)
                ).fetchall()
            now = self._now()
            lease = self._lease_until(lease_seconds)
            item_ids: list[int] = []
            feed_id: int | None = None
            for decision in rows:
                before = json.loads(decision["before"])
                mapping = before["mapping"]
                feed_id = mapping["feed_id"]
                _same_tree_version(conn, mapping, decision["id"], self.path)
                if decision["action"] != "skip":
                    columns = [c for c in mapping if c not in ("feed_id", "product_id")]
                    conn.execute(
                        "UPDATE mappings SET "
                        + ", ".join(f"{c} = ?" for c in columns)
                        + " WHERE feed_id = ? AND product_id = ?",
                        [mapping[c] for c in columns] + [mapping["feed_id"], mapping["product_id"]],
                    )
                conn.execute(
                    "UPDATE review_items SET state = 'claimed', claimed_by = ?, lease_until = ?, "
                    "skips = ? WHERE id = ?",
                    (reviewer, lease, before.get("skips", 0), decision["item_id"]),
                )
                conn.execute(
                    "UPDATE decisions SET undone_at = ? WHERE id = ?", (now, decision["id"])
                )
                item_ids.append(decision["item_id"])
            self._audit(
                conn,
                "undo",
                reviewer,
                feed_id=feed_id,
                item_id=item_ids[0] if len(item_ids) == 1 else None,
                detail={
                    "decisions": [d["id"] for d in rows],
                    "items": item_ids,
                    "bulk_id": last["bulk_id"],
                },
            )
        return item_ids


def _same_tree_version(conn: Any, saved: dict[str, Any], decision_id: int, path: Any) -> None:
    """Refuse to put back a mapping saved on another tree version than the one stored now."""
    row = conn.execute(
        "SELECT tree_version FROM mappings WHERE feed_id = ? AND product_id = ?",
        (saved["feed_id"], saved["product_id"]),
    ).fetchone()
    version = saved.get("tree_version")
    if row is None or version is None or version == row[0]:
        return
    raise TreeVersionMismatch(
        f"decision {decision_id} was made on tree version {version or '(not recorded)'}; the "
        f"mapping of product {saved['product_id']} is now on version {row[0]}: undoing it "
        "would put one mapping back on the old tree",
        path=path,
        hint="decide the item again in the review screen instead of undoing",
    )
