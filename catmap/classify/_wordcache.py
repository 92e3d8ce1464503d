"""Fast, exact application of fitted TF-IDF vectorizers to many short texts.

Character n-grams are computed once per distinct word, then summed per text.

A ``char_wb`` analyzer pads each whitespace-separated word with spaces and cuts it into
n-grams on its own, so a text's n-gram counts are the sum of its words' counts. Titles repeat
the same few thousand words across millions of products: analysing each distinct word once and
summing the cached count rows per text gives exactly the fitted vectorizer's output — the same
counts, the same sublinear tf, idf and L2 norm — for a fraction of the time the per-text
analyzer takes. A new word's n-grams are looked up in a hash table of the vocabulary by compiled
code (each hit confirmed character by character), without making a Python string per n-gram.

Word unigrams and bigrams work the same way: each distinct word is cut into tokens once and
cached as token numbers; a batch's unigrams and bigrams are then looked up with NumPy, with the
same tokens, n-grams and weighting as the fitted vectorizer.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from itertools import chain, repeat
from typing import TYPE_CHECKING, Any

import numpy as np
import scipy.sparse as sp

from catmap.classify._kernels import (
    char_wb_features,
    hash_table,
    idf_l2_rows,
    mix_keys,
    string_hashes,
    sum_rows,
    token_ngram_counts,
)

if TYPE_CHECKING:
    from sklearn.feature_extraction.text import TfidfVectorizer

__all__ = ["WordCachedTfidf", "WordNgramTfidf", "fast_transformer"]

# Past this many cached words the cache starts again (bounded memory on endless feeds).
MAX_CACHED_WORDS = 1_000_000
Array = np.ndarray[Any, Any]


class _Split:
    """A list of texts cut into words: every word in a row (lower-cased), per-text offsets."""

    __slots__ = ("_distinct", "flat", "indptr")

    def __init__(self, flat: list[str], indptr: Array) -> None:
        self.flat = flat
        self.indptr = indptr
        self._distinct: list[str] | None = None

    @property
    def distinct(self) -> list[str]:
        """The distinct words, in first-seen order (made once, when first asked for)."""
        if self._distinct is None:
            self._distinct = list(dict.fromkeys(self.flat))
        return self._distinct


# The latest few splits, as (text list, its length, its split): see _split_words.
_RECENT_SPLITS: list[tuple[Sequence[str], int, _Split]] = []
_RECENT_SPLITS_KEPT = 4
# How many first words of a batch tell whether most of its words are new.
_PROBE_WORDS = 64


def _split_words(texts: Sequence[str]) -> _Split:
    """Return the texts cut into words.

    Several readers split the same list of texts one after the other (the model's title words
    and title n-grams, the keyword mapper's title n-grams): the splits of the latest few list
    objects are kept, so each list is split once. A kept list is held, so its identity cannot
    be reused by another; lists are not changed in place once built.
    """
    for kept, length, split in _RECENT_SPLITS:
        if kept is texts and length == len(texts):
            return split
    words = [text.lower().split() for text in texts]
    indptr = np.zeros(len(words) + 1, dtype=np.int64)
    np.cumsum(np.fromiter(map(len, words), dtype=np.int64, count=len(words)), out=indptr[1:])
    split = _Split(list(chain.from_iterable(words)), indptr)
    _RECENT_SPLITS.insert(0, (texts, len(texts), split))
    del _RECENT_SPLITS[_RECENT_SPLITS_KEPT:]
    return split


def _code_points(strings: Sequence[str]) -> tuple[Array, Array]:
    """Return the strings' code points end to end (uint32) and each string's offsets."""
    lengths = np.fromiter(map(len, strings), dtype=np.int64, count=len(strings))
    offsets = np.zeros(len(strings) + 1, dtype=np.int64)
    np.cumsum(lengths, out=offsets[1:])
    # surrogatepass: a lone surrogate (from a badly decoded feed) is still one code point
    raw = "".join(strings).encode("utf-32-le", "surrogatepass")
    return np.frombuffer(raw, dtype=np.uint32), offsets


class _PerWordCache:
    """What the two cached transformers share: a number per cached word, grown batch by batch.

    Subclasses keep ``_word_row`` (word → number), ``max_words``, and implement ``_reset`` and
    ``_add_words``.
    """

    _word_row: dict[str, int]
    max_words: int

    def _reset(self) -> None:
        raise NotImplementedError

    def _add_words(self, words: Sequence[str]) -> None:
        raise NotImplementedError

    def _word_numbers(self, split: _Split) -> Array:
        """Return the number of each word of a split, caching the words not seen yet first.

        Past the first batches of a feed nearly every word is known: then one look-up per word,
        and the new words are gathered only when there are some. Whether a batch is mostly new
        is told from its first words.
        """
        flat, known = split.flat, self._word_row
        sample = flat[:_PROBE_WORDS]
        if 2 * sum(word not in known for word in sample) > len(sample):
            # Mostly new words (a feed's first batches): find them among the distinct ones.
            new = [word for word in split.distinct if word not in known]
        else:
            numbers = np.fromiter(map(known.get, flat, repeat(-1)), np.int64, count=len(flat))
            missing = np.flatnonzero(numbers < 0)
            if not len(missing):
                return numbers
            new = list(dict.fromkeys([flat[i] for i in missing]))
        if len(self._word_row) + len(new) > self.max_words:
            self._reset()
            new = split.distinct
        if new:
            self._add_words(new)
        return np.fromiter(map(self._word_row.__getitem__, flat), dtype=np.int64, count=len(flat))


class WordCachedTfidf(_PerWordCache):
    """Apply a fitted ``char_wb`` TfidfVectorizer with a per-word cache of n-gram counts.

    Args:
        vectorizer: a fitted TfidfVectorizer with ``analyzer="char_wb"`` and ``lowercase=True``.
        max_words: cache size limit (the cache is emptied when it is reached).
    """

    def __init__(self, vectorizer: TfidfVectorizer, *, max_words: int = MAX_CACHED_WORDS) -> None:
        if vectorizer.analyzer != "char_wb" or not vectorizer.lowercase:
            raise ValueError("only a lowercasing char_wb vectorizer can be cached per word")
        self.vectorizer = vectorizer
        self.max_words = max_words
        self._low, self._high = vectorizer.ngram_range
        self._vocabulary: dict[str, int] = vectorizer.vocabulary_
        self._idf = np.asarray(vectorizer.idf_, dtype=np.float64)
        self._n_features = len(self._vocabulary)
        self._reset()

    def _reset(self) -> None:
        self._word_row: dict[str, int] = {}
        self._blocks: list[sp.csr_matrix] = []
        self._rows = sp.csr_matrix((0, self._n_features), dtype=np.float32)
        self._stale = False

    def _table(self) -> tuple[Array, ...]:
        """The vocabulary as a lookup table for :func:`char_wb_features` (built once)."""
        table: tuple[Array, ...] | None = self.__dict__.get("_lookup")
        if table is None:
            terms = list(self._vocabulary)
            codes, offsets = _code_points(terms)
            hashes = string_hashes(codes, offsets)
            features = np.fromiter(self._vocabulary.values(), dtype=np.int64, count=len(terms))
            table = (hash_table(hashes), hashes, features, codes, offsets)
            self.__dict__["_lookup"] = table
        return table

    def _add_words(self, words: Sequence[str]) -> None:
        codes, offsets = _code_points(words)
        owner, feature = char_wb_features(codes, offsets, self._low, self._high, *self._table())
        block = sp.csr_matrix(
            (np.ones(len(owner), dtype=np.float32), (owner, feature)),
            shape=(len(words), self._n_features),
        )
        block.sum_duplicates()
        first = len(self._word_row)
        self._word_row.update(zip(words, range(first, first + len(words)), strict=True))
        self._blocks.append(block)
        self._stale = True

    def _matrix(self) -> sp.csr_matrix:
        if self._stale:
            self._rows = sp.vstack([self._rows, *self._blocks], format="csr", dtype=np.float32)
            self._blocks = []
            self._stale = False
        return self._rows

    def counts(self, texts: Sequence[str]) -> sp.csr_matrix:
        """Return the (texts, features) n-gram count matrix (float32 CSR)."""
        split = _split_words(texts)
        rows = self._word_numbers(split)
        cached = self._matrix()
        # Each text's count row is the sum of its words' cached rows (no duplicate entries;
        # the column order within a row is left as it comes).
        return sp.csr_matrix(
            sum_rows(
                split.indptr, rows, cached.indptr, cached.indices, cached.data, self._n_features
            ),
            shape=(len(texts), self._n_features),
        )

    def transform(self, texts: Sequence[str]) -> sp.csr_matrix:
        """Return what ``vectorizer.transform(texts)`` returns (float32 CSR, rows L2-normalised)."""
        return _weighted(self.vectorizer, self._idf, self.counts(texts))


class WordNgramTfidf(_PerWordCache):
    """Apply a fitted word TfidfVectorizer (lowercasing, no stop words) to a batch at once.

    For unigrams and bigrams (the ranges catmap uses), every distinct whitespace-separated word
    is cut into tokens once and cached as token numbers; a text's unigrams and bigrams are then
    looked up for the whole batch with NumPy (a bigram is a pair of token numbers, found by a
    binary search among the vocabulary's pairs). The token pattern never matches whitespace, so
    cutting word by word gives the same tokens as cutting the whole text. Other n-gram ranges
    take the plain path (tokens and n-grams per text).

    Args:
        vectorizer: a fitted TfidfVectorizer with ``analyzer="word"``.
        max_words: cache size limit (the word cache is emptied when it is reached).
    """

    def __init__(self, vectorizer: TfidfVectorizer, *, max_words: int = MAX_CACHED_WORDS) -> None:
        if (
            vectorizer.analyzer != "word"
            or not vectorizer.lowercase
            or vectorizer.stop_words is not None
            or vectorizer.tokenizer is not None
            or vectorizer.preprocessor is not None
            or vectorizer.strip_accents is not None
        ):
            raise ValueError("only a plain lowercasing word vectorizer is supported")
        self.vectorizer = vectorizer
        self.max_words = max_words
        self._findall = re.compile(vectorizer.token_pattern).findall
        self._low, self._high = vectorizer.ngram_range
        self._vocabulary: dict[str, int] = vectorizer.vocabulary_
        self._idf = np.asarray(vectorizer.idf_, dtype=np.float64)
        self._by_token = self._low == 1 and self._high <= 2 and self._tables()
        if self._by_token:
            self._reset()

    def _tables(self) -> bool:
        """Number the vocabulary's tokens; index its unigrams and bigrams by token numbers."""
        token: dict[str, int] = {}
        unigram_tokens: list[int] = []
        unigram_features: list[int] = []
        pair_keys: list[int] = []
        pair_features: list[int] = []
        for term, feature in self._vocabulary.items():
            parts = term.split(" ")
            if len(parts) > 2:
                return False  # a token pattern that keeps spaces: the plain path is exact
            for part in parts:
                # Each distinct token is checked once (a bigram's parts are mostly unigrams
                # already seen): the regex over the whole vocabulary was most of a model's load.
                if part not in token:
                    if not part or self._findall(part) != [part]:
                        return False
                    token[part] = len(token)
            numbers = [token[part] for part in parts]
            if len(numbers) == 1:
                unigram_tokens.append(numbers[0])
                unigram_features.append(feature)
            else:
                pair_keys.append((numbers[0] << 32) | numbers[1])
                pair_features.append(feature)
        self._known_tokens = token
        self._unigram_base = np.full(len(token), -1, dtype=np.int64)
        self._unigram_base[unigram_tokens] = unigram_features
        self._pair_keys = np.array(pair_keys, dtype=np.int64)
        self._pair_features = np.array(pair_features, dtype=np.int64)
        self._pair_slots = hash_table(mix_keys(self._pair_keys))
        return True

    def _reset(self) -> None:
        # Tokens outside the vocabulary get numbers past the unigram table's end.
        self._token = dict(self._known_tokens)
        self._unigram = self._unigram_base
        self._word_row = {}
        self._word_start = np.zeros(0, dtype=np.int64)
        self._word_length = np.zeros(0, dtype=np.int64)
        self._tokens = np.zeros(0, dtype=np.int64)

    def _add_words(self, words: Sequence[str]) -> None:
        cut = [self._findall(word) for word in words]
        flat = list(chain.from_iterable(cut))
        numbers = np.fromiter(
            (self._token.setdefault(t, len(self._token)) for t in flat),
            dtype=np.int64,
            count=len(flat),
        )
        lengths = np.fromiter(map(len, cut), dtype=np.int64, count=len(cut))
        starts = len(self._tokens) + np.concatenate([[0], np.cumsum(lengths)[:-1]])
        first = len(self._word_row)
        self._word_row.update(zip(words, range(first, first + len(words)), strict=True))
        self._word_start = np.concatenate([self._word_start, starts.astype(np.int64)])
        self._word_length = np.concatenate([self._word_length, lengths])
        self._tokens = np.concatenate([self._tokens, numbers])

    def _terms(self, text: str) -> list[str]:
        tokens: list[str] = self._findall(text.lower())
        if self._low == 1 and self._high <= 2:
            if self._high == 2:
                tokens.extend([f"{a} {b}" for a, b in zip(tokens, tokens[1:])])  # noqa: B905
            return tokens
        terms = tokens[:] if self._low == 1 else []
        for n in range(max(self._low, 2), min(self._high, len(tokens)) + 1):
            terms.extend(" ".join(tokens[i : i + n]) for i in range(len(tokens) - n + 1))
        return terms

    def _token_counts(self, texts: Sequence[str]) -> sp.csr_matrix:
        split = _split_words(texts)
        word = self._word_numbers(split)
        counted = token_ngram_counts(
            split.indptr,
            word,
            self._word_start,
            self._word_length,
            self._tokens,
            self._unigram,
            self._high == 2,
            self._pair_slots,
            self._pair_keys,
            self._pair_features,
            len(self._vocabulary),
        )
        return sp.csr_matrix(counted, shape=(len(texts), len(self._vocabulary)))

    def counts(self, texts: Sequence[str]) -> sp.csr_matrix:
        """Return the (texts, features) term count matrix (float32 CSR)."""
        if self._by_token:
            return self._token_counts(texts)
        terms = [self._terms(text) for text in texts]
        flat = list(chain.from_iterable(terms))
        ids = np.fromiter(
            map(self._vocabulary.get, flat, repeat(-1)), dtype=np.int64, count=len(flat)
        )
        lengths = np.fromiter(map(len, terms), dtype=np.int64, count=len(terms))
        rows = np.repeat(np.arange(len(terms)), lengths)
        known = ids >= 0
        matrix = sp.csr_matrix(
            (np.ones(int(known.sum()), dtype=np.float32), (rows[known], ids[known])),
            shape=(len(terms), len(self._vocabulary)),
        )
        matrix.sum_duplicates()
        return matrix

    def transform(self, texts: Sequence[str]) -> sp.csr_matrix:
        """Return what ``vectorizer.transform(texts)`` returns (float32 CSR, rows L2-normalised)."""
        return _weighted(self.vectorizer, self._idf, self.counts(texts))


def fast_transformer(vectorizer: TfidfVectorizer) -> WordCachedTfidf | WordNgramTfidf | None:
    """Return the fast equivalent of a fitted vectorizer, or None when it has none."""
    try:
        if vectorizer.analyzer == "char_wb":
            return WordCachedTfidf(vectorizer)
        return WordNgramTfidf(vectorizer)
    except ValueError:
        return None


def _weighted(vectorizer: TfidfVectorizer, idf: Any, matrix: sp.csr_matrix) -> sp.csr_matrix:
    """Counts → sublinear tf × idf → row norm, in float32, as TfidfTransformer does."""
    matrix.eliminate_zeros()
    data = matrix.data
    if vectorizer.sublinear_tf:
        np.log(data, data)
        data += np.float32(1.0)
    if vectorizer.use_idf and vectorizer.norm == "l2":
        idf_l2_rows(matrix.indptr, matrix.indices, data, idf)  # the same arithmetic, one pass
        return sp.csr_matrix(matrix, dtype=np.float32)
    if vectorizer.use_idf:
        data *= idf[matrix.indices]
    if vectorizer.norm == "l2":
        # Row norms without sklearn's input checks (the matrix is ours and finite).
        row = np.repeat(np.arange(matrix.shape[0]), np.diff(matrix.indptr))
        norms = np.sqrt(np.bincount(row, weights=data * data, minlength=matrix.shape[0]))
        norms[norms == 0.0] = 1.0
        # float32 / double, rounded to float32: the same arithmetic as scikit-learn's.
        np.divide(data, norms[row], out=data, casting="unsafe")
    elif vectorizer.norm is not None:
        from sklearn.preprocessing import normalize

        matrix = normalize(matrix, norm=vectorizer.norm, copy=False)
    result: sp.csr_matrix = sp.csr_matrix(matrix, dtype=np.float32)
    return result
