"""Helpers shared by the command modules: finding the workspace, progress, JSON, and
the flags that stand for the library parameters an error message names."""

from __future__ import annotations

import json
import re
import sys

import click

from kgkit.errors import KgkitError
from kgkit.workspace import Workspace, find_workspace, load_workspace

__all__ = ["echo_json", "flag_message", "flag_name", "get_workspace", "is_terminal"]


def get_workspace(ctx: click.Context) -> Workspace:
    """The workspace named by ``--workspace`` or found from the current folder up."""
    root = (ctx.find_root().obj or {}).get("workspace")
    return load_workspace(root) if root else find_workspace()


def echo_json(data: object) -> None:
    """One JSON object on one line (sorted keys, so output is stable)."""
    click.echo(json.dumps(data, sort_keys=True, ensure_ascii=False))


def is_terminal() -> bool:
    return sys.stdout.isatty() and sys.stderr.isatty()


def flag_name(param: click.Parameter) -> str:
    """How the command line spells a parameter: its long flag, or its argument name."""
    if isinstance(param, click.Option):
        longs = [o for o in param.opts if o.startswith("--")]
        return (longs or param.opts)[0]
    return param.human_readable_name


def flag_message(exc: KgkitError, params: list[click.Parameter]) -> str:
    """``str(exc)`` with each library parameter it names written as its flag.

    A message names a parameter as ``name: ...`` at its start or as ``name=value``:
    ``batch_size: must be at least 1`` becomes ``--batch-size: must be at least 1``,
    ``on_error='skip'`` becomes ``--on-error skip`` and ``allow_update=True`` (a flag)
    ``--allow-update``.
    """
    text = str(exc)
    by_name = {}
    for p in params:
        by_name.setdefault(p.name, p)
    for p in params:  # an option is also known by its long flag (--format: format)
        for o in getattr(p, "opts", ()):
            if o.startswith("--"):
                by_name.setdefault(o[2:].replace("-", "_"), p)
    for name in exc.params:
        p = by_name.get(name)
        if p is None:
            continue
        flag, is_flag = flag_name(p), getattr(p, "is_flag", False)

        def spell(m: re.Match, flag=flag, is_flag=is_flag) -> str:
            value = m.group(1)
            if value is None or is_flag:
                return flag
            return f"{flag} {value.strip(chr(39) + chr(34))}"

        # "name: ..." at the start (an ArgumentError) and "name=value" anywhere
        text = re.sub(
            rf"^{re.escape(name)}(?=: )|(?<![\w.-]){re.escape(name)}"
            rf"=('[^']*'|\"[^\"]*\"|[^\s,;:)]+)",
            spell,
            text,
        )
    return text
