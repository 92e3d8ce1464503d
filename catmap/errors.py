"""Every error catmap raises on purpose, under one base class.

Each error carries structured fields (path, line, field, product id) and a hint that tells the
user what to do next. The CLI's single error boundary turns them into one clear line and a
named exit code; nothing else in the library prints.
"""

from __future__ import annotations

from pathlib import Path

# Named exit codes (the CLI exits with these; documented in README.md).
EXIT_OK = 0
EXIT_FAILURE = 1
EXIT_USAGE = 2
EXIT_INPUT = 3  # a feed, profile, tree or decisions file that cannot be used
EXIT_MODEL = 4  # no model, or a model or store on another tree version
EXIT_STORE = 5  # the project store cannot be opened or is inconsistent
EXIT_INTERRUPTED = 130


class CatmapError(Exception):
    """Base class of every error catmap raises on purpose.

    Args:
        message: what failed, in one sentence.
        path: the file concerned, if any.
        line: 1-based line in that file, if known.
        field: the column / field / element concerned, if any.
        product_id: the product concerned, if any.
        hint: what the user should try next.
    """

    exit_code = EXIT_FAILURE

    def __init__(
        self,
        message: str,
        *,
        path: str | Path | None = None,
        line: int | None = None,
        field: str | None = None,
        product_id: str | None = None,
        hint: str | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.path = str(path) if path is not None else None
        self.line = line
        self.field = field
        self.product_id = product_id
        self.hint = hint

    def where(self) -> str:
        """Return 'file:line' (or what of it is known), '' when nothing is."""
        parts = []
        if self.path:
            parts.append(self.path + (f":{self.line}" if self.line else ""))
        elif self.line:
            parts.append(f"line {self.line}")
        if self.field:
            parts.append(f"field '{self.field}'")
        if self.product_id:
            parts.append(f"product '{self.product_id}'")
        return ", ".join(parts)

    def __str__(self) -> str:
        where = self.where()
        text = f"{where}: {self.message}" if where else self.message
        if self.hint:
            text += f" ({self.hint})"
        return text


class InputError(CatmapError):
    """A file given to catmap cannot be used as it is."""

    exit_code = EXIT_INPUT


class FeedFormatError(InputError):
    """A feed is not well-formed (broken XML, gzip or zip data cut short, unknown format...)."""


class FeedEncodingError(InputError):
    """A feed's bytes cannot be decoded with the detected or given encoding."""


class UnsafeFeedError(InputError):
    """A feed tries something catmap refuses (entity expansion, external entities, DTD access)."""


class ProfileError(InputError):
    """A feed profile (the column → field mapping file) is invalid."""


class TreeError(InputError):
    """A category tree file is invalid (duplicate id, cycle, unknown parent, ...)."""


class UnknownNode(CatmapError):
    """A node id or path that is not in the category tree."""

    exit_code = EXIT_INPUT


class ModelError(CatmapError):
    """A mapping model cannot be used."""

    exit_code = EXIT_MODEL


class ModelNotTrained(ModelError):
    """No trained model where one is needed."""


class ModelTreeMismatch(ModelError):
    """A model trained for another version of the category tree."""


class TreeVersionMismatch(ModelError):
    """Work that would mix two versions of the category tree in one store."""


class StoreError(CatmapError):
    """The project store cannot be opened, migrated or written."""

    exit_code = EXIT_STORE


class ReviewError(CatmapError):
    """A review action that cannot be done on the item on screen (e.g. a group decision with
    no node to put the group on)."""


class NoTerminal(ReviewError):
    """The review screen was asked for without a terminal (stdin or stdout redirected)."""

    exit_code = EXIT_USAGE
