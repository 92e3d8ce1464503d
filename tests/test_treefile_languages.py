"""Extra language cells in tree files (``| it: ...`` after the four required ones): the format,
and every user of node terms taking them (search, cold start, training examples, coverage,
change logs, diff, generated change sets)."""

from __future__ import annotations

from pathlib import Path

import pycountry
import pytest

from catmap.classify.features import ProductTexts
from catmap.classify.keywords import node_document
from catmap.classify.model import _with_tree_examples
from catmap.errors import TreeError
from catmap.feeds.language import guess_language, language_warning
from catmap.tree._langcodes import ISO_639_1_CODES
from catmap.tree.changegen import ChangeSetSizes, generate_change_set
from catmap.tree.changelog import apply_changes, load_change_log
from catmap.tree.diff import diff_trees
from catmap.tree.taxonomy import CategoryTree, dump_tree, load_default_tree, load_tree
from catmap.tree.treefile import LANGUAGES, Node, format_tree, is_language_code, parse_tree_text

ROOT = Path(__file__).resolve().parents[1]

# Italian on every node; Dutch on one node only; one Portuguese cell left empty.
REQUIRED = {
    "1000": "en: clothing | fr: vêtements | de: Kleidung | es: ropa",
    "1100": "en: tops | fr: hauts | de: Oberteile | es: tops",
    "1110": "en: t-shirt; tee | fr: tee-shirt | de: T-Shirt | es: camiseta",
    "1120": "en: jumper; sweater | fr: pull | de: Pullover | es: jersey",
    "1200": "en: coat | fr: manteau | de: Mantel | es: abrigo",
}
TREE = (
    "\n".join(
        [
            "@tree-version 1",
            f"1000 | - | Apparel | who=female,male age=adult | - | {REQUIRED['1000']}"
            " | it: abbigliamento; vestiti",
            f"1100 | 1000 | Tops | . | - | {REQUIRED['1100']} | it: top; maglie | pt:",
            f"1110 | 1100 | T-shirts | . | - | {REQUIRED['1110']}"
            " | it: maglietta; magliette; t-shirt",
            f"1120 | 1100 | Knitwear | . | - | {REQUIRED['1120']}"
            " | nl: trui; truien | it: maglione; maglioni",
            f"1200 | 1000 | Coats | . | - | {REQUIRED['1200']} | it: cappotto; cappotti; soprabito",
        ]
    )
    + "\n"
)


def _write(tmp_path: Path, text: str, name: str = "tree.txt") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture
def tree(tmp_path: Path) -> CategoryTree:
    return load_tree(_write(tmp_path, TREE))


def test_the_code_list_is_iso_639_1() -> None:
    # Reference: pycountry's copy of ISO 639-1.
    iso = {lang.alpha_2 for lang in pycountry.languages if hasattr(lang, "alpha_2")}
    assert ISO_639_1_CODES == iso
    assert is_language_code("it") and is_language_code("nl")
    assert not is_language_code("IT") and not is_language_code("ita") and not is_language_code("")


def test_extra_cells_are_parsed_after_the_required_ones(tree: CategoryTree) -> None:
    node = tree["1120"]
    assert list(node.terms) == [*LANGUAGES, "nl", "it"]
    assert node.terms["it"] == ("maglione", "maglioni")
    assert node.terms["nl"] == ("trui", "truien")
    assert tree["1100"].terms["pt"] == ()
    assert "it" not in tree.all_terms("1120", lang="en")
    assert tree.all_terms("1110", lang="it") == ["T-shirts", "maglietta", "magliette", "t-shirt"]


def test_languages_lists_the_extra_ones_after_the_required_ones(tree: CategoryTree) -> None:
    # Extra languages in the order the file first gives them; Portuguese has only an empty
    # cell, so the tree has no terms in it.
    assert tree.languages() == ("en", "fr", "de", "es", "it", "nl")
    four = "\n".join(
        " | ".join(line.split(" | ")[:9]) for line in TREE.splitlines() if " | " in line
    )
    assert CategoryTree(parse_tree_text("@tree-version 1\n" + four, "t")[1]).languages() == (
        LANGUAGES
    )


def test_a_tree_with_extra_languages_round_trips(tree: CategoryTree, tmp_path: Path) -> None:
    out = tmp_path / "again.txt"
    dump_tree(tree, out)
    again = load_tree(out)
    assert list(again) == list(tree)
    assert [dict(n.terms) for n in again] == [dict(n.terms) for n in tree]
    assert again.languages() == tree.languages()
    text = out.read_text(encoding="utf-8")
    assert format_tree(again.version, again) == text
    lines = text.splitlines()
    assert lines[3].endswith("| es: camiseta | it: maglietta; magliette; t-shirt")
    assert lines[2].endswith("| es: tops | it: top; maglie | pt:")


@pytest.mark.parametrize(
    ("cell", "message"),
    [
        ("zz: parola", "cell 11: 'zz' is not a two-letter ISO 639-1 language code"),
        ("ita: maglia", "cell 11: 'ita' is not a two-letter ISO 639-1 language code"),
        ("maglia", "cell 11 'maglia' is not a language cell"),
        ("de: Hemd", "cell 11: language 'de:' given twice"),
    ],
)
def test_a_bad_extra_cell_names_the_file_and_line(tmp_path: Path, cell: str, message: str) -> None:
    lines = TREE.splitlines()
    lines[3] = f"{lines[3]} | {cell}"
    path = _write(tmp_path, "\n".join(lines) + "\n")
    with pytest.raises(TreeError) as info:
        load_tree(path)
    assert info.value.path == str(path)
    assert info.value.line == 4
    assert str(info.value).startswith(f"{path}:4: {message}")


