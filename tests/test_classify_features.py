"""Fast vectorisers: the same matrices as the fitted scikit-learn vectorizers they stand for."""

from __future__ import annotations

import pickle
from unittest.mock import patch

import numpy as np
import pytest
from sklearn.feature_extraction.text import TfidfVectorizer

from catmap.classify import _wordcache
from catmap.classify._wordcache import (
    WordCachedTfidf,
    WordNgramTfidf,
    _WordIndex,
    fast_transformer,
)

TRAIN = [
    "Bottines cuir femme noir",
    "Ankle boots leather black, size 38",
    "Stiefeletten Leder schwarz Gr. 38",
    "Botines de piel negro talla 38",
    "Espresso machine 15 bar",
    "Machine à expresso 15 bars",
    "a b c x",
]
QUERIES = [
    "BOTTINES cuir cuir noir",  # a repeated word counts twice
    "x",  # shorter than every n: counted once, as the whole padded word
    "",
    "   ",
    "Kaffeemaschine Espresso 15\tbar\nneu",
    "unseen words only: zzzq",
    "Ankle  boots ankle boots",
]


@pytest.mark.parametrize("ngrams", [(2, 5), (3, 5), (1, 3)])
def test_per_word_char_ngrams_equal_the_vectorizer(ngrams: tuple[int, int]) -> None:
    vectorizer = TfidfVectorizer(
        analyzer="char_wb", ngram_range=ngrams, sublinear_tf=True, dtype=np.float32
    ).fit(TRAIN)
    fast = WordCachedTfidf(vectorizer)
    # reference: scikit-learn's own TfidfVectorizer.transform
    expected = vectorizer.transform(QUERIES).toarray()
    assert np.array_equal(fast.transform(QUERIES).toarray(), expected)
    # A second batch is served from the word cache and still matches.
    assert np.array_equal(fast.transform(QUERIES[::-1]).toarray(), expected[::-1])


def test_char_ngram_lookup_is_exact_on_a_large_vocabulary_of_mixed_scripts() -> None:
    # Many similar n-grams (a small alphabet) fill the lookup table and make its probes meet;
    # accents, a combining mark and characters outside the Basic Multilingual Plane included.
    rng = np.random.default_rng(0)
    alphabet = list("abcdeé") + ["e\u0301", "\U0001f525", "ß", "Σ"]

    def texts(n: int) -> list[str]:
        return [
            " ".join(
                "".join(rng.choice(alphabet, size=rng.integers(1, 9)))
                for _ in range(rng.integers(0, 6))
            )
            for _ in range(n)
        ]

    vectorizer = TfidfVectorizer(
        analyzer="char_wb", ngram_range=(2, 5), sublinear_tf=True, dtype=np.float32
    ).fit(texts(3000))
    assert len(vectorizer.vocabulary_) > 5000
    queries = texts(500)
    # reference: scikit-learn's own TfidfVectorizer.transform
    expected = vectorizer.transform(queries).toarray()
    assert np.array_equal(WordCachedTfidf(vectorizer).transform(queries).toarray(), expected)


def test_a_full_word_cache_starts_again_and_stays_exact() -> None:
    vectorizer = TfidfVectorizer(analyzer="char_wb", ngram_range=(3, 5), sublinear_tf=True).fit(
        TRAIN
    )
    fast = WordCachedTfidf(vectorizer, max_words=3)
    for _ in range(2):
        got = fast.transform(QUERIES).toarray()
        # reference: scikit-learn's own TfidfVectorizer.transform
        assert np.allclose(got, vectorizer.transform(QUERIES).toarray(), atol=1e-6)


@pytest.mark.parametrize("ngrams", [(1, 1), (1, 2), (2, 3)])
def test_batched_word_ngrams_equal_the_vectorizer(ngrams: tuple[int, int]) -> None:
    vectorizer = TfidfVectorizer(
        analyzer="word",
        ngram_range=ngrams,
        token_pattern=r"(?u)\b\w+\b",
        sublinear_tf=True,
        dtype=np.float32,
    ).fit(TRAIN)
    fast = WordNgramTfidf(vectorizer)
    # reference: scikit-learn's own TfidfVectorizer.transform
    assert np.array_equal(
        fast.transform(QUERIES).toarray(), vectorizer.transform(QUERIES).toarray()
    )


