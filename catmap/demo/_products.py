"""Product generation: one messy retailer record plus its gold labels, for one tree leaf.

Titles are assembled from the leaf's keywords (sometimes only a parent's or the department's),
modifiers shared across the department, colour and audience words, sizes, SKU codes, marketing
filler and brand spellings, in an order that varies per product and per language. Retailer
categories are right most of the time and wrong or vague for a stated share of products.
"""

from __future__ import annotations

import hashlib
import html
import random
import re
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal
from typing import TYPE_CHECKING

from catmap.demo import _vocab as V
from catmap.demo._names import Brand
from catmap.demo._retailers import Retailer

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree

# Share of titles that name only a parent or department ("Boots" for an ankle boot), and of
# titles mentioning a neighbour leaf as an accessory or bundle ("... with dust bag"). These two
# knobs set the difficulty of the catalog for a title-only classifier.
P_PARENT_TERM = 0.07
P_DEPARTMENT_TERM = 0.015
P_NEIGHBOUR_MENTION = 0.05
P_FOREIGN_TERM = 0.1
# Where the node leaves the gender (or a child's age) open and no field of a female / male
# (kids / baby) product names it, the share of such products that become unisex (adult) instead
# of getting a cue somewhere: real retailers nearly always say whom a product is for.
P_NO_CUE_NEUTRAL = 0.35
# Where that cue goes: weights per place (a place the product lacks is skipped). Retailers
# with a wild gender column fill it rarely, so it is rarely the place of the added cue.
_CUE_PLACES = {"title": 0.4, "path": 0.25, "column": 0.2, "description": 0.15}
_WILD_COLUMN_WEIGHT = 0.06

_WHO_WEIGHTS = {"female": 0.45, "male": 0.35, "unisex": 0.2}
_AGE_WEIGHTS = {"adult": 0.74, "kids": 0.18, "baby": 0.08}
_COLOUR_WEIGHTS = {"black": 10, "white": 7, "grey": 6, "blue": 9, "green": 4, "red": 4,
                   "pink": 3, "purple": 2, "yellow": 2, "orange": 2, "brown": 4, "beige": 4,
                   "gold": 1.5, "silver": 1.5, "multicolour": 2}
_UNBRANDED = ("Generic", "No brand", "n/a", "-", "Sans marque", "Ohne Marke", "Sin marca")
_SKU_FORMS = ("SKU-{n}", "Art.-Nr. {n}", "Réf. {n}", "#{n}", "REF:{a}-{n}", "[{a}{n}]", "({n})",
              "Item {n}", "Mod. {a}{n}")
_GTIN_PREFIXES = ("40", "41", "42", "43", "50", "54", "76", "80", "84", "87", "90", "30", "37")


@dataclass(frozen=True, slots=True)
class LeafInfo:
    """What the generator needs to know about one leaf, read once from the tree."""

    id: str
    department: str
    profile: V.Profile
    who: tuple[str, ...]
    ages: tuple[str, ...]
    own_terms: dict[str, tuple[str, ...]]
    parent_terms: dict[str, tuple[str, ...]]
    department_terms: dict[str, tuple[str, ...]]
    path: dict[str, tuple[str, ...]]
    parent_path: dict[str, tuple[str, ...]]
    neighbours: tuple[str, ...]


@dataclass(slots=True)
class DemoProduct:
    """One generated product: the retailer's raw fields and the gold labels."""

    product_id: str
    retailer: str
    lang: str
    title: str
    description: str
    brand: str
    retailer_category: str
    category_levels: tuple[str, ...]
    price: str
    price_value: Decimal
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
    gold_who: str
    gold_age: str
    gold_colour: str


@dataclass(slots=True)
class _Fields:
    """The fields of a product that can say whom it is for (changed in place by the cues)."""

    title: str
    description: str
    levels: tuple[str, ...]
    gender: str
    size: str


@dataclass(frozen=True, slots=True)
class _TitlePieces:
    """What a title is assembled from, kept to assemble it again with an audience word."""

    brand: str
    mods: tuple[str, ...]
    type_term: str
    shade: str
    size: str
    extra: str


_KIDS_SIZE_VALUES = frozenset(
    {v for values in V.KIDS_SIZES.values() for v in values} | set(V.KIDS_SHOE_SIZES))
_BABY_SIZE_VALUES = frozenset(v for values in V.BABY_SIZES.values() for v in values)
# A children's size that nothing in it marks as one (a bare shoe size).
_SILENT_SIZES = frozenset({"33"})


