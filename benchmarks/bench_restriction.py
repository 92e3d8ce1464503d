"""Measure the restriction keyword reader: precision and recall per flag on a labelled set.

Reads ``tests/data/restriction_labelled.csv`` (invented product titles in English, French,
German, Spanish, Italian, Dutch and Portuguese; columns text, lang, restriction, kind where
kind is "keyword" for a restricted product, "trap" for a product that names a restricted good
without being one: a flavour, scent, colour, shape, toy, glass, or an alcohol-free drink, and
"plain" for an ordinary product). Every title is read as a product with no node yet (every
keyword counts) by :func:`catmap.attributes.restriction_from_text`. Prints precision and
recall per flag, the false-positive rate on traps, and the caution text.

Four sets of invented products, same columns, in the order they were written:

- ``restriction_labelled.csv`` (318 rows): written together with the keyword lists; it
  measures their coverage of the phrasings in it, not how they generalise;
- ``restriction_fresh.csv`` and ``restriction_fresh2.csv`` (94 rows each): each written after
  the lists of its time, measured, then used to extend the lists (their figures before that are
  in the commit messages);
- ``restriction_fresh3.csv`` (94 rows): written after the last change and never used for
  tuning: the honest out-of-sample figure.

    python benchmarks/bench_restriction.py [--data tests/data/restriction_fresh3.csv] [--errors]
"""

from __future__ import annotations

import argparse
import csv
from collections import Counter
from pathlib import Path

from catmap.attributes import RESTRICTION_CAUTION, RESTRICTIONS, restriction_from_text

DEFAULT_DATA = (
    Path(__file__).resolve().parent.parent / "tests" / "data" / "restriction_labelled.csv"
)


def main(argv: list[str] | None = None) -> int:
    """Score the labelled set and print the table."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--data", type=Path, default=DEFAULT_DATA, help="the labelled CSV")
    parser.add_argument("--errors", action="store_true", help="print every wrong row")
    args = parser.parse_args(argv)
    with args.data.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    tp: Counter[str] = Counter()
    fp: Counter[str] = Counter()
    fn: Counter[str] = Counter()
    trap_flagged = traps = 0
    languages: Counter[str] = Counter()
    wrong: list[str] = []
    for row in rows:
        want = row["restriction"]
        got, why = restriction_from_text(row["text"])
        languages[row["lang"]] += 1
        if row["kind"] == "trap":
            traps += 1
            trap_flagged += bool(got)
        if got == want:
            if want:
                tp[want] += 1
            continue
        wrong.append(
            f"  [{row['lang']}] {row['text']!r}: want {want or '-'} got {got or '-'} {why}"
        )
        if got:
            fp[got] += 1
        if want:
            fn[want] += 1
    print(f"{len(rows)} products, languages: {dict(sorted(languages.items()))}")
    print(f"{'flag':<10} {'support':>8} {'precision':>10} {'recall':>8}")
    for flag in RESTRICTIONS:
        support = tp[flag] + fn[flag]
        precision = tp[flag] / max(1, tp[flag] + fp[flag])
        recall = tp[flag] / max(1, support)
        print(f"{flag:<10} {support:>8} {precision:>10.3f} {recall:>8.3f}")
    print(f"traps flagged: {trap_flagged} of {traps}")
    if args.errors:
        print("\n".join(wrong) if wrong else "  no errors")
    print(RESTRICTION_CAUTION)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
