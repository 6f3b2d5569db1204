"""The curation overlay ``vocab/<name>.curation.yaml``: hand edits applied on every compile.

The file holds one key, ``edits``, a list; each edit is a mapping with exactly one
action key and an optional free ``note``::

    edits:
      - add_alias: {topic: canoe-polo, alias: kayak polo, language: en}
        note: what the sports desk calls it

Edits apply in file order, after selection and before pruning. They are numbered
1, 2, 3 as they stand in the file, and every message names the file and line of
the edit. An edit whose target is gone, or that would change nothing, is *stale*:
it is reported, never dropped silently (``strict`` makes it an error). An edit that
applies but is undone by a later one is *overridden* by that edit (reported with
its number): a ``set_label`` replaced by a later ``set_label`` of the same topic
and language, an ``add_alias`` taken back by a later ``remove_alias``, an
``add_parent`` by a later ``remove_parent``, any edit on a topic that a later
``merge`` or ``exclude`` (directly or through an excluded ancestor) takes away.
"""

from __future__ import annotations

import os
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from kgkit.errors import SpecError
from kgkit.inputs import read_yaml
from kgkit.languages import is_language_tag
from kgkit.vocab.aliases import Settlement, match_key
from kgkit.vocab.model import Topic

__all__ = [
    "ACTIONS",
    "CurationResult",
    "Edit",
    "apply_curation",
    "curation_summary",
    "edit_text",
    "load_curation",
]

#: action -> (required fields, optional fields)
ACTIONS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "add_alias": (("topic", "alias"), ("language",)),
    "remove_alias": (("topic", "alias"), ("language",)),
    "set_label": (("topic", "label"), ("language",)),
    "exclude": (("topic",), ("subtree",)),
    "add_parent": (("topic", "parent"), ()),
    "remove_parent": (("topic", "parent"), ()),
    "merge": (("topic", "into"), ()),
    "add_topic": (("id", "labels"), ("aliases", "parents")),
    "settle": (("name", "keep"), ("language",)),
}
_ID = re.compile(r"^[A-Za-z0-9_][A-Za-z0-9._-]*$")


@dataclass(frozen=True)
class Edit:
    index: int  # position in the file, from 1 (as people count)
    line: int | None
    action: str
    args: dict
    note: str | None
    file: str | None = None  # the curation file's name (no folder: reports stay the same)

    @property
    def where(self) -> str:
        """``FILE:LINE`` of the edit, as messages name it."""
        return f"{self.file or 'curation'}{':' + str(self.line) if self.line else ''}"

    @property
    def target(self) -> str:
        if self.action == "settle":
            return str(self.args["name"])
        return str(self.args.get("topic", self.args.get("id")))

    def describe(self) -> dict:
        out = {"action": self.action, "edit": self.index, "target": self.target}
        if self.line is not None:
            out["line"] = self.line
        if self.file is not None:
            out["file"] = self.file
        out.update({k: v for k, v in self.args.items() if k not in ("topic", "id", "name")})
        if self.note is not None:
            out["note"] = self.note
        return out


def edit_text(entry: dict) -> str:
    """How a message names an edit of the report: ``FILE:LINE: edit N (action target)``.

    >>> edit_text({"file": "sport.curation.yaml", "line": 6, "edit": 3,
    ...            "action": "add_alias", "target": "dragon-boat"})
    'sport.curation.yaml:6: edit 3 (add_alias dragon-boat)'
    """
    where = ""
    if entry.get("file"):
        where = f"{entry['file']}{':' + str(entry['line']) if entry.get('line') else ''}: "
    return f"{where}edit {entry.get('edit')} ({entry.get('action')} {entry.get('target')})"


