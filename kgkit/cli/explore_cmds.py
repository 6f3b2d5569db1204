"""``kgkit query``, ``templates``, ``run``, ``show``, ``find``, ``tree`` and ``shell``."""

from __future__ import annotations

import json
import sys
from dataclasses import asdict

import click

from kgkit.cli.common import flag_message, get_workspace
from kgkit.entities import (
    find_entities,
    format_card,
    format_matches,
    format_tree,
    show_entity,
    tree_of,
)
from kgkit.errors import QueryError, error_lines
from kgkit.inputs import decode_text, file_error, read_text_file
from kgkit.query import FORMATS, connect, run_query, write_result
from kgkit.shell import Shell, history_path
from kgkit.templates import list_templates, load_template, run_template


def _graph_option(f):
    return click.option(
        "--graph",
        "-g",
        "graphs",
        metavar="NAME",
        multiple=True,
        help="Query only this imported graph (repeatable; default: all of them).",
    )(f)


def _output_options(f):
    f = click.option(
        "--format",
        "fmt",
        type=click.Choice(list(FORMATS)),
        default="table",
        show_default=True,
        help="table: aligned columns for reading; json, csv, tsv: the W3C SPARQL result "
        "formats; nt, ttl: N-Triples or Turtle, for CONSTRUCT and DESCRIBE.",
    )(f)
    f = click.option(
        "--allow-service",
        is_flag=True,
        help="Let SERVICE clauses send requests to other endpoints over the network.",
    )(f)
    f = click.option(
        "--timeout",
        metavar="SECONDS",
        type=float,
        default=60.0,
        show_default=True,
        help="Seconds to wait for a remote endpoint.",
    )(f)
    return _graph_option(f)


def _out():
    return sys.stdout


@click.command("query")
@click.argument("sparql", required=False)
@click.option(
    "--file",
    "-f",
    "path",
    metavar="FILE",
    type=click.Path(dir_okay=False),
    help="Read the query from FILE.",
)
@_output_options
@click.option(
    "--allow-update",
    is_flag=True,
    help="Run a SPARQL update (INSERT, DELETE, DROP...) on the store, opened for writing.",
)
@click.option(
    "--allow-load",
    is_flag=True,
    help="Let an update's LOAD read a local file or fetch a URL over the network.",
)
@click.pass_context
def query_command(ctx, sparql, path, fmt, graphs, allow_service, timeout, allow_update, allow_load):
    """Run a SPARQL query on the store (or the workspace's endpoint).

    Give the query as the SPARQL argument, in --file FILE, or on standard input
    (no argument, or -). Workspace prefixes need no PREFIX line. The query sees the union of the
    imported graphs (GRAPH ?g reaches each one); updates and SERVICE clauses are
    refused unless allowed.

    Example: kgkit query 'SELECT ?s ?l WHERE { ?s skos:prefLabel ?l } LIMIT 5'
    """
    ws = get_workspace(ctx)
    if path and sparql:
        raise click.UsageError("give the query as an argument or with --file, not both")
    if path:
        text = read_text_file(path, "a SPARQL query")
    elif sparql is None or sparql == "-":
        if sparql is None and sys.stdin.isatty():
            raise click.UsageError(
                "no query: give it as an argument, with --file, or on standard input"
            )
        text = decode_text(sys.stdin.buffer.read(), "standard input")
    else:
        text = sparql
    if not text.strip():
        raise QueryError("the query is empty")
    with connect(ws, write=allow_update, timeout=timeout) as backend:
        res = run_query(
            backend,
            text,
            graphs=list(graphs) or None,
            allow_update=allow_update,
            allow_service=allow_service,
            allow_load=allow_load,
        )
        write_result(res, _out(), fmt, ws)


def _params(pairs: tuple[str, ...]) -> dict[str, str]:
    out = {}
    for pair in pairs:
        key, eq, value = pair.partition("=")
        if not eq or not key:
            raise click.BadParameter(f"{pair!r}: write -p PARAM=VALUE", param_hint="-p")
        if key in out:
            raise click.BadParameter(f"{key}: given twice", param_hint="-p")
        out[key] = value
    return out


@click.command("run")
@click.argument("name")
@click.option(
    "--param",
    "-p",
    "pairs",
    metavar="PARAM=VALUE",
    multiple=True,
    help="A value for one of the template's parameters (repeatable).",
)
@_output_options
@click.pass_context
def run_command(ctx, name, pairs, fmt, graphs, allow_service, timeout):
    """Run the template NAME with values for its parameters.

    Each value is given as -p PARAM=VALUE; `kgkit templates NAME` lists the
    template's parameters.

    Example: kgkit run descendants -p root=tw:water-sports -p max_depth=2 --format csv
    """
    ws = get_workspace(ctx)
    params = _params(pairs)
    with connect(ws, timeout=timeout) as backend:
        res = run_template(
            backend, name, params, graphs=list(graphs) or None, allow_service=allow_service
        )
        write_result(res, _out(), fmt, ws)


