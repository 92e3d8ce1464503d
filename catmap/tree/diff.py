"""What changed between two versions of the category tree, as a crosswalk from old ids to new.

:func:`diff_trees` compares two trees and says, for every old node, where its products go in the
new tree and why: unchanged, renamed (same id, new name), moved (same id, new parent), split
(one old node into several new ones; also an old leaf that keeps its id and gets two or more
new leaves below it), merged (several old nodes into one) or removed; and which
new nodes were added. Ids decide first. Where ids changed (an old id missing from the new tree,
a new id missing from the old) the nodes are matched on their words (names and keywords in all
languages), their place in the tree and, when mapped products are given, on the products
themselves: the products under an old node are re-scored on the new tree and the overlap of
product sets shows where they went (instance-based matching; simple Jaccard overlap is a strong
method: Isaac et al., "An empirical study of instance-based ontology matching", ISWC 2007).

The diff only ever sees the two trees (and the products); :func:`score_against_changelog`
then measures it against a documented change log, with precision, recall and F1 per change
type, the way ontology alignment evaluations report them.

The crosswalk file is a tab-separated text file of catmap's own (see :func:`save_crosswalk`).
"""

from __future__ import annotations

import csv
from collections import Counter, defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Protocol

from catmap._atomic import atomic_open
from catmap._cells import neutralise_cell, restore_cell
from catmap.errors import InputError, TreeError
from catmap.tree.changelog import Change, ChangeLog, apply_changes
from catmap.tree.search import fold_text
from catmap.tree.taxonomy import CategoryTree, path_label_reader
from catmap.tree.treefile import Node

__all__ = [
    "CHANGE_TYPES",
    "Correspondence",
    "Crosswalk",
    "LabelTranslation",
    "ProductScorer",
    "SURE",
    "crosswalk_from_changes",
    "diff_trees",
    "label_equality_crosswalk",
    "load_crosswalk",
    "moves_as_is",
    "overridden",
    "reconcile",
    "reference_items",
    "save_crosswalk",
    "score_against_changelog",
]

CHANGE_TYPES: tuple[str, ...] = (
    "unchanged",
    "renamed",
    "moved",
    "split",
    "merged",
    "added",
    "removed",
)

# A removed and an added node are linked when their similarity reaches this (0..1). Chosen on
# the hand-made pairs in tests/data/treediff (common practice, no source).
LINK_THRESHOLD = 0.5
# Between siblings sharing no word, a name links them only from this similarity on (chosen on
# the generated tuning change sets, seeds 0-9: sibling names score 0.55-0.65 by chance).
NAME_ALONE = 0.8
# A removed node is merged into a kept node when this share of its words is found there.
MERGE_COVER = 0.6
# A one-to-one correspondence moves products with no model look only at or above this
# confidence: below it the diff is not sure the new node means the same (common practice, no
# source: a link right nineteen times in twenty).
SURE = 0.95
# A node found under a new id is at most this sure: the tree's ids are never reused, so a new id
# for an old node is a split, a merge or a new node as often as a renamed one.
REKEYED_CONFIDENCE = 0.8
# Words that say nothing about what a node holds.
_STOP_WORDS = frozenset({"and", "or", "for", "with", "the", "of", "other"})

_HEADER = "@crosswalk"
_COLUMNS = ("old_id", "new_ids", "change", "confidence", "evidence")


@dataclass(frozen=True, slots=True)
class Correspondence:
    """One line of a crosswalk: an old node, the new nodes its products go to, and why.

    Attributes:
        old_id: the old node's id; None for a node added in the new tree.
        new_ids: where the old node's products go (several for a split; for a removed node, the
            nearest surviving ancestor; empty if none survives); the new id for an added node.
        changes: the change types (see :data:`CHANGE_TYPES`); a node can be both renamed and
            moved.
        confidence: 0..1; 1.0 when ids alone decide.
        evidence: a short human-readable account of what decided.
        source: what decided: ``diff`` (the two trees compared) or ``log`` (a change log).
    """

    old_id: str | None
    new_ids: tuple[str, ...]
    changes: tuple[str, ...]
    confidence: float
    evidence: str = ""
    source: str = "diff"


@dataclass(slots=True)
class Crosswalk:
    """Every old node's correspondence in the new tree, and the added nodes.

    Attributes:
        old_version: the old tree's version.
        new_version: the new tree's version.
        correspondences: old nodes first (in the old tree's order), then added nodes.
    """

    old_version: str
    new_version: str
    correspondences: list[Correspondence] = field(default_factory=list)

    def changed(self) -> list[Correspondence]:
        """Return the correspondences that are not "unchanged"."""
        return [c for c in self.correspondences if c.changes != ("unchanged",)]

    def counts(self) -> dict[str, int]:
        """Return how many correspondences carry each change type (all types listed)."""
        found = Counter(kind for c in self.correspondences for kind in c.changes)
        return {kind: found.get(kind, 0) for kind in CHANGE_TYPES}

    def new_ids_for(self, old_id: str) -> tuple[str, ...]:
        """Return where an old node's products go (empty when the old id is unknown)."""
        for corr in self.correspondences:
            if corr.old_id == old_id:
                return corr.new_ids
        return ()


