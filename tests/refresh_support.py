"""Support for the refresh tests (no tests here): the invented Kilnmoor craft archive with
release 1.0.0 made once per test module, and a copy of that workspace for each test."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

DATA = Path(__file__).resolve().parent / "data"
#: the dump, spec and curation file of release 1
RELEASE_1 = DATA / "refresh-release-1"
K = "http://example.org/kilnmoor/"


@pytest.fixture(scope="module")
def released_1(tmp_path_factory) -> Path:
    """A workspace holding release 1.0.0 of the Kilnmoor archive, made once per module
    through the command line (import into graph ``kilnmoor``, then release)."""
    from click.testing import CliRunner

    from kgkit.cli import cli
    from kgkit.workspace import init_workspace

    ws = init_workspace(tmp_path_factory.mktemp("refresh") / "ws")
    for name in ("crafts.yaml", "crafts.curation.yaml"):
        shutil.copy(RELEASE_1 / name, ws.vocab_dir / name)
    runner = CliRunner()
    for args in (
        ["import", str(RELEASE_1 / "kilnmoor-1.nt"), "--graph", "kilnmoor"],
        ["release", str(ws.vocab_dir / "crafts.yaml")],
    ):
        r = runner.invoke(cli, ["--workspace", str(ws.root), *args])
        assert r.exit_code == 0, r.output
    assert (ws.vocab_dir / "crafts" / "1.0.0" / "manifest.json").is_file()
    return ws.root


@pytest.fixture(name="workspace")
def copied_workspace(released_1, tmp_path):
    """Overrides conftest's ``workspace``: a copy of the one holding release 1 (its store
    closed), so that the ``kgkit`` fixture runs commands in it."""
    from kgkit.workspace import load_workspace

    root = tmp_path / "ws"
    shutil.copytree(released_1, root, symlinks=True)
    return load_workspace(root)
