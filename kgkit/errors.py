"""The errors kgkit raises for bad input or bad state.

Every error a user can cause is a :class:`KgkitError`; the command line turns it
into one line on standard error and exit code 1, in one place
(:func:`kgkit.cli.main`). Anything else reaching a user is a bug.
"""

import unicodedata

__all__ = [
    "one_line",
    "KgkitError",
    "WorkspaceError",
    "ParseError",
    "StoreError",
    "StoreInUseError",
    "TemplateError",
    "ParameterError",
    "QueryError",
    "SpecError",
]

# characters that would break a message over several lines or hide part of it: line and
# paragraph separators, and the bidirectional controls that reorder what a terminal shows
_BIDI = frozenset("\u061c\u200e\u200f\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069")
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _escape_char(ch: str) -> str:
    if ch in _NAMED:
        return _NAMED[ch]
    n = ord(ch)
    if 0xDC80 <= n <= 0xDCFF:  # a byte that was not UTF-8, kept by surrogateescape
        return f"\\x{n - 0xDC00:02x}"
    if n < 0x100:
        return f"\\x{n:02x}"
    return f"\\u{n:04x}" if n < 0x10000 else f"\\U{n:08x}"


def one_line(text: str) -> str:
    """``text`` with every control character escaped, so that it shows as one line.

    Escaped: C0 and C1 controls (``\\n``, ``\\x0b``, ``\\x85``...), DEL, the line and
    paragraph separators ``\\u2028``/``\\u2029``, bidirectional controls, and lone
    surrogates (a byte of a name that was not UTF-8 shows as ``\\xNN``). Everything else,
    letters of any script included, is kept.

    >>> one_line("bad\\nline\\x85 and \\u2028 end")
    'bad\\\\nline\\\\x85 and \\\\u2028 end'
    >>> one_line("caf\\xe9 \\udcff")
    'café \\\\xff'
    """
    if text.isprintable():
        return text
    return "".join(
        _escape_char(ch)
        if ch in _BIDI or unicodedata.category(ch) in ("Cc", "Cs", "Zl", "Zp")
        else ch
        for ch in text
    )


class KgkitError(Exception):
    """Base of every error caused by input or state, not by a bug."""

    exit_code = 1


class WorkspaceError(KgkitError):
    """No workspace, or a malformed ``kgkit.yaml``."""


class ParseError(KgkitError):
    """A malformed statement in an input file.

    ``str()`` gives ``FILE:LINE:COLUMN: cause``.
    """

    def __init__(self, file: str, line: int | None, column: int | None, cause: str):
        self.file, self.line, self.column, self.cause = file, line, column, cause
        where = file
        if line is not None:
            where += f":{line}"
            if column is not None:
                where += f":{column}"
        super().__init__(f"{where}: {cause}")


class StoreError(KgkitError):
    """The store cannot be opened or is in a bad state."""


class StoreInUseError(StoreError):
    """Another process holds the store."""


class TemplateError(KgkitError):
    """A template is missing or its header is malformed."""


class ParameterError(KgkitError):
    """A template parameter value is missing or not of its declared kind."""


class QueryError(KgkitError):
    """A SPARQL query is malformed or refused."""


class SpecError(KgkitError):
    """A vocabulary spec or curation file is malformed."""
