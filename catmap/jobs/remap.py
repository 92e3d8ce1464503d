"""Move every stored mapping onto a new version of the category tree, and undo or keep it.

:func:`remap_store` reads the crosswalk from the old tree to the new one (computed with
:func:`catmap.tree.diff.diff_trees`, or given) and walks the store's mappings in batches:

- **one-to-one** changes (unchanged, renamed, moved, merged into one node) move with no model
  call: the node id is translated, the confidence, method and status stay. A person's decision
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
- **removed** nodes (and any old node with no target): re-scored over the whole new tree with
  the keyword mapper (or the new-tree model).

The attributes that the node decides follow the product to its new node
(:class:`AttributeFollower`): when the new node's effective restriction, who / age applicability
or generic-ness differs from the old node's, the restriction flag is recomputed on the new tree
(``tree.restriction(node)``, or the restriction keywords where the node cannot say), and who /
age are read again for the new node (``not_applicable`` where the new node says gender or age
does not apply). A person's who / age correction is kept, unless the new node says it does not
apply. A product moved under a restricted node gets the flag; one moved out loses it.

A re-scored mapping whose score falls below the accept threshold (the one chosen when the feed
was onboarded, read from that run's summary, unless ``min_confidence`` is given) goes back to
the review queue with reason ``remap``, grouped by old node: its review group (and mapping
group key) becomes ``remap <old id>: <old path>``.

Both versions are kept until :func:`finalise_remap`: every changed mapping's previous columns
sit in ``remap_previous``, and each review item created or reopened in ``remap_items``;
:func:`rollback_remap` restores the store exactly (refused once a reviewer decided something
after the remap). The audit log records the remap, the rollback and the finalise.
"""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from catmap.attributes import AttributeExtractor, BrandDictionary
from catmap.attributes.restriction import is_generic_node
from catmap.classify.calibration import softmax
from catmap.classify.features import product_texts
from catmap.classify.keywords import DEFAULT_TEMPERATURE, KeywordMapper
from catmap.classify.model import CategoryModel
from catmap.errors import InputError, StoreError
from catmap.records import Product
from catmap.store import Store, product_from_json
from catmap.tree.diff import Correspondence, Crosswalk, diff_trees
from catmap.tree.taxonomy import CategoryTree, load_default_tree, load_tree

__all__ = [
    "DEFAULT_MIN_CONFIDENCE",
    "AttributeFollower",
    "RemapReport",
    "RemapScorer",
    "RemapState",
    "finalise_remap",
    "latest_remap",
    "remap_group_key",
    "open_tree",
    "remap_store",
    "remapped_examples",
    "rollback_remap",
    "scorer_for_project",
    "stored_tree_versions",
]

# Used only when neither the option nor an onboarding run gives a threshold: a mapping right
# nine times in ten is the usual bar for publishing without a look (common practice, no source).
DEFAULT_MIN_CONFIDENCE = 0.9
BATCH_SIZE = 5000
ALTERNATIVES = 3
# Weight of an old-tree model next to the keywords on split targets that keep an old id.
OLD_MODEL_WEIGHT = 0.5

_PREVIOUS_COLUMNS = (
    "node_id",
    "confidence",
    "method",
    "alternatives",
    "reason",
    "model_version",
    "tree_version",
    "status",
    "group_key",
    "who",
    "age",
    "audience_evidence",
    "audience_conflict",
    "restriction",
)
# Previous columns saved only from schema version 4 on (NULL before: rollback keeps the value).
_ATTRIBUTE_COLUMNS = ("who", "age", "audience_evidence", "audience_conflict", "restriction")
_ITEM_COLUMNS = (
    "feed_id",
    "product_id",
    "group_key",
    "reason",
    "priority",
    "state",
    "claimed_by",
    "lease_until",
    "created_at",
    "skips",
)


# --------------------------------------------------------------------------------------------
# Scoring products on the new tree
# --------------------------------------------------------------------------------------------