PUNCTUATED = [
    "Réf.25639 (27446) kids' boots - black/white",
    "boots—leather, black; REF:S-97258",
    "cuir noir cuir-noir cuirnoir",
    "— … ---",
    "zzq boots leather zzq",  # a known bigram around unknown words
]


@pytest.mark.parametrize("pattern", [r"(?u)\b\w+\b", r"(?u)\b\w\w+\b"])
def test_word_ngrams_by_token_number_equal_the_vectorizer_across_batches(pattern: str) -> None:
    vectorizer = TfidfVectorizer(
        analyzer="word", ngram_range=(1, 2), token_pattern=pattern, sublinear_tf=True
    ).fit(TRAIN + PUNCTUATED[:3])
    fast = WordNgramTfidf(vectorizer, max_words=12)  # small: the word cache starts again
    assert fast._by_token  # the token-number path, not the per-text one
    for batch in (PUNCTUATED, QUERIES, PUNCTUATED[::-1], QUERIES + PUNCTUATED):
        # reference: scikit-learn's own TfidfVectorizer.transform
        expected = vectorizer.transform(batch).toarray()
        assert np.allclose(fast.transform(batch).toarray(), expected, atol=1e-6)


HASHTAGGED = [" ".join("#" + word for word in text.split()) for text in TRAIN + PUNCTUATED]


@pytest.mark.parametrize(
    ("pattern", "texts"),
    [
        # A token may hold a space: a bigram of two such tokens has more than two parts.
        (r"(?u)\b\w+ \w+\b|\w+", TRAIN + PUNCTUATED),
        # Tokens only after a "#": on its own, a vocabulary token is no token at all.
        (r"(?u)(?<=#)\w+", HASHTAGGED),
    ],
)
def test_word_ngrams_fall_back_to_the_plain_path_when_terms_are_no_token_pairs(
    pattern: str, texts: list[str]
) -> None:
    vectorizer = TfidfVectorizer(
        analyzer="word", ngram_range=(1, 2), token_pattern=pattern, sublinear_tf=True
    ).fit(texts)
    fast = WordNgramTfidf(vectorizer)
    assert not fast._by_token
    for batch in (texts[:5], QUERIES + HASHTAGGED[-5:]):
        # reference: scikit-learn's own TfidfVectorizer.transform
        expected = vectorizer.transform(batch).toarray()
        assert np.allclose(fast.transform(batch).toarray(), expected, atol=1e-6)


def test_unsupported_settings_fall_back_to_the_vectorizer() -> None:
    stemmed = TfidfVectorizer(analyzer="word", stop_words=["de"]).fit(TRAIN)
    assert fast_transformer(stemmed) is None
    upper = TfidfVectorizer(analyzer="char_wb", lowercase=False).fit(TRAIN)
    assert fast_transformer(upper) is None


def test_fitting_on_a_sample_transforms_every_row_like_the_sample_fitted_vectorizer() -> None:
    from catmap.classify.features import ProductFeaturizer, ProductTexts

    titles = [f"{t} {i % 7}" for i, t in enumerate(TRAIN * 6)]
    texts = ProductTexts(
        titles, ["A > B"] * len(titles), ["Kestrel"] * len(titles), [""] * len(titles)
    )
    featurizer = ProductFeaturizer(min_df=1, fit_sample=10)
    matrix = featurizer.fit_transform(texts)
    assert matrix.shape[0] == len(titles)
    # The stacked training matrix is what transform() gives with the learned vocabularies.
    assert np.allclose(matrix.toarray(), featurizer.transform(texts).toarray(), atol=1e-6)
    with pytest.raises(ValueError, match="fit_sample"):
        ProductFeaturizer(fit_sample=0).fit(texts)


def test_class_cap_keeps_at_most_the_cap_of_each_label_and_every_small_class_whole() -> None:
    from catmap.classify.model import _cap_per_class

    labels = ["a"] * 10 + ["b"] * 3 + ["c"] * 7
    keep = _cap_per_class(labels, 4, np.random.default_rng(0))
    kept = [labels[i] for i in keep]
    assert kept.count("a") == 4 and kept.count("b") == 3 and kept.count("c") == 4
    assert list(keep) == sorted(set(keep.tolist()))


