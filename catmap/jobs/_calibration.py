"""The accept threshold of onboarding: held-out predictions per calibration source (cached
beside the model), the strictest Learn-then-Test threshold over them, and each feed's own
(:func:`check_feed_shift`: the bound is on the feed's own share of wrong auto-accepted
mappings, so its size counts, and a feed unlike the calibration data gets a stricter one).

The retailer is the unit of exchangeability: a new feed comes from a new retailer, whose
products resemble each other more than they resemble another retailer's. So each source is
split by retailer (the ``retailer`` column of a labelled feed) and the threshold must pass on
every retailer with enough products on its own: it holds on the worst held-out retailer, not
only on the pooled products, where an easy retailer can hide a hard one."""

from __future__ import annotations

import logging
import re
import zipfile
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

import numpy as np

from catmap._atomic import atomic_open
from catmap.classify.model import CategoryModel
from catmap.classify.storage import file_fingerprint, read_manifest, training_feed
from catmap.classify.training import labels_translation, read_labelled
from catmap.decide.threshold import (
    DEFAULT_DELTA,
    DEFAULT_MAX_ERROR,
    ThresholdChoice,
    choose_threshold,
)
from catmap.errors import InputError, ModelError
from catmap.jobs._feed_mapper import CHUNK_SIZE, FeedMapper, acceptance_score
from catmap.project import feed_stem, is_demo_project, load_settings
from catmap.records import Product
from catmap.tree.diff import LabelTranslation
from catmap.tree.taxonomy import CategoryTree

_log = logging.getLogger(__name__)

VALIDATION_FILE = "validation-confidences.npz"
# The demo's labelled feed from a retailer (Oskelund) that is not in the reference catalog.
OUTSIDE_RETAILER_FEED = "oskelund_labelled"
# A retailer with fewer calibration products than this is pooled with the source's other small
# ones. At 2% and delta 5%, the first threshold tested accepts about 150 products and fails on
# a single wrong one among them; with fewer than a few thousand products a retailer then
# vetoes every threshold by chance (on the demo, two reference retailers' ~800 valid products
# did), while the pooled ones still count.
MIN_RETAILER_PRODUCTS = 2000


