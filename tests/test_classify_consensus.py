"""Tests of catmap.classify.consensus: path shares counted as a feed streams by."""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from catmap.classify.consensus import PathCounts, path_consensus

_pairs = st.lists(
    st.tuples(st.sampled_from(["", "Garden > Chairs", "Shoes", "Shoes > Boots"]),
              st.sampled_from(["4100", "4101", "1523"])),  # fmt: skip
    max_size=60,
)


@given(_pairs, st.integers(min_value=1, max_value=7))
def test_counting_in_chunks_gives_the_consensus_of_all_pairs(
    pairs: list[tuple[str, str]], chunk: int
) -> None:
    counts = PathCounts()
    for start in range(0, len(pairs), chunk):
        counts.add(iter(pairs[start : start + chunk]))
    got = counts.consensus()
    assert got == path_consensus(pairs)
    # Same order too (paths with most products first, then by path; nodes by share).
    assert list(got) == list(path_consensus(pairs))
    assert [list(c.shares) for c in got.values()] == [
        list(c.shares) for c in path_consensus(pairs).values()
    ]


def test_worked_example() -> None:
    pairs = [("Shoes", "1523")] * 3 + [("Shoes", "4100"), ("", "4100"), ("Garden", "4100")]
    consensus = path_consensus(pairs)
    assert list(consensus) == ["Shoes", "Garden"]  # the empty path is skipped
    assert consensus["Shoes"].count == 4
    assert consensus["Shoes"].shares == {"1523": 0.75, "4100": 0.25}
    # Memory follows distinct (path, node) pairs, not products.
    counts = PathCounts()
    counts.add(pairs * 1000)
    assert sum(len(c) for c in counts.counts.values()) == 3
