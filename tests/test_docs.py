"""Every command is documented: help text, and a README entry with a real command line."""

from __future__ import annotations

import re
import shlex

import click
import pytest
from conftest import ROOT

from kgkit.cli import cli

README = (ROOT / "README.md").read_text(encoding="utf-8")
COMMANDS = sorted(cli.list_commands(click.Context(cli)))


def _code_lines(text: str) -> list[str]:
    """The lines of the README's shell code blocks that run kgkit (after a pipe, too)."""
    out = []
    for block in re.findall(r"```(?:bash|sh|shell)\n(.*?)```", text, flags=re.S):
        for line in block.splitlines():
            for part in line.split("|"):
                part = part.strip()
                if part.startswith("kgkit "):
                    out.append(part)
                elif ".venv/bin/kgkit " in part:
                    out.append("kgkit " + part.split(".venv/bin/kgkit ", 1)[1])
    return out


def _command_of(line: str) -> tuple[str, list[str]]:
    """Parse a README line as the kgkit command line would; returns (command, its args)."""
    args = shlex.split(line, comments=True)[1:]
    ctx = cli.make_context("kgkit", list(args), resilient_parsing=False)
    # the sub-command and its arguments (click 8.2 renamed protected_args to _protected_args)
    protected = getattr(ctx, "_protected_args", None)
    if protected is None:
        protected = ctx.protected_args
    rest = list(protected) + list(ctx.args)
    name, command, sub_args = cli.resolve_command(ctx, rest)
    try:
        command.make_context(name, list(sub_args), parent=ctx)
    except click.MissingParameter:
        raise
    except click.BadParameter:
        pass  # the option exists and took its value, a file that exists only in the example
    return name, sub_args


LINES = _code_lines(README)


def test_the_readme_shows_command_lines():
    assert len(LINES) > len(COMMANDS)


@pytest.mark.parametrize("name", COMMANDS)
def test_every_command_has_help_text(name, runner):
    command = cli.get_command(click.Context(cli), name)
    assert (command.help or "").strip(), f"`kgkit {name}` has no help text"
    res = runner.invoke(cli, [name, "--help"])
    assert res.exit_code == 0 and res.output.startswith("Usage: ")
    assert f" {name} " in res.output.splitlines()[0]
    for param in command.params:
        if isinstance(param, click.Option):
            assert (param.help or "").strip(), f"`kgkit {name} {param.opts[0]}` has no help"


@pytest.mark.parametrize("name", COMMANDS)
def test_every_command_has_a_real_command_line_in_the_readme(name):
    used = []
    for line in LINES:
        try:
            cmd, _args = _command_of(line)
        except click.UsageError:
            continue
        if cmd == name:
            used.append(line)
    assert used, f"README has no working `kgkit {name} ...` line in a shell code block"


def test_every_readme_command_line_parses():
    bad = []
    for line in LINES:
        try:
            _command_of(line)
        except click.UsageError as exc:
            bad.append(f"{line}: {exc.format_message()}")
    assert bad == []


@pytest.mark.parametrize("name", COMMANDS)
def test_the_command_reference_lists_every_command(name):
    section = README.split("\n## Command reference\n", 1)[1].split("\n## ", 1)[0]
    assert re.search(rf"^kgkit {re.escape(name)}\b", section, flags=re.M), name


def test_the_demo_walk_quotes_real_output(runner, tmp_path, monkeypatch):
    # every line of the README's demo excerpts is a line the demo really prints
    section = README.split("\n## The demo, step by step\n", 1)[1].split("\n## ", 1)[0]
    quoted = [
        line.strip()
        for block in re.findall(r"```text\n(.*?)```", section, flags=re.S)
        for line in block.splitlines()
        if line.strip() and line.strip() != "..."
    ]
    assert len(quoted) > 30
    monkeypatch.chdir(tmp_path)  # the README runs it as `kgkit demo demo-workspace`
    res = runner.invoke(cli, ["demo", "demo-workspace"])
    assert res.exit_code == 0, res.output
    printed = [line.strip() for line in res.output.splitlines()]
    missing = []
    for line in quoted:
        if line.endswith("..."):  # shortened in the README: the start must match
            if not any(p.startswith(line[:-3].rstrip()) for p in printed):
                missing.append(line)
        elif line not in printed:
            missing.append(line)
    assert missing == []
