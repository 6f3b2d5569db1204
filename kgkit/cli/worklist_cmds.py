"""``kgkit triage``: the worklist of names several topics share, riskiest first."""

from __future__ import annotations

from pathlib import Path

import click

from kgkit.cli.common import echo_json
from kgkit.wording import topic_text
from kgkit.worklist import list_shared_names


def _where(name) -> str:
    if name.is_settled:
        return "settled by the curation"
    if not name.in_lexicon:
        return f"out of the lexicon ({name.action})"
    return f"in the lexicon ({name.action})"


@click.command("triage")
@click.argument("folder", metavar="VOCAB", type=click.Path(file_okay=False, path_type=Path))
@click.option(
    "--corpus",
    type=click.Path(file_okay=False, exists=True, path_type=Path),
    help="Also count the .txt documents under this folder that each shared name occurs in.",
)
@click.option(
    "--limit",
    type=click.IntRange(min=1),
    help="Show only the first N names (the riskiest).",
)
@click.option("--json", "as_json", is_flag=True, help="Print the worklist as JSON.")
def triage_command(folder: Path, corpus: Path | None, limit: int | None, as_json: bool) -> None:
    """List the names several topics share, riskiest first.

    VOCAB is a release or build folder. Risk, in this order: how many topics
    share the name, whether it is someone's preferred label, how common it is in
    general text (Zipf frequency), and with --corpus the share of documents it
    occurs in. Each name comes with its
    candidate topics, their labels and parents; settle one with a curation edit
    such as `- settle: {name: bass, keep: [sea-bass]}`.

    Example: kgkit triage vocab/tidewell/build --corpus corpus/
    """
    names = list_shared_names(folder, corpus)
    shown = names[:limit] if limit else names
    if as_json:
        echo_json([n.to_dict() for n in shown])
        return
    click.echo(
        f"{len(names)} shared names in {folder}"
        + (f", the first {len(shown)}" if len(shown) < len(names) else "")
        + " (riskiest first)"
    )
    for i, n in enumerate(shown, 1):
        facts = [f"{len(n.topics)} topics"]
        facts.append(
            f"preferred label of {len(n.preferred_by)}" if n.preferred_by else "nobody's label"
        )
        facts.append(f"Zipf {n.zipf:.2f}" if n.zipf is not None else "Zipf unknown")
        if n.documents is not None:
            facts.append(f"in {n.documents} documents ({n.share:.1%})")
        click.echo(f"{i:>3}. {n.key!r}  {'; '.join(facts)}; {_where(n)}")
        for c in n.candidates:
            parents = ", ".join(topic_text(lab, p) for p, lab in c.parents) or "none (a root)"
            click.echo(f"       {topic_text(c.label, c.topic)}  parents: {parents}")
    if shown:
        first = shown[0]
        click.echo(
            "settle a name in the curation file, e.g.: "
            f"- settle: {{name: {first.key}, keep: [{first.topics[0]}]}}"
        )


COMMANDS = [triage_command]
