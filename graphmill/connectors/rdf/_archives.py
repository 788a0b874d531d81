"""Compressed dumps read as streams: gzip, bzip2, xz and Zstandard, by file extension.

:func:`open_archive` gives a binary file object of the decompressed bytes. Every error a
decompressor raises for bad data -- a damaged block, a bad checksum, or an archive that ends
before its end-of-stream marker -- becomes an :class:`ArchiveError` (errors of the disk
itself stay ``OSError``), which :func:`._files.reading` turns into a one-line InputError.
Zstandard needs the ``zstandard`` package (the ``rdf`` extra); its frames are checked for
their end, so a truncated ``.zst`` file is refused like the others.
"""

from __future__ import annotations

import bz2
import contextlib
import gzip
import io
import lzma
import zlib
from collections.abc import Iterator
from pathlib import Path
from typing import Any, BinaryIO

from graphmill.errors import require

COMPRESSIONS = {".gz": "gzip", ".bz2": "bzip2", ".xz": "xz", ".zst": "zstd"}
_READ = 1 << 20


class ArchiveError(Exception):
    """Compressed data that cannot be decompressed (truncated or damaged)."""


class _ZstdFrames(io.RawIOBase):
    """The decompressed bytes of consecutive Zstandard frames; refuses an unfinished one."""

    def __init__(self, raw: BinaryIO, zstd: Any) -> None:
        self._raw, self._zstd = raw, zstd
        self._frame = zstd.ZstdDecompressor().decompressobj()
        self._pending = b""
        self._started = False

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: Any) -> int:
        while not self._pending:
            data = self._raw.read(_READ)
            if not data:
                if self._started and not self._frame.eof:
                    raise ArchiveError("the data ends inside a Zstandard frame (truncated)")
                return 0
            self._pending = self._feed(data)
        size = min(len(buffer), len(self._pending))
        buffer[:size] = self._pending[:size]
        self._pending = self._pending[size:]
        return size

    def _feed(self, data: bytes) -> bytes:
        out = []
        while data:
            if self._frame.eof:  # the next frame of a multi-frame file
                self._frame = self._zstd.ZstdDecompressor().decompressobj()
            self._started = True
            out.append(self._frame.decompress(data))
            data = self._frame.unused_data if self._frame.eof else b""
        return b"".join(out)


class _Checked(io.RawIOBase):
    """Reads ``inner``, turning decompression errors into :class:`ArchiveError`."""

    def __init__(self, inner: BinaryIO, errors: tuple[type[BaseException], ...]) -> None:
        self._inner, self._errors = inner, errors

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: Any) -> int:
        try:
            data = self._inner.read(len(buffer))
        except ArchiveError:
            raise
        except OSError as exc:
            if exc.errno is not None:  # the disk, not the data
                raise
            raise ArchiveError(str(exc)) from exc
        except self._errors as exc:
            raise ArchiveError(str(exc) or type(exc).__name__) from exc
        buffer[: len(data)] = data
        return len(data)


@contextlib.contextmanager
def open_archive(path: Path | BinaryIO, compression: str | None) -> Iterator[BinaryIO]:
    """``path`` (or a binary file already open) read decompressed per ``compression`` (None:
    as it is). The file's own position tells how much of the archive has been read."""
    errors: tuple[type[BaseException], ...] = (EOFError, zlib.error, lzma.LZMAError)
    with contextlib.ExitStack() as stack:
        raw: Any = stack.enter_context(open(path, "rb")) if isinstance(path, Path) else path
        if compression is None:
            yield raw
            return
        if compression == "gzip":
            inner: Any = stack.enter_context(gzip.GzipFile(fileobj=raw, mode="rb"))
        elif compression == "bzip2":
            inner = stack.enter_context(bz2.BZ2File(raw, mode="rb"))
        elif compression == "xz":
            inner = stack.enter_context(lzma.LZMAFile(raw, mode="rb"))
        elif compression == "zstd":
            zstd = require("zstandard", "rdf")
            inner = _ZstdFrames(raw, zstd)
            errors += (zstd.ZstdError,)
        else:
            raise ValueError(f"unknown compression {compression!r}")
        yield io.BufferedReader(_Checked(inner, errors), buffer_size=_READ)
