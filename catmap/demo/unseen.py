"""Feeds of retailers the model never trained on, written in styles the demo's others lack.

Six invented retailers, three in a *validation* part and three in a *test* part, each with a
few thousand labelled products spread over the leaves of tree version 1. They write titles in
ways none of the reference retailers does: other templates ("X by Brand", "Brand: X",
"X | Brand", "Brand - X", "X (Brand)", attribute-first, very short), synonyms the tree's
keywords lack, short titles in French, German, Spanish and Italian, ALL CAPS and other SKU
codes; their brands are mostly invented here and absent from ``brands.csv``, written with legal
forms, ®/™ marks, split or joined words, case changes and one-letter typos, sometimes only in
the title, sometimes with the retailer's own name in the brand field; a stated share of their
category paths is garbage or misleading (numbers, internal codes, sale buckets, another
department).

The part is built from its own random streams (``catmap-demo-unseen:<seed>:<stream>``), so the
demo world's other files do not change. It is for measuring only: the validation part may be
used to choose settings, the test part never.

Example:
    >>> paths = ensure_unseen_world(Path("feeds_demo"))   # doctest: +SKIP
    >>> paths.labelled["test"].name
    'test_labelled.csv'
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import random
import re
from dataclasses import dataclass, field
from decimal import Decimal
from pathlib import Path
from typing import TYPE_CHECKING
from xml.sax.saxutils import escape

from catmap._atomic import write_bytes_atomic
from catmap.demo import _unseen_vocab as U
from catmap.demo import _vocab as V
from catmap.demo._blocklist import is_blocked
from catmap.demo._names import Brand, _gender_tokens, _misspell, _syllable_name
from catmap.demo._products import LeafInfo, _fits_audience, format_price, leaf_infos
from catmap.demo._retailers import ALL_RETAILERS
from catmap.demo._stamp import build_facts, generated_dir, stamp_matches, write_stamp

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "PARTS",
    "UNSEEN_COLUMNS",
    "UNSEEN_RETAILERS",
    "UnseenPaths",
    "UnseenProduct",
    "UnseenRetailer",
    "build_unseen_world",
    "ensure_unseen_world",
    "unseen_paths",
    "unseen_products",
]

PARTS = ("validation", "test")
PRODUCTS_PER_RETAILER = 2500
UNKNOWN_BRANDS_PER_RETAILER = 120
# Shares per branded product (the rest: the brand field holds a spelling of the brand).
P_UNBRANDED = 0.08
P_KNOWN_BRAND = 0.3
P_BRAND_ONLY_IN_TITLE = 0.15
P_OWN_NAME_IN_BRAND = 0.07
P_VARIANT_SPELLING = 0.5
# Share of titles drawn from the tree's parent node words instead of the leaf's.
P_PARENT_TERM = 0.04
UNSEEN_COLUMNS = ("product_id", "retailer", "title", "description", "brand",
                  "retailer_category", "price", "currency", "gtin", "gender", "colour", "size",
                  "url", "image_url", "availability", "gold_node", "gold_brand",
                  "gold_brand_known", "gold_who", "gold_age", "gold_restriction",
                  "gold_title_lang", "gold_title_style", "gold_synonyms", "gold_path_kind")
_TEMPLATES = ("by", "colon", "bar", "dash", "paren", "attribute_first", "short", "plain")


@dataclass(frozen=True, slots=True)
class UnseenRetailer:
    """One invented retailer of the unseen part and its house style (shares per product).

    Attributes:
        name: display name (also what it writes into the brand field of its own label).
        slug: file and web-address stem.
        part: ``validation`` or ``test``.
        langs: title language → weight (``en``, ``fr``, ``de``, ``es``, ``it``).
        path_lang: the language of its category paths and columns.
        file_format: ``csv``, ``tsv``, ``jsonl`` or ``xml``.
        id_prefix: product id prefix.
        currency: price currency.
        price_style: see :func:`catmap.demo._products.format_price`.
        category_sep: separator of category levels.
        templates: title template → weight (see :data:`_TEMPLATES`).
        caps_p: ALL CAPS titles.
        sku_p: titles carrying a code.
        synonym_p: English titles whose product words are swapped for synonyms.
        bad_path_p: garbage or misleading category paths.
        gender_column: whether it has a gender column (it then sometimes carries the cue).
    """

    name: str
    slug: str
    part: str
    langs: dict[str, float]
    path_lang: str
    file_format: str
    id_prefix: str
    currency: str
    price_style: str
    category_sep: str
    templates: dict[str, float]
    caps_p: float = 0.1
    sku_p: float = 0.2
    synonym_p: float = 0.4
    bad_path_p: float = 0.3
    gender_column: bool = True
    extra: dict[str, str] = field(default_factory=dict)


UNSEEN_RETAILERS: tuple[UnseenRetailer, ...] = (
    UnseenRetailer("Brackenfold Goods", "brackenfold", "validation", {"en": 0.75, "it": 0.25},
                   "en", "csv", "BKF", "GBP", "symbol", " › ",
                   {"by": 3, "bar": 2, "attribute_first": 1, "plain": 1, "short": 1},
                   caps_p=0.08, sku_p=0.15, synonym_p=0.5, bad_path_p=0.3),
    UnseenRetailer("Maison Pelvarre", "pelvarre", "validation",
                   {"fr": 0.6, "it": 0.2, "en": 0.2}, "fr", "jsonl", "MP-", "EUR", "fr", " / ",
                   {"colon": 2, "paren": 2, "short": 3, "plain": 1}, caps_p=0.05, sku_p=0.1,
                   synonym_p=0.4, bad_path_p=0.25, gender_column=False),
    UnseenRetailer("Orvik Handelshus", "orvik", "validation",
                   {"de": 0.6, "es": 0.2, "en": 0.2}, "de", "xml", "OH", "EUR", "de", " :: ",
                   {"dash": 3, "short": 2, "attribute_first": 1, "plain": 1}, caps_p=0.35,
                   sku_p=0.5, synonym_p=0.4, bad_path_p=0.35),
    UnseenRetailer("Kestrune Depot", "kestrune", "test", {"en": 0.8, "it": 0.2}, "en", "tsv",
                   "KD", "USD", "thousands", " > ",
                   {"attribute_first": 2, "by": 1, "dash": 1, "short": 2, "plain": 1},
                   caps_p=0.3, sku_p=0.45, synonym_p=0.55, bad_path_p=0.3),
    UnseenRetailer("Tienda Salvoria", "salvoria", "test", {"es": 0.6, "it": 0.2, "fr": 0.2},
                   "es", "csv", "TS-", "EUR", "es", " | ",
                   {"bar": 2, "short": 3, "colon": 1, "plain": 1}, caps_p=0.1, sku_p=0.2,
                   synonym_p=0.4, bad_path_p=0.3, gender_column=False),
    UnseenRetailer("Vendoria Casa", "vendoria", "test", {"it": 0.6, "de": 0.2, "en": 0.2}, "en",
                   "jsonl", "VC", "EUR", "es", " >> ",
                   {"paren": 2, "colon": 2, "short": 2, "by": 1}, caps_p=0.15, sku_p=0.3,
                   synonym_p=0.5, bad_path_p=0.3),
)


@dataclass(slots=True)
class UnseenProduct:
    """One product of the unseen part: the retailer's raw fields and the gold labels."""

    product_id: str
    retailer: str
    lang: str
    title: str
    description: str
    brand: str
    retailer_category: str
    price: str
    currency: str
    gtin: str
    gender: str
    colour: str
    size: str
    url: str
    image_url: str
    availability: str
    gold_node: str
    gold_brand: str
    gold_brand_known: bool
    gold_who: str
    gold_age: str
    gold_restriction: str
    # How the product was written (not labels: for slicing the figures by style).
    title_lang: str = ""
    title_style: str = ""
    synonyms: bool = False
    path_kind: str = ""

    def row(self) -> list[str]:
        """The product as a row of :data:`UNSEEN_COLUMNS`."""
        return [self.product_id, self.retailer, self.title, self.description, self.brand,
                self.retailer_category, self.price, self.currency, self.gtin, self.gender,
                self.colour, self.size, self.url, self.image_url, self.availability,
                self.gold_node, self.gold_brand, "true" if self.gold_brand_known else "false",
                self.gold_who, self.gold_age, self.gold_restriction, self.title_lang,
                self.title_style, "true" if self.synonyms else "false", self.path_kind]


