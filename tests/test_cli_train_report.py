"""catmap train says what it used: rows read, rows per class, the cap and what it left out, and
labels the tree lacks (too many of them stop training)."""

from __future__ import annotations

import csv
import json
from collections.abc import Callable
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.classify.training import MAX_UNKNOWN_LABEL_SHARE, default_max_per_class
from catmap.cli import main
from tests._classify_fixtures import labelled_rows, write_tree


@pytest.fixture()
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    write_tree(tmp_path / "taxonomies")
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(tmp_path / "taxonomies"))
    return tmp_path / "project"


def _feed(path: Path, unknown: int = 0, label: Callable[[str], str] | None = None) -> Path:
    """The tiny labelled feed (240 rows), the first ``unknown`` rows labelled with ids the tree
    lacks (a few distinct ones); ``label`` rewrites every label."""
    rows = labelled_rows(240)
    for i in range(unknown):
        rows[i]["gold_node"] = f"99{i % 7}"
    for row in rows:
        row["gold_node"] = label(row["gold_node"]) if label else row["gold_node"]
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    return path


def test_the_cap_is_an_option_with_its_default_shown() -> None:
    result = CliRunner().invoke(main, ["train", "--help"])
    assert result.exit_code == 0
    text = " ".join(result.stdout.split())  # help lines wrap anywhere
    cap = text.split("--max-per-class", 1)[1].split("--max-unknown-share", 1)[0]
    assert f"[default: {default_max_per_class() or 0};" in cap
    assert f"[default: {MAX_UNKNOWN_LABEL_SHARE};" in text


def test_training_reports_rows_read_and_used_per_class(project: Path, tmp_path: Path) -> None:
    feed = _feed(tmp_path / "shop.csv")
    args = ["train", str(feed), "--project", str(project), "--max-per-class", "10"]
    result = CliRunner().invoke(main, [*args, "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["rows_read"] == 240
    # 144 split=train rows over 6 classes, 24 each: the cap of 10 keeps 60 and leaves out 84.
    assert facts["products_train"] == 144
    assert facts["products_used"] == 60
    assert facts["left_out_by_cap"] == 84
    assert facts["per_class"] == {"classes": 6, "min": 10, "median": 10.0, "max": 10}
    manifest = json.loads((project / "models" / "current" / "manifest.json").read_text())
    assert manifest["settings"]["max_per_class"] == 10
    text = CliRunner().invoke(main, args)
    assert "Trained on 60 products" in text.stdout
    assert "84 left out by the cap of 10 per class" in text.stdout


def test_no_cap_leaves_nothing_out(project: Path, tmp_path: Path) -> None:
    feed = _feed(tmp_path / "shop.csv")
    result = CliRunner().invoke(
        main, ["train", str(feed), "--project", str(project), "--max-per-class", "0", "--json"]
    )
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["left_out_by_cap"] == 0
    assert facts["max_per_class"] is None


def test_a_few_unknown_labels_are_reported(project: Path, tmp_path: Path) -> None:
    feed = _feed(tmp_path / "shop.csv", unknown=3)
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project), "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["unknown_labels"] == 3
    assert facts["unknown_examples"] == ["990", "991", "992"]
    assert facts["unknown_share"] == pytest.approx(3 / 240, abs=1e-4)


def test_a_path_the_tree_lacks_is_skipped_as_a_label_not_an_id(
    project: Path, tmp_path: Path
) -> None:
    # A labelled feed of paths kept from before a category was renamed in the tree.
    feed = _feed(
        tmp_path / "paths.csv",
        label=lambda node: "Footwear > Boots > Old ankle boots" if node == "1101" else node,
    )
    result = CliRunner().invoke(
        main, ["train", str(feed), "--project", str(project), "--max-unknown-share", "0.5"]
    )
    assert result.exit_code == 0, result.output
    text = " ".join(result.stdout.split())
    assert "skipped 40 rows whose label names no node of the tree (16.7%: Footwear > Boots >" in (
        text
    )
    assert "node ids" not in text


def test_labels_of_another_tree_stop_training(project: Path, tmp_path: Path) -> None:
    feed = _feed(tmp_path / "shop.csv", unknown=48)
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project)])
    assert result.exit_code == 3
    assert "20.0% of the labelled rows (48 of 240)" in result.stderr
    assert "first: 990, 991, 992, 993, 994" in result.stderr
    assert "--max-unknown-share" in result.stderr
    assert not (project / "models" / "current" / "manifest.json").exists()
    allowed = CliRunner().invoke(
        main, ["train", str(feed), "--project", str(project), "--max-unknown-share", "0.25"]
    )
    assert allowed.exit_code == 0, allowed.output


