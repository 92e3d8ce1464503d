"""Reviewers' decisions: what the screen shows for an item, deciding one item or a whole group,
and reading decisions back as history and as training examples.

A decision, the mapping it changes, the item it closes and its audit entry are written in one
transaction. Each decision saves the mapping it replaced, so that :mod:`catmap.store.undo` can
restore it.
"""

from __future__ import annotations

import json
import sqlite3
import uuid
from typing import Any

from catmap.errors import StoreError
from catmap.records import AGE_VALUES, WHO_VALUES
from catmap.store.brand_items import keep_brand_waiting
from catmap.store.encoding import product_from_json
from catmap.store.products import ProductsMixin, _mapping_from_row
from catmap.store.queue import DEFAULT_LEASE_SECONDS, QueueMixin
from catmap.store.records import (
    DECISION_ACTIONS,
    Decision,
    NodeAttributes,
    NodeAttributesFor,
    ReviewView,
    TrainingExample,
)

DESCRIPTION_EXCERPT = 400

_DECISION_SELECT = (
    "SELECT decisions.*, review_items.feed_id AS feed_id, review_items.product_id AS product_id, "
    "review_items.reason AS reason FROM decisions "
    "JOIN review_items ON review_items.id = decisions.item_id"
)


def _decision_from_row(row: sqlite3.Row) -> Decision:
    return Decision(
        id=row["id"],
        item_id=row["item_id"],
        feed_id=row["feed_id"],
        product_id=row["product_id"],
        reason=row["reason"],
        reviewer=row["reviewer"],
        at=row["at"],
        action=row["action"],
        from_node=row["from_node"],
        to_node=row["to_node"],
        brand_from=row["brand_from"],
        brand_to=row["brand_to"],
        who_from=row["who_from"],
        who_to=row["who_to"],
        age_from=row["age_from"],
        age_to=row["age_to"],
        note=row["note"],
        bulk_id=row["bulk_id"],
        undone_at=row["undone_at"],
    )


