"""Score `catmap tree diff` against the documented change log from tree version 1 to 2.

The change log is the reference alignment; the diff never reads it. Prints precision, recall and
F1 per change type and overall, recall on the non-trivial correspondences (names that differ),
and the same figures for a label-equality baseline, in the same run.

Usage: python benchmarks/bench_treediff.py [--json]
"""

from __future__ import annotations

import argparse
import json
from typing import Any

from catmap.tree.changelog import load_changes
from catmap.tree.diff import diff_trees, label_equality_crosswalk, score_against_changelog
from catmap.tree.taxonomy import default_tree_path, load_tree


def _print(title: str, scores: dict[str, Any]) -> None:
    print(title)
    print(f"  {'change':<10} {'found':>6} {'ref':>5} {'ok':>4} {'P':>6} {'R':>6} {'F1':>6}")
    rows = [*scores["per_type"].items(), ("overall", scores["overall"])]
    for kind, s in rows:
        print(
            f"  {kind:<10} {s['found']:>6} {s['reference']:>5} {s['correct']:>4} "
            f"{s['precision']:>6.3f} {s['recall']:>6.3f} {s['f1']:>6.3f}"
        )
    hard = scores["non_trivial"]
    print(
        f"  non-trivial recall (names differ): {hard['correct']}/{hard['reference']}"
        f" = {hard['recall']:.3f}"
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--json", action="store_true", help="print the figures as JSON")
    args = parser.parse_args()
    old, new = load_tree(default_tree_path(1)), load_tree(default_tree_path(2))
    changes = load_changes(default_tree_path(1).parent / "changes-v1-v2.txt")
    diff = score_against_changelog(diff_trees(old, new), changes, old=old, new=new)
    base = score_against_changelog(label_equality_crosswalk(old, new), changes, old=old, new=new)
    if args.json:
        print(json.dumps({"diff": diff, "label_equality": base}, indent=2))
        return
    _print("catmap tree diff (two trees only, no products):", diff)
    _print("baseline, label equality:", base)


if __name__ == "__main__":
    main()
