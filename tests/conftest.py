"""Shared fixtures: a temporary workspace, the W3C suites in ../shared, a CLI runner."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from click.testing import CliRunner

from kgkit.workspace import init_workspace

ROOT = Path(__file__).resolve().parent.parent
DATA = Path(__file__).resolve().parent / "data"
#: The W3C suites are read in place from ../shared (or $KGKIT_W3C_SUITES), never copied.
W3C = Path(os.environ.get("KGKIT_W3C_SUITES", ROOT.parent / "shared" / "reference" / "w3c"))


def w3c_suite(name: str) -> Path:
    """Folder of one W3C suite; skips the test when the suites are not beside the project."""
    folder = W3C / name
    if not (folder / "index.tsv").is_file() and not (folder / "tests").is_dir():
        pytest.skip(f"W3C suite {name!r} not found at {folder} (set KGKIT_W3C_SUITES)")
    return folder


@pytest.fixture
def workspace(tmp_path):
    """A fresh workspace with an empty store in a temporary folder."""
    return init_workspace(tmp_path / "ws")


@pytest.fixture
def runner():
    return CliRunner()


@pytest.fixture
def kgkit(runner, workspace):
    """Run a kgkit command in the temporary workspace: ``kgkit("import", "x.nt")``."""
    from kgkit.cli import cli

    def run(*args, input=None):
        return runner.invoke(cli, ["--workspace", str(workspace.root), *args], input=input)

    return run


@pytest.fixture(scope="session")
def demo_workspace(tmp_path_factory):
    """The demo run once for the session: its folder, steps, releases and review page."""
    from kgkit.demo import run_demo

    root = tmp_path_factory.mktemp("demo") / "ws"
    steps = run_demo(root)
    releases = sorted(p for p in (root / "vocab" / "tidewell").iterdir() if p.name[0].isdigit())
    (page,) = sorted(root.glob("*.html"))
    return {"root": root, "steps": steps, "releases": releases, "page": page}
