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
    _score_grouped,
    add_rows,
    char_wb_rows,
    dense_rows,
    gather_strings,
    hash_table,
    idf_l2_rows,
    index_words,
    lower_codes,
    mix_keys,
    ngram_table,
    pack_rows,
    pair_table,
    score_columns_dense,
    score_new_words,
    score_rows,
    score_rows_dense,
    score_words_dense,
    string_hashes,
    sum_rows,
    token_ngram_counts,
    word_tokens,
)
from catmap.classify._wordcache import (
    _IS_SPACE,
    WordCachedTfidf,
    _code_points,
    _lower_cases,
    _word_characters,
)


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


def test_dense_row_scoring_equals_packed_row_scoring_bit_for_bit() -> None:
    x = _random_csr(50, 120, 0.1, 16)
    x.data[:] = np.random.default_rng(16).normal(size=x.nnz)  # signs mixed: sums meet zero
    keep = np.ones(120, dtype=np.float32)
    keep[[2, 30]] = 0  # empty weight rows are left out of the dense block
    w = sp.csr_matrix(sp.diags(keep) @ _random_csr(120, 9, 0.1, 17))
    w.eliminate_zeros()
    rows = np.array([4, 0, 4, 49, 17], dtype=np.int64)
    packed = np.zeros((len(rows), 9))
    score_rows(x.indptr, x.indices, x.data, rows, *pack_rows(w), packed)
    dense = np.zeros((len(rows), 9))
    score_rows_dense(x.indptr, x.indices, x.data, rows, *dense_rows(w), dense)
    assert np.array_equal(dense, packed)  # the same products added in the same order
    # reference: SciPy row indexing and sparse product
    assert np.allclose(dense, (x[rows] @ w).toarray(), rtol=1e-6)


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
    scores = np.zeros((rows.n_rows, 6), dtype=np.float32)
    ready = np.zeros(rows.n_rows, dtype=np.uint8)
    for _ in range(2):  # the second time from the per-word scores made the first time
        out[:] = 0.0
        score_words_dense(
            offsets,
            numbers,
            rows.indptr,
            rows.indices,
            rows.data,
            rows.entry_idf,
            sublinear,
            0.5,
            row_of,
            block,
            3,
            scores,
            ready,
            out_row,
            out,
        )
        # reference: scikit-learn's own TfidfVectorizer.transform, then SciPy's product
        expected = 0.5 * (vectorizer.transform(texts[:4]) @ w[3:]).toarray()
        assert np.allclose(out, expected, atol=1e-5)
    assert ready[numbers[: offsets[4]]].all()  # the scored texts' words, made once


def _words(n: int, seed: int) -> list[str]:
    """Random short words over a small alphabet (probes meet), accents and a non-BMP letter."""
    rng = np.random.default_rng(seed)
    alphabet = [*"abcé", "\u0301", "\U0001f525", "\x00"]
    return ["".join(rng.choice(alphabet, size=rng.integers(1, 9))) for _ in range(n)]


def _char_wb_ngrams(word: str, low: int, high: int) -> list[str]:
    """scikit-learn's ``char_wb`` n-grams of one word, as its analyzer cuts them."""
    analyzer = TfidfVectorizer(analyzer="char_wb", ngram_range=(low, high)).build_analyzer()
    return list(analyzer(word))


@pytest.mark.parametrize(("low", "high"), [(3, 4), (3, 5), (1, 6), (5, 6), (2, 2)])
def test_packed_ngram_rows_count_the_analyzers_known_ngrams(low: int, high: int) -> None:
    words = _words(300, low * 10 + high)
    ngrams = sorted({g for w in words for g in _char_wb_ngrams(w, low, high)})
    # Every other n-gram only: a term's prefixes are often missing from the vocabulary (as
    # under max_features), and the early stop must still find the term.
    terms = ngrams[::2]
    features = np.random.default_rng(1).permutation(len(terms)).astype(np.int64)
    codes, offsets = _code_points(terms)
    table = ngram_table(codes, offsets, features, low)
    assert 2 * int((table[:, 0] != 0).sum()) <= len(table)  # at most half full, grown if need be
    queries = [w for w in words if w]  # words as str.split() gives them: never empty
    codes, offsets = _code_points(queries)
    data, indices, indptr = char_wb_rows(codes, offsets, low, high, table, len(terms))
    vocabulary = dict(zip(terms, features.tolist(), strict=True))
    for i, word in enumerate(queries):
        expected: dict[int, float] = {}
        for gram in _char_wb_ngrams(word, low, high):
            if gram in vocabulary:
                expected[vocabulary[gram]] = expected.get(vocabulary[gram], 0.0) + 1.0
        row = slice(indptr[i], indptr[i + 1])
        # reference: the analyzer's n-grams counted with a dict; each column once
        assert len(set(indices[row].tolist())) == len(indices[row])
        assert dict(zip(indices[row].tolist(), data[row].tolist(), strict=True)) == expected


