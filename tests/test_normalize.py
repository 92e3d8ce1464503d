"""Tests for catmap.feeds.normalize: text, price, currency, GTIN, availability, category paths."""

from __future__ import annotations

import random
import unicodedata
from decimal import Decimal

import pycountry
import pytest
from hypothesis import assume, example, given, settings
from hypothesis import strategies as st
from stdnum import ean

from catmap.feeds._currency import ISO_4217_CODES, SYMBOLS, WORDS
from catmap.feeds.normalize import (
    _INVISIBLE_RE,
    GENDER_VALUES,
    clean_line,
    clean_text,
    gs1_check_digit,
    is_colour_value,
    normalize_availability,
    normalize_currency,
    normalize_gender_text,
    normalize_gtin,
    normalize_yes_no,
    parse_price,
    split_category_path,
)
from catmap.records import AVAILABILITY_VALUES

# --------------------------------------------------------------------------------- clean_text


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("  Leather   ankle boot\t", "Leather ankle boot"),
        ("<p>Soft <b>wool</b> scarf</p><p>Hand wash</p>", "Soft wool scarf\nHand wash"),
        ("Line one<br>Line two<br/>Line three", "Line one\nLine two\nLine three"),
        ("<ul><li>Cotton</li><li>Linen</li></ul>", "Cotton\nLinen"),
        ("<style>p {color: red}</style>Text<script>alert(1)</script> here", "Text here"),
        ("Caf&eacute; cr&egrave;me", "Café crème"),
        ("Caf&amp;eacute;", "Café"),  # escaped twice
        ("Fish &amp;amp; chips", "Fish & chips"),
        ("&lt;b&gt;Bold&lt;/b&gt; claim", "Bold claim"),  # escaped markup is still markup
        ("5 < 6 and 7 > 3 & more", "5 < 6 and 7 > 3 & more"),  # no tag, no entity
        ("CafÃ© crÃ¨me", "Café crème"),  # UTF-8 read as cp1252
        ("Itâ€™s here", "It’s here"),
        ("Bell\x00e\x07 jupe\u200b", "Belle jupe"),
        ("\ufeffText with BOM", "Text with BOM"),
        ("Para one\r\n\r\n\r\nPara two", "Para one\nPara two"),
        ("", ""),
        ("   ", ""),
        ("Crème brûlée", "Crème brûlée"),  # already clean: returned as it is
        ("  Crème   brûlée ", "Crème brûlée"),
        ("Crème\u00a0brûlée\u2003pot", "Crème brûlée pot"),
        ("Ré\u00adsumé", "Résumé"),  # soft hyphen
        ("Kaffee\u200bbecher", "Kaffeebecher"),
    ],
)
def test_clean_text_examples(raw: str, expected: str) -> None:
    assert clean_text(raw) == expected


def test_invisible_characters_are_not_printable() -> None:
    # The fast path for printable values skips the search for invisible characters: it relies
    # on each of them being non-printable (reference: str.isprintable, Unicode general
    # categories "Other" and "Separator").
    invisible = [chr(code) for code in range(0x110000) if _INVISIBLE_RE.match(chr(code))]
    assert len(invisible) > 2000
    assert not [ch for ch in invisible if ch.isprintable()]


def test_clean_line_joins_lines() -> None:
    assert clean_line("<p>Red</p><p>dress</p>") == "Red dress"
    assert clean_line("Blue\nsummer\r\nhat") == "Blue summer hat"


