"""The vocabulary as one typed value, and stable topic ids.

A compiled vocabulary is a :class:`Vocabulary`: its :class:`Scheme`, its topic
records (:class:`TopicRecord`, one per line of ``topics.jsonl``), its lexicon rows
(:class:`LexiconRow`, one per line of ``lexicon.tsv``), the compile
:class:`Report` (``report.json``) and the language tags of lent labels. The
records are immutable; their ``labels`` and ``aliases`` mappings are shared, not
copied, and must not be changed. :mod:`kgkit.vocab.folder` reads and writes a
vocabulary folder (a build or a release).

:class:`Topic` is the mutable working record of the compile stages, before a
topic becomes a :class:`TopicRecord`.
"""

from __future__ import annotations

import hashlib
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import NamedTuple

__all__ = [
    "ACTIVE",
    "DEPRECATED",
    "LexiconRow",
    "Report",
    "Scheme",
    "Topic",
    "TopicRecord",
    "Vocabulary",
    "assign_ids",
    "local_id",
]

#: the two values of a topic's ``status``
ACTIVE = "active"
DEPRECATED = "deprecated"

_BAD = re.compile(r"[^A-Za-z0-9._-]+")
_GOOD = re.compile(r"[A-Za-z0-9_-][A-Za-z0-9._-]*[A-Za-z0-9_-]|[A-Za-z0-9_-]")


@dataclass(slots=True)
class Topic:
    """One topic while a vocabulary is compiled."""

    id: str
    source: str | None
    origin: str = "graph"  # graph | curation
    graphs: set[str] = field(default_factory=set)
    labels: list[tuple[str, str, int]] = field(default_factory=list)  # (lang, text, rank)
    aliases: list[tuple[str, str, str]] = field(default_factory=list)  # (lang, text, kind)
    notations: set[str] = field(default_factory=set)
    same_as: set[str] = field(default_factory=set)
    label_override: dict[str, str] = field(default_factory=dict)
    alias_removals: set[tuple[str, str]] = field(default_factory=set)
    status: str = "active"
    replaced_by: str | None = None
    flags: set[str] = field(default_factory=set)


def local_id(iri: str) -> str:
    """The local name of an IRI, sanitised to ``[A-Za-z0-9._-]``.

    >>> local_id("http://example.org/graph/canoe-polo")
    'canoe-polo'
    >>> local_id("http://example.org/x#Ol%C3%A9 Bay")
    'Ol-C3-A9-Bay'
    """
    tail = iri.rstrip("/#").rsplit("/", 1)[-1]
    if _GOOD.fullmatch(tail) and not tail.startswith("-") and not tail.endswith("-"):
        return tail  # the common case, without the slower general path
    tail = re.split(r"[/#:]", iri.rstrip("/#"))[-1]
    tail = _BAD.sub("-", tail).strip("-.")
    return tail or "topic"


def assign_ids(sources: list[str]) -> tuple[dict[str, str], list[dict]]:
    """Source IRI -> topic id, from the IRI alone; a clash gives each ``-`` + 8 hex of sha256.

    >>> ids, clashes = assign_ids(["http://a.example/x", "http://b.example/x", "http://a.example/y"])
    >>> ids["http://a.example/y"], ids["http://a.example/x"]
    ('y', 'x-3e79a540')
    """
    by_base: dict[str, list[str]] = {}
    for s in sources:
        by_base.setdefault(local_id(s), []).append(s)
    ids, clashes = {}, []
    for base in sorted(by_base):
        group = by_base[base]
        if len(group) == 1:
            ids[group[0]] = base
            continue
        for s in sorted(group):
            ids[s] = f"{base}-{hashlib.sha256(s.encode('utf-8')).hexdigest()[:8]}"
        clashes.append(
            {"id": base, "sources": sorted(group), "ids": [ids[s] for s in sorted(group)]}
        )
    return ids, clashes


