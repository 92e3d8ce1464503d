"""Scoring products on the new tree during a remap, and the attributes that follow a product
to its new node."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from catmap.attributes import AttributeExtractor, BrandDictionary
from catmap.attributes.restriction import node_context
from catmap.classify.calibration import softmax
from catmap.classify.features import product_texts
from catmap.classify.keywords import DEFAULT_TEMPERATURE, KeywordMapper
from catmap.classify.model import CategoryModel
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree

# Weight of an old-tree model next to the keywords on split targets that keep an old id.
OLD_MODEL_WEIGHT = 0.5


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
# restriction keywords of the text are read), and the flags whose general keywords its context
# silences (a kitchen node's "knife").
_NodeFacts = tuple[frozenset[str], frozenset[str], str, bool, frozenset[str]]


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
                    tree.who(node_id), tree.ages(node_id), *node_context(tree, node_id)
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
