"""The topic record the compile steps pass along, and stable topic ids."""

from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass, field

__all__ = ["Topic", "assign_ids", "local_id"]

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
