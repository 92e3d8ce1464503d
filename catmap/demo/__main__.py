"""Rebuild the demo world: ``python -m catmap.demo [--root feeds_demo] [--seed 0] [--unseen]``."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from catmap.demo.unseen import build_unseen_world
from catmap.demo.world import REFERENCE_SIZE, build_demo_world


def main(argv: list[str] | None = None) -> int:
    """Parse the options, rebuild every demo file and print where they are."""
    parser = argparse.ArgumentParser(prog="python -m catmap.demo",
                                     description="Rebuild the invented demo world.")
    parser.add_argument("--root", type=Path, default=Path("feeds_demo"),
                        help="demo folder to write (default: feeds_demo)")
    parser.add_argument("--seed", type=int, default=0, help="random seed (default: 0)")
    parser.add_argument("--reference-size", type=int, default=REFERENCE_SIZE,
                        help=f"products in the reference catalog (default: {REFERENCE_SIZE})")
    parser.add_argument("--unseen", action="store_true",
                        help="also rebuild the unseen-retailer part under generated/unseen/ "
                        "(for measuring only, never for training)")
    args = parser.parse_args(argv)
    paths = build_demo_world(args.root, seed=args.seed, reference_size=args.reference_size)
    files = paths.all_files()
    if args.unseen:
        files += build_unseen_world(args.root, seed=args.seed).all_files()
    for file in files:
        print(f"{file}  {file.stat().st_size:,} bytes")
    return 0


if __name__ == "__main__":
    sys.exit(main())
