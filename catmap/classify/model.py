"""The mapping model: weighted TF-IDF features, a linear model per level, calibrated, blended.

Structure (hierarchical decomposition): one linear classifier picks the department, and one per
department picks the class (leaf) inside it; a leaf's probability is
``P(department) · P(leaf | department)``. Each level is trained only on what it needs (a
department's classifier sees only that department's products), which makes training much faster
than one classifier over every leaf, and the learned weights are naturally sparse (a word never
seen in a department gets weight 0 there); tiny weights are pruned as well.

Confidence: each level's scores are temperature-scaled (one temperature per level, fitted on the
validation split), then blended with the keyword mapper's probabilities inside each department,
``p = P(department)·[(1 − w)·P_model(leaf | department) + w·P_keywords(leaf | department)]``,
with ``w`` chosen on the validation split, and a last temperature on the blend. The department
classifier is right far more often than either leaf ranker, so keywords help most inside it.

Speed: a product is scored class by class only in its likely departments (probability at least
``department_floor``, 1.04 departments a product on the demo catalog); the classes of the other
departments share their department's (small) probability evenly.
"""

from __future__ import annotations

import multiprocessing
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from catmap.classify._kernels import (
    dense_rows,
    pack_rows,
    score_columns_dense,
    score_new_words,
    score_rows,
    score_rows_dense,
    score_words_dense,
)
from catmap.classify._wordcache import WordCachedTfidf
from catmap.classify.calibration import expected_calibration_error, fit_temperature, softmax
from catmap.classify.features import ProductFeaturizer, ProductTexts
from catmap.classify.keywords import KeywordMapper
from catmap.errors import ModelNotTrained
from catmap.tree.taxonomy import CategoryTree

__all__ = ["CLASSIFIERS", "CategoryModel"]

CLASSIFIERS = ("linear_svc", "sgd", "logistic")
_ALL = "*"  # the single group of a flat (non-hierarchical) model
# The data decides how much keywords count, anywhere from nothing to everything.
KEYWORD_WEIGHT_GRID = (0.0, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 1.0)
# Departments below this probability are not scored class by class (see CategoryModel._parts).
# 1e-2: 1.04 departments a product on the demo test split (1e-3: 1.13), at the same accuracy.
DEPARTMENT_FLOOR = 1e-2
# The character n-grams a trained model's keyword mapper compares with the tree's words:
# 4-grams only, where the cold-start mapper and re-mapping compare 3- to 5-grams. On the demo's
# unseen validation retailers (benchmarks/bench_model.py, seed 0), 4-grams gave the same
# accuracy as 3-5 (0.947) and auto-accepted more (0.865 against 0.848, accepted error 0.94%
# against 0.85%); 4-5 gave 0.946 and 0.849. In the Debian sections' cross-validation the
# keyword blend weighs 0 in every fold, so the range changes nothing there. Every product's
# title goes through this mapper when a model maps: 4-grams are a third of the n-grams.
# Folders keep the range they were trained with.
MODEL_KEYWORD_NGRAM_RANGE = (4, 4)
# Sharpness of the keyword similarities inside a department, in the blend.
KEYWORD_BLEND_TEMPERATURE = 0.04
# At most this many validation products calibrate (a seeded sample of larger sets).
CALIBRATION_MAX = 30_000
_FLOOR = 1e-12

Array = np.ndarray[Any, Any]


def _linear(classifier: str, c: float, random_state: int, n: int) -> Any:
    # Imported here: mapping with a saved model never fits, and scikit-learn's import is slow.
    from sklearn.linear_model import LogisticRegression, SGDClassifier
    from sklearn.svm import LinearSVC

    if classifier == "linear_svc":
        return LinearSVC(C=c, random_state=random_state, dual=True, max_iter=2000)
    if classifier == "sgd":
        return SGDClassifier(
            loss="hinge",
            alpha=1.0 / (c * max(n, 1)),
            max_iter=30,
            tol=None,
            random_state=random_state,
        )
    return LogisticRegression(C=c * 10, max_iter=300)


