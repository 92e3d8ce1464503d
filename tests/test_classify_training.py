"""fit_model: the structure chosen on validation data, then trained again on every product."""

from __future__ import annotations

from pathlib import Path

import pytest
from sklearn.metrics import f1_score

from catmap.classify.features import ProductTexts
from catmap.classify.model import CategoryModel
from catmap.classify.training import FLAT_MAX_CLASSES, FLAT_SETTINGS, fit_model
from catmap.tree.taxonomy import CategoryTree, load_tree
from tests._classify_fixtures import labelled_rows, write_tree


@pytest.fixture()
def tree(tmp_path: Path) -> CategoryTree:
    return load_tree(write_tree(tmp_path / "v1"))


def _texts(rows: list[dict[str, str]]) -> tuple[ProductTexts, list[str]]:
    texts = ProductTexts(
        [r["title"] for r in rows],
        [r["retailer_category"] for r in rows],
        [r["brand"] for r in rows],
        [r["description"] for r in rows],
    )
    return texts, [r["gold_node"] for r in rows]


@pytest.fixture()
def split() -> tuple[ProductTexts, list[str], ProductTexts, list[str]]:
    rows = labelled_rows(300)
    train, labels = _texts([r for r in rows if r["split"] == "train"])
    valid, valid_labels = _texts([r for r in rows if r["split"] == "valid"])
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
        tree, train, labels, valid, valid_labels, options={"min_df": 1}, held_out=False,
        on_stage=stages.append,
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
        options={"min_df": 1, "hierarchical": False}, held_out=False, on_stage=stages.append,
    )
    assert model.hierarchical is False
    assert model.prune_below == CategoryModel(tree=tree).prune_below  # no flat settings: given
    assert not any("department step" in s for s in stages)


def test_held_out_products_join_the_training_after_calibration(
    tree: CategoryTree, split: tuple[ProductTexts, list[str], ProductTexts, list[str]]
) -> None:
    train, labels, valid, valid_labels = split
    # One thread: liblinear's random state is shared by the threads of one process.
    options = {"min_df": 1, "n_jobs": 1}
    seen: list[tuple[float, float]] = []
    model = fit_model(
        tree, train, labels, valid, valid_labels, options=options,
        before_refit=lambda m: seen.append(m.temperatures_),
    )
    everything = ProductTexts(
        train.title + valid.title, train.path + valid.path, train.brand + valid.brand,
        train.description + valid.description,
    )
    fresh = CategoryModel(
        tree=tree, hierarchical=model.hierarchical, prune_below=model.prune_below, **options
    ).fit(everything, labels + valid_labels)
    assert (model.class_coef_ != fresh.class_coef_).nnz == 0
    assert model.temperatures_ == seen[0] != (1.0, 1.0)


@pytest.mark.parametrize(
    ("options", "held_out"),
    [({"min_df": 1, "n_jobs": 1}, False), ({"min_df": 1, "n_jobs": 1, "hierarchical": True}, True)],
    ids=["validation rows copied from training", "structure given"],
)
def test_no_second_training(
    tree: CategoryTree,
    split: tuple[ProductTexts, list[str], ProductTexts, list[str]],
    options: dict[str, object],
    held_out: bool,
) -> None:
    train, labels, valid, valid_labels = split
    model = fit_model(tree, train, labels, valid, valid_labels, options=options, held_out=held_out)
    settings = {"hierarchical": model.hierarchical, "prune_below": model.prune_below, **options}
    fresh = CategoryModel(tree=tree, **settings).fit(train, labels)
    assert (model.class_coef_ != fresh.class_coef_).nnz == 0