class RemapScorer:
    """Probabilities of new-tree leaves for products that cannot move one-to-one.

    Args:
        new_tree: the tree mappings move to.
        new_model: a model trained on ``new_tree`` (None: keywords of the new tree).
        old_model: a model trained on the old tree, used on split targets keeping an old id.
        model_version: the new-tree model's version, written on the mappings it re-scores.
    """

    def __init__(
        self,
        new_tree: CategoryTree,
        *,
        new_model: CategoryModel | None = None,
        old_model: CategoryModel | None = None,
        model_version: str = "",
    ) -> None:
        if new_model is not None and str(new_model.tree.version) != str(new_tree.version):
            raise ValueError("new_model must be trained on the new tree")
        self.tree = new_tree
        self.new_model = new_model
        self.old_model = old_model
        self.model_version = model_version
        self.method = "model" if new_model is not None else "cold_start"
        self._keywords: KeywordMapper | None = None

    @property
    def keywords(self) -> KeywordMapper:
        """The keyword mapper of the new tree (built on first use)."""
        if self._keywords is None:
            self._keywords = KeywordMapper(tree=self.tree).fit()
        return self._keywords

    def _scores(self, products: Sequence[Product]) -> tuple[list[str], np.ndarray[Any, Any], bool]:
        texts = product_texts(products)
        if self.new_model is not None:
            return self.new_model.classes_.tolist(), self.new_model.predict_proba(texts), False
        mapper = self.keywords
        return mapper.classes_.tolist(), mapper.similarities(texts), True

    def score(
        self, products: Sequence[Product], targets: Sequence[str] | None
    ) -> list[list[tuple[str, float]]]:
        """Return, per product, (leaf, probability) best first, over ``targets`` or all leaves.

        Probabilities are renormalised over the candidates: with ``targets`` they are the
        probability of each target given that the product belongs to one of them.
        """
        if not products:
            return []
        classes, raw, similarities = self._scores(products)
        column = {c: i for i, c in enumerate(classes)}
        candidates = [t for t in (targets if targets is not None else classes) if t in column]
        if not candidates:
            return [[] for _ in products]
        cols = np.array([column[c] for c in candidates])
        part = raw[:, cols]
        if similarities:
            # The softmax over a subset of columns is the full softmax renormalised there.
            probs = softmax(part, self.keywords.temperature or DEFAULT_TEMPERATURE)
        else:
            totals = part.sum(axis=1, keepdims=True)
            totals[totals <= 0] = 1.0
            probs = part / totals
        if targets is not None and self.old_model is not None:
            probs = self._blend_old_model(products, candidates, probs)
        result = []
        for row in probs:
            order = np.argsort(-row, kind="stable")
            result.append([(candidates[j], float(row[j])) for j in order])
        return result

    def _blend_old_model(
        self, products: Sequence[Product], candidates: list[str], probs: np.ndarray[Any, Any]
    ) -> np.ndarray[Any, Any]:
        assert self.old_model is not None
        old_classes = {c: i for i, c in enumerate(self.old_model.classes_.tolist())}
        shared = [j for j, c in enumerate(candidates) if c in old_classes]
        if not shared:
            return probs
        old = self.old_model.predict_proba(product_texts(products))
        model_part = np.zeros_like(probs)
        for j in shared:
            model_part[:, j] = old[:, old_classes[candidates[j]]]
        totals = model_part.sum(axis=1, keepdims=True)
        usable = totals[:, 0] > 0
        model_part[usable] /= totals[usable]
        blended = probs.copy()
        blended[usable] = (1 - OLD_MODEL_WEIGHT) * probs[usable] + OLD_MODEL_WEIGHT * model_part[
            usable
        ]
        return blended


# What a node decides about its products' attributes: who and age applicability (empty = does
# not apply), the restriction flag, and whether the node is too generic to say (then the
# restriction keywords of the text are read).
_NodeFacts = tuple[frozenset[str], frozenset[str], str, bool]


class AttributeFollower:
    """Make the node-decided attributes of a remapped product follow its new node.

    Args:
        old_tree: the tree the mappings come from.
        new_tree: the tree they move to.
        extractor: the attribute extractor on ``new_tree`` (default: one with no brand
            dictionary; give the project's so that a brand's name is not read as an audience).
    """

    def __init__(
        self,
        old_tree: CategoryTree,
        new_tree: CategoryTree,
        *,
        extractor: AttributeExtractor | None = None,
    ) -> None:
        if extractor is not None and (
            extractor.tree is None or str(extractor.tree.version) != str(new_tree.version)
        ):
            raise ValueError("the extractor must work on the new tree")
        self.old_tree = old_tree
        self.new_tree = new_tree
        self.extractor = extractor or AttributeExtractor(brands=BrandDictionary([]), tree=new_tree)
        self._facts: dict[tuple[bool, str], _NodeFacts | None] = {}

    def _node_facts(self, new: bool, node_id: str) -> _NodeFacts | None:
        key = (new, node_id)
        if key not in self._facts:
            tree = self.new_tree if new else self.old_tree
            if not node_id or node_id not in tree:
                self._facts[key] = None
            else:
                self._facts[key] = (
                    tree.who(node_id),
                    tree.ages(node_id),
                    tree.restriction(node_id) or "",
                    is_generic_node(tree[node_id].name) or not tree.is_leaf(node_id),
                )
        return self._facts[key]

    def changes(self, old_node: str, new_node: str) -> bool:
        """Tell whether moving from ``old_node`` to ``new_node`` can change the attributes.

        A move to no node ('') changes nothing: there is no node to read from.
        """
        if not new_node:
            return False
        new = self._node_facts(True, new_node)
        return new is not None and self._node_facts(False, old_node) != new

    def follow(self, row: dict[str, Any], product: Product, new_node: str) -> None:
        """Set ``row``'s who, age, audience evidence / conflict and restriction for ``new_node``.

        The restriction is always recomputed on the new tree. Who and age are read again for
        the new node, except on a reviewed mapping, where the person's values stay unless the
        new node says gender or age does not apply (then ``not_applicable``).
        """
        attributes = self.extractor.extract(product, new_node)
        row["restriction"] = attributes.restriction
        if row["status"] != "reviewed":
            row["who"] = attributes.who
            row["age"] = attributes.age
            row["audience_evidence"] = attributes.audience_evidence
            row["audience_conflict"] = int(attributes.audience_conflict)
            return
        if not self.new_tree.who(new_node):
            row["who"] = "not_applicable"
        if not self.new_tree.ages(new_node):
            row["age"] = "not_applicable"


