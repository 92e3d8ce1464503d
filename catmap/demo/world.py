"""Build the invented demo world: brands, the labelled reference catalog, new retailer feeds.

Everything is derived from one seed and the category tree (read through
:mod:`catmap.tree.taxonomy`), each artefact from its own random stream, so that building only the
missing files gives the same bytes as a full rebuild.

Example:
    >>> paths = ensure_demo_world(Path("feeds_demo"))   # doctest: +SKIP
    >>> paths.reference.name
    'reference.csv.gz'
"""

from __future__ import annotations

import csv
import gzip
import hashlib
import io
import random
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING
from xml.sax.saxutils import escape, quoteattr

from catmap._atomic import write_bytes_atomic
from catmap.demo._names import Brand, invent_brands
from catmap.demo._products import DemoProduct, LeafInfo, ProductFactory, leaf_infos
from catmap.demo._retailers import (
    ALL_RETAILERS,
    FEED_A,
    FEED_B,
    FEED_C,
    LABELLED_FEED,
    REFERENCE_RETAILERS,
    Retailer,
)
from catmap.demo._stamp import build_facts, generated_dir, stamp_matches, write_stamp

if TYPE_CHECKING:
    from catmap.tree.taxonomy import CategoryTree

BRAND_COUNT = 440
MIN_PER_LEAF = 40
REFERENCE_SIZE = 66000
# What the generated reference catalog was built from (catmap.demo._stamp), beside it.
REFERENCE_STAMP = "reference.built-from.json"
FEED_SIZES: dict[str, int] = {"ferravelle": 3200, "quorvane": 2600, "tallimbra": 4100,
                              "oskelund_labelled": 3000}
FEED_FILES: dict[str, str] = {"ferravelle": "ferravelle.csv", "quorvane": "quorvane.xml",
                              "tallimbra": "tallimbra.tsv",
                              "oskelund_labelled": "oskelund_labelled.csv"}
GOLD_FEEDS = ("ferravelle", "quorvane", "tallimbra")
REFERENCE_COLUMNS = ("product_id", "retailer", "title", "description", "brand",
                     "retailer_category", "price", "currency", "gtin", "gender", "colour", "size",
                     "url", "image_url", "availability")
GOLD_COLUMNS = ("gold_node", "gold_brand", "gold_who", "gold_age", "gold_colour")
XML_NAMESPACE = "http://example.org/quorvane/catalogue/2"
XML_EXT_NAMESPACE = "http://example.org/quorvane/extensions"


@dataclass(frozen=True, slots=True)
class DemoPaths:
    """Where the demo world's files are.

    Attributes:
        root: the demo folder (``feeds_demo/`` in the repository).
        brands: the brand list.
        reference: the labelled reference catalog (gzip CSV, under ``generated/``; built for
            another tree than the demo's, under ``generated/tree-<digest>/``).
        feeds: feed name → feed file (the three new feeds and the small labelled feed).
        gold: feed name → its gold label file (for the three new feeds).
    """

    root: Path
    brands: Path
    reference: Path
    feeds: dict[str, Path] = field(default_factory=dict)
    gold: dict[str, Path] = field(default_factory=dict)

    def all_files(self) -> list[Path]:
        """Every file of the demo world."""
        return [self.brands, self.reference, *self.feeds.values(), *self.gold.values()]


def demo_paths(root: str | Path) -> DemoPaths:
    """Return the demo world's file locations under ``root`` (nothing is built)."""
    base = Path(root)
    return DemoPaths(
        root=base,
        brands=base / "brands.csv",
        reference=base / "generated" / "reference.csv.gz",
        feeds={name: base / f for name, f in FEED_FILES.items()},
        gold={name: base / "gold" / f"{Path(FEED_FILES[name]).stem}.csv" for name in GOLD_FEEDS},
    )


