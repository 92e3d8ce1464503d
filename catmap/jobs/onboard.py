"""Onboard a feed end to end: read → normalise → map → attributes → decide → store.

:func:`onboard_feed` streams a feed through the saved (or suggested) profile, maps products in
chunks with the trained model (rules first, then the model with retailer-path consensus and
hierarchical back-off), extracts attributes, and saves every product into the project store:

- a mapping whose confidence reaches the accept threshold is *accepted*; the rest are
  *queued* (``low_confidence``); a brand or audience conflict queues a product too;
- after the feed is read, :func:`catmap.decide.queue.plan_queue` draws the seeded audit slice of the
  accepted part (``audit_sample``) and gives strong retailer-category groups their group gain;
- an open ``low_confidence`` item left by an earlier run (e.g. before retraining) whose product
  this run accepts is withdrawn (:meth:`catmap.store.Store.withdraw_items`, audited), so the
  queue holds only what is still uncertain.

The accept threshold comes from :func:`catmap.decide.threshold.choose_threshold` on held-out
labelled data, mapped exactly as a feed is mapped (same blend, consensus and back-off), saved
once beside the model and reused. Learn-then-Test bounds the error on data exchangeable with that
calibration data. New feeds come from new retailers, so labelled products of a retailer the
model never trained on are a calibration source (``OnboardOptions.validation_feed``; every
labelled row of a feed without a ``split`` column calibrates); the model's own validation split
of the reference catalog is another (the retailers it trained on). No single retailer stands
for all new ones (on the demo, Oskelund's feed turned out easier than the reference's valid
split), so with several sources the threshold must pass on each: the strictest is kept. By
default the demo's two are used (reference valid split + Oskelund). Either way the seeded audit
sample measures each feed's real error.

Running onboard again on the same feed updates in place: the store upserts by product id, review
items are unique per product and reason, and a person's decision is never overwritten. A run
killed mid-way leaves the committed batches; the next run completes the feed.
"""

from __future__ import annotations

import time
from collections import Counter
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from catmap._iterate import chunked
from catmap.attributes import AttributeExtractor, BrandDictionary
from catmap.attributes._text import fold
from catmap.attributes.brand import dictionary_in_use, normalize_brand
from catmap.classify.backoff import NodeIndex, backoff_rows
from catmap.classify.features import product_texts
from catmap.classify.model import CategoryModel
from catmap.classify.rules import RuleSet, load_rules
from catmap.classify.storage import file_fingerprint, load_model
from catmap.classify.training import consensus_blend, read_labelled
from catmap.decide.queue import Candidate, expected_gain, plan_queue
from catmap.decide.threshold import (
    DEFAULT_DELTA,
    DEFAULT_MAX_ERROR,
    ThresholdChoice,
    choose_threshold,
)
from catmap.errors import InputError, ModelError
from catmap.feeds.ingest import FATAL_FEED_ERRORS
from catmap.feeds.profiled import open_profiled_feed
from catmap.feeds.writers import open_reject_writer
from catmap.project import feed_stem, subfolder
from catmap.records import Alternative, Attributes, Mapping, Product, Reject
from catmap.store import MappedRow, Store, store_path
from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "CHUNK_SIZE",
    "DEFAULT_BACKOFF_THRESHOLD",
    "FeedMapper",
    "OnboardOptions",
    "OnboardSummary",
    "ValidationPredictions",
    "GoldCheck",
    "accept_threshold",
    "calibration_sources",
    "default_calibration_feeds",
    "check_against_gold",
    "default_model_dir",
    "default_rules_path",
    "onboard_feed",
    "project_review_examples",
    "rejects_path",
    "review_examples",
    "validation_predictions",
]

# Products mapped together: retailer-path consensus is computed inside one chunk, so a chunk
# should hold a whole feed of usual size (the demo feeds have a few thousand products).
CHUNK_SIZE = 20_000
DEFAULT_BACKOFF_THRESHOLD = 0.5
ALTERNATIVES = 3
VALIDATION_FILE = "validation-confidences.npz"
# The demo's labelled feed from a retailer (Oskelund) that is not in the reference catalog.
OUTSIDE_RETAILER_FEED = "oskelund_labelled"
DEFAULT_AUDIT_SHARE = 0.02
# An extracted brand below this confidence that disagrees with the feed's brand field is worth a
# look (common practice, no source).
BRAND_CONFLICT_CONFIDENCE = 0.75


