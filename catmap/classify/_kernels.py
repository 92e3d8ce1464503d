"""Compiled inner loops of mapping: sparse sums and products written for their one use.

Mapping a chunk of products does three kinds of sparse arithmetic again and again:

* summing the cached n-gram rows of each title's words (:func:`sum_rows`);
* adding two normalised query vectors, one of them shared by many rows (:func:`add_rows`);
* scoring a subset of rows against one department's weights, straight into a dense block
  (:func:`score_rows`).

SciPy does each of them as general sparse × sparse products: two passes over the data (one to
size the result, one to fill it), a sparse result converted to dense afterwards, and a row
selection copied beforehand. The loops here do one pass each, into the layout the caller needs.
They are compiled with Numba on first use and cached on disk (``cache=True``), and release the
GIL (``nogil=True``) so that threads can map chunks side by side.

Each function is checked against the SciPy expression it replaces in
``tests/test_classify_kernels.py``.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numba import njit

__all__ = ["add_rows", "score_rows", "sum_rows"]

Array = np.ndarray[Any, Any]


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
    out_indptr = np.zeros(n + 1, dtype=np.int64)
    out_indices = np.empty(bound, dtype=np.int32)
    out_data = np.empty(bound, dtype=np.float32)
    total = np.zeros(n_columns, dtype=np.float32)
    last_row = np.full(n_columns, -1, dtype=np.int64)
    nnz = 0
    for i in range(n):
        start = nnz
        for j in range(groups[i], groups[i + 1]):
            row = members[j]
            for p in range(indptr[row], indptr[row + 1]):
                column = indices[p]
                if last_row[column] != i:
                    last_row[column] = i
                    total[column] = 0.0
                    out_indices[nnz] = column
                    nnz += 1
                total[column] += data[p]
        for p in range(start, nnz):
            out_data[p] = total[out_indices[p]]
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
    out_indptr = np.zeros(n + 1, dtype=np.int64)
    out_indices = np.empty(bound, dtype=np.int32)
    out_data = np.empty(bound, dtype=np.float32)
    total = np.zeros(n_columns, dtype=np.float32)
    last_row = np.full(n_columns, -1, dtype=np.int64)
    nnz = 0
    for i in range(n):
        start = nnz
        for p in range(a_indptr[i], a_indptr[i + 1]):
            column = a_indices[p]
            if last_row[column] != i:
                last_row[column] = i
                total[column] = 0.0
                out_indices[nnz] = column
                nnz += 1
            total[column] += a_data[p]
        row = b_rows[i]
        for p in range(b_indptr[row], b_indptr[row + 1]):
            column = b_indices[p]
            if last_row[column] != i:
                last_row[column] = i
                total[column] = 0.0
                out_indices[nnz] = column
                nnz += 1
            total[column] += np.float32(b_weight) * b_data[p]
        square = 0.0
        for p in range(start, nnz):
            value = total[out_indices[p]]
            out_data[p] = value
            square += float(value) * float(value)
        if square > 0.0:
            scale = np.float32(1.0 / np.sqrt(square))
            for p in range(start, nnz):
                out_data[p] *= scale
        out_indptr[i + 1] = nnz
    return out_data[:nnz].copy(), out_indices[:nnz].copy(), out_indptr


@njit(cache=True, nogil=True)
def score_rows(
    x_indptr: Array,
    x_indices: Array,
    x_data: Array,
    rows: Array,
    w_indptr: Array,
    w_indices: Array,
    w_data: Array,
    out: Array,
) -> None:
    """Add ``X[rows] @ W`` to the dense ``out`` (len(rows) × columns of W), in place.

    Args:
        x_indptr, x_indices, x_data: ``X`` in CSR form.
        rows: int64 rows of ``X`` to score, in output order.
        w_indptr, w_indices, w_data: ``W`` (columns of X × k) in CSR form.
        out: float64 (len(rows), k) array, usually holding the intercepts already.
    """
    for i in range(len(rows)):
        row = rows[i]
        for p in range(x_indptr[row], x_indptr[row + 1]):
            feature = x_indices[p]
            value = x_data[p]
            for q in range(w_indptr[feature], w_indptr[feature + 1]):
                out[i, w_indices[q]] += value * w_data[q]
