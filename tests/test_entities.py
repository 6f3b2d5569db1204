"""kgkit.entities: resolving terms, cards, ranked finds, trees."""

from __future__ import annotations

import pytest
from explore_support import T, make_explore_workspace

from kgkit.entities import (
    AmbiguousTermError,
    find_entities,
    resolve_term,
    show_entity,
    tree_of,
)
from kgkit.errors import KgkitError
from kgkit.query import connect


@pytest.fixture(scope="module")
def backend(tmp_path_factory):
    ws = make_explore_workspace(tmp_path_factory.mktemp("e") / "ws")
    with connect(ws) as b:
        yield b


def test_resolve_curie_iri_and_label(backend):
    assert resolve_term(backend, "t:rowing") == T + "rowing"
    assert resolve_term(backend, f"<{T}rowing>") == T + "rowing"
    assert resolve_term(backend, f"{T}rowing") == T + "rowing"
    assert resolve_term(backend, "rowing") == T + "rowing"
    assert resolve_term(backend, "Wassersport") == T + "water-sports"  # a German label
    with pytest.raises(AmbiguousTermError) as err:
        resolve_term(backend, "polo")
    assert [c.curie for c in err.value.candidates] == ["t:polo", "t:water-polo"]
    assert [c.parents for c in err.value.candidates] == [
        [("t:ball-games", "ball games")],
        [("t:water-sports", "water sports")],
    ]


def test_show_unknown_iri_is_an_error(backend):
    with pytest.raises(KgkitError, match="t:nothing: no statement in the graphs mentions it"):
        show_entity(backend, "t:nothing")
    card = show_entity(backend, "t:Event")  # only ever an object: still shown
    assert card.children == 0 and card.labels == {}


def test_find_ranks_exact_then_prefix_then_word_then_substring(backend):
    hows = [(m.curie, m.how, m.kind) for m in find_entities(backend, "polo")]
    assert hows == [
        ("t:polo", "exact", "label"),
        ("t:water-polo", "exact", "label"),
        ("t:canoe-polo", "word", "label"),
    ]
    matches = find_entities(backend, "ater")
    assert [(m.curie, m.how) for m in matches] == [
        ("t:water-sports", "substring"),
        ("t:water-polo", "substring"),
    ]
    assert find_entities(backend, "polo", limit=1)[0].curie == "t:polo"
    assert [m.curie for m in find_entities(backend, "kanu", language="de")] == ["t:canoe-polo"]
    with pytest.raises(KgkitError, match="give some text"):
        find_entities(backend, "  ")


def test_tree_marks(backend):
    lines = tree_of(backend, "t:sport", depth=9)
    by = [(ln.depth, ln.curie, ln.mark) for ln in lines]
    assert (3, "t:loop-b", "cycle") in by
    assert (3, "t:canoe-polo", "repeat") in by
    assert sum(1 for d, c, m in by if c == "t:canoe-polo" and m is None) == 1
    top = lines[0]
    assert (top.curie, top.below, top.label) == ("t:sport", 11, "sport")
    assert tree_of(backend, "t:sport", depth=0)[0].below == 11
    assert len(tree_of(backend, "t:sport", depth=0)) == 1
    with pytest.raises(KgkitError, match="depth: must be 0 or more"):
        tree_of(backend, "t:sport", depth=-1)


def test_graph_restriction(backend):
    both = [ln.curie for ln in tree_of(backend, "t:water-sports", depth=1)]
    only = [ln.curie for ln in tree_of(backend, "t:water-sports", depth=1, graphs=["topics"])]
    assert "t:sailing" in both  # graph 'other' links sailing under water sports
    assert only == [c for c in both if c != "t:sailing"]
    assert only[0] == "t:water-sports" and "t:rowing" in only
