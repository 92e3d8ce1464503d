"""Measure attribute extraction: products per second on one core, and brand accuracy.

Generates (seeded) a dictionary of invented syllable brand names with variants, and titles that
use them: the brand at varying positions, about 8% misspelt mentions, some titles without brand,
some with the brand in the brand field (exact or misspelt). Then runs
:class:`catmap.attributes.AttributeExtractor` over all of them and prints a table.

Brand accuracy is given twice: with every mention where it fell (the timed run), and with the
misspelt mentions that fell away from the title start moved to the start, where the title's
lead fuzzy pass reads them (those products extracted again, outside the timing).

With ``--unseen 0.3`` that share of the brands is left out of the dictionary (their products
keep their true brand), a :class:`catmap.attributes.FeedBrandLearner` is fitted on all the
products first, and the extraction is timed again with it; accuracy is then given for the
products of known and of unseen brands, with and without the learner.

    python benchmarks/bench_attributes.py --titles 100000 [--unseen 0.3]
"""

from __future__ import annotations

import argparse
import dataclasses
import random
import time

from catmap.attributes import (
    AttributeExtractor,
    BrandDictionary,
    BrandEntry,
    FeedBrandLearner,
)
from catmap.records import Product

_ONSETS = ("b", "br", "c", "cl", "d", "dr", "f", "fl", "g", "gr", "h", "k", "l", "m", "n", "p",
           "pr", "qu", "r", "s", "st", "t", "tr", "v", "w", "z", "th", "sk", "j")
_VOWELS = ("a", "e", "i", "o", "u", "ae", "ei", "ou", "ia", "y")
_CODAS = ("", "", "n", "r", "l", "s", "m", "x", "nd", "rt", "ll", "k")
_PRODUCTS = ("wool coat", "linen shirt", "ankle boots", "leather handbag", "running shoes",
             "cotton t-shirt", "hooded sweatshirt", "desk lamp", "ceramic mug", "garden hose",
             "summer dress", "slim jeans", "chef knife", "yoga mat", "backpack", "scarf",
             "phone case", "face cream", "bath towel", "rain jacket")
_AUDIENCE = ("", "", "women's", "men's", "kids", "girls", "boys", "unisex", "damen", "homme")
_COLOURS = ("", "black", "navy", "bordeaux", "dunkelblau", "azul marino", "vieux rose", "khaki",
            "off-white", "anthracite", "")
_SIZES = ("", "M", "L", "8 ans", "age 4-5", "116", "3-6 months", "42")


def _syllable_name(rng: random.Random) -> str:
    n = rng.choice((2, 2, 3, 3, 4))
    return "".join(rng.choice(_ONSETS) + rng.choice(_VOWELS) + rng.choice(_CODAS)
                   for _ in range(n)).capitalize()


def _misspell(name: str, rng: random.Random) -> str:
    i = rng.randrange(1, len(name) - 1)
    kind = rng.choice(("drop", "double", "swap"))
    if kind == "drop":
        return name[:i] + name[i + 1:]
    if kind == "double":
        return name[:i] + name[i] + name[i:]
    return name[:i] + name[i + 1] + name[i] + name[i + 2:]


def make_world(n_brands: int, n_titles: int, seed: int = 0) -> tuple[
        list[BrandEntry], list[tuple[Product, str, Product | None]]]:
    """Return the brand entries and (product, true brand, lead-placed twin) triples.

    The product keeps its brand mention where it fell, misspelt or not. When a misspelt
    mention fell away from the start of the title, the twin is the same product with the
    mention moved to the start (the placement the title's lead fuzzy pass reads); else None.
    """
    rng = random.Random(seed)
    names: list[str] = []
    taken: set[str] = set()
    while len(names) < n_brands:
        name = _syllable_name(rng)
        if rng.random() < 0.2:
            name = f"{name} {_syllable_name(rng)}"
        if len(name) < 6 or name.lower() in taken:
            continue
        taken.add(name.lower())
        names.append(name)
    entries = []
    for name in names:
        variants = [name.upper(), name.lower(), f"{name} GmbH", f"{name}®"]
        if " " in name:
            variants.append(name.replace(" ", ""))
        entries.append(BrandEntry(name, tuple(variants), ("1000",)))
    products = []
    for i in range(n_titles):
        brand = rng.choice(names)
        misspelt = rng.random() < 0.08
        mention = _misspell(brand, rng) if misspelt else rng.choice(
            (brand, brand, brand.upper(), brand.lower()))
        words = [w for w in (rng.choice(_AUDIENCE), rng.choice(_COLOURS),
                             rng.choice(_PRODUCTS)) if w]
        roll = rng.random()
        field = ""
        truth = brand
        if roll < 0.10:
            truth = ""  # no brand at all
            title = " ".join(words)
        elif roll < 0.40:
            field = mention  # brand in the field; title without it
            title = " ".join(words)
        elif roll < 0.85:
            title = " ".join([mention, *words])  # brand first
        else:
            title = " ".join([*words, "by", mention]) if rng.random() < 0.5 else " ".join(
                [words[0], mention, *words[1:]])
        lead_title = ""
        if misspelt and field == "" and truth and not title.startswith(mention):
            lead_title = " ".join([mention, *words])
        sentence_case = rng.random() < 0.5
        product = Product(str(i), title.capitalize() if sentence_case else title, brand=field,
                          size=rng.choice(_SIZES), colour=rng.choice(_COLOURS)
                          if rng.random() < 0.3 else "")
        twin = None
        if lead_title:
            twin = dataclasses.replace(
                product, title=lead_title.capitalize() if sentence_case else lead_title)
        products.append((product, truth, twin))
    return entries, products


