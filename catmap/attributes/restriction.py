"""Restriction flag: alcohol, tobacco, weapons, adult, medicine.

The node decides first: ``tree.restriction(node)`` (its own or its nearest restricted
ancestor's). Where the node cannot say (no node yet, a department or other inner node, or a
generic node such as gifts), the text is read in seven languages (English, French, German,
Spanish, Italian, Dutch, Portuguese) for what the product *is*:

- the restricted goods by name (word lists in :mod:`catmap.attributes._restriction_words`:
  drinks by style, grape and regional name, tobacco and vape forms, weapon types, adult
  products, medicines by active ingredient), with their plural forms;
- German and Dutch compounds by their head, the last part: "Weizenbier" and "Outdoormesser"
  are the good, "Bieröffner", "Weinregal" and "tabakbraun" are not; a head such as "messer"
  or "pistole" is undone by first parts that make it a tool or a toy ("Brotmesser",
  "Wasserpistole");
- word stems ("érotique", "antihistaminique") and active-ingredient endings next to a dose or a
  dosage form ("Naproxen 250 mg"), a condition with a dosage form ("sirop contre la toux"),
  a nicotine word with a replacement form (a medicine: "nicotine gum");
- measures: an alcohol strength ("13,5 % vol"), a bottle's measure beside a word that
  names a drink only there ("Rosé de Provence 75 cl"), a nicotine dose or a puff count
  beside a vape word ("pods menthe 20 mg", "600 bouffées"); a cartridge or a shell beside a
  calibre or a hunting word ("cartuchos de caza calibre 12");
- pairs of words that name the adult flag only together, a qualifier beside an object
  ("lubricante anal", "anello vibrante");

and the words that make a named good something else undo it: a descriptor near it (a scent,
a flavour carrier, a colour, a shape, a print: "whisky-scented candle", "tobacco brown",
"sans alcool"; at the title's start, at any distance: "Bougie parfumée ... whisky"), a
child's or toy word ("épée en mousse pour enfants"), an accessory near it or at the title's
start or end ("whisky stones", "cigar cutter", "pill box", "copos de vinho do Porto"; a
drink's barrel undoes drinks only, and "filter" right before a smoke's name says its kind),
unless the accessory comes with the good ("coffret whisky et deux verres") or the good with
it ("humidor with cigars"), a flavour word just before the good ("al gusto di limoncello"), a
kitchen, garden or tool word for a blade or a gun ("chef knife", "couteau à pain",
"pistolet à colle"), a kitchen flavouring for a drink ("Rum-Aroma"), or an object at the head
of the title ("tobacco leaf wallpaper"). A keyword that is also a colour name ("cognac",
"champagne", "wine") counts away from the title's start only when something says the good
is meant (a bottle, a measure, a vintage, another keyword of its flag); a vape keeps its flag
beside a sweet's name (its flavour).

On an unrestricted leaf only keywords that name the restricted good itself count ("hunting
knife", "grappa"; not "knife" or "wine"), and a node whose words say kitchen, garden, tools
or toys silences the general keywords of the goods that such a node holds lookalikes of
(:func:`quiet_flags`); a restricted node yields to the text only when the text names another
restricted good and nothing of the node's.

A flag is an aid, not advice: :data:`RESTRICTION_CAUTION` says so wherever flags are shown.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from typing import TYPE_CHECKING, Any

import ahocorasick

from catmap._text import PhraseIndex, fold
from catmap.attributes import _restriction_words as words
from catmap.feeds.colour import COLOUR_WORDS

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree

RESTRICTIONS: tuple[str, ...] = ("alcohol", "tobacco", "weapons", "adult", "medicine")

RESTRICTION_CAUTION = (
    "A restriction flag is an aid, not legal advice: local rules and the advertiser's "
    "policy decide what may be sold and advertised, to whom and where."
)

# Words of a generic node's name: products there can be anything, so keywords are read.
GENERIC_NODE_WORDS = frozenset(
    {"gift", "gifts", "hamper", "hampers", "set", "sets", "bundle", "bundles", "other",
     "miscellaneous", "assorted", "surprise", "advent", "subscription", "subscriptions"}
)

_KEYWORDS: dict[str, tuple[str, ...]] = {
    "alcohol": words.ALCOHOL,
    "tobacco": words.TOBACCO,
    "weapons": words.WEAPONS,
    "adult": words.ADULT,
    "medicine": words.MEDICINE,
}
_PLAIN_KEYWORDS = frozenset(fold(w) for w in words.PLAIN)

# Payloads of the phrase index besides a flag ("" hides its words).
_DESCRIPTOR = "~"
_ACCESSORY = "+"
_KITCHEN = "k"
_CONDITION = "c"
_FORM = "f"
_NICOTINE_FORM = "n"
_CHILD = "ch"
_DRINK = "dr"
_FLAVOURING = "fl"
_WEAK = "w"
_WEAK_TOBACCO = "wt"
_PUFF = "p"
_DRINK_ACCESSORY = "+d"
_WEAK_AMMO = "wa"
_HUNT = "h"
_ADULT_QUALIFIER = "aq"
_PUFF_WORDS = ("puffs", "bouffees", "zuge", "caladas", "tiri", "trekjes", "tragadas",
               "baforadas", "hits")
_CUES = frozenset(
    {_DESCRIPTOR, _ACCESSORY, _KITCHEN, _CONDITION, _FORM, _NICOTINE_FORM, _CHILD, _WEAK,
     _WEAK_TOBACCO, _PUFF, _DRINK, _FLAVOURING, _DRINK_ACCESSORY, _WEAK_AMMO, _HUNT,
     _ADULT_QUALIFIER}
)
_CUES_OR_HARMLESS = _CUES | {""}
# Payloads that on their own never make a flag (no drink, weak word, dose or condition).
_INERT = frozenset({_DESCRIPTOR, _ACCESSORY, _KITCHEN, _FORM, _NICOTINE_FORM, _CHILD, _DRINK,
                    _FLAVOURING, _DRINK_ACCESSORY, _HUNT, ""})
_INERT_OR_WEAK = _INERT | {_WEAK}

# How many words away a cue may stand ("gin and tonic candle", "caramelle al gusto di rum":
# four words between the object and the drink it tastes of).
_WINDOW = 4
# A kitchen word qualifies the blade next to it ("couteau de chef 20 cm").
_KITCHEN_WINDOW = 3

# Flags a descriptor or an object at the head can undo: a flavour, scent, colour or shape is
# named after a drink, a smoke or a weapon; an erotic candle is still adult, a nicotine gum
# still a medicine.
_NEGATABLE = frozenset({"alcohol", "tobacco", "weapons"})
# Flags an accessory can undo ("pill box" is not a medicine; a vibrator case is still adult).
_ACCESSORY_NEGATABLE = frozenset({"alcohol", "tobacco", "weapons", "medicine"})
_VAPE = frozenset(fold(word) for word in words.VAPE)
# Keywords that are also colour names ("wine", "champagne", "cognac", "tobacco", French
# "sable"): away from the title's start they count only with something that says the good
# is meant (a bottle, a measure, a vintage, another keyword of the same flag).
_COLOUR_NAMES = frozenset(
    fold(word) for by_lang in COLOUR_WORDS.values() for names in by_lang.values()
    for word in names
)
_NICOTINE_REPLACEMENT = tuple(fold(word) for word in words.NICOTINE_REPLACEMENT)
_NICOTINE_WORDS = frozenset({"nicotine", "nicotina", "nikotin", "nicotine salt"})
_AMMUNITION = frozenset(fold(word) for word in words.WEAK_AMMUNITION)
_CALIBRE = re.compile(
    rf"\b(?:{'|'.join(words.CALIBRE_WORDS)}) \d{{1,3}}(?:d\d{{1,3}})?\b"
    r"|\b(?:10|12|16|20|28|410) ?(?:gauge|ga)\b"
)
# Small words between a flavour word and what it names ("al gusto di limoncello",
# "saveur au rhum", "sabor a anís").
_FLAVOUR_LINKS = frozenset(
    "a al alla allo ai au aux d de del della di do da du van met mit com con".split()
)


def _plurals(word: str) -> tuple[str, ...]:
    """Return a keyword with its plural forms in the seven languages: "s"/"es" ("cervezas",
    "vins", "daggers"), the Italian vowel change ("vino" "vini", "birra" "birre"), the
    German and Dutch "e"/"en"/"er" ("Weine", "wijnen", "Schwerter"); a phrase puts its
    last word or every word in the plural ("red wines", "vinos tintos")."""
    if " " in word:
        parts = word.split(" ")
        return (word, " ".join(parts[:-1] + [f"{parts[-1]}s"]), " ".join(f"{p}s" for p in parts))
    if len(word) < 3:
        return (word,)
    forms = [word, f"{word}s"]
    if word[-1] in "aeiou":
        vowel = {"o": "i", "a": "e", "e": "i"}.get(word[-1])
        if vowel and len(word) >= 4:
            forms.append(word[:-1] + vowel)
    else:
        forms.append(f"{word}es")
        if len(word) >= 4:
            forms += [f"{word}e", f"{word}en", f"{word}er"]
    return tuple(form for form in forms if form == word or form not in _NOT_PLURALS)


# Forms the plural and elision rules would make that are other words: "vines", "face" (from
# "faca"), "cave" (from "cava"), "spade" (from "spada"), "grappe" (bunches of grapes),
# "beste", "larme" (a tear, from "arme").
_NOT_PLURALS = frozenset(
    "vines anise grappe cave spade beste face godi sakes weiner sekte sexes rone korne "
    "ales gines larme larmes".split()
)


def _elided(phrase: str) -> tuple[str, ...]:
    """Return a phrase with the forms French and Italian elision gives it once folded (the
    apostrophe is deleted): "cran d arret" also as "cran darret", "arbalete" also as
    "darbalete" and "larbalete" ("carreaux d'arbalète", "l'alcool")."""
    forms = [phrase]
    if " d " in f" {phrase}" or " l " in f" {phrase}":
        forms.append(re.sub(r"(^| )([dl]) ", r"\1\2", phrase))
    if len(phrase.split(" ")[0]) >= 4 and phrase[0] in "aeiouh":
        forms += [f"d{form}" for form in list(forms)] + [f"l{form}" for form in list(forms)]
    return tuple(form for form in forms if form not in _NOT_PLURALS)


def _phrases() -> dict[str, object]:
    phrases: dict[str, object] = {}
    for cue, payload in (
        (words.NICOTINE_REPLACEMENT, _NICOTINE_FORM), (words.DOSAGE_FORMS, _FORM),
        (words.CONDITIONS, _CONDITION), (words.KITCHEN_TOOLS, _KITCHEN),
        (words.ACCESSORIES, _ACCESSORY), (words.DESCRIPTORS, _DESCRIPTOR),
        (words.CHILDREN, _CHILD), (words.DRINK_CONTEXT, _DRINK),
        (words.FLAVOURINGS, _FLAVOURING),
    ):
        for phrase in cue:
            folded = fold(phrase)
            plurals = (folded, f"{folded}s") if " " not in folded and len(folded) >= 4 else ()
            for form in (*_elided(folded), *plurals):
                phrases[form] = payload
    for restriction, keywords in _KEYWORDS.items():
        for word in keywords:
            folded = fold(word)
            for form in (*_plurals(folded), *_elided(folded)):
                phrases.setdefault(form, restriction)
    for phrase in words.DRINK_ACCESSORIES:
        for form in _elided(fold(phrase)):
            phrases[form] = _DRINK_ACCESSORY
    for phrase in words.WEAK_ALCOHOL:
        for form in _elided(fold(phrase)):
            phrases.setdefault(form, _WEAK)
    for phrase in _PUFF_WORDS:
        phrases.setdefault(phrase, _PUFF)
    for phrase in words.WEAK_TOBACCO:
        phrases.setdefault(fold(phrase), _WEAK_TOBACCO)
    for phrase in words.WEAK_AMMUNITION:
        phrases.setdefault(fold(phrase), _WEAK_AMMO)
    for phrase in words.HUNTING:
        phrases.setdefault(fold(phrase), _HUNT)
    for phrase in words.ADULT_QUALIFIERS:
        phrases.setdefault(fold(phrase), _ADULT_QUALIFIER)
    keyword_words = {word for form, payload in phrases.items() if payload in RESTRICTIONS
                     for word in form.split(" ")}
    accessory_words = {fold(word) for word in words.ACCESSORIES if " " not in fold(word)}
    for phrase in words.HARMLESS:
        folded = fold(phrase)
        # A phrase without a keyword in it cannot hide one: it is the accessory or tool a
        # good is named beside ("portabottiglie vino", "aiguiseur couteau"); so is one that
        # names an accessory ("copos de vinho do Porto": the glasses are the product).
        in_phrase = set(folded.split(" "))
        payload = "" if keyword_words & in_phrase and not accessory_words & in_phrase else (
            _ACCESSORY
        )
        for form in _elided(folded):
            phrases[form] = payload
    return phrases


def _parts() -> dict[str, tuple[tuple[str, ...], ...]]:
    # Parts of words (compound heads and first parts, stems, active-ingredient endings),
    # found inside any word; each carries its roles.
    roles: dict[str, list[tuple[str, ...]]] = {}
    for head, (flag, undo, required) in words.COMPOUND_HEADS.items():
        roles.setdefault(head, []).append(("head", flag, *undo, "|", *required))
    for first, flag in words.COMPOUND_MODIFIERS.items():
        roles.setdefault(first, []).append(("first", flag))
    for stem, flag in words.STEM_PREFIXES.items():
        roles.setdefault(stem, []).append(("stem", flag))
    for ending in words.INN_ENDINGS:
        roles.setdefault(ending, []).append(("inn", "medicine"))
    for head, kind in words.COMPOUND_CUE_HEADS.items():
        cue = _DESCRIPTOR if kind == "descriptor" else _ACCESSORY
        roles.setdefault(head, []).append(("cue", cue))
    return {part: tuple(part_roles) for part, part_roles in roles.items()}


def _build_automaton() -> ahocorasick.Automaton:
    # One pass finds both: whole-word phrases (keyed with a space on each side, as the text
    # is padded) and parts of words (keyed bare).
    automaton = ahocorasick.Automaton()
    for phrase, payload in _phrases().items():
        if phrase:
            automaton.add_word(f" {phrase} ", (True, phrase, payload))
    for part, roles in _parts().items():
        automaton.add_word(part, (False, part, roles))
    automaton.make_automaton()
    return automaton


_AUTOMATON = _build_automaton()
_HARMLESS_KEYS = frozenset(form for phrase in words.HARMLESS for form in _elided(fold(phrase)))
_OBJECTS = PhraseIndex((word, "") for word in words.OBJECT_WORDS)
_Match = tuple[int, int, str, object]
_PartHit = tuple[int, tuple[str, tuple[tuple[str, ...], ...]]]


def _scan(
    found: list[tuple[int, tuple[bool, str, Any]]],
) -> tuple[list[_Match], list[_PartHit], set[object]]:
    """Return the phrases (start, end, phrase, payload), the parts of words (end index,
    (part, roles)) and the phrases' payloads from what the automaton found in a padded
    folded text."""
    matches = [
        (end - len(key) - 1, end - 1, key, payload)
        for end, (whole, key, payload) in found if whole
    ]
    if len(matches) == len(found):
        return matches, [], {m[3] for m in matches}
    found_parts = [(end - 1, (key, roles)) for end, (whole, key, roles) in found if not whole]
    return matches, found_parts, {m[3] for m in matches}


_PACKS = words.PACKS
_STRENGTH = re.compile(r"\b(\d{1,2})(?:d(\d+))? (?:vol|abv|alc)\b")
_DIGIT = re.compile(r"\d")
_VINTAGE = re.compile(r"\b(?:19[5-9]\d|20[0-4]\d)\b")
_WEIGHT = re.compile(r"\b\d+ ?(?:g|gr|gramm|grammes|gram|oz)\b")
# A vape's nicotine dose ("20 mg", "12mg/ml") and puff count ("600 puffs", "800 tiri").
_NICOTINE_DOSE = re.compile(r"\b\d{1,2}(?:d\d)? ?mg\b")
_PUFFS = re.compile(rf"\b\d{{3,5}} ?(?:{'|'.join(_PUFF_WORDS)})\b")
# A bottle's or a can's measure: 70 cl, 0,75 l, 750 ml, 33 cl (and "magnum").
_MEASURE = re.compile(r"\b(\d+(?:d\d+)?) ?(cl|ml|l)\b")
_BOTTLE_SIZES = {
    "cl": frozenset("70 75 50 35 37d5 20 33 25 44 150".split()),
    "l": frozenset("0d7 0d75 0d5 0d33 0d35 0d375 0d2 1d5".split()),
    "ml": frozenset("700 750 500 330 375 1500".split()),
}


def _bottle(folded: str) -> bool:
    """Whether a folded text gives a bottle's or a can's measure."""
    if "magnum" in folded:
        return True
    if not ("cl" in folded or "ml" in folded or " l" in folded or "0d" in folded):
        return False
    return any(
        amount in _BOTTLE_SIZES[unit] for amount, unit in _MEASURE.findall(folded)
    )
_ANTI = re.compile(r"\banti (?=[a-z])")
_DOSE = re.compile(r"\b\d+(?:d\d+)? ?(?:mg|mcg|ug|g|ml|iu)\b")


def _word_parts(
    folded: str,
    found_parts: list[_PartHit],
    covered: list[tuple[int, int]],
    matches: list[_Match],
) -> list[_Match]:
    """Read the words that hold a part of a restricted good's name, other than whole
    keywords the phrase index found: compounds by their head, stems, ingredient endings."""
    found: dict[int, _Match] = {}
    rank: dict[int, int] = {}
    for end, (part, roles) in found_parts:
        start = end - len(part) + 1
        w_start = folded.rfind(" ", 0, start) + 1
        w_end = folded.find(" ", end + 1)
        if w_end < 0:
            w_end = len(folded)
        if any(c_start <= w_start and w_end <= c_end for c_start, c_end in covered):
            continue
        word = folded[w_start:w_end]
        for role in roles:
            kind, flag = role[0], role[1]
            payload: object = None
            if kind == "head" and w_end == end + 1 and start - w_start >= 3:
                first = word[: start - w_start]
                split = role.index("|")
                undo, required = role[2:split], role[split + 1:]
                if any(first.endswith(u) for u in undo):
                    continue
                if required and not any(first.endswith(r) for r in required):
                    continue
                payload, level = flag, 3
            elif kind == "stem" and start == w_start:
                payload, level = flag, 2
            elif kind == "inn" and w_end == end + 1 and start - w_start >= 3:
                if not (_DOSE.search(folded) or any(m[3] == _FORM for m in matches)):
                    continue
                payload, level = flag, 2
            elif kind == "cue" and w_end == end + 1 and start - w_start >= 3:
                payload, level = flag, 1
            elif kind == "first" and w_end - end - 1 >= 3 and (
                start == w_start or (len(part) >= 5 and start - w_start >= 3)
            ):
                # "Bieröffner", "Pfeifentabakmischung" (a long part may stand inside)
                rest = word[end + 1 - w_start:]
                payload = flag if rest in _PACKS or rest.lstrip("s") in _PACKS else _ACCESSORY
                level = 1
            else:
                continue
            if level > rank.get(w_start, 0):
                rank[w_start] = level
                found[w_start] = (w_start, w_end, word, payload)
    return list(found.values())


def _position(folded: str, start: int, end: int) -> tuple[int, int]:
    return folded.count(" ", 0, start), folded.count(" ", 0, end)


def _flavour_before(tokens: list[str], first: int) -> bool:
    """Whether a flavour word stands just before token ``first``, at most two small words
    between ("al gusto di limoncello", "saveur rhum"): the good is the product's flavour."""
    index = first - 1
    for _ in range(3):
        if index < 0:
            return False
        if tokens[index] in words.FLAVOUR_WORDS:
            return True
        if tokens[index] not in _FLAVOUR_LINKS:
            return False
        index -= 1
    return False


