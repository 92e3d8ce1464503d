"""Fast, exact application of fitted TF-IDF vectorizers to many short texts.

Character n-grams are computed once per distinct word, then summed per text.

A ``char_wb`` analyzer pads each whitespace-separated word with spaces and cuts it into
n-grams on its own, so a text's n-gram counts are the sum of its words' counts. Titles repeat
the same few thousand words across millions of products: analysing each distinct word once and
summing the cached count rows per text gives exactly the fitted vectorizer's output — the same
counts, the same sublinear tf, idf and L2 norm — for a fraction of the time the per-text
analyzer takes. A new word's n-grams are looked up in a hash table of the vocabulary by compiled
code (keys of packed characters, or hits confirmed character by character), without making a
Python string per n-gram.

Word unigrams and bigrams work the same way: each distinct word is cut into tokens once (by
compiled code for the standard token patterns) and cached as token numbers; a batch's unigrams
and bigrams are then counted by compiled code, with the same tokens, n-grams and weighting as the
fitted vectorizer.
"""

from __future__ import annotations

import re
import threading
from collections.abc import Sequence
from itertools import chain, repeat
from typing import TYPE_CHECKING, Any, overload

import numpy as np
import scipy.sparse as sp

from catmap.classify._kernels import (
    PACKED_NGRAM_MAX,
    char_wb_features,
    char_wb_rows,
    gather_strings,
    hash_table,
    idf_l2_rows,
    index_words,
    lower_codes,
    ngram_table,
    pair_table,
    string_hashes,
    sum_rows,
    table_add,
    token_ngram_counts,
    word_tokens,
)

if TYPE_CHECKING:
    from sklearn.feature_extraction.text import TfidfVectorizer

__all__ = ["CountRows", "WordCachedTfidf", "WordNgramTfidf", "fast_transformer"]

# Past this many cached words the cache starts again (bounded memory on endless feeds).
MAX_CACHED_WORDS = 1_000_000
Array = np.ndarray[Any, Any]


class _Split:
    """A list of texts cut into words, each word given as its number in the word index.

    Attributes:
        indptr: text i holds the words ``indptr[i]:indptr[i + 1]``.
        numbers: each word's number in :attr:`words` (int64).
        generation: the word index's generation when the split was made.
        codes, offsets: the index's code points of its words end to end, and where each word
            starts (the arrays when the split was made: they only grow past its words).
    """

    __slots__ = ("codes", "generation", "indptr", "numbers", "offsets")

    def __init__(
        self, indptr: Array, numbers: Array, generation: int, codes: Array, offsets: Array
    ) -> None:
        self.indptr = indptr
        self.numbers = numbers
        self.generation = generation
        self.codes = codes
        self.offsets = offsets

    @property
    def n_words(self) -> int:
        """How many words the word index held when the split was made."""
        return len(self.offsets) - 1

    @property
    def words(self) -> _Words:
        """The word index's words, by number (those it held when the split was made)."""
        return _Words(self.codes, self.offsets)

    def code_points(self, numbers: Array) -> tuple[Array, Array]:
        """The words ``numbers`` (increasing) as code points end to end and each one's offsets."""
        first, last = int(numbers[0]), int(numbers[-1])
        if last - first + 1 == len(numbers):
            # Consecutive numbers (a batch's new words): their code points lie end to end.
            offsets = self.offsets[first : last + 2]
            return self.codes[offsets[0] : offsets[-1]], offsets - offsets[0]
        return gather_strings(self.codes, self.offsets, numbers)


