"""One page of stored mappings moved onto the new tree.

A page is sorted first: products of one-to-one changes move with no model call (their
attributes follow the new node where it decides them differently); the others are re-scored,
per set of split targets, and those below their feed's accept threshold are queued for review
(reason ``remap``). The page is then saved in one transaction, with each mapping as it was.
"""

from __future__ import annotations

import json
from collections import Counter
from dataclasses import dataclass, field
from typing import Any

from catmap.jobs._remap_record import ITEM_COLUMNS, PREVIOUS_COLUMNS, RemapReport
from catmap.jobs._remap_scoring import AttributeFollower, RemapScorer
from catmap.records import Product
from catmap.store import Store, product_from_json
from catmap.tree.diff import Correspondence, moves_as_is
from catmap.tree.taxonomy import CategoryTree

# Used only when neither the option nor an onboarding run gives a threshold: a mapping right
# nine times in ten is the usual bar for publishing without a look (common practice, no source).
DEFAULT_MIN_CONFIDENCE = 0.9
ALTERNATIVES = 3

# Re-scoring groups: the split's target leaves, or None for the whole new tree.
_Targets = tuple[str, ...] | None


def remap_group_key(old_tree: CategoryTree, old_id: str) -> str:
    """Return the review group of products re-queued from an old node."""
    path = old_tree.path_text(old_id) if old_id in old_tree else ""
    return f"remap {old_id}: {path}" if path else f"remap {old_id}"


@dataclass
class _Page:
    """A page of mappings as sorted: what is saved, what still needs a look."""

    previous: list[tuple[Any, ...]] = field(default_factory=list)
    updates: list[tuple[Any, ...]] = field(default_factory=list)
    to_score: dict[_Targets, list[dict[str, Any]]] = field(default_factory=dict)
    # One-to-one moves whose new node decides the attributes differently: (row, changed, node).
    to_follow: list[tuple[dict[str, Any], dict[str, Any], str]] = field(default_factory=list)
    queued: list[dict[str, Any]] = field(default_factory=list)


