"""Score the tree search on the check set in tests/data/search_checks.txt: top-1 and top-5.

Each row of the set is what a category specialist types to find a node of tree v1, with the
node (or nodes) meant. The set has two halves: ``design`` rows were looked at while the ranking
was tuned, ``holdout`` rows only scored. The script prints the hit rates per half and, with
``--misses``, the rows whose node is not first.

    python benchmarks/eval_tree_search.py [--misses] [--split design|holdout] [--time] [--cut 0.7]

``--cut 0.7`` scores each query as it stands while still being typed: cut to that share of its
characters (rounded up, at least 3), most often in the middle of a word.

Run it from another checkout (its own code first on PYTHONPATH) to score that code on this set.
"""

from __future__ import annotations

import argparse
import math
import statistics
import time
from pathlib import Path

CHECKS = Path(__file__).resolve().parent.parent / "tests" / "data" / "search_checks.txt"


def read_checks(path: Path = CHECKS) -> list[tuple[str, str, frozenset[str]]]:
    """Return (split, query, accepted node ids) for each row of the check set."""
    rows = []
    for line in path.read_text(encoding="utf-8").splitlines():
        if not line.strip() or line.startswith("#"):
            continue
        split, query, ids, _note = (cell.strip() for cell in line.split("|"))
        rows.append((split, query, frozenset(ids.split(","))))
    return rows


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n", 1)[0])
    parser.add_argument("--split", choices=("design", "holdout"), default=None)
    parser.add_argument("--misses", action="store_true", help="list the rows not found first")
    parser.add_argument("--time", action="store_true", help="time each query (median, max)")
    parser.add_argument("--cut", type=float, default=None, help="score the queries cut short")
    args = parser.parse_args()

    from catmap.tree.taxonomy import load_default_tree

    tree = load_default_tree(1)
    tree.search_matches("warm", limit=1)  # build the index outside the timing
    rows = [row for row in read_checks() if args.split in (None, row[0])]
    tally: dict[str, list[int]] = {}
    took: list[float] = []
    cpu_start = time.process_time()
    for split, query, accepted in rows:
        if args.cut is not None:
            query = query[: max(3, math.ceil(len(query) * args.cut))].rstrip()
        start = time.perf_counter()
        found = [m.node.id for m in tree.search_matches(query, limit=5)]
        took.append(time.perf_counter() - start)
        hits = tally.setdefault(split, [0, 0, 0])
        hits[0] += 1
        hits[1] += bool(found[:1]) and found[0] in accepted
        hits[2] += bool(accepted & set(found))
        if args.misses and found[:1] != [] and found[0] not in accepted:
            rank = next((i + 1 for i, f in enumerate(found) if f in accepted), None)
            first = tree.path_text(found[0])
            print(f"  {split:8} {query!r}: wanted {sorted(accepted)} (rank {rank}); first {first}")
        elif args.misses and not found:
            print(f"  {split:8} {query!r}: nothing found")
    for split, (count, top1, top5) in sorted(tally.items()):
        print(f"{split:8} {count:3} queries  top-1 {top1:3} ({top1 / count:.0%})  "
              f"top-5 {top5:3} ({top5 / count:.0%})")  # fmt: skip
    if args.time:
        cpu = time.process_time() - cpu_start
        print(f"per query: median {statistics.median(took) * 1000:.1f} ms, "
              f"max {max(took) * 1000:.1f} ms; all {len(took)}: wall {sum(took):.3f} s, "
              f"CPU {cpu:.3f} s (user+sys, with the scoring around it)")  # fmt: skip


if __name__ == "__main__":
    main()