class _Words(Sequence[str]):
    """Words kept as code points end to end, read as strings one by one when asked for.

    Most words are never needed as strings (the caches work on their code points): making one
    per new word cost more than cutting the texts into words.
    """

    def __init__(self, codes: Array, offsets: Array) -> None:
        self._codes = codes
        self._offsets = offsets

    def __len__(self) -> int:
        return len(self._offsets) - 1

    @overload
    def __getitem__(self, index: int) -> str: ...

    @overload
    def __getitem__(self, index: slice) -> list[str]: ...

    def __getitem__(self, index: int | slice) -> str | list[str]:
        if isinstance(index, slice):
            return [self[i] for i in range(*index.indices(len(self)))]
        if not -len(self) <= index < len(self):
            raise IndexError("word number out of range")
        index %= len(self)
        first, last = int(self._offsets[index]), int(self._offsets[index + 1])
        return _text(self._codes[first:last])

    def all(self) -> list[str]:
        """Every word, in number order."""
        text = _text(self._codes[: int(self._offsets[-1])])
        bounds = self._offsets.tolist()
        return [text[a:b] for a, b in zip(bounds[:-1], bounds[1:], strict=True)]


def _text(codes: Array) -> str:
    return bytes(codes.astype(np.uint32).data).decode("utf-32-le", "surrogatepass")


# What str.split() splits on, below U+3001 (no whitespace lies above U+3000).
_IS_SPACE = np.array([chr(c).isspace() for c in range(0x3001)], dtype=np.uint8)
_SEPARATOR = "\x00"
# The token patterns cut by compiled code (:func:`word_tokens`), with their shortest token.
_TOKEN_PATTERNS = {r"(?u)\b\w+\b": 1, r"(?u)\b\w\w+\b": 2}
_IS_WORD: list[Array] = []
# Code points from here on have no lower case of their own (tests/test_classify_features.py
# checks every one): the table of lower cases stops here.
_CASED_BELOW = 0x20000
# What str.lower() makes of a text holding one of these depends on more than the character
# (a final capital sigma; a dotted capital I becomes two code points): such texts are
# lower-cased by Python.
_CONTEXT_LOWER = ("\u03a3", "\u0130")
_LOWER: list[Array | None] = []


def _word_characters() -> Array:
    """1 for each code point below U+10000 that the pattern ``\\w`` matches (made once)."""
    if not _IS_WORD:
        every = "".join(map(chr, range(0x10000)))
        # Everything else becomes U+0000, itself no word character.
        marked = re.sub(r"(?u)\W", "\x00", every).encode("utf-32-le", "surrogatepass")
        _IS_WORD.append((np.frombuffer(marked, dtype=np.uint32) != 0).astype(np.uint8))
    return _IS_WORD[0]


def _lower_cases() -> Array | None:
    """The lower case of each code point below :data:`_CASED_BELOW`, as ``str.lower()`` makes
    it of the code point alone (made once; see :data:`_CONTEXT_LOWER` for the exceptions), or
    None when some code point's lower case is longer than one."""
    if not _LOWER:
        # Every code point as one string, made from an array (a few ms; chr by chr, 15 more).
        every = np.arange(_CASED_BELOW, dtype=np.uint32).tobytes()
        text = every.decode("utf-32-le", "surrogatepass")
        for special in _CONTEXT_LOWER:
            text = text.replace(special, "\x00")
        lowered = _code_array(text.lower())
        # Another code point lower-cased to two (a later Unicode version) would shift the rest:
        # then no table, and texts are lower-cased by Python.
        _LOWER.append(lowered if len(lowered) == _CASED_BELOW else None)
    return _LOWER[0]


