"""Pure normalisers for raw feed values: text, price, currency, GTIN, availability, category path.

Every public function here takes any ``str`` and never raises (except :func:`gs1_check_digit`,
which is a helper for digit strings only), has no I/O, and returns the same result when applied
to its own output. They run once per field of every record, so plain values take fast paths:
HTML work only when the text has ``<`` or ``&``, NFKC only when the text is not already in
NFKC form, mojibake repair only when typical mojibake pairs ("Ã©", "â€™") appear, and text that
is already clean (printable, no markup, nothing to trim or collapse) comes back at once.
Functions whose inputs repeat a lot across a feed (currency, availability, category path, the
general price rules) are cached.
"""

from __future__ import annotations

import html
import re
import unicodedata
from decimal import Decimal, InvalidOperation
from functools import lru_cache

from catmap.feeds._currency import (
    DOLLAR_CURRENCIES,
    ISO_4217_CODES,
    KRONA_CURRENCIES,
    MINOR_UNITS,
    SYMBOLS,
    WORDS,
    YEN_CURRENCIES,
)

__all__ = [
    "clean_line",
    "clean_text",
    "gs1_check_digit",
    "is_colour_value",
    "normalize_availability",
    "normalize_currency",
    "normalize_gender_text",
    "normalize_gtin",
    "parse_price",
    "normalize_yes_no",
    "split_category_path",
]

# ---------------------------------------------------------------------------------------------
# Text

# Characters that carry no text: C0/C1 controls other than the whitespace ones (which the
# whitespace collapse handles), soft hyphen, zero-width space, direction marks and embeddings,
# word joiner and invisible operators, byte order mark, lone surrogates, U+FFFE/U+FFFF.
_INVISIBLE_RE = re.compile(
    "[\x00-\x08\x0e-\x1b\x7f-\x84\x86-\x9f\u00ad\u200b\u200e\u200f\u202a-\u202e"
    "\u2060-\u2064\ufeff\ufffe\uffff\ud800-\udfff]"
)
_ASCII_INVISIBLE_RE = re.compile("[\x00-\x08\x0e-\x1b\x7f]")

# A UTF-8 lead byte read as Latin-1/cp1252 (Â..ô) followed by a continuation byte read the same
# way: the signature of UTF-8 text decoded with the wrong single-byte codec.
_MOJIBAKE_RE = re.compile(
    "[\u00c2-\u00f4][\u0080-\u00bf\u0152\u0153\u0160\u0161\u0178\u017d\u017e\u0192\u02c6"
    "\u02dc\u2013\u2014\u2018\u2019\u201a\u201c\u201d\u201e\u2020\u2021\u2022\u2026\u2030"
    "\u2039\u203a\u20ac\u2122]"
)

_DROPPED_BLOCK_RE = re.compile(
    r"<(script|style|noscript|template)\b[^>]*>.*?(?:</\1\s*>|\Z)", re.IGNORECASE | re.DOTALL
)
_COMMENT_RE = re.compile(r"<!--.*?(?:-->|\Z)", re.DOTALL)
# One pattern for every tag; the replacement depends on the tag name (see _tag_replacement).
_TAG_RE = re.compile(r"<\s*/?\s*([A-Za-z][A-Za-z0-9:-]*)[^<>]*>|<[!?][^<>]*>")
_LINE_TAGS = frozenset(
    "br p div li ul ol tr table thead tbody h1 h2 h3 h4 h5 h6 dt dd dl section article header "
    "footer blockquote pre hr".split()
)
_CELL_TAGS = frozenset({"td", "th"})

# Passes of the full pipeline before giving up on reaching a fixed point. Real text settles in
# one or two passes; the cap only bounds pathological input built to unfold layer by layer.
_MAX_PASSES = 8


class _TagReplacements(dict[str | None, str]):
    """Tag name (as written, or None for ``<!...>`` / ``<?...>``) → what replaces the tag.

    Filled on first sight of each spelling; bounded, since tag names come from the feed.
    """

    def __missing__(self, name: str | None) -> str:
        lowered = (name or "").lower()
        value = "\n" if lowered in _LINE_TAGS else " " if lowered in _CELL_TAGS else ""
        if len(self) < 4096:
            self[name] = value
        return value


_TAG_REPLACEMENTS = _TagReplacements()


def _strip_html(text: str) -> str:
    if "<!--" in text:
        text = _COMMENT_RE.sub(" ", text)
    text = _DROPPED_BLOCK_RE.sub(" ", text)
    # split() interleaves the text between tags with each tag's name (the pattern's one group):
    # replacing the names through a dict does what a callback per tag did, at C speed.
    parts = _TAG_RE.split(text)
    if len(parts) == 1:
        return text
    parts[1::2] = map(_TAG_REPLACEMENTS.__getitem__, parts[1::2])
    return "".join(parts)


