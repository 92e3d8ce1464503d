"""Compiled sparse loops: each equals the SciPy expression it stands for.

Reference for every check: SciPy's own sparse matrix arithmetic (``@``, ``+``, row indexing) and
scikit-learn's ``normalize`` on the same random matrices.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from sklearn.feature_extraction.text import TfidfTransformer
from sklearn.preprocessing import normalize

from catmap.classify._kernels import add_rows, idf_l2_rows, pack_rows, score_rows, sum_rows


def _random_csr(rows: int, columns: int, density: float, seed: int) -> sp.csr_matrix:
    matrix = sp.random(rows, columns, density=density, format="csr", dtype=np.float32, rng=seed)
    matrix.data[:] = np.random.default_rng(seed).integers(1, 4, size=matrix.nnz)
    return matrix


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_sum_rows_equals_a_selection_matrix_product(seed: int) -> None:
    rng = np.random.default_rng(seed)
    words = _random_csr(40, 300, 0.05, seed)
    lengths = rng.integers(0, 6, size=25)  # some groups empty, some words repeated
    members = rng.integers(0, 40, size=int(lengths.sum()))
    groups = np.concatenate([[0], np.cumsum(lengths)]).astype(np.int64)
    data, indices, indptr = sum_rows(
        groups, members, words.indptr, words.indices, words.data, words.shape[1]
    )
    got = sp.csr_matrix((data, indices, indptr), shape=(25, 300))
    pick = sp.csr_matrix((np.ones(len(members), np.float32), members, groups), shape=(25, 40))
    # reference: SciPy's sparse product
    assert np.array_equal(got.toarray(), (pick @ words).toarray())
    # no duplicate entries within a row
    assert all(
        len(set(indices[a:b])) == b - a for a, b in zip(indptr[:-1], indptr[1:], strict=True)
    )


def test_add_rows_equals_the_normalised_weighted_sum() -> None:
    keep_a = np.ones(30, dtype=np.float32)
    keep_a[[5, 6]] = 0  # empty rows: row 5 with a non-empty partner, row 6 with an empty one
    a = sp.csr_matrix(sp.diags(keep_a) @ _random_csr(30, 200, 0.05, 3))
    a.eliminate_zeros()
    keep_b = np.ones(7, dtype=np.float32)
    keep_b[2] = 0
    b = sp.csr_matrix(sp.diags(keep_b) @ _random_csr(7, 200, 0.08, 4))
    b.eliminate_zeros()
    b_rows = np.random.default_rng(5).integers(0, 7, size=30).astype(np.int64)
    b_rows[5], b_rows[6] = 1, 2
    data, indices, indptr = add_rows(
        a.indptr, a.indices, a.data, b_rows, b.indptr, b.indices, b.data, 0.5, 200
    )
    got = sp.csr_matrix((data, indices, indptr), shape=(30, 200)).toarray()
    # reference: SciPy row indexing and addition, scikit-learn's L2 normalize
    expected = normalize(a + 0.5 * b[b_rows], norm="l2").toarray()
    assert np.allclose(got, expected, atol=1e-6)
    assert not got[6].any()


def test_score_rows_adds_the_selected_rows_product_to_the_output() -> None:
    x = _random_csr(50, 120, 0.1, 6)
    w = _random_csr(120, 9, 0.3, 7)
    rows = np.array([4, 0, 4, 49, 17], dtype=np.int64)  # any order, repeats allowed
    intercept = np.arange(9, dtype=np.float64)
    out = np.repeat(intercept[None, :], len(rows), axis=0)
    score_rows(x.indptr, x.indices, x.data, rows, *pack_rows(w), out)
    # reference: SciPy row indexing and sparse product
    expected = (x[rows] @ w).toarray() + intercept
    assert np.allclose(out, expected, rtol=1e-6)


def test_idf_and_row_norm_equal_the_tfidf_transformer_bit_for_bit() -> None:
    keep = np.ones(60, dtype=np.float32)
    keep[[3, 9]] = 0  # rows with nothing stay zero
    counts = sp.csr_matrix(sp.diags(keep) @ _random_csr(60, 80, 0.1, 8))
    counts.eliminate_zeros()
    transformer = TfidfTransformer(sublinear_tf=False).fit(_random_csr(200, 80, 0.1, 9))
    got = counts.copy()
    idf_l2_rows(got.indptr, got.indices, got.data, np.asarray(transformer.idf_, np.float64))
    # reference: scikit-learn's TfidfTransformer on the same float32 counts
    assert np.array_equal(got.toarray(), transformer.transform(counts).toarray())
