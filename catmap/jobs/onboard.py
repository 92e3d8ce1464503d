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
split), so with several sources the threshold must pass on each: the strictest is kept (see
:func:`default_calibration_feeds` for the default sources). Each feed then gets its own
threshold from its first chunk (:func:`check_feed_shift`): the bound is on the share of wrong
mappings among *its* auto-accepted products, so its own sampling counts (the fewer products
the threshold accepts, the stricter it is), and a feed unlike the calibration data gets a
stricter one. Either way the seeded audit sample measures each feed's real error.

Running onboard again on the same feed updates in place: the store upserts by product id, review
items are unique per product and reason, and a person's decision is never overwritten. A run
killed mid-way leaves the committed batches; the next run completes the feed.
"""

from __future__ import annotations

import time
from collections import Counter
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field, replace
from itertools import islice
from pathlib import Path
from typing import Any, Protocol

import numpy as np

from catmap._iterate import chunked
from catmap._text import fold
from catmap.attributes import (
    RESTRICTION_CAUTION,
    AttributeExtractor,
    BrandDictionary,
    FeedBrandLearner,
)
from catmap.attributes.brand import dictionary_in_use, normalize_brand
from catmap.attributes.registry import CONFIRMED, REJECTED
from catmap.classify.rules import RuleSet, load_rules
from catmap.classify.storage import file_fingerprint, load_model
from catmap.decide.queue import Candidate, expected_gain, plan_queue
from catmap.decide.threshold import DEFAULT_DELTA, DEFAULT_MAX_ERROR, ThresholdChoice
from catmap.errors import InputError
from catmap.feeds.ingest import FATAL_FEED_ERRORS, Accounting, flag_advice
from catmap.feeds.profiled import ProfiledFeed, open_profiled_feed
from catmap.feeds.writers import open_reject_writer
from catmap.jobs._brand_queue import queue_brand_candidates
from catmap.jobs._brand_registry import load_registry, merge_feed_registry
from catmap.jobs._calibration import (
    UNCOVERED_LANGUAGE_CAP,
    UNCOVERED_LANGUAGE_FLOOR,
    FeedShift,
    ValidationPredictions,
    accept_threshold,
    calibration_sources,
    check_feed_shift,
    default_calibration_feeds,
    feed_familiarity,
    held_out_predictions,
    held_out_recorder,
    retailer_parts,
    strictest_choice,
    title_familiarity,
    validation_predictions,
)
from catmap.jobs._feed_mapper import (
    CHUNK_SIZE,
    DEFAULT_BACKOFF_THRESHOLD,
    FeedMapper,
    acceptance_score,
)
from catmap.jobs._gold import GoldCheck, check_against_gold
from catmap.jobs._project_tree import (
    check_store_tree,
    default_model_dir,
    default_rules_path,
    project_tree,
)
from catmap.jobs._remap_versions import check_onboarding, record_feed_versions
from catmap.jobs.audit import raised_floor
from catmap.project import feed_name, feed_names, subfolder
from catmap.records import Attributes, Mapping, Product, Reject
from catmap.store import MappedRow, Store, store_path
from catmap.tree.taxonomy import CategoryTree

__all__ = [
    "CHUNK_SIZE",
    "DEFAULT_BACKOFF_THRESHOLD",
    "UNCOVERED_LANGUAGE_CAP",
    "UNCOVERED_LANGUAGE_FLOOR",
    "FeedMapper",
    "FeedOutcome",
    "FeedShift",
    "OnboardOptions",
    "OnboardSummary",
    "ValidationPredictions",
    "GoldCheck",
    "accept_threshold",
    "acceptance_score",
    "calibration_sources",
    "default_calibration_feeds",
    "candidate",
    "check_against_gold",
    "check_same_folder",
    "check_store_tree",
    "check_feed_shift",
    "default_model_dir",
    "decided_row",
    "default_rules_path",
    "extract_attributes",
    "keep_audit_raise",
    "learn_feed_brands",
    "MappedRowSource",
    "PreparedOnboarding",
    "RowsFactory",
    "check_shift",
    "onboard_feed",
    "onboard_feeds",
    "prepare_onboarding",
    "project_brands",
    "registry_decisions",
    "project_tree",
    "project_review_examples",
    "rejects_path",
    "store_onboarding",
    "retailer_parts",
    "review_examples",
    "feed_familiarity",
    "held_out_predictions",
    "held_out_recorder",
    "title_familiarity",
    "validation_predictions",
]

DEFAULT_AUDIT_SHARE = 0.02
# Products read to learn a feed's own brands before mapping it: the brands of a feed recur
# early, and the first pass then stays a small share of the run on a large feed.
BRAND_SAMPLE = 20_000
# An extracted brand below this confidence that disagrees with the feed's brand field is worth a
# look (common practice, no source).
BRAND_CONFLICT_CONFIDENCE = 0.75


def rejects_path(project: str | Path, feed_name: str) -> Path:
    """Return where onboarding writes a feed's rejects: ``<project>/rejects/<feed>.jsonl``."""
    return Path(project) / "rejects" / f"{feed_name}.jsonl"


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
    """What one onboarding run did to one feed (the facts ``catmap onboard`` prints).

    ``statement`` is the guarantee of the feed's threshold in words: the calibration data's
    (``calibration_statement``, the same for every feed of a model) and then the feed check's
    (``feed_check``), which sets the feed's own ``threshold``.
    """

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
    calibration_statement: str = ""
    feed_check: dict[str, Any] = field(default_factory=dict)
    max_error: float = DEFAULT_MAX_ERROR
    delta: float = DEFAULT_DELTA
    restricted: dict[str, int] = field(default_factory=dict)
    rules_file: str | None = None
    rule_conflicts: int = 0
    rejects_file: str = ""
    store: str = ""
    seconds: float = 0.0
    stopped_early: str | None = None
    stale_runs_stopped: list[dict[str, Any]] = field(default_factory=list)
    flag_advice: list[str] = field(default_factory=list)
    brands: dict[str, Any] = field(default_factory=dict)
    cluster: dict[str, Any] | None = None

    @property
    def coverage(self) -> float:
        """Share of mapped products auto-accepted (audit samples count as accepted)."""
        return (self.accepted + self.audit) / self.mapped if self.mapped else 0.0

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        facts = dict(self.__dict__)
        facts["coverage"] = round(self.coverage, 4)
        # Wherever the flags are shown, the caution comes with them.
        facts["caution"] = RESTRICTION_CAUTION if self.restricted else ""
        if facts["cluster"] is None:  # a cluster run's partitions and dashboard only
            del facts["cluster"]
        return facts


