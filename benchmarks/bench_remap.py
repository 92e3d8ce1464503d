"""Remap benchmark: speed and memory on many stored mappings, and quality on the demo catalog.

Two measurements, each printed:

- ``--mappings N`` (default 1,000,000): a store file is filled with N seeded mappings on tree
  version 1 (random leaves, titles made from the leaf's own name), then remapped to version 2.
  Prints the time to fill, the time to remap, the time to roll back, and the peak resident
  memory of the process before and after the remap.
- ``--demo``: the demo reference catalog's gold nodes are stored as accepted mappings on
  version 1 and remapped to version 2. Prints the share of products that needed no review and
  the accuracy of the remapped catalog against the gold labels translated to version 2 with
  the change log (renames, moves and merges are one-to-one; a removal with a named target goes
  there). Gold under a split node cannot be translated exactly (the log does not say which
  part each product belongs to), so accuracy is given on the translatable part, and the split
  products are counted apart. Mapping from scratch on version 2 (cold start, the new tree's
  keywords) is measured on the same products for comparison.

    python benchmarks/bench_remap.py --mappings 100000
    python benchmarks/bench_remap.py --demo --mappings 0 [--changes]
"""

from __future__ import annotations

import argparse
import random
import resource
import sys
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from catmap.classify.features import product_texts  # noqa: E402
from catmap.classify.keywords import KeywordMapper  # noqa: E402
from catmap.classify.training import read_labelled  # noqa: E402
from catmap.jobs.remap import remap_store, rollback_remap  # noqa: E402
from catmap.records import Mapping, Product  # noqa: E402
from catmap.store import MappedRow, Store  # noqa: E402
from catmap.tree.changelog import load_change_log, load_changes  # noqa: E402
from catmap.tree.taxonomy import load_default_tree  # noqa: E402

FEED = "bench"


def peak_mb() -> float:
    """Peak resident memory of this process so far, in MB (Linux reports kilobytes)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def synthetic_rows(count: int, seed: int = 0) -> Iterator[MappedRow]:
    """Seeded mappings on random version-1 leaves, titled with the leaf's own words."""
    tree = load_default_tree(1)
    rng = random.Random(seed)
    leaves = tree.leaves()
    words = {leaf.id: [leaf.name, *leaf.terms.get("en", ())] for leaf in leaves}
    for i in range(count):
        leaf = rng.choice(leaves)
        title = f"{rng.choice(words[leaf.id])} {rng.choice(('blue', 'large', '2 pack', 'new'))}"
        yield MappedRow(
            product=Product(product_id=f"B{i:08d}", title=title),
            mapping=Mapping(
                node_id=leaf.id, confidence=round(rng.uniform(0.5, 1.0), 4), method="model"
            ),
            status="accepted",
            group_key=tree.department(leaf.id).name,
        )


def bench_scale(count: int, folder: Path) -> None:
    old, new = load_default_tree(1), load_default_tree(2)
    with Store.open(folder / "store.sqlite") as store:
        store.add_feed(FEED)
        started = time.perf_counter()
        store.save_mapped(FEED, None, synthetic_rows(count), tree_version="1", batch_size=20_000)
        filled = time.perf_counter() - started
        before = peak_mb()
        started = time.perf_counter()
        report = remap_store(store, old, new, min_confidence=0.9)
        remapped = time.perf_counter() - started
        after = peak_mb()
        started = time.perf_counter()
        restored = rollback_remap(store)
        rolled = time.perf_counter() - started
    print(f"mappings stored        {count:,} in {filled:.1f} s")
    print(
        f"remap                  {remapped:.1f} s ({count / max(remapped, 1e-9):,.0f} mappings/s)"
    )
    print(f"  moved automatically  {report.moved_automatically:,}")
    print(f"  unchanged            {report.unchanged:,}")
    print(f"  re-scored            {report.rescored:,}")
    print(f"  back to review       {report.requeued:,}")
    print(f"rollback               {rolled:.1f} s ({restored:,} mappings restored)")
    print(f"peak memory (RSS)      {before:.0f} MB before the remap, {after:.0f} MB after")


