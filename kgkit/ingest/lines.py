"""Line-based formats (N-Triples, N-Quads, entity records), one chunk of lines at a time.

:func:`process_chunk` parses and slices one chunk of whole lines and returns what to load,
what was filtered and which lines were bad. It is a plain function of its input, so the
serial import and the parallel one (``--jobs``, worker processes) run the same code and
agree exactly: same counts, same rejects with their original line numbers, same graph.

Finding a bad line: the parser stops at an error; the line it names (or the one before,
since a missing final dot is reported on the *next* line) is parsed alone to confirm it
and to get the column of the bad term, the line is set aside, and parsing resumes on the
line after it. After a first error the rest of a chunk is parsed in bounded windows, so a
dump with many bad lines is not re-parsed quadratically. Lines that parse alone but not
together (binary junk) are parsed one by one.

Two limits of the parser are met before it sees a line: a line nesting RDF 1.2 triple
terms more than :data:`MAX_TRIPLE_TERM_DEPTH` deep is set aside (the parser's recursion
ended the process), and a line longer than its 16 MB term buffer is parsed with its long
string literals swapped out for short stand-ins and put back afterwards.
"""

from __future__ import annotations

import multiprocessing
import re
from collections import deque
from collections.abc import Callable, Iterator
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from typing import BinaryIO

import pyoxigraph as ox

from kgkit.ingest.formats import RDF_FORMATS
from kgkit.ingest.records import RecordError, _Terms, parse_record_line
from kgkit.ingest.sift import keep_canonical, sift_chunk
from kgkit.ingest.slicing import Slice
from kgkit.workspace import Workspace

__all__ = [
    "CHUNK_BYTES",
    "ChunkResult",
    "ChunkSpec",
    "iter_line_chunks",
    "iter_byte_chunks",
    "process_chunk",
    "process_chunks",
    "has_blank",
    "scope_blanks",
    "term_text",
]

#: size of the chunks handed to worker processes (cut at the last line end before it)
CHUNK_BYTES = 1 << 20
_AFTER_ERROR_WINDOW = 10_000  # most lines parsed at a time after a bad line in a chunk
_FIRST_WINDOW = 64  # lines parsed right after a bad line (doubling while they parse)
#: deepest nesting of RDF 1.2 triple terms read; pyoxigraph 0.5 recurses per level and
#: ended the whole process (stack overflow) at 20,000 levels, so deeper lines are refused
MAX_TRIPLE_TERM_DEPTH = 64

_CAUSE_PREFIX = re.compile(r"^Parser error\b.*?(?:column \d+|columns \d+ and \d+)\s*:\s*")
_CAUSE_SUFFIX = re.compile(r"\s*\(line \d+\)\s*$")


def cause_of(exc: SyntaxError) -> str:
    """The parser's message without its position (we print our own)."""
    msg = exc.msg or str(exc)
    msg = _CAUSE_SUFFIX.sub("", _CAUSE_PREFIX.sub("", msg))
    return msg[:1].lower() + msg[1:] if msg else "malformed statement"


def is_statement(line: bytes) -> bool:
    s = line.strip()
    return bool(s) and not s.startswith(b"#")


def decode(line: bytes) -> str:
    return line.decode("utf-8", errors="replace")


# a valid statement put after a lone line, so that the parser reports on the line the
# same way whatever follows it in the file (and wherever a chunk happens to end)
_NEXT = b"<urn:kgkit:s> <urn:kgkit:p> <urn:kgkit:o> .\n"


def _solo_error(line: bytes, fmt: ox.RdfFormat) -> SyntaxError | None:
    try:
        for _ in ox.parse(input=line.rstrip(b"\r\n") + b"\n" + _NEXT, format=fmt):
            pass
    except SyntaxError as exc:
        # without its traceback: a kept traceback holds the frames (and the store) alive
        return exc.with_traceback(None)
    return None


def _column(line: bytes, err: SyntaxError) -> int | None:
    """Column of a lone line's error; past the end of the line when reported on the next."""
    if (err.lineno or 1) > 1:
        return len(line.rstrip(b"\r\n").decode("utf-8", errors="replace")) + 1
    return err.offset


