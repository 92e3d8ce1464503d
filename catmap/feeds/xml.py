"""Read XML feeds as a stream of records, one per repeating record element.

lxml's pull parser is fed the decompressed bytes a chunk at a time, with entity resolution, DTD
loading and network access off; a DOCTYPE that declares entities is refused before parsing
(entity expansion bombs, external entities). A parse error is raised only after every record
the parser closed before it (see :func:`_events`). Each record element is flattened into fields:

* child elements by local name; a prefixed child keeps its prefix ("ext:colour");
* nested children dotted ("shipping.price"); attributes as "@name" ("@id", "price.@currency");
* a child that repeats has its values joined with " | " (as JSON Lines lists are);
* text is raw, as lxml gives it (CDATA content as is, escaped HTML unescaped once by XML
  itself); empty and whitespace-only text is left out.

Each record element is cleared after use and its earlier siblings deleted, so memory stays
flat whatever the feed size.
"""

from __future__ import annotations

import codecs
import re
from collections import Counter
from collections.abc import Iterator
from pathlib import Path
from typing import IO, TYPE_CHECKING, Any

from catmap.errors import FeedFormatError, UnsafeFeedError
from catmap.feeds._compression import open_binary
from catmap.records import Reject, SourceRecord

if TYPE_CHECKING:
    from lxml import etree

SCAN_ELEMENTS = 2000
# Bytes handed to the parser at a time; its events are taken after each chunk, so the events
# waiting at any moment are those of one chunk.
CHUNK_SIZE = 64 * 1024
JOIN = " | "
_PARSER_OPTIONS: dict[str, Any] = {
    "resolve_entities": False,
    "no_network": True,
    "load_dtd": False,
    "huge_tree": False,
    "remove_comments": True,
    "remove_pis": True,
}
_DOCTYPE = re.compile(r"<!DOCTYPE\b", re.IGNORECASE)
_ENTITY = re.compile(r"<!ENTITY\b")
_COMMENT = re.compile(r"<!--.*?-->", re.DOTALL)
_ELEMENT_START = re.compile(r"<[A-Za-z_]")
_DECLARED_ENCODING = re.compile(r"""^\s*<\?xml[^>]*encoding\s*=\s*["']([A-Za-z0-9._-]+)["']""")
_NO_PARENT = object()
_UNDEFINED_ENTITY = re.compile(r"Entity '([^']+)' not defined")
_UNSAFE_HINT = "catmap never expands XML entities: ask the sender for a feed without a DTD"


def declared_encoding(text: str) -> str | None:
    """Return the encoding named in the XML declaration, if any."""
    match = _DECLARED_ENCODING.match(text.lstrip("\ufeff"))
    return match.group(1) if match else None


def check_prolog(text: str, path: str | Path, complete: bool) -> None:
    """Refuse a DOCTYPE that declares entities, before any parsing.

    Args:
        text: the decoded start of the feed.
        path: the feed, for the error.
        complete: ``text`` is the whole feed.

    Raises:
        UnsafeFeedError: entities are declared, or the DTD does not end within the sample.
    """
    blanked = _COMMENT.sub(lambda m: re.sub(r"[^\n]", " ", m.group(0)), text)
    doctype = _DOCTYPE.search(blanked)
    if doctype is None or _ELEMENT_START.search(blanked, 0, doctype.start()):
        return
    end = _doctype_end(blanked, doctype.end())
    entity = _ENTITY.search(blanked, doctype.end(), len(blanked) if end < 0 else end)
    if entity is not None:
        line = blanked.count("\n", 0, entity.start()) + 1
        raise UnsafeFeedError(
            "the feed declares XML entities, which catmap refuses to read",
            path=path,
            line=line,
            hint=_UNSAFE_HINT,
        )
    if end < 0 and not complete:
        line = blanked.count("\n", 0, doctype.start()) + 1
        raise UnsafeFeedError(
            "the feed's DTD is too large to check", path=path, line=line, hint=_UNSAFE_HINT
        )


def _doctype_end(text: str, start: int) -> int:
    """Index just after the DOCTYPE's closing '>', or -1 if it does not end in ``text``.

    Quoted literals are skipped, inside the internal subset and out: a default value such as
    ``"]>"`` in an ATTLIST declaration must not end the DTD early and hide what follows it.
    """
    index = start
    in_subset = False
    length = len(text)
    while index < length:
        char = text[index]
        if char in "\"'":
            close = text.find(char, index + 1)
            if close == -1:
                return -1
            index = close + 1
            continue
        if char == "[" and not in_subset:
            in_subset = True
        elif char == "]" and in_subset:
            in_subset = False
        elif char == ">" and not in_subset:
            return index + 1
        index += 1
    return -1


