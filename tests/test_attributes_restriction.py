"""Tests for catmap.attributes.restriction: the node decides, keywords where it cannot."""

from __future__ import annotations

import csv
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from catmap._text import fold
from catmap.attributes import (
    RESTRICTION_CAUTION,
    RESTRICTIONS,
    AttributeExtractor,
    BrandDictionary,
    restriction_from_text,
)
from catmap.attributes.restriction import (
    is_generic_node,
    node_context,
    quiet_flags,
    restriction_for_node,
)
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree, load_tree

DATA = Path(__file__).parent / "data" / "restriction_labelled.csv"
SETS = sorted((Path(__file__).parent / "data").glob("restriction_*.csv"))

TREE = """\
@tree-version 1
1000 | - | Food and drink | none | - | en: food | fr: alimentation | de: Lebensmittel | es: x
1010 | 1000 | Drinks | . | - | en: drinks | fr: boissons | de: Getränke | es: bebidas
1011 | 1010 | Wine | . | alcohol | en: wine | fr: vin | de: Wein | es: vino
1012 | 1010 | Juices | . | - | en: juice | fr: jus | de: Saft | es: zumo
2000 | - | Home | none | - | en: home | fr: maison | de: Haus | es: casa
2010 | 2000 | Gifts | . | - | en: gifts | fr: cadeaux | de: Geschenke | es: regalos
2011 | 2010 | Gift sets | . | - | en: gift set | fr: coffret | de: Geschenkset | es: set de regalo
2020 | 2000 | Kitchen | . | - | en: kitchen | fr: cuisine | de: Küche | es: cocina
2021 | 2020 | Kitchen knives | . | - | en: kitchen knife | fr: couteau | de: Messer | es: x
3000 | - | Leisure | none | tobacco | en: leisure | fr: x | de: x | es: x
3010 | 3000 | Smoking | . | - | en: smoking | fr: x | de: x | es: x
3011 | 3010 | Pipe tobacco | . | - | en: pipe tobacco | fr: x | de: x | es: x
4000 | - | Kitchen and dining | none | - | en: kitchen | fr: cuisine | de: Küche | es: cocina
4010 | 4000 | Cutlery | . | - | en: cutlery | fr: couverts | de: Besteck | es: cubiertos
4011 | 4010 | Table knives | . | - | en: table knife | fr: x | de: x | es: x
5000 | - | Toys | none | - | en: toys | fr: jouets | de: Spielzeug | es: juguetes
5010 | 5000 | Pretend play | . | - | en: pretend play | fr: x | de: x | es: x
5011 | 5010 | Toy weapons | . | - | en: toy sword | fr: x | de: x | es: x
"""


@pytest.fixture(scope="module")
def tree(tmp_path_factory: pytest.TempPathFactory) -> CategoryTree:
    path = Path(tmp_path_factory.mktemp("tree")) / "tree.txt"
    path.write_text(TREE, encoding="utf-8")
    return load_tree(path)


@pytest.fixture(scope="module")
def extractor(tree: CategoryTree) -> AttributeExtractor:
    return AttributeExtractor(brands=BrandDictionary([]), tree=tree)


def test_the_node_decides(extractor: AttributeExtractor) -> None:
    assert extractor.extract(Product("1", "Reserve 2019, 75 cl"), "1011").restriction == "alcohol"
    # A leaf that is not restricted stays unrestricted whatever its title says.
    assert extractor.extract(Product("2", "Kitchen knife 20 cm"), "2021").restriction == ""
    assert extractor.extract(Product("3", "Grape juice, wine grapes"), "1012").restriction == ""


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        ("Gift set with a bottle of red wine", "alcohol"),
        ("Coffret whisky et deux verres", "alcohol"),
        ("Geschenkset Rotwein", "alcohol"),
        ("Set de regalo vino tinto", "alcohol"),
        ("E-liquid starter kit", "tobacco"),
        ("Coffret e-liquide menthe", "tobacco"),
        ("Cigar humidor gift set with cigars", "tobacco"),
        ("Nikotin Liquid Set", "tobacco"),
        ("Pocket knife gift box", "weapons"),
        ("Crossbow starter set", "weapons"),
        ("Air rifle gift pack", "weapons"),
        ("Armbrust Geschenkset", "weapons"),
        ("Coffret vodka", "alcohol"),
        ("Navaja de regalo", "weapons"),
        ("Scented candle and bath salts", ""),
    ],
)
def test_a_generic_node_reads_keywords(
    extractor: AttributeExtractor, title: str, restriction: str
) -> None:
    assert extractor.extract(Product("1", title), "2011").restriction == restriction