def _brand_conflict(product: Product, attributes: Attributes, brands: BrandDictionary) -> bool:
    """The feed names a brand the dictionary does not know, and the title names another one."""
    if not product.brand or not attributes.brand_evidence.startswith("field not in dictionary"):
        return False
    mentions = brands.find_in_text(fold(product.title))
    field_key = normalize_brand(product.brand)
    return any(normalize_brand(name) != field_key for _s, _e, _k, name in mentions)


def load_extractor(project: str | Path, tree: CategoryTree) -> AttributeExtractor:
    """Return the attribute extractor with the project's brands (see :func:`project_brands`):
    the brands a person confirmed in the registry count as confirmed, and the spellings a
    person rejected as no brand are never read as one."""
    brands = project_brands(project)
    confirmed, rejected = registry_decisions(project)
    return AttributeExtractor(
        brands=brands, tree=tree, confirmed_brands=confirmed, not_brands=rejected
    )


def project_brands(project: str | Path) -> BrandDictionary:
    """Return the project's (or the demo) brand dictionary with the brands a person confirmed
    in the project's brand registry, every spelling seen of them as a variant."""
    path = dictionary_in_use(project)
    brands = BrandDictionary.from_csv(path) if path is not None else BrandDictionary([])
    if not store_path(project).exists():
        return brands
    with Store.for_project(project) as store:
        confirmed = load_registry(store, brands).as_dictionary()
    for entry in confirmed.entries.values():
        brands.add(entry)
    return brands


