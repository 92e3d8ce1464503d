"""Tests of catmap.classify._tfidf: a loaded TF-IDF vectorizer without scikit-learn.

Its output is checked against scikit-learn's own ``TfidfVectorizer.transform`` (the reference
it stands in for), directly and through the fast transformers; and mapping's modules are
checked not to import scikit-learn, pandas or SciPy's statistics.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from sklearn.feature_extraction.text import TfidfVectorizer

from catmap.classify._tfidf import LoadedTfidf
from catmap.classify._wordcache import fast_transformer
from catmap.classify.features import ProductFeaturizer
from catmap.classify.keywords import KEYWORD_VECTORIZER_SETTINGS

TRAIN = [
    "Lindor walking boot, waterproof leather",
    "Tarrow garden chair in teak",
    "Brouxteford vitamin D drops for adults",
    "Kids' rain boots with reflective strips",
    "Folding garden table, powder-coated steel",
]
QUERIES = ["walking boots for kids", "teak chair", "Vitamin drops", "", "unknown words only"]


def _settings() -> list[dict[str, object]]:
    blocks = ["title_words", "title_chars", "path", "brand", "description"]
    return [ProductFeaturizer.vectorizer_settings(b) for b in blocks] + [
        dict(KEYWORD_VECTORIZER_SETTINGS),
        {"analyzer": "word", "ngram_range": (1, 3), "norm": "l1", "sublinear_tf": False},
    ]


def _name(settings: dict[str, object]) -> str:
    return f"{settings['analyzer']}-{settings['ngram_range']}"


@pytest.mark.parametrize("settings", _settings(), ids=_name)
def test_loaded_vectorizer_transforms_as_scikit_learn(settings: dict[str, object]) -> None:
    fitted = TfidfVectorizer(**settings).fit(TRAIN)  # type: ignore[arg-type]
    loaded = LoadedTfidf(settings, dict(fitted.vocabulary_), fitted.idf_)
    expected = fitted.transform(QUERIES).toarray()
    np.testing.assert_allclose(loaded.transform(QUERIES).toarray(), expected, rtol=1e-6)
    fast = fast_transformer(loaded)  # type: ignore[arg-type]
    if fast is not None:
        np.testing.assert_allclose(fast.transform(QUERIES).toarray(), expected, rtol=1e-5,
                                   atol=1e-7)  # fmt: skip
    real = loaded.to_sklearn()
    assert real.get_params()["ngram_range"] == tuple(settings["ngram_range"])  # type: ignore[arg-type]


def test_unknown_setting_is_refused() -> None:
    with pytest.raises(ValueError, match="unknown TF-IDF settings"):
        LoadedTfidf({"binary": True}, {}, np.zeros(0))


def test_mapping_modules_do_not_import_scikit_learn() -> None:
    code = (
        "import sys; import catmap.cli.map, catmap.cli.model, catmap.jobs.map, "
        "catmap.classify.storage; "
        "print(sorted(m for m in ('sklearn', 'pandas', 'scipy.stats', 'scipy.optimize') "
        "if m in sys.modules))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.strip() == "[]"
