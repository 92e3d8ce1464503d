"""Train a mapping model from labelled feeds (or the demo reference catalog) and save it.

A labelled feed is any feed catmap reads with a column of node ids. Rows with ``split=train``
train the model and rows with ``split=valid`` calibrate it when a ``split`` column exists; else a
seeded 90/10 split is made. Review decisions will later come in as ``extra_examples``.
"""

from __future__ import annotations

import copy
import hashlib
import inspect
import random
import statistics
import time
from collections import Counter
from collections.abc import Callable, Collection, Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, NoReturn

import numpy as np
import scipy.sparse as sp

from catmap.classify.consensus import MIN_PRODUCTS
from catmap.classify.features import ProductTexts, product_texts
from catmap.classify.model import CategoryModel
from catmap.classify.storage import file_fingerprint, save_model
from catmap.errors import InputError, UnknownNode
from catmap.feeds.profiled import open_profiled_feed
from catmap.records import Product
from catmap.tree.changelog import load_change_log
from catmap.tree.diff import LabelTranslation, crosswalk_from_changes, diff_trees, reconcile
from catmap.tree.taxonomy import (
    CategoryTree,
    default_tree_path,
    load_tree,
    open_tree,
    path_label_reader,
)

__all__ = [
    "CONSENSUS_WEIGHT_GRID",
    "FLAT_MAX_CLASSES",
    "LabelledData",
    "TrainingReport",
    "consensus_blend",
    "read_labelled",
    "train_model",
]

CONSENSUS_WEIGHT_GRID = (0.0, 0.1, 0.2, 0.3, 0.4, 0.5)
# Up to this many classes, a flat model (one classifier over every class) is trained beside the
# department step, which is kept only when clearly better (:data:`STRUCTURE_CONFIDENCE`); above
# it, the department step alone (a flat classifier over a thousand classes trains too slowly and
# the department step holds the demo world's results). A chosen setting (common practice, no
# source).
FLAT_MAX_CLASSES = 300
# The flat candidate's own settings where the options leave them: every term seen once and no
# pruning (a few classes keep the weights small). On validation slices of the Debian sections'
# training split (benchmarks/bench_real_sections.py) they added 0.003 macro-F1 to the flat model
# (0.798 to 0.802, both retrained on their validation tenth as an earlier version did). Then the
# title's character n-grams weigh 1.4 against its words, and C is 1.0: in stratified 5-fold
# cross-validation of that training split (benchmarks/cv_real_sections.py) they raised the flat
# model's macro-F1 from 0.8009 to 0.8079 (+0.0070, fold-to-fold std 0.0033, every fold higher;
# accuracy 0.8840 to 0.8854), with the scoring cost unchanged (the same features). The choice
# of structure on each fold's validation tenth then kept the department step in one fold of five
# (0.786 on its held-out fifth, flat 0.817): macro-F1 over 57 classes on a tenth is noisy.
FLAT_SETTINGS: dict[str, Any] = {
    "min_df": 1,
    "prune_below": 0.0,
    "C": 1.0,
    "feature_weights": {"title_chars": 1.4},
}
VALID_SHARE = 0.1
# Above this share of labelled rows naming nodes the tree lacks, the labels most likely belong
# to another tree, and training stops (a chosen setting: a few retired ids are normal, a
# twentieth is not; common practice, no source).
MAX_UNKNOWN_LABEL_SHARE = 0.05
# Unknown node ids named in the report and the error.
UNKNOWN_IDS_SHOWN = 5


def default_max_per_class() -> int | None:
    """The model's own cap on products per class (what ``--max-per-class`` defaults to)."""
    return inspect.signature(CategoryModel).parameters["max_per_class"].default


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
    tree_file: str = ""
    rows_read: int = 0
    rejected: int = 0
    unknown_share: float = 0.0
    unknown_examples: list[str] = field(default_factory=list)
    max_per_class: int | None = None
    left_out_by_cap: int = 0
    products_used: int = 0
    per_class: dict[str, float] = field(default_factory=dict)
    inner_labels: int = 0
    inner_examples: list[str] = field(default_factory=list)
    labels_as_paths: int = 0
    labels_translation: dict[str, Any] = field(default_factory=dict)
    refit: bool = False

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return dict(self.__dict__)


