"""Turn a feed's source records into products, with the row accounting that proves none vanished.

:func:`to_product` applies a feed profile (which source column feeds which field) and the
normalisers of :mod:`catmap.feeds.normalize` to one record. :func:`iter_products` streams a
whole feed, rejects later records whose product id was already seen, and keeps an
:class:`Accounting` up to date so that ``read == kept + rejected`` holds at every moment.
:func:`normalize_feed_to` writes the products, the rejects and the accounting to a folder and
survives a fatal feed error half-way: what was read before it is written and counted, then the
error is raised again.

Speed: the profile is compiled once into a :class:`ProductBuilder` (the column of each field and
the function that cleans it), so that per record only ``dict.get`` and the normalisers run.

Memory: everything streams. The one structure that grows with the feed is :class:`IdIndex`, the
index of product ids already seen, used to find duplicates. Records are handled in batches of
:data:`BATCH_SIZE` (read, normalised, then yielded in order); each distinct id costs an 8-byte
BLAKE2b digest (int64) plus its first line (uint32, or int64 once a line passes 2³²−1), i.e. 12
bytes, kept in a few sorted NumPy runs merged LSM-style (the latest :data:`RECENT_IDS` ids wait
in a dict, ~1.6 MB, then form a run; runs of similar size are merged, so there are O(log n)
runs and a batch is checked with one ``np.searchsorted`` per run). A million products take
~12 MB (a dict of digest → line took ~116 MB), with a peak about twice that while the two
largest runs are merged (the merged arrays exist beside the old ones, plus one position per
merged key). A 200-million-product feed takes ~2.4 GB, and ~5 GB at the peak of a merge:
run it where that much memory is free, or split it. Two
different ids share a 64-bit digest with probability about n² / 2⁶⁵ (~3·10⁻⁸ for a million
ids, ~10⁻³ for 200 million), which would reject the second one as a duplicate; digests are
deterministic, so a run gives the same result every time.
"""

from __future__ import annotations

import dataclasses
import json
import operator
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from decimal import Decimal
from functools import lru_cache
from hashlib import blake2b
from itertools import islice, repeat
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from catmap._atomic import write_text_atomic
from catmap.errors import FeedEncodingError, FeedFormatError, ProfileError, UnsafeFeedError
from catmap.feeds.normalize import (
    clean_line,
    clean_text,
    is_colour_value,
    normalize_availability,
    normalize_currency,
    normalize_gender_text,
    normalize_gtin,
    parse_price,
    split_category_path,
)
from catmap.feeds.writers import (
    EXCERPT_LENGTH,
    EXTENSIONS,
    open_product_writer,
    open_reject_writer,
)
from catmap.records import Product, Reject, SourceRecord

if TYPE_CHECKING:
    from catmap.feeds.fieldmap import FeedProfile
    from catmap.feeds.read import FeedInfo

REQUIRED = ("product_id", "title")

# Distinct raw prices a ProductBuilder remembers (see ProductBuilder._prices).
PRICE_CACHE_SIZE = 8192

# Reject reasons of this stage (the readers add "ragged_row", "repeated_header", "bad_encoding",
# "unparseable_record").
MISSING_ID = "missing_id"
MISSING_TITLE = "missing_title"
DUPLICATE_ID = "duplicate_id"

# Flags a product can carry (normalisation noticed something but kept the product).
FLAG_GTIN_INVALID = "gtin_invalid"
FLAG_PRICE_UNPARSED = "price_unparsed"
FLAG_CURRENCY_UNKNOWN = "currency_unknown"
FLAG_CURRENCY_MISSING = "currency_missing"
FLAG_CURRENCY_CONFLICT = "currency_conflict"
FLAG_AVAILABILITY_UNRECOGNISED = "availability_unrecognised"
FLAG_GENDER_UNRECOGNISED = "gender_unrecognised"
FLAG_COLOUR_UNRECOGNISED = "colour_unrecognised"