# Reference: Unicode Standard Annex #15 (compatibility decompositions) and unicodedata.
@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("\ufb01ne", "fine"),  # LATIN SMALL LIGATURE FI
        ("\u2460 pack", "1 pack"),  # CIRCLED DIGIT ONE
        ("\uff25\uff2c\uff22\uff21", "ELBA"),  # FULLWIDTH LATIN CAPITALS
        ("size x\u00b2", "size x2"),  # SUPERSCRIPT TWO
        ("e\u0301t\u00e9", "\u00e9t\u00e9"),  # combining acute composes
        ("\u212b", "\u00c5"),  # ANGSTROM SIGN -> LATIN CAPITAL A WITH RING ABOVE
        ("\uff76\uff9e", "\u30ac"),  # halfwidth katakana KA + voiced mark
        ("100\u00a0ml", "100 ml"),  # NO-BREAK SPACE
    ],
)
def test_clean_text_applies_nfkc(raw: str, expected: str) -> None:
    assert clean_text(raw) == expected
    assert unicodedata.normalize("NFKC", raw).replace("\u00a0", " ") == expected


_PLAIN_CHARS = st.characters(
    blacklist_categories=("Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"),
    blacklist_characters="<&\uff1c\uff06\ufe64\ufe60\ufe65\uff1e",
)


@given(st.text(alphabet=_PLAIN_CHARS, max_size=40))
def test_clean_line_matches_unicodedata_nfkc(raw: str) -> None:
    # Reference: unicodedata.normalize("NFKC") (Unicode Standard Annex #15).
    nfkc = unicodedata.normalize("NFKC", raw)
    assume("<" not in nfkc and "&" not in nfkc)
    assume(not any("\u00c2" <= ch <= "\u00f4" for ch in nfkc))  # no mojibake repair involved
    assert clean_line(raw) == " ".join(nfkc.split())


@settings(max_examples=400)
@given(st.text())
def test_clean_text_is_idempotent(raw: str) -> None:
    once = clean_text(raw)
    assert clean_text(once) == once


@settings(max_examples=400)
@given(st.text())
def test_clean_line_is_idempotent_and_one_line(raw: str) -> None:
    once = clean_line(raw)
    assert clean_line(once) == once
    assert "\n" not in once
    assert once == once.strip()


_SOUP = list("<>&;#/ab pbrlisc!-=\"'xX0123456789ÃÂ©€â")


@settings(max_examples=200)
@given(st.text(alphabet=st.sampled_from(_SOUP), max_size=60))
def test_clean_text_is_idempotent_on_markup_soup(raw: str) -> None:
    once = clean_text(raw)
    assert clean_text(once) == once


# -------------------------------------------------------------------------------- prices


@pytest.mark.parametrize(
    ("raw", "amount", "currency"),
    [
        ("1.234,56 €", "1234.56", "EUR"),
        ("€1,234.56", "1234.56", "EUR"),
        ("EUR 12,50", "12.50", "EUR"),
        ("12.50 USD", "12.50", "USD"),
        ("1 299,00", "1299.00", None),
        ("1\u202f299,00 €", "1299.00", "EUR"),  # narrow no-break space groups thousands
        ("1'299.00", "1299.00", None),
        ("CHF 1'299.–", "1299.00", "CHF"),
        ("12", "12.00", None),
        ("12,5", "12.50", None),
        ("12,-", "12.00", None),
        ("¥1200", "1200", "JPY"),  # yen has no minor unit (ISO 4217)
        ("£9.99", "9.99", "GBP"),
        ("$5", "5.00", "USD"),
        ("US$ 5", "5.00", "USD"),
        ("1.234", "1234.00", None),  # one separator + 3 digits groups thousands
        ("0.500", "0.500", None),  # ... except after a lone zero; precision kept
        ("1.234.567,89 EUR", "1234567.89", "EUR"),
        ("19,99 euros", "19.99", "EUR"),
        ("KWD 4.250", "4.250", "KWD"),  # 3 minor units (ISO 4217)
        ("４９．９０ €", "49.90", "EUR"),  # fullwidth digits
        ("12,50&nbsp;&euro;", "12.50", "EUR"),
    ],
)
def test_parse_price_examples(raw: str, amount: str, currency: str | None) -> None:
    assert parse_price(raw) == (Decimal(amount), currency)


