"""The embedded store of a workspace: opening it safely, and its graph registry.

Every import writes its statements into a fresh *content graph* and only then
points the user's graph name at it, in one transaction, in the provenance graph.
Readers therefore see the old content or the new one, never a mix, and a failed or
interrupted import leaves the registry as it was.

Content graphs that no name points at any more (the old content of a replaced graph,
a dropped graph, what a failed or killed import wrote) are *reclaimable*: no query
sees them, and :func:`reclaim` removes them in small transactions. Removal is kept
off the import path because the store removes a graph statement by statement, from
six indexes, about three to five times slower than it loads one (bench/README.md).

Opening is guarded by a lock file next to the store: one writer, or any number
of readers. RocksDB's own lock only keeps out a second writer, and reading a store
that another process is writing has corrupted reads, so readers take a shared lock.
"""

from __future__ import annotations

import contextlib
import fcntl
import gc
import itertools
import os
import re
import sys
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import pyoxigraph as ox

from kgkit.errors import NotFoundError, StoreError, StoreInUseError
from kgkit.inputs import describe_os_error

__all__ = [
    "KG",
    "PROVENANCE_GRAPH",
    "GraphInfo",
    "FileInfo",
    "create_store",
    "open_store",
    "graph_iri",
    "is_valid_graph_name",
    "list_graphs",
    "current_graphs",
    "count_graph",
    "register_import",
    "register_imports",
    "ImportRecord",
    "drop_graph",
    "reclaimable_graphs",
    "reclaim",
    "reclaim_graph",
    "AUTO_RECLAIM",
    "DISCARD_AT_ONCE",
    "ReclaimSummary",
    "is_bookkeeping_iri",
    "import_node_iri",
]

KG = "http://kgkit.invalid/ns#"
PROVENANCE_GRAPH = ox.NamedNode("urn:kgkit:provenance")
_GRAPH_PREFIX = "urn:kgkit:graph:"
_IMPORT_PREFIX = "urn:kgkit:import:"
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,127}$")


def is_valid_graph_name(name: str) -> bool:
    """Graph names are short words: letters, digits, ``.``, ``_`` and ``-``."""
    return bool(_NAME.match(name))


def graph_iri(name: str) -> str:
    """The stable IRI that names a graph in the registry (not its content graph)."""
    return _GRAPH_PREFIX + name


def _lock_path(store_path: Path) -> Path:
    return store_path.with_name(store_path.name + ".lock")


def create_store(path: Path) -> None:
    """Create an empty store on disk at ``path`` (its parent folders too)."""
    path.mkdir(parents=True, exist_ok=True)
    with open_store(path, write=True):
        pass


@contextlib.contextmanager
def open_store(path: Path, write: bool = False) -> Iterator[ox.Store]:
    """Open the store at ``path``, holding the workspace lock while it is open.

    Raises :class:`StoreInUseError` when another process holds it in a
    conflicting way, :class:`StoreError` when there is no store.
    """
    path = Path(path)
    if not write and not path.exists():
        raise StoreError(f"{path}: no store here; run `kgkit init` first")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        lock = open(_lock_path(path), "a+")  # noqa: SIM115 - held for the context's lifetime
    except OSError as exc:
        raise StoreError(describe_os_error(exc)) from None
    try:
        try:
            fcntl.flock(lock, (fcntl.LOCK_EX if write else fcntl.LOCK_SH) | fcntl.LOCK_NB)
        except BlockingIOError:
            raise StoreInUseError(
                f"{path}: store is in use by another kgkit process; try again when it has finished"
            ) from None
        try:
            store = ox.Store(str(path)) if write else ox.Store.read_only(str(path))
        except OSError as exc:
            if "LOCK" in str(exc) or "lock" in str(exc):
                raise StoreInUseError(
                    f"{path}: store is in use by another process; try again when it has finished"
                ) from None
            raise StoreError(f"{path}: cannot open the store ({exc})") from None
        try:
            yield store
        finally:
            if write:
                # also after a failure or Ctrl-C: what the write-ahead log holds would
                # otherwise be replayed by every read-only open until the next write
                with contextlib.suppress(OSError):
                    store.flush()
            # RocksDB's own lock goes only when the Store object is freed; a reference
            # cycle (an exception's traceback, say) would keep it past this point, and the
            # next open in this process would be refused
            extra = sys.getrefcount(store) > 2
            del store
            if extra:
                gc.collect()
    finally:
        lock.close()