def registry_decisions(project: str | Path) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Return what people decided in the project's brand registry: the names of the brands
    they confirmed (not in the brand dictionary), and every spelling of the brands they
    rejected as no brand (both empty before the project has a store)."""
    if not store_path(project).exists():
        return (), ()
    with Store.for_project(project) as store:
        registry = load_registry(store)
    confirmed = tuple(b.name for b in registry.brands(CONFIRMED) if not b.dictionary_name)
    rejected = tuple(
        spelling for b in registry.brands(REJECTED) for spelling in (b.name, *b.variants)
    )
    return confirmed, rejected


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
    feed: str | None = None,
    client: Any | None = None,
    on_cluster_progress: Callable[[Any], None] | None = None,
) -> OnboardSummary:
    """Onboard one feed into the project store.

    Args:
        feed_path: the feed file.
        feed: the feed's name (``--feed``; default: the file name without dates and run
            counters, see :func:`catmap.project.feed_stem`).
        project: the project folder (profile, rules, model, store, rejects live there).
        tree: the category tree of the model.
        model_dir: the model folder (default: ``<project>/models/current``).
        options: thresholds, audit share, rules file.
        validation: precomputed held-out predictions, one or several sources (default:
            :func:`calibration_sources` for ``options.validation_feed``).
        extractor: attribute extractor (default: with the project's brand dictionary).
        on_progress: called with a stage name and the records read so far.
        client: a ``dask.distributed.Client``: read, normalise, map and extract over the
            feed's partitions on its workers (see :mod:`catmap.jobs._onboard_cluster`); this
            process still writes the store, with the same result as without.
        on_cluster_progress: told where the cluster run is (a
            :class:`~catmap.jobs.cluster.ClusterProgress`) after each task.

    Returns:
        The run's summary.

    Raises:
        ModelNotTrained: no model in the model folder.
        TreeVersionMismatch: a remap is pending, or the store is on another tree version.
        ModelTreeMismatch: the model or the store was made on another tree.
        InputError: the feed, its profile or the rules file cannot be used, or a feed of the
            same name came from another folder; a fatal feed error is raised after the records
            before it were saved (the run is recorded as stopped).
        ClusterError: the cluster failed.
    """
    started = time.perf_counter()
    progress = on_progress or (lambda _stage, _count: None)
    prepared = prepare_onboarding(
        feed_path, project=project, tree=tree, model_dir=model_dir, options=options,
        validation=validation, extractor=extractor, on_progress=progress, feed=feed,
    )  # fmt: skip
    if client is None:
        return store_onboarding(prepared, None, started=started, on_progress=progress)
    from catmap.jobs._onboard_cluster import onboard_rounds

    with onboard_rounds(client, prepared, on_progress=on_cluster_progress) as rounds:
        return store_onboarding(prepared, rounds, started=started, on_progress=progress)


@dataclass
class FeedOutcome:
    """One feed of :func:`onboard_feeds`: its summary, or the error that stopped it.

    Attributes:
        feed: the feed file.
        summary: the run's summary (None when the run raised before saving anything; a feed
            that stopped early on a fatal error has both its summary and its error).
        error: a fatal feed error raised after the records before it were saved, or None.
    """

    feed: Path
    summary: OnboardSummary | None
    error: InputError | None = None


def onboard_feeds(
    feed_paths: Sequence[str | Path],
    *,
    project: str | Path,
    tree: CategoryTree,
    model_dir: str | Path | None = None,
    options: OnboardOptions | None = None,
    validation: ValidationPredictions | Sequence[ValidationPredictions] | None = None,
    cluster: str | None = None,
    feed: str | None = None,
    on_progress: Callable[[str, str, int], None] | None = None,
    on_cluster_progress: Callable[[str, Any], None] | None = None,
) -> list[FeedOutcome]:
    """Onboard several feeds, on one cluster when given; the store as when onboarded one by one.

    On a cluster, the model goes to every worker once, every feed's partitions are scheduled
    together (one thread per feed submits its rounds), and the store is then written feed by
    feed in the order given, so run numbers and the store's contents are those of onboarding
    the feeds one after another. A feed that stops on a fatal error keeps the records before
    it, as :func:`onboard_feed` does, and the others go on.

    Args:
        feed_paths: the feed files (their names must differ).
        project: the project folder.
        tree: the category tree of the model.
        model_dir: the model folder (default: ``<project>/models/current``).
        options: thresholds, audit share, rules file (one rules file for every feed).
        validation: precomputed held-out predictions (default: chosen once for all feeds).
        cluster: ``local:N`` or a scheduler address; None: one feed after another here.
        feed: the feed's name (only with one feed).
        on_progress: called with the feed's name, a stage and a count.
        on_cluster_progress: called with the feed's name and where its cluster run is.

    Returns:
        One outcome per feed, in order.

    Raises:
        InputError: two feeds have the same name, or ``feed`` was given with several feeds;
            a feed, profile or rules file cannot be used (before anything is stored).
        ClusterError: the cluster cannot be started or reached, or failed.
    """
    paths = [Path(f) for f in feed_paths]
    names = feed_names(paths, feed, verb="onboard")
    prepared: list[PreparedOnboarding] = []
    starts: list[float] = []
    for path, name in zip(paths, names, strict=True):
        starts.append(time.perf_counter())
        progress = _feed_progress(on_progress, name)
        prepared.append(
            prepare_onboarding(
                path, project=project, tree=tree, model_dir=model_dir, options=options,
                validation=validation, on_progress=progress, feed=feed,
            )
        )  # fmt: skip
        validation = prepared[-1].sources  # chosen once, for the same model and options
    if cluster is None:
        return [
            _stored(p, None, started, _feed_progress(on_progress, p.name))
            for p, started in zip(prepared, starts, strict=True)
        ]
    from catmap.jobs._onboard_cluster import run_feeds_on_cluster

    with run_feeds_on_cluster(cluster, prepared, on_progress=on_cluster_progress) as rounds:
        return [
            _stored(p, r, started, _feed_progress(on_progress, p.name))
            for p, r, started in zip(prepared, rounds, starts, strict=True)
        ]


def _feed_progress(
    on_progress: Callable[[str, str, int], None] | None, name: str
) -> Callable[[str, int], None]:
    if on_progress is None:
        return lambda _stage, _count: None
    return lambda stage, count: on_progress(name, stage, count)


def _stored(
    prepared: PreparedOnboarding,
    rounds: RowsFactory | None,
    started: float,
    progress: Callable[[str, int], None],
) -> FeedOutcome:
    try:
        summary, stopped = _store_onboarding(prepared, rounds, started=started, progress=progress)
    except FATAL_FEED_ERRORS as error:
        return FeedOutcome(prepared.feed_path, None, error)
    # A feed that stopped early keeps its summary: the records before the error were saved.
    return FeedOutcome(prepared.feed_path, summary, stopped)


@dataclass
class PreparedOnboarding:
    """What a feed's onboarding knows before it maps a product: the feed opened with its
    profile, the mapper with its rules, the accept threshold and the extractor with the
    feed's own brands (see :func:`prepare_onboarding`)."""

    name: str
    feed_path: Path
    project: Path
    tree: CategoryTree
    model_dir: Path
    manifest: dict[str, Any]
    options: OnboardOptions
    rules_file: Path | None
    rules: RuleSet | None
    mapper: FeedMapper
    sources: list[ValidationPredictions]
    choice: ThresholdChoice
    statement: str
    extractor: AttributeExtractor
    source: ProfiledFeed
    learner: FeedBrandLearner


