"""Tests for catmap.feeds.fieldmap: column suggestions from names and values, and profile files."""

from __future__ import annotations

import random
import unicodedata
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from catmap.errors import ProfileError
from catmap.feeds import FeedInfo
from catmap.feeds.fieldmap import (
    REQUIRED_FIELDS,
    TARGET_FIELDS,
    FeedProfile,
    load_profile,
    normalize_header,
    profile_text,
    save_profile,
    suggest_profile,
)
from catmap.records import SourceRecord


def _info(columns: list[str], *, has_header: bool = True) -> FeedInfo:
    return FeedInfo(
        path="feed.csv",
        format="delimited",
        encoding="utf-8",
        encoding_source="detected",
        compression=None,
        delimiter=";",
        has_header=has_header,
        record_path=None,
        columns=tuple(columns),
    )


def _records(rows: list[dict[str, str]]) -> list[SourceRecord]:
    return [
        SourceRecord(fields=row, line=number + 2, location=f"line {number + 2}")
        for number, row in enumerate(rows)
    ]


def _gtin13(rng: random.Random) -> str:
    # GS1 General Specifications: weights 3,1,3,... from the right of the 12-digit body.
    body = "".join(rng.choice("0123456789") for _ in range(12))
    total = sum(int(d) * (3 if i % 2 == 0 else 1) for i, d in enumerate(reversed(body)))
    return body + str((10 - total % 10) % 10)


def _headed_rows(header: dict[str, str], count: int = 12) -> list[dict[str, str]]:
    """Rows whose values are plausible for the field each header names."""
    rng = random.Random(0)
    values = {
        "product_id": lambda i: f"AR-{4100 + i}",
        "title": lambda i: f"Veste matelassée légère modèle {i}",
        "description": lambda i: "<p>Une veste chaude et légère pour les journées froides, "
        f"avec capuche amovible et poches zippées. Réf {i}.</p>",
        "brand": lambda i: ["Vellora", "Quintar", "Mossbeck"][i % 3],
        "category_path": lambda i: "Mode > Vestes > Doudounes",
        "price": lambda i: f"{49 + i},90",
        "currency": lambda i: "EUR",
        "gtin": lambda i: _gtin13(rng),
        "gender_text": lambda i: ["Femme", "Homme"][i % 2],
        "colour": lambda i: ["Noir", "Bleu", "Rouge"][i % 3],
        "size": lambda i: ["S", "M", "L", "XL"][i % 4],
        "url": lambda i: f"https://boutique.example/produit/{i}",
        "image_url": lambda i: f"https://boutique.example/images/{i}.jpg",
        "availability": lambda i: ["en stock", "rupture de stock"][i % 2],
    }
    return [{column: values[name](i) for column, name in header.items()} for i in range(count)]


