"""Move every stored mapping onto a new version of the category tree, and undo or keep it.

:func:`remap_store` reads the crosswalk from the old tree to the new one (computed with
:func:`catmap.tree.diff.diff_trees`, or given) and walks the store's mappings in batches:

- **one-to-one** changes the crosswalk is sure of (unchanged; renamed or moved with the same
  meaning; merged as a change log says) move with no model call: the node id is translated, the
  confidence, method and status stay (:func:`catmap.tree.diff.moves_as_is`). A person's decision
  stays a decision: a reviewed mapping on a renamed or moved node is still ``reviewed``.
- **split** nodes: the product is re-scored over the split's target leaves only. The model on
  disk usually knows the old leaves only (and the split's old leaf is retired), so the targets
  are scored by the cold-start keyword mapper of the *new* tree, its softmax taken over the
  targets alone (the renormalised probability that the product belongs to each part, given
  that it belonged to the old node). A model trained on the new tree, when given, replaces
  the keywords; an old-tree model is blended in (half and half) for targets that keep an old
  id, since only there does its probability mean anything. The confidence is
  ``P(old node right) × P(target | old node)``, with ``P(old node right)`` = 1 for a reviewed or
  rule mapping, else the stored confidence.
- **removed** nodes, merges the diff found alone, nodes found under a new id and any change the
  diff is unsure of: re-scored over the whole new tree with the keyword mapper (or the new-tree
  model); no product moves on the diff's guess alone.

The attributes that the node decides follow the product to its new node
(:class:`AttributeFollower`): when the new node's effective restriction, who / age applicability
or generic-ness differs from the old node's, the restriction flag is recomputed on the new tree
(``tree.restriction(node)``, or the restriction keywords where the node cannot say), and who /
age are read again for the new node (``not_applicable`` where the new node says gender or age
does not apply). A person's who / age correction is kept, unless the new node says it does not
apply. A product moved under a restricted node gets the flag; one moved out loses it.

A re-scored mapping whose score falls below the accept threshold (the feed's threshold now: its
latest onboarding's or audit check's raise, read from that run's summary; a feed that accepts
nothing accepts no re-scored mapping either; unless ``min_confidence`` is given) goes back to
the review queue with reason ``remap``, grouped by old node: its review group (and mapping
group key) becomes ``remap <old id>: <old path>``.

Both versions are kept until :func:`finalise_remap`: every changed mapping's previous columns
sit in ``remap_previous``, and each review item created or reopened in ``remap_items``;
:func:`rollback_remap` restores the store exactly (refused once a reviewer decided something
after the remap). The audit log records the remap, the rollback and the finalise.
"""

from __future__ import annotations

import json
import math
from collections import Counter
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from catmap.attributes import AttributeExtractor
from catmap.errors import InputError, StoreError
from catmap.jobs._project_tree import (
    adopt_version_tree,
    keep_version_tree,
    project_version_tree,
)
from catmap.jobs._remap_batch import DEFAULT_MIN_CONFIDENCE, PageRemapper, remap_group_key
from catmap.jobs._remap_catalog import (
    REMAPPED_CATALOG_COLUMNS,
    remapped_examples,
    write_remapped_catalog,
)
from catmap.jobs._remap_record import (
    BATCH_SIZE,
    RemapReport,
    RemapState,
    finalise_remap,
    latest_remap,
    pending_remap,
    rollback_remap,
)
from catmap.jobs._remap_scoring import AttributeFollower, RemapScorer, scorer_for_project
from catmap.project import NO_STORE_HINT, load_settings
from catmap.store import Store, store_path
from catmap.tree.changelog import ChangeLog, load_change_log
from catmap.tree.diff import Crosswalk, crosswalk_from_changes, diff_trees, reconcile
from catmap.tree.taxonomy import CategoryTree, open_tree

__all__ = [
    "BATCH_SIZE",
    "DEFAULT_MIN_CONFIDENCE",
    "REMAPPED_CATALOG_COLUMNS",
    "AttributeFollower",
    "RemapReport",
    "RemapScorer",
    "RemapState",
    "finalise_project_remap",
    "finalise_remap",
    "latest_remap",
    "old_tree_version",
    "open_project_store",
    "project_remap_state",
    "remap_group_key",
    "open_tree",
    "remap_project",
    "remap_store",
    "remapped_examples",
    "rollback_remap",
    "scorer_for_project",
    "stored_tree_versions",
    "write_remapped_catalog",
]


def stored_tree_versions(store: Store) -> dict[str, int]:
    """Return how many stored mappings use each tree version ('' = not recorded)."""
    rows = store._read(
        "SELECT tree_version, COUNT(*) FROM mappings GROUP BY tree_version ORDER BY tree_version"
    ).fetchall()
    return {str(r[0]): int(r[1]) for r in rows}


