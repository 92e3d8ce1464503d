"""Tests for catmap.feeds.colour: colour words in seven languages → catmap's families."""

from __future__ import annotations

import colorsys

import pytest
import webcolors
from hypothesis import given
from hypothesis import strategies as st

from catmap.attributes import FAMILIES, AttributeExtractor, BrandDictionary, colour_family, fold
from catmap.feeds.colour import COLOUR_WORDS
from catmap.records import Product


@pytest.mark.parametrize(
    ("word", "family"),
    [
        ("vieux rose", "pink"), ("navy", "blue"), ("anthracite", "grey"), ("bordeaux", "red"),
        ("khaki", "green"), ("taupe", "brown"), ("écru", "beige"), ("dunkelblau", "blue"),
        ("azul marino", "blue"), ("off-white", "white"), ("rose gold", "gold"),
        ("Weiß", "white"), ("gris chiné", "grey"), ("Bleu Marine", "blue"), ("rosa palo", "pink"),
        ("jaune moutarde", "yellow"), ("Mehrfarbig", "multicolour"), ("plateado", "silver"),
        ("burdeos", "red"), ("lila", "purple"), ("marrón", "brown"), ("terracotta", "orange"),
        ("Blu navy", "blue"), ("grigio scuro", "grey"), ("donkerblauw", "blue"),
        ("Zwarte", "black"), ("cinza escuro", "grey"), ("Azul marinho", "blue"),
        ("verde oliva", "green"), ("roxo", "purple"), ("prateado", "silver"),
    ],
)
def test_colour_field_words(word: str, family: str) -> None:
    assert colour_family(word)[0] == family


def test_the_first_of_several_field_colours_is_the_main_one() -> None:
    # The first colour named is the main colour: common practice, no source.
    family, evidence = colour_family("Navy/White")
    assert family == "blue"
    assert "main colour of 2" in evidence


@pytest.mark.parametrize(
    "title", ["Gold plated charm bracelet", "Bague argent 925", "Black ink pens, pack of 10"]
)
def test_materials_and_inks_are_not_the_colour(title: str) -> None:
    assert colour_family("", title) == ("", "")


def test_an_often_a_product_word_ending_the_item_is_a_colour() -> None:
    assert colour_family("", "Robot vacuum marine #1735")[0] == "blue"
    assert colour_family("", "Leather backpack 40L cognac")[0] == "brown"


def test_field_first_then_title() -> None:
    assert colour_family("Noir", "Red wool coat")[0] == "black"
    assert colour_family("", "Red wool coat")[0] == "red"
    assert colour_family("Sizzle", "Red wool coat")[0] == "red"


@pytest.mark.parametrize(
    "title", ["Orange juice 1 l", "Face cream 50 ml", "Olive oil", "Rosé wine"]
)
def test_words_that_are_often_products_are_not_read_in_titles(title: str) -> None:
    assert colour_family("", title) == ("", "")


def test_every_family_is_declared() -> None:
    assert set(COLOUR_WORDS) == set(FAMILIES)


def test_no_word_belongs_to_two_families() -> None:
    seen: dict[str, str] = {}
    for family, by_lang in COLOUR_WORDS.items():
        for words in by_lang.values():
            for word in words:
                key = fold(word)
                assert seen.setdefault(key, family) == family, word


def _consistent(family: str, hue: float, lightness: float, saturation: float) -> bool:
    """A simple rule of thumb for hue (degrees) and HLS lightness/saturation (0..1)."""
    def within(low: float, high: float) -> bool:
        return low <= hue <= high if low <= high else hue >= low or hue <= high

    if family == "black":
        return lightness < 0.2
    if family == "white":
        return lightness > 0.85
    if family in ("grey", "silver"):
        return saturation < 0.25 or lightness < 0.35 and saturation < 0.45
    if family == "beige":
        return within(15, 65) and lightness > 0.6
    if family == "brown":
        return within(0, 50) and lightness < 0.75
    if family == "red":
        return within(335, 15) and saturation > 0.3
    if family == "pink":
        return within(290, 20) and lightness > 0.4
    if family == "orange":
        return within(5, 45)
    if family in ("yellow", "gold"):
        return within(35, 65)
    if family == "green":
        return within(55, 185)
    if family == "blue":
        return within(170, 250)
    if family == "purple":
        return within(230, 330)
    return False


def test_css_named_colours_agree_with_their_rgb() -> None:
    # CSS Color Module Level 3/4 named colours, via webcolors (names and hex values).
    english = {
        fold(word): family for family, by_lang in COLOUR_WORDS.items() for word in by_lang["en"]
    }
    checked = 0
    for name in webcolors.names("css3"):
        if name not in english:
            continue
        red, green, blue = webcolors.name_to_rgb(name, spec="css3")
        hue, lightness, saturation = colorsys.rgb_to_hls(red / 255, green / 255, blue / 255)
        family = english[name]
        assert _consistent(family, hue * 360, lightness, saturation), (name, family)
        checked += 1
    assert checked >= 60


@given(st.text(max_size=40), st.text(max_size=80))
def test_never_raises_and_ignores_case_and_outer_spaces(colour: str, title: str) -> None:
    plain = colour_family(colour, title)
    assert plain[0] in FAMILIES or plain[0] == ""
    if colour.upper().lower() == colour.lower() and title.upper().lower() == title.lower():
        assert colour_family(f"  {colour.upper()} ", f" {title.upper()}  ")[0] == plain[0]


def test_every_css_named_colour_has_a_family() -> None:
    # A feed's colour field may hold any CSS named colour ("lavenderblush", "darkslateblue").
    missing = [name for name in webcolors.names("css3") if not colour_family(name)[0]]
    assert missing == []
    assert colour_family("LavenderBlush")[0] == "white"
    assert colour_family("darkslateblue")[0] == "blue"


@pytest.mark.parametrize(
    ("colour", "title", "family"),
    [
        ("", "Chaussettes multicolores lot de 5", "multicolour"),
        ("", "Zapatos azules de piel", "blue"),
        ("", "Pantalones grises de lana", "grey"),
        ("rosas", "", "pink"),
    ],
)
def test_french_and_spanish_plural_colour_words(colour: str, title: str, family: str) -> None:
    assert colour_family(colour, title)[0] == family


def test_the_plural_of_an_often_a_product_word_stays_one() -> None:
    assert colour_family("", "Bouquet de roses séchées") == ("", "")


@pytest.mark.parametrize(
    ("title", "family"),
    [
        ("Running shoe RED-42 edition", ""),
        ("Desk lamp model BLACK2000", ""),
        ("Sneakers NAVY-2 with white sole", "white"),
        ("Red running shoe 42", "red"),
    ],
)
def test_a_colour_word_inside_a_model_code_is_no_colour(title: str, family: str) -> None:
    assert colour_family("", title)[0] == family
    extractor = AttributeExtractor(brands=BrandDictionary([]), tree=None)
    assert extractor.extract(Product("1", title), None).colour_family == family


@pytest.mark.parametrize(
    ("title", "family"),
    [
        ("Handtasche mit roten Streifen", "red"),
        ("Schwarzes Lederportemonnaie", "black"),
        ("Kissen mit bunten Punkten", "multicolour"),
        ("Nature sounds speaker", ""),
    ],
)
def test_german_declined_colour_words(title: str, family: str) -> None:
    assert colour_family("", title)[0] == family
