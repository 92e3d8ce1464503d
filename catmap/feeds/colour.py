"""Colour family: colour words in seven languages → a small set of families.

English, French, German, Spanish, Italian, Dutch and Portuguese (the words written for catmap:
common practice, no source).

The families are catmap's own: black, white, grey, beige, brown, red, pink, orange, yellow,
green, blue, purple, gold, silver, multicolour. The colour field is read first; two or more
families there: the first one named is the main colour
("multicolour" only when said). Without a colour field the title is read, skipping words
that are colours only sometimes ("cream", "orange", "rose", "wine", ...): in a title they are
more often a product (face cream, orange juice, rosé wine). Colour words are read in the forms
they take beside a noun (French and Spanish plurals, German declensions: "multicolores",
"azules", "roten"); a model code such as "RED-42" names no colour.
"""

from __future__ import annotations

import re
from functools import cache

from catmap._text import PhraseIndex, fold

FAMILIES: tuple[str, ...] = (
    "black", "white", "grey", "beige", "brown", "red", "pink", "orange", "yellow", "green",
    "blue", "purple", "gold", "silver", "multicolour",
)

# family → colour words per language (written for catmap; fashion names included).
COLOUR_WORDS: dict[str, dict[str, tuple[str, ...]]] = {
    "black": {
        "en": ("black", "jet black", "onyx", "ebony", "matte black", "jet", "noir"),
        "fr": ("noir", "noire", "noirs", "ebene", "noir mat"),
        "de": ("schwarz", "tiefschwarz", "mattschwarz", "schwarze", "schwarzer"),
        "es": ("negro", "negra", "negros", "azabache", "negro mate"),
        "it": ("nero", "nera", "neri", "nere", "nero opaco"),
        "nl": ("zwart", "zwarte", "mat zwart"),
        "pt": ("preto", "preta", "pretos", "pretas", "negro fosco"),
    },
    "white": {
        "en": ("white", "off-white", "off white", "ivory", "snow", "snow white", "optic white",
               "chalk", "whitesmoke", "ghostwhite", "floralwhite", "seashell", "linen",
               "aliceblue", "azure", "honeydew", "lavenderblush", "mintcream"),
        "fr": ("blanc", "blanche", "blanc casse", "ivoire", "ecru blanc"),
        "de": ("weiss", "weisse", "weisser", "wollweiss", "cremeweiss", "elfenbein"),
        "es": ("blanco", "blanca", "blanco roto", "marfil", "hueso"),
        "it": ("bianco", "bianca", "bianchi", "bianche", "avorio", "bianco panna"),
        "nl": ("wit", "witte", "gebroken wit", "ivoor"),
        "pt": ("branco", "branca", "brancos", "brancas", "marfim", "off white"),
    },
    "grey": {
        "en": ("grey", "gray", "charcoal", "anthracite", "heather grey", "slate", "graphite",
               "ash", "dark grey", "light grey", "silver grey", "dimgray", "dimgrey",
               "darkgray", "darkgrey", "lightgray", "lightgrey", "gainsboro", "slategray",
               "slategrey", "gunmetal", "darkslategray", "darkslategrey",
               "lightslategray", "lightslategrey"),
        "fr": ("gris", "grise", "anthracite", "gris chine", "ardoise", "gris fonce", "gris clair"),
        "de": ("grau", "anthrazit", "hellgrau", "dunkelgrau", "grau meliert", "graue"),
        "es": ("gris", "antracita", "gris jaspeado", "gris marengo", "gris oscuro", "marengo"),
        "it": ("grigio", "grigia", "grigi", "grigie", "antracite", "grigio scuro",
               "grigio chiaro"),
        "nl": ("grijs", "grijze", "antraciet", "donkergrijs", "lichtgrijs"),
        "pt": ("cinza", "cinzento", "cinzenta", "grafite", "cinza escuro", "cinza claro"),
    },
    "beige": {
        "en": ("beige", "sand", "stone", "ecru", "oatmeal", "nude", "cream",
               "wheat", "oat", "natural", "champagne beige", "bisque", "blanchedalmond",
               "moccasin", "navajowhite", "cornsilk", "oldlace", "antiquewhite", "papayawhip",
               "peachpuff"),
        "fr": ("beige", "sable", "ecru", "grege", "creme", "naturel"),
        "de": ("beige", "sand", "natur", "creme", "ecru", "sandfarben"),
        "es": ("beige", "arena", "crudo", "piedra", "crema", "caqui claro"),
        "it": ("beige", "sabbia", "ecru", "tortora", "crema"),
        "nl": ("beige", "zand", "ecru", "creme", "naturel"),
        "pt": ("bege", "areia", "cru", "creme", "nude"),
    },
    "brown": {
        "en": ("brown", "chocolate", "cognac", "camel", "taupe", "walnut", "coffee", "mocha",
               "chestnut", "espresso", "tobacco", "sienna", "tan", "saddlebrown", "sandybrown",
               "rosybrown", "peru", "burlywood", "dark brown", "maroon brown"),
        "fr": ("marron", "chocolat", "cognac", "camel", "taupe", "brun", "brune", "noisette",
               "caramel"),
        "de": ("braun", "cognac", "camel", "dunkelbraun", "taupe", "hellbraun", "nussbraun"),
        "es": ("marron", "chocolate", "conac", "camel", "topo", "cuero", "cafe", "avellana"),
        "it": ("marrone", "marroni", "cioccolato", "cognac", "cammello", "testa di moro", "cuoio"),
        "nl": ("bruin", "bruine", "donkerbruin", "lichtbruin", "cognac", "camel"),
        "pt": ("castanho", "castanha", "marrom", "chocolate", "conhaque", "caramelo"),
    },
    "red": {
        "en": ("red", "burgundy", "wine", "wine red", "cherry", "scarlet", "brick red", "crimson",
               "maroon", "oxblood", "bordeaux", "ruby", "darkred", "firebrick", "indianred",
               "tomato"),
        "fr": ("rouge", "bordeaux", "cerise", "rouge brique", "grenat", "carmin"),
        "de": ("rot", "rote", "roter", "bordeaux", "weinrot", "kirschrot", "dunkelrot"),
        "es": ("rojo", "roja", "burdeos", "granate", "rojo cereza", "carmesi"),
        "it": ("rosso", "rossa", "rossi", "rosse", "bordeaux", "rosso ciliegia", "granata"),
        "nl": ("rood", "rode", "donkerrood", "bordeauxrood", "wijnrood"),
        "pt": ("vermelho", "vermelha", "vermelhos", "bordo", "bordô", "vinho"),
    },
    "pink": {
        "en": ("pink", "blush", "rose", "fuchsia", "dusty pink", "salmon", "hot pink",
               "baby pink", "magenta", "lightpink", "hotpink", "deeppink", "palevioletred",
               "mediumvioletred", "powder pink", "old rose", "dusky pink", "mistyrose",
               "lightcoral", "darksalmon", "lightsalmon"),
        "fr": ("rose", "rose poudre", "fuchsia", "vieux rose", "rose pale", "framboise"),
        "de": ("rosa", "pink", "altrosa", "pudrig rosa", "pudrosa", "babyrosa", "fuchsia"),
        "es": ("rosa", "fucsia", "rosa palo", "rosa empolvado", "rosado"),
        "it": ("rosa antico", "rosa cipria", "fucsia", "rosa chiaro"),
        "nl": ("roze", "oudroze", "fuchsia", "lichtroze"),
        "pt": ("rosa claro", "rosa choque", "fúcsia", "rosê"),
    },
    "orange": {
        "en": ("orange", "coral", "rust", "terracotta", "burnt orange", "apricot", "peach",
               "tangerine", "darkorange", "orangered", "copper"),
        "fr": ("orange", "corail", "rouille", "terracotta", "abricot", "peche"),
        "de": ("orange", "koralle", "rost", "terrakotta", "apricot", "kupfer"),
        "es": ("naranja", "coral", "teja", "terracota", "melocoton", "albaricoque"),
        "it": ("arancione", "arancio", "corallo", "ruggine", "terracotta", "rame"),
        "nl": ("oranje", "koraal", "roest", "terracotta", "koper"),
        "pt": ("laranja", "coral", "ferrugem", "terracota", "cobre"),
    },
    "yellow": {
        "en": ("yellow", "mustard", "lemon", "ochre", "canary", "lightyellow", "lemonchiffon",
               "goldenrod", "khaki yellow", "darkgoldenrod", "lightgoldenrodyellow",
               "palegoldenrod"),
        "fr": ("jaune", "moutarde", "ocre", "jaune citron", "citron"),
        "de": ("gelb", "senfgelb", "ocker", "zitronengelb", "senf"),
        "es": ("amarillo", "amarilla", "mostaza", "ocre", "amarillo limon"),
        "it": ("giallo", "gialla", "gialli", "gialle", "senape", "ocra"),
        "nl": ("geel", "gele", "mosterd", "oker", "citroengeel"),
        "pt": ("amarelo", "amarela", "mostarda", "ocre"),
    },
    "green": {
        "en": ("green", "olive", "sage", "forest green", "mint", "bottle green", "emerald",
               "lime", "teal green", "army green", "darkgreen", "forestgreen", "seagreen",
               "olivedrab", "darkolivegreen", "lawngreen", "limegreen", "springgreen",
               "mediumseagreen", "yellowgreen", "darkkhaki", "aquamarine", "chartreuse",
               "greenyellow", "darkseagreen", "lightgreen", "palegreen", "mediumaquamarine",
               "mediumspringgreen"),
        "fr": ("vert", "verte", "kaki", "olive", "vert sapin", "vert deau", "vert bouteille",
               "menthe", "emeraude"),
        "de": ("grun", "grune", "oliv", "khaki", "dunkelgrun", "salbei", "mint", "hellgrun",
               "flaschengrun", "olivgrun"),
        "es": ("verde", "caqui", "verde oliva", "verde menta", "verde botella", "verde militar",
               "esmeralda"),
        "it": ("verde", "verdi", "verde oliva", "verde bottiglia", "verde militare", "smeraldo"),
        "nl": ("groen", "groene", "olijfgroen", "donkergroen", "lichtgroen", "mintgroen"),
        "pt": ("verde escuro", "verde claro", "verde musgo", "verde militar", "esmeralda"),
    },
    "blue": {
        "en": ("blue", "navy", "navy blue", "royal blue", "sky blue", "denim blue", "petrol",
               "cobalt", "baby blue", "light blue", "dark blue", "indigo blue", "teal",
               "turquoise", "aqua", "cyan", "midnight blue", "steel blue", "powder blue",
               "midnightblue", "royalblue", "skyblue", "steelblue", "powderblue", "lightblue",
               "darkblue", "cornflowerblue", "dodgerblue", "deepskyblue", "mediumblue",
               "cadetblue", "darkturquoise", "lightseagreen", "darkcyan", "lightcyan",
               "lightskyblue", "lightsteelblue", "mediumturquoise", "paleturquoise", "slateblue",
               "darkslateblue", "mediumslateblue"),
        "fr": ("bleu", "bleue", "bleu marine", "bleu ciel", "marine", "bleu roi", "petrole",
               "turquoise", "bleu nuit", "bleu clair", "bleu fonce"),
        "de": ("blau", "blaue", "marineblau", "dunkelblau", "hellblau", "navy", "petrol",
               "turkis", "himmelblau", "konigsblau", "babyblau"),
        "es": ("azul", "azul marino", "azul cielo", "azul celeste", "azul klein", "turquesa",
               "azul oscuro", "azul claro", "celeste"),
        "it": ("blu", "azzurro", "azzurra", "blu navy", "blu notte", "celeste", "turchese",
               "petrolio"),
        "nl": ("blauw", "blauwe", "donkerblauw", "lichtblauw", "marineblauw", "turquoise",
               "petrol"),
        "pt": ("azul", "azul marinho", "azul claro", "azul escuro", "turquesa", "azul petróleo"),
    },
    "purple": {
        "en": ("purple", "lilac", "lavender", "plum", "violet", "mauve", "aubergine", "indigo",
               "orchid", "grape", "darkviolet", "darkorchid", "mediumpurple", "blueviolet",
               "thistle", "rebeccapurple", "darkmagenta", "mediumorchid"),
        "fr": ("violet", "violette", "lilas", "prune", "lavande", "mauve", "aubergine", "parme"),
        "de": ("lila", "violett", "flieder", "aubergine", "pflaume", "lavendel"),
        "es": ("morado", "morada", "lila", "malva", "violeta", "berenjena", "purpura"),
        "it": ("viola", "lilla", "prugna", "lavanda", "malva", "melanzana"),
        "nl": ("paars", "paarse", "lila", "lavendel", "pruim", "aubergine"),
        "pt": ("roxo", "roxa", "lilás", "violeta", "lavanda", "berinjela"),
    },
    "gold": {
        "en": ("gold", "gold tone", "golden", "champagne", "brass", "rose gold"),
        "fr": ("dore", "doree", "or", "champagne", "laiton", "or rose"),
        "de": ("gold", "goldfarben", "champagner", "messing", "rosegold", "vergoldet"),
        "es": ("dorado", "dorada", "oro", "champan", "laton", "oro rosa"),
        "it": ("oro", "dorato", "dorata", "ottone", "oro rosa"),
        "nl": ("goud", "goudkleurig", "messing", "rosegoud"),
        "pt": ("dourado", "dourada", "ouro", "latão", "ouro rosa"),
    },
    "silver": {
        "en": ("silver", "silver tone", "chrome", "metallic silver", "platinum", "steel",
               "stainless steel", "pewter"),
        "fr": ("argent", "argente", "argentee", "chrome", "acier"),
        "de": ("silber", "silberfarben", "chrom", "versilbert", "edelstahl"),
        "es": ("plata", "plateado", "plateada", "cromado", "acero"),
        "it": ("argento", "argentato", "argentata", "cromato", "acciaio"),
        "nl": ("zilver", "zilverkleurig", "chroom", "rvs"),
        "pt": ("prata", "prateado", "prateada", "cromado", "aço inox"),
    },
    "multicolour": {
        "en": ("multicolour", "multicolor", "multi", "multicoloured", "rainbow",
               "assorted colours", "assorted", "multi colour", "mixed colours"),
        "fr": ("multicolore", "multi", "arc en ciel", "couleurs assorties"),
        "de": ("bunt", "mehrfarbig", "regenbogen", "farbig sortiert"),
        "es": ("multicolor", "varios colores", "arcoiris", "colores surtidos"),
        "it": ("multicolore", "arcobaleno", "colori assortiti"),
        "nl": ("veelkleurig", "meerkleurig", "regenboog", "diverse kleuren"),
        "pt": ("multicor", "multicolorido", "arco íris", "cores sortidas"),
    },
}