def prepare_onboarding(
    feed_path: str | Path,
    *,
    project: str | Path,
    tree: CategoryTree,
    model_dir: str | Path | None = None,
    options: OnboardOptions | None = None,
    validation: ValidationPredictions | Sequence[ValidationPredictions] | None = None,
    extractor: AttributeExtractor | None = None,
    on_progress: Callable[[str, int], None] | None = None,
    feed: str | None = None,
) -> PreparedOnboarding:
    """Check the store, load the model and rules, choose the accept threshold and learn the
    feed's own brands: every step of :func:`onboard_feed` before the feed is mapped.

    Args and Raises: as :func:`onboard_feed`.

    Returns:
        What mapping and storing the feed need.
    """
    options = options or OnboardOptions()
    project = Path(project)
    feed_path = Path(feed_path)
    name = feed_name(feed_path, feed)
    folder = Path(model_dir) if model_dir else default_model_dir(project)
    model, manifest = load_model(folder, tree)
    if store_path(project).is_file():
        with Store.open(store_path(project)) as existing:
            check_same_folder(existing, name, feed_path, given=feed is not None)
            check_store_tree(existing, tree)
    rules_file = _rules_file(project, feed_path, options, name)
    rules = load_rules(rules_file, tree=tree) if rules_file is not None else None
    mapper = FeedMapper(
        model, manifest, tree, rules=rules, backoff_threshold=options.backoff_threshold
    )
    progress = on_progress or (lambda _stage, _count: None)
    if validation is None:
        progress("choosing the accept threshold", 0)
        validation = calibration_sources(
            mapper, folder, project=project, feeds=_validation_feeds(options)
        )
    sources = [validation] if isinstance(validation, ValidationPredictions) else list(validation)
    choice, statement = _choose_threshold(sources, options)
    extractor = extractor or load_extractor(project, tree)

    source = open_profiled_feed(feed_path, project, name=name)

    progress("learning the feed's brands", 0)
    learner = learn_feed_brands(
        feed_path, project, name, extractor.brands, tree, not_brands=extractor.not_brands
    )
    extractor = AttributeExtractor(
        brands=extractor.brands, tree=extractor.tree,
        retailer_names=extractor.retailer_names, feed_brands=learner,
        confirmed_brands=extractor.confirmed_brands, not_brands=extractor.not_brands,
    )  # fmt: skip
    return PreparedOnboarding(
        name=name, feed_path=feed_path, project=project, tree=tree, model_dir=folder,
        manifest=manifest, options=options, rules_file=rules_file, rules=rules, mapper=mapper,
        sources=sources, choice=choice, statement=statement, extractor=extractor,
        source=source, learner=learner,
    )  # fmt: skip