def _after_connector(tokens: list[str], first: int, *, measured: bool = True) -> bool:
    """Whether the words before token ``first`` join it to the rest as an addition
    ("with two glasses", "et deux verres") or, with ``measured``, measure it
    ("50 g pouch")."""
    index = first - 1
    if measured and index >= 0 and (
        _DIGIT.search(tokens[index]) or tokens[index] in words.UNITS
    ):
        return True
    for _ in range(3):
        if index < 0:
            return False
        if tokens[index] in words.CONNECTORS:
            return True
        if tokens[index] not in words.FILLERS and not _DIGIT.search(tokens[index]):
            return False
        index -= 1
    return False


def restriction_hits(folded: str) -> list[tuple[str, str, bool]]:
    """Return the restricted goods a folded text names as (restriction, keyword, strong).

    Harmless phrases hide their words; a good is dropped when a cue near it makes the
    product something else (see the module docstring). ``strong`` is False for keywords too
    general to flag a product the tree left unrestricted.
    """
    if "anti " in folded:  # "anti-histamínico" as "antihistaminico"
        folded = _ANTI.sub("anti", folded)
    found = list(_AUTOMATON.iter(f" {folded} "))
    if not found:
        return []  # the common case: no word of any list
    # the payloads found (a part of a word counts as a flag: it may name a good)
    seen = {value[2] if value[0] else "part" for _end, value in found}
    if " vol" not in folded and (
        seen <= _INERT or seen <= _INERT_OR_WEAK and not _bottle(folded)
    ):
        return []  # nothing restricted named: only colours, objects, a weak word...
    matches, found_parts, kinds = _scan(found)
    strength = (
        list(_STRENGTH.finditer(folded))
        if (" vol" in folded or " abv" in folded or " alc" in folded) else []
    )
    named = not kinds <= _CUES_OR_HARMLESS
    bottle = _WEAK in kinds and bool(_bottle(folded))
    # a nicotine dose or a puff count beside "pods", "liquid"...; a puff count alone
    puffs = _PUFFS.search(folded) if _PUFF in kinds else None
    dose = bool(puffs) or (_WEAK_TOBACCO in kinds and bool(_NICOTINE_DOSE.search(folded)))
    # a cartridge or a shell beside a calibre or a hunting word; a qualifier of the adult flag
    calibres = (
        list(_CALIBRE.finditer(folded))
        if ("cal" in folded or "kal" in folded or "ga" in folded) else []
    )
    ammo = (_WEAK_AMMO in kinds or _WEAK_TOBACCO in kinds) and (_HUNT in kinds or bool(calibres))
    pair = _ADULT_QUALIFIER in kinds
    if found_parts:
        covered = [(m[0], m[1]) for m in matches if m[3] not in _CUES or m[2] in _HARMLESS_KEYS]
        parts = _word_parts(folded, found_parts, covered, matches)
    else:
        parts = []
    if not (named or parts or strength or bottle or dose or ammo or pair):
        # the common case: nothing restricted named, only colours, objects...
        return _conditions(folded, matches) if _CONDITION in kinds else []
    kept: list[_Match] = []
    last_end = -1
    for match in sorted(matches + parts, key=lambda m: (m[0], m[0] - m[1])):
        if match[0] < last_end:
            continue
        last_end = match[1]
        kept.append(match)
    tokens = folded.split(" ")
    cues: dict[object, list[tuple[int, int]]] = {}
    goods: list[tuple[int, int, str, str, bool]] = []
    ammunition: list[tuple[int, int, str]] = []
    for start, end, key, payload in kept:
        first, last = _position(folded, start, end)
        if payload == _DESCRIPTOR and first > 0 and tokens[first - 1] in words.FLAVOUR_WORDS:
            continue  # "sabor chicle": the product's flavour
        if payload == _WEAK:
            if bottle:
                goods.append((first, last, key, "alcohol", False))
        elif payload == _WEAK_TOBACCO and dose:
            goods.append((first, last, key, "tobacco", False))
        elif payload in (_WEAK_AMMO, _WEAK_TOBACCO):
            if ammo and key in _AMMUNITION:
                ammunition.append((first, last, key))
        elif payload in _CUES:
            cues.setdefault(payload, []).append((first, last))
        elif payload:
            goods.append((first, last, key, str(payload), key not in _PLAIN_KEYWORDS))
    if puffs:
        first, last = _position(folded, *puffs.span())
        goods.append((first, last, puffs.group(0), "tobacco", True))
    for measure in strength:
        whole, fraction = measure.groups()
        first, last = _position(folded, *measure.span())
        if float(f"{whole}.{fraction or 0}") <= 1.2:
            # "0,5 % vol": a drink without alcohol by the usual threshold
            cues.setdefault(_DESCRIPTOR, []).append((first, last))
        else:
            goods.append((first, last, measure.group(0), "alcohol", True))

    def near(kind: str, first: int, last: int, window: int = _WINDOW) -> list[tuple[int, int]]:
        return [
            (c_first, c_last) for c_first, c_last in cues.get(kind, ())
            if first - window <= c_last and c_first <= last + window
        ]

    for measure in calibres:
        cues.setdefault(_HUNT, []).append(_position(folded, *measure.span()))
    for first, last, key in ammunition:
        if near(_HUNT, first, last):  # "cartuchos de caza", "cartucce calibro 12"
            goods.append((first, last, key, "weapons", True))
    for first, last in cues.get(_ADULT_QUALIFIER, ()) if pair else ():
        # "lubricante anal", "anello vibrante": a qualifier beside an object of the flag
        if any(
            tokens[i] in words.ADULT_OBJECTS
            for i in range(max(0, first - 2), min(len(tokens), last + 3))
            if not first <= i <= last
        ):
            goods.append((first, last, tokens[first], "adult", True))

    # the title's last word before its measures: the head of an English or German title
    head_end = len(tokens) - 1
    while head_end > 0 and (_DIGIT.search(tokens[head_end]) or tokens[head_end] in words.UNITS):
        head_end -= 1
    hits: list[tuple[str, str, bool]] = []
    for first, last, key, flag, strong in goods:
        if key in _NICOTINE_WORDS:
            around = f" {' '.join(tokens[max(0, first - 3):last + 4])} "
            if any(f" {form} " in around for form in _NICOTINE_REPLACEMENT):
                flag = "medicine"  # "nicotine chewing gum", "gomme à mâcher nicotine"
        if flag in _NEGATABLE and key not in _VAPE and any(
            d_first == 0 or first - _WINDOW <= d_last and d_first <= last + _WINDOW
            for d_first, d_last in cues.get(_DESCRIPTOR, ())
        ):
            continue
        if flag != "medicine" and near(_CHILD, first, last):
            continue
        if flag in ("alcohol", "tobacco") and key not in _VAPE and _flavour_before(tokens, first):
            continue  # "panettone al gusto limoncello", "saveur tabac"
        if flag == "alcohol" and (
            near(_FLAVOURING, first, last, 2)
            or last + 1 < len(tokens) and tokens[last + 1] in ("0", "zero")  # "Gin 0%"
        ):
            continue
        if flag in _ACCESSORY_NEGATABLE:
            inside = _after_connector(tokens, first, measured=False)
            accessories = cues.get(_ACCESSORY, [])
            if flag == "alcohol":
                accessories = accessories + cues.get(_DRINK_ACCESSORY, [])
            if any(
                not _after_connector(tokens, a_first) and not (inside and a_last < first)
                # "filter cigarettes": a part that says which kind of the good
                and not (a_first == a_last == first - 1 and tokens[a_first] in words.PART_MODIFIERS)
                for a_first, a_last in accessories
                if a_first == 0 or a_last == head_end
                or first - _WINDOW <= a_last and a_first <= last + _WINDOW
            ):
                continue
        if flag == "weapons" and near(_KITCHEN, first, last, _KITCHEN_WINDOW):
            continue
        if flag in _NEGATABLE and _object_is_head(folded, first, last):
            continue
        if key in _COLOUR_NAMES and first != 0 and not _corroborated(
            flag, key, folded, kinds, goods, bottle or bool(strength)
        ):
            continue
        hits.append((flag, key, strong))
    if not any(flag == "medicine" for flag, _k, _s in hits):
        hits.extend(_conditions(folded, matches))
    return hits


