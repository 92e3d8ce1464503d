"""Tests of catmap.tree.diff: one small hand-made pair of trees per change type."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import pytest

from catmap.errors import InputError, TreeError
from catmap.tree.changelog import Change, ChangeLog, load_change_log
from catmap.tree.diff import (
    Correspondence,
    Crosswalk,
    LabelTranslation,
    crosswalk_from_changes,
    diff_trees,
    label_equality_crosswalk,
    load_crosswalk,
    moves_as_is,
    overridden,
    reconcile,
    save_crosswalk,
    score_against_changelog,
)
from catmap.tree.taxonomy import CategoryTree, default_tree_path, load_default_tree, load_tree

DATA = Path(__file__).parent / "data" / "treediff"


def _old() -> CategoryTree:
    return load_tree(DATA / "old.txt")


def _changed(crosswalk: Crosswalk) -> list[tuple[str | None, tuple[str, ...], tuple[str, ...]]]:
    return [(c.old_id, c.new_ids, c.changes) for c in crosswalk.changed()]


# Expected changes written by hand from each file's header comment.
@pytest.mark.parametrize(
    ("name", "expected"),
    [
        ("renamed.txt", [("120", ("120",), ("renamed",))]),
        ("moved.txt", [("122", ("122",), ("moved",))]),
        ("split.txt", [("211", ("214", "215"), ("split",))]),
        (
            "merged_kept.txt",
            [("123", ("123",), ("merged",)), ("124", ("123",), ("merged",))],
        ),
        (
            "merged_new.txt",
            [("123", ("125",), ("merged",)), ("124", ("125",), ("merged",))],
        ),
        ("added.txt", [(None, ("216",), ("added",))]),
        ("removed.txt", [("213", ("210",), ("removed",))]),
        ("rekeyed.txt", [("112", ("114",), ("renamed",))]),
    ],
)
def test_each_change_type_is_found(
    name: str, expected: list[tuple[str | None, tuple[str, ...], tuple[str, ...]]]
) -> None:
    crosswalk = diff_trees(_old(), load_tree(DATA / name))
    assert _changed(crosswalk) == expected


def test_identical_trees_have_no_changes() -> None:
    crosswalk = diff_trees(_old(), _old())
    assert crosswalk.changed() == []
    assert crosswalk.counts()["unchanged"] == 15


def test_every_old_node_has_one_correspondence() -> None:
    old = _old()
    crosswalk = diff_trees(old, load_tree(DATA / "split.txt"))
    assert [c.old_id for c in crosswalk.correspondences if c.old_id] == [n.id for n in old]


def test_rekeyed_node_found_by_words_has_evidence() -> None:
    crosswalk = diff_trees(_old(), load_tree(DATA / "rekeyed.txt"))
    (corr,) = crosswalk.changed()
    assert "new id 114" in corr.evidence
    assert 0.5 <= corr.confidence <= 1.0


def test_far_apart_name_alone_does_not_link(tmp_path: Path) -> None:
    # "Snow boots" retired under Boots; a "Snow boots" with other words added under Audio:
    # the same name in another department is not the same node.
    text = (DATA / "old.txt").read_text(encoding="utf-8")
    text = text.replace(
        "113 | 110 | Snow boots | . | - | en: snow boots; winter boots | fr: bottes de neige"
        " | de: Schneestiefel | es: botas de nieve\n",
        "",
    ).replace("@tree-version 1", "@tree-version 2")
    text += "217 | 210 | Snow boots | . | - | en: x | fr: y | de: z | es: w\n"
    path = tmp_path / "far.txt"
    path.write_text(text, encoding="utf-8")
    changes = _changed(diff_trees(_old(), load_tree(path)))
    assert changes == [("113", ("110",), ("removed",)), (None, ("217",), ("added",))]


class _LookupScorer:
    """Maps each product text to a fixed node: stands in for a trained classifier."""

    def __init__(self, table: dict[str, str]) -> None:
        self.table = table

    def predict_nodes(self, texts: Sequence[str], tree: CategoryTree) -> list[str | None]:
        return [self.table.get(t) if self.table.get(t) in tree else None for t in texts]


def test_products_find_a_rekeyed_node_without_shared_words() -> None:
    old, new = _old(), load_tree(DATA / "rekeyed_new_words.txt")
    assert _changed(diff_trees(old, new)) == [
        ("213", ("210",), ("removed",)),
        (None, ("220",), ("added",)),
    ]
    products = [("tape deck one", "213"), ("tape deck two", "213"), ("red radio", "212")]
    scorer = _LookupScorer({"tape deck one": "220", "tape deck two": "220", "red radio": "212"})
    crosswalk = diff_trees(old, new, products=products, scorer=scorer)
    (corr,) = crosswalk.changed()
    assert (corr.old_id, corr.new_ids, corr.changes) == ("213", ("220",), ("renamed",))
    assert "products: jaccard 1.00" in corr.evidence


def test_products_without_scorer_is_an_error() -> None:
    with pytest.raises(ValueError, match="scorer"):
        diff_trees(_old(), _old(), products=[("a", "111")])


def test_label_equality_baseline_misses_renames() -> None:
    crosswalk = label_equality_crosswalk(_old(), load_tree(DATA / "renamed.txt"))
    assert _changed(crosswalk) == [("120", (), ("removed",)), (None, ("120",), ("added",))]


def test_crosswalk_round_trip(tmp_path: Path) -> None:
    crosswalk = diff_trees(_old(), load_tree(DATA / "split.txt"))
    path = tmp_path / "crosswalk.tsv"
    save_crosswalk(crosswalk, path)
    assert path.read_text(encoding="utf-8").startswith("@crosswalk 1 -> 2\n")
    again = load_crosswalk(path)
    assert again.old_version == "1" and again.new_version == "2"
    assert [(c.old_id, c.new_ids, c.changes) for c in again.correspondences] == [
        (c.old_id, c.new_ids, c.changes) for c in crosswalk.correspondences
    ]
    assert again.new_ids_for("211") == ("214", "215")


@pytest.mark.parametrize(
    ("body", "message"),
    [
        (
            "old_id\tnew_ids\tchange\tconfidence\tevidence\n1\t1\tunchanged\t1.0\tx\n",
            "missing header",
        ),
        ("@crosswalk 1 -> 2\n1\t1\tunchanged\t1.0\tx\n", "expected the header row"),
        (
            "@crosswalk 1 -> 2\nold_id\tnew_ids\tchange\tconfidence\tevidence\n1\t1\tgone\t1\tx\n",
            "unknown change 'gone'",
        ),
        (
            "@crosswalk 1 -> 2\nold_id\tnew_ids\tchange\tconfidence\tevidence\n1\t1\tmoved\t2\tx\n",
            "outside 0..1",
        ),
        (
            "@crosswalk 1 -> 2\nold_id\tnew_ids\tchange\tconfidence\tevidence\n1\t1\tmoved\n",
            "expected 5 tab-separated cells",
        ),
    ],
)
def test_bad_crosswalk_files(tmp_path: Path, body: str, message: str) -> None:
    path = tmp_path / "bad.tsv"
    path.write_text(body, encoding="utf-8")
    with pytest.raises(InputError, match=message):
        load_crosswalk(path)


def test_score_against_changelog_worked_example() -> None:
    # Reference: rename 1, move 2, split 3 -> 4, 5. Found: rename 1 (right), move 9 (wrong),
    # split 3 -> 4 only (wrong). By hand: 1 of 3 found right, 1 of 3 reference items found:
    # precision 1/3, recall 1/3, F1 1/3.
    changes = [
        Change("rename", "1", old="A", new="B"),
        Change("move", "2", old="7", new="8"),
        Change("split", "3", sources=("3",), targets=("4", "5")),
    ]
    crosswalk = Crosswalk(
        "1",
        "2",
        [
            Correspondence("1", ("1",), ("renamed",), 1.0),
            Correspondence("9", ("9",), ("moved",), 1.0),
            Correspondence("3", ("4",), ("renamed",), 0.7),
            Correspondence("6", ("6",), ("unchanged",), 1.0),
        ],
    )
    scores = score_against_changelog(crosswalk, changes)
    assert scores["overall"]["precision"] == pytest.approx(1 / 3, abs=1e-4)
    assert scores["overall"]["recall"] == pytest.approx(1 / 3, abs=1e-4)
    assert scores["per_type"]["renamed"]["precision"] == 0.5
    assert scores["per_type"]["renamed"]["recall"] == 1.0
    assert scores["per_type"]["split"]["recall"] == 0.0
    assert scores["non_trivial"] is None


# -- the change log as the crosswalk ----------------------------------------------------------


@pytest.fixture(scope="module")
def shipped() -> tuple[CategoryTree, CategoryTree, ChangeLog]:
    old, new = load_default_tree(1), load_default_tree(2)
    return old, new, load_change_log(default_tree_path(1).parent / "changes-v1-v2.txt")


def test_the_shipped_log_as_a_crosswalk_is_the_reference(
    shipped: tuple[CategoryTree, CategoryTree, ChangeLog],
) -> None:
    old, new, log = shipped
    crosswalk = crosswalk_from_changes(old, new, log)
    scores = score_against_changelog(crosswalk, log.changes)
    assert scores["overall"]["precision"] == scores["overall"]["recall"] == 1.0
    assert all(c.source == "log" for c in crosswalk.correspondences)
    split = next(c for c in crosswalk.correspondences if c.old_id == "9176")
    assert split.changes == ("split",) and split.new_ids == ("9177", "9178", "9179")
    assert split.evidence.startswith("change log line")
    # remove 8693 -> 8691: the log says where the products go.
    removed = next(c for c in crosswalk.correspondences if c.old_id == "8693")
    assert removed.new_ids == ("8691",) and moves_as_is(removed)


def test_craft_materials_is_a_split_for_the_diff_too(
    shipped: tuple[CategoryTree, CategoryTree, ChangeLog],
) -> None:
    old, new, _log = shipped
    found = next(c for c in diff_trees(old, new).correspondences if c.old_id == "9176")
    assert found.changes == ("split",)
    assert set(found.new_ids) == {"9177", "9178", "9179"}
    assert not moves_as_is(found)


def test_the_log_overrides_the_diff_and_says_so(
    shipped: tuple[CategoryTree, CategoryTree, ChangeLog],
) -> None:
    old, new, log = shipped
    merged = reconcile(diff_trees(old, new), crosswalk_from_changes(old, new, log))
    by_old = {c.old_id: c for c in merged.correspondences}
    assert by_old["1530"].evidence.endswith("diff agrees")
    # The diff sends 8693's products to its parent; the log names DVDs (8691).
    assert by_old["8693"].new_ids == ("8691",)
    assert by_old["8693"].evidence.endswith("overridden")
    assert "8693" in {c.old_id for c in overridden(merged)}


def test_a_log_that_does_not_lead_to_the_new_tree_is_refused(
    shipped: tuple[CategoryTree, CategoryTree, ChangeLog], tmp_path: Path
) -> None:
    old, new, _log = shipped
    short = tmp_path / "changes.txt"
    short.write_text("@tree-change 1 -> 2\nrename 1530 | Trainers and sports shoes -> Kicks\n")
    with pytest.raises(TreeError, match="the log makes node 1530 'Kicks'"):
        crosswalk_from_changes(old, new, load_change_log(short))
    other = tmp_path / "other.txt"
    other.write_text("@tree-change 2 -> 3\n")
    with pytest.raises(TreeError, match="goes from tree 2 to 3, not from 1 to 2"):
        crosswalk_from_changes(old, new, load_change_log(other))


@pytest.mark.parametrize(
    ("corr", "moves"),
    [
        (Correspondence("1", ("1",), ("renamed",), 1.0), True),
        (Correspondence("1", ("1",), ("renamed",), 0.9), False),  # unsure of the meaning
        (Correspondence("1", ("2",), ("merged",), 1.0), False),  # a merge the diff found alone
        (Correspondence("1", ("1",), ("merged", "renamed"), 1.0), True),  # the node it keeps
        (Correspondence("1", ("2",), ("merged",), 1.0, source="log"), True),
        (Correspondence("1", ("2", "3"), ("split",), 1.0, source="log"), False),
        (Correspondence("1", ("2",), ("removed",), 1.0), False),
        (Correspondence("1", ("2",), ("removed",), 1.0, source="log"), True),
    ],
)
def test_what_moves_with_no_model_look(corr: Correspondence, moves: bool) -> None:
    assert moves_as_is(corr) is moves


def test_labels_of_the_old_tree_follow_what_the_crosswalk_is_sure_of() -> None:
    old = _old()
    new = load_tree(DATA / "split.txt")
    split = LabelTranslation(old, new, diff_trees(old, new))
    # Unchanged nodes keep their ids, by id or by path of names; a node split in two is dropped:
    # its products may now belong to either half.
    assert split.node("111") == "111"
    assert split.node("Footwear > Boots > Ankle boots") == "111"
    assert split.node("211") == ""
    assert split.node("Audio > Listening > Headphones") == ""
    # Not a node of the old tree: left to the caller (it may be a new node's id).
    assert split.node("215") is None
    assert split.node("Audio > Nowhere") is None
    assert split.to_dict()["kept"] == 2
    assert split.to_dict()["dropped"] == {"split": 2}


def test_a_rekeyed_label_moves_when_sure_and_is_dropped_when_not(tmp_path: Path) -> None:
    old, new = _old(), load_tree(DATA / "rekeyed.txt")
    guessed = LabelTranslation(old, new, diff_trees(old, new))
    # The diff alone links 112 to 114 with confidence under SURE: the label is dropped.
    assert guessed.node("112") == ""
    assert guessed.dropped == {"renamed (unsure)": 1}
    lines = (DATA / "rekeyed.txt").read_text(encoding="utf-8").splitlines()
    line = next(text for text in lines if text.startswith("114 | 110 | Rain boots and wellies"))
    written = tmp_path / "changes.txt"
    written.write_text(f"@tree-change 1 -> 2\nadd {line}\nremove 112 -> 114\n", encoding="utf-8")
    log = load_change_log(written)
    stated = reconcile(diff_trees(old, new), crosswalk_from_changes(old, new, log))
    sure = LabelTranslation(old, new, stated)
    assert sure.node("112") == "114"
    assert sure.node("Footwear > Boots > Wellington boots") == "114"
    assert (sure.translated, sure.kept, dict(sure.dropped)) == (2, 0, {})
