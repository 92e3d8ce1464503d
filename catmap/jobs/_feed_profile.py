"""A feed opened with its profile: the saved one, or one suggested from a sample."""

from __future__ import annotations

from pathlib import Path

from catmap.feeds.fieldmap import FeedProfile, load_profile, save_profile, suggest_profile
from catmap.feeds.read import Feed, open_feed

# Records read to suggest a profile.
SAMPLE_SIZE = 200


def open_with_profile(
    feed_path: Path,
    profile: FeedProfile | None,
    encoding: str | None = None,
    record_path: str | None = None,
    delimiter: str | None = None,
) -> Feed:
    """Open a feed; options given now win over the ones remembered in the profile."""
    if profile is not None:
        encoding = encoding or profile.encoding
        record_path = record_path or profile.record_path
        delimiter = delimiter or profile.delimiter
    return open_feed(feed_path, encoding=encoding, record_path=record_path, delimiter=delimiter)


def remember_options(
    profile: FeedProfile, encoding: str | None, record_path: str | None, delimiter: str | None
) -> None:
    """Keep the reading options given in the profile, so that later runs read the same way."""
    if encoding:
        profile.encoding = encoding
    if record_path:
        profile.record_path = record_path
    if delimiter:
        profile.delimiter = delimiter


def suggest_and_save(
    opened: Feed,
    path: Path,
    encoding: str | None,
    record_path: str | None,
    delimiter: str | None,
) -> FeedProfile:
    """Suggest a profile from a sample of the feed, with the options given, and save it."""
    profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    remember_options(profile, encoding, record_path, delimiter)
    path.parent.mkdir(parents=True, exist_ok=True)
    save_profile(profile, path)
    return profile


def saved_profile(path: Path) -> FeedProfile | None:
    """Return the profile saved at ``path`` (None when there is none)."""
    return load_profile(path) if path.exists() else None
