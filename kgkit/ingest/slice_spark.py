"""``kgkit slice --engine spark``: the slicer's chunks processed on Apache Spark.

Optional (``pip install 'kgkit[spark]'``, and Java). Spark reads each input with
``textFile`` (plain, gzip or bzip2, split across executors where the codec allows), numbers
the lines with ``zipWithIndex``, and runs :func:`kgkit.ingest.lines.process_chunk`, the
local engine's own code, on runs of consecutive lines in each partition. The driver
receives the results in line order and writes them as the local engine does, so both
engines write the same bytes for the same input.

With ``pieces`` (:meth:`SparkEngine.write_pieces`), each partition's executor writes its
kept statements itself, to ``piece-NNNNN.nt`` in a folder every executor can reach, and
only the counts and the rejected lines travel back to the driver: the driver's memory then
does not bound the slice. The pieces, concatenated in the order of their numbers, are the
bytes the local engine writes to one file.

A line ends at ``\\n``, ``\\r\\n`` or (Hadoop's reader) a lone ``\\r``; the local engine
splits only at ``\\n``, so a file with lone carriage returns is numbered differently.

The executors' Python is this interpreter: PySpark reads it from ``PYSPARK_PYTHON`` when a
context starts, so a session the engine starts is made with that variable set and the
variable is put back as it was at once (the context keeps its own copy). A session started
elsewhere must have been given a Python with kgkit too.
"""

from __future__ import annotations

import contextlib
import os
import sys
from pathlib import Path

from kgkit.errors import DependencyError, InputError
from kgkit.ingest.lines import ChunkSpec, process_chunk
from kgkit.ingest.sources import COMPRESSION_SUFFIXES, detect_compression

__all__ = ["SparkEngine", "piece_name"]

_LINES_PER_CHUNK = 20_000
# what Hadoop's textFile decompresses, told by the file name
_SPARK_CODECS = {".gz": "gzip", ".bz2": "bzip2"}


def piece_name(number: int) -> str:
    """File name of piece ``number`` of a slice written in pieces.

    >>> piece_name(7)
    'piece-00007.nt'
    """
    return f"piece-{number:05d}.nt"


def _partition(spec: ChunkSpec):
    def run(items):
        first, buf = None, []
        for line, index in items:
            if first is None:
                first = index + 1
            buf.append(bytes(line) + b"\n")
            if len(buf) >= _LINES_PER_CHUNK:
                yield process_chunk(spec, first, b"".join(buf), keep_objects=False)
                first, buf = None, []
        if buf:
            yield process_chunk(spec, first, b"".join(buf), keep_objects=False)

    return run


@contextlib.contextmanager
def _python_for_executors():
    """``PYSPARK_PYTHON`` set to this interpreter while a context starts, then restored."""
    before = os.environ.get("PYSPARK_PYTHON")
    os.environ["PYSPARK_PYTHON"] = sys.executable
    try:
        yield
    finally:
        if before is None:
            os.environ.pop("PYSPARK_PYTHON", None)
        else:
            os.environ["PYSPARK_PYTHON"] = before


class SparkEngine:
    """A Spark session for the slice; stopped at the end if this engine started it."""

    def __init__(self, inputs: list[str], master: str):
        try:
            from pyspark import SparkContext
            from pyspark.sql import SparkSession
        except ImportError:
            raise DependencyError(
                "engine='spark' needs pyspark: pip install 'kgkit[spark]' (and Java)",
                params=("engine",),
            ) from None
        for label in inputs:
            self._check(label)
        self._owned = SparkContext._active_spark_context is None
        builder = SparkSession.builder.appName("kgkit-slice")
        if self._owned:
            builder = (
                builder.master(master)
                .config("spark.ui.enabled", "false")
                .config("spark.driver.bindAddress", "127.0.0.1")
                .config("spark.driver.host", "127.0.0.1")
            )
            with _python_for_executors():
                self.spark = builder.getOrCreate()
        else:
            self.spark = builder.getOrCreate()
        if self._owned:
            self.spark.sparkContext.setLogLevel("ERROR")

    @staticmethod
    def _check(label: str) -> None:
        if label == "-":
            raise InputError(
                "-: engine='spark' reads files, not standard input", params=("engine",)
            )
        with open(label, "rb") as fh:
            found = detect_compression(fh.read(8))
        suffix = os.path.splitext(label)[1].lower()
        named = _SPARK_CODECS.get(suffix, "none")
        if found != named:
            if found not in _SPARK_CODECS.values() and found != "none":
                raise InputError(
                    f"{label}: {found} data; engine='spark' reads plain, gzip (.gz) or "
                    "bzip2 (.bz2) files; use engine='local' or recompress it",
                    params=("engine",),
                )
            want = {v: k for k, v in COMPRESSION_SUFFIXES.items()}.get(found, "no suffix")
            raise InputError(
                f"{label}: {found} data under a name Spark reads as {named}; "
                f"name it with {want} for engine='spark'",
                params=("engine",),
            )

    @contextlib.contextmanager
    def results(self, label: str, spec: ChunkSpec, progress=None, count=lambda: 0):
        from pyspark import StorageLevel

        sc = self.spark.sparkContext
        rdd = sc.textFile(os.path.abspath(label), use_unicode=False).zipWithIndex()
        results = rdd.mapPartitions(_partition(spec)).persist(StorageLevel.MEMORY_AND_DISK)
        try:
            # compute every partition at once (toLocalIterator alone runs them one by one),
            # then hand them over in order, each one's chunks in line order
            results.count()
            yield results.toLocalIterator(), lambda: None
        finally:
            results.unpersist()

    def write_pieces(self, label: str, spec: ChunkSpec, folder: Path, start: int) -> list:
        """Slice ``label`` with each partition's kept statements written by its executor to
        ``folder / piece_name(start + partition)``.

        Returns the chunk results in line order, their ``text`` emptied (it is in the
        pieces), and the number of pieces written as ``(results, pieces)``.
        """
        sc = self.spark.sparkContext
        rdd = sc.textFile(os.path.abspath(label), use_unicode=False).zipWithIndex()
        where = os.path.abspath(folder)
        chunks = _partition(spec)

        def run(index, items):
            # a retried task writes its piece again from the start
            with open(os.path.join(where, piece_name(start + index)), "wb") as fh:
                for res in chunks(items):
                    fh.write(res.text)
                    res.text = b""
                    yield res

        results = rdd.mapPartitionsWithIndex(run).collect()  # counts and rejects only
        return results, rdd.getNumPartitions()

    def close(self) -> None:
        if self._owned:
            self.spark.stop()
