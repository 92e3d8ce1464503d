"""Brands no list knows: learn them from a whole feed, then find them product by product.

A brand that is in no dictionary still shows itself in a feed: retail titles put it in a few
fixed places ("… by X", "X: …", "… | X", "X - …", "(X)", the first words), and a brand recurs
there across many products of different kinds, while an ordinary word in the same place does
not. :class:`FeedBrandLearner` makes one pass over a feed's products (or a sample of them):

- it reads every brand field value and every title's positional candidates;
- it keeps a title candidate only when it recurs as a brand does (in at least
  ``min_products`` products, across more than one node or kind of product, in the same
  position), or when the brand field names it on other products of the feed;
- it puts field values and kept candidates in a :class:`~catmap.attributes.registry.BrandRegistry`
  (spellings joined, typos clustered); brands the dictionary does not know stay
  ``candidate`` until a person confirms them;
- it reports the retailer's own name when one value sits on most products across many
  departments, or matches the feed's name.

The fitted learner is then given to :class:`catmap.attributes.AttributeExtractor`, which asks
it (:meth:`FeedBrandLearner.find_in_title`, :meth:`FeedBrandLearner.resolve_field`) whenever
the dictionary cannot name a product's brand.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Container, Iterable, Iterator
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from rapidfuzz.distance import OSA

from catmap._text import PhraseIndex, fold
from catmap.attributes.audience import LEXICON_WORDS
from catmap.attributes.brand import (
    _COMMON_LEAD_WORDS,
    NO_BRAND_VALUES,
    BrandDictionary,
    BrandMatch,
    normalize_brand,
)
from catmap.attributes.registry import (
    CANDIDATE,
    FIRST_LETTER_GUARD,
    MIN_TYPO_KEY,
    BrandRegistry,
    brand_key,
    clean_spelling,
)
from catmap.errors import ModelNotTrained
from catmap.feeds.colour import COLOUR_WORDS
from catmap.records import Product

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree

# Shown at the end of the evidence of a brand that no person has confirmed yet.
CANDIDATE_MARK = "[candidate]"

# The value that sits on more than this share of a feed's branded products, across at least
# RETAILER_DEPARTMENTS departments, is the retailer's own name (a brand's own shop sells one
# brand but in few departments; a general retailer's real brands each hold a small share).
# Common practice, no source.
RETAILER_SHARE = 0.3
RETAILER_DEPARTMENTS = 3

# Confidence of a brand learned from the feed: below a dictionary's exact match (0.9-0.98),
# above an unknown brand field passed through (0.5).
LEARNED_TITLE_CONFIDENCE = 0.7
LEARNED_FIELD_CONFIDENCE = 0.75

_UPPER = "A-ZÀ-ÖØ-Þ"
_NAME = rf"[{_UPPER}0-9][\w'’&.+-]*(?:\s+(?:&\s+)?[{_UPPER}0-9][\w'’&.+-]*){{0,2}}"
# (pattern name, regex with one group: the candidate). Order: the most explicit first.
_PATTERNS: tuple[tuple[str, re.Pattern[str]], ...] = (
    ("by", re.compile(rf"(?:^|\s)(?:by|By|BY|von|par|door)\s+({_NAME})\s*(?:[-–—|,(]|$)")),
    ("pipe", re.compile(r"\|\s*([^|]{2,40}?)\s*$")),
    ("colon", re.compile(r"^\s*([^:|]{2,40}?)\s*:\s+\S")),
    ("dash", re.compile(r"^\s*([^|:]{2,40}?)\s+[-–—]\s+\S")),
    ("brackets", re.compile(r"\(([^()]{2,40})\)\s*$")),
)
_MAX_WORDS = 4
_LEAD_WORDS = 3
# An n-word lead is one name when it is nearly as frequent as its first n-1 words: "Bench
# Low ..." follows "Bench" every time, "Benchlow Wool ..." only on the wool products.
_LEAD_STAY = 0.6
_GROUPS_KEPT = 8
_CHILDREN_KEPT = 8
# A title lead whose products name other brands in their brand field, at least this many
# different ones on nearly all of them (this share), is a word of the product ("Juego de
# sábanas Peralux", "Funda nórdica Tuvesca"), not a brand: a brand's own products do not name
# brand after brand in that field. A product line names one brand there, so it stays.
_LEAD_OTHER_BRANDS = 3
_LEAD_OTHER_SHARE = 0.8

# Words that open titles without naming a brand, beyond the lead words of brand.py: materials
# and plain adjectives (seven languages); common practice, no source.
_PLAIN_WORDS = frozenset(
    fold(w)
    for w in (
        "wool cotton linen leather silk cashmere denim suede velvet satin lace knit knitted "
        "steel stainless wooden wood bamboo glass ceramic plastic metal rubber canvas organic "
        "vintage modern soft warm light heavy long short slim wide round square large small "
        "laine coton lin cuir soie velours acier bois verre "
        "wolle baumwolle leinen leder seide samt stahl holz glas "
        "lana algodon lino cuero piel seda terciopelo acero madera vidrio "
        "cotone pelle seta velluto acciaio legno vetro "
        "wol katoen linnen leer zijde fluweel staal hout glazen "
        "algodao linho couro seda veludo aco madeira vidro"
    ).split()
)
# Words that never start a brand: articles and prepositions, and shop words (references,
# offers, news) in the seven languages; common practice, no source.
_SHOP_WORDS = _COMMON_LEAD_WORDS | frozenset(
    fold(w)
    for w in (
        "il lo gli una uno con per di da del della het een voor met van de o os as um uma "
        "com para do da nuovo nuova nieuw nieuwe novo nova "
        "ref art nr no sku ean item code model modele modell modelo modello "
        "promo promotion sale offer deal new neu nouveau nouveaute meilleure vente prix choc "
        "top best bestseller angebot aktion sonderangebot oferta ofertas novedad rebaja "
        "offerta offerte novita saldi sconto aanbieding actie nieuw korting "
        "promocao novidade desconto liquidacao exclusif exklusiv esclusivo exclusivo "
        "exclusivite web edition limitee limited livraison offerte gratuite lot pack set kit "
        "version edicion edizione uitvoering edicao mas vendido limitierte limitata limitada "
        "gelimiteerde"
    ).split()
)
# Labels a feed puts before a value ("Style: cordless - drill", "Größe: 41 / Farbe: rot",
# "P/N H65194 ..."): the names of product attributes and of part numbers, in the seven
# languages. In a brand's place they recur like one, across every kind of product, so they are
# ruled out by name; common practice, no source.
_LABEL_WORDS = frozenset(
    fold(w)
    for w in (
        "size colour color style material pattern type capacity length width height weight "
        "volume finish shape version variant edition format "
        "taille couleur coloris matiere motif forme longueur largeur hauteur poids contenance "
        "groesse grosse farbe stil muster form laenge lange breite hoehe hohe gewicht inhalt "
        "ausfuehrung ausfuhrung "
        "talla color estilo tipo forma longitud ancho alto peso capacidad acabado "
        "taglia colore stile materiale tipo forma lunghezza larghezza altezza peso capacita "
        "finitura "
        "maat kleur stijl materiaal vorm lengte breedte hoogte gewicht inhoud uitvoering "
        "tamanho cor estilo tipo formato comprimento largura altura peso capacidade acabamento"
    ).split()
)
# Part-number labels, as folded phrases ("P/N" folds to "p n").
_CODE_LABELS = frozenset(
    fold(w) for w in ("p/n", "s/n", "pn", "part no", "part nr", "art nr", "art-nr", "ref no")
)
_ATTRIBUTE_WORDS = LEXICON_WORDS | frozenset(
    fold(word) for by_lang in COLOUR_WORDS.values() for words in by_lang.values() for word in words
)


@dataclass(frozen=True, slots=True)
class RetailerFinding:
    """The retailer's own name found in a feed's brand field.

    Attributes:
        name: the value as most often written.
        share: the share of products with a brand field that hold it.
        departments: in how many departments (or retailer categories) it sits.
        reason: "share" (most products, many departments) or "feed name".
    """

    name: str
    share: float
    departments: int
    reason: str


@dataclass
class _Seen:
    count: int = 0
    capitalised: int = 0
    groups: set[str] = field(default_factory=set)
    spellings: Counter[str] = field(default_factory=Counter)

    def add(self, spelling: str, group: str) -> None:
        self.count += 1
        # A brand keeps its capital in a title; a product phrase in the same place mostly not.
        self.capitalised += not spelling[:1].islower()
        if len(self.groups) < _GROUPS_KEPT:
            self.groups.add(group)
        self.spellings[spelling] += 1


@dataclass(frozen=True, slots=True)
class TitleCandidate:
    """A place in a title where a brand may sit: pattern, spelling, key, character span."""

    pattern: str
    spelling: str
    key: str
    start: int
    end: int


class FeedBrandLearner:
    """Learn a feed's brands (known or not) and its retailer name from its products.

    Args:
        dictionary: the known brands (None: none known).
        tree: the category tree, to count departments of the nodes given to :meth:`fit`.
        feed: the feed's name (file stem or retailer name), compared with brand values.
        min_products: a title candidate must recur in at least this many products.
        min_groups: ... across at least this many nodes (or retailer categories, or kinds of
            product when neither is known).
        retailer_share: see :data:`RETAILER_SHARE`.
        retailer_departments: see :data:`RETAILER_DEPARTMENTS`.
        retailer_as_no_brand: the feed's setting: read the retailer's own name as no brand.
        common_words: more ordinary words that are never a brand on their own.
        not_brands: spellings a person said name no brand (rejected in the project's brand
            registry): never learned, from the brand field or from titles.

    Example:
        >>> products = [Product(str(i), f"Dorvanta {w} scarf") for i, w in
        ...             enumerate(["wool", "silk", "linen", "cotton"])]
        >>> learner = FeedBrandLearner(min_products=3).fit(products)
        >>> learner.find_in_title("Dorvanta cashmere scarf").brand
        'Dorvanta'
    """

    def __init__(
        self,
        *,
        dictionary: BrandDictionary | None = None,
        tree: CategoryTree | None = None,
        feed: str = "",
        min_products: int = 3,
        min_groups: int = 2,
        retailer_share: float = RETAILER_SHARE,
        retailer_departments: int = RETAILER_DEPARTMENTS,
        retailer_as_no_brand: bool = False,
        common_words: Iterable[str] = (),
        not_brands: Iterable[str] = (),
    ) -> None:
        self.dictionary = dictionary
        self.tree = tree
        self.feed = feed
        self.min_products = min_products
        self.min_groups = min_groups
        self.retailer_share = retailer_share
        self.retailer_departments = retailer_departments
        self.retailer_as_no_brand = retailer_as_no_brand
        self.common_words = common_words
        self.not_brands = not_brands

    # -- fitting ---------------------------------------------------------------------------

    def fit(
        self, products: Iterable[Product], nodes: Iterable[str | None] | None = None
    ) -> FeedBrandLearner:
        """Read a feed's products (all, or a sample) and learn its brands.

        Args:
            products: the products.
            nodes: the node of each product, in the same order (None: not mapped yet).

        Returns:
            self.

        Raises:
            ValueError: a parameter is out of range.
        """
        if self.min_products < 1 or self.min_groups < 1:
            raise ValueError("min_products and min_groups must be at least 1")
        if not 0.0 < self.retailer_share <= 1.0:
            raise ValueError("retailer_share must be in (0, 1]")
        self.common_ = (
            _SHOP_WORDS | _PLAIN_WORDS | _ATTRIBUTE_WORDS
            | {fold(w) for w in self.common_words}
            | (self.dictionary.common_words if self.dictionary is not None else set())
            | _tree_words(self.tree)
        )
        not_keys = frozenset(brand_key(s) for s in self.not_brands) - {""}
        node_iter: Iterator[str | None] | None = iter(nodes) if nodes is not None else None
        fields: dict[str, _Seen] = {}
        field_departments: dict[str, set[str]] = {}
        department_counts: dict[str, Counter[str]] = {}  # brand key → department → products
        patterns: dict[tuple[str, str], _Seen] = {}
        leads: dict[str, _Seen] = {}
        children: dict[str, set[str]] = {}
        lower_inside: Counter[str] = Counter()
        title_ends: Counter[str] = Counter()
        lead_raw: Counter[str] = Counter()  # every opening of one to three words, unfiltered
        # Per title lead: the products whose brand field names another brand, and up to
        # _LEAD_OTHER_BRANDS of those brands.
        lead_other: Counter[str] = Counter()
        lead_other_keys: dict[str, set[str]] = {}
        branded = total = 0
        for product in products:
            node = next(node_iter, None) if node_iter is not None else None
            group = self._group(product, node)
            department = self._department(product, node)
            total += 1
            value = " ".join(product.brand.split())
            field_key = ""
            if (
                value
                and normalize_brand(value) not in NO_BRAND_VALUES
                and brand_key(value)
                and brand_key(value) not in not_keys
            ):
                branded += 1
                key = field_key = brand_key(value)
                fields.setdefault(key, _Seen()).add(value, department)
                departments = field_departments.setdefault(key, set())
                if len(departments) < 64:
                    departments.add(department)
                if department:
                    department_counts.setdefault(key, Counter())[department] += 1
            title_words = product.title.split()
            for word in title_words[1:]:
                if word[:1].islower():
                    lower_inside[word] += 1
            folded_words = fold(product.title).split()
            if folded_words:
                title_ends[folded_words[-1]] += 1
            opening = [fold(m.group(0)) for m in _lead_words(product.title)]
            for n in range(1, len(opening) + 1):
                lead_raw["".join(opening[:n]).replace(" ", "")] += 1
            longer = ""
            for candidate in self.title_candidates(product.title):
                kind = group or _rest_word(product.title, candidate)
                if candidate.pattern != "lead":
                    patterns.setdefault((candidate.pattern, candidate.key), _Seen()).add(
                        candidate.spelling, kind
                    )
                    continue
                leads.setdefault(candidate.key, _Seen()).add(candidate.spelling, kind)
                if field_key and field_key != candidate.key:
                    lead_other[candidate.key] += 1
                    others = lead_other_keys.setdefault(candidate.key, set())
                    if len(others) < _LEAD_OTHER_BRANDS:
                        others.add(field_key)
                if longer:
                    kids = children.setdefault(candidate.key, set())
                    if len(kids) < _CHILDREN_KEPT:
                        kids.add(longer)
                longer = candidate.key
        self.products_seen_ = total
        self._lower_inside = lower_inside
        self._title_ends = title_ends
        self._lead_raw = lead_raw
        self._lead_other = lead_other
        self._lead_other_keys = lead_other_keys
        self.retailer_ = self._find_retailer(fields, field_departments, branded)
        retailer_key = brand_key(self.retailer_.name) if self.retailer_ else ""

        registry = BrandRegistry(self.dictionary)
        dictionary_counts: Counter[str] = Counter()
        if self.dictionary is not None:
            for key, seen in fields.items():
                known = self.dictionary.lookup_exact(key)
                if known:
                    dictionary_counts[known] += seen.count
        for key, seen in fields.items():
            own = self._own_spelling(key, seen.count, dictionary_counts)
            for spelling, n in seen.spellings.items():
                registry.observe(spelling, feed=self.feed, source="brand field", count=n,
                                 dictionary_typos=not own)
        learned: dict[str, tuple[str, int]] = {}  # key → (pattern, products)
        for (pattern, key), seen in patterns.items():
            if key == retailer_key or key in not_keys:
                continue
            if key in fields or (
                self._recurs(seen)
                and (pattern not in ("colon", "dash") or not self._ends_titles(seen))
            ):
                if learned.get(key, ("", 0))[1] < seen.count:
                    learned[key] = (pattern, seen.count)
        for key, seen in leads.items():
            if key == retailer_key or key in not_keys or not self._lead_is_name(
                key, seen, leads, fields, children.get(key, set())
            ):
                continue
            if learned.get(key, ("", 0))[1] < seen.count:
                learned[key] = ("lead", seen.count)
        for key, (pattern, _n) in learned.items():
            seen = patterns.get((pattern, key)) or leads[key]
            for spelling, n in seen.spellings.items():
                registry.observe(spelling, feed=self.feed, source=f"title {pattern}", count=n)
        self.typo_joins_ = registry.cluster_typos()
        # Departments are added after the typos are joined: within one feed they are the
        # retailer's own categories, too uneven to keep a typo apart from its brand.
        for key, counts in department_counts.items():
            found = registry.resolve(key)
            if found is not None:
                for department, n in counts.items():
                    found.departments[department] = found.departments.get(department, 0) + n
        self.registry_ = registry
        self.learned_ = {key: registry.canonical(key) for key in learned}
        self._blocks: dict[str, list[str]] = {}
        for key in self.learned_:
            if len(key) >= MIN_TYPO_KEY:
                for i in range(len(key)):
                    self._blocks.setdefault(key[:i] + key[i + 1:], []).append(key)
                self._blocks.setdefault(key, []).append(key)
        self._pattern = {key: pattern for key, (pattern, _n) in learned.items()}
        phrases: dict[str, str] = {}
        for key in self.learned_:
            phrases.setdefault(key, key)  # the joined form: "benchlow" for "Bench Low"
            brand = registry.resolve(key)
            for spelling in brand.variants if brand is not None else ():
                if brand_key(spelling) == key:
                    phrases.setdefault(normalize_brand(spelling), key)
        self._index = PhraseIndex(phrases.items())
        self._lead_cache: dict[str, BrandMatch | None] = {}
        return self

    def _group(self, product: Product, node: str | None) -> str:
        if node:
            return node
        return " / ".join(product.category_path)

    def _department(self, product: Product, node: str | None) -> str:
        if node and self.tree is not None and node in self.tree:
            return self.tree.department(node).id
        return product.category_path[0] if product.category_path else ""

    def _recurs(self, seen: _Seen) -> bool:
        return (
            seen.count >= self.min_products
            and len(seen.groups) >= self.min_groups
            and 2 * seen.capitalised >= seen.count
        )

    def _own_spelling(self, key: str, count: int, dictionary_counts: Counter[str]) -> bool:
        """A spelling the dictionary knows only as a typo, written on many products of the
        feed, more often than the dictionary brand itself: the feed's own brand."""
        if self.dictionary is None or self.dictionary.lookup_exact(key) is not None:
            return False
        fuzzy = self.dictionary.lookup_fuzzy(key)
        if fuzzy is None:
            return False
        return count >= self.min_products and count > dictionary_counts.get(fuzzy[0], 0)

    def _ends_titles(self, seen: _Seen) -> bool:
        """A product phrase: its last word ends titles as often as the phrase opens them
        ("Yoga mat ..." / "... yoga mat"); a brand opening titles seldom ends them."""
        last = fold(seen.spellings.most_common(1)[0][0]).split()[-1]
        return 2 * self._title_ends.get(last, 0) >= seen.count

    def _lead_is_name(
        self,
        key: str,
        seen: _Seen,
        leads: dict[str, _Seen],
        fields: dict[str, _Seen],
        children: set[str],
    ) -> bool:
        if key in fields:
            return True  # the brand field names it on other products
        if not self._recurs(seen):
            return False
        if (
            len(self._lead_other_keys.get(key, ())) >= _LEAD_OTHER_BRANDS
            and self._lead_other[key] >= _LEAD_OTHER_SHARE * seen.count
        ):
            return False  # the brand field names brand after brand on its products
        spelling = seen.spellings.most_common(1)[0][0]
        words = fold(spelling).split()
        if words[-1] in self.common_ or words[0] in LEXICON_WORDS or self._ends_titles(seen):
            return False
        if len(words) == 1:
            # An ordinary word opens titles too ("Klappbar ..."), but inside titles it is
            # written in lower case; a brand keeps its capital wherever it stands.
            inside = sum(self._lower_inside.get(s.lower(), 0) for s in seen.spellings)
            if 2 * inside >= seen.capitalised:
                return False
        if len(words) > 1:
            # Against every title opening with the same first words, not only those kept as
            # candidates: "Azul marino chef ..." is one of many "Azul marino ..." titles.
            before = self._lead_raw.get("".join(words[:-1]), 0)
            if seen.count < _LEAD_STAY * before:
                return False
        # A longer lead that stays as frequent is the name ("Bench Low" over "Bench").
        for longer_key in children:
            longer = leads[longer_key]
            if longer.count >= _LEAD_STAY * seen.count and self._recurs(longer):
                longer_words = fold(longer.spellings.most_common(1)[0][0]).split()
                if (
                    len(longer_words) == len(words) + 1
                    and longer_words[:-1] == words
                    and longer_words[-1] not in self.common_
                ):
                    return False
        return True

    def _find_retailer(
        self, fields: dict[str, _Seen], departments: dict[str, set[str]], branded: int
    ) -> RetailerFinding | None:
        if not fields:
            return None
        feed_key = brand_key(self.feed)
        feed_words = {brand_key(w) for w in fold(self.feed).split() if len(w) >= 4}
        key, seen = max(fields.items(), key=lambda item: (item[1].count, item[0]))
        share = seen.count / max(1, branded)
        spread = len(departments.get(key, set()) - {""})
        name = seen.spellings.most_common(1)[0][0]
        if feed_key:
            for other, other_seen in fields.items():
                if other == feed_key or other in feed_words:
                    other_share = other_seen.count / max(1, branded)
                    spelling = other_seen.spellings.most_common(1)[0][0]
                    return RetailerFinding(
                        spelling, round(other_share, 4),
                        len(departments.get(other, set()) - {""}), "feed name",
                    )
        if share > self.retailer_share and spread >= self.retailer_departments:
            return RetailerFinding(name, round(share, 4), spread, "share")
        return None

    # -- positional candidates ---------------------------------------------------------------

    def title_candidates(self, title: str) -> list[TitleCandidate]:
        """Return the places in a title where a brand may sit, the most explicit first.

        The patterns: "… by X" (also "von", "par", "door"), "… | X", "X: …", "X - …", "(X)"
        at the end, and the first one to three words (after up to two opening shop or
        audience words: "Damen Benchlow ...", "New Benchlow ..."). A candidate of more than
        four words, starting with a shop word, or made of ordinary words only, is left out.
        """
        common = getattr(self, "common_", _SHOP_WORDS)
        out: list[TitleCandidate] = []
        for name, pattern in _PATTERNS:
            found = pattern.search(title)
            if found is None:
                continue
            candidate = _candidate(name, found.group(1), found.start(1), found.end(1), common)
            if candidate is not None:
                out.append(candidate)
        words = _lead_words(title)
        seen: set[str] = set()
        for n in range(len(words), 0, -1):
            start, end = words[0].start(), words[n - 1].end()
            text = title[start:end].rstrip(",;:-–—|")
            candidate = _candidate("lead", text, start, start + len(text), common)
            if candidate is not None and candidate.key not in seen:
                seen.add(candidate.key)
                out.append(candidate)
        return out

    # -- using what was learned --------------------------------------------------------------

    def _check(self) -> None:
        if not hasattr(self, "registry_"):
            raise ModelNotTrained("the feed's brands are not learned yet: call fit() first")

    def is_retailer(self, value: str) -> bool:
        """Whether a brand field value is the retailer's own name found in the feed."""
        self._check()
        return self.retailer_ is not None and brand_key(value) == brand_key(self.retailer_.name)

    def resolve_field(self, value: str) -> BrandMatch | None:
        """Return the registry's brand for a brand field value the dictionary did not know.

        Returns None for the retailer's own name when the feed's setting reads it as no
        brand, and for a value never seen in the feed.
        """
        self._check()
        if self.retailer_as_no_brand and self.is_retailer(value):
            return None
        brand = self.registry_.resolve(value)
        if brand is None:
            return None
        shown = " ".join(value.split())
        mark = f" {CANDIDATE_MARK}" if brand.status == CANDIDATE else ""
        return BrandMatch(
            brand.name,
            LEARNED_FIELD_CONFIDENCE if brand.count >= self.min_products else 0.5,
            f"field not in dictionary '{shown}' → '{brand.name}'{mark}",
        )

    def find_in_title(
        self, title: str, folded: str | None = None, *, typos: bool = True
    ) -> BrandMatch | None:
        """Find a learned brand in a title: any spelling seen of it, else a one-letter typo
        of it at the opening of the title.

        Args:
            title: the title as written.
            folded: the same, folded (computed when not given).
            typos: False to look for the spellings seen only.

        Returns:
            The brand with its span in the folded title, or None.
        """
        self._check()
        if not self.learned_:
            return None
        folded = fold(title) if folded is None else folded
        mentions = self._index.find(folded)
        if mentions and title != title.lower():
            mentions = [m for m in mentions if not self._written_as_a_word(title, m)]
        if mentions:
            start, end, _phrase, payload = min(mentions, key=lambda m: (m[0], m[0] - m[1]))
            key = str(payload)
            name, pattern = self.learned_[key], self._pattern[key]
            where = pattern if start == 0 or pattern != "lead" else "learned"
            return BrandMatch(
                name,
                LEARNED_TITLE_CONFIDENCE if where != "learned" else LEARNED_TITLE_CONFIDENCE - 0.1,
                f"title {where} '{folded[start:end]}'{self._mark(name)}",
                ((start, end),),
            )
        if not typos:
            return None
        # One-letter typos, at the opening only (folded words: no second fold of the title).
        words = folded.split(" ", _LEAD_SKIP + _LEAD_WORDS)[: _LEAD_SKIP + _LEAD_WORDS]
        skip = 0
        while skip < _LEAD_SKIP and skip < len(words) - 1 and (
            words[skip] in _SHOP_WORDS or words[skip] in LEXICON_WORDS
        ):
            skip += 1
        words = words[skip:skip + _LEAD_WORDS]
        opening = " ".join(words)
        if opening in self._lead_cache:
            return self._lead_cache[opening]
        found: BrandMatch | None = None
        common = self.common_
        for n in range(len(words), 0, -1):
            if all(word in common for word in words[:n]):
                continue  # ordinary words ("linen ...") are no misspelt brand
            key = self._typo_of("".join(words[:n]))
            if key:
                found = self._match(key, self._pattern[key], folded, " ".join(words[:n]))
                break
        if len(self._lead_cache) > 200_000:
            self._lead_cache.clear()
        self._lead_cache[opening] = found
        return found

    def _written_as_a_word(self, title: str, mention: tuple[int, int, str, object]) -> bool:
        """Return whether a mention past the title's start is written all in lower case in a
        title that has capitals, of a brand the feed writes with capitals: "Wreath with real
        pinecone" holds the word, not the brand Pinecone."""
        start, _end, phrase, payload = mention
        if start == 0:
            return False
        name = self.learned_[str(payload)]
        if name == name.lower():
            return False
        pattern = r"[\W_]*".join(re.escape(word) for word in phrase.split())
        written = re.findall(rf"(?<![^\W_]){pattern}(?![^\W_])", title, re.IGNORECASE)
        return bool(written) and all(w == w.lower() for w in written)

    def _typo_of(self, key: str) -> str:
        if len(key) < MIN_TYPO_KEY:
            return ""
        near: set[str] = set()
        for form in {key, *(key[:i] + key[i + 1:] for i in range(len(key)))}:
            near.update(self._blocks.get(form, ()))
        for other in sorted(near):
            if min(len(other), len(key)) < FIRST_LETTER_GUARD and other[0] != key[0]:
                continue
            if OSA.distance(key, other, score_cutoff=1) <= 1:
                return other
        return ""

    def _mark(self, name: str) -> str:
        brand = self.registry_.resolve(name)
        return f" {CANDIDATE_MARK}" if brand is not None and brand.status == CANDIDATE else ""

    def _match(self, key: str, pattern: str, folded: str, spelling: str) -> BrandMatch:
        name = self.learned_[key]
        words = fold(spelling)
        start = f" {folded} ".find(f" {words} ") if words else -1
        spans = ((start, start + len(words)),) if start >= 0 else ()
        return BrandMatch(
            name, LEARNED_TITLE_CONFIDENCE,
            f"title {pattern} '{spelling}'{self._mark(name)}", spans,
        )


