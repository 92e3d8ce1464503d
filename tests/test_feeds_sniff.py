"""Tests for feed opening: compression, encoding and format detection, and broken feeds."""

from __future__ import annotations

import gzip
import io
import shutil
import zipfile
from pathlib import Path
from typing import Any

import pytest

from catmap.errors import FeedFormatError, UnsafeFeedError
from catmap.feeds import Feed, FeedInfo, open_feed
from catmap.records import Reject, SourceRecord

DATA = Path(__file__).parent / "data"
GOOD = DATA / "feeds"
BAD = DATA / "bad"

ACCENTED_TITLES = ["Café crème mug", "Überjacke für Kinder", "Crêpe pan"]


def _read(feed: Feed) -> list[SourceRecord | Reject]:
    return list(feed)


def _titles(feed: Feed) -> list[str]:
    return [r.fields["title"] for r in feed if isinstance(r, SourceRecord)]


# --- encodings --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("name", "encoding", "source"),
    [
        ("utf8.csv", "utf-8", "detected"),
        ("utf8_bom.csv", "utf-8-sig", "bom"),
        ("utf16.csv", "utf-16", "bom"),
    ],
)
def test_unicode_encodings_are_detected(name: str, encoding: str, source: str) -> None:
    feed = open_feed(GOOD / name)
    assert (feed.info.encoding, feed.info.encoding_source) == (encoding, source)
    assert feed.info.columns == ("id", "title", "price")  # no BOM left in the first name
    assert _titles(feed) == ACCENTED_TITLES
    prices = [r.fields["price"] for r in feed if isinstance(r, SourceRecord)]
    assert prices == ["8.50 €", "45.00 €", "21.00 €"]


def test_utf16_without_bom_is_detected(tmp_path: Path) -> None:
    path = tmp_path / "le.csv"
    path.write_bytes("id,title\nK-1,Crème brûlée dish\nK-2,Teapot\n".encode("utf-16-le"))
    feed = open_feed(path)
    assert feed.info.encoding == "utf-16-le"
    assert _titles(feed) == ["Crème brûlée dish", "Teapot"]


@pytest.mark.parametrize("encoding", ["utf-16-le", "utf-16-be"])
def test_utf16_without_bom_of_non_latin_text_is_detected(tmp_path: Path, encoding: str) -> None:
    # Few zero bytes (only the ASCII delimiters, digits and line ends have them): it was
    # refused as binary data.
    path = tmp_path / "ja.csv"
    text = (
        "id,title,price\nJ-1,緑茶 ティーバッグ,480\nJ-2,木製 箸 五膳,1200\nJ-3,綿 タオル 白,980\n"
    )
    path.write_bytes(text.encode(encoding))
    feed = open_feed(path)
    assert (feed.info.encoding, feed.info.encoding_source) == (encoding, "detected")
    assert _titles(feed) == ["緑茶 ティーバッグ", "木製 箸 五膳", "綿 タオル 白"]


@pytest.mark.parametrize(
    ("encoding", "titles", "expected"),
    [
        # A few bytes each: the detector's first guess was Korean (cp949), read from its
        # rare extension characters, and Big5 for the lone "ñ".
        ("shift_jis", ["緑茶", "緑茶 x"], "cp932"),
        ("shift_jis", ["木製 箸", "木製 箸 x"], "cp932"),
        ("latin-1", ["Niño", "Niño x"], "cp1252"),
        # Read before as half-width katakana (cp932), Korean extension syllables (cp949) or
        # another Chinese set: the reading that keeps to the set's most used part wins.
        ("gb18030", ["衬衫", "鞋子"], "gb18030"),
        ("gb18030", ["连衣裙", "茶叶"], "gb18030"),
        ("big5", ["襯衫", "連衣裙"], "big5"),
        ("big5", ["運動鞋 男", "手錶"], "big5"),
        ("euc_jp", ["緑茶", "木製 箸"], "euc_jis_2004"),
        # Half-width katakana stay readable when no other reading is clean.
        ("shift_jis", ["ｼｬﾂ", "靴下"], "cp932"),
    ],
)
def test_short_feeds_in_a_legacy_encoding_keep_their_titles(
    tmp_path: Path, encoding: str, titles: list[str], expected: str
) -> None:
    path = tmp_path / "short.csv"
    rows = "".join(f"S-{i},{title},1.00\n" for i, title in enumerate(titles))
    path.write_bytes(("id,title,price\n" + rows).encode(encoding))
    feed = open_feed(path)
    assert (feed.info.encoding, feed.info.encoding_source) == (expected, "detected")
    assert _titles(feed) == titles