class _WordIndex:
    """Every distinct lower-cased word seen by this process, numbered (bounded, then restarted).

    Texts are cut into words and the words looked up by compiled code (:func:`index_words`) over
    their code points: no Python string is made for a word already known. The transformers'
    caches keep what they derive from a word by its number here; a restart (past ``max_words``)
    raises :attr:`generation`, and the caches start again with it.
    """

    def __init__(self, max_words: int = MAX_CACHED_WORDS) -> None:
        self.max_words = max_words
        self.generation = -1
        self._restart()

    def _restart(self) -> None:
        self.generation += 1
        self.n_words = 0
        self._codes = np.zeros(1 << 16, dtype=np.uint32)
        self._offsets = np.zeros(1 << 12, dtype=np.int64)
        self._hashes = np.zeros(1 << 12, dtype=np.uint64)
        self._slots = np.full(16, -1, dtype=np.int64)

    def split(self, texts: Sequence[str]) -> _Split:
        """Return the texts (lower-cased, cut as by ``str.split()``) as word numbers."""
        joined = _SEPARATOR.join(texts)
        if joined.count(_SEPARATOR) != max(len(texts) - 1, 0):
            # A text holding the separator itself (a damaged feed): cut in Python.
            return self._split_in_python(texts)
        table = _lower_cases()
        if table is None or any(special in joined for special in _CONTEXT_LOWER):
            # Lower-cased as a whole: the same as text by text, the separator ending each
            # context.
            codes = _code_array(joined.lower())
        else:
            # Code point by code point, by compiled code: str.lower() takes its slow path on
            # any text not all ASCII.
            codes = _code_array(joined)
            lower_codes(codes, table)
        known = self.n_words
        # New words are numbered and added to the table by the compiled loop itself.
        (
            indptr,
            numbers,
            self._slots,
            self._hashes,
            self._codes,
            self._offsets,
            total,
            _,
            _,
        ) = index_words(
            codes,
            _IS_SPACE,
            self._slots,
            self._hashes,
            self._codes,
            self._offsets,
            known,
            len(texts),
        )
        if known and total > self.max_words:
            self._restart()
            return self.split(texts)
        self.n_words = total
        return self._made(indptr, numbers)

    def _made(self, indptr: Array, numbers: Array) -> _Split:
        n = self.n_words
        return _Split(indptr, numbers, self.generation, self._codes, self._offsets[: n + 1])

    def _add(self, new: list[str]) -> int:
        """Number new words (not yet in the index); return the first new number."""
        first = self.n_words
        codes, offsets = _code_points(new)
        hashes = string_hashes(codes, offsets)
        total = first + len(new)
        used = int(self._offsets[first])
        if total + 1 > len(self._offsets):
            size = max(2 * len(self._offsets), total + 1)
            self._offsets = _extended(self._offsets, size)
            self._hashes = _extended(self._hashes, size)
        if used + len(codes) > len(self._codes):
            self._codes = _extended(self._codes, max(2 * len(self._codes), used + len(codes)))
        self._codes[used : used + len(codes)] = codes
        self._offsets[first + 1 : total + 1] = used + offsets[1:]
        self._hashes[first:total] = hashes
        self.n_words = total
        if 2 * total > len(self._slots):
            self._slots = hash_table(self._hashes[:total])
        else:
            table_add(self._slots, self._hashes[:total], first)
        return first

    def _split_in_python(self, texts: Sequence[str]) -> _Split:
        words = [text.lower().split() for text in texts]
        indptr = np.zeros(len(words) + 1, dtype=np.int64)
        np.cumsum(np.fromiter(map(len, words), np.int64, count=len(words)), out=indptr[1:])
        flat = list(chain.from_iterable(words))
        indexed = _Words(self._codes, self._offsets[: self.n_words + 1]).all()
        known = dict(zip(indexed, range(len(indexed)), strict=True))
        new = [word for word in dict.fromkeys(flat) if word not in known]
        if indexed and len(indexed) + len(new) > self.max_words:
            self._restart()
            known, new = {}, list(dict.fromkeys(flat))
        if new:
            first = self._add(new)
            known.update(zip(new, range(first, first + len(new)), strict=True))
        numbers = np.fromiter(map(known.__getitem__, flat), np.int64, count=len(flat))
        return self._made(indptr, numbers)


_WORDS = _WordIndex()
# Mappers of different models may run in threads of one process (a cluster worker with several
# threads); each model's caches take turns under its mapper's lock, the shared index under this.
# A split's words stay readable after: within a generation the index only appends.
_WORDS_LOCK = threading.Lock()
# The latest few splits, as (text list, its length, its split): see _split_words.
_RECENT_SPLITS: list[tuple[Sequence[str], int, _Split]] = []
_RECENT_SPLITS_KEPT = 4
# Lists this short are not kept (the distinct values of an absent field, one placeholder): they
# would push out the batch's title list that later readers split again.
_SMALL_LIST = 8


