"""Tests for catmap.attributes.brand: normalising, dictionary look-up, title search, candidates."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from catmap.attributes import (
    AttributeExtractor,
    BrandCandidates,
    BrandDictionary,
    BrandFinder,
    fold,
    normalize_brand,
)
from catmap.attributes.brand import append_brand
from catmap.errors import InputError
from catmap.records import Product

ROWS = [
    ("Vellomar", "VELLOMAR;Vello Mar", "1000"),
    ("Blue Harbor", "", "1000;1500"),
    ("Copper Vale", "", "2000"),
    ("Copper Vale Home", "", "2000"),
    ("Acme", "", "1000"),
    ("Lantern", "", "2000"),
    ("Lady Corvell", "LADY CORVELL", "1000"),
    ("Zev", "Z.E.V.", "1000"),
    ("Brannick & Co", "Brannick and Co", "1000"),
]


@pytest.fixture()
def brands() -> BrandDictionary:
    return BrandDictionary.from_rows(ROWS, common_words=["lantern", "garden", "light"])


# Legal-form suffixes: common practice, no source (the company forms of each country).
@pytest.mark.parametrize(
    "written",
    [
        "Vellomar Inc.", "Vellomar Inc", "Vellomar Ltd", "Vellomar Ltd.", "Vellomar LLC",
        "Vellomar GmbH", "Vellomar AG", "Vellomar KG", "Vellomar SA", "Vellomar S.A.",
        "Vellomar SAS", "Vellomar S.A.S.", "Vellomar SARL", "Vellomar SL", "Vellomar S.L.",
        "Vellomar BV", "Vellomar B.V.", "Vellomar NV", "Vellomar Co.", "Vellomar & Co",
        "Vellomar Corp.", "Vellomar Srl", "Vellomar SpA", "Vellomar S.p.A.", "Vellomar Oy",
        "Vellomar AB", "Vellomar plc", "Vellomar, Ltd.", "VELLOMAR GMBH & CO. KG",
        "Vellomar®", "Vellomar™", "©Vellomar", "  vellomar  ", "Véllomar",
    ],
)
def test_legal_suffixes_marks_case_and_accents_are_removed(written: str) -> None:
    assert normalize_brand(written) == "vellomar"


def test_a_suffix_alone_is_kept_as_the_name() -> None:
    assert normalize_brand("Co") == "co"
    assert normalize_brand("AB") == "ab"


@pytest.mark.parametrize("written", ["Blue-Harbor", "blue harbor", "BlueHarbor", "BLUE HARBOR®"])
def test_spellings_with_and_without_joiners_meet(brands: BrandDictionary, written: str) -> None:
    assert brands.lookup_exact(written) == "Blue Harbor"


@pytest.mark.parametrize("written", ["Brannick & Co", "Brannick and Co", "BRANNICK+CO", "Brannick"])
def test_ampersand_and_and_are_one(brands: BrandDictionary, written: str) -> None:
    assert brands.lookup_exact(written) == "Brannick & Co"


def test_initials_with_dots_match_the_short_name(brands: BrandDictionary) -> None:
    assert brands.lookup_exact("Z.E.V.") == "Zev"


def test_field_exact_and_fuzzy_evidence(brands: BrandDictionary) -> None:
    finder = BrandFinder(brands)
    exact = finder.find("VELLOMAR", "")
    assert (exact.brand, exact.evidence) == ("Vellomar", "field exact")
    fuzzy = finder.find("Vellomarr", "")
    assert fuzzy.brand == "Vellomar"
    assert fuzzy.evidence.startswith("field fuzzy ")
    assert fuzzy.evidence.endswith("'Vellomarr'")
    assert fuzzy.confidence < exact.confidence


@pytest.mark.parametrize("word", ["Ace", "Acm", "Zed", "Zevv", "Acne"])
def test_short_names_only_match_exactly(brands: BrandDictionary, word: str) -> None:
    assert brands.lookup_fuzzy(word) is None
    assert BrandFinder(brands).find(word, "").brand != "Acme"


def test_unknown_field_value_is_kept_with_low_confidence(brands: BrandDictionary) -> None:
    match = BrandFinder(brands).find("Quorvane", "")
    assert match.brand == "Quorvane"
    assert match.confidence <= 0.5
    assert "not in dictionary" in match.evidence


def test_retailer_name_in_the_field_sends_us_to_the_title(brands: BrandDictionary) -> None:
    finder = BrandFinder(brands, retailer_names=["Shopwell Stores"])
    match = finder.find("SHOPWELL STORES", fold("Linen shirt by Vellomar"))
    assert match.brand == "Vellomar"
    assert match.evidence == "title exact 'vellomar'"
    assert BrandFinder(brands).find("Shopwell Stores", "").brand == "Shopwell Stores"


def test_title_prefers_the_longest_match(brands: BrandDictionary) -> None:
    match = BrandFinder(brands).find("", fold("Copper Vale Home cushion cover"))
    assert match.brand == "Copper Vale Home"


def test_title_prefers_the_match_nearest_the_start(brands: BrandDictionary) -> None:
    match = BrandFinder(brands).find("", fold("Blue Harbor jacket, not Vellomar"))
    assert match.brand == "Blue Harbor"


def test_title_matches_whole_words_only(brands: BrandDictionary) -> None:
    assert BrandFinder(brands).find("", fold("Acmeplus shirt")).brand == ""
    assert BrandFinder(brands).find("", fold("Classic Vellomarine shirt")).brand == ""


def test_brand_that_is_a_common_word_counts_only_at_the_start(brands: BrandDictionary) -> None:
    finder = BrandFinder(brands)
    assert finder.find("", fold("Solar garden lantern")).brand == ""
    assert finder.find("", fold("Lantern solar garden light")).brand == "Lantern"


def test_misspelt_brand_at_the_start_of_a_title(brands: BrandDictionary) -> None:
    match = BrandFinder(brands).find("", fold("Velomar wool coat"))
    assert match.brand == "Vellomar"
    assert match.evidence.startswith("title fuzzy ")


def test_description_is_read_when_the_title_names_no_brand(brands: BrandDictionary) -> None:
    extractor = AttributeExtractor(brands=brands, tree=None)
    product = Product("1", "Wool coat", description="A warm coat made by Blue Harbor.")
    attributes = extractor.extract(product, None)
    assert attributes.brand == "Blue Harbor"
    assert attributes.brand_evidence.startswith("description exact")


def test_from_csv_and_bad_header(tmp_path: Path) -> None:
    good = tmp_path / "brands.csv"
    good.write_text("brand,variants,departments\nVellomar,Vello Mar;VLM,1000;1500\n", "utf-8")
    dictionary = BrandDictionary.from_csv(good)
    assert dictionary.lookup_exact("vello-mar") == "Vellomar"
    assert dictionary.departments("Vellomar") == ("1000", "1500")
    bad = tmp_path / "bad.csv"
    bad.write_text("name,variants\nVellomar,\n", "utf-8")
    with pytest.raises(InputError, match="no 'brand' column"):
        BrandDictionary.from_csv(bad)


def test_append_brand_writes_generated_variants(tmp_path: Path) -> None:
    path = tmp_path / "brands.csv"
    entry = append_brand(path, "Quill Reach", variants=["Quil Reach"], departments=["2000"])
    assert "QUILL REACH" in entry.variants and "QuillReach" in entry.variants
    assert any(v.endswith("GmbH") for v in entry.variants)
    reloaded = BrandDictionary.from_csv(path)
    assert reloaded.lookup_exact("quill-reach ltd") == "Quill Reach"
    assert reloaded.lookup_exact("Quil Reach") == "Quill Reach"
    with pytest.raises(InputError, match="already in the brand dictionary"):
        append_brand(path, "QUILLREACH")


def test_candidates_count_repeating_unknown_names(brands: BrandDictionary) -> None:
    collector = BrandCandidates(brands, retailer_names=["Shopwell"])
    for i in range(6):
        collector.add("", f"Dorvanta wool scarf {i}")
        collector.add("Quorvane", f"Jacket {i}")
        collector.add("Vellomar", f"Coat {i}")  # known
        collector.add("Shopwell", f"Mug {i}")  # the retailer
        collector.add("", f"The classic mug {i}")  # common word first
    collector.add("", "Rarename lamp")
    found = {c.name: c for c in collector.candidates(min_count=5)}
    assert set(found) == {"Dorvanta", "Quorvane"}
    assert found["Dorvanta"].count == 6
    assert found["Dorvanta"].source == "title"
    assert len(found["Quorvane"].examples) == 3


@given(st.text())
def test_normalize_brand_never_raises_and_is_idempotent(text: str) -> None:
    key = normalize_brand(text)
    assert normalize_brand(key) == key


@given(st.text(max_size=40), st.text(max_size=60))
def test_finder_never_raises_and_ignores_case_and_outer_spaces(field: str, title: str) -> None:
    brands = BrandDictionary.from_rows(ROWS)
    finder = BrandFinder(brands)
    plain = finder.find(field, fold(title))
    shouted = finder.find(f"  {field.upper()} ", fold(f" {title.upper()}  "))
    # Unicode upper-casing can change letters (e.g. "ß" → "SS"); compare only where it doesn't.
    if field.upper().lower() == field.lower() and title.upper().lower() == title.lower():
        if plain.evidence.startswith(("field exact", "title")) or not field.strip():
            assert plain.brand == shouted.brand


@pytest.mark.parametrize("value", ["No brand", "n/a", "Sans marque", "Ohne Marke", "Sin marca"])
def test_no_brand_placeholders_count_as_an_empty_field(
    brands: BrandDictionary, value: str
) -> None:
    # Placeholder words retailers write for "no brand": common practice, no source.
    assert BrandFinder(brands).find(value, fold("Wool scarf by Vellomar")).brand == "Vellomar"
    assert BrandFinder(brands).find(value, fold("Wool scarf")).brand == ""
    collector = BrandCandidates(brands)
    for i in range(6):
        collector.add(value, f"Scarf {i}")
    assert collector.candidates(min_count=5) == []


@pytest.mark.parametrize(
    ("title", "brand"),
    [
        ("Wool coat by Velomar", "Vellomar"),
        ("Women's wool coat by VELOMAR", "Vellomar"),
        ("Navy Bleu Harbor rain jacket", "Blue Harbor"),
        ("Slim jeans | Coper Vale Home | black", "Copper Vale Home"),
    ],
)
def test_misspelt_capitalised_brand_away_from_the_start(
    brands: BrandDictionary, title: str, brand: str
) -> None:
    match = BrandFinder(brands).from_text(fold(title), "title", title)
    assert match is not None and match.brand == brand
    assert match.evidence.startswith("title fuzzy ")
    start, end = match.spans[0]
    assert brands.lookup_fuzzy(fold(title)[start:end]) is not None


def test_lower_case_words_away_from_the_start_are_not_read_fuzzily(
    brands: BrandDictionary,
) -> None:
    title = "Wool coat by velomar"
    assert BrandFinder(brands).from_text(fold(title), "title", title) is None


def test_fuzzy_pass_leaves_other_attributes_words_alone() -> None:
    # "Señora" is one letter from the invented brand "Serora"; it is an audience word.
    dictionary = BrandDictionary.from_rows([("Serora", "", "1000"), ("Navarro Lune", "", "1000")])
    extractor = AttributeExtractor(brands=dictionary, tree=None)
    attributes = extractor.extract(Product("1", "tirantes nailon piel Señora 120 cm"), None)
    assert (attributes.brand, attributes.who) == ("", "female")
    exact = extractor.extract(Product("2", "tirantes nailon Serora"), None)
    assert exact.brand == "Serora"


def test_the_extractor_reads_capitalised_brands_away_from_the_start(
    brands: BrandDictionary,
) -> None:
    extractor = AttributeExtractor(brands=brands, tree=None)
    attributes = extractor.extract(Product("1", "Ladies wool coat by Velomar"), None)
    assert attributes.brand == "Vellomar"
    assert attributes.who == "female"
