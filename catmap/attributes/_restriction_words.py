"""Word lists of the restriction reader, in seven languages (en fr de es it nl pt).

Written as they are spelt; :mod:`catmap.attributes.restriction` folds them (case, accents)
and adds the plural forms of one-word entries. Common practice, no source: the lists name
restricted goods as shops and product titles call them, and the words around them that make
a product something else (its scent, colour or shape, an accessory, a kitchen tool).
"""

from __future__ import annotations

# -- the restricted goods ------------------------------------------------------------------

ALCOHOL = (
    # drinks in general
    "alcohol", "alcoholic", "alcoholic drink", "alcoholic beverage", "spirits", "liquor",
    "alcool", "spiritueux", "boisson alcoolisee", "eau de vie", "eaux de vie",
    "alkohol", "spirituose", "spirituosen", "alkoholisches getrank", "destillat", "edelbrand",
    "bebida alcoholica", "bebidas alcoholicas", "licores", "destilado", "aguardiente",
    "superalcolico", "superalcolici", "alcolico", "alcolici", "distillato", "bevanda alcolica",
    "sterke drank", "alcoholische drank", "gedistilleerd",
    "bebida alcoolica", "bebidas alcoolicas", "destilado", "aguardente",
    # wine, its styles and its grapes
    "wine", "red wine", "white wine", "rose wine", "sparkling wine", "dessert wine",
    "fortified wine", "mulled wine", "port wine", "table wine",
    "vin", "vin rouge", "vin blanc", "vin rose", "vin mousseux", "vin petillant", "vin doux",
    "vin chaud", "cremant", "champagne", "champagnes",
    "wein", "rotwein", "weisswein", "roseewein", "schaumwein", "perlwein", "sekt", "gluhwein",
    "vino", "vino tinto", "vino blanco", "vino rosado", "vino espumoso", "cava", "champan",
    "vino rosso", "vino bianco", "vino rosato", "vino frizzante", "spumante", "vin brule",
    "wijn", "rode wijn", "witte wijn", "rose wijn", "mousserende wijn", "dessertwijn",
    "vinho", "vinho tinto", "vinho branco", "vinho rose", "vinho verde", "vinho do porto",
    "espumante", "champanhe", "moscatel",
    "prosecco", "franciacorta", "lambrusco", "sangria", "vermouth", "vermut", "wermut",
    "vermute", "sherry", "jerez", "oloroso", "amontillado", "madeira wine", "marsala wine",
    "porto tawny", "tawny port", "ruby port", "ginjinha", "ginja de obidos", "moscato", "retsina",
    "tokaji", "sauternes", "riesling", "merlot", "cabernet", "cabernet sauvignon",
    "sauvignon blanc", "chardonnay", "pinot noir", "pinot grigio", "pinot gris", "pinot blanc",
    "syrah", "shiraz", "malbec", "tempranillo", "garnacha", "grenache", "sangiovese",
    "nebbiolo", "primitivo", "zinfandel", "albarino", "alvarinho", "verdejo", "gewurztraminer",
    "gruner veltliner", "viognier", "carmenere", "montepulciano", "vermentino", "dornfelder",
    "spatburgunder", "grauburgunder", "weissburgunder", "silvaner", "muller thurgau",
    "barbera", "dolcetto", "aglianico", "nero d avola", "touriga nacional", "monastrell",
    "godello", "verdicchio", "falanghina", "chenin blanc", "pinotage", "rioja", "ribera del duero",
    "chianti", "barolo", "barbaresco", "brunello", "amarone", "valpolicella", "bardolino",
    "chablis", "beaujolais", "sancerre", "muscadet", "cotes du rhone", "chateauneuf du pape",
    "crianza", "brut nature", "extra brut", "brut rose", "spatlese", "auslese", "eiswein",
    # beer and cider
    "beer", "beers", "craft beer", "ale", "pale ale", "brown ale", "amber ale", "red ale",
    "blonde ale", "scotch ale", "vin de table", "vino da tavola", "vino de mesa",
    "vinho de mesa", "india pale ale", "ipa", "lager",
    "pilsner", "pilsener", "pils", "stout beer", "imperial stout", "oatmeal stout",
    "milk stout", "porter beer", "wheat beer", "lambic", "gueuze", "geuze", "kriek",
    "trappist", "trappistenbier", "abdijbier", "abbey beer", "biere d abbaye", "bock",
    "doppelbock", "kolsch", "radler", "shandy",
    "biere", "bieres", "biere blonde", "biere brune", "biere ambree",
    "bier", "weissbier", "hefeweizen", "weizenbier", "altbier", "starkbier", "bockbier",
    "cerveza", "cervezas", "birra", "birre", "bier", "cerveja", "cervejas",
    "cider", "cidre", "apfelwein", "sidra", "sidro", "perry", "poire", "hard seltzer", "mead",
    "hydromel", "hidromiel", "idromele", "mede",
    # spirits
    "whisky", "whiskey", "whiskies", "single malt", "blended malt", "blended whisky",
    "scotch whisky", "bourbon", "bourbon whiskey", "rye whiskey", "vodka", "wodka", "gin",
    "dry gin", "london dry", "sloe gin", "ginebra", "genebra", "gin tonico", "genever", "jenever",
    "rum", "rhum", "ron",
    "rum agricole", "cachaca", "tequila", "mezcal", "brandy", "cognac", "armagnac",
    "calvados", "grappa", "orujo", "bagaceira", "obstler", "obstbrand", "schnaps", "schnapps",
    "doppelkorn", "kornbrand", "kirschwasser", "williamsbirne", "slivovitz", "sliwowitz",
    "rakija", "rakia", "palinka", "tsipouro", "ouzo", "raki", "arak", "pastis", "absinthe",
    "absinth", "assenzio", "absinto", "sambuca", "limoncello", "amaretto", "liqueur",
    "liqueurs", "likor", "likore", "licor", "liquore", "liquori", "likeur", "licor de",
    "advocaat", "eierlikor", "eggnog liqueur", "triple sec", "pacharan", "ratafia", "amaro",
    "amari", "anisette", "anis del", "anis seco", "anis dulce", "aquavit", "akvavit", "pisco",
    "soju", "sake", "shochu",
    "baijiu", "weinbrand", "tresterbrand", "marc de bourgogne", "poire williams",
    "grappa", "digestif", "kruidenbitter", "beerenburg", "bitter liqueur", "cream liqueur",
    "chocolate liqueur", "coffee liqueur", "herbal liqueur", "liqueur au chocolat",
    "schokoladenlikor", "licor de chocolate", "liquore al cioccolato", "licor beirao",
    "gin tonic", "gin and tonic", "alcopop", "premix", "conac", "champana", "bagaco",
    "korn", "porto", "pineau", "floc de gascogne", "kir royal", "creme de cassis",
    "creme de menthe", "genepi", "federweisser", "weinschorle", "tinto de verano", "txakoli",
    "mencia", "vin santo", "vinsanto", "passito", "negroamaro", "brachetto", "nocino",
    "medronho", "poncha", "trollinger", "lemberger", "licor de cafe", "liqueur de cafe",
    "liquore al caffe", "licor de hierbas", "crema de orujo", "anejo", "reposado",
)

TOBACCO = (
    "tobacco", "rolling tobacco", "pipe tobacco", "tobacco for pipe", "tabac pour pipe",
    "shisha tobacco", "hookah tobacco",
    "chewing tobacco", "snuff", "snus", "heated tobacco", "tobacco sticks", "cigar", "cigars",
    "cigarillo", "cigarillos", "cigarette", "cigarettes", "e cigarette", "e cigarettes",
    "electronic cigarette", "e cig", "ecig", "vape", "vapes", "vaping", "vape pen",
    "vape kit", "vape juice", "disposable vape", "pod kit", "pod system", "e liquid",
    "e liquids", "eliquid", "shortfill", "nic salt", "nicotine", "nicotine salt",
    "tabac", "tabac a rouler", "tabac a pipe", "tabac a chicha", "tabac a narguile",
    "tabac a priser", "cigare", "cigares", "cigarette electronique", "e liquide",
    "e liquides", "vapoteuse", "puff jetable", "vape jetable", "sel de nicotine",
    "tabak", "drehtabak", "pfeifentabak", "shishatabak", "wasserpfeifentabak", "kautabak",
    "schnupftabak", "zigarre", "zigarren", "zigarillo", "zigarillos", "zigarette",
    "zigaretten", "e zigarette", "e zigaretten", "einweg vape", "liquid nikotin",
    "nikotin", "nikotinsalz", "nikotinliquid", "dampfer starterset",
    "tabaco", "tabaco de liar", "tabaco para pipa", "tabaco de pipa", "tabaco de cachimba",
    "picadura", "puros", "puro habano", "puros habanos", "caja de puros", "cigarro puro",
    "cigarrillo", "cigarrillos", "cigarrillo electronico", "vapeador", "vapeadores",
    "e liquido", "e liquidos", "nicotina", "sales de nicotina", "vaper",
    "tabacco", "tabacco da pipa", "tabacco trinciato", "trinciato", "tabacco per narghile",
    "sigaro", "sigari", "sigaretta", "sigarette", "sigaretta elettronica", "svapo",
    "sigaretta usa e getta", "sali di nicotina", "liquido per sigaretta elettronica",
    "sigaar", "sigaren", "sigaret", "sigaretten", "e sigaret", "e sigaretten", "shag",
    "rooktabak", "pijptabak", "waterpijptabak", "shagtabak", "sigarillo", "sigarillos",
    "wegwerp vape", "nicotinezout",
    "charuto", "charutos", "cigarro", "cigarros", "cigarro eletronico", "tabaco de enrolar",
    "tabaco para cachimbo", "tabaco de narguile", "cigarrilho", "cigarrilhos",
    "vape descartavel", "e liquida", "sais de nicotina",
    "tabac a macher", "tabaco de mascar", "tabacco da masticare", "pruimtabak",
    "puro dominicano", "puro cubano", "puro robusto", "puro corona", "nicotine pouches",
    "nicotine pods", "pods nicotine",
    "nikotinbeutel",
    "tabakerhitzer", "tobacco heater", "heat not burn", "e shisha", "e hookah", "kit pod",
    "rookwaren", "tabakwaren",
    "salt nic", "salt nics", "nic salts", "nic shot", "nic shots", "nicotine shot",
    "nikotin shot", "nikotinshot", "nikotinhaltig", "nikotinhaltiges", "nikotinhaltige",
    "nicotine booster", "booster de nicotine", "purito", "puritos",
    "cigarrilha", "cigarrilhas", "tabac a chiquer", "chique", "bidi",
    # cuts of rolling and pipe tobacco, which name the tobacco on their own
    "fine cut", "fine cut tobacco", "ready rubbed", "feinschnitt", "feinschnitttabak",
    "volumentabak", "stopftabak", "halfzware", "halfzware shag", "zware shag", "kerftabak",
    "tabac coupe fine", "tabac fine coupe", "picadura fina", "tabaco picado",
    "tabaco de corte fino", "trinciato fine", "trinciato per sigarette", "tabacco trinciato fine",
    "tabaco de corte", "tabaco para enrolar", "tabaco de enrolar fino", "navy cut", "flake tobacco",
    "bidis", "kretek",
)

