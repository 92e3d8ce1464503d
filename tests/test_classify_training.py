"""fit_model: the structure chosen on validation data, which never trains the model."""

from __future__ import annotations

from pathlib import Path

import pytest
from sklearn.metrics import f1_score

from catmap.classify.features import ProductTexts
from catmap.classify.model import CategoryModel
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


def _validation_macro_f1(
    tree: CategoryTree, hierarchical: bool, split: tuple[ProductTexts, list[str], ProductTexts,
                                                          list[str]]
) -> float:
    train, labels, valid, valid_labels = split
    settings = {"min_df": 1} if hierarchical else {**FLAT_SETTINGS, "min_df": 1}
    model = CategoryModel(tree=tree, hierarchical=hierarchical, **settings).fit(train, labels)
    model.calibrate(valid, valid_labels)
    # Reference: scikit-learn's macro-averaged F1 (sklearn.metrics.f1_score).
    return float(f1_score(valid_labels, [str(c) for c in model.predict(valid)], average="macro"))


def test_few_classes_keep_the_structure_with_the_better_validation_macro_f1(
    tree: CategoryTree, split: tuple[ProductTexts, list[str], ProductTexts, list[str]]
) -> None:
    train, labels, valid, valid_labels = split
    assert len(set(labels)) <= FLAT_MAX_CLASSES
    stages: list[str] = []
    model = fit_model(
        tree, train, labels, valid, valid_labels, options={"min_df": 1}, on_stage=stages.append
    )
    department = _validation_macro_f1(tree, True, split)
    flat = _validation_macro_f1(tree, False, split)
    assert model.hierarchical == (department >= flat)
    assert model.metrics_["valid_macro_f1"] == pytest.approx(max(department, flat))
    assert model.metrics_["structure"] == ("department step" if model.hierarchical else "flat")
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
    settings = {"hierarchical": model.hierarchical, "prune_below": model.prune_below, **options}
    fresh = CategoryModel(tree=tree, **settings).fit(train, labels)
    assert (model.class_coef_ != fresh.class_coef_).nnz == 0
    assert model.temperatures_ != (1.0, 1.0)  # calibrated
