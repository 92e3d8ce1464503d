"""Restriction flag: alcohol, tobacco, weapons, adult, medicine.

The node decides first: ``tree.restriction(node)`` (its own or its nearest restricted
ancestor's). Where the node cannot say (no node yet, a department or other inner node, or a
generic node such as gifts), keywords in the seven languages (English, French, German,
Spanish, Italian, Dutch, Portuguese) are read ("wine", "whisky", "e-liquid", "nicotine",
"crossbow", "grappa", ...), after removing phrases that hold such a word without being the
restricted thing ("wine glass", "wine red", "knife sharpener", "bourbon vanilla") and keywords
near a negative cue: a flavour, scent, colour, shape or toy named after a restricted good
("whisky-scented candle", "tobacco brown", "cigar-shaped", "vodka-flavoured lip balm"). On an
unrestricted leaf only keywords that name the restricted good itself count ("hunting knife",
"grappa"; not "knife" or "wine"); a restricted node yields to the text only when the text names
another restricted good and nothing of the node's.

A flag is an aid, not advice: :data:`RESTRICTION_CAUTION` says so wherever flags are shown.
"""

from __future__ import annotations

import re

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
        "sherry", "vermouth", "spirits", "alcohol", "alcoholic", "grappa", "schnapps",
        "brown ale", "chocolate liqueur", "cream liqueur", "liqueur au chocolat", "single malt",
        "whiskies", "pastis", "ouzo", "sangria", "gluhwein", "amaro", "ginja", "moscato",
        "porto tawny", "vinho do porto", "birre", "calvados", "kirschwasser", "vermut",
        "sambuca", "advocaat", "rakia", "slivovitz", "armagnac", "mirabelle", "genever",
        "aquavit", "akvavit", "pisco", "soju", "baijiu", "bitter liqueur", "anisette",
        "schokoladenlikor", "licor de chocolate", "liquore al cioccolato",
        # fr
        "vin", "vin rouge", "vin blanc", "biere", "rhum", "liqueur", "eau de vie", "spiritueux",
        "cidre", "whisky", "alcool", "vin mousseux", "cremant",
        # de
        "wein", "rotwein", "weisswein", "sekt", "bier", "schnaps", "likor", "spirituosen",
        "obstbrand", "alkohol", "weinbrand", "korn",
        # es
        "vino", "vino tinto", "vino blanco", "cerveza", "ron", "licor", "aguardiente", "cava",
        "sidra", "alcohol", "orujo",
        # it
        "vino rosso", "vino bianco", "spumante", "birra", "liquore", "distillato", "amaretto",
        "limoncello", "superalcolico", "alcolico",
        # nl
        "wijn", "rode wijn", "witte wijn", "bier", "jenever", "likeur", "sterke drank",
        "mousserende wijn",
        # pt
        "vinho", "vinho tinto", "vinho branco", "cerveja", "aguardente", "cachaca", "licor",
        "espumante", "bebida alcoolica",
    ),
    "tobacco": (
        "tobacco", "cigar", "cigars", "cigarette", "cigarettes", "cigarillo", "cigarillos",
        "e liquid",
        "eliquid", "nicotine", "vape", "vape juice", "snus", "rolling tobacco", "shisha tobacco",
        "tabac", "cigare", "cigares", "e liquide", "tabac a rouler", "cigarette electronique",
        "tabak", "zigarre", "zigarren", "zigarette", "zigaretten", "nikotin", "liquid nikotin",
        "e zigarette",
        # Spanish "puro" alone is also Italian and Portuguese for "pure": only in phrases.
        "tabaco", "puros", "puro habano", "puros habanos", "caja de puros", "cigarrillo",
        "cigarrillos", "nicotina", "cigarro puro",
        "tabacco", "sigaro", "sigari", "sigaretta", "sigarette", "sigaretta elettronica",
        "tabacco trinciato", "trinciato",
        "sigaar", "sigaren", "sigaret", "sigaretten", "e sigaret", "shag", "rooktabak",
        "charuto", "charutos", "cigarro", "cigarros", "cigarro eletronico", "tabaco de enrolar",
        "zigarillo", "zigarillos", "sigarillo", "sigarillos", "cigarrilho", "cigarrilhos",
        "vapeador", "vapeadores", "svapo", "sigaretta usa e getta", "e cig", "ecig",
        "disposable vape", "vape jetable", "einweg vape", "vape descartavel", "nikotinsalz",
        "nic salt", "nicotine salt", "sel de nicotine", "sales de nicotina", "sali di nicotina",
        "nicotinezout", "sais de nicotina",
    ),
    "weapons": (
        "knife", "knives", "hunting knife", "pocket knife", "crossbow", "air rifle", "airgun",
        "air gun", "air pistol", "bb gun", "machete", "dagger", "sword", "katana", "pepper spray",
        "stun gun", "slingshot", "catapult", "bayonet", "switchblade", "bow and arrow",
        "throwing knife", "butterfly knife", "fixed blade knife",
        "couteau", "couteaux", "arbalete", "carabine", "carabine a plomb", "poignard", "epee",
        "lance pierre", "bombe lacrymogene", "couteau de chasse", "couteau de poche",
        "messer", "taschenmesser", "jagdmesser", "armbrust", "luftgewehr", "luftpistole",
        "dolch", "schwert", "pfefferspray", "steinschleuder", "jagdwaffe",
        "cuchillo", "cuchillos", "navaja", "ballesta", "rifle de aire", "escopeta de aire",
        "pistola de aire", "daga", "espada", "spray de pimienta", "tirachinas",
        "cuchillo de caza", "cuchillo de monte",
        "coltello", "coltelli", "coltello da caccia", "coltello a serramanico", "balestra",
        "fucile ad aria compressa", "carabina ad aria compressa", "pistola ad aria compressa",
        "pugnale", "spada", "spray al peperoncino", "fionda", "machete",
        "jachtmes", "zakmes", "kruisboog", "luchtbuks", "luchtpistool", "dolk", "zwaard",
        "pepperspray", "katapult", "vlindermes",
        "faca", "facas", "faca de caca", "canivete", "espingarda de pressao", "punhal",
        "spray de pimenta", "fisga", "besta de caca",
        "pistolet a air comprime", "pistolet a plomb", "machette", "springmesser",
        "butterflymesser", "kampfmesser", "wurfmesser", "luftdruckpistole", "luftdruckgewehr",
        "pistola de aire comprimido", "pistola de pressao", "pistola de pressao de ar",
        "carabina de pressao", "tactical knife", "couteau tactique", "coltello tattico",
        "faca tatica", "cuchillo tactico", "fahrtenmesser", "besta", "karambit",
        "balisong", "nunchaku", "brass knuckles", "knuckle duster", "schlagring",
        "coup de poing americain", "tirapugni", "boksbeugel", "soqueira",
    ),
    "adult": (
        "adult toy", "adults only", "erotic", "erotique", "erotik", "erotico", "sex toy",
        "18+ only", "lingerie erotique", "vibrator", "vibromasseur", "sexspielzeug",
        "juguete sexual", "giocattolo erotico", "vibratore", "solo adulti", "seksspeeltje",
        "erotisch", "brinquedo sexual", "vibrador", "erotica", "erotici",
        # inflected forms: "érotiques", "eróticos", "erotische"
        "erotiques", "eroticos", "eroticas", "erotiche", "erotische", "erotiek",
        "vibratoren", "vibradores", "vibratori", "vibrators", "vibromasseurs",
        "dildo", "godemichet", "gode", "plug anal", "anal plug", "bondage", "strap on",
        "fleshlight", "masturbator", "masturbateur", "kamasutra",
    ),
    "medicine": (
        "paracetamol", "ibuprofen", "ibuprofene", "aspirin", "aspirine", "antihistamine",
        "painkiller", "painkillers", "medicine", "medicament", "arzneimittel", "medicamento",
        "nicotine patch", "nicotine gum", "nicotine patches", "patch nicotine",
        "nikotinpflaster", "parche de nicotina",
        "paracetamolo", "ibuprofene", "aspirina", "farmaco", "medicinale", "antidolorifico",
        "geneesmiddel", "medicijn", "pijnstiller", "ibuprofeno", "analgesico", "antigripal",
        "schmerzmittel", "schmerztabletten", "analgesique", "antalgique", "tachipirina",
        "cerotto alla nicotina", "nicotinepleister", "adesivo de nicotina",
    ),
}

