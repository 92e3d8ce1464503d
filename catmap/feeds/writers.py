"""Streaming writers for products and rejects: JSON Lines, CSV and Parquet.

Every writer takes one record at a time and keeps at most one Parquet row group in memory, so
memory stays flat however big the feed is. Values are written as catmap holds them:

* ``category_path`` is a list in JSON Lines and Parquet, and ``" > "``-joined text in CSV;
* ``price`` is the exact decimal as text (never a float), empty / null when there is none;
* ``flags`` is a list in JSON Lines and Parquet, ``";"``-joined in CSV;
* ``extra`` (every source column that no field took) is an object in JSON Lines, a
  string → string map in Parquet, and one JSON text column in CSV so that the CSV columns stay
  the same whatever the feed.

CSV cells are made safe against formula injection (see :func:`neutralise_cell`).
"""

from __future__ import annotations

import csv
import json
from collections.abc import Callable
from pathlib import Path
from types import TracebackType
from typing import IO, Any

from catmap._atomic import AtomicFile
from catmap._cells import neutralise_cell
from catmap.records import Product, Reject

FORMATS = ("jsonl", "csv", "parquet")
EXTENSIONS = {"jsonl": "jsonl", "csv": "csv", "parquet": "parquet"}

PRODUCT_COLUMNS = (
    "product_id",
    "title",
    "description",
    "brand",
    "category_path",
    "price",
    "currency",
    "gtin",
    "gtin_raw",
    "gender_text",
    "colour",
    "size",
    "url",
    "image_url",
    "availability",
    "flags",
    "source_line",
    "extra",
)
REJECT_COLUMNS = ("reason", "detail", "line", "location", "product_id", "excerpt")

CATEGORY_SEPARATOR = " > "
FLAG_SEPARATOR = ";"
EXCERPT_LENGTH = 300
PARQUET_ROW_GROUP = 50_000

def product_to_dict(product: Product) -> dict[str, Any]:
    """Return a product as plain JSON-ready values (lists, text price, object extra)."""
    return {
        "product_id": product.product_id,
        "title": product.title,
        "description": product.description,
        "brand": product.brand,
        "category_path": list(product.category_path),
        "price": str(product.price) if product.price is not None else None,
        "currency": product.currency,
        "gtin": product.gtin,
        "gtin_raw": product.gtin_raw,
        "gender_text": product.gender_text,
        "colour": product.colour,
        "size": product.size,
        "url": product.url,
        "image_url": product.image_url,
        "availability": product.availability,
        "flags": list(product.flags),
        "source_line": product.source_line,
        "extra": dict(product.extra),
    }


def reject_to_dict(reject: Reject) -> dict[str, Any]:
    """Return a reject as plain values; the excerpt is cut to :data:`EXCERPT_LENGTH` characters."""
    return {
        "reason": reject.reason,
        "detail": reject.detail,
        "line": reject.line,
        "location": reject.location,
        "product_id": reject.product_id,
        "excerpt": reject.excerpt[:EXCERPT_LENGTH],
    }


def _product_csv_row(product: Product) -> list[str]:
    return [
        product.product_id,
        product.title,
        product.description,
        product.brand,
        CATEGORY_SEPARATOR.join(product.category_path),
        str(product.price) if product.price is not None else "",
        product.currency or "",
        product.gtin or "",
        product.gtin_raw,
        product.gender_text,
        product.colour,
        product.size,
        product.url,
        product.image_url,
        product.availability,
        FLAG_SEPARATOR.join(product.flags),
        str(product.source_line),
        json.dumps(product.extra, ensure_ascii=False) if product.extra else "",
    ]


def _reject_csv_row(reject: Reject) -> list[str]:
    return [
        reject.reason,
        reject.detail,
        str(reject.line),
        reject.location,
        reject.product_id,
        reject.excerpt[:EXCERPT_LENGTH],
    ]


class RecordWriter:
    """What every writer offers: ``write`` one record, ``close`` once; also a ``with`` context.

    Attributes:
        path: the file written.
        count: records written so far.
    """

    path: Path
    count: int

    def write(self, record: Any) -> None:  # pragma: no cover - overridden
        raise NotImplementedError

    def close(self) -> None:  # pragma: no cover - overridden
        raise NotImplementedError

    def __enter__(self) -> RecordWriter:
        return self

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.close()


class JsonLinesWriter(RecordWriter):
    """Write one JSON object per line (UTF-8, non-ASCII kept as is).

    Args:
        path: the output file (created or replaced).
        to_dict: turns one record into a JSON-ready dict.
    """

    def __init__(self, path: str | Path, to_dict: Callable[[Any], dict[str, Any]]) -> None:
        self.path = Path(path)
        self.count = 0
        self._to_dict = to_dict
        self._target = AtomicFile(self.path)
        self._file: IO[str] | None = self._target.open("w", encoding="utf-8", newline="\n")
        self._dumps = json.JSONEncoder(ensure_ascii=False, separators=(",", ":")).encode

    def write(self, record: Any) -> None:
        """Append one record."""
        assert self._file is not None, "writer is closed"
        self._file.write(self._dumps(self._to_dict(record)) + "\n")
        self.count += 1

    def close(self) -> None:
        """Flush and close the file, which then replaces the target (idempotent)."""
        if self._file is not None:
            self._file.close()
            self._file = None
            self._target.commit()


