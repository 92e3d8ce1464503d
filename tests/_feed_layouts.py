"""A seeded corpus of invented feed layouts, each with the mapping a person would make by hand.

Used by ``tests/test_fieldmap_corpus.py`` (which asserts the suggestion targets) and by
``benchmarks/bench_field_suggestion.py`` (which prints the shares). Every layout is a small
feed file written to a folder: CSV dialects (comma, semicolon, tab, pipe, quoted, CRLF), XML
(default and prefixed namespaces, ids and currencies in attributes, breadcrumbs of repeated
elements with a level attribute, out of order), nested JSON Lines (a brand object with its own
id, an ``info`` object with the title, lists of image objects), with headers in English,
French, German, Spanish, Italian, Dutch and Portuguese, written out, abbreviated, in camelCase
or upper case, or misleading (a column of letter-and-digit codes named like a barcode); from
the 50th layout on, half the CSV layouts carry tags in their names ("prezzo_it", "p_titre"),
and from the 99th on, half have names that say nothing ("f01", "f02"...).

All names and words are invented or plain dictionary words; no real brand or shop appears.
"""

from __future__ import annotations

import json
import random
from dataclasses import dataclass
from pathlib import Path
from xml.sax.saxutils import escape, quoteattr

from catmap.feeds.normalize import gs1_check_digit

LANGUAGES = ("en", "fr", "de", "es", "it", "nl", "pt")
FIELDS = (
    "product_id", "title", "description", "brand", "category_path", "price", "currency", "gtin",
    "gender_text", "colour", "size", "url", "image_url", "availability",
)  # fmt: skip
REQUIRED = ("product_id", "title")