def test_without_a_node_keywords_are_read(extractor: AttributeExtractor) -> None:
    assert extractor.extract(Product("1", "Vodka 70 cl"), None).restriction == "alcohol"
    assert extractor.extract(Product("1", "Vodka 70 cl"), "2000").restriction == "alcohol"


@pytest.mark.parametrize(
    "title",
    [
        "Crystal wine glasses, set of 6", "Wine red jumper", "Verres à vin", "Weinglas",
        "Knife sharpener", "Alcohol-free sparkling drink", "Nicotine free herbal blend",
        "Copas de vino",
    ],
)
def test_harmless_phrases_holding_a_keyword(title: str) -> None:
    assert restriction_from_text(title) == ("", "")


def test_generic_node_names() -> None:
    assert is_generic_node("Gift sets")
    assert not is_generic_node("Kitchen knives")


def test_the_caution_is_a_constant_that_says_it_is_not_advice() -> None:
    assert "not legal advice" in RESTRICTION_CAUTION
    assert "policy" in RESTRICTION_CAUTION


@given(st.text(max_size=80))
def test_never_raises_and_ignores_case_and_outer_spaces(text: str) -> None:
    plain = restriction_from_text(text)
    assert plain[0] in RESTRICTIONS or plain[0] == ""
    if text.upper().lower() == text.lower():
        assert restriction_from_text(f"  {text.upper()} ")[0] == plain[0]


# -- seven languages, negative cues, leaves ------------------------------------------------


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        ("Grappa di Barolo 70 cl", "alcohol"),
        ("Coltello da caccia con fodero", "weapons"),
        ("Paracetamolo 500 mg 20 compresse", "medicine"),
        ("Sigari toscani confezione da 5", "tobacco"),
        ("Jonge jenever 1 liter", "alcohol"),
        ("Jachtmes met leren schede", "weapons"),
        ("Pijnstiller extra sterk", "medicine"),
        ("Vinho tinto Douro", "alcohol"),
        ("Faca de caça com bainha", "weapons"),
        ("Charutos cubanos caixa de 5", "tobacco"),
        ("Weizenbier 20 x 0,5 l", "alcohol"),
        ("Pfeifentabak 50 g", "tobacco"),
        ("Vibratore ricaricabile", "adult"),
    ],
)
def test_keywords_in_italian_dutch_and_portuguese(title: str, restriction: str) -> None:
    assert restriction_from_text(title)[0] == restriction


@pytest.mark.parametrize(
    "title",
    [
        # The Italian false positives: "puro" is Spanish for a cigar, Italian for "pure".
        "Padella antiaderente in alluminio puro 28 cm",
        "Olio extravergine di oliva puro",
        "Tablet 10 pollici", "Pad per mouse XXL",
        # A flavour, scent, colour or shape named after a restricted good.
        "Whisky-scented candle", "Tobacco brown leather belt", "Cigar-shaped USB lighter",
        "Vodka-flavoured lip balm", "Bougie parfum whisky", "Ceinture couleur tabac",
        "Candela profumata al whisky", "Caramelle al gusto di rum", "Geurkaars whisky",
        "Cinto cor de tabaco", "Bourbon vanilla pods", "Toy sword foam", "Pesce spada fresco",
        # Drinks without alcohol.
        "Cerveza sin alcohol 0,0", "Birra analcolica 33 cl", "Alcoholvrij bier 0,0",
        "Shag rug grey 160 x 230",
    ],
)
def test_traps_are_not_flagged(title: str) -> None:
    assert restriction_from_text(title) == ("", ""), restriction_from_text(title)


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        # A flavour word alone does not undo the drink or the smoke.
        ("Raspberry flavoured vodka 70 cl", "alcohol"),
        ("E-liquide parfum fraise 10 ml", "tobacco"),
        # Negative cues undo drinks, smokes and weapons, not an adult product or a medicine.
        ("Erotic massage candle", "adult"),
    ],
)
def test_negative_cues_are_narrow(title: str, restriction: str) -> None:
    assert restriction_from_text(title)[0] == restriction


def test_an_unrestricted_leaf_still_reads_unmistakable_keywords(
    extractor: AttributeExtractor,
) -> None:
    # The classifier put a hunting knife and a grappa on leaves the tree leaves unrestricted.
    assert extractor.extract(Product("1", "Coltello da caccia"), "2021").restriction == "weapons"
    assert extractor.extract(Product("2", "Grappa 70 cl"), "1012").restriction == "alcohol"
    # General words still do not flag such a leaf.
    assert extractor.extract(Product("3", "Chef knife 20 cm"), "2021").restriction == ""


