"""Multilingual search over the category tree's node names and terms, word by word.

Every node's display name and its terms in every language are folded (case, accents,
punctuation) into one :class:`TermIndex`. A query is folded the same way and split into words;
each typed word is matched against the words of the tree (exactly, as the start of a longer word,
as a plural or inflected form of a shorter one, with a typing mistake, or inside a compound), and
a node ranks by how well **all** the typed words are found among its own words, in one term if
possible, with its ancestors' words counting for less. So "bande dess" finds "bande dessinée"
(Comics) before "bande" alone (Bandages), and "casque velo" finds the bike helmet whose words
are both there. A query whose words match nothing falls back to whole-term fuzzy similarity,
scored low: distant guesses. :meth:`catmap.tree.taxonomy.CategoryTree.search_matches` is the
entry point.

Example:
    >>> fold_text("Vêtements  d'Été")
    'vetements d ete'
"""

from __future__ import annotations

import bisect
import re
import unicodedata
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    import numpy as np

    from catmap.tree.treefile import Node

__all__ = ["SearchMatch", "TermIndex", "fold_text", "word_similarity"]


@dataclass(frozen=True, slots=True)
class SearchMatch:
    """One result of :meth:`CategoryTree.search_matches`.

    Attributes:
        node: the node found.
        score: how well the node matches the query, 0..100: 100 when every typed word is a
            whole word of one of its terms; a word only begun, misspelt, or found only among
            the ancestors' words counts for less; a word found nowhere for nothing. A node
            none of whose words match (found by whole-term fuzzy similarity, a distant guess)
            scores 50 at most.
        term: the node's term that matched best, as written in the tree file.
        language: the term's language; for the node name, that of a term written as the name
            (a tree made from Spanish paths names its nodes in Spanish), else "en".
        is_name: True when the best term is the node's display name.
    """

    node: Node
    score: float
    term: str
    language: str
    is_name: bool


# Letters that Unicode decomposition leaves alone but a shopper types without the mark.
_FOLD_EXTRA = str.maketrans({"ø": "o", "æ": "ae", "œ": "oe", "ł": "l", "đ": "d", "ð": "d"})
# German umlauts as typed on a keyboard without them: "Handyhuelle" for "Handyhülle".
_UMLAUT_SPELLED = str.maketrans({"ä": "ae", "ö": "oe", "ü": "ue", "Ä": "Ae", "Ö": "Oe", "Ü": "Ue"})
_NON_WORD = re.compile(r"[\W_]+")


def _name_language(node: Node) -> str:
    """The language of a node's name: that of a term written as the name, else "en".

    The shared trees name their nodes in English; a tree of one's own may name them in its
    language (``catmap tree from-paths --language es`` writes each name into that cell too).
    """
    name = fold_text(node.name)
    for code, words in node.terms.items():
        if any(fold_text(word) == name for word in words):
            return code
    return "en"


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


# Small words that join the words of a term in the tree's languages ("robe de mariée", "sac à
# dos", "men's"). A typed one counts for _STOP_WEIGHT of a word (all of one when the query has
# nothing else): a term need not contain it, but one that does ("vitamin d") is found first.
# Other typed words never match them.
STOP_WORDS = frozenset(
    "a an and the of for with in on to s "  # en
    "de du des d l la le les et au aux en un une "  # fr ("sans" is kept: it changes the thing)
    "und mit der die das den dem "  # de
    "y e del el los las con"  # es ("sin" is kept, as "sans")
    .split()
)  # fmt: skip
_STOP_WEIGHT = 0.25
# A typed word no word of the tree resembles ("dry" in "dry cider" where the tree only knows
# "cider") tells no node from another: it counts for this much of a word, so that the node
# holding the other words still matches well, a little below one holding them all.
_UNKNOWN_WEIGHT = 0.25