def _unknown_encoding(exc: LookupError, path: str | Path, encoding: str | None) -> FeedFormatError:
    return FeedFormatError(
        f"the XML reader does not know the encoding {encoding!r}: {exc}",
        path=path,
        hint="use --encoding utf-8, utf-16 or the encoding the file declares",
    )


def _qname(element: Any) -> str:
    tag = element.tag
    if tag[0] == "{":
        local = tag[tag.index("}") + 1 :]
        prefix = element.prefix
        return f"{prefix}:{local}" if prefix else local
    return str(tag)


def _attribute_name(name: str, element: Any) -> str:
    if name[0] != "{":
        return name
    uri, local = name[1:].split("}", 1)
    if uri == "http://www.w3.org/XML/1998/namespace":
        return f"xml:{local}"
    for prefix, known in element.nsmap.items():
        if known == uri and prefix:
            return f"{prefix}:{local}"
    return local


def _syntax_error(exc: etree.XMLSyntaxError, path: str | Path, read: int | None) -> FeedFormatError:
    """The error for a parse that stopped; ``read`` counts the records before it (None: not
    counted, while scanning)."""
    line, column = exc.position if exc.position else (exc.lineno, 0)
    message = exc.msg or str(exc)
    # The parser can end with a vague "no element found" at line 0 while libxml2's log holds
    # the error that stopped it, with its line and column: the log's last fatal entry (the log
    # belongs to the thread and may still hold errors of earlier parses).
    fatal = [entry for entry in exc.error_log if entry.level_name == "FATAL"]
    if fatal and (not line or message == "no element found"):
        entry = fatal[-1]
        line, column, message = entry.line, entry.column, entry.message
    undefined = _UNDEFINED_ENTITY.search(message)
    if undefined:
        hint = (
            f"&{undefined.group(1)}; is an HTML name XML does not define; ask the sender to "
            "write the character itself or as a numeric reference (&#233;)"
        )
    elif "text node too long" in message.lower() or "huge" in message.lower():
        record = "" if read is None else f" in record #{read + 1}"
        message = f"a text{record} is longer than the XML reader's limit (10 MB)"
        hint = (
            "ask the sender to shorten that text (a description of several megabytes is "
            "usually an export error); the records before it are read"
        )
    elif "encoding" in message.lower() or "utf-8" in message.lower():
        hint = (
            "the bytes do not match the feed's encoding; use --encoding cp1252 (or the right one)"
        )
    else:
        hint = (
            f"{read or 0} records before it were read; the file may be truncated or hand-edited, "
            "ask the sender for a complete, well-formed file"
        )
    return FeedFormatError(
        f"the XML is broken at column {column}: {message}", path=path, line=line, hint=hint
    )


# Python codec names libxml2 spells otherwise (it takes "UTF-16LE", not "utf-16-le"; the
# BOM-skipping utf-8-sig is plain UTF-8 to a parser that skips the BOM itself).
_LIBXML_NAMES = {
    "utf-16-le": "UTF-16LE",
    "utf-16-be": "UTF-16BE",
    "utf-32-le": "UTF-32LE",
    "utf-32-be": "UTF-32BE",
    "utf-8-sig": "UTF-8",
}


def lxml_encoding(encoding: str | None) -> str | None:
    """Return the name lxml knows for a Python codec name (None stays None)."""
    if encoding is None:
        return None
    try:
        name = codecs.lookup(encoding).name
    except LookupError:
        return encoding
    return _LIBXML_NAMES.get(name, encoding)


def _events(
    stream: IO[bytes],
    path: str | Path,
    encoding: str | None,
    events: tuple[str, ...],
    tag: tuple[str, ...] | None = None,
) -> Iterator[tuple[str, Any]]:
    """Parse ``stream`` with a pull parser, yielding its events a chunk at a time.

    A parse error is raised after every event the parser completed before it, those of the
    chunk that holds the error included (lxml's own ``iterparse`` drops these in some
    versions: the records closed in the last chunk before a late error were lost). The
    elements stay usable after the error: the parser frees no tree it handed out, and with
    entities never expanded it takes no part of the tree back.

    Args:
        stream: the decompressed bytes (not closed here).
        path: the feed, for the parser's messages.
        encoding: an encoding to impose (lxml's name), or None.
        events: the events to report ("start", "end", "start-ns").
        tag: report only elements with one of these tags.

    Raises:
        etree.XMLSyntaxError: the XML breaks (after the events before the break).
        LookupError: the parser does not know the encoding imposed.
    """
    from lxml import etree  # only an XML feed needs lxml

    parser = etree.XMLPullParser(
        events=events, tag=tag, base_url=str(path), encoding=encoding, **_PARSER_OPTIONS
    )
    pending = parser.read_events()
    error: etree.XMLSyntaxError | None = None
    try:
        while data := stream.read(CHUNK_SIZE):
            parser.feed(data)
            yield from pending
    except etree.XMLSyntaxError as exc:
        error = exc
    if error is not None:
        yield from pending  # what the parser completed before the error
        raise error
    # Every complete tag is parsed as it is fed, so closing finishes no record. When the bytes
    # end too soon, the parser ends the elements still open itself and reports those ends too
    # (some versions do): raising here before reading them keeps a cut record out.
    parser.close()
    yield from pending