def test_a_restricted_node_yields_only_to_another_named_good(
    extractor: AttributeExtractor,
) -> None:
    got = extractor.extract(Product("1", "Paracetamolo 500 mg compresse"), "3011")
    assert got.restriction == "medicine"
    assert extractor.extract(Product("2", "Robusto No. 4"), "3011").restriction == "tobacco"
    assert extractor.extract(Product("3", "Tabacco e paracetamolo"), "3011").restriction == (
        "tobacco"
    )


def test_the_labelled_set_covers_every_flag_in_seven_languages() -> None:
    rows = list(csv.DictReader(DATA.open(encoding="utf-8", newline="")))
    languages = {"en", "fr", "de", "es", "it", "nl", "pt"}
    for flag in RESTRICTIONS:
        assert {r["lang"] for r in rows if r["restriction"] == flag} == languages
    assert {r["lang"] for r in rows if r["kind"] == "trap"} == languages
    assert all(r["restriction"] == "" for r in rows if r["kind"] in ("trap", "plain"))


# -- what the product is: traps in seven languages -----------------------------------------
# Each names a restricted good without being one. Invented titles; which products count as
# the good follows the labelled sets' convention (an accessory, a scent, a colour, a toy or
# a drink without alcohol is not the good; common practice, no source).


@pytest.mark.parametrize(
    "title",
    [
        # an accessory or a tool of a drink (glass, opener, stones, cooler, tester)
        "Whisky glasses set of 2", "Champagne flutes set of 4", "Beer bottle opener",
        "Décapsuleur bière", "Flaschenöffner Bier", "Bieröffner Edelstahl", "Weinregal Holz",
        "Abridor de cerveza", "Piedras de whisky", "Apribottiglie birra", "Pietre per whisky",
        "Whiskystenen set van 9", "Wijnkoeler RVS", "Abre-garrafas de cerveja",
        "Pedras de whisky", "Alcohol tester digital", "Weinkühler Edelstahl",
        # a smoke's accessory (humidor, ashtray, cutter, case, lighter, papers)
        "Cigar humidor cedar", "Cendrier en verre", "Aschenbecher Glas", "Cenicero de cristal",
        "Posacenere in vetro", "Asbak glas", "Cinzeiro de vidro", "Zigarrenabschneider",
        "Cortapuros doble hoja", "Tagliasigari in acciaio", "Sigarenknipper",
        "Corta charutos", "Cigarette case silver", "Rolling papers king size slim",
        # a kitchen, table or craft knife
        "Chef's knife 20 cm", "Bread knife serrated", "Couteau de cuisine 20 cm",
        "Couteau à pain", "Kochmesser 20 cm", "Brotmesser Wellenschliff",
        "Cuchillo de cocina 20 cm", "Cuchillo jamonero", "Coltello da cucina 20 cm",
        "Coltello per il pane", "Koksmes 20 cm", "Broodmes", "Faca de cozinha 20 cm",
        "Faca de pão", "Steak knives set of 6", "Santoku knife 18 cm", "Knife sharpener",
        # a toy, a costume, a shape
        "Toy sword plastic", "Wasserpistole für Kinder", "Waterpistool", "Heißklebepistole",
        "Épée en mousse pour enfants", "Kinder Pfeil und Bogen Set", "Sword-shaped letter opener",
        "Katana umbrella", "Toy handcuffs police",
        # a scent, a flavour carrier, a colour
        "Tobacco-scented candle", "Bougie parfum whisky", "Duftkerze Whisky",
        "Vela aroma a ron", "Candela profumata al whisky", "Geurkaars whisky",
        "Vela perfumada de whisky", "Beer-scented shower gel", "Whisky fudge 150 g",
        "Rum cake", "Wine gums 200 g", "Champagne coloured dress", "Robe couleur champagne",
        "Kleid champagnerfarben", "Vestido color champán", "Abito color champagne",
        "Jurk champagnekleur", "Vestido cor champanhe", "Tabakbraune Stiefel",
        "Cognac leather belt",
        # a drink without alcohol
        "Alcohol-free gin 70 cl", "Vin sans alcool rouge", "Alkoholfreier Sekt",
        "Vino sin alcohol", "Vino analcolico", "Alcoholvrije wijn", "Vinho sem álcool",
        "Pils 0,0 % vol", "Kinderpunsch alkoholfrei",
        # hand sanitiser and cleaning alcohol
        "Hand sanitiser 500 ml 70% alcohol", "Gel hydroalcoolique 100 ml",
        "Desinfektionsgel 70 % Alkohol", "Gel hidroalcohólico 500 ml",
        "Gel igienizzante mani 80 ml", "Alcoholgel handen 100 ml", "Álcool gel 70%",
        "Brewer's yeast flakes", "Levadura de cerveza en copos",
        # adult-size clothing, medicine accessories, supplements
        "Adult size unicorn onesie", "Déguisement taille adulte", "Pill organiser 7 days",
        "Pilulier semaine", "Medicine cabinet white", "Vitamin C 1000 mg tablets",
        "Magnesium 400 mg Tabletten", "Medicine ball 5 kg",
    ],
)
def test_traps_in_seven_languages(title: str) -> None:
    assert restriction_from_text(title) == ("", ""), restriction_from_text(title)


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        # German and Dutch compounds by their head
        ("Himbeergeist 0,5 l", "alcohol"), ("Kruidenbitter 1 liter", "alcohol"),
        ("Zwetschgenbrand 40% vol", "alcohol"), ("Bierpaket Craft 12 Flaschen", "alcohol"),
        ("Wijnpakket 6 flessen rood", "alcohol"), ("Zigarettentabak 40 g", "tobacco"),
        ("Kautabak 50 g", "tobacco"), ("Outdoormesser feststehend", "weapons"),
        ("Survivalmes met schede", "weapons"), ("Luftdruckpistole 4,5 mm", "weapons"),
        ("Auflegevibrator", "adult"), ("Kopfschmerztabletten 20 Stück", "medicine"),
        ("Hustensaft 200 ml", "medicine"),
        # stems and active-ingredient endings
        ("Antihistaminique comprimés", "medicine"), ("Anti-histamínico comprimidos", "medicine"),
        ("Antistaminico compresse", "medicine"), ("Naproxen 250 mg tablets", "medicine"),
        ("Cetirizin 10 mg Filmtabletten", "medicine"), ("Omeprazolo 20 mg capsule", "medicine"),
        ("Jeu de cartes érotique", "adult"), ("Erotische kaarten", "adult"),
        # a condition with a dosage form, a nicotine replacement
        ("Hay fever tablets 30", "medicine"), ("Sirop contre la toux enfant", "medicine"),
        ("Jarabe para la tos", "medicine"), ("Nicotine gum 2 mg mint", "medicine"),
        ("Nicotine chewing gum 2 mg", "medicine"), ("Gomme à mâcher nicotine 2 mg", "medicine"),
        # French elision, plurals in the seven languages
        ("Couteau à cran d'arrêt", "weapons"), ("Carreaux d'arbalète x 12", "weapons"),
        ("Vins rouges de Bordeaux x 6", "alcohol"), ("Vini rossi toscani 6 bottiglie", "alcohol"),
        # an alcohol strength, a bottle's measure beside a weak word, a vape's dose or puffs
        ("Reserva 2018 tinto 13,5% vol", "alcohol"), ("Rosé de Provence 2022 75 cl", "alcohol"),
        ("Porto Ruby 75 cl", "alcohol"), ("Recharges pods menthe 20 mg", "tobacco"),
        ("Einweg Vape 800 Züge Mango", "tobacco"), ("Svapo 600 tiri anguria", "tobacco"),
        # regional and style names
        ("Ginebra premium 70 cl", "alcohol"), ("Bordeaux Supérieur 2019 75 cl", "alcohol"),
        ("Aguardente bagaceira velha", "alcohol"), ("Licor de café 70 cl", "alcohol"),
        ("Swiss army knife 15 functions", "weapons"), ("Schreckschusspistole 9 mm", "weapons"),
        ("Spray de défense 50 ml", "weapons"),
    ],
)
def test_compounds_stems_and_measures(title: str, restriction: str) -> None:
    assert restriction_from_text(title)[0] == restriction


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        # the good comes with the accessory, or the accessory with the good
        ("Cigar humidor gift set with cigars", "tobacco"),
        ("Coffret whisky et deux verres", "alcohol"),
        ("Gin Tonic Set mit Gläsern", "alcohol"),
        ("Damascus dagger with case", "weapons"),
        ("Rolling tobacco 50 g pouch", "tobacco"),
        # the accessory alone is not the good
        ("Cigar humidor with cutter", ""),
        ("Whisky glasses with gold rim", ""),
    ],
)
def test_accessories_and_what_comes_with_them(title: str, restriction: str) -> None:
    assert restriction_from_text(title)[0] == restriction


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        # A keyword that is also a colour name is the colour away from the title's start...
        ("Jean jacket striped cognac 3XL", ""),
        ("Golf bag classic champagne", ""),
        ("Ear muffs large vintage set cognac", ""),
        # ...unless something says the good is meant, or the title starts with it.
        ("Fine cognac XO 70 cl", "alcohol"),
        ("Coffret champagne brut et deux flûtes", "alcohol"),
        ("Cognac VSOP", "alcohol"),
        ("Cuvée 2015 champagne", "alcohol"),
    ],
)
def test_keywords_that_are_colour_names(title: str, restriction: str) -> None:
    assert restriction_from_text(title)[0] == restriction


