"""Topics of the previous release that a compile no longer has: deprecation and replacement.

A topic of the previous release that the fresh compile no longer has stays in the
vocabulary as ``status: deprecated`` (no parents, no aliases, no lexicon rows). Its
``replaced_by`` is found, in this order: the same source entity under a new id (a
clash suffix came or went); an active topic whose source the old topic's recorded
``same_as`` links name, or whose own ``same_as`` names the old source; then the graph
itself: entities linked to the old source by the profile's ``same_as`` predicates,
in either direction and over several steps, that are sources of active topics.
Several candidates: the lowest id. A topic already deprecated in the previous
release is carried over, its replacement followed to an active topic when that one
was deprecated in turn. (Topics the curation merges are deprecated by the compile
itself, with the merge target as replacement.)
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping

from kgkit.vocab.model import TopicRecord

__all__ = [
    "deprecate_gone",
    "find_replacements",
    "follow_replacement",
    "same_as_links",
]

#: source IRIs -> {source: IRIs linked to it by same-as predicates, any direction, any steps}
GraphLinks = Callable[[list[str]], Mapping[str, set[str]]]


def find_replacements(
    gone: Mapping[str, TopicRecord],
    new: Mapping[str, TopicRecord],
    graph_links: GraphLinks | None = None,
) -> dict[str, tuple[str | None, str | None]]:
    """Topic id -> (replacement id or None, how it was found: ``same-source``,
    ``same-as``, ``graph-link`` or None) for the topics ``gone`` from the compile,
    among the active topics of ``new``.

    >>> old = {"soccer": TopicRecord.make("soccer", source="http://g/soccer")}
    >>> new = {"football": TopicRecord.make("football", source="http://g/football",
    ...                                     same_as=["http://g/soccer"])}
    >>> find_replacements(old, new)
    {'soccer': ('football', 'same-as')}
    """
    by_source = {t.source: i for i, t in new.items() if t.source and t.is_active}
    linked_back: dict[str, set[str]] = {}
    for i, t in new.items():
        if t.is_active:
            for s in t.same_as:
                linked_back.setdefault(s, set()).add(i)
    needs_graph = []
    out: dict[str, tuple[str | None, str | None]] = {}
    for tid, t in sorted(gone.items()):
        if t.source in by_source:  # the same entity under a new id
            out[tid] = (by_source[t.source], "same-source")
            continue
        cands = {by_source[s] for s in t.same_as if s in by_source}
        cands |= linked_back.get(t.source or "", set())
        if cands:
            out[tid] = (min(cands), "same-as")
        elif t.source:
            needs_graph.append(tid)
        else:
            out[tid] = (None, None)
    if needs_graph and graph_links is not None:
        links = graph_links(sorted({gone[t].source for t in needs_graph}))
        for tid in needs_graph:
            cands = {by_source[o] for o in links.get(gone[tid].source, ()) if o in by_source}
            out[tid] = (min(cands), "graph-link") if cands else (None, None)
    for tid in needs_graph:
        out.setdefault(tid, (None, None))
    return out


def follow_replacement(rep: str | None, records: Mapping[str, TopicRecord]) -> str | None:
    """Follow replacements of deprecated topics to an active one; keep ``rep`` if the
    chain ends nowhere active (a deprecated successor is still the truth).

    >>> recs = {"a": TopicRecord.make("a").deprecate("b"),
    ...         "b": TopicRecord.make("b").deprecate("c"), "c": TopicRecord.make("c")}
    >>> follow_replacement("a", recs), follow_replacement("x", recs)
    ('c', 'x')
    """
    start, seen = rep, set()
    while rep and rep in records and not records[rep].is_active and rep not in seen:
        seen.add(rep)
        rep = records[rep].replaced_by
    return rep if rep in records and records[rep].is_active else start


def same_as_links(
    backend, predicates: Iterable[str], sources: list[str], graphs=None
) -> dict[str, set[str]]:
    """Source IRI -> IRIs linked to it by the ``predicates`` (the profile's same-as
    predicates), in either direction and over several steps, in the store or endpoint
    ``backend`` (see :func:`kgkit.query.connect`)."""
    preds = list(predicates)
    if not preds or not sources:
        return {}
    from kgkit.query import run_query

    step = "|".join(f"<{p}>|^<{p}>" for p in preds)
    out: dict[str, set[str]] = {}
    for s in sources:
        # one source per query, inline: the optimiser uses a constant subject
        q = f"SELECT DISTINCT ?o WHERE {{ <{s}> ({step})+ ?o . FILTER(isIRI(?o)) }}"
        res = run_query(backend, q, graphs=list(graphs) if graphs else None)
        out[s] = {row[0].value for row in res.rows if row[0] is not None} - {s}
    return out


def deprecate_gone(
    previous: Iterable[TopicRecord],
    records: Mapping[str, TopicRecord],
    graph_links: GraphLinks | None = None,
) -> tuple[dict[str, TopicRecord], list[dict]]:
    """The records with the previous release's missing topics added as deprecated.

    Returns (every record by id, sorted; the newly deprecated topics as
    ``{"id", "replaced_by", "via"}``). Topics deprecated in the previous release are
    carried over as they were, their replacement followed to an active topic.

    >>> prev = [TopicRecord.make("soccer", source="http://g/soccer")]
    >>> now = {"football": TopicRecord.make("football", source="http://g/football",
    ...                                     same_as=["http://g/soccer"])}
    >>> recs, dep = deprecate_gone(prev, now)
    >>> recs["soccer"].is_active, recs["soccer"].replaced_by, dep
    (False, 'football', [{'id': 'soccer', 'replaced_by': 'football', 'via': 'same-as'}])
    """
    gone = {t.id: t for t in previous if t.id not in records}
    fresh_gone = {i: t for i, t in gone.items() if t.is_active}
    reps = find_replacements(fresh_gone, records, graph_links) if fresh_gone else {}
    out = dict(records)
    deprecated: list[dict] = []
    for tid in sorted(gone):
        t = gone[tid]
        if t.is_active:
            rep, via = reps.get(tid, (None, None))
            out[tid] = t.deprecate(rep)
            deprecated.append({"id": tid, "replaced_by": rep, "via": via})
        else:
            out[tid] = t
    for tid, r in list(out.items()):
        if not r.is_active and r.replaced_by:
            followed = follow_replacement(r.replaced_by, out)
            if followed != r.replaced_by:
                out[tid] = r._replace(replaced_by=followed)
                for d in deprecated:
                    if d["id"] == tid:
                        d["replaced_by"] = followed
    return {i: out[i] for i in sorted(out)}, deprecated
