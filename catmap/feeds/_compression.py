"""Open a feed file as a byte stream, decompressing gzip or single-member zip on the fly.

Compression is recognised by its magic bytes, never by the file name: retailers send
``feed.csv`` files that are really gzip, and ``.gz`` files that are not.
"""

from __future__ import annotations

import gzip
import io
import zipfile
import zlib
from pathlib import Path
from typing import IO, cast

from catmap.errors import FeedFormatError

_GZIP_MAGIC = b"\x1f\x8b"
_ZIP_MAGIC = b"PK\x03\x04"
_ZIP_EMPTY_MAGIC = b"PK\x05\x06"
# The zip compression methods the standard library reads.
_ZIP_METHODS = frozenset(
    {zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED, zipfile.ZIP_BZIP2, zipfile.ZIP_LZMA}
)


def detect_compression(path: str | Path) -> str | None:
    """Return "gzip", "zip" or None from the first bytes of ``path``.

    Raises:
        FeedFormatError: the file cannot be opened.
    """
    try:
        with open(path, "rb") as handle:
            magic = handle.read(4)
    except OSError as exc:
        raise FeedFormatError(
            f"cannot open the feed: {exc.strerror or exc}",
            path=path,
            hint="check the path and the file's permissions",
        ) from exc
    if magic.startswith(_GZIP_MAGIC):
        return "gzip"
    if magic in (_ZIP_MAGIC, _ZIP_EMPTY_MAGIC):
        return "zip"
    return None


class _ZipMember(io.BufferedReader):
    """A zip member's bytes that also closes the archive when closed."""

    def __init__(self, archive: zipfile.ZipFile, member: str) -> None:
        super().__init__(archive.open(member))  # type: ignore[arg-type]
        self._archive = archive

    def close(self) -> None:
        try:
            super().close()
        finally:
            self._archive.close()


class _Checked(io.BufferedIOBase):
    """A decompressing stream whose read errors become :class:`FeedFormatError`.

    A truncated gzip or a damaged zip member is found only when reading reaches the damage,
    possibly after many good records; the user then gets one clear error instead of a
    traceback.

    With ``hold_damage`` the error is not raised: the stream reads as ended and keeps the
    error in ``damage``. A text stream over it then gives every line decoded before the cut
    (raised through it, the error would take with it the lines a ``readlines`` call had
    gathered); the reader raises the error after them.
    """

    def __init__(
        self,
        inner: io.BufferedIOBase,
        path: str | Path,
        compression: str,
        *,
        hold_damage: bool = False,
    ) -> None:
        super().__init__()
        self._inner = inner
        self._path = path
        self._compression = compression
        self._hold_damage = hold_damage
        self.damage: FeedFormatError | None = None

    def _failed(self, exc: Exception) -> FeedFormatError:
        return FeedFormatError(
            f"the {self._compression} data is damaged or cut short: {exc}",
            path=self._path,
            hint="the records before the damage were read; ask the sender for the file again",
        )

    def readable(self) -> bool:
        return True

    def read(self, size: int | None = -1) -> bytes:
        if self.damage is not None:
            return b""
        try:
            if size is None or size < 0:
                return self._inner.read(-1)
            # One read of the compressed data at a time: a read that fills ``size`` from several
            # loses what it decoded when the last one meets the damage, so a small cut file
            # would give no record at all. The damage is raised on the read after.
            return self._inner.read1(size)
        except (OSError, EOFError, zlib.error, zipfile.BadZipFile) as exc:
            error = self._failed(exc)
            if not self._hold_damage:
                raise error from exc
            error.__cause__ = exc
            self.damage = error
            return b""

    def read1(self, size: int = -1) -> bytes:
        return self.read(size)

    def close(self) -> None:
        try:
            self._inner.close()
        finally:
            super().close()


def damage_found(stream: IO[bytes]) -> FeedFormatError | None:
    """The damage a stream opened with ``open_binary(..., hold_damage=True)`` found, if any."""
    return stream.damage if isinstance(stream, _Checked) else None