def _terms_of(name: str, terms: dict[str, tuple[str, ...]], lang: str, *,
              with_name: bool = True) -> tuple[str, ...]:
    """A node's words in one language; the English name joins the English terms (last)."""
    own = tuple(t for t in terms.get(lang, ()) if t)
    if lang == "en" and with_name and name.lower() not in {t.lower() for t in own}:
        return (*own, name)
    return own or (name,)


def leaf_infos(tree: CategoryTree) -> list[LeafInfo]:
    """Read every leaf of the tree into a :class:`LeafInfo`, in tree order.

    Args:
        tree: the category tree (read through :mod:`catmap.tree.taxonomy`).

    Returns:
        One entry per leaf.
    """
    out = []
    for leaf in tree.leaves():
        lineage = tree.lineage(leaf.id)
        dept, parent = lineage[0], lineage[-2]
        siblings = [n.id for n in tree.leaves(under=parent.id) if n.id != leaf.id]
        if not siblings and len(lineage) > 2:
            siblings = [n.id for n in tree.leaves(under=lineage[-3].id) if n.id != leaf.id]
        path: dict[str, tuple[str, ...]] = {}
        for lang in V.LANGS:
            path[lang] = tuple(
                n.name if lang == "en" else _cap(_terms_of(n.name, dict(n.terms), lang)[0])
                for n in lineage
            )
        out.append(LeafInfo(
            id=leaf.id,
            department=dept.id,
            profile=V.profile_for(dept.name, dept.id),
            who=tuple(sorted(tree.who(leaf.id))),
            ages=tuple(sorted(tree.ages(leaf.id))),
            own_terms={lg: _terms_of(leaf.name, dict(leaf.terms), lg) for lg in V.LANGS},
            parent_terms={lg: _terms_of(parent.name, dict(parent.terms), lg, with_name=False)
                          for lg in V.LANGS},
            department_terms={lg: _terms_of(dept.name, dict(dept.terms), lg, with_name=False)
                              for lg in V.LANGS},
            path=path,
            parent_path={lg: p[:-1] for lg, p in path.items()},
            neighbours=tuple(siblings),
        ))
    return out


def _cap(text: str) -> str:
    return text[:1].upper() + text[1:] if text else text


def gs1_check_digit(body: str) -> int:
    """Return the GS1 check digit of a digit string (weights 3,1,3,... from the right).

    # GS1 General Specifications, section 7.9 (check digit calculation)
    """
    total = sum(int(d) * (3 if i % 2 == 0 else 1) for i, d in enumerate(reversed(body)))
    return (10 - total % 10) % 10


def _gtin(rng: random.Random, retailer: Retailer) -> str:
    roll = rng.random()
    if roll < 0.12:
        return ""
    if retailer.currency == "USD" and roll < 0.45:
        body = "0" + "".join(rng.choice("0123456789") for _ in range(10))
    else:
        body = rng.choice(_GTIN_PREFIXES) + "".join(rng.choice("0123456789") for _ in range(10))
    check = gs1_check_digit(body)
    if roll > 0.985:
        check = (check + rng.randint(1, 9)) % 10  # a mistyped code
    code = body + str(check)
    if roll > 0.975 and len(code) == 13:
        return f"{int(code[:-1]) / 10 ** 11:.5f}E+12"  # a spreadsheet mangled it
    return code


def format_price(value: Decimal, style: str, currency: str, with_currency: bool) -> str:
    """Write a price the way a retailer of a given style does ("1 299,90 €", "£19.99", ...)."""
    q = value.quantize(Decimal("0.01"), rounding=ROUND_HALF_UP)
    whole, frac = f"{q:.2f}".split(".")
    grouped = f"{int(whole):,}"
    symbol = {"EUR": "€", "GBP": "£", "USD": "$"}.get(currency, currency)
    if style == "symbol":
        plain = f"{whole}.{frac}"
        return f"{symbol}{plain}" if with_currency or currency == "GBP" else plain
    if style == "thousands":
        text = f"{grouped}.{frac}"
        return f"{text} {currency}" if with_currency else text
    if style == "fr":
        text = grouped.replace(",", "\u00a0" if int(whole) % 3 else " ") + "," + frac
        return f"{text} €"
    if style == "de":
        text = grouped.replace(",", ".") + "," + frac
        return f"{text} EUR" if with_currency else text
    if style == "es":
        text = grouped.replace(",", ".") + "," + frac
        return f"{text}€" if with_currency else text
    return f"{whole}.{frac}"


