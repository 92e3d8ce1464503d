"""Memory benchmark: peak resident memory of ``catmap map`` against feed size.

For each size, a generated feed (the demo feed's invented rows repeated with unique ids, as in
``benchmarks/bench_scale.py``; kept in ``benchmarks/_data/``) is mapped by a fresh
``catmap map --workers 1`` process with the project's trained model. The script prints each
run's peak RSS (``ru_maxrss`` of the child) and wall seconds, then the growth between the
smallest and the largest size in bytes per product: what memory costs per product beyond the
fixed part (model, caches, the in-memory part of the first pass). The duplicate-id index
(12 bytes per distinct id, about twice that while its runs merge; see ``catmap.feeds.ingest``)
is part of it. The first pass keeps the results of up to 200,000 products in memory
(``IN_MEMORY_PRODUCTS`` of ``catmap.classify.mapping``) before it spills to a temporary folder, so
a size below that holds fewer of them: compare sizes above it (the default, 300,000 and 1,000,000).

The project needs a trained model: ``catmap demo --project DIR`` or ``catmap train``.

    python benchmarks/bench_map_memory.py --project /tmp/catmap-demo
    python benchmarks/bench_map_memory.py --project /tmp/catmap-demo --products 300000 2000000
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_scale import make_feed  # noqa: E402

DATA = ROOT / "benchmarks" / "_data"
CLI = "import sys; from catmap.cli import main; sys.argv[0] = 'catmap'; main()"


def feed_of(products: int) -> Path:
    """The generated feed of ``products`` rows (made once, then reused)."""
    path = DATA / f"map-memory-{products}.csv"
    if not path.is_file():
        DATA.mkdir(parents=True, exist_ok=True)
        partial = path.with_suffix(".partial")
        make_feed(partial, products)
        partial.replace(path)
    return path


def peak_of_map(feed: Path, project: Path, out: Path) -> tuple[float, float]:
    """Run ``catmap map`` in a fresh process; return its peak RSS in bytes and wall seconds."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    code = (
        "import resource, sys\n"
        f"sys.argv = ['catmap', 'map', {str(feed)!r}, '--project', {str(project)!r}, "
        f"'--feed', 'ferravelle', '--out', {str(out)!r}, '--workers', '1']\n"
        "from catmap.cli import main\n"
        "try:\n    main()\nexcept SystemExit as end:\n    code = end.code\nelse:\n    code = 0\n"
        "print('PEAK', resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, file=sys.stderr)\n"
        "sys.exit(code)\n"
    )
    started = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True,
                          check=False, cwd=out.parent)  # fmt: skip
    seconds = time.perf_counter() - started
    if done.returncode != 0:
        raise SystemExit(f"catmap map failed ({done.returncode}):\n{done.stderr[-2000:]}")
    peak = next(line for line in done.stderr.splitlines() if line.startswith("PEAK"))
    return int(peak.split()[1]) * 1024.0, seconds


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--project", required=True, type=Path,
                        help="A project folder with a trained model.")
    parser.add_argument("--products", type=int, nargs="+", default=[300_000, 1_000_000],
                        help="Feed sizes to map (at least two; above 200,000 each, see above).")
    args = parser.parse_args()
    sizes = sorted(set(args.products))
    if len(sizes) < 2:
        raise SystemExit("give at least two sizes")
    print(f"{'products':>10} {'peak MB':>9} {'seconds':>8}")
    peaks = {}
    with tempfile.TemporaryDirectory(prefix="catmap-map-memory-") as tmp:
        for products in sizes:
            peak, seconds = peak_of_map(feed_of(products), args.project, Path(tmp) / f"{products}")
            peaks[products] = peak
            print(f"{products:>10,} {peak / 2**20:>9.1f} {seconds:>8.1f}", flush=True)
    low, high = sizes[0], sizes[-1]
    slope = (peaks[high] - peaks[low]) / (high - low)
    print(f"growth from {low:,} to {high:,} products: {slope:.1f} bytes per product "
          f"(load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs)")  # fmt: skip


if __name__ == "__main__":
    main()