def _unescape(text: str) -> str:
    # The most common entity alone: a plain replace gives what html.unescape gives.
    if text.count("&") == text.count("&nbsp;"):
        return text.replace("&nbsp;", "\xa0")
    # Feeds often escape twice ("&amp;eacute;"); three rounds cover what is seen in practice.
    for _ in range(3):
        unescaped = html.unescape(text)
        if unescaped == text or "&" not in unescaped:
            return unescaped
        text = unescaped
    return text


def _collapse(text: str, one_line: bool) -> str:
    if one_line:
        return " ".join(text.split())
    lines = text.splitlines()
    if len(lines) == 1:
        return " ".join(lines[0].split())
    # Each line's whitespace runs made one space, empty lines dropped (map/filter: no Python
    # frame per line).
    return "\n".join(filter(None, map(" ".join, map(str.split, lines))))


def _one_pass(text: str, one_line: bool) -> str:
    """Run the whole pipeline once."""
    if "&" in text:
        text = _unescape(text)
    if "<" in text:
        text = _strip_html(text)
    if not text.isascii() and "\xa0" in text:
        # A no-break space (often from "&nbsp;") alone makes no mojibake pair, and NFKC turns it
        # into a plain space: when it is the only non-ASCII character, the ASCII path applies.
        replaced = text.replace("\xa0", " ")
        if replaced.isascii():
            text = replaced
    if text.isascii():
        # No mojibake pair and nothing NFKC changes in ASCII; only ASCII controls can be there.
        if _ASCII_INVISIBLE_RE.search(text):
            text = _ASCII_INVISIBLE_RE.sub("", text)
        return _collapse(text, one_line)
    if _MOJIBAKE_RE.search(text):
        # Imported on the first suspect text: most feeds never need it, and it is slow to load.
        import ftfy

        text = ftfy.fix_encoding(text)
    if not unicodedata.is_normalized("NFKC", text):
        text = unicodedata.normalize("NFKC", text)
    text = _INVISIBLE_RE.sub("", text)
    return _collapse(text, one_line)


def _settled(text: str) -> bool:
    """True when no step of the pipeline can change ``text`` any more (cheap checks only)."""
    if "<" in text or "&" in text:
        return False
    if text.isascii():
        return True
    return not _MOJIBAKE_RE.search(text) and unicodedata.is_normalized("NFKC", text)


def _clean(value: str, one_line: bool) -> str:
    if "<" not in value and "&" not in value:
        if value.isprintable():
            # Printable text holds no control or invisible character (every character of
            # _INVISIBLE_RE is a control, format or unassigned one) and no whitespace but " "
            # (every other space and line break is a separator or control character). So
            # cleaning printable ASCII only trims the ends and collapses runs of spaces, and
            # other printable text with nothing to trim or collapse, no mojibake pair and
            # nothing NFKC changes is a fixed point: one pass of the pipeline leaves it as it
            # is, and the loop below would return it at once. Most feed values are one or the
            # other.
            tidy = value[:1] != " " and value[-1:] != " " and "  " not in value
            if value.isascii():
                return value if tidy else " ".join(value.split())
            if tidy and not _MOJIBAKE_RE.search(value) and unicodedata.is_normalized("NFKC", value):
                return value
        elif value.isascii():
            if _ASCII_INVISIBLE_RE.search(value):
                value = _ASCII_INVISIBLE_RE.sub("", value)
            if one_line:
                return " ".join(value.split())
            return _collapse(value, one_line)
    text = value
    for _ in range(_MAX_PASSES):
        cleaned = _one_pass(text, one_line)
        # One pass is enough when the cheap checks prove no step can change the result.
        if cleaned == text or _settled(cleaned):
            return cleaned
        text = cleaned
    return text


def clean_text(value: str) -> str:
    """Turn a raw feed value into clean multi-line text.

    HTML tags are dropped (``<br>``, ``<p>``, ``<li>`` and other block tags become line breaks;
    ``<script>``/``<style>`` content goes), entities are unescaped (double-escaped ones too),
    mojibake is repaired, the text is put in Unicode NFKC form, invisible control characters are
    removed, runs of spaces become one space, empty lines go and the ends are trimmed.

    Args:
        value: any string.

    Returns:
        The cleaned text, lines separated by ``"\\n"``; ``clean_text(clean_text(x)) ==
        clean_text(x)``.

    Example:
        >>> clean_text("<p>Caf&amp;eacute; <b>cr&egrave;me</b></p><p>2nd</p>")
        'Café crème\\n2nd'
    """
    return _clean(value, one_line=False)