def _corroborated(
    flag: str,
    key: str,
    folded: str,
    kinds: set[object],
    goods: list[tuple[int, int, str, str, bool]],
    measured: bool,
) -> bool:
    """Whether a keyword that is also a colour name is meant as the good: another keyword
    of its flag, or for a drink a bottle, a measure, a strength, a vintage or a weak drink
    word, for tobacco a weight."""
    if any(g[3] == flag and g[2] != key and g[2] not in _COLOUR_NAMES for g in goods):
        return True
    if flag == "alcohol":
        return measured or _DRINK in kinds or bool(_VINTAGE.search(folded))
    if flag == "tobacco":
        return bool(_WEIGHT.search(folded))
    return False


def _conditions(folded: str, matches: list[_Match]) -> list[tuple[str, str, bool]]:
    """A condition and a dosage form near each other name a medicine ("hay fever tablets",
    "sirop contre la toux")."""
    conditions = [_position(folded, m[0], m[1]) for m in matches if m[3] == _CONDITION]
    if not conditions:
        return []
    forms = [_position(folded, m[0], m[1]) for m in matches if m[3] == _FORM]
    for c_first, c_last in conditions:
        for f_first, f_last in forms:
            if c_first - _WINDOW <= f_last and f_first <= c_last + _WINDOW:
                return [("medicine", "condition and dosage form", True)]
    return []


