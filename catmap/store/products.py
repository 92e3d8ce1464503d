"""Products and their mappings: the bulk writes of an onboarding run, and reading them back.

Bulk writes (:meth:`ProductsMixin.save_mapped`) go in batches, one transaction per batch, with
``executemany``; rows are upserts keyed by ``(feed, product_id)``, so running again after a
crash resumes where the last committed batch ended. A mapping a person reviewed is never
overwritten by a later run. Reads stream a page at a time, so memory stays flat in feed size.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from catmap.errors import StoreError
from catmap.records import BRAND_STATUSES, Attributes, Mapping, Product
from catmap.store.connection import StoreConnection
from catmap.store.encoding import (
    _alternatives_from_json,
    _alternatives_json,
    product_from_json,
    product_to_json,
)
from catmap.store.queue import queue_products
from catmap.store.records import MAPPING_STATUSES, REVIEW_REASONS, MappedRow, StoredMapping

DEFAULT_BATCH_SIZE = 5000

# Rows per page when streaming products and mappings out of the store.
_PAGE = 2000
# WAL pages before an automatic checkpoint: SQLite's default, and the one during bulk writes
# (about 64 MB of 4 KiB pages; the checkpoint then runs once per several batches).
_CHECKPOINT_PAGES = 1000
_BULK_CHECKPOINT_PAGES = 16_000

_MAPPING_COLUMNS = (
    "feed_id, product_id, run_id, node_id, confidence, method, alternatives, reason, "
    "model_version, tree_version, status, group_key, brand, brand_confidence, brand_evidence, "
    "who, age, audience_evidence, audience_conflict, colour_family, restriction, brand_status"
)


def _mapping_from_row(row: sqlite3.Row) -> StoredMapping:
    return StoredMapping(
        feed_id=row["feed_id"],
        product_id=row["product_id"],
        mapping=Mapping(
            node_id=row["node_id"],
            confidence=row["confidence"],
            method=row["method"],
            alternatives=_alternatives_from_json(row["alternatives"]),
            reason=row["reason"],
        ),
        attributes=Attributes(
            brand=row["brand"],
            brand_confidence=row["brand_confidence"],
            brand_evidence=row["brand_evidence"],
            brand_status=row["brand_status"],
            who=row["who"],
            age=row["age"],
            audience_evidence=row["audience_evidence"],
            audience_conflict=bool(row["audience_conflict"]),
            colour_family=row["colour_family"],
            restriction=row["restriction"],
        ),
        status=row["status"],
        group_key=row["group_key"],
        model_version=row["model_version"],
        tree_version=row["tree_version"],
        run_id=row["run_id"],
    )


_PRODUCT_UPSERT = (
    "INSERT INTO products (feed_id, product_id, run_id, data, title, brand, "
    "retailer_path, price, currency) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?) "
    "ON CONFLICT(feed_id, product_id) DO UPDATE SET run_id = excluded.run_id, "
    "data = excluded.data, title = excluded.title, brand = excluded.brand, "
    "retailer_path = excluded.retailer_path, price = excluded.price, "
    "currency = excluded.currency"
)
# A mapping a person reviewed is never overwritten by a later run.
_MAPPING_UPSERT = (
    f"INSERT INTO mappings ({_MAPPING_COLUMNS}) VALUES "
    "(?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?) "
    "ON CONFLICT(feed_id, product_id) DO UPDATE SET run_id = excluded.run_id, "
    "node_id = excluded.node_id, confidence = excluded.confidence, "
    "method = excluded.method, alternatives = excluded.alternatives, "
    "reason = excluded.reason, model_version = excluded.model_version, "
    "tree_version = excluded.tree_version, status = excluded.status, "
    "group_key = excluded.group_key, brand = excluded.brand, "
    "brand_confidence = excluded.brand_confidence, "
    "brand_evidence = excluded.brand_evidence, who = excluded.who, "
    "age = excluded.age, audience_evidence = excluded.audience_evidence, "
    "audience_conflict = excluded.audience_conflict, "
    "colour_family = excluded.colour_family, restriction = excluded.restriction, "
    "brand_status = excluded.brand_status "
    "WHERE mappings.status != 'reviewed'"
)
class ProductsMixin(StoreConnection):
    """Saved products and their mappings."""

    def save_mapped(
        self,
        feed_id: int | str,
        run_id: int | None,
        rows: Iterable[MappedRow],
        *,
        model_version: str = "",
        tree_version: str = "",
        batch_size: int = DEFAULT_BATCH_SIZE,
        on_batch: Callable[[int], None] | None = None,
    ) -> int:
        """Save products with their mappings, attributes and review items, in batches.

        Each batch is one transaction: a crash loses at most the batch being written, never
        half of it. Rows are upserts keyed by ``(feed, product_id)``, so running the same feed
        again resumes and changes nothing already there, except that a newer mapping replaces
        an older one unless a person already reviewed it.

        Args:
            feed_id: the feed (id or name).
            run_id: the run that produced the rows.
            rows: the products, streamed.
            model_version: the model that mapped them.
            tree_version: the category tree version of the nodes.
            batch_size: rows per transaction.
            on_batch: called with the running total after each committed batch.

        Returns:
            The number of rows saved.
        """
        fid = self._feed_id(feed_id)
        if (
            run_id is not None
            and not self._read("SELECT 1 FROM runs WHERE id = ?", (run_id,)).fetchone()
        ):
            raise StoreError(f"no run {run_id} in the store", path=self.path)
        total = 0
        batch: list[MappedRow] = []
        for row in rows:
            batch.append(row)
            if len(batch) >= batch_size:
                total += self._save_batch(fid, run_id, batch, model_version, tree_version)
                batch = []
                if on_batch is not None:
                    on_batch(total)
        if batch:
            total += self._save_batch(fid, run_id, batch, model_version, tree_version)
            if on_batch is not None:
                on_batch(total)
        return total

    def _save_batch(
        self,
        feed_id: int,
        run_id: int | None,
        batch: Sequence[MappedRow],
        model_version: str,
        tree_version: str,
    ) -> int:
        now = self._now()
        products: list[tuple[Any, ...]] = []
        mappings: list[tuple[Any, ...]] = []
        items: list[tuple[Any, ...]] = []
        add_product, add_mapping = products.append, mappings.append
        to_json, alternatives_json = product_to_json, _alternatives_json
        statuses = MAPPING_STATUSES
        for row in batch:
            product, mapping, attrs, status = row.product, row.mapping, row.attributes, row.status
            if status not in statuses:
                raise ValueError(f"unknown mapping status {status!r}")
            if attrs.brand_status not in BRAND_STATUSES:
                raise ValueError(f"unknown brand status {attrs.brand_status!r}")
            product_id = product.product_id
            price = product.price
            path_text = " > ".join(product.category_path)
            add_product(
                (
                    feed_id,
                    product_id,
                    run_id,
                    to_json(product),
                    product.title,
                    product.brand,
                    path_text,
                    None if price is None else str(price),
                    product.currency,
                )
            )
            add_mapping(
                (
                    feed_id,
                    product_id,
                    run_id,
                    mapping.node_id,
                    mapping.confidence,
                    mapping.method,
                    alternatives_json(mapping.alternatives),
                    mapping.reason,
                    model_version,
                    tree_version,
                    status,
                    row.group_key,
                    attrs.brand,
                    attrs.brand_confidence,
                    attrs.brand_evidence,
                    attrs.who,
                    attrs.age,
                    attrs.audience_evidence,
                    int(attrs.audience_conflict),
                    attrs.colour_family,
                    attrs.restriction,
                    attrs.brand_status,
                )
            )
            reasons = row.reasons
            if not reasons:
                if status == "queued":
                    reasons = ("low_confidence",)
                elif status == "audit":
                    reasons = ("audit_sample",)
                else:
                    continue
            for reason in reasons:
                if reason not in REVIEW_REASONS:
                    raise ValueError(f"unknown review reason {reason!r}")
            items.append((product_id, row.group_key, tuple(reasons), row.priority))
        with self._bulk_transaction() as conn:
            conn.executemany(_PRODUCT_UPSERT, products)
            conn.executemany(_MAPPING_UPSERT, mappings)
            if items:
                # One item per product, all its reasons; none for a product a person reviewed.
                queue_products(conn, feed_id, items, now, skip_reviewed=True)
        return len(batch)

    @contextmanager
    def _bulk_transaction(self) -> Iterator[sqlite3.Connection]:
        """A write transaction tuned for a batch of an onboarding run.

        ``synchronous=NORMAL`` for this transaction only: in WAL mode a commit is still atomic
        and survives a killed process (the WAL is in the operating system's cache); only a
        power cut or OS crash can lose the last batches committed since the previous sync,
        and re-running the onboarding resumes them (rows are upserts by product id). A
        reviewer's decision keeps ``synchronous=FULL`` (the connection's setting, restored
        after the batch). The automatic checkpoint waits for a bigger WAL, so that a batch
        is not copied into the database file (and synced) after every commit. Foreign keys
        are not checked row by row: each batch writes the product before its mapping and
        review items in the same transaction, and :meth:`save_mapped` checks the feed and
        the run once.
        """
        with self._lock:
            if self.path == ":memory:":
                with self._transaction() as conn:
                    yield conn
                return
            conn = self._conn
            conn.execute("PRAGMA synchronous=NORMAL")
            conn.execute(f"PRAGMA wal_autocheckpoint={_BULK_CHECKPOINT_PAGES}")
            conn.execute("PRAGMA foreign_keys=OFF")
            try:
                with self._transaction() as conn:
                    yield conn
            finally:
                conn.execute("PRAGMA foreign_keys=ON")
                conn.execute(f"PRAGMA wal_autocheckpoint={_CHECKPOINT_PAGES}")
                conn.execute("PRAGMA synchronous=FULL")

    def product(self, feed: int | str, product_id: str) -> Product:
        """Return a saved product. Raises StoreError when absent."""
        row = self._read(
            "SELECT data FROM products WHERE feed_id = ? AND product_id = ?",
            (self._feed_id(feed), product_id),
        ).fetchone()
        if row is None:
            raise StoreError("no such product in the store", path=self.path, product_id=product_id)
        return product_from_json(row[0])

    def products(self, feed: int | str) -> Iterator[Product]:
        """Yield a feed's saved products in id order, a page at a time (memory stays flat)."""
        fid = self._feed_id(feed)
        last = ""
        while True:
            rows = self._read(
                "SELECT product_id, data FROM products WHERE feed_id = ? AND product_id > ? "
                "ORDER BY product_id LIMIT ?",
                (fid, last, _PAGE),
            ).fetchall()
            for row in rows:
                yield product_from_json(row["data"])
            if len(rows) < _PAGE:
                return
            last = rows[-1]["product_id"]

    def mapping(self, feed: int | str, product_id: str) -> StoredMapping:
        """Return a product's stored mapping. Raises StoreError when absent."""
        row = self._read(
            f"SELECT {_MAPPING_COLUMNS} FROM mappings WHERE feed_id = ? AND product_id = ?",
            (self._feed_id(feed), product_id),
        ).fetchone()
        if row is None:
            raise StoreError("no mapping for this product", path=self.path, product_id=product_id)
        return _mapping_from_row(row)

    def mappings(
        self, feed: int | str, *, status: str | None = None
    ) -> Iterator[tuple[Product, StoredMapping]]:
        """Yield a feed's products with their mappings (for export), in product id order.

        Read a page at a time, so memory stays flat in feed size.
        """
        fid = self._feed_id(feed)
        sql = (
            "SELECT products.data AS data, "
            + ", ".join(f"mappings.{c.strip()}" for c in _MAPPING_COLUMNS.split(","))
            + " FROM mappings JOIN products USING (feed_id, product_id) WHERE mappings.feed_id = ?"
        )
        params: list[Any] = [fid]
        if status is not None:
            sql += " AND mappings.status = ?"
            params.append(status)
        sql += " AND mappings.product_id > ? ORDER BY mappings.product_id LIMIT ?"
        last = ""
        while True:
            rows = self._read(sql, [*params, last, _PAGE]).fetchall()
            for row in rows:
                yield product_from_json(row["data"]), _mapping_from_row(row)
            if len(rows) < _PAGE:
                return
            last = rows[-1]["product_id"]
