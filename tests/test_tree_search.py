"""Tests for catmap.tree.search: how one typed word matches a word of the tree, how nodes rank
by all the typed words, and the hit rate on the labelled check set (tests/data/search_checks.txt,
what a category specialist types to find a node of tree v1)."""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from catmap.tree.search import STOP_WORDS, fold_text, word_similarity
from catmap.tree.taxonomy import CategoryTree, load_default_tree
from catmap.tree.treefile import Node

CHECKS = Path(__file__).parent / "data" / "search_checks.txt"


@pytest.fixture(scope="module")
def shared() -> CategoryTree:
    return load_default_tree(1)


def _node(node_id: str, parent: str | None, name: str, **terms: tuple[str, ...]) -> Node:
    cells = {code: terms.get(code, ()) for code in ("en", "fr", "de", "es")}
    return Node(node_id, parent, name, cells)


def _ids(tree: CategoryTree, query: str, limit: int = 10) -> list[str]:
    return [match.node.id for match in tree.search_matches(query, limit=limit)]


def _score(tree: CategoryTree, query: str, node_id: str) -> float:
    found = {m.node.id: m.score for m in tree.search_matches(query, limit=len(list(tree)))}
    return found.get(node_id, 0.0)


# A small tree: two nodes that share the word "bande", a department whose word only its
# children inherit, and a node whose name is one word of a longer term elsewhere.
SMALL = CategoryTree(
    [
        _node("1", None, "Health", fr=("santé",)),
        _node("2", "1", "Bandages", en=("bandage",), fr=("bande", "bande de crêpe")),
        _node("3", None, "Books", fr=("livres",)),
        _node("4", "3", "Comics", en=("comic",), fr=("bande dessinée", "BD")),
        _node("5", None, "Kitchen", en=("kitchen",), de=("Küche",)),
        _node("6", "5", "Knives", en=("knife", "chef knife")),
        _node("7", "5", "Kitchen knife sets", en=("kitchen knives", "knife block")),
        _node("8", None, "Accessories", de=("Handyhülle",)),
        _node("9", None, "T-shirts", en=("tee",)),
        _node("10", None, "Handbags", en=("handbag",)),
    ]
)


# -- one typed word against one word of the tree --------------------------------------------


def test_word_matches_rank_whole_then_inflected_then_begun_then_misspelt_then_pieces() -> None:
    whole = word_similarity("boots", "boots")
    inflected = word_similarity("boots", "boot")
    begun = word_similarity("dessine", "dessinee")
    misspelt = word_similarity("sweatr", "sweater")
    piece = word_similarity("schirm", "sonnenschirm")
    assert whole == 1.0
    assert whole > inflected > begun > misspelt > piece > 0


def test_more_letters_of_a_begun_word_score_more_and_one_or_two_letters_little() -> None:
    steps = [word_similarity("dessinee"[:n], "dessinee") for n in range(1, 8)]
    assert steps == sorted(steps) and len(set(steps)) == len(steps)
    assert steps[1] < 0.5 < steps[2]  # "de" says little, "des" begins to


def test_typos_are_forgiven_in_longer_words_only() -> None:
    assert word_similarity("skiny", "skinny") > 0  # five letters: one mistake
    assert word_similarity("dess", "dres") == 0  # four: none
    assert word_similarity("chassures", "chaussures") > 0  # a letter left out
    assert word_similarity("chuassures", "chaussures") > 0  # two neighbours swapped
    assert word_similarity("chausures", "chaussurse") > 0  # two mistakes from eight letters
    assert word_similarity("bxxxxe", "bande") == 0


def test_an_unfinished_word_is_not_taken_for_a_misspelt_one(shared: CategoryTree) -> None:
    # "kaffeem" begins "Kaffeemaschine": it is not "Kaffee" (coffee) with one letter too many.
    assert shared[_ids(shared, "kaffeem", 1)[0]].name in {"Coffee machines", "Coffee grinders"}
    assert "Coffee" not in [shared[i].name for i in _ids(shared, "kaffeem", 3)]