@dataclass(frozen=True)
class FileInfo:
    """One input file of an import."""

    name: str
    size: int
    sha256: str
    format: str
    compression: str


@dataclass(frozen=True)
class GraphInfo:
    """A graph of the registry with the provenance of its current import."""

    name: str
    content: str  # IRI of the content graph holding its statements
    import_id: int
    files: tuple[FileInfo, ...]
    counts: dict[str, int]
    started: str
    ended: str
    kgkit_version: str
    options: str

    @property
    def statements(self) -> int:
        """Statements the graph holds now: as loaded, or as an allowed update left it."""
        return self.counts.get("statements", self.counts.get("loaded", 0))


def _text(term: ox.Literal | None) -> str:
    return term.value if term is not None else ""


def _import_nodes(store: ox.Store) -> dict[str, str]:
    """graph name -> IRI of the import node it currently points at."""
    out = {}
    for q in store.quads_for_pattern(None, ox.NamedNode(KG + "current"), None, PROVENANCE_GRAPH):
        out[q.subject.value[len(_GRAPH_PREFIX) :]] = q.object.value
    return out


def _values(store: ox.Store, node: ox.NamedNode | ox.BlankNode) -> dict[str, list]:
    out: dict[str, list] = {}
    for q in store.quads_for_pattern(node, None, None, PROVENANCE_GRAPH):
        out.setdefault(q.predicate.value[len(KG) :], []).append(q.object)
    return out


def list_graphs(store: ox.Store) -> list[GraphInfo]:
    """Every graph of the registry, sorted by name, with its provenance."""
    out = []
    for name, node_iri in sorted(_import_nodes(store).items()):
        node = ox.NamedNode(node_iri)
        v = _values(store, node)
        files = []
        for f in sorted(v.get("file", []), key=lambda t: t.value):
            fv = _values(store, f)
            files.append(
                FileInfo(
                    name=_text(fv.get("name", [None])[0]),
                    size=int(_text(fv.get("size", [None])[0]) or 0),
                    sha256=_text(fv.get("sha256", [None])[0]),
                    format=_text(fv.get("format", [None])[0]),
                    compression=_text(fv.get("compression", [None])[0]),
                )
            )
        counts = {
            k: int(_text(v[k][0]))
            for k in ("read", "loaded", "duplicates", "filtered", "rejected", "statements")
            if k in v
        }
        out.append(
            GraphInfo(
                name=name,
                content=v["content"][0].value,
                import_id=int(node_iri[len(_IMPORT_PREFIX) :]),
                files=tuple(files),
                counts=counts,
                started=_text(v.get("started", [None])[0]),
                ended=_text(v.get("ended", [None])[0]),
                kgkit_version=_text(v.get("kgkitVersion", [None])[0]),
                options=_text(v.get("options", [None])[0]),
            )
        )
    return out


def current_graphs(store: ox.Store, names: list[str] | None = None) -> dict[str, str]:
    """graph name -> IRI of its content graph, for all graphs or the ``names`` given."""
    known = {g.name: g.content for g in list_graphs(store)}
    if names is None:
        return known
    missing = [n for n in names if n not in known]
    if missing:
        raise StoreError(
            f"no graph named {missing[0]!r} in the store "
            f"(graphs: {', '.join(sorted(known)) or 'none yet'})"
        )
    return {n: known[n] for n in names}


