"""Read delimited text feeds (comma, semicolon, tab or pipe) as a stream of records.

Parsing is the standard library's C ``csv`` reader over the decoded text stream, so the
per-row Python work is one dict build (in C too: ``dict(compress(zip(columns, row), row))``).
Each record keeps only its non-empty cells (a missing value is an absent key, as
:class:`~catmap.records.SourceRecord` says), which saves memory on wide, sparse feeds.

Importing this module raises the process-wide ``csv.field_size_limit`` to 64 MiB (never lowers
it): a 5 MB description must fit, while a stray quote that would swallow a huge file still
stops with an error instead of filling memory.
"""

from __future__ import annotations

import csv
import io
import re
from collections import Counter
from collections.abc import Iterable, Iterator
from itertools import compress
from pathlib import Path

from catmap.errors import FeedFormatError
from catmap.feeds import _sniff
from catmap.feeds._compression import open_binary
from catmap.records import Reject, SourceRecord

DELIMITERS = (",", ";", "\t", "|")
_DELIMITER_NAMES = {"tab": "\t", "\\t": "\t", "comma": ",", "semicolon": ";", "pipe": "|"}
# Large enough for a 5 MB product description, small enough that an unterminated quote in a
# huge file stops with an error instead of swallowing it all into memory.
FIELD_SIZE_LIMIT = 64 * 1024 * 1024
csv.field_size_limit(max(csv.field_size_limit(), FIELD_SIZE_LIMIT))

_NUMBER = re.compile(r"^[-+]?[\d\s.,]*\d[\d\s.,]*\s*(%|[A-Za-z]{3}|[€$£¥])?$")
_URL = re.compile(r"^(https?://|www\.)", re.IGNORECASE)
_EXCERPT = 200
# Rows looked at to tell a header with blank or repeated names from a first record.
_HEADER_SAMPLE = 10
_HEADER_NOISE = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")
# One line with its end, split as a text stream opened with ``newline=""`` splits it ("\r\n",
# "\r" or "\n"), so that the csv reader sees the same lines. Lines are found lazily: reading
# a few rows of a 1 MB sample no longer copies the whole sample into a StringIO first.
_LINE_RE = re.compile(r"[^\r\n]*(?:\r\n|\r|\n)|[^\r\n]+")
# A spreadsheet program's first line "sep=;" names the delimiter for the program that opens
# the file; it is no record (common practice, no source).
_SEPARATOR_LINE = re.compile(r"\ufeff?sep=([^\r\n])(?:\r\n|\r|\n|$)", re.IGNORECASE)


def parse_delimiter(value: str, path: str | Path) -> str:
    """Turn a user's ``--delimiter`` ("tab", "\\t", ";", ...) into one character.

    Raises:
        FeedFormatError: not a single character.
    """
    found = _DELIMITER_NAMES.get(value.lower(), value)
    if len(found) != 1:
        raise FeedFormatError(
            f"the delimiter must be one character, got {value!r}",
            path=path,
            hint="use --delimiter ',' ';' '|' or tab",
        )
    return found


def separator_line(text: str) -> str | None:
    """Return the delimiter a leading "sep=X" line names, or None when there is no such line."""
    match = _SEPARATOR_LINE.match(text)
    return match.group(1) if match else None


def without_separator_line(text: str) -> str:
    """Return the decoded sample without its leading "sep=X" line, if it has one."""
    match = _SEPARATOR_LINE.match(text)
    return text[match.end() :] if match else text


def is_separator_row(row: list[str]) -> bool:
    """Tell whether a parsed first row is a "sep=X" line (read with its own delimiter X)."""
    return len(row) == 2 and not row[1] and row[0].lstrip("\ufeff").lower() == "sep="


def sample_rows(text: str, delimiter: str, limit: int) -> list[list[str]]:
    """Parse up to ``limit`` non-empty rows of a decoded sample (the last one may be cut short)."""
    rows: list[list[str]] = []
    lines = map(re.Match.group, _LINE_RE.finditer(text))
    reader = csv.reader(lines, delimiter=delimiter)
    try:
        for row in reader:
            if row:
                rows.append(row)
            if len(rows) >= limit:
                break
    except csv.Error:
        pass  # the sample may end inside a quoted field
    return rows


