"""Onboard a feed on a dask.distributed cluster, with the same store as one process.

Onboarding maps a feed in chunks of ``OnboardOptions.chunk_size`` kept products (the retailer
path consensus is blended inside a chunk, and the feed check reads the first chunk), so the
cluster keeps exactly those chunks. The rounds, each a plain function of files in a work folder:

1. **keys** and **duplicates** (shared with :mod:`catmap.jobs.cluster`): every product id's
   later occurrences, found without any process holding every id.
2. **reading**: each partition reads and normalises its records, drops the duplicates in place,
   and writes its kept products and its rejects; it returns its counts.
3. **mapping**: the coordinator cuts the kept products, in feed order, into the chunks one
   process would make; each chunk task maps its chunk (rules, model, consensus, back-off),
   extracts the attributes with the feed's own brands and writes each row with its acceptance
   score and title familiarity.

The mapper (model, tree, rules) and the extractor (brand dictionary, the feed's learned brands)
go to every worker once (see :func:`catmap.jobs.cluster.share`). The coordinator is the single
writer: it runs the feed check on the first chunk's scores as one process does, decides accept or
queue row by row, writes the rejects in order, rebuilds the accounting from them and saves the
rows through ``Store.save_mapped``; the review plan and the rest follow as in
:func:`catmap.jobs.onboard.store_onboarding`.

Every part is written under a temporary name and renamed, and the coordinator reads the parts
only once every task is done: a task the scheduler runs again after a lost worker replaces its
part, so no row is lost or doubled. Workers read the feed and the work folder at the
coordinator's paths (a shared disk); they need not see the project folder.
"""

from __future__ import annotations

import copy
import shutil
import threading
import time
import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

import numpy as np

from catmap._atomic import atomic_open
from catmap.attributes import AttributeExtractor
from catmap.classify.rules import RuleSet
from catmap.decide.queue import Candidate
from catmap.errors import InputError
from catmap.feeds.fieldmap import FeedProfile
from catmap.feeds.ingest import Accounting
from catmap.feeds.partition import BLOCK_RECORDS
from catmap.feeds.read import FeedInfo
from catmap.feeds.writers import open_reject_writer
from catmap.jobs._calibration import FeedShift, feed_familiarity
from catmap.jobs._feed_mapper import FeedMapper, acceptance_score
from catmap.jobs.cluster import (
    ClusterProgress,
    Part,
    _duplicates_of,
    _fatal_error,
    _load_lines,
    _part_name,
    _PartReader,
    _run,
    _save_lines,
    _save_npy,
    default_partition_bytes,
    find_duplicates,
    gather_rejects,
    open_cluster,
    plan_parts,
    share,
)
from catmap.jobs.onboard import (
    OnboardSummary,
    PreparedOnboarding,
    _count,
    candidate,
    check_shift,
    decided_row,
    extract_attributes,
    keep_audit_raise,
)
from catmap.records import Alternative, Attributes, Mapping, Product
from catmap.store import MappedRow
from catmap.store.encoding import product_from_json, product_to_json

__all__ = [
    "OnboardKit",
    "OnboardRounds",
    "chunk_slices",
    "onboard_rounds",
    "run_feeds_on_cluster",
    "send_mapper",
]

_ATTRIBUTE_FIELDS = [f.name for f in fields(Attributes)]
# A worker with several threads (``processes=False`` in the tests) shares one kit between
# them; the model and the extractor keep caches, so its tasks take turns.
_KIT_LOCK = threading.Lock()


@dataclass(frozen=True, slots=True)
class OnboardKit:
    """What every worker needs to map and extract one feed, sent to each worker once (the
    mapper without rules is sent apart, once for every feed of the run: see
    :func:`send_mapper`).

    Attributes:
        rules: the feed's rules, or None.
        extractor: the attribute extractor with the feed's own brands.
    """

    rules: RuleSet | None
    extractor: AttributeExtractor


def _reading_task(
    info: FeedInfo,
    profile: FeedProfile,
    part: Part,
    index: int,
    duplicates: list[dict[int, list[tuple[int, int]]]],
    work: str,
) -> dict[str, Any]:
    """Round "reading": one partition's kept products and rejects, written; its counts.

    The products file has one JSON line per product; beside it, the byte offset where each
    line starts (and the file's end), so that a chunk task reads only its own lines.
    """
    reading = _PartReader(info, profile, part, _duplicates_of(duplicates, index))
    base = Path(work) / _part_name(index)
    offsets = [0]
    with atomic_open(base.with_suffix(".products.jsonl"), "wb") as handle:
        for product in reading:
            line = (product_to_json(product) + "\n").encode("utf-8")
            handle.write(line)
            offsets.append(offsets[-1] + len(line))
    _save_npy(base.with_suffix(".offsets.npy"), np.array(offsets, dtype=np.int64))
    _save_lines(base.with_suffix(".rejects.jsonl"), reading.rejects)
    return reading.facts()


