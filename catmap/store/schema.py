"""The store's schema and its migrations.

The schema is versioned with ``PRAGMA user_version``: :data:`MIGRATIONS` holds one tuple of
statements per version, applied in order by :func:`migrate`, each in one transaction. A store
written by a newer catmap is refused rather than guessed at.
"""

from __future__ import annotations

import sqlite3

from catmap.errors import StoreError

_SCHEMA_V1: tuple[str, ...] = (
    """CREATE TABLE feeds (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL UNIQUE,
        source_path TEXT NOT NULL DEFAULT '',
        profile_path TEXT NOT NULL DEFAULT '',
        created_at TEXT NOT NULL
    )""",
    """CREATE TABLE runs (
        id INTEGER PRIMARY KEY,
        feed_id INTEGER REFERENCES feeds(id),
        kind TEXT NOT NULL,
        params TEXT NOT NULL DEFAULT '{}',
        started_at TEXT NOT NULL,
        finished_at TEXT,
        status TEXT NOT NULL DEFAULT 'running',
        summary TEXT NOT NULL DEFAULT '{}'
    )""",
    """CREATE TABLE products (
        feed_id INTEGER NOT NULL REFERENCES feeds(id),
        product_id TEXT NOT NULL,
        run_id INTEGER REFERENCES runs(id),
        data TEXT NOT NULL,
        title TEXT NOT NULL,
        brand TEXT NOT NULL,
        retailer_path TEXT NOT NULL,
        price TEXT,
        currency TEXT,
        PRIMARY KEY (feed_id, product_id)
    )""",
    """CREATE TABLE mappings (
        feed_id INTEGER NOT NULL,
        product_id TEXT NOT NULL,
        run_id INTEGER REFERENCES runs(id),
        node_id TEXT NOT NULL,
        confidence REAL NOT NULL,
        method TEXT NOT NULL,
        alternatives TEXT NOT NULL DEFAULT '[]',
        reason TEXT NOT NULL DEFAULT '',
        model_version TEXT NOT NULL DEFAULT '',
        tree_version TEXT NOT NULL DEFAULT '',
        status TEXT NOT NULL CHECK (status IN ('accepted', 'queued', 'audit', 'reviewed')),
        group_key TEXT NOT NULL DEFAULT '',
        brand TEXT NOT NULL DEFAULT '',
        brand_confidence REAL NOT NULL DEFAULT 0,
        brand_evidence TEXT NOT NULL DEFAULT '',
        who TEXT NOT NULL DEFAULT 'not_applicable',
        age TEXT NOT NULL DEFAULT 'not_applicable',
        audience_evidence TEXT NOT NULL DEFAULT '',
        audience_conflict INTEGER NOT NULL DEFAULT 0,
        colour_family TEXT NOT NULL DEFAULT '',
        restriction TEXT NOT NULL DEFAULT '',
        PRIMARY KEY (feed_id, product_id),
        FOREIGN KEY (feed_id, product_id) REFERENCES products(feed_id, product_id)
    )""",
    """CREATE TABLE review_items (
        id INTEGER PRIMARY KEY,
        feed_id INTEGER NOT NULL,
        product_id TEXT NOT NULL,
        group_key TEXT NOT NULL DEFAULT '',
        reason TEXT NOT NULL CHECK (reason IN ('low_confidence', 'audit_sample',
            'brand_conflict', 'audience_conflict', 'remap')),
        priority REAL NOT NULL DEFAULT 0,
        state TEXT NOT NULL DEFAULT 'open' CHECK (state IN ('open', 'claimed', 'done')),
        claimed_by TEXT,
        lease_until TEXT,
        created_at TEXT NOT NULL,
        UNIQUE (feed_id, product_id, reason),
        FOREIGN KEY (feed_id, product_id) REFERENCES products(feed_id, product_id)
    )""",
    "CREATE INDEX review_items_queue ON review_items (state, priority DESC)",
    """CREATE TABLE decisions (
        id INTEGER PRIMARY KEY,
        item_id INTEGER NOT NULL REFERENCES review_items(id),
        reviewer TEXT NOT NULL,
        at TEXT NOT NULL,
        action TEXT NOT NULL CHECK (action IN ('accept', 'choose', 'no_fit', 'skip',
            'fix_attributes')),
        from_node TEXT,
        to_node TEXT,
        brand_from TEXT,
        brand_to TEXT,
        who_from TEXT,
        who_to TEXT,
        age_from TEXT,
        age_to TEXT,
        note TEXT NOT NULL DEFAULT '',
        before TEXT NOT NULL DEFAULT '{}'
    )""",
    """CREATE TABLE audit_log (
        id INTEGER PRIMARY KEY,
        at TEXT NOT NULL,
        actor TEXT NOT NULL,
        action TEXT NOT NULL,
        feed_id INTEGER,
        item_id INTEGER,
        detail TEXT NOT NULL DEFAULT '{}'
    )""",
    """CREATE TRIGGER audit_log_no_update BEFORE UPDATE ON audit_log
        BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END""",
    """CREATE TRIGGER audit_log_no_delete BEFORE DELETE ON audit_log
        BEGIN SELECT RAISE(ABORT, 'the audit log is append-only'); END""",
)

