"""The ``kgkit`` command line: click commands only, each a thin layer over the library.

Errors a user can cause (:class:`kgkit.errors.KgkitError`) become one line on
standard error and the exit code their class carries, here and nowhere else (click
keeps exit code 2 for bad arguments). The parameters an error's message names are
shown as the flags of the command being run. Text arguments that are not UTF-8 are
refused as bad arguments before a command runs. ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import functools
import importlib
import math
import signal
import sys

import click

import kgkit
from kgkit.cli.common import flag_message
from kgkit.errors import ArgumentError, InputError, KgkitError, error_lines
from kgkit.inputs import ENVIRONMENT_ERRNOS, check_text, describe_os_error

__all__ = ["UserError", "cli", "main"]


class _Group(click.Group):
    def list_commands(self, ctx):
        return list(COMMAND_MODULES)

    def get_command(self, ctx, name):
        module_name = COMMAND_MODULES.get(name)
        if module_name is None:
            return None
        module = importlib.import_module(f"kgkit.cli.{module_name}")
        cmd = next((c for c in module.COMMANDS if c.name == name), None)
        if cmd is not None:
            _check_text_arguments(cmd)
        return cmd

    def invoke(self, ctx):
        # the one place where a user's error becomes one line and its class's exit code
        try:
            return super().invoke(ctx)
        except KgkitError as exc:
            if (ctx.obj or {}).get("debug"):
                raise
            cmd = self.get_command(ctx, ctx.invoked_subcommand) if ctx.invoked_subcommand else None
            error = UserError(exc, [*(cmd.params if cmd else ()), *self.params])
        except OSError as exc:
            # permissions, a full or read-only disk: the environment, not a bug
            if (ctx.obj or {}).get("debug") or exc.errno not in ENVIRONMENT_ERRNOS:
                raise
            error = UserError(InputError(describe_os_error(exc)), [])
        # raised outside the except clause, so that it holds no reference to the original
        # error: that one's traceback keeps the frames of the failed command alive (an
        # open store among them, whose lock a next command in this process would meet)
        raise error


class UserError(click.ClickException):
    """A :class:`KgkitError` as click shows it: ``Error: <one line>``, then its detail
    lines, and the error's own exit code."""

    def __init__(self, exc: KgkitError, params: list[click.Parameter]):
        first, *self.details = error_lines(exc, flag_message(exc, params))
        super().__init__(first)
        self.exit_code = exc.exit_code

    def show(self, file=None) -> None:
        super().show(file)
        for line in self.details:
            click.echo(line, err=True)


def _values(value) -> list[str]:
    if isinstance(value, str):
        return [value]
    if isinstance(value, list | tuple):
        return [v for x in value for v in _values(x)]
    return []


_MAX_INT = 2**63 - 1


def _numbers(value) -> list:
    if isinstance(value, bool):
        return []
    if isinstance(value, int | float):
        return [value]
    if isinstance(value, list | tuple):
        return [v for x in value for v in _numbers(x)]
    return []


def _check_text_arguments(cmd: click.Command) -> None:
    """Make ``cmd`` refuse, as usage errors before it runs, text arguments that are not
    UTF-8 (paths excepted), numbers that are not finite and integers beyond 64 bits
    (once per command object)."""
    callback = cmd.callback
    if callback is None or getattr(callback, "_kgkit_checked", False):
        return

    @functools.wraps(callback)
    def checked(*args, **kwargs):
        for p in cmd.params:
            if isinstance(p.type, click.Path | click.File):
                continue
            for v in _values(kwargs.get(p.name)):
                try:
                    check_text(v, p.name)
                except ArgumentError as exc:
                    raise click.BadParameter(exc.cause, param=p) from None
            for v in _numbers(kwargs.get(p.name)):
                if isinstance(v, float) and not math.isfinite(v):
                    raise click.BadParameter(f"{v} is not a finite number", param=p)
                if isinstance(v, int) and abs(v) > _MAX_INT:
                    raise click.BadParameter(f"must be at most {_MAX_INT}", param=p)
        return callback(*args, **kwargs)

    checked._kgkit_checked = True
    cmd.callback = checked


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.option(
    "--workspace",
    "-w",
    type=click.Path(file_okay=False, path_type=str),
    default=None,
    help="Workspace folder (default: found from the current folder upwards).",
)
@click.option("--debug", is_flag=True, help="Show tracebacks instead of one-line errors.")
@click.version_option(kgkit.__version__, prog_name="kgkit")
@click.pass_context
def cli(ctx: click.Context, workspace: str | None, debug: bool) -> None:
    """Build topic vocabularies from knowledge-graph dumps, locally.

    Import a dump into the workspace store, explore it with SPARQL, compile
    vocabularies and release them.
    """
    ctx.ensure_object(dict)
    ctx.obj["workspace"] = workspace
    ctx.obj["debug"] = debug


# Command name -> the module of kgkit/cli/ that defines it, in `kgkit --help` order.
# Only the module of the command being run is imported, so that a quick command
# does not pay for loading the compiler. tests/test_cli_registry.py checks that
# this table and the modules' COMMANDS lists agree.
COMMAND_MODULES = {
    "init": "workspace_cmds",
    "import": "ingest_cmds",
    "graphs": "ingest_cmds",
    "drop": "store_cmds",
    "reclaim": "store_cmds",
    "slice": "ingest_cmds",
    "query": "explore_cmds",
    "templates": "explore_cmds",
    "run": "explore_cmds",
    "show": "explore_cmds",
    "find": "explore_cmds",
    "tree": "explore_cmds",
    "shell": "explore_cmds",
    "compile": "vocab_cmds",
    "release": "release_cmds",
    "verify": "release_cmds",
    "diff": "release_cmds",
    "lint": "release_cmds",
    "review": "review_cmds",
    "probe": "review_cmds",
    "triage": "worklist_cmds",
    "demo": "demo_cmds",
}


def _terminate(signum, frame) -> None:
    signal.signal(signal.SIGTERM, signal.SIG_DFL)  # a second SIGTERM ends it at once
    raise KeyboardInterrupt


def main() -> None:
    """Entry point of the ``kgkit`` console script."""
    # SIGTERM ends a command the way Ctrl-C does: the same clean-up runs (an import
    # leaves the store as it was, temporary files go), instead of the process vanishing
    signal.signal(signal.SIGTERM, _terminate)
    try:
        cli(prog_name="kgkit")
    except BrokenPipeError:  # output piped into `head` and the like
        sys.stderr.close()
        sys.exit(0)
