"""Which source column feeds which catmap field: suggested from names and values, kept as a profile.

:func:`suggest_profile` scores every (field, column) pair twice, once from the column's name
against a multilingual synonym table (English, French, German, Spanish and common export
styles, compared with rapidfuzz) and once from the column's values in a sample of records (GTIN
check digits, image URLs, prices, category paths...), combines the two into one confidence and
gives each column to at most one field, most confident pair first.

A :class:`FeedProfile` is saved as a small TOML file with comments, meant to be read and edited
by hand; :func:`load_profile` reads it back and reports a bad line with :class:`ProfileError`.
"""

from __future__ import annotations

import codecs
import dataclasses
import functools
import re
import tomllib
import unicodedata
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from catmap._atomic import write_text_atomic
from catmap.errors import ProfileError
from catmap.feeds.normalize import (
    clean_line,
    is_colour_value,
    normalize_availability,
    normalize_currency,
    normalize_gender_text,
    normalize_gtin,
    parse_price,
    split_category_path,
)
from catmap.feeds.read import FeedInfo
from catmap.records import SourceRecord

__all__ = [
    "REQUIRED_FIELDS",
    "TARGET_FIELDS",
    "FeedProfile",
    "FieldSuggestion",
    "load_profile",
    "normalize_header",
    "profile_text",
    "save_profile",
    "suggest_profile",
]

TARGET_FIELDS: tuple[str, ...] = (
    "product_id", "title", "description", "brand", "category_path", "price", "currency", "gtin",
    "gender_text", "colour", "size", "url", "image_url", "availability",
)  # fmt: skip
REQUIRED_FIELDS: tuple[str, ...] = ("product_id", "title")

# A pair below this confidence is not suggested (the field stays unmapped for the user to set).
MIN_CONFIDENCE = 0.5
# A header must resemble a synonym at least this much (rapidfuzz score, 0-100) to count.
HEADER_THRESHOLD = 82
# A header word that is a one-word synonym ("price_eur") scores this much.
WORD_SCORE = 86.0
NESTED_FACTOR = 0.95
# How readers join the values of a repeated element or a list.
_JOIN = " | "
SAMPLES_KEPT = 3


@dataclass
class FieldSuggestion:
    """Why catmap thinks a column feeds a field.

    Attributes:
        field: the target field.
        column: the source column, or None when nothing fits.
        confidence: 0..1.
        evidence: short human text, e.g. "header 'prix' ~ price (96); 100% price-like values".
        samples: up to three distinct non-empty values of the column.
        against: what speaks against the choice: columns whose values vetoed their header
            ("'EAN': 0% valid GTIN check digits"), and the next best column, if any.
    """

    field: str
    column: str | None
    confidence: float
    evidence: str
    samples: list[str] = dataclasses.field(default_factory=list)
    against: list[str] = dataclasses.field(default_factory=list)


@dataclass
class FeedProfile:
    """How to read one feed: the column of each field and the reader options to reuse.

    Attributes:
        columns: target field -> source column (only the mapped fields).
        default_currency: ISO 4217 code for prices that name no currency.
        encoding: remembered reader encoding (None = detect).
        delimiter: remembered cell separator (None = detect).
        record_path: remembered XML record element (None = detect).
        format: the feed format the profile was made for ("delimited", "xml", "jsonl"; None in
            profiles written before it was saved); a file of another format is refused.
        suggestions: what :func:`suggest_profile` found (not saved in the file).
        source_columns: the columns the feed had when the profile was made (saved, and used by
            :func:`load_profile` to catch a misspelt column).
        retailer_as_no_brand: read the retailer's own name in the brand field as no brand
            (onboarding finds and reports that name; this setting says what to do with it).
    """

    columns: dict[str, str]
    default_currency: str | None = None
    encoding: str | None = None
    delimiter: str | None = None
    record_path: str | None = None
    format: str | None = None
    suggestions: list[FieldSuggestion] = dataclasses.field(default_factory=list)
    source_columns: tuple[str, ...] = ()
    retailer_as_no_brand: bool = False

    def missing(self) -> list[str]:
        """Return the target fields that have no column, in :data:`TARGET_FIELDS` order."""
        return [name for name in TARGET_FIELDS if not self.columns.get(name)]


# ---------------------------------------------------------------------------------------------
# Header names

