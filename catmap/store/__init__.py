"""The project store: one SQLite file per project holding feeds, runs, products, mappings,
the review queue, reviewers' decisions and an append-only audit log.

Design choices:

- One file, ``<project>/store.sqlite``, opened in WAL mode (readers never block the writer) with
  foreign keys on, a busy timeout (several reviewers and an onboarding run may share it) and
  ``synchronous=FULL`` so that a committed decision survives a killed process.
- Every write runs inside an explicit ``BEGIN IMMEDIATE`` transaction: the write lock is taken at
  the start, so two reviewers claiming at once are serialised and can never get the same item.
- Bulk writes (:meth:`Store.save_mapped`) go in batches, one transaction per batch, with
  ``executemany``; rows are upserts keyed by ``(feed, product_id)``, so running again after a
  crash resumes where the last committed batch ended. A mapping a person reviewed is never
  overwritten by a later run.
- The schema is versioned with ``PRAGMA user_version``; :data:`MIGRATIONS` are applied in
  order, each in one transaction.
- The audit log refuses ``UPDATE`` and ``DELETE`` through triggers.

Example:
    >>> with Store.open(":memory:") as store:
    ...     feed = store.add_feed("shop-a", source_path="shop-a.csv")
    ...     store.queue_summary().open
    0
"""

from __future__ import annotations

import json
import sqlite3
import threading
import uuid
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from decimal import Decimal
from math import isfinite
from pathlib import Path
from types import TracebackType
from typing import Any

from catmap.decide.queue import STRONG_GROUP_MIN_SIZE, STRONG_GROUP_SHARE
from catmap.errors import StoreError
from catmap.records import AGE_VALUES, WHO_VALUES, Alternative, Attributes, Mapping, Product
from catmap.store.schema import MIGRATIONS, SCHEMA_VERSION, migrate

STORE_FILE_NAME = "store.sqlite"

MAPPING_STATUSES = ("accepted", "queued", "audit", "reviewed")
REVIEW_REASONS = ("low_confidence", "audit_sample", "brand_conflict", "audience_conflict", "remap")
ITEM_STATES = ("open", "claimed", "done")
DECISION_ACTIONS = ("accept", "choose", "no_fit", "skip", "fix_attributes")
# Reasons a whole retailer category can be settled for in one key; conflicts and audit samples
# are judged one product at a time (an audit sample accepted in bulk would measure nothing).
GROUP_REASONS = ("low_confidence", "remap")


# The two places a claim looks, each read in queue order from the review_items_claim index.
CLAIM_OPEN = "state = 'open'"
CLAIM_EXPIRED = "state = 'claimed' AND lease_until < :now"

DEFAULT_BATCH_SIZE = 5000
DEFAULT_LEASE_SECONDS = 600
DESCRIPTION_EXCERPT = 400

Clock = Callable[[], datetime]


def _utc_now() -> datetime:
    return datetime.now(UTC)


def _iso(moment: datetime) -> str:
    # One fixed format, so that text comparison in SQL orders moments correctly.
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def store_path(project: str | Path) -> Path:
    """Return where a project's store lives: ``<project>/store.sqlite``."""
    return Path(project) / STORE_FILE_NAME


# --------------------------------------------------------------------------------------------
# What the store gives back
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class FeedRecord:
    """A feed known to the project."""

    id: int
    name: str
    source_path: str
    profile_path: str
    created_at: str


@dataclass(frozen=True, slots=True)
class RunRecord:
    """One run of a command (onboard, map, remap, import...) and its summary."""

    id: int
    feed_id: int | None
    kind: str
    params: dict[str, Any]
    started_at: str
    finished_at: str | None
    status: str
    summary: dict[str, Any]


