"""Train the project's mapping model: on labelled feeds, the demo reference catalog, or (for a
newer tree) the project's remapped catalog, with the reviewers' decisions as extra examples."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from catmap.errors import InputError, ModelNotTrained
from catmap.jobs._project_tree import default_model_dir, project_tree, version_tree_path
from catmap.jobs.onboard import held_out_recorder, project_review_examples
from catmap.project import load_settings, settings_path, subfolder
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree, default_tree_path, load_tree, open_tree

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
    from catmap.jobs.remap import stored_tree_versions, write_remapped_catalog
    from catmap.store import Store, store_path

    hint = (
        f"run `catmap remap --to {tree.version}` first, give labelled feeds on this tree, or "
        "read those of the older tree through its changes: `catmap train --labels-tree VERSION`"
    )
    if not store_path(project).is_file():
        raise ModelNotTrained(
            f"no labelled products for tree version {tree.version}", path=project, hint=hint
        )
    catalog = subfolder(project, "models") / f"remapped-catalog-v{tree.version}.jsonl"
    with Store.open(store_path(project)) as store:
        written = write_remapped_catalog(store, tree, catalog)
        on_version = stored_tree_versions(store).get(str(tree.version), 0) if not written else 0
    if on_version:
        # The remap is done: its mappings on this version all wait for a person.
        hint = (
            f"its {on_version:,} mappings on this version all wait for review: settle some with "
            "`catmap review` or `catmap decisions import`, or give labelled feeds on this "
            "tree: `catmap train FEED...`, or the labelled feeds of the older tree read through "
            "its changes: `catmap train --labels-tree VERSION`"
        )
    if written == 0:
        raise ModelNotTrained(
            f"the project store has no settled mappings on tree version {tree.version}",
            path=store_path(project),
            hint=hint,
        )
    return catalog


def training_sources(
    project: Path,
    tree: CategoryTree,
    feeds: Sequence[Path],
    *,
    with_reviews: bool = True,
    labels_translated: bool = False,
) -> tuple[list[Path], list[tuple[Product, str]], str]:
    """Return the labelled feeds to train on, the reviewed products to add, and the tree
    version of the project's labelled feeds when they were left out for the remapped catalog
    (they name an older tree's nodes; "" otherwise).

    Without feeds: the project's labelled feeds (``catmap init --labelled``). The project of
    ``catmap demo`` learns from the demo reference catalog (built when missing) on the demo's
    tree version; on a newer shared tree, or a newer tree of one's own, a project learns from
    its remapped catalog
    (:func:`remapped_catalog`), which already holds the reviewed products.

    Args:
        project: the project folder.
        tree: the category tree to train on.
        feeds: the labelled feeds given.
        with_reviews: add the products reviewers decided in the project store.
        labels_translated: the labels are read through the changes from their older tree
            (``--labels-tree``): the project's labelled feeds, not its remapped catalog.

    Raises:
        InputError: no feeds given and the project has none to learn from.
    """
    settings = load_settings(project)
    sources = list(feeds)
    labels_version = settings.labels_tree_version if settings is not None else DEMO_TREE_VERSION
    shared = tree.path == str(default_tree_path(tree.version))
    own = settings is not None and settings.tree_file is not None
    newer = (shared or own) and str(tree.version) != labels_version
    if not sources and newer and not labels_translated:
        # A newer tree than the project's labels (the shared one, or a tree of one's own the
        # project was remapped to): learn from its remapped catalog.
        has_labelled = settings is not None and (bool(settings.labelled) or settings.demo)
        return [remapped_catalog(project, tree)], [], labels_version if has_labelled else ""
    if not sources and settings is not None and settings.labelled:
        sources = [Path(feed) for feed in settings.labelled]
    demo = settings is not None and settings.demo
    if not sources and demo:
        from catmap.demo import ensure_demo_world
        from catmap.jobs.demo import DEMO_WORLD

        paths = ensure_demo_world(DEMO_WORLD, tree=tree)
        sources = [Path(paths.reference)]
    if not sources:
        raise InputError(
            "no labelled feeds to train on",
            path=settings_path(project) if settings is not None else project,
            hint="give labelled feeds: `catmap train FEED...` (a column of node ids, see "
            "--label-column), or record them in the project with `catmap init DIR --labelled "
            "FEED`; `catmap demo` trains on the invented demo world",
        )
    reviewed = project_review_examples(project, tree) if with_reviews else []
    return sources, reviewed, ""


def labels_tree_ref(project: Path, given: str, changes: Path | None = None) -> dict[str, str]:
    """Name the tree labels were written for: a tree file, the copy a project of one's own
    keeps of that version (``catmap remap --to FILE``), or a version of the shared tree
    (:func:`~catmap.classify.training.labels_tree_reference`).

    Raises:
        TreeError: no such tree (the message says what was looked for).
    """
    from catmap.classify.training import labels_tree_reference

    tree: CategoryTree
    if Path(given).is_file():
        tree = load_tree(Path(given))
    else:
        settings = load_settings(project)
        kept = version_tree_path(project, given)
        own = settings is not None and settings.tree_file is not None
        tree = load_tree(kept) if own and kept.is_file() else open_tree(given)
    return labels_tree_reference(tree, changes)


def train_project(
    feeds: Sequence[Path],
    *,
    project: Path,
    tree_version: str | None = None,
    tree_file: Path | None = None,
    label_column: str = "gold_node",
    classifier: str = "linear_svc",
    model_dir: Path | None = None,
    with_reviews: bool = True,
    on_stage: Callable[[str], None] | None = None,
    max_per_class: int | None = None,
    max_unknown_share: float | None = None,
    labels_tree: str | None = None,
    labels_changes: Path | None = None,
    refit: bool = True,
) -> dict[str, Any]:
    """Train the mapping model and save it; return the training report's facts.

    Args:
        feeds: labelled feeds (none: see :func:`training_sources`).
        project: the project folder.
        tree_version: version of the shared category tree (default: the project's tree).
        tree_file: a tree file of one's own (wins over ``tree_version``).
        label_column: column holding the node id of each product.
        classifier: the linear model to train.
        model_dir: the model folder to write (default: ``<project>/models/current``).
        with_reviews: add the products reviewers decided as training examples.
        on_stage: told each training stage.
        max_per_class: train on at most this many products of one class (None: the model's
            default; 0: no cap).
        max_unknown_share: stop when more labelled rows than this share name nodes the tree
            lacks (None: :data:`~catmap.classify.training.MAX_UNKNOWN_LABEL_SHARE`).
        labels_tree: the labels are of this older tree (a version or a tree file): they are
            read through the crosswalk to the project's tree, those of split or removed nodes
            dropped (see :func:`~catmap.classify.training.train_model`).
        labels_changes: the change log from ``labels_tree`` to the tree trained on: it decides
            where labels go, as ``catmap remap --changes`` does.
        refit: train again on the validation products too, once calibrated (see
            :func:`~catmap.classify.training.refit_on_all`); onboarding calibrates on the
            predictions they got before (:func:`~catmap.jobs.onboard.held_out_recorder`).

    Returns:
        The report's facts, with ``reviewed_examples``: how many reviewed products were added.

    Raises:
        InputError: no labelled feeds, or labels of another tree.
    """
    from catmap.classify.training import MAX_UNKNOWN_LABEL_SHARE, train_model

    if labels_changes is not None and not labels_tree:
        raise InputError(
            "a change log of the labels needs the tree they were written for",
            path=labels_changes,
            hint="add --labels-tree VERSION|FILE",
        )

    tree = project_tree(project, tree_file=tree_file, tree_version=tree_version)
    sources, reviewed, left_out = training_sources(
        project, tree, feeds, with_reviews=with_reviews, labels_translated=bool(labels_tree)
    )
    labels_from = labels_tree_ref(project, labels_tree, labels_changes) if labels_tree else None
    options: dict[str, Any] = {"classifier": classifier}
    if max_per_class is not None:
        options["max_per_class"] = max_per_class or None
    report = train_model(
        sources,
        tree=tree,
        project=project,
        model_dir=model_dir if model_dir is not None else default_model_dir(project),
        label_column=label_column,
        model_options=options,
        extra_examples=reviewed,
        on_stage=on_stage,
        max_unknown_share=(
            MAX_UNKNOWN_LABEL_SHARE if max_unknown_share is None else max_unknown_share
        ),
        labels_from=labels_from,
        refit=refit,
        before_refit=held_out_recorder(
            sources, tree=tree, project=project, label_column=label_column,
            labels_from=labels_from,
        ),
    )
    facts = report.to_dict()
    facts["reviewed_examples"] = len(reviewed)
    facts["older_labels"] = left_out
    return facts