def clean_line(value: str) -> str:
    """Like :func:`clean_text` for one-line fields (titles, brands): line breaks become spaces.

    Args:
        value: any string.

    Returns:
        The cleaned single line.
    """
    return _clean(value, one_line=True)


# ---------------------------------------------------------------------------------------------
# Currency


def _strip_accents(text: str) -> str:
    if text.isascii():  # no ASCII character decomposes or combines
        return text
    decomposed = unicodedata.normalize("NFKD", text)
    return "".join(ch for ch in decomposed if not unicodedata.combining(ch))


@lru_cache(maxsize=4096)
def normalize_currency(value: str) -> str | None:
    """Return the ISO 4217 alphabetic code for a currency code, symbol or common word.

    A bare ``$`` is read as ``USD`` and a bare ``¥`` as ``JPY`` (both are shared by several
    currencies; :func:`parse_price` prefers the feed's default when it uses the same symbol).

    Args:
        value: e.g. ``"€"``, ``"eur"``, ``"EUR"``, ``"euros"``, ``"Schweizer Franken"``.

    Returns:
        The code, or None when the value names no currency catmap knows.
    """
    text = " ".join(unicodedata.normalize("NFKC", value).split()).casefold().strip(" .:")
    if not text:
        return None
    if len(text) == 3 and text.isascii() and text.upper() in ISO_4217_CODES:
        return text.upper()
    for key in (text, text + "."):
        if key in SYMBOLS:
            return SYMBOLS[key]
    if text in WORDS:
        return WORDS[text]
    plain = _strip_accents(text)
    return WORDS.get(plain)


# ---------------------------------------------------------------------------------------------
# Price

# Digit groups separated by one space, apostrophe, point or comma; an optional ",-" / ".–"
# ("12,-" means 12.00 in German and Swiss price tags).
_NUMBER_RE = re.compile(r"\d+(?:[ '\u2019.,]\d+)*(?:[.,][-\u2013\u2014](?!\d))?")
_SEPARATOR_RE = re.compile(r"[ '\u2019.,]")
_GAP_RE = re.compile(r"[\s:()\[\]/*]+")
_MAX_DIGITS = 18  # no retail price needs more; also keeps Decimal well inside its precision


def _number_parts(number: str, minor_units: int) -> tuple[str, str] | None:
    """Split a number written with separators into (integer digits, fraction digits).

    Rule: the last separator is the decimal mark when it is a point or comma that appears once
    and is followed by anything but exactly three digits (or follows a lone "0", as in "0.500",
    or the currency has three minor units); every other separator must group three digits.
    Spaces and apostrophes only group thousands.
    """
    number = number.rstrip("-\u2013\u2014")
    number = number.rstrip(".,")
    groups = _SEPARATOR_RE.split(number)
    separators = _SEPARATOR_RE.findall(number)
    if not separators:
        return number, ""
    last = separators[-1]

    def thousands(parts: list[str]) -> bool:
        return 1 <= len(parts[0]) <= 3 and all(len(part) == 3 for part in parts[1:])

    if len(set(separators)) == 1:
        if last in " '\u2019" or len(separators) > 1:
            return ("".join(groups), "") if thousands(groups) else None
        head, tail = groups
        if len(tail) == 3 and len(head) <= 3 and head.strip("0") and minor_units != 3:
            return head + tail, ""
        return head, tail
    if last not in ".," or separators.count(last) != 1:
        return None
    if len(set(separators[:-1])) != 1 or not thousands(groups[:-1]):
        return None
    return "".join(groups[:-1]), groups[-1]


def _currency_in(text: str, default: str | None) -> tuple[str | None, bool]:
    """Find a currency in the non-number part of a price; (code, found in text)."""
    text = text.strip(" \t:-\u2013()[]/*").casefold()
    if not text:
        return None, False
    tokens = [text] + [token for token in _GAP_RE.split(text) if token]
    for token in tokens:
        if token in ("$", "\uffe5", "¥") or token in ("kr", "kr."):
            if token == "$":
                return (default if default in DOLLAR_CURRENCIES else "USD"), True
            if token.startswith("kr"):
                return (default if default in KRONA_CURRENCIES else None), True
            return (default if default in YEN_CURRENCIES else "JPY"), True
        code = normalize_currency(token)
        if code is not None:
            return code, True
    return None, False


