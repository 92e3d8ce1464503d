"""The package layout follows the pipeline: a stage imports only the stages before it.

Read with the standard library's ``ast`` (every ``import``, also those inside functions and under
``TYPE_CHECKING``), so that a lazy import cannot hide a dependency on a later stage.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "catmap"

# The modules every stage may use: plain records, errors, the project folder, small helpers.
BASE = {
    "catmap", "catmap.errors", "catmap.records", "catmap.project", "catmap._iterate",
    "catmap._atomic", "catmap._cells", "catmap._collector", "catmap._text",
}

# Stage → the stages it may import (besides BASE and itself). The order is the pipeline's.
ALLOWED: dict[str, set[str]] = {
    "feeds": set(),
    "tree": set(),
    "decide": set(),
    "classify": {"feeds", "tree"},
    "attributes": {"tree", "feeds"},
    "demo": {"tree"},
    "evaluate": {"feeds", "tree", "classify", "attributes"},
    "store": {"decide"},
    "review": {"tree", "attributes", "decide", "store"},
    "jobs": {"feeds", "tree", "decide", "classify", "attributes", "evaluate", "store", "review",
             "demo"},
    "cli": {"feeds", "tree", "decide", "classify", "attributes", "evaluate", "store", "review",
            "demo", "jobs"},
}


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(path: Path) -> set[str]:
    """Every catmap module ``path`` imports, absolute or relative."""
    name = _module_name(path)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    return _imports_in(path.read_text(encoding="utf-8"), package)


def _imports_in(source: str, package: str) -> set[str]:
    """Every catmap module ``source`` imports; relative imports are resolved from ``package``."""
    found: set[str] = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            found.add(target)
            # `from catmap import feeds` imports the package feeds.
            found.update(f"{target}.{alias.name}" for alias in node.names)
    return {module for module in found if module == "catmap" or module.startswith("catmap.")}


# ``python -m catmap`` is the command line's other door: it belongs to the cli stage.
ENTRY_POINTS = {"catmap.__main__": "cli"}


def _stage(module: str) -> str | None:
    parts = module.split(".")
    if module in ENTRY_POINTS:
        return ENTRY_POINTS[module]
    if len(parts) < 2 or module in BASE:
        return None
    return parts[1] if parts[1] in ALLOWED else None


def _modules() -> list[Path]:
    return sorted(PACKAGE.rglob("*.py"))


def test_every_top_level_module_is_a_stage_or_base() -> None:
    """A new top-level module has to be placed in the pipeline (or declared base) on purpose."""
    loose = []
    for path in _modules():
        name = _module_name(path)
        parts = name.split(".")
        if len(parts) == 2 and name not in BASE and _stage(name) is None:
            loose.append(name)
    assert loose == []


@pytest.mark.parametrize("path", _modules(), ids=lambda p: _module_name(p))
def test_a_stage_imports_only_earlier_stages(path: Path) -> None:
    here = _stage(_module_name(path))
    allowed = ALLOWED[here] | {here} if here else None
    wrong = []
    for target in sorted(_imports(path)):
        stage = _stage(target)
        if stage is None:
            continue
        if allowed is None:
            # Base modules import no stage at all.
            wrong.append(target)
        elif stage not in allowed:
            wrong.append(target)
    assert wrong == [], f"{_module_name(path)} imports a later stage: {wrong}"


def test_feeds_and_tree_import_no_later_stage() -> None:
    later = {"classify", "attributes", "store", "review", "jobs", "cli", "evaluate", "decide"}
    for stage in ("feeds", "tree"):
        for path in (PACKAGE / stage).rglob("*.py"):
            assert {_stage(t) for t in _imports(path)} & later == set(), path


def test_nothing_outside_cli_imports_cli() -> None:
    for path in _modules():
        if _stage(_module_name(path)) == "cli":
            continue
        assert not any(_stage(t) == "cli" for t in _imports(path)), path


def test_the_checker_sees_lazy_relative_and_package_imports() -> None:
    """The contract is only as good as its parser: each way of importing a later stage counts."""
    lazy = "def f():\n    from catmap.store import Store\n    return Store\n"
    relative = "from ..classify import model\n"
    package = "from catmap import review\n"
    typed = "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    import catmap.jobs.onboard\n"
    assert _stage_set(lazy) == {"store"}
    assert _stage_set(relative) == {"classify"}
    assert _stage_set(package) == {"review"}
    assert _stage_set(typed) == {"jobs"}


def _stage_set(source: str) -> set[str | None]:
    return {_stage(target) for target in _imports_in(source, "catmap.feeds")} - {None}


def test_the_developers_guide_table_matches_the_folders() -> None:
    """DEVELOPERS.md's layout table lists exactly the stage packages, in pipeline order."""
    guide = (PACKAGE.parent / "DEVELOPERS.md").read_text(encoding="utf-8")
    listed = [
        line.split("`")[1].removeprefix("catmap/").rstrip("/")
        for line in guide.splitlines()
        if line.startswith("| `catmap/")
    ]
    folders = {p.name for p in PACKAGE.iterdir() if (p / "__init__.py").exists()}
    assert sorted(listed) == sorted(folders)
    assert set(listed) == set(ALLOWED)
    # A stage may only lean on stages listed above it in the table.
    for position, stage in enumerate(listed):
        assert ALLOWED[stage] <= set(listed[:position]), stage
