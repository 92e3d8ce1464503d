"""Shared vocabulary of the demo world: colours, audience words, sizes, modifiers, filler.

Every word list is given in the four languages of the tree (en, fr, de, es). Modifiers are
grouped into department profiles (apparel, footwear, kitchen, ...) that are matched to the
tree's departments by their English names, so that leaves of one department share materials,
styles and fits, as real catalogs do.
"""

from __future__ import annotations

from dataclasses import dataclass

LANGS = ("en", "fr", "de", "es")

# Colour families (the gold value) and the shade words retailers write for them.
COLOURS: dict[str, dict[str, tuple[str, ...]]] = {
    "black": {
        "en": ("black", "jet black", "onyx", "matte black"),
        "fr": ("noir", "noir mat", "ébène"),
        "de": ("schwarz", "tiefschwarz", "mattschwarz"),
        "es": ("negro", "negro mate", "azabache"),
    },
    "white": {
        "en": ("white", "off-white", "ivory", "snow", "optic white"),
        "fr": ("blanc", "blanc cassé", "ivoire"),
        "de": ("weiß", "wollweiß", "cremeweiß"),
        "es": ("blanco", "blanco roto", "marfil"),
    },
    "grey": {
        "en": ("grey", "gray", "charcoal", "anthracite", "heather grey", "slate"),
        "fr": ("gris", "anthracite", "gris chiné", "ardoise"),
        "de": ("grau", "anthrazit", "hellgrau", "grau meliert"),
        "es": ("gris", "antracita", "gris jaspeado", "gris marengo"),
    },
    "blue": {
        "en": ("blue", "navy", "royal blue", "sky blue", "denim blue", "petrol", "cobalt"),
        "fr": ("bleu", "bleu marine", "bleu ciel", "marine", "bleu roi", "pétrole"),
        "de": ("blau", "marineblau", "dunkelblau", "hellblau", "navy", "petrol"),
        "es": ("azul", "azul marino", "azul cielo", "azul celeste", "azul klein"),
    },
    "green": {
        "en": ("green", "olive", "khaki", "sage", "forest green", "mint"),
        "fr": ("vert", "kaki", "olive", "vert sapin", "vert d'eau"),
        "de": ("grün", "oliv", "khaki", "dunkelgrün", "salbei"),
        "es": ("verde", "caqui", "verde oliva", "verde menta", "verde botella"),
    },
    "red": {
        "en": ("red", "burgundy", "wine", "cherry", "scarlet", "brick red"),
        "fr": ("rouge", "bordeaux", "cerise", "rouge brique"),
        "de": ("rot", "bordeaux", "weinrot", "kirschrot"),
        "es": ("rojo", "burdeos", "granate", "rojo cereza"),
    },
    "pink": {
        "en": ("pink", "blush", "rose", "fuchsia", "dusty pink", "salmon"),
        "fr": ("rose", "rose poudré", "fuchsia", "vieux rose"),
        "de": ("rosa", "pink", "altrosa", "pudrig rosa"),
        "es": ("rosa", "fucsia", "rosa palo", "rosa empolvado"),
    },
    "purple": {
        "en": ("purple", "lilac", "lavender", "plum", "violet"),
        "fr": ("violet", "lilas", "prune", "lavande", "mauve"),
        "de": ("lila", "violett", "flieder", "aubergine"),
        "es": ("morado", "lila", "malva", "violeta", "berenjena"),
    },
    "yellow": {
        "en": ("yellow", "mustard", "lemon", "ochre"),
        "fr": ("jaune", "moutarde", "ocre", "jaune citron"),
        "de": ("gelb", "senfgelb", "ocker", "zitronengelb"),
        "es": ("amarillo", "mostaza", "ocre", "amarillo limón"),
    },
    "orange": {
        "en": ("orange", "coral", "rust", "terracotta", "burnt orange"),
        "fr": ("orange", "corail", "rouille", "terracotta"),
        "de": ("orange", "koralle", "rost", "terrakotta"),
        "es": ("naranja", "coral", "teja", "terracota"),
    },
    "brown": {
        "en": ("brown", "chocolate", "cognac", "camel", "tan", "taupe", "walnut"),
        "fr": ("marron", "chocolat", "cognac", "camel", "taupe", "brun"),
        "de": ("braun", "cognac", "camel", "dunkelbraun", "taupe"),
        "es": ("marrón", "chocolate", "coñac", "camel", "topo", "cuero"),
    },
    "beige": {
        "en": ("beige", "sand", "stone", "ecru", "oatmeal", "nude"),
        "fr": ("beige", "sable", "écru", "grège", "nude"),
        "de": ("beige", "sand", "natur", "creme", "ecru"),
        "es": ("beige", "arena", "crudo", "piedra", "nude"),
    },
    "gold": {
        "en": ("gold", "gold tone", "champagne", "brass"),
        "fr": ("doré", "or", "champagne", "laiton"),
        "de": ("gold", "goldfarben", "champagner", "messing"),
        "es": ("dorado", "oro", "champán", "latón"),
    },
    "silver": {
        "en": ("silver", "silver tone", "chrome", "metallic silver"),
        "fr": ("argent", "argenté", "chromé"),
        "de": ("silber", "silberfarben", "chrom"),
        "es": ("plata", "plateado", "cromado"),
    },
    "multicolour": {
        "en": ("multicolour", "multi", "rainbow", "assorted colours", "multicolor"),
        "fr": ("multicolore", "multi", "arc-en-ciel"),
        "de": ("bunt", "mehrfarbig", "regenbogen"),
        "es": ("multicolor", "varios colores", "arcoíris"),
    },
}

COLOUR_ABBREVIATIONS = {"black": "blk", "white": "wht", "navy": "nvy", "grey": "gry", "blue": "blu"}