@pytest.mark.parametrize(
    ("title", "restriction"),
    [
        # ammunition: a cartridge or a shell beside a calibre or a hunting word, or by its kind
        ("Hunting cartridges 12 gauge x25", "weapons"),
        ("Cartouches de chasse calibre 12, boîte de 25", "weapons"),
        ("Jagdpatronen Kaliber 12/70, 25 Stück", "weapons"),
        ("Hagelpatronen voor de jacht kaliber 12", "weapons"),
        ("Cartuchos de caça calibre 12, caixa de 25", "weapons"),
        ("Cartucce da tiro calibro 12", "weapons"),
        ("Printer ink cartridge black XL", ""), ("Druckerpatronen 4er Pack", ""),
        ("Cable eléctrico calibre 12 AWG 10 m", ""), ("Bullet journal A5 dotted", ""),
        # a drink's container undoes drinks only; a part before a smoke says its kind
        ("Break barrel air rifle 4.5 mm", "weapons"), ("Oak whisky barrel 5 L", ""),
        ("Filter cigarettes menthol 20 pack", "tobacco"),
        ("Cigarette filters slim 6mm 120 pcs", ""), ("Filtros para cigarrillos", ""),
        # cuts of tobacco name it
        ("Halfzware shag 50 gram", "tobacco"), ("Volumentabak 120 g Dose", "tobacco"),
        # the adult flag from a qualifier beside an object
        ("Anal lube water based 100 ml", "adult"), ("Lubrifiant anal 100 ml", "adult"),
        ("Vibrierender Penisring", "adult"), ("Anillo vibrante para parejas", "adult"),
        ("Vibrerende ring voor koppels", "adult"), ("Perles anales en silicone", "adult"),
        ("Silicone lubricant spray for bike chains", ""),
        ("Vibrating massage ball for fitness", ""), ("Gel intime lavant 250 ml", ""),
        # a flavour word before a drink's name: the product tastes of it (not a vape)
        ("Bonbons saveur rhum 200 g", ""), ("Gelato al gusto di whisky", ""),
        ("Rebuçados sabor a whisky", ""), ("Vodka saveur framboise 70 cl", "alcohol"),
        ("E-liquide saveur tabac 10 ml 6 mg", "tobacco"),
        # a fruit, a spice or a number in one language: a drink only with a bottle's measure
        ("Anis étoilé 50 g", ""), ("Anís del Mono 1 L", "alcohol"),
        ("Dubbel bed 140x200", ""), ("Tripel karmeliet 33cl", "alcohol"),
        ("Doce de ginja 300 g", ""), ("Ginjinha 70cl", "alcohol"),
        # cakes, infusions, compotes and alcohols for the skin
        ("Torrone al limoncello 150 g", ""), ("Tisane anis fenouil", ""),
        ("Compote de poire williams", ""), ("Franzbranntwein 500 ml", ""),
        ("Alcool camphré 125 ml", ""), ("Alcool al rosmarino per massaggi", ""),
        # decongestants by name and by ingredient ending
        ("Abschwellendes Nasenspray 10 ml", "medicine"),
        ("Neusspray decongestivum 10 ml", "medicine"),
        ("Oximetazolina spray nasal 15 ml", "medicine"),
        # glasses named after a drink, sharpeners: the accessory is the product
        ("Wine glasses for port, set of 6", ""), ("Copas de vino para cava x6", ""),
        ("Coffret vin rouge avec 2 verres à vin", "alcohol"),
        ("Affûteur de couteaux manuel", ""), ("Aanzetstaal voor messen", ""),
    ],
)
def test_classes_of_phrasing_in_seven_languages(title: str, restriction: str) -> None:
    # Classes of phrasing found in the blind sets, each covered in several languages with
    # titles other than the sets' (common practice, no source).
    assert restriction_from_text(title)[0] == restriction


