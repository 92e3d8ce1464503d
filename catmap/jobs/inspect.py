"""What a feed is and which column feeds which field; the mapping saved as the feed's profile
(the facts ``catmap inspect`` prints)."""

from __future__ import annotations

from itertools import islice
from pathlib import Path
from typing import Any

from catmap.feeds.fieldmap import (
    REQUIRED_FIELDS,
    TARGET_FIELDS,
    FeedProfile,
    load_profile,
    suggest_profile,
)
from catmap.feeds.ingest import FATAL_FEED_ERRORS, Accounting, iter_products
from catmap.feeds.language import feed_language, language_warning
from catmap.feeds.profiled import column_mismatch, format_mismatch
from catmap.feeds.read import Feed, other_encodings
from catmap.feeds.writers import product_to_dict
from catmap.jobs._feed_profile import (
    SAMPLE_SIZE,
    open_with_profile,
    remember_options,
    suggest_and_save,
)
from catmap.jobs._project_tree import project_tree_languages
from catmap.project import profile_path
from catmap.records import Reject, SourceRecord

__all__ = ["PREVIEW_RECORDS", "SAMPLES_SHOWN", "inspect_feed", "mapping_rows", "preview_products"]

# Sample values shown per mapped field.
SAMPLES_SHOWN = 3
# Normalised records shown as a preview.
PREVIEW_RECORDS = 5


def mapping_rows(
    profile: FeedProfile, feed: Feed, sample_needed: bool, sample: list[SourceRecord] | None = None
) -> list[dict[str, Any]]:
    """Return one row per target field: column, confidence, evidence for and against, samples.

    A saved profile keeps no evidence: the mapping is then suggested again from the sample
    (not saved) to give each saved column its evidence, and a different suggestion is named
    against the saved one.

    Args:
        profile: the feed's profile.
        feed: the open feed.
        sample_needed: the profile is a saved one (no suggestions of its own).
        sample: the first records, when already read.
    """
    if sample is None:
        sample = feed.sample(SAMPLE_SIZE)
    suggestions = profile.suggestions
    if sample_needed or not suggestions:
        suggestions = suggest_profile(feed.info, sample).suggestions
    by_field = {s.field: s for s in suggestions}
    rows = []
    for name in TARGET_FIELDS:
        column = profile.columns.get(name)
        suggestion = by_field.get(name)
        against = list(suggestion.against) if suggestion is not None else []
        if suggestion is not None and suggestion.column == column:
            confidence: float | None = suggestion.confidence if column else None
            evidence = suggestion.evidence
            values = list(suggestion.samples[:SAMPLES_SHOWN])
        else:
            confidence = None
            evidence = "from the saved profile" if column else "not mapped in the saved profile"
            values = (
                [r.fields[column] for r in sample if r.fields.get(column)][:SAMPLES_SHOWN]
                if column
                else []
            )
            if suggestion is not None and suggestion.column:
                against.insert(
                    0,
                    f"catmap would suggest '{suggestion.column}' ({suggestion.confidence:.2f}: "
                    f"{suggestion.evidence})",
                )
        rows.append(
            {
                "field": name,
                "column": column or None,
                "confidence": confidence,
                "evidence": evidence,
                "against": against,
                "samples": values,
            }
        )
    return rows


def preview_products(
    feed: Feed, profile: FeedProfile, count: int = PREVIEW_RECORDS
) -> list[dict[str, Any]]:
    """Normalise the first records of a feed with its profile, as ``catmap normalize`` would.

    Args:
        feed: the open feed.
        profile: the profile (it must map the required fields, else nothing is shown).
        count: how many products (and the rejects among them) to show.

    Returns:
        Up to ``count`` products as JSON-ready values, or rejects as ``{"rejected": reason,
        "detail": ..., "line": ...}``, in feed order.
    """
    if any(not profile.columns.get(name) for name in REQUIRED_FIELDS):
        return []
    records = iter(feed)
    preview: list[dict[str, Any]] = []
    try:
        for item in iter_products(islice(records, count), profile, Accounting()):
            if isinstance(item, Reject):
                preview.append({"rejected": item.reason, "detail": item.detail, "line": item.line})
            else:
                preview.append(product_to_dict(item))
    except FATAL_FEED_ERRORS:
        pass  # the error is the normalize run's to report; the preview shows what came before
    finally:
        close = getattr(records, "close", None)
        if close is not None:
            close()
    return preview


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
    sample = opened.sample(SAMPLE_SIZE)
    rows = mapping_rows(profile, opened, sample_needed=existing, sample=sample)
    mapped_columns = set(profile.columns.values())
    missing = profile.missing()
    language = feed_language(sample, profile.columns)
    warning = language_warning(language, project_tree_languages(project))
    return {
        "feed": str(feed),
        "format": info.format,
        "encoding": info.encoding,
        # An encoding the profile keeps from an earlier detection reads as given to the reader.
        "encoding_source": "profile"
        if info.encoding_source == "given" and not encoding
        else info.encoding_source,
        "encoding_alternatives": [] if encoding else other_encodings(info),
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
        "preview": preview_products(opened, profile),
        "language": language.to_dict(),
        "warnings": [warning] if warning else [],
    }