def default_model_dir(project: str | Path) -> Path:
    """Return where ``catmap train`` saves the model: ``<project>/models/current``."""
    return Path(project) / "models" / "current"


def default_rules_path(project: str | Path, feed_path: str | Path) -> Path:
    """Return a feed's default rules file: ``<project>/rules/<feed stem>.rules``."""
    return Path(project) / "rules" / f"{feed_stem(feed_path)}.rules"


def rejects_path(project: str | Path, feed_name: str) -> Path:
    """Return where onboarding writes a feed's rejects: ``<project>/rejects/<feed>.jsonl``."""
    return Path(project) / "rejects" / f"{feed_name}.jsonl"


# --------------------------------------------------------------------------------------------
# Mapping a chunk of products
# --------------------------------------------------------------------------------------------


class FeedMapper:
    """Map products to nodes: rules first, then the model with consensus and back-off.

    Args:
        model: a trained model.
        manifest: its manifest (the consensus weight is read from it).
        tree: the category tree.
        rules: per-feed rules applied before the model (None: no rules).
        backoff_threshold: a best leaf below this climbs to the deepest node reaching it.
    """

    def __init__(
        self,
        model: CategoryModel,
        manifest: dict[str, Any],
        tree: CategoryTree,
        *,
        rules: RuleSet | None = None,
        backoff_threshold: float = DEFAULT_BACKOFF_THRESHOLD,
    ) -> None:
        self.model = model
        self.tree = tree
        self.rules = rules
        self.backoff_threshold = backoff_threshold
        self.consensus_weight = float(manifest.get("consensus_weight", 0.0))
        self.classes: list[str] = [str(c) for c in model.classes_.tolist()]
        self.index = NodeIndex(tree, self.classes)

    def map(self, products: Sequence[Product]) -> list[Mapping]:
        """Return one mapping per product, in order."""
        if not products:
            return []
        texts = product_texts(products)
        probabilities = self.model.predict_proba(texts)
        probabilities = consensus_blend(probabilities, texts.path, self.consensus_weight)
        best_class, chosen, chosen_p, backed = backoff_rows(
            probabilities, self.index, self.backoff_threshold
        )
        width = min(ALTERNATIVES + 1, probabilities.shape[1])
        top = np.argsort(-probabilities, axis=1)[:, :width]
        result: list[Mapping] = []
        for row, product in enumerate(products):
            matched = self.rules.match(product) if self.rules is not None else None
            if matched is not None:
                result.append(Mapping(matched.rule.node_id, 1.0, "rule", (), matched.reason))
                continue
            leaf = self.classes[int(best_class[row])]
            alternatives = tuple(
                Alternative(self.classes[int(c)], float(probabilities[row, c]))
                for c in top[row]
                if int(c) != int(best_class[row])
            )[:ALTERNATIVES]
            if backed[row]:
                node_id = self.index.nodes[int(chosen[row])]
                result.append(
                    Mapping(
                        node_id,
                        float(min(1.0, chosen_p[row])),
                        "backoff",
                        (Alternative(leaf, float(probabilities[row, best_class[row]])),)
                        + alternatives[: ALTERNATIVES - 1],
                        f"backed off from {leaf}",
                    )
                )
            else:
                result.append(
                    Mapping(leaf, float(min(1.0, chosen_p[row])), "model", alternatives)
                )
        return result


def acceptance_score(mapping: Mapping) -> float:
    """Return the score compared with the accept threshold.

    A rule is the team's own decision (always accepted); a backed-off mapping names an inner
    node, which is not a finished mapping, so it is never auto-accepted (score 0).
    """
    if mapping.method == "rule":
        return 1.0
    if mapping.method == "backoff":
        return 0.0
    return mapping.confidence


