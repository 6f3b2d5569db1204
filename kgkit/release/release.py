"""Making a release: a fresh compile, deprecations, the version, changelog and manifest.

A release of vocabulary ``NAME`` is the folder ``vocab/NAME/VERSION/`` beside the
spec. It is written into a hidden temporary folder and renamed into place; an
existing release folder is never touched. Its files are byte-for-byte the same
for the same inputs (store content, spec, curation, templates, previous release),
except the ``released`` time inside ``manifest.json``, which no hash covers.

Deprecation: a topic of the previous release that the fresh compile no longer
has stays in the release as ``status: deprecated`` (no parents, no aliases, no
lexicon rows). Its ``replaced_by`` is found, in this order: the topic the curation
merged it into (the compile already marks those), an active topic whose source the
old topic's recorded ``same_as`` links name or whose own ``same_as`` names the old
source, then the graph itself: entities linked to the old source by the profile's
``same_as`` predicates, in either direction and over several steps, that are
sources of active topics. Several candidates: the lowest id. When the same source
entity simply has a new id (a clash suffix came or went), that topic replaces it. A topic already
deprecated in the previous release is carried over, its replacement followed to
an active topic when that one was deprecated in turn.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import shutil
import tempfile
from dataclasses import dataclass
from pathlib import Path

import kgkit
from kgkit.errors import KgkitError
from kgkit.release.changelog import changelog_data, changelog_json, changelog_markdown
from kgkit.release.diffing import VocabDiff, diff_topics, read_report, read_topics
from kgkit.release.manifest import (
    MANIFEST,
    content_hash,
    file_sha256,
    hash_files,
    manifest_json,
    source_entries,
)
from kgkit.release.versioning import Version, list_releases, next_version
from kgkit.workspace import Workspace

__all__ = ["ReleaseError", "ReleaseResult", "find_replacements", "make_release"]

#: build files a release carries over (report.txt, the human summary, stays in the build)
RELEASE_FILES = ("topics.jsonl", "topics.yaml", "skos.ttl", "lexicon.tsv", "report.json")


class ReleaseError(KgkitError):
    """A release cannot be made (existing folder, missing build output, ...)."""


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
        }


def _active(t: dict) -> bool:
    return t.get("status", "active") != "deprecated"


def _graph_links(ws: Workspace, sources: list[str], graphs) -> dict[str, set[str]]:
    """old source IRI -> IRIs linked to it by the profile's same_as predicates (any direction)."""
    preds = list(ws.profile["same_as"])
    if not preds or not sources:
        return {}
    from kgkit.query import connect, run_query

    step = "|".join(f"<{p}>|^<{p}>" for p in preds)
    out: dict[str, set[str]] = {}
    with connect(ws) as backend:
        for s in sources:
            # one source per query, inline: the optimiser uses a constant subject
            q = f"SELECT DISTINCT ?o WHERE {{ <{s}> ({step})+ ?o . FILTER(isIRI(?o)) }}"
            res = run_query(backend, q, graphs=list(graphs) if graphs else None)
            out[s] = {row[0].value for row in res.rows if row[0] is not None} - {s}
    return out


def find_replacements(
    ws: Workspace | None, gone: dict[str, dict], new: dict[str, dict], graphs=None
) -> dict[str, tuple[str | None, str | None]]:
    """Topic id -> (replacement id or None, how it was found) for topics ``gone``
    from the compile, among the active topics of ``new``."""
    by_source = {t["source"]: i for i, t in new.items() if t.get("source") and _active(t)}
    linked_back: dict[str, set[str]] = {}
    for i, t in new.items():
        if _active(t):
            for s in t.get("same_as") or []:
                linked_back.setdefault(s, set()).add(i)
    needs_graph = []
    out: dict[str, tuple[str | None, str | None]] = {}
    for tid, t in sorted(gone.items()):
        if t.get("source") in by_source:  # the same entity under a new id
            out[tid] = (by_source[t["source"]], "same-source")
            continue
        cands = {by_source[s] for s in t.get("same_as") or [] if s in by_source}
        cands |= linked_back.get(t.get("source") or "", set())
        if cands:
            out[tid] = (min(cands), "same-as")
        elif t.get("source"):
            needs_graph.append(tid)
        else:
            out[tid] = (None, None)
    if needs_graph and ws is not None:
        links = _graph_links(ws, sorted({gone[t]["source"] for t in needs_graph}), graphs)
        for tid in needs_graph:
            cands = {by_source[o] for o in links.get(gone[tid]["source"], ()) if o in by_source}
            out[tid] = (min(cands), "graph-link") if cands else (None, None)
    for tid in needs_graph:
        out.setdefault(tid, (None, None))
    return out


def _follow(rep: str | None, records: dict[str, dict]) -> str | None:
    """Follow replacements of deprecated topics to an active one; keep ``rep`` if the
    chain ends nowhere active (a deprecated successor is still the truth)."""
    start, seen = rep, set()
    while rep and rep in records and not _active(records[rep]) and rep not in seen:
        seen.add(rep)
        rep = records[rep].get("replaced_by")
    return rep if rep in records and _active(records[rep]) else start


def _deprecated_record(t: dict, rep: str | None) -> dict:
    r = dict(t)
    # same shape as the compiler's merged topics: no place in the hierarchy, no aliases
    r.update(status="deprecated", replaced_by=rep, parents=[], depth=None, aliases={})
    return r


