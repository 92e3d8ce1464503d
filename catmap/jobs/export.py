"""Export an onboarded feed from the project store: the enriched products, rejects, accounting.

One row per product: its fields, the node (id and path), confidence, method, status
(``accepted`` / ``reviewed`` / ``queued``), and the attributes (brand and how far it is
trusted, :data:`catmap.records.BRAND_STATUSES`; who, age, colour family, restriction flag).
Beside it: the feed's rejects from its last onboarding run and that run's row accounting. CSV
cells are made safe against formula injection (:mod:`catmap.feeds.writers`).
"""

from __future__ import annotations

import json
import shutil
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from catmap._atomic import AtomicFile, atomic_path, write_text_atomic
from catmap.attributes import RESTRICTION_CAUTION
from catmap.feeds.writers import FORMATS, CsvWriter, JsonLinesWriter, RecordWriter
from catmap.jobs._project_tree import check_store_tree
from catmap.jobs._remap_versions import project_store_tree, tree_by_version
from catmap.jobs.onboard import rejects_path
from catmap.records import Product
from catmap.store import Store, StoredMapping, store_path
from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "EXPORT_COLUMNS",
    "ExportResult",
    "export_feed",
    "export_project",
    "export_row",
    "export_status",
    "NO_FIT",
    "NO_RESTRICTION",
]

EXPORT_COLUMNS = (
    "product_id",
    "title",
    "brand",
    "price",
    "currency",
    "gtin",
    "availability",
    "url",
    "image_url",
    "retailer_path",
    "node_id",
    "node_path",
    "confidence",
    "method",
    "status",
    "extracted_brand",
    "brand_status",
    "who",
    "age",
    "colour_family",
    "restriction",
)


# The status of a product a reviewer said no node fits (it has no node and no confidence).
NO_FIT = "no_fit"
# How an export says "no restriction" (as the review screen does), rather than an empty cell.
NO_RESTRICTION = "none"


def export_status(stored_status: str, node_id: str = "-") -> str:
    """Return the status users see.

    An audit sample not yet reviewed is still ``accepted``; a reviewed product without a node is
    ``no_fit`` (a reviewer said no node fits).
    """
    if stored_status == "reviewed" and not node_id:
        return NO_FIT
    return {"audit": "accepted"}.get(stored_status, stored_status)


def export_row(product: Product, stored: StoredMapping, tree: CategoryTree) -> dict[str, Any]:
    """Return one export row (plain values, in :data:`EXPORT_COLUMNS` order).

    A "no fit" product has an empty node, status ``no_fit`` and no confidence (there is no node
    to be sure of).
    """
    node_id = stored.mapping.node_id
    path = tree.path_text(node_id) if node_id and node_id in tree else ""
    attributes = stored.attributes
    status = export_status(stored.status, node_id)
    return {
        "product_id": product.product_id,
        "title": product.title,
        "brand": product.brand,
        "price": str(product.price) if product.price is not None else None,
        "currency": product.currency,
        "gtin": product.gtin,
        "availability": product.availability,
        "url": product.url,
        "image_url": product.image_url,
        "retailer_path": " > ".join(product.category_path),
        "node_id": node_id,
        "node_path": path,
        "confidence": None if status == NO_FIT else round(stored.mapping.confidence, 4),
        "method": stored.mapping.method,
        "status": status,
        "extracted_brand": attributes.brand,
        "brand_status": attributes.brand_status,
        "who": attributes.who,
        "age": attributes.age,
        "colour_family": attributes.colour_family,
        "restriction": attributes.restriction or NO_RESTRICTION,
    }


def _csv_cells(row: dict[str, Any]) -> list[str]:
    return ["" if row[c] is None else str(row[c]) for c in EXPORT_COLUMNS]


class _ParquetRows(RecordWriter):
    """Export rows to Parquet, every column as text except confidence (one row group per 50k)."""

    def __init__(self, path: Path, batch: int = 50_000) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        self._pa = pa
        self.path = path
        self.count = 0
        self._batch = batch
        self._rows: list[dict[str, Any]] = []
        fields = [(c, pa.float64() if c == "confidence" else pa.string()) for c in EXPORT_COLUMNS]
        self._schema = pa.schema(fields)
        self._target = AtomicFile(path)
        self._writer: Any = pq.ParquetWriter(str(self._target.temporary), self._schema)

    def write(self, record: Any) -> None:
        self._rows.append(record)
        self.count += 1
        if len(self._rows) >= self._batch:
            self._flush()

    def _flush(self) -> None:
        if self._rows:
            self._writer.write_table(self._pa.Table.from_pylist(self._rows, schema=self._schema))
            self._rows = []

    def close(self) -> None:
        if self._writer is not None:
            self._flush()
            self._writer.close()
            self._writer = None
            self._target.commit()


def _open_writer(path: Path, format: str) -> RecordWriter:
    if format == "csv":
        return CsvWriter(path, EXPORT_COLUMNS, _csv_cells)
    if format == "jsonl":
        return JsonLinesWriter(path, lambda row: row)
    return _ParquetRows(path)