def main() -> None:
    """Parse options, run, print the table."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--brands", type=int, default=10_000, help="brands in the dictionary")
    parser.add_argument("--titles", type=int, default=1_000_000, help="products to extract")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--unseen", type=float, default=0.0,
                        help="share of brands left out of the dictionary (adds a learner run)")
    args = parser.parse_args()
    if args.unseen:
        open_world(args.brands, args.titles, args.seed, args.unseen)
        return

    t0 = time.perf_counter()
    entries, products = make_world(args.brands, args.titles, args.seed)
    t1 = time.perf_counter()
    dictionary = BrandDictionary(entries)
    extractor = AttributeExtractor(brands=dictionary, tree=None)
    extractor.extract(Product("warm-up", "warm up"), None)
    t2 = time.perf_counter()
    c2 = time.process_time()
    found = [extractor.extract(product, None).brand for product, _truth, _twin in products]
    t3 = time.perf_counter()
    c3 = time.process_time()
    # Accuracy with misspelt mentions where they fell, and with those away from the start
    # moved to the start (the twins; extracted apart, outside the timing).
    correct = correct_lead = 0
    misspelt_total = misspelt_right = misspelt_right_lead = moved = 0
    for (product, truth, twin), brand in zip(products, found, strict=True):
        brand_lead = brand if twin is None else extractor.extract(twin, None).brand
        moved += twin is not None
        correct += brand == truth
        correct_lead += brand_lead == truth
        text = product.brand or product.title
        if truth and truth.lower() not in text.lower():
            misspelt_total += 1
            misspelt_right += brand == truth
            misspelt_right_lead += brand_lead == truth
    n = len(products)
    rows = [
        ("brands in dictionary", f"{len(dictionary):,}"),
        ("products", f"{n:,}"),
        ("generate (s)", f"{t1 - t0:.1f}"),
        ("build dictionary (s)", f"{t2 - t1:.1f}"),
        ("extract all attributes (s)", f"{t3 - t2:.1f}"),
        ("extract, CPU time (s)", f"{c3 - c2:.1f}"),
        ("products / s (wall clock)", f"{n / (t3 - t2):,.0f}"),
        ("products / s (CPU time, one core)", f"{n / max(1e-9, c3 - c2):,.0f}"),
        ("brand accuracy", f"{correct / n:.4f}"),
        ("misspelt mentions", f"{misspelt_total:,}"),
        ("  of them away from the title start", f"{moved:,}"),
        ("brand accuracy on misspelt", f"{misspelt_right / max(1, misspelt_total):.4f}"),
        ("brand accuracy, misspelt moved to start", f"{correct_lead / n:.4f}"),
        ("  on misspelt, moved to start", f"{misspelt_right_lead / max(1, misspelt_total):.4f}"),
    ]
    width = max(len(k) for k, _ in rows)
    for key, value in rows:
        print(f"{key:<{width}}  {value:>12}")


def open_world(n_brands: int, n_titles: int, seed: int, unseen_share: float) -> None:
    """Time and score extraction with part of the brands unknown, with and without a learner."""
    entries, products = make_world(n_brands, n_titles, seed)
    rng = random.Random(seed + 1)
    unseen = {e.name for e in entries if rng.random() < unseen_share}
    dictionary = BrandDictionary([e for e in entries if e.name not in unseen])
    plain = AttributeExtractor(brands=dictionary, tree=None)
    plain.extract(Product("warm-up", "warm up"), None)
    items = [product for product, _truth, _twin in products]
    c0 = time.process_time()
    found_plain = [plain.extract(product, None).brand for product in items]
    c1 = time.process_time()
    learner = FeedBrandLearner(dictionary=dictionary).fit(items)
    c2 = time.process_time()
    learned = AttributeExtractor(brands=dictionary, tree=None, feed_brands=learner)
    found_learned = [learned.extract(product, None).brand for product in items]
    c3 = time.process_time()
    rows = [("brands in dictionary", f"{len(dictionary):,}"), ("left out", f"{len(unseen):,}"),
            ("products", f"{len(items):,}")]
    for label, found in (("dictionary only", found_plain), ("with learner", found_learned)):
        for part in ("known", "unseen"):
            pairs = [(f, t) for f, (_p, t, _w) in zip(found, products, strict=True)
                     if (t in unseen) == (part == "unseen")]
            right = sum(f == t for f, t in pairs)
            rows.append((f"brand accuracy, {part}, {label}", f"{right / max(1, len(pairs)):.4f}"))
    n = len(items)
    rows += [
        ("extract, dictionary only (products/s CPU)", f"{n / max(1e-9, c1 - c0):,.0f}"),
        ("fit learner (products/s CPU)", f"{n / max(1e-9, c2 - c1):,.0f}"),
        ("extract with learner (products/s CPU)", f"{n / max(1e-9, c3 - c2):,.0f}"),
        ("titles brands learned", f"{len(learner.learned_):,}"),
    ]
    width = max(len(k) for k, _ in rows)
    for key, value in rows:
        print(f"{key:<{width}}  {value:>12}")


if __name__ == "__main__":
    main()
