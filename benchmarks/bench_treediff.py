"""Score `catmap tree diff` on change sets it was never tuned on, and on the shipped v1 -> v2 log.

Three parts, each with precision, recall and F1 per change type (the change log is the
reference alignment; the diff never reads it):

1. **generated, held out**: change sets drawn by :func:`catmap.tree.changegen.generate_change_set`
   on tree version 1 from evaluation seeds (5000, 5001, ...), never looked at while the diff's
   rules and thresholds were chosen;
2. **generated, tuning**: the seeds (0, 1, ...) one may look at while changing the diff;
3. **shipped v1 -> v2**: the documented log (its rules were written while looking at it).

For the held-out sets it also counts the labelled demo products (feeds_demo/oskelund_labelled.csv)
of split or merged leaves that the computed crosswalk would move with no model look, and every
product it would move as is to another node than the log's.

Usage: python benchmarks/bench_treediff.py [--sets 20] [--tuning-sets 5] [--json]
"""

from __future__ import annotations

import argparse
import csv
import json
from collections import Counter
from pathlib import Path
from typing import Any

from catmap.tree.changegen import generate_change_set
from catmap.tree.changelog import load_changes
from catmap.tree.diff import (
    CHANGE_TYPES,
    crosswalk_from_changes,
    diff_trees,
    label_equality_crosswalk,
    moves_as_is,
    score_against_changelog,
)
from catmap.tree.taxonomy import CategoryTree, default_tree_path, load_tree

EVALUATION_SEEDS = 5000  # first held-out seed
CATALOG = Path(__file__).resolve().parent.parent / "feeds_demo" / "oskelund_labelled.csv"


def _catalog() -> list[tuple[str, str, str]]:
    with CATALOG.open(encoding="utf-8", newline="") as handle:
        return [(r["product_id"], r["title"], r["gold_node"]) for r in csv.DictReader(handle)]


def _moved_without_evidence(
    old: CategoryTree, changes: Any, crosswalk: Any, products: list[tuple[str, str, str]]
) -> dict[str, int]:
    """Products the computed crosswalk moves as is: of split or merged leaves, and wrongly."""
    new_tree = changes.new_tree
    logged = crosswalk_from_changes(old, new_tree, changes.log)
    truth = {c.old_id: c for c in logged.correspondences}
    computed = {c.old_id: c for c in crosswalk.correspondences}
    split_or_merged = wrong = 0
    for _pid, _title, node in products:
        if node not in computed or node not in truth:
            continue
        found, reference = computed[node], truth[node]
        if not moves_as_is(found):
            continue
        if {"split", "merged"} & set(reference.changes) and reference.new_ids != (node,):
            split_or_merged += 1  # a product leaving a split or merged leaf with no look
        if set(found.new_ids) != set(reference.new_ids):
            wrong += 1
    return {"split_or_merged_moved_as_is": split_or_merged, "moved_as_is_elsewhere": wrong}


def _pooled(per_set: list[dict[str, Any]]) -> dict[str, dict[str, float | int]]:
    """Micro-averaged P/R/F1 per change type over several change sets."""
    pooled: dict[str, dict[str, float | int]] = {}
    for kind in [k for k in CHANGE_TYPES if k != "unchanged"] + ["overall"]:
        totals: Counter[str] = Counter({"found": 0, "reference": 0, "correct": 0})
        for scores in per_set:
            s = scores["overall"] if kind == "overall" else scores["per_type"][kind]
            totals.update({k: s[k] for k in ("found", "reference", "correct")})
        p = totals["correct"] / totals["found"] if totals["found"] else 1.0
        r = totals["correct"] / totals["reference"] if totals["reference"] else 1.0
        f1 = 2 * p * r / (p + r) if p + r else 0.0
        pooled[kind] = {
            **totals,
            "precision": round(p, 4),
            "recall": round(r, 4),
            "f1": round(f1, 4),
        }
    return pooled


def _run(old: CategoryTree, seeds: range, products: list[tuple[str, str, str]]) -> dict[str, Any]:
    scores, baseline = [], []
    moved: Counter[str] = Counter()
    for seed in seeds:
        change_set = generate_change_set(old, seed, products=products)
        crosswalk = diff_trees(old, change_set.new_tree)
        changes = list(change_set.log.changes)
        scores.append(score_against_changelog(crosswalk, changes))
        baseline.append(
            score_against_changelog(label_equality_crosswalk(old, change_set.new_tree), changes)
        )
        moved.update(_moved_without_evidence(old, change_set, crosswalk, products))
    return {
        "seeds": [seeds.start, seeds.stop - 1],
        "sets": len(seeds),
        "diff": _pooled(scores),
        "label_equality": _pooled(baseline),
        "products": dict(moved),
    }


def _print(title: str, scores: dict[str, Any]) -> None:
    print(title)
    print(f"  {'change':<10} {'found':>6} {'ref':>5} {'ok':>5} {'P':>6} {'R':>6} {'F1':>6}")
    for kind, s in scores.items():
        print(
            f"  {kind:<10} {s['found']:>6} {s['reference']:>5} {s['correct']:>5} "
            f"{s['precision']:>6.3f} {s['recall']:>6.3f} {s['f1']:>6.3f}"
        )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sets", type=int, default=20, help="held-out change sets (default 20)")
    parser.add_argument("--tuning-sets", type=int, default=5, help="tuning change sets (default 5)")
    parser.add_argument("--json", action="store_true", help="print the figures as JSON")
    args = parser.parse_args()
    old, new = load_tree(default_tree_path(1)), load_tree(default_tree_path(2))
    products = _catalog()
    held_out = _run(old, range(EVALUATION_SEEDS, EVALUATION_SEEDS + args.sets), products)
    tuning = _run(old, range(args.tuning_sets), products)
    changes = load_changes(default_tree_path(1).parent / "changes-v1-v2.txt")
    shipped = score_against_changelog(diff_trees(old, new), changes, old=old, new=new)
    facts = {"held_out": held_out, "tuning": tuning, "shipped_v1_v2": shipped}
    if args.json:
        print(json.dumps(facts, indent=2))
        return
    _print(
        f"catmap tree diff, {held_out['sets']} generated change sets never used for tuning "
        f"(seeds {held_out['seeds'][0]}-{held_out['seeds'][1]}):",
        held_out["diff"],
    )
    _print("baseline, label equality, same sets:", held_out["label_equality"])
    moved = held_out["products"]
    print(
        "labelled demo products moved with no model look: of split or merged leaves "
        f"{moved.get('split_or_merged_moved_as_is', 0)}, to another node than the log's "
        f"{moved.get('moved_as_is_elsewhere', 0)}"
    )
    _print(
        f"catmap tree diff, {tuning['sets']} tuning change sets (seeds {tuning['seeds'][0]}-"
        f"{tuning['seeds'][1]}):",
        tuning["diff"],
    )
    _print(
        "catmap tree diff, shipped log v1 -> v2 (its rules were written looking at it):",
        {**shipped["per_type"], "overall": shipped["overall"]},
    )


if __name__ == "__main__":
    main()