# Header words per language and field: the written-out name first, then other ways of saying it
# (abbreviations included). Written for this corpus.
HEADERS: dict[str, dict[str, tuple[str, ...]]] = {
    "en": {
        "product_id": ("product id", "sku", "item no", "article number", "ref"),
        "title": ("product name", "title", "name", "item name"),
        "description": ("description", "desc", "long description", "details"),
        "brand": ("brand", "manufacturer", "make"),
        "category_path": ("category", "category path", "breadcrumb", "dept"),
        "price": ("price", "sale price", "unit price", "amount"),
        "currency": ("currency", "curr", "currency code"),
        "gtin": ("gtin", "ean", "barcode", "upc"),
        "gender_text": ("gender", "target gender", "sex"),
        "colour": ("colour", "color", "col"),
        "size": ("size", "sz"),
        "url": ("product url", "link", "url"),
        "image_url": ("image url", "image link", "img", "picture"),
        "availability": ("availability", "stock status", "in stock"),
    },
    "fr": {
        "product_id": ("identifiant", "référence", "réf", "code article", "id produit"),
        "title": ("titre", "nom du produit", "libellé", "désignation"),
        "description": ("description", "descriptif", "desc longue"),
        "brand": ("marque", "fabricant"),
        "category_path": ("catégorie", "rayon", "fil d'ariane", "arborescence"),
        "price": ("prix", "prix ttc", "prix de vente", "tarif"),
        "currency": ("devise", "monnaie"),
        "gtin": ("ean", "code barre", "gencod"),
        "gender_text": ("genre", "sexe"),
        "colour": ("couleur", "coloris"),
        "size": ("taille", "pointure"),
        "url": ("lien", "url produit", "lien produit"),
        "image_url": ("image", "url image", "lien image", "photo"),
        "availability": ("disponibilité", "dispo", "état du stock"),
    },
    "de": {
        "product_id": ("artikelnummer", "art.-nr.", "artnr", "produkt-id", "bestellnummer"),
        "title": ("produktname", "bezeichnung", "titel", "artikelname"),
        "description": ("beschreibung", "produktbeschreibung", "langtext"),
        "brand": ("marke", "hersteller"),
        "category_path": ("kategorie", "warengruppe", "kategoriepfad"),
        "price": ("preis", "verkaufspreis", "vk-preis", "bruttopreis"),
        "currency": ("währung", "whg"),
        "gtin": ("ean", "ean-code", "barcode", "gtin"),
        "gender_text": ("geschlecht", "zielgruppe"),
        "colour": ("farbe", "farbton"),
        "size": ("größe", "grösse", "gr."),
        "url": ("produkt-url", "link", "deeplink"),
        "image_url": ("bild-url", "bildlink", "bild", "produktbild"),
        "availability": ("verfügbarkeit", "lagerstatus", "lieferstatus"),
    },
    "es": {
        "product_id": ("referencia", "id producto", "código", "cód. artículo", "ref"),
        "title": ("nombre", "título", "nombre del producto", "denominación"),
        "description": ("descripción", "descripción larga", "desc"),
        "brand": ("marca", "fabricante"),
        "category_path": ("categoría", "ruta de categoría", "sección"),
        "price": ("precio", "precio de venta", "pvp", "importe"),
        "currency": ("moneda", "divisa"),
        "gtin": ("ean", "código de barras", "gtin"),
        "gender_text": ("género", "sexo"),
        "colour": ("color", "col"),
        "size": ("talla", "tamaño"),
        "url": ("enlace", "url producto"),
        "image_url": ("imagen", "url imagen", "foto"),
        "availability": ("disponibilidad", "existencias", "disp"),
    },
    "it": {
        "product_id": ("codice", "codice articolo", "cod. art.", "id prodotto", "rif"),
        "title": ("nome", "titolo", "nome prodotto", "denominazione"),
        "description": ("descrizione", "descrizione lunga", "descr"),
        "brand": ("marca", "marchio", "produttore"),
        "category_path": ("categoria", "percorso categoria", "reparto"),
        "price": ("prezzo", "prezzo di vendita", "prz", "importo"),
        "currency": ("valuta", "divisa"),
        "gtin": ("ean", "codice a barre", "gtin"),
        "gender_text": ("genere", "sesso"),
        "colour": ("colore", "col"),
        "size": ("taglia", "misura"),
        "url": ("link", "url prodotto", "collegamento"),
        "image_url": ("immagine", "url immagine", "foto"),
        "availability": ("disponibilità", "disp", "stato magazzino"),
    },
    "nl": {
        "product_id": ("artikelnummer", "artikelnr", "product-id", "referentie", "sku"),
        "title": ("productnaam", "titel", "naam", "omschrijving kort"),
        "description": ("beschrijving", "omschrijving", "productomschrijving"),
        "brand": ("merk", "fabrikant"),
        "category_path": ("categorie", "productcategorie", "rubriek"),
        "price": ("prijs", "verkoopprijs", "prijs incl. btw"),
        "currency": ("valuta", "munteenheid"),
        "gtin": ("ean", "streepjescode", "barcode"),
        "gender_text": ("geslacht", "doelgroep"),
        "colour": ("kleur", "kl"),
        "size": ("maat", "afmeting"),
        "url": ("link", "product-url", "productlink"),
        "image_url": ("afbeelding", "afbeelding-url", "foto"),
        "availability": ("beschikbaarheid", "voorraadstatus", "levertijd status"),
    },
    "pt": {
        "product_id": ("referência", "código", "id produto", "cód. artigo", "ref"),
        "title": ("nome", "título", "nome do produto", "designação"),
        "description": ("descrição", "descrição longa", "desc"),
        "brand": ("marca", "fabricante"),
        "category_path": ("categoria", "caminho da categoria", "secção"),
        "price": ("preço", "preço de venda", "pvp", "valor"),
        "currency": ("moeda", "divisa"),
        "gtin": ("ean", "código de barras", "gtin"),
        "gender_text": ("género", "gênero", "sexo"),
        "colour": ("cor", "cores"),
        "size": ("tamanho", "tam"),
        "url": ("link", "url do produto", "ligação"),
        "image_url": ("imagem", "url da imagem", "foto"),
        "availability": ("disponibilidade", "estoque", "stock"),
    },
}

