"""A process killed in the middle of writing loses nothing it committed, and a rerun completes.

The child prints what it committed, one line per commit, flushed; the parent kills it with
SIGKILL and then checks the store file against what was printed.
"""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from catmap.store import Store

pytestmark = pytest.mark.skipif(os.name != "posix", reason="needs SIGKILL")

ROWS = 40_000
BATCH = 1_000

_WRITER = textwrap.dedent(
    """
    import sys
    from decimal import Decimal
    from catmap.records import Attributes, Mapping, Product
    from catmap.store import MappedRow, Store

    path, rows, batch = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])

    def make():
        for i in range(rows):
            yield MappedRow(
                Product(product_id=f"b{i:06d}", title=f"Orvane lamp {i}", price=Decimal("12.50")),
                Mapping("4100", (i % 100) / 100, "model"),
                Attributes(brand="Orvane"),
                status="queued" if i % 10 == 0 else "accepted",
                group_key="Home > Lamps",
                priority=0.5,
            )

    with Store.open(path) as store:
        feed = store.add_feed("shop-d")
        store.save_mapped(
            feed, None, make(), batch_size=batch,
            on_batch=lambda total: print(total, flush=True),
        )
    print("done", flush=True)
    """
)

_REVIEWER = textwrap.dedent(
    """
    import sys
    from catmap.store import Store

    with Store.open(sys.argv[1]) as store:
        while (item := store.claim_next("ann")) is not None:
            store.decide(item.id, "ann", "choose", node_id="4101", note="lamp base")
            print(item.id, flush=True)
    print("done", flush=True)
    """
)


def _run_and_kill(script: str, args: list[str], lines_before_kill: int) -> list[str]:
    child = subprocess.Popen(
        [sys.executable, "-c", script, *args], stdout=subprocess.PIPE, text=True
    )
    assert child.stdout is not None
    printed: list[str] = []
    for line in child.stdout:
        printed.append(line.strip())
        if len(printed) >= lines_before_kill:
            child.send_signal(signal.SIGKILL)
            break
    printed.extend(line.strip() for line in child.stdout)  # lines already in the pipe
    child.wait(timeout=60)
    assert "done" not in printed, "the child finished before it could be killed"
    assert child.returncode == -signal.SIGKILL
    return printed


def _run_to_end(script: str, args: list[str]) -> list[str]:
    done = subprocess.run(
        [sys.executable, "-c", script, *args], capture_output=True, text=True, timeout=300
    )
    assert done.returncode == 0, done.stderr
    return done.stdout.split()


def _integrity(path: Path) -> str:
    conn = sqlite3.connect(path)
    try:
        return str(conn.execute("PRAGMA integrity_check").fetchone()[0])
    finally:
        conn.close()


def test_killed_bulk_write_keeps_whole_batches_and_rerun_completes(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    args = [str(path), str(ROWS), str(BATCH)]
    printed = _run_and_kill(_WRITER, args, lines_before_kill=3)
    committed = max(int(line) for line in printed)
    assert _integrity(path) == "ok"
    with Store.open(path) as store:
        products = len(list(store.products("shop-d")))
        mappings = len(list(store.mappings("shop-d")))
        queued = store.queue_summary().open
    # Every committed batch is there; no partial batch; products and mappings move together.
    assert committed <= products < ROWS
    assert products % BATCH == 0
    assert mappings == products
    assert queued == products // 10

    assert _run_to_end(_WRITER, args)[-1] == "done"
    with Store.open(path) as store:
        assert len(list(store.products("shop-d"))) == ROWS
        assert store.queue_summary().open == ROWS // 10


def test_killed_reviewer_loses_no_committed_decision(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    _run_to_end(_WRITER, [str(path), "3000", "500"])
    printed = _run_and_kill(_REVIEWER, [str(path)], lines_before_kill=40)
    committed = {int(line) for line in printed}
    assert _integrity(path) == "ok"
    with Store.open(path) as store:
        decided = {d.item_id for d in store.decisions()}
        entries = [e for e in store.audit_log() if e.action == "decision"]
        assert committed <= decided
        # At most one decision committed after the last line the child managed to print.
        assert len(decided) - len(committed) <= 1
        assert len(entries) == len(decided)
        for item_id in decided:
            assert store.item(item_id).state == "done"
    # Running again resumes: the item left claimed by "ann" comes back to her first.
    assert _run_to_end(_REVIEWER, [str(path)])[-1] == "done"
    with Store.open(path) as store:
        summary = store.queue_summary()
        assert (summary.open, summary.claimed, summary.done) == (0, 0, 300)
        assert len(store.decisions()) == 300


def test_a_run_whose_process_died_is_marked_stopped_by_the_next(tmp_path: Path) -> None:
    path = tmp_path / "store.sqlite"
    script = (
        "import sys, os, signal\n"
        "from catmap.store import Store\n"
        "store = Store.open(sys.argv[1])\n"
        "store.add_feed('shop')\n"
        "store.start_run('onboard', feed='shop')\n"
        "os.kill(os.getpid(), signal.SIGKILL)\n"
    )
    env = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1])}
    child = subprocess.run([sys.executable, "-c", script, str(path)], env=env, check=False)
    assert child.returncode == -signal.SIGKILL
    with Store.open(path) as store:
        assert [run.status for run in store.runs()] == ["running"]
        mine = store.start_run("onboard", feed="shop")  # this process is alive: not stale
        stopped = store.stop_stale_runs()
        assert [run.id for run in stopped] == [1]
        runs = {run.id: run for run in store.runs()}
        assert runs[1].status == "stopped" and runs[1].finished_at
        assert "ended without finishing" in runs[1].summary["stopped_early"]
        assert runs[mine].status == "running"
        assert store.stop_stale_runs() == []
