"""What changed between two compiled vocabularies (two releases, or a release and a build).

The diff compares topic records (:class:`kgkit.vocab.model.TopicRecord`, as in
``topics.jsonl``) topic by topic and lists only what
changed, each change with the topic ids it concerns and its cause: ``curation``
when an edit of the curation overlay made it (an edit applied on one side only,
or a topic the curation added), ``graph`` otherwise.

Change kinds (the version part each one bumps is in
:data:`kgkit.release.versioning.LEVEL_OF_KIND`):

==================== =======================================================
``added``             a topic that was not there (or was only in the other
                      side's past) is active now
``removed``           a topic is gone altogether (not even kept as deprecated)
``deprecated``        an active topic is now deprecated (``after``: its
                      replacement or null)
``restored``          a deprecated topic is active again
``id-changed``        the same source entity now has another topic id
``relabelled``        the preferred label in one language changed, appeared
                      or went (``before``/``after`` null when absent)
``moved``             the parent links changed (``before``/``after``: parents)
``alias-added``       an alias appeared in one language
``alias-removed``     an alias went in one language
``notation-changed``  the notation changed
``graph-changed``     the topic is read from another graph (``before``/``after``:
                      graph names), as when a dump was split or renamed
``replacement-changed`` a deprecated topic points at another replacement
==================== =======================================================
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from kgkit.errors import DiffError
from kgkit.vocab.folder import BuildFileError, read_report, read_topics
from kgkit.vocab.model import Report, TopicRecord

__all__ = [
    "Change",
    "DiffError",
    "VocabDiff",
    "diff_folders",
    "diff_topics",
    "display_languages_of",
]

_KIND_ORDER = (
    "removed",
    "deprecated",
    "id-changed",
    "added",
    "restored",
    "moved",
    "relabelled",
    "alias-added",
    "alias-removed",
    "notation-changed",
    "graph-changed",
    "replacement-changed",
)


@dataclass(frozen=True)
class Change:
    """One change to one topic. ``labels``: the label a person sees for each topic id
    the change names (its ``ids``, and the parents of a move)."""

    kind: str
    topic: str
    ids: tuple[str, ...]
    cause: str = "graph"
    language: str | None = None
    before: object = None
    after: object = None
    labels: Mapping[str, str] = field(default_factory=dict, compare=False, hash=False)

    def to_json(self) -> dict:
        return {
            "kind": self.kind,
            "topic": self.topic,
            "ids": list(self.ids),
            "labels": dict(sorted(self.labels.items())),
            "cause": self.cause,
            "language": self.language,
            "before": self.before,
            "after": self.after,
        }

    def shown(self, topic_id: str | None) -> str:
        """A topic id of this change as a person reads it: label beside id."""
        from kgkit.wording import topic_text

        if topic_id is None:
            return "(nothing)"
        return topic_text(self.labels.get(topic_id), topic_id)

    def sort_key(self):
        return (
            _KIND_ORDER.index(self.kind),
            self.topic,
            self.language or "",
            json.dumps(self.before, sort_keys=True, ensure_ascii=False),
            json.dumps(self.after, sort_keys=True, ensure_ascii=False),
        )


@dataclass
class VocabDiff:
    """Every change from ``old`` to ``new``, sorted by kind, topic and language."""

    old: str
    new: str
    changes: list[Change] = field(default_factory=list)

    def kinds(self) -> list[str]:
        return [c.kind for c in self.changes]

    def counts(self) -> dict[str, int]:
        out: dict[str, int] = {}
        for c in self.changes:
            out[c.kind] = out.get(c.kind, 0) + 1
        return dict(sorted(out.items(), key=lambda kv: _KIND_ORDER.index(kv[0])))

    def is_empty(self) -> bool:
        return not self.changes

    def to_json(self) -> dict:
        return {
            "old": self.old,
            "new": self.new,
            "counts": self.counts(),
            "changes": [c.to_json() for c in self.changes],
        }

    def to_text(self) -> str:
        if not self.changes:
            return f"no topic changed from {self.old} to {self.new}\n"
        lines = [f"{self.old} -> {self.new}: {len(self.changes)} changes"]
        for kind, n in self.counts().items():
            lines.append(f"  {kind:<20} {n}")
        lines.append("")
        for c in self.changes:
            lines.append(describe(c))
        return "\n".join(lines) + "\n"


def _show(value) -> str:
    if value is None:
        return "(none)"
    if isinstance(value, list):
        return "[" + ", ".join(value) + "]" if value else "(none)"
    return json.dumps(value, ensure_ascii=False)


def _parents(c: Change, ids) -> str:
    return "[" + ", ".join(c.shown(i) for i in ids) + "]" if ids else "(none)"


def describe(c: Change) -> str:
    """One readable line for a change."""
    lang = (
        f" [{c.language or 'untagged'}]"
        if c.kind in ("relabelled", "alias-added", "alias-removed")
        else ""
    )
    t = c.shown(c.topic)
    if c.kind == "added":
        what = f"added {t}"
    elif c.kind == "removed":
        what = f"removed {t}"
    elif c.kind == "deprecated":
        what = f"deprecated {t}, replaced by {c.shown(c.after)}"
    elif c.kind == "restored":
        what = f"restored {t}"
    elif c.kind == "id-changed":
        what = f"id of {c.labels.get(c.after) or c.after} changed {c.before} -> {c.after}"
    elif c.kind == "moved":
        what = f"moved {t}: parents {_parents(c, c.before)} -> {_parents(c, c.after)}"
    elif c.kind == "relabelled":
        what = f"relabelled {t}{lang}: {_show(c.before)} -> {_show(c.after)}"
    elif c.kind == "alias-added":
        what = f"alias added to {t}{lang}: {_show(c.after)}"
    elif c.kind == "alias-removed":
        what = f"alias removed from {t}{lang}: {_show(c.before)}"
    elif c.kind == "notation-changed":
        what = f"notation of {t}: {_show(c.before)} -> {_show(c.after)}"
    elif c.kind == "graph-changed":
        what = f"graph of {t}: {_show(c.before)} -> {_show(c.after)}"
    else:
        what = f"replacement of {t}: {c.shown(c.before)} -> {c.shown(c.after)}"
    return f"{what}  ({c.cause})"


# --- attribution ---------------------------------------------------------------

#: curation edit action -> {field of the edit naming a topic: change kinds it can make there}
#: ("children-moved": a topic whose old or new parents include this one moved
#: because of the edit, as when a merged or excluded topic's children are reattached)
_EDIT_KINDS: dict[str, dict[str, tuple[str, ...]]] = {
    "add_alias": {"target": ("alias-added",)},
    "remove_alias": {"target": ("alias-removed",)},
    # the label it replaces stays as an alias; the new one may have been an alias
    "set_label": {"target": ("relabelled", "alias-added", "alias-removed")},
    "exclude": {"target": ("removed", "deprecated", "children-moved")},
    "add_parent": {"target": ("moved",)},
    "remove_parent": {"target": ("moved",)},
    "merge": {
        "target": ("deprecated", "removed", "replacement-changed", "children-moved"),
        "into": ("alias-added",),
    },
    "add_topic": {"target": ("added", "removed", "deprecated")},
    # a shared name kept on the listed topics (the ambiguity policy dropped it there)
    "settle": {"keep": ("alias-added",)},
}
#: what undoing an edit's change looks like in the diff
_UNDONE_BY = {
    "alias-added": ("alias-removed",),
    "alias-removed": ("alias-added",),
    "added": ("removed", "deprecated"),
    "removed": ("added", "restored"),
    "deprecated": ("added", "restored"),
}


def _refs(*sides: Mapping[str, TopicRecord]) -> dict[str, str]:
    """Every way a curation file can name a topic (id, CURIE, <IRI>, IRI) -> its id."""
    out: dict[str, str] = {}
    for topics in sides:
        for tid, t in topics.items():
            for ref in (t.iri, t.source, t.curie):
                if ref:
                    out.setdefault(ref, tid)
            if t.source:
                out.setdefault(f"<{t.source}>", tid)
    for topics in sides:
        for tid in topics:
            out[tid] = tid
    return out


#: fields of an applied edit that say where it is written, not what it does
_NOT_WHAT = frozenset({"edit", "line", "file", "note", "carried", "overridden_by"})


def _ids(value, refs: dict[str, str]):
    """The topic ids an edit's field names (one reference, or a list of them)."""
    if isinstance(value, str):
        return refs.get(value, value)
    if isinstance(value, list):
        return sorted(refs.get(v, v) for v in value if isinstance(v, str))
    return None


