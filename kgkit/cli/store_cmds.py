"""``kgkit drop`` and ``kgkit reclaim``: removing a graph, and the space it held."""

from __future__ import annotations

import click

from kgkit.cli.common import echo_json, get_workspace, is_terminal
from kgkit.store import (
    AUTO_RECLAIM,
    drop_graph,
    open_store,
    reclaim,
    reclaim_graph,
    reclaimable_graphs,
)


@click.command("drop")
@click.argument("name")
@click.option("--json", "as_json", is_flag=True, help="Print what was dropped as one JSON object.")
@click.pass_context
def drop_command(ctx, name, as_json):
    """Remove graph NAME and its provenance from the store.

    The provenance of all its imports goes too, in one transaction: queries and
    `kgkit graphs` stop seeing the graph together, and every other graph stays as
    it is. The statements it held are left for `kgkit reclaim`, which frees their
    space (up to 1,000 go at once).

    Example: kgkit drop sport-2025
    """
    ws = get_workspace(ctx)
    with open_store(ws.store_path, write=True) as store:
        info = drop_graph(store, name)
        # small content goes at once; a large one would take longer than its import did
        gone = reclaim_graph(store, info.content, at_most=AUTO_RECLAIM) is not None
    if as_json:
        echo_json(
            {
                "graph": info.name,
                "content": info.content,
                "statements": info.statements,
                "reclaimable": not gone,
            }
        )
        return
    click.echo(f"graph {info.name} dropped ({info.statements:,} statements)")
    if not gone:
        click.echo("  its statements are seen by no query; free their space with: kgkit reclaim")


@click.command("reclaim")
@click.option(
    "--limit",
    type=click.IntRange(min=1),
    default=None,
    help="Remove at most this many statements now (default: all); the rest waits.",
)
@click.option("--json", "as_json", is_flag=True, help="Print the summary as one JSON object.")
@click.option("--quiet", "-q", is_flag=True, help="No progress display.")
@click.pass_context
def reclaim_command(ctx, limit, as_json, quiet):
    """Free the space held by replaced and dropped graphs.

    Also what failed or killed imports left. No query sees these statements;
    removing them takes longer than importing them, so imports leave it to this
    command. It works in small steps: stopping it with Ctrl-C loses nothing, and
    the next run goes on from there.

    Example: kgkit reclaim --limit 1000000
    """
    ws = get_workspace(ctx)
    show = is_terminal() and not quiet and not as_json

    def progress(n: int) -> None:
        click.echo(f"\r{n:,} statements removed", err=True, nl=False)

    with open_store(ws.store_path, write=True) as store:
        try:
            s = reclaim(store, limit=limit, progress=progress if show else None)
        finally:
            if show:
                click.echo("\r\033[K", err=True, nl=False)
    if as_json:
        echo_json(
            {
                "graphs": s.graphs,
                "statements": s.statements,
                "remaining": s.remaining,
                "seconds": round(s.seconds, 3),
            }
        )
        return
    if not s.graphs and not s.statements:
        click.echo("nothing to reclaim")
        return
    click.echo(
        f"reclaimed {s.statements:,} statements of {len(s.graphs)} content "
        f"graph{'s' if len(s.graphs) != 1 else ''} in {s.seconds:.2f} s"
    )
    if s.remaining:
        click.echo(f"  {len(s.remaining)} left; run kgkit reclaim again to go on")


def reclaimable_note(store) -> str | None:
    """The line `kgkit graphs` shows when replaced or dropped content waits."""
    left = reclaimable_graphs(store)
    if not left:
        return None
    n = len(left)
    return (
        f"{n} replaced, dropped or unfinished content graph{'s' if n != 1 else ''} "
        "(seen by no query) can be freed with: kgkit reclaim"
    )


COMMANDS = [drop_command, reclaim_command]
