"""Restriction flag: alcohol, tobacco, weapons, adult, medicine.

The node decides first: ``tree.restriction(node)`` (its own or its nearest restricted
ancestor's). Where the node cannot say (no node yet, a department or other inner node, or a
generic node such as gifts), keywords in the four languages are read ("wine", "whisky",
"e-liquid", "nicotine", "crossbow", ...), after removing phrases that hold such a word without
being the restricted thing ("wine glass", "wine red", "knife sharpener").

A flag is an aid, not advice: :data:`RESTRICTION_CAUTION` says so wherever flags are shown.
"""

from __future__ import annotations

from catmap.attributes._text import PhraseIndex, fold

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
    "alcohol": (
        # en
        "wine", "red wine", "white wine", "rose wine", "sparkling wine", "whisky", "whiskey",
        "vodka", "gin", "rum", "tequila", "brandy", "cognac", "liqueur", "beer", "ale", "lager",
        "cider", "champagne", "prosecco", "sake", "mezcal", "absinthe", "bourbon", "port wine",
        "sherry", "vermouth", "spirits", "alcohol", "alcoholic",
        # fr
        "vin", "vin rouge", "vin blanc", "biere", "rhum", "liqueur", "eau de vie", "spiritueux",
        "cidre", "whisky", "alcool",
        # de
        "wein", "rotwein", "weisswein", "sekt", "bier", "schnaps", "likor", "spirituosen",
        "obstbrand", "alkohol",
        # es
        "vino", "vino tinto", "vino blanco", "cerveza", "ron", "licor", "aguardiente", "cava",
        "sidra", "alcohol",
    ),
    "tobacco": (
        "tobacco", "cigar", "cigars", "cigarette", "cigarettes", "cigarillo", "e liquid",
        "eliquid", "nicotine", "vape", "vape juice", "snus", "rolling tobacco", "shisha tobacco",
        "tabac", "cigare", "cigares", "e liquide", "tabac a rouler",
        "tabak", "zigarre", "zigarren", "zigarette", "zigaretten", "nikotin", "liquid nikotin",
        "tabaco", "puro", "puros", "cigarrillo", "cigarrillos", "nicotina",
    ),
    "weapons": (
        "knife", "knives", "hunting knife", "pocket knife", "crossbow", "air rifle", "airgun",
        "air gun", "air pistol", "bb gun", "machete", "dagger", "sword", "katana", "pepper spray",
        "stun gun", "slingshot", "catapult", "bayonet", "switchblade", "bow and arrow",
        "couteau", "couteaux", "arbalete", "carabine", "carabine a plomb", "poignard", "epee",
        "lance pierre", "bombe lacrymogene",
        "messer", "taschenmesser", "jagdmesser", "armbrust", "luftgewehr", "luftpistole",
        "dolch", "schwert", "pfefferspray", "steinschleuder",
        "cuchillo", "cuchillos", "navaja", "ballesta", "rifle de aire", "escopeta de aire",
        "pistola de aire", "daga", "espada", "spray de pimienta", "tirachinas",
    ),
    "adult": (
        "adult toy", "adults only", "erotic", "erotique", "erotik", "erotico", "sex toy",
        "18+ only", "lingerie erotique",
    ),
    "medicine": (
        "paracetamol", "ibuprofen", "ibuprofene", "aspirin", "aspirine", "antihistamine",
        "painkiller", "painkillers", "medicine", "medicament", "arzneimittel", "medicamento",
        "nicotine patch", "nicotine gum",
    ),
}

# Phrases that hold a keyword but are not the restricted thing; they hide their words.
_HARMLESS: tuple[str, ...] = (
    "wine glass", "wine glasses", "wine rack", "wine cooler", "wine opener", "wine red",
    "wine colour", "wine color", "wine bottle holder", "wine stopper", "wine aerator",
    "beer glass", "beer mug", "beer glasses", "ale house", "gin glass", "cocktail glass",
    "verre a vin", "verres a vin", "rouge vin", "porte bouteille", "seau a champagne",
    "weinglas", "weinglaser", "weinrot", "weinregal", "bierglas", "bierkrug",
    "copa de vino", "copas de vino", "jarra de cerveza", "rojo vino",
    "knife sharpener", "knife block", "butter knife", "palette knife", "cake knife",
    "cheese knife", "cheese knives", "knife and fork", "couteau a beurre", "aiguiseur",
    "buttermesser", "messerblock", "messerscharfer", "cuchillo de mantequilla",
    "champagne colour", "champagne gold", "champagne beige", "champagner farben",
    "cigar box guitar", "cognac colour", "cognac leather", "cognac brown", "rum raisin",
    "rhum raisin", "nicotine free", "sans nicotine", "nikotinfrei", "sin nicotina",
    "alcohol free", "sans alcool", "alkoholfrei", "sin alcohol", "0 0", "non alcoholic",
    "swordfish", "espada de juguete", "toy sword", "foam sword", "epee en mousse",
    "slingshot toy", "gin and tonic candle", "scented candle",
)


def _build_index() -> PhraseIndex:
    phrases: list[tuple[str, object]] = [(p, "") for p in _HARMLESS]
    for restriction, words in _KEYWORDS.items():
        phrases.extend((word, restriction) for word in words)
    return PhraseIndex(phrases)


_INDEX = _build_index()


def restriction_from_text_folded(folded: str) -> tuple[str, str]:
    """As :func:`restriction_from_text`, on folded text."""
    last_end = -1
    for start, end, key, restriction in sorted(
        _INDEX.find(folded), key=lambda m: (m[0], m[0] - m[1])
    ):
        if start < last_end:
            continue
        last_end = end
        if restriction:
            return str(restriction), f"keyword '{key}'"
    return "", ""


def restriction_from_text(text: str) -> tuple[str, str]:
    """Return (restriction, evidence) from keywords in a text, ("", "") when none. Never raises.

    Example:
        >>> restriction_from_text("Gift box with a bottle of red wine")
        ('alcohol', "keyword 'red wine'")
    """
    return restriction_from_text_folded(fold(text))


def is_generic_node(name: str) -> bool:
    """Return True when a node's name says its products can be anything (gifts, sets...)."""
    return bool(set(fold(name).split()) & GENERIC_NODE_WORDS)
