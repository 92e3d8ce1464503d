"""Store benchmark: bulk writes of mapped products, and review claims + decisions.

Prints, for a fresh store file in a temporary folder:

- ``save_mapped``: N seeded products with their mappings and attributes (10% queued, so review
  items are written too), timed from the first row to the last commit; the rows are built
  before the clock starts, so only the store's work is measured (wall and CPU seconds,
  mappings/s);
- ``save_mapped again``: the same N rows once more (the re-run of a feed: every row an upsert
  of an existing key);
- ``claims``: ``claim_next`` + ``decide`` in a loop by one reviewer (each a committed,
  synchronous transaction), claims/s.

    python benchmarks/bench_store.py                     # 100,000 mappings, 2,000 claims
    python benchmarks/bench_store.py --mappings 20000 --claims 500
    python benchmarks/bench_store.py --profile           # cProfile of the first save_mapped
"""

from __future__ import annotations

import argparse
import cProfile
import pstats
import random
import sys
import tempfile
import time
from decimal import Decimal
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from catmap.records import Alternative, Attributes, Mapping, Product  # noqa: E402
from catmap.store import MappedRow, Store  # noqa: E402

FEED = "bench"
WORDS = (
    "merino", "walking", "boot", "linen", "shirt", "kettle", "oak", "lamp", "cotton", "wool",
    "jacket", "trail", "steel", "pan", "ceramic", "mug", "velvet", "cushion", "leather", "belt",
)  # fmt: skip
COLOURS = ("navy", "black", "stone", "olive", "rust", "white")
PATHS = [f"Dept {d} > Aisle {a}" for d in range(12) for a in range(25)]


def make_rows(count: int, seed: int = 0) -> list[MappedRow]:
    """Seeded products shaped like a retailer feed's, with mappings and attributes."""
    rng = random.Random(seed)
    rows = []
    for index in range(count):
        title = " ".join(rng.choice(WORDS) for _ in range(rng.randint(3, 8)))
        path = rng.choice(PATHS)
        confidence = rng.random()
        queued = confidence < 0.1
        product = Product(
            product_id=f"SKU-{index:08d}",
            title=title.capitalize(),
            description=" ".join(rng.choice(WORDS) for _ in range(rng.randint(10, 40))),
            brand=f"Brand{rng.randint(1, 400)}",
            category_path=tuple(path.split(" > ")),
            price=Decimal(rng.randint(199, 99999)) / 100,
            currency="EUR",
            gtin=f"{rng.randrange(10**13):014d}",
            gtin_raw="",
            colour=rng.choice(COLOURS),
            size=rng.choice(("S", "M", "L", "42", "")),
            url=f"https://shop.invalid/p/{index}",
            image_url=f"https://shop.invalid/i/{index}.jpg",
            availability="available",
            extra={"material": rng.choice(WORDS)},
            source_line=index + 2,
        )
        leaf = str(1000 + rng.randrange(600))
        mapping = Mapping(
            leaf,
            confidence,
            "model",
            tuple(
                Alternative(str(1000 + rng.randrange(600)), confidence / (k + 2)) for k in range(3)
            ),
        )
        attributes = Attributes(
            brand=product.brand,
            brand_confidence=0.9,
            brand_evidence="field",
            who=rng.choice(("female", "male", "unisex", "not_applicable")),
            age="adult",
            audience_evidence="column 'women' → female",
            colour_family=product.colour,
        )
        rows.append(
            MappedRow(
                product=product,
                mapping=mapping,
                attributes=attributes,
                status="queued" if queued else "accepted",
                group_key=path,
                priority=1.0 - confidence if queued else 0.0,
            )
        )
    return rows


def timed_save(store: Store, rows: list[MappedRow], run: int) -> tuple[float, float]:
    wall, cpu = time.perf_counter(), time.process_time()
    saved = store.save_mapped(FEED, run, rows, model_version="bench", tree_version="1")
    assert saved == len(rows)
    return time.perf_counter() - wall, time.process_time() - cpu


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--mappings", type=int, default=100_000, help="rows to save")
    parser.add_argument("--claims", type=int, default=2000, help="claim + decide loops")
    parser.add_argument("--profile", action="store_true", help="cProfile the first save")
    args = parser.parse_args()

    started = time.perf_counter()
    rows = make_rows(args.mappings)
    print(f"built {len(rows):,} rows in {time.perf_counter() - started:.1f} s (not timed below)")
    with tempfile.TemporaryDirectory() as tmp, Store.open(Path(tmp) / "store.sqlite") as store:
        store.add_feed(FEED, source_path="bench.csv")
        run = store.start_run("onboard", feed=FEED)
        if args.profile:
            profiler = cProfile.Profile()
            profiler.enable()
        wall, cpu = timed_save(store, rows, run)
        if args.profile:
            profiler.disable()
            pstats.Stats(profiler).sort_stats("cumulative").print_stats(25)
        print(
            f"save_mapped        {len(rows):>9,} mappings  {wall:6.2f} s wall  {cpu:6.2f} s CPU"
            f"  {len(rows) / wall:>9,.0f} mappings/s"
        )
        wall, cpu = timed_save(store, rows, run)
        print(
            f"save_mapped again  {len(rows):>9,} mappings  {wall:6.2f} s wall  {cpu:6.2f} s CPU"
            f"  {len(rows) / wall:>9,.0f} mappings/s"
        )
        claims = 0
        wall, cpu_start = time.perf_counter(), time.process_time()
        for _ in range(args.claims):
            item = store.claim_next("bench-reviewer")
            if item is None:
                break
            store.decide(item.id, "bench-reviewer", "accept")
            claims += 1
        wall = time.perf_counter() - wall
        cpu = time.process_time() - cpu_start
        print(
            f"claim + decide     {claims:>9,} items     {wall:6.2f} s wall  {cpu:6.2f} s CPU"
            f"  {claims / wall if wall else 0:>9,.0f} claims/s"
        )


if __name__ == "__main__":
    main()
