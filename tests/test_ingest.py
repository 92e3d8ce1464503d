"""Tests for catmap.feeds.ingest: profile → product, reject reasons, duplicates, row accounting."""

from __future__ import annotations

import json
from collections.abc import Iterator
from decimal import Decimal
from pathlib import Path

import pytest

from catmap.errors import CatmapError, FeedFormatError, ProfileError
from catmap.feeds.fieldmap import FeedProfile
from catmap.feeds.ingest import (
    FATAL_FEED_ERRORS,
    FLAG_ADVICE,
    Accounting,
    IdIndex,
    check_profile,
    flag_advice,
    iter_products,
    normalize_feed_to,
    to_product,
)
from catmap.records import Product, Reject, SourceRecord

BAD_FEEDS = sorted((Path(__file__).parent / "data" / "bad").glob("*"))

COLUMNS = {
    "product_id": "sku",
    "title": "name",
    "description": "desc",
    "brand": "maker",
    "category_path": "crumbs",
    "price": "cost",
    "gtin": "ean",
    "colour": "shade",
    "size": "fit",
    "url": "link",
    "image_url": "picture",
    "availability": "stock",
    "gender_text": "for",
}


def _profile(default_currency: str | None = "EUR", **changes: str | None) -> FeedProfile:
    columns = dict(COLUMNS)
    for name, column in changes.items():
        if column is None:
            columns.pop(name, None)
        else:
            columns[name] = column
    return FeedProfile(columns=columns, default_currency=default_currency)


def _record(line: int = 2, **fields: str) -> SourceRecord:
    base = {"sku": "TR-77", "name": "Velloro field jacket"}
    base.update(fields)
    return SourceRecord(fields=base, line=line, location=f"line {line}")


def test_to_product_maps_and_cleans_every_field() -> None:
    record = _record(
        sku="  TR-77 ",
        name="Velloro &amp; Sons <b>field</b>   jacket",
        desc="<p>Warm.</p><p>Waxed&nbsp;cotton.</p>",
        maker=" Velloro ",
        crumbs="Clothing > Jackets > Field jackets",
        cost="1.234,50 €",
        # GS1 General Specifications, check digit calculation: 400638133393 → check digit 1.
        ean="4006381333931",
        shade="Olive",
        fit="L",
        link=" https://shop.example/p/tr-77 ",
        picture="https://img.example/tr-77.jpg",
        stock="available",
        lining="quilted",
        season="AW",
        **{"for": "men"},
    )
    product = to_product(record, _profile())
    assert isinstance(product, Product)
    assert product.product_id == "TR-77"
    assert product.title == "Velloro & Sons field jacket"
    assert "Warm." in product.description and "Waxed cotton." in product.description
    assert "<" not in product.description
    assert product.brand == "Velloro"
    assert product.category_path == ("Clothing", "Jackets", "Field jackets")
    assert product.price == Decimal("1234.50")
    assert product.currency == "EUR"
    assert product.gtin == "04006381333931"
    assert product.gtin_raw == "4006381333931"
    assert product.colour == "Olive"
    assert product.size == "L"
    assert product.url == "https://shop.example/p/tr-77"
    assert product.image_url == "https://img.example/tr-77.jpg"
    assert product.availability == "available"
    assert product.gender_text == "men"
    assert product.extra == {"lining": "quilted", "season": "AW"}
    assert product.flags == ()
    assert product.source_line == 2


def test_unmapped_optional_fields_keep_their_defaults() -> None:
    product = to_product(_record(), _profile())
    assert isinstance(product, Product)
    assert product.price is None and product.currency is None
    assert product.gtin is None and product.gtin_raw == ""
    assert product.availability == "unknown"
    assert product.category_path == ()
    assert product.extra == {}


def test_built_product_equals_the_dataclass_made_one() -> None:
    # Products are made without Product.__init__: every field must still be set, and each
    # product must get its own extra dict.
    first = to_product(_record(sku="A"), _profile())
    second = to_product(_record(sku="B", lining="quilted"), _profile())
    assert first == Product(product_id="A", title="Velloro field jacket", source_line=2)
    assert second == Product(
        product_id="B", title="Velloro field jacket", extra={"lining": "quilted"}, source_line=2
    )
    assert isinstance(first, Product) and first.extra is not to_product(_record(), _profile()).extra


