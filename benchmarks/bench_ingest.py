"""Speed and memory of reading + normalising a big feed (CSV and XML).

Generates a seeded CSV feed and XML feed of invented products (made-up words only), then for
each feed and for the full and half size measures, each in a fresh subprocess:

* ``read``      – the reader alone (iterate the feed to the end);
* ``normalise`` – read + normalise (iterate ``iter_products`` to the end);
* ``jsonl``     – read + normalise + write products / rejects / accounting as JSON Lines;

and prints records per second of wall time and of CPU time (the CPU figure is the one to trust
on a busy machine) and the peak resident memory of that subprocess
(``resource.getrusage(RUSAGE_SELF).ru_maxrss``). Memory that stays the same at half and full
size is flat in feed size; the one structure that grows is the duplicate-id index.

Usage::

    python benchmarks/bench_ingest.py                      # 1M CSV rows, 500k XML records
    python benchmarks/bench_ingest.py --rows 200000 --xml-records 100000
    python benchmarks/bench_ingest.py --profile csv        # cProfile of read + normalise
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import random
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

SEED = 0
MODES = ("read", "normalise", "jsonl")

CSV_COLUMNS = (
    "id",
    "title",
    "description",
    "brand",
    "category",
    "price",
    "gtin",
    "colour",
    "size",
    "url",
    "image",
    "availability",
)
CSV_PROFILE = {
    "product_id": "id",
    "title": "title",
    "description": "description",
    "brand": "brand",
    "category_path": "category",
    "price": "price",
    "gtin": "gtin",
    "colour": "colour",
    "size": "size",
    "url": "url",
    "image_url": "image",
    "availability": "availability",
}
XML_PROFILE = {
    "product_id": "@id",
    "title": "title",
    "description": "description",
    "brand": "brand",
    "category_path": "category",
    "price": "price",
    "currency": "price.@currency",
    "gtin": "gtin",
    "colour": "colour",
    "size": "size",
    "url": "link",
    "image_url": "image",
    "availability": "stock",
}

_SYLLABLES = (
    "ka ro vel tu min sa dor fi la ne bro qui zan lo te mar pe su gri ol an vo ri ta "
    "ben cal dru em fay gol hin jor kel lum nor pim ras sol tev ul var wen yor zel"
).split()
_COLOURS = ("black", "white", "navy", "olive", "red", "sand", "grey", "teal", "rust", "cream")
_SIZES = ("XS", "S", "M", "L", "XL", "38", "40", "42", "44", "One size")
_AVAILABILITY = ("available", "sold out", "limited", "3", "0", "coming soon", "yes", "")


def _word(rng: random.Random) -> str:
    return "".join(rng.choice(_SYLLABLES) for _ in range(rng.randint(1, 3)))


class _World:
    """Seeded vocabulary: brands, category breadcrumbs, words."""

    def __init__(self, rng: random.Random) -> None:
        self.rng = rng
        self.words = [_word(rng) for _ in range(3000)]
        self.brands = [_word(rng).capitalize() + " " + _word(rng).capitalize() for _ in range(300)]
        departments = [_word(rng).capitalize() for _ in range(12)]
        self.categories = []
        for _ in range(400):
            levels = [rng.choice(departments)] + [
                _word(rng).capitalize() for _ in range(rng.randint(1, 3))
            ]
            self.categories.append(levels)

    def phrase(self, n: int) -> str:
        return " ".join(self.rng.choice(self.words) for _ in range(n))

    def gtin(self) -> str:
        from catmap.feeds.normalize import gs1_check_digit

        rng = self.rng
        body = "".join(rng.choice("0123456789") for _ in range(12))
        digit = gs1_check_digit(body)
        if rng.random() < 0.02:  # a few invalid check digits, as in real feeds
            digit = (digit + 1) % 10
        return body + str(digit)

    def price(self) -> tuple[str, str]:
        rng = self.rng
        amount = rng.randint(99, 250_000) / 100
        style = rng.random()
        if style < 0.3:
            return f"{amount:.2f}".replace(".", ",") + " €", "EUR"
        if style < 0.55:
            return f"€{amount:,.2f}", "EUR"
        if style < 0.75:
            return f"{amount:.2f} EUR", "EUR"
        if style < 0.9:
            return f"{amount:.2f}", "EUR"
        return f"£{amount:.2f}", "GBP"

    def product(self, number: int) -> dict[str, Any]:
        rng = self.rng
        brand = rng.choice(self.brands)
        title = f"{brand} {self.phrase(rng.randint(2, 5))}"
        if rng.random() < 0.05:
            title = title.replace(" ", " &amp; ", 1)
        sentences = [self.phrase(rng.randint(6, 14)).capitalize() + "." for _ in range(2)]
        if rng.random() < 0.4:
            description = (
                f"<p>{sentences[0]}</p><ul><li>{self.phrase(3)}</li>"
                f"<li>{self.phrase(4)}</li></ul><p>{sentences[1]}&nbsp;</p>"
            )
        else:
            description = " ".join(sentences)
        price, currency = self.price()
        product_id = f"P{number:08d}"
        if rng.random() < 0.001:  # a few repeated ids
            product_id = f"P{max(number - 1, 0):08d}"
        return {
            "id": product_id,
            "title": title if rng.random() > 0.001 else "",
            "description": description,
            "brand": brand,
            "category": " > ".join(rng.choice(self.categories)),
            "price": price,
            "currency": currency,
            "gtin": self.gtin(),
            "colour": rng.choice(_COLOURS),
            "size": rng.choice(_SIZES),
            "url": f"https://shop.example/p/{product_id.lower()}",
            "image": f"https://img.example/{product_id.lower()}.jpg",
            "availability": rng.choice(_AVAILABILITY),
        }


def generate_csv(path: Path, rows: int) -> None:
    """Write a seeded CSV feed of ``rows`` products."""
    world = _World(random.Random(SEED))
    with path.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(CSV_COLUMNS)
        for number in range(rows):
            product = world.product(number)
            writer.writerow([product[column] for column in CSV_COLUMNS])


def generate_xml(path: Path, records: int) -> None:
    """Write a seeded XML feed of ``records`` products."""
    world = _World(random.Random(SEED + 1))
    with path.open("w", encoding="utf-8") as handle:
        handle.write('<?xml version="1.0" encoding="UTF-8"?>\n<catalog>\n<products>\n')
        for number in range(records):
            p = world.product(number)
            handle.write(
                f'<product id="{escape(p["id"])}">'
                f"<title>{escape(p['title'])}</title>"
                f"<description><![CDATA[{p['description']}]]></description>"
                f"<brand>{escape(p['brand'])}</brand>"
                f"<category>{escape(p['category'])}</category>"
                f'<price currency="{p["currency"]}">{escape(p["price"])}</price>'
                f"<gtin>{p['gtin']}</gtin><colour>{p['colour']}</colour>"
                f"<size>{escape(p['size'])}</size><link>{p['url']}</link>"
                f"<image>{p['image']}</image><stock>{escape(p['availability'])}</stock>"
                "</product>\n"
            )
        handle.write("</products>\n</catalog>\n")


def _measure(kind: str, path: str, mode: str) -> dict[str, Any]:
    """Run one measurement in this process (called in a fresh subprocess)."""
    from catmap.feeds import open_feed
    from catmap.feeds.fieldmap import FeedProfile
    from catmap.feeds.ingest import Accounting, iter_products, normalize_feed_to

    columns = CSV_PROFILE if kind == "csv" else XML_PROFILE
    profile = FeedProfile(columns=dict(columns), default_currency="EUR")
    start = time.perf_counter()
    cpu_start = time.process_time()
    feed = open_feed(path)
    accounting = Accounting()
    if mode == "read":
        count = sum(1 for _ in feed)
        accounting.read = count
    elif mode == "normalise":
        for _ in iter_products(feed, profile, accounting):
            pass
    else:
        with tempfile.TemporaryDirectory() as out:
            normalize_feed_to(feed, profile, out, accounting=accounting)
    seconds = time.perf_counter() - start
    cpu_seconds = time.process_time() - cpu_start
    return {
        "cpu_seconds": cpu_seconds,
        "records": accounting.read,
        "kept": accounting.kept,
        "rejected": accounting.rejected,
        "seconds": seconds,
        "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
    }


def _run_child(kind: str, path: Path, mode: str) -> dict[str, Any]:
    output = subprocess.run(
        [sys.executable, __file__, "--measure", kind, str(path), mode],
        check=True,
        capture_output=True,
        text=True,
    ).stdout
    result: dict[str, Any] = json.loads(output.strip().splitlines()[-1])
    return result


def _profile(kind: str, path: Path) -> None:
    import cProfile
    import pstats

    profiler = cProfile.Profile()
    profiler.enable()
    _measure(kind, str(path), "normalise")
    profiler.disable()
    pstats.Stats(profiler).sort_stats("tottime").print_stats(25)


def main(argv: list[str] | None = None) -> int:
    """Generate the feeds if needed, run the measurements, print the table."""
    parser = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawTextHelpFormatter
    )
    parser.add_argument("--rows", type=int, default=1_000_000, help="CSV rows (default 1000000)")
    parser.add_argument(
        "--xml-records", type=int, default=500_000, help="XML records (default 500000)"
    )
    parser.add_argument("--workdir", type=Path, default=Path("benchmarks/_data"))
    parser.add_argument(
        "--modes", default=",".join(MODES), help=f"comma-separated, from {', '.join(MODES)}"
    )
    parser.add_argument("--no-half", action="store_true", help="skip the half-size runs")
    parser.add_argument(
        "--profile", choices=("csv", "xml"), help="print a cProfile of read + normalise and stop"
    )
    parser.add_argument("--measure", nargs=3, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)

    if args.measure:
        kind, path, mode = args.measure
        print(json.dumps(_measure(kind, path, mode)))
        return 0

    args.workdir.mkdir(parents=True, exist_ok=True)
    feeds: list[tuple[str, Path, int]] = []
    sizes = [(args.rows, args.xml_records)]
    if not args.no_half:
        sizes.append((args.rows // 2, args.xml_records // 2))
    for rows, records in sizes:
        for kind, count, make in (("csv", rows, generate_csv), ("xml", records, generate_xml)):
            if count <= 0:
                continue
            path = args.workdir / f"bench_{count}.{kind}"
            if not path.exists():
                print(f"generating {path} ...", file=sys.stderr, flush=True)
                make(path, count)
            feeds.append((kind, path, count))

    if args.profile:
        kind_path = next(path for kind, path, _ in feeds if kind == args.profile)
        _profile(args.profile, kind_path)
        return 0

    modes = [mode for mode in args.modes.split(",") if mode]
    header = (
        f"{'feed':<5} {'records':>9} {'MB':>6} {'mode':<10} {'seconds':>8} {'rec/s':>9} "
        f"{'CPU s':>7} {'rec/CPU s':>10} {'peak MB':>8}"
    )
    print(header)
    print("-" * len(header))
    for kind, path, count in feeds:
        size_mb = os.path.getsize(path) / 1e6
        for mode in modes:
            result = _run_child(kind, path, mode)
            rate = result["records"] / result["seconds"]
            cpu_rate = result["records"] / result["cpu_seconds"]
            print(
                f"{kind:<5} {count:>9,} {size_mb:>6.0f} {mode:<10} {result['seconds']:>8.1f} "
                f"{rate:>9,.0f} {result['cpu_seconds']:>7.1f} {cpu_rate:>10,.0f} "
                f"{result['peak_mb']:>8.0f}",
                flush=True,
            )
    return 0


if __name__ == "__main__":
    sys.exit(main())