@dataclass(frozen=True, slots=True)
class UnseenPaths:
    """Where the unseen part's files are.

    Attributes:
        root: ``<demo folder>/generated/unseen``.
        labelled: part → the labelled CSV of all its retailers (gold columns included).
        feeds: retailer slug → its raw feed file (no gold columns).
    """

    root: Path
    labelled: dict[str, Path]
    feeds: dict[str, Path]

    def all_files(self) -> list[Path]:
        """Every file of the unseen part."""
        return [*self.labelled.values(), *self.feeds.values()]


# What the files were built from (catmap.demo._stamp), beside them.
STAMP = "built-from.json"


def unseen_paths(demo_root: str | Path, *, generated: Path | None = None) -> UnseenPaths:
    """Return the unseen part's file locations under a demo folder (nothing is built).

    Args:
        demo_root: the demo folder.
        generated: its folder of generated files for the tree in use (default
            ``<demo_root>/generated``, the demo tree's; see
            :func:`catmap.demo._stamp.generated_dir`).
    """
    base = (generated or Path(demo_root) / "generated") / "unseen"
    return UnseenPaths(
        root=base,
        labelled={part: base / f"{part}_labelled.csv" for part in PARTS},
        feeds={r.slug: base / r.part / f"{r.slug}.{r.file_format}" for r in UNSEEN_RETAILERS},
    )