def test_a_nodes_context_silences_general_keywords(extractor: AttributeExtractor) -> None:
    # An inner kitchen node cannot say, so keywords are read, but "knife" there is a tool.
    assert extractor.extract(Product("1", "Knife 20 cm"), "4000").restriction == ""
    assert extractor.extract(Product("2", "Knife 20 cm"), None).restriction == "weapons"
    # An unmistakable weapon still counts there.
    assert extractor.extract(Product("3", "Crossbow 150 lbs"), "4000").restriction == "weapons"
    # Under toys, a sword is a toy.
    assert extractor.extract(Product("4", "Sword 60 cm"), "5010").restriction == ""
    assert extractor.extract(Product("5", "Sword 60 cm"), "2000").restriction == "weapons"


def test_node_context(tree: CategoryTree) -> None:
    assert node_context(tree, "1011") == ("alcohol", False, frozenset())
    assert node_context(tree, "2011") == ("", True, frozenset())
    assert node_context(tree, "4000") == ("", True, frozenset({"weapons"}))
    assert node_context(tree, "5011") == (
        "", False, frozenset({"weapons", "alcohol", "tobacco"})
    )
    assert quiet_flags(["Garten", "Werkzeuge"]) == frozenset({"weapons"})
    assert quiet_flags(["Moda", "Zapatos"]) == frozenset({"alcohol", "tobacco"})
    assert quiet_flags(["Drinks", "Spirits"]) == frozenset()