def curation_summary(counts: dict) -> str:
    """One line: how many edits were applied, overridden, carried and stale.

    >>> curation_summary({"curation_applied": 5, "curation_overridden": 1,
    ...                   "curation_carried": 2, "curation_stale": 0})
    'curation: 5 edits applied (2 carried to a replacement), 1 overridden, 0 stale'
    """
    n = counts.get("curation_applied", 0)
    carried = counts.get("curation_carried", 0)
    return (
        f"curation: {n} edit{'' if n == 1 else 's'} applied"
        + (f" ({carried} carried to a replacement)" if carried else "")
        + f", {counts.get('curation_overridden', 0)} overridden"
        + f", {counts.get('curation_stale', 0)} stale"
    )


def load_curation(path: Path) -> list[Edit]:
    """Read and validate a curation file; a missing file means no edits."""
    path = Path(path)
    if not os.path.lexists(path):
        return []
    doc = read_yaml(path, "a curation file", SpecError)
    data, lines = doc.data, doc.lines
    if data is None:
        return []

    def fail(key: str, cause: str) -> SpecError:
        line = lines.get(key)
        if line is None and "." in key:
            line = lines.get(key.rsplit(".", 1)[0])
        return SpecError(f"{path}:{line}: key {key!r}: {cause}" if line else f"{path}: {cause}")

    if not isinstance(data, dict) or set(data) - {"edits"}:
        extra = sorted(set(data) - {"edits"}) if isinstance(data, dict) else None
        if extra:
            raise fail(str(extra[0]), "unknown key (a curation file holds only 'edits')")
        raise SpecError(f"{path}: expected a mapping with the key 'edits'")
    raw = data.get("edits") or []
    if not isinstance(raw, list):
        raise fail("edits", "must be a list of edits")
    edits = []
    for i, e in enumerate(raw):
        key = f"edits[{i}]"
        if not isinstance(e, dict):
            raise fail(key, "an edit is a mapping with one action and an optional note")
        actions = [k for k in e if k != "note"]
        if len(actions) != 1 or actions[0] not in ACTIONS:
            bad = next((k for k in actions if k not in ACTIONS), None)
            cause = (
                f"unknown action {bad!r}" if bad else "needs exactly one action"
            ) + f" (actions: {', '.join(ACTIONS)})"
            raise fail(key, cause)
        action = actions[0]
        args = e[action]
        akey = f"{key}.{action}"
        if not isinstance(args, dict):
            raise fail(akey, "must be a mapping of the edit's fields")
        required, optional = ACTIONS[action]
        for f in args:
            if f not in required + optional:
                raise fail(
                    f"{akey}.{f}", f"unknown field (fields: {', '.join(required + optional)})"
                )
        for f in required:
            if f not in args:
                raise fail(akey, f"needs {f!r}")
        _check_fields(action, args, akey, fail)
        note = e.get("note")
        if note is not None and not isinstance(note, str):
            raise fail(f"{key}.note", "must be text")
        edits.append(Edit(i + 1, lines.get(key), action, dict(args), note, path.name))
    return edits