# The shapes most feeds use, read without the general rules (same results): "12", "12,5",
# "1234.56", "1,234.56", "1.234,56", with at most one "€"/"£" before or one "€"/"£"/ISO code
# after, one optional space between. Groups: prefix symbol, plain whole digits, whole digits
# with "," thousands (then a "." decimal mark), with "." thousands (then a "," decimal mark),
# fraction, suffix.
_FAST_PRICE_RE = re.compile(
    r"(?:([€£]) ?)?"
    r"(?:(\d{1,15})(?:[.,](\d{1,2}))?"
    r"|(\d{1,3}(?:,\d{3}){1,4})\.(\d{1,2})"
    r"|(\d{1,3}(?:\.\d{3}){1,4}),(\d{1,2}))"
    r"(?: ?([€£]|[A-Z]{3}))?"
)
_FAST_SYMBOLS = {"€": "EUR", "£": "GBP"}


def _fast_price(
    match: re.Match[str], default_currency: str | None
) -> tuple[Decimal | None, str | None] | None:
    (
        prefix,
        plain,
        plain_fraction,
        comma_whole,
        comma_fraction,
        point_whole,
        point_fraction,
        suffix,
    ) = match.groups()
    if prefix is not None:
        if suffix is not None:
            return None
        currency: str | None = _FAST_SYMBOLS[prefix]
    elif suffix is not None:
        currency = _FAST_SYMBOLS.get(suffix) or (suffix if suffix in ISO_4217_CODES else None)
        if currency is None:
            return None
    else:
        currency = normalize_currency(default_currency) if default_currency else None
    if plain is not None:
        whole, fraction = plain, plain_fraction or ""
    elif comma_whole is not None:
        whole, fraction = comma_whole.replace(",", ""), comma_fraction
    else:
        whole, fraction = point_whole.replace(".", ""), point_fraction
    places = MINOR_UNITS.get(currency or "", 2)
    if places > len(fraction):
        fraction = fraction.ljust(places, "0")
    return Decimal(f"{whole}.{fraction}" if fraction else whole), currency


def parse_price(
    value: str, default_currency: str | None = None
) -> tuple[Decimal | None, str | None]:
    """Read an amount and its currency from a price as feeds write it.

    Accepts a thousands separator (point, comma, space, apostrophe) and a decimal point or comma,
    decided from the last separator and the digit group lengths: "1.234,56 €", "€1,234.56",
    "EUR 12,50", "12.50 USD", "1 299,00", "1'299.00", "12", "12,5", "12,-", "¥1200". A single
    point or comma followed by exactly three digits groups thousands ("1.234" is 1234), except
    after a lone zero ("0.500") or for a currency with three minor units ("KWD 4.250"). A bare
    ``$`` is USD unless ``default_currency`` is another dollar currency, a bare ``¥`` JPY
    unless the default is CNY, a bare "kr" the default krona.

    Args:
        value: the raw price text.
        default_currency: currency (code, symbol or word) to use when the text names none.

    Returns:
        ``(amount, code)``: the amount quantized to the currency's minor units (more places are
        kept when the text has them; 2 when the currency is unknown), the ISO 4217 code or None.
        ``(None, None)`` when the text holds no single non-negative amount.
    """
    if len(value) <= 40:
        match = _FAST_PRICE_RE.fullmatch(value)
        if match is not None:
            fast = _fast_price(match, default_currency)
            if fast is not None:
                return fast
    return _parse_price(value, default_currency)


@lru_cache(maxsize=8192)
def _parse_price(
    value: str, default_currency: str | None = None
) -> tuple[Decimal | None, str | None]:
    """The general rules of :func:`parse_price` (cached: some feeds repeat a few prices)."""
    if len(value) > 100:
        return None, None
    text = value
    if "&" in text:
        text = html.unescape(text)
    if not unicodedata.is_normalized("NFKC", text):
        text = unicodedata.normalize("NFKC", text)
    text = " ".join(text.split())
    matches = list(_NUMBER_RE.finditer(text))
    if len(matches) != 1:
        return None, None
    match = matches[0]
    before, after = text[: match.start()], text[match.end() :]
    if before.rstrip().endswith(("-", "\u2212")) or after.lstrip().startswith("%"):
        return None, None
    default = normalize_currency(default_currency) if default_currency else None
    currency, found = _currency_in(before + " " + after, default)
    if not found:
        currency = default
    minor_units = MINOR_UNITS.get(currency or "", 2)
    parts = _number_parts(match.group(), minor_units)
    if parts is None:
        return None, None
    whole, fraction = parts
    if not whole or len(whole) + len(fraction) > _MAX_DIGITS:
        return None, None
    places = max(minor_units, len(fraction))
    try:
        amount = Decimal(f"{whole}.{fraction or '0'}").quantize(Decimal(1).scaleb(-places))
    except InvalidOperation:
        return None, None
    return amount, currency


# ---------------------------------------------------------------------------------------------
# GTIN


