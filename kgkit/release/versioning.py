"""Release versions: ``MAJOR.MINOR.PATCH`` and the rules that pick the next one.

The rules (firm; docs/releases.md states them too):

- the first release is ``1.0.0``;
- a topic removed or deprecated, or an id changed -> next major;
- otherwise a topic added (or brought back) or a parent link changed -> next minor;
- otherwise labels, aliases, notations, graphs read or replacements changed -> next patch;
- nothing changed -> no new version: :func:`next_version` raises, unless a version
  is given explicitly (it must still be greater than the previous one).

Versions follow Semantic Versioning 2.0.0 (semver.org) restricted to three
numbers: no pre-release or build parts, no leading zeros.

>>> str(next_version(None, [])[0])
'1.0.0'
>>> str(bump(Version.parse("1.4.2"), "minor"))
'1.5.0'
"""

from __future__ import annotations

import os
import re
import shutil
from dataclasses import dataclass, field
from pathlib import Path

from kgkit.errors import NothingChangedError, VersionError

__all__ = [
    "LEVEL_OF_KIND",
    "NothingChangedError",
    "ReleaseFolders",
    "Version",
    "VersionError",
    "bump",
    "bump_level",
    "clear_leftovers",
    "list_releases",
    "next_version",
    "scan_releases",
    "temp_prefix",
]

# at most 18 digits a part: numbers stay bounded (Python refuses to convert over 4,300)
_SEMVER = re.compile(r"^(0|[1-9]\d{0,17})\.(0|[1-9]\d{0,17})\.(0|[1-9]\d{0,17})$")

#: change kind (see kgkit.release.diffing) -> the part of the version it bumps
LEVEL_OF_KIND = {
    "removed": "major",
    "deprecated": "major",
    "id-changed": "major",
    "added": "minor",
    "restored": "minor",
    "moved": "minor",
    "relabelled": "patch",
    "alias-added": "patch",
    "alias-removed": "patch",
    "notation-changed": "patch",
    "graph-changed": "patch",
    "replacement-changed": "patch",
}
_RANK = {"patch": 1, "minor": 2, "major": 3}


@dataclass(frozen=True, order=True)
class Version:
    major: int
    minor: int
    patch: int

    @classmethod
    def parse(cls, text: str) -> Version:
        m = _SEMVER.match(text.strip()) if isinstance(text, str) else None
        if not m:
            shown = repr(text) if len(str(text)) <= 60 else repr(str(text)[:60]) + "..."
            raise VersionError(
                f"{shown} is not a release version "
                "(three numbers such as 1.2.0, no leading zeros, at most 18 digits each)"
            )
        return cls(*(int(x) for x in m.groups()))

    @classmethod
    def is_version(cls, text: str) -> bool:
        return bool(_SEMVER.match(text))

    def __str__(self) -> str:
        return f"{self.major}.{self.minor}.{self.patch}"


FIRST = Version(1, 0, 0)


def bump(version: Version, level: str) -> Version:
    if level == "major":
        return Version(version.major + 1, 0, 0)
    if level == "minor":
        return Version(version.major, version.minor + 1, 0)
    if level == "patch":
        return Version(version.major, version.minor, version.patch + 1)
    raise ValueError(level)


def bump_level(kinds) -> str | None:
    """The largest part any of the change ``kinds`` bumps, or None for no change.

    >>> bump_level(["alias-added", "moved"])
    'minor'
    """
    levels = [LEVEL_OF_KIND[k] for k in kinds]
    return max(levels, key=_RANK.__getitem__) if levels else None


def next_version(
    previous: Version | None, kinds, requested: str | None = None
) -> tuple[Version, str | None]:
    """The version of the next release and the level the changes call for.

    ``kinds`` are the change kinds of the diff against ``previous``. With
    ``requested`` that version is used if it is greater than ``previous``
    (a release is allowed then even when nothing changed).
    """
    kinds = list(kinds)
    level = bump_level(kinds) if previous is not None else None
    if requested is not None:
        wanted = Version.parse(requested)
        if previous is not None and wanted <= previous:
            raise VersionError(
                f"version {wanted} is not greater than the previous release {previous}"
            )
        return wanted, level
    if previous is None:
        return FIRST, None
    if level is None:
        raise NothingChangedError(
            f"no topic changed since release {previous}; nothing to release "
            "(give version=X.Y.Z to release anyway)",
            params=("version",),
        )
    return bump(previous, level), level


@dataclass
class ReleaseFolders:
    """What lies under ``vocab/NAME/``: releases, and folders that only look like one.

    ``releases``: versions of the folders that hold a manifest, oldest first.
    ``strays``: folders named like a version that hold no manifest (made by hand, or
    a copy cut short); they are not releases and a release ignores them.
    """

    releases: list[Version] = field(default_factory=list)
    strays: list[Path] = field(default_factory=list)

    def warnings(self) -> list[str]:
        return [
            f"{p}: named like a version but holds no manifest.json; not a release, ignored"
            for p in self.strays
        ]


def scan_releases(folder: Path) -> ReleaseFolders:
    """Sort the version-named folders directly under ``folder`` into releases and strays."""
    from kgkit.release.manifest import MANIFEST

    folder = Path(folder)
    out = ReleaseFolders()
    if not folder.is_dir():
        return out
    for p in sorted(folder.iterdir()):
        if not Version.is_version(p.name) or not p.is_dir():
            continue
        if (p / MANIFEST).exists() or (p / MANIFEST).is_symlink():
            out.releases.append(Version.parse(p.name))
        else:
            out.strays.append(p)
    out.releases.sort()
    return out


def list_releases(folder: Path) -> list[Version]:
    """Versions of the release folders (those holding a manifest) directly under
    ``folder``, oldest first."""
    return scan_releases(folder).releases


# Temporary folders of a compile (``.build.tmp-PID``, ``.build.old-PID``) and of a
# release (``.VERSION.tmp-PID-RANDOM``) beside the build and release folders.
_LEFTOVER = re.compile(
    r"^\.(?:build\.(?:tmp|old)-(?P<pid>\d+)"
    r"|(?:0|[1-9]\d*)\.(?:0|[1-9]\d*)\.(?:0|[1-9]\d*)\.tmp-(?:(?P<rpid>\d+)-)?[^/]*)$"
)


def temp_prefix(version: Version | str) -> str:
    """Prefix of the temporary folder a release of ``version`` is written into (names
    the process, so that :func:`clear_leftovers` leaves a running release alone)."""
    return f".{version}.tmp-{os.getpid()}-"


def _is_running(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, OSError):
        return True  # exists (another user's), or cannot tell: leave it
    return True


def clear_leftovers(folder: Path) -> list[Path]:
    """Remove the temporary folders that killed compiles and releases left in ``folder``.

    Only folders named as kgkit names them, made by a process that is no longer
    running (a name without a process id, from an older kgkit, counts as left over),
    and only real folders (a symbolic link is never followed or removed). Returns
    the paths removed.
    """
    folder = Path(folder)
    removed = []
    try:
        entries = sorted(folder.iterdir())
    except OSError:
        return removed
    for p in entries:
        m = _LEFTOVER.match(p.name)
        if not m or p.is_symlink() or not p.is_dir():
            continue
        pid = m["pid"] or m["rpid"]
        if pid is not None and _is_running(int(pid)):
            continue
        shutil.rmtree(p, ignore_errors=True)
        if not p.exists():
            removed.append(p)
    return removed