@dataclass
class ExportResult:
    """What :func:`export_feed` wrote for one feed."""

    feed: str
    products: Path
    rejects: Path | None
    accounting: Path
    rows: int = 0
    tree_version: str = ""
    by_status: dict[str, int] = field(default_factory=dict)
    restricted: dict[str, int] = field(default_factory=dict)
    caution: str = ""

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return {
            "feed": self.feed,
            "products": str(self.products),
            "rejects": str(self.rejects) if self.rejects else None,
            "accounting": str(self.accounting),
            "tree_version": self.tree_version,
            "rows": self.rows,
            "by_status": self.by_status,
            "restricted": self.restricted,
            "caution": self.caution,
        }


def _rows(store: Store, feed: str, tree: CategoryTree) -> Iterator[dict[str, Any]]:
    # Each path is read on the tree of its own mapping's version, never on another's.
    tree_of = tree_by_version(tree)
    for product, stored in store.mappings(feed):
        yield export_row(product, stored, tree_of(stored.tree_version))


def _last_accounting(store: Store, feed: str) -> dict[str, Any]:
    for run in reversed(store.runs(feed)):
        if run.kind == "onboard" and run.finished_at and "read" in run.summary:
            keys = ("read", "kept", "rejected", "by_reason", "stopped_early")
            facts = {key: run.summary.get(key) for key in keys}
            facts.update(run_id=run.id, finished_at=run.finished_at, status=run.status)
            return facts
    return {}


def _write_rejects(source: Path, target: Path, format: str) -> Path:
    if format != "csv":
        with atomic_path(target) as temporary:
            shutil.copyfile(source, temporary)
        return target
    from catmap.feeds.writers import REJECT_COLUMNS

    with (
        source.open(encoding="utf-8") as lines,
        CsvWriter(target, REJECT_COLUMNS, lambda r: [str(r.get(c, "")) for c in REJECT_COLUMNS])
        as writer,
    ):
        for line in lines:
            if line.strip():
                writer.write(json.loads(line))
    return target


def export_feed(
    store: Store,
    feed: str,
    out_dir: str | Path,
    *,
    tree: CategoryTree,
    project: str | Path,
    format: str = "csv",
) -> ExportResult:
    """Write a feed's enriched products, its rejects and its accounting to ``out_dir``.

    Files: ``<feed>.products.<ext>``, ``<feed>.rejects.<csv|jsonl>`` (when the last run wrote
    rejects) and ``<feed>.accounting.json``.

    Args:
        store: the open project store.
        feed: the feed's name.
        out_dir: the output folder (created).
        tree: the category tree the nodes belong to.
        project: the project folder (where onboarding left the rejects).
        format: ``csv``, ``jsonl`` or ``parquet``.

    Returns:
        What was written.

    Raises:
        ValueError: an unknown format.
        StoreError: no such feed.
    """
    if format not in FORMATS:
        raise ValueError(f"unknown format {format!r}; use one of {', '.join(FORMATS)}")
    store.feed(feed)  # raises StoreError for an unknown feed
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    products_file = out / f"{feed}.products.{format}"
    result = ExportResult(feed, products_file, None, out / f"{feed}.accounting.json")
    result.tree_version = str(tree.version)
    with _open_writer(products_file, format) as writer:
        for row in _rows(store, feed, tree):
            writer.write(row)
            result.rows += 1
            result.by_status[row["status"]] = result.by_status.get(row["status"], 0) + 1
            if row["restriction"] != NO_RESTRICTION:
                flag = row["restriction"]
                result.restricted[flag] = result.restricted.get(flag, 0) + 1
    result.caution = RESTRICTION_CAUTION if result.restricted else ""
    source = rejects_path(project, feed)
    if source.exists():
        suffix = "csv" if format == "csv" else "jsonl"
        result.rejects = _write_rejects(source, out / f"{feed}.rejects.{suffix}", format)
    accounting = _last_accounting(store, feed)
    accounting["rejects_file"] = str(result.rejects) if result.rejects else None
    write_text_atomic(
        result.accounting, json.dumps(accounting, indent=2, ensure_ascii=False) + "\n"
    )
    return result


def export_project(
    project: str | Path, out_dir: str | Path, *, feed: str | None = None, format: str = "csv"
) -> list[ExportResult]:
    """Export one feed, or every feed, of a project's store (see :func:`export_feed`).

    The nodes are read on the tree version of the store's mappings (refused when the store
    mixes versions).

    Args:
        project: the project folder.
        out_dir: the output folder (created).
        feed: only this feed (default: every feed).
        format: ``csv``, ``jsonl`` or ``parquet``.

    Returns:
        What was written, one result per feed.

    Raises:
        TreeVersionMismatch: the store's mappings use more than one tree version.
    """
    with Store.open(store_path(project)) as store:
        tree = project_store_tree(project, store, "export")
        check_store_tree(store, tree)
        names = [feed] if feed else [record.name for record in store.feeds()]
        return [
            export_feed(store, name, out_dir, tree=tree, project=project, format=format)
            for name in names
        ]
