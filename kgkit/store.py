"""The embedded store of a workspace: opening it safely, and its graph registry.

Every import writes its statements into a fresh *content graph* and only then
points the user's graph name at it, in one transaction, in the provenance graph.
Readers therefore see the old content or the new one, never a mix, and a failed or
interrupted import leaves the registry as it was (content graphs nobody points at
are removed the next time the store is opened for writing).

Opening is guarded by a lock file next to the store: one writer, or any number
of readers. RocksDB's own lock only keeps out a second writer, and reading a store
that another process is writing has corrupted reads, so readers take a shared lock.
"""

from __future__ import annotations

import contextlib
import fcntl
import gc
import os
import re
import sys
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pyoxigraph as ox

from kgkit.errors import StoreError, StoreInUseError

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
    "drop_orphan_graphs",
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
    path.parent.mkdir(parents=True, exist_ok=True)
    lock = open(_lock_path(path), "a+")  # noqa: SIM115 - held for the context's lifetime
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
            if write:
                drop_orphan_graphs(store)
            yield store
            if write:
                store.flush()
        finally:
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


def _lit(term: ox.Literal | None) -> str:
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
                    name=_lit(fv.get("name", [None])[0]),
                    size=int(_lit(fv.get("size", [None])[0]) or 0),
                    sha256=_lit(fv.get("sha256", [None])[0]),
                    format=_lit(fv.get("format", [None])[0]),
                    compression=_lit(fv.get("compression", [None])[0]),
                )
            )
        counts = {
            k: int(_lit(v[k][0]))
            for k in ("read", "loaded", "duplicates", "filtered", "rejected")
            if k in v
        }
        out.append(
            GraphInfo(
                name=name,
                content=v["content"][0].value,
                import_id=int(node_iri[len(_IMPORT_PREFIX) :]),
                files=tuple(files),
                counts=counts,
                started=_lit(v.get("started", [None])[0]),
                ended=_lit(v.get("ended", [None])[0]),
                kgkit_version=_lit(v.get("kgkitVersion", [None])[0]),
                options=_lit(v.get("options", [None])[0]),
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


def content_graph_iri(name: str, import_id: int) -> str:
    return f"{_GRAPH_PREFIX}{name}:{import_id}"


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
    Returns the content graph the name pointed at before (now unreferenced), if any.
    """
    previous = current_graphs(store).get(name)
    node = ox.NamedNode(f"{_IMPORT_PREFIX}{import_id}")
    g = PROVENANCE_GRAPH

    def lit(value: object) -> ox.Literal:
        if isinstance(value, int):
            return ox.Literal(
                str(value), datatype=ox.NamedNode("http://www.w3.org/2001/XMLSchema#integer")
            )
        return ox.Literal(str(value))

    def p(local: str) -> ox.NamedNode:
        return ox.NamedNode(KG + local)

    quads = [
        ox.Quad(node, p("graphName"), lit(name), g),
        ox.Quad(node, p("content"), ox.NamedNode(content_iri), g),
        ox.Quad(node, p("started"), lit(started), g),
        ox.Quad(node, p("ended"), lit(ended), g),
        ox.Quad(node, p("kgkitVersion"), lit(kgkit_version), g),
        ox.Quad(node, p("options"), lit(options), g),
    ]
    for key, value in counts.items():
        quads.append(ox.Quad(node, p(key), lit(int(value)), g))
    for i, f in enumerate(files, 1):
        fnode = ox.NamedNode(f"{_IMPORT_PREFIX}{import_id}/file/{i}")
        quads.append(ox.Quad(node, p("file"), fnode, g))
        quads += [
            ox.Quad(fnode, p("name"), lit(f.name), g),
            ox.Quad(fnode, p("size"), lit(int(f.size)), g),
            ox.Quad(fnode, p("sha256"), lit(f.sha256), g),
            ox.Quad(fnode, p("format"), lit(f.format), g),
            ox.Quad(fnode, p("compression"), lit(f.compression), g),
        ]
    insert = " ".join(f"{q.subject} {q.predicate} {q.object} ." for q in quads)
    pointer = f"<{graph_iri(name)}> <{KG}current>"
    store.update(
        f"DELETE {{ GRAPH {g} {{ {pointer} ?old }} }} "
        f"INSERT {{ GRAPH {g} {{ {pointer} {node} . {insert} }} }} "
        f"WHERE {{ OPTIONAL {{ GRAPH {g} {{ {pointer} ?old }} }} }}"
    )
    return previous


def drop_orphan_graphs(store: ox.Store) -> list[str]:
    """Remove content graphs that no graph name points at (left by failed imports)."""
    live = set(current_graphs(store).values())
    dropped = []
    for gname in list(store.named_graphs()):
        if (
            isinstance(gname, ox.NamedNode)
            and gname.value.startswith(_GRAPH_PREFIX)
            and gname.value not in live
        ):
            store.remove_graph(gname)
            dropped.append(gname.value)
    return dropped


def remove_content_graph(store: ox.Store, content_iri: str) -> None:
    node = ox.NamedNode(content_iri)
    if store.contains_named_graph(node):
        store.remove_graph(node)


def fsync_dir(path: Path) -> None:
    """Make a rename inside ``path`` durable."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
