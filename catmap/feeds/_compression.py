"""Open a feed file as a byte stream, decompressing gzip or single-member zip on the fly.

Compression is recognised by its magic bytes, never by the file name: retailers send
``feed.csv`` files that are really gzip, and ``.gz`` files that are not.
"""

from __future__ import annotations

import gzip
import io
import struct
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


# A zip local file header (APPNOTE 4.3.7): signature, version needed, flags, method, time,
# date, CRC-32, compressed size, uncompressed size, name length, extra field length.
_LOCAL_HEADER = struct.Struct("<4sHHHHHIIIHH")
_ZIP64_EXTRA = 0x0001
_UNKNOWN_SIZE = 0xFFFFFFFF
# Flag bits (APPNOTE 4.4.4): 0 encrypted, 3 sizes and CRC in a data descriptor after the data,
# 11 the name is UTF-8.
_ENCRYPTED, _DESCRIPTOR, _UTF8_NAME = 0x1, 0x8, 0x800
_READ_BLOCK = 64 * 1024
# Bytes looked at after a member's data: a data descriptor (at most 24 bytes) and the next
# local header's signature.
_AFTER_DATA = 32


class _CutZipMember(io.BufferedIOBase):
    """The one member of a zip archive whose end is cut off, read from its local header.

    A zip lists its files at its end (the central directory); ``zipfile`` refuses an archive
    cut short because that list is gone. The member's data starts right after its local
    header, so a stored member can be read as it is and a deflated one inflated with zlib
    until the cut. Reaching the cut raises :class:`EOFError` (which :class:`_Checked` turns
    into a feed error, after the bytes before it). A member read to its own end is checked
    against its CRC-32.
    """

    def __init__(
        self,
        handle: IO[bytes],
        *,
        name: str,
        method: int,
        compressed: int | None,
        crc: int | None,
    ) -> None:
        super().__init__()
        self._handle = handle
        self._name = name
        self._compressed = compressed  # None: unknown (in a data descriptor after the data)
        self._left = compressed
        self._taken = 0
        self._expected_crc = crc
        self._crc = 0
        self._inflate = (
            zlib.decompressobj(-zlib.MAX_WBITS) if method == zipfile.ZIP_DEFLATED else None
        )
        self._tail = b""
        self._ended = False
        self._error: Exception | None = None

    def readable(self) -> bool:
        return True

    def _cut(self) -> EOFError:
        of = f" of its {self._compressed:,}" if self._compressed is not None else ""
        return EOFError(
            f"the archive ends inside '{self._name}', after {self._taken:,}{of} compressed bytes"
        )

    def _take(self) -> bytes:
        wanted = _READ_BLOCK if self._left is None else min(_READ_BLOCK, self._left)
        data = self._handle.read(wanted) if wanted else b""
        self._taken += len(data)
        if self._left is not None:
            self._left -= len(data)
        return data

    def _finish(self, after: bytes) -> None:
        """Check what follows the member's data: its CRC-32, and no second member."""
        self._ended = True
        expected = self._expected_crc
        if expected is None and len(after) >= 8:
            # The data descriptor: an optional signature, then the CRC-32 (APPNOTE 4.3.9).
            at = 4 if after.startswith(b"PK\x07\x08") else 0
            expected = int.from_bytes(after[at : at + 4], "little")
        if expected is not None and expected != self._crc:
            self._error = zipfile.BadZipFile(f"'{self._name}' fails its CRC-32 check")
        elif after.find(_ZIP_MAGIC, 0, _AFTER_DATA) >= 0:
            self._error = zipfile.BadZipFile(
                "the archive holds another file after "
                f"'{self._name}'; catmap reads one feed per archive"
            )

    def read1(self, size: int = -1) -> bytes:
        wanted = size if size > 0 else _READ_BLOCK
        while not self._ended:
            inflate = self._inflate
            if inflate is None:
                data = self._take()
                if not data:
                    if self._left:
                        raise self._cut()
                    self._finish(self._handle.read(_AFTER_DATA))
                    break
            else:
                data = self._tail or self._take()
                if not data:
                    raise self._cut()
                data = inflate.decompress(data, wanted)
                self._tail = inflate.unconsumed_tail
            self._crc = zlib.crc32(data, self._crc)
            if inflate is not None and inflate.eof:
                self._finish(inflate.unused_data + self._handle.read(_AFTER_DATA))
            if data:
                return data
        if self._error is not None:
            raise self._error
        return b""

    def read(self, size: int | None = -1) -> bytes:
        if size is not None and size >= 0:
            return self.read1(size)
        return b"".join(iter(self.read1, b""))

    def close(self) -> None:
        try:
            self._handle.close()
        finally:
            super().close()