def _read_products(work: str, slices: list[tuple[int, int, int]]) -> list[Product]:
    """The kept products of ``slices`` (partition, first, end), in order."""
    products: list[Product] = []
    for index, first, end in slices:
        base = Path(work) / _part_name(index)
        offsets = np.load(base.with_suffix(".offsets.npy"), allow_pickle=False)
        start, stop = int(offsets[first]), int(offsets[end])
        with open(base.with_suffix(".products.jsonl"), "rb") as handle:
            handle.seek(start)
            text = handle.read(stop - start).decode("utf-8")
        # Split on "\n" only, as the lines were written (splitlines would cut at U+2028 too).
        products.extend(product_from_json(line) for line in text.split("\n")[:-1])
    return products


def _mapping_task(
    shared: FeedMapper, kit: OnboardKit, work: str, chunk: int, slices: list[tuple[int, int, int]]
) -> dict[str, Any]:
    """Round "mapping": map one chunk, extract its attributes and write its rows.

    Each row is the mapping, the attributes and the conflicts; beside them the acceptance
    scores and title familiarity the coordinator's feed check and threshold need.
    """
    products = _read_products(work, slices)
    mapper = copy.copy(shared)
    if kit.rules is not None:  # counted per chunk, added up by the coordinator
        mapper.rules = RuleSet(kit.rules.rules, path=kit.rules.path)
    with _KIT_LOCK:
        mappings = mapper.map(products)
        familiarity, labelled = feed_familiarity(mapper, [p.title for p in products])
        rows = []
        for product, mapping in zip(products, mappings, strict=True):
            attributes, conflicts = extract_attributes(product, mapping, kit.extractor)
            rows.append(
                [
                    [mapping.node_id, mapping.confidence, mapping.method,
                     [[a.node_id, a.confidence] for a in mapping.alternatives], mapping.reason],
                    [getattr(attributes, name) for name in _ATTRIBUTE_FIELDS],
                    list(conflicts),
                ]
            )
    raw = np.array([acceptance_score(m) for m in mappings], dtype=np.float64)
    base = Path(work) / f"c{chunk:06d}"
    _save_npy(
        base.with_suffix(".scores.npy"),
        np.stack([raw, np.asarray(familiarity, float), np.asarray(labelled, float)]),
    )
    _save_lines(base.with_suffix(".rows.jsonl"), rows)
    return {
        "products": len(products),
        "conflicts": mapper.rules.conflicts if mapper.rules is not None else 0,
    }


def chunk_slices(kept: list[int], chunk_size: int) -> list[list[tuple[int, int, int]]]:
    """Cut the kept products of the partitions, in feed order, into chunks of ``chunk_size``.

    Args:
        kept: kept products of each partition, in order.
        chunk_size: products per chunk (the last one may hold fewer).

    Returns:
        Per chunk, the (partition, first, end) slices it is made of.

    Example:
        >>> chunk_slices([3, 0, 4], 5)
        [[(0, 0, 3), (2, 0, 2)], [(2, 2, 4)]]
    """
    chunks: list[list[tuple[int, int, int]]] = []
    current: list[tuple[int, int, int]] = []
    room = chunk_size
    for index, count in enumerate(kept):
        first = 0
        while first < count:
            take = min(room, count - first)
            current.append((index, first, first + take))
            first += take
            room -= take
            if room == 0:
                chunks.append(current)
                current, room = [], chunk_size
    if current:
        chunks.append(current)
    return chunks