SPLIT_CASES = [
    "ΟΔΟΣ Σίσυφος ΣΑΣ",  # final sigma: lower-cased as a whole text, ends at each text's end
    "İstanbul İİ",  # lower-casing makes this text longer
    "a\u3000b\u00a0c\u2028d\x1ce\x1ff\u205fg",  # what str.split() splits on, beyond ASCII
    "zero\u200bwidth stays one word",  # not whitespace for str.split()
    "",
    "   ",
    "\U0001f525 fire\U0001f525",
    "tab\tand\nnewline",
]


# Lower-cased code point by code point (no final sigma, no dotted capital I in the batch).
CASED_CASES = [
    "ÉCOLE Ünïcode ÀÖØÞ ΑΒΓ Привет ԱԲ",
    "\U00010400\U00010427 deseret \U0001e900 adlam \U0001f525FIRE",
    "ǅ ǈ ẞ Ω K Å",  # title-case letters, and capitals whose lower case is elsewhere
    "MiXeD\u3000Case\u00a0ТЕКСТ",
]


@pytest.mark.parametrize("texts", [SPLIT_CASES, [*SPLIT_CASES, "a\x00b", "\x00"], [], CASED_CASES])
def test_word_index_cuts_like_str_split(texts: list[str]) -> None:
    index = _WordIndex(max_words=7)  # small: restarts along the way
    for batch in (texts, texts[::-1], texts):
        split = index.split(batch)
        got = [
            [split.words[n] for n in split.numbers[a:b]]
            for a, b in zip(split.indptr[:-1], split.indptr[1:], strict=True)
        ]
        # reference: Python's own str.lower and str.split
        assert got == [text.lower().split() for text in batch]


def test_lower_case_table_lowers_as_str_lower_and_nothing_past_it_has_a_lower_case() -> None:
    table = _wordcache._lower_cases()
    assert table is not None
    special = {ord(c) for c in _wordcache._CONTEXT_LOWER}
    # reference: Python's own str.lower, code point by code point
    assert all(table[c] == ord(chr(c).lower()) for c in range(len(table)) if c not in special)
    assert all(chr(c).lower() == chr(c) for c in range(len(table), 0x110000))


def test_word_index_lowers_by_python_when_there_is_no_table() -> None:
    index = _WordIndex()
    with patch.object(_wordcache, "_LOWER", [None]):
        split = index.split(CASED_CASES)
    got = [
        [split.words[n] for n in split.numbers[a:b]]
        for a, b in zip(split.indptr[:-1], split.indptr[1:], strict=True)
    ]
    # reference: Python's own str.lower and str.split
    assert got == [text.lower().split() for text in CASED_CASES]


@pytest.mark.parametrize(
    "text", ["", "a", "ab\x00", "\x00\x00", "\ud800 lone\udfff", "é\U0001f525\x00z", "\x00a"]
)
def test_code_array_holds_the_strings_code_points(text: str) -> None:
    codes = _wordcache._code_array(text)
    # reference: Python's own ord of each character
    assert codes.tolist() == [ord(c) for c in text]
    assert codes.dtype == np.uint32 and codes.flags.writeable


def test_words_of_a_split_read_back_as_the_strings_numbered() -> None:
    index = _WordIndex()
    split = index.split(["Alpha beta \U0001f525", "beta GAMMA"])
    words = split.words
    # reference: the texts lower-cased and cut by Python, numbered in order of first sight
    expected = list(dict.fromkeys(" ".join(["alpha beta \U0001f525", "beta gamma"]).split()))
    assert len(words) == split.n_words == len(expected)
    assert [words[i] for i in range(len(words))] == expected
    assert words[-1] == expected[-1] and words[1:] == expected[1:]
    assert words.all() == expected
    with pytest.raises(IndexError):
        words[len(expected)]


