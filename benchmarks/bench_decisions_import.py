"""Measure `decisions import` on a large file of bad rows: time and peak Python memory.

Bad rows are streamed to the rejects CSV as they are met (only the first few are kept to show),
so memory stays flat in the number of rows. Every row here names an item id that is no number,
so each is rejected without a store look-up: the cost measured is reading, checking and writing
the rejects.

    python benchmarks/bench_decisions_import.py --rows 300000
"""

from __future__ import annotations

import argparse
import csv
import tempfile
import time
import tracemalloc
from pathlib import Path

from catmap.jobs.decisions import DECISION_COLUMNS, import_decisions
from catmap.store import Store
from catmap.tree.taxonomy import load_default_tree


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=300_000, help="Rows in the decisions file.")
    args = parser.parse_args()
    tree = load_default_tree(1)
    with tempfile.TemporaryDirectory() as folder:
        sheet = Path(folder) / "queue.csv"
        with sheet.open("w", encoding="utf-8", newline="") as handle:
            writer = csv.DictWriter(handle, fieldnames=list(DECISION_COLUMNS))
            writer.writeheader()
            blank = dict.fromkeys(DECISION_COLUMNS, "")
            for number in range(args.rows):
                writer.writerow({**blank, "item_id": f"x{number}", "action": "accept",
                                 "title": "Invented product title " * 4,
                                 "note": "a reviewer's note on this row"})
        size = sheet.stat().st_size
        with Store.open(Path(folder) / "store.sqlite") as store:
            tracemalloc.start()
            started = time.perf_counter()
            result = import_decisions(store, sheet, tree=tree, reviewer="bench")
            seconds = time.perf_counter() - started
            _current, peak = tracemalloc.get_traced_memory()
            tracemalloc.stop()
    print(f"rows                {args.rows:>12,}")
    print(f"file size           {size / 1e6:>12.1f} MB")
    print(f"bad rows            {result.bad_count:>12,}  (kept to show: {len(result.bad)})")
    print(f"seconds             {seconds:>12.2f}")
    print(f"rows per second     {args.rows / seconds:>12,.0f}")
    print(f"peak Python memory  {peak / 1e6:>12.1f} MB  (tracemalloc)")


if __name__ == "__main__":
    main()
