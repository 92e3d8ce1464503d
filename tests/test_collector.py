"""catmap/_collector.py: the garbage collector paused around start-up, frozen only in a program."""

from __future__ import annotations

import gc
import os
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path

import pytest

from catmap import _collector

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture()
def collector_enabled() -> Iterator[None]:
    was = gc.isenabled()
    gc.enable()
    yield
    if not was:
        gc.disable()


def test_paused_turns_collection_off_inside_and_back_on_after(collector_enabled: None) -> None:
    with _collector.paused():
        assert not gc.isenabled()
        with _collector.paused():
            assert not gc.isenabled()
        assert not gc.isenabled()  # only the outermost block resumes
    assert gc.isenabled()


def test_paused_resumes_after_an_error_and_leaves_a_disabled_collector_off(
    collector_enabled: None,
) -> None:
    with pytest.raises(RuntimeError), _collector.paused():
        raise RuntimeError("boom")
    assert gc.isenabled()
    gc.disable()
    with _collector.paused():
        pass
    assert not gc.isenabled()


def test_settle_freezes_the_heap_only_in_a_program() -> None:
    # A fresh interpreter: freezing is process-wide, and this one is a library caller.
    code = (
        "import gc; from catmap import _collector\n"
        "keep = [[i] for i in range(1000)]\n"
        "_collector.settle(); library = gc.get_freeze_count()\n"
        "_collector.run_as_program(); _collector.settle()\n"
        "print(library, gc.get_freeze_count() >= len(keep), _collector.is_program())\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        check=True,
        env={**os.environ, "PYTHONPATH": str(ROOT)},
        cwd=ROOT,
    )
    assert done.stdout.split() == ["0", "True", "True"]


def test_the_command_line_runs_as_a_program_and_a_test_runner_does_not() -> None:
    from click.testing import CliRunner

    from catmap.cli import main

    assert CliRunner().invoke(main, ["--help"]).exit_code == 0
    assert not _collector.is_program()  # CliRunner calls main.main(): this is no program
    code = (
        "import sys; from catmap import _collector; from catmap.cli import main\n"
        "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
        "print(_collector.is_program(), file=sys.stderr)\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT,
        env={**os.environ, "PYTHONPATH": str(ROOT)},
    )  # fmt: skip
    assert done.stderr.strip() == "True"


def _blas_threads_after_map_loads(env: dict[str, str]) -> list[int]:
    code = (
        "import threadpoolctl\nfrom catmap.cli import main\n"
        "try:\n    main(['map', '--help'])\nexcept SystemExit:\n    pass\n"
        "import sys, numpy\n"
        "print([p['num_threads'] for p in threadpoolctl.threadpool_info() "
        "if p['user_api'] == 'blas'], file=sys.stderr)\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT,
        env={**env, "PYTHONPATH": str(ROOT)},
    )  # fmt: skip
    return [int(n) for n in done.stderr.strip().strip("[]").split(",") if n.strip()]


def test_the_command_line_gives_blas_one_thread_unless_the_user_set_it() -> None:
    # Reference: threadpoolctl (PyPI) reads the thread count NumPy's BLAS library runs with.
    unset = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "OMP_NUM_THREADS")
    env = {k: v for k, v in os.environ.items() if k not in unset}
    assert _blas_threads_after_map_loads(env) == [1]
    assert _blas_threads_after_map_loads({**env, "OPENBLAS_NUM_THREADS": "2"}) == [2]
