"""The project store: one SQLite file per project holding feeds, runs, products, mappings,
the review queue, reviewers' decisions and an append-only audit log.

Input: the mappings an onboarding run saves, the queue plans and the reviewers' decisions from
onboarding, the review screen and remap. Output: the project's durable state, in
``<project>/store.sqlite``.

One :class:`Store` class, composed of one module per concern:

- :mod:`~catmap.store.schema`: the schema and its migrations (``PRAGMA user_version``).
- :mod:`~catmap.store.connection`: opening the file, the write transaction, reads.
- :mod:`~catmap.store.feeds`: feeds, runs and where a feed stands.
- :mod:`~catmap.store.products`: products and mappings, written in batches.
- :mod:`~catmap.store.queue`: the review queue and its leases.
- :mod:`~catmap.store.decisions`: reviewers' decisions and bulk accept.
- :mod:`~catmap.store.undo`: taking the last decision back.
- :mod:`~catmap.store.audit`: the append-only audit log.
- :mod:`~catmap.store.brands`: the project's brand registry.
- :mod:`~catmap.store.records` and :mod:`~catmap.store.encoding`: what the store gives back,
  and how products are written as JSON.

The remap tables (``remaps``, ``remap_previous``, ``remap_items``) are created by the schema
and written by :mod:`catmap.jobs.remap`, beside the rest of the remap.

Example:
    >>> with Store.open(":memory:") as store:
    ...     feed = store.add_feed("shop-a", source_path="shop-a.csv")
    ...     store.queue_summary().open
    0
"""

from __future__ import annotations

from catmap.store.connection import STORE_FILE_NAME, Clock, store_path
from catmap.store.decisions import DESCRIPTION_EXCERPT
from catmap.store.encoding import product_from_json, product_to_json
from catmap.store.products import DEFAULT_BATCH_SIZE
from catmap.store.queue import CLAIM_EXPIRED, CLAIM_OPEN, DEFAULT_LEASE_SECONDS
from catmap.store.records import (
    BRAND_VERDICTS,
    DECISION_ACTIONS,
    GROUP_REASONS,
    ITEM_STATES,
    MAPPING_STATUSES,
    REVIEW_REASONS,
    AuditEntry,
    BrandVerdict,
    Decision,
    FeedRecord,
    FeedStatus,
    GroupCount,
    GroupInfo,
    MappedRow,
    NodeAttributes,
    NodeAttributesFor,
    QueueSummary,
    ReviewItem,
    ReviewView,
    RunRecord,
    StoredMapping,
    TrainingExample,
)
from catmap.store.schema import MIGRATIONS, SCHEMA_VERSION, migrate
from catmap.store.store import Store

__all__ = [
    "AuditEntry",
    "BRAND_VERDICTS",
    "BrandVerdict",
    "CLAIM_EXPIRED",
    "CLAIM_OPEN",
    "Clock",
    "DECISION_ACTIONS",
    "DEFAULT_BATCH_SIZE",
    "DEFAULT_LEASE_SECONDS",
    "DESCRIPTION_EXCERPT",
    "Decision",
    "FeedRecord",
    "FeedStatus",
    "GROUP_REASONS",
    "GroupCount",
    "GroupInfo",
    "ITEM_STATES",
    "MAPPING_STATUSES",
    "MIGRATIONS",
    "MappedRow",
    "NodeAttributes",
    "NodeAttributesFor",
    "QueueSummary",
    "REVIEW_REASONS",
    "ReviewItem",
    "ReviewView",
    "RunRecord",
    "SCHEMA_VERSION",
    "STORE_FILE_NAME",
    "Store",
    "StoredMapping",
    "TrainingExample",
    "migrate",
    "product_from_json",
    "product_to_json",
    "store_path",
]