def _mojibake(text: str) -> str:
    try:
        return text.encode("utf-8").decode("cp1252")
    except UnicodeDecodeError:
        return text


def _entities(text: str) -> str:
    return (text.replace("&", "&amp;").replace("é", "&eacute;").replace("'", "&#39;")
            .replace("ü", "&uuml;").replace("ñ", "&ntilde;"))


# What a reader takes from a product's words: whom it is for. Words are matched on lower-case
# text without apostrophes; German compounds ("Damenjacke", "Kinderuhr") count; phrases that
# only look like audience words ("baby pink", "girls' night", "man-made") do not.
_NOT_AUDIENCE = re.compile(r"\b(?:baby ?(?:pink|blue|rose|doll)|babyblau|babyrosa|"
                           r"(?:bleu|rose|azul|rosa) beb[eé]|girls? night|boys night|"
                           r"man[- ]made)\b")
_AUDIENCE_SAID: dict[str, re.Pattern[str]] = {
    "female": re.compile(r"\b(?:women|womens|woman|wmns|womenswear|ladies|lady|female|for her|"
                         r"femmes?|dames?|damen\w*|frauen|frau|mujer(?:es)?|señoras?|girls?|"
                         r"filles?|fillette|mädchen\w*|niñas?)\b"),
    "male": re.compile(r"\b(?:men|mens|mns|man|menswear|gents|male|gentlem[ae]n|for him|hommes?|"
                       r"herren\w*|männer|hombres?|caballeros?|boys?|garçons?|jungen\w*|junge|"
                       r"niño)\b"),
    "kids": re.compile(r"\b(?:kids?|kidswear|children|childrens|child|junior|juniors|toddlers?|"
                       r"youth|enfants?|kinder\w*|niños|infantil|juvenil|girls?|boys?|filles?|"
                       r"fillette|garçons?|mädchen\w*|jungen\w*|niñas?|niño)\b"),
    "baby": re.compile(r"\b(?:bab(?:y|ies|ys)\w*|infants?|newborns?|bébés?|bebés?|naissance|"
                       r"nourrissons?|säugling\w*|neugeboren\w*|recién nacidos?)\b"),
}
# French shoe styles named "babies" (strapped flats): a style, not a baby's age.
_STYLE_TERMS = frozenset({"babies", "babies à talon"})


def _readable(text: str) -> str:
    """Undo HTML entities and mojibake, as a reader (or catmap's normaliser) would."""
    if "&" in text:
        text = html.unescape(text)
    if "Ã" in text:
        text = " ".join(_unmangled(word) if "Ã" in word else word for word in text.split(" "))
    return text


def _unmangled(word: str) -> str:
    try:
        return word.encode("cp1252").decode("utf-8")
    except (UnicodeEncodeError, UnicodeDecodeError):
        return word


def audience_said(text: str) -> set[str]:
    """Return what a text tells about whom a product is for: female, male, kids, baby.

    HTML entities and tags are undone, and mojibake ("MÃ¤dchen") is read as the reader would
    repair it.

    Args:
        text: any product text (title, category path, description).

    Returns:
        The audience values the text names (empty when it names none).
    """
    low = _readable(text).casefold().replace("'", "").replace("\u2019", "")
    low = _NOT_AUDIENCE.sub(" ", re.sub(r"<[^>]*>", " ", low))
    return {value for value, words in _AUDIENCE_SAID.items() if words.search(low)}


def _without(text: str, names: tuple[str, ...]) -> str:
    """Blank every spelling of a brand in a text (a brand such as "Lady ..." says no gender)."""
    for name in sorted(names, key=len, reverse=True):
        if name.strip():
            text = re.sub(re.escape(name), " ", text, flags=re.IGNORECASE)
    return text


def _fits_audience(term: str, who: str, age: str = "not_applicable") -> bool:
    """A keyword naming a gender or a child's age is used only for products of that audience."""
    if who == "not_applicable" and age == "not_applicable":
        return True
    said = audience_said(term)
    if who != "not_applicable":
        female, male = "female" in said, "male" in said
        if (who == "female" and male) or (who == "male" and female) or (
                who == "unisex" and (female or male)):
            return False
    if age != "not_applicable" and term.casefold() not in _STYLE_TERMS:
        if ("kids" in said and age != "kids") or ("baby" in said and age != "baby"):
            return False
    return True


