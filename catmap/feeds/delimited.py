"""Read delimited text feeds (comma, semicolon, tab or pipe) as a stream of records.

Parsing is the standard library's C ``csv`` reader over the decoded text stream, so the
per-row Python work is one dict build (in C too: ``dict(compress(zip(columns, row), row))``).
Each record keeps only its non-empty cells (a missing value is an absent key, as
:class:`~catmap.records.SourceRecord` says), which saves memory on wide, sparse feeds.

Importing this module raises the process-wide ``csv.field_size_limit`` to 64 MiB (never lowers
it): a 5 MB description must fit, while a stray quote that would swallow a huge file stops at
the limit instead of filling memory.

A row the csv reader cannot split (a stray quote that ran on into the following lines, or one
never closed) is rejected, and the lines it took are split again on their own from memory:
the reader reads through a :class:`~catmap.feeds._line_window.LineWindow` that keeps the lines
of the row being read, so the feed is never read again.
"""

from __future__ import annotations

import csv
import io
import re
from collections import Counter
from collections.abc import Callable, Iterable, Iterator
from itertools import compress
from pathlib import Path

from catmap.errors import FeedFormatError
from catmap.feeds import _sniff
from catmap.feeds._compression import damage_found, open_binary
from catmap.feeds._line_window import LineWindow
from catmap.records import Reject, SourceRecord

DELIMITERS = (",", ";", "\t", "|")
_DELIMITER_NAMES = {"tab": "\t", "\\t": "\t", "comma": ",", "semicolon": ";", "pipe": "|"}
# Large enough for a 5 MB product description, small enough that an unterminated quote in a
# huge file stops there instead of swallowing it all into memory.
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


# How deep lines read again are read again in turn (a stray quote among the lines a stray
# quote swallowed): each level reads at most the swallowed lines once, so a feed costs at most
# this many readings of its text however many stray quotes it has. Below it, the lines are read
# one by one (a quoted cell with a line break there is rejected, its lines with it).
RESPLIT_DEPTH = 8
# What to do about a row the csv reader cannot split: the fault is a quote.
_QUOTE_ADVICE = (
    'ask the sender to double each " inside quoted text ("") or remove the stray one, then '
    "send the feed again"
)


def _size(characters: int) -> str:
    if characters >= 1 << 20:
        return f"{characters >> 20} MiB"
    return f"{characters >> 10} KiB"


def _split_failure(message: str, top: bool) -> str:
    """Say in the user's words why the csv reader could not split a row."""
    if "unexpected end of data" in message:
        if top:
            return "a quote opened on this line is never closed (the feed ends inside it)"
        return "a quote opened on this line is never closed"
    if "field larger" in message:
        return (
            "a quote opened on this line runs on past the cell size limit "
            f"({_size(csv.field_size_limit())})"
        )
    return message


