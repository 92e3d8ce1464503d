"""Word lists of the unseen-retailer demo part: synonyms, Italian words, codes, bad paths.

Written for catmap's demo world. The synonyms are everyday alternatives to the words of the
tree's English keywords, grouped by node family (apparel, footwear, home, ...); the generator
only uses a synonym whose words appear in none of the tree's keywords, so a model that learnt
the tree's words and the reference retailers' titles has not met them. The Italian words give
short Italian titles (the tree has no Italian keywords).
"""

from __future__ import annotations

# English word of a tree keyword → replacement words, by node family. A family's words are
# tried for leaves of any department (a "case" is a case everywhere); the families only keep
# the lists readable.
SYNONYMS: dict[str, dict[str, tuple[str, ...]]] = {
    "apparel": {
        "trousers": ("strides", "slacks pair"), "jumper": ("pully", "knit top"),
        "sweater": ("knit pully",), "jacket": ("shell layer", "blazerette"),
        "coat": ("topcoat layer", "greatcoat"), "dress": ("frocklet", "frock"),
        "dresses": ("frocks",), "skirt": ("wrapskirt",), "shirt": ("buttonup",),
        "t-shirt": ("tshirtee",), "tee": ("teeshirt",), "top": ("toplet",),
        "hoodie": ("hoody", "hooded pully"), "shorts": ("halfpants",),
        "jeans": ("denim pants", "jeanpants"), "leggings": ("leggins stretch",),
        "socks": ("sockettes", "ankle hose"), "pyjamas": ("sleepset", "jammies"),
        "underwear": ("undies",), "briefs": ("undies brief",), "bra": ("bralet",),
        "vest": ("singlet top",), "suit": ("two piece",), "swimsuit": ("cozzie", "swimmers"),
        "tights": ("legwear",), "gown": ("longfrock",), "cardigan": ("cardi",),
        "set": ("assortment", "batch"), "kit": ("rigout", "rig"), "clothing": ("togs", "duds"),
        "joggers": ("trackies",), "pyjama": ("pjs",),
        "apron": ("pinny",), "tunic": ("smock",),
    },
    "footwear": {
        "shoes": ("kicks", "footwear pair"), "boots": ("booties pair", "stompers"),
        "trainers": ("runners", "sneaks"), "sandals": ("strappies", "flipflaps"),
        "heels": ("stilts",), "slippers": ("house shoes", "indoor mocs"),
        "boot": ("stomper",), "pumps": ("court flats",), "shoe": ("gumshoe",),
        "wellies": ("galoshes",), "sneakers": ("hightops", "daps"),
    },
    "bags": {
        "bag": ("carryall", "holdall pouch"), "bags": ("carryalls",),
        "backpack": ("daysack", "knapsack"), "wallet": ("billfold", "cardfold"),
        "suitcase": ("roller case", "travel trunk"), "umbrella": ("brolly",),
        "hat": ("lid",), "cap": ("peak cap",), "scarf": ("muffler",),
        "belt": ("waistband strap",), "gloves": ("handwarmers",), "sunglasses": ("sunnies",),
        "case": ("holster", "coffer"), "box": ("coffer", "receptacle"),
        "holder": ("receptacle",), "jacket": ("jerkin",),
    },
    "jewellery": {
        "necklace": ("neckpiece", "collar chain"), "earrings": ("ear drops", "ear studs pair"),
        "ring": ("fingerband",), "bracelet": ("wristlet", "bangle band"),
        "watch": ("timepiece", "wristwatch"), "watches": ("timepieces",),
        "pendant": ("drop charm",),
    },
    "beauty": {
        "cream": ("creme", "balmcream"), "shampoo": ("hairwash",), "lotion": ("body milk",),
        "serum": ("elixir",), "perfume": ("scent", "eau"), "lipstick": ("lip colour",),
        "mascara": ("lash tint",), "moisturiser": ("hydrator",), "razor": ("shaver blade",),
        "toothbrush": ("tooth cleaner",), "conditioner": ("detangler",), "mask": ("masque",),
        "polish": ("lacquer",), "brush": ("bristle tool",), "spray": ("spritz", "mister"),
        "oil": ("elixir oil",), "ointment": ("unguent",), "gel": ("unguent gel",),
        "shine": ("sheen",),
    },
    "health": {
        "tablets": ("caplets", "pills"), "vitamins": ("vits", "multis"),
        "supplement": ("booster caps",), "plasters": ("adhesive strips",),
        "thermometer": ("temp reader",), "drops": ("dropper solution",),
    },
    "home": {
        "sofa": ("settee", "davenport"), "pan": ("skillet",), "pot": ("vessel",),
        "kettle": ("boiler jug",), "mug": ("beaker cup",), "lamp": ("lightstand",),
        "cushion": ("scatter pillow",), "duvet": ("comforter",), "towel": ("drying cloth",),
        "vacuum": ("hoover",), "cleaner": ("cleanser",), "knife": ("blade",),
        "blanket": ("throw rug",), "curtains": ("drapes",), "bin": ("trash can",),
        "table": ("tabletop",), "chair": ("seat piece",), "wardrobe": ("armoire",),
        "shelf": ("ledge rack",), "mattress": ("sleep pad",), "rug": ("floor runner",),
        "bowl": ("basin dish",), "plate": ("platter",), "glass": ("tumbler",),
        "bed": ("bedstead",), "desk": ("workdesk",), "cabinet": ("cupboard unit",),
        "fridge": ("icebox",), "jug": ("ewer",), "bottle": ("canteen",),
        "goblet": ("chalice",), "tankard": ("stein",),
    },
    "electronics": {
        "headphones": ("cans", "earcans"), "speaker": ("soundbox",),
        "speakers": ("soundboxes",), "laptop": ("notebook pc",), "phone": ("handset",),
        "charger": ("power brick",), "cable": ("cord",), "monitor": ("screen panel",),
        "tv": ("telly",), "camera": ("snapper", "shooter"), "printer": ("print unit",),
        "mouse": ("pointer",), "keyboard": ("keyset",), "console": ("games box",),
        "battery": ("cell pack",), "tablet": ("slate",), "drive": ("storage stick",),
        "earphones": ("buds",), "gadget": ("gizmo",),
    },
    "sports": {
        "bike": ("cycle", "pushbike"), "tent": ("shelter",), "ball": ("sphere ball",),
        "racket": ("bat frame",), "helmet": ("lid helmet",), "mat": ("floor pad",),
        "rod": ("fishing pole",), "skis": ("planks",), "weights": ("iron plates",),
        "bicycle": ("pushbike", "roadster"), "moped": ("twowheeler",),
    },
    "toys": {
        "toy": ("plaything", "gizmo toy"), "toys": ("playthings",), "doll": ("poppet",),
        "puzzle": ("brainteaser",), "game": ("pastime",), "pushchair": ("buggy",),
        "nappies": ("diapers",), "pram": ("baby carriage",), "blocks": ("bricks set",),
    },
    "pets": {
        "dog": ("pooch", "doggy", "hound", "mutt"), "cat": ("kitty", "moggy"),
        "food": ("chow", "kibble"), "puppy": ("doggo",),
        "lead": ("tether",), "collar": ("neckband",), "litter": ("grit",),
        "aquarium": ("fishbowl tank",),
    },
    "garden": {
        "drill": ("borer",), "saw": ("cutblade",), "hammer": ("mallet",),
        "mower": ("grasscutter",), "hose": ("watering pipe",), "paint": ("emulsion",),
        "screwdriver": ("turnscrew",), "barbecue": ("bbq grill",), "spade": ("digger",),
    },
    "food": {
        "coffee": ("joe", "brew"), "tea": ("cuppa",), "chocolate": ("choc",),
        "biscuits": ("cookies",), "crisps": ("chips snack",), "wine": ("vino",),
        "beer": ("brewski", "ale"), "juice": ("squeezed drink",), "water": ("aqua",),
        "sweets": ("candies",), "sauce": ("condiment",),
    },
    "media": {
        "book": ("volume", "paperback read", "yarn"), "novel": ("page-turner", "potboiler"),
        "story": ("tale",), "stories": ("yarns",),
        "books": ("volumes",), "album": ("record",), "film": ("flick",),
    },
    "office": {
        "pen": ("biro",), "pencil": ("lead stick",), "notebook": ("jotter",),
        "folder": ("document wallet",), "stapler": ("stapling unit",),
        "paper": ("sheets ream",),
    },
    "auto": {
        "tyre": ("tire",), "tyres": ("tires",), "wipers": ("wiper blades",),
        "oil": ("lube",), "car": ("auto", "motor"),
    },
    "smoking": {
        "cigars": ("stogies",), "lighter": ("flame tool",), "pipe": ("briar",),
        "e-liquid": ("vape juice",), "tobacco": ("baccy",),
    },
}