# What a flag means and what the feed's owner can do about it (``{profile}``: where the profile
# is). Each line follows "<flag>: <count> ".
FLAG_ADVICE: dict[str, str] = {
    FLAG_CURRENCY_MISSING: "prices name no currency and are kept without one: set "
    'default_currency {profile} (an ISO 4217 code such as "EUR") or map a currency column, '
    "then read the feed again",
    FLAG_CURRENCY_UNKNOWN: "currency values are no currency catmap knows (an ISO 4217 code, "
    "symbol or name): those prices are kept without a currency; map another column or set "
    "default_currency {profile}",
    FLAG_CURRENCY_CONFLICT: "prices name another currency than the currency column: the "
    "column's currency was kept; check which of the two is right",
    FLAG_PRICE_UNPARSED: "prices could not be read as an amount and are kept without a price",
    FLAG_GTIN_INVALID: "GTINs fail their GS1 check digit or length and are kept out of the "
    "gtin field (the feed's text stays in gtin_raw)",
    FLAG_AVAILABILITY_UNRECOGNISED: "availability values are none catmap knows: kept as unknown",
    FLAG_GENDER_UNRECOGNISED: "values of the gender column are none catmap knows (kept as "
    "written)",
    FLAG_COLOUR_UNRECOGNISED: "colour values name no colour catmap knows (kept as written)",
}

# The accounting lists at most this many duplicated ids, each with at most this many later lines;
# the full count is in ``by_reason["duplicate_id"]`` and every duplicate is in the rejects file.
MAX_DUPLICATE_IDS_LISTED = 1000
MAX_LINES_PER_DUPLICATE_ID = 20

# The fatal errors a reader may raise after yielding good records.
FATAL_FEED_ERRORS = (FeedFormatError, FeedEncodingError, UnsafeFeedError)


@dataclass
class Accounting:
    """What happened to every record of a feed: ``read == kept + rejected`` at all times.

    Attributes:
        read: records (and reader-level rejects) the reader gave.
        kept: products made.
        rejected: rejects, whatever stage made them.
        by_reason: reject reason → count.
        by_flag: flag → count of kept products carrying it (a product may carry several).
        duplicate_ids: product id → the later lines where it appeared again (bounded: at most
            :data:`MAX_DUPLICATE_IDS_LISTED` ids and :data:`MAX_LINES_PER_DUPLICATE_ID` lines each).
        stopped_early: the message of a fatal feed error after which reading stopped, else None.
    """

    read: int = 0
    kept: int = 0
    rejected: int = 0
    by_reason: dict[str, int] = field(default_factory=dict)
    by_flag: dict[str, int] = field(default_factory=dict)
    duplicate_ids: dict[str, list[int]] = field(default_factory=dict)
    stopped_early: str | None = None

    @property
    def balanced(self) -> bool:
        """True when ``read == kept + rejected``."""
        return self.read == self.kept + self.rejected

    def count_reject(self, reason: str) -> None:
        """Count one reject of ``reason`` (``read`` is counted by the caller)."""
        self.rejected += 1
        self.by_reason[reason] = self.by_reason.get(reason, 0) + 1

    def count_flags(self, flags: tuple[str, ...]) -> None:
        """Count the flags of one kept product."""
        by_flag = self.by_flag
        for flag in flags:
            by_flag[flag] = by_flag.get(flag, 0) + 1

    def to_dict(self) -> dict[str, Any]:
        """Return the accounting as JSON-ready values (reasons most frequent first)."""
        return {
            "read": self.read,
            "kept": self.kept,
            "rejected": self.rejected,
            "by_reason": dict(sorted(self.by_reason.items(), key=lambda item: (-item[1], item[0]))),
            "by_flag": dict(sorted(self.by_flag.items(), key=lambda item: (-item[1], item[0]))),
            "duplicate_ids": {key: list(lines) for key, lines in self.duplicate_ids.items()},
            "stopped_early": self.stopped_early,
        }