# One header per field in each language (common practice, no source: names seen in exports).
HEADERS = {
    "en": {
        "product_id": "sku", "title": "product_name", "description": "Description",
        "brand": "Brand", "category_path": "breadcrumb", "price": "Price",
        "currency": "currency", "gtin": "EAN13", "gender_text": "Gender", "colour": "Color",
        "size": "Size", "url": "link", "image_url": "image_url", "availability": "stock",
    },
    "fr": {
        "product_id": "reference", "title": "nom_produit", "description": "descriptif",
        "brand": "marque", "category_path": "catégorie", "price": "prix",
        "currency": "devise", "gtin": "code_barre", "gender_text": "genre",
        "colour": "couleur", "size": "taille", "url": "lien", "image_url": "url_image",
        "availability": "disponibilité",
    },
    "de": {
        "product_id": "Artikelnummer", "title": "Produktname", "description": "Beschreibung",
        "brand": "Marke", "category_path": "Kategorie", "price": "Preis",
        "currency": "Währung", "gtin": "EAN", "gender_text": "Geschlecht", "colour": "Farbe",
        "size": "Größe", "url": "Produkt-URL", "image_url": "bild_url",
        "availability": "Verfügbarkeit",
    },
    "es": {
        "product_id": "referencia", "title": "titulo", "description": "descripción",
        "brand": "marca", "category_path": "categoría", "price": "precio",
        "currency": "moneda", "gtin": "codigo_de_barras", "gender_text": "sexo",
        "colour": "color", "size": "talla", "url": "enlace", "image_url": "url_imagen",
        "availability": "disponibilidad",
    },
    "it": {
        "product_id": "cod_art", "title": "nome_prodotto", "description": "descrizione",
        "brand": "marchio", "category_path": "categoria", "price": "prezzo",
        "currency": "valuta", "gtin": "codice_a_barre", "gender_text": "sesso",
        "colour": "colore", "size": "taglia", "url": "link_prodotto",
        "image_url": "url_immagine", "availability": "disponibilità",
    },
    "nl": {
        "product_id": "artikelnr", "title": "productnaam", "description": "omschrijving",
        "brand": "merk", "category_path": "categorie", "price": "prijs",
        "currency": "valuta", "gtin": "streepjescode", "gender_text": "geslacht",
        "colour": "kleur", "size": "maat", "url": "productlink", "image_url": "afbeelding",
        "availability": "voorraadstatus",
    },
    "pt": {
        "product_id": "cód_artigo", "title": "nome_do_produto", "description": "descrição",
        "brand": "marca", "category_path": "categoria", "price": "preço",
        "currency": "moeda", "gtin": "código_de_barras", "gender_text": "género",
        "colour": "cor", "size": "tamanho", "url": "url_do_produto", "image_url": "imagem",
        "availability": "disponibilidade",
    },
}  # fmt: skip


@pytest.mark.parametrize("language", sorted(HEADERS))
def test_headers_in_each_language(language: str) -> None:
    by_field = HEADERS[language]
    header = {column: name for name, column in by_field.items()}
    rows = _headed_rows(header)
    profile = suggest_profile(_info(list(header)), _records(rows))
    assert profile.columns == by_field
    assert profile.missing() == []
    suggestion = next(s for s in profile.suggestions if s.field == "price")
    assert f"header '{by_field['price']}'" in suggestion.evidence
    assert suggestion.confidence > 0.9
    assert len(suggestion.samples) == 3


@pytest.mark.parametrize(
    ("raw", "expected"),
    [
        ("product_name", "product name"),
        ("Produkt-Name", "produkt name"),
        ("nom_produit", "nom produit"),
        ("Größe", "grosse"),
        ("disponibilité", "disponibilite"),
        ("offer.price", "price"),
        ("price.@currency", "currency"),
        ("@id", "id"),
        ("x:title", "title"),
        ("productName", "product name"),
    ],
)
def test_normalize_header(raw: str, expected: str) -> None:
    assert normalize_header(raw) == expected


def test_nested_name_loses_to_plain_one() -> None:
    rows = [{"price": "12.50", "shipping.price": "4.90", "id": f"A{i}"} for i in range(5)]
    profile = suggest_profile(_info(["id", "shipping.price", "price"]), _records(rows))
    assert profile.columns["price"] == "price"


def _unnamed_rows() -> list[dict[str, str]]:
    rng = random.Random(0)
    rows = []
    for i in range(40):
        values = [
            f"KX{7300 + i}",
            f"Trail running shoe with grippy sole, model {i}",
            _gtin13(rng),
            f"{rng.randint(20, 180)}.{rng.randint(0, 99):02d} €",
            rng.choice(["W", "M", "unisex"]),
            f"https://shop.example/p/{i}",
            f"https://cdn.example/img/p{i}.webp",
            rng.choice(["Shoes > Running > Trail", "Shoes > Running > Road"]),
            "<p>A light shoe for long runs on rough ground, with a grippy sole and a "
            f"breathable upper. Drop 6 mm, weight {250 + i} g.</p>",
            rng.choice(["in stock", "out of stock", "pre-order"]),
        ]
        rows.append({f"column_{n + 1}": value for n, value in enumerate(values)})
    return rows


