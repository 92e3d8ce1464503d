"""Retailer-category consensus: where the model puts the products of each retailer path.

For each distinct retailer category path of a feed, the share of its products the model (or a
rule) puts in each node. A path whose products mostly land in one node is strong evidence for
its other products: their probabilities are blended with the path's share vector (a second
pass), for paths with at least :data:`MIN_PRODUCTS` products.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass

__all__ = ["MIN_PRODUCTS", "PathConsensus", "PathCounts", "path_consensus"]

MIN_PRODUCTS = 5


@dataclass(frozen=True, slots=True)
class PathConsensus:
    """The products of one retailer path and the nodes they were put in.

    Attributes:
        path: the retailer category path (levels joined by " > ").
        count: its number of products.
        shares: node id -> share of the path's products, all nodes, largest first.
    """

    path: str
    count: int
    shares: dict[str, float]

    def top(self, n: int = 3) -> list[tuple[str, float]]:
        """Return the n largest (node id, share) pairs."""
        return list(self.shares.items())[:n]


class PathCounts:
    """Products per (retailer path, predicted node), counted as a feed streams by.

    Its size grows with the feed's distinct paths and the nodes each path's products go to,
    never with the number of products (a list of one pair per product did: ~160 bytes each).
    """

    def __init__(self) -> None:
        self.counts: dict[str, Counter[str]] = {}

    def add(self, pairs: Iterable[tuple[str, str]]) -> None:
        """Count (retailer path, predicted node id) pairs; empty paths are skipped."""
        counts = self.counts
        for path, node in pairs:
            if path:
                counter = counts.get(path)
                if counter is None:
                    counter = counts[path] = Counter()
                counter[node] += 1

    def consensus(self) -> dict[str, PathConsensus]:
        """Return path -> its consensus, paths with most products first."""
        result = {}
        ordered = sorted(self.counts.items(), key=lambda item: (-item[1].total(), item[0]))
        for path, counter in ordered:
            total = counter.total()
            shares = {node: count / total for node, count in counter.most_common()}
            result[path] = PathConsensus(path, total, shares)
        return result


def path_consensus(pairs: Iterable[tuple[str, str]]) -> dict[str, PathConsensus]:
    """Count, per retailer path, the share of its products in each predicted node.

    Args:
        pairs: (retailer path, predicted node id) per product; empty paths are skipped.

    Returns:
        path -> its consensus, paths with most products first.
    """
    counts = PathCounts()
    counts.add(pairs)
    return counts.consensus()
