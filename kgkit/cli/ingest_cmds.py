"""``kgkit import``, ``kgkit graphs`` and ``kgkit slice``."""

from __future__ import annotations

import os
import time
from pathlib import Path

import click

from kgkit.cli.common import echo_json, get_workspace, is_terminal
from kgkit.ingest import FORMATS, ImportOptions, Progress, import_files, make_slice
from kgkit.ingest.loader import DEFAULT_BATCH, graph_name_for
from kgkit.store import list_graphs, open_store


class _Bar:
    """A one-line progress display on standard error: bytes read, statements per second."""

    def __init__(self):
        self.t0 = time.perf_counter()
        self.last = 0.0

    def __call__(self, p: Progress) -> None:
        now = time.perf_counter()
        if now - self.last < 0.2:
            return
        self.last = now
        rate = p.statements / max(now - self.t0, 1e-9)
        mb = p.bytes_read / 1e6
        if p.bytes_total:
            share = min(p.bytes_read / p.bytes_total, 1.0)
            filled = int(share * 30)
            bar = "#" * filled + "." * (30 - filled)
            text = f"\r{p.file} [{bar}] {share:5.1%} {mb:,.1f} MB  {rate:,.0f} statements/s"
        else:
            text = f"\r{p.file} {mb:,.1f} MB  {rate:,.0f} statements/s"
        click.echo(text, err=True, nl=False)

    def done(self) -> None:
        if self.last:
            click.echo("\r\033[K", err=True, nl=False)


def _split(text: str | None) -> list[str] | None:
    return [x.strip() for x in (text or "").split(",") if x.strip()] or None


def _slicing_options(scope_default: str):
    """--scope, --predicates, --literal-languages: what an import or a slice keeps."""

    def decorate(f):
        f = click.option(
            "--literal-languages",
            metavar="LIST",
            help="Comma-separated languages: language-tagged literals in others are left out "
            "(untagged literals always kept).",
        )(f)
        f = click.option(
            "--predicates",
            metavar="LIST",
            help="Comma-separated predicates (CURIEs or <IRIs>) to keep; with --scope "
            "profile, kept besides the profile's.",
        )(f)
        return click.option(
            "--scope",
            type=click.Choice(["profile", "all"]),
            default=scope_default,
            show_default=True,
            help="profile: only statements whose predicate is in the workspace profile; "
            "all: every predicate.",
        )(f)

    return decorate


def _error_options(rejects_default: str):
    """--on-error and --rejects."""

    def decorate(f):
        f = click.option(
            "--rejects",
            type=click.Path(dir_okay=False, path_type=Path),
            help=f"With --on-error skip: file for the bad statements (default {rejects_default}).",
        )(f)
        return click.option(
            "--on-error",
            type=click.Choice(["stop", "skip"]),
            default="stop",
            show_default=True,
            help="stop: the first bad statement aborts; skip: set it aside and go on.",
        )(f)

    return decorate


def _output_options(f):
    """--json and --quiet."""
    f = click.option("--quiet", "-q", is_flag=True, help="No progress display.")(f)
    return click.option(
        "--json", "as_json", is_flag=True, help="Print the summary as one JSON object."
    )(f)


def _jobs_option(what: str):
    return click.option(
        "--jobs",
        "-j",
        type=click.IntRange(min=1),
        default=None,
        help=f"Worker processes parsing and slicing {what}. Default: the number of cores.",
    )


