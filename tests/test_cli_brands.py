"""Tests for `catmap brands candidates` and `catmap brands accept`."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from catmap.attributes import BrandDictionary
from catmap.cli import main


@pytest.fixture()
def dictionary(tmp_path: Path) -> Path:
    path = tmp_path / "brands.csv"
    path.write_text("brand,variants,departments\nVellomar,VELLOMAR,1000\n", encoding="utf-8")
    return path


@pytest.fixture()
def feed(tmp_path: Path) -> Path:
    rows = ["id,title,brand,price"]
    for i in range(6):
        rows.append(f"A{i},Dorvanta wool scarf {i},,10.00 EUR")
        rows.append(f"B{i},Linen shirt {i},Quorvane,20.00 EUR")
        rows.append(f"C{i},Coat {i},Vellomar,30.00 EUR")
    rows.append("D1,Rarename lamp,,5.00 EUR")
    path = tmp_path / "shop.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def test_candidates_json(tmp_path: Path, feed: Path, dictionary: Path) -> None:
    result = CliRunner().invoke(
        main,
        ["brands", "candidates", str(feed), "--dictionary", str(dictionary),
         "--project", str(tmp_path / "work"), "--json"],
    )
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    names = {c["name"]: c for c in facts["candidates"]}
    assert set(names) == {"Dorvanta", "Quorvane"}
    assert names["Quorvane"]["count"] == 6
    assert names["Quorvane"]["source"] == "brand field"
    assert len(names["Dorvanta"]["examples"]) == 3
    assert facts["products"] == 19


def test_candidates_table_and_min_count(tmp_path: Path, feed: Path, dictionary: Path) -> None:
    args = ["brands", "candidates", str(feed), "--dictionary", str(dictionary),
            "--project", str(tmp_path / "work")]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.output
    assert "Dorvanta" in result.output and "Quorvane" in result.output
    assert "Vellomar" not in result.output
    fewer = CliRunner().invoke(main, [*args, "--min-count", "7"])
    assert fewer.exit_code == 0
    assert "No unknown name seen 7 times or more in 19 products." in fewer.output


def test_accept_appends_with_variants(tmp_path: Path, dictionary: Path) -> None:
    result = CliRunner().invoke(
        main,
        ["brands", "accept", "Quill Reach", "--variant", "Quil Reach", "--department", "2000",
         "--dictionary", str(dictionary), "--json"],
    )
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    assert facts["brand"] == "Quill Reach" and facts["departments"] == ["2000"]
    assert "QuillReach" in facts["variants"]
    loaded = BrandDictionary.from_csv(dictionary)
    assert loaded.lookup_exact("Quil Reach") == "Quill Reach"
    assert loaded.lookup_exact("Vellomar") == "Vellomar"


def test_accept_twice_is_a_usage_error(dictionary: Path) -> None:
    result = CliRunner().invoke(
        main, ["brands", "accept", "vellomar", "--dictionary", str(dictionary)]
    )
    assert result.exit_code == 3
    assert "already in the brand dictionary as 'Vellomar'" in result.output


def test_accept_creates_the_project_dictionary(tmp_path: Path) -> None:
    project = tmp_path / "work"
    result = CliRunner().invoke(
        main, ["brands", "accept", "Dorvanta", "--project", str(project)]
    )
    assert result.exit_code == 0, result.output
    assert (project / "brands.csv").exists()
    assert "(created)" in result.output
    assert BrandDictionary.from_csv(project / "brands.csv").lookup_exact("DORVANTA") == "Dorvanta"


@pytest.mark.parametrize("command", [["brands"], ["brands", "candidates"], ["brands", "accept"]])
def test_every_command_has_help(command: list[str]) -> None:
    result = CliRunner().invoke(main, [*command, "--help"])
    assert result.exit_code == 0
    assert "Usage:" in result.output


def test_accept_writes_no_formula_cell_and_reads_the_name_back(dictionary: Path) -> None:
    name = '=HYPERLINK("http://example.invalid","Click")'
    result = CliRunner().invoke(
        main, ["brands", "accept", name, "--dictionary", str(dictionary)]
    )
    assert result.exit_code == 0, result.output
    # OWASP "CSV Injection": no cell of the file may start with = + - @ TAB or CR.
    with dictionary.open(encoding="utf-8", newline="") as handle:
        cells = [cell for row in csv.reader(handle) for cell in row]
    assert not [cell for cell in cells if cell[:1] in ("=", "+", "-", "@", "\t", "\r")]
    assert BrandDictionary.from_csv(dictionary).lookup_exact(name) == name
