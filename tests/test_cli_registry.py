"""The lazy command table of kgkit/cli/__init__.py agrees with the command modules."""

from __future__ import annotations

import importlib
import subprocess
import sys

from kgkit.cli import COMMAND_MODULES


def test_table_matches_the_modules_commands():
    by_module: dict[str, set[str]] = {}
    for name, module in COMMAND_MODULES.items():
        by_module.setdefault(module, set()).add(name)
    for module, names in by_module.items():
        defined = {c.name for c in importlib.import_module(f"kgkit.cli.{module}").COMMANDS}
        assert defined == names, f"kgkit/cli/{module}.py defines {sorted(defined)}"


def test_a_quick_command_does_not_load_the_compiler():
    code = (
        "import sys\n"
        "from kgkit.cli import cli\n"
        "cli.get_command(None, 'graphs')\n"
        "print('networkx' in sys.modules, 'kgkit.vocab.compile' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]
