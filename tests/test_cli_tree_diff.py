"""Tests of `catmap tree diff`."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from catmap.cli import main
from catmap.errors import EXIT_INPUT
from catmap.tree.diff import load_crosswalk
from catmap.tree.taxonomy import default_tree_path

DATA = Path(__file__).parent / "data" / "treediff"


def test_diff_report_and_crosswalk_file(tmp_path: Path) -> None:
    out = tmp_path / "crosswalk.tsv"
    result = CliRunner().invoke(
        main, ["tree", "diff", str(DATA / "old.txt"), str(DATA / "renamed.txt"), "--out", str(out)]
    )
    assert result.exit_code == 0, result.output
    assert "Changes per type" in result.output
    # The table may wrap long paths; the whole paths are checked in the JSON test.
    assert "Footwear > Trainers [120]" in result.output
    assert "sneakers [120]" in result.output
    assert f"Crosswalk written to {out}" in result.output
    crosswalk = load_crosswalk(out)
    assert [(c.old_id, c.changes) for c in crosswalk.changed()] == [("120", ("renamed",))]


def test_diff_json_between_shared_versions() -> None:
    result = CliRunner().invoke(main, ["tree", "diff", "1", "2", "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    assert facts["old"]["version"] == "1" and facts["new"]["version"] == "2"
    assert set(facts["counts"]) == {
        "unchanged",
        "renamed",
        "moved",
        "split",
        "merged",
        "added",
        "removed",
    }
    rows = {row["old_id"]: row for row in facts["changes"]}
    # Change log line: rename 1530 | Trainers and sports shoes -> Trainers and sneakers
    assert rows["1530"]["change"] == "renamed"
    assert rows["1530"]["new_paths"] == ["Shoes, boots and sandals > Trainers and sneakers"]


def test_diff_of_a_missing_file_is_one_line() -> None:
    result = CliRunner().invoke(main, ["tree", "diff", "no-such-tree.txt", "2"])
    assert result.exit_code == EXIT_INPUT
    assert "tree file not found" in result.output


def test_diff_has_help() -> None:
    result = CliRunner().invoke(main, ["tree", "diff", "--help"])
    assert result.exit_code == 0
    assert "OLD and NEW are tree files or versions" in result.output


def test_diff_with_the_change_log_says_where_it_overrides() -> None:
    log = str(default_tree_path(1).parent / "changes-v1-v2.txt")
    result = CliRunner().invoke(main, ["tree", "diff", "1", "2", "--changes", log, "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    rows = {row["old_id"]: row for row in facts["changes"]}
    assert rows["9176"]["change"] == "split" and rows["9176"]["source"] == "log"
    assert rows["9176"]["new_ids"] == ["9177", "9178", "9179"]
    # The diff sends removed nodes' products to their parent; the log names a sibling.
    assert set(facts["overridden"]) == {"1285", "8693", "9655"}
    text = CliRunner().invoke(main, ["tree", "diff", "1", "2", "--changes", log]).output
    assert "the diff disagreed on 3 node(s): 1285, 8693, 9655" in " ".join(text.split())
