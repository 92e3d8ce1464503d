"""Clean every record of a feed into products, with its saved (or suggested) profile; write
them, the rejects and the accounting (the facts ``catmap normalise`` prints)."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from catmap.errors import InputError
from catmap.feeds.ingest import (
    FATAL_FEED_ERRORS,
    Accounting,
    OutputPaths,
    check_profile,
    flag_advice,
    normalize_feed_to,
    output_paths,
)
from catmap.feeds.language import feed_language, language_warning
from catmap.feeds.profiled import column_mismatch, format_mismatch, profile_mismatch_error
from catmap.feeds.read import encoding_warning
from catmap.jobs._feed_profile import (
    SAMPLE_SIZE,
    open_with_profile,
    saved_profile,
    suggest_and_save,
)
from catmap.jobs._project_tree import project_tree_languages
from catmap.project import profile_path

__all__ = ["NormalizeResult", "normalize_project_feed"]


@dataclass(frozen=True, slots=True)
class NormalizeResult:
    """What normalising a feed did.

    Attributes:
        facts: the accounting, outputs and profile used.
        paths: the files written.
        error: the fatal feed error that stopped reading early (the records before it were
            written), else None.
    """

    facts: dict[str, Any]
    paths: OutputPaths
    error: InputError | None


def normalize_project_feed(
    feed: Path,
    out_dir: Path,
    *,
    project: Path,
    format: str = "jsonl",
    encoding: str | None = None,
    record_path: str | None = None,
    delimiter: str | None = None,
    default_currency: str | None = None,
    profile_file: Path | None = None,
    on_progress: Callable[[Accounting], None] | None = None,
    feed_name: str | None = None,
) -> NormalizeResult:
    """Normalise a feed with its profile (given, saved, or suggested and saved).

    Args:
        feed: the feed file.
        out_dir: folder for products, rejects and ``accounting.json``.
        project: the project folder (profiles live in ``<project>/profiles/``).
        format: file format of the products.
        encoding: the feed's text encoding (default: detected, or the profile's).
        record_path: XML only: the repeating record element.
        delimiter: delimited text only: the column separator.
        default_currency: currency of prices that name none (an ISO 4217 code).
        profile_file: use this profile instead of the feed's saved one.
        on_progress: told the accounting as records are read.
        feed_name: the feed's name, which names its profile (default: from the file name).

    Returns:
        The facts, the files written, and the fatal feed error if reading stopped early.

    Raises:
        InputError: the profile does not fit the feed (another format, or columns renamed).
    """
    path = profile_file or profile_path(project, feed, name=feed_name)
    profile_status = "given" if profile_file else "existing"
    profile = saved_profile(path)
    reason = format_mismatch(profile, feed) if profile is not None else None
    if reason is not None:
        raise profile_mismatch_error(reason, path, feed, feed_name)
    opened = open_with_profile(feed, profile, encoding, record_path, delimiter)
    reason = column_mismatch(profile, opened.info) if profile is not None else None
    if reason is not None:
        raise profile_mismatch_error(reason, path, feed, feed_name)
    if profile is None:
        profile = suggest_and_save(opened, path, encoding, record_path, delimiter)
        profile_status = "saved"
    if default_currency is not None:
        profile.default_currency = default_currency
    check_profile(profile, opened.info, profile_path=path)
    language = feed_language(opened.sample(SAMPLE_SIZE), profile.columns)
    warnings = [
        language_warning(language, project_tree_languages(project)),
        encoding_warning(opened.info),
    ]

    accounting = Accounting()
    paths = output_paths(out_dir, format)
    error: InputError | None = None
    try:
        normalize_feed_to(
            opened, profile, out_dir, format=format, accounting=accounting,
            on_progress=on_progress,
        )
    except FATAL_FEED_ERRORS as fatal:
        error = fatal
    facts: dict[str, Any] = {
        "feed": str(feed),
        **accounting.to_dict(),
        "duplicate_id_count": accounting.by_reason.get("duplicate_id", 0),
        "outputs": paths.to_dict(),
        "format": format,
        "profile": str(path),
        "profile_status": profile_status,
        "language": language.to_dict(),
        "warnings": [w for w in warnings if w],
        "flag_advice": flag_advice(accounting.by_flag, str(path)),
    }
    return NormalizeResult(facts, paths, error)
