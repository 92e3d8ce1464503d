"""Tests for catmap.attributes.restriction: the node decides, keywords where it cannot."""

from __future__ import annotations

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
