"""The review queue: putting products on it, withdrawing them, claims with leases, reading it.

A claim takes the write lock first (``BEGIN IMMEDIATE``), so two reviewers claiming at once are
serialised and never get the same item; a claim holds for a lease and lapses without a decision.

A product has at most one item waiting (open or claimed) at a time, carrying every reason it is
queued for (``reasons``, the first one leading): a second reason joins the waiting item instead
of opening another, so that two reviewers never decide the same product side by side. The
``reason`` column stays the key the item was opened under.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Iterable, Sequence
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

# Every reason of an item, space-separated, the leading one first (an item written without the
# reasons column, e.g. by an older catmap, has its key reason only).
ALL_REASONS_SQL = "(CASE WHEN {t}reasons = '' THEN {t}reason ELSE {t}reasons END)"
_ALL = ALL_REASONS_SQL.format(t="")
# The leading reason, for counting items by reason.
LEADING_REASON_SQL = (
    f"(CASE WHEN instr({_ALL}, ' ') > 0 THEN substr({_ALL}, 1, instr({_ALL}, ' ') - 1) "
    f"ELSE {_ALL} END)"
)

# Products looked up per query when queueing a batch (well under SQLite's variable limit).
_LOOKUP_CHUNK = 500


def has_reason_sql(reason: str, table: str = "") -> str:
    """An SQL condition: the item (of ``table``, when given) carries ``reason``."""
    if reason not in REVIEW_REASONS:
        raise ValueError(f"unknown review reason {reason!r}")
    all_reasons = ALL_REASONS_SQL.format(t=f"{table}." if table else "")
    return f"instr(' ' || {all_reasons} || ' ', ' {reason} ') > 0"


def reasons_of(row: sqlite3.Row) -> tuple[str, ...]:
    """Every reason of an item row, the leading one first."""
    return tuple((row["reasons"] or row["reason"]).split())


def queue_products(
    conn: sqlite3.Connection,
    feed_id: int,
    entries: Sequence[tuple[str, str, tuple[str, ...], float]],
    now: str,
    *,
    skip_reviewed: bool,
) -> None:
    """Queue products for review, one waiting item per product, inside the caller's transaction.

    A product with an item waiting gets the new reasons added to it (and, when the item is
    open, the new group and priority). Otherwise the reasons not already decided on one of
    its items open an item: a withdrawn item of one of those reasons is reopened, else a new
    item is inserted under the first of them.

    Args:
        conn: the connection, in a write transaction.
        feed_id: the feed.
        entries: ``(product_id, group_key, reasons, priority)`` per product.
        now: the time stamp of new items.
        skip_reviewed: queue nothing for a product whose mapping a person reviewed.
    """
    for reasons in (e[2] for e in entries):
        for reason in reasons:
            if reason not in REVIEW_REASONS:
                raise ValueError(f"unknown review reason {reason!r}")
    existing: dict[str, list[sqlite3.Row]] = {}
    reviewed: set[str] = set()
    ids = list(dict.fromkeys(e[0] for e in entries))
    for start in range(0, len(ids), _LOOKUP_CHUNK):
        part = ids[start : start + _LOOKUP_CHUNK]
        marks = ", ".join("?" for _ in part)
        for row in conn.execute(
            "SELECT id, product_id, reason, reasons, state, withdrawn_reason FROM review_items "
            f"WHERE feed_id = ? AND product_id IN ({marks}) ORDER BY id",
            (feed_id, *part),
        ):
            existing.setdefault(row["product_id"], []).append(row)
        if skip_reviewed:
            reviewed.update(
                r[0]
                for r in conn.execute(
                    "SELECT product_id FROM mappings WHERE feed_id = ? "
                    f"AND product_id IN ({marks}) AND status = 'reviewed'",
                    (feed_id, *part),
                )
            )
    for product_id, group_key, reasons, priority in entries:
        if not reasons:
            continue
        rows = existing.get(product_id, [])
        waiting = [r for r in rows if r["state"] != "done"]
        if waiting:
            item = waiting[0]
            have = reasons_of(item)
            added = tuple(r for r in reasons if r not in have)
            merged = " ".join(have + added)
            if item["state"] == "open":
                # The same reasons again: the new run's priority; a reason added: the item
                # is worth at least what either reason makes it.
                conn.execute(
                    "UPDATE review_items SET reasons = ?, group_key = ?, "
                    "priority = CASE WHEN ? THEN MAX(priority, ?) ELSE ? END WHERE id = ?",
                    (merged, group_key, bool(added), priority, priority, item["id"]),
                )
            else:  # a reviewer holds it: they see the new reason, the queue order stays
                conn.execute(
                    "UPDATE review_items SET reasons = ? WHERE id = ?", (merged, item["id"])
                )
            continue
        if product_id in reviewed:
            continue
        decided = {
            reason for r in rows if r["withdrawn_reason"] is None for reason in reasons_of(r)
        }
        fresh = tuple(dict.fromkeys(r for r in reasons if r not in decided))
        if not fresh:
            continue  # an item a person decided stays decided
        withdrawn = {r["reason"]: r for r in rows if r["withdrawn_reason"] is not None}
        reuse = next((withdrawn[r] for r in fresh if r in withdrawn), None)
        if reuse is not None:
            # The product is uncertain again: the item a run had withdrawn reopens.
            ordered = (reuse["reason"], *(r for r in fresh if r != reuse["reason"]))
            conn.execute(
                "UPDATE review_items SET reasons = ?, group_key = ?, priority = ?, "
                "state = 'open', claimed_by = NULL, lease_until = NULL, withdrawn_reason = NULL "
                "WHERE id = ?",
                (" ".join(ordered), group_key, priority, reuse["id"]),
            )
        else:
            conn.execute(
                "INSERT INTO review_items (feed_id, product_id, group_key, reason, reasons, "
                "priority, created_at) VALUES (?, ?, ?, ?, ?, ?, ?)",
                (feed_id, product_id, group_key, fresh[0], " ".join(fresh), priority, now),
            )


_ITEM_SELECT = (
    "SELECT review_items.*, feeds.name AS feed_name FROM review_items "
    "JOIN feeds ON feeds.id = review_items.feed_id"
)


def _item_from_row(row: sqlite3.Row) -> ReviewItem:
    reasons = reasons_of(row)
    return ReviewItem(
        id=row["id"],
        feed_id=row["feed_id"],
        feed_name=row["feed_name"],
        product_id=row["product_id"],
        group_key=row["group_key"],
        reason=reasons[0],
        priority=row["priority"],
        state=row["state"],
        claimed_by=row["claimed_by"],
        lease_until=row["lease_until"],
        skips=row["skips"],
        withdrawn_reason=row["withdrawn_reason"],
        reasons=reasons,
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

        When the product already has an item waiting, ``reason`` joins that item.

        Args:
            feed: the feed (id or name).
            product_id: a product already saved with :meth:`save_mapped`.
            reason: one of :data:`REVIEW_REASONS`.
            group_key: the review group (default: the product's stored group key).
            priority: expected gain of reviewing it.

        Returns:
            The id of the item carrying the reason.

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
            queue_products(
                conn, fid, [(product_id, key, (reason,), priority)], self._now(),
                skip_reviewed=False,
            )
            row = conn.execute(
                "SELECT id FROM review_items WHERE feed_id = ? AND product_id = ? AND "
                + has_reason_sql(reason)
                + " ORDER BY state != 'done' DESC, reason = ? DESC, id DESC LIMIT 1",
                (fid, product_id, reason),
            ).fetchone()
        return int(row[0])

    def count_accepted_below(self, feed: int | str, below: float | None) -> int:
        """Return how many mappings :meth:`requeue_accepted` would take back at ``below``."""
        sql = (
            "SELECT COUNT(*) FROM mappings WHERE feed_id = ? AND status = 'accepted' "
            "AND method != 'rule'"
        )
        params: list[Any] = [self._feed_id(feed)]
        if below is not None:
            sql += " AND confidence < ?"
            params.append(below)
        return int(self._read(sql, params).fetchone()[0])

    def requeue_accepted(
        self,
        feed: int | str,
        *,
        below: float | None,
        reason: str = "audit_over_target",
        priority: float = 0.0,
        why: str,
        actor: str = "catmap",
        run_id: int | None = None,
    ) -> list[str]:
        """Take auto-accepted mappings below a threshold back to the review queue, in one go.

        Every mapping of the feed with status ``accepted`` whose confidence is below ``below``
        (every one when ``below`` is None), except rule mappings (the team's own decision),
        becomes ``queued`` and gets one review item carrying ``reason`` (joining the item the
        product may already have waiting). One audit entry (action ``requeue``) lists them.
        Audit samples and reviewed mappings are left as they are.

        Args:
            feed: the feed (id or name).
            below: the new threshold (None: accept nothing automatically).
            reason: the review reason (one of :data:`REVIEW_REASONS`).
            priority: priority of each item; at least the mapping's own expected gain.
            why: recorded in the audit log.
            actor: who re-queues (for the audit log).
            run_id: the run that decided it (recorded in the audit log).

        Returns:
            The product ids re-queued, sorted.
        """
        if reason not in REVIEW_REASONS:
            raise ValueError(f"unknown review reason {reason!r}; expected one of {REVIEW_REASONS}")
        fid = self._feed_id(feed)
        with self._transaction() as conn:
            sql = (
                "SELECT product_id, group_key, confidence FROM mappings WHERE feed_id = ? "
                "AND status = 'accepted' AND method != 'rule'"
            )
            params: list[Any] = [fid]
            if below is not None:
                sql += " AND confidence < ?"
                params.append(below)
            rows = conn.execute(sql + " ORDER BY product_id", params).fetchall()
            if not rows:
                return []
            ids = [str(r["product_id"]) for r in rows]
            conn.executemany(
                "UPDATE mappings SET status = 'queued' WHERE feed_id = ? AND product_id = ?",
                [(fid, product_id) for product_id in ids],
            )
            entries = [
                (
                    str(r["product_id"]),
                    str(r["group_key"]),
                    (reason,),
                    max(priority, 1.0 - float(r["confidence"])),
                )
                for r in rows
            ]
            queue_products(conn, fid, entries, self._now(), skip_reviewed=True)
            self._audit(
                conn,
                "requeue",
                actor,
                feed_id=fid,
                detail={
                    "reason": reason,
                    "why": why,
                    "below": below,
                    "run_id": run_id,
                    "product_ids": ids,
                },
            )
        return ids

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

        An item is withdrawn when it is open (or its claim's lease ran out), carries ``reason``
        and has no decision; an item queued for other reasons too only loses ``reason`` and
        stays open for the others. A withdrawn item's state becomes ``done`` with ``why`` as
        its withdrawn reason, and one audit entry (action ``withdraw``) lists every item
        closed. An item a reviewer holds with a live lease is left to them. Queueing the
        product again later reopens the item.

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
                "SELECT i.id, i.product_id, i.reason, i.reasons FROM review_items AS i "
                "JOIN mappings AS m USING (feed_id, product_id) "
                "WHERE i.feed_id = ? AND "
                + has_reason_sql(reason, "i")
                + " AND (i.state = 'open' OR "
                "(i.state = 'claimed' AND i.lease_until < ?)) "
                "AND NOT EXISTS (SELECT 1 FROM decisions AS d WHERE d.item_id = i.id "
                "AND d.undone_at IS NULL AND d.action != 'skip')"
            )
            if only_settled:
                sql += " AND m.status IN ('accepted', 'audit')"
            rows = conn.execute(sql + " ORDER BY i.id", (fid, self._now())).fetchall()
            found = [r for r in rows if wanted is None or r["product_id"] in wanted]
            # An item queued for other reasons too stays open for them, without this one.
            kept = [(r, [x for x in reasons_of(r) if x != reason]) for r in found]
            chosen = [(int(r["id"]), str(r["product_id"])) for r, rest in kept if not rest]
            conn.executemany(
                "UPDATE review_items SET reasons = ? WHERE id = ?",
                [(" ".join(rest), r["id"]) for r, rest in kept if rest],
            )
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
        # Only items every reason of which can be settled in bulk: a conflict or an audit
        # sample riding on a low-confidence item still needs a person to look at it.
        bulk_only = " AND ".join(
            f"NOT {has_reason_sql(r, 'review_items')}" for r in REVIEW_REASONS
            if r not in GROUP_REASONS
        )
        conn.execute(
            "UPDATE review_items SET state = 'claimed', claimed_by = ?, lease_until = ? "
            f"WHERE feed_id = ? AND group_key = ? AND {bulk_only} AND (state = 'open' "
            "OR (state = 'claimed' AND (claimed_by = ? OR lease_until < ?)))",
            (reviewer, lease, feed_id, group_key, reviewer, now),
        )
        rows = conn.execute(
            _ITEM_SELECT + " WHERE review_items.feed_id = ? AND review_items.group_key = ? "
            "AND review_items.state = 'claimed' AND review_items.claimed_by = ? "
            f"AND {bulk_only} ORDER BY review_items.id",
            (feed_id, group_key, reviewer),
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

    def group_waiting(
        self, feed: int | str, group_key: str, *, limit: int = 20
    ) -> list[tuple[str, str, str, float]]:
        """The products of a group still waiting for review, in queue order.

        Args:
            feed: the feed (id or name).
            group_key: the retailer category path of the group.
            limit: at most this many.

        Returns:
            ``(product_id, title, suggested node, confidence)`` per product.
        """
        fid = self._feed_id(feed)
        rows = self._read(
            "SELECT i.product_id, p.title, m.node_id, m.confidence FROM review_items AS i "
            "JOIN products AS p USING (feed_id, product_id) "
            "JOIN mappings AS m USING (feed_id, product_id) "
            "WHERE i.feed_id = ? AND i.group_key = ? AND i.state != 'done' "
            "ORDER BY i.skips, i.priority DESC, i.id LIMIT ?",
            (fid, group_key, limit),
        ).fetchall()
        return [(r[0], r[1], r[2], float(r[3])) for r in rows]

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
        """Count open, claimed and done items, by (leading) reason and by group."""
        where, params = "", []
        if feed is not None:
            where, params = " WHERE feed_id = ?", [self._feed_id(feed)]
        with self._lock:
            reason_rows = self._conn.execute(
                f"SELECT {LEADING_REASON_SQL}, {_STATE_OR_WITHDRAWN}, COUNT(*) FROM review_items"
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