@pytest.mark.parametrize(
    "raw", ["", "free", "price on request", "10-20 €", "-5 €", "20%", "1,23,456.00", "12.50.30",
            "1 2 3", "9" * 30]
)
def test_parse_price_unparseable(raw: str) -> None:
    assert parse_price(raw) == (None, None)


def test_parse_price_default_currency() -> None:
    assert parse_price("12,50", "EUR") == (Decimal("12.50"), "EUR")
    assert parse_price("12,50", "€") == (Decimal("12.50"), "EUR")
    assert parse_price("12.50 GBP", "EUR") == (Decimal("12.50"), "GBP")  # the text wins
    assert parse_price("$5", "CAD") == (Decimal("5.00"), "CAD")  # a dollar default keeps "$"
    assert parse_price("$5", "EUR") == (Decimal("5.00"), "USD")
    assert parse_price("¥1200", "CNY") == (Decimal("1200.00"), "CNY")
    assert parse_price("120 kr", "SEK") == (Decimal("120.00"), "SEK")
    assert parse_price("120 kr") == (Decimal("120.00"), None)  # which krona is unknown


def test_parse_price_returns_decimal_not_float() -> None:
    amount, _ = parse_price("0.10")
    assert isinstance(amount, Decimal)
    assert amount == Decimal("0.10")


@settings(max_examples=300)
@given(st.text(), st.one_of(st.none(), st.text(max_size=5)))
def test_parse_price_never_raises(raw: str, default: str | None) -> None:
    amount, currency = parse_price(raw, default)
    assert amount is None or (isinstance(amount, Decimal) and amount >= 0)
    assert currency is None or currency in ISO_4217_CODES


# ------------------------------------------------------------------------------- currency


def test_currency_table_matches_iso_4217() -> None:
    # Reference: pycountry's ISO 4217 data.
    iso = {currency.alpha_3 for currency in pycountry.currencies}
    assert ISO_4217_CODES == iso


def test_symbol_and_word_tables_give_iso_codes() -> None:
    # Reference: pycountry's ISO 4217 data.
    iso = {currency.alpha_3 for currency in pycountry.currencies}
    assert set(SYMBOLS.values()) <= iso
    assert set(WORDS.values()) <= iso


@pytest.mark.parametrize(
    ("raw", "code"),
    [
        ("€", "EUR"), ("eur", "EUR"), ("EUR", "EUR"), ("euros", "EUR"), (" Euro ", "EUR"),
        ("$", "USD"), ("dollars", "USD"), ("dólares", "USD"), ("US$", "USD"),
        ("£", "GBP"), ("livres sterling", "GBP"), ("Pfund", "GBP"), ("libras", "GBP"),
        ("Schweizer Franken", "CHF"), ("franc suisse", "CHF"), ("Fr.", "CHF"),
        ("¥", "JPY"), ("yenes", "JPY"), ("zł", "PLN"), ("Kč", "CZK"), ("chf", "CHF"),
        ("sek", "SEK"), ("₹", "INR"),
    ],
)
def test_normalize_currency(raw: str, code: str) -> None:
    assert normalize_currency(raw) == code


@pytest.mark.parametrize("raw", ["", "abc", "ZZZ", "money", "peso", "12"])
def test_normalize_currency_unknown(raw: str) -> None:
    assert normalize_currency(raw) is None


@given(st.text())
def test_normalize_currency_never_raises_and_is_stable(raw: str) -> None:
    code = normalize_currency(raw)
    assert code is None or (code in ISO_4217_CODES and normalize_currency(code) == code)


# ----------------------------------------------------------------------------------- GTIN

