"""Tests for the XML reader (catmap.feeds.xml)."""

from __future__ import annotations

from pathlib import Path

import pytest

from catmap.errors import FeedFormatError, UnsafeFeedError
from catmap.feeds import open_feed
from catmap.records import SourceRecord

DATA = Path(__file__).parent / "data"
CATALOG = DATA / "feeds" / "catalog.xml"


def _records(path: Path, record_path: str | None = None) -> list[SourceRecord]:
    return [r for r in open_feed(path, record_path=record_path) if isinstance(r, SourceRecord)]


def test_record_path_is_detected() -> None:
    info = open_feed(CATALOG).info
    assert info.format == "xml"
    assert info.record_path == "/catalog/products/product"
    assert info.namespaces == {"": "urn:example:catalog", "ext": "urn:example:extra"}


def test_fields_use_local_names_prefixes_attributes_and_dots() -> None:
    first = _records(CATALOG)[0]
    assert first.fields["@id"] == "P-1"
    assert first.fields["@ext:origin"] == "EU"
    assert first.fields["title"] == "Trail runner shoe"
    assert first.fields["price"] == "59.90"
    assert first.fields["price.@currency"] == "EUR"
    assert first.fields["shipping.price"] == "4.90"
    assert first.fields["shipping.days"] == "2"
    assert first.fields["ext:colour"] == "Moss green"
    assert first.line == 8
    assert first.location == "<product> #1 at line 8"


def test_repeated_children_are_joined() -> None:
    first = _records(CATALOG)[0]
    assert first.fields["image"] == (
        "https://img.example.com/p1-a.jpg | https://img.example.com/p1-b.jpg"
    )


def test_cdata_and_escaped_html_are_kept_raw() -> None:
    first, second, third = _records(CATALOG)
    assert first.fields["description"] == "<p>Light <b>trail</b> shoe &amp; grip</p>"
    assert second.fields["description"] == "<ul><li>Taped seams</li></ul>"
    assert second.fields["title"] == "Rain jacket & hood"
    assert "description" not in third.fields


def test_columns_in_first_seen_order() -> None:
    assert open_feed(CATALOG).info.columns == (
        "@id",
        "@ext:origin",
        "title",
        "price.@currency",
        "price",
        "description",
        "shipping.price",
        "shipping.days",
        "ext:colour",
        "image",
    )


@pytest.mark.parametrize(
    "given",
    ["product", "products/product", "/catalog/products/product", "/catalog/products/product/"],
)
def test_record_path_override_forms(given: str) -> None:
    feed = open_feed(CATALOG, record_path=given)
    assert feed.info.record_path == "/catalog/products/product"
    assert len(list(feed)) == 3


def test_record_path_override_chooses_another_element() -> None:
    feed = open_feed(CATALOG, record_path="header")
    assert feed.info.record_path == "/catalog/header"
    records = list(feed)
    assert len(records) == 1
    assert isinstance(records[0], SourceRecord)
    assert records[0].fields["sender"] == "Quillmoor Outdoor"


def test_unknown_record_path_lists_the_paths_found() -> None:
    with pytest.raises(FeedFormatError, match="no element matches") as info:
        open_feed(CATALOG, record_path="item")
    assert info.value.hint and "/catalog/products/product" in info.value.hint


def test_prefixed_record_elements(tmp_path: Path) -> None:
    path = tmp_path / "prefixed.xml"
    path.write_text(
        '<?xml version="1.0"?>\n'
        '<x:feed xmlns:x="urn:example:x" xmlns:y="urn:example:y">\n'
        '  <x:item y:code="1"><x:name>One</x:name><y:size>M</y:size></x:item>\n'
        '  <x:item y:code="2"><x:name>Two</x:name></x:item>\n'
        "</x:feed>\n"
    )
    feed = open_feed(path)
    assert feed.info.record_path == "/x:feed/x:item"
    records = _records(path, record_path="item")
    assert records[0].fields == {"@y:code": "1", "x:name": "One", "y:size": "M"}
    assert [r.line for r in records] == [3, 4]


def test_nested_element_with_the_record_name_stays_inside_its_record(tmp_path: Path) -> None:
    path = tmp_path / "nested.xml"
    path.write_text(
        "<shop>\n"
        "<product><id>1</id><related><product><id>9</id></product></related></product>\n"
        "<product><id>2</id></product>\n"
        "</shop>\n"
    )
    records = _records(path)
    assert [r.fields["id"] for r in records] == ["1", "2"]
    assert records[0].fields["related.product.id"] == "9"


