"""Brand: normalise brand spellings, look them up in a brand dictionary, find them in titles.

A :class:`BrandDictionary` holds canonical brand names, their variant spellings and the
departments they sell in. Look-up goes exact first (two keys: the normalised name and the same
without spaces, so "Blue-Harbor", "blue harbor" and "BlueHarbor" meet), then fuzzy over the
aliases of the same first letter and a similar length (rapidfuzz), cached per distinct input.
Titles are searched in one Aho-Corasick pass over all aliases with whole-word matching; when
that finds nothing, the leading words and then capitalised words elsewhere in the title are
looked up fuzzily (cached per distinct words).

:class:`BrandCandidates` collects unknown brand-field values and leading title words that repeat
over a feed, so that new brands can be added to the dictionary.
"""

from __future__ import annotations

import csv
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from rapidfuzz import process
from rapidfuzz.distance import OSA

from catmap._atomic import atomic_open, write_bytes_atomic
from catmap._cells import neutralise_cell, restore_cell
from catmap._text import PhraseIndex, fold
from catmap.errors import InputError

# Legal-form suffixes stripped from the end of a brand name, written as folded tokens
# (dots and case already removed: "S.A.S." → "sas", "& Co" → "and co"). Company forms of the
# markets of the seven languages (English, French, German, Spanish, Italian, Dutch,
# Portuguese) and a few Nordic ones; common practice, no source.
LEGAL_SUFFIXES: tuple[str, ...] = (
    "inc", "incorporated", "ltd", "limited", "llc", "llp", "lp", "plc", "corp", "corporation",
    "co", "and co", "company", "gmbh", "gmbh and co kg", "ag", "kg", "kgaa", "ohg", "ug", "ek",
    "mbh", "gbr", "sa", "sas", "sarl", "sasu", "eurl", "sca", "and cie", "et cie", "cie",
    "sl", "slu", "sau", "sll", "y cia", "cia", "bv", "nv", "vof", "cv", "bvba",
    "srl", "srls", "spa", "snc", "sapa", "lda", "ltda", "unipessoal lda", "eireli",
    "oy", "oyj", "ab", "as", "aps", "pty", "pty ltd", "sro", "kft",
)
_SUFFIX_TOKENS = sorted((tuple(s.split()) for s in LEGAL_SUFFIXES), key=len, reverse=True)
_SUFFIX_LAST = frozenset(s[-1] for s in _SUFFIX_TOKENS)

# Names this short (space-free key length) only ever match exactly: a one-letter slip between
# four-letter words is as likely another word ("Ace" / "Acme") as a typo.
SHORT_NAME_LENGTH = 4

# Fuzzy acceptance threshold on the OSA similarity (0..100; one edit or one swap of adjacent
# letters counts 1). Measured on the generated bench data (benchmarks/bench_attributes.py,
# misspellings are one drop / double / swap): a single slip in a 5-letter name scores 80, in
# an 8-letter name 87.5; unrelated names of the same first letter and length score below 70
# in nearly all cases. 80 keeps every single slip in names longer than 4 letters and rejects
# two slips in names shorter than 10. Confirmed on the demo feeds (see the report).
FUZZY_THRESHOLD = 80.0
# How far the length of an alias may differ from the query to be compared at all.
_LENGTH_WINDOW = 2

# Brand-field values that mean "no brand" (four languages); common practice, no source.
NO_BRAND_VALUES = frozenset(
    {
        "", "na", "n a", "none", "no brand", "nobrand", "unbranded", "generic", "unknown",
        "not applicable", "other", "various", "sans marque", "aucune", "aucune marque",
        "generique", "ohne marke", "keine marke", "markenlos", "no name", "noname",
        "sin marca", "generico", "ninguna", "varios", "0",
    }
)

FIELD_EXACT_CONFIDENCE = 0.98
TITLE_EXACT_CONFIDENCE = 0.9
UNKNOWN_FIELD_CONFIDENCE = 0.5


