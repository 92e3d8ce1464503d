"""Where a catmap project keeps its files: profiles, the store, models, reports.

The project folder is ``./catmap-work`` unless the ``--project DIR`` option or the
``CATMAP_PROJECT`` environment variable names another one. Nothing is created until a
command needs it: :func:`subfolder` makes a subfolder (and the project folder) on demand.
"""

from __future__ import annotations

import os
from pathlib import Path

DEFAULT_PROJECT_DIR = "catmap-work"
PROJECT_ENV = "CATMAP_PROJECT"

# What to do when a command finds no project store: it may simply run in another folder.
NO_STORE_HINT = (
    "run `catmap onboard FEED` first, or name the project folder with --project DIR "
    f"or {PROJECT_ENV}=DIR"
)

# Suffixes that say how a feed is packed rather than what it is; stripped before the stem is taken.
_COMPRESSION_SUFFIXES = (".gz", ".gzip", ".zip")


def project_dir(option: str | Path | None = None) -> Path:
    """Return the project folder (not created).

    Args:
        option: the value of ``--project``, if given; it wins over the environment.

    Returns:
        ``option``, else ``$CATMAP_PROJECT``, else ``./catmap-work``, as a path.
    """
    if option:
        return Path(option)
    from_env = os.environ.get(PROJECT_ENV)
    if from_env:
        return Path(from_env)
    return Path(DEFAULT_PROJECT_DIR)


def subfolder(project: str | Path, name: str, *, create: bool = True) -> Path:
    """Return ``<project>/<name>``, creating it (and the project folder) when ``create`` is set.

    Args:
        project: the project folder, as given by :func:`project_dir`.
        name: the subfolder, e.g. ``"profiles"``.
        create: make the folder if it does not exist yet.

    Returns:
        The subfolder path.
    """
    path = Path(project) / name
    if create:
        path.mkdir(parents=True, exist_ok=True)
    return path


def feed_stem(feed_path: str | Path) -> str:
    """Return the name a feed's files are saved under: its file name without suffixes.

    ``shop-a.csv`` and ``shop-a.csv.gz`` both give ``shop-a``.

    Args:
        feed_path: the feed file.

    Returns:
        The stem.
    """
    name = Path(feed_path).name
    lowered = name.lower()
    for suffix in _COMPRESSION_SUFFIXES:
        if lowered.endswith(suffix):
            name = name[: -len(suffix)]
            break
    stem = Path(name).stem
    return stem or name


def profile_path(project: str | Path, feed_path: str | Path, *, create: bool = False) -> Path:
    """Return where the profile of a feed is saved: ``<project>/profiles/<feed stem>.toml``.

    Args:
        project: the project folder.
        feed_path: the feed file.
        create: create the ``profiles`` folder now.

    Returns:
        The profile file path (which may not exist yet).
    """
    return subfolder(project, "profiles", create=create) / f"{feed_stem(feed_path)}.toml"
