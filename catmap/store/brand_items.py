"""The review items of candidate brands: one per candidate brand per feed (``brand_candidate``).

A candidate brand (found in a feed's titles or brand field, no person has confirmed it) needs a
person's verdict once, not once per product. Its review item rides on an item of one of the
products that carry it, chosen so that the same product is chosen again on every run:

1. an item already waiting for the brand is kept;
2. else the item that last stood for it, when its product still carries the brand;
3. else the waiting item (queued for something else) of a product carrying the brand with the
   highest priority (the lowest id on a tie): the brand joins it;
4. else the first product of the brand in the feed (the order products were first saved in)
   gets a brand-only item.

The item names the brand (column ``brand``: its canonical name), so that a verdict on the brand
(:meth:`catmap.store.Store.settle_brand`) settles it in the same transaction: the reason is
taken off the item, and an item queued for nothing else is closed (withdrawn, with the verdict
as its reason). Setting the brand back to a candidate places it again by the rules above, which
bring back the item the verdict settled. The product's mapping status never changes because of
the brand: an accepted mapping stays accepted.

A person deciding the node of an item that carries the brand, without a verdict on it, does not
settle the brand: the item stays waiting with the brand's reason alone (see
:func:`keep_brand_waiting`).
"""

from __future__ import annotations

import sqlite3
from collections.abc import Iterable, Mapping, Sequence

from catmap.decide.queue import brand_candidate_priority
from catmap.store.audit import AuditMixin
from catmap.store.queue import has_reason_sql, reasons_of

BRAND_REASON = "brand_candidate"
# Names per query (well under SQLite's variable limit).
_CHUNK = 500


def _chunks(values: Sequence[str]) -> Iterable[tuple[list[str], str]]:
    for start in range(0, len(values), _CHUNK):
        part = list(values[start : start + _CHUNK])
        yield part, ", ".join("?" * len(part))


def feed_brand_priority(conn: sqlite3.Connection, feed_id: int) -> float:
    """The priority of a candidate brand's item in a feed, from its waiting low-confidence
    items (see :func:`catmap.decide.queue.brand_candidate_priority`)."""
    rows = conn.execute(
        "SELECT priority FROM review_items WHERE feed_id = ? AND state != 'done' AND "
        + has_reason_sql("low_confidence"),
        (feed_id,),
    ).fetchall()
    return brand_candidate_priority(float(r[0]) for r in rows)


def candidate_products(
    conn: sqlite3.Connection, feed_id: int, spellings: Sequence[str]
) -> list[str]:
    """The feed's products that carry one of ``spellings`` as a candidate brand, in the order
    they were first saved (the feed's order)."""
    found: list[tuple[int, str]] = []
    for part, marks in _chunks(list(dict.fromkeys(spellings))):
        found.extend(
            (int(r[0]), str(r[1]))
            for r in conn.execute(
                "SELECT p.rowid, m.product_id FROM mappings AS m JOIN products AS p "
                "ON p.feed_id = m.feed_id AND p.product_id = m.product_id "
                f"WHERE m.feed_id = ? AND m.brand_status = 'candidate' AND m.brand IN ({marks})",
                (feed_id, *part),
            )
        )
    return [product_id for _order, product_id in sorted(found)]