# English word → Italian word, for the head words of the tree's English keywords (nouns) and
# common modifiers. A phrase is translated word by word and its order turned round (Italian
# puts the noun first: "wool coat" → "cappotto lana").
ITALIAN: dict[str, str] = {
    "set": "set", "bag": "borsa", "kit": "kit", "shoes": "scarpe", "bags": "borse",
    "case": "custodia", "box": "scatola", "jacket": "giacca", "boots": "stivali",
    "accessories": "accessori", "chair": "sedia", "spray": "spray", "cream": "crema",
    "gel": "gel", "oil": "olio", "camera": "fotocamera", "pants": "pantaloni", "book": "libro",
    "suit": "abito", "stand": "supporto", "brush": "spazzola", "tablets": "compresse",
    "bed": "letto", "top": "top", "cover": "cover", "machine": "macchina", "food": "cibo",
    "dress": "vestito", "stick": "stick", "pads": "cuscinetti", "beds": "letti",
    "table": "tavolo", "bike": "bicicletta", "shirt": "camicia", "trousers": "pantaloni",
    "cleaner": "pulitore", "unit": "mobile", "seat": "seggiolino", "maker": "macchina",
    "charger": "caricatore", "toy": "giocattolo", "toys": "giocattoli", "vest": "gilet",
    "trainers": "sneakers", "backpack": "zaino", "gloves": "guanti", "light": "luce",
    "ring": "anello", "watch": "orologio", "watches": "orologi", "powder": "polvere",
    "monitor": "monitor", "pot": "pentola", "mat": "tappetino", "cabinet": "armadietto",
    "cable": "cavo", "books": "libri", "shorts": "pantaloncini", "coat": "cappotto",
    "mask": "maschera", "glasses": "occhiali", "bracelet": "bracciale", "pen": "penna",
    "tray": "vassoio", "vacuum": "aspirapolvere", "rack": "rastrelliera", "chairs": "sedie",
    "game": "gioco", "games": "giochi", "novel": "romanzo", "jeans": "jeans",
    "socks": "calzini", "hat": "cappello", "sandals": "sandali", "heels": "tacchi",
    "holder": "portaoggetti", "chain": "catena", "necklace": "collana", "lamp": "lampada",
    "tape": "nastro", "board": "tavola", "bowl": "ciotola", "cushion": "cuscino",
    "speakers": "casse", "speaker": "cassa", "computer": "computer", "balls": "palline",
    "ball": "pallone", "skirt": "gonna", "bra": "reggiseno", "belt": "cintura",
    "backpacks": "zaini", "suitcase": "valigia", "lock": "lucchetto", "balm": "balsamo",
    "lotion": "lozione", "shampoo": "shampoo", "pan": "padella", "basket": "cestino",
    "tablet": "tablet", "paper": "carta", "pump": "pompa", "filter": "filtro",
    "t-shirt": "maglietta", "jumper": "maglione", "sweater": "maglione", "tights": "collant",
    "slippers": "pantofole", "pillow": "guanciale", "wallet": "portafoglio",
    "scarf": "sciarpa", "umbrella": "ombrello", "earrings": "orecchini", "pencil": "matita",
    "sponge": "spugna", "knife": "coltello", "spoon": "cucchiaio", "glass": "bicchiere",
    "mattress": "materasso", "shelf": "mensola", "headphones": "cuffie",
    "notebook": "quaderno", "printer": "stampante", "tyre": "pneumatico", "racket": "racchetta",
    "wine": "vino", "tee": "maglietta", "underwear": "intimo", "pyjamas": "pigiama",
    "rucksack": "zaino", "comb": "pettine", "tie": "cravatta", "pendant": "ciondolo",
    "serum": "siero", "conditioner": "balsamo", "dryer": "asciugacapelli", "razor": "rasoio",
    "towels": "asciugamani", "towel": "asciugamano", "vitamins": "vitamine",
    "supplement": "integratore", "bottle": "bottiglia", "oven": "forno", "knives": "coltelli",
    "sofa": "divano", "desk": "scrivania", "laptop": "portatile", "phone": "telefono",
    "helmet": "casco", "tent": "tenda", "coffee": "caffè", "tea": "tè", "beer": "birra",
    "water": "acqua", "mower": "tosaerba", "drill": "trapano", "hammer": "martello",
    "saw": "sega", "hose": "tubo", "dog": "cane", "cat": "gatto", "lead": "guinzaglio",
    "collar": "collare", "car": "auto", "blanket": "coperta", "duvet": "piumone",
    "kettle": "bollitore", "mug": "tazza", "cup": "tazza", "plate": "piatto",
    "wardrobe": "armadio", "mirror": "specchio", "rug": "tappeto", "curtains": "tende",
    "clock": "orologio da parete", "candle": "candela", "vase": "vaso", "doll": "bambola",
    "puzzle": "puzzle", "chocolate": "cioccolato", "biscuits": "biscotti", "pasta": "pasta",
    "rice": "riso", "honey": "miele", "juice": "succo", "cigars": "sigari", "lighter": "accendino",
    "pipe": "pipa", "perfume": "profumo", "lipstick": "rossetto", "mascara": "mascara",
    "soap": "sapone", "toothbrush": "spazzolino", "toothpaste": "dentifricio",
    "gun": "pistola", "rifle": "carabina", "fishing": "pesca", "rod": "canna",
    "scooter": "monopattino", "skateboard": "skateboard", "boot": "stivale",
    "wool": "lana", "leather": "pelle", "cotton": "cotone", "linen": "lino", "silk": "seta",
    "denim": "denim", "winter": "invernale", "summer": "estivo", "running": "corsa",
    "kitchen": "cucina", "garden": "giardino", "baby": "bebè", "kids": "bambini",
    "electric": "elettrico", "wireless": "senza fili", "waterproof": "impermeabile",
    "long": "lungo", "short": "corto", "sleeve": "manica", "hiking": "trekking",
    "steel": "acciaio", "wooden": "legno", "wood": "legno",
    "plastic": "plastica", "travel": "viaggio", "sports": "sportivo", "sport": "sport",
    "office": "ufficio", "bath": "bagno", "hair": "capelli", "face": "viso", "body": "corpo",
    "eye": "occhi", "hand": "mani", "foot": "piedi", "dental": "dentale", "night": "notte",
    "day": "giorno", "red": "rosso", "white": "bianco", "black": "nero", "green": "verde",
    "dining": "pranzo", "frying": "da frittura", "cordless": "a batteria", "gaming": "gaming",
    "smart": "smart", "mini": "mini", "bird": "uccelli", "fish": "pesci",
}