def test_entity_bomb_is_refused_before_parsing() -> None:
    with pytest.raises(UnsafeFeedError, match="declares XML entities") as info:
        open_feed(DATA / "bad" / "billion_laughs.xml")
    assert info.value.line == 3
    assert info.value.hint and "without a DTD" in info.value.hint


def test_entity_error_says_what_it_found_once(tmp_path: Path) -> None:
    """The hint says what to try; it neither repeats the message nor claims entities a DTD
    too large to check may not have."""
    with pytest.raises(UnsafeFeedError) as info:
        open_feed(DATA / "bad" / "billion_laughs.xml")
    assert str(info.value).count("declares XML entities") == 1
    large = tmp_path / "large_dtd.xml"
    comment = "<!-- " + "x" * 2_000_000 + " -->"
    large.write_text(f'<?xml version="1.0"?>\n<!DOCTYPE shop [\n{comment}\n')
    with pytest.raises(UnsafeFeedError, match="too large to check") as too_large:
        open_feed(large)
    assert "declares" not in str(too_large.value)


def test_external_entity_is_refused_and_never_read(tmp_path: Path) -> None:
    secret = tmp_path / "secret.txt"
    secret.write_text("TOP-SECRET-VALUE")
    path = tmp_path / "xxe.xml"
    path.write_text(
        f'<?xml version="1.0"?>\n<!DOCTYPE shop [\n<!ENTITY s SYSTEM "{secret.as_uri()}">\n]>\n'
        "<shop><product><t>&s;</t></product><product><t>b</t></product></shop>\n"
    )
    with pytest.raises(UnsafeFeedError) as info:
        open_feed(path)
    assert info.value.line == 3
    assert "TOP-SECRET-VALUE" not in str(info.value)


def test_external_entity_is_not_expanded_even_when_the_format_check_is_bypassed(
    tmp_path: Path,
) -> None:
    from catmap.feeds.xml import iter_xml

    secret = tmp_path / "secret.txt"
    secret.write_text("TOP-SECRET-VALUE")
    path = tmp_path / "xxe.xml"
    path.write_text(
        f'<?xml version="1.0"?>\n<!DOCTYPE shop [\n<!ENTITY s SYSTEM "{secret.as_uri()}">\n]>\n'
        "<shop><product><t>&s;</t></product><product><t>b</t></product></shop>\n"
    )
    try:
        values = [str(r) for r in iter_xml(path, record_path="/shop/product", encoding=None)]
    except FeedFormatError:
        values = []
    assert not any("TOP-SECRET-VALUE" in value for value in values)


def test_doctype_without_entities_is_accepted(tmp_path: Path) -> None:
    path = tmp_path / "dtd.xml"
    path.write_text(
        '<?xml version="1.0"?>\n<!DOCTYPE shop SYSTEM "shop.dtd">\n'
        "<shop><product><t>a</t></product><product><t>b</t></product></shop>\n"
    )
    assert len(_records(path)) == 2


def test_truncated_feed_yields_good_records_then_raises() -> None:
    seen = []
    with pytest.raises(FeedFormatError, match="XML is broken") as info:
        for record in open_feed(DATA / "bad" / "truncated.xml"):
            seen.append(record)
    assert [r.fields["id"] for r in seen if isinstance(r, SourceRecord)] == ["T-1", "T-2", "T-3"]
    assert info.value.line == 7
    assert info.value.hint and "3 records before it were read" in info.value.hint


def test_declared_latin1_encoding(tmp_path: Path) -> None:
    path = tmp_path / "latin.xml"
    path.write_bytes(
        '<?xml version="1.0" encoding="ISO-8859-1"?>\n<shop><p><t>Crème</t></p><p><t>Thé</t></p>'
        "</shop>\n".encode("latin-1")
    )
    feed = open_feed(path)
    assert feed.info.encoding == "iso8859-1"
    assert [r.fields["t"] for r in feed if isinstance(r, SourceRecord)] == ["Crème", "Thé"]


def test_undeclared_cp1252_is_decoded_with_the_detected_encoding(tmp_path: Path) -> None:
    path = tmp_path / "cp.xml"
    path.write_bytes(
        "<shop><p><t>Écharpe légère 15 €</t></p><p><t>Thé</t></p></shop>\n".encode("cp1252")
    )
    feed = open_feed(path)
    assert feed.info.encoding == "cp1252"
    titles = [r.fields["t"] for r in feed if isinstance(r, SourceRecord)]
    assert titles == ["Écharpe légère 15 €", "Thé"]


