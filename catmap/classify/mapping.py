"""Map a whole feed: read → normalise → rules → model (or keywords) → consensus → back-off → write.

Streaming in chunks. Pass 1 reads the feed, applies the rules, and has worker processes compute
each chunk's class probabilities (the featurisation and the sparse products are the costly part;
a feed of one chunk is scored in this process, no worker is forked for it);
it keeps only each product's ``TOP_K`` most probable classes in a temporary folder and counts
the retailer-path consensus. Pass 2 blends each product with its path's share vector, backs off,
and writes the mappings. Memory stays flat in feed size apart from the per-path counts.

A back-off answer's confidence is its node's probability: the sum over *every* class under it,
not over the top classes kept. So pass 1 also keeps, for each product that may back off (its
best class, even after the largest possible path blend, below the threshold), the exact
probability of every node of the tree (entries below :data:`NODE_FLOOR` left out); pass 2
blends those with the path's share vector, as it blends the classes. Without a blend these are
the confidences ``catmap evaluate`` gives.
"""

from __future__ import annotations

import csv
import json
import multiprocessing
import tempfile
from collections import Counter, deque
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

import numpy as np
import scipy.sparse as sp

from catmap import _collector
from catmap._atomic import AtomicFile, write_text_atomic
from catmap._iterate import chunked
from catmap.classify.backoff import NodeIndex, backoff_rows, choose_nodes, keep_leaf_answers
from catmap.classify.consensus import MIN_PRODUCTS, PathConsensus, PathCounts
from catmap.classify.features import ProductTexts, product_texts
from catmap.classify.keywords import KeywordMapper
from catmap.classify.model import CategoryModel
from catmap.classify.rules import RuleSet
from catmap.feeds.ingest import FATAL_FEED_ERRORS
from catmap.feeds.profiled import ProfiledFeed
from catmap.feeds.writers import neutralise_cell, open_reject_writer
from catmap.records import Product, Reject
from catmap.tree.taxonomy import CategoryTree

__all__ = ["MAPPING_COLUMNS", "CONFIDENCE_BANDS", "MapSummary", "Mapper", "map_feed"]

TOP_K = 10
# Node probabilities below this are not kept for pass 2 (they can neither reach a threshold nor
# change a rounded confidence).
NODE_FLOOR = 1e-9
# Pass 1 of one chunk: top-k class columns and probabilities, the rows that may back off and
# their node probabilities (None when no row may).
_Scored = tuple[
    np.ndarray[Any, Any], np.ndarray[Any, Any], np.ndarray[Any, Any], sp.csr_matrix | None
]
CHUNK_SIZE = 20_000
SCORE_BATCH = 20_000
CONFIDENCE_BANDS = ((0.0, 0.5), (0.5, 0.8), (0.8, 0.95), (0.95, 1.0))
MAPPING_COLUMNS = (
    "product_id",
    "title",
    "node_id",
    "node_path",
    "confidence",
    "method",
    "alt1_node",
    "alt1_confidence",
    "alt2_node",
    "alt2_confidence",
    "alt3_node",
    "alt3_confidence",
    "reason",
)


