"""A remote SPARQL 1.1 endpoint: a real server on loopback answers like the embedded store.

The server is the one the ``oxigraph`` package on PyPI ships (``oxigraph
serve-read-only``), started here on 127.0.0.1 over a copy of the workspace store.
"""

from __future__ import annotations

import socket
import threading

import pytest
from conftest import endpoint_workspace, served_store
from explore_support import make_explore_workspace

from kgkit.entities import find_entities, show_entity, tree_of
from kgkit.errors import KgkitError, QueryError
from kgkit.query import EndpointBackend, connect, run_query
from kgkit.templates import list_templates, run_template


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def pair(tmp_path_factory):
    base = tmp_path_factory.mktemp("ep")
    local = make_explore_workspace(base / "local")
    with served_store(local.store_path, base) as url:
        yield local, endpoint_workspace(local, url, base / "remote")


def _params(name):
    return {
        "descendants": {"root": "t:sport"},
        "ancestors": {"entity": "t:canoe-polo"},
        "children": {"entity": "t:water-sports"},
        "instances": {"class": "t:Topic"},
        "search": {"text": "polo", "match": "substring"},
        "card": {"entity": "t:canoe-polo"},
        "popularity": {"root": "t:sport"},
    }.get(name, {})


def _all(backend, name, graphs=None):
    res = run_template(backend, name, _params(name), graphs=graphs)
    return res.variables, list(res.rows)


def test_endpoint_backend_sees_the_same_graphs(pair):
    local, remote = pair
    with connect(local) as a, connect(remote) as b:
        assert isinstance(b, EndpointBackend)
        assert a.graph_names == b.graph_names


def test_every_template_gives_the_same_results(pair):
    local, remote = pair
    names = [t.name for t in list_templates(local)]
    assert len(names) >= 10
    with connect(local) as a, connect(remote) as b:
        for name in names:
            here, there = _all(a, name), _all(b, name)
            assert here == there, name
            assert here[1], f"{name} gave no rows on the fixture"
        assert _all(a, "descendants", ["topics"]) == _all(b, "descendants", ["topics"])
        assert _all(a, "descendants", ["other"]) == _all(b, "descendants", ["other"])


def test_queries_and_entity_commands_through_the_endpoint(pair):
    local, remote = pair
    q = "SELECT ?g (COUNT(*) AS ?n) WHERE { GRAPH ?g { ?s ?p ?o } } GROUP BY ?g ORDER BY ?g"
    with connect(local) as a, connect(remote) as b:
        assert list(run_query(a, q).rows) == list(run_query(b, q).rows)
        assert run_query(b, "ASK { t:rowing ?p ?o }").boolean is True
        c = "CONSTRUCT WHERE { t:rowing ?p ?o }"
        assert sorted(map(str, run_query(a, c).triples)) == sorted(
            map(str, run_query(b, c).triples)
        )
        assert show_entity(a, "t:canoe-polo") == show_entity(b, "t:canoe-polo")
        assert find_entities(a, "polo") == find_entities(b, "polo")
        assert tree_of(a, "sport", 3) == tree_of(b, "sport", 3)


def test_endpoint_errors_are_one_line(pair):
    local, remote = pair
    with connect(remote) as b:
        with pytest.raises(QueryError, match="syntax error"):
            run_query(b, "SELECT * WHERE { ?s ?p }")
        with pytest.raises(QueryError, match="no updates to a remote endpoint"):
            run_query(b, "DROP ALL", allow_update=True)
        with pytest.raises(QueryError, match="allow_update=True"):
            run_query(b, "DROP ALL")
    bad = endpoint_workspace(
        local, remote.config.endpoint.replace("/query", "/nowhere"), remote.root.parent / "bad"
    )
    with pytest.raises(QueryError) as err, connect(bad):
        pass
    assert "HTTP 404" in str(err.value) and "\n" not in str(err.value)


def test_endpoint_refused_and_silent(tmp_path):
    ws = make_explore_workspace(tmp_path / "ws")
    port = _free_port()
    closed = endpoint_workspace(ws, f"http://127.0.0.1:{port}/query", tmp_path / "closed")
    with pytest.raises(KgkitError, match="cannot reach the endpoint"), connect(closed):
        pass
    # a listener that accepts and never answers: a time-out, reported in one line
    sock = socket.socket()
    sock.bind(("127.0.0.1", 0))
    sock.listen(5)
    held = []
    stop = threading.Event()

    def accept():
        sock.settimeout(0.1)
        while not stop.is_set():
            try:
                held.append(sock.accept()[0])
            except TimeoutError:
                continue

    t = threading.Thread(target=accept, daemon=True)
    t.start()
    try:
        silent = endpoint_workspace(
            ws, f"http://127.0.0.1:{sock.getsockname()[1]}/query", tmp_path / "silent"
        )
        with (
            pytest.raises(QueryError, match=r"no answer within 0.5 s"),
            connect(silent, timeout=0.5),
        ):
            pass
    finally:
        stop.set()
        t.join()
        for c in held:
            c.close()
        sock.close()