# Keywords too general to flag a product the tree left unrestricted (a kitchen knife on a
# kitchen-knife leaf, "wine grapes" on a juice leaf); read only where the node cannot say.
# Every other keyword names the restricted good itself and counts everywhere.
_PLAIN_KEYWORDS = frozenset(
    fold(w)
    for w in (
        "wine knife knives couteau couteaux messer cuchillo cuchillos coltello coltelli faca "
        "facas ale gin rum ron sake cava vin wein vino vinho wijn korn port spirits alcohol "
        "alcool alkohol alcoholic alcolico medicine medicament medicamento medicinale farmaco "
        "geneesmiddel medicijn arzneimittel sword espada spada epee schwert zwaard catapult "
        "katapult slingshot fionda machete shag trinciato besta gode amaro"
    ).split()
)

# Phrases that hold a keyword but are not the restricted thing; they hide their words.
_HARMLESS: tuple[str, ...] = (
    "wine glass", "wine glasses", "wine rack", "wine cooler", "wine opener", "wine red",
    "wine colour", "wine color", "wine bottle holder", "wine stopper", "wine aerator",
    "beer glass", "beer mug", "beer glasses", "ale house", "gin glass", "cocktail glass",
    "verre a vin", "verres a vin", "rouge vin", "porte bouteille", "seau a champagne",
    "weinglas", "weinglaser", "weinrot", "weinregal", "bierglas", "bierkrug",
    "copa de vino", "copas de vino", "jarra de cerveza", "rojo vino",
    "bicchiere da vino", "bicchieri da vino", "calice da vino", "rosso vino", "boccale da birra",
    "wijnglas", "wijnglazen", "wijnrek", "bierglas", "wijnrood", "copo de vinho",
    "copos de vinho", "caneca de cerveja", "vermelho vinho", "porta vinhos", "portabottiglie",
    "knife sharpener", "knife block", "butter knife", "palette knife", "cake knife",
    "cheese knife", "cheese knives", "knife and fork", "couteau a beurre", "aiguiseur",
    "buttermesser", "messerblock", "messerscharfer", "cuchillo de mantequilla",
    "affilacoltelli", "ceppo coltelli", "coltello da burro", "messenslijper", "messenblok",
    "botermes", "afiador de facas", "faca de manteiga", "bloco de facas", "coltello da formaggio",
    "champagne colour", "champagne gold", "champagne beige", "champagner farben",
    "cigar box guitar", "cognac colour", "cognac leather", "cognac brown", "rum raisin",
    "rhum raisin", "nicotine free", "sans nicotine", "nikotinfrei", "sin nicotina",
    "senza nicotina", "nicotinevrij", "sem nicotina",
    "bourbon vanilla", "vanille bourbon", "vaniglia bourbon", "bourbon vanille",
    "baunilha bourbon", "vainilla bourbon",
    "swordfish", "espada de juguete", "toy sword", "foam sword", "epee en mousse",
    "slingshot toy", "pesce spada", "zwaardvis",
    "peixe espada", "spada giocattolo", "speelgoedzwaard", "espada de brinquedo",
    "cigarette pants", "cigarette trousers", "pantalon cigarette", "jean cigarette",
    "pantaloni a sigaretta", "tabac blond", "shag rug", "shag carpet", "shag pile",
    "tapis shaggy", "hoogpolig shag",
)