# Value words per language (written for this corpus).
_NOUNS = {
    "en": ("jacket", "lantern", "kettle", "backpack", "scarf", "mug", "sneaker", "blanket"),
    "fr": ("veste", "lanterne", "bouilloire", "sac à dos", "écharpe", "tasse", "basket", "plaid"),
    "de": ("Jacke", "Laterne", "Wasserkocher", "Rucksack", "Schal", "Tasse", "Sneaker", "Decke"),
    "es": ("chaqueta", "farol", "hervidor", "mochila", "bufanda", "taza", "zapatilla", "manta"),
    "it": ("giacca", "lanterna", "bollitore", "zaino", "sciarpa", "tazza", "scarpa", "coperta"),
    "nl": ("jas", "lantaarn", "waterkoker", "rugzak", "sjaal", "mok", "sneaker", "deken"),
    "pt": ("casaco", "lanterna", "chaleira", "mochila", "cachecol", "caneca", "ténis", "manta"),
}
_ADJECTIVES = {
    "en": ("warm", "light", "classic", "small", "large", "waterproof"),
    "fr": ("chaud", "léger", "classique", "petit", "grand", "imperméable"),
    "de": ("warme", "leichte", "klassische", "kleine", "große", "wasserdichte"),
    "es": ("cálida", "ligera", "clásica", "pequeña", "grande", "impermeable"),
    "it": ("calda", "leggera", "classica", "piccola", "grande", "impermeabile"),
    "nl": ("warme", "lichte", "klassieke", "kleine", "grote", "waterdichte"),
    "pt": ("quente", "leve", "clássico", "pequeno", "grande", "impermeável"),
}
_WITH = {
    "en": "with", "fr": "avec", "de": "mit", "es": "con", "it": "con", "nl": "met", "pt": "com",
}  # fmt: skip
_EXTRAS = {
    "en": ("hood", "zip", "lid", "strap"),
    "fr": ("capuche", "zip", "couvercle", "sangle"),
    "de": ("Kapuze", "Reißverschluss", "Deckel", "Gurt"),
    "es": ("capucha", "cremallera", "tapa", "correa"),
    "it": ("cappuccio", "zip", "coperchio", "cinghia"),
    "nl": ("capuchon", "rits", "deksel", "riem"),
    "pt": ("capuz", "fecho", "tampa", "alça"),
}
_CATEGORIES = {
    "en": (("Clothing", "Jackets"), ("Home", "Kitchen", "Kettles"), ("Outdoor", "Lighting")),
    "fr": (("Vêtements", "Vestes"), ("Maison", "Cuisine", "Bouilloires"), ("Jardin", "Éclairage")),
    "de": (("Bekleidung", "Jacken"), ("Haushalt", "Küche", "Wasserkocher"), ("Outdoor", "Licht")),
    "es": (("Ropa", "Chaquetas"), ("Hogar", "Cocina", "Hervidores"), ("Exterior", "Iluminación")),
    "it": (("Abbigliamento", "Giacche"), ("Casa", "Cucina", "Bollitori"), ("Esterno", "Luci")),
    "nl": (("Kleding", "Jassen"), ("Wonen", "Keuken", "Waterkokers"), ("Buiten", "Verlichting")),
    "pt": (("Roupa", "Casacos"), ("Casa", "Cozinha", "Chaleiras"), ("Exterior", "Iluminação")),
}
_GENDERS = {
    "en": ("women", "men", "unisex", "kids"),
    "fr": ("femme", "homme", "mixte", "enfant"),
    "de": ("Damen", "Herren", "Unisex", "Kinder"),
    "es": ("mujer", "hombre", "unisex", "niños"),
    "it": ("donna", "uomo", "unisex", "bambini"),
    "nl": ("dames", "heren", "unisex", "kinderen"),
    "pt": ("mulher", "homem", "unissexo", "criança"),
}
_COLOURS = {
    "en": ("black", "navy", "red", "olive green", "white"),
    "fr": ("noir", "bleu marine", "rouge", "vert olive", "blanc"),
    "de": ("schwarz", "dunkelblau", "rot", "grün", "weiß"),
    "es": ("negro", "azul marino", "rojo", "verde", "blanco"),
    "it": ("nero", "blu", "rosso", "verde", "bianco"),
    "nl": ("zwart", "donkerblauw", "rood", "groen", "wit"),
    "pt": ("preto", "azul marinho", "vermelho", "verde", "branco"),
}
_AVAILABILITY = {
    "en": ("in stock", "out of stock", "preorder", "in stock"),
    "fr": ("en stock", "épuisé", "précommande", "en stock"),
    "de": ("auf Lager", "ausverkauft", "vorbestellbar", "lieferbar"),
    "es": ("en stock", "agotado", "preventa", "disponible"),
    "it": ("disponibile", "esaurito", "in arrivo", "disponibile"),
    "nl": ("op voorraad", "uitverkocht", "binnenkort", "op voorraad"),
    "pt": ("em stock", "esgotado", "em breve", "disponível"),
}
_SENTENCE = {
    "en": "A {adj} {noun} for every day, made to last. Easy to care for.",
    "fr": "Un(e) {noun} {adj} pour tous les jours, fait pour durer. Facile à entretenir.",
    "de": "{adj} {noun} für jeden Tag, gemacht für lange Freude. Leicht zu pflegen.",
    "es": "Una {noun} {adj} para todos los días, hecha para durar. Fácil de cuidar.",
    "it": "Una {noun} {adj} per tutti i giorni, fatta per durare. Facile da curare.",
    "nl": "Een {adj} {noun} voor elke dag, gemaakt om lang mee te gaan. Makkelijk schoon.",
    "pt": "Um(a) {noun} {adj} para todos os dias, feito para durar. Fácil de tratar.",
}
_BRANDS = ("Velloro", "Quillo", "Tamsel", "Corvane", "Brindle & Oak", "Nessa", "Orvik")
_SIZES = ("S", "M", "L", "XL", "38", "40", "42", "one size")
# A level attribute per language for XML breadcrumbs.
_LEVEL_ATTRIBUTE = {
    "en": "level", "fr": "niveau", "de": "ebene", "es": "nivel", "it": "livello", "nl": "niveau",
    "pt": "nivel",
}  # fmt: skip
_XML_RECORD = {
    "en": ("products", "product"), "fr": ("produits", "produit"), "de": ("artikel", "artikel"),
    "es": ("productos", "producto"), "it": ("prodotti", "prodotto"), "nl": ("producten", "product"),
    "pt": ("produtos", "produto"),
}  # fmt: skip
RECORDS = 40


