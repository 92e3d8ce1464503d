"""The model follows the tree: after a remap, the settled mappings on the new tree version are
the labelled catalog the next model learns from."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

from catmap._atomic import atomic_open
from catmap.records import Product
from catmap.store import Store, product_from_json
from catmap.tree.taxonomy import CategoryTree

REMAPPED_CATALOG_COLUMNS = (
    "product_id", "title", "description", "brand", "retailer_category", "gold_node", "split",
)


def write_remapped_catalog(store: Store, tree: CategoryTree, path: str | Path) -> int:
    """Write the settled mappings on ``tree``'s version as a labelled CSV feed for training.

    This is how the model follows the tree: after a remap, the accepted and reviewed mappings
    of the new version are the labelled catalog ``catmap train --tree-version N`` learns from.
    Columns: :data:`REMAPPED_CATALOG_COLUMNS`; ``split`` is a fixed 90/10 train / valid split by
    a hash of the product id, so a rerun keeps the same validation products. The file is JSON
    Lines, for catmap's own reader: no spreadsheet reads a formula in it, and every value
    (one that starts with ``=`` too) comes back exactly as it was.

    Returns:
        How many products were written.
    """
    import hashlib
    import json

    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    count = 0
    with atomic_open(target, "w", encoding="utf-8", newline="\n") as handle:
        for product, node in remapped_examples(store, tree):
            digest = hashlib.blake2b(product.product_id.encode("utf-8"), digest_size=8).digest()
            split = "valid" if int.from_bytes(digest, "big") % 10 == 0 else "train"
            values = (
                product.product_id,
                product.title,
                product.description,
                product.brand,
                " > ".join(product.category_path),
                node,
                split,
            )
            row = dict(zip(REMAPPED_CATALOG_COLUMNS, values, strict=True))
            handle.write(json.dumps(row, ensure_ascii=False) + "\n")
            count += 1
    return count


def remapped_examples(
    store: Store, tree: CategoryTree, *, statuses: tuple[str, ...] = ("accepted", "reviewed")
) -> Iterator[tuple[Product, str]]:
    """Yield (product, leaf id) for mappings on ``tree``'s version: training data after a remap.

    Only accepted and reviewed mappings on a leaf of ``tree`` are given (queued ones are not
    settled yet). Streams page by page.
    """
    version = str(tree.version)
    marks = ", ".join("?" for _ in statuses)
    last: tuple[int, str] = (-1, "")
    while True:
        rows = store._read(
            "SELECT m.feed_id, m.product_id, m.node_id, p.data FROM mappings AS m "
            "JOIN products AS p USING (feed_id, product_id) "
            f"WHERE m.tree_version = ? AND m.status IN ({marks}) "
            "AND (m.feed_id, m.product_id) > (?, ?) ORDER BY m.feed_id, m.product_id LIMIT 2000",
            (version, *statuses, last[0], last[1]),
        ).fetchall()
        for row in rows:
            node = row["node_id"]
            if node in tree and tree.is_leaf(node):
                yield product_from_json(row["data"]), node
        if len(rows) < 2000:
            return
        last = (rows[-1]["feed_id"], rows[-1]["product_id"])