def test_invalid_gtin_is_kept_raw_and_flagged() -> None:
    # GS1 General Specifications: the check digit of 400638133393 is 1, so ...2 is wrong.
    product = to_product(_record(ean="4006381333932"), _profile())
    assert isinstance(product, Product)
    assert product.gtin is None
    assert product.gtin_raw == "4006381333932"
    assert "gtin_invalid" in product.flags
    assert "gtin_invalid_check_digit" in product.flags


def test_currency_column_and_default_currency() -> None:
    profile = _profile(default_currency="EUR", currency="cur")
    product = to_product(_record(cost="12.50", cur="usd"), profile)
    assert isinstance(product, Product)
    assert (product.price, product.currency) == (Decimal("12.50"), "USD")
    plain = to_product(_record(cost="12,50"), _profile(default_currency="GBP"))
    assert isinstance(plain, Product)
    assert (plain.price, plain.currency) == (Decimal("12.50"), "GBP")


@pytest.mark.parametrize(
    ("cost", "cur", "price", "flags"),
    [
        ("¥48", "CNY", Decimal("48.00"), ()),  # the yen sign is the yuan's too
        ("¥480", "JPY", Decimal("480"), ()),
        ("$25", "AUD", Decimal("25.00"), ()),
        ("12 kr", "SEK", Decimal("12.00"), ()),
        ("€12.00", "USD", Decimal("12.00"), ("currency_conflict",)),
    ],
)
def test_currency_column_sharing_the_price_symbol_is_no_conflict(
    cost: str, cur: str, price: Decimal, flags: tuple[str, ...]
) -> None:
    product = to_product(_record(cost=cost, cur=cur), _profile(None, currency="cur"))
    assert isinstance(product, Product)
    assert (product.price, product.currency, product.flags) == (price, cur, flags)


def test_unreadable_price_is_flagged_not_rejected() -> None:
    product = to_product(_record(cost="ask in store"), _profile())
    assert isinstance(product, Product)
    assert product.price is None
    assert "price_unparsed" in product.flags
    assert product.extra == {}


@pytest.mark.parametrize("sku", ["", "   "])
def test_missing_id_is_rejected(sku: str) -> None:
    reject = to_product(_record(line=9, sku=sku), _profile())
    assert isinstance(reject, Reject)
    assert reject.reason == "missing_id"
    assert reject.line == 9
    assert "sku" in reject.detail
    assert "Velloro field jacket" in reject.excerpt


def test_absent_id_column_is_rejected() -> None:
    record = SourceRecord(fields={"name": "A title"}, line=4, location="line 4")
    reject = to_product(record, _profile())
    assert isinstance(reject, Reject) and reject.reason == "missing_id"


@pytest.mark.parametrize("name", ["", "  ", "<br/>", "&nbsp;"])
def test_missing_title_after_cleaning_is_rejected(name: str) -> None:
    reject = to_product(_record(line=5, name=name), _profile())
    assert isinstance(reject, Reject)
    assert reject.reason == "missing_title"
    assert reject.product_id == "TR-77"
    assert reject.line == 5


def test_profile_without_required_field_is_refused() -> None:
    with pytest.raises(ProfileError, match="'title'"):
        to_product(_record(), _profile(title=None))


def test_to_product_follows_a_changed_profile() -> None:
    profile = _profile()
    first = to_product(_record(other="Other name"), profile)
    profile.columns["title"] = "other"
    second = to_product(_record(other="Other name"), profile)
    assert isinstance(first, Product) and isinstance(second, Product)
    assert (first.title, second.title) == ("Velloro field jacket", "Other name")


def test_check_profile_names_field_columns_and_file(tmp_path: Path) -> None:
    class Info:
        columns = ("sku", "label", "amount")

    where = tmp_path / "profiles" / "shop.toml"
    with pytest.raises(ProfileError) as caught:
        check_profile(_profile(title=None), Info(), profile_path=where)  # type: ignore[arg-type]
    text = str(caught.value)
    assert "'title'" in text
    assert "sku, label, amount" in text
    assert str(where) in text
    with pytest.raises(ProfileError, match="column 'name'"):
        check_profile(_profile(), Info())  # type: ignore[arg-type]