def flag_advice(by_flag: Mapping[str, int], profile: str | None = None) -> list[str]:
    """Say what each flag of kept products means and what to do about it, one line per flag.

    Args:
        by_flag: flag → count of kept products carrying it (``Accounting.by_flag``).
        profile: the feed's profile file, named where editing it is the remedy.

    Returns:
        A line for each flag of :data:`FLAG_ADVICE` present, the most frequent first.
    """
    where = f"in {profile}" if profile else "in the feed's profile"
    lines = []
    for flag, count in sorted(by_flag.items(), key=lambda item: (-item[1], item[0])):
        advice = FLAG_ADVICE.get(flag)
        if advice and count:
            lines.append(f"{flag}: {count:,} " + advice.format(profile=where))
    return lines


def record_excerpt(record: SourceRecord) -> str:
    """Return the start of a raw record as ``column=value; ...``, at most 300 characters."""
    text = "; ".join(f"{key}={value}" for key, value in record.fields.items())
    return text[:EXCERPT_LENGTH]


# Brands, colours, sizes and gender words repeat across a feed: cleaning each distinct value once
# saves a normaliser call per field per record. Bounded, so memory stays flat.
_clean_repeated_line = lru_cache(maxsize=16_384)(clean_line)


# Products are made without the dataclass __init__ (which sets each of Product's fields through
# a Python-level object.__setattr__ call): a new instance gets every field set from one list in
# a C loop, each value stored by its field's slot descriptor (what object.__setattr__ ends up
# calling, without looking the name up).
_PRODUCT_FIELDS = dataclasses.fields(Product)
_PRODUCT_NAMES = tuple(f.name for f in _PRODUCT_FIELDS)
_PRODUCT_INDEX = {name: index for index, name in enumerate(_PRODUCT_NAMES)}
_PRODUCT_DEFAULTS = [
    None if f.default is dataclasses.MISSING else f.default for f in _PRODUCT_FIELDS
]
# ``extra`` is the one field with a default factory: ProductBuilder gives every product its own
# dict. A new such field would need the same, so it stops the import instead of being shared.
if [f.name for f in _PRODUCT_FIELDS if f.default_factory is not dataclasses.MISSING] != ["extra"]:
    raise RuntimeError("ProductBuilder sets only 'extra' from a default factory")
_new_object = object.__new__
_SLOT_SETTERS = tuple(getattr(Product, name).__set__ for name in _PRODUCT_NAMES)


def _make_product(values: list[Any]) -> Product:
    product: Product = _new_object(Product)
    deque(map(operator.call, _SLOT_SETTERS, repeat(product, len(values)), values), 0)
    return product


# The fields cleaned by one function of their raw text. IDs and URLs are only stripped: an id
# must stay exactly as the retailer knows it, and a URL is not prose.
_CLEANERS: dict[str, Callable[[str], Any]] = {
    "description": clean_text,
    "brand": _clean_repeated_line,
    "gender_text": _clean_repeated_line,
    "colour": _clean_repeated_line,
    "size": _clean_repeated_line,
    "url": str.strip,
    "image_url": str.strip,
    "availability": normalize_availability,
    "category_path": split_category_path,
}