def test_binary_numbers_with_zeros_on_one_side_are_not_utf16(tmp_path: Path) -> None:
    path = tmp_path / "counts.dat"
    path.write_bytes(b"".join(i.to_bytes(2, "little") for i in range(3, 3000, 7)))
    with pytest.raises(FeedFormatError, match="not a text feed"):
        open_feed(path)


def test_cp1252_is_detected_with_euro_and_accents() -> None:
    feed = open_feed(GOOD / "cp1252.csv")
    assert (feed.info.encoding, feed.info.encoding_source) == ("cp1252", "detected")
    records = [r for r in feed if isinstance(r, SourceRecord)]
    assert records[0].fields["title"] == "Pull en laine mérinos, col roulé"
    assert records[1].fields["title"] == "Chaussures à lacets, cuir verni"
    assert records[2].fields["colour"] == "Écru"
    assert records[0].fields["price"] == "49,00 €"


def test_cyrillic_single_byte_text_is_not_taken_for_cp1252(tmp_path: Path) -> None:
    path = tmp_path / "ru.csv"
    text = "id;название;цена\n1;Красная куртка для детей;100\n2;Синие брюки мужские;200\n"
    path.write_bytes(text.encode("cp1251"))
    assert open_feed(path).info.encoding == "cp1251"


def test_given_encoding_wins(tmp_path: Path) -> None:
    path = tmp_path / "latin.csv"
    path.write_bytes("id,title\nW-1,Ma\u00f1ana chair\n".encode("latin-1"))
    feed = open_feed(path, encoding="latin-1")
    assert (feed.info.encoding, feed.info.encoding_source) == ("iso8859-1", "given")
    assert _titles(feed) == ["Mañana chair"]


def test_unknown_given_encoding_is_a_feed_error() -> None:
    with pytest.raises(FeedFormatError, match="unknown encoding"):
        open_feed(GOOD / "comma.csv", encoding="no-such-codec")


def test_utf8_with_a_cp1252_row_keeps_the_good_rows_as_written() -> None:
    feed = open_feed(BAD / "cp1252_row_in_utf8.csv")
    assert (feed.info.encoding, feed.info.encoding_source) == ("utf-8", "detected")
    results = list(feed)
    assert _titles(feed) == ["Bouilloire électrique", "Pull mérinos", "Sac à dos randonnée"]
    reject = results[1]
    assert isinstance(reject, Reject)
    assert (reject.reason, reject.line) == ("bad_encoding", 3)
    assert "try --encoding cp1252" in reject.detail


def test_bad_byte_after_the_sample_rejects_only_its_record(tmp_path: Path) -> None:
    # The sample is the first megabyte: put the bad byte well after it.
    path = tmp_path / "late.csv"
    rows = [f"N-{i},Plain item number {i},{i}.00\n" for i in range(1, 60_001)]
    data = ("id,title,price\n" + "".join(rows)).encode() + b"N-X,Caf\xe9 table,60.00\nN-Y,Last,1\n"
    assert len(data) > 1.2 * (1 << 20)
    path.write_bytes(data)
    feed = open_feed(path)
    assert feed.info.encoding == "utf-8"
    results = list(feed)
    rejects = [r for r in results if isinstance(r, Reject)]
    assert len(rejects) == 1
    assert rejects[0].reason == "bad_encoding"
    assert rejects[0].line == 60_002
    assert "--encoding cp1252" in rejects[0].detail
    assert sum(isinstance(r, SourceRecord) for r in results) == 60_001