def _object_is_head(folded: str, first: int, last: int) -> bool:
    """Whether the title is about another object: an object noun stands at the head of the
    title (its last word, as in English "vodka bottle lamp", or its first, as in Romance
    languages "lampada a bottiglia di vodka"), apart from the keyword at tokens first..last,
    and is not an accessory ("knife with case", "coffret whisky et deux verres")."""
    objects = _OBJECTS.find(folded)
    if not objects:
        return False
    tokens = folded.split(" ")
    end = len(tokens) - 1
    while end > 0 and (_DIGIT.search(tokens[end]) or tokens[end] in words.UNITS):
        end -= 1
    for start_char, end_char, _key, _payload in objects:
        o_first, o_last = _position(folded, start_char, end_char)
        if o_first <= last and first <= o_last:
            continue  # the object word is part of the keyword's phrase
        if o_first != 0 and o_last != end:
            continue
        if o_first > 0 and (
            tokens[o_first - 1] in words.CONNECTORS or _DIGIT.search(tokens[o_first - 1])
        ):
            continue
        return True
    return False


def restriction_from_text_folded(
    folded: str, *, strong_only: bool = False, quiet: frozenset[str] = frozenset()
) -> tuple[str, str]:
    """As :func:`restriction_from_text`, on folded text.

    Args:
        folded: the folded text.
        strong_only: read only keywords that name the restricted good itself (for a product
            whose node is an unrestricted leaf).
        quiet: flags whose general keywords do not count (see :func:`quiet_flags`).
    """
    for restriction, key, strong in restriction_hits(folded):
        if strong or not (strong_only or restriction in quiet):
            return restriction, f"keyword '{key}'"
    return "", ""