class ProductBuilder:
    """A feed profile compiled for speed: call it with a source record to get a Product or Reject.

    Args:
        profile: the feed profile; it must map ``product_id`` and ``title``.

    Raises:
        ProfileError: when a required field has no column.
    """

    def __init__(self, profile: FeedProfile) -> None:
        columns: dict[str, str] = dict(profile.columns)
        missing = [name for name in REQUIRED if not columns.get(name)]
        if missing:
            raise ProfileError(
                f"the profile maps no column to the required field '{missing[0]}'",
                field=missing[0],
                hint="add a line for it under [columns] in the profile",
            )
        self.columns = columns
        self.default_currency: str | None = profile.default_currency
        self.id_column = columns["product_id"]
        self.title_column = columns["title"]
        self.mapped_columns = frozenset(columns.values())
        # (Product field index, source column, cleaner) for the mapped fields of _CLEANERS.
        self.text_steps: tuple[tuple[int, str, Callable[[str], Any]], ...] = tuple(
            (_PRODUCT_INDEX[name], columns[name], cleaner)
            for name, cleaner in _CLEANERS.items()
            if name in columns
        )
        self.category_column = columns.get("category_path")
        self.price_column = columns.get("price")
        self.currency_column = columns.get("currency")
        self.gtin_column = columns.get("gtin")
        # Value words that are flagged when not recognised: (source column, flag).
        self.word_checks: tuple[tuple[str, str], ...] = tuple(
            (columns[name], flag)
            for name, flag in (
                ("availability", FLAG_AVAILABILITY_UNRECOGNISED),
                ("gender_text", FLAG_GENDER_UNRECOGNISED),
                ("colour", FLAG_COLOUR_UNRECOGNISED),
            )
            if name in columns
        )
        # The price step runs when either column is mapped.
        self.has_price = self.price_column is not None or self.currency_column is not None
        # Raw price text → parse_price's answer for this profile's default currency. Feeds repeat
        # prices, and a dict hit costs a fraction of a parse; emptied when full (bounded memory;
        # a plain dict because an LRU's bookkeeping costs more than it saves on feeds whose
        # prices are mostly distinct).
        self._prices: dict[str, tuple[Decimal | None, str | None]] = {}

    def __call__(self, record: SourceRecord) -> Product | Reject:
        """Normalise one source record."""
        fields = record.fields
        get = fields.get
        product_id = get(self.id_column, "").strip()
        if not product_id:
            return self._reject_missing_id(record)
        raw_title = get(self.title_column, "")
        title = clean_line(raw_title) if raw_title else ""
        if not title:
            return self._reject_missing_title(record, raw_title, product_id)

        # The steps below stay inline (no call per step): this runs once per record, and a
        # method call per field is a measurable share of the time on a large feed.

        values = _PRODUCT_DEFAULTS.copy()
        values[_PRODUCT_ID] = product_id
        values[_TITLE] = title
        values[_SOURCE_LINE] = record.line
        flags: list[str] = []
        for index, column, cleaner in self.text_steps:
            raw = get(column)
            if raw:
                values[index] = cleaner(raw)

        if self.has_price:
            self._price(get, values, flags)

        for column, flag in self.word_checks:
            raw = get(column)
            if raw and raw.strip() and not _WORD_RECOGNISED[flag](raw):
                flags.append(flag)

        if self.gtin_column is not None:
            raw = get(self.gtin_column)
            if raw:
                raw = raw.strip()
            if raw:
                gtin, problem = normalize_gtin(raw)
                values[_GTIN_RAW] = raw
                if problem is None and gtin is not None:
                    values[_GTIN] = gtin
                else:
                    flags.append(FLAG_GTIN_INVALID)
                    if problem:
                        flags.append(problem)

        # The unmapped columns go to extra in the record's order. There are seldom more than one,
        # so a set difference (in C) finds them instead of a test per column.
        unmapped = fields.keys() - self.mapped_columns
        if not unmapped:
            values[_EXTRA] = {}
        elif len(unmapped) == 1:
            (column,) = unmapped
            values[_EXTRA] = {column: fields[column]}
        else:
            values[_EXTRA] = {key: value for key, value in fields.items() if key in unmapped}
        if flags:
            values[_FLAGS] = tuple(flags)
        return _make_product(values)

    def _reject_missing_id(self, record: SourceRecord) -> Reject:
        return Reject(
            MISSING_ID,
            f"no product id in column '{self.id_column}'",
            record.line,
            record.location,
            record_excerpt(record),
        )

    def _reject_missing_title(
        self, record: SourceRecord, raw_title: str, product_id: str
    ) -> Reject:
        return Reject(
            MISSING_TITLE,
            f"no title in column '{self.title_column}'"
            + (" after cleaning" if raw_title.strip() else ""),
            record.line,
            record.location,
            record_excerpt(record),
            product_id,
        )

    def _price(self, get: Callable[[str], str | None], values: list[Any], flags: list[str]) -> None:
        column_currency: str | None = None
        if self.currency_column is not None:
            raw_currency = get(self.currency_column)
            if raw_currency and raw_currency.strip():
                column_currency = normalize_currency(raw_currency)
                if column_currency is None:
                    flags.append(FLAG_CURRENCY_UNKNOWN)
        raw_price = get(self.price_column) if self.price_column is not None else None
        if not raw_price or not raw_price.strip():
            if column_currency is not None:
                values[_CURRENCY] = column_currency
            return
        parsed = self._prices.get(raw_price)
        if parsed is None:
            parsed = parse_price(raw_price, self.default_currency)
            if len(self._prices) >= PRICE_CACHE_SIZE:
                self._prices.clear()
            self._prices[raw_price] = parsed
        price, currency = parsed
        if price is None:
            flags.append(FLAG_PRICE_UNPARSED)
        else:
            values[_PRICE] = price
        if column_currency is not None:
            # The currency column is explicit; a different symbol in the price text (not merely
            # the profile's default) is worth a flag, unless the column's currency shares the
            # symbol ("$" for AUD, "¥" for CNY, "kr" for SEK): then the amount is read as that
            # currency's (its minor units).
            if currency is not None and currency not in (column_currency, self.default_currency):
                shared, shared_currency = parse_price(raw_price, column_currency)
                if shared_currency == column_currency and shared is not None:
                    values[_PRICE] = shared
                else:
                    flags.append(FLAG_CURRENCY_CONFLICT)
            currency = column_currency
        if currency is not None:
            values[_CURRENCY] = currency
        elif price is not None:
            flags.append(FLAG_CURRENCY_MISSING)