# Version 2: undo and bulk accept need to know which decisions were undone and which belong
# together; skipped items go to the back of the queue; group look-ups get an index.
_SCHEMA_V2: tuple[str, ...] = (
    "ALTER TABLE decisions ADD COLUMN undone_at TEXT",
    "ALTER TABLE decisions ADD COLUMN bulk_id TEXT",
    "ALTER TABLE review_items ADD COLUMN skips INTEGER NOT NULL DEFAULT 0",
    "CREATE INDEX review_items_group ON review_items (feed_id, group_key)",
    "CREATE INDEX mappings_group ON mappings (feed_id, group_key)",
    "CREATE INDEX decisions_reviewer ON decisions (reviewer, id)",
)

# Version 3: a remap onto a new tree version keeps what it changed until it is finalised, so
# that it can be rolled back exactly: the previous mapping columns per product, and each review
# item it created (before = NULL) or reopened (before = the item row as JSON).
_SCHEMA_V3: tuple[str, ...] = (
    """CREATE TABLE remaps (
        id INTEGER PRIMARY KEY,
        run_id INTEGER REFERENCES runs(id),
        from_version TEXT NOT NULL,
        to_version TEXT NOT NULL,
        state TEXT NOT NULL CHECK (state IN ('running', 'pending', 'finalised', 'rolled_back')),
        last_decision_id INTEGER NOT NULL DEFAULT 0,
        started_at TEXT NOT NULL,
        finished_at TEXT,
        report TEXT NOT NULL DEFAULT '{}'
    )""",
    """CREATE TABLE remap_previous (
        remap_id INTEGER NOT NULL REFERENCES remaps(id),
        feed_id INTEGER NOT NULL,
        product_id TEXT NOT NULL,
        node_id TEXT NOT NULL,
        confidence REAL NOT NULL,
        method TEXT NOT NULL,
        alternatives TEXT NOT NULL,
        reason TEXT NOT NULL,
        model_version TEXT NOT NULL,
        tree_version TEXT NOT NULL,
        status TEXT NOT NULL,
        group_key TEXT NOT NULL,
        PRIMARY KEY (feed_id, product_id)
    ) WITHOUT ROWID""",
    """CREATE TABLE remap_items (
        item_id INTEGER PRIMARY KEY,
        remap_id INTEGER NOT NULL REFERENCES remaps(id),
        before TEXT
    )""",
)

# Version 4: a remap also moves the attributes that follow the node (who / age applicability
# and the restriction flag), so rollback must restore them. NULL = saved before version 4
# (the remap then did not touch them; rollback keeps the current value).
_SCHEMA_V4: tuple[str, ...] = (
    "ALTER TABLE remap_previous ADD COLUMN who TEXT",
    "ALTER TABLE remap_previous ADD COLUMN age TEXT",
    "ALTER TABLE remap_previous ADD COLUMN audience_evidence TEXT",
    "ALTER TABLE remap_previous ADD COLUMN audience_conflict INTEGER",
    "ALTER TABLE remap_previous ADD COLUMN restriction TEXT",
)

# Version 5: an item can be withdrawn without a decision (a later run settled what made it
# uncertain): state 'done' with the reason it was withdrawn (NULL for items a person decided).
_SCHEMA_V5: tuple[str, ...] = ("ALTER TABLE review_items ADD COLUMN withdrawn_reason TEXT",)

# Version 6: the claim reads the queue in its order (skipped least, highest priority, oldest)
# straight from an index and stops at the first row, instead of sorting every open item on each
# claim. It replaces the (state, priority) index, which served no query the new one does not.
_SCHEMA_V6: tuple[str, ...] = (
    "DROP INDEX IF EXISTS review_items_queue",
    "CREATE INDEX review_items_claim ON review_items (state, skips, priority DESC, id)",
)