def _unsplittable(
    lines: list[str] | None,
    *,
    path: str | Path,
    encoding: str,
    delimiter: str,
    columns: tuple[str, ...],
    named: bool,
    start: int,
    end: int,
    message: str,
    depth: int,
) -> Iterator[SourceRecord | Reject]:
    """Reject a row the csv reader could not split (lines ``start``..``end``), and read again
    the lines it swallowed.

    A stray quote at the start of a cell (``"55 inch screen``) makes the reader take the
    following lines into that cell until the next quote, or to the end of the feed: one reject
    would hide good rows. The row's first line is rejected with its text, and the lines after
    it are read again on their own, from memory (``lines``, kept while the row was read).

    Args:
        lines: the row's physical lines, or None when they were too long to keep.
        depth: how many times these lines were already read again.
    """
    why = _split_failure(message, top=depth == 0)
    if lines is None:
        yield Reject(
            "unparseable_record",
            f"cannot split the rows on lines {start}-{end}: {why}; they hold more text than "
            f"catmap keeps to read them again on their own; {_QUOTE_ADVICE}",
            start,
            f"line {start}",
            "",
        )
        return
    first = lines[0].rstrip("\r\n")
    excerpt = _sniff.SURROGATES.sub(
        "\ufffd", first[:_EXCERPT] + ("..." if len(first) > _EXCERPT else "")
    )
    again = lines[1:]
    runs_on = ""
    if again:
        quote = "it" if why != message else "a quote on this line"
        runs_on = f"; {quote} runs on to line {end}: the lines after it are read on their own"
    yield Reject(
        "unparseable_record",
        f"cannot split the row: {why}{runs_on}; {_QUOTE_ADVICE}",
        start,
        f"line {start}",
        excerpt,
    )
    if not again:
        return
    parts = [(start + 1, again)]
    if depth + 1 >= RESPLIT_DEPTH:
        parts = [(number, [line]) for number, line in enumerate(again, start=start + 1)]
    for first_line, part in parts:
        yield from _read_rows(
            part, path=path, encoding=encoding, delimiter=delimiter, columns=columns,
            has_header=False, first_line=first_line, named=named, depth=depth + 1,
            pending=sum(len(_sniff.SURROGATES.findall(line)) for line in part),
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
        FeedFormatError: a cell with no quote larger than the cell size limit; gzip or zip
            data cut short or damaged (after the records before the damage).
    """
    stream, _ = open_binary(path, hold_damage=True)
    with io.TextIOWrapper(
        stream, encoding=encoding, errors=_sniff.ERROR_HANDLER, newline=""
    ) as text:
        yield from read_delimited_text(
            text, path=path, encoding=encoding, delimiter=delimiter, columns=columns,
            has_header=has_header, damage=lambda: damage_found(stream),
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
    damage: Callable[[], BaseException | None] | None = None,
) -> Iterator[SourceRecord | Reject]:
    """Yield the records and rejects of delimited text (a whole file, or a slice of one).

    A row the csv reader cannot split (a stray quote, or one never closed) is rejected, and the
    lines it swallowed are read again on their own, from the lines kept while it was read.

    Args:
        text: the decoded text, opened with ``newline=""``.
        path: the feed file (named in errors).
        encoding: the codec the text was decoded with.
        delimiter: the cell separator.
        columns: the column names.
        has_header: skip the first non-empty row.
        first_line: the file's line number of the text's first line (a slice's records and
            rejects keep the file's real line numbers).
        named_columns: the columns are the file's header row (default: ``has_header``; a
            slice after the first has no header row but its columns may still be named).
        damage: returns the error of the byte stream under ``text`` once it found the data
            cut short or damaged (see :func:`~catmap.feeds._compression.damage_found`).

    Yields:
        Records and rejects, as :func:`iter_delimited` describes, and "repeated_header" for
        the header row written again inside the feed (files joined by hand).

    Raises:
        FeedFormatError: a cell with no quote larger than the cell size limit; the error
            ``damage`` gives, after the records before the damage.
    """
    named = has_header if named_columns is None else named_columns
    yield from _read_rows(
        text, path=path, encoding=encoding, delimiter=delimiter, columns=columns,
        has_header=has_header, first_line=first_line, named=named, damage=damage,
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
    depth: int = 0,
    pending: int = 0,
    damage: Callable[[], BaseException | None] | None = None,
) -> Iterator[SourceRecord | Reject]:
    """:func:`read_delimited_text`'s loop.

    Args:
        depth: 0 for the feed's text, 1 or more for lines read again (see ``RESPLIT_DEPTH``).
        pending: undecodable characters already in ``text`` (lines read again).
        damage: see :func:`read_delimited_text`.
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
    previous = shift  # reader.line_num after the previous row: the next row starts one later
    # The lines of the row being read are kept (a record held past twice the cell limit lets
    # its first lines go: only a row of many cells gets there, the one-cell run of a stray
    # quote stops at the limit).
    window = LineWindow(
        text, first_line=first_line, record_start=lambda: previous + 1,
        limit=2 * csv.field_size_limit(), damage=damage,
    )  # fmt: skip
    reader = csv.reader(window, delimiter=delimiter, strict=True)
    while True:
        try:
            row = next(reader)
        except StopIteration:
            return
        except csv.Error as exc:
            start = previous + 1
            previous = reader.line_num + shift
            message = str(exc)
            lines = window.lines(start, previous)
            if (
                "field larger" in message
                and lines is not None
                and not any('"' in line for line in lines)
            ):
                raise FeedFormatError(
                    f"a cell on this row is larger than {_size(csv.field_size_limit())}",
                    path=path,
                    line=start,
                    hint="the row has no quote; ask the sender to cut the cell, or split the file",
                ) from exc
            yield from _unsplittable(
                lines, path=path, encoding=encoding, delimiter=delimiter, columns=columns,
                named=named, start=start, end=previous, message=message, depth=depth,
            )  # fmt: skip
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
