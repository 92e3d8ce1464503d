"""The accept threshold of onboarding: held-out predictions per calibration source (cached
beside the model) and the strictest Learn-then-Test threshold over them."""

from __future__ import annotations

import logging
import zipfile
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import IO, Any

import numpy as np

from catmap._atomic import atomic_open
from catmap.classify.storage import file_fingerprint
from catmap.classify.training import read_labelled
from catmap.decide.threshold import (
    DEFAULT_DELTA,
    DEFAULT_MAX_ERROR,
    ThresholdChoice,
    choose_threshold,
)
from catmap.errors import ModelError
from catmap.jobs._feed_mapper import CHUNK_SIZE, FeedMapper, acceptance_score
from catmap.project import feed_stem, is_demo_project, load_settings
from catmap.records import Product
from catmap.tree.taxonomy import CategoryTree

_log = logging.getLogger(__name__)

VALIDATION_FILE = "validation-confidences.npz"
# The demo's labelled feed from a retailer (Oskelund) that is not in the reference catalog.
OUTSIDE_RETAILER_FEED = "oskelund_labelled"


@dataclass(frozen=True, slots=True)
class ValidationPredictions:
    """Held-out mappings of the model: acceptance score and whether the node was right.

    Attributes:
        scores: acceptance score per calibration product.
        correct: whether the mapped node was the labelled one.
        source: which data, in words (what the guarantee rests on).
    """

    scores: np.ndarray[Any, Any]
    correct: np.ndarray[Any, Any]
    source: str

    def __len__(self) -> int:
        return int(self.scores.size)


def _reference_feed() -> Path:
    from catmap.demo import ensure_demo_world

    root = Path(__file__).resolve().parents[2] / "feeds_demo"
    return ensure_demo_world(root).reference


def _default_calibration_feed() -> Path:
    """The demo's labelled feed of a retailer outside the reference catalog, if present."""
    from catmap.demo import demo_paths

    root = Path(__file__).resolve().parents[2] / "feeds_demo"
    outside = demo_paths(root).feeds.get(OUTSIDE_RETAILER_FEED)
    return outside if outside is not None and outside.is_file() else _reference_feed()


def _calibration_rows(
    feeds: Sequence[Path], tree: CategoryTree, project: Path
) -> tuple[list[tuple[Product, str]], list[str]]:
    """Labelled rows to calibrate on, and a description of each feed's part.

    A feed with a ``split`` column gives its ``valid`` rows only (the others may have trained
    the model); a feed without one is taken to be outside the training data and gives every
    labelled row.
    """
    rows: list[tuple[Product, str]] = []
    described: list[str] = []
    settings = load_settings(project)
    trained_on = {Path(f).resolve() for f in settings.labelled} if settings is not None else set()
    for feed in feeds:
        data = read_labelled([feed], tree=tree, project=project)
        everything = data.train + data.valid + data.test
        if Path(feed).resolve() in trained_on:
            # One of the project's training feeds: only the part training held out.
            rows.extend(data.valid)
            described.append(
                f"{len(data.valid):,} products of {feed} held out from training (the "
                "project's labelled feed)"
            )
        elif any(product.extra.get("split") for product, _label in everything):
            rows.extend(data.valid)
            described.append(
                f"{len(data.valid):,} split=valid products of {feed} (held out from "
                "training, but from the retailers the model trained on)"
            )
        else:
            rows.extend(everything)
            retailers = sorted(
                {product.extra.get("retailer", "") for product, _ in everything} - {""}
            )
            whose = f" (retailer {', '.join(retailers[:3])})" if retailers else ""
            described.append(
                f"{len(everything):,} labelled products of {feed}{whose}, "
                "a feed the model was not trained on"
            )
    return rows, described


def _cache_file(folder: Path, feeds: Sequence[Path] | None) -> Path:
    if not feeds:
        return folder / VALIDATION_FILE
    stems = "+".join(feed_stem(feed) for feed in feeds)
    return folder / f"calibration-{stems}.npz"