def _strip_suffixes(tokens: list[str]) -> list[str]:
    changed = True
    while changed and len(tokens) > 1 and tokens[-1] in _SUFFIX_LAST:
        changed = False
        for suffix in _SUFFIX_TOKENS:
            n = len(suffix)
            if len(tokens) > n and tuple(tokens[-n:]) == suffix:
                tokens = tokens[:-n]
                changed = True
                break
    return tokens


def normalize_brand(text: str) -> str:
    """Return the look-up key of a brand name.

    Case-folded, diacritics, ®/™/©, dots and apostrophes removed, "&"/"+" read as "and", other
    punctuation read as a space, trailing legal-form suffixes (:data:`LEGAL_SUFFIXES`) removed,
    whitespace collapsed. Never raises.

    Args:
        text: a brand name as a feed writes it.

    Returns:
        The key ("" for a name with no letters or digits).

    Example:
        >>> normalize_brand("Blue-Harbor GmbH®")
        'blue harbor'
    """
    return " ".join(_strip_suffixes(fold(text).split()))


def compact_key(key: str) -> str:
    """Return the space-free form of a normalised key ("blue harbor" → "blueharbor")."""
    return key.replace(" ", "")


def brand_variants(name: str) -> list[str]:
    """Return the spellings to store for a new brand: case, joined and legal-suffix forms.

    Args:
        name: the canonical name.

    Returns:
        Variants, without the name itself, in a fixed order.
    """
    out = [name.upper(), name.lower()]
    if " " in name:
        out.append(name.replace(" ", ""))
        out.append(name.replace(" ", "-"))
    out.extend(f"{name} {suffix}" for suffix in ("Ltd", "GmbH", "Inc."))
    seen: list[str] = []
    for variant in out:
        if variant != name and variant not in seen:
            seen.append(variant)
    return seen


@dataclass(frozen=True, slots=True)
class BrandMatch:
    """The brand of a product, how sure, and why.

    Attributes:
        brand: canonical name ("" when none was found).
        confidence: 0..1.
        evidence: e.g. "field exact", "field fuzzy 91 'Vellomarr'", "title exact 'vellomar'".
        spans: (start, end) of the brand in the folded title, for later extractors.
    """

    brand: str = ""
    confidence: float = 0.0
    evidence: str = ""
    spans: tuple[tuple[int, int], ...] = ()


@dataclass(frozen=True, slots=True)
class BrandEntry:
    """One dictionary row: canonical name, variant spellings, department ids."""

    name: str
    variants: tuple[str, ...] = ()
    departments: tuple[str, ...] = ()


