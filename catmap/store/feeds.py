"""Feeds and runs: registering a feed, recording each command's run, and where a feed stands."""

from __future__ import annotations

import json
import os
import socket
from pathlib import Path
from typing import Any

from catmap.errors import StoreError
from catmap.store.connection import StoreConnection
from catmap.store.queue import _STATE_OR_WITHDRAWN, has_reason_sql
from catmap.store.records import FeedRecord, FeedStatus, RunRecord

# Where start_run keeps the process of a run among its parameters.
_PROCESS_KEY = "_process"


def _host() -> str:
    return socket.gethostname()


def _alive(pid: int) -> bool:
    """Whether a process with this id exists on this host (signal 0 checks, sends nothing)."""
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # it exists, under another user
        return True
    return True


class FeedsMixin(StoreConnection):
    """The feeds of a project and the runs of commands over them."""

    def add_feed(
        self, name: str, *, source_path: str | Path = "", profile_path: str | Path = ""
    ) -> int:
        """Register a feed (or update its paths) and return its id. Idempotent by name.

        Args:
            name: the feed's name (its file stem, see :func:`catmap.project.feed_stem`).
            source_path: the feed file.
            profile_path: its saved profile.

        Returns:
            The feed id.
        """
        with self._transaction() as conn:
            conn.execute(
                "INSERT INTO feeds (name, source_path, profile_path, created_at) "
                "VALUES (?, ?, ?, ?) "
                "ON CONFLICT(name) DO UPDATE SET source_path = excluded.source_path, "
                "profile_path = excluded.profile_path",
                (name, str(source_path), str(profile_path), self._now()),
            )
            row = conn.execute("SELECT id FROM feeds WHERE name = ?", (name,)).fetchone()
        return int(row[0])

    def feed(self, feed: int | str) -> FeedRecord:
        """Return a feed by id or name. Raises StoreError when unknown."""
        row = self._read("SELECT * FROM feeds WHERE id = ?", (self._feed_id(feed),)).fetchone()
        return FeedRecord(
            row["id"], row["name"], row["source_path"], row["profile_path"], row["created_at"]
        )

    def feeds(self) -> list[FeedRecord]:
        """Return every feed, oldest first."""
        rows = self._read("SELECT * FROM feeds ORDER BY id").fetchall()
        return [
            FeedRecord(r["id"], r["name"], r["source_path"], r["profile_path"], r["created_at"])
            for r in rows
        ]

    def start_run(
        self, kind: str, *, feed: int | str | None = None, params: dict[str, Any] | None = None
    ) -> int:
        """Record the start of a run (``onboard``, ``map``, ``remap``, ``import``...).

        The process id and host are kept with the parameters (``_process``), so that a later
        run can tell a run that is still going from one whose process died
        (:meth:`stop_stale_runs`).

        Returns:
            The run id, to pass to :meth:`save_mapped` and :meth:`finish_run`.
        """
        feed_id = self._feed_id(feed) if feed is not None else None
        stored = {**(params or {}), _PROCESS_KEY: {"pid": os.getpid(), "host": _host()}}
        with self._transaction() as conn:
            cursor = conn.execute(
                "INSERT INTO runs (feed_id, kind, params, started_at) VALUES (?, ?, ?, ?)",
                (feed_id, kind, json.dumps(stored, default=str), self._now()),
            )
        return int(cursor.lastrowid or 0)

    def stop_stale_runs(self) -> list[RunRecord]:
        """Mark as ``stopped`` every run still ``running`` whose process is gone.

        A run whose process was killed (``kill -9``, a crash, a closed terminal) never
        recorded its end. Its process is known gone when it ran on this host and no process
        has its id any more; a run recorded without a process (by an older catmap) counts as
        gone too. A run on another host is left alone: it may still be going.

        Returns:
            The runs marked stopped (as they were before).
        """
        here = _host()
        stale = []
        for run in self.runs():
            if run.status != "running":
                continue
            process = run.process
            if process is not None:
                if process.get("host") != here or _alive(int(process.get("pid", 0))):
                    continue
            stale.append(run)
        for run in stale:
            reason = "the process ended without finishing (killed or crashed)"
            with self._transaction() as conn:
                conn.execute(
                    "UPDATE runs SET finished_at = ?, status = 'stopped', summary = ? "
                    "WHERE id = ? AND status = 'running'",
                    (self._now(), json.dumps({**run.summary, "stopped_early": reason}), run.id),
                )
        return stale

    def finish_run(
        self, run_id: int, *, status: str = "done", summary: dict[str, Any] | None = None
    ) -> None:
        """Record the end of a run and its summary (e.g. the row accounting: read, kept, ...)."""
        with self._transaction() as conn:
            cursor = conn.execute(
                "UPDATE runs SET finished_at = ?, status = ?, summary = ? WHERE id = ?",
                (self._now(), status, json.dumps(summary or {}, default=str), run_id),
            )
            if cursor.rowcount == 0:
                raise StoreError(f"no run {run_id} in the store", path=self.path)

    def runs(self, feed: int | str | None = None) -> list[RunRecord]:
        """Return runs, oldest first (of one feed when given)."""
        if feed is None:
            rows = self._read("SELECT * FROM runs ORDER BY id").fetchall()
        else:
            rows = self._read(
                "SELECT * FROM runs WHERE feed_id = ? ORDER BY id", (self._feed_id(feed),)
            ).fetchall()
        records = []
        for r in rows:
            params = json.loads(r["params"])
            process = params.pop(_PROCESS_KEY, None)
            records.append(
                RunRecord(
                    r["id"],
                    r["feed_id"],
                    r["kind"],
                    params,
                    r["started_at"],
                    r["finished_at"],
                    r["status"],
                    json.loads(r["summary"]),
                    process if isinstance(process, dict) else None,
                )
            )
        return records

    def feed_status(self, feed: int | str, *, confidence: float = 0.95) -> FeedStatus:
        """Return where a feed stands.

        ``read`` / ``kept`` / ``rejected`` come from the latest finished run whose summary
        has them; the audit error counts a reviewed audit sample as wrong when the reviewer
        chose another node or said no node fits.
        """
        from catmap.decide.threshold import estimate_error

        record = self.feed(feed)
        fid = record.id
        read = kept = rejected = None
        for run in reversed(self.runs(fid)):
            if run.finished_at and "read" in run.summary:
                read = int(run.summary["read"])
                kept = int(run.summary.get("kept", 0))
                rejected = int(run.summary.get("rejected", 0))
                break
        with self._lock:
            statuses = dict(
                self._conn.execute(
                    "SELECT status, COUNT(*) FROM mappings WHERE feed_id = ? GROUP BY status",
                    (fid,),
                ).fetchall()
            )
            brand_statuses = dict(
                self._conn.execute(
                    "SELECT brand_status, COUNT(*) FROM mappings WHERE feed_id = ? "
                    "GROUP BY brand_status ORDER BY brand_status",
                    (fid,),
                ).fetchall()
            )
            states = dict(
                self._conn.execute(
                    f"SELECT {_STATE_OR_WITHDRAWN}, COUNT(*) FROM review_items WHERE feed_id = ? "
                    "GROUP BY 1",
                    (fid,),
                ).fetchall()
            )
            audit = self._conn.execute(
                "SELECT COUNT(*), COALESCE(SUM(d.action IN ('choose', 'no_fit') "
                "AND d.to_node IS NOT d.from_node), 0) FROM decisions AS d "
                "JOIN review_items AS i ON i.id = d.item_id WHERE i.feed_id = ? "
                "AND " + has_reason_sql("audit_sample", "i") + " AND d.undone_at IS NULL "
                "AND d.action != 'skip'",
                (fid,),
            ).fetchone()
        checked, wrong = int(audit[0]), int(audit[1])
        return FeedStatus(
            feed=record,
            read=read,
            kept=kept,
            rejected=rejected,
            products=sum(statuses.values()),
            accepted=statuses.get("accepted", 0),
            queued=statuses.get("queued", 0),
            audit=statuses.get("audit", 0),
            reviewed=statuses.get("reviewed", 0),
            open_items=states.get("open", 0),
            claimed_items=states.get("claimed", 0),
            done_items=states.get("done", 0),
            audit_checked=checked,
            audit_wrong=wrong,
            audit_error=(
                estimate_error(checked - wrong, checked, confidence=confidence) if checked else None
            ),
            withdrawn_items=states.get("withdrawn", 0),
            brand_statuses=brand_statuses,
        )

    def audit_outcomes(self, feed: int | str) -> list[tuple[str, float, bool]]:
        """Return the reviewed audit samples of a feed: what they were and what the reviewer said.

        Counted as :meth:`feed_status` counts them (a decision not undone, not a skip; wrong
        when the reviewer chose another node or said no node fits).

        Returns:
            ``(product_id, confidence when it was auto-accepted, wrong)`` per decision, in
            decision order.
        """
        fid = self._feed_id(feed)
        rows = self._read(
            "SELECT i.product_id, d.before, (d.action IN ('choose', 'no_fit') "
            "AND d.to_node IS NOT d.from_node) AS wrong FROM decisions AS d "
            "JOIN review_items AS i ON i.id = d.item_id WHERE i.feed_id = ? "
            "AND " + has_reason_sql("audit_sample", "i") + " AND d.undone_at IS NULL "
            "AND d.action != 'skip' ORDER BY d.id",
            (fid,),
        ).fetchall()
        out = []
        for row in rows:
            before = json.loads(row["before"] or "{}").get("mapping") or {}
            confidence = before.get("confidence")
            if confidence is None:  # a decision recorded without its mapping: ask the mapping
                found = self._read(
                    "SELECT confidence FROM mappings WHERE feed_id = ? AND product_id = ?",
                    (fid, row["product_id"]),
                ).fetchone()
                confidence = found[0] if found is not None else 0.0
            out.append((str(row["product_id"]), float(confidence), bool(row["wrong"])))
        return out