class ProductScorer(Protocol):
    """Anything that can map product texts onto a category tree (e.g. catmap's classifier)."""

    def predict_nodes(self, texts: Sequence[str], tree: CategoryTree) -> Sequence[str | None]:
        """Return, for each text, the id of the node of ``tree`` it belongs to (None: unsure)."""
        ...


# -- similarity -----------------------------------------------------------------------------


def _terms(node: Node) -> frozenset[str]:
    words = [node.name, *(t for terms in node.terms.values() for t in terms)]
    return frozenset(f for f in map(fold_text, words) if f)


def _name_words(node: Node) -> str:
    return " ".join(w for w in fold_text(node.name).split() if w not in _STOP_WORDS)


def _name_similarity(a: Node, b: Node) -> float:
    from rapidfuzz import fuzz

    return float(fuzz.token_set_ratio(_name_words(a), _name_words(b))) / 100.0


@dataclass(frozen=True, slots=True)
class _Link:
    score: float
    evidence: str


class _Matcher:
    """Similarity between an old node and a new node, from words, place and products."""

    def __init__(
        self,
        old: CategoryTree,
        new: CategoryTree,
        old_of_product: Sequence[str] | None,
        new_of_product: Sequence[str | None] | None,
    ) -> None:
        self.old = old
        self.new = new
        self._terms: dict[tuple[int, str], frozenset[str]] = {}
        self.products_old: dict[str, set[int]] = defaultdict(set)
        self.products_new: dict[str, set[int]] = defaultdict(set)
        self.with_products = old_of_product is not None and new_of_product is not None
        if old_of_product is not None and new_of_product is not None:
            for index, (before, after) in enumerate(
                zip(old_of_product, new_of_product, strict=True)
            ):
                self.products_old[before].add(index)
                if after is not None:
                    self.products_new[after].add(index)

    def terms(self, tree: CategoryTree, node_id: str) -> frozenset[str]:
        key = (id(tree), node_id)
        if key not in self._terms:
            self._terms[key] = _terms(tree[node_id])
        return self._terms[key]

    def label_link(self, old_id: str, new_id: str) -> _Link:
        """Similarity of a removed old node and an added new node from words and place."""
        before, after = self.old[old_id], self.new[new_id]
        t_old, t_new = self.terms(self.old, old_id), self.terms(self.new, new_id)
        shared = len(t_old & t_new)
        overlap = shared / min(len(t_old), len(t_new)) if t_old and t_new else 0.0
        # Departments are siblings too: in a one-level tree (a list of categories) every node
        # is one, and a renamed category must be found as a renamed leaf is among its siblings.
        same_parent = before.parent == after.parent
        same_department = self.old.department(old_id).id == self.new.department(new_id).id
        name = _name_similarity(before, after)
        # A name alone links nodes only close together in the tree: far apart, "Ovens" and
        # "Pizza ovens" are different things; there shared keywords must speak.
        if same_parent:
            # With no shared word a name must nearly contain the other ("Ovens" in "Mini and
            # countertop ovens"): two siblings always look a little alike by name.
            by_name = 0.9 * name if shared or name >= NAME_ALONE else 0.0
            score = min(1.0, max(overlap, by_name) + 0.1)
            place = "same parent" if before.parent is not None else "both departments"
        elif same_department:
            score = max(overlap, 0.75 * name)
            place = "same department"
        else:
            score = overlap
            place = "other department"
        evidence = f"words {overlap:.2f} ({shared} shared), name {name:.2f}, {place}"
        return _Link(score, evidence)

    def product_link(self, old_id: str, new_id: str) -> _Link | None:
        """Share of the new node's re-scored products that came from the old node."""
        if not self.with_products:
            return None
        before = self.products_old.get(old_id, set())
        after = self.products_new.get(new_id, set())
        if not before or not after:
            return None
        common = len(before & after)
        jaccard = common / len(before | after)
        from_old = common / len(after)
        return _Link(from_old, f"products: jaccard {jaccard:.2f}, {common} of {len(after)} moved")

    def link(self, old_id: str, new_id: str) -> _Link:
        label = self.label_link(old_id, new_id)
        products = self.product_link(old_id, new_id)
        if products is None or products.score <= label.score:
            return label
        return _Link(products.score, f"{products.evidence}; {label.evidence}")

    def cover(self, old_id: str, new_id: str) -> _Link:
        """How much of a removed old node lives on in a kept new node (words or products)."""
        t_old, t_new = self.terms(self.old, old_id), self.terms(self.new, new_id)
        words = len(t_old & t_new) / len(t_old) if t_old else 0.0
        link = _Link(words, f"{words:.2f} of its words there")
        before = self.products_old.get(old_id, set())
        if self.with_products and before:
            share = len(before & self.products_new.get(new_id, set())) / len(before)
            if share > words:
                link = _Link(share, f"{share:.2f} of its products there; {link.evidence}")
        return link