def _edit_effects(report: Report | None, refs: dict[str, str]) -> dict[str, set[tuple[str, str]]]:
    """What each applied curation edit of a build does -> the (topic id, change kind)
    pairs it can make. The key is the edit's action and fields (topics resolved to
    ids), not its place in the file, so the same edit on both sides has the same key."""
    out: dict[str, set[tuple[str, str]]] = {}
    report = report or Report()
    applied = (report.curation or {}).get("applied") or []
    for edit in applied:
        if not isinstance(edit, dict):
            continue
        kinds_of = _EDIT_KINDS.get(str(edit.get("action")), {})
        what = {k: _ids(v, refs) if k in kinds_of else v for k, v in edit.items()}
        what = {k: v for k, v in what.items() if k not in _NOT_WHAT}
        effects = out.setdefault(json.dumps(what, sort_keys=True, ensure_ascii=False), set())
        for key, kinds in kinds_of.items():
            ids = _ids(edit.get(key), refs)
            for tid in [ids] if isinstance(ids, str) else ids or ():
                effects.update((tid, k) for k in kinds)
    # topics the curation excluded with a subtree: the compile names them as dropped
    by_curation = set()
    for d in report.dropped_topics or []:
        if str(d.get("reason", "")).startswith("excluded-by-curation"):
            by_curation.add(d.get("id"))
    for d in report.dropped_topics or []:
        reason = str(d.get("reason", ""))
        if reason.startswith("in-excluded-subtree:") and reason.split(":", 1)[1] in by_curation:
            by_curation.add(d.get("id"))
    for tid in by_curation:
        key = json.dumps({"excluded": tid}, ensure_ascii=False)
        out[key] = {(tid, k) for k in ("removed", "deprecated", "children-moved")}
    return out