# --- compression ------------------------------------------------------------------------------


def test_gzip_is_found_by_magic_bytes_not_name(tmp_path: Path) -> None:
    path = tmp_path / "feed.csv"  # no .gz suffix on purpose
    path.write_bytes(gzip.compress((GOOD / "semicolon.csv").read_bytes()))
    feed = open_feed(path)
    assert feed.info.compression == "gzip"
    assert feed.info.delimiter == ";"
    assert _titles(feed) == ["Garden hose", "Watering can; 10 l", "Pruning shears"]


def test_single_member_zip_is_read(tmp_path: Path) -> None:
    path = tmp_path / "feed.bin"
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.write(GOOD / "catalog.xml", "export/catalog.xml")
    feed = open_feed(path)
    assert (feed.info.compression, feed.info.format) == ("zip", "xml")
    assert len(feed.sample(10)) == 3


def test_plain_file_has_no_compression() -> None:
    assert open_feed(GOOD / "comma.csv").info.compression is None


# --- format -----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("name", "kind"),
    [("comma.csv", "delimited"), ("catalog.xml", "xml"), ("nested.jsonl", "jsonl")],
)
def test_format_is_detected_by_content(tmp_path: Path, name: str, kind: str) -> None:
    renamed = tmp_path / "feed.dat"  # the name says nothing
    shutil.copy(GOOD / name, renamed)
    assert open_feed(renamed).info.format == kind


def test_format_override(tmp_path: Path) -> None:
    path = tmp_path / "odd.txt"
    path.write_text('{"a": 1}\n{"a": 2}\n')
    feed = open_feed(path, format="csv", delimiter="|")
    assert feed.info.format == "delimited"
    with pytest.raises(FeedFormatError, match="unknown feed format"):
        open_feed(path, format="spreadsheet")


def test_feed_info_fields() -> None:
    info = open_feed(GOOD / "tab.tsv").info
    assert isinstance(info, FeedInfo)
    assert info.path == str(GOOD / "tab.tsv")
    assert (info.format, info.delimiter, info.has_header) == ("delimited", "\t", True)
    assert (info.record_path, info.namespaces) == (None, {})


def test_missing_file_is_a_feed_error(tmp_path: Path) -> None:
    with pytest.raises(FeedFormatError, match="cannot open"):
        open_feed(tmp_path / "nowhere.csv")


# --- broken feeds in tests/data/bad -----------------------------------------------------------

