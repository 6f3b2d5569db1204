"""The ``kgkit`` command line: click commands only, each a thin layer over the library.

Errors a user can cause (:class:`kgkit.errors.KgkitError`) become one line on
standard error and exit code 1, here and nowhere else; click keeps exit code 2
for bad arguments. ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import sys

import click

import kgkit
from kgkit.errors import KgkitError

__all__ = ["cli", "main"]


class _Group(click.Group):
    def list_commands(self, ctx):
        return list(self.commands)  # in the order they were added: the job's order

    def invoke(self, ctx):
        # the one place where a user's error becomes one line and exit code 1
        try:
            return super().invoke(ctx)
        except KgkitError as exc:
            if (ctx.obj or {}).get("debug"):
                raise
            raise click.ClickException(str(exc)) from None


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


# Command modules, in the order their commands appear in `kgkit --help`.
# Each module has a COMMANDS list; add a new module here.
_MODULES = (
    "workspace_cmds",
    "ingest_cmds",
    "explore_cmds",
    "vocab_cmds",
    "release_cmds",
    "review_cmds",
    "demo_cmds",
)


def _register() -> None:
    import importlib

    for name in _MODULES:
        module = importlib.import_module(f"kgkit.cli.{name}")
        for command in module.COMMANDS:
            cli.add_command(command)


_register()


def main() -> None:
    """Entry point of the ``kgkit`` console script."""
    try:
        cli(prog_name="kgkit")
    except BrokenPipeError:  # output piped into `head` and the like
        sys.stderr.close()
        sys.exit(0)
