"""Making a release: a fresh compile, deprecations, the version, changelog and manifest.

A release of vocabulary ``NAME`` is the folder ``vocab/NAME/VERSION/`` beside the
spec. It is written into a hidden temporary folder and renamed into place; an
existing release folder is never touched. Its files are byte-for-byte the same
for the same inputs (store content, spec, curation, templates, previous release),
except the ``released`` time inside ``manifest.json``, which no hash covers.

The release works on the vocabulary the compile returns, in memory: nothing of
the build folder is read back. Deprecation of the previous release's topics that
the compile no longer has is described in :mod:`kgkit.vocab.succession`.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import kgkit
from kgkit.errors import ReleaseError
from kgkit.release.changelog import changelog_data, changelog_json, changelog_markdown
from kgkit.release.diffing import VocabDiff, diff_topics
from kgkit.release.manifest import (
    MANIFEST,
    content_hash,
    file_sha256,
    hash_files,
    manifest_json,
    source_entries,
    verify_release,
)
from kgkit.release.versioning import (
    Version,
    clear_leftovers,
    next_version,
    scan_releases,
    temp_prefix,
)
from kgkit.vocab.folder import read_vocabulary, vocabulary_files
from kgkit.vocab.succession import find_replacements
from kgkit.workspace import Workspace

__all__ = [
    "ReleaseError",
    "ReleaseResult",
    "check_previous",
    "find_replacements",
    "make_release",
]


@dataclass
class ReleaseResult:
    """What :func:`make_release` wrote."""

    name: str
    version: str
    previous: str | None
    level: str | None
    path: Path
    diff: VocabDiff
    deprecated: list[dict]
    stale: list[dict]
    manifest: dict
    warnings: list[str] = field(default_factory=list)
    #: the release gates waived, as the manifest records them (``overrides``)
    overrides: list[dict] = field(default_factory=list)
    #: the released vocabulary (for labels beside ids in what a person reads)
    vocabulary: object = None

    def lost_names(self) -> list[dict]:
        """The previous release's names that no topic of this release matches (the
        words annotators lose), as the report lists them."""
        report = getattr(self.vocabulary, "report", None)
        lost = (report.lost_names or []) if report is not None else []
        return [n for n in lost if not n.get("still_matches")]

    def topic_text(self, topic_id: str | None) -> str:
        """A topic as a person reads it: its label beside its id."""
        from kgkit.wording import topic_text

        if topic_id is None:
            return "(no replacement)"
        v = self.vocabulary
        return topic_text(v.display_label(topic_id) if v is not None else None, topic_id)

    def summary(self) -> dict:
        return {
            "name": self.name,
            "version": self.version,
            "previous": self.previous,
            "level": self.level,
            "path": str(self.path),
            "changes": self.diff.counts(),
            "deprecated": [d["id"] for d in self.deprecated],
            "stale": len(self.stale),
            "content_sha256": self.manifest["content_sha256"],
            "warnings": self.warnings,
            "waived": [o["gate"] for o in self.overrides],
            "names_lost": len(self.lost_names()),
        }


def _rel(path: Path | None, root: Path) -> str | None:
    if path is None:
        return None
    p = Path(path).resolve()
    try:
        return p.relative_to(root.resolve()).as_posix()
    except ValueError:
        return p.as_posix()


def _template_entries(ws: Workspace, spec) -> list[dict]:
    from kgkit.templates import load_template

    names = {s.template for s in spec.select}
    if spec.prune.min_popularity is not None:
        names.add(spec.prune.min_popularity.template)
    out = []
    for name in sorted(names):
        tpl = load_template(ws, name)
        p = Path(tpl.path)
        digest = file_sha256(p) if p.is_file() else None
        out.append({"name": name, "builtin": bool(tpl.builtin), "sha256": digest})
    return out


def _sources(ws: Workspace, spec) -> list[dict]:
    from kgkit.store import list_graphs, open_store

    with open_store(ws.store_path) as store:
        graphs = list_graphs(store)
    if spec.graphs is not None:
        graphs = [g for g in graphs if g.name in set(spec.graphs)]
    return source_entries(graphs)


def _inputs(ws: Workspace, spec) -> dict:
    """The manifest's record of what the compile read: graphs, spec, curation, templates."""
    curation = spec.curation if spec.curation and spec.curation.is_file() else None
    return {
        "sources": _sources(ws, spec),
        "spec": {"path": _rel(spec.path, ws.root), "sha256": file_sha256(spec.path)},
        "curation": {
            "path": _rel(spec.curation, ws.root),
            "sha256": file_sha256(curation) if curation else None,
        },
        "templates": _template_entries(ws, spec),
    }


