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
    ("replacement-changed", "Replacements changed"),
)


def _reason(level: str | None, previous: str | None, forced: bool) -> str:
    if previous is None:
        return "first release"
    why = {
        "major": "a topic was removed or deprecated, or an id changed",
        "minor": "topics were added or parent links changed",
        "patch": "only labels, aliases, notations or replacements changed",
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
) -> dict:
    """The changelog as plain data (what ``changelog.json`` holds).

    ``waived``: the release gates the owner released past, each ``{"gate", "reason",
    "problems"}`` (see :func:`kgkit.release.gates.waived_record`).
    """
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
    }


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
    if data["stale_curation"]:
        lines += ["## Curation edits that no longer apply", ""]
        for edit in data["stale_curation"]:
            lines.append(f"- {_edit_line(edit)}")
        lines.append("")
    return "\n".join(lines).rstrip("\n") + "\n"


def _edit_line(edit) -> str:
    if not isinstance(edit, dict):
        return str(edit)
    skip = {"edit", "action", "target", "reason", "note"}
    args = ", ".join(
        f"{k}: {json.dumps(v, ensure_ascii=False)}"
        for k, v in sorted(edit.items())
        if k not in skip
    )
    head = f"edit {edit['edit']}: " if "edit" in edit else ""
    what = " ".join(str(edit[k]) for k in ("action", "target") if k in edit)
    line = f"{head}{what}" + (f" ({args})" if args else "")
    if edit.get("reason"):
        line += f": {edit['reason']}"
    if edit.get("note"):
        line += f" [note: {edit['note']}]"
    return line