def test_a_cache_sent_to_another_process_starts_empty_and_stays_exact() -> None:
    vectorizer = TfidfVectorizer(analyzer="char_wb", ngram_range=(3, 4), sublinear_tf=True).fit(
        TRAIN
    )
    fast = WordCachedTfidf(vectorizer)
    expected = vectorizer.transform(QUERIES).toarray()
    assert np.allclose(fast.transform(QUERIES).toarray(), expected, atol=1e-6)
    copy = pickle.loads(pickle.dumps(fast))
    # The other process's word index numbers words otherwise (here: other words first).
    other = _WordIndex()
    other.split(["completely different words first", *PUNCTUATED])
    with patch.object(_wordcache, "_WORDS", other), patch.object(_wordcache, "_RECENT_SPLITS", []):
        # reference: scikit-learn's own TfidfVectorizer.transform
        assert np.allclose(copy.transform(QUERIES).toarray(), expected, atol=1e-6)


def test_word_characters_are_what_the_pattern_matches() -> None:
    import re

    table = _wordcache._word_characters()
    word = re.compile(r"(?u)\w")
    # reference: Python's own regular expression, on every code point of the table
    assert [c for c in range(len(table)) if table[c]] == [
        c for c in range(len(table)) if word.fullmatch(chr(c))
    ]


@pytest.mark.parametrize("pattern", [r"(?u)\b\w+\b", r"(?u)\b\w\w+\b"])
def test_word_ngrams_of_words_beyond_the_character_table_equal_the_vectorizer(
    pattern: str,
) -> None:
    train = ["\U0001f525fire sale", "fire\U00020000 pit", "ab c d", "deux\u3042mots ab"]
    queries = ["\U0001f525fire ab c", "sale fire\U00020000 pit ab", "deux\u3042mots c d ab"]
    vectorizer = TfidfVectorizer(ngram_range=(1, 2), token_pattern=pattern, dtype=np.float32).fit(
        train
    )
    fast = WordNgramTfidf(vectorizer)
    # reference: scikit-learn's own TfidfVectorizer.transform
    assert np.array_equal(
        fast.transform(queries).toarray(), vectorizer.transform(queries).toarray()
    )


def test_count_rows_grow_as_the_stacked_rows() -> None:
    import scipy.sparse as sp

    idf = np.linspace(1.0, 3.0, 50)
    rows = _wordcache.CountRows(idf)
    parts = [
        sp.random(n, 50, density=0.2, format="csr", dtype=np.float32, rng=n)
        for n in (3, 0, 1500, 7)
    ]
    for part in parts:
        rows.append(part.data, part.indices, part.indptr)
    stacked = sp.vstack(parts, format="csr")
    # reference: SciPy's vstack of the same rows
    assert rows.n_rows == stacked.shape[0]
    assert np.array_equal(rows.indptr, stacked.indptr)
    assert np.array_equal(rows.indices, stacked.indices)
    assert np.array_equal(rows.data, stacked.data)
    assert np.array_equal(rows.entry_idf, idf[stacked.indices])


def test_count_rows_idf_filled_by_a_caller_reads_as_the_looked_up_idf() -> None:
    import scipy.sparse as sp

    idf = np.linspace(1.0, 3.0, 50)
    rows = _wordcache.CountRows(idf)
    first = sp.random(4, 50, density=0.2, format="csr", dtype=np.float32, rng=1)
    rows.append(first.data, first.indices, first.indptr)
    assert len(rows.entry_idf) == first.nnz  # the first rows looked up on reading
    empty = sp.csr_matrix((2, 50), dtype=np.float32)  # rows without entries start the batch
    later = sp.random(30, 50, density=0.2, format="csr", dtype=np.float32, rng=2)
    for part in (empty, later):
        rows.append(part.data, part.indices, part.indptr)
    room, unfilled = rows.idf_to_fill()
    # the first row with entries whose idf is missing: the first of ``later``
    assert unfilled == 4 + 2 + int(np.flatnonzero(np.diff(later.indptr))[0])
    assert len(room) >= rows.nnz
    room[first.nnz : rows.nnz] = idf[later.indices]  # what a caller looking them up writes
    rows.idf_filled()
    stacked = sp.vstack([first, empty, later], format="csr")
    # reference: NumPy's indexing of the idf by each entry's column
    assert np.array_equal(rows.entry_idf, idf[stacked.indices])
