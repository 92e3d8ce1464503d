"""Tests for `catmap decisions export` and `catmap decisions import`."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner, Result
from test_cli_onboard import onboard
from test_onboard import SmallWorld, new_project

from catmap.cli import main
from catmap.jobs.decisions import DECISION_COLUMNS
from catmap.store import Store, store_path

pytestmark = pytest.mark.usefixtures("tiny_tree")  # world, tiny_tree: tests/conftest.py


def _run(*args: str) -> Result:
    return CliRunner().invoke(main, list(args), catch_exceptions=False)


def test_export_edit_import_round_trip(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    assert onboard(world, project, "ferravelle").exit_code == 0
    sheet = tmp_path / "queue.csv"
    result = _run("decisions", "export", "--out", str(sheet), "--project", str(project))
    assert result.exit_code == 0, result.output
    with sheet.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert f"Wrote {len(rows):,} open and 0 decided items to {sheet}" in result.stdout

    rows[0]["action"] = "accept"
    rows[1]["reviewer_node"] = "not-a-node"
    rows[2]["action"] = "fix_attributes"
    rows[2]["who"] = "female"
    with sheet.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(DECISION_COLUMNS))
        writer.writeheader()
        writer.writerows(rows)

    result = _run(
        "decisions", "import", str(sheet), "--reviewer", "ana", "--project", str(project)
    )
    # The good rows are applied, and the bad one makes the run fail (exit 3) so scripts notice.
    assert result.exit_code == 3, result.output
    text = " ".join(result.stdout.split())
    assert (
        "Applied 2 decisions (accept 1, fix_attributes 1); 1 bad rows; "
        f"{len(rows) - 3:,} rows left empty." in text
    )
    assert f"{sheet}:3: node 'not-a-node' is not in the category tree (version 1)" in text
    error = " ".join(result.stderr.split())
    assert (
        f"1 of 3 filled rows were not applied; they are written with their reasons to "
        f"{tmp_path / 'queue.rejects.csv'}" in error
    )

    with Store.open(store_path(project)) as store:
        decided = store.decisions()
        assert [(d.item_id, d.reviewer, d.action) for d in decided] == [
            (int(rows[0]["item_id"]), "ana", "accept"),
            (int(rows[2]["item_id"]), "ana", "fix_attributes"),
        ]
        assert store.mapping("ferravelle", rows[2]["product_id"]).attributes.who == "female"

    result = _run("decisions", "export", "--out", str(sheet), "--project", str(project),
                  "--json")
    assert json.loads(result.stdout) == {"path": str(sheet), "open": len(rows) - 2, "done": 2}


def test_import_json_reports_bad_rows(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    assert onboard(world, project, "quorvane").exit_code == 0
    sheet = tmp_path / "queue.csv"
    exported = _run("decisions", "export", "--out", str(sheet), "--project", str(project))
    assert exported.exit_code == 0
    with sheet.open(encoding="utf-8", newline="") as handle:
        rows = list(csv.DictReader(handle))
    rows[0]["action"] = "maybe"
    with sheet.open("w", encoding="utf-8", newline="") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(DECISION_COLUMNS))
        writer.writeheader()
        writer.writerows(rows[:1])
    result = _run("decisions", "import", str(sheet), "--project", str(project), "--json",
                  "--rejects", str(tmp_path / "bad.csv"))
    assert result.exit_code == 3, result.output
    facts = json.loads(result.stdout)
    assert (facts["applied"], facts["bad"]) == (0, 1)
    assert facts["bad_rows"][0]["line"] == 2
    assert facts["bad_rows"][0]["reason"].startswith("action 'maybe' is not one of")
    assert facts["rejects_file"] == str(tmp_path / "bad.csv")
    assert (tmp_path / "bad.csv").exists()


def test_decisions_commands_have_help() -> None:
    for command in (["decisions"], ["decisions", "export"], ["decisions", "import"]):
        result = CliRunner().invoke(main, [*command, "--help"])
        assert result.exit_code == 0
        assert "Usage:" in result.stdout


def test_train_adds_the_reviewed_products(world: SmallWorld, tmp_path: Path) -> None:
    project = new_project(world, tmp_path / "p")
    assert onboard(world, project, "ferravelle").exit_code == 0
    with Store.open(store_path(project)) as store:
        items = store.items(feed="ferravelle", state="open")[:3]
        for item in items:
            store.decide(item.id, "ana", "accept")
        store.decide(store.items(feed="ferravelle", state="open")[0].id, "ana", "no_fit")
    # reviewed products with a node: the three accepted ones (no_fit has no node to learn)
    reviewed_products = len({item.product_id for item in items})

    def train(*more: str) -> dict[str, object]:
        result = _run("train", str(world.paths.reference), "--project", str(project),
                      "--json", *more)
        assert result.exit_code == 0, result.output
        facts: dict[str, object] = json.loads(result.stdout)
        return facts

    with_reviews = train()
    without_reviews = train("--without-reviews")
    assert with_reviews["reviewed_examples"] == reviewed_products
    assert without_reviews["reviewed_examples"] == 0
    assert with_reviews["products_train"] == (
        int(str(without_reviews["products_train"])) + reviewed_products
    )