# Audience words a title may carry, keyed by (who, age). "not_applicable" who with a kids /
# baby age uses the neutral children's words.
AUDIENCE_WORDS: dict[tuple[str, str], dict[str, tuple[str, ...]]] = {
    ("female", "adult"): {
        "en": ("Women's", "Womens", "Ladies", "Women", "for her", "Wmns"),
        "fr": ("Femme", "pour femme", "Femmes"),
        "de": ("Damen", "für Damen", "Damen-"),
        "es": ("Mujer", "de mujer", "para mujer", "Señora"),
    },
    ("male", "adult"): {
        "en": ("Men's", "Mens", "Men", "for him", "Gents"),
        "fr": ("Homme", "pour homme", "Hommes"),
        "de": ("Herren", "für Herren", "Herren-"),
        "es": ("Hombre", "de hombre", "para hombre", "Caballero"),
    },
    ("unisex", "adult"): {
        "en": ("Unisex", "unisex adult"),
        "fr": ("Mixte", "Unisexe"),
        "de": ("Unisex",),
        "es": ("Unisex", "Unisex adulto"),
    },
    ("female", "kids"): {
        "en": ("Girls'", "Girls", "Girl's"),
        "fr": ("Fille", "pour fille"),
        "de": ("Mädchen", "Mädchen-"),
        "es": ("Niña", "de niña"),
    },
    ("male", "kids"): {
        "en": ("Boys'", "Boys", "Boy's"),
        "fr": ("Garçon", "pour garçon"),
        "de": ("Jungen", "Jungen-"),
        "es": ("Niño", "de niño"),
    },
    ("unisex", "kids"): {
        "en": ("Kids", "Kids'", "Children's", "Junior"),
        "fr": ("Enfant", "Enfants", "Junior"),
        "de": ("Kinder", "Kinder-", "Junior"),
        "es": ("Infantil", "Niños", "Junior"),
    },
    ("female", "baby"): {
        "en": ("Baby Girl", "Baby girls'"),
        "fr": ("Bébé fille",),
        "de": ("Baby Mädchen",),
        "es": ("Bebé niña",),
    },
    ("male", "baby"): {
        "en": ("Baby Boy", "Baby boys'"),
        "fr": ("Bébé garçon",),
        "de": ("Baby Jungen",),
        "es": ("Bebé niño",),
    },
    ("unisex", "baby"): {
        "en": ("Baby", "Newborn", "Infant"),
        "fr": ("Bébé", "Naissance"),
        "de": ("Baby", "Babys"),
        "es": ("Bebé", "Recién nacido"),
    },
}

# Values a retailer writes in its own gender column, from tidy to chaotic.
GENDER_FIELD_TIDY: dict[tuple[str, str], dict[str, str]] = {
    ("female", "adult"): {"en": "Women", "fr": "Femme", "de": "Damen", "es": "Mujer"},
    ("male", "adult"): {"en": "Men", "fr": "Homme", "de": "Herren", "es": "Hombre"},
    ("unisex", "adult"): {"en": "Unisex", "fr": "Mixte", "de": "Unisex", "es": "Unisex"},
    ("female", "kids"): {"en": "Girls", "fr": "Fille", "de": "Mädchen", "es": "Niña"},
    ("male", "kids"): {"en": "Boys", "fr": "Garçon", "de": "Jungen", "es": "Niño"},
    ("unisex", "kids"): {"en": "Kids", "fr": "Enfant", "de": "Kinder", "es": "Niños"},
    ("female", "baby"): {"en": "Baby", "fr": "Bébé", "de": "Baby", "es": "Bebé"},
    ("male", "baby"): {"en": "Baby", "fr": "Bébé", "de": "Baby", "es": "Bebé"},
    ("unisex", "baby"): {"en": "Baby", "fr": "Bébé", "de": "Baby", "es": "Bebé"},
}

GENDER_FIELD_WILD: dict[tuple[str, str], tuple[str, ...]] = {
    ("female", "adult"): ("W", "Womens", "Ladies", "Damen", "Femme", "F", "female", "WOMEN",
                          "Mujer"),
    ("male", "adult"): ("M", "Men's", "Herren", "H", "Homme", "male", "MENS", "Hombre", "Man"),
    ("unisex", "adult"): ("Unisex", "U", "unisex", "Mixte", "all", "W/M"),
    ("female", "kids"): ("Girls", "girl", "Mädchen", "niña", "Fille", "kids", "K-G"),
    ("male", "kids"): ("Boys", "boy", "Jungen", "niño", "Garçon", "kids", "K-B"),
    ("unisex", "kids"): ("kids", "Kinder", "Enfant", "niños", "Children", "junior"),
    ("female", "baby"): ("baby", "Baby", "bébé", "bebé", "infant"),
    ("male", "baby"): ("baby", "Baby", "bébé", "bebé", "infant"),
    ("unisex", "baby"): ("baby", "Baby", "bébé", "bebé", "infant", "newborn"),
}

# Gender column values (tidy or wild) that say a child's age but not whether it is a girl or
# a boy ("K-G" / "K-B" are codes a reader cannot be sure of).
NEUTRAL_GENDER_VALUES = frozenset({"kids", "k-g", "k-b", "baby", "bébé", "bebé", "infant",
                                   "newborn", "kinder", "enfant", "niños", "children", "junior"})