def _split_words(texts: Sequence[str]) -> _Split:
    """Return the texts cut into words.

    Several readers split the same list of texts one after the other (the model's title words
    and title n-grams, the keyword mapper's title n-grams): the splits of the latest few list
    objects are kept, so each list is split once. A kept list is held, so its identity cannot
    be reused by another; lists are not changed in place once built.
    """
    with _WORDS_LOCK:
        for kept, length, split in _RECENT_SPLITS:
            if kept is texts and length == len(texts) and split.generation == _WORDS.generation:
                return split
        split = _WORDS.split(texts)
        if len(texts) > _SMALL_LIST:
            _RECENT_SPLITS.insert(0, (texts, len(texts), split))
            del _RECENT_SPLITS[_RECENT_SPLITS_KEPT:]
        return split


def _extended(array: Array, size: int) -> Array:
    """A copy of ``array`` with zeros appended up to ``size``."""
    out = np.zeros(size, dtype=array.dtype)
    out[: len(array)] = array
    return out


def _code_array(text: str) -> Array:
    """Return the code points of a string as a new, writable uint32 array.

    NumPy copies a string's code points straight into its array (a lone surrogate, from a
    badly decoded feed, too): one copy, where encoding to UTF-32 first made two.
    """
    if not text:
        return np.zeros(0, dtype=np.uint32)
    codes = np.array(text).reshape(1).view(np.uint32)
    if len(codes) != len(text):  # not expected: the array's width is the string's length
        return np.frombuffer(text.encode("utf-32-le", "surrogatepass"), dtype=np.uint32).copy()
    return codes


def _code_points(strings: Sequence[str]) -> tuple[Array, Array]:
    """Return the strings' code points end to end (uint32) and each string's offsets."""
    lengths = np.fromiter(map(len, strings), dtype=np.int64, count=len(strings))
    offsets = np.zeros(len(strings) + 1, dtype=np.int64)
    np.cumsum(lengths, out=offsets[1:])
    # surrogatepass: a lone surrogate (from a badly decoded feed) is still one code point
    raw = "".join(strings).encode("utf-32-le", "surrogatepass")
    return np.frombuffer(raw, dtype=np.uint32), offsets


def _distinct_numbers(numbers: Array, size: int) -> Array:
    """The distinct values of ``numbers`` (all below ``size``), in order, without a sort."""
    seen = np.zeros(size, dtype=bool)
    seen[numbers] = True
    return np.flatnonzero(seen)


