"""Small invented trees of one's own of depth 1, 2 and 7, and labelled rows for them.

Used by tests/test_cli_tree_depths.py. Each leaf has a few product words of its own; a labelled
feed draws titles from them (seeded), in the format ``catmap train --labelled`` reads.
"""

from __future__ import annotations

import csv
import random
from dataclasses import dataclass
from pathlib import Path

__all__ = ["DepthTree", "TREES", "write_feed", "write_labelled", "write_mixed_feed"]


@dataclass(frozen=True)
class DepthTree:
    """One tree: its file's text, the product words per leaf, and a changed version 2.

    ``mixed`` holds titles naming products of two leaves at once, each with the inner node
    holding both (None where no inner node does: two departments of a one-level tree).
    """

    name: str
    text: str
    words: dict[str, list[str]]
    text_v2: str
    mixed: tuple[tuple[str, str | None], ...] = ()


def _line(
    node: str, parent: str, name: str, en: str, audience: str = ".", restriction: str = "-"
) -> str:
    return (
        f"{node} | {parent} | {name} | {audience} | {restriction} | en: {en} | fr: {en} | "
        f"de: {en} | es: {en}"
    )


def _tree(version: int, lines: list[str]) -> str:
    return "\n".join([f"@tree-version {version}", *lines]) + "\n"


# Depth 1: a flat list of categories; every leaf is its own department.
_FLAT = [
    _line("10", "-", "Teapots", "teapot; tea kettle", "none"),
    _line("20", "-", "Candles", "candle; tealight", "none"),
    _line("30", "-", "Notebooks", "notebook; journal", "none"),
    _line("40", "-", "Umbrellas", "umbrella; parasol", "who=unisex age=adult"),
    _line("50", "-", "Kites", "kite; stunt kite", "who=unisex age=kids"),
    _line("60", "-", "Cider", "cider; perry", "none", "alcohol"),
]
# Version 2: Kites retired with no successor, Cider under a new id and name, Doormats added.
_FLAT_V2 = [
    *_FLAT[:4],
    _line("65", "-", "Cider and perry", "cider; perry", "none", "alcohol"),
    _line("70", "-", "Doormats", "doormat; coir mat", "none"),
]

# Depth 2: departments and their leaves, and one department that is a leaf itself.
_TWO = [
    _line("100", "-", "Kitchen", "kitchen", "none"),
    _line("110", "100", "Whisks", "whisk; balloon whisk"),
    _line("120", "100", "Ladles", "ladle; soup ladle"),
    _line("130", "100", "Sieves", "sieve; strainer"),
    _line("200", "-", "Cellar", "cellar; drinks", "none", "alcohol"),
    _line("210", "200", "Mead", "mead; honey wine"),
    _line("220", "200", "Fruit brandy", "fruit brandy; schnapps"),
    _line("300", "-", "Gift cards", "gift card; voucher", "none"),
    _line("400", "-", "Outdoor play", "outdoor play", "who=unisex age=kids"),
    _line("410", "400", "Swings", "swing; rope swing"),
    _line("420", "400", "Sandpits", "sandpit; sand box"),
]
# Version 2: Sieves moves up to a department of its own (level 2 -> 1), Gift cards moves down
# under Kitchen (level 1 -> 2), Swings is renamed.
_TWO_V2 = [
    _line("100", "-", "Kitchen", "kitchen", "none"),
    _line("110", "100", "Whisks", "whisk; balloon whisk"),
    _line("120", "100", "Ladles", "ladle; soup ladle"),
    _line("130", "-", "Sieves", "sieve; strainer", "none"),
    _line("200", "-", "Cellar", "cellar; drinks", "none", "alcohol"),
    _line("210", "200", "Mead", "mead; honey wine"),
    _line("220", "200", "Fruit brandy", "fruit brandy; schnapps"),
    _line("300", "100", "Gift cards", "gift card; voucher"),
    _line("400", "-", "Outdoor play", "outdoor play", "who=unisex age=kids"),
    _line("410", "400", "Garden swings", "swing; rope swing"),
    _line("420", "400", "Sandpits", "sandpit; sand box"),
]

# Depth 7: one long branch down to level 7 (with leaves at several levels on the way) and a
# short department beside it.
_SEVEN_CHAIN = [
    ("1000", "-", "Workshop", "workshop"),
    ("1100", "1000", "Hand tools", "hand tools"),
    ("1110", "1100", "Cutting tools", "cutting tools"),
    ("1111", "1110", "Saws", "saw"),
    ("1112", "1111", "Hand saws", "hand saw"),
    ("1113", "1112", "Japanese-style saws", "pull saw"),
]
_SEVEN_LEAVES = [
    ("1114", "1113", "Ryoba saws", "ryoba saw; double edged pull saw"),
    ("1115", "1113", "Dozuki saws", "dozuki saw; backed pull saw"),
    ("1120", "1112", "Coping saws", "coping saw; fret saw"),
    ("1130", "1110", "Chisels", "chisel; bench chisel"),
    ("1200", "1000", "Clamps", "clamp; bar clamp"),
    ("2000", "-", "Paint", "paint", "none"),
    ("2100", "2000", "Primers", "primer; undercoat"),
]


def _seven(version: int) -> list[str]:
    lines = [_line(n, p, name, en, "none" if p == "-" else ".") for n, p, name, en in _SEVEN_CHAIN]
    for node, parent, name, en, *audience in _SEVEN_LEAVES:
        if version == 2 and node == "1115":
            parent = "1110"  # Dozuki saws move up from level 7 to level 4
        lines.append(_line(node, parent, name, en, *(audience or ["."])))
    return lines