def _pick_term(terms: tuple[str, ...], rng: random.Random, who: str = "unisex",
               age: str = "not_applicable") -> str:
    usable = tuple(t for t in terms if _fits_audience(t, who, age)) or terms
    weights = [1.0 / (1 + 0.35 * i) for i in range(len(usable))]
    return rng.choices(usable, weights=weights)[0]


class ProductFactory:
    """Makes products for one retailer from a fixed brand list and the tree's leaves.

    Args:
        leaves: the leaves (from :func:`leaf_infos`).
        brands: the invented brands.
        retailer: whose house style to write in.
        rng: the random source (one per artefact, so artefacts are independent).
        cue_rng: the random source of the audience cues added afterwards (see
            :meth:`_signal_audience`); kept apart so that the other fields do not depend on it.
            By default one seeded from ``rng``'s state.
    """

    def __init__(self, leaves: list[LeafInfo], brands: list[Brand], retailer: Retailer,
                 rng: random.Random, cue_rng: random.Random | None = None) -> None:
        self.leaves = {leaf.id: leaf for leaf in leaves}
        self.retailer = retailer
        self.rng = rng
        self.cue_rng = cue_rng or random.Random(repr(rng.getstate()))
        self.by_dept: dict[str, list[Brand]] = {}
        for b in brands:
            for d in b.departments:
                self.by_dept.setdefault(d, []).append(b)
        self.counter = 0

    # -- pieces -----------------------------------------------------------------------------
    def _audience(self, leaf: LeafInfo) -> tuple[str, str]:
        rng = self.rng
        who = "not_applicable"
        age = "not_applicable"
        if leaf.ages:
            age = rng.choices(leaf.ages, weights=[_AGE_WEIGHTS.get(a, 0.1) for a in leaf.ages])[0]
        if leaf.who:
            who = rng.choices(leaf.who, weights=[_WHO_WEIGHTS.get(w, 0.1) for w in leaf.who])[0]
        return who, age

    @staticmethod
    def _audience_key(who: str, age: str) -> tuple[str, str] | None:
        if who == "not_applicable" and age == "not_applicable":
            return None
        if age == "not_applicable":
            return (who, "adult")
        return ("unisex" if who == "not_applicable" else who, age)

    def _brand(self, leaf: LeafInfo) -> Brand | None:
        pool = self.by_dept.get(leaf.department, [])
        if not pool or self.rng.random() < 0.08:
            return None
        # A few brands dominate each department, as in real catalogs.
        weights = [1.0 / (1 + i) ** 0.8 for i in range(len(pool))]
        return self.rng.choices(pool, weights=weights)[0]

    def _size(self, leaf: LeafInfo, age: str, lang: str) -> str:
        rng = self.rng
        kind = leaf.profile.size_kind
        if age == "kids" and kind in ("apparel", "shoe", "baby", "pieces"):
            return rng.choice(V.KIDS_SIZES[lang]) if kind != "shoe" else rng.choice(
                V.KIDS_SHOE_SIZES)
        if age == "baby" and kind in ("apparel", "shoe", "baby"):
            return rng.choice(V.BABY_SIZES[lang])
        if kind == "none" and rng.random() < 0.7:
            return ""
        return rng.choice(V.SIZES[kind if kind != "none" else "dims"])

    def _category(self, leaf: LeafInfo, lang: str, who: str, age: str) -> tuple[str, ...]:
        rng = self.rng
        r = self.retailer
        if rng.random() < r.category_noise:
            kind = rng.random()
            if kind < 0.4:
                return (rng.choice(V.VAGUE_CATEGORIES[lang]),)
            if kind < 0.7 or not leaf.neighbours:
                levels = leaf.parent_path[lang]
            else:
                levels = self.leaves[rng.choice(leaf.neighbours)].path[lang]
        else:
            levels = leaf.path[lang]
        if r.category_style == "dept_leaf" and len(levels) > 2:
            levels = (levels[0], levels[-1])
        elif r.category_style == "leaf" and len(levels) > 1:
            levels = levels[-1:]
        elif r.category_style == "audience" and len(levels) > 1:
            key = self._audience_key(who, age)
            if key is not None and key in V.GENDER_FIELD_TIDY:
                levels = (V.GENDER_FIELD_TIDY[key][lang], *levels[1:])
        return levels

    def _gender_field(self, who: str, age: str, lang: str) -> str:
        key = self._audience_key(who, age)
        if key is None or self.rng.random() > self.retailer.gender_fill:
            return ""
        if self.retailer.gender_wild:
            return self.rng.choice(V.GENDER_FIELD_WILD[key])
        return V.GENDER_FIELD_TIDY[key][self.retailer.shop_lang(lang)]

    def _audience_level(self, key: tuple[str, str], lang: str, need_who: bool) -> str:
        """The word a category level or a tidy gender column uses for an audience."""
        word = V.GENDER_FIELD_TIDY[key][lang]
        if need_who and word.casefold() in V.NEUTRAL_GENDER_VALUES:
            word = V.AUDIENCE_WORDS[key][lang][0]  # "Baby Girl", "Bébé fille"
        return word

    def _said(self, fields: _Fields, who: str, age: str, brand: Brand | None) -> set[str]:
        """What a reader can tell of a product's audience from all its fields."""
        text = _readable(f"{fields.title} | {' / '.join(fields.levels)} | {fields.description}")
        if brand is not None:
            text = _without(text, (brand.name, *brand.variants))
        said = audience_said(text)
        value = fields.gender.strip()
        if value:  # the column was filled from the product's own audience
            if who in ("female", "male") and value.casefold() not in V.NEUTRAL_GENDER_VALUES:
                said.add(who)
            if age in ("kids", "baby"):
                said.add(age)
        if fields.size in _KIDS_SIZE_VALUES and fields.size not in _SILENT_SIZES:
            said.add("kids")
        elif fields.size in _BABY_SIZE_VALUES:
            said.add("baby")
        return said

    def _signal_audience(self, leaf: LeafInfo, lang: str, who: str, age: str, fields: _Fields,
                         pieces: _TitlePieces, brand: Brand | None) -> tuple[str, str]:
        """Make sure a reader can tell a product's gender and a child's age from its fields.

        Where the node leaves several values open, a female / male product whose fields name
        no gender, or a kids / baby product whose fields name no child's age, either becomes
        unisex / adult (a share :data:`P_NO_CUE_NEUTRAL`, when the node allows that and the
        gender column and size say nothing) or gets a cue: in the title, the category path,
        the gender column or the description, the place drawn among those the product has.

        Args:
            leaf: the product's leaf.
            lang: the title's language.
            who: the gold who drawn for the product.
            age: the gold age drawn for the product.
            fields: the product's fields, changed in place.
            pieces: what the title was assembled from.
            brand: the product's brand (its name says nothing about the audience).

        Returns:
            The gold who and age (changed when the product became unisex / adult).
        """
        said = self._said(fields, who, age, brand)
        need_who = who in ("female", "male") and len(leaf.who) > 1 and who not in said
        need_age = age in ("kids", "baby") and len(leaf.ages) > 1 and age not in said
        if not (need_who or need_age):
            return who, age
        rng = self.cue_rng
        if need_who and not fields.gender and "unisex" in leaf.who and (
                rng.random() < P_NO_CUE_NEUTRAL):
            who, need_who = "unisex", False
        if need_age and not fields.gender and fields.size not in (
                _KIDS_SIZE_VALUES | _BABY_SIZE_VALUES) and "adult" in leaf.ages and (
                rng.random() < P_NO_CUE_NEUTRAL):
            age, need_age = "adult", False
        key = self._audience_key(who, age)
        if key is None or not (need_who or need_age):
            return who, age
        weights = dict(_CUE_PLACES)
        if self.retailer.gender_wild:
            weights["column"] = _WILD_COLUMN_WEIGHT
        if len(fields.levels) < 2:
            weights["path"] = 0.0  # a vague one-level category ("Sale") takes no audience
        if not fields.description:
            weights["description"] = 0.0
        while True:
            places = [place for place, weight in weights.items() if weight > 0]
            if not places:  # every place tried and none read: fill the column plainly
                fields.gender = V.AUDIENCE_WORDS[key][self.retailer.shop_lang(lang)][0]
                break
            place = rng.choices(places, weights=[weights[p] for p in places])[0]
            weights[place] = 0.0
            self._add_cue(place, key, lang, fields, pieces, need_who)
            said = self._said(fields, who, age, brand)
            if (not need_who or who in said) and (not need_age or age in said):
                break
        return who, age

    def _add_cue(self, place: str, key: tuple[str, str], lang: str, fields: _Fields,
                 pieces: _TitlePieces, need_who: bool) -> None:
        """Write an audience cue into one place of a product's fields."""
        rng = self.cue_rng
        r = self.retailer
        shop = r.shop_lang(lang)
        if place == "title":
            aud = rng.choice(V.AUDIENCE_WORDS[key][lang])
            title = self._assemble(lang, pieces.brand, aud, pieces.mods, pieces.type_term,
                                   pieces.shade, pieces.size, pieces.extra, rng)
            fields.title = self._decorate(title, lang, rng)
        elif place == "path":
            word = self._audience_level(key, shop, need_who)
            levels = fields.levels
            if r.category_style == "full":
                fields.levels = (levels[0], word, *levels[1:])  # "Apparel > Women > Coats"
            else:
                fields.levels = (word, *levels[1:])  # "Women | Coats", "Damen >> Mantel"
        elif place == "column":
            if r.gender_wild:
                values = [v for v in V.GENDER_FIELD_WILD[key]
                          if not need_who or v.casefold() not in V.NEUTRAL_GENDER_VALUES]
                fields.gender = rng.choice(values) if values else V.AUDIENCE_WORDS[key][shop][0]
            else:
                fields.gender = self._audience_level(key, shop, need_who)
        else:
            sentence = rng.choice(V.DESCRIPTION_AUDIENCE[key][lang])
            text = fields.description
            fields.description = (f"{text}<p>{sentence}</p>" if text.startswith("<p>")
                                  else f"{text} {sentence}")

    # -- the product --------------------------------------------------------------------------
    def make(self, leaf_id: str, product_id: str) -> DemoProduct:
        """Generate one product of a leaf.

        Args:
            leaf_id: the gold leaf.
            product_id: the id to give it.

        Returns:
            The product with its raw retailer fields and gold labels.
        """
        rng = self.rng
        r = self.retailer
        leaf = self.leaves[leaf_id]
        lang = r.pick_lang(rng)
        term_lang = "en" if lang != "en" and rng.random() < P_FOREIGN_TERM else lang
        who, age = self._audience(leaf)
        brand = self._brand(leaf)
        prof = leaf.profile

        type_term, mods, extra = self._type_words(leaf, lang, term_lang, who, age)
        gold_colour, shade, colour_field, colour_in_title = self._colour(prof, lang)

        # audience words and size
        key = self._audience_key(who, age)
        aud = ""
        if key is not None and rng.random() < 0.3:
            aud = rng.choice(V.AUDIENCE_WORDS[key][lang])
        size = self._size(leaf, age, lang)
        size_in_title = bool(size) and (rng.random() < (0.45 if age in ("kids", "baby") else 0.22))

        gold_brand = brand.name if brand else ""
        brand_field, brand_title = self._brand_fields(brand)

        title = self._assemble(lang, brand_title, aud, mods, type_term, shade if colour_in_title
                               else "", size if size_in_title else "", extra)
        title = self._decorate(title, lang)

        description = self._description(lang, type_term, mods, shade, size, brand_title
                                        or gold_brand)
        levels = self._category(leaf, r.shop_lang(lang), who, age)
        value = Decimal(str(round(rng.lognormvariate(0, 0.9) * prof.price_median, 2) + 0.01))
        if rng.random() < 0.5:
            value = value.to_integral_value() - Decimal("0.01") if value > 1 else value
        with_cur = rng.random() < r.currency_in_price_p
        self.counter += 1
        slug = "-".join(type_term.lower().split())[:40]
        gtin = _gtin(rng, r)
        gender = self._gender_field(who, age, lang)
        availability = rng.choice(V.AVAILABILITY_WORDS[r.shop_lang(lang)])
        fields = _Fields(title, description, levels, gender, size)
        pieces = _TitlePieces(brand_title, tuple(mods), type_term,
                              shade if colour_in_title else "", size if size_in_title else "",
                              extra)
        who, age = self._signal_audience(leaf, lang, who, age, fields, pieces, brand)
        title, description, levels, gender = (fields.title, fields.description, fields.levels,
                                              fields.gender)
        return DemoProduct(
            product_id=product_id,
            retailer=r.name,
            lang=lang,
            title=title,
            description=description,
            brand=brand_field,
            retailer_category=r.category_sep.join(levels),
            category_levels=levels,
            price=format_price(value, r.price_style, r.currency, with_cur),
            price_value=value,
            currency=r.currency,
            gtin=gtin,
            gender=gender,
            colour=colour_field,
            size=size,
            url=f"https://www.{r.slug}.example/p/{slug}-{product_id.lower()}",
            image_url=f"https://img.{r.slug}.example/{hashlib.sha1(product_id.encode()).hexdigest()[:12]}.jpg",
            availability=availability,
            gold_node=leaf.id,
            gold_brand=gold_brand,
            gold_who=who,
            gold_age=age,
            gold_colour=gold_colour if (colour_field or colour_in_title) else "",
        )

    def _type_words(self, leaf: LeafInfo, lang: str, term_lang: str, who: str,
                    age: str) -> tuple[str, list[str], str]:
        """The product type words: the type term, modifiers, and a neighbour leaf's mention."""
        rng = self.rng
        roll = rng.random()
        if roll < P_DEPARTMENT_TERM:
            type_term = _pick_term(leaf.department_terms[term_lang], rng, who, age)
        elif roll < P_DEPARTMENT_TERM + P_PARENT_TERM:
            type_term = _pick_term(leaf.parent_terms[term_lang], rng, who, age)
        else:
            type_term = _pick_term(leaf.own_terms[term_lang], rng, who, age)
        if rng.random() < 0.5:
            type_term = _cap(type_term)
        prof = leaf.profile
        li = V.LANGS.index(lang)
        mods = [m[li] for m in rng.sample(prof.modifiers, k=min(len(prof.modifiers),
                                                                 rng.choice((0, 1, 1, 2, 2, 3))))]
        extra = ""
        if leaf.neighbours and rng.random() < P_NEIGHBOUR_MENTION:
            other = self.leaves[rng.choice(leaf.neighbours)]
            neighbour_term = _pick_term(other.own_terms[lang], rng, who, age)
            extra = f"{rng.choice(V.CONNECTORS[lang])} {neighbour_term}"
        return type_term, mods, extra

    def _colour(self, prof: V.Profile, lang: str) -> tuple[str, str, str, bool]:
        """The gold colour family, its shade word, the colour field, whether the title says it."""
        rng = self.rng
        gold_colour = ""
        shade = ""
        if rng.random() < prof.colour_p:
            fams = sorted(_COLOUR_WEIGHTS)
            gold_colour = rng.choices(fams, weights=[_COLOUR_WEIGHTS[f] for f in fams])[0]
            shade = rng.choice(V.COLOURS[gold_colour][lang])
        colour_field = ""
        colour_in_title = False
        if shade:
            where = rng.random()
            colour_in_title = where < 0.55
            if where > 0.3:
                colour_field = shade if rng.random() < 0.8 else _cap(shade)
                if rng.random() < 0.06:
                    second = rng.choice(V.COLOURS[rng.choice(("white", "black", "grey"))][lang])
                    if second != shade:
                        colour_field = f"{_cap(shade)}/{_cap(second)}"
        return gold_colour, shade, colour_field, colour_in_title

    def _brand_fields(self, brand: Brand | None) -> tuple[str, str]:
        """The retailer's brand field (a variant, its own label, a filler or empty) and the
        brand as the title writes it (empty when the title leaves it out)."""
        rng = self.rng
        r = self.retailer
        brand_field = ""
        brand_in_title = False
        if brand:
            b_roll = rng.random()
            if b_roll < 0.10:
                brand_in_title = True
            elif b_roll < 0.10 + r.own_label_p:
                brand_field = r.name
                brand_in_title = True
            else:
                spellings = (brand.name, *brand.variants)
                brand_field = rng.choice(spellings) if rng.random() < r.variant_p else brand.name
                brand_in_title = rng.random() < 0.45
        elif rng.random() < 0.3:
            brand_field = rng.choice(_UNBRANDED)
        brand_title = ""
        if brand and brand_in_title:
            brand_title = brand.name if rng.random() < 0.7 else rng.choice(
                (brand.name, *brand.variants))
        return brand_field, brand_title

    def _assemble(self, lang: str, brand: str, aud: str, mods: list[str] | tuple[str, ...],
                  type_term: str, shade: str, size: str, extra: str,
                  rng: random.Random | None = None) -> str:
        rng = rng or self.rng
        m = " ".join(mods)
        form = rng.randrange(6)
        if lang in ("fr", "es"):
            # Romance order: type first, modifiers and colour after.
            forms = (
                [brand, type_term, m, shade, aud, extra, size],
                [type_term, m, aud, brand, shade, size, extra],
                [type_term, aud, "-", brand, m, shade, size],
                [brand, "-", type_term, m, extra, shade, aud],
                [aud, type_term, m, shade, "|", brand, size],
                [type_term, m, shade, extra, brand, size, aud],
            )
        elif lang == "de":
            forms = (
                [brand, aud, m, type_term, shade, extra, size],
                [aud, type_term, brand, m, shade, size],
                [brand, "-", m, type_term, aud, shade, size, extra],
                [type_term, aud, m, shade, "|", brand, size],
                [m, type_term, extra, brand, shade, size, aud],
                [brand, type_term, m, aud, size, shade],
            )
        else:
            forms = (
                [brand, aud, m, shade, type_term, extra, size],
                [brand, aud, m, type_term, extra, "-", shade, size],
                [type_term, brand, m, shade, aud, size],
                [brand, "|", m, type_term, "|", shade, size, extra],
                [aud, m, type_term, extra, "by", brand, shade, size],
                [m, shade, type_term, aud, brand, size],
            )
        parts = [p for p in forms[form] if p]
        # drop connector words left dangling at the ends
        while parts and parts[-1] in ("-", "|", "by"):
            parts.pop()
        while parts and parts[0] in ("-", "|", "by"):
            parts.pop(0)
        if "by" in parts and parts[-1:] != ["by"] and not brand:
            parts.remove("by")
        out = " ".join(parts)
        for a, b in ((" - -", " -"), ("| |", "|"), ("- |", "|")):
            out = out.replace(a, b)
        return out

    def _decorate(self, title: str, lang: str, rng: random.Random | None = None) -> str:
        rng = rng or self.rng
        r = self.retailer
        if rng.random() < r.sku_p:
            code = rng.choice(_SKU_FORMS).format(n=rng.randint(1000, 99999),
                                                 a=rng.choice("ABCDEFHKLMRSTX"))
            title = f"{title} {code}" if rng.random() < 0.75 else f"{code} {title}"
        if rng.random() < r.filler_p:
            f = rng.choice(V.FILLER[lang])
            title = f"{f} {title}" if rng.random() < 0.6 else f"{title} - {f}"
        if rng.random() < r.emoji_p:
            e = rng.choice(V.EMOJI)
            title = f"{e} {title}" if rng.random() < 0.5 else f"{title} {e}"
        if lang == "en" and rng.random() < 0.15:
            for a, b in ((" with ", " w/ "), ("Womens", "Wmns"), (" black", " blk"),
                         (" pack", " pk"), ("Mens", "Mns"), (" grey", " gry")):
                title = title.replace(a, b)
        roll = rng.random()
        if roll < r.caps_p:
            title = title.upper()
        elif roll < r.caps_p + r.lower_p:
            title = title.lower()
        elif roll < r.caps_p + r.lower_p + 0.1:
            title = " ".join(_cap(w) for w in title.split())
        if rng.random() < r.entity_p:
            title = _entities(title)
        if rng.random() < r.mojibake_p:
            title = _mojibake(title)
        return " ".join(title.split())

    def _description(self, lang: str, term: str, mods: list[str], shade: str, size: str,
                     brand: str) -> str:
        rng = self.rng
        r = self.retailer
        if rng.random() < r.desc_missing_p:
            return ""
        mod = mods[0] if mods else ""
        first = rng.choice(V.DESCRIPTION_OPENERS[lang]).format(term=term.lower(), mod=mod)
        sentences = [" ".join(first.split())]
        for tmpl in rng.sample(V.DESCRIPTION_EXTRAS[lang], k=rng.randint(0, 3)):
            if ("{colour}" in tmpl and not shade) or ("{size}" in tmpl and not size) or (
                    "{mod}" in tmpl and not mods) or ("{brand}" in tmpl and not brand):
                continue
            sentences.append(tmpl.format(colour=shade, size=size, mod=mod, brand=brand))
        if rng.random() < r.html_desc_p:
            if len(sentences) > 2 and rng.random() < 0.5:
                items = "".join(f"<li>{s}</li>" for s in sentences[1:])
                text = f"<p>{sentences[0]}</p><ul>{items}</ul>"
            else:
                text = "<p>" + "<br/>".join(sentences) + "</p>"
            return text.replace("&", "&amp;").replace("&amp;amp;", "&amp;") if rng.random() < 0.5 \
                else text.replace(" ", "&nbsp;", 1)
        text = " ".join(sentences)
        if rng.random() < r.entity_p:
            text = _entities(text)
        if rng.random() < r.mojibake_p:
            text = _mojibake(text)
        return text
