"""One tree version per store: what the store's feeds and mappings use, and the checks that
refuse work which would mix two versions (onboarding, review, undo, export).

Each feed records the tree version of its mappings (``feeds.tree_version``) and each mapping its
own (``mappings.tree_version``). A remap moves them all at once; while it waits to be finalised
or rolled back the store is on the new version, but onboarding is refused, since the model that
would map the new feed and the remap's fate are both still open.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from catmap.errors import TreeVersionMismatch
from catmap.jobs._project_tree import project_tree, project_version_tree, version_tree_path
from catmap.jobs._remap_record import pending_remap
from catmap.store import Store
from catmap.tree.taxonomy import CategoryTree, load_default_tree

__all__ = [
    "check_onboarding",
    "check_one_version",
    "feed_tree_versions",
    "mapping_tree_versions",
    "project_store_tree",
    "record_feed_versions",
    "store_tree_version",
    "tree_by_version",
]

_FINISH_HINT = "run `catmap remap-finalise` to keep it or `catmap remap-rollback` to undo it"


def mapping_tree_versions(store: Store, feed: str | None = None) -> dict[str, int]:
    """Return how many mappings (of one feed, or all) use each tree version."""
    if feed is None:
        rows = store._read(
            "SELECT tree_version, COUNT(*) FROM mappings GROUP BY tree_version"
        ).fetchall()
    else:
        rows = store._read(
            "SELECT tree_version, COUNT(*) FROM mappings WHERE feed_id = ? GROUP BY tree_version",
            (store.feed(feed).id,),
        ).fetchall()
    return {str(r[0]): int(r[1]) for r in rows}


def feed_tree_versions(store: Store) -> dict[str, str]:
    """Return each feed's recorded tree version ('' = none recorded), by feed name."""
    rows = store._read("SELECT name, tree_version FROM feeds ORDER BY id").fetchall()
    return {str(r[0]): str(r[1]) for r in rows}


def record_feed_versions(store: Store, version: str, feed: str | None = None) -> None:
    """Record ``version`` as the tree version of one feed (or of every feed)."""
    with store._transaction() as conn:
        if feed is None:
            conn.execute("UPDATE feeds SET tree_version = ?", (version,))
        else:
            conn.execute(
                "UPDATE feeds SET tree_version = ? WHERE id = ?", (version, store.feed(feed).id)
            )


def _describe(counts: dict[str, int]) -> str:
    return ", ".join(f"{n:,} on version {v or '(not recorded)'}" for v, n in sorted(counts.items()))


def store_tree_version(store: Store) -> str | None:
    """Return the one tree version the store's mappings and feeds use (None: nothing stored).

    Raises:
        TreeVersionMismatch: the store holds more than one version.
    """
    check_one_version(store, "use the store")
    versions = {v for v in mapping_tree_versions(store) if v}
    versions |= {v for v in feed_tree_versions(store).values() if v}
    return versions.pop() if versions else None


def check_one_version(store: Store, action: str) -> None:
    """Refuse ``action`` when the store's mappings or feeds use more than one tree version.

    Raises:
        TreeVersionMismatch: with the counts per version and what to do.
    """
    counts = mapping_tree_versions(store)
    known = {v for v in counts if v}
    recorded = {v for v in feed_tree_versions(store).values() if v}
    if len(known | recorded) <= 1:
        return
    pending = pending_remap(store)
    hint = (
        "run `catmap remap` again to complete the remap, or `catmap remap-rollback`"
        if pending is not None and pending["state"] == "running"
        else "move every mapping to one version with `catmap remap --to VERSION`"
    )
    feeds = feed_tree_versions(store)
    raise TreeVersionMismatch(
        f"cannot {action}: the store mixes category tree versions (mappings: "
        f"{_describe(counts)}; feeds: "
        + ", ".join(f"{name} on {v or '-'}" for name, v in feeds.items())
        + ")",
        path=store.path,
        hint=hint,
    )


def check_onboarding(store: Store, tree_version: str, project: Path | None = None) -> None:
    """Refuse onboarding while a remap is pending, or onto another tree version than the store's.

    ``project`` (when given) names, for a project of one's own, the copy of its tree of the
    store's version that ``catmap remap --to FILE`` kept, in the hint.

    Raises:
        TreeVersionMismatch: a remap waits to be finalised or rolled back, or the store's
            mappings are on another version than ``tree_version``.
    """
    pending = pending_remap(store)
    if pending is not None:
        raise TreeVersionMismatch(
            f"cannot onboard while remap {pending['id']} (tree {pending['from_version']} -> "
            f"{pending['to_version']}) is {pending['state']}: a feed onboarded now would be "
            "mapped on one tree while the others wait between two",
            path=store.path,
            hint=f"{_FINISH_HINT}, then onboard again",
        )
    current = store_tree_version(store)
    if current is not None and current != str(tree_version):
        kept = version_tree_path(project, current) if project is not None else None
        which = (
            f"--tree-file {kept}" if kept is not None and kept.is_file() else
            f"--tree-version {current}"
        )  # fmt: skip
        raise TreeVersionMismatch(
            f"cannot onboard on tree version {tree_version}: the store's mappings are on "
            f"version {current}",
            path=store.path,
            hint=f"train a model on tree version {current} (`catmap train {which}`) and "
            f"onboard with {which}, or remap the store with `catmap remap --to "
            f"{tree_version}` first",
        )


def tree_by_version(fallback: CategoryTree) -> Callable[[str], CategoryTree]:
    """Return a look-up: tree version → the shared tree of that version (cached).

    ``fallback`` answers for its own version and for a version not recorded ('').
    """
    trees: dict[str, CategoryTree] = {str(fallback.version): fallback, "": fallback}

    def tree_of(version: str) -> CategoryTree:
        if version not in trees:
            trees[version] = load_default_tree(version)
        return trees[version]

    return tree_of


def project_store_tree(project: str | Path, store: Store, action: str) -> CategoryTree:
    """Return the tree of the store's one version (the model's tree when nothing is stored).

    Args:
        project: the project folder (for the model's tree).
        store: the open project store.
        action: what is about to be done, for the error message.

    Raises:
        TreeVersionMismatch: the store mixes tree versions.
    """
    check_one_version(store, action)
    version = store_tree_version(store)
    if version is None:
        return project_tree(project)
    return project_version_tree(project, version)
