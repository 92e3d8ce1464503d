"""Turn products into one sparse feature matrix: a TF-IDF space per field, each with its weight.

The title gets word 1–2 grams and character n-grams (inside word boundaries); the retailer
category path gets word 1–2 grams; the brand and the start of the description get words. Each
field is L2-normalised on its own and scaled by its weight, so that a long description cannot
drown a short title.

No stemming and no stop-word removal: product titles are short, mix four languages, and carry
meaning in the very words a stemmer or a stop list would merge or drop ("for", "de", "kids",
sizes, model codes); character n-grams already absorb inflection.

Values that repeat across a chunk (the same retailer path, brand or boilerplate description) are
vectorised once per distinct value and gathered back by row index.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import scipy.sparse as sp

from catmap.classify._wordcache import WordCachedTfidf, WordNgramTfidf, fast_transformer
from catmap.errors import ModelNotTrained
from catmap.records import Product

if TYPE_CHECKING:
    from sklearn.feature_extraction.text import TfidfVectorizer

__all__ = ["FIELD_BLOCKS", "ProductFeaturizer", "ProductTexts", "product_texts"]

# (block name, product text field, vectorizer settings). The order is the column order.
FIELD_BLOCKS: tuple[tuple[str, str, dict[str, Any]], ...] = (
    ("title_words", "title", {"analyzer": "word", "ngram_range": (1, 2)}),
    # 4-grams only. In 5-fold cross-validation of the Debian sections' training split
    # (benchmarks/cv_real_sections.py) they gave the same macro-F1 as 3-4 (0.8114 against
    # 0.8118, paired difference -0.0005, std 0.0036; 3-grams alone: 0.8061) with half the
    # n-grams a new word needs looked up and scored; on the demo's unseen validation
    # retailers, the same accuracy (0.947). Earlier, adding 5-grams to 3-4 changed the demo
    # split's test accuracy by 0.0002 and cost a tenth of the mapping time. Model folders keep
    # the range they were trained with.
    ("title_chars", "title", {"analyzer": "char_wb", "ngram_range": (4, 4)}),
    ("path", "path", {"analyzer": "word", "ngram_range": (1, 2)}),
    ("brand", "brand", {"analyzer": "word", "ngram_range": (1, 1)}),
    ("description", "description", {"analyzer": "word", "ngram_range": (1, 1)}),
)
# Fields whose values repeat a lot within a feed: vectorised once per distinct value.
_REPEATED_FIELDS = frozenset({"path", "brand", "description"})
# Keeps single letters and digits ("3", "xl" stays whole): sizes and counts are signal here.
_TOKEN_PATTERN = r"(?u)\b\w+\b"
# Rows transformed at once when fitting on many products (bounds the temporary matrices).
_FIT_CHUNK = 50_000


@dataclass(frozen=True, slots=True)
class ProductTexts:
    """The four text fields the model reads, one list per field (same length)."""

    title: list[str]
    path: list[str]
    brand: list[str]
    description: list[str]

    def __len__(self) -> int:
        return len(self.title)

    def field(self, name: str) -> list[str]:
        """Return one field's values by name."""
        values: list[str] = getattr(self, name)
        return values

    def subset(self, rows: Sequence[int] | np.ndarray[Any, Any]) -> ProductTexts:
        """Return the texts of some rows, in the order given."""
        return ProductTexts(
            [self.title[i] for i in rows],
            [self.path[i] for i in rows],
            [self.brand[i] for i in rows],
            [self.description[i] for i in rows],
        )


def product_texts(products: Sequence[Product], *, description_chars: int = 300) -> ProductTexts:
    """Extract the texts the model reads from products.

    Args:
        products: normalised products.
        description_chars: keep only the start of each description (the rest is mostly
            boilerplate and costs time).

    Returns:
        The texts, field by field.
    """
    return ProductTexts(
        [p.title for p in products],
        [" > ".join(p.category_path) for p in products],
        [p.brand for p in products],
        [p.description[:description_chars] for p in products],
    )


