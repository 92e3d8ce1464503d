"""Tests for the delimited text reader (catmap.feeds.delimited)."""

from __future__ import annotations

import csv
import gzip
import io
import zipfile
from pathlib import Path
from typing import Any

import pytest

from catmap.feeds import _line_window, delimited, open_feed
from catmap.feeds.delimited import header_names, sniff_delimiter, sniff_header
from catmap.records import Reject, SourceRecord

GOOD = Path(__file__).parent / "data" / "feeds"


def _records(path: Path, **kwargs: object) -> list[SourceRecord]:
    results = list(open_feed(path, **kwargs))  # type: ignore[arg-type]
    assert all(isinstance(r, SourceRecord) for r in results)
    return [r for r in results if isinstance(r, SourceRecord)]


@pytest.mark.parametrize(
    ("name", "delimiter", "second_title"),
    [
        ("comma.csv", ",", "Rain jacket, hooded"),
        ("semicolon.csv", ";", "Watering can; 10 l"),
        ("tab.tsv", "\t", "Office chair"),
        ("pipe.txt", "|", "Teething ring"),
    ],
)
def test_each_delimiter_is_detected(name: str, delimiter: str, second_title: str) -> None:
    feed = open_feed(GOOD / name)
    assert feed.info.delimiter == delimiter
    assert feed.info.has_header is True
    assert feed.info.columns == ("id", "title", "price", "brand")
    records = _records(GOOD / name)
    assert len(records) == 3
    assert records[1].fields["title"] == second_title


def test_semicolon_feed_with_decimal_commas_is_not_taken_for_comma() -> None:
    text = "id;title;price\n1;Mug;9,99\n2;Plate;12,50\n3;Bowl;7,00\n"
    assert sniff_delimiter(text) == ";"


def test_delimiter_inside_quotes_is_not_counted() -> None:
    text = 'id|title\n1|"a, b, c, d"\n2|"e, f, g"\n3|"h, i"\n'
    assert sniff_delimiter(text) == "|"


def test_delimiter_override() -> None:
    feed = open_feed(GOOD / "comma.csv", delimiter="tab")
    assert feed.info.delimiter == "\t"
    assert feed.info.columns == ("id,title,price,brand",)


def test_empty_lines_are_skipped_and_lines_counted() -> None:
    records = _records(GOOD / "comma.csv")
    assert [r.line for r in records] == [2, 3, 5]  # line 4 is empty
    assert records[2].location == "line 5"


def test_multiline_quoted_fields_start_lines_and_doubled_quotes() -> None:
    records = _records(GOOD / "multiline.csv")
    assert [r.line for r in records] == [2, 5, 6]
    assert records[0].fields["description"] == "Two burners.\nFolds flat.\nWeighs 2 kg."
    assert records[1].fields["title"] == 'The "Summit" tent'
    assert records[2].fields["description"] == "Line one\nline two"


def test_crlf_line_endings(tmp_path: Path) -> None:
    path = tmp_path / "crlf.csv"
    path.write_bytes(b'id,title\r\nQ-1,"Two\r\nlines"\r\nQ-2,One\r\n')
    records = _records(path)
    assert [r.line for r in records] == [2, 4]
    assert records[0].fields["title"] == "Two\r\nlines"


def test_no_header_gives_numbered_columns() -> None:
    feed = open_feed(GOOD / "noheader.csv")
    assert feed.info.has_header is False
    assert feed.info.columns == ("column_1", "column_2", "column_3")
    records = _records(GOOD / "noheader.csv")
    assert records[0].fields == {"column_1": "F-1", "column_2": "Kettle", "column_3": "29.00"}
    assert records[0].line == 1


