"""The manifest of a release: what is in it, where it came from, and checking it.

``manifest.json`` (sorted keys, 2-space indent) holds

- ``files``: name -> ``{"sha256", "bytes"}`` for every other file of the release;
- ``content_sha256``: sha256 of the listing ``<sha256>  <name>\\n`` of those files,
  sorted by name (the same lines ``sha256sum`` prints, so it can be checked by hand);
- ``sources``: each graph the vocabulary was compiled from, with the sha256, size
  and name of each dump file imported into it, a ``sha256`` for the graph (the dump's
  own when there is one file, else the sha256 of the listing of its files) and the
  import counts (``loaded`` = distinct triples);
- ``spec``, ``curation``, ``templates``: path and sha256 of the inputs of the compile;
- ``name``, ``version``, ``previous``, ``kgkit_version``, ``counts``;
- ``overrides`` (only when the owner released past a gate): each gate overridden and why;
- ``released``: the release time (UTC). It is the one value that differs between two
  releases of the same inputs, and no hash covers it.

What :func:`verify_release` proves, and what it cannot: every file listed is a
regular file inside the folder (no symbolic link, no path leaving it) whose bytes
hash to the recorded sha256; nothing else lies in the folder; the recorded
``content_sha256`` matches the list; and the manifest's own metadata agrees with
itself and with the files (version matches the folder name, ``previous`` is an
earlier version, source hashes are well formed and the graph hash matches its
files, the counts match the topic file, the lexicon and the changelog, the tool
version is one this kgkit can read). It detects accidents and careless edits. It
cannot detect someone who rewrites a file *and* its hash (and the counts) together:
the manifest is not signed, so a release is only as trustworthy as the folder's
owner. Keep a copy of ``content_sha256`` elsewhere to pin a release.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
from dataclasses import dataclass, field
from pathlib import Path

from kgkit.errors import KgkitError, ManifestError, one_line
from kgkit.inputs import decode_text, load_json

__all__ = [
    "MANIFEST",
    "ManifestError",
    "VerifyResult",
    "content_hash",
    "file_sha256",
    "hash_files",
    "manifest_json",
    "read_manifest",
    "source_entries",
    "verify_release",
]

MANIFEST = "manifest.json"

_HEX64 = re.compile(r"^[0-9a-f]{64}$")
_SEMVER = re.compile(r"^(0|[1-9]\d*)\.(0|[1-9]\d*)\.(0|[1-9]\d*)$")
_TOOL_VERSION = re.compile(r"^(\d+)\.(\d+)(?:\.(\d+))?(?:[.+-]?[A-Za-z0-9.+-]*)?$")
_RELEASED = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z$")


def file_sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def hash_files(folder: Path, names) -> dict[str, dict]:
    """name -> {"sha256", "bytes"} for the files ``names`` of ``folder``."""
    out = {}
    for name in sorted(names):
        p = Path(folder) / name
        out[name] = {"sha256": file_sha256(p), "bytes": p.stat().st_size}
    return out


def content_hash(files: dict[str, dict]) -> str:
    """sha256 of the ``sha256sum``-style listing of ``files`` (sorted by name)."""
    listing = "".join(f"{files[n]['sha256']}  {n}\n" for n in sorted(files))
    return hashlib.sha256(listing.encode("utf-8")).hexdigest()


def _listing_hash(files: list[dict]) -> str:
    """A graph's hash: its one dump's sha256, else the sha256 of the listing of its dumps."""
    if len(files) == 1:
        return files[0]["sha256"]
    listing = "".join(f"{f['sha256']}  {f['name']}\n" for f in files)
    return hashlib.sha256(listing.encode("utf-8")).hexdigest()


def source_entries(graphs) -> list[dict]:
    """Manifest entries for :class:`kgkit.store.GraphInfo` records (no times, no ids:
    they change when the same dump is imported again)."""
    out = []
    for g in sorted(graphs, key=lambda g: g.name):
        files = [
            {"name": Path(f.name).name, "sha256": f.sha256, "bytes": f.size, "format": f.format}
            for f in g.files
        ]
        out.append(
            {
                "graph": g.name,
                "sha256": _listing_hash(files),
                "triples": g.counts.get("loaded"),
                "counts": dict(sorted(g.counts.items())),
                "files": files,
            }
        )
    return out


def manifest_json(data: dict) -> str:
    return json.dumps(data, sort_keys=True, ensure_ascii=False, indent=2) + "\n"


@dataclass
class VerifyResult:
    """Outcome of checking a release folder against its manifest.

    ``problems``: ``{"file", "problem"}`` records, ``file`` being a name inside the
    folder (``manifest.json`` for its metadata, ``.`` for the folder itself).
    """

    path: str
    version: str | None
    checked: int = 0
    problems: list[dict] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.problems

    def to_json(self) -> dict:
        return {
            "path": self.path,
            "version": self.version,
            "checked": self.checked,
            "ok": self.ok,
            "problems": self.problems,
        }

    def to_text(self) -> str:
        lines = [f"{one_line(p['file'])}: {one_line(p['problem'])}" for p in self.problems]
        if self.ok:
            lines.append(f"{self.path}: release {self.version} intact ({self.checked} files)")
        else:
            n = len(self.problems)
            lines.append(f"{self.path}: {n} problem{'' if n == 1 else 's'}")
        return "\n".join(lines) + "\n"

    def first_problem(self) -> str:
        """The first problem as ``FOLDER/FILE: cause`` (one line), or '' when intact."""
        if self.ok:
            return ""
        p = self.problems[0]
        where = self.path if p["file"] == "." else f"{self.path}/{p['file']}"
        return f"{one_line(where)}: {one_line(p['problem'])}"


def read_manifest(folder: Path) -> dict:
    """The manifest of a release folder as a mapping whose ``files`` maps each name
    to ``{"sha256": hex text, "bytes": int}``; :class:`ManifestError` otherwise."""
    folder = Path(folder)
    if not folder.is_dir():
        what = "no such folder" if not folder.exists() else "not a folder"
        raise ManifestError(
            f"{one_line(str(folder))}: {what}; a release is a folder holding {MANIFEST}"
        )
    path = folder / MANIFEST
    try:
        if path.is_symlink():
            raise ManifestError(
                f"{one_line(str(path))}: a symbolic link; a release's manifest is a regular file"
            )
        raw = path.read_bytes()
    except FileNotFoundError:
        raise ManifestError(f"{one_line(str(path))}: no manifest; not a release folder") from None
    except IsADirectoryError:
        raise ManifestError(f"{one_line(str(path))}: a folder, not a manifest file") from None
    except PermissionError:
        raise ManifestError(f"{one_line(str(path))}: cannot be read (permission denied)") from None
    except OSError as exc:
        raise ManifestError(f"{one_line(str(path))}: cannot be read ({exc.strerror})") from None
    # kgkit.inputs: UTF-8, nesting and integers bounded, no NaN (one line naming the line)
    data = load_json(decode_text(raw, str(path), ManifestError), str(path), ManifestError)
    if not isinstance(data, dict) or not isinstance(data.get("files"), dict):
        raise ManifestError(f"{one_line(str(path))}: malformed manifest (no 'files' object)")
    for name, entry in data["files"].items():
        if (
            not isinstance(entry, dict)
            or not isinstance(entry.get("sha256"), str)
            or not isinstance(entry.get("bytes"), int)
            or isinstance(entry.get("bytes"), bool)
        ):
            raise ManifestError(
                f"{one_line(str(path))}: malformed manifest (entry {one_line(json.dumps(name))} of "
                "'files' is not an object with 'sha256' text and 'bytes' number)"
            )
    return data


def _is_plain_name(name: str) -> bool:
    return bool(name) and "/" not in name and "\\" not in name and name not in (".", "..")


def _check_files(folder: Path, files: dict, res: VerifyResult) -> set[str]:
    """Hash every listed file; returns the names found intact."""
    intact = set()
    for name in sorted(files):
        res.checked += 1
        if not _is_plain_name(name) or "\x00" in name:
            res.problems.append({"file": name, "problem": "not a plain file name"})
            continue
        p = folder / name
        if p.is_symlink():
            res.problems.append(
                {
                    "file": name,
                    "problem": f"a symbolic link (to {os.readlink(p)}); "
                    "a release holds only regular files",
                }
            )
            continue
        if not p.exists():
            res.problems.append({"file": name, "problem": "missing"})
            continue
        if not p.is_file():
            res.problems.append({"file": name, "problem": "not a regular file"})
            continue
        try:
            actual = file_sha256(p)
        except OSError as exc:
            res.problems.append({"file": name, "problem": f"cannot be read ({exc.strerror})"})
            continue
        expected = files[name]["sha256"]
        if actual != expected:
            res.problems.append(
                {"file": name, "problem": f"changed (sha256 {actual}, manifest says {expected})"}
            )
            continue
        size = p.stat().st_size
        if size != files[name]["bytes"]:
            res.problems.append(
                {"file": name, "problem": f"{size} bytes, manifest says {files[name]['bytes']}"}
            )
            continue
        intact.add(name)
    for p in sorted(folder.iterdir()):
        if p.name == MANIFEST or p.name in files:
            continue
        what = "not listed in the manifest"
        if p.is_symlink():
            what = f"a symbolic link (to {os.readlink(p)}), not listed in the manifest"
        elif p.is_dir():
            what = "a folder, not listed in the manifest"
        res.problems.append({"file": p.name, "problem": what})
    return intact


def _tool_parts(text: str) -> tuple[int, int, int] | None:
    m = _TOOL_VERSION.match(text)
    return (int(m[1]), int(m[2]), int(m[3] or 0)) if m else None


def _bad_hash(value, nullable: bool = False) -> bool:
    if value is None:
        return not nullable
    return not (isinstance(value, str) and _HEX64.match(value))


def _check_sources(sources) -> list[str]:
    """Problems with the ``sources`` entry: shape, and each graph hash against its files."""
    if not isinstance(sources, list):
        return ["'sources' is not a list of graphs"]
    out = []
    for i, src in enumerate(sources):
        if not isinstance(src, dict) or not isinstance(src.get("graph"), str):
            out.append(f"sources[{i}] is not a graph entry (an object with 'graph' text)")
            continue
        g = src["graph"]
        files = src.get("files")
        if not isinstance(files, list) or not all(
            isinstance(f, dict)
            and isinstance(f.get("name"), str)
            and not _bad_hash(f.get("sha256"))
            and isinstance(f.get("bytes"), int)
            for f in files
        ):
            out.append(
                f"source graph {g!r}: 'files' is not a list of dumps with name, sha256, bytes"
            )
            continue
        if _bad_hash(src.get("sha256"), nullable=not files):
            out.append(f"source graph {g!r}: 'sha256' is not a sha256 in hex")
        elif files and src["sha256"] != _listing_hash(files):
            out.append(f"source graph {g!r}: 'sha256' does not match the hashes of its dump files")
        triples = src.get("triples")
        if triples is not None and (not isinstance(triples, int) or triples < 0):
            out.append(f"source graph {g!r}: 'triples' is not a count")
    return out


def _check_inputs(data: dict) -> list[str]:
    out = []
    spec = data.get("spec")
    if (
        not isinstance(spec, dict)
        or not isinstance(spec.get("path"), str)
        or _bad_hash(spec.get("sha256"))
    ):
        out.append("'spec' is not an object with 'path' and 'sha256'")
    cur = data.get("curation")
    if not isinstance(cur, dict) or _bad_hash(cur.get("sha256"), nullable=True):
        out.append("'curation' is not an object with 'path' and 'sha256' (or null)")
    tpls = data.get("templates")
    if not isinstance(tpls, list) or not all(
        isinstance(t, dict)
        and isinstance(t.get("name"), str)
        and not _bad_hash(t.get("sha256"), True)
        for t in tpls
    ):
        out.append("'templates' is not a list of objects with 'name' and 'sha256'")
    return out


def _count_lines(path: Path) -> int:
    with open(path, "rb") as fh:
        return sum(1 for _ in fh)


def _actual_counts(folder: Path, intact: set[str]) -> dict[str, int]:
    """The counts the manifest records, recounted from the files found intact."""
    out: dict[str, int] = {}
    if "topics.jsonl" in intact:
        from kgkit.vocab.folder import read_topics

        topics = read_topics(folder / "topics.jsonl")
        active = sum(1 for t in topics.values() if t.is_active)
        out["topics"], out["deprecated"] = active, len(topics) - active
    if "lexicon.tsv" in intact:
        out["lexicon_rows"] = max(0, _count_lines(folder / "lexicon.tsv") - 1)
    if "changelog.json" in intact:
        cl = json.loads((folder / "changelog.json").read_text(encoding="utf-8"))
        if isinstance(cl, dict):
            out["changes"] = len(cl.get("changes") or [])
            out["stale_curation"] = len(cl.get("stale_curation") or [])
    return out


def _check_metadata(folder: Path, data: dict, intact: set[str]) -> list[str]:
    """Problems with the manifest's own metadata (each one line, without the file name)."""
    import kgkit

    out = []
    version = data.get("version")
    if not isinstance(version, str) or not _SEMVER.match(version):
        out.append(f"'version' {json.dumps(version)} is not a release version")
        version = None
    elif _SEMVER.match(folder.name) and folder.name != version:
        out.append(f"'version' {version} does not match the folder name {folder.name}")
    if not isinstance(data.get("name"), str) or not data["name"]:
        out.append("'name' is not the vocabulary's name")
    previous = data.get("previous")
    if previous is not None:
        if not isinstance(previous, str) or not _SEMVER.match(previous):
            out.append(f"'previous' {json.dumps(previous)} is not a release version")
        elif version is not None and tuple(map(int, previous.split("."))) >= tuple(
            map(int, version.split("."))
        ):
            out.append(f"'previous' {previous} is not earlier than 'version' {version}")
    tool = data.get("kgkit_version")
    parts = _tool_parts(tool) if isinstance(tool, str) else None
    if parts is None:
        out.append(f"'kgkit_version' {json.dumps(tool)} is not a version")
    else:
        mine = _tool_parts(kgkit.__version__)
        if mine is not None and parts > mine:
            out.append(
                f"'kgkit_version' {tool} is newer than this kgkit ({kgkit.__version__}); "
                "it cannot vouch for the release"
            )
    released = data.get("released")
    if not isinstance(released, str) or not _RELEASED.match(released):
        out.append("'released' is not a UTC time such as 2026-01-31T12:00:00Z")
    out.extend(_check_sources(data.get("sources")))
    out.extend(_check_inputs(data))
    overrides = data.get("overrides")
    if overrides is not None and not (
        isinstance(overrides, list)
        and all(isinstance(o, dict) and isinstance(o.get("gate"), str) for o in overrides)
    ):
        out.append("'overrides' is not a list of objects naming a 'gate'")
    counts = data.get("counts")
    if not isinstance(counts, dict):
        out.append("'counts' is not an object")
    else:
        try:
            actual = _actual_counts(folder, intact)
        except (KgkitError, ValueError, OSError) as exc:
            actual = {}
            out.append(f"cannot recount the files ({exc})")
        for key, n in sorted(actual.items()):
            if counts.get(key) != n:
                out.append(f"'counts.{key}' says {json.dumps(counts.get(key))}, the files hold {n}")
    return out