def labels_tree_reference(tree: CategoryTree, changes: Path | None = None) -> dict[str, str]:
    """What a model folder keeps of the tree its labels were written for (to reopen it): its
    version, its file (none: a version of the shared tree) and the change log, if one was given.
    """
    shared = tree.path is not None and Path(tree.path) == default_tree_path(tree.version)
    return {
        "version": str(tree.version),
        "file": str(Path(tree.path).resolve()) if tree.path and not shared else "",
        "changes": str(changes.resolve()) if changes is not None else "",
    }


def labels_translation(
    reference: dict[str, str] | None, tree: CategoryTree
) -> LabelTranslation | None:
    """Open the labels' tree a reference names and compare it with ``tree``.

    The crosswalk is the two trees' diff; with a change log, the log decides (as ``catmap
    remap --changes`` does).

    Returns:
        The translation, or None when there is no reference (the labels are ``tree``'s own).

    Raises:
        InputError: a file the reference names is gone (the message names it).
        TreeError: the change log does not lead from the labels' tree to ``tree``.
    """
    if not reference:
        return None
    file, changes = reference.get("file") or "", reference.get("changes") or ""
    for named in (file, changes):
        if named and not Path(named).exists():
            raise InputError(
                "the labels were written for another tree, and a file that says how is gone",
                path=Path(named),
                hint="put the file back, or train again (`catmap train`)",
            )
    old = load_tree(file) if file else open_tree(reference["version"])
    crosswalk = diff_trees(old, tree)
    if changes:
        stated = crosswalk_from_changes(old, tree, load_change_log(changes))
        crosswalk = reconcile(crosswalk, stated)
    return LabelTranslation(old, tree, crosswalk)


def _labelled_stream(
    feeds: Sequence[Path],
    *,
    tree: CategoryTree,
    project: Path,
    label_column: str,
    random_state: int,
    counts: dict[str, int],
    digest: Any,
    unknown_ids: list[str] | None = None,
    translation: LabelTranslation | None = None,
) -> Iterator[tuple[Product, str, str]]:
    """Yield (product, node id, split) of every labelled product, counting the skipped ones.

    ``counts`` gets ``read`` (records), ``rejected``, ``unlabelled``, ``unknown_labels`` and,
    with a ``translation`` (labels of an older tree), ``dropped_by_tree_change``;
    ``unknown_ids`` the first distinct node ids the tree lacks.
    """
    rng = random.Random(random_state)
    as_path = path_label_reader(tree)
    for feed_path in feeds:
        opened = open_profiled_feed(feed_path, project, reserved=(label_column, "split"))
        if label_column not in opened.info.columns:
            raise InputError(
                f"the feed has no label column '{label_column}'",
                path=feed_path,
                field=label_column,
                hint=f"columns found: {', '.join(opened.info.columns)}; use --label-column",
            )
        for item in opened.products():
            counts["read"] = counts.get("read", 0) + 1
            if not isinstance(item, Product):
                counts["rejected"] = counts.get("rejected", 0) + 1
                continue
            label = item.extra.get(label_column, "").strip()
            if not label:
                counts["unlabelled"] += 1
                continue
            if translation is not None:
                translated = translation.node(label)
                if translated == "":
                    # Its node was split or removed: the label no longer says which node.
                    counts["dropped_by_tree_change"] = counts.get("dropped_by_tree_change", 0) + 1
                    continue
                if translated is not None:
                    label = translated
            if label not in tree and as_path(label):
                # A path of names ("Garden > Tools > Spades"): its node's id, said in the report.
                label = as_path(label)
                counts["labels_as_paths"] = counts.get("labels_as_paths", 0) + 1
            if label not in tree:
                counts["unknown_labels"] += 1
                if (
                    unknown_ids is not None
                    and len(unknown_ids) < UNKNOWN_IDS_SHOWN
                    and label not in unknown_ids
                ):
                    unknown_ids.append(label)
                continue
            digest.update(f"{item.product_id}\0{item.title}\0{label}\n".encode())
            split = item.extra.get("split", "").strip().lower()
            if split not in ("train", "valid", "test"):
                split = "valid" if rng.random() < VALID_SHARE else "train"
            counts[split] = counts.get(split, 0) + 1
            yield item, label, split