def test_has_header_override() -> None:
    feed = open_feed(GOOD / "noheader.csv", has_header=True)
    assert feed.info.columns == ("F-1", "Kettle", "29.00")
    assert len(list(feed)) == 2


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("sku,name,price\nA1,Lamp,10.00\n", True),
        ("A1,Lamp,10.00\nA2,Chair,20.00\n", False),
        ("sku,name,url\nA1,Lamp,https://x.example/a\n", True),
        # A blank or repeated name is a header when a value stands under one of its names.
        ("sku,,price\nA1,Lamp,10.00\n", True),
        ("sku,title,price,,\nA1,Lamp,10.00,,\n", True),
        ("sku,image,image,price\nA1,a.jpg,b.jpg,10.00\n", True),
        ("A1,,Lamp\nA2,,Chair\n", False),  # no value under any name: a record
        ("name,name\nx,y\n", False),  # repeated names
    ],
)
def test_header_detection(text: str, expected: bool) -> None:
    assert sniff_header(text, ",") is expected


def test_header_names_are_made_unique() -> None:
    assert header_names(["id", " title ", "", "id"]) == ("id", "title", "column_3", "id_2")


def test_empty_cells_are_left_out(tmp_path: Path) -> None:
    path = tmp_path / "sparse.csv"
    path.write_text("id,title,brand,colour\nS-1,Lamp,,Red\nS-2,Chair,,\n")
    records = _records(path)
    assert records[0].fields == {"id": "S-1", "title": "Lamp", "colour": "Red"}
    assert records[1].fields == {"id": "S-2", "title": "Chair"}


def test_ragged_rows_are_rejected_with_counts(tmp_path: Path) -> None:
    path = tmp_path / "ragged.csv"
    path.write_text('id,title,price\nR-1,"Multi\nline",1\nR-2,Short\nR-3,Ok,3\n')
    results = list(open_feed(path))
    reject = results[1]
    assert isinstance(reject, Reject)
    assert (reject.reason, reject.line) == ("ragged_row", 4)
    assert reject.detail == "expected 3 cells, found 2"
    assert reject.excerpt == "R-2,Short"
    assert [r.line for r in results] == [2, 4, 5]


def test_a_quote_never_closed_rejects_its_row_and_reads_the_lines_after_it(
    tmp_path: Path,
) -> None:
    path = tmp_path / "quote.csv"
    lines = ["id,title"] + [f"Y-{i},Item {i}" for i in range(1, 11)]
    lines.insert(6, 'Y-X,"Broken')
    path.write_text("\n".join(lines) + "\n")
    results = list(open_feed(path))
    rejects = [r for r in results if isinstance(r, Reject)]
    assert [(r.reason, r.line, r.excerpt) for r in rejects] == [
        ("unparseable_record", 7, 'Y-X,"Broken')
    ]
    detail = rejects[0].detail
    assert "never closed (the feed ends inside it)" in detail
    assert "runs on to line 12" in detail
    assert 'double each " inside quoted text' in detail
    records = [r for r in results if isinstance(r, SourceRecord)]
    assert [(r.fields["id"], r.line) for r in records] == [
        (f"Y-{i}", i + 1 if i < 6 else i + 2) for i in range(1, 11)
    ]


def test_a_quote_never_closed_on_the_last_line_rejects_that_line_only(tmp_path: Path) -> None:
    path = tmp_path / "last.csv"
    path.write_text('id,title\nL-1,Lamp\nL-2,"Chair')  # no line end either
    results = list(open_feed(path))
    assert [(type(r).__name__, r.line) for r in results] == [
        ("SourceRecord", 2),
        ("Reject", 3),
    ]
    reject = results[1]
    assert isinstance(reject, Reject)
    assert "runs on" not in reject.detail and "never closed" in reject.detail


def test_five_megabyte_field(tmp_path: Path) -> None:
    big = "x" * (5 * 1024 * 1024)
    path = tmp_path / "big.csv"
    path.write_text(f'id,title,description\nB-1,Big,"{big}"\nB-2,Small,tiny\n')
    records = _records(path)
    assert len(records[0].fields["description"]) == len(big)
    assert records[1].fields == {"id": "B-2", "title": "Small", "description": "tiny"}
    assert records[1].line == 3


