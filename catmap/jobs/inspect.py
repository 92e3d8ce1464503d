"""What a feed is and which column feeds which field; the mapping saved as the feed's profile
(the facts ``catmap inspect`` prints)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from catmap.feeds.fieldmap import (
    REQUIRED_FIELDS,
    TARGET_FIELDS,
    FeedProfile,
    load_profile,
    suggest_profile,
)
from catmap.feeds.profiled import column_mismatch, format_mismatch
from catmap.feeds.read import Feed
from catmap.jobs._feed_profile import (
    SAMPLE_SIZE,
    open_with_profile,
    remember_options,
    suggest_and_save,
)
from catmap.project import profile_path

__all__ = ["SAMPLES_SHOWN", "inspect_feed", "mapping_rows"]

# Sample values shown per mapped field.
SAMPLES_SHOWN = 3


def mapping_rows(profile: FeedProfile, feed: Feed, sample_needed: bool) -> list[dict[str, Any]]:
    """Return one row per mapped field: column, confidence, evidence, sample values.

    Args:
        profile: the feed's profile.
        feed: the open feed.
        sample_needed: read a sample for sample values (a saved profile keeps none).
    """
    by_field = {s.field: s for s in profile.suggestions if s.column}
    samples: list[dict[str, str]] = []
    if sample_needed:
        samples = [record.fields for record in feed.sample(SAMPLE_SIZE)]
    rows = []
    for name in TARGET_FIELDS:
        column = profile.columns.get(name)
        if not column:
            continue
        suggestion = by_field.get(name)
        if suggestion is not None and suggestion.column == column:
            confidence: float | None = suggestion.confidence
            evidence = suggestion.evidence
            values = list(suggestion.samples[:SAMPLES_SHOWN])
        else:
            confidence = None
            evidence = "from the saved profile"
            values = [r[column] for r in samples if r.get(column)][:SAMPLES_SHOWN]
        rows.append(
            {
                "field": name,
                "column": column,
                "confidence": confidence,
                "evidence": evidence,
                "samples": values,
            }
        )
    return rows


def inspect_feed(
    feed: Path,
    *,
    project: Path,
    encoding: str | None = None,
    record_path: str | None = None,
    delimiter: str | None = None,
    fresh: bool = False,
    feed_name: str | None = None,
) -> dict[str, Any]:
    """Describe a feed and its field mapping; suggest and save the profile when it has none.

    Args:
        feed: the feed file.
        project: the project folder (profiles live in ``<project>/profiles/``).
        encoding: the feed's text encoding (default: detected, or the profile's).
        record_path: XML only: the repeating record element.
        delimiter: delimited text only: the column separator.
        fresh: suggest the mapping anew even if one is saved.
        feed_name: the feed's name, which names its profile (default: from the file name).

    Returns:
        The facts: format, encoding, columns, the mapping, missing fields, the profile, and
        ``profile_mismatch``: why the saved profile does not fit this file (then the mapping
        shown is a new suggestion, not saved), else None.
    """
    saved_path = profile_path(project, feed, name=feed_name)
    existing = saved_path.exists() and not fresh
    profile = load_profile(saved_path) if existing else None
    mismatch = format_mismatch(profile, feed) if profile is not None else None
    if mismatch is not None:
        profile = None
    opened = open_with_profile(feed, profile, encoding, record_path, delimiter)
    if profile is not None:
        mismatch = column_mismatch(profile, opened.info)
        if mismatch is not None:
            profile = None
            opened = open_with_profile(feed, None, encoding, record_path, delimiter)
    info = opened.info
    if mismatch is not None:
        # Never overwrite the feed's profile unasked: show what a new one would be.
        profile = suggest_profile(opened.info, opened.sample(SAMPLE_SIZE))
        remember_options(profile, encoding, record_path, delimiter)
        existing = False
    elif profile is None:
        profile = suggest_and_save(opened, saved_path, encoding, record_path, delimiter)
    rows = mapping_rows(profile, opened, sample_needed=existing)
    mapped_columns = set(profile.columns.values())
    missing = profile.missing()
    return {
        "feed": str(feed),
        "format": info.format,
        "encoding": info.encoding,
        "encoding_source": info.encoding_source,
        "compression": info.compression,
        "delimiter": info.delimiter,
        "has_header": info.has_header,
        "record_path": info.record_path,
        "columns": list(info.columns),
        "mapping": rows,
        "missing": missing,
        "missing_required": [name for name in missing if name in REQUIRED_FIELDS],
        "extras": [column for column in info.columns if column not in mapped_columns],
        "profile": str(saved_path),
        "profile_status": "mismatch" if mismatch else ("existing" if existing else "saved"),
        "profile_mismatch": mismatch,
    }
