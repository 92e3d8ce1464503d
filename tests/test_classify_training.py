"""fit_model: the structure chosen on validation data, which never trains the model."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pytest
from sklearn.metrics import f1_score

from catmap.classify.features import ProductTexts
from catmap.classify.model import CategoryModel
from catmap.classify.storage import load_model, save_model
from catmap.classify.training import FLAT_MAX_CLASSES, FLAT_SETTINGS, fit_model
from catmap.tree.taxonomy import CategoryTree, load_tree
from tests._classify_fixtures import labelled_rows, texts_and_labels, write_tree


@pytest.fixture()
def tree(tmp_path: Path) -> CategoryTree:
    return load_tree(write_tree(tmp_path / "v1"))


@pytest.fixture()
def split() -> tuple[ProductTexts, list[str], ProductTexts, list[str]]:
    rows = labelled_rows(300)
    train, labels = texts_and_labels([r for r in rows if r["split"] == "train"])
    valid, valid_labels = texts_and_labels([r for r in rows if r["split"] == "valid"])
    return train, labels, valid, valid_labels


def _validation_answers(
    tree: CategoryTree, hierarchical: bool, split: tuple[ProductTexts, list[str], ProductTexts,
                                                          list[str]]
) -> tuple[float, list[str]]:
    train, labels, valid, valid_labels = split
    settings = {"min_df": 1} if hierarchical else {**FLAT_SETTINGS, "min_df": 1}
    model = CategoryModel(tree=tree, hierarchical=hierarchical, **settings).fit(train, labels)
    model.calibrate(valid, valid_labels)
    predicted = [str(c) for c in model.predict(valid)]
    # Reference: scikit-learn's macro-averaged F1 (sklearn.metrics.f1_score).
    return float(f1_score(valid_labels, predicted, average="macro")), predicted


def test_few_classes_keep_the_department_step_only_when_clearly_better(
    tree: CategoryTree, split: tuple[ProductTexts, list[str], ProductTexts, list[str]]
) -> None:
    from catmap.classify.training import STRUCTURE_CONFIDENCE, department_step_wins

    train, labels, valid, valid_labels = split
    assert len(set(labels)) <= FLAT_MAX_CLASSES
    stages: list[str] = []
    model = fit_model(
        tree, train, labels, valid, valid_labels, options={"min_df": 1}, on_stage=stages.append
    )
    department, step_answers = _validation_answers(tree, True, split)
    flat, flat_answers = _validation_answers(tree, False, split)
    wins = department_step_wins(valid_labels, step_answers, flat_answers)
    assert model.hierarchical == (wins >= STRUCTURE_CONFIDENCE)
    assert model.metrics_["structure_wins"] == wins
    assert model.metrics_["valid_macro_f1"] == pytest.approx(
        department if model.hierarchical else flat
    )
    assert model.metrics_["structure"] == ("department step" if model.hierarchical else "flat")
    assert "bootstrap resamples" in model.metrics_["structure_reason"]
    assert any("flat" in s for s in stages) and any("department step" in s for s in stages)


def test_a_given_structure_is_the_only_one_trained(
    tree: CategoryTree, split: tuple[ProductTexts, list[str], ProductTexts, list[str]]
) -> None:
    train, labels, valid, valid_labels = split
    stages: list[str] = []
    model = fit_model(
        tree, train, labels, valid, valid_labels,
        options={"min_df": 1, "hierarchical": False}, on_stage=stages.append,
    )
    assert model.hierarchical is False
    assert model.prune_below == CategoryModel(tree=tree).prune_below  # no flat settings: given
    assert not any("department step" in s for s in stages)


@pytest.mark.parametrize(
    "options",
    [{"min_df": 1, "n_jobs": 1}, {"min_df": 1, "n_jobs": 1, "hierarchical": True}],
    ids=["structure chosen", "structure given"],
)
def test_the_validation_products_never_train_the_model(
    tree: CategoryTree,
    split: tuple[ProductTexts, list[str], ProductTexts, list[str]],
    options: dict[str, object],
) -> None:
    # Onboarding calibrates its accept threshold on them as held-out products.
    train, labels, valid, valid_labels = split
    model = fit_model(tree, train, labels, valid, valid_labels, options=options)
    # One thread (n_jobs=1): liblinear's random state is shared by the threads of a process.
    settings = {
        "hierarchical": model.hierarchical,
        "prune_below": model.prune_below,
        "C": model.C,
        "feature_weights": model.feature_weights,
        **options,
    }
    fresh = CategoryModel(tree=tree, **settings).fit(train, labels)
    assert (model.class_coef_ != fresh.class_coef_).nnz == 0
    assert model.temperatures_ != (1.0, 1.0)  # calibrated


@pytest.mark.parametrize(
    ("options", "flat_c"),
    [({"min_df": 1, "n_jobs": 1}, FLAT_SETTINGS["C"]), ({"min_df": 1, "n_jobs": 1, "C": 0.7}, 0.7)],
    ids=["flat settings", "a given C wins"],
)
def test_the_flat_candidate_takes_the_flat_settings_the_options_leave(
    tree: CategoryTree,
    split: tuple[ProductTexts, list[str], ProductTexts, list[str]],
    monkeypatch: pytest.MonkeyPatch,
    tmp_path: Path,
    options: dict[str, object],
    flat_c: float,
) -> None:
    import catmap.classify.training as training

    built: list[CategoryModel] = []

    class Recorded(CategoryModel):
        def fit(self, texts: ProductTexts, labels: Sequence[str]) -> CategoryModel:
            built.append(self)
            return super().fit(texts, labels)

    monkeypatch.setattr(training, "CategoryModel", Recorded)
    train, labels, valid, valid_labels = split
    kept = fit_model(tree, train, labels, valid, valid_labels, options=options)
    department, flat = built
    assert department.hierarchical and not flat.hierarchical
    default = CategoryModel(tree=tree)
    assert department.C == options.get("C", default.C) and department.feature_weights is None
    assert flat.C == flat_c and flat.prune_below == FLAT_SETTINGS["prune_below"]
    assert flat.feature_weights == FLAT_SETTINGS["feature_weights"]
    # The weighted blocks are saved with the model: a loaded flat model maps as the trained one.
    save_model(flat, tmp_path / "flat")
    loaded, manifest = load_model(tmp_path / "flat", tree)
    assert (
        manifest["feature_weights"]["title_chars"]
        == FLAT_SETTINGS["feature_weights"]["title_chars"]
    )
    for got, expected in zip(loaded.top_k(valid, 3), flat.top_k(valid, 3), strict=True):
        assert np.allclose(got, expected, atol=1e-6)
    assert kept in built


def test_a_refit_trains_on_the_validation_products_too_and_keeps_their_calibration(
    tree: CategoryTree, split: tuple[ProductTexts, list[str], ProductTexts, list[str]]
) -> None:
    from catmap.classify.training import CALIBRATED, refit_on_all

    train, labels, valid, valid_labels = split
    options = {"min_df": 1, "n_jobs": 1, "hierarchical": False}
    model = fit_model(tree, train, labels, valid, valid_labels, options=options)
    refit = refit_on_all(model, train, labels, valid, valid_labels)
    # The same settings, trained on both parts: exactly what one training on both gives.
    both = ProductTexts(
        train.title + valid.title, train.path + valid.path, train.brand + valid.brand,
        train.description + valid.description,
    )  # fmt: skip
    settings = {"prune_below": model.prune_below, "C": model.C,
                "feature_weights": model.feature_weights}  # fmt: skip
    fresh = CategoryModel(tree=tree, **settings, **options).fit(both, [*labels, *valid_labels])
    assert (refit.class_coef_ != fresh.class_coef_).nnz == 0
    # The validation products add terms to the vocabulary or move the weights.
    assert (
        refit.class_coef_.shape != model.class_coef_.shape
        or (refit.class_coef_ != model.class_coef_).nnz > 0
    )
    # The calibration the held-out products gave the first model is kept, as it was.
    for name in CALIBRATED[:-1]:
        assert getattr(refit, name) == getattr(model, name), name
    assert refit.metrics_["refit_products"] == len(labels) + len(valid_labels)
    assert refit.metrics_["valid_accuracy"] == model.metrics_["valid_accuracy"]
    assert refit.hierarchical == model.hierarchical


def test_a_training_feed_is_known_by_its_path_or_its_content(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from catmap.classify.storage import file_fingerprint, training_feed

    feed = tmp_path / "labelled.csv"
    feed.write_text("id,title,gold_node\n1,a lamp,100\n", encoding="utf-8")
    copy = tmp_path / "elsewhere" / "renamed.csv"
    copy.parent.mkdir()
    copy.write_bytes(feed.read_bytes())
    other = tmp_path / "other.csv"
    other.write_text("id,title,gold_node\n1,a chair,200\n", encoding="utf-8")
    entry = {"path": str(feed.resolve()), "fingerprint": file_fingerprint(feed)}
    manifest = {"training_feeds": [{**entry, "bytes": feed.stat().st_size}]}
    assert training_feed(manifest, feed) == feed.resolve()
    assert training_feed(manifest, copy) == feed.resolve()  # the same rows, another file
    assert training_feed(manifest, other) is None
    assert training_feed({}, feed) is None  # a model folder from before the list
    # A file of another size is not hashed: it cannot hold the same rows.
    longer = tmp_path / "longer.csv"
    longer.write_bytes(feed.read_bytes() + b"2,a desk,100\n")
    import catmap.classify.storage as storage

    hashed: list[object] = []
    real = storage.file_fingerprint
    monkeypatch.setattr(storage, "file_fingerprint", lambda path: hashed.append(path) or real(path))
    assert training_feed(manifest, longer) is None
    assert hashed == []
    assert training_feed(manifest, copy) == feed.resolve()
    assert hashed == [copy]
    # An entry written before sizes were kept is compared by content.
    assert training_feed({"training_feeds": [entry]}, copy) == feed.resolve()


def test_the_bootstrap_macro_f1_is_sklearns_and_a_tie_keeps_the_flat_model() -> None:
    from sklearn.metrics import f1_score

    from catmap.classify.training import _macro_f1, department_step_wins

    rng = np.random.default_rng(3)
    truth = rng.integers(0, 7, 500)
    predicted = np.where(rng.random(500) < 0.7, truth, rng.integers(0, 9, 500))
    # Reference: scikit-learn's macro-F1 (classes present in the labels or the predictions).
    assert _macro_f1(truth, predicted, 9) == pytest.approx(
        f1_score(truth, predicted, average="macro"), abs=1e-12
    )
    labels = [f"c{v}" for v in truth]
    good = list(labels)
    poor = [f"c{v}" for v in predicted]
    assert department_step_wins(labels, good, poor) == 1.0
    assert department_step_wins(labels, poor, good) == 0.0
    assert department_step_wins(labels, poor, poor) == 0.0  # equal: the flat model stays
    # Nearly the same answers: no resample share near certainty either way.
    close = list(poor)
    close[0] = labels[0] if close[0] != labels[0] else close[1]
    assert department_step_wins(labels, close, poor) < 0.95