def _rng(seed: int, stream: str) -> random.Random:
    return random.Random(f"catmap-demo-unseen:{seed}:{stream}")


# -- words ----------------------------------------------------------------------------------

def _tree_words(tree: CategoryTree) -> frozenset[str]:
    """Every word of every keyword and name of the tree (lower case)."""
    words: set[str] = set()
    for node in tree:
        texts = [node.name, *(t for terms in node.terms.values() for t in terms)]
        for text in texts:
            words.update(re.findall(r"[\w'-]+", text.casefold()))
    return frozenset(words)


def _synonym_table(tree_words: frozenset[str]) -> dict[str, tuple[str, ...]]:
    """Keyword word → synonyms none of whose words the tree uses."""
    table: dict[str, list[str]] = {}
    for family in U.SYNONYMS.values():
        for word, options in family.items():
            known = table.setdefault(word, [])
            known.extend(o for o in options
                         if o not in known and not set(o.casefold().split()) & tree_words)
    return {w: tuple(o) for w, o in table.items() if o}


def _with_synonyms(term: str, table: dict[str, tuple[str, ...]],
                   rng: random.Random) -> str | None:
    words = term.split()
    swapped = [rng.choice(table[w.casefold()]) if w.casefold() in table else w for w in words]
    return " ".join(swapped) if swapped != words else None


def _italian(term: str) -> str | None:
    """An English keyword in Italian: noun first, words without a translation kept."""
    words = term.casefold().split()
    if not words or words[-1] not in U.ITALIAN:
        return None
    head = U.ITALIAN[words[-1]]
    rest = [U.ITALIAN[w] for w in reversed(words[:-1]) if w in U.ITALIAN]
    rest += [w for w in words[:-1] if w not in U.ITALIAN]
    return " ".join([head, *rest])


# -- brands ---------------------------------------------------------------------------------

def _folded(name: str) -> str:
    return re.sub(r"[^a-z0-9]", "", name.casefold())


def _known_spellings(brands: list[Brand]) -> set[str]:
    return {_folded(v) for b in brands for v in (b.name, *b.variants)}


