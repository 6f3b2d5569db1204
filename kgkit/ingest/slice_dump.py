"""Slicing a dump to a smaller N-Triples file, without loading it into a store.

For dumps too big to import: keep only what a vocabulary needs (the profile's
predicates or a given list, the chosen languages) and, with ``roots``, only statements
about entities reachable from those roots through the profile's parent predicates. The
closure needs every parent edge first, so that case reads the input twice: pass 1 collects
the parent edges, pass 2 writes the statements about the entities found.

Parsing and slicing are the import's own (:func:`kgkit.ingest.lines.process_chunk`), in
worker processes with ``jobs`` > 1 or on Apache Spark (``engine="spark"``,
:mod:`kgkit.ingest.slice_spark`), so a slice keeps exactly what ``kgkit import`` with the
same options would load. Statements are written as N-Triples in input order, the same bytes
for any number of workers; graph names of N-Quads are dropped, as an import folds them;
duplicates are kept; blank node labels are prefixed per input file so that files do not
share blank nodes. The output is written
to a temporary file and renamed into place: a failed slice leaves no partial output.
"""

from __future__ import annotations

import contextlib
import gzip
import os
import shutil
import tempfile
import time
from collections import defaultdict
from collections.abc import Callable
from dataclasses import asdict, dataclass, replace
from pathlib import Path

import pyoxigraph as ox

import kgkit.ingest.lines as _lines
from kgkit.errors import ArgumentError, InputError, ParseError, one_line
from kgkit.ingest.formats import LINE_BASED, detect_format
from kgkit.ingest.lines import ChunkSpec, iter_byte_chunks, process_chunks
from kgkit.ingest.loader import Progress, _Rejects
from kgkit.ingest.slicing import Slice
from kgkit.ingest.sources import check_input, open_source
from kgkit.ingest.targets import check_target, replace_file
from kgkit.reachability import reachable
from kgkit.workspace import CONFIG_NAME, Workspace

__all__ = ["SliceSummary", "reachable_from", "slice_dump"]


@dataclass
class SliceSummary:
    """What one slice did. ``read == written + filtered + rejected``."""

    output: str
    files: list[str]
    read: int = 0
    written: int = 0
    filtered: int = 0
    rejected: int = 0
    entities: int | None = None  # with roots: entities reachable from them
    seconds: float = 0.0
    rejects: str | None = None

    def to_dict(self) -> dict:
        d = asdict(self)
        d["seconds"] = round(self.seconds, 3)
        return d


def reachable_from(roots: set[str], edges: dict[str, set[str]]) -> set[str]:
    """Entities whose parent links lead to one of ``roots`` (the roots included).

    ``edges`` maps a parent to its children.

    >>> sorted(reachable_from({"a"}, {"a": {"b"}, "b": {"c"}, "x": {"y"}}))
    ['a', 'b', 'c']
    """
    return reachable(edges, roots)


class _LocalEngine:
    """Chunks of a file processed in ``jobs`` local worker processes."""

    def __init__(self, jobs: int):
        self.jobs = jobs

    @contextlib.contextmanager
    def results(self, label: str, spec: ChunkSpec, progress=None, count=lambda: 0):
        source = open_source(label, lone_cr=spec.format in ("nt", "nq"))
        # chunks of whole lines, the same whatever the number of workers
        it = process_chunks(spec, iter_byte_chunks(source.stream, _lines.CHUNK_BYTES), self.jobs)

        def tick():
            if progress:
                progress(Progress(label, source.bytes_read, source.size, count()))

        try:
            yield it, tick
        finally:
            it.close()
            source.close()

    def close(self) -> None:
        pass


def _parent_edges(
    inputs: list[tuple[str, str]], parents: frozenset[str], ws: Workspace, engine
) -> dict[str, set[str]]:
    """Pass 1: parent -> children over every input (bad lines are reported by pass 2)."""
    edges: dict[str, set[str]] = defaultdict(set)
    for label, fmt in inputs:
        spec = ChunkSpec(
            fmt, Slice(predicates=parents), ws if fmt == "records" else None, raw_ok=False
        )
        with engine.results(label, spec) as (results, _tick):
            for res in results:
                for t in _lines.parse_statements(res.text):
                    if isinstance(t.object, ox.NamedNode):
                        edges[t.object.value].add(t.subject.value)
    return edges


