"""Map a labelled feed, compare with its gold labels and write the report (``report.html``
with plots and ``metrics.json``), as ``catmap evaluate`` does."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

__all__ = ["EvaluationResult", "evaluate_and_report", "last_accept_threshold"]


@dataclass(frozen=True, slots=True)
class EvaluationResult:
    """The evaluation report and the files it was written to."""

    report: dict[str, Any]
    html_path: Path
    json_path: Path


def last_accept_threshold(project: Path) -> float | None:
    """The accept threshold of the project's latest finished onboarding run (None: none yet):
    the one its feed check set for its feed, else (a run recorded without it) the calibration
    data's."""
    from catmap.store import Store, store_path

    path = store_path(project)
    if not path.is_file():
        return None
    with Store.open(path) as store:
        runs = [r for r in store.runs() if r.kind == "onboard" and r.finished_at]
    for run in reversed(runs):
        recorded = run.summary if "threshold" in run.summary else run.params
        threshold = recorded.get("threshold")
        if threshold is not None:
            return float(threshold)
    return None


def evaluate_and_report(
    labelled_feed: Path,
    *,
    project: Path,
    gold_file: Path | None = None,
    label_column: str = "gold_node",
    model_dir: Path | None = None,
    out_dir: Path | None = None,
    split: str | None = None,
    backoff_threshold: float = 0.5,
    tree_version: str | None = None,
    tree_file: Path | None = None,
    feed_name: str | None = None,
    accept_threshold: float | None = None,
) -> EvaluationResult:
    """Evaluate the mapping of a labelled feed and write its report.

    Args:
        labelled_feed: the feed with gold labels (or joined to ``gold_file``).
        project: the project folder.
        gold_file: gold labels CSV joined by product id (default: the feed's own columns).
        label_column: column holding the gold node id.
        model_dir: the model folder (default: the project's; none: keywords only).
        out_dir: folder for the report (default: ``<project>/reports/<feed name>``).
        split: evaluate only rows whose ``split`` column is this.
        backoff_threshold: below this confidence, answer the deepest sure parent node.
        tree_version: the shared category tree version (default: the project's tree).
        tree_file: a tree file of one's own (wins over ``tree_version``).
        feed_name: the feed's name (``--feed``; default: from the file name).
        accept_threshold: the auto-accept threshold to give the error rate at (default: the
            one of the project's latest onboarding run, if any).
    """
    from catmap.evaluate.report_html import write_report
    from catmap.evaluate.run import evaluate_feed
    from catmap.jobs._project_tree import project_tree
    from catmap.project import feed_stem

    tree = project_tree(project, tree_file=tree_file, tree_version=tree_version)
    report = evaluate_feed(
        labelled_feed,
        project=project,
        gold_path=gold_file,
        label_column=label_column,
        model_folder=model_dir,
        tree=tree,
        feed_name=feed_name,
        split=split,
        threshold=backoff_threshold,
        accept_threshold=(
            accept_threshold if accept_threshold is not None else last_accept_threshold(project)
        ),
    )
    target = out_dir or project / "reports" / (feed_name or feed_stem(labelled_feed))
    html_path, json_path = write_report(report, target)
    return EvaluationResult(report, html_path, json_path)