# Version 7: one tree version per store: each feed records the tree version its mappings use
# ('' = not recorded, a store from before: read from its mappings).
_SCHEMA_V7: tuple[str, ...] = (
    "ALTER TABLE feeds ADD COLUMN tree_version TEXT NOT NULL DEFAULT ''",
    "UPDATE feeds SET tree_version = COALESCE((SELECT MAX(m.tree_version) FROM mappings AS m "
    "WHERE m.feed_id = feeds.id), '')",
)
# Version 8: one review item per product. An item carries every reason it is queued for
# (``reasons``, space-separated, the leading one first); a product's second reason joins its
# waiting item instead of opening another. Existing stores are merged: of a product's waiting
# (open or claimed) items, one is kept (a claimed one first, then the highest priority) with all
# their reasons; the others are closed as withdrawn, "merged into review item N".
_SCHEMA_V8: tuple[str, ...] = (
    "ALTER TABLE review_items ADD COLUMN reasons TEXT NOT NULL DEFAULT ''",
    "UPDATE review_items SET reasons = reason",
    """CREATE TEMP TABLE item_merge AS
        SELECT i.id AS id, (SELECT k.id FROM review_items AS k WHERE k.feed_id = i.feed_id
            AND k.product_id = i.product_id AND k.state != 'done'
            ORDER BY k.state = 'claimed' DESC, k.priority DESC, k.id LIMIT 1) AS keeper
        FROM review_items AS i WHERE i.state != 'done'""",
    # The keeper's own reason leads, then the others in the order they were queued.
    """CREATE TEMP TABLE item_merged AS
        SELECT keeper, group_concat(reason, ' ') AS reasons, MAX(priority) AS priority
        FROM (SELECT m.keeper AS keeper, r.reason AS reason, r.priority AS priority
            FROM item_merge AS m JOIN review_items AS r ON r.id = m.id
            ORDER BY m.keeper, r.id != m.keeper, r.id)
        GROUP BY keeper HAVING COUNT(*) > 1""",
    """UPDATE review_items SET
        reasons = (SELECT reasons FROM item_merged WHERE keeper = review_items.id),
        priority = (SELECT priority FROM item_merged WHERE keeper = review_items.id)
        WHERE id IN (SELECT keeper FROM item_merged)""",
    """UPDATE review_items SET state = 'done', claimed_by = NULL, lease_until = NULL,
        withdrawn_reason = 'merged into review item '
            || (SELECT keeper FROM item_merge WHERE item_merge.id = review_items.id)
        WHERE id IN (SELECT id FROM item_merge WHERE keeper != id)""",
    "DROP TABLE item_merge",
    "DROP TABLE item_merged",
)
# Version 9: the project's brand registry (catmap.attributes.registry): one row per canonical
# brand, its whole record as JSON, and the brands each feed showed on its last onboarding (the
# project's are rebuilt from them, so onboarding a feed again counts it once);
# :mod:`catmap.store.brands` rewrites them in one transaction.
_SCHEMA_V9: tuple[str, ...] = (
    """CREATE TABLE feed_brands (
        feed_id INTEGER PRIMARY KEY REFERENCES feeds(id),
        data TEXT NOT NULL,
        updated_at TEXT NOT NULL
    )""",
    """CREATE TABLE brand_registry (
        position INTEGER PRIMARY KEY,
        name TEXT NOT NULL,
        status TEXT NOT NULL CHECK (status IN ('candidate', 'confirmed')),
        data TEXT NOT NULL,
        updated_at TEXT NOT NULL
    )""",
)

# Version 10: how far each product's brand is trusted (catmap.records.BRAND_STATUSES), and a
# brand a person rejected as no brand is kept in the registry as such. The status of stored
# products is read from what they hold: no brand; a brand a reviewer set; a candidate (its
# evidence ends in the candidate mark, or an unknown brand field value passed through as it
# is); else a brand of the dictionary. (A brand confirmed before this version reads as the
# dictionary's: the two were not told apart then.) The registry table is rebuilt to take the
# new status (SQLite cannot change a CHECK in place; nothing refers to the table).
_SCHEMA_V10: tuple[str, ...] = (
    "ALTER TABLE mappings ADD COLUMN brand_status TEXT NOT NULL DEFAULT 'none'",
    """UPDATE mappings SET brand_status = CASE
        WHEN brand = '' THEN 'none'
        WHEN EXISTS (SELECT 1 FROM decisions AS d JOIN review_items AS i ON i.id = d.item_id
            WHERE i.feed_id = mappings.feed_id AND i.product_id = mappings.product_id
            AND d.brand_to IS NOT NULL AND d.undone_at IS NULL) THEN 'corrected'
        WHEN brand_evidence LIKE '%[candidate]' THEN 'candidate'
        WHEN brand_evidence LIKE 'field not in dictionary%'
            AND instr(brand_evidence, '→') = 0 THEN 'candidate'
        ELSE 'dictionary' END""",
    """CREATE TABLE brand_registry_v10 (
        position INTEGER PRIMARY KEY,
        name TEXT NOT NULL,
        status TEXT NOT NULL CHECK (status IN ('candidate', 'confirmed', 'rejected')),
        data TEXT NOT NULL,
        updated_at TEXT NOT NULL
    )""",
    "INSERT INTO brand_registry_v10 (position, name, status, data, updated_at) "
    "SELECT position, name, status, data, updated_at FROM brand_registry",
    "DROP TABLE brand_registry",
    "ALTER TABLE brand_registry_v10 RENAME TO brand_registry",
    "CREATE INDEX mappings_brand_status ON mappings (brand_status, brand)",
)

