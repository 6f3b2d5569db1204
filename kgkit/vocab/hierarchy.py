"""Repairing the parent links of a vocabulary with networkx.

Nodes are plain strings (topic ids for topics of the vocabulary, anything else for
the graph's other entities). A *parents map* sends a node to its parents in the
knowledge graph. :func:`repair_hierarchy` keeps the links between kept topics only,
reattaches orphaned topics to their nearest kept ancestor, breaks cycles, removes
redundant links and computes depths, reporting each change.

>>> h = repair_hierarchy({"a": ["c"], "b": ["a"], "c": ["b"], "d": ["b", "a"]}, "abcd")
>>> h.cycles
[{'broken_edge': ['c', 'b'], 'members': ['a', 'b', 'c']}]
>>> h.reductions
[['d', 'a']]
>>> h.parents, sorted(h.depth.items())
({'a': ['c'], 'b': ['a'], 'c': [], 'd': ['b']}, [('a', 1), ('b', 2), ('c', 0), ('d', 3)])
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field

import networkx as nx

from kgkit.reachability import reachable

__all__ = [
    "Hierarchy",
    "break_cycles",
    "compute_depths",
    "count_descendants",
    "reduce_redundant",
    "repair_hierarchy",
    "restrict_to",
    "subtree",
]


@dataclass
class Hierarchy:
    """The repaired hierarchy and what was changed to get it."""

    parents: dict[str, list[str]]  # every kept topic -> sorted parents (kept topics only)
    depth: dict[str, int]
    reattached: list[dict] = field(default_factory=list)
    new_roots: list[str] = field(default_factory=list)
    cycles: list[dict] = field(default_factory=list)
    reductions: list[list[str]] = field(default_factory=list)

    def children(self) -> dict[str, list[str]]:
        out: dict[str, list[str]] = {n: [] for n in self.parents}
        for child, ps in self.parents.items():
            for p in ps:
                out[p].append(child)
        return out


def _nearest_kept(
    node: str, graph_parents: Mapping[str, Iterable[str]], kept: set[str]
) -> list[str]:
    """Kept ancestors of ``node`` at the smallest distance, going up through others only."""
    seen = {node}
    frontier = [p for p in graph_parents.get(node, ()) if p not in seen]
    while frontier:
        found = sorted({p for p in frontier if p in kept})
        if found:
            return found
        nxt = []
        for p in frontier:
            if p in seen:
                continue
            seen.add(p)
            nxt.extend(q for q in graph_parents.get(p, ()) if q not in seen)
        frontier = nxt
    return []


def restrict_to(
    graph_parents: Mapping[str, Iterable[str]], kept: set[str]
) -> tuple[dict[str, list[str]], list[dict], list[str]]:
    """Keep parent links between ``kept`` nodes only.

    A kept node that had parents but none of them kept is attached to its nearest
    kept ancestor (all of them at that distance) when the graph has one, else it
    becomes a new root. Returns (parents, reattached, new_roots).

    >>> restrict_to({"c": ["x"], "x": ["a"], "d": ["y"]}, {"a", "c", "d"})
    ({'a': [], 'c': ['a'], 'd': []}, [{'parents': ['a'], 'topic': 'c'}], ['d'])
    """
    parents: dict[str, list[str]] = {}
    reattached, new_roots = [], []
    for node in sorted(kept):
        gp = graph_parents.get(node, ())
        if type(gp) is list and len(gp) == 1 and gp[0] in kept and gp[0] != node:
            parents[node] = [gp[0]]  # the common case: one parent, kept
            continue
        graph_ps = set(gp)
        graph_ps.discard(node) if node in graph_ps and len(graph_ps) > 1 else None
        ps = sorted(p for p in graph_ps if p in kept)
        if not ps and graph_ps:
            ps = _nearest_kept(node, graph_parents, kept)
            if ps:
                reattached.append({"parents": ps, "topic": node})
            else:
                new_roots.append(node)
        parents[node] = ps
    return parents, reattached, new_roots


def break_cycles(parents: dict[str, list[str]]) -> list[dict]:
    """Break every cycle of parent links in place; return one report per broken link.

    Rule (deterministic): take the strongly connected components in order of their
    smallest member; in each, find a cycle starting from its smallest member and
    remove one of that cycle's links (child, parent): among the links whose child
    has another parent (so that no topic is cut loose), else among all of them, the
    greatest in (child, parent) order; repeat until the component has no cycle. A
    topic that is its own parent loses that link first.
    """
    report = []
    for node in sorted(parents):
        if node in parents[node]:
            parents[node] = [p for p in parents[node] if p != node]
            report.append({"broken_edge": [node, node], "members": [node]})
    # peel off every topic whose ancestors are free of cycles (Kahn's algorithm): only
    # what is left can lie on a cycle, and networkx looks at that part alone
    children: dict[str, list[str]] = {}
    pending = {}
    for child, ps in parents.items():
        pending[child] = len(ps)
        for p in ps:
            children.setdefault(p, []).append(child)
    queue = [n for n, k in pending.items() if k == 0]
    while queue:
        n = queue.pop()
        for c in children.get(n, ()):
            pending[c] -= 1
            if pending[c] == 0:
                queue.append(c)
    rest = sorted(n for n, k in pending.items() if k > 0)
    if not rest:
        return report
    g = nx.DiGraph()
    for child in rest:
        for p in parents[child]:
            if pending.get(p, 0) > 0:
                g.add_edge(child, p)
    components = sorted(
        (sorted(c) for c in nx.strongly_connected_components(g) if len(c) > 1),
        key=lambda c: c[0],
    )
    for comp in components:
        sub = nx.DiGraph()
        members = set(comp)
        for child in comp:
            for p in parents[child]:
                if p in members:
                    sub.add_edge(child, p)
        while True:
            try:
                cycle = nx.find_cycle(sub, source=comp[0])
            except nx.NetworkXNoCycle:
                # find_cycle from one source can miss a cycle elsewhere in the component
                rest = [n for n in comp if sub.has_node(n)]
                cycle = None
                for n in rest:
                    try:
                        cycle = nx.find_cycle(sub, source=n)
                        break
                    except nx.NetworkXNoCycle:
                        continue
                if cycle is None:
                    break
            edges = [(u, v) for u, v, *_ in cycle]
            spare = [(u, v) for u, v in edges if len(parents[u]) > 1]
            child, parent = max(spare or edges)
            sub.remove_edge(child, parent)
            parents[child] = [p for p in parents[child] if p != parent]
            members = sorted({u for u, _ in edges})
            report.append({"broken_edge": [child, parent], "members": members})
    return report


def reduce_redundant(parents: dict[str, list[str]]) -> list[list[str]]:
    """Remove parent links implied through another parent (transitive reduction), in place.

    Only topics with several parents can hold such a link. Returns the removed
    links as [child, parent], sorted. The hierarchy must have no cycles.

    >>> ps = {"a": [], "b": ["a"], "c": ["a", "b"]}
    >>> reduce_redundant(ps), ps["c"]
    ([['c', 'a']], ['b'])
    """
    multi = [n for n, ps in parents.items() if len(ps) > 1]
    ancestors: dict[str, set[str]] = {}

    def ancestors_of(q: str) -> set[str]:
        if q not in ancestors:
            seen: set[str] = set()
            stack = list(parents.get(q, ()))
            while stack:
                a = stack.pop()
                if a not in seen:
                    seen.add(a)
                    stack.extend(parents.get(a, ()))
            ancestors[q] = seen
        return ancestors[q]

    removed = []
    for node in sorted(multi):
        ps = parents[node]
        drop = set()
        for q in ps:
            anc = ancestors_of(q)
            drop.update(p for p in ps if p != q and p in anc)
        if drop:
            parents[node] = [p for p in ps if p not in drop]
            removed.extend([node, p] for p in sorted(drop))
    return sorted(removed)


def compute_depths(parents: Mapping[str, list[str]]) -> dict[str, int]:
    """Depth of every node: the shortest distance from a root (a node without parents)."""
    children: dict[str, list[str]] = {}
    for child, ps in parents.items():
        for p in ps:
            children.setdefault(p, []).append(child)
    depth = {n: 0 for n, ps in parents.items() if not ps}
    queue = deque(sorted(depth))
    while queue:
        n = queue.popleft()
        d = depth[n] + 1
        for c in children.get(n, ()):
            if c not in depth:
                depth[c] = d
                queue.append(c)
    return depth


def count_descendants(parents: Mapping[str, list[str]]) -> dict[str, int]:
    """Number of distinct descendants of every node (one upward walk per node)."""
    count = dict.fromkeys(parents, 0)
    for node in parents:
        seen = set()
        stack = list(parents[node])
        while stack:
            p = stack.pop()
            if p in seen:
                continue
            seen.add(p)
            stack.extend(parents.get(p, ()))
        for a in seen:
            count[a] += 1
    return count


def subtree(children: Mapping[str, Iterable[str]], roots: Iterable[str]) -> set[str]:
    """``roots`` and every node below them (:func:`kgkit.reachability.reachable`)."""
    return reachable(children, roots)


def repair_hierarchy(graph_parents: Mapping[str, Iterable[str]], kept: Iterable[str]) -> Hierarchy:
    """Restrict, reattach, break cycles, reduce and compute depths, in that order."""
    kept = set(kept)
    parents, reattached, new_roots = restrict_to(graph_parents, kept)
    cycles = break_cycles(parents)
    reductions = reduce_redundant(parents)
    depth = compute_depths(parents)
    return Hierarchy(parents, depth, reattached, new_roots, cycles, reductions)