def _sizes_from_zip64(extra: bytes) -> tuple[int, int] | None:
    """The (uncompressed, compressed) sizes of a local header's ZIP64 extra field, if any."""
    at = 0
    while at + 4 <= len(extra):
        kind, length = struct.unpack_from("<HH", extra, at)
        if kind == _ZIP64_EXTRA and length >= 16:
            return cast(tuple[int, int], struct.unpack_from("<QQ", extra, at + 4))
        at += 4 + length
    return None


def _open_cut_zip(path: str | Path, damage: zipfile.BadZipFile) -> _CutZipMember:
    """Open the member of a zip archive that ``zipfile`` refused (its end is missing).

    Raises:
        FeedFormatError: the member cannot be read from its local header (not stored or
            deflated, encrypted, or the header itself is damaged), or a second member follows.
    """
    refused = FeedFormatError(
        f"the zip archive is damaged: {damage}",
        path=path,
        hint="ask the sender for the file again",
    )
    handle = open(path, "rb")
    try:
        header = handle.read(_LOCAL_HEADER.size)
        if len(header) < _LOCAL_HEADER.size:
            raise refused from damage
        magic, _, flags, method, _, _, crc, compressed, size, name_length, extra_length = (
            _LOCAL_HEADER.unpack(header)
        )
        raw_name = handle.read(name_length)
        extra = handle.read(extra_length)
        if magic != _ZIP_MAGIC or len(raw_name) < name_length or len(extra) < extra_length:
            raise refused from damage
        name = raw_name.decode("utf-8" if flags & _UTF8_NAME else "cp437", "replace")
        cut = (
            "the zip archive is cut short or damaged (the list of its files at its end is missing)"
        )
        again = "ask the sender for the file again"
        if flags & _ENCRYPTED:
            raise FeedFormatError(
                f"{cut}, and its member '{name}' is encrypted", path=path, hint=again
            )
        descriptor = bool(flags & _DESCRIPTOR)
        if method not in (zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED) or (
            method == zipfile.ZIP_STORED and descriptor
        ):
            how = (
                "stored without its size"
                if method == zipfile.ZIP_STORED
                else f"compression method {method}"
            )
            raise FeedFormatError(
                f"{cut}, and its member '{name}' is {how}: catmap reads a cut archive only "
                "when its member is stored with its size or deflated",
                path=path,
                hint=again,
            )
        if name.endswith("/"):
            raise FeedFormatError(
                f"{cut}, and its first entry '{name}' is a folder", path=path, hint=again
            )
        known: int | None = None
        if not descriptor:
            known = compressed
            if _UNKNOWN_SIZE in (compressed, size):
                sizes = _sizes_from_zip64(extra)
                known = sizes[1] if sizes else None
            if known is None and method == zipfile.ZIP_STORED:
                raise refused from damage
            if known is not None:
                # Sizes in the header: a second member's header would follow the data.
                start = handle.tell()
                handle.seek(start + known)
                if handle.read(4) == _ZIP_MAGIC:
                    raise FeedFormatError(
                        f"{cut}, and it holds more than one file; catmap reads one feed per "
                        "archive",
                        path=path,
                        hint=again + ", one feed per archive",
                    )
                handle.seek(start)
        return _CutZipMember(
            handle, name=name, method=method, compressed=known, crc=None if descriptor else crc
        )
    except BaseException:
        handle.close()
        raise


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

    A zip archive cut short (its list of files is gone) is read from its member's local
    header: the data before the cut is read, then the cut is raised as for a cut gzip.

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
            cut_member = _open_cut_zip(path, exc)
            checked = _Checked(cut_member, path, "zip", hold_damage=hold_damage)
            return cast(IO[bytes], checked), compression
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