def count_graph(store: ox.Store, content_iri: str) -> int:
    """Number of distinct statements in a content graph."""
    res = store.query(f"SELECT (COUNT(*) AS ?n) WHERE {{ GRAPH <{content_iri}> {{ ?s ?p ?o }} }}")
    return int(next(iter(res))["n"].value)


def next_import_id(store: ox.Store) -> int:
    """A new import number, larger than every one recorded or left behind."""
    top = 0
    for g in store.named_graphs():
        if isinstance(g, ox.NamedNode) and g.value.startswith(_GRAPH_PREFIX):
            tail = g.value.rsplit(":", 1)[-1]
            if tail.isdigit():
                top = max(top, int(tail))
    for q in store.quads_for_pattern(None, None, None, PROVENANCE_GRAPH):
        if isinstance(q.subject, ox.NamedNode) and q.subject.value.startswith(_IMPORT_PREFIX):
            tail = q.subject.value[len(_IMPORT_PREFIX) :].split("/")[0]
            if tail.isdigit():
                top = max(top, int(tail))
    return top + 1


def import_node_iri(import_id: int) -> str:
    """The IRI of an import's record in the provenance graph."""
    return f"{_IMPORT_PREFIX}{import_id}"


def content_graph_iri(name: str, import_id: int) -> str:
    return f"{_GRAPH_PREFIX}{name}:{import_id}"


@dataclass(frozen=True)
class ImportRecord:
    """What :func:`register_imports` records for one finished import."""

    name: str
    import_id: int
    content: str
    files: tuple[FileInfo, ...]
    counts: dict[str, int]
    started: str
    ended: str
    kgkit_version: str
    options: str


def _lit(value: object) -> ox.Literal:
    if isinstance(value, int):
        return ox.Literal(str(value), datatype=_XSD_INTEGER)
    return ox.Literal(str(value))


_XSD_INTEGER = ox.NamedNode("http://www.w3.org/2001/XMLSchema#integer")


def _p(local: str) -> ox.NamedNode:
    return ox.NamedNode(KG + local)


def _record_quads(r: ImportRecord) -> list[ox.Quad]:
    node = ox.NamedNode(f"{_IMPORT_PREFIX}{r.import_id}")
    g, p, lit = PROVENANCE_GRAPH, _p, _lit
    quads = [
        ox.Quad(node, p("graphName"), lit(r.name), g),
        ox.Quad(node, p("content"), ox.NamedNode(r.content), g),
        ox.Quad(node, p("started"), lit(r.started), g),
        ox.Quad(node, p("ended"), lit(r.ended), g),
        ox.Quad(node, p("kgkitVersion"), lit(r.kgkit_version), g),
        ox.Quad(node, p("options"), lit(r.options), g),
    ]
    for key, value in r.counts.items():
        quads.append(ox.Quad(node, p(key), lit(int(value)), g))
    for i, f in enumerate(r.files, 1):
        fnode = ox.NamedNode(f"{_IMPORT_PREFIX}{r.import_id}/file/{i}")
        quads.append(ox.Quad(node, p("file"), fnode, g))
        quads += [
            ox.Quad(fnode, p("name"), lit(f.name), g),
            ox.Quad(fnode, p("size"), lit(int(f.size)), g),
            ox.Quad(fnode, p("sha256"), lit(f.sha256), g),
            ox.Quad(fnode, p("format"), lit(f.format), g),
            ox.Quad(fnode, p("compression"), lit(f.compression), g),
        ]
    return quads