def test_twenty_thousand_columns(tmp_path: Path) -> None:
    width = 20_000
    path = tmp_path / "wide.csv"
    header = ",".join(f"attribute_{i}" for i in range(width))
    row = ",".join(str(i) for i in range(width))
    path.write_text(f"{header}\n{row}\n{row}\n")
    feed = open_feed(path)
    assert len(feed.info.columns) == width
    records = _records(path)
    assert len(records) == 2
    assert records[0].fields["attribute_19999"] == "19999"


def test_sample_returns_the_first_good_records(tmp_path: Path) -> None:
    path = tmp_path / "with_bad.csv"
    path.write_text("id,title\nO-1,One\nO-2,Two,extra\nO-3,Three\nO-4,Four\n")
    sample = open_feed(path).sample(2)
    assert [r.fields["id"] for r in sample] == ["O-1", "O-3"]


def test_trailing_blank_header_cells_keep_the_rows_that_stop_before_them(tmp_path: Path) -> None:
    # A spreadsheet export: the header ends in two empty cells, the rows do not.
    path = tmp_path / "trailing.csv"
    path.write_text("id,title,price,,\nT-1,Lamp,10.00\nT-2,Chair\nT-3,Desk,50.00,,\n")
    feed = open_feed(path)
    assert feed.info.has_header is True
    assert feed.info.columns == ("id", "title", "price", "column_4", "column_5")
    results = list(feed)
    assert [type(r).__name__ for r in results] == ["SourceRecord", "Reject", "SourceRecord"]
    assert results[0].fields == {"id": "T-1", "title": "Lamp", "price": "10.00"}
    reject = results[1]
    assert isinstance(reject, Reject)
    assert (reject.reason, reject.line, reject.detail) == (
        "ragged_row",
        3,
        "expected 5 cells, found 2",
    )


@pytest.mark.parametrize("line_end", ["\n", "\r\n"])
def test_spreadsheet_separator_line_names_the_delimiter(tmp_path: Path, line_end: str) -> None:
    path = tmp_path / "excel.csv"
    lines = ["sep=;", "id;title;price", "X-1;Lamp, red;10,00", "X-2;Chair;20,00"]
    path.write_bytes(b"\xef\xbb\xbf" + line_end.join(lines).encode() + line_end.encode())
    feed = open_feed(path)
    assert (feed.info.delimiter, feed.info.has_header) == (";", True)
    assert feed.info.columns == ("id", "title", "price")
    records = _records(path)
    assert [(r.line, r.fields["title"]) for r in records] == [(3, "Lamp, red"), (4, "Chair")]


def test_header_repeated_inside_the_feed_is_rejected(tmp_path: Path) -> None:
    path = tmp_path / "joined.csv"
    path.write_text("id,title\nJ-1,Lamp\nid , title\nJ-2,Chair\n")
    results = list(open_feed(path))
    assert [r.line for r in results] == [2, 3, 4]
    reject = results[1]
    assert isinstance(reject, Reject)
    assert (reject.reason, reject.excerpt) == ("repeated_header", "id , title")
    assert [r.fields["id"] for r in results if isinstance(r, SourceRecord)] == ["J-1", "J-2"]


def test_a_stray_quote_does_not_swallow_the_rows_up_to_the_next_quote(tmp_path: Path) -> None:
    # The quote opening line 2's title never closes on its line: the csv reader runs on to
    # the next quote (line 5) and cannot split what it took. Only line 2 is bad.
    path = tmp_path / "stray.csv"
    path.write_text(
        "id,title,price\n"
        'S-1,"55 inch screen,499.00\n'
        "S-2,Radio,29.00\n"
        "S-3,Headset,19.00\n"
        'S-4,"Lamp, red",9.00\n'
        "S-5,Table,99.00\n"
    )
    results = list(open_feed(path))
    assert [(type(r).__name__, r.line) for r in results] == [
        ("Reject", 2),
        ("SourceRecord", 3),
        ("SourceRecord", 4),
        ("SourceRecord", 5),
        ("SourceRecord", 6),
    ]
    reject = results[0]
    assert isinstance(reject, Reject)
    assert reject.reason == "unparseable_record"
    assert reject.excerpt == 'S-1,"55 inch screen,499.00'
    assert "runs on to line 5" in reject.detail
    assert results[3].fields == {"id": "S-4", "title": "Lamp, red", "price": "9.00"}