def invent_unseen_brands(count: int, rng: random.Random, taken: set[str]) -> list[Brand]:
    """Invent brands absent from the demo brand list, with the spellings retailers use.

    Args:
        count: how many brands.
        rng: the random source.
        taken: folded spellings already used (the demo brands, the retailers); extended.

    Returns:
        Brands whose every spelling folds to nothing in ``taken``.
    """
    out: list[Brand] = []
    while len(out) < count:
        if rng.random() < 0.4:
            name, split_at = f"{rng.choice(U.BRAND_WORDS_A)} {rng.choice(U.BRAND_WORDS_B)}", 0
        else:
            name, split_at = _syllable_name(rng)
        if (not 4 <= len(name) <= 18 or is_blocked(name) or _gender_tokens(name)
                or _folded(name) in taken):
            continue
        variants = [name.upper(), name.lower(), f"{name} {rng.choice(U.LEGAL_FORMS)}",
                    f"{name}{rng.choice(('®', '™'))}",
                    f"{name.upper()} {rng.choice(U.LEGAL_FORMS)}"]
        if " " in name:
            variants.append(name.replace(" ", ""))
            variants.append(name.replace(" ", "").capitalize())
        elif 3 <= split_at <= len(name) - 3:
            variants.append(name[:split_at] + " " + name[split_at:].capitalize())
        typo = _misspell(name, rng)
        if not _gender_tokens(typo):
            variants.append(typo)
        spellings = {_folded(v) for v in (name, *variants)} - {_folded(name)}
        if spellings & taken or is_blocked(typo):
            continue
        taken.update(spellings | {_folded(name)})
        out.append(Brand(name, tuple(dict.fromkeys(v for v in variants if v != name)), (),
                         split_at))
    return out


# -- products -------------------------------------------------------------------------------

