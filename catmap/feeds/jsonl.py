"""Read JSON Lines feeds: one JSON object per line, flattened into text fields.

Nested objects become dotted names ("shipping.price"); list items are joined with " | " (a list
of objects gives one joined field per key: "images.url"). Numbers keep their written form
("9.90" stays "9.90"), booleans become "true" / "false", and null is an absent field.
"""

from __future__ import annotations

import io
import json
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import Any

from catmap.feeds import _sniff
from catmap.feeds._compression import open_binary
from catmap.records import Reject, SourceRecord

JOIN = " | "
_EXCERPT = 200
_decoder = json.JSONDecoder(parse_float=str, parse_int=str, parse_constant=str)


def _add(out: dict[str, str], key: str, value: str) -> None:
    out[key] = out[key] + JOIN + value if key in out else value


def flatten(value: Any, prefix: str, out: dict[str, str]) -> None:
    """Flatten a decoded JSON value into ``out`` under the dotted name ``prefix``."""
    if isinstance(value, dict):
        for key, item in value.items():
            flatten(item, f"{prefix}.{key}" if prefix else str(key), out)
    elif isinstance(value, list):
        for item in value:
            flatten(item, prefix, out)
    elif value is None:
        return
    elif value is True:
        _add(out, prefix, "true")
    elif value is False:
        _add(out, prefix, "false")
    else:
        text = str(value)
        if text:
            _add(out, prefix, text)


def iter_jsonl(path: str | Path, *, encoding: str) -> Iterator[SourceRecord | Reject]:
    """Yield one :class:`SourceRecord` per JSON object line, a :class:`Reject` per bad line.

    Args:
        path: the feed file (gzip / zip are opened transparently).
        encoding: the codec to decode with.

    Yields:
        Records, or rejects "unparseable_record" (not JSON, or not an object) and
        "bad_encoding".
    """
    stream, _ = open_binary(path)
    with io.TextIOWrapper(
        stream, encoding=encoding, errors=_sniff.ERROR_HANDLER, newline="\n"
    ) as text:
        yield from read_jsonl_text(text, encoding=encoding)


def read_jsonl_text(
    text: Iterable[str], *, encoding: str, first_line: int = 1
) -> Iterator[SourceRecord | Reject]:
    """Yield the records and rejects of JSON Lines text (a whole file, or a slice of one).

    Args:
        text: the decoded lines, newline kept.
        encoding: the codec they were decoded with (named in bad-bytes rejects).
        first_line: the file's line number of the first line (a slice's rejects keep the
            file's real line numbers).

    Yields:
        Records and rejects, as :func:`iter_jsonl` describes.
    """
    bad_bytes = _sniff.bad_bytes_detail(encoding)
    for number, raw in enumerate(text, start=first_line):
        line = raw.strip()
        if not line:
            continue
        location = f"line {number}"
        excerpt = line[:_EXCERPT]
        if _sniff.SURROGATES.search(line):
            yield Reject(
                "bad_encoding",
                bad_bytes,
                number,
                location,
                _sniff.SURROGATES.sub("\ufffd", excerpt),
            )
            continue
        try:
            value = _decoder.decode(line)
        except ValueError as exc:
            yield Reject(
                "unparseable_record", f"not valid JSON: {exc}", number, location, excerpt
            )
            continue
        except RecursionError:
            yield Reject(
                "unparseable_record",
                "the JSON is nested too deep to read (Python's recursion limit)",
                number,
                location,
                excerpt,
            )
            continue
        if not isinstance(value, dict):
            yield Reject(
                "unparseable_record",
                f"the line holds a JSON {type(value).__name__}, not an object",
                number,
                location,
                excerpt,
            )
            continue
        fields: dict[str, str] = {}
        try:
            flatten(value, "", fields)
        except RecursionError:
            yield Reject(
                "unparseable_record",
                "the JSON is nested too deep to read (Python's recursion limit)",
                number,
                location,
                excerpt,
            )
            continue
        # JSON can spell a lone surrogate ("\\ud800"), which is no character: such text
        # cannot be written out again as UTF-8, in a value or in a key.
        if "\\u" in line and _has_surrogate(fields):
            yield Reject(
                "bad_encoding",
                "an escaped lone surrogate (\\ud800-\\udfff) is not a character",
                number,
                location,
                excerpt,
            )
            continue
        yield SourceRecord(fields, number, location)


def _has_surrogate(fields: dict[str, str]) -> bool:
    search = _sniff.SURROGATES.search
    return any(search(key) or search(value) for key, value in fields.items())
