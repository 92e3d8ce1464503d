"""Evaluate a labelled feed: read it, map it, extract attributes, compare with the gold labels.

The gold labels are either columns of the feed itself (``gold_node``, ``gold_brand``,
``gold_who``, ``gold_age``) or a separate gold CSV joined by ``product_id``. Mapping is done by
any *mapper*: a function from a list of products to one :class:`~catmap.records.Mapping` each
(the trained model's, in practice), so this module depends on no particular model.

:func:`evaluation_report` is pure: it turns gold labels, mappings and attributes into the
report dictionary (the content of ``metrics.json``) that the terminal summary and the HTML
report are drawn from.
"""

from __future__ import annotations

import csv
import dataclasses
import io
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from catmap.errors import InputError
from catmap.evaluate.metrics import (
    ECE_BINS,
    accuracy,
    brand_scores,
    calibration_bins,
    f1_scores,
    group_accuracy,
    hierarchical_scores,
    label_accuracy,
    per_node_scores,
    risk_coverage,
    top_confusions,
)
from catmap.evaluate.tree import parent_map
from catmap.records import Attributes, Mapping, Product, Reject

if TYPE_CHECKING:
    from catmap.attributes import AttributeExtractor
    from catmap.feeds import Feed
    from catmap.fieldmap import FeedProfile
    from catmap.ingest import Accounting
    from catmap.taxonomy import CategoryTree

__all__ = [
    "GOLD_PREFIX",
    "Gold",
    "Mapper",
    "collect",
    "evaluation_report",
    "gold_from_product",
    "is_gold_column",
    "read_gold_csv",
]

GOLD_PREFIX = "gold_"
DEFAULT_LABEL_COLUMN = "gold_node"
CHUNK_SIZE = 5000
CONFUSIONS_SHOWN = 20
# The risk-coverage curve is stored with at most this many points (plus the last one).
CURVE_POINTS = 200

Mapper = Callable[[Sequence[Product]], Sequence[Mapping]]


@dataclass(frozen=True, slots=True)
class Gold:
    """The gold labels of one product (None where the source has no such column)."""

    node: str
    brand: str | None = None
    who: str | None = None
    age: str | None = None


def is_gold_column(column: str, label_column: str = DEFAULT_LABEL_COLUMN) -> bool:
    """Return True for a column that holds answers, which must never feed the product fields."""
    return column == label_column or column.startswith(GOLD_PREFIX) or column == "split"


def _open_text(path: Path) -> io.TextIOWrapper:
    raw = path.read_bytes()
    if raw[:2] == b"\x1f\x8b":
        import gzip

        raw = gzip.decompress(raw)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(
            "the gold file is not UTF-8 text", path=path, hint="save it as UTF-8 CSV"
        ) from None
    return io.TextIOWrapper(io.BytesIO(text.encode("utf-8")), encoding="utf-8", newline="")


def read_gold_csv(path: str | Path, *, label_column: str = DEFAULT_LABEL_COLUMN) -> dict[str, Gold]:
    """Read a gold label file: ``product_id``, the label column and optional attribute columns.

    Args:
        path: the gold CSV (comma-separated, UTF-8, a header row; gzip allowed).
        label_column: the column with the gold node id.

    Returns:
        product id → gold labels (a later row for the same id is ignored).

    Raises:
        InputError: no such columns, or the file cannot be read.
    """
    file = Path(path)
    try:
        stream = _open_text(file)
    except OSError as error:
        raise InputError(f"cannot read the gold file: {error.strerror}", path=file) from None
    with stream:
        reader = csv.reader(stream)
        header = next(reader, None)
        if header is None:
            raise InputError("the gold file is empty", path=file, hint="it needs a header row")
        names = [h.strip() for h in header]
        for needed in ("product_id", label_column):
            if needed not in names:
                raise InputError(
                    f"the gold file has no '{needed}' column",
                    path=file,
                    line=1,
                    field=needed,
                    hint=f"columns found: {', '.join(names)}; use --label-column to name "
                    "the node column",
                )
        at = {name: k for k, name in enumerate(names)}

        def cell(row: list[str], name: str) -> str | None:
            k = at.get(name)
            if k is None:
                return None
            return row[k].strip() if k < len(row) else ""

        gold: dict[str, Gold] = {}
        for row in reader:
            if not row:
                continue
            product_id = cell(row, "product_id") or ""
            if not product_id or product_id in gold:
                continue
            gold[product_id] = Gold(
                node=cell(row, label_column) or "",
                brand=cell(row, "gold_brand"),
                who=cell(row, "gold_who"),
                age=cell(row, "gold_age"),
            )
    return gold