def sniff_delimiter(text: str) -> str:
    """Choose the delimiter whose cell count is most consistent over the first lines.

    Counting is done by the csv parser itself, so delimiters inside quotes are ignored. The
    score is (share of rows with the most common cell count, that count); a candidate giving
    one cell per row never wins. Comma is the fallback.
    """
    if "\n" in text:
        text = text[: text.rfind("\n") + 1] or text
    best: tuple[float, int] = (0.0, 1)
    chosen = ","
    for delimiter in DELIMITERS:
        if delimiter not in text:
            continue
        counts = [len(row) for row in sample_rows(text, delimiter, 50)]
        if not counts:
            continue
        mode, times = Counter(counts).most_common(1)[0]
        if mode < 2:
            continue
        score = (round(times / len(counts), 2), mode)
        if score > best:
            best, chosen = score, delimiter
    return chosen


def _looks_like_value(cell: str) -> bool:
    cell = cell.strip()
    return bool(_NUMBER.match(cell) or _URL.match(cell) or len(cell) > 60 or cell.count(" ") > 6)


def sniff_header(text: str, delimiter: str) -> bool:
    """Tell whether the first row names the columns.

    A header row has no cell that looks like a value (a number, a URL, long text). When it
    has no empty and no repeated cell, it is a header unless a second row repeats it with no
    value-looking cell. An empty or repeated cell (a blank column name, trailing empty columns
    of a spreadsheet export, two "image" columns) is allowed when a later row has a value
    under one of its names: "price" over "10.00" (common practice, no source).
    """
    rows = sample_rows(text, delimiter, _HEADER_SAMPLE)
    if not rows:
        return False
    first = rows[0]
    if any(_looks_like_value(cell) for cell in first if cell.strip()):
        return False
    names = [cell for cell in first if cell.strip()]
    if not names:
        return False
    if len(names) == len(first) and len(set(first)) == len(first):
        if len(rows) == 1:
            return True
        second = rows[1]
        return any(_looks_like_value(cell) for cell in second) or second != first
    named = [index for index, cell in enumerate(first) if cell.strip()]
    return any(
        index < len(row) and _looks_like_value(row[index]) for row in rows[1:] for index in named
    )


def header_names(row: list[str]) -> tuple[str, ...]:
    """Clean header cells into unique column names ("column_N" for blanks, "_2" for repeats)."""
    names: list[str] = []
    seen: set[str] = set()
    for index, cell in enumerate(row, start=1):
        # Control characters in a header are noise from the export; an undecodable byte (a lone
        # surrogate here) cannot be written in a profile: both go from the column's name.
        cell = _HEADER_NOISE.sub("", _sniff.SURROGATES.sub("\ufffd", cell))
        name = cell.strip().lstrip("\ufeff") or f"column_{index}"
        base, suffix = name, 2
        while name in seen:
            name = f"{base}_{suffix}"
            suffix += 1
        seen.add(name)
        names.append(name)
    return tuple(names)


def _named_width(columns: tuple[str, ...]) -> int:
    """The number of header columns up to the last one with a name of its own.

    :func:`header_names` calls a blank header cell "column_N" (N its position); the blank
    cells at the end of a header are the empty columns a spreadsheet export adds.
    """
    width = len(columns)
    while width and columns[width - 1] == f"column_{width}":
        width -= 1
    return width


def _excerpt(row: list[str], delimiter: str) -> str:
    text = delimiter.join(row)
    return text[:_EXCERPT] + ("..." if len(text) > _EXCERPT else "")


def read_first_row(path: str | Path, encoding: str, delimiter: str) -> list[str] | None:
    """Return the first non-empty row of the feed (the full header, however wide)."""
    stream, _ = open_binary(path)
    with io.TextIOWrapper(
        stream, encoding=encoding, errors=_sniff.ERROR_HANDLER, newline=""
    ) as text:
        try:
            first = True
            for row in csv.reader(text, delimiter=delimiter, strict=True):
                if row:
                    if first and is_separator_row(row):
                        first = False
                        continue
                    return row
        except csv.Error:
            return None
    return None


def _row_has_quote(path: str | Path, encoding: str, line: int) -> bool:
    """Tell whether the physical line ``line`` (1-based) holds a double quote.

    Read only after the csv reader stopped on an oversized cell, to say whether a quote that
    never closed is to blame or the cell is simply too large.
    """
    stream, _ = open_binary(path)
    with io.TextIOWrapper(
        stream, encoding=encoding, errors=_sniff.ERROR_HANDLER, newline=""
    ) as text:
        for number, row in enumerate(text, start=1):
            if number == line:
                return '"' in row
    return True


# Rows the csv reader cannot split that are read again from the file (each read goes through
# the file up to that row): enough for a feed with a few stray quotes, bounded for one with many.
REREAD_LIMIT = 20