# Sentences a description may carry to say whom a product is for (a size note, a fit).
DESCRIPTION_AUDIENCE: dict[tuple[str, str], dict[str, tuple[str, ...]]] = {
    ("female", "adult"): {
        "en": ("Women's fit.", "Cut for women.", "Women's sizing: see the size guide."),
        "fr": ("Coupe femme.", "Taillé pour les femmes.", "Guide des tailles femme disponible."),
        "de": ("Damen-Passform.", "Für Damen geschnitten.", "Damengrößen: siehe Größentabelle."),
        "es": ("Corte de mujer.", "Pensado para mujer.", "Tallas de mujer: ver la guía."),
    },
    ("male", "adult"): {
        "en": ("Men's fit.", "Cut for men.", "Men's sizing: see the size guide."),
        "fr": ("Coupe homme.", "Taillé pour les hommes.", "Guide des tailles homme disponible."),
        "de": ("Herren-Passform.", "Für Herren geschnitten.", "Herrengrößen: siehe Größentabelle."),
        "es": ("Corte de hombre.", "Pensado para hombre.", "Tallas de hombre: ver la guía."),
    },
    ("unisex", "adult"): {
        "en": ("Unisex fit.",), "fr": ("Coupe mixte.",), "de": ("Unisex-Passform.",),
        "es": ("Corte unisex.",),
    },
    ("female", "kids"): {
        "en": ("For girls.", "Girls' sizes."), "fr": ("Pour fille.", "Tailles fille."),
        "de": ("Für Mädchen.", "Mädchengrößen."), "es": ("Para niña.", "Tallas de niña."),
    },
    ("male", "kids"): {
        "en": ("For boys.", "Boys' sizes."), "fr": ("Pour garçon.", "Tailles garçon."),
        "de": ("Für Jungen.", "Jungengrößen."), "es": ("Para niño.", "Tallas de niño."),
    },
    ("unisex", "kids"): {
        "en": ("For kids.", "Made for children."),
        "fr": ("Pour enfant.", "Pensé pour les enfants."),
        "de": ("Für Kinder.", "Kindergrößen."),
        "es": ("Para niños.", "Pensado para los niños."),
    },
    ("female", "baby"): {
        "en": ("For baby girls.",), "fr": ("Pour bébé fille.",), "de": ("Für Baby Mädchen.",),
        "es": ("Para bebé niña.",),
    },
    ("male", "baby"): {
        "en": ("For baby boys.",), "fr": ("Pour bébé garçon.",), "de": ("Für Baby Jungen.",),
        "es": ("Para bebé niño.",),
    },
    ("unisex", "baby"): {
        "en": ("For babies.", "Soft on newborn skin."),
        "fr": ("Pour bébé.", "Idéal dès la naissance."),
        "de": ("Für Babys.", "Für Neugeborene."),
        "es": ("Para bebé.", "Ideal para el recién nacido."),
    },
}

KIDS_SIZES: dict[str, tuple[str, ...]] = {
    "en": ("age 4-5", "age 6-7", "7-8 years", "9-10 yrs", "age 11-12", "128 cm", "140 cm", "3-4Y"),
    "fr": ("8 ans", "4 ans", "6 ans", "10-11 ans", "12 ans", "116 cm", "128 cm", "3-4 ans"),
    "de": ("Gr. 116", "Gr. 128", "3-4 Jahre", "6 Jahre", "Gr. 140", "104/110", "8-9 Jahre"),
    "es": ("6 años", "8-9 años", "4 años", "10 años", "12 años", "116 cm", "3-4 años"),
}
# Children's shoe sizes (a bare "33" is one too, though nothing in it says so).
KIDS_SHOE_SIZES = ("EU 30", "EU 28", "Gr. 31", "33", "UK 12 junior", "pointure 29", "talla 32")
BABY_SIZES: dict[str, tuple[str, ...]] = {
    "en": ("0-3 months", "3-6 months", "6-9M", "12-18M", "newborn", "up to 3 months"),
    "fr": ("3 mois", "6 mois", "naissance", "12 mois", "18 mois", "0-3 mois"),
    "de": ("Gr. 62", "62/68", "74/80", "12 Monate", "0-3 Monate", "Gr. 56"),
    "es": ("0-3 meses", "6 meses", "9-12 meses", "recién nacido", "12 meses"),
}

SIZES: dict[str, tuple[str, ...]] = {
    "apparel": ("XS", "S", "M", "L", "XL", "XXL", "3XL", "UK 12", "EU 38", "W32 L34", "Size 10",
                "40", "42", "S/M", "L/XL", "one size", "T2", "Gr. M", "talla M"),
    "shoe": ("EU 42", "UK 8", "42 EU", "Gr. 39", "38", "44.5", "US 9", "EU 37", "talla 40",
             "pointure 41", "36-37", "UK 5.5"),
    "volume": ("500 ml", "250ml", "1 L", "75cl", "50 ml", "100ml", "2 x 250 ml", "1.5L", "30 ml",
               "400 ml", "5L"),
    "weight": ("400 g", "2 kg", "12 kg", "1kg", "250g", "6 x 85 g", "15 kg", "800g", "3 kg"),
    "dims": ("2x 1.5 m", "60 x 40 cm", "Ø 28 cm", "160x200", "140 x 200 cm", "30cm", "45 x 45",
             "120 cm", "90x190", "Ø24cm"),
    "count": ("60 capsules", "30 tabs", "pack of 3", "120 pcs", "x20", "90 St.", "lot de 2"),
    "storage": ("128 GB", "256GB", "1 TB", "55 inch", '65"', "27''", "10000 mAh", "2 m", "64 GB"),
    "power": ("1200 W", "2000W", "18V", "20 V", "1.7 L", "800 W", "230V", "9 kg", "5 L"),
    "pieces": ("500 pieces", "1000 pcs", "set of 12", "3+", "24 pcs", "2 players", "8+",
               "100 Teile"),
    "baby": ("0-3 months", "newborn", "Gr. 62", "6 mois", "0m+", "6-12 m", "T1", "Size 3"),
    "pack": ("A4", "A5", "pack of 10", "10er-Pack", "lot de 5", "500 sheets", "0.5 mm", "A3",
             "x12", "80 g/m²"),
    "none": ("",),
}


