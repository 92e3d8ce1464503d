"""The whole job on the invented demo world: build it, train, onboard, measure, export.

:func:`run_demo` trains a model on the demo reference catalog when the project has none,
onboards each demo feed, compares the auto-accepted part with the feeds' gold labels and
exports the result to ``<project>/export/``. The accept threshold must hold both on the
reference catalog's valid split and on the labelled feed of Oskelund, a retailer the model never
trained on (the feeds to onboard come from new retailers); the strictest of the two is used.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterator, Sequence
from contextlib import AbstractContextManager, contextmanager
from pathlib import Path
from typing import Any, Protocol

from catmap.decide.threshold import DEFAULT_MAX_ERROR
from catmap.jobs.export import export_feed
from catmap.jobs.init import ensure_demo_project
from catmap.jobs.onboard import (
    OnboardOptions,
    calibration_sources,
    check_against_gold,
    default_calibration_feeds,
    default_model_dir,
    onboard_feed,
)
from catmap.store import Store, store_path
from catmap.tree.taxonomy import CategoryTree, load_default_tree

__all__ = ["DEMO_WORLD", "DemoReporter", "run_demo"]

# The demo world of this checkout (built when missing).
DEMO_WORLD = Path(__file__).resolve().parents[2] / "feeds_demo"


class DemoReporter(Protocol):
    """What the demo tells as it goes (the CLI shows it on stderr)."""

    def world(self, root: Path) -> None:
        """The demo world in use."""

    def training(self) -> AbstractContextManager[Callable[[str], None]]:
        """While training: gives a function told each training stage."""

    def onboarding(self, feed: Path) -> AbstractContextManager[Callable[[str, int], None]]:
        """While onboarding a feed: gives a function told the stage and records read."""


class _Quiet:
    """A reporter that tells nothing."""

    def world(self, root: Path) -> None:
        pass

    @contextmanager
    def training(self) -> Iterator[Callable[[str], None]]:
        yield lambda _text: None

    @contextmanager
    def onboarding(self, feed: Path) -> Iterator[Callable[[str, int], None]]:
        yield lambda _stage, _count: None


def run_demo(
    project: Path,
    *,
    world: Path | None = None,
    max_error: float = DEFAULT_MAX_ERROR,
    validation_feed: Sequence[Path] = (),
    reporter: DemoReporter | None = None,
) -> dict[str, Any]:
    """Run the whole job on the demo world and return its facts (what ``catmap demo`` prints).

    Args:
        project: the project folder.
        world: the demo world folder (default: :data:`DEMO_WORLD`; built when missing).
        max_error: error rate allowed among auto-accepted mappings.
        validation_feed: labelled feeds that set the accept threshold (default: the reference
            catalog's held-out part, the Oskelund feed and the validation part of the unseen
            retailers, see :func:`catmap.jobs.onboard.default_calibration_feeds`).
        reporter: told what happens as it goes (default: nothing is told).

    Returns:
        The facts: the trained model's report (None when the project had one), each feed's
        onboarding summary with its gold check and export, and where the export went.
    """
    from catmap.classify.storage import load_model
    from catmap.demo import ensure_demo_world
    from catmap.evaluate.run import read_gold_csv
    from catmap.jobs.onboard import FeedMapper

    tell = reporter or _Quiet()
    started = time.perf_counter()
    root = world or DEMO_WORLD
    tell.world(root)
    paths = ensure_demo_world(root)
    ensure_demo_project(project, Path(paths.reference))
    tree = load_default_tree(1)
    model_dir = default_model_dir(project)
    trained = _train_when_missing(paths.reference, tree, project, model_dir, tell)
    model, manifest = load_model(model_dir, tree)
    # New feeds come from new retailers: the threshold must also hold on labelled products
    # of retailers the model never saw (see catmap.jobs.onboard.accept_threshold).
    calibration = list(validation_feed) or default_calibration_feeds(project)
    validation = calibration_sources(
        FeedMapper(model, manifest, tree), model_dir, project=project,
        feeds=calibration, as_default=True,
    )
    options = OnboardOptions(max_error=max_error)
    feeds: list[dict[str, Any]] = []
    export_dir = project / "export"
    for name, gold_file in paths.gold.items():
        with tell.onboarding(paths.feeds[name]) as progress:
            summary = onboard_feed(
                paths.feeds[name], project=project, tree=tree, options=options,
                on_progress=progress, validation=validation,
            )
        gold = {pid: g.node for pid, g in read_gold_csv(gold_file).items()}
        with Store.open(store_path(project)) as store:
            check = check_against_gold(store, summary.feed, gold)
            exported = export_feed(store, summary.feed, export_dir, tree=tree, project=project)
        feeds.append(
            {
                **summary.to_dict(),
                "gold": check.to_dict(),
                "export": exported.to_dict(),
            }
        )
    return {
        "project": str(project),
        "world": str(root),
        "trained": trained,
        "feeds": feeds,
        "export": str(export_dir),
        "seconds": round(time.perf_counter() - started, 1),
        "review_command": f"catmap review --project {project}",
    }


def _train_when_missing(
    reference: Path, tree: CategoryTree, project: Path, model_dir: Path, tell: DemoReporter
) -> dict[str, Any] | None:
    """Train on the demo reference catalog when the project has no model; return the report."""
    from catmap.classify.training import train_model
    from catmap.jobs.onboard import held_out_recorder

    if (model_dir / "manifest.json").exists():
        return None
    with tell.training() as stage:
        # As `catmap train` trains (refit included).
        report = train_model(
            [reference],
            tree=tree,
            project=project,
            model_dir=model_dir,
            on_stage=stage,
            refit=True,
            before_refit=held_out_recorder([reference], tree=tree, project=project),
        )
    return report.to_dict()