# Words near a keyword that make it a flavour, a scent, a colour or a shape named after the
# restricted good ("whisky-scented candle", "tobacco brown", "cigar-shaped", "vodka-flavoured
# lip balm"), or a toy or sweet in its likeness; seven languages.
_NEGATIVE_CUES: tuple[str, ...] = (
    # alcohol-free drinks (they hide the drink they name: "Cerveza sin alcohol 0,0")
    "alcohol free", "sans alcool", "alkoholfrei", "alkoholfreies", "alkoholfreier",
    "sin alcohol", "0 0", "0d0", "non alcoholic", "analcolico", "analcolica", "senza alcol",
    "alcoholvrij", "alcoholvrije", "sem alcool", "zero alcool", "alcohol vrij",
    # Scents, colours, shapes and the objects that carry them. A bare flavour word is left
    # out: "raspberry-flavoured vodka" and "e-liquide parfum fraise" are the real thing.
    # en
    "scented", "scent", "fragrance", "colour", "color", "coloured", "colored", "brown",
    "shaped", "shape", "candle", "soap", "lip balm", "shampoo", "sweets", "candy",
    "chocolate", "gummies", "toy", "costume", "sticker", "print", "effect", "look", "perfume",
    "eau de parfum", "eau de toilette", "cologne", "diffuser", "wax melt", "ice cream",
    # fr
    "parfumee", "senteur", "couleur", "coloris", "en forme de", "bougie", "savon", "baume",
    "bonbon", "bonbons", "jouet", "deguisement", "marron", "brun", "glace",
    # de
    "duft", "duftkerze", "farbe", "farben", "kerze", "seife", "lippenbalsam", "spielzeug",
    "kostum", "braun", "schokolade", "eis",
    # es
    "olor", "olor a", "en forma de", "vela", "jabon", "balsamo", "juguete", "disfraz",
    "marron", "caramelo", "caramelos", "helado",
    # it
    "profumo", "profumata", "profumato", "colore", "a forma di", "candela", "sapone",
    "giocattolo", "marrone", "caramelle", "cioccolato", "gelato",
    # nl
    "geurkaars", "kleur", "kleurig", "in de vorm van", "kaars", "zeep", "lippenbalsem",
    "speelgoed", "kostuum", "bruin", "snoep", "ijs",
    # pt
    "cheiro", "cor", "cor de", "em forma de", "sabonete", "brinquedo", "fantasia", "castanho",
    "rebucado", "bombom", "perfumada", "gelado", "sorvete",
    # furniture and body care named after a drink or a smoke ("whiskey barrel coffee table",
    # "beer shower gel")
    "table", "coffee table", "chair", "lounge chair", "shelf", "body wash", "shower gel",
    "chocolates", "pralines", "truffles", "gel douche", "duschgel", "gel de ducha",
    "bagnoschiuma", "douchegel", "gel de banho", "shampoing",
)
# Objects that a product can be while naming a drink, a smoke or a weapon as its motif or
# material ("tobacco leaf wallpaper", "vodka bottle lamp", "jupe plissée couteau"); seven
# languages, common practice, no source. They count only at the head of the title.
_OBJECT_WORDS: tuple[str, ...] = (
    "lamp", "wallpaper", "board", "cork board", "purse", "bag", "skirt", "dress", "shirt",
    "t shirt", "socks", "mug", "coaster", "coasters",
    "scrub", "body scrub", "lotion", "cream", "poster", "sign", "cushion", "pillow", "blanket",
    "towel", "apron", "clock", "frame", "ornament", "magnet", "notebook", "puzzle", "wallet",
    "belt", "boots", "jacket", "earrings", "necklace", "cufflinks", "rug", "curtain",
    "curtains", "figurine", "charm", "pendant", "phone case", "tote",
    "lampe", "papier peint", "tableau", "sac", "jupe", "robe", "chemise", "chaussettes",
    "porte cles", "tasse", "sous verre", "gommage", "creme", "affiche", "coussin",
    "couverture", "serviette", "tablier", "horloge", "cadre", "aimant", "carnet",
    "portefeuille", "ceinture", "bottes", "collier", "tapis", "rideau",
    "tapete", "tasche", "rock", "kleid", "hemd", "socken", "schlusselanhanger", "becher",
    "untersetzer", "peeling", "poster", "kissen", "decke", "handtuch", "schurze", "rahmen",
    "notizbuch", "geldborse", "gurtel", "stiefel", "ohrringe", "teppich", "vorhang",
    "pinnwand",
    "lampara", "papel pintado", "tablero", "bolso", "falda", "vestido", "camisa",
    "calcetines", "llavero", "taza", "posavasos", "exfoliante", "crema", "cartel", "cojin",
    "manta", "toalla", "delantal", "marco", "cuaderno", "cartera", "cinturon", "botas",
    "pendientes", "alfombra", "cortina", "corcho",
    "lampada", "carta da parati", "borsa", "gonna", "vestito", "camicia", "calzini",
    "portachiavi", "tazza", "sottobicchiere", "cuscino", "coperta", "asciugamano",
    "grembiule", "cornice", "quaderno", "portafoglio", "cintura", "stivali", "orecchini",
    "collana", "tappeto", "tenda",
    "behang", "prikbord", "tas", "rok", "jurk", "overhemd", "sokken", "sleutelhanger", "mok",
    "onderzetter", "onderzetters", "kussen", "deken", "handdoek", "schort", "klok",
    "portemonnee", "riem", "laarzen", "oorbellen", "ketting", "vloerkleed", "gordijn",
    "candeeiro", "papel de parede", "quadro", "bolsa", "saia", "meias", "porta chaves",
    "caneca", "base para copos", "esfoliante", "creme", "cartaz", "almofada", "toalha",
    "avental", "moldura", "caderno", "carteira", "cinto", "brincos", "colar", "tapete",
)
_OBJECTS = PhraseIndex((word, "") for word in _OBJECT_WORDS)
# Words before an object that make it an accessory of the product, not the product.
_CONNECTORS = frozenset(
    "with and avec et mit und con y met en com e plus".split()
)
_UNITS = frozenset("cl ml l g kg cm mm m x oz lbs pack pcs st stuck".split())
_DIGIT = re.compile(r"\d")

