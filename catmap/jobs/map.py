"""Map a feed to files: the project's model (or the tree's keywords when none is trained), the
feed's rules first, then :func:`catmap.classify.mapping.map_feed` (the facts ``catmap map``
prints)."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from catmap import _collector
from catmap.classify.mapping import Mapper, MapSummary, map_feed
from catmap.classify.rules import RuleSet, load_rules
from catmap.classify.storage import MANIFEST, load_model
from catmap.errors import InputError
from catmap.feeds.language import feed_language, language_warning
from catmap.feeds.profiled import ProfiledFeed, open_profiled_feed
from catmap.feeds.read import encoding_warning
from catmap.jobs._project_tree import default_model_dir, default_rules_path, project_tree
from catmap.project import feed_name
from catmap.tree.taxonomy import CategoryTree

__all__ = ["MapResult", "language_facts", "map_project_feed", "project_mapper"]

# Records the feed's language is guessed from (as `catmap inspect` does).
LANGUAGE_SAMPLE = 200


@dataclass(frozen=True, slots=True)
class MapResult:
    """What mapping a feed did.

    Attributes:
        facts: the summary's facts, with the feed and the model folder used (None: keywords).
        error: the fatal feed error that stopped reading early (the records before it were
            mapped and written), else None.
    """

    facts: dict[str, Any]
    error: InputError | None


def project_mapper(
    project: Path, tree: CategoryTree, model_dir: Path | None = None
) -> tuple[Mapper, Path]:
    """Return the mapper of a project and its model folder.

    A model folder given must hold a model; without one, the project's model is used when
    trained, else the tree's own keywords (cold start). The garbage collector pauses while the
    model loads (see :mod:`catmap._collector`).
    """
    folder = model_dir if model_dir is not None else default_model_dir(project)
    with _collector.paused():
        if model_dir is not None or (folder / MANIFEST).exists():
            model, manifest = load_model(folder, tree)
            consensus = float(manifest.get("consensus_weight", 0.0))
            return Mapper(tree, model, consensus_weight=consensus), folder
        return Mapper(tree, None), folder


def map_project_feed(
    feed: Path,
    out_dir: Path,
    *,
    project: Path,
    tree_version: str | None = None,
    tree_file: Path | None = None,
    feed_name_given: str | None = None,
    model_dir: Path | None = None,
    rules_file: Path | None = None,
    backoff_threshold: float = 0.5,
    format: str = "jsonl",
    workers: int = 2,
    on_progress: Callable[[int], None] | None = None,
) -> MapResult:
    """Map every product of a feed and write the mappings, rejects and accounting.

    Args:
        feed: the feed file.
        out_dir: folder for mappings, rejects and ``accounting.json``.
        project: the project folder (profile, rules, model).
        tree_version: version of the shared category tree (default: the project's tree).
        tree_file: a tree file of one's own (wins over ``tree_version``).
        feed_name_given: the feed's name (``--feed``; default: from the file name).
        model_dir: the model folder (default: the project's, keywords only when none).
        rules_file: rules applied first (default: ``<project>/rules/<feed name>.rules`` if it
            exists).
        backoff_threshold: below this confidence, answer the deepest sure parent node.
        format: file format of the mappings.
        workers: processes computing probabilities.
        on_progress: told the records read so far.

    Returns:
        The facts, and the fatal feed error if reading stopped early.
    """
    name = feed_name(feed, feed_name_given)
    with _collector.paused():  # start-up: the tree and the model, long-lived objects
        tree = project_tree(project, tree_file=tree_file, tree_version=tree_version)
        mapper, model_folder = project_mapper(project, tree, model_dir)
    if rules_file is None:
        default_rules = default_rules_path(project, feed, name)
        rules_file = default_rules if default_rules.exists() else None
    rules = load_rules(rules_file, tree=tree) if rules_file is not None else RuleSet([])

    source = open_profiled_feed(feed, project, name=name)
    error: InputError | None = None
    # Filled in by map_feed even when a fatal feed error stops the reading: the records before
    # it were mapped and written, and the facts say so.
    summary = MapSummary()
    try:
        map_feed(
            source,
            out_dir,
            mapper=mapper,
            rules=rules,
            threshold=backoff_threshold,
            format=format,
            workers=workers,
            on_progress=on_progress,
            into=summary,
        )
    except InputError as fatal:
        error = fatal
    facts: dict[str, Any] = {
        "feed": str(feed),
        "feed_name": name,
        "model": str(model_folder) if mapper.model is not None else None,
        **summary.to_dict(),
        **language_facts(source, tree),
    }
    return MapResult(facts, error)


def language_facts(source: ProfiledFeed, tree: CategoryTree) -> dict[str, Any]:
    """The feed's language guessed from its first records, and a warning when the tree has no
    terms in it (the model's confidence is then less to be trusted).

    Returns:
        ``language`` (:meth:`LanguageGuess.to_dict`) and ``warnings`` (a list of sentences).
    """
    try:
        sample = source.feed.sample(LANGUAGE_SAMPLE)
    except InputError:  # no good record: the mapping's own error says why
        sample = []
    guess = feed_language(sample, source.profile.columns)
    warnings = [language_warning(guess, tree.languages()), encoding_warning(source.feed.info)]
    return {"language": guess.to_dict(), "warnings": [w for w in warnings if w]}

