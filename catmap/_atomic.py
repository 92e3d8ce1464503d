"""Atomic file writes: every file catmap writes appears whole or not at all.

A file is written to a temporary file in the same folder and then renamed over its target with
:func:`os.replace`, which is atomic on one file system. A process killed mid-write (``kill -9``,
a full disk) leaves the old file, or none, and at most a hidden ``.*.tmp`` file beside it; never
a truncated cache or model file that breaks the next run.

No ``fsync``: the case guarded against is a killed process, whose written pages the operating
system still flushes; a power cut is out of scope (and fsync on every cache would cost seconds).
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import IO, Any

__all__ = [
    "AtomicFile",
    "atomic_open",
    "atomic_path",
    "temporary_beside",
    "write_bytes_atomic",
    "write_text_atomic",
]


def temporary_beside(path: str | Path) -> Path:
    """Return an unused hidden temporary name in the folder of ``path`` (not created).

    The name keeps the target's suffix, so that writers which add a suffix when it is missing
    (NumPy's ``.npy`` / ``.npz``) write exactly there.
    """
    target = Path(path)
    token = f"{os.getpid()}-{secrets.token_hex(4)}"
    return target.with_name(f".{target.stem}.{token}.tmp{target.suffix}")


@contextmanager
def atomic_path(path: str | Path) -> Iterator[Path]:
    """Yield a temporary path to write; it replaces ``path`` when the block ends without error.

    On an error the temporary file is removed and ``path`` is left as it was.

    Args:
        path: the file to create or replace.

    Yields:
        The temporary path, in the same folder.
    """
    target = Path(path)
    temporary = temporary_beside(target)
    try:
        yield temporary
        os.replace(temporary, target)
    except BaseException:
        temporary.unlink(missing_ok=True)
        raise


@contextmanager
def atomic_open(
    path: str | Path,
    mode: str = "w",
    *,
    encoding: str | None = None,
    newline: str | None = None,
) -> Iterator[IO[Any]]:
    """Open a file for writing that replaces ``path`` only once it is closed without error.

    Args:
        path: the file to create or replace.
        mode: ``"w"`` (text, give ``encoding``) or ``"wb"``.
        encoding: text encoding.
        newline: as for :func:`open`.

    Yields:
        The open file.
    """
    with atomic_path(path) as temporary:
        with open(temporary, mode, encoding=encoding, newline=newline) as handle:
            yield handle


def write_text_atomic(path: str | Path, text: str, *, encoding: str = "utf-8") -> None:
    """Write a text file atomically (see :func:`atomic_path`)."""
    with atomic_open(path, "w", encoding=encoding, newline="") as handle:
        handle.write(text)


def write_bytes_atomic(path: str | Path, data: bytes) -> None:
    """Write a binary file atomically (see :func:`atomic_path`)."""
    with atomic_open(path, "wb") as handle:
        handle.write(data)


class AtomicFile:
    """A file written over time (a streaming writer's output) that appears on :meth:`commit`.

    Args:
        path: the file to create or replace.

    Attributes:
        path: the target.
        temporary: where the bytes go until the commit.
    """

    def __init__(self, path: str | Path) -> None:
        self.path = Path(path)
        self.temporary = temporary_beside(self.path)
        self._done = False

    def open(
        self, mode: str = "w", *, encoding: str | None = None, newline: str | None = None
    ) -> IO[Any]:
        """Open the temporary file (the caller closes it before :meth:`commit`)."""
        return open(self.temporary, mode, encoding=encoding, newline=newline)

    def commit(self) -> None:
        """Move the finished temporary file over the target (idempotent)."""
        if not self._done:
            self._done = True
            os.replace(self.temporary, self.path)

    def discard(self) -> None:
        """Remove the temporary file and leave the target as it was (idempotent)."""
        if not self._done:
            self._done = True
            self.temporary.unlink(missing_ok=True)
