"""Onboarding figures: coverage and error against gold per demo feed, and one review round.

Prints, for each demo feed at ``--max-error``: the share auto-accepted and the measured error of
the auto-accepted part against the feed's gold labels. Then one review round: every queued item
of feed A (ferravelle) is decided with its gold node (a simulated reviewer), the model is
retrained with those decisions as extra examples, and a second feed of the same retailer (A2,
generated with the demo generator: same retailer, same departments, other products) is onboarded
with the model before and after; the open queue sizes are printed.

    python benchmarks/bench_onboard.py --work /tmp/bench-onboard [--model DIR]

``--model`` reuses a trained model folder (copied) instead of training on the reference catalog.
"""

from __future__ import annotations

import argparse
import shutil
import time
from pathlib import Path

from catmap.classify.training import train_model
from catmap.demo import ensure_demo_world
from catmap.demo.world import FEED_SIZES, _brands, feed_products, write_feed_a, write_gold
from catmap.evaluate.run import read_gold_csv
from catmap.jobs.onboard import (
    OnboardOptions,
    check_against_gold,
    default_model_dir,
    held_out_recorder,
    onboard_feed,
    review_examples,
)
from catmap.records import Product
from catmap.store import Store, store_path
from catmap.tree.taxonomy import load_default_tree

REPO = Path(__file__).resolve().parents[1]


def _gold(path: Path) -> dict[str, str]:
    return {pid: g.node for pid, g in read_gold_csv(path).items()}


def _open_items(project: Path, feed: str) -> int:
    with Store.open(store_path(project)) as store:
        summary = store.queue_summary(feed)
    return summary.open + summary.claimed


def _onboard(project: Path, feed: Path, gold: Path, options: OnboardOptions) -> dict[str, object]:
    tree = load_default_tree(1)
    summary = onboard_feed(feed, project=project, tree=tree, options=options)
    with Store.open(store_path(project)) as store:
        check = check_against_gold(store, summary.feed, _gold(gold))
    facts = {
        "feed": summary.feed,
        "mapped": summary.mapped,
        "queued": summary.queued,
        "open_items": _open_items(project, summary.feed),
        "coverage": round(check.coverage, 4),
        "error_vs_gold": round(check.error, 4),
        "wrong": check.wrong,
        "accepted": check.accepted,
        "threshold": summary.threshold,
        "seconds": summary.seconds,
    }
    print(facts, flush=True)
    return facts


def _simulate_review(project: Path, feed: str, gold: dict[str, str]) -> int:
    """Decide every open item of the feed with its gold node; return the decisions made."""
    made = 0
    with Store.open(store_path(project)) as store:
        for item in store.items(feed=feed, state="open"):
            expected = gold.get(item.product_id)
            if not expected:
                continue
            current = store.mapping(feed, item.product_id).mapping.node_id
            if expected == current:
                store.decide(item.id, "gold-reviewer", "accept")
            else:
                store.decide(item.id, "gold-reviewer", "choose", node_id=expected)
            made += 1
    return made


def _second_feed(world: Path, out: Path) -> tuple[Path, Path]:
    """Feed A2: the next products of the same retailer (same seed, departments and style)."""
    tree = load_default_tree(1)
    size = FEED_SIZES["ferravelle"]
    products = feed_products(tree, _brands(tree, 0), "ferravelle", seed=0, size=2 * size)
    later = list(products[size:])
    first_ids = {p.product_id for p in products[:size]}
    later = [p for p in later if p.product_id not in first_ids]
    out.mkdir(parents=True, exist_ok=True)
    feed, gold = out / "ferravelle_second.csv", out / "ferravelle_second.gold.csv"
    write_feed_a(later, feed)
    write_gold(later, gold)
    return feed, gold


def _train(
    project: Path, reference: Path, extra: list[tuple[Product, str]] | None = None
) -> float:
    started = time.perf_counter()
    tree = load_default_tree(1)
    train_model(  # as `catmap train` trains (refit included)
        [reference],
        tree=tree,
        project=project,
        model_dir=default_model_dir(project),
        extra_examples=extra or (),
        refit=True,
        before_refit=held_out_recorder([reference], tree=tree, project=project),
    )
    return time.perf_counter() - started


def main() -> None:
    """Run the figures and print them."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--work", type=Path, required=True, help="scratch folder (replaced)")
    parser.add_argument("--model", type=Path, default=None, help="trained model folder to copy")
    parser.add_argument("--max-error", type=float, default=0.02)
    args = parser.parse_args()
    shutil.rmtree(args.work, ignore_errors=True)
    paths = ensure_demo_world(REPO / "feeds_demo")
    options = OnboardOptions(max_error=args.max_error)
    before = args.work / "before"
    if args.model:
        shutil.copytree(args.model, default_model_dir(before))
        for cached in default_model_dir(before).glob("validation-*"):
            cached.unlink()
    else:
        print(f"training: {_train(before, paths.reference):.0f} s", flush=True)

    print("== demo feeds ==")
    for name, gold in paths.gold.items():
        _onboard(before, paths.feeds[name], gold, options)

    print("== one review round on feed A (ferravelle) ==")
    gold_a = _gold(paths.gold["ferravelle"])
    print("queue of A before review:", _open_items(before, "ferravelle"))
    print("decisions made:", _simulate_review(before, "ferravelle", gold_a))
    print("queue of A after review:", _open_items(before, "ferravelle"))
    a2, a2_gold = _second_feed(paths.root, args.work / "feeds")
    print("A2 with the model before the review round:")
    _onboard(before, a2, a2_gold, options)

    after = args.work / "after"
    with Store.open(store_path(before)) as store:
        extra = review_examples(store, "ferravelle")
    print(f"retraining with {len(extra):,} reviewed products", flush=True)
    print(f"training: {_train(after, paths.reference, extra):.0f} s", flush=True)
    print("A2 with the model retrained on the decisions:")
    _onboard(after, a2, a2_gold, options)
    print("A re-onboarded (new store) with the retrained model:")
    _onboard(after, paths.feeds["ferravelle"], paths.gold["ferravelle"], options)


if __name__ == "__main__":
    main()