@dataclass(frozen=True, slots=True)
class Profile:
    """How the products of one department look: colour chance, sizes, modifier words."""

    key: str
    colour_p: float
    size_kind: str
    price_median: float
    modifiers: tuple[tuple[str, str, str, str], ...]


# Modifier words as (en, fr, de, es) tuples so a product keeps one meaning in any language.
_COMMON_MODS: tuple[tuple[str, str, str, str], ...] = (
    ("premium", "premium", "Premium", "premium"),
    ("classic", "classique", "klassisch", "clásico"),
    ("new model", "nouveau modèle", "neues Modell", "nuevo modelo"),
    ("compact", "compact", "kompakt", "compacto"),
    ("large", "grand", "groß", "grande"),
    ("small", "petit", "klein", "pequeño"),
    ("set", "set", "Set", "set"),
)

_PROFILE_DATA: dict[str, tuple[float, str, float, tuple[tuple[str, str, str, str], ...]]] = {
    "apparel": (0.85, "apparel", 35.0, (
        ("cotton", "coton", "Baumwolle", "algodón"),
        ("organic cotton", "coton bio", "Bio-Baumwolle", "algodón orgánico"),
        ("linen", "lin", "Leinen", "lino"),
        ("wool", "laine", "Wolle", "lana"),
        ("merino", "mérinos", "Merino", "merino"),
        ("denim", "denim", "Denim", "vaquero"),
        ("jersey", "jersey", "Jersey", "punto"),
        ("fleece", "polaire", "Fleece", "forro polar"),
        ("slim fit", "coupe slim", "Slim Fit", "corte slim"),
        ("regular fit", "coupe droite", "Regular Fit", "corte regular"),
        ("oversized", "oversize", "Oversize", "oversize"),
        ("relaxed fit", "coupe ample", "locker", "holgado"),
        ("striped", "rayé", "gestreift", "de rayas"),
        ("printed", "imprimé", "bedruckt", "estampado"),
        ("basic", "basique", "Basic", "básico"),
        ("stretch", "stretch", "Stretch", "elástico"),
        ("long sleeve", "manches longues", "Langarm", "manga larga"),
        ("short sleeve", "manches courtes", "Kurzarm", "manga corta"),
        ("recycled", "recyclé", "recycelt", "reciclado"),
        ("ribbed", "côtelé", "gerippt", "canalé"),
        ("quilted", "matelassé", "gesteppt", "acolchado"),
        ("waterproof", "imperméable", "wasserdicht", "impermeable"),
        ("lightweight", "léger", "leicht", "ligero"),
        ("casual", "décontracté", "casual", "informal"),
        ("vintage", "vintage", "Vintage", "vintage"),
        ("floral", "fleuri", "geblümt", "de flores"),
        ("high waist", "taille haute", "High Waist", "tiro alto"),
        ("velvet", "velours", "Samt", "terciopelo"),
    )),
    "footwear": (0.85, "shoe", 70.0, (
        ("leather", "cuir", "Leder", "piel"),
        ("suede", "daim", "Wildleder", "ante"),
        ("canvas", "toile", "Canvas", "lona"),
        ("lace-up", "à lacets", "Schnür", "con cordones"),
        ("slip-on", "à enfiler", "Slipper", "sin cordones"),
        ("waterproof", "imperméable", "wasserdicht", "impermeable"),
        ("lined", "fourré", "gefüttert", "forrado"),
        ("chunky sole", "semelle épaisse", "Plateausohle", "suela gruesa"),
        ("low", "basse", "niedrig", "bajo"),
        ("high-top", "montante", "hoch", "caña alta"),
        ("block heel", "talon carré", "Blockabsatz", "tacón ancho"),
        ("vegan", "vegan", "vegan", "vegano"),
        ("memory foam", "mousse à mémoire", "Memory-Schaum", "espuma viscoelástica"),
        ("breathable", "respirant", "atmungsaktiv", "transpirable"),
        ("wide fit", "pied large", "weite Passform", "horma ancha"),
        ("cushioned", "amorti", "gedämpft", "amortiguado"),
        ("zip", "zippé", "Reißverschluss", "cremallera"),
        ("classic", "classique", "klassisch", "clásico"),
    )),
    "bags": (0.8, "dims", 55.0, (
        ("leather", "cuir", "Leder", "piel"),
        ("faux leather", "simili cuir", "Kunstleder", "polipiel"),
        ("canvas", "toile", "Canvas", "lona"),
        ("nylon", "nylon", "Nylon", "nailon"),
        ("quilted", "matelassé", "gesteppt", "acolchado"),
        ("mini", "mini", "Mini", "mini"),
        ("adjustable strap", "bandoulière réglable", "verstellbarer Riemen", "correa ajustable"),
        ("zip", "zippé", "mit Reißverschluss", "con cremallera"),
        ("woven", "tressé", "geflochten", "trenzado"),
        ("water-resistant", "déperlant", "wasserabweisend", "resistente al agua"),
        ("recycled", "recyclé", "recycelt", "reciclado"),
        ("vintage", "vintage", "Vintage", "vintage"),
        ("wool", "laine", "Wolle", "lana"),
        ("cotton", "coton", "Baumwolle", "algodón"),
    )),
    "jewellery": (0.6, "none", 90.0, (
        ("sterling silver", "argent 925", "Sterlingsilber", "plata de ley"),
        ("gold plated", "plaqué or", "vergoldet", "chapado en oro"),
        ("stainless steel", "acier inoxydable", "Edelstahl", "acero inoxidable"),
        ("rose gold", "or rose", "Roségold", "oro rosa"),
        ("pearl", "perle", "Perle", "perla"),
        ("crystal", "cristal", "Kristall", "cristal"),
        ("minimalist", "minimaliste", "minimalistisch", "minimalista"),
        ("adjustable", "ajustable", "verstellbar", "ajustable"),
        ("hypoallergenic", "hypoallergénique", "hypoallergen", "hipoalergénico"),
        ("automatic", "automatique", "Automatik", "automático"),
        ("chronograph", "chronographe", "Chronograph", "cronógrafo"),
        ("18k", "18 carats", "18 Karat", "18k"),
        ("engraved", "gravé", "graviert", "grabado"),
        ("leather strap", "bracelet cuir", "Lederarmband", "correa de piel"),
    )),
    "beauty": (0.3, "volume", 18.0, (
        ("vegan", "vegan", "vegan", "vegano"),
        ("organic", "bio", "Bio", "ecológico"),
        ("fragrance-free", "sans parfum", "parfümfrei", "sin perfume"),
        ("sensitive skin", "peaux sensibles", "empfindliche Haut", "piel sensible"),
        ("long-lasting", "longue tenue", "langanhaltend", "larga duración"),
        ("hydrating", "hydratant", "feuchtigkeitsspendend", "hidratante"),
        ("matte", "mat", "matt", "mate"),
        ("natural", "naturel", "natürlich", "natural"),
        ("travel size", "format voyage", "Reisegröße", "tamaño viaje"),
        ("refill", "recharge", "Nachfüllpack", "recarga"),
        ("hyaluronic acid", "acide hyaluronique", "Hyaluronsäure", "ácido hialurónico"),
        ("SPF 30", "SPF 30", "LSF 30", "SPF 30"),
        ("paraben-free", "sans parabènes", "parabenfrei", "sin parabenos"),
        ("nourishing", "nourrissant", "pflegend", "nutritivo"),
        ("argan oil", "huile d'argan", "Arganöl", "aceite de argán"),
    )),
    "health": (0.05, "count", 14.0, (
        ("sugar-free", "sans sucre", "zuckerfrei", "sin azúcar"),
        ("vegan", "vegan", "vegan", "vegano"),
        ("capsules", "gélules", "Kapseln", "cápsulas"),
        ("tablets", "comprimés", "Tabletten", "comprimidos"),
        ("high strength", "haute dose", "hochdosiert", "alta potencia"),
        ("natural", "naturel", "natürlich", "natural"),
        ("digital", "numérique", "digital", "digital"),
        ("rechargeable", "rechargeable", "wiederaufladbar", "recargable"),
        ("latex-free", "sans latex", "latexfrei", "sin látex"),
        ("sterile", "stérile", "steril", "estéril"),
        ("orthopaedic", "orthopédique", "orthopädisch", "ortopédico"),
        ("for adults", "adulte", "für Erwachsene", "adultos"),
    )),
    "home": (0.6, "dims", 30.0, (
        ("stainless steel", "inox", "Edelstahl", "acero inoxidable"),
        ("non-stick", "antiadhésif", "antihaft", "antiadherente"),
        ("ceramic", "céramique", "Keramik", "cerámica"),
        ("glass", "verre", "Glas", "vidrio"),
        ("cast iron", "fonte", "Gusseisen", "hierro fundido"),
        ("bamboo", "bambou", "Bambus", "bambú"),
        ("cotton", "coton", "Baumwolle", "algodón"),
        ("dishwasher safe", "passe au lave-vaisselle", "spülmaschinenfest",
         "apto para lavavajillas"),
        ("induction", "induction", "Induktion", "inducción"),
        ("set of 4", "lot de 4", "4er-Set", "set de 4"),
        ("Scandinavian", "scandinave", "skandinavisch", "escandinavo"),
        ("modern", "moderne", "modern", "moderno"),
        ("rustic", "rustique", "rustikal", "rústico"),
        ("stoneware", "grès", "Steinzeug", "gres"),
        ("velvet", "velours", "Samt", "terciopelo"),
        ("washable", "lavable", "waschbar", "lavable"),
        ("linen", "lin", "Leinen", "lino"),
        ("wooden", "en bois", "Holz", "de madera"),
    )),
    "furniture": (0.7, "dims", 240.0, (
        ("solid oak", "chêne massif", "Eiche massiv", "roble macizo"),
        ("pine", "pin", "Kiefer", "pino"),
        ("walnut", "noyer", "Nussbaum", "nogal"),
        ("metal", "métal", "Metall", "metal"),
        ("velvet", "velours", "Samt", "terciopelo"),
        ("upholstered", "rembourré", "gepolstert", "tapizado"),
        ("industrial", "industriel", "Industrie", "industrial"),
        ("Scandinavian", "scandinave", "skandinavisch", "escandinavo"),
        ("modern", "moderne", "modern", "moderno"),
        ("vintage", "vintage", "Vintage", "vintage"),
        ("foldable", "pliable", "klappbar", "plegable"),
        ("extendable", "extensible", "ausziehbar", "extensible"),
        ("with storage", "avec rangement", "mit Stauraum", "con almacenaje"),
        ("rattan", "rotin", "Rattan", "ratán"),
        ("2-seater", "2 places", "2-Sitzer", "2 plazas"),
        ("lacquered", "laqué", "lackiert", "lacado"),
        ("oak effect", "effet chêne", "Eiche-Optik", "efecto roble"),
    )),
    "electronics": (0.5, "storage", 120.0, (
        ("wireless", "sans fil", "kabellos", "inalámbrico"),
        ("Bluetooth", "Bluetooth", "Bluetooth", "Bluetooth"),
        ("USB-C", "USB-C", "USB-C", "USB-C"),
        ("4K", "4K", "4K", "4K"),
        ("HD", "HD", "HD", "HD"),
        ("smart", "connecté", "smart", "inteligente"),
        ("portable", "portable", "tragbar", "portátil"),
        ("rechargeable", "rechargeable", "wiederaufladbar", "recargable"),
        ("noise cancelling", "réduction de bruit", "Noise Cancelling", "cancelación de ruido"),
        ("fast charging", "charge rapide", "Schnellladen", "carga rápida"),
        ("waterproof", "étanche", "wasserdicht", "resistente al agua"),
        ("Wi-Fi", "Wi-Fi", "WLAN", "Wi-Fi"),
        ("gaming", "gaming", "Gaming", "gaming"),
        ("refurbished", "reconditionné", "generalüberholt", "reacondicionado"),
        ("dual SIM", "double SIM", "Dual-SIM", "dual SIM"),
    )),
    "appliances": (0.5, "power", 160.0, (
        ("energy class A", "classe A", "Energieklasse A", "clase A"),
        ("quiet", "silencieux", "leise", "silencioso"),
        ("digital", "numérique", "digital", "digital"),
        ("stainless steel", "inox", "Edelstahl", "acero inoxidable"),
        ("compact", "compact", "kompakt", "compacto"),
        ("programmable", "programmable", "programmierbar", "programable"),
        ("cordless", "sans fil", "kabellos", "sin cable"),
        ("with timer", "avec minuterie", "mit Timer", "con temporizador"),
        ("bagless", "sans sac", "beutellos", "sin bolsa"),
        ("freestanding", "pose libre", "freistehend", "libre instalación"),
        ("built-in", "encastrable", "Einbau", "integrable"),
        ("smart", "connecté", "smart", "inteligente"),
    )),
    "toys": (0.4, "pieces", 25.0, (
        ("wooden", "en bois", "Holz", "de madera"),
        ("educational", "éducatif", "Lern", "educativo"),
        ("plush", "peluche", "Plüsch", "peluche"),
        ("remote control", "télécommandé", "ferngesteuert", "teledirigido"),
        ("magnetic", "magnétique", "magnetisch", "magnético"),
        ("family", "familial", "Familien", "familiar"),
        ("creative", "créatif", "kreativ", "creativo"),
        ("interactive", "interactif", "interaktiv", "interactivo"),
        ("with sound", "sonore", "mit Sound", "con sonido"),
        ("collectible", "à collectionner", "Sammel", "coleccionable"),
        ("outdoor", "d'extérieur", "Outdoor", "de exterior"),
    )),
    "baby": (0.6, "baby", 30.0, (
        ("organic cotton", "coton bio", "Bio-Baumwolle", "algodón orgánico"),
        ("soft", "doux", "weich", "suave"),
        ("BPA-free", "sans BPA", "BPA-frei", "sin BPA"),
        ("newborn", "naissance", "Neugeborene", "recién nacido"),
        ("foldable", "pliable", "faltbar", "plegable"),
        ("lightweight", "léger", "leicht", "ligero"),
        ("convertible", "évolutif", "mitwachsend", "convertible"),
        ("hypoallergenic", "hypoallergénique", "hypoallergen", "hipoalergénico"),
        ("washable", "lavable", "waschbar", "lavable"),
    )),
    "sports": (0.7, "apparel", 45.0, (
        ("breathable", "respirant", "atmungsaktiv", "transpirable"),
        ("waterproof", "imperméable", "wasserdicht", "impermeable"),
        ("lightweight", "léger", "leicht", "ligero"),
        ("quick-dry", "séchage rapide", "schnelltrocknend", "secado rápido"),
        ("thermal", "thermique", "Thermo", "térmico"),
        ("reflective", "réfléchissant", "reflektierend", "reflectante"),
        ("foldable", "pliable", "faltbar", "plegable"),
        ("adjustable", "réglable", "verstellbar", "ajustable"),
        ("anti-slip", "antidérapant", "rutschfest", "antideslizante"),
        ("aluminium", "aluminium", "Aluminium", "aluminio"),
        ("carbon", "carbone", "Carbon", "carbono"),
        ("pro", "pro", "Pro", "pro"),
        ("trail", "trail", "Trail", "trail"),
        ("training", "entraînement", "Training", "entrenamiento"),
    )),
    "pet": (0.4, "weight", 22.0, (
        ("grain-free", "sans céréales", "getreidefrei", "sin cereales"),
        ("washable", "lavable", "waschbar", "lavable"),
        ("orthopaedic", "orthopédique", "orthopädisch", "ortopédico"),
        ("adjustable", "réglable", "verstellbar", "ajustable"),
        ("natural", "naturel", "natürlich", "natural"),
        ("chicken", "poulet", "Huhn", "pollo"),
        ("salmon", "saumon", "Lachs", "salmón"),
        ("durable", "résistant", "robust", "resistente"),
        ("non-slip", "antidérapant", "rutschfest", "antideslizante"),
        ("plush", "peluche", "Plüsch", "peluche"),
        ("stainless steel", "inox", "Edelstahl", "acero inoxidable"),
        ("senior", "senior", "Senior", "senior"),
    )),
    "garden": (0.3, "power", 60.0, (
        ("cordless", "sans fil", "Akku", "inalámbrico"),
        ("18V", "18V", "18V", "18V"),
        ("brushless", "sans charbon", "bürstenlos", "sin escobillas"),
        ("stainless steel", "inox", "Edelstahl", "acero inoxidable"),
        ("galvanised", "galvanisé", "verzinkt", "galvanizado"),
        ("weatherproof", "résistant aux intempéries", "wetterfest", "resistente a la intemperie"),
        ("solar", "solaire", "Solar", "solar"),
        ("wooden", "en bois", "Holz", "de madera"),
        ("heavy duty", "usage intensif", "Profi", "uso intensivo"),
        ("with battery", "avec batterie", "mit Akku", "con batería"),
        ("ergonomic", "ergonomique", "ergonomisch", "ergonómico"),
        ("50 m", "50 m", "50 m", "50 m"),
    )),
    "food": (0.0, "weight", 6.0, (
        ("organic", "bio", "Bio", "ecológico"),
        ("gluten-free", "sans gluten", "glutenfrei", "sin gluten"),
        ("vegan", "vegan", "vegan", "vegano"),
        ("sugar-free", "sans sucre", "zuckerfrei", "sin azúcar"),
        ("fair trade", "commerce équitable", "fair gehandelt", "comercio justo"),
        ("intense", "intense", "intensiv", "intenso"),
        ("family pack", "format familial", "Familienpackung", "pack familiar"),
        ("smoked", "fumé", "geräuchert", "ahumado"),
        ("spicy", "épicé", "scharf", "picante"),
        ("aged", "affiné", "gereift", "curado"),
        ("traditional", "traditionnel", "traditionell", "tradicional"),
        ("wholegrain", "complet", "Vollkorn", "integral"),
    )),
    "books": (0.0, "none", 16.0, (
        ("paperback", "broché", "Taschenbuch", "tapa blanda"),
        ("hardcover", "relié", "gebunden", "tapa dura"),
        ("illustrated", "illustré", "illustriert", "ilustrado"),
        ("new edition", "nouvelle édition", "Neuauflage", "nueva edición"),
        ("collector's edition", "édition collector", "Sammleredition", "edición coleccionista"),
        ("box set", "coffret", "Box-Set", "estuche"),
        ("remastered", "remasterisé", "remastered", "remasterizado"),
        ("bilingual", "bilingue", "zweisprachig", "bilingüe"),
        ("volume 2", "tome 2", "Band 2", "volumen 2"),
        ("signed", "dédicacé", "signiert", "firmado"),
    )),
    "office": (0.4, "pack", 9.0, (
        ("A4", "A4", "A4", "A4"),
        ("lined", "ligné", "liniert", "rayado"),
        ("recycled", "recyclé", "recycelt", "reciclado"),
        ("refillable", "rechargeable", "nachfüllbar", "recargable"),
        ("ergonomic", "ergonomique", "ergonomisch", "ergonómico"),
        ("metal", "métal", "Metall", "metal"),
        ("cardboard", "carton", "Karton", "cartón"),
        ("black ink", "encre noire", "schwarze Tinte", "tinta negra"),
        ("magnetic", "magnétique", "magnetisch", "magnético"),
        ("squared", "quadrillé", "kariert", "cuadriculado"),
    )),
    "automotive": (0.2, "volume", 35.0, (
        ("universal", "universel", "universal", "universal"),
        ("12V", "12V", "12V", "12V"),
        ("LED", "LED", "LED", "LED"),
        ("waterproof", "étanche", "wasserdicht", "impermeable"),
        ("heavy duty", "renforcé", "robust", "reforzado"),
        ("synthetic", "synthétique", "synthetisch", "sintético"),
        ("5W-30", "5W-30", "5W-30", "5W-30"),
        ("all-season", "toutes saisons", "Ganzjahres", "todas las estaciones"),
        ("for cars", "pour voiture", "fürs Auto", "para coche"),
        ("quick fit", "montage rapide", "Schnellmontage", "montaje rápido"),
    )),
    "tobacco": (0.1, "volume", 12.0, (
        ("nicotine-free", "sans nicotine", "nikotinfrei", "sin nicotina"),
        ("12 mg", "12 mg", "12 mg", "12 mg"),
        ("menthol", "menthol", "Menthol", "mentol"),
        ("refillable", "rechargeable", "nachfüllbar", "recargable"),
        ("slim", "slim", "Slim", "slim"),
        ("mint", "menthe", "Minze", "menta"),
        ("tobacco flavour", "saveur tabac", "Tabakgeschmack", "sabor tabaco"),
        ("pack of 5", "lot de 5", "5er-Pack", "pack de 5"),
    )),
    "generic": (0.3, "none", 25.0, ()),
}