@dataclass
class PageRemapper:
    """Moves pages of stored mappings onto the new tree and tallies the report.

    Attributes:
        store: the project store.
        remap_id: the remap the pages belong to.
        by_old: the crosswalk, by old node id.
        old_tree: the tree the mappings come from.
        new_tree: the tree they move to.
        scorer: re-scores products that cannot move one-to-one.
        follower: makes node-decided attributes follow the new node.
        thresholds: accept threshold and its origin, per feed id.
        report: the remap's report, updated page by page.
        before: products per department of the old tree.
        after: products per department of the new tree.
        groups: products queued per review group.
    """

    store: Store
    remap_id: int
    by_old: dict[str, Correspondence]
    old_tree: CategoryTree
    new_tree: CategoryTree
    scorer: RemapScorer
    follower: AttributeFollower
    thresholds: dict[int, tuple[float, str]]
    report: RemapReport
    before: Counter[str] = field(default_factory=Counter)
    after: Counter[str] = field(default_factory=Counter)
    groups: Counter[str] = field(default_factory=Counter)

    def remap(self, batch: list[dict[str, Any]]) -> None:
        """Move one page of mappings onto the new tree and save it."""
        page = _Page()
        for row in batch:
            self._sort(row, page)
        self._follow(page)
        for targets, rows in page.to_score.items():
            self._rescore(targets, rows, page)
        self._save(page)

    def _sort(self, row: dict[str, Any], page: _Page) -> None:
        """Move a one-to-one row now; put any other row aside for re-scoring."""
        new_version = str(self.new_tree.version)
        report = self.report
        node = row["node_id"]
        page.previous.append(
            (self.remap_id, row["feed_id"], row["product_id"], *(row[c] for c in PREVIOUS_COLUMNS))
        )
        report.mappings += 1
        if not node:
            # "No node fits": nothing to translate.
            page.updates.append(
                _update(row, node, row["confidence"], row["method"], row, new_version)
            )
            report.unchanged += 1
            return
        corr = self.by_old.get(node)
        if corr is None or node not in self.old_tree:
            report.not_in_old_tree += 1
            self.before["(not in the old tree)"] += 1
            page.to_score.setdefault(None, []).append(row)
            row["_kind"] = "not_in_old_tree"
            return
        self.before[self.old_tree.department(node).name] += 1
        kind = _change_kind(corr)
        row["_kind"] = kind
        counts = report.by_change.setdefault(
            kind, {"products": 0, "automatic": 0, "rescored": 0, "requeued": 0}
        )
        counts["products"] += 1
        per_node = self._node_entry(node, corr)
        if moves_as_is(corr) and corr.new_ids[0] in self.new_tree:
            self._move(row, corr, page)
            counts["automatic"] += 1
            per_node["moved"] += 1
            return
        targets = tuple(t for t in corr.new_ids if t in self.new_tree and self.new_tree.is_leaf(t))
        key = targets if "split" in corr.changes and len(targets) >= 2 else None
        page.to_score.setdefault(key, []).append(row)

    def _node_entry(self, old_id: str, corr: Correspondence) -> dict[str, Any]:
        """The report's line for one changed old node (unchanged nodes get none)."""
        if corr.changes == ("unchanged",):
            return {"moved": 0, "rescored": 0, "queued": 0}
        entry = self.report.nodes.get(old_id)
        if entry is None:
            entry = {
                "old_id": old_id,
                "old_path": self.old_tree.path_text(old_id) if old_id in self.old_tree else "",
                "new_ids": list(corr.new_ids),
                "new_paths": [
                    self.new_tree.path_text(n) for n in corr.new_ids if n in self.new_tree
                ],
                "change": _change_kind(corr),
                "source": corr.source,
                "confidence": corr.confidence,
                "evidence": corr.evidence,
                "moved": 0,
                "rescored": 0,
                "queued": 0,
            }
            self.report.nodes[old_id] = entry
        return entry

    def _move(self, row: dict[str, Any], corr: Correspondence, page: _Page) -> None:
        """Translate a one-to-one row's node id; its confidence, method and status stay."""
        new_id = corr.new_ids[0]
        changed = dict(row)
        changed["alternatives"] = _translate_alternatives(row["alternatives"], self.by_old, new_id)
        if self.follower.changes(row["node_id"], new_id):
            page.to_follow.append((row, changed, new_id))
        else:
            page.updates.append(
                _update(
                    row, new_id, row["confidence"], row["method"], changed,
                    str(self.new_tree.version),
                )
            )
        self.after[self.new_tree.department(new_id).name] += 1
        if corr.changes == ("unchanged",):
            self.report.unchanged += 1
        else:
            self.report.moved_automatically += 1
            if row["status"] == "reviewed":
                self.report.reviewed_kept += 1

    def _follow(self, page: _Page) -> None:
        """Read the attributes of the moved products whose new node decides them differently."""
        if not page.to_follow:
            return
        followed = _products(self.store, [row for row, _c, _n in page.to_follow])
        for (row, changed, new_id), product in zip(page.to_follow, followed, strict=True):
            self.follower.follow(changed, product, new_id)
            page.updates.append(
                _update(
                    row, new_id, row["confidence"], row["method"], changed,
                    str(self.new_tree.version),
                )
            )

    def _rescore(self, targets: _Targets, rows: list[dict[str, Any]], page: _Page) -> None:
        """Score rows over the split's targets (or the whole new tree) and decide each."""
        products = _products(self.store, rows)
        scored = self.scorer.score(products, list(targets) if targets is not None else None)
        for row, ranking, product in zip(rows, scored, products, strict=True):
            self.report.rescored += 1
            change_counts = self.report.by_change.get(row["_kind"])
            if change_counts is not None:
                change_counts["rescored"] += 1
            per_node = self.report.nodes.get(row["node_id"])
            if per_node is not None:
                per_node["rescored"] += 1
            self._decide_rescored(row, ranking, product, targets, change_counts, page)

    def _decide_rescored(
        self,
        row: dict[str, Any],
        ranking: list[tuple[str, float]],
        product: Product,
        targets: _Targets,
        change_counts: dict[str, int] | None,
        page: _Page,
    ) -> None:
        """Accept a re-scored row that reaches its feed's threshold; queue it otherwise."""
        if not ranking:
            fallback = self.by_old.get(row["node_id"])
            ranking = [(fallback.new_ids[0], 0.0)] if fallback and fallback.new_ids else []
        new_id, probability = ranking[0] if ranking else ("", 0.0)
        prior = (
            1.0
            if row["status"] == "reviewed" or row["method"] == "rule"
            else float(row["confidence"])
        )
        confidence = prior * probability if targets is not None else probability
        changed = dict(row)
        changed["alternatives"] = json.dumps(
            [[n, round(p, 4)] for n, p in ranking[1 : 1 + ALTERNATIVES]],
            separators=(",", ":"),
        )
        old_tree = self.old_tree
        old_path = old_tree.path_text(row["node_id"]) if row["node_id"] in old_tree else ""
        changed["reason"] = f"remap from {row['node_id']} {old_path}".strip()
        threshold = self.thresholds.get(row["feed_id"], (DEFAULT_MIN_CONFIDENCE, "default"))[0]
        passes = bool(new_id) and _acceptance_score(self.scorer.method, confidence) >= threshold
        if passes:
            changed["status"] = "accepted" if row["status"] != "audit" else "audit"
        else:
            self.report.requeued += 1
            if change_counts is not None:
                change_counts["requeued"] += 1
            per_node = self.report.nodes.get(row["node_id"])
            if per_node is not None:
                per_node["queued"] += 1
            group = remap_group_key(old_tree, row["node_id"])
            changed["status"] = "queued"
            changed["group_key"] = group
            self.groups[group] += 1
            page.queued.append(
                {
                    "feed_id": row["feed_id"],
                    "product_id": row["product_id"],
                    "key": group,
                    "priority": 1.0 - confidence,
                }
            )
        if self.scorer.new_model is not None:
            changed["model_version"] = self.scorer.model_version
        if self.follower.changes(row["node_id"], new_id):
            self.follower.follow(changed, product, new_id)
        page.updates.append(
            _update(
                row, new_id, confidence, self.scorer.method, changed, str(self.new_tree.version)
            )
        )
        if new_id:
            self.after[self.new_tree.department(new_id).name] += 1
        else:
            self.after["(no node)"] += 1

    def _save(self, page: _Page) -> None:
        """Save the page in one transaction: previous columns, new mappings, queued items."""
        with self.store._transaction() as conn:
            conn.executemany(
                "INSERT OR IGNORE INTO remap_previous (remap_id, feed_id, product_id, "
                + ", ".join(PREVIOUS_COLUMNS)
                + ") VALUES (?, ?, ?, "
                + ", ".join("?" for _ in PREVIOUS_COLUMNS)
                + ")",
                page.previous,
            )
            conn.executemany(
                "UPDATE mappings SET node_id = ?, confidence = ?, method = ?, alternatives = ?, "
                "reason = ?, model_version = ?, tree_version = ?, status = ?, group_key = ?, "
                "who = ?, age = ?, audience_evidence = ?, audience_conflict = ?, restriction = ? "
                "WHERE feed_id = ? AND product_id = ?",
                page.updates,
            )
            for entry in page.queued:
                _queue(self.store, conn, self.remap_id, entry)