WEAPONS = (
    "knife", "knives", "hunting knife", "pocket knife", "folding knife", "survival knife",
    "tactical knife", "combat knife", "throwing knife", "butterfly knife", "bowie knife",
    "fixed blade knife", "switchblade", "flick knife", "karambit", "balisong", "kukri",
    "machete", "dagger", "stiletto knife", "bayonet", "sword", "katana", "sabre", "saber",
    "rapier", "scimitar", "sable japones", "sable samurai", "sable de caballeria", "longsword",
    "wakizashi", "tanto knife", "crossbow", "compound bow",
    "recurve bow", "longbow", "bow and arrow", "hunting bow", "air rifle", "airgun",
    "air gun", "air pistol", "bb gun", "pellet gun", "airsoft", "airsoft gun", "blank gun",
    "stun gun", "taser", "pepper spray", "pepper spray keyring", "pepper spray key ring",
    "bombe lacrymogene porte cles", "pfefferspray schlusselanhanger",
    "spray de pimienta llavero", "spray al peperoncino portachiavi",
    "pepperspray sleutelhanger", "spray de pimenta porta chaves", "slingshot", "catapult",
    "brass knuckles",
    "knuckle duster", "nunchaku", "nunchucks", "throwing star", "shuriken", "telescopic baton",
    "expandable baton", "spear gun", "speargun", "tomahawk", "throwing axe", "battle axe",
    "couteau", "couteaux", "couteau de chasse", "couteau de poche", "couteau pliant",
    "couteau de survie", "couteau tactique", "couteau papillon", "couteau a cran",
    "cran d arret", "arbalete", "carabine", "carabine a plomb", "pistolet a plomb",
    "pistolet a air comprime", "pistolet a billes", "pistolet d alarme", "poignard", "dague",
    "epee", "sabre", "machette", "lance pierre", "bombe lacrymogene", "matraque",
    "arc a poulies", "arc recurve", "arc de chasse", "poing americain",
    "coup de poing americain", "shocker",
    "messer", "taschenmesser", "jagdmesser", "klappmesser", "springmesser", "kampfmesser",
    "wurfmesser", "butterflymesser", "fahrtenmesser", "survivalmesser", "outdoormesser",
    "einhandmesser", "armbrust", "luftgewehr", "luftpistole", "luftdruckpistole",
    "luftdruckgewehr", "schreckschusspistole", "gaspistole", "softair", "dolch", "schwert",
    "sabel", "pfefferspray", "abwehrspray", "steinschleuder", "zwille", "jagdwaffe",
    "schlagring", "teleskopschlagstock", "elektroschocker", "pfeil und bogen", "compoundbogen",
    "recurvebogen", "langbogen",
    "cuchillo", "cuchillos", "cuchillo de caza", "cuchillo de monte", "cuchillo tactico",
    "cuchillo de supervivencia", "cuchillo mariposa", "navaja", "navajas", "ballesta",
    "rifle de aire", "escopeta de aire", "carabina de aire", "pistola de aire",
    "pistola de aire comprimido", "pistola de balines", "daga", "espada", "machete",
    "spray de pimienta", "tirachinas", "punal", "arco de caza", "arco compuesto",
    "arco recurvo", "puno americano",
    "coltello", "coltelli", "coltello da caccia", "coltello a serramanico",
    "coltello tattico", "coltello a farfalla", "coltello da sopravvivenza",
    "coltello pieghevole", "balestra", "fucile ad aria compressa", "carabina ad aria compressa",
    "pistola ad aria compressa", "pistola softair", "pugnale", "spada", "sciabola",
    "spray al peperoncino", "fionda", "machete", "tirapugni", "arco compound",
    "arco ricurvo", "manganello",
    "jachtmes", "zakmes", "vlindermes", "survivalmes", "gevechtsmes", "werpmes", "springmes",
    "vouwmes", "kruisboog", "luchtbuks", "luchtpistool", "luchtgeweer", "dolk", "zwaard",
    "sabel", "pepperspray", "katapult", "boksbeugel", "handboog", "compoundboog",
    "recurveboog", "wapenstok",
    "faca", "facas", "faca de caca", "faca tatica", "faca de sobrevivencia", "faca borboleta",
    "faca dobravel", "canivete", "canivetes", "canivete de bolso", "faca de bolso",
    "espingarda de pressao", "carabina de pressao",
    "pistola de pressao", "pistola de pressao de ar", "punhal", "espada", "sabre",
    "spray de pimenta", "fisga", "besta", "besta de caca", "soqueira", "arco composto",
    "cassetete",
    "army knife", "coltellino", "coltellini", "bajonett", "schlagstock", "blowgun",
    "sarbacane", "blasrohr", "cerbatana", "cerbottana", "blaaspijp", "zarabatana",
    "harpoon gun", "fusil harpon", "fusil de chasse sous marine", "harpune", "arpon",
    "fucile subacqueo", "harpoen", "arpao", "ammunition", "ammo", "munitions", "munition",
    "municion", "munizioni", "munitie", "municao", "municoes", "munizione", "munities",
    "diabolos", "balines", "piombini",
    "chumbinhos", "airgun pellets", "air rifle pellets",
    "kunai", "tonfa", "kubotan", "wurfstern",
    "fusil", "fusil de chasse", "shotgun", "rifle", "hunting rifle", "escopeta",
    "rifle de caza", "fucile", "fucile da caccia", "espingarda", "carabina", "revolver",
    "pistol", "pistolet", "pistola", "pistool", "coltello a scatto",
    "defensa extensible", "antiagression", "spray antiagression",
    "fixed blade", "lame fixe", "feststehende klinge", "hoja fija", "lama fissa",
    "vast lemmet", "lamina fixa", "parang", "golok", "degen", "streitaxt", "wurfbeil",
    "ascia da lancio", "hacha arrojadiza", "hache de lancer", "werpbijl",
    "machado de arremesso", "stroomstootwapen", "arma de choque", "facao", "catana",
    "adaga", "navalha", "baionetta", "bajonet", "baionnette", "bayoneta", "baioneta",
    "scimitarra", "fronde",
    "arme a feu", "armes a feu", "armes", "arme blanche", "armes de chasse", "waffe", "waffen",
    "arma", "armas", "armi", "wapen", "wapens", "arc classique", "arc de tir", "arc compound",
    "carreaux d arbalete", "luftgewehrkugeln", "bombe antiagression", "arco e flecha",
    "arco y flecha", "arc et fleche", "porra extensible", "baston extensible",
    "bastone telescopico", "bastao extensivel", "blowpipe",
    "spray de defense", "bombe au poivre", "gaz lacrymogene", "spray de defensa",
    "spray antiaggressione", "spray de defesa", "arco y flechas", "arco e frecce",
    "arc et fleches", "pijl en boog", "arco e flechas", "bow and arrows",
)

ADULT = (
    "adult toy", "adult toys", "adults only", "for adults only", "18+ only", "sex toy",
    "sex toys", "sex game", "sex dice", "sex swing", "vibrator", "vibrators", "dildo",
    "dildos", "butt plug", "anal plug", "anal beads", "cock ring", "penis ring", "strap on",
    "masturbator", "bondage", "bdsm", "fetish", "nipple clamps", "love eggs", "clitoral",
    "g spot", "erotic", "erotica", "porn", "pornographic", "kamasutra", "kama sutra",
    "vibromasseur", "vibromasseurs", "godemichet", "godemiche", "gode", "plug anal",
    "boules de geisha", "anneau penien", "masturbateur", "stimulateur clitoridien",
    "jouet sexuel", "jouets sexuels", "sextoy", "sextoys", "coquin", "coquine", "fetiche",
    "menottes erotiques", "point g",
    "sexspielzeug", "liebeskugeln", "penisring", "analplug", "vibratoren", "fesselset",
    "juguete sexual", "juguetes sexuales", "vibrador", "vibradores", "consolador",
    "bolas chinas", "anillo vibrador", "anillo para el pene", "succionador",
    "giocattolo erotico", "giocattoli erotici", "giocattolo sessuale", "sex toy",
    "vibratore", "vibratori", "solo adulti", "palline vaginali", "anello fallico",
    "seksspeeltje", "seksspeeltjes", "erotisch", "liefdesballetjes", "penisring",
    "brinquedo sexual", "brinquedos sexuais", "bolas de gueixa", "anel peniano",
    "so para adultos", "apenas para adultos", "nur fur erwachsene", "reserve aux adultes",
    "solo para adultos", "alleen voor volwassenen",
    "penis", "penien", "penienne", "peniano", "penis pump", "pompe a penis", "penispumpe",
    "masturbador", "masturbatore", "clitoridien", "klitoris", "clitoris", "clitoride",
    "prostate massager", "masseur prostatique", "prostatamassager", "sex swing",
    "balancoire sexuelle", "sexschaukel", "liebesschaukel", "columpio sexual",
    "altalena sessuale", "seksschommel", "gleitgel", "glijmiddel", "lubrifiant intime",
    "lubricante intimo", "lubrificante intimo", "personal lubricant", "intimate lubricant",
    "vibrating egg", "oeuf vibrant", "oeufs vibrants", "vibro ei", "huevo vibrador",
    "ovetto vibrante", "vibrerend eitje", "ovo vibratorio", "porno", "adult film",
    "adult dvd", "film pour adultes", "erwachsenenfilm", "pelicula para adultos",
    "film per adulti", "film voor volwassenen", "filme adulto", "sex shop", "sexshop",
    "handcuffs", "fluffy handcuffs", "menottes", "handschellen", "handboeien", "algemas",
    "sex doll", "love doll", "poupee sexuelle", "sexpuppe", "liebespuppe", "muneca sexual",
    "bambola sessuale", "sekspop", "boneca sexual",
    "sex", "sexual", "sexuales", "sexuel", "sexuelle", "sexuels", "sexuell", "sexuelles",
    "sessuale", "sessuali", "seksueel", "seksuele", "sexuais", "cockring", "strapon",
    "gleitmittel", "striptease", "shibari", "fesseln", "fetisch", "feticcio", "flogger",
    "nippelklemmen", "pinces a tetons", "pinzas para pezones", "mollette per capezzoli",
    "tepelklemmen", "grampos para mamilos", "kegel balls",
    "reizwasche", "crotchless", "love toy", "liebesspielzeug", "toy for adults",
    "jouet pour adultes", "spielzeug fur erwachsene", "juguete para adultos",
    "giocattolo per adulti", "speeltje voor volwassenen", "brinquedo para adultos",
    "bullet vibe", "plug anale", "anaalplug", "anaalplugs",
    "gel lubrifiant", "lubricant gel", "gel lubricante", "gel lubrificante", "glijgel",
)