# Worked by hand from the GS1 General Specifications check digit rule (weights 3,1,3,... from
# the right of the body; check digit = amount to the next multiple of ten):
#   9638507       -> 7*3+0+5*3+8+3*3+6+9*3 = 86                -> 4
#   03600029145   -> 5*3+4+1*3+9+2*3+0+0+0+6*3+3+0 = 58        -> 2
#   400638133393  -> 3*3+9+3*3+3+3*3+1+8*3+3+6*3+0+0+4 = 89    -> 1
#   1400638133393 -> the same + 1*3 = 92                       -> 8
#   000000000000  -> 0                                          -> 0
@pytest.mark.parametrize(
    ("body", "check"),
    [("9638507", 4), ("03600029145", 2), ("400638133393", 1), ("1400638133393", 8),
     ("000000000000", 0)],
)
def test_gs1_check_digit_worked_examples(body: str, check: int) -> None:
    assert gs1_check_digit(body) == check


@pytest.mark.parametrize("body", ["", "12a4", "１２３"])
def test_gs1_check_digit_rejects_non_digits(body: str) -> None:
    with pytest.raises(ValueError, match="digits"):
        gs1_check_digit(body)


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("96385074", ("00000096385074", None)),
        ("036000291452", ("00036000291452", None)),
        ("4006381333931", ("04006381333931", None)),
        ("14006381333938", ("14006381333938", None)),
        (" 400-6381 33393-1 ", ("04006381333931", None)),
        ("4006381333931.0", ("04006381333931", None)),  # spreadsheet export
        ("4006381333932", (None, "gtin_invalid_check_digit")),
        ("400638133393", (None, "gtin_invalid_check_digit")),  # 12 digits, wrong check
        ("12345", (None, "gtin_bad_length")),
        ("1234567890123456", (None, "gtin_bad_length")),
        ("", (None, "gtin_bad_length")),
        ("40063813339X1", (None, "gtin_not_digits")),
        ("４００６３８１３３３９３１", (None, "gtin_not_digits")),
    ],
)
def test_normalize_gtin(raw: str, expected: tuple[str | None, str | None]) -> None:
    assert normalize_gtin(raw) == expected


def test_gtin_agrees_with_python_stdnum_on_random_codes() -> None:
    # Reference: python-stdnum (stdnum.ean validates GTIN-8/12/13/14 with the GS1 check digit).
    rng = random.Random(0)
    valid_seen = 0
    for _ in range(5000):
        length = rng.choice((8, 12, 13, 14))
        code = "".join(rng.choice("0123456789") for _ in range(length))
        if rng.random() < 0.5:  # make about half of them valid
            code = code[:-1] + ean.calc_check_digit(code[:-1])
        gtin, problem = normalize_gtin(code)
        assert (gtin is not None) == ean.is_valid(code), code
        assert gs1_check_digit(code[:-1]) == int(ean.calc_check_digit(code[:-1]))
        if gtin is not None:
            valid_seen += 1
            assert gtin == code.zfill(14) and problem is None
        else:
            assert problem == "gtin_invalid_check_digit"
    assert 2000 < valid_seen < 3500


@given(st.text())
def test_normalize_gtin_never_raises(raw: str) -> None:
    gtin, problem = normalize_gtin(raw)
    assert (gtin is None) != (problem is None)
    if gtin is not None:
        assert normalize_gtin(gtin) == (gtin, None)


