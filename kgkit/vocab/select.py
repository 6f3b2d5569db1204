"""Selecting the topics of a vocabulary and fetching what the compiler needs about them.

Selection runs the spec's template runs (:func:`kgkit.templates.run_template`).
Fetching reads labels, aliases, parents, notations, same-as links and types one
predicate at a time: on the embedded store a ``quads_for_pattern(None, p, None, g)``
scan per content graph joined in Python, elsewhere one plain SPARQL query per
predicate. (A VALUES list of hundreds of IRIs is far slower: see DEVELOPERS.md,
"Measured facts".)
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

import pyoxigraph as ox

from kgkit.errors import KgkitError, SpecError
from kgkit.reachability import invert
from kgkit.vocab.spec import Selection, VocabSpec
from kgkit.workspace import Profile, Workspace

__all__ = [
    "Fetched",
    "ParentLinks",
    "descendants_by_links",
    "fetch_parent_links",
    "fetch_entities",
    "run_popularity",
    "scan_predicate",
    "select_topics",
    "spec_graphs",
]


@dataclass
class Fetched:
    """What the graph says about the selected entities (keys: source IRIs)."""

    labels: dict[str, list[tuple[str, str, int]]] = field(default_factory=dict)
    aliases: dict[str, list[tuple[str, str, str]]] = field(default_factory=dict)
    parents: dict[str, list[str]] = field(default_factory=dict)  # every entity of the graph
    notations: dict[str, set[str]] = field(default_factory=dict)
    same_as: dict[str, set[str]] = field(default_factory=dict)
    graphs: dict[str, frozenset[str]] = field(default_factory=dict)  # shared, never changed
    instances: Counter = field(default_factory=Counter)
    # the graphs read: {"name", "profile": "own" | "workspace", "untagged_language"}
    graphs_read: list[dict] = field(default_factory=list)


def _graph_filter(backend, graphs: tuple[str, ...] | None) -> dict[str, str]:
    """content graph IRI -> graph name, for the graphs the spec names (default all)."""
    names = dict(getattr(backend, "graph_names", {}) or {})
    if graphs is not None:
        missing = [g for g in graphs if g not in names.values()]
        if missing:
            raise SpecError(
                f"no graph named {missing[0]!r} in the store "
                f"(graphs: {', '.join(sorted(names.values())) or 'none yet'})"
            )
        names = {iri: n for iri, n in names.items() if n in graphs}
    return names


def scan_predicate(
    backend, predicate: str, graphs: dict[str, str], blank_subjects: bool = False
) -> Iterator[tuple]:
    """(graph name, subject IRI, object term) for every statement with ``predicate``.

    Subjects that are blank nodes are skipped (a topic needs an IRI); with
    ``blank_subjects`` they come too, as ``None``.
    """
    store = getattr(backend, "store", None)
    pred = ox.NamedNode(predicate)
    if store is not None:
        # one plain query per predicate and graph: measured faster than quads_for_pattern
        # (0.8 s against 1.9 s for 49k labels on the same store)
        for content_iri, name in sorted(graphs.items(), key=lambda kv: kv[1]):
            text = f"SELECT ?s ?o WHERE {{ GRAPH <{content_iri}> {{ ?s {pred} ?o }} }}"
            for row in store.query(text):
                s = row[0]
                if type(s) is ox.NamedNode:
                    yield name, s.value, row[1]
                elif blank_subjects:
                    yield name, None, row[1]
        return
    from kgkit.query import run_query

    res = run_query(backend, f"SELECT ?g ?s ?o WHERE {{ GRAPH ?g {{ ?s {pred} ?o }} }}")
    for g, s, o in res.rows:
        if g is not None and g.value in graphs:
            if isinstance(s, ox.NamedNode):
                yield graphs[g.value], s.value, o
            elif blank_subjects:
                yield graphs[g.value], None, o


@dataclass
class ParentLinks:
    """Every parent link of the graphs a spec reads, fetched once for the selection
    and the compile (see :func:`fetch_parent_links`)."""

    parents: dict[str, list[str]]  # child IRI -> parent IRIs, in the order read
    graphs_of: dict[str, list[str]]  # child IRI -> graph names its parent links are in
    #: a walk over ``parents`` gives what the ``descendants`` template gives: every graph
    #: reads its parent links with the predicates a query over all of them uses, and no
    #: link goes through a blank node (the scan keeps IRIs only)
    walkable: bool


def fetch_parent_links(
    backend,
    profile: Profile,
    graphs: tuple[str, ...] | None = None,
    progress: Callable[[str], None] | None = None,
) -> ParentLinks:
    """Stage ``fetch`` (its first part): every parent link of the graphs read, each graph
    with its own parent predicates (``graphs:`` in ``kgkit.yaml``)."""
    gnames = _graph_filter(backend, graphs)
    read_as = _read_as(backend, profile, gnames)
    ws = getattr(backend, "ws", None)
    over = ws.profile_over(sorted(set(gnames.values())))["parent"] if ws is not None else None
    walkable = all(set(prof["parent"]) == set(over or ()) for prof, _ in read_as.values())
    parents: dict[str, list[str]] = {}
    graphs_of: dict[str, list[str]] = {}
    NamedNode = ox.NamedNode
    for p, _, _, where in _scans("parent", read_as, gnames, ranked=False):
        if progress:
            progress(f"parents <{p}>")
        for gname, s, o in scan_predicate(backend, p, where, blank_subjects=True):
            if s is None or type(o) is ox.BlankNode:
                walkable = False  # a path through a blank node: only the query sees it
                if s is None:
                    continue
            if type(o) is NamedNode:
                lst = parents.get(s)
                if lst is None:
                    parents[s] = [o.value]
                else:
                    lst.append(o.value)
                gl = graphs_of.get(s)
                if gl is None:
                    graphs_of[s] = [gname]
                elif gname not in gl:
                    gl.append(gname)
    return ParentLinks(parents, graphs_of, walkable)


def _plain_descendants(sel: Selection, ws: Workspace) -> tuple[str, int | None] | None:
    """(root IRI, max depth) when ``sel`` is the built-in ``descendants`` template over
    the profile's parent links, whose answer a walk over the fetched links gives."""
    if sel.template != "descendants" or sel.variable not in (None, "item"):
        return None
    if set(sel.params) - {"root", "max_depth", "links"} or "root" not in sel.params:
        return None
    if sel.params.get("links", "@parent") != "@parent":
        return None
    from kgkit.templates import load_template

    try:
        if not load_template(ws, "descendants").builtin:
            return None
        root = ws.expand(sel.params["root"])
        depth = sel.params.get("max_depth")
        limit = int(str(depth)) if depth not in (None, "") else None
    except (KgkitError, ValueError):
        return None  # the template run reports the problem
    if limit is not None and limit < 0:
        return None
    return root, limit


