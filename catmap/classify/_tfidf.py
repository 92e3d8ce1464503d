"""A fitted TF-IDF vectorizer as a model folder holds it, without importing scikit-learn.

Mapping reads a loaded vectorizer's settings, vocabulary and idf only: the fast transformers
of :mod:`catmap.classify._wordcache` do the work. Importing scikit-learn (and, through it,
SciPy's statistics and pandas) costs more than a one-row feed's whole run, so a loaded model
holds a :class:`LoadedTfidf`; the real ``TfidfVectorizer`` is built from it only when a path
needs one (:meth:`LoadedTfidf.transform` for settings no fast transformer handles,
:meth:`LoadedTfidf.to_sklearn`).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

# scikit-learn's defaults for the settings the fast transformers read (TfidfVectorizer).
_DEFAULTS: dict[str, Any] = {
    "analyzer": "word",
    "ngram_range": (1, 1),
    "lowercase": True,
    "token_pattern": r"(?u)\b\w\w+\b",
    "stop_words": None,
    "tokenizer": None,
    "preprocessor": None,
    "strip_accents": None,
    "sublinear_tf": False,
    "use_idf": True,
    "smooth_idf": True,
    "norm": "l2",
    "min_df": 1,
    "max_features": None,
    "dtype": np.float64,
}


class LoadedTfidf:
    """A fitted TF-IDF vectorizer's settings and learned state, read from a model folder.

    Args:
        settings: the ``TfidfVectorizer`` keyword arguments it was made with.
        vocabulary: term → column.
        idf: the idf of each column.

    Attributes:
        vocabulary_, idf_: as on a fitted ``TfidfVectorizer``; every setting is an attribute
            too (``analyzer``, ``ngram_range``, ``norm``...).
    """

    def __init__(self, settings: dict[str, Any], vocabulary: dict[str, int], idf: Any) -> None:
        unknown = set(settings) - set(_DEFAULTS)
        if unknown:
            raise ValueError(f"unknown TF-IDF settings: {sorted(unknown)}")
        self.settings = {**_DEFAULTS, **settings}
        self.settings["ngram_range"] = tuple(self.settings["ngram_range"])
        for name, value in self.settings.items():
            setattr(self, name, value)
        self.vocabulary_ = vocabulary
        self.idf_ = idf

    def to_sklearn(self) -> Any:
        """Return the equivalent fitted ``sklearn.feature_extraction.text.TfidfVectorizer``."""
        from sklearn.feature_extraction.text import TfidfVectorizer

        vectorizer = TfidfVectorizer(**self.settings)
        vectorizer.vocabulary_ = self.vocabulary_
        vectorizer.idf_ = self.idf_
        return vectorizer

    def transform(self, texts: Sequence[str]) -> Any:
        """Return what the fitted ``TfidfVectorizer`` returns for ``texts``."""
        real: Any = self.__dict__.get("_sklearn")
        if real is None:
            real = self.__dict__["_sklearn"] = self.to_sklearn()
        return real.transform(texts)
