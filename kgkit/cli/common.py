"""Helpers shared by the command modules: finding the workspace, progress, JSON."""

from __future__ import annotations

import json
import sys

import click

from kgkit.workspace import Workspace, find_workspace, load_workspace

__all__ = ["get_workspace", "echo_json", "is_terminal"]


def get_workspace(ctx: click.Context) -> Workspace:
    """The workspace named by ``--workspace`` or found from the current folder up."""
    root = (ctx.find_root().obj or {}).get("workspace")
    return load_workspace(root) if root else find_workspace()


def echo_json(data: object) -> None:
    """One JSON object on one line (sorted keys, so output is stable)."""
    click.echo(json.dumps(data, sort_keys=True, ensure_ascii=False))


def is_terminal() -> bool:
    return sys.stdout.isatty() and sys.stderr.isatty()