def test_plural_endings_only_on_a_real_stem() -> None:
    assert word_similarity("chapeaux", "chapeau") == word_similarity("kleider", "kleid") > 0.8
    assert word_similarity("dess", "des") == 0  # "des" is a joining word, not a stem
    # "r" is no ending: "sweatr" is "sweat" with a letter too many, not its plural
    assert 0 < word_similarity("sweatr", "sweat") < word_similarity("sweats", "sweat")


def test_a_compound_typed_whole_finds_its_last_part() -> None:
    assert word_similarity("damenstiefel", "stiefel") > 0
    assert word_similarity("stiefeldamen", "stiefel") == word_similarity("x", "stiefel") == 0


# -- ranking by all the typed words ---------------------------------------------------------


def test_a_node_holding_every_typed_word_ranks_above_one_matching_one_word_exactly() -> None:
    assert _ids(SMALL, "bande dess")[:2] == ["4", "2"]
    assert _ids(SMALL, "bande")[0] == "2"  # alone, "bande" is the bandage's own whole term
    assert _score(SMALL, "bande dess", "4") > _score(SMALL, "bande dess", "2") + 20


def test_accents_typed_or_not_score_the_same() -> None:
    for plain, marked in (("bande dessinee", "bande dessinée"), ("sante", "SANTÉ")):
        assert SMALL.search_matches(plain, limit=3) == SMALL.search_matches(marked, limit=3)


def test_typed_words_in_any_order_and_language_mix() -> None:
    assert _ids(SMALL, "dessinee bande")[0] == "4"
    assert _ids(SMALL, "knife kitchen")[0] == "7"


def test_own_words_count_more_than_an_ancestors_and_ancestors_alone_find_nothing() -> None:
    # "kitchen knives" is node 7's own term; node 6 has "knife" and inherits "kitchen".
    assert _ids(SMALL, "kitchen knife")[:2] == ["7", "6"]
    assert _score(SMALL, "kitchen knife", "6") > _score(SMALL, "knife comic", "6")
    assert _score(SMALL, "küche knife", "6") > _score(SMALL, "knife", "6") / 2
    # Node 2 inherits "santé", but a word of its ancestors alone does not make it a match.
    assert "2" not in _ids(SMALL, "sante")


def test_the_name_wins_a_tie() -> None:
    # Both hold "top" as a whole term; the node named so comes first, though it comes later.
    tree = CategoryTree(
        [_node("1", None, "Blouses", en=("top",)), _node("2", None, "Top", en=("blouse",))]
    )
    assert _score(tree, "top", "1") == _score(tree, "top", "2") == 100.0
    best = tree.search_matches("top", limit=2)[0]
    assert (best.node.id, best.is_name) == ("2", True)


def test_words_written_apart_or_together() -> None:
    assert _ids(SMALL, "tshirt")[0] == "9"
    assert _ids(SMALL, "t shirt")[0] == "9"
    assert _ids(SMALL, "hand bag")[0] == "10"
    assert _score(SMALL, "hand bag", "10") == 100.0


def test_umlauts_typed_as_two_letters() -> None:
    best = SMALL.search_matches("handyhuelle", limit=1)[0]
    assert (best.node.id, best.term, best.language, best.score) == ("8", "Handyhülle", "de", 100)
    assert _ids(SMALL, "handyhulle")[0] == "8"


def test_joining_words_count_little() -> None:
    assert {"de", "and", "und", "y"} <= STOP_WORDS
    assert _ids(SMALL, "bande de crepe")[0] == "2"
    assert _score(SMALL, "bande de crepe", "2") == 100.0
    assert _score(SMALL, "comics de", "4") > _score(SMALL, "comics bd", "4") - 30
    assert SMALL.search_matches("de", limit=3)  # a joining word alone still searches