def descendants_by_links(children: dict[str, list[str]], root: str, limit: int | None) -> set[str]:
    """What the ``descendants`` template selects: every node below ``root`` along
    ``children``, at most ``limit`` links down (the root itself never, even on a cycle).

    >>> sorted(descendants_by_links({"r": ["a"], "a": ["b", "r"], "b": ["c"]}, "r", 2))
    ['a', 'b']
    """
    depth = {root: 0}
    frontier = [root]
    d = 0
    while frontier and (limit is None or d < limit):
        d += 1
        nxt = []
        for node in frontier:
            for c in children.get(node, ()):
                if c not in depth:
                    depth[c] = d
                    nxt.append(c)
        frontier = nxt
    del depth[root]
    return set(depth)


def _template_items(backend, sel: Selection, where: str, graphs) -> Iterator[tuple]:
    from kgkit.templates import run_template

    try:
        res = run_template(backend, sel.template, sel.params, graphs=graphs)
    except KgkitError as exc:
        raise SpecError(f"{where}: {exc}") from None
    variables = list(res.variables)
    var = sel.variable or (variables[0] if variables else None)
    if var not in variables:
        raise SpecError(
            f"{where}: template {sel.template!r} has no result variable {var!r} "
            f"(variables: {', '.join(variables)})"
        )
    i = variables.index(var)
    for row in res.rows:
        yield row, i