def slice_dump(
    ws: Workspace,
    inputs: list[str],
    output: str | os.PathLike,
    slice: Slice,
    format: str | None = None,
    roots: list[str] | None = None,
    on_error: str = "stop",
    rejects: Path | None = None,
    jobs: int = 1,
    progress: Callable[[Progress], None] | None = None,
    engine: str = "local",
    spark_master: str | None = None,
    pieces: bool = False,
) -> SliceSummary:
    """Write the statements of ``inputs`` that ``slice`` keeps to the N-Triples file ``output``.

    ``roots`` (IRIs) restricts the output to statements about entities reachable from
    them through the profile's parent predicates. ``output`` ending in ``.gz`` is
    written gzip-compressed. Returns a summary; raises :class:`ParseError` on the first
    bad line unless ``on_error`` is ``"skip"``.

    ``engine="spark"`` parses and slices on Apache Spark (``spark_master``, default
    ``local[jobs]``; needs the ``spark`` extra) and writes the same bytes as the local
    engine. With ``pieces`` (Spark only), ``output`` is a new folder and the executors write
    the slice into it themselves as numbered pieces (:func:`kgkit.ingest.slice_spark.piece_name`)
    that, concatenated in order, are the one file's bytes; the folder must be one every
    executor can reach.
    """
    t0 = time.perf_counter()
    if not inputs:
        raise InputError("nothing to slice: give one or more files, or - for standard input")
    if on_error not in ("stop", "skip"):
        raise ArgumentError("on_error", f"takes 'stop' or 'skip', not {on_error!r}")
    for label in inputs:
        check_input(label)  # a folder or a device is named as such before its format is asked
    formats = [detect_format(x, format) for x in inputs]
    for label, fmt in zip(inputs, formats, strict=True):
        if fmt not in LINE_BASED:
            raise InputError(
                f"{one_line(label)}: kgkit slice reads line-based formats (nt, nq, records), "
                f"not {fmt}; import it instead"
            )
    if roots and "-" in inputs:
        raise ArgumentError(
            "roots", "reads the input twice, so the input cannot come from standard input"
        )
    if engine not in ("local", "spark"):
        raise ArgumentError("engine", f"takes 'local' or 'spark', not {engine!r}")
    if pieces and engine != "spark":
        raise ArgumentError("pieces", "needs the spark engine (its executors write the pieces)")
    if pieces and Path(output).suffix == ".gz":
        raise ArgumentError("pieces", f"{output}: pieces are plain N-Triples; name a folder")
    if pieces and os.path.lexists(output):
        raise InputError(f"{output}: exists already; pieces go into a new folder")
    # never over an input, the workspace file or the store; only a regular file replaced
    protected = (inputs, ws.root / CONFIG_NAME, ws.store_path)
    if not pieces:
        check_target(Path(output), "output", *protected)
    if on_error == "skip":
        default = Path(output).with_name(Path(output).name + ".rejects.txt")
        check_target(Path(rejects) if rejects else default, "rejects file", *protected)
    if engine == "spark":
        from kgkit.ingest.slice_spark import SparkEngine

        runner = SparkEngine(inputs, spark_master or f"local[{max(1, jobs)}]")
    else:
        runner = _LocalEngine(jobs)
    try:
        return _slice(
            ws,
            inputs,
            formats,
            Path(output),
            slice,
            roots,
            on_error,
            rejects,
            runner,
            progress,
            t0,
            pieces,
        )
    finally:
        runner.close()


def _slice(
    ws, inputs, formats, output, slice, roots, on_error, rejects, engine, progress, t0, pieces
):
    summary = SliceSummary(output=str(output), files=list(inputs))
    pairs = list(zip(inputs, formats, strict=True))
    if roots:
        parents = frozenset(ws.profile["parent"])
        if not parents:
            raise ArgumentError("roots", "needs parent predicates in the workspace profile")
        closure = reachable_from(set(roots), _parent_edges(pairs, parents, ws, engine))
        summary.entities = len(closure)
        slice = replace(slice, subjects=frozenset(closure))
    if rejects is None and on_error == "skip":
        rejects = output.with_name(output.name + ".rejects.txt")
    bad = _Rejects(rejects if on_error == "skip" else None)
    output.parent.mkdir(parents=True, exist_ok=True)

    def take(label: str, res) -> None:
        for line, col, cause, text in res.rejects:
            if on_error != "skip":
                hint = "; run with on_error='skip' to set bad statements aside"
                raise ParseError(label, line, col, cause + hint, params=("on_error",))
            bad.add(label, line, col, cause, text)
            summary.rejected += 1
        summary.read += res.read
        summary.filtered += res.filtered
        summary.written += res.kept

    if pieces:
        folder = Path(tempfile.mkdtemp(prefix=".slice-pieces-", dir=output.parent))
        try:
            start = 0
            for n, (label, fmt) in enumerate(pairs, 1):
                spec = ChunkSpec(
                    fmt, slice, ws if fmt == "records" else None, raw_ok=False, blank_scope=f"f{n}x"
                )
                results, written = engine.write_pieces(label, spec, folder, start)
                for res in results:
                    take(label, res)
                start += written
            summary.read += summary.rejected
            os.chmod(folder, 0o755)
            os.rename(folder, output)
        except BaseException:
            bad.abort()
            shutil.rmtree(folder, ignore_errors=True)
            raise
        summary.rejects = bad.commit()
        summary.seconds = time.perf_counter() - t0
        return summary

    fd, tmp = tempfile.mkstemp(prefix=".slice-", dir=output.parent)
    raw = os.fdopen(fd, "wb")
    out = gzip.GzipFile(fileobj=raw, mode="wb", mtime=0) if output.suffix == ".gz" else raw
    try:
        for n, (label, fmt) in enumerate(pairs, 1):
            spec = ChunkSpec(
                fmt,
                slice,
                ws if fmt == "records" else None,
                raw_ok=False,
                blank_scope=f"f{n}x",
            )
            with engine.results(label, spec, progress, lambda: summary.read) as (results, tick):
                for res in results:
                    take(label, res)
                    out.write(res.text)
                    tick()
        summary.read += summary.rejected
        if out is not raw:
            out.close()
        raw.close()
        replace_file(tmp, output)
    except BaseException:
        bad.abort()
        if out is not raw:
            out.close()
        raw.close()
        Path(tmp).unlink(missing_ok=True)
        raise
    summary.rejects = bad.commit()
    summary.seconds = time.perf_counter() - t0
    return summary