# Version 11: a brand rejected as no brand takes its products' brand away; what each product
# held before is kept (keyed by the rejection's audit entry), so that setting the brand back
# to a candidate (`catmap brands reset`, the review screen's undo) gives it back exactly.
_SCHEMA_V11: tuple[str, ...] = (
    """CREATE TABLE brand_rejected_products (
        audit_id INTEGER NOT NULL REFERENCES audit_log(id),
        feed_id INTEGER NOT NULL,
        product_id TEXT NOT NULL,
        brand TEXT NOT NULL,
        brand_confidence REAL NOT NULL,
        brand_evidence TEXT NOT NULL,
        PRIMARY KEY (audit_id, feed_id, product_id)
    )""",
)

# Version 12: a feed whose audited error is over its target with confidence gets its threshold
# raised, and the mappings it no longer accepts go back to the queue under their own reason,
# ``audit_over_target`` (catmap.jobs.audit). SQLite cannot change a CHECK in place: the table is
# rebuilt with the same rows and ids (decisions point at them), and its indexes made again.
_SCHEMA_V12: tuple[str, ...] = (
    """CREATE TABLE review_items_v12 (
        id INTEGER PRIMARY KEY,
        feed_id INTEGER NOT NULL,
        product_id TEXT NOT NULL,
        group_key TEXT NOT NULL DEFAULT '',
        reason TEXT NOT NULL CHECK (reason IN ('low_confidence', 'audit_sample',
            'brand_conflict', 'audience_conflict', 'remap', 'audit_over_target')),
        priority REAL NOT NULL DEFAULT 0,
        state TEXT NOT NULL DEFAULT 'open' CHECK (state IN ('open', 'claimed', 'done')),
        claimed_by TEXT,
        lease_until TEXT,
        created_at TEXT NOT NULL,
        skips INTEGER NOT NULL DEFAULT 0,
        withdrawn_reason TEXT,
        reasons TEXT NOT NULL DEFAULT '',
        UNIQUE (feed_id, product_id, reason),
        FOREIGN KEY (feed_id, product_id) REFERENCES products(feed_id, product_id)
    )""",
    """INSERT INTO review_items_v12 (id, feed_id, product_id, group_key, reason, priority, state,
        claimed_by, lease_until, created_at, skips, withdrawn_reason, reasons)
        SELECT id, feed_id, product_id, group_key, reason, priority, state, claimed_by,
        lease_until, created_at, skips, withdrawn_reason, reasons FROM review_items""",
    "DROP TABLE review_items",
    "ALTER TABLE review_items_v12 RENAME TO review_items",
    "CREATE INDEX review_items_group ON review_items (feed_id, group_key)",
    "CREATE INDEX review_items_claim ON review_items (state, skips, priority DESC, id)",
)