class Mapper:
    """Class probabilities for product texts, from a trained model or from keywords alone.

    Args:
        tree: the category tree.
        model: a trained model, or None for cold start (keywords only).
        consensus_weight: weight of the retailer-path share vector in pass 2.
    """

    def __init__(
        self,
        tree: CategoryTree,
        model: CategoryModel | None = None,
        *,
        consensus_weight: float = 0.0,
    ) -> None:
        self.tree = tree
        self.model = model
        self.consensus_weight = consensus_weight
        if model is not None:
            model.prepare()
            self.classes: list[str] = model.classes_.tolist()
            self.keywords: KeywordMapper | None = None
        else:
            self.keywords = KeywordMapper(tree=tree).fit()
            self.classes = self.keywords.classes_.tolist()
        self.method = "model" if model is not None else "cold_start"
        self.index = NodeIndex(tree, self.classes)
        self.column = {c: i for i, c in enumerate(self.classes)}
        # The model lives as long as a program: out of the collector's rounds from here on.
        _collector.settle()

    def predict_proba(self, texts: ProductTexts) -> np.ndarray[Any, Any]:
        """Return (n, classes) probabilities."""
        if self.model is not None:
            return self.model.predict_proba(texts)
        assert self.keywords is not None
        return self.keywords.predict_proba(texts)

    def top_k(
        self, texts: ProductTexts, k: int = TOP_K
    ) -> tuple[np.ndarray[Any, Any], np.ndarray[Any, Any]]:
        """Return the k most probable class columns and their probabilities, best first.

        Rows are scored in batches of :data:`SCORE_BATCH`: the dense (rows, classes) arrays of
        the blend stay small, whatever the chunk size.
        """
        parts = []
        for start in range(0, len(texts), SCORE_BATCH):
            rows = range(start, min(start + SCORE_BATCH, len(texts)))
            parts.append(self._top_k(texts.subset(rows) if len(texts) > SCORE_BATCH else texts, k))
        if not parts:
            empty = np.zeros((0, k), dtype=np.int32)
            return empty, empty.astype(np.float32)
        return np.vstack([i for i, _ in parts]), np.vstack([v for _, v in parts])

    def node_probabilities(self, texts: ProductTexts) -> np.ndarray[Any, Any]:
        """Return (n, nodes) probabilities of every node (columns as ``index.nodes``), exact.

        A node's probability is the sum of its classes'; the classes of a department the
        model did not score share that department's probability evenly (as in
        :meth:`CategoryModel.predict_proba`), so they are added by count, without the dense
        class matrix.
        """
        if self.model is None:
            assert self.keywords is not None
            return np.asarray(self.keywords.predict_proba(texts) @ self.index.matrix)
        matrix, rest, floor = self.model._sparse_with_rest(texts)
        scored = np.asarray((matrix @ self.index.matrix).toarray())
        return scored + np.concatenate([rest, floor[:, None]], axis=1) @ self._group_nodes()

    def _group_nodes(self) -> np.ndarray[Any, Any]:
        # (groups + 1, nodes): how many classes of each group (the last: no group) lie under
        # each node.
        cached: np.ndarray[Any, Any] | None = self.__dict__.get("_group_node_counts")
        if cached is None:
            assert self.model is not None
            class_group = self.model._layout().class_group
            n_groups = len(self.model.groups_) + 1
            membership = sp.csr_matrix(
                (np.ones(len(class_group)), (np.arange(len(class_group)), class_group)),
                shape=(len(class_group), n_groups),
            )
            cached = np.asarray((membership.T @ self.index.matrix).toarray())
            self.__dict__["_group_node_counts"] = cached
        return cached

    def first_pass(self, texts: ProductTexts, threshold: float) -> _Scored:
        """Pass 1 of :func:`map_feed` for one chunk: top-k classes, and node probabilities of
        the rows that may back off.

        A row may back off when its best class is below the threshold after the largest blend
        the path consensus can make, ``(1 - consensus_weight) · p``.
        """
        idx, vals = self.top_k(texts, TOP_K)
        rows = np.flatnonzero((1.0 - self.consensus_weight) * vals[:, 0] < threshold)
        nodes: sp.csr_matrix | None = None
        if len(rows):
            dense = self.node_probabilities(texts.subset(rows))
            dense[dense < NODE_FLOOR] = 0.0
            nodes = sp.csr_matrix(dense)
        return idx, vals, rows, nodes

    def _top_k(
        self, texts: ProductTexts, k: int
    ) -> tuple[np.ndarray[Any, Any], np.ndarray[Any, Any]]:
        if self.model is not None:
            return self.model.top_k(texts, k)
        p = self.predict_proba(texts)
        k = min(k, p.shape[1])
        idx = np.argpartition(-p, k - 1, axis=1)[:, :k]
        vals = np.take_along_axis(p, idx, axis=1)
        order = np.argsort(-vals, axis=1)
        return (
            np.take_along_axis(idx, order, axis=1).astype(np.int32),
            np.take_along_axis(vals, order, axis=1).astype(np.float32),
        )


# The mapper a worker process uses: set before the pool forks, so it is shared, not copied.
_WORKER_MAPPER: Mapper | None = None