class BrandDictionary:
    """Known brands, their spellings and departments, with exact and fuzzy look-up.

    Args:
        entries: the brands.
        common_words: folded words that are also ordinary words (product words, colours);
            a brand spelt like one is found in a title only as its first words.
        fuzzy_threshold: see :data:`FUZZY_THRESHOLD`.
    """

    def __init__(
        self,
        entries: Iterable[BrandEntry],
        *,
        common_words: Iterable[str] = (),
        fuzzy_threshold: float = FUZZY_THRESHOLD,
    ) -> None:
        self.entries: dict[str, BrandEntry] = {}
        self.fuzzy_threshold = fuzzy_threshold
        self.common_words = {fold(w) for w in common_words}
        self._exact: dict[str, str] = {}
        self._compact: dict[str, str] = {}
        self._buckets: dict[tuple[str, int], list[str]] = {}
        self._windows: dict[tuple[str, int], list[str]] = {}
        self._fuzzy_cache: dict[str, tuple[str, float, str] | None] = {}
        self.max_words = 1  # words in the longest alias key: longer title leads never match
        for entry in entries:
            self.add(entry)
        self._title_index: PhraseIndex | None = None

    # -- building ---------------------------------------------------------------------------

    def add(self, entry: BrandEntry) -> None:
        """Add (or extend) a brand; the first brand to claim a spelling keeps it."""
        old = self.entries.get(entry.name)
        if old is not None:
            entry = BrandEntry(
                entry.name,
                tuple(dict.fromkeys(old.variants + entry.variants)),
                tuple(dict.fromkeys(old.departments + entry.departments)),
            )
        self.entries[entry.name] = entry
        for alias in (entry.name, *entry.variants):
            key = normalize_brand(alias)
            if not key:
                continue
            compact = compact_key(key)
            self.max_words = max(self.max_words, key.count(" ") + 1)
            self._exact.setdefault(key, entry.name)
            if self._compact.setdefault(compact, entry.name) == entry.name and len(
                compact
            ) > SHORT_NAME_LENGTH:
                bucket = self._buckets.setdefault((compact[0], len(compact)), [])
                if compact not in bucket:
                    bucket.append(compact)
        self._windows.clear()
        self._title_index = None
        self._fuzzy_cache.clear()

    @classmethod
    def from_rows(cls, rows: Iterable[Sequence[str]], **options: object) -> BrandDictionary:
        """Build from (brand, variants, departments) rows; lists are ``;``-separated."""
        entries = []
        for row in rows:
            name = row[0].strip() if row else ""
            if not name:
                continue
            variants = _split_list(row[1]) if len(row) > 1 else ()
            departments = _split_list(row[2]) if len(row) > 2 else ()
            entries.append(BrandEntry(name, variants, departments))
        return cls(entries, **options)  # type: ignore[arg-type]

    @classmethod
    def from_csv(cls, path: str | Path, **options: object) -> BrandDictionary:
        """Load a brand dictionary CSV with the columns ``brand``, ``variants``, ``departments``.

        Raises:
            InputError: the file cannot be read or has no ``brand`` column.
        """
        try:
            with open(path, encoding="utf-8-sig", newline="") as handle:
                reader = csv.DictReader(handle)
                if reader.fieldnames is None or "brand" not in reader.fieldnames:
                    raise InputError(
                        "not a brand dictionary: no 'brand' column",
                        path=path,
                        line=1,
                        hint="the header must be: brand,variants,departments",
                    )
                rows = [
                    (
                        restore_cell(r.get("brand") or ""),
                        restore_cell(r.get("variants") or ""),
                        restore_cell(r.get("departments") or ""),
                    )
                    for r in reader
                ]
        except OSError as error:
            raise InputError(
                f"cannot read the brand dictionary: {error.strerror}", path=path
            ) from error
        return cls.from_rows(rows, **options)

    def __len__(self) -> int:
        return len(self.entries)

    def __contains__(self, name: object) -> bool:
        return isinstance(name, str) and self.lookup_exact(name) is not None

    def departments(self, brand: str) -> tuple[str, ...]:
        """Return the department ids a canonical brand sells in (empty when unknown)."""
        entry = self.entries.get(brand)
        return entry.departments if entry else ()

    # -- look-up ------------------------------------------------------------------------------

    def lookup_exact(self, text: str) -> str | None:
        """Return the canonical brand spelt ``text`` (by either key), or None."""
        key = normalize_brand(text)
        if not key:
            return None
        found = self._exact.get(key)
        if found is None:
            found = self._compact.get(compact_key(key))
        return found

    def lookup_fuzzy(self, text: str) -> tuple[str, float, str] | None:
        """Return (canonical, score 0..100, alias key) of the closest alias, or None.

        Only aliases with the same first letter and a length within two are compared; names of
        :data:`SHORT_NAME_LENGTH` letters or fewer never match fuzzily. Cached per input.
        """
        compact = compact_key(normalize_brand(text))
        if compact in self._fuzzy_cache:
            return self._fuzzy_cache[compact]
        result = None
        if len(compact) > SHORT_NAME_LENGTH:
            choices = self._window(compact[0], len(compact))
            if choices:
                best = process.extractOne(
                    compact,
                    choices,
                    scorer=OSA.normalized_similarity,
                    score_cutoff=self.fuzzy_threshold / 100.0,
                )
                if best is not None:
                    alias = best[0]
                    result = (self._compact[alias], round(best[1] * 100.0, 1), alias)
        if len(self._fuzzy_cache) > 200_000:
            self._fuzzy_cache.clear()
        self._fuzzy_cache[compact] = result
        return result

    def _window(self, first: str, length: int) -> list[str]:
        """Return the aliases starting with ``first`` whose length is within the window.

        Within two letters, and no further than the threshold lets a match go: every edit
        counts at least the length difference, so lengths m and n can only reach the
        threshold when min(m, n) / max(m, n) is at or above it (an exact prune).
        """
        choices = self._windows.get((first, length))
        if choices is None:
            choices = []
            for size in range(length - _LENGTH_WINDOW, length + _LENGTH_WINDOW + 1):
                if min(size, length) * 100.0 < self.fuzzy_threshold * max(size, length):
                    continue
                choices.extend(self._buckets.get((first, size), ()))
            self._windows[(first, length)] = choices
        return choices

    def _index(self) -> PhraseIndex:
        if self._title_index is None:
            phrases: list[tuple[str, object]] = []
            for key, name in self._exact.items():
                phrases.append((key, name))
            for compact, name in self._compact.items():
                if compact not in self._exact:
                    phrases.append((compact, name))
            self._title_index = PhraseIndex(phrases)
        return self._title_index

    def find_in_text(self, folded: str) -> list[tuple[int, int, str, str]]:
        """Return brand mentions in a folded text as (start, end, alias key, canonical).

        Short names and names that are common words count only at the very start.
        """
        out = []
        for start, end, key, payload in self._index().find(folded):
            weak = len(compact_key(key)) <= SHORT_NAME_LENGTH or key in self.common_words
            if weak and start != 0:
                continue
            out.append((start, end, key, str(payload)))
        return out