MEDICINE = (
    "medicine", "medicines", "medication", "painkiller", "painkillers", "pain relief tablets",
    "analgesic", "antipyretic", "antihistamine", "antihistamines", "antacid", "laxative",
    "decongestant", "decongestants", "nasal decongestant", "expectorant", "cough syrup",
    "cough medicine", "antibiotic",
    "antibiotics", "antifungal cream", "nicotine patch", "nicotine patches", "nicotine gum",
    "nicotine lozenges", "nicotine spray", "morning after pill", "contraceptive pill",
    "medicament", "medicaments", "antalgique", "analgesique", "antipyretique", "antiacide",
    "laxatif", "decongestionnant", "decongestionante", "decongestionanti", "abschwellend",
    "abschwellendes", "abschwellende", "decongestivum", "neusdecongestivum", "decongestief",
    "descongestivo", "descongestionante nasal", "expectorant", "sirop contre la toux",
    "antibiotique",
    "patch nicotine", "patchs nicotine", "gomme a la nicotine", "pilule du lendemain",
    "arzneimittel", "medikament", "medikamente", "schmerzmittel", "schmerztabletten",
    "kopfschmerztabletten", "hustensaft", "hustensirup", "hustenloser", "antibiotikum",
    "abfuhrmittel", "nikotinpflaster", "nikotinkaugummi", "erkaltungsmittel",
    "medicamento", "medicamentos", "analgesico", "antigripal", "antiacido", "laxante",
    "descongestionante", "jarabe para la tos", "antibiotico", "parche de nicotina",
    "chicles de nicotina",
    "farmaco", "farmaci", "medicinale", "medicinali", "antidolorifico", "antipiretico",
    "antinfiammatorio", "lassativo", "sciroppo per la tosse", "cerotto alla nicotina",
    "gomme alla nicotina", "tachipirina",
    "geneesmiddel", "geneesmiddelen", "medicijn", "medicijnen", "pijnstiller", "pijnstillers",
    "hoestdrank", "hoestsiroop", "laxeermiddel", "maagzuurremmer", "nicotinepleister",
    "nicotinekauwgom",
    "antigripal", "xarope para a tosse", "adesivo de nicotina", "pastilhas de nicotina",
    "remedio para a tosse",
    "antidouleur", "anti douleur", "mucolitico", "mucolytique", "mukolytikum", "mucolytisch",
    "sleep aid", "aide au sommeil", "ayuda para dormir", "sonnifero", "slaapmiddel",
    # active ingredients (international non-proprietary names and their local spellings)
    "paracetamol", "paracetamolo", "acetaminophen", "ibuprofen", "ibuprofene", "ibuprofeno",
    "aspirin", "aspirine", "aspirina", "acetylsalicylic acid", "naproxen", "naproxene",
    "naproxeno", "diclofenac", "diclofenaco", "diclofenac sodium", "ketoprofen", "ketoprofene",
    "dexketoprofen", "metamizol", "metamizole", "nimesulide", "codeine", "codeina",
    "loratadine", "loratadin", "loratadina", "desloratadine", "cetirizine", "cetirizin",
    "cetirizina", "levocetirizine", "fexofenadine", "chlorphenamine", "diphenhydramine",
    "doxylamine", "omeprazole", "omeprazol", "omeprazolo", "esomeprazole", "pantoprazole",
    "pantoprazol", "lansoprazole", "ranitidine", "famotidine", "loperamide", "loperamid",
    "loperamida", "bisacodyl", "macrogol", "lactulose", "simeticone", "simethicone",
    "dextromethorphan", "guaifenesin", "ambroxol", "bromhexine", "bromhexin",
    "acetylcysteine", "acetylcystein", "acetilcisteina", "carbocisteine", "pseudoephedrine",
    "phenylephrine", "naphazoline", "nafazolina", "naphazolin", "tetryzoline", "tetrizolina",
    "xylometazoline", "xylometazolin", "oxymetazoline", "hydrocortisone",
    "hydrocortison", "hidrocortisona", "idrocortisone", "clotrimazole", "clotrimazol",
    "miconazole", "terbinafine", "terbinafin", "aciclovir", "acyclovir", "benzocaine",
    "lidocaine", "lidocain", "lidocaina", "mebendazole", "permethrin", "minoxidil",
    "sumatriptan", "sildenafil", "tadalafil", "finasteride", "orlistat", "salbutamol",
    "amoxicillin", "amoxicilline", "amoxicilina", "amoxicillina", "levonorgestrel",
    "nicotine replacement", "acetaminofen", "acido acetilsalicilico",
    "acide acetylsalicylique", "acetylsalicylsaure", "acetylsalicylzuur", "dimenhydrinate",
    "dimenhidrinato", "dimenidrinato", "dimenhydrinat", "metformin", "metformine",
    "metformina", "prednisolone", "prednisolon", "prednisone", "prednisona", "insulin",
    "insuline", "insulina",
)

# Words too general to flag a product the tree left unrestricted (a kitchen knife on a
# kitchen-knife leaf, "wine grapes" on a juice leaf), or that are also ordinary words in one
# of the seven languages ("ron" a name, "cava" a cellar, "korn" grain, "gode" Dutch "good"):
# read only where the node cannot say.
PLAIN = (
    "wine knife knives couteau couteaux messer cuchillo cuchillos coltello coltelli faca facas "
    "ale gin rum ron sake cava vin wein vino vinho wijn port spirits alcohol alcool alkohol "
    "alcoholic alcolico alcolici medicine medicines medication medicament medicaments "
    "medicamento medicamentos medicinale medicinali farmaco farmaci geneesmiddel medicijn "
    "medicijnen arzneimittel medikament sword espada spada epee schwert zwaard sabre saber sabel "
    "sable catapult katapult slingshot fionda machete machette shag trinciato besta gode amaro "
    "amari lager ipa bock kriek poire perry mead mede digestif coquin coquine porn "
    "liquor sherry jerez champagne champan champanhe bourbon cognac picadura "
    "stiletto tomahawk taser crianza premix fetish rioja chianti chablis porto cassetete "
    "dague daga dolk dolch bayonet katana bidi bidis"
).split()

# -- what a product is instead ------------------------------------------------------------

# Phrases that hold a keyword but are not the restricted thing; they hide their words.
HARMLESS = (
    # "bidi" is also bidirectional: optics, text layout
    "bidi sfp", "bidi transceiver", "bidi module", "bidi optic", "bidi optics",
    "unicode bidi", "bidi algorithm", "bidi text",
    "wine glass", "wine glasses", "wine rack", "wine cooler", "wine opener", "wine red",
    "wine colour", "wine color", "wine bottle holder", "wine stopper", "wine aerator",
    "wine gums", "wine gum", "wine vinegar", "wine fridge", "wine cabinet", "wine tasting course",
    "beer glass", "beer mug", "beer glasses", "ale house", "gin glass", "cocktail glass",
    "beer pong", "beer tap", "beer belly", "root beer", "ginger beer", "ginger ale",
    "verre a vin", "verres a vin", "rouge vin", "porte bouteille", "seau a champagne",
    "vinaigre de vin", "flute a champagne", "flutes a champagne", "verre a biere",
    "weinglas", "weinglaser", "weinrot", "weinregal", "bierglas", "bierkrug", "malzbier",
    "copa de vino", "copas de vino", "jarra de cerveza", "rojo vino", "vinagre de vino",
    "bicchiere da vino", "bicchieri da vino", "calice da vino", "rosso vino", "boccale da birra",
    "aceto di vino", "wijnglas", "wijnglazen", "wijnrek", "wijnrood", "wijnazijn",
    "copo de vinho", "copos de vinho", "caneca de cerveja", "vermelho vinho", "porta vinhos",
    "vinagre de vinho", "portabottiglie",
    "rubbing alcohol", "isopropyl alcohol", "denatured alcohol", "alcohol wipes",
    "alcohol swabs", "alcool menager", "alcool a bruler", "alcool isopropylique",
    "brennspiritus", "isopropylalkohol", "alcohol isopropilico", "alcohol de quemar",
    "alcool denaturato", "alcool isopropilico", "ontsmettingsalcohol", "isopropylalcohol",
    "alcool etilico 70", "alcohol 70", "alcool 70", "alkohol 70", "alcohol 96", "alcool 90",
    "alcool 95", "alcohol etilico 96", "alcool etilico 96",
    # alcohols for the skin: camphor, rosemary ("alcohol de romero para masajes")
    "camphorated alcohol", "rosemary alcohol", "alcool camphre", "alcool de romarin",
    "kampferspiritus", "alcohol alcanforado", "alcohol de romero", "alcool canforato",
    "alcool al rosmarino", "kamferspiritus", "alcool canforado", "alcool de alecrim",
    "knife sharpener", "knife block", "knife rack", "knife holder", "knife roll",
    "magnetic knife strip", "knife strip", "knife case", "knife bag",
    "butter knife", "palette knife", "cake knife", "putty knife", "utility knife",
    "craft knife", "carpet knife", "stanley knife", "cheese knife", "cheese knives",
    "knife and fork", "knives and forks", "knife pleat", "pizza knife", "oyster knife",
    "couteau a beurre", "aiguiseur", "couteau a enduire", "couteau a fromage",
    "couteau a huitres", "couteau de peintre", "porte couteaux", "bloc couteaux",
    "buttermesser", "messerblock", "messerscharfer", "cuttermesser", "teppichmesser",
    "tapetenmesser", "bastelmesser", "brieffoffner", "cuchillo de mantequilla", "cuter",
    "afilador de cuchillos", "taco de cuchillos", "cuchillo de untar",
    "affilacoltelli", "ceppo coltelli", "coltello da burro", "taglierino", "coltello da formaggio",
    "messenslijper", "messenblok", "botermes", "kaasmes", "stanleymes", "afbreekmes",
    "afiador de facas", "faca de manteiga", "bloco de facas", "x acto",
    "champagne colour", "champagne color", "champagne gold", "champagne beige",
    "champagner farben",
    "cigar box guitar", "cognac colour", "cognac leather", "cognac brown", "rum raisin",
    "rhum raisin", "nicotine free", "sans nicotine", "nikotinfrei", "sin nicotina",
    "senza nicotina", "nicotinevrij", "sem nicotina", "zero nicotine", "0 mg nicotine",
    "bourbon vanilla", "vanille bourbon", "vaniglia bourbon", "bourbon vanille",
    "baunilha bourbon", "vainilla bourbon", "scotch tape", "scotch egg", "scotch eggs",
    "swordfish", "espada de juguete", "toy sword", "foam sword", "epee en mousse",
    "slingshot toy", "pesce spada", "zwaardvis", "schwertfisch", "pez espada",
    "peixe espada", "spada giocattolo", "speelgoedzwaard", "espada de brinquedo",
    "cigarette pants", "cigarette trousers", "pantalon cigarette", "jean cigarette",
    "pantaloni a sigaretta", "calca cigarrete", "tabac blond", "shag rug", "shag carpet",
    "shag pile", "tapis shaggy", "hoogpolig shag", "cigarette lighter", "cigar lighter",
    "medicine ball", "medicine cabinet", "medicine box", "medicine bag", "medicine organiser",
    "medicine spoon", "armoire a pharmacie", "medizinball", "medizinschrank",
    "balon medicinal", "botiquin", "palla medica", "armadietto dei medicinali", "medicijnkastje",
    "medicijnbal", "bola medicinal", "armario de medicamentos", "caixa de medicamentos",
    "adult size", "adults size", "taille adulte", "erwachsenengrosse", "talla adulto",
    "taglia adulto", "volwassenenmaat", "tamanho adulto", "concrete vibrator",
    "vibrateur a beton", "betonvibrator", "vibrador de hormigon", "vibratore per calcestruzzo",
    "vibrador de betao", "coquin de chat", "kriek juice", "bock saw",
    "toy handcuffs", "police handcuffs",
    "barrel aged", "cask aged", "barrel proof", "single barrel", "single cask",
    "cask strength", "fut de chene", "elevado en barrica", "affinato in botte",
    "allume cigare", "allume cigares", "cigarette lighter charger", "encendedor de cigarrillos",
    "menottes jouet", "menottes de police",
    "spielzeug handschellen", "handschellen spielzeug", "polizei handschellen",
    "esposas de juguete", "manette giocattolo", "speelgoed handboeien", "algemas de brinquedo",
    "champagne sabre", "champagne saber", "sabre a champagne", "sable de champan",
    "sciabola da champagne", "champagnesabel", "sabre laser", "sable de luz", "spada laser",
    "sabre de luz", "light saber", "lightsaber", "levure de biere", "levadura de cerveza",
    "lievito di birra", "levedura de cerveja", "brewers yeast", "beer yeast", "baba au rhum",
    "rum baba", "beer batter", "beer battered", "cigarette jeans", "pantalones cigarette",
    "pantaloni sigaretta", "calcas cigarette", "calca cigarette", "spirit level",
)