def remap_store(
    store: Store,
    old_tree: CategoryTree,
    new_tree: CategoryTree,
    *,
    crosswalk: Crosswalk | None = None,
    changes: ChangeLog | None = None,
    scorer: RemapScorer | None = None,
    min_confidence: float | None = None,
    actor: str = "catmap",
    batch_size: int = BATCH_SIZE,
    extractor: AttributeExtractor | None = None,
) -> RemapReport:
    """Move every mapping stored under ``old_tree`` onto ``new_tree``.

    Args:
        store: the project store.
        old_tree: the tree the stored mappings use (mappings of other versions are left alone;
            an empty tree version counts as the old tree's).
        new_tree: the tree to move to.
        crosswalk: old id → new ids (default: :func:`catmap.tree.diff.diff_trees`).
        changes: a change log from ``old_tree`` to ``new_tree``: it is the crosswalk, and the
            computed (or given) one only a suggestion it confirms or overrides.
        scorer: scores re-scored products (default: keywords of the new tree).
        min_confidence: the accept threshold for re-scored mappings (default: each feed's
            threshold now, its onboarding's or its audit check's raise, none when that accepts
            nothing; :data:`DEFAULT_MIN_CONFIDENCE` for a feed no run set one for).
        actor: who runs it (for the audit log).
        batch_size: mappings per transaction.
        extractor: the attribute extractor on ``new_tree`` used when a product's node changes
            what its attributes may be (see :class:`AttributeFollower`).

    Returns:
        The report, also saved as the remap run's summary.

    Raises:
        StoreError: another remap is waiting to be finalised or rolled back.
        TreeError: the change log does not lead from ``old_tree`` to ``new_tree``.
    """
    old_version, new_version = str(old_tree.version), str(new_tree.version)
    pending = _resumable_remap(store, old_version, new_version)
    source = "given"
    if crosswalk is None:
        crosswalk = diff_trees(old_tree, new_tree)
        source = "computed"
    if changes is not None:
        crosswalk = reconcile(crosswalk, crosswalk_from_changes(old_tree, new_tree, changes))
        source = "change log"
    scorer = scorer or RemapScorer(new_tree)
    follower = AttributeFollower(old_tree, new_tree, extractor=extractor)
    thresholds = _feed_thresholds(store, min_confidence)
    by_old = {c.old_id: c for c in crosswalk.correspondences if c.old_id is not None}

    if pending is not None:
        remap_id, run_id = int(pending["id"]), int(pending["run_id"])
        report = RemapReport.from_dict(json.loads(pending["report"]))
    else:
        remap_id, run_id = _start_remap(
            store, old_version, new_version, source, min_confidence, actor
        )
        report = RemapReport()
    report.remap_id, report.run_id = remap_id, run_id
    report.from_version, report.to_version = old_version, new_version
    report.crosswalk, report.scorer = source, scorer.method
    names = {fid: store.feed(fid).name for fid in thresholds}
    report.thresholds = {
        names[fid]: {"threshold": value, "source": origin}
        for fid, (value, origin) in thresholds.items()
    }

    pages = PageRemapper(
        store,
        remap_id,
        by_old,
        old_tree,
        new_tree,
        scorer,
        follower,
        # A feed that accepts nothing: no score reaches it.
        {
            fid: (math.inf if value is None else value, origin)
            for fid, (value, origin) in thresholds.items()
        },
        report,
        before=Counter(report.departments_before),
        after=Counter(report.departments_after),
        groups=Counter(report.queue_groups),
    )
    for batch in _unremapped_batches(store, remap_id, old_version, new_version, batch_size):
        pages.remap(batch)
        report.departments_before = dict(pages.before.most_common())
        report.departments_after = dict(pages.after.most_common())
        report.queue_groups = dict(pages.groups.most_common())
        # Saved after each page, so that a remap run again after a crash resumes its report.
        with store._transaction() as conn:
            conn.execute(
                "UPDATE remaps SET report = ? WHERE id = ?",
                (json.dumps(report.to_dict()), remap_id),
            )
    _finish_remap(store, report, actor)
    return report