def _lines_again(path: str | Path, encoding: str, first: int, last: int) -> list[str]:
    """Return the physical lines ``first``..``last`` (1-based) of the feed, line ends kept.

    Split as the readers split them (``newline=""``); undecodable bytes become lone surrogates
    without counting them again (they were counted when first read).
    """
    stream, _ = open_binary(path)
    lines: list[str] = []
    with io.TextIOWrapper(
        stream, encoding=encoding, errors=_sniff.HEAD_ERROR_HANDLER, newline=""
    ) as text:
        for number, line in enumerate(text, start=1):
            if number >= first:
                lines.append(line)
            if number >= last:
                break
    return lines


def _unsplittable(
    path: str | Path,
    encoding: str,
    delimiter: str,
    columns: tuple[str, ...],
    named: bool,
    start: int,
    end: int,
    message: str,
    rereads: list[int],
) -> Iterator[SourceRecord | Reject]:
    """Reject a row the csv reader could not split (lines ``start``..``end``), and read again
    the lines it swallowed.

    A stray quote at the start of a cell (``"55 inch screen``) makes the reader take the
    following lines into that cell until the next quote: one reject would hide good rows.
    The row's first line is rejected with its text, and the lines after it are read again on
    their own.
    """
    if rereads[0] <= 0:
        span = f" (lines {start}-{end})" if end > start else ""
        yield Reject(
            "unparseable_record", f"cannot split the row{span}: {message}", start,
            f"line {start}", "",
        )  # fmt: skip
        return
    rereads[0] -= 1
    lines = _lines_again(path, encoding, start, end)
    first = lines[0].rstrip("\r\n") if lines else ""
    excerpt = _sniff.SURROGATES.sub(
        "\ufffd", first[:_EXCERPT] + ("..." if len(first) > _EXCERPT else "")
    )
    if len(lines) <= 1:
        yield Reject(
            "unparseable_record", f"cannot split the row: {message}", start, f"line {start}",
            excerpt,
        )  # fmt: skip
        return
    yield Reject(
        "unparseable_record",
        f"cannot split the row: {message}; a quote on this line runs on to line {end}: the "
        "lines after it are read on their own",
        start,
        f"line {start}",
        excerpt,
    )
    again = lines[1:]
    yield from _read_rows(
        again, path=path, encoding=encoding, delimiter=delimiter, columns=columns,
        has_header=False, first_line=start + 1, named=named, rereads=rereads,
        pending=sum(len(_sniff.SURROGATES.findall(line)) for line in again), part=True,
    )  # fmt: skip


def iter_delimited(
    path: str | Path,
    *,
    encoding: str,
    delimiter: str,
    columns: tuple[str, ...],
    has_header: bool,
) -> Iterator[SourceRecord | Reject]:
    """Yield one :class:`SourceRecord` per data row, or a :class:`Reject` for a bad row.

    Args:
        path: the feed file (gzip / zip are opened transparently).
        encoding: the codec to decode with.
        delimiter: the cell separator.
        columns: the column names (the cleaned header, or "column_N").
        has_header: skip the first non-empty row.

    Yields:
        Records with the line each starts on; rejects "ragged_row", "bad_encoding" or
        "unparseable_record".

    Raises:
        FeedFormatError: an unterminated quote, or a field larger than the limit.
    """
    stream, _ = open_binary(path)
    with io.TextIOWrapper(
        stream, encoding=encoding, errors=_sniff.ERROR_HANDLER, newline=""
    ) as text:
        yield from read_delimited_text(
            text, path=path, encoding=encoding, delimiter=delimiter, columns=columns,
            has_header=has_header,
        )  # fmt: skip


def read_delimited_text(
    text: Iterable[str],
    *,
    path: str | Path,
    encoding: str,
    delimiter: str,
    columns: tuple[str, ...],
    has_header: bool,
    first_line: int = 1,
    named_columns: bool | None = None,
) -> Iterator[SourceRecord | Reject]:
    """Yield the records and rejects of delimited text (a whole file, or a slice of one).

    Args:
        text: the decoded text, opened with ``newline=""``.
        path: the feed file (named in errors; re-read to explain an oversized cell).
        encoding: the codec the text was decoded with.
        delimiter: the cell separator.
        columns: the column names.
        has_header: skip the first non-empty row.
        first_line: the file's line number of the text's first line (a slice's records and
            rejects keep the file's real line numbers).
        named_columns: the columns are the file's header row (default: ``has_header``; a
            slice after the first has no header row but its columns may still be named).

    Yields:
        Records and rejects, as :func:`iter_delimited` describes, and "repeated_header" for
        the header row written again inside the feed (files joined by hand).

    Raises:
        FeedFormatError: an unterminated quote, or a field larger than the limit.
    """
    named = has_header if named_columns is None else named_columns
    yield from _read_rows(
        text, path=path, encoding=encoding, delimiter=delimiter, columns=columns,
        has_header=has_header, first_line=first_line, named=named, rereads=[REREAD_LIMIT],
    )  # fmt: skip