@dataclass(frozen=True, slots=True)
class MappedRow:
    """One product as the mapping stage leaves it, ready for :meth:`Store.save_mapped`.

    Attributes:
        product: the normalised product.
        mapping: the chosen node and its confidence.
        attributes: brand, who, age, colour family, restriction.
        status: one of :data:`MAPPING_STATUSES` (``accepted``, ``queued`` or ``audit``).
        group_key: the retailer category path text the product is grouped under for review.
        priority: expected gain of reviewing it (see :mod:`catmap.decide.queue`).
        reasons: review reasons to queue it for; when empty, ``queued`` means
            ``low_confidence`` and ``audit`` means ``audit_sample``.
    """

    product: Product
    mapping: Mapping
    attributes: Attributes = field(default_factory=Attributes)
    status: str = "accepted"
    group_key: str = ""
    priority: float = 0.0
    reasons: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class StoredMapping:
    """A product's mapping as stored, with its attributes and review status."""

    feed_id: int
    product_id: str
    mapping: Mapping
    attributes: Attributes
    status: str
    group_key: str
    model_version: str
    tree_version: str
    run_id: int | None


@dataclass(frozen=True, slots=True)
class NodeAttributes:
    """The attributes a product's node decides, read for the node a reviewer moves it to.

    The store holds no category tree: the caller reads these from the tree (see
    :func:`catmap.review.follow.node_attributes`) and the store writes them in the same
    transaction as the decision, so a product never sits on a new node with the old node's
    restriction flag or who / age applicability.

    Attributes:
        restriction: the restriction flag on the new node ('' = none).
        who: who on the new node (``not_applicable`` where the node says gender does not apply).
        age: age on the new node (``not_applicable`` where the node says age does not apply).
    """

    restriction: str
    who: str
    age: str


NodeAttributesFor = Callable[[Product, StoredMapping], NodeAttributes]
"""Reads :class:`NodeAttributes` for a product (and its mapping as stored) on a group's node."""


@dataclass(frozen=True, slots=True)
class ReviewItem:
    """One entry of the review queue."""

    id: int
    feed_id: int
    feed_name: str
    product_id: str
    group_key: str
    reason: str
    priority: float
    state: str
    claimed_by: str | None
    lease_until: str | None
    skips: int
    withdrawn_reason: str | None = None

    @property
    def withdrawn(self) -> bool:
        """The item was closed without a decision (see :meth:`Store.withdraw_items`)."""
        return self.withdrawn_reason is not None


@dataclass(frozen=True, slots=True)
class GroupInfo:
    """The retailer category an item belongs to, and how much its products agree.

    Attributes:
        key: the group key (retailer category path text).
        size: products of the feed in this group.
        open_items: items of the group still to review (open or claimed), any reason.
        top_node: the node most of the group's products are mapped to ('' when empty).
        top_share: the share of the group's products on ``top_node`` (0..1).
        strong: a consensus strong enough to offer the whole group in one key.
    """

    key: str
    size: int
    open_items: int
    top_node: str
    top_share: float
    strong: bool


@dataclass(frozen=True, slots=True)
class ReviewView:
    """Everything the review screen shows for one item."""

    item: ReviewItem
    product: Product
    mapping: Mapping
    attributes: Attributes
    status: str
    group: GroupInfo
    description_excerpt: str

    @property
    def title(self) -> str:
        """The product title."""
        return self.product.title

    @property
    def brand(self) -> str:
        """The brand as the feed gave it."""
        return self.product.brand

    @property
    def price(self) -> Decimal | None:
        """The price, if one was read."""
        return self.product.price

    @property
    def currency(self) -> str | None:
        """The ISO 4217 currency code, if known."""
        return self.product.currency

    @property
    def retailer_path(self) -> str:
        """The retailer's own category path, as text."""
        return " > ".join(self.product.category_path)

    @property
    def suggested_node(self) -> str:
        """The node catmap suggests."""
        return self.mapping.node_id

    @property
    def confidence(self) -> float:
        """The suggestion's calibrated confidence."""
        return self.mapping.confidence

    @property
    def alternatives(self) -> tuple[Alternative, ...]:
        """The next best nodes, best first."""
        return self.mapping.alternatives


