"""kgkit.query: running SPARQL on the store, the guards, the W3C result formats."""

from __future__ import annotations

import csv
import io
import json
import socket
import threading

import pyoxigraph as ox
import pytest
from explore_support import T, make_explore_workspace

from kgkit.errors import KgkitError, QueryError
from kgkit.query import (
    connect,
    has_service,
    query_form,
    run_query,
    write_result,
)
from kgkit.store import open_store


@pytest.fixture(scope="module")
def ws(tmp_path_factory):
    return make_explore_workspace(tmp_path_factory.mktemp("q") / "ws")


def _select(ws, text, **kw):
    with connect(ws) as b:
        res = run_query(b, text, **kw)
        return res.variables, list(res.rows)


def test_default_graph_is_union_of_current_graphs(ws):
    _, rows = _select(ws, "SELECT ?s WHERE { ?s skos:prefLabel 'sailing'@en }")
    assert rows == [(ox.NamedNode(T + "sailing"),)]
    _, rows = _select(ws, "SELECT DISTINCT ?g WHERE { GRAPH ?g { ?s ?p ?o } } ORDER BY ?g")
    with connect(ws) as b:
        names = sorted(b.graph_names[r[0].value] for r in rows)
    assert names == ["other", "topics"]


def test_provenance_graph_is_not_visible(ws):
    _, rows = _select(ws, "SELECT ?s WHERE { GRAPH <urn:kgkit:provenance> { ?s ?p ?o } }")
    assert rows == []
    _, rows = _select(ws, "SELECT ?s WHERE { ?s <http://kgkit.invalid/ns#current> ?o }")
    assert rows == []


def test_graph_option_limits_the_dataset(ws):
    q = "SELECT ?s WHERE { ?s skos:prefLabel 'sailing'@en }"
    assert _select(ws, q, graphs=["topics"])[1] == []
    assert len(_select(ws, q, graphs=["other"])[1]) == 1
    with pytest.raises(KgkitError, match="no graph named 'nope'"):
        _select(ws, q, graphs=["nope"])


def test_workspace_prefixes_are_added_unless_declared(ws):
    _, rows = _select(ws, "SELECT ?l WHERE { t:rowing skos:prefLabel ?l }")
    assert rows == [(ox.Literal("rowing", language="en"),)]
    # a query's own declaration wins over the workspace's
    q = "PREFIX t: <http://example.org/nothing/> SELECT ?l WHERE { t:rowing skos:prefLabel ?l }"
    assert _select(ws, q)[1] == []


@pytest.mark.parametrize(
    "text",
    [
        "INSERT DATA { <http://e/a> <http://e/b> <http://e/c> }",
        "drop all",
        "PREFIX ex: <http://e/> DELETE WHERE { ?s ex:p ?o }",
        "LOAD <http://127.0.0.1:9/x.nt>",
        "CLEAR DEFAULT",
        "# a comment first\nCREATE GRAPH <http://e/g>",
        "WITH <http://e/g> DELETE { ?s ?p ?o } WHERE { ?s ?p ?o }",
    ],
)
def test_updates_are_refused_and_change_nothing(ws, text):
    with open_store(ws.store_path) as store:
        before = len(store)
    with connect(ws) as b, pytest.raises(QueryError, match="allow_update=True"):
        run_query(b, text)
    with open_store(ws.store_path) as store:
        assert len(store) == before


def test_update_hidden_after_a_query_is_a_syntax_error(ws):
    with connect(ws) as b, pytest.raises(QueryError, match="syntax error"):
        run_query(b, "SELECT * WHERE { ?s ?p ?o } ; DROP ALL")


def test_allowed_update_runs_on_a_writable_store(tmp_path):
    ws = make_explore_workspace(tmp_path / "ws")
    g = f"GRAPH <{_content(ws, 'other')}>"
    with connect(ws, write=True) as b:
        res = run_query(
            b, f"INSERT DATA {{ {g} {{ t:x skos:prefLabel 'x'@en }} }}", allow_update=True
        )
        assert res.kind == "update"
    assert len(_select(ws, "SELECT ?s WHERE { ?s skos:prefLabel 'x'@en }")[1]) == 1
    with connect(ws) as b, pytest.raises(QueryError, match="read-only"):
        run_query(b, "DROP ALL", allow_update=True)


def _content(ws, name):
    with connect(ws) as b:
        return next(k for k, v in b.graph_names.items() if v == name)


