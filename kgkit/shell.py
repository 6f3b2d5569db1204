"""The interactive shell: SPARQL typed over several lines, ended by ``;``.

A statement ends with a line whose last character is ``;`` outside any ``{...}``
group (a ``;`` inside a group is SPARQL's own predicate-list separator). Lines
starting with ``:`` at the start of a statement are shell commands:

- ``:prefixes``: the workspace prefixes
- ``:templates``: the templates and their parameters
- ``:run NAME PARAM=VALUE ...``: run a template
- ``:format NAME``: switch the output format (table, json, csv, tsv, nt, ttl)
- ``:graphs``: the graphs queries see
- ``:help``: this list
- ``:quit``: leave (end of input does too)

History is kept across sessions in ``.kgkit/shell-history`` in the workspace, one
statement a line. The loop reads and writes through two callables, so it runs the
same under a terminal, a pipe or a test.
"""

from __future__ import annotations

import shlex
from collections.abc import Callable
from pathlib import Path

from kgkit.errors import InputError, KgkitError, ParameterError, error_lines
from kgkit.inputs import check_text
from kgkit.query import FORMATS, Backend, run_query, tokenize, write_result
from kgkit.templates import list_templates, run_template

__all__ = ["HELP", "Shell", "history_path", "is_complete"]

PROMPT = "kgkit> "
MORE = "  ...> "

HELP = """\
Type SPARQL over one or more lines and end it with ; at the end of a line.
Commands:
  :prefixes                  the workspace prefixes
  :templates                 the templates and their parameters
  :run NAME PARAM=VALUE ...  run a template
  :format NAME               output format: table, json, csv, tsv, nt, ttl
  :graphs                    the graphs queries see
  :help                      this list
  :quit                      leave (end of input does too)
"""


def history_path(backend: Backend) -> Path:
    return backend.ws.root / ".kgkit" / "shell-history"


def is_complete(text: str) -> bool:
    """Whether a typed statement is finished: it ends with ``;`` outside ``{...}``.

    >>> is_complete("SELECT * WHERE { ?s ?p ?o ;")
    False
    >>> is_complete("SELECT * WHERE { ?s ?p 'a;' } ;")
    True
    """
    depth = 0
    last = None
    for tok in tokenize(text):
        if tok.text == "{":
            depth += 1
        elif tok.text == "}":
            depth = max(depth - 1, 0)
        last = tok
    return last is not None and last.text == ";" and depth == 0 and text.rstrip().endswith(";")


class _Sink:
    """A text stream over a write callable."""

    def __init__(self, write: Callable[[str], None]):
        self.write = write

    def flush(self) -> None:
        pass


class Shell:
    """One session. ``read(prompt)`` returns a line or ``None`` at the end of input;
    ``write(text)`` shows text; ``remember(statement)`` keeps it in the history;
    ``describe(error)`` gives the lines shown for an error (default: its message and
    details, escaped)."""

    def __init__(
        self,
        backend: Backend,
        read: Callable[[str], str | None],
        write: Callable[[str], None],
        remember: Callable[[str], None] | None = None,
        fmt: str = "table",
        graphs: list[str] | None = None,
        width: int | None = None,
        describe: Callable[[KgkitError], list[str]] = error_lines,
    ):
        self.backend = backend
        self.read = read
        self.write = write
        self.remember = remember or (lambda s: None)
        self.fmt = fmt
        self.graphs = graphs
        self.width = width
        self.describe = describe

    def loop(self) -> None:
        buf: list[str] = []
        while True:
            try:
                line = self.read(MORE if buf else PROMPT)
            except KeyboardInterrupt:  # Ctrl-C drops what was typed, not the session
                self.write("\n(cancelled)\n")
                buf = []
                continue
            if line is None:
                if buf:
                    self.write("(unfinished statement dropped: end it with ;)\n")
                return
            try:
                check_text(line, "this line", InputError)
            except KgkitError as exc:  # what was typed so far is dropped with it
                self.write("Error: " + "\n".join(self.describe(exc)) + "\n")
                buf = []
                continue
            if not buf and line.strip().startswith(":"):
                self.remember(line.strip())
                if self.command(line.strip()) is False:
                    return
                continue
            if not buf and not line.strip():
                continue
            buf.append(line)
            text = "\n".join(buf)
            if is_complete(text):
                buf = []
                self.remember(" ".join(x.strip() for x in text.splitlines()))
                self.statement(text.rstrip()[:-1])

    def _show(self, res) -> None:
        write_result(res, _Sink(self.write), self.fmt, self.backend.ws, self.width)

    def statement(self, text: str) -> None:
        try:
            self._show(run_query(self.backend, text, graphs=self.graphs))
        except KgkitError as exc:
            self.write("Error: " + "\n".join(self.describe(exc)) + "\n")
        except KeyboardInterrupt:  # Ctrl-C stops a long query and output, not the session
            self.write("\n(interrupted)\n")

    def command(self, line: str) -> bool | None:
        try:
            words = shlex.split(line[1:])
        except ValueError as exc:
            self.write(f"Error: {exc}\n")
            return None
        if not words:
            return None
        name, args = words[0], words[1:]
        ws = self.backend.ws
        try:
            if name in ("quit", "q", "exit"):
                return False
            if name == "help":
                self.write(HELP)
            elif name == "prefixes":
                width = max((len(k) for k in ws.prefixes), default=0) + 1
                for k, v in sorted(ws.prefixes.items()):
                    self.write(f"{k + ':':<{width}} {v}\n")
            elif name == "templates":
                for t in list_templates(ws):
                    params = " ".join(
                        p.name + ("" if p.required else "?") + "=" + p.kind for p in t.params
                    )
                    self.write(f"{t.name}  {params}\n    {t.summary}\n")
            elif name == "format":
                if len(args) != 1 or args[0] not in FORMATS:
                    self.write(f"Error: :format takes one of {', '.join(FORMATS)}\n")
                else:
                    self.fmt = args[0]
                    self.write(f"output format: {self.fmt}\n")
            elif name == "graphs":
                names = sorted(self.backend.graph_names.values())
                shown = self.graphs if self.graphs is not None else names
                self.write(", ".join(shown) + "\n" if shown else "no graphs imported yet\n")
            elif name == "run":
                if not args:
                    self.write("Error: :run NAME PARAM=VALUE ...\n")
                    return None
                params = {}
                for a in args[1:]:
                    key, eq, value = a.partition("=")
                    if not eq:
                        raise ParameterError(f"parameter {a!r} is not PARAM=VALUE")
                    params[key] = value
                self._show(run_template(self.backend, args[0], params, graphs=self.graphs))
            else:
                self.write(f"Error: unknown command :{name} (:help lists them)\n")
        except KgkitError as exc:
            self.write("Error: " + "\n".join(self.describe(exc)) + "\n")
        return None