# Normalised header names (lower case, no accents, words separated by one space) per field.
# Common practice, no source: words seen in shop exports in English, French, German, Spanish,
# Italian, Dutch and Portuguese, with their common abbreviations.
_SYNONYMS: dict[str, tuple[str, ...]] = {
    "product_id": (
        "codice", "codice articolo", "cod art", "id prodotto", "rif", "riferimento",
        "codice prodotto", "artikelnr", "artikel nummer", "product id", "referentie",
        "productnummer", "referencia", "codigo artigo", "cod artigo", "id produto",
        "ref produto", "cod articulo", "item no", "item nr", "art no", "sku id", "mpn",
        "id", "product id", "item id", "article id", "sku", "article number", "item number",
        "product number", "product code", "item code", "reference", "ref", "offer id",
        "id produit", "identifiant", "reference produit", "ref produit", "code article",
        "numero article", "artikelnummer", "artikel nr", "art nr", "artnr", "artikel id",
        "produkt id", "produktnummer", "bestellnummer", "referencia", "id producto",
        "codigo", "codigo producto", "codigo articulo", "numero de articulo",
    ),
    "title": (
        "nome", "titolo", "nome prodotto", "denominazione", "productnaam", "naam", "titel",
        "omschrijving kort", "nome do produto", "designacao", "denominacion", "item title",
        "title", "name", "product name", "product title", "item name", "item title",
        "titre", "nom", "nom produit", "nom du produit", "libelle", "designation",
        "titel", "name des produkts", "produktname", "produkt name", "artikelname",
        "bezeichnung", "produktbezeichnung", "titulo", "nombre", "nombre producto",
        "nombre del producto", "titulo producto",
    ),
    "description": (
        "descrizione", "descrizione lunga", "descr", "beschrijving", "omschrijving",
        "productomschrijving", "descricao", "descricao longa", "desc longue",
        "description", "desc", "long description", "product description", "details",
        "description produit", "descriptif", "description longue", "beschreibung",
        "produktbeschreibung", "artikelbeschreibung", "langtext", "descripcion",
        "descripcion producto", "descripcion larga", "body", "text",
    ),
    "brand": (
        "marchio", "produttore", "merk", "fabrikant", "marca", "mrk",
        "brand", "brand name", "manufacturer", "maker", "make", "label", "marque", "fabricant",
        "marke", "hersteller", "markenname", "marca", "fabricante",
    ),
    "category_path": (
        "percorso categoria", "reparto", "categorie", "productcategorie", "rubriek",
        "caminho da categoria", "seccao", "ruta de categoria", "fil d ariane", "arborescence",
        "cat", "dept", "product type", "tipo prodotto", "categoria prodotto",
        "category", "categories", "category path", "product category", "breadcrumb",
        "breadcrumbs", "department", "categorie", "categories produit", "rayon", "chemin",
        "kategorie", "kategorien", "warengruppe", "produktkategorie", "kategoriepfad",
        "categoria", "categorias", "ruta categoria", "seccion", "shop category",
    ),
    "price": (
        "prezzo", "prezzo di vendita", "prz", "importo", "prijs", "verkoopprijs",
        "prijs incl btw", "preco", "preco de venda", "valor", "pvp",
        "price", "sale price", "current price", "unit price", "amount", "cost", "prix",
        "prix ttc", "prix de vente", "tarif", "montant", "preis", "verkaufspreis", "vk preis",
        "bruttopreis", "precio", "precio venta", "importe", "pvp",
    ),
    "currency": (
        "valuta", "munteenheid", "moeda", "whg", "currency iso",
        "currency", "currency code", "curr", "devise", "monnaie", "wahrung", "waehrung",
        "moneda", "divisa",
    ),
    "gtin": (
        "codice a barre", "ean code", "streepjescode", "codigo de barras", "gencod",
        "ean 8", "gtin 13", "gtin 8", "gtin 12",
        "gtin", "ean", "ean13", "ean 13", "ean8", "upc", "upc a", "barcode", "bar code",
        "gtin13", "gtin14", "gtin 14", "isbn", "code barre", "code barres", "code ean",
        "strichcode", "barcode nummer", "ean code", "ean nummer", "codigo de barras",
        "codigo barras", "codigo ean",
    ),
    "gender_text": (
        "sesso", "genere", "geslacht", "doelgroep", "genero", "gender target",
        "gender", "sex", "target gender", "audience", "genre", "sexe", "geschlecht",
        "zielgruppe", "sexo", "genero",
    ),
    "colour": (
        "colore", "kleur", "cor", "cores", "col", "kl", "farbe", "colour family",
        "colour", "color", "colour name", "color name", "couleur", "coloris", "farbe",
        "farbton", "colores",
    ),
    "size": (
        "taglia", "misura", "maat", "afmeting", "tamanho", "tam", "sz", "gr",
        "size", "sizes", "taille", "tailles", "pointure", "grosse", "groesse", "konfektionsgrosse",
        "talla", "tallas", "tamano", "medida",
    ),
    "url": (
        "collegamento", "url prodotto", "productlink", "product url", "url do produto",
        "ligacao", "link prodotto",
        "url", "link", "product url", "product link", "page url", "deeplink", "deep link",
        "lien", "lien produit", "url produit", "produkt url", "produktlink", "artikel url",
        "enlace", "url producto", "enlace producto",
    ),
    "image_url": (
        "immagine", "url immagine", "afbeelding", "afbeelding url", "imagem", "url da imagem",
        "image src", "img src",
        "image", "image url", "image link", "picture", "picture url", "photo", "img",
        "img url", "main image", "thumbnail", "url image", "lien image", "image produit",
        "bild", "bild url", "bildlink", "produktbild", "bild link", "imagen", "url imagen",
        "foto", "enlace imagen",
    ),
    "availability": (
        "disponibilita", "disp", "stato magazzino", "beschikbaarheid", "voorraadstatus",
        "levertijd status", "disponibilidade", "estoque", "voorraad", "giacenza",
        "availability", "available", "stock", "stock status", "in stock", "inventory",
        "stock level", "quantity", "qty", "disponibilite", "dispo", "etat du stock",
        "verfugbarkeit", "lagerbestand", "lagerstatus", "bestand", "lieferstatus",
        "disponibilidad", "existencias", "inventario",
    ),
}  # fmt: skip

