"""Map a feed on a dask.distributed cluster, with the same output as one process.

The feed is cut into partitions (:mod:`catmap.feeds.partition`): byte ranges of a delimited or
JSON Lines file, or blocks of raw records the coordinator reads once (XML, compressed feeds).
Four rounds of tasks run over them, each a plain function of files in a work folder:

1. **keys**: each partition reads and normalises its records and writes the 64-bit digest of
   every product id, its position and line, split into buckets by digest.
2. **duplicates**: one task per bucket sorts that bucket's ids of every partition and names
   each id's later occurrences, with the line of the first (the first one is kept, as in
   :func:`catmap.feeds.ingest.iter_products`). No process ever holds every id.
3. **pass 1**: each partition reads again, rejects the duplicates in place, applies the rules and
   the model, and writes its top-k probabilities, the exact node probabilities of the rows that
   may back off, its rows and rejects; it returns its (retailer path, node) and flag counts.
4. **pass 2**: the coordinator adds up the counts in partition order into the path consensus,
   sends it to every worker once, and each partition blends, backs off and writes its mappings.

The coordinator is the single writer: it concatenates the mapping parts in partition order,
writes every reject in order and rebuilds the accounting from them. Every part is written under
a temporary name and renamed, so a task the scheduler runs again after a lost worker replaces
its part instead of adding to it, and the coordinator reads parts only once every task is done:
no row is lost or doubled. Workers load the model, tree and rules from the project folder once
per process (they must be able to read it, e.g. on a shared disk), and read and write the work
folder, which must be shared too.

dask is imported only here and only when a cluster run starts.
"""

from __future__ import annotations

import json
import shutil
import threading
import time
import uuid
from collections import Counter
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import scipy.sparse as sp

from catmap import errors
from catmap._atomic import atomic_open, atomic_path, write_text_atomic
from catmap.classify.consensus import PathConsensus
from catmap.classify.features import product_texts
from catmap.classify.mapping import (
    CHUNK_SIZE,
    CONFIDENCE_BANDS,
    Mapper,
    MapSummary,
    _band,
    _MappingWriter,
    _parquet_schema,
    _path_facts,
    _rule_facts,
    _rule_rows,
    _second_pass,
)
from catmap.classify.rules import RuleSet, load_rules
from catmap.classify.storage import MANIFEST
from catmap.errors import CatmapError, InputError
from catmap.feeds.fieldmap import FeedProfile
from catmap.feeds.ingest import (
    DUPLICATE_ID,
    FATAL_FEED_ERRORS,
    MAX_DUPLICATE_IDS_LISTED,
    MAX_LINES_PER_DUPLICATE_ID,
    Accounting,
    IdIndex,
    ProductBuilder,
    record_excerpt,
)
from catmap.feeds.partition import (
    BLOCK_RECORDS,
    PARTITION_BYTES,
    ByteRange,
    iter_range,
    iter_record_blocks,
    plan_ranges,
)
from catmap.feeds.profiled import ProfiledFeed, open_profiled_feed
from catmap.feeds.read import FeedInfo
from catmap.feeds.writers import open_reject_writer
from catmap.jobs._project_tree import default_model_dir
from catmap.jobs.map import MapResult, language_facts, project_mapper
from catmap.project import feed_names, feed_stem, subfolder
from catmap.records import Product, Reject, SourceRecord
from catmap.tree.taxonomy import load_default_tree, load_tree

__all__ = [
    "ClusterError",
    "ClusterProgress",
    "MapSetup",
    "map_feed_on_cluster",
    "map_project_feed_on_cluster",
    "map_project_feeds_on_cluster",
    "open_cluster",
    "share",
]

# Task attempts after the first when a task fails or its worker is lost.
RETRIES = 3


class ClusterError(CatmapError):
    """The cluster cannot be reached or started, or dask is not installed."""

    exit_code = errors.EXIT_FAILURE


@dataclass(frozen=True, slots=True)
class ClusterProgress:
    """Where a cluster run is.

    Attributes:
        stage: "loading", "keys", "duplicates", "pass 1", "pass 2" or "writing" (map);
            "loading", "keys", "duplicates", "reading" or "mapping" (onboard: its tasks are
            partitions, then chunks).
        done: tasks of the stage finished.
        total: tasks of the stage.
        rows: records read so far in pass 1 (the last read figure afterwards).
        rows_per_second: ``rows`` over the time since the run started.
        dashboard: the scheduler's dashboard address, when it has one.
    """

    stage: str
    done: int
    total: int
    rows: int
    rows_per_second: float
    dashboard: str | None


@dataclass(frozen=True, slots=True)
class MapSetup:
    """What a worker needs to build the mapper and the rules (loaded once per process).

    Attributes:
        project: the project folder.
        tree_version: version of the shared tree.
        model_dir: the model folder (None: the project's, or keywords when none is trained).
        rules_file: the rules file, or None.
        tree_file: a tree file of one's own (wins over ``tree_version``), or None.
    """

    project: str
    tree_version: str
    model_dir: str | None
    rules_file: str | None
    tree_file: str | None = None