# How much one typed word is worth against one word of the tree, 0..1. Chosen by hand and
# checked on the labelled queries of tests/data/search_checks.txt (see
# benchmarks/eval_tree_search.py); the order matters more than the values: a whole word, then a
# plural or inflection, then a word begun or misspelt, then a piece of a compound.
_EXACT = 1.0
_EXACT_ONE_LETTER = 0.6  # "b" alone is the start of many words more than the word "b"
# A plural or inflected form of a tree word, typed longer: "boots" for "boot", "chapeaux" for
# "chapeau", "Kleider" for "Kleid". Only these endings (en, fr, de, es), only on a tree word of
# _INFLECTED_MIN_LENGTH letters or more, never on a small joining word ("dess" is not "des"+s).
_INFLECTED = 0.9
_INFLECTED_ENDINGS = ("s", "es", "x", "e", "n", "en", "er")
_INFLECTED_MIN_LENGTH = 3
# A word begun: 0.45 plus up to 0.5 for how much of it was typed ("dess" of "dessinee": 0.7).
# One or two letters say little, whatever the word: they score lower.
_PREFIX_BASE, _PREFIX_SPAN = 0.45, 0.5
_SHORT_PREFIX_BASE, _SHORT_PREFIX_SPAN, _SHORT_PREFIX = 0.3, 0.3, 2
# Typing mistakes (insertion, deletion, substitution, swap of two neighbours) are forgiven in
# longer words only: one from 5 letters, two from 8. Short words have too many neighbours. A
# whole word with mistakes scores _TYPO_WHOLE times the share of its letters right ("sweatr"
# for "sweater": 0.73); a word begun with mistakes its prefix score less _TYPO_PREFIX_COST per
# mistake. A typed word that begins some word of the tree as typed is more likely unfinished
# than misspelt ("kaffeem" begins "kaffeemaschine", it is not "kaffee" mistyped): its typo
# scores count _TYPO_WHEN_BEGUN of their worth.
_TYPO_ONE, _TYPO_TWO = 5, 8
_TYPO_WHOLE = 0.85
_TYPO_PREFIX_COST = 0.15
_TYPO_WHEN_BEGUN = 0.7
# A typed word inside a longer one ("schirm" in "sonnenschirm"), from 4 letters: less than a
# word begun with as many letters.
_INFIX_MIN = 4
_INFIX_BASE, _INFIX_SPAN = 0.4, 0.4
# A compound typed whole whose last part is a word of the tree ("Damenstiefel" for "Stiefel",
# "raincoat" for "coat": the head of a compound comes last), that word of 5 letters or more. It
# scores like a piece of a compound, by how much of the typed word the tree word is.
_HEAD_MIN = 5

# How a node's score (0..100) is made of its word matches: mostly the mean over the typed words
# of the best match among the node's words (an ancestor's word counting _ANCESTOR_WEIGHT of
# its worth), and a part for the single term of the node that holds the typed words best (all
# of them in one term, and that term covered, scores highest: "bande dessinée" over "bande").
_ANCESTOR_WEIGHT = 0.7
_COVERAGE_SHARE = 0.75
_TERM_SHARE = 0.25
_TERM_COMPLETENESS = 0.4  # of the term's part, how much rides on the term being fully typed
# A node only found by whole-term fuzzy similarity scores that similarity times this, 50 at
# most. It is only worked out when no node scores _FALLBACK_BELOW by its words.
_FALLBACK_WEIGHT = 0.5
_FALLBACK_BELOW = 50.0


def word_similarity(typed: str, word: str) -> float:
    """How well one typed (folded) word matches one folded word of the tree, 0..1.

    The same rules as the search, for one pair: see the constants above.

    Example:
        >>> word_similarity("dess", "dessinee")
        0.7
    """
    return round(float(_similarities(typed, _Vocabulary([word]))[0]), 3)