@click.command("import")
# paths: a file name that is not UTF-8 is a name like any other (kept escaped in messages)
@click.argument("files", nargs=-1, required=True, type=click.Path(allow_dash=True))
@click.option("--graph", "-g", help="Graph to import into (default: from the file name).")
@click.option(
    "--format",
    "fmt",
    type=click.Choice(list(FORMATS)),
    help="Input format (default: from the extension). 'records' is entity-record JSON Lines.",
)
@_error_options(".kgkit/rejects/GRAPH.rejects.txt")
@_slicing_options("all")
@click.option(
    "--batch-size",
    type=int,
    default=DEFAULT_BATCH,
    show_default=True,
    help="Statements loaded per batch: the memory budget (about 0.6 GB at the default).",
)
@click.option("--base", "base_iri", help="Base IRI for relative IRIs in Turtle and JSON-LD.")
@_jobs_option("line-based input (N-Triples, N-Quads, entity records)")
@_output_options
@click.pass_context
def import_command(
    ctx,
    files,
    graph,
    fmt,
    on_error,
    rejects,
    scope,
    predicates,
    literal_languages,
    batch_size,
    base_iri,
    jobs,
    as_json,
    quiet,
):
    """Import dump files into one graph of the store.

    FILES are N-Triples, N-Quads, Turtle, JSON-LD or entity records. Compressed
    input (gzip, bzip2, xz, zstd) is recognised by its content. Use - for
    standard input (with --format). Each import replaces its graph atomically.

    Example: kgkit import dump.nt.gz --scope profile --literal-languages en,de --on-error skip
    """
    ws = get_workspace(ctx)
    opts = ImportOptions(
        graph=graph,
        format=fmt,
        on_error=on_error,
        rejects=rejects,
        slice=make_slice(
            ws,
            scope=scope,
            predicates=_split(predicates),
            literal_languages=_split(literal_languages),
            # a graph with its own profile in kgkit.yaml keeps its own predicates
            graphs=[graph] if graph else [graph_name_for(f) for f in files],
        ),
        batch_size=batch_size,
        base_iri=base_iri,
        jobs=jobs or os.cpu_count() or 1,
    )
    bar = _Bar() if (is_terminal() and not quiet and not as_json) else None
    try:
        summaries = import_files(ws, list(files), opts, progress=bar)
    finally:
        if bar:
            bar.done()
    for s in summaries:
        if as_json:
            echo_json(s.to_dict())
            continue
        verb = "replaced" if s.replaced else "created"
        click.echo(f"graph {s.graph} {verb} from {', '.join(s.files)} in {s.seconds:.2f} s")
        width = len(f"{s.read:,}")
        for key in ("read", "loaded", "duplicates", "filtered", "rejected"):
            click.echo(f"  {key:<10} {getattr(s, key):>{width},}")
        if s.rejects and s.rejected:
            click.echo(f"  rejected statements set aside in {s.rejects}")
        if s.reclaimable:
            click.echo(
                "  the replaced content is seen by no query; free its space with: kgkit reclaim"
            )


@click.command("graphs")
@click.option("--json", "as_json", is_flag=True, help="One JSON object per graph.")
@click.pass_context
def graphs_command(ctx, as_json):
    """List the graphs in the store and where each one came from.

    For each graph, the provenance of its import: files, sizes, sha256, format,
    counts and times.

    Example: kgkit graphs --json
    """
    ws = get_workspace(ctx)
    from kgkit.cli.store_cmds import reclaimable_note

    with open_store(ws.store_path) as store:
        graphs = list_graphs(store)
        note = reclaimable_note(store)
    if as_json:
        for g in graphs:
            echo_json(
                {
                    "graph": g.name,
                    "content": g.content,
                    "import": g.import_id,
                    "files": [f.__dict__ for f in g.files],
                    **g.counts,
                    "started": g.started,
                    "ended": g.ended,
                    "kgkit_version": g.kgkit_version,
                }
            )
        return
    if not graphs:
        click.echo("no graphs yet; import one with: kgkit import FILE")
    for g in graphs:
        c = g.counts
        edited = " after updates" if "statements" in c else ""
        click.echo(
            f"{g.name}  {g.statements:,} statements{edited}  (import {g.import_id}, {g.ended})"
        )
        for f in g.files:
            comp = "" if f.compression == "none" else f", {f.compression}"
            click.echo(f"  {f.name}  {f.format}{comp}, {f.size:,} bytes, sha256 {f.sha256[:16]}…")
        click.echo(
            f"  read {c.get('read', 0):,} = loaded {c.get('loaded', 0):,} + duplicates "
            f"{c.get('duplicates', 0):,} + filtered {c.get('filtered', 0):,} + rejected "
            f"{c.get('rejected', 0):,}"
        )
    if note:
        click.echo(note)