class MappedRowSource(Protocol):
    """Where the store phase takes a feed's rows from (iterate once): one process maps them
    as it reads (:class:`_MappedRows`), a cluster run reads its workers' parts."""

    candidates: list[Candidate]
    fatal: InputError | None
    # The feed's threshold as its audit last raised it (catmap.jobs.audit), if ever: set
    # before iterating; the rows keep at least that threshold.
    audit_floor: tuple[bool, float | None]

    @property
    def accounting(self) -> Accounting:
        """The feed's row accounting (complete once the rows are iterated)."""

    def __iter__(self) -> Iterator[MappedRow]: ...


class RowsFactory(Protocol):
    """Makes the rows of a feed for the store phase, given the run's summary so far."""

    def rows(
        self, summary: OnboardSummary, reject_file: Path, progress: Callable[[str, int], None]
    ) -> MappedRowSource:
        """The rows; their rejects go to ``reject_file``, their counts to ``summary``."""


def store_onboarding(
    prepared: PreparedOnboarding,
    mapped_by: RowsFactory | None,
    *,
    started: float,
    on_progress: Callable[[str, int], None] | None = None,
) -> OnboardSummary:
    """Record the run, save every row, plan the review queue and merge the feed's brands.

    Args:
        prepared: see :func:`prepare_onboarding`.
        mapped_by: where the rows come from (None: mapped here as the feed is read).
        started: when the run started (``time.perf_counter()``).
        on_progress: called with a stage name and a count.

    Returns:
        The run's summary.

    Raises:
        InputError: a fatal feed error, after the records before it were saved.
    """
    progress = on_progress or (lambda _stage, _count: None)
    summary, error = _store_onboarding(prepared, mapped_by, started=started, progress=progress)
    if error is not None:
        raise error
    return summary


def _store_onboarding(
    prepared: PreparedOnboarding,
    mapped_by: RowsFactory | None,
    *,
    started: float,
    progress: Callable[[str, int], None],
) -> tuple[OnboardSummary, InputError | None]:
    """:func:`store_onboarding`, returning the fatal feed error that stopped the reading (the
    records before it saved) beside the summary instead of raising it."""
    p = prepared
    name, tree, options = p.name, p.tree, p.options
    store = Store.for_project(p.project)
    try:
        check_onboarding(store, str(tree.version), p.project)
        store.add_feed(
            name, source_path=p.feed_path.resolve(), profile_path=p.source.profile_path
        )
        summary = _start_run(
            store, name, p.feed_path, p.project, options, p.choice, p.statement, p.sources,
            rules_file=p.rules_file, model_dir=p.model_dir, tree=tree,
        )
        run_id = summary.run_id
        reject_file = rejects_path(p.project, name)
        subfolder(p.project, "rejects")
        summary.rejects_file = str(reject_file)
        mapped: MappedRowSource
        if mapped_by is None:
            mapped = _MappedRows(
                p.source, reject_file, p.mapper, p.extractor, p.sources, summary, options,
                progress,
            )
        else:
            mapped = mapped_by.rows(summary, reject_file, progress)
        mapped.audit_floor = raised_floor(store, name)
        model_version = str(p.manifest.get("training_data_fingerprint", ""))[:12]
        store.save_mapped(
            name,
            run_id,
            iter(mapped),
            model_version=model_version,
            tree_version=str(tree.version),
            on_batch=lambda total: progress("saving", total),
        )
        record_feed_versions(store, str(tree.version), name)
        error = mapped.fatal

        progress("planning the review queue", mapped.accounting.read)
        _apply_plan(store, name, run_id, mapped.candidates, options, summary, model_version, tree)
        summary.withdrawn = _withdraw_stale_items(store, name, run_id, summary.threshold)
        summary.brands = _merge_brands(store, p.learner, p.extractor.brands, name)
        summary.queued_by_reason.update(queue_brand_candidates(store, name, run_id))
        _finish_run(
            store, summary, mapped.accounting, p.rules, started, stopped=error is not None,
            profile_path=str(p.source.profile_path),
        )
    finally:
        store.close()
    return summary, error


