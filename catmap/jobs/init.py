"""Start a project of one's own (what ``catmap init`` does): its tree, its brand list and the
labelled feeds it trains on, written to the project's settings.

A tree of the user's own is validated, copied into the project (``tree.txt``) and fingerprinted,
so that every later command maps onto exactly that tree and a changed copy is refused. The brand
list is empty unless one is given. Only the project of ``catmap demo`` uses the demo world
(:func:`ensure_demo_project`).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from catmap._atomic import write_bytes_atomic, write_text_atomic
from catmap.attributes import BrandDictionary
from catmap.attributes.brand import project_dictionary_path
from catmap.errors import InputError
from catmap.project import (
    PROJECT_TREE_FILE,
    ProjectSettings,
    fingerprint,
    load_settings,
    save_settings,
    settings_path,
)
from catmap.tree.taxonomy import default_tree_path, load_default_tree, load_tree

__all__ = ["ensure_demo_project", "init_project"]


def init_project(
    folder: Path,
    *,
    tree_file: Path | None = None,
    tree_version: str = "1",
    brands_file: Path | None = None,
    labelled: Sequence[Path] = (),
) -> dict[str, Any]:
    """Start a project: check and copy its tree and brand list, record its labelled feeds.

    Args:
        folder: the project folder (created; must not hold a project's settings yet).
        tree_file: a tree file of the user's own (default: the shared tree of
            ``tree_version``).
        tree_version: the shared tree's version when no tree file is given.
        brands_file: a brand list CSV (columns ``brand``, ``variants``, ``departments``);
            default: none.
        labelled: labelled feeds ``catmap train`` learns from when given none.

    Returns:
        The facts: the project, its tree (file, version, fingerprint, nodes, leaves), its brand
        list (file, brands) and labelled feeds, and the settings file.

    Raises:
        InputError: the folder already holds a project, or a file given is missing or invalid
            (TreeError names the tree file's line).
    """
    if settings_path(folder).exists():
        raise InputError(
            "this folder already holds a catmap project",
            path=settings_path(folder),
            hint="start the new project in another folder, or keep using this one",
        )
    missing = [path for path in labelled if not Path(path).is_file()]
    if missing:
        raise InputError(
            "labelled feed not found", path=missing[0], hint="give an existing labelled feed"
        )
    brands = BrandDictionary.from_csv(brands_file) if brands_file is not None else None
    if tree_file is not None:
        tree = load_tree(tree_file)  # validated before anything is written
        data = Path(tree_file).read_bytes()
        folder.mkdir(parents=True, exist_ok=True)
        copy = folder / PROJECT_TREE_FILE
        write_bytes_atomic(copy, data)
        settings = ProjectSettings(
            tree_file=PROJECT_TREE_FILE,
            tree_version=str(tree.version),
            tree_fingerprint=fingerprint(copy),
        )
        tree_path = copy
    else:
        tree = load_default_tree(tree_version)
        tree_path = default_tree_path(tree_version)
        settings = ProjectSettings(
            tree_version=str(tree.version), tree_fingerprint=fingerprint(tree_path)
        )
    folder.mkdir(parents=True, exist_ok=True)
    if brands_file is not None:
        target = project_dictionary_path(folder)
        write_text_atomic(target, Path(brands_file).read_text(encoding="utf-8-sig"))
        settings.brands_file = target.name
    settings.labelled = [str(Path(feed).resolve()) for feed in labelled]
    written = save_settings(folder, settings)
    return {
        "project": str(folder),
        "settings": str(written),
        "tree": {
            "file": str(tree_path),
            "own": tree_file is not None,
            "given": str(tree_file) if tree_file is not None else None,
            "version": str(tree.version),
            "fingerprint": settings.tree_fingerprint,
            "nodes": len(tree),
            "leaves": len(tree.leaves()),
        },
        "brands": {
            "file": str(folder / settings.brands_file) if settings.brands_file else None,
            "count": len(brands) if brands is not None else 0,
        },
        "labelled": settings.labelled,
    }


def ensure_demo_project(folder: Path, reference: Path) -> None:
    """Make ``folder`` the project of ``catmap demo`` (its settings say so), when it is new.

    Args:
        folder: the project folder.
        reference: the demo reference catalog, recorded as the project's labelled feed.

    Raises:
        InputError: the folder holds a project of one's own (made by ``catmap init``).
    """
    settings = load_settings(folder)
    if settings is not None:
        if not settings.demo:
            raise InputError(
                "this project was started with `catmap init`; the demo world stays out of it",
                path=settings_path(folder),
                hint="run `catmap demo --project DIR` with another folder",
            )
        return
    tree_path = default_tree_path(1)
    save_settings(
        folder,
        ProjectSettings(
            tree_version="1",
            tree_fingerprint=fingerprint(tree_path),
            labelled=[str(Path(reference).resolve())],
            demo=True,
        ),
    )