@dataclass(frozen=True)
class Layout:
    """One invented feed layout.

    Attributes:
        name: e.g. "07-it-xml".
        path: the feed file written.
        expected: field -> the column (as catmap's reader names it) that feeds it; the fields
            the layout does not have are absent.
    """

    name: str
    path: Path
    expected: dict[str, str]


def _gtin(rng: random.Random) -> str:
    body = "".join(rng.choice("0123456789") for _ in range(12))
    return body + str(gs1_check_digit(body))


# Decorations exports add around a name: a language or currency tag, a table prefix, a number.
_DECORATIONS = ("{}_{lang}", "{} ({lang})", "p_{}", "{}_1", "{} [{lang}]", "item_{}")


def _decorate(header: str, lang: str, rng: random.Random) -> str:
    return rng.choice(_DECORATIONS).replace("{lang}", lang).format(header)


def _header_style(header: str, style: str) -> str:
    words = header.replace("-", " ").replace("_", " ").split()
    if style == "snake":
        return "_".join(words).lower()
    if style == "camel":
        return words[0].lower() + "".join(w[:1].upper() + w[1:] for w in words[1:])
    if style == "upper":
        return header.upper()
    if style == "title":
        return " ".join(w[:1].upper() + w[1:] for w in words)
    return header


def _values(lang: str, rng: random.Random, index: int, id_style: str) -> dict[str, object]:
    noun = rng.choice(_NOUNS[lang])
    adjective = rng.choice(_ADJECTIVES[lang])
    brand = rng.choice(_BRANDS)
    title = f"{brand} {noun} {adjective} {_WITH[lang]} {rng.choice(_EXTRAS[lang])} {index}"
    levels = rng.choice(_CATEGORIES[lang])
    amount = rng.randint(3, 400) + rng.choice((0.0, 0.5, 0.9, 0.99))
    if id_style == "numeric":
        product_id = str(100000 + index * 7)
    elif id_style == "letters":  # letters and digits: fails any barcode check digit
        product_id = f"{rng.choice('ABCDEFGHKLMNPRSTUVWXZ')}{rng.choice('ABCDEFGHKLMNPRSTUVWXZ')}" \
            f"{rng.randint(1000, 9999)}{rng.choice('ABCDEFGHKLMNPRSTUVWXZ')}{index}"
    else:
        product_id = f"{lang.upper()}-{index:05d}"
    return {
        "product_id": product_id,
        "title": title,
        "description": "<p>" + _SENTENCE[lang].format(adj=adjective, noun=noun) + "</p>",
        "brand": brand,
        "category_levels": levels,
        "amount": amount,
        "currency": rng.choice(("EUR", "EUR", "GBP")),
        "gtin": _gtin(rng),
        "gender_text": rng.choice(_GENDERS[lang]),
        "colour": rng.choice(_COLOURS[lang]),
        "size": rng.choice(_SIZES),
        "url": f"https://shop{index % 3}.example/{lang}/p/{product_id.lower()}",
        "image_url": f"https://media.example/{lang}/{product_id.lower()}.jpg",
        "availability": rng.choice(_AVAILABILITY[lang]),
    }