class CategoryModel:
    """Map product texts to class (leaf) probabilities.

    Args:
        tree: the category tree the labels belong to.
        classifier: "linear_svc", "sgd" or "logistic".
        C: regularisation strength (larger = less regularised).
        hierarchical: department classifier × per-department classifiers (else one flat one).
        feature_weights: block name -> weight (see :mod:`catmap.classify.features`).
        min_df: minimum document frequency of a feature term.
        max_features: per block vocabulary cap.
        prune_below: weights with a smaller absolute value are dropped.
        keyword_prune_below: in the blend, keyword document entries (L2-normalised leaf
            documents) below this are left out: the common n-grams that weigh little in every
            document, but that most products share and so cost the most to score.
        department_floor: departments less probable than this for a product are not scored
            class by class; their classes share the department's probability evenly.
        keyword_weight: fixed keyword blend weight; None = chosen on validation data.
        max_per_class: train on at most this many products of one class (a seeded sample;
            None = all, the default). A cap trades accuracy for training time: past a few
            hundred examples a linear class moves little, but on a set with a few large
            classes a cap throws their evidence away.
        path_noise: share of training products whose retailer path is swapped for the path
            of another random training product (seeded), so that the model learns that a
            path can mislead and leans on the title where they disagree.
        tree_examples: also train on one short example per term of each leaf in every
            language of the tree (the term as the title, no path), so that the tree's own
            words are known even where no labelled product uses them.
        department_sample: the department classifier learns from at most this many of the
            training products (a seeded sample; None = all).
        random_state: seed.
        n_jobs: processes training the per-department classifiers (forked; 1 = in this
            process).

    Attributes:
        featurizer_: the fitted :class:`ProductFeaturizer`.
        keywords_: the fitted :class:`KeywordMapper`.
        classes_: ids of the probability columns (all tree leaves, then any other labelled node).
        groups_: group (department) ids; ``group_coef_`` (features, groups) CSR and
            ``group_intercept_`` score them.
        linear_classes_: column index (in ``classes_``) of each linear class; ``class_group_``
            its group index; ``class_coef_`` (features, linear classes) CSR and
            ``class_intercept_`` score them.
        temperatures_: (group level, class level) temperatures (1.0 before calibration).
        keyword_weight_: the blend weight of the keyword mapper.
        blend_temperature_: temperature applied to the blend's log-probabilities.
        metrics_: validation metrics (after :meth:`calibrate`).
        product_words_: per title word of the featurizer's vocabulary, whether a labelled
            product's title used it (False: only the tree's own examples did); None for a
            model saved before it was kept.
    """

    def __init__(
        self,
        *,
        tree: CategoryTree,
        classifier: str = "linear_svc",
        C: float = 0.5,
        hierarchical: bool = True,
        feature_weights: dict[str, float] | None = None,
        min_df: int = 2,
        max_features: int | None = 400_000,
        prune_below: float = 0.05,
        keyword_prune_below: float = 0.02,
        department_floor: float = DEPARTMENT_FLOOR,
        keyword_weight: float | None = None,
        max_per_class: int | None = None,
        path_noise: float = 0.0,
        tree_examples: bool = True,
        department_sample: int | None = 300_000,
        random_state: int = 0,
        n_jobs: int = 2,
    ) -> None:
        self.tree = tree
        self.classifier = classifier
        self.C = C
        self.hierarchical = hierarchical
        self.feature_weights = feature_weights
        self.min_df = min_df
        self.max_features = max_features
        self.prune_below = prune_below
        self.keyword_prune_below = keyword_prune_below
        self.department_floor = department_floor
        self.keyword_weight = keyword_weight
        self.max_per_class = max_per_class
        self.path_noise = path_noise
        self.tree_examples = tree_examples
        self.department_sample = department_sample
        self.random_state = random_state
        self.n_jobs = n_jobs

    def __getstate__(self) -> dict[str, Any]:
        # The per-word scores are numbered by this process's word index: not sent elsewhere.
        return {k: v for k, v in self.__dict__.items() if k != "_word_scores"}

    # ---- training -------------------------------------------------------------------------

    def _group_of(self, node_id: str) -> str:
        return self.tree.department(node_id).id if self.hierarchical else _ALL

    def fit(self, texts: ProductTexts, labels: Sequence[str]) -> CategoryModel:
        """Train the featurizer and the linear classifiers.

        Args:
            texts: training product texts.
            labels: the node id of each product (must be in the tree).

        Returns:
            self.

        Raises:
            ValueError: bad parameters, mismatched lengths, fewer than two classes.
            UnknownNode: a label that is not in the tree.
        """
        labels = self._check_training_input(texts, labels)
        rng = np.random.default_rng(self.random_state)
        if self.max_per_class is not None:
            keep = _cap_per_class(labels, self.max_per_class, rng)
            if len(keep) < len(labels):
                texts, labels = texts.subset(keep), [labels[i] for i in keep]
        if self.path_noise > 0:
            texts = _swap_paths(texts, self.path_noise, rng)
        products = len(texts)  # the rows before the tree's own examples
        if self.tree_examples:
            texts, labels = _with_tree_examples(texts, labels, self.tree)

        leaves = [node.id for node in self.tree.leaves()]
        extra = sorted(set(labels) - set(leaves))
        self.classes_ = np.array(leaves + extra)

        self.featurizer_ = ProductFeaturizer(
            weights=self.feature_weights, min_df=self.min_df, max_features=self.max_features
        )
        features = self.featurizer_.fit_transform(texts)
        self.product_words_ = _used_by_rows(
            features, products, self.featurizer_.block_slices().get("title_words")
        )

        group_of = {label: self._group_of(label) for label in set(labels)}
        groups = sorted(set(group_of.values()), key=lambda g: (g == _ALL, g))
        group_index = {g: i for i, g in enumerate(groups)}
        row_group = np.array([group_index[group_of[label]] for label in labels])
        self.groups_ = np.array(groups)
        self._fit_group_level(features, row_group, rng)
        self._fit_class_level(features, np.array(labels), row_group)

        self.temperatures_ = (1.0, 1.0)
        self.keywords_ = KeywordMapper(tree=self.tree, ngram_range=MODEL_KEYWORD_NGRAM_RANGE).fit()
        self.keyword_weight_ = float(self.keyword_weight or 0.0)
        self.blend_temperature_ = 1.0
        self.keyword_blend_temperature_ = KEYWORD_BLEND_TEMPERATURE
        self.metrics_: dict[str, Any] = {}
        return self

    def _check_training_input(self, texts: ProductTexts, labels: Sequence[str]) -> list[str]:
        """Check the parameters and the labels; return the labels as strings.

        Raises:
            ValueError: bad parameters, mismatched lengths, fewer than two classes.
            UnknownNode: a label that is not in the tree.
        """
        if self.classifier not in CLASSIFIERS:
            raise ValueError(f"classifier must be one of {', '.join(CLASSIFIERS)}")
        if self.C <= 0:
            raise ValueError("C must be > 0")
        if self.prune_below < 0 or self.keyword_prune_below < 0:
            raise ValueError("prune_below and keyword_prune_below must be >= 0")
        if not 0 < self.department_floor < 1:
            raise ValueError("department_floor must be between 0 and 1")
        if len(texts) != len(labels):
            raise ValueError("one label per product is needed")
        checked = [str(label) for label in labels]
        for label in set(checked):
            self.tree[label]  # raises UnknownNode
        if len(set(checked)) < 2:
            raise ValueError("training needs products of at least two different nodes")
        if not 0 <= self.path_noise <= 1:
            raise ValueError("path_noise must be between 0 and 1")
        for name in ("max_per_class", "department_sample"):
            value = getattr(self, name)
            if value is not None and value < 1:
                raise ValueError(f"{name} must be at least 1 (or None)")
        return checked

    def _fit_group_level(
        self, features: sp.csr_matrix, row_group: Array, rng: np.random.Generator
    ) -> None:
        """Train the group (department) classifier on a sample of the rows."""
        n_groups = len(self.groups_)
        if n_groups > 1:
            rows = np.arange(len(row_group))
            if self.department_sample is not None and len(rows) > self.department_sample:
                rows = np.sort(rng.choice(len(rows), self.department_sample, replace=False))
            coef, intercept = self._train_level(features[rows], row_group[rows], n_groups)
        else:
            coef = sp.csr_matrix((features.shape[1], 1), dtype=np.float32)
            intercept = np.zeros(1, dtype=np.float32)
        self.group_coef_, self.group_intercept_ = coef, intercept

    def _fit_class_level(
        self, features: sp.csr_matrix, label_array: Array, row_group: Array
    ) -> None:
        """Train one classifier per group over that group's nodes, groups in parallel."""
        n_features = features.shape[1]
        column = {c: i for i, c in enumerate(self.classes_.tolist())}
        class_columns: list[int] = []
        class_groups: list[int] = []
        jobs = []
        for g in range(len(self.groups_)):
            rows = np.flatnonzero(row_group == g)
            group_labels = sorted(set(label_array[rows].tolist()))
            class_columns.extend(column[label] for label in group_labels)
            class_groups.extend([g] * len(group_labels))
            local = {label: i for i, label in enumerate(group_labels)}
            y = np.array([local[label] for label in label_array[rows]])
            jobs.append((rows, y, len(group_labels)))

        one_class = (sp.csr_matrix((n_features, 1), dtype=np.float32), np.zeros(1, np.float32))
        ordered: list[tuple[sp.csr_matrix, Array]] = [one_class] * len(jobs)
        # Largest first, so that the last job to start is a small one.
        todo = sorted(
            (i for i, job in enumerate(jobs) if job[2] > 1), key=lambda i: -len(jobs[i][0])
        )
        for i, trained in zip(todo, _train_groups(self, features, jobs, todo), strict=True):
            ordered[i] = trained
        coefs = [c for c, _ in ordered]
        intercepts = [b for _, b in ordered]
        self.linear_classes_ = np.array(class_columns, dtype=np.int64)
        self.class_group_ = np.array(class_groups, dtype=np.int64)
        self.class_coef_ = sp.hstack(coefs, format="csr", dtype=np.float32)
        self.class_intercept_ = np.concatenate(intercepts).astype(np.float32)

    def _train_level(
        self, features: sp.csr_matrix, y: Array, k: int
    ) -> tuple[sp.csr_matrix, Array]:
        """Fit one linear classifier; return its (features, k) pruned weights and intercepts."""
        model = _linear(self.classifier, self.C, self.random_state, features.shape[0])
        model.fit(features, y)
        coef = np.asarray(model.coef_, dtype=np.float32)
        intercept = np.atleast_1d(np.asarray(model.intercept_, dtype=np.float32))
        if coef.shape[0] == 1 and k == 2:
            # A binary classifier scores only the second class; [0, s] keeps the softmax exact.
            coef = np.vstack([np.zeros_like(coef), coef])
            intercept = np.array([0.0, intercept[0]], dtype=np.float32)
        coef[np.abs(coef) < self.prune_below] = 0.0
        return sp.csr_matrix(coef.T), intercept

    # ---- scoring --------------------------------------------------------------------------

    def _check(self) -> None:
        if not hasattr(self, "class_coef_"):
            raise ModelNotTrained("the model is not trained", hint="run `catmap train` first")

    def prepare(self) -> CategoryModel:
        """Build what scoring derives from the learned state, before the first chunk needs it.

        The fast vectorizers and the compiled loops are made (or loaded from Numba's disk
        cache) on first use: most of a second that otherwise lands on the first chunk of a
        feed. Scoring one placeholder product does all of it. A department's weights are
        regrouped when a product first needs them (:meth:`prepare_departments` does all).

        Returns:
            self.
        """
        self._check()
        self.top_k(ProductTexts(["placeholder product"], ["placeholder"], [""], [""]), 1)
        return self

    def prepare_departments(self) -> CategoryModel:
        """Regroup every department's weights now (each is otherwise regrouped on first need).

        Before worker processes fork: they then share one copy rather than each building its
        own.

        Returns:
            self.
        """
        self._check()
        self._layout().complete()
        return self

    def scores(self, texts: ProductTexts) -> tuple[Array, Array]:
        """Return raw (group scores, class scores) of the linear part, before any softmax."""
        self._check()
        features = self.featurizer_.transform(texts)
        return self.scores_from_features(features)

    def scores_from_features(self, features: sp.csr_matrix) -> tuple[Array, Array]:
        """As :meth:`scores`, from an already computed feature matrix."""
        self._check()
        group = features @ self._layout().group_coef + self.group_intercept_
        klass = (features @ self.class_coef_).toarray() + self.class_intercept_
        return group, klass

    def linear_proba(
        self, group: Array, klass: Array, temperatures: tuple[float, float] | None = None
    ) -> Array:
        """Return (n, linear classes) probabilities P(group)·P(class | group)."""
        t_group, t_class = temperatures or self.temperatures_
        p_group = softmax(group, t_group)
        result = np.empty(klass.shape, dtype=np.float64)
        for g in range(len(self.groups_)):
            cols = np.flatnonzero(self.class_group_ == g)
            result[:, cols] = softmax(klass[:, cols], t_class) * p_group[:, [g]]
        return result

    def _expand(self, linear: Array) -> Array:
        full = np.zeros((linear.shape[0], len(self.classes_)), dtype=np.float64)
        full[:, self.linear_classes_] = linear
        return full

    def _layout(self) -> _Layout:
        # Derived from the learned state, not learned itself: rebuilt when the weights change.
        layout: _Layout | None = self.__dict__.get("_layout_cache")
        if layout is None or layout.class_coef is not self.class_coef_:
            layout = self.__dict__["_layout_cache"] = _Layout.build(self)
        return layout

    def _parts(self, texts: ProductTexts, *, keywords: bool) -> _Parts:
        """Score each product in its likely departments only.

        A department whose probability is below ``department_floor`` cannot hold a class
        above that probability, so its classes are not scored: they share the department's
        probability evenly. This skips the per-department classifiers (and keyword documents)
        of the ~18 unlikely departments of every product, the bulk of the work.
        """
        self._check()
        layout = self._layout()
        by_words = self._words_block(layout)
        # The feature blocks are read in turn rather than stacked into one matrix (a copy).
        skip = frozenset({_WORDS_BLOCK}) if by_words else frozenset()
        features = self.featurizer_.transform_blocks(texts, skip=skip)
        n = len(texts)
        if len(self.groups_) == 1:
            # One group (a flat model): a softmax over one finite score is exactly 1.
            p_group: Array = np.ones((n, 1))
        else:
            group = np.repeat(self.group_intercept_[None, :].astype(np.float64), n, axis=0)
            for matrix, start in features:
                group += matrix @ layout.group_coef[start : start + matrix.shape[1]]
            p_group = softmax(group, self.temperatures_[0], in_place=True)
        selected = p_group >= self.department_floor
        selected[np.arange(n), p_group.argmax(axis=1)] = True
        query = self.keywords_.query(texts) if keywords else None
        by_column: list[tuple[sp.csc_matrix, int]] | None = None
        blocks = []
        for g in range(layout.n_groups):
            rows = np.flatnonzero(selected[:, g])
            if not len(rows):
                continue
            part = layout.part(g)
            if part.dense is not None:
                if by_column is None:
                    by_column = [(matrix.tocsc(), start) for matrix, start in features]
                out_row = np.full(n, -1, dtype=np.int64)
                out_row[rows] = np.arange(len(rows))
                dense = np.repeat(part.intercept[None, :].astype(np.float32), len(rows), axis=0)
                for matrix, start in by_column:
                    x = (matrix.indptr, matrix.indices, matrix.data)
                    score_columns_dense(*x, out_row, *part.dense, dense, start)
                if by_words:
                    self._score_words(texts, part.dense, out_row, dense)
                scores = dense.astype(np.float64)
            else:
                assert part.coef is not None
                scores = np.repeat(part.intercept[None, :].astype(np.float64), len(rows), axis=0)
                for matrix, start in features:
                    x = (matrix.indptr, matrix.indices, matrix.data)
                    score_rows(*x, rows, *part.coef, scores, start)
            share = p_group[rows, g][:, None]
            probabilities = softmax(scores, self.temperatures_[1], in_place=True)
            linear = _placed(probabilities, part.linear_pos, len(part.columns), share)
            keyword = None
            if query is not None and len(part.keyword_pos):
                sims = np.zeros((len(rows), len(part.keyword_pos)))
                x = (query.indptr, query.indices, query.data)
                if part.documents_dense is not None:
                    score_rows_dense(*x, rows, *part.documents_dense, sims)
                else:
                    assert part.documents_t is not None
                    score_rows(*x, rows, *part.documents_t, sims)
                similar = softmax(sims, self.keyword_blend_temperature_, in_place=True)
                keyword = _placed(similar, part.keyword_pos, len(part.columns), share)
            blocks.append(_Block(g, rows, linear, keyword))
        return _Parts(n, p_group, selected, blocks)

    def _words_block(self, layout: _Layout) -> bool:
        """Whether the title n-grams are scored word by word (:func:`score_words_dense`).

        Only for a flat model whose weights are a dense block (one group, so the department
        score needs no n-gram matrix either), and while the per-word scores fit the memory
        the dense block may take.
        """
        if layout.n_groups != 1 or len(self.groups_) != 1:
            return False
        dense = layout.part(0).dense
        if dense is None:
            return False
        found = self.featurizer_.word_cached_block(_WORDS_BLOCK)
        if found is None or found[0].vectorizer.norm != "l2" or not found[0].vectorizer.use_idf:
            return False
        k = dense[1].shape[1]
        return found[0].max_words * k * 4 <= DENSE_MAX_BYTES

    def _score_words(
        self, texts: ProductTexts, dense: tuple[Array, Array], out_row: Array, out: Array
    ) -> None:
        found = self.featurizer_.word_cached_block(_WORDS_BLOCK)
        assert found is not None
        cache, start, weight = found
        offsets, numbers, rows = cache.cached_words(texts.field(_WORDS_FIELD))
        row_of, block = dense
        # Each cached word's scores, kept while the word cache keeps its numbers and the
        # weights stay the same.
        scores: _WordScores | None = self.__dict__.get("_word_scores")
        if scores is None or not scores.holds(cache, block):
            scores = self.__dict__["_word_scores"] = _WordScores(cache, block)
        scores.grow(rows.n_rows)
        # The batch's new words get their scores feature by feature, each weight row fetched
        # once for all of them (the kernel would fetch it once per word holding it).
        new = np.zeros(len(scores.ready), dtype=bool)
        new[numbers] = True
        new[scores.ready == 1] = False
        need = np.flatnonzero(new)
        if len(need):
            # The new words' entries get their idf on the way (the usual case: the words
            # scored now are the rows the cache added last).
            entry_idf, unfilled = rows.idf_to_fill()
            score_new_words(
                need,
                rows.indptr,
                rows.indices,
                rows.data,
                cache.idf,
                row_of,
                block,
                start,
                scores.scores,
                scores.ready,
                entry_idf,
            )
            tail = rows.n_rows - unfilled
            if tail <= len(need) and (tail == 0 or need[-tail] == unfilled):
                rows.idf_filled()  # every row from the first unfilled one on was scored
        vectorizer = cache.vectorizer
        score_words_dense(
            offsets,
            numbers,
            rows.indptr,
            rows.indices,
            rows.data,
            rows.entry_idf,
            bool(vectorizer.sublinear_tf),
            weight,
            row_of,
            block,
            start,
            scores.scores,
            scores.ready,
            out_row,
            out,
        )

    def _final(self, parts: _Parts, w: float, t_blend: float) -> tuple[list[Array], Array, Array]:
        """Blend, apply the final temperature; return per-block values, row sums, rest values.

        The final temperature acts on log-probabilities: ``p ∝ max(p, 1e-12) ** (1 / T)``.
        The blocks' arrays are used up: the values are computed in them, in place (the same
        arithmetic as with new arrays).
        """
        layout = self._layout()
        inv_t = 1.0 / t_blend
        total = np.zeros(parts.n, dtype=np.float64)
        values = []
        for block in parts.blocks:
            powered = block.linear
            if block.keyword is not None and w != 0:
                powered *= 1.0 - w
                keyword = block.keyword
                keyword *= w
                powered += keyword
            np.maximum(powered, _FLOOR, out=powered)
            powered **= inv_t
            total[block.rows] += powered.sum(axis=1)
            values.append(powered)
        # Unscored departments: their classes share the department's probability evenly.
        sizes = layout.group_sizes[None, :]
        rest = np.where(parts.selected, 0.0, np.maximum(parts.p_group / sizes, _FLOOR) ** inv_t)
        total += (rest * sizes).sum(axis=1) + layout.ungrouped * _FLOOR**inv_t
        return values, total, rest

    def predict_sparse(self, texts: ProductTexts) -> sp.csr_matrix:
        """Return (n, classes) probabilities of the classes of each product's likely departments.

        The classes left out (departments below ``department_floor``) hold the small rest;
        :meth:`predict_proba` fills them in.
        """
        matrix, _, _ = self._sparse_with_rest(texts)
        return matrix

    def _sparse_with_rest(self, texts: ProductTexts) -> tuple[sp.csr_matrix, Array, Array]:
        self._check()
        layout = self._layout()
        parts = self._parts(texts, keywords=self.keyword_weight_ > 0)
        values, total, rest = self._final(parts, self.keyword_weight_, self.blend_temperature_)
        rows, cols, data = [], [], []
        for block, powered in zip(parts.blocks, values, strict=True):
            columns = layout.part(block.group).columns
            rows.append(np.repeat(block.rows, len(columns)))
            cols.append(np.tile(columns, len(block.rows)))
            data.append((powered / total[block.rows][:, None]).ravel())
        matrix = sp.csr_matrix(
            (
                np.concatenate(data) if data else np.zeros(0),
                (
                    np.concatenate(rows) if rows else np.zeros(0, np.int64),
                    np.concatenate(cols) if cols else np.zeros(0, np.int64),
                ),
            ),
            shape=(parts.n, len(self.classes_)),
        )
        return matrix, rest / total[:, None], _FLOOR ** (1.0 / self.blend_temperature_) / total

    def predict_proba(self, texts: ProductTexts) -> Array:
        """Return (n, classes) calibrated probabilities (linear model blended with keywords)."""
        self._check()
        layout = self._layout()
        matrix, rest, floor = self._sparse_with_rest(texts)
        # Every class first gets its department's even share (or the floor), then the scored
        # classes are written over it.
        fill = np.concatenate([rest, floor[:, None]], axis=1)
        dense = fill[:, layout.class_group]
        coo = matrix.tocoo()
        dense[coo.row, coo.col] = coo.data
        return dense

    def top_k(self, texts: ProductTexts, k: int = 10) -> tuple[Array, Array]:
        """Return each product's k most probable class columns and probabilities, best first.

        Same answers as sorting :meth:`predict_proba` rows, without the dense matrix: the k best
        of each scored department, then the k best of those.
        """
        self._check()
        layout = self._layout()
        parts = self._parts(texts, keywords=self.keyword_weight_ > 0)
        values, total, _ = self._final(parts, self.keyword_weight_, self.blend_temperature_)
        n, k = parts.n, min(k, len(self.classes_))
        if k == 1:
            return self._top_one(texts, parts, values, total)
        if len(parts.blocks) == 1 and len(parts.blocks[0].rows) == n:
            # One department scored for every row (a flat model): each row's k best are its
            # block's k best, sorted in the row itself (the order of the sort below).
            columns = layout.part(parts.blocks[0].group).columns
            powered = values[0]
            if len(columns) > k:
                best = np.argpartition(-powered, k - 1, axis=1)[:, :k]
                picked = np.take_along_axis(powered, best, axis=1) / total[:, None]
                order = np.argsort(-picked, axis=1, kind="stable")
                best = np.take_along_axis(best, order, axis=1)
                picked = np.take_along_axis(picked, order, axis=1)
                return columns[best].astype(np.int32), picked.astype(np.float32)
        # Each row's candidates (the k best of each department scored for it), in the order the
        # departments were scored, side by side in a padded row; then each row is sorted in
        # itself, stably: a tie goes to the department scored first.
        widths = [min(k, len(layout.part(block.group).columns)) for block in parts.blocks]
        counts = np.zeros(n, dtype=np.int64)
        for block, width in zip(parts.blocks, widths, strict=True):
            counts[block.rows] += width
        room = max(int(counts.max()) if n else 0, k)
        cand_val = np.full((n, room), -np.inf)
        cand_col = np.zeros((n, room), dtype=np.int64)
        filled = np.zeros(n, dtype=np.int64)
        for block, powered, width in zip(parts.blocks, values, widths, strict=True):
            columns = layout.part(block.group).columns
            if width < len(columns):
                best = np.argpartition(-powered, width - 1, axis=1)[:, :width]
            else:
                best = np.broadcast_to(np.arange(width), powered.shape)
            at = filled[block.rows, None] + np.arange(width)
            cand_col[block.rows[:, None], at] = columns[best]
            cand_val[block.rows[:, None], at] = (
                np.take_along_axis(powered, best, axis=1) / total[block.rows, None]
            )
            filled[block.rows] += width
        order = np.argsort(-cand_val, axis=1, kind="stable")[:, :k]
        idx = np.take_along_axis(cand_col, order, axis=1).astype(np.int32)
        top = np.take_along_axis(cand_val, order, axis=1).astype(np.float32)
        short = np.flatnonzero(counts < k)
        if len(short):
            # Rows whose likely departments hold fewer than k classes: the dense path.
            dense = self.predict_proba(texts.subset(short))
            best = np.argsort(-dense, axis=1, kind="stable")[:, :k]
            idx[short] = best
            top[short] = np.take_along_axis(dense, best, axis=1)
        return idx, top

    def _top_one(
        self, texts: ProductTexts, parts: _Parts, values: list[Array], total: Array
    ) -> tuple[Array, Array]:
        """:meth:`top_k` for k = 1: each row's best class, block by block, without sorting.

        A tie inside a department goes to the lower column (as in the dense path); between
        departments, to the one scored first.
        """
        layout = self._layout()
        best_val = np.zeros(parts.n)  # every scored value is above 0 (the floor)
        best_col = np.zeros(parts.n, dtype=np.int64)
        scored = np.zeros(parts.n, dtype=bool)
        for block, powered in zip(parts.blocks, values, strict=True):
            columns = layout.part(block.group).columns
            if not len(columns):
                continue
            best = powered.argmax(axis=1)
            picked = powered[np.arange(len(block.rows)), best] / total[block.rows]
            better = ~scored[block.rows] | (picked > best_val[block.rows])
            rows = block.rows[better]
            best_val[rows] = picked[better]
            best_col[rows] = columns[best[better]]
            scored[block.rows] = True
        idx = best_col.astype(np.int32)[:, None]
        top = best_val.astype(np.float32)[:, None]
        short = np.flatnonzero(~scored)
        if len(short):
            # Rows with no scored class: the dense path.
            dense = self.predict_proba(texts.subset(short))
            best = dense.argmax(axis=1)
            idx[short, 0] = best
            top[short, 0] = dense[np.arange(len(short)), best]
        return idx, top

    def predict(self, texts: ProductTexts) -> Array:
        """Return the most probable class id of each product."""
        matrix = self.predict_sparse(texts)
        return np.asarray(self.classes_[np.asarray(matrix.argmax(axis=1)).ravel()])

    # ---- calibration ----------------------------------------------------------------------

    def calibrate(self, texts: ProductTexts, labels: Sequence[str]) -> CategoryModel:
        """Fit the temperatures and the keyword weight on held-out data; record metrics.

        With more than :data:`CALIBRATION_MAX` products, a seeded sample of that size is used.

        Args:
            texts: validation product texts.
            labels: their node ids.

        Returns:
            self.
        """
        self._check()
        if len(texts) == 0:
            return self
        if len(texts) > CALIBRATION_MAX:
            # Dense (products × classes) arrays are made here: a seeded sample keeps them small.
            keep = np.sort(
                np.random.default_rng(self.random_state).choice(
                    len(texts), CALIBRATION_MAX, replace=False
                )
            )
            texts, labels = texts.subset(keep), [labels[i] for i in keep]
        column = {c: i for i, c in enumerate(self.classes_.tolist())}
        linear_pos = {int(c): i for i, c in enumerate(self.linear_classes_)}
        y = np.array([column.get(str(label), -1) for label in labels])
        group, klass = self.scores(texts)
        known = np.array([c in linear_pos for c in y])

        before = self._expand(self.linear_proba(group, klass, (1.0, 1.0)))

        # Level 1: the group temperature, on the true group of each known product.
        y_lin = np.array([linear_pos.get(int(c), -1) for c in y])
        t_group = 1.0
        if len(self.groups_) > 1 and known.any():
            t_group = fit_temperature(group[known], self.class_group_[y_lin[known]])
        # Level 2: one class temperature, on the scores inside each product's true group.
        t_class = 1.0
        if known.any():
            t_class = _fit_block_temperature(klass[known], y_lin[known], self.class_group_)
        self.temperatures_ = (t_group, t_class)
        model_p = self._expand(self.linear_proba(group, klass))

        # The blend of two calibrated distributions is not calibrated itself: a final
        # temperature on the blend's log-probabilities is fitted for each candidate weight,
        # on the scored classes of each product (the rest is below the department floor).
        parts = self._parts(texts, keywords=True)
        columns, linear, keyword = _padded(parts, self._layout())
        target = np.argmax(columns == y[:, None], axis=1)
        found = (columns == y[:, None]).any(axis=1)
        grid = KEYWORD_WEIGHT_GRID if self.keyword_weight is None else (self.keyword_weight,)
        best: tuple[float, float, float] = (np.inf, 0.0, 1.0)
        for w in grid:
            log_p = np.where(columns >= 0, _log((1 - w) * linear + w * keyword), -np.inf)
            t_final = fit_temperature(log_p[found], target[found]) if found.any() else 1.0
            nll = _nll(softmax(log_p, t_final), np.where(found, target, -1))
            if nll < best[0]:
                best = (nll, w, t_final)
        self.keyword_weight_, self.blend_temperature_ = float(best[1]), float(best[2])
        blended = self.predict_sparse(texts)
        blended_best = np.asarray(blended.argmax(axis=1)).ravel()
        blended_p = np.asarray(blended.max(axis=1).todense()).ravel()

        self.metrics_ = {
            "valid_products": int(len(y)),
            "valid_accuracy_before_calibration": _accuracy(before, y),
            "valid_ece_before_calibration": _ece(before, y),
            "valid_accuracy_model": _accuracy(model_p, y),
            "valid_ece_model": _ece(model_p, y),
            "valid_accuracy": float((blended_best == y).mean()),
            "valid_ece": float(expected_calibration_error(blended_p, blended_best == y)),
            "temperatures": [float(t) for t in self.temperatures_],
            "blend_temperature": self.blend_temperature_,
            "keyword_weight": self.keyword_weight_,
            "keyword_blend_temperature": self.keyword_blend_temperature_,
            "department_floor": self.department_floor,
        }
        return self