def _cause(effects: set[tuple[str, str]], kind: str, topics, origin_curation: bool) -> str:
    if origin_curation or any((t, kind) in effects for t in topics):
        return "curation"
    return "graph"


# --- the diff ------------------------------------------------------------------


def _labels_diff(tid, old, new, cause):
    out = []
    a, b = old.labels, new.labels
    for lang in sorted(set(a) | set(b)):
        if a.get(lang) != b.get(lang):
            out.append(("relabelled", lang, a.get(lang), b.get(lang)))
    aa, ba = old.aliases, new.aliases
    for lang in sorted(set(aa) | set(ba)):
        before, after = set(aa.get(lang) or []), set(ba.get(lang) or [])
        for alias in sorted(after - before):
            out.append(("alias-added", lang, None, alias))
        for alias in sorted(before - after):
            out.append(("alias-removed", lang, alias, None))
    return [
        Change(kind, tid, (tid,), cause(kind, [tid]), lang, before, after)
        for kind, lang, before, after in out
    ]


def _label(t: TopicRecord) -> str | None:
    labels = t.labels
    return labels.get("en") or labels.get("") or (labels[min(labels)] if labels else None)


def display_languages_of(*sides: Mapping[str, TopicRecord]) -> tuple[str, ...]:
    """The label languages of topic maps, the one most topics have a label in first
    (ties: the smaller tag): the order to show labels in when no spec says it.

    >>> a = {"x": TopicRecord.make("x", labels={"en": "X", "de": "Iks"}),
    ...      "y": TopicRecord.make("y", labels={"en": "Y"})}
    >>> display_languages_of(a)
    ('en', 'de')
    """
    counts: dict[str, int] = {}
    for side in sides:
        for t in side.values():
            for lang in t.labels:
                counts[lang] = counts.get(lang, 0) + 1
    return tuple(sorted(counts, key=lambda lang: (-counts[lang], lang)))


