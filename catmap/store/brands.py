"""The project's brand registry, kept between runs as plain records.

One row per canonical brand (table ``brand_registry``, schema version 7) holds its whole record
as JSON (the plain data of :meth:`catmap.attributes.registry.RegistryBrand.to_dict`; the store
does not read inside it), and one row per feed (``feed_brands``) the brands that feed showed on
its last onboarding. :meth:`BrandsMixin.change_brand_records` saves a feed's brands, reads
everything, lets the caller change the project's records and writes every row back inside one
write transaction, so two runs merging at once never lose each other's brands and a killed run
leaves the registry as it was.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Callable, Sequence
from typing import Any, TypeVar

from catmap.store.audit import AuditMixin

_T = TypeVar("_T")

BrandRecords = list[dict[str, Any]]


class BrandsMixin(AuditMixin):
    """The brand registry's records: read, replace, change under the write lock."""

    def brand_records(self) -> BrandRecords:
        """Return the stored brand records in their saved order (empty before any)."""
        rows = self._read("SELECT data FROM brand_registry ORDER BY position").fetchall()
        return [json.loads(r["data"]) for r in rows]

    def save_brand_records(self, records: Sequence[dict[str, Any]]) -> None:
        """Replace the stored brand records, in one transaction.

        Each record needs a ``name`` and a ``status`` (``candidate`` or ``confirmed``).
        """
        with self._transaction() as conn:
            self._write_brand_records(conn, records)

    def feed_brand_records(self) -> dict[str, dict[str, Any]]:
        """Return each feed's brands as saved by its last onboarding (feed name → data)."""
        rows = self._read(
            "SELECT f.name, b.data FROM feed_brands b JOIN feeds f ON f.id = b.feed_id "
            "ORDER BY f.id"
        ).fetchall()
        return {r[0]: json.loads(r[1]) for r in rows}

    def change_brand_records(
        self,
        change: Callable[[BrandRecords, dict[str, dict[str, Any]]], tuple[BrandRecords, _T]],
        *,
        action: str,
        actor: str,
        feed: int | str | None = None,
        feed_brands: dict[str, Any] | None = None,
        detail: Callable[[_T], dict[str, Any]] | None = None,
    ) -> _T:
        """Change the project's brand records in one transaction (audited).

        Args:
            change: given the project's records and every feed's brands (feed name → data),
                returns the new project records and a result to hand back.
            action: the audit log's action ("brands_merged", "brand_confirmed").
            actor: who changes them.
            feed: the feed the change comes from, if any.
            feed_brands: that feed's brands, saved first (replacing its earlier ones).
            detail: the audit entry's detail, from the result.

        Returns:
            What ``change`` returned beside the records.
        """
        feed_id = self._feed_id(feed) if feed is not None else None
        with self._transaction() as conn:
            if feed_id is not None and feed_brands is not None:
                conn.execute(
                    "INSERT INTO feed_brands (feed_id, data, updated_at) VALUES (?, ?, ?) "
                    "ON CONFLICT(feed_id) DO UPDATE SET data = excluded.data, "
                    "updated_at = excluded.updated_at",
                    (feed_id, json.dumps(feed_brands, ensure_ascii=False), self._now()),
                )
            rows = conn.execute("SELECT data FROM brand_registry ORDER BY position").fetchall()
            feeds = conn.execute(
                "SELECT f.name, b.data FROM feed_brands b JOIN feeds f ON f.id = b.feed_id "
                "ORDER BY f.id"
            ).fetchall()
            records, result = change(
                [json.loads(r[0]) for r in rows], {r[0]: json.loads(r[1]) for r in feeds}
            )
            self._write_brand_records(conn, records)
            self._audit(
                conn, action, actor, feed_id=feed_id,
                detail=detail(result) if detail is not None else None,
            )  # fmt: skip
        return result

    def _write_brand_records(
        self, conn: sqlite3.Connection, records: Sequence[dict[str, Any]]
    ) -> None:
        now = self._now()
        conn.execute("DELETE FROM brand_registry")
        conn.executemany(
            "INSERT INTO brand_registry (position, name, status, data, updated_at) "
            "VALUES (?, ?, ?, ?, ?)",
            [
                (position, str(record["name"]), str(record["status"]),
                 json.dumps(record, ensure_ascii=False), now)
                for position, record in enumerate(records)
            ],
        )  # fmt: skip