def learn_feed_brands(
    feed_path: Path,
    project: Path,
    name: str,
    brands: BrandDictionary,
    tree: CategoryTree,
    *,
    sample: int = BRAND_SAMPLE,
    not_brands: Iterable[str] = (),
) -> FeedBrandLearner:
    """Learn a feed's own brands and its retailer's name from its first products.

    A first pass over at most ``sample`` products, read with the feed's profile (whose
    ``retailer_as_no_brand`` setting the learner follows). Rejects are skipped and a fatal
    feed error ends the pass quietly: the main pass reports both.

    Args:
        feed_path: the feed file.
        project: the project folder.
        name: the feed's name (compared with brand values to find the retailer's own).
        brands: the brand dictionary in use.
        tree: the category tree (its product words are never brands).
        sample: products read at most.
        not_brands: spellings a person rejected as no brand (never learned).

    Returns:
        The fitted learner.
    """
    source = open_profiled_feed(feed_path, project, name=name)

    def products() -> Iterator[Product]:
        try:
            for item in source.products():
                if isinstance(item, Product):
                    yield item
        except FATAL_FEED_ERRORS:
            return

    learner = FeedBrandLearner(
        dictionary=brands, tree=tree, feed=name,
        retailer_as_no_brand=source.profile.retailer_as_no_brand, not_brands=not_brands,
    )  # fmt: skip
    return learner.fit(islice(products(), sample))


def _merge_brands(
    store: Store, learner: FeedBrandLearner, brands: BrandDictionary, feed: str
) -> dict[str, Any]:
    """Merge the feed's brands into the project registry; return the summary's brand facts."""
    joins, project_registry = merge_feed_registry(
        store, learner.registry_, dictionary=brands, feed=feed
    )
    retailer = learner.retailer_
    return {
        "sampled": learner.products_seen_,
        "feed_brands": len(learner.registry_),
        "feed_candidates": len(learner.registry_.brands("candidate")),
        "registry_brands": len(project_registry),
        "registry_candidates": len(project_registry.brands("candidate")),
        "typo_joins": [list(pair) for pair in [*learner.typo_joins_, *joins]],
        "retailer": None if retailer is None else {
            "name": retailer.name,
            "share": retailer.share,
            "departments": retailer.departments,
            "reason": retailer.reason,
            "as_no_brand": learner.retailer_as_no_brand,
        },
    }  # fmt: skip


def _start_run(
    store: Store,
    name: str,
    feed_path: Path,
    project: Path,
    options: OnboardOptions,
    choice: ThresholdChoice,
    statement: str,
    sources: Sequence[ValidationPredictions],
    *,
    rules_file: Path | None,
    model_dir: Path,
    tree: CategoryTree,
) -> OnboardSummary:
    """Record the onboard run with its parameters; return its summary, facts known so far.

    Runs left ``running`` by a process that died are marked stopped first (and listed).
    """
    stale = [
        {"run": run.id, "kind": run.kind, "started_at": run.started_at}
        for run in store.stop_stale_runs()
    ]
    run_id = store.start_run(
        "onboard",
        feed=name,
        params={
            "max_error": options.max_error,
            "delta": options.delta,
            "audit_share": options.audit_share,
            "threshold": choice.threshold,
            "rules": str(rules_file) if rules_file else None,
            "model": str(model_dir),
            # The tree the mappings are on, so that a later run on another tree is refused.
            "tree_version": str(tree.version),
            "tree_file": str(tree.path or ""),
            "tree_fingerprint": file_fingerprint(tree.path),
        },
    )
    return OnboardSummary(
        feed=name,
        path=str(feed_path),
        run_id=run_id,
        accounting={},
        threshold=choice.threshold,
        coverage_validation=choice.coverage,
        validation_products=choice.n_calibration,
        validation_source="; ".join(v.source for v in sources),
        statement=statement,
        calibration_statement=statement,
        max_error=options.max_error,
        delta=options.delta,
        rules_file=str(rules_file) if rules_file else None,
        store=str(store_path(project)),
        stale_runs_stopped=stale,
    )


def _rules_file(
    project: Path, feed_path: Path, options: OnboardOptions, name: str
) -> Path | None:
    """The rules file given, else the feed's default one when it exists."""
    default = default_rules_path(project, feed_path, name)
    if options.rules is None and default.exists():
        return default
    return options.rules


def check_same_folder(store: Store, name: str, feed_path: Path, *, given: bool) -> None:
    """Refuse a file that would silently join a feed first onboarded from another folder.

    Two retailers may send files of the same name; merging them would overwrite one's
    products and put its reviewed decisions on the other's. A name given with ``--feed``
    says the user means that feed, wherever the file is.

    Raises:
        InputError: the feed's name is known from another folder and was not given.
    """
    if given or name not in {record.name for record in store.feeds()}:
        return
    known = store.feed(name).source_path
    if not known:
        return
    known_folder = Path(known).resolve().parent
    folder = feed_path.resolve().parent
    if known_folder != folder:
        raise InputError(
            f"a feed named '{name}' was onboarded from the folder {known_folder}; this file is "
            f"in {folder}",
            path=feed_path,
            hint=f"give it its own name with --feed NAME, or --feed {name} if it is the same "
            "retailer's feed",
        )



