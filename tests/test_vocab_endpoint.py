"""The same compile against a remote SPARQL 1.1 endpoint gives the same bytes.

The server is the one the ``oxigraph`` package on PyPI ships, started here on
127.0.0.1 over a copy of the workspace store.
"""

from __future__ import annotations

import shutil

from conftest import DATA, endpoint_workspace, served_store

from kgkit.ingest import ImportOptions, import_files
from kgkit.vocab.compile import compile_vocabulary


def test_compile_over_an_endpoint_matches_the_store(workspace, tmp_path):
    folder = DATA / "vocab-stale-curation"
    import_files(workspace, [str(folder / "graph.nt")], ImportOptions(graph="tidewell"))
    for f in folder.glob("*.yaml"):
        shutil.copy(f, workspace.vocab_dir / f.name)
    local = compile_vocabulary(workspace, workspace.vocab_dir / "sport.yaml")
    expected = {p.name: p.read_bytes() for p in local.output.iterdir()}

    with served_store(workspace.store_path, tmp_path) as url:
        remote = endpoint_workspace(workspace, url, tmp_path / "remote")
        shutil.copytree(workspace.vocab_dir, remote.root / "vocab")
        res = compile_vocabulary(remote, remote.vocab_dir / "sport.yaml")
        assert {p.name: p.read_bytes() for p in res.output.iterdir()} == expected