def _change_kind(corr: Correspondence) -> str:
    return "+".join(corr.changes)


def _one_to_one(corr: Correspondence) -> bool:
    return (
        len(corr.new_ids) == 1
        and "split" not in corr.changes
        and "removed" not in corr.changes
        and "added" not in corr.changes
    )


def _acceptance_score(method: str, confidence: float) -> float:
    # As onboarding: a rule is the team's own decision, a backed-off inner node never passes.
    if method == "rule":
        return 1.0
    if method == "backoff":
        return 0.0
    return confidence


def _translate_alternatives(text: str, crosswalk: dict[str, Correspondence], chosen: str) -> str:
    alternatives = json.loads(text)
    kept: list[list[Any]] = []
    seen = {chosen}
    for node, confidence in alternatives:
        corr = crosswalk.get(str(node))
        if corr is None or not _one_to_one(corr):
            continue
        new_id = corr.new_ids[0]
        if new_id not in seen:
            seen.add(new_id)
            kept.append([new_id, confidence])
    return json.dumps(kept, ensure_ascii=False, separators=(",", ":")) if kept else "[]"


def _update(
    row: dict[str, Any],
    node: str,
    confidence: float,
    method: str,
    changed: dict[str, Any],
    new_version: str,
) -> tuple[Any, ...]:
    return (
        node,
        confidence,
        method,
        changed["alternatives"],
        changed["reason"],
        changed["model_version"],
        new_version,
        changed["status"],
        changed["group_key"],
        changed["who"],
        changed["age"],
        changed["audience_evidence"],
        changed["audience_conflict"],
        changed["restriction"],
        row["feed_id"],
        row["product_id"],
    )