def read_labelled(
    feeds: Sequence[Path],
    *,
    tree: CategoryTree,
    project: Path,
    label_column: str = "gold_node",
    random_state: int = 0,
    translation: LabelTranslation | None = None,
    keep: Collection[str] = ("train", "valid", "test"),
) -> LabelledData:
    """Read labelled feeds into train / valid / test lists of (product, node id).

    Args:
        feeds: feed files with a column of node ids.
        tree: labels must be nodes of this tree (others are counted and skipped).
        project: the project folder (feed profiles are reused / saved there).
        label_column: the column holding node ids.
        random_state: seed of the 90/10 split for feeds without a ``split`` column.
        translation: the labels are of an older tree: read them through it (as training did).
        keep: the parts kept in memory (the others are read, split the same way, and dropped:
            a large training feed's held-out tenth without its other rows).

    Raises:
        InputError: a feed without the label column.
    """
    data = LabelledData()
    digest = hashlib.sha256()
    counts = {"unlabelled": 0, "unknown_labels": 0}
    for item, label, split in _labelled_stream(
        feeds,
        tree=tree,
        project=project,
        label_column=label_column,
        random_state=random_state,
        counts=counts,
        digest=digest,
        translation=translation,
    ):
        if split in keep:
            getattr(data, split).append((item, label))
    data.unlabelled, data.unknown_labels = counts["unlabelled"], counts["unknown_labels"]
    data.fingerprint = digest.hexdigest()
    return data


@dataclass
class _LabelledTexts:
    """What training keeps of each labelled product: the four texts and the node id.

    Products themselves are not kept (a million of them would take gigabytes); repeated texts
    (paths, brands, boilerplate descriptions) share one string object.
    """

    title: list[str] = field(default_factory=list)
    path: list[str] = field(default_factory=list)
    brand: list[str] = field(default_factory=list)
    description: list[str] = field(default_factory=list)
    labels: list[str] = field(default_factory=list)

    def add(self, product: Product, label: str, shared: dict[str, str]) -> None:
        texts = product_texts([product])
        self.title.append(texts.title[0])
        self.path.append(shared.setdefault(texts.path[0], texts.path[0]))
        self.brand.append(shared.setdefault(texts.brand[0], texts.brand[0]))
        self.description.append(shared.setdefault(texts.description[0], texts.description[0]))
        self.labels.append(shared.setdefault(label, label))

    def texts(self) -> ProductTexts:
        return ProductTexts(self.title, self.path, self.brand, self.description)