# Colour words that in a title more often name a product, a material or a flavour.
AMBIGUOUS_IN_TITLE = frozenset(
    fold(w) for w in (
        "cream", "creme", "crema", "orange", "naranja", "rose", "wine", "cherry", "lime",
        "mint", "menthe", "lemon", "citron", "peach", "peche", "chocolate", "chocolat", "coffee",
        "cafe", "caramel", "salmon", "tomato", "grape", "plum", "prune", "apricot", "abricot",
        "olive", "sand", "sable", "arena", "stone", "piedra", "steel", "acier", "acero",
        "edelstahl", "stainless steel", "copper", "kupfer", "brass", "laiton", "messing",
        "laton", "tobacco", "cognac", "champagne", "champagner", "champan", "natural", "natur",
        "naturel", "linen", "ash", "snow", "chalk", "jet", "rust", "rost", "multi", "assorted",
        "or", "oro", "aqua", "ruby", "emerald", "walnut", "chestnut", "honey", "camel",
        "petrol", "marine", "tan", "oat", "wheat", "platinum", "coral", "lilac", "lavender",
        "lavande", "lavendel", "violet", "peru", "thistle", "seashell", "teal", "noisette",
        "avellana", "espresso", "mocha", "senf", "mostaza", "moutarde", "cuero", "topo",
        "salbei", "sage", "framboise", "indigo",
        # Italian, Dutch and Portuguese, and words of other languages that look the same.
        "wit", "rood", "bruin", "viola", "zand", "sabbia", "areia", "cobre", "koper", "rame",
        "ottone", "latao", "acciaio", "rvs", "cioccolato", "caramelo", "conhaque", "vinho",
        "petrolio", "prugna", "pruim", "melanzana", "berinjela", "lavanda", "mosterd",
        "senape", "mostarda", "smeraldo", "esmeralda", "corallo", "koraal", "roest",
        "ruggine", "ferrugem", "ouro", "prata", "goud", "zilver", "argento", "cuoio",
    )
)


