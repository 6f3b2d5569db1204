"""Running SPARQL against the workspace: the embedded store or a remote endpoint.

:func:`connect` opens a *backend*: the workspace store, read-only, or the SPARQL 1.1
endpoint named by ``endpoint:`` in ``kgkit.yaml``. :func:`run_query` runs one query
on it and returns a :class:`QueryResult` whose rows stream.

Guards, decided by reading the query's tokens (strings, IRIs, comments, variables
and prefixed names are skipped, so ``"SERVICE"`` in a literal or ``ex:drop`` does
not count):

- an update (INSERT, DELETE, LOAD, CLEAR, DROP, ...) is refused unless
  ``allow_update`` is given, and then only on a store opened for writing, and only
  when it keeps kgkit's own records true (:func:`check_update`); the statement
  counts of the graphs it changes are brought up to date in the same transaction;
- LOAD, which reads local files or fetches URLs, is refused unless ``allow_load``;
- a query holding a SERVICE clause is refused unless ``allow_service`` is given,
  because pyoxigraph answers SERVICE by making HTTP requests.

By default a query sees the union of the *current* content graphs as its default
graph, and each of them through ``GRAPH ?g``; never the provenance graph or content
left behind by a failed import.

Formatting (:func:`write_result`): a terminal table with CURIEs, the W3C
"SPARQL 1.1 Query Results JSON Format" and "SPARQL 1.1 Query Results CSV and TSV
Formats", and N-Triples or Turtle for CONSTRUCT and DESCRIBE.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import re
import shutil
import socket
import urllib.error
import urllib.parse
import urllib.request
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from typing import TextIO

import pyoxigraph as ox

import kgkit
from kgkit.errors import ArgumentError, NotFoundError, QueryError
from kgkit.inputs import check_text
from kgkit.store import (
    KG,
    PROVENANCE_GRAPH,
    import_node_iri,
    is_bookkeeping_iri,
    list_graphs,
    open_store,
)
from kgkit.workspace import Workspace

__all__ = [
    "FORMATS",
    "Backend",
    "EmbeddedBackend",
    "EndpointBackend",
    "QueryResult",
    "Token",
    "check_update",
    "connect",
    "format_term",
    "has_service",
    "named_iris",
    "query_form",
    "run_query",
    "tokenize",
    "write_result",
]

#: output formats of :func:`write_result`
FORMATS = ("table", "json", "csv", "tsv", "nt", "ttl")

XSD_STRING = "http://www.w3.org/2001/XMLSchema#string"
_NUMERIC = {
    "http://www.w3.org/2001/XMLSchema#" + t
    for t in ("integer", "decimal", "double", "float", "int", "long", "nonNegativeInteger")
}
QUERY_FORMS = ("SELECT", "CONSTRUCT", "DESCRIBE", "ASK")
UPDATE_WORDS = ("INSERT", "DELETE", "LOAD", "CLEAR", "DROP", "CREATE", "ADD", "MOVE", "COPY")
UPDATE_WORDS += ("WITH",)

# ---------------------------------------------------------------------------
# Tokens


@dataclass(frozen=True)
class Token:
    kind: str  # word, pname, var, iri, string, lang, slot, num, punct
    text: str
    start: int


_TOKEN = re.compile(
    r"""
    (?P<ws>\s+)
  | (?P<comment>\#[^\n\r]*)
  | (?P<string>\"\"\"(?:[^"\\]|\\.|"(?!""))*\"\"\"
             | '''(?:[^'\\]|\\.|'(?!''))*'''
             | "(?:[^"\\\n\r]|\\.)*"
             | '(?:[^'\\\n\r]|\\.)*')
  | (?P<iri><[^<>"{}|^`\\\x00-\x20]*>)
  | (?P<var>[?$][A-Za-z0-9_\u00b7\u00c0-\uffff]+)
  | (?P<lang>@[A-Za-z]+(?:-[A-Za-z0-9]+)*)
  | (?P<slot>%\{[A-Za-z_][A-Za-z0-9_]*(?::list)?\})
  | (?P<pname>(?:[A-Za-z_\u00c0-\uffff][\w.\-\u00b7\u00c0-\uffff]*)?:
               (?:[\w\-.:\u00b7\u00c0-\uffff]|%[0-9A-Fa-f]{2}|\\.)*)
  | (?P<word>[A-Za-z_][A-Za-z0-9_]*)
  | (?P<num>[0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)
  | (?P<punct>.)
    """,
    re.X | re.S,
)


def tokenize(text: str) -> Iterator[Token]:
    """The tokens of a SPARQL text, without white space and comments.

    Unterminated strings and lone ``<`` come out as punctuation: the SPARQL parser
    reports them; this only has to find keywords reliably.
    """
    for m in _TOKEN.finditer(text):
        kind = m.lastgroup
        if kind in ("ws", "comment"):
            continue
        yield Token(kind, m.group(), m.start())


def query_form(text: str) -> str:
    """``SELECT``, ``CONSTRUCT``, ``DESCRIBE``, ``ASK``, ``UPDATE`` or ``UNKNOWN``.

    >>> query_form("PREFIX ex: <http://example.org/> ask { ?s ex:p ?o }")
    'ASK'
    >>> query_form("DROP ALL")
    'UPDATE'
    """
    toks = tokenize(text)
    for tok in toks:
        if tok.kind != "word":
            return "UNKNOWN"
        word = tok.text.upper()
        if word == "BASE":
            next(toks, None)
        elif word == "PREFIX":
            next(toks, None)
            next(toks, None)
        elif word in QUERY_FORMS:
            return word
        elif word in UPDATE_WORDS:
            return "UPDATE"
        else:
            return "UNKNOWN"
    return "UNKNOWN"


def has_service(text: str) -> bool:
    """Whether the text holds the SERVICE keyword (outside strings, IRIs, comments).

    >>> has_service('SELECT * { ?s ?p "SERVICE" } # SERVICE')
    False
    >>> has_service("SELECT * { service <http://example.org/sparql> { ?s ?p ?o } }")
    True
    """
    return any(t.kind == "word" and t.text.upper() == "SERVICE" for t in tokenize(text))


def declared_prefixes(text: str) -> set[str]:
    """Prefix names the query declares itself."""
    out = set()
    toks = list(tokenize(text))
    for i, tok in enumerate(toks[:-1]):
        if tok.kind == "word" and tok.text.upper() == "PREFIX" and toks[i + 1].kind == "pname":
            out.add(toks[i + 1].text[:-1])
    return out


def _prologue(ws: Workspace, text: str) -> str:
    declared = declared_prefixes(text)
    return "".join(
        f"PREFIX {name}: <{ns}>\n" for name, ns in ws.prefixes.items() if name not in declared
    )


# ---------------------------------------------------------------------------
# Results


@dataclass
class QueryResult:
    """What a query gave. Rows and triples are iterators: they stream, once."""

    kind: str  # "select" | "ask" | "graph" | "update" (an allowed update that ran)
    variables: list[str] = field(default_factory=list)
    rows: Iterator[tuple] = field(default_factory=lambda: iter(()))
    boolean: bool | None = None
    triples: Iterator[ox.Triple] = field(default_factory=lambda: iter(()))


_ERROR_AT = re.compile(r"^error at (\d+):(\d+): (.*)$", re.S)


def syntax_error(text: str, exc: Exception, where: str = "query") -> QueryError:
    """A one-line-plus-caret message for a SPARQL syntax error."""
    msg = str(exc).strip()
    m = _ERROR_AT.match(msg)
    if not m:
        return QueryError(f"{where}: SPARQL syntax error: {msg}")
    line, col, cause = int(m.group(1)), int(m.group(2)), m.group(3)
    lines = text.splitlines() or [""]
    shown = lines[line - 1] if 0 < line <= len(lines) else ""
    caret = " " * max(col - 1, 0) + "^"
    return QueryError(
        f"{where}:{line}:{col}: SPARQL syntax error: {cause}", details=(f"  {shown}", f"  {caret}")
    )


def _check_guards(text: str, allow_update: bool, allow_service: bool, allow_load: bool) -> str:
    form = query_form(text)
    if form == "UPDATE" and not allow_update:
        raise QueryError(
            "this is a SPARQL update, which changes the store; "
            "refused (give allow_update=True to run it)",
            params=("allow_update",),
        )
    if has_service(text) and not allow_service:
        raise QueryError(
            "the query holds a SERVICE clause, which would send requests over the network; "
            "refused (give allow_service=True to run it)",
            params=("allow_service",),
        )
    if form == "UPDATE" and "LOAD" in _words(text) and not allow_load:
        raise QueryError(
            "the update holds LOAD, which reads a local file or fetches a URL over the "
            "network; refused (give allow_load=True to run it, or import the file with "
            "kgkit import)",
            params=("allow_load",),
        )
    return form


def _words(text: str) -> set[str]:
    return {t.text.upper() for t in tokenize(text) if t.kind == "word"}


#: update operations that create, empty or remove whole graphs
_GRAPH_OPERATIONS = frozenset({"CLEAR", "DROP", "CREATE", "ADD", "MOVE", "COPY"})


def _resolve(ref: str, base: str | None) -> str:
    """An IRI written in a query, resolved against its BASE as the SPARQL parser does."""
    if base is None or re.match(r"^[A-Za-z][A-Za-z0-9+.-]*:", ref):
        return ref
    try:
        (q,) = ox.parse(
            input=f"<{ref}> <{ref}> <{ref}> .".encode(), format=ox.RdfFormat.TURTLE, base_iri=base
        )
    except (SyntaxError, ValueError):
        return ref
    return q.subject.value


def named_iris(text: str, prefixes: dict[str, str]) -> set[str]:
    """Every IRI a SPARQL text names: written in full, relative to its BASE, or as a
    prefixed name (its own PREFIX lines first, then ``prefixes``).

    >>> sorted(named_iris("PREFIX e: <http://e/> INSERT DATA { e:a <b> 1 }", {}))
    ['b', 'http://e/', 'http://e/a']
    """
    toks = list(tokenize(text))
    base: str | None = None
    declared: dict[str, str] = {}
    out: set[str] = set()
    for i, tok in enumerate(toks):
        if tok.kind == "iri":
            iri = _resolve(tok.text[1:-1], base)
            out.add(iri)
            prev = toks[i - 1] if i else None
            if prev is not None and prev.kind == "word" and prev.text.upper() == "BASE":
                base = iri
            elif (
                i >= 2
                and prev is not None
                and prev.kind == "pname"
                and toks[i - 2].kind == "word"
                and toks[i - 2].text.upper() == "PREFIX"
            ):
                declared[prev.text[:-1]] = iri
        elif tok.kind == "pname":
            name, _, local = tok.text.partition(":")
            ns = declared.get(name, prefixes.get(name))
            if ns is not None:
                out.add(ns + re.sub(r"\\(.)", r"\1", local))
    return out


def check_update(text: str, prefixes: dict[str, str], content_graphs: set[str]) -> set[str]:
    """Refuse an update that could put ``kgkit graphs`` out of step with what queries see.

    kgkit's own records (the provenance graph, its terms, the content graphs behind the
    graph names) are kept true by kgkit alone: an update may add and remove statements
    *in* a current content graph, named by its IRI, but not name the provenance, empty
    or remove a content graph (``kgkit drop`` does that), address graphs through a
    variable (``GRAPH ?g`` would reach the provenance too), or use ``ALL``/``NAMED``.
    Returns the content graphs the update names, whose statement counts are brought
    up to date in the same transaction.
    """
    toks = list(tokenize(text))
    words = {t.text.upper() for t in toks if t.kind == "word"}
    for i, tok in enumerate(toks[:-1]):
        if tok.kind == "word" and tok.text.upper() == "GRAPH" and toks[i + 1].kind == "var":
            raise QueryError(
                f"the update names a graph through {toks[i + 1].text}, which could reach "
                "kgkit's own records; refused (name each graph by its IRI)"
            )
    for tok in toks:
        if (
            tok.kind == "word"
            and tok.text.upper() in ("ALL", "NAMED")
            and words
            & {
                "CLEAR",
                "DROP",
            }
        ):
            raise QueryError(
                f"{tok.text.upper()} would also remove kgkit's own records; refused "
                "(remove a graph with kgkit drop NAME)"
            )
    named = named_iris(text, prefixes)
    touched = named & content_graphs
    for iri in sorted(named - touched):
        if is_bookkeeping_iri(iri):
            raise QueryError(
                f"the update names <{iri}>, which belongs to kgkit's own records; refused "
                "(only the statements of current graphs can be changed)"
            )
    if touched and words & _GRAPH_OPERATIONS:
        op = sorted(words & _GRAPH_OPERATIONS)[0]
        raise QueryError(
            f"{op} on a graph's content would put kgkit graphs out of step with queries; "
            "refused (remove a graph with kgkit drop NAME, replace it with kgkit import)"
        )
    return touched


# ---------------------------------------------------------------------------
# Backends


class Backend:
    """Where queries run. ``ws`` is the workspace; ``graph_names`` maps each current
    content graph IRI to its graph name."""

    ws: Workspace
    graph_names: dict[str, str]

    def content_graphs(self, graphs: list[str] | None) -> list[str]:
        """Content graph IRIs for graph names (``None``: all current graphs)."""
        if graphs is None:
            return sorted(self.graph_names)
        by_name = {v: k for k, v in self.graph_names.items()}
        missing = [g for g in graphs if g not in by_name]
        if missing:
            raise NotFoundError(
                f"no graph named {missing[0]!r} "
                f"(graphs: {', '.join(sorted(by_name)) or 'none yet'})"
            )
        return sorted({by_name[g] for g in graphs})

    def execute(self, text: str, form: str, graphs: list[str] | None) -> QueryResult:
        raise NotImplementedError


class EmbeddedBackend(Backend):
    """The workspace store, opened by :func:`connect`."""

    def __init__(self, ws: Workspace, store: ox.Store, writable: bool):
        self.ws = ws
        self.store = store
        self.writable = writable
        infos = list_graphs(store)
        self.graph_names = {g.content: g.name for g in infos}
        self.import_nodes = {g.content: import_node_iri(g.import_id) for g in infos}

    def execute(self, text: str, form: str, graphs: list[str] | None) -> QueryResult:
        if form == "UPDATE":
            if not self.writable:
                raise QueryError(
                    "the store is open read-only; an update needs allow_update=True",
                    params=("allow_update",),
                )
            touched = check_update(text, dict(self.ws.prefixes), set(self.graph_names))
            # the new counts are written by the same request, so in the same transaction:
            # kgkit graphs and queries agree whatever happens
            recount = "".join(_recount(iri, self.import_nodes[iri]) for iri in sorted(touched))
            body = text
            toks = list(tokenize(text))
            if recount and toks and toks[-1].text == ";":
                body = text[: toks[-1].start]
            try:
                self.store.update(body + recount, prefixes=dict(self.ws.prefixes))
            except SyntaxError as exc:
                raise syntax_error(text, exc, "update") from None
            except OSError as exc:
                raise QueryError(f"update failed: {exc}") from None
            return QueryResult(kind="update")
        dataset = [ox.NamedNode(g) for g in self.content_graphs(graphs)]
        try:
            res = self.store.query(
                text,
                prefixes=dict(self.ws.prefixes),
                default_graph=dataset,
                named_graphs=dataset,
            )
        except SyntaxError as exc:
            raise syntax_error(text, exc) from None
        except OSError as exc:
            raise QueryError(f"query failed: {exc}") from None
        return _wrap(res, text)


def _recount(content: str, node: str) -> str:
    """An update operation recording the statement count of a content graph."""
    stat = f"<{KG}statements>"
    return (
        f"\n;\nDELETE {{ GRAPH {PROVENANCE_GRAPH} {{ <{node}> {stat} ?old }} }} "
        f"INSERT {{ GRAPH {PROVENANCE_GRAPH} {{ <{node}> {stat} ?n }} }} "
        f"WHERE {{ {{ SELECT (COUNT(*) AS ?n) WHERE {{ GRAPH <{content}> {{ ?s ?p ?o }} }} }} "
        f"OPTIONAL {{ GRAPH {PROVENANCE_GRAPH} {{ <{node}> {stat} ?old }} }} }}"
    )


def _wrap(res, text: str) -> QueryResult:
    if isinstance(res, ox.QueryBoolean):
        return QueryResult(kind="ask", boolean=bool(res))
    if isinstance(res, ox.QuerySolutions):
        variables = [v.value for v in res.variables]
        return QueryResult(kind="select", variables=variables, rows=_solution_rows(res, text))
    return QueryResult(kind="graph", triples=_guarded(res, text))


def _solution_rows(res: ox.QuerySolutions, text: str) -> Iterator[tuple]:
    try:
        for sol in res:
            yield tuple(sol)
    except (OSError, SyntaxError) as exc:
        raise QueryError(f"query failed while reading results: {exc}") from None


def _guarded(it: Iterable, text: str) -> Iterator:
    try:
        yield from it
    except (OSError, SyntaxError) as exc:
        raise QueryError(f"query failed while reading results: {exc}") from None


_REGISTRY_QUERY = f"""SELECT ?name ?content WHERE {{
  GRAPH {PROVENANCE_GRAPH} {{ ?g <{KG}current> ?import .
    ?import <{KG}graphName> ?name ; <{KG}content> ?content }} }}"""


class EndpointBackend(Backend):
    """A remote SPARQL 1.1 endpoint, spoken to with the SPARQL 1.1 Protocol.

    When the endpoint serves a kgkit store (it holds the provenance graph), queries
    see its current content graphs exactly as they would locally, through the
    protocol's ``default-graph-uri`` and ``named-graph-uri`` parameters. Otherwise
    they see the endpoint's own default dataset and ``--graph`` is not available.
    """

    def __init__(self, ws: Workspace, url: str, timeout: float):
        self.ws = ws
        self.url = url
        self.timeout = timeout
        res = self._post({"query": _REGISTRY_QUERY}, "application/sparql-results+json")
        with res:
            sols = ox.parse_query_results(res.read(), ox.QueryResultsFormat.JSON)
        self.graph_names = {s["content"].value: s["name"].value for s in sols}

    def _post(self, params: dict, accept: str, dataset: list[str] | None = None):
        body = list(params.items())
        for g in dataset or []:
            body += [("default-graph-uri", g), ("named-graph-uri", g)]
        data = urllib.parse.urlencode(body).encode()
        req = urllib.request.Request(
            self.url,
            data=data,
            headers={
                "Accept": accept,
                "Content-Type": "application/x-www-form-urlencoded",
                "User-Agent": f"kgkit/{kgkit.__version__}",
            },
        )
        try:
            return urllib.request.urlopen(req, timeout=self.timeout)
        except urllib.error.HTTPError as exc:
            detail = exc.read(2000).decode("utf-8", "replace").strip().splitlines()
            first = detail[0] if detail else exc.reason
            raise QueryError(f"{self.url}: HTTP {exc.code} {exc.reason}: {first}") from None
        except TimeoutError:
            raise QueryError(f"{self.url}: no answer within {self.timeout:g} s") from None
        except urllib.error.URLError as exc:
            reason = exc.reason
            if isinstance(reason, TimeoutError | socket.timeout):
                raise QueryError(f"{self.url}: no answer within {self.timeout:g} s") from None
            raise QueryError(f"{self.url}: cannot reach the endpoint ({reason})") from None
        except OSError as exc:
            raise QueryError(f"{self.url}: cannot reach the endpoint ({exc})") from None

    def execute(self, text: str, form: str, graphs: list[str] | None) -> QueryResult:
        if form == "UPDATE":
            raise QueryError(f"{self.url}: kgkit sends no updates to a remote endpoint")
        full = _prologue(self.ws, text) + text
        if not has_service(text):
            # parse it here first, for the same syntax errors as the store gives;
            # an empty in-memory store answers at once
            try:
                ox.Store().query(text, prefixes=dict(self.ws.prefixes))
            except SyntaxError as exc:
                raise syntax_error(text, exc) from None
        dataset = self.content_graphs(graphs) if self.graph_names else None
        if graphs is not None and not self.graph_names:
            raise QueryError(f"{self.url}: the endpoint has no kgkit graphs to choose from")
        if form in ("CONSTRUCT", "DESCRIBE"):
            res = self._post({"query": full}, "application/n-triples", dataset)
            return QueryResult(kind="graph", triples=self._triples(res))
        res = self._post({"query": full}, "application/sparql-results+json", dataset)
        try:
            parsed = ox.parse_query_results(res, ox.QueryResultsFormat.JSON)
        except SyntaxError as exc:
            res.close()
            raise QueryError(f"{self.url}: malformed results ({exc})") from None
        if isinstance(parsed, ox.QueryBoolean):
            res.close()
            return QueryResult(kind="ask", boolean=bool(parsed))
        variables = [v.value for v in parsed.variables]
        return QueryResult(kind="select", variables=variables, rows=self._rows(parsed, res))

    def _rows(self, parsed, res) -> Iterator[tuple]:
        try:
            for sol in parsed:
                yield tuple(sol)
        except (SyntaxError, OSError) as exc:
            raise QueryError(f"{self.url}: results broke off ({exc})") from None
        finally:
            res.close()

    def _triples(self, res) -> Iterator[ox.Triple]:
        try:
            for q in ox.parse(res, ox.RdfFormat.N_TRIPLES):
                yield ox.Triple(q.subject, q.predicate, q.object)
        except (SyntaxError, OSError) as exc:
            raise QueryError(f"{self.url}: results broke off ({exc})") from None
        finally:
            res.close()


@contextlib.contextmanager
def connect(
    ws: Workspace, write: bool = False, timeout: float = 60.0, endpoint: str | None = None
) -> Iterator[Backend]:
    """Open the backend of a workspace: its store (read-only unless ``write``), or the
    endpoint named by ``endpoint`` or by ``kgkit.yaml``.

    ``timeout`` (seconds) bounds each request to an endpoint.
    """
    url = endpoint or ws.config.endpoint
    if url:
        yield EndpointBackend(ws, url, timeout)
        return
    with open_store(ws.store_path, write=write) as store:
        yield EmbeddedBackend(ws, store, write)


def run_query(
    backend: Backend,
    sparql: str,
    graphs: list[str] | None = None,
    allow_update: bool = False,
    allow_service: bool = False,
    allow_load: bool = False,
) -> QueryResult:
    """Run one SPARQL query (or, with ``allow_update``, an update) on a backend.

    ``graphs``: graph names to query (default: every current graph). Workspace
    prefixes are available without being declared. ``allow_service`` lets SERVICE
    clauses reach the network; ``allow_load`` lets an update's LOAD read a file or
    fetch a URL. An update must keep kgkit's records true (:func:`check_update`).
    """
    check_text(sparql, "query", QueryError)  # text that is not UTF-8 cannot reach the store
    form = _check_guards(sparql, allow_update, allow_service, allow_load)
    return backend.execute(sparql, form, graphs)


# ---------------------------------------------------------------------------
# Formatting


def _json_term(term) -> dict:
    if isinstance(term, ox.NamedNode):
        return {"type": "uri", "value": term.value}
    if isinstance(term, ox.BlankNode):
        return {"type": "bnode", "value": term.value}
    if isinstance(term, ox.Literal):
        out = {"type": "literal", "value": term.value}
        if term.language:
            out["xml:lang"] = term.language
        elif term.datatype.value != XSD_STRING:
            out["datatype"] = term.datatype.value
        return out
    if isinstance(term, ox.Triple):
        return {
            "type": "triple",
            "value": {
                "subject": _json_term(term.subject),
                "predicate": _json_term(term.predicate),
                "object": _json_term(term.object),
            },
        }
    raise TypeError(f"not an RDF term: {term!r}")


_quote = json.encoder.encode_basestring  # the C encoder json.dumps uses, no ASCII escaping


def _json_text(term) -> str:
    """One term as W3C JSON results text; the same as ``json.dumps(_json_term(term))``."""
    kind = type(term)
    if kind is ox.NamedNode:
        return '{"type": "uri", "value": ' + _quote(term.value) + "}"
    if kind is ox.Literal:
        if term.language:
            return (
                '{"type": "literal", "value": '
                + _quote(term.value)
                + ', "xml:lang": '
                + _quote(term.language)
                + "}"
            )
        dt = term.datatype.value
        if dt == XSD_STRING:
            return '{"type": "literal", "value": ' + _quote(term.value) + "}"
        return (
            '{"type": "literal", "value": '
            + _quote(term.value)
            + ', "datatype": '
            + _quote(dt)
            + "}"
        )
    return json.dumps(_json_term(term), ensure_ascii=False)


def _write_json(res: QueryResult, out: TextIO) -> None:
    # W3C SPARQL 1.1 Query Results JSON Format, one binding per line so it streams
    if res.kind == "ask":
        out.write(json.dumps({"head": {}, "boolean": bool(res.boolean)}) + "\n")
        return
    out.write('{"head": {"vars": ' + json.dumps(res.variables) + '}, "results": {"bindings": [')
    keys = [_quote(n) + ": " for n in res.variables]
    sep = "\n"
    write = out.write
    for row in res.rows:
        write(
            sep
            + "{"
            + ", ".join(k + _json_text(t) for k, t in zip(keys, row, strict=True) if t is not None)
            + "}"
        )
        sep = ",\n"
    write("\n]}}\n")


def _csv_value(term) -> str:
    if term is None:
        return ""
    if isinstance(term, ox.BlankNode):
        return "_:" + term.value
    if isinstance(term, ox.NamedNode | ox.Literal):
        return term.value
    return str(term)


def _write_csv(res: QueryResult, out: TextIO) -> None:
    # W3C SPARQL 1.1 Query Results CSV: RFC 4180 quoting, CRLF line ends, values only
    w = csv.writer(out, lineterminator="\r\n")
    w.writerow(res.variables)
    for row in res.rows:
        w.writerow([_csv_value(t) for t in row])


def _write_tsv(res: QueryResult, out: TextIO) -> None:
    # W3C SPARQL 1.1 Query Results TSV: "?var" header, terms in SPARQL/Turtle syntax
    out.write("\t".join("?" + v for v in res.variables) + "\n")
    for row in res.rows:
        out.write("\t".join("" if t is None else str(t) for t in row) + "\n")


def format_term(term, ws: Workspace | None) -> str:
    """A term as a person reads it: CURIEs, bare text with ``@lang``, numbers as is."""
    if term is None:
        return ""
    if isinstance(term, ox.NamedNode):
        return ws.compact(term.value) if ws else f"<{term.value}>"
    if isinstance(term, ox.BlankNode):
        return "_:" + term.value
    if isinstance(term, ox.Literal):
        text = term.value.replace("\\", "\\\\").replace("\n", "\\n").replace("\t", "\\t")
        text = text.replace("\r", "\\r")
        if term.language:
            return f"{text}@{term.language}"
        dt = term.datatype.value
        if dt == XSD_STRING or dt in _NUMERIC:
            return text
        return f"{text}^^{ws.compact(dt) if ws else '<' + dt + '>'}"
    return str(term)


def _cut(text: str, width: int) -> str:
    return text if len(text) <= width else text[: max(width - 1, 0)] + "…"


def _write_table(
    res: QueryResult, out: TextIO, ws: Workspace | None, width: int | None, sample: int = 100
) -> None:
    if res.kind == "ask":
        out.write(("true" if res.boolean else "false") + "\n")
        return
    names = ["?" + v for v in res.variables]
    total = width or shutil.get_terminal_size((120, 24)).columns
    head: list[list[str]] = []
    rows = iter(res.rows)
    count = 0
    for row in rows:
        head.append([format_term(t, ws) for t in row])
        if len(head) >= sample:
            break
    n = max(len(names), 1)
    widths = [len(x) for x in names]
    for r in head:
        widths = [max(w, len(c)) for w, c in zip(widths, r, strict=True)]
    room = max(total - 2 * (n - 1), n * 8)
    if sum(widths) > room:
        # shrink the widest columns first until the table fits
        budget = room
        fair = budget // n
        small = [w for w in widths if w <= fair]
        big = n - len(small)
        cap = max((budget - sum(small)) // max(big, 1), 8)
        widths = [min(w, cap) for w in widths]

    # widths come from the first rows; a later, longer value in the last column still
    # uses the rest of the line, elsewhere it is cut to keep the columns aligned
    last_room = max(room - sum(widths[:-1]), widths[-1]) if widths else 0
    limits = [*widths[:-1], last_room] if widths else []

    def line(cells: list[str]) -> str:
        return "  ".join(
            _cut(c, m).ljust(w) for c, w, m in zip(cells, widths, limits, strict=True)
        ).rstrip()

    out.write(line(names) + "\n")
    out.write("  ".join("-" * w for w in widths) + "\n")
    for r in head:
        out.write(line(r) + "\n")
        count += 1
    for row in rows:
        out.write(line([format_term(t, ws) for t in row]) + "\n")
        count += 1
    out.write(f"({count} row{'s' if count != 1 else ''})\n")


def _write_graph(res: QueryResult, out: TextIO, fmt: str, ws: Workspace | None) -> None:
    if fmt == "ttl":
        prefixes = dict(ws.prefixes) if ws else None
        buf = _TextSink(out)
        ox.serialize(res.triples, buf, ox.RdfFormat.TURTLE, prefixes=prefixes)
        return
    for t in res.triples:
        out.write(f"{t} .\n")


class _TextSink(io.RawIOBase):
    """A binary writer over a text stream, so that pyoxigraph can stream into it."""

    def __init__(self, out: TextIO):
        self.out = out

    def writable(self) -> bool:
        return True

    def write(self, b) -> int:
        self.out.write(bytes(b).decode("utf-8"))
        return len(b)


def write_result(
    res: QueryResult,
    out: TextIO,
    fmt: str = "table",
    ws: Workspace | None = None,
    width: int | None = None,
) -> None:
    """Write a result to a text stream in one of :data:`FORMATS`.

    ``table`` is for people (CURIEs, fitted columns, ``width`` characters wide);
    ``json``, ``csv`` and ``tsv`` follow the W3C results formats; ``nt`` and ``ttl``
    are for CONSTRUCT and DESCRIBE results (``table`` shows those as N-Triples too).
    """
    if fmt not in FORMATS:
        raise ArgumentError("fmt", f"unknown output format {fmt!r} (formats: {', '.join(FORMATS)})")
    if res.kind == "update":
        out.write("update applied\n")
        return
    if res.kind == "graph":
        if fmt in ("json", "csv", "tsv"):
            raise QueryError(
                f"fmt={fmt!r} is for SELECT and ASK results; "
                "a CONSTRUCT or DESCRIBE query gives fmt='nt' or fmt='ttl'",
                params=("fmt",),
            )
        _write_graph(res, out, fmt, ws)
        return
    if fmt in ("nt", "ttl"):
        raise QueryError(f"fmt={fmt!r} is for CONSTRUCT and DESCRIBE results", params=("fmt",))
    if res.kind == "ask" and fmt in ("csv", "tsv"):
        # the W3C CSV/TSV formats have no boolean form
        out.write(("true" if res.boolean else "false") + "\n")
        return
    if fmt == "json":
        _write_json(res, out)
    elif fmt == "csv":
        _write_csv(res, out)
    elif fmt == "tsv":
        _write_tsv(res, out)
    else:
        _write_table(res, out, ws, width)