# One mapper per worker process, loaded by its first task. A Mapper keeps caches that two
# threads must not use at once: a worker with several threads takes turns (the lock), so start
# workers with one thread each (``local:N`` does; ``dask worker --nthreads 1``).
_MAPPERS: dict[tuple[str, str | None], tuple[Mapper, threading.Lock]] = {}  # by tree, model
_RULES: dict[tuple[str, str], RuleSet] = {}
_SETUP_LOCK = threading.Lock()


def _worker_setup(setup: MapSetup) -> tuple[Mapper, RuleSet, threading.Lock]:
    """The mapper, rules and mapper lock of ``setup``, loaded once per worker process.

    Mappers are kept by tree version and model folder (projects without a model share the
    tree's keywords), rules by file.
    """
    with _SETUP_LOCK:
        folder = Path(setup.model_dir) if setup.model_dir else default_model_dir(
            Path(setup.project)
        )
        uses_model = setup.model_dir is not None or (folder / MANIFEST).exists()
        which_tree = setup.tree_file or setup.tree_version
        key = (which_tree, str(folder.resolve()) if uses_model else None)
        found = _MAPPERS.get(key)
        if found is None:
            tree = (
                load_tree(setup.tree_file)
                if setup.tree_file
                else load_default_tree(setup.tree_version)
            )
            mapper, _ = project_mapper(Path(setup.project), tree, folder if uses_model else None)
            found = _MAPPERS[key] = (mapper, threading.Lock())
        mapper, lock = found
        rules = RuleSet([])
        if setup.rules_file:
            rules_key = (which_tree, setup.rules_file)
            if rules_key not in _RULES:
                _RULES[rules_key] = load_rules(Path(setup.rules_file), tree=mapper.tree)
            rules = _RULES[rules_key]
        return mapper, rules, lock


def _warm(setup: MapSetup) -> None:
    _worker_setup(setup)


# A partition: a byte range of the feed, or a block file of raw records in the work folder.
Part = ByteRange | str


def _part_name(index: int) -> str:
    return f"p{index:06d}"


def _save_npy(path: Path, array: np.ndarray[Any, Any]) -> None:
    with atomic_open(path, "wb") as handle:
        np.save(handle, array, allow_pickle=False)


def _save_npz(path: Path, matrix: sp.csr_matrix) -> None:
    with atomic_open(path, "wb") as handle:
        sp.save_npz(handle, matrix)


def _save_lines(path: Path, items: Iterator[Any] | list[Any]) -> None:
    with atomic_open(path, "w", encoding="utf-8", newline="\n") as handle:
        handle.writelines(json.dumps(item, ensure_ascii=False) + "\n" for item in items)


def _load_lines(path: Path) -> Iterator[Any]:
    with open(path, encoding="utf-8") as handle:
        for line in handle:
            yield json.loads(line)


def _reject_fields(reject: Reject) -> list[Any]:
    return [reject.reason, reject.detail, reject.line, reject.location, reject.excerpt,
            reject.product_id]


def _write_block(path: Path, block: list[SourceRecord | Reject]) -> None:
    _save_lines(
        path,
        [
            ["r", item.fields, item.line, item.location]
            if isinstance(item, SourceRecord)
            else ["x", *_reject_fields(item)]
            for item in block
        ],
    )


def _records(info: FeedInfo, part: Part) -> Iterator[SourceRecord | Reject]:
    if isinstance(part, ByteRange):
        yield from iter_range(info, part)
        return
    for item in _load_lines(Path(part)):
        if item[0] == "r":
            yield SourceRecord(item[1], item[2], item[3])
        else:
            yield Reject(*item[1:])


def _fatal_facts(error: BaseException) -> dict[str, Any]:
    assert isinstance(error, CatmapError)
    return {
        "kind": type(error).__name__,
        "message": error.message,
        "path": error.path,
        "line": error.line,
        "field": error.field,
        "product_id": error.product_id,
        "hint": error.hint,
    }


def _fatal_error(facts: dict[str, Any]) -> InputError:
    kind = getattr(errors, facts["kind"], errors.FeedFormatError)
    error: InputError = kind(
        facts["message"],
        path=facts["path"],
        line=facts["line"],
        field=facts["field"],
        product_id=facts["product_id"],
        hint=facts["hint"],
    )
    return error


def _keys_task(
    info: FeedInfo, profile: FeedProfile, part: Part, index: int, work: str, buckets: int
) -> dict[str, Any] | None:
    """Round 1: write (digest, position, line) of every product id, one file per bucket.

    Returns:
        The fatal feed error that ended the partition early, as facts, else None.
    """
    build = ProductBuilder(profile)
    ids: list[str] = []
    positions: list[int] = []
    lines: list[int] = []
    fatal = None
    try:
        for position, item in enumerate(_records(info, part)):
            if type(item) is SourceRecord:
                result = build(item)
                if type(result) is Product:
                    ids.append(result.product_id)
                    positions.append(position)
                    lines.append(item.line)
    except FATAL_FEED_ERRORS as error:
        fatal = _fatal_facts(error)
    keys = np.array(IdIndex.keys(ids), dtype=np.int64)
    table = np.stack([keys, np.array(positions, dtype=np.int64), np.array(lines, dtype=np.int64)])
    which = keys.view(np.uint64) % np.uint64(buckets)
    for bucket in range(buckets):
        _save_npy(
            Path(work) / f"keys-{_part_name(index)}-b{bucket:04d}.npy", table[:, which == bucket]
        )
    return fatal


