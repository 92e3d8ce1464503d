"""Measure attribute extraction on the demo feeds' gold labels: who / age accuracy, brand F1.

Reads each of the three demo feeds (``feeds_demo/``) the way catmap onboards a feed (detected
reader, suggested field profile, normalised products), joins its gold labels by product id and
runs :class:`catmap.attributes.AttributeExtractor` with the gold node of tree version 1, the
demo brand list and the feed's retailer name. Prints one line per feed and an overall line.

Brand F1 counts a product as a true positive when the extracted brand equals the gold brand,
a false positive when a brand was extracted that is not the gold one, and a false negative when
the gold brand was not extracted (a wrong brand counts as both).

Then the same on the unseen-retailer part (:mod:`catmap.demo.unseen`, built on first use
under ``feeds_demo/generated/unseen/``), per part and per retailer: brand precision / recall /
F1 separately for products of brands in the demo brand list ("known"), of brands absent from
it ("unseen"), and the share of unbranded products given a brand; who and age accuracy; and
precision / recall of each restriction flag. These brand figures compare case-insensitively
(:func:`catmap.evaluate.metrics.brand_scores`, as ``catmap evaluate`` does). ``--no-unseen``
skips this part. ``--feed-brands`` scores it a second time as ``catmap onboard`` extracts: a
:class:`catmap.attributes.FeedBrandLearner` fitted first on each retailer's products (at most
:data:`catmap.jobs.onboard.BRAND_SAMPLE`) is given to the extractor.

    python benchmarks/eval_attributes_demo.py [--root feeds_demo] [--errors 10] [--no-unseen]
        [--feed-brands]
"""

from __future__ import annotations

import argparse
import csv
from collections import Counter
from dataclasses import dataclass, field
from itertools import islice
from pathlib import Path

from catmap.attributes import AttributeExtractor, BrandDictionary, FeedBrandLearner
from catmap.demo import demo_paths
from catmap.evaluate.metrics import brand_scores
from catmap.evaluate.run import profile_without_gold
from catmap.feeds import open_feed
from catmap.feeds.fieldmap import suggest_profile
from catmap.feeds.ingest import Accounting, iter_products
from catmap.jobs.onboard import BRAND_SAMPLE
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree, load_default_tree

FEEDS = {"ferravelle": "Ferravelle", "quorvane": "Quorvane", "tallimbra": "Tallimbra"}
SAMPLE_SIZE = 200


@dataclass
class Scores:
    """Counts behind the figures of one feed (or of all of them)."""

    products: int = 0
    who_right: int = 0
    age_right: int = 0
    brand_tp: int = 0
    brand_fp: int = 0
    brand_fn: int = 0
    who_errors: Counter[tuple[str, str]] = field(default_factory=Counter)
    age_errors: Counter[tuple[str, str]] = field(default_factory=Counter)

    def add(self, other: Scores) -> None:
        """Add another feed's counts to these."""
        self.products += other.products
        self.who_right += other.who_right
        self.age_right += other.age_right
        self.brand_tp += other.brand_tp
        self.brand_fp += other.brand_fp
        self.brand_fn += other.brand_fn
        self.who_errors.update(other.who_errors)
        self.age_errors.update(other.age_errors)

    def line(self, name: str) -> str:
        """One table line: products, who accuracy, age accuracy, brand P / R / F1."""
        n = max(1, self.products)
        precision = self.brand_tp / max(1, self.brand_tp + self.brand_fp)
        recall = self.brand_tp / max(1, self.brand_tp + self.brand_fn)
        f1 = 2 * precision * recall / (precision + recall) if precision + recall else 0.0
        return (f"{name:<12} {self.products:>8} {self.who_right / n:>8.3f} "
                f"{self.age_right / n:>8.3f} {precision:>8.3f} {recall:>8.3f} {f1:>8.3f}")


def _gold(path: Path) -> dict[str, dict[str, str]]:
    with path.open(encoding="utf-8", newline="") as fh:
        return {row["product_id"]: row for row in csv.DictReader(fh)}