class TopicRecord(NamedTuple):
    """One topic of a compiled vocabulary: one line of ``topics.jsonl``.

    The fields are the file's keys. ``labels``: language -> preferred label;
    ``aliases``: language -> aliases; ``parents``: topic ids inside the vocabulary;
    ``depth``: None for a deprecated topic; ``curie``/``source``: the graph entity
    (None for a topic the curation added); ``origin``: ``graph`` or ``curation``.

    >>> t = TopicRecord.make("canoe-polo", labels={"en": "canoe polo"}, parents=("paddle",))
    >>> t.is_active, t.parents, t.iri
    (True, ('paddle',), None)
    >>> t.deprecate("polo").is_active
    False
    """

    aliases: Mapping[str, Sequence[str]]
    curie: str | None
    depth: int | None
    flags: tuple[str, ...]
    graph: str | None
    id: str
    iri: str | None
    labels: Mapping[str, str]
    notation: str | None
    origin: str
    parents: tuple[str, ...]
    replaced_by: str | None
    same_as: tuple[str, ...]
    source: str | None
    status: str

    @classmethod
    def make(
        cls,
        id: str,  # noqa: A002 - the file's key
        *,
        labels: Mapping[str, str] | None = None,
        aliases: Mapping[str, Sequence[str]] | None = None,
        parents: Iterable[str] = (),
        depth: int | None = 0,
        flags: Iterable[str] = (),
        graph: str | None = None,
        iri: str | None = None,
        curie: str | None = None,
        notation: str | None = None,
        origin: str = "graph",
        replaced_by: str | None = None,
        same_as: Iterable[str] = (),
        source: str | None = None,
        status: str = ACTIVE,
    ) -> TopicRecord:
        """A record from keyword arguments, with the defaults of an active graph topic."""
        return cls(
            dict(aliases or {}), curie, depth, tuple(flags), graph, id, iri,
            dict(labels or {}), notation, origin, tuple(parents), replaced_by,
            tuple(same_as), source, status,
        )  # fmt: skip

    @classmethod
    def from_json(cls, obj: Mapping) -> TopicRecord:
        """A record from a parsed ``topics.jsonl`` object (missing keys take their defaults)."""
        g = obj.get
        return cls(
            g("aliases") or {},
            g("curie"),
            g("depth"),
            tuple(g("flags") or ()),
            g("graph"),
            obj["id"],
            g("iri"),
            g("labels") or {},
            g("notation"),
            g("origin") or "graph",
            tuple(g("parents") or ()),
            g("replaced_by"),
            tuple(g("same_as") or ()),
            g("source"),
            g("status") or ACTIVE,
        )

    def to_json(self) -> dict:
        """The ``topics.jsonl`` object (the writer sorts its keys)."""
        return dict(zip(self._fields, self, strict=True))

    @property
    def is_active(self) -> bool:
        """True unless the topic is deprecated (the one place ``status`` is compared)."""
        return self.status != DEPRECATED

    def names(self) -> list[tuple[str, str, str]]:
        """Every name of the topic: (language, text, ``preferred`` or ``alias``), sorted.

        >>> TopicRecord.make("x", labels={"en": "X"}, aliases={"en": ["Ex"]}).names()
        [('en', 'X', 'preferred'), ('en', 'Ex', 'alias')]
        """
        out = [(lang, self.labels[lang], "preferred") for lang in sorted(self.labels)]
        for lang in sorted(self.aliases):
            out.extend((lang, a, "alias") for a in self.aliases[lang])
        return out

    def label(self, languages: Sequence[str] = ()) -> str | None:
        """The label to show a person: the first of ``languages`` (language ranges,
        RFC 4647 basic filtering) that has one, else the untagged label, else the
        label of the smallest language tag; None for a topic without labels.

        >>> t = TopicRecord.make("x", labels={"de": "Kanupolo", "en-GB": "canoe polo"})
        >>> t.label(["fr", "en"]), t.label(["de"]), t.label()
        ('canoe polo', 'Kanupolo', 'Kanupolo')
        """
        labels = self.labels
        if not labels:
            return None
        for rng in languages:
            if rng in labels:
                return labels[rng]
            hit = [t for t in labels if _in_range(t, rng)]
            if hit:
                return labels[min(hit)]
        if "" in labels:
            return labels[""]
        return labels[min(labels)]

    def deprecate(self, replaced_by: str | None) -> TopicRecord:
        """This topic as deprecated: no place in the hierarchy, no aliases, ``replaced_by`` set."""
        return self._replace(
            status=DEPRECATED, replaced_by=replaced_by, parents=(), depth=None, aliases={}
        )


def _in_range(tag: str, rng: str) -> bool:
    from kgkit.vocab.aliases import lang_matches

    return lang_matches(tag, (rng,))


class LexiconRow(NamedTuple):
    """One row of ``lexicon.tsv``: a name, its match key, its topic, how many topics share it.

    ``source``: for a row of kind ``inflected`` (a form kgkit made), the name it was
    made from; empty for the names the graph and the curation give.
    """

    alias: str
    match_key: str
    topic: str
    language: str
    kind: str  # preferred | alias | inflected
    shared_by: int
    source: str = ""


class Scheme(NamedTuple):
    """The concept scheme of a vocabulary (``scheme:`` of ``topics.yaml``)."""

    iri: str
    name: str
    namespace: str
    title: str

    def to_json(self) -> dict:
        return dict(zip(self._fields, self, strict=True))


#: report.json keys every compile writes, in the order of :class:`Report`'s fields
_REPORT_KEYS = (
    "ambiguous",
    "counts",
    "curation",
    "cycles",
    "dropped_aliases",
    "dropped_topics",
    "id_clashes",
    "new_roots",
    "reattached",
    "reductions",
    "spec",
)
#: keys written only when set
_REPORT_OPTIONAL = ("carried_names", "graphs", "lost_names", "release_deprecations")