def locate(seg: list[bytes], exc: SyntaxError, fmt: ox.RdfFormat) -> tuple[int, int | None, str]:
    """Index in ``seg`` of the line that caused ``exc``, its column and the cause.

    Column and cause come from parsing the line alone, so they do not depend on where
    a batch or chunk starts or ends.
    """
    reported = min(max((exc.lineno or 1) - 1, 0), len(seg) - 1)
    candidates = [c for c in (reported - 1, reported) if 0 <= c < len(seg)]
    for c in (*candidates, *range(len(seg))):
        if is_statement(seg[c]):
            err = _solo_error(seg[c], fmt)
            if err is not None:
                return c, _column(seg[c], err), _lone_cause(seg[c], err)
    return reported, exc.offset, cause_of(exc)


def _lone_cause(line: bytes, err: SyntaxError) -> str:
    cause = cause_of(err)
    if cause != "unexpected end of file":
        return cause
    # the parser ran to the end: say what was left open where it started
    text = decode(line)
    at = text[err.offset - 1] if err.offset and err.offset <= len(text) else ""
    if at == '"':
        return "string literal not closed on this line"
    if at == "<":
        return "IRI not closed on this line"
    return "statement ends too early"


# a line that is not a statement starts with white space or '#', or is empty
_MAYBE_NOT_STATEMENT = re.compile(rb"\n(?=[ \t\r\n#])")


def count_statements(data: bytes) -> int:
    """Number of lines of ``data`` that are neither empty, white space nor a comment.

    >>> count_statements(b"<a> <b> <c> .\\n# note\\n\\n  <a> <b> <d> .\\n")
    2
    """
    if not data:
        return 0
    n = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
    starts = [m.start() + 1 for m in _MAYBE_NOT_STATEMENT.finditer(data)]
    if data[:1] in (b" ", b"\t", b"\r", b"\n", b"#"):
        starts.insert(0, 0)
    for at in starts:
        end = data.find(b"\n", at)
        if not is_statement(data[at : end if end >= 0 else len(data)]):
            n -= 1
    return n


def split_lines(data: bytes) -> list[bytes]:
    """Lines of ``data``, each with its ``\\n`` (the last one may have none)."""
    lines = data.split(b"\n")
    last = lines.pop()
    out = [x + b"\n" for x in lines]
    if last:
        out.append(last)
    return out


def has_blank(term) -> bool:
    """Whether ``term`` is a blank node or an RDF 1.2 triple term holding one."""
    if isinstance(term, ox.BlankNode):
        return True
    if isinstance(term, ox.Triple):
        return has_blank(term.subject) or has_blank(term.object)
    return False


def scope_blanks(term, prefix: str):
    """``term`` with every blank node label prefixed, inside triple terms too."""
    if isinstance(term, ox.BlankNode):
        return ox.BlankNode(prefix + term.value)
    if isinstance(term, ox.Triple):
        return ox.Triple(
            scope_blanks(term.subject, prefix), term.predicate, scope_blanks(term.object, prefix)
        )
    return term


def term_text(term) -> str:
    """``term`` in N-Triples; an RDF 1.2 triple term as ``<<( s p o )>>``.

    >>> t = ox.Triple(ox.NamedNode("http://a"), ox.NamedNode("http://b"), ox.BlankNode("c"))
    >>> term_text(t)
    '<<( <http://a> <http://b> _:c )>>'
    """
    if isinstance(term, ox.Triple):
        return f"<<( {term_text(term.subject)} {term.predicate} {term_text(term.object)} )>>"
    return str(term)


@dataclass(frozen=True)
class ChunkSpec:
    """What processing a chunk needs to know; picklable, sent once to each worker."""

    format: str  # "nt", "nq" or "records"
    slice: Slice = field(default_factory=Slice)
    workspace: Workspace | None = None  # entity records map fields through its profile
    #: hand N-Triples with nothing to slice back unparsed, for the store to parse
    raw_ok: bool = True
    #: when set, blank-node statements go into ``text`` too, in line order, their labels
    #: prefixed with this (``kgkit slice``: the output then does not depend on chunking)
    blank_scope: str | None = None


