"""Measure brand extraction when part of the brands are in no list (the demo world, held out).

Every ``--hold-out``-th brand of the demo brand list is removed from the dictionary; its
products keep their gold brand. Each demo feed is then read as catmap onboards it and the
brand of every product is extracted twice: with the dictionary alone, and with a
:class:`catmap.attributes.FeedBrandLearner` fitted first on the same feed (two passes). Brand
precision / recall / F1 are printed separately for products whose gold brand is held out
("unseen") and for the others ("known"; products without a brand count here), as in
``benchmarks/eval_attributes_demo.py`` (a wrong brand is both a false positive and a false
negative). Fit and extraction speed are printed too.

    python benchmarks/eval_brands_open.py [--root feeds_demo] [--hold-out 3] [--errors 10]
"""

from __future__ import annotations

import argparse
import csv
import time
from dataclasses import dataclass
from pathlib import Path

from catmap.attributes import AttributeExtractor, BrandDictionary, FeedBrandLearner
from catmap.demo import demo_paths
from catmap.feeds import open_feed
from catmap.feeds.fieldmap import suggest_profile
from catmap.feeds.ingest import Accounting, iter_products
from catmap.records import Product
from catmap.tree.taxonomy import load_default_tree

FEEDS = {"ferravelle": "Ferravelle", "quorvane": "Quorvane", "tallimbra": "Tallimbra"}
SAMPLE_SIZE = 200


@dataclass
class Counts:
    """True / false positives and false negatives of one slice."""

    tp: int = 0
    fp: int = 0
    fn: int = 0
    products: int = 0

    def add(self, got: str, gold: str) -> None:
        """Count one product."""
        self.products += 1
        if got and got == gold:
            self.tp += 1
        else:
            self.fp += bool(got)
            self.fn += bool(gold)

    def figures(self) -> str:
        """Products, P, R, F1 as table cells."""
        precision = self.tp / max(1, self.tp + self.fp)
        recall = self.tp / max(1, self.tp + self.fn)
        f1 = 2 * precision * recall / (precision + recall) if precision + recall else 0.0
        return f"{self.products:>8} {precision:>7.3f} {recall:>7.3f} {f1:>7.3f}"


def _products(feed: Path) -> list[Product]:
    opened = open_feed(feed)
    profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    return [p for p in iter_products(opened, profile, Accounting()) if isinstance(p, Product)]


def main(argv: list[str] | None = None) -> int:
    """Score the demo feeds with part of the brand list held out; print the table."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--root", type=Path, default=Path("feeds_demo"))
    parser.add_argument("--hold-out", type=int, default=3,
                        help="hold out every N-th brand of the list (default 3; 0: none)")
    parser.add_argument("--nodes", action="store_true",
                        help="give the learner the gold nodes (default: retailer categories)")
    parser.add_argument("--errors", type=int, default=0, help="print this many unseen errors")
    parser.add_argument("--slice", default="unseen", choices=("unseen", "known"),
                        help="which slice's errors to print")
    args = parser.parse_args(argv)
    paths = demo_paths(args.root)
    tree = load_default_tree(1)
    full = BrandDictionary.from_csv(paths.brands)
    names = sorted(full.entries)
    held = set(names[:: args.hold_out]) if args.hold_out else set()
    dictionary = BrandDictionary(
        [e for n, e in full.entries.items() if n not in held], common_words=full.common_words
    )
    print(f"brands in list {len(full)}, held out {len(held)}")
    header = f"{'':<24} {'products':>8} {'P':>7} {'R':>7} {'F1':>7}"
    totals = {k: Counts() for k in ("dict known", "dict unseen", "open known", "open unseen")}
    fit_seconds = extract_seconds = plain_seconds = 0.0
    n_products = 0
    errors: list[str] = []
    for name, retailer in FEEDS.items():
        with paths.gold[name].open(encoding="utf-8", newline="") as fh:
            gold = {row["product_id"]: row for row in csv.DictReader(fh)}
        products = [p for p in _products(paths.feeds[name]) if p.product_id in gold]
        nodes = [gold[p.product_id]["gold_node"] for p in products] if args.nodes else None
        plain = AttributeExtractor(brands=dictionary, tree=tree, retailer_names=(retailer,))
        t0 = time.process_time()
        learner = FeedBrandLearner(dictionary=dictionary, tree=tree, feed=retailer).fit(
            products, nodes
        )
        t1 = time.process_time()
        open_world = AttributeExtractor(
            brands=dictionary, tree=tree, retailer_names=(retailer,), feed_brands=learner
        )
        n_products += len(products)
        for product in products:
            g = gold[product.product_id]
            want = g["gold_brand"]
            slice_ = "unseen" if want in held else "known"
            totals[f"dict {slice_}"].add(plain.extract(product, g["gold_node"]).brand, want)
        t2 = time.process_time()
        plain_seconds += t2 - t1
        t2 = time.process_time()
        for product in products:
            g = gold[product.product_id]
            want = g["gold_brand"]
            slice_ = "unseen" if want in held else "known"
            got = open_world.extract(product, g["gold_node"])
            totals[f"open {slice_}"].add(got.brand, want)
            if got.brand != want and len(errors) < args.errors and slice_ == args.slice:
                errors.append(f"  gold={want!r} got={got.brand!r} field={product.brand!r} "
                              f"title={product.title!r} | {got.brand_evidence}")
        t3 = time.process_time()
        fit_seconds += t1 - t0
        extract_seconds += t3 - t2
        print(f"{name}: learned {len(learner.learned_)} title brands, "
              f"{len(learner.registry_)} in the feed registry, retailer: {learner.retailer_}")
    print(header)
    for key, counts in totals.items():
        print(f"{key:<24} {counts.figures()}")
    print(f"fit: {n_products / max(1e-9, fit_seconds):,.0f} products/s (CPU); "
          f"extract with learner: {n_products / max(1e-9, extract_seconds):,.0f} products/s; "
          f"dictionary only: {n_products / max(1e-9, plain_seconds):,.0f} products/s")
    for line in errors:
        print(line)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
