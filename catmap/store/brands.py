"""The project's brand registry, kept between runs as plain records.

One row per canonical brand (table ``brand_registry``, schema version 9) holds its whole record
as JSON (the plain data of :meth:`catmap.attributes.registry.RegistryBrand.to_dict`; the store
does not read inside it), and one row per feed (``feed_brands``) the brands that feed showed on
its last onboarding. :meth:`BrandsMixin.change_brand_records` saves a feed's brands, reads
everything, lets the caller change the project's records and writes every row back inside one
write transaction, so two runs merging at once never lose each other's brands and a killed run
leaves the registry as it was. :meth:`BrandsMixin.settle_brand` does the same for a person's
verdict on one brand (confirmed, rejected as no brand, or set back to a candidate) and brings
the products that carry the brand in line, in that transaction.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import Any, TypeVar

from catmap.errors import StoreError
from catmap.store.audit import AuditMixin
from catmap.store.brand_items import ensure_brand_item, feed_brand_priority, settle_brand_items
from catmap.store.records import BRAND_VERDICT_ACTIONS, BRAND_VERDICTS, BrandVerdict

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

    def settle_brand(
        self,
        decide: Callable[[BrandRecords, list[str]], tuple[BrandRecords, BrandVerdict]],
        *,
        actor: str,
        item_id: int | None = None,
        candidate_mark: str = "",
        rejected_evidence: Callable[[BrandVerdict], str] | None = None,
        taking_back: int | None = None,
        claim_items_for: str | None = None,
        lease_seconds: float = 600,
    ) -> BrandVerdict:
        """Apply a person's verdict on a brand: its registry record, its products and its review
        items (audited).

        In one write transaction: ``decide`` gets the project's brand records and the brand
        values products carry as candidates or confirmed, and returns the new records and the
        verdict naming the brand's spellings. The products with one of those values then
        change:

        - ``confirmed``: its candidates become ``confirmed`` (``candidate_mark`` taken off the
          end of their evidence);
        - ``rejected``: its candidates lose the brand (status ``none``, evidence
          ``rejected_evidence``); what each held is kept for a later reset;
        - ``candidate`` (set back): its confirmed products are candidates again (the mark
          put back), and the products the brand's last rejection took it from get it back,
          those still as the rejection left them.

        A brand a reviewer set on a product (``corrected``) is left alone, and so is a brand
        of the dictionary (``dictionary``).

        The brand's ``brand_candidate`` review items (:mod:`catmap.store.brand_items`) follow:
        a confirmation or rejection settles them (the reason comes off; an item queued for
        nothing else is closed, withdrawn with the verdict as its reason); setting the brand
        back places one again in each feed whose products carry it as a candidate, the item
        the verdict settled first. The audit entry lists them (``items``).

        Args:
            decide: see above.
            actor: who decides (the audit log's actor).
            item_id: the review item the verdict was given on, if any.
            candidate_mark: the mark that ends a candidate brand's evidence.
            rejected_evidence: the evidence of a product whose brand was rejected, from the
                verdict (default: "rejected as no brand").
            taking_back: the audit entry of the verdict this one takes back (the review
                screen's undo): refused when another verdict on the brand came after it.
            claim_items_for: a reviewer who gets the items brought back claimed (the review
                screen's undo puts the item back on screen).
            lease_seconds: the lease of those claims.

        Returns:
            The verdict, with the number of products changed and its audit entry.

        Raises:
            ValueError: the verdict's status is not one of :data:`BRAND_VERDICTS`.
            StoreError: ``taking_back`` is not the brand's last verdict (someone settled the
                brand since); nothing is changed.
        """
        with self._transaction() as conn:
            rows = conn.execute("SELECT data FROM brand_registry ORDER BY position").fetchall()
            values = [
                r[0] for r in conn.execute(
                    "SELECT DISTINCT brand FROM mappings "
                    "WHERE brand_status IN ('candidate', 'confirmed')"
                )
            ]  # fmt: skip
            records, verdict = decide([json.loads(r[0]) for r in rows], values)
            if verdict.status not in BRAND_VERDICTS:
                raise ValueError(
                    f"unknown brand verdict {verdict.status!r}; expected one of {BRAND_VERDICTS}"
                )
            spellings = list(dict.fromkeys(verdict.spellings))
            last = _last_verdict(conn, [verdict.name, *spellings])
            if taking_back is not None and (last is None or last["id"] != taking_back):
                raise StoreError(
                    f"the brand '{verdict.name}' was "
                    + (
                        f"{_VERDICT_WORDS[last['action']]} by {last['actor']} at {last['at']} "
                        "since"
                        if last is not None else "not settled by that verdict"
                    )
                    + "; nothing was changed",
                    hint="see `catmap brands list`; set the brand as you want it with "
                    "`catmap brands confirm / reject / reset NAME`",
                )  # fmt: skip
            self._write_brand_records(conn, records)
            evidence = (
                rejected_evidence(verdict) if rejected_evidence is not None
                else "rejected as no brand"
            )  # fmt: skip
            changed = 0
            if verdict.status == "candidate" and last is not None and (
                last["action"] == "brand_rejected"
            ):
                changed += _give_back(conn, last)
            taken: list[tuple[Any, ...]] = []
            # In slices: SQLite caps the parameters of one statement.
            for start in range(0, len(spellings), 500):
                part = spellings[start:start + 500]
                marks = ", ".join("?" * len(part))
                if verdict.status == "confirmed":
                    cursor = conn.execute(
                        "UPDATE mappings SET brand_status = 'confirmed', brand_evidence = "
                        "CASE WHEN ? != '' AND substr(brand_evidence, -length(?)) = ? "
                        "THEN rtrim(substr(brand_evidence, 1, length(brand_evidence) - length(?))) "
                        "ELSE brand_evidence END "
                        f"WHERE brand_status = 'candidate' AND brand IN ({marks})",
                        [candidate_mark] * 4 + part,
                    )
                elif verdict.status == "candidate":
                    cursor = conn.execute(
                        "UPDATE mappings SET brand_status = 'candidate', brand_evidence = "
                        "CASE WHEN ? = '' OR substr(brand_evidence, -length(?)) = ? "
                        "THEN brand_evidence ELSE brand_evidence || ' ' || ? END "
                        f"WHERE brand_status = 'confirmed' AND brand IN ({marks})",
                        [candidate_mark] * 4 + part,
                    )
                else:
                    taken.extend(
                        tuple(r) for r in conn.execute(
                            "SELECT feed_id, product_id, brand, brand_confidence, "
                            "brand_evidence FROM mappings "
                            f"WHERE brand_status = 'candidate' AND brand IN ({marks})",
                            part,
                        )
                    )  # fmt: skip
                    cursor = conn.execute(
                        "UPDATE mappings SET brand = '', brand_confidence = 0, "
                        "brand_status = 'none', brand_evidence = ? "
                        f"WHERE brand_status = 'candidate' AND brand IN ({marks})",
                        [evidence, *part],
                    )
                changed += cursor.rowcount
            items = _brand_items_after(
                conn, verdict, spellings, actor, self._now(),
                claim_items_for, self._lease_until(lease_seconds),
            )  # fmt: skip
            detail: dict[str, Any] = {
                "brand": verdict.name, "asked": verdict.asked, "was": verdict.was,
                "products": changed,
            }  # fmt: skip
            if items:
                detail["items"] = items
            if verdict.status == "rejected":
                detail["evidence"] = evidence
            audit_id = self._audit(
                conn, BRAND_VERDICT_ACTIONS[verdict.status], actor, item_id=item_id,
                detail=detail,
            )  # fmt: skip
            conn.executemany(
                "INSERT INTO brand_rejected_products (audit_id, feed_id, product_id, brand, "
                "brand_confidence, brand_evidence) VALUES (?, ?, ?, ?, ?, ?)",
                [(audit_id, *row) for row in taken],
            )
            verdict = replace(
                verdict, products=changed, audit_id=audit_id, items=tuple(items)
            )
        return verdict

    def brand_example_titles(self, spellings: Sequence[str], *, limit: int = 2) -> list[str]:
        """Return up to ``limit`` titles of products that carry one of these brand values (or
        carried it before a rejection took it away), distinct, in stored order; short of
        those, titles that hold the first spellings (a name seen only inside a longer one)."""
        spellings = list(dict.fromkeys(spellings))[:500]
        if not spellings or limit <= 0:
            return []
        marks = ", ".join("?" * len(spellings))
        rows = self._read(
            "SELECT p.title FROM mappings AS m JOIN products AS p "
            "ON p.feed_id = m.feed_id AND p.product_id = m.product_id "
            "WHERE m.brand_status IN ('candidate', 'confirmed', 'dictionary', 'corrected') "
            f"AND m.brand IN ({marks}) "
            "UNION ALL SELECT p.title FROM brand_rejected_products AS r JOIN products AS p "
            "ON p.feed_id = r.feed_id AND p.product_id = r.product_id "
            f"WHERE r.brand IN ({marks}) LIMIT ?",
            [*spellings, *spellings, limit * 4],
        ).fetchall()
        titles = list(dict.fromkeys(r[0] for r in rows))
        for spelling in spellings[:3]:
            if len(titles) >= limit:
                break
            pattern = spelling.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")
            titles.extend(
                r[0] for r in self._read(
                    "SELECT title FROM products WHERE title LIKE ? ESCAPE '\\' LIMIT ?",
                    (f"%{pattern}%", limit * 2),
                ).fetchall()
            )  # fmt: skip
            titles = list(dict.fromkeys(titles))
        return titles[:limit]

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


def _brand_items_after(
    conn: sqlite3.Connection,
    verdict: BrandVerdict,
    spellings: Sequence[str],
    actor: str,
    now: str,
    claim_for: str | None,
    lease_until: str,
) -> list[int]:
    """Settle the brand's review items (confirmed, rejected) or place them again (candidate);
    return the ids of the items changed."""
    names = [verdict.name, *spellings]
    if verdict.status != "candidate":
        words = _VERDICT_WORDS[BRAND_VERDICT_ACTIONS[verdict.status]]
        why = f"brand '{verdict.name}' {words} by {actor}"
        return settle_brand_items(conn, names, why)
    items: list[int] = []
    feeds = sorted(
        {
            int(r[0])
            for start in range(0, len(names), 500)
            for r in conn.execute(
                "SELECT DISTINCT feed_id FROM mappings WHERE brand_status = 'candidate' "
                f"AND brand IN ({', '.join('?' * len(names[start:start + 500]))})",
                names[start:start + 500],
            )
        }
    )  # fmt: skip
    for feed_id in feeds:
        item_id, changed = ensure_brand_item(
            conn, feed_id, verdict.name, spellings, priority=feed_brand_priority(conn, feed_id),
            now=now, claim_for=claim_for, lease_until=lease_until,
        )  # fmt: skip
        if item_id is not None and changed:
            items.append(item_id)
    return items


_VERDICT_WORDS = {"brand_confirmed": "confirmed", "brand_rejected": "rejected as no brand",
                  "brand_reset": "set back to a candidate"}


def _last_verdict(conn: sqlite3.Connection, names: Sequence[str]) -> sqlite3.Row | None:
    """The latest verdict on a brand known by any of these names that changed its status
    (None: never settled); a verdict repeated on a brand already so changed nothing."""
    names = list(dict.fromkeys(names))
    found: sqlite3.Row | None = None
    for start in range(0, len(names), 500):
        part = names[start:start + 500]
        row = conn.execute(
            "SELECT id, at, actor, action, detail FROM audit_log "
            "WHERE action IN ('brand_confirmed', 'brand_rejected', 'brand_reset') "
            f"AND json_extract(detail, '$.brand') IN ({', '.join('?' * len(part))}) "
            "AND json_extract(detail, '$.was') IS NOT CASE action "
            "WHEN 'brand_confirmed' THEN 'confirmed' WHEN 'brand_rejected' THEN 'rejected' "
            "ELSE 'candidate' END ORDER BY id DESC LIMIT 1",
            part,
        ).fetchone()
        if row is not None and (found is None or row["id"] > found["id"]):
            found = row
    return found


def _give_back(conn: sqlite3.Connection, rejection: sqlite3.Row) -> int:
    """Give the products a rejection took the brand from their brand back, as candidates; a
    product changed since (a reviewer set its brand, a new onboarding) is left as it is.
    Returns how many got it back."""
    evidence = json.loads(rejection["detail"]).get("evidence", "")
    cursor = conn.execute(
        "UPDATE mappings SET brand = r.brand, brand_confidence = r.brand_confidence, "
        "brand_evidence = r.brand_evidence, brand_status = 'candidate' "
        "FROM brand_rejected_products AS r WHERE r.audit_id = ? "
        "AND mappings.feed_id = r.feed_id AND mappings.product_id = r.product_id "
        "AND mappings.brand = '' AND mappings.brand_status = 'none' "
        "AND mappings.brand_evidence = ?",
        (rejection["id"], evidence),
    )
    return cursor.rowcount
