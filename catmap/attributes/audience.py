"""Who and age: whom a product is for, from the feed's gender column, the text and the node.

catmap's values are ``who`` ∈ female, male, unisex, not_applicable and ``age`` ∈ adult, kids,
baby, not_applicable (:data:`catmap.records.WHO_VALUES` / :data:`~catmap.records.AGE_VALUES`).

The node decides where gender and age apply at all (``tree.who`` / ``tree.ages``; empty means
not applicable) and which values are possible. Within that, the feed's gender column wins; the
title and the retailer's category path are read next (for the age the title, then the size,
then the path: the most product-specific source; the description for whatever they leave
open). A column that disagrees with the text, or a text that disagrees with a node allowing a
single value, sets the conflict flag and the evidence names both: nothing is silently resolved.

Traps handled before looking for words: brand names holding a gender word (the brand span is
removed first), "boyfriend" fits (a women's style), "baby pink" / "baby blue" (colours),
"girls' night" (an occasion), "for her" gifts and a parent as the gift's recipient ("for dad",
"pour maman": weak cues that count only where the node lets gender apply; the occasion, such as
"Mother's Day", says nothing), "young adult" (books for teenagers), "babies" (also a French
shoe style: a weak cue), and kids' sizes ("8 ans", "7-8 years", "age 4-5", "6-12 mois"; heights
such as "116 cm", "Gr. 140", "104/110" only on apparel and footwear nodes). French and Italian
elisions are read through ("d'homme", "pour l'enfant", "dell'uomo").
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import cast

from catmap._text import PhraseIndex, fold

FEMALE, MALE, UNISEX, NA = "female", "male", "unisex", "not_applicable"
ADULT, KIDS, BABY = "adult", "kids", "baby"
ALL_WHO = frozenset({FEMALE, MALE, UNISEX})
ALL_AGES = frozenset({ADULT, KIDS, BABY})

STRONG, WEAK, TRAP = "strong", "weak", "trap"

# (who, age, strength) per phrase, seven languages (en, fr, de, es, it, nl, pt). Matching is
# on folded text (no case, no accents, no apostrophes), so "Men's", "mens" and "MENS" are one
# entry.
_CUES: dict[tuple[str | None, str | None, str], tuple[str, ...]] = {
    (FEMALE, ADULT, STRONG): (
        "women", "womens", "woman", "ladies", "lady", "wmns", "wmn", "wms", "womenswear",
        "female",
        "femme", "femmes", "pour femme", "dame", "dames",
        "damen", "fur damen", "frauen", "frau",
        "mujer", "mujeres", "de mujer", "para mujer", "senora", "senoras", "dama",
        "donna", "donne", "da donna", "per donna", "signora",
        "voor dames", "vrouwen", "vrouw",
        "mulher", "mulheres", "para mulher", "de mulher", "feminino", "feminina", "senhora",
        "senhoras",
    ),
    (MALE, ADULT, STRONG): (
        "men", "mens", "mns", "man", "gents", "menswear", "male", "gentlemen", "gentleman",
        "homme", "hommes", "pour homme",
        "herren", "fur herren", "manner",
        "hombre", "hombres", "de hombre", "para hombre", "caballero", "caballeros",
        "uomo", "uomini", "da uomo", "per uomo",
        "heren", "voor heren", "mannen",
        "homem", "homens", "para homem", "de homem", "masculino", "masculina",
    ),
    (UNISEX, None, STRONG): (
        "unisex", "unisexe", "mixte", "unisex adult", "unisex adulto", "uniseks", "unissex",
    ),
    (FEMALE, KIDS, STRONG): (
        "girls", "girl", "girlswear", "fille", "filles", "pour fille", "fillette",
        "madchen", "nina", "ninas", "de nina", "para nina",
        "bambina", "bambine", "ragazza", "ragazze",
        "meisje", "meisjes", "voor meisjes",
        "menina", "meninas", "rapariga", "raparigas",
    ),
    (MALE, KIDS, STRONG): (
        "boys", "boy", "boyswear", "garcon", "garcons", "pour garcon",
        "jungen", "junge", "knaben", "nino", "de nino", "para nino",
        "bambino", "ragazzo",
        "jongen", "jongens", "voor jongens",
        "menino", "meninos", "rapaz", "rapazes",
    ),
    (None, KIDS, STRONG): (
        "kids", "kid", "kidswear", "children", "childrens", "child", "junior", "juniors",
        "toddler", "toddlers", "youth",
        "enfant", "enfants", "pour enfant", "junior",
        "kinder", "fur kinder", "kleinkind",
        "ninos", "infantil", "para ninos", "juvenil",
        "bambini", "per bambini", "bimbi", "bimbo",
        "kinderen", "voor kinderen", "peuter", "peuters",
        "crianca", "criancas", "para criancas", "para crianca",
    ),
    # The age said without a gender ("adult colouring book", "pour adultes").
    (None, ADULT, STRONG): (
        "adult", "adults", "for adults", "adulte", "adultes", "pour adultes", "erwachsene",
        "erwachsenen", "erwachsener", "fur erwachsene", "adulto", "adultos", "adulta",
        "adultas", "para adultos", "adulti", "per adulti", "volwassene", "volwassenen",
        "voor volwassenen",
    ),
    (None, BABY, STRONG): (
        "baby", "babys", "infant", "infants", "newborn", "new born",
        "bebe", "bebes", "naissance", "nourrisson",
        "saugling", "neugeborene", "erstlings",
        "recien nacido", "bebes",
        "neonato", "neonata", "neonati", "prima infanzia",
        "pasgeboren", "zuigeling",
        "recem nascido", "recem nascida",
    ),
    # Weak cues: a style or a gift, not a statement of whom the item fits.
    (FEMALE, None, WEAK): (
        "boyfriend", "for her", "pour elle", "fur sie", "para ella", "gift for her",
        "cadeau pour elle", "geschenk fur sie", "regalo para ella",
        "per lei", "regalo per lei", "voor haar", "cadeau voor haar", "para ela",
        "presente para ela",
        # A parent as the gift's recipient: "for" and the parent together, so that an
        # occasion naming the other parent ("Mother's Day", "fête des pères") says nothing.
        "for mum", "for mom", "for mummy", "for mommy", "for mother", "for grandma",
        "pour maman", "pour mamie", "pour ma mere", "fur mama", "fur mutti", "fur oma",
        "fur die mama", "para mama", "para la abuela", "para mi madre", "per mamma",
        "per la mamma", "per la nonna", "voor mama", "voor moeder", "voor oma", "para a mae",
        "para a avo",
    ),
    (MALE, None, WEAK): (
        "for him", "pour lui", "fur ihn", "gift for him", "cadeau pour lui",
        "geschenk fur ihn", "regalo para el",
        "per lui", "regalo per lui", "voor hem", "cadeau voor hem", "para ele",
        "presente para ele",
        "for dad", "for daddy", "for father", "for grandad", "for grandpa", "pour papa",
        "pour papi", "pour papy", "pour mon pere", "fur papa", "fur opa", "fur den papa",
        "para papa", "para el abuelo", "para mi padre", "per papa", "per il papa",
        "per il nonno", "voor papa", "voor vader", "voor opa", "para o pai", "para o avo",
    ),
    # "babies" is also a French shoe style (strap shoes): it counts only when nothing else
    # speaks for the age and the node allows babies.
    (None, BABY, WEAK): ("babies",),
    # Traps: phrases holding an audience word that says nothing about the audience.
    (None, None, TRAP): (
        "baby pink", "baby blue", "baby rose", "bleu bebe", "rose bebe", "babyblau",
        "babyrosa", "azul bebe", "rosa bebe", "baby doll", "babydoll",
        "girls night", "girls night out", "girls weekend", "girls trip", "soiree entre filles",
        "madelsabend", "noche de chicas", "boys night", "man made", "man made fibre",
        "bebe fille", "bebe garcon",  # handled by the two cues below
        "baby girl", "baby boy", "baby girls", "baby boys", "nina bebe", "nino bebe",
        "azzurro bebe", "babyroze", "babyblauw", "azul bebe", "cor de rosa bebe",
        "serata tra ragazze", "meidenavond", "noite das meninas",
        # a night or a day out named after a group, like the girls' night above
        "ladies night", "ladies nights", "ladies night out", "ladies day", "mens night",
        "mens night out", "soiree entre femmes", "soiree entre hommes", "noche de damas",
        "serata tra donne", "serata tra uomini", "noite das mulheres",
        # names and dishes holding a gender word
        "lady finger", "lady fingers", "ladies finger", "ladies fingers", "lady bug",
        "spider man", "iron man", "pac man", "he man", "snow man", "dame blanche",
        "notre dame", "old man", "gingerbread man",
        # "young adult" books and fiction are for teenagers
        "young adult", "young adults", "jeune adulte", "jeunes adultes", "junge erwachsene",
        "jovenes adultos", "giovani adulti", "jongvolwassenen", "jovens adultos",
    ),
}
# Phrases that map to both a who and the baby age (override the trap list above).
_BABY_PAIRS: dict[str, str] = {
    "bebe fille": FEMALE, "baby girl": FEMALE, "baby girls": FEMALE, "nina bebe": FEMALE,
    "bebe garcon": MALE, "baby boy": MALE, "baby boys": MALE, "nino bebe": MALE,
}

# German and Dutch compounds: "Damenjacke", "Herrenschuhe", "Kinderhose", "Mädchenkleid",
# "Babybody", "damesjas", "herenhorloge", "meisjesjurk", "jongensschoenen".
_COMPOUND = re.compile(
    r"\b(damen|herren|kinder|madchen|jungen|baby|dames|heren|meisjes|jongens)([a-z]{3,})\b"
)
_COMPOUND_CUES = {
    "damen": (FEMALE, ADULT), "herren": (MALE, ADULT), "kinder": (None, KIDS),
    "madchen": (FEMALE, KIDS), "jungen": (MALE, KIDS), "baby": (None, BABY),
    "dames": (FEMALE, ADULT), "heren": (MALE, ADULT), "meisjes": (FEMALE, KIDS),
    "jongens": (MALE, KIDS),
}
# Substrings that must be there for a compound to be (a cheap test before the pattern).
_COMPOUND_EXCEPTIONS = frozenset(
    {"babyblau", "babyrosa", "babydoll", "kindergarten", "babyblauw", "babyroze", "herenhuis",
     "damenabend", "herrenabend", "damesavond", "herenavond"}
)

# Single letters and abbreviations only a gender column uses (folded: "Hr." → "hr"). They
# are too ambiguous in running text ("24 hr", "vitamin D", Spanish "da"); common practice,
# no source.
_COLUMN_CODES: dict[str, tuple[str | None, str | None]] = {
    "w": (FEMALE, None), "f": (FEMALE, None), "d": (FEMALE, None), "m": (MALE, None),
    "h": (MALE, None), "u": (UNISEX, None), "k": (None, KIDS), "b": (None, BABY),
    "da": (FEMALE, ADULT), "dam": (FEMALE, ADULT), "fem": (FEMALE, ADULT),
    "muj": (FEMALE, ADULT), "sra": (FEMALE, ADULT), "hr": (MALE, ADULT), "hom": (MALE, ADULT),
    "hbre": (MALE, ADULT), "hmbre": (MALE, ADULT), "cab": (MALE, ADULT),
}
# Two-letter column codes: "K-B" is kids-boys, not kids and baby.
_COLUMN_PAIRS: dict[tuple[str, str], tuple[str | None, str | None]] = {
    ("k", "b"): (MALE, KIDS), ("k", "g"): (FEMALE, KIDS),
}

# Kids' sizes. EU children's sizes are body heights in cm: 50-86 baby, 92-176 kids, in steps of
# 6 (common practice, no source). A height says "child" only on a node sized by the body
# (apparel, footwear: see :func:`is_body_sized`), only at those exact sizes, and only with a
# size context: the size field, a size word before it ("Gr. 140", "taille 116") or a pair of
# neighbouring sizes ("104/110"); "120 cm" on a scarf or a table is a length. Bare numbers 50
# and 56 are left out (also men's suit sizes); after a size word they count.
_BABY_HEIGHTS = frozenset({62, 68, 74, 80, 86})
_BABY_HEIGHTS_SAID = _BABY_HEIGHTS | {50, 56}
_KIDS_HEIGHTS = frozenset(range(92, 177, 6))
_MONTHS = r"(?:months?|mths?|mois|monate?n?|meses|mes|mesi|maanden|mnd)"
_YEARS = r"(?:ans?|jahren?|anos?|anni|jaar|years?(?:\sold)?|yrs?|y|j)"
# "2 years warranty", "2 ans de garantie", "2 anni di garanzia" are not ages.
_NOT_AN_AGE = (
    r"(?!\s(?:de\s|di\s)?(?:warranty|guarantee|garantie|garantia|garanzia|gewahrleistung))"
)
_SIZE_WORD = r"(?:gr|grosse|groesse|size|taille|talla|taglia|maat|tamanho|height|hauteur)"
_AGE_PATTERNS: tuple[tuple[re.Pattern[str], str], ...] = (
    # "3-6 months", "6-12 mois", "12-18M"
    (re.compile(rf"\b(\d{{1,2}})\s(?:to\s|a\s|bis\s)?(\d{{1,2}})\s?(?:{_MONTHS}|m)\b"), BABY),
    # "6 months", "18m"
    (re.compile(rf"\b(\d{{1,2}})(?:\s{_MONTHS}|m)\b"), BABY),
    (
        re.compile(
            r"\b(?:age|ages|alter|edad|eta|leeftijd|idade|taille)\s(\d{1,2})"
            r"(?:\s(?:to\s|a\s|tot\s)?(\d{1,2}))?\b"
        ),
        KIDS,
    ),
    # "8 ans", "7-8 years", "3-4Y"
    (
        re.compile(
            rf"\b(\d{{1,2}})(?:\s(?:to\s|a\s|bis\s)?(\d{{1,2}}))?\s?{_YEARS}\b{_NOT_AN_AGE}"
        ),
        KIDS,
    ),
)
# Sizes that are body measures: read only on nodes sized by the body.
_BODY_PATTERNS: tuple[tuple[re.Pattern[str], str], ...] = (
    # Shoe sizes: EU 16-21 baby, 22-34 kids (common practice, no source).
    (re.compile(r"\b(?:eu|pointure|gr|grosse|talla|size|taille)\s(\d{2})\b"), "shoe"),
    # "Gr. 140", "taille 116 cm"
    (re.compile(rf"\b{_SIZE_WORD}\s(\d{{2,3}})(?:\scm)?\b"), "height"),
    # "104/110", "62/68" (folded to "104 110")
    (re.compile(r"\b(\d{2,3})\s(\d{2,3})\b"), "pair"),
)
# "116 cm": a height only where the text is the size field.
_FIELD_HEIGHT = re.compile(r"\b(\d{2,3})\s?cm\b")

# Department words of nodes sized by the body (the four languages); common practice, no source.
_BODY_SIZED_WORDS = frozenset(
    {
        "apparel", "clothing", "clothes", "garments", "footwear", "shoes",
        "vetements", "habillement", "chaussures",
        "bekleidung", "kleidung", "schuhe", "schuhwerk",
        "ropa", "prendas", "calzado", "zapatos",
        "abbigliamento", "calzature", "scarpe", "kleding", "schoenen", "vestuario", "roupa",
        "calcado", "sapatos",
    }
)


# Things worn or carried by one person: where the tree says no audience applies to their node
# (umbrellas, luggage, helmets, smartwatches, bike saddles), a product that says whom it is for
# ("pour femme", "for women", "Damen", "mixte") is still for them. Words of node names and
# terms, seven languages; common practice, no source.
_PERSONAL_WORDS = frozenset(
    fold(word)
    for word in (
        "strap straps band bands watch watches smartwatch smartwatches wristband helmet helmets "
        "umbrella umbrellas parasol parasols brolly brollies bag bags backpack backpacks "
        "rucksack rucksacks suitcase suitcases luggage holdall holdalls wallet wallets glove "
        "gloves goggles sunglasses wetsuit wetsuits bike bikes bicycle bicycles saddle saddles "
        "razor razors shaver shavers tracker trackers "
        "bracelet bracelets casque casques parapluie parapluies ombrelle ombrelles sac sacs "
        "valise valises bagages montre montres gants lunettes velo velos selle rasoir "
        "armband armbander uhr uhren helm helme schirm schirme regenschirm regenschirme tasche "
        "taschen koffer handschuhe brille fahrrad fahrrader sattel rasierer "
        "correa correas reloj relojes casco cascos paraguas bolso bolsos bolsa mochila "
        "mochilas maleta maletas guantes gafas bicicleta bicicletas sillin maquinilla "
        "cinturino orologio orologi ombrello ombrelli borsa borse zaino valigia guanti occhiali "
        "bici sella rasoio horlogeband horloge horloges paraplu tas tassen rugzak fiets zadel "
        "pulseira relogio relogios capacete guarda chuva mala malas luvas oculos bicicleta "
        "selim"
    ).split()
)


def is_personal_item(node_words: Iterable[str]) -> bool:
    """Return whether a node sells things worn or carried by one person (see above).

    Args:
        node_words: the node's name and terms, any language.
    """
    return any(
        word in _PERSONAL_WORDS for term in node_words for word in fold(term).split()
    )


def is_body_sized(department_words: Iterable[str]) -> bool:
    """Return whether a department sells things sized by the body (apparel, footwear).

    Args:
        department_words: the department's name and terms, any language.
    """
    return any(fold(word) in _BODY_SIZED_WORDS for word in department_words)


def _height_age(height: int) -> str | None:
    if height in _BABY_HEIGHTS_SAID:
        return BABY
    if height in _KIDS_HEIGHTS:
        return KIDS
    return None


_DIGIT = re.compile(r"\d")


@dataclass(frozen=True, slots=True)
class Audience:
    """Who and age of a product, with the evidence and whether sources disagreed."""

    who: str = NA
    age: str = NA
    evidence: str = ""
    conflict: bool = False
    who_confidence: float = 0.0
    age_confidence: float = 0.0


# French and Italian elide an article or a preposition before a vowel or a mute h, and folding
# deletes the apostrophe: "d'homme" reads "dhomme", "pour l'enfant" "pour lenfant", "dell'uomo"
# "delluomo". Every cue word starting with a vowel or an h is read after these too.
_ELIDED = ("d", "l", "dell", "all", "dall", "nell", "sull")
# Elided forms that are words of their own ("duomo": a cathedral).
_NOT_ELIDED = frozenset({"duomo"})


def _elided(word: str) -> tuple[str, ...]:
    if " " in word or not word or word[0] not in "aeiouh":
        return ()
    return tuple(form for form in (prefix + word for prefix in _ELIDED) if form not in _NOT_ELIDED)


def _build_index() -> PhraseIndex:
    phrases: list[tuple[str, object]] = []
    for (who, age, strength), words in _CUES.items():
        for word in words:
            if word in _BABY_PAIRS:
                phrases.append((word, (_BABY_PAIRS[word], BABY, STRONG)))
            else:
                payload = (who, age, strength)
                phrases.append((word, payload))
                phrases.extend((form, payload) for form in _elided(word))
    return PhraseIndex(phrases)


_INDEX = _build_index()

# Every folded word and phrase the audience lexicon reads (never a fuzzy brand match).
LEXICON_WORDS = (
    frozenset(fold(word) for words in _CUES.values() for word in words)
    | frozenset(form for words in _CUES.values() for word in words for form in _elided(word))
    | frozenset(_COMPOUND_CUES)
)


@dataclass(frozen=True, slots=True)
class Cues:
    """What one text (or the gender column) says: who and age values, each with a word."""

    who: tuple[tuple[str, str], ...] = ()  # (value, word)
    age: tuple[tuple[str, str], ...] = ()
    weak_who: tuple[tuple[str, str], ...] = ()
    weak_age: tuple[tuple[str, str], ...] = ()

    def who_value(self) -> str | None:
        """Return the one who value the strong cues give (female + male → unisex)."""
        return _combine_who({v for v, _w in self.who})

    def age_value(self) -> str | None:
        """Return the age the cues give (baby over kids over adult: the most specific)."""
        values = {v for v, _w in self.age}
        for value in (BABY, KIDS, ADULT):
            if value in values:
                return value
        return None

    def word_for(self, kind: str, value: str) -> str:
        """Return the word that gave a value (for the evidence)."""
        pool = self.who + self.weak_who if kind == "who" else self.age + self.weak_age
        return next((w for v, w in pool if v == value), "")


def _combine_who(values: set[str]) -> str | None:
    if not values:
        return None
    if FEMALE in values and MALE in values:
        return UNISEX
    if len(values) == 1:
        return next(iter(values))
    return next(v for v in (FEMALE, MALE) if v in values)  # X + unisex: the specific one


def _select(matches: list[tuple[int, int, str, object]]) -> list[tuple[int, int, str, object]]:
    """Keep non-overlapping matches, the longest at each position, earliest first."""
    chosen: list[tuple[int, int, str, object]] = []
    last_end = -1
    for match in sorted(matches, key=lambda m: (m[0], m[0] - m[1])):
        if match[0] >= last_end:
            chosen.append(match)
            last_end = match[1]
    return chosen


def blank_spans(folded: str, spans: Sequence[tuple[int, int]]) -> str:
    """Replace spans of a folded text by spaces (e.g. the brand, before looking for gender)."""
    if not spans:
        return folded
    chars = list(folded)
    touched = False
    for start, end in spans:
        for i in range(max(0, start), min(len(chars), end)):
            chars[i] = " "
            touched = True
    return "".join(chars) if touched else folded


def read_cues(folded: str, *, column: bool = False) -> Cues:
    """Return the audience cues of a folded text (or of a gender column value).

    Args:
        folded: text folded by :func:`catmap._text.fold`.
        column: read it as a gender column (single-letter codes allowed).
    """
    who: list[tuple[str, str]] = []
    age: list[tuple[str, str]] = []
    weak: list[tuple[str, str]] = []
    weak_age: list[tuple[str, str]] = []
    for _start, _end, key, payload in _select(_INDEX.find(folded)):
        w, a, strength = cast("tuple[str | None, str | None, str]", payload)
        if strength == TRAP:
            continue
        if strength == WEAK:
            if w:
                weak.append((w, key))
            if a:
                weak_age.append((a, key))
            continue
        if w:
            who.append((w, key))
        if a:
            age.append((a, key))
    if (
        "dame" in folded or "her" in folded or "kinder" in folded or "ngen" in folded
        or "madchen" in folded or "meisje" in folded or "baby" in folded
    ):
        for found in _COMPOUND.finditer(folded):
            if found.group(0) in _COMPOUND_EXCEPTIONS:
                continue
            w, a = _COMPOUND_CUES[found.group(1)]
            if w:
                who.append((w, found.group(0)))
            if a:
                age.append((a, found.group(0)))
    if column:
        tokens = folded.split()
        i = 0
        while i < len(tokens):
            token = tokens[i]
            code = _COLUMN_PAIRS.get((token, tokens[i + 1])) if i + 1 < len(tokens) else None
            if code:
                token = f"{token} {tokens[i + 1]}"
                i += 1
            else:
                code = _COLUMN_CODES.get(token)
            i += 1
            if code:
                if code[0]:
                    who.append((code[0], token))
                if code[1]:
                    age.append((code[1], token))
    return Cues(tuple(who), tuple(age), tuple(weak), tuple(weak_age))


def age_from_size(
    folded: str, *, size_field: bool = False, body_sizes: bool = True
) -> tuple[str, str] | None:
    """Return (age, the text that says it) when a size implies kids or baby.

    Args:
        folded: a folded size field or title.
        size_field: the text is the size field: a lone number ("128") or "116 cm" is a height.
        body_sizes: the node is sized by the body (apparel, footwear; or unknown): heights and
            shoe sizes count. Ages ("8 ans", "3-6 months") count everywhere.
    """
    if not folded or _DIGIT.search(folded) is None:
        return None
    for pattern, value in _AGE_PATTERNS:
        for found in pattern.finditer(folded):
            top = max(int(g) for g in found.groups() if g)
            if value == BABY and top <= 36:
                return (BABY if top <= 24 else KIDS), found.group(0)
            if value == KIDS and 1 <= top <= 16:
                return (BABY if top <= 1 else KIDS), found.group(0)
    if not body_sizes:
        return None
    for pattern, value in _BODY_PATTERNS:
        for found in pattern.finditer(folded):
            if value == "shoe":
                number = int(found.group(1))
                if 16 <= number <= 21:
                    return BABY, found.group(0)
                if 22 <= number <= 34:
                    return KIDS, found.group(0)
            elif value == "height":
                age = _height_age(int(found.group(1)))
                if age:
                    return age, found.group(0)
            else:
                low, high = int(found.group(1)), int(found.group(2))
                age = _height_age(high)
                if age and high - low == 6 and _height_age(low):
                    return age, found.group(0)
    if size_field:
        for found in _FIELD_HEIGHT.finditer(folded):
            age = _height_age(int(found.group(1)))
            if age:
                return age, found.group(0)
        stripped = folded.strip()
        if stripped.isdigit():
            number = int(stripped)
            if number in _BABY_HEIGHTS:
                return BABY, stripped
            if number in _KIDS_HEIGHTS:
                return KIDS, stripped
    return None


def decide_audience(
    *,
    allowed_who: frozenset[str] | None,
    allowed_ages: frozenset[str] | None,
    column: Cues,
    text: Cues,
    size_age: tuple[str, str] | None,
    column_text: str = "",
) -> Audience:
    """Combine the column, the text, the size and the node into who and age.

    Args:
        allowed_who: ``tree.who(node)``; empty = gender does not apply; None = no node known.
        allowed_ages: ``tree.ages(node)``; likewise.
        column: cues of the gender column.
        text: cues of the title / category path (or description).
        size_age: what the size says, if anything.
        column_text: the raw column value, for the evidence.

    Returns:
        The audience, with evidence and the conflict flag.
    """
    return _decide(allowed_who, allowed_ages, column, text, size_age, column_text)


# A feed holds few distinct combinations of node rules and cues (the cues keep only the words
# that matched), so the decision is made once per combination.
@lru_cache(maxsize=65_536)
def _decide(
    allowed_who: frozenset[str] | None,
    allowed_ages: frozenset[str] | None,
    column: Cues,
    text: Cues,
    size_age: tuple[str, str] | None,
    column_text: str,
) -> Audience:
    notes: list[str] = []
    conflict = False

    # -- who
    who, who_conf = NA, 0.0
    col_who = column.who_value()
    text_who = text.who_value()
    weak_who = _combine_who({v for v, _w in text.weak_who})
    if allowed_who is not None and not allowed_who:
        notes.append("node: gender does not apply")
    else:
        allowed = allowed_who if allowed_who is not None else ALL_WHO
        if col_who:
            who, who_conf = col_who, 0.95
            notes.append(f"column '{column_text}' → {col_who}")
            if text_who and text_who != col_who:
                conflict = True
                word = text.word_for("who", text_who)
                notes.append(f"conflict: text '{word}' says {text_who}")
            if col_who not in allowed:
                conflict = True
                notes.append(f"conflict: node allows {_listed(allowed)}")
        elif text_who:
            who, who_conf = text_who, 0.85
            notes.append(f"text '{text.word_for('who', text_who)}' → {text_who}")
            if text_who not in allowed:
                conflict = True
                notes.append(f"conflict: node allows {_listed(allowed)}")
        elif len(allowed) == 1:
            who, who_conf = next(iter(allowed)), 0.9
            notes.append(f"node allows only {who}")
        elif weak_who and weak_who in allowed:
            who, who_conf = weak_who, 0.6
            notes.append(f"text '{text.word_for('who', weak_who)}' → {weak_who} (weak)")
        elif UNISEX in allowed and allowed_who is not None:
            who, who_conf = UNISEX, 0.3
            notes.append("nothing said: unisex by default")

    # -- age
    age, age_conf = NA, 0.0
    col_age = column.age_value()
    text_age = text.age_value()
    if size_age and allowed_ages is not None and size_age[0] not in allowed_ages:
        size_age = None  # a size is weak evidence: "120 cm" on a tie is a length
    if size_age and text_age is None:
        text_age, text_age_word = size_age
    else:
        text_age_word = text.word_for("age", text_age) if text_age else ""
    if allowed_ages is not None and not allowed_ages:
        notes.append("node: age does not apply")
    else:
        allowed_a = allowed_ages if allowed_ages is not None else ALL_AGES
        if col_age:
            age, age_conf = col_age, 0.95
            notes.append(f"column '{column_text}' → {col_age}")
            if text_age and text_age != col_age:
                conflict = True
                notes.append(f"conflict: text '{text_age_word}' says {text_age}")
        elif text_age:
            age, age_conf = text_age, 0.85
            notes.append(f"text '{text_age_word}' → {text_age}")
        elif len(allowed_a) == 1:
            age, age_conf = next(iter(allowed_a)), 0.9
            notes.append(f"node allows only {age}")
        elif text.weak_age and text.weak_age[0][0] in allowed_a:
            (age, word), age_conf = text.weak_age[0], 0.6
            notes.append(f"text '{word}' → {age} (weak)")
        elif ADULT in allowed_a and allowed_ages is not None:
            age, age_conf = ADULT, 0.4
            notes.append("nothing said: adult by default")
        if age != NA and age not in allowed_a:
            if age == BABY and KIDS in allowed_a and not col_age:
                age = KIDS
            else:
                conflict = True
                notes.append(f"conflict: node allows ages {_listed(allowed_a)}")
    return Audience(who, age, "; ".join(notes), conflict, who_conf, age_conf)


def _listed(values: Iterable[str]) -> str:
    return ",".join(sorted(values))


def extract_audience(
    *,
    gender_text: str = "",
    title: str = "",
    category_path: Iterable[str] = (),
    description: str = "",
    size: str = "",
    allowed_who: frozenset[str] | None = None,
    allowed_ages: frozenset[str] | None = None,
    brand_spans: Sequence[tuple[int, int]] = (),
    body_sizes: bool = True,
) -> Audience:
    """Return who and age of one product (pure; never raises on any strings).

    Args:
        gender_text: the feed's gender column.
        title: the title (raw; folded here).
        category_path: the retailer's own category path.
        description: the description, read for what title, path and size leave open.
        size: the size field.
        allowed_who: ``tree.who(node)`` or None when no node is known.
        allowed_ages: ``tree.ages(node)`` or None.
        brand_spans: spans of the brand in the folded title, removed before reading it.
        body_sizes: the node is sized by the body (:func:`is_body_sized`; True when unknown):
            heights and shoe sizes may say kids or baby.
    """
    folded_title = blank_spans(fold(title), brand_spans)
    return extract_audience_folded(
        gender_text=gender_text,
        folded_title=folded_title,
        folded_path=fold(" / ".join(category_path)),
        folded_description=fold(description),
        size=size,
        allowed_who=allowed_who,
        allowed_ages=allowed_ages,
        body_sizes=body_sizes,
    )


@lru_cache(maxsize=4096)
def _column_cues(gender_text: str) -> Cues:
    # Gender columns hold a handful of distinct values: read each once.
    return read_cues(fold(gender_text), column=True)


@lru_cache(maxsize=4096)
def _column_text(gender_text: str) -> str:
    return " ".join(gender_text.split())


@lru_cache(maxsize=4096)
def _size_facts(size: str, body_sizes: bool) -> tuple[str, tuple[str, str] | None]:
    folded = fold(size)
    return folded, age_from_size(folded, size_field=True, body_sizes=body_sizes)


@lru_cache(maxsize=4096)
def _path_cues(folded_path: str) -> Cues:
    # Retailer category paths repeat across a feed: read each once.
    return read_cues(folded_path)


_NO_CUES = Cues()


def extract_audience_folded(
    *,
    gender_text: str,
    folded_title: str,
    folded_path: str,
    folded_description: str,
    size: str,
    allowed_who: frozenset[str] | None,
    allowed_ages: frozenset[str] | None,
    body_sizes: bool = True,
    said_only: bool = False,
) -> Audience:
    """As :func:`extract_audience`, with title, path and description already folded.

    ``said_only``: the node says no audience applies but its products are worn or carried by
    one person (:func:`is_personal_item`): an explicit gender cue of the column or the title
    ("pour femme", "Damen", "mixte", "girls") still decides, with the age its words carry; a
    weak cue ("for her"), an age alone, a size, the path or the description do not, and with
    no such cue the audience stays not applicable.

    Who comes from the title and the path together, else from the description. Age comes from
    the most product-specific source that says one: the title, then the size, then the path
    (a path like "Enfant / Sécurité bébé" names a shop aisle, not this product), then the
    description.
    """
    column = _column_cues(gender_text) if gender_text else _NO_CUES
    if said_only and allowed_who is not None and not allowed_who and not allowed_ages:
        # Only the product's own words: a retailer's aisle ("Bike bags and child seats") says
        # nothing of this product, and an age alone ("kids sleeping bag") is a size.
        said = read_cues(folded_title)
        if column.who or said.who:
            decided = _decide(
                None, None, Cues(column.who, column.age), Cues(said.who, said.age),
                None, _column_text(gender_text) if gender_text else "",
            )
            return Audience(
                decided.who, decided.age,
                f"node: audience only when said; {decided.evidence}",
                decided.conflict, decided.who_confidence, decided.age_confidence,
            )
    folded_size, size_age = _size_facts(size, body_sizes) if size else ("", None)
    title = read_cues(f"{folded_title} {folded_size}") if folded_size else read_cues(folded_title)
    path = _path_cues(folded_path) if folded_path else _NO_CUES
    who = title.who + path.who
    weak_who = title.weak_who + path.weak_who
    weak_age = title.weak_age + path.weak_age
    age = title.age
    if not age:
        if size_age is None:
            size_age = age_from_size(folded_title, body_sizes=body_sizes)
        if size_age is not None and (allowed_ages is None or size_age[0] in allowed_ages):
            age = (size_age,)
        else:
            age = path.age
    if folded_description and (not who or not age):
        # The description speaks for whatever the rest leaves open: a baby hat whose title
        # says only "baby" is for girls when the description says "for baby girls".
        described = read_cues(folded_description)
        who = who or described.who
        age = age or described.age
        weak_who += described.weak_who
        weak_age += described.weak_age
    return _decide(
        allowed_who,
        allowed_ages,
        column,
        Cues(who, age, weak_who, weak_age),
        None,
        _column_text(gender_text) if gender_text else "",
    )