# Words of a node's name and terms (its own and its ancestors') that say what its products
# are; the flags whose general keywords ("knife", "wine", "sword") such a node holds
# lookalikes of. Seven languages; common practice, no source.
_NODE_CONTEXTS: tuple[tuple[frozenset[str], frozenset[str]], ...] = (
    (
        frozenset(
            "kitchen kitchenware cookware cutlery cuisine ustensiles couverts kuche "
            "kuchenzubehor besteck cocina menaje cubiertos cucina posate keuken keukengerei "
            "bestek cozinha talheres garden gardening jardin jardinage garten jardineria "
            "giardino giardinaggio tuin tuinieren jardim jardinagem tools tool outils "
            "werkzeug werkzeuge herramientas utensili gereedschap ferramentas diy bricolage "
            "heimwerken bricolaje fai klussen crafts craft hobby".split()
        ),
        frozenset({"weapons"}),
    ),
    (
        frozenset(
            "toys toy jouets jouet spielzeug spielwaren juguetes juguete giocattoli "
            "giocattolo speelgoed brinquedos brinquedo costumes costume deguisements "
            "kostume disfraces costumi verkleedkleding fantasias".split()
        ),
        frozenset({"weapons", "alcohol", "tobacco"}),
    ),
    (
        frozenset(
            "clothing clothes apparel fashion shoes footwear jewellery jewelry handbags "
            "vetements mode chaussures bijoux sacs bekleidung kleidung schuhe schmuck "
            "taschen ropa moda zapatos calzado joyeria bolsos abbigliamento scarpe "
            "calzature gioielli borse kleding schoenen sieraden tassen roupa vestuario "
            "calcado joias malas beauty cosmetics fragrance fragrances perfume perfumes "
            "parfums beaute cosmetiques kosmetik dufte belleza cosmetica perfumeria "
            "bellezza cosmetici profumi schoonheid cosmetica parfums beleza perfumaria "
            "candles bougies kerzen velas candele kaarsen glassware barware verrerie "
            "glaser cristaleria bicchieri glaswerk copos".split()
        ),
        frozenset({"alcohol", "tobacco"}),
    ),
)


