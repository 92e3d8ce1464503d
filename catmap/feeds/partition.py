"""Split a feed into partitions that separate processes can read on their own, in feed order.

Two kinds of partition:

* :class:`ByteRange`: a slice of an uncompressed delimited or JSON Lines file, cut just after a
  newline that ends a record, with the number of the slice's first line so that records and
  rejects keep the file's real line numbers. :func:`iter_range` reads one slice exactly as the
  whole-file reader would have read those records.
* Record blocks, for the feeds a byte offset cannot cut safely (XML, gzip or zip, encodings
  that are not ASCII-compatible, lone carriage returns, stray quotes): the coordinator reads the
  feed once and hands out blocks of raw records (:func:`iter_record_blocks`).

Where a delimited record ends: a newline ends a record when the quote characters before it are
balanced. In a quoted field a quote is written twice, so an even count of quotes from the start
of the file means the newline is outside any quoted field (RFC 4180, section 2, rules 5-7).
:func:`plan_ranges` counts them in one pass over the bytes (``bytes.count``, no parsing). The
count is wrong only for a quote inside an unquoted field (``55" screen``), which the reader keeps
as a literal character: when the first megabyte shows one, the feed is not cut by bytes at all
and goes the record-block way. JSON Lines needs no such care: JSON text cannot hold a raw
newline, so every newline ends a record.
"""

from __future__ import annotations

import io
import re
from collections.abc import Iterator
from dataclasses import dataclass
from itertools import islice

from catmap.feeds import _sniff, delimited, jsonl
from catmap.feeds.read import Feed, FeedInfo
from catmap.records import Reject, SourceRecord

__all__ = [
    "BLOCK_RECORDS",
    "PARTITION_BYTES",
    "ByteRange",
    "iter_range",
    "iter_record_blocks",
    "plan_ranges",
]

# About this many bytes per byte-range partition: a few hundred thousand products, a few
# seconds of work, small enough that a worker holds one slice in memory at ease.
PARTITION_BYTES = 32 * 1024 * 1024
# Records per block when the feed cannot be cut by bytes.
BLOCK_RECORDS = 100_000
# Bytes read at a time while counting newlines and quotes.
_SCAN_BLOCK = 8 * 1024 * 1024
# Bytes at the start of the file looked at for stray quotes.
_STRAY_SAMPLE = 1024 * 1024
# Encodings in which b"\n" and b'"' are always those characters (no multi-byte unit holds them).
_ASCII_COMPATIBLE = re.compile(r"^(utf-8(-sig)?|ascii|cp125\d|latin-1|iso8859-\d+)$")


@dataclass(frozen=True, slots=True)
class ByteRange:
    """One slice of a feed file, starting and ending on record boundaries.

    Attributes:
        index: position of the slice in the file (0 first).
        start: first byte.
        end: one past the last byte.
        first_line: 1-based line number of the slice's first line in the whole file.
    """

    index: int
    start: int
    end: int
    first_line: int


def _stray_quote(info: FeedInfo) -> bool:
    """True when the file's first megabyte has a quote inside an unquoted field.

    A quote that neither opens nor closes a field nor is doubled has a character other than the
    delimiter, a quote or a line end on both sides.
    """
    with open(info.path, "rb") as handle:
        head = handle.read(_STRAY_SAMPLE)
    text = _sniff.decode_head(head, info.encoding)
    delimiter = re.escape(info.delimiter or ",")
    pattern = rf'(?<=[^{delimiter}"\r\n])"(?=[^{delimiter}"\r\n])'
    return re.search(pattern, text) is not None


