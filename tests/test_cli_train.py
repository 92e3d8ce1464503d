"""catmap train on a tiny labelled feed."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.cli import main
from tests._classify_fixtures import write_labelled_feed, write_tree


@pytest.fixture()
def setup(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> tuple[Path, Path]:
    write_tree(tmp_path / "taxonomies")
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(tmp_path / "taxonomies"))
    return write_labelled_feed(tmp_path / "shop.csv"), tmp_path / "project"


def test_train_writes_a_model_and_reports_json(setup: tuple[Path, Path]) -> None:
    feed, project = setup
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project), "--json"])
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["classes"] == 6
    assert facts["products_train"] == 144
    assert facts["products_valid"] == 48
    assert 0.0 <= facts["metrics"]["valid_ece"] <= 1.0
    manifest = json.loads((project / "models" / "current" / "manifest.json").read_text())
    assert manifest["tree_version"] == "1"
    assert manifest["training_data_fingerprint"]


def test_train_summary_is_readable(setup: tuple[Path, Path]) -> None:
    feed, project = setup
    result = CliRunner().invoke(main, ["train", str(feed), "--project", str(project)])
    assert result.exit_code == 0, result.output
    assert "Trained on 144 products, 6 classes" in result.stdout
    assert "validation accuracy" in result.stdout
    # Six classes: both structures were trained, the summary says which one was kept.
    assert "structure" in result.stdout and "validation macro-F1" in result.stdout


def test_missing_label_column_is_an_input_error(setup: tuple[Path, Path]) -> None:
    feed, project = setup
    result = CliRunner().invoke(
        main, ["train", str(feed), "--project", str(project), "--label-column", "node"]
    )
    assert result.exit_code == 3
    assert "no label column 'node'" in result.stderr
