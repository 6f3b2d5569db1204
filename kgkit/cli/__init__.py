"""The ``kgkit`` command line: click commands only, each a thin layer over the library.

Errors a user can cause (:class:`kgkit.errors.KgkitError`) become one line on
standard error and exit code 1, here and nowhere else; click keeps exit code 2
for bad arguments. ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import importlib
import sys

import click

import kgkit
from kgkit.errors import KgkitError

__all__ = ["cli", "main"]


class _Group(click.Group):
    def list_commands(self, ctx):
        return list(COMMAND_MODULES)

    def get_command(self, ctx, name):
        module_name = COMMAND_MODULES.get(name)
        if module_name is None:
            return None
        module = importlib.import_module(f"kgkit.cli.{module_name}")
        return next((c for c in module.COMMANDS if c.name == name), None)

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


# Command name -> the module of kgkit/cli/ that defines it, in `kgkit --help` order.
# Only the module of the command being run is imported, so that a quick command
# does not pay for loading the compiler. tests/test_cli_registry.py checks that
# this table and the modules' COMMANDS lists agree.
COMMAND_MODULES = {
    "init": "workspace_cmds",
    "import": "ingest_cmds",
    "graphs": "ingest_cmds",
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
    "report": "review_cmds",
    "probe": "review_cmds",
    "demo": "demo_cmds",
}


def main() -> None:
    """Entry point of the ``kgkit`` console script."""
    try:
        cli(prog_name="kgkit")
    except BrokenPipeError:  # output piped into `head` and the like
        sys.stderr.close()
        sys.exit(0)
