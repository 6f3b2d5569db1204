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
from dataclasses import dataclass

from kgkit.vocab.model import Topic, TopicRecord, Vocabulary

__all__ = [
    "Succession",
    "add_deprecated",
    "cached_links",
    "carried_results",
    "carry_names",
    "carrying_resolver",
    "deprecate_gone",
    "early_replacements",
    "find_replacements",
    "follow_replacement",
    "lost_names",
    "plan_succession",
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
    replacements: Mapping[str, tuple[str | None, str | None]] | None = None,
) -> tuple[dict[str, TopicRecord], list[dict]]:
    """The records with the previous release's missing topics added as deprecated.

    Returns (every record by id, sorted; the newly deprecated topics as
    ``{"id", "replaced_by", "via"}``). Topics deprecated in the previous release are
    carried over as they were, their replacement followed to an active topic.
    ``replacements``: those already found (see :func:`find_replacements`).

    >>> prev = [TopicRecord.make("soccer", source="http://g/soccer")]
    >>> now = {"football": TopicRecord.make("football", source="http://g/football",
    ...                                     same_as=["http://g/soccer"])}
    >>> recs, dep = deprecate_gone(prev, now)
    >>> recs["soccer"].is_active, recs["soccer"].replaced_by, dep
    (False, 'football', [{'id': 'soccer', 'replaced_by': 'football', 'via': 'same-as'}])
    """
    gone = {t.id: t for t in previous if t.id not in records}
    fresh_gone = {i: t for i, t in gone.items() if t.is_active}
    if replacements is not None:
        reps = dict(replacements)
    else:
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


# --- the succession stage of the compile ------------------------------------------


def _light(topics: Mapping[str, Topic], tids: Iterable[str]) -> dict[str, TopicRecord]:
    """What :func:`find_replacements` reads of the compile's working topics."""
    return {
        tid: TopicRecord.make(tid, source=topics[tid].source, same_as=sorted(topics[tid].same_as))
        for tid in tids
    }


def cached_links(graph_links: GraphLinks | None) -> GraphLinks | None:
    """``graph_links`` asked at most once per source IRI."""
    if graph_links is None:
        return None
    seen: dict[str, set[str]] = {}

    def links(sources: list[str]) -> Mapping[str, set[str]]:
        todo = [s for s in sources if s not in seen]
        if todo:
            found = graph_links(todo)
            for s in todo:
                seen[s] = set(found.get(s, ()))
        return {s: seen[s] for s in sources}

    return links


def early_replacements(
    previous: Vocabulary, topics: Mapping[str, Topic], graph_links: GraphLinks | None = None
) -> dict[str, str]:
    """Previous-release topic id -> the selected topic that replaces it, for the topics
    of the previous release that the selection no longer has (before the curation, so
    that curation edits aimed at them can be carried to the replacement). A topic
    deprecated in the previous release already is followed through its replacements.

    >>> prev = Vocabulary(None, (TopicRecord.make("soccer", source="http://g/s"),
    ...                          TopicRecord.make("footy").deprecate("soccer")))
    >>> now = {"football": Topic("football", "http://g/f", same_as={"http://g/s"})}
    >>> early_replacements(prev, now)
    {'soccer': 'football', 'footy': 'football'}
    """
    gone = {t.id: t for t in previous.topics if t.is_active and t.id not in topics}
    found = find_replacements(gone, _light(topics, topics), graph_links) if gone else {}
    reps = {tid: rep for tid, (rep, _via) in found.items() if rep is not None}
    for t in previous.topics:
        if t.is_active or t.id in topics or not t.replaced_by:
            continue
        r, seen = t.replaced_by, {t.id}
        while r is not None and r not in topics and r not in seen:
            seen.add(r)
            if r in reps:
                r = reps[r]
            elif r in previous and not previous.topic(r).is_active:
                r = previous.topic(r).replaced_by
            else:
                r = None
        if r in topics:
            reps[t.id] = r
    return reps


