"""``kgkit init``: make a workspace."""

from __future__ import annotations

import click

from kgkit.workspace import init_workspace


@click.command("init")
@click.argument("directory", default=".", type=click.Path(file_okay=False))
@click.option(
    "--languages",
    metavar="LIST",
    default="en",
    show_default=True,
    help="Comma-separated default label languages written into kgkit.yaml.",
)
def init_command(directory: str, languages: str) -> None:
    """Make a workspace with kgkit.yaml, queries/ and vocab/.

    DIRECTORY is a new or empty folder (default: the current folder); the
    workspace also gets an empty store.

    Example: kgkit init my-topics --languages en,de
    """
    langs = tuple(x.strip() for x in languages.split(",") if x.strip())
    ws = init_workspace(directory, languages=langs or ("en",))
    click.echo(f"workspace ready in {ws.root}")
    click.echo(f"  settings  {ws.root / 'kgkit.yaml'}")
    click.echo(f"  store     {ws.store_path}")
    click.echo("next: kgkit import DUMP.nt.gz")


COMMANDS = [init_command]