# What the forked training processes read: set just before they fork, so they share it.
_TRAINING: dict[str, Any] = {}


def _train_groups(
    model: CategoryModel,
    features: sp.csr_matrix,
    jobs: list[tuple[Array, Array, int]],
    order: list[int],
) -> Iterator[tuple[sp.csr_matrix, Array]]:
    """Train the per-department classifiers ``order`` of ``jobs``; yield them in that order.

    With ``model.n_jobs`` above 1 they are trained in forked processes, not threads: liblinear
    draws its random order from the C library's single global generator, so classifiers
    trained at once in threads of one process interleave their draws, and the same data and
    seed gave other weights from run to run. Each process reseeds it per classifier. A process
    that may not fork (no "fork" start method, or itself a daemonic worker) trains them one
    after the other, which gives the same weights.
    """
    workers = min(model.n_jobs, len(order))
    can_fork = (
        "fork" in multiprocessing.get_all_start_methods()
        and not multiprocessing.current_process().daemon
    )
    if workers <= 1 or not can_fork:
        for i in order:
            rows, y, k = jobs[i]
            yield model._train_level(features[rows], y, k)
        return
    _TRAINING.update(model=model, features=features, jobs=jobs)
    try:
        with multiprocessing.get_context("fork").Pool(workers) as pool:
            yield from pool.imap(_train_group, order, chunksize=1)
    finally:
        _TRAINING.clear()


