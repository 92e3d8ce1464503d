"""Map a chunk of products as onboarding does: rules first, then the model with retailer-path
consensus and hierarchical back-off; and the score a mapping is compared with the accept
threshold by."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from catmap.classify.backoff import NodeIndex, backoff_rows
from catmap.classify.features import product_texts
from catmap.classify.model import CategoryModel
from catmap.classify.rules import RuleSet
from catmap.classify.training import consensus_blend
from catmap.records import Alternative, Mapping, Product
from catmap.tree.taxonomy import CategoryTree

# Products mapped together: retailer-path consensus is computed inside one chunk, so a chunk
# should hold a whole feed of usual size (the demo feeds have a few thousand products).
CHUNK_SIZE = 20_000
DEFAULT_BACKOFF_THRESHOLD = 0.5
ALTERNATIVES = 3


class FeedMapper:
    """Map products to nodes: rules first, then the model with consensus and back-off.

    Args:
        model: a trained model.
        manifest: its manifest (the consensus weight is read from it).
        tree: the category tree.
        rules: per-feed rules applied before the model (None: no rules).
        backoff_threshold: a best leaf below this climbs to the deepest node reaching it.
    """

    def __init__(
        self,
        model: CategoryModel,
        manifest: dict[str, Any],
        tree: CategoryTree,
        *,
        rules: RuleSet | None = None,
        backoff_threshold: float = DEFAULT_BACKOFF_THRESHOLD,
    ) -> None:
        self.model = model
        self.tree = tree
        self.rules = rules
        self.backoff_threshold = backoff_threshold
        self.consensus_weight = float(manifest.get("consensus_weight", 0.0))
        self.classes: list[str] = [str(c) for c in model.classes_.tolist()]
        self.index = NodeIndex(tree, self.classes)

    def map(self, products: Sequence[Product]) -> list[Mapping]:
        """Return one mapping per product, in order."""
        if not products:
            return []
        texts = product_texts(products)
        probabilities = self.model.predict_proba(texts)
        probabilities = consensus_blend(probabilities, texts.path, self.consensus_weight)
        best_class, chosen, chosen_p, backed = backoff_rows(
            probabilities, self.index, self.backoff_threshold
        )
        width = min(ALTERNATIVES + 1, probabilities.shape[1])
        top = np.argsort(-probabilities, axis=1)[:, :width]
        result: list[Mapping] = []
        for row, product in enumerate(products):
            matched = self.rules.match(product) if self.rules is not None else None
            if matched is not None:
                result.append(Mapping(matched.rule.node_id, 1.0, "rule", (), matched.reason))
                continue
            leaf = self.classes[int(best_class[row])]
            alternatives = tuple(
                Alternative(self.classes[int(c)], float(probabilities[row, c]))
                for c in top[row]
                if int(c) != int(best_class[row])
            )[:ALTERNATIVES]
            if backed[row]:
                node_id = self.index.nodes[int(chosen[row])]
                result.append(
                    Mapping(
                        node_id,
                        float(min(1.0, chosen_p[row])),
                        "backoff",
                        (Alternative(leaf, float(probabilities[row, best_class[row]])),)
                        + alternatives[: ALTERNATIVES - 1],
                        f"backed off from {leaf}",
                    )
                )
            else:
                result.append(
                    Mapping(leaf, float(min(1.0, chosen_p[row])), "model", alternatives)
                )
        return result


def acceptance_score(mapping: Mapping) -> float:
    """Return the score compared with the accept threshold.

    A rule is the team's own decision (always accepted); a backed-off mapping names an inner
    node, which is not a finished mapping, so it is never auto-accepted (score 0).
    """
    if mapping.method == "rule":
        return 1.0
    if mapping.method == "backoff":
        return 0.0
    return mapping.confidence

