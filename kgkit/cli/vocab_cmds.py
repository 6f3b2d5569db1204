"""``kgkit compile``: build a vocabulary from its spec."""

from __future__ import annotations

import time

import click

from kgkit.cli.common import echo_json, get_workspace, is_terminal
from kgkit.vocab.compile import compile_vocabulary
from kgkit.vocab.curation import curation_summary
from kgkit.wording import counted


@click.command("compile")
@click.argument("spec", type=click.Path(dir_okay=False, path_type=str))
@click.option(
    "--strict",
    is_flag=True,
    help="Treat a stale curation edit or a release gate problem as an error (default: "
    "report it and go on).",
)
@click.option("--json", "as_json", is_flag=True, help="Print the summary as one JSON object.")
@click.option("--quiet", "-q", is_flag=True, help="No progress display.")
@click.pass_context
def compile_command(ctx, spec, strict, as_json, quiet):
    """Compile the vocabulary of a spec into its build folder.

    SPEC is a vocabulary spec, vocab/NAME.yaml; the build goes to
    vocab/NAME/build/. Selects topics with the spec's templates, applies the curation file, repairs
    the hierarchy, cleans aliases, prunes, and writes topics.jsonl, topics.yaml,
    skos.ttl, lexicon.tsv and the report. A failed compile leaves the previous
    build as it was.

    Example: kgkit compile vocab/tidewell.yaml --json
    """
    ws = get_workspace(ctx)
    t0 = time.perf_counter()
    show = not quiet and is_terminal()

    def progress(step: str) -> None:
        if show:
            click.echo(f"\r\033[K{time.perf_counter() - t0:6.1f}s  {step}", err=True, nl=False)

    try:
        result = compile_vocabulary(ws, spec, strict=strict, progress=progress)
    finally:
        if show:
            click.echo("\r\033[K", err=True, nl=False)
    s = result.summary
    if not quiet:
        click.echo(
            f"compiled {s['name']}: {counted(s['topics'], 'topic')}, "
            f"{counted(s['aliases'], 'alias', 'aliases')}, "
            f"{counted(s['dropped'], 'topic')} and "
            f"{counted(s['dropped_aliases'], 'alias', 'aliases')} dropped, "
            f"{counted(s['cycles_broken'], 'cycle link')} broken, "
            f"{counted(s['ambiguous_keys'], 'ambiguous key')}"
        )
        c = result.vocabulary.report.counts
        if c.get("inflected_forms"):
            click.echo(f"{counted(c['inflected_forms'], 'plural form')} added to the lexicon")
        if "common_words" in s:
            click.echo(
                f"{counted(s['common_words'], 'common word')} at or above the spec's Zipf "
                "frequency (report.json common_words)"
            )
        if any(c.get(k) for k in ("curation_applied", "curation_stale", "curation_overridden")):
            click.echo(curation_summary(c) + " (see report.txt)")
        if s["stale"]:
            click.echo(f"{counted(s['stale'], 'stale curation edit')}: see report.txt", err=True)
        click.echo(f"wrote {s['output']}")
    for p in result.problems:  # what a release would refuse
        click.echo(f"Warning: release gate {p.gate}: {p.message}", err=True)
    if as_json:
        echo_json({**s, "seconds": round(time.perf_counter() - t0, 3)})


COMMANDS = [compile_command]