# --------------------------------------------------------------------------------------------
# The accept threshold from the validation split
# --------------------------------------------------------------------------------------------


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
    for feed in feeds:
        data = read_labelled([feed], tree=tree, project=project)
        everything = data.train + data.valid + data.test
        if any(product.extra.get("split") for product, _label in everything):
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
    np.savez(
        path,
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
    with np.load(path, allow_pickle=False) as saved:
        if str(saved["manifest"]) != stamp:
            return None
        scores, correct = saved["scores"], saved["correct"].astype(bool)
        if "sizes" not in saved.files:  # one source, as saved before several were kept
            return [ValidationPredictions(scores, correct, str(saved["source"]))]
        result, start = [], 0
        for size, source in zip(saved["sizes"].tolist(), saved["sources"].tolist(), strict=True):
            part = slice(start, start + int(size))
            result.append(ValidationPredictions(scores[part], correct[part], str(source)))
            start += int(size)
        return result


def default_calibration_feeds() -> list[Path]:
    """The demo's calibration feeds: the reference catalog and, when present, Oskelund's."""
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
        feeds, as_default = default_calibration_feeds(), True
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
    _index, choice = _strictest(choices)
    return choice


def _strictest(choices: Sequence[ThresholdChoice]) -> tuple[int, ThresholdChoice]:
    for index, choice in enumerate(choices):
        if choice.threshold is None:
            return index, choice
    index = max(range(len(choices)), key=lambda i: choices[i].threshold or 0.0)
    return index, choices[index]


# --------------------------------------------------------------------------------------------
# Onboarding
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class OnboardOptions:
    """How to onboard a feed.

    Attributes:
        max_error: error rate allowed among auto-accepted mappings.
        delta: 1 − the confidence of that guarantee.
        audit_share: share of auto-accepted products queued as audit samples.
        rules: rules file (None: ``<project>/rules/<feed stem>.rules`` when it exists).
        backoff_threshold: see :class:`FeedMapper`.
        chunk_size: products mapped together.
        random_state: seed of the audit sample.
        validation_feed: labelled feed(s) that choose the accept threshold, one calibration
            source each (the strictest wins); best from retailers the model was not trained
            on (all rows calibrate; a feed with a ``split`` column gives its ``valid`` rows).
            None: the project's default sources (see :func:`calibration_sources`). Computed
            once per model, then cached.
    """

    max_error: float = DEFAULT_MAX_ERROR
    delta: float = DEFAULT_DELTA
    audit_share: float = DEFAULT_AUDIT_SHARE
    rules: Path | None = None
    backoff_threshold: float = DEFAULT_BACKOFF_THRESHOLD
    chunk_size: int = CHUNK_SIZE
    random_state: int = 0
    validation_feed: Path | Sequence[Path] | None = None


@dataclass
class OnboardSummary:
    """What one onboarding run did to one feed (the facts ``catmap onboard`` prints)."""

    feed: str
    path: str
    run_id: int
    accounting: dict[str, Any]
    mapped: int = 0
    accepted: int = 0
    queued: int = 0
    queued_by_reason: dict[str, int] = field(default_factory=dict)
    audit: int = 0
    withdrawn: int = 0
    by_method: dict[str, int] = field(default_factory=dict)
    by_department: dict[str, dict[str, Any]] = field(default_factory=dict)
    threshold: float | None = None
    coverage_validation: float = 0.0
    validation_products: int = 0
    validation_source: str = ""
    statement: str = ""
    max_error: float = DEFAULT_MAX_ERROR
    delta: float = DEFAULT_DELTA
    restricted: dict[str, int] = field(default_factory=dict)
    rules_file: str | None = None
    rule_conflicts: int = 0
    rejects_file: str = ""
    store: str = ""
    seconds: float = 0.0
    stopped_early: str | None = None

    @property
    def coverage(self) -> float:
        """Share of mapped products auto-accepted (audit samples count as accepted)."""
        return (self.accepted + self.audit) / self.mapped if self.mapped else 0.0

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        facts = dict(self.__dict__)
        facts["coverage"] = round(self.coverage, 4)
        return facts


def _brand_conflict(product: Product, attributes: Attributes, brands: BrandDictionary) -> bool:
    """The feed names a brand the dictionary does not know, and the title names another one."""
    if not product.brand or not attributes.brand_evidence.startswith("field not in dictionary"):
        return False
    mentions = brands.find_in_text(fold(product.title))
    field_key = normalize_brand(product.brand)
    return any(normalize_brand(name) != field_key for _s, _e, _k, name in mentions)


def load_extractor(project: str | Path, tree: CategoryTree) -> AttributeExtractor:
    """Return the attribute extractor with the project's (or the demo) brand dictionary."""
    path = dictionary_in_use(project)
    brands = BrandDictionary.from_csv(path) if path is not None else BrandDictionary([])
    return AttributeExtractor(brands=brands, tree=tree)


def review_examples(
    store: Store, feed: str | None = None, *, tree: CategoryTree | None = None
) -> list[tuple[Product, str]]:
    """Return reviewed products with the node a person chose, as extra training examples.

    Args:
        store: the project store.
        feed: only this feed's decisions (default: every feed).
        tree: when given, decisions naming a node this tree lacks are left out.
    """
    return [
        (example.product, example.node_id)
        for example in store.training_examples(feed)
        if tree is None or example.node_id in tree
    ]


def project_review_examples(
    project: str | Path, tree: CategoryTree
) -> list[tuple[Product, str]]:
    """Return the reviewed products of a project's store (none when it has no store yet)."""
    path = store_path(project)
    if not path.exists():
        return []
    with Store.open(path) as store:
        return review_examples(store, tree=tree)


def onboard_feed(
    feed_path: str | Path,
    *,
    project: str | Path,
    tree: CategoryTree,
    model_dir: str | Path | None = None,
    options: OnboardOptions | None = None,
    validation: ValidationPredictions | Sequence[ValidationPredictions] | None = None,
    extractor: AttributeExtractor | None = None,
    on_progress: Callable[[str, int], None] | None = None,
) -> OnboardSummary:
    """Onboard one feed into the project store.

    Args:
        feed_path: the feed file.
        project: the project folder (profile, rules, model, store, rejects live there).
        tree: the category tree of the model.
        model_dir: the model folder (default: ``<project>/models/current``).
        options: thresholds, audit share, rules file.
        validation: precomputed held-out predictions, one or several sources (default:
            :func:`calibration_sources` for ``options.validation_feed``).
        extractor: attribute extractor (default: with the project's brand dictionary).
        on_progress: called with a stage name and the records read so far.

    Returns:
        The run's summary.

    Raises:
        ModelNotTrained: no model in the model folder.
        InputError: the feed, its profile or the rules file cannot be used; a fatal feed error
            is raised after the records before it were saved (the run is recorded as stopped).
    """
    started = time.perf_counter()
    options = options or OnboardOptions()
    project = Path(project)
    feed_path = Path(feed_path)
    folder = Path(model_dir) if model_dir else default_model_dir(project)
    model, manifest = load_model(folder, tree)
    rules_file = options.rules
    if rules_file is None and default_rules_path(project, feed_path).exists():
        rules_file = default_rules_path(project, feed_path)
    rules = load_rules(rules_file, tree=tree) if rules_file is not None else None
    mapper = FeedMapper(
        model, manifest, tree, rules=rules, backoff_threshold=options.backoff_threshold
    )
    progress = on_progress or (lambda _stage, _count: None)
    if validation is None:
        progress("choosing the accept threshold", 0)
        given = options.validation_feed
        labelled = [given] if isinstance(given, (str, Path)) else list(given or ())
        validation = calibration_sources(
            mapper, folder, project=project, feeds=[Path(f) for f in labelled] or None
        )
    sources = [validation] if isinstance(validation, ValidationPredictions) else list(validation)
    choices = [
        accept_threshold(v, max_error=options.max_error, delta=options.delta) for v in sources
    ]
    strictest, choice = _strictest(choices)
    threshold = choice.threshold
    statement = choice.statement
    if len(sources) > 1:
        statement += (
            f" The threshold is the strictest of {len(sources)} calibration sources; this "
            f"one decided: {sources[strictest].source}."
        )
    extractor = extractor or load_extractor(project, tree)

    source = open_profiled_feed(feed_path, project)

    name = feed_stem(feed_path)
    store = Store.for_project(project)
    try:
        store.add_feed(name, source_path=feed_path, profile_path=source.profile_path)
        run_id = store.start_run(
            "onboard",
            feed=name,
            params={
                "max_error": options.max_error,
                "delta": options.delta,
                "audit_share": options.audit_share,
                "threshold": threshold,
                "rules": str(rules_file) if rules_file else None,
                "model": str(folder),
            },
        )
        summary = OnboardSummary(
            feed=name,
            path=str(feed_path),
            run_id=run_id,
            accounting={},
            threshold=threshold,
            coverage_validation=choice.coverage,
            validation_products=choice.n_calibration,
            validation_source="; ".join(v.source for v in sources),
            statement=statement,
            max_error=options.max_error,
            delta=options.delta,
            rules_file=str(rules_file) if rules_file else None,
            store=str(store_path(project)),
        )
        accounting = source.accounting
        reject_file = rejects_path(project, name)
        subfolder(project, "rejects")
        summary.rejects_file = str(reject_file)
        candidates: list[Candidate] = []
        model_version = str(manifest.get("training_data_fingerprint", ""))[:12]

        fatal_errors: list[InputError] = []

        def products() -> Iterator[Product]:
            with open_reject_writer(reject_file, "jsonl") as rejects:
                try:
                    for item in source.products():
                        if isinstance(item, Reject):
                            rejects.write(item)
                        else:
                            yield item
                        if accounting.read % 1000 == 0:
                            progress("reading", accounting.read)
                except FATAL_FEED_ERRORS as fatal:
                    # The records before the error are kept and saved; the run says it stopped.
                    fatal_errors.append(fatal)
                    accounting.stopped_early = str(fatal)

        def rows() -> Iterator[MappedRow]:
            for chunk in chunked(products(), options.chunk_size):
                progress("mapping", accounting.read)
                for product, mapping in zip(chunk, mapper.map(chunk), strict=True):
                    row = _first_row(product, mapping, threshold, extractor, tree)
                    candidates.append(
                        Candidate(
                            product.product_id,
                            row.group_key,
                            mapping.node_id,
                            mapping.confidence,
                            row.status == "accepted",
                            brand_conflict="brand_conflict" in row.reasons,
                            brand_confidence=row.attributes.brand_confidence,
                            audience_conflict=row.attributes.audience_conflict,
                        )
                    )
                    _count(summary, product, row, tree)
                    yield row

        store.save_mapped(
            name,
            run_id,
            rows(),
            model_version=model_version,
            tree_version=str(tree.version),
            on_batch=lambda total: progress("saving", total),
        )
        error = fatal_errors[0] if fatal_errors else None

        progress("planning the review queue", accounting.read)
        _apply_plan(store, name, run_id, candidates, options, summary, model_version, tree)
        # An earlier run (e.g. before retraining) may have queued products this run accepts:
        # their open low_confidence items are stale, so they are withdrawn (audited).
        summary.withdrawn = len(
            store.withdraw_items(
                name,
                reason="low_confidence",
                why=f"accepted by onboard run {run_id}: confidence reached the accept "
                f"threshold {threshold:.3f}"
                if threshold is not None
                else f"accepted by onboard run {run_id}",
                run_id=run_id,
            )
        )
        summary.accounting = accounting.to_dict()
        summary.stopped_early = accounting.stopped_early
        summary.rule_conflicts = rules.conflicts if rules is not None else 0
        summary.seconds = round(time.perf_counter() - started, 2)
        facts = summary.to_dict()
        facts.update(accounting.to_dict())
        facts.pop("duplicate_ids", None)
        store.finish_run(run_id, status="stopped" if error else "done", summary=facts)
    finally:
        store.close()
    if error is not None:
        raise error
    return summary


def _first_row(
    product: Product,
    mapping: Mapping,
    threshold: float | None,
    extractor: AttributeExtractor,
    tree: CategoryTree,
) -> MappedRow:
    """The row as known before the whole feed is seen (no audit slice, no group gain yet)."""
    attributes = extractor.extract(product, mapping.node_id or None)
    accepted = threshold is not None and acceptance_score(mapping) >= threshold
    reasons: list[str] = [] if accepted else ["low_confidence"]
    if _brand_conflict(product, attributes, extractor.brands):
        reasons.append("brand_conflict")
    if attributes.audience_conflict:
        reasons.append("audience_conflict")
    return MappedRow(
        product=product,
        mapping=mapping,
        attributes=attributes,
        status="accepted" if accepted else "queued",
        group_key=" > ".join(product.category_path),
        priority=expected_gain(mapping.confidence) if reasons else 0.0,
        reasons=tuple(reasons),
    )


def _count(summary: OnboardSummary, product: Product, row: MappedRow, tree: CategoryTree) -> None:
    summary.mapped += 1
    method = row.mapping.method
    summary.by_method[method] = summary.by_method.get(method, 0) + 1
    node_id = row.mapping.node_id
    department = tree.department(node_id).name if node_id in tree else "(none)"
    entry = summary.by_department.setdefault(department, {"products": 0, "accepted": 0})
    entry["products"] += 1
    if row.status == "accepted":
        entry["accepted"] += 1
    if row.attributes.restriction:
        restriction = row.attributes.restriction
        summary.restricted[restriction] = summary.restricted.get(restriction, 0) + 1


def _apply_plan(
    store: Store,
    feed: str,
    run_id: int,
    candidates: list[Candidate],
    options: OnboardOptions,
    summary: OnboardSummary,
    model_version: str,
    tree: CategoryTree,
) -> None:
    """Draw the audit slice and the group gains; rewrite only the rows whose plan changed."""
    plan = plan_queue(
        candidates, audit_rate=options.audit_share, random_state=options.random_state
    )
    first = {c.product_id: c for c in candidates}
    changed: dict[str, tuple[str, tuple[str, ...], float]] = {}
    reasons_count: Counter[str] = Counter()
    for product_id, planned in plan.reviews.items():
        reasons_count.update(planned.reasons)
        was_accepted = first[product_id].accepted
        if planned.status == "audit" or (planned.group_offer and not was_accepted):
            changed[product_id] = (planned.status, planned.reasons, planned.priority)
    summary.audit = len(plan.audit_ids)
    summary.accepted = sum(1 for c in candidates if c.accepted) - summary.audit
    summary.queued = sum(1 for c in candidates if not c.accepted)
    summary.queued_by_reason = dict(sorted(reasons_count.items()))
    if not changed:
        return

    def rows() -> Iterator[MappedRow]:
        for product, stored in store.mappings(feed):
            update = changed.get(product.product_id)
            if update is None or stored.status == "reviewed":
                continue
            status, reasons, priority = update
            yield MappedRow(
                product=product,
                mapping=stored.mapping,
                attributes=stored.attributes,
                status=status,
                group_key=stored.group_key,
                priority=priority,
                reasons=reasons,
            )

    store.save_mapped(
        feed, run_id, rows(), model_version=model_version, tree_version=str(tree.version)
    )


@dataclass(frozen=True, slots=True)
class GoldCheck:
    """The auto-accepted part of a feed compared with gold labels.

    Attributes:
        products: products of the feed with a gold label.
        accepted: of those, auto-accepted (audit samples included; reviewed ones left out).
        wrong: accepted ones whose node is not the gold node.
        queued: products with a gold label still queued.
    """

    products: int
    accepted: int
    wrong: int
    queued: int

    @property
    def coverage(self) -> float:
        """Share of gold-labelled products auto-accepted."""
        return self.accepted / self.products if self.products else 0.0

    @property
    def error(self) -> float:
        """Error rate of the auto-accepted part against gold."""
        return self.wrong / self.accepted if self.accepted else 0.0

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return {
            "products": self.products,
            "accepted": self.accepted,
            "wrong": self.wrong,
            "queued": self.queued,
            "coverage": round(self.coverage, 4),
            "error": round(self.error, 4),
        }


def check_against_gold(store: Store, feed: str, gold: dict[str, str]) -> GoldCheck:
    """Compare a feed's auto-accepted mappings with gold nodes (product id → node id)."""
    products = accepted = wrong = queued = 0
    for product, stored in store.mappings(feed):
        expected = gold.get(product.product_id)
        if not expected:
            continue
        products += 1
        if stored.status in ("accepted", "audit"):
            accepted += 1
            wrong += stored.mapping.node_id != expected
        elif stored.status == "queued":
            queued += 1
    return GoldCheck(products, accepted, wrong, queued)
