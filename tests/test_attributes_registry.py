"""Tests for catmap.attributes.registry: brand keys, display names, typo clusters, plain data."""

from __future__ import annotations

import json

import pytest
from hypothesis import given
from hypothesis import strategies as st

from catmap.attributes import BrandDictionary, BrandRegistry, brand_key, clean_spelling
from catmap.attributes.registry import CANDIDATE, CONFIRMED
from catmap.errors import InputError


# Legal forms of the seven languages' markets; common practice, no source.
@pytest.mark.parametrize(
    "written",
    [
        "Bench Low", "Bench-Low", "Benchlow", "BENCHLOW", "benchlow", "Bench Low®",
        "Benchlow™", "©Benchlow", "Benchlow SAS", "Benchlow SARL", "Benchlow GmbH",
        "Benchlow AG", "Benchlow Ltd.", "Benchlow Ltd", "Benchlow LLC", "Benchlow Inc.",
        "Benchlow S.A.", "Benchlow S.L.", "Benchlow S.p.A.", "Benchlow S.r.l.", "Benchlow B.V.",
        "Benchlow N.V.", "Benchlow Lda", "Benchlow Ltda", "Benchlow Co.", "Benchlow & Co.",
        "Benchlow & Cie", "Benchlow y Cía", "BENCHLOW GMBH & CO. KG", "BenchlowTM",
        "BENCHLOWTM", "Benchlow(R)", "  bench   low  ",
    ],
)
def test_one_key_for_marks_legal_forms_case_spacing_and_hyphens(written: str) -> None:
    assert brand_key(written) == "benchlow"


def test_a_word_that_only_looks_like_a_mark_stays() -> None:
    assert brand_key("ATM") == "atm"


@pytest.mark.parametrize(
    ("written", "shown"),
    [
        ("Bench-Low S.A.S.®", "Bench-Low"),
        ("Vellomar, Ltd.", "Vellomar"),
        ("Vellomar GMBH & CO. KG", "Vellomar"),
        ("Zalette & Co. Ltd", "Zalette"),
        ("Co", "Co"),
    ],
)
def test_clean_spelling_keeps_case_and_drops_marks_and_forms(written: str, shown: str) -> None:
    assert clean_spelling(written) == shown


def test_a_partnership_ending_can_stay_in_the_display() -> None:
    assert clean_spelling("Zalette & Co. Ltd", keep_partnership=True) == "Zalette & Co."
    assert clean_spelling("ZALETTE & CO.", keep_partnership=True) == "ZALETTE & CO."


def test_spellings_join_and_the_most_frequent_clean_spelling_is_shown() -> None:
    registry = BrandRegistry()
    for written, n in (("BENCHLOW®", 5), ("Bench-Low", 2), ("Benchlow SAS", 3), ("Benchlow", 2)):
        registry.observe(written, feed="f1", count=n)
    assert len(registry) == 1
    brand = registry.resolve("bench low")
    assert brand is not None
    # "BENCHLOW" (5) and "Benchlow" (3 + 2) are one spelling in two cases (10 of 12): shown
    # in mixed case.
    assert brand.name == "Benchlow"
    assert brand.count == 12
    assert brand.status == CANDIDATE


def test_the_dictionary_name_comes_first_and_is_confirmed() -> None:
    dictionary = BrandDictionary.from_rows([("Blue Harbor", "", "1000")])
    registry = BrandRegistry(dictionary)
    for _ in range(9):
        registry.observe("BLUEHARBOR GmbH", feed="f1")
    registry.observe("Blue Harbour", feed="f2")  # one typo of a dictionary name joins it
    brand = registry.resolve("blueharbor")
    assert brand is not None
    assert (brand.name, brand.status, brand.count) == ("Blue Harbor", CONFIRMED, 10)
    assert registry.canonical("Blue Harbour") == "Blue Harbor"


def test_no_brand_values_are_not_brands() -> None:
    registry = BrandRegistry()
    for value in ("n/a", "No brand", "Sans marque", "", "  "):
        assert registry.observe(value) is None
    assert len(registry) == 0


def test_typos_cluster_within_a_feed_and_across_feeds() -> None:
    registry = BrandRegistry()
    registry.observe("Benchlow", feed="f1", count=40, department="1000")
    registry.observe("Bencnlow", feed="f1", count=2, department="1000")  # substitution
    registry.observe("Bnechlow", feed="f2", count=7, department="1000")  # swap, other feed
    registry.observe("Benchlw", feed="f3", count=1)  # deletion, departments unknown
    joined = registry.cluster_typos()
    assert {gone for gone, _into in joined} == {"Bencnlow", "Bnechlow", "Benchlw"}
    assert len(registry) == 1
    brand = registry.resolve("Bnechlow")
    assert brand is not None and brand.name == "Benchlow"
    assert brand.feeds == {"f1": 42, "f2": 7, "f3": 1}


@pytest.mark.parametrize(
    ("first", "second", "why"),
    [
        ("Ardo", "Arno", "keys shorter than five letters"),
        ("Marlow", "Harlow", "another first letter in a short name"),
        ("Velo200", "Velo300", "other digits"),
    ],
)
def test_guards_keep_two_real_names_apart(first: str, second: str, why: str) -> None:
    registry = BrandRegistry()
    registry.observe(first, feed="f1", count=20)
    registry.observe(second, feed="f2", count=2)
    assert registry.cluster_typos() == [], why
    assert len(registry) == 2