def test_the_required_cells_stay_required_and_in_order(tmp_path: Path) -> None:
    lines = TREE.splitlines()
    # Italian in place of Spanish: the fourth required cell is missing.
    lines[3] = lines[3].replace("es: camiseta | it:", "it:")
    with pytest.raises(TreeError, match="missing language cell 'es:'") as info:
        load_tree(_write(tmp_path, "\n".join(lines) + "\n"))
    assert info.value.line == 4


def test_a_node_built_in_code_with_a_bad_code_is_refused() -> None:
    terms = {"en": ("a",), "fr": (), "de": (), "es": (), "italian": ("b",)}
    with pytest.raises(TreeError, match="'italian' is not a two-letter ISO 639-1"):
        CategoryTree([Node("1", None, "One", terms)])


def test_search_finds_a_node_by_its_italian_word(tree: CategoryTree) -> None:
    best = tree.search_matches("cappotti", limit=1)
    assert best and best[0].node.id == "1200"


def test_cold_start_and_training_examples_use_the_extra_words(tree: CategoryTree) -> None:
    assert "maglioni" in node_document(tree, "1120")
    assert "truien" in node_document(tree, "1120")
    # The department's Italian words reach its leaves' documents too.
    assert "abbigliamento" in node_document(tree, "1200")
    empty = ProductTexts([], [], [], [])
    texts, labels = _with_tree_examples(empty, [], tree)
    examples = dict(zip(texts.title, labels, strict=True))
    assert examples["soprabito"] == "1200"
    assert examples["magliette"] == "1110"
    assert examples["truien"] == "1120"


def test_an_italian_feed_is_covered_by_a_tree_with_italian(tree: CategoryTree) -> None:
    guess = guess_language(["Maglione da uomo nero in cotone", "Cappotto donna con cappuccio"] * 3)
    assert guess.language == "it"
    assert language_warning(guess, tree.languages()) is None
    assert language_warning(guess, LANGUAGES) is not None


def test_a_change_log_keeps_and_merges_extra_languages(tree: CategoryTree, tmp_path: Path) -> None:
    log = _write(
        tmp_path,
        "@tree-change 1 -> 2\n"
        "merge 1110, 1120 -> 1110\n"
        "add 1210 | 1200 | Raincoats | . | - | en: raincoat | fr: imperméable | de: Regenmantel"
        " | es: impermeable | it: impermeabile; impermeabili\n",
        "changes.txt",
    )
    new = apply_changes(tree, load_change_log(log).changes)
    merged = new["1110"]
    assert merged.terms["it"] == ("maglietta", "magliette", "t-shirt", "maglione", "maglioni")
    assert merged.terms["nl"] == ("trui", "truien")
    assert new["1210"].terms["it"] == ("impermeabile", "impermeabili")
    out = tmp_path / "v2.txt"
    dump_tree(new, out)
    assert [dict(n.terms) for n in load_tree(out)] == [dict(n.terms) for n in new]


def test_the_diff_matches_nodes_on_their_extra_words(tmp_path: Path) -> None:
    # The coats leaf comes back under a new id with new English words: only its Italian
    # words (and its place) say it is the same.
    text = TREE.replace(
        f"1200 | 1000 | Coats | . | - | {REQUIRED['1200']}",
        "1201 | 1000 | Overcoats | . | - | en: overcoat | fr: pardessus | de: Überzieher"
        " | es: gabán",
    ).replace("@tree-version 1", "@tree-version 2")
    old = load_tree(_write(tmp_path, TREE, "old.txt"))
    new = load_tree(_write(tmp_path, text, "new.txt"))
    without_it = load_tree(
        _write(tmp_path, text.replace(" | it: cappotto; cappotti; soprabito", ""), "bare.txt")
    )
    linked = {c.old_id: c for c in diff_trees(old, new).correspondences}
    assert linked["1200"].new_ids == ("1201",)
    assert "3 shared" in linked["1200"].evidence
    bare = {c.old_id: c for c in diff_trees(old, without_it).correspondences}
    assert bare["1200"].changes == ("removed",)


def test_generated_change_sets_carry_the_extra_languages(tree: CategoryTree) -> None:
    sizes = ChangeSetSizes(renames=0, moves=0, splits=0, merges=1, additions=1, removals=0)
    for seed in range(6):
        new = generate_change_set(tree, seed, sizes=sizes).new_tree
        added = [n for n in new if n.id not in tree]
        assert added
        for node in added:
            assert "it" in node.terms and node.terms["it"]


EXTRA = ("it", "nl", "pt")  # the shared trees' languages beyond the four required ones


def test_the_shipped_trees_have_italian_dutch_and_portuguese_on_every_node() -> None:
    for version in (1, 2):
        shipped = load_default_tree(version)
        assert shipped.languages() == (*LANGUAGES, *EXTRA)
        for language in EXTRA:
            bare = [n.id for n in shipped if not n.terms.get(language)]
            assert not bare, f"tree v{version}: no {language} terms on {bare[:5]}"


def test_the_shipped_change_log_gives_the_extra_languages_to_its_new_nodes() -> None:
    log = load_change_log(ROOT / "taxonomies" / "changes-v1-v2.txt")
    new_nodes = [node for change in log.changes for node in change.nodes]
    assert new_nodes
    for language in EXTRA:
        assert all(node.terms.get(language) for node in new_nodes), language


def test_the_shipped_trees_dutch_and_portuguese_terms_are_their_own() -> None:
    # Each node's words in a new language are written for it, not copied from a neighbour:
    # no two nodes of tree v1 share the whole list.
    shipped = load_default_tree(1)
    for language in ("nl", "pt"):
        seen: dict[tuple[str, ...], str] = {}
        for node in shipped:
            words = tuple(node.terms[language])
            assert words not in seen, f"{language}: {node.id} repeats {seen[words]}"
            seen[words] = node.id
