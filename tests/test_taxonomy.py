"""Tests for catmap.tree.taxonomy: validation of tree files, look-ups, inheritance, search, dump."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from catmap.errors import TreeError, UnknownNode
from catmap.tree.search import fold_text
from catmap.tree.taxonomy import (
    CategoryTree,
    default_tree_path,
    dump_tree,
    load_default_tree,
    load_tree,
    summarize_tree,
)
from catmap.tree.treefile import MAX_LEVEL, SHARED_LEAF_LEVELS, Node, parse_audience

TREES = Path(__file__).parent / "data" / "trees"
GOOD = TREES / "good.txt"
BAD_FILES = sorted(TREES.glob("bad_*.txt"))
# Valid trees of any depth, each with a leaf outside the shared tree's own levels (3 to 5).
SHARED_RULE_FILES = sorted((TREES / "shared_rule").glob("*.txt"))
ROOT = Path(__file__).resolve().parents[1]


def _expectation(path: Path) -> tuple[str, int]:
    """Read '# error: ...' and '# line: N' from the first two lines of a broken tree file."""
    first, second = path.read_bytes().decode("ascii", errors="replace").splitlines()[:2]
    assert first.startswith("# error: ") and second.startswith("# line: "), path
    return first.removeprefix("# error: "), int(second.removeprefix("# line: "))


@pytest.fixture(scope="module")
def tree() -> CategoryTree:
    return load_tree(GOOD)


def _ids(nodes: list[Node]) -> list[str]:
    return [n.id for n in nodes]


# -- validation ---------------------------------------------------------------------------


def test_there_are_broken_tree_files() -> None:
    assert len(BAD_FILES) >= 15


@pytest.mark.parametrize("path", BAD_FILES, ids=lambda p: p.stem)
def test_broken_tree_raises_tree_error_naming_file_and_line(path: Path) -> None:
    fragment, line = _expectation(path)
    with pytest.raises(TreeError, match=re.escape(fragment)) as info:
        load_tree(path)
    assert info.value.line == line
    assert info.value.path == str(path)
    assert str(info.value).startswith(f"{path}:{line}: ")
    assert info.value.exit_code == 3


@pytest.mark.parametrize("path", SHARED_RULE_FILES, ids=lambda p: p.stem)
def test_a_tree_of_ones_own_may_have_leaves_outside_the_shared_trees_levels(path: Path) -> None:
    fragment, line = _expectation(path)
    tree = load_tree(path)  # valid as a tree of one's own
    with pytest.raises(TreeError, match=re.escape(fragment)) as info:
        tree.check_leaf_levels(*SHARED_LEAF_LEVELS)
    assert info.value.line == line
    assert "--tree-file" in str(info.value.hint)


def test_the_shipped_trees_keep_the_shared_trees_levels() -> None:
    for version in (1, 2):
        tree = load_tree(ROOT / "taxonomies" / f"tree-v{version}.txt")
        tree.check_leaf_levels(*SHARED_LEAF_LEVELS)
        depths = {tree.depth(n.id) for n in tree.leaves()}
        assert min(depths) >= SHARED_LEAF_LEVELS[0] and max(depths) <= SHARED_LEAF_LEVELS[1]


def _chain(levels: int) -> list[Node]:
    terms = {"en": ("word",), "fr": (), "de": (), "es": ()}
    nodes = [Node(id="1", parent=None, name="Level 1", terms=terms, line=1)]
    for level in range(2, levels + 1):
        nodes.append(Node(str(level), str(level - 1), f"Level {level}", terms, line=level))
    return nodes


def test_trees_of_one_to_max_level_levels_are_valid() -> None:
    for levels in (1, 2, 7, MAX_LEVEL):
        tree = CategoryTree(_chain(levels))
        assert [n.id for n in tree.leaves()] == [str(levels)]
        assert tree.depth(str(levels)) == levels
        assert tree.path_names(str(levels))[-1] == f"Level {levels}"
    with pytest.raises(TreeError, match=f"at level {MAX_LEVEL + 1}; nodes sit at most"):
        CategoryTree(_chain(MAX_LEVEL + 1))


def test_a_flat_tree_each_category_its_own_department(tmp_path: Path) -> None:
    flat = tmp_path / "flat.txt"
    flat.write_text(
        "@tree-version 1\n"
        "10 | - | Teapots | none | - | en: teapot | fr: | de: | es:\n"
        "20 | - | Cider | who=unisex age=adult | alcohol | en: cider | fr: | de: | es:\n",
        encoding="utf-8",
    )
    tree = load_tree(flat)
    assert [n.id for n in tree.leaves()] == ["10", "20"] == [n.id for n in tree.departments()]
    assert tree.department("20").id == "20" and tree.ancestors("20") == []
    assert tree.path_text("20") == "Cider"
    assert tree.restriction("20") == "alcohol" and tree.restriction("10") is None
    assert tree.who("20") == {"unisex"} and tree.ages("10") == frozenset()
    facts = summarize_tree(tree)
    assert facts["levels"] == {"1": 2}
    # A department with no children is a leaf itself.
    assert [d["leaves"] for d in facts["departments"]] == [1, 1]


def test_missing_file_is_a_tree_error(tmp_path: Path) -> None:
    with pytest.raises(TreeError, match="tree file not found"):
        load_tree(tmp_path / "absent.txt")


def test_empty_file_lacks_the_header(tmp_path: Path) -> None:
    empty = tmp_path / "empty.txt"
    empty.write_text("# only a comment\n", encoding="utf-8")
    with pytest.raises(TreeError, match="missing header"):
        load_tree(empty)


def test_tree_built_in_code_is_validated_too() -> None:
    terms = {"en": ("a",), "fr": (), "de": (), "es": ()}
    nodes = [
        Node("1", None, "One", terms, line=1),
        Node("2", "1", "Two", terms, line=2),
        Node("2", "1", "Again", terms, line=3),
    ]
    with pytest.raises(TreeError, match=r"duplicate id 2 \(first on line 2\)"):
        CategoryTree(nodes)


def test_missing_language_in_code_built_node() -> None:
    nodes = [Node("1", None, "One", {"en": (), "fr": (), "de": ()})]
    with pytest.raises(TreeError, match="missing language cell 'es:'"):
        CategoryTree(nodes)


def test_good_tree_loads(tree: CategoryTree) -> None:
    assert tree.version == "1"
    assert tree.path == str(GOOD)
    assert len(tree) == 23
    assert _ids(tree.departments()) == ["1000", "1500"]
    assert "1543" in tree and "9999" not in tree and 1543 not in tree


def test_node_cells_are_read(tree: CategoryTree) -> None:
    node = tree["1520"]
    assert node.parent == "1510"
    assert node.name == "Spirits"
    assert node.restriction == "alcohol"
    assert node.audience == "."
    assert node.terms["de"] == ("Spirituosen", "Schnaps")
    assert node.line == 15
    assert tree["1000"].parent is None
    assert tree["1560"].terms == {"en": (), "fr": (), "de": (), "es": ()}


# -- look-ups -----------------------------------------------------------------------------


def test_unknown_id_raises_unknown_node(tree: CategoryTree) -> None:
    with pytest.raises(UnknownNode, match="no node with id '4242'"):
        tree["4242"]
    with pytest.raises(UnknownNode):
        tree.ancestors("4242")


def test_ancestors_lineage_department(tree: CategoryTree) -> None:
    assert _ids(tree.ancestors("1543")) == ["1500", "1510", "1541", "1542"]
    assert _ids(tree.lineage("1543")) == ["1500", "1510", "1541", "1542", "1543"]
    assert tree.ancestors("1000") == []
    assert tree.department("1543").id == "1500"
    assert tree.department("1000").id == "1000"


def test_children_and_descendants(tree: CategoryTree) -> None:
    assert _ids(tree.children("1510")) == ["1520", "1530", "1540", "1541"]
    assert _ids(tree.descendants("1510")) == [
        "1520", "1521", "1522", "1530", "1531", "1540", "1541", "1542", "1543",
    ]  # fmt: skip
    assert tree.descendants("1110") == []


def test_depth_and_leaves(tree: CategoryTree) -> None:
    assert [tree.depth(i) for i in ("1000", "1100", "1110", "1521", "1543")] == [1, 2, 3, 4, 5]
    assert _ids(tree.leaves("1000")) == ["1110", "1120", "1210", "1220"]
    assert _ids(tree.leaves("1110")) == ["1110"]
    assert len(tree.leaves()) == 12
    assert tree.is_leaf("1543") and not tree.is_leaf("1542")


def test_paths(tree: CategoryTree) -> None:
    assert tree.path_names("1521") == ("Food and drink", "Drinks", "Spirits", "Brandy")
    assert tree.path_text("1521") == "Food and drink > Drinks > Spirits > Brandy"
    assert tree.path_text("1521", sep="/") == "Food and drink/Drinks/Spirits/Brandy"
    assert tree.find_path("Food and drink > Drinks > Spirits > Brandy").id == "1521"
    assert tree.find_path("  apparel >tops>   T-SHIRTS ").id == "1110"
    assert tree.find_path("Apparel").id == "1000"


def test_find_path_says_where_the_path_left_the_tree(tree: CategoryTree) -> None:
    with pytest.raises(UnknownNode, match="no node named 'boots' under 'Apparel'"):
        tree.find_path("Apparel > Boots")
    with pytest.raises(UnknownNode, match="among departments"):
        tree.find_path("Garden > Tools")


def test_iteration_is_file_order(tree: CategoryTree) -> None:
    ids = _ids(list(tree))
    assert ids[:4] == ["1000", "1100", "1110", "1120"]
    assert ids[-1] == "1561"


def test_parents_come_before_children_even_if_the_file_disagrees() -> None:
    terms = {"en": (), "fr": (), "de": (), "es": ()}
    nodes = [
        Node("3", "2", "Leaf", terms),
        Node("1", None, "Top", terms),
        Node("2", "1", "Middle", terms),
    ]
    assert _ids(list(CategoryTree(nodes))) == ["1", "2", "3"]


# -- audience and restriction -------------------------------------------------------------


def test_audience_inheritance(tree: CategoryTree) -> None:
    everyone = frozenset({"female", "male", "unisex"})
    assert tree.who("1000") == everyone
    assert tree.ages("1000") == frozenset({"adult", "kids", "baby"})
    # "." inherits both parts
    assert tree.who("1110") == everyone
    assert tree.ages("1110") == frozenset({"adult", "kids", "baby"})
    # only age given: who is inherited
    assert tree.who("1200") == everyone
    assert tree.ages("1200") == frozenset({"kids", "baby"})
    assert tree.ages("1210") == frozenset({"baby"})
    # only who given: age is inherited from the parent (1200)
    assert tree.who("1220") == frozenset({"female"})
    assert tree.ages("1220") == frozenset({"kids", "baby"})
    # "none": gender and age do not apply, and children inherit that
    assert tree.who("1500") == frozenset() and tree.ages("1500") == frozenset()
    assert tree.who("1543") == frozenset() and tree.ages("1543") == frozenset()


def test_restriction_inheritance(tree: CategoryTree) -> None:
    assert tree.restriction("1520") == "alcohol"
    assert tree.restriction("1521") == "alcohol"
    assert tree["1521"].restriction is None  # own cell is "-"
    assert tree.restriction("1510") is None
    assert tree.restriction("1531") is None


@pytest.mark.parametrize(
    ("cell", "expected"),
    [
        (".", (None, None)),
        ("none", (frozenset(), frozenset())),
        ("who=female", (frozenset({"female"}), None)),
        ("age=kids,baby", (None, frozenset({"kids", "baby"}))),
        ("who=male,unisex age=adult", (frozenset({"male", "unisex"}), frozenset({"adult"}))),
    ],
)
def test_parse_audience(
    cell: str, expected: tuple[frozenset[str] | None, frozenset[str] | None]
) -> None:
    assert parse_audience(cell) == expected


@pytest.mark.parametrize(
    ("cell", "message"),
    [
        ("", "empty audience cell"),
        ("who=", "bad audience value ''"),
        ("who=female who=male", "given twice"),
        ("everyone", "bad audience part"),
        ("age=elderly", "bad audience value 'elderly'"),
    ],
)
def test_parse_audience_rejects(cell: str, message: str) -> None:
    with pytest.raises(ValueError, match=re.escape(message)):
        parse_audience(cell)


# -- words and search ---------------------------------------------------------------------


def test_all_terms(tree: CategoryTree) -> None:
    assert tree.all_terms("1541", lang="fr") == ["Tea", "thé", "infusion"]
    assert tree.all_terms("1541") == [
        "Tea", "tea", "tea bags", "thé", "infusion", "Tee", "Teebeutel", "té", "infusión",
    ]  # fmt: skip


def test_fold_text() -> None:
    # unicodedata NFKD decomposition, combining marks dropped, str.casefold
    assert fold_text("Vêtements  d'Été") == "vetements d ete"
    assert fold_text("GRÜNER Tee") == "gruner tee"
    assert fold_text("Straße") == "strasse"
    assert fold_text("Œufs") == "oeufs"
    assert fold_text("  --  ") == ""


@pytest.mark.parametrize(
    ("query", "node_id", "language"),
    [
        ("onesie", "1210", "en"),
        ("whiskey", "1522", "en"),
        ("chandail", "1120", "fr"),
        ("thé vert", "1542", "fr"),
        ("the vert", "1542", "fr"),
        ("THÉ VERT", "1542", "fr"),
        ("Mädchenkleid", "1220", "de"),
        ("madchenkleid", "1220", "de"),
        ("Strampler", "1210", "de"),
        ("Spirituosen", "1520", "de"),
        ("té de jazmín", "1543", "es"),
        ("te de jazmin", "1543", "es"),
        ("coñac", "1521", "es"),
        ("conac", "1521", "es"),
        ("pelele", "1210", "es"),
    ],
)
def test_search_finds_a_synonym_in_each_language(
    tree: CategoryTree, query: str, node_id: str, language: str
) -> None:
    best = tree.search_matches(query, limit=5)[0]
    assert best.node.id == node_id
    assert best.language == language
    assert fold_text(best.term) == fold_text(query)
    assert best.score == 100.0


def test_search_tolerates_typos(tree: CategoryTree) -> None:
    found = tree.search("sweatr", limit=3)
    assert found[0][0].id == "1120"
    assert 0 < found[0][1] < 100


def test_search_ranks_each_node_once_best_first(tree: CategoryTree) -> None:
    found = tree.search("tea", limit=20)
    ids = [node.id for node, _ in found]
    assert len(ids) == len(set(ids))
    scores = [score for _, score in found]
    assert scores == sorted(scores, reverse=True)
    assert all(0 <= s <= 100 for s in scores)
    assert ids[0] == "1541"


def test_search_by_node_name(tree: CategoryTree) -> None:
    best = tree.search_matches("Kitchen staples")[0]
    assert best.node.id == "1560"
    assert best.is_name


def test_search_limit_and_under(tree: CategoryTree) -> None:
    assert len(tree.search("drinks", limit=2)) == 2
    under = {n.id for n in tree.descendants("1000")} | {"1000"}
    found = tree.search("drinks", limit=50, under="1000")
    assert all(node.id in under for node, _ in found)
    assert tree.search("", limit=5) == []
    with pytest.raises(UnknownNode):
        tree.search("drinks", under="4242")
    assert tree.search("tea", limit=0) == []


def test_a_short_term_inside_a_long_query_does_not_win(tree: CategoryTree) -> None:
    # "té" (Tea, es) is hidden inside "vetements"; the whole word must win.
    found = tree.search("vetements", limit=3)
    assert found[0][0].id == "1000"
    assert "1541" not in [node.id for node, _ in found[:2]]


# -- dump, defaults, summary --------------------------------------------------------------


def test_dump_round_trips(tree: CategoryTree, tmp_path: Path) -> None:
    out = tmp_path / "tree.txt"
    dump_tree(tree, out)
    again = load_tree(out)
    assert list(again) == list(tree)
    assert again.version == tree.version
    second = tmp_path / "again.txt"
    dump_tree(again, second)
    assert second.read_text(encoding="utf-8") == out.read_text(encoding="utf-8")


def test_dump_writes_the_file_format(tree: CategoryTree, tmp_path: Path) -> None:
    out = tmp_path / "tree.txt"
    dump_tree(tree, out)
    lines = out.read_text(encoding="utf-8").splitlines()
    assert lines[0] == "@tree-version 1"
    assert lines[1] == (
        "1000 | - | Apparel | who=female,male,unisex age=adult,kids,baby | - | "
        "en: clothing; clothes; apparel | fr: vêtements; habits | de: Bekleidung; Kleidung | "
        "es: ropa; prendas"
    )
    assert "1560 | 1500 | Kitchen staples | . | - | en: | fr: | de: | es:" in lines


def test_node_equality_ignores_line_and_nodes_hash() -> None:
    terms = {"en": ("a",), "fr": (), "de": (), "es": ()}
    one = Node("1", None, "One", terms, line=3)
    same = Node("1", None, "One", dict(terms), line=9)
    assert one == same
    assert len({one, same}) == 1


def test_default_tree_path_follows_environment(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.delenv("CATMAP_TAXONOMIES", raising=False)
    assert default_tree_path(1).name == "tree-v1.txt"
    assert default_tree_path("2").parent.name == "taxonomies"
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(tmp_path))
    assert default_tree_path(2) == tmp_path / "tree-v2.txt"
    with pytest.raises(TreeError, match="not an integer"):
        default_tree_path("latest")


def test_load_default_tree_is_cached_per_path(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(tmp_path))
    shutil.copy(GOOD, tmp_path / "tree-v1.txt")
    first = load_default_tree(1)
    assert load_default_tree("1") is first
    assert len(first) == 23
    with pytest.raises(TreeError, match="tree file not found"):
        load_default_tree(3)


def test_summary(tree: CategoryTree) -> None:
    facts = summarize_tree(tree)
    assert facts["nodes"] == 23
    assert facts["levels"] == {"1": 2, "2": 5, "3": 11, "4": 4, "5": 1}
    assert facts["leaves"] == 12
    # Spirits and its two children carry "alcohol"
    assert facts["restricted"] == {"alcohol": 3}
    assert facts["departments"][0] == {"id": "1000", "name": "Apparel", "nodes": 7, "leaves": 4}
    assert facts["departments"][1]["nodes"] == 16
    assert facts["valid"] is True


def test_a_tree_says_which_languages_it_has_terms_in(tree: CategoryTree) -> None:
    assert tree.languages() == ("en", "fr", "de", "es")
    # Empty fr / de / es cells: the tree is in English only.
    english = load_tree(Path(__file__).parent / "data" / "own-tree" / "english-only.txt")
    assert english.languages() == ("en",)
