"""Train the project's mapping model: on labelled feeds, the demo reference catalog, or (for a
newer tree) the project's remapped catalog, with the reviewers' decisions as extra examples."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from catmap.errors import ModelNotTrained
from catmap.jobs.onboard import default_model_dir, project_review_examples
from catmap.project import subfolder
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree, load_default_tree

__all__ = ["DEMO_TREE_VERSION", "remapped_catalog", "train_project", "training_sources"]

# The tree version the demo reference catalog is labelled with.
DEMO_TREE_VERSION = "1"


def remapped_catalog(project: Path, tree: CategoryTree) -> Path:
    """Write the project's settled mappings on ``tree``'s version as a labelled catalog.

    Returns:
        The catalog file, in ``<project>/models/``.

    Raises:
        ModelNotTrained: the project has no store, or no settled mapping on that version.
    """
    from catmap.jobs.remap import write_remapped_catalog
    from catmap.store import Store, store_path

    hint = f"run `catmap remap --to {tree.version}` first, or give labelled feeds"
    if not store_path(project).is_file():
        raise ModelNotTrained(
            f"no labelled products for tree version {tree.version}", path=project, hint=hint
        )
    catalog = subfolder(project, "models") / f"remapped-catalog-v{tree.version}.jsonl"
    with Store.open(store_path(project)) as store:
        written = write_remapped_catalog(store, tree, catalog)
    if written == 0:
        raise ModelNotTrained(
            f"the project store has no settled mappings on tree version {tree.version}",
            path=store_path(project),
            hint=hint,
        )
    return catalog


def training_sources(
    project: Path, tree: CategoryTree, feeds: Sequence[Path], *, with_reviews: bool = True
) -> tuple[list[Path], list[tuple[Product, str]]]:
    """Return the labelled feeds to train on and the reviewed products to add.

    Without feeds: the demo reference catalog (built when missing) for the demo's tree
    version, else the project's remapped catalog (:func:`remapped_catalog`), which already
    holds the reviewed products.

    Args:
        project: the project folder.
        tree: the category tree to train on.
        feeds: the labelled feeds given.
        with_reviews: add the products reviewers decided in the project store.
    """
    if not feeds and str(tree.version) != DEMO_TREE_VERSION:
        # A newer tree than the demo catalog's: learn from the project's remapped catalog.
        return [remapped_catalog(project, tree)], []
    sources = list(feeds)
    if not sources:
        from catmap.demo import ensure_demo_world
        from catmap.jobs.demo import DEMO_WORLD

        paths = ensure_demo_world(DEMO_WORLD, tree=tree)
        sources = [Path(paths.reference)]
    reviewed = project_review_examples(project, tree) if with_reviews else []
    return sources, reviewed


def train_project(
    feeds: Sequence[Path],
    *,
    project: Path,
    tree_version: str = DEMO_TREE_VERSION,
    label_column: str = "gold_node",
    classifier: str = "linear_svc",
    model_dir: Path | None = None,
    with_reviews: bool = True,
    on_stage: Callable[[str], None] | None = None,
) -> dict[str, Any]:
    """Train the mapping model and save it; return the training report's facts.

    Args:
        feeds: labelled feeds (none: see :func:`training_sources`).
        project: the project folder.
        tree_version: version of the shared category tree.
        label_column: column holding the node id of each product.
        classifier: the linear model to train.
        model_dir: the model folder to write (default: ``<project>/models/current``).
        with_reviews: add the products reviewers decided as training examples.
        on_stage: told each training stage.

    Returns:
        The report's facts, with ``reviewed_examples``: how many reviewed products were added.
    """
    from catmap.classify.training import train_model

    tree = load_default_tree(tree_version)
    sources, reviewed = training_sources(project, tree, feeds, with_reviews=with_reviews)
    report = train_model(
        sources,
        tree=tree,
        project=project,
        model_dir=model_dir if model_dir is not None else default_model_dir(project),
        label_column=label_column,
        model_options={"classifier": classifier},
        extra_examples=reviewed,
        on_stage=on_stage,
    )
    facts = report.to_dict()
    facts["reviewed_examples"] = len(reviewed)
    return facts