def _resumable_remap(store: Store, old_version: str, new_version: str) -> dict[str, Any] | None:
    """Return the running remap this one completes (None: none), refusing any other.

    Raises:
        StoreError: the trees are the same version, or another remap is waiting to be
            finalised or rolled back.
    """
    if old_version == new_version:
        raise StoreError(
            f"the mappings are already on tree version {new_version}",
            path=store.path,
            hint="give another tree version with --to",
        )
    pending = pending_remap(store)
    if pending is not None and not (
        pending["state"] == "running"
        and pending["from_version"] == old_version
        and pending["to_version"] == new_version
    ):
        raise StoreError(
            f"remap {pending['id']} (tree {pending['from_version']} -> "
            f"{pending['to_version']}) is not finalised yet",
            path=store.path,
            hint="run `catmap remap-finalise` to keep it or `catmap remap-rollback` to undo it",
        )
    return pending


def _start_remap(
    store: Store,
    old_version: str,
    new_version: str,
    source: str,
    min_confidence: float | None,
    actor: str,
) -> tuple[int, int]:
    """Record a new remap (its run, its row, the audit entry); return its id and run id."""
    run_id = store.start_run(
        "remap",
        params={
            "from_version": old_version,
            "to_version": new_version,
            "crosswalk": source,
            "min_confidence": min_confidence,
        },
    )
    with store._transaction() as conn:
        last_decision = conn.execute("SELECT COALESCE(MAX(id), 0) FROM decisions").fetchone()
        cursor = conn.execute(
            "INSERT INTO remaps (run_id, from_version, to_version, state, last_decision_id, "
            "started_at) VALUES (?, ?, ?, 'running', ?, ?)",
            (run_id, old_version, new_version, int(last_decision[0]), store._now()),
        )
        remap_id = int(cursor.lastrowid or 0)
        store._audit(
            conn,
            "remap",
            actor,
            detail={
                "remap_id": remap_id,
                "run_id": run_id,
                "from_version": old_version,
                "to_version": new_version,
                "crosswalk": source,
            },
        )
    return remap_id, run_id


def _finish_remap(store: Store, report: RemapReport, actor: str) -> None:
    """Mark the remap as waiting to be finalised or rolled back, and finish its run."""
    facts = report.to_dict()
    with store._transaction() as conn:
        conn.execute(
            "UPDATE remaps SET state = 'pending', finished_at = ?, report = ? WHERE id = ?",
            (store._now(), json.dumps(facts), report.remap_id),
        )
        # Every mapping is now on the new version: so is every feed.
        conn.execute("UPDATE feeds SET tree_version = ?", (report.to_version,))
        store._audit(
            conn,
            "remap_done",
            actor,
            detail={
                "remap_id": report.remap_id,
                "mappings": report.mappings,
                "moved_automatically": report.moved_automatically,
                "rescored": report.rescored,
                "requeued": report.requeued,
            },
        )
    store.finish_run(report.run_id, summary=facts)


def _feed_thresholds(
    store: Store, min_confidence: float | None
) -> dict[int, tuple[float | None, str]]:
    """Each feed's accept threshold for re-scored mappings, and where it comes from.

    The feed's threshold now (its latest onboarding's, or its audit check's raise); None when
    that run accepts nothing (a feed whose calibration allowed no threshold keeps accepting
    nothing); :data:`DEFAULT_MIN_CONFIDENCE` only for a feed no run set one for.
    """
    from catmap.jobs.audit import feed_acceptance

    result: dict[int, tuple[float | None, str]] = {}
    for feed in store.feeds():
        if min_confidence is not None:
            result[feed.id] = (min_confidence, "option")
            continue
        acceptance = feed_acceptance(store, feed.name)
        if acceptance is None:
            result[feed.id] = (DEFAULT_MIN_CONFIDENCE, "default")
            continue
        result[feed.id] = (acceptance.threshold, f"{acceptance.kind} run {acceptance.run_id}")
    return result


def _unremapped_batches(
    store: Store, remap_id: int, old_version: str, new_version: str, size: int
) -> Iterator[list[dict[str, Any]]]:
    """Pages of mappings still on the old tree and not yet saved by this remap."""
    last: tuple[int, str] = (-1, "")
    while True:
        rows = store._read(
            "SELECT m.feed_id, m.product_id, m.node_id, m.confidence, m.method, m.alternatives, "
            "m.reason, m.model_version, m.tree_version, m.status, m.group_key, m.who, m.age, "
            "m.audience_evidence, m.audience_conflict, m.restriction FROM mappings AS m "
            "WHERE (m.feed_id, m.product_id) > (?, ?) "
            "ORDER BY m.feed_id, m.product_id LIMIT ?",
            (last[0], last[1], size),
        ).fetchall()
        if not rows:
            return
        last = (rows[-1]["feed_id"], rows[-1]["product_id"])
        batch = [
            dict(r)
            for r in rows
            if r["tree_version"] in (old_version, "") and r["tree_version"] != new_version
        ]
        if batch:
            yield batch
        if len(rows) < size:
            return