def _stream(
    items: list[SourceRecord | Reject], fatal_after: bool = False
) -> Iterator[SourceRecord | Reject]:
    yield from items
    if fatal_after:
        raise FeedFormatError("unclosed element <product>", path="shop.xml", line=40)


def test_duplicates_first_kept_later_rejected_with_first_line() -> None:
    items: list[SourceRecord | Reject] = [
        _record(line=2, sku="A"),
        _record(line=3, sku="B"),
        _record(line=4, sku="A"),
        Reject("ragged_row", "2 cells, expected 3", 5, "line 5", "x,y"),
        _record(line=6, sku="A"),
        _record(line=7, sku="", name="no id"),
    ]
    accounting = Accounting()
    out = list(iter_products(_stream(items), _profile(), accounting))
    assert [type(item).__name__ for item in out] == [
        "Product",
        "Product",
        "Reject",
        "Reject",
        "Reject",
        "Reject",
    ]
    duplicate = out[2]
    assert isinstance(duplicate, Reject)
    assert duplicate.reason == "duplicate_id"
    assert duplicate.product_id == "A"
    assert "line 2" in duplicate.detail
    assert accounting.read == 6
    assert accounting.kept == 2
    assert accounting.rejected == 4
    assert accounting.by_reason == {"duplicate_id": 2, "ragged_row": 1, "missing_id": 1}
    assert accounting.duplicate_ids == {"A": [4, 6]}
    assert accounting.balanced
    facts = accounting.to_dict()
    assert facts["read"] == 6 and facts["stopped_early"] is None
    assert list(facts["by_reason"]) == ["duplicate_id", "missing_id", "ragged_row"]


def test_accounting_balances_at_every_step() -> None:
    items: list[SourceRecord | Reject] = [
        _record(line=n, sku=str(n % 3), name="" if n % 5 == 0 else "t") for n in range(1, 40)
    ]
    accounting = Accounting()
    for count, _item in enumerate(iter_products(_stream(items), _profile(), accounting), 1):
        assert accounting.read == count
        assert accounting.balanced