def ensure_brand_item(
    conn: sqlite3.Connection,
    feed_id: int,
    name: str,
    spellings: Sequence[str],
    *,
    priority: float,
    now: str,
    claim_for: str | None = None,
    lease_until: str | None = None,
) -> tuple[int | None, bool]:
    """Make one waiting item of the feed stand for the brand (see the module's rules).

    Args:
        conn: the connection, in a write transaction.
        feed_id: the feed.
        name: the brand's canonical name (written on the item).
        spellings: the brand values products carry for it (``name`` counts as one).
        priority: the priority of a brand-only item (an item joined keeps a higher one).
        now: the time stamp of a new item.
        claim_for: claim the item for this reviewer (the review screen's undo brings the item
            back on screen), unless someone else holds it.
        lease_until: the claim's lease.

    Returns:
        The item's id (None: no product of the feed carries the brand as a candidate) and
        whether it was changed (False: an item already stood for the brand).
    """
    names = list(dict.fromkeys([name, *spellings]))
    products = candidate_products(conn, feed_id, names)
    if not products:
        return None, False
    carrying = set(products)
    standing: list[sqlite3.Row] = []
    for part, marks in _chunks(names):
        standing.extend(
            conn.execute(
                "SELECT id, product_id, state, reason, reasons, withdrawn_reason "
                f"FROM review_items WHERE feed_id = ? AND brand IN ({marks}) ORDER BY id DESC",
                (feed_id, *part),
            )
        )
    standing.sort(key=lambda r: -int(r["id"]))
    # 1. An item already waiting for the brand.
    for row in standing:
        if (
            row["state"] != "done"
            and BRAND_REASON in reasons_of(row)
            and row["product_id"] in carrying
        ):
            return int(row["id"]), False
    # 2. The item that last stood for it, on a product that still carries it.
    latest = next((r for r in standing if r["product_id"] in carrying), None)
    if latest is not None:
        if latest["state"] != "done":
            return _join(conn, latest["id"], name, priority, claim_for, lease_until, now), True
        product_id = str(latest["product_id"])
        if latest["withdrawn_reason"] is not None and _waiting(conn, feed_id, product_id) is None:
            _reopen(conn, latest["id"], name, priority, claim_for, lease_until)
            return int(latest["id"]), True
        placed = _put_on_product(
            conn, feed_id, product_id, name, priority, now, claim_for, lease_until
        )
        return placed, True
    # 3. The highest-priority waiting item of a product carrying the brand.
    best: sqlite3.Row | None = None
    for part, marks in _chunks(products):
        row = conn.execute(
            "SELECT id, priority FROM review_items WHERE feed_id = ? AND state != 'done' "
            f"AND product_id IN ({marks}) ORDER BY priority DESC, id LIMIT 1",
            (feed_id, *part),
        ).fetchone()
        if row is not None and (
            best is None or (-row["priority"], row["id"]) < (-best["priority"], best["id"])
        ):
            best = row
    if best is not None:
        return _join(conn, best["id"], name, priority, claim_for, lease_until, now), True
    # 4. The first product of the brand in the feed.
    placed = _put_on_product(
        conn, feed_id, products[0], name, priority, now, claim_for, lease_until
    )
    return placed, True


def _waiting(conn: sqlite3.Connection, feed_id: int, product_id: str) -> int | None:
    row = conn.execute(
        "SELECT id FROM review_items WHERE feed_id = ? AND product_id = ? AND state != 'done' "
        "ORDER BY id LIMIT 1",
        (feed_id, product_id),
    ).fetchone()
    return None if row is None else int(row[0])


def _claim_sql(claim_for: str | None) -> str:
    # A claim for the reviewer only when nobody else holds the item with a live lease.
    if claim_for is None:
        return ""
    return (
        ", state = CASE WHEN state = 'claimed' AND claimed_by != :me AND lease_until >= :now "
        "THEN state ELSE 'claimed' END, "
        "claimed_by = CASE WHEN state = 'claimed' AND claimed_by != :me AND lease_until >= :now "
        "THEN claimed_by ELSE :me END, "
        "lease_until = CASE WHEN state = 'claimed' AND claimed_by != :me "
        "AND lease_until >= :now THEN lease_until ELSE :lease END"
    )


def _join(
    conn: sqlite3.Connection,
    item_id: int,
    name: str,
    priority: float,
    claim_for: str | None,
    lease_until: str | None,
    now: str,
) -> int:
    """Add the brand's reason to a waiting item (an open one is worth at least the brand)."""
    row = conn.execute(
        "SELECT reason, reasons FROM review_items WHERE id = ?", (item_id,)
    ).fetchone()
    have = reasons_of(row)
    merged = " ".join(have if BRAND_REASON in have else (*have, BRAND_REASON))
    conn.execute(
        "UPDATE review_items SET reasons = :reasons, brand = :brand, "
        "priority = CASE WHEN state = 'open' THEN MAX(priority, :priority) ELSE priority END"
        + _claim_sql(claim_for)
        + " WHERE id = :id",
        {
            "reasons": merged, "brand": name, "priority": priority, "id": item_id,
            "me": claim_for, "now": now, "lease": lease_until,
        },
    )  # fmt: skip
    return item_id


def _reopen(
    conn: sqlite3.Connection,
    item_id: int,
    name: str,
    priority: float,
    claim_for: str | None,
    lease_until: str | None,
) -> None:
    """Open a closed item again as a brand-only item."""
    conn.execute(
        "UPDATE review_items SET state = ?, claimed_by = ?, lease_until = ?, "
        "withdrawn_reason = NULL, reasons = ?, brand = ?, priority = ? WHERE id = ?",
        (
            "open" if claim_for is None else "claimed", claim_for,
            None if claim_for is None else lease_until, BRAND_REASON, name, priority, item_id,
        ),
    )  # fmt: skip


