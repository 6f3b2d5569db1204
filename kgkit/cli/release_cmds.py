"""``kgkit release``, ``verify``, ``diff`` and ``lint``: vocabulary releases and their checks."""

from __future__ import annotations

import sys

import click

from kgkit.cli.common import echo_json, get_workspace
from kgkit.release.diffing import diff_folders
from kgkit.release.lint import lint_path
from kgkit.release.manifest import verify_release
from kgkit.release.release import make_release


@click.command("release")
@click.argument("spec", type=click.Path(path_type=str))
@click.option(
    "--version",
    "version",
    default=None,
    help="Release under this version instead of the one the rules give (must be greater "
    "than the previous release; also allows a release when no topic changed).",
)
@click.option(
    "--strict", is_flag=True, help="Fail on a stale curation edit instead of reporting it."
)
@click.option("--json", "as_json", is_flag=True, help="Print the summary as one JSON object.")
@click.pass_context
def release_command(
    ctx: click.Context, spec: str, version: str | None, strict: bool, as_json: bool
):
    """Compile SPEC afresh and release it as vocab/<name>/<version>/.

    The version follows the rules in the README (first release 1.0.0; a topic
    removed or deprecated -> major; added or moved -> minor; labels or aliases
    -> patch). An existing release folder is never overwritten.

    Example: kgkit release vocab/sport.yaml
    """
    ws = get_workspace(ctx)
    res = make_release(ws, spec, version=version, strict=strict)
    if as_json:
        echo_json(res.summary())
        return
    s = res.summary()
    since = f" (after {res.previous}, {res.level or 'version given'})" if res.previous else ""
    click.echo(f"released {res.name} {res.version}{since} in {res.path}")
    if s["changes"]:
        click.echo("  " + ", ".join(f"{k} {n}" for k, n in s["changes"].items()))
    for d in res.deprecated:
        click.echo(f"  deprecated {d['id']} -> {d['replaced_by'] or '(no replacement)'}")
    if res.stale:
        n = len(res.stale)
        click.echo(f"  {n} stale curation edit{'' if n == 1 else 's'} (see changelog.md)")


@click.command("verify")
@click.argument("path", type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print the outcome as one JSON object.")
def verify_command(path: str, as_json: bool) -> None:
    """Re-hash the release folder PATH and compare every file with its manifest.

    Names each file that changed, is missing or is not listed; exits 1 if any.

    Example: kgkit verify vocab/sport/1.0.0
    """
    res = verify_release(path)
    if as_json:
        echo_json(res.to_json())
    else:
        click.echo(res.to_text(), nl=False)
    if not res.ok:
        sys.exit(1)


@click.command("diff")
@click.argument("old", type=click.Path(path_type=str))
@click.argument("new", type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print every change as one JSON object.")
def diff_command(old: str, new: str, as_json: bool) -> None:
    """List what changed from vocabulary OLD to NEW (release or build folders).

    Topics added, removed, deprecated, relabelled (per language), moved, aliases
    added and removed, each with the ids it concerns and its cause (graph or curation).

    Example: kgkit diff vocab/sport/1.0.0 vocab/sport/build
    """
    d = diff_folders(old, new)
    if as_json:
        echo_json(d.to_json())
    else:
        click.echo(d.to_text(), nl=False)


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


COMMANDS = [release_command, verify_command, diff_command, lint_command]