def test_two_stray_quotes_reject_their_own_lines_only(tmp_path: Path) -> None:
    path = tmp_path / "strays.csv"
    path.write_text('id,title\nT-1,"Screen\nT-2,"Radio\nT-3,Headset\nT-4,"Lamp, red"\nT-5,Table\n')
    results = list(open_feed(path))
    rejects = [r for r in results if isinstance(r, Reject)]
    assert [(r.line, r.excerpt) for r in rejects] == [(2, 'T-1,"Screen'), (3, 'T-2,"Radio')]
    assert [r.fields["id"] for r in results if isinstance(r, SourceRecord)] == [
        "T-3",
        "T-4",
        "T-5",
    ]


def _stray_feed(rows: int, every: int) -> str:
    """A feed whose every ``every``-th row opens a quote that the next row's quote closes."""
    lines = ["id,title,price"]
    for i in range(1, rows + 1):
        title = f'"Screen {i}' if i % every == 0 else f'"Lamp {i}, red"'
        lines.append(f"S-{i},{title},{i}.00")
    return "\n".join(lines) + "\n"


def test_many_stray_quotes_lose_no_row(tmp_path: Path) -> None:
    path = tmp_path / "strays.csv"
    path.write_text(_stray_feed(404, 8), encoding="utf-8")  # 50 stray quotes
    results = list(open_feed(path))
    rejects = [r for r in results if isinstance(r, Reject)]
    assert [r.line for r in rejects] == [i + 1 for i in range(8, 401, 8)]
    records = [r for r in results if isinstance(r, SourceRecord)]
    assert [r.line for r in records] == [i + 1 for i in range(1, 405) if i % 8]
    assert all(r.fields["title"] == f"Lamp {r.line - 1}, red" for r in records)