def plan_ranges(info: FeedInfo, *, target_bytes: int = PARTITION_BYTES) -> list[ByteRange] | None:
    """Cut a feed into byte ranges of about ``target_bytes`` on record boundaries.

    Args:
        info: what :func:`catmap.feeds.read.open_feed` found out about the feed.
        target_bytes: about how large each range is.

    Returns:
        The ranges in file order (one when the file is small), or None when the feed cannot be
        cut by bytes: XML, compressed, an encoding that is not ASCII-compatible, a lone
        carriage return as line end, or a stray quote in the first megabyte of a delimited
        feed. Read those with :func:`iter_record_blocks`.
    """
    if info.format not in ("delimited", "jsonl") or info.compression is not None:
        return None
    if not _ASCII_COMPATIBLE.match(info.encoding.lower().replace("_", "-")):
        return None
    quoted = info.format == "delimited"
    if quoted and _stray_quote(info):
        return None
    target_bytes = max(1, target_bytes)
    cuts: list[tuple[int, int]] = [(0, 1)]  # (byte offset, its line number)
    offset = lines = quotes = 0
    next_cut = target_bytes
    last_cr = False
    with open(info.path, "rb") as handle:
        while True:
            block = handle.read(_SCAN_BLOCK)
            if not block:
                break
            crs = block.count(b"\r")
            pairs = block.count(b"\r\n") + (1 if last_cr and block.startswith(b"\n") else 0)
            if crs - (1 if block.endswith(b"\r") else 0) + (1 if last_cr else 0) != pairs:
                return None  # "\r" alone ends a line: the line count below would be wrong
            last_cr = block.endswith(b"\r")
            position = 0
            while next_cut < offset + len(block):
                found = block.find(b"\n", max(position, next_cut - offset))
                if found < 0:
                    break
                if quoted:
                    quotes += block.count(b'"', position, found + 1)
                lines += block.count(b"\n", position, found + 1)
                position = found + 1
                if quotes % 2 == 0:
                    cuts.append((offset + position, lines + 1))
                    next_cut = offset + position + target_bytes
            if quoted:
                quotes += block.count(b'"', position)
            lines += block.count(b"\n", position)
            offset += len(block)
    ranges: list[ByteRange] = []
    bounds = [*cuts, (offset, 0)]
    for (start, first_line), (end, _) in zip(bounds, bounds[1:], strict=False):
        if end > start:
            ranges.append(ByteRange(len(ranges), start, end, first_line))
    return ranges or [ByteRange(0, 0, offset, 1)]


def _open_range(info: FeedInfo, part: ByteRange, newline: str) -> io.TextIOWrapper:
    with open(info.path, "rb") as handle:
        handle.seek(part.start)
        data = handle.read(part.end - part.start)
    # A BOM exists only at the start of the file; later slices decode as plain UTF-8.
    encoding = info.encoding
    if part.start > 0 and encoding.lower().replace("_", "-") == "utf-8-sig":
        encoding = "utf-8"
    return io.TextIOWrapper(
        io.BytesIO(data), encoding=encoding, errors=_sniff.ERROR_HANDLER, newline=newline
    )


def iter_range(info: FeedInfo, part: ByteRange) -> Iterator[SourceRecord | Reject]:
    """Yield the records and rejects of one byte range, with the whole file's line numbers.

    The same records, rejects and fatal errors as the whole-file reader gives for that part of
    the file (:func:`catmap.feeds.delimited.iter_delimited`, :func:`catmap.feeds.jsonl.iter_jsonl`).

    Args:
        info: the feed.
        part: the range.

    Yields:
        Records and rejects in file order.

    Raises:
        FeedFormatError: a cell past the size limit with no quote (delimited), after the
            records before it.
    """
    if info.format == "jsonl":
        yield from _iter_jsonl_range(info, part)
    else:
        yield from _iter_delimited_range(info, part)


def _iter_jsonl_range(info: FeedInfo, part: ByteRange) -> Iterator[SourceRecord | Reject]:
    with _open_range(info, part, "\n") as text:
        yield from jsonl.read_jsonl_text(text, encoding=info.encoding, first_line=part.first_line)


def _iter_delimited_range(info: FeedInfo, part: ByteRange) -> Iterator[SourceRecord | Reject]:
    assert info.delimiter is not None
    with _open_range(info, part, "") as text:
        yield from delimited.read_delimited_text(
            text,
            path=info.path,
            encoding=info.encoding,
            delimiter=info.delimiter,
            columns=info.columns,
            # Only the file's first slice holds the header row.
            has_header=info.has_header and part.start == 0,
            first_line=part.first_line,
            named_columns=info.has_header,
        )


def iter_record_blocks(
    feed: Feed, *, size: int = BLOCK_RECORDS
) -> Iterator[list[SourceRecord | Reject]]:
    """Read a feed once, in order, as blocks of at most ``size`` records and rejects.

    Args:
        feed: the opened feed.
        size: records per block.

    Yields:
        Blocks in feed order.

    Raises:
        FeedFormatError, FeedEncodingError, UnsafeFeedError: after the block holding the
            records read before the error was yielded.
    """
    records = iter(feed)
    while True:
        block: list[SourceRecord | Reject] = []
        try:
            block.extend(islice(records, size))
        except Exception:
            if block:
                yield block
            raise
        if not block:
            return
        yield block
        if len(block) < size:
            return
