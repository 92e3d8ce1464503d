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

from catmap.errors import CatmapError, ProfileError
from catmap.feeds import _sniff
from catmap.feeds._compression import read_head
from catmap.feeds.fieldmap import FeedProfile, load_profile, save_profile, suggest_profile
from catmap.feeds.ingest import Accounting, check_profile, iter_products
from catmap.feeds.read import Feed, FeedInfo, open_feed
from catmap.project import profile_path
from catmap.records import Product, Reject

__all__ = [
    "SAMPLE_SIZE",
    "ProfiledFeed",
    "column_mismatch",
    "feed_profile",
    "format_mismatch",
    "open_profiled_feed",
    "profile_mismatch_error",
    "sniff_format",
]

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


def sniff_format(feed_path: Path) -> str | None:
    """Return the format of a feed from its first bytes alone (None when it cannot be told).

    The profile's reader options are not used: another format's encoding or delimiter would
    read the file as something it is not.
    """
    try:
        head, _complete, _compression = read_head(feed_path, _sniff.SAMPLE_SIZE)
        encoding, _source = _sniff.detect_encoding(head, None, str(feed_path))
        return _sniff.detect_format(_sniff.decode_head(head, encoding))
    except (CatmapError, OSError, LookupError, UnicodeError):
        return None  # opening the feed names the real problem


def format_mismatch(profile: FeedProfile, feed_path: Path) -> str | None:
    """Say why a saved profile does not fit this file's format (None when it fits)."""
    found = sniff_format(feed_path)
    if profile.format is None or found is None or found == profile.format:
        return None
    made = _FORMAT_NAMES.get(profile.format, profile.format)
    article = "an" if made[0] in "AEIOU" else "a"
    return (
        f"the profile was made for {article} {made} feed; this file is "
        f"{_FORMAT_NAMES.get(found, found)}"
    )


_FORMAT_NAMES = {"delimited": "delimited text", "xml": "XML", "jsonl": "JSON Lines"}


def column_mismatch(profile: FeedProfile, info: FeedInfo) -> str | None:
    """Say which mapped columns the feed no longer has (None when the profile still fits).

    A delimited feed's header is exact, so one lost column counts. XML and JSON Lines columns
    come from a sample, where an optional key may not show yet: there, at least half of the
    mapped columns must be gone (the layout changed) before the profile is refused.
    """
    found = set(info.columns)
    if not found or not profile.columns:
        return None
    gone = {name: column for name, column in profile.columns.items() if column not in found}
    if not gone:
        return None
    if info.format != "delimited" and 2 * len(gone) < len(profile.columns):
        return None
    lost = ", ".join(f"{name} ('{column}')" for name, column in gone.items())
    new = [c for c in info.columns if c not in set(profile.source_columns)]
    text = f"the feed no longer has the columns its profile maps: {lost} would be empty"
    if new:
        text += "; new columns: " + ", ".join(new[:10])
    return text


def profile_mismatch_error(
    reason: str, saved: Path, feed_path: Path, name: str | None
) -> ProfileError:
    """The error for a saved profile that does not fit this file, saying what to do."""
    same = f" --feed {name}" if name else ""
    return ProfileError(
        reason,
        path=saved,
        hint=f"if the feed changed, run `catmap inspect {feed_path}{same} --fresh` to suggest a "
        "new profile; if this file is another feed, give it its own name with --feed NAME",
    )


def feed_profile(
    feed_path: Path,
    project: Path,
    *,
    reserved: Sequence[str] = (),
    name: str | None = None,
) -> tuple[FeedProfile, Path]:
    """Return the feed's saved profile, or suggest one and save it in the project.

    Columns named in ``reserved`` (a label column, ``split``) are never suggested as a product
    field: short node ids look like sizes to the value-based guess, and a label read as a size
    would be lost to training.

    Args:
        feed_path: the feed file.
        project: the project folder.
        reserved: columns that must not feed a product field.
        name: the feed's name (``--feed``; default: from the file name).

    Returns:
        (the profile, where it is saved).

    Raises:
        ProfileError: the saved profile was made for another format.
    """
    saved = profile_path(project, feed_path, name=name)
    if saved.exists():
        profile = load_profile(saved)
        reason = format_mismatch(profile, feed_path)
        if reason is not None:
            raise profile_mismatch_error(reason, saved, feed_path, name)
        return profile, saved
    opened = open_feed(feed_path)
    profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
    for target, column in list(profile.columns.items()):
        if column in reserved:
            del profile.columns[target]
    saved.parent.mkdir(parents=True, exist_ok=True)
    save_profile(profile, saved)
    return profile, saved


def open_profiled_feed(
    feed_path: str | Path,
    project: str | Path,
    *,
    reserved: Sequence[str] = (),
    name: str | None = None,
) -> ProfiledFeed:
    """Open a feed with its profile (saved, or suggested and saved); check that they agree.

    Args:
        feed_path: the feed file.
        project: the project folder.
        reserved: columns that must not feed a product field (see :func:`feed_profile`).
        name: the feed's name (``--feed``; default: from the file name).

    Returns:
        The profiled feed, ready to stream products.

    Raises:
        ProfileError: a saved profile was made for another format, or names columns the feed
            does not have (its columns were renamed).
    """
    path = Path(feed_path)
    profile, saved = feed_profile(path, Path(project), reserved=reserved, name=name)
    opened = open_feed(
        path,
        encoding=profile.encoding,
        record_path=profile.record_path,
        delimiter=profile.delimiter,
    )
    check_profile(profile, opened.info, profile_path=saved)
    reason = column_mismatch(profile, opened.info)
    if reason is not None:
        raise profile_mismatch_error(reason, saved, path, name)
    return ProfiledFeed(path=path, feed=opened, profile=profile, profile_path=saved)
