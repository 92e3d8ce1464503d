"""Tests for catmap.feeds.language: the feed's language guessed from a sample, and the warning
when the category tree has no terms in it."""

from __future__ import annotations

import pytest

from catmap.feeds.language import feed_language, guess_language, language_warning
from catmap.records import SourceRecord
from catmap.tree.treefile import LANGUAGES

TITLES = {
    "en": ["Black cotton shirt for men", "Leather bag with long strap", "Small steel kettle"],
    "fr": ["Chemise homme en coton blanc", "Sac à main noir pour femme", "Petit plaid sans"],
    "de": ["Damen Tasche aus Leder schwarz", "Herren Schuhe mit Schnürung", "Kleine Decke"],
    "es": ["Camisa de hombre con manga larga", "Bolso negro para mujer", "Manta pequeña"],
    "it": ["Giacca uomo nera con cappuccio", "Borsa da donna in pelle", "Scarpe da bambino blu"],
    "nl": ["Zwart katoenen shirt voor heren", "Leren tas met lange riem", "Kleine deken"],
    "pt": ["Camisa de homem com manga longa", "Bolsa preta para mulher", "Manta pequeno"],
}


@pytest.mark.parametrize("language", sorted(TITLES))
def test_guess_language(language: str) -> None:
    guess = guess_language(TITLES[language] * 2)
    assert guess.language == language
    warning = language_warning(guess, LANGUAGES)
    if language in LANGUAGES:
        assert warning is None
    else:
        assert warning is not None and guess.name in warning and "no terms" in warning


def test_too_little_text_is_no_guess() -> None:
    guess = guess_language(["KX-4410", "Lantern"])
    assert guess.language == ""
    assert language_warning(guess, LANGUAGES) is None


def test_feed_language_reads_the_mapped_text_columns() -> None:
    sample = [
        SourceRecord({"codice": f"A{i}", "nome": title, "note": "the and with for of"}, i, "")
        for i, title in enumerate(TITLES["it"] * 3)
    ]
    guess = feed_language(sample, {"product_id": "codice", "title": "nome"})
    assert guess.language == "it"
    assert guess.to_dict()["name"] == "Italian"