# -- the diff -------------------------------------------------------------------------------


def diff_trees(
    old: CategoryTree,
    new: CategoryTree,
    *,
    products: Iterable[tuple[str, str]] | None = None,
    scorer: ProductScorer | None = None,
) -> Crosswalk:
    """Find what changed between two trees and where each old node's products go.

    Args:
        old: the older tree.
        new: the newer tree.
        products: optional (product text, old node id) pairs, products mapped on the old tree.
        scorer: re-scores the product texts on the new tree; needed with ``products``.

    Returns:
        The crosswalk: one correspondence per old node (in the old tree's order), then one per
        added node.

    Raises:
        ValueError: products are given without a scorer.
    """
    old_of_product: list[str] | None = None
    new_of_product: list[str | None] | None = None
    if products is not None:
        if scorer is None:
            raise ValueError("products need a scorer to re-score them on the new tree")
        pairs = [(text, node_id) for text, node_id in products if node_id in old]
        old_of_product = [node_id for _, node_id in pairs]
        new_of_product = list(scorer.predict_nodes([text for text, _ in pairs], new))
    matcher = _Matcher(old, new, old_of_product, new_of_product)

    removed = [n.id for n in old if n.id not in new]
    added = [n.id for n in new if n.id not in old]
    links = _Links(matcher, removed, added)

    result: dict[str, Correspondence] = {}
    explained_new = _merges_into_new(links, result)
    explained_new |= _splits_and_new_ids(old, new, links, result, explained_new)
    kept_targets = _merges_into_kept(matcher, removed, result)
    _kept_nodes(old, new, kept_targets, result)
    explained_new |= _leaves_split_below(old, new, result, explained_new)
    _removed_nodes(old, new, removed, result)

    correspondences = [result[n.id] for n in old]
    for new_id in added:
        if new_id not in explained_new:
            correspondences.append(
                Correspondence(None, (new_id,), ("added",), 1.0, "no similar old node")
            )
    return Crosswalk(old.version, new.version, correspondences)


class _Links:
    """The links strong enough to count between removed old nodes and added new nodes."""

    def __init__(self, matcher: _Matcher, removed: list[str], added: list[str]) -> None:
        self.matcher = matcher
        self.removed = removed
        self.added = added
        self.found: dict[tuple[str, str], _Link] = {}
        for old_id in removed:
            for new_id in added:
                link = matcher.link(old_id, new_id)
                if link.score >= LINK_THRESHOLD:
                    self.found[(old_id, new_id)] = link

    def best_new(self, old_id: str) -> str | None:
        """The added node most like a removed one, or None."""
        found = [
            (self.found[(old_id, a)].score, a) for a in self.added if (old_id, a) in self.found
        ]
        return max(found)[1] if found else None

    def best_old(self, new_id: str) -> str | None:
        """The removed node most like an added one, or None."""
        found = [
            (self.found[(r, new_id)].score, r) for r in self.removed if (r, new_id) in self.found
        ]
        return max(found)[1] if found else None


def _merges_into_new(links: _Links, result: dict[str, Correspondence]) -> set[str]:
    """Merges into a new id: several removed nodes whose best match is the same added node.

    Returns:
        The added nodes these explain.
    """
    explained_new: set[str] = set()
    sources_of: dict[str, list[str]] = defaultdict(list)
    for old_id in links.removed:
        target = links.best_new(old_id)
        if target is not None:
            sources_of[target].append(old_id)
    for new_id, sources in sources_of.items():
        if len(sources) >= 2:
            explained_new.add(new_id)
            for old_id in sources:
                link = links.found[(old_id, new_id)]
                result[old_id] = Correspondence(
                    old_id, (new_id,), ("merged",), round(link.score, 3), link.evidence
                )
    return explained_new


def _splits_and_new_ids(
    old: CategoryTree,
    new: CategoryTree,
    links: _Links,
    result: dict[str, Correspondence],
    explained_new: set[str],
) -> set[str]:
    """Splits and re-keyed nodes: the added nodes whose best source is this removed node.

    Returns:
        The added nodes these explain.
    """
    explained: set[str] = set()
    for old_id in links.removed:
        if old_id in result:
            continue
        parts = [
            a
            for a in links.added
            if a not in explained_new
            and a not in explained
            and (old_id, a) in links.found
            and links.best_old(a) == old_id
        ]
        if not parts:
            continue
        explained.update(parts)
        scores = [links.found[(old_id, a)].score for a in parts]
        siblings: list[str] = []
        if len(parts) == 1 and old.is_leaf(old_id):
            siblings = _unlinked_siblings(links, old_id, parts[0], explained_new | explained)
        if siblings:
            # One part found on its words and new nodes added beside it with none: ids are
            # never reused, so this is a split whose other parts took new words.
            explained.update(siblings)
            evidence = (
                f"{parts[0]}: {links.found[(old_id, parts[0])].evidence}; "
                f"added beside it: {', '.join(siblings)}"
            )
            result[old_id] = Correspondence(
                old_id,
                (parts[0], *siblings),
                ("split",),
                round(min(scores[0], REKEYED_CONFIDENCE), 3),
                evidence,
            )
        elif len(parts) >= 2:
            evidence = "; ".join(f"{a}: {links.found[(old_id, a)].evidence}" for a in parts)
            result[old_id] = Correspondence(
                old_id, tuple(parts), ("split",), round(min(scores), 3), evidence
            )
        else:
            new_id = parts[0]
            changes = []
            if fold_text(old[old_id].name) != fold_text(new[new_id].name):
                changes.append("renamed")
            if old[old_id].parent != new[new_id].parent:
                changes.append("moved")
            evidence = f"new id {new_id}; {links.found[(old_id, new_id)].evidence}"
            result[old_id] = Correspondence(
                old_id,
                (new_id,),
                tuple(changes) or ("renamed",),
                round(min(scores[0], REKEYED_CONFIDENCE), 3),
                evidence,
            )
    return explained


