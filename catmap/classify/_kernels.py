"""Compiled inner loops of mapping: sparse sums, products and look-ups written for their one use.

Mapping a chunk of products does a few kinds of work again and again:

* cutting new title words into character n-grams and finding them in the vocabulary
  (:func:`char_wb_features`, with :func:`string_hashes` and :func:`hash_table`);
* summing the cached n-gram rows of each title's words (:func:`sum_rows`), then the idf and the
  row norm (:func:`idf_l2_rows`);
* adding two normalised query vectors, one of them shared by many rows (:func:`add_rows`);
* scoring a subset of rows against one department's weights, straight into a dense block
  (:func:`score_rows`, on weights laid out by :func:`pack_rows`).

In Python, the look-ups make one string per n-gram; SciPy does the sums and products as general
sparse × sparse products, in two passes over the data (one to size the result, one to fill it),
with a sparse result converted to dense afterwards and a row selection copied beforehand. The
loops here do one pass each, into the layout the caller needs. They are compiled with Numba on
first use and cached on disk (``cache=True``), and release the GIL (``nogil=True``).

Each function is checked against the SciPy expression it replaces in
``tests/test_classify_kernels.py``.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import scipy.sparse as sp
from numba import njit

__all__ = [
    "add_rows",
    "char_wb_features",
    "hash_table",
    "idf_l2_rows",
    "mix_keys",
    "pack_rows",
    "score_rows",
    "string_hashes",
    "sum_rows",
    "token_ngram_counts",
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


_MIX = np.uint64(0x9E3779B97F4A7C15)  # Fibonacci hashing: spreads nearby keys over the table


@njit(cache=True, nogil=True)
def mix_keys(keys: Array) -> Array:
    """Return well-spread uint64 hashes of int64 keys, for :func:`hash_table`."""
    out = np.empty(len(keys), dtype=np.uint64)
    for i in range(len(keys)):
        out[i] = np.uint64(keys[i]) * _MIX
    return out


@njit(cache=True, nogil=True)
def token_ngram_counts(
    groups: Array,
    words: Array,
    word_start: Array,
    word_length: Array,
    tokens: Array,
    unigram: Array,
    bigrams: bool,
    slots: Array,
    pair_keys: Array,
    pair_features: Array,
    n_columns: int,
) -> tuple[Array, Array, Array]:
    """Count each text's known unigrams (and bigrams) from its words' cached token numbers.

    Args:
        groups: (texts + 1,) offsets into ``words``.
        words: the number of each word of each text, in order.
        word_start, word_length: where each word's token numbers lie in ``tokens``.
        tokens: token numbers, word after word.
        unigram: the feature of each token number (-1: not in the vocabulary).
        bigrams: count bigrams too (two tokens in a row in the same text).
        slots: :func:`hash_table` of ``mix_keys(pair_keys)``.
        pair_keys: ``first << 32 | second`` token numbers of each vocabulary bigram.
        pair_features: the feature of each vocabulary bigram.
        n_columns: the vocabulary size.

    Returns:
        (data, indices, indptr) of the (texts, n_columns) float32 count matrix (SciPy's order),
        no duplicate entries.
    """
    n = len(groups) - 1
    bound = 0
    for j in range(len(words)):
        bound += 2 * word_length[words[j]]
    out_indptr, out_indices, out_data, total, last_row = _buffers(n, bound, n_columns)
    mask = np.uint64(len(slots) - 1)
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
                        if token < len(unigram):
                            feature = unigram[token]
                    elif bigrams and previous >= 0:
                        key = (previous << 32) | token
                        slot = np.int64((np.uint64(key) * _MIX) & mask)
                        while slots[slot] != -1:
                            if pair_keys[slots[slot]] == key:
                                feature = pair_features[slots[slot]]
                                break
                            slot = (slot + 1) & (len(slots) - 1)
                    if feature >= 0:
                        if last_row[feature] != i:
                            last_row[feature], total[feature], out_indices[nnz] = i, 0.0, feature
                            nnz += 1
                        total[feature] += 1.0
                previous = token
        _close_row(start, nnz, total, out_indices, out_data)
        out_indptr[i + 1] = nnz
    return out_data[:nnz].copy(), out_indices[:nnz].copy(), out_indptr