def gs1_check_digit(body: str) -> int:
    """Compute the GS1 mod-10 check digit of a GTIN body (every digit but the check digit).

    GS1 General Specifications: from the rightmost body digit leftwards, weights 3, 1, 3, 1...;
    the check digit brings the weighted sum up to the next multiple of ten.

    Args:
        body: ASCII digits only.

    Returns:
        The check digit, 0-9.

    Raises:
        ValueError: when ``body`` is not a non-empty string of ASCII digits.
    """
    if not body or not (body.isascii() and body.isdigit()):
        raise ValueError(f"a GTIN body is made of digits, got {body!r}")
    return _check_digit(body)


def _check_digit(body: str) -> int:
    # Sum the byte values of each weight's digits (C loops), then take away the "0" offsets.
    data = body.encode("ascii")
    tripled = data[-1::-2]
    single = data[-2::-2]
    total = 3 * (sum(tripled) - 48 * len(tripled)) + sum(single) - 48 * len(single)
    return (10 - total % 10) % 10


_GTIN_LENGTHS = frozenset({8, 12, 13, 14})
_GTIN_NOISE_RE = re.compile(r"[\s\-\u2010-\u2015]")


def normalize_gtin(value: str) -> tuple[str | None, str | None]:
    """Check a GTIN-8/12/13/14 and return it as a GTIN-14.

    Spaces and hyphens are ignored, and so is a trailing ".0" left by a spreadsheet.

    Args:
        value: the raw code.

    Returns:
        ``(gtin14, None)`` when valid (left zero-padded to 14 digits); otherwise ``(None,
        problem)`` with problem one of "gtin_not_digits", "gtin_bad_length",
        "gtin_invalid_check_digit".
    """
    if value.isdigit() and value.isascii():
        digits = value
    else:
        digits = _GTIN_NOISE_RE.sub("", value)
        if digits.endswith(".0"):
            digits = digits[:-2]
        if not (digits.isascii() and digits.isdigit()):
            return None, ("gtin_not_digits" if digits else "gtin_bad_length")
    if len(digits) not in _GTIN_LENGTHS:
        return None, "gtin_bad_length"
    # The check digit is right when the whole code, check digit included and weighted 1 (then
    # 3, 1, 3... leftwards), sums to a multiple of ten: the same rule as gs1_check_digit, in
    # one pass over the bytes (C loops) and without computing the expected digit.
    data = digits.encode("ascii")
    single = data[-1::-2]
    tripled = data[-2::-2]
    if (sum(single) - 48 * len(single) + 3 * (sum(tripled) - 48 * len(tripled))) % 10:
        return None, "gtin_invalid_check_digit"
    return digits.zfill(14), None


# ---------------------------------------------------------------------------------------------
# Availability

# Whole values (after lower-casing, removing accents, "_"/"-" as spaces). Common practice, no
# source: feeds export booleans and stock counts as availability.
_AVAILABILITY_EXACT: dict[str, str] = {
    **dict.fromkeys(
        [
            "true", "yes", "y", "oui", "ja", "si", "available", "disponible", "instock",
            "in stock", "en stock", "auf lager", "lieferbar", "sofort lieferbar", "verfugbar",
            "vorratig", "lagernd", "en existencia", "hay stock", "con stock",
            "disponibile", "in magazzino", "op voorraad", "leverbaar", "beschikbaar",
            "disponivel", "em stock", "em estoque", "sim",
        ],
        "available",
    ),
    **dict.fromkeys(
        [
            "false", "no", "n", "non", "nein", "sold out", "soldout", "out of stock",
            "outofstock", "unavailable", "indisponible", "epuise", "ausverkauft", "agotado",
            "agotada", "vergriffen", "esaurito", "esaurita", "non disponibile", "nee",
            "uitverkocht", "niet op voorraad", "niet leverbaar", "nao", "esgotado", "esgotada",
            "indisponivel", "sem stock", "sem estoque",
        ],
        "sold_out",
    ),
    **dict.fromkeys(
        [
            "preorder", "pre order", "precommande", "pre commande", "vorbestellbar",
            "vorbestellung", "preventa", "reserva", "coming soon", "backorder", "back order",
            "demnachst", "proximamente", "in arrivo", "preordine", "prossimamente",
            "binnenkort", "voorverkoop", "pre order", "em breve", "pre venda", "brevemente",
        ],
        "coming_soon",
    ),
    **dict.fromkeys(
        [
            "limited", "low stock", "few left", "limitee", "limitado", "begrenzt", "limitato",
            "ultimi pezzi", "beperkt", "beperkte voorraad", "ultimas pecas", "poucas unidades",
        ],
        "limited",
    ),
}

