"""Hierarchy repair: restriction, reattachment, cycles, redundant links, depth."""

from __future__ import annotations

import networkx as nx

from kgkit.vocab.hierarchy import (
    break_cycles,
    compute_depths,
    count_descendants,
    reduce_redundant,
    repair_hierarchy,
    restrict_to,
)


def test_links_to_topics_outside_the_selection_are_dropped():
    parents, reattached, roots = restrict_to({"b": ["a", "z"], "a": []}, {"a", "b"})
    assert parents == {"a": [], "b": ["a"]}
    assert reattached == [] and roots == []


def test_orphan_is_reattached_to_the_nearest_selected_ancestor():
    # c -> x -> y -> a (a at distance 3) and c -> w -> b (b at distance 2): b is nearest
    graph = {"c": ["x", "w"], "x": ["y"], "y": ["a"], "w": ["b"], "b": ["a"]}
    parents, reattached, roots = restrict_to(graph, {"a", "b", "c"})
    assert parents["c"] == ["b"]
    assert reattached == [{"parents": ["b"], "topic": "c"}]


def test_orphan_without_a_selected_ancestor_becomes_a_new_root():
    parents, reattached, roots = restrict_to({"c": ["x"], "x": ["y"]}, {"c"})
    assert parents == {"c": []} and roots == ["c"] and reattached == []


def test_ancestor_walk_survives_a_cycle_outside_the_selection():
    parents, _, roots = restrict_to({"c": ["x"], "x": ["y"], "y": ["x"]}, {"c"})
    assert roots == ["c"]


def test_cycle_is_reported_with_its_members_and_broken_by_the_documented_rule():
    parents = {"a": ["c"], "b": ["a"], "c": ["b"]}
    report = break_cycles(parents)
    # rule: the greatest (child, parent) link of the cycle goes: (c, b)
    assert report == [{"broken_edge": ["c", "b"], "members": ["a", "b", "c"]}]
    assert parents == {"a": ["c"], "b": ["a"], "c": []}
    g = nx.DiGraph([(c, p) for c, ps in parents.items() for p in ps])
    assert nx.is_directed_acyclic_graph(g)


def test_two_cycles_in_one_component_are_both_broken():
    parents = {"a": ["b", "c"], "b": ["a"], "c": ["a"]}
    report = break_cycles(parents)
    assert len(report) == 2
    g = nx.DiGraph([(c, p) for c, ps in parents.items() for p in ps])
    g.add_nodes_from(parents)
    assert nx.is_directed_acyclic_graph(g)


def test_self_parent_is_a_cycle_of_one():
    parents = {"a": ["a"]}
    assert break_cycles(parents) == [{"broken_edge": ["a", "a"], "members": ["a"]}]
    assert parents == {"a": []}


def test_cycle_breaking_is_deterministic_whatever_the_input_order():
    one = {"b": ["a"], "c": ["b"], "a": ["c", "d"], "d": []}
    two = dict(reversed(list({k: list(reversed(v)) for k, v in one.items()}.items())))
    assert break_cycles(one) == break_cycles(two)
    assert {k: sorted(v) for k, v in one.items()} == {k: sorted(v) for k, v in two.items()}


def test_redundant_parent_is_removed_and_counted():
    parents = {"sport": [], "ball": ["sport"], "football": ["ball", "sport"]}
    assert reduce_redundant(parents) == [["football", "sport"]]
    assert parents["football"] == ["ball"]


def test_reduction_agrees_with_networkx_transitive_reduction():
    g = nx.gnp_random_graph(40, 0.12, seed=3, directed=True)
    dag = nx.DiGraph([(u, v) for u, v in g.edges() if u > v])  # child -> parent, acyclic
    parents = {str(n): sorted(str(p) for p in dag.successors(n)) for n in dag}
    reduce_redundant(parents)
    expected = nx.transitive_reduction(dag)
    assert {(c, p) for c, ps in parents.items() for p in ps} == {
        (str(u), str(v)) for u, v in expected.edges()
    }


def test_depth_is_the_shortest_distance_from_a_root_with_several_parents():
    parents = {"r": [], "a": ["r"], "b": ["a"], "c": ["b", "r"]}
    assert compute_depths(parents) == {"r": 0, "a": 1, "b": 2, "c": 1}


def test_descendants_are_counted_once_in_a_diamond():
    parents = {"r": [], "a": ["r"], "b": ["r"], "c": ["a", "b"]}
    assert count_descendants(parents) == {"r": 3, "a": 1, "b": 1, "c": 0}


def test_repair_runs_every_step():
    h = repair_hierarchy({"a": ["c"], "b": ["a"], "c": ["b"], "d": ["b", "a"], "e": ["q"]}, "abcde")
    assert h.cycles == [{"broken_edge": ["c", "b"], "members": ["a", "b", "c"]}]
    assert h.reductions == [["d", "a"]]
    assert h.new_roots == ["e"]
    assert h.depth == {"a": 1, "b": 2, "c": 0, "d": 3, "e": 0}
