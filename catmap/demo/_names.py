"""Invented brand names and the spellings retailers write them in.

Names are built from syllables ("Vellomar"), from two plain words ("Copper Vale"), or as a
house name ("Brannick & Co"). A handful of hand-written hard cases are always included: names
holding a gender word, very short names, names that are common words or product words, and
names that share their first word. Every candidate is checked against the blocklist of famous
real names (:mod:`catmap.demo._blocklist`).
"""

from __future__ import annotations

import random
import re
from dataclasses import dataclass

from catmap.demo._blocklist import is_blocked

_ONSETS = ("b", "br", "c", "cl", "d", "dr", "f", "fl", "g", "gr", "h", "k", "l", "m", "n", "p",
           "pr", "qu", "r", "s", "st", "t", "tr", "v", "w", "z", "th", "sk", "j", "y")
_VOWELS = ("a", "e", "i", "o", "u", "a", "e", "o", "ei", "ou", "ia", "y")
_CODAS = ("", "", "", "n", "r", "l", "s", "m", "x", "nd", "rt", "ll", "v", "k")
_ENDINGS = ("a", "o", "el", "ar", "ine", "ette", "wick", "ford", "mere", "ton", "by", "vale",
            "dal", "ik", "ora", "ane", "ix", "und", "ero", "elle")
_WORDS_A = ("Copper", "North", "Blue", "Silver", "Little", "Old", "Wild", "Amber", "Iron",
            "Hazel", "Moss", "Cedar", "Pale", "Salt", "Stone", "Rye", "Ash", "Cinder", "Linden",
            "Harbor", "Tidal", "Fern", "Quill", "Marble", "Ember", "Birch", "Heron", "Sorrel")
_WORDS_B = ("Vale", "Lane", "Quay", "Harbor", "Mill", "Loft", "Hollow", "Row", "Yard", "Crest",
            "Brook", "Field", "Works", "Bay", "Fold", "Haven", "Ridge", "Wharf", "Gate", "Reach",
            "Moor", "Croft", "Atelier", "Studio", "Supply", "Goods", "Labs", "Casa", "Maison",
            "Werk", "Haus")
_HOUSE = ("& Co", "& Co.", "& Sons", "& Daughters", "Bros", "& Partners")

# Hand-written hard cases (all invented): gender words, very short, common words, shared first word.
HARD_CASES: tuple[str, ...] = (
    "Lady Corvell", "Madame Ostrine", "Gentlemen's Brell", "Niña Vetrola", "Herrenhof Kavik",
    "Qy", "Zev", "Ulo", "KV", "Ixa", "Oro",
    "Thimble", "Lantern", "Bramble", "Fennel", "Quarry", "Cobble", "Wicket",
    "Linen Lane", "Velvet Mill",
    "Copper Vale", "Copper Vale Home", "Copper Quay", "North Fennel", "North Ostra",
    "Brannick & Co", "Brannick Outdoor",
)
# three vowels or four consonants in a row, or a doubled vowel, read badly
_AWKWARD = re.compile(r"[aeiouy]{3}|[b-df-hj-np-tv-xz]{4}|aa|ii|uu|yy|ee|oo")
LEGAL_SUFFIXES = ("GmbH", "Ltd", "Ltd.", "S.A.S.", "Inc.", "Co.", "S.L.", "SARL", "AG", "LLC",
                  "B.V.", "S.p.A.")


@dataclass(frozen=True, slots=True)
class Brand:
    """One invented brand.

    Attributes:
        name: canonical display name.
        variants: other spellings seen in feeds (never the canonical name itself).
        departments: ids of the departments it sells in.
        split_at: for a one-word name, where it may be split in two ("Vello Mar"), else 0.
    """

    name: str
    variants: tuple[str, ...]
    departments: tuple[str, ...]
    split_at: int = 0


def _syllable_name(rng: random.Random) -> tuple[str, int]:
    """A pronounceable invented word ("Vellomar") and the index where it may be split."""
    first = rng.choice(_ONSETS) + rng.choice(_VOWELS) + rng.choice(_CODAS)
    if rng.random() < 0.6:
        first += rng.choice(_ONSETS) + rng.choice(_VOWELS[:8])
    word = (first + rng.choice(_ENDINGS)).capitalize()
    word = re.sub(r"(.)\1\1+", r"\1\1", word)
    return word, len(first)