def _zip_member_name(archive: zipfile.ZipFile, path: str | Path) -> str:
    members = [
        info.filename
        for info in archive.infolist()
        if not info.is_dir() and not info.filename.startswith("__MACOSX/")
    ]
    if not members:
        raise FeedFormatError(
            "the zip archive holds no file", path=path, hint="send the feed itself or a zip of it"
        )
    if len(members) > 1:
        listed = ", ".join(members[:10]) + (", ..." if len(members) > 10 else "")
        raise FeedFormatError(
            f"the zip archive holds {len(members)} files, catmap reads one feed per archive",
            path=path,
            hint=f"unzip it and give catmap one of: {listed}",
        )
    info = archive.getinfo(members[0])
    # Bit 0 of the general purpose flags marks an encrypted member (zip file format
    # specification, APPNOTE 4.4.4); catmap takes no password.
    if info.flag_bits & 0x1:
        raise FeedFormatError(
            f"the zip member '{info.filename}' is encrypted",
            path=path,
            hint="ask the sender for the feed without a password",
        )
    if info.compress_type not in _ZIP_METHODS:
        raise FeedFormatError(
            f"the zip member '{info.filename}' uses compression method {info.compress_type}, "
            "which catmap cannot read",
            path=path,
            hint="ask the sender for a plain, gzip or deflate-zipped feed",
        )
    return members[0]


def open_binary(path: str | Path, *, hold_damage: bool = False) -> tuple[IO[bytes], str | None]:
    """Open ``path`` for reading as decompressed bytes.

    Args:
        path: the feed file.
        hold_damage: gzip or zip data found cut or damaged reads as ended instead of raising;
            :func:`damage_found` gives the error.

    Returns:
        The byte stream (the caller closes it) and the compression found ("gzip", "zip", None).

    Raises:
        FeedFormatError: the file cannot be opened, or a zip holds no file or several files.
    """
    compression = detect_compression(path)
    if compression == "gzip":
        inner = gzip.GzipFile(path, "rb")
        checked = _Checked(inner, path, "gzip", hold_damage=hold_damage)
        return cast(IO[bytes], checked), compression
    if compression == "zip":
        try:
            archive = zipfile.ZipFile(path)
        except zipfile.BadZipFile as exc:
            raise FeedFormatError(
                f"the zip archive is damaged: {exc}",
                path=path,
                hint="ask the sender for the file again",
            ) from exc
        try:
            member = _zip_member_name(archive, path)
            try:
                opened = _ZipMember(archive, member)
            except (RuntimeError, NotImplementedError, zipfile.BadZipFile, OSError) as exc:
                # RuntimeError: encrypted; NotImplementedError: an unknown method.
                raise FeedFormatError(
                    f"the zip member '{member}' cannot be opened: {exc}",
                    path=path,
                    hint="ask the sender for the file again, plain or gzip",
                ) from exc
            checked = _Checked(opened, path, "zip", hold_damage=hold_damage)
            return cast(IO[bytes], checked), compression
        except BaseException:
            archive.close()
            raise
    return open(path, "rb"), None


_HEAD_BLOCK = 8192


def read_head(path: str | Path, size: int) -> tuple[bytes, bool, str | None]:
    """Read the first ``size`` decompressed bytes of ``path``.

    A file damaged inside the head (a small truncated .gz) gives the bytes before the damage,
    not an error: reading the records then stops at the damage with a clear error, after the
    records before it are kept.

    Returns:
        The bytes, whether they are the whole file, and the compression.

    Raises:
        FeedFormatError: the file cannot be opened or decompressed at all.
    """
    stream, compression = open_binary(path)
    blocks: list[bytes] = []
    held = 0
    try:
        while held <= size:
            try:
                # Small reads: a read that meets the damage loses what it decoded.
                block = stream.read(min(_HEAD_BLOCK, size + 1 - held))
            except (OSError, EOFError, zipfile.BadZipFile, FeedFormatError) as exc:
                if held:
                    # The damage comes after some records; the reader reports it there.
                    return b"".join(blocks)[:size], False, compression
                detail = exc.message if isinstance(exc, FeedFormatError) else str(exc)
                raise FeedFormatError(
                    f"cannot decompress the feed ({compression}): {detail}",
                    path=path,
                    hint="the file may be truncated; ask the sender for it again",
                ) from exc
            if not block:
                break
            blocks.append(block)
            held += len(block)
    finally:
        stream.close()
    head = b"".join(blocks)
    complete = len(head) <= size
    return head[:size], complete, compression