def _unlinked_siblings(links: _Links, old_id: str, part: str, taken: set[str]) -> list[str]:
    """New leaves beside the one part found for ``old_id`` that no removed node explains.

    With products given, a sibling counts only when some of the old node's products went there.
    A department has none to count: a new department beside it (in a one-level tree, any new
    category) is not a part of it split off, unless its products went there.
    """
    matcher = links.matcher
    parent = matcher.new[part].parent
    if parent is None and not matcher.with_products:
        return []
    found = []
    for new_id in links.added:
        if new_id in taken or new_id == part or matcher.new[new_id].parent != parent:
            continue
        if any((r, new_id) in links.found for r in links.removed):
            continue
        if not matcher.new.is_leaf(new_id):
            continue
        if matcher.with_products and matcher.product_link(old_id, new_id) is None:
            continue
        found.append(new_id)
    return found


def _merges_into_kept(
    matcher: _Matcher, removed: list[str], result: dict[str, Correspondence]
) -> dict[str, list[str]]:
    """Merges into a kept node: a removed node whose words (or products) live on in a node
    present in both trees, preferably one whose keywords grew.

    Returns:
        Kept node id -> the removed nodes merged into it.
    """
    old, new = matcher.old, matcher.new
    kept = [n.id for n in new if n.id in old]
    grown = {k for k in kept if matcher.terms(new, k) > matcher.terms(old, k)}
    kept_targets: dict[str, list[str]] = defaultdict(list)
    for old_id in removed:
        if old_id in result:
            continue
        best: tuple[float, str, _Link] | None = None
        for new_id in kept:
            cover = matcher.cover(old_id, new_id)
            needed = MERGE_COVER * (0.5 if new_id in grown else 1.0)
            if cover.score >= needed and (best is None or cover.score > best[0]):
                best = (cover.score, new_id, cover)
        if best is None:
            continue
        score, new_id, cover = best
        kept_targets[new_id].append(old_id)
        grew = "; its keywords grew" if new_id in grown else ""
        result[old_id] = Correspondence(
            old_id,
            (new_id,),
            ("merged",),
            round(min(1.0, score), 3),
            f"into kept node {new_id}: {cover.evidence}{grew}",
        )
    return kept_targets


def _leaves_split_below(
    old: CategoryTree,
    new: CategoryTree,
    result: dict[str, Correspondence],
    explained_new: set[str],
) -> set[str]:
    """Old leaves that keep their id but gain two or more new leaves below them: a split.

    A list of category paths turned into a tree (``catmap tree from-paths``) splits a category
    so: 'Coffee makers' gets 'Drip coffee makers' and 'Capsule coffee makers' below it. Its
    products then sit on a node that is no longer a leaf; as a split, they are re-scored over
    the new leaves (a product that fits none goes back to review). One new leaf alone below it
    is an addition: the node stays the place of what the leaf does not hold.

    Returns:
        The added nodes these explain.
    """
    explained: set[str] = set()
    for node in old:
        kept = result.get(node.id)
        if kept is None or kept.changes != ("unchanged",) or not old.is_leaf(node.id):
            continue
        if node.id not in new or new.is_leaf(node.id):
            continue
        parts = [
            leaf.id
            for leaf in new.leaves(under=node.id)
            if leaf.id not in old and leaf.id not in explained_new
        ]
        if len(parts) < 2:
            continue
        explained.update(parts)
        explained.update(
            n.id for n in new.descendants(node.id) if n.id not in old and n.id not in explained_new
        )
        result[node.id] = Correspondence(
            node.id,
            tuple(parts),
            ("split",),
            1.0,
            f"same id; a leaf in version {old.version}, {len(parts)} new leaves below it in "
            f"version {new.version}: {', '.join(parts)}",
        )
    return explained


