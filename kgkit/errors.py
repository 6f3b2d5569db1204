"""The errors kgkit raises for bad input or bad state: every class, in one module.

Every error a user can cause is a :class:`KgkitError`. Each class carries the exit
code of the command that ends with it (``exit_code``); the command line shows any of
them as ``Error: <one line>`` on standard error and exits with that code, in one place
(``kgkit.cli._Group.invoke``). Anything else reaching a user is a bug and keeps its
traceback.

Exit codes:

====  ===========================================================================
1     bad input or state (every class unless listed below)
2     a bad argument value (:class:`ArgumentError`; click uses 2 for its own usage errors)
====  ===========================================================================

Library messages speak of parameters, never of command-line flags: an error names
the parameters its message mentions in ``params`` (their Python names), and the
command line rewrites each into the flag or argument of the command being run
(``batch_size: must be at least 1`` becomes ``--batch-size: must be at least 1``;
``on_error='skip'`` becomes ``--on-error skip``).
"""

import unicodedata

__all__ = [
    "one_line",
    "error_lines",
    "KgkitError",
    "ArgumentError",
    "InputError",
    "WorkspaceError",
    "ParseError",
    "DamagedInputError",
    "NotFoundError",
    "StoreError",
    "StoreInUseError",
    "TemplateError",
    "ParameterError",
    "QueryError",
    "SpecError",
    "AmbiguousTermError",
    "BuildFileError",
    "DemoError",
    "DependencyError",
    "DiffError",
    "GateError",
    "LintTargetError",
    "ManifestError",
    "NothingChangedError",
    "ProbeError",
    "RecordError",
    "ReleaseError",
    "ReviewError",
    "VersionError",
]

# characters that would break a message over several lines or hide part of it: controls,
# line and paragraph separators, and invisible format characters (the bidirectional
# controls that reorder what a terminal shows, a byte-order mark, zero-width ones)
_ESCAPED_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"})
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
    paragraph separators ``\\u2028``/``\\u2029``, invisible format characters (bidirectional
    controls, a byte-order mark ``\\ufeff``, zero-width ones), private-use and unassigned
    code points, and lone surrogates (a byte of a name that was not UTF-8 shows as
    ``\\xNN``). Everything else, letters of any script and spaces included, is kept.

    >>> one_line("bad\\nline\\x85 and \\u2028 end")
    'bad\\\\nline\\\\x85 and \\\\u2028 end'
    >>> one_line("caf\\xe9 \\udcff")
    'café \\\\xff'
    """
    if text.isprintable():
        return text
    return "".join(
        _escape_char(ch) if unicodedata.category(ch) in _ESCAPED_CATEGORIES else ch for ch in text
    )


class KgkitError(Exception):
    """Base of every error caused by input or state, not by a bug.

    ``params`` names the library parameters the message mentions (see the module
    docstring); ``details`` are further lines shown under the one-line message (the
    candidates of an ambiguous name, for instance).
    """

    exit_code = 1
    params: tuple[str, ...] = ()
    details: tuple[str, ...] = ()

    def __init__(self, *args, params: tuple[str, ...] = (), details: tuple[str, ...] = ()):
        super().__init__(*args)
        if params:
            self.params = tuple(params)
        if details:
            self.details = tuple(details)


class ArgumentError(KgkitError):
    """A value given for a parameter is malformed or out of range.

    ``str()`` gives ``PARAM: cause``; the command line shows the flag instead of ``PARAM``
    (and of the other parameters named in ``params`` that the cause mentions).

    >>> str(ArgumentError("batch_size", "must be at least 1"))
    'batch_size: must be at least 1'
    """

    exit_code = 2

    def __init__(self, param: str, cause: str, params: tuple[str, ...] = ()):
        self.param, self.cause = param, cause
        super().__init__(f"{param}: {cause}", params=(param, *params))


class InputError(KgkitError):
    """A file or text given to kgkit cannot be read, or is malformed (see :mod:`kgkit.inputs`)."""


class WorkspaceError(InputError):
    """No workspace, or a malformed ``kgkit.yaml``."""


class ParseError(InputError):
    """A malformed statement in an input file.

    ``str()`` gives ``FILE:LINE:COLUMN: cause``.
    """

    def __init__(
        self,
        file: str,
        line: int | None,
        column: int | None,
        cause: str,
        params: tuple[str, ...] = (),
    ):
        self.file, self.line, self.column, self.cause = file, line, column, cause
        where = file
        if line is not None:
            where += f":{line}"
            if column is not None:
                where += f":{column}"
        # one line whatever the input held (the cause often quotes it)
        super().__init__(one_line(f"{where}: {cause}"), params=params)


class RecordError(InputError):
    """An entity record that cannot be mapped; ``column`` is 1-based when known.

    Raised while a line is mapped, before its file and line are known; ``str()`` is
    the cause alone.
    """

    def __init__(self, cause: str, column: int | None = None):
        super().__init__(cause)
        self.cause, self.column = cause, column


class NotFoundError(KgkitError):
    """Something named does not exist: a graph, a template, an entity, a release."""


class DamagedInputError(InputError):
    """A compressed input that is cut short, corrupt, or followed by other bytes."""


class StoreError(KgkitError):
    """The store cannot be opened or is in a bad state."""


class StoreInUseError(StoreError):
    """Another process holds the store."""


class TemplateError(InputError):
    """A template is missing or its header is malformed."""


class ParameterError(KgkitError):
    """A template parameter value is missing or not of its declared kind."""


class QueryError(KgkitError):
    """A SPARQL query is malformed or refused."""


class SpecError(InputError):
    """A vocabulary spec or curation file is malformed."""


class AmbiguousTermError(KgkitError):
    """A label names several entities; ``candidates`` lists them, one detail line each."""

    def __init__(self, term: str, candidates: list, described: tuple[str, ...] = ()):
        self.term, self.candidates = term, candidates
        super().__init__(
            f"{term!r} is the label of {len(candidates)} entities; name one by CURIE or IRI:",
            details=tuple(described),
        )


class BuildFileError(InputError):
    """A build or release file that cannot be read back."""


class ReleaseError(KgkitError):
    """A release cannot be made (existing folder, missing build output, ...)."""


class GateError(ReleaseError):
    """A vocabulary fails release gates (:mod:`kgkit.release.gates`); ``details``
    holds one line per problem."""


class ManifestError(InputError):
    """A release folder has no readable manifest."""


class VersionError(KgkitError):
    """A version is malformed or not greater than the previous release."""


class NothingChangedError(KgkitError):
    """No topic changed since the previous release and no version was given."""


class DiffError(InputError):
    """A diff side is not a vocabulary folder or its topic file is malformed."""


class LintTargetError(InputError):
    """The lint target is neither a SKOS file nor a folder holding ``skos.ttl``."""


class ReviewError(InputError):
    """The target of a review page is not a release or build folder."""


class ProbeError(InputError):
    """A release folder or a text to probe cannot be read."""


class DependencyError(KgkitError):
    """An optional dependency a feature needs is not installed."""


class DemoError(KgkitError):
    """The demo cannot run in the folder given."""


def error_lines(exc: KgkitError, message: str | None = None) -> list[str]:
    """What a user sees of ``exc``: its message (or ``message``, e.g. with flags spelt
    out) as one line, then its detail lines, each escaped by :func:`one_line`.

    >>> error_lines(KgkitError("bad\\nthing", details=("  a", "  b")))
    ['bad\\\\nthing', '  a', '  b']
    """
    return [one_line(str(exc) if message is None else message), *map(one_line, exc.details)]