@dataclass
class ChunkResult:
    """What one chunk gave. Loading is left to the caller (the process holding the store).

    ``raw``: the chunk itself, to load through the store's own parser (N-Triples with
    nothing to slice and no blank node); bad lines are then found while loading.
    Otherwise ``text`` holds the kept statements as N-Triples (no blank nodes), or
    ``quads`` / ``blank_text`` the kept statements holding blank nodes, whose labels the
    caller scopes per file.
    """

    first: int  # number of the chunk's first line in its file
    read: int = 0  # statements parsed, bad ones not included
    filtered: int = 0
    rejects: list[tuple[int, int | None, str, str]] = field(default_factory=list)
    raw: bytes | None = None
    text: bytes = b""
    kept: int = 0  # statements in text / quads / blank_text
    quads: list | None = None
    blank_text: bytes = b""


#: pyoxigraph's parser holds one term in a buffer of at most 16 MiB ("Reached the buffer
#: maximal size"): a line longer than this is parsed with its long string literals swapped
#: out for short stand-ins, then put back
_LONG_LINE = 8 << 20
_LONG_LITERAL = 1 << 20
_ESCAPE = re.compile(r"\\(u[0-9A-Fa-f]{4}|U[0-9A-Fa-f]{8}|[tbnrf\"'\\]|.|$)", re.DOTALL)
_ECHARS = {"t": "\t", "b": "\b", "n": "\n", "r": "\r", "f": "\f", '"': '"', "'": "'", "\\": "\\"}


def _unescape(text: str) -> str:
    """The value of an N-Triples string: ECHAR and UCHAR escapes resolved.

    >>> _unescape(r"a\\tb\\u00e9\\U0001F600")
    'a\\tbé😀'
    """

    def one(m: re.Match) -> str:
        code = m.group(1)
        if code in _ECHARS:
            return _ECHARS[code]
        if len(code) in (5, 9) and code[0] in "uU":
            n = int(code[1:], 16)
            if 0xD800 <= n <= 0xDFFF or n > 0x10FFFF:
                raise ValueError(f"\\{code} is not a character")
            return chr(n)
        raise ValueError(f"bad escape \\{code}")

    return _ESCAPE.sub(one, text) if "\\" in text else text


def _string_spans(line: bytes):
    """(start, end) of the text of each double-quoted string of a line (C-speed finds;
    a quote inside a string is escaped, and an IRI cannot hold one)."""
    i = 0
    while (start := line.find(b'"', i)) >= 0:
        j = start + 1
        while True:
            end = line.find(b'"', j)
            if end < 0:
                return
            k = end - 1
            while line[k] == 0x5C:  # backslashes before the quote: odd means escaped
                k -= 1
            if (end - 1 - k) % 2 == 0:
                break
            j = end + 1
        yield start + 1, end
        i = end + 1


def _parse_long(line: bytes, fmt: ox.RdfFormat) -> list:
    """The statements of a line too long for the parser's buffer.

    Raises ``SyntaxError`` or ``ValueError`` (a bad escape, bytes that are not UTF-8) for
    a bad line, like a parse of the line alone.
    """
    swapped: dict[str, bytes] = {}
    line = line.rstrip(b"\r\n")
    parts, at = [], 0
    for start, end in _string_spans(line):
        if end - start >= _LONG_LITERAL:
            key = f"kgkit-long-literal-{len(swapped)}"
            swapped[key] = line[start:end]
            parts += [line[at:start], key.encode()]
            at = end
    short = b"".join([*parts, line[at:]])
    if len(short) > _LONG_LINE:
        raise ValueError("a term other than a string literal is longer than 8 MB")
    quads = list(ox.parse(input=short + b"\n", format=fmt))

    def back(t):
        if isinstance(t, ox.Literal) and t.value in swapped:
            value = _unescape(swapped[t.value].decode("utf-8"))
            if t.language:
                return ox.Literal(value, language=t.language)
            return ox.Literal(value, datatype=t.datatype)
        if isinstance(t, ox.Triple):
            return ox.Triple(back(t.subject), t.predicate, back(t.object))
        return t

    return [ox.Quad(q.subject, q.predicate, back(q.object), q.graph_name) for q in quads]


