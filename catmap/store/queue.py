"""The review queue: putting products on it, withdrawing them, claims with leases, reading it.

A claim takes the write lock first (``BEGIN IMMEDIATE``), so two reviewers claiming at once are
serialised and never get the same item; a claim holds for a lease and lapses without a decision.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Iterable
from typing import Any

from catmap.decide.queue import STRONG_GROUP_MIN_SIZE, STRONG_GROUP_SHARE
from catmap.errors import StoreError
from catmap.store.audit import AuditMixin
from catmap.store.records import (
    GROUP_REASONS,
    ITEM_STATES,
    REVIEW_REASONS,
    GroupCount,
    GroupInfo,
    QueueSummary,
    ReviewItem,
)

# The two places a claim looks, each read in queue order from the review_items_claim index.
CLAIM_OPEN = "state = 'open'"
CLAIM_EXPIRED = "state = 'claimed' AND lease_until < :now"

DEFAULT_LEASE_SECONDS = 600

# An item's state for counting: a withdrawn item is 'done' in the table but was never decided.
_STATE_OR_WITHDRAWN = "CASE WHEN withdrawn_reason IS NOT NULL THEN 'withdrawn' ELSE state END"

# Queueing a product again reopens an item that a run had withdrawn (the product is uncertain
# again); an item a person decided stays decided.
_ITEM_UPSERT = (
    "ON CONFLICT(feed_id, product_id, reason) DO UPDATE SET "
    "group_key = excluded.group_key, priority = excluded.priority, state = 'open', "
    "claimed_by = NULL, lease_until = NULL, withdrawn_reason = NULL "
    "WHERE review_items.state = 'open' OR review_items.withdrawn_reason IS NOT NULL"
)

_ITEM_SELECT = (
    "SELECT review_items.*, feeds.name AS feed_name FROM review_items "
    "JOIN feeds ON feeds.id = review_items.feed_id"
)


def _item_from_row(row: sqlite3.Row) -> ReviewItem:
    return ReviewItem(
        id=row["id"],
        feed_id=row["feed_id"],
        feed_name=row["feed_name"],
        product_id=row["product_id"],
        group_key=row["group_key"],
        reason=row["reason"],
        priority=row["priority"],
        state=row["state"],
        claimed_by=row["claimed_by"],
        lease_until=row["lease_until"],
        skips=row["skips"],
        withdrawn_reason=row["withdrawn_reason"],
    )


class QueueMixin(AuditMixin):
    """The review queue and its leases."""

    def enqueue(
        self,
        feed: int | str,
        product_id: str,
        reason: str,
        *,
        group_key: str | None = None,
        priority: float = 0.0,
    ) -> int:
        """Queue a saved product for review (idempotent per feed, product and reason).

        Args:
            feed: the feed (id or name).
            product_id: a product already saved with :meth:`save_mapped`.
            reason: one of :data:`REVIEW_REASONS`.
            group_key: the review group (default: the product's stored group key).
            priority: expected gain of reviewing it.

        Returns:
            The item id.

        Raises:
            StoreError: the product is not in the store.
        """
        if reason not in REVIEW_REASONS:
            raise ValueError(f"unknown review reason {reason!r}; expected one of {REVIEW_REASONS}")
        fid = self._feed_id(feed)
        with self._transaction() as conn:
            found = conn.execute(
                "SELECT group_key FROM mappings WHERE feed_id = ? AND product_id = ?",
                (fid, product_id),
            ).fetchone()
            if found is None:
                raise StoreError(
                    "no such product in the store", path=self.path, product_id=product_id
                )
            key = found[0] if group_key is None else group_key
            conn.execute(
                "INSERT INTO review_items (feed_id, product_id, group_key, reason, priority, "
                "created_at) VALUES (?, ?, ?, ?, ?, ?) " + _ITEM_UPSERT,
                (fid, product_id, key, reason, priority, self._now()),
            )
            row = conn.execute(
                "SELECT id FROM review_items WHERE feed_id = ? AND product_id = ? AND reason = ?",
                (fid, product_id, reason),
            ).fetchone()
        return int(row[0])

    def withdraw_items(
        self,
        feed: int | str,
        product_ids: Iterable[str] | None = None,
        *,
        reason: str = "low_confidence",
        why: str,
        actor: str = "catmap",
        only_settled: bool = True,
        run_id: int | None = None,
    ) -> list[int]:
        """Close review items nobody decided yet, because what made them uncertain is settled.

        An item is withdrawn when it is open (or its claim's lease ran out) and has no
        decision: its state becomes ``done`` with ``why`` as its withdrawn reason, and one audit
        entry (action ``withdraw``) lists every item closed. An item a reviewer holds with a
        live lease is left to them. Queueing the product again later reopens the item.

        Args:
            feed: the feed (id or name).
            product_ids: only these products (default: every product of the feed).
            reason: the review reason of the items to withdraw.
            why: the reason recorded on each item and in the audit log.
            actor: who withdraws (for the audit log).
            only_settled: only items whose mapping is no longer queued (status ``accepted`` or
                ``audit``); a ``low_confidence`` item of a product still queued stays open.
            run_id: the run that settled them (recorded in the audit log).

        Returns:
            The ids of the items withdrawn, in id order.
        """
        if reason not in REVIEW_REASONS:
            raise ValueError(f"unknown review reason {reason!r}; expected one of {REVIEW_REASONS}")
        fid = self._feed_id(feed)
        wanted = None if product_ids is None else set(product_ids)
        with self._transaction() as conn:
            sql = (
                "SELECT i.id, i.product_id FROM review_items AS i "
                "JOIN mappings AS m USING (feed_id, product_id) "
                "WHERE i.feed_id = ? AND i.reason = ? AND (i.state = 'open' OR "
                "(i.state = 'claimed' AND i.lease_until < ?)) "
                "AND NOT EXISTS (SELECT 1 FROM decisions AS d WHERE d.item_id = i.id "
                "AND d.undone_at IS NULL AND d.action != 'skip')"
            )
            if only_settled:
                sql += " AND m.status IN ('accepted', 'audit')"
            rows = conn.execute(sql + " ORDER BY i.id", (fid, reason, self._now())).fetchall()
            chosen = [(int(r[0]), str(r[1])) for r in rows if wanted is None or r[1] in wanted]
            if not chosen:
                return []
            conn.executemany(
                "UPDATE review_items SET state = 'done', claimed_by = NULL, lease_until = NULL, "
                "withdrawn_reason = ? WHERE id = ?",
                [(why, item_id) for item_id, _p in chosen],
            )
            self._audit(
                conn,
                "withdraw",
                actor,
                feed_id=fid,
                detail={
                    "reason": reason,
                    "why": why,
                    "run_id": run_id,
                    "items": [item_id for item_id, _p in chosen],
                    "product_ids": [product_id for _i, product_id in chosen],
                },
            )
        return [item_id for item_id, _p in chosen]

    def claim_next(
        self,
        reviewer: str,
        *,
        lease_seconds: float = DEFAULT_LEASE_SECONDS,
        feed: int | str | None = None,
    ) -> ReviewItem | None:
        """Claim the next item to review, atomically.

        The reviewer's own claimed item comes back first (resume after a restart); otherwise the
        open item (or one whose lease ran out) that was skipped least and has the highest
        priority. Two reviewers whose leases are live never get the same item.

        Args:
            reviewer: who claims.
            lease_seconds: how long the claim holds without a decision.
            feed: only items of this feed.

        Returns:
            The claimed item, or None when nothing is left.
        """
        feed_id = self._feed_id(feed) if feed is not None else None
        with self._transaction() as conn:
            now = self._now()
            lease = self._lease_until(lease_seconds)
            feed_clause = "" if feed_id is None else " AND feed_id = :feed"
            params = {"me": reviewer, "now": now, "feed": feed_id}
            row = conn.execute(
                "SELECT id FROM review_items WHERE state = 'claimed' AND claimed_by = :me"
                + feed_clause
                + " ORDER BY priority DESC, id LIMIT 1",
                params,
            ).fetchone()
            if row is None:
                # Two index walks that each stop at their first row (an OR of the two states
                # would make SQLite sort every open item): the best open item and the best
                # item whose lease ran out; the better of the two in queue order wins.
                candidates = [
                    conn.execute(
                        "SELECT id, skips, priority FROM review_items WHERE " + where + feed_clause
                        + " ORDER BY skips, priority DESC, id LIMIT 1",
                        params,
                    ).fetchone()
                    for where in (CLAIM_OPEN, CLAIM_EXPIRED)
                ]
                found = [c for c in candidates if c is not None]
                if not found:
                    return None
                row = min(found, key=lambda c: (c["skips"], -c["priority"], c["id"]))
            conn.execute(
                "UPDATE review_items SET state = 'claimed', claimed_by = ?, lease_until = ? "
                "WHERE id = ?",
                (reviewer, lease, row[0]),
            )
            item = conn.execute(_ITEM_SELECT + " WHERE review_items.id = ?", (row[0],)).fetchone()
        return _item_from_row(item)

    def claim_group(
        self,
        reviewer: str,
        feed_id: int | str,
        group_key: str,
        *,
        lease_seconds: float = DEFAULT_LEASE_SECONDS,
    ) -> list[ReviewItem]:
        """Claim every open item of a retailer category group that can be settled in bulk.

        Items live-claimed by someone else are left alone; only reasons in
        :data:`GROUP_REASONS` are claimed.

        Returns:
            The items now claimed by ``reviewer`` in this group.
        """
        fid = self._feed_id(feed_id)
        with self._transaction() as conn:
            return self._claim_group(conn, reviewer, fid, group_key, lease_seconds)

    def _claim_group(
        self,
        conn: sqlite3.Connection,
        reviewer: str,
        feed_id: int,
        group_key: str,
        lease_seconds: float,
    ) -> list[ReviewItem]:
        now = self._now()
        lease = self._lease_until(lease_seconds)
        marks = ", ".join("?" for _ in GROUP_REASONS)
        conn.execute(
            "UPDATE review_items SET state = 'claimed', claimed_by = ?, lease_until = ? "
            f"WHERE feed_id = ? AND group_key = ? AND reason IN ({marks}) AND (state = 'open' "
            "OR (state = 'claimed' AND (claimed_by = ? OR lease_until < ?)))",
            (reviewer, lease, feed_id, group_key, *GROUP_REASONS, reviewer, now),
        )
        rows = conn.execute(
            _ITEM_SELECT + " WHERE review_items.feed_id = ? AND review_items.group_key = ? "
            "AND review_items.state = 'claimed' AND review_items.claimed_by = ? "
            f"AND review_items.reason IN ({marks}) ORDER BY review_items.id",
            (feed_id, group_key, reviewer, *GROUP_REASONS),
        ).fetchall()
        return [_item_from_row(r) for r in rows]

    def release(self, item_id: int, reviewer: str) -> bool:
        """Give a claimed item back to the queue.

        Returns:
            True when the item was claimed by ``reviewer`` and is open again.
        """
        with self._transaction() as conn:
            cursor = conn.execute(
                "UPDATE review_items SET state = 'open', claimed_by = NULL, lease_until = NULL "
                "WHERE id = ? AND state = 'claimed' AND claimed_by = ?",
                (item_id, reviewer),
            )
        return cursor.rowcount == 1

    def item(self, item_id: int) -> ReviewItem:
        """Return one review item. Raises StoreError when absent."""
        row = self._read(_ITEM_SELECT + " WHERE review_items.id = ?", (item_id,)).fetchone()
        if row is None:
            raise StoreError(f"no review item {item_id}", path=self.path)
        return _item_from_row(row)

    def items(self, *, feed: int | str | None = None, state: str | None = None) -> list[ReviewItem]:
        """Return review items in queue order (skips, priority, id), filtered when asked."""
        sql = _ITEM_SELECT + " WHERE 1"
        params: list[Any] = []
        if feed is not None:
            sql += " AND review_items.feed_id = ?"
            params.append(self._feed_id(feed))
        if state is not None:
            sql += " AND review_items.state = ?"
            params.append(state)
        sql += " ORDER BY review_items.skips, review_items.priority DESC, review_items.id"
        return [_item_from_row(r) for r in self._read(sql, params).fetchall()]

    def group_info(self, feed: int | str, group_key: str) -> GroupInfo:
        """Return how a retailer category group stands: size, open items, consensus."""
        fid = self._feed_id(feed)
        with self._lock:
            counts = self._conn.execute(
                "SELECT node_id, COUNT(*) AS n FROM mappings WHERE feed_id = ? AND group_key = ? "
                "GROUP BY node_id ORDER BY n DESC, node_id LIMIT 1",
                (fid, group_key),
            ).fetchone()
            size = self._conn.execute(
                "SELECT COUNT(*) FROM mappings WHERE feed_id = ? AND group_key = ?",
                (fid, group_key),
            ).fetchone()[0]
            open_items = self._conn.execute(
                "SELECT COUNT(*) FROM review_items WHERE feed_id = ? AND group_key = ? "
                "AND state != 'done'",
                (fid, group_key),
            ).fetchone()[0]
        top_node = counts["node_id"] if counts else ""
        share = counts["n"] / size if counts and size else 0.0
        return GroupInfo(
            key=group_key,
            size=size,
            open_items=open_items,
            top_node=top_node,
            top_share=share,
            strong=size >= STRONG_GROUP_MIN_SIZE and share >= STRONG_GROUP_SHARE,
        )

    def queue_summary(self, feed: int | str | None = None) -> QueueSummary:
        """Count open, claimed and done items, by reason and by group."""
        where, params = "", []
        if feed is not None:
            where, params = " WHERE feed_id = ?", [self._feed_id(feed)]
        with self._lock:
            reason_rows = self._conn.execute(
                f"SELECT reason, {_STATE_OR_WITHDRAWN}, COUNT(*) FROM review_items"
                + where
                + " GROUP BY 1, 2",
                params,
            ).fetchall()
            group_rows = self._conn.execute(
                "SELECT feed_id, group_key, SUM(state = 'open'), SUM(state = 'claimed'), "
                "SUM(state = 'done' AND withdrawn_reason IS NULL) FROM review_items"
                + where
                + " GROUP BY feed_id, group_key "
                "ORDER BY SUM(state != 'done') DESC, feed_id, group_key",
                params,
            ).fetchall()
        states = (*ITEM_STATES, "withdrawn")
        totals = {state: 0 for state in states}
        by_reason: dict[str, dict[str, int]] = {}
        for reason, state, count in reason_rows:
            totals[state] += count
            by_reason.setdefault(reason, {s: 0 for s in states})[state] = count
        groups = [GroupCount(r[0], r[1], r[2], r[3], r[4]) for r in group_rows]
        return QueueSummary(
            totals["open"],
            totals["claimed"],
            totals["done"],
            by_reason,
            groups,
            withdrawn=totals["withdrawn"],
        )