# file name -> what must happen. "raises": (error class, line or None, message pattern) at open
# or while reading; "reads": the reasons of the rejects in order and the number of good records.
BAD_EXPECTATIONS: dict[str, dict[str, Any]] = {
    "ragged_rows.csv": {"reads": (["ragged_row", "ragged_row"], 2)},
    # The quote opened on line 3 never closes: that line is rejected, the two after it read.
    "unterminated_quote.csv": {"reads": (["unparseable_record"], 3)},
    "empty.csv": {"raises": (FeedFormatError, None, "empty")},
    "header_only.csv": {"raises": (FeedFormatError, 1, "header row but no records")},
    "binary.dat": {"raises": (FeedFormatError, None, "not a text feed")},
    # Small enough to be all in the sample, so the encoding must be given to hit the bad byte.
    "invalid_utf8_mid_file.csv": {"reads": (["bad_encoding"], 6), "kwargs": {"encoding": "utf-8"}},
    "billion_laughs.xml": {"raises": (UnsafeFeedError, 3, "declares XML entities")},
    "external_entity.xml": {"raises": (UnsafeFeedError, 3, "declares XML entities")},
    "truncated.xml": {"raises": (FeedFormatError, 7, "XML is broken"), "good_before": 3},
    "mismatched_tag.xml": {"raises": (FeedFormatError, 5, "XML is broken"), "good_before": 2},
    "bad_lines.jsonl": {"reads": (["unparseable_record", "unparseable_record"], 2)},
    "two_members.zip": {"raises": (FeedFormatError, None, "feed-a.csv, feed-b.csv")},
    "lone_surrogate_value.jsonl": {"reads": (["bad_encoding"], 1)},
    "lone_surrogate_key.jsonl": {"reads": (["bad_encoding"], 1)},
    "encrypted_member.zip": {"raises": (FeedFormatError, None, "is encrypted")},
    "unsupported_method.zip": {"raises": (FeedFormatError, None, "compression method 99")},
    # The bad code unit spoils the record it is in (and the one it runs into); the rest reads.
    "bad_code_unit_utf16.csv": {"reads": (["bad_encoding"], 2)},
    "bad_code_unit_utf32.csv": {"reads": (["bad_encoding"], 2)},
    "utf16_no_bom.xml": {"reads": ([], 2)},
    "control_in_header.csv": {"reads": ([], 2)},
    "entity_behind_attlist.xml": {"raises": (UnsafeFeedError, 4, "declares XML entities")},
    # UTF-8 with one row pasted from a cp1252 file: read as UTF-8, that row rejected (read as
    # a single-byte code page, the three good rows would be garbled).
    "cp1252_row_in_utf8.csv": {"reads": (["bad_encoding"], 3)},
    "repeated_header.csv": {"reads": (["repeated_header"], 2)},
    # A first record broken across lines: the lines after it show JSON Lines, not CSV.
    "broken_first_line.jsonl": {"reads": (["unparseable_record"], 2)},
    "json_array.json": {"raises": (FeedFormatError, 1, "one JSON array")},
    # An HTML entity name XML does not define: the error names it, its line and column.
    "html_entity.xml": {
        "raises": (FeedFormatError, 4, "column 40: Entity 'eacute' not defined"),
        "good_before": 1,
    },
    "not_utf8_given_utf8.csv": {
        "reads": (["bad_encoding", "bad_encoding"], 0),
        "kwargs": {"encoding": "utf-8"},
    },
}


def test_every_bad_file_has_an_expectation() -> None:
    assert sorted(p.name for p in BAD.iterdir()) == sorted(BAD_EXPECTATIONS)


@pytest.mark.parametrize("path", sorted(BAD.iterdir()), ids=lambda p: p.name)
def test_bad_feed(path: Path) -> None:
    expected = BAD_EXPECTATIONS[path.name]
    kwargs = expected.get("kwargs", {})
    if "reads" in expected:
        reasons, good = expected["reads"]
        results = list(open_feed(path, **kwargs))
        assert [r.reason for r in results if isinstance(r, Reject)] == reasons
        assert sum(isinstance(r, SourceRecord) for r in results) == good
        for reject in results:
            if isinstance(reject, Reject):
                assert reject.line > 0 and reject.detail
        return
    error_class, line, pattern = expected["raises"]
    yielded: list[SourceRecord | Reject] = []
    with pytest.raises(error_class, match=pattern) as info:
        for record in open_feed(path, **kwargs):
            yielded.append(record)
    assert info.value.path == str(path)
    assert info.value.hint
    assert info.value.line == line
    assert len(yielded) == expected.get("good_before", 0)


@pytest.mark.parametrize("name", ["comma.csv", "catalog.xml", "nested.jsonl"])
def test_truncated_gzip_is_a_feed_error(tmp_path: Path, name: str) -> None:
    whole = gzip.compress((GOOD / name).read_bytes() * 1)
    path = tmp_path / "cut.gz"
    path.write_bytes(whole[: len(whole) - 12])  # drop the trailer and some data
    with pytest.raises(FeedFormatError) as info:
        feed = open_feed(path)
        list(feed)
    assert info.value.path == str(path)