def _split_list(cell: str) -> tuple[str, ...]:
    return tuple(part.strip() for part in cell.split(";") if part.strip())


class BrandFinder:
    """Decide the brand of a product from its brand field, title and description.

    Args:
        dictionary: the known brands.
        retailer_names: names of the retailer itself; a brand field holding one is read as empty.
        fuzzy_skip: folded words and phrases of other attributes ("senora", "navy") that a
            title's fuzzy pass never reads as a misspelt brand.
    """

    def __init__(
        self,
        dictionary: BrandDictionary,
        *,
        retailer_names: Iterable[str] = (),
        fuzzy_skip: Iterable[str] = (),
    ) -> None:
        self.dictionary = dictionary
        self.fuzzy_skip = frozenset(fuzzy_skip)
        self.retailer_keys = {normalize_brand(n) for n in retailer_names} - {""}
        self.retailer_keys |= {compact_key(k) for k in self.retailer_keys}
        self._field_cache: dict[str, BrandMatch] = {}
        self._lead_cache: dict[str, BrandMatch | None] = {}

    def from_field(self, value: str) -> BrandMatch | None:
        """Return the brand a non-empty brand field names (None when empty or the retailer)."""
        cached = self._field_cache.get(value)
        if cached is not None:
            return cached if cached.evidence else None
        key = normalize_brand(value)
        match: BrandMatch
        if (
            key in NO_BRAND_VALUES
            or key in self.retailer_keys
            or compact_key(key) in self.retailer_keys
        ):
            match = BrandMatch()
        else:
            exact = self.dictionary.lookup_exact(value)
            if exact is not None:
                match = BrandMatch(exact, FIELD_EXACT_CONFIDENCE, "field exact")
            else:
                fuzzy = self.dictionary.lookup_fuzzy(value)
                if fuzzy is not None:
                    name, score, _alias = fuzzy
                    match = BrandMatch(
                        name, _fuzzy_confidence(score), f"field fuzzy {score:g} '{value.strip()}'"
                    )
                else:
                    shown = " ".join(value.split())
                    match = BrandMatch(
                        shown, UNKNOWN_FIELD_CONFIDENCE, f"field not in dictionary '{shown}'"
                    )
        if len(self._field_cache) > 200_000:
            self._field_cache.clear()
        self._field_cache[value] = match
        return match if match.evidence else None

    def from_text(
        self, folded: str, where: str, raw: str = "", *, fuzzy: bool = True
    ) -> BrandMatch | None:
        """Find a brand in a folded title or description: exact pass, then fuzzy on the lead.

        Args:
            folded: the text, folded by :func:`catmap._text.fold`.
            where: "title" or "description", for the evidence.
            raw: the title as written; when given, capitalised words elsewhere in the title
                are looked up fuzzily too once the lead finds nothing.
            fuzzy: False to stop after the exact pass (see :meth:`fuzzy_in_title`).
        """
        mentions = self.dictionary.find_in_text(folded)
        if mentions:
            # Nearest the start first, then the longest.
            start, end, key, name = min(mentions, key=lambda m: (m[0], m[0] - m[1]))
            confidence = TITLE_EXACT_CONFIDENCE if start == 0 else TITLE_EXACT_CONFIDENCE - 0.1
            spans = tuple((s, e) for s, e, _k, n in mentions if n == name)
            return BrandMatch(name, confidence, f"{where} exact '{key}'", spans)
        if where != "title" or not fuzzy:
            return None
        return self.fuzzy_in_title(folded, raw)

    def fuzzy_in_title(self, folded: str, raw: str = "") -> BrandMatch | None:
        """The fuzzy passes of :meth:`from_text` alone: the lead, then capitalised words."""
        found = self._from_lead(folded)
        if found is None and raw:
            found = self._from_capitalised(raw, folded)
        return found

    def _from_capitalised(self, raw: str, folded: str) -> BrandMatch | None:
        """Fuzzy look-up of capitalised words away from the title start ("... by Brelaxx").

        Only runs of words written with a capital are tried (a brand keeps its capital in a
        title; ordinary words mostly do not), each run's word groups longest first, up to the
        dictionary's longest alias; common words and short names are skipped. Each look-up is
        cached per distinct words by :meth:`BrandDictionary.lookup_fuzzy`.
        """
        if not _HAS_CAPITAL_AFTER_START.search(raw):
            return None
        dictionary = self.dictionary
        skip = dictionary.common_words
        for run in _CAPITALISED_RUN.findall(raw):
            words = fold(run).split()
            for first in range(len(words)):
                for n in range(min(dictionary.max_words, len(words) - first), 0, -1):
                    candidate = " ".join(words[first:first + n])
                    if candidate in self.fuzzy_skip or n == 1 and (
                        candidate in skip or candidate in _COMMON_LEAD_WORDS
                    ):
                        continue
                    if len(candidate) - n + 1 <= SHORT_NAME_LENGTH:
                        continue
                    fuzzy = dictionary.lookup_fuzzy(candidate)
                    if fuzzy is None:
                        continue
                    start = f" {folded} ".find(f" {candidate} ")
                    if start < 0:
                        continue
                    name, score, _alias = fuzzy
                    return BrandMatch(
                        name,
                        _fuzzy_confidence(score) - 0.2,
                        f"title fuzzy {score:g} '{candidate}'",
                        ((start, start + len(candidate)),),
                    )
        return None

    def _from_lead(self, folded: str) -> BrandMatch | None:
        tokens = folded.split(" ", 3)[:3]
        lead = " ".join(tokens)
        if lead in self._lead_cache:
            return self._lead_cache[lead]
        found: BrandMatch | None = None
        for n in (3, 2, 1):
            if n > len(tokens) or n > self.dictionary.max_words:
                continue
            words = tokens[:n]
            if n == 1 and words[0] in self.dictionary.common_words:
                continue
            candidate = " ".join(words)
            if candidate in self.fuzzy_skip:
                continue
            fuzzy = self.dictionary.lookup_fuzzy(candidate)
            if fuzzy is not None:
                name, score, _alias = fuzzy
                found = BrandMatch(
                    name,
                    _fuzzy_confidence(score) - 0.1,
                    f"title fuzzy {score:g} '{candidate}'",
                    ((0, len(candidate)),),
                )
                break
        if len(self._lead_cache) > 200_000:
            self._lead_cache.clear()
        self._lead_cache[lead] = found
        return found

    def find(self, brand_field: str, folded_title: str, folded_description: str = "") -> BrandMatch:
        """Return the product's brand: the field if it names one, else the title, else nothing."""
        from_field = self.from_field(brand_field) if brand_field else None
        if from_field is not None:
            spans = tuple(
                (s, e)
                for s, e, _k, n in self.dictionary.find_in_text(folded_title)
                if n == from_field.brand
            )
            return BrandMatch(from_field.brand, from_field.confidence, from_field.evidence, spans)
        found = self.from_text(folded_title, "title")
        if found is None and folded_description:
            found = self.from_text(folded_description, "description")
            if found is not None:
                found = BrandMatch(found.brand, found.confidence - 0.1, found.evidence)
        return found or BrandMatch(evidence="no brand found")