NAMES = {"1101": "Ankle boots", "1102": "Rain boots", "1201": "Flip-flops"}


@pytest.mark.parametrize(
    ("label", "said"),
    [
        # Node names instead of ids (the rows of other nodes keep their ids).
        (
            lambda node: NAMES.get(node, node),
            "look like node names or paths, not ids ('Ankle boots' is node 1101)",
        ),
        # Ids a spreadsheet wrote as decimals.
        (lambda node: f"{node}.0", "look like ids written as decimals ('1101.0' is node 1101)"),
    ],
)
def test_labels_naming_the_trees_nodes_otherwise_than_by_id_say_so(
    project: Path, tmp_path: Path, label: Callable[[str], str], said: str
) -> None:
    feed = _feed(tmp_path / "shop.csv", label=label)
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project)])
    assert result.exit_code == 3
    assert result.stderr.startswith(f"catmap: error: {feed}, field 'gold_node': ")
    assert said in result.stderr
    assert "belong to another tree" not in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_labels_written_as_paths_of_names_train_as_their_nodes(
    project: Path, tmp_path: Path
) -> None:
    # A team's labelled feed names categories by path (a tree converted with `catmap tree
    # from-paths` has made ids): those labels are read as their nodes, and said.
    by_id = _feed(tmp_path / "ids.csv")
    by_path = _feed(
        tmp_path / "paths.csv",
        label=lambda node: " footwear >  BOOTS > Ankle boots" if node == "1101" else node,
    )
    runs = [
        json.loads(
            CliRunner().invoke(main, ["train", str(f), "--project", str(project), "--json"]).stdout
        )
        for f in (by_id, by_path)
    ]
    assert runs[1]["labels_as_paths"] == 40  # the rows of 1101 (240 rows over 6 nodes)
    assert runs[0]["labels_as_paths"] == 0
    assert runs[1]["unknown_labels"] == 0
    assert (runs[1]["classes"], runs[1]["products_train"]) == (
        runs[0]["classes"], runs[0]["products_train"]
    )
    text = CliRunner().invoke(main, ["train", str(by_path), "--project", str(project)]).stdout
    assert "labels as paths      40 rows name their node by its path of names" in text


def test_an_empty_label_column_is_named_as_such(project: Path, tmp_path: Path) -> None:
    feed = _feed(tmp_path / "shop.csv", label=lambda _node: "  ")
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project)])
    assert result.exit_code == 3
    assert "field 'gold_node': the label column 'gold_node' is empty in all 240 rows" in (
        result.stderr
    )
    assert "--label-column" in result.stderr


def test_one_class_only_names_the_node(project: Path, tmp_path: Path) -> None:
    feed = _feed(tmp_path / "shop.csv", label=lambda _node: "2102")
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project)])
    assert result.exit_code == 3
    # 144 of the 240 rows are split=train.
    assert "every labelled training product (144) is labelled 2102 (Kitchen > Coffee > " in (
        result.stderr
    )
    assert not (project / "models" / "current" / "manifest.json").exists()


def test_labels_on_inner_nodes_train_and_are_reported(project: Path, tmp_path: Path) -> None:
    # The ankle boots labelled with their parent, Boots (1100), which has children.
    feed = _feed(tmp_path / "shop.csv", label=lambda node: "1100" if node == "1101" else node)
    args = ["train", str(feed), "--project", str(project)]
    facts = json.loads(CliRunner().invoke(main, [*args, "--json"]).stdout)
    assert facts["inner_labels"] == 24  # the 1101 rows of the 144 split=train ones
    assert facts["inner_examples"] == ["1100 Boots"]
    manifest = json.loads((project / "models" / "current" / "manifest.json").read_text())
    assert "1100" in manifest["class_ids"]
    text = " ".join(CliRunner().invoke(main, args).stdout.split())
    assert (
        "inner nodes 24 training rows are labelled with nodes that have children (1100 Boots)"
        in (text)
    )
    assert "none left out: no cap per class" in text
