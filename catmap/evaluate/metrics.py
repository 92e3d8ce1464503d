"""Metrics of mapping quality and of attribute extraction: pure functions over label lists.

Every function takes plain sequences (node ids as strings, confidences as floats) and returns
plain numbers or small dataclasses, so it can be checked by hand and reused by the report,
the benchmark and the tests. Nothing here reads files or knows about models.

The definitions follow the published ones:

* accuracy, macro-F1 and support-weighted F1 over the leaf labels (the per-class F1 is 0 where
  precision or recall is undefined, and the label set is the union of true and predicted
  labels, as ``sklearn.metrics.f1_score`` does by default);
* hierarchical precision / recall / F1 (Kiritchenko et al., 2006): each true and predicted node
  is extended with all its ancestors, and the overlaps are micro-averaged over products;
* expected calibration error over 15 equal-width confidence bins (Guo et al., 2017);
* the risk-coverage curve of selective prediction (Geifman & El-Yaniv, 2017) and its area,
  AURC (Geifman, Uziel & El-Yaniv, 2019): lower is better.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Callable, Iterable, Mapping, Sequence, Sized
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = [
    "CalibrationBins",
    "HierarchicalScores",
    "LabelScores",
    "NodeScores",
    "PRF",
    "RiskCoverage",
    "accuracy",
    "brand_scores",
    "calibration_bins",
    "confusion_table",
    "expected_calibration_error",
    "f1_scores",
    "group_accuracy",
    "hierarchical_scores",
    "label_accuracy",
    "per_node_scores",
    "risk_coverage",
    "top_confusions",
]

ECE_BINS = 15


def _as_labels(values: Sequence[str] | np.ndarray[Any, Any], name: str) -> np.ndarray[Any, Any]:
    array = np.asarray(list(values), dtype=object)
    if array.ndim != 1:
        raise ValueError(f"{name} must be one-dimensional")
    return array


def _check_same_length(*arrays: Sized) -> None:
    lengths = {len(a) for a in arrays}
    if len(lengths) > 1:
        raise ValueError(f"inputs have different lengths: {sorted(lengths)}")


def _safe_divide(numerator: float, denominator: float) -> float:
    return float(numerator) / float(denominator) if denominator else 0.0


def _f1(precision: float, recall: float) -> float:
    return _safe_divide(2.0 * precision * recall, precision + recall)


# -- flat label metrics ---------------------------------------------------------------------


def accuracy(y_true: Sequence[str], y_pred: Sequence[str]) -> float:
    """Return the share of products whose predicted label equals the true one.

    Args:
        y_true: the gold labels.
        y_pred: the predicted labels (an inner node after back-off counts as wrong here).

    Returns:
        Accuracy in 0..1 (0.0 for no products).
    """
    true = _as_labels(y_true, "y_true")
    pred = _as_labels(y_pred, "y_pred")
    _check_same_length(true, pred)
    if len(true) == 0:
        return 0.0
    return float(np.mean(true == pred))


@dataclass(frozen=True, slots=True)
class NodeScores:
    """Precision, recall, F1 and support of one label (node)."""

    node_id: str
    precision: float
    recall: float
    f1: float
    support: int
    predicted: int


def per_node_scores(y_true: Sequence[str], y_pred: Sequence[str]) -> list[NodeScores]:
    """Return precision / recall / F1 / support for every label seen in truth or prediction.

    Precision (or recall) is 0 for a label never predicted (or never true).

    Args:
        y_true: the gold labels.
        y_pred: the predicted labels.

    Returns:
        One entry per label, sorted by label.
    """
    true = _as_labels(y_true, "y_true")
    pred = _as_labels(y_pred, "y_pred")
    _check_same_length(true, pred)
    if len(true) == 0:
        return []
    labels, inverse = np.unique(np.concatenate([true, pred]).astype(str), return_inverse=True)
    true_index = inverse[: len(true)]
    pred_index = inverse[len(true) :]
    size = len(labels)
    support = np.bincount(true_index, minlength=size)
    predicted = np.bincount(pred_index, minlength=size)
    correct = np.bincount(true_index[true_index == pred_index], minlength=size)
    out = []
    for k, label in enumerate(labels):
        precision = _safe_divide(correct[k], predicted[k])
        recall = _safe_divide(correct[k], support[k])
        out.append(
            NodeScores(
                node_id=str(label),
                precision=precision,
                recall=recall,
                f1=_f1(precision, recall),
                support=int(support[k]),
                predicted=int(predicted[k]),
            )
        )
    return out


def f1_scores(y_true: Sequence[str], y_pred: Sequence[str]) -> tuple[float, float]:
    """Return (macro-F1, weighted F1) over the labels of truth and prediction.

    Macro-F1 is the plain mean of the per-label F1; weighted F1 weights each label's F1 by its
    number of true products (the score used to rank product-title classifiers in shared tasks).

    Args:
        y_true: the gold labels.
        y_pred: the predicted labels.

    Returns:
        The two scores in 0..1 (both 0.0 for no products).
    """
    scores = per_node_scores(y_true, y_pred)
    if not scores:
        return 0.0, 0.0
    f1 = np.array([s.f1 for s in scores])
    support = np.array([s.support for s in scores], dtype=float)
    macro = float(f1.mean())
    weighted = float((f1 * support).sum() / support.sum()) if support.sum() else 0.0
    return macro, weighted


def top_confusions(
    y_true: Sequence[str], y_pred: Sequence[str], *, limit: int = 10
) -> list[tuple[str, str, int]]:
    """Return the most frequent mistakes as (true, predicted, count), most frequent first.

    Ties are broken by the labels, so the order is stable.

    Args:
        y_true: the gold labels.
        y_pred: the predicted labels.
        limit: how many pairs to return.
    """
    true = _as_labels(y_true, "y_true")
    pred = _as_labels(y_pred, "y_pred")
    _check_same_length(true, pred)
    counts = Counter((str(t), str(p)) for t, p in zip(true, pred, strict=True) if t != p)
    ranked = sorted(counts.items(), key=lambda item: (-item[1], item[0]))
    return [(t, p, n) for (t, p), n in ranked[:limit]]


def group_accuracy(
    y_true: Sequence[str], y_pred: Sequence[str], groups: Sequence[str]
) -> dict[str, tuple[float, int]]:
    """Return accuracy and product count per group (e.g. the gold node's department).

    Args:
        y_true: the gold labels.
        y_pred: the predicted labels.
        groups: the group of each product.

    Returns:
        group → (accuracy, products), groups sorted.
    """
    _check_same_length(y_true, y_pred, groups)
    hits: Counter[str] = Counter()
    totals: Counter[str] = Counter()
    for t, p, g in zip(y_true, y_pred, groups, strict=True):
        totals[g] += 1
        hits[g] += t == p
    return {g: (hits[g] / totals[g], totals[g]) for g in sorted(totals)}


# -- hierarchical metrics -------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class HierarchicalScores:
    """Hierarchical precision, recall and F1 with the summed set sizes behind them."""

    precision: float
    recall: float
    f1: float
    overlap: int
    predicted: int
    true: int


def _extended(
    node_id: str | None,
    parents: Mapping[str, str | None],
    cache: dict[str, frozenset[str]],
) -> frozenset[str]:
    if not node_id:
        return frozenset()
    found = cache.get(node_id)
    if found is not None:
        return found
    chain = []
    current: str | None = node_id
    while current is not None:
        if current not in parents:
            raise KeyError(f"node {current!r} is not in the tree")
        chain.append(current)
        current = parents[current]
        if len(chain) > len(parents):
            raise ValueError(f"the parent links of {node_id!r} form a cycle")
    result = frozenset(chain)
    cache[node_id] = result
    return result


def hierarchical_scores(
    y_true: Sequence[str],
    y_pred: Sequence[str | None],
    parents: Mapping[str, str | None],
) -> HierarchicalScores:
    """Return hierarchical precision / recall / F1, micro-averaged over products.

    Each product's true node and predicted node are replaced by themselves plus all their
    ancestors (departments included; the tree has no single root, so none is left out).
    Then hP = Σ|T∩P| / Σ|P| and hR = Σ|T∩P| / Σ|T| over products, hF = 2·hP·hR / (hP + hR).
    A prediction may be an inner node (after back-off): its set is simply shorter, which keeps
    precision high and costs recall. An empty prediction ("" or None) is an empty set.

    Args:
        y_true: the gold node ids.
        y_pred: the predicted node ids (any depth), or ``None`` / ``""`` for no answer.
        parents: node id → parent id (``None`` for a department); see
            :func:`catmap.evaluate.parent_map`.

    Returns:
        The scores and the summed set sizes.

    Raises:
        KeyError: a node id that is not in ``parents``.
    """
    _check_same_length(y_true, y_pred)
    cache: dict[str, frozenset[str]] = {}
    overlap = predicted = true = 0
    for t, p in zip(y_true, y_pred, strict=True):
        true_set = _extended(t, parents, cache)
        pred_set = _extended(p, parents, cache)
        overlap += len(true_set & pred_set)
        predicted += len(pred_set)
        true += len(true_set)
    precision = _safe_divide(overlap, predicted)
    recall = _safe_divide(overlap, true)
    return HierarchicalScores(
        precision=precision,
        recall=recall,
        f1=_f1(precision, recall),
        overlap=overlap,
        predicted=predicted,
        true=true,
    )


# -- calibration and selective prediction ---------------------------------------------------


@dataclass(frozen=True, slots=True)
class CalibrationBins:
    """Equal-width confidence bins: what a reliability diagram draws.

    Attributes:
        edges: the ``bins + 1`` bin edges from 0 to 1.
        counts: products per bin.
        mean_confidence: mean confidence per bin (0 for an empty bin).
        accuracy: share correct per bin (0 for an empty bin).
        ece: expected calibration error: Σ_b (n_b / n) · |accuracy_b − confidence_b|.
    """

    edges: list[float]
    counts: list[int]
    mean_confidence: list[float]
    accuracy: list[float]
    ece: float


def calibration_bins(
    confidences: Sequence[float], correct: Sequence[bool], *, bins: int = ECE_BINS
) -> CalibrationBins:
    """Group products into equal-width confidence bins and compute the calibration error.

    Bin ``m`` (1-based) holds confidences in ((m−1)/M, m/M]; a confidence of exactly 0 goes to
    the first bin.

    Args:
        confidences: the confidence given to each answer, in 0..1.
        correct: whether each answer was right.
        bins: the number of bins M (15 by default).

    Returns:
        The bins and the ECE (0.0 for no products).

    Raises:
        ValueError: a confidence outside 0..1, or lengths differ.
    """
    conf = np.asarray(list(confidences), dtype=float)
    hit = np.asarray(list(correct), dtype=float)
    _check_same_length(conf, hit)
    if bins < 1:
        raise ValueError("bins must be at least 1")
    if conf.size and (np.nanmin(conf) < 0.0 or np.nanmax(conf) > 1.0 or np.isnan(conf).any()):
        raise ValueError("confidences must lie in 0..1")
    edges = np.linspace(0.0, 1.0, bins + 1)
    # ceil(c·M) − 1 puts c in ((m−1)/M, m/M]; the clip sends c = 0 to the first bin.
    index = np.clip(np.ceil(conf * bins).astype(int) - 1, 0, bins - 1)
    counts = np.bincount(index, minlength=bins)
    conf_sum = np.bincount(index, weights=conf, minlength=bins)
    hit_sum = np.bincount(index, weights=hit, minlength=bins)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_conf = np.where(counts > 0, conf_sum / np.maximum(counts, 1), 0.0)
        acc = np.where(counts > 0, hit_sum / np.maximum(counts, 1), 0.0)
    total = conf.size
    ece = float(np.sum(counts * np.abs(acc - mean_conf)) / total) if total else 0.0
    return CalibrationBins(
        edges=[float(e) for e in edges],
        counts=[int(c) for c in counts],
        mean_confidence=[float(v) for v in mean_conf],
        accuracy=[float(v) for v in acc],
        ece=ece,
    )


def expected_calibration_error(
    confidences: Sequence[float], correct: Sequence[bool], *, bins: int = ECE_BINS
) -> float:
    """Return the expected calibration error over ``bins`` equal-width bins (15 by default)."""
    return calibration_bins(confidences, correct, bins=bins).ece


@dataclass(frozen=True, slots=True)
class RiskCoverage:
    """The risk-coverage curve of answers ranked by confidence.

    Attributes:
        coverage: k / n for k = 1..n (answers kept, most confident first).
        risk: share of wrong answers among the k kept.
        thresholds: the confidence of the k-th answer.
        aurc: area under the curve: the mean of ``risk`` over k = 1..n.
    """

    coverage: list[float]
    risk: list[float]
    thresholds: list[float]
    aurc: float


def risk_coverage(confidences: Sequence[float], correct: Sequence[bool]) -> RiskCoverage:
    """Return the risk at every coverage when answers are kept most-confident first.

    Answers with equal confidence cannot be ordered among themselves: inside such a group the
    risk is the expected one over all orders (errors before the group plus the group's error
    rate times the answers taken from it), so the curve does not depend on input order.

    Args:
        confidences: the confidence of each answer.
        correct: whether each answer was right.

    Returns:
        The curve and its area (AURC; 0.0 for no products).
    """
    conf = np.asarray(list(confidences), dtype=float)
    wrong = 1.0 - np.asarray(list(correct), dtype=float)
    _check_same_length(conf, wrong)
    n = conf.size
    if n == 0:
        return RiskCoverage([], [], [], 0.0)
    order = np.argsort(-conf, kind="stable")
    conf = conf[order]
    wrong = wrong[order]
    errors = np.empty(n)
    start = 0
    errors_before = 0.0
    while start < n:
        stop = start
        while stop + 1 < n and conf[stop + 1] == conf[start]:
            stop += 1
        size = stop - start + 1
        group_errors = float(wrong[start : stop + 1].sum())
        taken = np.arange(1, size + 1)
        errors[start : stop + 1] = errors_before + group_errors * taken / size
        errors_before += group_errors
        start = stop + 1
    kept = np.arange(1, n + 1)
    risk = errors / kept
    return RiskCoverage(
        coverage=[float(c) for c in kept / n],
        risk=[float(r) for r in risk],
        thresholds=[float(c) for c in conf],
        aurc=float(risk.mean()),
    )


# -- attributes -----------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class PRF:
    """Precision, recall and F1 with the counts behind them."""

    precision: float
    recall: float
    f1: float
    true_positives: int
    false_positives: int
    false_negatives: int


def _brand_key(value: str | None) -> str:
    return " ".join((value or "").split()).casefold()


def brand_scores(gold: Sequence[str | None], predicted: Sequence[str | None]) -> PRF:
    """Return brand precision / recall / F1 over products.

    Brands compare case-insensitively after whitespace is collapsed. Per product: a predicted
    brand equal to a non-empty gold brand is a true positive; any other non-empty prediction is
    a false positive (also when the gold is empty); a non-empty gold brand not predicted
    exactly is a false negative (so a wrong brand counts once each way). An empty prediction is
    no prediction.

    Args:
        gold: the gold canonical brand per product ("" when the product has none).
        predicted: the extracted canonical brand per product ("" when none was found).

    Returns:
        The scores and the counts.
    """
    _check_same_length(gold, predicted)
    tp = fp = fn = 0
    for g, p in zip(gold, predicted, strict=True):
        g_key, p_key = _brand_key(g), _brand_key(p)
        if p_key and p_key == g_key:
            tp += 1
            continue
        if p_key:
            fp += 1
        if g_key:
            fn += 1
    precision = _safe_divide(tp, tp + fp)
    recall = _safe_divide(tp, tp + fn)
    return PRF(precision, recall, _f1(precision, recall), tp, fp, fn)


@dataclass(frozen=True, slots=True)
class LabelScores:
    """Accuracy of a closed-set attribute (who, age) and its confusion table."""

    accuracy: float
    products: int
    confusion: dict[str, dict[str, int]]


def confusion_table(gold: Iterable[str], predicted: Iterable[str]) -> dict[str, dict[str, int]]:
    """Return gold value → predicted value → count (both levels sorted)."""
    counts: Counter[tuple[str, str]] = Counter(zip(gold, predicted, strict=True))
    table: dict[str, dict[str, int]] = {}
    for (g, p), n in sorted(counts.items()):
        table.setdefault(g, {})[p] = n
    return table


def label_accuracy(
    gold: Sequence[str | None],
    predicted: Sequence[str | None],
    *,
    normalise: Callable[[str], str] | None = None,
) -> LabelScores:
    """Return the accuracy and confusion table of a closed-set attribute such as who or age.

    Products whose gold value is empty are left out (nothing to compare with).

    Args:
        gold: the gold value per product.
        predicted: the extracted value per product.
        normalise: applied to both sides before comparing (e.g. ``str.lower``).

    Returns:
        Accuracy over the products with a gold value, their count, and the confusion table.
    """
    _check_same_length(gold, predicted)
    fold = normalise or (lambda value: value)
    pairs = [
        (fold(g.strip()), fold((p or "").strip()))
        for g, p in zip(gold, predicted, strict=True)
        if g and g.strip()
    ]
    if not pairs:
        return LabelScores(0.0, 0, {})
    hits = sum(g == p for g, p in pairs)
    return LabelScores(
        accuracy=hits / len(pairs),
        products=len(pairs),
        confusion=confusion_table((g for g, _ in pairs), (p for _, p in pairs)),
    )