def test_duplicates_across_many_batches_match_a_plain_dict(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    # Small batches and runs, so that ids spread over many index runs that get merged.
    monkeypatch.setattr("catmap.feeds.ingest.BATCH_SIZE", 7)
    monkeypatch.setattr("catmap.feeds.ingest.RECENT_IDS", 10)
    ids = [f"S{(n * 7919) % 613}" for n in range(2000)]  # every id repeats a few times
    items: list[SourceRecord | Reject] = [
        _record(line=line, sku=sku) for line, sku in enumerate(ids, start=2)
    ]
    # The expected outcome from a plain dict of id -> first line.
    first: dict[str, int] = {}
    expected: list[tuple[str, int | None]] = []
    for line, sku in enumerate(ids, start=2):
        if sku in first:
            expected.append((sku, first[sku]))
        else:
            first[sku] = line
            expected.append((sku, None))
    accounting = Accounting()
    out = list(iter_products(_stream(items), _profile(), accounting))
    assert len(out) == len(ids)
    for item, (sku, first_line) in zip(out, expected, strict=True):
        if first_line is None:
            assert isinstance(item, Product) and item.product_id == sku
        else:
            assert isinstance(item, Reject) and item.reason == "duplicate_id"
            assert item.product_id == sku
            assert f"already seen at line {first_line};" in item.detail
    assert accounting.kept == len(first)
    assert accounting.by_reason == {"duplicate_id": len(ids) - len(first)}
    assert accounting.balanced


def test_id_index_merges_runs_and_keeps_large_line_numbers(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    keys = IdIndex.keys(["first", "second", "third"])
    index = IdIndex()
    index.recent[keys[0]] = 7
    index.settle()  # fewer than RECENT_IDS: the id stays recent
    assert index.runs == [] and index.recent == {keys[0]: 7}
    monkeypatch.setattr("catmap.feeds.ingest.RECENT_IDS", 1)
    index.settle()  # a run of one id, lines as uint32
    big = 2**33 + 5  # past the uint32 range
    index.recent[keys[1]] = big
    index.settle()  # a second run of the same size: merged with the first
    assert len(index.runs) == 1 and len(index) == 2
    assert index.lookup_runs(keys) == [7, big, -1]
    assert index.lookup_runs(IdIndex.keys(["absent"])) is None


def test_fatal_error_after_a_full_batch_keeps_every_good_record(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.setattr("catmap.feeds.ingest.BATCH_SIZE", 2)
    items: list[SourceRecord | Reject] = [
        _record(line=2, sku="A"),
        _record(line=3, sku="B"),
        _record(line=4, sku="A"),
    ]
    accounting = Accounting()
    seen: list[str] = []
    with pytest.raises(FeedFormatError, match="unclosed element"):
        for item in iter_products(_stream(items, fatal_after=True), _profile(), accounting):
            seen.append(item.product_id)
    assert seen == ["A", "B", "A"]
    assert (accounting.read, accounting.kept, accounting.rejected) == (3, 2, 1)


def test_fatal_error_midway_keeps_the_good_records(tmp_path: Path) -> None:
    items: list[SourceRecord | Reject] = [
        _record(line=2, sku="A"),
        _record(line=3, sku="B"),
        _record(line=4, sku="A"),
    ]
    accounting = Accounting()
    with pytest.raises(FeedFormatError, match="unclosed element"):
        normalize_feed_to(
            _stream(items, fatal_after=True), _profile(), tmp_path / "out", accounting=accounting
        )
    assert (accounting.read, accounting.kept, accounting.rejected) == (3, 2, 1)
    assert accounting.stopped_early is not None and "unclosed element" in accounting.stopped_early
    products = (tmp_path / "out" / "products.jsonl").read_text(encoding="utf-8").splitlines()
    assert [json.loads(line)["product_id"] for line in products] == ["A", "B"]
    rejects = (tmp_path / "out" / "rejects.jsonl").read_text(encoding="utf-8").splitlines()
    assert [json.loads(line)["reason"] for line in rejects] == ["duplicate_id"]
    facts = json.loads((tmp_path / "out" / "accounting.json").read_text(encoding="utf-8"))
    assert (facts["read"], facts["kept"], facts["rejected"]) == (3, 2, 1)
    assert "unclosed element" in facts["stopped_early"]


@pytest.mark.parametrize("fmt", ["jsonl", "csv", "parquet"])
def test_normalize_feed_to_writes_every_format(tmp_path: Path, fmt: str) -> None:
    items: list[SourceRecord | Reject] = [
        _record(line=2, sku="A"),
        _record(line=3, sku="", name="x"),
    ]
    accounting, paths = normalize_feed_to(_stream(items), _profile(), tmp_path, format=fmt)
    assert (accounting.read, accounting.kept, accounting.rejected) == (2, 1, 1)
    assert paths.products.name == f"products.{fmt}"
    assert paths.rejects.name == ("rejects.csv" if fmt == "csv" else "rejects.jsonl")
    assert paths.products.exists() and paths.rejects.exists() and paths.accounting.exists()


def test_real_xml_feed_broken_after_good_records(tmp_path: Path) -> None:
    from catmap.feeds import open_feed

    good = "".join(
        f"<product><id>P{n}</id><title>Item {n}</title></product>\n" for n in range(1, 1001)
    )
    feed_path = tmp_path / "broken.xml"
    feed_path.write_text(
        f'<?xml version="1.0" encoding="utf-8"?>\n<catalog>\n{good}'
        "<product><id>P1001</id><title>Item</wrong></product>\n</catalog>\n",
        encoding="utf-8",
    )
    profile = FeedProfile(columns={"product_id": "id", "title": "title"})
    accounting = Accounting()
    with pytest.raises(FATAL_FEED_ERRORS):
        normalize_feed_to(open_feed(feed_path), profile, tmp_path / "out", accounting=accounting)
    # Every record before the break is kept, the last ones parsed just before it included.
    assert accounting.kept == 1000
    assert accounting.balanced
    assert accounting.stopped_early
    assert accounting.stopped_early.startswith(f"{feed_path}:1003: the XML is broken")
    assert "1000 records before it were read" in accounting.stopped_early
    written = (tmp_path / "out" / "products.jsonl").read_text(encoding="utf-8").splitlines()
    assert len(written) == accounting.kept


def _profile_for(feed: object) -> FeedProfile | None:
    """The suggested profile, with the first columns standing in for missing required fields."""
    from catmap.feeds.fieldmap import suggest_profile

    info = feed.info  # type: ignore[attr-defined]
    try:
        profile = suggest_profile(info, feed.sample(50))  # type: ignore[attr-defined]
    except CatmapError:
        return None
    columns = list(info.columns)
    if not columns:
        return None
    profile.columns.setdefault("product_id", columns[0])
    profile.columns.setdefault("title", columns[-1])
    return profile


@pytest.mark.parametrize("path", BAD_FEEDS, ids=[p.name for p in BAD_FEEDS])
def test_accounting_identity_on_broken_feeds(path: Path, tmp_path: Path) -> None:
    from catmap.feeds import open_feed

    try:
        feed = open_feed(path)
        profile = _profile_for(feed)
    except CatmapError as error:
        pytest.skip(f"refused at open time: {error}")
    if profile is None:
        pytest.skip("no columns found")
    accounting = Accounting()
    try:
        normalize_feed_to(feed, profile, tmp_path, accounting=accounting)
    except FATAL_FEED_ERRORS:
        assert accounting.stopped_early
        written = (tmp_path / "products.jsonl").read_text(encoding="utf-8").splitlines()
        assert len(written) == accounting.kept
    assert accounting.read == accounting.kept + accounting.rejected
    rejects = (tmp_path / "rejects.jsonl").read_text(encoding="utf-8").splitlines()
    assert len(rejects) == accounting.rejected


def test_flagged_products_are_counted_by_flag() -> None:
    records = [
        _record(2, sku="A", stock="disponibile", shade="nero", **{"for": "uomo"}),
        _record(3, sku="B", stock="maybe later", shade="glimmer", **{"for": "aliens"}),
        _record(4, sku="C", ean="4006381333932", cost="12.50"),  # check digit should be 1
        _record(5, sku="D", cost="12.50", currency="zorkmid"),
    ]
    profile = _profile(default_currency=None)
    profile.columns["currency"] = "currency"
    accounting = Accounting()
    products = list(iter_products(records, profile, accounting))
    assert [p.flags for p in products if isinstance(p, Product)][0] == ()
    assert accounting.by_flag == {
        "availability_unrecognised": 1,
        "colour_unrecognised": 1,
        "gender_unrecognised": 1,
        "gtin_invalid": 1,
        "gtin_invalid_check_digit": 1,
        "currency_missing": 2,
        "currency_unknown": 1,
    }
    assert accounting.read == accounting.kept + accounting.rejected == 4
    assert accounting.to_dict()["by_flag"]["currency_missing"] == 2
    # Every flag a product can carry that its owner can act on is explained, once, with its
    # count; the currency remedy names the profile to edit. A flag with no advice (the GTIN
    # problem's detail) gets no line.
    advice = flag_advice(accounting.by_flag, "profiles/winkel.toml")
    assert advice[0] == (
        "currency_missing: 2 prices name no currency and are kept without one: set "
        'default_currency in profiles/winkel.toml (an ISO 4217 code such as "EUR") or map a '
        "currency column, then read the feed again"
    )
    assert [line.split(":")[0] for line in advice] == [
        "currency_missing", "availability_unrecognised", "colour_unrecognised",
        "currency_unknown", "gender_unrecognised", "gtin_invalid",
    ]  # fmt: skip
    assert all(
        flag in FLAG_ADVICE for flag in accounting.by_flag if flag != "gtin_invalid_check_digit"
    )
    assert flag_advice({}, None) == []
    assert "in the feed's profile" in flag_advice({"currency_missing": 1})[0]


def test_accounting_file_has_the_flag_counts(tmp_path: Path) -> None:
    records = [_record(2, sku="A", stock="???"), _record(3, sku="B", stock="auf Lager")]
    accounting, paths = normalize_feed_to(records, _profile(), tmp_path)
    saved = json.loads(paths.accounting.read_text(encoding="utf-8"))
    assert saved["by_flag"] == {"availability_unrecognised": 1}
    assert saved["read"] == saved["kept"] + saved["rejected"]