def test_many_records_stream(tmp_path: Path) -> None:
    path = tmp_path / "many.xml"
    with path.open("w") as handle:
        handle.write("<catalog>\n")
        for i in range(5000):
            handle.write(f'<product id="{i}"><title>Item {i}</title></product>\n')
        handle.write("</catalog>\n")
    feed = open_feed(path)
    assert feed.info.record_path == "/catalog/product"
    records = list(feed)
    assert len(records) == 5000
    assert records[-1].line == 5001


def test_bad_byte_after_the_sample_stops_with_an_encoding_hint(tmp_path: Path) -> None:
    path = tmp_path / "late.xml"
    body = "".join(
        f"<product><id>{i}</id><title>Item {i}</title></product>\n" for i in range(30000)
    )
    bad = b"<product><id>x</id><title>Caf\xe9</title></product>\n</catalog>\n"
    path.write_bytes(b"<catalog>\n" + body.encode() + bad)
    count = 0
    with pytest.raises(FeedFormatError) as info:
        for _record in open_feed(path):
            count += 1
    assert count == 30000
    assert info.value.line == 30002
    assert info.value.hint and "--encoding cp1252" in info.value.hint


def test_records_nested_in_two_levels_of_groups_are_the_products(tmp_path: Path) -> None:
    # Departments and groups repeat too, but they only name themselves: the products inside
    # them are the records, one each, never joined into their department.
    path = tmp_path / "nested.xml"
    products = "".join(
        f"<product><id>N-{i}</id><title>Item {i}</title></product>" for i in range(1, 7)
    )
    groups = f'<group name="Kitchen">{products[: len(products) // 2]}</group>'
    groups += f'<group name="Garden">{products[len(products) // 2 :]}</group>'
    path.write_text(
        f'<shop><department name="Home">{groups}</department>'
        f'<department name="Outdoor"><group name="Tools"/></department></shop>'
    )
    feed = open_feed(path)
    assert feed.info.record_path == "/shop/department/group/product"
    records = _records(path)
    assert [r.fields["id"] for r in records] == [f"N-{i}" for i in range(1, 7)]
    assert records[0].fields == {"id": "N-1", "title": "Item 1"}


def test_records_with_attributes_only_are_found(tmp_path: Path) -> None:
    path = tmp_path / "attributes.xml"
    path.write_text(
        '<catalog><product id="A-1" title="Lamp" price="10.00"/>'
        '<product id="A-2" title="Chair" price="20.00"/></catalog>'
    )
    assert open_feed(path).info.record_path == "/catalog/product"
    records = _records(path)
    assert [r.fields for r in records] == [
        {"@id": "A-1", "@title": "Lamp", "@price": "10.00"},
        {"@id": "A-2", "@title": "Chair", "@price": "20.00"},
    ]


def test_text_over_the_parser_limit_is_named_after_the_records_before_it(tmp_path: Path) -> None:
    # libxml2 refuses a text node over 10,000,000 bytes unless its huge-tree option is on,
    # which catmap leaves off.
    path = tmp_path / "huge.xml"
    records = "".join(f"<product><id>H-{i}</id><title>Item</title></product>\n" for i in range(3))
    huge = "<product><id>H-9</id><description>" + "x" * 10_500_000 + "</description></product>"
    path.write_text(f"<catalog>\n{records}{huge}\n</catalog>\n")
    read: list[object] = []
    with pytest.raises(FeedFormatError, match="text in record #4 is longer") as info:
        read.extend(open_feed(path))
    assert len(read) == 3
    assert info.value.line == 5
    assert info.value.hint and "shorten" in info.value.hint


def test_given_record_path_in_xml_broken_before_its_first_record_names_the_break(
    tmp_path: Path,
) -> None:
    # No <product> closed before the break, so the scan found none: the break is the error,
    # with its line, not "no element matches".
    path = tmp_path / "early.xml"
    path.write_text('<catalog>\n<product id="1"><title>Lamp</titel></product>\n</catalog>\n')
    with pytest.raises(FeedFormatError, match="XML is broken") as info:
        open_feed(path, record_path="product")
    assert info.value.path == str(path)
    assert info.value.line == 2