def validation_predictions(
    mapper: FeedMapper,
    model_dir: str | Path,
    *,
    project: str | Path,
    labelled_feeds: Sequence[Path] | None = None,
    as_default: bool = False,
) -> ValidationPredictions:
    """Return the model's held-out predictions, computing and caching them when missing.

    The cache sits in the model folder, tied to the model by its manifest's fingerprint (a
    retrained model gets new predictions): ``calibration-<feed>.npz`` for given feeds (tied to
    their content too), ``validation-confidences.npz`` for the default, which is the demo's
    labelled feed of a retailer outside the reference catalog, else the reference catalog's
    valid split, unless ``as_default`` made other feeds the project's default.

    Args:
        mapper: the mapper built on the model (the same mapping as onboarding uses).
        model_dir: the model folder.
        project: the project folder (feed profiles of the labelled feeds are kept there).
        labelled_feeds: feeds with a ``gold_node`` column: one with a ``split`` column gives
            its ``valid`` rows, one without gives every row (a feed the model was not trained
            on, e.g. from another retailer). Default: see above.
        as_default: also save the result as the default (what onboarding without a
            validation feed uses from then on).

    Returns:
        The scores and correctness of the calibration products.

    Raises:
        ModelError: no labelled calibration products are available.
    """
    folder = Path(model_dir)
    given = [Path(f) for f in labelled_feeds] if labelled_feeds else None
    cache = _cache_file(folder, given)
    model_stamp = file_fingerprint(folder / "manifest.json")
    stamp = " ".join([model_stamp] + [file_fingerprint(feed) for feed in given or ()])
    cached = _load_sources(cache, stamp)
    if cached is not None and len(cached) == 1:
        if as_default and given:
            _save_sources(folder / VALIDATION_FILE, cached, model_stamp)
        return cached[0]
    feeds = given or [_default_calibration_feed()]
    rows, described = _calibration_rows(feeds, mapper.tree, Path(project))
    if not rows:
        raise ModelError(
            "no labelled products to choose the accept threshold from",
            path=feeds[0],
            hint="give a labelled feed (gold_node column) the model was not trained on",
        )
    scores: list[float] = []
    correct: list[bool] = []
    for start in range(0, len(rows), CHUNK_SIZE):
        chunk = rows[start : start + CHUNK_SIZE]
        for (_product, label), mapping in zip(
            chunk, mapper.map([p for p, _ in chunk]), strict=True
        ):
            scores.append(acceptance_score(mapping))
            correct.append(mapping.node_id == label)
    source = "; ".join(described)
    result = ValidationPredictions(np.array(scores), np.array(correct, dtype=bool), source)
    _save_sources(cache, [result], stamp)
    if as_default and given:
        _save_sources(folder / VALIDATION_FILE, [result], model_stamp)
    return result


def _save_sources(path: Path, sources: Sequence[ValidationPredictions], stamp: str) -> None:
    with atomic_open(path, "wb") as handle:
        _savez(handle, sources, stamp)


def _savez(handle: IO[bytes], sources: Sequence[ValidationPredictions], stamp: str) -> None:
    np.savez(
        handle,
        scores=np.concatenate([v.scores for v in sources]),
        correct=np.concatenate([v.correct for v in sources]),
        sizes=np.array([len(v) for v in sources], dtype=np.int64),
        sources=np.array([v.source for v in sources]),
        manifest=np.array(stamp),
    )


def _load_sources(path: Path, stamp: str) -> list[ValidationPredictions] | None:
    """Read saved calibration sources (None when missing or made for another model / data)."""
    if not path.exists():
        return None
    try:
        with np.load(path, allow_pickle=False) as saved:
            if str(saved["manifest"]) != stamp:
                return None
            scores, correct = saved["scores"], saved["correct"].astype(bool)
            if "sizes" not in saved.files:  # one source, as saved before several were kept
                return [ValidationPredictions(scores, correct, str(saved["source"]))]
            result, start = [], 0
            sizes, sources = saved["sizes"].tolist(), saved["sources"].tolist()
            for size, source in zip(sizes, sources, strict=True):
                part = slice(start, start + int(size))
                result.append(ValidationPredictions(scores[part], correct[part], str(source)))
                start += int(size)
            return result
    except (OSError, ValueError, KeyError, EOFError, zipfile.BadZipFile) as error:
        # A cache is only a shortcut: a damaged one (e.g. a run killed while an older catmap
        # wrote it) is recomputed and rewritten, so the warning shows once.
        _log.warning(
            "catmap: warning: the calibration cache %s cannot be read (%s); computing it again",
            path,
            error or type(error).__name__,
        )
        return None


