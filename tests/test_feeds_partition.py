"""Byte-range partitions: read one range at a time, get exactly what the whole-file reader gives.

The quote rule checked here is RFC 4180, section 2, rules 5-7 (a quoted field may hold line
breaks; a quote inside it is doubled).
"""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import pytest

from catmap.feeds.partition import iter_range, iter_record_blocks, plan_ranges
from catmap.feeds.read import open_feed

DEMO = Path(__file__).resolve().parents[1] / "feeds_demo"


def _by_ranges(path: Path, target: int) -> tuple[list[object], list[object], int]:
    feed = open_feed(path)
    ranges = plan_ranges(feed.info, target_bytes=target)
    assert ranges is not None
    parts = [item for part in ranges for item in iter_range(feed.info, part)]
    return list(feed), parts, len(ranges)


@pytest.mark.parametrize("name", ["ferravelle.csv", "tallimbra.tsv", "oskelund_labelled.csv"])
@pytest.mark.parametrize("target", [3_000, 100_000])
def test_demo_feeds_read_the_same_by_ranges(name: str, target: int) -> None:
    whole, parts, count = _by_ranges(DEMO / name, target)
    assert count > 1
    assert parts == whole  # same records, rejects and line numbers, in the same order


def test_a_quoted_newline_never_splits_a_record(tmp_path: Path) -> None:
    feed = tmp_path / "quoted.csv"
    feed.write_text(
        'id,title,text\n1,"two\nlines",x\n2,b,"say ""hi""\n\nthen go"\n3,c,"d"\n4,e,f\n',
        encoding="utf-8",
    )
    whole, parts, count = _by_ranges(feed, 1)
    assert count == 5  # the header, then one range per record: no cut inside a quoted field
    assert parts == whole
    assert [record.line for record in parts] == [2, 4, 7, 8]  # type: ignore[attr-defined]


def test_a_repeated_header_and_a_separator_line_read_the_same_by_ranges(tmp_path: Path) -> None:
    feed = tmp_path / "joined.csv"
    rows = [f"{i};t{i}" for i in range(1, 9)]
    feed.write_text(
        "sep=;\nid;title\n" + "\n".join(rows[:4]) + "\nid;title\n" + "\n".join(rows[4:]) + "\n"
    )
    whole, parts, count = _by_ranges(feed, 8)
    assert count > 3
    assert parts == whole
    assert [getattr(item, "reason", "record") for item in parts].count("repeated_header") == 1
    assert len(parts) == 9


def test_json_lines_and_crlf_line_ends(tmp_path: Path) -> None:
    feed = tmp_path / "feed.jsonl"
    rows = [json.dumps({"id": str(i), "title": f"t{i}"}) for i in range(50)]
    feed.write_bytes(
        ("\r\n".join(rows[:20]) + "\r\nnot json\r\n\r\n" + "\n".join(rows[20:])).encode()
    )
    whole, parts, count = _by_ranges(feed, 64)
    assert count > 5
    assert parts == whole


def test_feeds_that_cannot_be_cut_by_bytes(tmp_path: Path) -> None:
    stray = tmp_path / "stray.csv"
    stray.write_text('id,title\n1,TV 55" screen\n2,b\n', encoding="utf-8")
    packed = tmp_path / "packed.csv"
    packed.write_bytes(gzip.compress(b"id,title\n1,a\n2,b\n"))
    lone_cr = tmp_path / "cr.csv"
    lone_cr.write_bytes(b"id,title\r1,a\r2,b\r")
    for path in (stray, packed, lone_cr, DEMO / "quorvane.xml"):
        assert plan_ranges(open_feed(path).info, target_bytes=4) is None


def test_record_blocks_keep_feed_order() -> None:
    feed = open_feed(DEMO / "quorvane.xml")
    blocks = list(iter_record_blocks(feed, size=700))
    assert len(blocks) > 1
    assert [item for block in blocks for item in block] == list(feed)