# Words near a keyword that make it a flavour, a scent, a colour or a shape named after the
# restricted good ("whisky-scented candle", "tobacco brown", "cigar-shaped", "vodka-flavoured
# lip balm"), a toy or a sweet in its likeness, or a drink without alcohol.
DESCRIPTORS = (
    # drinks without alcohol (they hide the drink they name: "Cerveza sin alcohol 0,0")
    "alcohol free", "alcoholfree", "non alcoholic", "nonalcoholic", "dealcoholised",
    "dealcoholized", "zero alcohol", "without alcohol", "mocktail",
    "sans alcool", "zero alcool", "desalcoolise", "sans alcool ajoute",
    "alkoholfrei", "alkoholfreies", "alkoholfreier", "alkoholfreie", "ohne alkohol",
    "entalkoholisiert", "sin alcohol", "desalcoholizado", "sin alcohol anadido",
    "analcolico", "analcolica", "analcolici", "senza alcol", "dealcolato", "zero alcol",
    "alcoholvrij", "alcoholvrije", "alcohol vrij", "zonder alcohol", "sem alcool",
    "desalcoolizado", "0 0", "0d0", "0d0 vol", "0 vol",
    # hand care and cleaning with alcohol in it
    "sanitiser", "sanitizer", "disinfectant", "antibacterial", "hydroalcoolique",
    "desinfectant", "desinfektion", "desinfektionsmittel", "desinfectante", "hidroalcoholico",
    "disinfettante", "igienizzante", "ontsmettend", "desinfetante", "antisseptico",
    "alcohol gel", "gel hydroalcoolique", "desinfektionsgel", "gel hidroalcoholico",
    "gel igienizzante", "alcoholgel", "handgel", "alcool gel", "hand gel",
    # Scents, colours, shapes and the objects that carry them. A bare flavour word is left
    # out: "raspberry-flavoured vodka" and "e-liquide parfum fraise" are the real thing.
    # en
    "scented", "scent", "fragrance", "colour", "color", "coloured", "colored", "brown",
    "shaped", "shape", "candle", "soap", "lip balm", "shampoo", "sweets", "candy",
    "chocolate", "gummies", "toy", "toys", "costume", "sticker", "stickers", "print",
    "printed", "effect", "look", "perfume", "eau de parfum", "eau de toilette", "cologne",
    "diffuser", "wax melt", "ice cream", "themed", "theme", "motif", "pattern", "fudge", "cake",
    "sauce", "marinade", "mustard", "vinegar", "jam", "gum",
    "lollipop", "novelty", "replica toy", "fancy dress", "dress up", "plush", "cookie cutter",
    # fr
    "parfumee", "parfume", "senteur", "couleur", "coloris", "en forme de", "bougie", "savon",
    "baume", "bonbon", "bonbons", "jouet", "jouets", "deguisement", "marron", "brun", "glace",
    "imprime", "motif", "facon", "moutarde", "vinaigre", "confiture", "sucette", "peluche",
    # de
    "duft", "duftkerze", "farbe", "farben", "farbig", "kerze", "seife", "lippenbalsam",
    "spielzeug", "kostum", "braun", "schokolade", "eis", "aufdruck", "motiv", "senf",
    "essig", "bonbons", "lutscher", "plusch", "kinderspielzeug", "verkleidung",
    # es
    "olor", "olor a", "en forma de", "vela", "jabon", "balsamo", "juguete", "juguetes",
    "disfraz", "marron", "caramelo", "caramelos", "helado", "estampado", "mostaza", "vinagre",
    "piruleta", "peluche", "color",
    # it
    "profumo", "profumata", "profumato", "colore", "a forma di", "candela", "sapone",
    "giocattolo", "giocattoli", "marrone", "caramelle", "cioccolato", "gelato", "stampa",
    "fantasia", "senape", "aceto", "costume di carnevale", "travestimento",
    # nl
    "geur", "geurkaars", "kleur", "kleurig", "in de vorm van", "kaars", "zeep", "lippenbalsem",
    "speelgoed", "kostuum", "bruin", "snoep", "ijs", "opdruk", "mosterd", "azijn", "lolly",
    "verkleedpak", "knuffel",
    # pt
    "cheiro", "cor", "cor de", "em forma de", "sabonete", "brinquedo", "brinquedos",
    "fantasia", "castanho", "rebucado", "bombom", "perfumada", "gelado", "sorvete",
    "estampa", "mostarda", "vela perfumada", "pirulito", "pelucia",
    # furniture and body care named after a drink or a smoke ("whiskey barrel coffee table",
    # "beer shower gel")
    "table", "coffee table", "chair", "lounge chair", "shelf", "body wash", "shower gel",
    "chocolates", "pralines", "truffles", "gel douche", "duschgel", "gel de ducha",
    "bagnoschiuma", "douchegel", "gel de banho", "shampoing", "body lotion", "bath bomb",
    "bath salts", "beard oil", "aftershave", "after shave", "deodorant",
    "face mask", "masque", "gesichtsmaske", "mascarilla", "maschera", "gezichtsmasker",
    "tattoo", "tatouage", "tatuaje", "tatuaggio", "tatoeage", "tatuagem",

    # foods and drinks named after a drink they taste of
    "coffee", "cafe", "kaffee", "caffe", "koffie", "tea", "tee", "thee", "cha",
    "biscuits", "cookies", "kekse", "galletas", "biscotti", "koekjes", "bolachas", "popcorn",
    "crisps", "extract", "flavouring", "flavoring", "baking", "patisserie", "backen",
    "reposteria", "pasticceria", "pastelaria", "oil", "olive oil", "huile", "ol", "aceite",
    "olio", "olie", "azeite", "juice", "jus de", "zumo", "succo", "sumo", "nectar",
    "lemonade", "limonade", "limonata", "limonada",
    "salt", "sel", "salz", "zout", "jelly", "gelee", "gelatina", "gelei", "marmalade",
    "marmelade", "mermelada", "marmellata", "marmelada", "bread", "brot", "brood", "torte",
    "tarte", "tarta", "torta", "taart", "gateau", "gummibarchen", "fruchtgummi",
    "gominolas", "caramelle gommose", "snoepjes",
    "chocolat", "chocolats", "chocolade", "truffes", "pralinen", "truffel", "bombones",
    "cioccolatini", "tartufi", "bombons", "chewing gum", "kaugummi", "seeds", "graines",
    "samen", "semillas", "semi", "zaden", "sementes", "plant", "plante", "pflanze", "planta",
    "pianta", "ceramic", "ceramique", "keramik", "ceramica", "keramiek", "porcelain",
    "porcelaine", "porzellan", "porcelana", "porcellana", "porselein", "spice mix", "spices",
    "epices", "gewurz", "gewurzmischung", "especias", "spezie", "specerijen", "especiarias",
    "botanicals", "0 alcohol", "0 alcool", "0 alkohol", "0 alcol", "dealcolizzato",
    "chips", "patatas", "snack", "snacks", "pretzels", "bretzel", "brezel", "nuts",
    "cacahuetes", "peanuts", "noten", "nusse", "noci", "nozes", "amendoins", "frutos secos",
    "air freshener", "desodorisant", "lufterfrischer", "ambientador", "deodorante per ambienti",
    "luchtverfrisser", "room spray", "spray d ambiance", "raumspray", "incense", "encens",
    "weihrauch", "incienso", "incenso", "wierook", "sofa", "canape", "couch", "armchair",
    "fauteuil", "sessel", "sillon", "poltrona", "stool", "tabouret", "hocker", "taburete",
    "sgabello", "kruk", "velvet", "velours", "samt", "terciopelo", "velluto", "fluweel",
    "veludo", "satin", "satijn", "raso",
    "parfum", "parfum d ambiance", "diffuseur", "diffusor", "difusor", "diffusore",
    "pudding", "pudim", "budino", "flan", "tiramisu", "dessert", "postre", "nachtisch",
    "toetje", "te negro", "te verde", "te rojo", "te blanco", "te nero", "cha preto",
    # for the skin, not to drink ("alcohol de romero para masajes")
    "massage", "massages", "masaje", "masajes", "massaggio", "massaggi", "massagem",
    "massagens", "massageol", "massageolie", "external use", "usage externe",
    "uso externo", "uso esterno", "uitwendig gebruik", "ausseren anwendung", "friction",
    "friccion", "frizione", "liniment", "linimento", "einreibung",
    # infusions, compotes and cakes named after a drink or a fruit of the same name
    "infusion", "infusions", "herbal tea", "tisane", "tisanes", "krautertee",
    "infuso", "infusi", "tisana", "kruidenthee", "infusao", "cha de ervas",
    "tea bags", "teebeutel", "bolsitas", "theezakjes", "digestive tea",
    "compote", "compotes", "kompott", "compota", "compotas", "composta", "coulis",
    "panettone", "pandoro", "colomba", "stollen", "christstollen", "kerststol", "bolo",
    "bolo rei", "bizcocho", "roscon", "brioche", "muffin", "muffins", "cupcake", "cupcakes",
    "brownie", "brownies", "cantucci", "amaretti", "biscotto", "nougat", "turron", "torrone",
    "buche", "tronchetto", "savarin", "glassato", "glace au", "glaseado", "glasiert",
    "forma de", "con forma de", "salsa", "sosse", "shampooing", "champu", "champo", "empty",
    "vide", "leer", "vacio", "vacia", "vuoto", "vuota", "leeg", "vazio", "vazia",
)

