"""Tests for catmap.feeds.writers: streaming JSON Lines / CSV / Parquet, formula-safe CSV cells."""

from __future__ import annotations

import json
from decimal import Decimal
from pathlib import Path

import pandas as pd
import pytest

from catmap.feeds.writers import (
    PRODUCT_COLUMNS,
    REJECT_COLUMNS,
    neutralise_cell,
    open_product_writer,
    open_reject_writer,
)
from catmap.records import Product, Reject

PRODUCTS = [
    Product(
        product_id="BX-1001",
        title="Corvane trail boot, waxed",
        description="Line one.\nLine two, with ümlauts.",
        brand="Corvane",
        category_path=("Footwear", "Boots", "Ankle boots"),
        price=Decimal("89.90"),
        currency="EUR",
        gtin="04006381333931",
        gtin_raw="4006381333931",
        colour="dark olive",
        size="42",
        url="https://shop.example/p/bx-1001?a=1&b=2",
        image_url="https://img.example/bx-1001.jpg",
        availability="available",
        extra={"material": "leather", "season": "AW"},
        flags=(),
        source_line=2,
    ),
    Product(
        product_id="BX-1002",
        title="Quillo mug",
        price=None,
        currency=None,
        gtin=None,
        gtin_raw="123",
        flags=("gtin_invalid", "gtin_bad_length"),
        source_line=3,
    ),
    Product(
        product_id="BX-1003",
        title="Ledger refill -0.5 mm",
        price=Decimal("-12.50"),
        currency="GBP",
        category_path=("Office",),
        extra={},
        source_line=4,
    ),
]


def _write(tmp_path: Path, fmt: str) -> Path:
    path = tmp_path / f"products.{fmt}"
    with open_product_writer(path, fmt) as writer:
        for product in PRODUCTS:
            writer.write(product)
    assert writer.count == len(PRODUCTS)
    return path


def test_jsonl_round_trip(tmp_path: Path) -> None:
    path = _write(tmp_path, "jsonl")
    frame = pd.read_json(path, lines=True, dtype=False)
    assert list(frame.columns) == list(PRODUCT_COLUMNS)
    assert frame["product_id"].tolist() == ["BX-1001", "BX-1002", "BX-1003"]
    assert frame["category_path"].tolist() == [["Footwear", "Boots", "Ankle boots"], [], ["Office"]]
    assert frame["price"].tolist()[0] == "89.90"
    assert frame["price"].isna().tolist() == [False, True, False]
    assert frame["extra"][0] == {"material": "leather", "season": "AW"}
    assert frame["flags"][1] == ["gtin_invalid", "gtin_bad_length"]
    assert frame["description"][0] == "Line one.\nLine two, with ümlauts."
    assert frame["source_line"].tolist() == [2, 3, 4]
    # Exact decimal text, never a float.
    first = json.loads(path.read_text(encoding="utf-8").splitlines()[0])
    assert first["price"] == "89.90"


def test_csv_round_trip(tmp_path: Path) -> None:
    path = _write(tmp_path, "csv")
    frame = pd.read_csv(path, dtype=str, keep_default_na=False)
    assert list(frame.columns) == list(PRODUCT_COLUMNS)
    assert frame["category_path"].tolist() == ["Footwear > Boots > Ankle boots", "", "Office"]
    assert frame["price"].tolist() == ["89.90", "", "-12.50"]  # plain negative number kept
    assert frame["gtin"].tolist() == ["04006381333931", "", ""]
    assert frame["flags"][1] == "gtin_invalid;gtin_bad_length"
    assert json.loads(frame["extra"][0]) == {"material": "leather", "season": "AW"}
    assert frame["extra"][1] == ""
    assert frame["url"][0] == "https://shop.example/p/bx-1001?a=1&b=2"
    assert frame["description"][0] == "Line one.\nLine two, with ümlauts."