def open_tree(version_or_file: str) -> CategoryTree:
    """Return a tree from a file path, or the shared tree of that version ("2")."""
    path = Path(version_or_file)
    if path.is_file():
        return load_tree(path)
    if not version_or_file.strip().isdigit():
        raise InputError(
            f"'{version_or_file}' is neither a tree file nor a tree version",
            hint="give a version number such as 2, or the path of a tree file",
        )
    return load_default_tree(version_or_file.strip())


def stored_tree_versions(store: Store) -> dict[str, int]:
    """Return how many stored mappings use each tree version ('' = not recorded)."""
    rows = store._read(
        "SELECT tree_version, COUNT(*) FROM mappings GROUP BY tree_version ORDER BY tree_version"
    ).fetchall()
    return {str(r[0]): int(r[1]) for r in rows}


def scorer_for_project(
    model_dir: str | Path, old_tree: CategoryTree, new_tree: CategoryTree
) -> RemapScorer:
    """Build the re-scorer from the project's model folder, if it holds a usable model.

    A model trained on the new tree re-scores; one trained on the old tree only helps on
    split targets that keep an old id; without a model the new tree's keywords decide.
    """
    from catmap.classify.storage import load_model, read_manifest

    folder = Path(model_dir)
    if not (folder / "manifest.json").is_file():
        return RemapScorer(new_tree)
    version = str(read_manifest(folder).get("tree_version"))
    if version == str(new_tree.version):
        model, manifest = load_model(folder, new_tree)
        return RemapScorer(
            new_tree,
            new_model=model,
            model_version=str(manifest.get("training_data_fingerprint", ""))[:12],
        )
    if version == str(old_tree.version):
        model, _ = load_model(folder, old_tree)
        return RemapScorer(new_tree, old_model=model)
    return RemapScorer(new_tree)


# --------------------------------------------------------------------------------------------
# The report
# --------------------------------------------------------------------------------------------


@dataclass
class RemapReport:
    """What a remap did (what ``catmap remap`` prints, and the run summary)."""

    remap_id: int = 0
    run_id: int = 0
    from_version: str = ""
    to_version: str = ""
    crosswalk: str = "computed"
    scorer: str = "cold_start"
    mappings: int = 0
    unchanged: int = 0
    moved_automatically: int = 0
    rescored: int = 0
    requeued: int = 0
    reviewed_kept: int = 0
    not_in_old_tree: int = 0
    by_change: dict[str, dict[str, int]] = field(default_factory=dict)
    departments_before: dict[str, int] = field(default_factory=dict)
    departments_after: dict[str, int] = field(default_factory=dict)
    queue_groups: dict[str, int] = field(default_factory=dict)
    thresholds: dict[str, dict[str, Any]] = field(default_factory=dict)

    @property
    def no_review_share(self) -> float:
        """Share of the remapped products that the remap did not send to review."""
        return 1.0 - self.requeued / self.mappings if self.mappings else 1.0

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        facts = dict(self.__dict__)
        facts["no_review_share"] = round(self.no_review_share, 4)
        return facts

    @classmethod
    def from_dict(cls, facts: dict[str, Any]) -> RemapReport:
        """Rebuild a report saved by :meth:`to_dict`."""
        known = {k: v for k, v in facts.items() if k in cls.__dataclass_fields__}
        return cls(**known)


