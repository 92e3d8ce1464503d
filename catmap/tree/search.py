"""Fuzzy multilingual search over the category tree's node names and terms.

Every node's display name and its terms in every language are folded (case, accents,
punctuation) into one :class:`TermIndex`; a query is folded the same way and scored against all
terms at once. :meth:`catmap.tree.taxonomy.CategoryTree.search_matches` is the entry point.

Example:
    >>> fold_text("Vêtements  d'Été")
    'vetements d ete'
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    import numpy as np

    from catmap.tree.treefile import Node

__all__ = ["SearchMatch", "TermIndex", "fold_text"]


@dataclass(frozen=True, slots=True)
class SearchMatch:
    """One result of :meth:`CategoryTree.search_matches`.

    Attributes:
        node: the node found.
        score: similarity 0..100 of its best term to the query.
        term: that best term, as written in the tree file.
        language: the term's language ("en" for the node name).
        is_name: True when the best term is the node's display name.
    """

    node: Node
    score: float
    term: str
    language: str
    is_name: bool


# Letters that Unicode decomposition leaves alone but a shopper types without the mark.
_FOLD_EXTRA = str.maketrans({"ø": "o", "æ": "ae", "œ": "oe", "ł": "l", "đ": "d", "ð": "d"})
_NON_WORD = re.compile(r"[\W_]+")


def fold_text(text: str) -> str:
    """Fold text for matching: case-folded, accents removed, punctuation turned into spaces.

    Args:
        text: any text.

    Returns:
        The folded text, words separated by single spaces.

    Example:
        >>> fold_text("Vêtements  d'Été")
        'vetements d ete'
    """
    folded = unicodedata.normalize("NFKD", text.casefold())
    folded = "".join(c for c in folded if not unicodedata.combining(c)).translate(_FOLD_EXTRA)
    return _NON_WORD.sub(" ", folded).strip()


class TermIndex:
    """The folded names and terms of a tree's nodes, scored together against a query.

    Args:
        nodes: the nodes in the tree's order; a node's position is its rank, and on equal
            scores the lower rank comes first.
    """

    def __init__(self, nodes: Sequence[Node]) -> None:
        # numpy is imported on first search, so that commands that only look nodes up start
        # faster.
        import numpy as np

        choices: list[str] = []
        owners: list[tuple[Node, str, str, bool]] = []  # node, term, language, is name
        ranks: list[int] = []
        for rank, node in enumerate(nodes):
            seen: set[str] = set()
            candidates = [(node.name, "en", True)] + [
                (term, code, False) for code, words in node.terms.items() for term in words
            ]
            for term, code, is_name in candidates:
                folded = fold_text(term)
                if folded and folded not in seen:
                    seen.add(folded)
                    choices.append(folded)
                    owners.append((node, term, code, is_name))
                    ranks.append(rank)
        self._choices = choices
        self._owners = owners
        self._node_count = len(nodes)
        self._lengths = np.fromiter((len(c) for c in choices), dtype=np.int32, count=len(choices))
        self._node_rank = np.fromiter(ranks, dtype=np.int32, count=len(ranks))

    def matches(
        self,
        query: str,
        *,
        limit: int,
        min_score: float = 0.0,
        within: Sequence[int] | None = None,
    ) -> list[SearchMatch]:
        """Rank the nodes by their best term's similarity to a folded query.

        Args:
            query: the query, already folded with :func:`fold_text` (not empty).
            limit: at most this many nodes.
            min_score: leave out nodes scoring below this (nodes scoring 0 are always left out).
            within: only the nodes at these ranks; None for all.

        Returns:
            Matches, best first; on equal scores the term closest to the whole query first, then
            rank.
        """
        import numpy as np

        scores, whole = _score_terms(query, self._choices, self._lengths)
        keep = scores >= max(min_score, 0.05)
        if within is not None:
            inside = np.zeros(self._node_count, dtype=bool)
            inside[list(within)] = True
            keep &= inside[self._node_rank]
        candidates = np.flatnonzero(keep)
        # Best score first; ties (frequent: a term whose words all occur in the query scores 95)
        # go to the term most like the whole query, then to file order (terms are indexed in
        # file order, so the position breaks the last tie).
        ranked = candidates[np.lexsort((candidates, -whole[candidates], -scores[candidates]))]
        matches: list[SearchMatch] = []
        seen: set[str] = set()
        for position in ranked.tolist():
            node, term, code, is_name = self._owners[position]
            if node.id in seen:
                continue
            seen.add(node.id)
            matches.append(SearchMatch(node, float(scores[position]), term, code, is_name))
            if len(matches) == limit:
                break
        return matches


# Weights of the three similarity measures. Whole-term similarity counts fully; a term whose
# words all appear in the query (or the reverse) a little less, so that an exact term still
# ranks first; a query typed as the start or a piece of a longer term less again. These are
# tuning choices (common practice, no source), checked by the search tests.
_TOKEN_SET_WEIGHT = 0.95
_PARTIAL_WEIGHT = 0.8
_PARTIAL_MIN_LENGTH = 4


def _score_terms(query: str, choices: list[str], lengths: np.ndarray[Any, Any]) -> tuple[Any, Any]:
    """Score a folded query against every folded term at once.

    rapidfuzz's ``cdist`` runs each measure over all terms in C. Partial matching is only used
    for queries of four characters or more and only when the query is the shorter string, so
    that a short term hidden inside a long query ("te" in "vetements") does not score high.

    Returns:
        Two arrays of 0..100: the score, and the plain whole-string similarity used to break
        ties.
    """
    import numpy as np
    from rapidfuzz import fuzz, process

    if not choices:
        return np.zeros(0), np.zeros(0)
    whole = process.cdist([query], choices, scorer=fuzz.ratio, dtype=np.float32)[0]
    tokens = process.cdist([query], choices, scorer=fuzz.token_set_ratio, dtype=np.float32)[0]
    scores = np.maximum(whole, tokens * _TOKEN_SET_WEIGHT)
    if len(query) >= _PARTIAL_MIN_LENGTH:
        partial = process.cdist([query], choices, scorer=fuzz.partial_ratio, dtype=np.float32)[0]
        partial[lengths < len(query)] = 0
        scores = np.maximum(scores, partial * _PARTIAL_WEIGHT)
    return np.round(scores.astype(np.float64), 1), whole
