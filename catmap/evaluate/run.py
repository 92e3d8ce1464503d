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

from catmap._iterate import chunked
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
from catmap.records import Alternative, Attributes, Mapping, Product, Reject

if TYPE_CHECKING:
    from catmap.attributes import AttributeExtractor
    from catmap.classify.mapping import Mapper as ClassMapper
    from catmap.feeds.fieldmap import FeedProfile
    from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "GOLD_PREFIX",
    "Gold",
    "Mapper",
    "collect",
    "evaluate_feed",
    "evaluation_report",
    "gold_from_product",
    "is_gold_column",
    "model_mapper",
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
        products: products and rejects, as :func:`catmap.feeds.ingest.iter_products` yields them.
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

    for chunk in chunked(usable(), chunk_size):
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


def _node_facts(tree: CategoryTree, scores: Any) -> dict[str, Any]:
    """One node's scores, with its errors: its products mapped elsewhere (``missed``) plus
    other nodes' products mapped to it (``wrongly_here``)."""
    correct = round(scores.recall * scores.support)
    missed = scores.support - correct
    wrongly_here = scores.predicted - correct
    return {
        "node_id": scores.node_id,
        "path": _path(tree, scores.node_id),
        "precision": scores.precision,
        "recall": scores.recall,
        "f1": scores.f1,
        "support": scores.support,
        "predicted": scores.predicted,
        "missed": missed,
        "wrongly_here": wrongly_here,
        "errors": missed + wrongly_here,
    }


def _at_threshold(
    y_true: Sequence[str], mappings: Sequence[Mapping], threshold: float | None
) -> dict[str, Any] | None:
    """The products onboarding would auto-accept at ``threshold`` and their error rate.

    Scored as onboarding scores them: a rule is always accepted, a backed-off answer (an inner
    node) never; an accepted product is right only when its leaf is the gold one.
    """
    if threshold is None:
        return None
    accepted = wrong = 0
    for gold, mapping in zip(y_true, mappings, strict=True):
        score = {"rule": 1.0, "backoff": 0.0}.get(mapping.method, float(mapping.confidence))
        if score >= threshold:
            accepted += 1
            wrong += mapping.node_id != gold
    return {
        "threshold": threshold,
        "accepted": accepted,
        "coverage": accepted / len(y_true) if y_true else 0.0,
        "wrong": wrong,
        "error_rate": wrong / accepted if accepted else 0.0,
    }


