"""Onboarding benchmark: a generated feed onboarded in one process and on local dask workers.

The feed is ``bench_scale.py``'s (the demo feed ``feeds_demo/ferravelle.csv`` repeated with a
copy number added to each id, up to N products), onboarded into a fresh project with the demo
model (trained once into the benchmark's project folder, as ``bench_scale.py`` does):

* ``single``: ``catmap onboard`` in one process;
* ``local:W``: ``catmap onboard --cluster local:W`` (W worker processes, one thread each).

It prints products per second (wall time of the onboarding, without the cluster's start-up,
printed apart), the seconds of each cluster round and of the coordinator's store phase, and
whether the two stores hold the same mappings, attributes, statuses and review items (in the
same order). The accept threshold is chosen once (the demo reference catalog's valid split)
before the timed runs. Repeated rows make the model's caches warmer than on a real feed.

    python benchmarks/bench_onboard_cluster.py                    # 50,000 products, local:2
    python benchmarks/bench_onboard_cluster.py --products 200000 --workers 2 4
"""

from __future__ import annotations

import argparse
import shutil
import sqlite3
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_scale import ensure_model, make_feed  # noqa: E402


def _store_rows(project: Path) -> list[tuple[Any, ...]]:
    """Mappings and review items in row order, without clock times."""
    connection = sqlite3.connect(project / "store.sqlite")
    try:
        mappings = connection.execute(
            "SELECT product_id, node_id, confidence, method, alternatives, status, brand, who, "
            "age, colour_family, restriction FROM mappings ORDER BY rowid"
        ).fetchall()
        items = connection.execute(
            "SELECT product_id, reason, state, priority FROM review_items ORDER BY rowid"
        ).fetchall()
        return [*mappings, *items]
    finally:
        connection.close()


def onboard_once(feed: Path, project: Path, options: Any, cluster: str | None) -> dict[str, Any]:
    """Onboard ``feed`` into ``project``; return the seconds, the rounds' and the summary."""
    from catmap.jobs.cluster import open_cluster
    from catmap.jobs.onboard import onboard_feed
    from catmap.tree.taxonomy import load_default_tree

    tree = load_default_tree("1")
    if cluster is None:
        started = time.perf_counter()
        summary = onboard_feed(feed, project=project, tree=tree, options=options)
        return {"seconds": time.perf_counter() - started, "startup": 0.0, "rounds": {},
                "mapped": summary.mapped}
    begun = time.perf_counter()
    with open_cluster(cluster) as client:
        startup = time.perf_counter() - begun
        marks: dict[str, float] = {}

        def note(where: Any) -> None:
            marks.setdefault(where.stage, time.perf_counter())

        def stage(name: str, _count: int) -> None:
            if name in ("mapping", "saving"):
                marks.setdefault(f"store: {name}", time.perf_counter())

        started = time.perf_counter()
        summary = onboard_feed(
            feed, project=project, tree=tree, options=options, client=client,
            on_cluster_progress=note, on_progress=stage,
        )  # fmt: skip
        seconds = time.perf_counter() - started
    ordered = sorted(marks.items(), key=lambda item: item[1]) + [("end", started + seconds)]
    rounds = {name: ordered[i + 1][1] - mark for i, (name, mark) in enumerate(ordered[:-1])}
    return {"seconds": seconds, "startup": startup, "rounds": rounds, "mapped": summary.mapped}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--products", type=int, default=50_000, help="products in the feed")
    parser.add_argument("--workers", type=int, nargs="+", default=[2],
                        help="local worker counts to run")
    args = parser.parse_args()

    from catmap.demo import ensure_demo_world
    from catmap.jobs.demo import DEMO_WORLD
    from catmap.jobs.onboard import OnboardOptions
    from catmap.tree.taxonomy import load_default_tree

    with tempfile.TemporaryDirectory(prefix="catmap-onboard-bench-") as folder:
        base = Path(folder)
        trained = base / "trained"
        ensure_model(trained, cold_start=False)
        reference = ensure_demo_world(DEMO_WORLD, tree=load_default_tree("1")).reference
        options = OnboardOptions(validation_feed=[Path(reference)])
        feed = base / "feeds" / "bench.csv"
        feed.parent.mkdir()
        make_feed(feed, args.products)

        def fresh(name: str) -> Path:
            project = base / name
            shutil.copytree(trained / "models", project / "models")
            return project

        # The threshold's calibration is cached beside the model: computed once, untimed.
        onboard_once(feed, fresh("warm"), options, None)
        print(f"== {args.products:,} products ==", flush=True)
        single = fresh("single")
        figures = onboard_once(feed, single, options, None)
        print(f"single   {figures['mapped']:,} mapped  {figures['seconds']:6.1f} s  "
              f"{figures['mapped'] / figures['seconds']:8,.0f} products/s", flush=True)
        expected = _store_rows(single)
        for workers in args.workers:
            project = fresh(f"local{workers}")
            figures = onboard_once(feed, project, options, f"local:{workers}")
            rounds = ", ".join(f"{k} {v:.1f}" for k, v in figures["rounds"].items())
            print(f"local:{workers}  {figures['mapped']:,} mapped  {figures['seconds']:6.1f} s  "
                  f"{figures['mapped'] / figures['seconds']:8,.0f} products/s  "
                  f"start-up {figures['startup']:.1f} s", flush=True)
            print(f"         rounds (s): {rounds}")
            print(f"         store identical to one process: {_store_rows(project) == expected}")


if __name__ == "__main__":
    main()