def _train_group(index: int) -> tuple[sp.csr_matrix, Array]:
    """One department's classifier, in a forked training process (see :func:`_train_groups`)."""
    rows, y, k = _TRAINING["jobs"][index]
    trained: tuple[sp.csr_matrix, Array] = _TRAINING["model"]._train_level(
        _TRAINING["features"][rows], y, k
    )
    return trained


class _WordScores:
    """The dense scores of each cached word of a word cache (:func:`score_words_dense`).

    Kept while the cache keeps its word numbers (its generation) and the weights stay the
    same block; rows are added, never remade, as the cache grows.
    """

    def __init__(self, cache: WordCachedTfidf, block: Array) -> None:
        self._key = (cache, cache.generation, block)
        self.scores = np.zeros((0, block.shape[1]), np.float32)
        self.ready = np.zeros(0, np.uint8)

    def holds(self, cache: WordCachedTfidf, block: Array) -> bool:
        """Whether these are the scores of this cache's current words under this block."""
        return all(a is b for a, b in zip(self._key, (cache, cache.generation, block), strict=True))

    def grow(self, words: int) -> None:
        """Make room for at least ``words`` cached words (new rows not ready)."""
        if len(self.ready) >= words:
            return
        size = max(words, 2 * len(self.ready), 1024)
        scores = np.zeros((size, self.scores.shape[1]), np.float32)
        scores[: len(self.scores)] = self.scores
        ready = np.zeros(size, np.uint8)
        ready[: len(self.ready)] = self.ready
        self.scores, self.ready = scores, ready