def gold_from_product(product: Product, label_column: str = DEFAULT_LABEL_COLUMN) -> Gold | None:
    """Return the gold labels a product carries in its own columns (None when it has none)."""
    extra = product.extra
    if label_column not in extra:
        return None
    return Gold(
        node=extra[label_column].strip(),
        brand=extra["gold_brand"].strip() if "gold_brand" in extra else None,
        who=extra["gold_who"].strip() if "gold_who" in extra else None,
        age=extra["gold_age"].strip() if "gold_age" in extra else None,
    )


def profile_without_gold(profile: FeedProfile, label_column: str) -> FeedProfile:
    """Return the profile with any gold column unmapped (answers must not become features)."""
    columns = {
        name: column
        for name, column in profile.columns.items()
        if not is_gold_column(column, label_column)
    }
    return dataclasses.replace(profile, columns=columns)


@dataclass
class Collected:
    """What :func:`collect` gathered from a feed, product by product (same order in each list)."""

    product_ids: list[str] = field(default_factory=list)
    gold: list[Gold] = field(default_factory=list)
    mappings: list[Mapping] = field(default_factory=list)
    attributes: list[Attributes] | None = None
    without_gold: int = 0
    unknown_gold: Counter[str] = field(default_factory=Counter)
    other_split: int = 0
    rejected: int = 0


def _chunks(items: Iterator[Product], size: int) -> Iterator[list[Product]]:
    chunk: list[Product] = []
    for item in items:
        chunk.append(item)
        if len(chunk) >= size:
            yield chunk
            chunk = []
    if chunk:
        yield chunk


def collect(
    products: Iterator[Product | Reject],
    *,
    tree: CategoryTree,
    mapper: Mapper,
    gold: dict[str, Gold] | None = None,
    label_column: str = DEFAULT_LABEL_COLUMN,
    extractor: AttributeExtractor | None = None,
    split: str | None = None,
    chunk_size: int = CHUNK_SIZE,
) -> Collected:
    """Map the products that have a usable gold node and keep what the metrics need.

    Args:
        products: products and rejects, as :func:`catmap.ingest.iter_products` yields them.
        tree: the category tree of the gold labels and the model.
        mapper: maps a chunk of products to one mapping each.
        gold: the gold labels by product id; None to read them from the products' own columns.
        label_column: the column of the gold node in the feed (when ``gold`` is None).
        extractor: extracts attributes for each product at its mapped node; None to skip.
        split: keep only products whose ``split`` column has this value.
        chunk_size: products mapped at a time.

    Returns:
        The gold labels, mappings and attributes of the evaluated products, and the counts of
        products left out (no gold, a gold node not in the tree, another split, rejects).
    """
    out = Collected(attributes=[] if extractor is not None else None)

    def usable() -> Iterator[Product]:
        for item in products:
            if isinstance(item, Reject):
                out.rejected += 1
                continue
            if split is not None and item.extra.get("split", "").strip() != split:
                out.other_split += 1
                continue
            labels = (
                gold.get(item.product_id)
                if gold is not None
                else gold_from_product(item, label_column)
            )
            if labels is None or not labels.node:
                out.without_gold += 1
                continue
            if labels.node not in tree:
                out.unknown_gold[labels.node] += 1
                continue
            out.product_ids.append(item.product_id)
            out.gold.append(labels)
            yield item

    for chunk in _chunks(usable(), chunk_size):
        mappings = list(mapper(chunk))
        if len(mappings) != len(chunk):
            raise ValueError(f"the mapper gave {len(mappings)} mappings for {len(chunk)} products")
        out.mappings.extend(mappings)
        if extractor is not None and out.attributes is not None:
            out.attributes.extend(
                extractor.extract(product, mapping.node_id)
                for product, mapping in zip(chunk, mappings, strict=True)
            )
    return out


def read_labelled_feed(
    feed: Feed,
    profile: FeedProfile,
    accounting: Accounting,
    *,
    label_column: str = DEFAULT_LABEL_COLUMN,
) -> Iterator[Product | Reject]:
    """Stream a labelled feed's products with the gold columns kept out of the product fields."""
    from catmap.ingest import iter_products

    return iter_products(feed, profile_without_gold(profile, label_column), accounting)


# -- the report -----------------------------------------------------------------------------


def _is_under(tree: CategoryTree, answer: str, gold: str) -> bool:
    """True when the gold leaf lies under (or is) the answered node: what confidence claims."""
    if answer == gold:
        return True
    if not answer or answer not in tree:
        return False
    return any(node.id == answer for node in tree.ancestors(gold))


def _thin(
    curve_x: list[float], curve_y: list[float], points: int
) -> tuple[list[float], list[float]]:
    n = len(curve_x)
    if n <= points:
        return curve_x, curve_y
    step = n / points
    picks = sorted({int(k * step) for k in range(points)} | {n - 1})
    return [curve_x[k] for k in picks], [curve_y[k] for k in picks]


