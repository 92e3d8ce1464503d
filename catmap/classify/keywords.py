"""Cold start: map products from the tree's own names and multilingual keywords.

Each leaf gets a document: its name and terms in all its languages (twice, so that a leaf's own
words outweigh its ancestors'), then the names and terms of its ancestors. A product's title and
retailer path are compared with every document by cosine similarity over character n-grams
(inside word boundaries, which survive plurals and inflection across languages), and a softmax
with a temperature turns the similarities into probabilities. It needs no labelled data, so
mapping works on day one.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import scipy.sparse as sp

from catmap.classify._kernels import add_rows
from catmap.classify._wordcache import WordCachedTfidf
from catmap.classify.calibration import softmax
from catmap.classify.features import ProductTexts, distinct_values
from catmap.errors import ModelNotTrained
from catmap.tree.taxonomy import CategoryTree

if TYPE_CHECKING:
    from sklearn.feature_extraction.text import TfidfVectorizer

__all__ = ["KeywordMapper", "node_document"]

# A prior, not a law: the temperature fitted (by negative log-likelihood, see
# catmap.classify.calibration.fit_temperature) on the validation split of the demo reference
# catalog, tree version 1: 0.0184. With it the cold-start ECE on the demo test split is 0.027
# (0.360 with the earlier hand-set 0.04); accuracy is unchanged (the ranking does not depend on
# it). A feed unlike the demo may need another; a trained model replaces it with its own.
DEFAULT_TEMPERATURE = 0.0184


def _words(tree: CategoryTree, node_id: str) -> list[str]:
    node = tree[node_id]
    words = [node.name]
    for terms in node.terms.values():
        words.extend(terms)
    return words


def node_document(tree: CategoryTree, node_id: str) -> str:
    """Return the text a node is recognised by: its own words twice, then its ancestors'."""
    own = _words(tree, node_id)
    parts = own + own
    for ancestor in reversed(tree.ancestors(node_id)):
        parts.extend(_words(tree, ancestor.id))
    return " ; ".join(parts)


# The keyword mapper's TfidfVectorizer keyword arguments.
KEYWORD_VECTORIZER_SETTINGS: dict[str, Any] = {
    "analyzer": "char_wb",
    "ngram_range": (3, 5),
    "sublinear_tf": True,
    "lowercase": True,
    "dtype": np.float32,
}


def keyword_vectorizer_settings(ngram_range: tuple[int, int] | None = None) -> dict[str, Any]:
    """Return the keyword mapper's ``TfidfVectorizer`` keyword arguments, with another n-gram
    range than :data:`KEYWORD_VECTORIZER_SETTINGS`' when given."""
    if ngram_range is None:
        return dict(KEYWORD_VECTORIZER_SETTINGS)
    return {**KEYWORD_VECTORIZER_SETTINGS, "ngram_range": tuple(ngram_range)}


def make_keyword_vectorizer(ngram_range: tuple[int, int] | None = None) -> TfidfVectorizer:
    """Return the unfitted vectorizer of the keyword mapper."""
    from sklearn.feature_extraction.text import TfidfVectorizer

    return TfidfVectorizer(**keyword_vectorizer_settings(ngram_range))


class KeywordMapper:
    """Leaf probabilities from the similarity of product text to the tree's own words.

    Args:
        tree: the category tree.
        temperature: softmax temperature over cosine similarities (smaller = sharper).
        path_weight: weight of the retailer path next to the title in the query text.
        ngram_range: the character n-gram lengths compared (None: those of
            :data:`KEYWORD_VECTORIZER_SETTINGS`).

    Attributes:
        classes_: the leaf ids (columns of the probabilities).
        vectorizer_: the fitted character n-gram TF-IDF.
        documents_: (leaves, features) L2-normalised leaf documents, CSR.
    """

    def __init__(
        self,
        *,
        tree: CategoryTree,
        temperature: float = DEFAULT_TEMPERATURE,
        path_weight: float = 0.5,
        ngram_range: tuple[int, int] | None = None,
    ) -> None:
        self.tree = tree
        self.temperature = temperature
        self.path_weight = path_weight
        self.ngram_range = ngram_range

    def fit(
        self, texts: ProductTexts | None = None, labels: Sequence[str] | None = None
    ) -> KeywordMapper:
        """Build the leaf documents from the tree (no labelled data needed).

        Args:
            texts: unused; accepted for the estimator contract.
            labels: unused.

        Raises:
            ValueError: a non-positive temperature.
        """
        if self.temperature <= 0:
            raise ValueError("the temperature must be > 0")
        leaves = [node.id for node in self.tree.leaves()]
        vectorizer = make_keyword_vectorizer(self.ngram_range)
        documents = vectorizer.fit_transform([node_document(self.tree, leaf) for leaf in leaves])
        self.classes_ = np.array(leaves)
        self.vectorizer_ = vectorizer
        self.documents_ = sp.csr_matrix(documents, dtype=np.float32)
        return self

    def _check(self) -> None:
        if not hasattr(self, "documents_"):
            raise ModelNotTrained("the keyword mapper is not fitted")

    def _word_cache(self) -> WordCachedTfidf:
        # Not learned state: a per-process speed-up, rebuilt when the vectorizer changes.
        cache: WordCachedTfidf | None = self.__dict__.get("_cache")
        if cache is None or cache.vectorizer is not self.vectorizer_:
            cache = self.__dict__["_cache"] = WordCachedTfidf(self.vectorizer_)
        return cache

    def query(self, texts: ProductTexts) -> sp.csr_matrix:
        """Return the (n, keyword features) L2-normalised query vectors (title + weighted path)."""
        self._check()
        cache = self._word_cache()
        query = cache.transform(texts.title)  # L2-normalised rows
        if self.path_weight > 0:
            distinct, rows = distinct_values(texts.path)
            paths = cache.transform(distinct)
            # With no path n-gram in the batch (no paths, or none the tree's words share), the
            # title rows are the query already.
            if paths.nnz:
                # title + weighted path of the row's distinct path, then the L2 norm, in one pass.
                query = sp.csr_matrix(
                    add_rows(
                        query.indptr,
                        query.indices,
                        query.data,
                        rows,
                        paths.indptr,
                        paths.indices,
                        paths.data,
                        self.path_weight,
                        query.shape[1],
                    ),
                    shape=query.shape,
                )
        result: sp.csr_matrix = query
        return result

    def similarities(self, texts: ProductTexts) -> np.ndarray[Any, Any]:
        """Return (n, leaves) cosine similarities of the products to the leaf documents."""
        result: np.ndarray[Any, Any] = (self.query(texts) @ self.documents_.T).toarray()
        return result

    def predict_proba(self, texts: ProductTexts) -> np.ndarray[Any, Any]:
        """Return (n, leaves) probabilities: softmax of the similarities / temperature."""
        return softmax(self.similarities(texts), self.temperature)