_CAMEL_RE = re.compile(r"(?<=[a-z0-9])(?=[A-Z])")
_HEADER_SEPARATOR_RE = re.compile(r"[\s_\-./:]+")


def normalize_header(name: str) -> str:
    """Reduce a column name to plain lower-case words for comparison with the synonym table.

    Dotted paths keep their last part ("offer.price" -> "price"), an attribute keeps its name
    ("price.@currency" -> "currency"), a namespace prefix goes ("x:title" -> "title"),
    camelCase is split, accents and separators go.

    Args:
        name: a source column name.

    Returns:
        e.g. "Produkt-Name" -> "produkt name", "nom_produit" -> "nom produit".
    """
    last = name.strip().rsplit(".", 1)[-1] if "." in name.strip(".") else name.strip()
    last = last.lstrip("@")
    if ":" in last:
        last = last.rsplit(":", 1)[-1]
    last = _CAMEL_RE.sub(" ", last)
    last = unicodedata.normalize("NFKD", last.replace("ß", "ss"))
    last = "".join(ch for ch in last if not unicodedata.combining(ch)).casefold()
    return " ".join(_HEADER_SEPARATOR_RE.sub(" ", last).split())


_SYNONYM_INDEX: dict[str, str] = {
    synonym: name for name, synonyms in _SYNONYMS.items() for synonym in synonyms
}


# The synonyms as parallel arrays, for rapidfuzz's vectorised comparison (one C call per scorer
# instead of a Python loop over every synonym).
_SYNONYM_LIST: tuple[str, ...] = tuple(_SYNONYM_INDEX)
_SYNONYM_COMPACT: tuple[str, ...] = tuple(s.replace(" ", "") for s in _SYNONYM_LIST)
_SYNONYM_POSITION: dict[str, int] = {s: i for i, s in enumerate(_SYNONYM_LIST)}
_SYNONYM_SHORT = np.array([len(s) <= 3 for s in _SYNONYM_LIST])


@functools.lru_cache(maxsize=4096)
def _name_scores(header: str) -> dict[str, tuple[float, str]]:
    """Best rapidfuzz score (0..100) of one normalised name per field, with the synonym matched.

    Short names ("id", "ean") only count when they match exactly; a one-word synonym that is a
    word of the name ("price eur", "old price") scores at least :data:`WORD_SCORE`.
    """
    scores: dict[str, tuple[float, str]] = {}
    if not header:
        return scores
    if len(header) <= 3:
        found = np.zeros(len(_SYNONYM_LIST))
    else:
        # Imported here: only suggesting a profile compares names (not mapping with a saved one).
        from rapidfuzz import fuzz, process

        found = np.maximum.reduce(
            [
                process.cdist([header], _SYNONYM_LIST, scorer=fuzz.ratio)[0],
                process.cdist(
                    [header.replace(" ", "")], _SYNONYM_COMPACT, scorer=fuzz.ratio
                )[0],
                process.cdist([header], _SYNONYM_LIST, scorer=fuzz.token_sort_ratio)[0],
            ]
        ).astype(float)
        found[_SYNONYM_SHORT] = 0.0
        for word in set(header.split()):
            position = _SYNONYM_POSITION.get(word)
            if position is not None and len(word) > 3:
                found[position] = max(found[position], WORD_SCORE)
    exact = _SYNONYM_POSITION.get(header)
    if exact is not None:
        found[exact] = 100.0
    for index in np.flatnonzero(found >= HEADER_THRESHOLD).tolist():
        synonym = _SYNONYM_LIST[index]
        name = _SYNONYM_INDEX[synonym]
        score = float(found[index])
        if score > scores.get(name, (0.0, ""))[0]:
            scores[name] = (score, synonym)
    return scores


# A nested key that only names its parent's value ("brand.name", "images.url"), its parent's
# own identifier ("brand.id": the brand's id, not the product's), or the order of repeated
# elements ("crumb.@level"). Common practice, no source; seven languages.
_VALUE_KEYS = frozenset(
    "name nom nome naam nombre label value valor valore wert waarde text texte testo tekst "
    "url link href src uri".split()
)
_ID_KEYS = frozenset(
    "id code ref key sku codigo codice nummer nr number numero nummer identifier uid".split()
)
_LEVEL_KEYS = frozenset(
    "level niveau ebene nivel livello depth tiefe profondeur profundidad profondita diepte "
    "profundidade order position pos rank index".split()
)


def _split_nested(column: str) -> tuple[str, str]:
    """(parent's last name, own name), normalised; the parent is "" for a top-level column."""
    text = column.strip()
    parts = [part for part in re.split(r"\.(?=@)|\.", text) if part]
    if len(parts) < 2:
        return "", normalize_header(text)
    return normalize_header(parts[-2]), normalize_header(parts[-1])