def _read_training_texts(
    feeds: Sequence[Path],
    *,
    tree: CategoryTree,
    project: Path,
    label_column: str,
    extra_examples: Iterable[tuple[Product, str]],
    unknown_ids: list[str] | None = None,
    translation: LabelTranslation | None = None,
) -> tuple[_LabelledTexts, _LabelledTexts, dict[str, int], str]:
    """Stream labelled feeds into compact train / valid texts (test rows are not kept)."""
    train, valid = _LabelledTexts(), _LabelledTexts()
    shared: dict[str, str] = {}
    digest = hashlib.sha256()
    counts = {"read": 0, "rejected": 0, "unlabelled": 0, "unknown_labels": 0}
    for item, label, split in _labelled_stream(
        feeds,
        tree=tree,
        project=project,
        label_column=label_column,
        random_state=0,
        counts=counts,
        digest=digest,
        unknown_ids=unknown_ids,
        translation=translation,
    ):
        if split == "train":
            train.add(item, label, shared)
        elif split == "valid":
            valid.add(item, label, shared)
    if not valid.labels:
        # No validation rows: calibrate on the first tenth of the training rows.
        counts["valid_from_train"] = min(len(train.labels), max(1, len(train.labels) // 10))
        for i in range(max(1, len(train.labels) // 10)):
            if i < len(train.labels):
                valid.title.append(train.title[i])
                valid.path.append(train.path[i])
                valid.brand.append(train.brand[i])
                valid.description.append(train.description[i])
                valid.labels.append(train.labels[i])
    for product, label in extra_examples:
        train.add(product, label, shared)
    return train, valid, counts, digest.hexdigest()


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
    """Choose the path-consensus weight by log-likelihood on validation data.

    Sparse throughout (the classes of each product's likely departments), so that a large
    validation set never becomes a dense (products × classes) matrix.
    """
    column = {c: i for i, c in enumerate(model.classes_.tolist())}
    y = np.array([column.get(label, -1) for label in labels])
    p = model.predict_sparse(texts).tocsr()
    n, width = p.shape
    best = np.asarray(p.argmax(axis=1)).ravel()
    groups: dict[str, list[int]] = {}
    for row, path in enumerate(texts.path):
        if path:
            groups.setdefault(path, []).append(row)
    share_rows, share_cols, share_vals = [], [], []
    blended_rows = np.zeros(n, dtype=bool)
    for rows in groups.values():
        if len(rows) < MIN_PRODUCTS:
            continue
        counts = np.bincount(best[rows], minlength=width)
        nodes = np.flatnonzero(counts)
        for row in rows:
            share_rows.extend([row] * len(nodes))
            share_cols.extend(nodes.tolist())
            share_vals.extend((counts[nodes] / len(rows)).tolist())
        blended_rows[rows] = True
    shares = sp.csr_matrix((share_vals, (share_rows, share_cols)), shape=(n, width))
    keep = sp.diags(np.where(blended_rows, 1.0, 0.0))
    known = y >= 0
    best_w, best_nll, best_acc = 0.0, np.inf, 0.0
    for w in CONSENSUS_WEIGHT_GRID:
        blended = (p - w * (keep @ p) + w * shares).tocsr()
        picked = np.asarray(blended[np.flatnonzero(known), y[known]]).ravel()
        nll = float(-np.log(np.maximum(picked, 1e-12)).mean()) if known.any() else 0.0
        if nll < best_nll:
            best_w, best_nll = w, nll
            best_acc = float((np.asarray(blended.argmax(axis=1)).ravel() == y).mean())
    return best_w, {"valid_accuracy_with_consensus": best_acc}


def fit_model(
    tree: CategoryTree,
    texts: ProductTexts,
    labels: Sequence[str],
    valid_texts: ProductTexts,
    valid_labels: Sequence[str],
    *,
    options: dict[str, Any] | None = None,
    on_stage: Callable[[str], None] | None = None,
) -> CategoryModel:
    """Train and calibrate the model ``catmap train`` saves, choosing its structure.

    With no ``hierarchical`` option and at most :data:`FLAT_MAX_CLASSES` classes, both
    structures are trained and calibrated (the flat one with :data:`FLAT_SETTINGS` where the
    options leave them); the department step is kept when its validation macro-F1
    (``sklearn.metrics.f1_score(average="macro")``) is the higher in
    :data:`STRUCTURE_CONFIDENCE` of paired bootstrap resamples (:func:`department_step_wins`),
    else the flat one. With more classes, or a structure given, one model is trained and
    calibrated, as before. When every class is its own department (a one-level tree), only the
    flat model is trained, whatever was given: the department step would hold one class per
    department. The validation products do not train this model; :func:`train_model` may then
    train the chosen one again with them (:func:`refit_on_all`), keeping what they calibrated.

    Args:
        tree: the category tree.
        texts: training texts.
        labels: their node ids.
        valid_texts: validation texts (calibration and the choice).
        valid_labels: their node ids.
        options: :class:`CategoryModel` keyword arguments.
        on_stage: told each stage.

    Returns:
        The calibrated model.

    Raises:
        ValueError: as :meth:`CategoryModel.fit`.
    """
    from sklearn.metrics import f1_score

    stage = on_stage or (lambda _text: None)
    options = dict(options or {})
    given = options.pop("hierarchical", None)
    choices = [True if given is None else bool(given)]
    if given is None and len(valid_labels) and len(set(labels)) <= FLAT_MAX_CLASSES:
        choices = [True, False]
    flat_only = _one_class_per_department(tree, labels)
    if flat_only:
        # Every class is its own department (a flat list of categories, a one-level tree): a
        # department step would be the flat classifier again, followed by a classifier of one
        # class in each department, which leaves its calibration nothing to fit. Flat only.
        choices = [False]
    trained: dict[bool, tuple[CategoryModel, list[str]]] = {}
    for hierarchical in choices:
        structure = "department step" if hierarchical else "flat"
        stage(f"training ({structure}) on {len(labels):,} products")
        settings = (
            options
            if hierarchical or len(choices) == 1
            else {**copy.deepcopy(FLAT_SETTINGS), **options}
        )
        model = CategoryModel(tree=tree, hierarchical=hierarchical, **settings).fit(texts, labels)
        stage(f"calibrating ({structure}) on {len(valid_labels):,} products")
        model.calibrate(valid_texts, valid_labels)
        if len(choices) == 1:
            if flat_only:
                model.metrics_["structure"] = "flat"
                model.metrics_["structure_reason"] = "each class is its own department"
            return model
        predicted = [str(c) for c in model.predict(valid_texts)]
        model.metrics_["valid_macro_f1"] = float(
            f1_score(list(valid_labels), predicted, average="macro")
        )
        model.metrics_["structure"] = structure
        trained[hierarchical] = (model, predicted)
    (step, step_answers), (flat, flat_answers) = trained[True], trained[False]
    wins = department_step_wins(valid_labels, step_answers, flat_answers)
    chosen = step if wins >= STRUCTURE_CONFIDENCE else flat
    chosen.metrics_["structure_wins"] = wins
    chosen.metrics_["structure_reason"] = (
        f"the department step's validation macro-F1 ({step.metrics_['valid_macro_f1']:.3f}, flat "
        f"{flat.metrics_['valid_macro_f1']:.3f}) was higher in {wins:.0%} of "
        f"{BOOTSTRAP_RESAMPLES} bootstrap resamples of the validation products; the department "
        f"step is kept at {STRUCTURE_CONFIDENCE:.0%} or more"
    )
    return chosen


# The structure choice of :func:`fit_model`: the department step is kept over the flat model
# only when its validation macro-F1 is higher in at least this share of paired bootstrap
# resamples of the validation products. One validation tenth is small: on the Debian set's
# training split, a choice by the higher macro-F1 alone took the department step in one fold of
# five, where flat was better by 0.024 on that fold's held-out fifth. A chosen setting
# (paired bootstrap, one-sided 95%).
STRUCTURE_CONFIDENCE = 0.95
BOOTSTRAP_RESAMPLES = 200


def department_step_wins(
    labels: Sequence[str], step: Sequence[str], flat: Sequence[str], *, seed: int = 0
) -> float:
    """The share of paired bootstrap resamples of the validation products in which the
    department step's macro-F1 is higher than the flat model's.

    Each resample draws the products with replacement; both models are scored on the same
    draw. Macro-F1 as ``sklearn.metrics.f1_score(average="macro")`` computes it: the mean
    over the classes present in the labels or the predictions, F1 of a class without any
    true or predicted product in the draw not counted.
    """
    names = {name: i for i, name in enumerate(sorted({*labels, *step, *flat}))}
    truth = np.array([names[x] for x in labels], dtype=np.int64)
    answers = [np.array([names[x] for x in pred], dtype=np.int64) for pred in (step, flat)]
    classes = len(names)
    rng = np.random.default_rng(seed)
    rows = len(truth)
    wins = 0
    for _ in range(BOOTSTRAP_RESAMPLES):
        draw = rng.integers(0, rows, rows)
        scores = [_macro_f1(truth[draw], answer[draw], classes) for answer in answers]
        wins += scores[0] > scores[1]
    return wins / BOOTSTRAP_RESAMPLES


def _macro_f1(truth: np.ndarray[Any, Any], predicted: np.ndarray[Any, Any], classes: int) -> float:
    right = np.bincount(truth[truth == predicted], minlength=classes)
    actual = np.bincount(truth, minlength=classes)
    said = np.bincount(predicted, minlength=classes)
    present = (actual + said) > 0
    f1 = 2 * right[present] / (actual[present] + said[present])
    return float(f1.mean()) if present.any() else 0.0


# Called before a refit with the calibrated model and its consensus weight; returns what to do
# with the model folder once the refit model is saved (see ``train_model``).
BeforeRefit = Callable[[CategoryModel, dict[str, Any]], Callable[[Path], None]]


# What calibration fits on held-out products (:meth:`CategoryModel.calibrate`): a refit model
# keeps the values its held-out calibration gave.
CALIBRATED = ("temperatures_", "keyword_weight_", "blend_temperature_", "metrics_")


def refit_on_all(
    model: CategoryModel,
    texts: ProductTexts,
    labels: Sequence[str],
    valid_texts: ProductTexts,
    valid_labels: Sequence[str],
) -> CategoryModel:
    """Train the chosen model again on the training and the validation products together.

    The new model has the same settings (the structure chosen on validation included) and keeps
    the calibration the held-out products gave the first one (:data:`CALIBRATED`): their
    predictions by a model that never saw them. Cross-fitting in its simplest form: the
    validation products then teach the model too, and cannot calibrate it, nor onboarding's
    accept threshold, any more (``catmap train --refit``).

    Returns:
        The refit model.
    """
    import copy

    # The settings as given (the tree shared, not copied; a dict of weights copied).
    settings: dict[str, Any] = {
        name: copy.copy(getattr(model, name)) if name != "tree" else model.tree
        for name in inspect.signature(CategoryModel).parameters
    }
    every = ProductTexts(
        texts.title + valid_texts.title,
        texts.path + valid_texts.path,
        texts.brand + valid_texts.brand,
        texts.description + valid_texts.description,
    )
    refit = CategoryModel(**settings).fit(every, [*labels, *valid_labels])
    for name in CALIBRATED:
        setattr(refit, name, copy.deepcopy(getattr(model, name)))
    refit.metrics_["refit_products"] = len(every)
    return refit


def _one_class_per_department(tree: CategoryTree, labels: Sequence[str]) -> bool:
    """Return True when no department holds two of the labels' classes."""
    classes = set(labels)
    return len({tree.department(label).id for label in classes}) == len(classes)


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
    max_unknown_share: float = MAX_UNKNOWN_LABEL_SHARE,
    labels_from: dict[str, str] | None = None,
    refit: bool = False,
    before_refit: BeforeRefit | None = None,
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
        max_unknown_share: above this share of labelled rows naming nodes the tree lacks,
            training stops.
        labels_from: the tree the labels were written for, when it is an older version of
            ``tree`` (:func:`labels_tree_reference`): labels are read through the crosswalk
            between the two (:class:`~catmap.tree.diff.LabelTranslation`), those of split or
            removed nodes dropped and counted. The model folder keeps it, so that onboarding's
            calibration reads them the same way.
        refit: after calibration, train again on the validation products too
            (:func:`refit_on_all`); the model folder says so, and onboarding then takes those
            products as calibration data only through what ``before_refit`` kept.
        before_refit: with ``refit``, called with the calibrated model and its consensus
            weight before it trains again; the function it returns is called with the model
            folder once the refit model is saved (onboarding keeps there the predictions of the
            held-out rows by the model that has not seen them:
            :func:`catmap.jobs.onboard.held_out_recorder`).

    Returns:
        The report.

    Raises:
        InputError: no labelled products, a feed without the label column, or too many labels
            the tree lacks (the error names the share and the first ids).
    """
    stage = on_stage or (lambda _text: None)
    started = time.perf_counter()
    stage("reading labelled products")
    unknown_ids: list[str] = []
    if labels_from:
        stage(f"comparing tree {labels_from['version']} of the labels with tree {tree.version}")
    translation = labels_translation(labels_from, tree)
    train, valid, counts, fingerprint = _read_training_texts(
        feeds,
        tree=tree,
        project=project,
        label_column=label_column,
        extra_examples=extra_examples,
        unknown_ids=unknown_ids,
        translation=translation,
    )
    unknown_share = _check_unknown_labels(
        counts, unknown_ids, tree, feeds, label_column, max_unknown_share
    )
    labels = train.labels
    if len(set(labels)) < 2:
        _too_few_classes(labels, counts, tree, feeds, label_column)
    texts = train.texts()
    options = dict(model_options or {})
    cap = options.get("max_per_class", default_max_per_class())
    per_class = Counter(labels)
    # Labels on inner nodes train those nodes as classes: their products are mapped to the
    # inner node, never to a leaf below it. Allowed, and said in the report.
    inner = sorted(node for node in per_class if not tree.is_leaf(node))
    # The model keeps min(count, cap) products of each class (a seeded sample): say so.
    used = {label: min(count, cap) if cap else count for label, count in per_class.items()}
    stage(f"training on {sum(used.values()):,} of {len(labels):,} products")
    valid_texts = valid.texts()
    valid_labels = valid.labels
    model = fit_model(
        tree, texts, labels, valid_texts, valid_labels, options=options, on_stage=stage
    )
    consensus_weight, consensus_metrics = _choose_consensus_weight(model, valid_texts, valid_labels)
    model.metrics_.update(consensus_metrics)
    write_held_out = None
    if refit and counts.get("valid_from_train"):
        # The validation products are training products already: nothing to train again on.
        refit = False
        model.metrics_["refit_skipped"] = "the validation products are training products"
    if refit:
        if before_refit is not None:
            stage(f"mapping the {len(valid_labels):,} held-out products before the refit")
            write_held_out = before_refit(model, {"consensus_weight": consensus_weight})
        stage(f"training again on {len(labels) + len(valid_labels):,} products (refit)")
        model = refit_on_all(model, texts, labels, valid_texts, valid_labels)
    del texts
    elapsed = time.perf_counter() - started
    stage("saving the model")
    save_model(
        model,
        model_dir,
        extra={
            "consensus_weight": consensus_weight,
            "training_data_fingerprint": fingerprint,
            "training_products": len(labels),
            "training_seconds": round(elapsed, 2),
            "label_column": label_column,
            "training_feeds": [
                {
                    "path": str(Path(f).resolve()),
                    "bytes": Path(f).stat().st_size,
                    "fingerprint": file_fingerprint(f),
                }
                for f in feeds
            ],
            **({"labels_tree": labels_from} if labels_from else {}),
            **({"refit_feeds": [str(Path(f).resolve()) for f in feeds]} if refit else {}),
        },
    )
    if write_held_out is not None:
        write_held_out(model_dir)
    return TrainingReport(
        feeds=[str(f) for f in feeds],
        products_train=len(labels),
        products_valid=len(valid.labels),
        classes=len(set(labels)),
        unknown_labels=counts["unknown_labels"],
        unlabelled=counts["unlabelled"],
        metrics={**model.metrics_, "consensus_weight": consensus_weight},
        training_seconds=round(elapsed, 2),
        model_dir=str(model_dir),
        model_bytes=folder_bytes(model_dir),
        tree_version=tree.version,
        tree_file=str(tree.path or ""),
        rows_read=counts["read"],
        rejected=counts["rejected"],
        unknown_share=round(unknown_share, 4),
        unknown_examples=unknown_ids,
        max_per_class=cap,
        left_out_by_cap=len(labels) - sum(used.values()),
        products_used=sum(used.values()),
        per_class=_class_summary(list(used.values())),
        inner_labels=sum(count for node, count in per_class.items() if node in inner),
        inner_examples=[f"{node} {tree[node].name}" for node in inner[:UNKNOWN_IDS_SHOWN]],
        labels_as_paths=counts.get("labels_as_paths", 0),
        labels_translation=translation.to_dict() if translation is not None else {},
        refit=refit,
    )


def _class_summary(sizes: list[int]) -> dict[str, float]:
    """Classes and the min / median / max of products used per class."""
    if not sizes:
        return {"classes": 0, "min": 0, "median": 0, "max": 0}
    return {
        "classes": len(sizes),
        "min": min(sizes),
        "median": float(statistics.median(sizes)),
        "max": max(sizes),
    }


def _check_unknown_labels(
    counts: dict[str, int],
    unknown_ids: Sequence[str],
    tree: CategoryTree,
    feeds: Sequence[Path],
    label_column: str,
    max_share: float,
) -> float:
    """Return the share of labelled rows whose node the tree lacks; stop when it is too high.

    Raises:
        InputError: the share is above ``max_share``: the labels likely belong to another tree.
    """
    unknown = counts["unknown_labels"]
    labelled = unknown + sum(
        counts[key] for key in ("train", "valid", "test") if key in counts
    )
    share = unknown / labelled if labelled else 0.0
    if share > max_share:
        path = feeds[0] if len(feeds) == 1 else None
        misread = _misread_labels(unknown_ids, tree)
        if misread is not None:
            message, hint = misread
            raise InputError(
                f"{share:.1%} of the labelled rows ({unknown:,} of {labelled:,}) are not node "
                f"ids of tree version {tree.version}: {message}",
                path=path,
                field=label_column,
                hint=hint,
            )
        where = f"{tree.path}" if tree.path else "the tree in use"
        raise InputError(
            f"{share:.1%} of the labelled rows ({unknown:,} of {labelled:,}) name node ids "
            f"that tree version {tree.version} ({where}) lacks, first: "
            f"{', '.join(unknown_ids)}; the labels likely belong to another tree",
            path=feeds[0] if len(feeds) == 1 else None,
            field=label_column,
            hint=f"train on the labels' own tree (--tree-file FILE), read them through the "
            "changes from an older tree they were written for (--labels-tree VERSION|FILE), fix "
            f"the label column, or raise --max-unknown-share (now {max_share:g})",
        )
    return share


def _misread_labels(labels: Sequence[str], tree: CategoryTree) -> tuple[str, str] | None:
    """Say what labels the tree lacks are when they still name its nodes: node names or paths
    instead of ids, or ids a spreadsheet wrote as decimals ("111.0"). None when they do not.

    Returns:
        (what the labels are, with an example; what to do), or None.
    """
    names: dict[str, list[str]] = {}
    for node in tree:
        names.setdefault(" ".join(node.name.split()).casefold(), []).append(node.id)
    for label in labels:
        whole, dot, zeros = label.partition(".")
        if dot and whole in tree and zeros and not zeros.strip("0"):
            return (
                f"they look like ids written as decimals ('{label}' is node {whole})",
                "save the label column as whole numbers or text: a spreadsheet adds '.0' to "
                "numbers",
            )
        found = names.get(" ".join(label.split()).casefold())
        if found is None and ">" in label:
            try:
                found = [tree.find_path(label).id]
            except UnknownNode:
                found = None
        if found:
            shown = found[0] if len(found) == 1 else " or ".join(found)
            return (
                f"they look like node names or paths, not ids ('{label}' is node {shown})",
                "write the node id in the label column; `catmap tree show` and `catmap tree "
                "search TEXT` give the ids",
            )
    return None


def _too_few_classes(
    labels: Sequence[str],
    counts: dict[str, int],
    tree: CategoryTree,
    feeds: Sequence[Path],
    label_column: str,
) -> NoReturn:
    """Stop training that has fewer than two nodes to learn, saying why.

    Raises:
        InputError: always; the message says whether the label column is empty, or which one
            node every product has.
    """
    path = feeds[0] if len(feeds) == 1 else None
    if not labels and counts["unlabelled"]:
        raise InputError(
            f"the label column '{label_column}' is empty in all {counts['unlabelled']:,} rows "
            "read; training needs labelled products of at least two different nodes",
            path=path,
            field=label_column,
            hint="fill it with node ids of the tree, or name the column that holds them with "
            "--label-column",
        )
    if not labels:
        raise InputError(
            "no labelled products to train on; training needs products of at least two "
            "different nodes",
            path=path,
            field=label_column,
            hint="check the label column holds node ids of the tree",
        )
    node = labels[0]
    raise InputError(
        f"every labelled training product ({len(labels):,}) is labelled {node} "
        f"({tree.path_text(node)}); training needs products of at least two different nodes",
        path=path,
        field=label_column,
        hint="add labelled products of the tree's other nodes",
    )
