"""Where a catmap project keeps its files: settings, profiles, the store, models, reports.

The project folder is ``./catmap-work`` unless the ``--project DIR`` option or the
``CATMAP_PROJECT`` environment variable names another one. Nothing is created until a
command needs it: :func:`subfolder` makes a subfolder (and the project folder) on demand.

``catmap init`` writes the project's settings (:data:`SETTINGS_FILE`, see
:class:`ProjectSettings`): its tree (the shared one, or a copy of the user's own with its
fingerprint), its brand list and its labelled feeds. A feed's name (:func:`feed_name`) is its file
name without suffixes, dates and run counters, unless ``--feed NAME`` gives one.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import tomllib
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from catmap._atomic import write_text_atomic
from catmap.errors import InputError

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


# A date in a file name: 2026-11-30, 2026_11_30, 2026.11.30 or 20261130, with an optional time
# after it (T1200, _120000, -12-00-00). Years 1900-2099 and real months and days only, so that
# a retailer name ending in digits ("shop-24") keeps them.
_DATE = r"(?:19|20)\d{2}([-_.]?)(?:0[1-9]|1[0-2])\1(?:0[1-9]|[12]\d|3[01])"
_TIME = r"(?:[T_ -]?[0-2]\d[-_.:h]?[0-5]\d(?:[-_.:m]?[0-5]\d)?s?)"
_TRAILING_DATE = re.compile(rf"[\s_.-]*{_DATE}{_TIME}?$", re.IGNORECASE)
_LEADING_DATE = re.compile(rf"^{_DATE}{_TIME}?[\s_.-]+", re.IGNORECASE)
# Run counters: "shop-a (2)" (a second download) and "shop-a.001" (a numbered part or run).
_TRAILING_COUNTER = re.compile(r"(?:\s*\(\d{1,4}\)|\.\d{1,4})$")
# What a feed name may hold: it names files in the project folder.
_FEED_NAME = re.compile(r"^[\w][\w .+-]{0,99}$")


def feed_stem(feed_path: str | Path) -> str:
    """Return a feed's default name: its file name without suffixes, dates and run counters.

    ``shop-a.csv``, ``shop-a.csv.gz``, ``shop-a_2026-11-30.csv``, ``shop-a-20261130.csv.gz``,
    ``shop-a (2).csv`` and ``shop-a.001.csv`` all give ``shop-a``: a retailer's daily file stays
    one feed. A name that would be left empty keeps its plain stem.

    Args:
        feed_path: the feed file.

    Returns:
        The name.
    """
    name = Path(feed_path).name
    lowered = name.lower()
    for suffix in _COMPRESSION_SUFFIXES:
        if lowered.endswith(suffix):
            name = name[: -len(suffix)]
            break
    stem = Path(name).stem or name
    current = stem
    while True:
        shorter = _TRAILING_COUNTER.sub("", current)
        shorter = _TRAILING_DATE.sub("", shorter)
        shorter = _LEADING_DATE.sub("", shorter)
        shorter = shorter.strip(" _.-")
        if shorter == current or not shorter:
            break
        current = shorter
    return current or stem


def feed_name(feed_path: str | Path, given: str | None = None) -> str:
    """Return the name a feed is known by: ``given`` (``--feed NAME``) or :func:`feed_stem`.

    Args:
        feed_path: the feed file.
        given: the name given with ``--feed``, if any.

    Returns:
        The feed's name.

    Raises:
        InputError: the given name cannot name a file (a slash, a leading dot, too long).
    """
    if given is None:
        return feed_stem(feed_path)
    name = given.strip()
    if not _FEED_NAME.match(name):
        raise InputError(
            f"'{given}' cannot be a feed name",
            field="--feed",
            hint="use letters, digits, spaces, '.', '_', '+' or '-' (at most 100), "
            "starting with a letter or digit",
        )
    return name


def feed_names(
    feed_paths: Sequence[str | Path], given: str | None = None, *, verb: str
) -> list[str]:
    """Return the names of the feeds of one run, checked to differ.

    Args:
        feed_paths: the feed files, in the order given.
        given: the name given with ``--feed`` (one feed only).
        verb: what the run does ("map", "onboard"), for the hints.

    Returns:
        Each feed's name (:func:`feed_name`), in order.

    Raises:
        InputError: ``--feed`` was given with several feeds, or two feeds have the same name.
    """
    if given is not None and len(feed_paths) > 1:
        raise InputError(
            "--feed names one feed, and several were given",
            field="--feed",
            hint=f"{verb} the feeds one by one to name each, or let their file names name them",
        )
    names = [feed_name(path, given) for path in feed_paths]
    seen: dict[str, str | Path] = {}
    for path, name in zip(feed_paths, names, strict=True):
        if name in seen:
            raise InputError(
                f"two feeds are named '{name}': {seen[name]} and {path}",
                path=path,
                hint=f"{verb} them in separate runs, each with --feed NAME",
            )
        seen[name] = path
    return names


def profile_path(
    project: str | Path, feed_path: str | Path, *, create: bool = False, name: str | None = None
) -> Path:
    """Return where the profile of a feed is saved: ``<project>/profiles/<feed name>.toml``.

    Args:
        project: the project folder.
        feed_path: the feed file.
        create: create the ``profiles`` folder now.
        name: the feed's name (``--feed``; default: :func:`feed_stem` of the file).

    Returns:
        The profile file path (which may not exist yet).
    """
    return subfolder(project, "profiles", create=create) / f"{feed_name(feed_path, name)}.toml"


# --------------------------------------------------------------------------------------------
# Project settings

SETTINGS_FILE = "catmap-project.toml"
# The project's own copy of a tree given to ``catmap init --tree``.
PROJECT_TREE_FILE = "tree.txt"


@dataclass
class ProjectSettings:
    """What ``catmap init`` chose for a project (saved in ``<project>/catmap-project.toml``).

    Attributes:
        tree_file: the project's own tree, relative to the project folder (None: the shared
            tree of ``tree_version``).
        tree_version: the tree's version (its ``@tree-version`` header).
        tree_fingerprint: SHA-256 of the tree file when the project was made; a tree file that
            no longer matches it is refused.
        brands_file: the project's brand list, relative to the project folder (None: none).
        labelled: labelled feeds ``catmap train`` learns from when given none.
        demo: the project of ``catmap demo`` (the only one that uses the demo world).
        labels_version: the tree version the labelled feeds' labels name, once the project's
            tree has moved on to a newer version (``catmap remap-finalise``); None: the
            tree's version.
    """

    tree_file: str | None = None
    tree_version: str = "1"
    tree_fingerprint: str = ""
    brands_file: str | None = None
    labelled: list[str] = field(default_factory=list)
    demo: bool = False
    labels_version: str | None = None

    @property
    def labels_tree_version(self) -> str:
        """The tree version the labelled feeds' labels name."""
        return self.labels_version or self.tree_version