# How many words away a negative cue may stand ("gin and tonic candle", "caramelle al gusto
# di rum": four words between the object and the drink it tastes of).
_NEGATIVE_WINDOW = 4

_NEGATIVE = "~"
# Flags a negative cue can undo: a flavour, scent, colour or shape is named after a drink, a
# smoke or a weapon; an erotic candle is still adult, a nicotine gum still a medicine.
_NEGATABLE = frozenset({"alcohol", "tobacco", "weapons"})

# German and Dutch write compounds: "Weizenbier", "Kräuterlikör", "Pfeifentabak".
_COMPOUND_ENDINGS: dict[str, str] = {
    "vibrator": "adult", "armbrust": "weapons", "kruisboog": "weapons",
    "bier": "alcohol", "likor": "alcohol", "likeur": "alcohol", "schnaps": "alcohol",
    "tabak": "tobacco", "zigarren": "tobacco", "zigaretten": "tobacco", "sigaren": "tobacco",
    "sigaretten": "tobacco",
}
_COMPOUND = re.compile(r"\b([a-z]{3,}?)(" + "|".join(_COMPOUND_ENDINGS) + r")\b")


def _plurals(word: str) -> tuple[str, ...]:
    # Plural forms of one-word keywords ("cervezas", "sigarillos", "daggers"); the phrases
    # are listed as written.
    if " " in word or len(word) < 4:
        return (word,)
    return (word, f"{word}s", f"{word}es")


