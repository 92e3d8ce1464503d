"""The mapping model: training, calibration, save → load, tree versions, cold start."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import scipy.sparse as sp

from catmap.classify.features import ProductTexts
from catmap.classify.keywords import KeywordMapper
from catmap.classify.model import MODEL_KEYWORD_NGRAM_RANGE, CategoryModel
from catmap.classify.storage import load_model, save_model
from catmap.errors import ModelError, ModelNotTrained, ModelTreeMismatch
from catmap.tree.taxonomy import CategoryTree, load_tree
from tests._classify_fixtures import labelled_rows, texts_and_labels, write_tree


@pytest.fixture()
def tree(tmp_path: Path) -> CategoryTree:
    return load_tree(write_tree(tmp_path / "v1"))


@pytest.fixture()
def trained(tree: CategoryTree) -> CategoryModel:
    rows = labelled_rows(300)
    train, labels = texts_and_labels([r for r in rows if r["split"] == "train"])
    valid, valid_labels = texts_and_labels([r for r in rows if r["split"] == "valid"])
    return CategoryModel(tree=tree, min_df=1).fit(train, labels).calibrate(valid, valid_labels)


def test_untrained_model_refuses_to_predict(tree: CategoryTree) -> None:
    texts, _ = texts_and_labels(labelled_rows(3))
    with pytest.raises(ModelNotTrained):
        CategoryModel(tree=tree).predict_proba(texts)


def test_learns_the_tiny_catalog(trained: CategoryModel) -> None:
    texts, labels = texts_and_labels(
        [r for r in labelled_rows(300, seed=1) if r["split"] == "test"]
    )
    assert (trained.predict(texts) == np.array(labels)).mean() > 0.9
    p = trained.predict_proba(texts)
    assert np.allclose(p.sum(axis=1), 1.0)
    assert trained.metrics_["valid_accuracy"] > 0.9


def test_saved_then_loaded_gives_identical_predictions(
    trained: CategoryModel, tree: CategoryTree, tmp_path: Path
) -> None:
    save_model(trained, tmp_path / "model")
    assert not list((tmp_path / "model").glob("*.pkl"))
    loaded, manifest = load_model(tmp_path / "model", tree)
    texts, _ = texts_and_labels(labelled_rows(60, seed=2))
    assert np.array_equal(loaded.predict_proba(texts), trained.predict_proba(texts))
    assert manifest["tree_version"] == "1"
    assert manifest["class_ids"] == trained.classes_.tolist()


def _saved_as_earlier(
    model: CategoryModel, tmp_path: Path, left_out: list[tuple[str, ...]]
) -> dict[str, Any]:
    """Save to tmp_path/model, then drop manifest keys an earlier catmap did not write.

    Returns the manifest as saved (before the keys were dropped).
    """
    save_model(model, tmp_path / "model")
    path = tmp_path / "model" / "manifest.json"
    saved = json.loads(path.read_text(encoding="utf-8"))
    earlier = json.loads(path.read_text(encoding="utf-8"))
    for *parents, key in left_out:
        holder = earlier
        for parent in parents:
            holder = holder[parent]
        del holder[key]
    path.write_text(json.dumps(earlier), encoding="utf-8")
    return dict(saved)


def _documents(part: Any) -> sp.csr_matrix:
    """A department's keyword documents (keyword features × leaves), from the one form kept."""
    if part.documents_dense is not None:
        row_of, block = part.documents_dense
        dense = np.zeros((len(row_of), block.shape[1]), dtype=np.float32)
        dense[row_of >= 0] = block[row_of[row_of >= 0]]
        return sp.csr_matrix(dense)
    indptr, columns, values = part.documents_t
    n = len(indptr) - 1
    rows = np.repeat(np.arange(n), np.diff(indptr))
    return sp.csr_matrix((values[1::2], (rows, columns[0::2])), shape=(n, len(part.keyword_pos)))