# Searched in this order: announcements first ("available from", "disponible prochainement"),
# then scarcity ("only 2 left in stock"), then negations ("not available", "indisponible"),
# then plain availability.
_AVAILABILITY_PATTERNS: tuple[tuple[str, re.Pattern[str]], ...] = (
    (
        "coming_soon",
        re.compile(
            r"pre ?order|pre ?commande|precommander|vorbestell|pre ?venta|\breserva|"
            r"coming soon|bientot|prochainement|demnachst|in kurze|proximamente|"
            r"back ?order|reapprovisionnement|available (?:from|on)|lieferbar ab|"
            r"disponible (?:a partir|des le|desde|el)|sur commande|auf bestellung|bajo pedido|"
            r"in arrivo|disponibile (?:dal|da)|su ordinazione|binnenkort|vanaf \d|"
            r"em breve|disponivel (?:a partir|em)|sob encomenda"
        ),
    ),
    (
        "limited",
        re.compile(
            r"limited|limitee?s?\b|limitad[oa]|few left|only \d+ left|low stock|"
            r"last (?:items|units|pieces)|derni(?:er|ere)s? (?:articles|exemplaires|pieces)|"
            r"plus que \d+|quelques|wenige|nur noch|geringer bestand|begrenzt|"
            r"ultimas unidades|pocas unidades|quedan \d+|almost gone|selling fast|"
            r"ultimi pezzi|pochi pezzi|limitat[oa]|beperkt|nog \d+ (?:stuks|op voorraad)|"
            r"ultimas pecas|poucas unidades|restam \d+"
        ),
    ),
    (
        "sold_out",
        re.compile(
            r"out of stock|sold ?out|not (?:available|in stock)|unavailable|no stock|"
            r"discontinued|rupture|epuise|indisponible|(?:non|pas|plus|n'est pas) disponible|"
            r"pas en stock|hors stock|ausverkauft|vergriffen|nicht (?:mehr )?(?:auf lager|"
            r"verfugbar|lieferbar|vorratig|erhaltlich)|agotad[oa]|sin (?:stock|existencias)|"
            r"no disponible|fuera de stock|no hay stock|esaurit[oa]|non disponibile|"
            r"uitverkocht|niet (?:op voorraad|leverbaar|beschikbaar)|esgotad[oa]|"
            r"indisponivel|sem (?:stock|estoque)|nao disponivel"
        ),
    ),
    (
        "available",
        re.compile(
            r"in ?stock|en stock|auf lager|lagernd|vorratig|verfugbar|lieferbar|available|"
            r"disponible|en existencia|hay stock|con stock|ships? (?:in|within)|"
            r"dispatch(?:ed)? (?:in|within)|expedie sous|expedition sous|envio (?:en |em )?\d|"
            r"versand in|spedizione in|spedito in|verzending binnen|verzonden binnen|"
            r"versandbereit|sofort|disponibile|in magazzino|op voorraad|leverbaar|"
            r"beschikbaar|disponivel|em stock|em estoque"
        ),
    ),
)
_COUNT_RE = re.compile(
    r"(?:(?:stock|lager|bestand|qty|quantity|quantite|cantidad|existencias|quantita|"
    r"voorraad|aantal|quantidade)\s*:?\s*)?"
    r"(\d+)(?:\.0+)?(?:\s*(?:pcs|pieces|stuck|unidades|units|items))?"
)


@lru_cache(maxsize=4096)
def normalize_availability(value: str) -> str:
    """Map free availability text to catmap's own values.

    Words in English, French, German, Spanish, Italian, Dutch and Portuguese, and yes / no
    in those languages, are read.

    Stock counts count too: "0" is sold out, a positive whole number is available.

    Args:
        value: the raw text, e.g. "auf Lager", "rupture de stock", "pre-order", "3", "yes".

    Returns:
        One of ``catmap.records.AVAILABILITY_VALUES``; "unknown" for anything not recognised.
    """
    text = _strip_accents(clean_line(value).casefold())
    if text.startswith(("-", "\u2212")):  # a negative stock count says nothing reliable
        return "unknown"
    text = " ".join(text.replace("_", " ").replace("-", " ").strip(" .!:").split())
    if not text:
        return "unknown"
    exact = _AVAILABILITY_EXACT.get(text)
    if exact is not None:
        return exact
    count = _COUNT_RE.fullmatch(text)
    if count is not None:
        return "sold_out" if int(count.group(1)) == 0 else "available"
    for result, pattern in _AVAILABILITY_PATTERNS:
        if pattern.search(text):
            return result
    return "unknown"


# ---------------------------------------------------------------------------------------------
# Category path

_STRONG_SEPARATOR_RE = re.compile(r"[>|\u00bb\u203a\u2192\u21d2\u27a4\u25b8]")
_SLASH_RE = re.compile(r"(?<!\d)/|/(?!\d)")  # a slash between two digits is a fraction ("1/2")
_DASH_RE = re.compile(r" [-\u2013\u2014] ")


