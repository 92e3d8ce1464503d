"""The brand registry: every brand spelling seen, resolved to one canonical brand.

A feed writes the same brand many ways: "Bench Low", "Bench-Low", "Benchlow", "BENCHLOW®",
"Benchlow GmbH", and now and then "Benchlov". :class:`BrandRegistry` joins them:

- marks (®, ™, ©) and legal-form suffixes are stripped and case, spacing and hyphens are
  ignored: all of the above but the last share the key ``benchlow`` (:func:`brand_key`);
- one-letter typos (one insertion, deletion, substitution or swap of neighbours) are clustered
  by :meth:`BrandRegistry.cluster_typos`, within a feed and across feeds, with guards against
  merging two real names that happen to be one letter apart;
- the canonical display is the dictionary's name when the dictionary knows the brand, else the
  most frequent spelling (marks and legal forms removed).

Each brand keeps its variants with counts and feeds, its departments and whether a person has
confirmed it (``confirmed``), said it names no brand (``rejected``) or it was only seen
(``candidate``). :meth:`BrandRegistry.to_dict`
and :meth:`BrandRegistry.from_dict` turn it into plain JSON-ready data for a store to keep.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from rapidfuzz.distance import OSA

from catmap._text import fold
from catmap.attributes.brand import (
    LEGAL_SUFFIXES,
    NO_BRAND_VALUES,
    BrandDictionary,
    BrandEntry,
    compact_key,
    normalize_brand,
)
from catmap.errors import InputError

CANDIDATE, CONFIRMED, REJECTED = "candidate", "confirmed", "rejected"
STATUSES = (CANDIDATE, CONFIRMED, REJECTED)

# Keys shorter than this never join by a typo: between short names one letter is as likely
# another name ("Ardo" / "Arno") as a slip. Common practice, no source.
MIN_TYPO_KEY = 5
# Below this length a different first letter means another name ("Marlow" / "Harlow"): a
# slip on the first letter of a short name is rarer than two short names that rhyme.
FIRST_LETTER_GUARD = 8
# Where both spellings occur in one feed, the rarer must be at most this share of the commoner
# to count as its typo: a feed does not misspell a brand as often as it spells it right.
# Common practice, no source.
TYPO_SHARE = 0.25
# ... once the rarer spelling has this many products there (below it, counts say nothing).
TYPO_SUPPORT = 3

REGISTRY_FORMAT = "catmap-brand-registry"
REGISTRY_VERSION = 1

_MARKS = re.compile(r"[®™©℠]|\((?:TM|tm|R|r|C|c)\)|(?<=[a-z])TM\b|(?<=[A-Z]{2})TM\b")
_LONGEST_SUFFIX = max(len(s.split()) for s in LEGAL_SUFFIXES)
_SUFFIXES = frozenset(LEGAL_SUFFIXES)
_TRAILING = ",;:-–—&+/ "
# Partnership endings that are often part of the trading name itself ("Zalette & Co."): the
# display keeps them; the key drops them like any legal form.
_PARTNERSHIPS = frozenset({"and co", "and cie", "et cie", "y cia"})


def brand_key(text: str) -> str:
    """Return the key that joins spellings of one brand: no marks, legal forms, case or spaces.

    Args:
        text: a brand as written.

    Returns:
        The key ("" when the text names no brand).

    Example:
        >>> brand_key("Bench-Low GmbH®") == brand_key("BENCHLOW") == "benchlow"
        True
    """
    return compact_key(normalize_brand(text))


def clean_spelling(text: str, *, keep_partnership: bool = False) -> str:
    """Return a spelling as it may be shown: marks and trailing legal forms removed.

    Case and inner punctuation are kept ("Bench-Low S.A.S.®" → "Bench-Low").

    Args:
        text: a brand as written.
        keep_partnership: keep an ending such as "& Co." ("Zalette & Co. Ltd" →
            "Zalette & Co."), which is often part of the name.
    """
    words = _MARKS.sub(" ", text).split()
    while len(words) > 1:
        if keep_partnership and len(words) > 2 and fold(" ".join(words[-2:])) in _PARTNERSHIPS:
            break
        for n in range(min(_LONGEST_SUFFIX, len(words) - 1), 0, -1):
            suffix = fold(" ".join(words[-n:]))
            if suffix in _SUFFIXES:
                words = words[:-n]
                break
        else:
            break
        if words:
            words[-1] = words[-1].rstrip(_TRAILING)
            if not words[-1]:
                words.pop()
    return " ".join(words).strip(_TRAILING)


@dataclass
class BrandVariant:
    """One spelling of a brand, how often it was seen and in which feeds."""

    spelling: str
    count: int = 0
    feeds: dict[str, int] = field(default_factory=dict)


@dataclass
class RegistryBrand:
    """A canonical brand with everything seen of it.

    Attributes:
        name: the canonical display name.
        status: ``candidate`` (seen, not trusted yet), ``confirmed`` or ``rejected`` (a person
            said it names no brand).
        dictionary_name: the brand dictionary's name for it ("" when not in the dictionary).
        variants: spelling → :class:`BrandVariant`.
        departments: department id → products seen there.
        sources: where it was read ("brand field", "title 'by'", ...) → products.
    """

    name: str
    status: str = CANDIDATE
    dictionary_name: str = ""
    variants: dict[str, BrandVariant] = field(default_factory=dict)
    departments: dict[str, int] = field(default_factory=dict)
    sources: dict[str, int] = field(default_factory=dict)

    @property
    def count(self) -> int:
        """Products seen with any spelling of the brand."""
        return sum(v.count for v in self.variants.values())

    @property
    def feeds(self) -> dict[str, int]:
        """Feed → products seen there."""
        out: dict[str, int] = {}
        for variant in self.variants.values():
            for feed, n in variant.feeds.items():
                out[feed] = out.get(feed, 0) + n
        return out

    @property
    def anchored(self) -> bool:
        """Whether the brand is known for sure (in the dictionary, or confirmed by a person)."""
        return bool(self.dictionary_name) or self.status == CONFIRMED

    def keys(self) -> set[str]:
        """The keys of all its spellings."""
        return {brand_key(s) for s in self.variants} - {""}

    def display(self) -> str:
        """The name to show: the dictionary's, else the most frequent clean spelling (marks
        and company forms removed; a partnership ending such as "& Co." kept).

        Spellings that differ only in case count together ("BENCHLOW", "benchlow" and
        "Benchlow" are one spelling written three ways); the way shown is the most frequent
        one in mixed case, since feeds shout or lower-case whole titles and fields, not the
        brand alone. Remaining ties go to the shorter, then alphabetically, so the choice
        never depends on arrival order.
        """
        if self.dictionary_name:
            return self.dictionary_name
        tally: dict[str, int] = {}
        for variant in self.variants.values():
            shown = clean_spelling(variant.spelling, keep_partnership=True)
            if shown:
                tally[shown] = tally.get(shown, 0) + variant.count
        if not tally:
            return self.name
        by_letters: dict[str, int] = {}
        for shown, n in tally.items():
            by_letters[shown.casefold()] = by_letters.get(shown.casefold(), 0) + n
        letters = min(by_letters, key=lambda k: (-by_letters[k], len(k), k))
        return min(
            (s for s in tally if s.casefold() == letters),
            key=lambda s: (s.isupper() or s.islower(), -tally[s], s),
        )

    def to_dict(self) -> dict[str, Any]:
        """Return the brand as plain data."""
        return {
            "name": self.name,
            "status": self.status,
            "dictionary_name": self.dictionary_name,
            "variants": [
                {"spelling": v.spelling, "count": v.count, "feeds": dict(sorted(v.feeds.items()))}
                for v in sorted(self.variants.values(), key=lambda v: (-v.count, v.spelling))
            ],
            "departments": dict(sorted(self.departments.items())),
            "sources": dict(sorted(self.sources.items())),
        }


class BrandRegistry:
    """All brands of a project: spellings resolved to canonical brands, with their history.

    Args:
        dictionary: the brand dictionary; a spelling it knows (exactly, or as a typo) joins the
            dictionary's brand, confirmed, under the dictionary's name.

    Example:
        >>> registry = BrandRegistry()
        >>> for written in ("Bench Low", "Bench-Low", "Benchlow SAS", "BENCHLOW®", "Benchlow"):
        ...     _ = registry.observe(written, feed="f1")
        >>> registry.canonical("bench low")
        'Benchlow'
    """

    def __init__(self, dictionary: BrandDictionary | None = None) -> None:
        self.dictionary = dictionary
        self._brands: dict[int, RegistryBrand] = {}
        self._by_key: dict[str, int] = {}
        self._next = 0

    # -- reading ---------------------------------------------------------------------------

    def __len__(self) -> int:
        return len(self._brands)

    def __contains__(self, spelling: object) -> bool:
        return isinstance(spelling, str) and self.resolve(spelling) is not None

    def resolve(self, spelling: str) -> RegistryBrand | None:
        """Return the brand a spelling belongs to, or None when never seen."""
        found = self._by_key.get(brand_key(spelling))
        return self._brands[found] if found is not None else None

    def canonical(self, spelling: str) -> str:
        """Return the canonical name of a spelling ("" when never seen)."""
        brand = self.resolve(spelling)
        return brand.name if brand is not None else ""

    def brands(self, status: str | None = None) -> list[RegistryBrand]:
        """Return the brands (of one status, if given), most seen first."""
        found = [b for b in self._brands.values() if status is None or b.status == status]
        return sorted(found, key=lambda b: (-b.count, b.name.lower()))

    # -- recording -------------------------------------------------------------------------

    def observe(
        self,
        spelling: str,
        *,
        feed: str = "",
        department: str = "",
        source: str = "brand field",
        count: int = 1,
        dictionary_typos: bool = True,
    ) -> RegistryBrand | None:
        """Record that ``count`` products carry a brand written ``spelling``.

        Args:
            spelling: the brand as written.
            feed: the feed it was seen in.
            department: the department id of those products ("" when not known yet).
            source: where it was read ("brand field", "title 'by'", ...).
            count: how many products.
            dictionary_typos: join the dictionary brand a spelling is one typo of (False for
                a spelling a feed writes so often that it is that feed's own brand).

        Returns:
            The brand it joined (None for a value meaning "no brand", such as "n/a").
        """
        spelling = " ".join(spelling.split())
        key = brand_key(spelling)
        if not key or normalize_brand(spelling) in NO_BRAND_VALUES:
            return None
        brand_id = self._by_key.get(key)
        if brand_id is None:
            known = self._dictionary_name(spelling, dictionary_typos)
            if known:
                brand_id = self._by_key.get(brand_key(known))
            if brand_id is None:
                brand_id = self._new(
                    clean_spelling(spelling, keep_partnership=True) or spelling, known
                )
            self._by_key[key] = brand_id
        brand = self._brands[brand_id]
        variant = brand.variants.get(spelling)
        if variant is None:
            variant = brand.variants[spelling] = BrandVariant(spelling)
        variant.count += count
        variant.feeds[feed] = variant.feeds.get(feed, 0) + count
        if department:
            brand.departments[department] = brand.departments.get(department, 0) + count
        brand.sources[source] = brand.sources.get(source, 0) + count
        brand.name = brand.display()
        return brand

    def _dictionary_name(self, spelling: str, typos: bool = True) -> str:
        if self.dictionary is None:
            return ""
        exact = self.dictionary.lookup_exact(spelling)
        if exact is not None:
            return exact
        if not typos:
            return ""
        fuzzy = self.dictionary.lookup_fuzzy(spelling)
        return fuzzy[0] if fuzzy is not None else ""

    def _new(self, name: str, dictionary_name: str = "") -> int:
        brand_id = self._next
        self._next += 1
        self._brands[brand_id] = RegistryBrand(
            dictionary_name or name,
            CONFIRMED if dictionary_name else CANDIDATE,
            dictionary_name,
        )
        if dictionary_name:
            self._by_key[brand_key(dictionary_name)] = brand_id
        return brand_id

    def confirm(self, name: str) -> RegistryBrand:
        """Mark a brand as confirmed by a person (after review).

        Raises:
            InputError: no brand of that name or spelling has been seen.
        """
        return self.set_status(name, CONFIRMED)

    def reject(self, name: str) -> RegistryBrand:
        """Mark a brand as rejected by a person: the spelling names no brand.

        Raises:
            InputError: no brand of that name or spelling has been seen.
        """
        return self.set_status(name, REJECTED)

    def set_status(self, name: str, status: str) -> RegistryBrand:
        """Set the status of the brand a name or spelling belongs to; return the brand.

        Raises:
            InputError: no brand of that name or spelling has been seen.
            ValueError: the status is not one of :data:`STATUSES`.
        """
        if status not in STATUSES:
            raise ValueError(f"unknown brand status {status!r}; expected one of {STATUSES}")
        brand = self.resolve(name)
        if brand is None:
            raise InputError(
                f"no brand '{name}' in the project's brand registry", field="brand",
                hint="`catmap brands list` shows the brands `catmap onboard` has seen; use "
                "one of their names or spellings",
            )
        brand.status = status
        return brand

    def update(self, other: BrandRegistry) -> None:
        """Add everything another registry saw (a feed's, into the project's).

        Each variant is observed with its counts per feed; departments and sources are
        added; a brand confirmed in either stays confirmed. Call :meth:`cluster_typos`
        afterwards to join typos across feeds.
        """
        for brand in other.brands():
            landed: list[int] = []
            for variant in brand.variants.values():
                for feed, n in variant.feeds.items():
                    if self.observe(variant.spelling, feed=feed, source="", count=n) is not None:
                        landed.append(self._by_key[brand_key(variant.spelling)])
            if not landed:
                continue
            # The other registry already joined these spellings (a typo it clustered): they
            # stay one brand here, unless they name two brands known for sure.
            into = landed[0]
            for gone in dict.fromkeys(landed[1:]):
                if gone == into or gone not in self._brands or into not in self._brands:
                    continue
                if self._brands[into].anchored and self._brands[gone].anchored:
                    continue
                into, gone = self._order(into, gone)
                self._join(into, gone)
            joined = self._brands[into]
            joined.sources.pop("", None)
            for department, n in brand.departments.items():
                joined.departments[department] = joined.departments.get(department, 0) + n
            for where, n in brand.sources.items():
                joined.sources[where] = joined.sources.get(where, 0) + n
            if brand.status == CONFIRMED:
                joined.status = CONFIRMED

    # -- typo clusters -----------------------------------------------------------------------

    def cluster_typos(self) -> list[tuple[str, str]]:
        """Join brands whose keys are one typo apart; return (joined, into) names.

        Pairs are found by blocking: two keys within one edit (insertion, deletion,
        substitution or a swap of neighbours) share a "one letter deleted" form, so only keys
        sharing one are compared (rapidfuzz's OSA distance confirms). A pair is joined unless
        a guard says two real names: a key shorter than :data:`MIN_TYPO_KEY`; both brands in
        the dictionary or confirmed; a different first letter in a key shorter than
        :data:`FIRST_LETTER_GUARD`; different digits ("X200" / "X300"); departments known for
        both and disjoint; or a feed where both occur and the rarer, seen there at least
        :data:`TYPO_SUPPORT` times, is more than :data:`TYPO_SHARE` of the commoner. The
        rarer spelling joins the commoner (a dictionary or confirmed brand never moves).
        """
        blocks: dict[str, list[str]] = {}
        for key in self._by_key:
            if len(key) < MIN_TYPO_KEY:
                continue
            for i in range(len(key)):
                blocks.setdefault(key[:i] + key[i + 1:], []).append(key)
            blocks.setdefault(key, []).append(key)
        pairs: set[tuple[str, str]] = set()
        for keys in blocks.values():
            if len(keys) < 2:
                continue
            for i, a in enumerate(keys):
                for b in keys[i + 1:]:
                    if a != b:
                        pairs.add((a, b) if a < b else (b, a))
        key_count = self._key_counts()
        ordered = sorted(pairs, key=lambda p: (-max(key_count[p[0]], key_count[p[1]]), p))
        merged: list[tuple[str, str]] = []
        for a, b in ordered:
            first, second = self._by_key[a], self._by_key[b]
            if first == second or OSA.distance(a, b, score_cutoff=1) > 1:
                continue
            if not self._may_join(a, b, self._brands[first], self._brands[second]):
                continue
            into, gone = self._order(first, second)
            merged.append((self._brands[gone].name, self._brands[into].name))
            self._join(into, gone)
        return merged

    def _key_counts(self) -> dict[str, int]:
        counts: dict[str, int] = dict.fromkeys(self._by_key, 0)
        for brand in self._brands.values():
            for variant in brand.variants.values():
                key = brand_key(variant.spelling)
                counts[key] = counts.get(key, 0) + variant.count
        return counts

    def _may_join(self, a: str, b: str, first: RegistryBrand, second: RegistryBrand) -> bool:
        if min(len(a), len(b)) < MIN_TYPO_KEY or (first.anchored and second.anchored):
            return False
        if min(len(a), len(b)) < FIRST_LETTER_GUARD and a[0] != b[0]:
            return False
        if [c for c in a if c.isdigit()] != [c for c in b if c.isdigit()]:
            return False
        if first.departments and second.departments and not (
            first.departments.keys() & second.departments.keys()
        ):
            return False
        feeds_first, feeds_second = first.feeds, second.feeds
        for feed in feeds_first.keys() & feeds_second.keys():
            low, high = sorted((feeds_first[feed], feeds_second[feed]))
            if low >= TYPO_SUPPORT and low > TYPO_SHARE * high:
                return False
        return True

    def _order(self, first: int, second: int) -> tuple[int, int]:
        a, b = self._brands[first], self._brands[second]
        if a.anchored != b.anchored:
            return (first, second) if a.anchored else (second, first)
        if (a.count, b.name) >= (b.count, a.name):
            return first, second
        return second, first

    def _join(self, into: int, gone: int) -> None:
        target, source = self._brands[into], self._brands.pop(gone)
        for spelling, variant in source.variants.items():
            mine = target.variants.get(spelling)
            if mine is None:
                target.variants[spelling] = variant
            else:
                mine.count += variant.count
                for feed, n in variant.feeds.items():
                    mine.feeds[feed] = mine.feeds.get(feed, 0) + n
        for department, n in source.departments.items():
            target.departments[department] = target.departments.get(department, 0) + n
        for where, n in source.sources.items():
            target.sources[where] = target.sources.get(where, 0) + n
        if source.status == CONFIRMED:
            target.status = CONFIRMED
        target.dictionary_name = target.dictionary_name or source.dictionary_name
        for key, brand_id in self._by_key.items():
            if brand_id == gone:
                self._by_key[key] = into
        target.name = target.display()

    # -- for the extractor and the store -----------------------------------------------------

    def as_dictionary(self, *, include_candidates: bool = False) -> BrandDictionary:
        """Return the registry's brands as a :class:`BrandDictionary` (confirmed ones only,
        unless ``include_candidates``), every spelling seen as a variant."""
        entries = [
            BrandEntry(
                b.name,
                tuple(s for s in b.variants if s != b.name),
                tuple(sorted(b.departments, key=lambda d: -b.departments[d])),
            )
            for b in self.brands()
            if b.status == CONFIRMED or (include_candidates and b.status == CANDIDATE)
        ]
        return BrandDictionary(entries)

    def to_dict(self) -> dict[str, Any]:
        """Return the registry as plain JSON-ready data (see :meth:`from_dict`)."""
        return {
            "format": REGISTRY_FORMAT,
            "version": REGISTRY_VERSION,
            "brands": [b.to_dict() for b in self.brands()],
        }

    @classmethod
    def from_dict(
        cls, data: Mapping[str, Any], *, dictionary: BrandDictionary | None = None
    ) -> BrandRegistry:
        """Rebuild a registry from :meth:`to_dict` data.

        Raises:
            InputError: the data is not a brand registry of a known version, or a brand in it
                is malformed.
        """
        if data.get("format") != REGISTRY_FORMAT or data.get("version") != REGISTRY_VERSION:
            raise InputError(
                "not a brand registry (format/version missing or unknown)",
                hint=f"expected format '{REGISTRY_FORMAT}' version {REGISTRY_VERSION}",
            )
        registry = cls(dictionary)
        for position, item in enumerate(data.get("brands", ())):
            try:
                brand = RegistryBrand(
                    str(item["name"]),
                    str(item.get("status", CANDIDATE)),
                    str(item.get("dictionary_name", "")),
                    {
                        str(v["spelling"]): BrandVariant(
                            str(v["spelling"]),
                            int(v["count"]),
                            {str(f): int(n) for f, n in dict(v.get("feeds", {})).items()},
                        )
                        for v in item.get("variants", ())
                    },
                    {str(d): int(n) for d, n in dict(item.get("departments", {})).items()},
                    {str(s): int(n) for s, n in dict(item.get("sources", {})).items()},
                )
            except (KeyError, TypeError, ValueError) as error:
                raise InputError(
                    f"brand {position + 1} of the registry is malformed: {error!r}",
                    field="brands",
                ) from error
            if brand.status not in STATUSES:
                raise InputError(
                    f"brand '{brand.name}' has status '{brand.status}'",
                    field="status", hint=f"use one of: {', '.join(STATUSES)}",
                )
            brand_id = registry._next
            registry._next += 1
            registry._brands[brand_id] = brand
            for key in {*brand.keys(), brand_key(brand.name)} - {""}:
                registry._by_key.setdefault(key, brand_id)
        return registry


def registry_from_spellings(
    spellings: Iterable[tuple[str, str]], *, dictionary: BrandDictionary | None = None
) -> BrandRegistry:
    """Build a registry from (spelling, feed) pairs and cluster its typos (a convenience)."""
    registry = BrandRegistry(dictionary)
    for spelling, feed in spellings:
        registry.observe(spelling, feed=feed)
    registry.cluster_typos()
    return registry