def quiet_flags(node_words: Iterable[str]) -> frozenset[str]:
    """Return the flags whose general keywords a node's words silence.

    A kitchen, garden, tools or crafts node holds knives and blades that are tools; a toys
    or costumes node holds toy swords and pretend drinks; a clothing, shoes, jewellery,
    beauty, candles or glassware node holds colours, scents and glasses named after drinks
    and smokes ("cognac", "champagne", "tabac"). There a general keyword ("knife", "sword",
    "wine") does not flag the product; one that names the good itself ("hunting knife",
    "crossbow", "grappa") still does.

    Args:
        node_words: the names and terms of the node and its ancestors.

    Returns:
        The silenced flags (empty for most nodes).

    Example:
        >>> sorted(quiet_flags(["Home", "Kitchen", "Knives"]))
        ['weapons']
    """
    folded = set(fold(" ".join(node_words)).split())
    quiet: frozenset[str] = frozenset()
    for context, flags in _NODE_CONTEXTS:
        if folded & context:
            quiet |= flags
    return quiet


def node_context(tree: CategoryTree, node_id: str) -> tuple[str, bool, frozenset[str]]:
    """Return what a node says for the restriction flag of its products.

    Args:
        tree: the category tree.
        node_id: a node of it.

    Returns:
        (the node's inherited restriction or "", whether the node cannot say so that every
        keyword is read (an inner or a generic node), the flags its context silences: see
        :func:`quiet_flags`, read from the names and terms of the node and its ancestors).

    Raises:
        UnknownNode: no such node.
    """
    node_words: list[str] = []
    for node in tree.lineage(node_id):
        node_words.extend(tree.all_terms(node.id))
    return (
        tree.restriction(node_id) or "",
        is_generic_node(tree[node_id].name) or not tree.is_leaf(node_id),
        quiet_flags(node_words),
    )