def parse_statements(data: bytes, fmt: ox.RdfFormat = ox.RdfFormat.N_TRIPLES) -> list:
    """The statements of ``data``, lines that the parser cannot hold whole included.

    For text kgkit wrote itself (valid, one statement per line).
    """
    if len(data) <= _LONG_LINE:
        return list(ox.parse(input=data, format=fmt))
    out: list = []
    short: list[bytes] = []
    for line in split_lines(data):
        if len(line) > _LONG_LINE:
            out.extend(ox.parse(input=b"".join(short), format=fmt))
            short = []
            out.extend(_parse_long(line, fmt))
        else:
            short.append(line)
    out.extend(ox.parse(input=b"".join(short), format=fmt))
    return out


def _drop_deep(data: bytes, first: int) -> tuple[bytes, list]:
    """``data`` with lines nesting triple terms too deep emptied, and their rejects.

    In N-Triples and N-Quads a triple term is only ever an object, so the number of
    ``<<(`` on a line is its depth (a literal quoting ``<<(`` only counts higher).
    """
    lines = split_lines(data)
    rejects = []
    for i, line in enumerate(lines):
        if line.count(b"<<(") > MAX_TRIPLE_TERM_DEPTH:
            cause = f"triple terms nested more than {MAX_TRIPLE_TERM_DEPTH} deep"
            rejects.append((first + i, None, cause, decode(line)))
            lines[i] = b"\n"
    return (b"".join(lines), rejects) if rejects else (data, [])


def _triple_text(q) -> str:
    return f"{term_text(q.subject)} {q.predicate} {term_text(q.object)} .\n"


def _each_line(lines: list[bytes], fmt: ox.RdfFormat, base: int):
    """Parse each line alone: (quads of the good lines, rejects of the bad ones).

    The last resort when lines parsed together fail where none of them fails alone
    (binary junk, for instance): one statement per line is what N-Triples promises.
    """
    quads, rejects = [], []
    for i, line in enumerate(lines):
        if not is_statement(line):
            continue
        try:
            quads.extend(ox.parse(input=line.rstrip(b"\r\n") + b"\n", format=fmt))
        except SyntaxError as exc:
            rejects.append((base + i, _column(line, exc), _lone_cause(line, exc), decode(line)))
    return quads, rejects