def _fork_pool(workers: int) -> Any:
    """Start ``workers`` processes forked from this one (they share the loaded model)."""
    return multiprocessing.get_context("fork").Pool(workers)


def _worker_first_pass(
    fields: tuple[list[str], list[str], list[str], list[str]], threshold: float
) -> _Scored:
    assert _WORKER_MAPPER is not None
    return _WORKER_MAPPER.first_pass(ProductTexts(*fields), threshold)


@dataclass
class MapSummary:
    """The facts of a mapping run (what ``catmap map`` prints)."""

    products: int = 0
    by_method: dict[str, int] = field(default_factory=dict)
    confidence_bands: dict[str, int] = field(default_factory=dict)
    by_department: dict[str, int] = field(default_factory=dict)
    retailer_paths: list[dict[str, Any]] = field(default_factory=list)
    rules: dict[str, Any] = field(default_factory=dict)
    accounting: dict[str, Any] = field(default_factory=dict)
    outputs: dict[str, str] = field(default_factory=dict)
    threshold: float = 0.5
    mode: str = "model"

    def to_dict(self) -> dict[str, Any]:
        """Return the facts as JSON-ready values."""
        return dict(self.__dict__)


class _MappingWriter:
    """Write mapping rows as JSON Lines, CSV (formula-safe) or Parquet (one row group a chunk)."""

    def __init__(self, path: Path, format: str) -> None:
        self.path, self.format = path, format
        self._handle: IO[str] | None = None
        self._parquet: Any = None
        self._target = AtomicFile(path)
        if format == "jsonl":
            self._handle = self._target.open("w", encoding="utf-8", newline="\n")
        elif format == "csv":
            self._handle = self._target.open("w", encoding="utf-8", newline="")
            self._csv = csv.writer(self._handle)
            self._csv.writerow(MAPPING_COLUMNS)

    def write_rows(self, rows: list[dict[str, Any]]) -> None:
        if self.format == "jsonl":
            assert self._handle is not None
            self._handle.writelines(json.dumps(r, ensure_ascii=False) + "\n" for r in rows)
        elif self.format == "csv":
            for r in rows:
                self._csv.writerow(
                    [neutralise_cell("" if r[c] is None else str(r[c])) for c in MAPPING_COLUMNS]
                )
        elif rows:
            import pyarrow as pa
            import pyarrow.parquet as pq

            table = pa.Table.from_pylist(rows, schema=_parquet_schema())
            if self._parquet is None:
                self._parquet = pq.ParquetWriter(str(self._target.temporary), table.schema)
            self._parquet.write_table(table)

    def close(self) -> None:
        if self._handle is not None:
            self._handle.close()
        if self.format == "parquet":
            import pyarrow.parquet as pq

            if self._parquet is None:
                pq.write_table(_parquet_schema().empty_table(), str(self._target.temporary))
            else:
                self._parquet.close()
        self._target.commit()


def _parquet_schema() -> Any:
    import pyarrow as pa

    types = {
        "confidence": pa.float64(),
        "alt1_confidence": pa.float64(),
        "alt2_confidence": pa.float64(),
        "alt3_confidence": pa.float64(),
    }
    return pa.schema([(c, types.get(c, pa.string())) for c in MAPPING_COLUMNS])


def _chunks(
    items: Iterable[Product | Reject],
    size: int,
    on_reject: Callable[[Reject], None],
    stopped: list[BaseException],
) -> Iterator[list[Product]]:
    """Chunks of products; a fatal feed error ends the stream and lands in ``stopped``.

    The error is caught below the chunker so that the last, partial chunk (the products read
    before the error) is still yielded and mapped.
    """

    def products() -> Iterator[Product]:
        try:
            for item in items:
                if isinstance(item, Reject):
                    on_reject(item)
                else:
                    yield item
        except FATAL_FEED_ERRORS as error:
            stopped.append(error)

    return chunked(products(), size)


def _band(confidence: float) -> str:
    for low, high in CONFIDENCE_BANDS:
        if confidence < high:
            return f"{low:.2f}-{high:.2f}"
    low, high = CONFIDENCE_BANDS[-1]
    return f"{low:.2f}-{high:.2f}"


