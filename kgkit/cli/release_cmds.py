"""``kgkit release``, ``verify``, ``diff`` and ``lint``: vocabulary releases and their checks."""

from __future__ import annotations

import json
import sys

import click

from kgkit.cli.common import echo_json, get_workspace
from kgkit.release.diffing import diff_folders
from kgkit.release.lint import lint_path
from kgkit.release.manifest import verify_release
from kgkit.release.release import make_release
from kgkit.wording import counted


@click.command("release")
@click.argument("spec", type=click.Path(path_type=str))
@click.option(
    "--as-version",
    "version",
    metavar="VERSION",
    default=None,
    help="Release as VERSION (three numbers, greater than the previous release) instead of "
    "the version the changes call for; also releases when no topic changed.",
)
@click.option(
    "--strict",
    is_flag=True,
    help="Treat a stale curation edit as an error (default: report it and go on).",
)
@click.option(
    "--waive",
    "waive",
    metavar="GATE",
    multiple=True,
    help="Release even though this gate fails (repeatable; 'all' for every gate). "
    "Needs --reason; the manifest and changelog record both.",
)
@click.option("--reason", metavar="TEXT", default=None, help="Why the waived gates may be passed.")
@click.option("--json", "as_json", is_flag=True, help="Print the summary as one JSON object.")
@click.pass_context
def release_command(
    ctx: click.Context,
    spec: str,
    version: str | None,
    strict: bool,
    waive: tuple[str, ...],
    reason: str | None,
    as_json: bool,
):
    """Compile a spec afresh and release a new version of it.

    SPEC is a vocabulary spec, vocab/NAME.yaml; the release goes to
    vocab/NAME/VERSION/. The version follows semantic
    versioning from the changes since the previous release: the first release
    is 1.0.0; a topic removed, deprecated or renamed makes a major release; a
    topic added or moved a minor one; a label, alias or notation changed a
    patch. An existing release folder is never overwritten.

    Nothing is written when the previous release does not verify, or when the
    vocabulary fails a release gate (no topics, a topic without a label or
    without one in a required language, a lint error, a root, entity or
    curation target no graph mentions, too many topics lost): each problem is
    listed on its own line.

    Example: kgkit release vocab/tidewell.yaml
    """
    ws = get_workspace(ctx)
    res = make_release(ws, spec, version=version, strict=strict, waive=waive, reason=reason)
    for w in res.warnings:
        click.echo(f"Warning: {w}", err=True)
    if as_json:
        echo_json(res.summary())
        return
    s = res.summary()
    since = f" (after {res.previous}, {res.level or 'version given'})" if res.previous else ""
    click.echo(f"released {res.name} {res.version}{since} in {res.path}")
    if s["changes"]:
        click.echo("  " + ", ".join(f"{k} {n}" for k, n in s["changes"].items()))
    for d in res.deprecated:
        click.echo(f"  deprecated {res.topic_text(d['id'])} -> {res.topic_text(d['replaced_by'])}")
    for o in res.overrides:
        click.echo(f"  gate {o['gate']} waived: {o['reason']}")
    if res.stale:
        n = len(res.stale)
        click.echo(f"  {n} stale curation edit{'' if n == 1 else 's'} (see changelog.md)")
    lost = res.lost_names()
    if lost:
        shown = ", ".join(json.dumps(n["name"], ensure_ascii=False) for n in lost[:5])
        more = f" and {len(lost) - 5} more" if len(lost) > 5 else ""
        click.echo(
            f"  {counted(len(lost), 'name')} no longer matched by any topic: {shown}{more} "
            "(see changelog.md)"
        )


@click.command("verify")
@click.argument("release", metavar="RELEASE", type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print the outcome as one JSON object.")
def verify_command(release: str, as_json: bool) -> None:
    """Check a release's files against its manifest.

    RELEASE is a release folder, vocab/NAME/VERSION. Names each file that
    changed, is missing, is not listed or is not a regular file (a symbolic
    link is a problem), and each manifest value that contradicts the folder or
    the files (version, previous, source hashes, tool version, counts); exits 1
    if any. It cannot catch a file rewritten together with its hash.

    Example: kgkit verify vocab/tidewell/1.0.0
    """
    res = verify_release(release)
    if as_json:
        echo_json(res.to_json())
    else:
        click.echo(res.to_text(), nl=False)
    if not res.ok:
        sys.exit(1)


@click.command("diff")
@click.argument("old", metavar="OLD", type=click.Path(path_type=str))
@click.argument("new", metavar="NEW", type=click.Path(path_type=str))
@click.option(
    "--json",
    "as_json",
    is_flag=True,
    help="Print one JSON object: the counts by kind and the list of changes.",
)
def diff_command(old: str, new: str, as_json: bool) -> None:
    """List what changed from one vocabulary to another.

    OLD and NEW are vocabulary folders: releases (vocab/NAME/VERSION) or a
    build (vocab/NAME/build). Topics added, removed, deprecated, relabelled (per
    language), moved, aliases added and removed, each with the ids it concerns
    and its cause (graph or curation).

    Example: kgkit diff vocab/tidewell/1.0.0 vocab/tidewell/build
    """
    d = diff_folders(old, new)
    if as_json:
        echo_json(d.to_json())
    else:
        click.echo(d.to_text(), nl=False)


@click.command("lint")
@click.argument("vocab", metavar="VOCAB", type=click.Path(path_type=str))
@click.option("--json", "as_json", is_flag=True, help="Print the findings as one JSON object.")
def lint_command(vocab: str, as_json: bool) -> None:
    """Check a vocabulary's SKOS for quality problems.

    VOCAB is a vocabulary folder (a release or a build; both hold skos.ttl) or a
    SKOS file. The checks look for hierarchy loops, missing, blank, duplicated or
    unprintable labels, unlinked concepts, split hierarchies, language gaps and
    top-concept problems (--json lists every check). Exits 1 when a check of
    level error fires.

    Example: kgkit lint vocab/tidewell/1.0.0
    """
    report = lint_path(vocab)
    if as_json:
        echo_json(report.to_json())
    else:
        click.echo(report.to_text(), nl=False)
    if report.errors:
        sys.exit(1)


COMMANDS = [release_command, verify_command, diff_command, lint_command]