@lru_cache(maxsize=8192)
def split_category_path(value: str) -> tuple[str, ...]:
    """Split a retailer's category path into cleaned levels.

    Separators: ``>``, ``|``, ``»``, ``›``, ``→``. When none of these appears, ``/`` separates
    levels unless it sits between two digits ("1/2 sleeve") or the value is a URL; when neither
    appears, " - " separates levels (never a bare hyphen: "T-shirts" stays whole).

    Args:
        value: e.g. "Women > Shoes > Boots", "Damen/Schuhe", "Hommes - Chemises".

    Returns:
        The non-empty levels, each cleaned with :func:`clean_line`; ``()`` for an empty value.
    """
    # Split before cleaning where a strong separator is written: the repair of mis-decoded
    # text must not reach across one ("á† | 0" read whole is "ᆠ| 0": the space taken for a
    # lost no-break space). Cleaning can make separators too (&gt;, ＞, mis-decoded ›): each
    # cleaned part is split again. Text with markup is cleaned first: a tag holds a ">".
    raw_parts = _STRONG_SEPARATOR_RE.split(value) if "<" not in value else [value]
    if len(raw_parts) > 1:
        parts = [
            level
            for part in raw_parts
            for level in _STRONG_SEPARATOR_RE.split(clean_line(part.strip()))
        ]
    else:
        text = clean_line(value)
        if not text:
            return ()
        parts = _STRONG_SEPARATOR_RE.split(text)
    if len(parts) > 1:
        levels = tuple(filter(None, map(clean_line, parts)))  # the non-empty cleaned levels
        if len(levels) != 1 or _STRONG_SEPARATOR_RE.search(levels[0]):
            return levels
        # One level left ("Hommes - Chemises >", "/»"): it is read as a path without strong
        # separators, as it would be on its own, so that the result reads back the same.
        text = levels[0]
    if "/" in text and "://" not in text and not text.casefold().startswith("www."):
        parts = _SLASH_RE.split(text)
        if len(parts) == 1:
            parts = _DASH_RE.split(text)
    else:
        parts = _DASH_RE.split(text)
    return tuple(filter(None, map(clean_line, parts)))


# ---------------------------------------------------------------------------------------------
# Value words: who a product is for, colours, yes / no

# Common practice, no source: how feeds in English, French, German, Spanish, Italian, Dutch and
# Portuguese write who a product is for (accents removed, lower case).
_GENDER_WORDS: dict[str, str] = {
    **dict.fromkeys(
        "women woman womens ladies lady female females f w femme femmes dame dames damen frau "
        "frauen weiblich mujer mujeres senora senoras donna donne vrouw vrouwen mulher "
        "mulheres senhora senhoras feminino feminina femenino femenina femminile".split(),
        "female",
    ),
    **dict.fromkeys(
        "men man mens male males gents gentlemen m h homme hommes herren mann manner mannlich "
        "hombre hombres caballero caballeros uomo uomini heren mannen homem homens masculino "
        "maschile".split(),
        "male",
    ),
    **dict.fromkeys(
        "unisex mixte unisexe unissex unissexo unisexo uni u all everyone".split(), "unisex"
    ),
    **dict.fromkeys(
        "girls girl fille filles madchen nina ninas bambina bambine ragazza ragazze meisje "
        "meisjes menina meninas g".split(),
        "girls",
    ),
    **dict.fromkeys(
        "boys boy garcon garcons jungen junge nino ninos bambino ragazzo ragazzi jongen jongens "
        "menino meninos b".split(),
        "boys",
    ),
    **dict.fromkeys(
        "kids kid children child enfant enfants kinder kind infantil bambini kinderen "
        "crianca criancas junior juniors k".split(),
        "kids",
    ),
    **dict.fromkeys(
        "baby babies infant infants bebe bebes neonato neonata neonati bambinos newborn "
        "newborns".split(),
        "baby",
    ),
}
GENDER_VALUES = ("female", "male", "unisex", "girls", "boys", "kids", "baby", "unknown")
_WORD_SPLIT_RE = re.compile(r"[\s/,;&+|()\-]+|\band\b|\bet\b|\bund\b|\by\b|\be\b|\ben\b")


def _plain(value: str) -> str:
    text = _strip_accents(clean_line(value).casefold().replace("ß", "ss"))
    return text.replace("'s", "").replace("’s", "").strip(" .!:-_")


