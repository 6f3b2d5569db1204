"""``kgkit drop`` and ``kgkit reclaim``, and imports that are interrupted (real processes)."""

from __future__ import annotations

import contextlib
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from kgkit.store import list_graphs, open_store, reclaimable_graphs

SKOS = "http://www.w3.org/2004/02/skos/core#"
E = "http://example.org/e/"


def _lines(n: int, word: str) -> bytes:
    return "".join(f'<{E}{i}> <{SKOS}prefLabel> "{word} {i}"@en .\n' for i in range(n)).encode()


def test_drop_then_graphs_and_queries_agree(kgkit, workspace, tmp_path):
    (tmp_path / "a.nt").write_bytes(_lines(3, "alpha"))
    (tmp_path / "b.nt").write_bytes(_lines(2, "beta"))
    assert kgkit("import", str(tmp_path / "a.nt"), str(tmp_path / "b.nt")).exit_code == 0
    r = kgkit("drop", "a")
    assert (r.exit_code, r.output) == (0, "graph a dropped (3 statements)\n")
    graphs = kgkit("graphs")
    assert graphs.output.startswith("b  2 statements")
    assert "\na  " not in graphs.output
    r = kgkit("query", "SELECT ?l WHERE { ?s skos:prefLabel ?l } ORDER BY ?l", "--format", "csv")
    assert r.output.splitlines() == ["l", "beta 0", "beta 1"]
    r = kgkit("query", "ASK { ?s ?p ?o }", "--graph", "a")
    assert r.exit_code == 1 and "no graph named 'a'" in r.output
    r = kgkit("drop", "a")
    assert r.exit_code == 1 and "no graph named 'a' in the store (graphs: b)" in r.output


def test_reclaim_says_when_there_is_nothing_to_do(kgkit):
    r = kgkit("reclaim")
    assert (r.exit_code, r.output) == (0, "nothing to reclaim\n")


# -- interrupted imports: real processes, real signals, bounded in time --------------


def _sst_bytes(ws_root: Path) -> int:
    total = 0
    for p in (ws_root / ".kgkit" / "store").glob("*.sst"):
        with contextlib.suppress(FileNotFoundError):  # compacted away since the listing
            total += p.stat().st_size
    return total


def _start_import(ws_root: Path) -> subprocess.Popen:
    """A `kgkit import -` that has loaded some batches and waits for more input."""
    before = _sst_bytes(ws_root)
    cmd = [sys.executable, "-m", "kgkit", "--workspace", str(ws_root), "import", "-"]
    cmd += ["--format", "nt", "--graph", "g", "--batch-size", "1000", "--quiet"]
    proc = subprocess.Popen(
        cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE
    )
    # returns once the import has read most of it (a pipe holds 64 kB)
    proc.stdin.write(_lines(30_000, "new"))
    proc.stdin.flush()
    # the store is locked while the import runs; its files grow as batches are loaded
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and proc.poll() is None:
        if _sst_bytes(ws_root) > before + 100_000:
            break
        time.sleep(0.1)
    assert proc.poll() is None, proc.stderr.read()
    return proc


def _old_graph(kgkit, tmp_path) -> None:
    (tmp_path / "old.nt").write_bytes(_lines(5, "old"))
    assert kgkit("import", str(tmp_path / "old.nt"), "--graph", "g").exit_code == 0


@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM], ids=["ctrl-c", "sigterm"])
def test_interrupted_import_ends_at_once_and_leaves_the_store_as_it_was(
    kgkit, workspace, tmp_path, sig
):
    # the failures: SIGTERM killed the process without clean-up; Ctrl-C spent 46-56 s
    # removing what the import had written, then every read-only open replayed the
    # unflushed write-ahead log (12-15 s)
    _old_graph(kgkit, tmp_path)
    proc = _start_import(workspace.root)
    try:
        t0 = time.monotonic()
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=30)
        took = time.monotonic() - t0
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 1, err
    assert b"Traceback" not in err and b"Aborted!" in err
    assert took < 10
    with open_store(workspace.store_path) as store:
        (g,) = list_graphs(store)
        assert (g.name, g.statements, g.files[0].name) == ("g", 5, "old.nt")
        # what the import wrote is left for `kgkit reclaim`, not removed on the way out
        assert len(reclaimable_graphs(store)) == 1
    # nothing left in the write-ahead log for read-only opens to replay
    logs = list(workspace.store_path.glob("*.log"))
    assert logs and all(p.stat().st_size == 0 for p in logs)
    r = kgkit("query", "SELECT ?l WHERE { ?s skos:prefLabel ?l } ORDER BY ?l", "--format", "csv")
    assert r.output.splitlines() == ["l"] + [f"old {i}" for i in range(5)]


def test_store_left_by_a_killed_import_is_written_without_clearing_leftovers_first(
    kgkit, workspace, tmp_path
):
    # the failure: the next write, even of one statement, first spent 22-88 s removing
    # what the killed import had left; now that waits for `kgkit reclaim`
    _old_graph(kgkit, tmp_path)
    proc = _start_import(workspace.root)
    try:
        os.kill(proc.pid, signal.SIGKILL)
        proc.communicate(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
    (tmp_path / "one.nt").write_bytes(_lines(1, "one"))
    assert kgkit("import", str(tmp_path / "one.nt"), "--graph", "h").exit_code == 0
    with open_store(workspace.store_path) as store:
        assert [g.name for g in list_graphs(store)] == ["g", "h"]
        left = reclaimable_graphs(store)
    assert len(left) == 1
    graphs = kgkit("graphs").output
    assert graphs.endswith("can be freed with: kgkit reclaim\n")
    r = kgkit("reclaim")
    assert r.exit_code == 0 and r.output.startswith("reclaimed ")
    with open_store(workspace.store_path) as store:
        assert reclaimable_graphs(store) == []