def _put_on_product(
    conn: sqlite3.Connection,
    feed_id: int,
    product_id: str,
    name: str,
    priority: float,
    now: str,
    claim_for: str | None,
    lease_until: str | None,
) -> int:
    """The brand on this product: joining its waiting item, reopening its closed brand item,
    or a new brand-only item."""
    waiting = _waiting(conn, feed_id, product_id)
    if waiting is not None:
        return _join(conn, waiting, name, priority, claim_for, lease_until, now)
    row = conn.execute(
        "SELECT id FROM review_items WHERE feed_id = ? AND product_id = ? AND reason = ?",
        (feed_id, product_id, BRAND_REASON),
    ).fetchone()
    if row is not None:  # one item per product and key reason: the old one opens again
        _reopen(conn, int(row[0]), name, priority, claim_for, lease_until)
        return int(row[0])
    group = conn.execute(
        "SELECT group_key FROM mappings WHERE feed_id = ? AND product_id = ?",
        (feed_id, product_id),
    ).fetchone()
    cursor = conn.execute(
        "INSERT INTO review_items (feed_id, product_id, group_key, reason, reasons, priority, "
        "created_at, brand, state, claimed_by, lease_until) "
        "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (
            feed_id, product_id, group[0] if group is not None else "", BRAND_REASON,
            BRAND_REASON, priority, now, name, "open" if claim_for is None else "claimed",
            claim_for, None if claim_for is None else lease_until,
        ),
    )  # fmt: skip
    return int(cursor.lastrowid or 0)


def settle_brand_items(conn: sqlite3.Connection, names: Sequence[str], why: str) -> list[int]:
    """Take the brand's reason off every waiting item that stands for it; close the items
    queued for nothing else (withdrawn, ``why``). Returns the ids of the items settled."""
    rows: list[sqlite3.Row] = []
    for part, marks in _chunks(list(dict.fromkeys(n for n in names if n))):
        rows.extend(
            conn.execute(
                "SELECT id, reason, reasons FROM review_items WHERE state != 'done' AND "
                f"brand IN ({marks}) AND " + has_reason_sql(BRAND_REASON),
                part,
            )
        )
    return _take_reason_off(conn, rows, why)


def _take_reason_off(conn: sqlite3.Connection, rows: Sequence[sqlite3.Row], why: str) -> list[int]:
    settled: list[int] = []
    for row in sorted(rows, key=lambda r: int(r["id"])):
        rest = [r for r in reasons_of(row) if r != BRAND_REASON]
        if rest:
            conn.execute(
                "UPDATE review_items SET reasons = ? WHERE id = ?", (" ".join(rest), row["id"])
            )
        else:
            conn.execute(
                "UPDATE review_items SET state = 'done', claimed_by = NULL, lease_until = NULL, "
                "withdrawn_reason = ? WHERE id = ?",
                (why, row["id"]),
            )
        settled.append(int(row["id"]))
    return settled


def keep_brand_waiting(conn: sqlite3.Connection, item: sqlite3.Row, *, now: str) -> int | None:
    """After a person decided the node of ``item`` (already closed): when the item stood for a
    candidate brand that no verdict settled, keep the brand waiting.

    The decided item keeps its reasons (what it was queued for stays on record, e.g. for the
    audit count). When the product still carries the brand as a candidate, the brand waits on
    it: an item queued for the brand alone stays waiting as the decision found it (claimed by
    the reviewer, or open); an item queued for more hands the brand to a brand-only item of the
    product at the feed's brand priority, claimed like the decided one was (the review screen
    shows it next). When the
    reviewer corrected the product's brand, the brand's item goes to another product of the
    feed carrying it (see :func:`ensure_brand_item`), if any.

    Returns:
        The id of the item the brand waits on (None: nowhere in the feed).
    """
    name = item["brand"] if "brand" in item.keys() else ""  # a store before version 13
    if not name or BRAND_REASON not in reasons_of(item):
        return None
    mapping = conn.execute(
        "SELECT brand_status FROM mappings WHERE feed_id = ? AND product_id = ?",
        (item["feed_id"], item["product_id"]),
    ).fetchone()
    if mapping is not None and mapping["brand_status"] == "candidate":
        if reasons_of(item) == (BRAND_REASON,):
            conn.execute(
                "UPDATE review_items SET state = ?, claimed_by = ?, lease_until = ? WHERE id = ?",
                (item["state"], item["claimed_by"], item["lease_until"], item["id"]),
            )
            return int(item["id"])
        claimed = item["state"] == "claimed" and item["lease_until"] is not None
        priority = feed_brand_priority(conn, int(item["feed_id"]))
        return _put_on_product(
            conn, item["feed_id"], item["product_id"], name, priority, now,
            item["claimed_by"] if claimed else None, item["lease_until"] if claimed else None,
        )  # fmt: skip
    before = conn.execute(
        "SELECT json_extract(before, '$.mapping.brand') FROM decisions WHERE item_id = ? "
        "ORDER BY id DESC LIMIT 1",
        (item["id"],),
    ).fetchone()
    spellings = [str(before[0])] if before is not None and before[0] else []
    priority = feed_brand_priority(conn, int(item["feed_id"]))
    placed, _changed = ensure_brand_item(
        conn, item["feed_id"], name, spellings, priority=priority, now=now
    )
    return placed