def register_imports(store: ox.Store, records: list[ImportRecord]) -> dict[str, str]:
    """Point each record's graph name at its content graph and record its provenance.

    One transaction for all of them: every old pointer goes and every new one arrives
    together, so an import of several files switches all its graphs or none.
    Returns graph name -> the content graph it pointed at before (now reclaimable).
    """
    current = current_graphs(store)
    previous = {r.name: current[r.name] for r in records if r.name in current}
    if len({r.name for r in records}) != len(records):
        raise StoreError("one import cannot switch the same graph twice")
    g = PROVENANCE_GRAPH
    deletes, inserts = [], []
    for r in records:
        subject = ox.NamedNode(graph_iri(r.name))
        for q in store.quads_for_pattern(subject, _p("current"), None, g):
            deletes.append(q)
        node = ox.NamedNode(f"{_IMPORT_PREFIX}{r.import_id}")
        inserts.append(ox.Quad(subject, _p("current"), node, g))
        inserts += _record_quads(r)
    store.update(_delete_insert(deletes, inserts))
    return previous


def _data(quads: list[ox.Quad]) -> str:
    return " ".join(
        f"GRAPH {q.graph_name} {{ {q.subject} {q.predicate} {q.object} }}" for q in quads
    )


def _delete_insert(deletes: list[ox.Quad], inserts: list[ox.Quad]) -> str:
    # one update request is one transaction: both parts are applied together or not at all
    parts = []
    if deletes:
        parts.append(f"DELETE DATA {{ {_data(deletes)} }}")
    if inserts:
        parts.append(f"INSERT DATA {{ {_data(inserts)} }}")
    return " ;\n".join(parts) or "INSERT DATA { }"


def register_import(
    store: ox.Store,
    name: str,
    import_id: int,
    content_iri: str,
    files: list[FileInfo],
    counts: dict[str, int],
    started: str,
    ended: str,
    kgkit_version: str,
    options: str,
) -> str | None:
    """Point graph ``name`` at ``content_iri`` and record the import's provenance.

    One transaction: the old pointer goes and the new one arrives together.
    Returns the content graph the name pointed at before (now reclaimable), if any.
    """
    record = ImportRecord(
        name,
        import_id,
        content_iri,
        tuple(files),
        dict(counts),
        started,
        ended,
        kgkit_version,
        options,
    )
    return register_imports(store, [record]).get(name)


def drop_graph(store: ox.Store, name: str) -> GraphInfo:
    """Remove graph ``name`` and the provenance of all its imports, in one transaction.

    The content graph becomes reclaimable: queries stop seeing it at once, and
    :func:`reclaim` removes its statements later. Other graphs are not touched.
    Returns what the registry said about the graph before it went.
    """
    infos = {g.name: g for g in list_graphs(store)}
    if name not in infos:
        raise NotFoundError(
            f"no graph named {name!r} in the store "
            f"(graphs: {', '.join(sorted(infos)) or 'none yet'})"
        )
    g = PROVENANCE_GRAPH
    deletes = list(store.quads_for_pattern(ox.NamedNode(graph_iri(name)), None, None, g))
    for q in store.quads_for_pattern(None, _p("graphName"), ox.Literal(name), g):
        node = q.subject
        for pq in store.quads_for_pattern(node, None, None, g):
            deletes.append(pq)
            if pq.predicate == _p("file"):
                deletes += store.quads_for_pattern(pq.object, None, None, g)
    store.update(_delete_insert(deletes, []))
    return infos[name]


def reclaimable_graphs(store: ox.Store) -> list[str]:
    """Content graphs no graph name points at: replaced, dropped, or left by a failed
    or killed import. No query sees them; :func:`reclaim` removes them."""
    live = set(current_graphs(store).values())
    return sorted(
        g.value
        for g in store.named_graphs()
        if isinstance(g, ox.NamedNode) and g.value.startswith(_GRAPH_PREFIX) and g.value not in live
    )


@dataclass
class ReclaimSummary:
    """What :func:`reclaim` did. ``remaining`` lists the graphs it did not finish."""

    graphs: list[str]
    statements: int
    remaining: list[str]
    seconds: float

    @property
    def is_complete(self) -> bool:
        return not self.remaining


#: statements removed per transaction by :func:`reclaim`: measured on 0.4M statements,
#: chunks of 50k removed them in 13 s (0.41 GB peak) against 25 s (0.63 GB) for one
#: ``Store.remove_graph`` transaction, and 20 s for chunks of 10k
RECLAIM_CHUNK = 50_000