def spec_graphs(backend, spec: VocabSpec) -> list[str] | None:
    """The graph names a spec reads; ``None`` (every graph) only on a store with one graph.

    A spec without ``graphs:`` on a store holding several graphs is refused: it would
    silently read every graph imported later too (a test graph, another edition), and
    the topics' ``graph`` would change under the same spec.
    """
    if spec.graphs is not None:
        return list(spec.graphs)
    names = sorted(set((getattr(backend, "graph_names", None) or {}).values()))
    if len(names) > 1:
        raise SpecError(
            f"{spec.path}: the store holds {len(names)} graphs ({', '.join(names)}); "
            "name the ones this vocabulary reads under 'graphs:'"
        )
    return None


def select_topics(
    backend, spec: VocabSpec, ws: Workspace, links: ParentLinks | None = None
) -> list[str]:
    """Stage ``select``: source IRIs of the selected topics: template runs, the roots
    asked for, ``include``.

    With ``links`` (the parent links the compile fetches anyway), a run of the built-in
    ``descendants`` template over the profile's parent links is a walk over them
    instead of a query: the same entities, without evaluating the closure in the store.

    Raises :class:`SpecError` for a spec without ``graphs:`` on a store with several
    graphs (:func:`spec_graphs`)."""
    graphs = spec_graphs(backend, spec)
    selected: set[str] = set()
    children = None
    for n, sel in enumerate(spec.select):
        where = f"{spec.path}: select[{n}]"
        plain = _plain_descendants(sel, ws) if links is not None and links.walkable else None
        if plain is not None:
            if children is None:
                children = invert(links.parents)
            selected |= descendants_by_links(children, *plain)
            if sel.include_root:
                selected.add(plain[0])
            continue
        for row, i in _template_items(backend, sel, where, graphs):
            term = row[i]
            if isinstance(term, ox.NamedNode):
                selected.add(term.value)
        if sel.include_root:
            selected.add(ws.expand(sel.params["root"]))
    selected.update(spec.include)
    return sorted(selected)


def run_popularity(backend, spec: VocabSpec) -> dict[str, float]:
    """Source IRI -> popularity, from the spec's ``prune.min_popularity`` template."""
    rule = spec.prune.min_popularity
    if rule is None:
        return {}
    where = f"{spec.path}: prune.min_popularity"
    sel = Selection(rule.template, rule.params)
    graphs = spec_graphs(backend, spec)
    out: dict[str, float] = {}
    value_var = None
    for row, i in _template_items(backend, sel, where, graphs):
        if value_var is None:
            value_var = 1 if i == 0 else 0
        term = row[i]
        if not isinstance(term, ox.NamedNode) or len(row) < 2:
            continue
        val = row[value_var]
        try:
            out[term.value] = max(out.get(term.value, 0.0), float(val.value))
        except (AttributeError, ValueError):
            raise SpecError(f"{where}: {val} is not a number") from None
    return out


def _read_as(backend, profile: Profile, gnames: dict[str, str]):
    """graph name -> (its profile, the language its untagged literals are read as).

    A graph's own roles (``graphs:`` in ``kgkit.yaml``) replace those of ``profile``
    for that graph only; the stored statements are never changed.
    """
    ws = getattr(backend, "ws", None)
    own = ws.config.graphs if ws is not None else {}
    out = {}
    for name in sorted(set(gnames.values())):
        gs = own.get(name)
        out[name] = (
            (profile.with_roles(gs.roles), gs.untagged_language or "") if gs else (profile, "")
        )
    return out


def _scans(role: str, read_as: dict, gnames: dict[str, str], ranked: bool):
    """(predicate, tag, untagged language, {content IRI: name}) for one role.

    Graphs that read the predicate alike share one scan; ``tag`` is the predicate's
    rank in the graph's profile when ``ranked`` (labels), else ``None``.
    """
    groups: dict[tuple, dict[str, str]] = {}
    for iri, name in sorted(gnames.items(), key=lambda kv: kv[1]):
        prof, untagged = read_as[name]
        for rank, p in enumerate(prof[role]):
            groups.setdefault((p, rank if ranked else None, untagged), {})[iri] = name
    # predicates in the order of first appearance, as one profile would list them
    order = {}
    for p, _, _ in groups:
        order.setdefault(p, len(order))
    for key in sorted(groups, key=lambda k: (order[k[0]], k[1] or 0, k[2])):
        yield (*key, groups[key])


