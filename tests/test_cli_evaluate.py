"""Tests of ``catmap evaluate`` on a tiny labelled feed (keywords only: no model trained)."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from catmap.cli import main
from catmap.cli.evaluate import register
from catmap.tree.taxonomy import load_default_tree

if "evaluate" not in main.commands:
    register(main)


def _feed(tmp_path: Path) -> tuple[Path, Path]:
    tree = load_default_tree(1)
    leaves = tree.leaves()[:4]
    rows = ["product_id,title,brand,gold_node,gold_brand,gold_who,gold_age"]
    for k, leaf in enumerate(leaves):
        rows.append(f"p{k},{leaf.name} deluxe,,{leaf.id},,,")
    feed = tmp_path / "labelled.csv"
    feed.write_text("\n".join(rows) + "\n", encoding="utf-8")
    gold = tmp_path / "gold.csv"
    gold.write_text(
        "product_id,gold_node\n" + "".join(f"p{k},{leaf.id}\n" for k, leaf in enumerate(leaves)),
        encoding="utf-8",
    )
    plain = tmp_path / "plain.csv"
    plain.write_text(
        "product_id,title\n" + "".join(f"p{k},{leaf.name}\n" for k, leaf in enumerate(leaves)),
        encoding="utf-8",
    )
    return feed, plain


def test_evaluate_writes_report_and_json(tmp_path: Path) -> None:
    feed, _plain = _feed(tmp_path)
    out = tmp_path / "report"
    result = CliRunner().invoke(
        main,
        ["evaluate", str(feed), "--project", str(tmp_path / "proj"), "--out", str(out), "--json"],
    )
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    assert facts["products"] == 4
    assert 0.0 <= facts["mapping"]["hierarchical_f1"] <= 1.0
    assert (out / "report.html").read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    assert json.loads((out / "metrics.json").read_text(encoding="utf-8"))["products"] == 4


def test_evaluate_with_gold_file_prints_summary(tmp_path: Path) -> None:
    _feed_path, plain = _feed(tmp_path)
    result = CliRunner().invoke(
        main,
        [
            "evaluate",
            str(plain),
            "--gold",
            str(tmp_path / "gold.csv"),
            "--project",
            str(tmp_path / "proj"),
            "--out",
            str(tmp_path / "r"),
            "--accept-threshold",
            "0.0",
        ],
    )
    assert result.exit_code == 0, result.output
    text = " ".join(result.output.split())  # rich wraps long lines
    assert "4 products evaluated" in text
    assert "hierarchical F1" in text
    assert "ECE: the mean gap between the stated confidence and the share right" in text
    assert "AURC: the mean error rate over all accept thresholds" in text
    assert "At the auto-accept threshold 0.000: " in text


def test_evaluate_readme_line_names_the_gold_option() -> None:
    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    assert "`catmap evaluate FEED [--gold GOLD.csv]`" in readme


def test_evaluate_without_gold_column_exits_with_input_code(tmp_path: Path) -> None:
    _feed_path, plain = _feed(tmp_path)
    result = CliRunner().invoke(main, ["evaluate", str(plain), "--project", str(tmp_path / "p")])
    assert result.exit_code == 3
    assert "no gold column 'gold_node'" in result.output