def _candidate(
    pattern: str, text: str, start: int, end: int, common: frozenset[str]
) -> TitleCandidate | None:
    # A name of several words may start with an ordinary word ("Copper Quay", "Ash Mill"),
    # never with a shop word; it is no name when all its words are ordinary ("Wool Coat").
    spelling = clean_spelling(text.strip(" \t\"'“”«»"), keep_partnership=True)
    words = fold(spelling).split()
    if not words or len(words) > _MAX_WORDS or words[0] in _SHOP_WORDS or words[0][0].isdigit():
        return None
    if words[0] in _LABEL_WORDS and (len(words) == 1 or pattern == "colon" or ":" in spelling):
        return None  # "Style: ..." labels a value; "Style Quay ..." may still be a name
    if " ".join(words) in _CODE_LABELS:
        return None
    if all(word in common for word in words) or " ".join(words) in common:
        return None
    key = brand_key(spelling)
    if len(key) < 2 or normalize_brand(spelling) in NO_BRAND_VALUES:
        return None
    return TitleCandidate(pattern, spelling, key, start, end)


def _tree_words(tree: CategoryTree | None) -> frozenset[str]:
    # Product words and phrases of the tree (all languages): "coat", "desk lamp", "carte".
    if tree is None:
        return frozenset()
    words: set[str] = set()
    for node in tree:
        for term in tree.all_terms(node.id):
            folded = fold(term).split()
            if folded:
                # The whole term, and its first and last words: the product noun sits at one
                # end ("carte mémoire", "memory card").
                words.update((" ".join(folded), folded[0], folded[-1]))
    return frozenset(words)


