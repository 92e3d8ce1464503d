"""The append-only audit log: writing an entry inside a transaction, and reading the log.

The log refuses ``UPDATE`` and ``DELETE`` through triggers (see :mod:`catmap.store.schema`).
"""

from __future__ import annotations

import json
import sqlite3
from typing import Any

from catmap.store.connection import StoreConnection
from catmap.store.records import AuditEntry


class AuditMixin(StoreConnection):
    """Audit log entries: every decision, undo, withdrawal and other command's event."""

    def _audit(
        self,
        conn: sqlite3.Connection,
        action: str,
        actor: str,
        *,
        feed_id: int | None = None,
        item_id: int | None = None,
        detail: dict[str, Any] | None = None,
    ) -> int:
        cursor = conn.execute(
            "INSERT INTO audit_log (at, actor, action, feed_id, item_id, detail) "
            "VALUES (?, ?, ?, ?, ?, ?)",
            (self._now(), actor, action, feed_id, item_id, json.dumps(detail or {})),
        )
        return int(cursor.lastrowid or 0)

    def record_event(
        self,
        action: str,
        actor: str,
        *,
        feed: int | str | None = None,
        item_id: int | None = None,
        detail: dict[str, Any] | None = None,
    ) -> int:
        """Append an entry to the audit log (remap, import, rollback... by other commands).

        Returns:
            The entry id.
        """
        feed_id = self._feed_id(feed) if feed is not None else None
        with self._transaction() as conn:
            return self._audit(conn, action, actor, feed_id=feed_id, item_id=item_id, detail=detail)

    def audit_log(self, feed: int | str | None = None) -> list[AuditEntry]:
        """Return the audit log, oldest first."""
        sql, params = "SELECT * FROM audit_log", []
        if feed is not None:
            sql += " WHERE feed_id = ?"
            params.append(self._feed_id(feed))
        sql += " ORDER BY id"
        return [
            AuditEntry(
                r["id"],
                r["at"],
                r["actor"],
                r["action"],
                r["feed_id"],
                r["item_id"],
                json.loads(r["detail"]),
            )
            for r in self._read(sql, params).fetchall()
        ]
