"""Find a feed's encoding and format from its first bytes, and track undecodable bytes.

Encoding, in order: a byte-order mark; strict UTF-8 on the sample; otherwise charset-normalizer
on the sample, preferring cp1252 to latin-1 because Western feeds that are not UTF-8 are nearly
always Windows-1252 (common practice, no source). The stream is then decoded with an error
handler that turns each undecodable byte into a lone surrogate (as ``surrogateescape`` does) and
counts them, so one bad byte deep in a big file rejects one record instead of stopping the run.
"""

from __future__ import annotations

import codecs
import json
import re
import unicodedata
from pathlib import Path

from catmap.errors import FeedEncodingError, FeedFormatError

SAMPLE_SIZE = 1 << 20
FORMATS = ("delimited", "xml", "jsonl")
_FORMAT_ALIASES = {
    "delimited": "delimited",
    "csv": "delimited",
    "tsv": "delimited",
    "txt": "delimited",
    "text": "delimited",
    "xml": "xml",
    "jsonl": "jsonl",
    "ndjson": "jsonl",
    "json": "jsonl",
    "jsonlines": "jsonl",
}
_BOMS = (
    (codecs.BOM_UTF32_LE, "utf-32"),
    (codecs.BOM_UTF32_BE, "utf-32"),
    (codecs.BOM_UTF8, "utf-8-sig"),
    (codecs.BOM_UTF16_LE, "utf-16"),
    (codecs.BOM_UTF16_BE, "utf-16"),
)
SURROGATES = re.compile("[\ud800-\udfff]")
ERROR_HANDLER = "catmap-escape"


class _EscapeCounter:
    """Counts lone surrogates produced by the decoding error handler, for all streams.

    Readers remember the count they last saw; when it moves they scan records for surrogates
    until they have found as many as were produced. Interleaved streams can only make a reader
    scan more than needed, never miss a bad record.
    """

    produced = 0


ESCAPES = _EscapeCounter()


def _escape(exc: UnicodeError) -> tuple[str, int]:
    if not isinstance(exc, UnicodeDecodeError):
        raise exc
    bad = exc.object[exc.start : exc.end]
    ESCAPES.produced += len(bad)
    # Bytes >= 0x80 as surrogateescape does; lower ones (odd UTF-16 tails) likewise in U+DC00..
    return "".join(chr(0xDC00 + b) for b in bad), exc.end


codecs.register_error(ERROR_HANDLER, _escape)

# The same escape for a sample looked at before reading (not counted: no record is read from it).
HEAD_ERROR_HANDLER = "catmap-escape-head"


def _escape_head(exc: UnicodeError) -> tuple[str, int]:
    if not isinstance(exc, UnicodeDecodeError):
        raise exc
    return "".join(chr(0xDC00 + b) for b in exc.object[exc.start : exc.end]), exc.end


codecs.register_error(HEAD_ERROR_HANDLER, _escape_head)

# Codecs that are text encodings to Python but cannot be read safely as a feed: they take no
# error handler (idna, punycode), or can spell markup in plain letters (utf-7 writes "<" as
# "+ADw-"), or turn escapes into characters (unicode_escape).
_REFUSED_CODECS = frozenset(
    {"utf-7", "idna", "punycode", "unicode-escape", "raw-unicode-escape", "undefined"}
)


def normalize_format(value: str, path: str | Path) -> str:
    """Map a user's format name ("csv", "xml", "jsonl", ...) onto one of :data:`FORMATS`.

    Raises:
        FeedFormatError: an unknown format name.
    """
    found = _FORMAT_ALIASES.get(value.strip().lower())
    if found is None:
        raise FeedFormatError(
            f"unknown feed format {value!r}",
            path=path,
            hint="use --format delimited, xml or jsonl",
        )
    return found


def codec_name(encoding: str, path: str | Path) -> str:
    """Return Python's canonical codec name for ``encoding``.

    Raises:
        FeedFormatError: Python knows no such encoding.
    """
    hint = "use --encoding utf-8, cp1252, latin-1, utf-16 ..."
    try:
        info = codecs.lookup(encoding)
    except (LookupError, ValueError) as exc:  # ValueError: a name with a NUL byte
        raise FeedFormatError(f"unknown encoding {encoding!r}", path=path, hint=hint) from exc
    # _is_text_encoding is False for bytes-to-bytes and str-to-str codecs (base64, zlib, rot13).
    if not getattr(info, "_is_text_encoding", True) or info.name in _REFUSED_CODECS:
        raise FeedFormatError(
            f"{encoding!r} is not a text encoding catmap can read a feed with",
            path=path,
            hint=hint,
        )
    return info.name