def scan(
    path: str | Path, encoding: str | None
) -> tuple[Counter[str], dict[str, set[str]], dict[str, str], FeedFormatError | None]:
    """Walk the first :data:`SCAN_ELEMENTS` element ends of the feed.

    Returns:
        (element path -> count; path of each element that had children or attributes -> its
        own fields, the names of its attributes ("@id") and of its children that hold text;
        namespaces prefix -> URI; the parse error met, if any).
    """
    counts: Counter[str] = Counter()
    parents: dict[str, set[str]] = {}
    namespaces: dict[str, str] = {}
    stack: list[str] = []
    ends = 0
    error: FeedFormatError | None = None
    # Imported here: only an XML feed needs lxml, and its import is not free.
    from lxml import etree

    stream, _ = open_binary(path)
    try:
        events = _events(stream, path, lxml_encoding(encoding), ("start-ns", "start", "end"))
        for event, item in events:
            if event == "start-ns":
                prefix, uri = item
                namespaces.setdefault(prefix or "", uri)
            elif event == "start":
                if stack:
                    parents.setdefault(stack[-1], set())
                stack.append(stack[-1] + "/" + _qname(item) if stack else "/" + _qname(item))
                if item.keys():
                    parents.setdefault(stack[-1], set()).update("@" + k for k in item.keys())
            else:
                element_path = stack.pop()
                counts[element_path] += 1
                ends += 1
                if len(item):
                    item.clear(keep_tail=True)
                elif stack and item.text and not item.text.isspace():
                    parents[stack[-1]].add(element_path.rsplit("/", 1)[1])
                if ends >= SCAN_ELEMENTS:
                    break
    except etree.XMLSyntaxError as exc:
        error = _syntax_error(exc, path, None)
    except LookupError as exc:
        raise _unknown_encoding(exc, path, encoding) from exc
    finally:
        stream.close()
    return counts, parents, namespaces, error


# A grouping element (a department, a category) names itself with a few fields: a name, an
# id, a path. Common practice, no source.
GROUP_FIELDS = 3


def choose_record_path(counts: Counter[str], parents: dict[str, set[str]]) -> str | None:
    """Pick the record element: it repeats and has children or attributes.

    The shallowest such element wins (most repeats breaks ties), unless it looks like a group
    of records: no more than :data:`GROUP_FIELDS` fields of its own, and an element inside it
    repeats more often and has more fields (``<department name="..."><group name="...">
    <product>``: the products are the records, not the departments).

    Args:
        counts: element path -> count, as :func:`scan` gives them.
        parents: element path -> its own fields, as :func:`scan` gives them.
    """
    candidates = [p for p in counts if p in parents and counts[p] >= 2]
    if not candidates:
        candidates = [p for p in counts if p in parents and p.count("/") == 2]
    if not candidates:
        return None

    def first(paths: list[str]) -> str:
        return min(paths, key=lambda p: (p.count("/"), -counts[p], p))

    chosen = first(candidates)
    while len(parents[chosen]) <= GROUP_FIELDS:
        own = len(parents[chosen])
        inner = [
            p
            for p in candidates
            if p.startswith(chosen + "/") and counts[p] > counts[chosen] and len(parents[p]) > own
        ]
        if not inner:
            break
        chosen = first(inner)
    return chosen


def _steps_match(given: list[str], actual: list[str]) -> bool:
    if len(given) != len(actual):
        return False
    for want, have in zip(given, actual, strict=True):
        if want == have:
            continue
        if ":" not in want and have.split(":")[-1] == want:
            continue
        return False
    return True


def resolve_record_path(given: str, counts: Counter[str], path: str | Path) -> str:
    """Match a user's ``--record-path`` ("product", "products/product", "/catalog/...").

    Raises:
        FeedFormatError: no element path in the scanned part of the feed matches.
    """
    absolute = given.strip().startswith("/")
    steps = [s for s in given.strip().split("/") if s]
    matches = []
    for known in counts:
        parts = known.split("/")[1:]
        tail = parts if absolute else parts[-len(steps) :] if steps else []
        if steps and _steps_match(steps, tail):
            matches.append(known)
    if not matches:
        found = ", ".join(sorted(counts, key=lambda p: (p.count("/"), p))[:15])
        raise FeedFormatError(
            f"no element matches the record path {given!r}",
            path=path,
            hint=f"use --record-path with one of: {found}",
        )
    return min(matches, key=lambda p: (p.count("/"), -counts[p]))


