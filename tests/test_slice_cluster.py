"""kgkit slice --engine spark on a standalone Spark cluster: a master and a worker started
from the pyspark package on 127.0.0.1, the slice given the local engine's bytes, in one file
and in pieces.

Marked ``cluster``: it starts Java processes (about half a minute), so the default suite
leaves it out and ``.ci/run`` runs it as a step of its own (``pytest -m cluster``).
"""

from __future__ import annotations

import bz2
import gzip
import json
import os
import shutil
import socket
import subprocess
import time
import urllib.request
from pathlib import Path

import pytest
from conftest import DATA

from kgkit.ingest import make_slice
from kgkit.ingest.slice_dump import slice_dump
from kgkit.ingest.slice_spark import piece_name

pytestmark = pytest.mark.cluster
pytest.importorskip("pyspark", reason="the spark extra is not installed")
if shutil.which("java") is None:
    pytest.skip("Spark needs Java, not found on PATH", allow_module_level=True)

MESSY = DATA / "ingest-messy" / "messy.nt"
E = "http://example.org/e/"


def _spark_home() -> Path | None:
    try:
        import pyspark
    except ImportError:
        return None
    return Path(pyspark.__file__).parent


SPARK_HOME = _spark_home()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _wait(what: str, check, seconds: float = 90.0):
    end = time.monotonic() + seconds
    while time.monotonic() < end:
        got = check()
        if got:
            return got
        time.sleep(0.5)
    raise RuntimeError(f"the Spark {what} did not come up within {seconds:.0f} s")


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    """A standalone master and one worker (2 cores) on loopback; yields the master URL."""
    spark_class = SPARK_HOME / "bin" / "spark-class"
    if not spark_class.exists():
        pytest.skip(f"{spark_class} not found (pyspark's launcher)")
    work = tmp_path_factory.mktemp("spark-cluster")
    env = dict(
        os.environ, SPARK_HOME=str(SPARK_HOME), SPARK_LOCAL_IP="127.0.0.1", SPARK_LOG_DIR=str(work)
    )
    port, ui = _free_port(), _free_port()
    procs = []

    def start(*args):
        with open(work / f"{args[0].rsplit('.', 1)[-1]}.log", "wb") as log:
            procs.append(
                subprocess.Popen(
                    [str(spark_class), *args],
                    env=env,
                    stdout=log,
                    stderr=subprocess.STDOUT,
                    stdin=subprocess.DEVNULL,
                )
            )

    def alive_workers():
        try:
            with urllib.request.urlopen(f"http://127.0.0.1:{ui}/json/", timeout=2) as r:
                state = json.load(r)
        except OSError:
            return 0
        return sum(1 for w in state.get("workers", []) if w.get("state") == "ALIVE")

    master = f"spark://127.0.0.1:{port}"
    try:
        start(
            "org.apache.spark.deploy.master.Master",
            "--host",
            "127.0.0.1",
            "--port",
            str(port),
            "--webui-port",
            str(ui),
        )
        _wait("master", lambda: socket.socket().connect_ex(("127.0.0.1", port)) == 0)
        start(
            "org.apache.spark.deploy.worker.Worker",
            master,
            "--host",
            "127.0.0.1",
            "--cores",
            "2",
            "--memory",
            "1g",
            "--webui-port",
            str(_free_port()),
            "--work-dir",
            str(work / "worker"),
        )
        _wait("worker", alive_workers)
        yield master
    finally:
        for p in procs[::-1]:
            p.terminate()
        for p in procs:
            try:
                p.wait(timeout=20)
            except subprocess.TimeoutExpired:
                p.kill()


def _summary(s) -> dict:
    return {k: v for k, v in s.to_dict().items() if k not in ("seconds", "output", "rejects")}


def _local_and_cluster(ws, tmp_path, src, master, **kw):
    local = tmp_path / "local.nt"
    s_local = slice_dump(ws, [str(src)], local, engine="local", jobs=2, **kw)
    one = tmp_path / "cluster.nt"
    s_one = slice_dump(ws, [str(src)], one, engine="spark", spark_master=master, **kw)
    folder = tmp_path / "pieces"
    s_pieces = slice_dump(
        ws, [str(src)], folder, engine="spark", spark_master=master, pieces=True, **kw
    )
    names = sorted(p.name for p in folder.iterdir())
    assert names == [piece_name(i) for i in range(len(names))]
    joined = b"".join((folder / n).read_bytes() for n in names)
    return (
        (local.read_bytes(), _summary(s_local)),
        (one.read_bytes(), _summary(s_one)),
        (
            joined,
            _summary(s_pieces),
        ),
    )


def test_cluster_gives_the_local_bytes_on_the_messy_dump(cluster, workspace, tmp_path):
    src = tmp_path / "messy.nt.gz"
    src.write_bytes(gzip.compress(MESSY.read_bytes()))
    sl = make_slice(workspace, scope="profile", literal_languages=["en", "de"])
    local, one, pieces = _local_and_cluster(
        workspace, tmp_path, src, cluster, slice=sl, on_error="skip"
    )
    assert local == one == pieces
    assert local[1]["rejected"] == 5 and local[1]["written"] == 10


def test_cluster_gives_the_local_bytes_with_roots(cluster, workspace, tmp_path):
    from test_ingest_slice import HIERARCHY

    src = tmp_path / "h.nt.bz2"
    src.write_bytes(bz2.compress(HIERARCHY.encode()))
    sl = make_slice(workspace, scope="profile")
    local, one, pieces = _local_and_cluster(
        workspace, tmp_path, src, cluster, slice=sl, roots=[f"{E}a"]
    )
    assert local == one == pieces
    assert local[1]["entities"] == 4 and local[1]["written"] == 6


def test_pieces_of_a_stopped_slice_leave_nothing(cluster, workspace, tmp_path):
    # a bad statement with on_error='stop': no output folder, no temporary folder
    from kgkit.errors import ParseError

    src = tmp_path / "messy.nt"
    shutil.copy(MESSY, src)
    here = tmp_path / "slices"
    here.mkdir()
    sl = make_slice(workspace, scope="profile")
    with pytest.raises(ParseError):
        slice_dump(
            workspace, [str(src)], here / "out", sl, engine="spark", spark_master=cluster,
            pieces=True,
        )  # fmt: skip
    assert list(here.iterdir()) == []
