"""Undo: a reviewer's last decision (or last bulk accept, as a whole) taken back.

A decision is never deleted: undo marks it undone, restores the mapping it saved and reopens
its item, claimed by the reviewer, in one transaction with its audit entry.

Undo only takes back what its own decision changed. When someone else decided the same product
after it (on any of its items), restoring the saved mapping would silently throw their live
decision away, so the undo is refused with a message naming that decision; likewise when the
item of an undone skip has since been taken by another reviewer.
"""

from __future__ import annotations

import json
import sqlite3
from typing import Any

from catmap.errors import StoreError, TreeVersionMismatch
from catmap.store.audit import AuditMixin
from catmap.store.queue import DEFAULT_LEASE_SECONDS, reasons_of


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
            StoreError: another reviewer decided one of the products after this decision, or
                holds the item of an undone skip; nothing is changed.
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
            for decision in rows:
                self._check_undoable(conn, reviewer, decision, now)
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
                _fold_waiting(conn, decision["item_id"])
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

    def _check_undoable(
        self, conn: sqlite3.Connection, reviewer: str, decision: sqlite3.Row, now: str
    ) -> None:
        """Refuse to undo ``decision`` when that would discard another reviewer's work."""
        item = conn.execute(
            "SELECT feed_id, product_id, state, claimed_by, lease_until FROM review_items "
            "WHERE id = ?",
            (decision["item_id"],),
        ).fetchone()
        later = conn.execute(
            "SELECT d.id, d.reviewer, d.action FROM decisions AS d "
            "JOIN review_items AS i ON i.id = d.item_id "
            "WHERE i.feed_id = ? AND i.product_id = ? AND d.id > ? AND d.undone_at IS NULL "
            "AND d.action != 'skip' AND (d.bulk_id IS NULL OR d.bulk_id IS NOT ?) "
            "ORDER BY d.id LIMIT 1",
            (item["feed_id"], item["product_id"], decision["id"], decision["bulk_id"]),
        ).fetchone()
        if later is not None:
            raise StoreError(
                f"cannot undo your {decision['action']} of product {item['product_id']}: "
                f"{later['reviewer']} decided it after you ({later['action']}, decision "
                f"{later['id']}), and undoing yours would discard theirs",
                path=self.path,
                product_id=item["product_id"],
                hint="ask them to undo theirs first, or decide the product again",
            )
        waiting = conn.execute(
            "SELECT product_id, claimed_by FROM review_items WHERE feed_id = ? "
            "AND product_id = ? AND id != ? AND state = 'claimed' AND claimed_by != ? "
            "AND lease_until >= ?",
            (item["feed_id"], item["product_id"], decision["item_id"], reviewer, now),
        ).fetchone()
        if waiting is not None:
            raise StoreError(
                f"cannot undo your {decision['action']} of product {item['product_id']}: "
                f"{waiting['claimed_by']} has it on screen now (another review item of it)",
                path=self.path,
                product_id=item["product_id"],
                hint="let them decide it, then undo",
            )
        taken = (
            decision["action"] == "skip"
            and item["state"] == "claimed"
            and item["claimed_by"] != reviewer
            and (item["lease_until"] or "") >= now
        )
        if taken:
            raise StoreError(
                f"cannot undo your skip of product {item['product_id']}: "
                f"{item['claimed_by']} has it on screen now",
                path=self.path,
                product_id=item["product_id"],
                hint="let them decide it",
            )


def _fold_waiting(conn: sqlite3.Connection, item_id: int) -> None:
    """Keep one waiting item per product: another waiting item of the reopened item's product
    (queued after the decision) joins it with its reasons and is closed as merged."""
    item = conn.execute("SELECT * FROM review_items WHERE id = ?", (item_id,)).fetchone()
    others = conn.execute(
        "SELECT * FROM review_items WHERE feed_id = ? AND product_id = ? AND id != ? "
        "AND state != 'done' ORDER BY id",
        (item["feed_id"], item["product_id"], item_id),
    ).fetchall()
    if not others:
        return
    reasons = list(reasons_of(item))
    for other in others:
        reasons.extend(r for r in reasons_of(other) if r not in reasons)
    # The brand a merged item stood for (a candidate brand's item) now rides on this one.
    if "brand" not in item.keys():  # a store before version 13
        brand = ""
    else:
        brand = item["brand"] or next((o["brand"] for o in others if o["brand"]), "")
    conn.execute(
        "UPDATE review_items SET reasons = ?, priority = MAX(priority, ?) WHERE id = ?",
        (" ".join(reasons), max(o["priority"] for o in others), item_id),
    )
    if brand:
        conn.execute("UPDATE review_items SET brand = ? WHERE id = ?", (brand, item_id))
    conn.executemany(
        "UPDATE review_items SET state = 'done', claimed_by = NULL, lease_until = NULL, "
        "withdrawn_reason = ? WHERE id = ?",
        [(f"merged into review item {item_id}", o["id"]) for o in others],
    )


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