def _looks_utf16(head: bytes) -> str | None:
    """Return "utf-16-le"/"utf-16-be" for BOM-less UTF-16 text, else None.

    Mostly ASCII text has a zero in nearly every other byte. Text mostly in another script
    (Japanese, Chinese, Greek...) has zeros only where its delimiters, digits and line ends
    are, all on the same side: then the sample must also decode as clean text with line breaks.
    """
    sample = head[:4096]
    if len(sample) < 4:
        return None
    even, odd = sample[0::2], sample[1::2]
    if odd.count(0) > 0.9 * len(odd) and even.count(0) < 0.1 * len(even):
        return "utf-16-le"
    if even.count(0) > 0.9 * len(even) and odd.count(0) < 0.1 * len(odd):
        return "utf-16-be"
    for name, zeros, others in (("utf-16-le", odd, even), ("utf-16-be", even, odd)):
        if (
            zeros.count(0) >= 0.05 * len(zeros)
            and others.count(0) <= 0.02 * len(others)
            and _clean_utf16(sample, name)
        ):
            return name
    return None


_UTF16_NOISE = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")


def _clean_utf16(sample: bytes, name: str) -> bool:
    """Tell whether ``sample`` decodes as ``name`` into text with line breaks and no controls."""
    try:
        text = codecs.getincrementaldecoder(name)("strict").decode(sample, final=False)
    except UnicodeDecodeError:  # a lone surrogate: not UTF-16 in this byte order
        return False
    return "\n" in text and not _UTF16_NOISE.search(text)


def _byte_order(head: bytes, name: str, path: str | Path) -> str:
    """Choose "-le" or "-be" for UTF-16 / UTF-32 text that has no byte-order mark.

    Python's "utf-16" and "utf-32" codecs need the mark; without it the zero bytes of ASCII
    characters show the byte order.

    Raises:
        FeedEncodingError: the zero bytes show no order.
    """
    if name == "utf-16":
        found = _looks_utf16(head)
        if found:
            return found
    else:
        sample = head[: 4096 - 4096 % 4]
        columns = [sample[i::4] for i in range(4)]
        if all(column.count(0) > 0.9 * len(column) for column in columns[1:]):
            return "utf-32-le"
        if all(column.count(0) > 0.9 * len(column) for column in columns[:3]):
            return "utf-32-be"
    raise FeedEncodingError(
        f"the feed has no byte-order mark to tell how to read it as {name}",
        path=path,
        hint=f"use --encoding {name}-le or {name}-be",
    )


def check_text(head: bytes, path: str | Path) -> None:
    """Refuse binary data (NUL bytes or many control characters) that is not a text feed.

    Raises:
        FeedFormatError: the sample is not text.
    """
    sample = head[:65536]
    controls = sum(sample.count(bytes([c])) for c in range(32) if c not in (9, 10, 12, 13))
    if b"\x00" in sample or (sample and controls > 0.05 * len(sample)):
        raise FeedFormatError(
            "the file holds binary data, it is not a text feed",
            path=path,
            hint="give catmap a CSV / XML / JSON Lines file, or its gzip or zip",
        )


