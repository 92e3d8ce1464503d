"""A review session on a project's store, with the project's brand dictionary (what
``catmap review`` opens the screen on)."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from catmap.attributes import BrandDictionary
from catmap.attributes.brand import dictionary_in_use
from catmap.errors import StoreError
from catmap.jobs._project_tree import check_store_tree, open_project_tree, project_version_tree
from catmap.jobs._remap_versions import check_one_version, store_tree_version
from catmap.project import NO_STORE_HINT, load_settings
from catmap.review.session import ReviewSession
from catmap.store import Store, store_path

__all__ = ["project_review_session"]


@contextmanager
def project_review_session(
    project: Path, reviewer: str, *, feed: str | None = None
) -> Iterator[ReviewSession]:
    """Open the project's store and give a review session on it (the store closes after).

    Args:
        project: the project folder.
        reviewer: the name on claims and decisions.
        feed: only review the items of this feed.

    Raises:
        StoreError: the project has no store, or no such feed.
        TreeVersionMismatch: the store's mappings use more than one tree version.
    """
    path = store_path(project)
    if not path.is_file():
        raise StoreError(f"no project store in {project}", hint=NO_STORE_HINT)
    with Store.open(path) as store:
        if feed is not None:
            store.feed(feed)  # an unknown feed fails here, with a hint
        check_one_version(store, "review")
        # A chosen node's who / age are read again with the project's brands, so that a
        # brand's name is not read as an audience.
        dictionary = dictionary_in_use(project)
        brands = BrandDictionary.from_csv(dictionary) if dictionary is not None else None
        # A project's own tree is the one its items are on; the shared tree's versions are
        # looked up per item (a remap may leave items on two versions).
        settings = load_settings(project)
        tree = None
        if settings is not None and settings.tree_file:
            # After a remap to a tree file of one's own: that tree (kept in the project).
            version = store_tree_version(store)
            tree = project_version_tree(project, version) if version else open_project_tree(project)
            check_store_tree(store, tree)
        yield ReviewSession(store, reviewer, feed=feed, brands=brands, tree=tree)
