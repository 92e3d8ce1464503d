"""Shared tiny tree and labelled feed for the classify and model CLI tests."""

from __future__ import annotations

import csv
import random
from pathlib import Path

from catmap.classify.features import ProductTexts

_NODES = (
    (
        "1000",
        "-",
        "Footwear",
        "who=female,male,unisex age=adult,kids,baby",
        "shoes; footwear",
        "chaussures",
        "Schuhe",
        "zapatos",
    ),
    ("1100", "1000", "Boots", ".", "boots", "bottes", "Stiefel", "botas"),
    (
        "1101",
        "1100",
        "Ankle boots",
        ".",
        "ankle boots; booties",
        "bottines",
        "Stiefeletten",
        "botines",
    ),
    (
        "1102",
        "1100",
        "Rain boots",
        ".",
        "rain boots; wellies",
        "bottes de pluie",
        "Gummistiefel",
        "botas de agua",
    ),
    ("1200", "1000", "Sandals", ".", "sandals", "sandales", "Sandalen", "sandalias"),
    ("1201", "1200", "Flip-flops", ".", "flip flops", "tongs", "Zehentrenner", "chanclas"),
    (
        "1202",
        "1200",
        "Sport sandals",
        ".",
        "sport sandals; hiking sandals",
        "sandales de randonnée",
        "Trekkingsandalen",
        "sandalias deportivas",
    ),
    ("2000", "-", "Kitchen", "none", "kitchen", "cuisine", "Küche", "cocina"),
    ("2100", "2000", "Coffee", ".", "coffee makers", "cafetières", "Kaffeemaschinen", "cafeteras"),
    (
        "2101",
        "2100",
        "Espresso machines",
        ".",
        "espresso machine",
        "machine à expresso",
        "Espressomaschine",
        "cafetera espresso",
    ),
    (
        "2102",
        "2100",
        "Coffee grinders",
        ".",
        "coffee grinder",
        "moulin à café",
        "Kaffeemühle",
        "molinillo de café",
    ),
)
TINY_TREE = "@tree-version {version}\n" + "".join(
    f"{i} | {parent} | {name} | {audience} | - | en: {en} | fr: {fr} | de: {de} | es: {es}\n"
    for i, parent, name, audience, en, fr, de, es in _NODES
)

LEAF_WORDS = {
    "1101": ["ankle boots", "bottines", "Stiefeletten", "botines"],
    "1102": ["rain boots", "bottes de pluie", "Gummistiefel", "wellies"],
    "1201": ["flip flops", "tongs", "Zehentrenner", "chanclas"],
    "1202": ["sport sandals", "sandales de randonnée", "Trekkingsandalen", "hiking sandals"],
    "2101": ["espresso machine", "machine à expresso", "Espressomaschine", "cafetera espresso"],
    "2102": ["coffee grinder", "moulin à café", "Kaffeemühle", "molinillo de café"],
}
RETAILER_PATHS = {
    "1101": "Femmes > Chaussures > Bottines",
    "1102": "Outdoor > Regen",
    "1201": "Plage",
    "1202": "Outdoor > Randonnée",
    "2101": "Maison > Café",
    "2102": "Maison > Café",
}


def write_tree(folder: Path, version: int = 1) -> Path:
    """Write the tiny tree as ``tree-v{version}.txt`` in ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"tree-v{version}.txt"
    path.write_text(TINY_TREE.format(version=version), encoding="utf-8")
    return path


def labelled_rows(count: int, seed: int = 0) -> list[dict[str, str]]:
    """Invented labelled products over the tiny tree, with a train/valid/test split."""
    rng = random.Random(seed)
    brands = ["Velmora", "Quintaro", "Brisket Lane", "Oddwhistle"]
    extras = ["black", "noir", "XL", "2 pack", "new", "classic", "leather", "38", "42"]
    rows = []
    for i in range(count):
        leaf = sorted(LEAF_WORDS)[i % len(LEAF_WORDS)]
        title = f"{rng.choice(brands)} {rng.choice(LEAF_WORDS[leaf])} {rng.choice(extras)}"
        split = ("train", "train", "train", "valid", "test")[i % 5]
        rows.append(
            {
                "product_id": f"P{i:05d}",
                "title": title,
                "description": f"A {rng.choice(extras)} product.",
                "brand": rng.choice(brands),
                "retailer_category": RETAILER_PATHS[leaf],
                "price": f"{rng.randint(5, 200)}.99",
                "currency": "EUR",
                "gold_node": leaf,
                "split": split,
            }
        )
    return rows


def write_labelled_feed(path: Path, count: int = 240, seed: int = 0) -> Path:
    """Write an invented labelled feed as CSV."""
    rows = labelled_rows(count, seed)
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    return path


def texts_and_labels(rows: list[dict[str, str]]) -> tuple[ProductTexts, list[str]]:
    """The model's texts and the gold node ids of labelled rows (see :func:`labelled_rows`)."""
    texts = ProductTexts(
        [r["title"] for r in rows],
        [r["retailer_category"] for r in rows],
        [r["brand"] for r in rows],
        [r["description"] for r in rows],
    )
    return texts, [r["gold_node"] for r in rows]