def _check_fields(action: str, args: dict, key: str, fail) -> None:
    for f in ("topic", "parent", "into", "alias", "label"):
        if f in args and (not isinstance(args[f], str) or not args[f].strip()):
            raise fail(f"{key}.{f}", "must be non-empty text")
    if "language" in args and (
        not isinstance(args["language"], str)
        or not is_language_tag(args["language"], allow_empty=True)
    ):
        raise fail(f"{key}.language", "must be a BCP 47 language tag or '' for none")
    if "subtree" in args and not isinstance(args["subtree"], bool):
        raise fail(f"{key}.subtree", "must be true or false")
    if action == "settle":
        if not isinstance(args["name"], str) or not args["name"].strip():
            raise fail(f"{key}.name", "must be non-empty text")
        keep = args["keep"]
        if isinstance(keep, str):
            keep = args["keep"] = [keep]
        if (
            not isinstance(keep, list)
            or not keep
            or not all(isinstance(k, str) and k.strip() for k in keep)
        ):
            raise fail(f"{key}.keep", "must be a topic id or a list of topic ids")
    if action == "add_topic":
        if not isinstance(args["id"], str) or not _ID.match(args["id"]):
            raise fail(f"{key}.id", "must be a topic id of letters, digits, '.', '_' or '-'")
        labels = args["labels"]
        if (
            not isinstance(labels, dict)
            or not labels
            or not all(
                isinstance(k, str)
                and is_language_tag(k, allow_empty=True)
                and isinstance(v, str)
                and v.strip()
                for k, v in labels.items()
            )
        ):
            raise fail(f"{key}.labels", "must map language tags to label text")
        aliases = args.get("aliases", {})
        if not isinstance(aliases, dict) or not all(
            isinstance(k, str)
            and is_language_tag(k, allow_empty=True)
            and isinstance(v, list)
            and all(isinstance(a, str) for a in v)
            for k, v in aliases.items()
        ):
            raise fail(f"{key}.aliases", "must map language tags to lists of aliases")
        parents = args.get("parents", [])
        if not isinstance(parents, list) or not all(isinstance(p, str) for p in parents):
            raise fail(f"{key}.parents", "must be a list of topic ids")


@dataclass
class CurationResult:
    applied: list[dict]
    stale: list[dict]
    excluded: list[tuple[str, bool, int]]  # (topic, subtree, edit index)
    merged: dict[str, str]  # merged topic -> the topic it went into
    settlements: list[Settlement] = field(default_factory=list)  # applied when names are known
    carried: list[dict] = field(default_factory=list)  # applied ones the compile carried
    #: applied edits a later edit undid, each with ``overridden_by`` (that edit's number)
    overridden: list[dict] = field(default_factory=list)
    #: edit number -> the topic id it changed (applied edits that name one topic)
    targets: dict[int, str] = field(default_factory=dict)

    def override(self, number: int, by: int, why: str) -> None:
        """Move applied edit ``number`` to :attr:`overridden`, undone by edit ``by``."""
        for i, entry in enumerate(self.applied):
            if entry["edit"] == number:
                del self.applied[i]
                self.overridden.append({**entry, "overridden_by": by, "reason": why})
                self.overridden.sort(key=lambda x: x["edit"])
                return

    def override_all(self, pending: dict[int, tuple[int, str]]) -> None:
        """:meth:`override` for many edits at once (number -> (by, why)), in one pass."""
        if not pending:
            return
        kept = []
        for entry in self.applied:
            hit = pending.get(entry["edit"])
            if hit is None:
                kept.append(entry)
            else:
                self.overridden.append({**entry, "overridden_by": hit[0], "reason": hit[1]})
        self.applied[:] = kept
        self.overridden.sort(key=lambda x: x["edit"])

    def settle_exclusions(self, dropped: dict[str, str]) -> None:
        """After the exclusions: an applied edit whose topic a curation ``exclude``
        removed (``dropped``: topic -> reason, as the exclusion stage gives them) is
        overridden by that exclude when it comes later in the file, and stale when the
        exclude comes first (it changed nothing that is released)."""

        def excluding_edit(tid: str) -> int | None:
            seen = set()
            while tid in dropped and tid not in seen:
                seen.add(tid)
                reason = dropped[tid]
                if reason.startswith("excluded-by-curation:edit-"):
                    return int(reason.rsplit("-", 1)[1])
                if not reason.startswith("in-excluded-subtree:"):
                    return None
                tid = reason.split(":", 1)[1]
            return None

        for number, tid in sorted(self.targets.items()):
            by = excluding_edit(tid)
            if by is None or by == number:
                continue
            entry = next((a for a in self.applied if a["edit"] == number), None)
            if entry is None or entry["action"] == "exclude":
                continue
            if by > number:
                self.override(number, by, f"edit {by} excludes topic {tid!r}")
            else:
                self.applied.remove(entry)
                self.stale.append({**entry, "reason": f"edit {by} excludes topic {tid!r}"})
                self.stale.sort(key=lambda x: x["edit"])


