"""Tests for catmap.attributes.restriction: the node decides, keywords where it cannot."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from catmap.attributes import (
    RESTRICTION_CAUTION,
    RESTRICTIONS,
    AttributeExtractor,
    BrandDictionary,
    restriction_from_text,
)
from catmap.attributes.restriction import is_generic_node
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree, load_tree

DATA = Path(__file__).parent / "data" / "restriction_labelled.csv"

TREE = """\
@tree-version 1
1000 | - | Food and drink | none | - | en: food | fr: alimentation | de: Lebensmittel | es: x
1010 | 1000 | Drinks | . | - | en: drinks | fr: boissons | de: Getränke | es: bebidas
1011 | 1010 | Wine | . | alcohol | en: wine | fr: vin | de: Wein | es: vino
1012 | 1010 | Juices | . | - | en: juice | fr: jus | de: Saft | es: zumo
2000 | - | Home | none | - | en: home | fr: maison | de: Haus | es: casa
2010 | 2000 | Gifts | . | - | en: gifts | fr: cadeaux | de: Geschenke | es: regalos
2011 | 2010 | Gift sets | . | - | en: gift set | fr: coffret | de: Geschenkset | es: set de regalo
2020 | 2000 | Kitchen | . | - | en: kitchen | fr: cuisine | de: Küche | es: cocina
2021 | 2020 | Kitchen knives | . | - | en: kitchen knife | fr: couteau | de: Messer | es: x
3000 | - | Leisure | none | tobacco | en: leisure | fr: x | de: x | es: x
3010 | 3000 | Smoking | . | - | en: smoking | fr: x | de: x | es: x
3011 | 3010 | Pipe tobacco | . | - | en: pipe tobacco | fr: x | de: x | es: x
"""


@pytest.fixture(scope="module")
def tree(tmp_path_factory: pytest.TempPathFactory) -> CategoryTree:
    path = Path(tmp_path_factory.mktemp("tree")) / "tree.txt"
    path.write_text(TREE, encoding="utf-8")
    return load_tree(path)


@pytest.fixture(scope="module")
def extractor(tree: CategoryTree) -> AttributeExtractor:
    return AttributeExtractor(brands=BrandDictionary([]), tree=tree)


def test_the_node_decides(extractor: AttributeExtractor) -> None:
    assert extractor.extract(Product("1", "Reserve 2019, 75 cl"), "1011").restriction == "alcohol"
    # A leaf that is not restricted stays unrestricted whatever its title says.
    assert extractor.extract(Product("2", "Kitchen knife 20 cm"), "2021").restriction == ""
    assert extractor.extract(Product("3", "Grape juice, wine grapes"), "1012").restriction == ""


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        ("Gift set with a bottle of red wine", "alcohol"),
        ("Coffret whisky et deux verres", "alcohol"),
        ("Geschenkset Rotwein", "alcohol"),
        ("Set de regalo vino tinto", "alcohol"),
        ("E-liquid starter kit", "tobacco"),
        ("Coffret e-liquide menthe", "tobacco"),
        ("Cigar humidor gift set with cigars", "tobacco"),
        ("Nikotin Liquid Set", "tobacco"),
        ("Pocket knife gift box", "weapons"),
        ("Crossbow starter set", "weapons"),
        ("Air rifle gift pack", "weapons"),
        ("Armbrust Geschenkset", "weapons"),
        ("Coffret vodka", "alcohol"),
        ("Navaja de regalo", "weapons"),
        ("Scented candle and bath salts", ""),
    ],
)
def test_a_generic_node_reads_keywords(
    extractor: AttributeExtractor, title: str, restriction: str
) -> None:
    assert extractor.extract(Product("1", title), "2011").restriction == restriction


def test_without_a_node_keywords_are_read(extractor: AttributeExtractor) -> None:
    assert extractor.extract(Product("1", "Vodka 70 cl"), None).restriction == "alcohol"
    assert extractor.extract(Product("1", "Vodka 70 cl"), "2000").restriction == "alcohol"


@pytest.mark.parametrize(
    "title",
    [
        "Crystal wine glasses, set of 6", "Wine red jumper", "Verres à vin", "Weinglas",
        "Knife sharpener", "Alcohol-free sparkling drink", "Nicotine free herbal blend",
        "Copas de vino",
    ],
)
def test_harmless_phrases_holding_a_keyword(title: str) -> None:
    assert restriction_from_text(title) == ("", "")


def test_generic_node_names() -> None:
    assert is_generic_node("Gift sets")
    assert not is_generic_node("Kitchen knives")


def test_the_caution_is_a_constant_that_says_it_is_not_advice() -> None:
    assert "not legal advice" in RESTRICTION_CAUTION
    assert "policy" in RESTRICTION_CAUTION


@given(st.text(max_size=80))
def test_never_raises_and_ignores_case_and_outer_spaces(text: str) -> None:
    plain = restriction_from_text(text)
    assert plain[0] in RESTRICTIONS or plain[0] == ""
    if text.upper().lower() == text.lower():
        assert restriction_from_text(f"  {text.upper()} ")[0] == plain[0]


# -- seven languages, negative cues, leaves ------------------------------------------------


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        ("Grappa di Barolo 70 cl", "alcohol"),
        ("Coltello da caccia con fodero", "weapons"),
        ("Paracetamolo 500 mg 20 compresse", "medicine"),
        ("Sigari toscani confezione da 5", "tobacco"),
        ("Jonge jenever 1 liter", "alcohol"),
        ("Jachtmes met leren schede", "weapons"),
        ("Pijnstiller extra sterk", "medicine"),
        ("Vinho tinto Douro", "alcohol"),
        ("Faca de caça com bainha", "weapons"),
        ("Charutos cubanos caixa de 5", "tobacco"),
        ("Weizenbier 20 x 0,5 l", "alcohol"),
        ("Pfeifentabak 50 g", "tobacco"),
        ("Vibratore ricaricabile", "adult"),
    ],
)
def test_keywords_in_italian_dutch_and_portuguese(title: str, restriction: str) -> None:
    assert restriction_from_text(title)[0] == restriction


@pytest.mark.parametrize(
    "title",
    [
        # The Italian false positives: "puro" is Spanish for a cigar, Italian for "pure".
        "Padella antiaderente in alluminio puro 28 cm",
        "Olio extravergine di oliva puro",
        "Tablet 10 pollici", "Pad per mouse XXL",
        # A flavour, scent, colour or shape named after a restricted good.
        "Whisky-scented candle", "Tobacco brown leather belt", "Cigar-shaped USB lighter",
        "Vodka-flavoured lip balm", "Bougie parfum whisky", "Ceinture couleur tabac",
        "Candela profumata al whisky", "Caramelle al gusto di rum", "Geurkaars whisky",
        "Cinto cor de tabaco", "Bourbon vanilla pods", "Toy sword foam", "Pesce spada fresco",
        # Drinks without alcohol.
        "Cerveza sin alcohol 0,0", "Birra analcolica 33 cl", "Alcoholvrij bier 0,0",
        "Shag rug grey 160 x 230",
    ],
)
def test_traps_are_not_flagged(title: str) -> None:
    assert restriction_from_text(title) == ("", ""), restriction_from_text(title)


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        # A flavour word alone does not undo the drink or the smoke.
        ("Raspberry flavoured vodka 70 cl", "alcohol"),
        ("E-liquide parfum fraise 10 ml", "tobacco"),
        # Negative cues undo drinks, smokes and weapons, not an adult product or a medicine.
        ("Erotic massage candle", "adult"),
    ],
)
def test_negative_cues_are_narrow(title: str, restriction: str) -> None:
    assert restriction_from_text(title)[0] == restriction


def test_an_unrestricted_leaf_still_reads_unmistakable_keywords(
    extractor: AttributeExtractor,
) -> None:
    # The classifier put a hunting knife and a grappa on leaves the tree leaves unrestricted.
    assert extractor.extract(Product("1", "Coltello da caccia"), "2021").restriction == "weapons"
    assert extractor.extract(Product("2", "Grappa 70 cl"), "1012").restriction == "alcohol"
    # General words still do not flag such a leaf.
    assert extractor.extract(Product("3", "Chef knife 20 cm"), "2021").restriction == ""


def test_a_restricted_node_yields_only_to_another_named_good(
    extractor: AttributeExtractor,
) -> None:
    got = extractor.extract(Product("1", "Paracetamolo 500 mg compresse"), "3011")
    assert got.restriction == "medicine"
    assert extractor.extract(Product("2", "Robusto No. 4"), "3011").restriction == "tobacco"
    assert extractor.extract(Product("3", "Tabacco e paracetamolo"), "3011").restriction == (
        "tobacco"
    )


def test_the_labelled_set_covers_every_flag_in_seven_languages() -> None:
    rows = list(csv.DictReader(DATA.open(encoding="utf-8", newline="")))
    languages = {"en", "fr", "de", "es", "it", "nl", "pt"}
    for flag in RESTRICTIONS:
        assert {r["lang"] for r in rows if r["restriction"] == flag} == languages
    assert {r["lang"] for r in rows if r["kind"] == "trap"} == languages
    assert all(r["restriction"] == "" for r in rows if r["kind"] in ("trap", "plain"))