class ProductFeaturizer:
    """Fit and apply one TF-IDF vectorizer per field block, weighted and stacked.

    Args:
        weights: block name -> weight (missing blocks weigh 1.0; 0 drops the block).
        min_df: a term must occur in at least this many training products.
        max_features: per block, keep at most this many terms (most frequent first); None = all.
        fit_sample: with more products than this, each block's vocabulary and idf are learned
            from a seeded sample of this size (the analysers are Python; the sample holds every
            term that matters), and all products are then transformed by the fast path.

    Attributes:
        vectorizers_: block name -> fitted TfidfVectorizer (only blocks with weight > 0).
        n_features_: total number of columns.
    """

    def __init__(
        self,
        *,
        weights: dict[str, float] | None = None,
        min_df: int = 2,
        max_features: int | None = 400_000,
        fit_sample: int = 200_000,
    ) -> None:
        self.weights = weights
        self.min_df = min_df
        self.max_features = max_features
        self.fit_sample = fit_sample

    def _weight(self, block: str) -> float:
        return float((self.weights or {}).get(block, 1.0))

    @staticmethod
    def make_vectorizer(
        block: str,
        min_df: int = 1,
        max_features: int | None = None,
        ngram_range: tuple[int, int] | None = None,
    ) -> TfidfVectorizer:
        """Return the unfitted vectorizer of a block, with catmap's settings.

        Args:
            block: the block name (see :data:`FIELD_BLOCKS`).
            min_df: minimum document frequency of a term.
            max_features: vocabulary cap.
            ngram_range: another n-gram range than the block's (a model folder's own).
        """
        from sklearn.feature_extraction.text import TfidfVectorizer

        return TfidfVectorizer(
            **ProductFeaturizer.vectorizer_settings(block, min_df, max_features, ngram_range)
        )

    @staticmethod
    def vectorizer_settings(
        block: str,
        min_df: int = 1,
        max_features: int | None = None,
        ngram_range: tuple[int, int] | None = None,
    ) -> dict[str, Any]:
        """Return the ``TfidfVectorizer`` keyword arguments of a block (see
        :meth:`make_vectorizer`)."""
        settings = next(s for name, _, s in FIELD_BLOCKS if name == block)
        if ngram_range is not None:
            settings = {**settings, "ngram_range": tuple(ngram_range)}
        extra: dict[str, Any] = {}
        if settings["analyzer"] == "word":
            extra["token_pattern"] = _TOKEN_PATTERN
        return {
            "lowercase": True,
            "sublinear_tf": True,
            "min_df": min_df,
            "max_features": max_features,
            "dtype": np.float32,
            **settings,
            **extra,
        }

    def fit(self, texts: ProductTexts) -> ProductFeaturizer:
        """Learn each block's vocabulary and idf from training texts.

        Raises:
            ValueError: no texts, a negative weight, or min_df < 1.
        """
        self.fit_transform(texts)
        return self

    def fit_transform(self, texts: ProductTexts) -> sp.csr_matrix:
        """Fit, and return the training feature matrix (each text analysed once).

        Raises:
            ValueError: no texts, a negative weight, or min_df < 1.
        """
        if len(texts) == 0:
            raise ValueError("cannot fit the featurizer on no products")
        if self.min_df < 1:
            raise ValueError("min_df must be at least 1")
        if self.fit_sample < 1:
            raise ValueError("fit_sample must be at least 1")
        if any(w < 0 for w in (self.weights or {}).values()):
            raise ValueError("feature weights must be >= 0")
        vectorizers: dict[str, TfidfVectorizer] = {}
        blocks = []
        for block, field_name, _ in FIELD_BLOCKS:
            if self._weight(block) <= 0:
                continue
            values = texts.field(field_name)
            vectorizer = self.make_vectorizer(block, self.min_df, self.max_features)
            try:
                if len(values) > self.fit_sample:
                    # Vocabulary and idf from a seeded sample; every row through the fast path.
                    sample = np.random.default_rng(0).choice(
                        len(values), self.fit_sample, replace=False
                    )
                    vectorizer.fit([values[i] for i in np.sort(sample)])
                    fast = self._fast(block, vectorizer)
                    transform = fast.transform if fast is not None else vectorizer.transform
                    distinct = field_name in _REPEATED_FIELDS
                    matrix = sp.vstack(
                        [
                            _transform_distinct(fast or vectorizer, values[i : i + _FIT_CHUNK])
                            if distinct
                            else transform(values[i : i + _FIT_CHUNK])
                            for i in range(0, len(values), _FIT_CHUNK)
                        ],
                        format="csr",
                        dtype=np.float32,
                    )
                else:
                    matrix = vectorizer.fit_transform(values)
            except ValueError:
                # Empty vocabulary (e.g. a feed with no brands): fall back to a lone placeholder
                # term so the block keeps its place and contributes nothing.
                vectorizer = self.make_vectorizer(block).fit(["\u2400empty"])
                matrix = sp.csr_matrix((len(values), 1), dtype=np.float32)
            vectorizers[block] = vectorizer
            weight = self._weight(block)
            blocks.append(matrix * np.float32(weight) if weight != 1.0 else matrix)
        self.vectorizers_ = vectorizers
        self.n_features_ = sum(len(v.vocabulary_) for v in vectorizers.values())
        stacked: sp.csr_matrix = sp.hstack(blocks, format="csr", dtype=np.float32)
        return stacked

    def _check(self) -> dict[str, TfidfVectorizer]:
        vectorizers: dict[str, TfidfVectorizer] | None = getattr(self, "vectorizers_", None)
        if vectorizers is None:
            raise ModelNotTrained("the featurizer is not fitted", hint="run `catmap train` first")
        return vectorizers

    def transform(self, texts: ProductTexts) -> sp.csr_matrix:
        """Return the weighted, stacked feature matrix (float32 CSR, one row per product)."""
        stacked: sp.csr_matrix = sp.hstack(
            [matrix for matrix, _ in self.transform_blocks(texts)], format="csr", dtype=np.float32
        )
        return stacked

    def transform_blocks(
        self, texts: ProductTexts, *, skip: frozenset[str] = frozenset()
    ) -> list[tuple[sp.csr_matrix, int]]:
        """Return each block's weighted matrix with its first column in the stacked matrix.

        What :meth:`transform` stacks, without the copy: scoring can read the blocks in turn.
        Blocks named in ``skip`` are left out (their columns keep their place).
        """
        vectorizers = self._check()
        blocks = []
        start = 0
        for block, field_name, _ in FIELD_BLOCKS:
            vectorizer = vectorizers.get(block)
            if vectorizer is None:
                continue
            if block in skip:
                start += len(vectorizer.vocabulary_)
                continue
            values = texts.field(field_name)
            fast = self._fast(block, vectorizer)
            if field_name in _REPEATED_FIELDS:
                matrix = _transform_distinct(fast or vectorizer, values)
            else:
                matrix = (fast or vectorizer).transform(values)
            weight = self._weight(block)
            if weight != 1.0:
                matrix = matrix * np.float32(weight)
            blocks.append((sp.csr_matrix(matrix, dtype=np.float32), start))
            start += len(vectorizer.vocabulary_)
        return blocks

    def word_cached_block(self, block: str) -> tuple[WordCachedTfidf, int, float] | None:
        """Return a block's per-word cache, first column and weight, when it has such a cache."""
        vectorizer = self._check().get(block)
        if vectorizer is None:
            return None
        fast = self._fast(block, vectorizer)
        if not isinstance(fast, WordCachedTfidf):
            return None
        return fast, self.block_slices()[block].start, self._weight(block)

    def _fast(
        self, block: str, vectorizer: TfidfVectorizer
    ) -> WordCachedTfidf | WordNgramTfidf | None:
        # Not learned state: a per-process speed-up, rebuilt when the vectorizer changes.
        caches: dict[str, Any] = self.__dict__.setdefault("_fast_transformers", {})
        cached = caches.get(block)
        if cached is None or cached[0] is not vectorizer:
            cached = caches[block] = (vectorizer, fast_transformer(vectorizer))
        fast: WordCachedTfidf | WordNgramTfidf | None = cached[1]
        return fast

    def block_slices(self) -> dict[str, slice]:
        """Return the column range of each block in the stacked matrix."""
        vectorizers = self._check()
        slices, start = {}, 0
        for block, _, _ in FIELD_BLOCKS:
            if block in vectorizers:
                size = len(vectorizers[block].vocabulary_)
                slices[block] = slice(start, start + size)
                start += size
        return slices


def _transform_distinct(vectorizer: Any, values: list[str]) -> sp.csr_matrix:
    """Vectorise each distinct value once, then gather rows back in order."""
    distinct, rows = distinct_values(values)
    result: sp.csr_matrix = vectorizer.transform(distinct)[rows]
    return result


def distinct_values(values: Sequence[str]) -> tuple[list[str], np.ndarray[Any, Any]]:
    """Return the distinct values in first-seen order, and each value's position among them."""
    if values and values.count(values[0]) == len(values):
        # One value throughout (a field the feed does not have): no dictionary needed.
        return [values[0]], np.zeros(len(values), dtype=np.int64)
    distinct = list(dict.fromkeys(values))
    position = {value: i for i, value in enumerate(distinct)}
    rows = np.fromiter(map(position.__getitem__, values), dtype=np.int64, count=len(values))
    return distinct, rows
