"""The connection under the store: opening the SQLite file, the write transaction, reads.

Design choices:

- One file, ``<project>/store.sqlite``, opened in WAL mode (readers never block the writer) with
  foreign keys on, a busy timeout (several reviewers and an onboarding run may share it) and
  ``synchronous=FULL`` so that a committed decision survives a killed process.
- Every write runs inside an explicit ``BEGIN IMMEDIATE`` transaction: the write lock is taken at
  the start, so two reviewers claiming at once are serialised and can never get the same item.
- One connection may be shared with a worker thread of the review screen: every use of it holds
  the store's lock.
"""

from __future__ import annotations

import sqlite3
import threading
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from datetime import UTC, datetime, timedelta
from pathlib import Path
from types import TracebackType
from typing import Any, Self

from catmap.errors import StoreError
from catmap.store.schema import migrate

STORE_FILE_NAME = "store.sqlite"

Clock = Callable[[], datetime]


def _utc_now() -> datetime:
    return datetime.now(UTC)


def _iso(moment: datetime) -> str:
    # One fixed format, so that text comparison in SQL orders moments correctly.
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def store_path(project: str | Path) -> Path:
    """Return where a project's store lives: ``<project>/store.sqlite``."""
    return Path(project) / STORE_FILE_NAME


class _Fetched:
    """Rows already fetched, with the two cursor methods the store uses."""

    def __init__(self, rows: list[Any]) -> None:
        self._rows = rows

    def fetchone(self) -> Any:
        return self._rows[0] if self._rows else None

    def fetchall(self) -> list[Any]:
        return self._rows


class StoreConnection:
    """The open connection of a store and the helpers every part of the store uses.

    Args:
        conn: an open connection in autocommit mode, already migrated.
        path: the file (``":memory:"`` for an in-memory store).
        clock: returns the current UTC time (tests pass a fake one to expire leases).
    """

    def __init__(self, conn: sqlite3.Connection, path: str, *, clock: Clock = _utc_now) -> None:
        self._conn = conn
        self.path = path
        self._clock = clock
        # A connection may be shared with a worker thread of the review screen.
        self._lock = threading.RLock()

    @classmethod
    def open(
        cls,
        path: str | Path,
        *,
        timeout: float = 30.0,
        clock: Clock | None = None,
        migrate_schema: bool = True,
    ) -> Self:
        """Open (creating if needed) the store at ``path`` and bring its schema up to date.

        Args:
            path: the store file, or ``":memory:"``.
            timeout: seconds to wait for another process's write lock.
            clock: the current UTC time (default: the system clock).
            migrate_schema: apply pending migrations (default True).

        Returns:
            The open store.

        Raises:
            StoreError: the file is not a catmap store, is newer than this catmap, or is locked.
        """
        text = str(path)
        if text != ":memory:":
            Path(text).parent.mkdir(parents=True, exist_ok=True)
        try:
            conn = sqlite3.connect(
                text, timeout=timeout, isolation_level=None, check_same_thread=False
            )
        except sqlite3.Error as error:
            raise StoreError(f"cannot open the store: {error}", path=text) from error
        conn.row_factory = sqlite3.Row
        try:
            if text != ":memory:":
                conn.execute("PRAGMA journal_mode=WAL")
            conn.execute("PRAGMA foreign_keys=ON")
            conn.execute(f"PRAGMA busy_timeout={int(timeout * 1000)}")
            # FULL: a commit is on disk before the call returns (a killed process loses nothing
            # committed; with WAL, NORMAL would already survive a kill but not a power cut).
            conn.execute("PRAGMA synchronous=FULL")
            conn.execute("PRAGMA cache_size=-65536")
            if migrate_schema:
                migrate(conn)
        except sqlite3.DatabaseError as error:
            conn.close()
            raise StoreError(
                f"not a usable catmap store: {error}",
                path=text,
                hint="check the --project folder, or move the file away to start a new store",
            ) from error
        except BaseException:
            conn.close()
            raise
        return cls(conn, text, clock=clock or _utc_now)

    @classmethod
    def for_project(cls, project: str | Path, **options: Any) -> Self:
        """Open the store of a project folder (``<project>/store.sqlite``)."""
        return cls.open(store_path(project), **options)

    def close(self) -> None:
        """Close the connection."""
        with self._lock:
            self._conn.close()

    def __enter__(self) -> Self:
        return self

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.close()

    @property
    def schema_version(self) -> int:
        """The schema version of the open file."""
        return int(self._read("PRAGMA user_version").fetchone()[0])

    def _now(self) -> str:
        return _iso(self._clock())

    def _lease_until(self, lease_seconds: float) -> str:
        """The moment a claim taken now lapses."""
        return _iso(self._clock() + timedelta(seconds=lease_seconds))

    @contextmanager
    def _transaction(self) -> Iterator[sqlite3.Connection]:
        with self._lock:
            try:
                self._conn.execute("BEGIN IMMEDIATE")
            except sqlite3.OperationalError as error:
                raise StoreError(
                    f"the store is busy: {error}",
                    path=self.path,
                    hint="another catmap process holds the write lock; try again",
                ) from error
            try:
                yield self._conn
            except BaseException:
                self._conn.execute("ROLLBACK")
                raise
            else:
                self._conn.execute("COMMIT")

    def _read(self, sql: str, params: Sequence[Any] | dict[str, Any] = ()) -> _Fetched:
        # Rows are fetched under the lock: the connection may be shared between threads.
        with self._lock:
            return _Fetched(self._conn.execute(sql, params).fetchall())

    def _feed_id(self, feed: int | str) -> int:
        if isinstance(feed, int):
            row = self._read("SELECT id FROM feeds WHERE id = ?", (feed,)).fetchone()
        else:
            row = self._read("SELECT id FROM feeds WHERE name = ?", (feed,)).fetchone()
        if row is None:
            raise StoreError(
                f"no feed {feed!r} in the store",
                path=self.path,
                hint="run `catmap onboard FEED` first",
            )
        return int(row[0])