def verify_release(folder: Path | str, name: str | None = None) -> VerifyResult:
    """Check a release folder: its files against the manifest, and the manifest itself.

    Reports files changed, missing, not listed, not regular files (a symbolic link,
    even to an identical copy, is a problem), a ``content_sha256`` that no longer
    matches the file list, and manifest metadata that contradicts the folder or the
    files (see the module's docstring). ``name``: the vocabulary the release must
    belong to. Raises :class:`ManifestError` when ``folder`` is not a release folder
    or its manifest cannot be read as one.
    """
    folder = Path(folder)
    data = read_manifest(folder)
    version = data.get("version")
    res = VerifyResult(str(folder), version if isinstance(version, str) else None)
    if folder.is_symlink():
        res.problems.append(
            {
                "file": ".",
                "problem": f"the release folder is a symbolic link (to {os.readlink(folder)})",
            }
        )
    files = data["files"]
    intact = _check_files(folder, files, res)
    if content_hash(files) != data.get("content_sha256"):
        res.problems.append(
            {"file": MANIFEST, "problem": "content_sha256 does not match its list of files"}
        )
    for problem in _check_metadata(folder, data, intact):
        res.problems.append({"file": MANIFEST, "problem": problem})
    if name is not None and data.get("name") != name:
        res.problems.append(
            {
                "file": MANIFEST,
                "problem": f"'name' {json.dumps(data.get('name'))} is not vocabulary {name!r}",
            }
        )
    return res