# Pass-1 results of at most this many products stay in memory; past it they go to a temporary
# folder (flat memory whatever the feed size).
IN_MEMORY_PRODUCTS = 200_000

# What pass 2 needs of a product: (product_id, title, retailer path, rule node, rule reason).
_Row = tuple[str, str, str, str, str]
# One chunk's pass-1 results: top-k class columns, their probabilities, the rows that may back
# off and their node probabilities, the rows.
_Chunk = tuple[
    np.ndarray[Any, Any],
    np.ndarray[Any, Any],
    np.ndarray[Any, Any],
    sp.csr_matrix | None,
    list[_Row],
]


class _PassOneStore:
    """Each chunk's top-k arrays and rows, in memory up to a budget, then in a temporary folder."""

    def __init__(self, folder: Path, budget: int | None = None) -> None:
        self.folder = folder
        self.budget = IN_MEMORY_PRODUCTS if budget is None else budget
        self.held = 0
        self._chunks: list[_Chunk | Path] = []

    def add(self, scored: _Scored, rows: list[_Row]) -> None:
        """Keep one chunk's results (in order)."""
        idx, vals, backing, nodes = scored
        if self.held + len(rows) <= self.budget:
            self.held += len(rows)
            self._chunks.append((idx, vals, backing, nodes, rows))
            return
        base = self.folder / f"chunk-{len(self._chunks):06d}"
        np.save(base.with_suffix(".idx.npy"), idx, allow_pickle=False)
        np.save(base.with_suffix(".vals.npy"), vals, allow_pickle=False)
        np.save(base.with_suffix(".backing.npy"), backing, allow_pickle=False)
        if nodes is not None:
            sp.save_npz(base.with_suffix(".nodes.npz"), nodes)
        base.with_suffix(".jsonl").write_text(
            "".join(json.dumps(r, ensure_ascii=False) + "\n" for r in rows), encoding="utf-8"
        )
        self._chunks.append(base)

    def chunks(self) -> Iterator[_Chunk]:
        """Yield the chunks back in order, reading spilt ones from disk."""
        for chunk in self._chunks:
            if not isinstance(chunk, Path):
                yield chunk
                continue
            idx = np.load(chunk.with_suffix(".idx.npy"), allow_pickle=False)
            vals = np.load(chunk.with_suffix(".vals.npy"), allow_pickle=False)
            backing = np.load(chunk.with_suffix(".backing.npy"), allow_pickle=False)
            node_file = chunk.with_suffix(".nodes.npz")
            nodes = sp.load_npz(node_file).tocsr() if node_file.exists() else None
            with open(chunk.with_suffix(".jsonl"), encoding="utf-8") as handle:
                rows: list[_Row] = [tuple(json.loads(line)) for line in handle]
            yield idx, vals, backing, nodes, rows