class _Vocabulary:
    """The distinct folded words of the tree, with what the word matching needs of them."""

    def __init__(self, words: Sequence[str]) -> None:
        import numpy as np

        self.words = list(words)
        self.index = {word: i for i, word in enumerate(self.words)}
        self.lengths = np.fromiter((len(w) for w in self.words), np.float32, len(self.words))
        self.stop = np.fromiter((w in STOP_WORDS for w in self.words), bool, len(self.words))
        self._cut: dict[int, list[str]] = {}
        # Sorted, the words that begin with some letters are one run (found by bisection).
        order = sorted(range(len(self.words)), key=self.words.__getitem__)
        self._sorted = [self.words[i] for i in order]
        self._sorted_index = np.asarray(order, dtype=np.int64)
        # All the words in one text, one a line, to find a piece of a word with one C search.
        self._text = "\n".join(self.words)
        self._starts = np.cumsum([0] + [len(w) + 1 for w in self.words[:-1]], dtype=np.int64)

    def beginning_with(self, letters: str) -> np.ndarray[Any, Any]:
        """Positions of the words that begin with ``letters`` (the word itself included)."""
        first = bisect.bisect_left(self._sorted, letters)
        last = bisect.bisect_left(self._sorted, letters + "\U0010ffff")
        return self._sorted_index[first:last]

    def containing(self, letters: str) -> np.ndarray[Any, Any]:
        """Positions of the words that hold ``letters`` anywhere (no line break in them)."""
        import numpy as np

        found = [m.start() for m in re.finditer(re.escape(letters), self._text)]
        return np.unique(np.searchsorted(self._starts, found, side="right") - 1)

    def cut(self, length: int) -> list[str]:
        """Every word cut to its first ``length`` letters (kept for the next query)."""
        if length not in self._cut:
            self._cut[length] = [w[:length] for w in self.words]
        return self._cut[length]


def _similarities(
    typed: str, vocabulary: _Vocabulary, *, pieces: bool = True
) -> np.ndarray[Any, Any]:
    """Score one typed word against every word of the vocabulary at once (0..1 each).

    With ``pieces`` False, a piece of a compound does not count (the typed word inside a tree
    word, or a tree word ending it): for the typed words written together, where the last word
    alone would end the whole ("parfum femme" is not a compound ending in "femme").
    """
    import numpy as np
    from rapidfuzz import process
    from rapidfuzz.distance import OSA

    words, lengths = vocabulary.words, vocabulary.lengths
    size = len(typed)
    scores = np.zeros(len(words), dtype=np.float32)
    if not words or not typed:
        return scores
    if pieces and size >= _INFIX_MIN:
        inside = vocabulary.containing(typed)
        scores[inside] = _INFIX_BASE + _INFIX_SPAN * size / lengths[inside]
    for cut in range(1, size - _HEAD_MIN + 1 if pieces else 1):
        position = vocabulary.index.get(typed[cut:])
        if position is not None:
            scores[position] = _INFIX_BASE + _INFIX_SPAN * (size - cut) / size
    begun = vocabulary.beginning_with(typed)
    if size > _SHORT_PREFIX:
        scores[begun] = _PREFIX_BASE + _PREFIX_SPAN * size / lengths[begun]
    else:
        scores[begun] = _SHORT_PREFIX_BASE + _SHORT_PREFIX_SPAN * size / lengths[begun]
    if size >= _TYPO_ONE:
        allowed = 1 if size < _TYPO_TWO else 2
        typos = np.zeros_like(scores)
        whole = process.cdist([typed], words, scorer=OSA.distance, score_cutoff=allowed)[0]
        near = (whole > 0) & (whole <= allowed)
        longest = np.maximum(lengths[near], size)
        typos[near] = _TYPO_WHOLE * (1 - whole[near] / longest)
        # A word begun with a mistake: the typed word against each word's start, cut to the
        # typed length and one letter either side (a letter left out or doubled).
        for cut in (size - 1, size, size + 1):
            start = process.cdist([typed], vocabulary.cut(cut), scorer=OSA.distance,
                                  score_cutoff=allowed)[0]  # fmt: skip
            near = (start > 0) & (start <= allowed) & (lengths > cut)
            begun_score = _PREFIX_BASE + _PREFIX_SPAN * min(size, cut) / lengths[near]
            typos[near] = np.maximum(typos[near], begun_score - _TYPO_PREFIX_COST * start[near])
        if (~vocabulary.stop[begun]).any():
            typos *= _TYPO_WHEN_BEGUN
        scores = np.maximum(scores, typos)
    for ending in _INFLECTED_ENDINGS:
        stem = typed[: -len(ending)]
        if not typed.endswith(ending) or len(stem) < _INFLECTED_MIN_LENGTH or stem in STOP_WORDS:
            continue
        position = vocabulary.index.get(stem)
        if position is not None:
            scores[position] = max(scores[position], _INFLECTED)
    position = vocabulary.index.get(typed)
    if position is not None:
        scores[position] = _EXACT if size > 1 else _EXACT_ONE_LETTER
    return scores