def detect_encoding(head: bytes, given: str | None, path: str | Path) -> tuple[str, str]:
    """Choose the codec for a feed.

    Args:
        head: the first decompressed bytes of the feed.
        given: the user's ``--encoding``, if any.
        path: the feed, for error messages.

    Returns:
        (Python codec name, source) with source "bom", "detected" or "given".

    Raises:
        FeedFormatError: binary data, or an unknown given encoding.
    """
    if given:
        name = codec_name(given, path)
        if name == "utf-8" and head.startswith(codecs.BOM_UTF8):
            name = "utf-8-sig"
        if name in ("utf-16", "utf-32") and not any(head.startswith(b) for b, _ in _BOMS):
            name = _byte_order(head, name, path)
        if not name.startswith(("utf-16", "utf-32")):
            check_text(head, path)
        return name, "given"
    for bom, name in _BOMS:
        if head.startswith(bom):
            return name, "bom"
    utf16 = _looks_utf16(head)
    if utf16:
        return utf16, "detected"
    check_text(head, path)
    decoder = codecs.getincrementaldecoder("utf-8")("strict")
    try:
        decoder.decode(head, final=False)  # a sample cut mid-character is still UTF-8
        return "utf-8", "detected"
    except UnicodeDecodeError:
        if _mostly_utf8(head):
            return "utf-8", "detected"
    # Imported here: a UTF-8 feed (most of them) never needs the detector.
    import charset_normalizer

    matches = list(charset_normalizer.from_bytes(head))
    if b"\x00" not in head:
        # UTF-16 and UTF-32 write a zero byte beside every ASCII character: a sample with
        # none (a short feed in a double-byte set) is neither, whatever the detector says.
        matches = [m for m in matches if not m.encoding.startswith(("utf_16", "utf_32"))]
    if not matches:
        return ("cp1252" if _western_cp1252(head) else "latin-1"), "detected"
    best = codec_name(matches[0].encoding, path)
    if best in _COMMON_LEADS:
        return _double_byte_choice(
            head, [codec_name(m.encoding, path) for m in matches]
        ), "detected"
    if not _latin_family(best):
        return best, "detected"
    if _western_cp1252(head):
        return "cp1252", "detected"
    for match in matches:
        name = codec_name(match.encoding, path)
        if _latin_family(name) and name not in ("cp1252", "latin_1", "iso8859_15"):
            return name, "detected"
    return best, "detected"


# The lead bytes of the common part of each East Asian double-byte character set: the
# characters a shop writes (KS X 1001 for Korean, GB 2312 for Chinese, the symbols, kana,
# level-1 and the start of level-2 kanji of JIS X 0208 in Shift-JIS, Big5 proper). A short
# feed gives the detector few bytes, and another set's reading of them falls among the rare
# characters of its extensions (cp949's 0x81-0xA0 leads, GBK's 0x81-0xA0). Johab is kept out:
# no shop feed uses it.
_KOREAN = range(0xA1, 0xFF)
_CHINESE = range(0xA1, 0xF8)
_SHIFT_JIS = range(0x81, 0xA0)
_COMMON_LEADS: dict[str, range] = {
    "cp949": _KOREAN,
    "euc_kr": _KOREAN,
    "johab": range(0),
    "gb18030": _CHINESE,
    "gbk": _CHINESE,
    "gb2312": _CHINESE,
    "cp932": _SHIFT_JIS,
    "shift_jis": _SHIFT_JIS,
    "shift_jis_2004": _SHIFT_JIS,
    "shift_jisx0213": _SHIFT_JIS,
    "euc_jp": range(0xA1, 0xF5),
    "euc_jis_2004": range(0xA1, 0xF5),
    "euc_jisx0213": range(0xA1, 0xF5),
    "big5": range(0xA1, 0xFA),
    "cp950": range(0xA1, 0xFA),
    "big5hkscs": range(0xA1, 0xFA),
}
# The lead bytes of the most used part of each set, tried first: the symbols and the first
# level of characters by frequency (GB 2312's level 1, Big5's frequent characters, JIS X 0208's
# level-1 kanji, KS X 1001's hangul). Two characters of a short Chinese title can also read as
# four half-width katakana in Shift-JIS, or as a frequent and a rare character in Big5; a
# reading that keeps to these parts is the likelier one. The ranges are the sets' published
# row layouts, written from memory.
_FREQUENT_LEADS: dict[str, tuple[range, ...]] = {
    **dict.fromkeys(("cp949", "euc_kr"), (range(0xA1, 0xAD), range(0xB0, 0xC9))),
    **dict.fromkeys(("gb18030", "gbk", "gb2312"), (range(0xA1, 0xAA), range(0xB0, 0xD8))),
    **dict.fromkeys(
        ("cp932", "shift_jis", "shift_jis_2004", "shift_jisx0213"), (range(0x81, 0x99),)
    ),
    **dict.fromkeys(
        ("euc_jp", "euc_jis_2004", "euc_jisx0213"), (range(0xA1, 0xA9), range(0xB0, 0xD0))
    ),
    **dict.fromkeys(("big5", "cp950", "big5hkscs"), (range(0xA1, 0xC7),)),
}
# The sets whose common characters have trail bytes below 0xA1 too (the rest keep them in
# 0xA1-0xFE).
_LOW_TRAILS = frozenset(
    ("cp932", "shift_jis", "shift_jis_2004", "shift_jisx0213", "big5", "cp950", "big5hkscs")
)
_HIGH_RUN = re.compile(rb"[\x80-\xff]+")


