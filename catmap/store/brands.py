"""The project's brand registry, kept between runs as plain records.

One row per canonical brand (table ``brand_registry``, schema version 7) holds its whole record
as JSON (the plain data of :meth:`catmap.attributes.registry.RegistryBrand.to_dict`; the store
does not read inside it). :meth:`BrandsMixin.change_brand_records` reads the records, lets the
caller change them and writes every row back inside one write transaction, so two runs merging
at once never lose each other's brands and a killed run leaves the registry as it was.
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

    def change_brand_records(
        self,
        change: Callable[[BrandRecords], tuple[Sequence[dict[str, Any]], _T]],
        *,
        action: str,
        actor: str,
        feed: int | str | None = None,
        detail: Callable[[_T], dict[str, Any]] | None = None,
    ) -> _T:
        """Read the records, change them and write them back in one transaction (audited).

        Args:
            change: given the records, returns the new records and a result to hand back.
            action: the audit log's action ("brands_merged", "brand_confirmed").
            actor: who changes them.
            feed: the feed the change comes from, if any.
            detail: the audit entry's detail, from the result.

        Returns:
            What ``change`` returned beside the records.
        """
        feed_id = self._feed_id(feed) if feed is not None else None
        with self._transaction() as conn:
            rows = conn.execute("SELECT data FROM brand_registry ORDER BY position").fetchall()
            records, result = change([json.loads(r[0]) for r in rows])
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