def _build_index() -> PhraseIndex:
    phrases: dict[str, object] = {}
    for restriction, words in _KEYWORDS.items():
        for word in words:
            for form in _plurals(word):
                phrases.setdefault(form, restriction)
    for phrase in _NEGATIVE_CUES:
        phrases[phrase] = _NEGATIVE
    for phrase in _HARMLESS:
        phrases[phrase] = ""
    return PhraseIndex(phrases.items())


_INDEX = _build_index()


def restriction_hits(folded: str) -> list[tuple[str, str, bool]]:
    """Return the restriction keywords of a folded text as (restriction, keyword, strong).

    Harmless phrases hide their words; a drink, smoke or weapon keyword is dropped when a
    negative cue stands within :data:`_NEGATIVE_WINDOW` words (a scent, a colour, a shape, a
    toy) or when the title names another object as its head ("tobacco leaf wallpaper",
    "lampada a bottiglia di vodka": see :func:`_object_is_head`). ``strong`` is False for
    keywords too general to flag a product the tree left unrestricted.
    """
    matches = _INDEX.find(folded)
    if (  # a few plain substring tests before the compound pattern (most titles pass none)
        "bier" in folded or "lik" in folded or "schnaps" in folded or "tabak" in folded
        or "igar" in folded or "vibrator" in folded or "armbrust" in folded
        or "kruisboog" in folded
    ):
        matches = matches + [
            (found.start(), found.end(), found.group(0), _COMPOUND_ENDINGS[found.group(2)])
            for found in _COMPOUND.finditer(folded)
        ]
    if not matches or all(not m[3] or m[3] == _NEGATIVE for m in matches):
        return []  # the common case: no keyword at all, only colours, objects, glasses...
    kept: list[tuple[int, int, str, object]] = []
    last_end = -1
    for match in sorted(matches, key=lambda m: (m[0], m[0] - m[1])):
        if match[0] < last_end:
            continue
        last_end = match[1]
        kept.append(match)
    negatives = [
        (folded.count(" ", 0, m[0]), folded.count(" ", 0, m[1]))
        for m in kept if m[3] == _NEGATIVE
    ]
    hits: list[tuple[str, str, bool]] = []
    for start, end, key, payload in kept:
        if not payload or payload == _NEGATIVE:
            continue
        if payload in _NEGATABLE:
            first = folded.count(" ", 0, start)
            last = folded.count(" ", 0, end)
            if any(
                first - _NEGATIVE_WINDOW <= n_end and n_start <= last + _NEGATIVE_WINDOW
                for n_start, n_end in negatives
            ):
                continue
            if _object_is_head(folded, first, last):
                continue
        hits.append((str(payload), key, key not in _PLAIN_KEYWORDS))
    return hits


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
    while end > 0 and (_DIGIT.search(tokens[end]) or tokens[end] in _UNITS):
        end -= 1
    for start_char, end_char, _key, _payload in objects:
        o_first = folded.count(" ", 0, start_char)
        o_last = folded.count(" ", 0, end_char)
        if o_first <= last and first <= o_last:
            continue  # the object word is part of the keyword's phrase
        if o_first != 0 and o_last != end:
            continue
        if o_first > 0 and (
            tokens[o_first - 1] in _CONNECTORS or _DIGIT.search(tokens[o_first - 1])
        ):
            continue
        return True
    return False