class _ClusterRows:
    """The rows of the workers' parts, decided as one process decides them (iterate once)."""

    def __init__(
        self,
        rounds: OnboardRounds,
        summary: OnboardSummary,
        reject_file: Path,
        progress: Callable[[str, int], None],
    ) -> None:
        self.rounds = rounds
        self.summary = summary
        self.reject_file = reject_file
        self.progress = progress
        self.candidates: list[Candidate] = []
        self.fatal: InputError | None = None
        self.audit_floor: tuple[bool, float | None] = (False, None)
        self._accounting = Accounting()

    @property
    def accounting(self) -> Accounting:
        """The feed's row accounting, rebuilt from the partitions' rejects."""
        return self._accounting

    def _products(self) -> Iterator[Product]:
        for index in range(len(self.rounds.reading)):
            path = self.rounds.work / f"{_part_name(index)}.products.jsonl"
            for line in _load_raw_lines(path):
                yield product_from_json(line)

    def __iter__(self) -> Iterator[MappedRow]:
        rounds, prepared = self.rounds, self.rounds.prepared
        with open_reject_writer(self.reject_file, "jsonl") as rejects:
            self._accounting = gather_rejects(rounds.work, rounds.reading, rejects)
        if rounds.fatal is not None:
            self.fatal = _fatal_error(rounds.fatal)
            self._accounting.stopped_early = str(self.fatal)
        tree = prepared.tree
        products = self._products()
        shift: FeedShift | None = None
        for chunk in range(len(rounds.chunks)):
            self.progress("mapping", self._accounting.read)
            base = rounds.work / f"c{chunk:06d}"
            raw, familiarity, labelled = np.load(
                base.with_suffix(".scores.npy"), allow_pickle=False
            )
            if shift is None:
                shift = keep_audit_raise(
                    check_shift(
                        self.summary, prepared.sources, prepared.options, raw, familiarity,
                        labelled,
                    ),  # fmt: skip
                    *self.audit_floor,
                    self.summary,
                )
            scores = shift.acceptance_scores(raw, familiarity).tolist()
            threshold = shift.threshold
            for (map_fields, attribute_values, conflicts), score in zip(
                _load_lines(base.with_suffix(".rows.jsonl")), scores, strict=True
            ):
                product = next(products)
                node_id, confidence, method, alternatives, reason = map_fields
                mapping = Mapping(
                    node_id, confidence, method,
                    tuple(Alternative(n, c) for n, c in alternatives), reason,
                )  # fmt: skip
                attributes = Attributes(*attribute_values)
                row = decided_row(
                    product, mapping, attributes, tuple(conflicts), score, threshold
                )
                self.candidates.append(candidate(row))
                _count(self.summary, product, row, tree)
                yield row


def _load_raw_lines(path: Path) -> Iterator[str]:
    with open(path, encoding="utf-8") as handle:
        yield from handle


@dataclass
class OnboardRounds:
    """A feed's cluster rounds, done: the parts in the work folder and their facts.

    Attributes:
        prepared: the feed's onboarding as prepared (see ``prepare_onboarding``).
        work: the work folder holding the parts.
        reading: each partition's counts (read, kept, flags, fatal), in order.
        chunks: each chunk's slices of partitions.
        fatal: the fatal feed error that stopped reading, as facts, or None.
        partitions: how many partitions, and of which kind.
    """

    prepared: PreparedOnboarding
    work: Path
    reading: list[dict[str, Any]]
    chunks: list[list[tuple[int, int, int]]]
    fatal: dict[str, Any] | None
    partitions: dict[str, Any]

    def rows(
        self, summary: OnboardSummary, reject_file: Path, progress: Callable[[str, int], None]
    ) -> _ClusterRows:
        """The feed's rows for the store phase (see ``RowsFactory``)."""
        summary.cluster = self.partitions
        return _ClusterRows(self, summary, reject_file, progress)


