"""Tests for `catmap demo` on a small demo world (tiny tree, a few hundred products)."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner, Result
from test_onboard import TEST_MAX_ERROR, SmallWorld, new_project

from catmap.cli import main

pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


def _demo(world: SmallWorld, project: Path, *more: str) -> Result:
    return CliRunner().invoke(
        main,
        ["demo", "--project", str(project), "--world", str(world.paths.root),
         "--max-error", str(TEST_MAX_ERROR), *more],
        catch_exceptions=False,
    )


def _gold(path: Path) -> dict[str, str]:
    with path.open(encoding="utf-8", newline="") as handle:
        return {row["product_id"]: row["gold_node"] for row in csv.DictReader(handle)}


def test_demo_onboards_measures_and_exports(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    result = _demo(world, project, "--json")
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert facts["trained"] is None  # the project already had a model
    assert [f["feed"] for f in facts["feeds"]] == ["ferravelle", "quorvane", "tallimbra"]
    assert facts["review_command"] == f"catmap review --project {project}"
    for feed in facts["feeds"]:
        name = feed["feed"]
        exported = project / "export" / f"{name}.products.csv"
        assert feed["export"]["products"] == str(exported)
        # Measure the error of the auto-accepted part again, from the export and the gold file.
        gold = _gold(world.paths.gold[name])
        with exported.open(encoding="utf-8", newline="") as handle:
            rows = list(csv.DictReader(handle))
        accepted = [r for r in rows if r["status"] == "accepted"]
        wrong = sum(r["node_id"] != gold[r["product_id"]] for r in accepted)
        assert feed["gold"]["accepted"] == len(accepted)
        assert feed["gold"]["wrong"] == wrong
        assert feed["gold"]["products"] == len(rows)
        assert feed["gold"]["coverage"] == pytest.approx(len(accepted) / len(rows), abs=1e-4)
        # The feed's threshold is its own check's, never below the calibration data's.
        check = feed["feed_check"]
        assert feed["threshold"] == check["threshold"]
        assert feed["statement"].startswith(feed["calibration_statement"] + " Feed check: ")
        if check["threshold"] is not None and check["calibrated_threshold"] is not None:
            assert check["threshold"] >= check["calibrated_threshold"]


def test_demo_trains_when_there_is_no_model_and_prints_the_summary(
    world: SmallWorld, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import catmap.cli._render as render

    # stderr is no terminal here: progress comes as lines (each update, for the test).
    monkeypatch.setattr(render, "PIPED_PROGRESS_SECONDS", 0.0)
    project = tmp_path / "fresh"
    result = _demo(world, project)
    assert result.exit_code == 0, result.output
    lines = [line for line in result.stderr.splitlines() if line.startswith("catmap: demo: ")]
    stages = " ".join(lines)
    assert "building or reading the demo world" in stages
    assert "training: " in stages
    assert "choosing the accept threshold" in stages
    assert "tallimbra.tsv: saving, " in stages
    text = " ".join(result.stdout.split())
    assert text.startswith("Trained on ")
    assert "Demo feeds" in text
    for name in ("ferravelle", "quorvane", "tallimbra"):
        assert name in text
    # The calibration data's guarantee once, then each feed's own threshold.
    assert "calibration items" in text
    assert "Each feed's own threshold (ferravelle " in text
    assert f"Exported to {project / 'export'}/" in text
    assert f"Review the queue: catmap review --project {project}" in text
    assert (project / "models" / "current" / "manifest.json").exists()