def test_small_truncated_gzip_keeps_the_whole_records_before_the_cut(tmp_path: Path) -> None:
    rows = "".join(f"T-{i},Item number {i},{i}.00\n" for i in range(1, 41))
    whole = gzip.compress(("id,title,price\n" + rows).encode())
    path = tmp_path / "cut.csv.gz"
    path.write_bytes(whole[: len(whole) - 30])  # the trailer and the last few rows
    read: list[object] = []
    with pytest.raises(FeedFormatError, match="the gzip data is damaged or cut short") as info:
        read.extend(open_feed(path))
    ids = [r.fields["id"] for r in read if isinstance(r, SourceRecord)]
    assert 30 < len(ids) < 40
    assert ids == [f"T-{i}" for i in range(1, len(ids) + 1)]
    assert str(info.value).count(str(path)) == 1


def test_gzip_cut_inside_its_first_block_is_one_clear_error(tmp_path: Path) -> None:
    path = tmp_path / "stub.csv.gz"
    path.write_bytes(gzip.compress(b"id,title\nS-1,Lamp\n")[:14])  # the header and no data
    with pytest.raises(FeedFormatError) as info:
        list(open_feed(path))
    assert str(info.value).count(str(path)) == 1
    assert "cut short" in str(info.value)


def test_a_feed_without_a_zero_byte_is_never_read_as_utf16(tmp_path: Path) -> None:
    # One short Chinese title: the detector's first guess was UTF-16, which would need a zero
    # byte beside each ASCII character of the header.
    path = tmp_path / "one.csv"
    path.write_bytes("id,title\n1,鞋子\n".encode("gb18030"))
    feed = open_feed(path)
    assert feed.info.encoding == "gb18030"
    assert _titles(feed) == ["鞋子"]