def _with_labels(changes: list[Change], old, new, languages) -> list[Change]:
    out = []
    for c in changes:
        ids = set(c.ids) | {c.topic}
        if c.kind == "moved":
            ids |= set(c.before or ()) | set(c.after or ())
        elif c.kind in ("deprecated", "replacement-changed"):
            ids |= {x for x in (c.before, c.after) if isinstance(x, str)}
        labels = {}
        for i in sorted(ids):
            t = new.get(i) or old.get(i)
            label = t.label(languages) if t is not None else None
            if label:
                labels[i] = label
        out.append(dataclasses.replace(c, labels=labels))
    return out


def diff_topics(
    old: Mapping[str, TopicRecord],
    new: Mapping[str, TopicRecord],
    old_report: Report | dict | None = None,
    new_report: Report | dict | None = None,
    old_name: str = "old",
    new_name: str = "new",
    languages: Sequence[str] = (),
) -> VocabDiff:
    """Compare two topic maps (id -> :class:`~kgkit.vocab.model.TopicRecord`).

    Each change carries the label of every topic it names, in the first of
    ``languages`` that has one (default: :func:`display_languages_of` both sides).

    >>> a = {"x": TopicRecord.make("x", labels={"en": "X"})}
    >>> b = {"x": TopicRecord.make("x", labels={"en": "Ex"})}
    >>> [c.kind for c in diff_topics(a, b).changes]
    ['relabelled']
    """
    if isinstance(old_report, dict):
        old_report = Report.from_json(old_report)
    if isinstance(new_report, dict):
        new_report = Report.from_json(new_report)
    refs = _refs(old, new)
    before, after = _edit_effects(old_report, refs), _edit_effects(new_report, refs)
    # an edit applied on both sides changes nothing between them; one applied on the
    # new side only explains its changes, one applied on the old side only (taken out
    # of the file, or gone stale) explains their undoing. Edit by edit: another edit
    # on both sides with the same effect on the same topic hides nothing.
    effects = {e for key in after.keys() - before.keys() for e in after[key]}
    effects |= {
        (t, k2)
        for key in before.keys() - after.keys()
        for t, k in before[key]
        for k2 in (k, *_UNDONE_BY.get(k, ()))
    }

    def cause_for(topic_obj):
        def cause(kind, ids):
            return _cause(effects, kind, ids, topic_obj.origin == "curation")

        return cause

    changes: list[Change] = []

    # the same source under another id: an id change, not a removal and an addition
    gone = [i for i in old if i not in new]
    fresh = [i for i in new if i not in old]
    by_source_new = {}
    for i in fresh:
        s = new[i].source
        if s:
            by_source_new.setdefault(s, []).append(i)
    renamed: dict[str, str] = {}
    for i in sorted(gone):
        s = old[i].source
        if s and len(by_source_new.get(s, [])) == 1:
            renamed[i] = by_source_new[s][0]
    # ... also when a release keeps the old id as a deprecated pointer to the new one
    for i in sorted(set(old) & set(new)):
        rep = new[i].replaced_by
        s = old[i].source
        if (
            old[i].is_active
            and not new[i].is_active
            and rep in fresh
            and s
            and new[rep].source == s
        ):
            renamed[i] = rep
    for o, n in sorted(renamed.items()):
        cause = cause_for(new[n])
        changes.append(Change("id-changed", n, (o, n), cause("id-changed", [o, n]), None, o, n))

    for i in sorted(gone):
        if i in renamed:
            continue
        cause = cause_for(old[i])
        changes.append(
            Change("removed", i, (i,), cause("removed", [i]), None, _label(old[i]), None)
        )
    renamed_to = set(renamed.values())
    for i in sorted(fresh):
        if i in renamed_to:
            continue
        t = new[i]
        if not t.is_active:
            continue  # born and deprecated between the two: never seen from the old side
        cause = cause_for(t)
        changes.append(Change("added", i, (i,), cause("added", [i]), None, None, _label(t)))

    pairs = [(i, i) for i in sorted(set(old) & set(new)) if i not in renamed]
    pairs += sorted(renamed.items())
    for oi, ni in pairs:
        a, b = old[oi], new[ni]
        cause = cause_for(b)
        if a.is_active and not b.is_active:
            rep = b.replaced_by
            ids = (ni, rep) if rep else (ni,)
            changes.append(Change("deprecated", ni, ids, cause("deprecated", ids), None, None, rep))
            continue
        if not a.is_active and b.is_active:
            changes.append(Change("restored", ni, (ni,), cause("restored", [ni])))
            # what annotators had is not the deprecated record (no parents, no aliases)
            # but, when the same entity was active under the id that replaced it (a
            # clash suffix gone again), that record; otherwise "restored" says it all
            was = old.get(a.replaced_by) if a.replaced_by else None
            if was is None or not was.is_active or not b.source or was.source != b.source:
                continue
            a = was
        elif not a.is_active and not b.is_active:
            if a.replaced_by != b.replaced_by:
                ids = tuple(x for x in (ni, a.replaced_by, b.replaced_by) if x)
                changes.append(
                    Change(
                        "replacement-changed",
                        ni,
                        ids,
                        cause("replacement-changed", ids),
                        None,
                        a.replaced_by,
                        b.replaced_by,
                    )
                )
            continue
        pa, pb = sorted(a.parents), sorted(b.parents)
        if pa != pb:
            ids = tuple(sorted({ni, *pa, *pb}))
            why = cause("moved", [ni])
            if any((p, "children-moved") in effects for p in (*pa, *pb)):
                why = "curation"
            changes.append(Change("moved", ni, ids, why, None, pa, pb))
        changes.extend(_labels_diff(ni, a, b, cause))
        if a.notation != b.notation:
            changes.append(
                Change(
                    "notation-changed",
                    ni,
                    (ni,),
                    cause("notation-changed", [ni]),
                    None,
                    a.notation,
                    b.notation,
                )
            )
        if a.graph != b.graph and a.graph is not None and b.graph is not None:
            changes.append(
                Change(
                    "graph-changed", ni, (ni,), cause("graph-changed", [ni]), None, a.graph, b.graph
                )
            )
    changes.sort(key=Change.sort_key)
    changes = _with_labels(changes, old, new, tuple(languages) or display_languages_of(old, new))
    return VocabDiff(old_name, new_name, changes)


def _topic_file(side: Path) -> Path:
    if side.is_file():
        return side
    if (side / "topics.jsonl").is_file():
        return side / "topics.jsonl"
    raise DiffError(f"{side}: not a release or build folder (no topics.jsonl in it)")


def diff_folders(a: Path | str, b: Path | str) -> VocabDiff:
    """Diff two release or build folders (or two ``topics.jsonl`` files)."""
    fa, fb = _topic_file(Path(a)), _topic_file(Path(b))
    try:
        rb = read_report(fb.parent)
        languages = ((rb.spec or {}).get("languages") or ()) if rb is not None else ()
        return diff_topics(
            read_topics(fa),
            read_topics(fb),
            read_report(fa.parent),
            rb,
            str(a),
            str(b),
            languages,
        )
    except BuildFileError as exc:
        raise DiffError(str(exc)) from None