def _kept_nodes(
    old: CategoryTree,
    new: CategoryTree,
    kept_targets: dict[str, list[str]],
    result: dict[str, Correspondence],
) -> None:
    """Nodes present in both trees: unchanged, or renamed, moved, or taking in merged nodes."""
    for node in old:
        if node.id not in new:
            continue
        after = new[node.id]
        changes = []
        notes = []
        if node.id in kept_targets:
            changes.append("merged")
            notes.append(f"takes in {', '.join(kept_targets[node.id])}")
        confidence = 1.0
        if node.name != after.name:
            changes.append("renamed")
            confidence = _same_meaning(node, after)
            notes.append(f"name '{node.name}' -> '{after.name}' (same meaning {confidence:.2f})")
        if node.parent != after.parent:
            changes.append("moved")
            notes.append(f"parent {node.parent or '-'} -> {after.parent or '-'}")
        result[node.id] = Correspondence(
            node.id,
            (node.id,),
            tuple(changes) or ("unchanged",),
            round(confidence, 3),
            "same id" + (f"; {'; '.join(notes)}" if notes else ""),
        )


def _same_meaning(before: Node, after: Node) -> float:
    """How sure a renamed node still means the same: its keywords kept, or a close name."""
    kept_words = _terms(before) - {fold_text(before.name)}
    new_words = _terms(after) - {fold_text(after.name)}
    kept = len(kept_words & new_words) / len(kept_words) if kept_words else 0.0
    return max(kept, _name_similarity(before, after))


def _removed_nodes(
    old: CategoryTree, new: CategoryTree, removed: list[str], result: dict[str, Correspondence]
) -> None:
    """Removed nodes nothing explains: products go to the nearest ancestor that survives."""
    for old_id in removed:
        if old_id in result:
            continue
        home = next((a.id for a in reversed(old.ancestors(old_id)) if a.id in new), None)
        result[old_id] = Correspondence(
            old_id,
            (home,) if home else (),
            ("removed",),
            1.0,
            "no similar new node" + (f"; products go to ancestor {home}" if home else ""),
        )


def label_equality_crosswalk(old: CategoryTree, new: CategoryTree) -> Crosswalk:
    """The baseline: nodes correspond only where their names are equal (case and accents aside).

    Same id preferred among equal names; several old nodes on one new node count as merged; an
    old node without an equal name is removed, a new one added. Renames and splits are never
    found.
    """
    by_name: dict[str, list[str]] = defaultdict(list)
    for node in new:
        by_name[fold_text(node.name)].append(node.id)
    target: dict[str, str] = {}
    for node in old:
        same = by_name.get(fold_text(node.name), [])
        if same:
            target[node.id] = node.id if node.id in same else same[0]
    arrivals = Counter(target.values())
    correspondences = []
    for node in old:
        new_id = target.get(node.id)
        if new_id is None:
            correspondences.append(Correspondence(node.id, (), ("removed",), 1.0, "no equal name"))
            continue
        changes = []
        if arrivals[new_id] >= 2:
            changes.append("merged")
        if node.parent != new[new_id].parent:
            changes.append("moved")
        correspondences.append(
            Correspondence(node.id, (new_id,), tuple(changes) or ("unchanged",), 1.0, "equal name")
        )
    reached = set(target.values())
    for node in new:
        if node.id not in reached:
            correspondences.append(
                Correspondence(None, (node.id,), ("added",), 1.0, "no equal name")
            )
    return Crosswalk(old.version, new.version, correspondences)


# -- a change log as the crosswalk ----------------------------------------------------------


def moves_as_is(corr: Correspondence) -> bool:
    """Whether a correspondence may move products with no model look (the evidence is enough).

    Only a one-to-one correspondence the diff is sure of (same meaning, at least :data:`SURE`)
    or one a change log states (a removal's too, when the log names where its products go); the
    node a merge keeps stays where it is. A merge or removal found by the diff alone, a split and
    any correspondence the diff is unsure of are re-scored instead.
    """
    if len(corr.new_ids) != 1 or {"split", "added"} & set(corr.changes):
        return False
    if corr.source == "log":
        return True  # the log says where the products go, a removal's too
    if "removed" in corr.changes:
        return False
    if "merged" in corr.changes and corr.new_ids != (corr.old_id,):
        return False  # a merge the diff found alone; the target that keeps its id stays put
    return corr.confidence >= SURE