def _duplicates_task(work: str, bucket: int, parts: int) -> dict[int, list[tuple[int, int]]]:
    """Round 2: the later occurrences of each id of one bucket, over every partition.

    Returns:
        partition → (position, line of the first occurrence) of each duplicate, in order.
    """
    tables = []
    for index in range(parts):
        table = np.load(Path(work) / f"keys-{_part_name(index)}-b{bucket:04d}.npy")
        tables.append(np.vstack([table, np.full((1, table.shape[1]), index, dtype=np.int64)]))
    if not tables:
        return {}
    keys, positions, lines, owners = np.hstack(tables)
    # Sorted by id, then by place in the feed: the first of each run of equal ids is kept.
    order = np.lexsort((positions, owners, keys))
    keys, positions, lines, owners = keys[order], positions[order], lines[order], owners[order]
    later = np.zeros(len(keys), dtype=bool)
    later[1:] = keys[1:] == keys[:-1]
    starts = np.flatnonzero(~later)
    first_line = lines[starts][np.cumsum(~later) - 1]
    found: dict[int, list[tuple[int, int]]] = {}
    for owner, position, line in zip(
        owners[later].tolist(), positions[later].tolist(), first_line[later].tolist(), strict=True
    ):
        found.setdefault(owner, []).append((position, line))
    return found


def _duplicates_of(
    duplicates: list[dict[int, list[tuple[int, int]]]], index: int
) -> dict[int, int]:
    """Position in partition ``index`` → line of the first occurrence, of each duplicate."""
    found: dict[int, int] = {}
    for bucket in duplicates:
        found.update(bucket.get(index, []))
    return found


class _PartReader:
    """The kept products of one partition, in order (iterate once).

    Rejects (the normaliser's, and the duplicates named by round 2, worded as
    :func:`catmap.feeds.ingest.iter_products` words them) are kept in :attr:`rejects` as
    fields; a fatal feed error ends the products and is kept in :attr:`fatal` as facts.
    """

    def __init__(
        self, info: FeedInfo, profile: FeedProfile, part: Part, duplicates: dict[int, int]
    ) -> None:
        self.info = info
        self.part = part
        self.build = ProductBuilder(profile)
        self.duplicates = duplicates
        self.rejects: list[list[Any]] = []
        self.read = 0
        self.kept = 0
        self.flags: Counter[str] = Counter()
        self.fatal: dict[str, Any] | None = None

    def __iter__(self) -> Iterator[Product]:
        build, duplicates, rejects, flags = self.build, self.duplicates, self.rejects, self.flags
        try:
            for position, item in enumerate(_records(self.info, self.part)):
                self.read += 1
                result = build(item) if type(item) is SourceRecord else item
                if type(result) is Reject:
                    rejects.append(_reject_fields(result))
                    continue
                assert isinstance(result, Product) and isinstance(item, SourceRecord)
                first_line = duplicates.get(position)
                if first_line is not None:
                    where = f"line {first_line}" if first_line else "earlier in the feed"
                    product_id = result.product_id
                    rejects.append(
                        _reject_fields(
                            Reject(
                                DUPLICATE_ID,
                                f"product id '{product_id}' was already seen at {where}; "
                                "the first one is kept",
                                item.line,
                                item.location,
                                record_excerpt(item),
                                product_id,
                            )
                        )
                    )
                    continue
                flags.update(result.flags)  # of kept products only, as the accounting counts
                self.kept += 1
                yield result
        except FATAL_FEED_ERRORS as error:
            self.fatal = _fatal_facts(error)

    def facts(self) -> dict[str, Any]:
        """What the coordinator adds up into the accounting (see :func:`gather_rejects`)."""
        return {"read": self.read, "kept": self.kept, "flags": dict(self.flags),
                "fatal": self.fatal}