def test_a_stray_quote_is_split_again_without_opening_the_feed_again(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    path = tmp_path / "strays.csv"
    path.write_text(_stray_feed(42, 4), encoding="utf-8")
    feed = open_feed(path)
    opened: list[object] = []
    real = delimited.open_binary

    def counting(*args: Any, **kwargs: Any) -> Any:
        opened.append(args)
        return real(*args, **kwargs)

    monkeypatch.setattr(delimited, "open_binary", counting)
    results = list(feed)
    assert len(opened) == 1
    assert sum(isinstance(r, Reject) for r in results) == 10


def _write_packed(path: Path, data: bytes, packing: str) -> None:
    if packing == "gzip":
        path.write_bytes(gzip.compress(data))
    elif packing == "zip":
        with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
            archive.writestr("feed.csv", data)
    else:
        path.write_bytes(data)


@pytest.mark.parametrize("packing", ["plain", "gzip", "zip"])
@pytest.mark.parametrize("encoding", ["utf-8", "cp1252", "utf-16"])
def test_stray_quotes_in_packed_and_encoded_feeds(
    tmp_path: Path, packing: str, encoding: str
) -> None:
    text = (
        "id;title;price\r\n"
        "C-1;Crème brûlée dish;4,50\r\n"
        'C-2;"Pâté terrine;7,00\r\n'  # a stray quote: runs on to line 5
        "C-3;Café cup;2,00\r\n"
        'C-4;"Plate, déjà vu";3,00\r\n'
        "C-5;Bol à soupe;5,00\r\n"
    )
    path = tmp_path / "feed.bin"
    _write_packed(path, text.encode(encoding), packing)
    results = list(open_feed(path, encoding=encoding))
    assert [(type(r).__name__, r.line) for r in results] == [
        ("SourceRecord", 2),
        ("Reject", 3),
        ("SourceRecord", 4),
        ("SourceRecord", 5),
        ("SourceRecord", 6),
    ]
    reject = results[1]
    assert isinstance(reject, Reject)
    assert (reject.excerpt, reject.reason) == ('C-2;"Pâté terrine;7,00', "unparseable_record")
    assert "runs on to line 5" in reject.detail
    titles = [r.fields["title"] for r in results if isinstance(r, SourceRecord)]
    assert titles == ["Crème brûlée dish", "Café cup", "Plate, déjà vu", "Bol à soupe"]


def test_a_slice_read_on_its_own_keeps_the_files_line_numbers() -> None:
    text = io.StringIO('S-1,"Screen,1.00\nS-2,Radio,2.00\nS-3,"Lamp, red",3.00\n', newline="")
    results = list(
        delimited.read_delimited_text(
            text,
            path="feed.csv",
            encoding="utf-8",
            delimiter=",",
            columns=("id", "title", "price"),
            has_header=False,
            first_line=101,
        )  # fmt: skip
    )
    assert [(type(r).__name__, r.line) for r in results] == [
        ("Reject", 101),
        ("SourceRecord", 102),
        ("SourceRecord", 103),
    ]


def test_rows_across_block_ends_read_as_in_one_block(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    lines = ["id,title,notes"]
    for i in range(1, 121):
        if i % 10 == 3:
            lines.append(f'M-{i},"Shelf {i},plain')  # a stray quote, closed two rows on
        elif i % 10 == 5:
            lines.append(f'M-{i},Shelf {i},"a, b"')
        elif i % 10 == 8:
            lines.append(f'M-{i},Shelf {i},"a, b\nover two lines"')
        else:
            lines.append(f"M-{i},Shelf {i},plain")
    path = tmp_path / "blocks.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    whole = list(open_feed(path))
    rejects = [r for r in whole if isinstance(r, Reject)]
    assert [r.excerpt for r in rejects] == [f'M-{i},"Shelf {i},plain' for i in range(3, 121, 10)]
    assert sum(isinstance(r, SourceRecord) for r in whole) == 120 - 12
    for size in (1, 40, 100):  # a block holds one line, or ends inside rows often
        monkeypatch.setattr(_line_window, "BLOCK_CHARS", size)
        assert list(open_feed(path)) == whole


def test_quotes_that_never_balance_are_read_again_a_bounded_number_of_times(
    tmp_path: Path,
) -> None:
    # From any of these lines on, a quote stays open down to the last line, which the csv
    # reader cannot split: read again from the line after each rejected one, the lines would
    # be read about n*n/2 times.
    count = 20_000
    path = tmp_path / "runaway.csv"
    path.write_text('id,title\nR-0,"open\n' + '""","x\n' * count + '"y\n', encoding="utf-8")
    results = list(open_feed(path))
    assert all(isinstance(r, Reject) for r in results)
    assert [r.line for r in results] == list(range(2, count + 4))


def test_a_row_too_long_to_keep_is_one_reject_naming_its_lines(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Each of these lines closes a cell and opens the next: one row of many small cells grows
    # past twice the cell limit before the last line ends it in a way that cannot be split.
    monkeypatch.setattr(_line_window, "BLOCK_CHARS", 64)
    path = tmp_path / "long.csv"
    path.write_text('id,title\nR-0,"open\n' + '""","x\n' * 1000 + '"y\nR-2,Lamp\n')
    before = csv.field_size_limit(1024)
    try:
        results = list(open_feed(path))
    finally:
        csv.field_size_limit(before)
    reject, record = results
    assert isinstance(reject, Reject) and isinstance(record, SourceRecord)
    assert (reject.reason, reject.line) == ("unparseable_record", 2)
    assert reject.detail.startswith("cannot split the rows on lines 2-1003: ")
    assert "more text than catmap keeps" in reject.detail
    assert (record.fields["id"], record.line) == ("R-2", 1004)