def test_two_names_both_frequent_in_one_feed_are_two_brands() -> None:
    registry = BrandRegistry()
    registry.observe("Corvane", feed="f1", count=30)
    registry.observe("Corvana", feed="f1", count=12)
    assert registry.cluster_typos() == []


def test_disjoint_departments_are_two_brands() -> None:
    registry = BrandRegistry()
    registry.observe("Tallowin", feed="f1", count=30, department="1000")
    registry.observe("Tallowan", feed="f2", count=2, department="8000")
    assert registry.cluster_typos() == []


def test_two_dictionary_brands_never_join() -> None:
    dictionary = BrandDictionary.from_rows([("Quellmar", "", ""), ("Quellmor", "", "")])
    registry = BrandRegistry(dictionary)
    registry.observe("Quellmar", count=5)
    registry.observe("Quellmor", count=5)
    assert registry.cluster_typos() == []
    assert len(registry) == 2


def test_confirm_and_unknown_brand() -> None:
    registry = BrandRegistry()
    registry.observe("Orvanti", feed="f1")
    assert registry.confirm("ORVANTI").status == CONFIRMED
    assert [b.name for b in registry.brands(CONFIRMED)] == ["Orvanti"]
    with pytest.raises(InputError, match="no brand 'Nowhere'"):
        registry.confirm("Nowhere")


def test_as_dictionary_keeps_confirmed_brands_with_every_spelling() -> None:
    registry = BrandRegistry()
    registry.observe("Orvanti SAS", feed="f1", department="2000")
    registry.observe("Dorvanta", feed="f1")
    registry.confirm("Orvanti")
    dictionary = registry.as_dictionary()
    assert dictionary.lookup_exact("orvanti sas") == "Orvanti"
    assert dictionary.lookup_exact("Dorvanta") is None
    assert registry.as_dictionary(include_candidates=True).lookup_exact("Dorvanta") == "Dorvanta"


def test_plain_data_round_trip_through_json() -> None:
    registry = BrandRegistry()
    registry.observe("Benchlow GmbH", feed="f1", department="1000", count=4)
    registry.observe("Bench-Low", feed="f2", source="title lead")
    registry.observe("Orvanti", feed="f1")
    registry.confirm("Orvanti")
    data = json.loads(json.dumps(registry.to_dict()))
    again = BrandRegistry.from_dict(data)
    assert again.to_dict() == registry.to_dict()
    assert again.canonical("BENCHLOW") == "Benchlow"


@pytest.mark.parametrize(
    "data",
    [
        {"format": "something else", "version": 1, "brands": []},
        {"format": "catmap-brand-registry", "version": 99, "brands": []},
        {"format": "catmap-brand-registry", "version": 1, "brands": [{"variants": []}]},
        {"format": "catmap-brand-registry", "version": 1,
         "brands": [{"name": "X", "status": "maybe"}]},
    ],
)
def test_bad_plain_data_is_an_input_error(data: dict[str, object]) -> None:
    with pytest.raises(InputError):
        BrandRegistry.from_dict(data)


@given(st.lists(st.tuples(st.text(max_size=20), st.sampled_from(["f1", "f2"])), max_size=30))
def test_any_spellings_round_trip_and_resolve(pairs: list[tuple[str, str]]) -> None:
    registry = BrandRegistry()
    for spelling, feed in pairs:
        registry.observe(spelling, feed=feed)
    registry.cluster_typos()
    for spelling, _feed in pairs:
        brand = registry.resolve(spelling)
        assert brand is None or brand.name
    assert BrandRegistry.from_dict(registry.to_dict()).to_dict() == registry.to_dict()


def test_feed_registries_merge_into_the_project_and_typos_join_across_feeds() -> None:
    first, second = BrandRegistry(), BrandRegistry()
    first.observe("Benchlow", feed="f1", count=30, department="1000")
    second.observe("Benchlov", feed="f2", count=3, department="1000")
    second.observe("Orvanti", feed="f2", count=2)
    second.confirm("Orvanti")
    project = BrandRegistry()
    project.update(first)
    project.update(second)
    assert project.cluster_typos() == [("Benchlov", "Benchlow")]
    benchlow = project.resolve("Benchlov")
    assert benchlow is not None
    assert (benchlow.feeds, benchlow.departments) == ({"f1": 30, "f2": 3}, {"1000": 33})
    assert benchlow.sources == {"brand field": 33}
    assert [b.name for b in project.brands(CONFIRMED)] == ["Orvanti"]


def test_case_variants_count_together_and_show_in_mixed_case() -> None:
    registry = BrandRegistry()
    registry.observe("ASH MILL", count=6)
    registry.observe("ash mill", count=5)
    registry.observe("Ash Mill", count=2)
    registry.observe("Ash-Mill", count=7)  # the most frequent single way, but 7 < 13
    assert registry.canonical("ashmill") == "Ash Mill"


def test_update_keeps_a_typo_the_other_registry_joined_in_one_brand() -> None:
    feed = BrandRegistry()
    for written, n in (("Bench Low", 10), ("Benchlow SAS", 5), ("Benchlov", 1)):
        feed.observe(written, feed="f1", department="d1", count=n)
    assert feed.cluster_typos() == [("Benchlov", "Bench Low")]
    project = BrandRegistry()
    project.update(feed)
    assert len(project) == 1
    (brand,) = project.brands()
    assert brand.name == "Bench Low"
    assert brand.count == 16
    assert brand.departments == {"d1": 16}
    assert brand.sources == {"brand field": 16}