def fetch_entities(
    backend,
    sources: list[str],
    profile: Profile,
    graphs: tuple[str, ...] | None = None,
    types: bool = False,
    progress: Callable[[str], None] | None = None,
    links: ParentLinks | None = None,
) -> Fetched:
    """Labels, aliases, hidden labels, notations, same-as links (of ``sources``), every
    parent link of the graph (reattachment walks above the selection), and, with
    ``types``, how many entities have each selected topic as their type.

    Each graph is read with its own settings (``graphs:`` in ``kgkit.yaml``, through
    ``backend.ws``): its roles replace those of ``profile`` for its statements, and
    its untagged labels and aliases arrive in its ``untagged_language``. ``links``:
    the parent links, when :func:`fetch_parent_links` read them already."""
    wanted = set(sources)
    gnames = _graph_filter(backend, graphs)
    read_as = _read_as(backend, profile, gnames)
    f = Fetched()
    f.graphs_read = [
        {
            "name": name,
            "profile": "workspace" if prof is profile else "own",
            "untagged_language": untagged or None,
        }
        for name, (prof, untagged) in read_as.items()
    ]
    # most entities come from one graph: they share one frozenset per combination of graph
    # names instead of a set each (200k small sets cost 1.4 s to make at 200k topics)
    combos: dict[tuple, frozenset[str]] = {}

    def with_graph(old: frozenset[str] | None, gname: str) -> frozenset[str]:
        k = (old, gname)
        c = combos.get(k)
        if c is None:
            c = combos[k] = frozenset((old or frozenset()) | {gname})
        return c

    def note(gname, s):
        old = f.graphs.get(s)
        if old is None or gname not in old:
            f.graphs[s] = with_graph(old, gname)

    def literals(p: str, into: dict, tag, untagged: str, where: dict[str, str]) -> None:
        # the hot loop of the fetch: kept flat on purpose
        graphs_of = f.graphs
        Literal = ox.Literal
        for gname, s, o in scan_predicate(backend, p, where):
            if s in wanted and type(o) is Literal:
                g = graphs_of.get(s)
                if g is None or gname not in g:
                    graphs_of[s] = with_graph(g, gname)
                lang = o.language
                item = (lang.lower() if lang else untagged, o.value, tag)
                lst = into.get(s)
                if lst is None:
                    into[s] = [item]
                else:
                    lst.append(item)

    for p, rank, untagged, where in _scans("label", read_as, gnames, ranked=True):
        if progress:
            progress(f"labels <{p}>")
        literals(p, f.labels, rank, untagged, where)
    for role, kind in (("alias", "alias"), ("hidden_label", "hidden")):
        for p, _, untagged, where in _scans(role, read_as, gnames, ranked=False):
            if progress:
                progress(f"aliases <{p}>")
            literals(p, f.aliases, kind, untagged, where)
    if links is None:
        links = fetch_parent_links(backend, profile, graphs, progress)
    f.parents = links.parents
    for s in sorted(wanted & links.graphs_of.keys()):
        for gname in links.graphs_of[s]:
            note(gname, s)
    for p, _, _, where in _scans("notation", read_as, gnames, ranked=False):
        for gname, s, o in scan_predicate(backend, p, where):
            if s in wanted and type(o) is ox.Literal:
                note(gname, s)
                f.notations.setdefault(s, set()).add(o.value)
    for p, _, _, where in _scans("same_as", read_as, gnames, ranked=False):
        for _gname, s, o in scan_predicate(backend, p, where):
            if s in wanted and type(o) is ox.NamedNode:
                f.same_as.setdefault(s, set()).add(o.value)
    if types:
        for p, _, _, where in _scans("type", read_as, gnames, ranked=False):
            if progress:
                progress(f"instances <{p}>")
            for _gname, _s, o in scan_predicate(backend, p, where):
                if type(o) is ox.NamedNode and o.value in wanted:
                    f.instances[o.value] += 1
    return f
