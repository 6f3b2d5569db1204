"""Selection through the built-in ``descendants`` template as a walk over the fetched
parent links gives exactly what the template's query gives (issue 13 item 4)."""

from __future__ import annotations

import pytest
from explore_support import make_explore_workspace

from kgkit.query import connect
from kgkit.vocab.select import fetch_parent_links, select_topics
from kgkit.vocab.spec import parse_spec


@pytest.fixture(scope="module")
def ws(tmp_path_factory):
    return make_explore_workspace(tmp_path_factory.mktemp("select") / "ws")


def _spec(ws, graphs, **params):
    data = {
        "name": "t",
        "namespace": "http://example.org/vocab/t/",
        "graphs": graphs,
        "select": [{"template": "descendants", "params": params}],
    }
    return parse_spec(data, ws.vocab_dir / "t.yaml", ws)


# topics.nt: canoe-polo has two parents (paddle-sports, ball-games); loop-a and loop-b
# are each other's parent (a cycle) below sport; other.nt adds sailing under water-sports
@pytest.mark.parametrize("graphs", [["topics"], ["topics", "other"]])
@pytest.mark.parametrize(
    "params",
    [
        {"root": "t:sport"},
        {"root": "t:sport", "max_depth": "1"},
        {"root": "t:sport", "max_depth": "2"},
        {"root": "t:sport", "max_depth": "0"},
        {"root": "t:water-sports"},
        {"root": "t:loop-a"},
        {"root": "t:loop-b", "max_depth": "1"},
        {"root": "t:canoe-polo"},
        {"root": "t:nowhere"},
    ],
)
def test_walk_over_fetched_links_equals_the_template(ws, graphs, params):
    spec = _spec(ws, graphs, **params)
    with connect(ws) as backend:
        by_query = select_topics(backend, spec, ws)
        links = fetch_parent_links(backend, ws.profile, spec.graphs)
        by_walk = select_topics(backend, spec, ws, links)
    assert links.walkable
    assert by_walk == by_query


def test_the_walk_is_used_and_sees_cycles_and_several_parents(ws):
    with connect(ws) as backend:
        links = fetch_parent_links(backend, ws.profile, ("topics",))
        spec = _spec(ws, ["topics"], root="t:sport")
        got = select_topics(backend, spec, ws, links)
    t = "http://example.org/t/"
    assert got == sorted(
        t + x
        for x in (
            "ball-games", "canoe-polo", "lakeport-regatta", "loop-a", "loop-b",
            "paddle-sports", "polo", "rowing", "water-polo", "water-sports",
        )
    )  # fmt: skip
    # the walk answers from the links alone: without them it would need the store
    links.parents.pop(t + "loop-a")
    with connect(ws) as backend:
        fewer = select_topics(backend, spec, ws, links)
    assert t + "loop-a" in got and t + "loop-a" not in fewer