def _path(tree: CategoryTree, node_id: str) -> str:
    return tree.path_text(node_id) if node_id in tree else f"(unknown node {node_id})"


def evaluation_report(
    *,
    tree: CategoryTree,
    gold: Sequence[Gold],
    mappings: Sequence[Mapping],
    attributes: Sequence[Attributes] | None = None,
    confusions: int = CONFUSIONS_SHOWN,
) -> dict[str, Any]:
    """Compute every figure of the evaluation and return it as one JSON-ready dictionary.

    Leaf accuracy, F1 scores, per-node scores and confusions compare node ids exactly (an answer
    that backed off to an inner node counts as wrong there); hierarchical scores give it partial
    credit. Calibration (ECE) and the risk-coverage curve count an answer as right when the
    gold leaf lies under the answered node, because that is what its confidence states.

    Args:
        tree: the category tree.
        gold: the gold labels, one per product.
        mappings: the mappings, in the same order.
        attributes: the extracted attributes, in the same order; None to skip them.
        confusions: how many of the most frequent confusions to list.

    Returns:
        The report (see ``metrics.json``).
    """
    if len(gold) != len(mappings):
        raise ValueError("gold labels and mappings differ in length")
    y_true = [g.node for g in gold]
    y_pred = [m.node_id for m in mappings]
    confidence = [min(1.0, max(0.0, float(m.confidence))) for m in mappings]
    right = [_is_under(tree, p, t) for t, p in zip(y_true, y_pred, strict=True)]
    macro, weighted = f1_scores(y_true, y_pred)
    hier = hierarchical_scores(y_true, y_pred, parent_map(tree))
    bins = calibration_bins(confidence, right, bins=ECE_BINS)
    curve = risk_coverage(confidence, right)
    methods = Counter(m.method for m in mappings)
    departments = [tree.department(t).id for t in y_true]
    by_department = group_accuracy(y_true, y_pred, departments)
    coverage, risk = _thin(curve.coverage, curve.risk, CURVE_POINTS)
    report: dict[str, Any] = {
        "products": len(y_true),
        "mapping": {
            "accuracy": accuracy(y_true, y_pred),
            "macro_f1": macro,
            "weighted_f1": weighted,
            "hierarchical_precision": hier.precision,
            "hierarchical_recall": hier.recall,
            "hierarchical_f1": hier.f1,
            "ece": bins.ece,
            "ece_bins": ECE_BINS,
            "aurc": curve.aurc,
            "answered_under_gold": (sum(right) / len(right)) if right else 0.0,
            "mean_confidence": (sum(confidence) / len(confidence)) if confidence else 0.0,
            "by_method": dict(sorted(methods.items())),
        },
        "calibration": {
            "edges": bins.edges,
            "counts": bins.counts,
            "mean_confidence": bins.mean_confidence,
            "accuracy": bins.accuracy,
        },
        "risk_coverage": {"coverage": coverage, "risk": risk},
        "departments": [
            {
                "node_id": dep,
                "name": tree[dep].name,
                "accuracy": acc,
                "products": count,
            }
            for dep, (acc, count) in by_department.items()
        ],
        "nodes": [
            {
                "node_id": s.node_id,
                "path": _path(tree, s.node_id),
                "precision": s.precision,
                "recall": s.recall,
                "f1": s.f1,
                "support": s.support,
                "predicted": s.predicted,
            }
            for s in per_node_scores(y_true, y_pred)
        ],
        "confusions": [
            {
                "true": t,
                "true_path": _path(tree, t),
                "predicted": p,
                "predicted_path": _path(tree, p),
                "count": n,
            }
            for t, p, n in top_confusions(y_true, y_pred, limit=confusions)
        ],
        "attributes": _attribute_report(gold, attributes),
    }
    return report


def _attribute_report(
    gold: Sequence[Gold], attributes: Sequence[Attributes] | None
) -> dict[str, Any] | None:
    if attributes is None:
        return None
    if len(attributes) != len(gold):
        raise ValueError("gold labels and attributes differ in length")
    out: dict[str, Any] = {}
    with_brand = [
        (g.brand, a.brand) for g, a in zip(gold, attributes, strict=True) if g.brand is not None
    ]
    if with_brand:
        scores = brand_scores([g for g, _ in with_brand], [p for _, p in with_brand])
        out["brand"] = {**dataclasses.asdict(scores), "products": len(with_brand)}
    for name in ("who", "age"):
        pairs = [
            (getattr(g, name), getattr(a, name))
            for g, a in zip(gold, attributes, strict=True)
            if getattr(g, name) is not None
        ]
        if pairs:
            labels = label_accuracy([g for g, _ in pairs], [p for _, p in pairs])
            out[name] = {
                "accuracy": labels.accuracy,
                "products": labels.products,
                "confusion": labels.confusion,
            }
    return out