_WORDS = {
    "flat": {
        "10": ["porcelain teapot", "cast iron teapot", "glass tea kettle", "teapot with infuser"],
        "20": ["beeswax candle", "scented tealight", "pillar candle", "dinner candle"],
        "30": ["dotted notebook", "leather journal", "spiral notebook", "pocket notebook"],
        "40": ["folding umbrella", "golf umbrella", "beach parasol", "storm umbrella"],
        "50": ["diamond kite", "stunt kite", "box kite", "delta kite"],
        "60": ["dry cider", "pear perry", "apple cider", "sparkling cider"],
    },
    "two": {
        "110": ["balloon whisk", "flat whisk", "mini whisk", "silicone whisk"],
        "120": ["soup ladle", "steel ladle", "sauce ladle", "wooden ladle"],
        "130": ["fine sieve", "mesh strainer", "flour sieve", "tea strainer"],
        "210": ["honey mead", "spiced mead", "oak aged mead", "sparkling mead"],
        "220": ["plum brandy", "pear schnapps", "apricot brandy", "cherry schnapps"],
        "300": ["gift card 20", "birthday voucher", "gift card 50", "spa voucher"],
        "410": ["rope swing", "nest swing", "baby swing seat", "tyre swing"],
        "420": ["sandpit cover", "wooden sandpit", "sand box with lid", "shell sandpit"],
    },
    "seven": {
        "1114": ["ryoba saw 240", "double edged pull saw", "ryoba saw blade", "ryoba saw 210"],
        "1115": ["dozuki saw", "backed pull saw", "dozuki dovetail saw", "dozuki saw 240"],
        "1120": ["coping saw", "fret saw frame", "coping saw blades", "deep fret saw"],
        "1130": ["bench chisel", "mortise chisel", "chisel set", "paring chisel"],
        "1200": ["bar clamp", "quick clamp", "f clamp", "pipe clamp"],
        "2100": ["wood primer", "metal undercoat", "primer white", "stain block primer"],
    },
}

_MIXED = {
    "flat": (
        ("porcelain teapot and beeswax candle", None),
        ("spiral notebook golf umbrella", None),
    ),
    "two": (
        ("balloon whisk soup ladle", "100"),
        ("honey mead plum brandy", "200"),
        ("rope swing sandpit cover", "400"),
    ),
    "seven": (
        ("ryoba saw 240 dozuki saw 240", "1113"),
        ("coping saw ryoba saw blade", "1112"),
        ("bench chisel dozuki saw", "1110"),
    ),
}

TREES = {
    "flat": DepthTree("flat", _tree(1, _FLAT), _WORDS["flat"], _tree(2, _FLAT_V2), _MIXED["flat"]),
    "two": DepthTree("two", _tree(1, _TWO), _WORDS["two"], _tree(2, _TWO_V2), _MIXED["two"]),
    "seven": DepthTree(
        "seven", _tree(1, _seven(1)), _WORDS["seven"], _tree(2, _seven(2)), _MIXED["seven"]
    ),
}

_MAKERS = ["Ostrelia", "Brambleworth", "Quillmere", "Tarrow", "Fennick"]
_EXTRAS = ["", "large", "small", "green", "classic", "2 pack", "eco"]


def _title(rng: random.Random, words: list[str]) -> tuple[str, str]:
    maker = rng.choice(_MAKERS)
    return " ".join(p for p in (maker, rng.choice(words), rng.choice(_EXTRAS)) if p), maker


def write_labelled(
    path: Path, tree: DepthTree, count: int, seed: int = 0, *, noise: float = 0.0
) -> None:
    """Write a labelled feed of ``count`` invented products, leaves in turn.

    ``noise``: the share of rows labelled with a random leaf instead (a model trained on them
    is less sure, so that back-off has something to do).
    """
    rng = random.Random(seed)
    leaves = sorted(tree.words)
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["sku", "name", "maker", "price", "currency", "gold_node"])
        for i in range(count):
            leaf = leaves[i % len(leaves)]
            title, maker = _title(rng, tree.words[leaf])
            label = rng.choice(leaves) if rng.random() < noise else leaf
            writer.writerow([f"L{i:05d}", title, maker, f"{rng.randint(2, 60)}.00", "EUR", label])


def write_feed(path: Path, tree: DepthTree, count: int, seed: int = 1) -> dict[str, str]:
    """Write an unlabelled feed; return product id -> the leaf its words came from."""
    rng = random.Random(seed)
    leaves = sorted(tree.words)
    truth: dict[str, str] = {}
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["sku", "name", "maker", "price", "currency"])
        for i in range(count):
            leaf = rng.choice(leaves)
            title, maker = _title(rng, tree.words[leaf])
            writer.writerow([f"F{i:04d}", title, maker, f"{rng.randint(2, 60)}.00", "EUR"])
            truth[f"F{i:04d}"] = leaf
    return truth


def write_mixed_feed(path: Path, tree: DepthTree) -> dict[str, str | None]:
    """Write a feed of the tree's mixed titles; return product id -> the inner node expected."""
    expected: dict[str, str | None] = {}
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["sku", "name", "price", "currency"])
        for i, (title, inner) in enumerate(tree.mixed):
            writer.writerow([f"M{i:02d}", title, "10.00", "EUR"])
            expected[f"M{i:02d}"] = inner
    return expected