def map_feed(
    source: ProfiledFeed,
    out_dir: str | Path,
    *,
    mapper: Mapper,
    rules: RuleSet | None = None,
    threshold: float = 0.5,
    format: str = "jsonl",
    chunk_size: int = CHUNK_SIZE,
    workers: int = 2,
    on_progress: Callable[[int], None] | None = None,
    top_paths: int = 10,
    into: MapSummary | None = None,
) -> MapSummary:
    """Map every product of a feed and write mappings, rejects and the accounting to ``out_dir``.

    Args:
        source: the feed opened with its profile; its accounting is filled in place.
        out_dir: output folder (created).
        mapper: the model (or cold-start keywords).
        rules: per-feed rules, applied first.
        threshold: back-off threshold.
        format: "jsonl", "csv" or "parquet" for the mappings.
        chunk_size: products per chunk.
        workers: processes computing probabilities (1 = in this process); they are forked
            once a second chunk has been read.
        on_progress: called with the number of records read so far.
        top_paths: how many retailer paths the summary lists.
        into: a summary to fill in (and return): a caller that catches the fatal error still
            has the facts of what was mapped before it.

    Returns:
        The summary.

    Raises:
        FeedFormatError, FeedEncodingError, UnsafeFeedError: after what was read is written
            and the summary filled in.
    """
    accounting = source.accounting
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    ext = {"jsonl": "jsonl", "csv": "csv", "parquet": "parquet"}[format]
    mappings_path = out / f"mappings.{ext}"
    rejects_path = out / ("rejects.csv" if format == "csv" else "rejects.jsonl")
    accounting_path = out / "accounting.json"
    rules = rules if rules is not None else RuleSet([])
    summary = into if into is not None else MapSummary()
    summary.threshold, summary.mode = threshold, mapper.method

    rejects = open_reject_writer(rejects_path, "csv" if format == "csv" else "jsonl")
    temporary = tempfile.TemporaryDirectory(prefix="catmap-map-")
    store = _PassOneStore(Path(temporary.name))
    try:
        counts, fatal = _first_pass(
            source,
            mapper,
            rules,
            store,
            rejects.write,
            threshold=threshold,
            chunk_size=chunk_size,
            workers=workers,
            on_progress=on_progress,
        )
    finally:
        rejects.close()

    consensus = counts.consensus()
    writer = _MappingWriter(mappings_path, format)
    try:
        _second_pass(store.chunks(), mapper, consensus, threshold, writer, summary)
    finally:
        writer.close()
        temporary.cleanup()

    summary.retailer_paths = [
        _path_facts(c, mapper.tree) for c in list(consensus.values())[:top_paths]
    ]
    summary.rules = _rule_facts(rules)
    summary.accounting = accounting.to_dict()
    summary.outputs = {
        "mappings": str(mappings_path),
        "rejects": str(rejects_path),
        "accounting": str(accounting_path),
    }
    facts = {**accounting.to_dict(), "outputs": summary.outputs, "format": format}
    write_text_atomic(accounting_path, json.dumps(facts, ensure_ascii=False, indent=2) + "\n")
    if fatal is not None:
        raise fatal
    return summary


def _first_pass(
    source: ProfiledFeed,
    mapper: Mapper,
    rules: RuleSet,
    store: _PassOneStore,
    write_reject: Callable[[Reject], None],
    *,
    threshold: float,
    chunk_size: int,
    workers: int,
    on_progress: Callable[[int], None] | None,
) -> tuple[PathCounts, BaseException | None]:
    """Read the feed in chunks, match the rules and store each chunk's top-k probabilities.

    With several workers, the pool is forked once a second chunk has been read: a feed of one
    chunk is mapped in this process, without the cost of starting worker processes.

    Returns:
        The products per (retailer path, first-pass node), for the path consensus; and the
        fatal feed error that stopped the reading early, if any (raised once the outputs are
        written).
    """
    global _WORKER_MAPPER
    accounting = source.accounting
    counts = PathCounts()
    fatal: BaseException | None = None
    pool = None
    # The first chunk, held until the second one shows the feed needs the workers.
    first: tuple[list[_Row], ProductTexts] | None = None
    try:
        pending: deque[tuple[list[_Row], Any]] = deque()

        def finish(rows: list[_Row], result: Any) -> None:
            scored: _Scored = result.get() if pool is not None else result
            classes = mapper.classes
            counts.add(
                (row[2], row[3] or classes[top])
                for row, top in zip(rows, scored[0][:, 0].tolist(), strict=True)
            )
            store.add(scored, rows)

        def submit(rows: list[_Row], texts: ProductTexts) -> None:
            assert pool is not None
            fields = (texts.title, texts.path, texts.brand, texts.description)
            pending.append((rows, pool.apply_async(_worker_first_pass, (fields, threshold))))
            while len(pending) > workers:
                finish(*pending.popleft())

        try:
            products = source.products()
            stopped: list[BaseException] = []
            for chunk in _chunks(products, chunk_size, write_reject, stopped):
                rows = _rule_rows(chunk, rules)
                texts = product_texts(chunk)
                if workers <= 1:
                    finish(rows, mapper.first_pass(texts, threshold))
                elif pool is None and first is None:
                    first = (rows, texts)
                else:
                    if pool is None:
                        if mapper.model is not None:
                            mapper.model.prepare_departments()  # shared by the workers
                        _WORKER_MAPPER = mapper
                        pool = _fork_pool(workers)
                        assert first is not None
                        submit(*first)
                        first = None
                    submit(rows, texts)
                if on_progress is not None:
                    on_progress(accounting.read)
            if stopped:
                raise stopped[0]
        except FATAL_FEED_ERRORS as error:
            accounting.stopped_early = str(error)
            fatal = error
        if first is not None:
            # The only chunk (or the only one read before a fatal error): mapped here.
            finish(first[0], mapper.first_pass(first[1], threshold))
        while pending:
            finish(*pending.popleft())
    finally:
        if pool is not None:
            pool.close()
            pool.join()
        _WORKER_MAPPER = None
    return counts, fatal