# Version 13: a candidate brand (found in titles, no person has confirmed it) gets a review reason
# of its own, ``brand_candidate``: one item per candidate brand per feed
# (:mod:`catmap.store.brand_items`), riding on an item of one of its products. The item names
# the brand it stands for (``brand``, the registry's canonical name; '' for every other item),
# so that a verdict on the brand settles it and setting the brand back brings it back. The table
# is rebuilt for the new reason in its CHECK, as in version 12, rows and ids kept.
_SCHEMA_V13: tuple[str, ...] = (
    """CREATE TABLE review_items_v13 (
        id INTEGER PRIMARY KEY,
        feed_id INTEGER NOT NULL,
        product_id TEXT NOT NULL,
        group_key TEXT NOT NULL DEFAULT '',
        reason TEXT NOT NULL CHECK (reason IN ('low_confidence', 'audit_sample',
            'brand_conflict', 'audience_conflict', 'remap', 'audit_over_target',
            'brand_candidate')),
        priority REAL NOT NULL DEFAULT 0,
        state TEXT NOT NULL DEFAULT 'open' CHECK (state IN ('open', 'claimed', 'done')),
        claimed_by TEXT,
        lease_until TEXT,
        created_at TEXT NOT NULL,
        skips INTEGER NOT NULL DEFAULT 0,
        withdrawn_reason TEXT,
        reasons TEXT NOT NULL DEFAULT '',
        brand TEXT NOT NULL DEFAULT '',
        UNIQUE (feed_id, product_id, reason),
        FOREIGN KEY (feed_id, product_id) REFERENCES products(feed_id, product_id)
    )""",
    """INSERT INTO review_items_v13 (id, feed_id, product_id, group_key, reason, priority, state,
        claimed_by, lease_until, created_at, skips, withdrawn_reason, reasons)
        SELECT id, feed_id, product_id, group_key, reason, priority, state, claimed_by,
        lease_until, created_at, skips, withdrawn_reason, reasons FROM review_items""",
    "DROP TABLE review_items",
    "ALTER TABLE review_items_v13 RENAME TO review_items",
    "CREATE INDEX review_items_group ON review_items (feed_id, group_key)",
    "CREATE INDEX review_items_claim ON review_items (state, skips, priority DESC, id)",
    "CREATE INDEX review_items_brand ON review_items (brand) WHERE brand != ''",
)

MIGRATIONS: tuple[tuple[str, ...], ...] = (
    _SCHEMA_V1,
    _SCHEMA_V2,
    _SCHEMA_V3,
    _SCHEMA_V4,
    _SCHEMA_V5,
    _SCHEMA_V6,
    _SCHEMA_V7,
    _SCHEMA_V8,
    _SCHEMA_V9,
    _SCHEMA_V10,
    _SCHEMA_V11,
    _SCHEMA_V12,
    _SCHEMA_V13,
)
SCHEMA_VERSION = len(MIGRATIONS)
# The tables whose references a migration's rebuild could break, checked before it commits.
_CHECK_AFTER: dict[int, tuple[str, ...]] = {
    12: ("review_items", "decisions"),
    13: ("review_items", "decisions"),
}


def migrate(conn: sqlite3.Connection, *, target: int = SCHEMA_VERSION) -> int:
    """Bring a store's schema up to ``target``, one transaction per migration.

    Args:
        conn: a connection in autocommit mode (``isolation_level=None``).
        target: the schema version wanted (default: the newest).

    Returns:
        The schema version after migrating.

    Raises:
        StoreError: the file was written by a newer catmap.
    """
    version = int(conn.execute("PRAGMA user_version").fetchone()[0])
    if version > SCHEMA_VERSION:
        raise StoreError(
            f"the store has schema version {version}; this catmap knows up to {SCHEMA_VERSION}",
            hint="upgrade catmap",
        )
    if version >= target:
        return version
    # A migration may rebuild a table others point at (version 10): foreign keys are checked
    # again after it, not while the old table is dropped. The pragma only takes effect outside
    # a transaction, hence here.
    foreign_keys = int(conn.execute("PRAGMA foreign_keys").fetchone()[0])
    conn.execute("PRAGMA foreign_keys=OFF")
    try:
        return _migrate(conn, version, target)
    finally:
        conn.execute(f"PRAGMA foreign_keys={'ON' if foreign_keys else 'OFF'}")


def _migrate(conn: sqlite3.Connection, version: int, target: int) -> int:
    while version < target:
        statements = MIGRATIONS[version]
        conn.execute("BEGIN IMMEDIATE")
        try:
            # Read again under the write lock: another process may have just migrated.
            current = int(conn.execute("PRAGMA user_version").fetchone()[0])
            if current != version:
                conn.execute("ROLLBACK")
                version = current
                continue
            for statement in statements:
                conn.execute(statement)
            broken = next(
                (
                    row
                    for table in _CHECK_AFTER.get(version + 1, ())
                    for row in conn.execute(f"PRAGMA foreign_key_check({table})").fetchall()
                ),
                None,
            )
            if broken is not None:
                raise StoreError(
                    f"migrating the store to version {version + 1} broke a reference in table "
                    f"{broken[0]}",
                    hint="keep the file and report it; the store was left as it was",
                )
            conn.execute(f"PRAGMA user_version = {version + 1}")
            conn.execute("COMMIT")
        except BaseException:
            conn.execute("ROLLBACK")
            raise
        version += 1
    return version