@dataclass(frozen=True)
class Report:
    """The compile report (``report.json``): counts and every decision with its reason.

    ``carried_names``, ``lost_names`` and ``release_deprecations`` are present only when
    the vocabulary has a previous release to compare with (None otherwise, and then
    absent from the file). ``graphs``: the graphs the compile read, each
    ``{"name", "profile": "own"|"workspace", "untagged_language"}`` (absent in reports
    of older versions). ``extra``: keys this version does not know, kept as read.
    """

    ambiguous: list = field(default_factory=list)
    counts: dict = field(default_factory=dict)
    curation: dict = field(default_factory=lambda: {"applied": [], "stale": []})
    cycles: list = field(default_factory=list)
    dropped_aliases: list = field(default_factory=list)
    dropped_topics: list = field(default_factory=list)
    id_clashes: list = field(default_factory=list)
    new_roots: list = field(default_factory=list)
    reattached: list = field(default_factory=list)
    reductions: list = field(default_factory=list)
    spec: dict = field(default_factory=dict)
    carried_names: list | None = None
    graphs: list | None = None
    lost_names: list | None = None
    release_deprecations: list | None = None
    extra: dict = field(default_factory=dict)

    @classmethod
    def from_json(cls, obj: Mapping) -> Report:
        known = {k: obj[k] for k in (*_REPORT_KEYS, *_REPORT_OPTIONAL) if k in obj}
        extra = {k: v for k, v in obj.items() if k not in known}
        return cls(**known, extra=extra)

    def to_json(self) -> dict:
        """The ``report.json`` object (keys sorted by the writer)."""
        out = dict(self.extra)
        for k in _REPORT_KEYS:
            out[k] = getattr(self, k)
        for k in _REPORT_OPTIONAL:
            v = getattr(self, k)
            if v is not None:
                out[k] = v
        return out

    @property
    def stale_edits(self) -> list[dict]:
        return list((self.curation or {}).get("stale") or [])


@dataclass(frozen=True, eq=False)
class Vocabulary:
    """A compiled vocabulary in memory (a build, a release, or one read from a folder).

    ``topics``: records sorted by id (active and deprecated); ``lexicon``: rows in
    file order; ``label_tags``: topic -> {language of ``labels`` -> language tag to
    write} for preferred labels lent by a fallback language; ``languages``: language
    ranges in the order a person should see labels (the spec's languages, then its
    fallbacks).

    >>> v = Vocabulary(
    ...     Scheme("http://ex.org/v", "v", "http://ex.org/v/", "V"),
    ...     (TopicRecord.make("a", labels={"en": "A"}),
    ...      TopicRecord.make("b", labels={"en": "B"}).deprecate("a")),
    ...     (LexiconRow("A", "a", "a", "en", "preferred", 1),),
    ... )
    >>> [t.id for t in v.active_topics()], v.display_label("b"), v.lexicon_keys("a")
    (['a'], 'B', {'a'})
    """

    scheme: Scheme
    topics: tuple[TopicRecord, ...]
    lexicon: tuple[LexiconRow, ...] = ()
    report: Report = field(default_factory=Report)
    label_tags: Mapping[str, Mapping[str, str]] = field(default_factory=dict)
    languages: tuple[str, ...] = ()
    _by_id: dict = field(init=False, repr=False)
    _keys: dict = field(init=False, repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_by_id", {t.id: t for t in self.topics})
        object.__setattr__(self, "_keys", None)

    def __len__(self) -> int:
        return len(self.topics)

    def __contains__(self, topic_id: object) -> bool:
        return topic_id in self._by_id

    @property
    def by_id(self) -> Mapping[str, TopicRecord]:
        """Topic id -> record, in id order."""
        return self._by_id

    def topic(self, topic_id: str) -> TopicRecord:
        """The record of ``topic_id`` (KeyError when there is none)."""
        return self._by_id[topic_id]

    def active_topics(self) -> list[TopicRecord]:
        return [t for t in self.topics if t.is_active]

    def deprecated_topics(self) -> list[TopicRecord]:
        return [t for t in self.topics if not t.is_active]

    def names(self, topic_id: str) -> list[tuple[str, str, str]]:
        """(language, text, kind) of every name of the topic (see :meth:`TopicRecord.names`)."""
        return self._by_id[topic_id].names()

    def lexicon_keys(self, topic_id: str | None = None) -> set[str]:
        """The match keys of the lexicon (of one topic when ``topic_id`` is given)."""
        if self._keys is None:
            keys: dict[str, set[str]] = {}
            for row in self.lexicon:
                keys.setdefault(row.topic, set()).add(row.match_key)
            object.__setattr__(self, "_keys", keys)
        if topic_id is None:
            return {k for ks in self._keys.values() for k in ks}
        return set(self._keys.get(topic_id, ()))

    def display_label(self, topic_id: str) -> str | None:
        """The label to show for a topic: the first of :attr:`languages` that has one,
        then the untagged label, then the smallest language tag; None if unknown."""
        t = self._by_id.get(topic_id)
        return t.label(self.languages) if t is not None else None

    def counts(self) -> dict[str, int]:
        """Active and deprecated topics and lexicon rows, counted from the records."""
        active = sum(1 for t in self.topics if t.is_active)
        return {
            "topics": active,
            "deprecated": len(self.topics) - active,
            "lexicon_rows": len(self.lexicon),
        }
