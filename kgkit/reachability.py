"""Reachability in a graph of links: the one home of the walk from roots along edges.

Used by the compile (an excluded topic's subtree, the topics still reached another
way, the selection of descendants through the fetched parent links) and by
``kgkit slice`` (the entities below its roots). Edges are a mapping from a node to
the nodes it leads to; nodes are plain strings. Cycles and shared children are
walked once.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

__all__ = ["invert", "reachable"]


def reachable(edges: Mapping[str, Iterable[str]], roots: Iterable[str]) -> set[str]:
    """``roots`` and every node reached from them along ``edges``.

    >>> sorted(reachable({"a": ["b"], "b": ["c", "a"], "x": ["y"]}, ["a"]))
    ['a', 'b', 'c']
    """
    out: set[str] = set()
    stack = list(roots)
    get = edges.get
    while stack:
        n = stack.pop()
        if n in out:
            continue
        out.add(n)
        nxt = get(n)
        if nxt:
            stack.extend(nxt)
    return out


def invert(edges: Mapping[str, Iterable[str]]) -> dict[str, list[str]]:
    """The edges the other way round (parent links -> child links), targets in order.

    >>> invert({"b": ["a"], "c": ["a", "b"]})
    {'a': ['b', 'c'], 'b': ['c']}
    """
    out: dict[str, list[str]] = {}
    for source, targets in edges.items():
        for t in targets:
            if t in out:
                out[t].append(source)
            else:
                out[t] = [source]
    return out