def process_chunk(
    spec: ChunkSpec,
    first: int,
    data: bytes,
    terms: _Terms | None = None,
    keep_objects: bool = True,
) -> ChunkResult:
    """Parse and slice one chunk of whole lines.

    ``keep_objects`` (in the importing process) returns kept blank-node statements as
    pyoxigraph quads; a worker process returns them as text instead (picklable).
    """
    res = ChunkResult(first)
    if spec.format == "records":
        _records_chunk(spec, res, data, terms)
        return res
    fmt = RDF_FORMATS[spec.format]
    sl = spec.slice
    if b"<<(" in data:
        data, res.rejects = _drop_deep(data, first)
    if spec.raw_ok and spec.format == "nt" and sl.is_everything and b"_:" not in data:
        res.read = count_statements(data)
        res.raw = data
        return res
    # lines whose predicate the slice cannot keep are set aside unparsed when the whole
    # chunk is of the strict subset kgkit.ingest.sift vouches for
    whole, before = data, (res.read, res.filtered)
    sifted = (
        sift_chunk(data, spec.format, sl.predicates)
        if sl.predicates is not None and spec.format in ("nt", "nq")
        else None
    )
    if sifted is not None:
        res.read += sifted.skipped
        res.filtered += sifted.skipped
        data = sifted.kept
        copied = keep_canonical(data, sl)
        if copied is not None:  # already written as the writer would: no parsing needed
            res.text, res.kept, dropped = copied
            res.read += res.kept + dropped
            res.filtered += dropped
            return res
    kept_text: list[str] = []
    blank: list = []
    keeps = None if sl.is_everything else sl.keeps
    scope = spec.blank_scope

    def scoped(t):
        return scope_blanks(t, scope)

    def take(q) -> None:
        res.read += 1
        obj = q.object
        if keeps is not None and not keeps(q):
            res.filtered += 1
        elif isinstance(q.subject, ox.BlankNode) or has_blank(obj):
            if scope is None:
                blank.append(q)
            else:
                kept_text.append(f"{scoped(q.subject)} {q.predicate} {term_text(scoped(obj))} .\n")
        elif isinstance(obj, ox.Triple):
            kept_text.append(f"{q.subject} {q.predicate} {term_text(obj)} .\n")
        else:
            kept_text.append(f"{q.subject} {q.predicate} {obj} .\n")

    # First the whole chunk as a stream (no list of a million quads held); on an error,
    # forget what it gave and go over the chunk's lines to set the bad ones aside.
    read, filtered, n_text, n_blank = res.read, res.filtered, len(kept_text), len(blank)
    try:
        for q in ox.parse(input=data, format=fmt):
            take(q)
        lines = []  # the whole chunk parsed: no need to look at its lines
    except (SyntaxError, MemoryError):  # MemoryError: a term over the parser's 16 MB
        res.read, res.filtered = read, filtered
        if sifted is not None:  # not expected (the subset parses): parse the chunk whole
            data, (res.read, res.filtered) = whole, before
        del kept_text[n_text:], blank[n_blank:]
        lines = split_lines(data)
    pos, window = 0, len(lines)
    while pos < len(lines):
        seg = lines[pos : pos + window]
        long_at = next((i for i, x in enumerate(seg) if len(x) > _LONG_LINE), None)
        if long_at == 0:
            try:
                quads = _parse_long(seg[0], fmt)
            except (SyntaxError, ValueError) as exc:
                if isinstance(exc, UnicodeError):
                    cause = "not UTF-8 text"
                else:
                    cause = cause_of(exc) if isinstance(exc, SyntaxError) else str(exc)
                res.rejects.append((first + pos, None, cause, decode(seg[0])))
                quads = []
            for q in quads:
                take(q)
            pos += 1
            continue
        if long_at is not None:
            seg = seg[:long_at]
        quads = []
        bad = None
        try:
            for q in ox.parse(input=b"".join(seg), format=fmt):
                quads.append(q)
        except SyntaxError as exc:
            bad = locate(seg, exc, fmt)
        if bad is not None:
            upto = bad[0]
            if len(quads) != sum(1 for x in seg[:upto] if is_statement(x)):
                try:
                    quads = list(ox.parse(input=b"".join(seg[:upto]), format=fmt))
                except SyntaxError:
                    quads, more = _each_line(seg[:upto], fmt, first + pos)
                    res.rejects.extend(more)
        for q in quads:
            take(q)
        if bad is None:
            pos += len(seg)
            window = min(window * 2, _AFTER_ERROR_WINDOW)
            continue
        idx, col, cause = bad
        res.rejects.append((first + pos + idx, col, cause, decode(seg[idx])))
        pos += idx + 1
        # small windows while lines keep failing (junk: each error re-reads only a few
        # lines, not the rest of the chunk), growing again while they parse
        window = min(_FIRST_WINDOW, _AFTER_ERROR_WINDOW)
    res.rejects.sort(key=lambda r: r[0])
    res.text = "".join(kept_text).encode("utf-8")
    res.kept = len(kept_text) + len(blank)
    if blank:
        if keep_objects:
            res.quads = blank
        else:
            res.blank_text = "".join(_triple_text(q) for q in blank).encode("utf-8")
    return res