def translate_gold(changes_path: Path) -> tuple[dict[str, str], set[str]]:
    """Old id -> new id from the change log (1:1 changes), and the split old ids."""
    mapping: dict[str, str] = {}
    split: set[str] = set()
    for change in load_changes(changes_path):
        if change.kind == "split":
            split.add(change.node_id)
        elif change.kind == "merge":
            for source in change.sources:
                mapping[source] = change.targets[0]
        elif change.kind == "remove" and change.new:
            mapping[change.node_id] = change.new
        elif change.kind == "remove":
            split.add(change.node_id)  # no target given: not translatable
    # Chains (a merge target later merged again) are not in this log; one step suffices.
    return mapping, split


def bench_demo(folder: Path, min_confidence: float, *, with_log: bool = False) -> None:
    from catmap.demo import ensure_demo_world

    old, new = load_default_tree(1), load_default_tree(2)
    paths = ensure_demo_world(ROOT / "feeds_demo", tree=old)
    data = read_labelled([Path(paths.reference)], tree=old, project=folder / "project")
    labelled = data.train + data.valid + data.test
    moved, untranslatable = translate_gold(ROOT / "taxonomies" / "changes-v1-v2.txt")

    def rows() -> Iterator[MappedRow]:
        for product, gold in labelled:
            yield MappedRow(
                product=product,
                mapping=Mapping(node_id=gold, confidence=1.0, method="model"),
                status="accepted",
                group_key=" > ".join(product.category_path),
            )

    with Store.open(folder / "demo.sqlite") as store:
        store.add_feed(FEED)
        store.save_mapped(FEED, None, rows(), tree_version="1")
        started = time.perf_counter()
        changes = load_change_log(ROOT / "taxonomies" / "changes-v1-v2.txt") if with_log else None
        report = remap_store(store, old, new, changes=changes, min_confidence=min_confidence)
        seconds = time.perf_counter() - started
        remapped = {p.product_id: m.mapping.node_id for p, m in store.mappings(FEED)}

    ids = [p.product_id for p, _ in labelled]
    gold_new = [moved.get(g, g) if g not in untranslatable else None for _, g in labelled]
    keep = [i for i, g in enumerate(gold_new) if g is not None]
    remap_right = sum(remapped[ids[i]] == gold_new[i] for i in keep)

    scratch = KeywordMapper(tree=new).fit()
    right_scratch = 0
    for start in range(0, len(keep), 5000):
        part = keep[start : start + 5000]
        probs = scratch.predict_proba(product_texts([labelled[i][0] for i in part]))
        best = scratch.classes_[np.argmax(probs, axis=1)]
        right_scratch += sum(best[j] == gold_new[i] for j, i in enumerate(part))

    print(f"demo reference catalog {len(labelled):,} products (gold stored on tree version 1)")
    print(
        f"remap to version 2     {seconds:.1f} s, accept threshold {min_confidence}, "
        f"crosswalk: {report.crosswalk}"
    )
    print(f"  moved automatically  {report.moved_automatically:,}")
    print(f"  re-scored            {report.rescored:,}")
    print(f"  back to review       {report.requeued:,}")
    print(f"  needed no review     {report.no_review_share:.2%}")
    for kind in sorted(report.by_change):
        if {"split", "merged", "removed"} & set(kind.split("+")):
            counts = report.by_change[kind]
            print(
                f"  {kind:<20} {counts['products']:,} products: {counts['automatic']:,} moved "
                f"as is, {counts['rescored']:,} re-scored, {counts['requeued']:,} to review"
            )
    print(
        f"translatable gold      {len(keep):,} products "
        f"({len(labelled) - len(keep):,} under split nodes left out)"
    )
    print(f"  remap accuracy       {remap_right / len(keep):.4f}")
    print(f"  from scratch on v2   {right_scratch / len(keep):.4f} (cold start, keywords of v2)")


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--mappings", type=int, default=1_000_000, help="stored mappings to remap (0: skip)"
    )
    parser.add_argument("--demo", action="store_true", help="measure on the demo catalog")
    parser.add_argument("--min-confidence", type=float, default=0.9, help="accept threshold (demo)")
    parser.add_argument(
        "--changes", action="store_true", help="remap with the shipped change log as crosswalk"
    )
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory(prefix="catmap-bench-remap-") as tmp:
        if args.mappings > 0:
            bench_scale(args.mappings, Path(tmp))
        if args.demo:
            bench_demo(Path(tmp), args.min_confidence, with_log=args.changes)


if __name__ == "__main__":
    main()