# English department-name fragments → profile key; first match wins.
_PROFILE_MATCH: tuple[tuple[str, str], ...] = (
    ("footwear", "footwear"), ("shoe", "footwear"),
    ("apparel", "apparel"), ("cloth", "apparel"), ("fashion", "apparel"),
    ("bag", "bags"), ("accessor", "bags"), ("luggage", "bags"),
    ("jewel", "jewellery"), ("watch", "jewellery"),
    ("beauty", "beauty"), ("personal care", "beauty"),
    ("health", "health"), ("pharma", "health"),
    ("furniture", "furniture"),
    ("appliance", "appliances"),
    ("electronic", "electronics"), ("computer", "electronics"), ("phone", "electronics"),
    ("toy", "toys"), ("game", "toys"),
    ("baby", "baby"), ("nursery", "baby"),
    ("sport", "sports"), ("outdoor", "sports"),
    ("pet", "pet"),
    ("garden", "garden"), ("diy", "garden"),
    ("food", "food"), ("drink", "food"), ("grocer", "food"),
    ("book", "books"), ("media", "books"), ("music", "books"),
    ("office", "office"), ("stationery", "office"),
    ("auto", "automotive"), ("car ", "automotive"), ("vehicle", "automotive"),
    ("tobacco", "tobacco"), ("vap", "tobacco"),
    ("home", "home"), ("kitchen", "home"),
)