class TermIndex:
    """The folded names and terms of a tree's nodes, matched word by word against a query.

    Args:
        nodes: the nodes in the tree's order; a node's position is its rank, and on equal
            scores the lower rank comes first. Every node's parent is among them (or None).
    """

    def __init__(self, nodes: Sequence[Node]) -> None:
        # numpy is imported on first search, so that commands that only look nodes up start
        # faster.
        import numpy as np

        rank_of = {node.id: rank for rank, node in enumerate(nodes)}
        choices: list[str] = []  # one folded text per term, for the fallback
        owners: list[tuple[Node, str, str, bool]] = []  # node, term, language, is name
        term_node: list[int] = []
        term_words: list[list[str]] = []
        for rank, node in enumerate(nodes):
            seen: set[str] = set()
            candidates = [(node.name, _name_language(node), True)] + [
                (term, code, False) for code, words in node.terms.items() for term in words
            ]
            for term, code, is_name in candidates:
                # The term as folded, and as typed without umlauts ("Handyhuelle"), if that
                # differs: two entries of the same term.
                for spelling in (term, term.translate(_UMLAUT_SPELLED)):
                    folded = fold_text(spelling)
                    if not folded or folded in seen:
                        continue
                    seen.add(folded)
                    choices.append(folded)
                    owners.append((node, term, code, is_name))
                    term_node.append(rank)
                    term_words.append(folded.split())
            if not seen:  # a name of punctuation alone: a word no query folds to
                choices.append("")
                owners.append((node, node.name, _name_language(node), True))
                term_node.append(rank)
                term_words.append(["\x00"])
        self._nodes = list(nodes)
        self._choices = choices
        self._owners = owners
        self._node_count = len(nodes)
        self._choice_lengths = np.fromiter(map(len, choices), np.int32, len(choices))
        self._term_node = np.asarray(term_node, dtype=np.int64)
        self._term_is_name = np.fromiter((o[3] for o in owners), bool, len(owners))

        # Words: each term's words, and for a term of several words the words written together
        # as one more ("tshirt" for "t shirt"), which counts as the whole term when typed.
        vocabulary: dict[str, int] = {}
        incidence_term: list[int] = []  # one row per (term, word), terms in order
        incidence_word: list[int] = []
        content_term: list[int] = []  # the same for the words that count towards completeness
        content_word: list[int] = []
        joined_word: list[int] = []  # per term, its words written together (or -1)
        for number, words in enumerate(term_words):
            content = [w for w in words if w not in STOP_WORDS] or words
            together = "".join(words) if len(words) > 1 else None
            for word in [*words, *([together] if together else [])]:
                incidence_term.append(number)
                incidence_word.append(vocabulary.setdefault(word, len(vocabulary)))
            for word in content:
                content_term.append(number)
                content_word.append(vocabulary[word])
            joined_word.append(vocabulary[together] if together else -1)
        self._vocabulary = _Vocabulary(list(vocabulary))
        self._incidence_word = np.asarray(incidence_word, dtype=np.int64)
        self._incidence_starts = np.flatnonzero(
            np.r_[True, np.diff(np.asarray(incidence_term, dtype=np.int64)) != 0]
        )
        self._content_term = np.asarray(content_term, dtype=np.int64)
        self._content_word = np.asarray(content_word, dtype=np.int64)
        self._content_count = np.bincount(self._content_term, minlength=len(term_words))
        self._joined_word = np.asarray(joined_word, dtype=np.int64)
        self._term_starts = np.flatnonzero(np.r_[True, np.diff(self._term_node) != 0])

        # Ancestors, level by level from the top: each level's nodes take their parent's best.
        parent = np.full(len(nodes), -1, dtype=np.int64)
        depth = np.zeros(len(nodes), dtype=np.int64)
        for rank, node in enumerate(nodes):
            parent[rank] = rank_of.get(node.parent, -1) if node.parent is not None else -1
        for rank in range(len(nodes)):
            steps, up = 0, parent[rank]
            while up >= 0:
                steps, up = steps + 1, parent[up]
            depth[rank] = steps
        self._levels = [
            (np.flatnonzero(depth == level), parent[depth == level])
            for level in range(1, int(depth.max(initial=0)) + 1)
        ]

    def matches(
        self,
        query: str,
        *,
        limit: int,
        min_score: float = 0.0,
        within: Sequence[int] | None = None,
    ) -> list[SearchMatch]:
        """Rank the nodes by how well their words hold the folded query's words.

        Args:
            query: the query, already folded with :func:`fold_text` (not empty).
            limit: at most this many nodes.
            min_score: leave out nodes scoring below this (nodes scoring 0 are always left out).
            within: only the nodes at these ranks; None for all.

        Returns:
            Matches, best first; on equal scores a node found by its display name first, then
            rank.
        """
        import numpy as np

        typed = query.split()
        scores, best_term = self._word_scores(typed)
        if len(typed) > 1:
            # The words written together, as typed for a term written apart or the reverse
            # ("hand bag" for "handbag").
            together, together_term = self._word_scores(["".join(typed)], pieces=False)
            better = together > scores
            scores[better] = together[better]
            best_term[better] = together_term[better]
        keep = np.ones(self._node_count, dtype=bool)
        if within is not None:
            keep[:] = False
            keep[list(within)] = True
        if float(scores[keep].max(initial=0.0)) < _FALLBACK_BELOW:
            fallback, fallback_term = self._fallback(query)
            better = fallback > scores
            scores[better] = fallback[better]
            best_term[better] = fallback_term[better]
        scores = np.round(scores, 1)
        keep &= scores >= max(min_score, 0.05)
        candidates = np.flatnonzero(keep)
        by_name = self._term_is_name[best_term[candidates]]
        ranked = candidates[np.lexsort((candidates, ~by_name, -scores[candidates]))]
        matches = []
        for rank in ranked[:limit].tolist():
            node, term, code, is_name = self._owners[best_term[rank]]
            matches.append(SearchMatch(node, float(scores[rank]), term, code, is_name))
        return matches

    def _word_scores(self, typed: list[str], *, pieces: bool = True) -> tuple[Any, Any]:
        """Each node's score for the typed words (0 where no own word matches any), and the
        position of its best term (``pieces``: see :func:`_similarities`)."""
        import numpy as np

        vocabulary = self._vocabulary
        content = np.fromiter((w not in STOP_WORDS for w in typed), bool, len(typed))
        if not content.any():
            content[:] = True
        # typed word x vocabulary word, then typed word x term (its best word), x node.
        per_word = np.stack([_similarities(word, vocabulary, pieces=pieces) for word in typed])
        per_word[np.ix_(content, vocabulary.stop)] = 0.0
        share = np.where(content, 1.0, _STOP_WEIGHT)
        unknown = content & (per_word.max(axis=1) <= 0)
        if (content & ~unknown).any():
            share[unknown] = _UNKNOWN_WEIGHT
        weights = share[:, None] / share.sum()  # each typed word's part of the score
        per_term = np.maximum.reduceat(per_word[:, self._incidence_word], self._incidence_starts,
                                       axis=1)  # fmt: skip
        own = np.maximum.reduceat(per_term, self._term_starts, axis=1)
        inherited = np.zeros_like(own)
        for members, parents in self._levels:
            inherited[:, members] = np.maximum(inherited[:, parents], own[:, parents])
        coverage = (weights * np.maximum(own, _ANCESTOR_WEIGHT * inherited)).sum(axis=0)

        # The single best term: the typed words it holds, times how much of it was typed.
        covered = per_word[content].max(axis=0)  # how well each vocabulary word was typed
        typed_share = np.bincount(self._content_term, weights=covered[self._content_word],
                                  minlength=len(self._choices)) / self._content_count  # fmt: skip
        joined = self._joined_word >= 0
        typed_share[joined] = np.maximum(typed_share[joined], covered[self._joined_word[joined]])
        held = (weights * per_term).sum(axis=0)
        quality = held * (1 - _TERM_COMPLETENESS + _TERM_COMPLETENESS * typed_share)
        node_quality = np.maximum.reduceat(quality, self._term_starts)
        # The first term (the name comes first) reaching the node's best quality.
        positions = np.arange(len(quality))
        reaching = quality >= node_quality[self._term_node] - 1e-9
        best_term = np.minimum.reduceat(np.where(reaching, positions, len(quality)),
                                        self._term_starts)  # fmt: skip

        scores = 100.0 * (_COVERAGE_SHARE * coverage + _TERM_SHARE * node_quality)
        # Found only through its ancestors, or only by a small joining word: not a match.
        scores[own[content].max(axis=0) <= 0] = 0.0
        return scores, best_term

    def _fallback(self, query: str) -> tuple[Any, Any]:
        """Whole-term fuzzy similarity of each node's best term, weighted down, and that term."""
        import numpy as np

        similarity = _score_terms(query, self._choices, self._choice_lengths)
        order = np.lexsort((-similarity, self._term_node))
        first = order[np.r_[True, np.diff(self._term_node[order]) != 0]]
        scores = np.zeros(self._node_count)
        best_term = np.zeros(self._node_count, dtype=np.int64)
        scores[self._term_node[first]] = similarity[first] * _FALLBACK_WEIGHT
        best_term[self._term_node[first]] = first
        return scores, best_term