def test_value_based_detection_on_unnamed_columns() -> None:
    rows = _unnamed_rows()
    profile = suggest_profile(_info(list(rows[0]), has_header=False), _records(rows))
    assert profile.columns == {
        "product_id": "column_1",
        "title": "column_2",
        "gtin": "column_3",
        "price": "column_4",
        "gender_text": "column_5",
        "url": "column_6",
        "image_url": "column_7",
        "category_path": "column_8",
        "description": "column_9",
        "availability": "column_10",
    }
    by_field = {s.field: s for s in profile.suggestions}
    assert by_field["gtin"].evidence == "100% valid GTIN check digits"
    # the currency sits inside the prices: no column needed
    assert by_field["currency"].column is None
    assert "EUR" in by_field["currency"].evidence
    assert by_field["brand"].column is None


def test_one_column_feeds_at_most_one_field() -> None:
    rows = _unnamed_rows()
    profile = suggest_profile(_info(list(rows[0]), has_header=False), _records(rows))
    mapped = list(profile.columns.values())
    assert len(mapped) == len(set(mapped))
    assert [s.field for s in profile.suggestions] == list(TARGET_FIELDS)


def test_invalid_gtins_are_not_taken_for_gtins() -> None:
    rng = random.Random(0)
    rows = [{"code": "".join(rng.choice("0123456789") for _ in range(13))} for _ in range(50)]
    # About one in ten random 13-digit codes has a valid check digit (GS1 mod 10).
    profile = suggest_profile(_info(["code"]), _records(rows))
    assert "gtin" not in profile.columns


def test_empty_sample_uses_headers_only() -> None:
    profile = suggest_profile(_info(["Artikelnummer", "Produktname", "Preis"]), [])
    assert profile.columns == {
        "product_id": "Artikelnummer", "title": "Produktname", "price": "Preis",
    }  # fmt: skip
    assert set(REQUIRED_FIELDS) <= set(profile.columns)


# ------------------------------------------------------------------------- profile files


def test_profile_round_trip(tmp_path: Path) -> None:
    rows = _unnamed_rows()
    profile = suggest_profile(_info(list(rows[0]), has_header=False), _records(rows))
    profile.default_currency = "EUR"
    path = tmp_path / "profiles" / "feed.toml"
    save_profile(profile, path)
    loaded = load_profile(path)
    assert loaded.columns == profile.columns
    assert loaded.default_currency == "EUR"
    assert loaded.encoding == "utf-8"
    assert loaded.delimiter == ";"
    assert loaded.record_path is None
    assert loaded.source_columns == profile.source_columns
    assert loaded.suggestions == []
    text = path.read_text(encoding="utf-8")
    assert "# brand = \"\"" in text  # an unmapped field is a commented line to fill in
    assert "Columns not used" not in text or "column_" in text.split("Columns not used")[1]


def test_profile_round_trip_with_awkward_names(tmp_path: Path) -> None:
    names = ['say "hi"', "back\\slash", "tab\there", "ünïcode", "price.@currency"]
    profile = FeedProfile(
        columns={"title": names[0], "brand": names[1], "colour": names[2], "size": names[3],
                 "currency": names[4]},
        delimiter="\t",
        record_path="/catalog/products/product",
        source_columns=(*names, "unused column"),
    )  # fmt: skip
    path = tmp_path / "p.toml"
    save_profile(profile, path)
    loaded = load_profile(path)
    assert loaded.columns == profile.columns
    assert loaded.delimiter == "\t"
    assert loaded.record_path == "/catalog/products/product"
    assert "#   unused column" in path.read_text(encoding="utf-8")


def test_profile_text_lists_unused_columns() -> None:
    profile = FeedProfile(columns={"title": "name"}, source_columns=("name", "weight", "qty"))
    text = profile_text(profile)
    unused = text.split("# Columns not used")[1]
    assert "#   weight" in unused and "#   qty" in unused and "name" not in unused


def _write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_bad_toml_reports_line(tmp_path: Path) -> None:
    path = _write(tmp_path, '[feed]\nencoding = "utf-8"\n\n[columns]\ntitle = "name\n')
    with pytest.raises(ProfileError, match="not valid TOML") as caught:
        load_profile(path)
    assert caught.value.line == 5
    assert str(path) in str(caught.value)


def test_unknown_field_reports_line(tmp_path: Path) -> None:
    path = _write(tmp_path, '[columns]\ntitle = "name"\n# note\ncolor = "farbe"\n')
    with pytest.raises(ProfileError, match="unknown field 'color'") as caught:
        load_profile(path)
    assert caught.value.line == 4
    assert caught.value.hint is not None and "colour" in caught.value.hint