@dataclass(frozen=True, slots=True)
class RemapState:
    """A remap as the store records it."""

    id: int
    run_id: int | None
    from_version: str
    to_version: str
    state: str
    started_at: str
    finished_at: str | None
    pending_mappings: int
    report: RemapReport


# --------------------------------------------------------------------------------------------
# Helpers
# --------------------------------------------------------------------------------------------


def remap_group_key(old_tree: CategoryTree, old_id: str) -> str:
    """Return the review group of products re-queued from an old node."""
    path = old_tree.path_text(old_id) if old_id in old_tree else ""
    return f"remap {old_id}: {path}" if path else f"remap {old_id}"


def _change_kind(corr: Correspondence) -> str:
    return "+".join(corr.changes)


def _one_to_one(corr: Correspondence) -> bool:
    return (
        len(corr.new_ids) == 1
        and "split" not in corr.changes
        and "removed" not in corr.changes
        and "added" not in corr.changes
    )


def _feed_thresholds(store: Store, min_confidence: float | None) -> dict[int, tuple[float, str]]:
    result: dict[int, tuple[float, str]] = {}
    for feed in store.feeds():
        if min_confidence is not None:
            result[feed.id] = (min_confidence, "option")
            continue
        chosen: tuple[float, str] | None = None
        for run in reversed(store.runs(feed.id)):
            value = run.summary.get("threshold") if run.kind == "onboard" else None
            if value is not None:
                chosen = (float(value), f"onboard run {run.id}")
                break
        result[feed.id] = chosen or (DEFAULT_MIN_CONFIDENCE, "default")
    return result


def _acceptance_score(method: str, confidence: float) -> float:
    # As onboarding: a rule is the team's own decision, a backed-off inner node never passes.
    if method == "rule":
        return 1.0
    if method == "backoff":
        return 0.0
    return confidence


def _translate_alternatives(text: str, crosswalk: dict[str, Correspondence], chosen: str) -> str:
    alternatives = json.loads(text)
    kept: list[list[Any]] = []
    seen = {chosen}
    for node, confidence in alternatives:
        corr = crosswalk.get(str(node))
        if corr is None or not _one_to_one(corr):
            continue
        new_id = corr.new_ids[0]
        if new_id not in seen:
            seen.add(new_id)
            kept.append([new_id, confidence])
    return json.dumps(kept, ensure_ascii=False, separators=(",", ":")) if kept else "[]"


def _pending(store: Store) -> dict[str, Any] | None:
    row = store._read(
        "SELECT * FROM remaps WHERE state IN ('running', 'pending') ORDER BY id DESC LIMIT 1"
    ).fetchone()
    return dict(row) if row is not None else None


def latest_remap(store: Store) -> RemapState | None:
    """Return the newest remap recorded in the store (None when there was none)."""
    row = store._read("SELECT * FROM remaps ORDER BY id DESC LIMIT 1").fetchone()
    if row is None:
        return None
    count = store._read(
        "SELECT COUNT(*) FROM remap_previous WHERE remap_id = ?", (row["id"],)
    ).fetchone()[0]
    return RemapState(
        id=row["id"],
        run_id=row["run_id"],
        from_version=row["from_version"],
        to_version=row["to_version"],
        state=row["state"],
        started_at=row["started_at"],
        finished_at=row["finished_at"],
        pending_mappings=int(count),
        report=RemapReport.from_dict(json.loads(row["report"])),
    )


# --------------------------------------------------------------------------------------------
# The remap
# --------------------------------------------------------------------------------------------


