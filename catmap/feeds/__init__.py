"""The feed stage: a retailer's feed file in, normalised products and rejects out.

Input: a CSV / TSV / XML / JSON Lines file (plain, gzip or zip) and, when the project has one,
its saved profile. Output: :class:`~catmap.records.Product` and :class:`~catmap.records.Reject`
streams with an :class:`Accounting` that proves ``read == kept + rejected``, and the writers
that put them on disk.

- :mod:`~catmap.feeds.read` (with ``delimited``, ``xml``, ``jsonl``, ``_sniff``,
  ``_compression``): sniff the format and encoding, stream raw records.
- :mod:`~catmap.feeds.fieldmap`: which source column feeds which field (suggested, saved as a
  profile).
- :mod:`~catmap.feeds.normalize`: pure normalisers (text, price, currency, GTIN, availability,
  path).
- :mod:`~catmap.feeds.ingest`: record → product, duplicate ids, the row accounting.
- :mod:`~catmap.feeds.profiled`: :func:`open_profiled_feed`, the one entry point every job uses.
- :mod:`~catmap.feeds.writers`: JSON Lines / CSV / Parquet out, safe against formula injection.
"""

from __future__ import annotations

from catmap.feeds.fieldmap import FeedProfile, load_profile, save_profile, suggest_profile
from catmap.feeds.ingest import FATAL_FEED_ERRORS, Accounting, iter_products, normalize_feed_to
from catmap.feeds.profiled import ProfiledFeed, feed_profile, open_profiled_feed
from catmap.feeds.read import Feed, FeedInfo, open_feed
from catmap.feeds.writers import neutralise_cell, open_product_writer, open_reject_writer

__all__ = [
    "FATAL_FEED_ERRORS",
    "Accounting",
    "Feed",
    "FeedInfo",
    "FeedProfile",
    "ProfiledFeed",
    "feed_profile",
    "iter_products",
    "load_profile",
    "neutralise_cell",
    "normalize_feed_to",
    "open_feed",
    "open_product_writer",
    "open_profiled_feed",
    "open_reject_writer",
    "save_profile",
    "suggest_profile",
]
