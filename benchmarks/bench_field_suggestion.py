"""Share of fields that catmap's field suggestion maps right, with no hand edit, on a corpus.

Writes the seeded corpus of invented feed layouts of ``tests/_feed_layouts.py`` (CSV dialects,
XML with namespaces, attributes and repeated elements, nested JSON Lines, headers in seven
languages; from the 50th layout on, half the CSV layouts have tagged names such as "prezzo_it",
from the 99th on, names that say nothing such as "f03") to a temporary folder, opens each
feed, suggests its profile and compares it with the layout's expected mapping. A field counts
as right when the suggested column is the expected one, and, for a field the layout does not
have, when nothing is suggested.

Prints one line: the share of required fields right, the share of all fields right, and the
layouts with a wrong field (``--verbose`` lists each wrong field).

Usage::

    python benchmarks/bench_field_suggestion.py
    python benchmarks/bench_field_suggestion.py --layouts 49 --seed 1 --verbose
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from _feed_layouts import FIELDS, REQUIRED, Layout, write_layouts  # noqa: E402

from catmap.feeds import open_feed  # noqa: E402
from catmap.feeds.fieldmap import suggest_profile  # noqa: E402

Wrong = tuple[str, str, str | None, str | None]


def score(layouts: list[Layout]) -> tuple[float, float, list[Wrong]]:
    """Return (required share right, all-fields share right, wrong (layout, field, got, want))."""
    right_required = right_all = 0
    wrong: list[Wrong] = []
    for layout in layouts:
        feed = open_feed(layout.path)
        profile = suggest_profile(feed.info, feed.sample(200))
        for field in FIELDS:
            got = profile.columns.get(field)
            want = layout.expected.get(field)
            if got == want:
                right_all += 1
                right_required += field in REQUIRED
            else:
                wrong.append((layout.name, field, got, want))
    required = right_required / (len(layouts) * len(REQUIRED))
    return required, right_all / (len(layouts) * len(FIELDS)), wrong


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--layouts", type=int, default=147, help="How many layouts (default 147; see the corpus)."
    )
    parser.add_argument("--seed", type=int, default=0, help="Corpus seed (default 0).")
    parser.add_argument("--verbose", action="store_true", help="List every wrong field.")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        layouts = write_layouts(Path(folder), args.layouts, args.seed)
        required, overall, wrong = score(layouts)
    bad_layouts = sorted({name for name, *_ in wrong})
    print(
        f"layouts {len(layouts)} (seed {args.seed}): required fields right {required:.1%}, "
        f"all fields right {overall:.1%}; layouts with a wrong field: {len(bad_layouts)}"
    )
    if args.verbose:
        for name, field, got, want in wrong:
            print(f"  {name:14} {field:14} got {got!r:32} want {want!r}")


if __name__ == "__main__":
    main()
