"""The project store as one class, composed of its parts.

Each part is a mixin over :class:`~catmap.store.connection.StoreConnection` (the connection and
the write transaction) and keeps its SQL beside the code that runs it.
"""

from __future__ import annotations

from catmap.store.audit import AuditMixin
from catmap.store.brand_items import BrandItemsMixin
from catmap.store.brands import BrandsMixin
from catmap.store.decisions import DecisionsMixin
from catmap.store.feeds import FeedsMixin
from catmap.store.products import ProductsMixin
from catmap.store.queue import QueueMixin
from catmap.store.undo import UndoMixin


class Store(
    DecisionsMixin,
    UndoMixin,
    QueueMixin,
    BrandItemsMixin,
    BrandsMixin,
    AuditMixin,
    ProductsMixin,
    FeedsMixin,
):
    """A project's SQLite store. Open with :meth:`open`; use as a context manager.

    Its methods come from one module per concern: :mod:`~catmap.store.feeds` (feeds, runs,
    feed status), :mod:`~catmap.store.products` (products, mappings, bulk writes),
    :mod:`~catmap.store.queue` (the review queue and leases), :mod:`~catmap.store.decisions`
    (decisions, bulk accept, training examples), :mod:`~catmap.store.undo` and
    :mod:`~catmap.store.audit` (the audit log), :mod:`~catmap.store.brands` (the brand
    registry), :mod:`~catmap.store.brand_items` (the candidate brands' review items).

    Args:
        conn: an open connection in autocommit mode, already migrated.
        path: the file (``":memory:"`` for an in-memory store).
        clock: returns the current UTC time (tests pass a fake one to expire leases).
    """