def _records_chunk(spec: ChunkSpec, res: ChunkResult, data: bytes, terms: _Terms | None):
    if terms is None:
        terms = _Terms(spec.workspace)
    sl = spec.slice
    kept: list[str] = []
    for i, line in enumerate(split_lines(data)):
        if not line.strip():
            continue
        try:
            triples = parse_record_line(line, terms)
        except RecordError as exc:
            res.rejects.append((res.first + i, exc.column, exc.cause, decode(line)))
            continue
        res.read += len(triples)
        for t in triples:
            if sl.keeps(t):
                kept.append(f"{t} .\n")
            else:
                res.filtered += 1
    res.text = "".join(kept).encode("utf-8")
    res.kept = len(kept)


# -- reading chunks ----------------------------------------------------------


def iter_line_chunks(
    stream: BinaryIO, lines_per_chunk: int, tick: Callable[[], None] | None = None
) -> Iterator[tuple[int, bytes]]:
    """Chunks of ``lines_per_chunk`` lines: (number of the first line, bytes)."""
    step = min(50_000, lines_per_chunk)  # progress between large chunks
    first, lines = 1, []
    for n, line in enumerate(stream, 1):
        lines.append(line)
        if len(lines) >= lines_per_chunk:
            data, start = b"".join(lines), first
            first += len(lines)
            lines = []  # let the line objects go before the chunk is processed
            yield start, data
            data = None  # nor keep this chunk while the next one is read
        if tick and n % step == 0:
            tick()
    if lines:
        yield first, b"".join(lines)


def iter_byte_chunks(stream: BinaryIO, size: int = CHUNK_BYTES) -> Iterator[tuple[int, bytes]]:
    """Chunks of about ``size`` bytes cut after a line end: (number of the first line, bytes)."""
    first, tail = 1, b""
    while True:
        block = stream.read(size)
        if not block:
            break
        cut = block.rfind(b"\n") + 1
        if cut == 0:
            tail += block
            continue
        data = tail + block[:cut]
        tail = block[cut:]
        yield first, data
        first += data.count(b"\n")
    if tail:
        yield first, tail


# -- worker processes ----------------------------------------------------------

_WORKER: tuple[ChunkSpec, _Terms | None] | None = None


def _init_worker(spec: ChunkSpec) -> None:
    global _WORKER
    _WORKER = (spec, _Terms(spec.workspace) if spec.format == "records" else None)


def _work(first: int, data: bytes) -> ChunkResult:
    spec, terms = _WORKER
    return process_chunk(spec, first, data, terms, keep_objects=False)


def process_chunks(
    spec: ChunkSpec, chunks: Iterator[tuple[int, bytes]], jobs: int
) -> Iterator[ChunkResult]:
    """Results of :func:`process_chunk` over ``chunks``, in order, in ``jobs`` processes.

    At most ``2 * jobs`` chunks are in flight, so memory stays bounded. Worker processes
    are started only when there is more than one chunk.
    """
    terms = _Terms(spec.workspace) if spec.format == "records" else None
    it = iter(chunks)
    head = next(it, None)
    if head is None:
        return
    second = next(it, None)
    if jobs <= 1 or second is None:
        for first, data in (head, *(() if second is None else (second,))):
            yield process_chunk(spec, first, data, terms)
        for first, data in it:
            yield process_chunk(spec, first, data, terms)
        return
    # fork where there is one: spawn would re-run the caller's main module in every
    # worker (a script without a __main__ guard would start over). Workers never touch
    # the store the parent holds open, and leave through os._exit (no finalisers).
    methods = multiprocessing.get_all_start_methods()
    ctx = multiprocessing.get_context("fork" if "fork" in methods else "spawn")
    with ProcessPoolExecutor(
        max_workers=jobs, mp_context=ctx, initializer=_init_worker, initargs=(spec,)
    ) as pool:
        pending: deque = deque()
        try:
            for first, data in (head, second):
                pending.append(pool.submit(_work, first, data))
            for first, data in it:
                pending.append(pool.submit(_work, first, data))
                if len(pending) >= 2 * jobs:
                    yield pending.popleft().result()
            while pending:
                yield pending.popleft().result()
        finally:
            for f in pending:
                f.cancel()