class _Maker:
    """Makes the products of one unseen retailer."""

    def __init__(self, retailer: UnseenRetailer, tree: CategoryTree, leaves: list[LeafInfo],
                 known: list[Brand], unknown: list[Brand],
                 synonyms: dict[str, tuple[str, ...]], rng: random.Random) -> None:
        self.r = retailer
        self.tree = tree
        self.leaves = leaves
        self.by_id = {leaf.id: leaf for leaf in leaves}
        self.known_by_dept: dict[str, list[Brand]] = {}
        for b in known:
            for d in b.departments:
                self.known_by_dept.setdefault(d, []).append(b)
        self.unknown = unknown
        self.synonyms = synonyms
        self.rng = rng

    def _lang(self) -> str:
        langs = sorted(self.r.langs)
        return self.rng.choices(langs, weights=[self.r.langs[k] for k in langs])[0]

    def _term(self, leaf: LeafInfo, lang: str, who: str, age: str) -> tuple[str, str, bool]:
        """The product words, the language they ended up in, whether synonyms replaced some."""
        rng = self.rng
        terms = leaf.parent_terms if rng.random() < P_PARENT_TERM else leaf.own_terms
        usable = [t for t in terms["en"] if _fits_audience(t, who, age)] or list(terms["en"])
        if lang == "it":
            italian = [t for t in (_italian(u) for u in usable) if t]
            if italian:
                return rng.choice(italian), "it", False
            lang = "en"  # no Italian words for this product: the retailer writes English
        if lang == "en":
            term = rng.choice(usable)
            swapped = None
            if rng.random() < self.r.synonym_p:
                swapped = _with_synonyms(term, self.synonyms, rng)
            return swapped or term, "en", swapped is not None
        own = [t for t in terms[lang] if _fits_audience(t, who, age)] or list(terms[lang])
        return rng.choice(own), lang, False

    def _audience(self, leaf: LeafInfo) -> tuple[str, str]:
        who = self.rng.choice(leaf.who) if leaf.who else "not_applicable"
        age = self.rng.choices(leaf.ages, weights=[{"adult": 6, "kids": 2, "baby": 1}.get(a, 1)
                                                   for a in leaf.ages])[0] if leaf.ages else (
            "not_applicable")
        return who, age

    def _audience_word(self, key: tuple[str, str], lang: str) -> str:
        if lang == "it":
            return self.rng.choice(U.ITALIAN_AUDIENCE[key])
        return self.rng.choice(V.AUDIENCE_WORDS[key][lang])

    def _path(self, leaf: LeafInfo) -> tuple[str, str]:
        """The category path and its kind (numeric, code, bucket, other_department, leaf)."""
        rng = self.rng
        sep = self.r.category_sep
        if rng.random() < self.r.bad_path_p:
            kind = rng.random()
            if kind < 0.3:
                depth = rng.choice(U.NUMERIC_PATH_DEPTHS)
                return sep.join(str(rng.randint(1, 40)) for _ in range(depth)), "numeric"
            if kind < 0.5:
                return rng.choice(U.INTERNAL_CODES).format(
                    n=rng.randint(10, 9999), m=rng.randint(1, 99), A=rng.choice("ABCDKMQRTX"),
                    B=rng.choice("ABCDKMQRTX")), "code"
            if kind < 0.75:
                return rng.choice(U.BUCKETS[self.r.path_lang]).replace(" > ", sep), "bucket"
            other = rng.choice([x for x in self.leaves if x.department != leaf.department])
            return sep.join(other.path[self.r.path_lang]), "other_department"
        levels = leaf.path[self.r.path_lang]
        shape = rng.random()
        if shape < 0.5:
            return sep.join(levels), "leaf"
        if shape < 0.8:
            return sep.join((levels[0], levels[-1])), "leaf"
        return levels[-1], "leaf"

    def _brand(self, leaf: LeafInfo) -> tuple[Brand | None, bool]:
        rng = self.rng
        if rng.random() < P_UNBRANDED:
            return None, False
        pool = self.known_by_dept.get(leaf.department, [])
        if pool and rng.random() < P_KNOWN_BRAND:
            return rng.choice(pool), True
        # each unknown brand keeps to a few departments: pick by a stable hash of department
        start = int(hashlib.sha256(leaf.department.encode()).hexdigest()[:6], 16)
        span = max(1, len(self.unknown) // 4)
        return self.unknown[(start + rng.randrange(span)) % len(self.unknown)], False

    def make(self, leaf: LeafInfo, product_id: str) -> UnseenProduct:
        """Generate one product of a leaf."""
        rng = self.rng
        r = self.r
        lang = self._lang()
        who, age = self._audience(leaf)
        term, lang, synonyms = self._term(leaf, lang, who, age)
        shop = r.path_lang
        key = None if who == "not_applicable" and age == "not_applicable" else (
            "unisex" if who == "not_applicable" else who,
            "adult" if age == "not_applicable" else age)
        # The node leaves the audience open: a female / male or a child's product says so.
        needs_cue = key is not None and (
            (who in ("female", "male") and len(leaf.who) > 1)
            or (age in ("kids", "baby") and len(leaf.ages) > 1))
        gender = ""
        aud = ""
        if key is not None and (needs_cue or rng.random() < 0.15):
            in_column = (r.gender_column and key[1] != "baby" and rng.random() < 0.35)
            if in_column:
                gender = (rng.choice(U.ITALIAN_AUDIENCE[key]) if shop == "it"
                          else V.GENDER_FIELD_TIDY[key][shop])
            else:
                aud = self._audience_word(key, lang)

        shade = gold_colour = ""
        if rng.random() < leaf.profile.colour_p * 0.6:
            gold_colour = rng.choice(sorted(V.COLOURS))
            words = U.ITALIAN_COLOURS if lang == "it" else {
                k: v[lang] for k, v in V.COLOURS.items()}
            shade = rng.choice(words[gold_colour])
        size = ""
        if leaf.profile.size_kind not in ("none",) and rng.random() < 0.3 and age not in (
                "kids", "baby"):
            size = rng.choice(V.SIZES[leaf.profile.size_kind])
        mod = ""
        if lang != "it" and leaf.profile.modifiers and rng.random() < 0.35:
            mod = rng.choice(leaf.profile.modifiers)[V.LANGS.index(lang)]

        brand, known = self._brand(leaf)
        brand_field, brand_title = self._brand_fields(brand)
        title, style = self._title(lang, term, aud, shade, size, mod, brand_title)
        if rng.random() < r.sku_p:
            code = rng.choice(U.SKU_FORMS).format(
                n=rng.randint(100, 99999), m=rng.randint(1, 99), c=rng.choice(("BLK", "WHT",
                                                                               "NVY", "01", "XL")),
                A=rng.choice("ABCDEFHKLMRSTX"), B=rng.choice("ABCDEFHKLMRSTX"))
            title = f"{title} {code}" if rng.random() < 0.6 else f"{code} {title}"
            style += "+code"
        if rng.random() < r.caps_p:
            title = title.upper()
            style += "+caps"
        title = " ".join(title.split())

        description = ""
        if lang != "it" and rng.random() < 0.45:
            description = rng.choice(V.DESCRIPTION_OPENERS[lang]).format(
                term=term.lower(), mod=mod or term.lower())
            description = " ".join(description.split())
        value = Decimal(str(round(rng.lognormvariate(0, 0.8) * leaf.profile.price_median, 2)
                            + 0.01))
        restriction = self.tree.restriction(leaf.id) or "none"
        path, path_kind = self._path(leaf)
        availability = (rng.choice(U.ITALIAN_AVAILABILITY) if shop == "it"
                        else rng.choice(V.AVAILABILITY_WORDS[shop]))
        return UnseenProduct(
            product_id=product_id,
            retailer=r.name,
            lang=lang,
            title=title,
            description=description,
            brand=brand_field,
            retailer_category=path,
            price=format_price(value, r.price_style, r.currency, rng.random() < 0.3),
            currency=r.currency,
            gtin=self._gtin(),
            gender=gender,
            colour=shade if shade and rng.random() < 0.5 else "",
            size=size,
            url=f"https://shop.{r.slug}.example/item/{product_id.lower()}",
            image_url=f"https://media.{r.slug}.example/{product_id.lower()}.jpg",
            availability=availability,
            gold_node=leaf.id,
            gold_brand=brand.name if brand else "",
            gold_brand_known=known,
            gold_who=who,
            gold_age=age,
            gold_restriction=restriction,
            title_lang=lang,
            title_style=style,
            synonyms=synonyms,
            path_kind=path_kind,
        )

    def _brand_fields(self, brand: Brand | None) -> tuple[str, str]:
        """The brand field and the spelling written in the title ("" for none)."""
        rng = self.rng
        if brand is None:
            return "", ""
        spelling = (rng.choice(brand.variants) if brand.variants
                    and rng.random() < P_VARIANT_SPELLING else brand.name)
        roll = rng.random()
        if roll < P_BRAND_ONLY_IN_TITLE:
            return "", spelling
        if roll < P_BRAND_ONLY_IN_TITLE + P_OWN_NAME_IN_BRAND:
            return self.r.name, brand.name
        in_title = brand.name if rng.random() < 0.4 else ""
        return spelling, in_title

    def _title(self, lang: str, term: str, aud: str, shade: str, size: str, mod: str,
               brand: str) -> tuple[str, str]:
        """The title and the template it was written with."""
        rng = self.rng
        names = sorted(self.r.templates)
        template = rng.choices(names, weights=[self.r.templates[n] for n in names])[0]
        if template == "short":
            words = [term, aud] if lang in ("fr", "es", "it") else [aud, term]
            phrase = " ".join(w for w in words if w)
            return (f"{brand} {phrase}" if brand else phrase), template
        if lang in ("fr", "es", "it"):
            words = [term, mod, shade, aud]
        else:
            words = [aud, mod, shade, term]
        phrase = " ".join(w for w in words if w)
        if template == "attribute_first":
            labels = U.ATTRIBUTE_LABELS[lang]
            lead = [f"{k}: {v}" for k, v in zip(labels, (shade, size, mod), strict=True) if v]
            head = " / ".join(lead)
            body = " ".join(w for w in (aud, term) if w)
            text = f"{head} - {body}" if head else body
            return (f"{text} ({brand})" if brand else text), template
        if size and rng.random() < 0.5:
            phrase = f"{phrase} {size}"
        if not brand:
            return phrase, "plain"
        return {
            "by": f"{phrase} by {brand}",
            "colon": f"{brand}: {phrase}",
            "bar": f"{phrase} | {brand}",
            "dash": f"{brand} - {phrase}",
            "paren": f"{phrase} ({brand})",
            "plain": f"{brand} {phrase}",
        }[template], template

    def _gtin(self) -> str:
        rng = self.rng
        if rng.random() < 0.3:
            return ""
        from catmap.demo._products import gs1_check_digit

        body = rng.choice(("20", "21", "22", "23", "24", "25")) + "".join(
            rng.choice("0123456789") for _ in range(10))
        return body + str(gs1_check_digit(body))


def _leaf_assignment(leaves: list[LeafInfo], size: int, rng: random.Random) -> list[str]:
    """Leaves for ``size`` products: every leaf once when there is room, the rest weighted."""
    ids = [leaf.id for leaf in leaves]
    first = ids[:] if size >= len(ids) else rng.sample(ids, size)
    weights = [rng.lognormvariate(0, 0.8) for _ in ids]
    rest = rng.choices(ids, weights=weights, k=max(0, size - len(first)))
    out = first + rest
    rng.shuffle(out)
    return out


def unseen_products(tree: CategoryTree, known_brands: list[Brand], *, seed: int = 0,
                    size: int = PRODUCTS_PER_RETAILER) -> dict[str, list[UnseenProduct]]:
    """Generate every unseen retailer's products.

    Args:
        tree: the category tree (version 1 for the demo).
        known_brands: the demo brand list (``brands.csv``); a share of products carries one.
        seed: the seed; the same seed, tree and brands give the same products.
        size: products per retailer.

    Returns:
        Retailer slug → its products, in feed order.
    """
    leaves = leaf_infos(tree)
    tree_words = _tree_words(tree)
    synonyms = _synonym_table(tree_words)
    taken = _known_spellings(known_brands)
    taken |= {_folded(r.name) for r in ALL_RETAILERS} | {_folded(r.name) for r in UNSEEN_RETAILERS}
    brand_rng = _rng(seed, "brands")
    out: dict[str, list[UnseenProduct]] = {}
    for k, retailer in enumerate(UNSEEN_RETAILERS):
        unknown = invent_unseen_brands(UNKNOWN_BRANDS_PER_RETAILER, brand_rng, taken)
        rng = _rng(seed, f"retailer:{retailer.slug}")
        maker = _Maker(retailer, tree, leaves, known_brands, unknown, synonyms, rng)
        by_id = {leaf.id: leaf for leaf in leaves}
        number = 10000 + 7919 * k
        products = []
        for leaf_id in _leaf_assignment(leaves, size, rng):
            number += rng.choice((1, 2, 3, 5))
            products.append(maker.make(by_id[leaf_id], f"{retailer.id_prefix}{number:07d}"))
        out[retailer.slug] = products
    return out


# -- writers ----------------------------------------------------------------------------------

def _delimited(rows: list[list[str]], delimiter: str) -> bytes:
    buf = io.StringIO()
    csv.writer(buf, delimiter=delimiter, lineterminator="\n").writerows(rows)
    return buf.getvalue().encode("utf-8")


# Each retailer's own column names, in the order of UnseenProduct's raw fields.
_RAW_FIELDS = ("product_id", "title", "description", "brand", "retailer_category", "price",
               "currency", "gtin", "gender", "colour", "size", "url", "image_url", "availability")
_COLUMN_NAMES: dict[str, tuple[str, ...]] = {
    "en": ("id", "title", "description", "brand", "category", "price", "currency", "gtin",
           "gender", "colour", "size", "link", "image", "availability"),
    "fr": ("ref", "titre", "description", "marque", "rayon", "prix", "devise", "ean", "genre",
           "couleur", "taille", "lien", "image", "disponibilite"),
    "de": ("artikelnummer", "bezeichnung", "beschreibung", "marke", "kategorie", "preis",
           "waehrung", "ean", "geschlecht", "farbe", "groesse", "link", "bild", "verfuegbarkeit"),
    "es": ("id", "titulo", "descripcion", "marca", "categoria", "precio", "moneda", "ean",
           "genero", "color", "talla", "enlace", "imagen", "disponibilidad"),
}


def _raw(p: UnseenProduct) -> list[str]:
    return [getattr(p, name) for name in _RAW_FIELDS]


def write_feed(retailer: UnseenRetailer, products: list[UnseenProduct], path: Path) -> None:
    """Write one retailer's raw feed (no gold) in its own shape: CSV, TSV, JSON Lines or XML."""
    names = _COLUMN_NAMES[retailer.path_lang]
    keep = [i for i, n in enumerate(_RAW_FIELDS) if retailer.gender_column or n != "gender"]
    header = [names[i] for i in keep]
    rows = [[_raw(p)[i] for i in keep] for p in products]
    path.parent.mkdir(parents=True, exist_ok=True)
    if retailer.file_format in ("csv", "tsv"):
        data = _delimited([header, *rows], "," if retailer.file_format == "csv" else "\t")
    elif retailer.file_format == "jsonl":
        data = "".join(json.dumps(dict(zip(header, row, strict=True)), ensure_ascii=False) + "\n"
                       for row in rows).encode("utf-8")
    else:
        lines = ['<?xml version="1.0" encoding="UTF-8"?>', "<artikelliste>"]
        for row in rows:
            cells = "".join(f"<{h}>{escape(v)}</{h}>" for h, v in zip(header, row, strict=True)
                            if v)
            lines.append(f"  <artikel>{cells}</artikel>")
        lines.append("</artikelliste>")
        data = ("\n".join(lines) + "\n").encode("utf-8")
    _atomic_write(path, data)


def write_labelled(products: list[UnseenProduct], path: Path) -> None:
    """Write a part's labelled CSV: :data:`UNSEEN_COLUMNS`, one row per product."""
    path.parent.mkdir(parents=True, exist_ok=True)
    _atomic_write(path, _delimited([list(UNSEEN_COLUMNS), *(p.row() for p in products)], ","))


def _atomic_write(path: Path, data: bytes) -> None:
    write_bytes_atomic(path, data)


# -- entry points -------------------------------------------------------------------------------

def _build(demo_root: Path, *, seed: int, size: int, tree: CategoryTree | None,
           only_missing: bool) -> UnseenPaths:
    if tree is None:
        from catmap.tree.taxonomy import load_default_tree

        tree = load_default_tree(1)
    paths = unseen_paths(demo_root, generated=generated_dir(demo_root, tree))
    # Files built from another seed, size, tree or generator are built again.
    facts = build_facts(tree, seed=seed, size=size)
    stamp = paths.root / STAMP
    if (only_missing and all(f.exists() for f in paths.all_files())
            and stamp_matches(stamp, facts)):
        return paths
    from catmap.demo.world import _brands

    products = unseen_products(tree, _brands(tree, 0), seed=seed, size=size)
    for retailer in UNSEEN_RETAILERS:
        write_feed(retailer, products[retailer.slug], paths.feeds[retailer.slug])
    for part in PARTS:
        rows = [p for r in UNSEEN_RETAILERS if r.part == part for p in products[r.slug]]
        write_labelled(rows, paths.labelled[part])
    write_stamp(stamp, facts)
    return paths


def build_unseen_world(demo_root: str | Path, *, seed: int = 0,
                       size: int = PRODUCTS_PER_RETAILER,
                       tree: CategoryTree | None = None) -> UnseenPaths:
    """Build (always rebuild) the unseen-retailer part under ``<demo_root>/generated/unseen``.

    Args:
        demo_root: the demo folder, e.g. ``feeds_demo``.
        seed: the seed of this part (the demo brand list is always seed 0's, as committed).
        size: products per retailer.
        tree: the category tree; tree version 1 by default.

    Returns:
        Where the files are.
    """
    return _build(Path(demo_root), seed=seed, size=size, tree=tree, only_missing=False)


def ensure_unseen_world(demo_root: str | Path, *, seed: int = 0,
                        size: int = PRODUCTS_PER_RETAILER,
                        tree: CategoryTree | None = None) -> UnseenPaths:
    """Build the unseen-retailer part when any of its files is missing (idempotent).

    Args:
        demo_root: the demo folder, e.g. ``feeds_demo``.
        seed: the seed of this part.
        size: products per retailer.
        tree: the category tree; tree version 1 by default.

    Returns:
        Where the files are.
    """
    return _build(Path(demo_root), seed=seed, size=size, tree=tree, only_missing=True)
