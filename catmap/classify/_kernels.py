"""Compiled inner loops of mapping: sparse sums, products and look-ups written for their one use.

Mapping a chunk of products does a few kinds of work again and again:

* lower-casing texts (:func:`lower_codes`), cutting them into words and numbering them, new
  words added on the way (:func:`index_words`), and cutting new words into tokens
  (:func:`word_tokens`);
* cutting new title words into character n-grams and finding them in the vocabulary
  (:func:`char_wb_rows` on an :func:`ngram_table` of packed keys; :func:`char_wb_features`
  with :func:`string_hashes` and :func:`hash_table` for longer n-grams);
* counting each text's word unigrams and bigrams (:func:`token_ngram_counts`);
* summing the cached n-gram rows of each title's words (:func:`sum_rows`), then the idf and the
  row norm (:func:`idf_l2_rows`);
* adding two normalised query vectors, one of them shared by many rows (:func:`add_rows`);
* scoring a subset of rows against one department's weights, straight into a dense block
  (:func:`score_rows`, on weights laid out by :func:`pack_rows`), or a flat model's title
  n-grams word by word (:func:`score_new_words` once per new word, then
  :func:`score_words_dense`).

In Python, the look-ups make one string per n-gram; SciPy does the sums and products as general
sparse × sparse products, in two passes over the data (one to size the result, one to fill it),
with a sparse result converted to dense afterwards and a row selection copied beforehand. The
loops here do one pass each, into the layout the caller needs. They are compiled with Numba on
first use and cached on disk (``cache=True``), and release the GIL (``nogil=True``).

Each function is checked in ``tests/test_classify_kernels.py`` against the SciPy expression it
replaces or the plain Python it stands for (the analyzer's n-grams, ``str.split``, the token
pattern, a dict).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import scipy.sparse as sp
from numba import njit

__all__ = [
    "add_rows",
    "char_wb_features",
    "char_wb_rows",
    "dense_rows",
    "gather_strings",
    "hash_table",
    "idf_l2_rows",
    "index_words",
    "lower_codes",
    "mix_keys",
    "ngram_table",
    "pack_rows",
    "pair_table",
    "score_rows",
    "score_rows_dense",
    "score_words_dense",
    "score_columns_dense",
    "score_new_words",
    "string_hashes",
    "sum_rows",
    "table_add",
    "token_ngram_counts",
    "word_tokens",
]

Array = np.ndarray[Any, Any]


# A sparse accumulator, shared by the loops that build a CSR result row by row: ``total`` holds
# the running sums of the current row, ``last_row`` tells whether a column is already in it.
# Adding an entry is written out in each loop: as a called function (even inlined) it made
# the loops several times slower.


@njit(cache=True, nogil=True)
def _buffers(n: int, bound: int, n_columns: int) -> tuple[Array, Array, Array, Array, Array]:
    return (
        np.zeros(n + 1, dtype=np.int64),
        np.empty(bound, dtype=np.int32),
        np.empty(bound, dtype=np.float32),
        np.zeros(n_columns, dtype=np.float32),
        np.full(n_columns, -1, dtype=np.int64),
    )


@njit(cache=True, nogil=True, inline="always")
def _close_row(start: int, nnz: int, total: Array, indices: Array, data: Array) -> None:
    for p in range(start, nnz):
        data[p] = total[indices[p]]


@njit(cache=True, nogil=True)
def sum_rows(
    groups: Array,
    members: Array,
    indptr: Array,
    indices: Array,
    data: Array,
    n_columns: int,
) -> tuple[Array, Array, Array]:
    """Sum rows of a CSR matrix in groups: result row i = Σ rows ``members[groups[i]:groups[i+1]]``.

    The same as ``P @ M`` where ``P`` is the (groups × rows of M) 0/1 matrix with
    ``P[i, members[j]] += 1`` for ``groups[i] <= j < groups[i+1]``.

    Args:
        groups: (n + 1,) int64 offsets into ``members``.
        members: int64 row numbers of ``M``.
        indptr, indices, data: ``M`` in CSR form (float32 data).
        n_columns: the number of columns of ``M``.

    Returns:
        (data, indices, indptr) of the (n, n_columns) float32 CSR result (SciPy's order): no
        duplicate entries, the columns of a row in order of first appearance.
    """
    n = len(groups) - 1
    bound = 0
    for j in range(len(members)):
        bound += indptr[members[j] + 1] - indptr[members[j]]
    out_indptr, out_indices, out_data, total, last_row = _buffers(n, bound, n_columns)
    nnz = 0
    for i in range(n):
        start = nnz
        for j in range(groups[i], groups[i + 1]):
            row = members[j]
            for p in range(indptr[row], indptr[row + 1]):
                column = indices[p]
                if last_row[column] != i:
                    last_row[column], total[column], out_indices[nnz] = i, 0.0, column
                    nnz += 1
                total[column] += data[p]
        _close_row(start, nnz, total, out_indices, out_data)
        out_indptr[i + 1] = nnz
    return out_data[:nnz].copy(), out_indices[:nnz].copy(), out_indptr


@njit(cache=True, nogil=True)
def add_rows(
    a_indptr: Array,
    a_indices: Array,
    a_data: Array,
    b_rows: Array,
    b_indptr: Array,
    b_indices: Array,
    b_data: Array,
    b_weight: float,
    n_columns: int,
) -> tuple[Array, Array, Array]:
    """Row i of the result = L2-normalised (A[i] + b_weight · B[b_rows[i]]) (a zero row stays 0).

    Args:
        a_indptr, a_indices, a_data: ``A`` in CSR form (n rows, float32 data).
        b_rows: (n,) int64 row of ``B`` added to each row of ``A``.
        b_indptr, b_indices, b_data: ``B`` in CSR form.
        b_weight: the factor of ``B``'s rows.
        n_columns: the number of columns of both.

    Returns:
        (data, indices, indptr) of the float32 CSR result (SciPy's order).
    """
    n = len(a_indptr) - 1
    bound = len(a_indices)
    for i in range(n):
        bound += b_indptr[b_rows[i] + 1] - b_indptr[b_rows[i]]
    out_indptr, out_indices, out_data, total, last_row = _buffers(n, bound, n_columns)
    weight = np.float32(b_weight)
    nnz = 0
    for i in range(n):
        start = nnz
        for p in range(a_indptr[i], a_indptr[i + 1]):
            column = a_indices[p]
            if last_row[column] != i:
                last_row[column], total[column], out_indices[nnz] = i, 0.0, column
                nnz += 1
            total[column] += a_data[p]
        row = b_rows[i]
        for p in range(b_indptr[row], b_indptr[row + 1]):
            column = b_indices[p]
            if last_row[column] != i:
                last_row[column], total[column], out_indices[nnz] = i, 0.0, column
                nnz += 1
            total[column] += weight * b_data[p]
        _close_row(start, nnz, total, out_indices, out_data)
        square = 0.0
        for p in range(start, nnz):
            square += float(out_data[p]) * float(out_data[p])
        if square > 0.0:
            scale = np.float32(1.0 / np.sqrt(square))
            for p in range(start, nnz):
                out_data[p] *= scale
        out_indptr[i + 1] = nnz
    return out_data[:nnz].copy(), out_indices[:nnz].copy(), out_indptr


def pack_rows(matrix: sp.csr_matrix) -> tuple[Array, Array, Array]:
    """Return a CSR matrix as (indptr, columns, values) for :func:`score_rows`.

    Entry q's column and value sit side by side in one interleaved array (positions 2q and
    2q + 1), seen once as int32 (``columns``) and once as float32 (``values``): one memory fetch
    brings both, where separate index and data arrays cost two.
    """
    packed = np.empty(2 * matrix.nnz, dtype=np.int32)
    packed[0::2] = matrix.indices
    packed[1::2] = np.asarray(matrix.data, dtype=np.float32).view(np.int32)
    return np.asarray(matrix.indptr, dtype=np.int64), packed, packed.view(np.float32)


@njit(cache=True, nogil=True)
def score_rows(
    x_indptr: Array,
    x_indices: Array,
    x_data: Array,
    rows: Array,
    w_indptr: Array,
    w_columns: Array,
    w_values: Array,
    out: Array,
    offset: int = 0,
) -> None:
    """Add ``X[rows] @ W[offset:offset + columns of X]`` to the dense ``out``, in place.

    Args:
        x_indptr, x_indices, x_data: ``X`` in CSR form.
        rows: int64 rows of ``X`` to score, in output order.
        w_indptr, w_columns, w_values: ``W`` (features × k) from :func:`pack_rows`.
        out: float64 (len(rows), k) array, usually holding the intercepts already.
        offset: the row of ``W`` that column 0 of ``X`` stands for (one block of features
            among several side by side).
    """
    for i in range(len(rows)):
        row = rows[i]
        for p in range(x_indptr[row], x_indptr[row + 1]):
            feature = x_indices[p] + offset
            value = x_data[p]
            for q in range(w_indptr[feature], w_indptr[feature + 1]):
                out[i, w_columns[2 * q]] += value * w_values[2 * q + 1]


def dense_rows(matrix: sp.csr_matrix) -> tuple[Array, Array]:
    """Return a CSR matrix's non-empty rows as a dense block, for :func:`score_columns_dense`.

    Returns:
        (row_of, block): ``row_of[f]`` is row f's place in ``block`` (-1: an empty row);
        ``block`` is (non-empty rows, columns) float32, C order.
    """
    matrix = sp.csr_matrix(matrix)
    used = np.flatnonzero(np.diff(matrix.indptr))
    row_of = np.full(matrix.shape[0], -1, dtype=np.int64)
    row_of[used] = np.arange(len(used))
    block = np.ascontiguousarray(matrix[used].toarray(), dtype=np.float32)
    return row_of, block


@njit(cache=True, nogil=True)
def score_rows_dense(
    x_indptr: Array,
    x_indices: Array,
    x_data: Array,
    rows: Array,
    row_of: Array,
    block: Array,
    out: Array,
) -> None:
    """:func:`score_rows` with ``W`` from :func:`dense_rows`: the same sums, bit for bit.

    Each product is added the whole weight row of each of its features, zeros included
    (adding a zero product leaves a sum as it is), with vector instructions; the products and
    their order are those of :func:`score_rows` (compiled without fastmath, which would let
    the compiler reorder them). For a small ``W`` that fits the fastest caches, read row by row.
    """
    k = block.shape[1]
    for i in range(len(rows)):
        row = rows[i]
        for p in range(x_indptr[row], x_indptr[row + 1]):
            r = row_of[x_indices[p]]
            if r < 0:
                continue
            value = x_data[p]
            for c in range(k):
                out[i, c] += value * block[r, c]


@njit(cache=True, nogil=True, fastmath=True)
def score_columns_dense(
    x_indptr: Array,
    x_indices: Array,
    x_data: Array,
    out_row: Array,
    row_of: Array,
    block: Array,
    out: Array,
    offset: int = 0,
) -> None:
    """As :func:`score_rows`, with ``X`` in CSC form and ``W`` from :func:`dense_rows`.

    Feature by feature: each weight row is fetched once per batch and added, with vector
    instructions, to the rows that hold the feature. Row by row, the same weight row would be
    fetched again for every product holding it, and those fetches are most of the time.

    Args:
        x_indptr, x_indices, x_data: ``X`` in CSC form.
        out_row: the row of ``out`` each row of ``X`` adds to (-1: not scored).
        row_of, block: ``W`` from :func:`dense_rows`.
        out: float32 (scored rows, k), usually holding the intercepts already.
        offset: as in :func:`score_rows`.
    """
    k = block.shape[1]
    for column in range(len(x_indptr) - 1):
        r = row_of[column + offset]
        if r < 0:
            continue
        for p in range(x_indptr[column], x_indptr[column + 1]):
            i = out_row[x_indices[p]]
            if i < 0:
                continue
            value = x_data[p]
            for c in range(k):
                out[i, c] += value * block[r, c]


@njit(cache=True, nogil=True, fastmath=True)
def score_words_dense(
    groups: Array,
    words: Array,
    c_indptr: Array,
    c_indices: Array,
    c_data: Array,
    c_idf: Array,
    sublinear: bool,
    weight: float,
    row_of: Array,
    block: Array,
    offset: int,
    word_scores: Array,
    word_ready: Array,
    out_row: Array,
    out: Array,
) -> None:
    """Score one TF-IDF block straight from the texts' words, each word's scores made once.

    The block's vector of a text is ``g(c) · idf / ‖g(c) · idf‖`` where ``c`` is the sum of its
    words' cached count rows and ``g`` is ``1 + log`` (sublinear tf) or the identity. Its scores
    are ``W`` applied to that vector. As ``c`` is a sum over words, ``W (c · idf)`` is the sum of
    each word's ``W (c_w · idf)``: a dense row per distinct word, made the first time the word is
    seen (``word_scores``, ``word_ready``) and then added per occurrence. The terms a word sum
    gets wrong are the n-grams a text holds more than once under sublinear tf; they are put right
    one by one, and the norm is taken from ``c`` itself. The result equals scoring the block's
    TF-IDF matrix (:func:`score_columns_dense`), up to float32 rounding.

    Args:
        groups: (texts + 1,) offsets into ``words``.
        words: the cached-word number of each word of each text.
        c_indptr, c_indices, c_data: the cached words' n-gram count rows (CSR).
        c_idf: the idf of each entry's n-gram (float64, beside ``c_data``).
        sublinear: the vectorizer's ``sublinear_tf``.
        weight: the block's weight.
        row_of, block: ``W`` from :func:`dense_rows`.
        offset: the row of ``W`` that the block's first feature stands for.
        word_scores: float32 (cached words, k): each word's ``W (c_w · idf)``, once ready.
        word_ready: uint8 per cached word, set here when its row of ``word_scores`` is made.
        out_row: the row of ``out`` each text adds to (-1: not scored).
        out: float32 (scored texts, k).
    """
    k = block.shape[1]
    n_features = len(row_of) - offset  # the block's features (and those after it)
    # Each n-gram's count in the current text, beside the text's number: one 8-byte entry per
    # feature (text << 32 | count), read and written once per entry. A text's n-grams are
    # mostly distinct; only the ones it holds more than once are listed for the end.
    seen = np.full(max(n_features, 1), -1, dtype=np.int64)
    listed = np.empty(16, dtype=np.int64)
    total = np.zeros(k, dtype=np.float32)
    for i in range(len(groups) - 1):
        target = out_row[i]
        if target < 0:
            continue
        total[:] = 0.0
        n_listed = 0
        square = 0.0  # the n-grams held once: idf squared each
        stamp = np.int64(i) << 32
        for j in range(groups[i], groups[i + 1]):
            w = words[j]
            if not word_ready[w]:
                word_scores[w, :] = 0.0
                for p in range(c_indptr[w], c_indptr[w + 1]):
                    r = row_of[c_indices[p] + offset]
                    if r >= 0:
                        value = np.float32(c_data[p] * c_idf[p])
                        for c in range(k):
                            word_scores[w, c] += value * block[r, c]
                word_ready[w] = 1
            for c in range(k):
                total[c] += word_scores[w, c]
            for p in range(c_indptr[w], c_indptr[w + 1]):
                f = c_indices[p]
                add = np.int64(c_data[p])
                old = seen[f]
                if old >> 32 == i:
                    count = old & 0xFFFFFFFF
                    if count == 1:
                        square -= c_idf[p] * c_idf[p]
                    else:
                        seen[f] = stamp | (count + add)
                        continue
                else:
                    count = np.int64(0)
                    if add == 1:
                        square += c_idf[p] * c_idf[p]
                        seen[f] = stamp | 1
                        continue
                seen[f] = stamp | (count + add)
                if n_listed == len(listed):
                    grown = np.empty(2 * n_listed, dtype=np.int64)
                    grown[:n_listed] = listed
                    listed = grown
                listed[n_listed] = p
                n_listed += 1
        for q in range(n_listed):
            p = listed[q]
            f = c_indices[p]
            count = np.float64(seen[f] & 0xFFFFFFFF)
            tf = count
            if sublinear:
                tf = 1.0 + np.log(count)
                r = row_of[f + offset]
                if r >= 0:
                    fix = np.float32((tf - count) * c_idf[p])
                    for c in range(k):
                        total[c] += fix * block[r, c]
            value = tf * c_idf[p]
            square += value * value
        if square > 0.0:
            scale = np.float32(weight / np.sqrt(square))
            for c in range(k):
                out[target, c] += total[c] * scale


@njit(cache=True, nogil=True, fastmath=True)
def score_new_words(
    words: Array,
    c_indptr: Array,
    c_indices: Array,
    c_data: Array,
    idf: Array,
    row_of: Array,
    block: Array,
    offset: int,
    word_scores: Array,
    word_ready: Array,
    c_idf: Array,
) -> None:
    """Make the rows of ``word_scores`` of some words: each word's ``W (c_w · idf)``.

    Feature by feature, each weight row fetched once for all the words holding the feature,
    as :func:`score_columns_dense` scores the words' ``c_w · idf`` rows (the same sums, in the
    same order), then marks the words ready. On the way, the idf of each of the words' entries
    is written beside it (``c_idf``, read by :func:`score_words_dense`), from the look-up the
    scores need anyway.

    Args:
        words: the cached-word numbers to score, in increasing order, each once.
        c_indptr, c_indices, c_data: the cached words' n-gram count rows (CSR).
        idf: the idf of each of the block's features (float64).
        row_of, block, offset: as in :func:`score_words_dense`.
        word_scores, word_ready: as in :func:`score_words_dense`.
        c_idf: float64, room for every entry of the count rows: the words' entries' idf is
            written here.
    """
    n_features = len(idf)
    # The words' entries grouped by feature (a counting sort), words in order within each.
    # 32-bit positions and word numbers: half the memory of 64-bit ones, written at random.
    n_entries = 0
    for i in range(len(words)):
        n_entries += c_indptr[words[i] + 1] - c_indptr[words[i]]
    x = (words, c_indptr, c_indices, c_data, idf, row_of, block, offset, word_scores, c_idf)
    if n_entries >= 2**31 or len(word_scores) >= 2**31:
        # Never in practice (a cache holds far fewer): the same steps in 64 bits.
        start64 = np.zeros(n_features + 1, dtype=np.int64)
        _score_grouped(*x, start64, np.empty(n_entries, dtype=np.int64))
    else:
        start32 = np.zeros(n_features + 1, dtype=np.int32)
        _score_grouped(*x, start32, np.empty(n_entries, dtype=np.int32))
    for i in range(len(words)):
        word_ready[words[i]] = 1


@njit(cache=True, nogil=True, fastmath=True)
def _score_grouped(
    words: Array,
    c_indptr: Array,
    c_indices: Array,
    c_data: Array,
    idf: Array,
    row_of: Array,
    block: Array,
    offset: int,
    word_scores: Array,
    c_idf: Array,
    start: Array,
    owner: Array,
) -> None:
    """:func:`score_new_words`'s scores, with positions and word numbers in the integer type of
    ``start`` (zeros, one more than the features) and ``owner`` (one per entry)."""
    k = block.shape[1]
    n_features = len(idf)
    for i in range(len(words)):
        w = words[i]
        for p in range(c_indptr[w], c_indptr[w + 1]):
            start[c_indices[p] + 1] += 1
    for f in range(n_features):
        start[f + 1] += start[f]
    fill = start[:-1].copy()
    value = np.empty(len(owner), dtype=np.float32)
    for i in range(len(words)):
        w = words[i]
        word_scores[w, :] = 0.0
        for p in range(c_indptr[w], c_indptr[w + 1]):
            f = c_indices[p]
            q = fill[f]
            owner[q] = w
            c_idf[p] = idf[f]
            value[q] = np.float32(c_data[p] * idf[f])
            fill[f] = q + 1
    for f in range(n_features):
        r = row_of[f + offset]
        if r < 0:
            continue
        for q in range(start[f], start[f + 1]):
            w = owner[q]
            v = value[q]
            for c in range(k):
                word_scores[w, c] += v * block[r, c]


# 64-bit FNV-1a over code points: a fast first test; every hit is confirmed character by character.
_FNV_OFFSET = np.uint64(14695981039346656037)
_FNV_PRIME = np.uint64(1099511628211)
_SPACE = np.uint32(32)


@njit(cache=True, nogil=True)
def string_hashes(codes: Array, offsets: Array) -> Array:
    """Return the hash of each string ``codes[offsets[i]:offsets[i + 1]]`` (uint32 code points)."""
    n = len(offsets) - 1
    out = np.empty(n, dtype=np.uint64)
    for i in range(n):
        h = _FNV_OFFSET
        for p in range(offsets[i], offsets[i + 1]):
            h = (h ^ np.uint64(codes[p])) * _FNV_PRIME
        out[i] = h
    return out


@njit(cache=True, nogil=True, inline="always")
def _probe(
    slots: Array,
    hashes: Array,
    store_codes: Array,
    store_offsets: Array,
    codes: Array,
    start: int,
    length: int,
    h: np.uint64,
) -> tuple[int, np.int64]:
    """Look ``codes[start:start + length]`` (hash ``h``) up in a :func:`hash_table` of strings
    ``store_codes[store_offsets[i]:store_offsets[i + 1]]`` whose hashes are ``hashes``.

    Returns:
        (its entry, or -1 when absent; the slot the probe ended on: the entry's, or the free
        slot where it would go).
    """
    mask = len(slots) - 1
    slot = np.int64(h & np.uint64(mask))
    while slots[slot] != -1:
        entry = slots[slot]
        begin = store_offsets[entry]
        if hashes[entry] == h and store_offsets[entry + 1] - begin == length:
            same = True
            for q in range(length):
                if store_codes[begin + q] != codes[start + q]:
                    same = False
                    break
            if same:
                return entry, slot
        slot = (slot + 1) & mask
    return -1, slot


@njit(cache=True, nogil=True)
def _grown(array: Array, size: int) -> Array:
    out = np.zeros(size, dtype=array.dtype)
    out[: len(array)] = array
    return out


@njit(cache=True, nogil=True)
def _rehashed(hashes: Array, n: int, size: int) -> Array:
    slots = np.full(size, -1, dtype=np.int64)
    for entry in range(n):
        slot = np.int64(hashes[entry] & np.uint64(size - 1))
        while slots[slot] != -1:
            slot = (slot + 1) & (size - 1)
        slots[slot] = entry
    return slots


@njit(cache=True, nogil=True)
def index_words(
    codes: Array,
    is_space: Array,
    slots: Array,
    hashes: Array,
    store_codes: Array,
    store_offsets: Array,
    n_known: int,
    n_texts: int,
) -> tuple[Array, Array, Array, Array, Array, Array, int, Array, Array]:
    """Cut texts into whitespace-separated words, number them, and add the new ones to the table.

    A word already in the table gets its number; a new word is appended (its code points, its
    hash, a slot) and gets the next number. The arrays grow (new arrays are returned) when full.

    Args:
        codes: the texts' code points end to end, one 0 between two texts (uint32).
        is_space: 1 for each code point below its length that ``str.split()`` splits on.
        slots: :func:`hash_table` of the known words' ``hashes`` (:func:`string_hashes`),
            at most half full.
        hashes: each known word's hash (room for more past ``n_known``).
        store_codes, store_offsets: the known words' code points end to end, and where each
            starts (``store_offsets[n_known]``: the end of the last); room for more.
        n_known: how many words the table holds.
        n_texts: how many texts ``codes`` holds.

    Returns:
        (offsets per text, number of each word, slots, hashes, store_codes, store_offsets,
        words in the table now, start and end in ``codes`` of each new word in number order).
        Text i holds words ``offsets[i]:offsets[i + 1]``.
    """
    n = len(codes)
    indptr = np.zeros(n_texts + 1, dtype=np.int64)
    bound = n // 2 + 2
    numbers = np.empty(bound, dtype=np.int64)
    new_starts = np.empty(bound, dtype=np.int64)
    new_ends = np.empty(bound, dtype=np.int64)
    # (position, text, words so far, words in the table): the cutting stops where a new word
    # needs more room, the arrays grow here, and it goes on. The arrays are fixed within a
    # run, which keeps the look-up loop as fast as a plain one.
    state = np.array([0, 0, 0, n_known], dtype=np.int64)
    while True:
        done = _index_run(
            codes,
            is_space,
            slots,
            hashes,
            store_codes,
            store_offsets,
            n_known,
            state,
            indptr,
            numbers,
            new_starts,
            new_ends,
        )
        if done:
            break
        total = state[3]
        if total + 2 > len(store_offsets):
            store_offsets = _grown(store_offsets, 2 * (total + 2))
            hashes = _grown(hashes, 2 * (total + 2))
        if store_offsets[total] + n - state[0] > len(store_codes):
            store_codes = _grown(store_codes, 2 * len(store_codes) + n - state[0])
        if 2 * (total + 1) > len(slots):
            slots = _rehashed(hashes, total, 2 * len(slots))
    total, m = state[3], state[2]
    for t in range(state[1] + 1, n_texts + 1):
        indptr[t] = m
    added = total - n_known
    return (
        indptr,
        numbers[:m].copy(),
        slots,
        hashes,
        store_codes,
        store_offsets,
        total,
        new_starts[:added].copy(),
        new_ends[:added].copy(),
    )


@njit(cache=True, nogil=True)
def _index_run(
    codes: Array,
    is_space: Array,
    slots: Array,
    hashes: Array,
    store_codes: Array,
    store_offsets: Array,
    n_known: int,
    state: Array,
    indptr: Array,
    numbers: Array,
    new_starts: Array,
    new_ends: Array,
) -> bool:
    """:func:`index_words` from ``state`` on; False when a new word needs more room first."""
    n = len(codes)
    n_space = len(is_space)
    p, text, m, total = state[0], state[1], state[2], state[3]
    while p < n:
        code = codes[p]
        if code == 0:
            text += 1
            indptr[text] = m
            p += 1
            continue
        if code < n_space and is_space[code]:
            p += 1
            continue
        start = p
        h = _FNV_OFFSET
        while p < n:
            code = codes[p]
            if code == 0 or (code < n_space and is_space[code]):
                break
            h = (h ^ np.uint64(code)) * _FNV_PRIME
            p += 1
        length = p - start
        number, slot = _probe(slots, hashes, store_codes, store_offsets, codes, start, length, h)
        if number < 0:
            end = store_offsets[total]
            if (
                total + 2 > len(store_offsets)
                or end + length > len(store_codes)
                or 2 * (total + 1) > len(slots)
            ):
                state[0], state[1], state[2], state[3] = start, text, m, total
                return False
            number = total
            for q in range(length):
                store_codes[end + q] = codes[start + q]
            store_offsets[total + 1] = end + length
            hashes[total] = h
            slots[slot] = number
            new_starts[total - n_known] = start
            new_ends[total - n_known] = p
            total += 1
        numbers[m] = number
        m += 1
    state[0], state[1], state[2], state[3] = p, text, m, total
    return True


@njit(cache=True, nogil=True)
def lower_codes(codes: Array, lower: Array) -> None:
    """Lower-case code points in place, one by one, by a table (those past it stay as they are).

    Args:
        codes: uint32 code points (changed in place).
        lower: the lower case of each code point below its length (uint32).
    """
    n_lower = len(lower)
    for p in range(len(codes)):
        code = codes[p]
        if code < n_lower:
            codes[p] = lower[code]


@njit(cache=True, nogil=True)
def gather_strings(codes: Array, offsets: Array, which: Array) -> tuple[Array, Array]:
    """Return strings ``which`` of (codes, offsets) end to end, as (codes, offsets) again."""
    out_offsets = np.zeros(len(which) + 1, dtype=np.int64)
    for i in range(len(which)):
        out_offsets[i + 1] = out_offsets[i] + offsets[which[i] + 1] - offsets[which[i]]
    out = np.empty(out_offsets[-1], dtype=codes.dtype)
    for i in range(len(which)):
        begin = offsets[which[i]]
        length = out_offsets[i + 1] - out_offsets[i]
        out[out_offsets[i] : out_offsets[i + 1]] = codes[begin : begin + length]
    return out, out_offsets


@njit(cache=True, nogil=True)
def word_tokens(
    codes: Array,
    offsets: Array,
    is_word: Array,
    min_length: int,
    slots: Array,
    token_hashes: Array,
    token_codes: Array,
    token_offsets: Array,
) -> tuple[Array, Array, Array]:
    """Cut words into tokens (runs of word characters) and number each by a table of tokens.

    A token is a longest run of code points with ``is_word`` set, of at least ``min_length``:
    what the patterns ``\\b\\w+\\b`` (1) and ``\\b\\w\\w+\\b`` (2) find, with ``is_word``
    made from ``\\w``. A token in the table (:func:`hash_table` of :func:`string_hashes`,
    confirmed character by character) gets its entry number, any other ``len(token_offsets) - 1``.

    Args:
        codes, offsets: the words (uint32 code points); word i is
            ``codes[offsets[i]:offsets[i + 1]]``.
        is_word: 1 for each word character below its length.
        min_length: the shortest token.
        slots, token_hashes, token_codes, token_offsets: the table of known tokens.

    Returns:
        (offsets of each word's tokens in the token numbers, the token numbers, the words left
        uncut: those holding a code point past ``is_word``, given no tokens here).
    """
    n_words = len(offsets) - 1
    unknown = len(token_offsets) - 1
    counts = np.zeros(n_words + 1, dtype=np.int64)
    tokens = np.empty(len(codes) // max(min_length, 1) + 1, dtype=np.int64)
    uncut = np.empty(n_words, dtype=np.int64)
    n_uncut = 0
    n_table = len(is_word)
    m = 0
    for i in range(n_words):
        outside = False
        for p in range(offsets[i], offsets[i + 1]):
            if codes[p] >= n_table:
                outside = True
                break
        if outside:
            uncut[n_uncut] = i
            n_uncut += 1
            counts[i + 1] = m
            continue
        p = offsets[i]
        end = offsets[i + 1]
        while p < end:
            if not is_word[codes[p]]:
                p += 1
                continue
            start = p
            h = _FNV_OFFSET
            while p < end and is_word[codes[p]]:
                h = (h ^ np.uint64(codes[p])) * _FNV_PRIME
                p += 1
            length = p - start
            if length < min_length:
                continue
            entry, _ = _probe(
                slots, token_hashes, token_codes, token_offsets, codes, start, length, h
            )
            tokens[m] = entry if entry >= 0 else unknown
            m += 1
        counts[i + 1] = m
    return counts, tokens[:m].copy(), uncut[:n_uncut].copy()


@njit(cache=True, nogil=True)
def table_add(slots: Array, hashes: Array, first: int) -> None:
    """Add entries ``first:`` of ``hashes`` to a :func:`hash_table` with room for them."""
    mask = np.uint64(len(slots) - 1)
    for entry in range(first, len(hashes)):
        slot = np.int64(hashes[entry] & mask)
        while slots[slot] != -1:
            slot = (slot + 1) & (len(slots) - 1)
        slots[slot] = entry


@njit(cache=True, nogil=True)
def hash_table(hashes: Array) -> Array:
    """Return an open-addressing table of the entries: slot → entry number, or -1 when free.

    The table has a power-of-two size of at least twice the entries; an entry sits at the first
    free slot from ``hash & (size - 1)`` on (linear probing).
    """
    size = 16
    while size < 2 * len(hashes):
        size *= 2
    slots = np.full(size, -1, dtype=np.int64)
    mask = np.uint64(size - 1)
    for entry in range(len(hashes)):
        slot = np.int64(hashes[entry] & mask)
        while slots[slot] != -1:
            slot = (slot + 1) & (size - 1)
        slots[slot] = entry
    return slots


@njit(cache=True, nogil=True)
def char_wb_features(
    codes: Array,
    offsets: Array,
    low: int,
    high: int,
    slots: Array,
    table_hashes: Array,
    table_features: Array,
    table_codes: Array,
    table_offsets: Array,
) -> tuple[Array, Array]:
    """Look up the ``char_wb`` n-grams of each word in a vocabulary table.

    A word is padded with one space on each side and cut into n-grams for n from ``low`` to
    ``high``; a padded word no longer than n gives one n-gram, itself, and ends the cutting
    (scikit-learn's ``char_wb`` rule). N-grams outside the vocabulary are left out. A hash match
    is confirmed character by character, so the lookup is exact.

    Args:
        codes, offsets: the words, as uint32 code points; word i is
            ``codes[offsets[i]:offsets[i + 1]]``.
        low, high: the n-gram range.
        slots: :func:`hash_table` of ``table_hashes``.
        table_hashes: the hash of each vocabulary entry (:func:`string_hashes`).
        table_features: the feature number of each vocabulary entry.
        table_codes, table_offsets: the vocabulary entries' code points, as for the words.

    Returns:
        (word, feature) pairs, one per known n-gram occurrence, as two int64 arrays.
    """
    bound = 0
    for i in range(len(offsets) - 1):
        bound += (offsets[i + 1] - offsets[i] + 2) * (high - low + 1)
    owners = np.empty(bound, dtype=np.int64)
    features = np.empty(bound, dtype=np.int64)
    mask = np.uint64(len(slots) - 1)
    found = 0
    for i in range(len(offsets) - 1):
        start = offsets[i]
        size = offsets[i + 1] - start + 2  # padded length
        for n in range(low, high + 1):
            width = min(n, size)
            for first in range(size - width + 1):
                h = _FNV_OFFSET
                for p in range(first, first + width):
                    code = _SPACE if p == 0 or p == size - 1 else codes[start + p - 1]
                    h = (h ^ np.uint64(code)) * _FNV_PRIME
                slot = np.int64(h & mask)
                while slots[slot] != -1:
                    entry = slots[slot]
                    begin = table_offsets[entry]
                    if table_hashes[entry] == h and table_offsets[entry + 1] - begin == width:
                        same = True
                        for p in range(first, first + width):
                            code = _SPACE if p == 0 or p == size - 1 else codes[start + p - 1]
                            if table_codes[begin + p - first] != code:
                                same = False
                                break
                        if same:
                            owners[found] = i
                            features[found] = table_features[entry]
                            found += 1
                            break
                    slot = (slot + 1) & (len(slots) - 1)
            if width == size:
                break
    return owners[:found].copy(), features[:found].copy()


@njit(cache=True, nogil=True)
def idf_l2_rows(indptr: Array, indices: Array, data: Array, idf: Array) -> None:
    """Multiply each entry by its column's idf, then L2-normalise each row, in place.

    The arithmetic of scikit-learn's ``TfidfTransformer`` on float32 data, step for step:
    ``float32(value · idf)`` with the idf in float64; the row norm summed in float64 over the
    float32 squares, in entry order; ``float32(value / norm)``. A zero row stays zero.

    Args:
        indptr, indices, data: a CSR matrix (float32 data, changed in place).
        idf: float64 idf of each column.
    """
    for i in range(len(indptr) - 1):
        square = 0.0
        for p in range(indptr[i], indptr[i + 1]):
            value = np.float32(np.float64(data[p]) * idf[indices[p]])
            data[p] = value
            square += np.float64(value * value)
        if square > 0.0:
            norm = np.sqrt(square)
            for p in range(indptr[i], indptr[i + 1]):
                data[p] = np.float32(np.float64(data[p]) / norm)


# The SplitMix64 finaliser: every bit of the key moves the low bits the table is indexed by.
# (A multiplication alone only carries low bits upwards: for ``first << 32 | second`` keys the
# low bits then depend on ``second`` alone, and every bigram ending in the same token collided.)
_MIX_1 = np.uint64(0xBF58476D1CE4E5B9)
_MIX_2 = np.uint64(0x94D049BB133111EB)


@njit(cache=True, nogil=True, inline="always")
def _mix(key: Any) -> np.uint64:
    z = np.uint64(key)
    z = (z ^ (z >> np.uint64(30))) * _MIX_1
    z = (z ^ (z >> np.uint64(27))) * _MIX_2
    return z ^ (z >> np.uint64(31))


@njit(cache=True, nogil=True)
def mix_keys(keys: Array) -> Array:
    """Return well-spread uint64 hashes of int64 keys, for :func:`hash_table`."""
    out = np.empty(len(keys), dtype=np.uint64)
    for i in range(len(keys)):
        out[i] = _mix(keys[i])
    return out


@njit(cache=True, nogil=True)
def pair_table(keys: Array, features: Array) -> Array:
    """Return an open-addressing table of non-negative int64 keys and their features.

    Each key sits with its feature in one slot, at the first free slot from its hash
    (:func:`mix_keys`) on: a look-up reads one place, where a table of entry numbers sends it
    on to the key's and the feature's own arrays (three reads at random in a table of a
    vocabulary's bigrams, larger than the fastest caches).

    Returns:
        (slots, 2) int64: each slot's key (-1 when free) and feature; a power-of-two number of
        slots, at least twice the keys.
    """
    size = 16
    while size < 2 * len(keys):
        size *= 2
    table = np.full((size, 2), -1, dtype=np.int64)
    mask = np.uint64(size - 1)
    for e in range(len(keys)):
        slot = np.int64(_mix(keys[e]) & mask)
        while table[slot, 0] != -1:
            slot = (slot + 1) & (size - 1)
        table[slot, 0] = keys[e]
        table[slot, 1] = features[e]
    return table


@njit(cache=True, nogil=True)
def token_ngram_counts(
    groups: Array,
    words: Array,
    word_start: Array,
    word_length: Array,
    tokens: Array,
    unigram: Array,
    bigrams: bool,
    pairs: Array,
) -> tuple[Array, Array, Array]:
    """Count each text's known unigrams (and bigrams) from its words' cached token numbers.

    Args:
        groups: (texts + 1,) offsets into ``words``.
        words: the number of each word of each text, in order.
        word_start, word_length: where each word's token numbers lie in ``tokens``.
        tokens: token numbers, word after word.
        unigram: the feature of each token number (-1: not in the vocabulary); token numbers
            past its end are in no vocabulary term.
        bigrams: count bigrams too (two tokens in a row in the same text).
        pairs: :func:`pair_table` of the vocabulary's bigrams, keyed ``first << 32 | second``
            by their token numbers.

    Returns:
        (data, indices, indptr) of the (texts, vocabulary) float32 count matrix (SciPy's order:
        a row's columns in order of first appearance), no duplicate entries.
    """
    n = len(groups) - 1
    bound = 0
    longest = 0
    for i in range(n):
        size = 0
        for j in range(groups[i], groups[i + 1]):
            size += 2 * word_length[words[j]]
        bound += size
        longest = max(longest, size)
    out_indptr = np.zeros(n + 1, dtype=np.int64)
    out_indices = np.empty(bound, dtype=np.int32)
    out_data = np.empty(bound, dtype=np.float32)
    # A text's counts in a small hash table (in the fastest cache), not in arrays as long as
    # the vocabulary read at random; its features listed in order of first appearance.
    size = 16
    while size < 2 * longest:
        size *= 2
    slot_feature = np.full(size, -1, dtype=np.int64)
    slot_entry = np.empty(size, dtype=np.int64)
    listed = np.empty(max(longest, 1), dtype=np.int64)
    table_mask = size - 1
    n_pairs = len(pairs)
    mask = np.uint64(n_pairs - 1)
    known = len(unigram)  # a vocabulary bigram is made of two tokens of the vocabulary
    nnz = 0
    for i in range(n):
        start = nnz
        previous = -1
        for j in range(groups[i], groups[i + 1]):
            w = words[j]
            for k in range(word_start[w], word_start[w] + word_length[w]):
                token = tokens[k]
                for step in range(2):
                    feature = -1
                    if step == 0:
                        if token < known:
                            feature = unigram[token]
                    elif bigrams and 0 <= previous < known and token < known:
                        key = (previous << 32) | token
                        slot = np.int64(_mix(key) & mask)
                        while pairs[slot, 0] != -1:
                            if pairs[slot, 0] == key:
                                feature = pairs[slot, 1]
                                break
                            slot = (slot + 1) & (n_pairs - 1)
                    if feature >= 0:
                        here = (feature * 40503) & table_mask
                        while slot_feature[here] != -1 and slot_feature[here] != feature:
                            here = (here + 1) & table_mask
                        if slot_feature[here] == -1:
                            slot_feature[here] = feature
                            slot_entry[here] = nnz
                            listed[nnz - start] = here
                            out_indices[nnz] = feature
                            out_data[nnz] = 0.0
                            nnz += 1
                        out_data[slot_entry[here]] += 1.0
                previous = token
        for q in range(nnz - start):  # the table emptied for the next text
            slot_feature[listed[q]] = -1
        out_indptr[i + 1] = nnz
    return out_data[:nnz].copy(), out_indices[:nnz].copy(), out_indptr


# Character n-grams of up to six characters as two int64 keys: three characters of 21 bits each
# (a code point plus one, so that no character packs to 0 and a shorter n-gram never equals a
# longer one). Comparing two keys replaces comparing the characters one by one.
PACKED_NGRAM_MAX = 6
_CHAR_BITS = 21


@njit(cache=True, nogil=True, inline="always")
def _find_key(table: Array, low: Any, high: Any) -> Any:
    size = len(table)
    slot = np.int64(_mix(np.int64(low) ^ np.int64(_mix(high))) & np.uint64(size - 1))
    while table[slot, 0] != 0:
        if table[slot, 0] == low and table[slot, 1] == high:
            return slot
        slot = (slot + 1) & (size - 1)
    return -slot - 1  # not found: -1 - the free slot where it would go


@njit(cache=True, nogil=True)
def ngram_table(codes: Array, offsets: Array, features: Array, low: int) -> Array:
    """Return a table of character n-grams (at most six characters) keyed by packed characters.

    Each term ``codes[offsets[i]:offsets[i + 1]]`` is entered with its feature, and each of its
    prefixes of at least ``low`` characters with feature -1 unless it is a term itself: an
    n-gram missing from the table then starts no term, and a lookup that extends it one
    character at a time can stop (:func:`char_wb_rows`).

    Returns:
        An open-addressing table, (slots, 3) int64: each slot's key (two int64; 0, 0 when free)
        and feature, a key at the first free slot from its hash on (linear probing). A key's
        slot and feature sit side by side: a look-up reads one cache line.
    """
    # Sized for the terms: most prefixes are terms too (a larger table is slower to read);
    # a small one (up to 256 KiB at a quarter full) has room for short probes. Should the
    # prefix-only entries fill it past half, it is made again twice the size.
    terms = len(offsets) - 1
    size = 16
    while size < (4 * terms if 4 * terms * 24 <= 1 << 18 else 2 * terms):
        size *= 2
    while True:
        table = _ngram_entries(codes, offsets, features, low, size)
        if len(table):
            return table
        size *= 2


@njit(cache=True, nogil=True)
def _ngram_entries(codes: Array, offsets: Array, features: Array, low: int, size: int) -> Array:
    """:func:`ngram_table` of ``size`` slots, or an empty table when over half would be full."""
    table = np.zeros((size, 3), dtype=np.int64)
    n = 0
    for i in range(len(offsets) - 1):
        length = offsets[i + 1] - offsets[i]
        key_low = np.int64(0)
        key_high = np.int64(0)
        for j in range(length):
            code = np.int64(codes[offsets[i] + j]) + 1
            if j < 3:
                key_low |= code << (_CHAR_BITS * j)
            else:
                key_high |= code << (_CHAR_BITS * (j - 3))
            if j + 1 < low and j + 1 < length:
                continue
            feature = features[i] if j + 1 == length else -1
            found = _find_key(table, key_low, key_high)
            if found >= 0:
                if feature >= 0:
                    table[found, 2] = feature
            else:
                n += 1
                if 2 * n > size:
                    return np.zeros((0, 3), dtype=np.int64)
                slot = -found - 1
                table[slot, 0], table[slot, 1], table[slot, 2] = key_low, key_high, feature
    return table


@njit(cache=True, nogil=True)
def char_wb_rows(
    codes: Array,
    offsets: Array,
    low: int,
    high: int,
    table: Array,
    n_features: int,
) -> tuple[Array, Array, Array]:
    """Count the known ``char_wb`` n-grams of each word: one CSR row per word.

    The n-grams are those of :func:`char_wb_features` (scikit-learn's ``char_wb`` rule), looked
    up in an :func:`ngram_table` (``high`` at most six). From each start they are extended one
    character at a time, and the extension stops at the first n-gram the table does not hold.

    Args:
        n_features: more than the table's highest feature.

    Returns:
        (data, indices, indptr) of the (words, features) float32 count matrix: no duplicate
        entries, a row's columns in order of first appearance (as :func:`sum_rows` gives them).
    """
    n_words = len(offsets) - 1
    bound = 0
    for i in range(n_words):
        bound += (offsets[i + 1] - offsets[i] + 2) * (high - low + 1)
    indptr = np.zeros(n_words + 1, dtype=np.int64)
    indices = np.empty(bound, dtype=np.int32)
    data = np.empty(bound, dtype=np.float32)
    # The word each feature was last counted for: a repeat inside a word (rare) is found
    # without sorting the row.
    last_word = np.full(max(n_features, 1), -1, dtype=np.int32)
    nnz = 0
    for i in range(n_words):
        start = offsets[i]
        size = offsets[i + 1] - start + 2  # padded length
        row_start = nnz
        last_first = max(size - low, 0)
        for first in range(last_first + 1):
            key_low = np.int64(0)
            key_high = np.int64(0)
            for j in range(min(high, size - first)):
                p = first + j
                code = _SPACE if p == 0 or p == size - 1 else codes[start + p - 1]
                if j < 3:
                    key_low |= (np.int64(code) + 1) << (_CHAR_BITS * j)
                else:
                    key_high |= (np.int64(code) + 1) << (_CHAR_BITS * (j - 3))
                if j + 1 < low and j + 1 < size:
                    continue
                slot = _find_key(table, key_low, key_high)
                if slot < 0:
                    break
                feature = table[slot, 2]
                if feature >= 0:
                    if last_word[feature] != i:
                        last_word[feature] = i
                        indices[nnz] = feature
                        data[nnz] = 1.0
                        nnz += 1
                    else:
                        q = row_start
                        while indices[q] != feature:
                            q += 1
                        data[q] += 1.0
                if j + 1 == size:
                    break
        indptr[i + 1] = nnz
    # Views, not copies: the buffers' unused ends were never written (no memory taken).
    return data[:nnz], indices[:nnz], indptr
