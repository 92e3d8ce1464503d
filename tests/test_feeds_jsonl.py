"""Tests for the JSON Lines reader (catmap.feeds.jsonl)."""

from __future__ import annotations

from pathlib import Path

from catmap.feeds import open_feed
from catmap.feeds.jsonl import flatten
from catmap.records import Reject, SourceRecord

DATA = Path(__file__).parent / "data"
NESTED = DATA / "feeds" / "nested.jsonl"


def test_nested_objects_and_lists_are_flattened() -> None:
    first, second = [r for r in open_feed(NESTED) if isinstance(r, SourceRecord)]
    assert first.fields == {
        "id": "J-1",
        "title": "Bike helmet",
        "price": "49.90",  # the written form, trailing zero kept
        "shipping.price": "3.5",
        "shipping.days": "2",
        "tags": "cycling | safety",
        "images.url": "https://img.example.com/j1.jpg | https://img.example.com/j1b.jpg",
        "in_stock": "true",
    }
    assert "note" not in first.fields  # null is an absent field
    assert (first.line, second.line) == (1, 3)  # line 2 is empty
    assert second.location == "line 3"


def test_columns_in_first_seen_order() -> None:
    info = open_feed(NESTED).info
    assert info.format == "jsonl"
    assert info.columns == (
        "id",
        "title",
        "price",
        "shipping.price",
        "shipping.days",
        "tags",
        "images.url",
        "in_stock",
    )


def test_flatten_deep_nesting_and_booleans() -> None:
    out: dict[str, str] = {}
    flatten({"a": {"b": {"c": "x"}}, "flag": False, "empty": "", "list": [[1, 2], 3]}, "", out)
    assert out == {"a.b.c": "x", "flag": "false", "list": "1 | 2 | 3"}


def test_bad_lines_are_rejected_and_reading_goes_on() -> None:
    results = list(open_feed(DATA / "bad" / "bad_lines.jsonl"))
    kinds = [(type(r).__name__, r.line) for r in results]
    assert kinds == [("SourceRecord", 1), ("Reject", 2), ("Reject", 3), ("SourceRecord", 4)]
    not_json, not_object = results[1], results[2]
    assert isinstance(not_json, Reject) and isinstance(not_object, Reject)
    assert not_json.reason == not_object.reason == "unparseable_record"
    assert not_json.excerpt == '{"id": "L-2", "title": broken}'
    assert "not an object" in not_object.detail


def test_bad_encoding_line_is_rejected(tmp_path: Path) -> None:
    path = tmp_path / "enc.jsonl"
    path.write_bytes(b'{"id": "1", "t": "ok"}\n{"id": "2", "t": "caf\xe9"}\n{"id": "3"}\n')
    results = list(open_feed(path, encoding="utf-8"))
    reject = results[1]
    assert isinstance(reject, Reject)
    assert (reject.reason, reject.line) == ("bad_encoding", 2)
    assert "--encoding cp1252" in reject.detail
    assert [r.fields["id"] for r in results if isinstance(r, SourceRecord)] == ["1", "3"]


def test_crlf_lines(tmp_path: Path) -> None:
    path = tmp_path / "crlf.jsonl"
    path.write_bytes(b'{"id": "1"}\r\n{"id": "2"}\r\n')
    assert [r.line for r in open_feed(path)] == [1, 2]