_WORD_RECOGNISED: dict[str, Callable[[str], bool]] = {
    FLAG_AVAILABILITY_UNRECOGNISED: lambda raw: normalize_availability(raw) != "unknown",
    FLAG_GENDER_UNRECOGNISED: lambda raw: normalize_gender_text(raw) != "unknown",
    FLAG_COLOUR_UNRECOGNISED: is_colour_value,
}

_PRODUCT_ID = _PRODUCT_INDEX["product_id"]
_TITLE = _PRODUCT_INDEX["title"]
_SOURCE_LINE = _PRODUCT_INDEX["source_line"]
_GTIN = _PRODUCT_INDEX["gtin"]
_GTIN_RAW = _PRODUCT_INDEX["gtin_raw"]
_EXTRA = _PRODUCT_INDEX["extra"]
_FLAGS = _PRODUCT_INDEX["flags"]
_PRICE = _PRODUCT_INDEX["price"]
_CURRENCY = _PRODUCT_INDEX["currency"]


# One compiled profile is kept: to_product is called record after record with the same profile.
_last_builder: tuple[Any, dict[str, str], str | None, ProductBuilder] | None = None


def compile_profile(profile: FeedProfile) -> ProductBuilder:
    """Compile a profile into a :class:`ProductBuilder` (see :func:`to_product`)."""
    return ProductBuilder(profile)


def to_product(record: SourceRecord, profile: FeedProfile) -> Product | Reject:
    """Apply a feed profile and the normalisers to one source record.

    Titles, brands, colours, sizes and the gender text are cleaned with ``clean_line``, the
    description with ``clean_text``; the price is parsed with the profile's default currency (a
    mapped currency column wins); an invalid GTIN leaves ``gtin`` None, keeps ``gtin_raw`` and adds
    the ``gtin_invalid`` flag and the problem code; every unmapped column goes to ``extra``.

    Args:
        record: one record from a feed reader.
        profile: the feed profile.

    Returns:
        The product, or a Reject with reason ``missing_id`` or ``missing_title``.

    Raises:
        ProfileError: when the profile maps no column to ``product_id`` or ``title``.
    """
    global _last_builder
    cached = _last_builder
    if (
        cached is not None
        and cached[0] is profile
        and cached[1] == profile.columns
        and cached[2] == profile.default_currency
    ):
        builder = cached[3]
    else:
        builder = ProductBuilder(profile)
        _last_builder = (profile, dict(profile.columns), profile.default_currency, builder)
    return builder(record)


# Records read and normalised before the first of them is yielded: the index's sorted runs are
# searched once per batch with NumPy. Small, so that the batch stays in the CPU caches.
BATCH_SIZE = 64
# Ids first kept in a dict, turned into a sorted run when this many have gathered.
RECENT_IDS = 16_384
_NOT_FOUND = -1
_UINT32_MAX = 2**32 - 1