def test_the_labelled_sets_stay_read() -> None:
    # Every set in tests/data is read above the targets (recall 0.98, precision 0.95 per
    # flag; no trap flagged). They were all seen while the word lists were written (the two
    # blind sets, fresh4 and fresh5, once they had been scored), so this guards against
    # regressions, not a measure of generalisation (see benchmarks/bench_restriction.py).
    assert len(SETS) >= 6
    for path in SETS:
        rows = list(csv.DictReader(path.open(encoding="utf-8", newline="")))
        for flag in RESTRICTIONS:
            want = [r for r in rows if r["restriction"] == flag]
            got = [r for r in rows if restriction_from_text(r["text"])[0] == flag]
            hit = [r for r in want if restriction_from_text(r["text"])[0] == flag]
            assert len(hit) >= 0.98 * len(want), (path.name, flag)
            assert len(hit) >= 0.95 * len(got), (path.name, flag)
        assert not [r["text"] for r in rows if r["kind"] == "trap" and
                    restriction_from_text(r["text"])[0]], path.name


def test_a_remapped_product_follows_its_new_nodes_context(tree: CategoryTree) -> None:
    # Two inner nodes, neither restricted: only the kitchen one silences "knife", so a move
    # between them can change the flag and the remap follower must re-read the product.
    from catmap.jobs._remap_scoring import AttributeFollower

    follower = AttributeFollower(tree, tree)
    assert follower.changes("2000", "4000")
    assert not follower.changes("4000", "4000")
    row = {"status": "auto", "restriction": "weapons"}
    follower.follow(row, Product("1", "Knife 20 cm"), "4000")
    assert row["restriction"] == ""


@pytest.mark.parametrize("title", ["Bière sans alcool 33 cl", "Alcohol-free lager 6 x 330 ml"])
def test_an_alcohol_free_title_keeps_its_restricted_nodes_flag(title: str) -> None:
    # The title's words stop it raising a flag of its own, not the node's (README, the
    # cautious reading of advertising rules; common practice, no source).
    assert restriction_from_text(title) == ("", "")
    assert restriction_for_node("alcohol", False, fold(title)) == "alcohol"


@pytest.mark.parametrize(
    ("title", "on_a_leaf", "read_all"),
    [
        # "bidi" is also bidirectional (optics, text layout): on an unrestricted leaf it no
        # longer flags; where the node cannot say, the smoke is still read.
        ("10G BiDi SFP+ transceiver 20 km", "", ""),
        ("Unicode bidi algorithm library", "", ""),
        ("Bidis 20 pcs", "", "tobacco"),
        ("Bidi cigarettes pack of 20", "tobacco", "tobacco"),
    ],
)
def test_bidi_flags_tobacco_only_as_a_smoke(title: str, on_a_leaf: str, read_all: str) -> None:
    assert restriction_for_node("", False, fold(title)) == on_a_leaf
    assert restriction_from_text(title)[0] == read_all