class LabelTranslation:
    """Labels written for an older tree, read as nodes of the new one through a crosswalk.

    A label (a node id of the old tree, or its path of names) whose node the crosswalk moves as
    it is (:func:`moves_as_is`: unchanged, or renamed, moved or merged with the evidence to be
    sure) becomes the new node's id. A label whose node was split, removed, or changed in a way
    the crosswalk is unsure of is dropped: its products may now belong to any of several nodes,
    and a wrong label teaches the model wrong. Counts say what happened.

    Attributes:
        old: the tree the labels were written for.
        new: the tree trained on.
        translated: labels read as another id than their own.
        kept: labels of an unchanged node.
        dropped: change kind (``split``, ``removed``, ...) → labels dropped.
    """

    def __init__(self, old: CategoryTree, new: CategoryTree, crosswalk: Crosswalk) -> None:
        self.old = old
        self.new = new
        self.translated = 0
        self.kept = 0
        self.dropped: Counter[str] = Counter()
        self._target: dict[str, str] = {}
        self._kind: dict[str, str] = {}
        for corr in crosswalk.correspondences:
            if corr.old_id is None:
                continue
            if moves_as_is(corr) and corr.new_ids[0] in new:
                self._target[corr.old_id] = corr.new_ids[0]
            else:
                kind = "+".join(corr.changes)
                self._kind[corr.old_id] = kind if corr.confidence >= SURE else f"{kind} (unsure)"
        self._old_path = path_label_reader(old)

    def node(self, label: str) -> str | None:
        """Return the new tree's node for a label of the old tree.

        Returns:
            The new node id; ``""`` when the label's node changed in a way that drops it; None
            when the label names no node of the old tree (the caller reads it as it is).
        """
        old_id = label if label in self.old else self._old_path(label)
        if not old_id:
            return None
        target = self._target.get(old_id)
        if target is None:
            self.dropped[self._kind.get(old_id, "removed")] += 1
            return ""
        if target == old_id:
            self.kept += 1
        else:
            self.translated += 1
        return target

    def to_dict(self) -> dict[str, Any]:
        """Return the counts as JSON-ready values."""
        return {
            "from_version": str(self.old.version),
            "from_file": str(self.old.path or ""),
            "kept": self.kept,
            "translated": self.translated,
            "dropped": dict(self.dropped.most_common()),
        }


def _check_log_trees(old: CategoryTree, new: CategoryTree, log: ChangeLog) -> None:
    """Refuse a change log that does not lead from ``old`` to ``new``.

    Raises:
        TreeError: the versions differ, or replaying the log on ``old`` does not give ``new``.
    """
    shown = log.path
    if (str(log.from_version), str(log.to_version)) != (str(old.version), str(new.version)):
        raise TreeError(
            f"the change log goes from tree {log.from_version} to {log.to_version}, "
            f"not from {old.version} to {new.version}",
            path=shown,
            hint="give the change log written for these two tree versions",
        )
    replayed = apply_changes(old, log.changes, version=str(new.version), path=shown)
    for node in new:
        if node.id not in replayed:
            raise TreeError(
                f"node {node.id} ({node.name}) of tree {new.version} is not made by the log",
                path=shown,
                hint="add the change that creates it to the log",
            )
        made = replayed[node.id]
        if (made.name, made.parent) != (node.name, node.parent):
            raise TreeError(
                f"the log makes node {node.id} '{made.name}' under {made.parent or '-'}, "
                f"tree {new.version} has '{node.name}' under {node.parent or '-'}",
                path=shown,
                hint="the log and the tree files must agree: fix one of them",
            )
    extra = [n.id for n in replayed if n.id not in new]
    if extra:
        raise TreeError(
            f"the log keeps node {extra[0]}, which tree {new.version} does not have",
            path=shown,
            hint="add the change that retires it to the log",
        )


def crosswalk_from_changes(old: CategoryTree, new: CategoryTree, log: ChangeLog) -> Crosswalk:
    """Turn a change log into the crosswalk from ``old`` to ``new`` (the log is the truth).

    Args:
        old: the tree the log starts from.
        new: the tree it leads to.
        log: the change log, as :func:`catmap.tree.changelog.load_change_log` reads it.

    Returns:
        One correspondence per old node (old tree order), then the added nodes; every one has
        source ``log``, confidence 1.0 and the log line as evidence.

    Raises:
        TreeError: the log does not lead from ``old`` to ``new``.
    """
    _check_log_trees(old, new, log)
    kinds: dict[str, list[str]] = defaultdict(list)
    targets: dict[str, tuple[str, ...]] = {}
    lines: dict[str, list[str]] = defaultdict(list)
    added: list[Correspondence] = []

    def note(change: Change) -> str:
        return f"change log line {change.line}" + (f": {change.note}" if change.note else "")

    for change in log.changes:
        if change.kind in ("rename", "move"):
            kinds[change.node_id].append("renamed" if change.kind == "rename" else "moved")
            lines[change.node_id].append(note(change))
        elif change.kind == "split":
            kinds[change.node_id].append("split")
            targets[change.node_id] = tuple(change.targets)
            lines[change.node_id].append(note(change))
        elif change.kind == "merge":
            for source in change.sources:
                kinds[source].append("merged")
                targets[source] = (change.node_id,)
                lines[source].append(note(change))
        elif change.kind == "remove":
            kinds[change.node_id].append("removed")
            home = change.new or next(
                (a.id for a in reversed(old.ancestors(change.node_id)) if a.id in new), None
            )
            targets[change.node_id] = (home,) if home else ()
            lines[change.node_id].append(note(change))
        elif change.kind == "add":
            added.append(
                Correspondence(None, (change.node_id,), ("added",), 1.0, note(change), "log")
            )
    correspondences = []
    for node in old:
        found = kinds.get(node.id)
        if not found:
            correspondences.append(
                Correspondence(node.id, (node.id,), ("unchanged",), 1.0, "same id", "log")
            )
            continue
        order = [k for k in CHANGE_TYPES if k in found]
        correspondences.append(
            Correspondence(
                node.id,
                targets.get(node.id, (node.id,)),
                tuple(order),
                1.0,
                "; ".join(lines[node.id]),
                "log",
            )
        )
    return Crosswalk(old.version, new.version, correspondences + added)