# --------------------------------------------------------------------------- availability


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        # English
        ("in stock", "available"), ("In Stock", "available"), ("available", "available"),
        ("out of stock", "sold_out"), ("Sold out", "sold_out"), ("not available", "sold_out"),
        ("pre-order", "coming_soon"), ("coming soon", "coming_soon"),
        ("limited", "limited"), ("few left", "limited"), ("Only 3 left in stock", "limited"),
        # French
        ("en stock", "available"), ("disponible", "available"),
        ("rupture de stock", "sold_out"), ("épuisé", "sold_out"), ("indisponible", "sold_out"),
        ("précommande", "coming_soon"), ("disponible prochainement", "coming_soon"),
        ("stock limité", "limited"),
        # German
        ("auf Lager", "available"), ("sofort lieferbar", "available"),
        ("ausverkauft", "sold_out"), ("nicht verfügbar", "sold_out"),
        ("vorbestellbar", "coming_soon"), ("nur noch 2 Stück", "limited"),
        # Spanish
        ("disponible", "available"), ("en existencia", "available"),
        ("agotado", "sold_out"), ("no disponible", "sold_out"), ("sin stock", "sold_out"),
        ("preventa", "coming_soon"), ("últimas unidades", "limited"),
        # Italian
        ("disponibile", "available"), ("esaurito", "sold_out"), ("non disponibile", "sold_out"),
        ("in arrivo", "coming_soon"), ("ultimi pezzi", "limited"), ("sì", "available"),
        # Dutch
        ("op voorraad", "available"), ("uitverkocht", "sold_out"), ("binnenkort", "coming_soon"),
        ("niet leverbaar", "sold_out"), ("nee", "sold_out"),
        # Portuguese
        ("em stock", "available"), ("disponível", "available"), ("esgotado", "sold_out"),
        ("em breve", "coming_soon"), ("não", "sold_out"), ("sim", "available"),
        # counts and booleans (common practice, no source)
        ("1", "available"), ("17", "available"), ("0", "sold_out"), ("stock: 0", "sold_out"),
        ("true", "available"), ("yes", "available"), ("false", "sold_out"), ("no", "sold_out"),
        # a delivery time says it is in stock (common practice, no source)
        ("envío en 24h", "available"), ("Ships within 2 days", "available"),
        ("Versand in 1-2 Tagen", "available"), ("expédition sous 48h", "available"),
        ("spedizione in 48 ore", "available"), ("envio em 3 dias", "available"),
        # anything else
        ("", "unknown"), ("blue", "unknown"), ("-1", "unknown"), ("envío gratis", "unknown"),
    ],
)
def test_normalize_availability(raw: str, expected: str) -> None:
    assert normalize_availability(raw) == expected


@given(st.text())
def test_normalize_availability_never_raises_and_is_stable(raw: str) -> None:
    value = normalize_availability(raw)
    assert value in AVAILABILITY_VALUES
    assert normalize_availability(value) == value


# -------------------------------------------------------------------------- category path


@pytest.mark.parametrize(
    ("raw", "levels"),
    [
        ("Women > Shoes > Boots", ("Women", "Shoes", "Boots")),
        ("Damen/Schuhe/Stiefel", ("Damen", "Schuhe", "Stiefel")),
        ("Femme | Chaussures", ("Femme", "Chaussures")),
        ("Hogar » Cocina › Sartenes → Antiadherentes", ("Hogar", "Cocina", "Sartenes",
                                                         "Antiadherentes")),
        ("Men &gt; Shirts", ("Men", "Shirts")),
        ("Hommes - Chemises", ("Hommes", "Chemises")),
        ("T-shirts", ("T-shirts",)),
        ("Tops - T-shirts", ("Tops", "T-shirts")),
        ("1/2 sleeve tops", ("1/2 sleeve tops",)),
        ("Men > Shirts / Tops", ("Men", "Shirts / Tops")),  # a strong separator wins
        ("Kids - Boys > Jackets", ("Kids - Boys", "Jackets")),
        ("https://shop.example/women/shoes", ("https://shop.example/women/shoes",)),
        (" > Garden >> Tools > ", ("Garden", "Tools")),
        ("  <b>Toys</b>  ", ("Toys",)),
        ("", ()),
        (" / ", ()),
        # A single level left by a strong separator reads as that level alone would, so that
        # joining the levels again gives them back (found by the stability property below).
        ("/»", ()),
        ("Hommes - Chemises >", ("Hommes", "Chemises")),
        ("Damen/Schuhe |", ("Damen", "Schuhe")),
    ],
)
def test_split_category_path(raw: str, levels: tuple[str, ...]) -> None:
    assert split_category_path(raw) == levels