class IdIndex:
    """The product ids already seen (as 64-bit digests) with the line each was first seen on.

    The latest ids sit in a dict (``recent``, at most about :data:`RECENT_IDS`); older ones in
    sorted runs of int64 digests with their first lines beside them (uint32 while lines fit,
    else int64). Every id is in one place only, because only ids not found are added. Making a
    run merges the last runs while the one before the last is no more than twice as long, so
    the number of runs grows like log2 of the ids seen.
    """

    def __init__(self) -> None:
        self.recent: dict[int, int] = {}
        self.runs: list[tuple[np.ndarray, np.ndarray]] = []

    @staticmethod
    def keys(product_ids: list[str]) -> list[int]:
        """Return the 8-byte BLAKE2b digests of ``product_ids`` as (little-endian) int64."""
        digests = b"".join(
            [blake2b(pid.encode("utf-8"), digest_size=8).digest() for pid in product_ids]
        )
        keys: list[int] = np.frombuffer(digests, dtype="<i8").tolist()
        return keys

    def lookup_runs(self, keys: list[int]) -> list[int] | None:
        """Return the first line of each key found in the runs (:data:`_NOT_FOUND` if absent).

        None when no key is in the runs (``recent`` is not searched: use ``recent.get``).
        """
        if not self.runs or not keys:
            return None
        key_array = np.array(keys, dtype=np.int64)
        found: np.ndarray | None = None
        for run_keys, run_lines in self.runs:
            positions = np.searchsorted(run_keys, key_array)
            np.minimum(positions, len(run_keys) - 1, out=positions)
            hit = run_keys[positions] == key_array
            if hit.any():
                if found is None:
                    found = np.full(len(keys), _NOT_FOUND, dtype=np.int64)
                found[hit] = run_lines[positions[hit]]
        if found is None:
            return None
        lines: list[int] = found.tolist()
        return lines

    def settle(self) -> None:
        """Turn ``recent`` into a sorted run once it is full (call between lookups only)."""
        recent = self.recent
        if len(recent) < RECENT_IDS:
            return
        key_array = np.fromiter(recent.keys(), dtype=np.int64, count=len(recent))
        line_array = np.fromiter(recent.values(), dtype=np.int64, count=len(recent))
        self.recent = {}
        if int(line_array.max()) <= _UINT32_MAX and int(line_array.min()) >= 0:
            line_array = line_array.astype(np.uint32)
        order = np.argsort(key_array)
        runs = self.runs
        runs.append((key_array[order], line_array[order]))
        while len(runs) >= 2 and len(runs[-2][0]) <= 2 * len(runs[-1][0]):
            runs.append(_merge_runs(runs.pop(-2), runs.pop()))

    def __len__(self) -> int:
        return len(self.recent) + sum(len(keys) for keys, _ in self.runs)

    @property
    def nbytes(self) -> int:
        """Bytes held by the runs' arrays (the recent dict not counted)."""
        return sum(keys.nbytes + lines.nbytes for keys, lines in self.runs)


def _merge_runs(
    older: tuple[np.ndarray, np.ndarray], newer: tuple[np.ndarray, np.ndarray]
) -> tuple[np.ndarray, np.ndarray]:
    """Merge two sorted, disjoint runs (keys, lines) into one, with few temporary arrays.

    Each key of ``newer`` goes where it belongs among ``older``'s keys; the old keys fill the
    remaining places in order. The old key arrays are released before the lines are merged.
    """
    keys_a, lines_a = older
    keys_b, lines_b = newer
    size = len(keys_a) + len(keys_b)
    positions = np.searchsorted(keys_a, keys_b)
    positions += np.arange(len(keys_b))  # places in the merged run
    keys = np.empty(size, dtype=np.int64)
    keys[positions] = keys_b
    keep = np.ones(size, dtype=bool)
    keep[positions] = False
    keys[keep] = keys_a
    del keys_a, keys_b, older, newer
    lines = np.empty(size, dtype=np.result_type(lines_a, lines_b))
    lines[positions] = lines_b
    lines[keep] = lines_a
    return keys, lines


