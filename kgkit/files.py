"""Writing a file so that a failure leaves the old one intact: the one home of it.

A file is written to a temporary file beside it (same folder, so the rename is
atomic) and renamed into place only when complete. kgkit never replaces anything
that is not a regular file (a folder, a device, a pipe, a symbolic link) and keeps
the mode of a regular file it replaces; a new file gets the mode a plain ``open``
would give it, not the 0600 of a temporary file. Streaming writers make their own
temporary file (``tempfile.mkstemp`` in the target's folder) and finish with
:func:`replace_file`; whole texts go through :func:`write_text_atomic`.
"""

from __future__ import annotations

import os
import stat
import tempfile
from collections.abc import Callable
from pathlib import Path

from kgkit.errors import InputError, one_line

__all__ = ["check_replaceable", "replace_file", "write_text_atomic"]


def _umask() -> int:
    mask = os.umask(0o22)
    os.umask(mask)
    return mask


def check_replaceable(path: Path, what: str = "file") -> None:
    """Raise :class:`~kgkit.errors.InputError` when ``path`` exists and is not a regular
    file (kgkit replaces only regular files)."""
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        return
    if not stat.S_ISREG(st.st_mode):
        kind = (
            "a folder"
            if stat.S_ISDIR(st.st_mode)
            else "a symbolic link"
            if stat.S_ISLNK(st.st_mode)
            else "not a regular file"
        )
        raise InputError(
            f"{what} {one_line(str(path))}: is {kind}; kgkit replaces only regular files"
        )


def replace_file(tmp: str | os.PathLike, path: Path) -> None:
    """Rename the finished file ``tmp`` to ``path``, keeping the mode of a file it replaces."""
    try:
        mode = stat.S_IMODE(os.stat(path).st_mode)
    except FileNotFoundError:
        mode = 0o666 & ~_umask()
    os.chmod(tmp, mode)
    os.replace(tmp, path)


def write_text_atomic(
    path: Path | str,
    text: str,
    what: str = "file",
    check: Callable[[Path], object] | None = None,
) -> Path:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``path``: a temporary file beside it,
    renamed into place. ``check`` is called with the temporary file before the rename;
    whatever it raises leaves ``path`` as it was and the temporary file removed.

    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "a.txt"
    >>> write_text_atomic(p, "one\\n").read_text(), sorted(x.name for x in p.parent.iterdir())
    ('one\\n', ['a.txt'])
    """
    path = Path(path)
    check_replaceable(path, what)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.tmp-", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        if check is not None:
            check(Path(tmp))
        replace_file(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return path