def _rule_rows(chunk: list[Product], rules: RuleSet) -> list[_Row]:
    """One row per product: id, title, retailer path, and the node and reason of its rule."""
    rows: list[_Row] = []
    for product in chunk:
        match = rules.match(product)
        rows.append(
            (
                product.product_id,
                product.title,
                " > ".join(product.category_path),
                match.rule.node_id if match else "",
                match.reason if match else "",
            )
        )
    return rows


def _rule_facts(rules: RuleSet) -> dict[str, Any]:
    """What the summary says about the rules: file, count, products matched, conflicts."""
    return {
        "file": rules.path,
        "rules": len(rules),
        "products_matched": sum(rules.matched.values()),
        "conflicts": rules.conflicts,
        "conflict_examples": [
            {"product_id": pid, "rule_line": line, "other_rule_lines": others}
            for pid, line, others in rules.conflict_examples
        ],
    }


def _path_facts(consensus: PathConsensus, tree: CategoryTree) -> dict[str, Any]:
    return {
        "path": consensus.path,
        "count": consensus.count,
        "top": [
            {
                "node_id": node,
                "share": share,
                "node_path": tree.path_text(node) if node in tree else "",
            }
            for node, share in consensus.top(3)
        ],
    }


def _share_matrix(
    consensus: dict[str, PathConsensus], mapper: Mapper
) -> tuple[dict[str, int], sp.csr_matrix]:
    """One sparse share row per retailer path with enough products (shares over classes)."""
    rows: dict[str, int] = {}
    data, indices, indptr = [], [], [0]
    for path, c in consensus.items():
        if c.count < MIN_PRODUCTS:
            continue
        rows[path] = len(rows)
        for node, share in c.shares.items():
            col = mapper.column.get(node)
            if col is not None:
                indices.append(col)
                data.append(share)
        indptr.append(len(indices))
    matrix = sp.csr_matrix((data, indices, indptr), shape=(len(rows), len(mapper.classes)))
    return rows, matrix


def _exact_backoff(
    mapper: Mapper,
    backing: np.ndarray[Any, Any],
    nodes: sp.csr_matrix,
    which: np.ndarray[Any, Any],
    shares: sp.csr_matrix | None,
    weight: float,
    threshold: float,
    best: np.ndarray[Any, Any],
    backed: np.ndarray[Any, Any],
    chosen: np.ndarray[Any, Any],
    chosen_p: np.ndarray[Any, Any],
) -> None:
    """Redo the back-off of the backed rows on their exact node probabilities (in place).

    The top-k classes kept for pass 2 give each node only the part of its probability that
    lies in those classes; pass 1 kept every node's full probability for the rows that may
    back off (``backing``), blended here with the path's share vector as the classes were.
    """
    position = np.full(len(backed), -1)
    position[backing] = np.arange(len(backing))
    rows = np.flatnonzero(backed & (position >= 0))
    if not len(rows):
        return
    node_p = np.asarray(nodes[position[rows]].toarray())
    blended = which[rows] >= 0
    if shares is not None and blended.any():
        share_nodes = np.asarray((shares[which[rows[blended]]] @ mapper.index.matrix).toarray())
        node_p[blended] = (1 - weight) * node_p[blended] + weight * share_nodes
    chosen[rows], chosen_p[rows] = choose_nodes(node_p, mapper.index, threshold)
    keep_leaf_answers(rows, best, mapper.index, backed, chosen, chosen_p)


