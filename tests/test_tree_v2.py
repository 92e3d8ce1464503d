"""Tree version 2 and the v1 -> v2 change log agree with each other and with tree version 1."""

from __future__ import annotations

from pathlib import Path

import pytest

from catmap.errors import TreeError
from catmap.tree.changelog import apply_changes, load_change_log, load_changes
from catmap.tree.taxonomy import default_tree_path, load_tree

V1 = load_tree(default_tree_path(1))
V2 = load_tree(default_tree_path(2))
LOG = load_change_log(default_tree_path(1).parent / "changes-v1-v2.txt")
CHANGES = LOG.changes


def _of(kind: str) -> list:  # type: ignore[type-arg]
    return [c for c in CHANGES if c.kind == kind]


def test_versions_and_minimum_counts() -> None:
    assert (V1.version, V2.version) == ("1", "2")
    assert (LOG.from_version, LOG.to_version) == ("1", "2")
    # The task's minimum numbers of each change.
    assert len(_of("rename")) >= 10
    assert len(_of("move")) >= 10
    assert len(_of("split")) >= 5
    assert len(_of("merge")) >= 3
    assert len(_of("add")) >= 10
    assert len(_of("remove")) >= 5


def test_every_listed_change_is_true() -> None:
    for c in _of("rename"):
        assert V1[c.node_id].name == c.old and V2[c.node_id].name == c.new, c
    for c in _of("move"):
        assert (V1[c.node_id].parent or "-") == c.old, c
        assert (V2[c.node_id].parent or "-") == c.new, c
    for c in _of("split"):
        assert c.node_id in V1 and c.node_id not in V2, c
        assert all(part not in V1 and part in V2 for part in c.targets), c
    for c in _of("merge"):
        assert all(s in V1 for s in c.sources), c
        assert all(s not in V2 for s in c.sources if s != c.node_id), c
        assert c.node_id in V2, c
        if c.node_id not in c.sources:
            assert c.node_id not in V1, c
    for c in _of("add"):
        assert c.node_id not in V1 and c.node_id in V2, c
    for c in _of("remove"):
        assert c.node_id in V1 and c.node_id not in V2, c


def test_every_difference_is_listed() -> None:
    # Id-level differences computed from the two files alone...
    common = [n.id for n in V1 if n.id in V2]
    renamed = {i for i in common if V1[i].name != V2[i].name}
    moved = {i for i in common if V1[i].parent != V2[i].parent}
    gone = {n.id for n in V1 if n.id not in V2}
    new = {n.id for n in V2 if n.id not in V1}
    other = {
        i
        for i in common
        if (V1[i].audience, V1[i].restriction) != (V2[i].audience, V2[i].restriction)
    }
    grown = {i for i in common if dict(V1[i].terms) != dict(V2[i].terms)}
    # ... against what the change log says.
    kept_targets = {c.node_id for c in _of("merge") if c.node_id in c.sources}
    assert renamed == {c.node_id for c in _of("rename")}
    assert moved == {c.node_id for c in _of("move")}
    assert gone == (
        {c.node_id for c in _of("split")}
        | {s for c in _of("merge") for s in c.sources if s != c.node_id}
        | {c.node_id for c in _of("remove")}
    )
    assert new == (
        {p for c in _of("split") for p in c.targets}
        | {c.node_id for c in _of("merge") if c.node_id not in c.sources}
        | {c.node_id for c in _of("add")}
    )
    assert other == set()
    assert grown == kept_targets  # a kept merge target takes in the merged keywords


def test_applying_the_log_to_v1_gives_v2() -> None:
    applied = apply_changes(V1, CHANGES, version="2")
    assert [n.id for n in applied] == [n.id for n in V2]
    assert list(applied) == list(V2)


def test_new_nodes_have_words_in_all_four_languages() -> None:
    for change in CHANGES:
        for node in change.nodes:
            assert all(node.terms[lang] for lang in ("en", "fr", "de", "es")), node.id


@pytest.mark.parametrize(
    ("body", "message"),
    [
        ("rename 1 | A -> B\n", "missing header"),
        ("@tree-change 1 -> 2\nrename 1 A -> B\n", "bad rename line"),
        ("@tree-change 1 -> 2\nshuffle 1\n", "unknown change 'shuffle'"),
        ("@tree-change 1 -> 2\nsplit 1 -> 2, 3\n", "lacks the node line of 2, 3"),
        ("@tree-change 1 -> 2\nmerge 1 -> 2\n", "two or more ids into one"),
        ("@tree-change 1 -> 2\nmove 1 | 2 -> 2\n", "changes nothing"),
    ],
)
def test_bad_change_logs_name_the_line(tmp_path: Path, body: str, message: str) -> None:
    path = tmp_path / "changes.txt"
    path.write_text(body, encoding="utf-8")
    with pytest.raises(TreeError, match=message) as info:
        load_changes(path)
    assert info.value.line is not None


def test_a_change_that_does_not_fit_names_its_line(tmp_path: Path) -> None:
    path = tmp_path / "changes.txt"
    path.write_text("@tree-change 1 -> 2\n\nrename 1530 | Boots -> Shoes\n", encoding="utf-8")
    with pytest.raises(TreeError, match="old name is 'Trainers and sports shoes'") as info:
        apply_changes(V1, load_changes(path), path=str(path))
    assert info.value.line == 3
