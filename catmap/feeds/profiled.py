"""Open a feed with its profile, the one entry point every job uses to read products.

:func:`open_profiled_feed` finds the feed's saved profile (or suggests one and saves it), opens
the feed with the encoding, delimiter and record element the profile names, checks that the two
agree, and returns a :class:`ProfiledFeed` whose :meth:`ProfiledFeed.products` streams products
and rejects while its :class:`~catmap.feeds.ingest.Accounting` keeps ``read == kept + rejected``.
Onboarding, mapping, evaluation and training all read their feeds through it.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from catmap.feeds.fieldmap import FeedProfile, load_profile, save_profile, suggest_profile
from catmap.feeds.ingest import Accounting, check_profile, iter_products
from catmap.feeds.read import Feed, FeedInfo, open_feed
from catmap.project import profile_path
from catmap.records import Product, Reject

__all__ = ["SAMPLE_SIZE", "ProfiledFeed", "feed_profile", "open_profiled_feed"]

# Records looked at to suggest a profile.
SAMPLE_SIZE = 200


@dataclass
class ProfiledFeed:
    """A feed opened with its profile.

    Attributes:
        path: the feed file.
        feed: the open feed (iterate it for raw records).
        profile: the profile its fields are read with.
        profile_path: where the profile is saved in the project.
        accounting: filled while :meth:`products` is iterated.
    """

    path: Path
    feed: Feed
    profile: FeedProfile
    profile_path: Path
    accounting: Accounting = field(default_factory=Accounting)

    @property
    def info(self) -> FeedInfo:
        """What the reader found out about the feed (format, encoding, columns)."""
        return self.feed.info

    def products(self, *, profile: FeedProfile | None = None) -> Iterator[Product | Reject]:
        """Stream the feed's products and rejects in feed order, counted in :attr:`accounting`.

        Args:
            profile: read with this profile instead (e.g. one with the gold columns left out).

        Yields:
            Products and rejects.

        Raises:
            FeedFormatError, FeedEncodingError, UnsafeFeedError: after the records before the
                error were yielded and counted.
        """
        return iter_products(self.feed, profile or self.profile, self.accounting)


def feed_profile(
    feed_path: Path, project: Path, *, reserved: Sequence[str] = ()
) -> tuple[FeedProfile, Path]:
    """Return the feed's saved profile, or suggest one and save it in the project.

    Columns named in ``reserved`` (a label column, ``split``) are never suggested as a product
    field: short node ids look like sizes to the value-based guess, and a label read as a size
    would be lost to training.

    Args:
        feed_path: the feed file.
        project: the project folder.
        reserved: columns that must not feed a product field.

    Returns:
        (the profile, where it is saved).
    """
    saved = profile_path(project, feed_path)
    if saved.exists():
        return load_profile(saved), saved
    opened = open_feed(feed_path)
    profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    for target, column in list(profile.columns.items()):
        if column in reserved:
            del profile.columns[target]
    saved.parent.mkdir(parents=True, exist_ok=True)
    save_profile(profile, saved)
    return profile, saved


def open_profiled_feed(
    feed_path: str | Path, project: str | Path, *, reserved: Sequence[str] = ()
) -> ProfiledFeed:
    """Open a feed with its profile (saved, or suggested and saved); check that they agree.

    Args:
        feed_path: the feed file.
        project: the project folder.
        reserved: columns that must not feed a product field (see :func:`feed_profile`).

    Returns:
        The profiled feed, ready to stream products.

    Raises:
        ProfileError: a saved profile names columns the feed does not have.
    """
    path = Path(feed_path)
    profile, saved = feed_profile(path, Path(project), reserved=reserved)
    opened = open_feed(
        path,
        encoding=profile.encoding,
        record_path=profile.record_path,
        delimiter=profile.delimiter,
    )
    check_profile(profile, opened.info, profile_path=saved)
    return ProfiledFeed(path=path, feed=opened, profile=profile, profile_path=saved)