def test_guards_read_tokens_not_text():
    assert query_form("  # DROP ALL\nSELECT * WHERE { ?s ?p 'DELETE' }") == "SELECT"
    assert query_form("PREFIX drop: <http://e/> ASK { drop:x ?p ?o }") == "ASK"
    assert query_form("BASE <http://e/> PREFIX : <http://e/> CONSTRUCT WHERE { ?s ?p ?o }") == (
        "CONSTRUCT"
    )
    assert not has_service("SELECT ?service WHERE { ?service <http://e/SERVICE> 'service' }")
    assert not has_service('SELECT * WHERE { ?s ?p """SERVICE <http://x> { }""" } # SERVICE')
    assert not has_service("PREFIX service: <http://e/> SELECT * WHERE { service:a ?p ?o }")
    assert not has_service("SELECT * WHERE { ?s ?p 'x'@service }")
    assert has_service("SELECT * WHERE { SeRvIcE <http://x/> { ?s ?p ?o } }")
    assert has_service("SELECT * WHERE { SERVICE SILENT ?ep { ?s ?p ?o } }")


class _Listener:
    """A TCP listener on loopback that records whether anyone connected."""

    def __init__(self):
        self.sock = socket.socket()
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(5)
        self.sock.settimeout(0.2)
        self.port = self.sock.getsockname()[1]
        self.hits = 0
        self.stop = False
        self.thread = threading.Thread(target=self._run, daemon=True)
        self.thread.start()

    def _run(self):
        while not self.stop:
            try:
                conn, _ = self.sock.accept()
            except TimeoutError:
                continue
            self.hits += 1
            conn.close()

    def close(self):
        self.stop = True
        self.thread.join()
        self.sock.close()


def test_refused_service_query_sends_nothing(ws):
    listener = _Listener()
    try:
        q = f"SELECT * WHERE {{ SERVICE <http://127.0.0.1:{listener.port}/sparql> {{ ?s ?p ?o }} }}"
        with connect(ws) as b, pytest.raises(QueryError, match="allow_service=True"):
            run_query(b, q)
        # the listener does receive a request when SERVICE is allowed: the check is real
        with connect(ws) as b, pytest.raises(KgkitError):
            res = run_query(b, q, allow_service=True)
            list(res.rows)
    finally:
        listener.close()
    assert listener.hits >= 1
    listener2 = _Listener()
    try:
        with connect(ws) as b, pytest.raises(QueryError):
            run_query(b, q.replace(str(listener.port), str(listener2.port)))
    finally:
        listener2.close()
    assert listener2.hits == 0


def test_syntax_error_has_line_column_and_caret(ws):
    q = "SELECT ?s\nWHERE {\n  ?s <bad iri> ?o }"
    with connect(ws) as b, pytest.raises(QueryError) as err:
        run_query(b, q)
    first, shown, caret = str(err.value), *err.value.details
    assert first.startswith("query:3:")
    assert "SPARQL syntax error" in first
    col = int(first.split(":")[2])
    assert shown == "    ?s <bad iri> ?o }"
    assert caret == "  " + " " * (col - 1) + "^"


def _out(ws, text, fmt, width=None, **kw):
    with connect(ws) as b:
        buf = io.StringIO(newline="")
        write_result(run_query(b, text, **kw), buf, fmt, ws, width=width)
        return buf.getvalue()


Q_ODD = (
    "SELECT ?s ?alias ?none WHERE { ?s skos:altLabel ?alias "
    "FILTER(CONTAINS(?alias, 'Lakeport')) OPTIONAL { ?s <http://e/none> ?none } }"
)


def test_json_follows_the_w3c_results_format(ws):
    text = _out(ws, Q_ODD, "json")
    data = json.loads(text)
    # W3C SPARQL 1.1 Query Results JSON Format, sections 3.1-3.2.2: head.vars, results.bindings,
    # unbound variables absent from a binding, literals with xml:lang
    assert data == {
        "head": {"vars": ["s", "alias", "none"]},
        "results": {
            "bindings": [
                {
                    "s": {"type": "uri", "value": T + "lakeport-regatta"},
                    "alias": {
                        "type": "literal",
                        "value": 'rowing, Lakeport "summer" race',
                        "xml:lang": "en",
                    },
                }
            ]
        },
    }
    # and pyoxigraph's own parser of that format reads it back to the same terms
    sols = list(ox.parse_query_results(text, ox.QueryResultsFormat.JSON))
    assert sols[0]["alias"] == ox.Literal('rowing, Lakeport "summer" race', language="en")


def test_json_typed_literals_and_blank_nodes(ws):
    q = "SELECT ?n ?b ?str WHERE { BIND(3 AS ?n) BIND(BNODE() AS ?b) BIND('x' AS ?str) }"
    b = json.loads(_out(ws, q, "json"))["results"]["bindings"][0]
    # W3C JSON results 3.2.2: typed literal carries "datatype"; simple literal none; bnode
    assert b["n"] == {
        "type": "literal",
        "value": "3",
        "datatype": "http://www.w3.org/2001/XMLSchema#integer",
    }
    assert b["b"]["type"] == "bnode"
    assert b["str"] == {"type": "literal", "value": "x"}


