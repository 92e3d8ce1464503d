"""Compiled sparse loops: each equals the SciPy expression it stands for.

Reference for every check: SciPy's own sparse matrix arithmetic (``@``, ``+``, row indexing) and
scikit-learn's ``normalize`` on the same random matrices.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from sklearn.feature_extraction.text import TfidfTransformer, TfidfVectorizer
from sklearn.preprocessing import normalize

from catmap.classify._kernels import (
    add_rows,
    dense_rows,
    idf_l2_rows,
    pack_rows,
    score_columns_dense,
    score_rows,
    score_words_dense,
    sum_rows,
)
from catmap.classify._wordcache import WordCachedTfidf


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


def test_dense_weights_by_column_add_the_selected_rows_product() -> None:
    x = _random_csr(50, 120, 0.1, 10)
    keep = np.ones(120, dtype=np.float32)
    keep[5] = 0  # an empty weight row is left out of the dense block
    w = sp.csr_matrix(sp.diags(keep) @ _random_csr(120, 9, 0.5, 11))
    w.eliminate_zeros()
    row_of, block = dense_rows(w)
    assert row_of[5] == -1 and block.shape == (119, 9)
    rows = np.array([7, 0, 49, 22], dtype=np.int64)
    out_row = np.full(50, -1, dtype=np.int64)
    out_row[rows] = np.arange(len(rows))
    out = np.ones((len(rows), 9), dtype=np.float32)
    csc = x.tocsc()
    score_columns_dense(csc.indptr, csc.indices, csc.data, out_row, row_of, block, out)
    # reference: SciPy row indexing and sparse product
    assert np.allclose(out, 1.0 + (x[rows] @ w).toarray(), rtol=1e-5)


@pytest.mark.parametrize("sublinear", [True, False])
def test_scoring_by_words_equals_scoring_the_tfidf_matrix(sublinear: bool) -> None:
    texts = [
        "ankle boots ankle boots",  # repeated words: sublinear tf differs from a word sum
        "bottines cuir noir",
        "banana bandana",  # n-grams repeated inside a word and across words
        "",
        "unseen zzq",
    ]
    vectorizer = TfidfVectorizer(
        analyzer="char_wb", ngram_range=(2, 4), sublinear_tf=sublinear
    ).fit(["ankle boots black", "bottines cuir noir", "banana bread", "bandana red"])
    cache = WordCachedTfidf(vectorizer)
    offsets, numbers, rows = cache.cached_words(texts)
    n_features = len(vectorizer.vocabulary_)
    w = _random_csr(n_features + 3, 6, 0.6, 12)  # the block starts at row 3 of the weights
    row_of, block = dense_rows(w)
    out_row = np.array([0, 1, 2, 3, -1], dtype=np.int64)  # the last text is not scored
    out = np.zeros((4, 6), dtype=np.float32)
    scores = np.zeros((rows.shape[0], 6), dtype=np.float32)
    ready = np.zeros(rows.shape[0], dtype=np.uint8)
    for _ in range(2):  # the second time from the per-word scores made the first time
        out[:] = 0.0
        score_words_dense(
            offsets, numbers, rows.indptr, rows.indices, rows.data,
            cache.idf[rows.indices], sublinear, 0.5, row_of, block, 3,
            scores, ready, out_row, out,
        )
        # reference: scikit-learn's own TfidfVectorizer.transform, then SciPy's product
        expected = 0.5 * (vectorizer.transform(texts[:4]) @ w[3:]).toarray()
        assert np.allclose(out, expected, atol=1e-5)
    assert ready[numbers[: offsets[4]]].all()  # the scored texts' words, made once