def test_unknown_column_reports_line(tmp_path: Path) -> None:
    text = '[feed]\ncolumns = ["id", "name"]\n\n[columns]\nproduct_id = "id"\ntitle = "nmae"\n'
    with pytest.raises(ProfileError, match="unknown column 'nmae'") as caught:
        load_profile(_write(tmp_path, text))
    assert caught.value.line == 6
    assert caught.value.hint == "columns found: id, name"


@pytest.mark.parametrize(
    ("text", "message", "line"),
    [
        ('[feed]\nencodng = "utf-8"\n', "unknown option 'encodng'", 2),
        ('[feed]\ndefault_currency = "Talers"\n', "unknown currency 'Talers'", 2),
        ('[feed]\ndelimiter = 5\n', "'delimiter' must be a non-empty text", 2),
        ('[columns]\n\ntitle = ""\n', "column for 'title' must be a non-empty text", 3),
        ('[mapping]\ntitle = "x"\n', r"unknown section \[mapping\]", 1),
    ],
)
def test_bad_profile_content(tmp_path: Path, text: str, message: str, line: int) -> None:
    with pytest.raises(ProfileError, match=message) as caught:
        load_profile(_write(tmp_path, text))
    assert caught.value.line == line


def test_default_currency_is_normalised(tmp_path: Path) -> None:
    loaded = load_profile(_write(tmp_path, '[feed]\ndefault_currency = "€"\n'))
    assert loaded.default_currency == "EUR"
    assert loaded.missing() == list(TARGET_FIELDS)


def test_missing_profile_file(tmp_path: Path) -> None:
    with pytest.raises(ProfileError, match="cannot read the profile"):
        load_profile(tmp_path / "absent.toml")


@given(st.text(alphabet=st.characters(max_codepoint=127), max_size=20))
def test_plain_token_of_ascii_text_equals_the_full_decomposition(value: str) -> None:
    from catmap.feeds.fieldmap import _plain_token

    # reference: unicodedata's NFKD with combining marks dropped (the path non-ASCII text takes)
    decomposed = unicodedata.normalize("NFKD", value.strip().casefold().replace("ß", "ss"))
    expected = "".join(ch for ch in decomposed if not unicodedata.combining(ch)).strip(" .")
    assert _plain_token(value) == expected


# --- values that veto a header ----------------------------------------------------------------


def test_letter_codes_named_like_a_barcode_are_the_product_id() -> None:
    # GS1 General Specifications: a GTIN is digits only with a mod-10 check digit; codes of
    # letters and digits can never pass it.
    rows = [
        {"EAN": f"KX{4100 + i}B", "Bezeichnung": f"Wasserkocher klassisch Modell {i}"}
        for i in range(12)
    ]
    profile = suggest_profile(_info(["EAN", "Bezeichnung"]), _records(rows))
    assert profile.columns == {"product_id": "EAN", "title": "Bezeichnung"}
    gtin = next(s for s in profile.suggestions if s.field == "gtin")
    assert gtin.column is None
    assert any("valid GTIN check digits" in text for text in gtin.against)


def test_category_levels_must_be_text() -> None:
    rows = [
        {"id": f"A{i}", "title": f"Lantern small model {i}", "category": f"{i % 3} > {i % 5}",
         "breadcrumb": "Outdoor > Lighting"}
        for i in range(12)
    ]  # fmt: skip
    profile = suggest_profile(_info(list(rows[0])), _records(rows))
    assert profile.columns["category_path"] == "breadcrumb"
    category = next(s for s in profile.suggestions if s.field == "category_path")
    assert any("textual levels" in text for text in category.against)