def test_parquet_round_trip(tmp_path: Path) -> None:
    path = _write(tmp_path, "parquet")
    frame = pd.read_parquet(path)
    assert list(frame.columns) == list(PRODUCT_COLUMNS)
    assert [list(v) for v in frame["category_path"]] == [
        ["Footwear", "Boots", "Ankle boots"],
        [],
        ["Office"],
    ]
    assert frame["price"].isna().tolist() == [False, True, False]
    assert frame["price"][0] == "89.90"
    assert frame["price"][2] == "-12.50"
    assert dict(frame["extra"][0]) == {"material": "leather", "season": "AW"}
    assert list(frame["flags"][1]) == ["gtin_invalid", "gtin_bad_length"]
    assert frame["source_line"].tolist() == [2, 3, 4]


def test_parquet_writes_row_groups(tmp_path: Path) -> None:
    import pyarrow.parquet as pq

    from catmap.feeds.writers import ParquetProductWriter

    path = tmp_path / "p.parquet"
    with ParquetProductWriter(path, row_group_size=2) as writer:
        for number in range(5):
            writer.write(Product(product_id=f"id{number}", title=f"t{number}"))
    meta = pq.ParquetFile(path).metadata
    assert meta.num_rows == 5
    assert meta.num_row_groups == 3
    assert pd.read_parquet(path)["product_id"].tolist() == [f"id{n}" for n in range(5)]


@pytest.mark.parametrize("fmt", ["jsonl", "csv"])
def test_rejects_round_trip(tmp_path: Path, fmt: str) -> None:
    rejects = [
        Reject("missing_title", "no title in column 'name'", 7, "line 7", "sku=9; name=", "9"),
        Reject("ragged_row", "3 cells, expected 5", 9, "line 9", "x" * 1000),
    ]
    path = tmp_path / f"rejects.{fmt}"
    with open_reject_writer(path, fmt) as writer:
        for reject in rejects:
            writer.write(reject)
    if fmt == "jsonl":
        frame = pd.read_json(path, lines=True, dtype=False)
    else:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False)
    assert list(frame.columns) == list(REJECT_COLUMNS)
    assert frame["reason"].tolist() == ["missing_title", "ragged_row"]
    assert [int(v) for v in frame["line"]] == [7, 9]
    assert frame["product_id"].tolist() == ["9", ""]
    assert len(frame["excerpt"][1]) == 300  # excerpt cut to the first ~300 characters


# OWASP "CSV Injection" guidance: cells starting with = + - @ TAB or CR must not reach a
# spreadsheet as formulas; the fix it recommends is a leading single quote.
@pytest.mark.parametrize(
    ("cell", "expected"),
    [
        ("=1+1", "'=1+1"),
        ("+SUM(A1:A9)", "'+SUM(A1:A9)"),
        ("-cmd|' /C calc'!A0", "'-cmd|' /C calc'!A0"),
        ("@x", "'@x"),
        ("\tX", "'\tX"),
        ("\rX", "'\rX"),
        ("-12.5", "-12.5"),  # our choice: a plain negative number stays a number
        ("-3,75", "-3,75"),
        ("-12.5x", "'-12.5x"),
        ("plain = text", "plain = text"),
        ("", ""),
    ],
)
def test_neutralise_cell(cell: str, expected: str) -> None:
    assert neutralise_cell(cell) == expected


def test_csv_file_cells_are_neutralised(tmp_path: Path) -> None:
    nasty = ["=1+1", "+SUM()", "-cmd", "@x", "\tX", "\rX"]
    path = tmp_path / "products.csv"
    with open_product_writer(path, "csv") as writer:
        for number, cell in enumerate(nasty):
            writer.write(
                Product(
                    product_id=cell,
                    title=cell,
                    brand=cell,
                    extra={"note": cell},
                    source_line=number,
                )
            )
    frame = pd.read_csv(path, dtype=str, keep_default_na=False)
    for column in ("product_id", "title", "brand"):
        assert frame[column].tolist() == ["'" + cell for cell in nasty]
    # The extra column is JSON text starting with "{", which is safe as it is.
    assert json.loads(frame["extra"][0]) == {"note": "=1+1"}


def test_unknown_format_is_refused(tmp_path: Path) -> None:
    with pytest.raises(ValueError, match="unknown output format"):
        open_product_writer(tmp_path / "x", "xlsx")