def _price_text(amount: float, style: str, currency: str) -> str:
    whole = f"{amount:.2f}"
    if style == "comma":
        return whole.replace(".", ",")
    if style == "symbol":
        return whole.replace(".", ",") + " €"
    if style == "code":
        return f"{currency} {whole}"
    return whole


def _choose_fields(rng: random.Random) -> list[str]:
    optional = [f for f in FIELDS if f not in REQUIRED]
    rng.shuffle(optional)
    keep = optional[: rng.randint(7, len(optional))]
    ordered = [f for f in FIELDS if f in REQUIRED or f in keep]
    rng.shuffle(ordered)
    return ordered


def _headers(lang: str, fields: list[str], rng: random.Random, style: str) -> dict[str, str]:
    names: dict[str, str] = {}
    used: set[str] = set()
    for field in fields:
        options = [h for h in HEADERS[lang][field] if _header_style(h, style) not in used]
        header = _header_style(rng.choice(options), style)
        used.add(header)
        names[field] = header
    return names


def _csv_layout(
    name: str, folder: Path, lang: str, rng: random.Random, decorate: random.Random | None = None
) -> Layout:
    delimiter = rng.choice((",", ";", "\t", "|"))
    quote_all = rng.random() < 0.4
    line_end = rng.choice(("\n", "\r\n"))
    style = rng.choice(("plain", "plain", "snake", "camel", "upper", "title"))
    fields = _choose_fields(rng)
    misleading = "gtin" not in fields and rng.random() < 0.5
    id_style = "letters" if misleading else rng.choice(("numeric", "prefixed", "letters"))
    headers = _headers(lang, fields, rng, style)
    if decorate is not None:  # names that carry tags; own random stream, layouts 0-48 unchanged
        headers = {field: _decorate(header, lang, decorate) for field, header in headers.items()}
    if misleading:  # letter-and-digit product codes in a column named like a barcode
        headers["product_id"] = _header_style(rng.choice(("ean", "gtin", "barcode")), style)
    price_style = rng.choice(("plain", "comma", "symbol", "code"))
    separator = rng.choice((" > ", " / ", "|", " » "))
    rows = []
    for index in range(1, RECORDS + 1):
        values = _values(lang, rng, index, id_style)
        row = []
        for field in fields:
            if field == "category_path":
                row.append(separator.join(values["category_levels"]))  # type: ignore[arg-type]
            elif field == "price":
                row.append(_price_text(values["amount"], price_style, values["currency"]))  # type: ignore[arg-type]
            else:
                row.append(str(values[field]))
        rows.append(row)

    def cell(text: str) -> str:
        if quote_all or delimiter in text or '"' in text:
            return '"' + text.replace('"', '""') + '"'
        return text

    lines = [delimiter.join(cell(headers[f]) for f in fields)]
    lines += [delimiter.join(cell(c) for c in row) for row in rows]
    path = folder / f"{name}.csv"
    path.write_bytes((line_end.join(lines) + line_end).encode("utf-8"))
    return Layout(name, path, {f: headers[f] for f in fields})