@dataclass(frozen=True, slots=True)
class _GroupPart:
    """What scoring one department needs: its classes, weights and keyword documents."""

    columns: Array  # class columns (in classes_) of the group: linear classes ∪ keyword leaves
    linear_pos: Array  # positions in ``columns`` of the linear classes, in weight order
    coef: tuple[Array, Array, Array] | None  # (features, group's linear classes), pack_rows
    dense: tuple[Array, Array] | None  # the same weights from dense_rows, when that pays
    intercept: Array
    keyword_pos: Array  # positions in ``columns`` of the keyword leaves, in document order
    # (keyword features, keyword leaves) in one form: dense_rows when that pays, else pack_rows
    documents_t: tuple[Array, Array, Array] | None
    documents_dense: tuple[Array, Array] | None


@dataclass(frozen=True, slots=True)
class _PartSources:
    """What each department's :class:`_GroupPart` is cut from."""

    class_coef: sp.csc_matrix  # (features, linear classes)
    documents_t: sp.csc_matrix  # (keyword features, keyword leaves), pruned
    keyword_group: Array  # group of each keyword leaf (a leaf's column is its position)
    class_group: Array  # group of each linear class
    linear_classes: Array  # column (in classes_) of each linear class
    class_intercept: Array

    def build(self, g: int) -> _GroupPart:
        lin = np.flatnonzero(self.class_group == g)
        lin_columns = self.linear_classes[lin]
        kw = np.flatnonzero(self.keyword_group == g)
        columns = np.union1d(lin_columns, kw)
        weights = self.class_coef[:, lin].tocsr()
        dense_pays = _dense_pays(weights)
        documents = self.documents_t[:, kw].tocsr()
        documents_dense = _dense_documents(documents)
        return _GroupPart(
            columns=columns,
            linear_pos=np.searchsorted(columns, lin_columns),
            # One form of the weights: the dense block where it pays, else packed.
            coef=None if dense_pays else pack_rows(weights),
            dense=dense_rows(weights) if dense_pays else None,
            intercept=self.class_intercept[lin],
            keyword_pos=np.searchsorted(columns, kw),
            documents_t=None if documents_dense else pack_rows(documents),
            documents_dense=dense_rows(documents) if documents_dense else None,
        )