# Accessories and objects of a drink, a smoke, a weapon or a medicine ("whisky stones",
# "beer bottle opener", "cigar cutter", "knife case", "pill organiser"): the product is the
# accessory, unless it comes with the good ("humidor with cigars") or the accessory comes
# with it ("whisky and two glasses").
ACCESSORIES = (
    # en
    "opener", "bottle opener", "corkscrew", "stones", "whisky stones", "ice stones", "cutter",
    "cigar cutter", "rack", "holder", "stand", "display stand", "glass", "glasses",
    "cigarette case",
    "cigar case", "vape case", "knife case", "sword stand", "cigarette holder",
    "tumbler", "tumblers", "decanter", "carafe", "flute", "flutes", "mug", "mugs", "stein",
    "coaster", "coasters", "cooler", "bucket", "ice bucket", "chiller", "fridge", "cabinet",
    "humidor", "humidors", "ashtray", "ashtrays", "lighter", "lighters", "grinder",
    "rolling machine", "box empty", "keyring", "key ring", "keychain", "sharpener",
    "sheath only", "holster", "scabbard", "wall mount", "hanger", "organiser", "organizer",
    "pill box", "pillbox", "dispenser", "pourer", "aerator", "stopper", "cork",
    "shaker", "jigger", "strainer", "sign", "poster", "book", "cookbook", "course",
    "tasting course", "letter opener", "pipe", "pipe cleaner", "tamper", "wallpaper",
    "umbrella", "necklace", "pendant", "earrings", "brooch", "pin badge", "tie clip",
    "cufflinks", "apron", "t shirt", "tshirt", "hoodie", "socks", "making kit", "planter",
    "barrel planter", "mould", "mold", "tray", "bar tray", "dish", "saucer",
    "pouch", "tester",
    "rolling papers", "papers", "papier a cigarette", "papier a rouler", "feuilles a rouler",
    "blattchen", "papel de fumar", "papel de liar", "cartine", "vloeitjes", "mortalhas",
    "filter tips", "filtres", "filter", "filtri", "filtros", "tubes", "tubeuse",
    "stopfmaschine", "humidificador", "umidificatore", "bevochtiger", "pitillera",
    "portasigarette", "cigarreira", "thermometer", "thermometre", "termometro", "preserver",
    "vacuum pump", "pompe a vide",
    "voucher", "gift card",
    "flask", "hip flask",
    "storage", "rangement",
    "casier", "botellero", "portabottiglie", "porte bouteilles", "vase", "jarron", "florero",
    "vaas", "tonneau", "barril", "barrica", "barrel", "bouchon", "bouchons",
    "sous plat", "dessous de plat", "trivet", "salvamanteles", "sottopentola",
    "pannenonderzetter", "base para tachos",
    "machine", "machines", "maquina", "maquinas", "macchina", "macchinetta", "maschine",
    "machine a rouler", "maquina de liar", "carry case", "carrying case", "housse", "hoesje",
    "block", "bloc", "ceppo", "blok", "corta papel", "sharpening", "sharpening stone",
    "whetstone", "aiguiser", "amolador", "amoladores", "affuteur", "affuteuse",
    "fusil a aiguiser", "wetzstahl", "messerschleifer", "chaira", "acciaino", "aanzetstaal",
    "sharpening steel", "honing steel", "honing rod", "afiadora", "amoladora",
    "pierre a aiguiser", "schleifstein", "afilar", "piedra de afilar",
    "affilare", "pietra per affilare", "wetsteen", "slijpsteen", "afiar", "pedra de afiar",
    "aufbewahrung",
    "almacenamiento", "contenitore", "opslag",
    "arrumacao", "flasque", "flachmann", "fiaschetta", "heupfles", "cantil",
    "jar", "tarro", "barattolo", "pot a tabac", "cellar", "carrier", "charms", "gutschein",
    "bon cadeau", "carte cadeau", "tarjeta regalo",
    "buono regalo", "cadeaubon", "vale presente", "experience", "erlebnis", "abrecartas",
    "coupe papier", "tagliacarte", "briefopener", "scope", "rifle scope", "zielfernrohr",
    "lunette de visee", "mira telescopica", "cannocchiale", "richtkijker", "bulb", "ampoule",
    "gluhbirne", "bombilla", "lampadina", "lamp", "tabaquera", "lanyard", "cup", "cups",
    "gobelet", "gobelets", "brewing", "brew kit",
    "brassage", "homebrew", "elaboracion",
    "breathalyser", "breathalyzer", "spoon", "fountain", "pitcher",
    "blague", "blague a tabac", "ethylotest", "alcootest", "cuillere", "fontaine", "pichet",
    "alkoholtester", "loffel", "alcoholimetro", "cuchara", "petaca", "etilometro",
    "cucchiaio", "portatabacco", "blaastest", "lepel", "bafometro", "colher",
    # fr
    "decapsuleur", "ouvre bouteille", "tire bouchon", "pierres", "pierres a whisky",
    "coupe cigare", "porte", "presentoir", "verre", "verres", "carafe", "flute", "chope",
    "dessous de verre", "seau", "rafraichisseur", "cave a vin", "cendrier", "cendriers",
    "briquet", "briquets", "etui", "porte cles", "aiguiseur", "fourreau seul", "pilulier",
    "distributeur", "bec verseur", "bouchon", "livre", "pipe a tabac", "papier peint",
    "parapluie", "collier", "pendentif", "boucles d oreilles", "tablier", "plateau",
    "moule", "rouleau", "etui a cigarettes",
    # de
    "offner", "flaschenoffner", "korkenzieher", "steine", "whisky steine",
    "zigarrenabschneider", "zigarrenschneider", "halter", "halterung", "stander", "regal",
    "glas", "glaser", "karaffe", "dekanter", "krug", "untersetzer", "kuhler", "kuhlschrank",
    "eimer", "aschenbecher", "feuerzeug", "feuerzeuge", "etui", "schlusselanhanger",
    "scharfer", "wetzstein", "holster", "pillendose", "tablettendose", "spender", "ausgiesser",
    "verschluss", "korken", "buch", "schild", "tabakspfeife", "pfeife", "tapete", "schirm",
    "kette", "anhanger", "ohrringe", "schurze", "tablett", "form",
    # es
    "abridor", "abrebotellas", "sacacorchos", "piedras", "piedras de whisky", "cortapuros",
    "soporte", "expositor", "copa", "copas", "vaso", "vasos", "decantador", "jarra",
    "posavasos", "cubitera", "enfriador", "vinoteca", "cenicero", "ceniceros", "mechero",
    "encendedor", "funda", "estuche", "llavero", "afilador", "pastillero", "dispensador",
    "vertedor", "tapon", "libro", "cartel", "pipa de fumar", "papel pintado", "paraguas",
    "collar", "colgante", "pendientes", "delantal", "bandeja", "molde",
    # it
    "apribottiglie", "cavatappi", "pietre", "pietre per whisky", "tagliasigari",
    "supporto", "espositore", "bicchiere", "bicchieri", "calice", "calici", "caraffa",
    "decanter", "boccale", "sottobicchiere", "sottobicchieri", "secchiello", "glacette",
    "cantinetta", "posacenere", "accendino", "accendini", "astuccio", "custodia",
    "fodero vuoto", "portachiavi", "affilatore", "portapillole", "dispenser", "tappo", "libro",
    "insegna", "pipa da tabacco", "carta da parati", "ombrello", "collana", "ciondolo",
    "orecchini", "grembiule", "vassoio", "stampo", "fondina",
    # nl
    "opener", "flesopener", "kurkentrekker", "stenen", "whiskystenen", "sigarenknipper",
    "houder", "standaard", "rek", "glas", "glazen", "karaf", "onderzetter",
    "onderzetters", "viltjes", "bierviltjes", "koeler", "emmer", "wijnkoelkast", "asbak",
    "asbakken", "aansteker", "aanstekers", "etui", "hoes", "sleutelhanger", "slijper",
    "pillendoos", "dispenser", "schenktuit", "kurk", "boek", "bord", "pijp", "behang",
    "paraplu", "ketting", "hanger", "oorbellen", "schort", "dienblad", "holster",
    # pt
    "abre garrafas", "abridor", "saca rolhas", "pedras", "pedras de whisky", "corta charutos",
    "suporte", "expositor", "copo", "copos", "taca", "tacas", "jarro", "base para copos",
    "balde", "frapeira", "garrafeira", "cinzeiro", "cinzeiros", "isqueiro", "isqueiros",
    "estojo", "capa", "porta chaves", "afiador", "caixa de comprimidos", "porta comprimidos",
    "doseador", "rolha", "livro", "placa", "cachimbo de fumar", "papel de parede",
    "guarda chuva", "colar", "pingente", "brincos", "avental", "bandeja", "forma",
)