def _candidate(rng: random.Random) -> tuple[str, int]:
    roll = rng.random()
    if roll < 0.55:
        return _syllable_name(rng)
    if roll < 0.75:
        return f"{rng.choice(_WORDS_A)} {rng.choice(_WORDS_B)}", 0
    if roll < 0.87:
        return f"{_syllable_name(rng)[0]} {rng.choice(_HOUSE)}", 0
    if roll < 0.94:
        return f"{_syllable_name(rng)[0]} {rng.choice(_WORDS_B)}", 0
    return f"{_syllable_name(rng)[0]} & {_syllable_name(rng)[0]}", 0


def _misspell(name: str, rng: random.Random) -> str:
    """Drop, double or swap one lower-case letter (never the first one)."""
    letters = [i for i, c in enumerate(name) if c.islower() and i > 0]
    if len(letters) < 3:
        return name + name[-1]
    i = rng.choice(letters[:-1])
    kind = rng.choice(("drop", "double", "swap"))
    if kind == "drop":
        return name[:i] + name[i + 1:]
    if kind == "double" or not name[i + 1].islower():
        return name[:i] + name[i] + name[i:]
    return name[:i] + name[i + 1] + name[i] + name[i + 2:]


_GENDER_TOKENS = frozenset({"men", "man", "mens", "homme", "hommes", "herren", "hombre", "boy",
                            "boys", "women", "woman", "womens", "lady", "ladies", "femme",
                            "femmes", "damen", "mujer", "girl", "girls", "fille", "garcon"})


def _gender_tokens(text: str) -> set[str]:
    return {w for w in re.split(r"[^a-zà-ÿ]+", text.lower()) if w in _GENDER_TOKENS}


def make_variants(name: str, split_at: int, rng: random.Random) -> list[str]:
    """Return the spellings retailers use for a brand, canonical first.

    Args:
        name: canonical name.
        split_at: split point of a one-word name (0 when it should not be split).
        rng: the random source.

    Returns:
        Case variants, legal-suffix forms, ®/™ forms, a misspelling and a split or joined form.
    """
    out = [name, name.upper(), name.lower()]
    out.append(f"{name} {rng.choice(LEGAL_SUFFIXES)}")
    out.append(f"{name}{rng.choice(('®', '™'))}")
    if len(name) > 3:
        for _ in range(5):
            typo = _misspell(name, rng)
            # a typo must not create a gender word ("Home" -> "Homme")
            if _gender_tokens(typo) <= _gender_tokens(name):
                out.append(typo)
                break
    if " " in name and "&" not in name:
        out.append(name.replace(" ", ""))
        out.append(name.replace(" ", "-"))
    elif "&" in name:
        out.append(name.replace("&", "and"))
        out.append(name.replace(" & ", "+"))
    elif split_at and 3 <= split_at <= len(name) - 3:
        out.append(name[:split_at] + " " + name[split_at:].capitalize())
    if len(name) <= 3:
        out.append(".".join(name.upper()) + ".")
    if rng.random() < 0.4:
        out.append(f"{name.upper()} {rng.choice(LEGAL_SUFFIXES).upper()}")
    seen: list[str] = []
    for v in out:
        if v not in seen:
            seen.append(v)
    return seen


def invent_brands(department_ids: list[str], *, count: int, rng: random.Random,
                  reserved: set[str]) -> list[Brand]:
    """Invent ``count`` brands (hard cases included) spread over the departments.

    Args:
        department_ids: the department node ids brands may sell in.
        count: how many brands to make (at least the number of hard cases).
        rng: the random source.
        reserved: lower-cased names that must not be used (e.g. retailer names).

    Returns:
        Brands in a fixed order; no two share a spelling, none is on the blocklist.
    """
    names: list[tuple[str, int]] = [(n, 0) for n in HARD_CASES]
    taken = {n.lower() for n in HARD_CASES} | reserved
    while len(names) < count:
        name, split_at = _candidate(rng)
        key = name.lower()
        if key in taken or is_blocked(name) or not 4 <= len(name) <= 22 or _AWKWARD.search(key):
            continue
        taken.add(key)
        names.append((name, split_at))
    owner: dict[str, str] = {}
    brands: list[Brand] = []
    for i, (name, split_at) in enumerate(names):
        variants = []
        for v in make_variants(name, split_at, rng):
            k = v.lower()
            if owner.setdefault(k, name) == name:
                variants.append(v)
        n_dep = rng.choices((1, 2, 3), weights=(5, 3, 1))[0]
        # the first brands cycle through departments so every department has many brands
        first = department_ids[i % len(department_ids)]
        others = rng.sample(department_ids, k=min(n_dep, len(department_ids)))
        deps = [first] + [d for d in others if d != first][: n_dep - 1]
        brands.append(Brand(name, tuple(v for v in variants if v != name), tuple(deps), split_at))
    return brands
