"""Measure the restriction reader: precision and recall per flag on labelled sets.

Each set is a CSV of invented product titles in English, French, German, Spanish, Italian,
Dutch and Portuguese; columns text, lang, restriction, kind where kind is "keyword" for a
restricted product, "trap" for a product that names a restricted good without being one (a
flavour, scent, colour, shape, toy, glass, opener, an alcohol-free drink...) and "plain" for
an ordinary product. Every title is read as a product with no node yet (every cue counts) by
:func:`catmap.attributes.restriction_from_text`. Prints, per set, precision and recall per
flag and how many traps were flagged, then the caution text.

The sets in ``tests/data`` (all read when no ``--data`` is given), in the order they were
written, and how they were used:

- ``restriction_labelled.csv`` (318 rows): written together with the first keyword lists;
- ``restriction_fresh.csv``, ``restriction_fresh2.csv`` (94 rows each): each written after
  the lists of its time, measured, then used to extend them;
- ``restriction_fresh3.csv`` (94 rows): written after fresh2's changes and measured untouched
  (alcohol P 0.478 R 0.786, medicine R 0.643, 13 of 24 traps flagged), then used with the
  three others, row by row, to develop the present reader (head of the title, accessory
  and descriptor cues, compounds, word stems, measures, colour names);
- ``restriction_fresh4.csv`` (180 rows): written blind by someone else; while round 1 of
  the present reader was tuned, only its aggregate table (never its rows) was read, to choose
  between designs (alcohol P 0.938, weapons R 0.929, adult R 0.929, 1 of 64 traps flagged);
- ``restriction_fresh5.csv`` (240 rows): written blind by someone else and scored once, after
  round 1: alcohol P 0.769 R 1.000, tobacco P 1.000 R 0.895, weapons P 0.941 R 0.842, adult
  P 1.000 R 0.944, medicine P 1.000 R 0.950, 7 of 84 traps flagged.

In round 2 fresh4 and fresh5 were read row by row and their errors fixed by classes of
phrasing, each covered in the seven languages (ammunition by calibre or hunting word,
qualifier and object pairs of the adult flag, a flavour word before a drink, accessories
that undo drinks only, weak words that are a fruit or a number elsewhere...). All six sets
have therefore been seen while tuning: their figures measure coverage, not generalisation;
only a set written later, blind, measures that. ``tests/data/heldout_restriction_fresh6.csv``
(240 rows) is one: written blind by someone else after round 2 and scored once (its name
keeps it out of the default sets and of the tests' guard). Text only, no node:

    ========  ====================  ====================
    flag      before round 1 (P/R)  after round 2 (P/R)
    ========  ====================  ====================
    alcohol   0.560 / 0.700         0.909 / 1.000
    tobacco   0.850 / 0.850         0.947 / 0.900
    weapons   0.750 / 0.600         0.895 / 0.850
    adult     1.000 / 0.700         1.000 / 1.000
    medicine  0.857 / 0.300         1.000 / 0.850
    traps     18 of 85 flagged      4 of 85 flagged
    ========  ====================  ====================

Below the targets (recall 0.98, precision 0.95) on four flags; the misses are nicotine forms
(pods, pouches, lozenges, a mouth spray), pellets, a stun device, broadheads, a homeopathic
remedy; the false flags a caulking gun, a silicone gun, a nail-polish colour, a brewing kit.
In the pipeline the node adds its own restriction and silences general words in tool,
kitchen, toy and clothing nodes, which this table does not see. Fixing those rows would spend
this set too. Pass such a file with ``--data``
(repeatable; ``--data default`` adds the six above); ``--errors`` prints the wrong rows, so
do not use it on a held-out set.

    python benchmarks/bench_restriction.py [--data PATH ...] [--errors]
"""

from __future__ import annotations

import argparse
import csv
from collections import Counter
from pathlib import Path

from catmap.attributes import RESTRICTION_CAUTION, RESTRICTIONS, restriction_from_text

DATA_DIR = Path(__file__).resolve().parent.parent / "tests" / "data"


def default_sets() -> list[Path]:
    """Return the labelled sets kept with the tests, oldest first."""
    order = ["labelled", "fresh", "fresh2", "fresh3", "fresh4", "fresh5"]
    found = sorted(DATA_DIR.glob("restriction_*.csv"))

    def rank(path: Path) -> tuple[int, str]:
        name = path.stem.removeprefix("restriction_")
        return (order.index(name) if name in order else len(order), name)

    return sorted(found, key=rank)


def score(path: Path, *, errors: bool) -> None:
    """Score one labelled set and print its table.

    Args:
        path: the CSV (columns text, lang, restriction, kind).
        errors: also print every wrongly read row.
    """
    with path.open(encoding="utf-8", newline="") as handle:
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
    print(f"== {path.name}: {len(rows)} products, languages: {dict(sorted(languages.items()))}")
    print(f"{'flag':<10} {'support':>8} {'precision':>10} {'recall':>8}")
    for flag in RESTRICTIONS:
        support = tp[flag] + fn[flag]
        precision = tp[flag] / max(1, tp[flag] + fp[flag])
        recall = tp[flag] / max(1, support)
        print(f"{flag:<10} {support:>8} {precision:>10.3f} {recall:>8.3f}")
    print(f"traps flagged: {trap_flagged} of {traps}")
    if errors:
        print("\n".join(wrong) if wrong else "  no errors")
    print()


def main(argv: list[str] | None = None) -> int:
    """Score every set asked for (the six in tests/data by default) and print the tables."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--data", action="append", default=[],
        help="a labelled CSV (repeatable); 'default' stands for the sets in tests/data",
    )
    parser.add_argument("--errors", action="store_true", help="print every wrong row")
    args = parser.parse_args(argv)
    paths: list[Path] = []
    for item in args.data or ["default"]:
        paths.extend(default_sets() if item == "default" else [Path(item)])
    for path in paths:
        score(path, errors=args.errors)
    print(RESTRICTION_CAUTION)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