def _pass_one_task(
    setup: MapSetup,
    info: FeedInfo,
    profile: FeedProfile,
    part: Part,
    index: int,
    duplicates: list[dict[int, list[tuple[int, int]]]],
    work: str,
    chunk_size: int,
    threshold: float,
) -> dict[str, Any]:
    """Round 3: products and rejects of one partition, the rules and the model's pass 1.

    Writes the partition's top-k arrays, the rows that may back off (positions in the
    partition) with their exact node probabilities, the rows and the rejects, as
    :func:`catmap.classify.mapping.map_feed` keeps them per chunk; returns its counts.
    """
    mapper, loaded, lock = _worker_setup(setup)
    rules = RuleSet(loaded.rules, path=loaded.path)
    idx_parts: list[np.ndarray[Any, Any]] = []
    val_parts: list[np.ndarray[Any, Any]] = []
    backing_parts: list[np.ndarray[Any, Any]] = []
    node_parts: list[sp.csr_matrix] = []
    rows: list[Any] = []
    counts: dict[str, Counter[str]] = {}
    chunk: list[Product] = []

    def flush() -> None:
        chunk_rows = _rule_rows(chunk, rules)
        with lock:
            idx, vals, backing, nodes = mapper.first_pass(product_texts(chunk), threshold)
        classes = mapper.classes
        for row, top in zip(chunk_rows, idx[:, 0].tolist(), strict=True):
            if row[2]:
                counts.setdefault(row[2], Counter())[row[3] or classes[top]] += 1
        idx_parts.append(idx)
        val_parts.append(vals)
        # Positions in the partition, not the chunk: pass 2 cuts its own chunks.
        backing_parts.append(backing.astype(np.int64) + len(rows))
        if nodes is not None:
            node_parts.append(nodes)
        rows.extend(chunk_rows)
        chunk.clear()

    reading = _PartReader(info, profile, part, _duplicates_of(duplicates, index))
    for product in reading:
        chunk.append(product)
        if len(chunk) >= chunk_size:
            flush()
    if chunk:
        flush()
    base = Path(work) / _part_name(index)
    k = idx_parts[0].shape[1] if idx_parts else 1
    _save_npy(base.with_suffix(".idx.npy"), np.vstack(idx_parts) if idx_parts else
              np.zeros((0, k), dtype=np.int32))
    _save_npy(base.with_suffix(".vals.npy"), np.vstack(val_parts) if val_parts else
              np.zeros((0, k), dtype=np.float32))
    _save_npy(base.with_suffix(".backing.npy"), np.concatenate(backing_parts) if backing_parts
              else np.zeros(0, dtype=np.int64))
    _save_npz(base.with_suffix(".nodes.npz"), sp.vstack(node_parts, format="csr") if node_parts
              else sp.csr_matrix((0, len(mapper.index.nodes))))
    _save_lines(base.with_suffix(".rows.jsonl"), rows)
    _save_lines(base.with_suffix(".rejects.jsonl"), reading.rejects)
    return {
        **reading.facts(),
        "counts": {path: list(counter.items()) for path, counter in counts.items()},
        "matched": list(rules.matched.items()),
        "conflicts": rules.conflicts,
        "conflict_examples": rules.conflict_examples,
    }


class _CountingWriter:
    """Passes rows to the part's writer and notes the order methods and departments first
    appear in (the summary breaks ties between equal counts by that order)."""

    def __init__(self, inner: _MappingWriter, mapper: Mapper) -> None:
        self.inner = inner
        self.mapper = mapper
        self.methods: dict[str, None] = {}
        self.departments: dict[str, None] = {}

    def write_rows(self, rows: list[dict[str, Any]]) -> None:
        tree = self.mapper.tree
        for row in rows:
            self.methods.setdefault(row["method"], None)
            self.departments.setdefault(tree.department(row["node_id"]).name, None)
        self.inner.write_rows(rows)


def _pass_two_task(
    setup: MapSetup,
    index: int,
    consensus: dict[str, PathConsensus],
    threshold: float,
    format: str,
    work: str,
    chunk_size: int,
) -> dict[str, Any]:
    """Round 4: blend with the path consensus, back off and write one partition's mappings."""
    mapper, _, lock = _worker_setup(setup)
    base = Path(work) / _part_name(index)
    idx = np.load(base.with_suffix(".idx.npy"), allow_pickle=False)
    vals = np.load(base.with_suffix(".vals.npy"), allow_pickle=False)
    backing = np.load(base.with_suffix(".backing.npy"), allow_pickle=False)
    nodes = sp.load_npz(base.with_suffix(".nodes.npz")).tocsr()
    rows = [tuple(row) for row in _load_lines(base.with_suffix(".rows.jsonl"))]
    summary = MapSummary(threshold=threshold, mode=mapper.method)
    target = base.with_suffix(f".mappings.{format}")

    def chunks() -> Iterator[Any]:
        for start in range(0, len(rows), chunk_size):
            end = start + chunk_size
            # The backing rows of this chunk (sorted positions) and their node probabilities;
            # None when no row may back off, as pass 1 of one process leaves it.
            low, high = np.searchsorted(backing, [start, end]).tolist()
            chunk_nodes = nodes[low:high] if high > low else None
            yield idx[start:end], vals[start:end], backing[low:high] - start, chunk_nodes, \
                rows[start:end]

    facts: dict[str, Any] = {}
    with lock, atomic_path(target) as temporary:
        # The writer commits its file on close even after an error; the part under its own
        # temporary name is then dropped, and the target left as it was.
        writer = _MappingWriter(temporary, format)
        counting = _CountingWriter(writer, mapper)
        try:
            _second_pass(chunks(), mapper, consensus, threshold, counting, summary)  # type: ignore[arg-type]
        finally:
            writer.close()
    facts["methods"] = list(counting.methods)
    facts["departments"] = list(counting.departments)
    facts.update(
        products=summary.products,
        by_method=summary.by_method,
        confidence_bands=summary.confidence_bands,
        by_department=summary.by_department,
    )
    return facts