@dataclass(slots=True)
class _Layout:
    """The learned weights arranged for scoring.

    Each department's part (its weights and keyword documents, regrouped and packed) is built
    on first need (:meth:`part`): a small feed touches a few departments, and the parts of all
    of them are tens of MB that take a while to build. :meth:`complete` builds the rest (before
    worker processes fork, so that they share one copy).
    """

    class_coef: sp.csr_matrix  # the weights this layout was built from
    group_coef: Array  # dense (features, groups): a sparse × dense product is the fast one
    class_group: Array  # group of every class column; len(groups) = no group (floor)
    group_sizes: Array  # classes per group
    ungrouped: int  # classes in no group
    parts: list[_GroupPart | None]  # by group; None until built
    sources: _PartSources | None  # dropped once every part is built

    @property
    def n_groups(self) -> int:
        return len(self.parts)

    def part(self, g: int) -> _GroupPart:
        """Return department ``g``'s part, built now if it is the first time."""
        built = self.parts[g]
        if built is None:
            sources = self.sources
            if sources is None:  # completed meanwhile (by another thread)
                built = self.parts[g]
                assert built is not None
                return built
            built = self.parts[g] = sources.build(g)
        return built

    def complete(self) -> list[_GroupPart]:
        """Build every department's part not built yet; return them all."""
        parts = [self.part(g) for g in range(self.n_groups)]
        self.sources = None  # every part is built: what they were cut from can go
        return parts

    @staticmethod
    def build(model: CategoryModel) -> _Layout:
        groups = model.groups_.tolist()
        index = {g: i for i, g in enumerate(groups)}
        classes = model.classes_.tolist()
        class_group = np.full(len(classes), len(groups), dtype=np.int64)
        if len(groups) == 1 and groups[0] == _ALL:
            class_group[:] = 0
        else:
            for c, node_id in enumerate(classes):
                class_group[c] = index.get(model.tree.department(node_id).id, len(groups))
        # Leaves come first in classes_, in the keyword mapper's order.
        n_keyword = len(model.keywords_.classes_)
        documents = model.keywords_.documents_.copy()
        documents.data[documents.data < model.keyword_prune_below] = 0.0
        documents.eliminate_zeros()
        sizes = np.bincount(class_group, minlength=len(groups) + 1)
        return _Layout(
            class_coef=model.class_coef_,
            group_coef=np.asarray(model.group_coef_.toarray(), dtype=np.float32),
            class_group=class_group,
            group_sizes=np.maximum(sizes[: len(groups)], 1).astype(np.float64),
            ungrouped=int(sizes[len(groups)]),
            parts=[None] * len(groups),
            sources=_PartSources(
                class_coef=model.class_coef_.tocsc(),
                documents_t=documents.T.tocsc(),
                keyword_group=class_group[:n_keyword],
                class_group=model.class_group_,
                linear_classes=model.linear_classes_,
                class_intercept=model.class_intercept_,
            ),
        )


