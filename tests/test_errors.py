"""The errors: every class in kgkit/errors.py with its exit code, one handler that uses it,
library messages that name parameters and a command line that names flags (issue 13)."""

from __future__ import annotations

import ast
import importlib
import pkgutil
import re
from pathlib import Path

import click
import pytest

import kgkit
import kgkit.errors as errors
from kgkit.cli import cli
from kgkit.cli.common import flag_message
from kgkit.errors import ArgumentError, InputError, KgkitError, ParseError

SOURCE = Path(kgkit.__file__).parent


def _all_subclasses(cls):
    for sub in cls.__subclasses__():
        yield sub
        yield from _all_subclasses(sub)


def test_error_class_defined_outside_errors_module():
    for info in pkgutil.walk_packages(kgkit.__path__, "kgkit."):
        if not info.name.endswith("__main__"):  # that one runs the command line
            importlib.import_module(info.name)
    outside = sorted(
        f"{c.__module__}.{c.__qualname__}"
        for c in _all_subclasses(KgkitError)
        if c.__module__ != "kgkit.errors" and not c.__module__.startswith("tests")
    )
    assert outside == []
    for name in errors.__all__:
        obj = getattr(errors, name)
        if isinstance(obj, type):
            assert isinstance(obj.exit_code, int) and obj.exit_code in (1, 2), name


def _raises(tree):
    for node in ast.walk(tree):
        if isinstance(node, ast.Raise) and node.exc is not None:
            yield node


def test_bare_base_class_raised():
    bare = []
    for path in sorted(SOURCE.rglob("*.py")):
        for node in _raises(ast.parse(path.read_text(encoding="utf-8"))):
            call = node.exc
            if isinstance(call, ast.Call) and getattr(call.func, "id", None) == "KgkitError":
                bare.append(f"{path.relative_to(SOURCE.parent)}:{node.lineno}")
    assert bare == []


_FLAG = re.compile(r"(?<![\w-])--[a-z][a-z-]+")


def test_library_message_names_a_command_line_flag():
    """Strings of the library (not its docstrings, not comments written into files)
    never name a flag: the command line spells parameters as flags."""
    found = []
    for path in sorted(SOURCE.rglob("*.py")):
        if path.parent.name == "cli":
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        docs = {
            id(n.body[0].value)
            for n in ast.walk(tree)
            if isinstance(n, ast.Module | ast.ClassDef | ast.FunctionDef)
            and n.body
            and isinstance(n.body[0], ast.Expr)
            and isinstance(n.body[0].value, ast.Constant)
        }
        for n in ast.walk(tree):
            if (
                isinstance(n, ast.Constant)
                and isinstance(n.value, str)
                and id(n) not in docs
                and not n.value.startswith("#")
                and _FLAG.search(n.value)
            ):
                found.append(f"{path.relative_to(SOURCE.parent)}:{n.lineno}: {n.value[:60]!r}")
    assert found == []


def test_handler_ignores_the_exit_code_of_the_class(runner, workspace, monkeypatch):
    class Busy(KgkitError):
        exit_code = 3

    def fail(ws):
        raise Busy("line one\nline two\x85 \u2028end", details=("  a\x0bb",))

    monkeypatch.setattr("kgkit.cli.explore_cmds.list_templates", fail)
    r = runner.invoke(cli, ["--workspace", str(workspace.root), "templates"])
    assert r.exit_code == 3
    assert r.output == "Error: line one\\nline two\\x85 \\u2028end\n  a\\x0bb\n"
    r = runner.invoke(cli, ["--workspace", str(workspace.root), "--debug", "templates"])
    assert isinstance(r.exception, Busy)


def test_argument_error_is_shown_with_the_flag_and_exit_2(kgkit, tmp_path):
    dump = tmp_path / "d.nt"
    dump.write_text("<http://example.org/a> <http://example.org/b> <http://example.org/c> .\n")
    r = kgkit("import", str(dump), "--batch-size", "0")
    assert (r.exit_code, r.output) == (2, "Error: --batch-size: must be at least 1\n")
    r = kgkit("import", str(dump), "--graph", "no good")
    assert r.exit_code == 2, r.output
    assert r.output.startswith("Error: --graph: 'no good' is not a valid")


@pytest.mark.parametrize(
    "exc, expected",
    [
        (ArgumentError("batch_size", "must be at least 1"), "--batch-size: must be at least 1"),
        (
            ParseError("d.nt", 3, 1, "bad; run with on_error='skip'", params=("on_error",)),
            "d.nt:3:1: bad; run with --on-error skip",
        ),
        (
            InputError("give allow_update=True to run it", params=("allow_update",)),
            "give --allow-update to run it",
        ),
        (InputError("give format=NAME (nt, ttl)", params=("format",)), "give --format NAME"),
        (InputError("graph 'on_error' stays", params=("on_error",)), "graph 'on_error' stays"),
        (ArgumentError("term", "'x' is not an IRI"), "TERM: 'x' is not an IRI"),
    ],
    ids=["argument", "hint", "flag", "by-long-name", "bare-word-kept", "positional"],
)
def test_library_parameter_is_spelt_as_its_flag(exc, expected):
    params = [
        click.Option(["--batch-size"], type=int),
        click.Option(["--on-error"]),
        click.Option(["--allow-update"], is_flag=True),
        click.Option(["--format", "fmt"]),
        click.Argument(["term"]),
    ]
    assert flag_message(exc, params).startswith(expected)