def _double_byte_choice(head: bytes, names: list[str]) -> str:
    """Choose among the detector's readings when its best is an East Asian double-byte set.

    Western text with a few accented letters, each alone between ASCII characters ("Niño"),
    can also be read as pairs of a lead byte and an ASCII trail byte: it is cp1252 when that
    reads as Western text. Otherwise the first reading whose characters all come from the
    most used part of their set wins (double-byte characters only), then the first whose
    characters all come from the common part, else the detector's first.
    """
    if all(len(run) == 1 for run in _HIGH_RUN.findall(head)) and _western_cp1252(head):
        return "cp1252"
    for name in names:
        if name in _FREQUENT_LEADS and _common_characters(head, name, frequent=True):
            return name
    for name in names:
        if name in _COMMON_LEADS and _common_characters(head, name):
            return name
    return names[0]


def is_double_byte(encoding: str) -> bool:
    """Whether ``encoding`` is one of the East Asian double-byte sets detection chooses among."""
    return encoding in _FREQUENT_LEADS


def other_readings(head: bytes, chosen: str, limit: int = 2) -> list[str]:
    """Other double-byte sets that read ``head`` as cleanly as ``chosen`` but differently.

    A short feed in an East Asian set gives few bytes to tell the sets apart: a few kanji of
    a Japanese title can read as Chinese characters in another set just as well. Empty when
    ``chosen`` is not such a set or no other reading keeps to its set's most used part.

    Args:
        head: the feed's first bytes.
        chosen: the codec detection chose.
        limit: at most this many names.
    """
    if chosen not in _FREQUENT_LEADS:
        return []
    try:
        text = head.decode(chosen, "replace")
    except LookupError:
        return []
    seen = {text}
    found: list[str] = []
    for name in ("gb18030", "big5", "cp932", "euc_jp", "cp949"):
        if name == chosen or len(found) >= limit or not _common_characters(
            head, name, frequent=True
        ):
            continue
        reading = head.decode(name, "replace")
        if reading not in seen:
            seen.add(reading)
            found.append(name)
    return found


def _common_characters(head: bytes, name: str, *, frequent: bool = False) -> bool:
    """Tell whether ``head`` decodes as ``name`` into characters of the set's common part
    (``frequent``: of its most used part, and no single-byte character outside ASCII)."""
    try:
        text = codecs.getincrementaldecoder(name)("strict").decode(head, final=False)
    except UnicodeDecodeError:
        return False
    for char in set(_NON_ASCII.findall(text)):
        encoded = char.encode(name)
        if frequent:
            if len(encoded) != 2 or not any(encoded[0] in r for r in _FREQUENT_LEADS[name]):
                return False
            if name not in _LOW_TRAILS and encoded[1] < 0xA1:
                return False  # an extension character (GBK's, cp949's): not the frequent part
        elif len(encoded) > 2 or (len(encoded) == 2 and encoded[0] not in _COMMON_LEADS[name]):
            return False
    return True


_NON_ASCII = re.compile("[^\x00-\x7f\ud800-\udfff]")


def _mostly_utf8(head: bytes) -> bool:
    """Tell whether ``head`` is UTF-8 text with a few bytes that are not UTF-8.

    A UTF-8 feed with some rows pasted from a cp1252 file, or a few stray bytes, must still
    be read as UTF-8: read as a single-byte code page, every good row would be garbled without
    a word. Its multi-byte characters decode; in text written in a single-byte or a two-byte
    East Asian encoding, a byte sequence that happens to be valid UTF-8 is rare (under a
    quarter of the non-ASCII characters), so at least twice as many good characters as bad
    bytes tells. The rows with the bad bytes are then rejected, with a hint of the encoding to
    try.
    """
    text = codecs.getincrementaldecoder("utf-8")("surrogateescape").decode(head, final=False)
    bad = len(SURROGATES.findall(text))
    return len(_NON_ASCII.findall(text)) >= 2 * bad