def settings_path(project: str | Path) -> Path:
    """Return ``<project>/catmap-project.toml`` (may not exist)."""
    return Path(project) / SETTINGS_FILE


def fingerprint(path: str | Path) -> str:
    """Return the SHA-256 of a file's bytes, as hex."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def _toml_text(value: str) -> str:
    # A JSON string is a valid TOML basic string (same escapes).
    return json.dumps(value, ensure_ascii=False)


def settings_text(settings: ProjectSettings) -> str:
    """Return the TOML text :func:`save_settings` writes (with comments).

    Args:
        settings: the project's settings.

    Returns:
        The file content.
    """
    lines = [
        "# catmap project settings, written by `catmap init`.",
        "",
        "[tree]",
        "# The project's own tree (relative to this folder); omitted: the shared tree.",
    ]
    if settings.tree_file is not None:
        lines.append(f"file = {_toml_text(settings.tree_file)}")
    lines += [
        f"version = {_toml_text(settings.tree_version)}",
        "# SHA-256 of the tree file when the project was made; the project's own tree file is",
        "# refused when it no longer matches.",
        f"fingerprint = {_toml_text(settings.tree_fingerprint)}",
        "",
        "[brands]",
        "# The brand list given to `catmap init` (relative to this folder); omitted: brands.csv",
        "# when there is one (`catmap brands accept NAME` starts it), else none.",
    ]
    if settings.brands_file is not None:
        lines.append(f"file = {_toml_text(settings.brands_file)}")
    lines += [
        "",
        "[train]",
        "# Labelled feeds `catmap train` learns from when it is given none.",
        "labelled = [",
        *(f"    {_toml_text(feed)}," for feed in settings.labelled),
        "]",
    ]
    if settings.labels_version is not None:
        lines += [
            "# The tree version their labels name (the project's tree has moved on since).",
            f"labels_version = {_toml_text(settings.labels_version)}",
        ]
    lines += [
        "",
        "[project]",
        "# true only for the project of `catmap demo`, the one that uses the demo world.",
        f"demo = {'true' if settings.demo else 'false'}",
    ]
    return "\n".join(lines) + "\n"


def save_settings(project: str | Path, settings: ProjectSettings) -> Path:
    """Write the project's settings atomically; return the file."""
    path = settings_path(project)
    path.parent.mkdir(parents=True, exist_ok=True)
    write_text_atomic(path, settings_text(settings))
    return path


def load_settings(project: str | Path) -> ProjectSettings | None:
    """Read the project's settings (None for a project ``catmap init`` did not make).

    Raises:
        InputError: the settings file cannot be read or is not what catmap wrote.
    """
    path = settings_path(project)
    if not path.is_file():
        return None
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as error:
        raise InputError(
            f"cannot read the project settings: {error}",
            path=path,
            hint="fix the file, or run `catmap init` again in a new folder",
        ) from None
    tree = data.get("tree", {})
    brands = data.get("brands", {})
    train = data.get("train", {})
    info = data.get("project", {})
    labelled = train.get("labelled", []) if isinstance(train, dict) else []
    if not (
        isinstance(tree, dict)
        and isinstance(brands, dict)
        and isinstance(info, dict)
        and isinstance(labelled, list)
        and all(isinstance(item, str) for item in labelled)
    ):
        raise InputError(
            "the project settings are not in catmap's format",
            path=path,
            hint="sections [tree], [brands], [train] and [project], as `catmap init` writes",
        )
    return ProjectSettings(
        tree_file=_optional_text(tree.get("file")),
        tree_version=str(tree.get("version", "1")),
        tree_fingerprint=str(tree.get("fingerprint", "")),
        brands_file=_optional_text(brands.get("file")),
        labelled=list(labelled),
        demo=bool(info.get("demo", False)),
        labels_version=_optional_text(train.get("labels_version")),
    )


def _optional_text(value: object) -> str | None:
    return str(value) if value else None


def is_demo_project(project: str | Path) -> bool:
    """Whether the project is the one of ``catmap demo`` (its settings say so)."""
    settings = load_settings(project)
    return settings is not None and settings.demo