_WORD = re.compile(r"\S+")
_LEAD_SKIP = 2


def _lead_words(title: str) -> list[re.Match[str]]:
    words = list(_WORD.finditer(title))
    skip = 0
    while skip < _LEAD_SKIP and skip < len(words) - 1 and (
        fold(words[skip].group(0)) in _SHOP_WORDS or fold(words[skip].group(0)) in LEXICON_WORDS
    ):
        skip += 1
    return words[skip:skip + _LEAD_WORDS]


def _rest_word(title: str, candidate: TitleCandidate) -> str:
    # Without a node or a retailer category, the kind of product stands in: the last plain
    # word of the title once the candidate is taken out ("Benchlow wool coat" → "coat").
    rest = [
        w for w in fold(title[: candidate.start] + " " + title[candidate.end:]).split()
        if w not in _COMMON_LEAD_WORDS and not w[0].isdigit()
    ]
    return rest[-1] if rest else ""


def brand_is_candidate(evidence: str) -> bool:
    """Whether a brand's evidence says it is a candidate no person has confirmed yet."""
    return evidence.endswith(CANDIDATE_MARK)


def brand_status(brand: str, evidence: str, confirmed: Container[str] = ()) -> str:
    """Return how far an extracted brand is trusted (one of :data:`catmap.records.BRAND_STATUSES`).

    Args:
        brand: the brand found ("" for none).
        evidence: the extraction's evidence for it.
        confirmed: canonical names of the brands a person confirmed in the project's brand
            registry (beyond the brand dictionary).

    Returns:
        "none" without a brand; "candidate" for a brand learned from the feed and not
        confirmed yet, or a brand field value nothing knows; "confirmed" for a brand a person
        confirmed; else "dictionary".

    Example:
        >>> brand_status("Dorvanta", "title lead 'dorvanta' [candidate]")
        'candidate'
    """
    if not brand:
        return "none"
    if brand_is_candidate(evidence):
        return "candidate"
    if brand in confirmed:
        return "confirmed"
    # An unknown brand field value passed through as it is (no feed registry resolved it).
    if evidence.startswith("field not in dictionary") and "→" not in evidence:
        return "candidate"
    return "dictionary"
