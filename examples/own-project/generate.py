"""Write the invented example of a project of one's own (README, "A project of your own").

A small tree of a garden and crafts shop, a labelled feed of it and a new retailer's daily file.
Every name is invented. Run from the repository root to rebuild the files (seeded: the same
files each time): ``python examples/own-project/generate.py``.
"""

from __future__ import annotations

import csv
import random
from pathlib import Path

HERE = Path(__file__).resolve().parent

# id, parent, name, audience, en, fr, de, es
NODES = (
    ("100", "-", "Garden", "none", "garden", "jardin", "Garten", "jardín"),
    ("110", "100", "Plants", ".", "plants", "plantes", "Pflanzen", "plantas"),
    ("111", "110", "Seeds", ".", "seeds; seed packet", "graines", "Samen", "semillas"),
    ("112", "110", "Bulbs", ".", "bulbs; flower bulbs", "bulbes", "Blumenzwiebeln", "bulbos"),
    ("120", "100", "Garden tools", ".", "garden tools", "outils de jardin", "Gartengeräte",
     "herramientas de jardín"),
    ("121", "120", "Spades and shovels", ".", "spade; shovel", "bêche; pelle", "Spaten; Schaufel",
     "pala"),
    ("122", "120", "Pruning shears", ".", "pruning shears; secateurs", "sécateur",
     "Gartenschere", "tijeras de podar"),
    ("123", "120", "Watering cans", ".", "watering can", "arrosoir", "Gießkanne", "regadera"),
    ("130", "100", "Outdoor lighting", ".", "outdoor lighting", "éclairage extérieur",
     "Außenbeleuchtung", "iluminación exterior"),
    ("131", "130", "Lanterns", ".", "lantern; solar lantern", "lanterne", "Laterne", "farol"),
    ("200", "-", "Crafts", "none", "crafts; hobby", "loisirs créatifs", "Basteln",
     "manualidades"),
    ("210", "200", "Sewing", ".", "sewing", "couture", "Nähen", "costura"),
    ("211", "210", "Thimbles", ".", "thimble", "dé à coudre", "Fingerhut", "dedal"),
    ("212", "210", "Sewing thread", ".", "sewing thread", "fil à coudre", "Nähgarn",
     "hilo de coser"),
    ("220", "200", "Painting", ".", "painting", "peinture", "Malen", "pintura"),
    ("221", "220", "Brushes", ".", "paint brush", "pinceau", "Pinsel", "pincel"),
    ("222", "220", "Acrylic paints", ".", "acrylic paint", "peinture acrylique", "Acrylfarbe",
     "pintura acrílica"),
)

# The words a retailer uses for each leaf's products, in its own catalogue.
WORDS = {
    "111": ["tomato seeds", "basil seed packet", "sunflower seeds", "carrot seeds"],
    "112": ["tulip bulbs", "daffodil bulbs", "crocus bulbs", "allium bulbs"],
    "121": ["border spade", "digging shovel", "ash handle spade", "snow and soil shovel"],
    "122": ["bypass secateurs", "anvil pruning shears", "rose pruner", "hedge secateurs"],
    "123": ["watering can 10 l", "indoor watering can", "metal watering can", "rose spout can"],
    "131": ["solar lantern", "hanging lantern", "candle lantern", "paper lantern"],
    "211": ["metal thimble", "leather thimble", "quilting thimble", "thimble set"],
    "212": ["polyester thread", "cotton sewing thread", "thread spools", "overlock thread"],
    "221": ["flat brush", "round brush set", "fan brush", "detail brush"],
    "222": ["acrylic paint set", "acrylic colour tube", "matt acrylic paint", "acrylic primer"],
}
SHOP_PATHS = {
    "111": "Garden > Sowing",
    "112": "Garden > Sowing",
    "121": "Garden > Tools",
    "122": "Garden > Tools",
    "123": "Garden > Watering",
    "131": "Garden > Decoration",
    "211": "Hobby > Haberdashery",
    "212": "Hobby > Haberdashery",
    "221": "Hobby > Art supplies",
    "222": "Hobby > Art supplies",
}
MAKERS = ["Brambleworth", "Ostrelia", "Fennick & Daw", "Quillmere", "Tarrow"]
EXTRAS = ["", "green", "large", "2 pack", "classic", "eco", "blue", "small", "set of 3"]
# Titles that name no product kind: a reviewer has to look at these.
VAGUE = ["gift box", "starter kit", "spring bundle", "surprise set", "bestseller"]


def tree_text() -> str:
    """The example tree in catmap's tree file format (taxonomies/README.md)."""
    lines = ["# An invented garden and crafts shop's own tree.", "@tree-version 1"]
    for node_id, parent, name, audience, en, fr, de, es in NODES:
        lines.append(
            f"{node_id} | {parent} | {name} | {audience} | - | en: {en} | fr: {fr} | "
            f"de: {de} | es: {es}"
        )
    return "\n".join(lines) + "\n"


def product(rng: random.Random, leaf: str) -> tuple[str, str, str]:
    """An invented product of a leaf: title, maker, price."""
    maker = rng.choice(MAKERS)
    words = rng.choice(VAGUE) if rng.random() < 0.08 else rng.choice(WORDS[leaf])
    title = " ".join(part for part in (maker, words, rng.choice(EXTRAS)) if part)
    return title, maker, f"{rng.randint(2, 60)}.{rng.choice(('00', '50', '95', '99'))}"


def write_labelled(path: Path, count: int, rng: random.Random) -> None:
    """A labelled feed: the shop's products with the node of each (column gold_node)."""
    leaves = sorted(WORDS)
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["sku", "name", "maker", "shop_path", "price", "currency", "gold_node"])
        for i in range(count):
            leaf = leaves[i % len(leaves)]
            title, maker, price = product(rng, leaf)
            writer.writerow([f"GC{i:05d}", title, maker, SHOP_PATHS[leaf], price, "EUR", leaf])


def write_new_feed(path: Path, count: int, rng: random.Random) -> None:
    """A new retailer's daily file: other column names, a semicolon, no labels."""
    leaves = sorted(WORDS)
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle, delimiter=";")
        writer.writerow(["item_no", "product_name", "brand", "department", "price_eur"])
        for i in range(count):
            leaf = rng.choice(leaves)
            title, maker, price = product(rng, leaf)
            department = SHOP_PATHS[leaf].replace("Garden", "Outdoor").replace("Hobby", "Make")
            writer.writerow([f"NS-{i:04d}", title, maker, department, price])


def main() -> None:
    """Write tree.txt, labelled.csv and new-shop_2026-11-30.csv next to this script."""
    rng = random.Random(0)
    (HERE / "tree.txt").write_text(tree_text(), encoding="utf-8")
    write_labelled(HERE / "labelled.csv", 1500, rng)
    write_new_feed(HERE / "new-shop_2026-11-30.csv", 400, rng)


if __name__ == "__main__":
    main()
