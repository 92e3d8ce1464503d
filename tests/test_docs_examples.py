"""Every example in README.md, docs/*.md and the commands' --help runs as written.

Checked without running the whole job: each ``$ catmap ...`` line of the README parses with the
real command line (options exist, files named exist); each rule example parses against tree v1,
so its node ids exist; each node id or path a help text gives as an example is in tree v1.
"""

from __future__ import annotations

import re
import shlex
from pathlib import Path

import click
import pytest

from catmap.classify.rules import parse_rules
from catmap.cli import COMMANDS, main
from catmap.tree.taxonomy import CategoryTree, load_tree

ROOT = Path(__file__).resolve().parents[1]
DOCS = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
# A rule written inline: a field, an operator, ..., "=>" and a node id.
_INLINE_RULE = re.compile(
    r"((?:not )?(?:title|path|brand|description|id) (?:contains|is|starts with|matches)"
    r"[^`\n]*?=>\s*\d+)"
)


@pytest.fixture(scope="module")
def tree() -> CategoryTree:
    return load_tree(ROOT / "taxonomies" / "tree-v1.txt")


def _commands() -> list[tuple[str, click.Command]]:
    group = click.Group("probe")
    for module in sorted(set(COMMANDS.values())):
        __import__(f"catmap.cli.{module}", fromlist=["register"]).register(group)
    found: list[tuple[str, click.Command]] = []
    for name, command in group.commands.items():
        found.append((name, command))
        if isinstance(command, click.Group):
            found.extend((f"{name} {sub}", c) for sub, c in command.commands.items())
    return found


def _help_texts() -> list[tuple[str, str]]:
    texts = []
    for name, command in _commands():
        parts = [command.help or ""]
        parts += [p.help or "" for p in command.params if isinstance(p, click.Option)]
        texts.append((name, "\n".join(parts)))
    return texts


def _rule_examples() -> list[tuple[str, str]]:
    """(where, rule text) for every rule example in the docs and the help texts."""
    found: list[tuple[str, str]] = []
    for doc in DOCS:
        text = doc.read_text(encoding="utf-8")
        for block in re.findall(r"```rules\n(.*?)```", text, flags=re.S):
            found.append((doc.name, block))
        inline = re.sub(r"```.*?```", "", text, flags=re.S)
        found += [(doc.name, rule) for rule in _INLINE_RULE.findall(inline)]
    for name, text in _help_texts():
        found += [(f"catmap {name} --help", rule) for rule in _INLINE_RULE.findall(text)]
    return found


def test_the_examples_are_found() -> None:
    """The extraction itself works: the rules page's examples and the help's are seen."""
    where = {w for w, _rule in _rule_examples()}
    assert {"rules.md", "README.md", "catmap map --help"} <= where
    assert len(_rule_examples()) >= 10


@pytest.mark.parametrize(("where", "rule"), _rule_examples(), ids=lambda v: str(v)[:40])
def test_every_rule_example_parses_on_tree_v1(where: str, rule: str, tree: CategoryTree) -> None:
    # Markdown table cells escape a bar; the rule itself has none.
    rules = parse_rules(rule.replace("\\|", "|"), path=where, tree=tree)
    assert len(rules) >= 1


def test_every_rules_page_operator_has_an_example() -> None:
    page = (ROOT / "docs" / "rules.md").read_text(encoding="utf-8")
    rules = " ".join(rule for where, rule in _rule_examples() if where == "rules.md")
    for operator in ("contains", " is ", "starts with", "matches /", "/i", "not ", " and "):
        assert operator in rules, f"docs/rules.md shows no rule with {operator.strip()!r}"
    for field in ("title", "path", "brand", "description", "id"):
        assert f"| `{field}` |" in page


@pytest.mark.parametrize(("name", "text"), _help_texts(), ids=lambda v: str(v)[:30])
def test_node_ids_and_paths_in_help_exist(name: str, text: str, tree: CategoryTree) -> None:
    flat = " ".join(text.split())
    for node_id in re.findall(r"node id \(e\.g\. (\d+)\)", flat):
        assert node_id in tree, f"`catmap {name} --help` names node {node_id}"
    for path in re.findall(r'"([^"]+ > [^"]+)"', flat):
        tree.resolve(path)  # raises UnknownNode when the path is not in the tree


def _readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```\n(.*?)```", text, flags=re.S)
    return [
        line[2:].strip()
        for block in blocks
        for line in block.splitlines()
        if line.startswith("$ catmap ")
    ]


@pytest.mark.parametrize("line", _readme_commands())
def test_every_readme_command_parses(line: str, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)  # the README runs from the checkout
    args = shlex.split(line)[1:]
    context = main.make_context("catmap", list(args))
    group: click.Group = main
    rest = [*context._protected_args, *context.args]
    while rest:
        name, command, rest = group.resolve_command(context, rest)
        assert command is not None, line
        context = command.make_context(name, rest, parent=context)
        if not isinstance(command, click.Group):
            break
        group = command
        rest = [*context._protected_args, *context.args]
