"""The same compile against a remote SPARQL 1.1 endpoint gives the same bytes.

The server is the one the ``oxigraph`` package on PyPI ships, started here on
127.0.0.1 over a copy of the workspace store.
"""

from __future__ import annotations

import shutil
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest
from conftest import DATA

from kgkit.ingest import ImportOptions, import_files
from kgkit.vocab.compile import compile_vocabulary
from kgkit.workspace import load_workspace

SERVER = Path(sys.executable).with_name("oxigraph")


def test_compile_over_an_endpoint_matches_the_store(workspace, tmp_path):
    if not SERVER.exists():
        pytest.skip(f"no oxigraph server next to {sys.executable} (pip install oxigraph)")
    folder = DATA / "vocab-stale-curation"
    import_files(workspace, [str(folder / "graph.nt")], ImportOptions(graph="tidewell"))
    for f in folder.glob("*.yaml"):
        shutil.copy(f, workspace.vocab_dir / f.name)
    local = compile_vocabulary(workspace, workspace.vocab_dir / "sport.yaml")
    expected = {p.name: p.read_bytes() for p in local.output.iterdir()}

    copy = tmp_path / "served"
    shutil.copytree(workspace.store_path, copy)
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen(
        [str(SERVER), "serve-read-only", "--location", str(copy), "--bind", f"127.0.0.1:{port}"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    try:
        deadline = time.monotonic() + 20
        while True:
            try:
                socket.create_connection(("127.0.0.1", port), timeout=0.2).close()
                break
            except OSError:
                assert proc.poll() is None and time.monotonic() < deadline, "server did not start"
                time.sleep(0.1)
        remote_root = tmp_path / "remote"
        shutil.copytree(workspace.vocab_dir, remote_root / "vocab")
        text = (workspace.root / "kgkit.yaml").read_text(encoding="utf-8")
        text = text.replace("endpoint: null", f"endpoint: http://127.0.0.1:{port}/query")
        (remote_root / "kgkit.yaml").write_text(text, encoding="utf-8")
        remote = load_workspace(remote_root)
        res = compile_vocabulary(remote, remote.vocab_dir / "sport.yaml")
        assert {p.name: p.read_bytes() for p in res.output.iterdir()} == expected
    finally:
        proc.terminate()
        proc.wait(timeout=10)
