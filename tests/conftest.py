"""Fixtures shared by the test modules that onboard the small world (see tests/test_onboard.py).

A module asks for them with ``pytestmark = pytest.mark.usefixtures("tiny_tree")``; a module
that defines its own ``world`` keeps it.
"""

from __future__ import annotations

import csv
from collections.abc import Iterator

import pytest

from tests.test_onboard import SmallWorld, small_world


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory) -> SmallWorld:
    """The small world: its tree, reference catalog, feeds and trained model (one per module)."""
    return small_world(tmp_path_factory)


@pytest.fixture()
def tiny_tree(world: SmallWorld, monkeypatch: pytest.MonkeyPatch) -> None:
    """Point the shared tree at the small world's tree for one test."""
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(world.tree_dir))


# The cell size limit for one test of a feed that stops early: a cell larger than the limit,
# with no quote, is the error that still stops reading a plain delimited feed.
SMALL_CELL_LIMIT = 1 << 16


@pytest.fixture()
def oversized_cell() -> Iterator[bytes]:
    """Lower the csv cell size limit for one test and give a cell, with no quote, larger than it."""
    before = csv.field_size_limit(SMALL_CELL_LIMIT)
    try:
        yield b"x" * (SMALL_CELL_LIMIT + 1)
    finally:
        csv.field_size_limit(before)