class DecisionsMixin(QueueMixin, ProductsMixin):
    """Reviewers' decisions on queue items."""

    def review_item(self, item_id: int) -> ReviewView:
        """Return everything the review screen shows for one item."""
        item = self.item(item_id)
        stored = self.mapping(item.feed_id, item.product_id)
        product = self.product(item.feed_id, item.product_id)
        description = product.description
        if len(description) > DESCRIPTION_EXCERPT:
            description = description[: DESCRIPTION_EXCERPT - 1].rstrip() + "…"
        return ReviewView(
            item=item,
            product=product,
            mapping=stored.mapping,
            attributes=stored.attributes,
            status=stored.status,
            group=self.group_info(item.feed_id, item.group_key),
            description_excerpt=description,
        )

    def decide(
        self,
        item_id: int,
        reviewer: str,
        action: str,
        *,
        node_id: str | None = None,
        brand: str | None = None,
        who: str | None = None,
        age: str | None = None,
        note: str = "",
        node_attributes: NodeAttributes | None = None,
    ) -> Decision:
        """Record a reviewer's decision on an item, update the mapping, close the item.

        Actions: ``accept`` (the suggested node is right), ``choose`` (``node_id`` is right),
        ``no_fit`` (no node fits; the mapping's node becomes ''), ``skip`` (back to the queue,
        behind the items never skipped) and ``fix_attributes`` (node kept). ``brand``, ``who``
        and ``age`` correct the attributes with any action but ``skip``.

        When ``choose`` moves the product to another node, ``node_attributes`` (read by the
        caller from the tree for that node) replace the restriction flag and who / age in the
        same transaction; the reviewer's own ``who`` / ``age`` still win over them. Without
        them the stored attributes stay as they were (the old behaviour).

        Args:
            item_id: the item.
            reviewer: who decides; the item must be open, claimed by them, or its lease expired.
            action: one of :data:`DECISION_ACTIONS`.
            node_id: the chosen node (``choose`` only).
            brand: the corrected brand.
            who: the corrected audience (one of ``WHO_VALUES``).
            age: the corrected age (one of ``AGE_VALUES``).
            note: free text.
            node_attributes: the restriction flag and who / age the chosen node decides.

        Returns:
            The decision as saved.

        Raises:
            StoreError: unknown item, item already done, or claimed by another reviewer.
            ValueError: an unknown action, ``choose`` without a node, bad who / age.
        """
        self._check_decision(action, node_id, who, age)
        if node_attributes is not None:
            self._check_decision("accept", None, node_attributes.who, node_attributes.age)
        with self._transaction() as conn:
            item = self._claimable_item(conn, item_id, reviewer)
            decision_id, followed = self._apply_decision(
                conn, item, reviewer, action, node_id, brand, who, age, note, None,
                node_attributes,
            )
            detail: dict[str, Any] = {
                "decision": decision_id,
                "action": action,
                "node_id": node_id,
            }
            if followed is not None:
                detail["restriction"] = followed
            self._audit(
                conn,
                "decision",
                reviewer,
                feed_id=item["feed_id"],
                item_id=item_id,
                detail=detail,
            )
            row = conn.execute(_DECISION_SELECT + " WHERE decisions.id = ?", (decision_id,))
            return _decision_from_row(row.fetchone())

    @staticmethod
    def _check_decision(action: str, node_id: str | None, who: str | None, age: str | None) -> None:
        if action not in DECISION_ACTIONS:
            raise ValueError(f"unknown action {action!r}; expected one of {DECISION_ACTIONS}")
        if action == "choose" and not node_id:
            raise ValueError("the 'choose' action needs a node_id")
        if who is not None and who not in WHO_VALUES:
            raise ValueError(f"unknown who {who!r}; expected one of {WHO_VALUES}")
        if age is not None and age not in AGE_VALUES:
            raise ValueError(f"unknown age {age!r}; expected one of {AGE_VALUES}")

    def _claimable_item(self, conn: sqlite3.Connection, item_id: int, reviewer: str) -> sqlite3.Row:
        item = conn.execute("SELECT * FROM review_items WHERE id = ?", (item_id,)).fetchone()
        if item is None:
            raise StoreError(f"no review item {item_id}", path=self.path)
        if item["withdrawn_reason"] is not None:
            raise StoreError(
                f"review item {item_id} was withdrawn: {item['withdrawn_reason']}",
                path=self.path,
                product_id=item["product_id"],
                hint="take the next item instead",
            )
        if item["state"] == "done":
            raise StoreError(
                f"review item {item_id} is already decided",
                path=self.path,
                product_id=item["product_id"],
                hint="use undo to change a decision",
            )
        if (
            item["state"] == "claimed"
            and item["claimed_by"] != reviewer
            and (item["lease_until"] or "") >= self._now()
        ):
            raise StoreError(
                f"review item {item_id} is claimed by {item['claimed_by']}",
                path=self.path,
                product_id=item["product_id"],
                hint="take the next item instead",
            )
        return item

    def _apply_decision(
        self,
        conn: sqlite3.Connection,
        item: sqlite3.Row,
        reviewer: str,
        action: str,
        node_id: str | None,
        brand: str | None,
        who: str | None,
        age: str | None,
        note: str,
        bulk_id: str | None,
        node_attributes: NodeAttributes | None = None,
    ) -> tuple[int, dict[str, str] | None]:
        """Write one decision; return its id and, when the node's attributes were applied,
        the restriction flag before and after (for the audit log)."""
        feed_id, product_id = item["feed_id"], item["product_id"]
        current = conn.execute(
            "SELECT * FROM mappings WHERE feed_id = ? AND product_id = ?", (feed_id, product_id)
        ).fetchone()
        from_node = current["node_id"]
        to_node = _node_after(action, node_id, from_node)
        decision_id = self._record_decision(
            conn, item, current, reviewer, action, to_node, brand, who, age, note, bulk_id
        )
        if action == "skip":
            _send_to_back(conn, item["id"])
            return decision_id, None
        _close_item(conn, item["id"], reviewer)
        changed_node = to_node != from_node
        _mark_reviewed(conn, feed_id, product_id, to_node, changed_node, brand, who, age)
        # A candidate brand the item stands for is not settled by the node: it keeps waiting.
        keep_brand_waiting(conn, item, now=self._now())
        if node_attributes is not None and changed_node and to_node:
            _follow_node(conn, feed_id, product_id, node_attributes, who, age)
            return decision_id, {"from": current["restriction"], "to": node_attributes.restriction}
        return decision_id, None

    def _record_decision(
        self,
        conn: sqlite3.Connection,
        item: sqlite3.Row,
        current: sqlite3.Row,
        reviewer: str,
        action: str,
        to_node: str | None,
        brand: str | None,
        who: str | None,
        age: str | None,
        note: str,
        bulk_id: str | None,
    ) -> int:
        """Insert the decision row, with the mapping and skip count before it (for undo)."""
        before = {key: current[key] for key in current.keys()}
        cursor = conn.execute(
            "INSERT INTO decisions (item_id, reviewer, at, action, from_node, to_node, "
            "brand_from, brand_to, who_from, who_to, age_from, age_to, note, before, bulk_id) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (
                item["id"],
                reviewer,
                self._now(),
                action,
                current["node_id"],
                to_node,
                current["brand"] if brand is not None else None,
                brand,
                current["who"] if who is not None else None,
                who,
                current["age"] if age is not None else None,
                age,
                note,
                json.dumps({"mapping": before, "skips": item["skips"]}),
                bulk_id,
            ),
        )
        return int(cursor.lastrowid or 0)

    def accept_group(
        self,
        reviewer: str,
        feed_id: int | str,
        group_key: str,
        *,
        node_id: str | None = None,
        note: str = "",
        lease_seconds: float = DEFAULT_LEASE_SECONDS,
        node_attributes: NodeAttributesFor | None = None,
    ) -> list[Decision]:
        """Settle a whole retailer category group in one step.

        Claims what can be claimed (see :meth:`claim_group`), then records one decision per
        item: ``accept`` when the item's node is ``node_id`` (or ``node_id`` is None), else
        ``choose`` ``node_id``. One audit entry covers the bulk; :meth:`undo_last` undoes it
        as a whole.

        Args:
            reviewer: who decides.
            feed_id: the group's feed.
            group_key: the retailer category path of the group.
            node_id: the node for the whole group (None: each item's suggestion).
            note: free text, on every decision.
            lease_seconds: the lease of the claims taken.
            node_attributes: called for each product moved to ``node_id`` (inside the
                transaction: it must not use the store) to read the restriction flag and
                who / age that node decides; they are written with the decision, as in
                :meth:`decide`.

        Returns:
            The decisions, one per item.
        """
        if node_id is not None and not node_id:
            raise ValueError("node_id must be a node id or None")
        fid = self._feed_id(feed_id)
        bulk_id = uuid.uuid4().hex
        with self._transaction() as conn:
            items = self._claim_group(conn, reviewer, fid, group_key, lease_seconds)
            ids: list[int] = []
            for claimed in items:
                item = conn.execute(
                    "SELECT * FROM review_items WHERE id = ?", (claimed.id,)
                ).fetchone()
                current = conn.execute(
                    "SELECT * FROM mappings WHERE feed_id = ? AND product_id = ?",
                    (fid, claimed.product_id),
                ).fetchone()
                followed: NodeAttributes | None = None
                if node_id is None or node_id == current["node_id"]:
                    action, chosen = "accept", None
                else:
                    action, chosen = "choose", node_id
                    if node_attributes is not None:
                        data = conn.execute(
                            "SELECT data FROM products WHERE feed_id = ? AND product_id = ?",
                            (fid, claimed.product_id),
                        ).fetchone()
                        followed = node_attributes(
                            product_from_json(data[0]), _mapping_from_row(current)
                        )
                        self._check_decision("accept", None, followed.who, followed.age)
                decision_id, _flag = self._apply_decision(
                    conn, item, reviewer, action, chosen, None, None, None, note, bulk_id,
                    followed,
                )
                ids.append(decision_id)
            if ids:
                self._audit(
                    conn,
                    "bulk_accept",
                    reviewer,
                    feed_id=fid,
                    detail={
                        "bulk_id": bulk_id,
                        "group_key": group_key,
                        "node_id": node_id,
                        "items": [c.id for c in items],
                        "decisions": ids,
                    },
                )
            marks = ", ".join("?" for _ in ids)
            rows = conn.execute(
                _DECISION_SELECT + f" WHERE decisions.id IN ({marks}) ORDER BY decisions.id", ids
            ).fetchall()
        return [_decision_from_row(r) for r in rows]

    def attribute_correctors(self, feed: int | str, product_id: str) -> dict[str, str]:
        """Who last corrected each of a product's brand, who and age (live decisions only).

        Args:
            feed: the feed (id or name).
            product_id: the product.

        Returns:
            ``{"brand": reviewer, "who": ..., "age": ...}`` for the attributes a person set.
        """
        fid = self._feed_id(feed)
        rows = self._read(
            "SELECT d.reviewer, d.brand_to, d.who_to, d.age_to FROM decisions AS d "
            "JOIN review_items AS i ON i.id = d.item_id WHERE i.feed_id = ? "
            "AND i.product_id = ? AND d.undone_at IS NULL AND d.action != 'skip' "
            "ORDER BY d.id",
            (fid, product_id),
        ).fetchall()
        found: dict[str, str] = {}
        for row in rows:
            for name in ("brand", "who", "age"):
                if row[f"{name}_to"] is not None:
                    found[name] = row["reviewer"]
        return found

    def decisions(
        self, feed: int | str | None = None, *, include_undone: bool = False
    ) -> list[Decision]:
        """Return decisions in the order they were made."""
        sql = _DECISION_SELECT + " WHERE 1"
        params: list[Any] = []
        if feed is not None:
            sql += " AND review_items.feed_id = ?"
            params.append(self._feed_id(feed))
        if not include_undone:
            sql += " AND decisions.undone_at IS NULL"
        sql += " ORDER BY decisions.id"
        return [_decision_from_row(r) for r in self._read(sql, params).fetchall()]

    def training_examples(self, feed: int | str | None = None) -> list[TrainingExample]:
        """Return reviewed products with the node a person decided (``no_fit`` left out)."""
        sql = (
            "SELECT mappings.feed_id AS feed_id, mappings.node_id AS node_id, products.data AS "
            "data, d.reviewer AS reviewer, d.at AS at FROM mappings "
            "JOIN products USING (feed_id, product_id) "
            "JOIN (SELECT review_items.feed_id AS feed_id, review_items.product_id AS product_id, "
            "decisions.reviewer AS reviewer, MAX(decisions.id) AS last_id, decisions.at AS at "
            "FROM decisions JOIN review_items ON review_items.id = decisions.item_id "
            "WHERE decisions.undone_at IS NULL AND decisions.action != 'skip' "
            "GROUP BY review_items.feed_id, review_items.product_id) AS d "
            "ON d.feed_id = mappings.feed_id AND d.product_id = mappings.product_id "
            "WHERE mappings.status = 'reviewed' AND mappings.node_id != ''"
        )
        params: list[Any] = []
        if feed is not None:
            sql += " AND mappings.feed_id = ?"
            params.append(self._feed_id(feed))
        sql += " ORDER BY mappings.feed_id, mappings.product_id"
        return [
            TrainingExample(
                r["feed_id"], product_from_json(r["data"]), r["node_id"], r["reviewer"], r["at"]
            )
            for r in self._read(sql, params).fetchall()
        ]