# Phrases that name a material or an ink, not the product's colour; they hide their words.
MATERIAL_PHRASES: tuple[str, ...] = (
    "gold plated", "plaque or", "vergoldet", "chapado en oro", "silver plated", "plaque argent",
    "versilbert", "sterling silver", "silver 925", "925 silver", "argent 925", "silber 925",
    "plata 925", "plata de ley", "argent massif", "or massif", "18k gold", "or 18 carats",
    "black ink", "blue ink", "encre noire", "encre bleue", "schwarze tinte", "tinta negra",
    "white noise", "bruit blanc", "black friday", "white goods", "red wine", "white wine",
    "rose wine", "vin rose", "vino rosado", "rosewein", "vin rouge", "vin blanc", "rotwein",
    "weisswein", "vino tinto", "vino blanco",
    "green tea", "the vert", "gruner tee", "te verde", "black tea", "the noir",
)
# After an often-a-product colour word, these tokens show it ends the description of the item
# ("... robot marine #1735", "... cognac | Brand"): then it is read as the colour.
_END_TOKENS = frozenset(
    {"ref", "sku", "item", "mod", "art", "nr", "gr", "taille", "size", "talla", "pointure",
     "eu", "uk", "us", "x", "set", "pack", "lot", "new", "neu", "nouveau", "nuevo", "sale",
     "edition", "by", "par", "von", "de", "und", "and", "et", "y", "with", "avec", "mit", "con"}
)