def _numbered_feed(count: int) -> bytes:
    records = "".join(
        f'  <product id="C-{n}"><title>Item {n}</title><price currency="EUR">{n}.50</price>'
        "</product>\n"
        for n in range(1, count + 1)
    )
    return f'<?xml version="1.0" encoding="UTF-8"?>\n<catalog>\n{records}</catalog>\n'.encode()


def _read_to_the_break(path: Path) -> tuple[list[str], FeedFormatError | None]:
    """The ids read before the feed stopped, and the error that stopped it (None: none)."""
    ids: list[str] = []
    try:
        for record in open_feed(path, record_path="product"):
            assert isinstance(record, SourceRecord)
            ids.append(record.fields["@id"])
    except FeedFormatError as exc:
        return ids, exc
    return ids, None


# None: the reader's own chunk size; 7 bytes puts a chunk boundary inside every tag.
CHUNKS = [None, 7]


@pytest.mark.parametrize("chunk", CHUNKS, ids=lambda c: f"chunk-{c or 'default'}")
def test_a_feed_cut_anywhere_keeps_exactly_the_records_closed_before_the_cut(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, chunk: int | None
) -> None:
    # A record counts only once its end tag is in the file: a cut record is never completed by
    # the parser and handed over, and none closed before the cut is lost.
    if chunk:
        monkeypatch.setattr("catmap.feeds.xml.CHUNK_SIZE", chunk)
    whole = _numbered_feed(4)
    closes = []
    start = 0
    while (found := whole.find(b"</product>", start)) >= 0:
        start = found + len(b"</product>")
        closes.append(start)
    complete = whole.index(b"</catalog>") + len(b"</catalog>")
    path = tmp_path / "cut.xml"
    for cut in range(whole.index(b"<product"), len(whole) + 1):
        path.write_bytes(whole[:cut])
        ids, error = _read_to_the_break(path)
        expected = [f"C-{n}" for n, end in enumerate(closes, 1) if end <= cut]
        assert ids == expected, f"cut at byte {cut}"
        if cut < complete:
            assert error is not None, f"cut at byte {cut}"
            assert error.path == str(path)
            assert error.line == whole[:cut].count(b"\n") + 1, f"cut at byte {cut}"
        else:
            assert error is None, f"cut at byte {cut}"


@pytest.mark.parametrize("chunk", CHUNKS, ids=lambda c: f"chunk-{c or 'default'}")
@pytest.mark.parametrize("good", [0, 1, 700, 1299, 2000])
def test_a_break_after_many_records_keeps_every_record_before_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, chunk: int | None, good: int
) -> None:
    # 2,000 records of about 100 bytes: the break falls in any chunk, with records closed
    # just before it in the same chunk.
    if chunk:
        monkeypatch.setattr("catmap.feeds.xml.CHUNK_SIZE", chunk)
    lines = _numbered_feed(2001).decode().splitlines(keepends=True)
    broken = 2 + good  # the declaration and <catalog> come first
    lines[broken] = lines[broken].replace("</title>", "</titel>")
    path = tmp_path / "broken.xml"
    path.write_text("".join(lines))
    ids, error = _read_to_the_break(path)
    assert ids == [f"C-{n}" for n in range(1, good + 1)]
    assert error is not None and error.path == str(path)
    assert error.line == broken + 1
    assert "mismatch" in error.message
    assert error.hint and f"{good} records before it were read" in error.hint


@pytest.mark.parametrize("encoding", ["utf-8", "utf-16"])
@pytest.mark.parametrize("chunk", [1, 3, 7])
def test_chunk_boundaries_inside_characters_change_nothing(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, encoding: str, chunk: int
) -> None:
    path = tmp_path / f"{encoding}.xml"
    titles = ["Crème brûlée dish", "Théière 1,2 l", "茶碗 blue glaze", "Ørnefjær lamp"]
    records = "".join(
        f'<product id="E-{n}"><title>{title}</title></product>\n' for n, title in enumerate(titles)
    )
    declaration = f'<?xml version="1.0" encoding="{encoding.upper()}"?>'
    path.write_bytes(f"{declaration}\n<catalog>\n{records}</catalog>\n".encode(encoding))
    monkeypatch.setattr("catmap.feeds.xml.CHUNK_SIZE", chunk)
    read = [(r.fields["@id"], r.fields["title"], r.line) for r in _records(path)]
    assert read == [(f"E-{n}", title, n + 3) for n, title in enumerate(titles)]