def restriction_from_text_folded(folded: str, *, strong_only: bool = False) -> tuple[str, str]:
    """As :func:`restriction_from_text`, on folded text.

    Args:
        folded: the folded text.
        strong_only: read only keywords that name the restricted good itself (for a product
            whose node is an unrestricted leaf).
    """
    for restriction, key, strong in restriction_hits(folded):
        if strong or not strong_only:
            return restriction, f"keyword '{key}'"
    return "", ""


def restriction_for_node(node_restriction: str, read_all: bool, folded: str) -> str:
    """Return the flag of a product from its node's restriction and its text.

    Args:
        node_restriction: the node's (inherited) restriction, "" for none.
        read_all: the node cannot say (no node, an inner or a generic node): every keyword
            counts.
        folded: the folded title (and retailer category path).

    Returns:
        The node's restriction, unless the text names another restricted good and nothing of
        the node's (a paracetamol product mapped to a tobacco node); where the node has none,
        what the keywords say (only the unmistakable ones on an unrestricted leaf: "hunting
        knife", "grappa").
    """
    if not node_restriction:
        return restriction_from_text_folded(folded, strong_only=not read_all)[0]
    hits = restriction_hits(folded)
    if not hits or any(r == node_restriction for r, _k, _s in hits):
        return node_restriction
    strong = [r for r, _k, s in hits if s]
    return strong[0] if strong else node_restriction


def restriction_from_text(text: str) -> tuple[str, str]:
    """Return (restriction, evidence) from keywords in a text, ("", "") when none. Never raises.

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