def _node_after(action: str, node_id: str | None, from_node: str) -> str | None:
    """Return the node a decision leaves the product on ('' = no node fits; None = a skip)."""
    if action == "choose":
        return node_id
    if action == "no_fit":
        return ""
    if action == "skip":
        return None
    return from_node


def _send_to_back(conn: sqlite3.Connection, item_id: int) -> None:
    """Reopen a skipped item behind the items skipped fewer times."""
    conn.execute(
        "UPDATE review_items SET state = 'open', claimed_by = NULL, lease_until = NULL, "
        "skips = skips + 1 WHERE id = ?",
        (item_id,),
    )


def _close_item(conn: sqlite3.Connection, item_id: int, reviewer: str) -> None:
    """Mark a decided item done, keeping who decided it."""
    conn.execute(
        "UPDATE review_items SET state = 'done', claimed_by = ?, lease_until = NULL "
        "WHERE id = ?",
        (reviewer, item_id),
    )


def _mark_reviewed(
    conn: sqlite3.Connection,
    feed_id: int,
    product_id: str,
    to_node: str | None,
    changed_node: bool,
    brand: str | None,
    who: str | None,
    age: str | None,
) -> None:
    """Write a person's verdict on the mapping: its node (full confidence when moved, method
    ``review``), the corrected brand / who / age (a brand a person set is ``corrected``), and
    status ``reviewed``."""
    conn.execute(
        "UPDATE mappings SET status = 'reviewed', node_id = ?, "
        "confidence = CASE WHEN ? THEN 1.0 ELSE confidence END, "
        "method = CASE WHEN ? THEN 'review' ELSE method END, "
        "brand = COALESCE(?, brand), who = COALESCE(?, who), age = COALESCE(?, age), "
        "brand_status = CASE WHEN ? IS NULL THEN brand_status WHEN ? = '' THEN 'none' "
        "ELSE 'corrected' END, "
        "audience_conflict = CASE WHEN ? IS NULL AND ? IS NULL "
        "THEN audience_conflict ELSE 0 END "
        "WHERE feed_id = ? AND product_id = ?",
        (
            to_node,
            changed_node,
            changed_node,
            brand,
            who,
            age,
            brand,
            brand,
            who,
            age,
            feed_id,
            product_id,
        ),
    )


def _follow_node(
    conn: sqlite3.Connection,
    feed_id: int,
    product_id: str,
    node_attributes: NodeAttributes,
    who: str | None,
    age: str | None,
) -> None:
    """Give a product moved to a new node that node's restriction flag and who / age."""
    # The new node decides the flag and whether who / age apply; a reviewer's own who / age
    # (written by _mark_reviewed) stay. The old node's audience conflict is moot: a person just
    # judged this product's node.
    conn.execute(
        "UPDATE mappings SET restriction = ?, "
        "who = CASE WHEN ? IS NULL THEN ? ELSE who END, "
        "age = CASE WHEN ? IS NULL THEN ? ELSE age END, audience_conflict = 0 "
        "WHERE feed_id = ? AND product_id = ?",
        (
            node_attributes.restriction,
            who,
            node_attributes.who,
            age,
            node_attributes.age,
            feed_id,
            product_id,
        ),
    )