def test_ask_json_and_text(ws):
    # W3C JSON results section 3.3: {"head": {}, "boolean": true}
    assert json.loads(_out(ws, "ASK { t:rowing ?p ?o }", "json")) == {"head": {}, "boolean": True}
    assert _out(ws, "ASK { t:nothing ?p ?o }", "table") == "false\n"


def test_csv_follows_the_w3c_csv_format(ws):
    text = _out(ws, Q_ODD, "csv")
    # W3C SPARQL 1.1 Query Results CSV and TSV Formats, section 2: header of names without
    # '?', CRLF line ends, RFC 4180 quoting, IRIs and literals as bare values, unbound empty
    assert text == (f's,alias,none\r\n{T}lakeport-regatta,"rowing, Lakeport ""summer"" race",\r\n')
    assert list(csv.reader(io.StringIO(text))) == [
        ["s", "alias", "none"],
        [T + "lakeport-regatta", 'rowing, Lakeport "summer" race', ""],
    ]


def test_tsv_follows_the_w3c_tsv_format(ws):
    q = "SELECT ?s ?l ?none WHERE { ?s rdfs:label ?l OPTIONAL { ?s <http://e/none> ?none } }"
    text = _out(ws, q, "tsv")
    # W3C CSV and TSV Formats, section 3: '?'-prefixed header, terms in SPARQL syntax with
    # tab and newline escaped, LF line ends, unbound empty
    assert text == f'?s\t?l\t?none\n<{T}tidewell-notes>\t"Tidewell notes\\nsecond line"@en\t\n'
    sols = list(ox.parse_query_results(text, ox.QueryResultsFormat.TSV))
    assert sols[0]["l"] == ox.Literal("Tidewell notes\nsecond line", language="en")
    assert sols[0]["none"] is None


def test_table_shows_curies_and_cuts_long_values(ws):
    q = "SELECT ?s ?l WHERE { ?s skos:prefLabel ?l FILTER(?s = t:canoe-polo) } ORDER BY ?l"
    assert _out(ws, q, "table") == (
        "?s            ?l\n"
        "------------  -------------\n"
        "t:canoe-polo  Kanupolo@de\n"
        "t:canoe-polo  canoe polo@en\n"
        "(2 rows)\n"
    )
    narrow = _out(ws, q, "table", width=20)
    assert "…" in narrow
    assert all(len(line) <= 20 for line in narrow.splitlines())


def test_construct_gives_ntriples_or_turtle(ws):
    q = "CONSTRUCT WHERE { t:rowing skos:prefLabel ?l }"
    assert (
        _out(ws, q, "nt")
        == f'<{T}rowing> <http://www.w3.org/2004/02/skos/core#prefLabel> "rowing"@en .\n'
    )
    ttl = _out(ws, q, "ttl")
    assert "@prefix t: <http://example.org/t/> ." in ttl
    assert 't:rowing skos:prefLabel "rowing"@en' in ttl
    with pytest.raises(KgkitError, match="CONSTRUCT"):
        _out(ws, q, "json")


def test_rows_stream(ws):
    with connect(ws) as b:
        res = run_query(b, "SELECT ?s WHERE { ?s ?p ?o }")
        first = next(res.rows)
        assert isinstance(first[0], ox.NamedNode)
        assert not isinstance(res.rows, list)


def test_fast_json_terms_equal_the_plain_encoding():
    from kgkit.query import _json_term, _json_text

    terms = [
        ox.NamedNode("http://example.org/t/é?q=1&r=ü"),
        ox.BlankNode("b1"),
        ox.Literal('a "quoted"\\ line\nand tab\t and \u0001 ünï'),
        ox.Literal("Kanupolo", language="de-CH"),
        ox.Literal("5", datatype=ox.NamedNode("http://www.w3.org/2001/XMLSchema#integer")),
        ox.Literal("x", datatype=ox.NamedNode("http://www.w3.org/2001/XMLSchema#string")),
    ]
    for t in terms:
        assert json.loads(_json_text(t)) == _json_term(t)
        assert _json_text(t) == json.dumps(_json_term(t), ensure_ascii=False)


@pytest.mark.parametrize("fmt", ["table", "json", "csv", "tsv"])
def test_output_streams_rows_before_the_result_ends(fmt):
    from kgkit.query import QueryResult

    class Boom(Exception):
        pass

    def rows():
        for i in range(500):
            yield (ox.NamedNode(f"http://example.org/r/{i}"),)
        raise Boom

    out = io.StringIO()
    with pytest.raises(Boom):
        write_result(QueryResult(kind="select", variables=["r"], rows=rows()), out, fmt, None)
    # everything up to the failure was written already: nothing waits for the end
    assert "http://example.org/r/499" in out.getvalue()