def carrying_resolver(
    resolve: Callable[[str], str | None],
    topics: Mapping[str, Topic],
    previous: Vocabulary,
    early: Callable[[], Mapping[str, str]],
    carried: dict[str, tuple[str, str]],
) -> Callable[[str], str | None]:
    """``resolve`` (a curation reference -> topic id), but a reference to a topic of
    the previous release that the compile no longer has and that has a replacement
    resolves to the replacement; each one carried is noted in ``carried``
    (reference -> (old id, new id)). ``early`` gives the replacements (see
    :func:`early_replacements`); it is called only when a reference needs it."""
    by_ref: dict[str, str] = {}
    for t in previous.topics:
        if t.id not in topics:
            for ref in (t.id, t.iri, t.curie, t.source, f"<{t.source}>" if t.source else None):
                if ref:
                    by_ref.setdefault(ref, t.id)

    def resolve_carrying(ref: str) -> str | None:
        node = resolve(ref)
        old = by_ref.get(ref)
        if old is None or node in topics:
            return node
        new = early().get(old)
        if new is None:
            return node
        carried[ref] = (old, new)
        return new

    return resolve_carrying


@dataclass
class Succession:
    """The previous release seen from the fresh compile.

    ``replacements``: previous-release topic gone from the compile -> (replacement or
    None, how it was found); ``carry``: the names to carry, each ``{"from", "to",
    "language", "name", "kind"}`` (``kind``: what the name was on the old topic).
    """

    replacements: dict[str, tuple[str | None, str | None]]
    carry: list[dict]


#: results of a previous release's carried name that carry it again (see plan_succession)
_CARRIED_AGAIN = ("kept", "already-a-name")


def plan_succession(
    previous: Vocabulary,
    topics: Mapping[str, Topic],
    active: set[str],
    merged_into: Mapping[str, str],
    graph_links: GraphLinks | None = None,
) -> Succession:
    """Stage ``succession``: which topics of the previous release the compile no longer
    has, their replacements among its active topics, and the names each replacement
    inherits: every preferred label and alias the old topic had in the previous
    release (for a topic the curation merged, too), and the names carried in the
    previous release to a topic that is still active, unless the topic they came
    from is active again (restored: it takes its names back). A name the replacement
    had already is carried on too: when the replacement stops having it itself (a
    merge's edit no longer applies once the merged entity leaves the graph), the
    name still follows the deprecated topic.
    """
    gone = {
        t.id: t
        for t in previous.topics
        if t.is_active and t.id not in active and t.id not in merged_into
    }
    reps = find_replacements(gone, _light(topics, active), graph_links) if gone else {}
    target: dict[str, str] = {}
    for tid, (rep, _via) in reps.items():
        if rep is not None:
            target[tid] = rep
    for tid, into in merged_into.items():
        if tid in previous and previous.topic(tid).is_active and into in active:
            target[tid] = into
    carry = []
    for old, new in sorted(target.items()):
        for lang, text, kind in previous.topic(old).names():
            carry.append({"from": old, "to": new, "language": lang, "name": text, "kind": kind})
    seen = {(c["to"], c["language"], c["name"]) for c in carry}
    for c in previous.report.carried_names or ():
        where = (c.get("to"), c.get("language"), c.get("name"))
        if (
            c.get("result") in _CARRIED_AGAIN
            and where[0] in active
            and c.get("from") not in active
            and where not in seen
        ):
            seen.add(where)
            carry.append({f: c[f] for f in ("from", "to", "language", "name", "kind")})
    return Succession(reps, carry)


def carry_names(
    succession: Succession,
    topics: Mapping[str, Topic],
    prefs: Mapping[str, tuple[dict, dict, list]],
    keys: dict[str, str],
) -> dict[tuple[str, str, str], str]:
    """Add the names to carry to their replacements' aliases (kind ``carried``), so
    that the alias rules and the ambiguity policy judge them like any other alias.
    A name the replacement has already (same language and match key) is not added.
    Returns (to, language, name) -> ``already-a-name`` for those."""
    already: dict[tuple[str, str, str], str] = {}
    have: dict[str, set[tuple[str, str]]] = {}
    for c in succession.carry:
        to = c["to"]
        if to not in have:
            t = topics[to]
            names = {(lg, keys[x]) for lg, x in prefs[to][0].items()}
            names |= {(lg, keys[x]) for lg, x, _k in t.aliases}
            names |= {(lg, keys[x]) for lg, x, _r in t.labels}
            have[to] = names
        key = (c["language"], keys[c["name"]])
        if key in have[to]:
            already[(to, c["language"], c["name"])] = "already-a-name"
            continue
        have[to].add(key)
        topics[to].aliases.append((c["language"], c["name"], "carried"))
    return already


