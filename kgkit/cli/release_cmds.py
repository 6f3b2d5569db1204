"""``kgkit lint``: quality checks on a vocabulary (release, build or SKOS file)."""

from __future__ import annotations

import sys

import click

from kgkit.cli.common import echo_json
from kgkit.release.lint import lint_path


@click.command("lint")
@click.argument("target", type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print the findings as one JSON object.")
def lint_command(target: str, as_json: bool) -> None:
    """Check the SKOS vocabulary TARGET against the catalogue of SKOS quality issues.

    TARGET is a release folder, a build folder (both hold skos.ttl) or a SKOS file.
    Exits 1 when a check of level error fires.

    Example: kgkit lint vocab/sport/1.0.0
    """
    report = lint_path(target)
    if as_json:
        echo_json(report.to_json())
    else:
        click.echo(report.to_text(), nl=False)
    if report.errors:
        sys.exit(1)


COMMANDS = [lint_command]