@settings(max_examples=300)
@given(st.text())
@example("á\x86/0")  # "á†" then " | ": read whole, the pair looked like mis-decoded "ᆠ"
def test_split_category_path_is_stable(raw: str) -> None:
    levels = split_category_path(raw)
    assert all(level and clean_line(level) == level for level in levels)
    # Joined with "|" rather than ">": a level may end in "<" or "<?" and ">" would close a tag.
    assert split_category_path(" | ".join(levels)) == levels


# --------------------------------------------------------------------------------- safety


@settings(max_examples=300)
@given(st.text())
def test_no_normaliser_raises(raw: str) -> None:
    clean_text(raw)
    clean_line(raw)
    parse_price(raw)
    normalize_currency(raw)
    normalize_gtin(raw)
    normalize_availability(raw)
    split_category_path(raw)


# Common practice, no source: who-words, colour words and yes / no in seven languages.
@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("women's", "female"), ("Femme", "female"), ("Damen", "female"), ("mujer", "female"),
        ("donna", "female"), ("dames", "female"), ("mulher", "female"),
        ("men", "male"), ("Homme", "male"), ("Herren", "male"), ("hombre", "male"),
        ("Uomo", "male"), ("heren", "male"), ("homem", "male"),
        ("unisex", "unisex"), ("mixte", "unisex"), ("Damen / Herren", "unisex"),
        ("bambina", "girls"), ("meninos", "boys"), ("Kinder", "kids"), ("Girls & Boys", "kids"),
        ("bébé", "baby"), ("", "unknown"), ("blue", "unknown"), ("women and kettles", "unknown"),
        # The age when a baby's gender is named too; kids' codes; a single-letter H (homme,
        # hombre, Herren, heren).
        ("Baby Girl", "baby"), ("Bébé garçon", "baby"), ("newborn", "baby"),
        ("K-G", "girls"), ("Kids - Boys", "boys"), ("H", "male"), ("T-shirt", "unknown"),
    ],
)  # fmt: skip
def test_normalize_gender_text(raw: str, expected: str) -> None:
    assert normalize_gender_text(raw) == expected


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("black", True), ("Bleu marine", True), ("Dunkelblau", True), ("azul claro", True),
        ("nero", True), ("zwart", True), ("vermelho escuro", True), ("navy/white", True),
        ("donkerblauw", True), ("ébène", True), ("blanc cassé", True), ("Bleu roi", True),
        ("vert d'eau", True), ("rouge brique", True), ("anthracite / noir", True),
        ("", False), ("xyzzy", False), ("dark", False), ("Lantern", False),
        # A title is not a colour value, even with a colour in it; a material is not either.
        ("Blue cotton shirt", False), ("gold plated", False), ("glimmer", False),
    ],
)  # fmt: skip
def test_is_colour_value(raw: str, expected: bool) -> None:
    assert is_colour_value(raw) is expected


def test_a_colour_field_the_family_reader_reads_is_never_flagged() -> None:
    # Every colour word and phrase of the family reader, in every language and written as a
    # feed would (capitals, accents kept): the normaliser recognises it too.
    from catmap.feeds.colour import COLOUR_WORDS, colour_family

    for family, by_language in COLOUR_WORDS.items():
        for words in by_language.values():
            for word in words:
                written = word.title()
                assert colour_family(written)[0] == family, word
                assert is_colour_value(written), word


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("yes", True), ("Oui", True), ("ja", True), ("sí", True), ("sim", True), ("1", True),
        ("no", False), ("nein", False), ("nee", False), ("não", False), ("0", False),
        ("maybe", None), ("", None),
    ],
)  # fmt: skip
def test_normalize_yes_no(raw: str, expected: bool | None) -> None:
    assert normalize_yes_no(raw) is expected


@given(st.text())
def test_value_word_readers_never_raise(raw: str) -> None:
    assert normalize_gender_text(raw) in GENDER_VALUES
    assert isinstance(is_colour_value(raw), bool)
    assert normalize_yes_no(raw) in (True, False, None)