def test_index_words_numbers_words_as_a_dictionary_and_grows_its_arrays() -> None:
    texts = [" ".join(_words(12, seed)) for seed in range(40)]
    words: dict[str, int] = {}
    slots = np.full(16, -1, dtype=np.int64)
    hashes = np.zeros(2, dtype=np.uint64)
    store_codes = np.zeros(3, dtype=np.uint32)
    store_offsets = np.zeros(2, dtype=np.int64)
    known = 0
    for batch in (texts[:25], texts[10:]):  # the second batch repeats words of the first
        # Texts holding no U+0000 are joined by it, as the word index does.
        batch = [t.replace("\x00", "") for t in batch]
        joined = "\x00".join(batch)
        codes = np.frombuffer(joined.encode("utf-32-le", "surrogatepass"), dtype=np.uint32)
        (indptr, numbers, slots, hashes, store_codes, store_offsets, total, starts, ends) = (
            index_words(
                codes, _IS_SPACE, slots, hashes, store_codes, store_offsets, known, len(batch)
            )
        )
        # reference: str.split and a dict numbering words in the order first seen
        for i, text in enumerate(batch):
            expected = [words.setdefault(w, len(words)) for w in text.split()]
            assert numbers[indptr[i] : indptr[i + 1]].tolist() == expected
        assert total == len(words)
        new = list(words)[known:]
        assert [joined[a:b] for a, b in zip(starts, ends, strict=True)] == new
        assert 2 * total <= len(slots)
        known = total
    stored, _ = gather_strings(store_codes, store_offsets, np.arange(known))
    assert stored.tobytes().decode("utf-32-le") == "".join(words)


def test_lower_codes_lower_case_as_str_lower() -> None:
    text = "ÉCOLE Ünïcode ΑΒΓ Привет \U00010400\U0001f525 MiXeD \U00020000 ǅ ẞ"
    codes = np.frombuffer(text.encode("utf-32-le"), dtype=np.uint32).copy()
    table = _lower_cases()
    assert table is not None
    lower_codes(codes, table)
    # reference: Python's own str.lower
    assert codes.tobytes().decode("utf-32-le") == text.lower()
    short = np.array([ord("A"), ord("B")], dtype=np.uint32)  # a table covering only "A"
    lower_codes(short, table[: ord("A") + 1])
    assert short.tolist() == [ord("a"), ord("B")]


def test_gather_strings_picks_the_strings_in_the_order_asked() -> None:
    strings = ["", "ab", "\U0001f525c", "d", "éé"]
    codes, offsets = _code_points(strings)
    which = np.array([4, 0, 2, 2, 1], dtype=np.int64)
    got, got_offsets = gather_strings(codes, offsets, which)
    text = got.tobytes().decode("utf-32-le")
    # reference: Python's list indexing
    assert [text[a:b] for a, b in zip(got_offsets[:-1], got_offsets[1:], strict=True)] == [
        strings[i] for i in which
    ]


@pytest.mark.parametrize(("pattern", "shortest"), [(r"(?u)\b\w+\b", 1), (r"(?u)\b\w\w+\b", 2)])
def test_word_tokens_cut_and_number_tokens_as_the_pattern_and_a_dictionary(
    pattern: str, shortest: int
) -> None:
    import re

    words = [
        "ab-c",
        "x",
        "l'eau",
        "__init__",
        "naïve",
        "e\u0301t",
        "\U0001f525ab",
        "12.5",
        "",
        "ab",
        "c",
        "ünï",
        "a_b",
        "—",
        "\u3042\u3044",
        "ab\U00020000",
    ]
    known = ["ab", "c", "eau", "12", "ünï", "a_b", "__init__"]
    codes, offsets = _code_points(known)
    hashes = string_hashes(codes, offsets)
    table = (hash_table(hashes), hashes, codes, offsets)
    word_codes, word_offsets = _code_points(words)
    counts, tokens, uncut = word_tokens(
        word_codes, word_offsets, _word_characters(), shortest, *table
    )
    number = {t: i for i, t in enumerate(known)}
    findall = re.compile(pattern).findall
    for i, word in enumerate(words):
        got = tokens[counts[i] : counts[i + 1]].tolist()
        if i in uncut:
            # a code point past the table's: left to the caller, given no tokens
            assert got == [] and any(ord(c) >= len(_word_characters()) for c in word)
            continue
        # reference: the regular expression, and a dict of the known tokens
        assert got == [number.get(t, len(known)) for t in findall(word)]
    assert set(uncut.tolist()) == {
        i for i, w in enumerate(words) if any(ord(c) >= 0x10000 for c in w)
    }