def _products(store: Store, rows: list[dict[str, Any]]) -> list[Product]:
    found: dict[tuple[int, str], Product] = {}
    by_feed: dict[int, list[str]] = {}
    for row in rows:
        by_feed.setdefault(row["feed_id"], []).append(row["product_id"])
    for feed_id, ids in by_feed.items():
        for start in range(0, len(ids), 500):
            part = ids[start : start + 500]
            marks = ", ".join("?" for _ in part)
            for r in store._read(
                f"SELECT product_id, data FROM products WHERE feed_id = ? AND product_id IN "
                f"({marks})",
                (feed_id, *part),
            ).fetchall():
                found[(feed_id, r["product_id"])] = product_from_json(r["data"])
    return [found[(r["feed_id"], r["product_id"])] for r in rows]


def _queue(store: Store, conn: Any, remap_id: int, entry: dict[str, Any]) -> None:
    """Queue one product for review (reason ``remap``), remembering the item as it was."""
    feed_id, product_id = entry["feed_id"], entry["product_id"]
    busy = conn.execute(
        "SELECT 1 FROM review_items WHERE feed_id = ? AND product_id = ? "
        "AND state != 'done' AND reason != 'remap'",
        (feed_id, product_id),
    ).fetchone()
    if busy is not None:
        return  # already waiting for a reviewer, who will see the new suggestion
    existing = conn.execute(
        "SELECT * FROM review_items WHERE feed_id = ? AND product_id = ? AND reason = 'remap'",
        (feed_id, product_id),
    ).fetchone()
    if existing is None:
        cursor = conn.execute(
            "INSERT INTO review_items (feed_id, product_id, group_key, reason, priority, "
            "created_at) VALUES (?, ?, ?, 'remap', ?, ?)",
            (feed_id, product_id, entry["key"], entry["priority"], store._now()),
        )
        conn.execute(
            "INSERT OR IGNORE INTO remap_items (item_id, remap_id, before) VALUES (?, ?, NULL)",
            (int(cursor.lastrowid or 0), remap_id),
        )
        return
    saved = {c: existing[c] for c in ITEM_COLUMNS}
    conn.execute(
        "INSERT OR IGNORE INTO remap_items (item_id, remap_id, before) VALUES (?, ?, ?)",
        (existing["id"], remap_id, json.dumps(saved)),
    )
    conn.execute(
        "UPDATE review_items SET group_key = ?, priority = ?, state = 'open', claimed_by = NULL, "
        "lease_until = NULL, skips = 0 WHERE id = ?",
        (entry["key"], entry["priority"], existing["id"]),
    )