def check_previous(home: Path, releases: list[Version], name: str) -> None:
    """Refuse to build on the newest release of ``home`` unless it verifies: its files
    against its manifest, the manifest's metadata, and its place after the release
    before it. Raises :class:`ReleaseError` naming the first problem."""
    previous = releases[-1]
    folder = home / str(previous)
    res = verify_release(folder, name=name)
    if res.ok:
        before = str(releases[-2]) if len(releases) > 1 else None
        got = json.loads((folder / MANIFEST).read_text(encoding="utf-8")).get("previous")
        if got != before:
            res.problems.append(
                {
                    "file": MANIFEST,
                    "problem": f"'previous' is {json.dumps(got)} but the release before it "
                    f"is {json.dumps(before)}",
                }
            )
    if not res.ok:
        n = len(res.problems)
        more = f" (and {n - 1} more problem{'' if n == 2 else 's'})" if n > 1 else ""
        raise ReleaseError(
            f"{res.first_problem()}{more}; the previous release {previous} does not verify, "
            "so nothing was released on top of it"
        )


def _check_target(target: Path, strays: list[Path]) -> None:
    if target in strays:
        raise ReleaseError(
            f"{target}: a folder holding no manifest.json is in the way of release "
            f"{target.name}; move it away or give another version"
        )
    if target.exists() or target.is_symlink():
        raise ReleaseError(f"{target}: release exists already; not overwriting it")


def _write(folder: Path, name: str, text: str) -> None:
    with open(folder / name, "w", encoding="utf-8", newline="\n") as fh:
        fh.write(text)