def _second_pass(
    chunks: Iterable[_Chunk],
    mapper: Mapper,
    consensus: dict[str, PathConsensus],
    threshold: float,
    writer: _MappingWriter,
    summary: MapSummary,
) -> None:
    tree = mapper.tree
    weight = mapper.consensus_weight
    share_rows, shares = _share_matrix(consensus, mapper) if weight > 0 else ({}, None)
    methods: Counter[str] = Counter()
    bands: Counter[str] = Counter()
    departments: Counter[str] = Counter()
    node_path_cache: dict[str, str] = {}

    def node_path(node: str) -> str:
        text = node_path_cache.get(node)
        if text is None:
            text = node_path_cache[node] = tree.path_text(node)
        return text

    for idx, vals32, backing, nodes, rows in chunks:
        vals = vals32.astype(np.float64)
        n, k = idx.shape
        p = sp.csr_matrix(
            (vals.ravel(), idx.ravel(), np.arange(0, n * k + 1, k)), shape=(n, len(mapper.classes))
        )
        which = np.full(n, -1)
        if shares is not None and share_rows:
            which = np.array([share_rows.get(r[2], -1) for r in rows])
            blend = which >= 0
            if blend.any():
                mixed = (1 - weight) * p[blend] + weight * shares[which[blend]]
                p = sp.vstack([p[~blend], mixed]).tocsr()
                order = np.concatenate([np.flatnonzero(~blend), np.flatnonzero(blend)])
                p = p[np.argsort(order)]
        best_class, chosen, chosen_p, backed = backoff_rows(p, mapper.index, threshold)
        if nodes is not None and backed.any():
            best = np.asarray(p[np.arange(n), best_class]).ravel()
            _exact_backoff(
                mapper, backing, nodes, which, shares, weight, threshold, best, backed, chosen,
                chosen_p,
            )  # fmt: skip
        out_rows = []
        # Plain lists: reading a row's few entries from them is far cheaper than getrow().
        p = sp.csr_matrix(p)
        indptr, indices, data = p.indptr.tolist(), p.indices.tolist(), p.data.tolist()
        classes = mapper.classes
        for i, (product_id, title, _, rule_node, rule_reason) in enumerate(rows):
            start, end = indptr[i], indptr[i + 1]
            alternatives = sorted(
                zip((classes[c] for c in indices[start:end]), data[start:end], strict=True),
                key=lambda item: -item[1],
            )
            if rule_node:
                node, confidence, method, reason = rule_node, 1.0, "rule", rule_reason
                alternatives = [a for a in alternatives if a[0] != node]
            elif backed[i]:
                node = mapper.index.nodes[int(chosen[i])]
                confidence = float(chosen_p[i])
                method, reason = "backoff", f"backed off from {mapper.classes[int(best_class[i])]}"
                if mapper.method == "cold_start":
                    reason += " (cold start, keywords only)"
                alternatives = [a for a in alternatives if a[0] != node]
            else:
                node, confidence = mapper.classes[int(best_class[i])], float(chosen_p[i])
                method, reason = mapper.method, ""
                alternatives = alternatives[1:]
            record: dict[str, Any] = {
                "product_id": product_id,
                "title": title,
                "node_id": node,
                "node_path": node_path(node),
                "confidence": round(min(confidence, 1.0), 4),
                "method": method,
            }
            for a in range(3):
                alt = alternatives[a] if a < len(alternatives) else None
                record[f"alt{a + 1}_node"] = alt[0] if alt else None
                record[f"alt{a + 1}_confidence"] = round(alt[1], 4) if alt else None
            record["reason"] = reason
            out_rows.append(record)
            methods[method] += 1
            bands[_band(confidence)] += 1
            departments[tree.department(node).name] += 1
        writer.write_rows(out_rows)
    summary.products = sum(methods.values())
    summary.by_method = dict(methods.most_common())
    summary.confidence_bands = {_band(low): bands.get(_band(low), 0) for low, _ in CONFIDENCE_BANDS}
    summary.by_department = dict(departments.most_common())