def _opaque_layout(
    name: str, folder: Path, lang: str, rng: random.Random, decorate: random.Random | None = None
) -> Layout:
    """A CSV whose names say nothing ("f01", "f02"...): only the values can tell."""
    layout = _csv_layout(name, folder, lang, rng, None)
    text = layout.path.read_bytes().decode("utf-8")
    header, _, rest = text.partition("\n")
    ending = "\r\n" if header.endswith("\r") else "\n"
    delimiter = next(d for d in (";", "\t", "|", ",") if d in header)
    columns = header.rstrip("\r").split(delimiter)
    opaque = {column: f"f{index:02d}" for index, column in enumerate(columns, start=1)}
    quoted = columns[0].startswith('"')
    names = [f'"{opaque[c]}"' if quoted else opaque[c] for c in columns]
    layout.path.write_bytes((delimiter.join(names) + ending + rest).encode("utf-8"))
    plain = {c.strip('"'): opaque[c] for c in columns}
    return Layout(name, layout.path, {f: plain[c] for f, c in layout.expected.items()})


def _xml_name(header: str) -> str:
    words = "".join(ch if ch.isalnum() else " " for ch in header).split()
    return words[0].lower() + "".join(w.capitalize() for w in words[1:]) if words else "x"


def _xml_layout(
    name: str, folder: Path, lang: str, rng: random.Random, decorate: random.Random | None = None
) -> Layout:
    fields = _choose_fields(rng)
    headers = {f: _xml_name(h) for f, h in _headers(lang, fields, rng, "plain").items()}
    prefix = rng.choice(("", "", "g"))
    qualified = {f: (f"{prefix}:{h}" if prefix else h) for f, h in headers.items()}
    id_attribute = rng.random() < 0.5
    breadcrumb = "category_path" in fields and rng.random() < 0.7
    currency_attribute = "price" in fields and "currency" in fields and rng.random() < 0.5
    container, record = _XML_RECORD[lang]
    level = _LEVEL_ATTRIBUTE[lang]
    expected: dict[str, str] = {}
    body = []
    for index in range(1, RECORDS + 1):
        values = _values(lang, rng, index, rng.choice(("numeric", "prefixed")))
        attributes = ""
        parts = []
        for field in fields:
            tag = qualified[field]
            if field == "product_id" and id_attribute:
                attributes = f" {headers[field]}={quoteattr(str(values[field]))}"
                expected[field] = f"@{headers[field]}"
                continue
            if field == "currency" and currency_attribute:
                continue
            if field == "category_path" and breadcrumb:
                levels = list(enumerate(values["category_levels"], start=1))  # type: ignore[arg-type]
                rng.shuffle(levels)  # the level attribute gives the order, not the file
                crumbs = "".join(
                    f'<{tag} {level}="{n}">{escape(text)}</{tag}>' for n, text in levels
                )
                parent = f"{prefix}:path" if prefix else "path"
                parts.append(f"<{parent}>{crumbs}</{parent}>")
                expected[field] = f"{parent}.{tag}"
                continue
            if field == "category_path":
                text = " > ".join(values["category_levels"])  # type: ignore[arg-type]
            elif field == "price":
                text = f"{values['amount']:.2f}"
            else:
                text = str(values[field])
            if field == "price" and currency_attribute:
                currency_tag = _xml_name(HEADERS[lang]["currency"][0])
                parts.append(f'<{tag} {currency_tag}="{values["currency"]}">{text}</{tag}>')
                expected["currency"] = f"{tag}.@{currency_tag}"
            elif field == "description":
                parts.append(f"<{tag}><![CDATA[{text}]]></{tag}>")
            else:
                parts.append(f"<{tag}>{escape(text)}</{tag}>")
            expected[field] = tag
        body.append(f"  <{record}{attributes}>" + "".join(parts) + f"</{record}>")
    namespace = f' xmlns:{prefix}="urn:example:{lang}"' if prefix else ""
    default_ns = ' xmlns="urn:example:feed"' if not prefix and rng.random() < 0.5 else ""
    text = (
        f'<?xml version="1.0" encoding="UTF-8"?>\n<{container}{namespace}{default_ns}>\n'
        + "\n".join(body)
        + f"\n</{container}>\n"
    )
    path = folder / f"{name}.xml"
    path.write_text(text, encoding="utf-8")
    return Layout(name, path, expected)