# German declines a colour adjective before its noun ("mit roten Streifen", "schwarzes
# Leder"); forms that are words of another language are left out ("nature").
_GERMAN_ENDINGS = ("e", "en", "er", "es", "em")
_NOT_INFLECTED = frozenset({"nature"})


def _inflections(word: str, lang: str) -> tuple[str, ...]:
    """The forms a colour adjective takes beside its noun: the French and Spanish plural
    ("chaussettes multicolores", "zapatos azules"), the German declensions ("roten")."""
    if " " in word or "-" in word:
        return ()
    if lang in ("fr", "es"):
        if word[-1] in "sxz":
            return ()
        return (f"{word}es",) if lang == "es" and word[-1] not in "aeiou" else (f"{word}s",)
    if lang == "de" and word[-1] not in "aeiouy" and not word.endswith(("er", "en")):
        return tuple(f"{word}{ending}" for ending in _GERMAN_ENDINGS)
    return ()


def _words_with_inflections() -> tuple[dict[str, str], dict[str, str]]:
    """Every colour word (folded) → its family, with the forms above; a form that is a colour
    word of its own keeps that word's family. Also each added form → the word it comes from."""
    words = {
        fold(word): family
        for family, by_lang in COLOUR_WORDS.items()
        for listed in by_lang.values()
        for word in listed
    }
    added: dict[str, tuple[str, str]] = {}
    for family, by_lang in COLOUR_WORDS.items():
        for lang, listed in by_lang.items():
            for word in listed:
                for form in _inflections(fold(word), lang):
                    if form not in words and form not in _NOT_INFLECTED:
                        added.setdefault(form, (family, fold(word)))
    return words | {form: family for form, (family, _b) in added.items()}, {
        form: base for form, (_f, base) in added.items()
    }


