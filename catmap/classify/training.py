"""Train a mapping model from labelled feeds (or the demo reference catalog) and save it.

A labelled feed is any feed catmap reads with a column of node ids. Rows with ``split=train``
train the model and rows with ``split=valid`` calibrate it when a ``split`` column exists; else a
seeded 90/10 split is made. Review decisions will later come in as ``extra_examples``.
"""

from __future__ import annotations

import hashlib
import random
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from catmap.classify.consensus import MIN_PRODUCTS
from catmap.classify.features import ProductTexts, product_texts
from catmap.classify.model import CategoryModel
from catmap.classify.storage import save_model
from catmap.errors import InputError
from catmap.feeds import open_feed
from catmap.fieldmap import FeedProfile, load_profile, save_profile, suggest_profile
from catmap.ingest import Accounting, check_profile, iter_products
from catmap.project import profile_path
from catmap.records import Product
from catmap.taxonomy import CategoryTree

__all__ = [
    "CONSENSUS_WEIGHT_GRID",
    "LabelledData",
    "TrainingReport",
    "consensus_blend",
    "feed_profile",
    "read_labelled",
    "train_model",
]

CONSENSUS_WEIGHT_GRID = (0.0, 0.1, 0.2, 0.3, 0.4, 0.5)
SAMPLE_SIZE = 200
VALID_SHARE = 0.1


@dataclass
class LabelledData:
    """Labelled products split for training, calibration and testing."""

    train: list[tuple[Product, str]] = field(default_factory=list)
    valid: list[tuple[Product, str]] = field(default_factory=list)
    test: list[tuple[Product, str]] = field(default_factory=list)
    unknown_labels: int = 0
    unlabelled: int = 0
    fingerprint: str = ""


@dataclass
class TrainingReport:
    """What a training run did (the facts ``catmap train`` prints)."""

    feeds: list[str]
    products_train: int
    products_valid: int
    classes: int
    unknown_labels: int
    unlabelled: int
    metrics: dict[str, Any]
    training_seconds: float
    model_dir: str
    model_bytes: int
    tree_version: str

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return dict(self.__dict__)


def feed_profile(feed_path: Path, project: Path) -> tuple[FeedProfile, Path]:
    """Return the feed's saved profile, or suggest one and save it in the project."""
    saved = profile_path(project, feed_path)
    if saved.exists():
        return load_profile(saved), saved
    opened = open_feed(feed_path)
    profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    saved.parent.mkdir(parents=True, exist_ok=True)
    save_profile(profile, saved)
    return profile, saved


def read_labelled(
    feeds: Sequence[Path],
    *,
    tree: CategoryTree,
    project: Path,
    label_column: str = "gold_node",
    random_state: int = 0,
) -> LabelledData:
    """Read labelled feeds into train / valid / test lists of (product, node id).

    Args:
        feeds: feed files with a column of node ids.
        tree: labels must be nodes of this tree (others are counted and skipped).
        project: the project folder (feed profiles are reused / saved there).
        label_column: the column holding node ids.
        random_state: seed of the 90/10 split for feeds without a ``split`` column.

    Raises:
        InputError: a feed without the label column.
    """
    data = LabelledData()
    digest = hashlib.sha256()
    rng = random.Random(random_state)
    for feed_path in feeds:
        profile, saved = feed_profile(feed_path, project)
        opened = open_feed(
            feed_path,
            encoding=profile.encoding,
            record_path=profile.record_path,
            delimiter=profile.delimiter,
        )
        check_profile(profile, opened.info, profile_path=saved)
        if label_column not in opened.info.columns:
            raise InputError(
                f"the feed has no label column '{label_column}'",
                path=feed_path,
                field=label_column,
                hint=f"columns found: {', '.join(opened.info.columns)}; use --label-column",
            )
        for item in iter_products(opened, profile, Accounting()):
            if not isinstance(item, Product):
                continue
            label = item.extra.get(label_column, "").strip()
            if not label:
                data.unlabelled += 1
                continue
            if label not in tree:
                data.unknown_labels += 1
                continue
            digest.update(f"{item.product_id}\0{item.title}\0{label}\n".encode())
            split = item.extra.get("split", "").strip().lower()
            if split not in ("train", "valid", "test"):
                split = "valid" if rng.random() < VALID_SHARE else "train"
            getattr(data, split).append((item, label))
    data.fingerprint = digest.hexdigest()
    return data


