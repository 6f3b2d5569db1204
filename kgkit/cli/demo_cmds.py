"""``kgkit demo``: build the demo workspace and run the whole job on it."""

from __future__ import annotations

import tempfile
from pathlib import Path

import click

from kgkit.demo import iter_demo


@click.command("demo")
@click.argument("directory", required=False, type=click.Path(file_okay=False, path_type=Path))
def demo_command(directory: Path | None) -> None:
    """Build the demo workspace in DIRECTORY (default: a new folder) and run the job on it.

    Example: kgkit demo demo-workspace
    """
    if directory is None:
        directory = Path(tempfile.mkdtemp(prefix="kgkit-demo-"))
    for n, step in enumerate(iter_demo(directory), 1):
        click.echo(f"{n}. {step.title}")
        for line in step.lines:
            click.echo(f"   {line}")
        for f in step.files:
            click.echo(f"   -> {f}")
    click.echo(f"demo workspace: {directory}")


COMMANDS = [demo_command]