def _validation_feeds(options: OnboardOptions) -> list[Path] | None:
    """The labelled feeds given to choose the threshold (None: the project's default)."""
    given = options.validation_feed
    labelled = [given] if isinstance(given, (str, Path)) else list(given or ())
    return [Path(f) for f in labelled] or None


def _choose_threshold(
    sources: Sequence[ValidationPredictions], options: OnboardOptions
) -> tuple[ThresholdChoice, str]:
    """The strictest accept threshold over the calibration sources, and its statement."""
    choices = [
        accept_threshold(v, max_error=options.max_error, delta=options.delta) for v in sources
    ]
    strictest, choice = strictest_choice(choices)
    statement = choice.statement
    if len(sources) > 1:
        statement += (
            f" The threshold is the strictest of {len(sources)} calibration sources; this "
            f"one decided: {sources[strictest].source}."
        )
    return choice, statement


class _MappedRows:
    """A feed's products mapped and first decided, as store rows (iterate once).

    Rejects go to the rejects file as they come; each row is counted in the summary and leaves
    a :class:`~catmap.decide.queue.Candidate` for the review plan. A fatal feed error ends the
    rows early and is kept in :attr:`fatal`.

    The feed's threshold comes from the shift check (:func:`check_feed_shift`) on its first
    chunk (a whole feed of usual size): a feed unlike the calibration data gets a stricter
    one, and the summary says why.
    """

    def __init__(
        self,
        source: ProfiledFeed,
        reject_file: Path,
        mapper: FeedMapper,
        extractor: AttributeExtractor,
        sources: Sequence[ValidationPredictions],
        summary: OnboardSummary,
        options: OnboardOptions,
        progress: Callable[[str, int], None],
    ) -> None:
        self.source = source
        self.reject_file = reject_file
        self.mapper = mapper
        self.extractor = extractor
        self.sources = sources
        self.options = options
        self.shift: FeedShift | None = None
        self.summary = summary
        self.chunk_size = options.chunk_size
        self.progress = progress
        self.candidates: list[Candidate] = []
        self.fatal: InputError | None = None
        # The feed's threshold as its audit last raised it (catmap.jobs.audit), if ever.
        self.audit_floor: tuple[bool, float | None] = (False, None)

    def products(self) -> Iterator[Product]:
        """The feed's products; rejects are written as they come."""
        accounting = self.source.accounting
        with open_reject_writer(self.reject_file, "jsonl") as rejects:
            try:
                for item in self.source.products():
                    if isinstance(item, Reject):
                        rejects.write(item)
                    else:
                        yield item
                    if accounting.read % 1000 == 0:
                        self.progress("reading", accounting.read)
            except FATAL_FEED_ERRORS as fatal:
                # The records before the error are kept and saved; the run says it stopped.
                self.fatal = fatal
                accounting.stopped_early = str(fatal)

    @property
    def accounting(self) -> Accounting:
        """The feed's row accounting."""
        return self.source.accounting

    def __iter__(self) -> Iterator[MappedRow]:
        tree = self.mapper.tree
        for chunk in chunked(self.products(), self.chunk_size):
            self.progress("mapping", self.source.accounting.read)
            mappings = self.mapper.map(chunk)
            familiarity, labelled = feed_familiarity(self.mapper, [p.title for p in chunk])
            raw = np.array([acceptance_score(m) for m in mappings])
            if self.shift is None:
                checked = check_shift(
                    self.summary, self.sources, self.options, raw, familiarity, labelled
                )
                self.shift = keep_audit_raise(checked, *self.audit_floor, self.summary)
            scores = self.shift.acceptance_scores(raw, familiarity)
            threshold = self.shift.threshold
            for product, mapping, score in zip(chunk, mappings, scores.tolist(), strict=True):
                row = _first_row(product, mapping, score, threshold, self.extractor, tree)
                self.candidates.append(candidate(row))
                _count(self.summary, product, row, tree)
                yield row


def candidate(row: MappedRow) -> Candidate:
    """The row as the review-queue plan sees it."""
    return Candidate(
        row.product.product_id,
        row.group_key,
        row.mapping.node_id,
        row.mapping.confidence,
        row.status == "accepted",
        brand_conflict="brand_conflict" in row.reasons,
        brand_confidence=row.attributes.brand_confidence,
        audience_conflict=row.attributes.audience_conflict,
    )


