"""The changelog of a release against the previous one, in Markdown and in JSON."""

from __future__ import annotations

import json

from kgkit.release.diffing import VocabDiff, describe

__all__ = ["changelog_data", "changelog_json", "changelog_markdown"]

_SECTIONS = (
    ("removed", "Removed"),
    ("deprecated", "Deprecated"),
    ("id-changed", "Ids changed"),
    ("added", "Added"),
    ("restored", "Restored"),
    ("moved", "Moved (parents changed)"),
    ("relabelled", "Relabelled"),
    ("alias-added", "Aliases added"),
    ("alias-removed", "Aliases removed"),
    ("notation-changed", "Notations changed"),
    ("graph-changed", "Read from another graph"),
    ("replacement-changed", "Replacements changed"),
)


def _reason(level: str | None, previous: str | None, forced: bool) -> str:
    if previous is None:
        return "first release"
    why = {
        "major": "a topic was removed or deprecated, or an id changed",
        "minor": "topics were added or parent links changed",
        "patch": "only labels, aliases, notations, graphs or replacements changed",
        None: "no topic changed",
    }[level]
    return f"{why}; version given explicitly" if forced else why


def changelog_data(
    name: str,
    version: str,
    previous: str | None,
    diff: VocabDiff,
    level: str | None,
    forced: bool,
    stale: list,
    waived: list | tuple = (),
    vocab=None,
    earlier=None,
) -> dict:
    """The changelog as plain data (what ``changelog.json`` holds).

    ``waived``: the release gates the owner released past, each ``{"gate", "reason",
    "problems"}`` (see :func:`kgkit.release.gates.waived_record`). ``vocab``: the
    released :class:`~kgkit.vocab.model.Vocabulary`, whose report lists the names
    carried from deprecated topics to their replacements, the names that no
    longer match any topic and those that no longer match their topic but lead to
    other topics now (``names_carried``, ``names_lost``, ``names_moved``: each with
    ``now``, ``[{"topic", "label"}]``; topics by label). ``earlier``: the previous
    release's Vocabulary; a name it had carried already, with the same result, is
    not listed again (the changelog says what changed since it).
    """
    carried, lost, moved = _names(vocab, previous, earlier)
    return {
        "vocabulary": name,
        "version": version,
        "previous": previous,
        "level": level if previous is not None else None,
        "reason": _reason(level, previous, forced),
        "counts": diff.counts() if previous is not None else {},
        "changes": [c.to_json() for c in diff.changes] if previous is not None else [],
        "stale_curation": stale,
        "waived_gates": list(waived),
        "names_carried": carried,
        "names_lost": lost,
        "names_moved": moved,
    }


def _carried_key(c: dict) -> tuple:
    return tuple(c.get(k) for k in ("from", "to", "language", "name", "result"))


def _names(vocab, previous, earlier=None) -> tuple[list[dict], list[dict], list[dict]]:
    if vocab is None or previous is None:
        return [], [], []
    report = vocab.report
    known = set()
    if earlier is not None and earlier.report is not None:
        known = {_carried_key(c) for c in earlier.report.carried_names or ()}

    def label(tid):
        return vocab.display_label(tid) if tid in vocab else None

    carried = [
        {**c, "from_label": label(c["from"]), "to_label": label(c["to"])}
        for c in report.carried_names or ()
        if _carried_key(c) not in known
    ]
    fields = ("name", "language", "topic", "label", "reason", "kind")
    lost = [
        {k: n.get(k) for k in fields} for n in report.lost_names or () if not n.get("still_matches")
    ]
    # a word that stopped matching its topic but leads to others: not lost to annotators,
    # but it tags something else now, which the owner must see
    moved = [
        {
            **{k: n.get(k) for k in fields},
            "now": [{"topic": t, "label": label(t)} for t in n["still_matches"]],
        }
        for n in report.lost_names or ()
        if n.get("still_matches")
    ]
    for names in (lost, moved):
        names.sort(key=lambda n: (n["name"].casefold(), n["name"], n["language"], n["topic"]))
    return carried, lost, moved