class CsvWriter(RecordWriter):
    """Write a header row then one row per record; every cell is neutralised against formulas.

    Args:
        path: the output file (created or replaced, UTF-8).
        columns: the header.
        to_row: turns one record into its cells, in ``columns`` order.
    """

    def __init__(
        self,
        path: str | Path,
        columns: tuple[str, ...],
        to_row: Callable[[Any], list[str]],
    ) -> None:
        self.path = Path(path)
        self.count = 0
        self._to_row = to_row
        self._target = AtomicFile(self.path)
        self._file: IO[str] | None = self._target.open("w", encoding="utf-8", newline="")
        self._writer = csv.writer(self._file)
        self._writer.writerow(columns)

    def write(self, record: Any) -> None:
        """Append one row."""
        assert self._file is not None, "writer is closed"
        self._writer.writerow([neutralise_cell(cell) for cell in self._to_row(record)])
        self.count += 1

    def close(self) -> None:
        """Flush and close the file, which then replaces the target (idempotent)."""
        if self._file is not None:
            self._file.close()
            self._file = None
            self._target.commit()


class ParquetProductWriter(RecordWriter):
    """Write products to Parquet in row groups of ``row_group_size`` rows.

    Only the current row group is held in memory. ``category_path`` and ``flags`` are lists of
    strings, ``price`` is text (exact decimal), ``extra`` is a string → string map.

    Args:
        path: the output file (created or replaced).
        row_group_size: rows buffered before a row group is written.
    """

    def __init__(self, path: str | Path, *, row_group_size: int = PARQUET_ROW_GROUP) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        self.path = Path(path)
        self.count = 0
        self._pa = pa
        self._row_group_size = row_group_size
        text = pa.string()
        self._schema = pa.schema(
            [
                ("product_id", text),
                ("title", text),
                ("description", text),
                ("brand", text),
                ("category_path", pa.list_(text)),
                ("price", text),
                ("currency", text),
                ("gtin", text),
                ("gtin_raw", text),
                ("gender_text", text),
                ("colour", text),
                ("size", text),
                ("url", text),
                ("image_url", text),
                ("availability", text),
                ("flags", pa.list_(text)),
                ("source_line", pa.int64()),
                ("extra", pa.map_(text, text)),
            ]
        )
        self._columns: list[list[Any]] = [[] for _ in PRODUCT_COLUMNS]
        self._target = AtomicFile(self.path)
        self._writer: Any = pq.ParquetWriter(str(self._target.temporary), self._schema)

    def write(self, record: Any) -> None:
        """Buffer one product; a full row group is written out."""
        product: Product = record
        values = (
            product.product_id,
            product.title,
            product.description,
            product.brand,
            list(product.category_path),
            str(product.price) if product.price is not None else None,
            product.currency,
            product.gtin,
            product.gtin_raw,
            product.gender_text,
            product.colour,
            product.size,
            product.url,
            product.image_url,
            product.availability,
            list(product.flags),
            product.source_line,
            list(product.extra.items()),
        )
        for column, value in zip(self._columns, values, strict=True):
            column.append(value)
        self.count += 1
        if len(self._columns[0]) >= self._row_group_size:
            self._flush()

    def _flush(self) -> None:
        if not self._columns[0]:
            return
        table = self._pa.Table.from_arrays(
            [
                self._pa.array(column, type=self._schema.field(i).type)
                for i, column in enumerate(self._columns)
            ],
            schema=self._schema,
        )
        self._writer.write_table(table)
        self._columns = [[] for _ in PRODUCT_COLUMNS]

    def close(self) -> None:
        """Write the last row group and close the file (idempotent)."""
        if self._writer is not None:
            self._flush()
            self._writer.close()
            self._writer = None
            self._target.commit()


def open_product_writer(path: str | Path, format: str = "jsonl") -> RecordWriter:
    """Open a streaming writer for products.

    Args:
        path: the output file (created or replaced).
        format: ``"jsonl"``, ``"csv"`` or ``"parquet"``.

    Returns:
        A writer; close it (or use it in a ``with`` block) to finish the file.

    Raises:
        ValueError: for an unknown format.
    """
    if format == "jsonl":
        return JsonLinesWriter(path, product_to_dict)
    if format == "csv":
        return CsvWriter(path, PRODUCT_COLUMNS, _product_csv_row)
    if format == "parquet":
        return ParquetProductWriter(path)
    raise ValueError(f"unknown output format {format!r}; use one of {', '.join(FORMATS)}")


def open_reject_writer(path: str | Path, format: str = "jsonl") -> RecordWriter:
    """Open a streaming writer for rejects (JSON Lines or CSV).

    Args:
        path: the output file (created or replaced).
        format: ``"jsonl"`` or ``"csv"``.

    Returns:
        A writer with columns reason, detail, line, location, product_id, excerpt.

    Raises:
        ValueError: for an unknown format.
    """
    if format == "jsonl":
        return JsonLinesWriter(path, reject_to_dict)
    if format == "csv":
        return CsvWriter(path, REJECT_COLUMNS, _reject_csv_row)
    raise ValueError(f"unknown reject file format {format!r}; use jsonl or csv")

