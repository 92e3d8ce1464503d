"""Streaming feed readers: delimited text, XML and JSON Lines, in bounded memory.

:func:`open_feed` looks at the first megabyte of a feed (after gzip / zip decompression, found
by magic bytes) to choose its encoding, format, delimiter and header, or XML record element,
and returns a :class:`Feed`. Iterating a feed yields :class:`~catmap.records.SourceRecord` for
each good record and :class:`~catmap.records.Reject` for each bad one ("ragged_row",
"repeated_header", "bad_encoding", "unparseable_record"); a fatal error is raised only after the
good records before it were yielded.

Example:
    >>> feed = open_feed("products.csv.gz")            # doctest: +SKIP
    >>> feed.info.delimiter, feed.info.columns[:2]     # doctest: +SKIP
    (';', ('id', 'title'))
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from catmap.errors import CatmapError, FeedFormatError
from catmap.feeds import _sniff, delimited, jsonl, xml
from catmap.feeds._compression import read_head
from catmap.records import Reject, SourceRecord

__all__ = ["Feed", "FeedInfo", "encoding_warning", "open_feed", "other_encodings"]

COLUMN_SAMPLE = 200


@dataclass(frozen=True, slots=True)
class FeedInfo:
    """What :func:`open_feed` found out about a feed.

    Attributes:
        path: the feed file.
        format: "delimited", "xml" or "jsonl".
        encoding: the Python codec used ("utf-8", "utf-8-sig", "utf-16", "cp1252", ...).
        encoding_source: "bom", "detected" or "given".
        compression: "gzip", "zip" or None.
        delimiter: the cell separator (delimited only).
        has_header: the first row names the columns (delimited only; without a header the
            columns are "column_1", "column_2", ...).
        record_path: the repeating record element (xml only), e.g. "/catalog/products/product".
        namespaces: prefix ("" for the default) -> URI (xml only).
        columns: header order (delimited), or field names in first-seen order over the first
            records (xml / jsonl).
    """

    path: str
    format: str
    encoding: str
    encoding_source: str
    compression: str | None
    delimiter: str | None
    has_header: bool
    record_path: str | None
    namespaces: dict[str, str] = field(default_factory=dict)
    columns: tuple[str, ...] = ()


class Feed:
    """An opened feed: its :class:`FeedInfo`, and its records as a stream.

    Each iteration opens the file anew, so a feed can be read several times.
    """

    def __init__(self, info: FeedInfo, *, xml_encoding: str | None = None) -> None:
        self.info = info
        self._xml_encoding = xml_encoding

    def __repr__(self) -> str:
        return f"Feed({self.info.path!r}, format={self.info.format!r})"

    def __iter__(self) -> Iterator[SourceRecord | Reject]:
        """Yield records and rejects in file order.

        Raises:
            FeedFormatError: a fatal format error, after the good records before it.
        """
        info = self.info
        if info.format == "delimited":
            assert info.delimiter is not None
            return delimited.iter_delimited(
                info.path,
                encoding=info.encoding,
                delimiter=info.delimiter,
                columns=info.columns,
                has_header=info.has_header,
            )
        if info.format == "xml":
            assert info.record_path is not None
            return xml.iter_xml(
                info.path, record_path=info.record_path, encoding=self._xml_encoding
            )
        return jsonl.iter_jsonl(info.path, encoding=info.encoding)

    def sample(self, n: int = 200) -> list[SourceRecord]:
        """Return the first ``n`` good records (rejects skipped), reading the file anew.

        A fatal error after some good records ends the sample early; with no good record at
        all it is raised.
        """
        found: list[SourceRecord] = []
        if n <= 0:
            return found
        records = iter(self)
        try:
            for record in records:
                if isinstance(record, SourceRecord):
                    found.append(record)
                    if len(found) >= n:
                        break
        except CatmapError:
            if not found:
                raise
        finally:
            close = getattr(records, "close", None)
            if close is not None:
                close()
        return found


def _first_seen_columns(feed: Feed) -> tuple[str, ...]:
    columns: dict[str, None] = {}
    for record in feed.sample(COLUMN_SAMPLE):
        for name in record.fields:
            columns.setdefault(name, None)
    return tuple(columns)


def open_feed(
    path: str | Path,
    *,
    encoding: str | None = None,
    record_path: str | None = None,
    delimiter: str | None = None,
    format: str | None = None,
    has_header: bool | None = None,
) -> Feed:
    """Open a feed and detect how to read it; every keyword overrides one detection.

    Args:
        path: the feed file, plain, gzip or single-member zip.
        encoding: the text encoding (default: BOM, UTF-8, else detected).
        record_path: XML only: the record element ("product", "products/product",
            "/catalog/products/product", prefixes optional).
        delimiter: delimited only: the cell separator (",", ";", "|", "tab").
        format: "delimited" (or "csv" / "tsv"), "xml" or "jsonl".
        has_header: delimited only: whether the first row names the columns.

    Returns:
        The :class:`Feed`, ready to iterate.

    Raises:
        FeedFormatError: empty, binary, unreadable or unusable feed.
        UnsafeFeedError: an XML feed that declares entities.
    """
    path_text = str(path)
    head, complete, compression = read_head(path, _sniff.SAMPLE_SIZE)
    if not head.strip(b" \t\r\n\xef\xbb\xbf\xff\xfe\x00"):
        raise FeedFormatError(
            "the feed is empty", path=path_text, hint="ask the sender for the file again"
        )
    chosen_encoding, source = _sniff.detect_encoding(head, encoding, path_text)
    text = _sniff.decode_head(head, chosen_encoding)
    kind = _sniff.normalize_format(format, path_text) if format else _sniff.detect_format(text)
    if kind == "delimited" and not format and _sniff.is_json_array(text):
        raise FeedFormatError(
            "the feed is one JSON array; catmap reads JSON Lines, one object per line",
            path=path_text,
            line=1,
            hint="write each object on its own line, e.g. jq -c '.[]' feed.json > feed.jsonl",
        )
    common: dict[str, Any] = {
        "path": path_text,
        "encoding": chosen_encoding,
        "encoding_source": source,
        "compression": compression,
    }
    if kind == "delimited":
        return _open_delimited(text, complete, common, delimiter, has_header)
    if kind == "xml":
        return _open_xml(text, complete, common, record_path)
    feed = Feed(
        FeedInfo(format="jsonl", delimiter=None, has_header=False, record_path=None, **common)
    )
    return _with_columns(feed)


def _with_columns(feed: Feed) -> Feed:
    info = feed.info
    columns = _first_seen_columns(feed)
    return Feed(
        FeedInfo(
            path=info.path,
            format=info.format,
            encoding=info.encoding,
            encoding_source=info.encoding_source,
            compression=info.compression,
            delimiter=info.delimiter,
            has_header=info.has_header,
            record_path=info.record_path,
            namespaces=info.namespaces,
            columns=columns,
        ),
        xml_encoding=feed._xml_encoding,
    )


def _open_delimited(
    text: str,
    complete: bool,
    common: dict[str, Any],
    delimiter: str | None,
    has_header: bool | None,
) -> Feed:
    path = str(common["path"])
    encoding = str(common["encoding"])
    declared = delimited.separator_line(text)
    text = delimited.without_separator_line(text)
    if delimiter:
        chosen = delimited.parse_delimiter(delimiter, path)
    else:
        chosen = declared or delimited.sniff_delimiter(text)
    header = delimited.sniff_header(text, chosen) if has_header is None else has_header
    first = delimited.read_first_row(path, encoding, chosen)
    if first is None:
        raise FeedFormatError(
            "no row could be read",
            path=path,
            line=1,
            hint="a quoted field may never close; check the first lines",
        )
    if header:
        columns = delimited.header_names(first)
        if complete and len(delimited.sample_rows(text, chosen, 2)) < 2:
            raise FeedFormatError(
                "the feed has a header row but no records",
                path=path,
                line=1,
                hint=f"columns found: {', '.join(columns[:20])}",
            )
    else:
        columns = tuple(f"column_{i}" for i in range(1, len(first) + 1))
    return Feed(
        FeedInfo(
            format="delimited",
            delimiter=chosen,
            has_header=header,
            record_path=None,
            columns=columns,
            **common,
        )
    )


def _open_xml(text: str, complete: bool, common: dict[str, Any], record_path: str | None) -> Feed:
    path = str(common["path"])
    xml.check_prolog(text, path, complete)
    declared = xml.declared_encoding(text)
    source = str(common["encoding_source"])
    encoding = str(common["encoding"])
    # lxml reads the declaration and BOM itself; impose an encoding only when the user gave one
    # or the bytes are not UTF-8 and nothing in the file says what they are.
    if source == "given":
        xml_encoding: str | None = encoding
    elif source == "detected" and declared is None and encoding != "utf-8":
        xml_encoding = encoding
    else:
        xml_encoding = None
    if declared and source == "detected":
        named = _sniff.codec_name(declared, path)
        # "UTF-16" declared in a file with no byte-order mark: the detected "utf-16-le" (or
        # "-be") says how to read it again; plain "utf-16" could not be read without the mark.
        if not (named in ("utf-16", "utf-32") and encoding.startswith(named + "-")):
            common = {**common, "encoding": named}
    counts, parents, namespaces, error = xml.scan(path, xml_encoding)
    if record_path:
        try:
            chosen = xml.resolve_record_path(record_path, counts, path)
        except FeedFormatError:
            if error is not None:
                # The XML broke before any such element closed: the break is the news.
                raise error from None
            raise
    else:
        found = xml.choose_record_path(counts, parents)
        if found is None:
            if error is not None:
                raise error
            raise FeedFormatError(
                "no repeating record element found",
                path=path,
                hint="use --record-path; elements found: "
                + ", ".join(sorted(counts, key=lambda p: (p.count("/"), p))[:15]),
            )
        chosen = found
    feed = Feed(
        FeedInfo(
            format="xml",
            delimiter=None,
            has_header=False,
            record_path=chosen,
            namespaces=namespaces,
            **common,
        ),
        xml_encoding=xml_encoding,
    )
    return _with_columns(feed)


def other_encodings(info: FeedInfo) -> list[str]:
    """Other East Asian double-byte sets that read the feed's first bytes as cleanly as its
    encoding does (the detected one, or one its profile keeps): a short feed gives too few
    bytes to tell them apart. Empty for a byte-order mark or a file that cannot be read."""
    if info.encoding_source == "bom" or not _sniff.is_double_byte(info.encoding):
        return []  # nothing to read again for the usual feed (UTF-8, a Western code page)
    try:
        head, _complete, _compression = read_head(info.path, _sniff.SAMPLE_SIZE)
    except (OSError, CatmapError):
        return []
    return _sniff.other_readings(head, info.encoding)


def encoding_warning(info: FeedInfo) -> str:
    """A warning when a short feed's bytes read as cleanly in another double-byte set ("" when
    not): its titles may be mojibake, and the model would map them with confidence."""
    others = other_encodings(info)
    if not others:
        return ""
    return (
        f"the feed is read as {info.encoding}, but it has so few bytes outside ASCII that "
        f"{' and '.join(others)} read{'s' if len(others) == 1 else ''} them as well: check a "
        "few titles, and give --encoding if they look wrong"
    )