# The shared tree's departments by id, so that renaming a department never changes how its
# demo products look.
_PROFILE_BY_DEPARTMENT: dict[str, str] = {
    "1000": "apparel", "1500": "footwear", "2000": "bags", "2500": "jewellery",
    "3000": "beauty", "3500": "health", "4000": "home", "4500": "furniture",
    "5000": "electronics", "5500": "electronics", "6000": "sports", "6500": "toys",
    "7000": "pet", "7500": "garden", "8000": "food", "8500": "books", "9000": "office",
    "9500": "automotive", "10000": "tobacco",
}


def profile_for(department_name: str, department_id: str | None = None) -> Profile:
    """Return the modifier profile of a department: by its id in the shared tree, else matched
    on its English name.

    Args:
        department_name: the department's display name, e.g. "Cooking and home living".
        department_id: its id; a department of the shared tree is known by id.

    Returns:
        The matching :class:`Profile`; departments nothing matches get a generic one.
    """
    low = department_name.lower() + " "
    key = _PROFILE_BY_DEPARTMENT.get(department_id or "") or next(
        (k for frag, k in _PROFILE_MATCH if frag in low), "generic"
    )
    colour_p, size_kind, price, mods = _PROFILE_DATA[key]
    return Profile(key, colour_p, size_kind, price, mods + _COMMON_MODS)