# A run of capitalised words ("Brelaxx", "Ash Mill", "BRELAXX") not at the very start of a
# title (the lead pass has read that). Upper-case letters of the four languages.
_UPPER = "A-ZÀ-ÖØ-Þ"
_CAPITALISED_RUN = re.compile(rf"(?<=\s)[{_UPPER}][\w'’&-]*(?:\s+[{_UPPER}][\w'’&-]*)*")
_HAS_CAPITAL_AFTER_START = re.compile(rf"\s[{_UPPER}]")


def _fuzzy_confidence(score: float) -> float:
    # 80 → 0.6, 100 → 0.9: a fuzzy hit is never as sure as an exact one.
    return round(0.6 + 0.3 * max(0.0, score - FUZZY_THRESHOLD) / (100.0 - FUZZY_THRESHOLD), 3)


# -- new-brand discovery ---------------------------------------------------------------------

# Words that start titles without being brands (the four languages); common practice, no source.
_COMMON_LEAD_WORDS = frozenset(
    fold(w)
    for w in (
        "the a an new set pack of with for and in on by my our your this premium classic "
        "original deluxe mini large small women's men's kids girls boys unisex baby ladies "
        "le la les un une des du de pour avec nouveau nouvelle "
        "der die das ein eine mit für neu neue damen herren kinder "
        "el los las una unos con para nuevo nueva mujer hombre "
        "item sale bestseller best top hot free limited exclusive gift offer deal promo "
        "prix promo offre livraison soldes angebot bestseller oferta rebajas chollo envio "
        "online gratis versand exclusive exklusiv refurbished"
    ).split()
)
_CAPITALISED = re.compile(r"^[A-ZÀ-ÖØ-Þ][\w'’&-]*$")