# Kitchen, garden and craft words that make a knife or a blade a tool ("chef knife",
# "couteau de cuisine", "Brotmesser", "cuchillo jamonero"): they undo weapon keywords near
# them. Common practice, no source.
KITCHEN_TOOLS = (
    "kitchen", "chef", "chefs", "cook", "cooks", "bread", "paring", "santoku", "carving",
    "steak", "boning", "fillet", "filleting", "cleaver", "vegetable", "tomato", "peeling",
    "ham", "slicing", "sushi", "nakiri", "gyuto", "deba", "utility", "serrated bread",
    "cutlery", "knife set", "knife block set", "table knife", "table knives", "dinner knife",
    "grapefruit", "mushroom", "pruning", "grafting", "hobby", "scalpel", "paper",
    "cuisine", "cuisinier", "a pain", "d office", "a viande", "a steak", "a legumes",
    "a jambon", "eplucheur", "econome", "a desosser", "a filet de sole", "a trancher",
    "de table", "couverts", "greffer", "a greffer", "emonder", "serpette",
    "kuche", "kuchen", "kochmesser", "brotmesser", "schalmesser", "gemusemesser",
    "steakmesser", "filetiermesser", "ausbeinmesser", "tomatenmesser", "kasemesser",
    "santokumesser", "fleischmesser", "officemesser", "allzweckmesser", "universalmesser",
    "tranchiermesser", "wiegemesser", "austernmesser", "obstmesser", "kuchenmesser",
    "messerset", "besteck", "tafelmesser", "hackmesser", "pilzmesser", "gartenmesser",
    "hippe", "veredelungsmesser",
    "cocina", "cocinero", "chef", "de pan", "jamonero", "de carne", "verduras", "pelar",
    "mondador", "fileteador", "de mesa", "cebollero", "deshuesador", "cubiertos",
    "de injertar", "de poda",
    "para pan", "para carne", "para queso", "para verduras", "pan", "queso", "carne",
    "cucina", "cuoco", "da pane", "bistecca", "da bistecca", "verdure", "prosciutto",
    "sfilettare", "disossare", "spelucchino", "mannaia", "trinciante", "posate",
    "da tavola", "innesto", "da innesto", "potatura",
    "per pane", "per carne", "per formaggio", "per verdure", "pane", "formaggio",
    "keuken", "keukenmes", "koksmes", "broodmes", "schilmesje", "groentemes", "vleesmes",
    "steakmes", "fileermes", "uitbeenmes", "tomatenmes", "santokumes", "oestermes", "bestek",
    "tafelmes", "hakmes", "entmes", "snoeimes", "messenset",
    "cozinha", "cozinheiro", "de pao", "legumes", "descascar", "presunto", "filetar",
    "desossar", "talheres", "de enxertia", "de poda",
    "para pao", "para queijo", "pao", "queijo", "kaas", "groente", "fromage", "gemuse",
    # tools and toys that are called guns or pistols
    "water", "eau", "a eau", "wasser", "agua", "de agua", "acqua", "ad acqua", "de agua",
    "glue", "colle", "a colle", "kleber", "cola", "colla", "lijm", "massage", "de massage",
    "paint", "peinture", "a peinture", "pintura", "vernice", "verf", "silicone", "silikon",
    "heat", "thermique", "nail", "clous", "nagel", "clavos", "chiodi", "spijker", "pregos",
    "staple", "agrafes", "grease", "caulking", "soldering", "bubble", "bulles", "burbujas",
    "bolle", "bellen", "bolhas", "foam", "mousse", "nerf", "blaster", "spray gun",
    "pistola de pintura", "pistola per verniciare", "airbrush",
    "masaje", "de masaje", "massaggiante", "massaggio", "massagem", "de massagem",
    "navaja de afeitar", "rasoir", "rasoio", "navalha de barbear", "straight razor",
)
KITCHEN_TOOLS_SET = frozenset(KITCHEN_TOOLS)

# Words before an accessory that make it come with the product ("whisky and two glasses",
# "knife with case"), and short words that may stand between ("with a", "et deux").
CONNECTORS = frozenset(
    "with and avec et mit und con y met en com e plus incl inkl including inclusief "
    "incluido incluso incluye incluant".split()
)
FILLERS = frozenset(
    "a an one two three four six 1 2 3 4 5 6 un une deux trois quatre ein eine einem einer "
    "zwei drei vier sechs uno una dos tres cuatro seis due tre quattro sei een twee drie vier "
    "zes um uma dois duas tres quatro seis de du des der die das los las il i gli le de het "
    "o os as its his her their matching".split()
)
# Measures before an accessory: it is the good's packaging ("tobacco 50 g pouch").
UNITS = frozenset(
    "cl ml l dl g gr kg cm mm m x oz lbs lb pack pcs pc st stuck stk er liter litre "
    "litro litri gram gramm grammes".split()
)

# Objects that a product can be while naming a drink, a smoke or a weapon as its motif or
# material ("tobacco leaf wallpaper", "vodka bottle lamp", "jupe plissée couteau"); they
# count only at the head of the title (its first or last word).
OBJECT_WORDS = (
    "lamp", "wallpaper", "board", "cork board", "purse", "bag", "skirt", "dress", "shirt",
    "t shirt", "socks", "mug", "coaster", "coasters",
    "scrub", "body scrub", "lotion", "cream", "poster", "sign", "cushion", "pillow", "blanket",
    "towel", "apron", "clock", "frame", "ornament", "magnet", "notebook", "puzzle", "wallet",
    "belt", "boots", "jacket", "earrings", "necklace", "cufflinks", "rug", "curtain",
    "curtains", "figurine", "charm", "pendant", "phone case", "tote", "game", "card game",
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
    "shoes", "sneakers", "trainers", "sandals", "loafers", "ankle boots", "coat", "blazer",
    "trousers", "jeans", "handbag", "scarf", "hat", "cap", "gloves", "jumper", "sweater",
    "cardigan", "blouse", "top", "bikini", "swimsuit", "lingerie set", "bra", "watch",
    "ring", "bracelet", "chaussures", "baskets", "bottines", "sandales", "mocassins",
    "veste", "blouson", "manteau", "pantalon", "sac a main", "echarpe", "chapeau", "gants",
    "pull", "gilet", "chemisier", "montre", "bague", "bracelet", "schuhe", "sneaker",
    "stiefeletten", "sandalen", "jacke", "mantel", "hose", "handtasche", "schal", "hut",
    "mutze", "handschuhe", "pullover", "bluse", "uhr", "armband", "zapatos", "zapatillas",
    "botines", "sandalias", "chaqueta", "abrigo", "pantalones", "sombrero", "guantes",
    "jersey", "blusa", "reloj", "anillo", "pulsera", "scarpe", "stivaletti", "sandali",
    "giacca", "cappotto", "pantaloni", "borsetta", "sciarpa", "cappello", "guanti",
    "maglione", "camicetta", "orologio", "anello", "bracciale", "schoenen", "enkellaarsjes",
    "sandalen", "jas", "broek", "handtas", "sjaal", "hoed", "handschoenen", "trui", "blouse",
    "horloge", "armband", "sapatos", "sapatilhas", "botins", "sandalias", "casaco",
    "calcas", "mala", "cachecol", "chapeu", "luvas", "camisola", "relogio", "anel",
    "pulseira",
)

# -- German and Dutch compounds ------------------------------------------------------------