def _latin_family(name: str) -> bool:
    """Tell whether a codec is a single-byte encoding for Latin-script languages."""
    non_latin = {
        "cp1251",
        "cp1253",
        "cp1255",
        "cp1256",
        "iso8859_5",
        "iso8859_6",
        "iso8859_7",
        "iso8859_8",
        "iso8859_11",
    }
    if name in non_latin:
        return False
    return name.startswith(("cp125", "iso8859_", "mac_", "cp85", "cp437", "cp775")) or name in (
        "latin_1",
        "hp_roman8",
    )


def _western_cp1252(head: bytes) -> bool:
    """Tell whether ``head`` reads as Western European text in cp1252.

    True when cp1252 decodes it and nearly all non-ASCII characters are Latin letters or the
    punctuation and symbols Western feeds use (€, quotes, dashes, °, ×...); text in cp1250 or
    another Latin-script code page shows stray symbols such as "³" or "¹" instead.
    """
    try:
        text = head.decode("cp1252")
    except UnicodeDecodeError:
        return False
    others = [c for c in text if ord(c) > 127]
    if not others:
        return True
    good = sum(
        1 for c in others if c in _WESTERN_SYMBOLS or unicodedata.name(c, "").startswith("LATIN")
    )
    return good >= 0.95 * len(others)


_WESTERN_SYMBOLS = set("€‚„…†‡‰‹›‘’“”•–—™«»°±×÷§©®¿¡ª£¥¢\xa0·")


def decode_head(head: bytes, encoding: str) -> str:
    """Decode a sample, dropping a character cut at its end; bad bytes become surrogates."""
    decoder = codecs.getincrementaldecoder(encoding)(HEAD_ERROR_HANDLER)
    return decoder.decode(head, final=False)


def detect_format(text: str) -> str:
    """Return "xml", "jsonl" or "delimited" from the start of the decoded feed."""
    stripped = text.lstrip("\ufeff \t\r\n")
    if stripped.startswith("<"):
        return "xml"
    if stripped.startswith("{"):
        first = stripped.split("\n", 1)[0].strip()
        try:
            if isinstance(json.loads(first), dict):
                return "jsonl"
        except (ValueError, RecursionError):  # RecursionError: nested too deep to decode
            pass
        # A first line cut by the sample, or a damaged first record: still JSON Lines.
        if "\n" not in stripped or first.endswith("}"):
            return "jsonl"
        # A first record broken across lines: the next lines tell.
        if _json_objects(stripped.split("\n", 1)[1]):
            return "jsonl"
    return "delimited"


def _json_objects(text: str, lines: int = 20) -> bool:
    """Tell whether most of the first non-empty ``lines`` of ``text`` are JSON objects."""
    found = [line.strip() for line in text.split("\n", lines * 2)[: lines * 2] if line.strip()]
    found = found[:lines]
    if not found:
        return False
    good = 0
    for line in found:
        try:
            good += isinstance(json.loads(line), dict)
        except (ValueError, RecursionError):
            pass
    return good * 2 > len(found)


def is_json_array(text: str) -> bool:
    """Tell whether the decoded start of a feed is a JSON array of objects ("[{...}, ...]")."""
    stripped = text.lstrip("\ufeff \t\r\n")
    return stripped.startswith("[") and stripped[1:].lstrip(" \t\r\n").startswith("{")


def suggest_other_encoding(encoding: str) -> str:
    """Name the encoding to try with --encoding when ``encoding`` failed on some bytes."""
    return "cp1252" if encoding.startswith("utf") else "utf-8"


def bad_bytes_detail(encoding: str) -> str:
    """The reject detail for a record with bytes that ``encoding`` cannot decode.

    In UTF-16 or UTF-32 such bytes are a damaged code unit, not a sign of another encoding.
    """
    if encoding.startswith(("utf-16", "utf-32")):
        return f"a code unit that is not valid {encoding}: the file is damaged at this record"
    return f"bytes that are not valid {encoding}; try --encoding {suggest_other_encoding(encoding)}"