class _PerWordCache:
    """What the cached transformers share: what they derive from a word, kept by its number.

    ``_row_of[n]`` is the cached row of word index number n (-1: not cached yet). Subclasses
    keep ``max_words`` and implement ``_clear`` (empty their rows) and ``_add_words`` (append
    the rows of some words of a split, in order).
    """

    max_words: int
    _row_of: Array
    _n_rows: int
    _generation: int
    # What a subclass derives from words (emptied by _clear), left out of a pickle.
    _DERIVED: tuple[str, ...] = ()

    def __getstate__(self) -> dict[str, Any]:
        # The rows are kept by word index number, and the index belongs to this process: a
        # copy sent to another process (a cluster worker) starts with an empty cache.
        derived = {"_row_of", "_n_rows", "_generation", *self._DERIVED}
        return {k: v for k, v in self.__dict__.items() if k not in derived}

    def __setstate__(self, state: dict[str, Any]) -> None:
        self.__dict__.update(state)
        self._reset()

    def _reset(self) -> None:
        # Counts the resets: word numbers handed out before a reset mean nothing after it.
        self.generation = getattr(self, "generation", -1) + 1
        self._row_of = np.zeros(0, dtype=np.int64)
        self._n_rows = 0
        self._generation = -1
        self._clear()

    def _clear(self) -> None:
        raise NotImplementedError

    def _add_words(self, split: _Split, numbers: Array) -> None:
        raise NotImplementedError

    def _word_numbers(self, split: _Split) -> Array:
        """Return the cached row of each word of a split, caching the words not seen yet first."""
        if split.generation != self._generation:
            self._reset()
            self._generation = split.generation
        if len(self._row_of) < split.n_words:
            grown = np.full(max(split.n_words, 2 * len(self._row_of)), -1, dtype=np.int64)
            grown[: len(self._row_of)] = self._row_of
            self._row_of = grown
        rows = self._row_of[split.numbers]
        missing = split.numbers[rows < 0]
        if len(missing):
            missing = _distinct_numbers(missing, split.n_words)
            if self._n_rows + len(missing) > self.max_words:
                generation = split.generation
                self._reset()
                self._generation = generation
                self._row_of = np.full(split.n_words, -1, dtype=np.int64)
                missing = _distinct_numbers(split.numbers, split.n_words)
            self._add_words(split, missing)
            self._row_of[missing] = np.arange(self._n_rows, self._n_rows + len(missing))
            self._n_rows += len(missing)
            rows = self._row_of[split.numbers]
        return rows