@pytest.mark.parametrize("wide", [False, True])
def test_new_words_scores_equal_scoring_their_rows_by_column_bit_for_bit(wide: bool) -> None:
    rows = _random_csr(60, 200, 0.08, 20)
    rows.sort_indices()
    idf = np.random.default_rng(21).uniform(1.0, 4.0, size=200)
    w = _random_csr(200 + 3, 7, 0.5, 22)
    row_of, block = dense_rows(w)
    need = np.array([0, 3, 4, 17, 59], dtype=np.int64)
    scores = np.full((60, 7), 9.0, dtype=np.float32)
    ready = np.zeros(60, dtype=np.uint8)
    entry_idf = np.full(rows.nnz, -1.0)
    x = (need, rows.indptr.astype(np.int64), rows.indices, rows.data, idf, row_of, block, 3)
    if wide:  # the 64-bit steps, taken past 2**31 entries
        entries = int(sum(rows.indptr[i + 1] - rows.indptr[i] for i in need))
        start, owner = np.zeros(201, dtype=np.int64), np.empty(entries, dtype=np.int64)
        _score_grouped(*x, scores, entry_idf, start, owner)
        ready[need] = 1
    else:
        score_new_words(*x, scores, ready, entry_idf)
    # reference: NumPy's indexing for the entries' idf (the scored words' only)
    scored = np.zeros(rows.nnz, dtype=bool)
    for i in need:
        scored[rows.indptr[i] : rows.indptr[i + 1]] = True
    assert np.array_equal(entry_idf[scored], idf[rows.indices[scored]])
    assert (entry_idf[~scored] == -1.0).all()
    # reference: the words' idf-weighted rows scored by score_columns_dense (feature by
    # feature), and a plain SciPy product
    counts = rows[need]
    counts.data = (counts.data * idf[counts.indices]).astype(np.float32)
    by_feature = counts.tocsc()
    made = np.zeros((len(need), 7), np.float32)
    score_columns_dense(
        by_feature.indptr,
        by_feature.indices,
        by_feature.data,
        np.arange(len(need), dtype=np.int64),
        row_of,
        block,
        made,
        3,
    )
    assert np.array_equal(scores[need], made)
    assert np.allclose(scores[need], (counts @ w[3:]).toarray(), rtol=1e-5, atol=1e-6)
    assert ready[need].all() and ready.sum() == len(need)
    assert (scores[1] == 9.0).all()  # other words untouched


def test_pair_table_finds_each_key_with_its_feature_as_a_dictionary() -> None:
    rng = np.random.default_rng(31)
    keys = np.unique(rng.integers(0, 2**40, size=500)).astype(np.int64)
    features = rng.permutation(len(keys)).astype(np.int64)
    table = pair_table(keys, features)
    size = len(table)
    assert size & (size - 1) == 0 and 2 * len(keys) <= size
    # reference: a dict of the keys, and linear probing from each key's mixed hash
    expected = dict(zip(keys.tolist(), features.tolist(), strict=True))
    hashes = mix_keys(keys)
    for key, h in zip(keys.tolist(), hashes.tolist(), strict=True):
        slot = h & (size - 1)
        while table[slot, 0] != key:
            assert table[slot, 0] != -1  # a key is never past a free slot
            slot = (slot + 1) & (size - 1)
        assert table[slot, 1] == expected[key]
    assert int((table[:, 0] != -1).sum()) == len(keys)


@pytest.mark.parametrize("bigrams", [True, False])
def test_token_ngram_counts_count_as_a_dictionary_in_order_of_first_appearance(
    bigrams: bool,
) -> None:
    rng = np.random.default_rng(30)
    known = 12  # tokens 0-11 are the vocabulary's; 12 and past are unknown
    unigram = np.where(rng.random(known) < 0.7, rng.permutation(known), -1).astype(np.int64)
    pairs = {(int(a), int(b)) for a, b in rng.integers(0, known, size=(40, 2))}
    pair_list = sorted(pairs)
    pair_keys = np.array([(a << 32) | b for a, b in pair_list], dtype=np.int64)
    pair_features = np.arange(known, known + len(pair_list), dtype=np.int64)
    # words of one to three tokens; texts of zero to six words, words repeated
    lengths = rng.integers(0, 4, size=30)
    word_start = np.concatenate([[0], np.cumsum(lengths)[:-1]]).astype(np.int64)
    tokens = rng.integers(0, known + 3, size=int(lengths.sum())).astype(np.int64)
    text_lengths = rng.integers(0, 7, size=25)
    groups = np.concatenate([[0], np.cumsum(text_lengths)]).astype(np.int64)
    words = rng.integers(0, 30, size=int(text_lengths.sum())).astype(np.int64)
    data, indices, indptr = token_ngram_counts(
        groups,
        words,
        word_start,
        lengths.astype(np.int64),
        tokens,
        unigram,
        bigrams,
        pair_table(pair_keys, pair_features),
    )
    feature_of_pair = dict(zip(pair_list, pair_features.tolist(), strict=True))
    for i in range(len(text_lengths)):
        # reference: the text's token sequence counted with a dict (insertion order)
        sequence = [
            int(t)
            for w in words[groups[i] : groups[i + 1]]
            for t in tokens[word_start[w] : word_start[w] + lengths[w]]
        ]
        expected: dict[int, float] = {}
        for position, token in enumerate(sequence):
            found = [int(unigram[token])] if token < known else [-1]
            if bigrams and position:
                found.append(feature_of_pair.get((sequence[position - 1], token), -1))
            for feature in found:
                if feature >= 0:
                    expected[feature] = expected.get(feature, 0.0) + 1.0
        row = slice(indptr[i], indptr[i + 1])
        assert indices[row].tolist() == list(expected)
        assert data[row].tolist() == list(expected.values())