def split_of(product_id: str) -> str:
    """Return the fixed split of a product: train / valid / test, 70 / 10 / 20 by id hash.

    The first 8 hex digits of SHA-256(product_id) as an integer, modulo 100: below 70 is
    train, below 80 valid, the rest test.
    """
    bucket = int(hashlib.sha256(product_id.encode("utf-8")).hexdigest()[:8], 16) % 100
    return "train" if bucket < 70 else "valid" if bucket < 80 else "test"


def _rng(seed: int, stream: str) -> random.Random:
    return random.Random(f"catmap-demo:{seed}:{stream}")


def _brands(tree: CategoryTree, seed: int) -> list[Brand]:
    deps = [d.id for d in tree.departments()]
    reserved = {r.name.lower() for r in ALL_RETAILERS}
    return invent_brands(deps, count=BRAND_COUNT, rng=_rng(seed, "brands"), reserved=reserved)


def _leaf_counts(leaves: list[LeafInfo], total: int, rng: random.Random) -> dict[str, int]:
    """Unequal products per leaf: a floor for every leaf, the rest by lognormal weights."""
    n = len(leaves)
    floor = max(1, min(MIN_PER_LEAF, int(0.72 * total / n)))
    weights = [rng.lognormvariate(0, 0.9) for _ in leaves]
    rest = max(0, total - floor * n)
    scale = rest / sum(weights)
    raw = [w * scale for w in weights]
    counts = [floor + int(x) for x in raw]
    order = sorted(range(n), key=lambda i: raw[i] - int(raw[i]), reverse=True)
    for i in order[: max(0, total - sum(counts))]:
        counts[i] += 1
    return {leaf.id: c for leaf, c in zip(leaves, counts, strict=True)}