# A compound names what its last part names ("Weizenbier" is a beer, "Bierglas" a glass).
# Heads that make a compound the restricted good, with, per head, the first parts that make
# it something else ("Malzbier" has no alcohol, "Wasserpistole" is a toy, "Brotmesser" a
# kitchen tool) or, where the head is also a common word ("Regenbogen"), the only first parts
# that make it the good.
COMPOUND_HEADS: dict[str, tuple[str, tuple[str, ...], tuple[str, ...]]] = {
    # head: (flag, first parts that undo it, first parts required (empty: any))
    "bier": ("alcohol", ("malz", "ingwer", "gember", "kinder", "root"), ()),
    "biere": ("alcohol", ("malz", "ingwer", "gember"), ()),
    "wein": ("alcohol", ("kinder", "trauben", "franzbrannt"), ()),
    "wijn": ("alcohol", ("kinder",), ()),
    "likor": ("alcohol", (), ()),
    "likeur": ("alcohol", (), ()),
    "schnaps": ("alcohol", (), ()),
    "jenever": ("alcohol", (), ()),
    "genever": ("alcohol", (), ()),
    "sekt": ("alcohol", ("kinder",), ()),
    "whisky": ("alcohol", (), ()),
    "whiskey": ("alcohol", (), ()),
    "wodka": ("alcohol", (), ()),
    "bitter": ("alcohol", ("zart", "halb", "edel", "extra", "bitter"), ()),
    "brand": ("alcohol", (), ("obst", "wein", "trester", "williams", "kirsch", "zwetschgen",
                              "birnen", "apfel", "mirabellen", "himbeer", "frucht", "korn",
                              "hefe", "quitten", "aprikosen", "marillen", "pflaumen")),
    "geist": ("alcohol", (), ("himbeer", "williams", "kirsch", "schlehen", "brombeer",
                              "heidelbeer", "quitten", "zwetschgen", "mirabellen", "holunder",
                              "haselnuss", "walnuss", "waldhimbeer", "obst", "beeren")),
    "tabak": ("tobacco", ("schoko", "schokoladen", "kinder", "spielzeug"), ()),
    "tabac": ("tobacco", (), ()),
    "zigarre": ("tobacco", ("schoko", "schokoladen", "kaugummi", "zucker", "kinder"), ()),
    "zigarren": ("tobacco", ("schoko", "schokoladen", "kaugummi", "zucker", "kinder"), ()),
    "zigarette": ("tobacco", ("schoko", "schokoladen", "kaugummi", "zucker", "kinder"), ()),
    "zigaretten": ("tobacco", ("schoko", "schokoladen", "kaugummi", "zucker", "kinder"), ()),
    "zigarillo": ("tobacco", (), ()),
    "sigaar": ("tobacco", ("chocolade", "choco", "snoep"), ()),
    "sigaren": ("tobacco", ("chocolade", "choco", "snoep"), ()),
    "sigaret": ("tobacco", ("chocolade", "choco", "snoep", "kauwgom"), ()),
    "sigaretten": ("tobacco", ("chocolade", "choco", "snoep", "kauwgom"), ()),
    "liquid": ("tobacco", (), ("nikotin", "dampf", "e", "basis", "shortfill")),
    "messer": ("weapons", KITCHEN_TOOLS + (
        "butter", "brot", "kase", "kuchen", "tafel", "obst", "pizza", "cutter", "teppich",
        "tapeten", "bastel", "brief", "rasier", "skalpell", "kuchen", "kellner", "hack",
        "schal", "gemuse", "steak", "filetier", "ausbein", "tomaten", "fleisch", "office",
        "allzweck", "universal", "tranchier", "wiege", "austern", "pilz", "garten",
        "veredelungs", "hobel", "mahwerks", "rasenmaher", "hacksler", "ersatz", "mixer",
        "spachtel", "maler", "kabel", "abisolier", "linoleum", "abbrech", "trapez",
        "sicherheits", "paket", "japan", "schnitz", "kinder",
    ), ()),
    "mes": ("weapons", (), ("jacht", "zak", "vlinder", "survival", "outdoor", "gevechts", "werp",
                            "spring", "klap", "vecht", "bowie", "tactisch", "leger", "duik",
                            "overlevings", "vouw", "buiten", "dolk")),
    "messen": ("weapons", (), ("jacht", "zak", "vlinder", "survival", "outdoor", "gevechts", "werp",
                            "spring", "klap", "vecht", "bowie", "tactisch", "leger", "duik",
                            "overlevings", "vouw", "buiten", "dolk")),
    "armbrust": ("weapons", ("spielzeug", "kinder"), ()),
    "kruisboog": ("weapons", ("speelgoed", "kinder"), ()),
    # ammunition by its kind ("Jagdpatronen", "Schrotpatronen", "hagelpatronen"); a printer's
    # or a gun's cartridge otherwise ("Druckerpatronen", "Kartuschen")
    "patronen": ("weapons", (), ("jagd", "schrot", "hagel", "flinten", "buchsen", "buchs",
                                 "kleinkaliber", "gewehr", "pistolen", "revolver", "jacht",
                                 "geweer", "pistool", "kogel", "hagl", "trap", "skeet")),
    "patrone": ("weapons", (), ("jagd", "schrot", "flinten", "buchsen", "kleinkaliber")),
    "munition": ("weapons", (), ()),
    "munitie": ("weapons", (), ()),
    "gewehr": ("weapons", ("wasser", "spielzeug", "kinder", "schaumstoff", "seifenblasen",
                           "konfetti", "spritz"), ()),
    "pistole": ("weapons", ("wasser", "spielzeug", "kinder", "heissklebe", "klebe",
                            "heissluft", "spritz", "lackier", "farb", "silikon", "kartuschen",
                            "tacker", "ausblas", "zapf", "massage", "schaum", "seifenblasen",
                            "dusch", "garten", "spruh", "reinigungs", "nagel", "fett", "kleber",
                            "druckluftausblas", "wasserspritz", "konfetti"), ()),
    "pistool": ("weapons", ("water", "lijm", "verf", "kit", "massage", "speelgoed", "niet",
                            "heteluft", "blaas", "spuit", "tuin", "douche", "zeepbellen",
                            "schuim", "spijker", "vet", "confetti"), ()),
    "geweer": ("weapons", ("water", "speelgoed", "schuim", "zeepbellen", "kinder"), ()),
    "schwert": ("weapons", ("spielzeug", "schaumstoff", "holz", "kinder", "licht"), ()),
    "zwaard": ("weapons", ("speelgoed", "schuim", "hout", "kinder", "licht"), ()),
    "dolch": ("weapons", ("brief",), ()),
    "dolk": ("weapons", (), ()),
    "buks": ("weapons", (), ()),
    "boog": ("weapons", (), ("kruis", "hand", "recurve", "compound", "lang", "jacht", "pistool")),
    "bogen": ("weapons", (), ("recurve", "compound", "lang", "jagd", "reiter", "pistolen",
                              "sport")),
    "schleuder": ("weapons", (), ("stein", "jagd", "sport", "profi", "zwillen")),
    "spray": ("weapons", (), ("pfeffer", "abwehr", "tierabwehr", "verteidigungs", "verdedigings",
                              "pepper",
                              "cs", "hundeabwehr")),
    "vibrator": ("adult", ("beton", "concrete"), ()),
    "vibratoren": ("adult", ("beton",), ()),
    "dildo": ("adult", (), ()),
    "tabletten": ("medicine", (), ("schmerz", "kopfschmerz", "migrane", "hals", "husten",
                                   "allergie", "fieber", "grippe", "erkaltungs", "schlaf",
                                   "durchfall", "sodbrennen", "abfuhr", "ibuprofen",
                                   "paracetamol", "aspirin", "pijn", "hoofdpijn", "keel",
                                   "hoest", "koorts", "slaap", "maag", "griep")),
    "mittel": ("medicine", (), ("schmerz", "erkaltungs", "husten", "abfuhr", "grippe",
                                "beruhigungs", "arznei", "schlaf", "fieber", "allergie",
                                "durchfall", "rheuma", "migrane", "heuschnupfen")),
    "saft": ("medicine", (), ("husten", "fieber", "ibuprofen", "paracetamol")),
    "sirup": ("medicine", (), ("husten",)),
    "siroop": ("medicine", (), ("hoest",)),
    "drank": ("medicine", (), ("hoest", "koorts")),
    "gel": ("medicine", (), ("schmerz", "rheuma", "ibuprofen", "diclofenac", "pijn")),
    "pflaster": ("medicine", (), ("nikotin", "schmerz")),
    "pleister": ("medicine", (), ("nicotine",)),
    "zapfchen": ("medicine", (), ("fieber", "schmerz", "paracetamol", "ibuprofen")),
    "zetpillen": ("medicine", (), ("koorts", "paracetamol", "pijn")),
    "stiller": ("medicine", (), ("pijn",)),
    "loser": ("medicine", (), ("husten", "schleim")),
}

# First parts of a compound naming a restricted good: followed by another word they make the
# product that other thing ("Bieröffner", "Weinregal", "tabakbraun", "Whiskystenen"),
# unless the rest is a pack of the good ("Wijnpakket", "Bierkiste", "Zigarrenset").
COMPOUND_MODIFIERS: dict[str, str] = {
    "bier": "alcohol", "wein": "alcohol", "wijn": "alcohol", "whisky": "alcohol",
    "whiskey": "alcohol", "champagne": "alcohol", "champagner": "alcohol", "sekt": "alcohol",
    "prosecco": "alcohol", "wodka": "alcohol", "vodka": "alcohol", "cognac": "alcohol",
    "likor": "alcohol", "likeur": "alcohol", "schnaps": "alcohol", "rum": "alcohol",
    "gin": "alcohol", "tabak": "tobacco", "tabaks": "tobacco", "zigarren": "tobacco",
    "zigaretten": "tobacco", "sigaren": "tobacco", "sigaretten": "tobacco", "messer": "weapons",
    "schwert": "weapons", "zwaard": "weapons", "dolch": "weapons", "alkohol": "alcohol",
    "alcohol": "alcohol",
}
PACKS = frozenset(
    "paket pakete pakket pakketten set sets box boxen kiste kisten kist kisten probe proben "
    "proeverij degustation geschenk geschenke geschenkset geschenkbox geschenkdoos selectie "
    "auswahl sortiment mix karton kartons doos dozen kasten tasting abo abonnement "
    "adventskalender proefpakket fass fles flessen flasche flaschen pack packs sticks waren "
    "produkte mischung mischungen sorte vorrat".split()
)

# Medicine: a condition and a dosage form together name a medicine ("hay fever tablets",
# "sirop contre la toux"), as does a nicotine word with a replacement form ("nicotine gum").
CONDITIONS = (
    "cough", "pain relief", "pain", "fever", "hay fever", "allergy", "allergies",
    "cold and flu", "flu", "headache", "migraine", "heartburn", "indigestion", "diarrhoea",
    "diarrhea", "constipation", "sore throat", "congestion", "toux", "douleur", "douleurs",
    "fievre", "allergie", "allergies", "rhume des foins", "rhume", "grippe", "mal de tete",
    "migraine", "brulures d estomac", "diarrhee", "constipation", "mal de gorge", "husten",
    "schmerzen", "fieber", "heuschnupfen", "erkaltung", "kopfschmerzen", "sodbrennen",
    "durchfall", "verstopfung", "halsschmerzen", "tos", "dolor", "fiebre", "alergia",
    "resfriado", "gripe", "dolor de cabeza", "acidez", "diarrea", "estrenimiento",
    "dolor de garganta", "tosse", "dolore", "dolori", "febbre", "allergia", "raffreddore",
    "influenza", "mal di testa", "bruciore di stomaco", "mal di gola", "hoest", "pijn",
    "koorts", "hooikoorts", "verkoudheid", "griep", "hoofdpijn", "maagzuur", "diarree",
    "keelpijn", "dor", "dores", "febre", "constipacao", "dor de cabeca", "azia", "diarreia",
    "dor de garganta",
    "allergy relief", "travel sickness", "motion sickness", "mal des transports",
    "reisekrankheit", "mareo", "wagenziekte", "enjoo", "throat", "gorge", "garganta", "gola",
    "keel",
)
DOSAGE_FORMS = (
    "tablet", "tablets", "caplets", "capsule", "capsules", "softgels", "syrup", "lozenge",
    "lozenges", "suppository", "suppositories", "oral suspension", "oral solution",
    "effervescent", "sachets", "granules", "ointment", "drops", "comprime", "comprimes",
    "gelule", "gelules", "sirop", "pastilles", "suppositoire", "suppositoires",
    "suspension buvable", "pommade", "gouttes", "tabletten", "filmtabletten", "kapseln",
    "sirup", "saft", "lutschtabletten", "zapfchen", "salbe", "tropfen", "brausetabletten",
    "granulat", "comprimido", "comprimidos", "capsulas", "jarabe", "pastillas", "supositorio",
    "supositorios", "suspension oral", "pomada", "gotas", "sobres", "compressa", "compresse",
    "capsule molli", "sciroppo", "pastiglie", "supposta", "supposte", "pomata", "gocce",
    "bustine", "tablet", "tabletten", "capsules", "siroop", "drank", "zuigtabletten",
    "zetpil", "zetpillen", "zalf", "druppels", "bruistabletten", "comprimidos", "capsulas",
    "xarope", "pastilhas", "supositorios", "saquetas", "efervescente", "effervescente",
    "bruisend",
    "tabs", "nasal spray", "spray nasal", "nasenspray", "spray nasale", "neusspray",
)
NICOTINE_REPLACEMENT = (
    "patch", "patches", "gum", "chewing gum", "lozenge", "lozenges", "pastille", "pastilles",
    "mouth spray", "inhaler", "inhalateur", "gomme", "gommes", "pflaster", "kaugummi",
    "lutschtabletten", "parche", "parches", "chicle", "chicles", "cerotto", "cerotti",
    "gomma", "gomme", "pleister", "pleisters", "kauwgom", "zuigtabletten", "adesivo",
    "adesivos", "pastilhas", "pastilha", "goma",
)
# Word endings that the international non-proprietary names of active ingredients share
# by drug class ("-profen", "-prazole", "-tadine"), with their local spellings: a word
# ending so, next to a dose or a dosage form, is a medicine ("Naproxen 250 mg tablets").
INN_ENDINGS = (
    "profen", "profene", "profeno", "fenac", "fenaco", "prazole", "prazol", "prazolo",
    "tadine", "tadin", "tadina", "tirizine", "tirizin", "tirizina", "triptan", "sartan",
    "statin", "statine", "statina", "cillin", "cilline", "cilina", "cillina", "mycin",
    "mycine", "micina", "micin", "floxacin", "floxacine", "floxacino", "conazole",
    "conazol", "conazolo", "tidine", "tidina", "olol", "lukast", "oxetine", "oxetina",
    "setron", "dronate", "gliptin",
    # decongestants (-azoline), calcium blockers, benzodiazepines, local anaesthetics,
    # tetracyclines, corticoids, bronchodilators, diuretics
    "azoline", "azolin", "azolina", "dipine", "dipin", "dipina", "dipino", "zepam", "zolam",
    "caine", "cain", "caina", "cycline", "cyclin", "ciclina", "asone", "ason", "asona",
    "terol", "semide", "semid", "semida",
)
# Word beginnings of a medicine class ("antihistaminique", "Antihistaminikum",
# "antistaminico") and of the adult flag ("érotique", "Erotik", "erotisch").
STEM_PREFIXES: dict[str, str] = {
    "antihistamin": "medicine", "antistamin": "medicine", "antiistamin": "medicine",
    "antiallergi": "medicine", "analgesi": "medicine", "analgetik": "medicine",
    "antibiot": "medicine", "antimykot": "medicine", "antimycos": "medicine",
    "antimicot": "medicine", "antitussi": "medicine", "antipyret": "medicine",
    "antipiret": "medicine", "antiinflam": "medicine", "antinfiam": "medicine",
    "erot": "adult", "vibromass": "adult", "clitor": "adult", "masturb": "adult",
    "sexspiel": "adult", "seksspeel": "adult",
    "paracetamol": "medicine", "ibuprofen": "medicine", "aspirin": "medicine",
    "diclofenac": "medicine",
}