def restriction_for_node(
    node_restriction: str, read_all: bool, folded: str, quiet: frozenset[str] = frozenset()
) -> str:
    """Return the flag of a product from its node's restriction and its text.

    Args:
        node_restriction: the node's (inherited) restriction, "" for none.
        read_all: the node cannot say (no node, an inner or a generic node): every keyword
            counts, except the general ones of ``quiet`` flags.
        folded: the folded title (and retailer category path).
        quiet: flags whose general keywords the node's context silences
            (:func:`quiet_flags`).

    Returns:
        The node's restriction, unless the text names another restricted good and nothing of
        the node's (a paracetamol product mapped to a tobacco node); where the node has none,
        what the text says (only the unmistakable keywords on an unrestricted leaf: "hunting
        knife", "grappa").
    """
    if not node_restriction:
        return restriction_from_text_folded(folded, strong_only=not read_all, quiet=quiet)[0]
    hits = restriction_hits(folded)
    if not hits or any(r == node_restriction for r, _k, _s in hits):
        return node_restriction
    strong = [r for r, _k, s in hits if s]
    return strong[0] if strong else node_restriction


def restriction_from_text(text: str) -> tuple[str, str]:
    """Return (restriction, evidence) from a text, ("", "") when it names nothing
    restricted. Never raises.

    Example:
        >>> restriction_from_text("Gift box with a bottle of red wine")
        ('alcohol', "keyword 'red wine'")
        >>> restriction_from_text("Whisky-scented candle")
        ('', '')
    """
    return restriction_from_text_folded(fold(text))


def is_generic_node(name: str) -> bool:
    """Return True when a node's name says its products can be anything (gifts, sets...)."""
    return bool(set(fold(name).split()) & GENERIC_NODE_WORDS)