def _jsonl_layout(
    name: str, folder: Path, lang: str, rng: random.Random, decorate: random.Random | None = None
) -> Layout:
    fields = _choose_fields(rng)
    headers = {f: _xml_name(h) for f, h in _headers(lang, fields, rng, "plain").items()}
    info_key = {"en": "info", "fr": "infos", "de": "info", "es": "datos", "it": "info",
                "nl": "gegevens", "pt": "dados"}[lang]  # fmt: skip
    brand_object = "brand" in fields and rng.random() < 0.6
    offer_object = "price" in fields and rng.random() < 0.6
    images_list = "image_url" in fields and rng.random() < 0.5
    nested_info = rng.random() < 0.6
    name_key = {"en": "name", "fr": "nom", "de": "name", "es": "nombre", "it": "nome",
                "nl": "naam", "pt": "nome"}[lang]  # fmt: skip
    offer_key = {"en": "offer", "fr": "offre", "de": "angebot", "es": "oferta", "it": "offerta",
                 "nl": "aanbieding", "pt": "oferta"}[lang]  # fmt: skip
    expected: dict[str, str] = {}
    lines = []
    for index in range(1, RECORDS + 1):
        values = _values(lang, rng, index, rng.choice(("numeric", "prefixed", "letters")))
        record: dict[str, object] = {}
        for field in fields:
            key = headers[field]
            value: object = str(values.get(field, ""))
            if field == "category_path":
                value = list(values["category_levels"])  # type: ignore[call-overload]
            if field == "price":
                value = round(float(values["amount"]), 2)  # type: ignore[arg-type]
            if field == "brand" and brand_object:
                record[key] = {"id": str(800 + _BRANDS.index(str(values["brand"]))),
                               name_key: values["brand"]}  # fmt: skip
                expected[field] = f"{key}.{name_key}"
                continue
            if field in ("price", "currency") and offer_object:
                record.setdefault(offer_key, {})[key] = value  # type: ignore[index]
                expected[field] = f"{offer_key}.{key}"
                continue
            if field == "image_url" and images_list:
                record[key] = [{"url": value}, {"url": str(value).replace(".jpg", "-2.jpg")}]
                expected[field] = f"{key}.url"
                continue
            if field in ("title", "description") and nested_info:
                record.setdefault(info_key, {})[key] = value  # type: ignore[index]
                expected[field] = f"{info_key}.{key}"
                continue
            record[key] = value
            expected[field] = key
        lines.append(json.dumps(record, ensure_ascii=False))
    path = folder / f"{name}.jsonl"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return Layout(name, path, expected)


def write_layouts(folder: Path, count: int = 49, seed: int = 0) -> list[Layout]:
    """Write ``count`` layouts to ``folder`` (seeded): every language in every format.

    Args:
        folder: where the feed files go.
        count: how many layouts (49 = 7 languages x 7 variants; from the 50th on, half the
            CSV layouts have tagged column names: "prezzo_it", "p_titre", "Preis (de)"; from the
            99th on, half have names that say nothing).
        seed: the random seed.

    Returns:
        The layouts, with the expected mapping of each.
    """
    rng = random.Random(seed)
    makers = (_csv_layout, _csv_layout, _csv_layout, _xml_layout, _xml_layout, _jsonl_layout,
              _jsonl_layout)  # fmt: skip
    layouts = []
    for number in range(count):
        lang = LANGUAGES[number % len(LANGUAGES)]
        maker = makers[(number // len(LANGUAGES)) % len(makers)]
        kind = maker.__name__.strip("_").split("_")[0]
        # From the 50th layout on, every second CSV layout has tagged names ("prezzo_it").
        decorate = random.Random(seed * 100_003 + number) if number >= 49 and number % 2 else None
        if number >= 98 and number % 2:  # from the 99th on, names that say nothing
            maker, kind = _opaque_layout, "opaque"
        layouts.append(maker(f"{number:02d}-{lang}-{kind}", folder, lang, rng, decorate))
    return layouts
