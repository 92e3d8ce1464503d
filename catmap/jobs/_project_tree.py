"""The tree a command works on: the one given, the project's own (checked against the
fingerprint ``catmap init`` recorded), or the shared tree of a version; and where a project
keeps its model and a feed's rules.

Small on purpose: ``catmap map`` takes these from here, so that it does not import onboarding
(the store, attributes, review) to find its tree and model.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import TYPE_CHECKING

from catmap._atomic import write_bytes_atomic
from catmap.errors import ModelNotTrained, ModelTreeMismatch, TreeError
from catmap.project import SETTINGS_FILE, feed_name, fingerprint, load_settings, save_settings
from catmap.tree.taxonomy import CategoryTree, default_tree_path, load_default_tree, load_tree
from catmap.tree.treefile import LANGUAGES

if TYPE_CHECKING:
    from catmap.store import Store

__all__ = [
    "check_store_tree",
    "default_model_dir",
    "default_rules_path",
    "open_project_tree",
    "keep_version_tree",
    "project_tree",
    "project_tree_languages",
    "project_version_tree",
    "version_tree_path",
]


def default_model_dir(project: str | Path) -> Path:
    """Return where ``catmap train`` saves the model: ``<project>/models/current``."""
    return Path(project) / "models" / "current"


def default_rules_path(project: str | Path, feed_path: str | Path, name: str | None = None) -> Path:
    """Return a feed's default rules file: ``<project>/rules/<feed name>.rules``.

    Args:
        project: the project folder.
        feed_path: the feed file.
        name: the feed's name (``--feed``; default: from the file name).
    """
    return Path(project) / "rules" / f"{feed_name(feed_path, name)}.rules"


def project_tree(
    project: str | Path,
    *,
    tree_file: str | Path | None = None,
    tree_version: str | None = None,
) -> CategoryTree:
    """Return the tree a command works on (see :func:`open_project_tree`).

    A project ``catmap init`` did not make falls back to its model's tree version (version 1
    when there is no model yet).
    """
    fallback = "1"
    if tree_file is None and not tree_version and load_settings(project) is None:
        # Imported here: the model's modules (NumPy, SciPy, Numba) are only needed to read
        # the manifest of a project without settings.
        from catmap.classify.storage import read_manifest

        try:
            fallback = str(read_manifest(default_model_dir(project)).get("tree_version", "1"))
        except ModelNotTrained:
            pass
    return open_project_tree(
        project, tree_file=tree_file, tree_version=tree_version, fallback_version=fallback
    )


def open_project_tree(
    project: str | Path,
    *,
    tree_file: str | Path | None = None,
    tree_version: str | None = None,
    fallback_version: str = "1",
) -> CategoryTree:
    """Return the tree a command works on.

    In order: the file given (``--tree-file``), the shared tree of the version given
    (``--tree-version``), the project's tree (its settings), else the shared tree of
    ``fallback_version`` (a project ``catmap init`` did not make).

    Args:
        project: the project folder.
        tree_file: a tree file given on the command line.
        tree_version: a shared tree version given on the command line.
        fallback_version: the version for a project without settings.

    Returns:
        The validated tree.

    Raises:
        TreeError: the tree file is missing or invalid, or the project's own tree file no
            longer matches the fingerprint recorded by ``catmap init``.
    """
    if tree_file is not None:
        return load_tree(tree_file)
    if tree_version:
        return load_default_tree(tree_version)
    settings = load_settings(project)
    if settings is None:
        return load_default_tree(fallback_version)
    if settings.tree_file is None:
        return load_default_tree(settings.tree_version)
    path = Path(project) / settings.tree_file
    tree = load_tree(path)
    found = fingerprint(path)
    if settings.tree_fingerprint and found != settings.tree_fingerprint:
        raise TreeError(
            f"the project's tree file was changed after `catmap init`: fingerprint "
            f"{found[:12]} now, {settings.tree_fingerprint[:12]} recorded in {SETTINGS_FILE}",
            path=path,
            hint="put the original file back, or start a new project with "
            "`catmap init DIR --tree FILE`; a new tree version is moved to with `catmap remap`",
        )
    return tree


def check_store_tree(store: Store, tree: CategoryTree) -> None:
    """Refuse a tree other than the one the store's latest onboarding mapped onto.

    A remap moves the store to a new tree; after one, the check waits for the next onboarding.

    Raises:
        ModelTreeMismatch: the store's mappings are on another tree (named with its file and
            fingerprint).
    """
    latest = next((run for run in reversed(store.runs()) if run.kind in ("onboard", "remap")), None)
    if latest is None or latest.kind != "onboard":
        return
    recorded = str(latest.params.get("tree_fingerprint") or "")
    current = fingerprint(tree.path) if tree.path and Path(tree.path).is_file() else ""
    if not recorded or not current or recorded == current:
        return
    raise ModelTreeMismatch(
        f"the project store's mappings are on tree version {latest.params.get('tree_version')} "
        f"({latest.params.get('tree_file')}, fingerprint {recorded[:12]}); the tree in use is "
        f"version {tree.version} ({tree.path}, fingerprint {current[:12]})",
        path=store.path,
        hint="use the store's tree (--tree-file FILE), or move the store to this tree with "
        "`catmap remap --to FILE`",
    )


def project_tree_languages(project: str | Path) -> tuple[str, ...]:
    """Return the languages the project's tree has terms in (:meth:`CategoryTree.languages`).

    A tree that cannot be opened counts as having every language of the format: the commands
    that need the tree say what is wrong with it.
    """
    try:
        return open_project_tree(project).languages()
    except TreeError:
        return LANGUAGES


def version_tree_path(project: str | Path, version: str) -> Path:
    """Where a project of one's own keeps its tree of another version than its settings'
    (``<project>/tree-v{N}.txt``, written by ``catmap remap --to FILE``)."""
    return Path(project) / f"tree-v{version}.txt"


def keep_version_tree(project: str | Path, tree: CategoryTree) -> Path | None:
    """Keep a copy of a tree file a project of one's own is remapped to, for the commands that
    find a tree by the version recorded with the store's mappings (export, review, decisions).

    Returns:
        The copy, or None: the project uses the shared tree, the tree is the project's own
        version, or it comes from no file.
    """
    settings = load_settings(project)
    if settings is None or settings.tree_file is None or tree.path is None:
        return None
    if str(tree.version) == str(settings.tree_version):
        return None
    target = version_tree_path(project, str(tree.version))
    source = Path(tree.path)
    if target.exists() and target.resolve() == source.resolve():
        return target
    write_bytes_atomic(target, source.read_bytes())
    return target


def adopt_version_tree(project: str | Path, version: str) -> Path | None:
    """Make the tree of ``version`` the project's tree, once the remap to it is final: later
    commands (train, onboard, map) then use it with no ``--tree-file`` or ``--tree-version``.

    A project of one's own takes the kept copy of its tree of that version; the tree it
    replaces is kept as ``tree-v{N}.txt`` of its version first, so that the records of that
    version still find it. A project on the shared tree takes the shared tree of that version.
    Either way the settings keep which version the labelled feeds' labels name
    (``labels_version``): training then learns from the remapped catalog, or from those
    feeds read through the changes (``catmap train --labels-tree``).

    Returns:
        The project's tree file now, or None: the version is already its tree's, there is no
        such tree, or the project has no settings.
    """
    settings = load_settings(project)
    if settings is None or str(version) == settings.tree_version:
        return None
    if settings.tree_file is None:
        try:
            shared = default_tree_path(str(version))
        except TreeError:
            return None
        if not shared.is_file():
            return None
        save_settings(
            project,
            dataclasses.replace(
                settings,
                tree_version=str(version),
                tree_fingerprint=fingerprint(shared),
                labels_version=settings.labels_tree_version,
            ),
        )
        return shared
    path = version_tree_path(project, str(version))
    if not path.is_file():
        return None
    old = Path(project) / settings.tree_file
    kept = version_tree_path(project, settings.tree_version)
    if old.is_file() and not kept.exists():
        write_bytes_atomic(kept, old.read_bytes())
    save_settings(
        project,
        dataclasses.replace(
            settings,
            tree_file=path.name,
            tree_version=str(version),
            tree_fingerprint=fingerprint(path),
            labels_version=settings.labels_tree_version,
        ),
    )
    return path


def project_version_tree(project: str | Path, version: str) -> CategoryTree:
    """Return the project's tree of a version: its own tree when that is the version, the copy
    ``catmap remap --to FILE`` kept of a tree of one's own (:func:`keep_version_tree`), else
    the shared tree of the version.

    Raises:
        TreeError: the tree file is missing or invalid.
    """
    own = project_tree(project)
    if str(own.version) == str(version):
        return own
    settings = load_settings(project)
    kept = version_tree_path(project, str(version))
    if settings is not None and settings.tree_file is not None and kept.is_file():
        return load_tree(kept)
    return load_default_tree(version)