def default_calibration_feeds(project: str | Path | None = None) -> list[Path]:
    """The feeds onboarding calibrates on when given none.

    The project of ``catmap demo`` (or ``project`` None): the reference catalog and, when
    present, Oskelund's labelled feed. Any other project: its labelled feeds
    (``catmap init --labelled``), the part training held out.

    Raises:
        ModelError: a project of one's own without labelled feeds.
    """
    if project is not None and not is_demo_project(project):
        settings = load_settings(project)
        labelled = [Path(f) for f in settings.labelled] if settings is not None else []
        if not labelled:
            raise ModelError(
                "no labelled feed to choose the accept threshold from",
                path=project,
                hint="give --validation FEED (a labelled feed, best from a retailer the model "
                "was not trained on), or record labelled feeds with `catmap init DIR "
                "--labelled FEED`",
            )
        return labelled
    feeds = [_reference_feed()]
    outside = _default_calibration_feed()
    if outside != feeds[0]:
        feeds.append(outside)
    return feeds


def calibration_sources(
    mapper: FeedMapper,
    model_dir: str | Path,
    *,
    project: str | Path,
    feeds: Sequence[Path] | None = None,
    as_default: bool = False,
) -> list[ValidationPredictions]:
    """Return held-out predictions per calibration feed (each cached, see
    :func:`validation_predictions`).

    Without ``feeds``: the project's default sources (saved by ``as_default``), else
    :func:`default_calibration_feeds`, which become the default.

    Args:
        mapper: the mapper built on the model.
        model_dir: the model folder.
        project: the project folder.
        feeds: labelled feeds, one calibration source each.
        as_default: make these the sources onboarding uses when given none.
    """
    folder = Path(model_dir)
    model_stamp = file_fingerprint(folder / "manifest.json")
    if not feeds:
        saved = _load_sources(folder / VALIDATION_FILE, model_stamp)
        if saved is not None:
            return saved
        feeds, as_default = default_calibration_feeds(project), True
    sources = [
        validation_predictions(mapper, folder, project=project, labelled_feeds=[Path(feed)])
        for feed in feeds
    ]
    if as_default:
        _save_sources(folder / VALIDATION_FILE, sources, model_stamp)
    return sources


def accept_threshold(
    validation: ValidationPredictions | Sequence[ValidationPredictions],
    *,
    max_error: float = DEFAULT_MAX_ERROR,
    delta: float = DEFAULT_DELTA,
) -> ThresholdChoice:
    """Choose the accept threshold on held-out predictions (Learn-then-Test).

    With several calibration sources (e.g. the training retailers' valid split and a feed of
    a retailer the model never saw) the threshold must pass on each, so the strictest is
    kept: fixed-sequence testing rejected the null for every threshold above each source's
    own choice, so the bound holds for each source's population (each with probability
    1 - delta). No feed is exchangeable with a single other retailer's products; requiring
    all sources is the cautious reading. If one source passes no threshold, nothing is
    accepted.
    """
    sources = [validation] if isinstance(validation, ValidationPredictions) else list(validation)
    if not sources:
        raise ValueError("no calibration source")
    choices = [
        choose_threshold(v.scores, v.correct, max_error=max_error, delta=delta) for v in sources
    ]
    _index, choice = strictest_choice(choices)
    return choice


def strictest_choice(choices: Sequence[ThresholdChoice]) -> tuple[int, ThresholdChoice]:
    """Return the strictest choice and its index: one that accepts nothing wins outright."""
    for index, choice in enumerate(choices):
        if choice.threshold is None:
            return index, choice
    index = max(range(len(choices)), key=lambda i: choices[i].threshold or 0.0)
    return index, choices[index]
