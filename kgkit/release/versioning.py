"""Release versions: ``MAJOR.MINOR.PATCH`` and the rules that pick the next one.

The rules (firm; the README states them too):

- the first release is ``1.0.0``;
- a topic removed or deprecated, or an id changed -> next major;
- otherwise a topic added (or brought back) or a parent link changed -> next minor;
- otherwise labels, aliases, notations or replacements changed -> next patch;
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

import re
from dataclasses import dataclass
from pathlib import Path

from kgkit.errors import KgkitError

__all__ = [
    "LEVEL_OF_KIND",
    "NothingChangedError",
    "Version",
    "VersionError",
    "bump",
    "bump_level",
    "list_releases",
    "next_version",
]

_SEMVER = re.compile(r"^(0|[1-9]\d*)\.(0|[1-9]\d*)\.(0|[1-9]\d*)$")

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
    "replacement-changed": "patch",
}
_RANK = {"patch": 1, "minor": 2, "major": 3}


class VersionError(KgkitError):
    """A version is malformed or not greater than the previous release."""


class NothingChangedError(KgkitError):
    """No topic changed since the previous release and no version was given."""


@dataclass(frozen=True, order=True)
class Version:
    major: int
    minor: int
    patch: int

    @classmethod
    def parse(cls, text: str) -> Version:
        m = _SEMVER.match(text.strip()) if isinstance(text, str) else None
        if not m:
            raise VersionError(
                f"{text!r} is not a release version (three numbers such as 1.2.0, no leading zeros)"
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
            "(pass --version to release anyway)"
        )
    return bump(previous, level), level


def list_releases(folder: Path) -> list[Version]:
    """Versions of the release folders directly under ``folder``, oldest first."""
    folder = Path(folder)
    if not folder.is_dir():
        return []
    return sorted(
        Version.parse(p.name) for p in folder.iterdir() if p.is_dir() and Version.is_version(p.name)
    )