# --------------------------------------------------------------------------------------------
# A project's remap, as the commands run it
# --------------------------------------------------------------------------------------------


def open_project_store(project: Path) -> Store:
    """Open the store of a project that has one.

    Raises:
        StoreError: the project has no store yet.
    """
    path = store_path(project)
    if not path.is_file():
        raise StoreError(f"no project store in {project}", hint=NO_STORE_HINT)
    return Store.open(path)


def finalise_project_remap(project: Path, *, actor: str = "catmap") -> tuple[int, Path | None]:
    """Keep a project's pending remap for good (:func:`finalise_remap`); a project of one's own
    then takes the new tree as its own (:func:`adopt_version_tree`).

    Returns:
        How many saved previous mappings were dropped, and the project's new tree file (None:
        the project's tree did not change).

    Raises:
        StoreError: no store, or no remap waiting to be finalised.
    """
    with open_project_store(project) as store:
        pending = pending_remap(store)
        dropped = finalise_remap(store, actor=actor)
    adopted = adopt_version_tree(project, str(pending["to_version"])) if pending else None
    return dropped, adopted


def old_tree_version(store: Store, new_version: str) -> str:
    """Return the one tree version the stored mappings use other than ``new_version``.

    Raises:
        StoreError: every stored mapping is already on ``new_version``.
        InputError: the mappings use several other versions (the caller must say which).
    """
    versions = {v for v in stored_tree_versions(store) if v != new_version}
    if not versions:
        raise StoreError(
            f"no stored mapping is on another tree version than {new_version}",
            path=store.path,
            hint="nothing to remap",
        )
    known = sorted(v for v in versions if v)
    if len(known) > 1:
        raise InputError(
            f"the store holds mappings of tree versions {', '.join(known)}",
            hint="say which to move with --from",
        )
    return known[0] if known else "1"


def _stored_tree(
    project: Path, store: Store, given: str | None, new_tree: CategoryTree
) -> CategoryTree:
    """The tree the stored mappings use: the one given, else, for a project of one's own
    (``catmap init --tree``), its tree of the version recorded with them
    (:func:`project_version_tree`), else the shared tree of that version."""
    if given:
        return open_tree(given)
    version = old_tree_version(store, str(new_tree.version))
    settings = load_settings(project)
    if settings is not None and settings.tree_file is not None:
        return project_version_tree(project, version)
    return open_tree(version)


def remap_project(
    project: Path,
    to: str,
    *,
    from_: str | None = None,
    crosswalk_file: Path | None = None,
    changes_file: Path | None = None,
    min_confidence: float | None = None,
    model_dir: Path | None = None,
    actor: str = "catmap",
) -> RemapReport:
    """Move a project's stored mappings onto a new tree (see :func:`remap_store`).

    Args:
        project: the project folder.
        to: the new tree: a version number or a tree file.
        from_: the tree the stored mappings use (default: the version recorded with them:
            the project's own tree when it has that version, else the shared tree).
        crosswalk_file: the crosswalk to use (default: computed by comparing the two trees).
        changes_file: the change log between the two trees; it overrides the crosswalk.
        min_confidence: accept threshold for re-scored mappings (default: each feed's
            threshold now, see :func:`remap_store`).
        model_dir: the model folder that re-scores (default: the project's).
        actor: who runs it (for the audit log).

    Returns:
        The remap's report.
    """
    from catmap.jobs.onboard import default_model_dir, load_extractor
    from catmap.tree.diff import load_crosswalk

    new_tree = open_tree(to)
    with open_project_store(project) as store:
        old_tree = _stored_tree(project, store, from_, new_tree)
        # A tree file of one's own stays with the project: export and review find the
        # remapped mappings' tree by its version.
        keep_version_tree(project, new_tree)
        crosswalk = load_crosswalk(crosswalk_file) if crosswalk_file is not None else None
        changes = load_change_log(changes_file) if changes_file is not None else None
        folder = model_dir or default_model_dir(project)
        scorer = scorer_for_project(folder, old_tree, new_tree)
        return remap_store(
            store,
            old_tree,
            new_tree,
            crosswalk=crosswalk,
            changes=changes,
            scorer=scorer,
            min_confidence=min_confidence,
            actor=actor,
            extractor=load_extractor(project, new_tree),
        )


def project_remap_state(project: Path) -> RemapState:
    """Return the last remap of a project's store.

    Raises:
        StoreError: no store, or no remap in it.
    """
    with open_project_store(project) as store:
        state = latest_remap(store)
    if state is None:
        raise StoreError("no remap in this store", hint="run `catmap remap --to VERSION`")
    return state