def test_gzip_cut_inside_a_quoted_cell_keeps_the_records_before_it(tmp_path: Path) -> None:
    rows = "".join(f'Q-{i},"Item {i}, two\nlines",{i}.00\n' for i in range(1, 2001))
    whole = gzip.compress(("id,title,price\n" + rows).encode())
    path = tmp_path / "cut.csv.gz"
    path.write_bytes(whole[: len(whole) // 2])
    read: list[SourceRecord | Reject] = []
    with pytest.raises(FeedFormatError, match="cut short"):
        read.extend(open_feed(path))
    assert all(isinstance(r, SourceRecord) for r in read)
    assert [r.line for r in read] == [2 * i for i in range(1, len(read) + 1)]
    assert read[-1].fields["title"] == f"Item {len(read)}, two\nlines"


# --- zip archives cut short -------------------------------------------------------------------

_CUT_ROWS = 3000


def _zip_feed(method: int, *, members: int = 1, streamed: bool = False) -> bytes:
    """A zip of a feed with ``_CUT_ROWS`` rows (the central directory at its end)."""
    data = ("id,title,price\n" + "".join(
        f"Z-{i},Lamp number {i} with a shade,{i}.00\n" for i in range(1, _CUT_ROWS + 1)
    )).encode()  # fmt: skip
    target = io.BytesIO()
    # A stream that cannot seek makes zipfile write the sizes and CRC-32 after the data.
    sink: Any = _Unseekable(target) if streamed else target
    with zipfile.ZipFile(sink, "w", compression=method) as archive:
        for number in range(members):
            archive.writestr(f"feed-{number}.csv" if number else "feed.csv", data)
    return target.getvalue()


class _Unseekable(io.RawIOBase):
    def __init__(self, target: io.BytesIO) -> None:
        self._target = target

    def writable(self) -> bool:
        return True

    def write(self, data: Any) -> int:
        return self._target.write(data)

    def seekable(self) -> bool:
        return False


@pytest.mark.parametrize("streamed", [False, True], ids=["sized", "streamed"])
@pytest.mark.parametrize(
    "method", [zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED], ids=["stored", "deflated"]
)
def test_cut_zip_keeps_the_records_before_the_cut(
    tmp_path: Path, method: int, streamed: bool
) -> None:
    whole = _zip_feed(method, streamed=streamed)
    path = tmp_path / "cut.zip"
    path.write_bytes(whole[: len(whole) // 2])
    if method == zipfile.ZIP_STORED and streamed:
        # Its size is after its data: where the data ends cannot be told.
        with pytest.raises(FeedFormatError, match="is stored without its size"):
            open_feed(path)
        return
    read: list[SourceRecord | Reject] = []
    with pytest.raises(FeedFormatError, match="ends inside 'feed.csv'") as info:
        read.extend(open_feed(path))
    ids = [r.fields["id"] for r in read if isinstance(r, SourceRecord)]
    assert len(read) == len(ids) and _CUT_ROWS // 3 < len(ids) < _CUT_ROWS
    assert ids == [f"Z-{i}" for i in range(1, len(ids) + 1)]
    last = read[-1]
    assert isinstance(last, SourceRecord)
    assert last.fields["title"] == f"Lamp number {len(ids)} with a shade"
    assert str(info.value).count(str(path)) == 1
    assert info.value.hint and "ask the sender" in info.value.hint


@pytest.mark.parametrize("streamed", [False, True], ids=["sized", "streamed"])
def test_zip_missing_only_its_list_of_files_reads_every_record(
    tmp_path: Path, streamed: bool
) -> None:
    whole = _zip_feed(zipfile.ZIP_DEFLATED, streamed=streamed)
    path = tmp_path / "nolist.zip"
    path.write_bytes(whole[: whole.rindex(b"PK\x01\x02") + 10])  # the directory, cut
    read = list(open_feed(path))
    assert [r.fields["id"] for r in read if isinstance(r, SourceRecord)] == [
        f"Z-{i}" for i in range(1, _CUT_ROWS + 1)
    ]


def test_cut_zip_whose_member_fails_its_crc_is_reported(tmp_path: Path) -> None:
    whole = bytearray(_zip_feed(zipfile.ZIP_STORED))
    at = whole.index(b"Lamp number 2500")
    whole[at : at + 4] = b"Lump"
    path = tmp_path / "bent.zip"
    path.write_bytes(bytes(whole[: whole.rindex(b"PK\x01\x02")]))
    read: list[SourceRecord | Reject] = []
    with pytest.raises(FeedFormatError, match="fails its CRC-32 check"):
        read.extend(open_feed(path))
    assert len(read) == _CUT_ROWS  # the damage is found at the end


def test_cut_zip_of_several_files_is_refused(tmp_path: Path) -> None:
    whole = _zip_feed(zipfile.ZIP_DEFLATED, members=2)
    path = tmp_path / "two.zip"
    path.write_bytes(whole[: whole.index(b"PK\x01\x02")])
    with pytest.raises(FeedFormatError, match="holds more than one file"):
        list(open_feed(path))


def test_cut_zip_of_another_compression_method_is_a_clear_error(tmp_path: Path) -> None:
    whole = _zip_feed(zipfile.ZIP_BZIP2)
    path = tmp_path / "bz.zip"
    path.write_bytes(whole[: len(whole) // 2])
    with pytest.raises(FeedFormatError, match="compression method 12") as info:
        list(open_feed(path))
    assert "cut short" in info.value.message
    assert info.value.hint == "ask the sender for the file again"


def test_zip_cut_inside_its_first_block_is_one_clear_error(tmp_path: Path) -> None:
    path = tmp_path / "stub.zip"
    path.write_bytes(_zip_feed(zipfile.ZIP_DEFLATED)[:60])
    with pytest.raises(FeedFormatError) as info:
        list(open_feed(path))
    assert str(info.value).count(str(path)) == 1
    assert "ends inside 'feed.csv'" in str(info.value)