def iter_products(
    feed: Iterable[SourceRecord | Reject], profile: FeedProfile, accounting: Accounting
) -> Iterator[Product | Reject]:
    """Stream a feed as products and rejects, keeping ``accounting`` up to date.

    Reader-level rejects pass through and are counted. A product whose id was already seen is
    rejected as ``duplicate_id`` (the first one is kept; the detail names its line). A fatal
    reader error propagates after the records before it were yielded and counted.

    Records are read and normalised :data:`BATCH_SIZE` at a time, then yielded one by one
    (the accounting counts each when it is yielded).

    Args:
        feed: an open feed (anything that yields SourceRecord / Reject).
        profile: the feed profile.
        accounting: updated in place; ``read == kept + rejected`` after each yielded item.

    Yields:
        Products and rejects, in feed order.

    Raises:
        ProfileError: when the profile maps no column to ``product_id`` or ``title``.
    """
    build = ProductBuilder(profile)
    index = IdIndex()
    duplicates = accounting.duplicate_ids
    source = iter(feed)
    while True:
        batch: list[Product | Reject] = []
        records: list[SourceRecord] = []
        error: Exception | None = None
        try:
            for item in islice(source, BATCH_SIZE):
                if type(item) is Reject:
                    batch.append(item)
                else:
                    assert isinstance(item, SourceRecord)
                    result = build(item)
                    batch.append(result)
                    if type(result) is Product:
                        records.append(item)
        except Exception as exc:  # yield what came before it, then raise it
            error = exc
        keys = IdIndex.keys([item.product_id for item in batch if type(item) is Product])
        in_runs = index.lookup_runs(keys)
        recent = index.recent
        position = 0
        for result in batch:
            accounting.read += 1
            if type(result) is Reject:
                accounting.count_reject(result.reason)
                yield result
                continue
            key = keys[position]
            first_line = in_runs[position] if in_runs is not None else _NOT_FOUND
            record = records[position]
            position += 1
            if first_line == _NOT_FOUND:
                first_line = recent.get(key, _NOT_FOUND)
                if first_line == _NOT_FOUND:
                    recent[key] = record.line
                    accounting.kept += 1
                    flags = result.flags  # type: ignore[union-attr]  # a Product here
                    if flags:
                        accounting.count_flags(flags)
                    yield result
                    continue
            product_id = result.product_id
            where = f"line {first_line}" if first_line else "earlier in the feed"
            reject = Reject(
                DUPLICATE_ID,
                f"product id '{product_id}' was already seen at {where}; the first one is kept",
                record.line,
                record.location,
                record_excerpt(record),
                product_id,
            )
            lines = duplicates.get(product_id)
            if lines is None:
                if len(duplicates) < MAX_DUPLICATE_IDS_LISTED:
                    duplicates[product_id] = [record.line]
            elif len(lines) < MAX_LINES_PER_DUPLICATE_ID:
                lines.append(record.line)
            accounting.count_reject(DUPLICATE_ID)
            yield reject
        if error is not None:
            raise error
        if len(batch) < BATCH_SIZE:
            return
        index.settle()


@dataclass(frozen=True)
class OutputPaths:
    """The files :func:`normalize_feed_to` writes."""

    products: Path
    rejects: Path
    accounting: Path

    def to_dict(self) -> dict[str, str]:
        """Return the paths as text."""
        return {
            "products": str(self.products),
            "rejects": str(self.rejects),
            "accounting": str(self.accounting),
        }


def output_paths(out_dir: str | Path, format: str = "jsonl") -> OutputPaths:
    """Return the files a normalisation run writes in ``out_dir``.

    Products go to ``products.<ext>``; rejects to ``rejects.csv`` when the format is CSV, else
    ``rejects.jsonl``; the accounting to ``accounting.json``.

    Raises:
        ValueError: for an unknown format.
    """
    if format not in EXTENSIONS:
        raise ValueError(f"unknown output format {format!r}")
    folder = Path(out_dir)
    reject_ext = "csv" if format == "csv" else "jsonl"
    return OutputPaths(
        products=folder / f"products.{EXTENSIONS[format]}",
        rejects=folder / f"rejects.{reject_ext}",
        accounting=folder / "accounting.json",
    )


