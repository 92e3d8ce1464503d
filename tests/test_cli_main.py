"""The command line as a whole: every command is listed, has help, is documented, fails cleanly."""

from __future__ import annotations

import importlib
import re
import subprocess
import sys
from pathlib import Path

import click
import pytest
from click.testing import CliRunner

from catmap.cli import COMMANDS, SHORT_HELP, main

ROOT = Path(__file__).resolve().parents[1]


def _registered() -> dict[str, click.Command]:
    group = click.Group("probe")
    for module in sorted(set(COMMANDS.values())):
        importlib.import_module(f"catmap.cli.{module}").register(group)
    return dict(group.commands)


def test_command_table_matches_what_modules_register() -> None:
    assert set(_registered()) == set(COMMANDS)


def _all_commands() -> list[tuple[str, click.Command]]:
    found: list[tuple[str, click.Command]] = []
    for name, command in _registered().items():
        found.append((name, command))
        if isinstance(command, click.Group):
            for sub_name, sub in command.commands.items():
                found.append((f"{name} {sub_name}", sub))
    return found


@pytest.mark.parametrize("name,command", _all_commands(), ids=lambda v: str(v))
def test_every_command_and_option_has_help(name: str, command: click.Command) -> None:
    assert command.help and command.help.strip(), f"`catmap {name}` has no help text"
    for param in command.params:
        if isinstance(param, click.Option):
            assert param.help, f"`catmap {name}` option {param.opts} has no help text"


@pytest.mark.parametrize("name", sorted(COMMANDS))
def test_every_command_is_in_the_readme(name: str) -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    shown = re.search(rf"catmap {re.escape(name)}\b", readme)
    assert shown, f"README does not show `catmap {name}`"


def test_help_lists_commands_in_pipeline_order() -> None:
    result = CliRunner().invoke(main, ["--help"])
    assert result.exit_code == 0
    names = ("inspect", "tree", "train", "onboard")
    positions = [result.output.index(f"  {name} ") for name in names]
    assert positions == sorted(positions)


def test_a_catmap_error_is_one_line_and_a_named_exit_code(tmp_path: Path) -> None:
    missing = tmp_path / "nothing-here.txt"
    missing.write_text("not a tree\n", encoding="utf-8")
    result = CliRunner().invoke(main, ["tree", "validate", str(missing)])
    assert result.exit_code == 3
    assert result.output.count("\n") == 1
    assert result.output.startswith("catmap: error: ")
    assert "Traceback" not in result.output


@pytest.mark.parametrize("name", sorted(COMMANDS))
def test_the_static_short_help_is_the_commands_own(name: str) -> None:
    command = _registered()[name]
    assert SHORT_HELP[name] == command.get_short_help_str(limit=10_000)
    for width in (40, 80, 200):
        limit = width - 6 - max(len(n) for n in COMMANDS)
        listed = click.Command(name, help=SHORT_HELP[name]).get_short_help_str(limit)
        assert listed == command.get_short_help_str(limit)


def test_help_imports_no_command_module() -> None:
    probe = (
        "import sys\n"
        "from catmap.cli import main\n"
        "try:\n"
        "    main(['--help'])\n"
        "except SystemExit:\n"
        "    pass\n"
        "loaded = sorted(m for m in sys.modules if m.startswith(('catmap.cli.', 'catmap.jobs',"
        " 'sklearn', 'numpy')))\n"
        "print('loaded:', loaded, file=sys.stderr)\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, cwd=ROOT, check=True
    )
    assert "loaded: []" in done.stderr
    assert "normalise" in done.stdout


def test_the_old_spelling_still_runs_but_is_not_listed() -> None:
    listed = CliRunner().invoke(main, ["--help"]).output
    assert "  normalise " in listed and "normalize" not in listed
    old = CliRunner().invoke(main, ["normalize", "--help"])
    assert old.exit_code == 0 and "normalise [OPTIONS] FEED" in old.output


def test_python_dash_m_runs_the_same_command_line() -> None:
    """``python -m catmap`` is the ``catmap`` script: same usage line, same commands."""
    done = subprocess.run(
        [sys.executable, "-m", "catmap", "--help"], capture_output=True, text=True, check=False
    )
    assert done.returncode == 0, done.stderr
    assert done.stdout.startswith("Usage: catmap ")
    assert "onboard" in done.stdout
