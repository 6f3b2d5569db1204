"""Opening inputs: files or standard input, plain or compressed, hashed as read.

Compression is told by the first bytes of the input (magic numbers), not by the
file name, so ``dump.dat`` holding gzip data is read correctly.

Compressed input is checked as it is read, the same way for every format: each
stream must end with its end marker (a file cut short is an error, not a shorter
dump), its checksum must match where the format has one (gzip CRC-32 and length, bzip2
block and stream CRCs, xz check, zstd content checksum when the frame carries one), and
nothing but further streams of the same format may follow it (xz stream padding and
zstd skippable frames excepted). A damaged file raises :class:`DamagedInputError`
naming the file; it is raised while reading, so a caller that reads to the end
(:meth:`Source.finish`) knows the input was whole before it commits anything.
"""

from __future__ import annotations

import bz2
import hashlib
import io
import lzma
import os
import stat
import sys
import zlib
from dataclasses import dataclass
from pathlib import Path
from typing import BinaryIO

from kgkit.errors import DamagedInputError, InputError, one_line
from kgkit.inputs import file_error

__all__ = [
    "COMPRESSION_SUFFIXES",
    "DamagedInputError",
    "Source",
    "check_input",
    "detect_compression",
    "open_source",
]

_MAGIC = [
    (b"\x1f\x8b", "gzip"),
    (b"BZh", "bzip2"),
    (b"\xfd7zXZ\x00", "xz"),
    (b"\x28\xb5\x2f\xfd", "zstd"),
    # zstd skippable frames (RFC 8878, 3.1.2), which may come first (pzstd writes one)
    *((bytes([n]) + b"\x2a\x4d\x18", "zstd") for n in range(0x50, 0x60)),
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


class _Gzip:
    """gzip member by member (zlib checks each member's CRC-32 and length)."""

    def __init__(self):
        self._d = zlib.decompressobj(wbits=31)
        self._tail = b""

    def step(self, data: bytes, size: int) -> bytes:
        out = self._d.decompress(self._tail + data, size)
        self._tail = self._d.unconsumed_tail
        return out

    @property
    def needs_input(self) -> bool:
        return not self._tail and not self._d.eof

    @property
    def eof(self) -> bool:
        return self._d.eof

    @property
    def unused(self) -> bytes:
        return self._d.unused_data


class _Std:
    """bz2 and xz decompressors (same interface in the standard library)."""

    def __init__(self, make):
        self._d = make()

    def step(self, data: bytes, size: int) -> bytes:
        return self._d.decompress(data, size)

    @property
    def needs_input(self) -> bool:
        return self._d.needs_input and not self._d.eof

    @property
    def eof(self) -> bool:
        return self._d.eof

    @property
    def unused(self) -> bytes:
        return self._d.unused_data


class _Zstd:
    """zstd frame by frame. Its decompressor has no output limit, so input is fed in
    pieces sized from the ratio seen so far (memory stays bounded on highly
    compressible data)."""

    def __init__(self):
        import zstandard

        self._d = zstandard.ZstdDecompressor().decompressobj()
        self._buf = b""
        self._piece = 1 << 12
        self._rest = b""

    def step(self, data: bytes, size: int) -> bytes:
        buf = self._buf + data
        piece, self._buf = buf[: self._piece], buf[self._piece :]
        out = self._d.decompress(piece) if piece else b""
        if piece:
            ratio = max(len(out), 1) / len(piece)
            self._piece = int(min(1 << 20, max(1 << 9, (4 << 20) / ratio)))
        if self._d.eof:
            self._rest, self._buf = self._d.unused_data + self._buf, b""
        return out

    @property
    def needs_input(self) -> bool:
        return not self._buf and not self._d.eof

    @property
    def eof(self) -> bool:
        return self._d.eof

    @property
    def unused(self) -> bytes:
        return self._rest


def _decompressor(compression: str):
    if compression == "gzip":
        return _Gzip()
    if compression == "bzip2":
        return _Std(bz2.BZ2Decompressor)
    if compression == "xz":
        return _Std(lambda: lzma.LZMADecompressor(format=lzma.FORMAT_XZ))
    return _Zstd()


def _codec_errors() -> tuple[type[BaseException], ...]:
    import zstandard

    return (zlib.error, OSError, EOFError, lzma.LZMAError, zstandard.ZstdError)


class _Inflating(io.RawIOBase):
    """Decompressed bytes of ``raw``, checked: see the module docstring."""

    def __init__(self, raw: BinaryIO, compression: str, label: str):
        self._raw = raw
        self._compression = compression
        self._label = label
        self._magics = tuple(m for m, name in _MAGIC if name == compression)
        self._dec = _decompressor(compression)
        self._errors = _codec_errors()
        self._out = b""
        self._done = False

    def readable(self) -> bool:
        return True

    def _damaged(self, what: str) -> DamagedInputError:
        return DamagedInputError(f"{self._label}: damaged {self._compression} data: {what}")

    def _next_stream(self) -> None:
        """After a stream's end: another stream, padding, the end of input, or damage."""
        rest = self._dec.unused
        while len(rest) < max(map(len, self._magics)):
            more = self._raw.read(1 << 16)
            if not more:
                break
            rest += more
        if not rest:
            self._done = True
            return
        if self._compression == "xz" and not rest.strip(b"\0"):
            # xz stream padding: null bytes in multiples of four (xz file format, 2.2)
            while more := self._raw.read(1 << 16):
                if more.strip(b"\0"):
                    raise self._damaged("other bytes after the end of the compressed data")
                rest += more
            if len(rest) % 4:
                raise self._damaged("stream padding is not a multiple of four bytes")
            self._done = True
            return
        if not rest.startswith(self._magics):
            raise self._damaged(
                f"{len(rest)}{'+' if len(rest) >= 1 << 16 else ''} other bytes after the end "
                "of the compressed data"
            )
        self._dec = _decompressor(self._compression)
        self._out = self._step(rest, 1 << 20)

    def _step(self, data: bytes, size: int) -> bytes:
        try:
            return self._dec.step(data, size)
        except self._errors as exc:
            raise self._damaged(_reason(exc)) from None

    def readinto(self, buffer) -> int:
        want = len(buffer)
        while not self._out and not self._done:
            if self._dec.eof:
                self._next_stream()
            elif self._dec.needs_input:
                data = self._raw.read(1 << 16)
                if not data:
                    raise self._damaged("the file ends before the end of the compressed stream")
                self._out = self._step(data, max(want, 1 << 16))
            else:
                self._out = self._step(b"", max(want, 1 << 16))
        n = min(want, len(self._out))
        buffer[:n] = self._out[:n]
        self._out = self._out[n:]
        return n


def _reason(exc: BaseException) -> str:
    text = str(exc) or exc.__class__.__name__
    for prefix in (
        "zstd decompress error: ",
        "zstd decompressor error: ",
        "Error -3 while decompressing data: ",
    ):
        if text.startswith(prefix):
            text = text[len(prefix) :]
    return text[:1].lower() + text[1:]


class _TextBytes(io.RawIOBase):
    """The input without a leading UTF-8 byte-order mark, and with ``lone_cr`` a carriage
    return not followed by a line feed read as a line end (N-Triples and N-Quads allow CR,
    LF or CRLF as end of line; they cannot hold a raw CR anywhere else)."""

    def __init__(self, stream: BinaryIO, lone_cr: bool):
        self._stream = stream
        self._lone_cr = lone_cr
        self._start = True
        self._cr = False  # the previous block ended with CR
        self._out = b""

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        while not self._out:
            block = self._stream.read(max(len(buffer), 1 << 16))
            if not block:
                return 0
            if self._start:
                self._start = False
                if block.startswith(b"\xef\xbb\xbf"):
                    block = block[3:]
            if self._lone_cr and b"\r" in block:
                if self._cr and block.startswith(b"\n"):
                    block = block[1:]  # the CR of CRLF was already turned into LF
                self._cr = block.endswith(b"\r")
                block = block.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
            else:
                self._cr = False
            self._out = block
        n = min(len(buffer), len(self._out))
        buffer[:n] = self._out[:n]
        self._out = self._out[n:]
        return n


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
        """Read what is left of the input and return the sha256 of its raw bytes.

        The decompressed stream is read to its end first, so that damaged compressed
        data (cut short, bad checksum, trailing bytes) raises here, before the caller
        commits anything, even when a parser stopped before the end.
        """
        while self.stream.read(1 << 20):
            pass
        while self._hasher.read(1 << 20):
            pass
        return self._hasher.sha256.hexdigest()

    def close(self) -> None:
        try:
            self.stream.close()
        finally:
            if self._raw is not sys.stdin.buffer:
                self._raw.close()


def open_source(name: str | os.PathLike, *, lone_cr: bool = False) -> Source:
    """Open ``name`` (a path, or ``-`` for standard input) for reading decompressed bytes.

    A leading UTF-8 byte-order mark is left out. ``lone_cr`` (N-Triples, N-Quads) reads a
    carriage return on its own as a line end. Damaged compressed data raises
    :class:`DamagedInputError` while it is read.
    """
    label = str(name)
    shown = one_line(label)
    if label == "-":
        raw: BinaryIO = sys.stdin.buffer
        path, size = None, None
    else:
        path = Path(label)
        check_input(label)
        try:
            raw = open(path, "rb")  # noqa: SIM115 - closed by Source.close
        except OSError as exc:
            raise file_error(label, exc, "read") from None
        st = os.fstat(raw.fileno())
        if not (stat.S_ISREG(st.st_mode) or stat.S_ISFIFO(st.st_mode)):
            raw.close()
            raise InputError(f"{shown}: {_kind(st.st_mode)}, not a file")
        size = st.st_size if stat.S_ISREG(st.st_mode) else None
    hasher = _HashingReader(raw)
    buffered = io.BufferedReader(hasher, buffer_size=1 << 20)
    compression = detect_compression(buffered.peek(8)[:8])
    stream: BinaryIO = buffered
    if compression != "none":
        inflating = _Inflating(buffered, compression, shown)
        stream = io.BufferedReader(inflating, buffer_size=1 << 20)  # type: ignore[arg-type]
    stream = io.BufferedReader(_TextBytes(stream, lone_cr), buffer_size=1 << 20)  # type: ignore[arg-type]
    return Source(shown, path, size, compression, stream, hasher, raw)


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "is a folder"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "is a device"
    if stat.S_ISSOCK(mode):
        return "is a socket"
    return "is not a regular file"


def check_input(label: str) -> None:
    """Raise a one-line :class:`KgkitError` unless ``label`` names a readable input.

    ``-`` (standard input), regular files and pipes are inputs; a missing path, a folder,
    a device or a socket is refused with what it is.
    """
    if label == "-":
        return
    shown = one_line(label)
    try:
        st = os.stat(label)
    except OSError as exc:
        raise file_error(label, exc, "read") from None
    if not (stat.S_ISREG(st.st_mode) or stat.S_ISFIFO(st.st_mode)):
        raise InputError(f"{shown}: {_kind(st.st_mode)}, not a file")
    if not os.access(label, os.R_OK):
        raise InputError(f"{shown}: cannot read (permission denied)")
