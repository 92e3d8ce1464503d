"""Tests for `catmap export`: files per feed, --json, formula-safe CSV, the restriction caution."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner, Result
from test_cli_onboard import onboard
from test_export import DANGEROUS_TITLES, _injection_feed
from test_onboard import TEST_MAX_ERROR, SmallWorld, new_project

from catmap.cli import main
from catmap.errors import EXIT_STORE

pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


def _export(project: Path, out: Path, *more: str) -> Result:
    return CliRunner().invoke(
        main,
        ["export", "--project", str(project), "--out", str(out), *more],
        catch_exceptions=False,
    )


def test_export_every_feed_as_csv(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    for feed in ("ferravelle", "tallimbra"):
        assert onboard(world, project, feed).exit_code == 0
    out = tmp_path / "out"
    result = _export(project, out, "--json")
    assert result.exit_code == 0, result.output
    facts = json.loads(result.stdout)
    assert [f["feed"] for f in facts["feeds"]] == ["ferravelle", "tallimbra"]
    for feed in facts["feeds"]:
        name = feed["feed"]
        assert feed["products"] == str(out / f"{name}.products.csv")
        assert feed["rejects"] == str(out / f"{name}.rejects.csv")
        with open(feed["products"], encoding="utf-8", newline="") as handle:
            assert len(list(csv.DictReader(handle))) == feed["rows"]
        accounting = json.loads(Path(feed["accounting"]).read_text(encoding="utf-8"))
        assert accounting["kept"] == feed["rows"]

    text = " ".join(_export(project, out, "--feed", "tallimbra").stdout.split())
    assert text.startswith(f"tallimbra: {facts['feeds'][1]['rows']:,} products on tree version ")
    assert all(f["tree_version"] == str(world.tree.version) for f in facts["feeds"])
    assert f"products: {out / 'tallimbra.products.csv'}" in text
    assert "ferravelle" not in text


def test_export_jsonl(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    assert onboard(world, project, "quorvane").exit_code == 0
    result = _export(project, tmp_path / "out", "--format", "jsonl")
    assert result.exit_code == 0, result.output
    lines = (tmp_path / "out" / "quorvane.products.jsonl").read_text("utf-8").splitlines()
    rows = [json.loads(line) for line in lines]
    assert rows and all(row["status"] in ("accepted", "queued") for row in rows)
    assert (tmp_path / "out" / "quorvane.rejects.jsonl").exists()


def test_csv_export_is_safe_against_formulas(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    feed = _injection_feed(tmp_path)
    result = CliRunner().invoke(
        main,
        ["onboard", str(feed), "--project", str(project), "--max-error", str(TEST_MAX_ERROR),
         "--validation", str(world.paths.reference)],
        catch_exceptions=False,
    )
    assert result.exit_code == 0, result.output
    assert _export(project, tmp_path / "out").exit_code == 0
    with (tmp_path / "out" / "tricky.products.csv").open(encoding="utf-8", newline="") as f:
        rows = list(csv.reader(f))
    cells = [cell for row in rows[1:] for cell in row]
    # OWASP "CSV Injection": no cell may start with = + - @ once written.
    assert not [c for c in cells if c[:1] in ("=", "+", "-", "@")]
    assert {"'" + title for title in DANGEROUS_TITLES} <= set(cells)


def test_export_without_a_store_fails_cleanly(tmp_path: Path) -> None:
    result = _export(tmp_path / "p", tmp_path / "out", "--feed", "nothing")
    assert result.exit_code == EXIT_STORE
    assert "no feed 'nothing'" in result.stderr