# Italian colour and audience words (the tree and the reference retailers have none).
ITALIAN_COLOURS: dict[str, tuple[str, ...]] = {
    "black": ("nero",), "white": ("bianco",), "grey": ("grigio", "antracite"),
    "blue": ("blu", "azzurro", "blu notte"), "green": ("verde", "verde oliva"),
    "red": ("rosso", "bordeaux"), "pink": ("rosa",), "purple": ("viola", "lilla"),
    "yellow": ("giallo", "senape"), "orange": ("arancione",), "brown": ("marrone", "cuoio"),
    "beige": ("beige", "sabbia"), "gold": ("oro", "dorato"), "silver": ("argento",),
    "multicolour": ("multicolore",),
}
ITALIAN_AUDIENCE: dict[tuple[str, str], tuple[str, ...]] = {
    ("female", "adult"): ("donna", "da donna"),
    ("male", "adult"): ("uomo", "da uomo"),
    ("unisex", "adult"): ("unisex",),
    ("female", "kids"): ("bambina",),
    ("male", "kids"): ("bambino",),
    ("unisex", "kids"): ("bimbi", "junior"),
    ("female", "baby"): ("neonata",),
    ("male", "baby"): ("neonato",),
    ("unisex", "baby"): ("neonato unisex", "prima infanzia"),
}