def _is_parent_id(column: str) -> bool:
    """True for an id key under a parent that names another field ("brand.id", "marca.codigo")."""
    parent, own = _split_nested(column)
    if not parent or own not in _ID_KEYS:
        return False
    by_parent = _name_scores(parent)
    return bool(by_parent) and max(by_parent, key=lambda n: by_parent[n][0]) != "product_id"


@functools.lru_cache(maxsize=4096)
def _header_scores(column: str) -> dict[str, tuple[float, str]]:
    """Best header score (0..100) of a column per field, with the reason.

    A nested name is read with its parent: under a parent that names a field, a value key
    ("brand.name", "images.url") is that field, and an id key ("brand.id") is nothing (the
    parent's own id); under a neutral parent ("info.nome") the key stands for itself, a little
    less sure than the same name at the top level.
    """
    parent, own = _split_nested(column)
    if not parent:
        return _name_scores(own)
    if own in _LEVEL_KEYS:
        return {}
    by_parent = _name_scores(parent)
    parent_field = max(by_parent, key=lambda name: by_parent[name][0]) if by_parent else None
    if parent_field is not None and parent_field != "product_id":
        score, synonym = by_parent[parent_field]
        if own in _VALUE_KEYS:
            if parent_field == "url" and own in ("url", "link", "href", "src", "uri"):
                return {"url": (score * NESTED_FACTOR, f"{synonym}.{own}")}
            return {parent_field: (score * NESTED_FACTOR, f"{synonym}.{own}")}
        if own in _ID_KEYS:
            return {}
    scores = _name_scores(own)
    return {name: (score * NESTED_FACTOR, synonym) for name, (score, synonym) in scores.items()}


# ---------------------------------------------------------------------------------------------
# Values

_URL_RE = re.compile(r"^(?:https?:)?//\S+$", re.IGNORECASE)
_IMAGE_URL_RE = re.compile(
    r"\.(?:jpe?g|png|gif|webp|avif|bmp|tiff?|svg)(?:[?#]\S*)?$|/(?:images?|img|media|photos?|"
    r"pictures?|thumbnails?|bilder|imagenes|fotos)/",
    re.IGNORECASE,
)
_HTML_RE = re.compile(r"</?[A-Za-z][^<>]*>|&[a-zA-Z]+;|&#\d+;")
_CODE_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.\-/:#]{0,39}$")
_DECIMAL_PRICE_RE = re.compile(r"\d[.,]\d{1,2}(?:\D|$)|\d[.,][-\u2013]")

# Common practice, no source: how feeds write who a product is for.
_GENDER_TOKENS = frozenset(
    "w m f u h d women men woman man female male unisex ladies gents girls boys kids "
    "femme femmes homme hommes fille filles garcon garcons enfant enfants mixte "
    "damen herren frauen manner madchen jungen kinder "
    "mujer mujeres hombre hombres nina ninas nino ninos infantil".split()
)
_COLOUR_TOKENS = frozenset(
    "black white red blue green yellow grey gray brown pink purple orange beige navy "
    "noir blanc rouge bleu vert jaune gris marron rose violet "
    "schwarz weiss rot blau grun gelb grau braun lila "
    "negro blanco rojo azul verde amarillo gris marron rosa morado naranja multicolour "
    "multicolor bunt multi".split()
)
_SIZE_RE = re.compile(
    r"^(?:x{0,3}s|m|x{0,4}l|\d?xl|\d{1,3}(?:[.,]5)?|\d{2}/\d{2}|w\d{2}(?: ?l\d{2})?|"
    r"(?:eu|uk|us|fr|it) ?\d{1,2}(?:[.,]5)?|one size|onesize|taille unique|einheitsgrosse|"
    r"talla unica|tu|os|\d{1,3} ?(?:cm|ml|l|g|kg|mm))$",
    re.IGNORECASE,
)


def _plain_token(value: str) -> str:
    if value.isascii():  # nothing to decompose, no combining marks
        return value.strip().lower().strip(" .")
    decomposed = unicodedata.normalize("NFKD", value.strip().casefold().replace("ß", "ss"))
    return "".join(ch for ch in decomposed if not unicodedata.combining(ch)).strip(" .")


def _share(values: Sequence[str], test: Any) -> float:
    return sum(1 for value in values if test(value)) / len(values) if values else 0.0