def consensus_blend(
    probabilities: np.ndarray[Any, Any], paths: Sequence[str], weight: float
) -> np.ndarray[Any, Any]:
    """Blend each product's probabilities with its retailer path's share vector.

    The share vector of a path is the share of its products whose most probable class is each
    class; only paths with at least :data:`MIN_PRODUCTS` products are blended.

    Args:
        probabilities: (n, classes).
        paths: the retailer path of each row.
        weight: the share vector's weight (0 = no change).

    Returns:
        The blended probabilities (a new array).
    """
    result = np.array(probabilities, dtype=np.float64, copy=True)
    if weight <= 0:
        return result
    best = probabilities.argmax(axis=1)
    groups: dict[str, list[int]] = {}
    for row, path in enumerate(paths):
        if path:
            groups.setdefault(path, []).append(row)
    for rows in groups.values():
        if len(rows) < MIN_PRODUCTS:
            continue
        shares = np.bincount(best[rows], minlength=probabilities.shape[1]) / len(rows)
        result[rows] = (1 - weight) * result[rows] + weight * shares
    return result


def _choose_consensus_weight(
    model: CategoryModel, texts: ProductTexts, labels: Sequence[str]
) -> tuple[float, dict[str, float]]:
    column = {c: i for i, c in enumerate(model.classes_.tolist())}
    y = np.array([column.get(label, -1) for label in labels])
    p = model.predict_proba(texts)
    best_w, best_nll, best_acc = 0.0, np.inf, 0.0
    for w in CONSENSUS_WEIGHT_GRID:
        blended = consensus_blend(p, texts.path, w)
        picked = blended[np.arange(len(y)), np.maximum(y, 0)]
        nll = float(-np.log(np.maximum(picked, 1e-12))[y >= 0].mean())
        if nll < best_nll:
            best_w, best_nll = w, nll
            best_acc = float((blended.argmax(axis=1) == y).mean())
    return best_w, {"valid_accuracy_with_consensus": best_acc}


def folder_bytes(folder: Path) -> int:
    """Return the total size of the files in a folder."""
    return sum(p.stat().st_size for p in folder.iterdir() if p.is_file())


def train_model(
    feeds: Sequence[Path],
    *,
    tree: CategoryTree,
    project: Path,
    model_dir: Path,
    label_column: str = "gold_node",
    extra_examples: Iterable[tuple[Product, str]] = (),
    model_options: dict[str, Any] | None = None,
    on_stage: Callable[[str], None] | None = None,
) -> TrainingReport:
    """Read labelled feeds, train, calibrate on the validation rows, save the model folder.

    Args:
        feeds: labelled feed files.
        tree: the category tree.
        project: the project folder.
        model_dir: where to save the model.
        label_column: the column of node ids.
        extra_examples: more (product, node id) training examples, e.g. review decisions.
        model_options: keyword arguments for :class:`CategoryModel` (classifier, C, ...).
        on_stage: called with a short text as each stage starts.

    Returns:
        The report.

    Raises:
        InputError: no labelled products, or a feed without the label column.
    """
    stage = on_stage or (lambda _text: None)
    started = time.perf_counter()
    stage("reading labelled products")
    data = read_labelled(feeds, tree=tree, project=project, label_column=label_column)
    train = data.train + list(extra_examples)
    if len({label for _, label in train}) < 2:
        raise InputError(
            "training needs labelled products of at least two different nodes",
            path=feeds[0] if feeds else None,
            field=label_column,
            hint="check the label column holds node ids of the tree",
        )
    texts = product_texts([p for p, _ in train])
    labels = [label for _, label in train]
    stage(f"training on {len(train):,} products")
    model = CategoryModel(tree=tree, **(model_options or {})).fit(texts, labels)
    valid = data.valid or data.train[: max(1, len(data.train) // 10)]
    stage(f"calibrating on {len(valid):,} products")
    valid_texts = product_texts([p for p, _ in valid])
    valid_labels = [label for _, label in valid]
    model.calibrate(valid_texts, valid_labels)
    consensus_weight, consensus_metrics = _choose_consensus_weight(model, valid_texts, valid_labels)
    model.metrics_.update(consensus_metrics)
    elapsed = time.perf_counter() - started
    stage("saving the model")
    save_model(
        model,
        model_dir,
        extra={
            "consensus_weight": consensus_weight,
            "training_data_fingerprint": data.fingerprint,
            "training_products": len(train),
            "training_seconds": round(elapsed, 2),
            "label_column": label_column,
        },
    )
    return TrainingReport(
        feeds=[str(f) for f in feeds],
        products_train=len(train),
        products_valid=len(valid),
        classes=len(set(labels)),
        unknown_labels=data.unknown_labels,
        unlabelled=data.unlabelled,
        metrics={**model.metrics_, "consensus_weight": consensus_weight},
        training_seconds=round(elapsed, 2),
        model_dir=str(model_dir),
        model_bytes=folder_bytes(model_dir),
        tree_version=tree.version,
    )