class CountRows:
    """The cached words' n-gram count rows, CSR arrays grown in place, and each entry's idf.

    Appending a batch's new words copies only them (the arrays double when full; the first
    rows are taken as they are), and the idf of each entry's n-gram is looked up once, on the
    first read of :attr:`entry_idf` after the entry was added (or by a caller that looks it up
    anyway, see :meth:`idf_to_fill`).

    Attributes:
        indptr: row i is entries ``indptr[i]:indptr[i + 1]`` (int64).
        indices, data: each entry's n-gram (int32) and count (float32).
        entry_idf: each entry's n-gram's idf (float64).
    """

    def __init__(self, idf: Array) -> None:
        self.idf = idf
        self._indptr = np.zeros(1, dtype=np.int64)
        self._indices = np.zeros(0, dtype=np.int32)
        self._data = np.zeros(0, dtype=np.float32)
        self._entry_idf = np.zeros(0, dtype=np.float64)
        self._with_idf = 0  # entries whose idf is filled in
        self.n_rows = 0
        self.nnz = 0

    def append(self, data: Array, indices: Array, indptr: Array) -> None:
        """Append CSR rows (``indptr`` starting at 0); the arrays may be kept, not copied."""
        rows, nnz = len(indptr) - 1, len(indices)
        if self.n_rows == 0:
            self._indptr = np.asarray(indptr, dtype=np.int64)
            self._indices = np.asarray(indices, dtype=np.int32)
            self._data = np.asarray(data, dtype=np.float32)
            self.n_rows, self.nnz = rows, nnz
            return
        if self.n_rows + rows + 1 > len(self._indptr):
            self._indptr = _extended(
                self._indptr, max(2 * len(self._indptr), self.n_rows + rows + 1)
            )
        if self.nnz + nnz > len(self._indices):
            size = max(2 * len(self._indices), self.nnz + nnz)
            self._indices = _extended(self._indices, size)
            self._data = _extended(self._data, size)
        self._indptr[self.n_rows + 1 : self.n_rows + rows + 1] = self.nnz + indptr[1:]
        self._indices[self.nnz : self.nnz + nnz] = indices
        self._data[self.nnz : self.nnz + nnz] = data
        self.n_rows += rows
        self.nnz += nnz

    @property
    def indptr(self) -> Array:
        return self._indptr[: self.n_rows + 1]

    @property
    def indices(self) -> Array:
        return self._indices[: self.nnz]

    @property
    def data(self) -> Array:
        return self._data[: self.nnz]

    def idf_to_fill(self) -> tuple[Array, int]:
        """Return the entries' idf array (room for every entry) and the first row not filled in.

        For a caller that looks the idf of new rows' entries up anyway: once it has filled in
        every row from that one on, it calls :meth:`idf_filled`.
        """
        self._idf_room()
        first = int(np.searchsorted(self.indptr, self._with_idf, side="right")) - 1
        return self._entry_idf, first

    def idf_filled(self) -> None:
        """Record that the idf of every entry is filled in (see :meth:`idf_to_fill`)."""
        self._with_idf = self.nnz

    def _idf_room(self) -> None:
        if len(self._entry_idf) < self.nnz:
            self._entry_idf = _extended(
                self._entry_idf, max(len(self._indices), 2 * len(self._entry_idf))
            )

    @property
    def entry_idf(self) -> Array:
        if self._with_idf < self.nnz:
            self._idf_room()
            done = self._with_idf
            self._entry_idf[done : self.nnz] = self.idf[self._indices[done : self.nnz]]
            self._with_idf = self.nnz
        return self._entry_idf[: self.nnz]


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

    _DERIVED = ("_rows",)

    def _clear(self) -> None:
        self._rows = CountRows(self._idf)

    def _table(self) -> tuple[Array, ...]:
        """The vocabulary as a lookup table, built once.

        :func:`ngram_table`'s (for :func:`char_wb_rows`) when no term and no n-gram is longer
        than six characters, else :func:`char_wb_features`'s.
        """
        table: tuple[Array, ...] | None = self.__dict__.get("_lookup")
        if table is None:
            terms = list(self._vocabulary)
            codes, offsets = _code_points(terms)
            features = np.fromiter(self._vocabulary.values(), dtype=np.int64, count=len(terms))
            longest = int(np.diff(offsets).max()) if len(terms) else 0
            if max(self._high, longest) <= PACKED_NGRAM_MAX:
                table = (ngram_table(codes, offsets, features, self._low),)
            else:
                hashes = string_hashes(codes, offsets)
                table = (hash_table(hashes), hashes, features, codes, offsets)
            self.__dict__["_lookup"] = table
        return table

    def _add_words(self, split: _Split, numbers: Array) -> None:
        codes, offsets = split.code_points(numbers)
        table = self._table()
        if len(table) == 1:
            rows = char_wb_rows(codes, offsets, self._low, self._high, *table, self._n_features)
            self._rows.append(*rows)
            return
        owner, feature = char_wb_features(codes, offsets, self._low, self._high, *table)
        block = sp.csr_matrix(
            (np.ones(len(owner), dtype=np.float32), (owner, feature)),
            shape=(len(numbers), self._n_features),
        )
        block.sum_duplicates()
        self._rows.append(block.data, block.indices, block.indptr)

    def cached_words(self, texts: Sequence[str]) -> tuple[Array, Array, CountRows]:
        """Return the texts as cached words: (offsets per text, word numbers, word count rows).

        Row ``numbers[j]`` of the count rows is the n-gram counts of word j; text i holds the
        words ``offsets[i]:offsets[i + 1]``. The numbers hold until :attr:`generation` changes;
        the rows only grow until then.
        """
        split = _split_words(texts)
        numbers = self._word_numbers(split)
        return split.indptr, numbers, self._rows

    @property
    def idf(self) -> Array:
        """The vectorizer's idf (float64)."""
        return self._idf

    def counts(self, texts: Sequence[str]) -> sp.csr_matrix:
        """Return the (texts, features) n-gram count matrix (float32 CSR)."""
        split = _split_words(texts)
        rows = self._word_numbers(split)
        cached = self._rows
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
    counted for the whole batch by compiled code (a bigram is a pair of token numbers, found in a
    hash table of the vocabulary's pairs). The token pattern never matches whitespace, so
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
        """Number the vocabulary's tokens; index its unigrams and bigrams by token numbers.

        Array by array rather than term by term (a model's vocabularies hold hundreds of
        thousands of terms, and this runs as the model loads): the terms are cut at their
        spaces in one split, each distinct token gets the number of its first appearance and
        is checked against the token pattern once.
        """
        terms = list(self._vocabulary)
        features = np.fromiter(self._vocabulary.values(), dtype=np.int64, count=len(terms))
        spaces = np.fromiter(map(str.count, terms, repeat(" ")), dtype=np.int64, count=len(terms))
        if len(terms) and int(spaces.max()) > 1:
            return False  # a token pattern that keeps spaces: the plain path is exact
        parts = " ".join(terms).split(" ") if terms else []
        distinct = dict.fromkeys(parts)
        if "" in distinct:
            return False
        findall = self._findall
        if any(findall(part) != [part] for part in distinct):
            return False
        token = dict(zip(distinct, range(len(distinct)), strict=True))
        numbers = np.fromiter(map(token.__getitem__, parts), dtype=np.int64, count=len(parts))
        first = np.cumsum(spaces + 1) - (spaces + 1)  # each term's first part in ``parts``
        unigrams, pairs = spaces == 0, spaces == 1
        self._known_tokens = token
        self._token_table = None
        shortest = _TOKEN_PATTERNS.get(self.vectorizer.token_pattern)
        if shortest is not None:
            codes, offsets = _code_points(list(token))
            hashes = string_hashes(codes, offsets)
            self._token_table = (shortest, hash_table(hashes), hashes, codes, offsets)
        self._unigram_base = np.full(len(token), -1, dtype=np.int64)
        self._unigram_base[numbers[first[unigrams]]] = features[unigrams]
        self._pairs = pair_table(
            (numbers[first[pairs]] << 32) | numbers[first[pairs] + 1], features[pairs]
        )
        return True

    _DERIVED = ("_token", "_unigram", "_word_start", "_word_length", "_tokens")

    def _clear(self) -> None:
        if not self._by_token:
            return
        # Tokens outside the vocabulary get numbers past the unigram table's end.
        self._token = dict(self._known_tokens)
        self._unigram = self._unigram_base
        self._word_start = np.zeros(0, dtype=np.int64)
        self._word_length = np.zeros(0, dtype=np.int64)
        self._tokens = np.zeros(0, dtype=np.int64)

    def _add_words(self, split: _Split, numbers: Array) -> None:
        if self._token_table is not None:
            codes, offsets = split.code_points(numbers)
            shortest, *table = self._token_table
            counts, tokens, uncut = word_tokens(
                codes, offsets, _word_characters(), shortest, *table
            )
            # Tokens outside the vocabulary all get one number, past the unigram table.
            lengths = np.diff(counts)
            if len(uncut):
                # Words holding a code point past the table's: cut in Python, put in place.
                words = split.words
                cut = [self._findall(words[i]) for i in numbers[uncut].tolist()]
                lengths[uncut] = [len(c) for c in cut]
                known = [self._token.get(t, len(self._known_tokens)) for c in cut for t in c]
                where = np.repeat(counts[uncut], lengths[uncut])
                tokens = np.insert(tokens, where, np.array(known, dtype=np.int64))
            self._append_tokens(lengths, tokens)
            return
        words = split.words
        cut = [self._findall(words[i]) for i in numbers.tolist()]
        flat = list(chain.from_iterable(cut))
        tokens = np.fromiter(
            (self._token.setdefault(t, len(self._token)) for t in flat),
            dtype=np.int64,
            count=len(flat),
        )
        self._append_tokens(np.fromiter(map(len, cut), dtype=np.int64, count=len(cut)), tokens)

    def _append_tokens(self, lengths: Array, tokens: Array) -> None:
        starts = len(self._tokens) + np.concatenate([[0], np.cumsum(lengths)[:-1]])
        self._word_start = np.concatenate([self._word_start, starts.astype(np.int64)])
        self._word_length = np.concatenate([self._word_length, lengths])
        self._tokens = np.concatenate([self._tokens, tokens])

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
            self._pairs,
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