def check_shift(
    summary: OnboardSummary,
    sources: Sequence[ValidationPredictions],
    options: OnboardOptions,
    scores: np.ndarray[Any, Any],
    familiarity: np.ndarray[Any, Any],
    labelled_familiarity: np.ndarray[Any, Any] | None = None,
) -> FeedShift:
    """Run the feed's check and record its threshold and findings in the summary.

    The feed's threshold replaces the calibration data's: it accounts for the feed's own
    sampling (how many of its products the threshold accepts) and for a feed unlike the
    calibration data (see :func:`check_feed_shift`).
    """
    shift = check_feed_shift(
        scores, familiarity, sources, labelled_familiarity=labelled_familiarity,
        max_error=options.max_error, delta=options.delta,
    )  # fmt: skip
    summary.feed_check = shift.to_dict()
    summary.threshold = shift.threshold
    summary.statement += " Feed check: " + "; ".join(shift.notes) + "."
    return shift


def keep_audit_raise(
    shift: FeedShift, raised: bool, floor: float | None, summary: OnboardSummary
) -> FeedShift:
    """The feed's threshold, at least as strict as the one its audit raised it to."""
    if not raised or shift.threshold is None:
        return shift
    if floor is not None and shift.threshold >= floor:
        return shift
    summary.threshold = floor
    kept = "accept nothing" if floor is None else f"{floor:.3f}"
    summary.statement += f" The feed's audit raised its threshold: kept at {kept}."
    return replace(shift, threshold=floor)


def _withdraw_stale_items(store: Store, feed: str, run_id: int, threshold: float | None) -> int:
    """Withdraw the open low_confidence items of products this run accepts; return how many.

    An earlier run (e.g. before retraining) may have queued products this run accepts: their
    open items are stale, so they are withdrawn (audited).
    """
    return len(
        store.withdraw_items(
            feed,
            reason="low_confidence",
            why=f"accepted by onboard run {run_id}: confidence reached the accept "
            f"threshold {threshold:.3f}"
            if threshold is not None
            else f"accepted by onboard run {run_id}",
            run_id=run_id,
        )
    )


def _finish_run(
    store: Store,
    summary: OnboardSummary,
    accounting: Accounting,
    rules: RuleSet | None,
    started: float,
    *,
    stopped: bool,
    profile_path: str | None = None,
) -> None:
    """Fill the summary's last facts and record the run as done (or stopped early)."""
    summary.accounting = accounting.to_dict()
    summary.flag_advice = flag_advice(accounting.by_flag, profile_path)
    summary.stopped_early = accounting.stopped_early
    summary.rule_conflicts = rules.conflicts if rules is not None else 0
    summary.seconds = round(time.perf_counter() - started, 2)
    facts = summary.to_dict()
    facts.update(accounting.to_dict())
    facts.pop("duplicate_ids", None)
    store.finish_run(summary.run_id, status="stopped" if stopped else "done", summary=facts)


def _first_row(
    product: Product,
    mapping: Mapping,
    score: float,
    threshold: float | None,
    extractor: AttributeExtractor,
    tree: CategoryTree,
) -> MappedRow:
    """The row as known before the whole feed is seen (no audit slice, no group gain yet).

    ``score`` is the mapping's acceptance score after the feed check (see
    :class:`FeedShift`), compared with the feed's ``threshold``.
    """
    attributes, conflicts = extract_attributes(product, mapping, extractor)
    return decided_row(product, mapping, attributes, conflicts, score, threshold)


def extract_attributes(
    product: Product, mapping: Mapping, extractor: AttributeExtractor
) -> tuple[Attributes, tuple[str, ...]]:
    """The product's attributes, and the conflicts that queue it whatever its confidence
    (``brand_conflict``, ``audience_conflict``): the part of a row that needs no threshold."""
    attributes = extractor.extract(product, mapping.node_id or None)
    conflicts: list[str] = []
    if _brand_conflict(product, attributes, extractor.brands):
        conflicts.append("brand_conflict")
    if attributes.audience_conflict:
        conflicts.append("audience_conflict")
    return attributes, tuple(conflicts)


def decided_row(
    product: Product,
    mapping: Mapping,
    attributes: Attributes,
    conflicts: tuple[str, ...],
    score: float,
    threshold: float | None,
) -> MappedRow:
    """The row accepted when ``score`` reaches ``threshold``, else queued; queued for its
    ``conflicts`` too (see :func:`extract_attributes`)."""
    accepted = threshold is not None and score >= threshold
    reasons: list[str] = [] if accepted else ["low_confidence"]
    reasons.extend(conflicts)
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