def check_profile(
    profile: FeedProfile, info: FeedInfo | None = None, *, profile_path: str | Path | None = None
) -> None:
    """Check that a profile can make products from a feed before reading it.

    Args:
        profile: the feed profile.
        info: what the reader found (its ``columns`` are listed in the message), if known.
        profile_path: where the profile is saved, named in the hint.

    Raises:
        ProfileError: when ``product_id`` or ``title`` has no column, or (for a feed whose columns
            are known) its column is not in the feed. The message names the field, the hint
            lists the columns found and says which file to edit.
    """
    found = tuple(info.columns) if info is not None else ()
    found_text = ", ".join(found) if found else "none"
    where = f"edit the profile at {profile_path}" if profile_path else "edit the profile"
    for name in REQUIRED:
        if not profile.columns.get(name):
            raise ProfileError(
                f"the profile maps no column to the required field '{name}'",
                path=profile_path,
                field=name,
                hint=f"columns found: {found_text}; {where}",
            )
    for name in REQUIRED:
        column = profile.columns[name]
        if found and column not in found:
            raise ProfileError(
                f"the profile maps the required field '{name}' to column '{column}', "
                "which the feed does not have",
                path=profile_path,
                field=name,
                hint=f"columns found: {found_text}; {where}",
            )


def normalize_feed_to(
    feed: Iterable[SourceRecord | Reject],
    profile: FeedProfile,
    out_dir: str | Path,
    *,
    format: str = "jsonl",
    accounting: Accounting | None = None,
    on_progress: Callable[[Accounting], None] | None = None,
    progress_every: int = 10_000,
) -> tuple[Accounting, OutputPaths]:
    """Normalise a whole feed and write products, rejects and the accounting to ``out_dir``.

    When the reader stops on a fatal feed error (FeedFormatError, FeedEncodingError,
    UnsafeFeedError) after some records, ``accounting.stopped_early`` records its message, every
    output file is finished and closed, and then the error is raised again. Pass your own
    ``accounting`` to see the counts in that case.

    Args:
        feed: an open feed.
        profile: the feed profile.
        out_dir: the output folder (created if needed).
        format: ``"jsonl"``, ``"csv"`` or ``"parquet"`` for the products.
        accounting: filled in place (a new one when None).
        on_progress: called with the accounting every ``progress_every`` records.
        progress_every: see ``on_progress``.

    Returns:
        The accounting and the paths written.

    Raises:
        FeedFormatError, FeedEncodingError, UnsafeFeedError: after the outputs are written.
        ProfileError: when the profile maps no column to ``product_id`` or ``title``.
    """
    accounting = accounting if accounting is not None else Accounting()
    paths = output_paths(out_dir, format)
    ProductBuilder(profile)  # a bad profile fails before any file is created
    paths.products.parent.mkdir(parents=True, exist_ok=True)
    fatal: BaseException | None = None
    products = open_product_writer(paths.products, format)
    try:
        rejects = open_reject_writer(paths.rejects, "csv" if format == "csv" else "jsonl")
        try:
            write_product = products.write
            write_reject = rejects.write
            next_progress = progress_every
            try:
                for item in iter_products(feed, profile, accounting):
                    if type(item) is Reject:
                        write_reject(item)
                    else:
                        write_product(item)
                    if on_progress is not None and accounting.read >= next_progress:
                        next_progress += progress_every
                        on_progress(accounting)
            except FATAL_FEED_ERRORS as error:
                accounting.stopped_early = str(error)
                fatal = error
        finally:
            rejects.close()
    finally:
        products.close()
        facts = accounting.to_dict()
        facts["outputs"] = paths.to_dict()
        facts["format"] = format
        write_text_atomic(paths.accounting, json.dumps(facts, ensure_ascii=False, indent=2) + "\n")
    if on_progress is not None:
        on_progress(accounting)
    if fatal is not None:
        raise fatal
    return accounting, paths