_ALL_WORDS, _BASE_OF = _words_with_inflections()


@cache
def _index() -> PhraseIndex:
    # Built on first use: mapping a feed with a saved profile reads no colour.
    phrases: list[tuple[str, object]] = [(p, "") for p in MATERIAL_PHRASES]
    phrases.extend(_ALL_WORDS.items())
    return PhraseIndex(phrases)

# A form of a word that is often a product is one too ("roses", "olives", "cafes").
AMBIGUOUS_IN_TITLE = AMBIGUOUS_IN_TITLE | frozenset(
    form for form, base in _BASE_OF.items() if base in AMBIGUOUS_IN_TITLE
)

# A model code glued from capitals and digits ("RED-42", "BLK200", "GRN-5") names no colour.
_CODE = re.compile(r"\b[A-Z]{2,}-?\d[\w-]*")


def blank_codes(title: str, folded: str) -> str:
    """Return ``folded`` (the folded ``title``) with its model codes replaced by spaces."""
    if not folded or not any(c.isdigit() for c in title):
        return folded
    for code in _CODE.findall(title):
        key = fold(code)
        if key:
            folded = re.sub(rf"(?<![0-9a-z]){re.escape(key)}(?![0-9a-z])", " " * len(key), folded)
    return folded


def _matches(folded: str) -> list[tuple[int, int, str, str]]:
    chosen: list[tuple[int, int, str, str]] = []
    last_end = -1
    for start, end, key, family in sorted(_index().find(folded), key=lambda m: (m[0], m[0] - m[1])):
        if start >= last_end:
            last_end = end
            if family:
                chosen.append((start, end, key, str(family)))
    return chosen