def score_feed(feed: Path, gold_path: Path, extractor: AttributeExtractor,
               errors: list[tuple[str, Product, str, str, str]]) -> Scores:
    """Extract attributes of every product of one feed and compare them with its gold."""
    gold = _gold(gold_path)
    opened = open_feed(feed)
    profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    scores = Scores()
    for item in iter_products(opened, profile, Accounting()):
        if not isinstance(item, Product) or item.product_id not in gold:
            continue
        g = gold[item.product_id]
        got = extractor.extract(item, g["gold_node"])
        scores.products += 1
        if got.who == g["gold_who"]:
            scores.who_right += 1
        else:
            scores.who_errors[(g["gold_who"], got.who)] += 1
            errors.append(("who", item, g["gold_who"], got.who, got.audience_evidence))
        if got.age == g["gold_age"]:
            scores.age_right += 1
        else:
            scores.age_errors[(g["gold_age"], got.age)] += 1
            errors.append(("age", item, g["gold_age"], got.age, got.audience_evidence))
        if got.brand and got.brand == g["gold_brand"]:
            scores.brand_tp += 1
        else:
            scores.brand_fp += bool(got.brand)
            scores.brand_fn += bool(g["gold_brand"])
    return scores


@dataclass
class OpenWorldScores:
    """Gold and extracted values of an unseen-part group (a part or a retailer)."""

    gold_brand: list[str] = field(default_factory=list)
    got_brand: list[str] = field(default_factory=list)
    known: list[bool] = field(default_factory=list)
    who: list[tuple[str, str]] = field(default_factory=list)
    age: list[tuple[str, str]] = field(default_factory=list)
    restriction: list[tuple[str, str]] = field(default_factory=list)

    def add(self, other: OpenWorldScores) -> None:
        """Add another group's values to these."""
        for name in ("gold_brand", "got_brand", "known", "who", "age", "restriction"):
            getattr(self, name).extend(getattr(other, name))

    def line(self, name: str) -> str:
        """One table line: products, who, age, brand P / R / F1 known and unseen, unbranded."""
        n = max(1, len(self.who))

        def brand(want_known: bool) -> str:
            rows = [(g, p) for g, p, k in zip(self.gold_brand, self.got_brand, self.known,
                                              strict=True) if g and k == want_known]
            if not rows:
                return f"{'-':>6} {'-':>6} {'-':>6}"
            prf = brand_scores([g for g, _ in rows], [p for _, p in rows])
            return f"{prf.precision:>6.3f} {prf.recall:>6.3f} {prf.f1:>6.3f}"

        unbranded = [p for g, p in zip(self.gold_brand, self.got_brand, strict=True) if not g]
        given = sum(1 for p in unbranded if p) / max(1, len(unbranded))
        who = sum(g == p for g, p in self.who) / n
        age = sum(g == p for g, p in self.age) / n
        return (f"{name:<20} {len(self.who):>8} {who:>6.3f} {age:>6.3f} {brand(True)} "
                f"{brand(False)} {given:>7.3f}")

    def restriction_lines(self) -> list[str]:
        """Precision and recall of each restriction flag."""
        flags = sorted({g for g, _ in self.restriction} - {"none"})
        out = []
        for flag in flags:
            tp = sum(1 for g, p in self.restriction if g == flag and p == flag)
            fp = sum(1 for g, p in self.restriction if g != flag and p == flag)
            fn = sum(1 for g, p in self.restriction if g == flag and p != flag)
            out.append(f"    {flag:<10} gold {tp + fn:>5}  precision {tp / max(1, tp + fp):.3f}  "
                       f"recall {tp / max(1, tp + fn):.3f}")
        return out