FILLER: dict[str, tuple[str, ...]] = {
    "en": ("NEW!", "Best seller", "-30%", "SALE", "Top rated", "Free delivery", "Limited edition",
           "Online exclusive", "HOT", "Back again", "2 for 1", "Gift idea", "-15%"),
    "fr": ("NOUVEAU", "Promo", "-20%", "Meilleure vente", "Livraison offerte", "Exclusivité web",
           "Prix choc", "Édition limitée", "-40%"),
    "de": ("NEU", "Bestseller", "-25%", "Sale", "Gratis Versand", "Top-Angebot", "Aktion",
           "Limitierte Edition", "-50%"),
    "es": ("NUEVO", "Oferta", "-40%", "Más vendido", "Envío gratis", "Edición limitada",
           "Chollo", "-10%"),
}
EMOJI = ("🔥", "✨", "⭐", "💥", "🎁", "✅", "👍", "❤️")

VAGUE_CATEGORIES: dict[str, tuple[str, ...]] = {
    "en": ("Sale", "New in", "Gifts", "Clearance", "Offers", "Trending now", "Last chance",
           "Gift ideas", "Weekly deals"),
    "fr": ("Soldes", "Nouveautés", "Idées cadeaux", "Promotions", "Bons plans", "Déstockage"),
    "de": ("Sale", "Neuheiten", "Geschenkideen", "Angebote", "Restposten", "Aktionen"),
    "es": ("Rebajas", "Novedades", "Regalos", "Ofertas", "Outlet", "Última oportunidad"),
}