# Weights of the three whole-term similarity measures of the fallback. Whole-term similarity
# counts fully; a term whose words all appear in the query (or the reverse) a little less; a
# query typed as the start or a piece of a longer term less again.
_TOKEN_SET_WEIGHT = 0.95
_PARTIAL_WEIGHT = 0.8
_PARTIAL_MIN_LENGTH = 4


def _score_terms(query: str, choices: list[str], lengths: np.ndarray[Any, Any]) -> Any:
    """Score a folded query against every folded term at once, 0..100 each.

    rapidfuzz's ``cdist`` runs each measure over all terms in C. Partial matching is only used
    for queries of four characters or more and only when the query is the shorter string, so
    that a short term hidden inside a long query ("te" in "vetements") does not score high.
    """
    import numpy as np
    from rapidfuzz import fuzz, process

    if not choices:
        return np.zeros(0)
    whole = process.cdist([query], choices, scorer=fuzz.ratio, dtype=np.float32)[0]
    tokens = process.cdist([query], choices, scorer=fuzz.token_set_ratio, dtype=np.float32)[0]
    scores = np.maximum(whole, tokens * _TOKEN_SET_WEIGHT)
    if len(query) >= _PARTIAL_MIN_LENGTH:
        partial = process.cdist([query], choices, scorer=fuzz.partial_ratio, dtype=np.float32)[0]
        partial[lengths < len(query)] = 0
        scores = np.maximum(scores, partial * _PARTIAL_WEIGHT)
    return scores.astype(np.float64)