# Attributes that give the order of repeated elements (a breadcrumb's levels). Common practice,
# no source; seven languages.
LEVEL_ATTRIBUTES = frozenset(
    "level niveau ebene nivel livello depth tiefe profondeur profundidad diepte profundidade "
    "order position rank".split()
)


def _flatten(
    element: Any, prefix: str, out: dict[str, str], levelled: list[str] | None = None
) -> None:
    # Runs for every record: lxml calls are the cost, so each is made once per child, cheap ones
    # first (keys() rather than the attrib proxy; attributes only read when there are some).
    if element.keys():
        for name, value in element.items():
            if value:
                attribute = _attribute_name(name, element)
                key = f"{prefix}@{attribute}"
                if key in out:
                    out[key] = out[key] + JOIN + value
                else:
                    out[key] = value
                    if levelled is not None and attribute.lower() in LEVEL_ATTRIBUTES:
                        levelled.append(prefix[:-1])
    for child in element:
        tag = child.tag
        if type(tag) is not str:
            continue  # an unexpanded entity reference: never resolved, so nothing to keep
        if tag[0] == "{":
            local = tag[tag.index("}") + 1 :]
            child_prefix = child.prefix
            tag = f"{child_prefix}:{local}" if child_prefix else local
        key = prefix + tag if prefix else tag
        if len(child) or child.keys():
            _flatten(child, key + ".", out, levelled)
        text = child.text
        if text and not text.isspace():
            out[key] = out[key] + JOIN + text if key in out else text


def order_by_level(fields: dict[str, str], keys: list[str]) -> None:
    """Put the values of repeated elements in the order of their level attribute, in place.

    ``<crumb level="2">Kettles</crumb><crumb level="1">Kitchen</crumb>`` flattens to
    "Kettles | Kitchen" with "crumb.@level" "2 | 1"; the path is "Kitchen | Kettles". Nothing
    changes unless every element has a whole-number level.

    Args:
        fields: a flattened record.
        keys: the element keys that carried a level attribute (e.g. "path.crumb").
    """
    for key in keys:
        text = fields.get(key)
        if text is None or JOIN not in text:
            continue
        for name in LEVEL_ATTRIBUTES:
            found = [k for k in (f"{key}.@{name}", f"{key}.@{name.capitalize()}") if k in fields]
            if found:
                break
        else:
            continue
        levels = fields[found[0]].split(JOIN)
        values = text.split(JOIN)
        if len(levels) != len(values) or not all(level.strip().isdigit() for level in levels):
            continue
        pairs = sorted(zip((int(level) for level in levels), values, strict=True))
        fields[key] = JOIN.join(value for _, value in pairs)
        fields[found[0]] = JOIN.join(str(level) for level, _ in pairs)


def iter_xml(
    path: str | Path, *, record_path: str, encoding: str | None
) -> Iterator[SourceRecord | Reject]:
    """Yield one :class:`SourceRecord` per record element.

    Args:
        path: the feed file (gzip / zip are opened transparently).
        record_path: the record element's path, as :func:`choose_record_path` gives it.
        encoding: an encoding to impose on lxml (None: the file's declaration or UTF-8).

    Raises:
        FeedFormatError: the XML breaks; raised after the good records before the break.
    """
    steps = record_path.split("/")[1:]
    local = steps[-1].split(":")[-1]
    name = steps[-1]
    read = 0
    from lxml import etree  # only an XML feed needs lxml

    stream, _ = open_binary(path)
    try:
        events = _events(stream, path, lxml_encoding(encoding), ("end",), ("{*}" + local, local))
        # Records share their parent: its path is checked once per parent, not per record.
        last_parent: Any = _NO_PARENT
        parent_matches = False
        parent_steps = steps[:-1]
        for _, element in events:
            parent = element.getparent()
            if parent is not last_parent:
                last_parent = parent
                chain = []
                while parent is not None:
                    chain.append(parent)
                    parent = parent.getparent()
                parent_matches = [_qname(e) for e in reversed(chain)] == parent_steps
                parent = last_parent
            if not parent_matches:
                continue
            tag = element.tag
            if (tag if tag[0] != "{" else _qname(element)) != name:
                continue
            fields: dict[str, str] = {}
            levelled: list[str] = []
            _flatten(element, "", fields, levelled)
            if levelled:
                order_by_level(fields, levelled)
            read += 1
            line = element.sourceline or 0
            yield SourceRecord(fields, line, f"<{name}> #{read} at line {line}")
            element.clear(keep_tail=True)
            if parent is not None:
                while element.getprevious() is not None:
                    del parent[0]
    except etree.XMLSyntaxError as exc:
        raise _syntax_error(exc, path, read) from exc
    except LookupError as exc:
        raise _unknown_encoding(exc, path, encoding) from exc
    finally:
        stream.close()