def score_unseen_part(path: Path, brands: BrandDictionary, tree: CategoryTree,
                      feed_brands: bool = False) -> dict[str, OpenWorldScores]:
    """Extract attributes of a labelled unseen part, per retailer (its name given as such);
    with ``feed_brands``, each retailer's brands are learned first, as onboarding does."""
    opened = open_feed(path)
    profile = profile_without_gold(suggest_profile(opened.info, opened.sample(SAMPLE_SIZE)),
                                   "gold_node")
    by_retailer: dict[str, list[Product]] = {}
    for item in iter_products(opened, profile, Accounting()):
        if isinstance(item, Product):
            by_retailer.setdefault(item.extra.get("retailer", ""), []).append(item)
    out: dict[str, OpenWorldScores] = {}
    for retailer, products in by_retailer.items():
        learner = (
            FeedBrandLearner(dictionary=brands, tree=tree, feed=retailer).fit(
                islice(products, BRAND_SAMPLE))
            if feed_brands else None
        )
        extractor = AttributeExtractor(brands=brands, tree=tree, retailer_names=(retailer,),
                                       feed_brands=learner)
        scores = out.setdefault(retailer, OpenWorldScores())
        for item in products:
            g = item.extra
            got = extractor.extract(item, g["gold_node"])
            scores.gold_brand.append(g.get("gold_brand", ""))
            scores.got_brand.append(got.brand)
            scores.known.append(g.get("gold_brand_known", "") == "true")
            scores.who.append((g.get("gold_who", ""), got.who))
            scores.age.append((g.get("gold_age", ""), got.age))
            gold_flag = g.get("gold_restriction", "") or "none"
            scores.restriction.append((gold_flag, got.restriction or "none"))
    return out


def report_unseen(root: Path, brands: BrandDictionary, tree: CategoryTree,
                  feed_brands: bool = False) -> None:
    """Print the unseen part's table: per part and per retailer (and again with each
    retailer's brands learned first, when ``feed_brands``)."""
    from catmap.demo.unseen import ensure_unseen_world

    paths = ensure_unseen_world(root)
    print("\nunseen retailers (brand P / R / F1 on known-list brands, then on unseen brands; "
          "'given': share of unbranded products given a brand)")
    print(f"{'set':<20} {'products':>8} {'who':>6} {'age':>6} {'kn P':>6} {'kn R':>6} "
          f"{'kn F1':>6} {'un P':>6} {'un R':>6} {'un F1':>6} {'given':>7}")
    for learned in (False, True) if feed_brands else (False,):
        for part, path in paths.labelled.items():
            per_retailer = score_unseen_part(path, brands, tree, learned)
            total = OpenWorldScores()
            for scores in per_retailer.values():
                total.add(scores)
            print(total.line(f"{part}{' +feed brands' if learned else ''}"))
            for retailer, scores in per_retailer.items():
                print(scores.line(f"  {retailer}"))
            if not learned:
                print("  restriction flags:")
                for line in total.restriction_lines():
                    print(line)


def main(argv: list[str] | None = None) -> int:
    """Score the three demo feeds and print the table."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--root", type=Path, default=Path("feeds_demo"),
                        help="demo folder (default: feeds_demo)")
    parser.add_argument("--errors", type=int, default=0,
                        help="print this many who / age errors per feed")
    parser.add_argument("--no-unseen", action="store_true",
                        help="skip the unseen-retailer part")
    parser.add_argument("--feed-brands", action="store_true",
                        help="score the unseen part again with each retailer's brands learned "
                             "first, as onboarding does")
    args = parser.parse_args(argv)
    paths = demo_paths(args.root)
    tree = load_default_tree(1)
    brands = BrandDictionary.from_csv(paths.brands)
    total = Scores()
    print(f"{'feed':<12} {'products':>8} {'who':>8} {'age':>8} "
          f"{'brand P':>8} {'brand R':>8} {'brand F1':>8}")
    for name, retailer in FEEDS.items():
        extractor = AttributeExtractor(brands=brands, tree=tree, retailer_names=(retailer,))
        errors: list[tuple[str, Product, str, str, str]] = []
        scores = score_feed(paths.feeds[name], paths.gold[name], extractor, errors)
        total.add(scores)
        print(scores.line(name))
        for kind, product, want, got, why in errors[: args.errors]:
            print(f"    {kind} gold={want} got={got} | {product.title!r} | "
                  f"gender={product.gender_text!r} path={' / '.join(product.category_path)!r} "
                  f"size={product.size!r} | {why}")
    print(total.line("all"))
    print("who errors (gold → got):", dict(total.who_errors.most_common(6)))
    print("age errors (gold → got):", dict(total.age_errors.most_common(6)))
    if not args.no_unseen:
        report_unseen(args.root, brands, tree, args.feed_brands)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