@click.command("templates")
@click.argument("name", required=False)
@click.pass_context
def templates_command(ctx, name):
    """List the templates and their parameters, or show one.

    With NAME, shows that template in full, with its query.

    Workspace templates (queries/*.rq) override built-in ones of the same name.

    Example: kgkit templates descendants
    """
    ws = get_workspace(ctx)
    tpls = [load_template(ws, name)] if name else list_templates(ws)
    for t in tpls:
        where = "built-in" if t.builtin else t.path
        click.echo(f"{t.name}  ({where})")
        click.echo(f"    {t.summary}")
        for p in t.params:
            if p.required:
                need = "required"
            elif p.default is not None:
                need = f"= {p.default}"
            else:
                need = "optional"
            choice = f" (one of {', '.join(p.choices)})" if p.choices else ""
            click.echo(f"    -p {p.name:<12} {p.kind:<11}{need:<15} {p.help}{choice}")
        if name:
            click.echo("")
            click.echo(t.body.rstrip("\n"))


@click.command("show")
@click.argument("term")
@_graph_option
@click.option("--json", "as_json", is_flag=True, help="Print the card as one JSON object.")
@click.pass_context
def show_command(ctx, term, graphs, as_json):
    """Show everything the store says about one entity.

    TERM is a CURIE, an <IRI> or an exact label. A label shared by several
    entities lists them, with their parents.

    Example: kgkit show tw:canoe-polo
    """
    ws = get_workspace(ctx)
    with connect(ws) as backend:
        card = show_entity(backend, term, graphs=list(graphs) or None)
    if as_json:
        click.echo(json.dumps(asdict(card), sort_keys=True, ensure_ascii=False))
    else:
        click.echo(format_card(card), nl=False)


@click.command("find")
@click.argument("text")
@click.option(
    "--lang",
    "language",
    metavar="LANG",
    help="Only names in this language (en also matches en-GB).",
)
@click.option(
    "--limit", metavar="N", type=int, default=20, show_default=True, help="At most this many."
)
@_graph_option
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object per match.")
@click.pass_context
def find_command(ctx, text, language, limit, graphs, as_json):
    """Find entities by label or alias, each with its parents.

    Best matches first: exact names first, then names starting with TEXT, then a word starting with
    it, then anywhere; case does not matter.

    Example: kgkit find polo --lang en
    """
    ws = get_workspace(ctx)
    with connect(ws) as backend:
        matches = find_entities(backend, text, language, limit, graphs=list(graphs) or None)
    if as_json:
        for m in matches:
            click.echo(json.dumps(asdict(m), sort_keys=True, ensure_ascii=False))
    elif matches:
        click.echo(format_matches(matches), nl=False)
    else:
        click.echo(f"nothing named like {text!r}", err=True)


@click.command("tree")
@click.argument("term")
@click.option(
    "--depth", "-d", metavar="N", type=int, default=2, show_default=True, help="Levels shown."
)
@click.option(
    "--max-children",
    metavar="N",
    type=int,
    default=50,
    show_default=True,
    help="Children shown under one entity before '… N more'.",
)
@_graph_option
@click.pass_context
def tree_command(ctx, term, depth, max_children, graphs):
    """Show the hierarchy below an entity as an indented tree.

    TERM is a CURIE, an <IRI> or an exact label. Each entity shows how many
    entities are below it; one with several parents says so; a cycle is cut
    and marked where it closes.

    Example: kgkit tree tw:water-sports --depth 3
    """
    ws = get_workspace(ctx)
    with connect(ws) as backend:
        lines = tree_of(backend, term, depth, max_children, graphs=list(graphs) or None)
    click.echo(format_tree(lines), nl=False)


@click.command("shell")
@click.option(
    "--format",
    "fmt",
    type=click.Choice(list(FORMATS)),
    default="table",
    show_default=True,
    help="Output format to start with (':format NAME' switches it).",
)
@_graph_option
@click.pass_context
def shell_command(ctx, fmt, graphs):
    """Type SPARQL queries interactively.

    End each query with ; at the end of a line; ':help' lists the shell's own
    commands. History is kept across sessions in the workspace (.kgkit/shell-history).

    Example: kgkit shell
    """
    ws = get_workspace(ctx)
    interactive = sys.stdin.isatty()
    with connect(ws) as backend:
        path = history_path(backend)
        keep = [True]  # history is kept until writing it fails once

        def warn_history(exc: OSError) -> None:
            keep[0] = False
            click.echo(f"Warning: {file_error(path, exc, 'write')}; history is not kept", err=True)

        try:
            path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            warn_history(exc)
        rl = None
        if interactive:
            try:
                import readline as rl

                rl.set_auto_history(False)
                if path.exists():
                    rl.read_history_file(str(path))
            except (ImportError, OSError):
                rl = None

        def read(prompt: str) -> str | None:
            try:
                if interactive:
                    return input(prompt)
                click.echo(prompt, nl=False)
                line = sys.stdin.readline()
                if not line:
                    click.echo("")
                    return None
                return line.rstrip("\n")
            except EOFError:
                click.echo("")
                return None

        def remember(statement: str) -> None:
            if rl is not None:
                rl.add_history(statement)
            if keep[0]:
                try:
                    with open(path, "a", encoding="utf-8", errors="surrogateescape") as fh:
                        fh.write(statement + "\n")
                except OSError as exc:
                    warn_history(exc)

        if interactive:
            click.echo("kgkit shell: end queries with ;  (:help for commands, :quit to leave)")
        Shell(
            backend,
            read,
            lambda s: click.echo(s, nl=False),
            remember,
            fmt=fmt,
            graphs=list(graphs) or None,
            describe=lambda exc: error_lines(exc, flag_message(exc, query_command.params)),
        ).loop()


COMMANDS = [
    query_command,
    templates_command,
    run_command,
    show_command,
    find_command,
    tree_command,
    shell_command,
]
