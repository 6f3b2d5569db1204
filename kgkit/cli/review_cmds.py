"""``kgkit review`` (the review page) and ``kgkit probe`` (annotator's first pass)."""

from __future__ import annotations

import json
import sys
from pathlib import Path

import click

from kgkit.cli.common import echo_json
from kgkit.errors import ProbeError
from kgkit.inputs import decode_text, read_text_file
from kgkit.probe import (
    DEFAULT_THRESHOLD,
    curation_edits_for,
    load_lexicon,
    probe_corpus,
    write_curation_edits,
)
from kgkit.review import write_page
from kgkit.wording import topic_text


@click.command("review")
@click.argument("vocab", metavar="VOCAB", type=click.Path(file_okay=False, path_type=Path))
@click.option(
    "--output",
    "-o",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="The HTML file to write.",
)
@click.option("--no-lint", is_flag=True, help="Leave the lint findings out (faster).")
def review_command(vocab: Path, output: Path, no_lint: bool) -> None:
    """Write the HTML review page of a vocabulary folder.

    VOCAB is a release (vocab/NAME/VERSION) or a build (vocab/NAME/build). The
    page is one self-contained file and works offline: topic tree with search,
    per-topic card, ambiguous aliases, dropped topics, lint findings, changelog
    and charts.

    Example: kgkit review vocab/tidewell/1.0.0 -o tidewell-1.0.0.html
    """
    path = write_page(vocab, output, lint=not no_lint)
    click.echo(f"review page written to {path} ({path.stat().st_size:,} bytes)")


def _read_input(text: str | None, file: str | None) -> str:
    if (text is None) == (file is None):
        raise click.UsageError("give either TEXT or -f FILE (- for standard input)")
    if text is not None:
        return text
    if file == "-":
        return decode_text(sys.stdin.buffer.read(), "standard input", ProbeError)
    return read_text_file(file, "a text to probe", ProbeError)


def _line_col(text: str, offset: int) -> tuple[int, int]:
    line = text.count("\n", 0, offset) + 1
    return line, offset - (text.rfind("\n", 0, offset) + 1) + 1


@click.command("probe")
@click.argument("vocab", metavar="VOCAB", type=click.Path(file_okay=False, path_type=Path))
@click.argument("text", required=False)
@click.option(
    "--file", "-f", "file", metavar="FILE", help="Read the text from FILE (- for standard input)."
)
@click.option(
    "--corpus",
    metavar="DIR",
    type=click.Path(file_okay=False, exists=True, path_type=Path),
    help="Probe every .txt file under this folder and report how common each alias is.",
)
@click.option(
    "--threshold",
    metavar="SHARE",
    type=float,
    default=DEFAULT_THRESHOLD,
    show_default=True,
    help="With --corpus: flag aliases found in more than this share of the documents.",
)
@click.option(
    "--write-curation",
    type=click.Path(dir_okay=False, path_type=Path),
    help="With --corpus: write the flagged aliases as remove_alias curation edits to this file.",
)
@click.option("--json", "as_json", is_flag=True, help="Print the hits (or the corpus) as JSON.")
def probe_command(vocab, text, file, corpus, threshold, write_curation, as_json):
    """Mark where a vocabulary's aliases occur in a text.

    VOCAB is a release (vocab/NAME/VERSION) or a build (vocab/NAME/build); the
    text is TEXT, --file FILE, or with --corpus every text of a folder. Matches
    as an annotator's first pass would: longest match first, on word boundaries,
    compared by the lexicon's match key (NFKC, case folded). Each hit shows its
    span, its topic (all candidates when the key is ambiguous) and the topic's
    parents.

    Example: kgkit probe vocab/tidewell/1.0.0 -f article.txt
    """
    lexicon = load_lexicon(vocab)
    if corpus is not None:
        if text is not None or file is not None:
            raise click.UsageError("--corpus takes no TEXT or -f FILE")
        report = probe_corpus(lexicon, corpus, threshold=threshold)
        edits, skipped = curation_edits_for(report)
        if write_curation:
            write_curation_edits(edits, write_curation)
        if as_json:
            echo_json(report.to_dict())
            return
        click.echo(
            f"{report.documents} documents, {report.hits} hits, {len(report.keys)} match keys; "
            f"{len(report.flagged)} too common (in more than {report.threshold:.0%} "
            "of the documents):"
        )
        width = max((len(k.key) for k in report.keys), default=5)
        for k in report.keys:
            flag = "TOO COMMON" if k.flagged else ""
            topics = ", ".join(topic_text(lexicon.label_of(t), t) for t in k.topics)
            click.echo(
                f"  {k.key:<{width}}  {k.documents:>4}  {k.share:6.1%}  {topics}  {flag}".rstrip()
            )
        for topic, alias, language, _kind in skipped:
            click.echo(
                f"note: {alias!r} is the preferred label of "
                f"{topic_text(lexicon.label_of(topic), topic)} [{language or 'untagged'}]; "
                "an alias edit cannot remove it (relabel or exclude the topic by hand)"
            )
        if write_curation:
            click.echo(f"{len(edits)} remove_alias edits written to {write_curation}")
        return

    body = _read_input(text, file)
    hits = lexicon.find(body)
    if as_json:
        click.echo(json.dumps([h.to_dict() for h in hits], ensure_ascii=False, sort_keys=True))
        return
    for h in hits:
        line, col = _line_col(body, h.start)
        mark = "ambiguous" if h.is_ambiguous else ""
        click.echo(f"{line}:{col} [{h.start}:{h.end}] {h.text!r} {mark}".rstrip())
        for c in h.candidates:
            parents = ", ".join(topic_text(lab, p) for p, lab in c.parents) or "none (a root)"
            click.echo(f"    {topic_text(c.label, c.topic)}  parents: {parents}")
    click.echo(f"{len(hits)} hits" if len(hits) != 1 else "1 hit")


COMMANDS = [review_command, probe_command]