@contextmanager
def open_cluster(address: str, *, processes: bool = True) -> Iterator[Any]:
    """Connect to a scheduler, or start a cluster on this machine, and yield its client.

    Args:
        address: ``local:N`` (a cluster of N single-threaded workers on this machine) or a
            scheduler address such as ``tcp://10.0.0.5:8786``.
        processes: ``local:N`` only: workers are processes (False: threads of this process,
            which share the interpreter lock; used by the tests).

    Yields:
        A ``dask.distributed.Client``.

    Raises:
        ClusterError: dask is not installed, the address is malformed or cannot be reached.
    """
    try:
        from distributed import Client, LocalCluster
    except ImportError as exc:
        raise ClusterError(
            "dask.distributed is not installed",
            hint='install the cluster extra: pip install "catmap[cluster]"',
        ) from exc
    if address.startswith("local:"):
        count = address.removeprefix("local:")
        if not count.isdigit() or int(count) < 1:
            raise ClusterError(
                f"'{address}' is not a local cluster size",
                field="--cluster",
                hint="use local:N with N workers, e.g. local:2",
            )
        try:
            cluster = LocalCluster(
                n_workers=int(count),
                threads_per_worker=1,
                processes=processes,
                dashboard_address=":0",
                silence_logs=40,
            )
        except (OSError, RuntimeError) as exc:
            raise ClusterError(
                f"cannot start {count} local workers: {exc}",
                field="--cluster",
                hint="try fewer workers, or start them with `dask scheduler` / `dask worker`",
            ) from exc
        try:
            with Client(cluster) as client:
                yield client
        finally:
            cluster.close()
        return
    if "://" not in address:
        raise ClusterError(
            f"'{address}' is not a scheduler address",
            field="--cluster",
            hint="use tcp://HOST:PORT (the address `dask scheduler` prints) or local:N",
        )
    try:
        client = Client(address, timeout="20s")
    except OSError as exc:
        raise ClusterError(
            f"cannot reach the scheduler at {address}: {exc}",
            field="--cluster",
            hint="start it with `dask scheduler` and check the address and port",
        ) from exc
    with client:
        yield client


def _given(value: Any) -> Any:
    return value


def share(client: Any, value: Any, name: str) -> Any:
    """Put ``value`` on the cluster for every task of the run that needs it; return its future.

    The value is the result of a task rather than scattered data: workers fetch it from one
    another, and when every worker holding it is lost the scheduler computes it again from
    the task (scattered data would be lost for good, and the run with it).

    Args:
        client: a ``dask.distributed.Client``.
        value: what the tasks need (the model, the duplicates, the path consensus...).
        name: a word for the task's key.
    """
    import warnings

    with warnings.catch_warnings():
        # Sending the model once in the task is the point; dask warns about large graphs.
        warnings.simplefilter("ignore", UserWarning)
        return client.submit(
            _given, value, key=f"catmap-{name}-{uuid.uuid4().hex[:8]}", pure=False,
            retries=RETRIES,
        )


def _run(
    client: Any,
    stage: str,
    calls: list[tuple[Callable[..., Any], tuple[Any, ...]]],
    progress: Callable[[str, int, int], None],
    on_result: Callable[[Any], None] | None = None,
) -> list[Any]:
    """Submit one round of tasks, report each one done, and return their results in order."""
    from distributed import as_completed

    run = uuid.uuid4().hex[:8]
    futures = [
        client.submit(function, *args, key=f"catmap-{stage.replace(' ', '')}-{run}-{i}",
                      retries=RETRIES, pure=False)
        for i, (function, args) in enumerate(calls)
    ]
    done = 0
    progress(stage, done, len(futures))
    for future in as_completed(futures):
        if on_result is not None:
            on_result(future.result())
        done += 1
        progress(stage, done, len(futures))
    return list(client.gather(futures))