class BrandItemsMixin(AuditMixin):
    """Placing the candidate brands' review items after a feed is onboarded."""

    def candidate_brand_values(self, feed: int | str) -> list[str]:
        """The brand values the feed's products carry as candidates, most carried first."""
        rows = self._read(
            "SELECT brand, COUNT(*) AS n FROM mappings WHERE feed_id = ? "
            "AND brand_status = 'candidate' AND brand != '' GROUP BY brand ORDER BY n DESC, brand",
            (self._feed_id(feed),),
        ).fetchall()
        return [str(r[0]) for r in rows]

    def brands_waiting(self, feed: int | str | None = None) -> list[str]:
        """The candidate brands whose review item waits (open or claimed), sorted by name."""
        sql = (
            "SELECT DISTINCT brand FROM review_items WHERE state != 'done' AND brand != '' AND "
            + has_reason_sql(BRAND_REASON)
        )
        params: list[int] = []
        if feed is not None:
            sql += " AND feed_id = ?"
            params.append(self._feed_id(feed))
        return sorted(str(r[0]) for r in self._read(sql, params).fetchall())

    def place_brand_items(
        self,
        feed: int | str,
        brands: Mapping[str, Sequence[str]],
        *,
        run_id: int | None = None,
        actor: str = "catmap",
        priority: float | None = None,
    ) -> list[int]:
        """Give each candidate brand of a feed one waiting review item, in one transaction.

        An item waiting for a brand the feed no longer carries as a candidate (the dictionary
        has it now, the products changed) is settled: the reason comes off, an item queued for
        nothing else is withdrawn. One audit entry (action ``queue_brand_items``) lists the items
        placed and settled.

        Args:
            feed: the feed (id or name).
            brands: each candidate brand's canonical name → the brand values its products
                carry.
            run_id: the run that placed them (recorded in the audit log).
            actor: who places them.
            priority: the priority of a brand-only item (an item joined keeps a higher one);
                None: behind three quarters of the feed's waiting low-confidence items
                (:func:`feed_brand_priority`), as onboarding places them.

        Returns:
            The ids of the items standing for the brands, in the order of ``brands``.
        """
        fid = self._feed_id(feed)
        with self._transaction() as conn:
            now = self._now()
            if priority is None:
                priority = feed_brand_priority(conn, fid)
            placed: list[int] = []
            changed: list[int] = []
            for name, spellings in brands.items():
                item_id, was_changed = ensure_brand_item(
                    conn, fid, name, spellings, priority=priority, now=now
                )
                if item_id is not None:
                    placed.append(item_id)
                    if was_changed:
                        changed.append(item_id)
            kept = set(placed)
            stale = [
                row
                for row in conn.execute(
                    "SELECT id, reason, reasons FROM review_items WHERE feed_id = ? "
                    "AND state != 'done' AND " + has_reason_sql(BRAND_REASON),
                    (fid,),
                )
                if int(row["id"]) not in kept
            ]
            why = (
                f"the brand is no longer a candidate in this feed (onboard run {run_id})"
                if run_id is not None
                else "the brand is no longer a candidate in this feed"
            )
            settled = _take_reason_off(conn, stale, why)
            if changed or settled:
                self._audit(
                    conn, "queue_brand_items", actor, feed_id=fid,
                    detail={
                        "run_id": run_id, "priority": priority, "placed": changed,
                        "settled": settled,
                    },
                )  # fmt: skip
        return placed