#: Statements of replaced or dropped content that an import or a drop removes at once
#: (a few hundredths of a second); larger leftovers wait for :func:`reclaim`, so that a
#: refresh costs what a first import costs (bench/README.md).
AUTO_RECLAIM = 1_000
#: Statements a failed import removes of what it wrote, so that the store is exactly as
#: before (about a third of a second; the user is reading an error meanwhile). More, or
#: any after Ctrl-C or SIGTERM, is left for :func:`reclaim`.
DISCARD_AT_ONCE = 10_000


def reclaim_graph(
    store: ox.Store,
    content_iri: str,
    limit: int | None = None,
    chunk: int = RECLAIM_CHUNK,
    progress: Callable[[int], None] | None = None,
    at_most: int | None = None,
) -> int | None:
    """Remove the statements of one unreferenced content graph, then its name.

    At most ``limit`` statements (``None``: all), ``chunk`` per transaction. With
    ``at_most``, a graph holding more statements than that is not touched at all.
    Returns the number removed when the graph is gone, ``None`` when it is not (the
    limit stopped it, or it was larger than ``at_most``). Refuses a content graph
    that a graph name points at.
    """
    if content_iri in set(current_graphs(store).values()):
        raise StoreError(f"{content_iri} is the content of a graph; drop the graph first")
    node = ox.NamedNode(content_iri)
    if at_most is not None:
        held = store.quads_for_pattern(None, None, None, node)
        if sum(1 for _ in itertools.islice(held, at_most + 1)) > at_most:
            return None  # too large to remove now: left whole for a later reclaim
    removed = 0
    while True:
        n = chunk if limit is None else min(chunk, limit - removed)
        quads = store.quads_for_pattern(None, None, None, node)
        seen = sum(1 for _ in itertools.islice(quads, max(n, 1)))
        if not seen:
            break
        if n <= 0:
            return None
        # a pattern, not DELETE DATA, which refuses blank nodes; one chunk, one transaction
        store.update(
            f"DELETE {{ GRAPH {node} {{ ?s ?p ?o }} }} WHERE "
            f"{{ SELECT ?s ?p ?o WHERE {{ GRAPH {node} {{ ?s ?p ?o }} }} LIMIT {n} }}"
        )
        removed += min(seen, n)
        if progress:
            progress(removed)
    if store.contains_named_graph(node):
        store.remove_graph(node)  # only its name is left
    return removed


def reclaim(
    store: ox.Store,
    limit: int | None = None,
    chunk: int = RECLAIM_CHUNK,
    progress: Callable[[int], None] | None = None,
) -> ReclaimSummary:
    """Remove reclaimable content graphs (:func:`reclaimable_graphs`).

    ``limit`` bounds the statements removed in this call (``None``: all), so that a
    caller can spend a bounded effort. Each chunk of ``chunk`` statements is its own
    transaction: stopping between chunks (an error, Ctrl-C) loses nothing, and the
    rest stays reclaimable. ``progress`` is called with the statements removed so far.
    """
    t0 = time.perf_counter()
    done: list[str] = []
    removed = 0
    todo = reclaimable_graphs(store)
    for iri in list(todo):
        left = None if limit is None else limit - removed

        def tick(n: int, base: int = removed) -> None:
            if progress:
                progress(base + n)

        got = reclaim_graph(store, iri, left, chunk, tick)
        if got is None:
            removed = limit or 0
            break
        removed += got
        done.append(iri)
        todo.remove(iri)
    return ReclaimSummary(done, removed, todo, time.perf_counter() - t0)


def is_bookkeeping_iri(iri: str) -> bool:
    """Whether an IRI belongs to kgkit's own records (provenance, content graphs)."""
    return iri.startswith(("urn:kgkit:", KG))


def fsync_dir(path: Path) -> None:
    """Make a rename inside ``path`` durable."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