AVAILABILITY_WORDS: dict[str, tuple[str, ...]] = {
    "en": ("available", "available", "available", "ships in 2-3 days", "low stock", "sold out",
           "coming soon", "yes", "limited"),
    "fr": ("disponible", "disponible", "disponible", "expédié sous 48h", "stock limité", "épuisé",
           "bientôt disponible"),
    "de": ("lieferbar", "lieferbar", "sofort lieferbar", "nur noch wenige", "ausverkauft",
           "demnächst"),
    "es": ("disponible", "disponible", "envío en 24h", "últimas unidades", "agotado",
           "próximamente"),
}

CONNECTORS: dict[str, tuple[str, ...]] = {
    "en": ("with", "+", "incl.", "& matching", "and"),
    "fr": ("avec", "+", "et", "assorti"),
    "de": ("mit", "+", "inkl.", "und"),
    "es": ("con", "+", "y", "incl."),
}

DESCRIPTION_OPENERS: dict[str, tuple[str, ...]] = {
    "en": ("Discover our {term}.", "A {mod} {term} for everyday use.",
           "This {term} is made to last.",
           "Our best-loved {term}, now in new colours.", "The {term} you have been waiting for.",
           "Everyday {term} with a {mod} finish."),
    "fr": ("Découvrez notre {term}.", "Un(e) {term} {mod} pour tous les jours.",
           "Ce modèle de {term} est fait pour durer.",
           "Notre {term} préféré, en nouvelles couleurs."),
    "de": ("Entdecken Sie unser {term}.", "{term} in {mod} Ausführung für jeden Tag.",
           "Dieses {term} ist gemacht, um zu halten.", "Unser beliebtes {term} in neuen Farben."),
    "es": ("Descubre nuestro {term}.", "Un {term} {mod} para el día a día.",
           "Este {term} está hecho para durar.", "Nuestro {term} favorito, en nuevos colores."),
}
DESCRIPTION_EXTRAS: dict[str, tuple[str, ...]] = {
    "en": ("Colour: {colour}.", "Size: {size}.", "Easy care.", "Delivered in 2-4 working days.",
           "Free returns within 30 days.", "Material: {mod}.", "Designed by {brand}.",
           "Please note colours may vary slightly on screen."),
    "fr": ("Couleur : {colour}.", "Taille : {size}.", "Entretien facile.",
           "Livraison en 48h.", "Retour gratuit sous 30 jours.", "Matière : {mod}.",
           "Une création {brand}."),
    "de": ("Farbe: {colour}.", "Größe: {size}.", "Pflegeleicht.", "Lieferung in 2-4 Werktagen.",
           "Kostenlose Rücksendung.", "Material: {mod}.", "Von {brand}."),
    "es": ("Color: {colour}.", "Talla: {size}.", "Fácil cuidado.", "Entrega en 24/48h.",
           "Devolución gratuita.", "Material: {mod}.", "Diseñado por {brand}."),
}
