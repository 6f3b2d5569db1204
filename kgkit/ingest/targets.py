"""Files kgkit writes beside an import or a slice: which paths it may write, and how.

kgkit never writes to a path that is one of its inputs, its workspace file or its store
(or anything inside the store's folder, or its lock file), never replaces anything that
is not a regular file (a folder, a device, a pipe, a symbolic link), and keeps the mode
of a regular file it replaces. :func:`check_target` refuses a path with one line before
any work starts; :func:`replace_file` puts a finished temporary file in place.
"""

from __future__ import annotations

import os
import stat
from collections.abc import Iterable
from pathlib import Path

from kgkit.errors import InputError, one_line
from kgkit.files import replace_file  # the one home of replacing a file

__all__ = ["check_target", "replace_file"]


def _same(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return a.resolve() == b.resolve()


def _inside(path: Path, folder: Path) -> bool:
    path, folder = path.resolve(), folder.resolve()
    return path == folder or folder in path.parents


def check_target(
    path: Path,
    what: str,
    inputs: Iterable[str] = (),
    workspace_file: Path | None = None,
    store: Path | None = None,
) -> None:
    """Raise :class:`KgkitError` unless kgkit may write the file ``path``.

    ``what`` names the file in the message (``"rejects file"``, ``"output"``).
    """
    shown = f"{what} {one_line(str(path))}"
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise InputError(f"{shown}: cannot be written ({exc.strerror})") from None
    if st is not None and not stat.S_ISREG(st.st_mode):
        kind = (
            "a folder"
            if stat.S_ISDIR(st.st_mode)
            else "a symbolic link"
            if stat.S_ISLNK(st.st_mode)
            else "a device"
            if stat.S_ISCHR(st.st_mode) or stat.S_ISBLK(st.st_mode)
            else "not a regular file"
        )
        raise InputError(f"{shown}: is {kind}; kgkit replaces only regular files")
    for label in inputs:
        if label != "-" and _same(path, Path(label)):
            raise InputError(f"{shown}: is one of the inputs; choose another path")
    if workspace_file is not None and _same(path, workspace_file):
        raise InputError(f"{shown}: is the workspace file; choose another path")
    if store is not None and (
        _inside(path, store) or _same(path, store.with_name(store.name + ".lock"))
    ):
        raise InputError(f"{shown}: is inside the store; choose another path")
    folder = path.parent
    while not folder.exists() and folder != folder.parent:
        folder = folder.parent
    if not folder.is_dir():
        raise InputError(f"{shown}: {one_line(str(folder))} is not a folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"{shown}: cannot write in folder {one_line(str(folder))}")