def changelog_json(data: dict) -> str:
    return json.dumps(data, sort_keys=True, ensure_ascii=False, indent=2) + "\n"


def changelog_markdown(data: dict, diff: VocabDiff) -> str:
    """Readable changelog: a summary, then one section per kind of change."""
    lines = [f"# {data['vocabulary']} {data['version']}", ""]
    if data.get("waived_gates"):
        lines += ["## Release gates waived", ""]
        for w in data["waived_gates"]:
            lines.append(f"- {w['gate']}, because: {w['reason']}")
            lines += [f"  - {p}" for p in w["problems"]]
        lines.append("")
    if data["previous"] is None:
        lines += ["First release.", ""]
    else:
        lines += [
            f"Changes since {data['previous']}. Version: {data['level'] or 'given'} "
            f"({data['reason']}).",
            "",
        ]
        if not diff.changes:
            lines += ["No topic changed.", ""]
        else:
            lines += ["| change | topics |", "|---|---|"]
            lines += [f"| {k} | {n} |" for k, n in data["counts"].items()]
            lines.append("")
            for kind, title in _SECTIONS:
                items = [c for c in diff.changes if c.kind == kind]
                if not items:
                    continue
                lines += [f"## {title}", ""]
                lines += [f"- {describe(c)}" for c in items]
                lines.append("")
    from kgkit.wording import topic_text

    if data.get("names_lost"):
        lines += [
            "## Names no longer matched",
            "",
            "Annotators lose these words: no topic of this release matches them.",
            "",
        ]
        for n in data["names_lost"]:
            lines.append(
                f"- {json.dumps(n['name'], ensure_ascii=False)} [{n['language'] or 'untagged'}],"
                f" was a name of {topic_text(n['label'], n['topic'])}: {n['reason']}"
            )
        lines.append("")
    if data.get("names_moved"):
        lines += [
            "## Names now matching other topics",
            "",
            "These words no longer match their topic: annotators get the topics named"
            " after each line instead.",
            "",
        ]
        for n in data["names_moved"]:
            now = ", ".join(topic_text(t["label"], t["topic"]) for t in n["now"])
            lines.append(
                f"- {json.dumps(n['name'], ensure_ascii=False)} [{n['language'] or 'untagged'}],"
                f" was a name of {topic_text(n['label'], n['topic'])}: {n['reason']}"
                f" (now matches {now})"
            )
        lines.append("")
    if data.get("names_carried"):
        lines += ["## Names carried to a replacement", ""]
        for c in data["names_carried"]:
            lines.append(
                f"- {json.dumps(c['name'], ensure_ascii=False)} [{c['language'] or 'untagged'}]"
                f" from {topic_text(c['from_label'], c['from'])}"
                f" to {topic_text(c['to_label'], c['to'])}: {c['result']}"
            )
        lines.append("")
    if data["stale_curation"]:
        lines += ["## Curation edits that no longer apply", ""]
        for edit in data["stale_curation"]:
            lines.append(f"- {_edit_line(edit)}")
        lines.append("")
    return "\n".join(lines).rstrip("\n") + "\n"


def _edit_line(edit) -> str:
    """``FILE:LINE: edit N (action target): its fields: reason [note: ...]``."""
    from kgkit.vocab.curation import edit_text

    if not isinstance(edit, dict):
        return str(edit)
    skip = {"edit", "action", "target", "reason", "note", "file", "line", "carried"}
    skip.add("overridden_by")
    args = ", ".join(
        f"{k}: {json.dumps(v, ensure_ascii=False)}"
        for k, v in sorted(edit.items())
        if k not in skip
    )
    line = edit_text(edit) + (f", {args}" if args else "")
    if edit.get("reason"):
        line += f": {edit['reason']}"
    if edit.get("note"):
        line += f" [note: {edit['note']}]"
    return line