def remap_store(
    store: Store,
    old_tree: CategoryTree,
    new_tree: CategoryTree,
    *,
    crosswalk: Crosswalk | None = None,
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
        scorer: scores re-scored products (default: keywords of the new tree).
        min_confidence: the accept threshold for re-scored mappings (default: each feed's
            onboarding threshold, else :data:`DEFAULT_MIN_CONFIDENCE`).
        actor: who runs it (for the audit log).
        batch_size: mappings per transaction.
        extractor: the attribute extractor on ``new_tree`` used when a product's node changes
            what its attributes may be (see :class:`AttributeFollower`).

    Returns:
        The report, also saved as the remap run's summary.

    Raises:
        StoreError: another remap is waiting to be finalised or rolled back.
    """
    old_version, new_version = str(old_tree.version), str(new_tree.version)
    if old_version == new_version:
        raise StoreError(
            f"the mappings are already on tree version {new_version}",
            path=store.path,
            hint="give another tree version with --to",
        )
    pending = _pending(store)
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
    source = "given"
    if crosswalk is None:
        crosswalk = diff_trees(old_tree, new_tree)
        source = "computed"
    scorer = scorer or RemapScorer(new_tree)
    follower = AttributeFollower(old_tree, new_tree, extractor=extractor)
    thresholds = _feed_thresholds(store, min_confidence)
    by_old = {c.old_id: c for c in crosswalk.correspondences if c.old_id is not None}

    if pending is not None:
        remap_id, run_id = int(pending["id"]), int(pending["run_id"])
        report = RemapReport.from_dict(json.loads(pending["report"]))
    else:
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
        report = RemapReport()
    report.remap_id, report.run_id = remap_id, run_id
    report.from_version, report.to_version = old_version, new_version
    report.crosswalk, report.scorer = source, scorer.method
    names = {fid: store.feed(fid).name for fid in thresholds}
    report.thresholds = {
        names[fid]: {"threshold": value, "source": origin}
        for fid, (value, origin) in thresholds.items()
    }

    before: Counter[str] = Counter(report.departments_before)
    after: Counter[str] = Counter(report.departments_after)
    groups: Counter[str] = Counter(report.queue_groups)

    for batch in _unremapped_batches(store, remap_id, old_version, new_version, batch_size):
        _remap_batch(
            store,
            remap_id,
            batch,
            by_old,
            old_tree,
            new_tree,
            scorer,
            follower,
            thresholds,
            report,
            before,
            after,
            groups,
        )
        report.departments_before = dict(before.most_common())
        report.departments_after = dict(after.most_common())
        report.queue_groups = dict(groups.most_common())
        with store._transaction() as conn:
            conn.execute(
                "UPDATE remaps SET report = ? WHERE id = ?",
                (json.dumps(report.to_dict()), remap_id),
            )

    facts = report.to_dict()
    with store._transaction() as conn:
        conn.execute(
            "UPDATE remaps SET state = 'pending', finished_at = ?, report = ? WHERE id = ?",
            (store._now(), json.dumps(facts), remap_id),
        )
        store._audit(
            conn,
            "remap_done",
            actor,
            detail={
                "remap_id": remap_id,
                "mappings": report.mappings,
                "moved_automatically": report.moved_automatically,
                "rescored": report.rescored,
                "requeued": report.requeued,
            },
        )
    store.finish_run(run_id, summary=facts)
    return report


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


def _remap_batch(
    store: Store,
    remap_id: int,
    batch: list[dict[str, Any]],
    by_old: dict[str, Correspondence],
    old_tree: CategoryTree,
    new_tree: CategoryTree,
    scorer: RemapScorer,
    follower: AttributeFollower,
    thresholds: dict[int, tuple[float, str]],
    report: RemapReport,
    before: Counter[str],
    after: Counter[str],
    groups: Counter[str],
) -> None:
    new_version = str(new_tree.version)
    updates: list[tuple[Any, ...]] = []
    previous: list[tuple[Any, ...]] = []
    to_score: dict[tuple[str, ...] | None, list[dict[str, Any]]] = {}
    # One-to-one moves whose new node decides the attributes differently: (row, changed, node).
    to_follow: list[tuple[dict[str, Any], dict[str, Any], str]] = []

    for row in batch:
        node = row["node_id"]
        previous.append(
            (remap_id, row["feed_id"], row["product_id"], *(row[c] for c in _PREVIOUS_COLUMNS))
        )
        report.mappings += 1
        if not node:
            # "No node fits": nothing to translate.
            updates.append(_update(row, node, row["confidence"], row["method"], row, new_version))
            report.unchanged += 1
            continue
        corr = by_old.get(node)
        if corr is None or node not in old_tree:
            report.not_in_old_tree += 1
            before["(not in the old tree)"] += 1
            to_score.setdefault(None, []).append(row)
            row["_kind"] = "not_in_old_tree"
            continue
        before[old_tree.department(node).name] += 1
        kind = _change_kind(corr)
        row["_kind"] = kind
        counts = report.by_change.setdefault(
            kind, {"products": 0, "automatic": 0, "rescored": 0, "requeued": 0}
        )
        counts["products"] += 1
        if _one_to_one(corr) and corr.new_ids[0] in new_tree:
            new_id = corr.new_ids[0]
            changed = dict(row)
            changed["alternatives"] = _translate_alternatives(row["alternatives"], by_old, new_id)
            if follower.changes(node, new_id):
                to_follow.append((row, changed, new_id))
            else:
                updates.append(
                    _update(row, new_id, row["confidence"], row["method"], changed, new_version)
                )
            after[new_tree.department(new_id).name] += 1
            counts["automatic"] += 1
            if corr.changes == ("unchanged",):
                report.unchanged += 1
            else:
                report.moved_automatically += 1
                if row["status"] == "reviewed":
                    report.reviewed_kept += 1
            continue
        targets = tuple(t for t in corr.new_ids if t in new_tree and new_tree.is_leaf(t))
        key = targets if "split" in corr.changes and len(targets) >= 2 else None
        to_score.setdefault(key, []).append(row)

    if to_follow:
        followed = _products(store, [row for row, _c, _n in to_follow])
        for (row, changed, new_id), product in zip(to_follow, followed, strict=True):
            follower.follow(changed, product, new_id)
            updates.append(
                _update(row, new_id, row["confidence"], row["method"], changed, new_version)
            )

    queued: list[dict[str, Any]] = []
    for split_targets, rows in to_score.items():
        products = _products(store, rows)
        scored = scorer.score(products, list(split_targets) if split_targets is not None else None)
        for row, ranking, product in zip(rows, scored, products, strict=True):
            report.rescored += 1
            change_counts = report.by_change.get(row["_kind"])
            if change_counts is not None:
                change_counts["rescored"] += 1
            if not ranking:
                fallback = by_old.get(row["node_id"])
                ranking = [(fallback.new_ids[0], 0.0)] if fallback and fallback.new_ids else []
            if not ranking:
                new_id, probability = "", 0.0
            else:
                new_id, probability = ranking[0]
            prior = (
                1.0
                if row["status"] == "reviewed" or row["method"] == "rule"
                else float(row["confidence"])
            )
            confidence = prior * probability if split_targets is not None else probability
            changed = dict(row)
            changed["alternatives"] = json.dumps(
                [[n, round(p, 4)] for n, p in ranking[1 : 1 + ALTERNATIVES]],
                separators=(",", ":"),
            )
            old_path = old_tree.path_text(row["node_id"]) if row["node_id"] in old_tree else ""
            changed["reason"] = f"remap from {row['node_id']} {old_path}".strip()
            threshold = thresholds.get(row["feed_id"], (DEFAULT_MIN_CONFIDENCE, "default"))[0]
            passes = bool(new_id) and _acceptance_score(scorer.method, confidence) >= threshold
            if passes:
                changed["status"] = "accepted" if row["status"] != "audit" else "audit"
            else:
                report.requeued += 1
                if change_counts is not None:
                    change_counts["requeued"] += 1
                group = remap_group_key(old_tree, row["node_id"])
                changed["status"] = "queued"
                changed["group_key"] = group
                groups[group] += 1
                queued.append(
                    {
                        "feed_id": row["feed_id"],
                        "product_id": row["product_id"],
                        "key": group,
                        "priority": 1.0 - confidence,
                    }
                )
            if scorer.new_model is not None:
                changed["model_version"] = scorer.model_version
            if follower.changes(row["node_id"], new_id):
                follower.follow(changed, product, new_id)
            updates.append(_update(row, new_id, confidence, scorer.method, changed, new_version))
            if new_id:
                after[new_tree.department(new_id).name] += 1
            else:
                after["(no node)"] += 1

    with store._transaction() as conn:
        conn.executemany(
            "INSERT OR IGNORE INTO remap_previous (remap_id, feed_id, product_id, "
            + ", ".join(_PREVIOUS_COLUMNS)
            + ") VALUES (?, ?, ?, "
            + ", ".join("?" for _ in _PREVIOUS_COLUMNS)
            + ")",
            previous,
        )
        conn.executemany(
            "UPDATE mappings SET node_id = ?, confidence = ?, method = ?, alternatives = ?, "
            "reason = ?, model_version = ?, tree_version = ?, status = ?, group_key = ?, "
            "who = ?, age = ?, audience_evidence = ?, audience_conflict = ?, restriction = ? "
            "WHERE feed_id = ? AND product_id = ?",
            updates,
        )
        for entry in queued:
            _queue(store, conn, remap_id, entry)


def _update(
    row: dict[str, Any],
    node: str,
    confidence: float,
    method: str,
    changed: dict[str, Any],
    new_version: str,
) -> tuple[Any, ...]:
    return (
        node,
        confidence,
        method,
        changed["alternatives"],
        changed["reason"],
        changed["model_version"],
        new_version,
        changed["status"],
        changed["group_key"],
        changed["who"],
        changed["age"],
        changed["audience_evidence"],
        changed["audience_conflict"],
        changed["restriction"],
        row["feed_id"],
        row["product_id"],
    )


def _products(store: Store, rows: list[dict[str, Any]]) -> list[Product]:
    found: dict[tuple[int, str], Product] = {}
    by_feed: dict[int, list[str]] = {}
    for row in rows:
        by_feed.setdefault(row["feed_id"], []).append(row["product_id"])
    for feed_id, ids in by_feed.items():
        for start in range(0, len(ids), 500):
            part = ids[start : start + 500]
            marks = ", ".join("?" for _ in part)
            for r in store._read(
                f"SELECT product_id, data FROM products WHERE feed_id = ? AND product_id IN "
                f"({marks})",
                (feed_id, *part),
            ).fetchall():
                found[(feed_id, r["product_id"])] = product_from_json(r["data"])
    return [found[(r["feed_id"], r["product_id"])] for r in rows]


def _queue(store: Store, conn: Any, remap_id: int, entry: dict[str, Any]) -> None:
    """Queue one product for review (reason ``remap``), remembering the item as it was."""
    feed_id, product_id = entry["feed_id"], entry["product_id"]
    busy = conn.execute(
        "SELECT 1 FROM review_items WHERE feed_id = ? AND product_id = ? "
        "AND state != 'done' AND reason != 'remap'",
        (feed_id, product_id),
    ).fetchone()
    if busy is not None:
        return  # already waiting for a reviewer, who will see the new suggestion
    existing = conn.execute(
        "SELECT * FROM review_items WHERE feed_id = ? AND product_id = ? AND reason = 'remap'",
        (feed_id, product_id),
    ).fetchone()
    if existing is None:
        cursor = conn.execute(
            "INSERT INTO review_items (feed_id, product_id, group_key, reason, priority, "
            "created_at) VALUES (?, ?, ?, 'remap', ?, ?)",
            (feed_id, product_id, entry["key"], entry["priority"], store._now()),
        )
        conn.execute(
            "INSERT OR IGNORE INTO remap_items (item_id, remap_id, before) VALUES (?, ?, NULL)",
            (int(cursor.lastrowid or 0), remap_id),
        )
        return
    saved = {c: existing[c] for c in _ITEM_COLUMNS}
    conn.execute(
        "INSERT OR IGNORE INTO remap_items (item_id, remap_id, before) VALUES (?, ?, ?)",
        (existing["id"], remap_id, json.dumps(saved)),
    )
    conn.execute(
        "UPDATE review_items SET group_key = ?, priority = ?, state = 'open', claimed_by = NULL, "
        "lease_until = NULL, skips = 0 WHERE id = ?",
        (entry["key"], entry["priority"], existing["id"]),
    )


# --------------------------------------------------------------------------------------------
# Rollback and finalise
# --------------------------------------------------------------------------------------------


def _open_remap(store: Store, action: str) -> dict[str, Any]:
    pending = _pending(store)
    if pending is None:
        raise StoreError(
            f"no remap to {action}",
            path=store.path,
            hint="run `catmap remap --to VERSION` first",
        )
    return pending


def rollback_remap(store: Store, *, actor: str = "catmap", batch_size: int = BATCH_SIZE) -> int:
    """Put back every mapping and review item as it was before the pending remap.

    Args:
        store: the project store.
        actor: who rolls back (for the audit log).
        batch_size: mappings restored per statement page.

    Returns:
        How many mappings were restored.

    Raises:
        StoreError: no remap to roll back, or a reviewer decided something since the remap
            (rolling back would lose it).
    """
    remap = _open_remap(store, "roll back")
    remap_id = int(remap["id"])
    with store._transaction() as conn:
        later = conn.execute(
            "SELECT COUNT(*) FROM decisions WHERE id > ?", (remap["last_decision_id"],)
        ).fetchone()[0]
        if later:
            raise StoreError(
                f"{later} review decision(s) were made after remap {remap_id}; "
                "rolling back would lose them",
                path=store.path,
                hint="finalise the remap with `catmap remap-finalise` instead",
            )
        restored = conn.execute(
            "UPDATE mappings SET "
            + ", ".join(
                f"{c} = COALESCE(p.{c}, mappings.{c})"
                if c in _ATTRIBUTE_COLUMNS
                else f"{c} = p.{c}"
                for c in _PREVIOUS_COLUMNS
            )
            + " FROM remap_previous AS p WHERE p.remap_id = ? "
            "AND mappings.feed_id = p.feed_id AND mappings.product_id = p.product_id",
            (remap_id,),
        ).rowcount
        for item in conn.execute(
            "SELECT item_id, before FROM remap_items WHERE remap_id = ?", (remap_id,)
        ).fetchall():
            if item["before"] is None:
                conn.execute("DELETE FROM review_items WHERE id = ?", (item["item_id"],))
            else:
                saved = json.loads(item["before"])
                conn.execute(
                    "UPDATE review_items SET "
                    + ", ".join(f"{c} = ?" for c in _ITEM_COLUMNS)
                    + " WHERE id = ?",
                    [saved[c] for c in _ITEM_COLUMNS] + [item["item_id"]],
                )
        conn.execute("DELETE FROM remap_items WHERE remap_id = ?", (remap_id,))
        conn.execute("DELETE FROM remap_previous WHERE remap_id = ?", (remap_id,))
        conn.execute(
            "UPDATE remaps SET state = 'rolled_back', finished_at = ? WHERE id = ?",
            (store._now(), remap_id),
        )
        store._audit(
            conn,
            "remap_rollback",
            actor,
            detail={"remap_id": remap_id, "mappings_restored": restored},
        )
    return int(restored)


def finalise_remap(store: Store, *, actor: str = "catmap") -> int:
    """Keep the pending remap: drop the saved previous mappings (no rollback after this).

    Returns:
        How many saved previous mappings were dropped.

    Raises:
        StoreError: no remap waiting to be finalised (or one still running).
    """
    remap = _open_remap(store, "finalise")
    remap_id = int(remap["id"])
    if remap["state"] == "running":
        raise StoreError(
            f"remap {remap_id} did not finish",
            path=store.path,
            hint="run `catmap remap` again to complete it, or `catmap remap-rollback`",
        )
    with store._transaction() as conn:
        dropped = conn.execute(
            "DELETE FROM remap_previous WHERE remap_id = ?", (remap_id,)
        ).rowcount
        conn.execute("DELETE FROM remap_items WHERE remap_id = ?", (remap_id,))
        conn.execute(
            "UPDATE remaps SET state = 'finalised', finished_at = ? WHERE id = ?",
            (store._now(), remap_id),
        )
        store._audit(
            conn, "remap_finalise", actor, detail={"remap_id": remap_id, "mappings": dropped}
        )
    return int(dropped)


# --------------------------------------------------------------------------------------------
# The model follows the tree
# --------------------------------------------------------------------------------------------


REMAPPED_CATALOG_COLUMNS = (
    "product_id", "title", "description", "brand", "retailer_category", "gold_node", "split",
)


def write_remapped_catalog(store: Store, tree: CategoryTree, path: str | Path) -> int:
    """Write the settled mappings on ``tree``'s version as a labelled CSV feed for training.

    This is how the model follows the tree: after a remap, the accepted and reviewed mappings
    of the new version are the labelled catalog ``catmap train --tree-version N`` learns from.
    Columns: :data:`REMAPPED_CATALOG_COLUMNS`; ``split`` is a fixed 90/10 train / valid split by
    a hash of the product id, so a rerun keeps the same validation products. The file is for
    catmap's own reader, never a spreadsheet, so cells are written as they are.

    Returns:
        How many products were written.
    """
    import csv
    import hashlib

    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    count = 0
    with target.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(REMAPPED_CATALOG_COLUMNS)
        for product, node in remapped_examples(store, tree):
            digest = hashlib.blake2b(product.product_id.encode("utf-8"), digest_size=8).digest()
            split = "valid" if int.from_bytes(digest, "big") % 10 == 0 else "train"
            writer.writerow(
                (
                    product.product_id,
                    product.title,
                    product.description,
                    product.brand,
                    " > ".join(product.category_path),
                    node,
                    split,
                )
            )
            count += 1
    return count


def remapped_examples(
    store: Store, tree: CategoryTree, *, statuses: tuple[str, ...] = ("accepted", "reviewed")
) -> Iterator[tuple[Product, str]]:
    """Yield (product, leaf id) for mappings on ``tree``'s version: training data after a remap.

    Only accepted and reviewed mappings on a leaf of ``tree`` are given (queued ones are not
    settled yet). Streams page by page.
    """
    version = str(tree.version)
    marks = ", ".join("?" for _ in statuses)
    last: tuple[int, str] = (-1, "")
    while True:
        rows = store._read(
            "SELECT m.feed_id, m.product_id, m.node_id, p.data FROM mappings AS m "
            "JOIN products AS p USING (feed_id, product_id) "
            f"WHERE m.tree_version = ? AND m.status IN ({marks}) "
            "AND (m.feed_id, m.product_id) > (?, ?) ORDER BY m.feed_id, m.product_id LIMIT 2000",
            (version, *statuses, last[0], last[1]),
        ).fetchall()
        for row in rows:
            node = row["node_id"]
            if node in tree and tree.is_leaf(node):
                yield product_from_json(row["data"]), node
        if len(rows) < 2000:
            return
        last = (rows[-1]["feed_id"], rows[-1]["product_id"])
