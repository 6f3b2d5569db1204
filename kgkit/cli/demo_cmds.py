"""``kgkit demo``: build the demo workspace and run the whole job on it."""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import click

from kgkit.demo import iter_demo


@click.command("demo")
@click.argument("directory", required=False, type=click.Path(file_okay=False, path_type=Path))
def demo_command(directory: Path | None) -> None:
    """Build the invented demo workspace and run the whole job on it.

    DIRECTORY is a new folder (default: a new temporary folder). The demo
    imports a messy dump, explores it, compiles, releases, probes a corpus,
    curates, releases again after a refreshed dump, and writes the review page.

    Example: kgkit demo demo-workspace
    """
    if directory is None:
        directory = Path(tempfile.mkdtemp(prefix="kgkit-demo-"))
    # one form for every path the demo prints: relative when below the current folder
    directory = Path(_shown(directory))
    t0 = time.perf_counter()
    for n, step in enumerate(iter_demo(directory), 1):
        click.echo(f"{n}. {step.title}")
        for line in step.lines:
            click.echo(f"   {line}")
        for f in step.files:
            click.echo(f"   -> {_shown(f)}")
    click.echo(f"demo workspace: {_shown(directory)} ({time.perf_counter() - t0:.1f} s)")


def _shown(path: Path) -> str:
    """A path relative to the current folder when it is below it (shorter, and portable)."""
    try:
        return str(Path(path).resolve().relative_to(Path.cwd().resolve()))
    except ValueError:
        return str(path)


COMMANDS = [demo_command]