@click.command("slice")
# paths: a file name that is not UTF-8 is a name like any other (kept escaped in messages)
@click.argument("files", nargs=-1, required=True, type=click.Path(allow_dash=True))
@click.option(
    "--output",
    "-o",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="N-Triples file to write (.gz at the end: gzip-compressed).",
)
@click.option(
    "--format",
    "fmt",
    type=click.Choice(["nt", "nq", "records"]),
    help="Input format (default: from the extension).",
)
@_slicing_options("profile")
@click.option(
    "--roots",
    help="Comma-separated entities (CURIEs or <IRIs>): keep only statements about them and "
    "what reaches them through the profile's parent predicates (reads the input twice).",
)
@_error_options("OUTPUT.rejects.txt")
@_jobs_option("the input")
@click.option(
    "--engine",
    type=click.Choice(["local", "spark"]),
    default="local",
    show_default=True,
    help="local: worker processes on this machine; spark: Apache Spark (the spark extra).",
)
@click.option(
    "--spark-master",
    help="With --engine spark: the Spark master URL (default local[JOBS]).",
)
@click.option(
    "--in-pieces",
    "pieces",
    is_flag=True,
    help="With --engine spark: OUTPUT is a new folder the executors write the slice into, "
    "as piece-00000.nt, piece-00001.nt, ...; concatenated in order, they are the one file.",
)
@_output_options
@click.pass_context
def slice_command(
    ctx,
    files,
    output,
    fmt,
    scope,
    predicates,
    literal_languages,
    roots,
    on_error,
    rejects,
    jobs,
    engine,
    spark_master,
    pieces,
    as_json,
    quiet,
):
    """Cut a dump down to what a vocabulary needs, as N-Triples.

    For dumps too big to import whole.
    Keeps the profile's predicates (or --predicates), the chosen --literal-languages, and with
    --roots only the entities below those roots. Reads N-Triples, N-Quads or entity
    records, plain or compressed; the store is not touched. Import the result with
    kgkit import.

    Example: kgkit slice dump.nt.gz -o topics.nt --literal-languages en,de --roots tw:water-sports
    """
    from kgkit.ingest.slice_dump import slice_dump

    ws = get_workspace(ctx)
    sl = make_slice(
        ws,
        scope=scope,
        predicates=_split(predicates),
        literal_languages=_split(literal_languages),
    )
    root_iris = [ws.expand(r, where="--roots") for r in _split(roots) or []]
    bar = _Bar() if (is_terminal() and not quiet and not as_json) else None
    try:
        s = slice_dump(
            ws,
            list(files),
            output,
            sl,
            format=fmt,
            roots=root_iris or None,
            on_error=on_error,
            rejects=rejects,
            jobs=jobs or os.cpu_count() or 1,
            progress=bar,
            engine=engine,
            spark_master=spark_master,
            pieces=pieces,
        )
    finally:
        if bar:
            bar.done()
    if as_json:
        echo_json(s.to_dict())
        return
    click.echo(f"wrote {s.output} from {', '.join(s.files)} in {s.seconds:.2f} s")
    width = len(f"{s.read:,}")
    for key in ("read", "written", "filtered", "rejected"):
        click.echo(f"  {key:<10} {getattr(s, key):>{width},}")
    if s.entities is not None:
        click.echo(f"  entities below the roots: {s.entities:,}")
    if s.rejects and s.rejected:
        click.echo(f"  rejected statements set aside in {s.rejects}")


COMMANDS = [import_command, graphs_command, slice_command]