def _label_tags(skos_path: Path, records: list[dict]) -> dict[str, dict[str, str]]:
    """Recover the compile's lent-label language tags (``fallback-label:LANG`` flags)
    from its SKOS file, so that re-writing it gives the same bytes."""
    wanted = {
        r["iri"]: r
        for r in records
        if any(f.startswith("fallback-label:") for f in r.get("flags") or [])
    }
    if not wanted or not skos_path.is_file():
        return {}
    import pyoxigraph as ox

    pref = "http://www.w3.org/2004/02/skos/core#prefLabel"
    found: dict[str, list[tuple[str, str]]] = {}
    with open(skos_path, "rb") as fh:
        for t in ox.parse(fh, format=ox.RdfFormat.TURTLE):
            if t.predicate.value == pref and t.subject.value in wanted:
                found.setdefault(t.subject.value, []).append(
                    (t.object.value, t.object.language or "")
                )
    out = {}
    for iri, r in wanted.items():
        tags = {}
        for f in r["flags"]:
            if f.startswith("fallback-label:"):
                lang = f.split(":", 1)[1]
                text = r["labels"].get(lang)
                tag = next((tg for x, tg in sorted(found.get(iri, [])) if x == text), None)
                if tag is not None and tag != lang:
                    tags[lang] = tag
        if tags:
            out[r["id"]] = tags
    return out


def _read_lexicon(path: Path) -> list[tuple]:
    rows = []
    with open(path, encoding="utf-8", newline="\n") as fh:
        next(fh, None)
        for line in fh:
            alias, key, tid, lang, kind, shared = line.rstrip("\n").split("\t")
            rows.append((alias, key, tid, lang, kind, int(shared)))
    return rows


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
) -> ReleaseResult:
    """Compile the spec afresh and release it as ``vocab/<name>/<version>/``.

    ``version``: the version to use instead of the one the rules give; it must be
    greater than the previous release. With nothing changed since the previous
    release and no ``version``, raises :class:`NothingChangedError` (no release is
    written; the build folder holds the fresh compile). Raises :class:`ReleaseError`
    when the release folder exists, or when the store or an input file changed while
    the release was being made.
    """
    from kgkit.vocab.compile import Build, compile_vocabulary
    from kgkit.vocab.spec import load_spec

    spec = load_spec(ws, spec_path)
    if "jsonl" not in spec.outputs:
        raise ReleaseError(f"{spec.path}: a release needs the 'jsonl' output (key 'outputs')")
    home = spec.path.parent / spec.name
    releases = list_releases(home)
    previous = releases[-1] if releases else None
    if version is not None:
        wanted = Version.parse(version)
        if (home / str(wanted)).exists():
            raise ReleaseError(f"{home / str(wanted)}: release exists already; not overwriting it")

    # the inputs, taken before the compile and checked again after it
    inputs = _inputs(ws, spec)
    result = compile_vocabulary(ws, spec.path, strict=strict, progress=progress)
    build = Path(result.output)
    report = json.loads((build / "report.json").read_text(encoding="utf-8"))
    new = read_topics(build / "topics.jsonl")

    old: dict[str, dict] = {}
    old_report = None
    if previous is not None:
        pdir = home / str(previous)
        old = read_topics(pdir / "topics.jsonl")
        old_report = read_report(pdir)

    # deprecations: topics of the previous release the compile no longer has
    gone = {i: t for i, t in old.items() if i not in new}
    fresh_gone = {i: t for i, t in gone.items() if _active(t)}
    reps = find_replacements(ws, fresh_gone, new, spec.graphs) if fresh_gone else {}
    records = dict(new)
    deprecated = []
    for tid in sorted(gone):
        t = gone[tid]
        if _active(t):
            rep, via = reps.get(tid, (None, None))
            records[tid] = _deprecated_record(t, rep)
            deprecated.append({"id": tid, "replaced_by": rep, "via": via})
        else:
            records[tid] = dict(t)
    for tid, r in records.items():
        if not _active(r) and r.get("replaced_by"):
            followed = _follow(r["replaced_by"], records)
            if followed != r["replaced_by"]:
                records[tid] = dict(r, replaced_by=followed)
                for d in deprecated:
                    if d["id"] == tid:
                        d["replaced_by"] = followed
    ordered = [records[i] for i in sorted(records)]

    if deprecated or len(records) != len(new):
        report = dict(report)
        report["counts"] = dict(
            report["counts"], deprecated=len(ordered) - sum(map(_active, ordered))
        )
        report["release_deprecations"] = deprecated
        files = Build(
            spec,
            ordered,
            _read_lexicon(build / "lexicon.tsv") if "lexicon" in spec.outputs else [],
            report,
            _label_tags(build / "skos.ttl", list(new.values())),
        ).files()
        files.pop("report.txt", None)
        if "lexicon" in spec.outputs:
            files["lexicon.tsv"] = (build / "lexicon.tsv").read_text(encoding="utf-8")
    else:
        files = {
            n: (build / n).read_text(encoding="utf-8")
            for n in RELEASE_FILES
            if (build / n).is_file()
        }

    diff = diff_topics(
        old, records, old_report, report, str(previous) if previous else "none", "release"
    )
    if previous is None:
        diff.changes = []  # nothing to compare a first release with
    ver, level = next_version(previous, diff.kinds() if previous else [], version)
    target = home / str(ver)
    if target.exists():
        raise ReleaseError(f"{target}: release exists already; not overwriting it")
    stale = (report.get("curation") or {}).get("stale") or []
    cl = changelog_data(
        spec.name,
        str(ver),
        str(previous) if previous else None,
        diff,
        level,
        version is not None,
        stale,
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
    tmp = Path(tempfile.mkdtemp(prefix=f".{ver}.tmp-", dir=home))
    try:
        for name in sorted(files):
            _write(tmp, name, files[name])
        hashed = hash_files(tmp, files)
        active_n = sum(map(_active, ordered))
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
                "lexicon_rows": report["counts"].get("lexicon_rows"),
                "changes": len(diff.changes),
                "stale_curation": len(stale),
            },
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
        deprecated, stale, manifest,
    )  # fmt: skip
