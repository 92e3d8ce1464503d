"""``python -m catmap``: the same command line as the ``catmap`` script."""

from __future__ import annotations

from catmap.cli import main

if __name__ == "__main__":
    main(prog_name="catmap")