# Words that name a drink only beside a bottle's measure ("Rosé de Provence 75 cl",
# "Porto Ruby 75 cl", "Stout imperial 33 cl"): a colour, a town, an adjective elsewhere.
WEAK_ALCOHOL = (
    "rose", "rosado", "rosato", "port", "stout", "porter", "aperitivo", "aperitif", "bitter",
    "tinto", "rosso", "bianco", "blanco", "branco", "brut", "reserva", "riserva",
    "gran reserva", "doc", "docg",
    # a fruit, a spice or a number in one language, a drink in another ("ginja" a sour
    # cherry, "anis" a spice, Dutch "dubbel" double)
    "ginja", "anis", "dubbel", "tripel", "quadrupel", "aoc", "aop", "igt", "igp", "magnum",
    "malt", "bordeaux",
    "bourgogne", "marsala", "madeira", "demi sec", "trocken", "halbtrocken", "lieblich",
    "seco", "secco", "frizzante", "barrique", "vintage", "cuvee", "tawny", "ruby",
    "years old", "year old", "ans d age", "jahre", "anos", "anni", "jaar", "grand cru",
    "premier cru", "chateau", "domaine", "weingut", "bodega", "cantina", "quinta",
)

# Children's things: a bow and arrows for kids, a pretend drink, toy handcuffs. They undo
# drinks, smokes, weapons and adult products named near them, not a medicine ("paracetamol
# sirop enfant").
CHILDREN = (
    "kids", "kid", "children", "childrens", "child", "toddler", "baby", "enfant", "enfants",
    "bebe", "kinder", "kinderen", "ninos", "nino", "ninas", "nina", "infantil",
    "bambini", "bambino", "bambina", "criancas", "crianca", "junior", "peuter", "kleuter",
)

# Words that name a vape product only beside a nicotine dose or a puff count ("Pods menthe
# 20 mg", "Liquid Erdbeere 10 ml 12 mg"): elsewhere a coffee pod or a washing liquid.
WEAK_TOBACCO = (
    "pod", "pods", "liquid", "liquids", "liquide", "liquides", "liquido", "liquidos",
    "e juice", "shortfill", "booster", "nic shot", "nicotine shot", "recharge", "recharges",
    "cartridge", "cartridges", "cartouche", "cartouches", "kartusche", "cartucho",
    "cartuchos", "cartuccia", "cartucce", "cartridges", "aroma", "arome",
)

# Vape products: a flavour named after a sweet ("e-liquid candy", "pods ice cream") is the
# vape's flavour, so descriptors do not undo them.
VAPE = (
    "e liquid", "e liquids", "eliquid", "e liquide", "e liquides", "e liquido",
    "e liquidos", "e liquida", "vape", "vapes", "vape juice", "vape pen", "vape kit",
    "disposable vape", "puff jetable", "vape jetable", "einweg vape", "wegwerp vape",
    "vape descartavel", "shortfill", "nic salt", "nicotine salt", "sel de nicotine",
    "nikotinsalz", "sales de nicotina", "sali di nicotina", "nicotinezout", "sais de nicotina",
    "svapo", "vapeador", "vapeadores", "vapoteuse", "pod kit", "kit pod", "e cigarette",
    "e cigarettes", "e zigarette", "e zigaretten", "e sigaret", "e sigaretten",
    "cigarette electronique", "sigaretta elettronica", "cigarrillo electronico",
    "cigarro eletronico", "liquid nikotin", "nikotinliquid",
)

# Words that say a drink is meant, for a keyword that is also a colour name ("wine",
# "champagne", "cognac": "Jacket - cognac" is a colour, "Cognac XO 70 cl" a drink).
DRINK_CONTEXT = (
    "bottle", "bottles", "bouteille", "bouteilles", "flasche", "flaschen", "botella",
    "botellas", "bottiglia", "bottiglie", "fles", "flessen", "garrafa", "garrafas", "brut",
    "sec", "demi sec", "dry", "extra dry", "trocken", "seco", "secco", "xo", "vsop", "vs",
    "napoleon", "fine champagne", "grand cru", "premier cru", "millesime", "millesimato",
    "cuvee", "gift box", "coffret", "geschenkbox", "confezione regalo",
    "geschenkdoos", "case of", "x 75", "x 70", "bodega",
)

# A drink's name beside these is a flavouring for the kitchen, not the drink ("Rum-Aroma",
# "extrait de rhum"); they undo alcohol only (a pipe tobacco is sold "aromatic").
FLAVOURINGS = (
    "aroma", "aromas", "arome", "aromes", "extract", "extrait", "extrakt", "extracto",
    "estratto", "extrato", "essence", "essenz", "esencia", "essenza", "essencia",
    "flavouring", "flavoring", "backaroma", "aroma para reposteria", "aroma per dolci",
    "bakaroma",
)
# Words that say what follows them is a flavour ("sabor chicle", "goût café", "Geschmack
# Schokolade"): a sweet's name after them is the product's flavour, not the product.
FLAVOUR_WORDS = frozenset(
    "flavour flavor taste aroma arome gout saveur geschmack sabor gusto sapore smaak "
    "parfum".split()
)

# Last parts of German and Dutch compounds that make the compound a descriptor or an
# accessory ("Karamellsoße", "Duftkerze", "Flaschenöffner", "Wijnkoeler"): the compound then
# undoes a good named beside it, as the word alone would.
COMPOUND_CUE_HEADS: dict[str, str] = {
    "sosse": "descriptor", "sauce": "descriptor", "saus": "descriptor", "kerze": "descriptor",
    "kerzen": "descriptor", "kaars": "descriptor", "seife": "descriptor", "zeep": "descriptor",
    "shampoo": "descriptor", "schokolade": "descriptor", "chocolade": "descriptor",
    "bonbons": "descriptor", "torte": "descriptor", "taart": "descriptor",
    "kuchen": "descriptor", "balsam": "descriptor", "balsem": "descriptor",
    "duft": "descriptor", "geur": "descriptor", "snoep": "descriptor", "gummi": "descriptor",
    "offner": "accessory", "opener": "accessory", "glas": "accessory", "glaser": "accessory",
    "glazen": "accessory", "halter": "accessory", "houder": "accessory", "regal": "accessory",
    "kuhler": "accessory", "koeler": "accessory", "stander": "accessory",
    "standaard": "accessory", "becher": "accessory", "krug": "accessory",
    "karaffe": "accessory", "karaf": "accessory", "etui": "accessory", "dose": "accessory",
    "schneider": "accessory", "knipper": "accessory", "zieher": "accessory",
    "trekker": "accessory", "untersetzer": "accessory", "onderzetter": "accessory",
}

# Accessories that are a drink's container and, for another good, a part of it ("wine
# barrel" is a barrel; a "break-barrel air rifle" is a rifle): they undo drinks only.
DRINK_ACCESSORIES = (
    "barrel", "barrels", "tonneau", "tonneaux", "barril", "barriles", "barrica", "barricas",
    "barile", "botte", "fust", "barrel planter",
)
# Accessories that, directly before a smoke's name, say which kind it is ("filter
# cigarettes"); with a word between they are the accessory ("filtres à cigarettes").
PART_MODIFIERS = frozenset({"filter", "filtre", "filtro"})

# Ammunition: words that name it only beside a calibre or a hunting or shooting word
# ("Cartuchos de caza calibre 12", "cartucce calibro 12 per caccia"); elsewhere a printer
# cartridge, a vape cartridge, a shell or a ball.
WEAK_AMMUNITION = (
    "cartridge", "cartridges", "cartouche", "cartouches", "patrone", "patronen", "cartucho",
    "cartuchos", "cartuccia", "cartucce", "patroon", "shell", "shells", "shotshells",
    "bullet", "bullets", "balles", "kugeln", "balas", "proiettili", "kogels", "projectiles",
    "projectielen", "projeteis", "plombs", "pellets",
)
HUNTING = (
    "hunting", "hunt", "shooting", "chasse", "tir", "jagd", "schiessen", "schiesssport",
    "sportschiessen", "caza", "tiro", "caccia", "jacht", "schietsport", "caca", "skeet",
    "clay shooting", "ball trap",
)
# A calibre ("calibre 12", "Kaliber .22" folded "kaliber 22") or a gauge ("12 gauge").
CALIBRE_WORDS = ("calibre", "caliber", "calibro", "kaliber", "kal")

# The adult flag from two words that say it only together: a qualifier (anal, intimate,
# vibrating) near an object (a lubricant, a ring, an egg, beads, a toy): "Lubricante anal",
# "anello vibrante", "perles anales".
ADULT_QUALIFIERS = (
    "anal", "anale", "anales", "anali", "anaal", "anais", "intimate", "intime", "intimes",
    "intim", "intimo", "intima", "intimi", "intimos", "intimas", "intiem", "intieme",
    "vibrating", "vibrant", "vibrante", "vibrantes", "vibranti", "vibrierend", "vibrierender",
    "vibrierendes", "vibrierende", "vibrerend", "vibrerende", "vibratorio", "vibratoria",
)
ADULT_OBJECTS = frozenset(
    "lubricant lubricants lube lubrifiant lubrifiants gleitmittel gleitgel lubricante "
    "lubricantes lubrificante lubrificanti lubrificantes glijmiddel glijmiddelen ring rings "
    "anneau anneaux anillo anillos anello anelli anel aneis egg eggs oeuf oeufs ei eier huevo "
    "huevos uovo ovetto ovo ovos eitje bullet beads perles kugeln bolas palline perline "
    "kralen toy toys jouet jouets spielzeug juguete juguetes giocattolo giocattoli speeltje "
    "speeltjes brinquedo brinquedos plug plugs dilatador dilatatore".split()
)