def test_a_typed_word_the_tree_does_not_know_counts_little() -> None:
    # No word of SMALL resembles "vintage": it tells no node from another.
    assert _ids(SMALL, "vintage comics")[0] == "4"
    assert 60 <= _score(SMALL, "vintage comics", "4") < _score(SMALL, "comics", "4")
    # "knife" is a word of the tree, but not of the comics: a node lacking it loses half.
    assert _score(SMALL, "knife comics", "4") <= 50


def test_scores_stay_in_range_and_a_query_of_nothing_finds_nothing(shared: CategoryTree) -> None:
    for query in ("bande dess", "zzqxw", "b", "a b c d e f", "x" * 60, "чай"):
        scores = [m.score for m in shared.search_matches(query, limit=50)]
        assert all(0 < s <= 100 for s in scores)
        assert scores == sorted(scores, reverse=True)
    assert shared.search_matches("  --  ", limit=5) == []


def test_random_letters_only_find_distant_guesses(shared: CategoryTree) -> None:
    for query in ("zzqxw", "qxzv", "hjkl"):
        found = shared.search_matches(query, limit=5)
        assert found and found[0].score < 50


def test_a_name_of_punctuation_alone_does_not_break_the_index() -> None:
    tree = CategoryTree([_node("1", None, "—"), _node("2", "1", "Socks", en=("socks",))])
    assert _ids(tree, "sock") == ["2"]


# -- the labelled check set -------------------------------------------------------------------


def _checks() -> list[tuple[str, str, frozenset[str]]]:
    rows = []
    for line in CHECKS.read_text(encoding="utf-8").splitlines():
        if line.strip() and not line.startswith("#"):
            split, query, ids, _note = (cell.strip() for cell in line.split("|"))
            rows.append((split, query, frozenset(ids.split(","))))
    return rows


def _hit_rates(tree: CategoryTree, cut: float | None = None) -> tuple[float, float]:
    rows = _checks()
    top1 = top5 = 0
    for _split, query, accepted in rows:
        if cut is not None:  # the query while still being typed
            query = query[: max(3, math.ceil(len(query) * cut))].rstrip()
        found = _ids(tree, query, 5)
        top1 += bool(found) and found[0] in accepted
        top5 += bool(accepted & set(found))
    return top1 / len(rows), top5 / len(rows)


def test_the_check_set_is_well_formed(shared: CategoryTree) -> None:
    rows = _checks()
    assert len(rows) >= 60
    assert {split for split, _q, _i in rows} == {"design", "holdout"}
    assert len({fold_text(query) for _s, query, _i in rows}) == len(rows)
    for _split, _query, accepted in rows:
        for node_id in accepted:
            shared[node_id]  # raises UnknownNode for an id not in tree v1


def test_the_check_set_is_found(shared: CategoryTree) -> None:
    # Measured when the ranking was written (benchmarks/eval_tree_search.py): 68 of 70 first,
    # all 70 in the first five; the floors leave room for one or two changes of order.
    top1, top5 = _hit_rates(shared)
    assert top1 >= 0.93
    assert top5 >= 0.97


def test_the_check_set_is_found_while_still_being_typed(shared: CategoryTree) -> None:
    # Each query cut to 70% of its letters, mostly in the middle of a word. Measured: 59 of 70
    # first, 68 in the first five.
    top1, top5 = _hit_rates(shared, cut=0.7)
    assert top1 >= 0.8
    assert top5 >= 0.93


def test_a_name_is_in_the_language_of_the_term_written_as_it() -> None:
    # A tree made from Spanish paths: its names are Spanish, and a match on the name says so.
    tree = CategoryTree(
        [
            _node("1", None, "Hogar", es=("hogar",)),
            _node("2", "1", "Sartenes", es=("sartenes",)),
            _node("3", "1", "Kitchen", es=("cocina",)),
        ]
    )
    best = tree.search_matches("sarten", limit=1)[0]
    assert (best.node.id, best.is_name, best.language) == ("2", True, "es")
    # A name no term repeats stays English, as in the shared trees.
    assert tree.search_matches("kitchen", limit=1)[0].language == "en"