@dataclass(frozen=True, slots=True)
class ValidationPredictions:
    """Held-out mappings of the model: acceptance score and whether the node was right.

    Attributes:
        scores: acceptance score per calibration product.
        correct: whether the mapped node was the labelled one.
        source: which data, in words (what the guarantee rests on).
        retailers: the retailer of each product (empty: one unknown retailer).
        familiarity: the share of each product's title words the model knows (empty: not
            measured); see :func:`title_familiarity`.
        labelled_familiarity: the share of its title words that labelled products used, the
            tree's own words not counted (empty: not measured); see
            :func:`labelled_vocabulary`.
    """

    scores: np.ndarray[Any, Any]
    correct: np.ndarray[Any, Any]
    source: str
    retailers: np.ndarray[Any, Any] = field(default_factory=lambda: np.zeros(0, dtype=str))
    familiarity: np.ndarray[Any, Any] = field(default_factory=lambda: np.zeros(0))
    labelled_familiarity: np.ndarray[Any, Any] = field(default_factory=lambda: np.zeros(0))

    def __len__(self) -> int:
        return int(self.scores.size)

    def by_retailer(self, minimum: int = MIN_RETAILER_PRODUCTS) -> list[ValidationPredictions]:
        """Split into one part per retailer of at least ``minimum`` products (the rest pooled).

        Args:
            minimum: the fewest products a retailer needs to be a part of its own.

        Returns:
            The parts, largest retailer first; the whole source when it names no retailers.
        """
        if len(self.retailers) != len(self) or len(self) == 0:
            return [self]
        names, counts = np.unique(self.retailers, return_counts=True)
        big = [str(n) for n, c in sorted(zip(names, counts, strict=True), key=lambda x: -x[1])
               if c >= minimum]
        if len(big) <= 1 and len(names) <= 1:
            return [self]
        parts = []
        for name in big:
            keep = self.retailers == name
            parts.append(self._part(keep, f"retailer {name} of {self.source}"))
        rest = ~np.isin(self.retailers, big)
        if rest.any():
            parts.append(self._part(rest, f"the smaller retailers of {self.source}"))
        return parts

    def _part(self, keep: np.ndarray[Any, Any], source: str) -> ValidationPredictions:
        def kept(values: np.ndarray[Any, Any]) -> np.ndarray[Any, Any]:
            return values[keep] if len(values) == len(self) else np.zeros(0)

        return ValidationPredictions(
            self.scores[keep],
            self.correct[keep],
            source,
            self.retailers[keep],
            kept(self.familiarity),
            kept(self.labelled_familiarity),
        )


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
    feeds: Sequence[Path],
    tree: CategoryTree,
    project: Path,
    label_column: str = "gold_node",
    *,
    translation: LabelTranslation | None = None,
    trained_on: frozenset[Path] | None = None,
) -> tuple[list[tuple[Product, str]], list[str]]:
    """Labelled rows to calibrate on, and a description of each feed's part.

    A feed with a ``split`` column gives its ``valid`` rows only (the others may have trained
    the model); a feed without one is taken to be outside the training data and gives every
    labelled row, unless it is one the model trained on (``trained_on``; default: the
    project's labelled feeds), which gives the rows training held out. Labels are read from
    ``label_column`` (the one the model was trained with), or from ``gold_node`` in a feed
    that lacks it.
    """
    rows: list[tuple[Product, str]] = []
    described: list[str] = []
    if trained_on is None:
        settings = load_settings(project)
        trained_on = frozenset(
            Path(f).resolve() for f in (settings.labelled if settings is not None else ())
        )
    for feed in feeds:
        trained = Path(feed).resolve() in trained_on
        # A feed the model trained on gives its held-out rows only: the others are not kept.
        keep = ("valid",) if trained else ("train", "valid", "test")
        try:
            data = read_labelled(
                [feed], tree=tree, project=project, label_column=label_column,
                translation=translation, keep=keep,
            )
        except InputError as error:
            if label_column == "gold_node" or error.field != label_column:
                raise
            data = read_labelled(
                [feed], tree=tree, project=project, translation=translation, keep=keep
            )
        everything = data.train + data.valid + data.test
        if trained:
            # One of the project's training feeds: only the part training held out.
            rows.extend(data.valid)
            described.append(
                f"{len(data.valid):,} products of {feed} held out from training (a feed the "
                "model trained on)"
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
    manifest = read_manifest(folder)
    label_column = str(manifest.get("label_column") or "gold_node")
    # Labels of an older tree are read as training read them (the same rows held out).
    translation = labels_translation(manifest.get("labels_tree"), mapper.tree)
    # A feed the model was trained on in full (a refit): the predictions training made of its
    # held-out rows before the refit (cross-fitted), kept in the model folder.
    held = {feed: held_out_predictions(folder, feed) for feed in feeds
            if refit_feed(manifest, feed) is not None}
    found = [source for source in held.values() if source is not None]
    rows, described = _calibration_rows(
        [feed for feed in feeds if feed not in held], mapper.tree, Path(project), label_column,
        translation=translation,
    )
    described += [source.source for source in found]
    described += [f"none of {feed}: the model was trained on all its rows, and the predictions "
                  "of its held-out rows are missing" for feed, source in held.items()
                  if source is None]
    if not rows and not found:
        raise ModelError(
            "no labelled products to choose the accept threshold from"
            + ("; the model was trained on every labelled product (refit)" if held else ""),
            path=feeds[0],
            hint="give a labelled feed (gold_node column) the model was not trained on"
            + (": `catmap onboard --validation FEED`, or train again" if held else ""),
        )
    source = "; ".join(described)
    result = _concatenate(
        [predict_rows(mapper, rows, source), *found] if rows else found, source
    )
    _save_sources(cache, [result], stamp)
    if as_default and given:
        _save_sources(folder / VALIDATION_FILE, [result], model_stamp)
    return result


def predict_rows(
    mapper: FeedMapper, rows: Sequence[tuple[Product, str]], source: str
) -> ValidationPredictions:
    """Map labelled rows as onboarding maps a feed; return their acceptance scores, whether
    each mapping was right, and the retailer and familiarity of each product."""
    scores: list[float] = []
    correct: list[bool] = []
    titles = [p.title for p, _ in rows]
    for start in range(0, len(rows), CHUNK_SIZE):
        chunk = rows[start : start + CHUNK_SIZE]
        for (_product, label), mapping in zip(
            chunk, mapper.map([p for p, _ in chunk]), strict=True
        ):
            scores.append(acceptance_score(mapping))
            correct.append(mapping.node_id == label)
    return ValidationPredictions(
        np.array(scores, dtype=float),
        np.array(correct, dtype=bool),
        source,
        np.array([product.extra.get("retailer", "") for product, _ in rows], dtype=str),
        title_familiarity(titles, model_vocabulary(mapper)),
        title_familiarity(titles, labelled_vocabulary(mapper)),
    )


def _concatenate(parts: Sequence[ValidationPredictions], source: str) -> ValidationPredictions:
    """One source of the parts' products, in order; a part that did not measure retailers or
    familiarity gets "" and 1.0 (fully familiar) for each of its products."""

    def joined(name: str, fill: str | float) -> np.ndarray[Any, Any]:
        return np.concatenate([
            getattr(v, name) if len(getattr(v, name)) == len(v) else np.full(len(v), fill)
            for v in parts
        ])  # fmt: skip

    return ValidationPredictions(
        np.concatenate([v.scores for v in parts]),
        np.concatenate([v.correct for v in parts]),
        source,
        joined("retailers", "").astype(str),
        joined("familiarity", 1.0),
        joined("labelled_familiarity", 1.0),
    )


# ---- cross-fitting: calibration of a model trained again on its held-out rows ------------------


def _held_out_file(folder: Path, feed: Path) -> Path:
    return folder / f"held-out-{feed_stem(feed)}.npz"


def refit_feed(manifest: dict[str, Any], feed: Path) -> Path | None:
    """The training feed a refit model trained on in full that ``feed`` is (the same file, or
    a copy of it: see :func:`~catmap.classify.storage.training_feed`); None when it is none."""
    refit = {Path(f) for f in manifest.get("refit_feeds") or ()}
    if not refit:
        return None
    if Path(feed).resolve() in refit:
        return Path(feed).resolve()
    trained = training_feed(manifest, feed)
    return trained if trained in refit else None


def held_out_predictions(model_dir: str | Path, feed: Path) -> ValidationPredictions | None:
    """The predictions training made of a feed's held-out rows before it trained on them too
    (see :func:`held_out_recorder`); None when the model was not refit on that feed, or they
    are missing or were made for another model or feed content."""
    folder = Path(model_dir)
    trained = refit_feed(read_manifest(folder), Path(feed))
    if trained is None:
        return None
    stamp = f"{file_fingerprint(folder / 'manifest.json')} {file_fingerprint(feed)}"
    saved = _load_sources(_held_out_file(folder, trained), stamp)
    return saved[0] if saved is not None and len(saved) == 1 else None


def held_out_recorder(
    feeds: Sequence[Path],
    *,
    tree: CategoryTree,
    project: Path,
    label_column: str = "gold_node",
    labels_from: dict[str, str] | None = None,
) -> Callable[[CategoryModel, dict[str, Any]], Callable[[Path], None]]:
    """What training calls before it trains again on the held-out rows (a refit): it maps each
    training feed's held-out rows with the model that has not seen them, as onboarding maps
    a feed, and returns the writer that keeps those predictions beside the saved model.

    Cross-fitting: the threshold is then chosen on predictions of products the predicting
    model never saw, and applied to a model trained on more data (common practice, no
    source; the bench of the unseen retailers measures what it gives).

    Args:
        feeds: the labelled feeds training reads.
        tree: the tree trained on.
        project: the project folder.
        label_column: the column of node ids.
        labels_from: the older tree of the labels, as training was given it.
    """

    def record(model: CategoryModel, manifest: dict[str, Any]) -> Callable[[Path], None]:
        mapper = FeedMapper(model, manifest, tree)
        translation = labels_translation(labels_from, tree)
        kept: list[tuple[Path, ValidationPredictions]] = []
        for feed in feeds:
            rows, described = _calibration_rows(
                [feed], tree, project, label_column, translation=translation,
                trained_on=frozenset({Path(feed).resolve()}),
            )
            if rows:
                source = (f"{described[0]}; predicted before the model trained on them too "
                          "(cross-fitted)")
                kept.append((Path(feed), predict_rows(mapper, rows, source)))

        def write(model_dir: Path) -> None:
            manifest_stamp = file_fingerprint(Path(model_dir) / "manifest.json")
            for feed, predictions in kept:
                _save_sources(
                    _held_out_file(Path(model_dir), feed), [predictions],
                    f"{manifest_stamp} {file_fingerprint(feed)}",
                )

        return write

    return record


def _save_sources(path: Path, sources: Sequence[ValidationPredictions], stamp: str) -> None:
    with atomic_open(path, "wb") as handle:
        _savez(handle, sources, stamp)


def _savez(handle: IO[bytes], sources: Sequence[ValidationPredictions], stamp: str) -> None:
    every = _concatenate(sources, "")
    np.savez(
        handle,
        scores=every.scores,
        correct=every.correct,
        sizes=np.array([len(v) for v in sources], dtype=np.int64),
        sources=np.array([v.source for v in sources]),
        retailers=every.retailers,
        familiarity=every.familiarity,
        labelled_familiarity=every.labelled_familiarity,
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
            if "labelled_familiarity" not in saved.files:  # saved by an older catmap
                return None
            scores, correct = saved["scores"], saved["correct"].astype(bool)
            retailers, familiar = saved["retailers"], saved["familiarity"]
            labelled = saved["labelled_familiarity"]
            result, start = [], 0
            sizes, sources = saved["sizes"].tolist(), saved["sources"].tolist()
            for size, source in zip(sizes, sources, strict=True):
                part = slice(start, start + int(size))
                result.append(
                    ValidationPredictions(
                        scores[part], correct[part], str(source), retailers[part],
                        familiar[part], labelled[part],
                    )  # fmt: skip
                )
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

    The project of ``catmap demo`` (or ``project`` None): the reference catalog, Oskelund's
    labelled feed when present, and the validation part of the retailers the model never saw
    (three retailers in styles no training retailer has; built on first use, see
    :mod:`catmap.demo.unseen`). Any other project: its labelled feeds (``catmap init
    --labelled``), the part training held out.

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
    from catmap.demo.unseen import ensure_unseen_world

    feeds = [_reference_feed()]
    outside = _default_calibration_feed()
    if outside != feeds[0]:
        feeds.append(outside)
    root = Path(__file__).resolve().parents[2] / "feeds_demo"
    feeds.append(ensure_unseen_world(root).labelled["validation"])
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
    feed_scores: np.ndarray[Any, Any] | None = None,
) -> ThresholdChoice:
    """Choose the accept threshold on held-out predictions (Learn-then-Test).

    With several calibration sources (e.g. the training retailers' valid split and a feed of
    a retailer the model never saw) the threshold must pass on each, so the strictest is
    kept: fixed-sequence testing rejected the null for every threshold above each source's
    own choice, so the bound holds for each source's population (each with probability
    1 - delta). No feed is exchangeable with a single other retailer's products; requiring
    all sources is the cautious reading. Each source is first split by retailer (see the
    module docstring), so the threshold holds on the worst held-out retailer. If one part
    passes no threshold, nothing is accepted. With ``feed_scores`` (a feed's acceptance
    scores) the threshold is that feed's: each part's bound is on the share of the feed's own
    auto-accepted mappings that are wrong, its sampling included (see
    :func:`catmap.decide.threshold.choose_threshold`).
    """
    given = [validation] if isinstance(validation, ValidationPredictions) else list(validation)
    if not given:
        raise ValueError("no calibration source")
    choices = [
        choose_threshold(
            v.scores, v.correct, max_error=max_error, delta=delta, feed_scores=feed_scores
        )
        for v in retailer_parts(given)
    ]
    _index, choice = strictest_choice(choices)
    return choice


def retailer_parts(sources: Sequence[ValidationPredictions]) -> list[ValidationPredictions]:
    """Every source split by retailer (see :meth:`ValidationPredictions.by_retailer`)."""
    return [part for source in sources for part in source.by_retailer()]


def strictest_choice(choices: Sequence[ThresholdChoice]) -> tuple[int, ThresholdChoice]:
    """Return the strictest choice and its index: one that accepts nothing wins outright."""
    for index, choice in enumerate(choices):
        if choice.threshold is None:
            return index, choice
    index = max(range(len(choices)), key=lambda i: choices[i].threshold or 0.0)
    return index, choices[index]


# ---- the per-feed shift check ----------------------------------------------------------------

# A title word: three letters or more (sizes, codes and short function words say little about
# the language or the product).
_WORD = re.compile(r"[^\W\d_]{3,}")
# A product knowing fewer than this share of its title words is "unfamiliar".
UNFAMILIAR_BELOW = 0.5
# A feed whose unfamiliar share exceeds every calibration retailer's by this much, or whose mean
# acceptance score falls this far below every calibration retailer's, looks unlike the data
# the threshold was chosen on.
SHIFT_MARGIN = 0.05
# At least this share of unfamiliar products: the feed is mostly in a language the tree and
# the training data do not cover.
UNCOVERED_LANGUAGE_SHARE = 0.5
# Confidence (for acceptance) of an unfamiliar product of a feed in an uncovered language:
# below the feed's threshold, so that none is auto-accepted.
UNCOVERED_LANGUAGE_CAP = 0.5
# The lowest threshold of a feed in an uncovered language: above the cap, so that a capped
# product never reaches it, even when the calibration data would accept every score (a
# small tree, clean labels: threshold 0.0).
UNCOVERED_LANGUAGE_FLOOR = 0.501


def model_vocabulary(mapper: FeedMapper) -> frozenset[str]:
    """The words the model knows: its title vocabulary and every word of the tree's terms."""
    cached: frozenset[str] | None = mapper.__dict__.get("_vocabulary")
    if cached is not None:
        return cached
    words: set[str] = set()
    vectorizer = mapper.model.featurizer_.vectorizers_.get("title_words")
    if vectorizer is not None:
        words.update(term for term in vectorizer.vocabulary_ if " " not in term)
    for node in mapper.tree:
        for term in mapper.tree.all_terms(node.id):
            words.update(_WORD.findall(term.lower()))
    vocabulary = frozenset(words)
    mapper.__dict__["_vocabulary"] = vocabulary
    return vocabulary


def labelled_vocabulary(mapper: FeedMapper) -> frozenset[str]:
    """The title words labelled products used: the model's title vocabulary less the words only
    the tree's own examples brought in (``CategoryModel.product_words_``).

    The feed check compares a feed with the calibration data, which are labelled products: a
    word known only from the tree's terms (a language the tree covers but no labelled product
    is written in) maps, but the guarantee has not been measured on it. A model saved before
    this was kept gives :func:`model_vocabulary`.
    """
    cached: frozenset[str] | None = mapper.__dict__.get("_labelled_vocabulary")
    if cached is not None:
        return cached
    used = getattr(mapper.model, "product_words_", None)
    vectorizer = mapper.model.featurizer_.vectorizers_.get("title_words")
    if used is None or vectorizer is None or len(used) != len(vectorizer.vocabulary_):
        vocabulary = model_vocabulary(mapper)
    else:
        vocabulary = frozenset(
            term for term, column in vectorizer.vocabulary_.items()
            if used[column] and " " not in term
        )  # fmt: skip
    mapper.__dict__["_labelled_vocabulary"] = vocabulary
    return vocabulary


def feed_familiarity(
    mapper: FeedMapper, titles: Sequence[str]
) -> tuple[np.ndarray[Any, Any], np.ndarray[Any, Any]]:
    """Each title's familiarity to the model (its words and the tree's) and to the labelled
    products (see :func:`labelled_vocabulary`)."""
    known, labelled = model_vocabulary(mapper), labelled_vocabulary(mapper)
    to_model, to_labelled = np.ones(len(titles)), np.ones(len(titles))
    for i, title in enumerate(titles):  # each title's words found once, counted twice
        words = _WORD.findall(title.lower())
        if words:
            to_model[i] = sum(word in known for word in words) / len(words)
            to_labelled[i] = sum(word in labelled for word in words) / len(words)
    return to_model, to_labelled


def title_familiarity(titles: Sequence[str], vocabulary: frozenset[str]) -> np.ndarray[Any, Any]:
    """Return the share of each title's words (three letters or more) found in ``vocabulary``.

    A title without such words counts as familiar (1.0): nothing in it is foreign.
    """
    result = np.ones(len(titles))
    for i, title in enumerate(titles):
        words = _WORD.findall(title.lower())
        if words:
            result[i] = sum(word in vocabulary for word in words) / len(words)
    return result


@dataclass(frozen=True, slots=True)
class FeedShift:
    """How a feed compares with the calibration data, and the threshold it gets.

    Attributes:
        products: products the check looked at.
        unfamiliar_share: share of them of which fewer than half the title words were used by
            labelled products (the tree's own words not counted: :func:`labelled_vocabulary`).
        calibration_unfamiliar: the highest such share among the calibration retailers.
        mean_score: the feed's mean acceptance score.
        calibration_mean_score: the lowest mean among the calibration retailers.
        mode: ``as calibrated``, ``tightened`` or ``audit first``.
        threshold: the accept threshold for this feed (None: accept nothing).
        uncovered_language: the feed is mostly in words neither the tree nor the training
            data know (a language the tree does not cover).
        notes: what the check found, in words (the run summary shows them).
        calibrated_threshold: the calibration data's threshold without the feed (the
            population's error rate; None: it accepts nothing).
        feed_accepted: the products looked at that :attr:`threshold` accepts.
        feed_target: the error rate the calibration data was held to at the feed's own
            threshold (before any tightening) so that the feed's share of wrong accepted
            mappings stays within target (:func:`catmap.decide.threshold.feed_error_target`;
            None: no threshold).
        unknown_share: share of the products looked at that know fewer than half their title
            words from the model and the tree together (mostly so: an uncovered language).
    """

    products: int
    unfamiliar_share: float
    calibration_unfamiliar: float
    mean_score: float
    calibration_mean_score: float
    mode: str
    threshold: float | None
    uncovered_language: bool
    notes: tuple[str, ...]
    calibrated_threshold: float | None = None
    feed_accepted: int = 0
    feed_target: float | None = None
    unknown_share: float = 0.0

    def acceptance_scores(
        self, scores: np.ndarray[Any, Any], familiarity: np.ndarray[Any, Any]
    ) -> np.ndarray[Any, Any]:
        """The scores compared with :attr:`threshold`: unfamiliar products of a feed in an
        uncovered language are capped at :data:`UNCOVERED_LANGUAGE_CAP`."""
        return _capped(scores, familiarity, uncovered=self.uncovered_language)

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return {
            "products": self.products,
            "unfamiliar_share": round(self.unfamiliar_share, 4),
            "calibration_unfamiliar": round(self.calibration_unfamiliar, 4),
            "unknown_share": round(self.unknown_share, 4),
            "mean_score": round(self.mean_score, 4),
            "calibration_mean_score": round(self.calibration_mean_score, 4),
            "mode": self.mode,
            "threshold": self.threshold,
            "uncovered_language": self.uncovered_language,
            "notes": list(self.notes),
            "calibrated_threshold": self.calibrated_threshold,
            "feed_accepted": self.feed_accepted,
            "feed_target": None if self.feed_target is None else round(self.feed_target, 5),
        }


def _capped(
    scores: np.ndarray[Any, Any], familiarity: np.ndarray[Any, Any], *, uncovered: bool
) -> np.ndarray[Any, Any]:
    """Cap unfamiliar products' scores at :data:`UNCOVERED_LANGUAGE_CAP` in an uncovered
    language (the scores unchanged otherwise)."""
    if not uncovered:
        return scores
    return np.where(
        familiarity < UNFAMILIAR_BELOW, np.minimum(scores, UNCOVERED_LANGUAGE_CAP), scores
    )


def check_feed_shift(
    scores: np.ndarray[Any, Any],
    familiarity: np.ndarray[Any, Any],
    sources: Sequence[ValidationPredictions],
    *,
    labelled_familiarity: np.ndarray[Any, Any] | None = None,
    max_error: float = DEFAULT_MAX_ERROR,
    delta: float = DEFAULT_DELTA,
) -> FeedShift:
    """Compare a feed's mapped products with the calibration retailers; choose its threshold.

    The threshold is the feed's own (:func:`accept_threshold` with the feed's scores): the
    strictest over the calibration retailers of the lowest one at which, with probability
    ``1 - delta`` over the calibration data, at most a share ``delta`` of feeds of this size
    like that retailer's have more than ``max_error`` of their auto-accepted mappings wrong.
    The products looked at stand for the feed (onboarding passes its first chunk, a whole feed
    of usual size; a longer feed's share varies less, so this errs on the safe side).

    A feed unlike all calibration retailers (more unfamiliar titles, or lower confidence, than
    any by :data:`SHIFT_MARGIN`; a title is unfamiliar when fewer than half its words were used
    by labelled products, the words the tree's terms alone teach not counted, since the
    guarantee was measured on labelled products only) gets at least the threshold chosen for
    half the error rate, a margin for a retailer the calibration data does not stand for
    (common practice, no source); a feed mostly in an uncovered language (most titles with
    fewer than half their words known to the model or the tree) is treated so too, and its
    unfamiliar products' scores are capped at :data:`UNCOVERED_LANGUAGE_CAP` under a threshold of at
    least :data:`UNCOVERED_LANGUAGE_FLOOR`. When no threshold is left, the feed is audited
    first (mode ``audit first``: nothing auto-accepted, everything reviewed).

    Args:
        scores: the feed's acceptance scores (:func:`acceptance_score`).
        familiarity: its products' title familiarity (:func:`title_familiarity` with
            :func:`model_vocabulary`): what an uncovered language is read from.
        sources: the calibration sources the threshold is chosen on.
        labelled_familiarity: the same with :func:`labelled_vocabulary`, what the feed is
            compared with the calibration retailers on (None: ``familiarity`` is used).
        max_error: the error rate allowed among auto-accepted mappings.
        delta: 1 − the confidence of that guarantee.

    Returns:
        The check's facts and the feed's threshold.
    """
    parts = retailer_parts(sources)
    calibrated = accept_threshold(parts, max_error=max_error, delta=delta)
    unknown = float(np.mean(familiarity < UNFAMILIAR_BELOW)) if len(familiarity) else 0.0
    labelled = (
        labelled_familiarity is not None
        and len(labelled_familiarity) == len(familiarity)
        and all(len(p.labelled_familiarity) == len(p) for p in parts)
    )
    feed_words = labelled_familiarity if labelled and labelled_familiarity is not None else (
        familiarity
    )
    unfamiliar = float(np.mean(feed_words < UNFAMILIAR_BELOW)) if len(feed_words) else 0.0
    mean_score = float(np.mean(scores)) if len(scores) else 0.0
    calibration_unfamiliar = max(
        (
            float(np.mean((p.labelled_familiarity if labelled else p.familiarity)
                          < UNFAMILIAR_BELOW))
            for p in parts
            if len(p) and len(p.labelled_familiarity if labelled else p.familiarity) == len(p)
        ),
        default=1.0,
    )
    calibration_mean = min((float(np.mean(p.scores)) for p in parts if len(p)), default=0.0)
    notes: list[str] = []
    uncovered = unknown >= UNCOVERED_LANGUAGE_SHARE
    shifted = False
    if unfamiliar > calibration_unfamiliar + SHIFT_MARGIN:
        shifted = True
        notes.append(
            f"{unfamiliar:.0%} of the titles use mostly words "
            f"{'no labelled product used' if labelled else 'the model does not know'} "
            f"(at most {calibration_unfamiliar:.0%} for any calibration retailer)"
        )
    if mean_score < calibration_mean - SHIFT_MARGIN:
        shifted = True
        notes.append(
            f"mean confidence {mean_score:.2f}, below every calibration retailer's "
            f"(lowest {calibration_mean:.2f})"
        )
    if uncovered:
        shifted = True
        notes.append(
            "most titles are in a language neither the tree nor the training data cover: the "
            f"confidence of those products is capped at {UNCOVERED_LANGUAGE_CAP} (never "
            "auto-accepted)"
        )
    acceptance = _capped(np.asarray(scores, dtype=float), familiarity, uncovered=uncovered)
    own = accept_threshold(parts, max_error=max_error, delta=delta, feed_scores=acceptance)
    notes.append(_sampling_note(own, calibrated, max_error, delta))
    threshold = own.threshold
    mode = "as calibrated" if threshold is not None or calibrated.threshold is None else (
        "audit first"
    )
    if shifted:
        tightened = accept_threshold(parts, max_error=max_error / 2, delta=delta).threshold
        if threshold is not None and tightened is not None and tightened > threshold:
            threshold = tightened
        elif tightened is None:
            threshold = None
        mode = "tightened" if threshold is not None else "audit first"
        what = "nothing is auto-accepted" if threshold is None else f"{threshold:.3f}"
        notes.append(
            "the feed looks unlike the calibration data: the threshold is at least the one "
            f"for {max_error / 2:.1%} error ({what})"
        )
    if uncovered and threshold is not None and threshold < UNCOVERED_LANGUAGE_FLOOR:
        threshold = UNCOVERED_LANGUAGE_FLOOR
        notes.append(
            f"the threshold is raised to {UNCOVERED_LANGUAGE_FLOOR:.3f}, above the cap, so that "
            "no capped product is auto-accepted"
        )
    accepted = int(np.sum(acceptance >= threshold)) if threshold is not None else 0
    return FeedShift(
        products=len(scores),
        unfamiliar_share=unfamiliar,
        calibration_unfamiliar=calibration_unfamiliar,
        mean_score=mean_score,
        calibration_mean_score=calibration_mean,
        mode=mode,
        threshold=threshold,
        uncovered_language=uncovered,
        notes=tuple(notes),
        calibrated_threshold=calibrated.threshold,
        feed_accepted=accepted,
        feed_target=own.target,
        unknown_share=unknown,
    )


def _sampling_note(
    own: ThresholdChoice, calibrated: ThresholdChoice, max_error: float, delta: float
) -> str:
    """What the feed's own sampling did to its threshold, in words."""
    alone = (
        "accepts nothing" if calibrated.threshold is None else f"{calibrated.threshold:.3f}"
    )
    if own.threshold is None or own.target is None:
        note = (
            f"no threshold keeps the share of wrong mappings among this feed's auto-accepted "
            f"ones at or below {max_error:.1%} with {1 - delta:.0%} confidence (the calibration "
            f"data alone: {alone}; the fewer products a feed has, the fewer errors "
            f"{max_error:.1%} of them allows)"
        )
        if calibrated.threshold is not None and calibrated.errors == 0:
            # Not one calibration product above the threshold was wrong: what is missing is
            # evidence, not accuracy, and only more labelled products give it.
            note += (
                f"; none of the {calibrated.n_accepted:,} calibration products it accepts is "
                "wrong, but they are too few to show a feed's lower target: label more "
                "products (training holds a share of them out to calibrate on) or give a "
                "labelled feed like this one with --validation FILE"
            )
        return note
    return (
        f"{own.feed_accepted:,} of the {own.feed_products or 0:,} products looked at reach "
        f"{own.threshold:.3f}; for at most {delta:.0%} of feeds like this one to have more "
        f"than {max_error:.1%} of those wrong, the calibration error above it must be at most "
        f"{own.target:.2%} (with {1 - delta:.0%} confidence; the calibration data alone: "
        f"{alone})"
    )