def _with_duplicates(products: list[DemoProduct], count: int,
                     rng: random.Random) -> list[DemoProduct]:
    """Re-list a few products under the same id later in the feed (new price / availability)."""
    out = list(products)
    for _ in range(min(count, len(products))):
        src = rng.choice(products)
        dup = replace(src, price=src.price.replace("9", "5", 1), availability="")
        out.insert(rng.randrange(len(out) // 2, len(out) + 1), dup)
    return out


def _make_products(leaves: list[LeafInfo], brands: list[Brand], retailer: Retailer,
                   assignment: list[str], rng: random.Random, start: int,
                   cue_rng: random.Random) -> list[DemoProduct]:
    factory = ProductFactory(leaves, brands, retailer, rng, cue_rng)
    out = []
    number = start
    for leaf_id in assignment:
        number += rng.choice((1, 1, 2, 3, 7))
        out.append(factory.make(leaf_id, f"{retailer.id_prefix}{number:06d}"))
    return out


def reference_products(tree: CategoryTree, brands: list[Brand], *, seed: int,
                       size: int) -> list[DemoProduct]:
    """Generate the reference catalog's products (every leaf of the tree at least once)."""
    rng = _rng(seed, "reference")
    leaves = leaf_infos(tree)
    counts = _leaf_counts(leaves, size, rng)
    assignment = [leaf_id for leaf_id, c in counts.items() for _ in range(c)]
    rng.shuffle(assignment)
    weights = [r.weight for r in REFERENCE_RETAILERS]
    per_retailer: dict[str, list[str]] = {r.name: [] for r in REFERENCE_RETAILERS}
    for leaf_id in assignment:
        per_retailer[rng.choices(REFERENCE_RETAILERS, weights=weights)[0].name].append(leaf_id)
    products: list[DemoProduct] = []
    for k, r in enumerate(REFERENCE_RETAILERS):
        made = _make_products(leaves, brands, r, per_retailer[r.name],
                              _rng(seed, f"reference:{r.slug}"), 100000 + 50000 * k,
                              _rng(seed, f"cues:reference:{r.slug}"))
        products.extend(_with_duplicates(made, r.duplicates, _rng(seed, f"dups:{r.slug}")))
    order = _rng(seed, "reference:order")
    order.shuffle(products)
    return products


def feed_products(tree: CategoryTree, brands: list[Brand], name: str, *, seed: int,
                  size: int) -> list[DemoProduct]:
    """Generate one new retailer feed's products, from leaves of a subset of departments."""
    retailer = {"ferravelle": FEED_A, "quorvane": FEED_B, "tallimbra": FEED_C,
                "oskelund_labelled": LABELLED_FEED}[name]
    rng = _rng(seed, f"feed:{name}")
    leaves = leaf_infos(tree)
    deps = sorted({leaf.department for leaf in leaves})
    chosen = set(rng.sample(deps, k=max(1, min(len(deps), round(len(deps) * 0.6)))))
    # every new retailer sells clothing and shoes (the first two departments), plus its mix
    chosen.update(d.id for d in tree.departments()[:2])
    pool = [leaf for leaf in leaves if leaf.department in chosen]
    weights = [rng.lognormvariate(0, 1.0) for _ in pool]
    assignment = [leaf.id for leaf in rng.choices(pool, weights=weights, k=size)]
    made = _make_products(leaves, brands, retailer, assignment, rng, 200000,
                          _rng(seed, f"cues:feed:{name}"))
    return _with_duplicates(made, retailer.duplicates, rng)


# -- writers ------------------------------------------------------------------------------------

def _csv_text(rows: list[list[str]], *, delimiter: str, lineterminator: str) -> str:
    buf = io.StringIO()
    writer = csv.writer(buf, delimiter=delimiter, lineterminator=lineterminator)
    writer.writerows(rows)
    return buf.getvalue()


def _reference_row(p: DemoProduct) -> list[str]:
    return [p.product_id, p.retailer, p.title, p.description, p.brand, p.retailer_category,
            p.price, p.currency, p.gtin, p.gender, p.colour, p.size, p.url, p.image_url,
            p.availability]


def _gold_row(p: DemoProduct) -> list[str]:
    return [p.gold_node, p.gold_brand, p.gold_who, p.gold_age, p.gold_colour]


def write_brands(brands: list[Brand], path: Path) -> None:
    """Write brands.csv: brand, variants (;-separated), departments (;-separated)."""
    rows = [["brand", "variants", "departments"]]
    rows += [[b.name, ";".join(b.variants), ";".join(b.departments)] for b in brands]
    path.parent.mkdir(parents=True, exist_ok=True)
    write_bytes_atomic(path, _csv_text(rows, delimiter=",", lineterminator="\n").encode("utf-8"))


def write_reference(products: list[DemoProduct], path: Path) -> None:
    """Write the reference catalog as gzip CSV (UTF-8), gold columns and split included."""
    rows = [[*REFERENCE_COLUMNS, *GOLD_COLUMNS, "split"]]
    rows += [[*_reference_row(p), *_gold_row(p), split_of(p.product_id)] for p in products]
    path.parent.mkdir(parents=True, exist_ok=True)
    data = _csv_text(rows, delimiter=",", lineterminator="\n").encode("utf-8")
    buf = io.BytesIO()
    # mtime=0 and no file name in the header keep the bytes identical between builds
    with gzip.GzipFile(filename="", mode="wb", fileobj=buf, mtime=0, compresslevel=6) as gz:
        gz.write(data)
    write_bytes_atomic(path, buf.getvalue())


def write_gold(products: list[DemoProduct], path: Path) -> None:
    """Write a feed's gold labels: one row per product id (duplicates share their labels)."""
    rows = [["product_id", *GOLD_COLUMNS]]
    seen: set[str] = set()
    for p in products:
        if p.product_id not in seen:
            seen.add(p.product_id)
            rows.append([p.product_id, *_gold_row(p)])
    path.parent.mkdir(parents=True, exist_ok=True)
    write_bytes_atomic(path, _csv_text(rows, delimiter=",", lineterminator="\n").encode("utf-8"))


def _cp1252_safe(text: str) -> str:
    return "".join(c for c in text if c.encode("cp1252", errors="ignore") or c == "")


def write_feed_a(products: list[DemoProduct], path: Path) -> None:
    """Semicolon-separated, cp1252, French column names, decimal-comma prices, CRLF."""
    header = ["ref", "désignation", "descriptif", "marque", "rayon", "prix", "code_ean", "genre",
              "couleur", "taille", "lien", "image", "disponibilité"]
    rows = [header]
    for p in products:
        rows.append([_cp1252_safe(v).strip() for v in (
            p.product_id, p.title, p.description, p.brand, p.retailer_category, p.price, p.gtin,
            p.gender, p.colour, p.size, p.url, p.image_url, p.availability)])
    text = _csv_text(rows, delimiter=";", lineterminator="\r\n")
    write_bytes_atomic(path, text.encode("cp1252"))


def write_feed_b(products: list[DemoProduct], path: Path) -> None:
    """XML export: default and prefixed namespaces, attributes, CDATA HTML, nested category."""
    out = ['<?xml version="1.0" encoding="UTF-8"?>',
           f'<catalogue xmlns="{XML_NAMESPACE}" xmlns:qv="{XML_EXT_NAMESPACE}" '
           'exported="2026-11-30T06:00:00Z" shop="Quorvane">',
           f'  <offers count="{len(products)}">']
    for p in products:
        out.append(f"    <offer id={quoteattr(p.product_id)} qv:lang={quoteattr(p.lang)}>")
        out.append(f"      <title>{escape(p.title)}</title>")
        if p.brand:
            out.append(f"      <brand>{escape(p.brand)}</brand>")
        if p.description:
            out.append(f"      <description><![CDATA[{p.description}]]></description>")
        crumb = quoteattr(p.retailer_category)
        levels = "".join(f'<level depth="{i}">{escape(v)}</level>'
                         for i, v in enumerate(p.category_levels, 1))
        out.append(f"      <category breadcrumb={crumb}>{levels}</category>")
        value = f"{p.price_value:.2f}"
        currency = p.currency if int(p.price_value * 100) % 23 else "GBP"
        out.append(f'      <price currency="{currency}">{value}</price>')
        if p.gtin:
            out.append(f"      <gtin>{escape(p.gtin)}</gtin>")
        if p.gender:
            out.append(f"      <qv:audience>{escape(p.gender)}</qv:audience>")
        if p.colour:
            out.append(f"      <colour>{escape(p.colour)}</colour>")
        if p.size:
            out.append(f"      <size>{escape(p.size)}</size>")
        out.append(f"      <link>{escape(p.url)}</link>")
        out.append(f'      <media><image role="main">{escape(p.image_url)}</image></media>')
        if p.availability:
            out.append(f"      <qv:availability>{escape(p.availability)}</qv:availability>")
        out.append("    </offer>")
    out += ["  </offers>", "</catalogue>", ""]
    write_bytes_atomic(path, "\n".join(out).encode("utf-8"))


def write_feed_c(products: list[DemoProduct], path: Path) -> None:
    """Tab-separated, UTF-8 with a byte-order mark, mixed-language titles."""
    header = ["id", "title", "brand", "category", "price", "currency", "ean", "gender", "color",
              "size", "product_url", "image", "stock", "description"]
    rows = [header]
    for p in products:
        currency = "" if p.price.endswith(p.currency) else p.currency
        rows.append([p.product_id, p.title, p.brand, p.retailer_category, p.price, currency,
                     p.gtin, p.gender, p.colour, p.size, p.url, p.image_url, p.availability,
                     p.description])
    text = _csv_text(rows, delimiter="\t", lineterminator="\n")
    write_bytes_atomic(path, text.encode("utf-8-sig"))


def write_labelled_feed(products: list[DemoProduct], path: Path) -> None:
    """A small comma-separated UTF-8 feed with its gold columns, as a user's own labelled feed."""
    rows = [[*REFERENCE_COLUMNS, *GOLD_COLUMNS]]
    rows += [[*_reference_row(p), *_gold_row(p)] for p in products]
    write_bytes_atomic(path, _csv_text(rows, delimiter=",", lineterminator="\n").encode("utf-8"))


_FEED_WRITERS = {"ferravelle": write_feed_a, "quorvane": write_feed_b, "tallimbra": write_feed_c,
                 "oskelund_labelled": write_labelled_feed}


# -- entry points -------------------------------------------------------------------------------

def _build(root: Path, *, seed: int, reference_size: int, feed_sizes: Mapping[str, int],
           tree: CategoryTree | None, only_missing: bool) -> DemoPaths:
    if tree is None:
        from catmap.tree.taxonomy import load_default_tree

        tree = load_default_tree(1)
    paths = demo_paths(root)
    paths = replace(paths, reference=generated_dir(root, tree) / paths.reference.name)
    root.mkdir(parents=True, exist_ok=True)
    brands = _brands(tree, seed)

    def wanted(*files: Path) -> bool:
        return not only_missing or not all(f.exists() for f in files)

    if wanted(paths.brands):
        write_brands(brands, paths.brands)
    # The reference catalog is generated, not committed: one built from another seed, size,
    # tree or generator is built again.
    facts = build_facts(tree, seed=seed, size=reference_size)
    stamp = paths.reference.with_name(REFERENCE_STAMP)
    if wanted(paths.reference) or not stamp_matches(stamp, facts):
        write_reference(reference_products(tree, brands, seed=seed, size=reference_size),
                        paths.reference)
        write_stamp(stamp, facts)
    for name, file in paths.feeds.items():
        gold = paths.gold.get(name)
        if wanted(file, *([gold] if gold else [])):
            products = feed_products(tree, brands, name, seed=seed,
                                     size=feed_sizes.get(name, FEED_SIZES[name]))
            file.parent.mkdir(parents=True, exist_ok=True)
            _FEED_WRITERS[name](products, file)
            if gold:
                write_gold(products, gold)
    return paths


def build_demo_world(root: str | Path, *, seed: int = 0, reference_size: int = REFERENCE_SIZE,
                     feed_sizes: Mapping[str, int] | None = None,
                     tree: CategoryTree | None = None) -> DemoPaths:
    """Build (always rebuild) every file of the demo world under ``root``.

    Args:
        root: the demo folder, e.g. ``feeds_demo``.
        seed: the seed; the same seed and tree give the same bytes.
        reference_size: products in the reference catalog.
        feed_sizes: products per feed (keys as in :data:`FEED_SIZES`), for small test builds.
        tree: the category tree; tree version 1 (``load_default_tree(1)``) by default.

    Returns:
        Where the files are.
    """
    return _build(Path(root), seed=seed, reference_size=reference_size,
                  feed_sizes=feed_sizes or {}, tree=tree, only_missing=False)


def ensure_demo_world(root: str | Path, *, seed: int = 0,
                      reference_size: int = REFERENCE_SIZE,
                      feed_sizes: Mapping[str, int] | None = None,
                      tree: CategoryTree | None = None) -> DemoPaths:
    """Build only the demo files that are missing under ``root`` (idempotent).

    The committed files (brands, feeds, gold labels) are normally present, so this usually
    writes only ``generated/reference.csv.gz``; the result equals a full build.

    Args:
        root: the demo folder, e.g. ``feeds_demo``.
        seed: the seed the committed files were built with (0).
        reference_size: products in the reference catalog, when it has to be built.
        feed_sizes: products per retailer feed, when one has to be built (default sizes
            for any not named).
        tree: the category tree; tree version 1 by default.

    Returns:
        Where the files are.
    """
    return _build(Path(root), seed=seed, reference_size=reference_size,
                  feed_sizes=dict(feed_sizes or {}), tree=tree, only_missing=True)