def colour_spans(folded: str) -> list[tuple[int, int]]:
    """Return where a folded text names a colour: (start, end) of each colour word or phrase
    of the lexicon (its forms included), materials such as "gold plated" left out."""
    return [(start, end) for start, end, _key, _family in _matches(folded)]


_QUANTITY = re.compile(r"^\d+(?:d\d+)?(?:ml|cl|l|g|kg|mg|oz|m)?$")
_UNITS = frozenset({"ml", "cl", "l", "g", "kg", "mg", "oz", "litre", "liter", "litres", "gr"})


def _ends_item(folded: str, end: int) -> bool:
    rest = folded[end:].split(" ", 3)
    following = rest[1] if len(rest) > 1 else ""
    if not following or following in _END_TOKENS:
        return True
    if not any(c.isdigit() for c in following):
        return False
    # A code or a size ends the item; a quantity ("50 ml", "1l") says it is a product.
    after = rest[2] if len(rest) > 2 else ""
    quantity = _QUANTITY.match(following) and (not following.isdigit() or after in _UNITS)
    return not quantity


def colour_family_folded(folded_colour: str, folded_title: str = "") -> tuple[str, str]:
    """As :func:`colour_family`, on folded texts."""
    if folded_colour:
        families = list(dict.fromkeys(family for _s, _e, _k, family in _matches(folded_colour)))
        if len(families) == 1:
            return families[0], f"colour field '{folded_colour}'"
        if len(families) > 1:
            # "Navy/White": the first colour named is the main one (common practice, no source).
            return families[0], f"colour field '{folded_colour}': main colour of {len(families)}"
    if folded_title:
        for _s, end, key, family in _matches(folded_title):
            if key not in AMBIGUOUS_IN_TITLE or _ends_item(folded_title, end):
                return family, f"title '{key}'"
    return "", ""


def colour_family(colour: str, title: str = "") -> tuple[str, str]:
    """Return (family, evidence) from the colour field, else from the title ("" when none).

    Never raises.

    Example:
        >>> colour_family("Vieux rose")
        ('pink', "colour field 'vieux rose'")
    """
    return colour_family_folded(fold(colour), blank_codes(title, fold(title)))
