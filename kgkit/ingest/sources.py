"""Opening inputs: files or standard input, plain or compressed, hashed as read.

Compression is told by the first bytes of the input (magic numbers), not by the
file name, so ``dump.dat`` holding gzip data is read correctly.
"""

from __future__ import annotations

import bz2
import gzip
import hashlib
import io
import lzma
import os
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import BinaryIO

from kgkit.errors import KgkitError

__all__ = ["Source", "open_source", "detect_compression", "COMPRESSION_SUFFIXES"]

_MAGIC = [
    (b"\x1f\x8b", "gzip"),
    (b"BZh", "bzip2"),
    (b"\xfd7zXZ\x00", "xz"),
    (b"\x28\xb5\x2f\xfd", "zstd"),
]
COMPRESSION_SUFFIXES = {".gz": "gzip", ".bz2": "bzip2", ".xz": "xz", ".zst": "zstd"}


def detect_compression(head: bytes) -> str:
    """Name of the compression whose magic number starts ``head``, or ``"none"``.

    >>> detect_compression(b"\\x1f\\x8b\\x08")
    'gzip'
    >>> detect_compression(b"<http://a> ")
    'none'
    """
    for magic, name in _MAGIC:
        if head.startswith(magic):
            return name
    return "none"


class _HashingReader(io.RawIOBase):
    """Counts and hashes the raw bytes read from the underlying stream."""

    def __init__(self, raw: BinaryIO):
        self._raw = raw
        self.sha256 = hashlib.sha256()
        self.bytes_read = 0

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        data = self._raw.read(len(buffer))
        n = len(data)
        buffer[:n] = data
        if n:
            self.sha256.update(data)
            self.bytes_read += n
        return n


@dataclass
class Source:
    """An opened input. ``stream`` yields the decompressed bytes."""

    label: str  # the name used in messages: the path as given, or "-"
    path: Path | None
    size: int | None  # raw size on disk, None for standard input
    compression: str
    stream: BinaryIO
    _hasher: _HashingReader
    _raw: BinaryIO

    @property
    def bytes_read(self) -> int:
        return self._hasher.bytes_read

    def finish(self) -> str:
        """Read what is left of the raw input (so the hash covers it) and return sha256."""
        while self._hasher.read(1 << 20):
            pass
        return self._hasher.sha256.hexdigest()

    def close(self) -> None:
        try:
            self.stream.close()
        finally:
            if self._raw is not sys.stdin.buffer:
                self._raw.close()


def open_source(name: str | os.PathLike) -> Source:
    """Open ``name`` (a path, or ``-`` for standard input) for reading decompressed bytes."""
    label = str(name)
    if label == "-":
        raw: BinaryIO = sys.stdin.buffer
        path, size = None, None
    else:
        path = Path(label)
        try:
            raw = open(path, "rb")  # noqa: SIM115 - closed by Source.close
            size = os.fstat(raw.fileno()).st_size
        except FileNotFoundError:
            raise KgkitError(f"{label}: no such file") from None
        except IsADirectoryError:
            raise KgkitError(f"{label}: is a folder, not a file") from None
        except PermissionError:
            raise KgkitError(f"{label}: permission denied") from None
    hasher = _HashingReader(raw)
    buffered = io.BufferedReader(hasher, buffer_size=1 << 20)
    compression = detect_compression(buffered.peek(8)[:8])
    stream: BinaryIO
    if compression == "gzip":
        stream = gzip.GzipFile(fileobj=buffered, mode="rb")
    elif compression == "bzip2":
        stream = bz2.BZ2File(buffered, mode="rb")
    elif compression == "xz":
        stream = lzma.LZMAFile(buffered, mode="rb")  # noqa: SIM115
    elif compression == "zstd":
        import zstandard

        reader = zstandard.ZstdDecompressor().stream_reader(buffered, read_across_frames=True)
        stream = io.BufferedReader(reader, buffer_size=1 << 20)  # type: ignore[arg-type]
    else:
        stream = buffered
    return Source(label, path, size, compression, stream, hasher, raw)