def make_release(
    ws: Workspace,
    spec_path: Path | str,
    version: str | None = None,
    strict: bool = False,
    now: _dt.datetime | None = None,
    progress=None,
    waive: tuple[str, ...] | list[str] = (),
    reason: str | None = None,
) -> ReleaseResult:
    """Compile the spec afresh and release it as ``vocab/<name>/<version>/``.

    ``version``: the version to use instead of the one the rules give; it must be
    greater than the previous release. With nothing changed since the previous
    release and no ``version``, raises :class:`NothingChangedError` (no release is
    written; the build folder holds the fresh compile). Raises :class:`ReleaseError`
    when the release folder exists, or when the store or an input file changed while
    the release was being made.

    Before anything is written the vocabulary must pass the release gates
    (:mod:`kgkit.release.gates`); otherwise :class:`~kgkit.errors.GateError` lists
    every problem. ``waive``: gate names (or ``all``) to release past anyway, with
    ``reason``; the manifest (``overrides``) and the changelog record them.
    """
    from kgkit.release.gates import check_waivers, gate_error, vocabulary_gates, waived_record
    from kgkit.vocab.compile import compile_vocabulary, display_languages
    from kgkit.vocab.curation import load_curation
    from kgkit.vocab.spec import load_spec

    waived = check_waivers(waive, reason)
    spec = load_spec(ws, spec_path)
    if "jsonl" not in spec.outputs:
        raise ReleaseError(f"{spec.path}: a release needs the 'jsonl' output (key 'outputs')")
    home = spec.path.parent / spec.name
    clear_leftovers(home)
    found = scan_releases(home)
    releases = found.releases
    previous = releases[-1] if releases else None
    if previous is not None:
        check_previous(home, releases, spec.name)
    if version is not None:
        wanted = Version.parse(version)
        _check_target(home / str(wanted), found.strays)

    # the inputs, taken before the compile and checked again after it
    inputs = _inputs(ws, spec)
    # the compile follows on the previous release: its topics that are gone stay as
    # deprecated and hand their names to their replacements (kgkit.vocab.succession)
    before = None
    old: dict = {}
    old_report = None
    if previous is not None:
        before = read_vocabulary(home / str(previous), display_languages(spec))
        old, old_report = before.by_id, before.report
    result = compile_vocabulary(
        ws, spec, strict=strict, progress=progress, previous=before, gates=False
    )  # the gates run below, on the files the release writes
    vocab = result.vocabulary
    records = vocab.by_id
    ordered = vocab.topics
    report = vocab.report
    deprecated = list(report.release_deprecations or [])
    files = {
        name: make()
        for name, make in vocabulary_files(vocab, spec.outputs).items()
        if name != "report.txt"  # the human summary stays in the build
    }

    # the gates, on the vocabulary as it would be released
    problems = vocabulary_gates(
        ws,
        spec,
        vocab,
        load_curation(spec.curation) if spec.curation else (),
        previous=before if previous is not None else None,
        previous_name=f"release {previous}" if previous is not None else None,
    )
    refused = [p for p in problems if p.gate not in waived]
    if refused:
        raise gate_error(
            spec.path,
            refused,
            "nothing released",
            "waive='GATE' with reason='WHY' releases anyway",
        )
    overrides = waived_record(problems, waived, reason)

    diff = diff_topics(
        old,
        records,
        old_report,
        report,
        str(previous) if previous else "none",
        "release",
        vocab.languages,
    )
    if previous is None:
        diff.changes = []  # nothing to compare a first release with
    ver, level = next_version(previous, diff.kinds() if previous else [], version)
    target = home / str(ver)
    _check_target(target, found.strays)
    stale = report.stale_edits
    cl = changelog_data(
        spec.name,
        str(ver),
        str(previous) if previous else None,
        diff,
        level,
        version is not None,
        stale,
        overrides,
        vocab,
        earlier=before,
    )
    diff = VocabDiff(str(previous) if previous else "none", str(ver), diff.changes)
    files["changelog.json"] = changelog_json(cl)
    files["changelog.md"] = changelog_markdown(cl, diff)

    again = _inputs(ws, spec)
    changed = sorted(k for k in inputs if inputs[k] != again[k])
    if changed:
        raise ReleaseError(
            f"{spec.path}: {' and '.join(changed)} changed while the release was made; "
            "nothing released, run it again"
        )
    home.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=temp_prefix(ver), dir=home))
    try:
        for name in sorted(files):
            _write(tmp, name, files[name])
        hashed = hash_files(tmp, files)
        active_n = sum(1 for t in ordered if t.is_active)
        manifest = {
            "name": spec.name,
            "version": str(ver),
            "previous": str(previous) if previous else None,
            "files": hashed,
            "content_sha256": content_hash(hashed),
            **inputs,
            "kgkit_version": kgkit.__version__,
            "counts": {
                "topics": active_n,
                "deprecated": len(ordered) - active_n,
                "lexicon_rows": report.counts.get("lexicon_rows"),
                "changes": len(diff.changes),
                "stale_curation": len(stale),
            },
            **({"overrides": overrides} if overrides else {}),
            "released": (now or _dt.datetime.now(_dt.UTC))
            .astimezone(_dt.UTC)
            .strftime("%Y-%m-%dT%H:%M:%SZ"),
        }
        _write(tmp, MANIFEST, manifest_json(manifest))
        os.chmod(tmp, 0o755)
        if target.exists():
            raise ReleaseError(f"{target}: release exists already; not overwriting it")
        os.rename(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return ReleaseResult(
        spec.name, str(ver), str(previous) if previous else None, level, target, diff,
        deprecated, stale, manifest, found.warnings(), overrides, vocab,
    )  # fmt: skip