def test_a_folder_saved_before_keyword_pruning_loads_with_every_keyword_entry(
    tree: CategoryTree, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Folders of that time compared keyword 3- to 5-grams, whose documents hold small entries.
    import catmap.classify.model as model_module

    monkeypatch.setattr(model_module, "MODEL_KEYWORD_NGRAM_RANGE", (3, 5))
    rows = labelled_rows(300)
    train, labels = texts_and_labels([r for r in rows if r["split"] == "train"])
    valid, valid_labels = texts_and_labels([r for r in rows if r["split"] == "valid"])
    trained = CategoryModel(tree=tree, min_df=1).fit(train, labels).calibrate(valid, valid_labels)
    manifest = _saved_as_earlier(
        trained, tmp_path, [("settings", "keyword_prune_below"), ("keyword_ngram_range",)]
    )
    assert manifest["settings"]["keyword_prune_below"] == trained.keyword_prune_below > 0
    loaded, _ = load_model(tmp_path / "model", tree)
    assert loaded.keyword_prune_below == 0.0
    pruned = sum(_documents(part).nnz for part in trained._layout().complete())
    unpruned = sum(_documents(part).nnz for part in loaded._layout().complete())
    assert unpruned > pruned  # the small entries are kept, as the model was calibrated with


def test_a_folder_keeps_its_own_ngram_ranges_and_department_floor(
    trained: CategoryModel, tree: CategoryTree, tmp_path: Path
) -> None:
    manifest = _saved_as_earlier(
        trained,
        tmp_path,
        [("feature_ngram_ranges",), ("settings", "department_floor"), ("keyword_ngram_range",)],
    )
    assert manifest["feature_ngram_ranges"]["title_chars"] == [4, 4]
    assert manifest["settings"]["department_floor"] == trained.department_floor
    assert manifest["keyword_ngram_range"] == list(MODEL_KEYWORD_NGRAM_RANGE)
    loaded, _ = load_model(tmp_path / "model", tree)
    assert loaded.featurizer_.vectorizers_["title_chars"].ngram_range == (3, 5)
    assert loaded.keywords_.vectorizer_.ngram_range == (3, 5)
    assert loaded.keywords_.ngram_range == (3, 5)
    assert loaded.featurizer_.vectorizers_["title_words"].ngram_range == (1, 2)
    assert loaded.department_floor == 1e-3


@pytest.mark.parametrize("damaged", [4, [4], "4-4", None])
def test_a_damaged_keyword_range_is_a_model_error_naming_the_folder(
    trained: CategoryModel, tree: CategoryTree, tmp_path: Path, damaged: object
) -> None:
    save_model(trained, tmp_path / "model")
    path = tmp_path / "model" / "manifest.json"
    manifest = json.loads(path.read_text(encoding="utf-8"))
    manifest["keyword_ngram_range"] = damaged
    path.write_text(json.dumps(manifest), encoding="utf-8")
    with pytest.raises(ModelError, match="damaged or incomplete") as error:
        load_model(tmp_path / "model", tree)
    assert str(tmp_path / "model") in str(error.value)


def test_a_folder_trained_with_other_ngram_ranges_maps_with_them(
    tree: CategoryTree, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Folders trained before the title's character n-grams became 4-grams only used 3-4.
    import catmap.classify.features as features

    earlier = tuple(
        (name, field, {**settings, "ngram_range": (3, 4)} if name == "title_chars" else settings)
        for name, field, settings in features.FIELD_BLOCKS
    )
    rows = labelled_rows(300)
    train, labels = texts_and_labels([r for r in rows if r["split"] == "train"])
    with monkeypatch.context() as patched:
        patched.setattr(features, "FIELD_BLOCKS", earlier)
        model = CategoryModel(tree=tree, min_df=1).fit(train, labels)
        save_model(model, tmp_path / "model")
    assert features.FIELD_BLOCKS != earlier  # the default is back
    loaded, manifest = load_model(tmp_path / "model", tree)
    assert manifest["feature_ngram_ranges"]["title_chars"] == [3, 4]
    assert loaded.featurizer_.vectorizers_["title_chars"].ngram_range == (3, 4)
    texts, _ = texts_and_labels(labelled_rows(60, seed=2))
    assert np.array_equal(loaded.predict_proba(texts), model.predict_proba(texts))


def test_model_for_another_tree_version_is_refused(trained: CategoryModel, tmp_path: Path) -> None:
    save_model(trained, tmp_path / "model")
    other = load_tree(write_tree(tmp_path / "v2", version=2))
    with pytest.raises(ModelTreeMismatch, match="version 1.*version 2") as error:
        load_model(tmp_path / "model", other)
    assert str(tmp_path / "v2") in str(error.value)  # the tree in use is named, with its file


def test_cold_start_finds_nodes_for_multilingual_titles(tree: CategoryTree) -> None:
    mapper = KeywordMapper(tree=tree).fit()
    titles = {
        "Bottines en cuir marron": "1101",
        "Gummistiefel für Kinder, gelb": "1102",
        "Chanclas de playa": "1201",
        "Espressomaschine mit Milchaufschäumer": "2101",
        "Moulin à café électrique": "2102",
        "Hiking sandals for men": "1202",
    }
    texts = ProductTexts(list(titles), [""] * len(titles), [""] * len(titles), [""] * len(titles))
    predicted = mapper.classes_[mapper.predict_proba(texts).argmax(axis=1)]
    assert predicted.tolist() == list(titles.values())


@pytest.mark.parametrize(
    "paths",
    [
        ["Chaussures > Bottines", "", "Küche", "Chaussures > Bottines"],  # some paths
        ["", "", "", ""],  # none: the title rows alone
        ["zzqx", "", "", "qqqq"],  # paths with no n-gram of the tree's words
    ],
)
def test_keyword_query_is_the_normalised_title_plus_weighted_path(
    tree: CategoryTree, paths: list[str]
) -> None:
    from sklearn.preprocessing import normalize

    mapper = KeywordMapper(tree=tree, path_weight=0.5).fit()
    titles = ["Bottines en cuir marron", "", "Espressomaschine mit Milch", "Hiking sandals"]
    empty = [""] * len(titles)
    query = mapper.query(ProductTexts(titles, paths, empty, empty))
    # reference: scikit-learn's vectorizer on the title and on the path, then its L2 norm
    vectorizer = mapper.vectorizer_
    expected = normalize(vectorizer.transform(titles) + 0.5 * vectorizer.transform(paths))
    assert np.allclose(query.toarray(), expected.toarray(), atol=1e-6)


@pytest.mark.parametrize("ngram_range", [None, (4, 4), (4, 5)])
def test_keyword_documents_are_scikit_learns_tfidf_of_the_node_texts(
    tree: CategoryTree, ngram_range: tuple[int, int] | None
) -> None:
    # Reference: scikit-learn's TfidfVectorizer (char_wb, sublinear tf, L2 rows) on the same
    # node texts, with the n-gram range asked for (None: the mapper's default, 3-5).
    from sklearn.feature_extraction.text import TfidfVectorizer

    from catmap.classify.keywords import node_document

    mapper = KeywordMapper(tree=tree, ngram_range=ngram_range).fit()
    expected_range = ngram_range or (3, 5)
    assert mapper.vectorizer_.ngram_range == expected_range
    reference = TfidfVectorizer(analyzer="char_wb", ngram_range=expected_range, sublinear_tf=True)
    documents = reference.fit_transform([node_document(tree, leaf) for leaf in mapper.classes_])
    assert mapper.vectorizer_.vocabulary_ == reference.vocabulary_
    assert np.allclose(mapper.documents_.toarray(), documents.toarray(), atol=1e-6)


def test_a_trained_model_compares_its_own_keyword_ngrams(trained: CategoryModel) -> None:
    assert trained.keywords_.vectorizer_.ngram_range == MODEL_KEYWORD_NGRAM_RANGE


def test_mapper_top_k_is_the_same_in_small_batches(
    tree: CategoryTree, monkeypatch: pytest.MonkeyPatch
) -> None:
    from catmap.classify import mapping

    texts, _ = texts_and_labels(labelled_rows(10))
    mapper = mapping.Mapper(tree, None)
    whole = mapper.top_k(texts, k=3)
    monkeypatch.setattr(mapping, "SCORE_BATCH", 3)
    batched = mapper.top_k(texts, k=3)
    assert np.array_equal(whole[0], batched[0])
    assert np.allclose(whole[1], batched[1])


def test_model_top_k_equals_sorting_the_dense_probabilities(trained: CategoryModel) -> None:
    texts, _ = texts_and_labels(labelled_rows(80, seed=3))
    dense = trained.predict_proba(texts)
    for k in (1, 3, 5):
        idx, vals = trained.top_k(texts, k)
        assert np.allclose(vals, np.take_along_axis(dense, idx.astype(np.int64), axis=1))
        assert np.allclose(vals, -np.sort(-dense, axis=1)[:, :k], atol=1e-6)
    sparse = trained.predict_sparse(texts)
    assert np.array_equal(np.asarray(sparse.argmax(axis=1)).ravel(), dense.argmax(axis=1))


@pytest.mark.parametrize("hierarchical", [True, False], ids=["departments", "flat"])
def test_model_top_k_of_a_flat_and_a_department_model(
    tree: CategoryTree, hierarchical: bool
) -> None:
    rows = labelled_rows(300)
    train, labels = texts_and_labels([r for r in rows if r["split"] == "train"])
    valid, valid_labels = texts_and_labels([r for r in rows if r["split"] == "valid"])
    model = CategoryModel(tree=tree, min_df=1, hierarchical=hierarchical)
    model.fit(train, labels).calibrate(valid, valid_labels)
    texts, _ = texts_and_labels(labelled_rows(120, seed=5))
    idx, vals = model.top_k(texts, 1)
    idx2, vals2 = model.top_k(texts, 2)
    assert idx.shape == (len(texts), 1) and idx.dtype == idx2.dtype
    assert vals.dtype == vals2.dtype
    # The k = 1 path picks without sorting: the same class and the same value as the sort.
    assert np.array_equal(idx[:, 0], idx2[:, 0])
    assert np.array_equal(vals[:, 0], vals2[:, 0])
    dense = model.predict_proba(texts)
    assert np.array_equal(idx[:, 0], dense.argmax(axis=1))
    # k > 1 (a flat model takes its own path: one department scored for every row)
    for k in (3, 5):
        idx, vals = model.top_k(texts, k)
        assert idx.shape == (len(texts), k)
        # the k largest probabilities, best first (tied classes in either order)
        assert np.allclose(vals, -np.sort(-dense, axis=1)[:, :k], atol=1e-6)
        assert np.allclose(vals, np.take_along_axis(dense, idx.astype(np.int64), axis=1))
        assert (np.diff(vals, axis=1) <= 0).all()
        assert all(len(set(row)) == k for row in idx.tolist())


def test_keyword_weight_is_searched_over_the_whole_range() -> None:
    from catmap.classify.model import KEYWORD_WEIGHT_GRID

    assert min(KEYWORD_WEIGHT_GRID) == 0.0
    assert max(KEYWORD_WEIGHT_GRID) == 1.0


def test_departments_below_the_floor_share_their_probability_evenly(
    trained: CategoryModel,
) -> None:
    texts, _ = texts_and_labels(labelled_rows(40, seed=4))
    dense = trained.predict_proba(texts)
    sparse = trained.predict_sparse(texts)
    assert np.allclose(dense.sum(axis=1), 1.0)
    # Every class left out of the sparse answer is below the department floor.
    left_out = dense.copy()
    left_out[sparse.nonzero()] = 0.0
    assert left_out.max() < trained.department_floor


def test_tree_examples_teach_the_terms_no_labelled_product_uses(tree: CategoryTree) -> None:
    """Trained only on English titles, the model still knows the tree's German terms."""
    english = ["ankle boots", "rain boots", "flip flops", "espresso machine", "coffee grinder"]
    leaves = ["1101", "1102", "1201", "2101", "2102"]
    titles = [f"{t} {i}" for i in range(20) for t in english]
    labels = [leaf for _ in range(20) for leaf in leaves]
    texts = ProductTexts(titles, [""] * len(titles), [""] * len(titles), [""] * len(titles))
    german = ProductTexts(["Gummistiefel", "Kaffeemühle"], ["", ""], ["", ""], ["", ""])
    settings: dict[str, Any] = {"min_df": 1, "keyword_weight": 0.0}
    with_terms = CategoryModel(tree=tree, **settings).fit(texts, labels)
    without = CategoryModel(tree=tree, tree_examples=False, **settings).fit(texts, labels)
    assert with_terms.predict(german).tolist() == ["1102", "2102"]
    assert without.featurizer_.vectorizers_["title_words"].vocabulary_.get("gummistiefel") is None


def test_path_noise_swaps_the_stated_share_of_paths() -> None:
    from catmap.classify.model import _swap_paths

    n = 10_000
    texts = ProductTexts(["t"] * n, [f"path {i}" for i in range(n)], [""] * n, [""] * n)
    swapped = _swap_paths(texts, 0.3, np.random.default_rng(0))
    changed = np.mean([a != b for a, b in zip(texts.path, swapped.path, strict=True)])
    assert changed == pytest.approx(0.3, abs=0.02)
    assert swapped.title == texts.title


def test_training_keeps_every_product_unless_a_cap_is_set(tree: CategoryTree) -> None:
    rows = [r for r in labelled_rows(300) if r["split"] == "train"]
    texts, labels = texts_and_labels(rows)
    assert CategoryModel(tree=tree).max_per_class is None
    capped = CategoryModel(tree=tree, min_df=1, max_per_class=5, tree_examples=False)
    full = CategoryModel(tree=tree, min_df=1, tree_examples=False)
    # A capped model learns from fewer rows: its vocabulary is a subset of the full one's.
    small = capped.fit(texts, labels).featurizer_.n_features_
    assert small < full.fit(texts, labels).featurizer_.n_features_


@pytest.mark.parametrize("char_weight", [1.0, 1.4], ids=["chars weigh 1", "chars weigh 1.4"])
def test_a_flat_dense_model_scores_title_ngrams_word_by_word_as_the_feature_matrix(
    tree: CategoryTree, monkeypatch: pytest.MonkeyPatch, char_weight: float
) -> None:
    rows = labelled_rows(300)
    train, labels = texts_and_labels([r for r in rows if r["split"] == "train"])
    valid, valid_labels = texts_and_labels([r for r in rows if r["split"] == "valid"])
    flat = CategoryModel(
        tree=tree,
        hierarchical=False,
        min_df=1,
        prune_below=0.0,
        feature_weights={"title_chars": char_weight},
    )
    flat.fit(train, labels).calibrate(valid, valid_labels)
    layout = flat._layout()
    assert layout.part(0).dense is not None and flat._words_block(layout)
    texts, _ = texts_and_labels(labelled_rows(80, seed=3))
    # The block's weight scales its TF-IDF values (scikit-learn's vectorizer is the reference).
    chars = flat.featurizer_.transform(texts)[:, flat.featurizer_.block_slices()["title_chars"]]
    plain = flat.featurizer_.vectorizers_["title_chars"].transform(texts.title)
    assert np.allclose(chars.toarray(), char_weight * plain.toarray(), atol=1e-6)
    later, _ = texts_and_labels(labelled_rows(80, seed=4))  # new words after the first batch
    by_words = [flat.top_k(texts, 3) for _ in range(2)]  # the second from the per-word scores
    later_by_words = flat.top_k(later, 3)
    monkeypatch.setattr(CategoryModel, "_words_block", lambda self, layout: False)
    for batch, got in ((texts, by_words), (later, [later_by_words])):
        idx, vals = flat.top_k(batch, 3)
        # reference: the same model scoring its stacked TF-IDF matrix (scikit-learn's vectorizers)
        dense = flat.predict_proba(batch)
        assert np.allclose(vals, -np.sort(-dense, axis=1)[:, :3], atol=1e-6)
        for got_idx, got_vals in got:
            assert np.array_equal(got_idx[:, 0], idx[:, 0])
            assert np.allclose(got_vals, vals, atol=1e-5)


def _flat_dense_model(tree: CategoryTree) -> CategoryModel:
    rows = labelled_rows(300)
    train, labels = texts_and_labels([r for r in rows if r["split"] == "train"])
    valid, valid_labels = texts_and_labels([r for r in rows if r["split"] == "valid"])
    flat = CategoryModel(tree=tree, hierarchical=False, min_df=1, prune_below=0.0)
    return flat.fit(train, labels).calibrate(valid, valid_labels)


def test_new_words_idf_filled_while_scoring_gives_the_answers_of_the_lazy_look_up(
    tree: CategoryTree, monkeypatch: pytest.MonkeyPatch
) -> None:
    from catmap.classify import _wordcache

    flat = _flat_dense_model(tree)
    assert flat._words_block(flat._layout())
    batches = [texts_and_labels(labelled_rows(80, seed=seed))[0] for seed in (3, 4, 3)]

    def answers() -> list[np.ndarray]:
        # The word index starts again (as when full): the caches with it, and every batch's
        # words are new to them, as in a new process.
        with _wordcache._WORDS_LOCK:
            _wordcache._WORDS._restart()
            _wordcache._RECENT_SPLITS.clear()
        # every class's probability: the small ones move with the last bit of a score
        return [flat.predict_proba(batch) for batch in batches]

    filled = answers()
    # reference: the entries' idf looked up by NumPy on reading (the scoring kernel writes its
    # look-ups into a scratch array instead, and nothing is marked filled)
    monkeypatch.setattr(
        _wordcache.CountRows, "idf_to_fill", lambda self: (np.zeros(max(self.nnz, 1)), 0)
    )
    monkeypatch.setattr(_wordcache.CountRows, "idf_filled", lambda self: None)
    lazy = answers()
    for got, expected in zip(filled, lazy, strict=True):
        assert np.array_equal(got.view(np.uint64), expected.view(np.uint64))
        assert (got < 1e-3).any() and (got > 0.5).any()


def test_a_departments_weights_are_regrouped_when_a_product_first_needs_them(
    trained: CategoryModel, tree: CategoryTree, tmp_path: Path
) -> None:
    save_model(trained, tmp_path / "model")
    lazy, _ = load_model(tmp_path / "model", tree)
    upfront, _ = load_model(tmp_path / "model", tree)
    upfront.prepare_departments()
    full = upfront._layout()
    assert full.sources is None and all(part is not None for part in full.parts)

    one, _ = texts_and_labels(labelled_rows(1, seed=5))
    lazy.top_k(one, 3)
    layout = lazy._layout()
    built = [g for g, part in enumerate(layout.parts) if part is not None]
    # Only the departments this product may belong to (at least its most likely one).
    assert 0 < len(built) < layout.n_groups and layout.sources is not None

    texts, _ = texts_and_labels(labelled_rows(60, seed=2))
    for got, expected in zip(lazy.top_k(texts, 3), upfront.top_k(texts, 3), strict=True):
        assert np.array_equal(got, expected)
    assert np.array_equal(lazy.predict_proba(texts), upfront.predict_proba(texts))
    # Built on first need or all at once, a department's part is the same.
    for g, part in enumerate(lazy._layout().complete()):
        expected = full.parts[g]
        assert expected is not None
        assert np.array_equal(part.columns, expected.columns)
        assert (_documents(part) != _documents(expected)).nnz == 0
        assert (part.coef is None) == (expected.coef is None)
        if part.coef is not None and expected.coef is not None:
            assert all(np.array_equal(a, b) for a, b in zip(part.coef, expected.coef, strict=True))
    assert lazy._layout().sources is None


@pytest.mark.parametrize("positions", [[0, 1, 2, 3], [3, 0, 2], [1, 2]])
@pytest.mark.parametrize("share", [1.0, 0.25])
def test_a_blocks_values_are_placed_in_their_columns_times_the_share(
    positions: list[int], share: float
) -> None:
    from catmap.classify.model import _placed

    values = np.random.default_rng(0).random((5, len(positions)))
    shares = np.full((5, 1), share)
    expected = np.zeros((5, 4))
    expected[:, positions] = values  # reference: NumPy's fancy assignment
    expected = expected * shares
    got = _placed(values.copy(), np.array(positions), 4, shares)
    assert got.shape == (5, 4) and np.array_equal(got, expected)


def test_training_twice_gives_the_same_weights_in_parallel_or_not(tree: CategoryTree) -> None:
    # liblinear shuffles with the C library's one global generator: per-department classifiers
    # trained at once in threads of one process drew from it in turn and came out different
    # from run to run. Noisy labels keep each solver busy long enough for runs to overlap.
    rng = np.random.default_rng(0)
    train, labels = texts_and_labels(labelled_rows(3000, seed=3))
    leaves = sorted(set(labels))
    noisy = [str(rng.choice(leaves)) if rng.random() < 0.3 else label for label in labels]

    def weights(n_jobs: int) -> tuple[np.ndarray[Any, Any], ...]:
        model = CategoryModel(tree=tree, min_df=1, n_jobs=n_jobs, C=5.0).fit(train, noisy)
        coef = model.class_coef_
        return coef.indptr, coef.indices, coef.data, model.class_intercept_

    serial = weights(1)
    for _ in range(3):
        parallel = weights(2)
        assert all(np.array_equal(a, b) for a, b in zip(serial, parallel, strict=True))