def _same_correspondence(a: Correspondence, b: Correspondence) -> bool:
    return set(a.new_ids) == set(b.new_ids) and set(a.changes) == set(b.changes)


def reconcile(computed: Crosswalk, logged: Crosswalk) -> Crosswalk:
    """The log's crosswalk, each line saying whether the computed one confirms or differs.

    An explicit change log is the crosswalk; what the diff computed is only a suggestion, kept
    in the evidence where the log overrides it.

    Returns:
        The log's correspondences, their evidence ending in ``diff agrees`` or
        ``diff suggested ...``.
    """
    by_old = {c.old_id: c for c in computed.correspondences if c.old_id is not None}
    added = {c.new_ids: c for c in computed.correspondences if c.old_id is None}
    result = []
    for corr in logged.correspondences:
        suggestion = by_old.get(corr.old_id) if corr.old_id is not None else added.get(corr.new_ids)
        if suggestion is not None and _same_correspondence(corr, suggestion):
            verdict = "diff agrees"
        elif suggestion is None:
            verdict = "diff did not find it"
        else:
            verdict = (
                f"diff suggested {'+'.join(suggestion.changes)} -> "
                f"{','.join(suggestion.new_ids) or '-'} ({suggestion.confidence:.2f}), overridden"
            )
        if corr.changes == ("unchanged",) and verdict == "diff agrees":
            result.append(corr)
            continue
        result.append(
            Correspondence(
                corr.old_id,
                corr.new_ids,
                corr.changes,
                corr.confidence,
                f"{corr.evidence}; {verdict}",
                "log",
            )
        )
    return Crosswalk(logged.old_version, logged.new_version, result)


def overridden(crosswalk: Crosswalk) -> list[Correspondence]:
    """Return the log's correspondences where the computed crosswalk said otherwise."""
    return [c for c in crosswalk.correspondences if c.evidence.endswith(", overridden")]


# -- evaluation -----------------------------------------------------------------------------

_Item = tuple[str, str | None, frozenset[str]]  # change type, old id, new ids


def _items_of(corr: Correspondence) -> list[_Item]:
    items: list[_Item] = []
    for kind in corr.changes:
        if kind == "unchanged":
            continue
        if kind == "removed":
            items.append((kind, corr.old_id, frozenset()))  # where products go is not judged
        elif kind == "added":
            items.append((kind, None, frozenset(corr.new_ids)))
        else:
            items.append((kind, corr.old_id, frozenset(corr.new_ids)))
    return items


def reference_items(changes: Sequence[Change]) -> list[_Item]:
    """Turn a change log into the reference correspondences the diff should find."""
    items: list[_Item] = []
    for change in changes:
        if change.kind == "rename":
            items.append(("renamed", change.node_id, frozenset({change.node_id})))
        elif change.kind == "move":
            items.append(("moved", change.node_id, frozenset({change.node_id})))
        elif change.kind == "split":
            items.append(("split", change.node_id, frozenset(change.targets)))
        elif change.kind == "merge":
            for source in change.sources:
                items.append(("merged", source, frozenset({change.node_id})))
        elif change.kind == "add":
            items.append(("added", None, frozenset({change.node_id})))
        elif change.kind == "remove":
            items.append(("removed", change.node_id, frozenset()))
    return items


def _prf(found: set[_Item], reference: set[_Item]) -> dict[str, float | int]:
    right = len(found & reference)
    precision = right / len(found) if found else 1.0
    recall = right / len(reference) if reference else 1.0
    f1 = 2 * precision * recall / (precision + recall) if precision + recall else 0.0
    return {
        "found": len(found),
        "reference": len(reference),
        "correct": right,
        "precision": round(precision, 4),
        "recall": round(recall, 4),
        "f1": round(f1, 4),
    }


def score_against_changelog(
    crosswalk: Crosswalk,
    changes: Sequence[Change],
    *,
    old: CategoryTree | None = None,
    new: CategoryTree | None = None,
) -> dict[str, Any]:
    """Score a crosswalk against a change log taken as the reference alignment.

    A correspondence counts as correct when its change type, old id and new ids all agree with
    the log (for a removal, only the old id). Precision, recall and F1 are given per change
    type and over all correspondences, as ontology alignment evaluations report them. With both
    trees given, recall is also given on the non-trivial correspondences: those whose old and
    new names differ.

    Args:
        crosswalk: what a diff found.
        changes: the change log.
        old: the old tree (for the non-trivial recall).
        new: the new tree (for the non-trivial recall).

    Returns:
        ``{"per_type": {type: {found, reference, correct, precision, recall, f1}},
        "overall": {...}, "non_trivial": {...} or None}``.
    """
    found = {item for corr in crosswalk.correspondences for item in _items_of(corr)}
    reference = set(reference_items(changes))
    per_type = {
        kind: _prf({i for i in found if i[0] == kind}, {i for i in reference if i[0] == kind})
        for kind in CHANGE_TYPES
        if kind != "unchanged"
    }
    non_trivial: dict[str, float | int] | None = None
    if old is not None and new is not None:

        def differs(item: _Item) -> bool:
            kind, old_id, new_ids = item
            if old_id is None or not new_ids or old_id not in old:
                return False
            before = fold_text(old[old_id].name)
            return any(n in new and fold_text(new[n].name) != before for n in new_ids)

        hard = {i for i in reference if differs(i)}
        right = len(hard & found)
        non_trivial = {
            "reference": len(hard),
            "correct": right,
            "recall": round(right / len(hard), 4) if hard else 1.0,
        }
    return {"per_type": per_type, "overall": _prf(found, reference), "non_trivial": non_trivial}


