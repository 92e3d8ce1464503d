"""The project's brand registry, kept between runs as plain records.

One row per canonical brand (table ``brand_registry``, schema version 9) holds its whole record
as JSON (the plain data of :meth:`catmap.attributes.registry.RegistryBrand.to_dict`; the store
does not read inside it), and one row per feed (``feed_brands``) the brands that feed showed on
its last onboarding. :meth:`BrandsMixin.change_brand_records` saves a feed's brands, reads
everything, lets the caller change the project's records and writes every row back inside one
write transaction, so two runs merging at once never lose each other's brands and a killed run
leaves the registry as it was. :meth:`BrandsMixin.settle_brand` does the same for a person's
verdict on one brand (confirmed, or rejected as no brand) and brings the products that carry
the brand as a candidate in line, in that transaction.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import Any, TypeVar

from catmap.store.audit import AuditMixin
from catmap.store.records import BRAND_VERDICTS, BrandVerdict

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
    ) -> BrandVerdict:
        """Apply a person's verdict on a brand: its registry record and its products (audited).

        In one write transaction: ``decide`` gets the project's brand records and the brand
        values products carry as candidates (``brand_status = 'candidate'``), and returns the
        new records and the verdict naming the values that are the brand. The products with
        one of those values as a candidate then change: a confirmed brand's become
        ``confirmed`` (``candidate_mark`` taken off the end of their evidence); a rejected
        brand's lose the brand (status ``none``, evidence ``rejected_evidence``). A brand a
        reviewer set on a product (``corrected``) is left alone.

        Args:
            decide: see above.
            actor: who decides (the audit log's actor).
            item_id: the review item the verdict was given on, if any.
            candidate_mark: the mark that ends a candidate brand's evidence.
            rejected_evidence: the evidence of a product whose brand was rejected, from the
                verdict (default: "rejected as no brand").

        Returns:
            The verdict, with the number of products changed.

        Raises:
            ValueError: the verdict's status is not one of :data:`BRAND_VERDICTS`.
        """
        with self._transaction() as conn:
            rows = conn.execute("SELECT data FROM brand_registry ORDER BY position").fetchall()
            values = [
                r[0] for r in conn.execute(
                    "SELECT DISTINCT brand FROM mappings WHERE brand_status = 'candidate'"
                )
            ]  # fmt: skip
            records, verdict = decide([json.loads(r[0]) for r in rows], values)
            if verdict.status not in BRAND_VERDICTS:
                raise ValueError(
                    f"unknown brand verdict {verdict.status!r}; expected one of {BRAND_VERDICTS}"
                )
            self._write_brand_records(conn, records)
            spellings = list(dict.fromkeys(verdict.spellings))
            changed = 0
            evidence = (
                rejected_evidence(verdict) if rejected_evidence is not None
                else "rejected as no brand"
            )  # fmt: skip
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
                else:
                    cursor = conn.execute(
                        "UPDATE mappings SET brand = '', brand_confidence = 0, "
                        "brand_status = 'none', brand_evidence = ? "
                        f"WHERE brand_status = 'candidate' AND brand IN ({marks})",
                        [evidence, *part],
                    )
                changed += cursor.rowcount
            verdict = replace(verdict, products=changed)
            self._audit(
                conn, f"brand_{verdict.status}", actor, item_id=item_id,
                detail={"brand": verdict.name, "asked": verdict.asked, "was": verdict.was,
                        "products": changed},
            )  # fmt: skip
        return verdict

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