def evaluation_report(
    *,
    tree: CategoryTree,
    gold: Sequence[Gold],
    mappings: Sequence[Mapping],
    attributes: Sequence[Attributes] | None = None,
    confusions: int = CONFUSIONS_SHOWN,
    accept_threshold: float | None = None,
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
        accept_threshold: the auto-accept threshold onboarding uses; the report then gives
            the error rate among the products it would accept (``at_accept_threshold``).

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
        "at_accept_threshold": _at_threshold(y_true, mappings, accept_threshold),
        "nodes": sorted(
            (_node_facts(tree, s) for s in per_node_scores(y_true, y_pred)),
            key=lambda n: (-n["errors"], -n["support"], n["node_id"]),
        ),
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


def model_mapper(classifier: Any, threshold: float = 0.5, *, alternatives: int = 3) -> Mapper:
    """Wrap a :class:`catmap.classify.mapping.Mapper` as a mapper: products → mappings.

    The best leaf is answered when its probability reaches ``threshold``; otherwise the answer
    backs off to the deepest node that reaches it (the model's own back-off). Per-feed rules
    and the retailer-path consensus pass of ``catmap map`` are not applied here.

    With a trained model, the products are scored sparsely (``predict_sparse``: the classes of
    each product's likely departments); only the rows whose answer could depend on the classes
    left out are scored densely: rows that back off (node sums need every class), rows with
    fewer scored classes than the mapping lists, and rows where the probability mass left out
    could outrank a listed alternative. The answers are those of the dense probabilities.

    Args:
        classifier: the model engineer's ``Mapper`` (trained model or keywords only).
        threshold: the back-off threshold.
        alternatives: how many next-best leaves each mapping lists.

    Returns:
        A function mapping a list of products to one mapping each.
    """
    import numpy as np
    import scipy.sparse as sp

    from catmap.classify.backoff import backoff_rows
    from catmap.classify.features import product_texts

    classes: list[str] = list(classifier.classes)
    nodes: list[str] = list(classifier.index.nodes)
    method: str = classifier.method
    model = getattr(classifier, "model", None)
    k = min(alternatives + 1, len(classes))

    def dense(p: Any, out: list[Mapping | None], rows: Sequence[int]) -> None:
        best_class, chosen, chosen_p, backed = backoff_rows(p, classifier.index, threshold)
        top = np.argsort(-p, axis=1)[:, :k]
        for j, i in enumerate(rows):
            if backed[j]:
                node = nodes[int(chosen[j])]
                how = "backoff"
                reason = f"backed off from {classes[int(best_class[j])]}"
            else:
                node = classes[int(best_class[j])]
                how, reason = method, ""
            alts = tuple(
                Alternative(classes[int(c)], float(p[j, c]))
                for c in top[j]
                if classes[int(c)] != node
            )[:alternatives]
            out[i] = Mapping(node, float(chosen_p[j]), how, alts, reason)

    def run(products: Sequence[Product]) -> list[Mapping]:
        if not products:
            return []
        texts = product_texts(products)
        out: list[Mapping | None] = [None] * len(products)
        if model is None:
            dense(classifier.predict_proba(texts), out, range(len(products)))
            return [m for m in out if m is not None]
        matrix = sp.csr_matrix(model.predict_sparse(texts))
        n = matrix.shape[0]
        counts = np.diff(matrix.indptr)
        row_of = np.repeat(np.arange(n), counts)
        order = np.lexsort((-matrix.data, row_of))
        cols, vals = matrix.indices[order], matrix.data[order]
        rank = np.arange(len(order)) - matrix.indptr[row_of]
        keep = rank < k
        idx = np.zeros((n, k), dtype=np.int64)
        top = np.zeros((n, k), dtype=np.float64)
        idx[row_of[keep], rank[keep]] = cols[keep]
        top[row_of[keep], rank[keep]] = vals[keep]
        # The mass of the classes left out bounds each of them: a row is safe when its last
        # listed class is above that bound (the dense rows sum to 1).
        left_out = 1.0 - np.asarray(matrix.sum(axis=1)).ravel()
        safe = (counts >= k) & (top[:, 0] >= threshold) & (top[:, k - 1] > left_out)
        for i in np.flatnonzero(safe):
            node = classes[int(idx[i, 0])]
            alts = tuple(
                Alternative(classes[int(c)], float(v))
                for c, v in zip(idx[i, 1:], top[i, 1:], strict=True)
            )[:alternatives]
            out[i] = Mapping(node, float(top[i, 0]), method, alts, "")
        unsafe = np.flatnonzero(~safe)
        if len(unsafe):
            dense(model.predict_proba(texts.subset(unsafe)), out, unsafe.tolist())
        return [m for m in out if m is not None]

    return run


def evaluate_feed(
    feed_path: str | Path,
    *,
    project: str | Path,
    gold_path: str | Path | None = None,
    label_column: str = DEFAULT_LABEL_COLUMN,
    model_folder: str | Path | None = None,
    tree_version: int | str = 1,
    split: str | None = None,
    threshold: float = 0.5,
    brands_path: str | Path | None = None,
    tree: CategoryTree | None = None,
    feed_name: str | None = None,
    accept_threshold: float | None = None,
) -> dict[str, Any]:
    """Map a labelled feed with the trained model and return the evaluation report.

    Args:
        feed_path: the feed (its own gold columns, or joined to ``gold_path`` by product id).
        project: the project folder (feed profile, default model folder, brand dictionary).
        gold_path: a gold CSV (product_id, the label column, gold_brand, gold_who, gold_age).
        label_column: the column of the gold node id.
        model_folder: the model folder (default ``<project>/models/current``); when it holds
            no model, the tree's keywords alone map (cold start).
        tree_version: the category tree version.
        split: evaluate only rows whose ``split`` column has this value.
        threshold: the back-off threshold.
        brands_path: the brand dictionary (default: the project's).
        tree: the category tree (wins over ``tree_version``; e.g. the project's own).
        feed_name: the feed's name, which names its profile (default: from the file name).
        accept_threshold: the auto-accept threshold to report the error rate at.

    Returns:
        The report of :func:`evaluation_report` plus the run's facts (feed, gold, model,
        left-out counts, accounting).

    Raises:
        InputError: the feed has no label column and no gold file was given, or unusable files.
        ModelError: the model folder cannot be used (e.g. another tree version).
    """
    from catmap.feeds.profiled import open_profiled_feed
    from catmap.tree.taxonomy import load_default_tree

    feed = Path(feed_path)
    folder = Path(project)
    tree = tree if tree is not None else load_default_tree(tree_version)
    classifier, model_text = _classifier(tree, folder, model_folder)
    trained_on = _trained_on(feed, folder, model_folder, split)

    source = open_profiled_feed(feed, folder, name=feed_name)
    gold = read_gold_csv(gold_path, label_column=label_column) if gold_path else None
    if gold is None and label_column not in source.info.columns:
        raise InputError(
            f"the feed has no gold column '{label_column}'",
            path=feed,
            field=label_column,
            hint=f"columns found: {', '.join(source.info.columns)}; give the gold labels "
            "with --gold FILE or name the column with --label-column",
        )
    extractor, brands_file = _attribute_extractor(tree, folder, brands_path)
    accounting = source.accounting
    collected = collect(
        source.products(profile=profile_without_gold(source.profile, label_column)),
        tree=tree,
        mapper=model_mapper(classifier, threshold),
        gold=gold,
        label_column=label_column,
        extractor=extractor,
        split=split,
    )
    report = evaluation_report(
        tree=tree,
        gold=collected.gold,
        mappings=collected.mappings,
        attributes=collected.attributes,
        accept_threshold=accept_threshold,
    )
    facts: dict[str, Any] = {
        "feed": str(feed),
        "gold": str(gold_path) if gold_path else f"the feed's '{label_column}' column",
        "model": model_text,
        "tree_version": str(tree.version),
        "split": split,
        "backoff_threshold": threshold,
        "brand_dictionary": str(brands_file) if brands_file else None,
        "left_out": {
            "rejected": collected.rejected,
            "without_gold": collected.without_gold,
            "gold_not_in_tree": sum(collected.unknown_gold.values()),
            "other_split": collected.other_split,
        },
        "accounting": accounting.to_dict(),
        "trained_on": trained_on,
    }
    return {**facts, **report}


def _trained_on(
    feed: Path, project: Path, model_folder: str | Path | None, split: str | None
) -> str | None:
    """Say so when the feed is one the model was trained on and the rows scored are not its
    test split: the model saw most of them, and the figures flatter it."""
    from catmap.classify.storage import MANIFEST, read_manifest, training_feed

    models = Path(model_folder) if model_folder else project / "models" / "current"
    if split == "test" or not (models / MANIFEST).is_file():
        return None
    manifest = read_manifest(models)
    trained = training_feed(manifest, feed)
    if trained is None:
        return None
    which = f"its {split} split" if split else "its rows"
    return (
        f"the model was trained on this feed ({trained}): {which} trained or calibrated it, so "
        "these figures flatter it; score `--split test`, or a labelled feed of a retailer it "
        "never saw"
    )


def _classifier(
    tree: CategoryTree, project: Path, model_folder: str | Path | None
) -> tuple[ClassMapper, str]:
    """Load the model to evaluate, or the tree's keywords alone when there is none.

    Returns:
        The mapper and how the report names it.

    Raises:
        ModelError: the model folder cannot be used (e.g. another tree version).
    """
    from catmap.classify.mapping import Mapper as ClassMapper
    from catmap.classify.storage import MANIFEST, load_model

    models = Path(model_folder) if model_folder else project / "models" / "current"
    if model_folder is not None or (models / MANIFEST).exists():
        model, _manifest = load_model(models, tree)
        return ClassMapper(tree, model), str(models)
    return ClassMapper(tree, None), f"none (no model in {models}: the tree's keywords alone)"


def _attribute_extractor(
    tree: CategoryTree, project: Path, brands_path: str | Path | None
) -> tuple[AttributeExtractor, Path | None]:
    """The attribute extractor with the brand dictionary in use, and that dictionary's file."""
    from catmap.attributes import AttributeExtractor, BrandDictionary
    from catmap.attributes.brand import dictionary_in_use

    brands_file = dictionary_in_use(project, brands_path)
    extractor = AttributeExtractor(
        brands=BrandDictionary.from_csv(brands_file) if brands_file else BrandDictionary([]),
        tree=tree,
    )
    return extractor, brands_file
