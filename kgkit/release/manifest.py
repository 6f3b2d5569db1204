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
- ``released``: the release time (UTC). It is the one value that differs between two
  releases of the same inputs, and no hash covers it.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path

from kgkit.errors import KgkitError

__all__ = [
    "MANIFEST",
    "ManifestError",
    "VerifyResult",
    "content_hash",
    "file_sha256",
    "hash_files",
    "manifest_json",
    "source_entries",
    "verify_release",
]

MANIFEST = "manifest.json"


class ManifestError(KgkitError):
    """A release folder has no readable manifest."""


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


def source_entries(graphs) -> list[dict]:
    """Manifest entries for :class:`kgkit.store.GraphInfo` records (no times, no ids:
    they change when the same dump is imported again)."""
    out = []
    for g in sorted(graphs, key=lambda g: g.name):
        files = [
            {"name": Path(f.name).name, "sha256": f.sha256, "bytes": f.size, "format": f.format}
            for f in g.files
        ]
        if len(files) == 1:
            digest = files[0]["sha256"]
        else:
            listing = "".join(f"{f['sha256']}  {f['name']}\n" for f in files)
            digest = hashlib.sha256(listing.encode("utf-8")).hexdigest()
        out.append(
            {
                "graph": g.name,
                "sha256": digest,
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
    """Outcome of re-hashing a release against its manifest."""

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
        lines = [f"{p['file']}: {p['problem']}" for p in self.problems]
        if self.ok:
            lines.append(f"{self.path}: release {self.version} intact ({self.checked} files)")
        else:
            n = len(self.problems)
            lines.append(f"{self.path}: {n} problem{'' if n == 1 else 's'}")
        return "\n".join(lines) + "\n"


def read_manifest(folder: Path) -> dict:
    path = Path(folder) / MANIFEST
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ManifestError(f"{path}: no manifest; not a release folder") from None
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        line = getattr(exc, "lineno", None)
        where = f"{path}:{line}" if line else str(path)
        raise ManifestError(f"{where}: malformed manifest ({exc})") from None
    if not isinstance(data, dict) or not isinstance(data.get("files"), dict):
        raise ManifestError(f"{path}: malformed manifest (no 'files' mapping)")
    return data


def verify_release(folder: Path | str) -> VerifyResult:
    """Re-hash every file of a release folder and compare with its manifest.

    Reports files changed, missing or not listed, and a manifest whose own
    ``content_sha256`` no longer matches its file list.
    """
    folder = Path(folder)
    data = read_manifest(folder)
    res = VerifyResult(str(folder), data.get("version"))
    files = data["files"]
    for name in sorted(files):
        res.checked += 1
        if not name or "/" in name or "\\" in name or name in (".", ".."):
            res.problems.append({"file": name, "problem": "not a plain file name"})
            continue
        p = folder / name
        if not p.is_file():
            res.problems.append({"file": name, "problem": "missing"})
            continue
        actual = file_sha256(p)
        expected = files[name].get("sha256")
        if actual != expected:
            res.problems.append(
                {
                    "file": name,
                    "problem": f"changed (sha256 {actual}, manifest says {expected})",
                }
            )
    for p in sorted(folder.iterdir()):
        if p.name != MANIFEST and p.name not in files:
            res.problems.append({"file": p.name, "problem": "not listed in the manifest"})
    if content_hash(files) != data.get("content_sha256"):
        res.problems.append(
            {"file": MANIFEST, "problem": "content_sha256 does not match its list of files"}
        )
    return res
