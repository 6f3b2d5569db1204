"""Importing dumps into the store: all-or-nothing, sliced, every bad line accounted for.

How an import runs:

1. Statements go into a fresh content graph, in batches of ``batch_size``
   statements, so memory stays flat however large the dump is.
2. Line-based formats (N-Triples, N-Quads, entity records) are read in chunks of whole
   lines, parsed and sliced by :func:`kgkit.ingest.lines.process_chunk` (in worker
   processes with ``jobs`` > 1). When the parser stops at an error, the bad line is
   found, set aside, and parsing resumes on the line after it. Exactly the bad lines
   are rejected; every good line is loaded. Turtle and JSON-LD are parsed as streams.
3. Counts reconcile: read = loaded + duplicates + filtered + rejected. ``loaded``
   is the number of distinct statements in the content graph, so ``duplicates`` is
   what the store folded together.
4. Only when everything went well does the graph name point at the new content
   (:func:`kgkit.store.register_imports`, one transaction for every graph of the
   command). The old content is then unreferenced: removed at once when small, left
   for :func:`kgkit.store.reclaim` otherwise, so that a refresh costs what a first
   import costs. On any failure no name changes; the partial content is unreferenced
   too (removed at once when small; after Ctrl-C or SIGTERM always left, so that the
   command ends within seconds).
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import re
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from dataclasses import asdict, dataclass, field
from datetime import UTC, datetime
from pathlib import Path

import pyoxigraph as ox

import kgkit
from kgkit.errors import (
    ArgumentError,
    InputError,
    ParseError,
    StoreError,
    WorkspaceError,
    one_line,
)
from kgkit.ingest import lines as _lines
from kgkit.ingest.formats import FORMATS, LINE_BASED, RDF_FORMATS, detect_format
from kgkit.ingest.lines import (
    ChunkResult,
    ChunkSpec,
    cause_of,
    decode,
    iter_byte_chunks,
    iter_line_chunks,
    process_chunk,
    process_chunks,
)
from kgkit.ingest.slicing import Slice
from kgkit.ingest.sources import COMPRESSION_SUFFIXES, Source, check_input, open_source
from kgkit.ingest.targets import check_target, replace_file
from kgkit.store import (
    AUTO_RECLAIM,
    DISCARD_AT_ONCE,
    FileInfo,
    ImportRecord,
    content_graph_iri,
    count_graph,
    is_valid_graph_name,
    next_import_id,
    open_store,
    reclaim_graph,
    register_imports,
)
from kgkit.workspace import CONFIG_NAME, Workspace

__all__ = [
    "ImportOptions",
    "ImportSummary",
    "Progress",
    "import_files",
    "import_into_store",
    "graph_name_for",
    "make_slice",
]

# Statements per bulk load. Measured on the 1M-triple synthetic dump (bench/import_bench.py
# machine, 2 cores): one batch of 1M peaked at 1.0 GB, two of 500k at 0.58 GB, four of 250k
# at 0.48 GB, in about the same time or less; 500k keeps the number of loads low.
DEFAULT_BATCH = 500_000


@dataclass(frozen=True)
class ImportOptions:
    """How to import. ``on_error`` is ``"stop"`` or ``"skip"``."""

    graph: str | None = None
    format: str | None = None
    on_error: str = "stop"
    rejects: Path | None = None
    slice: Slice = field(default_factory=Slice)
    batch_size: int = DEFAULT_BATCH
    base_iri: str | None = None
    jobs: int = 1  # worker processes for line-based formats


@dataclass
class ImportSummary:
    """What one import did. ``read == loaded + duplicates + filtered + rejected``."""

    graph: str
    files: list[str]
    read: int = 0
    loaded: int = 0
    duplicates: int = 0
    filtered: int = 0
    rejected: int = 0
    seconds: float = 0.0
    content: str = ""
    rejects: str | None = None
    replaced: bool = False
    reclaimable: bool = False  # the replaced content was left for `kgkit reclaim`

    def to_dict(self) -> dict:
        d = asdict(self)
        d["seconds"] = round(self.seconds, 3)
        return d


@dataclass(frozen=True)
class Progress:
    """Sent to the progress callback now and then during an import."""

    file: str
    bytes_read: int
    bytes_total: int | None
    statements: int


ProgressCallback = Callable[[Progress], None]


#: file extensions a graph name leaves out: those of the formats and of compression
_KNOWN_SUFFIXES = frozenset(
    [e for exts in FORMATS.values() for e in exts] + list(COMPRESSION_SUFFIXES)
)


def graph_name_for(label: str) -> str:
    """A graph name from a file name: ``dumps/sport-2026.nt.gz`` gives ``sport-2026``."""
    if label == "-":
        return "stdin"
    name = Path(label).name
    for _ in range(3):
        stem, dot, ext = name.rpartition(".")
        if dot and f".{ext.lower()}" in _KNOWN_SUFFIXES:
            name = stem
    name = re.sub(r"[^A-Za-z0-9._-]+", "-", name).strip("-.") or "graph"
    if not name[0].isalnum():
        name = "g" + name
    return name[:128]


def make_slice(
    ws: Workspace,
    scope: str = "all",
    predicates: list[str] | None = None,
    literal_languages: list[str] | None = None,
    graphs: list[str] | None = None,
) -> Slice:
    """Build a :class:`Slice` from command-line style choices.

    ``scope`` is ``"all"`` (every predicate) or ``"profile"`` (the predicates of the
    workspace profile, or, with ``graphs``, of those graphs' profiles in ``kgkit.yaml``
    together); ``predicates`` adds to it; ``literal_languages`` keeps only
    language-tagged literals in those languages (untagged ones always pass).
    """
    if scope not in ("all", "profile"):
        raise ArgumentError("scope", f"takes 'all' or 'profile', not {one_line(repr(scope))}")
    kept: set[str] | None = None
    if scope == "profile":
        profile = ws.profile_over(graphs) if graphs else ws.profile
        kept = set(profile.all_predicates())
    if predicates:
        kept = (kept or set()) | {ws.expand(p, where="predicates") for p in predicates}
    langs = None
    if literal_languages:
        langs = tuple(x.strip().lower() for x in literal_languages if x.strip())
        for tag in langs:
            if not re.fullmatch(r"\*|[a-z]{1,8}(-[a-z0-9]{1,8})*", tag):
                raise ArgumentError(
                    "literal_languages", f"{one_line(repr(tag))} is not a language tag"
                )
    return Slice(frozenset(kept) if kept is not None else None, langs)


class _Rejects:
    """The rejects file, written to a temporary name and renamed at the end.

    Each bad statement takes two lines: ``# FILE:LINE:COLUMN: cause`` (control characters
    escaped, so it stays one line) and the statement's text as read.
    """

    def __init__(self, path: Path | None):
        self.path = path
        self._fh = None
        self._tmp: str | None = None
        self.count = 0

    def _open(self) -> None:
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            fd, self._tmp = tempfile.mkstemp(prefix=".rejects-", dir=self.path.parent)
        except OSError as exc:
            raise InputError(
                f"rejects file {one_line(str(self.path))}: cannot write it "
                f"({exc.strerror or exc.__class__.__name__})"
            ) from None
        self._fh = os.fdopen(fd, "w", encoding="utf-8", newline="\n", errors="surrogateescape")

    def prepare(self) -> None:
        """Make the temporary file now (it is made anyway when committed)."""
        if self.path is not None and self._fh is None:
            self._open()

    def add(self, label: str, line: int | None, column: int | None, cause: str, text: str):
        if self.path is None:
            return
        if self._fh is None:
            self._open()
        where = f"{label}:{line}" + (f":{column}" if column else "") if line else label
        self._fh.write(f"# {one_line(where)}: {one_line(cause)}\n")
        text = text.rstrip("\r\n")
        self._fh.write(text + "\n" if text else "")
        self.count += 1

    def commit(self) -> str | None:
        if self.path is None:
            return None
        if self._fh is None:
            self._open()
        self._fh.close()
        replace_file(self._tmp, self.path)
        self._fh = None
        return str(self.path)

    def abort(self) -> None:
        if self._fh is not None:
            self._fh.close()
            os.unlink(self._tmp)
            self._fh = None


class _Run:
    """State of one import: counters, the content graph, the error policy."""

    def __init__(self, store, content: str, opts: ImportOptions, rejects: _Rejects, scope: str):
        self.store = store
        self.content = ox.NamedNode(content)
        self.opts = opts
        self.rejects = rejects
        self.read = 0
        self.filtered = 0
        self.rejected = 0
        self.scope = scope  # blank nodes are scoped per import and file

    # -- errors ---------------------------------------------------------
    def bad(self, label: str, line: int | None, column: int | None, cause: str, text: str):
        if self.opts.on_error != "skip":
            hint = "; run with on_error='skip' to set bad statements aside"
            raise ParseError(label, line, column, cause + hint, params=("on_error",))
        self.rejected += 1
        self.read += 1
        self.rejects.add(label, line, column, cause, text)

    # -- writing --------------------------------------------------------
    def load_text(self, data: bytes) -> None:
        if data:
            _interruptibly(
                self.store.bulk_load,
                input=data,
                format=ox.RdfFormat.N_TRIPLES,
                to_graph=self.content,
            )

    def _scoped(self, term):
        # a label maps to the same node in every batch of a file (no table kept: memory
        # stays flat however many blank nodes a dump holds); triple terms are gone into
        return _lines.scope_blanks(term, self.scope)

    def load_quads(self, quads) -> None:
        g, sc = self.content, self._scoped
        batch = [ox.Quad(sc(q.subject), q.predicate, sc(q.object), g) for q in quads]
        if batch:
            _interruptibly(self.store.bulk_extend, batch)


def _interruptibly(call, *args, **kwargs):
    """``call(*args, **kwargs)`` in a thread, waited for in steps Ctrl-C can interrupt.

    The store's bulk loader returns to Python only when its whole batch is in: Ctrl-C
    took 20 s to end an import loading one batch of 0.4M statements on a busy machine.
    Interrupted, the import ends at once and the load finishes (or dies with the process)
    in a content graph no name points at, which is what a killed import leaves.
    """
    box: dict = {}

    def run():
        try:
            box["result"] = call(*args, **kwargs)
        except BaseException as exc:  # handed to the waiting thread below
            box["error"] = exc

    thread = threading.Thread(target=run, daemon=True)
    thread.start()
    _join(thread)
    if "error" in box:
        raise box["error"]
    return box.get("result")


def _join(thread: threading.Thread) -> None:
    # join() without a timeout cannot be interrupted by a signal handler's exception
    while thread.is_alive():
        thread.join(0.2)


def _interrupted() -> bool:
    return isinstance(sys.exc_info()[1], KeyboardInterrupt)


def _load_raw(run: _Run, label: str, first: int, data: bytes) -> None:
    """Load N-Triples through the store's own parser, the fast path.

    ``run.read`` already counts every statement of ``data``. On an error the data is
    parsed here instead (the failed bulk load may have written part of it; the store
    keeps one copy of each statement), so that the bad lines are set aside in line order
    and every good one is loaded.
    """
    try:
        run.load_text(data)
        return
    except SyntaxError:
        pass
    res = process_chunk(ChunkSpec("nt", raw_ok=False), first, data)
    run.read -= len(res.rejects)  # run.bad counts each bad statement again
    for line, col, cause, text in res.rejects:
        run.bad(label, line, col, cause, text)
    run.load_text(res.text)


class _Pending:
    """Statements waiting to be loaded, so that the store gets large batches.

    With ``background`` (parallel imports), kept statements are loaded by a thread while
    the workers go on parsing (the store's bulk loader releases the GIL); one load at a
    time, and every other write to the store waits for it.
    """

    def __init__(self, run: _Run, label: str, background: bool = False):
        self.run, self.label = run, label
        self.raw: list[bytes] = []
        self.raw_first = 0
        self.raw_lines = 0
        self.text: list[bytes] = []
        self.text_count = 0
        self.background = background
        batch = run.opts.batch_size
        # smaller loads when they overlap with parsing, but not so small that the bulk
        # loader's fixed cost per call dominates
        self.text_batch = min(batch, max(100_000, batch // 4)) if background else batch
        self._thread: threading.Thread | None = None
        self._error: BaseException | None = None

    def add(self, res: ChunkResult) -> None:
        run = self.run
        if res.raw is None or res.rejects:
            self.flush_raw()  # rejects go out in line order
        for line, col, cause, text in res.rejects:
            run.bad(self.label, line, col, cause, text)
        run.read += res.read
        run.filtered += res.filtered
        if res.raw is not None:
            if not self.raw:
                self.raw_first = res.first
            self.raw.append(res.raw)
            self.raw_lines += res.raw.count(b"\n")
            if self.raw_lines >= run.opts.batch_size:
                self.flush_raw()
            return
        if res.text:
            self.text.append(res.text)
            self.text_count += (
                res.kept
                - len(res.quads or ())
                - (res.blank_text.count(b"\n") if res.blank_text else 0)
            )
            if self.text_count >= self.text_batch:
                self.flush_text()
        if res.quads:
            self.wait()
            run.load_quads(res.quads)
        if res.blank_text:
            self.wait()
            run.load_quads(_lines.parse_statements(res.blank_text))

    def flush_raw(self) -> None:
        if self.raw:
            data = b"".join(self.raw)
            self.raw, self.raw_lines = [], 0
            self.wait()
            _load_raw(self.run, self.label, self.raw_first, data)

    def flush_text(self) -> None:
        if self.text:
            data = b"".join(self.text)
            self.text, self.text_count = [], 0
            self.wait()
            if self.background:
                self._thread = threading.Thread(target=self._load, args=(data,), daemon=True)
                self._thread.start()
            else:
                self.run.load_text(data)

    def _load(self, data: bytes) -> None:
        try:
            self.run.load_text(data)
        except BaseException as exc:  # handed to the importing thread by wait()
            self._error = exc

    def wait(self) -> None:
        """Wait for the background load, raising its error if it failed."""
        if self._thread is not None:
            _join(self._thread)
            self._thread = None
        if self._error is not None:
            error, self._error = self._error, None
            raise error

    def flush(self) -> None:
        self.flush_raw()
        self.flush_text()
        self.wait()

    def abandon(self) -> None:
        """On failure: let a background load finish before the content graph is removed
        (not after Ctrl-C or SIGTERM: the content graph is left as it is then)."""
        if self._thread is not None and not _interrupted():
            _join(self._thread)
        self._thread = None


class _NestingGuard(io.RawIOBase):
    """A Turtle stream, refused once ``<<`` opens more than MAX_TRIPLE_TERM_DEPTH levels.

    pyoxigraph's parser recurses per level of triple terms and ends the process when
    its stack runs out, so the depth is counted before it sees the bytes. Text inside
    string literals is counted too: only a literal quoting dozens of ``<<`` is refused
    wrongly.
    """

    _TOKENS = re.compile(rb"<<|>>")

    def __init__(self, stream, label: str):
        self._stream, self._label = stream, label
        self._depth = 0
        self._line = 1
        self._carry = b""

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        data = self._stream.read(len(buffer))
        if not data:
            return 0
        text = self._carry + data  # a token cut by the block boundary is seen whole
        last = 0
        if b"<<" in text or b">>" in text:
            for m in self._TOKENS.finditer(text):
                last = m.end()
                self._depth = self._depth + 1 if m.group() == b"<<" else max(self._depth - 1, 0)
                if self._depth > _lines.MAX_TRIPLE_TERM_DEPTH:
                    line = self._line + text.count(b"\n", 0, m.start())
                    cause = f"triple terms nested more than {_lines.MAX_TRIPLE_TERM_DEPTH} deep"
                    raise ParseError(self._label, line, None, cause)
        # keep the last byte for the next block unless it closed a token counted here
        self._carry = b"" if last == len(text) else text[-1:]
        self._line += text.count(b"\n", 0, len(text) - len(self._carry))
        n = len(data)
        buffer[:n] = data
        return n


def _load_document(run: _Run, source: Source, fmt_name: str) -> None:
    """Turtle and JSON-LD: not line-based, parsed as a stream."""
    # Always parsed here rather than handed to Store.bulk_load: bulk_load puts JSON-LD
    # statements of named graphs into those graphs, outside the content graph, and
    # counts only distinct statements. Named graphs are folded into the import's graph,
    # as for N-Quads.
    fmt = RDF_FORMATS[fmt_name]
    base = run.opts.base_iri
    stream = source.stream
    if fmt_name == "ttl":
        stream = io.BufferedReader(_NestingGuard(stream, source.label), 1 << 20)
    parser = ox.parse(input=stream, format=fmt, base_iri=base)
    batch: list[ox.Quad] = []
    errors: list[tuple[int | None, int | None, str]] = []
    last = None
    while True:
        try:
            q = next(parser)
        except StopIteration:
            break
        except MemoryError:  # pyoxigraph: "Reached the buffer maximal size of 16777216"
            raise ParseError(
                source.label,
                None,
                None,
                "a term longer than the parser's 16 MB buffer; "
                "only N-Triples and N-Quads can hold terms that long",
            ) from None
        except SyntaxError as exc:
            where = (exc.lineno, exc.offset)
            if where == last:
                raise ParseError(
                    source.label,
                    exc.lineno,
                    exc.offset,
                    cause_of(exc) + "; the parser cannot recover here",
                ) from None
            last = where
            errors.append((exc.lineno, exc.offset, cause_of(exc)))
            if run.opts.on_error != "skip":
                run.bad(source.label, exc.lineno, exc.offset, cause_of(exc), "")
            continue
        run.read += 1
        if run.opts.slice.keeps(q):
            batch.append(q)
            if len(batch) >= run.opts.batch_size:
                run.load_quads(batch)
                batch = []
        else:
            run.filtered += 1
    run.load_quads(batch)
    if errors:
        texts = _lines_of(source.path, {e[0] for e in errors if e[0]})
        for line, col, cause in errors:
            run.bad(source.label, line, col, cause, texts.get(line, ""))


def _lines_of(path: Path | None, wanted: set[int]) -> dict[int, str]:
    """The text of some lines of a file, for the rejects file (second pass)."""
    if path is None or not wanted:
        return {}
    src = open_source(path)
    out = {}
    try:
        for n, line in enumerate(src.stream, 1):
            if n in wanted:
                out[n] = decode(line)
                if len(out) == len(wanted):
                    break
    finally:
        src.close()
    return out


def _load_source(
    run: _Run,
    source: Source,
    fmt_name: str,
    ws: Workspace | None,
    progress: ProgressCallback | None,
) -> None:
    def tick():
        if progress:
            progress(Progress(source.label, source.bytes_read, source.size, run.read))

    if fmt_name not in LINE_BASED:
        tick()
        _load_document(run, source, fmt_name)
        tick()
        return
    if fmt_name == "records" and ws is None:
        raise WorkspaceError("entity records need a workspace profile to map their fields")
    opts = run.opts
    spec = ChunkSpec(fmt_name, opts.slice, ws if fmt_name == "records" else None)
    # A plain N-Triples import is bound by the store's own loader: workers would only
    # add a pass; they help when statements must be parsed here (slicing, N-Quads,
    # entity records, blank nodes).
    parallel = opts.jobs > 1 and not (fmt_name == "nt" and opts.slice.is_everything)
    if parallel:
        chunks = iter_byte_chunks(source.stream, _lines.CHUNK_BYTES)
    else:
        chunks = iter_line_chunks(source.stream, opts.batch_size, tick)
    pending = _Pending(run, source.label, background=parallel)
    results = process_chunks(spec, chunks, opts.jobs if parallel else 1)
    try:
        for res in results:
            pending.add(res)
            del res  # the chunk's bytes go once loaded, not when the next one arrives
            tick()
        pending.flush()
    finally:
        results.close()  # on failure: stop the workers now, not when garbage is collected
        pending.abandon()
    tick()


def _now() -> str:
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


@dataclass
class _Staged:
    """An import whose statements are in their content graph, not yet switched to."""

    summary: ImportSummary
    record: ImportRecord
    rejects: _Rejects


def _stage(
    store: ox.Store,
    inputs: list[str],
    graph: str,
    import_id: int,
    opts: ImportOptions,
    ws: Workspace | None,
    progress: ProgressCallback | None,
) -> _Staged:
    """Load ``inputs`` into a fresh content graph; nothing points at it yet.

    On failure the partial content graph is discarded (:func:`_discard`).
    """
    if not is_valid_graph_name(graph):
        raise ArgumentError(
            "graph", f"{graph!r} is not a valid graph name (letters, digits, '.', '_' and '-')"
        )
    if opts.on_error not in ("stop", "skip"):
        raise ArgumentError("on_error", f"takes 'stop' or 'skip', not {opts.on_error!r}")
    if opts.batch_size < 1:
        raise ArgumentError("batch_size", "must be at least 1")
    formats = [detect_format(x, opts.format) for x in inputs]
    if inputs.count("-") > 1:
        raise InputError("-: standard input can be read only once")
    if opts.rejects is not None and opts.on_error == "skip":
        check_target(
            Path(opts.rejects),
            "rejects file",
            inputs,
            ws.root / CONFIG_NAME if ws else None,
            ws.store_path if ws else None,
        )
    started, t0 = _now(), time.perf_counter()
    content = content_graph_iri(graph, import_id)
    rejects = _Rejects(opts.rejects if opts.on_error == "skip" else None)
    run = _Run(store, content, opts, rejects, scope=f"k{import_id}x")
    files: list[FileInfo] = []
    try:
        rejects.prepare()  # a rejects folder that cannot be written stops us before reading
        for n, (label, fmt_name) in enumerate(zip(inputs, formats, strict=True), 1):
            run.scope = f"k{import_id}f{n}x"
            source = open_source(label, lone_cr=fmt_name in ("nt", "nq"))
            try:
                _load_source(run, source, fmt_name, ws, progress)
                # read to the end: damaged compressed data stops the import here, before
                # the graph is switched
                sha = source.finish()
            except OSError as exc:
                raise InputError(
                    f"{source.label}: cannot read ({exc.strerror or exc.__class__.__name__})"
                ) from None
            finally:
                source.close()
            files.append(
                FileInfo(
                    # a name that is not UTF-8 is kept with its odd bytes as \xNN
                    name=label if label == "-" else one_line(os.path.basename(label)),
                    size=source.bytes_read,
                    sha256=sha,
                    format=fmt_name,
                    compression=source.compression,
                )
            )
        loaded = count_graph(store, content)
        duplicates = run.read - run.filtered - run.rejected - loaded
        if duplicates < 0:  # cannot happen unless the store changed under us
            raise StoreError(
                f"{content}: counts do not reconcile ({run.read} read, {loaded} stored)"
            )
    except BaseException as exc:
        rejects.abort()
        _discard(store, content, exc)
        raise
    summary = ImportSummary(
        graph=graph,
        files=[f.name for f in files],
        read=run.read,
        loaded=loaded,
        duplicates=duplicates,
        filtered=run.filtered,
        rejected=run.rejected,
        content=content,
        seconds=time.perf_counter() - t0,
    )
    counts = {
        k: getattr(summary, k) for k in ("read", "loaded", "duplicates", "filtered", "rejected")
    }
    options = json.dumps(
        {
            "format": opts.format,
            "on_error": opts.on_error,
            "predicates": sorted(opts.slice.predicates) if opts.slice.predicates else None,
            "literal_languages": (
                list(opts.slice.literal_languages) if opts.slice.literal_languages else None
            ),
            "base_iri": opts.base_iri,
        },
        sort_keys=True,
    )
    record = ImportRecord(
        graph,
        import_id,
        content,
        tuple(files),
        counts,
        started,
        _now(),
        kgkit.__version__,
        options,
    )
    return _Staged(summary, record, rejects)


def _discard(store: ox.Store, content: str, exc: BaseException) -> None:
    """After a failed import: its partial content graph is unreferenced, so no one sees it.

    A small one is removed at once, so that the store is exactly as before; a large one,
    or any after an interruption (Ctrl-C, SIGTERM: the command must end within seconds),
    is left for :func:`kgkit.store.reclaim`.
    """
    if isinstance(exc, KeyboardInterrupt | SystemExit):
        return
    with contextlib.suppress(OSError):
        reclaim_graph(store, content, at_most=DISCARD_AT_ONCE)


def _switch(store: ox.Store, staged: list[_Staged]) -> None:
    """Point every staged graph at its new content in one transaction, then tidy up."""
    try:
        previous = register_imports(store, [s.record for s in staged])
    except BaseException as exc:
        for s in staged:
            s.rejects.abort()
            _discard(store, s.record.content, exc)
        raise
    for s in staged:
        s.summary.rejects = s.rejects.commit()
        old = previous.get(s.record.name)
        if old:
            s.summary.replaced = True
            # the old content is unreferenced now: removed at once when small, otherwise
            # left for `kgkit reclaim` (removing 0.4M statements takes 3-5x loading them)
            s.summary.reclaimable = reclaim_graph(store, old, at_most=AUTO_RECLAIM) is None


def import_into_store(
    store: ox.Store,
    inputs: list[str],
    graph: str,
    opts: ImportOptions,
    ws: Workspace | None = None,
    progress: ProgressCallback | None = None,
) -> ImportSummary:
    """Import ``inputs`` as one import into graph ``graph`` of an opened store.

    All or nothing: on any error the registry is left exactly as it was, and the
    partial content (unreferenced, seen by no query) is removed or left reclaimable.
    """
    t0 = time.perf_counter()
    staged = _stage(store, inputs, graph, next_import_id(store), opts, ws, progress)
    _switch(store, [staged])
    staged.summary.seconds = time.perf_counter() - t0
    return staged.summary


def import_files(
    ws: Workspace,
    inputs: list[str],
    opts: ImportOptions,
    progress: ProgressCallback | None = None,
) -> list[ImportSummary]:
    """Import files into the workspace store.

    With ``opts.graph`` all inputs form one import into that graph; otherwise
    each input is its own import into a graph named after the file. Either way the
    whole command is all or nothing: every graph is switched to its new content in
    one transaction at the end, or none is.
    """
    if not inputs:
        raise InputError("nothing to import: give one or more files, or - for standard input")
    groups: list[tuple[str, list[str]]]
    if opts.graph:
        groups = [(opts.graph, list(inputs))]
    else:
        names = [graph_name_for(x) for x in inputs]
        dupes = {n for n in names if names.count(n) > 1}
        if dupes:
            raise InputError(
                f"two inputs would both import into graph {sorted(dupes)[0]!r}; "
                "give graph=NAME to import them together",
                params=("graph",),
            )
        groups = [(n, [x]) for n, x in zip(names, inputs, strict=True)]
        if len(groups) > 1 and opts.rejects is not None:
            raise InputError(
                "rejects=PATH names one file but these inputs make several imports; "
                "give graph=NAME to import them together, or leave out rejects=PATH "
                "(each graph then gets .kgkit/rejects/GRAPH.rejects.txt)",
                params=("rejects", "graph"),
            )
    for label in inputs:
        check_input(label)  # a folder or a device is named as such before its format is asked
        detect_format(label, opts.format)
    staged: list[_Staged] = []
    with open_store(ws.store_path, write=True) as store:
        first_id = next_import_id(store)
        try:
            for n, (name, group) in enumerate(groups):
                g_opts = opts
                if opts.on_error == "skip" and opts.rejects is None:
                    default = ws.root / ".kgkit" / "rejects" / f"{name}.rejects.txt"
                    g_opts = ImportOptions(**{**opts.__dict__, "rejects": default})
                t0 = time.perf_counter()
                staged.append(_stage(store, group, name, first_id + n, g_opts, ws, progress))
                staged[-1].summary.seconds = time.perf_counter() - t0
        except BaseException as exc:
            # an earlier file of the same command was loaded: it must not become visible
            for s in staged:
                s.rejects.abort()
                _discard(store, s.record.content, exc)
            raise
        _switch(store, staged)
    return [s.summary for s in staged]