def map_feed_on_cluster(
    feed: Path,
    out_dir: Path,
    *,
    client: Any,
    project: Path,
    tree_version: str = "1",
    tree_file: Path | None = None,
    model_dir: Path | None = None,
    rules_file: Path | None = None,
    backoff_threshold: float = 0.5,
    format: str = "jsonl",
    partition_bytes: int | None = None,
    block_records: int = BLOCK_RECORDS,
    chunk_size: int = CHUNK_SIZE,
    work_dir: Path | None = None,
    on_progress: Callable[[ClusterProgress], None] | None = None,
    top_paths: int = 10,
) -> tuple[dict[str, Any], InputError | None]:
    """Map a feed over the workers of ``client``; the same files and facts as one process.

    Args:
        feed: the feed file (every worker must be able to read it at this path).
        out_dir: folder for mappings, rejects and ``accounting.json`` (written here only).
        client: a ``dask.distributed.Client`` (see :func:`open_cluster`).
        project: the project folder (profile, rules, model), readable by every worker.
        tree_version: version of the shared category tree.
        tree_file: a tree file of one's own, readable by every worker at this path (wins
            over ``tree_version``).
        model_dir: the model folder (default: the project's, keywords only when none).
        rules_file: rules applied first (default: ``<project>/rules/<feed name>.rules``).
        backoff_threshold: below this confidence, answer the deepest sure parent node.
        format: "jsonl", "csv" or "parquet".
        partition_bytes: about how many bytes each byte-range partition holds (default: four
            partitions per worker, between 1 MiB and :data:`PARTITION_BYTES`).
        block_records: records per block for feeds that cannot be cut by bytes.
        chunk_size: products scored at a time inside a partition.
        work_dir: the folder shared with the workers for the parts (default: a folder in
            ``out_dir``, removed at the end).
        on_progress: told where the run is after each task.
        top_paths: how many retailer paths the facts list.

    Returns:
        The facts (as :func:`catmap.jobs.map.map_project_feed` gives them, plus the cluster's
        partitions and dashboard), and the fatal feed error that stopped reading early.
    """
    started = time.perf_counter()
    tree = load_tree(tree_file) if tree_file is not None else load_default_tree(tree_version)
    folder = model_dir if model_dir is not None else default_model_dir(project)
    uses_model = model_dir is not None or (folder / MANIFEST).exists()
    if rules_file is None:
        default_rules = subfolder(project, "rules", create=False) / f"{feed_stem(feed)}.rules"
        rules_file = default_rules if default_rules.exists() else None
    rules = load_rules(rules_file, tree=tree) if rules_file is not None else RuleSet([])
    setup = MapSetup(
        str(Path(project).resolve()),
        tree_version,
        str(Path(model_dir).resolve()) if model_dir is not None else None,
        str(Path(rules_file).resolve()) if rules_file is not None else None,
        str(Path(tree_file).resolve()) if tree_file is not None else None,
    )
    source = open_profiled_feed(feed, project)
    info, profile = source.info, source.profile
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    work = Path(work_dir) if work_dir is not None else out / f".cluster-{uuid.uuid4().hex[:8]}"
    work.mkdir(parents=True, exist_ok=True)
    dashboard = getattr(client, "dashboard_link", None)
    rows_read = 0

    def count_read(read: int) -> None:
        nonlocal rows_read
        rows_read += read

    def progress(stage: str, done: int, total: int) -> None:
        if on_progress is not None:
            elapsed = max(time.perf_counter() - started, 1e-9)
            on_progress(
                ClusterProgress(stage, done, total, rows_read, rows_read / elapsed, dashboard)
            )

    try:
        if partition_bytes is None:
            partition_bytes = default_partition_bytes(client, feed)
        # Every worker loads the model, tree and rules once, all at the same time, before the
        # first round (instead of inside its first pass-1 task).
        progress("loading", 0, 1)
        client.run(_warm, setup)
        progress("loading", 1, 1)
        parts, fatal = plan_parts(source, work, partition_bytes, block_records)
        summary = _map_parts(
            client, setup, info, profile, parts, work, chunk_size, backoff_threshold, format,
            progress, count_read,
        )
        fatal = summary.pop("fatal") or fatal
        rows_read = summary["accounting_read"]
        progress("writing", 0, 1)
        result = _write_outputs(out, work, summary, format, tree, rules, top_paths, fatal)
        result.threshold = backoff_threshold
        result.mode = "model" if uses_model else "cold_start"
        progress("writing", 1, 1)
    finally:
        if work_dir is None:
            shutil.rmtree(work, ignore_errors=True)
    facts: dict[str, Any] = {
        "feed": str(feed),
        "model": str(folder) if uses_model else None,
        **result.to_dict(),
        "cluster": {"partitions": summary["partitions"], "dashboard": dashboard},
        **language_facts(source, tree),
    }
    return facts, _fatal_error(fatal) if fatal is not None else None


