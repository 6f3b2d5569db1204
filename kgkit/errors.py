"""The errors kgkit raises for bad input or bad state.

Every error a user can cause is a :class:`KgkitError`; the command line turns it
into one line on standard error and exit code 1, in one place
(:func:`kgkit.cli.main`). Anything else reaching a user is a bug.
"""

__all__ = [
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