@dataclass(frozen=True, slots=True)
class _Block:
    group: int
    rows: Array
    linear: Array  # P(group)·P(class | group) of the linear model, (rows, group classes)
    keyword: Array | None  # P(group)·P_keywords(leaf | group), same shape


@dataclass(frozen=True, slots=True)
class _Parts:
    n: int
    p_group: Array
    selected: Array
    blocks: list[_Block]


# A department's weights are also kept as a dense block when that costs at most this many times
# the packed form's memory (8 bytes an entry) and at most DENSE_MAX_BYTES. On the Debian
# sections' flat model (57 classes, unpruned, 18% of entries filled: 76 MB dense, 28 MB packed)
# the dense block scored the test split 4.9 times as fast (benchmarks/bench_real_sections.py);
# the demo world's pruned department classifiers stay packed.
DENSE_MEMORY_FACTOR = 4.0
# The block a flat dense model scores word by word, and the product field it reads.
_WORDS_BLOCK, _WORDS_FIELD = "title_chars", "title"
DENSE_MAX_BYTES = 256 * 2**20
# Keyword documents up to this size are scored dense whatever their density (a flat model's
# documents: 0.2 MB and 10% filled on the Debian sections, scored in about two thirds of the
# packed form's time, bench_real_sections.py's test split).
DENSE_DOCUMENTS_BYTES = 2**20