# Title codes the reference retailers never write.
SKU_FORMS = ("{A}{B}-{n}-{c}", "{n}/{m}", "P/N {A}{n}", "ART{n}", "{A}{B}{n}", "#{A}-{n}",
             "CODE {n}{A}", "{n}.{m}.{A}")
# Labels of an attribute-first title ("Colour: olive / Size: M - ..."): colour, size, style.
ATTRIBUTE_LABELS: dict[str, tuple[str, str, str]] = {
    "en": ("Colour", "Size", "Style"), "fr": ("Couleur", "Taille", "Style"),
    "de": ("Farbe", "Größe", "Stil"), "es": ("Color", "Talla", "Estilo"),
    "it": ("Colore", "Taglia", "Stile"),
}

# Retailer paths that say nothing useful, or the wrong thing.
NUMERIC_PATH_DEPTHS = (2, 3)
INTERNAL_CODES = ("CAT-{n}", "MKT_{A}{m}/{B}{n}", "grp{n}", "Z{n}-{m}", "DEPT{m}>SUB{n}",
                  "{A}{B}{n}")
BUCKETS: dict[str, tuple[str, ...]] = {
    "en": ("Sale > Last chance", "New in", "Clearance", "Deals of the week", "Outlet > 70% off",
           "Top picks", "Misc", "Uncategorised", "Back in stock"),
    "fr": ("Soldes > Dernière chance", "Nouveautés", "Bonnes affaires", "Divers",
           "Déstockage"),
    "de": ("Sale > Letzte Chance", "Neu eingetroffen", "Restposten", "Sonstiges",
           "Angebote der Woche"),
    "es": ("Rebajas > Última oportunidad", "Novedades", "Ofertas", "Varios", "Liquidación"),
    "it": ("Saldi > Ultima occasione", "Novità", "Offerte", "Varie", "Fuori tutto"),
}
# Italian words of the retailers' own columns.
ITALIAN_AVAILABILITY = ("disponibile", "esaurito", "in arrivo", "ultimi pezzi")

# Words a brand of this part is built from (two-word brands), besides invented syllables.
BRAND_WORDS_A = ("Bench", "Kettle", "Lark", "Orchard", "Pebble", "Drift", "Thistle", "Wren",
                 "Juniper", "Flint", "Gable", "Clover", "Tansy", "Rook", "Alder", "Nettle")
BRAND_WORDS_B = ("Low", "Point", "Hill", "Sound", "Nook", "Line", "Mark", "Rise", "Well",
                 "Stead", "Fold", "Row", "Dale", "Path", "Cove", "End")
# Legal forms written after an unknown brand (the demo brand list uses others as well).
LEGAL_FORMS = ("SAS", "GmbH", "Ltd.", "S.A.", "Co.", "S.r.l.", "Oy", "A/S")
