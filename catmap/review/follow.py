"""The attributes that follow a product to the node a reviewer chose for it.

A product's node decides its restriction flag (``tree.restriction(node)``, or the restriction
keywords where the node is too generic to say) and whether gender and age apply at all. When a
reviewer moves a product to another node (an alternative, a search pick, a group decision, a
spreadsheet row), these must follow the new node, as they do when a remap moves it: a product
moved under a restricted node gets the flag, one moved out loses it.

Who and age are read again for the new node, except on a mapping a person already reviewed,
where the person's values stay; either way they become ``not_applicable`` where the new node
says gender or age does not apply. A reviewer's explicit who / age, given with the decision,
is kept where it applies (:func:`reviewer_values`).

The store has no tree, so the callers (:class:`catmap.review.ReviewSession`,
:func:`catmap.jobs.decisions.import_decisions`) compute these and hand them to
:meth:`catmap.store.Store.decide` / :meth:`~catmap.store.Store.accept_group`.
"""

from __future__ import annotations

from catmap.attributes import AttributeExtractor, BrandDictionary
from catmap.records import Product
from catmap.store import NodeAttributes, NodeAttributesFor, StoredMapping
from catmap.tree.taxonomy import CategoryTree

__all__ = ["NodeFollower", "reviewer_values"]

NOT_APPLICABLE = "not_applicable"


class NodeFollower:
    """Read the node-decided attributes of products moved to nodes of one tree.

    Args:
        tree: the category tree the chosen node ids belong to.
        extractor: the attribute extractor on ``tree`` (default: one with no brand dictionary;
            give the project's so that a brand's name is not read as an audience).
    """

    def __init__(self, tree: CategoryTree, *, extractor: AttributeExtractor | None = None) -> None:
        if extractor is not None and (
            extractor.tree is None or str(extractor.tree.version) != str(tree.version)
        ):
            raise ValueError("the extractor must work on the same tree")
        self.tree = tree
        self.extractor = extractor or AttributeExtractor(brands=BrandDictionary([]), tree=tree)

    def node_attributes(
        self, product: Product, stored: StoredMapping, node_id: str
    ) -> NodeAttributes:
        """Return the restriction flag and who / age of ``product`` on ``node_id``.

        Raises:
            UnknownNode: ``node_id`` is not in the tree.
        """
        self.tree[node_id]
        extracted = self.extractor.extract(product, node_id)
        if stored.status == "reviewed":
            who, age = stored.attributes.who, stored.attributes.age
        else:
            who, age = extracted.who, extracted.age
        if not self.tree.who(node_id):
            who = NOT_APPLICABLE
        if not self.tree.ages(node_id):
            age = NOT_APPLICABLE
        return NodeAttributes(restriction=extracted.restriction, who=who, age=age)

    def for_node(self, node_id: str) -> NodeAttributesFor:
        """Return the reader :meth:`catmap.store.Store.accept_group` calls for each product."""
        self.tree[node_id]

        def read(product: Product, stored: StoredMapping) -> NodeAttributes:
            return self.node_attributes(product, stored, node_id)

        return read

    def reviewer_values(
        self, node_id: str, who: str | None, age: str | None
    ) -> tuple[str | None, str | None]:
        """See :func:`reviewer_values`."""
        return reviewer_values(self.tree, node_id, who, age)


def reviewer_values(
    tree: CategoryTree, node_id: str, who: str | None, age: str | None
) -> tuple[str | None, str | None]:
    """Return a reviewer's who / age corrections as they apply on ``node_id``.

    A correction is kept where the node says gender (age) applies, and becomes
    ``not_applicable`` where it does not; None (no correction) stays None.
    """
    if who is not None and not tree.who(node_id):
        who = NOT_APPLICABLE
    if age is not None and not tree.ages(node_id):
        age = NOT_APPLICABLE
    return who, age
