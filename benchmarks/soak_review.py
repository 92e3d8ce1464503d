"""Review soak: reviewers sharing one queue take thousands of random actions; prints what they
did and whether every promise held.

Each reviewer has its own connection to one store file (as separate `catmap review` processes
would), on a fake clock that lets leases run out now and then. Actions: accept, choose, no fit,
undo, group decision, skip, who / age corrections, quit and come back, and products queued
again for another reason (see catmap/review/soak.py). At the end the store is checked: every
live decision in its mapping, no item decided twice, one waiting item per product, training
examples = reviewed products with a node. Exit status 1 when a check fails.

    python benchmarks/soak_review.py                       # 20,000 actions, 2 reviewers
    python benchmarks/soak_review.py --actions 5000 --reviewers 3 --seed 7
    python benchmarks/soak_review.py --memory              # one in-memory store (faster)
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from catmap.review.soak import (  # noqa: E402
    SoakClock,
    build_soak_store,
    run_soak,
    soak_file_stores,
)
from catmap.store import Store  # noqa: E402

NAMES = ("ana", "bo", "cleo", "dov", "eli", "fen")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--actions", type=int, default=20_000, help="actions in all")
    parser.add_argument("--products", type=int, default=8_000, help="products queued")
    parser.add_argument("--groups", type=int, default=800, help="retailer categories")
    parser.add_argument("--reviewers", type=int, default=2, choices=range(2, len(NAMES) + 1))
    parser.add_argument("--seed", type=int, default=0, help="random seed")
    parser.add_argument("--memory", action="store_true", help="one in-memory store")
    args = parser.parse_args()
    clock = SoakClock()
    started = time.perf_counter()
    with tempfile.TemporaryDirectory() as folder:
        if args.memory:
            stores = [Store.open(":memory:", clock=clock)]
            build_soak_store(stores[0], args.products, groups=args.groups, seed=args.seed)
        else:
            stores = soak_file_stores(
                Path(folder),
                products=args.products,
                groups=args.groups,
                seed=args.seed,
                reviewers=args.reviewers,
                clock=clock,
            )
        built = time.perf_counter()

        def progress(done: int) -> None:
            if done % 5000 == 0:
                rate = done / (time.perf_counter() - built)
                print(f"  {done:,} actions, {rate:,.0f}/s", file=sys.stderr)

        try:
            report = run_soak(
                stores,
                actions=args.actions,
                seed=args.seed,
                clock=clock,
                reviewers=NAMES[: args.reviewers],
                on_action=progress,
            )
        finally:
            for store in stores:
                store.close()
    seconds = time.perf_counter() - built
    where = "one in-memory store" if args.memory else f"{args.reviewers} connections, one file"
    print(f"review soak: {args.reviewers} reviewers, {where}, seed {args.seed}")
    print(f"  products {report.products:,} in {args.groups:,} groups (built in "
          f"{built - started:.1f} s)")
    print(f"  actions {report.total:,} in {seconds:.1f} s ({report.total / seconds:,.0f}/s); "
          f"idle (empty queue) {report.idle:,}")
    print("  by action: " + ", ".join(f"{k} {v:,}" for k, v in sorted(report.actions.items())))
    print("  refused:   " + (", ".join(f"{k} {v:,}" for k, v in sorted(report.refused.items()))
                             or "none"))
    print(f"  live decisions {report.decisions:,}, undone {report.undone:,}")
    if report.problems:
        print(f"  PROBLEMS ({len(report.problems)}):")
        for problem in report.problems[:20]:
            print(f"    {problem}")
        return 1
    print("  checks: every live decision in its mapping, no item decided twice, one waiting "
          "item per product, training examples match: all hold")
    return 0


if __name__ == "__main__":
    sys.exit(main())
