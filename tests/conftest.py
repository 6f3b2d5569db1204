"""Shared fixtures: a temporary workspace, the W3C suites in ../shared, a CLI runner."""

from __future__ import annotations

import contextlib
import os
import shutil
import socket
import subprocess
import sys
import time
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


#: The SPARQL server the ``oxigraph`` package on PyPI ships (in the test extra).
OXIGRAPH_SERVER = Path(sys.executable).with_name("oxigraph")


@contextlib.contextmanager
def served_store(store_path: Path, tmp: Path):
    """Serve a copy of a store read-only on 127.0.0.1; yields the query URL.

    Skips the test when the server is not installed next to this Python.
    """
    if not OXIGRAPH_SERVER.exists():
        pytest.skip(f"no oxigraph server next to {sys.executable} (pip install oxigraph)")
    copy = tmp / "served-store"
    shutil.copytree(store_path, copy)
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen(
        [
            str(OXIGRAPH_SERVER),
            "serve-read-only",
            "--location",
            str(copy),
            "--bind",
            f"127.0.0.1:{port}",
        ],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )
    try:
        deadline = time.monotonic() + 20
        while True:
            try:
                socket.create_connection(("127.0.0.1", port), timeout=0.2).close()
                break
            except OSError:
                if proc.poll() is not None or time.monotonic() > deadline:
                    raise RuntimeError(f"server did not start: {proc.stderr.read()!r}") from None
                time.sleep(0.1)
        yield f"http://127.0.0.1:{port}/query"
    finally:
        proc.terminate()
        proc.wait(timeout=10)


def endpoint_workspace(ws, url: str, root: Path):
    """A copy of workspace ``ws``'s settings in ``root`` that queries ``url`` instead."""
    from kgkit.workspace import load_workspace

    root.mkdir(parents=True, exist_ok=True)
    text = (ws.root / "kgkit.yaml").read_text(encoding="utf-8")
    (root / "kgkit.yaml").write_text(
        text.replace("endpoint: null", f"endpoint: {url}"), encoding="utf-8"
    )
    return load_workspace(root)


def rdflib_graph(statements):
    """An rdflib graph (for ``rdflib.compare.isomorphic``) from pyoxigraph triples or quads."""
    import pyoxigraph as ox
    from rdflib import BNode, Graph, Literal, URIRef

    def term(t):
        if isinstance(t, ox.NamedNode):
            return URIRef(t.value)
        if isinstance(t, ox.BlankNode):
            return BNode(t.value)
        if t.language:
            return Literal(t.value, lang=t.language)
        return Literal(t.value, datatype=URIRef(t.datatype.value))

    g = Graph()
    for t in statements:
        g.add((term(t.subject), term(t.predicate), term(t.object)))
    return g


def make_topic(topic_id: str, **fields):
    """A topic record for tests: an active graph topic at depth 0 with an IRI under
    ``http://example.org/v/``; any field of :class:`kgkit.vocab.model.TopicRecord`
    can be given (``labels``, ``aliases``, ``parents``, ``status``...)."""
    from kgkit.vocab.model import TopicRecord

    fields.setdefault("iri", f"http://example.org/v/{topic_id}")
    return TopicRecord.make(topic_id, **fields)