# -- the crosswalk file ---------------------------------------------------------------------


def save_crosswalk(crosswalk: Crosswalk, path: str | Path) -> None:
    """Write a crosswalk as tab-separated text with a header comment.

    The file starts with ``@crosswalk OLD -> NEW``, comment lines (``#``) describing the
    columns, then a header row and one row per correspondence: old_id (``-`` for an added
    node), new_ids (comma-separated, ``-`` for none), change (types joined by ``+``),
    confidence (0..1) and evidence.
    """
    with atomic_open(path, "w", encoding="utf-8", newline="") as handle:
        handle.write(f"{_HEADER} {crosswalk.old_version} -> {crosswalk.new_version}\n")
        handle.write("# catmap crosswalk: where each old node's products go in the new tree.\n")
        handle.write("# old_id '-' = a node added in the new tree; new_ids '-' = nowhere;\n")
        handle.write("# change: " + ", ".join(CHANGE_TYPES) + " (joined by '+');")
        handle.write(" confidence 0..1.\n")
        writer = csv.writer(handle, delimiter="\t", lineterminator="\n")
        writer.writerow(_COLUMNS)
        for corr in crosswalk.correspondences:
            writer.writerow(
                [
                    corr.old_id or "-",
                    ",".join(corr.new_ids) or "-",
                    "+".join(corr.changes),
                    f"{corr.confidence:.3f}",
                    # Free text (node names): neutralised, a spreadsheet may open the file.
                    neutralise_cell(corr.evidence.replace("\t", " ").replace("\n", " ")),
                ]
            )


def load_crosswalk(path: str | Path) -> Crosswalk:
    """Read a crosswalk written by :func:`save_crosswalk` (or by hand in the same format).

    Raises:
        InputError: the file is missing or a row is malformed; the error names the line.
    """
    shown = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise InputError("crosswalk file not found", path=shown) from None
    except (OSError, UnicodeDecodeError) as error:
        raise InputError(f"cannot read the crosswalk: {error}", path=shown) from None
    hint = "see catmap.tree.diff.save_crosswalk for the format"

    def fail(message: str, line: int) -> InputError:
        return InputError(message, path=shown, line=line, hint=hint)

    versions: tuple[str, str] | None = None
    header_seen = False
    correspondences: list[Correspondence] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        if not raw.strip() or raw.startswith("#"):
            continue
        if raw.startswith("@"):
            keyword, _, value = raw.strip().partition(" ")
            left, arrow, right = (p.strip() for p in value.partition("->"))
            if keyword != _HEADER or not arrow or not left or not right:
                raise fail(f"bad header '{raw.strip()}' (expected '{_HEADER} OLD -> NEW')", number)
            versions = (left, right)
            continue
        cells = raw.split("\t")
        if not header_seen:
            if tuple(c.strip() for c in cells) != _COLUMNS:
                raise fail(f"expected the header row {' '.join(_COLUMNS)}", number)
            header_seen = True
            continue
        if len(cells) != len(_COLUMNS):
            raise fail(f"expected {len(_COLUMNS)} tab-separated cells, found {len(cells)}", number)
        old_id, new_ids, change, confidence, evidence = (c.strip() for c in cells)
        kinds = tuple(change.split("+"))
        unknown = [k for k in kinds if k not in CHANGE_TYPES]
        if unknown:
            raise fail(f"unknown change '{unknown[0]}' (one of {', '.join(CHANGE_TYPES)})", number)
        try:
            certainty = float(confidence)
        except ValueError:
            raise fail(f"confidence '{confidence}' is not a number", number) from None
        if not 0.0 <= certainty <= 1.0:
            raise fail(f"confidence {certainty} is outside 0..1", number)
        ids = () if new_ids == "-" else tuple(p.strip() for p in new_ids.split(","))
        correspondences.append(
            Correspondence(
                None if old_id == "-" else old_id, ids, kinds, certainty, restore_cell(evidence)
            )
        )
    if versions is None:
        raise fail(f"missing header '{_HEADER} OLD -> NEW'", 1)
    return Crosswalk(versions[0], versions[1], correspondences)
