"""Tests for catmap.attributes.discover: brands learned from a feed, the retailer's own name."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from catmap.attributes import (
    CANDIDATE_MARK,
    AttributeExtractor,
    BrandDictionary,
    FeedBrandLearner,
    brand_is_candidate,
    brand_status,
)
from catmap.errors import ModelNotTrained
from catmap.records import Product

KINDS = ["wool coat", "linen shirt", "ankle boots", "silk scarf", "desk lamp", "tote bag"]


def _products(titles: list[str], brands: list[str] | None = None) -> list[Product]:
    fields = brands or [""] * len(titles)
    pairs = zip(titles, fields, strict=True)
    return [Product(str(i), t, brand=b) for i, (t, b) in enumerate(pairs)]


@pytest.mark.parametrize(
    ("pattern", "titles", "new_title"),
    [
        ("by", [f"{k.capitalize()} by Orvanti" for k in KINDS[:4]], "Rain jacket by Orvanti"),
        ("colon", [f"Quillar: {k}" for k in KINDS[:4]], "Quillar: rain jacket"),
        ("pipe", [f"{k.capitalize()} | Tessaro" for k in KINDS[:4]], "Rain jacket | Tessaro"),
        ("dash", [f"Dravik - {k}" for k in KINDS[:4]], "Dravik - rain jacket"),
        ("brackets", [f"{k.capitalize()} (Ulmora)" for k in KINDS[:4]], "Rain jacket (Ulmora)"),
        ("lead", [f"Benchlow {k}" for k in KINDS[:4]], "Benchlow rain jacket"),
    ],
)
def test_each_positional_pattern_learns_a_recurring_brand(
    pattern: str, titles: list[str], new_title: str
) -> None:
    learner = FeedBrandLearner().fit(_products(titles))
    match = learner.find_in_title(new_title)
    assert match is not None
    assert match.evidence.startswith(f"title {pattern} ")
    assert brand_is_candidate(match.evidence)


def test_a_name_seen_twice_is_not_learned() -> None:
    learner = FeedBrandLearner(min_products=3).fit(
        _products(["Orvanti wool coat", "Orvanti linen shirt", "Plain mug"])
    )
    assert learner.learned_ == {}
    assert learner.find_in_title("Orvanti desk lamp") is None


def test_a_name_on_one_kind_of_product_only_is_not_learned() -> None:
    titles = [f"Marrow sofa cover {i}" for i in range(6)]
    products = [Product(str(i), t, category_path=("Home", "Sofa covers")) for i, t in
                enumerate(titles)]
    assert FeedBrandLearner().fit(products).learned_ == {}


def test_agreement_with_the_brand_field_is_enough() -> None:
    products = _products(["Wool coat", "Corvish linen shirt"], ["Corvish", ""])
    learner = FeedBrandLearner().fit(products)
    match = learner.find_in_title("Corvish linen shirt")
    assert match is not None and match.brand == "Corvish"


def test_ordinary_words_at_the_start_are_not_brands() -> None:
    titles = [
        "New wool coat", "New linen shirt", "New ankle boots",
        "Black wool coat", "Black linen shirt", "Black ankle boots",
        "Women's wool coat", "Women's linen shirt", "Women's silk scarf",
        "Klappbar desk lamp", "Klappbar tote bag", "Klappbar chair", "Chair klappbar",
        "Desk klappbar", "Table klappbar", "Stool klappbar",
    ]
    assert FeedBrandLearner().fit(_products(titles)).learned_ == {}


def test_two_word_brand_stays_whole_and_spellings_join() -> None:
    titles = [f"Bench Low {k}" for k in KINDS] + ["BENCH-LOW rain jacket", "Benchlow cap"]
    learner = FeedBrandLearner().fit(_products(titles))
    assert set(learner.learned_.values()) == {"Bench Low"}
    for title in ("Benchlow beanie", "BENCH LOW mittens", "Bench-Low gloves"):
        match = learner.find_in_title(title)
        assert match is not None and match.brand == "Bench Low"


def test_a_one_letter_typo_of_a_learned_brand_is_found() -> None:
    learner = FeedBrandLearner().fit(_products([f"Benchlow {k}" for k in KINDS]))
    match = learner.find_in_title("Bnechlow rain jacket")
    assert match is not None and match.brand == "Benchlow"


def test_a_learned_brand_elsewhere_in_the_title_is_found() -> None:
    learner = FeedBrandLearner().fit(_products([f"Benchlow {k}" for k in KINDS]))
    match = learner.find_in_title("Rain jacket Benchlow navy")
    assert match is not None
    assert match.evidence.startswith("title learned")


def test_field_values_resolve_to_one_canonical_brand() -> None:
    fields = ["Quillar SAS", "QUILLAR", "Quillar", "Quillar®", "Quillar", "Quilar"]
    learner = FeedBrandLearner().fit(_products(KINDS, fields))
    extractor = AttributeExtractor(brands=BrandDictionary([]), tree=None, feed_brands=learner)
    got = {extractor.extract(p, None).brand for p in _products(KINDS, fields)}
    assert got == {"Quillar"}
    evidence = extractor.extract(Product("x", "Cap", brand="QUILLAR"), None).brand_evidence
    # The prefix later stages look for stays.
    assert evidence.startswith("field not in dictionary")
    assert brand_is_candidate(evidence)


def test_a_confirmed_brand_is_no_longer_a_candidate() -> None:
    learner = FeedBrandLearner().fit(_products(KINDS, ["Quillar"] * len(KINDS)))
    learner.registry_.confirm("Quillar")
    match = learner.resolve_field("QUILLAR")
    assert match is not None and not brand_is_candidate(match.evidence)


def test_a_dictionary_brand_wins_over_learning() -> None:
    dictionary = BrandDictionary.from_rows([("Vellomar", "", "1000")])
    learner = FeedBrandLearner(dictionary=dictionary).fit(
        _products([f"Vellomar {k}" for k in KINDS])
    )
    extractor = AttributeExtractor(brands=dictionary, tree=None, feed_brands=learner)
    got = extractor.extract(Product("1", "Vellomar rain jacket"), None)
    assert (got.brand, got.brand_evidence) == ("Vellomar", "title exact 'vellomar'")


def test_a_feed_writing_its_own_brand_often_is_not_taken_for_a_typo() -> None:
    dictionary = BrandDictionary.from_rows([("Vellomar", "", "1000")])
    fields = ["Vellomir"] * 6
    learner = FeedBrandLearner(dictionary=dictionary).fit(_products(KINDS, fields))
    extractor = AttributeExtractor(brands=dictionary, tree=None, feed_brands=learner)
    assert extractor.extract(Product("1", "Cap", brand="Vellomir"), None).brand == "Vellomir"
    # Without the feed's evidence, the dictionary reads it as a typo.
    plain = AttributeExtractor(brands=dictionary, tree=None)
    assert plain.extract(Product("1", "Cap", brand="Vellomir"), None).brand == "Vellomar"


# The 30% share over at least three departments: common practice, no source.
def test_the_retailer_name_on_most_products_is_reported() -> None:
    fields = ["Shopmart"] * 5 + ["Orvanti", "Quillar", "", ""]
    paths = [("Home",), ("Garden",), ("Toys",), ("Home",), ("Fashion",)] + [("Fashion",)] * 4
    products = [
        Product(str(i), f"Item {i}", brand=b, category_path=p)
        for i, (b, p) in enumerate(zip(fields, paths, strict=True))
    ]
    learner = FeedBrandLearner().fit(products)
    assert learner.retailer_ is not None
    assert (learner.retailer_.name, learner.retailer_.reason) == ("Shopmart", "share")
    assert learner.retailer_.share == pytest.approx(5 / 7, abs=1e-3)
    assert learner.retailer_.departments == 4
    # The feed's setting decides what it means.
    keep = AttributeExtractor(brands=BrandDictionary([]), tree=None, feed_brands=learner)
    assert keep.extract(products[0], None).brand == "Shopmart"
    no_brand = FeedBrandLearner(retailer_as_no_brand=True).fit(products)
    drop = AttributeExtractor(brands=BrandDictionary([]), tree=None, feed_brands=no_brand)
    assert drop.extract(products[0], None).brand == ""


def test_a_single_brand_shop_in_one_department_is_not_a_retailer_name() -> None:
    products = [Product(str(i), f"Item {i}", brand="Orvanti", category_path=("Fashion",))
                for i in range(9)]
    assert FeedBrandLearner().fit(products).retailer_ is None


def test_the_feed_name_in_the_brand_field_is_reported() -> None:
    products = _products(KINDS, ["Tallbury"] + [""] * (len(KINDS) - 1))
    learner = FeedBrandLearner(feed="tallbury-export").fit(products)
    assert learner.retailer_ is not None and learner.retailer_.reason == "feed name"


def test_using_it_before_fit_is_an_error() -> None:
    with pytest.raises(ModelNotTrained, match="call fit"):
        FeedBrandLearner().find_in_title("Benchlow coat")


def test_bad_parameters_are_refused_in_fit() -> None:
    with pytest.raises(ValueError, match="min_products"):
        FeedBrandLearner(min_products=0).fit([])


@settings(max_examples=50)
@given(st.lists(st.tuples(st.text(max_size=40), st.text(max_size=15)), max_size=20),
       st.text(max_size=60))
def test_never_raises_on_any_strings(rows: list[tuple[str, str]], title: str) -> None:
    products = [Product(str(i), t, brand=b) for i, (t, b) in enumerate(rows)]
    learner = FeedBrandLearner(min_products=1, min_groups=1).fit(products)
    learner.find_in_title(title)
    learner.resolve_field(title)


def test_the_learned_registry_keeps_departments_of_the_brand_field() -> None:
    products = [
        Product(str(i), f"Item {i}", brand="Quillar", category_path=(dept,))
        for i, dept in enumerate(["Home", "Home", "Garden"])
    ]
    brand = FeedBrandLearner().fit(products).registry_.resolve("quillar")
    assert brand is not None and brand.departments == {"Home": 2, "Garden": 1}


def test_attribute_labels_and_part_numbers_are_no_brands() -> None:
    # "Label: value - product" and "P/N code product" recur in a brand's place across every
    # kind of product; they label a value (common practice, no source).
    kinds = ["drill", "kettle", "lamp", "scarf", "mug", "towel"]
    products = [
        *(Product(f"s{i}", f"Style: cordless - {k}") for i, k in enumerate(kinds)),
        *(Product(f"g{i}", f"Größe: 41 / Farbe: rot - {k}") for i, k in enumerate(kinds)),
        *(Product(f"p{i}", f"P/N H6519{i} {k}") for i, k in enumerate(kinds)),
        *(Product(f"d{i}", f"Dorvanta {k}") for i, k in enumerate(kinds)),
    ]
    learner = FeedBrandLearner(min_products=3).fit(products)
    assert set(learner.learned_.values()) == {"Dorvanta"}
    assert learner.find_in_title("Style: corded - drill") is None
    assert learner.find_in_title("P/N X1 kettle") is None


def test_an_ordinary_opening_word_is_no_typo_of_a_learned_brand() -> None:
    products = [Product(str(i), f"Linden {k}") for i, k in enumerate(["mug", "lamp", "scarf"])]
    learner = FeedBrandLearner(min_products=3).fit(products)
    assert learner.find_in_title("Lindan teapot") is not None  # one letter off: a typo
    assert learner.find_in_title("linen tea towel") is None  # "linen" is a plain word


def test_brand_status_reads_the_evidence() -> None:
    assert brand_status("", "no brand found") == "none"
    assert brand_status("Dorvanta", f"title lead 'dorvanta' {CANDIDATE_MARK}") == "candidate"
    assert brand_status("Acme", "field not in dictionary 'Acme'") == "candidate"
    assert brand_status("Benchlow", "field not in dictionary 'bench low' → 'Benchlow'") == (
        "dictionary"
    )
    assert brand_status("Vellomar", "title exact 'vellomar'") == "dictionary"
    assert brand_status("Dorvanta", "title exact 'dorvanta'", {"Dorvanta"}) == "confirmed"


def test_a_spelling_rejected_as_no_brand_is_never_learned_or_read() -> None:
    products = [
        *(Product(f"a{i}", f"Assorted {k}", brand="Assorted") for i, k in
          enumerate(["mug", "lamp", "scarf", "towel"])),
        *(Product(f"d{i}", f"Dorvanta {k}") for i, k in enumerate(["mug", "lamp", "scarf"])),
    ]
    learner = FeedBrandLearner(min_products=3, not_brands=["Assorted"]).fit(products)
    assert learner.registry_.resolve("Assorted") is None
    extractor = AttributeExtractor(
        brands=BrandDictionary([]), tree=None, feed_brands=learner, not_brands=["ASSORTED"]
    )
    got = extractor.extract(products[0], None)
    assert (got.brand, got.brand_status) == ("", "none")
    got = extractor.extract(products[5], None)
    assert (got.brand, got.brand_status) == ("Dorvanta", "candidate")


def test_a_learned_brand_written_in_lower_case_mid_title_is_the_word() -> None:
    # The feed writes the brand with a capital; "pinecone" in running text is the word.
    products = _products([f"Pinecone {k}" for k in KINDS[:4]], ["Pinecone", "Pinecone", "", ""])
    learner = FeedBrandLearner().fit(products)
    assert learner.find_in_title("Wreath with real pinecone and ribbon") is None
    assert learner.find_in_title("Pinecone garland") is not None
    assert learner.find_in_title("Wreath with real Pinecone cones") is not None
    assert learner.find_in_title("Lunch box, kids' size PINECONE") is not None
    # A title written all in lower case says nothing about case.
    assert learner.find_in_title("wreath with real pinecone") is not None


def test_a_title_lead_whose_products_name_brand_after_brand_is_no_brand() -> None:
    # Spanish titles open with the product's own word ("Juego de ...", "Funda ..."), across
    # several of the shop's sections, and the brand field names a different brand on each:
    # those words are not brands.
    brands = ["Zorvalia", "Quentrix", "Marbelo", "Tuvesca", "Ondrillo", "Peralux"]
    sections = ["dormitorio", "cocina", "juegos de mesa", "baño", "comedor", "móviles"]
    rows: list[tuple[str, str, str]] = []
    for i, brand in enumerate(brands):
        rows.append((f"Juego de piezas {brand} azul {i}", brand, sections[i]))
        rows.append((f"Funda protectora {brand} gris {i}", brand, sections[-1 - i]))
        rows.append((f"Ventilador de techo {brand} {i}", brand, "clima"))
    # A product line whose products all name one brand in the field stays a candidate.
    for i, kind in enumerate(KINDS):
        rows.append((f"Lunaris {kind} {i}", "Peralux", sections[i]))
    products = [
        Product(str(n), title, brand=brand, category_path=("Tienda", section))
        for n, (title, brand, section) in enumerate(rows)
    ]
    learner = FeedBrandLearner().fit(products)
    assert set(learner.learned_) == {"lunaris"}