@dataclass
class BrandCandidate:
    """A name that repeats in a feed but is not in the dictionary."""

    name: str
    count: int = 0
    source: str = ""  # "brand field" or "title"
    examples: list[str] = field(default_factory=list)


class BrandCandidates:
    """Collect unknown brand names that repeat over a feed.

    Args:
        dictionary: the known brands.
        retailer_names: the retailer's own names (never candidates).
        common_words: extra ordinary words that are never candidates.
    """

    def __init__(
        self,
        dictionary: BrandDictionary,
        *,
        retailer_names: Iterable[str] = (),
        common_words: Iterable[str] = (),
    ) -> None:
        self.dictionary = dictionary
        self.retailer_keys = {normalize_brand(n) for n in retailer_names} - {""}
        self.common_words = _COMMON_LEAD_WORDS | dictionary.common_words | {
            fold(w) for w in common_words
        }
        self._seen: dict[str, BrandCandidate] = {}
        self._known_cache: dict[str, bool] = {}

    def _known(self, key: str) -> bool:
        known = self._known_cache.get(key)
        if known is None:
            known = (
                key in self.retailer_keys
                or self.dictionary.lookup_exact(key) is not None
                or self.dictionary.lookup_fuzzy(key) is not None
            )
            self._known_cache[key] = known
        return known

    def _count(self, name: str, source: str, title: str) -> None:
        key = normalize_brand(name)
        if key in NO_BRAND_VALUES or self._known(key):
            return
        candidate = self._seen.get(key)
        if candidate is None:
            candidate = self._seen[key] = BrandCandidate(name, 0, source)
        candidate.count += 1
        if len(candidate.examples) < 3 and title not in candidate.examples:
            candidate.examples.append(title)

    def add(self, brand_field: str, title: str) -> None:
        """Count one product's brand field (when set) or its leading capitalised title words."""
        value = " ".join(brand_field.split())
        if value:
            self._count(value, "brand field", title)
            return
        words = title.split()[:2]
        lead: list[str] = []
        for word in words:
            if not _CAPITALISED.match(word) or fold(word) in self.common_words:
                break
            lead.append(word.strip("-'’"))
        if not lead:
            return
        mentions = self.dictionary.find_in_text(fold(title))
        if mentions and mentions[0][0] == 0:
            return
        self._count(" ".join(lead), "title", title)

    def candidates(self, min_count: int = 5) -> list[BrandCandidate]:
        """Return the names seen at least ``min_count`` times, most frequent first."""
        found = [c for c in self._seen.values() if c.count >= min_count]
        return sorted(found, key=lambda c: (-c.count, c.name.lower()))


