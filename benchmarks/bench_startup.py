"""Start-up benchmark: ``catmap map`` on a one-row feed, wall time and where it goes.

Each run is a fresh ``catmap map`` process (as a user types it) on a feed of one product (the
first row of the demo feed ``feeds_demo/ferravelle.csv``, invented), with the project's trained
model. The first run fills Numba's disk cache of compiled loops if it is empty and is not
counted; the script then prints the median, lowest and highest wall seconds of ``--runs``
runs, their median CPU seconds (user + system: the figure to compare on a shared machine), the
peak resident memory, and (``-X importtime`` of one more run) the seconds spent
importing, the heaviest top-level imports, and whether any of :data:`NOT_NEEDED` was imported
at all (scikit-learn, pandas, SciPy's statistics, the terminal-UI framework, onboarding, the
store, training, lxml...: mapping this feed needs none of them).

The project needs a trained model: ``catmap demo --project DIR`` (about two minutes) or
``catmap train --project DIR``.

    python benchmarks/bench_startup.py --project /tmp/catmap-demo
    python benchmarks/bench_startup.py --project /tmp/catmap-demo --runs 9
"""

from __future__ import annotations

import argparse
import csv
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SOURCE = ROOT / "feeds_demo" / "ferravelle.csv"
# Modules mapping should never import: slow to import, and not needed to map (a CSV feed with a
# saved profile): fitting, the terminal UI, the cluster, onboarding and what only it uses, the
# tree diff, and the libraries of XML feeds, mojibake and profile suggestion.
NOT_NEEDED = (
    "sklearn", "pandas", "scipy.stats", "scipy.optimize", "textual", "dask",
    "catmap.jobs.onboard", "catmap.store", "catmap.attributes", "catmap.review", "catmap.decide",
    "catmap.classify.training", "catmap.tree.diff", "ftfy", "rapidfuzz", "lxml", "sqlite3",
)  # fmt: skip
CLI = "import sys; from catmap.cli import main; sys.argv[0] = 'catmap'; main()"


def one_row_feed(folder: Path) -> Path:
    """Write the demo feed's header and first product to ``folder/ferravelle.csv``."""
    with open(SOURCE, encoding="cp1252", newline="") as handle:
        reader = csv.reader(handle, delimiter=";")
        rows = [next(reader), next(reader)]
    path = folder / "ferravelle.csv"
    with open(path, "w", encoding="cp1252", newline="") as out:
        csv.writer(out, delimiter=";").writerows(rows)
    return path


def run_map(feed: Path, project: Path, out: Path, *extra: str) -> tuple[float, float, str]:
    """Run ``catmap map`` once in a fresh process; return its wall and CPU seconds, stderr."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    command = [sys.executable, *extra, "-c", CLI, "map", str(feed), "--project", str(project),
               "--out", str(out)]  # fmt: skip
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    started = time.perf_counter()
    # From the output folder's parent: `python -c` puts the working folder first on sys.path,
    # which must not shadow the checkout measured.
    done = subprocess.run(
        command, env=env, capture_output=True, text=True, check=False, cwd=out.parent
    )
    seconds = time.perf_counter() - started
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    if done.returncode != 0:
        raise SystemExit(f"catmap map failed ({done.returncode}):\n{done.stderr}")
    return seconds, cpu, done.stderr


def import_report(stderr: str, top: int) -> None:
    """Print the import time in all, the heaviest top-level imports, and unwanted modules."""
    rows = []
    for line in stderr.splitlines():
        if not line.startswith("import time:") or "self [us]" in line:
            continue
        parts = line[len("import time:"):].split("|")
        own_us, cumulative_us, module = int(parts[0]), int(parts[1]), parts[2]
        depth = (len(module) - len(module.lstrip(" "))) // 2
        rows.append((own_us, cumulative_us, depth, module.strip()))
    total = sum(own for own, _c, _d, _m in rows) / 1e6
    print(f"imports: {total:.2f} s in all ({len(rows)} modules)")
    outer = sorted((r for r in rows if r[2] == 0), key=lambda r: -r[1])[:top]
    for _own, cumulative, _depth, module in outer:
        print(f"  {cumulative / 1e6:6.2f} s  {module}")
    names = {module for _o, _c, _d, module in rows}
    present = [name for name in NOT_NEEDED if name in names]
    print("not needed but imported: " + (", ".join(present) if present else "none"))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--project", required=True, type=Path,
                        help="A project folder with a trained model.")
    parser.add_argument("--runs", type=int, default=5, help="Timed runs (the median is shown).")
    parser.add_argument("--top", type=int, default=8, help="Top-level imports listed.")
    args = parser.parse_args()
    if not (args.project / "models" / "current" / "manifest.json").is_file():
        raise SystemExit(f"no trained model in {args.project}: run `catmap demo --project "
                         f"{args.project}` first")  # fmt: skip
    with tempfile.TemporaryDirectory(prefix="catmap-startup-") as tmp:
        folder = Path(tmp)
        feed = one_row_feed(folder)
        run_map(feed, args.project, folder / "warm")  # fills Numba's cache when empty
        times, cpus = [], []
        for i in range(args.runs):
            seconds, cpu, _ = run_map(feed, args.project, folder / f"out{i}")
            times.append(seconds)
            cpus.append(cpu)
        _, _, stderr = run_map(feed, args.project, folder / "imports", "-X", "importtime")
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    load = os.getloadavg()[0]
    print(f"catmap map, one-row feed, {args.runs} runs: median {statistics.median(times):.2f} s "
          f"(lowest {min(times):.2f} s, highest {max(times):.2f} s); CPU median "
          f"{statistics.median(cpus):.2f} s; peak RSS {peak:.0f} MB; "
          f"load average {load:.1f} on {os.cpu_count()} CPUs")  # fmt: skip
    import_report(stderr, args.top)


if __name__ == "__main__":
    main()