def apply_curation(
    edits: list[Edit],
    topics: dict[str, Topic],
    graph_parents: dict[str, list[str]],
    resolve: Callable[[str], str | None],
    preferred: Callable[[Topic], dict[str, str]],
) -> CurationResult:
    """Apply ``edits`` in order to ``topics`` and ``graph_parents`` (both changed in place).

    ``resolve`` turns a reference (a topic id, a CURIE or an <IRI>) into a node of
    ``graph_parents`` (a topic id, or the IRI of an entity outside the vocabulary),
    or None. ``preferred`` gives a topic's current preferred labels.
    """
    applied, stale, excluded, merged = [], [], [], {}
    settlements: list[Settlement] = []
    result = CurationResult(applied, stale, excluded, merged, settlements)
    # what later edits can undo: (topic, language) -> set_label edit; (topic, key) ->
    # {language: add_alias edit}; topic -> {parent: add_parent edit}. Indexed by topic so
    # that an edit looks at its own topic's entries only, and the undone edits are moved
    # out of ``applied`` once at the end: 20,000 edits stay linear.
    labels_set: dict[tuple[str, str], int] = {}
    aliases_added: dict[tuple[str, str], dict[str, int]] = {}
    parents_added: dict[str, dict[str, int]] = {}
    undone: dict[int, tuple[int, str]] = {}  # edit number -> (the edit undoing it, why)

    def override(number: int, by: int, why: str) -> None:
        undone.setdefault(number, (by, why))

    def is_topic(ref: str) -> str | None:
        node = resolve(ref)
        return node if node in topics and topics[node].status == "active" else None

    # parent -> its children in graph_parents, made at the first merge and kept up to
    # date after it: a merge then visits the merged topic's children, not every link
    # (20,000 edits over a large graph took minutes when each merge scanned them all)
    children: dict[str, set[str]] | None = None

    def link(child: str, parent: str) -> None:
        if children is not None:
            children.setdefault(parent, set()).add(child)

    def unlink(child: str, parent: str) -> None:
        if children is not None and parent not in graph_parents.get(child, ()):
            children.get(parent, set()).discard(child)

    for e in edits:
        a = e.args

        def mark_stale(reason: str, e=e) -> None:
            stale.append({**e.describe(), "reason": reason})

        if e.action == "add_topic":
            if a["id"] in topics:
                mark_stale(f"a topic with id {a['id']!r} exists already (the graph has it now?)")
                continue
            t = Topic(id=a["id"], source=None, origin="curation")
            for lang, text in sorted(a["labels"].items()):
                t.labels.append((lang.lower(), text, -1))
            for lang, texts in sorted((a.get("aliases") or {}).items()):
                t.aliases.extend((lang.lower(), x, "curation") for x in texts)
            missing = [p for p in a.get("parents", []) if is_topic(p) is None]
            if missing:
                mark_stale(f"parent {missing[0]!r} is not a topic of the vocabulary")
                continue
            topics[t.id] = t
            graph_parents[t.id] = sorted({is_topic(p) for p in a.get("parents", [])})
            for p in graph_parents[t.id]:
                link(t.id, p)
            applied.append(e.describe())
            result.targets[e.index] = t.id
            continue

        if e.action == "settle":
            keep = [(ref, is_topic(ref)) for ref in a["keep"]]
            gone = [ref for ref, tid in keep if tid is None]
            if gone:
                mark_stale(f"topic {gone[0]!r} is not in the vocabulary")
                continue
            settlements.append(
                Settlement(
                    e.describe(),
                    match_key(a["name"]),
                    frozenset(tid for _, tid in keep),
                    str(a["language"]).lower() if "language" in a else None,
                )
            )
            applied.append(e.describe())
            continue

        tid = is_topic(a["topic"])
        if tid is None:
            mark_stale(f"topic {a['topic']!r} is not in the vocabulary")
            continue
        t = topics[tid]
        lang = str(a.get("language", "")).lower()
        if e.action == "add_alias":
            key = match_key(a["alias"])
            have = {match_key(x) for lg, x, _ in t.labels if lg == lang}
            have |= {match_key(x) for lg, x, _ in t.aliases if lg == lang}
            if key in have:
                mark_stale("the topic has this name already")
                continue
            t.aliases.append((lang, a["alias"], "curation"))
            aliases_added.setdefault((tid, key), {})[lang] = e.index
        elif e.action == "remove_alias":
            key = match_key(a["alias"])
            langs = {lang} if "language" in a else None
            hit = [
                x
                for lg, x, _ in t.aliases
                if match_key(x) == key and (langs is None or lg in langs)
            ]
            if not hit:
                mark_stale("the topic has no such alias")
                continue
            t.alias_removals.add((lang if "language" in a else "*", key))
            added = aliases_added.get((tid, key), {})
            for alang, n in list(added.items()):
                if "language" not in a or alang == lang:
                    override(n, e.index, f"edit {e.index} removes this alias again")
                    del added[alang]
        elif e.action == "set_label":
            if preferred(t).get(lang) == a["label"]:
                mark_stale("this is the preferred label already")
                continue
            t.label_override[lang] = a["label"]
            if (tid, lang) in labels_set:
                n = labels_set[(tid, lang)]
                override(n, e.index, f"edit {e.index} sets another label")
            labels_set[(tid, lang)] = e.index
        elif e.action == "exclude":
            excluded.append((tid, bool(a.get("subtree", True)), e.index))
        elif e.action in ("add_parent", "remove_parent"):
            parent = resolve(a["parent"])
            ps = graph_parents.setdefault(tid, [])
            if e.action == "add_parent":
                if is_topic(a["parent"]) is None:
                    mark_stale(f"parent {a['parent']!r} is not in the vocabulary")
                    continue
                if parent in ps:
                    mark_stale("the topic has this parent already")
                    continue
                ps.append(parent)
                link(tid, parent)
                parents_added.setdefault(tid, {})[parent] = e.index
            else:
                if parent is None or parent not in ps:
                    mark_stale("the topic does not have this parent")
                    continue
                ps.remove(parent)
                unlink(tid, parent)
                if parent in parents_added.get(tid, {}):
                    n = parents_added[tid].pop(parent)
                    override(n, e.index, f"edit {e.index} removes this parent again")
        elif e.action == "merge":
            into = is_topic(a["into"])
            if into is None:
                mark_stale(f"topic {a['into']!r} to merge into is not in the vocabulary")
                continue
            if into == tid:
                mark_stale("a topic cannot be merged into itself")
                continue
            target = topics[into]
            target.aliases.extend((lg, x, "merged") for lg, x, _ in t.labels)
            target.aliases.extend((lg, x, "merged") for lg, x, _ in t.aliases)
            t.status, t.replaced_by = "deprecated", into
            if children is None:
                children = {}
                for child, ps in graph_parents.items():
                    for p in ps:
                        children.setdefault(p, set()).add(child)
            for child in children.pop(tid, ()):
                ps = graph_parents[child]
                ps[:] = sorted({into if p == tid else p for p in ps} - {child})
                if child != into:
                    children.setdefault(into, set()).add(child)
            own = graph_parents.get(tid, [])
            graph_parents[tid] = []
            for p in own:
                unlink(tid, p)
            merged[tid] = into
            # the merged topic keeps no place in the hierarchy: its parent edits are undone
            # (its names, curated ones included, go to the topic it is merged into)
            for n in parents_added.get(tid, {}).values():
                override(n, e.index, f"edit {e.index} merges the topic into {into!r}")
        applied.append(e.describe())
        result.targets[e.index] = tid
    result.override_all(undone)
    return result