@dataclass(frozen=True, slots=True)
class Decision:
    """What a reviewer decided about one item."""

    id: int
    item_id: int
    feed_id: int
    product_id: str
    reason: str
    reviewer: str
    at: str
    action: str
    from_node: str | None
    to_node: str | None
    brand_from: str | None
    brand_to: str | None
    who_from: str | None
    who_to: str | None
    age_from: str | None
    age_to: str | None
    note: str
    bulk_id: str | None
    undone_at: str | None


@dataclass(frozen=True, slots=True)
class GroupCount:
    """Queue counts of one retailer category group."""

    feed_id: int
    group_key: str
    open: int
    claimed: int
    done: int


@dataclass(frozen=True, slots=True)
class QueueSummary:
    """How much of the review queue is open, claimed and done.

    ``done`` counts items a person decided; ``withdrawn`` those closed without a decision
    because a later run settled them (they are in ``by_reason`` under ``"withdrawn"``).
    """

    open: int
    claimed: int
    done: int
    by_reason: dict[str, dict[str, int]]
    by_group: list[GroupCount]
    withdrawn: int = 0

    @property
    def total(self) -> int:
        """All items."""
        return self.open + self.claimed + self.done + self.withdrawn


@dataclass(frozen=True, slots=True)
class TrainingExample:
    """A product whose node a person decided: training data for ``catmap train``."""

    feed_id: int
    product: Product
    node_id: str
    reviewer: str
    decided_at: str


@dataclass(frozen=True, slots=True)
class AuditEntry:
    """One line of the append-only audit log."""

    id: int
    at: str
    actor: str
    action: str
    feed_id: int | None
    item_id: int | None
    detail: dict[str, Any]


@dataclass(frozen=True, slots=True)
class FeedStatus:
    """Where a feed stands: rows read, products mapped, review progress, audited error.

    ``audit_error`` is the observed error among reviewed audit samples with its Clopper-Pearson
    interval (:func:`catmap.decide.threshold.estimate_error`), None before any audit sample is
    reviewed.
    """

    feed: FeedRecord
    read: int | None
    kept: int | None
    rejected: int | None
    products: int
    accepted: int
    queued: int
    audit: int
    reviewed: int
    open_items: int
    claimed_items: int
    done_items: int
    audit_checked: int
    audit_wrong: int
    audit_error: Any = None  # catmap.decide.threshold.ErrorEstimate | None
    withdrawn_items: int = 0


# --------------------------------------------------------------------------------------------
# Converting records to rows and back
# --------------------------------------------------------------------------------------------


# One encoder reused for every row: bulk writes serialise hundreds of thousands of products.
# No key sorting, no spaces, no ASCII escaping: the cheapest JSON the C encoder writes.
_ENCODER = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"))
_encode = _ENCODER.encode

# Products are saved as a JSON array in this field order, led by the format number: half the
# size of an object with keys and about twice as fast to write. Objects (the format before)
# are still read.
_PRODUCT_FORMAT = 2
_PRODUCT_FIELDS = (
    "product_id",
    "title",
    "description",
    "brand",
    "category_path",
    "price",
    "currency",
    "gtin",
    "gtin_raw",
    "gender_text",
    "colour",
    "size",
    "url",
    "image_url",
    "availability",
    "extra",
    "flags",
    "source_line",
)


def product_to_json(product: Product) -> str:
    """Return a product as JSON text that :func:`product_from_json` turns back into it."""
    price = product.price
    return _encode(
        [
            _PRODUCT_FORMAT,
            product.product_id,
            product.title,
            product.description,
            product.brand,
            product.category_path,
            # Decimal as text: a float would change 19.90 into 19.9 or worse.
            None if price is None else str(price),
            product.currency,
            product.gtin,
            product.gtin_raw,
            product.gender_text,
            product.colour,
            product.size,
            product.url,
            product.image_url,
            product.availability,
            product.extra,
            product.flags,
            product.source_line,
        ]
    )