def _read_rows(
    text: Iterable[str],
    *,
    path: str | Path,
    encoding: str,
    delimiter: str,
    columns: tuple[str, ...],
    has_header: bool,
    first_line: int,
    named: bool,
    rereads: list[int],
    pending: int = 0,
    part: bool = False,
) -> Iterator[SourceRecord | Reject]:
    """:func:`read_delimited_text`'s loop.

    Args:
        rereads: how many more unsplittable rows may be read again from the file (shared by
            the nested readers of one feed).
        pending: undecodable characters already in ``text`` (lines read again).
        part: ``text`` is a part of the feed read again: a quote still open at its end is
            the fault of the row it opened in, not a fatal error.
    """
    width = len(columns)
    bad_bytes = _sniff.bad_bytes_detail(encoding)
    escapes = _sniff.ESCAPES
    seen = escapes.produced
    header_pending = has_header
    # Only the file's first row can be a "sep=X" line.
    preamble = first_line == 1
    first_name = columns[0] if named and columns else None
    named_width = _named_width(columns) if named else width
    shift = first_line - 1
    reader = csv.reader(text, delimiter=delimiter, strict=True)
    previous = shift  # reader.line_num after the previous row: the next row starts one later
    while True:
        try:
            row = next(reader)
        except StopIteration:
            return
        except csv.Error as exc:
            start = previous + 1
            previous = reader.line_num + shift
            message = str(exc)
            if part and "unexpected end of data" in message:
                # Inside lines read again, a quote left open at their end is this row's fault.
                yield from _unsplittable(
                    path, encoding, delimiter, columns, named, start, previous, message, rereads
                )
                return
            if "field larger" in message and not _row_has_quote(path, encoding, start):
                raise FeedFormatError(
                    f"a cell on this row is larger than {FIELD_SIZE_LIMIT >> 20} MiB",
                    path=path,
                    line=start,
                    hint="the row has no quote; ask the sender to cut the cell, or split the file",
                ) from exc
            if "unexpected end of data" in message or "field larger" in message:
                raise FeedFormatError(
                    "a quoted field opened here is never closed"
                    + (" (it grew past the field size limit)" if "larger" in message else ""),
                    path=path,
                    line=start,
                    hint='a stray " swallowed the rest of the file; double it ("") inside '
                    "quoted text or remove it",
                ) from exc
            yield from _unsplittable(
                path, encoding, delimiter, columns, named, start, previous, message, rereads
            )
            continue
        start = previous + 1
        previous = reader.line_num + shift
        if not row:
            continue
        if preamble:
            preamble = False
            if is_separator_row(row):
                continue
        if header_pending:
            header_pending = False
            continue
        if escapes.produced != seen:
            pending += escapes.produced - seen
            seen = escapes.produced
        if pending:
            found = sum(len(_sniff.SURROGATES.findall(cell)) for cell in row)
            if found:
                pending = max(0, pending - found)
                excerpt = _sniff.SURROGATES.sub("\ufffd", _excerpt(row, delimiter))
                yield Reject(
                    "bad_encoding",
                    bad_bytes,
                    start,
                    f"line {start}",
                    excerpt,
                )
                continue
        if len(row) != width and len(row) == named_width:
            # The header ends in cells with no name (a spreadsheet's trailing empty columns)
            # and the row stops where the names stop: nothing is missing.
            row = row + [""] * (width - len(row))
        if len(row) != width:
            yield Reject(
                "ragged_row",
                f"expected {width} cells, found {len(row)}",
                start,
                f"line {start}",
                _excerpt(row, delimiter),
            )
            continue
        if first_name is not None and row[0].strip() == first_name and header_names(row) == columns:
            yield Reject(
                "repeated_header",
                "the header row again, inside the feed (files joined with their headers?)",
                start,
                f"line {start}",
                _excerpt(row, delimiter),
            )
            continue
        # compress() keeps the (column, cell) pairs whose cell is non-empty: the row's own
        # cells are the selectors (the row has exactly ``width`` cells, checked above).
        fields = dict(compress(zip(columns, row, strict=True), row))
        yield SourceRecord(fields, start, f"line {start}")
