"""kgkit.store: replacing, dropping and reclaiming graphs; imports all or nothing."""

from __future__ import annotations

from pathlib import Path

import pyoxigraph as ox
import pytest

import kgkit.ingest.loader as loader
from kgkit.errors import NotFoundError, ParseError
from kgkit.ingest import ImportOptions, import_files
from kgkit.query import connect, run_query
from kgkit.store import (
    PROVENANCE_GRAPH,
    current_graphs,
    drop_graph,
    list_graphs,
    open_store,
    reclaim,
    reclaimable_graphs,
)

DATA = Path(__file__).resolve().parent / "data"
SKOS = "http://www.w3.org/2004/02/skos/core#"
E = "http://example.org/e/"


def _dump(path: Path, n: int, word: str = "topic", blank: bool = False) -> Path:
    lines = [f'<{E}{i}> <{SKOS}prefLabel> "{word} {i}"@en .\n' for i in range(n)]
    if blank:  # blank nodes cannot be removed with DELETE DATA: reclaim must manage them
        lines += [f'_:b{i} <{SKOS}prefLabel> "blank {i}"@en .\n' for i in range(n)]
    path.write_text("".join(lines), encoding="utf-8")
    return path


def _snapshot(ws) -> set[str]:
    with open_store(ws.store_path) as store:
        return {str(q) for q in store}


def _graph_quads(store: ox.Store, iri: str) -> set[str]:
    return {str(q) for q in store.quads_for_pattern(None, None, None, ox.NamedNode(iri))}


def _labels(ws) -> set[str]:
    with connect(ws) as b:
        res = run_query(b, f"SELECT ?l WHERE {{ ?s <{SKOS}prefLabel> ?l }}")
        return {row[0].value for row in res.rows}


def test_refresh_of_a_large_graph_leaves_the_old_content_to_reclaim(
    workspace, tmp_path, monkeypatch
):
    # the failure: replacing a graph removed its old content quad by quad on the import
    # path (5.6x the time of a first import); now only small old content goes at once
    monkeypatch.setattr(loader, "AUTO_RECLAIM", 5)
    (first,) = import_files(workspace, [str(_dump(tmp_path / "g.nt", 40))], ImportOptions())
    (second,) = import_files(workspace, [str(_dump(tmp_path / "g.nt", 30, "new"))], ImportOptions())
    assert second.replaced and second.reclaimable
    assert _labels(workspace) == {f"new {i}" for i in range(30)}  # readers: new content only
    with open_store(workspace.store_path) as store:
        assert reclaimable_graphs(store) == [first.content]
        (info,) = list_graphs(store)
        assert (info.name, info.statements) == ("g", 30)
    with open_store(workspace.store_path, write=True) as store:
        done = reclaim(store)
        # more than AUTO_RECLAIM: the import did not touch the old content at all
        assert (done.graphs, done.statements, done.remaining) == ([first.content], 40, [])
        assert reclaimable_graphs(store) == []
        assert {g.value for g in store.named_graphs()} == {second.content, PROVENANCE_GRAPH.value}


def test_small_old_content_goes_at_once(workspace, tmp_path):
    import_files(workspace, [str(_dump(tmp_path / "g.nt", 10))], ImportOptions())
    (s,) = import_files(workspace, [str(_dump(tmp_path / "g.nt", 5, "new"))], ImportOptions())
    assert s.replaced and not s.reclaimable
    with open_store(workspace.store_path) as store:
        assert reclaimable_graphs(store) == []


def test_reclaim_stops_at_its_limit_and_goes_on_later(workspace, tmp_path, monkeypatch):
    monkeypatch.setattr(loader, "AUTO_RECLAIM", 0)
    path = _dump(tmp_path / "g.nt", 20, blank=True)
    (old,) = import_files(workspace, [str(path)], ImportOptions())
    import_files(workspace, [str(path)], ImportOptions())
    live = current_graphs_of(workspace)
    with open_store(workspace.store_path, write=True) as store:
        first = reclaim(store, limit=15, chunk=4)
        assert (first.statements, first.graphs, first.remaining) == (15, [], [old.content])
        rest = reclaim(store, chunk=4)
        assert (rest.statements, rest.graphs, rest.remaining) == (25, [old.content], [])
        assert not store.contains_named_graph(ox.NamedNode(old.content))
    assert current_graphs_of(workspace) == live  # the current graph was not touched


def current_graphs_of(ws) -> dict[str, set[str]]:
    with open_store(ws.store_path) as store:
        return {n: _graph_quads(store, iri) for n, iri in current_graphs(store).items()}


def test_dropped_graph_is_gone_from_the_registry_and_from_queries(workspace, tmp_path):
    (a,) = import_files(workspace, [str(_dump(tmp_path / "a.nt", 3, "alpha"))], ImportOptions())
    import_files(workspace, [str(_dump(tmp_path / "a.nt", 4, "alpha"))], ImportOptions())
    import_files(workspace, [str(_dump(tmp_path / "b.nt", 2, "beta"))], ImportOptions())
    before_b = current_graphs_of(workspace)["b"]
    with open_store(workspace.store_path, write=True) as store:
        info = drop_graph(store, "a")
        assert (info.name, info.statements) == ("a", 4)
        assert [g.name for g in list_graphs(store)] == ["b"]
        # no provenance of any import of `a` is left, the earlier one included
        prov = {str(q) for q in store.quads_for_pattern(None, None, None, PROVENANCE_GRAPH)}
        assert not any('"a"' in q or "urn:kgkit:graph:a" in q for q in prov)
        assert not any(f"<urn:kgkit:import:{a.content.rsplit(':', 1)[1]}>" in q for q in prov)
    assert current_graphs_of(workspace) == {"b": before_b}
    assert _labels(workspace) == {"beta 0", "beta 1"}
    with connect(workspace) as b, pytest.raises(Exception, match="no graph named 'a'"):
        run_query(b, "ASK { ?s ?p ?o }", graphs=["a"])


def test_dropping_an_unknown_graph_names_the_graphs_there_are(workspace, tmp_path):
    import_files(workspace, [str(_dump(tmp_path / "b.nt", 2))], ImportOptions())
    with (
        open_store(workspace.store_path, write=True) as store,
        pytest.raises(NotFoundError, match=r"no graph named 'a' in the store \(graphs: b\)"),
    ):
        drop_graph(store, "a")


def test_import_of_several_files_with_a_bad_one_leaves_the_first_graph_as_it_was(
    workspace, tmp_path
):
    # issue 15, item 4: `kgkit import a.nt bad.nt` created or replaced graph `a`, then failed
    case = DATA / "import-several-files-one-bad"
    old = _dump(tmp_path / "a.nt", 3, "old")
    import_files(workspace, [str(old)], ImportOptions())
    before = _snapshot(workspace)
    with pytest.raises(ParseError, match=r"bad\.nt:2:"):
        import_files(workspace, [str(case / "a.nt"), str(case / "bad.nt")], ImportOptions())
    assert _snapshot(workspace) == before
    assert _labels(workspace) == {"old 0", "old 1", "old 2"}


def test_several_files_switch_together(workspace, tmp_path):
    a = _dump(tmp_path / "a.nt", 2, "alpha")
    b = _dump(tmp_path / "b.nt", 2, "beta")
    out = import_files(workspace, [str(a), str(b)], ImportOptions())
    assert [s.graph for s in out] == ["a", "b"]
    with open_store(workspace.store_path) as store:
        ids = sorted(g.import_id for g in list_graphs(store))
    assert len(set(ids)) == 2  # one import record each