def _value_scores(values: list[str]) -> dict[str, tuple[float, str]]:
    """Score 0..100 per field from a column's non-empty sample values, with evidence text."""
    scores: dict[str, tuple[float, str]] = {}
    if not values:
        return scores
    total = len(values)
    distinct = len(set(values))
    unique_ratio = distinct / total
    lengths = [len(value) for value in values]
    mean_length = sum(lengths) / total

    def put(name: str, share: float, evidence: str, weight: float = 100.0) -> None:
        if share > 0:
            scores[name] = (share * weight, evidence)

    # A list of links read as one field ("https://a.jpg | https://b.jpg"): its first link.
    values = [value.split(_JOIN, 1)[0] if _JOIN in value and "//" in value else value
              for value in values]  # fmt: skip
    urls = [value for value in values if _URL_RE.match(value)]
    if urls:
        images = _share(urls, _IMAGE_URL_RE.search) * len(urls) / total
        others = (len(urls) / total) - images
        put("image_url", images, f"{images:.0%} image URLs")
        put("url", others, f"{others:.0%} page URLs")
        return scores  # a column of links is nothing else

    gtin_share = _share(values, lambda value: normalize_gtin(value)[0] is not None)
    put("gtin", gtin_share, f"{gtin_share:.0%} valid GTIN check digits")

    priced = [parse_price(value) for value in values]
    price_share = sum(
        1
        for value, (amount, currency) in zip(values, priced, strict=True)
        if amount is not None and (currency is not None or _DECIMAL_PRICE_RE.search(value))
    ) / total
    put("price", price_share, f"{price_share:.0%} price-like values", 95)

    currency_share = _share(
        values, lambda value: len(value) <= 20 and normalize_currency(value) is not None
    )
    put("currency", currency_share, f"{currency_share:.0%} currency codes or symbols", 95)

    path_share = _share(values, lambda value: len(split_category_path(value)) >= 2)
    put("category_path", path_share, f"{path_share:.0%} category paths with separators", 90)

    few_distinct = distinct <= 12 and (total < 10 or unique_ratio <= 0.5)
    if few_distinct:
        share = _share(
            values,
            lambda value: _plain_token(value) in _GENDER_TOKENS
            or normalize_gender_text(value) != "unknown",
        )
        put("gender_text", share, f"{share:.0%} who words, {distinct} distinct values", 90)
        colour = _share(
            values,
            lambda value: _plain_token(value) in _COLOUR_TOKENS or is_colour_value(value),
        )
        put("colour", colour, f"{colour:.0%} colour words", 85)
    size = _share(values, lambda value: bool(_SIZE_RE.match(value.strip())))
    if distinct <= 40:
        put("size", size, f"{size:.0%} size-like values", 80)
    availability = _share(
        values, lambda value: not value.isdigit() and normalize_availability(value) != "unknown"
    )
    put("availability", availability, f"{availability:.0%} availability words", 90)

    code_like = _share(values, lambda value: bool(_CODE_RE.match(value)))
    if code_like and not price_share >= 0.5:
        put("product_id", code_like * unique_ratio,
            f"{unique_ratio:.0%} unique short codes", 80)  # fmt: skip

    html_share = _share(values, lambda value: bool(_HTML_RE.search(value)))
    worded = _share(values, lambda value: " " in value.strip())
    if mean_length >= 80 or (html_share >= 0.3 and mean_length >= 30):
        put("description", max(html_share, min(mean_length / 160, 1.0)),
            f"long text (mean {mean_length:.0f} characters"
            + (f", {html_share:.0%} with HTML)" if html_share else ")"), 75)  # fmt: skip
    elif 10 <= mean_length < 120 and worded >= 0.6 and html_share < 0.3:
        put("title", worded * unique_ratio, f"medium text (mean {mean_length:.0f} characters, "
            f"{unique_ratio:.0%} distinct)", 70)  # fmt: skip
    if (
        mean_length <= 30
        and unique_ratio <= 0.6
        and distinct >= 2
        and gtin_share < 0.5
        and price_share < 0.5
        and max(
            scores.get(other, (0.0, ""))[0]
            for other in ("gender_text", "colour", "size", "availability")
        )
        < 30
    ):
        letters = _share(values, lambda value: any(ch.isalpha() for ch in value))
        put("brand", letters, "short repeated names", 55)
    return scores


# ---------------------------------------------------------------------------------------------
# Suggestion


_LETTER_RE = re.compile(r"[^\W\d_]")


def _value_veto(name: str, values: list[str], by_value: dict[str, tuple[float, str]]) -> str:
    """Why a column's values rule it out for a field whatever its header says ("" if nothing).

    The header says what the sender meant; the values say what the column holds. A column of
    letter-and-digit codes named "ean" is the product id, a "level" attribute holds numbers
    and no category names, an "id" that repeats is nobody's product id.
    """
    if len(values) < 3:
        return ""
    share = by_value.get(name, (0.0, ""))[0] / 100
    if name == "gtin" and share < 0.5:
        return f"only {share:.0%} valid GTIN check digits (GS1)"
    if name == "category_path":
        named = _share(
            values, lambda value: all(_LETTER_RE.search(level)
                                      for level in split_category_path(value) or (value,))
        )  # fmt: skip
        if named < 0.5:
            return f"only {named:.0%} of the values have textual levels (numbers are no path)"
    if name in ("url", "image_url"):
        links = _share(values, lambda value: bool(_URL_RE.match(value.split(_JOIN, 1)[0])))
        if links < 0.5:
            return f"only {links:.0%} of the values are links"
    if name == "price":
        prices = _share(values, lambda value: parse_price(value)[0] is not None)
        if prices < 0.3:
            return f"only {prices:.0%} of the values are amounts"
    distinct = len(set(values)) / len(values)
    if name == "product_id" and len(values) >= 10 and distinct < 0.9:
        return f"values repeat ({distinct:.0%} distinct), an id is unique"
    if name == "size" and len(values) >= 20 and distinct > 0.9:
        return f"values are all different ({distinct:.0%} distinct), not sizes"
    if name == "title" and _share(values, lambda value: not _LETTER_RE.search(value)) > 0.5:
        return "the values hold no letters"
    return ""