def product_from_json(text: str) -> Product:
    """Rebuild a product saved by :func:`product_to_json` (either format)."""
    data = json.loads(text)
    if isinstance(data, list):
        if data[0] != _PRODUCT_FORMAT:
            raise StoreError(f"unknown product format {data[0]!r} in the store")
        data = dict(zip(_PRODUCT_FIELDS, data[1:], strict=True))
    price = data.get("price")
    return Product(
        product_id=data["product_id"],
        title=data["title"],
        description=data.get("description", ""),
        brand=data.get("brand", ""),
        category_path=tuple(data.get("category_path", ())),
        price=Decimal(price) if price is not None else None,
        currency=data.get("currency"),
        gtin=data.get("gtin"),
        gtin_raw=data.get("gtin_raw", ""),
        gender_text=data.get("gender_text", ""),
        colour=data.get("colour", ""),
        size=data.get("size", ""),
        url=data.get("url", ""),
        image_url=data.get("image_url", ""),
        availability=data.get("availability", "unknown"),
        extra=dict(data.get("extra", {})),
        flags=tuple(data.get("flags", ())),
        source_line=int(data.get("source_line", 0)),
    )


_quote = json.encoder.encode_basestring  # the C string quoter of the json module


def _alternatives_json(alternatives: Sequence[Alternative]) -> str:
    # Written by hand: calling the encoder costs more than the few short pairs it writes.
    if not alternatives:
        return "[]"
    parts = []
    for alt in alternatives:
        confidence = float(alt.confidence)
        if not isfinite(confidence):
            return _encode([(a.node_id, a.confidence) for a in alternatives])
        parts.append(f"[{_quote(alt.node_id)},{confidence!r}]")
    return "[" + ",".join(parts) + "]"


def _alternatives_from_json(text: str) -> tuple[Alternative, ...]:
    return tuple(Alternative(str(node), float(conf)) for node, conf in json.loads(text))


_MAPPING_COLUMNS = (
    "feed_id, product_id, run_id, node_id, confidence, method, alternatives, reason, "
    "model_version, tree_version, status, group_key, brand, brand_confidence, brand_evidence, "
    "who, age, audience_evidence, audience_conflict, colour_family, restriction"
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
_DECISION_SELECT = (
    "SELECT decisions.*, review_items.feed_id AS feed_id, review_items.product_id AS product_id, "
    "review_items.reason AS reason FROM decisions "
    "JOIN review_items ON review_items.id = decisions.item_id"
)


# --------------------------------------------------------------------------------------------
# The store
# --------------------------------------------------------------------------------------------


class _Fetched:
    """Rows already fetched, with the two cursor methods the store uses."""

    def __init__(self, rows: list[Any]) -> None:
        self._rows = rows

    def fetchone(self) -> Any:
        return self._rows[0] if self._rows else None

    def fetchall(self) -> list[Any]:
        return self._rows


# Rows per page when streaming products and mappings out of the store.
_PAGE = 2000
# WAL pages before an automatic checkpoint: SQLite's default, and the one during bulk writes
# (about 64 MB of 4 KiB pages; the checkpoint then runs once per several batches).
_CHECKPOINT_PAGES = 1000
_BULK_CHECKPOINT_PAGES = 16_000

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
    "(?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?) "
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
    "colour_family = excluded.colour_family, restriction = excluded.restriction "
    "WHERE mappings.status != 'reviewed'"
)
# No review item for a product a person already reviewed.
_ITEMS_UPSERT = (
    "INSERT INTO review_items (feed_id, product_id, group_key, reason, priority, "
    "created_at) SELECT ?1, ?2, ?3, ?4, ?5, ?6 WHERE NOT EXISTS (SELECT 1 FROM "
    "mappings WHERE feed_id = ?1 AND product_id = ?2 AND status = 'reviewed') " + _ITEM_UPSERT
)