def test_a_result_without_variables(ws):
    assert _out(ws, "SELECT * WHERE { }", "table") == "\n\n\n(1 row)\n"
    assert json.loads(_out(ws, "SELECT * WHERE { }", "json"))["results"]["bindings"] == [{}]


# -- updates keep kgkit's records true (issue 11) and LOAD needs its own permission (15) --


def _registry(ws) -> list[tuple[str, int]]:
    from kgkit.store import list_graphs

    with open_store(ws.store_path) as store:
        return [(g.name, g.statements) for g in list_graphs(store)]


@pytest.mark.parametrize(
    "text, cause",
    [
        ("DROP ALL", "ALL would also remove kgkit's own records"),
        ("CLEAR NAMED", "NAMED would also remove kgkit's own records"),
        ("DELETE WHERE { GRAPH ?g { ?s ?p ?o } }", "names a graph through ?g"),
        (
            "INSERT { GRAPH ?g { t:x t:y t:z } } WHERE { GRAPH ?g { ?s ?p ?o } }",
            "names a graph through ?g",
        ),
        (
            "INSERT DATA { GRAPH <urn:kgkit:provenance> { t:x t:y t:z } }",
            "names <urn:kgkit:provenance>",
        ),
        (
            "PREFIX k: <urn:kgkit:> DELETE WHERE { GRAPH k:provenance { ?s ?p ?o } }",
            "names <urn:kgkit:",
        ),
        # a relative IRI resolved against BASE reaches the provenance graph too
        (
            "BASE <urn:k/> INSERT DATA { GRAPH <../kgkit:provenance> { t:x t:y t:z } }",
            "names <urn:kgkit:provenance>",
        ),
        (
            "INSERT DATA { t:x <http://kgkit.invalid/ns#current> t:z }",
            "names <http://kgkit.invalid/ns#current>",
        ),
        ("DROP GRAPH <{content}>", "DROP on a graph's content"),
        ("CLEAR SILENT GRAPH <{content}>", "CLEAR on a graph's content"),
        ("COPY DEFAULT TO <{content}>", "COPY on a graph's content"),
        ("LOAD <file:///etc/hostname>", "LOAD, which reads a local file or fetches a URL"),
        ("LOAD <http://127.0.0.1:9/x.nt> INTO GRAPH <http://e/g>", "refused (give allow_load"),
    ],
)
def test_update_that_would_put_graphs_out_of_step_with_queries_is_refused(ws, text, cause):
    text = text.replace("{content}", _content(ws, "other"))
    with open_store(ws.store_path) as store:
        before = {str(q) for q in store}
    with connect(ws, write=True) as b, pytest.raises(QueryError) as info:
        run_query(b, text, allow_update=True)
    assert cause in str(info.value)
    with open_store(ws.store_path) as store:
        assert {str(q) for q in store} == before


def test_allowed_update_keeps_the_statement_count_of_graphs_true(tmp_path):
    ws = make_explore_workspace(tmp_path / "ws")
    before = dict(_registry(ws))
    g = f"GRAPH <{_content(ws, 'other')}>"
    with connect(ws, write=True) as b:
        run_query(
            b,
            f"INSERT DATA {{ {g} {{ t:x skos:prefLabel 'x'@en . t:y skos:prefLabel 'y'@en }} }} ;",
            allow_update=True,
        )
        run_query(b, f"DELETE DATA {{ {g} {{ t:y skos:prefLabel 'y'@en }} }}", allow_update=True)
    after = dict(_registry(ws))
    assert after == {**before, "other": before["other"] + 1}
    n = _select(ws, "SELECT (COUNT(*) AS ?n) WHERE { ?s ?p ?o }", graphs=["other"])[1]
    assert int(n[0][0].value) == after["other"]


def test_load_runs_only_when_allowed(tmp_path):
    ws = make_explore_workspace(tmp_path / "ws")
    src = tmp_path / "extra.nt"
    src.write_text("<http://e/a> <http://e/b> <http://e/c> .\n", encoding="utf-8")
    text = f"LOAD SILENT <{src.as_uri()}> INTO GRAPH <http://e/g>"
    with connect(ws, write=True) as b:
        with pytest.raises(QueryError, match="allow_load"):
            run_query(b, text, allow_update=True)
        # allowed, it reaches the store (SILENT: whatever pyoxigraph makes of a file: IRI)
        assert run_query(b, text, allow_update=True, allow_load=True).kind == "update"