@lru_cache(maxsize=4096)
def normalize_gender_text(value: str) -> str:
    """Read who a product is for from a feed's gender / audience value, in seven languages.

    Args:
        value: e.g. "Damen", "Uomo", "women's", "Heren / Dames", "menina".

    Returns:
        One of :data:`GENDER_VALUES`: a value naming both women and men is "unisex";
        "unknown" when no word is recognised or two ages are named.
    """
    words = [word for word in _WORD_SPLIT_RE.split(_plain(value)) if word]
    found: set[str] = set()
    for word in words:
        known = _GENDER_WORDS.get(word)
        if known is None:
            return "unknown"
        found.add(known)
    if not found:
        return "unknown"
    if found <= {"female", "male", "unisex"}:
        return found.pop() if len(found) == 1 else "unisex"
    if len(found) == 1:
        return found.pop()
    if "baby" in found and found <= {"baby", "girls", "boys"}:
        return "baby"  # "Baby Girl", "Bébé garçon": the age; who it is for is read later
    if found <= {"girls", "boys", "kids"}:
        # "Kids - Girls" ("K-G"): the girls; girls and boys together: kids.
        named = found - {"kids"}
        return named.pop() if len(named) == 1 else "kids"
    return "unknown"


# Colour words in the same seven languages (accents removed), with the shade words that may
# come with them ("dark", "hell", "scuro"...). Common practice, no source.
_COLOUR_WORDS = frozenset(
    "black white grey gray red blue green yellow orange pink purple violet brown beige navy "
    "cream ivory gold silver khaki olive turquoise burgundy camel taupe multicolour multicolor "
    "multi noir noire blanc blanche gris rouge bleu bleue vert verte jaune rose marron brun "
    "kaki bordeaux argent or ecru multicolore schwarz weiss grau rot blau grun gelb rosa lila "
    "braun silber bunt negro negra blanco blanca rojo roja azul verde amarillo morado marron "
    "dorado plateado nero nera bianco bianca grigio rosso rossa blu azzurro giallo viola "
    "marrone arancione oro argento zwart wit grijs rood blauw groen geel paars bruin oranje "
    "zilver goud preto preta branco branca cinza vermelho vermelha amarelo roxo castanho "
    "laranja dourado prateado marinho".split()
)
_SHADE_WORDS = frozenset(
    "dark light pale deep bright navy royal sky baby clair fonce claire foncee marine dunkel "
    "hell oscuro oscura claro clara scuro scura chiaro chiara donker licht escuro escura "
    "marino mat matte".split()
)

# Shades written as one word with the colour in German and Dutch ("Dunkelblau", "donkerblauw").
_COMPOUND_SHADES = ("dunkel", "hell", "donker", "licht")


_CONNECTORS = frozenset({"and", "et", "und", "y", "e"})


@lru_cache(maxsize=4096)
def is_colour_value(value: str) -> bool:
    """Tell whether a colour field names colours catmap knows (seven languages, with shades).

    Compound names count ("Dunkelblau", "navy/white", "bleu roi", "blanc cassé"): the colour
    words and phrases the colour family reader knows (:mod:`catmap.feeds.colour`) are taken
    out first; every word left must be a colour or a shade, and one at least a colour; a
    German or Dutch compound is read as shade + colour. So a field the colour family reader
    reads is not flagged, and a title ("Blue cotton shirt") is not a colour value.

    Args:
        value: the raw colour text.

    Returns:
        True when recognised.
    """
    # Imported here: the lexicon is built on import, and many feeds have no colour column.
    from catmap._text import fold
    from catmap.feeds.colour import colour_spans

    folded = fold(value)
    spans = colour_spans(folded)
    seen_colour = bool(spans)
    for start, end in spans:
        folded = folded[:start] + " " * (end - start) + folded[end:]
    words = [w for w in folded.split() if w not in _CONNECTORS]
    if not words:
        return seen_colour
    for word in words:
        if word in _COLOUR_WORDS:
            seen_colour = True
            continue
        if word in _SHADE_WORDS:
            continue
        compound = next(
            (word[len(shade) :] for shade in _COMPOUND_SHADES if word.startswith(shade)), ""
        )
        if compound in _COLOUR_WORDS:
            seen_colour = True
            continue
        return False
    return seen_colour


_YES_WORDS = frozenset("yes y true 1 oui ja si sim vrai wahr verdadero vero waar x".split())
_NO_WORDS = frozenset("no n false 0 non nein nee nao faux falsch falso onwaar".split())


@lru_cache(maxsize=1024)
def normalize_yes_no(value: str) -> bool | None:
    """Read a yes / no value in seven languages ("ja", "sì", "não", "true", "1"...).

    Args:
        value: the raw text.

    Returns:
        True, False, or None when it is neither.
    """
    text = _plain(value)
    if text in _YES_WORDS:
        return True
    if text in _NO_WORDS:
        return False
    return None