class Store:
    """A project's SQLite store. Open with :meth:`open`; use as a context manager.

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

    # -- opening and closing ------------------------------------------------------------------

    @classmethod
    def open(
        cls,
        path: str | Path,
        *,
        timeout: float = 30.0,
        clock: Clock | None = None,
        migrate_schema: bool = True,
    ) -> Store:
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
    def for_project(cls, project: str | Path, **options: Any) -> Store:
        """Open the store of a project folder (``<project>/store.sqlite``)."""
        return cls.open(store_path(project), **options)

    def close(self) -> None:
        """Close the connection."""
        with self._lock:
            self._conn.close()

    def __enter__(self) -> Store:
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

    # -- plumbing -----------------------------------------------------------------------------

    def _now(self) -> str:
        return _iso(self._clock())

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

    # -- feeds and runs -----------------------------------------------------------------------

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

        Returns:
            The run id, to pass to :meth:`save_mapped` and :meth:`finish_run`.
        """
        feed_id = self._feed_id(feed) if feed is not None else None
        with self._transaction() as conn:
            cursor = conn.execute(
                "INSERT INTO runs (feed_id, kind, params, started_at) VALUES (?, ?, ?, ?)",
                (feed_id, kind, json.dumps(params or {}, default=str), self._now()),
            )
        return int(cursor.lastrowid or 0)

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
        return [
            RunRecord(
                r["id"],
                r["feed_id"],
                r["kind"],
                json.loads(r["params"]),
                r["started_at"],
                r["finished_at"],
                r["status"],
                json.loads(r["summary"]),
            )
            for r in rows
        ]

    # -- bulk writes --------------------------------------------------------------------------

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
                items.append((feed_id, product_id, row.group_key, reason, row.priority, now))
        with self._bulk_transaction() as conn:
            conn.executemany(_PRODUCT_UPSERT, products)
            conn.executemany(_MAPPING_UPSERT, mappings)
            if items:
                conn.executemany(_ITEMS_UPSERT, items)
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

    # -- reading products and mappings --------------------------------------------------------

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

    # -- the review queue ---------------------------------------------------------------------

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
            lease = _iso(self._clock() + timedelta(seconds=lease_seconds))
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
        lease = _iso(self._clock() + timedelta(seconds=lease_seconds))
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
        before = {key: current[key] for key in current.keys()}
        from_node = current["node_id"]
        to_node: str | None
        if action == "choose":
            to_node = node_id
        elif action == "no_fit":
            to_node = ""
        elif action == "skip":
            to_node = None
        else:
            to_node = from_node
        now = self._now()
        cursor = conn.execute(
            "INSERT INTO decisions (item_id, reviewer, at, action, from_node, to_node, "
            "brand_from, brand_to, who_from, who_to, age_from, age_to, note, before, bulk_id) "
            "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (
                item["id"],
                reviewer,
                now,
                action,
                from_node,
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
        if action == "skip":
            conn.execute(
                "UPDATE review_items SET state = 'open', claimed_by = NULL, lease_until = NULL, "
                "skips = skips + 1 WHERE id = ?",
                (item["id"],),
            )
        else:
            conn.execute(
                "UPDATE review_items SET state = 'done', claimed_by = ?, lease_until = NULL "
                "WHERE id = ?",
                (reviewer, item["id"]),
            )
            changed_node = to_node != from_node
            conn.execute(
                "UPDATE mappings SET status = 'reviewed', node_id = ?, "
                "confidence = CASE WHEN ? THEN 1.0 ELSE confidence END, "
                "method = CASE WHEN ? THEN 'review' ELSE method END, "
                "brand = COALESCE(?, brand), who = COALESCE(?, who), age = COALESCE(?, age), "
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
                    who,
                    age,
                    feed_id,
                    product_id,
                ),
            )
            if node_attributes is not None and changed_node and to_node:
                # The new node decides the flag and whether who / age apply; a reviewer's own
                # who / age (written above) stay. The old node's audience conflict is moot:
                # a person just judged this product's node.
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
                return int(cursor.lastrowid or 0), {
                    "from": current["restriction"],
                    "to": node_attributes.restriction,
                }
        return int(cursor.lastrowid or 0), None

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

    def undo_last(
        self, reviewer: str, *, lease_seconds: float = DEFAULT_LEASE_SECONDS
    ) -> list[int]:
        """Undo the reviewer's last decision (or last bulk accept, as a whole).

        The mapping goes back to what it was, the decision is marked undone (never deleted), the
        item is reopened and claimed by the reviewer, and the undo is audited.

        Returns:
            The ids of the items reopened (empty when there is nothing to undo).
        """
        with self._transaction() as conn:
            last = conn.execute(
                "SELECT id, bulk_id FROM decisions WHERE reviewer = ? AND undone_at IS NULL "
                "ORDER BY id DESC LIMIT 1",
                (reviewer,),
            ).fetchone()
            if last is None:
                return []
            if last["bulk_id"]:
                rows = conn.execute(
                    "SELECT * FROM decisions WHERE bulk_id = ? AND undone_at IS NULL "
                    "ORDER BY id DESC",
                    (last["bulk_id"],),
                ).fetchall()
            else:
                rows = conn.execute(
                    "SELECT * FROM decisions WHERE id = ?", (last["id"],)
                ).fetchall()
            now = self._now()
            lease = _iso(self._clock() + timedelta(seconds=lease_seconds))
            item_ids: list[int] = []
            feed_id: int | None = None
            for decision in rows:
                before = json.loads(decision["before"])
                mapping = before["mapping"]
                feed_id = mapping["feed_id"]
                if decision["action"] != "skip":
                    columns = [c for c in mapping if c not in ("feed_id", "product_id")]
                    conn.execute(
                        "UPDATE mappings SET "
                        + ", ".join(f"{c} = ?" for c in columns)
                        + " WHERE feed_id = ? AND product_id = ?",
                        [mapping[c] for c in columns] + [mapping["feed_id"], mapping["product_id"]],
                    )
                conn.execute(
                    "UPDATE review_items SET state = 'claimed', claimed_by = ?, lease_until = ?, "
                    "skips = ? WHERE id = ?",
                    (reviewer, lease, before.get("skips", 0), decision["item_id"]),
                )
                conn.execute(
                    "UPDATE decisions SET undone_at = ? WHERE id = ?", (now, decision["id"])
                )
                item_ids.append(decision["item_id"])
            self._audit(
                conn,
                "undo",
                reviewer,
                feed_id=feed_id,
                item_id=item_ids[0] if len(item_ids) == 1 else None,
                detail={
                    "decisions": [d["id"] for d in rows],
                    "items": item_ids,
                    "bulk_id": last["bulk_id"],
                },
            )
        return item_ids

    # -- reading the queue --------------------------------------------------------------------

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
                "AND i.reason = 'audit_sample' AND d.undone_at IS NULL AND d.action != 'skip'",
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
        )


__all__ = [
    "AuditEntry",
    "CLAIM_EXPIRED",
    "CLAIM_OPEN",
    "Clock",
    "DECISION_ACTIONS",
    "DEFAULT_BATCH_SIZE",
    "DEFAULT_LEASE_SECONDS",
    "DESCRIPTION_EXCERPT",
    "Decision",
    "FeedRecord",
    "FeedStatus",
    "GROUP_REASONS",
    "GroupCount",
    "GroupInfo",
    "ITEM_STATES",
    "MAPPING_STATUSES",
    "MIGRATIONS",
    "MappedRow",
    "NodeAttributes",
    "NodeAttributesFor",
    "QueueSummary",
    "REVIEW_REASONS",
    "ReviewItem",
    "ReviewView",
    "RunRecord",
    "SCHEMA_VERSION",
    "STORE_FILE_NAME",
    "Store",
    "StoredMapping",
    "TrainingExample",
    "migrate",
    "product_from_json",
    "product_to_json",
    "store_path",
]