@contextmanager
def onboard_rounds(
    client: Any,
    prepared: PreparedOnboarding,
    *,
    on_progress: Callable[[ClusterProgress], None] | None = None,
    partition_bytes: int | None = None,
    block_records: int = BLOCK_RECORDS,
    work_dir: Path | None = None,
    mapper: Any | None = None,
) -> Iterator[OnboardRounds]:
    """Run a feed's onboarding rounds on the cluster; yield their parts until the store has them.

    Args:
        client: a ``dask.distributed.Client``.
        prepared: the feed's onboarding as prepared.
        on_progress: told where the run is after each task.
        partition_bytes: about how many bytes a byte-range partition holds (default: four
            partitions per worker, from 1 MiB).
        block_records: records per block of a feed that cannot be cut by bytes.
        work_dir: the folder shared with the workers for the parts (default: a folder in the
            project, removed at the end).
        mapper: the mapper without rules already on every worker (a future from
            :func:`send_mapper`; default: sent now).

    Yields:
        The finished rounds.

    Raises:
        ClusterError: the cluster failed.
    """
    started = time.perf_counter()
    work = (
        Path(work_dir) if work_dir is not None
        else prepared.project / f".cluster-{uuid.uuid4().hex[:8]}"
    )  # fmt: skip
    work.mkdir(parents=True, exist_ok=True)
    dashboard = getattr(client, "dashboard_link", None)
    rows_read = 0

    def progress(stage: str, done: int, total: int) -> None:
        if on_progress is not None:
            elapsed = max(time.perf_counter() - started, 1e-9)
            on_progress(
                ClusterProgress(stage, done, total, rows_read, rows_read / elapsed, dashboard)
            )

    def count_read(facts: dict[str, Any]) -> None:
        nonlocal rows_read
        rows_read += facts["read"]

    try:
        progress("loading", 0, 1)
        if mapper is None:
            mapper = send_mapper(client, prepared.mapper)
        kit = share(client, OnboardKit(prepared.rules, prepared.extractor), "kit")
        progress("loading", 1, 1)
        source = prepared.source
        size = partition_bytes or default_partition_bytes(client, prepared.feed_path)
        parts, fatal = plan_parts(source, work, size, block_records)
        parts, duplicates = find_duplicates(
            client, source.info, source.profile, parts, work, progress
        )
        folder = str(work)
        reading = _run(
            client,
            "reading",
            [
                (_reading_task, (source.info, source.profile, part, i, duplicates, folder))
                for i, part in enumerate(parts)
            ],
            progress,
            count_read,
        )
        rows_read = sum(facts["read"] for facts in reading)
        chunks = chunk_slices([facts["kept"] for facts in reading],
                              prepared.options.chunk_size)
        mapped = _run(
            client,
            "mapping",
            [(_mapping_task, (mapper, kit, folder, i, slices))
             for i, slices in enumerate(chunks)],
            progress,
        )
        if prepared.rules is not None:
            prepared.rules.conflicts += sum(facts["conflicts"] for facts in mapped)
        fatal = next((facts["fatal"] for facts in reading if facts["fatal"]), None) or fatal
        yield OnboardRounds(
            prepared=prepared,
            work=work,
            reading=reading,
            chunks=chunks,
            fatal=fatal,
            partitions={
                "partitions": len(parts),
                "kind": "byte ranges" if parts and not isinstance(parts[0], str)
                else "record blocks",
                "chunks": len(chunks),
                "dashboard": dashboard,
            },
        )
    finally:
        if work_dir is None:
            shutil.rmtree(work, ignore_errors=True)


def send_mapper(client: Any, mapper: FeedMapper) -> Any:
    """Send the mapper (model and tree, without a feed's rules) to every worker once.

    Returns:
        Its future, for :func:`onboard_rounds` of every feed mapped with it.
    """
    shared = copy.copy(mapper)
    shared.rules = None
    feed_familiarity(shared, [])  # both vocabularies computed here once, sent with the mapper
    return share(client, shared, "mapper")


@contextmanager
def run_feeds_on_cluster(
    address: str,
    prepared: list[PreparedOnboarding],
    *,
    on_progress: Callable[[str, ClusterProgress], None] | None = None,
) -> Iterator[list[OnboardRounds]]:
    """Start (or reach) one cluster and run every feed's rounds on it at once.

    The mapper goes to every worker once for all feeds; one thread per feed submits its
    rounds, so the scheduler interleaves every feed's partitions.

    Args:
        address: ``local:N`` or a scheduler address (see :func:`open_cluster`).
        prepared: the feeds' onboarding as prepared, in order.
        on_progress: called with the feed's name and where its run is.

    Yields:
        Each feed's finished rounds, in order; the parts stay until the block ends.

    Raises:
        ClusterError: the cluster cannot be started or reached.
        Exception: the first error of a feed's rounds (e.g. a worker failing every retry).
    """
    from concurrent.futures import ThreadPoolExecutor

    if not prepared:
        yield []
        return
    root = prepared[0].project / f".cluster-{uuid.uuid4().hex[:8]}"
    try:
        with open_cluster(address) as client:
            mapper = send_mapper(client, prepared[0].mapper)

            def one(index: int) -> OnboardRounds:
                feed = prepared[index]

                def progress(where: ClusterProgress) -> None:
                    if on_progress is not None:
                        on_progress(feed.name, where)

                with onboard_rounds(
                    client, feed, on_progress=progress, mapper=mapper,
                    work_dir=root / f"feed-{index:03d}",
                ) as rounds:  # fmt: skip
                    return rounds

            with ThreadPoolExecutor(max_workers=len(prepared)) as pool:
                yield list(pool.map(one, range(len(prepared))))
    finally:
        shutil.rmtree(root, ignore_errors=True)
