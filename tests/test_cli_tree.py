"""Tests for the ``catmap tree`` commands, run through catmap's CLI and its error boundary."""

from __future__ import annotations

import io
import json
import shutil
from pathlib import Path

import click
import pytest
from click.testing import CliRunner, Result
from rich.console import Console

from catmap.cli import main
from catmap.cli.tree import render_tree, tree_group
from catmap.tree.taxonomy import load_tree

TREES = Path(__file__).parent / "data" / "trees"
GOOD = str(TREES / "good.txt")


def run(*args: str) -> Result:
    return CliRunner().invoke(main, ["tree", *args])


@pytest.fixture
def shared_tree(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """Make the small good tree the shared tree of version 1 (no project in the way)."""
    monkeypatch.setenv("CATMAP_TAXONOMIES", str(tmp_path))
    monkeypatch.delenv("CATMAP_PROJECT", raising=False)
    monkeypatch.chdir(tmp_path)
    shutil.copy(GOOD, tmp_path / "tree-v1.txt")
    return tmp_path / "tree-v1.txt"


# -- help ---------------------------------------------------------------------------------


@pytest.mark.parametrize("command", [[], ["validate"], ["show"], ["search"]])
def test_help_works(command: list[str]) -> None:
    result = run(*command, "--help")
    assert result.exit_code == 0, result.output
    assert result.output.startswith("Usage: ")


def test_every_command_and_option_has_help_text() -> None:
    assert tree_group.help
    for name, command in tree_group.commands.items():
        assert command.help, name
        for param in command.params:
            if isinstance(param, click.Option):
                assert param.help, f"{name} {param.name}"


# -- validate -----------------------------------------------------------------------------


def test_validate_a_good_file() -> None:
    result = run("validate", GOOD)
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert lines[:5] == [
        f"Tree file: {GOOD}",
        "Tree version: 1",
        "Nodes: 23",
        "Nodes per level: level 1: 2, level 2: 5, level 3: 11, level 4: 4, level 5: 1",
        "Languages: en, fr, de, es",
    ]
    assert "│ 1000 │ Apparel        │     7 │      4 │" in lines
    assert "│ 1500 │ Food and drink │    16 │      8 │" in lines
    assert lines[-3:] == ["Leaves: 12", "Restricted nodes: 3 (alcohol: 3)", "valid"]


def test_validate_json() -> None:
    result = run("validate", GOOD, "--json")
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    assert facts["valid"] is True
    assert facts["nodes"] == 23
    assert facts["leaves"] == 12
    assert facts["levels"] == {"1": 2, "2": 5, "3": 11, "4": 4, "5": 1}
    assert facts["restricted"] == {"alcohol": 3}
    assert [d["id"] for d in facts["departments"]] == ["1000", "1500"]
    assert facts["languages"] == ["en", "fr", "de", "es"]


@pytest.mark.parametrize(
    ("name", "line", "fragment"),
    [
        ("bad_cycle.txt", 7, "cycle in parents"),
        ("bad_duplicate_id.txt", 7, "duplicate id 1100 (first on line 5)"),
        ("bad_missing_header.txt", 3, "missing header"),
    ],
)
def test_validate_a_broken_file_exits_3_naming_file_and_line(
    name: str, line: int, fragment: str
) -> None:
    path = str(TREES / name)
    result = run("validate", path)
    assert result.exit_code == 3
    assert result.stdout == ""
    message = result.stderr.strip()
    assert len(message.splitlines()) == 1
    assert message.startswith(f"catmap: error: {path}:{line}: ")
    assert fragment in message


def test_validate_the_shared_tree(shared_tree: Path) -> None:
    result = run("validate")
    assert result.exit_code == 0, result.output
    assert f"Tree file: {shared_tree}" in result.output
    assert result.output.endswith("valid\n")


def test_validate_names_the_extra_languages_of_a_tree(tmp_path: Path) -> None:
    tree = tmp_path / "tree.txt"
    tree.write_text(
        "@tree-version 1\n"
        "1 | - | Garden | . | - | en: garden | fr: jardin | de: Garten | es: jardín"
        " | it: giardino\n"
        "2 | 1 | Tools | . | - | en: tools | fr: | de: | es: | it: attrezzi | nl: gereedschap\n",
        encoding="utf-8",
    )
    result = run("validate", str(tree))
    assert result.exit_code == 0, result.output
    assert "Languages: en, fr, de, es, it, nl\n" in result.output
    facts = json.loads(run("validate", str(tree), "--json").output)
    assert facts["languages"] == ["en", "fr", "de", "es", "it", "nl"]


def test_validate_a_missing_tree_version(shared_tree: Path) -> None:
    result = run("validate", "--tree-version", "2")
    assert result.exit_code == 3
    assert "tree-v2.txt: tree file not found" in result.stderr


# -- show ---------------------------------------------------------------------------------


def test_show_departments_by_default(shared_tree: Path) -> None:
    result = run("show")
    assert result.exit_code == 0, result.output
    assert result.output == (
        "Category tree v1\n"
        "├── Apparel  [1000]  (+6 below)\n"
        "└── Food and drink  [1500]  (+15 below)\n"
    )


def test_show_search_and_validate_read_the_projects_own_tree(
    shared_tree: Path, tmp_path: Path
) -> None:
    """A project started with its own tree is what the tree commands show by default."""
    project = tmp_path / "own"
    own_tree = Path(__file__).resolve().parents[1] / "examples" / "own-project" / "tree.txt"
    assert CliRunner().invoke(main, ["init", str(project), "--tree", str(own_tree)]).exit_code == 0
    own = load_tree(own_tree)
    department = own.departments()[0]

    shown = run("show", "--project", str(project))
    assert shown.exit_code == 0, shown.output
    assert department.name in shown.output
    assert "Apparel  [1000]" not in shown.output

    found = run("search", department.name, "--project", str(project), "--json")
    assert found.exit_code == 0, found.output
    assert json.loads(found.output)["matches"][0]["id"] == department.id

    checked = run("validate", "--project", str(project), "--json")
    assert checked.exit_code == 0, checked.output
    assert json.loads(checked.output)["nodes"] == len(own)

    # --tree-version still picks the shared tree.
    shared = run("show", "--project", str(project), "--tree-version", "1")
    assert "Apparel  [1000]" in shared.output


def test_show_a_node_by_id_from_a_tree_file() -> None:
    result = run("show", "1510", "--tree-file", GOOD)
    assert result.exit_code == 0, result.output
    assert result.output == (
        "Food and drink > Drinks  [1510]\n"
        "├── Spirits  [1520]  (+2 below)\n"
        "├── Soft drinks  [1530]  (+1 below)\n"
        "├── Hot drinks  [1540]\n"
        "└── Tea  [1541]  (+2 below)\n"
    )


def test_show_a_node_by_path_deeper() -> None:
    result = run("show", "food and drink > drinks > tea", "--depth", "3", "--tree-file", GOOD)
    assert result.exit_code == 0, result.output
    assert result.output == (
        "Food and drink > Drinks > Tea  [1541]\n"
        "└── Green tea  [1542]\n"
        "    └── Jasmine green tea  [1543]\n"
    )


def test_show_whole_tree_to_depth_two(shared_tree: Path) -> None:
    result = run("show", "--depth", "2")
    assert result.exit_code == 0, result.output
    assert result.output.splitlines()[1:4] == [
        "├── Apparel  [1000]",
        "│   ├── Tops  [1100]  (+2 below)",
        "│   └── Children's clothing  [1200]  (+2 below)",
    ]


@pytest.mark.parametrize(
    ("node", "fragment"),
    [("9999", "no node with id '9999'"), ("Apparel > Shoes", "no node named 'shoes'")],
)
def test_show_an_unknown_node_exits_3(node: str, fragment: str) -> None:
    result = run("show", node, "--tree-file", GOOD)
    assert result.exit_code == 3
    assert fragment in result.stderr


def test_render_tree_with_counts() -> None:
    tree = load_tree(GOOD)
    buffer = io.StringIO()
    Console(file=buffer, width=80, color_system=None).print(
        render_tree(tree, "1520", 1, counts={"1520": 4, "1521": 3})
    )
    assert buffer.getvalue() == (
        "Food and drink > Drinks > Spirits  [1520]  4\n"
        "├── Brandy  [1521]  3\n"
        "└── Whisky  [1522]  0\n"
    )


def test_render_whole_tree_with_counts() -> None:
    tree = load_tree(GOOD)
    buffer = io.StringIO()
    Console(file=buffer, width=80, color_system=None).print(
        render_tree(tree, None, 1, counts={"1500": 12})
    )
    assert buffer.getvalue() == (
        "Category tree v1\n"
        "├── Apparel  [1000]  0  (+6 below)\n"
        "└── Food and drink  [1500]  12  (+15 below)\n"
    )


# -- search -------------------------------------------------------------------------------


def test_search_table() -> None:
    result = run("search", "the vert", "--limit", "2", "--tree-file", GOOD)
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert lines[0].strip() == "Nodes resembling 'the vert'"
    header = lines[2]
    for column in ("Score", "Id", "Path", "Matched term", "Language"):
        assert column in header
    first_row = lines[4]
    assert "100" in first_row and "1542" in first_row and "thé vert" in first_row
    assert first_row.split("│")[5].strip() == "fr"


def test_search_json() -> None:
    result = run("search", "Strampler", "--json", "--tree-file", GOOD)
    assert result.exit_code == 0, result.output
    facts = json.loads(result.output)
    assert facts["query"] == "Strampler"
    best = facts["matches"][0]
    assert best == {
        "score": 100.0,
        "id": "1210",
        "path": "Apparel > Children's clothing > Baby bodysuits",
        "term": "Strampler",
        "language": "de",
        "matched_name": False,
    }


def test_search_limit_and_under(shared_tree: Path) -> None:
    result = run("search", "drinks", "--json", "--limit", "1")
    assert len(json.loads(result.output)["matches"]) == 1
    result = run(
        "search", "tea", "--json", "--under", "Food and drink > Pantry", "--min-score", "0"
    )
    ids = {m["id"] for m in json.loads(result.output)["matches"]}
    assert ids and ids <= {"1550", "1551", "1552"}


def test_search_without_a_match(shared_tree: Path) -> None:
    result = run("search", "qqqzzz")
    assert result.exit_code == 0
    assert result.output == "No node resembles 'qqqzzz'.\n"
