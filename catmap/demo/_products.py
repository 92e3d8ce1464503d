"""Product generation: one messy retailer record plus its gold labels, for one tree leaf.

Titles are assembled from the leaf's keywords (sometimes only a parent's or the department's),
modifiers shared across the department, colour and audience words, sizes, SKU codes, marketing
filler and brand spellings, in an order that varies per product and per language. Retailer
categories are right most of the time and wrong or vague for a stated share of products.
"""

from __future__ import annotations

import hashlib
import random
import re
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal
from typing import TYPE_CHECKING

from catmap.demo import _vocab as V
from catmap.demo._names import Brand
from catmap.demo._retailers import Retailer

if TYPE_CHECKING:
    from catmap.taxonomy import CategoryTree

# Share of titles that name only a parent or department ("Boots" for an ankle boot), and of
# titles mentioning a neighbour leaf as an accessory or bundle ("... with dust bag"). These two
# knobs set the difficulty of the catalog for a title-only classifier.
P_PARENT_TERM = 0.07
P_DEPARTMENT_TERM = 0.015
P_NEIGHBOUR_MENTION = 0.05
P_FOREIGN_TERM = 0.1

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
        tree: the category tree (read through :mod:`catmap.taxonomy`).

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
            profile=V.profile_for(dept.name),
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


_FEMALE_WORDS = re.compile(r"\b(women|woman|ladies|lady|damen|femme|femmes|mujer|girls?|fille|"
                           r"mädchen|niña|señora)\b", re.IGNORECASE)
_MALE_WORDS = re.compile(r"\b(men|man|gents|herren|homme|hommes|hombre|boys?|garçon|jungen|"
                         r"niño|caballero)\b", re.IGNORECASE)


def _fits_audience(term: str, who: str) -> bool:
    """A keyword holding a gender word is used only for products of that gender."""
    female = bool(_FEMALE_WORDS.search(term))
    male = bool(_MALE_WORDS.search(term))
    if who == "female":
        return not male
    if who == "male":
        return not female
    return not (female or male)


def _pick_term(terms: tuple[str, ...], rng: random.Random, who: str = "unisex") -> str:
    usable = tuple(t for t in terms if _fits_audience(t, who)) or terms
    weights = [1.0 / (1 + 0.35 * i) for i in range(len(usable))]
    return rng.choices(usable, weights=weights)[0]


class ProductFactory:
    """Makes products for one retailer from a fixed brand list and the tree's leaves.

    Args:
        leaves: the leaves (from :func:`leaf_infos`).
        brands: the invented brands.
        retailer: whose house style to write in.
        rng: the random source (one per artefact, so artefacts are independent).
    """

    def __init__(self, leaves: list[LeafInfo], brands: list[Brand], retailer: Retailer,
                 rng: random.Random) -> None:
        self.leaves = {leaf.id: leaf for leaf in leaves}
        self.retailer = retailer
        self.rng = rng
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
                ("EU 30", "EU 28", "Gr. 31", "33", "UK 12 junior", "pointure 29", "talla 32"))
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

        # the product type words
        roll = rng.random()
        if roll < P_DEPARTMENT_TERM:
            type_term = _pick_term(leaf.department_terms[term_lang], rng, who)
        elif roll < P_DEPARTMENT_TERM + P_PARENT_TERM:
            type_term = _pick_term(leaf.parent_terms[term_lang], rng, who)
        else:
            type_term = _pick_term(leaf.own_terms[term_lang], rng, who)
        if rng.random() < 0.5:
            type_term = _cap(type_term)
        li = V.LANGS.index(lang)
        mods = [m[li] for m in rng.sample(prof.modifiers, k=min(len(prof.modifiers),
                                                                 rng.choice((0, 1, 1, 2, 2, 3))))]
        extra = ""
        if leaf.neighbours and rng.random() < P_NEIGHBOUR_MENTION:
            other = self.leaves[rng.choice(leaf.neighbours)]
            neighbour_term = _pick_term(other.own_terms[lang], rng, who)
            extra = f"{rng.choice(V.CONNECTORS[lang])} {neighbour_term}"

        # colour
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

        # audience words and size
        key = self._audience_key(who, age)
        aud = ""
        if key is not None and rng.random() < 0.3:
            aud = rng.choice(V.AUDIENCE_WORDS[key][lang])
        size = self._size(leaf, age, lang)
        size_in_title = bool(size) and (rng.random() < (0.45 if age in ("kids", "baby") else 0.22))

        # brand fields
        gold_brand = brand.name if brand else ""
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
            gtin=_gtin(rng, r),
            gender=self._gender_field(who, age, lang),
            colour=colour_field,
            size=size,
            url=f"https://www.{r.slug}.example/p/{slug}-{product_id.lower()}",
            image_url=f"https://img.{r.slug}.example/{hashlib.sha1(product_id.encode()).hexdigest()[:12]}.jpg",
            availability=rng.choice(V.AVAILABILITY_WORDS[r.shop_lang(lang)]),
            gold_node=leaf.id,
            gold_brand=gold_brand,
            gold_who=who,
            gold_age=age,
            gold_colour=gold_colour if (colour_field or colour_in_title) else "",
        )

    def _assemble(self, lang: str, brand: str, aud: str, mods: list[str], type_term: str,
                  shade: str, size: str, extra: str) -> str:
        rng = self.rng
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

    def _decorate(self, title: str, lang: str) -> str:
        rng = self.rng
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