def test_xml_breadcrumb_maps_to_the_text_in_level_order(tmp_path: Path) -> None:
    from catmap.feeds import open_feed

    records = "".join(
        f"<product><id>A{i}</id><name>Kettle classic {i}</name><breadcrumb>"
        f'<crumb level="2">Kitchen</crumb><crumb level="1">Home</crumb>'
        f'<crumb level="3">Kettles</crumb></breadcrumb></product>'
        for i in range(6)
    )
    path = tmp_path / "crumbs.xml"
    path.write_text(f"<catalog>{records}</catalog>", encoding="utf-8")
    feed = open_feed(path)
    sample = feed.sample()
    assert sample[0].fields["breadcrumb.crumb"] == "Home | Kitchen | Kettles"
    profile = suggest_profile(feed.info, sample)
    assert profile.columns["category_path"] == "breadcrumb.crumb"
    assert "breadcrumb.crumb.@level" not in profile.columns.values()


def test_nested_keys_are_read_with_their_parent() -> None:
    rows = [
        {"codice": f"IT-{i:04d}", "info.nome": f"Zaino leggero con cinghia {i}",
         "marca.id": str(800 + i % 3), "marca.nome": ["Velloro", "Quillo", "Tamsel"][i % 3],
         "immagini.url": f"https://media.example/{i}.jpg | https://media.example/{i}-2.jpg",
         "taglia": ["S", "M", "L"][i % 3]}
        for i in range(12)
    ]  # fmt: skip
    profile = suggest_profile(_info(list(rows[0])), _records(rows))
    assert profile.columns["title"] == "info.nome"
    assert profile.columns["brand"] == "marca.nome"
    assert profile.columns["image_url"] == "immagini.url"
    assert profile.columns["size"] == "taglia"
    assert "marca.id" not in profile.columns.values()


def test_chosen_field_names_the_next_best_column() -> None:
    rows = [
        {"price": f"{10 + i}.90", "old_price": f"{20 + i}.90", "id": f"A{i}", "name": f"Mug {i} x"}
        for i in range(12)
    ]
    profile = suggest_profile(_info(list(rows[0])), _records(rows))
    price = next(s for s in profile.suggestions if s.field == "price")
    assert price.column == "price"
    assert any(text.startswith("next best 'old_price'") for text in price.against)


def test_xml_element_text_wins_over_its_attributes(tmp_path: Path) -> None:
    from catmap.feeds import open_feed

    brands = ["Velloro", "Quillo", "Tamsel"]
    records = "".join(
        f'<product><id>A{i}</id><name>Kettle classic {i}</name>'
        f'<brand id="{800 + i % 3}">{brands[i % 3]}</brand>'
        f'<price currency="EUR">{10 + i}.90</price>'
        f'<breadcrumb level="2">Kitchen</breadcrumb><breadcrumb level="1">Home</breadcrumb>'
        "</product>"
        for i in range(12)
    )
    path = tmp_path / "attributes.xml"
    path.write_text(f"<catalog>{records}</catalog>", encoding="utf-8")
    feed = open_feed(path)
    sample = feed.sample()
    assert sample[0].fields["breadcrumb"] == "Home | Kitchen"
    profile = suggest_profile(feed.info, sample)
    assert profile.columns["brand"] == "brand"
    assert profile.columns["price"] == "price"
    assert profile.columns["currency"] == "price.@currency"
    assert profile.columns["category_path"] == "breadcrumb"
    assert not {"brand.@id", "breadcrumb.@level"} & set(profile.columns.values())


def test_the_retailer_setting_is_saved_and_loaded(tmp_path: Path) -> None:
    path = tmp_path / "p.toml"
    save_profile(FeedProfile(columns={"product_id": "id", "title": "title"}), path)
    assert "# retailer_as_no_brand = true" in path.read_text(encoding="utf-8")
    assert load_profile(path).retailer_as_no_brand is False
    save_profile(
        FeedProfile(columns={"product_id": "id", "title": "title"}, retailer_as_no_brand=True),
        path,
    )
    assert load_profile(path).retailer_as_no_brand is True


def test_a_retailer_setting_that_is_not_a_boolean_is_a_profile_error(tmp_path: Path) -> None:
    path = tmp_path / "p.toml"
    path.write_text('[feed]\nretailer_as_no_brand = "yes"\n[columns]\nproduct_id = "id"\n',
                    encoding="utf-8")
    with pytest.raises(ProfileError) as caught:
        load_profile(path)
    assert caught.value.line == 2
    assert "true or false" in str(caught.value)