# -- the dictionary file -----------------------------------------------------------------------

DICTIONARY_FILE = "brands.csv"
_DEMO_DICTIONARY = Path(__file__).resolve().parent.parent.parent / "feeds_demo" / DICTIONARY_FILE
_HEADER = ("brand", "variants", "departments")


def demo_dictionary_path() -> Path:
    """Return the demo brand dictionary shipped in ``feeds_demo/brands.csv``."""
    return _DEMO_DICTIONARY


def project_dictionary_path(project: str | Path) -> Path:
    """Return the project's own brand dictionary, ``<project>/brands.csv`` (may not exist)."""
    return Path(project) / DICTIONARY_FILE


def dictionary_in_use(project: str | Path, given: str | Path | None = None) -> Path | None:
    """Return the dictionary to read: the given one, the project's, or None.

    The demo dictionary is read only by the project of ``catmap demo``: its invented brands
    include ordinary words, which would come out as brands on a real feed.
    """
    from catmap.project import is_demo_project

    if given is not None:
        return Path(given)
    candidates = [project_dictionary_path(project)]
    if is_demo_project(project):
        candidates.append(demo_dictionary_path())
    for path in candidates:
        if path.exists():
            return path
    return None


def append_brand(
    path: str | Path,
    name: str,
    *,
    variants: Iterable[str] = (),
    departments: Iterable[str] = (),
    seed_from: str | Path | None = None,
) -> BrandEntry:
    """Add a brand to a dictionary CSV (created, from ``seed_from`` if given, when missing).

    The stored variants are the ones given plus :func:`brand_variants` (case, joined and
    legal-suffix forms).

    Args:
        path: the dictionary CSV.
        name: the canonical name.
        variants: other spellings seen in feeds.
        departments: department node ids it sells in.
        seed_from: a dictionary to copy when ``path`` does not exist yet.

    Returns:
        The entry written.

    Raises:
        InputError: the name is empty or already in the dictionary (as a brand or a variant).
    """
    name = " ".join(name.split())
    if not normalize_brand(name):
        raise InputError("a brand name needs letters or digits", field="brand")
    path = Path(path)
    if not path.exists():
        path.parent.mkdir(parents=True, exist_ok=True)
        if seed_from is not None and Path(seed_from).exists():
            write_bytes_atomic(path, Path(seed_from).read_bytes())
        else:
            with atomic_open(path, "w", encoding="utf-8", newline="") as handle:
                csv.writer(handle).writerow(_HEADER)
    existing = BrandDictionary.from_csv(path)
    known = existing.lookup_exact(name)
    if known is not None:
        raise InputError(
            f"'{name}' is already in the brand dictionary as '{known}'",
            path=path,
            hint="edit the file to change an existing brand",
        )
    all_variants = list(dict.fromkeys([*(" ".join(v.split()) for v in variants if v.strip()),
                                       *brand_variants(name)]))
    entry = BrandEntry(name, tuple(v for v in all_variants if v != name), tuple(departments))
    text = path.read_text(encoding="utf-8")
    # The dictionary is a user-editable file that a spreadsheet may open: every cell is
    # neutralised against formulas (and restored when read, see BrandDictionary.from_csv).
    # The whole file is rewritten beside and renamed, so a crash never leaves half a row.
    with atomic_open(path, "w", encoding="utf-8", newline="") as handle:
        handle.write(text)
        if text and not text.endswith("\n"):
            handle.write("\n")
        csv.writer(handle).writerow(
            [
                neutralise_cell(cell)
                for cell in (entry.name, ";".join(entry.variants), ";".join(entry.departments))
            ]
        )
    return entry