def carried_results(
    succession: Succession,
    already: Mapping[tuple[str, str, str], str],
    lexicon: Iterable,
    dropped_aliases: Iterable[dict],
    keys: dict[str, str],
) -> list[dict]:
    """Each carried name with its ``result``: ``kept`` (the replacement has it in the
    lexicon now), ``already-a-name``, or the reason an alias rule or the ambiguity
    policy dropped it; sorted by old topic, language and name."""
    in_lexicon = {(row.topic, row.match_key) for row in lexicon}
    why = {}
    for d in dropped_aliases:
        why.setdefault((d["topic"], d["language"], keys[d["alias"]]), d["reason"])
    out = []
    for c in succession.carry:
        k = (c["to"], c["language"], c["name"])
        key = keys[c["name"]]
        if (c["to"], key) in in_lexicon:
            result = already.get(k, "kept")
        else:
            result = why.get((c["to"], c["language"], key)) or already.get(k) or "not-listed"
        out.append({**c, "result": result})
    out.sort(key=lambda c: (c["from"], c["language"], c["name"], c["to"]))
    return out


def add_deprecated(
    previous: Vocabulary,
    records: Mapping[str, TopicRecord],
    replacements: Mapping[str, tuple[str | None, str | None]],
) -> tuple[dict[str, TopicRecord], list[dict]]:
    """The records with the previous release's topics the compile no longer has added
    as deprecated (see :func:`deprecate_gone`), from replacements already found."""
    return deprecate_gone(previous.topics, records, replacements=replacements)


def lost_names(
    previous: Vocabulary,
    records: Mapping[str, TopicRecord],
    lexicon: Iterable,
    dropped_aliases: Iterable[dict],
    carried: Iterable[dict],
) -> list[dict]:
    """The names of the previous release's lexicon that no longer match their topic
    (or, for a deprecated topic, its replacement): each ``{"topic", "label", "name",
    "language", "match_key", "kind", "replaced_by", "reason", "still_matches"}``.

    ``reason``: ``deprecated-without-replacement``, a carried name's drop reason, an
    alias rule's or the ambiguity policy's reason, ``left-the-lexicon`` (the topic
    keeps the name but the lexicon leaves it out), or ``no-longer-given`` (neither
    the graph nor the curation gives the topic this name now). ``still_matches``: the
    topics the match key leads to now (empty: annotators lose the word).
    """
    lexicon = list(lexicon)
    topics_of: dict[str, set[str]] = {}
    for row in lexicon:
        topics_of.setdefault(row.match_key, set()).add(row.topic)
    why = {}
    for d in dropped_aliases:
        why.setdefault((d["topic"], d["language"], d["alias"]), d["reason"])
    carried_why = {(c["from"], c["language"], c["name"]): c["result"] for c in carried}
    out = []
    for row in previous.lexicon:
        t = records.get(row.topic)
        target = row.topic
        if t is not None and not t.is_active:
            target = follow_replacement(t.replaced_by, records) if t.replaced_by else None
            if target is not None and not records[target].is_active:
                target = None
        now = topics_of.get(row.match_key, set())
        if target is not None and target in now:
            continue
        if target is None:
            reason = "deprecated-without-replacement" if t is not None else "no-longer-given"
        elif target != row.topic:
            reason = carried_why.get((row.topic, row.language, row.alias)) or "not-carried"
        else:
            reason = why.get((row.topic, row.language, row.alias))
            if reason is None:
                mine = records.get(row.topic)
                names = {x for _lg, x, _k in mine.names()} if mine is not None else set()
                reason = "left-the-lexicon" if row.alias in names else "no-longer-given"
        old = previous.by_id.get(row.topic)
        out.append(
            {
                "topic": row.topic,
                "label": old.label(previous.languages) if old is not None else None,
                "name": row.alias,
                "language": row.language,
                "match_key": row.match_key,
                "kind": row.kind,
                "replaced_by": target if target != row.topic else None,
                "reason": reason,
                "still_matches": sorted(now),
            }
        )
    out.sort(key=lambda d: (d["topic"], d["language"], d["name"], d["kind"]))
    return out