def _brand_in_titles(
    sample: Sequence[SourceRecord], column: str, by_value: dict[str, tuple[float, str]]
) -> None:
    """Raise a brand candidate whose values are named in the same records' longer texts.

    Titles often begin with the brand ("Velloro field jacket"): a short repeated value that
    reappears in the record's own title is a brand much more surely than by its shape alone.
    """
    seen = named = 0
    for record in sample:
        value = record.fields.get(column, "").strip().casefold()
        if len(value) < 2:
            continue
        seen += 1
        if any(
            other != column and len(text) > len(value) + 5 and value in text.casefold()
            for other, text in record.fields.items()
        ):
            named += 1
    if seen and named / seen >= 0.5:
        share = named / seen
        score = max(by_value["brand"][0], 85 * share)
        by_value["brand"] = (score, f"{share:.0%} named in the same record's longer text")


def _combine(header: float, values: float) -> float:
    """One confidence (0..1) from a header score and a value score (both 0..100).

    The header is the stronger clue; values confirm it or, alone, stand in for a missing name.
    """
    best = max(header * 0.9, values * 0.8)
    return min(1.0, (best + 0.15 * min(header, values)) / 100)


def _column_values(sample: Sequence[SourceRecord], column: str) -> list[str]:
    values = []
    for record in sample:
        value = record.fields.get(column)
        if value is not None and value.strip():
            values.append(value.strip())
    return values


def _samples(values: list[str]) -> list[str]:
    kept: list[str] = []
    for value in values:
        short = clean_line(value)
        short = short if len(short) <= 80 else short[:77] + "..."
        if short and short not in kept:
            kept.append(short)
        if len(kept) == SAMPLES_KEPT:
            break
    return kept


def suggest_profile(info: FeedInfo, sample: Sequence[SourceRecord]) -> FeedProfile:
    """Suggest which column feeds which field, from column names and sample values.

    Args:
        info: what the reader found out about the feed (columns, encoding, delimiter...).
        sample: the first records of the feed (about 200 are plenty).

    Returns:
        A profile with the suggested columns, the reader options to remember and one
        :class:`FieldSuggestion` per target field (``column`` None when nothing fits).
    """
    columns = list(info.columns)
    for record in sample:
        for name in record.fields:
            if name not in columns:
                columns.append(name)
    values = {column: _column_values(sample, column) for column in columns}
    candidates: list[tuple[float, int, str, str, str]] = []
    against: dict[str, list[str]] = {name: [] for name in TARGET_FIELDS}
    for position, column in enumerate(columns):
        if _is_parent_id(column):
            continue  # "brand.id": the brand's own id, no field of the product
        by_header = _header_scores(column)
        by_value = _value_scores(values[column])
        if "brand" in by_value:
            _brand_in_titles(sample, column, by_value)
        for name in TARGET_FIELDS:
            header_score, synonym = by_header.get(name, (0.0, ""))
            value_score, value_evidence = by_value.get(name, (0.0, ""))
            confidence = _combine(header_score, value_score)
            if confidence <= 0:
                continue
            veto = _value_veto(name, values[column], by_value)
            if veto:
                if header_score:
                    against[name].append(
                        f"header '{column}' ~ {synonym} ({header_score:.0f}), but {veto}"
                    )
                continue
            clues = []
            if header_score:
                clues.append(f"header '{column}' ~ {synonym} ({header_score:.0f})")
            if value_score:
                clues.append(value_evidence)
            candidates.append((confidence, -position, name, column, "; ".join(clues)))
    candidates.sort(reverse=True)

    chosen: dict[str, FieldSuggestion] = {}
    used: set[str] = set()
    best_rejected: dict[str, tuple[float, str]] = {}
    for confidence, _, name, column, evidence in candidates:
        if name in chosen or column in used:
            continue
        if confidence < MIN_CONFIDENCE:
            best_rejected.setdefault(name, (confidence, column))
            continue
        chosen[name] = FieldSuggestion(
            name, column, round(confidence, 3), evidence, _samples(values[column]),
            against[name],
        )  # fmt: skip
        used.add(column)
    for confidence, _, name, column, _evidence in candidates:
        suggestion = chosen.get(name)
        if suggestion is not None and column != suggestion.column and not any(
            text.startswith("next best") for text in suggestion.against
        ):
            suggestion.against.append(f"next best '{column}' ({confidence:.2f})")

    price = chosen.get("price")
    if "currency" not in chosen and price is not None:
        found = Counter(
            currency
            for currency in (parse_price(value)[1] for value in values[price.column or ""])
            if currency
        )
        if found:
            code, count = found.most_common(1)[0]
            share = count / max(1, len(values[price.column or ""]))
            chosen["currency"] = FieldSuggestion(
                "currency", None, round(share, 3),
                f"currency inside the price values ({code} in {share:.0%}); no column needed",
                [],
            )  # fmt: skip

    suggestions = []
    for name in TARGET_FIELDS:
        if name in chosen:
            suggestions.append(chosen[name])
        elif name in best_rejected:
            confidence, column = best_rejected[name]
            suggestions.append(FieldSuggestion(
                name, None, 0.0,
                f"no column fits; best was '{column}' ({confidence:.2f}, below {MIN_CONFIDENCE})",
                [], against[name],
            ))  # fmt: skip
        else:
            suggestions.append(
                FieldSuggestion(name, None, 0.0, "no column fits", [], against[name])
            )
    mapped = {s.field: s.column for s in suggestions if s.column is not None}
    return FeedProfile(
        columns=mapped,
        encoding=info.encoding or None,
        delimiter=info.delimiter,
        record_path=info.record_path,
        format=info.format,
        suggestions=suggestions,
        source_columns=tuple(columns),
    )