def default_partition_bytes(client: Any, feed: Path) -> int:
    """Four partitions per worker, between 1 MiB and :data:`PARTITION_BYTES`."""
    workers = max(1, len(client.scheduler_info().get("workers", {})))
    return max(2**20, min(PARTITION_BYTES, feed.stat().st_size // (4 * workers) + 1))


def plan_parts(
    source: ProfiledFeed, work: Path, partition_bytes: int, block_records: int
) -> tuple[list[Part], dict[str, Any] | None]:
    """Cut a feed into partitions: byte ranges, else blocks of records written to ``work``.

    Returns:
        The partitions in feed order, and the fatal feed error met while cutting blocks (the
        blocks before it are kept), as facts.
    """
    ranges = plan_ranges(source.info, target_bytes=partition_bytes)
    if ranges is not None:
        return list(ranges), None
    parts: list[Part] = []
    try:
        for block in iter_record_blocks(source.feed, size=block_records):
            path = work / f"block-{len(parts):06d}.jsonl"
            _write_block(path, block)
            parts.append(str(path))
    except FATAL_FEED_ERRORS as error:
        return parts, _fatal_facts(error)
    return parts, None


def find_duplicates(
    client: Any,
    info: FeedInfo,
    profile: FeedProfile,
    parts: list[Part],
    work: Path,
    progress: Callable[[str, int, int], None],
) -> tuple[list[Part], Any]:
    """Rounds 1 and 2: the later occurrences of every product id, over every partition.

    Returns:
        The partitions to read (those after a fatal feed error are left out: the feed is not
        read past it), and the duplicates, on every worker (a future).
    """
    folder = str(work)
    buckets = max(1, min(len(parts), 64))
    fatals = _run(
        client,
        "keys",
        [(_keys_task, (info, profile, part, i, folder, buckets)) for i, part in enumerate(parts)],
        progress,
    )
    stop = next((i for i, fatal in enumerate(fatals) if fatal is not None), None)
    if stop is not None:
        parts = parts[: stop + 1]
    duplicates = _run(
        client,
        "duplicates",
        [(_duplicates_task, (folder, bucket, len(parts))) for bucket in range(buckets)],
        progress,
    )
    return parts, share(client, duplicates, "duplicates")


def gather_rejects(work: Path, facts: list[dict[str, Any]], writer: Any) -> Accounting:
    """Write every partition's rejects in order and rebuild the feed's accounting from them.

    Args:
        work: the work folder holding ``<part>.rejects.jsonl``.
        facts: each partition's counts (read, kept, flags), in order.
        writer: the reject writer (``open_reject_writer``), left open.

    Returns:
        The accounting, as :func:`catmap.feeds.ingest.iter_products` keeps it.
    """
    accounting = Accounting()
    duplicates = accounting.duplicate_ids
    for index, first in enumerate(facts):
        accounting.read += first["read"]
        accounting.kept += first["kept"]
        for flag, count in first["flags"].items():
            accounting.by_flag[flag] = accounting.by_flag.get(flag, 0) + count
        for fields in _load_lines(work / f"{_part_name(index)}.rejects.jsonl"):
            reject = Reject(*fields)
            accounting.count_reject(reject.reason)
            if reject.reason == DUPLICATE_ID:
                lines = duplicates.get(reject.product_id)
                if lines is None:
                    if len(duplicates) < MAX_DUPLICATE_IDS_LISTED:
                        duplicates[reject.product_id] = [reject.line]
                elif len(lines) < MAX_LINES_PER_DUPLICATE_ID:
                    lines.append(reject.line)
            writer.write(reject)
    return accounting


def _map_parts(
    client: Any,
    setup: MapSetup,
    info: FeedInfo,
    profile: FeedProfile,
    parts: list[Part],
    work: Path,
    chunk_size: int,
    threshold: float,
    format: str,
    progress: Callable[[str, int, int], None],
    on_read: Callable[[int], None],
) -> dict[str, Any]:
    """Run the four rounds; return what the coordinator needs to write the outputs."""
    folder = str(work)
    parts, shared_duplicates = find_duplicates(client, info, profile, parts, work, progress)
    firsts = _run(
        client,
        "pass 1",
        [
            (_pass_one_task, (setup, info, profile, part, i, shared_duplicates, folder,
                              chunk_size, threshold))
            for i, part in enumerate(parts)
        ],
        progress,
        lambda first: on_read(first["read"]),
    )
    counts: dict[str, Counter[str]] = {}
    for first in firsts:
        for path, pairs in first["counts"].items():
            counter = counts.setdefault(path, Counter())
            for node, count in pairs:
                counter[node] += count
    consensus = _consensus(counts)
    shared = share(client, consensus, "consensus")
    seconds = _run(
        client,
        "pass 2",
        [
            (_pass_two_task, (setup, i, shared, threshold, format, folder, chunk_size))
            for i in range(len(parts))
        ],
        progress,
    )
    return {
        "parts": len(parts),
        "partitions": {
            "count": len(parts),
            "kind": "byte ranges" if parts and isinstance(parts[0], ByteRange) else "record blocks",
        },
        "firsts": firsts,
        "seconds": seconds,
        "consensus": consensus,
        "fatal": firsts[-1]["fatal"] if firsts and firsts[-1]["fatal"] else None,
        "accounting_read": sum(first["read"] for first in firsts),
    }


def _consensus(counts: dict[str, Counter[str]]) -> dict[str, PathConsensus]:
    """The path consensus from counts added in feed order (as path_consensus makes it)."""
    result = {}
    for path, counter in sorted(counts.items(), key=lambda item: (-item[1].total(), item[0])):
        total = counter.total()
        shares = {node: count / total for node, count in counter.most_common()}
        result[path] = PathConsensus(path, total, shares)
    return result


def _ordered_counts(totals: Counter[str], order: list[str]) -> dict[str, int]:
    """``totals`` most frequent first, ties in first-seen order (as Counter.most_common)."""
    return dict(Counter({key: totals[key] for key in order}).most_common())


def _write_outputs(
    out: Path,
    work: Path,
    summary: dict[str, Any],
    format: str,
    tree: Any,
    rules: RuleSet,
    top_paths: int,
    fatal: dict[str, Any] | None,
) -> MapSummary:
    """The coordinator's writing: mappings, rejects and the accounting, in partition order."""
    ext = {"jsonl": "jsonl", "csv": "csv", "parquet": "parquet"}[format]
    mappings_path = out / f"mappings.{ext}"
    rejects_path = out / ("rejects.csv" if format == "csv" else "rejects.jsonl")
    accounting_path = out / "accounting.json"
    parts = summary["parts"]
    rejects = open_reject_writer(rejects_path, "csv" if format == "csv" else "jsonl")
    try:
        accounting = gather_rejects(work, summary["firsts"], rejects)
    finally:
        rejects.close()
    if fatal is not None:
        accounting.stopped_early = str(_fatal_error(fatal))
    _concatenate(mappings_path, [work / f"{_part_name(i)}.mappings.{ext}" for i in range(parts)],
                 format)

    result = MapSummary(threshold=0.5, mode="model")
    seconds = summary["seconds"]
    methods: Counter[str] = Counter()
    departments: Counter[str] = Counter()
    method_order: dict[str, None] = {}
    department_order: dict[str, None] = {}
    bands: Counter[str] = Counter()
    for second in seconds:
        methods.update(second["by_method"])
        departments.update(second["by_department"])
        bands.update(second["confidence_bands"])
        method_order.update(dict.fromkeys(second["methods"]))
        department_order.update(dict.fromkeys(second["departments"]))
    result.products = sum(methods.values())
    result.by_method = _ordered_counts(methods, list(method_order))
    result.confidence_bands = {
        _band(low): bands.get(_band(low), 0) for low, _ in CONFIDENCE_BANDS
    }
    result.by_department = _ordered_counts(departments, list(department_order))
    consensus: dict[str, PathConsensus] = summary["consensus"]
    result.retailer_paths = [_path_facts(c, tree) for c in list(consensus.values())[:top_paths]]
    for first in summary["firsts"]:
        for line, count in first["matched"]:
            rules.matched[line] = rules.matched.get(line, 0) + count
        rules.conflicts += first["conflicts"]
        room = 20 - len(rules.conflict_examples)
        rules.conflict_examples.extend(
            (pid, line, list(others)) for pid, line, others in first["conflict_examples"][:room]
        )
    result.rules = _rule_facts(rules)
    result.accounting = accounting.to_dict()
    result.outputs = {
        "mappings": str(mappings_path),
        "rejects": str(rejects_path),
        "accounting": str(accounting_path),
    }
    facts = {**accounting.to_dict(), "outputs": result.outputs, "format": format}
    write_text_atomic(accounting_path, json.dumps(facts, ensure_ascii=False, indent=2) + "\n")
    return result


def _concatenate(target: Path, parts: list[Path], format: str) -> None:
    """Join the mapping parts into one file, in order (the CSV header once)."""
    if format == "parquet":
        import pyarrow.parquet as pq

        with atomic_path(target) as temporary:
            writer = None
            for part in parts:
                table = pq.read_table(part)
                if writer is None:
                    writer = pq.ParquetWriter(temporary, table.schema)
                if table.num_rows or part is parts[-1]:
                    writer.write_table(table)
            if writer is None:
                pq.write_table(_parquet_schema().empty_table(), temporary)
            else:
                writer.close()
        return
    with atomic_open(target, "wb") as handle:
        for number, part in enumerate(parts):
            with open(part, "rb") as source:
                if format == "csv" and number > 0:
                    source.readline()  # each part starts with the header; keep the first
                shutil.copyfileobj(source, handle, 1024 * 1024)


def map_project_feed_on_cluster(
    feed: Path,
    out_dir: Path,
    *,
    cluster: str,
    project: Path,
    tree_version: str = "1",
    tree_file: Path | None = None,
    model_dir: Path | None = None,
    rules_file: Path | None = None,
    backoff_threshold: float = 0.5,
    format: str = "jsonl",
    on_progress: Callable[[ClusterProgress], None] | None = None,
) -> MapResult:
    """``catmap map --cluster``: connect to (or start) the cluster and map the feed on it.

    Args:
        feed: the feed file.
        out_dir: folder for mappings, rejects and ``accounting.json``.
        cluster: ``local:N`` or a scheduler address (see :func:`open_cluster`).
        project: the project folder (profile, rules, model).
        tree_version: version of the shared category tree.
        tree_file: a tree file of one's own (wins over ``tree_version``).
        model_dir: the model folder (default: the project's, keywords only when none).
        rules_file: rules applied first (default: ``<project>/rules/<feed name>.rules``).
        backoff_threshold: below this confidence, answer the deepest sure parent node.
        format: file format of the mappings.
        on_progress: told where the run is after each task.

    Returns:
        The facts (with the cluster's partitions and dashboard) and the fatal feed error, if
        reading stopped early.

    Raises:
        ClusterError: dask is missing, or the cluster cannot be started or reached.
    """
    with open_cluster(cluster) as client:
        facts, error = map_feed_on_cluster(
            feed,
            out_dir,
            client=client,
            project=project,
            tree_version=tree_version,
            tree_file=tree_file,
            model_dir=model_dir,
            rules_file=rules_file,
            backoff_threshold=backoff_threshold,
            format=format,
            on_progress=on_progress,
        )
    return MapResult(facts, error)


def map_project_feeds_on_cluster(
    feeds: list[Path],
    out_dir: Path,
    *,
    cluster: str,
    project: Path,
    on_progress: Callable[[str, ClusterProgress], None] | None = None,
    **options: Any,
) -> list[MapResult]:
    """``catmap map --cluster FEED FEED...``: map several feeds at once on one cluster.

    The cluster starts (or is reached) once; one thread per feed submits that feed's rounds, so
    the scheduler interleaves every feed's partitions. Each feed's outputs go to
    ``<out_dir>/<feed name>/`` and are those of mapping it alone.

    Args:
        feeds: the feed files (their names must differ).
        out_dir: the folder that gets one folder per feed.
        cluster: ``local:N`` or a scheduler address (see :func:`open_cluster`).
        project: the project folder (profiles, rules, model).
        on_progress: called with the feed's name and where its run is.
        options: as :func:`map_feed_on_cluster` takes them (tree version, model, rules,
            back-off threshold, format).

    Returns:
        One result per feed, in order.

    Raises:
        InputError: two feeds have the same name.
        ClusterError: dask is missing, or the cluster cannot be started or reached.
    """
    from concurrent.futures import ThreadPoolExecutor

    names = feed_names(feeds, verb="map")
    with open_cluster(cluster) as client:

        def one(index: int) -> MapResult:
            name = names[index]

            def progress(where: ClusterProgress) -> None:
                if on_progress is not None:
                    on_progress(name, where)

            facts, error = map_feed_on_cluster(
                feeds[index], out_dir / name, client=client, project=project,
                on_progress=progress, **options,
            )  # fmt: skip
            return MapResult(facts, error)

        with ThreadPoolExecutor(max_workers=max(1, len(feeds))) as pool:
            return list(pool.map(one, range(len(feeds))))