def _dense_pays(weights: sp.csr_matrix) -> bool:
    used = int(np.count_nonzero(np.diff(weights.indptr)))
    dense_bytes = used * weights.shape[1] * 4
    return dense_bytes <= min(DENSE_MEMORY_FACTOR * 8 * weights.nnz, DENSE_MAX_BYTES)


def _dense_documents(documents: sp.csr_matrix) -> bool:
    """Whether a department's keyword documents are also kept dense: when that pays (as the
    weights), or when the dense block is small enough to stay in the fastest caches."""
    used = int(np.count_nonzero(np.diff(documents.indptr)))
    return _dense_pays(documents) or used * documents.shape[1] * 4 <= DENSE_DOCUMENTS_BYTES


def _placed(values: Array, positions: Array, width: int, share: Array) -> Array:
    """``values`` put at column ``positions`` of a (rows, width) zero array, times ``share``.

    When the positions are every column in order, ``values`` itself is used (and changed); a
    share of exactly 1 (a single department) is not multiplied by.
    """
    if len(positions) == width and bool((positions == np.arange(width)).all()):
        placed = values
    else:
        placed = np.zeros((len(values), width), dtype=np.float64)
        placed[:, positions] = values
    if not bool((share == 1.0).all()):
        placed *= share
    return placed


def _padded(parts: _Parts, layout: _Layout) -> tuple[Array, Array, Array]:
    """Rows of scored classes side by side: (class columns or -1, linear, keyword)."""
    counts = np.zeros(parts.n, dtype=np.int64)
    for block in parts.blocks:
        counts[block.rows] += len(layout.part(block.group).columns)
    width = int(counts.max()) if parts.n else 0
    columns = np.full((parts.n, width), -1, dtype=np.int64)
    linear = np.zeros((parts.n, width), dtype=np.float64)
    keyword = np.zeros((parts.n, width), dtype=np.float64)
    filled = np.zeros(parts.n, dtype=np.int64)
    for block in parts.blocks:
        cols = layout.part(block.group).columns
        start = filled[block.rows]
        positions = start[:, None] + np.arange(len(cols))[None, :]
        rows = block.rows[:, None]
        columns[rows, positions] = cols[None, :]
        linear[rows, positions] = block.linear
        # A department without keyword leaves keeps the linear model's answer in the blend.
        keyword[rows, positions] = block.linear if block.keyword is None else block.keyword
        filled[block.rows] += len(cols)
    return columns, linear, keyword


def _cap_per_class(labels: Sequence[str], cap: int, rng: np.random.Generator) -> Array:
    """Return sorted row numbers keeping at most ``cap`` random rows of each label."""
    _, codes = np.unique(np.asarray(labels), return_inverse=True)
    order = np.lexsort((rng.random(len(codes)), codes))
    sorted_codes = codes[order]
    starts = np.searchsorted(sorted_codes, sorted_codes, side="left")
    rank = np.arange(len(order)) - starts
    return np.sort(order[rank < cap])


def _swap_paths(texts: ProductTexts, share: float, rng: np.random.Generator) -> ProductTexts:
    """Give ``share`` of the rows the retailer path of another random row."""
    n = len(texts)
    rows = np.flatnonzero(rng.random(n) < share)
    donors = rng.integers(0, n, size=len(rows))
    paths = list(texts.path)
    for row, donor in zip(rows.tolist(), donors.tolist(), strict=True):
        paths[row] = texts.path[donor]
    return ProductTexts(texts.title, paths, texts.brand, texts.description)


def _with_tree_examples(
    texts: ProductTexts, labels: list[str], tree: CategoryTree
) -> tuple[ProductTexts, list[str]]:
    """Append one example per leaf term (every language): the term as title, nothing else."""
    titles, extra_labels = [], []
    for leaf in tree.leaves():
        for term in dict.fromkeys(tree.all_terms(leaf.id)):
            titles.append(term)
            extra_labels.append(leaf.id)
    empty = [""] * len(titles)
    return (
        ProductTexts(
            texts.title + titles, texts.path + empty, texts.brand + empty, texts.description + empty
        ),
        labels + extra_labels,
    )


def _used_by_rows(features: sp.csr_matrix, rows: int, block: slice | None) -> Array | None:
    """Which columns of ``block`` the first ``rows`` rows use (None without the block).

    The title words labelled products used, as against those only the tree's own examples
    brought in: the feed check measures a feed against the first (see
    :func:`catmap.jobs._calibration.labelled_vocabulary`).
    """
    if block is None:
        return None
    used = np.bincount(features.indices[: features.indptr[rows]], minlength=features.shape[1])
    return np.asarray(used[block] > 0)


def _fit_block_temperature(klass: Array, y_lin: Array, class_group: Array) -> float:
    """One temperature for the class level: each product scored within its true group."""
    width = int(np.bincount(class_group).max())
    padded = np.full((len(y_lin), width), -np.inf)
    targets = np.zeros(len(y_lin), dtype=np.int64)
    for g in np.unique(class_group[y_lin]):
        cols = np.flatnonzero(class_group == g)
        rows = np.flatnonzero(class_group[y_lin] == g)
        padded[np.ix_(rows, np.arange(len(cols)))] = klass[np.ix_(rows, cols)]
        targets[rows] = np.searchsorted(cols, y_lin[rows])
    single = np.isfinite(padded).sum(axis=1) > 1
    if not single.any():
        return 1.0
    return fit_temperature(np.where(np.isfinite(padded), padded, -1e9)[single], targets[single])


def _log(p: Array) -> Array:
    # Classes with probability 0 (no training data, no keyword match) stay far below the rest.
    return np.log(np.maximum(p, 1e-12))


def _nll(p: Array, y: Array) -> float:
    known = y >= 0
    if not known.any():
        return 0.0
    picked = p[np.flatnonzero(known), y[known]]
    return float(-np.log(np.maximum(picked, 1e-12)).mean())


def _accuracy(p: Array, y: Array) -> float:
    return float((p.argmax(axis=1) == y).mean()) if len(y) else 0.0


def _ece(p: Array, y: Array) -> float:
    best = p.argmax(axis=1)
    return float(expected_calibration_error(p.max(axis=1), best == y))