# ---------------------------------------------------------------------------------------------
# Profile file

_FEED_KEYS = (
    "default_currency",
    "format",
    "encoding",
    "delimiter",
    "record_path",
    "columns",
    "retailer_as_no_brand",
)
_FORMATS = ("delimited", "xml", "jsonl")


def _toml_string(value: str) -> str:
    escaped = []
    for char in value:
        if char == "\\":
            escaped.append("\\\\")
        elif char == '"':
            escaped.append('\\"')
        elif char in "\b\t\n\f\r":
            escaped.append({"\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}[char])
        elif ord(char) < 0x20 or 0x7F <= ord(char) <= 0x9F:
            escaped.append(f"\\u{ord(char):04x}")
        elif 0xD800 <= ord(char) <= 0xDFFF:
            escaped.append("\ufffd")  # TOML has no escape for a lone surrogate
        else:
            escaped.append(char)
    return '"' + "".join(escaped) + '"'


_COMMENT_UNSAFE = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\ud800-\udfff]")


def _comment(text: str) -> str:
    # TOML forbids control characters in comments, and a lone surrogate cannot be written.
    return " ".join(_COMMENT_UNSAFE.sub("\ufffd", text).split())


def profile_text(profile: FeedProfile) -> str:
    """Return the TOML text :func:`save_profile` writes (comments included).

    Args:
        profile: the profile to write.

    Returns:
        The file content.
    """
    by_field = {s.field: s for s in profile.suggestions}
    lines = [
        "# catmap feed profile: which column of the feed feeds which catmap field.",
        "# Edit by hand: change a column name, comment a line out (#) to leave a field unmapped.",
        "# catmap reuses this file on the next run of the same feed.",
        "",
        "[feed]",
        "# Currency for prices that name none (ISO 4217 code such as \"EUR\"); omit if prices",
        "# always say it or a currency column is mapped.",
    ]

    def option(key: str, value: str | None) -> None:
        lines.append(f"{key} = {_toml_string(value)}" if value is not None else f"# {key} = \"\"")

    option("default_currency", profile.default_currency)
    if profile.format is not None:
        lines.append("# The format this profile was made for; a file of another format is refused.")
        option("format", profile.format)
    lines.append("# Reader options to reuse; comment out to let catmap detect them again.")
    option("encoding", profile.encoding)
    option("delimiter", profile.delimiter)
    option("record_path", profile.record_path)
    lines.append("# Uncomment to read the retailer's own name in the brand field as no brand.")
    lines.append(("" if profile.retailer_as_no_brand else "# ") + "retailer_as_no_brand = true")
    if profile.source_columns:
        lines.append("# The feed's columns when this profile was made (mapped ones must be here).")
        lines.append("columns = [")
        lines.extend(f"    {_toml_string(column)}," for column in profile.source_columns)
        lines.append("]")
    lines += ["", "[columns]", "# catmap field = \"source column\""]
    for name in TARGET_FIELDS:
        column = profile.columns.get(name)
        suggestion = by_field.get(name)
        note = ""
        if suggestion is not None and suggestion.evidence:
            prefix = f"{suggestion.confidence:.2f}: " if suggestion.column else ""
            note = "  # " + _comment(prefix + suggestion.evidence)
        required = " (required)" if name in REQUIRED_FIELDS else ""
        if column:
            lines.append(f"{name} = {_toml_string(column)}{note}")
        else:
            lines.append(f"# {name} = \"\"{required}{note}")
    unused = [c for c in profile.source_columns if c not in set(profile.columns.values())]
    if unused:
        lines += ["", "# Columns not used (kept in each product's extra fields):"]
        lines.extend(f"#   {_comment(column)}" for column in unused)
    return "\n".join(lines) + "\n"


def save_profile(profile: FeedProfile, path: str | Path) -> None:
    """Write a profile as a commented TOML file (parent folders are created).

    Args:
        profile: the profile.
        path: the file to write.
    """
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    write_text_atomic(target, profile_text(profile))


def _line_of(text: str, table: str, key: str) -> int | None:
    """1-based line of ``key = ...`` inside ``[table]`` (None if not found)."""
    current = ""
    pattern = re.compile(r"^\s*(?:\"([^\"]*)\"|'([^']*)'|([A-Za-z0-9_-]+))\s*=")
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if stripped.startswith("[") and not stripped.startswith("[["):
            current = stripped.strip("[] ")
            continue
        match = pattern.match(line)
        if match and current == table and key in match.groups():
            return number
    return None


def load_profile(path: str | Path) -> FeedProfile:
    """Read a profile written by :func:`save_profile` (possibly edited by hand).

    Args:
        path: the profile file.

    Returns:
        The profile (without suggestions).

    Raises:
        ProfileError: the file cannot be read, is not valid TOML, names an unknown field,
            option or column, or gives a value of the wrong kind; with the line when known.
    """
    source = Path(path)
    try:
        text = source.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as error:
        raise ProfileError(
            f"cannot read the profile: {error}", path=source,
            hint="delete it to let catmap suggest a new one",
        ) from error  # fmt: skip
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        found = re.search(r"line (\d+)", str(error))
        raise ProfileError(
            f"not valid TOML: {error}", path=source,
            line=int(found.group(1)) if found else None,
            hint="fix the line or delete the file to let catmap suggest a new profile",
        ) from error  # fmt: skip

    def fail(message: str, table: str, key: str, hint: str) -> ProfileError:
        return ProfileError(
            message, path=source, line=_line_of(text, table, key), field=key, hint=hint
        )

    for table in data:
        if table not in ("feed", "columns"):
            header = re.compile(r"^\s*\[+\s*" + re.escape(table) + r"\s*\]")
            line = next(
                (n for n, row in enumerate(text.splitlines(), start=1) if header.match(row)),
                _line_of(text, "", table),
            )
            raise ProfileError(
                f"unknown section [{table}]", path=source, line=line, field=table,
                hint="use [feed] and [columns]",
            )  # fmt: skip
    feed = data.get("feed", {})
    mapped = data.get("columns", {})
    if not isinstance(feed, dict) or not isinstance(mapped, dict):
        raise ProfileError("[feed] and [columns] must be tables", path=source)
    for key, value in feed.items():
        if key not in _FEED_KEYS:
            raise fail(f"unknown option '{key}'", "feed", key,
                       "options are " + ", ".join(_FEED_KEYS))  # fmt: skip
        if key == "retailer_as_no_brand":
            if not isinstance(value, bool):
                raise fail("'retailer_as_no_brand' must be true or false", "feed", key,
                           "write retailer_as_no_brand = true (no quotes)")  # fmt: skip
        elif key == "columns":
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise fail("'columns' must be a list of column names", "feed", key,
                           'write columns = ["id", "title", ...]')  # fmt: skip
        elif not isinstance(value, str) or not value:
            raise fail(f"'{key}' must be a non-empty text in quotes", "feed", key,
                       "comment the line out to let catmap detect it")  # fmt: skip
    default_currency = feed.get("default_currency")
    if default_currency is not None:
        code = normalize_currency(default_currency)
        if code is None:
            raise fail(f"unknown currency '{default_currency}'", "feed", "default_currency",
                       'use an ISO 4217 code such as "EUR"')  # fmt: skip
        default_currency = code
    if feed.get("format") is not None and feed["format"] not in _FORMATS:
        raise fail(f"unknown format '{feed['format']}'", "feed", "format",
                   "formats are " + ", ".join(_FORMATS))  # fmt: skip
    encoding = feed.get("encoding")
    if encoding is not None and not _is_text_encoding(encoding):
        raise fail(f"'{encoding}' is not a text encoding Python knows", "feed", "encoding",
                   'use a codec name such as "utf-8", or comment the line out')  # fmt: skip
    source_columns = tuple(feed.get("columns", ()))
    columns: dict[str, str] = {}
    for name, column in mapped.items():
        if name not in TARGET_FIELDS:
            raise fail(f"unknown field '{name}'", "columns", name,
                       "fields are " + ", ".join(TARGET_FIELDS))  # fmt: skip
        if not isinstance(column, str) or not column:
            raise fail(f"the column for '{name}' must be a non-empty text in quotes", "columns",
                       name, "comment the line out to leave the field unmapped")  # fmt: skip
        if source_columns and column not in source_columns:
            raise fail(f"unknown column '{column}' for field '{name}'", "columns", name,
                       "columns found: " + ", ".join(source_columns))  # fmt: skip
        columns[name] = column
    return FeedProfile(
        columns=columns,
        default_currency=default_currency,
        encoding=encoding,
        delimiter=feed.get("delimiter"),
        record_path=feed.get("record_path"),
        format=feed.get("format"),
        source_columns=source_columns,
        retailer_as_no_brand=bool(feed.get("retailer_as_no_brand", False)),
    )


def _is_text_encoding(name: str) -> bool:
    """Whether ``name`` is a codec that turns bytes into text (not rot13, base64...)."""
    try:
        info = codecs.lookup(name)
    except LookupError:
        return False
    return bool(getattr(info, "_is_text_encoding", True))
